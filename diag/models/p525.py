"""Free-space propagation: wavelength, free-space basic transmission loss (ITU-R P.525) and Fresnel zones.

References
----------
ITU-R P.525-4 (08/2019, date from memory), "Calculation of free-space attenuation", §2.2 (point-to-point links): L_bf =
20 log10(4 pi d / lambda) dB, i.e. 32.4 + 20 log10 f[MHz] + 20 log10 d[km] (equation numbers from memory).
ITU-R P.530-17 §2.2.1, eq. (2): first Fresnel ellipsoid radius F1 = 17.3 sqrt(d1 d2 / (f d)) m; the exact
form sqrt(n lambda d1 d2 / d) is that of ITU-R P.526 §3.1 (from memory).
"""
from __future__ import annotations

import numpy as np

from diag.models._util import ArrayLike, as_float_array, like_input

__all__ = ["SPEED_OF_LIGHT_M_S", "wavelength_m", "free_space_loss_db", "fresnel_radius_m"]

SPEED_OF_LIGHT_M_S = 299_792_458.0  # exact, SI definition


def wavelength_m(frequency_ghz: ArrayLike) -> ArrayLike:
    """Free-space wavelength lambda = c / f [m] for a frequency in GHz."""
    f = as_float_array(frequency_ghz)
    if np.any(f <= 0):
        raise ValueError("frequency_ghz must be positive")
    return like_input(SPEED_OF_LIGHT_M_S / (f * 1e9), frequency_ghz)


def free_space_loss_db(distance_km: ArrayLike, frequency_ghz: ArrayLike) -> ArrayLike:
    """Free-space basic transmission loss between isotropic antennas [dB] (ITU-R P.525-4 §2.2).

    L_bf = 20 log10(4 pi d / lambda), the exact form of the usual 92.45 + 20 log10 f[GHz] + 20 log10 d[km]
    (the rounded constant is 0.003 dB high).

    Parameters
    ----------
    distance_km : path length d [km], > 0
    frequency_ghz : frequency f [GHz], > 0
    """
    d = as_float_array(distance_km)
    if np.any(d <= 0):
        raise ValueError("distance_km must be positive")
    lam = as_float_array(wavelength_m(as_float_array(frequency_ghz)))
    loss = 20.0 * np.log10(4.0 * np.pi * d * 1e3 / lam)  # L_bf = 20 log(4 pi d / lambda)
    return like_input(loss, distance_km, frequency_ghz)


def fresnel_radius_m(d1_km: ArrayLike, d2_km: ArrayLike, frequency_ghz: ArrayLike, zone: int = 1) -> ArrayLike:
    """Radius of the n-th Fresnel zone at a point d1 from one end and d2 from the other [m].

    F_n = sqrt(n lambda d1 d2 / (d1 + d2)) (ITU-R P.526 §3.1, from memory); for n = 1 this is the
    F1 = 17.3 sqrt(d1 d2 / (f d)) of ITU-R P.530-17 §2.2.1 eq. (2) (17.3 rounds sqrt(c/1e9 * 1e3) = 17.31).
    """
    if zone < 1:
        raise ValueError("zone must be >= 1")
    d1 = as_float_array(d1_km) * 1e3
    d2 = as_float_array(d2_km) * 1e3
    if np.any(d1 < 0) or np.any(d2 < 0) or np.any(d1 + d2 <= 0):
        raise ValueError("d1_km and d2_km must be >= 0 with a positive sum")
    lam = as_float_array(wavelength_m(as_float_array(frequency_ghz)))
    radius = np.sqrt(zone * lam * d1 * d2 / (d1 + d2))
    return like_input(radius, d1_km, d2_km, frequency_ghz)
