"""Reader speed and memory: read_log next to plain pandas.read_csv and pyarrow.csv.read_csv of the same file.

Writes its own file to a temporary folder: a week of 1-second samples of two channels (ISO 8601 UTC stamps,
``RSL H (dBm)``, ``RSL V (dBm)``; about 1.2 million values), then times each reader in the same run and prints
rows per second and the ratios.  ``--rows N`` changes the size (e.g. 10_000_000 for the streaming check); peak
memory (``resource.getrusage``) is measured in a fresh process per reader so one reader's peak does not hide
another's.  Not a test: figures depend on the machine.

    .venv/bin/python bench/bench_read.py [--rows 604800] [--repeat 5]
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]


def write_file(path: Path, rows: int, seed: int = 7) -> int:
    """Wide ISO log, written in blocks so the writer itself stays small."""
    rng = np.random.default_rng(seed)
    t0 = np.datetime64("2026-03-02T00:00:00", "s")
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("Time,RSL H (dBm),RSL V (dBm)\n")
        block = 200_000
        for start in range(0, rows, block):
            n = min(block, rows - start)
            t = (t0 + np.arange(start, start + n)).astype(str)
            h = np.round(-45 + rng.normal(0, 0.3, n), 1)
            v = np.round(-46 + rng.normal(0, 0.3, n), 1)
            lines = np.char.add(np.char.add(np.char.add(np.char.add(t, "Z,"), h.astype(str)), ","), v.astype(str))
            fh.write("\n".join(lines.tolist()))
            fh.write("\n")
    return path.stat().st_size


# name -> (imports, done before the clock starts; the timed statement)
READERS = {
    "diag.read_log": ("from diag.read.ingest import read_log", "obj = read_log(PATH); n = obj.report.rows_read"),
    "pandas.read_csv": ("import pandas as pd", "obj = pd.read_csv(PATH); n = len(obj)"),
    "pandas.read_csv + to_datetime": ("import pandas as pd", "obj = pd.read_csv(PATH); "
                                      "obj['Time'] = pd.to_datetime(obj['Time'], format='ISO8601'); n = len(obj)"),
    "pandas.read_csv(engine=pyarrow)": ("import pandas as pd",
                                        "obj = pd.read_csv(PATH, engine='pyarrow'); n = len(obj)"),
    "pyarrow.csv.read_csv": ("import pyarrow.csv as c", "obj = c.read_csv(PATH); n = obj.num_rows"),
}


def run_one(code: tuple[str, str], path: Path, repeat: int) -> dict:
    """Run one reader in a fresh interpreter; best wall time of ``repeat`` and the process peak RSS."""
    prog = f"""
import time, resource, json, warnings
warnings.simplefilter('ignore')
PATH = {str(path)!r}
{code[0]}
best = cpu = 1e9
for _ in range({repeat}):
    _t0, _c0 = time.perf_counter(), time.process_time()
    {code[1]}
    best = min(best, time.perf_counter() - _t0)
    cpu = min(cpu, time.process_time() - _c0)
    obj = None
print(json.dumps({{"seconds": best, "cpu_s": cpu, "rows": n,
                  "peak_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}}))
"""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = subprocess.run([sys.executable, "-c", prog], capture_output=True, text=True, env=env, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--rows", type=int, default=7 * 86400, help="data rows (default: one week of 1-s samples)")
    ap.add_argument("--repeat", type=int, default=5, help="rounds (best time counts)")
    ap.add_argument("--only", choices=list(READERS), action="append")
    ap.add_argument("--write-only", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.write_only:
        write_file(Path(args.write_only), args.rows)
        return
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "week_1s.csv"
        # written by a child process: the parent stays small, so the readers' peak RSS (getrusage, which a child
        # inherits from its parent at fork time) is their own
        subprocess.run([sys.executable, __file__, "--write-only", str(path), "--rows", str(args.rows)], check=True)
        size = path.stat().st_size
        print(f"file: {args.rows} rows x 2 channels ({2 * args.rows} values), {size / 2**20:.1f} MiB")
        base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        # interleaved: each round runs every reader once (fresh process each), so a busy machine slows all alike;
        # the best time of the rounds counts
        names = args.only or list(READERS)
        runs = {name: [] for name in names}
        for _ in range(args.repeat):
            for name in names:
                runs[name].append(run_one(READERS[name], path, 1))
        results = {name: {"seconds": min(r["seconds"] for r in rs), "cpu_s": min(r["cpu_s"] for r in rs),
                          "rows": rs[0]["rows"],
                          "peak_mib": float(np.median([r["peak_mib"] for r in rs]))} for name, rs in runs.items()}
        ref = results.get("pandas.read_csv")
        print(f"{'reader':34s} {'wall s':>7s} {'rows/s':>11s} {'vs pandas':>9s} {'CPU s':>6s} {'CPU vs':>7s} "
              f"{'peak MiB':>8s} {'peak/file':>9s}")
        for name, r in results.items():
            ratio = f"{ref['seconds'] / r['seconds']:.2f}x" if ref else "-"
            cratio = f"{ref['cpu_s'] / r['cpu_s']:.2f}x" if ref else "-"
            print(f"{name:34s} {r['seconds']:7.2f} {r['rows'] / r['seconds']:11,.0f} {ratio:>9s} {r['cpu_s']:6.2f} "
                  f"{cratio:>7s} {r['peak_mib']:8.0f} {r['peak_mib'] * 2**20 / size:9.1f}")
        print(f"load average while measuring: {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs "
              f"(CPU seconds are steadier than wall time on a busy machine)")
        print(f"(ratio > 1: faster than plain pandas.read_csv; read_log also parses times, checks every value, "
              f"sorts, de-duplicates and builds the long table of {2 * args.rows} rows; this process: {base:.0f} MiB)")


if __name__ == "__main__":
    main()
