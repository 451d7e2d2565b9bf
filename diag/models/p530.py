"""ITU-R P.530 terrestrial line-of-sight prediction: rain attenuation, clear-air multipath, cross-polarisation.

Edition.  The rain method (§2.4.1) is the same in ITU-R P.530-17 (12/2017) and P.530-18 (09/2021).  The
multipath method implemented is the P.530-17 one (§2.3.1: geoclimatic factor K from dN1 and s_a, or given by the
user; p_w = K d^3.4 (1 + |eps_p|)^-1.03 f^0.8 10^(-0.00076 h_L - A/10)); P.530-18 replaced it by a form that needs
its digital maps (LogK, dN75), which this tool does not ship.  Equation numbers in comments: (4), (5), (7),
(10), (12), (13), (18), (32)-(35), (78), (101)-(106) and (112)-(115) are those printed beside the same arithmetic
in ITU-Rpy 0.4.0 for P.530-17; (14)-(17), (29) and (30) are inferred from the order of the text (from memory).
None was checked against the PDF, and P.530-18 renumbers some of them.

Reading of the C0 term (eq. (35)).  The printed text "C0 = 0.12 + 0.4 [log10(f/10)^0.8]" is read two ways.  This
module reads it as 0.4 log10((f/10)^0.8) (= 0.32 log10(f/10)), as other published P.530-18 implementations do;
ITU-Rpy reads 0.4 (log10(f/10))^0.8.  The two agree at p = 0.01 % and differ by up to a few per cent at 0.001 and
1 %.  ``c0_reading="power_of_log"`` selects the other reading (used in tests to reproduce ITU-Rpy exactly).

References
----------
ITU-R P.530-17, "Propagation data and prediction methods required for the design of terrestrial line-of-sight
systems", Geneva, 2017, §§2.3, 2.4, 4.  ITU-R P.530-18, Geneva, 2021.
"""
from __future__ import annotations

import warnings
from typing import Literal

import numpy as np

from diag.models import p838
from diag.models._util import ArrayLike, as_float_array, like_input

__all__ = ["rain_distance_factor", "rain_attenuation_001_db", "rain_scaling_coefficients", "rain_attenuation_db",
           "rain_time_percent", "rain_fade_count_10s", "rain_frequency_scaling_db", "rain_polarization_scaling_db",
           "geoclimatic_factor_k", "path_inclination_mrad", "multipath_deep_fade_percent",
           "multipath_occurrence_percent", "multipath_deep_fade_percent_p530_18", "multipath_fade_percent",
           "geoclimatic_conversion_db",
           "multipath_fade_percent_year", "rayleigh_tail_percent", "xpd_rain_db", "copolar_attenuation_for_xpd_db",
           "xpd_rain_voltage_factor_db", "xpd_outage_rain_probability", "xpd_outage_clear_air_probability"]

C0Reading = Literal["log_of_power", "power_of_log"]


# ----------------------------------------------------------------------------------------------------- rain §2.4.1
def rain_distance_factor(length_km: ArrayLike, frequency_ghz: ArrayLike, r001_mmh: ArrayLike,
                         alpha: ArrayLike) -> ArrayLike:
    """Distance factor r of P.530 §2.4.1 step 3: d_eff = r d.

    r = 1 / (0.477 d^0.633 R0.01^(0.073 alpha) f^0.123 - 10.579 (1 - exp(-0.024 d)))   (32)

    capped at r = 2.5 (the Recommendation's maximum recommended value, used when the denominator is below 0.4).
    The cap is from memory: the Recommendation's text was not available to check.  Checked in source code:
    ITU-Rpy 0.4.0 (P.530-17) applies min(r, 2.5); the P.530-18 implementations crc-covlib (helper/itur_p530.py)
    and OFCOM's MATLAB P530.m (github eeveetza/p530) apply no cap.

    Parameters
    ----------
    length_km : path length d [km] (the method is stated for d <= 60 km)
    frequency_ghz : f [GHz]
    r001_mmh : rain rate exceeded 0.01 % of an average year, 1-min integration [mm/h]
    alpha : P.838-3 exponent for the polarisation
    """
    d = as_float_array(length_km)
    f = as_float_array(frequency_ghz)
    rate = as_float_array(r001_mmh)
    a = as_float_array(alpha)
    denominator = 0.477 * d ** 0.633 * rate ** (0.073 * a) * f ** 0.123 - 10.579 * (1.0 - np.exp(-0.024 * d))  # (32)
    with np.errstate(divide="ignore"):
        r = np.where(denominator > 0.4, 1.0 / np.where(denominator > 0.4, denominator, 1.0), 2.5)
    return like_input(r, length_km, frequency_ghz, r001_mmh, alpha)


def rain_attenuation_001_db(length_km: ArrayLike, frequency_ghz: ArrayLike, r001_mmh: ArrayLike,
                            tilt_deg: ArrayLike = 0.0, elevation_deg: ArrayLike = 0.0) -> ArrayLike:
    """Path attenuation exceeded for 0.01 % of an average year, A0.01 = gamma_R d_eff [dB] (P.530 §2.4.1, eq. (33)).

    gamma_R from ITU-R P.838-3 at R0.01; d_eff = r d with r from :func:`rain_distance_factor`.
    """
    d = as_float_array(length_km)
    if np.any(d <= 0):
        raise ValueError("length_km must be positive")
    rate = as_float_array(r001_mmh)
    if np.any(rate < 0):
        raise ValueError("r001_mmh must be >= 0")
    if np.any(d > 60):
        warnings.warn("P.530 §2.4.1 is stated for paths up to 60 km; extrapolating", RuntimeWarning, stacklevel=2)
    f = as_float_array(frequency_ghz)
    k, alpha = p838.rain_coefficients(f, as_float_array(tilt_deg), as_float_array(elevation_deg))
    gamma = k * rate ** alpha  # P.838-3 eq. (1), step 2
    r = rain_distance_factor(d, f, np.where(rate > 0, rate, 1.0), alpha)  # step 3 (r irrelevant when R = 0)
    a001 = gamma * r * d  # (33)
    return like_input(a001, length_km, frequency_ghz, r001_mmh, tilt_deg, elevation_deg)


def rain_scaling_coefficients(frequency_ghz: ArrayLike, c0_reading: C0Reading = "log_of_power") -> tuple:
    """C0, C1, C2, C3 of P.530 §2.4.1 step 5, eq. (35).

    C0 = 0.12 for f < 10 GHz, else 0.12 + 0.4 log10((f/10)^0.8) (default reading; see the module notes) or
    0.12 + 0.4 (log10(f/10))^0.8 (``c0_reading="power_of_log"``).
    C1 = 0.07^C0 0.12^(1-C0); C2 = 0.855 C0 + 0.546 (1-C0); C3 = 0.139 C0 + 0.043 (1-C0).
    """
    f = as_float_array(frequency_ghz)
    ratio = np.log10(np.maximum(f, 10.0) / 10.0)
    if c0_reading == "log_of_power":
        c0 = np.where(f >= 10.0, 0.12 + 0.4 * 0.8 * ratio, 0.12)  # (35a): 0.4 log10((f/10)^0.8)
    elif c0_reading == "power_of_log":
        c0 = np.where(f >= 10.0, 0.12 + 0.4 * ratio ** 0.8, 0.12)  # (35a), ITU-Rpy's reading
    else:
        raise ValueError(f"c0_reading must be 'log_of_power' or 'power_of_log', not {c0_reading!r}")
    c1 = 0.07 ** c0 * 0.12 ** (1.0 - c0)  # (35b)
    c2 = 0.855 * c0 + 0.546 * (1.0 - c0)  # (35c)
    c3 = 0.139 * c0 + 0.043 * (1.0 - c0)  # (35d)
    return tuple(like_input(c, frequency_ghz) for c in (c0, c1, c2, c3))


def _check_percent(p: np.ndarray, lo: float = 0.001, hi: float = 1.0) -> None:
    if np.any(p <= 0):
        raise ValueError("time_percent must be positive")
    if np.any((p < lo) | (p > hi)):
        warnings.warn(f"P.530 §2.4.1 scales A0.01 to time percentages {lo:g} to {hi:g} %; extrapolating",
                      RuntimeWarning, stacklevel=3)


def rain_attenuation_db(time_percent: ArrayLike, a001_db: ArrayLike, frequency_ghz: ArrayLike,
                        c0_reading: C0Reading = "log_of_power") -> ArrayLike:
    """Rain attenuation exceeded for ``time_percent`` of an average year [dB] (P.530 §2.4.1 step 5, eq. (34)).

    A_p = A0.01 C1 p^-(C2 + C3 log10 p), for 0.001 <= p <= 1 % (warns outside).  Note A_p at p = 0.01 differs
    slightly from A0.01 (C1 0.01^-(C2 - 2 C3) is not exactly 1).
    """
    p = as_float_array(time_percent)
    _check_percent(p)
    _, c1, c2, c3 = rain_scaling_coefficients(as_float_array(frequency_ghz), c0_reading)
    ap = as_float_array(a001_db) * c1 * p ** (-(c2 + c3 * np.log10(p)))  # (34)
    return like_input(ap, time_percent, a001_db, frequency_ghz)


def rain_time_percent(attenuation_db: ArrayLike, a001_db: ArrayLike, frequency_ghz: ArrayLike,
                      c0_reading: C0Reading = "log_of_power") -> ArrayLike:
    """Percentage of an average year a rain attenuation is exceeded: eq. (34) solved for p [%].

    With x = log10 p and L = log10(A / (A0.01 C1)): C3 x^2 + C2 x + L = 0, and the root on the decreasing branch
    is x = (-C2 + sqrt(C2^2 - 4 C3 L)) / (2 C3).  Results outside 0.001..1 % are extrapolations of the power law
    (a warning says so); an attenuation beyond the curve's maximum gives the percentage at the maximum.
    A = 0 or A0.01 = 0 gives NaN (no prediction).
    """
    a = as_float_array(attenuation_db)
    a001 = as_float_array(a001_db)
    _, c1, c2, c3 = (as_float_array(c) for c in rain_scaling_coefficients(as_float_array(frequency_ghz), c0_reading))
    with np.errstate(divide="ignore", invalid="ignore"):
        big_l = np.log10(a / (a001 * c1))
        disc = np.maximum(c2 * c2 - 4.0 * c3 * big_l, 0.0)
        x = (-c2 + np.sqrt(disc)) / (2.0 * c3)  # (34) inverted
        p = np.where((a > 0) & (a001 > 0), 10.0 ** x, np.nan)
    finite = p[np.isfinite(p)]
    if finite.size and np.any((finite < 0.001 * (1 - 1e-9)) | (finite > 1.0 + 1e-9)):
        warnings.warn("rain attenuation outside the 0.001-1 % range of P.530 §2.4.1; the percentage is an "
                      "extrapolation", RuntimeWarning, stacklevel=2)
    return like_input(p, attenuation_db, a001_db, frequency_ghz)


def rain_fade_count_10s(time_percent: ArrayLike) -> ArrayLike:
    """Number of rain fade events per year exceeding the attenuation that is exceeded ``time_percent`` of the
    time and lasting 10 s or longer: N10s = 1 + 1313 p^0.945 (P.530-17 §2.4, eq. (78) as numbered in ITU-Rpy;
    the subsection is from memory; p in %)."""
    p = as_float_array(time_percent)
    return like_input(1.0 + 1313.0 * p ** 0.945, time_percent)  # (78)


def rain_frequency_scaling_db(attenuation_db: ArrayLike, from_frequency_ghz: ArrayLike,
                              to_frequency_ghz: ArrayLike) -> ArrayLike:
    """Scale an equiprobable rain attenuation from one frequency to another (P.530 §2.4.3, 7 to 50 GHz).

    A2 = A1 (Phi2/Phi1)^(1 - H),  Phi(f) = f^2 / (1 + 1e-4 f^2),  H = 1.12e-3 (Phi2/Phi1)^0.5 (Phi1 A1)^0.55.
    """
    a1 = as_float_array(attenuation_db)
    f1, f2 = as_float_array(from_frequency_ghz), as_float_array(to_frequency_ghz)
    if np.any((np.minimum(f1, f2) < 7) | (np.maximum(f1, f2) > 50)):
        warnings.warn("P.530 §2.4.3 frequency scaling is stated for 7 to 50 GHz", RuntimeWarning, stacklevel=2)
    phi1 = f1 ** 2 / (1.0 + 1e-4 * f1 ** 2)
    phi2 = f2 ** 2 / (1.0 + 1e-4 * f2 ** 2)
    h = 1.12e-3 * (phi2 / phi1) ** 0.5 * (phi1 * np.maximum(a1, 0.0)) ** 0.55
    a2 = a1 * (phi2 / phi1) ** (1.0 - h)
    return like_input(a2, attenuation_db, from_frequency_ghz, to_frequency_ghz)


def rain_polarization_scaling_db(attenuation_db: ArrayLike, to_polarization: str) -> ArrayLike:
    """Convert an equiprobable rain attenuation between H and V (P.530 §2.4.4; formula from memory):
    A_V = 300 A_H / (335 + A_H) and A_H = 335 A_V / (300 - A_V)."""
    a = as_float_array(attenuation_db)
    target = str(to_polarization).upper()
    if target == "V":
        out = 300.0 * a / (335.0 + a)
    elif target == "H":
        out = np.where(a < 300.0, 335.0 * a / (300.0 - np.minimum(a, 299.999)), np.inf)
    else:
        raise ValueError("to_polarization must be 'H' or 'V'")
    return like_input(out, attenuation_db)


# ------------------------------------------------------------------------------------------------- multipath §2.3
def geoclimatic_factor_k(dn1: ArrayLike, sa_m: ArrayLike) -> ArrayLike:
    """Geoclimatic factor K from the point refractivity gradient dN1 (N-units/km, lowest 65 m, not exceeded 1 % of
    an average year) and the terrain roughness s_a [m]: K = 10^(-4.4 - 0.0027 dN1) (10 + s_a)^-0.46
    (P.530-17 §2.3.1 step 1, eq. (4))."""
    k = 10.0 ** (-4.4 - 0.0027 * as_float_array(dn1)) * (10.0 + as_float_array(sa_m)) ** -0.46  # (4)
    return like_input(k, dn1, sa_m)


def path_inclination_mrad(height_tx_m: ArrayLike, height_rx_m: ArrayLike, length_km: ArrayLike) -> ArrayLike:
    """Magnitude of the path inclination |eps_p| = |h_r - h_e| / d [mrad] (P.530-17 §2.3.1 step 2, eq. (5));
    antenna heights in metres above sea level, d in km."""
    eps = np.abs(as_float_array(height_rx_m) - as_float_array(height_tx_m)) / as_float_array(length_km)  # (5)
    return like_input(eps, height_tx_m, height_rx_m, length_km)


def multipath_deep_fade_percent(fade_depth_db: ArrayLike, length_km: ArrayLike, frequency_ghz: ArrayLike,
                                geoclimatic_k: ArrayLike, path_inclination_mrad: ArrayLike = 0.0,
                                lower_antenna_altitude_m: ArrayLike = 0.0) -> ArrayLike:
    """Percentage of the average worst month a deep fade A is exceeded (P.530-17 §2.3.1 step 3, eq. (7)) [%].

    p_w = K d^3.4 (1 + |eps_p|)^-1.03 f^0.8 10^(-0.00076 h_L - A/10)

    Valid for deep fades (A at or beyond the transition depth A_t of §2.3.2); use :func:`multipath_fade_percent`
    for all depths.  Multipath only matters on paths longer than about 5 km.

    Parameters
    ----------
    fade_depth_db : A [dB]
    length_km : d [km]
    frequency_ghz : f [GHz] (stated range 15/d to 45 GHz)
    geoclimatic_k : K (e.g. from :func:`geoclimatic_factor_k`)
    path_inclination_mrad : |eps_p| [mrad]
    lower_antenna_altitude_m : h_L, altitude of the lower antenna above sea level [m]
    """
    a = as_float_array(fade_depth_db)
    d = as_float_array(length_km)
    f = as_float_array(frequency_ghz)
    eps = np.abs(as_float_array(path_inclination_mrad))
    h_l = as_float_array(lower_antenna_altitude_m)
    p_w = (as_float_array(geoclimatic_k) * d ** 3.4 * (1.0 + eps) ** -1.03 * f ** 0.8
           * 10.0 ** (-0.00076 * h_l - a / 10.0))  # (7)
    return like_input(p_w, fade_depth_db, length_km, frequency_ghz, geoclimatic_k, path_inclination_mrad,
                      lower_antenna_altitude_m)


def multipath_occurrence_percent(length_km: ArrayLike, frequency_ghz: ArrayLike, geoclimatic_k: ArrayLike,
                                 path_inclination_mrad: ArrayLike = 0.0,
                                 lower_antenna_altitude_m: ArrayLike = 0.0) -> ArrayLike:
    """Multipath occurrence factor p0 = p_w(A = 0) of the deep-fade law [%] (P.530-17 §2.3.2 step 1, eq. (10))."""
    return multipath_deep_fade_percent(0.0, length_km, frequency_ghz, geoclimatic_k, path_inclination_mrad,
                                       lower_antenna_altitude_m)


def multipath_deep_fade_percent_p530_18(fade_depth_db: ArrayLike, length_km: ArrayLike, frequency_ghz: ArrayLike,
                                        geoclimatic_k: ArrayLike, dn75: ArrayLike, height_tx_m: ArrayLike,
                                        height_rx_m: ArrayLike, mean_terrain_m: ArrayLike) -> ArrayLike:
    """Deep-fade percentage of the average worst month by the P.530-18 §2.3.1 method [%].

    h_c = (h_r + h_e)/2 - d^2/102 - h_t;  v_sr = min((dN75/50)^1.8 exp(-h_c/(2.5 sqrt d)), dN75 d^1.5 f^0.5/24730);
    p_w = K d^3.51 (f^2 + 13)^0.447 10^(-0.376 tanh((h_c - 147)/125) - 0.334 eps_p^0.39 - 0.00027 h_L
    + 17.85 v_sr - A/10), with eps_p = |h_r - h_e|/d [mrad] and h_L = min(h_e, h_r).

    K (here the P.530-18 worst-month factor, from its LogK map) and dN75 (its map of the 0.1 % worst-month
    refractivity increase over the lowest 75 m) must be supplied by the caller: the maps are not shipped.
    Heights in metres above sea level (h_t: mean terrain height along the path).  Use the result's A = 0 value as
    p0 in :func:`multipath_fade_percent` for shallow fades.
    """
    a = as_float_array(fade_depth_db)
    d = as_float_array(length_km)
    f = as_float_array(frequency_ghz)
    he, hr = as_float_array(height_tx_m), as_float_array(height_rx_m)
    dn75_arr = as_float_array(dn75)
    eps = np.abs(hr - he) / d
    h_c = (hr + he) / 2.0 - d * d / 102.0 - as_float_array(mean_terrain_m)
    v_sr = np.minimum((dn75_arr / 50.0) ** 1.8 * np.exp(-h_c / (2.5 * np.sqrt(d))),
                      dn75_arr * d ** 1.5 * f ** 0.5 / 24730.0)
    exponent = (-0.376 * np.tanh((h_c - 147.0) / 125.0) - 0.334 * eps ** 0.39 - 0.00027 * np.minimum(he, hr)
                + 17.85 * v_sr - a / 10.0)
    p_w = as_float_array(geoclimatic_k) * d ** 3.51 * (f * f + 13.0) ** 0.447 * 10.0 ** exponent
    return like_input(p_w, fade_depth_db, length_km, frequency_ghz, geoclimatic_k, dn75, height_tx_m, height_rx_m,
                      mean_terrain_m)


def _shallow(a: np.ndarray, p_t: np.ndarray, a_t: np.ndarray) -> np.ndarray:
    """Interpolation of §2.3.2 step 3 (eqs. (14)-(18)) from the transition point (A_t, p_t)."""
    q_a_prime = -20.0 * np.log10(-np.log((100.0 - p_t) / 100.0)) / a_t  # (15)
    q_t = ((q_a_prime - 2.0) / ((1.0 + 0.3 * 10.0 ** (-a_t / 20.0)) * 10.0 ** (-0.016 * a_t))
           - 4.3 * (10.0 ** (-a_t / 20.0) + a_t / 800.0))  # (16)
    q_a = 2.0 + (1.0 + 0.3 * 10.0 ** (-a / 20.0)) * 10.0 ** (-0.016 * a) * (
        q_t + 4.3 * (10.0 ** (-a / 20.0) + a / 800.0))  # (17)
    return 100.0 * (1.0 - np.exp(-(10.0 ** (-q_a * a / 20.0))))  # (18)


def multipath_fade_percent(fade_depth_db: ArrayLike, p0_percent: ArrayLike) -> ArrayLike:
    """Percentage of the average worst month a fade depth A is exceeded, for all depths (P.530-17 §2.3.2) [%].

    A_t = 25 + 1.2 log10 p0 (12).  For A >= A_t: p_w = p0 10^(-A/10) (13).  For A < A_t: p_t = p0 10^(-A_t/10) (14),
    q'_a = -20 log10(-ln((100 - p_t)/100)) / A_t (15), q_t = (q'_a - 2) / [(1 + 0.3 10^(-A_t/20)) 10^(-0.016 A_t)]
    - 4.3 (10^(-A_t/20) + A_t/800) (16), q_a = 2 + (1 + 0.3 10^(-A/20)) 10^(-0.016 A) (q_t + 4.3 (10^(-A/20) +
    A/800)) (17), p_w = 100 (1 - exp(-10^(-q_a A/20))) (18).

    ITU-Rpy 0.4.0 places the brackets of (16) and (17) differently and returns much larger percentages for shallow
    fades; this follows the Recommendation's text (see tests/models/test_models_p530.py).

    Parameters
    ----------
    fade_depth_db : A [dB], >= 0
    p0_percent : multipath occurrence factor p0 [%] (:func:`multipath_occurrence_percent`)
    """
    a = as_float_array(fade_depth_db)
    p0 = as_float_array(p0_percent)
    a, p0 = np.broadcast_arrays(a, p0)
    a_t = 25.0 + 1.2 * np.log10(p0)  # (12)
    deep = p0 * 10.0 ** (-a / 10.0)  # (13)
    p_t = p0 * 10.0 ** (-a_t / 10.0)  # (14)
    with np.errstate(divide="ignore", invalid="ignore"):
        shallow = _shallow(a, p_t, a_t)
    p_w = np.where(a >= a_t, deep, shallow)
    return like_input(p_w, fade_depth_db, p0_percent)


def geoclimatic_conversion_db(latitude_deg: ArrayLike, length_km: ArrayLike,
                              path_inclination_mrad: ArrayLike = 0.0) -> ArrayLike:
    """Logarithmic geoclimatic conversion factor Delta G from the average worst month to the average year [dB]
    (P.530-17 §2.3.4 step 2, eq. (29)).

    Delta G = 10.5 - 5.6 log10(1.1 +- |cos 2 xi|^0.7) - 2.7 log10 d + 1.7 log10(1 + |eps_p|), limited to
    Delta G <= 10.8 dB; "+" for |xi| <= 45 deg, "-" above.  The upper limit is from memory (the Recommendation's
    text was not available to check; 10.8 dB = 10 log10 12, the P.841 cap Q <= 12 on the worst-month ratio).
    Checked in source code: crc-covlib (helper/itur_p530.py) and OFCOM's MATLAB P530.m (github eeveetza/p530),
    both P.530-18, apply max(10.8, Delta G) instead, i.e. a floor; ITU-Rpy 0.4.0 does not implement §2.3.4.
    """
    xi = np.radians(np.abs(as_float_array(latitude_deg)))
    sign = np.where(np.degrees(xi) <= 45.0, 1.0, -1.0)
    d = as_float_array(length_km)
    eps = np.abs(as_float_array(path_inclination_mrad))
    delta_g = (10.5 - 5.6 * np.log10(1.1 + sign * np.abs(np.cos(2.0 * xi)) ** 0.7) - 2.7 * np.log10(d)
               + 1.7 * np.log10(1.0 + eps))  # (29)
    return like_input(np.minimum(delta_g, 10.8), latitude_deg, length_km, path_inclination_mrad)


def multipath_fade_percent_year(fade_depth_db: ArrayLike, p0_percent: ArrayLike, delta_g_db: ArrayLike) -> ArrayLike:
    """Percentage of an average year a fade depth A is exceeded, all depths (P.530-17 §2.3.4 steps 3-4) [%].

    Deep fades: p = 10^(-Delta G/10) p_w (30).  Shallow fades (A < A_t): the §2.3.2 interpolation run from the
    average-year transition point p_t 10^(-Delta G/10), as the Recommendation's step 4 describes.
    """
    a = as_float_array(fade_depth_db)
    p0 = as_float_array(p0_percent)
    factor = 10.0 ** (-as_float_array(delta_g_db) / 10.0)
    a, p0, factor = np.broadcast_arrays(a, p0, factor)
    a_t = 25.0 + 1.2 * np.log10(p0)  # (12)
    deep = factor * p0 * 10.0 ** (-a / 10.0)  # (30) with (13)
    p_t = factor * p0 * 10.0 ** (-a_t / 10.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        shallow = _shallow(a, p_t, a_t)
    return like_input(np.where(a >= a_t, deep, shallow), fade_depth_db, p0_percent, delta_g_db)


def rayleigh_tail_percent(fade_depth_db: ArrayLike, reference_percent: ArrayLike,
                          reference_fade_db: ArrayLike = 0.0) -> ArrayLike:
    """Extrapolate an exceedance percentage along a Rayleigh tail: 10 dB of fade depth per decade of time.

    p(A) = p_ref 10^(-(A - A_ref)/10).  This is the slope of the deep-fade law (P.530-17 eq. (7), the 10^(-A/10)
    factor) and of the Rayleigh distribution's lower tail (P(x < 10^(-F/10)) ~ 10^(-F/10)).
    """
    a = as_float_array(fade_depth_db)
    p = as_float_array(reference_percent) * 10.0 ** (-(a - as_float_array(reference_fade_db)) / 10.0)
    return like_input(p, fade_depth_db, reference_percent, reference_fade_db)


# ------------------------------------------------------------------------------------------------------- XPD §4
def xpd_rain_voltage_factor_db(frequency_ghz: ArrayLike) -> ArrayLike:
    """V(f) of the rain XPD relation (P.530-17 §4.2, step 2): 12.8 f^0.19 for 8 <= f <= 20 GHz, 22.6 for
    20 < f <= 35 GHz; outside 8-35 GHz the nearer branch is used with a warning.  The two formulas and the switch
    at 20 GHz match ITU-Rpy 0.4.0 and OFCOM's MATLAB P530.m (github eeveetza/p530), checked in their source; the
    8 and 35 GHz outer limits are from memory (neither code states them; the Rec text was not available)."""
    f = as_float_array(frequency_ghz)
    if np.any((f < 8) | (f > 35)):
        warnings.warn("the P.530 rain XPD relation is stated for 8 to 35 GHz; extrapolating", RuntimeWarning,
                      stacklevel=3)
    return like_input(np.where(f <= 20.0, 12.8 * f ** 0.19, 22.6), frequency_ghz)


def xpd_rain_db(copolar_attenuation_db: ArrayLike, frequency_ghz: ArrayLike, u0_db: ArrayLike = 15.0) -> ArrayLike:
    """Equiprobable rain XPD for a co-polar attenuation: XPD = U - V(f) log10(CPA) [dB] (P.530-17 §4.2).

    U = U0 + 30 log10 f with U0 about 15 dB (the default; a lower bound of 9 dB is quoted for long-term
    statistics, from memory).  CPA in dB; CPA <= 1 dB gives U (a choice made here: the log law would otherwise
    predict XPD above U for very light rain).
    """
    cpa = np.maximum(as_float_array(copolar_attenuation_db), 1.0)
    f = as_float_array(frequency_ghz)
    u = as_float_array(u0_db) + 30.0 * np.log10(f)
    xpd = u - xpd_rain_voltage_factor_db(f) * np.log10(cpa)
    return like_input(xpd, copolar_attenuation_db, frequency_ghz, u0_db)


def copolar_attenuation_for_xpd_db(xpd_db: ArrayLike, frequency_ghz: ArrayLike, u0_db: ArrayLike = 15.0) -> ArrayLike:
    """Inverse of :func:`xpd_rain_db`: CPA = 10^((U - XPD)/V) [dB] (P.530-17 §4.2, the form of eq. (112))."""
    f = as_float_array(frequency_ghz)
    u = as_float_array(u0_db) + 30.0 * np.log10(f)
    cpa = 10.0 ** ((u - as_float_array(xpd_db)) / xpd_rain_voltage_factor_db(f))
    return like_input(cpa, xpd_db, frequency_ghz, u0_db)


XPD_OUTAGE_N_RANGE = (-3.0, 0.0)   # P.530 §4.2, step 3: valid range of the exponent n (from memory, see below)


def xpd_outage_rain_probability(a001_db: ArrayLike, frequency_ghz: ArrayLike, c0_i_db: ArrayLike,
                                u0_db: ArrayLike = 15.0, xpif_db: ArrayLike = 0.0) -> ArrayLike:
    """Probability (fraction of time, not %) of outage from rain-induced XPD degradation (P.530-17 §4.2).

    A_p = 10^((U - C0/I + XPIF)/V) (112); m = min(23.26 log10(A_p / (0.12 A0.01)), 40) (113);
    n = (-12.7 + sqrt(161.23 - 4 m)) / 2 (114); P_XPR = 10^(n - 2) (115).
    (ITU-Rpy 0.4.0's public wrapper for this drops an argument and returns nonsense; see the tests.)

    Range of n: the step states that valid values of n lie between -3 and 0, and notes that values below -3 can
    occur, especially with an XPIC, meaning an outage below 1e-5 (from memory: the Recommendation's text was not
    available to check the wording).  Enforced so: n > 0 (m < 0, i.e. A_p below 0.12 A0.01, outside the method)
    raises ValueError; n < -3 is returned with a RuntimeWarning.
    """
    f = as_float_array(frequency_ghz)
    u = as_float_array(u0_db) + 30.0 * np.log10(f)
    v = xpd_rain_voltage_factor_db(f)
    a_p = 10.0 ** ((u - as_float_array(c0_i_db) + as_float_array(xpif_db)) / v)  # (112)
    m = np.minimum(23.26 * np.log10(a_p / (0.12 * as_float_array(a001_db))), 40.0)  # (113)
    n = (-12.7 + np.sqrt(161.23 - 4.0 * m)) / 2.0  # (114)
    if np.any(n > XPD_OUTAGE_N_RANGE[1]):
        raise ValueError("P.530 §4.2 step 3: n must lie in [-3, 0]; here n > 0 because A_p < 0.12 A0.01 (the C0/I "
                         "needed is lost to rain weaker than that of 1 % of the time): outside the method")
    if np.any(n < XPD_OUTAGE_N_RANGE[0]):
        warnings.warn("P.530 §4.2 step 3: n < -3 (possible with an XPIC): XPD outage below 1e-5", RuntimeWarning,
                      stacklevel=2)
    return like_input(10.0 ** (n - 2.0), a001_db, frequency_ghz, c0_i_db, u0_db, xpif_db)  # (115)


def xpd_outage_clear_air_probability(p0_percent: ArrayLike, xpd_g_db: ArrayLike, c0_i_db: ArrayLike,
                                     k_xp: ArrayLike = 0.7, xpif_db: ArrayLike = 0.0) -> ArrayLike:
    """Probability (fraction of time, not %) of outage from clear-air XPD degradation (P.530-17 §4.1).

    XPD0 = XPD_g + 5 for XPD_g <= 35 dB, else 40 (101); P0 = p_w(A=0)/100, the multipath occurrence factor as a
    fraction; eta = 1 - exp(-0.2 P0^0.75) (102); Q = -10 log10(k_XP eta / P0) (103), k_XP = 0.7 for one
    transmit antenna (104); C = XPD0 + Q (105); M = C - C0/I + XPIF; P_XP = P0 10^(-M/10) (106).
    (ITU-Rpy 0.4.0 passes P0 in per cent and labels the result per cent; see the tests.)

    Parameters
    ----------
    p0_percent : multipath occurrence factor p0 [%] (:func:`multipath_occurrence_percent`)
    xpd_g_db : manufacturer's guaranteed minimum antenna XPD at boresight [dB]
    c0_i_db : carrier-to-interference ratio required for the reference BER [dB]
    """
    xpd_g = as_float_array(xpd_g_db)
    xpd_0 = np.where(xpd_g <= 35.0, xpd_g + 5.0, 40.0)  # (101)
    p0 = as_float_array(p0_percent) / 100.0
    eta = 1.0 - np.exp(-0.2 * p0 ** 0.75)  # (102)
    q = -10.0 * np.log10(as_float_array(k_xp) * eta / p0)  # (103)
    c = xpd_0 + q  # (105)
    margin = c - as_float_array(c0_i_db) + as_float_array(xpif_db)
    return like_input(p0 * 10.0 ** (-margin / 10.0), p0_percent, xpd_g_db, c0_i_db, k_xp, xpif_db)  # (106)

