"""Memory and report size against the number of hops in one file (issue 15, case 10): linear, not quadratic.

A long-format log with N link ids (3 rows each, 1-min samples) is read in a fresh child process per N; the child
also builds what ``analyze`` and ``batch`` attach to every hop (the hop's view of the file report,
``diag.read.ingest_report.hop_view``) and serialises all of them as ``findings.json`` would.  Peak resident memory
of that child comes from the operating system (``os.wait4`` -> ``ru_maxrss``).  For comparison the child also
measures the bytes the old way gave (the whole file report repeated per hop), which grows with N squared; that
one is only computed up to 10 k ids.

Run: ``.venv/bin/python bench/bench_input_bounds.py [--sizes 1000 10000 100000]``.  Prints figures and ratios to
the smallest size measured in the same run.
"""
from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

CHILD = r"""
import json, sys, time, warnings
warnings.simplefilter("ignore")
from diag.read.ingest import read_log
from diag.read.ingest_report import hop_view
t = time.perf_counter()
rep = read_log(sys.argv[1]).report.to_dict()
views = [{"ingest": {"files": [hop_view(rep, lk)]}} for lk in rep["links"]]
new_bytes = len(json.dumps(views))
old_bytes = len(json.dumps(rep)) * len(rep["links"]) if sys.argv[2] == "1" else -1
print(json.dumps({"rows": rep["rows_read"], "hops": len(rep["links"]), "new_bytes": new_bytes,
                  "old_bytes": old_bytes, "s": time.perf_counter() - t}))
"""


def make_log(path: Path, hops: int) -> None:
    with open(path, "w") as fh:
        fh.write("time,link_id,rsl_dbm\n")
        for i in range(hops):
            for k in range(3):
                fh.write(f"2026-03-02T00:0{k}:00Z,H{i:06d},{-45 - (i + k) % 7:.1f}\n")


def run_child(path: Path, old: bool) -> tuple[dict, float]:
    env = {**os.environ, "DIAG_MAX_HOPS_PER_FILE": "1000000", "PYTHONPATH": str(ROOT)}
    proc = subprocess.Popen([sys.executable, "-c", CHILD, str(path), "1" if old else "0"], stdout=subprocess.PIPE,
                            env=env, cwd=ROOT)
    out = proc.stdout.read()
    _, status, usage = os.wait4(proc.pid, 0)
    if status != 0:
        raise SystemExit(f"child failed for {path}")
    return json.loads(out), usage.ru_maxrss / 1024.0   # KiB -> MiB (Linux)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--sizes", type=int, nargs="+", default=[1000, 10000, 100000])
    args = parser.parse_args()
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.sizes:
            path = Path(tmp) / f"hops_{n}.csv"
            make_log(path, n)
            t0 = time.perf_counter()
            info, peak = run_child(path, old=n <= 10000)
            rows.append((n, path.stat().st_size / 1e6, peak, info, time.perf_counter() - t0))
    n0, size0, peak0, info0, _ = rows[0]
    print(f"{'ids':>8} {'file MB':>8} {'peak RSS MiB':>13} {'RSS ratio':>9} {'ids ratio':>9} "
          f"{'per-hop report bytes':>21} {'bytes ratio':>11} {'old way bytes':>14} {'old ratio':>10} {'read s':>7}")
    for n, size, peak, info, _wall in rows:
        old = info["old_bytes"]
        print(f"{n:>8} {size:>8.2f} {peak:>13.1f} {peak / peak0:>9.2f} {n / n0:>9.0f} {info['new_bytes']:>21} "
              f"{info['new_bytes'] / info0['new_bytes']:>11.1f} {old if old >= 0 else '-':>14} "
              f"{(old / info0['old_bytes']) if old >= 0 else float('nan'):>10.1f} {info['s']:>7.2f}")
    print("peak RSS includes the interpreter and libraries (about the 1k figure); growth beyond it is what scales:")
    for n, _size, peak, _info, _wall in rows[1:]:
        if len(rows) > 2 and n != rows[1][0]:
            print(f"  RSS above the {n0} figure: {peak - peak0:.1f} MiB at {n} ids, "
                  f"{(peak - peak0) / max(rows[1][2] - peak0, 1e-9):.1f} times that at {rows[1][0]} ids "
                  f"(ids ratio {n / rows[1][0]:.0f})")


if __name__ == "__main__":
    main()
