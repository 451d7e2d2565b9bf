"""Network corroboration in ``batch`` (posterior attribution): hop for hop and file for file what
``diag.pipeline.analyze_files`` gives for the same hops and links table.

``analyze_files`` holds every hop's series and calls ``diag.analysis.network.corroborate``; ``batch`` holds none in
the driver and gets there in two passes (faded minutes first, then the hops with fade events analysed again with
their network columns).  These tests check that the two roads meet; they say nothing about whether the network term
is right (that is ``bench/validation``'s job).

Data: the invented demo network of ``demo_logs/`` (a storm crosses it, so the network term changes a cause on one
hop; checked below so the comparison cannot pass vacuously) plus two invented quiet hops from ``diag.sim`` in the
same week (one with a level step only, one with nothing), which corroboration cannot change: the first pass
settles them.  Site coordinates, where used, are invented.
"""
from __future__ import annotations

import dataclasses
import json
import logging
import shutil
import tempfile
import warnings
from pathlib import Path

import pandas as pd
import pytest

from diag import batch, schema
from diag.config import AnalysisConfig
from diag.errors import DataWarning
from diag.links import read_links_table
from diag.pipeline import analyze_files
from diag.report import (
    events_csv_bytes,
    findings_json_bytes,
    outage_by_cause_csv_bytes,
    outage_summary_csv_bytes,
    pdf_bytes,
)
from diag.sim.log_shapes import write_stats
from diag.sim.simulate import aggregate_statistics, random_scenario, simulate_scenario

pytestmark = pytest.mark.slow   # the demo network analysed serially and on a 2-worker cluster (tens of seconds)

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_logs"
POSTERIOR = AnalysisConfig(attribution="posterior")
QUIET = {"HM-WEIR-STEP": 2, "HM-WEIR-CALM": 1}   # hop -> random_scenario seed (level step only / no event)
TABLES = (("events.csv", events_csv_bytes), ("outage_summary.csv", outage_summary_csv_bytes),
          ("outage_by_cause.csv", outage_by_cause_csv_bytes), ("findings.json", findings_json_bytes))


def _json(value) -> str:
    return json.dumps(value, sort_keys=True, default=str)


def counting_reader(path, *, tz=None, mapping=None):
    """diag's own reader for batch (``read_file_table``), noting each file it reads in ``reads.log`` beside the
    logs folder (module-level: the worker processes import it)."""
    from diag.read.hops import read_file_table

    with open(Path(path).parent.parent / "reads.log", "a", encoding="utf-8") as log:
        log.write(Path(path).name + "\n")
    return read_file_table(path, tz=tz, mapping=mapping)


def _spill_folders() -> set:
    return set(Path(tempfile.gettempdir()).glob("diag-batch-*"))


def _quiet():
    return warnings.catch_warnings()


@pytest.fixture(scope="module")
def network(tmp_path_factory):
    """Folder of logs (the demo's and two quiet hops') and the links table of all seven hops."""
    root = tmp_path_factory.mktemp("net")
    logs = root / "logs"
    shutil.copytree(DEMO / "logs", logs)
    links = read_links_table(DEMO / "links.csv")
    with _quiet():
        warnings.simplefilter("ignore")
        for hop, seed in QUIET.items():
            scen = random_scenario(seed, n_links=1, duration_h=168, interval_s=60.0, causes=["level_shift"],
                                   start="2026-06-08T00:00:00Z", defects=False)
            sim = next(iter(simulate_scenario(scen, seed=seed)[0].values()))
            table = aggregate_statistics(sim.table, interval_s=900.0, floor_dbm=sim.spec.floor_value_dbm)
            table[schema.LINK] = pd.Series(hop, index=table.index, dtype="str")
            write_stats(table, logs / f"{hop}_15min.csv", floors_dbm={hop: sim.spec.floor_value_dbm})
            links.append(dataclasses.replace(sim.link, link_id=hop))
    return root, logs, links


@pytest.fixture(scope="module")
def client():
    from distributed import Client, LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0",
                      silence_logs=logging.ERROR) as cluster, Client(cluster) as c:
        yield c


def _serial(files, links):
    with _quiet():
        warnings.simplefilter("ignore", DataWarning)
        warnings.simplefilter("ignore", RuntimeWarning)
        return {r.link.link_id: r for r in analyze_files(files, links=links, config=POSTERIOR)}


def _has_fades(events) -> bool:
    """Events the network is asked about: fades, and level-shift spans (a step in the hour a storm lowers the
    network is weather; diag.analysis.network.asked_kinds)."""
    from diag.analysis.network import asked_kinds

    return "event_kind" in events and bool(events["event_kind"].isin(asked_kinds()).any())


def _same_result(got, want) -> None:
    assert got.error is None, got.error
    pd.testing.assert_frame_equal(got.events.reset_index(drop=True), want.events.reset_index(drop=True))
    assert _json(got.outage.summary) == _json(want.outage.summary)
    pd.testing.assert_frame_equal(got.outage.by_cause.reset_index(drop=True),
                                  want.outage.by_cause.reset_index(drop=True))
    for name in ("statistics", "cross_polar", "level_changes", "findings", "skipped"):
        assert _json(getattr(got, name)) == _json(getattr(want, name)), name


def _with_coordinates(links):
    """Invented site coordinates: the demo hops within a few km of each other, the two quiet hops some 300 km away
    (their weight exp(-300/20) is nil, so they do not dilute the demo hops' shares)."""
    out = []
    for k, link in enumerate(links):
        lat = 13.0 if link.link_id in QUIET else 10.0 + 0.01 * k
        out.append(dataclasses.replace(link, site_a_lat=lat, site_a_lon=20.0, site_b_lat=lat + 0.03,
                                       site_b_lon=20.02))
    return out


def test_batch_corroborates_as_analyze_files_file_for_file(network, client):
    """Distance-weighted shares (site coordinates in the links table); every output file byte for byte."""
    root, logs, links = network
    links = _with_coordinates(links)
    want = _serial([logs], links)
    seen = []
    (root / "reads.log").unlink(missing_ok=True)
    folders_before = _spill_folders()
    with _quiet():
        warnings.simplefilter("ignore", DataWarning)
        res = batch.run([logs], links, out_dir=root / "out", client=client, config=POSTERIOR,
                        progress=lambda *a: seen.append(a), reader=counting_reader)
    # each file of one hop was read once: its hop analysed in the read task, and a hop waiting for the network
    # pass took its input from the file the first pass kept (removed with the run's folder at the end)
    reads = (root / "reads.log").read_text().split()
    assert sorted(reads) == sorted(p.name for p in logs.iterdir())
    assert _spill_folders() <= folders_before
    got = {r.link.link_id: r for r in res.results}
    assert set(got) == set(want) == {link.link_id for link in links}
    for hop, serial in want.items():
        _same_result(got[hop], serial)
        folder = root / "out" / "hops" / batch.safe_name(hop)
        for name, make in (*TABLES, ("report.pdf", pdf_bytes)):
            assert (folder / name).read_bytes() == make([serial]), (hop, name)
    # the network term was applied: the fade hops carry network columns and at least one verdict (cause or
    # confidence) differs from the hop analysed alone (else this comparison would pass without corroboration)
    changed = 0
    for hop, serial in want.items():
        alone = _serial([p for p in logs.iterdir() if p.name.startswith(hop)], [serial.link])[hop]
        if _has_fades(serial.events):
            fades = serial.events["event_kind"].isin(("fade", "level_shift")).to_numpy()
            assert (got[hop].events.loc[fades, "network_hops"] > 0).any(), hop
        if len(alone.events):
            changed += int(((alone.events["cause"].to_numpy() != got[hop].events["cause"].to_numpy())
                            | (alone.events["confidence"].to_numpy() != got[hop].events["confidence"].to_numpy()))
                           .sum())
    assert changed >= 1
    # the hop without events was settled by the first pass; every hop with fades or a level step went through the
    # second (a step is asked whether the network faded in its hour)
    second = {message for stage, _, _, message in seen if stage == "network"}
    assert second == {hop for hop, r in want.items() if _has_fades(r.events)}
    assert "HM-WEIR-CALM" not in second and "HM-WEIR-STEP" in second
    assert len(want["HM-WEIR-STEP"].events) and not len(want["HM-WEIR-CALM"].events)


def test_plain_shares_and_a_failed_hop(network, client, tmp_path):
    """No site coordinates (the plain share); one hop's only log is not a log: that hop fails and the others are
    corroborated among themselves, as analyze_files does without that hop."""
    root, logs, links = network
    broken = "HM-BEACON-MILL"
    inputs = tmp_path / "logs"
    inputs.mkdir()
    for path in logs.iterdir():
        if not path.name.startswith(broken):
            shutil.copy(path, inputs / path.name)
    (inputs / f"{broken}_15min.csv").write_bytes(b"\x00\x01PK\x03\x04 not a log \xff\xfe" * 50)
    want = _serial([p for p in sorted(inputs.iterdir()) if not p.name.startswith(broken)], links)
    with _quiet():
        warnings.simplefilter("ignore", DataWarning)
        res = batch.run([inputs], links, out_dir=tmp_path / "out", client=client, config=POSTERIOR, hop_pdf=False)
    got = {r.link.link_id: r for r in res.results}
    assert got[broken].error
    assert broken not in want and set(want) == set(got) - {broken}
    for hop, serial in want.items():
        _same_result(got[hop], serial)
        for name, make in TABLES:
            assert (tmp_path / "out" / "hops" / batch.safe_name(hop) / name).read_bytes() == make([serial])
    assert any((r.events.get("network_hops", pd.Series(dtype=float)) > 0).any() for r in want.values())


def test_a_hop_left_alone_gets_no_network_term(network, client, tmp_path):
    """Two hops in the inputs, one of them unreadable: the other is analysed alone (no network columns), as
    analyze_files gives it on its own file; one hop alone: the same."""
    root, logs, links = network
    hop, broken = "HM-QUARRY-FERRY", "HM-MILL-ORCHARD"
    inputs = tmp_path / "logs"
    inputs.mkdir()
    shutil.copy(logs / f"{hop}_15min.csv", inputs)
    (inputs / f"{broken}_15min.csv").write_bytes(b"not a log\n" * 10)
    want = _serial([inputs / f"{hop}_15min.csv"], links)[hop]
    assert "network_share" not in want.events
    for given in ([inputs], [inputs / f"{hop}_15min.csv"]):
        seen = []
        with _quiet():
            warnings.simplefilter("ignore", DataWarning)
            res = batch.run(given, links, client=client, config=POSTERIOR, hop_pdf=False,
                            progress=lambda *a: seen.append(a))
        got = {r.link.link_id: r for r in res.results}
        _same_result(got[hop], want)
        two = given == [inputs]   # two hops: the first pass waits for the network, which then has one hop only
        assert got[broken].error and any(m["error"] for m in res.reads) == two
        assert [a[3] for a in seen if a[0] == "network"] == ([hop] if two else [])
