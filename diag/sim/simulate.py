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

Everything is vectorised numpy: a week at 1 s for a dual-polarised hop takes a few seconds.  Same seed,
same numbers: every random draw comes from a generator seeded by (seed, CRC-32 of the link id, effect
index).

Modules: :mod:`diag.sim.spec` (what is simulated), :mod:`diag.sim.physics` (the physics of each effect, described
there), :mod:`diag.sim.aggregate` (interval statistics logs), :mod:`diag.sim.random_scenarios`; this module runs a
hop (:func:`simulate_link`) or a scenario and gives the public names of all of them.
"""
from __future__ import annotations

import logging
import math
from typing import Sequence

import numpy as np
import pandas as pd

from diag import schema
from diag.errors import InputError
from diag.links import Link
from diag.models import p838, xpol
from diag.sim.aggregate import _utc, aggregate_statistics
from diag.sim.physics import (
    _multipath,
    _quantise,
    _rain_rate,
    _rain_xpd_db,
    _rng,
    _smooth_noise,
    _wet_antenna_db,
    _window,
)
from diag.sim.random_scenarios import random_scenario
from diag.sim.spec import (
    _KIND_CAUSE,
    DIRECTION_MP_CORRELATION,
    DIRECTION_NAMES,
    EFFECT_KINDS,
    FADE_LABEL_DB,
    TRUTH_CAUSES,
    TRUTH_EVENT_COLUMNS,
    Effect,
    LinkSpec,
    Scenario,
    SimResult,
    channels_for,
)

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
    "DIRECTION_MP_CORRELATION",
    "FADE_LABEL_DB",
]


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


def _strings(codes: np.ndarray, labels: Sequence[str]) -> pd.Series:
    """A "str" column from integer codes into ``labels`` (much faster than building from Python objects)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    values = pc.take(pa.array(list(labels), pa.large_string()), pa.array(np.asarray(codes, dtype=np.int32)))
    return pd.Series(pd.StringDtype("pyarrow", na_value=np.nan).__from_arrow__(pa.chunked_array([values])))


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
# scenarios


def simulate_scenario(scenario: Scenario, *, seed: int = 0) -> tuple[dict[str, SimResult], list[Link]]:
    """Simulate every hop of a scenario: ({link_id: SimResult}, [Link, ...]) in the scenario's order."""
    results = {spec.link_id: simulate_link(spec, seed=seed) for spec in scenario.links}
    return results, [result.link for result in results.values()]
