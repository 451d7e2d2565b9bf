"""Polarisation mismatch: co-polar loss and cross-polar discrimination (XPD) for a tilt angle, and inverses.

A linearly polarised wave arriving at angle ``tilt_deg`` to the receive antenna's co-polar axis delivers the
fraction cos^2(tilt) of its power to the co-polar port and sin^2(tilt) to the cross-polar port (the polarisation
loss factor |rho_t . rho_r|^2 of two linear polarisations; e.g. C. A. Balanis, "Antenna Theory: Analysis and
Design", 3rd ed., Wiley, 2005, §2.12.2, eq. (2-71); section and equation number from memory).  Hence

    co-polar loss  = -20 log10 |cos(tilt)|  [dB]
    XPD (tilt)     =  20 log10 |cot(tilt)|  [dB]  (perfect antennas; cross-polar leak from tilt alone)

Measured XPD = co-polar RSL - cross-polar RSL from the same transmitter.  Real antennas add their own leak;
:func:`combine_xpd_db` adds independent leaks on a power basis (an approximation: coherent leaks may add or
cancel).
"""
from __future__ import annotations

import numpy as np

from diag.models._util import ArrayLike, as_float_array, like_input

__all__ = ["copolar_loss_db", "xpd_from_tilt_db", "tilt_from_xpd_deg", "tilt_from_copolar_loss_deg",
           "combine_xpd_db"]


def copolar_loss_db(tilt_deg: ArrayLike) -> ArrayLike:
    """Co-polar power loss for a polarisation tilt [dB] = -20 log10|cos(tilt)| (Balanis 3rd ed. eq. (2-71)).

    Parameters
    ----------
    tilt_deg : float or array
        Angle between the wave's polarisation and the antenna's co-polar axis [deg].

    Returns
    -------
    Loss [dB], >= 0; +inf at 90 deg.
    """
    tilt = np.radians(as_float_array(tilt_deg))
    with np.errstate(divide="ignore"):
        loss = -20.0 * np.log10(np.abs(np.cos(tilt)))  # PLF = cos^2(tilt), eq. (2-71)
    return like_input(np.where(np.isfinite(tilt), np.clip(loss, 0.0, np.inf), np.nan), tilt_deg)


def xpd_from_tilt_db(tilt_deg: ArrayLike) -> ArrayLike:
    """Cross-polar discrimination caused by a polarisation tilt alone [dB] = 20 log10|cot(tilt)|.

    Co-polar power cos^2(tilt) over cross-polar power sin^2(tilt) (Balanis 3rd ed. eq. (2-71) applied to both
    ports).  +inf at 0 deg, 0 dB at 45 deg, negative beyond 45 deg (the ports swap roles).
    """
    tilt = np.radians(as_float_array(tilt_deg))
    with np.errstate(divide="ignore"):
        xpd = 20.0 * np.log10(np.abs(np.cos(tilt))) - 20.0 * np.log10(np.abs(np.sin(tilt)))
    return like_input(xpd, tilt_deg)


def tilt_from_xpd_deg(xpd_db: ArrayLike) -> ArrayLike:
    """Tilt angle implied by a measured XPD, assuming the tilt alone causes the leak [deg], in [0, 90).

    Inverse of :func:`xpd_from_tilt_db`: tilt = arctan(10^(-XPD/20)).  An XPD limited by the antennas gives an
    upper bound on the tilt, not the tilt itself.
    """
    xpd = as_float_array(xpd_db)
    tilt = np.degrees(np.arctan(10.0 ** (-xpd / 20.0)))  # tan(tilt) = sqrt(P_x / P_co)
    return like_input(tilt, xpd_db)


def tilt_from_copolar_loss_deg(loss_db: ArrayLike) -> ArrayLike:
    """Tilt angle implied by a co-polar loss [deg], in [0, 90]: arccos(10^(-loss/20)); NaN for negative loss."""
    loss = as_float_array(loss_db)
    with np.errstate(invalid="ignore"):
        tilt = np.degrees(np.arccos(np.where(loss >= 0, 10.0 ** (-loss / 20.0), np.nan)))
    return like_input(tilt, loss_db)


def combine_xpd_db(*xpd_db: ArrayLike) -> ArrayLike:
    """XPD of several independent cross-polar leaks added in power: -10 log10(sum 10^(-XPD_i/10)) [dB].

    An approximation for incoherent leaks (e.g. antenna XPD and a tilt); coherent leaks can add up to 6 dB worse
    for two equal leaks or cancel.
    """
    if not xpd_db:
        raise ValueError("give at least one XPD")
    arrays = np.broadcast_arrays(*[as_float_array(x) for x in xpd_db])
    leak = sum(10.0 ** (-a / 10.0) for a in arrays)
    with np.errstate(divide="ignore"):
        total = -10.0 * np.log10(leak)
    return like_input(total, *xpd_db)
