"""Hop assembly: the inputs of a many-hop run (log files and stores), and one hop's normalised table assembled
from the pieces of several files (or store partitions).

Used by :func:`diag.pipeline.analyze_files` and by :mod:`diag.batch`'s tasks, so both keep the same rule for a value
found in two files.  (Which hop a file's rows belong to is :mod:`diag.read.hop_match`.)
"""
from __future__ import annotations

import os
from collections.abc import Iterable, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from diag import schema
from diag.read import store
from diag.read.ingest import expand_paths

__all__ = ["SORT_COLUMNS", "expand_inputs", "hop_table", "read_file_table", "sorted_table",
           "store_part"]

SORT_COLUMNS = [schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.TIME]
_SORT = SORT_COLUMNS


def sorted_table(table: pd.DataFrame) -> pd.DataFrame:
    """``table`` in the order of ``SORT_COLUMNS`` (a stable sort), with a new 0..n-1 index.  A table already in that
    order, as a reader's or a store's usually is, is only checked (one pass per key) and not sorted again: the rows
    and their order are the ones the sort would give (issue 18: the sort was about a tenth of an ``analyze``)."""
    if _in_sort_order(table):
        return table.reset_index(drop=True)
    return table.sort_values(_SORT, kind="mergesort").reset_index(drop=True)


def _in_sort_order(table: pd.DataFrame) -> bool:
    """True when the rows are already in the order a stable sort by ``_SORT`` gives, as pandas compares them:
    categorical keys by their codes (the order of the categories), the time by its nanoseconds.  False, so that the
    table is sorted, for any other key type and for a missing value in a key (pandas puts those last)."""
    if not set(_SORT) <= set(table.columns):
        return False
    tied = None   # rows equal to the next row in every key so far
    for name in _SORT:
        column = table[name]
        if isinstance(column.dtype, pd.CategoricalDtype):
            keys = column.cat.codes.to_numpy()
            if keys.size and keys.min() < 0:
                return False
        elif isinstance(column.dtype, pd.DatetimeTZDtype):
            keys = pd.DatetimeIndex(column).asi8
            if keys.size and keys.min() == _NAT:
                return False
        else:
            return False
        before, after = keys[:-1], keys[1:]
        if tied is None:
            if (after < before).any():
                return False
            tied = after == before
        else:
            if (tied & (after < before)).any():
                return False
            tied &= after == before
    return True


_NAT = np.iinfo(np.int64).min   # NaT's nanoseconds


def hop_table(tables: Iterable[pd.DataFrame]) -> tuple[pd.DataFrame, int]:
    """One hop's normalised table from its pieces (in input order), sorted as ``diag.schema`` prescribes, and the
    number of values dropped because an earlier file already held them (same rule as ``diag.read.ingest.read_logs``:
    same link, channel, quantity, stat and time -> the first file's value is kept)."""
    parts = [t for t in tables if t is not None and len(t)]
    if not parts:
        return schema.empty_table(), 0
    if len(parts) == 1:
        return sorted_table(schema.conform(parts[0])), 0
    table = sorted_table(schema.concat(parts))   # keeps the key columns categorical (diag.schema)
    dup = table.duplicated(subset=_SORT, keep="first").to_numpy()
    if dup.any():
        table = table[~dup].reset_index(drop=True)
    return table, int(dup.sum())


def _is_store(path: Path) -> bool:
    """A store folder (``diag.read.store``), whose hops are read one by one."""
    return path.is_dir() and bool(store.is_store(path))


def expand_inputs(inputs: Sequence[str | os.PathLike]) -> tuple[list[Path], list[Path]]:
    """Split the inputs (expanded by ``diag.read.ingest.expand_paths``) into log files and Parquet stores, which are
    read hop by hop.  Raises ``InputError`` for a path that does not exist or an empty input."""
    paths = expand_paths(inputs)
    stores = [path for path in paths if _is_store(path)]
    files = [path for path in paths if not _is_store(path)]
    return files, stores


def read_file_table(path: str, *, tz=None, mapping=None) -> tuple[pd.DataFrame, dict]:
    from diag.read.ingest import read_log

    result = read_log(path, tz=tz, mapping=mapping)
    report = result.report.to_dict() if hasattr(result.report, "to_dict") else dict(result.report or {})
    return result.table, report


# --- worker tasks -----------------------------------------------------------------------------------------------


def store_part(store_path: str, store_id: str, hop: str) -> pd.DataFrame:
    from diag.read.store import read_store

    table = read_store(store_path, link_id=store_id)
    if store_id != hop:
        table = schema.conform(table.assign(**{schema.LINK: hop}))
    return table
