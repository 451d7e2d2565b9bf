"""Simulator and writer speed: one dual-polarised week at 1 s (the target: a few seconds).

Run: .venv/bin/python bench/bench_simulate.py
Prints, measured side by side in this run: simulated time / wall time for simulate_link, the same for the
wide-ISO gzip writer, and the simulation's cost relative to just drawing as many Gaussian numbers with numpy
(a floor no simulator of this size can beat).
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import numpy as np

from diag.sim.log_shapes import write_log
from diag.sim.simulate import Effect, LinkSpec, simulate_link

WEEK_S = 7 * 86400


def main() -> None:
    spec = LinkSpec(
        "BENCH",
        23.0,
        8.0,
        "dual",
        -70.0,
        nominal_dbm=-38.0,
        duration_s=WEEK_S,
        atpc=True,
        duplicate_fraction=0.0005,
        swap_fraction=0.0005,
        effects=(
            Effect("rain", 86400.0, 7200.0, {"peak_mmh": 50.0}),
            Effect("multipath", 2 * 86400.0, 8 * 3600.0, {"k_min": 0.0, "repeat_days": 4}),
            Effect("refractive", 4 * 86400.0, 3 * 3600.0, {"depth_db": 10.0}),
            Effect("level_shift", 5 * 86400.0, None, {"step_db": 4.0, "tilt_deg": 8.0}),
        ),
    )
    t0 = time.perf_counter()
    result = simulate_link(spec, seed=1)
    t_sim = time.perf_counter() - t0
    rng = np.random.default_rng(0)
    t0 = time.perf_counter()
    rng.standard_normal((12, WEEK_S))  # about as many draws as the simulation makes
    t_draw = time.perf_counter() - t0
    with tempfile.TemporaryDirectory() as folder:
        t0 = time.perf_counter()
        info = write_log(result.table, Path(folder) / "BENCH.csv.gz", "wide_iso", defects=result.file_defects)
        t_write = time.perf_counter() - t0
        size = info.path.stat().st_size
    rows = len(result.table)
    print(
        f"simulate_link: {rows} rows ({WEEK_S} s x 2 channels x RSL/TSL/XPD) in {t_sim:.2f} s "
        f"-> {WEEK_S / t_sim:,.0f}x real time (target: a week in a few seconds, i.e. > 100,000x)"
    )
    print(f"simulation / numpy draws of similar size: {t_sim / t_draw:.1f}x")
    print(
        f"write wide_iso .gz: {t_write:.2f} s ({size / 1e6:.1f} MB) -> {WEEK_S / t_write:,.0f}x real time; "
        f"writer / simulation time: {t_write / t_sim:.2f}x"
    )


if __name__ == "__main__":
    main()
