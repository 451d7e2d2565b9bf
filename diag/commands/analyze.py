"""``python -m diag analyze FILE|DIR... (--links LINKS | --freq-ghz F --length-km D --polarization P
--threshold-dbm T [...]) --out DIR [--gauge RAIN.csv] [--tz ZONE] [--map MAPPING]``: diagnose hops.

Thin wrapper: reads the link description, calls :func:`diag.pipeline.analyze_files` and writes the outputs with
:func:`diag.report.write_outputs` (events.csv, findings.json, outage_summary.csv, outage_by_cause.csv,
report.pdf).  Progress lines go to stderr; a one-line summary per hop to stdout.
"""
from __future__ import annotations

import argparse
import sys

from diag.errors import InputError
from diag.links import OPTIONAL

_FLAG_HELP = {
    "nominal_dbm": "expected clear-sky receive level [dBm]",
    "tx_dbm": "transmit power [dBm]",
    "antenna_gain_dbi": "antenna gain, each end [dBi]",
    "antenna_height_m": "antenna altitude above sea level, both ends [m] (ground height + site altitude; ITU-R "
                        "P.530 uses it)",
    "geoclimatic_k": "P.530 geoclimatic factor K",
    "r001_mmh": "rain rate exceeded 0.01 %% of the year [mm/h]",
    "objective_pct": "availability objective [%%]",
    "xpd_required_db": "required cross-polar discrimination [dB]",
}


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "analyze", help="find every fade, name its cause, count outage by cause",
        description="Diagnose one or more hops from receive-level logs: fade events with cause and evidence, "
                    "fading statistics, cross-polar and level-shift checks, outage by cause, findings and a "
                    "PDF summary.  Describe the hops with --links, or one hop with the --freq-ghz ... flags.")
    parser.add_argument("inputs", nargs="+", metavar="FILE|DIR", help="log files or folders of logs (not recursive)")
    parser.add_argument("--links", metavar="LINKS", help="links table (CSV), one row per hop")
    hop = parser.add_argument_group("one hop without a links table")
    hop.add_argument("--link-id", default=None, metavar="ID", help="hop name (default: the log's, else 'link')")
    hop.add_argument("--freq-ghz", type=float, metavar="F", help="frequency [GHz]")
    hop.add_argument("--length-km", type=float, metavar="D", help="path length [km]")
    hop.add_argument("--polarization", metavar="P", help="H, V or dual")
    hop.add_argument("--threshold-dbm", type=float, metavar="T", help="receiver threshold at BER 1e-6 [dBm]")
    for name in OPTIONAL:
        hop.add_argument("--" + name.replace("_", "-"), type=float, default=None, metavar="X",
                         help=_FLAG_HELP.get(name, name))
    parser.add_argument("--out", required=True, metavar="DIR", help="output folder (created if needed)")
    parser.add_argument("--gauge", metavar="RAIN.csv", help="rain-gauge CSV (time, rain mm/h) to check rain verdicts")
    parser.add_argument("--tz", default=None, metavar="ZONE",
                        help="time zone of logs whose timestamps carry none (e.g. Europe/Lisbon); default UTC")
    parser.add_argument("--map", metavar="MAPPING", help="mapping file (TOML) overriding column detection")
    parser.add_argument("--only-listed", action="store_true",
                        help="analyse only the hops of the links table; rows of other hops are skipped and counted "
                             "(unlisted_hop) instead of being an error")
    parser.add_argument("--quiet", action="store_true", help="no progress lines on stderr")
    parser.add_argument("--attribution", choices=("posterior", "rules"), default="posterior",
                        help="how causes are named: the physics posterior (the default: ITU-R P.530/P.838 hop "
                             "priors times measured evidence), or the older rulebook kept for comparison "
                             "(docs/validation.md)")
    from diag.commands.ingest import add_reader_overrides

    add_reader_overrides(parser, with_link_id=False)    # the same reader flags as ingest (issue 16)
    parser.set_defaults(func=main)


def links_from_args(args: argparse.Namespace) -> list:
    """The hops: the links table, or one hop built from the flags (never both)."""
    from diag.links import make_link, read_links_table

    flag_names = ("freq_ghz", "length_km", "polarization", "threshold_dbm")
    given = [name for name in flag_names if getattr(args, name) is not None]
    if args.links:
        if given:
            raise InputError("give either --links or the hop flags (--freq-ghz ...), not both")
        return read_links_table(args.links)
    missing = [name for name in flag_names if getattr(args, name) is None]
    if missing:
        raise InputError("describe the hop: --links LINKS, or all of --freq-ghz, --length-km, --polarization, "
                         "--threshold-dbm (missing: " + ", ".join("--" + m.replace("_", "-") for m in missing) + ")")
    values = {"link_id": args.link_id or _default_link_id(args.inputs), "frequency_ghz": args.freq_ghz,
              "length_km": args.length_km, "polarization": args.polarization, "threshold_dbm": args.threshold_dbm}
    for name in OPTIONAL:
        values[name] = getattr(args, name)
    return [make_link(values, where="command-line flags")]


def _default_link_id(files: list) -> str:
    """Flags mode without --link-id: one input file names the hop after itself (as the reader does), else "link"."""
    from pathlib import Path

    if len(files) == 1 and Path(str(files[0])).is_file():
        name = Path(str(files[0])).name
        for suffix in (".gz", ".csv", ".txt", ".tsv", ".parquet"):
            name = name[: -len(suffix)] if name.lower().endswith(suffix) else name
        return name or "link"
    return "link"


def _progress(quiet: bool):
    def show(done: int, total: int, message: str) -> None:
        if not quiet:
            print(f"diag: [{done}/{total}] {message}", file=sys.stderr, flush=True)
    return show


def load() -> None:
    """Import what the handler uses, matplotlib's PDF backend included (every analysis writes its report), for
    ``diag.cli`` to load before the command runs in a process of its own (``main(one_process=True)``)."""
    import diag.commands.ingest  # noqa: F401
    import diag.config  # noqa: F401
    import diag.outputs  # noqa: F401
    import diag.pipeline  # noqa: F401
    import diag.read.mapping  # noqa: F401
    import diag.report  # noqa: F401
    from diag.report.pdf_fonts import load_pdf_backend

    load_pdf_backend()


def main(args: argparse.Namespace) -> int:
    from diag.outputs import check_out_path
    from diag.pipeline import analyze_files
    from diag.read.mapping import only_listed
    from diag.report import write_outputs

    check_out_path(args.out)   # before the analysis: a bad --out is one line now, not after minutes
    links = links_from_args(args)
    from diag.commands.ingest import mapping_from_args

    mapping = mapping_from_args(args) or None     # the mapping file with the reader override flags laid over it
    if args.only_listed:
        mapping = only_listed(mapping, links)
    gauge = None
    if args.gauge:
        from diag.read.gauge import read_gauge

        gauge = read_gauge(args.gauge, tz=args.tz or "UTC")
    from diag.config import AnalysisConfig

    results = analyze_files(args.inputs, links=links, tz=args.tz, mapping=mapping, gauge=gauge,
                            progress=_progress(args.quiet), config=AnalysisConfig(attribution=args.attribution))
    if not results:
        raise InputError("no hop in the inputs matched the link description")
    if not args.quiet:
        print(f"diag: writing outputs to {args.out}", file=sys.stderr, flush=True)
    paths = write_outputs(results, args.out)
    for result in results:
        events = result.events
        counts = events["cause"].value_counts().to_dict() if len(events) else {}
        summary = result.outage.summary if result.outage is not None else {}
        avail = summary.get("availability_pct")
        avail_text = f", availability {avail:.4f} %" if isinstance(avail, float) and avail == avail else ""
        causes = ", ".join(f"{k} {v}" for k, v in sorted(counts.items())) or "none"
        print(f"{result.link.link_id}: {len(events)} events ({causes}){avail_text}")
    print(f"wrote {len(paths)} files to {args.out}")
    return 0
