"""Open receive-level logs and turn them into the normalised long table (``diag.schema``).

``read_log(source, *, name=None, tz=None, mapping=None, link_id=None) -> ReadResult``
``read_logs(sources, *, tz=None, mapping=None, link_id=None) -> ReadResult``

``source`` is a path (a CSV/text file, ``.csv.gz`` or any gzip'd text, a ``.parquet`` file written by
``diag ingest --out``, a store folder written by ``diag.read.store.write_store``, or a folder whose files -- not
sub-folders -- are read) or ``bytes`` (a dashboard upload; pass ``name=``).  This module and ``diag.read.sniff`` are
the only ones that open log files: ``sniff`` finds the encoding (UTF-8 with or without BOM, UTF-16 with BOM, else
Latin-1), the separator (``,`` ``;`` tab ``|``), the decimal mark and the header line after any preamble; this
module streams the rows through pyarrow's CSV reader in blocks; ``diag.read.normalise`` recognises the columns and
parses times and values vectorised.  ``diag.read.mapping`` reads the overrides, ``diag.read.ingest_report`` holds
the report and the table summary.

The row and value accounting rule is in ``diag.read.normalise``'s docstring: every data row is kept or counted under one
named reason, ``rows_read == rows_kept + sum(rejected.values())``; every value of a kept row is one table row.

``mapping`` overrides detection (a dict, or the path of a TOML file with the same keys)::

    [file]     separator = ";"   decimal = ","   encoding = "latin-1"   header_line = 5   (1-based)
    [time]     columns = ["Datum", "Uhrzeit"]   format = "%d.%m.%Y %H:%M:%S" | "iso" | "epoch_s" | "epoch_ms"
               zone = "Europe/Vienna"   marks = "start" | "end"
    [link]     column = "Hop"   or   id = "HOP-7"
    [channel]  column = "Pol"
    [signals."Level A"]  quantity = "rsl"   channel = "A"   stat = "min"   interval_s = 900
    [floor]    dbm = -99   (or "none" to switch floor detection off)
    interval_s = 900        (statistics interval when the names do not say it)
"""
from __future__ import annotations

import csv
import logging
import warnings
from pathlib import Path
from typing import Iterable

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute  # noqa: F401  (pa.compute)
import pyarrow.csv as pacsv

from diag import schema as S
from diag.errors import DataWarning, InputError, require_regular_file
from diag.read import limits, store
from diag.read import normalise as N
from diag.read import values as V
from diag.read.colplan import ColumnPlan, plan_columns, section
from diag.read.hop_match import hop_of_file_name
from diag.read.ingest_report import IngestReport, ReadResult, summarise
from diag.read.mapping import load_mapping
from diag.read.sniff import (
    SAMPLE_BYTES,
    Dialect,
    Source,
    decode_head,
    file_stem,
    open_stream,
    read_head,
    sniff,
)
from diag.read.timestamps import TIME_REASONS, check_tz, parse_times

log = logging.getLogger(__name__)

BLOCK_BYTES = 8 * 1024 * 1024
LOG_SUFFIXES = {".csv", ".txt", ".tsv", ".log", ".dat", ".gz", ".parquet", ".psv", ""}
ROW_REASONS = ("malformed_row", "too_many_fields", "bad_time", "dst_nonexistent", "dst_ambiguous",
               "time_out_of_range", "unknown_quantity", "unlisted_hop", "duplicate", "conflicting_duplicate")
MAX_RAGGED_ROWS = 200_000   # rows with another field count than the header looked at again; more: malformed_row

__all__ = ["IngestReport", "ReadResult", "read_log", "read_logs", "expand_paths", "folder_files", "ROW_REASONS"]


# ---------------------------------------------------------------------------------------------------------------
# reading one CSV-like source


def _read_csv(src: Source, *, tz: str | None, mapping: dict, link_id: str | None) -> ReadResult:
    head = read_head(src, SAMPLE_BYTES)
    complete = len(head) < SAMPLE_BYTES
    fsec = section(mapping, "file")
    if fsec.get("encoding"):
        enc = str(fsec["encoding"])
        try:
            text = head.decode(enc, errors="replace")
        except LookupError as exc:
            raise InputError(f"unknown encoding '{enc}'", path=src.label) from exc
    else:
        text, enc = decode_head(head, complete, src.label)
    dialect = sniff(text, complete, src.label, mapping)
    try:
        return _read_rows(src, enc, dialect, tz=tz, mapping=mapping, link_id=link_id)
    except _RetryLatin1:
        return _read_rows(src, "latin-1", dialect, tz=tz, mapping=mapping, link_id=link_id)


def _ragged_rows(texts: list[str], sep: str, ncols: int) -> tuple[list[list[str]], np.ndarray, int]:
    """Rows with another field count: short rows padded (absent cells marked), longer rows with only empty extra
    fields (trailing separators) trimmed, other longer rows counted.  -> (rows, absent mask, too_long count)."""
    rows, absent, too_long = [], [], 0
    for text in texts:
        try:
            fields = next(csv.reader([text], delimiter=sep, quotechar='"'))
        except (csv.Error, StopIteration):
            fields = [text]
        if len(fields) > ncols:
            if any(f.strip() for f in fields[ncols:]):
                too_long += 1
                continue
            fields = fields[:ncols]
        gone = [False] * len(fields) + [True] * (ncols - len(fields))
        rows.append(fields + [""] * (ncols - len(fields)))
        absent.append(gone)
    return rows, np.array(absent, dtype=bool).reshape(len(rows), ncols), too_long


def check_key_bounds(tuples: list[tuple], label: str) -> None:
    """``InputError`` when the (link, channel, quantity-name) keys seen so far exceed the hops-per-file or the
    channels-per-hop bound (``diag.read.limits``): checked as the blocks stream in, before memory grows."""
    links = {t[0] for t in tuples}
    if len(links) > limits.MAX_HOPS_PER_FILE:
        raise InputError(f"more than {limits.MAX_HOPS_PER_FILE} hops (link ids) in one file, the limit "
                         f"(DIAG_MAX_HOPS_PER_FILE); split the file", path=label)
    per_link: dict[str, set] = {}
    for t in tuples:
        per_link.setdefault(t[0], set()).add(t[1])
    worst = max(per_link.items(), key=lambda kv: len(kv[1]))
    if len(worst[1]) > limits.MAX_CHANNELS_PER_HOP:
        raise InputError(f"hop {worst[0] or '(unnamed)'!r} has more than {limits.MAX_CHANNELS_PER_HOP} channels, "
                         f"the limit (DIAG_MAX_CHANNELS_PER_HOP)", path=label)


class _RetryLatin1(Exception):
    pass


def _read_rows(src: Source, enc: str, dialect: Dialect, *, tz, mapping, link_id) -> ReadResult:
    header_line = dialect.header_index + 1
    names = dialect.names
    ragged: list[str] = []          # rows whose field count differs from the header's (kept for a second look)
    unexamined = 0

    def on_invalid(row) -> str:
        nonlocal unexamined
        if len(ragged) < MAX_RAGGED_ROWS:
            ragged.append(row.text)
        else:
            unexamined += 1
        return "skip"

    pa_enc = {"utf-8-sig": "utf8", "utf-8": "utf8"}.get(enc, enc)
    read_opts = pacsv.ReadOptions(column_names=names, skip_rows=dialect.header_index + 1, encoding=pa_enc,
                                  block_size=BLOCK_BYTES)
    parse_opts = pacsv.ParseOptions(delimiter=dialect.separator, quote_char='"', double_quote=True,
                                    newlines_in_values=False, ignore_empty_lines=True,
                                    invalid_row_handler=on_invalid)
    conv_opts = pacsv.ConvertOptions(column_types={n: pa.string() for n in names}, strings_can_be_null=False,
                                     quoted_strings_can_be_null=False, null_values=[])
    report = IngestReport(file=src.label, encoding=enc, separator=dialect.separator, decimal=dialect.decimal,
                          header_line=header_line)
    keys = N.KeyIndex()
    chunks: list[N.RowBlock] = []
    rejected = dict.fromkeys(ROW_REASONS, 0)
    first_bad_time: list = []
    plan: ColumnPlan | None = None
    rows_seen = 0
    lsec = section(mapping, "link")

    def process(batch: pa.RecordBatch, absent: np.ndarray | None = None) -> None:
        """Parse one block of string columns; ``absent`` marks cells a short row did not have."""
        nonlocal plan, rows_seen
        n = batch.num_rows
        if n == 0:
            return
        if plan is None:
            plan = plan_columns(batch, names, mapping, tz, src.label, header_line)
            if len(plan.values) > limits.MAX_VALUE_COLUMNS:
                raise InputError(f"{len(plan.values)} signal columns, more than the limit of "
                                 f"{limits.MAX_VALUE_COLUMNS} (DIAG_MAX_VALUE_COLUMNS)", path=src.label,
                                 line=header_line)
        cols = [batch.column(batch.schema.get_field_index(c)) for c in plan.time.columns]
        ns, tcode = parse_times(cols, plan.time)
        for code, reason in enumerate(TIME_REASONS, start=1):
            rejected[reason] += int((tcode == code).sum())
        if not first_bad_time and (tcode == 1).any():
            i = int(np.flatnonzero(tcode == 1)[0])
            first_bad_time.append((rows_seen + i, " | ".join(str(c[i].as_py())[:30] for c in cols)))
        keep = tcode == 0
        kb = batch.take(pa.array(np.flatnonzero(keep))) if not keep.all() else batch
        m = kb.num_rows
        getcol = lambda c: kb.column(kb.schema.get_field_index(c)) if c else None  # noqa: E731
        known = len(keys.tuples)
        key = keys.encode([getcol(plan.link_col), getcol(plan.channel_col), getcol(plan.qname_col)], m)
        if len(keys.tuples) != known:
            check_key_bounds(keys.tuples, src.label)
        vals = np.empty((m, len(plan.values)), dtype=np.float64)
        reas = np.empty((m, len(plan.values)), dtype=np.int8)
        for j, vc in enumerate(plan.values):
            vals[:, j], reas[:, j] = V.parse_values(getcol(vc.name), dialect.decimal)
            if absent is not None:
                gone = absent[keep, names.index(vc.name)]
                reas[gone, j] = V.R_ABSENT
                vals[gone, j] = np.nan
        rownum = rows_seen + np.flatnonzero(keep).astype(np.int64)
        if absent is not None:
            rownum = np.full(m, -1, dtype=np.int64)   # re-read rows: their place in the file is not known
        chunks.append(N.RowBlock(ns[keep], key, rownum, vals, reas))
        rows_seen += n

    reader = None
    try:
        reader = pacsv.open_csv(open_stream(src), read_options=read_opts, parse_options=parse_opts,
                                convert_options=conv_opts)
        for batch in reader:
            process(batch)
        reader.close()    # release Arrow's read-ahead thread now, not at interpreter exit (an abort seen under load)
        reader = None
        if ragged:
            short, absent, too_long = _ragged_rows(ragged, dialect.separator, len(names))
            rejected["too_many_fields"] += too_long
            if short:
                process(pa.RecordBatch.from_arrays([pa.array(list(c), pa.string()) for c in zip(*short)],
                                                   names=names), absent)
    except pa.ArrowInvalid as exc:
        msg = " ".join(str(exc).split())
        if "UTF8" in msg.upper() and pa_enc == "utf8":
            raise _RetryLatin1() from exc
        if "straddling" in msg or "block size" in msg:
            msg = f"a line is longer than {BLOCK_BYTES // 2**20} MiB"
        raise InputError(f"cannot parse as a delimited text log ({msg[:160]})", path=src.label) from exc
    except (pa.ArrowException, OSError, EOFError) as exc:
        msg = " ".join(str(exc).split())
        raise InputError(f"cannot read ({msg[:160]})", path=src.label) from exc
    finally:
        if reader is not None:
            try:
                reader.close()
            except Exception:  # noqa: BLE001 - closing after an error must not hide that error
                pass
    rejected["malformed_row"] += unexamined
    rows_read = rows_seen + rejected["too_many_fields"] + unexamined
    if plan is None:
        if ragged or unexamined:
            raise InputError(f"no row matches the header's {len(names)} columns", path=src.label,
                             line=header_line)
        raise InputError("no data rows after the header", path=src.label, line=header_line)
    report.rows_read = rows_read
    report.layout = plan.layout
    report.columns = plan.roles
    report.ignored_columns = plan.ignored
    report.guesses = list(plan.guesses)
    report.warnings = list(plan.warnings)
    report.time = {"columns": list(plan.time.columns), "format": plan.time.fmt or plan.time.kind,
                   "zone": plan.time.tz or ("offset in the stamps" if plan.time.has_offset else "UTC"),
                   "marks": "end" if plan.time.marks_end else "start"}
    if plan.time.kind not in ("epoch_s", "epoch_ms") and not plan.time.has_offset and not plan.time.tz:
        report.guesses.append("time stamps carry no UTC offset: read as UTC (give --tz ZONE, e.g. Europe/Vienna, "
                              "when they are local time)")
    report.method_notes = [g for g in report.guesses if "the evidence ties" in g]
    if rows_seen and rejected["bad_time"] == rows_seen:
        line, val = first_bad_time[0]
        raise InputError(f"no row has a readable time in {list(plan.time.columns)} (first value '{val}'); give "
                         f"--time-format", path=src.label, line=header_line + 1 + line)
    # default link id
    if plan.link_col:
        report.link_source = "column"
        default_link = link_id or lsec.get("id") or src.stem
    elif link_id or lsec.get("id"):
        report.link_source = "argument" if link_id else "mapping"
        default_link = str(link_id or lsec.get("id"))
    else:
        report.link_source = "file_name" if src.stem != S.DEFAULT_LINK_ID else "default"
        default_link = src.stem
        only = lsec.get("only")
        if only is not None:   # --only-listed: the hop the file name names (diag.read.hops), else the only one
            hop = hop_of_file_name(only, src.label)
            default_link = hop or (str(only[0]) if len(only) == 1 else default_link)
        if report.link_source == "file_name":
            report.guesses.append(f"link id taken from the file name: '{default_link}' (override with --link-id)")
    table = N.assemble(chunks, keys, plan, report, rejected, default_link, mapping, header_line)
    report.rejected = {k: v for k, v in rejected.items() if v}
    report.rows_kept = rows_read - sum(report.rejected.values())
    summarise(table, report)
    if ragged or unexamined:
        report.warnings.append(f"{len(ragged) + unexamined} rows had another number of fields than the header: "
                               f"short rows kept (absent cells missing), {rejected['too_many_fields']} longer rows "
                               f"rejected (too_many_fields), {unexamined} not examined (malformed_row)")
    if rejected["dst_nonexistent"] or rejected["dst_ambiguous"]:
        report.warnings.append(f"local times at daylight-saving changes not converted: "
                               f"{rejected['dst_nonexistent']} non-existent, {rejected['dst_ambiguous']} ambiguous "
                               f"(counted, not guessed)")
    return ReadResult(table, report)


# ---------------------------------------------------------------------------------------------------------------
# public API

def _classify(source, name: str | None) -> Source:
    if isinstance(source, (bytes, bytearray, memoryview)):
        data = bytes(source)
        label = name or "upload"
        return Source(label, file_stem(label), None, data, gz=data[:2] == b"\x1f\x8b")
    path = Path(source)
    label = name or str(path)
    if not path.exists():
        raise InputError("file not found", path=label)
    if path.is_dir():
        return Source(label, file_stem(path.name), path, None)
    require_regular_file(path, label)   # a FIFO or a device would block or never end
    try:
        with open(path, "rb") as fh:
            magic = fh.read(4)
    except OSError as exc:
        raise InputError(f"cannot read ({exc.strerror})", path=label) from exc
    return Source(label, file_stem(path.name), path, None, gz=magic[:2] == b"\x1f\x8b")


def folder_files(path: str | Path) -> list[Path]:
    """The logs of a folder, as every command reads them: its files (not sub-folders), sorted, without hidden,
    ``_``/``~`` names and without endings other than ``LOG_SUFFIXES``."""
    return sorted(p for p in Path(path).iterdir() if p.is_file() and not p.name.startswith((".", "_", "~"))
                  and "".join(p.suffixes[-1:]).lower() in LOG_SUFFIXES)


def expand_paths(paths) -> list[Path]:
    """Log paths as every command reads them: a folder gives its logs (``folder_files``), a Parquet store folder
    stays whole.  ``InputError`` for a path that does not exist, a folder without logs, or no paths at all."""
    out: list[Path] = []
    for raw in paths:
        path = Path(raw)
        if path.is_dir() and store.is_store(path):
            out.append(path)  # a store written by 'ingest --out': read whole, or hop by hop by 'batch'
        elif path.is_dir():
            found = folder_files(path)
            if not found:
                raise InputError("folder holds no files", path=str(path))
            out.extend(found)
        elif path.exists():
            out.append(path)
        else:
            raise InputError("no such file or folder", path=str(path))
    if not out:
        raise InputError("no input files given")
    return out


def read_log(source: str | Path | bytes, *, name: str | None = None, tz: str | None = None,
             mapping: dict | str | Path | None = None, link_id: str | None = None) -> ReadResult:
    """Read one log (file, bytes, .csv.gz, .parquet, store folder, or a folder of logs) into the normalised table."""
    mapping = load_mapping(mapping)
    tz = check_tz(tz, name)
    src = _classify(source, name)
    if src.path is not None and src.path.is_dir():
        if store.is_store(src.path):
            return _from_table(store.read_store(src.path), src.label, "parquet")
        files = folder_files(src.path)
        if not files:
            raise InputError("folder holds no log files", path=src.label)
        return read_logs(files, tz=tz, mapping=mapping, link_id=link_id)
    head = src.data[:4] if src.data is not None else read_head(Source(src.label, src.stem, src.path, None), 4)
    if head == b"PAR1":
        tab = store.read_parquet(src.data if src.data is not None else src.path, name=src.label)
        return _from_table(tab, src.label, "parquet")
    result = _read_csv(src, tz=tz, mapping=mapping, link_id=link_id)
    for w in result.report.warnings:
        warnings.warn(f"{src.label}: {w}", DataWarning, stacklevel=2)
    return result


def _from_table(table: pd.DataFrame, label: str, layout: str) -> ReadResult:
    rep = IngestReport(file=label, layout=layout, rows_read=len(table), rows_kept=len(table))
    st = table[S.STATUS].value_counts().to_dict() if len(table) else {}
    rep.values = {"read": len(table), "ok": int(st.get(S.OK, 0)), "signal_lost": int(st.get(S.SIGNAL_LOST, 0)),
                  "missing": int(st.get(S.MISSING, 0)), "reasons": {}}
    summarise(table, rep)
    return ReadResult(table, rep)


def read_logs(sources: Iterable, *, tz: str | None = None, mapping: dict | str | Path | None = None,
              link_id: str | None = None) -> ReadResult:
    """Read several logs (paths, or (name, bytes) pairs) into one table; the report keeps each file's report.

    A value that appears in two files (same link, channel, quantity, stat and time) is kept once; those dropped
    are counted in ``overlap_values_dropped`` (the row accounting of each file is unchanged)."""
    mapping = load_mapping(mapping)
    results = []
    for s in sources:
        if isinstance(s, tuple):
            results.append(read_log(s[1], name=s[0], tz=tz, mapping=mapping, link_id=link_id))
        else:
            results.append(read_log(s, tz=tz, mapping=mapping, link_id=link_id))
    if not results:
        raise InputError("no input files given")
    if len(results) == 1:
        return results[0]
    tables = [r.table for r in results if len(r.table)]
    table = S.concat(tables)   # keeps the key columns categorical (unions their categories)
    rep = IngestReport(file=", ".join(r.report.file for r in results), layout="several")
    rep.files = [r.report.to_dict() for r in results]
    rep.rows_read = sum(r.report.rows_read for r in results)
    rep.rows_kept = sum(r.report.rows_kept for r in results)
    for r in results:
        for k, v in r.report.rejected.items():
            rep.rejected[k] = rep.rejected.get(k, 0) + v
        rep.duplicates += r.report.duplicates
        rep.conflicting_duplicates += r.report.conflicting_duplicates
        rep.out_of_order_rows += r.report.out_of_order_rows
        rep.guesses += [f"{r.report.file}: {g}" for g in r.report.guesses]
        rep.method_notes += [f"{r.report.file}: {g}" for g in r.report.method_notes]
        rep.warnings += [f"{r.report.file}: {w}" for w in r.report.warnings]
    if len(table):
        table = table.sort_values([S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.TIME], kind="stable")
        keycols = [S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.TIME]
        dup = table.duplicated(subset=keycols, keep="first").to_numpy()
        if dup.any():
            rep.overlap_values_dropped = int(dup.sum())
            rep.warnings.append(f"{rep.overlap_values_dropped} values appear in more than one file; kept once")
            table = table[~dup]
        table = S.conform(table.reset_index(drop=True))   # (drops link/channel categories no longer present)
    st = table[S.STATUS].value_counts().to_dict() if len(table) else {}
    rep.values = {"read": sum(r.report.values.get("read", 0) for r in results), "ok": int(st.get(S.OK, 0)),
                  "signal_lost": int(st.get(S.SIGNAL_LOST, 0)), "missing": int(st.get(S.MISSING, 0)),
                  "reasons": {}}
    for r in results:
        for k, v in r.report.values.get("reasons", {}).items():
            rep.values["reasons"][k] = rep.values["reasons"].get(k, 0) + v
    summarise(table, rep)
    return ReadResult(table, rep)
