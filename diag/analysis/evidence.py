"""Per-event measurements read from the gridded series, added to the event table before classification.

Columns (units in the names):

- ``jump_in_db`` / ``jump_out_db``: the change of the attenuation across the event's first / last edge, from the
  sample just outside to the sample just inside (NaN at the ends of the record or next to a missing sample).
  A propagation fade enters and leaves the fade band gradually (rain cells and refraction over minutes; the
  segmentation starts an event at 1.5 dB), so an edge that carries most of the fade in one sample is equipment: a
  level step (a temporary one when both edges do);
- ``flat_std_db``: the standard deviation of the attenuation over the middle 80 % of the event (a level step holds
  flat; rain and clear-air fades vary);
- ``plateau_in_db`` / ``plateau_out_db`` / ``plateau_q10_db`` / ``plateau_s``: the largest one-sample rise of the
  attenuation inside the event (its edge included), the largest one-sample fall after it, the 10th percentile of
  the attenuation between the two and how long that lasts (samples 10 s apart or finer): a level step with a fade
  on top (rain on a knocked antenna) never comes back above the step in between, multipath does all the time;
- ``tsl_rise_db``: on hops that log the transmit level (ATPC), the rise of the TSL during the event above its
  median over the hour before: ATPC hides that much of the propagation fade from the RSL (the fade on the path is
  the RSL fade plus this rise).

Level-shift spans get ``jump_in_db`` only at samples 10 s apart or finer: the largest one-sample move of the path
level (RSL less logged TSL changes) in the direction of the opening step within ``SPAN_EDGE_SEARCH_S`` of the
span's start (the reference stage places the step to within a block of samples); everything else NaN, as for
events without samples.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from diag import schema as S
from diag.analysis.steps import path_level
from diag.results import ChannelSeries

__all__ = ["add_evidence", "EVIDENCE_COLUMNS"]

EVIDENCE_COLUMNS = ["jump_in_db", "jump_out_db", "flat_std_db", "plateau_in_db", "plateau_out_db",
                    "plateau_q10_db", "plateau_s", "tsl_rise_db"]
SPAN_EDGE_SEARCH_S = 600.0   # stated choice: ten minutes either side of a span's start


def _span_edges(out: pd.DataFrame, item: ChannelSeries, rows: np.ndarray, cols: dict) -> None:
    """``jump_in_db`` of the level-shift spans ``rows`` of one channel sampled 10 s apart or finer (module
    docstring)."""
    level = path_level(item.frame)
    w = max(1, int(round(SPAN_EDGE_SEARCH_S / max(item.interval_s, 1e-9))))
    first = out["start_index"].to_numpy(dtype=float)
    sign = np.sign(out["step_db"].to_numpy(dtype=float))
    for k in rows:
        if not (np.isfinite(first[k]) and np.isfinite(sign[k]) and sign[k] != 0):
            continue
        a = int(first[k])
        moves = np.diff(level[max(a - w, 0):min(a + w + 1, level.size)]) * sign[k]
        if np.isfinite(moves).any():
            cols["jump_in_db"][k] = float(np.nanmax(moves))


def _plateau(att: np.ndarray, interval_s: float, cols: dict, k: int) -> None:
    """The plateau columns of event ``k`` from its attenuation (one sample either side included)."""
    step = np.diff(att)
    if not np.isfinite(step).any():
        return
    up = int(np.nanargmax(step))
    rest = step[up + 1:]
    if not rest.size or not np.isfinite(rest).any():
        return
    down = up + 1 + int(np.nanargmin(rest))
    inside = att[up + 1:down + 1]
    inside = inside[np.isfinite(inside)]
    if not inside.size:
        return
    cols["plateau_in_db"][k] = float(step[up])
    cols["plateau_out_db"][k] = float(-step[down])
    cols["plateau_q10_db"][k] = float(np.quantile(inside, 0.1))
    cols["plateau_s"][k] = float((down - up) * interval_s)


def add_evidence(events: pd.DataFrame, series: dict[str, ChannelSeries]) -> pd.DataFrame:
    """``events`` with :data:`EVIDENCE_COLUMNS` (a new frame; the input is not changed)."""
    out = events.copy()
    n = len(out)
    cols = {c: np.full(n, np.nan) for c in EVIDENCE_COLUMNS}
    if n:
        kinds = out["event_kind"].to_numpy(dtype=object)
        channels = out["channel"].astype(str).to_numpy(dtype=object)
        first = out["start_index"].to_numpy(dtype=float)
        last = out["end_index"].to_numpy(dtype=float)
        for name, item in series.items():
            spans = np.flatnonzero((channels == str(name)) & (kinds == "level_shift"))
            if spans.size and item.interval_s <= 10.0:
                _span_edges(out, item, spans, cols)
            rows = np.flatnonzero((channels == str(name)) & (kinds == "fade"))
            if not rows.size:
                continue
            frame = item.frame
            att = frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
            lost = (frame["status"] == S.SIGNAL_LOST).to_numpy(dtype=bool)
            att = np.where(lost, np.nan, att)
            tsl = frame[S.TSL].to_numpy(dtype=float, na_value=np.nan) if S.TSL in frame.columns else None
            size = att.size
            hour = max(1, int(round(3600.0 / max(item.interval_s, 1.0))))
            for k in rows:
                if not (np.isfinite(first[k]) and np.isfinite(last[k])):
                    continue
                a, b = int(first[k]), int(last[k])
                if b <= a:
                    continue
                if a > 0:
                    cols["jump_in_db"][k] = att[a] - att[a - 1]
                if b < size:
                    cols["jump_out_db"][k] = att[b - 1] - att[b]
                cut = (b - a) // 10
                mid = att[a + cut:b - cut]
                mid = mid[np.isfinite(mid)]
                if mid.size >= 2:
                    cols["flat_std_db"][k] = float(np.std(mid))
                if item.interval_s <= 10.0 and b - a >= 3:
                    _plateau(att[max(a - 1, 0):min(b + 1, size)], item.interval_s, cols, k)
                if tsl is not None:
                    before = tsl[max(0, a - hour):a]
                    before = before[np.isfinite(before)]
                    inside = tsl[a:b]
                    inside = inside[np.isfinite(inside)]
                    if before.size and inside.size:
                        cols["tsl_rise_db"][k] = float(max(0.0, inside.max() - np.median(before)))
    for c in EVIDENCE_COLUMNS:
        out[c] = cols[c]
    return out
