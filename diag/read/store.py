"""Normalised tables on disk as Parquet: one file, or a store folder partitioned by link and UTC day.

Store layout (our own)::

    STORE/_diag_store.json                              marker: format name, version, columns
    STORE/link=<link id, %-escaped>/day=YYYY-MM-DD/part.parquet

Each part holds the rows of one link and one UTC day plus a hidden ``_row`` column (the row's position in the
table that was written), so ``read_store`` gives back exactly the table that ``write_store`` got: same columns,
dtypes (``diag.schema.empty_table()``) and row order.  ``diag.read.ingest.read_log`` reads both the single file and the
store folder, so ``analyze`` and ``batch`` can skip CSV parsing.
"""
from __future__ import annotations

import json
import shutil
from pathlib import Path
from urllib.parse import quote, unquote

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from diag import schema as S
from diag.errors import InputError

MARKER = "_diag_store.json"
FORMAT = "diag-normalised-store"
_ROW = "_row"


def _parquet():
    """``pyarrow.parquet``, imported on first use: it pulls pyarrow's file systems (S3, with ``ssl``), which a run
    on CSV logs never touches (about 10 ms of every such process)."""
    import pyarrow.parquet

    return pyarrow.parquet


def _to_arrow(table: pd.DataFrame, with_row: bool) -> pa.Table:
    missing = [c for c in S.COLUMNS if c not in table.columns]
    if missing:
        raise InputError(f"table lacks the normalised columns {missing}")
    table = S.conform(table)
    arrays = {
        S.TIME: pa.array(table[S.TIME].astype("datetime64[ns, UTC]").to_numpy(dtype="datetime64[ns]"),
                         pa.timestamp("ns", tz="UTC")),
    }
    for c in S.KEY_COLUMNS:     # categorical -> Arrow dictionary (Parquet dictionary-encoded column)
        cat = table[c].cat
        arrays[c] = pa.DictionaryArray.from_arrays(pa.array(cat.codes.to_numpy()),
                                                   pa.array(list(cat.categories), type=pa.string()))
    for c in (S.INTERVAL, S.VALUE):
        arrays[c] = pa.array(table[c].to_numpy(dtype="float64"), pa.float64())
    if with_row:
        arrays[_ROW] = pa.array(np.arange(len(table), dtype=np.int64))
    return pa.table(arrays)


def _to_frame(tab: pa.Table) -> pd.DataFrame:
    """Arrow -> pandas with exactly the dtypes of ``schema.empty_table()``."""
    if tab.num_rows == 0:
        return S.empty_table()
    missing = [c for c in S.COLUMNS if c not in tab.column_names]
    if missing:
        raise InputError(f"Parquet file lacks the normalised columns {missing}; write it with 'diag ingest --out'")
    cols = {}
    t = tab.column(S.TIME)
    if not pa.types.is_timestamp(t.type):
        raise InputError(f"Parquet column {S.TIME} is not a timestamp")
    t = t.cast(pa.timestamp("ns", tz="UTC")) if t.type.tz else t.cast(pa.timestamp("ns")).cast(
        pa.timestamp("ns", tz="UTC"))
    cols[S.TIME] = pd.Series(t.to_pandas(), copy=False).astype("datetime64[ns, UTC]")
    for c in S.KEY_COLUMNS:
        cols[c] = _key_column(c, tab.column(c))
    for c in (S.INTERVAL, S.VALUE):
        cols[c] = pd.Series(tab.column(c).cast(pa.float64()).to_numpy(), dtype="float64")
    return S.conform(pd.DataFrame(cols, columns=S.COLUMNS).reset_index(drop=True))


def _key_column(column: str, col: pa.ChunkedArray) -> pd.Series:
    """An Arrow key column (dictionary-encoded as written here, or plain strings from older files) -> the
    categorical column of ``diag.schema``, without one Python string per row."""
    if not pa.types.is_dictionary(col.type):
        col = pc.dictionary_encode(col.cast(pa.string()))
    col = col.unify_dictionaries() if isinstance(col, pa.ChunkedArray) else pa.chunked_array([col])
    words = col.chunk(0).dictionary.cast(pa.string()).to_pylist() if col.num_chunks else []
    if any(w is None for w in words) or col.null_count:
        raise InputError(f"Parquet column {column} holds empty (null) keys")
    codes = np.concatenate([ch.indices.to_numpy(zero_copy_only=False) for ch in col.chunks]) if col.num_chunks \
        else np.zeros(0, dtype=np.int32)
    return S.key_column(column, codes, words)


def write_parquet(table: pd.DataFrame, path: str | Path) -> Path:
    """One Parquet file holding the normalised table."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    _parquet().write_table(_to_arrow(table, with_row=False), path, compression="zstd")
    return path


def read_parquet(source: str | Path | bytes, *, name: str | None = None) -> pd.DataFrame:
    """Read a single Parquet file (path or bytes) written by ``write_parquet``."""
    label = name or (str(source) if not isinstance(source, (bytes, bytearray)) else "upload")
    try:
        src = pa.BufferReader(bytes(source)) if isinstance(source, (bytes, bytearray)) else source
        return _to_frame(_parquet().read_table(src))
    except InputError as exc:
        exc.path = exc.path or label
        raise
    except (OSError, pa.ArrowException, KeyError, ValueError, TypeError) as exc:
        raise InputError(f"not a readable Parquet file ({' '.join(str(exc).split())[:120]})", path=label) from exc


def write_store(table: pd.DataFrame, directory: str | Path) -> Path:
    """Write the table as a store folder partitioned by link id and UTC day (replaces an existing store)."""
    directory = Path(directory)
    if directory.exists():
        if not (directory / MARKER).exists() and any(directory.iterdir()):
            raise InputError("output folder exists and is not a diag store; choose another --out",
                             path=str(directory))
        shutil.rmtree(directory)
    directory.mkdir(parents=True)
    tab = _to_arrow(table, with_row=True)
    if len(table):
        link_code, links = pd.factorize(S.conform(table)[S.LINK].astype(object), sort=True)
        ns = table[S.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
        day = ns // (86400 * 10**9)                       # UTC day number
        day0 = int(day.min())
        key = link_code.astype(np.int64) * (int(day.max()) - day0 + 1) + (day - day0)
        order = np.argsort(key, kind="stable")
        bounds = np.flatnonzero(np.diff(key[order])) + 1
        for idx in np.split(order, bounds):
            lk = links[link_code[idx[0]]]
            dy = np.datetime64(int(day[idx[0]]), "D").astype(str)
            part = directory / f"link={quote(str(lk), safe='')}" / f"day={dy}"
            part.mkdir(parents=True, exist_ok=True)
            _parquet().write_table(tab.take(pa.array(idx)), part / "part.parquet", compression="zstd")
    (directory / MARKER).write_text(json.dumps({"format": FORMAT, "version": 1, "columns": S.COLUMNS,
                                                "rows": int(len(table))}, indent=1))
    return directory


def is_store(directory: str | Path) -> bool:
    return (Path(directory) / MARKER).is_file()


def store_links(directory: str | Path) -> list[str]:
    """Link ids held by a store folder (from its ``link=...`` folders), sorted."""
    directory = Path(directory)
    if not is_store(directory):
        raise InputError("not a diag store folder (no marker file)", path=str(directory))
    return sorted(unquote(p.name.split("=", 1)[1]) for p in directory.glob("link=*") if p.is_dir())


def read_store(directory: str | Path, *, link_id: str | None = None) -> pd.DataFrame:
    """Read a store folder back: exactly the table given to ``write_store`` (dtypes and row order).

    With ``link_id`` only that hop's parts are read: the same rows, dtypes and order as the full read filtered to
    that hop (the whole-store row count is then not checked)."""
    directory = Path(directory)
    if not is_store(directory):
        raise InputError("not a diag store folder (no marker file)", path=str(directory))
    try:
        meta = json.loads((directory / MARKER).read_text())
    except (OSError, ValueError) as exc:
        raise InputError("store marker file is unreadable", path=str(directory / MARKER)) from exc
    if not isinstance(meta, dict) or meta.get("format") != FORMAT:
        raise InputError("store marker names another format", path=str(directory / MARKER))
    pattern = f"link={quote(str(link_id), safe='')}" if link_id is not None else "link=*"
    parts = sorted(directory.glob(f"{pattern}/day=*/part.parquet"))
    if not parts:
        return S.empty_table()
    tabs = []
    for p in parts:
        try:
            tabs.append(_parquet().read_table(p))
        except (OSError, pa.ArrowException) as exc:
            raise InputError("unreadable store part", path=str(p)) from exc
    try:   # parts that parse but are not what write_store wrote (tampered, another program's): one clear line
        tab = pa.concat_tables(tabs, promote_options="default")
        order = np.argsort(tab.column(_ROW).to_numpy(), kind="stable")
        tab = tab.take(pa.array(order)).drop_columns([_ROW])
        if link_id is None and meta.get("rows") is not None and int(meta["rows"]) != tab.num_rows:
            raise InputError(f"store holds {tab.num_rows} rows, marker says {meta['rows']} (incomplete copy?)",
                             path=str(directory))
        return _to_frame(tab)
    except InputError as exc:
        exc.path = exc.path or str(directory)
        raise
    except (KeyError, ValueError, TypeError, pa.ArrowException) as exc:
        raise InputError(f"store parts do not hold the normalised table ({' '.join(str(exc).split())[:100]}); "
                         f"write the store again with 'diag ingest --out'", path=str(directory)) from exc

