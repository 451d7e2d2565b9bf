"""Multipath statistics of one channel: the Rice K-factor and the level-crossing rate / average fade duration over
the multipath periods (samples of events classified ``multipath``), relative to the local mean power, next to the
Rayleigh and Rice laws of :mod:`diag.models.fading`.  Part of :func:`diag.analysis.fading_stats.channel_statistics`.
"""
from __future__ import annotations

import logging
import math

import numpy as np
import pandas as pd

from diag.analysis.stat_arrays import StatArrays
from diag.models import fading
from diag.numeric import round_figures as _round

log = logging.getLogger("diag.analysis.fading_stats")   # the statistics' logger, as before the split

LCR_LEVELS_DB = (-5.0, -10.0, -15.0, -20.0, -25.0, -30.0)
MLE_MAX_SAMPLES = 3000   # the likelihood fit uses at most this many evenly spaced samples (speed)


# --------------------------------------------------------------------------------------- multipath periods
def multipath_periods(arrays: StatArrays, interval_s: float, *, merge_s: float = 600.0,
                      pad_s: float = 120.0) -> list[tuple[int, int]]:
    """Index spans [a, b) of multipath activity: samples classified multipath, joined across quiet stretches
    shorter than ``merge_s`` and padded by ``pad_s`` (a multipath event only marks the faded part; the envelope
    statistics need the whole fading period around it).  Samples of other causes are masked later."""
    idx = np.flatnonzero(arrays.is_mp)
    if idx.size == 0:
        return []
    gap = max(1, int(round(merge_s / interval_s)))
    pad = int(round(pad_s / interval_s))
    breaks = np.flatnonzero(np.diff(idx) > gap) + 1
    n = arrays.n
    return [(max(0, int(part[0]) - pad), min(n, int(part[-1]) + 1 + pad)) for part in np.split(idx, breaks)]


def _relative_db(arrays: StatArrays, interval_s: float, local_mean_s: float, periods) -> np.ndarray:
    """Level relative to the centred rolling mean power over ``local_mean_s`` [dB] inside ``periods`` (NaN
    outside: nothing reads it there); -inf at the floor, NaN where no level.  Computed once per channel and
    periods (cached on ``arrays``)."""
    key = (interval_s, local_mean_s, tuple(periods))
    if key not in arrays.relative_cache:
        arrays.relative_cache[key] = _relative_db_uncached(arrays, interval_s, local_mean_s, periods)
    return arrays.relative_cache[key]


def _relative_db_uncached(arrays: StatArrays, interval_s: float, local_mean_s: float, periods) -> np.ndarray:
    window = max(5, int(round(local_mean_s / interval_s)))
    rel = np.full(arrays.n, np.nan)
    for a, b in periods:
        # the mean over [a, b) needs the samples a window either side (the same windows as over the whole series;
        # the running sum starts here, so the last bits may differ from a whole-series rolling mean)
        lo, hi = max(0, a - window), min(arrays.n, b + window)
        power = np.where(arrays.ok[lo:hi], 10.0 ** (arrays.level[lo:hi] / 10.0), np.nan)
        mean = pd.Series(power).rolling(window, center=True, min_periods=max(3, window // 4)).mean().to_numpy()
        with np.errstate(divide="ignore", invalid="ignore"):
            part = 10.0 * np.log10(power[a - lo:b - lo] / mean[a - lo:b - lo])
        rel[a:b] = np.where(arrays.lost[a:b], -np.inf, part)
    return rel


def _period_mask(arrays: StatArrays, periods) -> np.ndarray:
    """Samples inside the multipath periods that are not part of another cause's event."""
    mask = np.zeros(arrays.n, dtype=bool)
    for a, b in periods:
        mask[a:b] = arrays.is_none[a:b] | arrays.is_mp[a:b]
    return mask


def _thin(n: int, most: int) -> np.ndarray:
    """Evenly spaced indices, at most ``most`` of ``n`` (neighbouring fading samples are correlated anyway)."""
    return np.arange(n) if n <= most else np.linspace(0, n - 1, most).astype(int)


def _envelope(series, arrays, local_mean_s: float, not_sampled: str):
    """``(arrays, periods, relative level, period mask)`` of a sampled channel's multipath periods, or a
    ``{"skipped": why}`` dict (a statistics log, or no multipath)."""
    arrays = arrays or StatArrays(series)
    if series.kind != "sample":
        return {"skipped": not_sampled}
    periods = multipath_periods(arrays, series.interval_s)
    if not periods:
        return {"skipped": "no samples classified multipath"}
    rel = _relative_db(arrays, series.interval_s, local_mean_s, periods)
    return arrays, periods, rel, _period_mask(arrays, periods)


def rice_block(series, *, local_mean_s: float = 900.0, min_samples: int = 60, arrays=None) -> dict:
    """Rice K (moments and MLE) over the channel's multipath periods; envelope relative to the local mean."""
    got = _envelope(series, arrays, local_mean_s, "statistics log: the envelope is not sampled")
    if isinstance(got, dict):
        return got
    arrays, periods, rel, mask = got
    per_period = []
    for a, b in (periods[:20] if len(periods) > 1 else []):
        part = rel[a:b][mask[a:b] & np.isfinite(rel[a:b])]
        if part.size >= min_samples:
            env = fading.envelope_from_level_db(part)
            per_period.append({"start_utc": series.frame.index[a].isoformat(),
                               "end_utc": series.frame.index[b - 1].isoformat(), "samples": int(part.size),
                               "k_moments": _round(fading.rice_k_moments(env))})
    use = mask & np.isfinite(rel)
    lost = int(np.count_nonzero(mask & arrays.lost))
    if use.sum() < min_samples:
        return {"skipped": f"fewer than {min_samples} multipath samples with a level"}
    env = fading.envelope_from_level_db(rel[use])
    k_mom = fading.rice_k_moments(env)
    fit = fading.fit_rice(env[_thin(env.size, MLE_MAX_SAMPLES)], method="mle")
    out = {"samples": int(use.sum()), "periods": len(periods), "k_moments": _round(k_mom),
           "mle_samples": int(min(env.size, MLE_MAX_SAMPLES)),
           "k_moments_db": _round(10 * math.log10(k_mom)) if 0 < k_mom < math.inf else None,
           "k_mle": _round(fit.k_factor), "k_mle_db": _round(fit.k_factor_db) if fit.k_factor > 0 else None,
           "per_period": per_period, "local_mean_s": local_mean_s,
           "method": "multipath periods = multipath events joined across gaps < 10 min, padded 2 min; "
                     "envelope = 10^(L/20), L = level relative to the centred rolling mean power; K by moments "
                     "(Abdi et al. 2001) and by maximum likelihood (diag.models.fading)"}
    notes = []
    if lost:
        notes.append(f"{lost} samples at the receiver floor left out (censored): K is biased high")
    if series.interval_s > 1.0:
        notes.append(f"{series.interval_s:g}-s sampling: fast fading is undersampled")
    if notes:
        out["note"] = "; ".join(notes)
    return out


UNDERSAMPLED_MISSED = 0.10   # a level is undersampled when more than 10 % of its crossings are expected missed


def missed_crossing_fraction(afd_s, interval_s: float):
    """Expected share of fades below a level that sampling every ``interval_s`` misses, for fades of average
    duration ``afd_s`` (NaN stays NaN).

    A fade of duration D is seen by samples dt apart with probability min(1, D/dt).  If every fade lasted the
    average A (nearly so at shallow levels) the share seen is min(1, A/dt); if durations were exponential with mean
    A (closer at deep levels) it is (A/dt)(1 - exp(-dt/A)).  The estimate is the mean of the two (a rule of thumb of
    our own, checked against a Clarke-model Rayleigh simulation in tests/analysis/test_undersampling.py: within 0.12 at
    -5 to -30 dB).  At 1-s sampling of Rayleigh fading with f_m = 0.05 Hz: about 34 % missed at -20 dB (A = 0.8 s)
    and 76 % at -30 dB (A = 0.25 s).
    """
    a = np.asarray(afd_s, dtype=float)
    dt = float(interval_s)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        seen_exp = np.where(a > 0, (a / dt) * -np.expm1(-dt / a), 0.0)
        seen_fixed = np.where(a > 0, np.minimum(1.0, a / dt), 0.0)
    seen = 0.5 * (np.clip(seen_exp, 0.0, 1.0) + seen_fixed)
    return np.where(np.isfinite(a), 1.0 - seen, np.nan)


def lcr_block(series, *, levels_db=LCR_LEVELS_DB, local_mean_s: float = 900.0, min_crossings: int = 3,
              arrays=None, rice_k: float | None = None) -> dict:
    """Level-crossing rate and average fade duration over multipath periods vs Rayleigh with a fitted f_m (and
    vs Rice with the measured ``rice_k`` when given)."""
    got = _envelope(series, arrays, local_mean_s, "statistics log: crossings cannot be counted")
    if isinstance(got, dict):
        return got
    arrays, periods, rel, mask = got
    mask = mask & ~np.isnan(rel)
    dt = series.interval_s
    total_s = float(mask.sum() * dt)
    if total_s <= 0:
        return {"skipped": "no multipath samples with a level"}
    # counted over the masked samples only; a crossing needs two neighbouring samples both in the mask
    at = np.flatnonzero(mask)
    level = rel[at]
    both = at[1:] == at[:-1] + 1
    lv = np.asarray(levels_db, dtype=float)
    crossings = np.zeros(len(lv))
    below_s = np.zeros(len(lv))
    for j, lev in enumerate(lv):
        below = level < lev
        below_s[j] = np.count_nonzero(below) * dt
        crossings[j] = np.count_nonzero(both & below[1:] & ~below[:-1])   # downward crossings
    rate = crossings / total_s
    use = crossings >= min_crossings
    out = {"level_db": lv.tolist(), "observed_s": _round(total_s, 8), "crossings": crossings.astype(int).tolist(),
           "crossing_rate_hz": _round(rate),
           "afd_s": _round(np.where(crossings > 0, below_s / np.maximum(crossings, 1), np.nan))}
    if use.sum() == 0:
        out["fit"] = f"no level with >= {min_crossings} crossings: fading bandwidth not fitted"
        return out
    fm_each = np.asarray(fading.doppler_from_crossing_rate_hz(rate[use], lv[use]), dtype=float)
    weights = crossings[use]
    fm = float(np.exp(np.sum(weights * np.log(fm_each)) / np.sum(weights)))   # count-weighted geometric mean
    out["fading_bandwidth_hz"] = _round(fm)
    out["rayleigh_crossing_rate_hz"] = _round(np.asarray(fading.rayleigh_level_crossing_rate_hz(lv, fm)))
    out["rayleigh_afd_s"] = _round(np.asarray(fading.rayleigh_average_fade_duration_s(lv, fm)))
    out["method"] = ("levels relative to the local mean power over the multipath periods; f_m = count-weighted "
                     "geometric mean of the f_m that reproduce each observed crossing rate (Rayleigh N_R, "
                     "diag.models.fading)")
    if rice_k is not None and math.isfinite(rice_k) and rice_k > 0:
        # the same fit under the Rice law with the K measured over these periods (N_R is linear in f_m)
        unit = np.asarray(fading.rice_level_crossing_rate_hz(lv[use], rice_k, 1.0), dtype=float)
        fm_rice = float(np.exp(np.sum(weights * np.log(rate[use] / unit)) / np.sum(weights)))
        out["rice_k_used"] = _round(rice_k)
        out["rice_fading_bandwidth_hz"] = _round(fm_rice)
        out["rice_crossing_rate_hz"] = _round(np.asarray(fading.rice_level_crossing_rate_hz(lv, rice_k, fm_rice)))
        out["rice_afd_s"] = _round(np.asarray(fading.rice_average_fade_duration_s(lv, rice_k, fm_rice)))
    # per level: a fade shorter than the sampling interval is often missed.  Judged on the shortest of the measured
    # and the model average fade durations (missed crossings lengthen the measured one)
    afd = np.asarray(out["afd_s"], dtype=float)
    for key in ("rayleigh_afd_s", "rice_afd_s"):
        if key in out:
            afd = np.fmin(afd, np.asarray(out[key], dtype=float))
    missed = missed_crossing_fraction(afd, dt)
    out["missed_crossings_fraction"] = _round(missed)
    out["undersampled"] = [bool(m > UNDERSAMPLED_MISSED) for m in missed]
    if any(out["undersampled"]):
        worst = [f"{lev:g} dB ({100 * m:.0f} %)" for lev, m, u in zip(lv, missed, out["undersampled"]) if u]
        out["note"] = (f"{dt:g}-s sampling is too coarse for the short fades at " + ", ".join(worst)
                       + " (expected share of crossings missed): those rates are lower bounds and those fade "
                       "durations too long")
    elif dt > 10.0:
        out["note"] = (f"{dt:g}-s sampling resolves only slow fading; Rayleigh/Rice crossing theory assumes the "
                       "envelope is sampled well above its fading bandwidth, so read these as slow-fading rates")
    return out
