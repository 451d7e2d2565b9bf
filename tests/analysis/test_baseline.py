"""Clear-sky reference, attenuation and ATPC compensation (diag.analysis.reference) on labelled simulator output.

The simulator's truth (per-sample attenuation by cause) is the reference; the methods themselves are common
practice for receive-level logs (robust rolling reference: Schleiss & Berne, IEEE GRSL 7:611-615, 2010).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.analysis.reference import add_reference, channel_grids, level_shift_spans
from diag.config import AnalysisConfig
from diag.sim.simulate import Effect, LinkSpec, aggregate_statistics

DAY = 86400.0


def _truth(sim, channel):
    tr = sim.truth_samples[sim.truth_samples["channel"] == channel]
    return tr.set_index("time_utc")


@pytest.fixture(scope="module")
def rain_atpc(hops):
    spec = LinkSpec(link_id="T-RAIN", frequency_ghz=23.0, length_km=6.0, polarization="dual", threshold_dbm=-72.0,
                    nominal_dbm=-38.0, duration_s=DAY, atpc=True, atpc_range_db=10.0, quantisation_db=0.1,
                    effects=(Effect("rain", 10 * 3600.0, 3600.0, {"peak_mmh": 40.0, "wet_antenna_db": 1.0}),))
    sim = hops.sim(spec, seed=3)
    series = channel_grids(sim.table)
    for item in series.values():
        add_reference(item)
    return sim, series


def test_grid_is_regular_with_status(rain_atpc):
    sim, series = rain_atpc
    assert set(series) == {"H", "V"}
    for item in series.values():
        assert item.kind == "sample" and item.interval_s == pytest.approx(1.0)
        steps = np.diff(item.frame.index.asi8)
        assert (steps == 1_000_000_000).all()
        assert set(item.frame["status"].unique()) <= {"ok", "signal_lost", "missing", "no_data"}
        # every normalised RSL row lands on the grid: ok rows keep their value (common practice: nothing lost)
        rows = sim.table[(sim.table[S.CHANNEL] == item.channel) & (sim.table[S.QUANTITY] == S.RSL)]
        assert (item.frame["status"] != "no_data").sum() == len(rows)


def test_reference_and_attenuation_match_truth_with_atpc(rain_atpc):
    # ATPC holds the receive level up to 10 dB of fade; the attenuation must come from RSL - (TSL - median TSL)
    sim, series = rain_atpc
    for channel, item in series.items():
        truth = _truth(sim, channel)["total_fade_db"].reindex(item.frame.index)
        att = item.frame["attenuation_db"]
        ok = item.frame["status"] == "ok"
        err = (att - truth)[ok]
        # tolerance: measurement noise 0.1 dB plus 0.1-dB quantisation of RSL and TSL (common practice)
        assert err.abs().median() < 0.15
        assert err.abs().quantile(0.99) < 0.6
        ref = item.frame["reference_dbm"]
        assert ref.std() < 0.2


def test_without_tsl_the_atpc_fade_would_be_missed(rain_atpc):
    # the same hop read without its TSL rows: the first 10 dB of the fade are invisible (RSL held by ATPC)
    sim, _ = rain_atpc
    table = sim.table[sim.table[S.QUANTITY] != S.TSL]
    series = channel_grids(table)
    item = series["H"]
    add_reference(item)
    truth = _truth(sim, "H")["total_fade_db"].reindex(item.frame.index)
    deep = truth > 15
    assert (truth[deep] - item.frame["attenuation_db"][deep]).median() == pytest.approx(10.0, abs=0.5)


def test_reference_follows_a_level_shift_and_reports_it(hops):
    spec = LinkSpec(link_id="T-SHIFT", frequency_ghz=18.0, length_km=12.0, polarization="H", threshold_dbm=-75.0,
                    nominal_dbm=-42.0, duration_s=1.5 * DAY,
                    effects=(Effect("level_shift", 0.6 * DAY, None, {"step_db": 5.0}),
                             Effect("rain", 0.6 * DAY + 3 * 3600.0, 1800.0, {"peak_mmh": 30.0})))
    sim = hops.sim(spec, seed=5)
    item = channel_grids(sim.table)["H"]
    add_reference(item)
    spans = level_shift_spans(item)
    assert len(spans) == 1
    shift_time = pd.Timestamp(spec.start_utc) + pd.Timedelta(seconds=0.6 * DAY)
    # issue bar: time within 15 min, size within 1 dB
    assert abs((spans[0].start - shift_time).total_seconds()) <= 900
    assert spans[0].size_db == pytest.approx(5.0, abs=1.0)
    # within the hour after the step the attenuation is measured against the NEW level (no 5-dB offset)
    after = item.frame.loc[shift_time + pd.Timedelta(minutes=10): shift_time + pd.Timedelta(hours=1), "attenuation_db"]
    assert abs(after.median()) < 0.3
    # the rain fade on top of the shifted level is measured against that level
    truth = _truth(sim, "H")
    rain_peak_truth = truth["rain"].max()
    rain_window = item.frame["attenuation_db"].loc[shift_time + pd.Timedelta(hours=3):
                                                   shift_time + pd.Timedelta(hours=3.6)]
    assert rain_window.max() == pytest.approx(rain_peak_truth, abs=0.6)


def test_fifteen_minute_statistics_give_peak_attenuation(hops):
    spec = LinkSpec(link_id="T-STATS", frequency_ghz=38.0, length_km=3.0, polarization="V", threshold_dbm=-70.0,
                    nominal_dbm=-40.0, duration_s=DAY,
                    effects=(Effect("rain", 12 * 3600.0, 5400.0, {"peak_mmh": 50.0}),))
    sim = hops.sim(spec, seed=8)
    table = aggregate_statistics(sim.table, interval_s=900.0, floor_dbm=spec.floor_value_dbm)
    item = channel_grids(table)["V"]
    assert item.kind == "stats" and item.interval_s == pytest.approx(900.0)
    add_reference(item)
    frame = item.frame
    assert {"rsl_min_dbm", "rsl_max_dbm", "attenuation_peak_db", "attenuation_low_db"} <= set(frame.columns)
    # the interval minimum's fade is never smaller than the average's
    ok = frame["status"] == "ok"
    assert (frame["attenuation_peak_db"][ok] >= frame["attenuation_db"][ok] - 1e-9).all()
    truth = _truth(sim, "V")["total_fade_db"]
    assert frame["attenuation_peak_db"].max() == pytest.approx(truth.max(), abs=1.0)


def test_gaps_are_no_data_and_grid_step_from_samples():
    t = pd.date_range("2026-03-01", periods=2000, freq="10s", tz="UTC")
    keep = np.r_[0:800, 1000:2000]
    rows = pd.DataFrame({S.TIME: t[keep], S.LINK: "G", S.CHANNEL: "H", S.QUANTITY: S.RSL, S.STAT: S.SAMPLE,
                         S.INTERVAL: 0.0, S.VALUE: -45.0, S.STATUS: S.OK})
    rows.loc[100:110, S.VALUE] = np.nan
    rows.loc[100:110, S.STATUS] = S.SIGNAL_LOST
    item = channel_grids(rows)["H"]
    assert item.interval_s == pytest.approx(10.0)
    frame = item.frame
    assert len(frame) == 2000
    assert (frame["status"].iloc[800:1000] == "no_data").all()
    assert (frame["status"].iloc[100:111] == "signal_lost").all()
    add_reference(item, AnalysisConfig())
    assert frame["reference_dbm"].dropna().between(-45.01, -44.99).all()


def test_gap_free_rows_take_the_slice_path_with_the_same_positions():
    """Rows one step apart from a grid point on are placed as a slice; the values land where rounding puts them."""
    from diag.analysis.reference import _place, _positions

    step = 1_000_000_000
    t0 = 1_700_000_000 * step
    times = t0 + step * np.arange(5, 12, dtype=np.int64)          # starts 5 steps into a 20-point grid
    pos, keep, increasing = _positions(times, t0, step, 20)
    assert pos == slice(5, 12) and keep is None and increasing
    values = np.arange(7, dtype=float) + 0.5
    placed = _place(times, values, t0, step, 20)
    expected = np.full(20, np.nan)
    expected[5:12] = values
    np.testing.assert_array_equal(placed, expected)
    # a gap, an off-grid phase, or rows past the grid's end: the general path, same placement rule
    gappy = np.delete(times, 3)
    pos, _, _ = _positions(gappy, t0, step, 20)
    np.testing.assert_array_equal(pos, [5, 6, 7, 9, 10, 11])
    pos, _, _ = _positions(times + step // 4, t0, step, 20)
    np.testing.assert_array_equal(pos, np.arange(5, 12))
    pos, keep, _ = _positions(times, t0, step, 10)
    np.testing.assert_array_equal(pos, np.arange(5, 10))
    assert keep.sum() == 5
