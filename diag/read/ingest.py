"""Open receive-level logs and turn them into the normalised long table (``diag.schema``).

``read_log(source, *, name=None, tz=None, mapping=None, link_id=None) -> ReadResult``
``read_logs(sources, *, tz=None, mapping=None, link_id=None) -> ReadResult``

``source`` is a path (a CSV/text file, ``.csv.gz`` or any gzip'd text, a ``.parquet`` file written by
``diag ingest --out``, a store folder written by ``diag.read.store.write_store``, or a folder whose files -- not
sub-folders -- are read) or ``bytes`` (a dashboard upload; pass ``name=``).  This is the only module that opens log
files.  It finds the encoding (UTF-8 with or without BOM, UTF-16 with BOM, else Latin-1), the separator (``,`` ``;``
tab ``|``), the decimal mark, the header line after any preamble, and streams the rows through pyarrow's CSV reader
in blocks; ``diag.read.normalise`` recognises the columns and parses times and values vectorised.

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

import codecs
import csv
import dataclasses
import gzip
import io
import logging
import math
import re
import statistics
import tomllib
import warnings
import zlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute  # noqa: F401  (pa.compute)
import pyarrow.csv as pacsv

from diag import schema as S
from diag.errors import DataWarning, InputError
from diag.read import normalise as N
from diag.read import store

log = logging.getLogger(__name__)

SAMPLE_BYTES = 256 * 1024
BLOCK_BYTES = 8 * 1024 * 1024
SEPARATORS = ("\t", ";", "|", ",")     # tie-break order
SEP_NAMES = {",": "comma", ";": "semicolon", "\t": "tab", "|": "pipe"}
LOG_SUFFIXES = {".csv", ".txt", ".tsv", ".log", ".dat", ".gz", ".parquet", ".psv", ""}
ROW_REASONS = ("malformed_row", "too_many_fields", "bad_time", "dst_nonexistent", "dst_ambiguous",
               "time_out_of_range", "unknown_quantity", "duplicate", "conflicting_duplicate")
MAX_RAGGED_ROWS = 200_000   # rows with another field count than the header looked at again; more: malformed_row
SNIFF_LINES = 400           # lines looked at to find separator and header
HEADER_SEARCH_LINES = 200   # the header is looked for among the first lines
MAX_LISTED = 200   # gaps / conflicts listed in the report (counts are always complete)



# ---------------------------------------------------------------------------------------------------------------
# result types

@dataclass
class IngestReport:
    """What the reader found and did (JSON-able through ``to_dict``)."""

    file: str = ""
    files: list[dict] = field(default_factory=list)       # per-file reports (read_logs / folders)
    encoding: str | None = None
    separator: str | None = None
    decimal: str | None = None
    header_line: int | None = None                        # 1-based line of the column names
    layout: str | None = None                             # "wide", "long", "long-named", "parquet", "several"
    columns: dict[str, str] = field(default_factory=dict)  # column -> detected role
    ignored_columns: list[str] = field(default_factory=list)
    time: dict = field(default_factory=dict)              # columns, format, zone, marks
    guesses: list[str] = field(default_factory=list)      # what was guessed and how to override it
    links: list[str] = field(default_factory=list)
    link_source: str | None = None                        # "column", "argument", "mapping", "file_name", "default"
    channels: list[str] = field(default_factory=list)
    quantities: list[str] = field(default_factory=list)
    kind: str | None = None                               # "sample", "stats" or "mixed"
    interval_s: float | None = None                       # typical row step (shortest over the links)
    link_intervals_s: dict[str, float] = field(default_factory=dict)
    start_utc: str | None = None
    end_utc: str | None = None
    rows_read: int = 0
    rows_kept: int = 0
    rejected: dict[str, int] = field(default_factory=dict)
    duplicates: int = 0
    conflicting_duplicates: int = 0
    conflicts: list[dict] = field(default_factory=list)    # first few conflicting rows
    out_of_order_rows: int = 0
    values: dict = field(default_factory=dict)             # read, ok, signal_lost, missing, reasons
    floors: dict = field(default_factory=dict)             # quantity -> {dbm, how}
    gap_count: int = 0
    gap_seconds: float = 0.0
    gaps: list[dict] = field(default_factory=list)         # {link_id, start_utc, end_utc, seconds}
    overlap_values_dropped: int = 0                        # read_logs: same value in two files
    warnings: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return _jsonable(dataclasses.asdict(self))


@dataclass
class ReadResult:
    table: pd.DataFrame
    report: IngestReport


def _jsonable(x: Any) -> Any:
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (np.floating, float)):
        v = float(x)
        return v if math.isfinite(v) else None
    return x


# ---------------------------------------------------------------------------------------------------------------
# mapping

def load_mapping(mapping: dict | str | Path | None) -> dict:
    """A mapping dict from a dict or a TOML file (keys as in the module docstring)."""
    if mapping is None:
        return {}
    if isinstance(mapping, dict):
        return mapping
    path = Path(mapping)
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except OSError as exc:
        raise InputError(f"cannot read mapping file ({exc.strerror})", path=str(path)) from exc
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        raise InputError(f"mapping file is not valid TOML ({exc})", path=str(path),
                         line=int(m.group(1)) if m else None) from exc
    return data



def mapping_from_options(*, base: dict | None = None, time_cols: list[str] | None = None,
                         time_format: str | None = None, time_marks: str | None = None, link_col: str | None = None,
                         channel_col: str | None = None, signal_cols: list[str] | None = None,
                         floor: str | float | None = None, interval_s: float | None = None,
                         separator: str | None = None, decimal: str | None = None, encoding: str | None = None,
                         header_line: int | None = None) -> dict:
    """A mapping dict from override options (the ``ingest`` flags; the dashboard's form), laid over ``base``.

    ``signal_cols`` items read ``NAME=QUANTITY[:CHANNEL[:STAT[:INTERVAL_S]]]`` (e.g. ``"Level A=rsl:A"``,
    ``"Lo=rsl:H:min:900"``); ``floor`` is a number in dBm or ``"none"``.  Bad options raise InputError."""
    mapping = {k: (dict(v) if isinstance(v, dict) else v) for k, v in (base or {}).items()}

    def sec(name: str) -> dict:
        mapping.setdefault(name, {})
        return mapping[name]

    if time_cols:
        if len(time_cols) > 2:
            raise InputError("at most two time columns (date column, then time-of-day column)")
        sec("time")["columns"] = list(time_cols)
    if time_format:
        sec("time")["format"] = time_format
    if time_marks:
        if time_marks not in ("start", "end"):
            raise InputError(f"time marks '{time_marks}' must be 'start' or 'end'")
        sec("time")["marks"] = time_marks
    if link_col:
        sec("link")["column"] = link_col
    if channel_col:
        sec("channel")["column"] = channel_col
    if signal_cols:
        signals = {}
        for item in signal_cols:
            if "=" not in item:
                raise InputError(f"signal column '{item}': expected NAME=QUANTITY[:CHANNEL[:STAT[:INTERVAL_S]]]")
            name, rest = item.rsplit("=", 1)
            parts = rest.split(":")
            spec: dict = {"quantity": N.quantity_name(parts[0])}
            if len(parts) > 1 and parts[1]:
                spec["channel"] = parts[1]
            if len(parts) > 2 and parts[2]:
                spec["stat"] = parts[2]
            if len(parts) > 3 and parts[3]:
                try:
                    spec["interval_s"] = float(parts[3])
                except ValueError as exc:
                    raise InputError(f"signal column '{item}': interval '{parts[3]}' is not a number") from exc
            signals[name.strip()] = spec
        mapping["signals"] = signals
    if floor is not None and str(floor).strip() != "":
        if str(floor).strip().lower() == "none":
            sec("floor")["dbm"] = "none"
        else:
            try:
                sec("floor")["dbm"] = float(floor)
            except ValueError as exc:
                raise InputError(f"floor '{floor}' is not a number in dBm or 'none'") from exc
    if interval_s is not None:
        if not interval_s > 0:
            raise InputError("the statistics interval must be positive")
        mapping["interval_s"] = float(interval_s)
    if separator:
        sec("file")["separator"] = "\t" if separator.lower() in ("tab", "\\t") else separator
    if decimal:
        if decimal not in (".", ","):
            raise InputError("decimal mark must be '.' or ','")
        sec("file")["decimal"] = decimal
    if encoding:
        sec("file")["encoding"] = encoding
    if header_line is not None:
        if header_line < 1:
            raise InputError("the header line is 1-based")
        sec("file")["header_line"] = int(header_line)
    return {k: v for k, v in mapping.items() if v != {}}


# ---------------------------------------------------------------------------------------------------------------
# opening

@dataclass
class _Source:
    label: str              # for messages
    stem: str               # file name without suffixes (default link id)
    path: Path | None
    data: bytes | None
    gz: bool = False


def _stem(name: str) -> str:
    base = Path(name).name
    for suf in (".gz", ".csv", ".txt", ".tsv", ".log", ".dat", ".psv", ".parquet"):
        if base.lower().endswith(suf):
            base = base[: -len(suf)]
    return base or S.DEFAULT_LINK_ID


def _head(src: _Source, n: int) -> bytes:
    if src.data is not None:
        if src.gz:
            try:
                with gzip.GzipFile(fileobj=io.BytesIO(src.data)) as fh:
                    return _read_upto(fh, n)
            except (OSError, EOFError, zlib.error) as exc:
                raise InputError("gzip data truncated or damaged", path=src.label) from exc
        return src.data[:n]
    try:
        if src.gz:
            with gzip.open(src.path, "rb") as fh:
                return _read_upto(fh, n)
    except (OSError, EOFError, zlib.error) as exc:
        raise InputError("gzip data truncated or damaged", path=src.label) from exc
    try:
        with open(src.path, "rb") as fh:
            return fh.read(n)
    except (OSError, EOFError) as exc:
        raise InputError(f"cannot read ({getattr(exc, 'strerror', None) or exc})", path=src.label) from exc


def _read_upto(fh, n: int) -> bytes:
    out = b""
    try:
        while len(out) < n:
            chunk = fh.read(n - len(out))
            if not chunk:
                break
            out += chunk
    except EOFError:
        if not out:
            raise  # truncated before any data: the caller names it
        # truncated gzip: take what decompressed
    return out


def _stream(src: _Source):
    if src.data is not None:
        raw = pa.BufferReader(src.data)
        return pa.CompressedInputStream(raw, "gzip") if src.gz else raw
    return pa.input_stream(str(src.path), compression="gzip" if src.gz else None)


def _decode(head: bytes, complete: bool, label: str) -> tuple[str, str]:
    """(text, encoding) of the first bytes."""
    if not head.strip():
        raise InputError("empty file (no data)", path=label)
    kind = _foreign_format(head)
    if kind:
        raise InputError(f"not a delimited text log ({kind}); export the log as CSV", path=label)
    if head.startswith(codecs.BOM_UTF8):
        try:
            return _decode_with(head[3:], "utf-8", complete, label), "utf-8-sig"
        except UnicodeDecodeError:
            return head.decode("latin-1"), "latin-1"   # a BOM, then bytes that are not UTF-8
    for bom, enc in ((codecs.BOM_UTF16_LE, "utf-16-le"), (codecs.BOM_UTF16_BE, "utf-16-be")):
        if head.startswith(bom):
            try:
                return _decode_with(head[2:], enc, complete, label), "utf-16"
            except UnicodeDecodeError as exc:
                raise InputError("starts with a UTF-16 mark but is not UTF-16 text", path=label) from exc
    if b"\x00" in head[:4096]:
        raise InputError("not a text log (binary data)", path=label)
    ctrl = sum(1 for b in head[:4096] if b < 9 or 13 < b < 32)
    if ctrl > max(4, len(head[:4096]) // 50):
        raise InputError("not a text log (binary data)", path=label)
    try:
        return _decode_with(head, "utf-8", complete, label), "utf-8"
    except UnicodeDecodeError:
        return head.decode("latin-1"), "latin-1"


_SIGNATURES = ((b"PK\x03\x04", "a zip archive or a spreadsheet workbook such as XLSX"),
               (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", "an old-style office document such as XLS"),
               (b"%PDF", "a PDF document"), (b"\x89PNG", "an image"), (b"\xff\xd8\xff", "an image"),
               (b"SQLite format 3", "an SQLite database"), (b"BZh", "bzip2 data"), (b"\xfd7zXZ", "xz data"),
               (b"7z\xbc\xaf", "a 7z archive"))


def _foreign_format(head: bytes) -> str | None:
    """Name a well-known non-CSV format from the first bytes (None when it may be a delimited text)."""
    for magic, kind in _SIGNATURES:
        if head.startswith(magic):
            return kind
    text = head.lstrip(codecs.BOM_UTF8).lstrip()[:200]
    if text[:1] in (b"{", b"[") and re.match(rb'^[\[{]\s*("|\{|\[|\]|\}|\d|-|true|false|null)', text):
        return "looks like JSON"
    if text[:1] == b"<" and re.match(rb"^<(\?xml|!doctype|html|[a-zA-Z][\w:.-]*[\s>/])", text, re.I):
        return "looks like HTML or XML"
    return None


def _decode_with(data: bytes, enc: str, complete: bool, label: str) -> str:
    dec = codecs.getincrementaldecoder(enc)()
    text = dec.decode(data, final=complete)
    if "\x00" in text:
        raise InputError("not a text log (binary data)", path=label)
    return text


# ---------------------------------------------------------------------------------------------------------------
# sniffing

@dataclass
class _Dialect:
    separator: str
    decimal: str
    header_index: int          # 0-based physical line
    names: list[str]
    extra_trailing: bool = False


def _split(lines: list[str], sep: str) -> list[list[str]]:
    out = []
    for ln in lines:
        try:
            out.append(next(csv.reader([ln], delimiter=sep, quotechar='"')))
        except (csv.Error, StopIteration):
            out.append([ln])
    return out


def _header_score(fields: list[str]) -> int:
    score = 0
    for f in fields:
        f = f.strip()
        if not f or re.fullmatch(r"[-+\d.,:/ TZ]+", f):
            continue
        if N.name_role(f) is not None:
            score += 2
        else:
            info = N.recognise_name(f)
            if info.quantity is not None:
                score += 1 if info.guessed else 2
    return score


_NUMERICISH = re.compile(r"^[-+]?[\d.,:/ TZ+-]+$")


def _sniff(text: str, complete: bool, label: str, mapping: dict) -> _Dialect:
    lines = text.splitlines()
    if not complete and len(lines) > 1:
        lines = lines[:-1]           # the last line may be cut off
    fsec = N.section(mapping, "file")
    nonempty = [i for i, ln in enumerate(lines) if ln.strip()][:SNIFF_LINES]
    if not nonempty:
        raise InputError("empty file (no data)", path=label)
    tail = nonempty[-40:]
    candidates = []
    seps = [fsec["separator"]] if fsec.get("separator") else list(SEPARATORS)
    seps = ["\t" if s in ("tab", "\\t") else s for s in seps]
    for sep in seps:
        split = _split([lines[i] for i in nonempty], sep)
        counts = [len(r) for r in split]
        tail_counts = counts[-len(tail):]
        k = statistics.mode(tail_counts)
        consistency = tail_counts.count(k) / len(tail_counts)
        if k < 2 and not fsec.get("separator"):
            continue
        # header: the line with k (or k-1 with a trailing empty data field) fields that names the most columns
        best_i, best_score = None, -1
        trailing = all(r[-1].strip() == "" for r, c in zip(split[-len(tail):], tail_counts) if c == k) and k > 2
        for j, (r, c) in enumerate(zip(split[:HEADER_SEARCH_LINES], counts)):
            if c == k or (trailing and c == k - 1):
                sc = _header_score(r)
                if sc > best_score:
                    best_i, best_score = j, sc
        if best_score <= 0:
            # ragged files: the header may have another field count than most data rows
            for j, (r, c) in enumerate(zip(split[:HEADER_SEARCH_LINES], counts)):
                if c >= 2:
                    sc = _header_score(r)
                    if sc > best_score:
                        best_i, best_score = j, sc
            if best_score > 0:
                hc = counts[best_i]
                consistency = sum(1 for c in counts[best_i + 1:] if c == hc) / max(1, len(counts) - best_i - 1)
        candidates.append((best_score > 0, consistency >= 0.8, best_score, consistency, k,
                           -SEPARATORS.index(sep) if sep in SEPARATORS else 0, sep, best_i, split))
    if not candidates:
        raise InputError("no column separator found (expected , ; tab or |)", path=label)
    candidates.sort(reverse=True)
    _, _, score, consistency, k, _, sep, best_i, split = candidates[0]
    header_j = best_i
    if fsec.get("header_line"):
        hl = int(fsec["header_line"]) - 1
        if hl < 0 or hl >= len(lines):
            raise InputError(f"mapping header_line {hl + 1} is beyond the file", path=label)
        header_index = hl
        names = _split([lines[hl]], sep)[0]
    else:
        if header_j is None or score <= 0:
            # no recognisable name: the first line of the last consistent block that is not all numbers
            header_j = None
            for j in range(len(split) - 1, -1, -1):
                if len(split[j]) != k:
                    break
                if not all(_NUMERICISH.match(f.strip() or "0") for f in split[j]):
                    header_j = j
            if header_j is None:
                raise InputError("no header line with column names found", path=label,
                                 line=nonempty[0] + 1)
        header_index = nonempty[header_j]
        names = split[header_j]
    names = [n.strip().strip('"').strip() for n in names]
    extra = False
    data_rows = [r for r in split[header_j + 1:]] if header_j is not None else []
    if data_rows and len(names) == k - 1 and all(r[-1].strip() == "" for r in data_rows if len(r) == k):
        names.append("")
        extra = True
    seen: dict[str, int] = {}
    clean = []
    for i, n in enumerate(names):
        n = n or f"column_{i + 1}"
        if n in seen:
            seen[n] += 1
            n = f"{n} ({seen[n]})"
        else:
            seen[n] = 1
        clean.append(n)
    decimal = fsec.get("decimal") or _decimal(data_rows, sep)
    return _Dialect(sep, decimal, header_index, clean, extra)


def _decimal(rows: list[list[str]], sep: str) -> str:
    comma = dot = 0
    for r in rows[:400]:
        for f in r:
            f = f.strip()
            if re.fullmatch(r"[-+]?\d+,\d+", f):
                comma += 1
            elif re.fullmatch(r"[-+]?\d+\.\d+", f):
                dot += 1
    return "," if comma > dot else "."


# ---------------------------------------------------------------------------------------------------------------
# plan: what each column is

# ---------------------------------------------------------------------------------------------------------------
# reading one CSV-like source


def _read_csv(src: _Source, *, tz: str | None, mapping: dict, link_id: str | None) -> ReadResult:
    head = _head(src, SAMPLE_BYTES)
    complete = len(head) < SAMPLE_BYTES
    fsec = N.section(mapping, "file")
    if fsec.get("encoding"):
        enc = str(fsec["encoding"])
        try:
            text = head.decode(enc, errors="replace")
        except LookupError as exc:
            raise InputError(f"unknown encoding '{enc}'", path=src.label) from exc
    else:
        text, enc = _decode(head, complete, src.label)
    dialect = _sniff(text, complete, src.label, mapping)
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


class _RetryLatin1(Exception):
    pass


def _read_rows(src: _Source, enc: str, dialect: _Dialect, *, tz, mapping, link_id) -> ReadResult:
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
    plan: N.ColumnPlan | None = None
    rows_seen = 0
    lsec = N.section(mapping, "link")

    def process(batch: pa.RecordBatch, absent: np.ndarray | None = None) -> None:
        """Parse one block of string columns; ``absent`` marks cells a short row did not have."""
        nonlocal plan, rows_seen
        n = batch.num_rows
        if n == 0:
            return
        if plan is None:
            plan = N.plan_columns(batch, names, mapping, tz, src.label, header_line)
        cols = [batch.column(batch.schema.get_field_index(c)) for c in plan.time.columns]
        ns, tcode = N.parse_times(cols, plan.time)
        for code, reason in enumerate(N.TIME_REASONS, start=1):
            rejected[reason] += int((tcode == code).sum())
        if not first_bad_time and (tcode == 1).any():
            i = int(np.flatnonzero(tcode == 1)[0])
            first_bad_time.append((rows_seen + i, " | ".join(str(c[i].as_py())[:30] for c in cols)))
        keep = tcode == 0
        kb = batch.take(pa.array(np.flatnonzero(keep))) if not keep.all() else batch
        m = kb.num_rows
        getcol = lambda c: kb.column(kb.schema.get_field_index(c)) if c else None  # noqa: E731
        key = keys.encode([getcol(plan.link_col), getcol(plan.channel_col), getcol(plan.qname_col)], m)
        vals = np.empty((m, len(plan.values)), dtype=np.float64)
        reas = np.empty((m, len(plan.values)), dtype=np.int8)
        for j, vc in enumerate(plan.values):
            vals[:, j], reas[:, j] = N.parse_values(getcol(vc.name), dialect.decimal)
            if absent is not None:
                gone = absent[keep, names.index(vc.name)]
                reas[gone, j] = N.R_ABSENT
                vals[gone, j] = np.nan
        rownum = rows_seen + np.flatnonzero(keep).astype(np.int64)
        if absent is not None:
            rownum = np.full(m, -1, dtype=np.int64)   # re-read rows: their place in the file is not known
        chunks.append(N.RowBlock(ns[keep], key, rownum, vals, reas))
        rows_seen += n

    reader = None
    try:
        reader = pacsv.open_csv(_stream(src), read_options=read_opts, parse_options=parse_opts,
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
        if report.link_source == "file_name":
            report.guesses.append(f"link id taken from the file name: '{default_link}' (override with --link-id)")
    table = N.assemble(chunks, keys, plan, report, rejected, default_link, mapping, header_line)
    report.rejected = {k: v for k, v in rejected.items() if v}
    report.rows_kept = rows_read - sum(report.rejected.values())
    _summarise(table, report)
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
# summary of a table (shared by CSV, Parquet and concatenated reads)

def _iso(ns: int) -> str:
    return pd.Timestamp(int(ns), tz="UTC").isoformat().replace("+00:00", "Z")


def _link_stamps(table: pd.DataFrame, ns: np.ndarray) -> list[tuple[str, np.ndarray]]:
    """[(link id, its sorted distinct stamps)] per link, by link id.  The table is sorted by link, channel,
    quantity, stat, time, so each (channel, quantity, stat) block is already sorted and distinct; when every block
    of a link holds the same stamps (a wide log: every row has every column) the first block IS the union: no sort
    of all rows."""
    codes = [table[c].cat.codes.to_numpy() if isinstance(table[c].dtype, pd.CategoricalDtype)
             else pd.factorize(table[c])[0] for c in (S.LINK, S.CHANNEL, S.QUANTITY, S.STAT)]
    change = np.zeros(len(ns), dtype=bool)
    change[0] = True
    for c in codes:
        change[1:] |= c[1:] != c[:-1]
    starts = np.flatnonzero(change)
    del change
    ends = np.append(starts[1:], len(ns))
    by_link: dict = {}
    for a, b, k in zip(starts.tolist(), ends.tolist(), codes[0][starts].tolist()):
        by_link.setdefault(k, []).append((a, b))
    out = []
    for blocks in by_link.values():
        a0, b0 = blocks[0]
        first = ns[a0:b0]
        same = all(b - a == b0 - a0 and np.array_equal(ns[a:b], first) for a, b in blocks[1:])
        if same and bool(np.all(first[1:] > first[:-1])):
            t = first
        else:
            t = N.sorted_unique(np.concatenate([ns[a:b] for a, b in blocks]))
        out.append((str(table[S.LINK].iloc[a0]), t))
    return sorted(out, key=lambda item: item[0])


def _summarise(table: pd.DataFrame, report: IngestReport) -> None:
    report.links = S.present(table[S.LINK]) if len(table) else []
    report.channels = S.present(table[S.CHANNEL]) if len(table) else []
    report.quantities = S.present(table[S.QUANTITY]) if len(table) else []
    if not len(table):
        report.kind = None
        return
    levels = S.is_in(table[S.QUANTITY], [S.RSL, S.XPL, S.TSL, S.XPD])
    stats = S.present(table[S.STAT][levels] if levels.any() else table[S.STAT])   # one column only
    report.kind = "stats" if S.SAMPLE not in stats else ("sample" if len(stats) == 1 else "mixed")
    ns = table[S.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
    report.start_utc, report.end_utc = _iso(ns.min()), _iso(ns.max())
    gaps = []
    steps, stepped = [], []
    for lk, t in _link_stamps(table, ns):
        if len(t) < 2:
            continue
        step = N.mode_step_ns(t)     # (its own diff array is freed before ours is made)
        d = np.diff(t)
        steps.append(step)
        stepped.append(lk)
        big = np.flatnonzero(d > 1.5 * step)
        for i in big:
            start = int(t[i] + step)
            gaps.append((lk, start, int(t[i + 1]), (int(t[i + 1]) - start) / 1e9))
    # typical row step: the links' common step, or the shortest when they differ (see link_intervals_s)
    report.link_intervals_s = {lk: st / 1e9 for lk, st in zip(stepped, steps)}
    report.interval_s = float(min(steps)) / 1e9 if steps else None
    report.gap_count = len(gaps)
    report.gap_seconds = float(sum(g[3] for g in gaps))
    report.gaps = [{"link_id": g[0], "start_utc": _iso(g[1]), "end_utc": _iso(g[2]), "seconds": g[3]}
                   for g in gaps[:MAX_LISTED]]
    if len(gaps) > MAX_LISTED:
        report.warnings.append(f"{len(gaps)} gaps; the first {MAX_LISTED} are listed")


# ---------------------------------------------------------------------------------------------------------------
# public API

def _classify(source, name: str | None) -> _Source:
    if isinstance(source, (bytes, bytearray, memoryview)):
        data = bytes(source)
        label = name or "upload"
        return _Source(label, _stem(label), None, data, gz=data[:2] == b"\x1f\x8b")
    path = Path(source)
    label = name or str(path)
    if not path.exists():
        raise InputError("file not found", path=label)
    if path.is_dir():
        return _Source(label, _stem(path.name), path, None)
    try:
        with open(path, "rb") as fh:
            magic = fh.read(4)
    except OSError as exc:
        raise InputError(f"cannot read ({exc.strerror})", path=label) from exc
    return _Source(label, _stem(path.name), path, None, gz=magic[:2] == b"\x1f\x8b")


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
    tz = N.check_tz(tz, name)
    src = _classify(source, name)
    if src.path is not None and src.path.is_dir():
        if store.is_store(src.path):
            return _from_table(store.read_store(src.path), src.label, "parquet")
        files = folder_files(src.path)
        if not files:
            raise InputError("folder holds no log files", path=src.label)
        return read_logs(files, tz=tz, mapping=mapping, link_id=link_id)
    head = src.data[:4] if src.data is not None else _head(_Source(src.label, src.stem, src.path, None), 4)
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
    _summarise(table, rep)
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
    _summarise(table, rep)
    return ReadResult(table, rep)
