"""Rain specific attenuation, ITU-R P.838-3 (03/2005).

gamma_R = k R^alpha [dB/km] with the frequency-dependent coefficients k and alpha given by the regressions of
Recommendation ITU-R P.838-3, "Specific attenuation model for rain for use in prediction methods", Geneva, 2005,
equations (1) to (5) and Tables 1 to 4.  Valid for 1 to 1000 GHz.

Polarisation is described by the tilt angle ``tilt_deg`` of the electric field from horizontal (0 = horizontal,
90 = vertical, 45 = circular) and the path elevation ``elevation_deg`` (0 for terrestrial hops).
"""
from __future__ import annotations

import math
import warnings

import numpy as np

from diag.models._util import ArrayLike, as_float_array, like_input

__all__ = ["coefficients_horizontal", "coefficients_vertical", "rain_coefficients", "tilt_deg_for_polarization",
           "specific_attenuation_db_per_km", "rain_rate_from_attenuation_mmh", "hv_coefficients",
           "rain_rate_for_coefficients_mmh", "v_over_h_ratio"]

# P.838-3 Table 1 (kH), Table 2 (kV): a_j, b_j, c_j for j = 1..4, then m_k, c_k
_KH = ((-5.33980, -0.35351, -0.23789, -0.94158), (-0.10008, 1.26970, 0.86036, 0.64552),
       (1.13098, 0.45400, 0.15354, 0.16817), -0.18961, 0.71147)
_KV = ((-3.80595, -3.44965, -0.39902, 0.50167), (0.56934, -0.22911, 0.73042, 1.07319),
       (0.81061, 0.51059, 0.11899, 0.27195), -0.16398, 0.63297)
# P.838-3 Table 3 (alphaH), Table 4 (alphaV): a_j, b_j, c_j for j = 1..5, then m_alpha, c_alpha
_AH = ((-0.14318, 0.29591, 0.32177, -5.37610, 16.1721), (1.82442, 0.77564, 0.63773, -0.96230, -3.29980),
       (-0.55187, 0.19822, 0.13164, 1.47828, 3.43990), 0.67849, -1.95537)
_AV = ((-0.07771, 0.56727, -0.20238, -48.2991, 48.5833), (2.33840, 0.95545, 1.14520, 0.791669, 0.791459),
       (-0.76284, 0.54039, 0.26809, 0.116226, 0.116479), -0.053739, 0.83433)


def _regression(log_f: np.ndarray, table) -> np.ndarray:
    a, b, c, m, const = table
    total = m * log_f + const
    for a_j, b_j, c_j in zip(a, b, c):
        total = total + a_j * np.exp(-(((log_f - b_j) / c_j) ** 2))
    return total


def _frequency(frequency_ghz: ArrayLike) -> np.ndarray:
    f = as_float_array(frequency_ghz)
    if np.any(f <= 0):
        raise ValueError("frequency_ghz must be positive")
    if np.any((f < 1) | (f > 1000)):
        warnings.warn("ITU-R P.838-3 is valid for 1 to 1000 GHz; extrapolating", RuntimeWarning, stacklevel=3)
    return f


def coefficients_horizontal(frequency_ghz: ArrayLike) -> tuple:
    """k_H and alpha_H of ITU-R P.838-3 for horizontal polarisation.

    Parameters
    ----------
    frequency_ghz : float or array
        Frequency [GHz], 1 to 1000.

    Returns
    -------
    (k, alpha) : k [dB/km/(mm/h)^alpha], alpha [-]

    References
    ----------
    ITU-R P.838-3 (03/2005), eq. (2) with Table 1 and eq. (3) with Table 3.
    """
    log_f = np.log10(_frequency(frequency_ghz))
    k = 10.0 ** _regression(log_f, _KH)  # eq. (2), Table 1
    alpha = _regression(log_f, _AH)  # eq. (3), Table 3
    return like_input(k, frequency_ghz), like_input(alpha, frequency_ghz)


def coefficients_vertical(frequency_ghz: ArrayLike) -> tuple:
    """k_V and alpha_V of ITU-R P.838-3 for vertical polarisation.

    References
    ----------
    ITU-R P.838-3 (03/2005), eq. (2) with Table 2 and eq. (3) with Table 4.
    """
    log_f = np.log10(_frequency(frequency_ghz))
    k = 10.0 ** _regression(log_f, _KV)  # eq. (2), Table 2
    alpha = _regression(log_f, _AV)  # eq. (3), Table 4
    return like_input(k, frequency_ghz), like_input(alpha, frequency_ghz)


def rain_coefficients(frequency_ghz: ArrayLike, tilt_deg: ArrayLike = 0.0, elevation_deg: ArrayLike = 0.0) -> tuple:
    """k and alpha of ITU-R P.838-3 for any polarisation tilt and path elevation.

    Parameters
    ----------
    frequency_ghz : float or array
        Frequency [GHz].
    tilt_deg : float or array
        Polarisation tilt angle relative to horizontal [deg]: 0 horizontal, 90 vertical, 45 circular.
    elevation_deg : float or array
        Path elevation angle [deg]; 0 for a terrestrial hop.

    Returns
    -------
    (k, alpha)

    References
    ----------
    ITU-R P.838-3 (03/2005), eqs. (4) and (5).
    """
    f = _frequency(frequency_ghz)
    log_f = np.log10(f)
    kh, ah = 10.0 ** _regression(log_f, _KH), _regression(log_f, _AH)
    kv, av = 10.0 ** _regression(log_f, _KV), _regression(log_f, _AV)
    theta = np.radians(as_float_array(elevation_deg))
    tau = np.radians(as_float_array(tilt_deg))
    weight = np.cos(theta) ** 2 * np.cos(2.0 * tau)
    k = (kh + kv + (kh - kv) * weight) / 2.0  # eq. (4)
    alpha = (kh * ah + kv * av + (kh * ah - kv * av) * weight) / (2.0 * k)  # eq. (5)
    return (like_input(k, frequency_ghz, tilt_deg, elevation_deg),
            like_input(alpha, frequency_ghz, tilt_deg, elevation_deg))


def tilt_deg_for_polarization(polarization: str) -> float:
    """Tilt angle for a polarisation name: "H" -> 0, "V" -> 90, "C"/"circular" -> 45 (P.838-3 §1 convention)."""
    name = str(polarization).strip().lower()
    table = {"h": 0.0, "horizontal": 0.0, "v": 90.0, "vertical": 90.0, "c": 45.0, "circular": 45.0}
    if name not in table:
        raise ValueError(f"polarization must be H, V or circular, not {polarization!r}")
    return table[name]


def specific_attenuation_db_per_km(rain_rate_mmh: ArrayLike, frequency_ghz: ArrayLike, tilt_deg: ArrayLike = 0.0,
                                   elevation_deg: ArrayLike = 0.0) -> ArrayLike:
    """Rain specific attenuation gamma_R = k R^alpha [dB/km].

    Parameters
    ----------
    rain_rate_mmh : float or array
        Rain rate R [mm/h], >= 0.
    frequency_ghz, tilt_deg, elevation_deg
        As in :func:`rain_coefficients`.

    References
    ----------
    ITU-R P.838-3 (03/2005), eq. (1).
    """
    rate = as_float_array(rain_rate_mmh)
    if np.any(rate < 0):
        raise ValueError("rain_rate_mmh must be >= 0")
    k, alpha = rain_coefficients(as_float_array(frequency_ghz), as_float_array(tilt_deg),
                                 as_float_array(elevation_deg))
    gamma = k * rate ** alpha  # eq. (1)
    return like_input(gamma, rain_rate_mmh, frequency_ghz, tilt_deg, elevation_deg)


def rain_rate_from_attenuation_mmh(attenuation_db: ArrayLike, length_km: ArrayLike, frequency_ghz: ArrayLike,
                                   tilt_deg: ArrayLike = 0.0, elevation_deg: ArrayLike = 0.0) -> ArrayLike:
    """Path-average rain rate implied by an observed rain attenuation: R = (A / (L k))^(1/alpha) [mm/h].

    The inverse of ITU-R P.838-3 eq. (1) under the assumption of uniform rain along the whole path
    (A = gamma_R L).  Negative attenuations (level above the clear-sky reference) give 0 mm/h.

    Parameters
    ----------
    attenuation_db : float or array
        Rain-induced path attenuation [dB] (wet-antenna loss removed beforehand if known).
    length_km : float or array
        Path length L [km], > 0.

    References
    ----------
    ITU-R P.838-3 (03/2005), eq. (1), solved for R.
    """
    att = np.clip(as_float_array(attenuation_db), 0.0, None)
    length = as_float_array(length_km)
    if np.any(length <= 0):
        raise ValueError("length_km must be positive")
    k, alpha = rain_coefficients(as_float_array(frequency_ghz), as_float_array(tilt_deg),
                                 as_float_array(elevation_deg))
    rate = (att / length / k) ** (1.0 / alpha)  # eq. (1): gamma = A / L = k R^alpha
    return like_input(rate, attenuation_db, length_km, frequency_ghz, tilt_deg, elevation_deg)


def hv_coefficients(frequency_ghz: float) -> dict[str, tuple[float, float]]:
    """``{"H": (k_H, alpha_H), "V": (k_V, alpha_V)}`` of one frequency as Python floats (ITU-R P.838-3 eqs. (2),
    (3), Tables 1-4), for the per-event inversions below."""
    kh, ah = coefficients_horizontal(frequency_ghz)
    kv, av = coefficients_vertical(frequency_ghz)
    return {"H": (float(kh), float(ah)), "V": (float(kv), float(av))}


def rain_rate_for_coefficients_mmh(attenuation_db: ArrayLike, length_km: float, k: float, alpha: float) -> ArrayLike:
    """Path-average rain rate for an attenuation under uniform rain, R = (A / (k L))^(1/alpha) [mm/h], with the
    coefficients already known (:func:`hv_coefficients`); 0 where A is not a positive finite number.

    One value is worked in Python floats (C ``pow``): numpy's vector ``power`` may differ from it in the last bit,
    and the per-event features keep their bits.

    References
    ----------
    ITU-R P.838-3 (03/2005), eq. (1), solved for R (A = gamma_R L).
    """
    if np.ndim(attenuation_db) == 0:
        att = float(attenuation_db)
        if not (math.isfinite(att) and att > 0):
            return 0.0
        return float((att / (k * length_km)) ** (1.0 / alpha))
    att = as_float_array(attenuation_db)
    rate = np.zeros(att.shape)
    ok = np.isfinite(att) & (att > 0)
    rate[ok] = (att[ok] / (k * length_km)) ** (1.0 / alpha)
    return like_input(rate, attenuation_db)


def v_over_h_ratio(rain_rate_mmh: ArrayLike, coefficients: dict[str, tuple[float, float]]) -> ArrayLike:
    """Expected ratio of the vertical to the horizontal rain attenuation of one path, A_V / A_H = gamma_V / gamma_H
    = k_V R^alpha_V / (k_H R^alpha_H), at a rain rate (NaN where R is not a positive finite number);
    ``coefficients`` from :func:`hv_coefficients`.  One value is worked in Python floats (see above).

    References
    ----------
    ITU-R P.838-3 (03/2005), eq. (1) for both polarisations.
    """
    (kh, ah), (kv, av) = coefficients["H"], coefficients["V"]
    if np.ndim(rain_rate_mmh) == 0:
        rate = float(rain_rate_mmh)
        if not (math.isfinite(rate) and rate > 0):
            return math.nan
        return float(kv * rate ** av / (kh * rate ** ah))
    rate = as_float_array(rain_rate_mmh)
    out = np.full(rate.shape, np.nan)
    ok = np.isfinite(rate) & (rate > 0)
    out[ok] = kv * rate[ok] ** av / (kh * rate[ok] ** ah)
    return like_input(out, rain_rate_mmh)
