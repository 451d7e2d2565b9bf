"""End-to-end conservation (issue 9): nothing is lost and nothing is counted twice, from the file to the outage table.

For every input of the hostile corpus (tests/cli/test_hostile_inputs.py) and every built-in simulator scenario
(written through diag.sim.log_shapes in several shapes, read back, analysed):

* rows:   rows read = rows kept + rows rejected by reason (the reader's report), and the rows read equal the data
          lines in the file, counted here independently (the writer's own count, or Python's csv module);
* values: every value of a kept row is one table row: values read = ok + signal_lost + missing = table rows, the
          table's own status counts agree, and the reasons add up to signal_lost + missing;
* time:   analysed period (period_end - period_start) = observed + no-data time; the period and the observed time
          are recomputed here from the normalised table (a second is observed when some receive-level channel
          has a reading "ok" or "signal_lost" in it: the counting rule of docs/method.md §6);
* causes: the per-cause rows of outage_by_cause add up to the summary (below threshold, unavailable, both bounds),
          the event counts per cause add up to the events found, and no figure exceeds the observed time.

No outside source is needed: these are the project's own accounting rules (docs/usage.md §1-§3, diag.read.normalise's
docstring); the ten-second unavailability rule itself is checked against ITU-T G.826 in tests/models/test_g826.py.
"""
from __future__ import annotations

import csv
import dataclasses
import io
import math
import warnings

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.errors import DataWarning, InputError
from diag.links import make_link
from diag.pipeline import analyze_files, analyze_link
from diag.read.ingest import read_log
from diag.sim import log_shapes as writers
from diag.sim.scenarios import load_scenario
from diag.sim.simulate import Effect, aggregate_statistics, simulate_link
from tests.cli.test_hostile_inputs import CORPUS, OPTIONS

pytestmark = pytest.mark.filterwarnings("ignore::diag.errors.DataWarning")
SCENARIOS = ("quick", "rain", "multipath", "refractive", "level_shift", "tilt", "signal_loss")
SAMPLE_SHAPES = ("wide_iso", "semicolon_local", "epoch", "long")
WINDOW_S = 3 * 3600          # short spans keep the test fast: 3 h of each hop around its first event
LEVELS = (S.RSL,)            # the outage accounting counts receive-level channels (diag.analysis.outage)


# ---------------------------------------------------------------------------------------------------------------
# the checks


def check_read_accounting(report: dict, table: pd.DataFrame, label: str) -> None:
    """Rows and values of one reader report against the table it came with."""
    rejected = report["rejected"]
    assert all(v > 0 for v in rejected.values()), (label, rejected)
    assert report["rows_read"] == report["rows_kept"] + sum(rejected.values()), (label, report)
    values = report["values"]
    assert values["read"] == values["ok"] + values["signal_lost"] + values["missing"] == len(table), (label, values)
    assert sum(values["reasons"].values()) == values["signal_lost"] + values["missing"], (label, values)
    counts = table[S.STATUS].astype(str).value_counts()
    for status in S.STATUSES:
        assert int(counts.get(status, 0)) == values.get(status, 0), (label, status, counts.to_dict(), values)
    assert set(counts.index) <= set(S.STATUSES), (label, counts.to_dict())
    if report.get("layout") == "wide":
        # a wide row gives one value per signal column ("quantity/stat" roles; short rows: absent cells are
        # "missing" values), so values = kept rows x signal columns
        n_signals = sum(1 for role in report["columns"].values() if "/" in role)
        assert values["read"] == report["rows_kept"] * n_signals, (label, values["read"], report["rows_kept"],
                                                                   n_signals)


def _expected_period(table: pd.DataFrame, report_intervals: dict, link_id: str) -> tuple[pd.Timestamp, pd.Timestamp]:
    """First and last second of the analysed period from the normalised rows of one hop (receive level only)."""
    rows = table[table[S.QUANTITY].isin(LEVELS)]
    t0 = rows[S.TIME].min().floor("s")
    step = np.where(rows[S.STAT].astype(str) == S.SAMPLE, np.nan, rows[S.INTERVAL].to_numpy(dtype=float))
    sample_step = report_intervals.get(link_id)
    step = np.where(np.isnan(step), sample_step if sample_step else 1.0, step)
    ends = rows[S.TIME] + pd.to_timedelta(step, unit="s")
    return t0, ends.max().ceil("s")


def _off_grid(table: pd.DataFrame, t0: pd.Timestamp, step_s: float) -> bool:
    """True when some receive-level row does not fall on the grid t0 + k * step_s."""
    rows = table[table[S.QUANTITY].isin(LEVELS)]
    offsets = (rows[S.TIME] - t0).dt.total_seconds().to_numpy()
    return bool(np.any(np.abs(offsets / step_s - np.rint(offsets / step_s)) > 1e-9))


def _observed_seconds_exact(table: pd.DataFrame) -> int:
    """Distinct seconds in which some receive-level channel has a reading (ok or signal_lost)."""
    rows = table[table[S.QUANTITY].isin(LEVELS) & table[S.STATUS].astype(str).isin([S.OK, S.SIGNAL_LOST])]
    return int(rows[S.TIME].dt.floor("s").nunique())


def _observed_intervals(table: pd.DataFrame, dt: float) -> tuple[int, int]:
    """Statistics logs: intervals (start times) with at least one / with all level rows holding a reading."""
    rows = table[table[S.QUANTITY].isin(LEVELS)]
    good = rows[S.STATUS].astype(str).isin([S.OK, S.SIGNAL_LOST])
    by_time = good.groupby(rows[S.TIME]).agg(["any", "all"])
    return int(by_time["all"].sum()), int(by_time["any"].sum())


def check_outage_accounting(result, table: pd.DataFrame, report_intervals: dict, label: str) -> None:
    """Time and cause conservation of one analysed hop, against figures recomputed from its normalised rows."""
    assert result.outage is not None, (label, result.skipped)
    summary = result.outage.summary
    table = table[table[S.LINK].astype(str) == result.link.link_id] if S.LINK in table else table
    if not summary["period_start_utc"]:   # no receive-level data: nothing to account, and nothing invented
        assert summary["observed_s"] == 0 and summary["no_data_s"] == 0, (label, summary)
        assert not (table[S.QUANTITY].isin(LEVELS)).any(), label
        return
    start = pd.Timestamp(summary["period_start_utc"])
    end = pd.Timestamp(summary["period_end_utc"])
    period_s = (end - start).total_seconds()
    # analysed time = observed + no data (issue 9)
    assert period_s == summary["observed_s"] + summary["no_data_s"], (label, period_s, summary)
    assert summary["observed_s"] >= 0 and summary["no_data_s"] >= 0, (label, summary)
    # the period is the span of the hop's receive-level rows: from the first row to the last row plus one grid step
    # (the reader's typical row step; on a very short or irregular log the analysis may choose another step)
    steps_s = {float(s.interval_s) for s in result.series.values()}
    t0, t1 = _expected_period(table, report_intervals, result.link.link_id)
    if (start, end) != (t0, t1) and len(steps_s) == 1 and _off_grid(table, t0, next(iter(steps_s))):
        # irregular log (rows off the analysis grid): rows snap to the nearest grid point, so the last grid point
        # (and the period end) may lie up to half a step before or after the last row + one step
        step = steps_s.pop()
        t0, t1 = _expected_period(table, {result.link.link_id: step}, result.link.link_id)
        assert start == t0 and abs((end - t1).total_seconds()) <= step / 2 + 1, (label, start, end, t0, t1, step)
    else:
        assert (start, end) == (t0, t1), (label, start, end, t0, t1)
    # observed time, recomputed from the rows
    kinds = {s.kind for s in result.series.values()}
    steps = {float(s.interval_s) for s in result.series.values()}
    if summary.get("exact"):
        assert max(steps) <= 1.0, (label, steps)   # 1-s or finer samples: every second counted
        assert summary["observed_s"] == _observed_seconds_exact(table), label
    elif kinds == {"stats"} and len(steps) == 1:
        dt = steps.pop()
        lo, hi = _observed_intervals(table, dt)
        assert lo * dt <= summary["observed_s"] <= hi * dt, (label, lo, hi, dt, summary["observed_s"])
    else:   # samples coarser than 1 s: every sampled second is observed, and no more than the period
        assert _observed_seconds_exact(table) <= summary["observed_s"] <= period_s, label
    # nothing exceeds the observed time; lower bounds below upper bounds
    observed = summary["observed_s"]
    for key in ("below_threshold_s", "unavailable_s", "ses_available_s"):
        lo, hi = summary[f"{key}_lo"], summary[f"{key}_hi"]
        assert 0 <= lo <= hi <= observed, (label, key, lo, hi, observed)
        if summary["exact"]:
            assert summary[key] == lo == hi, (label, key, summary[key], lo, hi)
        else:
            assert math.isnan(summary[key]), (label, key, summary[key])
    assert summary["ses_available_s_lo"] <= summary["below_threshold_s_lo"], label
    if summary["exact"] and observed:
        assert summary["availability_pct"] == pytest.approx(100.0 * (1 - summary["unavailable_s"] / observed)), label
    # per-cause rows add up to the summary (every second has exactly one cause)
    by_cause = result.outage.by_cause
    assert list(by_cause["cause"]) == list(S.CAUSES), (label, list(by_cause["cause"]))
    for key in ("below_threshold_s", "unavailable_s"):
        for tag in ("_lo", "_hi"):
            assert by_cause[key + tag].sum() == summary[key + tag], (label, key + tag, by_cause, summary)
            assert (by_cause[key + tag] >= 0).all(), (label, key + tag)
        if summary["exact"]:
            assert by_cause[key].sum() == summary[key], (label, key)
    n_events = len(result.events) if result.events is not None else 0
    assert by_cause["events"].sum() == n_events, (label, by_cause["events"].tolist(), n_events)
    # per channel: no channel observes more than the hop, nor is below threshold more than it observes
    for _, row in result.outage.per_channel.iterrows():
        assert row["observed_s"] + row["no_data_s"] == period_s, (label, row["channel"])
        assert row["observed_s"] <= observed, (label, row["channel"])
        assert row["below_threshold_s_hi"] <= row["observed_s"], (label, row["channel"])
        assert row["below_threshold_s_lo"] <= summary["below_threshold_s_lo"], (label, row["channel"])


# ---------------------------------------------------------------------------------------------------------------
# corpus


def _csv_records(data: bytes) -> int | None:
    """Data records after the first line, counted with Python's csv module; None when not plain UTF-8 text."""
    if data.startswith(b"\x1f\x8b"):
        import gzip

        try:
            data = gzip.decompress(data)
        except (OSError, EOFError):
            return None
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        text = data.decode("utf-16")
    else:
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError:
            text = data.decode("latin-1")
    if "\x00" in text:
        return None
    first = text.splitlines()[0] if text.strip() else ""
    sep = max(",;\t|", key=first.count)
    csv.field_size_limit(1 << 30)
    records = [r for r in csv.reader(io.StringIO(text, newline=""), delimiter=sep) if any(c.strip() for c in r)]
    return max(len(records) - 1, 0)


# lines holding only separators are rows to the reader (rejected: bad_time) but blank records to this count
_NOT_PLAIN = {"separators_only_line.csv"}
# 500 channels x 20 rows take ~16 s to analyse on the shared 2-core machine; test_hostile_inputs.py analyses it
_ANALYSE_ELSEWHERE = {"500_channels.csv"}
LINK_KW = dict(frequency_ghz=23.0, length_km=8.0, polarization="H", threshold_dbm=-72.0)


@pytest.mark.parametrize("name", sorted(CORPUS))
def test_corpus_conservation(tmp_path, name):
    data = CORPUS[name]
    tz = dict(zip(OPTIONS.get(name, [])[::2], OPTIONS.get(name, [])[1::2])).get("--tz")
    try:
        read = read_log(data, name=name, tz=tz)
    except InputError as exc:
        assert exc.one_line() and "\n" not in exc.one_line()
        return
    report = read.report.to_dict()
    check_read_accounting(report, read.table, name)
    expected_rows = _csv_records(data)
    if expected_rows is not None and name not in _NOT_PLAIN and report.get("header_line") == 1:
        assert report["rows_read"] == expected_rows, (name, report["rows_read"], expected_rows, report["rejected"])
    if name in _ANALYSE_ELSEWHERE:
        return
    # analysed through the same entry point the command line uses; one hop described by flags
    links = [make_link({"link_id": lk, **LINK_KW}, where="test") for lk in (report["links"] or ["x"])]
    path = tmp_path / name
    path.write_bytes(data)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DataWarning)
            warnings.simplefilter("ignore", RuntimeWarning)
            results = analyze_files([path], links=links, tz=tz)
    except InputError:
        return
    for result in results:
        check_outage_accounting(result, read.table, report.get("link_intervals_s") or {},
                                f"{name}/{result.link.link_id}")


# ---------------------------------------------------------------------------------------------------------------
# simulator scenarios


def _short_spec(spec, *, window_s: float = WINDOW_S):
    """The hop over ``window_s`` starting 30 min before its first event, plus a 10-min data gap (no-data time)."""
    starts = [e.start_s for e in spec.effects if e.kind not in ("drift",) and e.start_s > 0]
    offset = max(0.0, (min(starts) if starts else 0.0) - 1800.0)
    offset = min(offset, max(0.0, spec.duration_s - window_s))
    effects = []
    for e in spec.effects:
        end = math.inf if e.duration_s is None else e.start_s + e.duration_s
        if end <= offset or e.start_s >= offset + window_s:
            continue
        start = max(e.start_s - offset, 0.0)
        duration = None if e.duration_s is None else end - offset - start
        effects.append(dataclasses.replace(e, start_s=start, duration_s=duration))
    effects.append(Effect("gap", start_s=window_s - 1500.0, duration_s=600.0))
    start = (spec.start_utc + pd.Timedelta(seconds=offset)).isoformat()
    return spec.replace(start=start, duration_s=float(min(window_s, spec.duration_s)), effects=tuple(effects))


def check_same_values(written: pd.DataFrame, read: pd.DataFrame, floor_dbm: float, label: str) -> None:
    """Each simulated value comes back once with its status; the one allowed change is the reader's floor band:
    a reading within FLOOR_BAND_DB (1 dB) above the detected receiver floor is taken as loss of signal."""
    from diag.read.values import FLOOR_BAND_DB

    keys = [S.TIME, S.CHANNEL, S.QUANTITY, S.STAT]
    a = written[keys + [S.VALUE, S.STATUS]].astype({S.CHANNEL: str, S.QUANTITY: str, S.STAT: str, S.STATUS: str})
    b = read[keys + [S.VALUE, S.STATUS]].astype({S.CHANNEL: str, S.QUANTITY: str, S.STAT: str, S.STATUS: str})
    both = a.merge(b, on=keys, how="outer", suffixes=("_w", "_r"), indicator=True)
    assert (both["_merge"] == "both").all(), (label, both["_merge"].value_counts().to_dict())
    changed = both[both[S.STATUS + "_w"] != both[S.STATUS + "_r"]]
    floor_band = ((changed[S.STATUS + "_w"] == S.OK) & (changed[S.STATUS + "_r"] == S.SIGNAL_LOST)
                  & (changed[S.VALUE + "_w"] <= floor_dbm + FLOOR_BAND_DB + 1e-9))
    assert floor_band.all(), (label, changed[~floor_band].head(10).to_dict("records"))
    same = both[S.STATUS + "_w"] == S.OK
    same &= both[S.STATUS + "_r"] == S.OK
    assert np.allclose(both.loc[same, S.VALUE + "_w"], both.loc[same, S.VALUE + "_r"], atol=1e-6), label


def _scenario_cases():
    cases = []
    for k, name in enumerate(SCENARIOS):
        for shape in (SAMPLE_SHAPES[k % len(SAMPLE_SHAPES)], "stats"):
            cases.append((name, shape))
    cases.append(("quick", "long"))
    cases.append(("rain", "epoch"))
    return cases


@pytest.mark.parametrize("scenario,shape", _scenario_cases())
def test_scenario_conservation(tmp_path, scenario, shape):
    sc = load_scenario(scenario)
    for spec in sc.links:
        spec = _short_spec(spec)
        sim = simulate_link(spec, seed=11)
        table = sim.table
        if shape == "stats":
            table = aggregate_statistics(table, interval_s=sc.stats_interval_s, floor_dbm=spec.floor_value_dbm,
                                         threshold_dbm=spec.threshold_dbm)
        path = tmp_path / f"{spec.link_id}.csv"
        info = writers.write_log(table, path, shape, tz=sc.tz, defects=sim.file_defects if shape != "stats" else None,
                                 floor_dbm=spec.floor_value_dbm)
        label = f"{scenario}/{shape}/{spec.link_id}"
        read = read_log(path, tz=sc.tz if shape == "semicolon_local" else None)
        report = read.report.to_dict()
        check_read_accounting(report, read.table, label)
        # the writer's own count of data lines and repeated rows, against the reader's
        assert report["rows_read"] == info.rows, (label, report["rows_read"], info.rows)
        assert report["rejected"].get("duplicate", 0) == info.duplicate_rows, (label, report["rejected"], info)
        assert report["rows_kept"] == info.rows - info.duplicate_rows, (label, report["rejected"])
        # every value the simulator produced comes back as one table row, with the same status
        assert len(read.table) == len(table), (label, len(read.table), len(table))
        check_same_values(table, read.table, spec.floor_value_dbm, label)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DataWarning)
            warnings.simplefilter("ignore", RuntimeWarning)
            (result,) = analyze_files([path], links=[sim.link], tz=sc.tz if shape == "semicolon_local" else None)
        check_outage_accounting(result, read.table, report.get("link_intervals_s") or {}, label)
        if result.outage.summary["exact"]:
            # the simulator's gap and dropped polls: the seconds it logged (with a reading) are the observed ones
            truth = sim.truth_samples
            logged = truth[truth["logged"]]
            assert result.outage.summary["observed_s"] <= logged["time_utc"].nunique(), label
            assert result.outage.summary["no_data_s"] >= 600, label   # the 10-min gap we put in


def test_analyze_link_direct_tables():
    """analyze_link straight on simulated tables (no file): the same conservation, on two shapes of one hop."""
    spec = _short_spec(load_scenario("signal_loss").links[0])
    sim = simulate_link(spec, seed=5)
    for table in (sim.table, aggregate_statistics(sim.table, interval_s=900, floor_dbm=spec.floor_value_dbm)):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DataWarning)
            warnings.simplefilter("ignore", RuntimeWarning)
            result = analyze_link(table, sim.link)
        check_outage_accounting(result, table, {sim.link.link_id: 1.0}, "signal_loss/direct")


# ---------------------------------------------------------------------------------------------------------------
# a large file: one million rows through `ingest` (the 10-million-row file is left to bench/bench_memory.py)


def _bench_memory():
    import importlib.util
    from pathlib import Path

    path = Path(__file__).resolve().parents[2] / "bench" / "bench_memory.py"
    spec = importlib.util.spec_from_file_location("bench_memory", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.mark.slow
def test_million_rows_through_ingest(tmp_path, capsys):
    """1 000 000 lines (dual 1-s log with a 6-h gap, floor drop-outs, and planted defects) through `ingest --json`:
    every planted defect is found and counted, nothing else is lost.  Bounded: fails rather than hangs."""
    import json

    from test_hostile_inputs import _bounded

    from diag.cli import main

    path = tmp_path / "hop_1m.csv"
    planted = _bench_memory().make_log(path, 1_000_000, seed=3, bad_time_every=1000, duplicate_every=997,
                                       blank_every=500)
    with _bounded(240):
        rc = main(["ingest", str(path), "--json"])
    captured = capsys.readouterr()
    assert rc == 0, captured.err
    report = json.loads(captured.out)
    assert report["rows_read"] == 1_000_000
    assert report["rejected"] == {"bad_time": planted["bad_time"], "duplicate": planted["duplicates"]}
    assert report["rows_kept"] == planted["kept"] == 1_000_000 - planted["bad_time"] - planted["duplicates"]
    values = report["values"]
    assert values["read"] == planted["values"]
    assert values["reasons"].get("blank", 0) == planted["blank"] == values["missing"]
    assert values["signal_lost"] == planted["floor_values"] > 0
    assert values["ok"] == planted["values"] - planted["blank"] - planted["floor_values"]
    # time conservation of the reader: distinct seconds + gap seconds = the span (1-s rows)
    assert report["interval_s"] == 1.0
    span_s = (pd.Timestamp(report["end_utc"]) - pd.Timestamp(report["start_utc"])).total_seconds() + 1
    distinct = planted["kept"]   # every kept line has its own second (the repeats were the duplicates)
    assert distinct + report["gap_seconds"] == span_s
    assert report["gap_seconds"] >= planted["gap_s"]


def test_hop_split_over_overlapping_files(tmp_path):
    """One hop in two files that overlap by 10 minutes: every value is counted once (the overlap is reported as
    dropped), and the analysed period and observed time are those of the union."""
    sc = load_scenario("refractive")
    spec = _short_spec(sc.links[0], window_s=2 * 3600)
    sim = simulate_link(spec, seed=2)
    table = sim.table
    cut = table[S.TIME].min() + pd.Timedelta(hours=1)
    first = table[table[S.TIME] < cut + pd.Timedelta(minutes=10)]
    second = table[table[S.TIME] >= cut]
    paths = [tmp_path / f"{spec.link_id}_a.csv", tmp_path / f"{spec.link_id}_b.csv"]
    for part, path in zip((first, second), paths):
        writers.write_log(part, path, "wide_iso", floor_dbm=spec.floor_value_dbm)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        warnings.simplefilter("ignore", RuntimeWarning)
        (result,) = analyze_files(paths, links=[sim.link])
    reports = result.ingest["files"]
    assert len(reports) == 2
    overlap = first[first[S.TIME] >= cut]
    assert result.ingest.get("overlap_values_dropped", 0) == len(overlap)
    assert sum(r["values"]["read"] for r in reports) == len(table) + len(overlap)
    union = pd.concat([read_log(p).table.astype({S.LINK: str, S.CHANNEL: str, S.QUANTITY: str, S.STAT: str})
                       for p in paths]).drop_duplicates([S.TIME, S.CHANNEL, S.QUANTITY, S.STAT])
    union = union.assign(**{S.LINK: spec.link_id})   # the files are named after the hop, their rows carry the stem
    assert len(union) == len(table)
    check_outage_accounting(result, union, {spec.link_id: 1.0}, "split files")
