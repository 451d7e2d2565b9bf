"""Log writers: the shapes of receive-level exports that ``diag.read.ingest.read_log`` understands.

Each writer takes normalised rows (:mod:`diag.schema`; usually ``SimResult.table``) and writes one CSV
file (gzip-compressed when the path ends in ``.gz``; the gzip header carries no time stamp so the same
table gives the same bytes).  Values are written as the radio would: a ``signal_lost`` value as the
receiver floor reading, a ``missing`` value as an empty cell.  File defects (``SimResult.file_defects``:
duplicated rows, adjacent rows swapped) are applied by the sample writers so that the reader's accounting
can be checked exactly.

``wide_iso``         ``time_utc,RSL H (dBm),RSL V (dBm),...``; ISO 8601 UTC stamps with ``Z``; one hop
``semicolon_local``  ``Local time;Rx level H [dBm];...``; ``;`` separated, decimal comma, day-first local
                     time in an IANA zone (read it back with ``tz=``); one hop
``epoch``            ``unix_time,RxLevel-H,...``: epoch seconds; one hop
``long``             ``time_utc,link_id,channel,quantity,value``: one value per row, several hops per file
``stats``            ``period_start_utc,link_id,channel,RSL min (dBm),RSL avg (dBm),RSL max (dBm),...``:
                     interval min/avg/max statistics (e.g. 15 minutes, from
                     :func:`diag.sim.simulate.aggregate_statistics`)
"""

from __future__ import annotations

import gzip
import io
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable, Mapping

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from diag import schema
from diag.errors import InputError

__all__ = [
    "SHAPES",
    "WriteInfo",
    "write_log",
    "write_wide_iso",
    "write_semicolon_local",
    "write_epoch",
    "write_links_table",
    "truth_segments",
    "write_truth",
    "write_scenario",
    "write_long",
    "write_stats",
]

SHAPES = ("wide_iso", "semicolon_local", "epoch", "long", "stats")
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


# ------------------------------------------------------------------------------------------------------------
# helpers


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


# ------------------------------------------------------------------------------------------------------------
# shapes


def _write_wide(
    table, path, *, shape, defects, floor_dbm, time_header, time_fmt, tz, sep, decimal, name_of
) -> WriteInfo:
    _check(table, samples=True)
    _one_link(table)
    times_ns, columns = _columns_by_time(table)
    order, dups, swaps = _row_order(times_ns, defects)
    if time_fmt == "epoch":
        time_col = pa.array((times_ns // 1_000_000_000).astype(str))
    else:
        time_col = _time_text(times_ns, time_fmt, tz)
    cells, names = [time_col], [time_header]
    for channel, quantity, values, status in columns:
        cells.append(
            _format_values(
                values, status, floor_dbm, decimal=decimal, floor_applies=quantity in (schema.RSL, schema.XPL)
            )
        )
        names.append(name_of(channel, quantity))
    _write_lines(path, sep.join(names), cells, sep, order)
    return WriteInfo(Path(path), shape, len(order), dups, swaps, len(order) * len(columns))


def write_wide_iso(
    table: pd.DataFrame, path: str | Path, *, defects: Mapping | None = None, floor_dbm: float | None = -99.0
) -> WriteInfo:
    """One hop, one row per time, one column per channel and quantity; ISO 8601 UTC stamps with ``Z``."""
    return _write_wide(
        table,
        path,
        shape="wide_iso",
        defects=defects,
        floor_dbm=floor_dbm,
        time_header="time_utc",
        time_fmt="%Y-%m-%dT%H:%M:%SZ",
        tz="UTC",
        sep=",",
        decimal=".",
        name_of=lambda ch, q: f"{_LABEL[q][0]} {ch} ({_LABEL[q][3]})",
    )


def write_semicolon_local(
    table: pd.DataFrame,
    path: str | Path,
    *,
    tz: str,
    defects: Mapping | None = None,
    floor_dbm: float | None = -99.0,
) -> WriteInfo:
    """One hop; ``;`` separated, decimal comma, day-first local time (``dd.mm.yyyy HH:MM:SS``) in IANA
    zone ``tz``.

    A local clock repeats an hour when summer time ends: stamps in that hour are ambiguous and a reader must
    count them rather than guess (see the reader's ``dst_ambiguous`` reason)."""
    return _write_wide(
        table,
        path,
        shape="semicolon_local",
        defects=defects,
        floor_dbm=floor_dbm,
        time_header="Local time",
        time_fmt="%d.%m.%Y %H:%M:%S",
        tz=tz,
        sep=";",
        decimal=",",
        name_of=lambda ch, q: f"{_LABEL[q][1]} {ch} [{_LABEL[q][3]}]",
    )


def write_epoch(
    table: pd.DataFrame, path: str | Path, *, defects: Mapping | None = None, floor_dbm: float | None = -99.0
) -> WriteInfo:
    """One hop; the time as integer seconds since 1970-01-01 UTC."""
    return _write_wide(
        table,
        path,
        shape="epoch",
        defects=defects,
        floor_dbm=floor_dbm,
        time_header="unix_time",
        time_fmt="epoch",
        tz="UTC",
        sep=",",
        decimal=".",
        name_of=lambda ch, q: f"{_LABEL[q][2]}-{ch}",
    )


def write_long(
    tables: pd.DataFrame | Iterable[pd.DataFrame],
    path: str | Path,
    *,
    defects: Mapping[str, Mapping] | None = None,
    floors_dbm: Mapping[str, float] | None = None,
) -> WriteInfo:
    """Several hops in one file, one value per row: ``time_utc,link_id,channel,quantity,value``.

    ``defects`` and ``floors_dbm`` are keyed by link id.  A duplicated poll repeats every value row of that
    time."""
    table = tables if isinstance(tables, pd.DataFrame) else pd.concat(list(tables), ignore_index=True)
    _check(table, samples=True)
    pieces_lines: list[pa.Array] = []
    total_rows = dups_total = swaps_total = 0
    for link_id in sorted(table[schema.LINK].unique()):
        part = table[table[schema.LINK] == link_id]
        frame = part.sort_values([schema.TIME, schema.CHANNEL, schema.QUANTITY], kind="stable")
        times_ns = frame[schema.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
        unique_times, first = np.unique(times_ns, return_index=True)
        order_t, dups, swaps = _row_order(unique_times, (defects or {}).get(link_id))
        counts = np.diff(np.append(first, len(times_ns)))
        # expand the per-time order to the value rows of each time
        starts, sizes = first[order_t], counts[order_t]
        rows = np.repeat(starts, sizes) + _ramp(sizes)
        floor = (floors_dbm or {}).get(link_id, -99.0)
        quantity = frame[schema.QUANTITY].to_numpy(dtype=object)
        status = frame[schema.STATUS].to_numpy(dtype=object)
        values = _format_values(frame[schema.VALUE].to_numpy(dtype=float), status, floor, floor_applies=True)
        # the floor reading only for levels
        is_level = np.isin(quantity, [schema.RSL, schema.XPL])
        values = pc.if_else(pa.array((status == schema.SIGNAL_LOST) & ~is_level), "", values)
        names = pa.array([_LONG_NAME.get(q, q) for q in quantity])
        line = pc.binary_join_element_wise(
            _time_text(times_ns, "%Y-%m-%dT%H:%M:%SZ"),
            pa.array(frame[schema.LINK].to_numpy(dtype=object)),
            pa.array(frame[schema.CHANNEL].to_numpy(dtype=object)),
            names,
            values,
            ",",
        )
        pieces_lines.append(line.take(pa.array(rows)))
        total_rows += len(rows)
        dups_total += len(rows) - len(times_ns)
        swaps_total += swaps
    column = pa.concat_arrays(pieces_lines) if pieces_lines else pa.array([], pa.string())
    _write_lines(path, "time_utc,link_id,channel,quantity,value", [column], ",", np.arange(len(column)))
    return WriteInfo(Path(path), "long", total_rows, dups_total, swaps_total, total_rows)


def _ramp(sizes: np.ndarray) -> np.ndarray:
    """0..size-1 for each size, concatenated."""
    if len(sizes) == 0:
        return np.array([], dtype=np.int64)
    ends = np.cumsum(sizes)
    return np.arange(ends[-1]) - np.repeat(ends - sizes, sizes)


def write_stats(
    table: pd.DataFrame | Iterable[pd.DataFrame],
    path: str | Path,
    *,
    floors_dbm: Mapping[str, float] | None = None,
) -> WriteInfo:
    """Interval statistics of one or several hops: one row per interval start, hop and channel, with
    ``<quantity> min/avg/max (<unit>)`` columns.  ``floors_dbm`` (by link id) is written for signal_lost
    cells.  Hops that log different quantities leave blank cells for each other (read back as "missing"):
    give such hops files of their own."""
    table = table if isinstance(table, pd.DataFrame) else pd.concat(list(table), ignore_index=True)
    _check(table, samples=False)
    wide, columns = _pivot(table, [schema.TIME, schema.LINK, schema.CHANNEL], [schema.QUANTITY, schema.STAT])
    index = wide.index.to_frame(index=False)
    order = np.lexsort(
        (
            index[schema.CHANNEL].to_numpy(dtype=str),
            index[schema.LINK].to_numpy(dtype=str),
            index[schema.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64),
        )
    )
    times_ns = index[schema.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
    floor = np.array([(floors_dbm or {}).get(link, -99.0) for link in index[schema.LINK]], dtype=float)
    cells = [
        _time_text(times_ns, "%Y-%m-%dT%H:%M:%SZ"),
        pa.array(index[schema.LINK].to_numpy(dtype=object)),
        pa.array(index[schema.CHANNEL].to_numpy(dtype=object)),
    ]
    names = ["period_start_utc", "link_id", "channel"]
    n_values = 0
    for quantity, stat in columns:
        values = wide[(schema.VALUE, quantity, stat)].to_numpy(dtype=float)
        status = wide[(schema.STATUS, quantity, stat)].to_numpy(dtype=object)
        present = ~pd.isna(status)
        status = np.where(present, status, schema.MISSING)
        n_values += int(present.sum())
        applies = quantity in (schema.RSL, schema.XPL)
        out = np.where(
            status == schema.OK, values, np.where((status == schema.SIGNAL_LOST) & applies, floor, np.nan)
        )
        cells.append(_format_values(out, np.where(np.isnan(out), schema.MISSING, schema.OK), None))
        if stat == schema.SAMPLE:  # an interval counter
            names.append(f"{_LABEL[quantity][0]} ({_LABEL[quantity][3]})")
        else:
            names.append(f"{_LABEL[quantity][0]} {stat} ({_LABEL[quantity][3]})")
    _write_lines(path, ",".join(names), cells, ",", order)
    return WriteInfo(Path(path), "stats", len(order), 0, 0, n_values)


def write_log(
    table: pd.DataFrame,
    path: str | Path,
    shape: str,
    *,
    tz: str | None = None,
    defects: Mapping | None = None,
    floor_dbm: float | None = -99.0,
) -> WriteInfo:
    """Write ``table`` (one hop) in ``shape`` (see ``SHAPES``)."""
    if shape == "wide_iso":
        return write_wide_iso(table, path, defects=defects, floor_dbm=floor_dbm)
    if shape == "semicolon_local":
        if not tz:
            raise InputError("writer: the semicolon_local shape needs a time zone (tz=...)")
        return write_semicolon_local(table, path, tz=tz, defects=defects, floor_dbm=floor_dbm)
    if shape == "epoch":
        return write_epoch(table, path, defects=defects, floor_dbm=floor_dbm)
    if shape == "long":
        link = _one_link(table)
        return write_long(
            table,
            path,
            defects={link: defects} if defects else None,
            floors_dbm={link: floor_dbm} if floor_dbm is not None else None,
        )
    if shape == "stats":
        link = _one_link(table)
        return write_stats(table, path, floors_dbm={link: floor_dbm} if floor_dbm is not None else None)
    raise InputError(f"writer: unknown shape {shape!r}; use one of {', '.join(SHAPES)}")


# ------------------------------------------------------------------------------------------------------------
# links table, ground truth and whole scenarios


def _iso(values) -> list[str]:
    stamps = pd.to_datetime(pd.Series(values), utc=True)
    return [("" if pd.isna(v) else v.strftime("%Y-%m-%dT%H:%M:%SZ")) for v in stamps]


def write_links_table(links, path: str | Path) -> Path:
    """A links table CSV (``diag.links`` columns: required first, then every optional one; empty when
    unknown)."""
    from diag.links import OPTIONAL, REQUIRED

    rows = [",".join(REQUIRED + OPTIONAL)]
    for link in links:
        cells = []
        for name in REQUIRED + OPTIONAL:
            value = getattr(link, name)
            cells.append("" if value is None else (f"{value:g}" if isinstance(value, float) else str(value)))
        rows.append(",".join(cells))
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def truth_segments(result) -> pd.DataFrame:
    """Run-length segments of the per-sample true cause of one simulated hop (faded runs only).

    Columns ``link_id, channel, start_utc, end_utc`` (end exclusive: start of the next sample), ``cause``,
    ``samples``, ``peak_fade_db``."""
    truth = result.truth_samples
    dt = pd.Timedelta(seconds=result.spec.interval_s)
    out = []
    for channel, part in truth.groupby("channel", sort=True):
        cause = part["cause"].to_numpy(dtype=object)
        fade = part["total_fade_db"].to_numpy(dtype=float)
        times = part["time_utc"].reset_index(drop=True)
        change = np.flatnonzero(np.r_[True, cause[1:] != cause[:-1]])
        ends = np.r_[change[1:], len(cause)]
        for a, b in zip(change, ends):
            if cause[a] == "":
                continue
            out.append(
                {
                    "link_id": result.spec.link_id,
                    "channel": channel,
                    "start_utc": times[a],
                    "end_utc": times[b - 1] + dt,
                    "cause": cause[a],
                    "samples": int(b - a),
                    "peak_fade_db": round(float(fade[a:b].max()), 2),
                }
            )
    return pd.DataFrame(
        out, columns=["link_id", "channel", "start_utc", "end_utc", "cause", "samples", "peak_fade_db"]
    )


def write_truth(results, out_dir: str | Path, *, samples: bool = True) -> list[Path]:
    """Ground truth beside the logs: ``truth_events.csv``, ``truth_labels.csv`` (run-length cause
    segments) and, when ``samples``, ``truth_samples.parquet`` (every sample's contribution per cause)."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    results = list(results.values()) if isinstance(results, Mapping) else list(results)
    events = pd.concat(
        [r.truth_events for r in results if not r.truth_events.empty]
        or [pd.DataFrame(columns=results[0].truth_events.columns if results else [])],
        ignore_index=True,
    )
    for column in ("start_utc", "end_utc", "shift_utc"):
        if column in events:
            events[column] = _iso(events[column])
    for column in events.columns:
        if events[column].dtype.kind == "f":
            events[column] = events[column].round(3)
    paths = [out_dir / "truth_events.csv", out_dir / "truth_labels.csv"]
    events.to_csv(paths[0], index=False, lineterminator="\n")
    labels = pd.concat([truth_segments(r) for r in results], ignore_index=True)
    labels["start_utc"] = _iso(labels["start_utc"])
    labels["end_utc"] = _iso(labels["end_utc"])
    labels.to_csv(paths[1], index=False, lineterminator="\n")
    if samples:
        frames = []
        for r in results:
            frame = r.truth_samples.copy()
            frame.insert(1, "link_id", r.spec.link_id)
            frames.append(frame)
        paths.append(out_dir / "truth_samples.parquet")
        pd.concat(frames, ignore_index=True).to_parquet(paths[-1], index=False)
    return paths


def write_scenario(
    results, scenario, out_dir: str | Path, *, shapes: Iterable[str] | None = None, truth_samples: bool = True
) -> list[Path]:
    """Everything for a simulated scenario under ``out_dir``: ``links.csv``, ``logs/`` and ``truth/``.

    Without ``shapes`` each hop is written in its own ``log_shape`` (scenario file; default ``wide_iso``)
    straight into ``logs/`` (statistics as ``<link>_<N>min.csv``, long-shape hops together in
    ``<name>_long.csv``); with ``shapes`` every hop is written in each of them, into ``logs/<shape>/`` when
    there are several."""
    from diag.sim.simulate import aggregate_statistics

    out_dir = Path(out_dir)
    results = dict(results)
    outputs = getattr(scenario, "outputs", {}) or {}
    shape_list = list(shapes) if shapes is not None else None
    if shape_list is not None:
        unknown = [s for s in shape_list if s not in SHAPES]
        if unknown:
            raise InputError(f"unknown log shape(s) {', '.join(unknown)}; use {', '.join(SHAPES)} or all")
    from diag.report.tables import safe_filename  # file names from ids: never a path (as 'analyze' names files)

    clash = [i for i in results if sum(safe_filename(j) == safe_filename(i) for j in results) > 1]
    if clash:
        raise InputError(f"link ids {', '.join(map(repr, clash[:4]))} give the same file name; rename them")
    written = [write_links_table([r.link for r in results.values()], out_dir / "links.csv")]
    plan: dict[str, list[str]] = {}
    for link_id in results:
        for shape in shape_list or [outputs.get(link_id, {}).get("log_shape", "wide_iso")]:
            plan.setdefault(shape, []).append(link_id)
    interval = float(getattr(scenario, "stats_interval_s", 900.0))
    tag = f"{int(interval // 60)}min" if interval % 60 == 0 else f"{interval:g}s"
    for shape, ids in plan.items():
        folder = (
            out_dir / "logs" / shape if shape_list is not None and len(shape_list) > 1 else out_dir / "logs"
        )
        if shape == "stats":
            for i in ids:
                counters = outputs.get(i, {}).get("counters", False)
                stats = aggregate_statistics(
                    results[i].table,
                    interval_s=interval,
                    floor_dbm=results[i].spec.floor_value_dbm,
                    threshold_dbm=results[i].spec.threshold_dbm if counters else None,
                )
                info = write_stats(
                    stats,
                    folder / (safe_filename(f"{i}_{tag}") + ".csv"),
                    floors_dbm={i: results[i].spec.floor_value_dbm},
                )
                written.append(info.path)
        elif shape == "long":
            info = write_long(
                [results[i].table for i in ids],
                folder / (safe_filename(scenario.name, default="scenario") + "_long.csv"),
                defects={i: results[i].file_defects for i in ids},
                floors_dbm={i: results[i].spec.floor_value_dbm for i in ids},
            )
            written.append(info.path)
        else:
            for i in ids:
                r = results[i]
                suffix = ".csv.gz" if outputs.get(i, {}).get("gzip", False) else ".csv"
                name = safe_filename(i) + suffix  # the reader takes a one-hop file's link id from its name
                info = write_log(
                    r.table,
                    folder / name,
                    shape,
                    tz=scenario.tz,
                    defects=r.file_defects,
                    floor_dbm=r.spec.floor_value_dbm,
                )
                written.append(info.path)
    written += write_truth(results, out_dir / "truth", samples=truth_samples)
    return written
