"""Cross-polarisation: clear-sky XPD, the polarisation tilt it implies, XPD against co-polar attenuation in rain,
and, where only H and V levels are logged, the clear-sky H/V imbalance and the rain differential-attenuation check.

Entry point :func:`cross_polar` (fills ``LinkResult.cross_polar``).

**XPD logged** (``xpd_db``, or ``xpl_dbm`` with XPD = co-polar RSL - cross-polar level):

- *Clear-sky XPD*: median XPD over samples with status "ok" that are not inside a rain, multipath, refractive or
  signal-loss event and not faded by more than ``clear_max_att_db`` (samples inside a level-shift event count:
  a misalignment is exactly what this check is for).  The clear-sky XPD series is cut at persistent steps
  (:func:`diag.analysis.steps.detect_steps`) so a tilt that appears mid-record is seen with its time.
- *Tilt*: the measured leak is taken as the power sum of the antennas' own leak and the tilt leak
  (diag.models.xpol.combine_xpd_db: 10^(-XPD/10) = 10^(-XPD_ant/10) + tan^2(tilt)).  **Assumption**: the
  antennas' intrinsic XPD is ``antenna_xpd_db`` (default 35 dB, a typical figure for dual-polarised
  point-to-point antennas: common practice, from memory), raised to the best clear-sky XPD seen in the record when
  that is higher (the antennas cannot be worse than what was measured).  The tilt for a perfect antenna (an upper
  bound) and the tilts for 30 and 40 dB antennas are reported too.  Coherent leaks can add or cancel; the power sum is
  an approximation.
- *Co-polar loss of the tilt*: -20 log10 cos(tilt) (diag.models.xpol.copolar_loss_db).
- *Rain*: XPD against co-polar attenuation (CPA) over samples classified rain with CPA >= ``min_cpa_db``, after
  removing the clear-sky leak, fitted as XPD = U - V log10(CPA) both on paired samples and on equiprobable pairs
  (CPA and XPD sorted in opposite orders, which is how ITU-R P.530 §4 states the relation), next to P.530's U and
  V (diag.models.p530).
- *Flag* when the clear-sky XPD is below ``xpd_required_db``.

**Only H and V levels** (a dual-polarised hop without XPD): the clear-sky H/V level imbalance and, over rain samples
seen on both channels, the attenuation ratio A_V / A_H (least squares through the origin) against the ratio ITU-R
P.838-3 predicts at the rain rate implied by A_H (diag.models.p838).
"""
from __future__ import annotations

import logging
import math

import numpy as np
import pandas as pd

from diag import schema as S
from diag.analysis.step_detection import detect_steps
from diag.analysis.steps import in_set
from diag.models import p530, p838, xpol
from diag.numeric import round_sig as _r

log = logging.getLogger(__name__)

DEFAULT_ANTENNA_XPD_DB = 35.0          # common practice, from memory: typical dual-polarised antenna XPD
ANTENNA_XPD_RANGE_DB = (30.0, 40.0)
HV_IMBALANCE_FLAG_DB = 3.0             # common practice: a clear-sky H/V difference above this is worth a look
HV_RATIO_TOLERANCE = 0.15              # |observed - P.838| ratio difference still called consistent (common practice)
_NOT_CLEAR = (S.RAIN, S.MULTIPATH, S.REFRACTIVE, S.SIGNAL_LOSS)


def _xpd_source(frame: pd.DataFrame) -> str | None:
    """The column the XPD comes from (``xpd_db``, else ``xpl_dbm``), None when neither holds a value."""
    for column in (S.XPD, S.XPL):
        if column in frame and frame[column].notna().any():
            return column
    return None


def _xpd_values(frame: pd.DataFrame, source: str) -> np.ndarray:
    """:func:`xpd_series` as a float array, from the column ``source`` (see :func:`_xpd_source`)."""
    x = frame[source].to_numpy(dtype=float, na_value=np.nan)
    if source == S.XPL:
        x = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan) - x
    if "status" in frame:
        x = np.where(in_set(frame["status"], [S.OK]), x, np.nan)
    return x


def xpd_series(frame: pd.DataFrame) -> pd.Series | None:
    """The logged XPD [dB] (``xpd_db``, else co-polar RSL - ``xpl_dbm``), NaN unless status is ok; None if absent."""
    source = _xpd_source(frame)
    if source is None:
        return None
    return pd.Series(_xpd_values(frame, source), index=frame.index, name=source if source == S.XPD else None,
                     copy=False)


def tilt_from_measured_xpd_deg(xpd_db, antenna_xpd_db):
    """Tilt [deg] whose leak, added in power to the antennas' own leak, gives the measured XPD (0 when the measured
    XPD is at or above the antenna XPD).  Uses diag.models.xpol (tilt_from_xpd_deg)."""
    xpd = np.asarray(xpd_db, dtype=float)
    leak = 10.0 ** (-xpd / 10.0) - 10.0 ** (-float(antenna_xpd_db) / 10.0)   # inverse of xpol.combine_xpd_db
    with np.errstate(divide="ignore", invalid="ignore"):
        xpd_tilt = np.where(leak > 0, -10.0 * np.log10(np.where(leak > 0, leak, 1.0)), np.inf)
    tilt = np.asarray(xpol.tilt_from_xpd_deg(xpd_tilt), dtype=float)
    return float(tilt) if tilt.ndim == 0 else tilt


def _clear_mask(frame: pd.DataFrame, clear_max_att_db: float) -> np.ndarray:
    mask = in_set(frame["status"], [S.OK]) if "status" in frame else np.ones(len(frame), bool)
    if "cause" in frame:
        mask = mask & ~in_set(frame["cause"], _NOT_CLEAR)
    if "attenuation_db" in frame:
        att = frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
        shifted = in_set(frame["cause"], [S.LEVEL_SHIFT]) if "cause" in frame else np.zeros(len(frame), bool)
        mask = mask & ((att <= clear_max_att_db) | shifted)
    return mask


def _median(x: np.ndarray, *, overwrite_input: bool = False) -> float:
    """``float(np.median(x))`` of a non-empty 1-D float array, with one single-place partition (in place with
    ``overwrite_input``: x is reordered).

    The same value: numpy partitions at both middle places and the last (a select several times slower); here
    the upper middle comes from the partition, the lower middle is the largest value below it, and the middle
    values go through np.mean as in numpy.  With a NaN, numpy's own median answers.
    """
    n = x.size
    k = n // 2
    if overwrite_input:
        part = x
        part.partition(k)
    else:
        part = np.partition(x, k)
    if np.isnan(part[k:]).any():     # NaN sorts last, so any NaN is in the upper part
        return float(np.median(x))
    return float(np.mean(part[k:k + 1] if n % 2 else np.array([part[:k].max(), part[k]])))


def _positions(index: pd.Index, times) -> np.ndarray:
    """For each time, the number of index entries before it (the index is sorted)."""
    return index.searchsorted(pd.DatetimeIndex(times), side="left")


def _p530_xpd(frequency_ghz: float) -> dict | None:
    u = float(p530.xpd_rain_db(1.0, frequency_ghz))            # U = U0 + 30 log10 f (CPA = 1 dB gives U)
    v = float(p530.xpd_rain_voltage_factor_db(frequency_ghz))   # V(f)
    return {"u_db": _r(u), "v_db": _r(v), "source": "ITU-R P.530-17 §4 via diag.models.p530"}


def _fit_uv(cpa_db: np.ndarray, xpd_db: np.ndarray) -> dict:
    x = np.log10(cpa_db)
    slope, intercept = np.polyfit(x, xpd_db, 1)
    resid = xpd_db - (intercept + slope * x)
    return {"u_db": _r(intercept), "v_db": _r(-slope), "rms_residual_db": _r(np.sqrt(np.mean(resid ** 2)))}


def rain_xpd_block(frame: pd.DataFrame, xpd: pd.Series, clear_xpd_db, frequency_ghz: float, *,
                   min_cpa_db: float = 3.0, min_samples: int = 20) -> dict:
    """XPD vs CPA in rain.  ``xpd``: the XPD per sample of ``frame`` (a series or an array); ``clear_xpd_db``: the
    clear-sky XPD (a number, or an array per sample when it changed during the record) whose leak is removed
    before the fit."""
    if "cause" not in frame or "attenuation_db" not in frame:
        return {"skipped": "no classified events"}
    cpa = frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
    x = xpd.to_numpy(dtype=float, na_value=np.nan) if isinstance(xpd, pd.Series) else np.asarray(xpd, dtype=float)
    is_rain = in_set(frame["cause"], [S.RAIN])
    use = is_rain & (cpa >= min_cpa_db) & np.isfinite(x)
    n_use = int(np.count_nonzero(use))
    if n_use < min_samples:
        return {"skipped": f"fewer than {min_samples} rain samples with CPA >= {min_cpa_db:g} dB and an XPD"}
    cpa_u, x_u = cpa[use], x[use]
    static = np.broadcast_to(np.asarray(clear_xpd_db, dtype=float), cpa.shape)[use]
    # remove the clear-sky leak (antenna + tilt) so the fit describes the rain depolarisation alone
    leak = 10.0 ** (-x_u / 10.0) - 10.0 ** (-static / 10.0)
    keep = leak > 10.0 ** (-static / 10.0) * 0.25    # rain leak at least a quarter of the static one
    out = {"samples": n_use, "samples_rain_dominated": int(keep.sum()), "min_cpa_db": min_cpa_db,
           "clear_sky_leak_removed_db": _r(np.median(static))}
    if keep.sum() < min_samples:
        out["skipped"] = "rain depolarisation hidden under the clear-sky leak (too few rain-dominated samples)"
        return out
    rain_xpd = -10.0 * np.log10(leak[keep])
    c = cpa_u[keep]
    out["paired_fit"] = _fit_uv(c, rain_xpd)
    out["equiprobable_fit"] = _fit_uv(np.sort(c)[::-1], np.sort(rain_xpd))
    out["cpa_range_db"] = [_r(c.min()), _r(c.max())]
    pred = _p530_xpd(frequency_ghz)
    if pred is not None:
        out["p530"] = pred
        f = out["equiprobable_fit"]
        out["difference_from_p530_at_cpa_db"] = {
            str(int(a)): _r((f["u_db"] - f["v_db"] * math.log10(a)) - (pred["u_db"] - pred["v_db"] * math.log10(a)))
            for a in (5.0, 10.0, 20.0) if c.min() <= a <= c.max()}
    return out


def xpd_channel(series, link, *, antenna_xpd_db: float | None, clear_max_att_db: float, skipped: list[str],
                clear: np.ndarray | None = None, source: str | None = None) -> dict:
    """Clear-sky XPD, tilt and rain XPD of one channel with a logged XPD (``clear``: its :func:`_clear_mask`,
    ``source``: its :func:`_xpd_source`, when already known)."""
    frame = series.frame
    index = frame.index
    xpd = _xpd_values(frame, source or _xpd_source(frame))
    if clear is None:
        clear = _clear_mask(frame, clear_max_att_db)
    clear_xpd = np.where(clear, xpd, np.nan)
    valid = ~np.isnan(clear_xpd)
    if np.count_nonzero(valid) < 10:
        skipped.append(f"{series.channel}: clear-sky XPD: fewer than 10 clear-sky samples with an XPD")
        return {"skipped": "too few clear-sky XPD samples"}
    steps = detect_steps(pd.Series(clear_xpd, index=index, copy=False), series.interval_s, min_step_db=1.5)
    end = index[-1] + pd.Timedelta(seconds=float(series.interval_s))
    bounds = [index[0]] + [s.time_utc for s in steps] + [end]
    if index.is_monotonic_increasing:   # each segment [a, b) is a slice of the samples
        cuts = _positions(index, bounds)
        slices = [slice(i, j) for i, j in zip(cuts[:-1], cuts[1:])]
    else:
        slices = [(index >= a) & (index < b) for a, b in zip(bounds[:-1], bounds[1:])]
    segments = []
    for a, b, where in zip(bounds[:-1], bounds[1:], slices):
        part = clear_xpd[where][valid[where]]
        if len(part) >= 10:
            segments.append({"start_utc": a.isoformat(), "end_utc": b.isoformat(),
                             "clear_xpd_db": _median(part, overwrite_input=True), "samples": int(len(part))})
    if not segments:
        return {"skipped": "no clear-sky XPD segment with 10 samples"}
    best = max(s["clear_xpd_db"] for s in segments)
    assumed = DEFAULT_ANTENNA_XPD_DB if antenna_xpd_db is None else float(antenna_xpd_db)
    ant = max(assumed, best)
    for seg in segments:
        x = seg["clear_xpd_db"]
        tilt = tilt_from_measured_xpd_deg(x, ant)
        seg["tilt_deg"] = _r(tilt)
        seg["tilt_deg_perfect_antenna"] = _r(xpol.tilt_from_xpd_deg(x))
        seg["tilt_deg_by_antenna_xpd_db"] = {f"{a:g}": _r(tilt_from_measured_xpd_deg(x, max(a, best)))
                                             for a in ANTENNA_XPD_RANGE_DB}
        seg["copolar_loss_db"] = _r(xpol.copolar_loss_db(tilt))
        seg["clear_xpd_db"] = _r(x)
    current = segments[-1]
    out = {"clear_xpd_db": current["clear_xpd_db"], "tilt_deg": current["tilt_deg"],
           "tilt_deg_perfect_antenna": current["tilt_deg_perfect_antenna"],
           "tilt_deg_by_antenna_xpd_db": current["tilt_deg_by_antenna_xpd_db"],
           "copolar_loss_db": current["copolar_loss_db"],
           "segments": segments, "xpd_steps": [s.to_dict() for s in steps],
           "antenna_xpd_db_used": _r(ant),
           "assumption": (f"antennas' own XPD {ant:.1f} dB ("
                          + ("given" if antenna_xpd_db is not None else "typical value, common practice")
                          + (", raised to the best clear-sky XPD measured" if ant > assumed else "")
                          + "), leaks added in power; tilt_deg_perfect_antenna is the upper bound")}
    if link.xpd_required_db is not None:
        below = [s for s in segments if s["clear_xpd_db"] is not None and s["clear_xpd_db"] < link.xpd_required_db]
        out["xpd_required_db"] = link.xpd_required_db
        out["below_required"] = bool(current["clear_xpd_db"] < link.xpd_required_db)
        out["segments_below_required"] = len(below)
    else:
        skipped.append("XPD against required value: needs xpd_required_db in the links table")
    if len(segments) == 1:
        static = segments[0]["clear_xpd_db"]    # one value for every sample (rain_xpd_block broadcasts it)
    else:
        static = np.full(len(frame), segments[0]["clear_xpd_db"], dtype=float)
    for seg in segments[1:]:
        if index.is_monotonic_increasing:
            static[_positions(index, [pd.Timestamp(seg["start_utc"])])[0]:] = seg["clear_xpd_db"]
        else:
            static[index >= pd.Timestamp(seg["start_utc"])] = seg["clear_xpd_db"]
    out["rain"] = rain_xpd_block(frame, xpd, static, link.frequency_ghz)
    if "skipped" in out["rain"]:
        skipped.append(f"{series.channel}: XPD vs CPA in rain: {out['rain']['skipped']}")
    return out


def hv_block(series_h, series_v, link, *, clear_max_att_db: float, min_att_db: float = 3.0,
             min_samples: int = 20, clear_h: np.ndarray | None = None, clear_v: np.ndarray | None = None) -> dict:
    """Clear-sky H/V imbalance and the rain differential-attenuation check (P.838) for a dual-polarised hop.

    ``clear_h``, ``clear_v``: the channels' :func:`_clear_mask`, when already made."""
    fh, fv = series_h.frame, series_v.frame
    out: dict = {}
    ch = _clear_mask(fh, clear_max_att_db) if clear_h is None else clear_h
    cv = _clear_mask(fv, clear_max_att_db) if clear_v is None else clear_v
    same_grid = fh.index.equals(fv.index)
    if same_grid:   # the inner join is the identity: pair the samples by position
        h = fh["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
        v = fv["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
        pair = ch & cv & ~(np.isnan(h) | np.isnan(v))
        h_minus_v = (h - v)[pair]
    else:
        h_clear = fh["rsl_dbm"].where(ch)
        v_clear = fv["rsl_dbm"].where(cv)
        both = pd.concat([h_clear.rename("h"), v_clear.rename("v")], axis=1, join="inner").dropna()
        h_minus_v = (both["h"] - both["v"]).to_numpy(copy=True)
    if len(h_minus_v) >= 10:
        imbalance = _median(h_minus_v, overwrite_input=True)
        out["clear_sky_imbalance_db"] = _r(imbalance)
        out["imbalance_flag"] = bool(abs(imbalance) > HV_IMBALANCE_FLAG_DB)
        out["imbalance_flag_db"] = HV_IMBALANCE_FLAG_DB
    else:
        out["clear_sky_imbalance_db"] = None
    if "attenuation_db" not in fh or "attenuation_db" not in fv or "cause" not in fh:
        out["rain_ratio"] = {"skipped": "no attenuation / causes"}
        return out
    if same_grid:
        j = {"ah": fh["attenuation_db"], "av": fv["attenuation_db"], "ch": fh["cause"], "cv": fv["cause"],
             "sh": fh["status"], "sv": fv["status"]}
    else:
        j = pd.concat([fh["attenuation_db"].rename("ah"), fv["attenuation_db"].rename("av"),
                       fh["cause"].rename("ch"), fv["cause"].rename("cv"),
                       fh["status"].rename("sh"), fv["status"].rename("sv")], axis=1, join="inner")
    ah = j["ah"].to_numpy(dtype=float, na_value=np.nan)
    av = j["av"].to_numpy(dtype=float, na_value=np.nan)
    rain = ((in_set(j["ch"], [S.RAIN]) | in_set(j["cv"], [S.RAIN])) & in_set(j["sh"], [S.OK])
            & in_set(j["sv"], [S.OK]))
    use = rain & (ah >= min_att_db) & ~np.isnan(av)
    if np.count_nonzero(use) < min_samples:
        out["rain_ratio"] = {"skipped": f"fewer than {min_samples} rain samples with A_H >= {min_att_db:g} dB on both"}
        return out
    ah, av = ah[use], av[use]
    observed = float(np.sum(ah * av) / np.sum(ah * ah))            # least squares through the origin
    rate = np.asarray(p838.rain_rate_from_attenuation_mmh(ah, link.length_km, link.frequency_ghz, 0.0), float)
    av_pred = np.asarray(p838.specific_attenuation_db_per_km(rate, link.frequency_ghz, 90.0), float) * link.length_km
    predicted = float(np.sum(ah * av_pred) / np.sum(ah * ah))
    out["rain_ratio"] = {"samples": int(len(ah)), "observed_av_over_ah": _r(observed),
                         "p838_av_over_ah": _r(predicted),
                         "median_sample_ratio": _r(np.median(av / ah)),
                         "implied_rain_mmh_median": _r(np.median(rate)),
                         "consistent_with_rain": bool(abs(observed - predicted) <= HV_RATIO_TOLERANCE),
                         "tolerance": HV_RATIO_TOLERANCE,
                         "method": "A_V/A_H by least squares through the origin; P.838-3 ratio at the path-average "
                                   "rain rate implied by A_H (uniform rain), diag.models.p838"}
    return out


def cross_polar(result, *, antenna_xpd_db: float | None = None, clear_max_att_db: float = 2.0) -> dict:
    """Cross-polar results of a ``LinkResult`` (JSON-able; fills ``LinkResult.cross_polar``).

    ``antenna_xpd_db``: the antennas' own XPD when known (default: the typical value, see the module docstring).
    ``"skipped"`` lists the checks that could not run (merge into ``LinkResult.skipped``).
    """
    skipped: list[str] = []
    out: dict = {"xpd": {}, "skipped": skipped}
    link = result.link
    clear: dict[str, np.ndarray] = {}   # each channel's clear-sky mask, made once for the XPD and the H/V checks
    for name, series in result.series.items():
        source = _xpd_source(series.frame)
        if source is not None:
            clear[name] = _clear_mask(series.frame, clear_max_att_db)
            out["xpd"][name] = xpd_channel(series, link, antenna_xpd_db=antenna_xpd_db,
                                           clear_max_att_db=clear_max_att_db, skipped=skipped, clear=clear[name],
                                           source=source)
    if not out["xpd"]:
        skipped.append("clear-sky XPD and tilt: no XPD or cross-polar level logged")
    if "H" in result.series and "V" in result.series:
        out["hv"] = hv_block(result.series["H"], result.series["V"], link, clear_max_att_db=clear_max_att_db,
                             clear_h=clear.get("H"), clear_v=clear.get("V"))
        if "skipped" in out["hv"].get("rain_ratio", {}):
            skipped.append(f"rain differential attenuation (H/V): {out['hv']['rain_ratio']['skipped']}")
    elif not out["xpd"]:
        skipped.append("H/V imbalance and rain differential attenuation: needs channels named H and V")
    # hop-level summary: the worst (largest) tilt among channels
    tilts = [(v.get("tilt_deg"), k) for k, v in out["xpd"].items() if v.get("tilt_deg") is not None]
    if tilts:
        tilt, channel = max(tilts)
        out["tilt_deg"] = tilt
        out["tilt_channel"] = channel
        out["copolar_loss_db"] = out["xpd"][channel]["copolar_loss_db"]
    return out
