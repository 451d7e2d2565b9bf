"""15-min min/avg/max: a fade extends only while the interval minimum stays below the clear-air MINIMUM level
(diag.analysis.events.clear_min_gap_db and segment's ``extend_db``).

Hand-written logs of a 6.2-GHz, 48-km hop (clear level -54 dBm, two days of 15-min intervals).  In clear air each
interval's minimum sits 1.3 dB below its average (a 0.1-dB radio's noise extremes over 900 readings).  Through the
night the level drifts down by 0.6 dB (a detector's daily swing), and two short multipath bursts take single
intervals' minima 15 dB down.  The reference follows the averages, so measured against it the clear-air minima
read 1.3-1.9 dB "faded", above the 1.5-dB hysteresis: before, the whole night became one fade.  Counted from the
clear-air minimum level, each burst is its own short event, as in the same log without its average (min/max).
"""
from __future__ import annotations

import math

import pandas as pd

from diag.analysis import events as E
from diag.links import Link
from diag.pipeline import analyze_files

T0 = pd.Timestamp("2031-05-10T12:00:00Z")
LINK = Link(link_id="FERN-RIDGE", frequency_ghz=6.2, length_km=48.0, polarization="V", threshold_dbm=-80.0,
            nominal_dbm=-54.0)
BURSTS = (56, 70)     # intervals with a 15-dB multipath dip (02:00 and 05:30 UTC, the first night)


def _write(tmp_path, with_average: bool = True) -> list:
    head = "time_utc,link_id,channel,RSL min 15min (dBm)," + ("RSL avg 15min (dBm)," if with_average else "")
    lines = [head + "RSL max 15min (dBm)"]
    for k in range(192):
        since_dusk = (k * 0.25 + 12.0 - 18.0) % 24.0          # hours since 18:00 UTC
        drift = 0.6 * math.sin(math.pi * since_dusk / 14.0) if since_dusk < 14.0 else 0.0
        avg = round(-54.0 - drift + 0.1 * math.sin(k), 1)
        lo, hi = round(avg - 1.3, 1), round(avg + 1.2, 1)
        if k in BURSTS:
            lo, hi = round(avg - 15.0, 1), round(avg + 4.0, 1)
        t = T0 + pd.Timedelta(minutes=15 * k)
        lines.append(f"{t:%Y-%m-%dT%H:%M:%SZ},FERN-RIDGE,V,{lo}," + (f"{avg}," if with_average else "") + f"{hi}")
    path = tmp_path / "FERN-RIDGE.csv"
    path.write_text("\n".join(lines) + "\n")
    return [path]


def _events(tmp_path, with_average: bool = True):
    result = analyze_files(_write(tmp_path, with_average), links=[LINK])[0]
    assert result.error is None
    return result


def test_the_clear_air_gap_is_the_median_min_below_average(tmp_path):
    frame = next(iter(_events(tmp_path).series.values())).frame
    assert abs(E.clear_min_gap_db(frame) - 1.3) <= 0.05
    # a min/max log has no average: no gap
    frame_mm = next(iter(_events(tmp_path, with_average=False).series.values())).frame
    assert E.clear_min_gap_db(frame_mm) == 0.0


def test_each_burst_is_its_own_short_event(tmp_path):
    ev = _events(tmp_path).events
    assert len(ev) == 2
    assert (ev["duration_s"] <= 1800.0).all()
    starts = sorted(((ev["start_utc"] - T0) / pd.Timedelta(minutes=15)).round().astype(int))
    assert starts == list(BURSTS)


def test_without_the_gap_the_night_was_one_long_fade(tmp_path, monkeypatch):
    """The switch is what keeps the bursts apart: without it the clear-air minima of the drifting night, 1.3-1.9 dB
    under the average-based reference, kept one fade open from the first burst to the second."""
    monkeypatch.setattr(E, "STATS_MIN_GAP", False)
    ev = _events(tmp_path).events
    assert len(ev) == 1
    assert ev["duration_s"].iloc[0] >= (BURSTS[1] - BURSTS[0]) * 900.0
