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
                     :func:`diag.sim.aggregate.aggregate_statistics`)

The text encoding of the columns is in :mod:`diag.sim.log_text`; the links table and the ground truth files are
written by :mod:`diag.sim.truth_files`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Iterable, Mapping

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from diag import schema
from diag.errors import InputError
from diag.sim.log_text import (
    _LABEL,
    _LONG_NAME,
    WriteInfo,
    _check,
    _columns_by_time,
    _format_values,
    _one_link,
    _pivot,
    _row_order,
    _time_text,
    _write_lines,
)
from diag.sim.truth_files import truth_segments, write_links_table, write_truth

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


def write_scenario(
    results, scenario, out_dir: str | Path, *, shapes: Iterable[str] | None = None, truth_samples: bool = True
) -> list[Path]:
    """Everything for a simulated scenario under ``out_dir``: ``links.csv``, ``logs/`` and ``truth/``.

    Without ``shapes`` each hop is written in its own ``log_shape`` (scenario file; default ``wide_iso``)
    straight into ``logs/`` (statistics as ``<link>_<N>min.csv``, long-shape hops together in
    ``<name>_long.csv``); with ``shapes`` every hop is written in each of them, into ``logs/<shape>/`` when
    there are several."""
    from diag.sim.aggregate import aggregate_statistics

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
