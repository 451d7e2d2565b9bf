"""``python -m diag ingest FILE... [--tz ZONE] [--map MAPPING] [--out PATH] [--json]``: read logs, report findings.

Override flags (they win over the mapping file): ``--time-col`` (once, or twice for date + time of day),
``--time-format``, ``--time-marks``, ``--link-col``, ``--link-id``, ``--channel-col``,
``--signal-col NAME=QUANTITY[:CHANNEL[:STAT[:INTERVAL_S]]]`` (repeatable), ``--floor-dbm``, ``--interval-s``,
``--sep``, ``--decimal``, ``--encoding``, ``--header-line``.
"""
from __future__ import annotations

import argparse
import json
import sys


def register(subparsers) -> None:
    p = subparsers.add_parser("ingest", help="read receive-level logs into the normalised table and report",
                              description="Read receive-level logs (any supported shape) into the normalised "
                                          "table; report detection and row accounting.")
    p.add_argument("files", nargs="+", metavar="FILE", help="log files, .csv.gz, .parquet, or folders")
    p.add_argument("--tz", metavar="ZONE", help="IANA time zone of stamps without offset (default UTC)")
    p.add_argument("--map", metavar="MAPPING", help="mapping file (TOML) overriding detection")
    p.add_argument("--out", metavar="PATH", help="write the table: PATH.parquet = one file, else a store folder")
    p.add_argument("--json", action="store_true", help="print the detection and accounting report as JSON")
    add_reader_overrides(p)
    p.set_defaults(func=run)


def add_reader_overrides(p, *, with_link_id: bool = True) -> None:
    """The reader's override flags (shared by ``ingest`` and ``analyze``; ``analyze`` has its own --link-id)."""
    g = p.add_argument_group("reader overrides (win over --map)")
    g.add_argument("--time-col", action="append", metavar="NAME", help="time column; twice for date and time")
    g.add_argument("--time-format", metavar="FMT", help="strftime format, or iso, epoch_s, epoch_ms")
    g.add_argument("--time-marks", choices=("start", "end"), help="stamp marks interval start or end")
    g.add_argument("--link-col", metavar="NAME", help="column holding the link id")
    if with_link_id:
        g.add_argument("--link-id", metavar="ID", help="link id for files that name none")
    g.add_argument("--channel-col", metavar="NAME", help="column holding the channel (long layout)")
    g.add_argument("--signal-col", action="append", metavar="NAME=QUANTITY[:CHANNEL[:STAT[:INTERVAL_S]]]",
                   help="a signal column, e.g. 'Level A=rsl:A' or 'Lo=rsl:H:min:900' (repeatable; then only these)")
    g.add_argument("--floor-dbm", metavar="DBM", help="receiver floor: readings at or below are signal lost; "
                                                     "'none' switches floor detection off")
    g.add_argument("--interval-s", type=float, metavar="S", help="statistics interval when names do not say it")
    g.add_argument("--sep", metavar="CHAR", help="separator: , ; | or tab")
    g.add_argument("--decimal", choices=(".", ","), help="decimal mark")
    g.add_argument("--encoding", metavar="NAME", help="text encoding, e.g. utf-8, latin-1")
    g.add_argument("--header-line", type=int, metavar="N", help="1-based line holding the column names")


def mapping_from_args(args: argparse.Namespace) -> dict:
    """The mapping file (if any) with the override flags laid over it (parsing lives in the library)."""
    from diag.read.mapping import load_mapping, mapping_from_options

    return mapping_from_options(
        base=load_mapping(args.map), time_cols=args.time_col, time_format=args.time_format,
        time_marks=args.time_marks, link_col=args.link_col, channel_col=args.channel_col,
        signal_cols=args.signal_col, floor=args.floor_dbm, interval_s=args.interval_s, separator=args.sep,
        decimal=args.decimal, encoding=args.encoding, header_line=args.header_line)


def summary_lines(rep: dict) -> list[str]:
    """A short human-readable summary of an ingest report."""
    out = [f"file(s): {rep['file']}"]
    if rep.get("layout") != "several":
        out.append(f"layout: {rep.get('layout')}; separator {rep.get('separator')!r}, decimal {rep.get('decimal')!r}, "
                   f"encoding {rep.get('encoding')}, header line {rep.get('header_line')}")
    out.append(f"links: {', '.join(rep['links'])}; channels: {', '.join(rep['channels'])}; "
               f"quantities: {', '.join(rep['quantities'])}; kind: {rep['kind']}, interval {rep['interval_s']} s")
    out.append(f"time span (UTC): {rep['start_utc']} .. {rep['end_utc']}")
    rej = ", ".join(f"{k} {v}" for k, v in rep["rejected"].items()) or "none"
    out.append(f"rows: read {rep['rows_read']}, kept {rep['rows_kept']}, rejected: {rej}")
    v = rep.get("values") or {}
    out.append(f"values: {v.get('read')} (ok {v.get('ok')}, signal lost {v.get('signal_lost')}, "
               f"missing {v.get('missing')})")
    out.append(f"gaps (no data, not outage): {rep['gap_count']}, {rep['gap_seconds']:g} s")
    for g in rep.get("guesses", []):
        out.append(f"guess: {g}")
    return out


def run(args: argparse.Namespace) -> int:
    from diag.read import store
    from diag.read.ingest import read_logs

    if args.out:   # checked before reading: a bad --out is one line now, not after the whole read
        from diag.outputs import check_out_path

        check_out_path(args.out, folder=not args.out.lower().endswith(".parquet"))
    mapping = mapping_from_args(args)
    result = read_logs(args.files, tz=args.tz, mapping=mapping, link_id=args.link_id)
    written = None
    if args.out:   # built beside --out, then renamed into place: an old store goes only once the new one is whole
        from diag.outputs import replace_dir, replace_file

        if args.out.lower().endswith(".parquet"):
            written = replace_file(args.out, lambda tmp: store.write_parquet(result.table, tmp))
        else:
            written = replace_dir(args.out, lambda tmp: store.write_store(result.table, tmp),
                                  may_replace=lambda p: store.is_store(p) or not any(p.iterdir()))
    rep = result.report.to_dict()
    if args.json:
        if written is not None:
            rep["written"] = str(written)
        json.dump(rep, sys.stdout, indent=1)
        sys.stdout.write("\n")
    else:
        for line in summary_lines(rep):
            print(line)
        if written is not None:
            print(f"written: {written}")
    return 0
