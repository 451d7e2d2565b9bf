"""Scenario family B: an independently written generator of labelled hop logs for validating cause attribution.

Written from the published physics, without reading the project's own simulator (``diag/sim``) or classifier, so
that a figure measured here is not a figure measured on the assumptions the classifier was tuned on.

What one seed makes (``make_world(seed)``): a small invented region ("Veldmark", longitude ~15 E) holding

- a NETWORK of 4-6 hops (15-42 GHz, 0.3-15 km, site coordinates given) crossed by one storm: a stratiform band
  with convective cells embedded, moving at 10-60 km/h, so neighbouring hops fade in sequence;
- 3-5 INDEPENDENT hops drawn across 6-80 GHz x 0.2-60 km, each with a day made of the mechanisms its physics allows.

Every hop is simulated at 1 s for 24 h (12:00 UTC to 12:00 UTC, so the night sits in the middle) and written as
four log shapes the reader accepts (generic CSV, long layout ``time_utc, link_id, channel, <quantities>``):

- ``1s``        1-s instantaneous samples
- ``1min``      1-min instantaneous samples (the 1-s process sampled each minute)
- ``15min_mam`` 15-min min/avg/max of the 1-s level (time stamp = interval start)
- ``15min_mm``  15-min min/max, no average

Channels: ``H``/``V`` for dual-polarised hops, ``A>B``/``B>A`` for single-polarised hops logged in both directions,
``A>B`` alone otherwise.  ATPC hops also log ``tsl_dbm``.

Mechanisms and their sources (every physical model is a small function below, with its source):

- rain: specific attenuation gamma = k R^alpha from ITU-R P.838-3 (Tables 1-4, eq. 1-5), integrated along the path
  through a moving rain field (so the path reduction comes from the field itself; the P.530-18 §2.4.1 reduction
  factor r is implemented and used for the uniform stratiform case, where r is capped at 1 because a uniform field
  cannot be longer than the path).  Stratiform: hours-long, symmetric, 1-5 mm/h.  Convective: 1-3 cells of
  20-150 mm/h, 1-4 km radius, 10-40 min lifetime, advected across the path (multi-peak fades).
- wet antenna: a loss nearly independent of path length (Leijnse et al., Adv. Water Res. 31(11), 2008; Schleiss et
  al., IEEE GRSL 10, 2013): rises with the rain rate (saturating, 2-6 dB at 25-40 GHz, less at lower frequency),
  dries exponentially over 10-60 min after the rain stops.  Truth counts it as rain.
- clear-air multipath: a Rician envelope (K varying slowly over the night, from ~25 dB to a minimum set by P.530
  §2.3.1) over complex Gaussian scatter with a Gaussian Doppler spectrum of bandwidth 0.01-1 Hz, so upfades come
  with the fades.  Only where ITU-R P.530-17 §2.3.1 gives a worst-month occurrence p0 = p_w(A = 0) of at least 1 %
  (long hops; f^0.8, d^3.4) and only at night / early morning local solar time.
- refractive fade: smooth 3-20 dB fades lasting 20 min - 3 h, only on hops longer than 15 km whose clearance at
  k = 2/3 (sub-refraction) is below 0.6 of the first Fresnel radius (earth bulge d1 d2 / (12.74 k), Fresnel radius
  17.3 sqrt(d1 d2 / (f d)), docs/references.md §1), at night / morning.
- ATPC: the transmitter raises its level (0.5 dB steps) to hold the receive level, up to a 10-20 dB range; TSL and
  RSL are both logged; the truth fade is the path attenuation.
- variants of the generating process inside the family (drawn per storm / cell / night, so both halves hold
  both): Gaussian or exponential convective cell profiles, a regular or irregular stratiform ripple, a Gaussian or
  flat Doppler spectrum.
- clear air only: multipath and refractive fades are tapered to zero while it rains on the path and 45 min either
  side (a calm stratified atmosphere is what they need; common practice).
- equipment: an abrupt persistent level step of 3-10 dB (antenna knocked, one end => both directions) and a signal
  loss (receiver at its -99 dBm floor, 1-40 min).

Truth, per 1-s sample per channel: the dB contribution of each mechanism; the sample is FADED when the total is
>= 3 dB (or the signal is lost); its cause is the mechanism with the largest contribution (rain includes the wet
antenna; an upfade is a negative multipath contribution).

THE SPLIT (fixed): seeds 1-50 are the FIT half, seeds 51-100 the HELD-OUT half (``FIT_SEEDS``, ``HELDOUT_SEEDS``).
Anything tuned on this family must be tuned on ``fit_half()`` only; figures are reported on the held-out half.
Seeds 101-150 (``VARIANT_SEEDS``) are a second held-out set made by a CHANGED process, B2, that no fit ever sees:
stratiform bands with a fast front and a long tail instead of symmetric ones, flat-topped (super-Gaussian) cells,
wet antennas that shed drops fast before the film dries slowly, a U-shaped (Jakes-type) Doppler spectrum with K
wandering 4x faster, refractive fades with linear edges and a flat bottom, and ATPC with a 5-20 s control lag.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
from scipy.signal import lfilter

FIT_SEEDS = tuple(range(1, 51))
HELDOUT_SEEDS = tuple(range(51, 101))
VARIANT_SEEDS = tuple(range(101, 151))   # held out too, made by a changed process (B2, see the docstring)
_VARIANT = False                         # set by make_world for VARIANT_SEEDS
CAUSES = ("rain", "multipath", "refractive", "level_shift", "signal_loss")
SHAPES = ("1s", "1min", "15min_mam", "15min_mm")
FADE_DB = 3.0
DURATION_S = 24 * 3600
START_UTC = pd.Timestamp("2026-07-01T12:00:00Z")
FLOOR_DBM = -99.0
REGION_LON = 15.0     # invented region; local solar time = UTC + lon / 15 h
REGION_LAT = 48.0
EARTH_KM = 6371.0
DN1 = -400.0          # point refractivity gradient (N-units/km) of the invented region, P.530-17 §2.3.1
SA_M = 20.0           # terrain roughness s_a (m)
GEOCLIMATIC_K = 10.0 ** (-4.4 - 0.0027 * DN1) * (10.0 + SA_M) ** -0.46   # P.530-17 eq. for K, = 1.0012e-4


# ---------------------------------------------------------------------------------------------------------------
# published models (small, vectorised, sources in the docstrings)

_P838 = {
    "kH": ([-5.33980, -0.35351, -0.23789, -0.94158], [-0.10008, 1.26970, 0.86036, 0.64552],
           [1.13098, 0.45400, 0.15354, 0.16817], -0.18961, 0.71147),
    "kV": ([-3.80595, -3.44965, -0.39902, 0.50167], [0.56934, -0.22911, 0.73042, 1.07319],
           [0.81061, 0.51059, 0.11899, 0.27195], -0.16398, 0.63297),
    "aH": ([-0.14318, 0.29591, 0.32177, -5.37610, 16.1721], [1.82442, 0.77564, 0.63773, -0.96230, -3.29980],
           [-0.55187, 0.19822, 0.13164, 1.47828, 3.43990], 0.67849, -1.95537),
    "aV": ([-0.07771, 0.56727, -0.20238, -48.2991, 48.5833], [2.33840, 0.95545, 1.14520, 0.791669, 0.791459],
           [-0.76284, 0.54039, 0.26809, 0.116226, 0.116479], -0.053739, 0.83433),
}


def p838_coefficients(frequency_ghz):
    """(kH, alphaH, kV, alphaV) of ITU-R P.838-3 (03/2005), eq. 2-3 with Tables 1-4 (1-1000 GHz)."""
    lf = np.log10(np.asarray(frequency_ghz, dtype=float))
    out = []
    for name in ("kH", "aH", "kV", "aV"):
        a, b, c, m, ck = _P838[name]
        s = sum(aj * np.exp(-(((lf - bj) / cj) ** 2)) for aj, bj, cj in zip(a, b, c))
        v = s + m * lf + ck
        out.append(10.0 ** v if name.startswith("k") else v)
    return tuple(out)


def p838_gamma_db_per_km(frequency_ghz, rain_mmh, tilt_deg=0.0):
    """Rain specific attenuation gamma = k R^alpha (dB/km), ITU-R P.838-3 eq. 1, 4, 5 for a horizontal path
    (elevation 0) and polarisation tilt tau (0 = H, 90 = V)."""
    kh, ah, kv, av = p838_coefficients(frequency_ghz)
    c2t = np.cos(2.0 * np.radians(tilt_deg))
    k = (kh + kv + (kh - kv) * c2t) / 2.0
    alpha = (kh * ah + kv * av + (kh * ah - kv * av) * c2t) / (2.0 * k)
    return k * np.power(np.maximum(np.asarray(rain_mmh, dtype=float), 0.0), alpha)


def p530_rain_reduction_factor(length_km, rain_mmh, frequency_ghz, alpha):
    """Distance factor r of ITU-R P.530-18 §2.4.1 step 3 (capped at 2.5 as implementations do):
    r = 1 / (0.477 d^0.633 R^(0.073 alpha) f^0.123 - 10.579 (1 - exp(-0.024 d)))."""
    d = np.asarray(length_km, dtype=float)
    den = (0.477 * d ** 0.633 * np.power(np.maximum(rain_mmh, 1e-3), 0.073 * alpha) * frequency_ghz ** 0.123
           - 10.579 * (1.0 - np.exp(-0.024 * d)))
    with np.errstate(divide="ignore"):
        r = np.where(den > 0, 1.0 / np.where(den > 0, den, 1.0), 2.5)
    return np.minimum(r, 2.5)


def p530_multipath_p0_pct(length_km, frequency_ghz, height_a_m, height_b_m, dn1=DN1, sa_m=SA_M):
    """Worst-month percentage of time a clear-air fade of 0 dB is exceeded, p0 = p_w(A = 0), ITU-R P.530-17 §2.3.1
    (detailed method): K = 10^(-4.4 - 0.0027 dN1) (10 + s_a)^-0.46, eps_p = |hr - he| / d (mrad),
    p_w = K d^3.4 (1 + eps_p)^-1.03 f^0.8 10^(-0.00076 hL).  Heights in m above sea level."""
    k = 10.0 ** (-4.4 - 0.0027 * dn1) * (10.0 + sa_m) ** -0.46
    eps = abs(height_a_m - height_b_m) / length_km
    hl = min(height_a_m, height_b_m)
    return k * length_km ** 3.4 * (1.0 + eps) ** -1.03 * frequency_ghz ** 0.8 * 10.0 ** (-0.00076 * hl)


def fresnel_radius_m(d1_km, d2_km, frequency_ghz):
    """First Fresnel zone radius F1 = 17.3 sqrt(d1 d2 / (f d)) m (ITU-R P.530-18 §2.2.1)."""
    return 17.3 * math.sqrt(d1_km * d2_km / (frequency_ghz * (d1_km + d2_km)))


def earth_bulge_m(d1_km, d2_km, k_factor):
    """Earth bulge at a point of the path, d1 d2 / (12.74 k) m (common practice, effective earth radius k Re)."""
    return d1_km * d2_km / (12.74 * k_factor)


# ---------------------------------------------------------------------------------------------------------------
# hop description and truth

@dataclass
class Hop:
    link_id: str
    frequency_ghz: float
    length_km: float
    polarization: str            # H, V or dual
    directions: bool             # single-polarised hop logged in both directions
    threshold_dbm: float
    nominal_dbm: float
    r001_mmh: float
    antenna_height_m: float      # above ground, both ends
    ground_a_m: float            # site altitude a.s.l.
    ground_b_m: float
    site_a: tuple[float, float]  # (lat, lon)
    site_b: tuple[float, float]
    obstacle_m: float = 0.0      # mid-path terrain above the mean site altitude
    atpc_range_db: float = 0.0
    tsl_dbm: float = 10.0
    network: str = ""
    mechanisms: list[str] = field(default_factory=list)   # what was put on this hop (for reports)

    @property
    def channels(self) -> list[str]:
        if self.polarization == "dual":
            return ["H", "V"]
        return ["A>B", "B>A"] if self.directions else ["A>B"]

    def tilt_deg(self, channel: str) -> float:
        if self.polarization == "dual":
            return 0.0 if channel == "H" else 90.0
        return 0.0 if self.polarization == "H" else 90.0

    def links_row(self) -> dict:
        return {
            "link_id": self.link_id, "frequency_ghz": round(self.frequency_ghz, 3),
            "length_km": round(self.length_km, 3), "polarization": self.polarization,
            "threshold_dbm": round(self.threshold_dbm, 1), "nominal_dbm": round(self.nominal_dbm, 1),
            "r001_mmh": round(self.r001_mmh, 1), "antenna_height_m": round(self.antenna_height_m, 1),
            "geoclimatic_k": float(f"{GEOCLIMATIC_K:.4g}"),
            "site_a_lat": round(self.site_a[0], 5), "site_a_lon": round(self.site_a[1], 5),
            "site_b_lat": round(self.site_b[0], 5), "site_b_lon": round(self.site_b[1], 5),
            "site_a_elev_m": round(self.ground_a_m, 1), "site_b_elev_m": round(self.ground_b_m, 1),
        }


@dataclass
class HopTruth:
    hop: Hop
    contributions: dict[str, dict[str, np.ndarray]]   # channel -> cause -> dB per second (float32)
    lost: dict[str, np.ndarray]                        # channel -> bool per second
    rsl_dbm: dict[str, np.ndarray]                     # channel -> logged level per second (NaN when lost)
    tsl_dbm: dict[str, np.ndarray] | None              # channel -> logged TSL per second (ATPC hops)
    equipment_lost: dict[str, np.ndarray]              # channel -> bool per second: receiver/transmitter off

    def total_db(self, channel: str) -> np.ndarray:
        return sum(self.contributions[channel].values())

    def cause_codes(self, channel: str) -> np.ndarray:
        """Per second: -1 not faded, else index into CAUSES of the largest contribution."""
        c = self.contributions[channel]
        stack = np.stack([np.maximum(c[name], 0.0) for name in CAUSES])
        code = np.argmax(stack, axis=0).astype(np.int8)
        # a receiver at its floor because of an equipment loss is signal_loss; one driven there by a deep
        # propagation fade keeps the cause of the fade (its total is far above 3 dB anyway)
        lost = self.lost[channel]
        off = self.equipment_lost[channel]
        code[off] = CAUSES.index("signal_loss")
        faded = (self.total_db(channel) >= FADE_DB) | lost
        code[~faded] = -1
        return code


# ---------------------------------------------------------------------------------------------------------------
# geometry helpers

def _km_to_deg(dx_km, dy_km, lat=REGION_LAT):
    return dy_km / 111.2, dx_km / (111.2 * math.cos(math.radians(lat)))


def _path_points(hop_xy: tuple[float, float, float, float], length_km: float) -> tuple[np.ndarray, np.ndarray, float]:
    xa, ya, xb, yb = hop_xy
    n = int(min(60, max(6, math.ceil(length_km / 0.25))))
    s = (np.arange(n) + 0.5) / n
    return xa + s * (xb - xa), ya + s * (yb - ya), length_km / n


def _local_hour(t_s: np.ndarray, lon: float = REGION_LON) -> np.ndarray:
    utc_h = (START_UTC.hour + START_UTC.minute / 60.0) + t_s / 3600.0
    return (utc_h + lon / 15.0) % 24.0


def _smooth_noise(rng, n: int, corr_s: float, step_s: float = 1.0) -> np.ndarray:
    """Unit-variance Gaussian noise with about corr_s correlation time (first-order filtered, computed coarse)."""
    coarse_step = max(step_s, corr_s / 5.0)
    m = int(n * step_s / coarse_step) + 3
    a = math.exp(-coarse_step / corr_s)
    w = rng.standard_normal(m)
    x = np.empty(m)
    x[0] = w[0]
    for i in range(1, m):
        x[i] = a * x[i - 1] + math.sqrt(1 - a * a) * w[i]
    tc = np.arange(m) * coarse_step
    return np.interp(np.arange(n) * step_s, tc, x)


# ---------------------------------------------------------------------------------------------------------------
# rain field

@dataclass
class RainField:
    """Rain rate R(x, y, t) (mm/h) on a plane in km: a stratiform band plus convective cells, all advected."""
    vx_kmh: float
    vy_kmh: float
    x_ref_km: float = 0.0        # stratiform band centre times are given at this point
    y_ref_km: float = 0.0
    strat: list[tuple[float, float, float, float]] = field(default_factory=list)
    # (peak mm/h, centre time s at the origin, half-length s, ripple seed)
    cells: list[tuple[float, float, float, float, float, float]] = field(default_factory=list)
    # (peak mm/h, x0 km, y0 km at t0, t0 s, radius km, lifetime s)

    def rate(self, x_km: np.ndarray, y_km: np.ndarray, t_s: np.ndarray, rng_seed: int = 0) -> np.ndarray:
        """R for points (x, y) (shape P) at times t (shape T) -> (T, P)."""
        t = t_s[:, None]
        vx, vy = self.vx_kmh / 3600.0, self.vy_kmh / 3600.0
        speed = math.hypot(vx, vy)
        ux, uy = vx / speed, vy / speed
        out = np.zeros((t_s.size, x_km.size))
        for peak, tc, half, ripple in self.strat:
            # the band reaches a point when its along-motion coordinate meets the front
            s_along = ((x_km - self.x_ref_km) * ux + (y_km - self.y_ref_km) * uy)[None, :] / speed
            tau = (t - tc - s_along) / half
            if _VARIANT:       # B2: a fast front (first 20 % of the band) and a long trailing tail
                x = np.clip((tau + 1.0) / 2.0, 0.0, 1.0)
                env = np.where(x < 0.2, np.sin(0.5 * np.pi * x / 0.2) ** 2, np.cos(0.5 * np.pi * (x - 0.2) / 0.8) ** 2)
                env = np.where(np.abs(tau) < 1.0, env, 0.0)
            else:
                env = np.where(np.abs(tau) < 1.0, 0.5 * (1.0 + np.cos(np.pi * tau)), 0.0)
            if ripple < 0.5:   # variant 1: a regular 30-45 min ripple
                mod = 1.0 + 0.25 * np.sin(2 * np.pi * (t - s_along) / (1800.0 + 1800.0 * ripple) + 12.0 * ripple)
            else:              # variant 2: an irregular ripple (three incommensurate periods)
                u = (t - s_along) / 60.0
                mod = 1.0 + 0.12 * (np.sin(u / 7.3 + ripple * 9) + np.sin(u / 17.9 + ripple * 5)
                                    + np.sin(u / 41.3 + ripple * 3))
            out += peak * env * np.maximum(mod, 0.2)
        for peak, x0, y0, t0, radius, life in self.cells:
            cx = x0 + vx * (t - t0)
            cy = y0 + vy * (t - t0)
            r2 = (x_km[None, :] - cx) ** 2 + (y_km[None, :] - cy) ** 2
            grow = np.exp(-0.5 * ((t - t0) / (life / 2.5)) ** 2)
            if _VARIANT:       # B2: a flat-topped (super-Gaussian) cell
                out += peak * grow * np.exp(-((r2 / (2.0 * radius ** 2)) ** 2))
            elif radius >= 0:  # variant 1: Gaussian cell profile
                out += peak * grow * np.exp(-r2 / (2.0 * radius ** 2))
            else:              # variant 2: exponential cell profile (radius stored negative)
                out += peak * grow * np.exp(-np.sqrt(r2) / (-radius * 0.8))
        return out


def _rain_on_hop(rng, hop: Hop, xy, fld: RainField, n: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """Path rain attenuation per channel (dB, 1 s) and the path-mean rain rate."""
    xs, ys, dx = _path_points(xy, hop.length_km)
    step = 10.0
    tc = np.arange(0.0, n + step, step)
    rate = fld.rate(xs, ys, tc)
    out = {}
    for ch in hop.channels:
        g = p838_gamma_db_per_km(hop.frequency_ghz, rate, hop.tilt_deg(ch))
        a = g.sum(axis=1) * dx
        out[ch] = np.interp(np.arange(n), tc, a)
    mean_rate = np.interp(np.arange(n), tc, rate.mean(axis=1))
    return out, mean_rate


def _wet_antenna(rng, hop: Hop, mean_rate: np.ndarray) -> np.ndarray:
    """Wet-antenna loss (dB, both ends together), nearly independent of path length: a saturating function of the
    rain rate (rising with a ~2 min lag) that dries exponentially over 10-60 min (Leijnse et al. 2008; Schleiss et
    al. 2013 describe the behaviour; the amplitudes 2-6 dB at 25-40 GHz are the family's choice)."""
    f = hop.frequency_ghz
    wmax = rng.uniform(2.0, 6.0) * min(1.0, (f / 25.0) ** 1.5)
    r0 = rng.uniform(1.0, 4.0)
    target = wmax * (1.0 - np.exp(-mean_rate / r0))
    tau_dry = rng.uniform(600.0, 3600.0)
    tau_wet = 120.0
    out = np.empty_like(target)
    w = 0.0
    # recursive filter: fast wetting, slow drying (coarse 10-s steps for speed)
    step = 10
    idx = np.arange(0, target.size, step)
    vals = np.empty(idx.size)
    for j, i in enumerate(idx):
        tgt = target[i]
        tau = tau_wet if tgt > w else tau_dry
        if _VARIANT and tgt <= w and w > 0.5 * wmax:   # B2: drops shed fast first, the film dries slowly
            tau = tau_dry / 4.0
        w += (tgt - w) * (1.0 - math.exp(-step / tau))
        vals[j] = w
    out[:] = np.interp(np.arange(target.size), idx, vals)
    return out


# ---------------------------------------------------------------------------------------------------------------
# clear-air mechanisms

def _doppler_scatter(rng, n: int, fm_hz: float, spectrum: str = "gauss") -> np.ndarray:
    """Unit-power complex Gaussian scatter sampled at 1 s, with a Gaussian Doppler power spectrum exp(-(f / fm)^2)
    or (``spectrum="flat"``) a flat band |f| < fm."""
    spec = rng.standard_normal(n) + 1j * rng.standard_normal(n)
    f = np.fft.fftfreq(n, d=1.0)
    if spectrum == "gauss":
        shape = np.exp(-0.5 * (f / fm_hz) ** 2)
    elif spectrum == "jakes":   # U-shaped band, 1 / sqrt(1 - (f / fm)^2) power spectrum (B2)
        inside = np.abs(f) < fm_hz
        shape = np.where(inside, (1.0 - np.minimum((f / fm_hz) ** 2, 0.999)) ** -0.25, 0.0)
    else:
        shape = (np.abs(f) < fm_hz).astype(float)
    g = np.fft.ifft(spec * shape)
    return g / np.sqrt(np.mean(np.abs(g) ** 2))


def _multipath(rng, hop: Hop, n: int, p0_pct: float) -> dict[str, np.ndarray]:
    """Rician multipath over a night: K(t) slowly varying (minimum from p0), contribution -10 log10(|LOS + scatter|^2)
    (positive = fade, negative = upfade).  Channels share the scatter with correlation 0.8-0.95 (H/V) or 0.5-0.9
    (the two directions of an FDD hop)."""
    t = np.arange(n, dtype=float)
    lh = _local_hour(t)
    start_h = rng.uniform(22.0, 26.0) % 24.0
    length_h = rng.uniform(2.0, 6.0)
    since = (lh - start_h) % 24.0
    inside = since < length_h
    # K in dB: 25 dB at the episode edges down to k_min at its middle, with slow wander
    if p0_pct >= 30:
        kmin_db = rng.uniform(-10.0, 2.0)
    elif p0_pct >= 5:
        kmin_db = rng.uniform(0.0, 6.0)
    else:
        kmin_db = rng.uniform(4.0, 10.0)
    phase = np.clip(since / length_h, 0.0, 1.0)
    shape = np.sin(np.pi * phase) ** 0.5
    wander_s = 300.0 if _VARIANT else 1200.0    # B2: K wanders faster
    k_db = 25.0 - (25.0 - kmin_db) * shape + 3.0 * _smooth_noise(rng, n, wander_s)
    kl = 10.0 ** (k_db / 10.0)
    fm = 10.0 ** rng.uniform(-2.0, 0.0)
    spectrum = "gauss" if rng.random() < 0.5 else "flat"
    if _VARIANT:
        spectrum = "jakes"
    base = _doppler_scatter(rng, n, fm, spectrum)
    rho = rng.uniform(0.8, 0.95) if hop.polarization == "dual" else rng.uniform(0.5, 0.9)
    out = {}
    for i, ch in enumerate(hop.channels):
        g = base if i == 0 else rho * base + math.sqrt(1 - rho ** 2) * _doppler_scatter(rng, n, fm, spectrum)
        env = np.sqrt(kl / (kl + 1.0)) + np.sqrt(1.0 / (kl + 1.0)) * g
        a = -10.0 * np.log10(np.maximum(np.abs(env) ** 2, 1e-6))
        out[ch] = np.where(inside, a, 0.0)
    return out


def _refractive(rng, hop: Hop, n: int) -> np.ndarray:
    """Slow refractive fades (sub-refraction / ducting): 1-2 smooth fades of 3-20 dB lasting 20 min-3 h, at night or
    morning local time, with a slow 10-min ripple; the same on every channel of the hop."""
    t = np.arange(n, dtype=float)
    out = np.zeros(n)
    for _ in range(int(rng.integers(1, 3))):
        depth = rng.uniform(3.0, 20.0)
        dur = rng.uniform(1200.0, 3 * 3600.0)
        loc_start = rng.uniform(20.0, 32.0)   # 20:00 to 08:00 local
        utc_off = REGION_LON / 15.0
        t_start = ((loc_start - utc_off - START_UTC.hour) % 24.0) * 3600.0
        if t_start + dur > n:
            t_start = max(0.0, n - dur - 3600.0)
        tau = (t - t_start) / dur
        skew = rng.uniform(0.3, 0.7)
        rise = np.clip(tau / skew, 0, 1)
        fall = np.clip((1 - tau) / (1 - skew), 0, 1)
        if _VARIANT:   # B2: a layer moving over the path: linear edges over the first / last 15 %, flat between
            edge = np.minimum(np.clip(tau / 0.15, 0, 1), np.clip((1 - tau) / 0.15, 0, 1))
            env = np.where((tau >= 0) & (tau <= 1), edge, 0.0)
        else:
            env = np.where((tau >= 0) & (tau <= 1), np.sin(0.5 * np.pi * np.minimum(rise, fall)) ** 2, 0.0)
        ripple = 1.0 + 0.12 * _smooth_noise(rng, n, 600.0)
        out += depth * env * ripple
    return out


def refractive_possible(hop: Hop) -> bool:
    """Geometry allows slow refractive (sub-refraction diffraction) fades: path longer than 15 km and mid-path
    clearance at k = 2/3 below 0.6 F1 (the 0.6 F1 clearance rule is common practice)."""
    if hop.length_km < 15.0:
        return False
    half = hop.length_km / 2.0
    line = (hop.ground_a_m + hop.ground_b_m) / 2.0 + hop.antenna_height_m
    terrain = (hop.ground_a_m + hop.ground_b_m) / 2.0 + hop.obstacle_m
    clearance = line - terrain - earth_bulge_m(half, half, 2.0 / 3.0)
    return clearance < 0.6 * fresnel_radius_m(half, half, hop.frequency_ghz)


# ---------------------------------------------------------------------------------------------------------------
# drawing hops

def _draw_geometry(rng, f_lo, f_hi, d_lo, d_hi) -> tuple[float, float]:
    f = math.exp(rng.uniform(math.log(f_lo), math.log(f_hi)))
    dmax = min(d_hi, max(1.0, 60.0 * (6.0 / f) ** 1.2))
    dmin = min(d_lo, dmax / 2)
    d = math.exp(rng.uniform(math.log(dmin), math.log(dmax)))
    return f, d


HOP_CLASSES = (
    # (share, f_lo, f_hi, d_lo, d_hi): long low-frequency hops (multipath, refraction), mid hops, short high-frequency
    # hops (wet antenna), and anything across the whole range
    (0.30, 6.0, 13.0, 15.0, 60.0),
    (0.25, 13.0, 30.0, 3.0, 20.0),
    (0.25, 25.0, 80.0, 0.2, 1.0),
    (0.20, 6.0, 80.0, 0.2, 60.0),
)


def _draw_class(rng) -> tuple[float, float]:
    u, acc = rng.random(), 0.0
    for share, f_lo, f_hi, d_lo, d_hi in HOP_CLASSES:
        acc += share
        if u < acc:
            return _draw_geometry(rng, f_lo, f_hi, d_lo, d_hi)
    return _draw_geometry(rng, 6.0, 80.0, 0.2, 60.0)


def _new_hop(rng, link_id, f, d, xy, network="") -> Hop:
    pol = rng.choice(["H", "V", "dual"], p=[0.3, 0.3, 0.4])
    directions = bool(pol != "dual" and rng.random() < 0.5)
    nominal = rng.uniform(-48.0, -32.0)
    margin = rng.uniform(25.0, 45.0)
    ground = rng.uniform(100.0, 600.0)
    g_b = ground + rng.uniform(-80.0, 80.0)
    mast = rng.uniform(15.0, 60.0) if d > 3 else rng.uniform(10.0, 40.0)
    xa, ya, xb, yb = xy
    la = _km_to_deg(xa, ya)
    lb = _km_to_deg(xb, yb)
    hop = Hop(
        link_id=link_id, frequency_ghz=f, length_km=d, polarization=str(pol), directions=directions,
        threshold_dbm=nominal - margin, nominal_dbm=nominal, r001_mmh=rng.uniform(25.0, 60.0),
        antenna_height_m=mast, ground_a_m=ground, ground_b_m=g_b,
        site_a=(REGION_LAT + la[0], REGION_LON + la[1]), site_b=(REGION_LAT + lb[0], REGION_LON + lb[1]),
        network=network, obstacle_m=float(rng.uniform(0.0, 60.0)),
    )
    if rng.random() < 0.3:
        hop.atpc_range_db = float(rng.uniform(10.0, 20.0))
        hop.tsl_dbm = float(rng.uniform(0.0, 8.0))
    return hop


def _storm(rng, centre_xy, spread_km, t_mid_s, kind: str) -> RainField:
    speed = rng.uniform(10.0, 60.0)
    ang = rng.uniform(0, 2 * math.pi)
    vx, vy = speed * math.cos(ang), speed * math.sin(ang)
    cx, cy = centre_xy
    fld = RainField(vx, vy, cx, cy)
    if kind in ("stratiform", "storm"):
        fld.strat.append((rng.uniform(1.0, 5.0), t_mid_s, rng.uniform(1.0, 4.0) * 3600.0, rng.random()))
    if kind in ("convective", "storm"):
        for _ in range(int(rng.integers(1, 4))):
            t0 = t_mid_s + rng.uniform(-2400.0, 2400.0)
            # place the cell upstream so that it crosses the centre region near t0
            off = rng.uniform(-spread_km, spread_km, size=2)
            sign = 1.0 if rng.random() < 0.5 else -1.0   # the sign picks the cell profile (see RainField.rate)
            fld.cells.append((rng.uniform(20.0, 150.0), cx + off[0], cy + off[1], t0, sign * rng.uniform(1.0, 4.0),
                              rng.uniform(600.0, 2400.0)))
    return fld


def _clear_air_taper(mean_rate: np.ndarray, wet_mmh: float = 0.1, guard_s: int = 2700, ramp_s: int = 600
                     ) -> np.ndarray:
    """1 in clear air, 0 while it rains on the path and 45 min either side, with 10-min ramps: multipath and
    refractive fades need a calm stratified atmosphere, which rain and its convection break up (common practice)."""
    wet = (mean_rate > wet_mmh).astype(float)
    c = np.concatenate([[0.0], np.cumsum(wet)])
    n = wet.size
    i = np.arange(n)
    near = c[np.minimum(i + guard_s + 1, n)] - c[np.maximum(i - guard_s, 0)] > 0
    dry = (~near).astype(float)
    c2 = np.concatenate([[0.0], np.cumsum(dry)])
    lo, hi = np.maximum(i - ramp_s // 2, 0), np.minimum(i + ramp_s // 2 + 1, n)
    return (c2[hi] - c2[lo]) / (hi - lo)


def _hop_day(rng, hop: Hop, xy, n: int, fld: RainField | None) -> HopTruth:
    zero = np.zeros(n, dtype=np.float32)
    contrib = {ch: {c: zero.copy() for c in CAUSES} for ch in hop.channels}
    lost = {ch: np.zeros(n, dtype=bool) for ch in hop.channels}
    clear = np.ones(n)
    if fld is not None:
        rain, mean_rate = _rain_on_hop(rng, hop, xy, fld, n)
        clear = _clear_air_taper(mean_rate)
        wet = _wet_antenna(rng, hop, mean_rate)
        for ch in hop.channels:
            contrib[ch]["rain"] += (rain[ch] + wet).astype(np.float32)
        hop.mechanisms.append("rain(%s)" % ("strat" if fld.strat and not fld.cells else
                                            "conv" if fld.cells and not fld.strat else "storm"))
    p0 = p530_multipath_p0_pct(hop.length_km, hop.frequency_ghz, hop.ground_a_m + hop.antenna_height_m,
                               hop.ground_b_m + hop.antenna_height_m)
    if p0 >= 1.0 and rng.random() < 0.85:
        mp = _multipath(rng, hop, n, p0)
        for ch in hop.channels:
            contrib[ch]["multipath"] += (mp[ch] * clear).astype(np.float32)
        hop.mechanisms.append("multipath(p0=%.1f%%)" % p0)
    if refractive_possible(hop) and rng.random() < 0.9:
        rf = _refractive(rng, hop, n)
        for ch in hop.channels:
            contrib[ch]["refractive"] += (rf * clear).astype(np.float32)
        hop.mechanisms.append("refractive")
    if rng.random() < 0.25:
        # an antenna knocked (one end: every channel) and realigned 1-6 h later, or a late step left standing
        if rng.random() < 0.6:
            at = int(rng.uniform(0.1, 0.7) * n)
            end = min(n, at + int(rng.uniform(1, 6) * 3600))
        else:
            at = int(rng.uniform(0.75, 0.95) * n)
            end = n
        step = rng.uniform(3.0, 10.0)
        for ch in hop.channels:
            contrib[ch]["level_shift"][at:end] += step
        hop.mechanisms.append("level_shift")
    if rng.random() < 0.2:
        at = int(rng.uniform(0.05, 0.95) * n)
        dur = int(rng.uniform(60, 2400))
        chans = hop.channels if rng.random() < 0.5 else hop.channels[:1]
        for ch in chans:
            lost[ch][at:at + dur] = True
        hop.mechanisms.append("signal_loss")
    rsl, tsl = {}, ({} if hop.atpc_range_db > 0 else None)
    equipment_lost = {}
    for ch in hop.channels:
        total = sum(contrib[ch].values()).astype(float)
        noise = 0.15 * rng.standard_normal(n)
        if hop.atpc_range_db > 0:
            # path attenuation excluding equipment steps drives ATPC; boost in 0.5 dB steps up to the range
            want = np.maximum(total, 0.0)
            if _VARIANT:   # B2: a slower control loop (first-order lag of 5-20 s)
                a = math.exp(-1.0 / rng.uniform(5.0, 20.0))
                want = lfilter([1.0 - a], [1.0, -a], want)
            boost = np.clip(np.floor(want / 0.5) * 0.5, 0.0, hop.atpc_range_db)
            tsl[ch] = np.round(hop.tsl_dbm + boost, 1)
            level = hop.nominal_dbm - total + boost + noise
        else:
            level = hop.nominal_dbm - total + noise
        level = np.round(level, 1)
        equipment_lost[ch] = lost[ch].copy()
        floor_hit = level <= FLOOR_DBM + 1.0
        lost[ch] |= floor_hit
        level[lost[ch]] = np.nan
        rsl[ch] = level
    return HopTruth(hop, contrib, lost, rsl, tsl, equipment_lost)


@dataclass
class World:
    seed: int
    hops: list[HopTruth]


def make_world(seed: int, *, n_s: int = DURATION_S) -> World:
    """One seed: a storm-crossed network of 4-6 hops plus 3-5 independent hops (see the module docstring).
    Seeds in VARIANT_SEEDS are made by the changed process B2."""
    global _VARIANT
    _VARIANT = seed in VARIANT_SEEDS
    try:
        return _make_world(seed, n_s)
    finally:
        _VARIANT = False


def _make_world(seed: int, n_s: int) -> World:
    rng = np.random.default_rng(1_000_003 * seed + 17)
    truths: list[HopTruth] = []
    # --- network: sites scattered over ~20 x 20 km, hops between near pairs
    net = f"N{seed:03d}"
    n_hops = int(rng.integers(4, 7))
    sites = rng.uniform(0.0, 20.0, size=(n_hops + 3, 2))
    t_mid = rng.uniform(0.15, 0.85) * n_s
    fld = _storm(rng, (10.0, 10.0), 10.0, t_mid, "storm")
    # move the storm so it crosses the network centre at t_mid
    for i in range(n_hops):
        a = i
        dists = np.hypot(*(sites - sites[a]).T)
        dists[a] = np.inf
        b = int(np.argmin(dists)) if rng.random() < 0.5 else int(rng.integers(0, len(sites)))
        if b == a:
            b = (a + 1) % len(sites)
        d = float(np.hypot(*(sites[b] - sites[a])))
        if d < 0.3:
            sites[b] = sites[a] + rng.uniform(0.5, 3.0, size=2)
            d = float(np.hypot(*(sites[b] - sites[a])))
        f = math.exp(rng.uniform(math.log(15.0), math.log(42.0)))
        if d > 60.0 * (6.0 / f) ** 1.2:  # too long for this band: shorten towards a
            frac = 0.8 * 60.0 * (6.0 / f) ** 1.2 / d
            sites[b] = sites[a] + frac * (sites[b] - sites[a])
            d = float(np.hypot(*(sites[b] - sites[a])))
        xy = (sites[a][0], sites[a][1], sites[b][0], sites[b][1])
        hop = _new_hop(rng, f"{net}-H{i + 1}", f, max(d, 0.2), xy, network=net)
        truths.append(_hop_day(rng, hop, xy, n_s, fld))
    # --- independent hops across the whole range
    for i in range(int(rng.integers(3, 6))):
        f, d = _draw_class(rng)
        ox, oy = rng.uniform(100.0, 400.0, size=2)   # far from the network
        ang = rng.uniform(0, 2 * math.pi)
        xy = (ox, oy, ox + d * math.cos(ang), oy + d * math.sin(ang))
        hop = _new_hop(rng, f"S{seed:03d}-{i + 1}", f, d, xy)
        u = rng.random()
        if u < 0.35:
            kind = "stratiform"
        elif u < 0.7:
            kind = "convective"
        else:
            kind = None
        if kind is not None:
            # convective in the afternoon local time, stratiform any time
            if kind == "convective":
                t_mid_h = rng.uniform(13.0, 20.0) - REGION_LON / 15.0 - START_UTC.hour
                t_mid_i = (t_mid_h % 24.0) * 3600.0
            else:
                t_mid_i = rng.uniform(0.2, 0.8) * n_s
            fld_i = _storm(rng, ((xy[0] + xy[2]) / 2, (xy[1] + xy[3]) / 2), max(1.0, d / 2), t_mid_i, kind)
        else:
            fld_i = None
        truths.append(_hop_day(rng, hop, xy, n_s, fld_i))
    return World(seed, truths)


# ---------------------------------------------------------------------------------------------------------------
# writing

@functools.lru_cache(maxsize=8)
def _times_text(n: int, step: int) -> np.ndarray:
    t = START_UTC + pd.to_timedelta(np.arange(0, n, step), unit="s")
    return np.asarray(t.strftime("%Y-%m-%dT%H:%M:%SZ"), dtype=object)


# resolution of the levels as written [dB]: 0.1 by default; run.py --level-step-db 1 writes whole dB as many radios
# report them (a robustness check of the same worlds, not another family)
LEVEL_STEP_DB = 0.1


def _fmt(values: np.ndarray) -> np.ndarray:
    """Levels as written: rounded to ``LEVEL_STEP_DB``, a lost signal as the receiver floor value."""
    v = np.nan_to_num(np.asarray(values, dtype=float), nan=FLOOR_DBM)
    if LEVEL_STEP_DB == 0.1:
        return np.round(v, 1)
    return np.round(np.round(v / LEVEL_STEP_DB) * LEVEL_STEP_DB, 3)


def _channel_columns(truth: HopTruth, ch: str, shape: str, n: int) -> dict[str, np.ndarray]:
    rsl = truth.rsl_dbm[ch]
    tsl = truth.tsl_dbm[ch] if truth.tsl_dbm is not None else None
    if shape in ("1s", "1min"):
        step = 1 if shape == "1s" else 60
        cols = {"rsl_dbm": _fmt(rsl[::step])}
        if tsl is not None:
            cols["tsl_dbm"] = _fmt(tsl[::step])
        return cols
    m = n // 900
    r = rsl[: m * 900].reshape(m, 900)
    lost_any = np.isnan(r)
    all_lost = lost_any.all(axis=1)
    rmin = np.where(lost_any.any(axis=1), FLOOR_DBM, np.where(lost_any, np.inf, r).min(axis=1))
    rmax = np.where(all_lost, FLOOR_DBM, np.where(lost_any, -np.inf, r).max(axis=1))
    cnt = np.maximum((~lost_any).sum(axis=1), 1)
    ravg = np.where(all_lost, FLOOR_DBM, np.where(lost_any, 0.0, r).sum(axis=1) / cnt)
    cols = {"RSL min 15min (dBm)": _fmt(rmin)}
    if shape == "15min_mam":
        cols["RSL avg 15min (dBm)"] = _fmt(ravg)
    cols["RSL max 15min (dBm)"] = _fmt(rmax)
    if tsl is not None:
        ts = tsl[: m * 900].reshape(m, 900)
        cols["TSL min 15min (dBm)"] = _fmt(ts.min(axis=1))
        if shape == "15min_mam":
            cols["TSL avg 15min (dBm)"] = _fmt(ts.mean(axis=1))
        cols["TSL max 15min (dBm)"] = _fmt(ts.max(axis=1))
    return cols


def hop_frame(truth: HopTruth, shape: str) -> pd.DataFrame:
    """The hop's log in one of SHAPES as a DataFrame (long layout, time-major: one row per time and channel;
    15-min rows are stamped with the interval start)."""
    return hop_table(truth, shape).to_pandas()


def hop_table(truth: HopTruth, shape: str) -> pa.Table:
    hop = truth.hop
    n = next(iter(truth.rsl_dbm.values())).size
    chans = hop.channels
    per = [_channel_columns(truth, ch, shape, n) for ch in chans]
    m = next(iter(per[0].values())).size
    step = {"1s": 1, "1min": 60}.get(shape, 900)
    times = _times_text(m * step, step)
    nc = len(chans)
    cols = {
        "time_utc": pa.array(np.repeat(times, nc), type=pa.string()),
        "link_id": pa.array([hop.link_id] * (m * nc), type=pa.string()),
        "channel": pa.array(np.tile(np.array(chans, dtype=object), m), type=pa.string()),
    }
    for name in per[0]:
        cols[name] = pa.array(np.stack([p[name] for p in per], axis=1).ravel())
    return pa.table(cols)


def write_world(world: World, out_dir: str | Path, shapes=SHAPES) -> dict[str, list[Path]]:
    """Write links.csv, one CSV per hop per shape (``<out>/<shape>/<link_id>.csv``) and the truth
    (``<out>/truth/<link_id>.npz``: per channel cause code per second and the dB contribution of each cause)."""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    pd.DataFrame([t.hop.links_row() for t in world.hops]).to_csv(out / "links.csv", index=False)
    files: dict[str, list[Path]] = {}
    for shape in shapes:
        (out / shape).mkdir(exist_ok=True)
        for t in world.hops:
            path = out / shape / f"{t.hop.link_id}.csv"
            pacsv.write_csv(hop_table(t, shape), str(path))
            files.setdefault(shape, []).append(path)
    (out / "truth").mkdir(exist_ok=True)
    for t in world.hops:
        arrays = {}
        for ch in t.hop.channels:
            key = ch.replace(">", "_")
            arrays[f"{key}__cause"] = t.cause_codes(ch)
            for c in CAUSES:
                arrays[f"{key}__{c}_db"] = t.contributions[ch][c].astype(np.float16)
        np.savez_compressed(out / "truth" / f"{t.hop.link_id}.npz", **arrays)
    return files


def worlds(seeds) -> list[World]:
    return [make_world(s) for s in seeds]


def fit_half(seeds=FIT_SEEDS) -> list[World]:
    """The FIT half (seeds 1-50), the only part of this family anything may be tuned on."""
    bad = set(seeds) - set(FIT_SEEDS)
    if bad:
        raise ValueError(f"seeds {sorted(bad)} are in the held-out half")
    return worlds(seeds)


def fit_half_files(out_dir: str | Path, seeds=FIT_SEEDS, shapes=SHAPES) -> list[tuple[World, Path]]:
    """Write the fit-half worlds to ``<out_dir>/seedNNN/`` (links.csv, one folder per shape, truth/) and return
    (world, folder) pairs: the data a classifier may be fitted on."""
    out = []
    for world in fit_half(seeds):
        folder = Path(out_dir) / f"seed{world.seed:03d}"
        write_world(world, folder, shapes)
        out.append((world, folder))
    return out
