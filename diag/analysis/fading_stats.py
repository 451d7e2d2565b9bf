"""Fading statistics per channel: what the hop's fading looked like, next to what theory and the design predict.

Entry point :func:`link_statistics` (fills ``LinkResult.statistics``).  Per channel:

- **Fade-depth exceedance**: percentage of the *observed* time (gaps and blank rows excluded; a sample with the
  receiver at its floor counts as exceeding every depth) during which the attenuation exceeded each depth, for all
  samples and split by cause (multipath, rain).  For 15-min statistics logs the interval average gives a lower
  bound and the interval minimum an upper bound on the time fraction.
  Next to it: the Rayleigh law P(fade > A) = 1 - exp(-10^(-A/10)) (continuous Rayleigh fading relative to the mean
  power), the fitted deep-fade slope of the multipath curve in dB per decade of probability (Rayleigh: 10 dB per
  decade; REFERENCES §5) with the implied occurrence factor p0 = p(A)·10^(A/10), and the ITU-R P.530 multipath
  prediction for the hop (diag.models.p530, needs ``geoclimatic_k``; worst-month percentages).
- **Rice K-factor** over multipath periods (samples of events classified ``multipath``), envelope relative to the
  local mean power (a centred rolling mean over ``local_mean_s``), by moments and by maximum likelihood
  (diag.models.fading), pooled and per event.
- **Level-crossing rate and average fade duration** over the same periods at several depths below the local mean;
  the fading bandwidth f_m is fitted from the observed crossing rates (Rayleigh N_R = sqrt(2 pi) f_m rho e^-rho^2),
  then theory and observation are listed side by side; with the K measured over the same periods the fit is
  repeated under the Rice law (diag.models.fading), which the Rayleigh law misreads when K is large.
- **Rain**: the P.530 rain attenuation A_p for p = 1, 0.1, 0.01, 0.001 % of an average year (needs ``r001_mmh``)
  next to the depths the rain fades exceeded for the same percentages of the observed period, the deepest rain
  fade, and the time the rain fade exceeded A_0.01.
- **Fades by hour of day** (UTC): faded time (attenuation > 3 dB or receiver at its floor) per hour and cause, and
  event starts per hour and cause.

Checks that cannot run (missing link field, no multipath period, statistics log ...) are named in ``"skipped"``.
Pure functions; no I/O.
"""
from __future__ import annotations

import functools
import logging
import math

import numpy as np
import pandas as pd

from diag import schema as S
from diag.models import fading, p838

log = logging.getLogger(__name__)

DEFAULT_DEPTHS_DB = (3.0, 5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 35.0, 40.0)
LCR_LEVELS_DB = (-5.0, -10.0, -15.0, -20.0, -25.0, -30.0)
RAIN_PERCENTAGES = (1.0, 0.1, 0.01, 0.001)
MLE_MAX_SAMPLES = 3000   # the likelihood fit uses at most this many evenly spaced samples (speed)
FADED_DB = 3.0   # a sample counts as faded above this attenuation (the same 3 dB used for truth labels)


def _round(value, digits: int = 4):
    if value is None:
        return None
    if isinstance(value, (list, tuple, np.ndarray)):
        return [_round(v, digits) for v in value]
    value = float(value)
    if not math.isfinite(value):
        return None if math.isnan(value) else (1e300 if value > 0 else -1e300)
    if value == 0:
        return 0.0
    return float(f"{value:.{digits}g}")


# ------------------------------------------------------------------------------------------------- arrays
def _equals(column: pd.Series, value: str) -> np.ndarray:
    """``(column == value).to_numpy(dtype=bool, na_value=False)``; for a categorical column one integer compare of
    its codes (a missing value has code -1, which no category has)."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        hit = np.flatnonzero(np.asarray(column.cat.categories == value))
        codes = column.cat.codes.to_numpy()
        return codes == hit[0] if hit.size else np.zeros(codes.size, dtype=bool)
    return (column == value).to_numpy(dtype=bool, na_value=False)


_UNITS_PER_SECOND = {"s": 1, "ms": 10 ** 3, "us": 10 ** 6, "ns": 10 ** 9}


class _Arrays:
    """The numpy views of one channel's frame the statistics need (string columns converted once)."""

    def __init__(self, series):
        frame = series.frame
        n = len(frame)
        if "status" in frame:
            self.ok = _equals(frame["status"], S.OK)
            self.lost = _equals(frame["status"], S.SIGNAL_LOST)
        else:
            self.ok, self.lost = np.ones(n, dtype=bool), np.zeros(n, dtype=bool)
        att = (frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan) if "attenuation_db" in frame
               else np.full(n, np.nan))
        self.observed = (self.ok & np.isfinite(att)) | self.lost
        self.att = np.where(self.lost, np.inf, att) if self.lost.any() else att   # at the floor: deeper than any depth
        if "cause" in frame and isinstance(frame["cause"].dtype, pd.CategoricalDtype):
            codes = frame["cause"].cat.codes.to_numpy()   # -1 = missing: given the code after the last category
            names = [str(c) for c in frame["cause"].cat.categories]
            if (codes < 0).any():
                codes = np.where(codes < 0, len(names), codes.astype(np.int64))
            names = names + [""]
        elif "cause" in frame:
            codes, uniques = pd.factorize(frame["cause"], use_na_sentinel=False)
            names = [str(x) if isinstance(x, str) else "" for x in uniques]
        else:
            codes, names = np.zeros(n, dtype=np.int64), [""]
        self.cause_codes = np.asarray(codes)   # small integers (int8 when from a categorical)
        self.cause_names = names
        self.n = n
        self.is_mp = self.is_cause(S.MULTIPATH)
        self.is_rain = self.is_cause(S.RAIN)
        self.is_none = self.is_cause("")
        self.level = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
        self._epoch = None   # UTC hours from the epoch time in the index unit (cheaper than .hour)
        if isinstance(frame.index, pd.DatetimeIndex):
            index = frame.index.tz_convert("UTC") if frame.index.tz is not None else frame.index
            self._epoch = index.asi8
            self._per_hour = 3600 * _UNITS_PER_SECOND[index.unit]
        self.relative_cache: dict = {}

    @functools.cached_property
    def hours(self) -> np.ndarray:
        """UTC hour (0-23) of every sample (floor divisions nest: the same hours as via whole seconds)."""
        if self._epoch is None:
            return np.zeros(self.n, dtype=np.int64)
        return (self._epoch // self._per_hour) % 24

    def hours_of(self, mask: np.ndarray) -> np.ndarray:
        """``hours[mask]``, computed for those samples only."""
        if self._epoch is None:
            return np.zeros(int(np.count_nonzero(mask)), dtype=np.int64)
        return (self._epoch[mask] // self._per_hour) % 24

    def count_by_hour(self, mask: np.ndarray) -> np.ndarray:
        """``np.bincount(hours[mask], minlength=24)``: on a time-ordered index, counted per run of samples of one
        clock hour (exact integers) instead of per sample."""
        t, per = self._epoch, self._per_hour
        # time-ordered, and no NaT (the smallest integer, so it could only come first)
        if t is None or not self.n or t[0] == np.iinfo(np.int64).min or not (t[1:] >= t[:-1]).all():
            return np.bincount(self.hours_of(mask), minlength=24)
        edges = np.arange(t[0] // per + 1, t[-1] // per + 1) * per
        starts = np.concatenate([[0], np.searchsorted(t, edges)])
        starts = starts[np.concatenate([starts[1:] > starts[:-1], [True]])]   # hours without a sample: no run
        runs = np.add.reduceat(mask, starts, dtype=np.int64)
        return np.bincount((t[starts] // per) % 24, weights=runs, minlength=24).astype(np.int64)

    def is_cause(self, cause: str) -> np.ndarray:
        hits = [i for i, name in enumerate(self.cause_names) if name == cause]
        if not hits:
            return np.zeros(self.n, dtype=bool)
        out = self.cause_codes == hits[0]
        for code in hits[1:]:
            out |= self.cause_codes == code
        return out


# ------------------------------------------------------------------------------------------------- exceedance
def _past_shallowest(attenuation_db: np.ndarray, use: np.ndarray, depths: np.ndarray) -> np.ndarray:
    """``use`` less the samples at or below the shallowest depth: they exceed none, so the counts stay the same
    without them (NaN, which the sort puts last and so counts as exceeding, stays in; a NaN depth keeps all)."""
    if not depths.size:
        return use
    with np.errstate(invalid="ignore"):
        return use & ~(attenuation_db <= depths.min())


def _exceeding(values: np.ndarray, depths: np.ndarray) -> np.ndarray:
    ordered = np.sort(values)
    return ordered.size - np.searchsorted(ordered, depths, side="right")


def exceedance_counts(attenuation_db: np.ndarray, observed: np.ndarray, depths_db, *,
                      select: np.ndarray | None = None) -> np.ndarray:
    """Number of observed (and selected) samples whose attenuation exceeds each depth (one sort, then binary
    searches)."""
    depths = np.asarray(depths_db, dtype=float)
    use = observed if select is None else observed & select
    return _exceeding(attenuation_db[_past_shallowest(attenuation_db, use, depths)], depths)


def exceedance_percent(attenuation_db: np.ndarray, observed: np.ndarray, depths_db, *,
                       select: np.ndarray | None = None) -> np.ndarray:
    """Percentage of observed samples whose attenuation exceeds each depth (optionally only samples in ``select``
    count as exceeding; the denominator is always all observed samples)."""
    n = int(observed.sum())
    if n == 0:
        return np.full(len(depths_db), np.nan)
    return 100.0 * exceedance_counts(attenuation_db, observed, depths_db, select=select) / n


def tail_fit(depths_db, percent, counts, *, min_depth_db: float = 10.0, min_count: int = 5) -> dict:
    """Straight-line fit of log10(percent) against depth over the deep-fade range.

    Returns the slope in dB per decade of probability (Rayleigh / P.530 deep fades: 10) and the occurrence factor
    p0 [%] = median of p(A)·10^(A/10) over the depths used (the P.530 deep-fade form p = p0·10^(-A/10)).
    """
    d = np.asarray(depths_db, dtype=float)
    p = np.asarray(percent, dtype=float)
    c = np.asarray(counts, dtype=float)
    use = (d >= min_depth_db) & (p > 0) & (c >= min_count) & np.isfinite(p)
    if use.sum() < 2:
        return {"slope_db_per_decade": None, "p0_percent": None, "depths_used_db": d[use].tolist(),
                "note": f"fewer than 2 depths >= {min_depth_db:g} dB with >= {min_count} samples"}
    b = np.polyfit(d[use], np.log10(p[use]), 1)[0]   # log10 p = a + b A
    p0 = float(np.median(p[use] * 10.0 ** (d[use] / 10.0)))
    return {"slope_db_per_decade": _round(-1.0 / b if b < 0 else math.inf), "p0_percent": _round(p0),
            "depths_used_db": d[use].tolist()}


def _p530_multipath(link, depths_db, skipped: list[str]) -> dict | None:
    """P.530 multipath prediction (worst month, %) at each depth, via diag.models.p530; None when skipped."""
    if link.geoclimatic_k is None:
        skipped.append("P.530 multipath prediction: needs geoclimatic_k in the links table")
        return None
    try:
        from diag.models import p530
    except ImportError:  # pragma: no cover - the models package ships p530
        skipped.append("P.530 multipath prediction: diag.models.p530 not available")
        return None
    return p530_multipath_curve(p530, link, depths_db)


def p530_multipath_curve(p530, link, depths_db) -> dict:
    """Call the MODELS P.530 multipath functions for this hop (see diag.models.p530 for the method)."""
    height = link.antenna_height_m if link.antenna_height_m is not None else 0.0
    assumptions = ["equal antenna heights (path inclination 0 mrad): the links table gives one height",
                   "antenna_height_m used as the altitude of the lower antenna" if link.antenna_height_m is not None
                   else "antenna altitude 0 m (antenna_height_m not given)"]
    p0 = p530.multipath_occurrence_percent(link.length_km, link.frequency_ghz, link.geoclimatic_k,
                                           path_inclination_mrad=0.0, lower_antenna_altitude_m=height)
    pct = p530.multipath_fade_percent(np.asarray(depths_db, dtype=float), p0)
    return {"percent_worst_month": _round(np.asarray(pct, dtype=float)), "p0_percent": _round(p0),
            "assumptions": assumptions, "source": "ITU-R P.530-17 §2.3.1-2.3.2 via diag.models.p530 (worst month)"}


def exceedance_block(series, link, depths_db, skipped: list[str], arrays=None) -> dict:
    frame = series.frame
    arrays = arrays or _Arrays(series)
    att, observed = arrays.att, arrays.observed
    n_obs = int(observed.sum())
    out = {"depth_db": list(depths_db), "observed_s": _round(n_obs * series.interval_s, 8),
           "samples": n_obs}
    if n_obs == 0:
        skipped.append(f"{series.channel}: exceedance: no observed samples")
        return out
    is_mp, is_rain = arrays.is_mp, arrays.is_rain
    # exceedance_percent / exceedance_counts of all, multipath and rain samples, the common part found once
    depths = np.asarray(depths_db, dtype=float)
    deep = _past_shallowest(att, observed, depths)
    counts_mp = _exceeding(att[deep & is_mp], depths)
    out["all_percent"] = _round(100.0 * _exceeding(att[deep], depths) / n_obs)
    out["multipath_percent"] = _round(100.0 * counts_mp / n_obs)
    out["rain_percent"] = _round(100.0 * _exceeding(att[deep & is_rain], depths) / n_obs)
    if series.kind == "stats" and "rsl_min_dbm" in frame and "reference_dbm" in frame:
        peak = frame["reference_dbm"].to_numpy(dtype=float) - frame["rsl_min_dbm"].to_numpy(dtype=float)
        peak = np.where(arrays.lost, np.inf, peak)
        out["all_percent_upper_bound"] = _round(exceedance_percent(peak, observed, depths_db))
        out["note"] = ("statistics log: percentages from the interval average (a lower bound); "
                       "all_percent_upper_bound counts whole intervals whose minimum exceeded the depth")
    out["rayleigh_percent"] = _round(100.0 * np.asarray(fading.rayleigh_cdf_db(-np.asarray(depths_db, float))))
    fit = tail_fit(depths_db, out["multipath_percent"] or [], counts_mp)
    floor_mp = int(np.count_nonzero(is_mp & arrays.lost))
    if fit.get("depths_used_db") and floor_mp >= 0.5 * counts_mp[list(depths_db).index(fit["depths_used_db"][-1])]:
        fit["note"] = (f"{floor_mp} multipath samples at the receiver floor set the deep tail (they exceed every "
                       "depth): the slope is not a fading-law estimate")
    fit["rayleigh_slope_db_per_decade"] = 10.0
    out["multipath_tail"] = fit
    pred = _p530_multipath(link, depths_db, skipped)
    if pred is not None:
        out["p530_multipath"] = pred
        out["p530_note"] = ("P.530 gives the percentage of the worst month; the observed curve covers the "
                            "analysed period only")
    return out


# --------------------------------------------------------------------------------------- multipath periods
def multipath_periods(arrays: _Arrays, interval_s: float, *, merge_s: float = 600.0,
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


def _relative_db(arrays: _Arrays, interval_s: float, local_mean_s: float, periods) -> np.ndarray:
    """Level relative to the centred rolling mean power over ``local_mean_s`` [dB] inside ``periods`` (NaN
    outside: nothing reads it there); -inf at the floor, NaN where no level.  Computed once per channel and
    periods (cached on ``arrays``)."""
    key = (interval_s, local_mean_s, tuple(periods))
    if key not in arrays.relative_cache:
        arrays.relative_cache[key] = _relative_db_uncached(arrays, interval_s, local_mean_s, periods)
    return arrays.relative_cache[key]


def _relative_db_uncached(arrays: _Arrays, interval_s: float, local_mean_s: float, periods) -> np.ndarray:
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


def _period_mask(arrays: _Arrays, periods) -> np.ndarray:
    """Samples inside the multipath periods that are not part of another cause's event."""
    mask = np.zeros(arrays.n, dtype=bool)
    for a, b in periods:
        mask[a:b] = arrays.is_none[a:b] | arrays.is_mp[a:b]
    return mask


def _thin(n: int, most: int) -> np.ndarray:
    """Evenly spaced indices, at most ``most`` of ``n`` (neighbouring fading samples are correlated anyway)."""
    return np.arange(n) if n <= most else np.linspace(0, n - 1, most).astype(int)


def rice_block(series, *, local_mean_s: float = 900.0, min_samples: int = 60, arrays=None) -> dict:
    """Rice K (moments and MLE) over the channel's multipath periods; envelope relative to the local mean."""
    arrays = arrays or _Arrays(series)
    if series.kind != "sample":
        return {"skipped": "statistics log: the envelope is not sampled"}
    periods = multipath_periods(arrays, series.interval_s)
    if not periods:
        return {"skipped": "no samples classified multipath"}
    rel = _relative_db(arrays, series.interval_s, local_mean_s, periods)
    mask = _period_mask(arrays, periods)
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
    our own, checked against a Clarke-model Rayleigh simulation in tests/test_undersampling.py: within 0.12 at
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
    arrays = arrays or _Arrays(series)
    if series.kind != "sample":
        return {"skipped": "statistics log: crossings cannot be counted"}
    periods = multipath_periods(arrays, series.interval_s)
    if not periods:
        return {"skipped": "no samples classified multipath"}
    rel = _relative_db(arrays, series.interval_s, local_mean_s, periods)
    mask = _period_mask(arrays, periods) & ~np.isnan(rel)
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


# --------------------------------------------------------------------------------------------------- rain
def rain_block(series, link, skipped: list[str], arrays=None) -> dict:
    arrays = arrays or _Arrays(series)
    att, observed = arrays.att, arrays.observed
    is_rain = arrays.is_rain & observed
    n_obs = int(observed.sum())
    out: dict = {"rain_samples": int(is_rain.sum()), "rain_s": _round(is_rain.sum() * series.interval_s, 8)}
    if is_rain.any():
        rain_att = att[is_rain]
        finite = rain_att[np.isfinite(rain_att)]
        out["deepest_rain_fade_db"] = _round(finite.max()) if finite.size else None
        out["rain_samples_at_floor"] = int(np.count_nonzero(~np.isfinite(rain_att)))
        # depth exceeded for p % of the observed period (rain samples only; NaN where p is below one sample)
        observed_depth = []
        for p in RAIN_PERCENTAGES:
            k = int(math.floor(p / 100.0 * n_obs))
            if k < 1:
                observed_depth.append(None)
                continue
            ordered = np.sort(np.where(np.isfinite(rain_att), rain_att, 1e9))[::-1]
            observed_depth.append(_round(ordered[k - 1]) if k <= ordered.size and ordered[k - 1] < 1e9 else
                                  (None if k > ordered.size else ">floor"))
        out["observed_depth_db"] = dict(zip([f"{p:g}" for p in RAIN_PERCENTAGES], observed_depth))
    if link.r001_mmh is None:
        skipped.append("P.530 rain prediction: needs r001_mmh in the links table")
        return out
    try:
        from diag.models import p530
    except ImportError:  # pragma: no cover
        skipped.append("P.530 rain prediction: diag.models.p530 not available")
        return out
    pred = p530_rain_prediction(p530, link, series.channel)
    out["p530"] = pred
    a001 = pred["a001_db"]
    if is_rain.any() and a001 is not None:
        out["percent_of_period_above_a001"] = _round(100.0 * np.count_nonzero(att[is_rain] > a001) / n_obs)
    out["note"] = ("P.530 percentages are of an average year; observed percentages are of the analysed period, "
                   "so a short record is not expected to match")
    return out


def _polarization_of(link, channel: str) -> str:
    if channel in ("H", "V"):
        return channel
    if link.polarization in ("H", "V"):
        return link.polarization
    return "H"


def p530_rain_prediction(p530, link, channel: str) -> dict:
    """P.530 §2.4.1 rain attenuation for this hop (diag.models.p530)."""
    pol = _polarization_of(link, channel)
    pct = np.asarray(RAIN_PERCENTAGES, dtype=float)
    a001 = p530.rain_attenuation_001_db(link.length_km, link.frequency_ghz, link.r001_mmh,
                                        tilt_deg=p838.tilt_deg_for_polarization(pol))
    a_p = p530.rain_attenuation_db(pct, a001, link.frequency_ghz)
    return {"percent_of_year": pct.tolist(), "attenuation_db": _round(np.asarray(a_p, dtype=float)),
            "a001_db": _round(a001), "polarization": pol, "source": "ITU-R P.530 §2.4.1 via diag.models.p530"}


# ------------------------------------------------------------------------------------------------ by hour
def hourly_block(series, events: pd.DataFrame | None, arrays=None) -> dict:
    arrays = arrays or _Arrays(series)
    att, observed = arrays.att, arrays.observed
    faded = observed & (att > FADED_DB)
    out: dict = {"hour_utc": list(range(24)), "faded_s_by_cause": {}, "observed_s": []}
    obs_by_hour = arrays.count_by_hour(observed) * series.interval_s
    out["observed_s"] = _round(obs_by_hour, 8)
    k = len(arrays.cause_names)
    table = np.bincount(arrays.cause_codes[faded].astype(np.int64) * 24 + arrays.hours_of(faded),
                        minlength=24 * k).reshape(k, 24)
    for code, name in enumerate(arrays.cause_names):
        if table[code].any():
            key = name or S.UNKNOWN            # faded but in no event: unknown
            prev = np.asarray(out["faded_s_by_cause"].get(key, np.zeros(24)), dtype=float)
            out["faded_s_by_cause"][key] = _round(prev + table[code] * series.interval_s, 8)
    if events is not None and len(events) and "channel" in events and "start_utc" in events:
        mine = np.array([str(c) == series.channel for c in events["channel"].to_numpy()], dtype=bool)
        if mine.any():   # (the two columns only: selecting rows of the whole table copies every column)
            start_hours = pd.to_datetime(events["start_utc"][mine], utc=True).dt.hour.to_numpy()
            causes = events["cause"][mine].astype(str).to_numpy()
            out["event_starts_by_cause"] = {
                str(c): np.bincount(start_hours[causes == c], minlength=24).tolist() for c in sorted(set(causes))}
    out["note"] = "hours in UTC"
    return out


# --------------------------------------------------------------------------------------------- entry point
def channel_statistics(series, link, events: pd.DataFrame | None = None, *, depths_db=DEFAULT_DEPTHS_DB,
                       skipped: list[str] | None = None) -> dict:
    """All statistics of one ``ChannelSeries`` (needs ``attenuation_db``, ``status``; ``cause``/``event_id``
    when events were classified)."""
    skipped = [] if skipped is None else skipped
    out = {"channel": series.channel, "kind": series.kind, "interval_s": series.interval_s}
    arrays = _Arrays(series)
    out["exceedance"] = exceedance_block(series, link, depths_db, skipped, arrays)
    rice = rice_block(series, arrays=arrays)
    lcr = lcr_block(series, arrays=arrays, rice_k=rice.get("k_moments"))
    for name, block in (("Rice K-factor", rice), ("level-crossing rate / fade duration", lcr)):
        if "skipped" in block:
            skipped.append(f"{series.channel}: {name}: {block['skipped']}")
    out["rice_k"] = rice
    out["lcr_afd"] = lcr
    out["rain"] = rain_block(series, link, skipped, arrays)
    out["by_hour"] = hourly_block(series, events, arrays)
    return out


def link_statistics(result, *, depths_db=DEFAULT_DEPTHS_DB) -> dict:
    """Fading statistics of every channel of a ``LinkResult`` (JSON-able; fills ``LinkResult.statistics``).

    ``"skipped"`` lists the checks that could not run and why (merge it into ``LinkResult.skipped``).
    """
    skipped: list[str] = []
    channels = {}
    for name, series in result.series.items():
        if "attenuation_db" not in series.frame:
            skipped.append(f"{name}: statistics: no attenuation (reference not computed)")
            continue
        channels[name] = channel_statistics(series, result.link, result.events, depths_db=depths_db,
                                            skipped=skipped)
    # one line per distinct skipped reason (the P.530 ones repeat per channel)
    seen: list[str] = []
    for item in skipped:
        if item not in seen:
            seen.append(item)
    return {"channels": channels, "depths_db": list(depths_db), "skipped": seen}
