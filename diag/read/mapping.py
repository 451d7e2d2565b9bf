"""The mapping that overrides detection: from a dict or a TOML file (``load_mapping``), or from the override
options of ``ingest`` and the dashboard's form (``mapping_from_options``).  Keys are listed in ``diag.read.ingest``'s
docstring."""
from __future__ import annotations

import math
import re
import tomllib
from pathlib import Path

from diag.errors import InputError, require_regular_file
from diag.read.colplan import quantity_name


def load_mapping(mapping: dict | str | Path | None) -> dict:
    """A checked mapping dict from a dict or a TOML file (keys as in the module docstring; ``check_mapping``)."""
    if mapping is None:
        return {}
    if isinstance(mapping, dict):
        return check_mapping(mapping)
    path = Path(mapping)
    require_regular_file(path, str(path))
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except OSError as exc:
        raise InputError(f"cannot read mapping file ({exc.strerror})", path=str(path)) from exc
    except UnicodeDecodeError as exc:
        raise InputError("mapping file is not UTF-8 text (binary data?)", path=str(path)) from exc
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        raise InputError(f"mapping file is not valid TOML ({exc})", path=str(path),
                         line=int(m.group(1)) if m else None) from exc
    return check_mapping(data, where=str(path))


MAX_INTERVAL_S = 86_400.0          # statistics intervals: 24 h at most (G.826 counts over 15 min and 24 h)
FLOOR_RANGE_DBM = (-150.0, -20.0)   # receiver floors of radio-relay receivers lie well inside (common practice)
MAX_HEADER_LINE = 10_000
_SECTIONS = {"file": ("separator", "decimal", "encoding", "header_line"),
             "time": ("columns", "column", "format", "zone", "marks"),
             "link": ("column", "id", "only"), "channel": ("column",), "floor": ("dbm",)}


def check_interval_s(value, what: str = "the statistics interval", where: str | None = None) -> float:
    """A statistics interval in seconds: a finite number, > 0 and at most ``MAX_INTERVAL_S``; else InputError."""
    try:
        x = float(value)
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"{what} {str(value)[:30]!r} is not a number of seconds", path=where) from None
    if not math.isfinite(x) or not 0 < x <= MAX_INTERVAL_S:
        raise InputError(f"{what} must be a finite number of seconds in (0, {MAX_INTERVAL_S:g}], not {x:g}",
                         path=where)
    return x


def check_floor_dbm(value, where: str | None = None) -> float | str:
    """A receiver floor: 'none', or a finite level in dBm within ``FLOOR_RANGE_DBM``; else InputError."""
    if isinstance(value, str) and value.strip().lower() == "none":
        return "none"
    try:
        x = float(value)
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"floor {str(value)[:30]!r} is not a number in dBm or 'none'", path=where) from None
    lo, hi = FLOOR_RANGE_DBM
    if not math.isfinite(x) or not lo <= x <= hi:
        raise InputError(f"floor {x:g} dBm is outside the receiver range {lo:g}..{hi:g} dBm", path=where)
    return x


def _text(value, what: str, where: str | None) -> str:
    if not isinstance(value, str) or not value or any(ord(ch) < 32 for ch in value):
        raise InputError(f"mapping: {what} must be a non-empty text without control characters", path=where)
    return value


def check_mapping(mapping: dict, where: str | None = None) -> dict:
    """Check every key the reader uses (types, ranges, formats) so that a bad mapping is one clear InputError
    before any file is read.  Returns the mapping (unchanged)."""
    import codecs

    from diag.read.timestamps import check_tz

    if not isinstance(mapping, dict):
        raise InputError("mapping must be a table of sections", path=where)
    for name, keys in _SECTIONS.items():
        sec = mapping.get(name)
        if sec is None:
            continue
        if not isinstance(sec, dict):
            raise InputError(f"mapping: [{name}] must be a table of keys", path=where)
        unknown = [k for k in sec if k not in keys]
        if unknown:
            raise InputError(f"mapping: unknown key(s) {', '.join(map(str, unknown))} in [{name}] (known: "
                             f"{', '.join(keys)})", path=where)
    f = mapping.get("file") or {}
    if "separator" in f:
        sep = f["separator"]
        if not isinstance(sep, str) or ("\t" if sep.lower() in ("tab", "\\t") else sep) not in (",", ";", "\t", "|"):
            raise InputError(f"mapping: separator {str(sep)[:10]!r} must be one of , ; | or tab", path=where)
    if "decimal" in f and f["decimal"] not in (".", ","):
        raise InputError("mapping: decimal must be '.' or ','", path=where)
    if "encoding" in f:
        try:
            codecs.lookup(_text(f["encoding"], "encoding", where))
        except LookupError:
            raise InputError(f"mapping: unknown encoding {str(f['encoding'])[:30]!r}", path=where) from None
    if "header_line" in f:
        hl = f["header_line"]
        if isinstance(hl, bool) or not isinstance(hl, int) or not 1 <= hl <= MAX_HEADER_LINE:
            raise InputError(f"mapping: header_line must be a whole number 1..{MAX_HEADER_LINE} (1-based), not "
                             f"{str(hl)[:20]!r}", path=where)
    tm = mapping.get("time") or {}
    cols = tm.get("columns", tm.get("column"))
    if cols is not None:
        cols = [cols] if isinstance(cols, str) else cols
        if not isinstance(cols, list) or not 1 <= len(cols) <= 2:
            raise InputError("mapping: [time] columns must be one or two column names", path=where)
        for c in cols:
            _text(c, "a time column name", where)
    if "format" in tm:
        check_time_format(_text(tm["format"], "the time format", where), where)
    if "zone" in tm:
        check_tz(_text(tm["zone"], "the time zone", where), where)
    if "marks" in tm and tm["marks"] not in ("start", "end"):
        raise InputError("mapping: [time] marks must be 'start' or 'end'", path=where)
    lk = mapping.get("link") or {}
    for key in ("column", "id"):
        if key in lk:
            _text(lk[key], f"[link] {key}", where)
    if "only" in lk and (not isinstance(lk["only"], list) or not all(isinstance(x, str) for x in lk["only"])):
        raise InputError("mapping: [link] only must be a list of link ids", path=where)
    if "column" in (mapping.get("channel") or {}):
        _text(mapping["channel"]["column"], "[channel] column", where)
    if "dbm" in (mapping.get("floor") or {}):
        check_floor_dbm(mapping["floor"]["dbm"], where)
    if "interval_s" in mapping:
        check_interval_s(mapping["interval_s"], where=where)
    signals = mapping.get("signals")
    if signals is not None:
        if not isinstance(signals, dict) or not signals:
            raise InputError("mapping: [signals] must be a table of column names", path=where)
        for col, spec in signals.items():
            if isinstance(spec, str):
                spec = {"quantity": spec}
            if not isinstance(spec, dict):
                raise InputError(f"mapping: [signals.{col}] must be a table or a quantity name", path=where)
            if "quantity" in spec:
                quantity_name(_text(spec["quantity"], f"the quantity of '{col}'", where))
            if spec.get("channel") is not None:
                _text(spec["channel"], f"the channel of '{col}'", where)
            if spec.get("interval_s") is not None:
                check_interval_s(spec["interval_s"], f"the interval of '{col}'", where)
            for key in ("stat", "unit"):
                if spec.get(key) is not None:
                    _text(spec[key], f"the {key} of '{col}'", where)
    return mapping


def check_time_format(fmt: str, where: str | None = None) -> str:
    """'iso', 'epoch_s', 'epoch_ms' or a strftime format that can read back what it writes; else InputError."""
    import datetime as dt

    if fmt.strip().lower() in ("iso", "iso8601", "epoch_s", "epoch_ms"):
        return fmt
    probe = dt.datetime(2026, 3, 14, 15, 9, 26, 535000)
    try:
        if "%" not in fmt:
            raise ValueError("no % directive")
        dt.datetime.strptime(probe.strftime(fmt), fmt)
    except (ValueError, TypeError) as exc:
        raise InputError(f"time format {fmt[:40]!r} is not a usable strftime format ({exc}); use e.g. "
                         f"'%d.%m.%Y %H:%M:%S', iso, epoch_s or epoch_ms", path=where) from None
    return fmt


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
            spec: dict = {"quantity": quantity_name(parts[0])}
            if len(parts) > 1 and parts[1]:
                spec["channel"] = parts[1]
            if len(parts) > 2 and parts[2]:
                spec["stat"] = parts[2]
            if len(parts) > 3 and parts[3]:
                spec["interval_s"] = check_interval_s(parts[3], f"signal column '{item}': interval")
            signals[name.strip()] = spec
        mapping["signals"] = signals
    if floor is not None and str(floor).strip() != "":
        sec("floor")["dbm"] = check_floor_dbm(floor)
    if interval_s is not None:
        mapping["interval_s"] = check_interval_s(interval_s)
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
    return check_mapping({k: v for k, v in mapping.items() if v != {}}, where="options")


def only_listed(mapping: dict | None, links) -> dict:
    """``mapping`` with ``[link] only`` set to the links table's ids (``--only-listed``): the reader rejects the
    rows of other hops under ``unlisted_hop`` (``diag.read.hops``)."""
    out = {k: (dict(v) if isinstance(v, dict) else v) for k, v in (mapping or {}).items()}
    out.setdefault("link", {})
    out["link"]["only"] = [str(getattr(x, "link_id", x)) for x in links]
    return out
