"""Opening a log and finding its dialect: the first bytes (plain or gzip), the encoding (UTF-8 with or without
BOM, UTF-16 with BOM, else Latin-1), well-known non-CSV formats refused by their signature, the separator, the
decimal mark and the header line after any preamble (``sniff``).  Used by ``diag.read.ingest``."""
from __future__ import annotations

import codecs
import csv
import gzip
import io
import re
import statistics
import zlib
from dataclasses import dataclass
from pathlib import Path

import pyarrow as pa

from diag import schema as S
from diag.errors import InputError
from diag.read import limits
from diag.read.colnames import name_role, recognise_name
from diag.read.colplan import section
from diag.read.limits import BoundedReader

SAMPLE_BYTES = 256 * 1024
SEPARATORS = ("\t", ";", "|", ",")     # tie-break order
SEP_NAMES = {",": "comma", ";": "semicolon", "\t": "tab", "|": "pipe"}
SNIFF_LINES = 400           # lines looked at to find separator and header
HEADER_SEARCH_LINES = 200   # the header is looked for among the first lines


@dataclass
class Source:
    label: str              # for messages
    stem: str               # file name without suffixes (default link id)
    path: Path | None
    data: bytes | None
    gz: bool = False


def file_stem(name: str) -> str:
    base = Path(name).name
    for suf in (".gz", ".csv", ".txt", ".tsv", ".log", ".dat", ".psv", ".parquet"):
        if base.lower().endswith(suf):
            base = base[: -len(suf)]
    return base or S.DEFAULT_LINK_ID


def read_head(src: Source, n: int) -> bytes:
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


def open_stream(src: Source):
    """The source's bytes as a stream; a gzip'd one decompressed, bounded by ``limits.MAX_DECOMPRESSED_BYTES``."""
    if src.data is not None:
        raw = pa.BufferReader(src.data)
        stream = pa.CompressedInputStream(raw, "gzip") if src.gz else raw
    else:
        stream = pa.input_stream(str(src.path), compression="gzip" if src.gz else None)
    return BoundedReader(stream, limits.MAX_DECOMPRESSED_BYTES, src.label) if src.gz else stream


def decode_head(head: bytes, complete: bool, label: str) -> tuple[str, str]:
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
class Dialect:
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
        if name_role(f) is not None:
            score += 2
        else:
            info = recognise_name(f)
            if info.quantity is not None:
                score += 1 if info.guessed else 2
    return score


_NUMERICISH = re.compile(r"^[-+]?[\d.,:/ TZ+-]+$")


def sniff(text: str, complete: bool, label: str, mapping: dict) -> Dialect:
    lines = text.splitlines()
    if not complete and len(lines) > 1:
        lines = lines[:-1]           # the last line may be cut off
    fsec = section(mapping, "file")
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
    return Dialect(sep, decimal, header_index, clean, extra)


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
