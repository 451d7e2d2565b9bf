"""The Dask machinery of ``diag.batch`` with stand-in reader/analysis/writer (fast, independent of the pipeline).

The stand-ins are module-level so the worker processes can import them.  What is checked: every hop's result from
the cluster equals the stand-in run serially on the same rows; failures stay with their hop; files, ranking order
and progress reports.  (The real pipeline is exercised in tests/cli/test_batch.py.)
"""
from __future__ import annotations

import math
from collections import Counter
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from pypdf import PdfReader

from diag import batch, schema
from diag.errors import InputError
from diag.links import make_link
from diag.results import LinkResult, OutageResult


# --- stand-ins --------------------------------------------------------------------------------------------------
def standin_reader(path, *, tz=None, mapping=None):
    text = open(path, encoding="utf-8").read()
    if "BROKEN" in text:
        raise InputError("unreadable export", path=str(path), line=3)
    table = pd.read_csv(path, dtype={schema.LINK: "str", schema.CHANNEL: "str"})
    table[schema.TIME] = pd.to_datetime(table[schema.TIME], utc=True)
    return table, {"file": Path(path).name, "rows_read": len(table)}


def counting_reader(path, *, tz=None, mapping=None):
    """``standin_reader`` that also notes each file it reads (in ``reads.log`` beside the logs folder)."""
    with open(Path(path).parent.parent / "reads.log", "a", encoding="utf-8") as log:
        log.write(Path(path).name + "\n")
    return standin_reader(path, tz=tz, mapping=mapping)


def _content_hash(table):
    """Hash of the rows in order (times in ns, text as str): equal tables, equal hash."""
    canon = table[schema.COLUMNS].astype({schema.TIME: "datetime64[ns, UTC]", schema.LINK: "str",
                                          schema.CHANNEL: "str", schema.QUANTITY: "str", schema.STAT: "str",
                                          schema.STATUS: "str"})
    return int(pd.util.hash_pandas_object(canon, index=False).sum())


def standin_analyze(table, link, *, config=None, ingest=None):
    """Unavailable seconds = samples below threshold (1 s each); one event per channel that has any."""
    if (table[schema.VALUE] > 1000).any():
        raise ValueError("stand-in analysis failed on purpose")
    below = table[schema.VALUE] < link.threshold_dbm
    events = pd.DataFrame({"link_id": link.link_id, "channel": sorted(table.loc[below, schema.CHANNEL].unique())},
                          columns=schema.EVENT_COLUMNS)
    n = float(below.sum())
    summary = dict.fromkeys(schema.OUTAGE_SUMMARY_COLUMNS, None)
    summary.update(link_id=link.link_id, observed_s=float(len(table)), no_data_s=0.0, below_threshold_s=n,
                   unavailable_s=n, availability_pct=100 * (1 - n / len(table)), objective_pct=99.99,
                   meets_objective="yes" if 100 * (1 - n / len(table)) >= 99.99 else "no")
    by_cause = pd.DataFrame({"link_id": [link.link_id], "cause": ["rain"], "events": [len(events)],
                             "below_threshold_s": [n], "unavailable_s": [n]})
    return LinkResult(link=link, series={"x": table.iloc[:1]}, events=events,
                      statistics={"rows": len(table), "mean": float(table[schema.VALUE].mean()),
                                  "hash": _content_hash(table)},
                      outage=OutageResult(summary=summary, by_cause=by_cause, per_channel=by_cause), ingest=ingest)


def standin_writer(results, out_dir):
    paths = []
    for name, frame in (("events.csv", pd.concat([r.events for r in results])),
                        ("outage_summary.csv", pd.DataFrame([r.outage.summary for r in results])),
                        ("outage_by_cause.csv", pd.concat([r.outage.by_cause for r in results]))):
        frame.to_csv(out_dir / name, index=False)
        paths.append(out_dir / name)
    return paths


# --- a small network --------------------------------------------------------------------------------------------
def _hop_rows(link_id: str, seed: int, n: int = 600) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    times = pd.date_range("2031-03-01", periods=n, freq="1s", tz="UTC")
    frames = []
    for channel in ("H", "V"):
        frames.append(pd.DataFrame({schema.TIME: times, schema.LINK: link_id, schema.CHANNEL: channel,
                                    schema.QUANTITY: schema.RSL, schema.STAT: schema.SAMPLE, schema.INTERVAL: 0.0,
                                    schema.VALUE: -45 - 30 * rng.random(n), schema.STATUS: schema.OK}))
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def network(tmp_path_factory):
    root = tmp_path_factory.mktemp("net")
    logs = root / "logs"
    logs.mkdir()
    links = [make_link({"link_id": f"Kestrel-{i:02d}", "frequency_ghz": 18, "length_km": 10, "polarization": "dual",
                        "threshold_dbm": -60 - i}) for i in range(6)]
    links.append(make_link({"link_id": "Heron/Quay", "frequency_ghz": 23, "length_km": 4, "polarization": "V",
                            "threshold_dbm": -70}))          # no data anywhere
    tables = {}
    for i, link in enumerate(links[:6]):
        rows = _hop_rows(link.link_id, i)
        tables[link.link_id] = rows
        half = len(rows) // 2   # each hop in two files: the hop's rows are gathered from both
        rows.iloc[:half].to_csv(logs / f"{link.link_id}_a.csv", index=False)
        rows.iloc[half:].to_csv(logs / f"{link.link_id}_b.csv", index=False)
    (logs / "Kestrel-03_c.csv").write_text("time_utc,value\nBROKEN\n")        # hop 03 has a broken file
    bad = _hop_rows("Kestrel-04", 99, 10)
    bad[schema.VALUE] = 5000.0                                                  # hop 04: the analysis fails
    bad[schema.TIME] += pd.Timedelta(days=1)
    bad.to_csv(logs / "Kestrel-04_c.csv", index=False)
    _hop_rows("Stray-9", 7, 20).to_csv(logs / "stray.csv", index=False)       # a hop missing from the links table
    (logs / "mystery.csv").write_text("BROKEN\n")                              # a broken file matching no hop
    return root, logs, links, tables


@pytest.fixture(scope="module")
def client():
    from distributed import Client, LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0") as cluster, \
            Client(cluster) as c:
        yield c


def test_cluster_results_equal_serial_and_failures_stay_with_their_hop(network, client):
    root, logs, links, tables = network
    seen = []
    res = batch.run([logs], links, out_dir=root / "out", client=client, analyze=standin_analyze,
                    writer=standin_writer, reader=standin_reader, progress=lambda *a: seen.append(a))
    by_id = {r.link.link_id: r for r in res.results}
    for i in (0, 1, 2, 5):   # healthy hops: identical to the stand-in run serially on the same rows
        link = links[i]
        serial = standin_analyze(batch.hop_table([tables[link.link_id]])[0], link)
        got = by_id[link.link_id]
        assert got.error is None
        assert got.statistics == serial.statistics
        assert got.outage.summary == serial.outage.summary
        pd.testing.assert_frame_equal(got.events.reset_index(drop=True), serial.events.reset_index(drop=True))
        assert got.series == {}                      # slim results: the per-sample series stay on the worker
        assert "overlap_values_dropped" not in got.ingest
        assert [f["file"] for f in got.ingest["files"]] == [f"{link.link_id}_a.csv", f"{link.link_id}_b.csv"]
        assert (root / "out" / "hops" / link.link_id / "outage_summary.csv").exists()
    assert "Kestrel-03_c.csv" in by_id["Kestrel-03"].error and "unreadable export" in by_id["Kestrel-03"].error
    assert "failed on purpose" in by_id["Kestrel-04"].error
    assert "no row in the links table" in by_id["Stray-9"].error
    assert "no data" in by_id["Heron/Quay"].error
    assert any("mystery.csv" in (r.error or "") for r in res.results)

    ranking = pd.read_csv(root / "out" / "network_ranking.csv")
    ranking["error"] = ranking["error"].fillna("")
    ok = ranking[ranking["error"] == ""]
    assert list(ok["link_id"]) == list(res.ranking.loc[res.ranking["error"] == "", "link_id"])
    assert list(ok["rank"].astype(int)) == list(range(1, 5))
    assert ok["outage_min_hi"].is_monotonic_decreasing and (ok["outage_min_lo"] == ok["outage_min_hi"]).all()
    expected_min = {lid: serial_min for lid, serial_min in
                    ((links[i].link_id, standin_analyze(tables[links[i].link_id], links[i]).outage.summary[
                        "unavailable_s"] / 60) for i in (0, 1, 2, 5))}
    for row in ok.itertuples():
        assert math.isclose(row.outage_min_hi, expected_min[row.link_id], rel_tol=1e-5)
    assert len(ranking) == 9   # 6 hops + no-data hop + stray hop + unmatched broken file

    combined = pd.read_csv(root / "out" / "outage_summary.csv")
    assert sorted(combined["link_id"]) == sorted(expected_min)   # header once, one row per analysed hop
    assert len(PdfReader(root / "out" / "network_report.pdf").pages) == 1

    reads = [a for a in seen if a[0] == "read"]
    hops = [a for a in seen if a[0] == "analyse"]
    assert [a[1] for a in reads] == list(range(1, 17)) and reads[-1][2] == 16   # 12 + 4 extra files
    assert [a[1] for a in hops] == list(range(1, 8)) and hops[-1][2] == 7   # 6 hops + the stray hop


def test_a_file_of_one_hop_is_analysed_as_it_is_read_and_a_split_hop_reads_its_files_again(network, client,
                                                                                            tmp_path):
    """Worker memory stays that of one hop: a hop whose only input is one file is analysed in the file's read task
    (its table dropped there); a file of several hops keeps its table for their hop tasks; a hop found in several
    files is analysed by a hop task that reads them again.  Every way gives the stand-in analysis run serially on
    the hop's rows."""
    _, _, links, tables = network
    logs = tmp_path / "logs"
    logs.mkdir()
    ids = [link.link_id for link in links]
    tables[ids[0]].to_csv(logs / "only-0.csv", index=False)                                 # one file, one hop
    pd.concat([tables[ids[1]], tables[ids[2]]]).to_csv(logs / "pair.csv", index=False)      # one file, two hops
    half = len(tables[ids[5]]) // 2
    tables[ids[5]].iloc[:half].to_csv(logs / "split_a.csv", index=False)                   # one hop, two files
    tables[ids[5]].iloc[half:].to_csv(logs / "split_b.csv", index=False)
    res = batch.run([logs], links, out_dir=None, client=client, analyze=standin_analyze, writer=standin_writer,
                    reader=counting_reader)
    reads = Counter((tmp_path / "reads.log").read_text().split())
    assert reads == {"only-0.csv": 1, "pair.csv": 1, "split_a.csv": 2, "split_b.csv": 2}
    by_id = {r.link.link_id: r for r in res.results}
    for i in (0, 1, 2, 5):
        serial = standin_analyze(batch.hop_table([tables[ids[i]]])[0], links[i])
        assert by_id[ids[i]].error is None
        assert by_id[ids[i]].statistics == serial.statistics
        assert by_id[ids[i]].outage.summary == serial.outage.summary


def test_a_hop_task_takes_the_input_its_first_pass_kept_else_reads_the_files_again(network, tmp_path):
    """Between the passes of a network run a pending hop's input waits in a file of the worker's temporary folder:
    the hop task loads it (and removes it) instead of reading the logs; where the file is not there (a task run on
    another machine) it reads the logs again.  Same result either way."""
    import pickle

    _, _, links, tables = network
    link = links[0]
    table = batch.hop_table([tables[link.link_id]])[0]
    log = tmp_path / "logs" / f"{link.link_id}.csv"
    log.parent.mkdir()
    tables[link.link_id].to_csv(log, index=False)
    token = "test-" + tmp_path.name
    try:
        kept = batch._spill(pickle.dumps((table, {"files": []})), token)
        assert kept is not None and Path(kept).parent == batch._spill_folder(token)
        again = batch._Reread(str(log), links, None, None, counting_reader)
        out = batch._hops_task([(link.link_id, link, [0], [], None, kept)], None, standin_analyze, standin_writer,
                               False, None, again)
        assert not Path(kept).exists()                              # loaded once, then removed
        assert not (tmp_path / "reads.log").exists()                # the log was not read
        out_read = batch._hops_task([(link.link_id, link, [0], [], None, kept)], None, standin_analyze,
                                    standin_writer, False, None, again)   # the kept file is gone now: read again
        assert (tmp_path / "reads.log").read_text().split() == [log.name]
        serial = standin_analyze(table, link)
        assert out[0].result.statistics == out_read[0].result.statistics == serial.statistics
    finally:
        batch._remove_spill_folder(token)
    assert not batch._spill_folder(token).exists()


def test_single_hop_file_takes_the_hop_named_in_its_file_name(tmp_path, client):
    link = make_link({"link_id": "Osprey-7", "frequency_ghz": 38, "length_km": 3, "polarization": "H",
                      "threshold_dbm": -65})
    other = make_link({"link_id": "Osprey-8", "frequency_ghz": 38, "length_km": 3, "polarization": "H",
                       "threshold_dbm": -65})
    _hop_rows(schema.DEFAULT_LINK_ID, 3, 50).to_csv(tmp_path / "export_Osprey-7_week12.csv", index=False)
    res = batch.run([tmp_path / "export_Osprey-7_week12.csv"], [link, other], client=client,
                    analyze=standin_analyze, writer=standin_writer, reader=standin_reader)
    assert res.results[0].link.link_id == "Osprey-7" and res.results[0].error is None
    assert res.results[0].statistics["rows"] == 100
    assert "no data" in res.results[1].error


def test_store_input_gives_each_hop_task_its_own_partition(network, client, tmp_path):
    from diag.read.store import write_store

    root, logs, links, tables = network
    write_store(pd.concat([tables[lk.link_id] for lk in links[:3]], ignore_index=True), tmp_path / "store")
    res = batch.run([tmp_path / "store"], links[:3], client=client, analyze=standin_analyze, writer=standin_writer)
    assert res.reads == []                       # nothing parsed in the driver's read phase
    for link, got in zip(links[:3], res.results):
        assert got.error is None
        # the same rows, values and order as the hop's own table (content hash, row count, mean)
        assert got.statistics == standin_analyze(batch.hop_table([tables[link.link_id]])[0], link).statistics
        assert got.ingest["files"][0]["layout"] == "store"


def test_a_rerun_leaves_no_stale_results(network, client, tmp_path):
    root, logs, links, tables = network
    out = tmp_path / "out"
    first = [logs / f"{lk.link_id}_{part}.csv" for lk in links[:3] for part in "ab"]
    batch.run(first, links[:3], out_dir=out, client=client, analyze=standin_analyze, writer=standin_writer,
              reader=standin_reader)
    assert (out / "hops" / "Kestrel-00" / "outage_summary.csv").exists()
    batch.run(first[2:], links[:3], out_dir=out, client=client, analyze=standin_analyze, writer=standin_writer,
              reader=standin_reader)                          # hop 00 has no data this time
    assert not (out / "hops" / "Kestrel-00" / "outage_summary.csv").exists()
    assert sorted(pd.read_csv(out / "outage_summary.csv")["link_id"]) == ["Kestrel-01", "Kestrel-02"]


def test_unwritable_output_folder_fails_before_any_work(tmp_path):
    (tmp_path / "file").write_text("x")
    link = make_link({"link_id": "L", "frequency_ghz": 18, "length_km": 5, "polarization": "H",
                      "threshold_dbm": -70})
    with pytest.raises(InputError, match="cannot create the output folder"):
        batch.run([tmp_path / "file"], [link], out_dir=tmp_path / "file" / "sub", scheduler="tcp://127.0.0.1:1",
                  connect_timeout_s=1)


def test_safe_names_are_distinct_and_portable():
    names = batch._folder_names(["A/B", "A_B", "a:b", "CON", "..", "hop 1"])
    assert names["A/B"] == "A_B" and names["A_B"] == "A_B-2" and names["a:b"] == "a_b-3"
    assert names["CON"] == "_CON" and names[".."] == "hop" and names["hop 1"] == "hop_1"
    assert batch.safe_name("../../etc") == "etc" and batch.safe_name("-rf") == "rf"
    assert len({n.lower() for n in names.values()}) == len(names)


def test_bad_inputs_are_one_line_input_errors(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        batch.expand_inputs([tmp_path / "nope.csv"])
    (tmp_path / "empty").mkdir()
    with pytest.raises(InputError, match="holds no files"):
        batch.expand_inputs([tmp_path / "empty"])
    with pytest.raises(InputError, match="scheduler"):
        (tmp_path / "x.csv").write_text("a\n")
        batch.run([tmp_path / "x.csv"], [make_link({"link_id": "L", "frequency_ghz": 18, "length_km": 5,
                                                     "polarization": "H", "threshold_dbm": -70})],
                  scheduler="tcp://127.0.0.1:1", connect_timeout_s=1)


def test_ranking_csv_is_spreadsheet_safe(tmp_path):
    link = make_link({"link_id": "=HYPERLINK(1)", "frequency_ghz": 18, "length_km": 5, "polarization": "H",
                      "threshold_dbm": -70})
    ranking = batch.network_ranking([batch.failed_result(link, "@boom")])
    safe = batch.spreadsheet_safe(ranking)
    assert safe.loc[0, "link_id"] == "'=HYPERLINK(1)" and safe.loc[0, "error"] == "'@boom"


def test_values_in_two_files_are_kept_once_and_counted():
    rows = _hop_rows("Kestrel-00", 1, 100)
    first, second = rows.iloc[:150].copy(), rows.iloc[100:].copy()   # 50 values in both files
    second[schema.VALUE] += 0.5                                     # the first file's value wins (as read_logs)
    table, dropped = batch.hop_table([first, second])
    assert dropped == 50 and len(table) == len(rows)
    merged = table.set_index([schema.CHANNEL, schema.TIME])[schema.VALUE]
    expected = rows.iloc[:150].set_index([schema.CHANNEL, schema.TIME])[schema.VALUE]
    assert (merged.loc[expected.index] == expected).all()


def test_small_hops_share_tasks_and_large_or_unknown_ones_do_not():
    from diag.batch import hop_groups

    small = [(f"h{i}", 1_000) for i in range(40)]
    groups = hop_groups(small, 2, rows_per_task=200_000, tasks_per_worker=4)
    assert [h for g in groups for h in g] == [h for h, _ in small]       # every hop once, in order
    assert len(groups) == 8 and all(len(g) == 5 for g in groups)          # 2 workers x 4 tasks each
    big = [("a", 150_000), ("b", 150_000), ("c", None), ("d", 10), ("e", 10)]
    assert hop_groups(big, 1, rows_per_task=200_000, tasks_per_worker=1) == [["a"], ["b"], ["c"], ["d", "e"]]
    assert hop_groups([("x", 5)], 8) == [["x"]]
