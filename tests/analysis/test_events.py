"""Fade segmentation and event features (diag.analysis.events).

Outside checks: the V/H attenuation ratio and the implied rain rate of a constant-rate rain event against
ITU-R P.838-3 as implemented by the reference library itur 0.4.0 (itur.models.itu838); the hysteresis rules are
common practice (start/end thresholds, minimum separation) and are checked on hand-made series.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from itur.models import itu838

from diag import schema as S
from diag.analysis.events import FEATURE_COLUMNS, channel_polarization, find_events, paint_series, segment
from diag.analysis.reference import add_reference, channel_grids
from diag.config import AnalysisConfig
from diag.sim.simulate import Effect, LinkSpec

CFG = AnalysisConfig()


def _seg(att, floor=None, below=None, config=CFG, step=1.0):
    att = np.asarray(att, dtype=float)
    floor = np.zeros(att.size, bool) if floor is None else np.asarray(floor)
    below = np.zeros(att.size, bool) if below is None else np.asarray(below)
    a, b = segment(att, floor, below, step, config)
    return list(zip(a.tolist(), b.tolist()))


def test_hysteresis_start_and_end_thresholds():
    # rises to 2.9 dB (never reaches the 3-dB start): no event; rises to 4 dB: the event runs while >= 1.5 dB
    att = np.zeros(200)
    att[10:20] = 2.9
    att[100:105] = 2.0
    att[105:110] = 4.0
    att[110:120] = 1.6
    assert _seg(att) == [(100, 120)]


def test_min_separation_merges_and_min_duration_drops():
    att = np.zeros(400)
    att[100:110] = 5.0
    att[150:160] = 5.0          # 40 s after the first: merged (min_separation 60 s)
    att[300:302] = 5.0          # 2 s long: dropped (min_duration 3 s) ...
    assert _seg(att) == [(100, 160)]
    below = np.zeros(400, bool)
    below[300] = True           # ... unless it holds a below-threshold second
    assert _seg(att, below=below) == [(100, 160), (300, 302)]
    wide = AnalysisConfig(min_separation_s=10.0)
    assert _seg(att, config=wide) == [(100, 110), (150, 160)]


def test_floor_samples_are_inside_events_and_nan_breaks_runs():
    att = np.zeros(300)
    att[50:60] = np.nan
    floor = np.zeros(300, bool)
    floor[50:60] = True
    assert _seg(att, floor=floor) == [(50, 60)]
    att2 = np.zeros(300)
    att2[100:110] = 5.0
    att2[110:200] = np.nan      # a 90-s gap (longer than min_separation) splits the fades
    att2[200:210] = 5.0
    assert _seg(att2) == [(100, 110), (200, 210)]


@pytest.mark.parametrize("name,expected", [("H", "H"), ("V", "V"), ("rx-V", "V"), ("Horizontal", "H"),
                                           ("A-B", None)])
def test_channel_polarization(name, expected):
    assert channel_polarization(name) == expected


@pytest.fixture(scope="module")
def constant_rain(hops):
    # constant 30 mm/h over the whole 8-km path for 40 min, no wet antenna: A = gamma * L exactly (P.838-3 eq. 1)
    spec = LinkSpec(link_id="E-RAIN", frequency_ghz=23.0, length_km=8.0, polarization="dual", threshold_dbm=-80.0,
                    nominal_dbm=-35.0, duration_s=8 * 3600.0, noise_db=0.05, quantisation_db=0.0,
                    effects=(Effect("rain", 3 * 3600.0, 2400.0, {"profile": "constant", "peak_mmh": 30.0,
                                                                 "wet_antenna_db": 0.0}),))
    sim = hops.sim(spec, seed=11)
    series = channel_grids(sim.table)
    for item in series.values():
        add_reference(item)
    events = find_events(series, sim.link)
    return sim, series, events


def test_event_columns_and_groups(constant_rain):
    _, _, events = constant_rain
    assert list(events.columns) == S.EVENT_COLUMNS + FEATURE_COLUMNS
    fades = events[events["event_kind"] == "fade"]
    assert sorted(fades["channel"]) == ["H", "V"]
    assert fades["group_id"].nunique() == 1          # one physical event seen on both polarisations
    assert (fades["duration_s"] - 2400).abs().max() <= 60


def test_v_over_h_ratio_and_rain_rate_follow_p838(constant_rain):
    # reference values from itur 0.4.0, ITU-R P.838-3 (el = 0; tau 0 = H, 90 = V)
    _, _, events = constant_rain
    gh = float(np.asarray(itu838.rain_specific_attenuation(30.0, 23.0, 0.0, 0.0).value))
    gv = float(np.asarray(itu838.rain_specific_attenuation(30.0, 23.0, 0.0, 90.0).value))
    fades = events[events["event_kind"] == "fade"].set_index("channel")
    # ratio over the deep part of the fade: the 0.05-dB noise allows ~1 % (tolerance chosen accordingly)
    assert fades.at["H", "v_over_h_ratio"] == pytest.approx(gv / gh, rel=0.015)
    assert fades.at["H", "expected_v_over_h"] == pytest.approx(gv / gh, rel=0.02)
    # peak fade = gamma_H * 8 km (+ a little noise); implied path-average rate back to 30 mm/h within 3 %
    assert fades.at["H", "peak_fade_db_finite"] == pytest.approx(gh * 8.0, abs=0.3)
    assert fades.at["H", "rain_rate_mmh"] == pytest.approx(30.0, rel=0.03)
    assert bool(fades.at["H", "rain_plausible"])


def test_multipath_features_show_fast_fading_and_upfades(hops):
    spec = LinkSpec(link_id="E-MP", frequency_ghz=8.0, length_km=40.0, polarization="H", threshold_dbm=-78.0,
                    nominal_dbm=-45.0, duration_s=6 * 3600.0,
                    effects=(Effect("multipath", 3600.0, 3 * 3600.0, {"k_min": 0.0, "fade_rate_hz": 0.08}),))
    sim = hops.sim(spec, seed=2)
    series = channel_grids(sim.table)
    add_reference(series["H"])
    events = find_events(series, sim.link)
    big = events.sort_values("duration_s").iloc[-1]
    # Rician/Rayleigh fading: level swings above the clear-sky level (P.530 §2.3.3 enhancements), fast changes
    assert big["upfade_within_db"] > 3.0
    assert big["fast_std_db"] > 1.0
    assert big["variability_db"] > 0.5
    # below-threshold seconds of the event = grid samples under threshold or at the floor in its span
    frame = series["H"].frame
    a, b = int(big["start_index"]), int(big["end_index"])
    below = ((frame["rsl_dbm"].iloc[a:b] < spec.threshold_dbm) | (frame["status"].iloc[a:b] == "signal_lost")).sum()
    assert big["below_threshold_s"] == below


def test_paint_series_innermost_event_wins():
    idx = pd.date_range("2026-01-01", periods=100, freq="1s", tz="UTC")
    frame = pd.DataFrame({"rsl_dbm": -40.0, "status": "ok", "reference_dbm": -40.0,
                          "attenuation_db": np.r_[np.zeros(30), np.full(20, 8.0), np.zeros(50)]}, index=idx)
    from diag.results import ChannelSeries

    series = {"H": ChannelSeries(link_id="P", channel="H", interval_s=1.0, kind="sample", frame=frame)}
    events = pd.DataFrame({"channel": ["H", "H"], "start_index": [10, 30], "end_index": [90, 50],
                           "duration_s": [80.0, 20.0], "cause": [S.LEVEL_SHIFT, S.RAIN],
                           "event_kind": ["level_shift", "fade"], "peak_fade_db": [5.0, 8.0]})
    paint_series(series, events)
    got = frame["cause"].to_numpy()
    assert (got[:10] == "").all() and (got[90:] == "").all()
    assert (got[10:30] == S.LEVEL_SHIFT).all() and (got[50:90] == S.LEVEL_SHIFT).all()
    # inside the 5-dB shift the 8-dB rain fade is the larger contribution: rain
    assert (got[30:50] == S.RAIN).all()
    assert (frame["event_id"].to_numpy()[30:50] == 1).all()


def test_min_max_export_has_no_average_to_compare_with_the_minimum():
    # a min/max export carries the interval minimum where the average would be (reference.py), so an
    # average-to-minimum ratio would read 1.0 everywhere and pass for a slow fade; it must be unknown instead
    from diag.analysis.events import _has_average
    mn = np.array([-40.0, -55.0, np.nan, -41.0])
    minmax = pd.DataFrame({"rsl_dbm": mn, "rsl_min_dbm": mn, "rsl_max_dbm": mn + 3.0})
    averaged = pd.DataFrame({"rsl_dbm": mn + 0.5, "rsl_min_dbm": mn, "rsl_max_dbm": mn + 3.0})
    assert not _has_average(minmax)
    assert _has_average(averaged)
    assert _has_average(pd.DataFrame({"rsl_dbm": mn}))   # instantaneous samples: nothing to say
