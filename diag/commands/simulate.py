"""``python -m diag simulate --scenario NAME|FILE --out DIR [--seed N] [--shape SHAPE ...]``.

Labelled synthetic logs and their ground truth (thin layer over :mod:`diag.sim.simulate` and
:mod:`diag.sim.log_shapes`).
"""

from __future__ import annotations

import argparse
import logging
import sys
from pathlib import Path

log = logging.getLogger(__name__)


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "simulate",
        help="write labelled synthetic logs and their ground truth for a scenario",
        description="Simulate a scenario (a built-in name or a TOML file) and write links.csv, the logs "
        "and the ground truth (truth/) under --out.",
    )
    parser.add_argument("--scenario", help="built-in scenario name or path to a TOML scenario file")
    parser.add_argument("--out", help="output folder (created; existing files are replaced)")
    parser.add_argument("--seed", type=int, default=0, help="random seed (same seed, same bytes); default 0")
    parser.add_argument(
        "--shape",
        action="append",
        default=None,
        metavar="SHAPE",
        help="log shape to write (repeatable, or 'all'): wide_iso, semicolon_local, epoch, long, "
        "stats; default: each hop's log_shape from the scenario",
    )
    parser.add_argument(
        "--no-truth-samples",
        action="store_true",
        help="leave out truth/truth_samples.parquet (per-sample truth; large for long runs)",
    )
    parser.add_argument("--list", action="store_true", help="list the built-in scenarios and exit")
    parser.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from diag.errors import InputError
    from diag.sim.log_shapes import SHAPES, write_scenario
    from diag.sim.scenarios import builtin_names, load_scenario
    from diag.sim.simulate import simulate_scenario

    if args.list:
        print("\n".join(builtin_names()))
        return 0
    if not args.scenario or not args.out:
        raise InputError("simulate needs --scenario NAME|FILE and --out DIR (or --list)")
    shapes = None
    if args.shape:
        shapes = []
        for item in args.shape:
            for name in item.split(","):
                shapes.extend(SHAPES if name.strip() == "all" else [name.strip()])
        unknown = [name for name in shapes if name not in SHAPES]
        if unknown:
            raise InputError(f"unknown log shape(s) {', '.join(unknown)}; use {', '.join(SHAPES)} or all")
    scenario = load_scenario(args.scenario)
    log.info(
        "simulating %d hop(s) of scenario %s with seed %d", len(scenario.links), scenario.name, args.seed
    )
    results, _ = simulate_scenario(scenario, seed=args.seed)
    paths = write_scenario(
        results, scenario, Path(args.out), shapes=shapes, truth_samples=not args.no_truth_samples
    )
    print(f"wrote {len(paths)} files for {len(results)} hop(s) under {args.out}", file=sys.stderr)
    return 0
