"""Clear-sky reference level and attenuation, per channel, on a regular time grid.

Stage order: normalised table -> :func:`channel_grids` (one regular grid per channel, with the normalised status
and "no_data" where no row exists) -> :func:`add_reference` (reference level, attenuation).

Method (common practice for receive-level logs; the robust-window idea follows the rolling-statistics wet/dry
detectors of Schleiss & Berne, IEEE GRSL 7:611-615, 2010):

1. *Path level*.  The receive level with logged transmit-power changes removed,
   ``RSL - (TSL - median TSL)`` (automatic transmit power control raises TSL during a fade; the path loss is
   what we want), see :func:`diag.analysis.steps.path_level_dbm`.
2. *Steps*.  Persistent abrupt steps of the clear-sky level (a knocked antenna, a slipped feed) are found by
   :func:`diag.analysis.steps.detect_steps`, and those hidden inside a fade (the level moved while it rained) by
   :func:`diag.analysis.step_detection.hidden_steps`; the record is cut into segments at the steps, so the
   reference follows the new level right after a step and fades on top of a shifted level are measured against
   that level.
3. *Reference*.  Within each segment, the path level is summarised per block (``block_s``, default 15 min) by
   its median (blocks under half covered are ignored); the reference at each block is the upper quantile
   ``reference_quantile`` (default 0.75) of the block medians in a centred window of ``reference_window_h``
   (default 24 h).  Fades only ever lower block medians, so the upper quantile ignores them as long as they
   cover less than about three quarters of the window; gaps simply drop out.  The block values are then
   interpolated linearly to every grid point of the segment.
4. *Attenuation* = reference - path level [dB], positive in a fade.  For 15-min statistics the average gives
   ``attenuation_db`` and the interval minimum gives ``attenuation_peak_db`` (deepest point in the interval).

Level-shift *events* (a segment whose reference sits more than ``step_min_db`` below the best segment) are
produced by :func:`level_shift_spans`; the events module turns them into events with cause ``level_shift``.
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from diag import schema as S
from diag.analysis.steps import channel_steps, path_level
from diag.config import AnalysisConfig
from diag.errors import InputError
from diag.results import GRID_NO_DATA, ChannelSeries

log = logging.getLogger(__name__)

__all__ = ["channel_grids", "add_reference", "level_shift_spans", "LevelSpan"]


@dataclass(frozen=True)
class LevelSpan:
    """A stretch of the record whose clear-sky level sits ``size_db`` below the best level of the channel."""

    channel: str
    start: pd.Timestamp
    end: pd.Timestamp          # exclusive
    size_db: float             # positive: how far below the best segment
    step_db: float             # size of the step that opened the span (negative = level dropped)
    start_index: int
    end_index: int             # exclusive


# ------------------------------------------------------------------------------------------------- grids
def _grid_step_ns(times_ns: np.ndarray, interval_s: float) -> int:
    if interval_s > 0:
        return int(round(interval_s * 1e9))
    if times_ns.size < 2:
        return int(1e9)
    head = times_ns[:200_001]
    diffs = np.diff(np.sort(head) if np.any(head[1:] < head[:-1]) else head)
    diffs = diffs[diffs > 0]
    step = float(np.median(diffs)) if diffs.size else 1e9
    if step >= 1e9:
        step = round(step / 1e9) * 1e9
    return max(int(step), 1)


# A regular grid costs ~100 bytes per point.  Bound it, so that a few stray time stamps far from the rest (or a
# record far longer than one analysis should hold) give a clear message instead of exhausting memory.
MAX_GRID_POINTS = 40_000_000      # about 15 months at 1 s per channel
SPARSE_GRID_FACTOR = 50           # grid points per logged row beyond which the log is too sparse for one grid
SPARSE_GRID_FLOOR = 2_000_000     # ... but any record up to this many points (23 days at 1 s) is accepted


def _check_grid_size(link_id: str, channel: str, n_points: int, n_rows: int, step_ns: int) -> None:
    if n_points <= MAX_GRID_POINTS and n_points <= max(SPARSE_GRID_FACTOR * n_rows, SPARSE_GRID_FLOOR):
        return
    step_s = step_ns / 1e9
    days = n_points * step_s / 86400.0
    raise InputError(
        f"hop {link_id!r}, channel {channel!r}: {n_rows} readings spread over {days:.1f} days at a {step_s:g}-s step "
        f"would need {n_points / 1e6:.1f} M grid points; the log is too sparse or holds stray time stamps "
        f"(check the times, or split it into shorter periods, e.g. weeks, and use 'batch')")


def _positions(times_ns: np.ndarray, t0: int, step: int, n: int) -> tuple:
    """Grid position of each row: (positions, rows kept (None = all), positions strictly increasing).

    Rows exactly one step apart from a grid point on (the usual gap-free log) give a ``slice`` of the grid: the
    same positions as the rounding below (whole steps divide exactly), assigned without an index array."""
    m = times_ns.size
    if m > 1 and (times_ns[0] - t0) % step == 0 and times_ns[-1] - times_ns[0] == step * (m - 1):
        first = (int(times_ns[0]) - t0) // step
        if 0 <= first and first + m <= n and bool((np.diff(times_ns) == step).all()):
            return slice(first, first + m), None, True
    pos = np.rint((times_ns - t0) / step).astype(np.int64)
    keep = (pos >= 0) & (pos < n)
    if keep.all():
        keep = None
    else:
        pos = pos[keep]
    return pos, keep, bool(pos.size) and bool(np.all(pos[1:] > pos[:-1]))


def _place(times_ns: np.ndarray, values: np.ndarray, t0: int, step: int, n: int, where: tuple | None = None
           ) -> np.ndarray:
    """Values on the grid (mean of rows falling on the same grid point), NaN where none.

    ``where``: the rows' :func:`_positions` when already known (channels' quantities share their time stamps)."""
    pos, keep, increasing = where if where is not None else _positions(times_ns, t0, step, n)
    if keep is not None:
        values = values[keep]
    out = np.full(n, np.nan)
    if increasing:  # sorted, one row per grid point: the usual case
        out[pos] = values
        return out
    finite = np.isfinite(values)
    sums = np.bincount(pos[finite], weights=values[finite], minlength=n)
    counts = np.bincount(pos[finite], minlength=n)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = sums / counts
    return np.where(counts > 0, mean, np.nan)


_STATUS_RANK = {S.OK: 0, S.MISSING: 1, S.SIGNAL_LOST: 2}
STATUS_CATEGORIES = [S.OK, S.SIGNAL_LOST, S.MISSING, GRID_NO_DATA]
STATUS_DTYPE = pd.CategoricalDtype(STATUS_CATEGORIES)   # built once: a dtype per channel costs ~0.5 ms
_STATUS_ORDER = np.array([0, 2, 1, 3], dtype=np.int8)   # internal code (ok, missing, lost, no data) -> category


def _status_codes(status: pd.Series) -> np.ndarray:
    """Row status as codes 0 ok, 1 missing, 2 signal_lost (vectorised comparisons, no per-row Python)."""
    if isinstance(status.dtype, pd.CategoricalDtype):  # the normalised table's categorical: map the categories once
        names = [str(c) for c in status.cat.categories]
        per_category = np.array([0 if c == S.OK else 2 if c == S.SIGNAL_LOST else 1 for c in names] + [1],
                                dtype=np.int8)
        return per_category[status.cat.codes.to_numpy()]   # code -1 (no value) -> the last entry, missing
    codes = np.ones(len(status), dtype=np.int8)
    codes[(status == S.OK).to_numpy(dtype=bool, na_value=False)] = 0
    codes[(status == S.SIGNAL_LOST).to_numpy(dtype=bool, na_value=False)] = 2
    return codes


def _place_status(times_ns: np.ndarray, codes: np.ndarray, t0: int, step: int, n: int,
                  where: tuple | None = None) -> np.ndarray:
    """Status code per grid point: 0 ok, 1 missing, 2 signal_lost, 3 no data (an ok row wins a collision)."""
    pos, keep, increasing = where if where is not None else _positions(times_ns, t0, step, n)
    if keep is not None:
        codes = codes[keep]
    out = np.full(n, 3, dtype=np.int8)
    if increasing:
        out[pos] = codes
    else:
        np.minimum.at(out, pos, codes)
    return out


def _labels_at(column: pd.Series, rows: np.ndarray) -> list[str]:
    """``str`` of the column's values at ``rows`` (a missing value gives "nan", as ``str(np.nan)``); a categorical
    column is read from its codes (no row selection of the table)."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        names = [str(c) for c in column.cat.categories] + [str(np.nan)]   # code -1 -> the last entry
        return [names[code] for code in column.cat.codes.to_numpy()[rows].tolist()]
    return [str(value) for value in column.iloc[rows].astype(object).tolist()]


def _groups(table: pd.DataFrame) -> dict:
    """Row blocks by (channel, quantity, stat), found from the runs of the (normally sorted) table."""
    n = len(table)
    change = np.zeros(n, dtype=bool)
    change[0] = True
    for col in (S.CHANNEL, S.QUANTITY, S.STAT):
        if isinstance(table[col].dtype, pd.CategoricalDtype):   # the reader's table: compare the codes
            codes = table[col].cat.codes.to_numpy()
            change[1:] |= codes[1:] != codes[:-1]
            if codes.min() < 0:   # NaN (code -1) differs from everything, itself included
                change[1:] |= (codes[1:] < 0) | (codes[:-1] < 0)
            continue
        values = table[col].reset_index(drop=True)
        diff = values.iloc[1:].reset_index(drop=True) != values.iloc[:-1].reset_index(drop=True)
        change[1:] |= diff.to_numpy(dtype=bool, na_value=True)
    starts = np.flatnonzero(change)
    ends = np.append(starts[1:], n)
    keys = zip(*(_labels_at(table[col], starts) for col in (S.CHANNEL, S.QUANTITY, S.STAT)))
    parts: dict = {}
    for key, a, b in zip(keys, starts, ends):
        parts.setdefault(key, []).append(table.iloc[a:b])
    return {key: (frames[0] if len(frames) == 1 else pd.concat(frames)) for key, frames in parts.items()}


def channel_grids(table: pd.DataFrame) -> dict[str, ChannelSeries]:
    """One ``ChannelSeries`` per channel of ONE link (RSL, status, and TSL/XPD/XPL when logged).

    A channel with instantaneous samples gives kind "sample"; one with interval min/avg/max gives kind "stats"
    (when both exist the samples are used).  The grid runs from the channel's first to its last RSL row with the
    sampling step (the median spacing for samples, ``interval_s`` for statistics).
    """
    if table.empty:
        return {}
    link_id = str(table[S.LINK].iloc[0])
    out: dict[str, ChannelSeries] = {}
    groups = _groups(table)
    channels = sorted({key[0] for key in groups if key[1] == S.RSL})
    tsl_channels = sorted({key[0] for key in groups if key[1] == S.TSL})
    counters: dict = {}  # error-counter blocks by (channel, quantity) and by quantity, in the groups' order
    for (ch, q, _), f in groups.items():
        if q in (S.ES, S.SES, S.UAS):
            counters.setdefault((ch, q), []).append(f)
            counters.setdefault(q, []).append(f)
    mains = {}
    for channel in channels:
        if (channel, S.RSL, S.SAMPLE) in groups:
            kind = "sample"
            main = groups[(channel, S.RSL, S.SAMPLE)]
            interval_s = 0.0
        else:
            kind = "stats"
            main = groups.get((channel, S.RSL, S.AVG))
            if main is None:
                main = groups.get((channel, S.RSL, S.MIN), groups.get((channel, S.RSL, S.MAX)))
            interval_s = float(main[S.INTERVAL].median())
        t_ns = main[S.TIME].to_numpy(dtype="datetime64[ns]").astype(np.int64)
        mains[channel] = (kind, main, t_ns, _grid_step_ns(t_ns, interval_s))
    # channels with the same kind and step share one grid (so H and V, or both directions, line up)
    spans: dict = {}
    for kind, _, t_ns, step in mains.values():
        lo, hi = spans.get((kind, step), (int(t_ns.min()), int(t_ns.max())))
        spans[(kind, step)] = (min(lo, int(t_ns.min())), max(hi, int(t_ns.max())))
    for channel, (kind, main, t_ns, step) in mains.items():
        lo, hi = spans[(kind, step)]
        t0 = lo + ((int(t_ns.min()) - lo) % step)  # keep the channel's own phase on the shared span
        n = int(round((hi - t0) / step)) + 1
        _check_grid_size(link_id, channel, n, len(main), step)
        index = pd.DatetimeIndex(t0 + step * np.arange(n, dtype=np.int64), tz="UTC", name=S.TIME)
        main_where = _positions(t_ns, t0, step, n)

        def where(ts: np.ndarray, main_where=main_where, t_ns=t_ns, t0=t0, step=step, n=n) -> tuple:
            same = ts.shape == t_ns.shape and np.array_equal(ts, t_ns)
            return main_where if same else _positions(ts, t0, step, n)

        status = _place_status(t_ns, _status_codes(main[S.STATUS]), t0, step, n, main_where)
        cols: dict[str, np.ndarray] = {"rsl_dbm": _place(t_ns, main[S.VALUE].to_numpy(dtype=float), t0, step, n,
                                                         main_where)}
        if kind == "stats":
            for stat, name in ((S.MIN, "rsl_min_dbm"), (S.MAX, "rsl_max_dbm")):
                frame = groups.get((channel, S.RSL, stat))
                if frame is not None:
                    ts = frame[S.TIME].to_numpy(dtype="datetime64[ns]").astype(np.int64)
                    at = where(ts)
                    cols[name] = _place(ts, frame[S.VALUE].to_numpy(dtype=float), t0, step, n, at)
                    if stat == S.MIN:  # a signal-lost minimum marks the interval as reaching the floor
                        st = _place_status(ts, _status_codes(frame[S.STATUS]), t0, step, n, at)
                        status = np.where((st == 2) & (status == 0), 2, status)
                else:
                    cols[name] = cols["rsl_dbm"].copy()
        cols["rsl_dbm"] = np.where(status == 0, cols["rsl_dbm"], np.nan)
        # transmit level for this channel (or the link's only TSL channel)
        tsl_channel = channel if channel in tsl_channels else (tsl_channels[0] if len(tsl_channels) == 1 else None)
        extra = {S.TSL: tsl_channel, S.XPD: channel, S.XPL: channel}
        for quantity, source in extra.items():
            if source is None:
                continue
            frame = groups.get((source, quantity, S.SAMPLE if kind == "sample" else S.AVG))
            if frame is None:
                frame = groups.get((source, quantity, S.SAMPLE))
            if frame is None and quantity == S.TSL and kind == "stats" and (channel, S.RSL, S.AVG) not in groups:
                # min/max exports: the receive level read is the interval minimum, and ATPC raises the transmitter
                # as the path fades, so the interval's highest transmit level goes with it (without it a fade that
                # ATPC held off the RSL would not be seen at all)
                frame = groups.get((source, quantity, S.MAX))
            if frame is None:
                continue
            ts = frame[S.TIME].to_numpy(dtype="datetime64[ns]").astype(np.int64)
            cols[quantity] = _place(ts, frame[S.VALUE].to_numpy(dtype=float), t0, step, n, where(ts))
        for quantity in (S.ES, S.SES, S.UAS):  # the radio's own error counters, for the outage cross-check
            counter = counters.get((channel, quantity), [])
            if not counter and len(channels) == 1:
                counter = counters.get(quantity, [])
            if counter:
                ts = counter[0][S.TIME].to_numpy(dtype="datetime64[ns]").astype(np.int64)
                cols[quantity] = _place(ts, counter[0][S.VALUE].to_numpy(dtype=float), t0, step, n)
        # categorical: compares and converts like the str column the results docstring names, built in O(n)
        cols["status"] = pd.Categorical.from_codes(_STATUS_ORDER[status], dtype=STATUS_DTYPE, validate=False)
        # column labels as a plain object Index: the stages add columns one by one, and each insert into the
        # default (Arrow) string Index rebuilds it (~0.35 ms a column; a fixed cost per channel on wide logs)
        frame = pd.DataFrame(cols, index=index, columns=pd.Index(list(cols), dtype=object))
        out[channel] = ChannelSeries(link_id=link_id, channel=channel, interval_s=step / 1e9, kind=kind,
                                     frame=frame)
    return out


# ------------------------------------------------------------------------------------------------- reference
def _block_medians(values: np.ndarray, block: int, min_coverage: float) -> np.ndarray:
    if block <= 1:
        return values.copy()
    n_blocks = -(-len(values) // block)
    padded = np.full(n_blocks * block, np.nan)
    padded[: len(values)] = values
    blocks = padded.reshape(n_blocks, block)
    valid = np.isfinite(blocks).sum(axis=1)
    med = _row_nanmedian(blocks)
    med[valid < max(1, int(min_coverage * block))] = np.nan
    return med


def _row_nanmedian(blocks: np.ndarray) -> np.ndarray:
    """``np.nanmedian(blocks, axis=1)`` without its per-row Python loop: one sort (NaN sorts last), then the middle
    value, or the mean of the two middle values, of each row's non-NaN values (the same arithmetic as numpy's
    median, so the same bits); NaN for a row with no value."""
    width = blocks.shape[1]
    k = (~np.isnan(blocks)).sum(axis=1)
    full = k == width
    hi = np.minimum(k // 2, width - 1)
    lo = np.maximum(k - 1, 0) // 2
    med = np.full(len(blocks), np.nan)
    with np.errstate(invalid="ignore"):
        if full.any():  # rows without a gap (the usual case): a partial sort puts the middle values in place
            part = np.partition(blocks[full], sorted({(width - 1) // 2, width // 2}), axis=1)
            med[full] = (part[:, (width - 1) // 2] + part[:, width // 2]) / 2.0
        rest = np.flatnonzero(~full & (k > 0))
        if rest.size:
            ordered = np.sort(blocks[rest], axis=1)
            rows = np.arange(rest.size)
            med[rest] = (ordered[rows, lo[rest]] + ordered[rows, hi[rest]]) / 2.0
    return med


def _segment_reference(values: np.ndarray, block: int, config: AnalysisConfig, interval_s: float) -> np.ndarray:
    """Reference for one segment (see module docstring, step 3)."""
    n = len(values)
    med = _block_medians(values, block, config.min_block_coverage)
    if not np.isfinite(med).any():
        # too sparse for blocks: fall back to the upper quantile of what there is
        finite = values[np.isfinite(values)]
        level = float(np.quantile(finite, config.reference_quantile)) if finite.size else math.nan
        return np.full(n, level)
    window = max(1, int(round(config.reference_window_h * 3600.0 / (block * interval_s))))
    ref_blocks = (pd.Series(med).rolling(window, center=True, min_periods=1)
                  .quantile(config.reference_quantile).to_numpy())
    ok = np.isfinite(ref_blocks)
    centres = (np.arange(len(med)) * block + (block - 1) / 2.0)
    return np.interp(np.arange(n, dtype=float), centres[ok], ref_blocks[ok])


def add_reference(series: ChannelSeries, config: AnalysisConfig | None = None) -> list:
    """Add ``reference_dbm`` and ``attenuation_db`` (and ``attenuation_peak_db`` for statistics) to the frame.

    Sets ``series.steps`` (:func:`diag.analysis.steps.channel_steps`, the channel's only step detection) and
    returns the steps (:class:`diag.analysis.steps.Step`) at which the reference was cut.
    """
    config = config or AnalysisConfig()
    frame = series.frame
    level = path_level(frame)
    interval_s = series.interval_s
    series.steps = channel_steps(series, config, level=level)
    steps = series.steps.reference
    cuts = [0] + sorted(int(frame.index.searchsorted(step.time_utc)) for step in steps) + [len(frame)]
    block = max(1, int(round(config.block_s / interval_s)))
    reference = np.full(len(frame), np.nan)
    for a, b in zip(cuts[:-1], cuts[1:]):
        if b > a:
            reference[a:b] = _segment_reference(level[a:b], block, config, interval_s)
    frame["reference_dbm"] = reference
    frame["attenuation_db"] = reference - level
    if series.kind == "stats" and "rsl_min_dbm" in frame.columns:
        low = frame["rsl_min_dbm"].to_numpy(dtype=float, na_value=np.nan)
        offset = level - frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)  # ATPC correction, if any
        offset = np.where(np.isfinite(offset), offset, 0.0)
        frame["attenuation_peak_db"] = reference - (low + offset)
        high = frame["rsl_max_dbm"].to_numpy(dtype=float, na_value=np.nan)
        frame["attenuation_low_db"] = reference - (high + offset)
    return steps


def level_shift_spans(series: ChannelSeries, config: AnalysisConfig | None = None) -> list[LevelSpan]:
    """Segments (between detected steps) whose reference sits at least ``step_min_db`` below the best segment."""
    config = config or AnalysisConfig()
    steps = series.steps.reference if series.steps is not None else []
    if not steps:
        return []
    frame = series.frame
    cuts = [0] + sorted(int(frame.index.searchsorted(s.time_utc)) for s in steps) + [len(frame)]
    reference = frame["reference_dbm"].to_numpy(dtype=float)
    levels = []
    for a, b in zip(cuts[:-1], cuts[1:]):
        chunk = reference[a:b]
        levels.append(float(np.nanmedian(chunk)) if b > a and np.isfinite(chunk).any() else math.nan)
    best = np.nanmax(levels) if np.isfinite(levels).any() else math.nan
    spans: list[LevelSpan] = []
    for k, (a, b) in enumerate(zip(cuts[:-1], cuts[1:])):
        if b <= a or not math.isfinite(levels[k]):
            continue
        drop = best - levels[k]
        if drop < config.step_min_db:
            continue
        # the step that opened it: the one at its start (or, for the first segment, the one closing it)
        opening = steps[k - 1] if k > 0 else steps[0]
        end = frame.index[b] if b < len(frame) else frame.index[-1] + pd.Timedelta(seconds=series.interval_s)
        spans.append(LevelSpan(channel=series.channel, start=frame.index[a], end=end, size_db=float(drop),
                               step_db=float(opening.size_db), start_index=a, end_index=b))
    return spans
