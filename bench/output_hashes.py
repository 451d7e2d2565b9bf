"""Hashes of every output file `analyze` writes, on the demo and on every built-in scenario (a check for speed work).

Speed changes must leave the outputs byte-identical (DEVELOPERS.md, "Speed work"). Save the hashes before a
change, then compare after it::

    .venv/bin/python bench/output_hashes.py --save /tmp/before.txt        # on the code before the change
    .venv/bin/python bench/output_hashes.py --compare /tmp/before.txt     # after it: lists what changed

Inputs: `demo_logs/` as shipped, and each built-in scenario (`diag simulate --list`) simulated with a fixed seed
twice: in its own log shapes (mostly 1-s samples) and as 15-minute statistics. Outputs: `events.csv`,
`findings.json` (its reader report holds the input paths, which are made relative to the work folder), the two
outage CSVs and `report.pdf` (byte-deterministic). Takes about a minute per 10 hops on a 2-core machine.
"""
from __future__ import annotations

import argparse
import hashlib
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
SEED = 11


def _run(*args: str, cwd: Path) -> None:
    done = subprocess.run([sys.executable, "-m", "diag", *args], cwd=cwd, capture_output=True, text=True,
                          env=dict(os.environ, PYTHONPATH=str(ROOT)))
    if done.returncode:
        raise SystemExit(f"diag {' '.join(args)} failed: {done.stderr.strip().splitlines()[-1:]}")


def output_hashes(work: Path) -> dict[str, str]:
    """``{"<case>/<file>": sha256}`` for the demo and every built-in scenario, analysed under ``work``."""
    from diag.sim.scenarios import builtin_names

    cases = {"demo_logs": (ROOT / "demo_logs" / "logs", ROOT / "demo_logs" / "links.csv")}
    for name in builtin_names():
        for shape, label in ((None, name), ("stats", f"{name}_stats")):
            sim = work / "sims" / label
            extra = ["--shape", shape] if shape else []
            _run("simulate", "--scenario", name, "--seed", str(SEED), "--out", str(sim), "--no-truth-samples",
                 *extra, cwd=work)
            cases[label] = (sim / "logs", sim / "links.csv")
    hashes: dict[str, str] = {}
    for label, (logs, links) in cases.items():
        out = work / "out" / label
        _run("analyze", str(logs), "--links", str(links), "--out", str(out), cwd=work)
        for path in sorted(out.iterdir()):
            data = path.read_bytes()
            if path.name == "findings.json":   # input paths differ between checkouts: hash them relative
                data = data.replace(str(ROOT).encode() + b"/", b"").replace(str(work).encode() + b"/", b"")
            hashes[f"{label}/{path.name}"] = hashlib.sha256(data).hexdigest()
    return hashes


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    group = parser.add_mutually_exclusive_group(required=True)
    group.add_argument("--save", metavar="FILE", help="write the hashes to FILE")
    group.add_argument("--compare", metavar="FILE", help="compare with hashes saved earlier; status 1 if any differ")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        hashes = output_hashes(Path(tmp))
    lines = [f"{digest}  {name}" for name, digest in sorted(hashes.items())]
    if args.save:
        Path(args.save).write_text("\n".join(lines) + "\n")
        print(f"{len(lines)} output files hashed into {args.save}")
        return 0
    saved = dict(reversed(line.split("  ", 1)) for line in Path(args.compare).read_text().splitlines() if line)
    changed = sorted(name for name in hashes.keys() | saved.keys() if hashes.get(name) != saved.get(name))
    for name in changed:
        print(f"differs: {name}" if name in hashes and name in saved else f"only in one run: {name}")
    print(f"{len(hashes)} output files compared: {'all identical' if not changed else f'{len(changed)} differ'}")
    return 1 if changed else 0


if __name__ == "__main__":
    sys.exit(main())
