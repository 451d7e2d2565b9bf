"""What network corroboration costs ``batch``, as ratios measured side by side in one run (not a test; figures
depend on the machine and its load, printed at the top).

``diag.batch.run`` under the posterior attribution on the same files and the same local cluster, alternately
with ``corroborate=False`` (every hop as if alone: one pass) and ``corroborate=True`` (first pass, network columns
in the driver, second pass over the hops with fade events), for networks of ``--sizes`` hops; one-week hops of
15-minute statistics (``bench/bench_network.py``'s ``make_network``: ``--distinct`` simulated hops repeated under
new ids, so copies of one hop fade together as neighbours in a storm would).  Reported per size: best wall of
``--rounds`` for each, their ratio and the extra seconds per hop; the corroborated run split into reading, first
pass, the driver's own work between the passes (network columns of every hop) and second pass (with how many hops
it took); and the peak memory of the workers (polled every 0.2 s).
``--pdf`` also draws each hop's PDF (the default leaves it out: the analysis is then the whole cost, the worst case
for the ratio).

    .venv/bin/python bench/bench_corroboration.py [--sizes 20 40] [--rounds 2] [--workers 2] [--pdf]
"""
from __future__ import annotations

import argparse
import importlib.util
import sys
import tempfile
import threading
import time
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
warnings.simplefilter("ignore")


def _bench_network():
    spec = importlib.util.spec_from_file_location("bench_network", ROOT / "bench" / "bench_network.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _rss() -> int:
    import psutil

    return psutil.Process().memory_info().rss


class _WorkerPeak:
    """Peak resident memory of each worker, polled every 0.2 s while a run goes on."""

    def __init__(self, client):
        self.client, self.peak, self._stop = client, 0, threading.Event()

    def __enter__(self):
        def poll():
            while not self._stop.is_set():
                try:
                    self.peak = max([self.peak, *self.client.run(_rss).values()])
                except Exception:   # a worker busy or restarting: try again at the next tick
                    pass
                time.sleep(0.2)

        self._thread = threading.Thread(target=poll, daemon=True)
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()


def one_run(client, folder: Path, links, corroborate: bool, pdf: bool) -> dict:
    from diag import batch
    from diag.config import AnalysisConfig

    stamps: list[tuple[str, float]] = []
    driver = [0.0]
    network_pass = batch._network_pass

    def timed(*args, **kwargs):   # the driver's own work between the passes
        t = time.perf_counter()
        try:
            return network_pass(*args, **kwargs)
        finally:
            driver[0] += time.perf_counter() - t

    batch._network_pass = timed
    try:
        with tempfile.TemporaryDirectory() as out, _WorkerPeak(client) as peak:
            t0 = time.perf_counter()
            res = batch.run([folder], links, out_dir=out, client=client,
                            config=AnalysisConfig(attribution="posterior"), hop_pdf=pdf, corroborate=corroborate,
                            progress=lambda stage, *a: stamps.append((stage, time.perf_counter())))
            wall = time.perf_counter() - t0
    finally:
        batch._network_pass = network_pass
    failed = [(r.link.link_id, r.error) for r in res.results if r.error]
    if failed:
        raise SystemExit(f"hops failed: {failed[:3]}")
    read_end = max(t for s, t in stamps if s == "read")
    first_end = max(t for s, t in stamps if s == "analyse")
    second = [t for s, t in stamps if s == "network"]
    return {"wall": wall, "read": read_end - t0, "first": first_end - read_end, "driver": driver[0],
            "second": (max(second) - first_end) if second else 0.0, "second_hops": len(second),
            "worker_peak": peak.peak}


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[20, 40])
    parser.add_argument("--rounds", type=int, default=2)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--distinct", type=int, default=12)
    parser.add_argument("--pdf", action="store_true", help="draw each hop's PDF too")
    args = parser.parse_args(argv)
    from distributed import Client, LocalCluster

    bn = _bench_network()
    print(f"machine: {bn.machine()}")
    print(f"batch --attribution posterior, {args.workers} workers, hops of one week of 15-min statistics, "
          f"per-hop PDF {'on' if args.pdf else 'off'}; best of {args.rounds} alternated rounds\n")
    rows = []
    with tempfile.TemporaryDirectory() as tmp, \
            LocalCluster(n_workers=args.workers, threads_per_worker=1, processes=True, dashboard_address=":0",
                         silence_logs=50) as cluster, Client(cluster) as client:
        biggest = max(args.sizes)
        folder = Path(tmp) / "all"
        links = bn.make_network(folder, biggest, 0, distinct=args.distinct)
        for size in [2, *sorted(args.sizes)]:
            sub = Path(tmp) / f"n{size}"
            sub.mkdir()
            for link in links[:size]:
                (sub / f"{link.link_id}.csv").symlink_to(folder / f"{link.link_id}.csv")
            if size == 2:   # warm the workers' imports
                one_run(client, sub, links[:size], True, False)
                continue
            best = {False: None, True: None}
            for _ in range(args.rounds):
                for corroborate in (False, True):
                    got = one_run(client, sub, links[:size], corroborate, args.pdf)
                    if best[corroborate] is None or got["wall"] < best[corroborate]["wall"]:
                        best[corroborate] = got
            rows.append((size, best[False], best[True]))
    print("| hops | alone: wall s | corroborated: wall s | ratio | extra s per hop | corroborated: read / 1st pass / "
          "driver / 2nd pass s (hops) | alone: read / analyse s | worker peak MiB alone / corroborated |")
    print("|---:|---:|---:|---:|---:|---:|---:|---:|")
    for size, alone, net in rows:
        print(f"| {size} | {alone['wall']:.1f} | {net['wall']:.1f} | {net['wall'] / alone['wall']:.2f} | "
              f"{(net['wall'] - alone['wall']) / size:.3f} | {net['read']:.1f} / {net['first']:.1f} / "
              f"{net['driver']:.2f} / {net['second']:.1f} ({net['second_hops']}) | {alone['read']:.1f} / "
              f"{alone['first']:.1f} | {alone['worker_peak'] / 2**20:.0f} / {net['worker_peak'] / 2**20:.0f} |")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
