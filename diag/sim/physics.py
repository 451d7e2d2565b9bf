"""The physics of each effect the simulator puts on a hop, one function per effect, and the random building blocks.

Effects (``Effect.kind``) and their physics:

``rain``         path-average rain rate: one to a few convective cells with a fast rise and slower decay
                 over a stratiform background, lognormal internal variability with minutes of correlation;
                 attenuation gamma_R(R) x L by ITU-R P.838-3 per polarisation (so H fades more than V above
                 ~10 GHz), plus wet-antenna loss that saturates at low rain rate and dries out over tens of
                 minutes after the rain; XPD degraded by the equiprobable rain relation XPD = U - V(f) log CPA
                 (ITU-R P.530 §4).  ``profile = "constant"`` gives a constant rain rate (the P.838 check).
``multipath``    clear-air multipath: a Rician envelope, LOS part plus a complex scatter component with a
                 Gaussian Doppler spectrum (rms width ``fade_rate_hz``/sqrt 2, so the Rayleigh crossing rate
                 is sqrt(2 pi) f_m rho exp(-rho^2) with f_m = ``fade_rate_hz``); the K-factor falls from
                 ``k_max`` to ``k_min`` (0 = Rayleigh) in the middle of the activity window; upfades occur
                 naturally; the scatter parts of different channels are correlated by ``correlation``
                 (complex coefficient); XPD dips when the co-polar signal fades (the leak fades
                 independently).  ``repeat_days`` repeats the window nightly.
``refractive``   slow smooth fade (diffraction / sub-refraction or ducting) of ``depth_db`` lasting
                 ``duration_s`` (tens of minutes to hours), nearly equal on all channels.
``level_shift``  persistent step of ``step_db`` (positive = lower level) from ``start`` (optionally ramped
                 over ``ramp_s``; restored after ``duration_s`` when given); ``tilt_deg`` adds a
                 polarisation tilt: co-polar loss -20 log cos(tilt) and XPD limited to 20 log cot(tilt).
``drift``        slow linear level change of ``db_per_week`` (positive = lower level), held after its end.
``signal_loss``  receiver-floor episode (equipment or power): the level drops abruptly to ``floor_dbm``.
``gap``          polling gap: no rows at all for ``duration_s``.

Both directions of one hop (``LinkSpec.directions``): on a single-polarised hop (H or V) the receiver at each
end logs the signal the other end sends, giving two channels named by direction (``direction_names``, default
"A>B" = sent from end A, received and logged at end B, and "B>A").  How each cause treats the two directions:

- rain: the same path and the same polarisation, so both directions get the same P.838 attenuation and the same
  wet-antenna loss (each direction passes through both antennas' radomes).  Go and return differ in frequency by
  the duplex spacing (a few per cent of the carrier), which changes gamma_R by a few per cent; that difference
  is ignored here (both use ``frequency_ghz``).
- multipath: go and return differ in frequency by the duplex spacing, and frequency-selective fading decorrelates
  them only partly: the LOS part and the K-factor are common and the scatter parts are two Rice/Rayleigh
  envelopes whose complex scatter has correlation ``correlation`` (default ``DIRECTION_MP_CORRELATION`` = 0.9 on
  a directions hop instead of 0.3 between H and V).  0.9 is a modelling choice, not a measured figure: strongly
  but not fully correlated, as for a duplex spacing inside the coherence bandwidth of a clear-air multipath
  channel (common practice, from memory; P.530 frequency diversity rests on the same partial decorrelation).
- refractive: the same path, ~equal on both directions (as on H and V).
- level_shift / drift: an antenna knocked off its alignment (or a polarisation tilt) at one end changes the gain
  of the one antenna that both transmits and receives there, so the step is common to both directions (common
  practice).  ``channels`` (level_shift without tilt) limits a step to some directions: a transmitter that drops
  part of its power lowers only the direction it feeds.
- signal_loss: an equipment fault (a transmitter off, a receiver failed) loses only the direction it serves:
  give ``channels`` (default: all channels).
- ``channel_offset_db`` is the clear-sky level of the second direction relative to the first (two transmitters
  and receivers are never exactly alike).  No XPD is logged (single polarisation).

Every random draw comes from a generator seeded by (seed, CRC-32 of the link id, effect index) (:func:`_rng`).
"""
from __future__ import annotations

import logging
import math
import warnings
import zlib

import numpy as np

from diag.models import p530
from diag.sim.spec import Effect

log = logging.getLogger("diag.sim.simulate")   # the simulator's logger, as before the split


# ------------------------------------------------------------------------------------------------------------
# random building blocks


def _rng(seed: int, link_id: str, index: int) -> np.random.Generator:
    return np.random.default_rng(
        np.random.SeedSequence([int(seed) & 0xFFFFFFFF, zlib.crc32(link_id.encode()), index])
    )


def _smooth_noise(
    rng: np.random.Generator,
    n: int,
    rms_bandwidth_samples: float,
    *,
    count: int = 1,
    complex_valued: bool = False,
) -> np.ndarray:
    """Unit-variance stationary Gaussian noise with a Gaussian power spectrum of rms width
    ``rms_bandwidth_samples`` (cycles per sample), shape (count, n); circular wrap avoided by padding."""
    width = max(float(rms_bandwidth_samples), 1e-9)
    pad = int(min(4.0 / width, 10 * n)) + 16
    nfft = 1 << int(math.ceil(math.log2(n + pad)))
    freq = np.fft.fftfreq(nfft)
    gain = np.exp(-(freq**2) / (4.0 * width**2))  # |H|^2 = Gaussian spectrum exp(-f^2 / (2 s^2))
    gain /= math.sqrt(np.mean(gain**2))  # output variance = input variance
    if complex_valued:
        white = (rng.standard_normal((count, nfft)) + 1j * rng.standard_normal((count, nfft))) / math.sqrt(
            2.0
        )
        out = np.fft.ifft(np.fft.fft(white, axis=1) * gain, axis=1)
    else:
        white = rng.standard_normal((count, nfft))
        out = np.fft.irfft(np.fft.rfft(white, axis=1) * gain[: nfft // 2 + 1], n=nfft, axis=1)
    return out[:, :n]


def _window(start_s: float, duration_s: float | None, t0: float, dt: float, n: int) -> tuple[int, int]:
    """Sample index range [i0, i1) covered by an effect."""
    i0 = int(math.ceil((start_s - t0) / dt - 1e-9))
    i1 = n if duration_s is None else int(math.ceil((start_s + duration_s - t0) / dt - 1e-9))
    return max(i0, 0), min(max(i1, 0), n)


# ------------------------------------------------------------------------------------------------------------
# the causes


def _rain_rate(rng, effect: Effect, dt: float) -> np.ndarray:
    """Path-average rain rate [mm/h] on the effect's own grid (duration / dt samples)."""
    n = max(int(round(effect.duration_s / dt)), 1)
    p = effect.params
    peak = float(p.get("peak_mmh", 30.0))
    if p.get("profile", "storm") == "constant":
        return np.full(n, peak)
    t = np.arange(n) * dt / effect.duration_s  # 0..1 through the storm
    cells = int(p.get("cells", rng.integers(1, 4)))
    rate = np.zeros(n)
    for i in range(cells):
        centre = rng.uniform(0.2, 0.6)
        rise = rng.uniform(0.04, 0.12)  # convective onset: minutes
        decay = rng.uniform(0.08, 0.25)  # slower decay
        amplitude = 1.0 if i == 0 else rng.uniform(0.25, 0.8)
        shape = np.where(t < centre, np.exp(-(((t - centre) / rise) ** 2)), np.exp(-(t - centre) / decay))
        rate += amplitude * shape
    # stratiform background with soft edges, a few percent of the convective peak
    edge = np.clip(np.minimum(t, 1.0 - t) / 0.1, 0.0, 1.0)
    rate += rng.uniform(0.03, 0.1) * np.sin(0.5 * np.pi * edge) ** 2
    # internal variability: lognormal, correlation of a few minutes
    sigma = float(p.get("variability", 0.35))
    corr_s = float(p.get("variability_s", 180.0))
    z = _smooth_noise(rng, n, dt / corr_s)[0]
    rate *= np.exp(sigma * z - 0.5 * sigma**2)
    rate *= np.sin(0.5 * np.pi * np.clip(np.minimum(t, 1.0 - t) / 0.02, 0.0, 1.0)) ** 2  # starts and ends dry
    return rate * (peak / rate.max())


def _wet_antenna_db(
    rate_mmh: np.ndarray, dt: float, wet_max_db: float, wetting_s: float, drying_s: float
) -> np.ndarray:
    """Wet-antenna loss [dB] of both antennas: first-order wetting towards wet_max (1 - exp(-R / 2 mm/h)),
    exponential drying after the rain.  Shape after Schleiss et al., IEEE GRSL 10, 2013 (saturating with R,
    drying over tens of minutes); the constants here are illustrative (common practice, not fitted)."""
    if wet_max_db <= 0:
        return np.zeros_like(rate_mmh)
    step = max(1, int(round(10.0 / dt)))  # integrate on a ~10 s grid, interpolate back
    coarse = rate_mmh[::step]
    target = wet_max_db * (1.0 - np.exp(-coarse / 2.0))
    out = np.empty_like(target)
    level = 0.0
    a_wet = 1.0 - math.exp(-step * dt / wetting_s)
    a_dry = 1.0 - math.exp(-step * dt / drying_s)
    for i, goal in enumerate(target):  # a short loop: one value per 10 s of storm
        level += (goal - level) * (a_wet if goal > level else a_dry)
        out[i] = level
    return np.interp(np.arange(len(rate_mmh)), np.arange(len(out)) * step, out)


def _rain_xpd_db(copolar_attenuation_db: np.ndarray, frequency_ghz: float) -> np.ndarray:
    """XPD in rain [dB] for a co-polar attenuation (ITU-R P.530-17 §4.2 equiprobable relation, via
    :func:`diag.models.p530.xpd_rain_db`); +inf where there is no rain (no rain leak).  Outside 8-35 GHz the
    relation is extrapolated (the model's warning is silenced here: the simulator accepts it on purpose)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        xpd = np.asarray(p530.xpd_rain_db(copolar_attenuation_db, frequency_ghz), dtype=float)
    return np.where(copolar_attenuation_db > 0.0, xpd, np.inf)


def _multipath(
    rng,
    effect: Effect,
    default_correlation: float,
    dt: float,
    i0: int,
    i1: int,
    nch: int,
    out: np.ndarray,
    xpd_delta: np.ndarray,
    record,
) -> None:
    """Rician envelope with a K-factor that falls to k_min in the middle of the window; the channels' scatter
    parts have complex correlation ``correlation`` (default ``default_correlation``)."""
    p = effect.params
    m = i1 - i0
    k_min, k_max = float(p.get("k_min", 0.0)), float(p.get("k_max", 30.0))
    rate_hz = float(p.get("fade_rate_hz", 0.05))
    rho = float(p.get("correlation", default_correlation))
    s = np.linspace(0.0, 1.0, m)
    plateau = float(p.get("plateau", 0.5))
    edge = max((1.0 - plateau) / 2.0, 1e-9)
    activity = np.sin(0.5 * np.pi * np.clip(np.minimum(s, 1.0 - s) / edge, 0.0, 1.0)) ** 2  # 0 -> 1 -> 0
    k = k_max + (k_min - k_max) * activity
    # fade_rate_hz is f_m of the Rayleigh crossing-rate formula N_R = sqrt(2 pi) f_m rho exp(-rho^2)
    # (Rappaport
    # 2nd ed. §5.7.1, from memory); for a Gaussian spectrum that formula holds with f_m = sqrt(2) x rms width
    bandwidth = rate_hz / math.sqrt(2.0) * dt  # rms spectral width in cycles per sample
    if bandwidth > 0.35:
        log.warning("multipath fade rate %.3g Hz is near the sampling rate; fades are aliased", rate_hz)
    # scatter parts: a common part (correlation rho) plus independent parts per channel, and one leak per
    # channel
    noise = _smooth_noise(rng, m, bandwidth, count=2 * nch + 1, complex_valued=True)
    common = noise[0]
    los = np.sqrt(k / (k + 1.0))
    diffuse = np.sqrt(1.0 / (k + 1.0))
    for c in range(nch):
        scatter = math.sqrt(rho) * common + math.sqrt(1.0 - rho) * noise[1 + c]
        power = np.abs(los + diffuse * scatter) ** 2
        fade = -10.0 * np.log10(np.maximum(power, 1e-12))  # positive = fade, negative = upfade
        leak = np.abs(los + diffuse * noise[1 + nch + c]) ** 2
        out[c, i0:i1] += fade
        xpd_delta[c, i0:i1] += -fade - 10.0 * np.log10(np.maximum(leak, 1e-12))  # XPD - F_co + F_leak
        record(c, fade.max())


def _quantise(values: np.ndarray, step_db: float) -> np.ndarray:
    if not step_db or step_db <= 0:
        return values
    decimals = max(0, -int(math.floor(math.log10(step_db) + 1e-9)))
    return np.round(np.round(values / step_db) * step_db, decimals)
