"""Per-event features of one channel's fades (the columns of ``FEATURE_COLUMNS`` in :mod:`diag.analysis.events`).

:func:`diag.analysis.events.find_events` segments each channel, then :func:`channel_arrays` prepares what the
features read (once per channel), :func:`pack_events` makes the reductions over every event at once, and the
functions below give one event's features, one physical or statistical aspect each: the fade's shape, its
texture (variability, roughness), upfades, the receiver floor, the partner channel, rain (ITU-R P.838-3 via
:mod:`diag.models.p838`) and the rain gauge.

The per-event helpers repeat numpy's own steps without its wrappers (:mod:`diag.numeric`; the events of a week
are many short arrays, where the wrappers cost more than the arithmetic), so every feature keeps its bits.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from diag import schema as S
from diag.config import AnalysisConfig
from diag.links import Link
from diag.models import p838
from diag.numeric import add_reduce as _sum
from diag.numeric import nanmax as _nanmax
from diag.numeric import pearson as _pearson
from diag.numeric import std as _std
from diag.read.gauge import gauge_rain_over
from diag.results import ChannelSeries

__all__ = ["ChannelArrays", "PackedEvents", "channel_arrays", "pack_events", "fade_shape", "fade_texture",
           "upfades", "floor_depths", "partner_features", "rain_features", "rain_plausible", "gauge_rate"]


# ------------------------------------------------------------------------------------------------- helpers
class _RunningMeans:
    """Centred running mean over ``width`` samples ignoring NaN (window ``[i - width // 2, i - width // 2 + width)``
    clipped to the series) of one series, evaluated only where asked (the event samples): the cumulative sum is
    built once and shared by every width; each value is the same subtraction and division, so the same bits (the
    count of valid samples in a window is an exact integer however it is found: here by binary search over the
    few positions without a value)."""

    def __init__(self, x: np.ndarray, ok: np.ndarray | None = None):
        self.x = x
        ok = np.isfinite(x) if ok is None else ok
        self.csum = np.empty(x.size + 1)
        self.csum[0] = 0.0
        np.cumsum(np.where(ok, x, 0.0), out=self.csum[1:])
        self.gaps = np.flatnonzero(~ok)

    def at(self, idx: np.ndarray, width: int) -> np.ndarray:
        """The running mean over ``width`` samples at the positions ``idx`` (``x[idx]`` for a width of 1 or a series
        under 3 samples)."""
        x = self.x
        if width <= 1 or x.size < 3:
            return x[idx]
        width = min(width, x.size)
        half = width // 2
        lo = np.clip(idx - half, 0, x.size)
        hi = np.clip(idx - half + width, 0, x.size)
        num = self.csum[hi] - self.csum[lo]
        den = (hi - lo) - (np.searchsorted(self.gaps, hi) - np.searchsorted(self.gaps, lo))
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(den > 0, num / den, np.nan)


def _noise_diff(att: np.ndarray, floor: np.ndarray, config: AnalysisConfig) -> float:
    """Std of sample-to-sample differences in clear air (|attenuation| < fade_end_db): the noise of the log."""
    with np.errstate(invalid="ignore"):
        calm = np.abs(att) < config.fade_end_db
    # differences only where both samples are calm (then both are finite and so is their difference)
    idx = np.flatnonzero(calm[1:] & calm[:-1])
    if idx.size < 10:
        return math.nan
    if idx.size > 200_000:
        idx = idx[:: idx.size // 200_000 + 1]
    return float(np.std(att[idx + 1] - att[idx]))


def _window_max(x_nan: np.ndarray, lo: int, hi: int, default: float = math.nan) -> float:
    """``_nanmax(x[lo:hi], default)`` with ``x_nan`` = x whose non-finite values are NaN (fmax skips NaN).  A
    largest value of zero is taken again by :func:`_nanmax`: whether +0.0 or -0.0 comes out depends on the order
    of the comparisons; any other largest value has one bit pattern."""
    part = x_nan[max(lo, 0):hi]
    if not part.size:
        return default
    v = float(np.fmax.reduce(part))
    if v == 0.0:
        return _nanmax(part, default)
    return default if v != v else v


def _window_max_neg(x_nan: np.ndarray, lo: int, hi: int, default: float = math.nan) -> float:
    """``_nanmax(-x[lo:hi], default)``: minus the smallest finite value (negation is exact; zero as above)."""
    part = x_nan[max(lo, 0):hi]
    if not part.size:
        return default
    v = float(np.fmin.reduce(part))
    if v == 0.0:
        return _nanmax(-part, default)
    return default if v != v else -v


def _finite(x: np.ndarray) -> np.ndarray:
    """``x[np.isfinite(x)]`` (``x`` itself when all are finite)."""
    ok = np.isfinite(x)
    return x if ok.all() else x[ok]


def _inf_as_nan(x: np.ndarray) -> np.ndarray:
    inf = np.isinf(x)
    return np.where(inf, np.nan, x) if inf.any() else x


# ------------------------------------------------------------------------------------------------- per channel
STATS_FLOOR_BY_MAX = True   # interval statistics: near the floor means the interval maximum is (channel_arrays)


@dataclass
class ChannelArrays:
    """What the features of one channel's events read, prepared once per channel."""

    frame: pd.DataFrame
    step: float                  # grid step [s]
    stats: bool                  # 15-min statistics (interval min/avg/max) rather than samples
    floor: np.ndarray            # at the receiver floor (status signal_lost)
    att: np.ndarray              # attenuation [dB]
    seg_att: np.ndarray          # the attenuation events were segmented on (the interval peak for statistics)
    below: np.ndarray            # below the hop's threshold (or at the floor)
    near_floor: np.ndarray       # within 2 dB of the lowest reading, or at the floor
    att_nan: np.ndarray          # att with infinities as NaN
    seg_nan: np.ndarray          # seg_att with infinities as NaN (att_nan itself for samples)
    means: _RunningMeans         # running means of att (5-min and 1-min), evaluated over event samples only
    width300: int
    width60: int
    noise_diff: float            # std of clear-air sample-to-sample differences [dB]
    spread_all: np.ndarray | None   # statistics: interval max - min [dB]
    p_att: np.ndarray | None     # the partner channel's attenuation on the same grid, None when none
    ctx: int                     # samples in config.context_s
    wide: int                    # samples in 30 min
    pre: int                     # samples in 30 s
    _reference: np.ndarray | None = None

    def reference(self) -> np.ndarray:
        """The reference level [dBm], read from the frame once when first needed."""
        if self._reference is None:
            self._reference = self.frame["reference_dbm"].to_numpy(dtype=float)
        return self._reference


def channel_arrays(series: ChannelSeries, config: AnalysisConfig, partner: ChannelSeries | None, *,
                   floor: np.ndarray, att: np.ndarray, seg_att: np.ndarray, level_low: np.ndarray,
                   below: np.ndarray) -> ChannelArrays:
    """:class:`ChannelArrays` of one channel, from the arrays the segmentation already used."""
    frame = series.frame
    step = series.interval_s
    stats = series.kind == "stats"
    # the receiver's lowest reading; a level pinned within 2 dB of it is the floor even when the log gives values
    lowest = float(np.nanmin(level_low)) if np.isfinite(level_low).any() else math.nan
    held = level_low
    if stats and STATS_FLOOR_BY_MAX and "rsl_max_dbm" in frame.columns:
        # interval statistics: a level held at the floor holds the whole interval there, its maximum too; a
        # multipath hour on a long hop takes every interval's minimum to the floor for a second or two while the
        # maximum stays near the clear level
        held = frame["rsl_max_dbm"].to_numpy(dtype=float, na_value=np.nan)
    with np.errstate(invalid="ignore"):
        near_floor = floor | (held <= lowest + 2.0)
    p_att = None
    if partner is not None and len(partner.frame) == len(frame):
        p_att = partner.frame["attenuation_peak_db" if stats else "attenuation_db"].to_numpy(
            dtype=float, na_value=np.nan)
    att_ok = np.isfinite(att)
    spread_all = None
    if stats:
        spread_all = (frame["rsl_max_dbm"].to_numpy(dtype=float, na_value=np.nan)
                      - frame["rsl_min_dbm"].to_numpy(dtype=float, na_value=np.nan))
    att_nan = _inf_as_nan(att)
    return ChannelArrays(
        frame=frame, step=step, stats=stats, floor=floor, att=att, seg_att=seg_att, below=below,
        near_floor=near_floor, att_nan=att_nan, seg_nan=att_nan if seg_att is att else _inf_as_nan(seg_att),
        means=_RunningMeans(att, att_ok), width300=max(1, int(round(300.0 / step))),
        width60=max(1, int(round(60.0 / step))), noise_diff=_noise_diff(att, floor, config), spread_all=spread_all,
        p_att=p_att, ctx=max(1, int(round(config.context_s / step))),
        wide=max(1, int(round(1800.0 / step))),   # +-30 min around the event
        pre=max(1, int(round(30.0 / step))))      # 30 s before the first floor sample


@dataclass
class PackedEvents:
    """Reductions over the samples of all events of a channel one after the other ("packed"): event i is
    ``packed[off[i]:off[i] + length[i]]``.  Maxima, minima and integer counts of every event come from one
    reduction each (exact in any order; only the sign of a zero extreme depends on the order, so a zero is taken
    again per event)."""

    off: np.ndarray
    seg_p: np.ndarray            # seg_nan of the event samples
    resid_p: np.ndarray          # att minus its 5-min running mean
    fast_p: np.ndarray | None    # att minus its 1-min running mean (samples only)
    n_fin: list
    n_nan: list
    n_floor: list
    n_valid: list
    n_below: list
    n_near: list
    n_both: list | None          # samples finite on both channels (with a partner)
    first_floor: list            # index of each event's first floor sample (0 when none)
    peak_all: list
    low_all: list


def pack_events(arr: ChannelArrays, starts: np.ndarray, ends: np.ndarray) -> PackedEvents:
    """:class:`PackedEvents` of the events ``[starts, ends)``."""
    length = ends - starts
    off = np.concatenate([[0], np.cumsum(length)[:-1]])
    pos = np.arange(int(length.sum())) + np.repeat(starts - off, length)
    seg_nan, seg_att = arr.seg_nan, arr.seg_att
    seg_p = seg_nan[pos]
    fin_p = np.isfinite(seg_p)

    def count(mask_p):
        return np.add.reduceat(mask_p, off, dtype=np.int64).tolist()

    n_fin = count(fin_p)
    n_nan = count(np.isnan(seg_att[pos])) if seg_nan is not seg_att else [n - f for n, f in
                                                                           zip(length.tolist(), n_fin)]
    floor_p = arr.floor[pos]
    floor_at = np.flatnonzero(floor_p)
    first_floor = pos[floor_at[np.minimum(np.searchsorted(floor_at, off), max(floor_at.size - 1, 0))]].tolist() \
        if floor_at.size else [0] * len(off)
    att_p = seg_p if seg_nan is arr.att_nan else arr.att_nan[pos]
    att_raw_p = arr.att[pos]
    return PackedEvents(
        off=off, seg_p=seg_p, resid_p=att_raw_p - arr.means.at(pos, arr.width300),
        fast_p=att_raw_p - arr.means.at(pos, arr.width60) if not arr.stats else None,
        n_fin=n_fin, n_nan=n_nan, n_floor=count(floor_p), n_valid=count(fin_p | floor_p),
        n_below=count(arr.below[pos]), n_near=count(arr.near_floor[pos]),
        n_both=count(fin_p & np.isfinite(arr.p_att[pos])) if arr.p_att is not None else None,
        first_floor=first_floor, peak_all=np.fmax.reduceat(seg_p, off).tolist(),
        low_all=np.fmin.reduceat(att_p, off).tolist())


# ------------------------------------------------------------------------------------------------- per event
def fade_shape(arr: ChannelArrays, packed: PackedEvents, i: int, a: int, b: int) -> tuple:
    """``(peak, peak index, mean fade, slope in, slope out)`` of event i on ``[a, b)``: the deepest and the mean
    attenuation of the valid samples [dB], and the slopes [dB/s] from the start to the first point at 80 % of the
    peak and from the last such point to the end."""
    seg_att, step = arr.seg_att, arr.step
    seg = seg_att[a:b]
    n = b - a
    any_finite, all_finite = packed.n_fin[i] > 0, packed.n_fin[i] == n
    peak = packed.peak_all[i]
    if peak == 0.0 or peak != peak:
        peak = _nanmax(seg)
    if any_finite:
        ipeak = a + int(seg.argmax() if all_finite else np.nanargmax(seg))
        n_nan = packed.n_nan[i]
        total = _sum(seg if n_nan == 0 else np.where(np.isnan(seg), 0.0, seg))
        mean_fade = float(total / (n - n_nan))   # np.nanmean: the sum with NaN as 0 over the count
    else:
        ipeak, mean_fade = a, math.nan
    if any_finite and peak > 0:
        hi_idx = np.flatnonzero(seg >= 0.8 * peak)
        i_in, i_out = a + int(hi_idx[0]), a + int(hi_idx[-1])
        if all_finite:
            first, last = seg[0], seg[-1]
        else:
            finite_at = np.flatnonzero(np.isfinite(seg))
            first, last = seg[finite_at[0]], seg[finite_at[-1]]
        slope_in = (seg_att[i_in] - first) / max((i_in - a) * step, step)
        slope_out = (seg_att[i_out] - last) / max((b - 1 - i_out) * step, step)
    else:
        slope_in = slope_out = math.nan
    return peak, ipeak, mean_fade, slope_in, slope_out


def fade_texture(arr: ChannelArrays, packed: PackedEvents, i: int, a: int, b: int, peak: float) -> tuple:
    """``(variability, roughness, fast std, half-peak fraction)`` of event i: the std of the sample-to-sample
    differences [dB], the std about the 5-min running mean relative to the peak, the std about the 1-min running
    mean [dB] (samples only), and the share of the valid samples at half the peak or more."""
    stats = arr.stats
    o = int(packed.off[i])
    n = b - a
    seg = arr.seg_att[a:b]
    src = arr.att[a:b] if not stats else seg
    diffs = _finite(src[1:] - src[:-1])   # np.diff
    variability = _std(diffs) if diffs.size > 1 else math.nan
    resid = _finite(packed.resid_p[o:o + n])
    roughness = float(_std(resid) / peak) if resid.size > 1 and peak > 0 else math.nan
    if not stats:
        fast = _finite(packed.fast_p[o:o + n])
        fast_std = _std(fast) if fast.size > 1 else math.nan
    else:
        fast_std = math.nan
    # fraction of the valid samples at half the peak or more (NaN compares False)
    any_finite = packed.n_fin[i] > 0
    half = (np.count_nonzero(packed.seg_p[o:o + n] >= 0.5 * peak) / packed.n_fin[i]) if any_finite and peak > 0 \
        else math.nan
    return variability, roughness, fast_std, half


def upfades(arr: ChannelArrays, packed: PackedEvents, i: int, a: int, b: int) -> tuple:
    """``(within, before, after, context)``: the largest rise of the level above the reference [dB] inside the
    event, in ``context_s`` before and after it, and in the 30 min either side."""
    att_nan, ctx, wide = arr.att_nan, arr.ctx, arr.wide
    low = packed.low_all[i]
    up_in = 0.0 if low != low else (-low if low != 0.0 else _nanmax(-arr.att[a:b], 0.0))
    up_before = _window_max_neg(att_nan, a - ctx, a, 0.0)
    up_after = _window_max_neg(att_nan, b, b + ctx, 0.0)
    up_context = max(_window_max_neg(att_nan, a - wide, a, 0.0), _window_max_neg(att_nan, b, b + wide, 0.0))
    return up_in, up_before, up_after, up_context


def floor_depths(arr: ChannelArrays, packed: PackedEvents, i: int, a: int, b: int, peak: float,
                 threshold_dbm: float) -> tuple:
    """``(pre-floor fade, reported peak)``: for an event reaching the receiver floor, the deepest fade in the 30 s
    before its first floor sample (NaN: no valid sample there) and a peak of at least the reference minus the
    threshold (the fade went at least that deep); else NaN and the peak."""
    pre_floor = math.nan
    peak_reported = peak
    if packed.n_floor[i]:
        first = packed.first_floor[i]
        pre_floor = _window_max(arr.att_nan, first - arr.pre, first)
        ref = arr.reference()[a:b]
        lower_bound = float(np.nanmax(ref) - threshold_dbm) if np.isfinite(ref).any() else math.nan
        peak_reported = max(peak if math.isfinite(peak) else -math.inf, lower_bound)
    return pre_floor, peak_reported


def partner_features(arr: ChannelArrays, packed: PackedEvents, i: int, a: int, b: int, peak: float,
                     pol: str | None, p_pol: str | None, config: AnalysisConfig) -> tuple:
    """``(correlation, ratio, V/H)`` with the partner channel over the event: the Pearson correlation of the two
    attenuations, the ratio of the partner's to this channel's attenuation summed over the deep samples (at least
    ``fade_start_db`` and half the peak), and that ratio as A_V / A_H when the two are H and V (NaN otherwise)."""
    corr = ratio = vh = math.nan
    if arr.p_att is None:
        return corr, ratio, vh
    seg = arr.seg_att[a:b]
    pa = arr.p_att[a:b]
    if packed.n_both[i] == b - a:
        ok, x, y = None, seg, pa
    else:
        ok = np.isfinite(seg) & np.isfinite(pa)
        x, y = seg[ok], pa[ok]
    if x.size >= 3 and _std(x) > 0 and _std(y) > 0:
        corr = _pearson(x, y)
    deep = seg >= max(config.fade_start_db, 0.5 * peak)
    if ok is not None:
        deep &= ok
    if deep.any():
        deep_sum = _sum(seg[deep])
        if deep_sum > 0:
            ratio = float(_sum(pa[deep]) / deep_sum)
            if pol == "H" and p_pol == "V":
                vh = ratio
            elif pol == "V" and p_pol == "H" and ratio > 0:
                vh = 1.0 / ratio
    return corr, ratio, vh


def rain_plausible(rain_rate_mmh, config: AnalysisConfig):
    """Whether a path-average rain rate [mm/h] is one rain can give: above 0 and at most
    ``config.rain_plausible_max_mmh``; vectorised (a bool for one value)."""
    if np.ndim(rain_rate_mmh) == 0:
        return bool(0 < rain_rate_mmh <= config.rain_plausible_max_mmh)
    rate = np.asarray(rain_rate_mmh, dtype=float)
    return (rate > 0) & (rate <= config.rain_plausible_max_mmh)


def rain_features(coefficients: dict, length_km: float, peak: float, mean_fade: float, vh: float,
                  pol: str | None, config: AnalysisConfig) -> tuple:
    """``(rate at the peak, rate at the mean fade, expected V/H, plausible)``: the path-average rain rates [mm/h]
    the fade implies under uniform rain (ITU-R P.838-3 eq. (1) inverted, :mod:`diag.models.p838`), the A_V / A_H
    ratio P.838-3 expects at the horizontal rate, and whether the peak rate is plausible rain."""
    k, alpha = coefficients["V" if pol == "V" else "H"]
    rate = p838.rain_rate_for_coefficients_mmh(peak, length_km, k, alpha)
    rate_mean = p838.rain_rate_for_coefficients_mmh(mean_fade, length_km, k, alpha)
    if pol != "V":
        rate_h = rate
    else:
        k_h, alpha_h = coefficients["H"]
        rate_h = p838.rain_rate_for_coefficients_mmh(peak / vh if vh and math.isfinite(vh) and vh > 0 else peak,
                                                     length_km, k_h, alpha_h)
    return rate, rate_mean, p838.v_over_h_ratio(rate_h, coefficients), rain_plausible(rate, config)


def gauge_rate(gauge: pd.DataFrame | None, t_first: pd.Timestamp, t_last: pd.Timestamp) -> float:
    """The rain gauge's peak rate [mm/h] from 15 min before to 15 min after the event, NaN without a gauge or
    with under half the period covered."""
    if gauge is None or not len(gauge):
        return math.nan
    got = gauge_rain_over(gauge, t_first - pd.Timedelta(minutes=15), t_last + pd.Timedelta(minutes=15))
    if got["peak_mmh"] is not None and got["coverage"] >= 0.5:
        return float(got["peak_mmh"])
    return math.nan


def link_below(level_low: np.ndarray, floor: np.ndarray, link: Link) -> np.ndarray:
    """Below the hop's threshold, or at the receiver floor."""
    with np.errstate(invalid="ignore"):
        return (level_low < link.threshold_dbm) | floor


def channel_floor(frame: pd.DataFrame) -> np.ndarray:
    """At the receiver floor (status signal_lost)."""
    return (frame["status"] == S.SIGNAL_LOST).to_numpy(dtype=bool)
