"""How often each propagation mechanism fades THIS hop by a given depth: the prior odds of cause attribution.

For a fade of peak depth A on a hop (frequency f, length d, polarisation), each mechanism's share of the time the
hop spends faded between A - 1 and A + 1 dB, from the published prediction models the project implements:

- **rain** - ITU-R P.530-17/-18 §2.4.1 (eqs. (32)-(35)) with ITU-R P.838-3 gamma = k R^alpha: the path attenuation
  exceeded for p % of an average year from A0.01 (R0.01 from the links table, else ``DEFAULT_R001_MMH``).  Eq. (34)
  is stated for 0.001-1 %; below 0.001 % its power law is extended, and between the 1 % point and no fade the
  exceedance rises log-linearly to the share of time it rains at all, ``RAIN_OCCURRENCE_PCT`` (P.837 gives P0,
  the probability of rain in an average year, of a few per cent in temperate climates; 5 % is a stated default,
  from memory).  During rain the antennas' radomes are wet: a loss of up to ``wet_antenna_db(f)`` (both antennas
  together) that is nearly independent of the path length (Leijnse et al., Adv. Water Res. 31(11), 2008;
  Schleiss et al., IEEE GRSL 10, 2013; typical 2-4 dB at 15-40 GHz, from memory) is added to the path
  attenuation, so the total rain fade A exceeds A only when the path attenuation exceeds A - W.  On sub-km hops
  this term makes rain the likely cause of any fade of a few dB.
- **clear-air fading** - P.530-17 §2.3.1-2.3.2 (eq. (7) deep-fade law, eqs. (12)-(18) shallow-fade interpolation)
  with K from the links table (``geoclimatic_k``) or ``DEFAULT_GEOCLIMATIC_K`` (10^-4: eq. (4) with dN1 = -400,
  s_a = 20 m, the check case of docs/references.md §3.2), converted from the worst month to the average year
  by §2.3.4 eq. (29) (latitude from the site coordinates, else ``DEFAULT_LATITUDE_DEG``).  docs/references.md §8
  (section 8, "p_w ~ d^3.4 and negligible below 5 km") and P.530's own scope put clear-air multipath on paths longer
  than about 5 km; a taper 1 / (1 + (5 km / d)^6) expresses that (its shape is our choice, not published).
- **refractive** (slow beam-bending / diffraction fades) shares the clear-air budget, a fraction
  ``REFRACTIVE_SHARE`` of it (stated default, from memory: most deep clear-air fading is multipath), but needs the
  geometry to produce depth A: between the standard k = 4/3 and a sub-refractive k = ``K_MIN`` (P.530 §2.2.2 plans
  clearance for k_e exceeded 99.9 % of the time, of order 0.5-0.8; 0.5 from memory) the Earth bulge at mid-path
  rises by dh = d^2/8 (1/k_min - 1/k0) / a.  The largest extra knife-edge loss this rise causes over the design
  clearances a working hop may have (ITU-R P.526 eq. (31): J(v) = 6.9 + 20 log(sqrt((v-0.1)^2+1) + v - 0.1),
  v = -sqrt(2) clearance / F1; the links table gives no terrain) plus the antenna decoupling of
  :func:`beam_decoupling_db` (the ray's arrival angle turning by half the path times the change of refractivity
  gradient, against the main lobe of the antennas) is the deepest refractive fade the hop can take; deeper fades
  lose ``REFRACTIVE_CUTOFF_DECADES`` decades of time share per bound's worth of depth beyond it (a soft cut-off,
  fitted).  On a path of a few km both terms stay near 1 dB: slow refractive fades need a long path.

``prior_log_odds`` returns the natural logarithm of each mechanism's time share in [A - 1, A + 1] dB; only
differences between causes matter.  Vectorised over events; units in the parameter names.
"""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from diag.links import Link
from diag.models import p530

__all__ = ["HopPrior", "hop_prior", "wet_antenna_db", "refractive_max_depth_db", "beam_decoupling_db", "prior_log_odds",
           "clear_air_negligible", "DEFAULT_R001_MMH", "DEFAULT_GEOCLIMATIC_K"]

DEFAULT_R001_MMH = 35.0          # stated default R0.01 [mm/h] (temperate to Mediterranean climates; P.837 maps)
DEFAULT_GEOCLIMATIC_K = 1.0e-4   # P.530-17 eq. (4) with dN1 = -400 N/km, s_a = 20 m
DEFAULT_LATITUDE_DEG = 45.0
RAIN_OCCURRENCE_PCT = 5.0        # share of an average year with rain on the path (P.837 P0 order; from memory)
WET_ANTENNA_MAX_DB = 3.0         # wet-antenna loss of both antennas at 15 GHz and above (from memory, see above)
K_MIN = 0.5                      # sub-refractive effective Earth-radius factor (from memory, see above)
K_STANDARD = 4.0 / 3.0
EARTH_RADIUS_KM = 6371.0
# change of the vertical refractivity gradient over the path between standard air (-40 N/km) and strong
# sub-refraction or super-refraction short of ducting [N-units/km] (ITU-R P.453 gives point gradients of the lowest
# 65 m from about +100 to -300 N/km for 1-99 % of the time in temperate climates; 300 from memory)
GRADIENT_CHANGE_N_PER_KM = 300.0
# main-lobe gain of the antennas when the links table gives none [dBi]: the large end of point-to-point dishes in
# 6-80 GHz (common practice; a larger antenna decouples more, so this errs towards allowing refraction)
DEFAULT_ANTENNA_GAIN_DBI = 45.0
REFRACTIVE_SHARE = 0.2
# decades of time share lost per bound's worth of depth beyond the deepest refractive fade of the geometry (a fade
# twice as deep as the bound loses 0.5 decade, seven times as deep 3 decades).  Relative, not per dB: the bound is
# proportional to the assumed change of refractivity gradient (and K_MIN), both from memory, so a stronger anomaly
# deepens it in proportion; soft for the same reason.  Chosen on family B FIT seeds 1-50 among 0.2 / 0.3 / 0.5 / 1.0
# (1-s macro-F1 0.886 / 0.893 / 0.894 / 0.884, 1 min 0.925 / 0.932 / 0.932 / 0.924) and against the former 0.1 decade
# per dB (0.876, 0.918), 2026-12-04
REFRACTIVE_CUTOFF_DECADES = 0.5
SHORT_PATH_KM = 5.0
# a mechanism whose time share at the fade's depth is below this fraction of the year (about 0.3 s a year) is
# "negligible": no verdict may name it (hard physics rule of the attribution)
NEGLIGIBLE_PCT = 1.0e-5
_FLOOR = 1.0e-12                 # smallest share [%] carried (log of zero)


def wet_antenna_db(frequency_ghz: float) -> float:
    """Total wet-antenna loss of a hop's two antennas during rain [dB]: 0 below 6 GHz, rising linearly to
    ``WET_ANTENNA_MAX_DB`` at 15 GHz and flat above (water-film loss grows with frequency and saturates; the ramp
    is a stated simplification of Leijnse et al. 2008 / Schleiss et al. 2013, from memory)."""
    return float(WET_ANTENNA_MAX_DB * min(1.0, max(0.0, (frequency_ghz - 6.0) / 9.0)))


def beam_decoupling_db(length_km, antenna_gain_dbi=None):
    """Loss of both antennas when a refractivity gradient change of ``GRADIENT_CHANGE_N_PER_KM`` turns the ray
    [dB]: the arrival angle changes by about half the path length times the change of ray curvature (dN/dh x 1e-6
    per unit length; textbook ray optics), delta = (d / 2) x dG x 1e-6 / km, and each antenna loses the main-lobe
    gain 2.5e-3 (D/lambda x delta_deg)^2 of ITU-R F.699-8 / Radio Regulations Appendix 8 (the parabolic main lobe,
    with 20 log(D/lambda) = G_max - 7.7 dB; both from memory), bounded to 20 dB per antenna.  ``antenna_gain_dbi``
    None: ``DEFAULT_ANTENNA_GAIN_DBI``.  Vectorised over the path length."""
    gain = DEFAULT_ANTENNA_GAIN_DBI if antenna_gain_dbi is None else float(antenna_gain_dbi)
    d_over_lambda = 10.0 ** ((gain - 7.7) / 20.0)
    delta_deg = np.degrees(np.asarray(length_km, dtype=float) / 2.0 * GRADIENT_CHANGE_N_PER_KM * 1e-6)
    per_antenna = np.minimum(2.5e-3 * (d_over_lambda * delta_deg) ** 2, 20.0)
    return 2.0 * per_antenna


def _knife_edge_db(v: np.ndarray) -> np.ndarray:
    """ITU-R P.526-15 eq. (31): J(v) = 6.9 + 20 log(sqrt((v - 0.1)^2 + 1) + v - 0.1) for v > -0.78, else 0 [dB]."""
    v = np.asarray(v, dtype=float)
    j = 6.9 + 20.0 * np.log10(np.sqrt((v - 0.1) ** 2 + 1.0) + v - 0.1)
    return np.where(v > -0.78, np.maximum(j, 0.0), 0.0)


# design clearances searched for the largest sub-refractive fade, as the diffraction parameter v at k = 4/3:
# from -1.2 (0.85 F1 clear) to +0.5 (slightly obstructed, about 10 dB lost in standard air: no hop is planned
# worse).  The links table gives no terrain, so the bound holds for any clearance a working hop has.
DESIGN_V_RANGE = (-1.2, 0.5)


def refractive_max_depth_db(length_km: float, frequency_ghz: float, antenna_gain_dbi: float | None = None) -> float:
    """Deepest slow refractive fade the hop's geometry allows [dB]: the extra knife-edge loss (ITU-R P.526-15 eq.
    (31)) when the Earth bulge at mid-path rises from k = 4/3 to k = ``K_MIN`` (dh = d^2/8 (1/k_min - 1/k0) / a,
    P.530 §2.2.2), dv = sqrt(2) dh / F1, the largest J(v0 + dv) - J(v0) over the design clearances
    ``DESIGN_V_RANGE`` (the table gives no terrain; 0.6 F1 at k = 4/3, common practice, is v0 = -0.85), plus
    :func:`beam_decoupling_db`.  On a path of a few km dv is a few hundredths and the bound stays near 1 dB."""
    d = float(length_km)
    bulge_m = d * d / 8.0 * (1.0 / K_MIN - 1.0 / K_STANDARD) / EARTH_RADIUS_KM * 1000.0
    fresnel_m = 17.32 * math.sqrt(d / (4.0 * float(frequency_ghz)))   # F1 at mid-path (P.530 §2.2.2)
    dv = math.sqrt(2.0) * bulge_m / fresnel_m
    v0 = np.linspace(DESIGN_V_RANGE[0], DESIGN_V_RANGE[1], 69)
    loss = float(np.max(_knife_edge_db(v0 + dv) - _knife_edge_db(v0)))
    return float(max(loss, 0.0) + float(beam_decoupling_db(d, antenna_gain_dbi)))


@dataclass(frozen=True)
class HopPrior:
    """The prediction models of one hop, evaluated once."""

    link_id: str
    frequency_ghz: float
    length_km: float
    r001_mmh: float
    geoclimatic_k: float
    a001_db: float            # P.530 §2.4.1 path attenuation exceeded 0.01 % of an average year
    p0_worst_month_pct: float  # clear-air occurrence factor p0 of the average worst month (§2.3.2 step 1)
    delta_g_db: float
    short_path_factor: float
    wet_db: float
    refractive_max_db: float
    r001_stated: bool
    k_stated: bool

    def note(self) -> str:
        """One line saying which model inputs were defaults (for evidence strings and method notes)."""
        parts = [f"R0.01 {self.r001_mmh:g} mm/h" + ("" if self.r001_stated else " (default)"),
                 f"K {self.geoclimatic_k:.1e}" + ("" if self.k_stated else " (default)")]
        return ", ".join(parts)

    # --- exceedances [% of an average year] -----------------------------------------------------------------
    def rain_exceed_pct(self, fade_db: np.ndarray) -> np.ndarray:
        """Share of the year the total rain fade (path + wet antenna) exceeds ``fade_db``."""
        a = np.asarray(fade_db, dtype=float)
        path = np.maximum(a - self.wet_db, 0.0)
        return self._rain_path_exceed(path)

    def _rain_path_exceed(self, path_db: np.ndarray) -> np.ndarray:
        if not (self.a001_db > 0):
            return np.full(path_db.shape, _FLOOR)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            a1 = float(p530.rain_attenuation_db(1.0, self.a001_db, self.frequency_ghz))
            amax = float(p530.rain_attenuation_db(1e-4, self.a001_db, self.frequency_ghz))
            with np.errstate(all="ignore"):
                p = np.asarray(p530.rain_time_percent(np.clip(path_db, a1, amax), self.a001_db, self.frequency_ghz),
                               dtype=float)
        # above the 1e-4 % point: continue the curve's last decade slope (dlog p / dA) beyond it
        slope = math.log10(1e-3 / 1e-4) / max(amax - float(p530.rain_attenuation_db(1e-3, self.a001_db,
                                                                                     self.frequency_ghz)), 1e-6)
        with np.errstate(all="ignore"):
            deep = 1e-4 * 10.0 ** (-slope * (path_db - amax))
            # between no path attenuation (rain on the path RAIN_OCCURRENCE_PCT of the time) and the 1 % point
            shallow = 10.0 ** (math.log10(RAIN_OCCURRENCE_PCT) + (0.0 - math.log10(RAIN_OCCURRENCE_PCT))
                               * np.clip(path_db / max(a1, 1e-9), 0.0, 1.0))
        out = np.where(path_db > amax, deep, np.where(path_db < a1, shallow, p))
        return np.maximum(np.nan_to_num(out, nan=_FLOOR), _FLOOR)

    def _clear_air_untapered_pct(self, fade_db: np.ndarray) -> np.ndarray:
        a = np.maximum(np.asarray(fade_db, dtype=float), 0.0)
        with np.errstate(all="ignore"):
            p = np.asarray(p530.multipath_fade_percent_year(a, self.p0_worst_month_pct, self.delta_g_db), dtype=float)
        return np.nan_to_num(p, nan=0.0)

    def clear_air_exceed_pct(self, fade_db: np.ndarray) -> np.ndarray:
        """Share of the average year clear-air multipath fading exceeds ``fade_db`` (P.530 §2.3.2/§2.3.4, with the
        short-path taper)."""
        return np.maximum(self._clear_air_untapered_pct(fade_db) * self.short_path_factor, _FLOOR)

    def refractive_exceed_pct(self, fade_db: np.ndarray) -> np.ndarray:
        """The refractive share of the clear-air budget, cut off beyond the geometry's deepest fade (no short-path
        taper: the geometry term already says how deep a short hop can fade slowly)."""
        a = np.asarray(fade_db, dtype=float)
        beyond = np.maximum(a / max(self.refractive_max_db, 0.1) - 1.0, 0.0)
        cut = 10.0 ** (-beyond * REFRACTIVE_CUTOFF_DECADES)
        return np.maximum(REFRACTIVE_SHARE * self._clear_air_untapered_pct(a) * cut, _FLOOR)

    # --- shares in [A - 1, A + 1] dB -------------------------------------------------------------------------
    def band_pct(self, fade_db) -> dict[str, np.ndarray]:
        a = np.maximum(np.atleast_1d(np.asarray(fade_db, dtype=float)), 1.0)
        lo, hi = a - 1.0, a + 1.0
        rain = np.maximum(self.rain_exceed_pct(lo) - self.rain_exceed_pct(hi), _FLOOR)
        ca = np.maximum(self.clear_air_exceed_pct(lo) - self.clear_air_exceed_pct(hi), _FLOOR)
        refr = np.maximum(self.refractive_exceed_pct(lo) - self.refractive_exceed_pct(hi), _FLOOR)
        return {"rain": rain, "multipath": np.maximum(ca * (1.0 - REFRACTIVE_SHARE), _FLOOR), "refractive": refr}


def _mid_latitude(link: Link) -> float:
    lats = [v for v in (link.site_a_lat, link.site_b_lat) if v is not None]
    return float(np.mean(lats)) if lats else DEFAULT_LATITUDE_DEG


def hop_prior(link: Link) -> HopPrior:
    """The prediction models of ``link`` (defaults stated in the module docstring where the table is silent)."""
    f, d = float(link.frequency_ghz), float(link.length_km)
    r001 = float(link.r001_mmh) if link.r001_mmh else DEFAULT_R001_MMH
    k_geo = float(link.geoclimatic_k) if link.geoclimatic_k else DEFAULT_GEOCLIMATIC_K
    tilt = 90.0 if link.polarization == "V" else 0.0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        a001 = float(p530.rain_attenuation_001_db(d, f, r001, tilt))
        p0_wm = float(p530.multipath_occurrence_percent(d, f, k_geo))
        delta_g = float(p530.geoclimatic_conversion_db(_mid_latitude(link), d))
    return HopPrior(link_id=link.link_id, frequency_ghz=f, length_km=d, r001_mmh=r001, geoclimatic_k=k_geo,
                    a001_db=a001, p0_worst_month_pct=p0_wm, delta_g_db=delta_g,
                    short_path_factor=1.0 / (1.0 + (SHORT_PATH_KM / d) ** 6), wet_db=wet_antenna_db(f),
                    refractive_max_db=refractive_max_depth_db(d, f, link.antenna_gain_dbi),
                    r001_stated=bool(link.r001_mmh), k_stated=bool(link.geoclimatic_k))


def prior_log_odds(prior: HopPrior, fade_db) -> dict[str, np.ndarray]:
    """Natural log of each mechanism's share of the year in [A - 1, A + 1] dB (rain, multipath, refractive)."""
    return {cause: np.log(share) for cause, share in prior.band_pct(fade_db).items()}


def clear_air_negligible(prior: HopPrior, fade_db) -> np.ndarray:
    """True where P.530's clear-air fading (multipath and refractive together) exceeds ``fade_db`` for less than
    ``NEGLIGIBLE_PCT`` of the year on this hop: no clear-air verdict is allowed there."""
    a = np.atleast_1d(np.asarray(fade_db, dtype=float))
    ca = prior.clear_air_exceed_pct(a) + prior.refractive_exceed_pct(a)
    return ca < NEGLIGIBLE_PCT

