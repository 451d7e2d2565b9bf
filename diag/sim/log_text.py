"""The text of the simulator's log files: value and time formatting, row order with file defects, the wide layout
of signals by time, and line writing (gzip without a time stamp).  Used by the shapes in :mod:`diag.sim.log_shapes`.
"""
from __future__ import annotations

import gzip
import io
from dataclasses import dataclass
from pathlib import Path
from typing import Mapping

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from diag import schema
from diag.errors import InputError

_LABEL = {  # quantity -> (wide_iso name, semicolon name, epoch name, unit)
    schema.RSL: ("RSL", "Rx level", "RxLevel", "dBm"),
    schema.TSL: ("TSL", "Tx level", "TxLevel", "dBm"),
    schema.XPD: ("XPD", "XPD", "XPD", "dB"),
    schema.XPL: ("XPL", "Xpol level", "XpolLevel", "dBm"),
    schema.SES: ("SES", "SES", "SES", "s"),
    schema.UAS: ("UAS", "UAS", "UAS", "s"),
}
_LONG_NAME = {schema.RSL: "RSL", schema.TSL: "TSL", schema.XPD: "XPD", schema.XPL: "XPL"}


@dataclass(frozen=True)
class WriteInfo:
    """What a writer wrote: data lines (header excluded), how many of them are repeats and how many adjacent
    pairs
    were swapped, and the number of value cells."""

    path: Path
    shape: str
    rows: int
    duplicate_rows: int
    swapped_pairs: int
    values: int


def _format_values(
    values: np.ndarray,
    status: np.ndarray,
    floor_dbm: float | None,
    *,
    decimal: str = ".",
    floor_applies: bool = True,
) -> pa.Array:
    """Cells as text: numbers in their shortest form, the floor reading for signal_lost, "" for missing."""
    out = np.where(status == schema.OK, values, np.nan)
    if floor_applies and floor_dbm is not None:
        out = np.where(status == schema.SIGNAL_LOST, floor_dbm, out)
    out = np.round(out, 4)
    text = pc.cast(pa.array(out, from_pandas=True), pa.string())
    text = pc.if_else(pc.is_null(text), "", text)
    if decimal != ".":
        text = pc.replace_substring(text, ".", decimal)
    return text


def _time_text(times_ns: np.ndarray, fmt: str, tz: str = "UTC") -> pa.Array:
    """Whole-second stamps as text in ``fmt`` (a strftime pattern) on the clock of zone ``tz``.

    Logs repeat few dates and at most 86400 clock times, so each distinct date and time of day is formatted
    once and the text assembled with ``take`` (much faster than formatting every stamp)."""
    times_ns = np.asarray(times_ns, dtype=np.int64)
    if len(times_ns) == 0:
        return pa.array([], pa.string())
    index = pd.DatetimeIndex(times_ns.astype("datetime64[ns]")).tz_localize("UTC")
    if tz != "UTC":
        index = index.tz_convert(tz)
    wall_s = index.tz_localize(None).asi8 // 1_000_000_000  # seconds on the local wall clock
    day, second = np.divmod(wall_s, 86400)
    days, day_index = np.unique(day, return_inverse=True)
    seconds, second_index = np.unique(second, return_inverse=True)
    time_part = "%H:%M:%S"
    if time_part not in fmt:
        raise ValueError(f"time format {fmt!r} lacks {time_part}")
    before, after = fmt.split(time_part, 1)
    epoch = pd.Timestamp("1970-01-01")
    day_text = pa.array([(epoch + pd.Timedelta(days=int(d))).strftime(before) for d in days], pa.string())
    clock = pa.array(
        [f"{s // 3600:02d}:{s // 60 % 60:02d}:{s % 60:02d}{after}" for s in seconds.tolist()], pa.string()
    )
    return pc.binary_join_element_wise(
        day_text.take(pa.array(day_index)), clock.take(pa.array(second_index)), ""
    )


def _row_order(times_ns: np.ndarray, defects: Mapping | None) -> tuple[np.ndarray, int, int]:
    """Row order for sorted unique ``times_ns`` with the defects applied: (index array, duplicates, swaps)."""
    order = np.arange(len(times_ns))
    if not defects or len(times_ns) == 0:
        return order, 0, 0
    n = len(times_ns)
    swaps = np.asarray(defects.get("swap_times", []), dtype="datetime64[ns]").view(np.int64)
    pos = np.searchsorted(times_ns, swaps)
    pos = np.unique(pos[(pos < n - 1) & (times_ns[np.minimum(pos, n - 1)] == swaps)])
    pos = pos[np.concatenate([[True], np.diff(pos) > 1])] if len(pos) else pos  # disjoint pairs only
    order[pos], order[pos + 1] = order[pos + 1], order[pos].copy()
    dups = np.asarray(defects.get("duplicate_times", []), dtype="datetime64[ns]").view(np.int64)
    hit = np.searchsorted(times_ns, dups)
    hit = np.unique(hit[(hit < n) & (times_ns[np.minimum(hit, n - 1)] == dups)])
    repeat = np.ones(n, dtype=np.int64)
    repeat[hit] += 1
    order = np.repeat(order, repeat[order])
    return order, int(len(hit)), int(len(pos))


def _pivot(table: pd.DataFrame, keys: list[str], signal: list[str]) -> tuple[pd.DataFrame, list[tuple]]:
    """Wide frame indexed by ``keys`` (time first) with one (value, status) column pair per ``signal``
    combination; the signal columns in a stable order."""
    frame = table[keys + signal + [schema.VALUE, schema.STATUS]].copy()
    frame[schema.STATUS] = frame[schema.STATUS].astype(object)
    wide = frame.pivot(index=keys, columns=signal, values=[schema.VALUE, schema.STATUS])
    columns = sorted({col[1:] for col in wide.columns}, key=_signal_sort_key)
    return wide, columns


def _columns_by_time(table: pd.DataFrame) -> tuple[np.ndarray, list[tuple[str, str, np.ndarray, np.ndarray]]]:
    """One hop's sample rows as columns on the sorted distinct times: (times_ns, [(channel, quantity, values,
    statuses)]) with status "missing" where a column has no row at a time (numpy only: no pandas pivot)."""
    t_ns = table[schema.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
    times, row_of = np.unique(t_ns, return_inverse=True)
    channel, channels = pd.factorize(table[schema.CHANNEL])
    quantity, quantities = pd.factorize(table[schema.QUANTITY])
    status, statuses = pd.factorize(table[schema.STATUS])
    status_labels = np.append(np.asarray(statuses, dtype=object), schema.MISSING)
    value = table[schema.VALUE].to_numpy(dtype=float)
    combo = channel * len(quantities) + quantity
    out = []
    for code in np.unique(combo):
        mask = combo == code
        values = np.full(len(times), np.nan)
        codes = np.full(len(times), len(statuses), dtype=np.int64)
        values[row_of[mask]] = value[mask]
        codes[row_of[mask]] = status[mask]
        out.append(
            (
                str(channels[code // len(quantities)]),
                str(quantities[code % len(quantities)]),
                values,
                status_labels[codes],
            )
        )
    out.sort(key=lambda item: _signal_sort_key((item[0], item[1])))
    return times, out


_QUANTITY_ORDER = {schema.RSL: 0, schema.TSL: 1, schema.XPD: 2, schema.XPL: 3, schema.SES: 4, schema.UAS: 5}
_COUNTERS = (schema.ES, schema.SES, schema.UAS)
_STAT_ORDER = {schema.SAMPLE: 0, schema.MIN: 1, schema.AVG: 2, schema.MAX: 3}


def _signal_sort_key(col: tuple) -> tuple:
    if len(col) == 3:
        channel, quantity, stat = col
        return (_QUANTITY_ORDER.get(quantity, 9), channel, _STAT_ORDER.get(stat, 9))
    if len(col) == 2 and col[0] in _QUANTITY_ORDER:  # (quantity, stat)
        return (_QUANTITY_ORDER.get(col[0], 9), _STAT_ORDER.get(col[1], 9))
    channel, quantity = col
    return (_QUANTITY_ORDER.get(quantity, 9), channel)


def _check(table: pd.DataFrame, *, samples: bool) -> None:
    missing = [c for c in schema.COLUMNS if c not in table.columns]
    if missing:
        raise InputError(f"writer: table lacks column(s) {', '.join(missing)}")
    stats = set(table[schema.STAT].unique())
    if samples and stats - {schema.SAMPLE}:
        raise InputError("writer: this shape writes samples; use the 'stats' shape for interval statistics")
    counters_only = set(table.loc[table[schema.STAT] == schema.SAMPLE, schema.QUANTITY]) <= set(_COUNTERS)
    if not samples and not counters_only:
        raise InputError(
            "writer: the 'stats' shape needs min/avg/max rows (diag.sim.simulate.aggregate_statistics)"
        )


def _write_lines(path: Path, header: str, columns: list[pa.Array], sep: str, order: np.ndarray) -> None:
    if columns:
        joined = pc.binary_join_element_wise(*columns, sep)
        lines = joined.take(pa.array(order)).to_pylist() if len(order) else []
    else:
        lines = []
    text = header + "\n" + ("\n".join(lines) + "\n" if lines else "")
    data = text.encode("utf-8")
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    if path.suffix == ".gz":
        buffer = io.BytesIO()
        with gzip.GzipFile(filename="", mode="wb", fileobj=buffer, mtime=0, compresslevel=6) as handle:
            handle.write(data)
        data = buffer.getvalue()
    path.write_bytes(data)


def _one_link(table: pd.DataFrame) -> str:
    links = table[schema.LINK].unique()
    if len(links) > 1:
        raise InputError(
            "writer: this shape holds one hop per file; use the 'long' or 'stats' shape for several"
        )
    return str(links[0]) if len(links) else ""
