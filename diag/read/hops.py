"""One hop's normalised table assembled from the pieces of several files (or store partitions).

Used by :func:`diag.pipeline.analyze_files` and by :mod:`diag.batch`'s hop tasks, so both keep the same rule for
a value found in two files.
"""
from __future__ import annotations

from collections.abc import Iterable

import pandas as pd

from diag import schema

__all__ = ["SORT_COLUMNS", "hop_table", "sorted_table"]

SORT_COLUMNS = [schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.TIME]
_SORT = SORT_COLUMNS


def sorted_table(table: pd.DataFrame) -> pd.DataFrame:
    return table.sort_values(_SORT, kind="mergesort").reset_index(drop=True)


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
