"""A level held at the receiver floor, in 15-min statistics (diag.analysis.features.STATS_FLOOR_BY_MAX).

Rule 2's second form names signal loss where the level sits within 2 dB of the channel's lowest reading for 80 % of
an event of an hour or more, 20 dB or more down: a log that prints a value instead of flagging the loss.  In 15-min
statistics a level held there holds the whole interval there, its maximum too.  A multipath night on a long
low-band hop takes every interval's *minimum* to the lowest reading for a second or two while the maximum stays
near the clear level (clear-air fading enhances as well as fades: ITU-R P.530-18 §2.3.3), so the minima alone
would call that night dead equipment.  Stated choice (common practice): in statistics "near the floor" is read from
the interval maximum.  The logs are written by hand (min/max export); place and hop names are invented.
"""
from __future__ import annotations

import pandas as pd
import pytest

from diag import schema as S
from diag.analysis import features
from diag.links import Link
from tests._minmax_export import analysed_minmax, assert_mostly

T0 = pd.Timestamp("2031-06-01T12:00:00Z")
NIGHT = range(56, 68)      # 02:00-05:00 UTC on the first night: three hours


def _causes(tmp_path, dead: bool) -> list[str]:
    link = Link(link_id="MOOR-6", frequency_ghz=6.2, length_km=50.0, polarization="V", threshold_dbm=-88.0,
                nominal_dbm=-50.0)
    rows = []
    for k in range(192):
        lo, hi = -51.0, -49.0
        if k in NIGHT:
            # the receiver's lowest reading (-92 dBm) in every interval; the maximum dead too, or enhanced
            lo, hi = (-92.0, -91.0) if dead else (-92.0 + (k % 3), -46.0 - (k % 2))
        rows.append((lo, hi))
    frame = analysed_minmax(tmp_path, link, rows, start=T0)
    return [str(c) for c in frame["cause"].astype(str).iloc[NIGHT.start:NIGHT.stop]]


def test_a_multipath_night_whose_minima_touch_the_floor_is_not_dead_equipment(tmp_path):
    assert features.STATS_FLOOR_BY_MAX
    causes = _causes(tmp_path, dead=False)
    assert S.SIGNAL_LOSS not in causes, causes
    assert_mostly(causes, S.MULTIPATH)   # night, enhancement, a 50-km 6-GHz hop


def test_a_receiver_held_at_its_lowest_reading_stays_signal_loss(tmp_path):
    causes = _causes(tmp_path, dead=True)
    assert_mostly(causes, S.SIGNAL_LOSS)


def test_reading_the_minima_alone_calls_the_multipath_night_dead(tmp_path, monkeypatch):
    monkeypatch.setattr(features, "STATS_FLOOR_BY_MAX", False)
    causes = _causes(tmp_path, dead=False)
    assert_mostly(causes, S.SIGNAL_LOSS)


@pytest.mark.parametrize("dead", [False, True])
def test_the_night_is_one_faded_stretch_either_way(tmp_path, dead):
    assert all(c not in ("", "nan", "None") for c in _causes(tmp_path, dead))
