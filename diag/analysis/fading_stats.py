"""Fading statistics per channel: what the hop's fading looked like, next to what theory and the design predict.

Entry point :func:`link_statistics` (fills ``LinkResult.statistics``).  Per channel:

- **Fade-depth exceedance**: percentage of the *observed* time (gaps and blank rows excluded; a sample with the
  receiver at its floor counts as exceeding every depth) during which the attenuation exceeded each depth, for all
  samples and split by cause (multipath, rain).  For 15-min statistics logs the interval average gives a lower
  bound and the interval minimum an upper bound on the time fraction.
  Next to it: the Rayleigh law P(fade > A) = 1 - exp(-10^(-A/10)) (continuous Rayleigh fading relative to the mean
  power), the fitted deep-fade slope of the multipath curve in dB per decade of probability (Rayleigh: 10 dB per
  decade; docs/references.md §5) with the implied occurrence factor p0 = p(A)·10^(A/10), and the ITU-R P.530 multipath
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

import logging
import math

import numpy as np
import pandas as pd

from diag import schema as S
from diag.analysis.multipath_stats import (  # noqa: F401 - part of the statistics of a channel
    LCR_LEVELS_DB,
    MLE_MAX_SAMPLES,
    lcr_block,
    multipath_periods,
    rice_block,
)
from diag.analysis.stat_arrays import StatArrays
from diag.links import channel_polarization
from diag.models import fading, p530, p838
from diag.numeric import round_figures as _round

log = logging.getLogger(__name__)

DEFAULT_DEPTHS_DB = (3.0, 5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 35.0, 40.0)
RAIN_PERCENTAGES = (1.0, 0.1, 0.01, 0.001)
FADED_DB = 3.0   # a sample counts as faded above this attenuation (the same 3 dB used for truth labels)


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
    arrays = arrays or StatArrays(series)
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


# --------------------------------------------------------------------------------------------------- rain
def rain_block(series, link, skipped: list[str], arrays=None) -> dict:
    arrays = arrays or StatArrays(series)
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
    pred = p530_rain_prediction(p530, link, series.channel)
    out["p530"] = pred
    a001 = pred["a001_db"]
    if is_rain.any() and a001 is not None:
        out["percent_of_period_above_a001"] = _round(100.0 * np.count_nonzero(att[is_rain] > a001) / n_obs)
    out["note"] = ("P.530 percentages are of an average year; observed percentages are of the analysed period, "
                   "so a short record is not expected to match")
    return out


def p530_rain_prediction(p530, link, channel: str) -> dict:
    """P.530 §2.4.1 rain attenuation for this hop (diag.models.p530)."""
    pol = channel_polarization(channel, link, default="H")
    pct = np.asarray(RAIN_PERCENTAGES, dtype=float)
    a001 = p530.rain_attenuation_001_db(link.length_km, link.frequency_ghz, link.r001_mmh,
                                        tilt_deg=p838.tilt_deg_for_polarization(pol))
    a_p = p530.rain_attenuation_db(pct, a001, link.frequency_ghz)
    return {"percent_of_year": pct.tolist(), "attenuation_db": _round(np.asarray(a_p, dtype=float)),
            "a001_db": _round(a001), "polarization": pol, "source": "ITU-R P.530 §2.4.1 via diag.models.p530"}


# ------------------------------------------------------------------------------------------------ by hour
def hourly_block(series, events: pd.DataFrame | None, arrays=None) -> dict:
    arrays = arrays or StatArrays(series)
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
    arrays = StatArrays(series)
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
