"""Labelled synthetic link logs from the physics of each fading cause (tests, benchmarks, demo network).

A :class:`LinkSpec` describes one hop (the :class:`diag.links.Link` fields plus what only a simulation
needs: clear-sky level, polarisation tilt, ATPC, sampling interval, time span, noise, quantisation, receiver
floor) and a tuple of :class:`Effect` (what happens to it).  :func:`simulate_link` returns a
:class:`SimResult`:

- ``table``          the normalised long table (:mod:`diag.schema`) that a perfect reader would return for
                     the log: RSL per channel, TSL when ATPC is on, XPD for dual-polarised hops;
- ``truth_samples``  per time step and channel the attenuation contribution of each cause [dB] (``rain``,
                     ``multipath``, ``refractive``, ``level_shift``, ``signal_loss``), ``total_fade_db``
                     (their sum; negative = upfade), ``cause`` (the largest contribution where
                     ``total_fade_db`` > 3 dB, else ""), ``rain_rate_mmh`` (path average) and ``logged``
                     (False inside polling gaps);
- ``truth_events``   one row per effect and channel: start/end, cause, peak contribution, parameters used;
- ``file_defects``   what the writers add to a file (duplicated rows, adjacent rows swapped): a normalising
                     reader removes them again, so ``table`` holds none of them.

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

Everything is vectorised numpy: a week at 1 s for a dual-polarised hop takes a few seconds.  Same seed,
same numbers: every random draw comes from a generator seeded by (seed, CRC-32 of the link id, effect
index).
"""

from __future__ import annotations

import dataclasses
import logging
import math
import warnings
import zlib
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np
import pandas as pd

from diag import schema
from diag.errors import InputError
from diag.links import OPTIONAL, Link, make_link
from diag.models import p530, p838, xpol

log = logging.getLogger(__name__)

__all__ = [
    "Effect",
    "LinkSpec",
    "Scenario",
    "SimResult",
    "EFFECT_KINDS",
    "TRUTH_CAUSES",
    "simulate_link",
    "simulate_scenario",
    "random_scenario",
    "channels_for",
    "aggregate_statistics",
    "TRUTH_EVENT_COLUMNS",
    "DIRECTION_NAMES",
]

EFFECT_KINDS = ("rain", "multipath", "refractive", "level_shift", "drift", "signal_loss", "gap")
# per-sample contribution columns of the truth, in this order
TRUTH_CAUSES = (schema.RAIN, schema.MULTIPATH, schema.REFRACTIVE, schema.LEVEL_SHIFT, schema.SIGNAL_LOSS)
_KIND_CAUSE = {
    "rain": schema.RAIN,
    "multipath": schema.MULTIPATH,
    "refractive": schema.REFRACTIVE,
    "level_shift": schema.LEVEL_SHIFT,
    "drift": schema.LEVEL_SHIFT,
    "signal_loss": schema.SIGNAL_LOSS,
    "gap": schema.NO_DATA,
}
FADE_LABEL_DB = 3.0  # a sample is "faded" (gets a cause label) when the total fade exceeds this
DIRECTION_NAMES = ("A>B", "B>A")  # channel names of a directions hop: sent from the first end, logged at the second
# complex correlation of the multipath scatter of go and return on a directions hop (a modelling choice: strongly,
# not fully correlated; see the module docstring)
DIRECTION_MP_CORRELATION = 0.9
TRUTH_EVENT_COLUMNS = [
    "link_id",
    "channel",
    "start_utc",
    "end_utc",
    "cause",
    "kind",
    "peak_fade_db",
    "peak_rain_mmh",
    "k_min",
    "fade_rate_hz",
    "step_db",
    "tilt_deg",
    "db_per_week",
    "shift_utc",
    "params",
]


@dataclass(frozen=True)
class Effect:
    """Something that happens to a hop: ``kind`` (EFFECT_KINDS), ``start_s`` after the hop's start,
    ``duration_s`` (``None``: until the end) and kind-specific ``params`` (see the module docstring)."""

    kind: str
    start_s: float
    duration_s: float | None = None
    params: Mapping = field(default_factory=dict)

    def __post_init__(self):
        if self.kind not in EFFECT_KINDS:
            raise InputError(f"unknown effect kind {self.kind!r}; use one of {', '.join(EFFECT_KINDS)}")
        if not math.isfinite(self.start_s):
            raise InputError(f"{self.kind}: start is not finite")
        if self.duration_s is not None and not (self.duration_s > 0 and math.isfinite(self.duration_s)):
            raise InputError(f"{self.kind}: duration must be positive")


@dataclass(frozen=True)
class LinkSpec:
    """A hop to simulate: the links-table fields, the simulation-only fields and its effects."""

    link_id: str
    frequency_ghz: float
    length_km: float
    polarization: str  # "H", "V" or "dual"
    threshold_dbm: float
    nominal_dbm: float = -40.0  # clear-sky receive level (with ATPC: at the ATPC minimum power)
    tx_dbm: float | None = None  # maximum transmit power (ATPC top); default 20 dBm
    antenna_gain_dbi: float | None = None
    antenna_height_m: float | None = None
    geoclimatic_k: float | None = None
    r001_mmh: float | None = None
    objective_pct: float | None = None
    xpd_required_db: float | None = None
    # simulation-only
    tilt_deg: float = 0.0  # polarisation tilt present from the start
    xpd_antenna_db: float = 35.0  # antennas' own cross-polar discrimination (dual-polarised hops)
    atpc: bool = False
    atpc_range_db: float = 10.0
    start: str = "2026-06-01T00:00:00Z"
    duration_s: float = 86400.0
    interval_s: float = 1.0
    noise_db: float = 0.1  # measurement noise, standard deviation [dB]
    quantisation_db: float = 0.1  # 0 = none
    floor_dbm: float | None = None  # level reported when the receiver has no usable signal
    channel_offset_db: float = 0.3  # clear-sky level of the 2nd channel relative to the 1st (dual)
    blank_fraction: float = 0.0  # rows present but with empty values
    drop_fraction: float = 0.0  # sporadic missed polls (no row)
    duplicate_fraction: float = 0.0  # rows repeated in the file
    swap_fraction: float = 0.0  # adjacent rows out of order in the file
    effects: tuple = ()
    # both directions of a single-polarised hop, one channel per direction (see the module docstring)
    directions: bool = False
    direction_names: tuple = DIRECTION_NAMES

    def __post_init__(self):
        if self.interval_s <= 0 or self.duration_s < self.interval_s:
            raise InputError(f"link {self.link_id}: interval_s must be positive and not above duration_s")
        if self.duration_s / self.interval_s > 50_000_000:
            raise InputError(f"link {self.link_id}: more than 50 million samples; shorten or coarsen")
        for name in ("blank_fraction", "drop_fraction", "duplicate_fraction", "swap_fraction"):
            if not 0.0 <= getattr(self, name) < 0.5:
                raise InputError(f"link {self.link_id}: {name} must be in [0, 0.5)")
        for name in ("noise_db", "quantisation_db", "atpc_range_db"):
            value = getattr(self, name)
            if not (value >= 0.0 and math.isfinite(value)):
                raise InputError(f"link {self.link_id}: {name} must be a finite number >= 0")
        if not 0.0 <= self.tilt_deg < 45.0:
            raise InputError(f"link {self.link_id}: tilt_deg must be in [0, 45)")
        if self.floor_value_dbm >= self.threshold_dbm:
            raise InputError(f"link {self.link_id}: floor_dbm must be below threshold_dbm")
        if self.nominal_dbm <= self.threshold_dbm:
            raise InputError(f"link {self.link_id}: nominal_dbm must be above threshold_dbm (no fade margin)")
        if self.directions:
            names = tuple(str(name) for name in self.direction_names)
            object.__setattr__(self, "direction_names", names)  # a TOML list becomes a tuple (frozen dataclass)
            if self.polarization not in ("H", "V"):
                raise InputError(f"link {self.link_id}: directions need a single polarisation (H or V)")
            if len(names) != 2 or names[0] == names[1] or not all(name.strip() for name in names):
                raise InputError(f"link {self.link_id}: direction_names must be two different names")
        self.to_link()  # validates the links-table fields

    @property
    def floor_value_dbm(self) -> float:
        if self.floor_dbm is not None:
            return float(self.floor_dbm)
        return min(-99.0, math.floor(self.threshold_dbm) - 10.0)

    @property
    def start_utc(self) -> pd.Timestamp:
        stamp = pd.Timestamp(self.start)
        return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")

    @property
    def channels(self) -> list[str]:
        return channels_for(self.polarization, self.direction_names if self.directions else None)

    def to_link(self) -> Link:
        values = {
            name: getattr(self, name)
            for name in ("link_id", "frequency_ghz", "length_km", "polarization", "threshold_dbm") + OPTIONAL
        }
        if values["tx_dbm"] is None and self.atpc:
            values["tx_dbm"] = 20.0
        return make_link(values, where=f"scenario link {self.link_id}")

    def replace(self, **changes) -> "LinkSpec":
        return dataclasses.replace(self, **changes)


@dataclass(frozen=True)
class Scenario:
    """A set of hops and what happens to them."""

    name: str
    links: tuple
    description: str = ""
    tz: str = "UTC"  # local time zone of the invented place (used by the local-time writer)
    outputs: Mapping = field(default_factory=dict)  # link_id -> {"log_shape": shape, "gzip": bool}
    stats_interval_s: float = 900.0  # interval of the min/avg/max statistics shape

    def link_list(self) -> list[Link]:
        return [spec.to_link() for spec in self.links]


@dataclass
class SimResult:
    """One simulated hop (see the module docstring)."""

    spec: LinkSpec
    link: Link
    table: pd.DataFrame
    truth_samples: pd.DataFrame
    truth_events: pd.DataFrame
    file_defects: dict


def channels_for(polarization: str, directions: Sequence[str] | None = None) -> list[str]:
    """Channel names of a simulated hop: H and V (dual), the polarisation (single), or one per direction."""
    if directions is not None:
        return [str(name) for name in directions]
    return ["H", "V"] if polarization == "dual" else [polarization]


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


# ------------------------------------------------------------------------------------------------------------


def simulate_link(spec: LinkSpec, *, seed: int = 0) -> SimResult:
    """Simulate one hop.  Deterministic for a given (spec, seed)."""
    dt = float(spec.interval_s)
    n = int(math.floor(spec.duration_s / dt + 1e-9))
    t0 = 0.0
    channels = spec.channels
    nch = len(channels)
    start = spec.start_utc
    times_ns = start.value + np.round(np.arange(n) * dt * 1e9).astype(np.int64)
    # polarisation of each channel: H/V of a dual hop, or the hop's one polarisation for every direction
    pol_tilt = [p838.tilt_deg_for_polarization(spec.polarization if spec.directions else ch) for ch in channels]

    contrib = {cause: np.zeros((nch, n)) for cause in TRUTH_CAUSES}
    rain_rate = np.zeros(n)
    extra_tilt = np.zeros(n)  # polarisation tilt added by level shifts [deg]
    xpd_rain = np.full((nch, n), np.inf)
    xpd_mp_delta = np.zeros((nch, n))
    lost = np.zeros((nch, n), dtype=bool)
    logged = np.ones(n, dtype=bool)
    events: list[dict] = []

    def add_event(effect, channel_index, i0, i1, peak, **extra):
        params = {k: v for k, v in effect.params.items() if not isinstance(v, (list, tuple, dict))}
        row = {
            "link_id": spec.link_id,
            "channel": channels[channel_index] if channel_index is not None else "*",
            "start_utc": pd.Timestamp(times_ns[i0], tz="UTC"),
            "end_utc": pd.Timestamp(times_ns[i1 - 1], tz="UTC") + pd.Timedelta(seconds=dt),
            "cause": _KIND_CAUSE[effect.kind],
            "kind": effect.kind,
            "peak_fade_db": float(peak),
            "params": ";".join(f"{k}={v}" for k, v in sorted(params.items())),
        }
        row.update(extra)
        events.append(row)

    expanded: list[Effect] = []
    for effect in spec.effects:
        repeat = int(effect.params.get("repeat_days", 1)) if effect.kind == "multipath" else 1
        for day in range(max(repeat, 1)):
            params = dict(effect.params)
            params.pop("repeat_days", None)
            expanded.append(Effect(effect.kind, effect.start_s + 86400.0 * day, effect.duration_s, params))

    for index, effect in enumerate(expanded):
        rng = _rng(seed, spec.link_id, index + 1)
        i0, i1 = _window(effect.start_s, effect.duration_s, t0, dt, n)
        if effect.kind == "rain":
            if effect.duration_s is None:
                raise InputError(f"link {spec.link_id}: a rain effect needs a duration")
            p = effect.params
            drying_s = float(p.get("drying_min", 20.0)) * 60.0
            wet_max = float(p.get("wet_antenna_db", 0.0 if p.get("profile") == "constant" else 1.5))
            rate_full = _rain_rate(rng, effect, dt)
            tail = int(5 * drying_s / dt) if wet_max > 0 else 0
            rate_ext = np.concatenate([rate_full, np.zeros(tail)])
            wet_full = _wet_antenna_db(rate_ext, dt, wet_max, float(p.get("wetting_s", 60.0)), drying_s)
            j0 = int(math.ceil((effect.start_s - t0) / dt - 1e-9))  # storm sample 0 on the link grid
            a, b = max(j0, 0), min(j0 + len(rate_ext), n)
            if b <= a:
                continue
            rate = rate_ext[a - j0 : b - j0]
            wet = wet_full[a - j0 : b - j0]
            rain_rate[a:b] += rate
            for c in range(nch):
                gamma = p838.specific_attenuation_db_per_km(rate, spec.frequency_ghz, pol_tilt[c])
                att = np.asarray(gamma) * spec.length_km + wet
                contrib[schema.RAIN][c, a:b] += att
                end = min(b, max(a + 1, j0 + len(rate_full)))
                add_event(effect, c, a, end, att.max(), peak_rain_mmh=float(rate.max()))
        elif effect.kind == "multipath":
            if i1 <= i0:
                continue
            _multipath(
                rng,
                effect,
                DIRECTION_MP_CORRELATION if spec.directions else 0.3,
                dt,
                i0,
                i1,
                nch,
                contrib[schema.MULTIPATH],
                xpd_mp_delta,
                lambda c, peak, e=effect, a=i0, b=i1: add_event(
                    e,
                    c,
                    a,
                    b,
                    peak,
                    k_min=float(e.params.get("k_min", 0.0)),
                    fade_rate_hz=float(e.params.get("fade_rate_hz", 0.05)),
                ),
            )
        elif effect.kind == "refractive":
            if i1 <= i0 or effect.duration_s is None:
                continue
            m = i1 - i0
            s = np.linspace(0.0, 1.0, m)
            depth = float(effect.params.get("depth_db", 8.0))
            wander = 1.0 + 0.15 * _smooth_noise(rng, m, dt / 300.0)[0]  # slow wobble, ~5 min
            shape = np.sin(np.pi * s) ** 2 * np.clip(wander, 0.5, None)
            shape /= shape.max()
            for c in range(nch):
                fade = depth * shape * (1.0 + 0.03 * (c - 0.5) * (nch > 1))  # ~equal on H and V
                contrib[schema.REFRACTIVE][c, i0:i1] += fade
                add_event(effect, c, i0, i1, fade.max())
        elif effect.kind in ("level_shift", "drift"):
            if i1 <= i0:
                continue
            shift = np.zeros(n)
            wanted = effect.params.get("channels", channels)
            if effect.kind == "level_shift":
                step = float(effect.params.get("step_db", 3.0))
                ramp = max(int(round(float(effect.params.get("ramp_s", 0.0)) / dt)), 1)
                shift[i0:i1] = step * np.clip((np.arange(i1 - i0) + 1) / ramp, 0.0, 1.0)
                tilt = float(effect.params.get("tilt_deg", 0.0))
                if tilt and "channels" in effect.params:
                    raise InputError(f"link {spec.link_id}: a tilted antenna affects every channel (no channels)")
                extra_tilt[i0:i1] += tilt
                extra = {"step_db": step, "tilt_deg": tilt, "shift_utc": pd.Timestamp(times_ns[i0], tz="UTC")}
            else:
                rate = float(effect.params.get("db_per_week", 1.0))
                shift[i0:i1] = rate * (np.arange(i1 - i0) + 1) * dt / 604800.0
                shift[i1:] = shift[i1 - 1]
                extra = {"db_per_week": rate, "shift_utc": pd.Timestamp(times_ns[i0], tz="UTC")}
            for c in range(nch):
                if channels[c] not in wanted:
                    continue
                contrib[schema.LEVEL_SHIFT][c] += shift
                add_event(
                    effect,
                    c,
                    i0,
                    i1,
                    np.abs(shift).max() + float(xpol.copolar_loss_db(extra.get("tilt_deg", 0.0))),
                    **extra,
                )
        elif effect.kind == "signal_loss":
            if i1 <= i0:
                continue
            wanted = effect.params.get("channels", channels)
            for c, ch in enumerate(channels):
                if ch in wanted:
                    lost[c, i0:i1] = True
                    add_event(effect, c, i0, i1, np.nan)
        elif effect.kind == "gap":
            if i1 <= i0:
                continue
            logged[i0:i1] = False
            add_event(effect, None, i0, i1, np.nan)

    # --- levels
    # --------------------------------------------------------------------------------------------------------
    tilt = spec.tilt_deg + extra_tilt
    tilt_loss = np.asarray(xpol.copolar_loss_db(tilt)) if np.any(tilt) else np.zeros(n)
    contrib[schema.LEVEL_SHIFT] += tilt_loss
    for c in range(nch):
        xpd_rain[c] = _rain_xpd_db(contrib[schema.RAIN][c], spec.frequency_ghz)
    propagation = sum(contrib[cause] for cause in TRUTH_CAUSES if cause != schema.SIGNAL_LOSS)
    nominal = np.array([spec.nominal_dbm + (spec.channel_offset_db if c == 1 else 0.0) for c in range(nch)])
    rng = _rng(seed, spec.link_id, 0)
    floor = spec.floor_value_dbm
    clean = nominal[:, None] - propagation  # receive level at the ATPC minimum power
    boost = np.zeros_like(clean)
    if spec.atpc:
        boost = np.clip(
            nominal[:, None] - clean, 0.0, spec.atpc_range_db
        )  # ATPC holds the level up to its range
        boost[lost] = spec.atpc_range_db
    level = clean + boost
    contrib[schema.SIGNAL_LOSS] = np.where(lost, np.maximum(level - floor, 0.0), 0.0)
    measured = level + spec.noise_db * rng.standard_normal(level.shape)
    measured = _quantise(measured, spec.quantisation_db)
    below_floor = lost | (measured <= floor)
    xpd = None
    if spec.polarization == "dual":  # XPD is logged on dual-polarised hops only
        with np.errstate(divide="ignore"):
            static = np.asarray(xpol.combine_xpd_db(spec.xpd_antenna_db, xpol.xpd_from_tilt_db(tilt)))
        xpd = (
            np.asarray(xpol.combine_xpd_db(static[None, :] if static.ndim else static, xpd_rain))
            + xpd_mp_delta
        )
        xpd = _quantise(xpd + spec.noise_db * rng.standard_normal(xpd.shape), spec.quantisation_db)
    tx_max = spec.tx_dbm if spec.tx_dbm is not None else 20.0
    tsl = (
        _quantise(tx_max - spec.atpc_range_db + boost, max(spec.quantisation_db, 0.1)) if spec.atpc else None
    )

    # --- rows present
    # --------------------------------------------------------------------------------------------------------
    if spec.drop_fraction > 0:
        logged &= rng.random(n) >= spec.drop_fraction
    blank = np.zeros(n, dtype=bool)
    if spec.blank_fraction > 0:
        blank = (rng.random(n) < spec.blank_fraction) & logged
    keep = np.flatnonzero(logged)
    table = _build_table(spec, channels, times_ns, keep, measured, below_floor, blank, tsl, xpd)

    # --- truth
    # --------------------------------------------------------------------------------------------------------
    total = sum(contrib[cause] for cause in TRUTH_CAUSES)
    stack = np.stack([contrib[cause] for cause in TRUTH_CAUSES])  # (cause, channel, time)
    truth = {
        "time_utc": _utc(np.tile(times_ns, nch)),
        "channel": _strings(np.repeat(np.arange(nch), n), channels),
    }
    for i, name in enumerate(TRUTH_CAUSES):
        truth[name] = stack[i].ravel()
    truth["total_fade_db"] = total.ravel()
    labels = ("",) + TRUTH_CAUSES
    truth["cause"] = _strings(
        np.where(total > FADE_LABEL_DB, np.argmax(stack, axis=0) + 1, 0).ravel(), labels
    )
    truth["rain_rate_mmh"] = np.tile(rain_rate, nch)
    truth["logged"] = np.tile(logged, nch)
    truth_samples = pd.DataFrame(truth)
    truth_events = pd.DataFrame(events, columns=TRUTH_EVENT_COLUMNS)
    if not truth_events.empty:
        truth_events = truth_events.sort_values(
            ["start_utc", "channel", "kind"], kind="stable", ignore_index=True
        )

    # --- file defects (the writers apply them; the normalised table has none)
    # ----------------------------------
    defects = {
        "duplicate_times": np.array([], dtype="datetime64[ns]"),
        "swap_times": np.array([], dtype="datetime64[ns]"),
    }
    if spec.duplicate_fraction > 0 and len(keep):
        pick = keep[rng.random(len(keep)) < spec.duplicate_fraction]
        defects["duplicate_times"] = times_ns[pick].astype("datetime64[ns]")
    if spec.swap_fraction > 0 and len(keep) > 2:
        pos = np.flatnonzero(rng.random(len(keep) - 1) < spec.swap_fraction)
        pos = pos[np.concatenate([[True], np.diff(pos) > 1])] if len(pos) else pos  # no overlapping swaps
        defects["swap_times"] = times_ns[keep[pos]].astype("datetime64[ns]")
    return SimResult(
        spec=spec,
        link=spec.to_link(),
        table=table,
        truth_samples=truth_samples,
        truth_events=truth_events,
        file_defects=defects,
    )


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


def _strings(codes: np.ndarray, labels: Sequence[str]) -> pd.Series:
    """A "str" column from integer codes into ``labels`` (much faster than building from Python objects)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    values = pc.take(pa.array(list(labels), pa.large_string()), pa.array(np.asarray(codes, dtype=np.int32)))
    return pd.Series(pd.StringDtype("pyarrow", na_value=np.nan).__from_arrow__(pa.chunked_array([values])))


def _utc(ns: np.ndarray):
    return pd.DatetimeIndex(np.asarray(ns, dtype="datetime64[ns]")).tz_localize("UTC")


def _build_table(spec, channels, times_ns, keep, measured, below_floor, blank, tsl, xpd) -> pd.DataFrame:
    """The normalised long table, built block by block in its sort order (channel, quantity, stat, time)."""
    parts = []
    k = len(keep)
    for c, ch in enumerate(channels):
        blocks = [
            (schema.RSL, measured[c, keep], np.where(blank[keep], 2, np.where(below_floor[c, keep], 1, 0)))
        ]
        if tsl is not None:
            blocks.append((schema.TSL, tsl[c, keep], np.where(blank[keep], 2, 0)))
        if xpd is not None:
            blocks.append((schema.XPD, xpd[c, keep], np.where(blank[keep] | below_floor[c, keep], 2, 0)))
        blocks.sort(key=lambda item: item[0])
        for quantity, values, status in blocks:
            parts.append((ch, quantity, values, status))
    values = (
        np.concatenate([np.where(st == 0, v, np.nan) for _, _, v, st in parts]) if parts else np.array([])
    )
    status_codes = np.concatenate([st for *_, st in parts]) if parts else np.array([], dtype=int)
    total = k * len(parts)
    block = np.repeat(np.arange(len(parts)), k)
    table = pd.DataFrame(
        {
            schema.TIME: _utc(np.tile(times_ns[keep], len(parts))),
            schema.LINK: _strings(np.zeros(total, dtype=np.int8), [spec.link_id]),
            schema.CHANNEL: _strings(block, [p[0] for p in parts]),
            schema.QUANTITY: _strings(block, [p[1] for p in parts]),
            schema.STAT: _strings(np.zeros(total, dtype=np.int8), [schema.SAMPLE]),
            schema.INTERVAL: np.zeros(total),
            schema.VALUE: values.astype(float),
            schema.STATUS: _strings(status_codes, [schema.OK, schema.SIGNAL_LOST, schema.MISSING]),
        }
    )
    return schema.conform(table[schema.COLUMNS])   # categorical key columns (diag.schema)


# ------------------------------------------------------------------------------------------------------------
# statistics logs


def aggregate_statistics(
    table: pd.DataFrame,
    *,
    interval_s: float = 900.0,
    floor_dbm: float = -99.0,
    threshold_dbm: float | None = None,
) -> pd.DataFrame:
    """Interval min / avg / max rows (normalised table, ``stat`` min/avg/max) from a table of samples.

    With ``threshold_dbm`` the radio's interval counters are added per channel, as level-based stand-ins
    for its error counts: ``ses_count`` = available seconds with the level below the threshold or lost, and
    ``uas_count`` = unavailable seconds by the ITU-T G.826 rule (10 consecutive SES; via
    :func:`diag.models.g826.unavailable_mask`); rows with ``stat`` "sample" and ``interval_s`` = the interval.

    The radio sees its floor value while the signal is lost, so lost samples enter the statistics at
    ``floor_dbm``: ``min`` is "signal_lost" when any sample of the interval was lost, ``avg``/``max``
    only when all were.  Rows with status "missing" are left out; an interval with no usable row gives
    status "missing".  Intervals start at multiples of ``interval_s`` since 1970-01-01 UTC; an interval
    with no rows at all gives no row (a gap).
    """
    if table.empty:
        return schema.empty_table()
    width_ns = int(round(interval_s * 1e9))
    t_ns = table[schema.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
    status = table[schema.STATUS].to_numpy(dtype=object)
    value = table[schema.VALUE].to_numpy(dtype=float)
    is_lost = status == schema.SIGNAL_LOST
    usable = status != schema.MISSING
    codes, labels = {}, {}
    for name in (schema.LINK, schema.CHANNEL, schema.QUANTITY):
        codes[name], labels[name] = pd.factorize(table[name], sort=True)  # integer keys: fast grouping
    frame = pd.DataFrame(
        {
            "link": codes[schema.LINK],
            "channel": codes[schema.CHANNEL],
            "quantity": codes[schema.QUANTITY],
            "bin": t_ns // width_ns,
            "v": np.where(usable, np.where(is_lost, floor_dbm, value), np.nan),
            "lost": is_lost.astype(np.int32),
            "usable": usable.astype(np.int32),
        }
    )
    grouped = frame.groupby(["link", "channel", "quantity", "bin"], sort=True)
    agg = grouped.agg(
        vmin=("v", "min"),
        vavg=("v", "mean"),
        vmax=("v", "max"),
        lost=("lost", "sum"),
        usable=("usable", "sum"),
    ).reset_index()
    for name, key in ((schema.LINK, "link"), (schema.CHANNEL, "channel"), (schema.QUANTITY, "quantity")):
        agg[key] = np.asarray(labels[name], dtype=object)[agg[key].to_numpy()]
    rows = []
    for stat_name, column in ((schema.AVG, "vavg"), (schema.MAX, "vmax"), (schema.MIN, "vmin")):
        if stat_name == schema.MIN:
            lost_row = agg["lost"] > 0
        else:
            lost_row = (agg["lost"] == agg["usable"]) & (agg["usable"] > 0)
        missing_row = agg["usable"] == 0
        status_out = np.where(missing_row, schema.MISSING, np.where(lost_row, schema.SIGNAL_LOST, schema.OK))
        values = np.where(status_out == schema.OK, agg[column].to_numpy(dtype=float), np.nan)
        rows.append(
            pd.DataFrame(
                {
                    schema.TIME: _utc(agg["bin"].to_numpy(dtype=np.int64) * width_ns),
                    schema.LINK: agg["link"].to_numpy(dtype=object),
                    schema.CHANNEL: agg["channel"].to_numpy(dtype=object),
                    schema.QUANTITY: agg["quantity"].to_numpy(dtype=object),
                    schema.STAT: stat_name,
                    schema.INTERVAL: float(interval_s),
                    schema.VALUE: np.round(values, 2),
                    schema.STATUS: status_out,
                }
            )
        )
    if threshold_dbm is not None:
        rows.extend(_counter_rows(table, interval_s=interval_s, threshold_dbm=threshold_dbm))
    out = pd.concat(rows, ignore_index=True)
    for name in (schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.STATUS):
        out[name] = out[name].astype("str")
    out = out.sort_values(
        [schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.TIME],
        kind="stable",
        ignore_index=True,
    )
    return schema.conform(out[schema.COLUMNS])   # categorical key columns (diag.schema)


def _counter_rows(table: pd.DataFrame, *, interval_s: float, threshold_dbm: float) -> list[pd.DataFrame]:
    """SES and UAS counts per interval and channel from RSL samples (see :func:`aggregate_statistics`)."""
    from diag.models import g826

    width_ns = int(round(interval_s * 1e9))
    rsl = table[(table[schema.QUANTITY] == schema.RSL) & (table[schema.STAT] == schema.SAMPLE)]
    out = []
    for (link_id, channel), part in rsl.groupby([schema.LINK, schema.CHANNEL], sort=True):
        t_ns = part[schema.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
        if len(t_ns) < 2:
            continue
        step = int(np.median(np.diff(np.unique(t_ns))))
        slot = (t_ns - t_ns.min()) // step
        n = int(slot.max()) + 1
        status = part[schema.STATUS].to_numpy(dtype=object)
        value = part[schema.VALUE].to_numpy(dtype=float)
        ses = np.zeros(n, dtype=bool)
        valid = np.zeros(n, dtype=bool)
        with np.errstate(invalid="ignore"):
            ses[slot] = (status == schema.SIGNAL_LOST) | ((status == schema.OK) & (value < threshold_dbm))
        valid[slot] = status != schema.MISSING
        unavailable = g826.unavailable_mask(ses, valid)
        grid_bin = (t_ns.min() + np.arange(n) * step) // width_ns
        first = grid_bin[0]
        bins = np.unique(t_ns // width_ns)
        counts = {
            schema.SES: np.bincount(grid_bin - first, weights=ses & valid & ~unavailable),
            schema.UAS: np.bincount(grid_bin - first, weights=unavailable),
        }
        for quantity, per_bin in counts.items():
            out.append(
                pd.DataFrame(
                    {
                        schema.TIME: _utc(bins * width_ns),
                        schema.LINK: link_id,
                        schema.CHANNEL: channel,
                        schema.QUANTITY: quantity,
                        schema.STAT: schema.SAMPLE,
                        schema.INTERVAL: float(interval_s),
                        schema.VALUE: per_bin[bins - first].astype(float),
                        schema.STATUS: schema.OK,
                    }
                )
            )
    return out


# ------------------------------------------------------------------------------------------------------------
# scenarios


def simulate_scenario(scenario: Scenario, *, seed: int = 0) -> tuple[dict[str, SimResult], list[Link]]:
    """Simulate every hop of a scenario: ({link_id: SimResult}, [Link, ...]) in the scenario's order."""
    results = {spec.link_id: simulate_link(spec, seed=seed) for spec in scenario.links}
    return results, [result.link for result in results.values()]


_FREQUENCIES_GHZ = (7.0, 8.0, 11.0, 13.0, 15.0, 18.0, 23.0, 26.0, 32.0, 38.0)


def random_scenario(
    seed: int,
    *,
    n_links: int = 3,
    duration_h: float = 48.0,
    interval_s: float = 1.0,
    causes: Sequence[str] | None = None,
    start: str = "2026-07-06T00:00:00Z",
    defects: bool = True,
) -> Scenario:
    """A varied mix of causes on ``n_links`` invented hops (accuracy benchmarks on unseen seeds).

    Physics steers the draw: long low-frequency hops get nightly multipath, short high-frequency hops get the
    heavy rain; effects other than multipath do not overlap on a hop so that each has a clear true cause (the
    per-sample truth still labels any overlap by the largest contribution).  ``causes`` limits the mix to
    some of ``rain, multipath, refractive, level_shift, signal_loss`` (and ``gap``); ``defects`` adds
    duplicated, swapped, blank and missed rows.
    """
    allowed = (
        set(causes)
        if causes is not None
        else {"rain", "multipath", "refractive", "level_shift", "signal_loss", "gap"}
    )
    unknown = allowed - set(EFFECT_KINDS)
    if unknown:
        raise InputError(f"random_scenario: unknown cause(s) {', '.join(sorted(unknown))}")
    rng = np.random.default_rng(np.random.SeedSequence([int(seed) & 0xFFFFFFFF, 0x5CE7]))
    duration_s = float(duration_h) * 3600.0
    specs = []
    for index in range(n_links):
        f = float(rng.choice(_FREQUENCIES_GHZ))
        long_hop = "multipath" in allowed and (
            f <= 13.0 and rng.random() < 0.7 or ("rain" not in allowed and f <= 18.0)
        )
        if long_hop:
            length = float(np.round(rng.uniform(25.0, 55.0) if f <= 8 else rng.uniform(18.0, 35.0), 1))
        else:
            length = float(np.round(rng.uniform(1.0, 5.0) * (38.0 / f) ** 0.8, 1))
        pol = str(rng.choice(["H", "V", "dual"], p=[0.3, 0.3, 0.4]))
        threshold = float(np.round(rng.uniform(-78.0, -64.0)))
        nominal = float(np.round(threshold + rng.uniform(30.0, 42.0), 1))
        busy: list[tuple[float, float]] = []
        effects: list[Effect] = []

        def place(length_s: float, earliest: float = 0.0, hours: tuple | None = None) -> float | None:
            for _ in range(50):
                if hours is None:
                    begin = rng.uniform(earliest, max(earliest, duration_s - length_s))
                else:
                    day = rng.integers(0, max(int(duration_s // 86400), 1))
                    begin = day * 86400.0 + rng.uniform(*hours) * 3600.0
                if begin + length_s > duration_s or begin < earliest:
                    continue
                if all(begin + length_s + 1800 < a or begin > b + 1800 for a, b in busy):
                    busy.append((begin, begin + length_s))
                    return float(begin)
            return None

        if long_hop:
            for day in range(int(math.ceil(duration_s / 86400.0))):
                begin = day * 86400.0 + rng.uniform(21.0, 24.0) * 3600.0  # night windows from 21-24 h
                length_s = rng.uniform(5.0, 8.0) * 3600.0
                if begin < 0 or begin + length_s > duration_s:
                    continue
                effects.append(
                    Effect(
                        "multipath",
                        begin,
                        length_s,
                        {
                            "k_min": float(np.round(rng.choice([0.0, 0.0, 1.0, 3.0]), 1)),
                            "k_max": 30.0,
                            "fade_rate_hz": float(np.round(rng.uniform(0.02, 0.12), 3)),
                            "correlation": 0.3,
                        },
                    )
                )
                busy.append((begin, begin + length_s))
        if "rain" in allowed and not long_hop:
            for _ in range(1 + rng.poisson(1.0)):
                length_s = rng.uniform(0.5, 3.0) * 3600.0
                begin = place(length_s, hours=(11.0, 20.0))
                if begin is not None:
                    effects.append(
                        Effect(
                            "rain",
                            begin,
                            length_s,
                            {
                                "peak_mmh": float(np.round(rng.lognormal(math.log(25.0), 0.7), 1)),
                                "wet_antenna_db": float(np.round(rng.uniform(0.5, 2.5), 2)),
                            },
                        )
                    )
        if "refractive" in allowed and rng.random() < 0.6:
            length_s = rng.uniform(0.5, 4.0) * 3600.0
            begin = place(length_s)
            if begin is not None:
                effects.append(
                    Effect(
                        "refractive",
                        begin,
                        length_s,
                        {"depth_db": float(np.round(rng.uniform(5.0, 22.0), 1))},
                    )
                )
        if "signal_loss" in allowed and rng.random() < 0.6:
            for _ in range(1 + rng.poisson(0.5)):
                length_s = rng.uniform(60.0, 1800.0)
                begin = place(length_s)
                if begin is not None:
                    effects.append(Effect("signal_loss", begin, length_s))
        if "gap" in allowed and rng.random() < 0.5:
            length_s = rng.uniform(300.0, 3600.0)
            begin = place(length_s)
            if begin is not None:
                effects.append(Effect("gap", begin, length_s))
        if "level_shift" in allowed and rng.random() < 0.5:
            begin = place(3600.0, earliest=0.2 * duration_s)
            if begin is not None:
                tilt = (
                    float(np.round(rng.uniform(5.0, 15.0), 1))
                    if pol == "dual" and rng.random() < 0.5
                    else 0.0
                )
                effects.append(
                    Effect(
                        "level_shift",
                        begin,
                        None,
                        {"step_db": float(np.round(rng.uniform(3.0, 8.0), 1)), "tilt_deg": tilt},
                    )
                )
        specs.append(
            LinkSpec(
                link_id=f"RND{seed % 100000:05d}-{index + 1}",
                frequency_ghz=f,
                length_km=max(length, 0.5),
                polarization=pol,
                threshold_dbm=threshold,
                nominal_dbm=nominal,
                start=start,
                duration_s=duration_s,
                interval_s=interval_s,
                atpc=bool(rng.random() < 0.25),
                objective_pct=99.99,
                quantisation_db=float(rng.choice([0.1, 1.0], p=[0.7, 0.3])),
                noise_db=float(np.round(rng.uniform(0.05, 0.3), 2)),
                blank_fraction=0.0005 if defects else 0.0,
                drop_fraction=0.0005 if defects else 0.0,
                duplicate_fraction=0.0005 if defects else 0.0,
                swap_fraction=0.0005 if defects else 0.0,
                effects=tuple(sorted(effects, key=lambda e: e.start_s)),
            )
        )
    return Scenario(
        name=f"random-{seed}", links=tuple(specs), description=f"random mix of causes drawn with seed {seed}"
    )
