"""Speed of the analysis: one link-week of 1-s samples, two channels, against the time to read the file.

Target (issue 5): the analysis (``diag.pipeline.analyze_link``: grid, reference, events, causes, statistics,
cross-polar, level changes, outage, findings) under 2 s on a 2-core machine.  The week is simulated (dual-polarised
23 GHz hop with rain, multipath, a level shift and a drop-out), written once as a 1-s wide CSV (gzip), then read
with ``diag.ingest.read_log`` and analysed; each step is timed ``--repeat`` times and the best run is reported,
with the ratio analysis / read printed side by side.  Run::

    .venv/bin/python bench/bench_analysis.py
"""
from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from diag.ingest import read_log  # noqa: E402
from diag.pipeline import analyze_link  # noqa: E402
from diag.simulate import Effect, LinkSpec, simulate_link  # noqa: E402
from diag.writers import write_log  # noqa: E402

DAY = 86400.0


def week_spec() -> LinkSpec:
    return LinkSpec(link_id="BENCH-WEEK", frequency_ghz=23.0, length_km=6.0, polarization="dual",
                    threshold_dbm=-72.0, nominal_dbm=-38.0, duration_s=7 * DAY, objective_pct=99.99,
                    effects=(Effect("rain", 1.6 * DAY, 5400.0, {"peak_mmh": 50.0}),
                             Effect("rain", 3.7 * DAY, 3600.0, {"peak_mmh": 25.0}),
                             Effect("multipath", 2.9 * DAY, 6 * 3600.0, {"k_min": 1.0, "repeat_days": 2}),
                             Effect("level_shift", 5.2 * DAY, None, {"step_db": 4.0}),
                             Effect("signal_loss", 6.1 * DAY, 900.0)))


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3, help="timed runs of each step (best is reported)")
    args = parser.parse_args(argv)
    sim = simulate_link(week_spec(), seed=7)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "BENCH-WEEK.csv.gz"
        write_log(sim.table, path, "wide_iso")
        size_mb = path.stat().st_size / 1e6
        read_s, analyse_s, read_cpu, analyse_cpu = [], [], [], []
        for _ in range(max(1, args.repeat)):
            t0, c0 = time.perf_counter(), time.process_time()
            table = read_log(path).table
            read_s.append(time.perf_counter() - t0)
            read_cpu.append(time.process_time() - c0)
            t0, c0 = time.perf_counter(), time.process_time()
            result = analyze_link(table, sim.link)
            analyse_s.append(time.perf_counter() - t0)
            analyse_cpu.append(time.process_time() - c0)
    rows = int((table["quantity"] == "rsl_dbm").sum())
    best_read, best_an = min(read_s), min(analyse_s)
    print(f"one link-week at 1 s, {len(result.series)} channels, {rows} RSL samples, file {size_mb:.1f} MB (gzip CSV)")
    print(f"{'step':<34}{'best wall s':>12}{'best CPU s':>12}{'wall s of each run':>28}")
    print(f"{'read_log (file -> table)':<34}{best_read:>12.2f}{min(read_cpu):>12.2f}"
          f"{'  '.join(f'{x:.2f}' for x in read_s):>28}")
    print(f"{'analyze_link (table -> result)':<34}{best_an:>12.2f}{min(analyse_cpu):>12.2f}"
          f"{'  '.join(f'{x:.2f}' for x in analyse_s):>28}")
    print("(CPU s = this process's CPU time: on a shared, loaded machine it is closer to the unloaded wall time)")
    cpu_an, cpu_read = min(analyse_cpu), min(read_cpu)
    print(f"analysis / read = {best_an / best_read:.2f} (wall), {cpu_an / cpu_read:.2f} (CPU); "
          f"analysis target < 2 s: {'met' if best_an < 2.0 else 'not met'} on wall time, "
          f"{'met' if cpu_an < 2.0 else 'not met'} on CPU time ({len(result.events)} events)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
