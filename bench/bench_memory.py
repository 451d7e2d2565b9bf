"""Peak memory and time of reading and analysing a 10-million-row log (issue 9).

    .venv/bin/python bench/bench_memory.py                 # 10 000 000 rows (about 4-8 min on 2 busy cores)
    .venv/bin/python bench/bench_memory.py --rows 1000000  # quicker look

Each step runs in its own child process; its peak resident memory comes from the standard library's resource
accounting of THAT child (``os.wait4`` -> ``ru_maxrss``), so the steps' peaks are separate:

  baseline  import diag (numpy, pandas, pyarrow, scipy ...) and exit: the floor every step pays
  write     generate the log file, vectorised (numpy + pyarrow CSV writer)
  read      diag.read.ingest.read_log(file)  -> normalised table (what `diag ingest` does)
  analyze   read_log + diag.pipeline.analyze_link + the four table/JSON outputs (what `diag analyze` does, less the
            PDF drawing)
  cli       `python -m diag analyze FILE --freq-ghz ... --out DIR` in-process: everything, PDF included

The log: a dual-polarised hop logged every second (``time,rsl_h_dbm,rsl_v_dbm``, ISO 8601 UTC), clear-sky level
with noise, a rain-like fade every ~2 days, short drop-outs to a -99 dBm receiver floor, one 6-hour gap.  Printed:
peak per step in MiB, as a ratio to the file size and to the normalised table size (``DataFrame.memory_usage(
deep=True)``), and wall/CPU time.  ``make_log`` is also used by tests/test_conservation.py (1-million-row ingest).
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

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
T0 = np.datetime64("2026-03-02T00:00:00", "s")


def make_log(path: str | Path, rows: int, *, seed: int = 0, bad_time_every: int = 0, duplicate_every: int = 0,
             blank_every: int = 0) -> dict:
    """Write a ``rows``-line 1-s log (plus header) to ``path``; return the counts a reader must find.

    ``bad_time_every`` = k: every k-th line holds an unreadable time; ``duplicate_every`` = k: every k-th line repeats
    the line before it exactly; ``blank_every`` = k: every k-th line has an empty V cell.  0 = none.
    """
    import pyarrow as pa
    import pyarrow.compute  # noqa: F401  (pa.compute)
    import pyarrow.csv as pacsv

    rng = np.random.default_rng(seed)
    idx = np.arange(rows, dtype=np.int64)
    dup = np.zeros(rows, dtype=bool)
    if duplicate_every:
        dup[duplicate_every::duplicate_every] = True
    # seconds: one per distinct line; duplicates reuse the second of the line before
    sec = np.cumsum(~dup) - 1
    gap_at, gap_s = rows // 3, 6 * 3600                       # one 6-hour gap (no rows)
    sec = sec + np.where(sec >= gap_at, gap_s, 0)
    n_sec = int(sec[-1]) + 1 if rows else 0
    base = -42.0 + rng.normal(0.0, 0.15, n_sec)
    # rain-like fades: every ~2 days one 40-min bell up to 25-38 dB, on both channels (V a little less)
    fade = np.zeros(n_sec)
    for start in range(3600 * 10, n_sec, 3600 * 47):
        width = 2400
        t = np.arange(width)
        depth = rng.uniform(25.0, 38.0)
        stop = min(start + width, n_sec)
        fade[start:stop] += depth * np.sin(np.pi * t[: stop - start] / width) ** 2
    h = np.round(base - fade, 1)
    v = np.round(base + 0.3 - 0.85 * fade + rng.normal(0.0, 0.15, n_sec), 1)
    floor = np.zeros(n_sec, dtype=bool)                      # 30-s drop-outs to the receiver floor, ~twice a day
    for start in rng.integers(0, max(n_sec - 30, 1), size=max(n_sec // 43200, 1)):
        floor[start:start + 30] = True
    h[floor] = -99.0
    v[floor] = -99.0
    times = pa.compute.binary_join_element_wise(
        pa.array(np.datetime_as_string(T0 + sec.astype("timedelta64[s]"), unit="s")), "Z", "")
    if bad_time_every:
        bad = (idx % bad_time_every == bad_time_every - 1) & ~dup
        if duplicate_every:  # the line after a bad-time line must not repeat it (keeps the counts simple)
            bad &= ~np.roll(dup, -1)
        times = pa.compute.if_else(pa.array(bad), pa.scalar("not-a-time"), times)
    else:
        bad = np.zeros(rows, dtype=bool)
    h_txt = pa.array(h[sec]).cast(pa.string())
    v_arr = pa.array(v[sec]).cast(pa.string())
    blank = np.zeros(rows, dtype=bool)
    if blank_every:
        blank = (idx % blank_every == 1) & ~dup & ~bad
        if duplicate_every:
            blank &= ~np.roll(dup, -1)
        v_arr = pa.compute.if_else(pa.array(blank), pa.scalar(""), v_arr)
    table = pa.table({"time": times, "rsl_h_dbm": h_txt, "rsl_v_dbm": v_arr})
    pacsv.write_csv(table, str(path), write_options=pacsv.WriteOptions(include_header=True, quoting_style="none",
                                                                       batch_size=1 << 20))
    kept = rows - int(dup.sum()) - int(bad.sum())
    floor_rows = floor[sec] & ~dup & ~bad
    return {"rows": rows, "duplicates": int(dup.sum()), "bad_time": int(bad.sum()), "kept": kept,
            "values": 2 * kept, "blank": int(blank.sum()), "floor_values": int(2 * floor_rows.sum()
                                                                              - (floor_rows & blank).sum()),
            "gap_s": gap_s,
            "bytes": Path(path).stat().st_size}


# ------------------------------------------------------------------------------------------------- child steps

def _step(name: str, path: str) -> dict:
    import warnings

    warnings.simplefilter("ignore")
    out: dict = {}
    if name == "baseline":
        import diag.pipeline  # noqa: F401
        import diag.read.ingest  # noqa: F401
        import diag.report  # noqa: F401
        return out
    if name == "write":
        return make_log(path, int(os.environ["BENCH_ROWS"]))
    if name == "cli":   # the whole command, PDF included
        from diag.cli import main as cli_main

        with tempfile.TemporaryDirectory() as out_dir:
            rc = cli_main(["analyze", path, "--freq-ghz", "23", "--length-km", "8", "--polarization", "dual",
                           "--threshold-dbm", "-72", "--out", out_dir])
            out["status"] = rc
            out["outputs"] = {p.name: p.stat().st_size for p in Path(out_dir).iterdir()}
        return out
    from diag.read.ingest import read_log

    read = read_log(path)
    rep = read.report
    out.update(rows_read=rep.rows_read, rows_kept=rep.rows_kept, values=rep.values["read"],
               table_bytes=int(read.table.memory_usage(deep=True).sum()), table_rows=len(read.table))
    if name == "analyze":
        from diag.links import make_link
        from diag.pipeline import analyze_link
        from diag.report import tables

        link = make_link({"link_id": rep.links[0], "frequency_ghz": 23.0, "length_km": 8.0, "polarization": "dual",
                          "threshold_dbm": -72.0, "nominal_dbm": -42.0, "objective_pct": 99.99}, where="bench")
        table = read.table
        del read
        t = time.perf_counter()
        result = analyze_link(table, link, ingest={"files": [rep.to_dict()]})
        out["analyze_only_s"] = time.perf_counter() - t
        sizes = [len(f([result])) for f in (tables.events_csv_bytes, tables.outage_summary_csv_bytes,
                                           tables.outage_by_cause_csv_bytes, tables.findings_json_bytes)]
        out.update(outputs_bytes=sum(sizes), events=len(result.events), skipped=[s for s in result.skipped
                                                                                 if "failed" in s],
                   observed_s=result.outage.summary["observed_s"] if result.outage else None,
                   no_data_s=result.outage.summary["no_data_s"] if result.outage else None)
    return out


def _run_child(name: str, path: Path, rows: int, timeout_s: float) -> dict:
    """Run one step in a child process; its own peak RSS from os.wait4's resource usage."""
    env = {**os.environ, "BENCH_ROWS": str(rows), "PYTHONPATH": str(ROOT)}
    t = time.perf_counter()
    proc = subprocess.Popen([sys.executable, __file__, "--child", name, str(path)], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, env=env, cwd=ROOT)
    deadline = time.monotonic() + timeout_s
    while True:
        pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
        if pid:
            break
        if time.monotonic() > deadline:
            proc.kill()
            pid, status, usage = os.wait4(proc.pid, 0)
            return {"step": name, "error": f"killed after {timeout_s:.0f} s", "peak_mib": usage.ru_maxrss / 1024}
        time.sleep(0.05)
    wall = time.perf_counter() - t
    stdout, stderr = proc.stdout.read(), proc.stderr.read()
    code = os.waitstatus_to_exitcode(status)
    info = {"step": name, "wall_s": wall, "cpu_s": usage.ru_utime + usage.ru_stime,
            "peak_mib": usage.ru_maxrss / 1024.0}   # Linux: ru_maxrss in KiB
    if code != 0:
        info["error"] = f"exit {code}: " + stderr.decode(errors="replace").strip().splitlines()[-1:][0][:300] \
            if stderr.strip() else f"exit {code}"
        return info
    info.update(json.loads(stdout.decode().strip().splitlines()[-1]))
    return info


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=10_000_000)
    ap.add_argument("--dir", default=None, help="folder for the log file (default: a temporary folder)")
    ap.add_argument("--timeout-s", type=float, default=900.0, help="per step")
    ap.add_argument("--child", nargs=2, metavar=("STEP", "PATH"), help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        print(json.dumps(_step(*args.child), default=float))
        return 0
    with tempfile.TemporaryDirectory(dir=args.dir) as tmp:
        path = Path(tmp) / "hop_10m.csv"
        results = {}
        for name in ("baseline", "write", "read", "analyze", "cli"):
            results[name] = r = _run_child(name, path, args.rows, args.timeout_s)
            print(f"{name:9s} peak {r['peak_mib']:8.0f} MiB  wall {r.get('wall_s', float('nan')):7.1f} s  "
                  f"cpu {r.get('cpu_s', float('nan')):7.1f} s  {r.get('error', '')}", flush=True)
            if "error" in r:
                break
        size = path.stat().st_size if path.exists() else 0
    w, rd, an, base = (results.get(k, {}) for k in ("write", "read", "analyze", "baseline"))
    mib = 1 << 20
    print(f"\nrows {args.rows:,}; file {size / mib:.0f} MiB ({size / max(args.rows, 1):.1f} bytes/row)")
    if "table_bytes" in rd:
        tb = rd["table_bytes"]
        print(f"normalised table: {rd['table_rows']:,} rows, {tb / mib:.0f} MiB "
              f"({tb / max(rd['table_rows'], 1):.1f} bytes/value); rows read {rd['rows_read']:,}, kept "
              f"{rd['rows_kept']:,}")
        print(f"{'step':9s} {'peak MiB':>9s} {'- baseline':>10s} {'/ file':>7s} {'/ table':>8s} "
              f"{'(-base)/file':>12s} {'(-base)/table':>13s} {'wall s':>7s} {'cpu s':>7s}")
        base_b = base.get("peak_mib", 0.0) * mib
        for name, r in (("baseline", base), ("read", rd), ("analyze", an), ("cli", results.get("cli", {}))):
            if not r or "peak_mib" not in r:
                continue
            peak = r["peak_mib"] * mib
            print(f"{name:9s} {r['peak_mib']:9.0f} {r['peak_mib'] - base.get('peak_mib', 0):10.0f} "
                  f"{peak / size:7.2f} {peak / tb:8.2f} {(peak - base_b) / size:12.2f} {(peak - base_b) / tb:13.2f} "
                  f"{r.get('wall_s', float('nan')):7.1f} "
                  f"{r.get('cpu_s', float('nan')):7.1f}")
    if an and "analyze_only_s" in an:
        print(f"analysis alone {an['analyze_only_s']:.1f} s; events {an['events']}; observed {an['observed_s']} s, "
              f"no data {an['no_data_s']} s; failed stages: {an['skipped'] or 'none'}")
    if w:
        print(f"write: {w.get('wall_s', float('nan')):.1f} s")
    cli = results.get("cli", {})
    if "outputs" in cli:
        print(f"cli: status {cli['status']}; outputs {cli['outputs']}")
    return 0 if all("error" not in r for r in results.values()) else 1


if __name__ == "__main__":
    raise SystemExit(main())
