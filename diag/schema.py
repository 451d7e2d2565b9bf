"""Names shared by every stage: the normalised table, the event table and the cause vocabulary.

The normalised table (what the reader returns, what the analysis consumes) is a long pandas DataFrame, one row per
value, sorted by ``link_id, channel, quantity, stat, time_utc``:

=============  ======================================  ==============================================================
column         dtype                                   meaning
=============  ======================================  ==============================================================
time_utc       datetime64[ns, UTC]                     sample time, or the START of the statistics interval
link_id        category (str categories)               hop identifier ("" never; the reader fills a default)
channel        category (str categories)               polarisation or direction ("H", "V", "A-B", "ch1" ...)
quantity       category (QUANTITIES)                   what was measured
stat           category (STATS)                        instantaneous sample, or interval min / avg / max
interval_s     float64                                 statistics interval length in s (0.0 for samples)
value          float64                                 the number; NaN when status is not "ok"
status         category (STATUSES)                     "ok", "signal_lost" (receiver at its floor / LOS), "missing"
=============  ======================================  ==============================================================

A stretch with no rows at all is "no data" (a gap), which is never an outage.  A row with status "signal_lost"
is a real observation that the receiver had no usable signal (it counts as below threshold).  A row with status
"missing" was present in the file but held no value (blank, N/A): it counts as no data.

The five key columns (``KEY_COLUMNS``) are pandas Categoricals (about 1 byte per row instead of ~78 for "str"),
with categories that are str and SORTED, so sorting on them (by category code) gives the same order as sorting
the strings.  quantity/stat/status always carry their whole vocabulary as categories; link_id/channel carry the
values present.  Every producer (reader, Parquet store, simulator, batch concatenation) passes its table through
:func:`conform`, so two tables from different producers have equal dtypes.  Concatenating tables whose link_id or
channel categories differ gives "str" columns (pandas): call :func:`conform` on the result.  Consumers may compare
with ``==`` / ``isin`` (a value that is not a category is simply never equal), use ``.astype(str)``,
``.to_numpy(dtype=object)``, ``.str``; group with ``observed=True`` (the pandas 3 default).
"""
from __future__ import annotations

# --- normalised table -------------------------------------------------------------------------------------------
TIME = "time_utc"
LINK = "link_id"
CHANNEL = "channel"
QUANTITY = "quantity"
STAT = "stat"
INTERVAL = "interval_s"
VALUE = "value"
STATUS = "status"
COLUMNS = [TIME, LINK, CHANNEL, QUANTITY, STAT, INTERVAL, VALUE, STATUS]

RSL = "rsl_dbm"        # receive level
TSL = "tsl_dbm"        # transmit level (ATPC)
XPD = "xpd_db"         # cross-polar discrimination
XPL = "xpl_dbm"        # cross-polar receive level (XPD = co-pol RSL - cross-pol level)
ES = "es_count"        # errored seconds counted by the radio in the row's interval
SES = "ses_count"      # severely errored seconds counted by the radio
UAS = "uas_count"      # unavailable seconds counted by the radio
QUANTITIES = (RSL, TSL, XPD, XPL, ES, SES, UAS)

SAMPLE, MIN, AVG, MAX = "sample", "min", "avg", "max"
STATS = (SAMPLE, MIN, AVG, MAX)

OK, SIGNAL_LOST, MISSING = "ok", "signal_lost", "missing"
STATUSES = (OK, SIGNAL_LOST, MISSING)

DEFAULT_LINK_ID = "link"

# --- causes -----------------------------------------------------------------------------------------------------
RAIN, MULTIPATH, REFRACTIVE, LEVEL_SHIFT, SIGNAL_LOSS, UNKNOWN = (
    "rain", "multipath", "refractive", "level_shift", "signal_loss", "unknown")
CAUSES = (RAIN, MULTIPATH, REFRACTIVE, LEVEL_SHIFT, SIGNAL_LOSS, UNKNOWN)
NO_DATA = "no data"   # a gap: reported apart, never an outage

# --- output tables (column order is part of the contract, see DEVELOPERS.md) ------------------------------------
EVENT_COLUMNS = ["link_id", "channel", "start_utc", "end_utc", "duration_s", "peak_fade_db", "cause",
                 "confidence", "evidence"]
OUTAGE_SUMMARY_COLUMNS = ["link_id", "period_start_utc", "period_end_utc", "observed_s", "no_data_s",
                          "below_threshold_s", "unavailable_s", "ses_available_s", "availability_pct",
                          "objective_pct", "meets_objective"]
OUTAGE_BY_CAUSE_COLUMNS = ["link_id", "cause", "events", "below_threshold_s", "unavailable_s"]


KEY_COLUMNS = (LINK, CHANNEL, QUANTITY, STAT, STATUS)   # categorical columns of the normalised table
# fixed vocabularies (always all present as categories, sorted); link_id/channel categories = the values present
VOCABULARY = {QUANTITY: tuple(sorted(QUANTITIES)), STAT: tuple(sorted(STATS)), STATUS: tuple(sorted(STATUSES))}


def key_dtype(column: str, values=()):
    """The categorical dtype of key column ``column`` holding ``values`` (sorted str categories)."""
    import pandas as pd

    cats = set(str(v) for v in values) | set(VOCABULARY.get(column, ()))
    return pd.CategoricalDtype(pd.Index(sorted(cats), dtype="str"), ordered=False)


def key_column(column: str, codes, categories):
    """A categorical key column from integer ``codes`` into the str list ``categories`` (any order; the result
    has the sorted categories of :func:`key_dtype`), without building one string per row."""
    import numpy as np
    import pandas as pd

    dtype = key_dtype(column, categories)
    target = dtype.categories.get_indexer(pd.Index([str(c) for c in categories], dtype="str"))
    width = np.int8 if len(dtype.categories) < 127 else (np.int16 if len(dtype.categories) < 32000 else np.int32)
    lookup = np.asarray(target, dtype=width)
    new = lookup[np.asarray(codes, dtype=np.intp)] if len(lookup) else np.zeros(len(codes), dtype=width)
    return pd.Series(pd.Categorical.from_codes(new, dtype=dtype), copy=False)


def key_column_runs(column: str, words, counts):
    """A categorical key column holding ``words[i]`` ``counts[i]`` times, in order (codes built by repeating one
    small code per run: no per-row temporary beyond the 1-2 byte codes)."""
    import numpy as np
    import pandas as pd

    words = [str(w) for w in words]
    dtype = key_dtype(column, words)
    width = np.int8 if len(dtype.categories) < 127 else (np.int16 if len(dtype.categories) < 32000 else np.int32)
    small = dtype.categories.get_indexer(pd.Index(words, dtype="str")).astype(width)
    codes = np.repeat(small, np.asarray(counts, dtype=np.int64))
    return pd.Series(pd.Categorical.from_codes(codes, dtype=dtype), copy=False)


def _conform_column(column: str, col):
    """``col`` as a conforming categorical Series, or None when it already conforms."""
    import numpy as np
    import pandas as pd

    if isinstance(col.dtype, pd.CategoricalDtype):
        cats = col.cat.categories
        codes = col.cat.codes.to_numpy()
        if column in VOCABULARY:
            used = cats
        else:
            present = np.bincount(codes[codes >= 0], minlength=len(cats)) > 0 if len(codes) else np.zeros(
                len(cats), dtype=bool)
            used = cats[present]
        dtype = key_dtype(column, used)
        if cats.equals(dtype.categories) and cats.dtype == dtype.categories.dtype and not col.cat.ordered:
            return None     # conforms (dtype == dtype ignores category order for unordered categoricals: check it here)
        if (codes < 0).any():
            raise ValueError(f"normalised column {column} holds missing values")
        target = dtype.categories.get_indexer(cats)    # -1 only for unused categories (never referenced)
        width = np.int8 if len(dtype.categories) < 127 else (np.int16 if len(dtype.categories) < 32000 else np.int32)
        new = target.astype(width)[codes] if len(codes) else np.zeros(0, dtype=width)
        return pd.Series(pd.Categorical.from_codes(new, dtype=dtype), index=col.index, name=col.name)
    if col.isna().any():
        raise ValueError(f"normalised column {column} holds missing values")
    codes, uniques = pd.factorize(col.astype("str"), sort=False)
    out = key_column(column, codes, [str(u) for u in uniques])
    out.index, out.name = col.index, col.name
    return out


def conform(table):
    """The table with the normalised dtypes: key columns as sorted-category Categoricals (see the module
    docstring), time as datetime64[ns, UTC], interval/value float64.  Cheap when the table already conforms
    (returns the same object); otherwise returns a new frame (the input is not modified)."""
    changes = {}
    for c in KEY_COLUMNS:
        if c in table.columns:
            new = _conform_column(c, table[c])
            if new is not None:
                changes[c] = new
    if TIME in table.columns and str(table[TIME].dtype) != "datetime64[ns, UTC]":
        changes[TIME] = table[TIME].astype("datetime64[ns, UTC]")
    for c in (INTERVAL, VALUE):
        if c in table.columns and table[c].dtype != "float64":
            changes[c] = table[c].astype("float64")
    if not changes:
        return table
    out = table.copy(deep=False)
    for c, v in changes.items():
        out[c] = v
    return out


def present(column) -> list[str]:
    """The distinct values of a key column, sorted (from the 1-byte codes of a categorical: no per-row hashing)."""
    import numpy as np
    import pandas as pd

    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = column.cat.codes.to_numpy()
        categories = column.cat.categories
        if len(categories) <= 16:   # a few categories: one byte comparison each (np.unique hashes every row)
            return [str(categories[c]) for c in range(len(categories)) if (codes == c).any()]
        return [str(categories[c]) for c in np.unique(codes) if c >= 0]
    return sorted(str(v) for v in pd.unique(column))


def is_in(column, values):
    """Boolean numpy mask: rows of a key column whose value is one of ``values`` (codes compared one by one on a
    categorical: 1 byte a row of temporaries instead of ~11 for ``Series.isin``)."""
    import numpy as np
    import pandas as pd

    if not isinstance(column.dtype, pd.CategoricalDtype):
        return column.isin(list(values)).to_numpy(dtype=bool)
    codes = column.cat.codes.to_numpy()
    mask = np.zeros(len(codes), dtype=bool)
    for c in column.cat.categories.get_indexer(pd.Index([str(v) for v in values], dtype="str")):
        if c >= 0:
            mask |= codes == c
    return mask


def concat(tables):
    """Concatenate normalised tables (rows in the given order, fresh RangeIndex) keeping the key columns
    categorical: the categories are unioned first (a plain ``pd.concat`` of categoricals whose categories
    differ silently becomes "str", ~78 bytes a row).  Inputs need not conform; the result does."""
    import pandas as pd

    tables = [conform(t) for t in tables]
    if not tables:
        return empty_table()
    if len(tables) == 1:
        return tables[0].reset_index(drop=True)
    aligned = [t.copy(deep=False) for t in tables]
    for c in KEY_COLUMNS:
        if c not in aligned[0].columns:
            continue
        dtype = key_dtype(c, [w for t in tables for w in t[c].cat.categories])
        for t in aligned:
            if not t[c].cat.categories.equals(dtype.categories):
                t[c] = t[c].cat.set_categories(dtype.categories)   # recodes (no strings per row)
    return conform(pd.concat(aligned, ignore_index=True))


def conforms(table) -> bool:
    """True when ``table`` already has the normalised dtypes (``conform(table)`` would return it unchanged)."""
    return list(table.columns) == COLUMNS and conform(table) is table


def empty_table():
    """An empty normalised table with the right dtypes."""
    import pandas as pd

    cols = {TIME: pd.Series([], dtype="datetime64[ns, UTC]")}
    for c in (LINK, CHANNEL, QUANTITY, STAT):
        cols[c] = pd.Series([], dtype=key_dtype(c))
    cols[INTERVAL] = pd.Series([], dtype="float64")
    cols[VALUE] = pd.Series([], dtype="float64")
    cols[STATUS] = pd.Series([], dtype=key_dtype(STATUS))
    return pd.DataFrame(cols, columns=COLUMNS)
