"""``batch`` with the real pipeline: a simulated network of 20 hops on a LocalCluster of 2 workers gives, hop for
hop, exactly what ``analyze`` gives when run on each hop alone; a hop with a broken file is reported and the rest
complete; the command line writes the network files and answers bad input with status 2.

Data: ``diag.sim.simulate.random_scenario`` (invented hops), 1 day at 60-s samples aggregated to 15-minute
min/avg/max statistics (``aggregate_statistics``) and written in the statistics CSV shape, so the test stays fast.
The reference for "the same results" is the serial path of ``analyze``: ``diag.pipeline.analyze_files`` on the
hop's own file, then ``diag.report.write_outputs``.
"""
from __future__ import annotations

import dataclasses
import json
import math
import warnings

import pandas as pd
import pytest
from pypdf import PdfReader

from diag import batch, schema
from diag.cli import main as cli_main
from diag.errors import DataWarning
from diag.pipeline import analyze_files
from diag.report import events_csv_bytes, findings_json_bytes, outage_by_cause_csv_bytes, outage_summary_csv_bytes
from diag.sim.log_shapes import write_stats
from diag.sim.simulate import aggregate_statistics, random_scenario, simulate_scenario

pytestmark = pytest.mark.slow   # module fixtures simulate 20 hops and run them on a 2-worker cluster (> 3 s)

N_HOPS = 20
BROKEN = "Fenwick-07"      # gets a second file that is not a log at all


def _json(value) -> str:
    return json.dumps(value, sort_keys=True, default=str)


@pytest.fixture(scope="module")
def network(tmp_path_factory):
    root = tmp_path_factory.mktemp("network")
    logs = root / "logs"
    logs.mkdir()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)  # "fade rate near the sampling rate" at 60-s simulation steps
        warnings.simplefilter("ignore", RuntimeWarning)
        scen = random_scenario(808, n_links=N_HOPS, duration_h=24, interval_s=60.0, defects=False)
        sims, _ = simulate_scenario(scen, seed=808)
    links = []
    for i, sim in enumerate(sims.values()):
        hop = f"Fenwick-{i:02d}"
        table = aggregate_statistics(sim.table, interval_s=900.0, floor_dbm=sim.spec.floor_value_dbm)
        table[schema.LINK] = pd.Series(hop, index=table.index, dtype="str")
        write_stats(table, logs / f"{hop}.csv", floors_dbm={hop: sim.spec.floor_value_dbm})
        links.append(dataclasses.replace(sim.link, link_id=hop))
    (logs / f"{BROKEN}_part2.csv").write_bytes(b"\x00\x01PK\x03\x04 not a log \xff\xfe" * 50)
    links_csv = root / "links.csv"
    pd.DataFrame([lk.to_dict() for lk in links]).to_csv(links_csv, index=False)
    return root, logs, links, links_csv


@pytest.fixture(scope="module")
def network_run(network):
    root, logs, links, _ = network
    seen = []
    # hop_pdf=False: a PDF per hop would dominate the test time; the CLI test below writes them
    res = batch.run([logs], links, out_dir=root / "out", workers=2, progress=lambda *a: seen.append(a),
                    hop_pdf=False)
    return res, seen


def test_cluster_gives_the_serial_results_hop_for_hop(network, network_run):
    root, logs, links, _ = network
    res, _ = network_run
    by_id = {r.link.link_id: r for r in res.results}
    compared = 0
    good = [link for link in links if link.link_id != BROKEN]
    # the serial run of the hops that batch analysed, together: under the default posterior both corroborate the
    # hops with each other (the failed hop takes no part in either)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        warnings.simplefilter("ignore", RuntimeWarning)
        serials = {r.link.link_id: r for r in analyze_files([logs / f"{link.link_id}.csv" for link in good],
                                                             links=links)}
    for link in good:
        serial = serials[link.link_id]
        got = by_id[link.link_id]
        assert got.error is None, got.error
        pd.testing.assert_frame_equal(got.events.reset_index(drop=True), serial.events.reset_index(drop=True))
        assert _json(got.outage.summary) == _json(serial.outage.summary)
        pd.testing.assert_frame_equal(got.outage.by_cause.reset_index(drop=True),
                                      serial.outage.by_cause.reset_index(drop=True))
        assert _json(got.statistics) == _json(serial.statistics)
        assert _json(got.cross_polar) == _json(serial.cross_polar)
        assert _json(got.level_changes) == _json(serial.level_changes)
        assert _json(got.findings) == _json(serial.findings)
        # the per-hop files hold what `analyze` writes for that hop alone (the PDF carries its own timestamp)
        folder = root / "out" / "hops" / link.link_id
        for name, make in (("events.csv", events_csv_bytes), ("outage_summary.csv", outage_summary_csv_bytes),
                           ("outage_by_cause.csv", outage_by_cause_csv_bytes),
                           ("findings.json", findings_json_bytes)):
            assert (folder / name).read_bytes() == make([serial]), name
        compared += 1
    assert compared == N_HOPS - 1


def test_broken_file_is_reported_and_the_rest_complete(network, network_run):
    root, _, links, _ = network
    res, seen = network_run
    ranking = res.ranking
    failed = ranking[ranking["error"] != ""]
    assert list(failed["link_id"]) == [BROKEN]
    assert f"{BROKEN}_part2.csv" in failed["error"].iloc[0] and failed["rank"].isna().all()
    ok = ranking[ranking["error"] == ""]
    assert len(ok) == N_HOPS - 1 and list(ok["rank"]) == list(range(1, N_HOPS))
    assert ok["outage_min_hi"].is_monotonic_decreasing       # worst case first
    # the ranking's minutes are the hops' own outage bounds (15-min statistics give bounds, never one number)
    by_id = {r.link.link_id: r for r in res.results}
    for row in ok.itertuples():
        s = by_id[row.link_id].outage.summary
        assert not row.exact and row.outage_min_lo <= row.outage_min_hi
        assert math.isclose(row.outage_min_lo, s["unavailable_s_lo"] / 60, rel_tol=1e-9, abs_tol=1e-9)
        assert math.isclose(row.outage_min_hi, s["unavailable_s_hi"] / 60, rel_tol=1e-9, abs_tol=1e-9)
    assert not (root / "out" / "hops" / BROKEN).exists()
    on_disk = pd.read_csv(root / "out" / "network_ranking.csv")
    assert list(on_disk["link_id"]) == list(ranking["link_id"])
    combined = pd.read_csv(root / "out" / "outage_summary.csv")
    assert sorted(combined["link_id"]) == sorted(ok["link_id"])   # every analysed hop once, header once
    page = PdfReader(root / "out" / "network_report.pdf")
    assert len(page.pages) == 1 and BROKEN in page.pages[0].extract_text()
    assert sum(1 for a in seen if a[0] == "read") == N_HOPS + 1
    assert sum(1 for a in seen if a[0] == "analyse") == N_HOPS


def test_command_line(network, tmp_path, capsys):
    root, logs, links, links_csv = network
    files = [str(logs / "Fenwick-00.csv"), str(logs / "Fenwick-01.csv")]
    status = cli_main(["batch", *files, "--links", str(links_csv), "--out", str(tmp_path / "o"), "--workers", "1",
                       "--quiet"])
    assert status == 0
    assert "2 hops analysed" in capsys.readouterr().out
    assert (tmp_path / "o" / "network_ranking.csv").exists() and (tmp_path / "o" / "network_report.pdf").exists()
    assert (tmp_path / "o" / "hops" / "Fenwick-01" / "events.csv").exists()
    assert len(PdfReader(tmp_path / "o" / "hops" / "Fenwick-01" / "report.pdf").pages) >= 1
    # bad input: one line on stderr, status 2
    assert cli_main(["batch", str(tmp_path / "missing.csv"), "--links", str(links_csv), "--out",
                     str(tmp_path / "p"), "--workers", "1"]) == 2
    err = capsys.readouterr().err
    assert "missing.csv" in err and len(err.strip().splitlines()) == 1
