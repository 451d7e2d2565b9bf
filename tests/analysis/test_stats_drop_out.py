"""A drop-out inside a fade in 15-min min/avg/max statistics (diag.analysis.events._paint_losses with the
``loss_clear_db`` of diag.analysis.classify).

The logs are written by hand: a 23-GHz, 5-km hop with a clear level of -50 dBm, 15-min intervals over two days.
An interval whose minimum is the receiver's loss marker is a lost interval.  Rule 2 of diag.analysis.classify
names a lost run signal loss when the level just before it was near clear-sky; inside a longer fade the same
intervals took the fade's cause before.  Now a lost run inside a fade whose neighbouring intervals on both sides
kept their lowest reading within the fade-start level (3 dB) of the clear-air minimum level (the reference less
the clear-air gap between an interval's average and minimum, diag.analysis.events.clear_min_gap_db) is signal
loss too: a propagation fade would have to go from outside any fade to the floor and back inside the lost
interval itself (common practice; the same physics as rule 2).
"""
from __future__ import annotations

import math

import pandas as pd

from diag import schema as S
from diag.links import Link
from diag.pipeline import analyze_files

T0 = pd.Timestamp("2031-03-02T00:00:00Z")
LINK = Link(link_id="ELM-QUAY", frequency_ghz=23.0, length_km=5.0, polarization="V", threshold_dbm=-75.0,
            nominal_dbm=-50.0)


def _write(tmp_path, rows: dict[int, tuple]) -> list:
    """192 intervals (2 days) at -51.5/-50/-48.5 dBm, with ``rows`` (interval -> (min, avg, max)) replacing some."""
    lines = ["time_utc,link_id,channel,RSL min 15min (dBm),RSL avg 15min (dBm),RSL max 15min (dBm)"]
    for k in range(192):
        lo, av, hi = rows.get(k, (-51.5, -50.0, -48.5))
        t = T0 + pd.Timedelta(minutes=15 * k)
        lines.append(f"{t:%Y-%m-%dT%H:%M:%SZ},ELM-QUAY,V,{lo},{av},{hi}")
    path = tmp_path / "ELM-QUAY.csv"
    path.write_text("\n".join(lines) + "\n")
    return [path]


def _causes(tmp_path, rows):
    result = analyze_files(_write(tmp_path, rows), links=[LINK])[0]
    assert result.error is None
    frame = next(iter(result.series.values())).frame
    return frame["cause"].astype(str).to_numpy(), frame["status"].astype(str).to_numpy()


def _slow_fade(first: int, last: int, depth_db: float) -> dict[int, tuple]:
    """A smooth fade (a half sine of ``depth_db`` in the interval average) with 1.5 dB either side for min and
    max."""
    rows = {}
    for k in range(first, last):
        a = round(depth_db * math.sin(math.pi * (k - first + 0.5) / (last - first)), 1)
        rows[k] = (round(-51.5 - a, 1), -50.0 - a, round(-48.5 - a, 1))
    return rows


def test_lost_interval_with_clear_neighbours_inside_a_shallow_fade_is_signal_loss(tmp_path):
    rows = _slow_fade(80, 120, 5.0)                   # 10 h of a 5-dB fade (interval averages)
    # one lost interval on its shoulder; the neighbours' minima 2.1 / 2.7 dB below the clear-air minimum level
    rows[86] = ("LOS", -52.0, -49.0)
    cause, status = _causes(tmp_path, rows)
    assert status[86] == S.SIGNAL_LOST
    assert cause[86] == S.SIGNAL_LOSS
    assert cause[85] == cause[87] != ""               # inside the fade
    # the rest of the fade keeps its own propagation cause
    rest = set(cause[80:120][[k != 6 for k in range(40)]]) - {""}     # "": the shoulders outside the event
    assert rest and S.SIGNAL_LOSS not in rest
    assert rest <= {S.RAIN, S.MULTIPATH, S.REFRACTIVE, S.UNKNOWN}


def test_lost_interval_between_deep_intervals_keeps_the_fade_cause(tmp_path):
    """Control: the intervals either side reach 20 dB below the reference, so the fade itself can have gone to the
    floor; the lost interval stays with the fade."""
    rows = _slow_fade(80, 120, 5.0)
    rows[99] = (-70.0, -60.0, -52.0)
    rows[101] = (-70.0, -60.0, -52.0)
    rows[100] = ("LOS", -65.0, -55.0)
    cause, status = _causes(tmp_path, rows)
    assert status[100] == S.SIGNAL_LOST
    assert cause[100] != S.SIGNAL_LOSS
    assert cause[100] == cause[98]


def test_lost_interval_beside_a_fade_tail_keeps_the_fade_cause(tmp_path):
    """Control: a fade tail of 4-5 dB in the intervals either side (as real rain outages at 25 GHz show, with the
    fade's approach and decay in the intervals beside the floor) keeps the lost interval with the fade."""
    rows = _slow_fade(80, 120, 5.0)
    rows[100] = ("LOS", -55.0, -50.0)
    cause, status = _causes(tmp_path, rows)
    assert status[100] == S.SIGNAL_LOST
    assert cause[100] != S.SIGNAL_LOSS


def test_switch_off_restores_the_fade_cause(tmp_path, monkeypatch):
    """The rule is what names the interval: with it switched off the lost interval takes the fade's cause."""
    from diag.analysis import classify
    monkeypatch.setattr(classify, "STATS_LOSSES", False)
    rows = _slow_fade(80, 120, 5.0)
    rows[86] = ("LOS", -52.0, -49.0)
    cause, _ = _causes(tmp_path, rows)
    assert cause[86] != S.SIGNAL_LOSS
    assert cause[86] == cause[85]
