"""Fuzzing the analysis entry points with hypothesis (issue 9): a result that keeps the invariants, or InputError.

* ``analyze_link`` on random normalised tables (the shape the reader returns: sorted, unique, right dtypes) with
  random levels (inside and outside plausible ranges), statuses, gaps, channels, sampling steps, interval
  statistics, a stray row days to years away, and random link parameters (inside and outside plausible ranges);
* ``analyze_files`` on random and mutated CSV bytes (reader + analysis together; the reader alone is fuzzed in
  tests/read/test_ingest_fuzz.py).

Invariants of a result: the conservation checks of tests/cli/test_conservation.py (analysed time = observed + no data,
per-cause rows add up, nothing above the observed time), events with causes from the vocabulary, start <= end,
confidence in [0, 1], no analysis stage failed (the pipeline turns a crashing stage into a "failed (...)" line in
``skipped``: on a valid table that is a bug), and the four table/JSON outputs can be written.

The number of examples comes from the hypothesis profile (tests/conftest.py): ``ci`` (default, 30 examples per
test) or ``HYPOTHESIS_PROFILE=deep`` (2000) for a long local run.
"""
from __future__ import annotations

import json
import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from diag import schema as S
from diag.errors import DataWarning, InputError
from diag.links import make_link
from diag.pipeline import analyze_files, analyze_link
from diag.report import tables
from tests.cli.test_conservation import check_outage_accounting

# RuntimeWarning/DataWarning on odd inputs are allowed
pytestmark = [pytest.mark.filterwarnings("ignore::diag.errors.DataWarning"),
              pytest.mark.filterwarnings("ignore::RuntimeWarning")]
FUZZ = settings(deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
T0 = pd.Timestamp("2026-05-04T00:00:00Z")


def check_result(result, table: pd.DataFrame, label: str) -> None:
    failed = [s for s in result.skipped if "failed (" in s]
    assert not failed, (label, failed)
    check_outage_accounting(result, table, {result.link.link_id: _step(table)}, label)
    ev = result.events
    if ev is not None and len(ev):
        assert list(ev.columns[:len(S.EVENT_COLUMNS)]) == S.EVENT_COLUMNS, (label, list(ev.columns))
        assert ev["cause"].astype(str).isin(S.CAUSES).all(), (label, ev["cause"].unique())
        assert (pd.to_datetime(ev["start_utc"]) <= pd.to_datetime(ev["end_utc"])).all(), label
        assert (ev["duration_s"] >= 0).all(), label
        conf = ev["confidence"].astype(float)
        assert ((conf >= 0) & (conf <= 1)).all(), (label, conf.describe())
    for writer in (tables.events_csv_bytes, tables.outage_summary_csv_bytes, tables.outage_by_cause_csv_bytes):
        assert writer([result]).count(b"\n") >= 1, label
    json.loads(tables.findings_json_bytes([result]))   # valid JSON (NaN written as null)


def _step(table: pd.DataFrame) -> float:
    t = np.sort(table[S.TIME].unique())
    if len(t) < 2:
        return 1.0
    d = np.diff(t).astype("timedelta64[ns]").astype(np.int64) / 1e9
    vals, counts = np.unique(d, return_counts=True)
    return float(vals[np.argmax(counts)])


# ---------------------------------------------------------------------------------------------------------------
# random normalised tables

LEVEL = st.one_of(
    st.floats(-95.0, -30.0),                                   # plausible receive levels
    st.floats(-160.0, 30.0),                                   # anything the reader keeps as "ok"
    st.sampled_from([-300.0, -99.0, -128.0, 0.0, 29.9, 80.0]),  # floors and absurd values
)


@st.composite
def link_strategy(draw, link_id: str = "FZ-1", always_plausible: bool = False):
    plausible = always_plausible or draw(st.booleans())
    if plausible:
        values = {"frequency_ghz": draw(st.floats(6.0, 80.0)), "length_km": draw(st.floats(0.2, 60.0)),
                  "threshold_dbm": draw(st.floats(-90.0, -60.0))}
    else:
        # the edges of what diag.links accepts, and beyond (make_link must refuse those with InputError)
        values = {"frequency_ghz": draw(st.sampled_from([0.5, 1.0, 100.0, 300.0])),
                  "length_km": draw(st.sampled_from([0.001, 0.01, 200.0, 5000.0])),
                  "threshold_dbm": draw(st.sampled_from([-200.0, -120.0, -20.0, 20.0]))}
    values.update(link_id=link_id, polarization=draw(st.sampled_from(["H", "V", "dual"])))
    if draw(st.booleans()):
        values["nominal_dbm"] = values["threshold_dbm"] + draw(st.floats(-10.0, 60.0))
    if draw(st.booleans()):
        values["objective_pct"] = draw(st.sampled_from([99.9, 99.99, 99.999, 50.0]))
    if draw(st.booleans()):
        values["xpd_required_db"] = draw(st.floats(0.0, 40.0))
    return values


def _make_link(values: dict):
    """The link, or None when diag.links refuses the parameters (with a one-line InputError)."""
    try:
        return make_link(values, where="fuzz")
    except InputError as exc:
        assert "\n" not in exc.one_line()
        return None


@st.composite
def table_strategy(draw, link_id: str = "FZ-1"):
    stats = draw(st.booleans())
    step = 900.0 if stats else draw(st.sampled_from([1.0, 1.0, 10.0, 60.0]))
    n = draw(st.integers(1, 96 if stats else 240))
    channels = draw(st.lists(st.sampled_from(["H", "V", "main", "A-B"]), min_size=1, max_size=3, unique=True))
    # gaps: drop random runs of grid points
    keep = np.ones(n, dtype=bool)
    for start, length in draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(1, 200)), max_size=3)):
        keep[start:start + length] = False
    if not keep.any():
        keep[0] = True
    offsets = np.flatnonzero(keep) * step
    # a stray row far away in time (days to years): the grid must stay bounded (InputError or a result)
    stray = draw(st.sampled_from([None, None, None, 2 * 86400.0, 40 * 86400.0, 3 * 365 * 86400.0]))
    if stray is not None:
        offsets = np.append(offsets, offsets[-1] + stray)
    times = T0 + pd.to_timedelta(offsets, unit="s")
    base = draw(LEVEL)
    mode = draw(st.sampled_from(["constant", "noise", "fades", "random"]))
    seed = draw(st.integers(0, 2**31 - 1))
    rng = np.random.default_rng(seed)
    p_lost, p_missing = draw(st.sampled_from([(0.0, 0.0), (0.02, 0.02), (0.3, 0.1), (0.0, 0.9), (1.0, 0.0)]))
    quantities = [S.RSL] + draw(st.lists(st.sampled_from([S.TSL, S.XPD, S.SES]), max_size=2, unique=True))
    frames = []
    for ch in channels:
        m = len(times)
        if mode == "constant":
            level = np.full(m, base)
        elif mode == "noise":
            level = base + rng.normal(0, 0.3, m)
        elif mode == "fades":
            level = base - np.clip(rng.gamma(0.3, 8.0, m).cumsum() % 40.0, 0, None) * (rng.random(m) < 0.3)
        else:
            level = rng.uniform(-160.0, 30.0, m)
        level = np.round(level, 1)
        u = rng.random(m)
        status = np.where(u < p_lost, S.SIGNAL_LOST, np.where(u < p_lost + p_missing, S.MISSING, S.OK))
        for q in quantities:
            if q == S.RSL:
                values = level
            elif q == S.TSL:
                values = np.round(10.0 + rng.normal(0, 2, m), 1)
            elif q == S.XPD:
                values = np.round(30.0 + rng.normal(0, 3, m), 1)
            else:
                values = rng.integers(0, 5, m).astype(float)
            q_status = status if q == S.RSL else np.where(rng.random(m) < 0.05, S.MISSING, S.OK)
            stat_list = [S.MIN, S.AVG, S.MAX] if (stats and q != S.SES) else [S.SAMPLE]
            for stat in stat_list:
                shift = {S.MIN: -draw(st.sampled_from([0.0, 3.0, 30.0])), S.MAX: 1.0}.get(stat, 0.0)
                interval = step if (stats or q == S.SES) else 0.0
                frames.append(pd.DataFrame({
                    S.TIME: times, S.LINK: link_id, S.CHANNEL: ch, S.QUANTITY: q, S.STAT: stat,
                    S.INTERVAL: interval, S.VALUE: np.where(q_status == S.OK, values + shift, np.nan),
                    S.STATUS: q_status}))
    table = pd.concat(frames, ignore_index=True)
    table = table.sort_values([S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.TIME], kind="stable", ignore_index=True)
    table = table.astype({S.LINK: "str", S.CHANNEL: "str", S.QUANTITY: "str", S.STAT: "str", S.STATUS: "str",
                          S.INTERVAL: "float64", S.VALUE: "float64"})
    # what the reader returns (categorical key columns), or plain str columns (a caller building its own table)
    return S.conform(table) if draw(st.booleans()) else table


def _analyze_or_input_error(table, link, label, raise_input_error=False):
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DataWarning)
            warnings.simplefilter("ignore", RuntimeWarning)
            result = analyze_link(table, link)
    except InputError as exc:
        assert exc.one_line() and "\n" not in exc.one_line()
        event("InputError")
        if raise_input_error:
            raise
        return None
    event(f"result ({'exact' if result.outage.summary.get('exact') else 'bounds'}, "
          f"{'with' if len(result.events) else 'no'} events)")
    check_result(result, table, label)
    return result


@FUZZ
@given(table=table_strategy(), link=link_strategy())
def test_analyze_link_random_tables(table, link):
    link = _make_link(link)
    if link is None:
        event("link refused")
    else:
        _analyze_or_input_error(table, link, f"fuzz {link}")


@FUZZ
@given(table=table_strategy(), data=st.data())
@pytest.mark.slow
def test_analyze_link_plausible_hop(table, data):
    """A plausible hop (the usual case) on random data: must give a result, never InputError."""
    link = make_link({"link_id": "FZ-1", "frequency_ghz": 23.0, "length_km": 8.0,
                      "polarization": data.draw(st.sampled_from(["H", "V", "dual"])), "threshold_dbm": -72.0,
                      "nominal_dbm": -40.0, "objective_pct": 99.99}, where="fuzz")
    try:
        result = _analyze_or_input_error(table, link, "plausible hop", raise_input_error=True)
    except InputError as exc:  # only a log too sparse for one regular grid (a stray far row) may be refused
        assert "too sparse" in str(exc) or "too long" in str(exc), exc
        return
    assert result is not None


# ---------------------------------------------------------------------------------------------------------------
# random CSV bytes through reader + analysis


@st.composite
def csv_bytes(draw):
    n = draw(st.integers(0, 300))
    step = draw(st.sampled_from([1, 1, 10, 60, 900]))
    sep = draw(st.sampled_from([",", ";", "\t"]))
    dec = "," if sep == ";" and draw(st.booleans()) else "."
    cells = st.one_of(LEVEL.map(lambda v: f"{v:.1f}"), st.sampled_from(["", "N/A", "LOS", "-99", "---", "x", "1e400"]))
    dual = draw(st.booleans())
    head = sep.join(["time", "rsl_h_dbm"] + (["rsl_v_dbm"] if dual else [])) + "\n"
    rng = np.random.default_rng(draw(st.integers(0, 2**31 - 1)))
    base = draw(LEVEL)
    lines = [head]
    t = 0
    pool = draw(st.lists(cells, min_size=1, max_size=8))
    for i in range(n):
        t += step * (1 if rng.random() > 0.05 else int(rng.integers(2, 50)))   # bounded gaps: spans stay small
        stamp = (T0 + pd.Timedelta(seconds=t)).strftime("%Y-%m-%dT%H:%M:%SZ")
        vals = [f"{base + rng.normal(0, 2):.1f}" if rng.random() > 0.2 else pool[int(rng.integers(len(pool)))]
                for _ in range(2 if dual else 1)]
        lines.append(sep.join([stamp] + [v.replace(".", dec) for v in vals]) + "\n")
    data = "".join(lines).encode()
    # mutations: flip, delete or insert bytes
    for _ in range(draw(st.integers(0, 3))):
        if not data:
            break
        pos = draw(st.integers(0, len(data) - 1))
        kind = draw(st.sampled_from(["flip", "delete", "insert"]))
        if kind == "flip":
            data = data[:pos] + bytes([data[pos] ^ draw(st.integers(1, 255))]) + data[pos + 1:]
        elif kind == "delete":
            data = data[:pos] + data[pos + draw(st.integers(1, 40)):]
        else:
            data = data[:pos] + draw(st.binary(min_size=1, max_size=20)) + data[pos:]
    return data


@FUZZ
@given(data=csv_bytes(), link=link_strategy(link_id="fuzz", always_plausible=True))
@pytest.mark.slow
def test_analyze_files_random_csv(data, link):
    from diag.read.ingest import read_log

    link = _make_link(link)
    if link is None:
        return
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DataWarning)
            warnings.simplefilter("ignore", RuntimeWarning)
            results = analyze_files([("fuzz.csv", data)], links=[link])
    except InputError as exc:
        assert exc.one_line() and "\n" not in exc.one_line()
        event("InputError")
        return
    event(f"{len(results)} result(s)")
    table = read_log(data, name="fuzz.csv").table
    for result in results:
        check_result(result, table.assign(**{S.LINK: result.link.link_id}), "csv fuzz")


# ---------------------------------------------------------------------------------------------------------------
# memory stays bounded on a sparse log (a stray far time stamp must not become a huge regular grid)


@pytest.mark.parametrize("far_s", [pytest.param(3 * 86400, marks=pytest.mark.slow), 5 * 365 * 86400])
def test_sparse_log_bounded_memory(tmp_path, far_s):
    """200 one-second rows plus one row days or years later, analysed in a child process whose address space is
    capped at 3 GiB (resource.setrlimit): status 0 with outputs, or status 2 with one line; never a MemoryError."""
    import resource
    import subprocess
    import sys
    from pathlib import Path

    lines = ["time,rsl_dbm"] + [f"{(T0 + pd.Timedelta(seconds=i)).strftime('%Y-%m-%dT%H:%M:%SZ')},-45.{i % 10}"
                                for i in range(200)]
    lines.append(f"{(T0 + pd.Timedelta(seconds=200 + far_s)).strftime('%Y-%m-%dT%H:%M:%SZ')},-46.0")
    path = tmp_path / "sparse.csv"
    path.write_text("\n".join(lines) + "\n")
    cap = 3 * 1024 ** 3

    def limit():
        resource.setrlimit(resource.RLIMIT_AS, (cap, cap))

    proc = subprocess.run([sys.executable, "-m", "diag", "analyze", str(path), "--freq-ghz", "23", "--length-km", "8",
                           "--polarization", "H", "--threshold-dbm", "-72", "--out", str(tmp_path / "out")],
                          capture_output=True, text=True, timeout=300, preexec_fn=limit,
                          cwd=Path(__file__).resolve().parents[2])
    assert "MemoryError" not in proc.stderr and "Traceback" not in proc.stderr, proc.stderr[-2000:]
    assert proc.returncode in (0, 2), proc.stderr[-2000:]
    if proc.returncode == 2:
        errors = [ln for ln in proc.stderr.splitlines() if ln.startswith("diag: error:")]
        assert len(errors) == 1 and "sparse.csv" in errors[0], proc.stderr
    else:
        assert (tmp_path / "out" / "outage_summary.csv").exists()
