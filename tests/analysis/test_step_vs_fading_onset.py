"""15-min statistics: a level step that begins as a multipath spell begins is kept; the spell alone is not a step.

``steps._fading_not_step`` rejects a step across which the interval spread widens (the start of a fading spell).
The interval maxima tell the two apart: clear-air fading enhances as well as fades (ITU-R P.530 §2.3.3), so a
multipath spell leaves the maxima where they were or lifts them and sinks the average by at most the Rayleigh
log-mean bias (2.5 dB, tests/models/test_models_fading.py), while a knocked antenna carries the maxima down with it.
The frames are hand-made (hand computation, no outside source)."""
from __future__ import annotations

import numpy as np
import pandas as pd

from diag.analysis import steps
from diag.analysis.step_detection import Step

T0 = pd.Timestamp("2030-07-12T12:00Z")
T = T0 + pd.Timedelta(hours=12)


def _frame(max_after: float, min_after: float) -> pd.DataFrame:
    idx = pd.date_range(T0, periods=96, freq="15min")
    after = idx >= T
    return pd.DataFrame({"rsl_max_dbm": np.where(after, max_after, -40.0),
                         "rsl_min_dbm": np.where(after, min_after, -42.0)}, index=idx)


def _step(size_db: float) -> Step:
    return Step(time_utc=T, size_db=size_db, before_dbm=-41.0, after_dbm=-41.0 + size_db, persist_s=12 * 3600.0)


def test_knocked_antenna_as_fading_begins_is_a_step():
    # spread 2 -> 16 dB, maxima down 6 dB with a 6-dB step of the average
    assert not steps._fading_not_step(_frame(-46.0, -62.0), _step(-6.0))


def test_multipath_spell_alone_is_not_a_step():
    # spread 2 -> 18 dB, maxima UP 3 dB (upfades), average down 2.5 dB
    assert steps._fading_not_step(_frame(-37.0, -55.0), _step(-2.5))


def test_small_step_with_the_spread_is_still_read_as_fading():
    # maxima down 3 dB with a 3-dB step: within what a spell's average can sink (2.5 dB + 1 dB), so fading
    assert steps._fading_not_step(_frame(-43.0, -60.0), _step(-3.0))


def test_without_the_maxima_check_the_spread_alone_decides(monkeypatch):
    monkeypatch.setattr(steps, "FADING_MAX_CHECK", False)
    assert steps._fading_not_step(_frame(-46.0, -62.0), _step(-6.0))
