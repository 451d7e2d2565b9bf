"""The mapping that overrides detection: from a dict or a TOML file (``load_mapping``), or from the override
options of ``ingest`` and the dashboard's form (``mapping_from_options``).  Keys are listed in ``diag.read.ingest``'s
docstring."""
from __future__ import annotations

import re
import tomllib
from pathlib import Path

from diag.errors import InputError
from diag.read.colplan import quantity_name


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
            spec: dict = {"quantity": quantity_name(parts[0])}
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


def only_listed(mapping: dict | None, links) -> dict:
    """``mapping`` with ``[link] only`` set to the links table's ids (``--only-listed``): the reader rejects the
    rows of other hops under ``unlisted_hop`` (``diag.read.hops``)."""
    out = {k: (dict(v) if isinstance(v, dict) else v) for k, v in (mapping or {}).items()}
    out.setdefault("link", {})
    out["link"]["only"] = [str(getattr(x, "link_id", x)) for x in links]
    return out
