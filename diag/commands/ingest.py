"""``python -m diag ingest FILE... [--tz ZONE] [--map MAPPING] [--out PATH] [--json]``: read logs, report what was found.

Override flags (they win over the mapping file): ``--time-col`` (once, or twice for date + time of day),
``--time-format``, ``--time-marks``, ``--link-col``, ``--link-id``, ``--channel-col``,
``--signal-col NAME=QUANTITY[:CHANNEL[:STAT[:INTERVAL_S]]]`` (repeatable), ``--floor-dbm``, ``--interval-s``,
``--sep``, ``--decimal``, ``--encoding``, ``--header-line``.
"""
from __future__ import annotations

import argparse
import json
import sys

from diag.errors import InputError


def register(subparsers) -> None:
    p = subparsers.add_parser("ingest", help="read receive-level logs into the normalised table and report",
                              description="Read receive-level logs (any supported shape) into the normalised "
                                          "table; report detection and row accounting.")
    p.add_argument("files", nargs="+", metavar="FILE", help="log files, .csv.gz, .parquet, or folders")
    p.add_argument("--tz", metavar="ZONE", help="IANA time zone of stamps without offset (default UTC)")
    p.add_argument("--map", metavar="MAPPING", help="mapping file (TOML) overriding detection")
    p.add_argument("--out", metavar="PATH", help="write the table: PATH.parquet = one file, else a store folder")
    p.add_argument("--json", action="store_true", help="print the detection and accounting report as JSON")
    g = p.add_argument_group("overrides (win over --map)")
    g.add_argument("--time-col", action="append", metavar="NAME", help="time column; twice for date and time")
    g.add_argument("--time-format", metavar="FMT", help="strftime format, or iso, epoch_s, epoch_ms")
    g.add_argument("--time-marks", choices=("start", "end"), help="stamp marks interval start or end")
    g.add_argument("--link-col", metavar="NAME", help="column holding the link id")
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
    p.set_defaults(func=run)


def mapping_from_args(args: argparse.Namespace) -> dict:
    """The mapping file (if any) with the override flags laid over it."""
    from diag.ingest import load_mapping

    mapping = {k: (dict(v) if isinstance(v, dict) else v) for k, v in load_mapping(args.map).items()}

    def sec(name: str) -> dict:
        mapping.setdefault(name, {})
        return mapping[name]

    if args.time_col:
        if len(args.time_col) > 2:
            raise InputError("--time-col at most twice (date column, then time-of-day column)")
        sec("time")["columns"] = list(args.time_col)
    if args.time_format:
        sec("time")["format"] = args.time_format
    if args.time_marks:
        sec("time")["marks"] = args.time_marks
    if args.link_col:
        sec("link")["column"] = args.link_col
    if args.channel_col:
        sec("channel")["column"] = args.channel_col
    if args.signal_col:
        signals = {}
        for item in args.signal_col:
            if "=" not in item:
                raise InputError(f"--signal-col '{item}': expected NAME=QUANTITY[:CHANNEL[:STAT[:INTERVAL_S]]]")
            name, rest = item.rsplit("=", 1)
            parts = rest.split(":")
            spec = {"quantity": parts[0]}
            if len(parts) > 1 and parts[1]:
                spec["channel"] = parts[1]
            if len(parts) > 2 and parts[2]:
                spec["stat"] = parts[2]
            if len(parts) > 3 and parts[3]:
                try:
                    spec["interval_s"] = float(parts[3])
                except ValueError as exc:
                    raise InputError(f"--signal-col '{item}': interval '{parts[3]}' is not a number") from exc
            signals[name.strip()] = spec
        mapping["signals"] = signals
    if args.floor_dbm is not None:
        if args.floor_dbm.strip().lower() == "none":
            sec("floor")["dbm"] = "none"
        else:
            try:
                sec("floor")["dbm"] = float(args.floor_dbm)
            except ValueError as exc:
                raise InputError(f"--floor-dbm '{args.floor_dbm}' is not a number or 'none'") from exc
    if args.interval_s is not None:
        if args.interval_s <= 0:
            raise InputError("--interval-s must be positive")
        mapping["interval_s"] = args.interval_s
    if args.sep:
        sec("file")["separator"] = "\t" if args.sep.lower() in ("tab", "\\t") else args.sep
    if args.decimal:
        sec("file")["decimal"] = args.decimal
    if args.encoding:
        sec("file")["encoding"] = args.encoding
    if args.header_line is not None:
        if args.header_line < 1:
            raise InputError("--header-line is 1-based")
        sec("file")["header_line"] = args.header_line
    return {k: v for k, v in mapping.items() if v != {}}


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
    from diag import store
    from diag.ingest import read_logs

    mapping = mapping_from_args(args)
    result = read_logs(args.files, tz=args.tz, mapping=mapping, link_id=args.link_id)
    written = None
    if args.out:
        if args.out.lower().endswith(".parquet"):
            written = store.write_parquet(result.table, args.out)
        else:
            written = store.write_store(result.table, args.out)
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
