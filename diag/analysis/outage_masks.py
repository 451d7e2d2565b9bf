"""Per-second masks of one channel for the outage count: below threshold, signal lost, observed, cause.

1-s samples give exact masks; coarser samples and interval min/avg/max statistics give lower and upper bounds
(``_sample_masks``, ``_stats_masks``, :func:`stats_interval_bounds`).  Used by :mod:`diag.analysis.outage`, which
combines the channels and applies the ITU-T G.826 ten-second rule.  Interval statistics are also counted here
per interval (``_stats_units``, ``_unit_figures``).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from diag import schema
from diag.models import g826
from diag.results import ChannelSeries

CAUSES = list(schema.CAUSES)
_UNKNOWN = CAUSES.index(schema.UNKNOWN)
_COUNTERS = (schema.ES, schema.SES, schema.UAS)
_ROUNDING_DB = 0.05   # exported levels are usually printed to 0.1 dB: half a step of slack in the stats bounds

METHOD_EXACT = "exact: 1-s samples, each second counted (G.826 10-s rule on the per-second mask)"
METHOD_SAMPLES = ("bounds from {dt:g}-s samples, assuming the level crosses the threshold at most once between two "
                  "samples (fades shorter than the sampling interval between two good samples are not seen): "
                  "lower = only the sampled seconds, upper = the whole interval up to the next good sample; "
                  "unavailable time from the G.826 rule on both masks (the rule is monotone)")
METHOD_STATS = ("bounds from {dt:g}-s min/avg/max statistics: an interval whose max is below threshold is below "
                "for all of it; one whose min is at or above threshold is clear; otherwise between 1 s and "
                "interval - 1 s, narrowed by the interval average ({avg}); "
                "unavailable time: lower = fully-below intervals, upper = every interval that may hold a "
                "below-threshold second, except clusters that cannot hold ten, and at most 10k + 9 s in an "
                "interval with at most k below-threshold seconds")


_AVG_TEXT = {"either": "valid whether the radio averages dBm or mW", "db": "the radio averages dBm values",
             "mw": "the radio averages power in mW"}


@dataclass
class _Masks:
    """Per-second arrays of one channel (or the whole link) over the link period."""

    observed: np.ndarray      # bool: the second has data
    lo: np.ndarray            # bool: lower-bound below-threshold seconds (counts are right, placement may not be)
    hi: np.ndarray            # bool: upper-bound below-threshold seconds
    certain: np.ndarray       # bool: seconds certainly below threshold (subset of the truth)
    possible: np.ndarray      # bool: seconds that may be below threshold (superset of the truth)
    cause: np.ndarray         # int8: cause index (CAUSES) of the event covering the second, _UNKNOWN when none
    exact: bool
    method: str
    interval_s: float
    kind: str
    block: np.ndarray | None = None   # int64 statistics-interval number of each second (-1 outside), stats only


# per-second masks cost ~20 bytes a second: bound the period counted second by second (about 23 months)
MAX_SECONDS = 60_000_000


def _empty(n: int) -> np.ndarray:
    return np.zeros(n, dtype=bool)


def _cause_codes(frame: pd.DataFrame) -> np.ndarray:
    """Cause index (CAUSES) per grid point; _UNKNOWN where no event covers it or the cause is not in the list."""
    if "cause" not in frame.columns:
        return np.full(len(frame), _UNKNOWN, dtype=np.int8)
    cause = frame["cause"]
    if isinstance(cause.dtype, pd.CategoricalDtype):      # the pipeline's frames: map the categories once
        position = {name: i for i, name in enumerate(CAUSES)}   # (plain dict: an Index per channel cost ~0.5 ms)
        per_category = np.array([position.get(name, -1) if isinstance(name, str) else -1
                                 for name in cause.cat.categories], dtype=np.int64)
        # one look-up table, its last entry serving code -1 (no cause): the same codes as mapping then replacing
        table = np.where(per_category >= 0, per_category, _UNKNOWN).astype(np.int8)
        return np.append(table, np.int8(_UNKNOWN))[cause.cat.codes.to_numpy()]
    codes = pd.Index(CAUSES, dtype=object).get_indexer(cause.astype(object))
    return np.where(codes < 0, _UNKNOWN, codes).astype(np.int8)


def _offsets(frame: pd.DataFrame, t0: pd.Timestamp) -> np.ndarray:
    """Whole seconds from ``t0`` to each row's time (rounded to the nearest second)."""
    index = frame.index
    if isinstance(index, pd.DatetimeIndex) and index.tz is not None:
        # integer nanoseconds: when every offset is whole seconds (the grids are) the division is exact, so the
        # result equals the rounded float division below, without the float pass
        ns = index.as_unit("ns").asi8 - pd.Timestamp(t0).as_unit("ns").value
        if ns.size > 1 and ns[0] % 10**9 == 0 and (ns[1] - ns[0]) % 10**9 == 0:   # a grid of whole seconds?
            whole = ns[0] // 10**9 + (ns[1] - ns[0]) // 10**9 * np.arange(ns.size, dtype=np.int64)
            if np.array_equal(whole * 10**9, ns):
                return whole
        whole, rest = np.divmod(ns, 10**9)
        if not rest.any():
            return whole
    delta = (index - t0) / pd.Timedelta(seconds=1)
    return np.round(np.asarray(delta, dtype=float)).astype(np.int64)


def _status_flags(frame: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """(status == "ok", status == "signal_lost") as bool arrays; without a status column, ok = level present."""
    if "status" not in frame.columns:
        return frame["rsl_dbm"].notna().to_numpy(), np.zeros(len(frame), dtype=bool)
    status = frame["status"]
    if isinstance(status.dtype, pd.CategoricalDtype):   # the pipeline's frames: compare the codes (~5x faster)
        names = [str(c) for c in status.cat.categories]
        codes = status.cat.codes.to_numpy()
        ok = codes == names.index(schema.OK) if schema.OK in names else np.zeros(len(codes), dtype=bool)
        lost = (codes == names.index(schema.SIGNAL_LOST) if schema.SIGNAL_LOST in names
                else np.zeros(len(codes), dtype=bool))
        return ok, lost
    ok = (status == schema.OK).to_numpy(dtype=bool, na_value=False)
    lost = (status == schema.SIGNAL_LOST).to_numpy(dtype=bool, na_value=False)
    return ok, lost


def _fill(target: np.ndarray, starts, lengths, values=None) -> None:
    """Set target[start:start + length] for every (start, length): True, or the matching entry of ``values``."""
    n = target.size
    starts = np.asarray(starts, dtype=np.int64)
    s = np.clip(starts, 0, n)
    e = np.clip(starts + np.asarray(lengths, dtype=np.int64), 0, n)
    lens = np.maximum(e - s, 0)
    total = int(lens.sum())
    if total == 0:
        return
    pos = np.repeat(s, lens) + np.arange(total) - np.repeat(np.cumsum(lens) - lens, lens)
    target[pos] = True if values is None else np.repeat(np.asarray(values), lens)


def _exact_masks(series: ChannelSeries, t0: pd.Timestamp, n: int, threshold_dbm: float) -> _Masks:
    """1-s (or finer) samples: every second is known.  Finer samples: a second is below threshold when at least
    30 % of its observed samples are (by analogy with the G.826 SES definition, >= 30 % errored blocks)."""
    frame = series.frame
    off = _offsets(frame, t0)
    ok, lost = _status_flags(frame)
    rsl = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
    observed = ok | lost
    below = lost | (ok & (rsl < threshold_dbm))
    codes = _cause_codes(frame)
    inside = (off >= 0) & (off < n)
    obs_s, below_s = _empty(n), _empty(n)
    cause_s = np.full(n, _UNKNOWN, dtype=np.int8)
    if series.interval_s < 1.0 - 1e-9:
        count_obs = np.bincount(off[inside & observed], minlength=n)[:n]
        count_below = np.bincount(off[inside & below], minlength=n)[:n]
        obs_s = count_obs > 0
        below_s = obs_s & (count_below >= 0.3 * np.maximum(count_obs, 1))
        sel = inside & below & (codes != _UNKNOWN)
        cause_s[off[sel]] = codes[sel]
    else:
        obs_s[off[inside & observed]] = True
        below_s[off[inside & below]] = True
        cause_s[off[inside]] = codes[inside]
    return _Masks(obs_s, below_s, below_s.copy(), below_s.copy(), below_s.copy(), cause_s, True, METHOD_EXACT,
                  float(series.interval_s), series.kind)


def _sample_masks(series: ChannelSeries, t0: pd.Timestamp, n: int, threshold_dbm: float) -> _Masks:
    """Instantaneous samples every dt > 1 s.  Assumption A: at most one threshold crossing between two samples.

    Segment [t_i, t_i + dt) after an observed sample:
      both ends below -> all dt seconds below (lower and upper);  both clear -> none;
      below then clear -> lower 1 s (the sample), upper dt s;  clear then below -> lower 0, upper dt - 1 s;
      next sample unobserved -> the sample's own second (lower) or the held value for the segment (upper).
    Under A the lower and upper masks are themselves possible histories, so by the monotonicity of the G.826 rule
    the unavailable time of the truth lies between theirs.
    """
    frame = series.frame
    dt = int(round(series.interval_s))
    off = _offsets(frame, t0)
    ok, lost = _status_flags(frame)
    rsl = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
    observed = ok | lost
    below = lost | (ok & (rsl < threshold_dbm))
    nxt_obs = np.append(observed[1:], False) & (np.append(off[1:], -1) == off + dt)
    nxt_below = np.append(below[1:], False)
    codes = _cause_codes(frame)
    obs_s, lo, hi = _empty(n), _empty(n), _empty(n)
    cause_s = np.full(n, _UNKNOWN, dtype=np.int8)
    o = observed
    _fill(obs_s, off[o], np.full(o.sum(), dt))
    _fill(cause_s, off[o], np.full(o.sum(), dt), codes[o])
    both = o & below & nxt_obs & nxt_below
    down_up = o & below & nxt_obs & ~nxt_below
    up_down = o & ~below & nxt_obs & nxt_below
    held = o & below & ~nxt_obs
    _fill(lo, off[both], np.full(both.sum(), dt))
    _fill(lo, off[down_up | held], np.ones((down_up | held).sum(), dtype=np.int64))
    _fill(hi, off[both | down_up | held], np.full((both | down_up | held).sum(), dt))
    _fill(hi, off[up_down] + 1, np.full(up_down.sum(), dt - 1))
    # cause of the upper-bound seconds before a later below sample: that sample's cause
    codes_next = np.append(codes[1:], _UNKNOWN).astype(np.int8)
    _fill(cause_s, off[up_down] + 1, np.full(up_down.sum(), dt - 1), codes_next[up_down])
    return _Masks(obs_s, lo, hi, lo.copy(), hi.copy(), cause_s, False, METHOD_SAMPLES.format(dt=dt),
                  float(series.interval_s), series.kind)


def stats_interval_bounds(min_dbm, avg_dbm, max_dbm, threshold_dbm: float, seconds: int,
                          *, rounding_db: float = _ROUNDING_DB,
                          average: str = "either") -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper bounds on the number of below-threshold seconds in intervals of ``seconds`` 1-s values
    summarised by their min, average and max [dBm] (NaN = not reported; -inf min = signal lost).

    min >= T: 0.  max < T: all.  Otherwise at least 1 and at most seconds - 1, and, with the average a:
    below values lie in [min, T) and the others in [T, max], so
      k >= n (T - a) / (T - min)   and   k <= n (max - a) / (max - T)        (mean-value bounds)
    computed both for an average of dBm values and for an average of mW (the export rarely says which); the
    looser of the two is kept so the bounds hold either way (``average="either"``); ``average="db"`` or ``"mw"``
    uses only the one the radio is known to use.  ``rounding_db`` widens the inputs for print rounding.
    """
    if average not in ("either", "db", "mw"):
        raise ValueError("average must be 'either', 'db' or 'mw'")
    mn = np.asarray(min_dbm, dtype=float)
    av = np.asarray(avg_dbm, dtype=float)
    mx = np.asarray(max_dbm, dtype=float)
    T = float(threshold_dbm)
    n = float(seconds)
    mn_l = np.where(np.isnan(mn), -np.inf, mn - rounding_db)
    mx_h = np.where(np.isnan(mx), np.inf, mx + rounding_db)
    all_below = mx_h < T
    none_below = mn_l >= T
    lo = np.where(all_below, n, 0.0)
    hi = np.where(none_below, 0.0, n)
    partial = ~all_below & ~none_below
    has_avg = np.isfinite(av)
    a_hi = av + rounding_db   # the largest the true average can be
    a_lo = av - rounding_db
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # dB-average domain
        k_lo_db = n * (T - a_hi) / (T - mn_l)
        k_hi_db = n * (mx_h - a_lo) / (mx_h - T)
        # mW-average domain (power 10^(x/10); a signal-lost second has power >= 0)
        p = lambda x: np.power(10.0, x / 10.0)  # noqa: E731
        k_lo_mw = n * (p(T) - p(a_hi)) / (p(T) - p(mn_l))
        k_hi_mw = n * (p(mx_h) - p(a_lo)) / (p(mx_h) - p(T))
    if average == "db":
        k_lo, k_hi = k_lo_db, k_hi_db
    elif average == "mw":
        k_lo, k_hi = k_lo_mw, k_hi_mw
    else:
        k_lo, k_hi = np.fmin(k_lo_db, k_lo_mw), np.fmax(k_hi_db, k_hi_mw)
    k_lo = np.where(has_avg & np.isfinite(k_lo), np.ceil(k_lo - 1e-9), 0.0)
    k_hi = np.where(has_avg & np.isfinite(k_hi) & (mx_h < np.inf), np.floor(k_hi + 1e-9), n)
    # an average below threshold implies at least one value below it (in either domain)
    k_lo = np.where(has_avg & (a_hi < T), np.maximum(k_lo, 1.0), k_lo)
    # the min second itself was below (-inf: lost), unless print rounding leaves it possibly at the threshold
    with np.errstate(invalid="ignore"):
        partial_lo = np.where(np.isnan(mn) | ~(mn + rounding_db < T), 0.0, 1.0)
        # the max second itself was clear, unless print rounding leaves it possibly just below the threshold
        partial_hi = np.where(np.isfinite(mx) & (mx - rounding_db >= T), n - 1.0, n)
    lo_p = np.clip(np.maximum(k_lo, partial_lo), 0.0, partial_hi)
    hi_p = np.clip(np.minimum(k_hi, partial_hi), lo_p, n)
    lo = np.where(partial, lo_p, lo)
    hi = np.where(partial, hi_p, hi)
    return lo.astype(np.int64), hi.astype(np.int64)


def _stats_masks(series: ChannelSeries, t0: pd.Timestamp, n: int, threshold_dbm: float,
                 rotation: dict[int, int], average: str = "either") -> _Masks:
    """Interval min/avg/max statistics: per-interval bounds from ``stats_interval_bounds``.

    Placement inside an interval is unknown, so the lower/upper masks put the counted seconds at the start of the
    interval (lower; channels overlap, giving the link a valid lower bound) or one after the other across channels
    (upper, via ``rotation``; the link count is then min(n, sum), a valid upper bound).  For unavailable time only
    ``certain`` (fully-below intervals) and ``possible`` (intervals that may hold a below second) are used.
    """
    frame = series.frame
    dt = int(round(series.interval_s))
    off = _offsets(frame, t0)
    ok, lost = _status_flags(frame)
    observed = ok | lost
    mn = frame["rsl_min_dbm"].to_numpy(dtype=float) if "rsl_min_dbm" in frame else np.full(len(frame), np.nan)
    mx = frame["rsl_max_dbm"].to_numpy(dtype=float) if "rsl_max_dbm" in frame else np.full(len(frame), np.nan)
    av = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
    mn = np.where(lost & np.isnan(mn), -np.inf, mn)
    mx = np.where(lost & np.isnan(mx), -np.inf, mx)     # lost for the whole interval when no max survives
    k_lo, k_hi = stats_interval_bounds(mn, av, mx, threshold_dbm, dt, average=average)
    codes = _cause_codes(frame)
    obs_s, lo, hi, certain, possible = _empty(n), _empty(n), _empty(n), _empty(n), _empty(n)
    cause_s = np.full(n, _UNKNOWN, dtype=np.int8)
    o = observed
    _fill(obs_s, off[o], np.full(o.sum(), dt))
    _fill(cause_s, off[o], np.full(o.sum(), dt), codes[o])
    _fill(lo, off[o], k_lo[o])
    full = o & (k_lo >= dt)
    _fill(certain, off[full], np.full(full.sum(), dt))
    maybe = o & (k_hi > 0)
    _fill(possible, off[maybe], np.full(maybe.sum(), dt))
    # upper mask: k_hi seconds starting at the rotation offset of this interval (wrapping inside the interval)
    idx = np.flatnonzero(maybe)
    rot = np.array([rotation.get(int(off[i]), 0) for i in idx], dtype=np.int64) % max(dt, 1)
    first = np.minimum(k_hi[idx], dt - rot)
    _fill(hi, off[idx] + rot, first)
    _fill(hi, off[idx], k_hi[idx] - first)
    for i, r in zip(idx, rot):
        rotation[int(off[i])] = int(r + k_hi[i])
    block = np.full(n, -1, dtype=np.int64)
    _fill(block, off, np.full(off.size, dt), (off // max(dt, 1)).astype(np.int64))
    return _Masks(obs_s, lo, hi, certain, possible, cause_s, False, METHOD_STATS.format(dt=dt, avg=_AVG_TEXT[average]),
                  float(series.interval_s), series.kind, block)


def _channel_masks(series: ChannelSeries, t0: pd.Timestamp, n: int, threshold_dbm: float,
                   rotation: dict[int, int], stats_average: str) -> _Masks:
    if series.kind == "stats":
        return _stats_masks(series, t0, n, threshold_dbm, rotation, stats_average)
    if series.interval_s <= 1.0 + 1e-9:
        return _exact_masks(series, t0, n, threshold_dbm)
    return _sample_masks(series, t0, n, threshold_dbm)


def _aligned_stats_interval(series: list[ChannelSeries], t0: pd.Timestamp, n: int, consecutive_s: int) -> int | None:
    if any(s.kind != "stats" for s in series):
        return None
    dts = {float(s.interval_s) for s in series}
    if len(dts) != 1:
        return None
    dt = int(round(dts.pop()))
    if dt < consecutive_s or abs(series[0].interval_s - dt) > 1e-9 or n % dt:
        return None
    for s in series:
        if (_offsets(s.frame, t0) % dt).any():
            return None
    return dt


def _stats_units(series: ChannelSeries, t0: pd.Timestamp, nu: int, dt: int, threshold_dbm: float,
                 average: str) -> dict:
    frame = series.frame
    off = _offsets(frame, t0) // dt
    ok, lost = _status_flags(frame)
    observed = ok | lost
    nan = np.full(len(frame), np.nan)
    mn = frame["rsl_min_dbm"].to_numpy(dtype=float, na_value=np.nan) if "rsl_min_dbm" in frame else nan
    mx = frame["rsl_max_dbm"].to_numpy(dtype=float, na_value=np.nan) if "rsl_max_dbm" in frame else nan
    av = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
    mn = np.where(lost & np.isnan(mn), -np.inf, mn)
    mx = np.where(lost & np.isnan(mx), -np.inf, mx)
    k_lo, k_hi = stats_interval_bounds(mn, av, mx, threshold_dbm, dt, average=average)
    codes = _cause_codes(frame)
    sel = observed & (off >= 0) & (off < nu)
    out = {"obs": np.zeros(nu, dtype=bool), "lo": np.zeros(nu, dtype=np.int64), "hi": np.zeros(nu, dtype=np.int64),
           "cause": np.full(nu, _UNKNOWN, dtype=np.int8)}
    out["obs"][off[sel]] = True
    out["lo"][off[sel]] = k_lo[sel]
    out["hi"][off[sel]] = k_hi[sel]
    out["cause"][off[sel]] = codes[sel]
    return out


def _combine_units(units: list[dict], dt: int) -> dict:
    """Hop level per interval: observed if any channel is; at least the largest channel lower count; at most the sum
    of the upper counts (capped at dt).  Causes as the per-second masks place them (``_stats_masks`` and
    ``outage._combine``): each channel's possibly-below seconds follow the previous channels' in the interval and
    the new ones take that channel's cause; a second of unknown cause takes a later channel's known cause.
    ``segments``: (start, end, cause) arrays, the interval's seconds from its start in that order."""
    out = {"obs": units[0]["obs"].copy(), "lo": units[0]["lo"].copy(), "hi": np.zeros_like(units[0]["hi"])}
    segments: list[list[np.ndarray]] = []
    rest = units[0]["cause"].copy()                 # cause of the seconds after the possibly-below ones
    for u in units:
        known = u["cause"] != _UNKNOWN
        for seg_cause in [seg[2] for seg in segments] + [rest]:
            fill = (seg_cause == _UNKNOWN) & known
            seg_cause[fill] = u["cause"][fill]
        end = np.minimum(out["hi"] + u["hi"], dt)
        segments.append([out["hi"], end, u["cause"].copy()])
        out["hi"] = end
        out["obs"] |= u["obs"]
        out["lo"] = np.maximum(out["lo"], u["lo"])
    out["segments"] = [tuple(seg) for seg in segments] + [(out["hi"], np.full_like(out["hi"], dt), rest)]
    return out


def _prefix_causes(segments, seconds: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
    """(cause, seconds) per segment of the first ``seconds`` of each interval."""
    return [(cause, np.clip(np.minimum(seconds, end) - start, 0, None)) for start, end, cause in segments]


def _by_cause(pieces) -> np.ndarray:
    total = np.zeros(len(CAUSES), dtype=np.int64)
    for cause, seconds in pieces:
        total += np.bincount(cause.astype(np.int64), weights=seconds, minlength=len(CAUSES)).astype(np.int64)
    return total


def _weighted_period_causes(counts: np.ndarray, segments, dt: int) -> np.ndarray:
    """Unavailable seconds by cause, those of unknown cause given the dominant cause (by seconds) of their
    unavailable period, as ``outage._unavailable_causes`` does second by second.

    ``counts``: unavailable seconds per interval, the first ones of the interval (``segments`` gives their causes).
    A period is a run of intervals with unavailable time that ends in the first interval holding fewer than ``dt``
    of them: such an interval (an upper bound capped at 10k + 9 s) must hold ten consecutive clear seconds, so
    unavailable time cannot run through it; its unavailable seconds are those at its start (the per-second masks'
    placement, ``outage._cap_per_block``), the end of the period before.
    """
    pieces = _prefix_causes(segments, counts)
    total = _by_cause(pieces)
    on = counts > 0
    continues = np.concatenate(([False], on[:-1] & (counts[:-1] >= dt)))   # the interval before runs into this one
    period = np.where(on, np.cumsum(on & ~continues) - 1, -1)
    cause = np.concatenate([c for c, _ in pieces]).astype(np.int64)
    seconds = np.concatenate([w for _, w in pieces])
    pid = np.tile(period, len(pieces))
    use = (pid >= 0) & (seconds > 0)
    unknown = use & (cause == _UNKNOWN)
    if not unknown.any() or unknown.sum() == use.sum():
        return total
    key, inverse = np.unique(pid[use & ~unknown] * len(CAUSES) + cause[use & ~unknown], return_inverse=True)
    weight = np.bincount(inverse, weights=seconds[use & ~unknown])
    key_period, key_cause = key // len(CAUSES), key % len(CAUSES)
    order = np.lexsort((key_cause, -weight, key_period))        # per period: most seconds, then the first cause
    first = order[np.concatenate(([True], np.diff(key_period[order]) > 0))]
    dominant = dict(zip(key_period[first].tolist(), key_cause[first].tolist()))
    moved = np.bincount(pid[unknown], weights=seconds[unknown])
    for p_id in np.flatnonzero(moved).tolist():
        if p_id in dominant:
            total[_UNKNOWN] -= int(moved[p_id])
            total[dominant[p_id]] += int(moved[p_id])
    return total


def _unit_figures(u: dict, dt: int, consecutive_s: int, method: str) -> dict:
    obs, lo, hi = u["obs"], np.where(u["obs"], u["lo"], 0), np.where(u["obs"], u["hi"], 0)
    certain = obs & (lo >= dt)
    possible = obs & (hi > 0)
    # clusters: runs of possible intervals (a clear or missing interval of dt >= 10 s separates them)
    edges = np.diff(np.concatenate(([0], possible.astype(np.int8), [0])))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    keep = np.zeros(obs.size, dtype=bool)
    csum = np.concatenate(([0], np.cumsum(hi)))
    for a, b in zip(starts, ends):
        if csum[b] - csum[a] >= consecutive_s:
            keep[a:b] = True
    u_lo = np.where(certain, dt, 0)
    u_hi = np.where(keep, np.minimum(dt, hi + (consecutive_s - 1) * (hi + 1)), 0)
    below_lo, below_hi = int(lo.sum()), int(hi.sum())
    unav_lo, unav_hi = int(u_lo.sum()), int(u_hi.sum())
    ses_av_lo = max(0, below_lo - min(unav_hi, below_hi))
    ses_av_hi = max(ses_av_lo, below_hi - unav_lo)
    # causes of the interval's seconds from its start (one channel: its cause for the whole interval)
    segments = u.get("segments") or [(np.zeros_like(hi), np.full_like(hi, dt), u["cause"])]
    return {
        "observed_s": int(obs.sum()) * dt,
        "below_lo": below_lo, "below_hi": below_hi, "unav_lo": unav_lo, "unav_hi": unav_hi,
        "ses_av_lo": int(ses_av_lo), "ses_av_hi": int(ses_av_hi),
        "cause_below_lo": _by_cause(_prefix_causes(segments, lo)),
        "cause_below_hi": _by_cause(_prefix_causes(segments, hi)),
        "cause_unav_lo": _weighted_period_causes(u_lo, segments, dt),
        "cause_unav_hi": _weighted_period_causes(u_hi, segments, dt),
        "unavailable_periods": int(len(g826.unavailable_periods(u_lo > 0))),
        "exact": False, "method": method,
    }
