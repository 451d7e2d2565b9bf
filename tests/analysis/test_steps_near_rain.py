"""Two level shifts a few hours apart, with and without a rain fade between them (diag.analysis.steps.detect_steps).

Truth: the simulator (diag.sim.simulate) puts each step at a known time and size; a level shift is a persistent step of
the clear-sky level (common practice), so two steps 3 h apart are two shifts, each with its own time and size,
whatever fades lie between them.  Bars: time within 10 min, size within 0.5 dB (1-s samples, 0.1-dB noise).
"""
from __future__ import annotations

import pandas as pd
import pytest

from diag.analysis import steps as shifts
from diag.sim.simulate import Effect, LinkSpec

H = 3600.0
START = pd.Timestamp("2026-06-01T00:00:00Z")


def _steps(hops, effects, seed=1, duration_s=10 * H, min_step_db=1.5):
    spec = LinkSpec("R1", 23.0, 10.0, "V", -75.0, duration_s=duration_s, effects=tuple(effects))
    sim = hops.sim(spec, seed=seed)
    t = sim.table
    rows = t[(t["channel"] == "V") & (t["quantity"] == "rsl_dbm")].set_index("time_utc")
    return shifts.detect_steps(rows["value"].where(rows["status"] == "ok"), 1.0, min_step_db=min_step_db)


def _shift(at_h, step_db):     # simulator convention: positive step_db = the level drops
    return Effect("level_shift", at_h * H, None, {"step_db": step_db})


def _rain(at_h, dur_h, peak_mmh):
    return Effect("rain", at_h * H, dur_h * H, {"peak_mmh": peak_mmh})


def _check(steps, truth):
    assert len(steps) == len(truth), [(s.time_utc, s.size_db) for s in steps]
    for step, (at_h, size_db) in zip(steps, truth):
        assert abs((step.time_utc - (START + pd.Timedelta(hours=at_h))).total_seconds()) <= 600
        assert step.size_db == pytest.approx(size_db, abs=0.5)


@pytest.mark.parametrize("peak_mmh", [0.0, 10.0, 30.0, 60.0])
@pytest.mark.parametrize("min_step_db", [1.5, 2.0])   # as baseline.add_reference and channel_level_changes call it
def test_two_steps_three_hours_apart_with_rain_between(hops, peak_mmh, min_step_db):
    effects = [_shift(4, 4.0), _shift(7, 3.0)]
    if peak_mmh:
        effects.append(_rain(5, 1.5, peak_mmh))
    _check(_steps(hops, effects, min_step_db=min_step_db), [(4, -4.0), (7, -3.0)])


@pytest.mark.parametrize("rain_at_h", [2.5, 4.2])    # rain ending 30 min before / starting 12 min after the step
def test_single_step_with_rain_next_to_it(hops, rain_at_h):
    _check(_steps(hops, [_shift(4, 4.0), _rain(rain_at_h, 1.0, 40.0)]), [(4, -4.0)])


def test_lone_rain_fade_is_no_step(hops):
    assert _steps(hops, [_rain(4, 1.5, 60.0)]) == []


def test_lone_refractive_fade_is_no_step(hops):
    # a 3-h flat fade that comes back: its start and end are not level shifts
    assert _steps(hops, [Effect("refractive", 3 * H, 3 * H, {"depth_db": 6.0})]) == []
