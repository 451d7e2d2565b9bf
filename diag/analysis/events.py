"""Fade events: segmentation with hysteresis, per channel, grouped across the channels of a hop, with features.

Segmentation (per channel, on ``attenuation_db`` for 1-s samples, on ``attenuation_peak_db`` = reference minus
interval minimum for 15-min statistics):

- a grid point is *in a fade* while the attenuation is at least ``fade_end_db`` (or the receiver is at its floor,
  status "signal_lost"); a run of such points is an event when it reaches ``fade_start_db`` somewhere (hysteresis:
  start at 3 dB, end below 1.5 dB by default);
- events closer than ``min_separation_s`` are merged (the bursts of one multipath episode, a gap of a few polls
  inside a rain fade);
- events shorter than ``min_duration_s`` are dropped unless they hold a below-threshold or floor sample (so every
  second below threshold is inside some event);
- events of different channels that overlap in time share a ``group_id`` (one physical event seen on H and V).

Level-shift spans from :func:`diag.analysis.reference.level_shift_spans` become events of their own (they may last
days and
contain shorter fades; the per-sample cause is that of the innermost event, see :func:`paint_series`).

Per-event features (units in the column names): start/end, duration, peak and mean fade, slope in and out
[dB/s], short-term variability (std of the sample-to-sample differences; for 1-s logs the std of 1-s
differences), roughness (std of the attenuation about its 5-min running mean, relative to the peak), upfades
(level above the reference) within and within ``context_s`` before/after, hour of the peak (UTC), fraction of
samples at the receiver floor, the fade just before the first floor sample, seconds below threshold, the
partner channel's correlation and V/H (or direction) attenuation ratio, the rain rate implied by ITU-R P.838-3
for the peak and mean fade under uniform rain over the path, and whether that rate is plausible.  For 15-min
statistics: the median min-max spread within an interval and the ratio of the average fade to the minimum fade.
"""
from __future__ import annotations

import math
import re

import numpy as np
import pandas as pd

from diag import schema as S
from diag.analysis.reference import LevelSpan
from diag.config import AnalysisConfig
from diag.links import Link
from diag.models import p838
from diag.results import ChannelSeries

__all__ = ["segment", "find_events", "paint_series", "channel_polarization", "FEATURE_COLUMNS"]

FEATURE_COLUMNS = [
    "event_kind", "group_id", "kind", "interval_s", "start_index", "end_index", "partner_channel",
    "peak_fade_db_finite", "mean_fade_db", "time_to_peak_s", "slope_in_db_s", "slope_out_db_s", "variability_db",
    "roughness", "upfade_within_db", "upfade_before_db", "upfade_after_db", "hour_utc", "floor_fraction",
    "pre_floor_fade_db", "below_threshold_s", "valid_fraction", "partner_corr", "partner_ratio", "v_over_h_ratio",
    "expected_v_over_h", "rain_rate_mmh", "rain_rate_mean_mmh", "rain_plausible", "spread_db", "avg_to_min_ratio",
    "step_db", "gauge_rain_mmh", "fast_std_db", "half_peak_fraction", "noise_diff_db", "near_floor_fraction",
    "upfade_context_db",
]


def channel_polarization(channel: str, link: Link | None = None) -> str | None:
    """The polarisation of a channel: the link's when it is single-polarised (H or V), else "H" or "V" when the
    channel name says so (a token H/V/horizontal/vertical), else None.

    On a single-polarised hop the channel names name the directions or ends ("A>B", "near", "S1>V2"), so a site
    code that reads like a polarisation token ("V2") must not override the links table."""
    if link is not None and link.polarization in ("H", "V"):
        return link.polarization
    tokens = [t for t in re.split(r"[^A-Za-z]+", str(channel).lower()) if t]
    if any(t in ("h", "horizontal", "hor", "hh") for t in tokens):
        return "H"
    if any(t in ("v", "vertical", "ver", "vv") for t in tokens):
        return "V"
    return None


def _partners(channels: list[str], link: Link | None) -> dict[str, str]:
    """H<->V pairs of the same path, else the two channels of a two-channel hop (two directions; on a
    single-polarised hop every channel has the hop's polarisation, so only this second rule pairs them)."""
    out: dict[str, str] = {}
    pols = {ch: channel_polarization(ch, link) for ch in channels}
    rest = {ch: re.sub(r"(?i)\b(h|v|horizontal|vertical)\b", "", ch).strip(" _-") for ch in channels}
    for a in channels:
        for b in channels:
            if a != b and pols[a] and pols[b] and pols[a] != pols[b] and rest[a] == rest[b]:
                out[a] = b
    if not out and len(channels) == 2:
        out[channels[0]], out[channels[1]] = channels[1], channels[0]
    return out


def _count_in(mask: np.ndarray, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
    """Number of True entries of ``mask`` in each range ``[start, end)`` (positions, then binary searches: exact
    integers without a cumulative sum over the whole series)."""
    where = np.flatnonzero(mask)
    return np.searchsorted(where, ends) - np.searchsorted(where, starts)


def segment(attenuation_db: np.ndarray, floor: np.ndarray, below: np.ndarray, interval_s: float,
            config: AnalysisConfig) -> tuple[np.ndarray, np.ndarray]:
    """Fade events of one channel as index ranges ``[start, end)`` (see module docstring)."""
    att = np.asarray(attenuation_db, dtype=float)
    with np.errstate(invalid="ignore"):
        ext = (att >= config.fade_end_db) | floor
        core = (att >= config.fade_start_db) | floor
    if ext.size == 0:
        return np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp)
    # runs of ``ext``: the series split where it changes; every other run (those starting on True) is a fade
    change = np.flatnonzero(ext[1:] != ext[:-1]) + 1
    first = np.concatenate([[0], change])
    last = np.concatenate([change, [ext.size]])
    run = ext[first]
    starts, ends = first[run], last[run]
    if starts.size == 0:
        return starts, ends
    keep = _count_in(core, starts, ends) > 0
    starts, ends = starts[keep], ends[keep]
    if starts.size > 1:
        sep = max(1, int(math.ceil(config.min_separation_s / interval_s)))
        new = np.concatenate([[True], (starts[1:] - ends[:-1]) >= sep])
        last = np.concatenate([new[1:], [True]])
        starts, ends = starts[new], ends[last]
    if starts.size:
        long_enough = (ends - starts) * interval_s >= config.min_duration_s
        keep = long_enough | (_count_in(below | floor, starts, ends) > 0)
        starts, ends = starts[keep], ends[keep]
    return starts, ends


class _RainModel:
    """ITU-R P.838-3 coefficients of one hop, computed once (eq. (1) inverted per event in plain floats)."""

    def __init__(self, frequency_ghz: float, length_km: float):
        self.length_km = float(length_km)
        self.frequency_ghz = float(frequency_ghz)
        kh, ah = p838.coefficients_horizontal(frequency_ghz)
        kv, av = p838.coefficients_vertical(frequency_ghz)
        self.coef = {"H": (float(kh), float(ah)), "V": (float(kv), float(av))}

    def rate_mmh(self, att_db: float, pol: str | None) -> float:
        """Path-average rain rate for ``att_db`` under uniform rain: R = (A / (k L))^(1/alpha), P.838-3 eq. (1)."""
        if not (math.isfinite(att_db) and att_db > 0):
            return 0.0
        k, alpha = self.coef["V" if pol == "V" else "H"]
        return float((att_db / (k * self.length_km)) ** (1.0 / alpha))

    def v_over_h(self, rate_mmh: float) -> float:
        """A_V / A_H = gamma_V / gamma_H at ``rate_mmh`` (NaN for no rain)."""
        if not (math.isfinite(rate_mmh) and rate_mmh > 0):
            return math.nan
        (kh, ah), (kv, av) = self.coef["H"], self.coef["V"]
        return float(kv * rate_mmh ** av / (kh * rate_mmh ** ah))


def _running_mean(x: np.ndarray, width: int) -> np.ndarray:
    """Centred running mean over ``width`` samples ignoring NaN (cumulative sums: O(n))."""
    if width <= 1 or x.size < 3:
        return x
    width = min(width, x.size)
    ok = np.isfinite(x)
    csum = np.concatenate([[0.0], np.cumsum(np.where(ok, x, 0.0))])
    ccount = np.concatenate([[0], np.cumsum(ok)])
    half = width // 2
    n = x.size
    # window [i - half, i - half + width) clipped to [0, n]: the sums at its ends by slicing edge-padded sums
    # (the same values a clipped index gather picks, without the gathers)
    lo_c = np.concatenate([np.repeat(csum[:1], half), csum])[:n]
    hi_c = np.concatenate([csum, np.repeat(csum[-1:], width)])[width - half:width - half + n]
    lo_n = np.concatenate([np.repeat(ccount[:1], half), ccount])[:n]
    hi_n = np.concatenate([ccount, np.repeat(ccount[-1:], width)])[width - half:width - half + n]
    num = hi_c - lo_c
    den = hi_n - lo_n
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / den, np.nan)


class _RunningMeans:
    """:func:`_running_mean` of one series evaluated only where asked (the event samples): the cumulative sum is
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
        """``_running_mean(x, width)[idx]``."""
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


def _nanmax(x: np.ndarray, default: float = math.nan) -> float:
    x = x[np.isfinite(x)]
    return float(x.max()) if x.size else default


# The per-event helpers below repeat numpy's own steps without its wrappers (the events of a week are many short
# arrays, where the wrappers cost more than the arithmetic), so every feature keeps its bits.  _sum is what
# ndarray.sum() calls (the same pairwise summation).
_sum = np.add.reduce

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


def _std(x: np.ndarray) -> float:
    """``float(np.std(x))`` of a 1-D float array by numpy's steps (sum, divide, subtract, square, sum, divide,
    square root): the same bits."""
    n = x.size
    d = x - _sum(x) / n
    d *= d
    return math.sqrt(_sum(d) / n)


def _pearson(x: np.ndarray, y: np.ndarray) -> float:
    """``float(np.corrcoef(x, y)[0, 1])`` of two 1-D float arrays by the steps of numpy.cov / numpy.corrcoef (the
    same row means, the same BLAS product, the same scaling, division and clipping): the same bits."""
    rows = np.empty((2, x.size))
    rows[0] = x
    rows[1] = y
    rows -= (_sum(rows, axis=1) / x.size)[:, None]   # rows.mean(axis=1): the row sums over the count
    c = np.dot(rows, rows.T)
    c *= np.true_divide(1, x.size - 1)
    r = float(c[0, 1] / np.sqrt(c[0, 0]) / np.sqrt(c[1, 1]))
    return 1.0 if r > 1.0 else -1.0 if r < -1.0 else r


def _finite(x: np.ndarray) -> np.ndarray:
    """``x[np.isfinite(x)]`` (``x`` itself when all are finite)."""
    ok = np.isfinite(x)
    return x if ok.all() else x[ok]


def _inf_as_nan(x: np.ndarray) -> np.ndarray:
    inf = np.isinf(x)
    return np.where(inf, np.nan, x) if inf.any() else x


def _channel_events(series: ChannelSeries, link: Link, config: AnalysisConfig, partner: ChannelSeries | None,
                    gauge: pd.DataFrame | None) -> list[dict]:
    frame = series.frame
    step = series.interval_s
    stats = series.kind == "stats"
    floor = (frame["status"] == S.SIGNAL_LOST).to_numpy(dtype=bool)
    att = frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
    seg_att = frame["attenuation_peak_db"].to_numpy(dtype=float, na_value=np.nan) if stats else att
    level_low = frame["rsl_min_dbm" if stats else "rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
    with np.errstate(invalid="ignore"):
        below = (level_low < link.threshold_dbm) | floor
    starts, ends = segment(seg_att, floor, below, step, config)
    if starts.size == 0:
        return []
    # the receiver's lowest reading; a level pinned within 2 dB of it is the floor even when the log gives values
    lowest = float(np.nanmin(level_low)) if np.isfinite(level_low).any() else math.nan
    with np.errstate(invalid="ignore"):
        near_floor = floor | (level_low <= lowest + 2.0)
    pol = channel_polarization(series.channel, link)
    rain = _RainModel(link.frequency_ghz, link.length_km)
    p_att = None
    if partner is not None and len(partner.frame) == len(frame):
        p_att = partner.frame["attenuation_peak_db" if stats else "attenuation_db"].to_numpy(
            dtype=float, na_value=np.nan)
    p_pol = channel_polarization(partner.channel, link) if partner is not None else None
    ctx = max(1, int(round(config.context_s / step)))
    wide = max(1, int(round(1800.0 / step)))   # +-30 min around the event
    pre = max(1, int(round(30.0 / step)))      # 30 s before the first floor sample
    att_ok = np.isfinite(att)
    means = _RunningMeans(att, att_ok)   # 5-min and 1-min running means, evaluated over the event samples only
    width300, width60 = max(1, int(round(300.0 / step))), max(1, int(round(60.0 / step)))
    noise_diff = _noise_diff(att, floor, config)
    index = frame.index
    if stats:
        spread_all = (frame["rsl_max_dbm"].to_numpy(dtype=float, na_value=np.nan)
                      - frame["rsl_min_dbm"].to_numpy(dtype=float, na_value=np.nan))
    reference = None
    att_nan = _inf_as_nan(att)
    seg_nan = att_nan if seg_att is att else _inf_as_nan(seg_att)

    # the samples of all events one after the other ("packed"): event i is packed[off[i]:off[i] + length[i]];
    # maxima, minima and integer counts of every event in one reduction each (exact in any order; only the sign
    # of a zero extreme depends on the order, so a zero is taken again per event as before)
    length = ends - starts
    off = np.concatenate([[0], np.cumsum(length)[:-1]])
    pos = np.arange(int(length.sum())) + np.repeat(starts - off, length)
    seg_p = seg_nan[pos]
    fin_p = np.isfinite(seg_p)

    def count(mask_p):
        return np.add.reduceat(mask_p, off, dtype=np.int64).tolist()

    n_fin = count(fin_p)
    n_nan = count(np.isnan(seg_att[pos])) if seg_nan is not seg_att else [n - f for n, f in
                                                                           zip(length.tolist(), n_fin)]
    floor_p = floor[pos]
    n_floor = count(floor_p)
    n_valid = count(fin_p | floor_p)
    n_below = count(below[pos])
    n_near = count(near_floor[pos])
    floor_at = np.flatnonzero(floor_p)
    first_floor = pos[floor_at[np.minimum(np.searchsorted(floor_at, off), max(floor_at.size - 1, 0))]].tolist() \
        if floor_at.size else [0] * len(off)
    peak_all = np.fmax.reduceat(seg_p, off).tolist()
    att_p = seg_p if seg_nan is att_nan else att_nan[pos]
    low_all = np.fmin.reduceat(att_p, off).tolist()
    att_raw_p = att[pos]
    resid_p = att_raw_p - means.at(pos, width300)
    fast_p = att_raw_p - means.at(pos, width60) if not stats else None
    if p_att is not None:
        n_both = count(fin_p & np.isfinite(p_att[pos]))
    t_last = index[ends - 1]
    t_first, t_end = list(index[starts]), list(t_last + pd.Timedelta(seconds=step))   # Timestamps, boxed at once
    peaks_at = []
    rows = []
    for i, (a, b, o) in enumerate(zip(starts.tolist(), ends.tolist(), off.tolist())):
        seg = seg_att[a:b]
        n = b - a
        any_finite, all_finite = n_fin[i] > 0, n_fin[i] == n
        peak = peak_all[i]
        if peak == 0.0 or peak != peak:
            peak = _nanmax(seg)
        if any_finite:
            ipeak = a + int(seg.argmax() if all_finite else np.nanargmax(seg))
            total = _sum(seg if n_nan[i] == 0 else np.where(np.isnan(seg), 0.0, seg))
            mean_fade = float(total / (n - n_nan[i]))   # np.nanmean: the sum with NaN as 0 over the count
        else:
            ipeak, mean_fade = a, math.nan
        peaks_at.append(ipeak)
        # slopes: from the start to the first point at 80 % of the peak, from the last such point to the end
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
        src = att[a:b] if not stats else seg
        diffs = _finite(src[1:] - src[:-1])   # np.diff
        variability = _std(diffs) if diffs.size > 1 else math.nan
        resid = _finite(resid_p[o:o + n])
        roughness = float(_std(resid) / peak) if resid.size > 1 and peak > 0 else math.nan
        if not stats:
            fast = _finite(fast_p[o:o + n])
            fast_std = _std(fast) if fast.size > 1 else math.nan
        else:
            fast_std = math.nan
        # fraction of the valid samples at half the peak or more (NaN compares False)
        half = (np.count_nonzero(seg_p[o:o + n] >= 0.5 * peak) / n_fin[i]) if any_finite and peak > 0 else math.nan
        low = low_all[i]
        up_in = 0.0 if low != low else (-low if low != 0.0 else _nanmax(-att[a:b], 0.0))
        up_before = _window_max_neg(att_nan, a - ctx, a, 0.0)
        up_after = _window_max_neg(att_nan, b, b + ctx, 0.0)
        up_context = max(_window_max_neg(att_nan, a - wide, a, 0.0), _window_max_neg(att_nan, b, b + wide, 0.0))
        floor_frac = n_floor[i] / n
        pre_floor = math.nan
        peak_reported = peak
        if n_floor[i]:  # deepest fade in the 30 s before the first floor sample (NaN: no valid sample there)
            pre_floor = _window_max(att_nan, first_floor[i] - pre, first_floor[i])
            if reference is None:
                reference = frame["reference_dbm"].to_numpy(dtype=float)
            ref = reference[a:b]
            lower_bound = float(np.nanmax(ref) - link.threshold_dbm) if np.isfinite(ref).any() else math.nan
            peak_reported = max(peak if math.isfinite(peak) else -math.inf, lower_bound)
        rate = rain.rate_mmh(peak, pol)
        rate_mean = rain.rate_mmh(mean_fade, pol)
        corr = ratio = vh = math.nan
        if p_att is not None:
            pa = p_att[a:b]
            if n_both[i] == n:
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
        rate_h = rate if pol != "V" else rain.rate_mmh(peak / vh if vh and math.isfinite(vh) and vh > 0 else peak,
                                                       "H")
        gauge_rate = math.nan
        if gauge is not None and len(gauge):
            from diag.read.gauge import gauge_rain_over

            got = gauge_rain_over(gauge, t_first[i] - pd.Timedelta(minutes=15),
                                  t_last[i] + pd.Timedelta(minutes=15))
            if got["peak_mmh"] is not None and got["coverage"] >= 0.5:
                gauge_rate = float(got["peak_mmh"])
        rows.append({
            "link_id": link.link_id, "channel": series.channel, "start_utc": t_first[i], "end_utc": t_end[i],
            "duration_s": float(n * step), "peak_fade_db": float(peak_reported) if math.isfinite(peak_reported)
            else math.nan,
            "event_kind": "fade", "kind": series.kind, "interval_s": float(step), "start_index": a, "end_index": b,
            "partner_channel": partner.channel if partner is not None else "",
            "peak_fade_db_finite": peak, "mean_fade_db": mean_fade, "time_to_peak_s": float((ipeak - a) * step),
            "slope_in_db_s": float(slope_in), "slope_out_db_s": float(slope_out), "variability_db": variability,
            "roughness": roughness, "upfade_within_db": up_in, "upfade_before_db": up_before,
            "upfade_after_db": up_after, "hour_utc": 0, "floor_fraction": floor_frac,
            "pre_floor_fade_db": pre_floor, "below_threshold_s": float(n_below[i] * step),
            "valid_fraction": n_valid[i] / n, "partner_corr": corr, "partner_ratio": ratio,
            "v_over_h_ratio": vh, "expected_v_over_h": rain.v_over_h(rate_h),
            "rain_rate_mmh": rate, "rain_rate_mean_mmh": rate_mean,
            "rain_plausible": bool(0 < rate <= config.rain_plausible_max_mmh),
            "spread_db": float(np.nanmedian(spread_all[a:b])) if stats and np.isfinite(spread_all[a:b]).any()
            else math.nan,
            "avg_to_min_ratio": float(_nanmax(att[a:b]) / peak) if stats and peak > 0 else math.nan,
            "step_db": math.nan, "gauge_rain_mmh": gauge_rate, "fast_std_db": fast_std,
            "half_peak_fraction": half, "noise_diff_db": noise_diff,
            "near_floor_fraction": n_near[i] / n, "upfade_context_db": up_context,
        })
    for row, hour in zip(rows, index[np.asarray(peaks_at)].hour.tolist()):
        row["hour_utc"] = int(hour)
    return rows


def _span_row(span: LevelSpan, series: ChannelSeries, link: Link) -> dict:
    row = {name: math.nan for name in FEATURE_COLUMNS}
    row.update({
        "link_id": link.link_id, "channel": span.channel, "start_utc": span.start, "end_utc": span.end,
        "duration_s": float((span.end - span.start).total_seconds()), "peak_fade_db": float(span.size_db),
        "event_kind": "level_shift", "kind": series.kind, "interval_s": float(series.interval_s),
        "start_index": span.start_index, "end_index": span.end_index, "partner_channel": "",
        "peak_fade_db_finite": float(span.size_db), "step_db": float(span.step_db), "rain_plausible": False,
        "hour_utc": int(span.start.hour), "below_threshold_s": 0.0, "floor_fraction": 0.0,
    })
    return row


def find_events(series: dict[str, ChannelSeries], link: Link, *, config: AnalysisConfig | None = None,
                spans: list[LevelSpan] | None = None, gauge: pd.DataFrame | None = None) -> pd.DataFrame:
    """All fade events of one hop (EVENT_COLUMNS first, then FEATURE_COLUMNS; cause columns still empty)."""
    config = config or AnalysisConfig()
    partners = _partners(list(series), link)
    rows: list[dict] = []
    for name, item in series.items():
        partner = series.get(partners.get(name, ""))
        rows.extend(_channel_events(item, link, config, partner, gauge))
    by_channel = {name: item for name, item in series.items()}
    for span in spans or []:
        rows.append(_span_row(span, by_channel[span.channel], link))
    columns = S.EVENT_COLUMNS + FEATURE_COLUMNS
    if not rows:
        empty = pd.DataFrame({c: pd.Series([], dtype=float) for c in columns})
        for c in ("link_id", "channel", "cause", "evidence", "event_kind", "kind", "partner_channel"):
            empty[c] = pd.Series([], dtype="str")
        for c in ("start_utc", "end_utc"):
            empty[c] = pd.Series([], dtype="datetime64[ns, UTC]")
        return empty[columns]
    # by start time, then channel: the order of sort_values(["start_utc", "channel"], kind="stable") (a stable
    # sort, NaT last), given to the rows before the table is built instead of reordering every column after
    rows.sort(key=lambda row: (row["start_utc"] is pd.NaT,
                               0 if row["start_utc"] is pd.NaT else row["start_utc"].value, str(row["channel"])))
    events = pd.DataFrame(rows)
    events["cause"] = ""
    events["confidence"] = math.nan
    events["evidence"] = ""
    # groups: fades of different channels overlapping in time (level-shift spans stay on their own)
    group = np.full(len(events), -1, dtype=np.int64)
    fade = (events["event_kind"] == "fade").to_numpy()
    starts = events["start_utc"].to_numpy()
    ends = events["end_utc"].to_numpy()
    gap = np.timedelta64(int(config.merge_gap_s * 1e9), "ns")
    current, current_end = -1, None
    for i in np.flatnonzero(fade):
        if current_end is None or starts[i] > current_end + gap:
            current += 1
            current_end = ends[i]
        else:
            current_end = max(current_end, ends[i])
        group[i] = current
    for i in np.flatnonzero(~fade):
        current += 1
        group[i] = current
    events["group_id"] = group
    return events[columns]


CAUSE_DTYPE = pd.CategoricalDtype(list(S.CAUSES) + [""])   # the painted "cause" column ("" = no event)


def paint_series(series: dict[str, ChannelSeries], events: pd.DataFrame) -> None:
    """Add ``event_id`` (row of ``events``, -1 none) and ``cause`` to each channel frame.

    Longer events are painted first, so the innermost (shortest) event covering a point wins.
    """
    # categorical over the cause vocabulary ("" = no event): built from codes in O(n); the code of each event row
    # (and, last, of "no event") is looked up once for all channels
    categories = list(CAUSE_DTYPE.categories)
    lookup = {c: i for i, c in enumerate(categories)}
    codes = np.array([lookup.get(str(c), lookup[S.UNKNOWN]) for c in events["cause"]] + [len(categories) - 1],
                     dtype=np.int16) if len(events) else np.array([len(categories) - 1], dtype=np.int16)
    if len(events):   # the columns as arrays once (filtering the frame per channel copies every column)
        channel = events["channel"].to_numpy()
        row_ids = events.index.to_numpy()
        first, last = events["start_index"].to_numpy(), events["end_index"].to_numpy()
        duration = events["duration_s"].to_numpy(dtype=float)
        shift = (events["event_kind"] == "level_shift").to_numpy(dtype=bool, na_value=False)
        size_db = events["peak_fade_db"].to_numpy(dtype=float)
    for name, item in series.items():
        n = len(item.frame)
        event_id = np.full(n, -1, dtype=np.int64)
        cause = np.full(n, codes[-1], dtype=np.int16)   # codes[event_id], painted alongside
        if len(events):
            mine = np.flatnonzero(channel == name)
            # longest first; a stable sort of the negated durations keeps ties in table order, as
            # sort_values(ascending=False, kind="stable") does
            for k in mine[np.argsort(-duration[mine], kind="stable")]:
                event_id[int(first[k]):int(last[k])] = row_ids[k]
                cause[int(first[k]):int(last[k])] = codes[row_ids[k]]
            # inside a level-shift span a nested fade names the sample only where it is the larger contribution
            # (its attenuation against the shifted level exceeds the shift), as the truth of a sample is defined
            spans = mine[shift[mine]]
            if len(spans):
                att = item.frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
                lost = (item.frame["status"] == S.SIGNAL_LOST).to_numpy(dtype=bool)
                for k in spans:
                    a, b, row_id, size = int(first[k]), int(last[k]), row_ids[k], size_db[k]
                    inner = event_id[a:b]
                    with np.errstate(invalid="ignore"):
                        weaker = (inner != row_id) & ~(att[a:b] > size) & ~lost[a:b]
                    inner[weaker] = row_id
                    cause[a:b][weaker] = codes[row_id]
        item.frame["event_id"] = event_id
        item.frame["cause"] = pd.Categorical.from_codes(cause, dtype=CAUSE_DTYPE, validate=False)
