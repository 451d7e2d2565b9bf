"""Persistent steps of a channel's clear-sky level (:func:`detect_steps`), on robust statistics of blocks of samples:

1. the level (with logged transmit-power changes removed, when ATPC is logged) is cut into blocks of about
   ``block_s`` seconds; each block is summarised by its median (robust against short fades);
2. at every block boundary the *clear-sky level* of the ``window_s`` before and after is compared.  The clear-sky
   level of a window is a trimmed median: the median of the samples no more than ``fade_trim_db`` below the
   window's upper quartile (fades are cut away, noise is not);
3. boundaries where the difference exceeds ``min_step_db`` and is a local maximum within ``window_s`` are
   candidates.  They are tried largest first, each judged at the centre of its plateau of near-peak difference;
   the evidence windows are bounded only by steps already accepted.  A candidate is kept when (a) the new level
   persists over ``persist_s`` (up to the next accepted step; at least one window, or ``min_edge_s`` at the
   start/end of the record) by at least half the step, (b) it is not larger than ``max_step_db`` (a drop to the
   receiver floor is a loss of signal, not a shift), (c) it is flat (most blocks after it sit near the new level,
   blocks faded below it left out; a long rain fade wanders), and (d) it is abrupt: the nearest unfaded samples
   just before and after the refined time already differ by ``min_abrupt_fraction`` of the step (the slow end of
   a refractive fade or a drift is not);
4. the step time is refined at full resolution over the plateau where the two-window difference stays within
   80 % of its peak: each sample is put on the old or new side of the mid level, and the split minimising a
   weighted count of samples on the wrong side is found with cumulative sums (exact, O(n)); a sample on the low
   side counts little where a fade could explain it (rain just before a downward step does not move the split).

Steps that the fade next to them hides (the level moved while it rained) are looked for afterwards between the steps
found, by :func:`hidden_steps`: the level at the start and at the end of each stretch, both clear and flat, differ.

Step sizes are trimmed means of the samples near each side's clear level (1-dB quantisation averages out).  Pure
functions; no I/O.  Called once per channel by :func:`diag.analysis.steps.channel_steps`.
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np
import pandas as pd

_FADE_WEIGHT = 0.05   # cost of a sample that a fade can explain, against 1 for one that nothing explains
_DEEP_MARGIN_DB = 1.0  # a sample this far below both levels of a step is a fade (beyond clear-air noise)
MEAN_TRIM_DB = 1.5   # clear_mean_dbm keeps samples this close to the trimmed median (1-dB steps + noise)


@dataclass(frozen=True)
class Step:
    """One persistent step of the clear-sky level."""

    time_utc: pd.Timestamp      # first sample at the new level
    size_db: float              # new level - old level (negative = the level dropped)
    before_dbm: float           # clear-sky level over the window before
    after_dbm: float            # clear-sky level over the window after
    persist_s: float            # how long the new level was seen to persist (bounded by the record / next step)

    def to_dict(self) -> dict:
        out = asdict(self)
        out["time_utc"] = self.time_utc.isoformat()
        return {k: (round(v, 3) if isinstance(v, float) else v) for k, v in out.items()}


def clear_level_dbm(values: np.ndarray, *, fade_trim_db: float = 3.0) -> float:
    """Trimmed median of a window: samples more than ``fade_trim_db`` below the upper quartile are dropped.

    NaN when fewer than 3 finite values.  Common practice (no outside source): fades are one-sided in rain, so an
    upper-quantile anchored trim keeps the clear-sky samples and drops the faded ones.
    """
    x = values[np.isfinite(values)]
    if x.size < 3:
        return math.nan
    q75 = np.quantile(x, 0.75)
    kept = x[x >= q75 - fade_trim_db]
    return float(np.median(kept))


def clear_mean_dbm(values: np.ndarray, *, fade_trim_db: float = 3.0) -> float:
    """Mean of the samples within ``MEAN_TRIM_DB`` (1.5 dB) of the window's trimmed median (:func:`clear_level_dbm`).

    A mean, unlike a median, averages coarse quantisation (1-dB steps dithered by noise) out, so step sizes are not
    rounded to the quantisation step; fades and upfades beyond the trim are left out.
    """
    med = clear_level_dbm(values, fade_trim_db=fade_trim_db)
    if not math.isfinite(med):
        return math.nan
    x = values[np.isfinite(values)]
    kept = x[np.abs(x - med) <= MEAN_TRIM_DB]
    return float(kept.mean()) if kept.size else med


def _row_quantile(sorted_rows: np.ndarray, count: np.ndarray, q: float, start=0) -> np.ndarray:
    """Quantile q (linear interpolation, as numpy's default) of each row of a row-sorted matrix whose ``count``
    entries from column ``start`` on (0, or one offset per row) are the finite values."""
    pos = q * np.maximum(count - 1, 0)
    lo = np.floor(pos).astype(int)
    hi = np.minimum(lo + 1, np.maximum(count - 1, 0))
    rows = np.arange(sorted_rows.shape[0])
    v_lo = sorted_rows[rows, np.minimum(start + lo, sorted_rows.shape[1] - 1)]
    v_hi = sorted_rows[rows, np.minimum(start + hi, sorted_rows.shape[1] - 1)]
    out = v_lo + (pos - lo) * (v_hi - v_lo)
    return np.where(count > 0, out, np.nan)


def _clear_rows(matrix: np.ndarray, *, fade_trim_db: float, min_count: int = 3) -> np.ndarray:
    """:func:`clear_level_dbm` of every row of ``matrix`` at once (vectorised; NaN = no value)."""
    srt = np.sort(matrix, axis=1)                   # NaN sort last
    finite = np.isfinite(srt)
    count = finite.sum(axis=1)
    q75 = _row_quantile(srt, count, 0.75)
    # exact without a second sort: the kept values (>= q75 - trim) are the sorted row from column ``start`` (the
    # number of values below the threshold) on, so their median is read from ``srt`` at that offset
    with np.errstate(invalid="ignore"):
        low = srt < (q75 - fade_trim_db)[:, None]
    start = low.sum(axis=1)
    if np.isneginf(srt[:, :1]).any():             # -inf sorts first: only then can a low value be non-finite
        count2 = count - (low & finite).sum(axis=1)     # finite values kept
    else:
        count2 = count - start
    count2[np.isnan(q75)] = 0                       # nothing is kept under a NaN threshold
    med = _row_quantile(srt, count2, 0.5, start)
    med[count < min_count] = np.nan
    return med


def _block_levels(level: np.ndarray, block: int, *, fade_trim_db: float) -> np.ndarray:
    """Clear-sky level of consecutive blocks of ``block`` samples (NaN when under half the block is valid)."""
    if block == 1:
        return level.astype(float).copy()
    n_blocks = len(level) // block + (1 if len(level) % block else 0)
    if n_blocks * block == len(level):
        padded = level                      # whole blocks: no NaN padding to add
    else:
        padded = np.full(n_blocks * block, np.nan)
        padded[: len(level)] = level
    return _clear_rows(padded.reshape(n_blocks, block), fade_trim_db=fade_trim_db,
                       min_count=max(1, block // 2))


def _window_levels(blocks: np.ndarray, w: int, *, fade_trim_db: float) -> tuple[np.ndarray, np.ndarray]:
    """For each boundary i (between block i-1 and i): clear level of blocks [i-w, i) and [i, i+w)."""
    n = len(blocks)
    padded = np.concatenate([np.full(w, np.nan), blocks, np.full(w, np.nan)])
    windows = np.lib.stride_tricks.sliding_window_view(padded, w)   # windows[j] = padded[j:j+w]
    levels = _clear_rows(np.ascontiguousarray(windows), fade_trim_db=fade_trim_db)
    before = np.full(n + 1, np.nan)
    after = np.full(n + 1, np.nan)
    before[1:n] = levels[1:n]            # blocks[i-w:i] = padded[i:i+w]
    after[1:n] = levels[w + 1: w + n]    # blocks[i:i+w] = padded[i+w:i+2w]
    return before, after


def _flat_fraction(blocks: np.ndarray, level: float, step_db: float, fade_trim_db: float = 3.0) -> float:
    """Fraction of the valid blocks within max(1 dB, step/4) of ``level``; blocks faded more than ``fade_trim_db``
    below the level (rain on top of the new level) are left out."""
    x = blocks[np.isfinite(blocks)]
    x = x[x >= level - max(fade_trim_db, step_db / 4.0)]
    if x.size == 0:
        return 0.0
    return float(np.mean(np.abs(x - level) <= max(1.0, step_db / 4.0)))


def _near_clear(values: np.ndarray, level: float, m: int, fade_trim_db: float) -> float:
    """Median of the first ``m`` values (in the given order) that are finite and not faded more than
    ``fade_trim_db`` below ``level``; NaN when there are none."""
    ok = np.isfinite(values) & (values >= level - fade_trim_db)
    picked = values[ok][:m]
    return float(np.median(picked)) if picked.size else math.nan


def _refine(level: np.ndarray, lo: int, hi: int, before: float, after: float, *, fade_trim_db: float,
            high: np.ndarray | None = None) -> int:
    """Index in [lo, hi] of the first sample at the new level.

    Each sample is put on the old or the new side of the mid level.  Fades only lower the level, so a sample on
    the LOW side is explainable on either side of a step (weight ``_FADE_WEIGHT``), while a sample on the HIGH
    side of the wrong half is not (weight 1): a rain fade just before a downward step or just after an upward
    step cannot pull the split into the fade.  The split minimising the weighted count is found with cumulative
    sums (exact, O(n)).  A sample more than ``_DEEP_MARGIN_DB`` below the lower of the two levels is a fade on
    either side and counts for neither (weight 0); among equally good splits the latest is taken: the level moved where
    the first unfaded sample at the new level is, not at the start of a fade next to the step (issue 16).

    ``high``: the interval maxima of a statistics log.  Fades only lower the level, so an interval's maximum shows
    which clear level it saw: the side of each interval is read from its maximum.  An interval whose maximum is on
    the old side but whose level is on the new one holds the step itself (or a fade on the old level): when the
    split lands right after such an interval, the step is placed at that interval's start, the interval that
    contains it.
    """
    lo, hi = max(0, lo), min(len(level), hi)
    if hi - lo < 2:
        return lo
    x = level[lo:hi] if high is None else np.where(np.isfinite(high[lo:hi]), high[lo:hi], level[lo:hi])
    ok = np.isfinite(x)
    mid = 0.5 * (before + after)
    down = after < before
    # below both levels (beyond the noise): a fade on either level, no evidence for either side
    deep = ok & (x < min(before, after) - _DEEP_MARGIN_DB)
    # the side of each sample is read from the median of it and its two neighbours: one noise sample across the
    # mid level must not outweigh many clear samples at the new level (a plateau between two steps stays whole)
    xs = x.copy()
    if xs.size >= 3:
        xs[1:-1] = np.median(np.stack([x[:-2], x[1:-1], x[2:]]), axis=0)
        xs = np.where(np.isfinite(xs), xs, x)
    new_side = ok & ~deep & ((xs < mid) if down else (xs > mid))
    old_side = ok & ~deep & ~new_side
    w_new_before = _FADE_WEIGHT if down else 1.0    # a low sample before a downward step may be a fade
    w_old_after = 1.0 if down else _FADE_WEIGHT     # a low sample after an upward step may be a fade
    # cost(k) = w_new_before * #new-side samples before k + w_old_after * #old-side samples from k on
    before_cost = np.concatenate([[0.0], np.cumsum(new_side * w_new_before)])
    after_cost = np.concatenate([np.cumsum((old_side * w_old_after)[::-1])[::-1], [0.0]])
    cost = before_cost + after_cost
    k = int(np.flatnonzero(cost <= cost.min() + 1e-9)[-1])
    if high is not None and k > 0:
        v = level[lo + k - 1]
        if np.isfinite(v) and old_side[k - 1] and ((v < mid) if down else (v > mid)):
            k -= 1          # the interval just before shows both levels: the step lies inside it
    return lo + k


def detect_steps(level_dbm: pd.Series, interval_s: float, *, min_step_db: float = 2.0, block_s: float = 300.0,
                 window_s: float = 7200.0, persist_s: float = 6 * 3600.0,
                 fade_trim_db: float = 3.0, min_flat_fraction: float = 0.6, abrupt_s: float = 600.0,
                 min_abrupt_fraction: float = 0.6, max_step_db: float | None = 40.0,
                 min_edge_s: float = 3600.0, high_dbm: pd.Series | None = None) -> list[Step]:
    """Persistent steps of the clear-sky level of one channel.

    Parameters
    ----------
    level_dbm : pd.Series
        Receive level [dBm] (or a path-loss-like level, transmit changes removed) on a regular time grid, indexed
        by UTC time; NaN where there is no valid sample (gaps, receiver at its floor).
    interval_s : float
        Grid step [s].
    min_step_db : float
        Smallest step reported [dB].
    block_s, window_s : float
        Block length for the robust block levels and the window either side of a candidate step [s].
    persist_s : float
        How long the new level must persist [s] (shortened to what the record holds, but never below one window).
    fade_trim_db : float
        Samples more than this far below a window's upper quartile count as faded and are ignored [dB].
    min_flat_fraction : float
        Share of the blocks after the step that must sit within max(1 dB, step/4) of the new level (a long rain
        fade wanders; a step is flat).
    min_edge_s : float
        Near the start or end of the record a step needs only this much evidence on that side (instead of a
        full window), so a step an hour before the record ends is still found.
    high_dbm : pd.Series, optional
        Interval maxima of a statistics log on the same grid (transmit changes removed like ``level_dbm``): they
        place the step in time (see ``_refine``); detection and sizes still use ``level_dbm``.
    max_step_db : float or None
        Larger steps are not level shifts: a drop of more than this is a loss of signal (the receiver sits at or
        near its floor), e.g. a far-end transmitter off for a day (common practice; None = no limit).
    abrupt_s, min_abrupt_fraction : float
        Abruptness check: the clear level over ``abrupt_s`` before and after the refined time must differ by at
        least this fraction of the step (rejects the slow end of a refractive fade and drifts).

    Returns
    -------
    list of Step, in time order.  An empty list for a record shorter than two windows.
    """
    if interval_s <= 0:
        raise ValueError("interval_s must be positive")
    values = np.asarray(level_dbm.to_numpy(dtype=float, na_value=np.nan), dtype=float)
    high = (None if high_dbm is None else
            np.asarray(pd.Series(high_dbm).to_numpy(dtype=float, na_value=np.nan), dtype=float))
    if high is not None and high.shape != values.shape:
        raise ValueError("high_dbm must be on the grid of level_dbm")
    index = level_dbm.index
    block = max(1, int(round(block_s / interval_s)))
    w = max(2, int(round(window_s / (block * interval_s))))
    p = max(w, int(round(persist_s / (block * interval_s))))
    blocks = _block_levels(values, block, fade_trim_db=fade_trim_db)
    n = len(blocks)
    if n < 2 * w:
        return []
    edge = max(2, int(round(min_edge_s / (block * interval_s))))
    m = max(3, int(round(abrupt_s / interval_s)))
    accepted: dict[int, int] = {}   # boundary (block index) of each accepted step -> its refined sample index

    def judge(i: int, diff: np.ndarray, mag: np.ndarray, prev: int, nxt: int) -> tuple[int, int] | None:
        """(boundary, refined sample index) of the step at candidate boundary ``i``, or None if it is not one;
        ``prev`` and ``nxt`` are the neighbouring accepted boundaries (or the record's ends)."""
        # the two windows see the same step anywhere on a plateau of |diff|; its first maximum can sit a whole
        # window away from the step, so judge the candidate at the plateau's centre
        thr = 0.8 * mag[i]
        a = i
        while a - 1 > prev and mag[a - 1] >= thr and np.sign(diff[a - 1]) == np.sign(diff[i]):
            a -= 1
        b = i
        while b + 1 < nxt and mag[b + 1] >= thr and np.sign(diff[b + 1]) == np.sign(diff[i]):
            b += 1
        i = (a + b + 1) // 2
        lo, hi = max(prev, i - p), min(nxt, i + p)
        old = clear_level_dbm(blocks[lo:i], fade_trim_db=fade_trim_db)
        new = clear_level_dbm(blocks[i:hi], fade_trim_db=fade_trim_db)
        if not (math.isfinite(old) and math.isfinite(new)):
            return None
        if abs(new - old) < max(min_step_db, abs(diff[i]) / 2):
            return None  # not persistent: a long fade, not a step
        if max_step_db is not None and abs(new - old) > max_step_db:
            return None  # a drop to (near) the receiver floor: loss of signal, not a level shift
        # refine at full resolution over the plateau widened by one window either side: two steps of the same
        # sign within one persistence window (old/new are then the levels before the first and after the last)
        # put the plateau between them, so the split between the outer levels may lie a window away from it
        span_lo = max(prev * block, (a - w) * block)
        span_hi = min(nxt * block, (b + w) * block, len(values))
        k = _refine(values, span_lo, span_hi, old, new, fade_trim_db=fade_trim_db)
        # statistics logs: the interval maxima place the step in time (the checks below keep using the averages)
        k_time = k if high is None else _refine(values, span_lo, span_hi, old, new, fade_trim_db=fade_trim_db,
                                                high=high)
        # the step's own sides: the clear levels one window either side of the refined time (up to a persistence
        # window where an accepted step bounds that side).  Over a persistence window a second step of the same
        # sign (not accepted yet) adds to this one; these levels see this step only, and the remaining part is
        # found when the segments either side are examined again
        kb = min(max(int(round(k / block)), prev + 1), nxt - 1)
        # evidence on each side of the refined time (the plateau's centre can sit far from it when rain fills the
        # window on one side): one window, or at the very start / end of the record at least min_edge_s
        lo, hi = max(prev, kb - p), min(nxt, kb + p)
        if (hi - kb) < (edge if hi == n else w) or (kb - lo) < (edge if lo == 0 else w):
            return None
        old = clear_level_dbm(blocks[max(prev, kb - (p if prev in accepted else w)):kb], fade_trim_db=fade_trim_db)
        new = clear_level_dbm(blocks[kb:min(nxt, kb + (p if nxt in accepted else w))], fade_trim_db=fade_trim_db)
        if not (math.isfinite(old) and math.isfinite(new)) or abs(new - old) < min_step_db:
            return None
        if _flat_fraction(blocks[kb:min(nxt, kb + w)], new, abs(new - old), fade_trim_db) < min_flat_fraction:
            return None  # the 'new level' wanders (a long rain fade), not a step
        # abruptness: the clear level just before and just after must already differ by most of the step
        # (the nearest samples that are not faded below their side's level: rain right before a step, or
        # masked samples, must not hide it)
        span = p * block
        near_old = _near_clear(values[max(prev * block, k - span):k][::-1], old, m, fade_trim_db)
        near_new = _near_clear(values[k:min(nxt * block, k + span)], new, m, fade_trim_db)
        if not (math.isfinite(near_old) and math.isfinite(near_new)):
            return None
        if abs(near_new - near_old) < min_abrupt_fraction * abs(new - old) or \
                np.sign(near_new - near_old) != np.sign(new - old):
            return None  # a slow change (the end of a refractive fade, a drift), not a step
        return kb, k_time

    # Candidates are tried largest first; windows are bounded only by steps already accepted, so a rejected
    # candidate (the start of a long fade) never shortens the evidence of a real step next to it.  Once steps are
    # accepted, each segment between them is examined again with windows cut at its ends: a candidate there may
    # have been suppressed by (lain within one window of) a larger one, e.g. two steps 3 h apart with a rain fade
    # between them make the largest two-window difference (their sum) fall between them.
    segments = [(0, n)]
    while segments:
        new_found = False
        for s, e in segments:
            if s == 0 and e == n:
                before, after = _window_levels(blocks, w, fade_trim_db=fade_trim_db)
            else:
                seg_before, seg_after = _window_levels(blocks[s:e], w, fade_trim_db=fade_trim_db)
                before = np.full(n + 1, np.nan)
                after = np.full(n + 1, np.nan)
                before[s:e + 1], after[s:e + 1] = seg_before, seg_after
            diff = after - before
            mag = np.where(np.isfinite(diff), np.abs(diff), 0.0)
            candidates: list[int] = []
            order = np.argsort(-mag, kind="stable")
            taken = np.zeros(n + 1, dtype=bool)
            for i in order:
                if mag[i] < min_step_db:
                    break
                if taken[max(0, i - w): i + w + 1].any():
                    continue
                taken[i] = True
                candidates.append(int(i))
            for i in candidates:       # already in order of decreasing |diff|
                prev = max([a for a in accepted if a < i], default=0)
                nxt = min([a for a in accepted if a > i], default=n)
                if i == prev:
                    continue
                got = judge(i, diff, mag, prev, nxt)
                if got is not None and got[0] not in accepted:
                    accepted[got[0]] = got[1]
                    new_found = True
        bounds = [0, *sorted(accepted), n]
        segments = [(x, y) for x, y in zip(bounds[:-1], bounds[1:]) if y - x >= 2 * min(w, edge)] \
            if new_found else []
    # sizes: trimmed means over up to a persistence window either side, bounded by the neighbouring steps
    ks = [accepted[kb] for kb in sorted(accepted)]
    steps = []
    for j, k in enumerate(ks):
        lo_s = max(ks[j - 1] if j else 0, k - p * block)
        hi_s = min(ks[j + 1] if j + 1 < len(ks) else len(values), k + p * block)
        old_s = clear_mean_dbm(values[lo_s:k], fade_trim_db=fade_trim_db)
        new_s = clear_mean_dbm(values[k:hi_s], fade_trim_db=fade_trim_db)
        if not (math.isfinite(old_s) and math.isfinite(new_s)):
            kb = sorted(accepted)[j]
            old_s = clear_level_dbm(blocks[max(0, kb - w):kb], fade_trim_db=fade_trim_db)
            new_s = clear_level_dbm(blocks[kb:kb + w], fade_trim_db=fade_trim_db)
        steps.append(Step(time_utc=pd.Timestamp(index[k]), size_db=float(new_s - old_s), before_dbm=float(old_s),
                          after_dbm=float(new_s), persist_s=float((hi_s - k) * interval_s)))
    return steps


def _level_counts(values: np.ndarray, level: float, tol_db: float, fade_trim_db: float) -> tuple[int, int]:
    """(values within ``tol_db`` of ``level``, values counted): the finite values, less those faded more than
    ``fade_trim_db`` below the level (rain on top of the level); none above it is left out."""
    x = values[np.isfinite(values)]
    x = x[x >= level - fade_trim_db]
    return int(np.count_nonzero(np.abs(x - level) <= tol_db)), int(x.size)


def _level_share(values: np.ndarray, level: float, tol_db: float, fade_trim_db: float) -> float:
    """Share of the values counted by :func:`_level_counts` that lie within ``tol_db`` of ``level`` (0 when none)."""
    within, n = _level_counts(values, level, tol_db, fade_trim_db)
    return within / n if n else 0.0


STILL_WHOLE_SAMPLES = True   # _share_reached: the still share counted in whole samples, rounded down
# interval statistics (with a spread): a downward move hidden by a fade lies before the first HIDDEN_STILL_RUN
# intervals in a row that hold still at the new level (within the stillness tolerance) as narrow as clear air: an
# hour of them.  A fade on the old level spreads its intervals or sits deeper, and light rain holding the same few
# dB that still for an hour is rare (common practice, no outside source).  Without it the move was searched for up
# to the end window, and in a min/max export, whose minima swing by tens of dB through every multipath night, it
# went to the largest swing of a later night (family C fit seed 9, OUT-06).  None: searched to the end window
HIDDEN_STILL_RUN = 4


def _first_still_run(seg: np.ndarray, spread: np.ndarray, lo: int, hi: int, level: float, tol_db: float,
                     narrow_db: float, run: int) -> int:
    """Index in [lo, hi] of the first of ``run`` consecutive intervals that hold still at ``level`` (within
    ``tol_db``) with a spread no wider than ``narrow_db``; ``hi`` when there is none."""
    ok = np.isfinite(seg[lo:hi]) & (np.abs(seg[lo:hi] - level) <= tol_db) & (spread[lo:hi] <= narrow_db)
    if ok.size < run:
        return hi
    counts = np.convolve(ok.astype(int), np.ones(run, dtype=int), mode="valid")
    starts = np.flatnonzero(counts == run)
    return lo + int(starts[0]) if starts.size else hi


def _share_reached(values: np.ndarray, level: float, share: float, tol_db: float, fade_trim_db: float) -> bool:
    """At least ``share`` of the values counted by :func:`_level_share` lie within ``tol_db`` of ``level``, the
    share rounded down to whole samples: a window of eight 15-min intervals holds 7/8 or 8/8 of them, and 90 % of
    eight is seven (one interval off by one readout step does not make a still level wander)."""
    within, n = _level_counts(values, level, tol_db, fade_trim_db)
    if not n:
        return False
    if not STILL_WHOLE_SAMPLES:
        return within / n >= share
    return within >= math.floor(share * n + 1e-9)


STILL_BLOCKS = 12   # sub-blocks of a window whose medians show a wandering level (10 min each in a 2-h window;
                    # a 2-h window of 15-min statistics has eight, one interval each)


def _still_window(values: np.ndarray, level: float, share: float, tol_db: float, range_db: float,
                  fade_trim_db: float) -> bool:
    """True when a window holds still at ``level`` as clear air does: ``share`` or more of its finite values not
    faded more than ``fade_trim_db`` below the level lie within ``tol_db`` of it, and the medians of its
    ``STILL_BLOCKS`` sub-blocks (those at least half valid) span at most ``range_db``."""
    if not _share_reached(values, level, share, tol_db, fade_trim_db):
        return False
    width = max(1, values.size // STILL_BLOCKS)
    blocks = values[: width * (values.size // width)].reshape(-1, width)
    valid = np.isfinite(blocks).sum(axis=1) * 2 >= width
    if not valid.any():
        return False
    with np.errstate(invalid="ignore"):
        medians = np.nanmedian(blocks[valid], axis=1)
    return bool(np.ptp(medians) <= range_db)


def hidden_steps(level_dbm: pd.Series, interval_s: float, steps: list[Step], *, min_step_db: float = 2.0,
                 window_s: float = 7200.0, fade_trim_db: float = 3.0, min_flat_fraction: float = 0.6,
                 lag_s: float = 60.0, min_abrupt_fraction: float = 0.5,
                 max_step_db: float | None = 40.0, still_share: float | None = None,
                 still_range_db: float = 1.0, still_tol_db: float = 0.5,
                 spread_db: np.ndarray | None = None, spread_margin_db: float | None = None) -> list[Step]:
    """Steps of the clear-sky level that happened inside a fade, between the steps already found.

    :func:`detect_steps` needs the level clear and flat on both sides of a step; a knocked antenna put right while
    it rains (or knocked in a storm) moves the level where the fade hides it, and the reference of the whole
    stretch then sits between the two levels.  Here each stretch between found steps (and the record's ends) is
    checked: when its first and last ``window_s`` are both clear and flat (``min_flat_fraction`` of the unfaded
    samples within max(1 dB, step/4) of the window's clear level) at levels ``min_step_db`` or more apart, the
    level moved inside it.  The move lies between the last sample clear at the first level and the first sample
    clear at the last one (a fade covers it); it is placed at the largest change of the right sign over ``lag_s``
    (of a running median over ``lag_s`` at fine sampling, against multipath spikes) when that change is at least
    ``min_abrupt_fraction`` of the step (a step is abrupt, a rain fade's edge slower); else at the edge of the fade
    that leaves the fade on the lower level (rain on top of the shifted level).  Common practice, no outside
    source.

    ``still_share`` (off when None) asks more of both windows: they must hold *still* as clear air does
    (:func:`_still_window`: ``still_share`` of the unfaded samples within ``still_tol_db`` of the window's clear
    level, and the medians of its ``STILL_BLOCKS`` sub-blocks, or of each interval when the window holds fewer, within
    ``still_range_db`` of each other).  A storm that has not ended
    when the record (or the stretch) does sits lower but wanders, as rain does (its rate changes by tens of per cent
    within minutes); an antenna left knocked after the storm has passed holds its new level as still as before.
    ``spread_db`` (interval statistics: each interval's max - min) with ``spread_margin_db``: a still window must
    also keep the median spread of its intervals within the margin of the record's median spread (clear air);
    interval averages smooth a light rain plateau's wander away, its spread within the interval does not.  With
    ``spread_db``, a downward move is also looked for only before the first ``HIDDEN_STILL_RUN`` intervals in a row
    that hold still at the new level as narrow as clear air (:func:`_first_still_run`).
    Returns the new steps, in time order."""
    values = np.asarray(level_dbm.to_numpy(dtype=float, na_value=np.nan), dtype=float)
    spread = None
    if spread_db is not None and spread_margin_db is not None:
        spread = np.asarray(spread_db, dtype=float)
        clear_spread = float(np.nanmedian(spread)) if np.isfinite(spread).any() else math.nan
        if not math.isfinite(clear_spread):
            spread = None
    index = level_dbm.index
    n = len(values)
    w = max(3, int(round(window_s / interval_s)))
    lag = max(1, int(round(lag_s / interval_s)))
    bounds = [0, *sorted(int(index.searchsorted(s.time_utc)) for s in steps), n]
    found = []
    for a, b in zip(bounds[:-1], bounds[1:]):
        if b - a < 3 * w:
            continue
        seg = values[a:b]
        head, tail = clear_level_dbm(seg[:w], fade_trim_db=fade_trim_db), clear_level_dbm(seg[-w:],
                                                                                          fade_trim_db=fade_trim_db)
        if not (math.isfinite(head) and math.isfinite(tail)):
            continue
        size = tail - head
        if abs(size) < min_step_db or (max_step_db is not None and abs(size) > max_step_db):
            continue
        tol = max(1.0, abs(size) / 4.0)
        if min(_level_share(seg[:w], head, tol, fade_trim_db),
               _level_share(seg[-w:], tail, tol, fade_trim_db)) < min_flat_fraction:
            continue
        if still_share is not None and not (
                _still_window(seg[:w], head, still_share, still_tol_db, still_range_db, fade_trim_db)
                and _still_window(seg[-w:], tail, still_share, still_tol_db, still_range_db, fade_trim_db)):
            continue
        if spread is not None and not all(
                np.isfinite(part).any() and np.nanmedian(part) <= clear_spread + spread_margin_db
                for part in (spread[a:a + w], spread[b - w:b])):
            continue
        # the level cannot sit clear at the higher of the two levels while it is at the lower one, so: an upward
        # move lies before the first sample clear at the higher (last) level, a downward one after the last sample
        # clear at the higher (first) level; the rest of the stretch may hold fades on either level
        finite = np.isfinite(seg)
        if size > 0:
            high = np.flatnonzero(finite & (np.abs(seg - tail) <= tol) & (seg > head + tol))
            high = high[high >= w - 1]
            if not high.size:
                continue
            lo, hi = w - 1, int(high[0])
            at_low = np.flatnonzero(finite[:hi] & (np.abs(seg[:hi] - head) <= tol))
            cut = hi if not at_low.size else int(at_low[-1]) + 1    # fallback: the fade stays on the lower level
            cut = max(cut, 1)
        else:
            high = np.flatnonzero(finite & (np.abs(seg - head) <= tol) & (seg > tail + tol))
            high = high[high <= len(seg) - w]
            if not high.size:
                continue
            lo, hi = int(high[-1]), len(seg) - w
            cut = lo + 1
            if spread is not None and HIDDEN_STILL_RUN:
                hi = _first_still_run(seg, spread[a:b], lo + 1, hi, tail, still_tol_db,
                                      clear_spread + spread_margin_db, HIDDEN_STILL_RUN)
        if hi - lo > 1:
            part = pd.Series(seg[lo:hi + 1])
            if lag > 1:
                part = part.rolling(lag + 1, center=True, min_periods=1).median()
            x = part.to_numpy()
            change = (x[lag:] - x[:-lag]) * np.sign(size) if x.size > lag else np.array([])
            if change.size and np.isfinite(change).any():
                j = int(np.nanargmax(change))
                if change[j] >= min_abrupt_fraction * abs(size):
                    cut = lo + j + lag
        k = a + cut
        found.append(Step(time_utc=pd.Timestamp(index[k]), size_db=float(size), before_dbm=float(head),
                          after_dbm=float(tail), persist_s=float((b - k) * interval_s)))
    return found
