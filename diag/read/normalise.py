"""Column recognition and normalisation: raw string columns -> the long table of ``diag.schema``.

``diag.read.ingest`` opens files and hands string columns (pyarrow arrays, one chunk at a time) to this module.  This
module parses values vectorised and assembles the sorted long table (duplicates, physical ranges, receiver floor,
intervals, row and value accounting).  What each column means is decided by ``diag.read.colplan`` (the column plan),
what
a header name says is read by ``diag.read.colnames``, time formats are detected and stamps parsed by
``diag.read.timestamps``.

Column roles come from the header names (and units) plus a look at the values:

- time: one column holding date and time (ISO 8601 with ``Z``/offset or without, day-first or month-first text,
  month names, AM/PM), separate date and time columns, or epoch seconds/milliseconds.  Stamps without an offset
  are UTC unless a time zone (IANA name) is given.  A local time that does not exist (spring-forward gap) or is
  ambiguous (autumn overlap) is never guessed: the row is counted under ``dst_nonexistent`` / ``dst_ambiguous``.
- link id and channel columns (long layout), or a quantity-name column with a value column (fully long layout).
- signal columns recognised from their names and units: receive level (RSL, Rx level, receive level, ... dBm),
  transmit level (TSL, Tx power), XPD, cross-polar level, ES/SES/UAS counters; ``min``/``avg``/``max`` in the
  name makes an interval statistic, ``15min``/``900s``/``1h`` in the name gives its interval.  What is left of a
  signal column's name after the recognised words (e.g. ``H`` in ``RSL H (dBm)``) is its channel (wide layout).

Accounting rule (rows and values):

- A *row* is one data line of the file.  Every row is either kept or rejected under exactly one reason:
  ``malformed_row`` (wrong number of fields), ``bad_time`` (time not readable), ``dst_nonexistent``,
  ``dst_ambiguous``, ``duplicate`` (an exact repeat of an earlier row with the same time and keys: dropped),
  ``conflicting_duplicate`` (same time and keys as an earlier row but other values: the first row in file order is
  kept, the later one is counted here and reported).  ``rows_read == rows_kept + sum(rejected.values())``.
- A *value* is one signal cell of a kept row.  Every value of a kept row becomes exactly one row of the table,
  with status ``ok``, ``signal_lost`` (receiver floor plateau, or a marker such as ``LOS``) or ``missing``
  (blank, a marker such as ``N/A``/``---``, text that is not a number, or a number outside the physical range of
  its quantity).  Bad cells never reject their row; they are counted in ``values.reasons``, so
  ``values.read == values.ok + values.signal_lost + values.missing == len(table)``, and the reasons add up to
  ``signal_lost + missing``.
- Counters (ES/SES/UAS) are ``stat == "sample"`` with ``interval_s`` = the interval they count over (the row
  step); statistics columns carry their interval; instantaneous samples have ``interval_s == 0``.
"""
from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyarrow as pa

from diag import schema as S
from diag.errors import InputError
from diag.read import limits
from diag.read.colnames import recognise_name
from diag.read.colplan import DEFAULT_CHANNEL, POWER_UNITS_MW, ColumnPlan, section
from diag.read.values import (
    COUNTERS,
    FLOOR_BAND_DB,
    FLOOR_RUN,
    R_FLOOR,
    R_MARK_LOST,
    R_NONE,
    R_NONPOS,
    R_RANGE,
    RANGES,
    REASON_NAMES,
    _floor_mask,
    detect_floor,
    status_of,
)

# ---------------------------------------------------------------------------------------------------------------
# assembly

@dataclass
class Series:
    """One (link, channel, quantity, stat) series gathered over all chunks."""

    link_id: str
    channel: str
    quantity: str
    stat: str
    interval_s: float | None
    times: list = field(default_factory=list)
    values: list = field(default_factory=list)
    reasons: list = field(default_factory=list)


def build_table(parts: list) -> pd.DataFrame:
    """Assemble the long table from parts [link, channel, quantity, stat, interval, ns, values, status-codes].

    The parts are sorted by key; each part's arrays are released as soon as they are copied into the table."""
    if not parts:
        return S.empty_table()
    parts.sort(key=lambda p: (p[0], p[1], p[2], p[3]))
    lens = np.array([len(p[5]) for p in parts], dtype=np.int64)
    if int(lens.sum()) == 0:
        return S.empty_table()
    cols = {}
    # values first: the (rows x columns) value array the parts are views of is released right after
    cols[S.VALUE] = pd.Series(np.concatenate([p[6] for p in parts]), dtype="float64", copy=False)
    for p in parts:
        p[6] = None
    ns = np.concatenate([p[5] for p in parts])
    for p in parts:
        p[5] = None
    cols[S.TIME] = pd.Series(pd.DatetimeIndex(ns.view("datetime64[ns]")).tz_localize("UTC"), copy=False)
    del ns
    for k, name in enumerate([S.LINK, S.CHANNEL, S.QUANTITY, S.STAT]):
        cols[name] = S.key_column_runs(name, [p[k] for p in parts], lens)   # categorical: ~1 byte a row
    cols[S.INTERVAL] = pd.Series(np.repeat(np.array([float(p[4]) for p in parts]), lens), dtype="float64")
    st = np.concatenate([p[7] for p in parts])
    for p in parts:
        p[7] = None
    # status: internal codes (order of S.STATUSES) -> codes of the sorted status categories, in place
    dtype = S.key_dtype(S.STATUS)
    target = dtype.categories.get_indexer(list(S.STATUSES))
    recoded = np.empty_like(st)
    for code, new in enumerate(target):
        recoded[st == code] = new
    del st
    cols[S.STATUS] = pd.Series(pd.Categorical.from_codes(recoded, dtype=dtype), copy=False)
    del recoded
    table = pd.DataFrame(index=pd.RangeIndex(len(cols[S.TIME])))
    for name in S.COLUMNS:      # one column at a time: no consolidation copy of the float columns
        table[name] = cols.pop(name)
    return table


# ---------------------------------------------------------------------------------------------------------------
# rows -> table

@dataclass
class RowBlock:
    """Kept rows of one chunk (time-parsed)."""

    ns: np.ndarray
    key: np.ndarray          # int32 global key id
    rownum: np.ndarray       # int64 data-row number in the file
    values: np.ndarray       # (n, m) float64
    reasons: np.ndarray      # (n, m) int8


class KeyIndex:
    """Global ids for (link, channel, quantity-name) tuples seen in the rows."""

    def __init__(self):
        self.ids: dict[tuple, int] = {}
        self.tuples: list[tuple] = []

    def encode(self, cols: list[pa.Array | None], n: int) -> np.ndarray:
        if all(c is None for c in cols):
            return np.full(n, self._id(("", "", "")), dtype=np.int32)
        combo = np.zeros(n, dtype=np.int64)
        dicts = []
        for c in cols:
            if c is None:
                dicts.append(([""], 1))
                continue
            enc = pa.compute.dictionary_encode(pa.compute.utf8_trim_whitespace(pa.compute.fill_null(c, "")))
            words = enc.dictionary.to_pylist()
            idx = enc.indices.to_numpy(zero_copy_only=False).astype(np.int64)
            combo = combo * len(words) + idx
            dicts.append((words, len(words)))
        inv, uniq = pd.factorize(combo, sort=False)
        mapped = np.empty(len(uniq), dtype=np.int32)
        for i, u in enumerate(uniq):
            parts = []
            rest = int(u)
            for words, base in reversed(dicts):
                parts.append(words[rest % base])
                rest //= base
            mapped[i] = self._id(tuple(reversed(parts)))
        return mapped[inv]

    def _id(self, t: tuple) -> int:
        if t not in self.ids:
            self.ids[t] = len(self.tuples)
            self.tuples.append(t)
        return self.ids[t]


def _convert_units(plan: ColumnPlan, vals: np.ndarray, reas: np.ndarray, report) -> None:
    """Per column, in place: linear power (W, mW, uW, nW) -> dBm; positive "dB below 1 mW" levels -> negative dBm."""
    for j, vc in enumerate(plan.values):
        v, r = vals[:, j], reas[:, j]
        ok = r == R_NONE
        if vc.unit in POWER_UNITS_MW:
            pos = ok & (v > 0)
            bad = ok & ~pos
            r[bad] = R_NONPOS
            v[bad] = np.nan
            v[pos] = 10.0 * np.log10(v[pos] * POWER_UNITS_MW[vc.unit])
            msg = (f"column '{vc.name}': power in {vc.unit} converted to dBm (10 log10 of mW); override with "
                   f"unit in [signals.\"{vc.name}\"] of a mapping file")
            if msg not in report.guesses:
                report.guesses.append(msg)
            continue
        if vc.quantity not in (S.RSL, S.XPL) or vc.negate is False:
            continue
        auto = False
        if vc.unit != "dbm" and int(ok.sum()) >= 3:
            okv = v[ok]
            auto = bool(okv.min() >= 15.0 and okv.max() <= 130.0)
        if vc.negate or auto:
            v[ok] = -v[ok]
            if auto:
                msg = (f"column '{vc.name}': every level is between +15 and +130, read as dB below 1 mW and negated "
                       f"(override with negate = false in [signals.\"{vc.name}\"] of a mapping file)")
                if msg not in report.guesses:
                    report.guesses.append(msg)


def _gather(chunks: list[RowBlock]) -> tuple[np.ndarray, ...]:
    """Concatenate the blocks' arrays into preallocated arrays, releasing each block once copied (so the blocks
    and their concatenation are never both held whole: peak = result + one block)."""
    n = sum(len(c.ns) for c in chunks)
    first = chunks[0]
    out = [np.empty((n,) + a.shape[1:], dtype=a.dtype)
           for a in (first.ns, first.key, first.rownum, first.values, first.reasons)]
    end = n
    while chunks:     # newest block first: freed from the top of the heap, so the allocator can give it back
        c = chunks.pop()
        k = len(c.ns)
        for dst, a in zip(out, (c.ns, c.key, c.rownum, c.values, c.reasons)):
            dst[end - k:end] = a
        end -= k
        del c
    return tuple(out)


def _channel_name(t: tuple, vc, q, st, ch, plan: ColumnPlan) -> str:
    """The channel a value column of key tuple ``t`` goes to: the key's channel cell, else the column's channel,
    else the default; two columns of one quantity and statistic on a named channel get ``channel-columnchannel``."""
    channel = t[1] or (ch if ch else None) or DEFAULT_CHANNEL
    if t[1] and ch and vc.quantity is not None and len(plan.values) > 1 and \
            sum(1 for v in plan.values if v.quantity == q and v.stat == st) > 1:
        channel = f"{t[1]}-{ch}"
    return channel


def _canonical_keys(key: np.ndarray, keys: KeyIndex, kinfo: list, plan: ColumnPlan, default_link: str) -> np.ndarray:
    """``key`` with every code replaced by the first code whose tuple resolves to the same series (link after
    its default; per value column the channel, quantity and statistic it goes to)."""
    present = np.unique(key)
    first: dict = {}
    remap = np.arange(len(keys.tuples), dtype=key.dtype)
    for k in present.tolist():
        t, info = keys.tuples[k], kinfo[k]
        cols = []
        for vc in plan.values:
            if vc.quantity is None:
                if info is None:
                    cols = None
                    break
                q, st, iv, ch = info.quantity, info.stat, info.interval_s, info.channel
            else:
                q, st, iv, ch = vc.quantity, vc.stat, vc.interval_s, vc.channel
            cols.append((_channel_name(t, vc, q, st, ch, plan), q, st, iv))
        resolved = (t[0] or default_link, tuple(cols)) if cols is not None else ("raw", k)
        remap[k] = first.setdefault(resolved, k)
    if (remap[present] == present).all():
        return key
    return remap[key]


def assemble(chunks: list[RowBlock], keys: KeyIndex, plan: ColumnPlan, report, rejected: dict,
             default_link: str, mapping: dict, header_line: int) -> pd.DataFrame:
    """Kept rows of all blocks -> the sorted long table.

    Drops exact duplicates and later conflicting duplicates (counted in ``rejected``), counts out-of-order rows,
    applies physical ranges and the receiver floor, sets intervals, and fills ``report`` (an
    ``diag.read.ingest.IngestReport``: duplicates, conflicts, floors, values, guesses, warnings)."""
    if not chunks or sum(len(c.ns) for c in chunks) == 0:
        report.values = {"read": 0, "ok": 0, "signal_lost": 0, "missing": 0, "reasons": {}}
        return S.empty_table()
    ns, key, rownum, vals, reas = _gather(chunks)
    # quantity-name layout: rows whose name is not a known quantity are rejected
    kinfo = []
    for t in keys.tuples:
        qn = t[2]
        info = recognise_name(qn) if plan.qname_col else None
        kinfo.append(info)
    if plan.qname_col:
        unknown = np.array([i is None or i.quantity is None for i in kinfo], dtype=bool)
        bad = unknown[key]
        rejected["unknown_quantity"] += int(bad.sum())
        if bad.any():
            names = sorted({keys.tuples[k][2] for k in np.unique(key[bad])})[:10]
            report.warnings.append(f"rows with unrecognised quantity names skipped: {names} (map them with "
                                   f"[signals] in a mapping file)")
            ns, key, rownum, vals, reas = ns[~bad], key[~bad], rownum[~bad], vals[~bad], reas[~bad]
    # --only-listed (the mapping's [link] only): rows of hops not in the links table are rejected and counted
    only = section(mapping, "link").get("only")
    if only is not None:
        listed = {str(x) for x in only}
        unlisted = np.array([(t[0] or default_link) not in listed for t in keys.tuples], dtype=bool)
        bad = unlisted[key]
        if bad.any():
            rejected["unlisted_hop"] += int(bad.sum())
            names = sorted({keys.tuples[k][0] or default_link for k in np.unique(key[bad])})
            report.warnings.append(f"{int(bad.sum())} rows of hop(s) not in the links table skipped (unlisted_hop): "
                                   f"{names[:10]}{' ...' if len(names) > 10 else ''}")
            ns, key, rownum, vals, reas = ns[~bad], key[~bad], rownum[~bad], vals[~bad], reas[~bad]
    # keys that name the same series once the defaults are applied (a row with an empty channel cell on a
    # hop whose other rows say "H") are one key: sorted, de-duplicated and counted together
    key = _canonical_keys(key, keys, kinfo, plan, default_link)
    # out-of-order rows (file order, per key)
    placed = rownum >= 0     # rows re-read after a field-count mismatch have no known place (rownum -1)
    if placed.all() and bool(np.all(key[1:] >= key[:-1])):   # keys already grouped in file order: no sort copies
        report.out_of_order_rows = int(((key[1:] == key[:-1]) & (ns[1:] < ns[:-1])).sum())
    else:
        fo = np.flatnonzero(placed)[np.argsort(key[placed], kind="stable")]
        same = key[fo][1:] == key[fo][:-1]
        report.out_of_order_rows = int((same & (np.diff(ns[fo]) < 0)).sum())
        del fo, same
    del placed
    if report.out_of_order_rows:
        report.warnings.append(f"{report.out_of_order_rows} rows were out of time order (sorted)")
    # sort by key then time (stable: file order among equal stamps)
    dk = np.diff(key)
    if not (np.all(dk >= 0) and np.all((dk > 0) | (np.diff(ns) >= 0))):   # already in order: no copies
        order = np.lexsort((ns, key))
        ns, key, rownum, vals, reas = ns[order], key[order], rownum[order], vals[order], reas[order]
        del order
    del dk
    dup = np.zeros(len(ns), dtype=bool)
    dup[1:] = (key[1:] == key[:-1]) & (ns[1:] == ns[:-1])
    if dup.any():
        first = np.flatnonzero(~dup)
        grp = np.maximum.accumulate(np.where(~dup, np.arange(len(ns)), 0))
        v0, r0 = vals[grp], reas[grp]
        eq = ((vals == v0) | (np.isnan(vals) & np.isnan(v0))) & (reas == r0)
        exact = dup & eq.all(axis=1)
        conflict = dup & ~exact
        report.duplicates = int(exact.sum())
        report.conflicting_duplicates = int(conflict.sum())
        rejected["duplicate"] += report.duplicates
        rejected["conflicting_duplicate"] += report.conflicting_duplicates
        for i in np.flatnonzero(conflict)[:20]:
            g = grp[i]
            report.conflicts.append({
                "time_utc": pd.Timestamp(int(ns[i]), tz="UTC").isoformat(),
                "key": "/".join(x for x in keys.tuples[key[i]] if x) or default_link,
                "kept_line": int(header_line + 1 + rownum[g]) if rownum[g] >= 0 else None,
                "dropped_line": int(header_line + 1 + rownum[i]) if rownum[i] >= 0 else None,
                "kept": [None if np.isnan(x) else float(x) for x in vals[g]],
                "dropped": [None if np.isnan(x) else float(x) for x in vals[i]]})
        if report.conflicting_duplicates:
            report.warnings.append(f"{report.conflicting_duplicates} rows repeat a time with other values; the first "
                                   f"row in file order was kept (see conflicts)")
        del first
        keepm = ~dup
        ns, key, rownum, vals, reas = ns[keepm], key[keepm], rownum[keepm], vals[keepm], reas[keepm]
    if len(key) == 0:
        report.values = {"read": 0, "ok": 0, "signal_lost": 0, "missing": 0, "reasons": {}}
        return S.empty_table()
    _convert_units(plan, vals, reas, report)
    # group boundaries
    bounds = np.flatnonzero(np.diff(key)) + 1
    starts = np.concatenate(([0], bounds))
    ends = np.concatenate((bounds, [len(key)]))
    # per column quantity (fixed) or per key (quantity-name layout)
    fsec_floor = section(mapping, "floor")
    iv_default = mapping.get("interval_s")
    series = []   # (link, channel, quantity, stat, interval|None, ns, values, reasons)
    for s, e in zip(starts, ends):
        t = keys.tuples[key[s]]
        link = t[0] or default_link
        for j, vc in enumerate(plan.values):
            if vc.quantity is None:
                info = kinfo[key[s]]
                q, st, iv, ch = info.quantity, info.stat, info.interval_s, info.channel
            else:
                q, st, iv, ch = vc.quantity, vc.stat, vc.interval_s, vc.channel
            channel = _channel_name(t, vc, q, st, ch, plan)
            series.append([link, channel, q, st, iv if iv else (float(iv_default) if iv_default else None),
                           ns[s:e], vals[s:e, j], reas[s:e, j]])   # views: edited in place below
    # channels per hop (wide layouts name channels in the column names): bounded (diag.read.limits)
    per_hop: dict[str, set] = {}
    for sr in series:
        per_hop.setdefault(sr[0], set()).add(sr[1])
    for hop, chans in per_hop.items():
        if len(chans) > limits.MAX_CHANNELS_PER_HOP:
            raise InputError(f"hop {hop!r} has {len(chans)} channels, more than the limit of "
                             f"{limits.MAX_CHANNELS_PER_HOP} (DIAG_MAX_CHANNELS_PER_HOP)", path=report.file)
    # physical range
    for sr in series:
        lo, hi = RANGES.get(sr[2], (-np.inf, np.inf))
        v, r = sr[6], sr[7]
        out = (r == R_NONE) & ((v < lo) | (v > hi))
        r[out] = R_RANGE
        v[out] = np.nan
    # receiver floor per level quantity
    floor_cfg = fsec_floor.get("dbm")
    for q in (S.RSL, S.XPL):
        group = [sr for sr in series if sr[2] == q]
        if not group:
            continue
        if isinstance(floor_cfg, str) and floor_cfg.lower() == "none":
            continue
        if floor_cfg is not None and not isinstance(floor_cfg, str):
            fl, how = float(floor_cfg), "given in the mapping"
            mask_fn = lambda v: v <= fl + 1e-6  # noqa: E731
        else:
            fl, how = detect_floor([sr[6] for sr in group])
            if fl is None:
                continue
            mask_fn = functools.partial(_floor_mask, floor_dbm=fl)
            report.guesses.append(f"{q}: readings at {fl:g} dBm (and flat runs of >= {FLOOR_RUN} identical readings "
                                  f"within {FLOOR_BAND_DB:g} dB above it) taken as the receiver floor (signal lost): "
                                  f"{how}; override with --floor-dbm VALUE or --floor-dbm none")
        n_floor = 0
        for sr in group:
            at = (sr[7] == R_NONE) & mask_fn(sr[6])
            sr[7][at] = R_FLOOR
            sr[6][at] = np.nan
            n_floor += int(at.sum())
        report.floors[q] = {"dbm": fl, "how": how, "values": n_floor}
    # intervals and end-marked stamps
    parts = []
    stats_kind = False
    for link, channel, q, st, iv, t, v, r in series:
        step = _step(t)
        if st != S.SAMPLE or q in COUNTERS:
            if iv is None:
                iv = step if step else 0.0
                if st != S.SAMPLE and iv:
                    msg = (f"statistics interval taken from the row step: {iv:g} s (override with --interval-s)")
                    if msg not in report.guesses:
                        report.guesses.append(msg)
            stats_kind = stats_kind or st != S.SAMPLE
        else:
            iv = 0.0
        if plan.time.marks_end:
            shift = iv if iv else (step or 0.0)
            t = t - np.int64(round(shift * 1e9))
        parts.append([link, channel, q, st, float(iv), t, v, r])
    # value accounting (reason codes -> counts; then the codes are replaced by the status codes)
    # drop every name still bound to a view of the big arrays (loop variables too), so build_table can free
    # each input array as soon as it has been copied into the table
    del ns, key, rownum, vals, reas, series
    sr = group = t = v = r = None  # noqa: F841
    counts = np.zeros(len(REASON_NAMES) + 1, dtype=np.int64)
    for p in parts:
        counts += np.bincount(p[7], minlength=len(counts))[:len(counts)]
        p[7] = status_of(p[7])
    reasons = {REASON_NAMES[c]: int(counts[c]) for c in REASON_NAMES if counts[c]}
    lost = int(counts[R_MARK_LOST] + counts[R_FLOOR])
    report.values = {"read": int(counts.sum()), "ok": int(counts[R_NONE]), "signal_lost": lost,
                     "missing": int(counts.sum() - counts[R_NONE]) - lost, "reasons": reasons}
    return build_table(parts)


def sorted_unique(a: np.ndarray) -> np.ndarray:
    """np.unique for int64 stamps, without hashing (the arrays are mostly sorted already)."""
    if len(a) == 0:
        return a
    s = a if bool(np.all(a[1:] >= a[:-1])) else np.sort(a, kind="stable")
    keep = np.empty(len(s), dtype=bool)
    keep[0] = True
    np.not_equal(s[1:], s[:-1], out=keep[1:])
    return s[keep]


def mode_step_ns(t: np.ndarray) -> float | None:
    """The most common step between sorted unique stamps (ties: the shortest); robust to gaps and jitter-free logs."""
    if len(t) < 2:
        return None
    d = np.diff(t)
    d.sort()                                   # in place: no second copy
    d = d[np.searchsorted(d, 0, side="right"):]   # the positive steps (a view)
    if not d.size:
        return None
    starts = np.flatnonzero(np.concatenate(([True], d[1:] != d[:-1])))
    runs = np.diff(np.concatenate((starts, [len(d)])))
    return float(d[starts[int(np.argmax(runs))]])


def _step(ns: np.ndarray) -> float | None:
    st = mode_step_ns(sorted_unique(ns))
    return None if st is None else st / 1e9
