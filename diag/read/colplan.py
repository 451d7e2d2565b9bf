"""The column plan: what each column of a log is (time, link, channel, quantity name, signals), and mapping helpers.

``plan_columns`` looks at the header names (through ``diag.read.colnames``), a sample of the first block's values and
the mapping file's sections, and returns a ``ColumnPlan``: the ``TimeSpec`` (from ``diag.read.timestamps``), the link,
channel and quantity-name columns, one ``ValueColumn`` per signal column, the layout, and what was guessed.
``section`` and ``quantity_name`` read the mapping file.  Used by ``diag.read.normalise``, which re-exports these names.
"""
from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass

import pyarrow as pa

from diag import schema as S
from diag.errors import InputError
from diag.read.colnames import _words, name_role, recognise_name
from diag.read.timestamps import (
    TimeSpec,
    check_tz,
    detect_clock_format,
    detect_date_format,
    detect_date_reading,
    detect_datetime_format,
    epoch_kind,
    iso_has_offset,
)

DEFAULT_CHANNEL = "main"

# linear power units -> factor to milliwatt (a level in dBm is 10 log10 of the power in mW)
POWER_UNITS_MW = {"w": 1e3, "mw": 1.0, "uw": 1e-3, "nw": 1e-6}


# ---------------------------------------------------------------------------------------------------------------
# mapping helpers

QUANTITY_ALIASES = {"rsl": S.RSL, "rx": S.RSL, "tsl": S.TSL, "tx": S.TSL, "xpd": S.XPD, "xpl": S.XPL,
                    "es": S.ES, "ses": S.SES, "uas": S.UAS}
for _q in S.QUANTITIES:
    QUANTITY_ALIASES[_q] = _q


def section(mapping: dict, key: str) -> dict:
    v = mapping.get(key) or {}
    if not isinstance(v, dict):
        raise InputError(f"mapping: [{key}] must be a table of keys")
    return v


def quantity_name(text: str) -> str:
    q = QUANTITY_ALIASES.get(str(text).strip().lower())
    if q is None:
        info = recognise_name(str(text))
        q = info.quantity
    if q is None:
        raise InputError(f"unknown quantity '{text}' (use one of {', '.join(sorted(QUANTITY_ALIASES))})")
    return q


# ---------------------------------------------------------------------------------------------------------------
# column plan: what each column is

@dataclass
class ValueColumn:
    name: str
    quantity: str | None        # None: from the quantity-name column (long-named layout)
    stat: str
    interval_s: float | None
    channel: str | None
    unit: str | None = None         # "dbm", "db", or a linear power unit of POWER_UNITS_MW (converted to dBm)
    negate: bool | None = None      # levels written as positive "dB below 1 mW": None = decide from the values


@dataclass
class ColumnPlan:
    time: TimeSpec
    link_col: str | None
    channel_col: str | None
    qname_col: str | None
    values: list[ValueColumn]
    layout: str
    roles: dict[str, str]
    ignored: list[str]
    guesses: list[str]
    warnings: list[str]


def _sample_values(batch: pa.RecordBatch, name: str, n: int = 2000) -> list[str]:
    col = batch.column(batch.schema.get_field_index(name)).slice(0, n)
    return [v for v in col.to_pylist() if v is not None]


def plan_columns(batch: pa.RecordBatch, names: list[str], mapping: dict, tz: str | None, label: str,
          header_line: int) -> ColumnPlan:
    tsec, lsec, csec = section(mapping, "time"), section(mapping, "link"), section(mapping, "channel")
    signals = section(mapping, "signals")
    roles: dict[str, str] = {}
    guesses: list[str] = []
    warn: list[str] = []

    def need(col: str, what: str) -> str:
        if col not in names:
            raise InputError(f"mapping names {what} column '{col}', which is not in the header "
                             f"({', '.join(names)})", path=label, line=header_line)
        return col

    link_col = need(lsec["column"], "link") if lsec.get("column") else None
    channel_col = need(csec["column"], "channel") if csec.get("column") else None
    qname_col = None
    by_role = {n: name_role(n) for n in names}
    if link_col is None and not lsec.get("id"):
        link_col = next((n for n in names if by_role[n] == "link"), None)
    if channel_col is None:
        channel_col = next((n for n in names if by_role[n] == "channel" and n != link_col), None)

    # --- time
    tcols = tsec.get("columns") or tsec.get("column")
    if isinstance(tcols, str):
        tcols = [tcols]
    marks_end = str(tsec.get("marks", "")).lower() == "end"
    zone = check_tz(tsec.get("zone") or tz, label)
    spec = None
    if tcols:
        for c in tcols:
            need(c, "time")
        spec = _time_spec([_sample_values(batch, c) for c in tcols], tuple(tcols), tsec.get("format"), zone, label,
                          header_line)
    else:
        taken = {link_col, channel_col}
        timeish = [n for n in names if by_role[n] == "time" and n not in taken]
        full, dates, clocks, epochs, iso_dates = [], [], [], [], []
        for n in timeish:
            vals = _sample_values(batch, n, 400)
            if epoch_kind(vals):
                epochs.append(n)
            elif _dates_only(vals):
                dates.append(n)   # ISO dates without a time of day: a date column (joined to a clock column below)
                iso_dates.append(n)
            elif detect_datetime_format(vals):
                full.append(n)
            elif detect_date_format(vals):
                dates.append(n)
            elif detect_clock_format(vals):
                clocks.append(n)
        if tsec.get("format") and timeish:
            # a format given without naming the column: the first time-named column(s)
            cols = tuple(timeish[:2]) if len(timeish) > 1 and dates and clocks else (timeish[0],)
            spec = _time_spec([_sample_values(batch, c) for c in cols], cols, tsec.get("format"), zone, label,
                              header_line)
        elif full:
            def pref(n: str) -> tuple:
                w = set(_words(n))
                return (0 if w & {"utc", "gmt", "z"} else 1, 0 if w & {"start", "begin"} else 1,
                        names.index(n))
            full.sort(key=pref)
            cols = (full[0],)
            if len(full) > 1:
                guesses.append(f"several time columns ({', '.join(full)}); used '{full[0]}' "
                               f"(override with --time-col or [time] columns)")
            spec = _time_spec([_sample_values(batch, full[0])], cols, None, zone, label, header_line)
        elif dates and clocks:
            spec = _time_spec([_sample_values(batch, dates[0]), _sample_values(batch, clocks[0])],
                              (dates[0], clocks[0]),
                              None, zone, label, header_line)
        elif epochs:
            spec = _time_spec([_sample_values(batch, epochs[0])], (epochs[0],), None, zone, label, header_line)
        elif iso_dates:
            # ISO dates alone (one row a day): midnight of each date, as before such columns were told apart
            spec = _time_spec([_sample_values(batch, iso_dates[0])], (iso_dates[0],), None, zone, label, header_line)
        else:
            # any other column whose content is a date and time
            for n in names:
                if n in taken or recognise_name(n).quantity and not recognise_name(n).guessed:
                    continue
                vals = _sample_values(batch, n, 400)
                if vals and detect_datetime_format(vals):
                    spec = _time_spec([vals], (n,), None, zone, label, header_line)
                    guesses.append(f"time column guessed from its content: '{n}' (override with --time-col)")
                    break
        if spec is None and timeish:
            first = next(iter(_sample_values(batch, timeish[0], 1)), "")
            raise InputError(f"cannot read the time column '{timeish[0]}' (first value '{first[:40]}'); give "
                             f"--time-format", path=label, line=header_line + 1)
        if spec is None:
            raise InputError(f"no time column recognised in the header ({', '.join(names[:12])}); name it with "
                             f"--time-col (or [time] columns in a mapping file)", path=label, line=header_line)
        if any(set(_words(c)) & {"end"} for c in spec.columns) and "marks" not in tsec:
            marks_end = True
            guesses.append(f"time column '{spec.columns[0]}' read as the END of each interval (override with "
                           f"--time-marks start)")
    spec = dataclasses.replace(spec, marks_end=marks_end)
    if spec.guess:
        guesses.append(spec.guess)
        if "the evidence ties" in spec.guess:
            warn.append(spec.guess)
    for c in spec.columns:
        roles[c] = "time"
    if link_col:
        roles[link_col] = "link"
    if channel_col:
        roles[channel_col] = "channel"

    # --- signals
    values: list[ValueColumn] = []
    if signals:
        for col, spec_s in signals.items():
            need(col, "signal")
            if isinstance(spec_s, str):
                spec_s = {"quantity": spec_s}
            q = quantity_name(spec_s.get("quantity", "rsl"))
            stat = str(spec_s.get("stat", S.SAMPLE)).lower()
            stat = {"mean": S.AVG, "average": S.AVG}.get(stat, stat)
            if stat not in S.STATS:
                raise InputError(f"mapping: stat '{stat}' for column '{col}' is not one of {S.STATS}")
            iv = spec_s.get("interval_s")
            unit = str(spec_s["unit"]).lower().replace("µ", "u") if spec_s.get("unit") else None
            if unit is not None and unit not in POWER_UNITS_MW and unit not in ("dbm", "db"):
                raise InputError(f"mapping: unit '{unit}' for column '{col}' is not dBm, dB, W, mW, uW or nW")
            neg = spec_s.get("negate")
            values.append(ValueColumn(col, q, stat, float(iv) if iv else None, spec_s.get("channel"), unit,
                                      None if neg is None else bool(neg)))
            roles[col] = f"{q}/{stat}"
    else:
        for n in names:
            if n in roles:
                continue
            info = recognise_name(n)
            if info.quantity is None or by_role[n] in ("time", "link", "channel", "qname"):
                continue
            if info.guessed:
                vals = _sample_values(batch, n, 200)
                if not _mostly_numeric(vals):
                    continue
                guesses.append(f"column '{n}' taken as {info.quantity} from its unit/name (override with "
                               f"--signal-col '{n}=QUANTITY[:CHANNEL[:STAT]]')")
            values.append(ValueColumn(n, info.quantity, info.stat, info.interval_s, info.channel, info.unit))
            roles[n] = f"{info.quantity}/{info.stat}"
        if not values:
            qn = next((n for n in names if by_role[n] == "qname" and n not in roles), None)
            vc = next((n for n in names if by_role[n] == "value" and n not in roles), None)
            if qn and vc:
                qname_col = qn
                values.append(ValueColumn(vc, None, S.SAMPLE, None, None))
                roles[qn], roles[vc] = "quantity name", "value"
            elif vc and _mostly_numeric(_sample_values(batch, vc, 200)):
                values.append(ValueColumn(vc, S.RSL, S.SAMPLE, None, None))
                roles[vc] = f"{S.RSL}/{S.SAMPLE}"
                guesses.append(f"column '{vc}' taken as receive level (override with --signal-col)")
    if not values:
        raise InputError(f"no signal column recognised in the header ({', '.join(names[:12])}); expected names "
                         f"such as RSL, Rx level, receive level (dBm); name it with --signal-col",
                         path=label, line=header_line)
    # unique (quantity, stat, channel) per wide column
    seen: dict[tuple, int] = {}
    for v in values:
        key = (v.quantity, v.stat, v.channel)
        if key in seen and v.quantity is not None:
            v.channel = f"{v.channel or DEFAULT_CHANNEL}:{v.name}"
            warn.append(f"two columns measure the same thing ({v.quantity} {v.stat}); '{v.name}' kept as channel "
                        f"'{v.channel}'")
        seen[key] = 1
    ignored = [n for n in names if n not in roles and n != ""]
    layout = "long-named" if qname_col else ("long" if channel_col or link_col else "wide")
    return ColumnPlan(spec, link_col, channel_col, qname_col, values, layout, roles, ignored, guesses, warn)


_ISO_DATE_ONLY = re.compile(r"^\d{4}-\d{2}-\d{2}$")


def _dates_only(vals: list[str]) -> bool:
    """True when the sampled values are ISO 8601 calendar dates with no time of day (``2030-07-12``)."""
    vals = [v.strip() for v in vals if v and v.strip()]
    return bool(vals) and all(_ISO_DATE_ONLY.match(v) for v in vals)


def _mostly_numeric(vals: list[str]) -> bool:
    vals = [v.strip() for v in vals if v and v.strip()]
    if not vals:
        return False
    good = sum(1 for v in vals if re.fullmatch(r"[-+]?\d+([.,]\d*)?([eE][-+]?\d+)?", v))
    return good >= 0.5 * len(vals)


def _time_spec(samples: list[list[str]], cols: tuple, fmt: str | None, zone: str | None, label: str,
               header_line: int) -> TimeSpec:
    if len(cols) > 2:
        raise InputError("at most two time columns (date and time of day)", path=label)
    if fmt:
        f = str(fmt).strip()
        if f.lower() in ("epoch_s", "epoch_ms"):
            return TimeSpec(cols, f.lower(), tz=zone)
        if f.lower() in ("iso", "iso8601"):
            return TimeSpec(cols, "iso", has_offset=iso_has_offset(samples[0]), tz=zone)
        return TimeSpec(cols, "format", fmt=f, tz=zone)
    if len(cols) == 2:
        d, guess = detect_date_reading(samples[0])
        c = detect_clock_format(samples[1])
        if d is None or c is None:
            raise InputError(f"cannot read the date/time columns {cols} (give --time-format)", path=label,
                             line=header_line)
        return TimeSpec(cols, "format", fmt=f"{d} {c}", tz=zone, guess=guess, has_offset=c.endswith("%z"))
    ek = epoch_kind(samples[0])
    if ek:
        return TimeSpec(cols, ek, tz=zone)
    found = detect_datetime_format(samples[0])
    if found is None:
        first = samples[0][0] if samples[0] else ""
        raise InputError(f"cannot read the time column '{cols[0]}' (first value '{first[:40]}'); give "
                         f"--time-format", path=label, line=header_line + 1)
    kind, f, guess = found
    if kind == "iso":
        return TimeSpec(cols, "iso", has_offset=iso_has_offset(samples[0]), tz=zone)
    return TimeSpec(cols, "format", fmt=f, tz=zone, guess=guess)
