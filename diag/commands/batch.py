"""``python -m diag batch INPUTS... --links LINKS --out DIR [--workers N] [--scheduler ADDRESS]``: a whole network.

Thin wrapper over ``diag.batch.run``: parses the arguments, prints progress on stderr and a short ranking on stdout.
"""
from __future__ import annotations

import argparse
import sys

from diag.errors import InputError


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "batch", help="analyse many hops in parallel on Dask and rank the network",
        description="Analyse every hop in the inputs in parallel on a Dask cluster (a local one by default), write "
                    "each hop's outputs to OUT/hops/<hop>/ and the network ranking to OUT/network_ranking.csv and "
                    "OUT/network_report.pdf.  A hop that cannot be analysed is listed with its error.")
    parser.add_argument("inputs", nargs="+", metavar="INPUT",
                        help="log files, folders of log files (not recursive), or stores written by 'ingest --out'")
    parser.add_argument("--links", required=True, metavar="LINKS", help="links table (CSV), one row per hop")
    parser.add_argument("--out", required=True, metavar="DIR", help="output folder")
    parser.add_argument("--workers", type=int, default=None, metavar="N",
                        help="local cluster size: N worker processes, one thread each (default: number of CPUs)")
    parser.add_argument("--scheduler", default=None, metavar="ADDRESS",
                        help="use an existing Dask scheduler, e.g. tcp://10.0.0.5:8786 (its workers must have diag "
                             "installed and see the input paths)")
    parser.add_argument("--tz", default=None, metavar="ZONE",
                        help="time zone of logs whose timestamps carry none (e.g. Europe/Lisbon); default UTC")
    parser.add_argument("--map", default=None, metavar="MAPPING",
                        help="TOML file overriding the log-shape detection for every input (see 'ingest --help')")
    parser.add_argument("--no-hop-pdf", action="store_true",
                        help="skip each hop's report.pdf (the slow part for big networks); the CSV/JSON files and "
                             "the network page are still written")
    parser.add_argument("--only-listed", action="store_true",
                        help="analyse only the hops of the links table; rows of other hops are skipped and counted "
                             "(unlisted_hop)")
    parser.add_argument("--attribution", choices=("rules", "posterior"), default=None,
                        help="how causes are named, as in 'analyze' (default: the library's, today the rulebook); "
                             "with 'posterior' a fade shared with other hops of the network counts as rain "
                             "evidence (a second pass re-analyses the hops with fades)")
    parser.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    parser.set_defaults(func=main)


def _progress(quiet: bool):
    def show(stage: str, done: int, total: int, message: str) -> None:
        if not quiet:
            word = {"read": "read", "network": "network"}.get(stage, "hop")
            print(f"diag: {word} {done}/{total} {message}", file=sys.stderr, flush=True)
    return show


def main(args: argparse.Namespace) -> int:
    from diag import batch
    from diag.links import read_links_table

    if args.workers is not None and args.workers < 1:
        raise InputError(f"--workers must be at least 1, not {args.workers}")
    if args.workers is not None and args.scheduler:
        raise InputError("give either --workers (a local cluster) or --scheduler (an existing one), not both")
    if args.scheduler and "://" not in args.scheduler:
        raise InputError(f"--scheduler must be an address like tcp://host:8786, not {args.scheduler!r}")
    from diag.outputs import check_out_path

    check_out_path(args.out)
    links = read_links_table(args.links)
    from diag.read.mapping import load_mapping, only_listed

    mapping = load_mapping(args.map) if args.map else None   # checked here: one error, not one per file
    if args.only_listed:
        mapping = only_listed(mapping, links)
    config = None
    if args.attribution:
        from diag.config import AnalysisConfig

        config = AnalysisConfig(attribution=args.attribution)
    result = batch.run(args.inputs, links, out_dir=args.out, workers=args.workers, scheduler=args.scheduler,
                       tz=args.tz, mapping=mapping, progress=_progress(args.quiet), hop_pdf=not args.no_hop_pdf,
                       config=config)
    ranking = result.ranking
    ok = ranking[ranking["error"] == ""]
    failed = ranking[ranking["error"] != ""]
    print(f"{len(ok)} hops analysed, {len(failed)} not; ranking: {args.out}/network_ranking.csv, "
          f"page: {args.out}/network_report.pdf, per hop: {args.out}/hops/")
    for row in ok.head(10).itertuples():
        minutes = (f"{row.outage_min_hi:.1f}" if row.exact or row.outage_min_lo == row.outage_min_hi
                   else f"{row.outage_min_lo:.1f} to {row.outage_min_hi:.1f}")
        print(f"{int(row.rank):>4}  {row.link_id}  outage {minutes} min  main cause {row.main_cause or '-'}")
    for row in failed.itertuples():
        print(f"   -  {row.link_id}  NOT ANALYSED: {row.error}")
    if not len(ok):
        raise InputError(f"no hop could be analysed (see {args.out}/network_ranking.csv)")
    return 0
