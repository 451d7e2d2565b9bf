"""Random scenarios: a varied mix of causes on invented hops, for accuracy benchmarks on unseen seeds."""
from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from diag.errors import InputError
from diag.sim.spec import EFFECT_KINDS, Effect, LinkSpec, Scenario

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
