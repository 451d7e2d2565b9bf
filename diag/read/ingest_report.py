"""What the reader found and did: ``IngestReport`` (JSON-able), ``ReadResult`` and the summary of a normalised
table (links, channels, kind, span, row step, gaps) shared by CSV, Parquet and concatenated reads."""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from diag import schema as S
from diag.read.normalise import mode_step_ns, sorted_unique

MAX_LISTED = 200   # gaps / conflicts listed in the report (counts are always complete)


@dataclass
class IngestReport:
    """What the reader found and did (JSON-able through ``to_dict``)."""

    file: str = ""
    files: list[dict] = field(default_factory=list)       # per-file reports (read_logs / folders)
    encoding: str | None = None
    separator: str | None = None
    decimal: str | None = None
    header_line: int | None = None                        # 1-based line of the column names
    layout: str | None = None                             # "wide", "long", "long-named", "parquet", "several"
    columns: dict[str, str] = field(default_factory=dict)  # column -> detected role
    ignored_columns: list[str] = field(default_factory=list)
    time: dict = field(default_factory=dict)              # columns, format, zone, marks
    guesses: list[str] = field(default_factory=list)      # what was guessed and how to override it
    method_notes: list[str] = field(default_factory=list)  # guesses the evidence could not settle (for the PDF)
    links: list[str] = field(default_factory=list)
    link_source: str | None = None                        # "column", "argument", "mapping", "file_name", "default"
    channels: list[str] = field(default_factory=list)
    quantities: list[str] = field(default_factory=list)
    kind: str | None = None                               # "sample", "stats" or "mixed"
    interval_s: float | None = None                       # typical row step (shortest over the links)
    link_intervals_s: dict[str, float] = field(default_factory=dict)
    start_utc: str | None = None
    end_utc: str | None = None
    rows_read: int = 0
    rows_kept: int = 0
    rejected: dict[str, int] = field(default_factory=dict)
    duplicates: int = 0
    conflicting_duplicates: int = 0
    conflicts: list[dict] = field(default_factory=list)    # first few conflicting rows
    out_of_order_rows: int = 0
    values: dict = field(default_factory=dict)             # read, ok, signal_lost, missing, reasons
    floors: dict = field(default_factory=dict)             # quantity -> {dbm, how}
    gap_count: int = 0
    gap_seconds: float = 0.0
    gaps: list[dict] = field(default_factory=list)         # {link_id, start_utc, end_utc, seconds}
    overlap_values_dropped: int = 0                        # read_logs: same value in two files
    warnings: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return _jsonable(dataclasses.asdict(self))


@dataclass
class ReadResult:
    table: pd.DataFrame
    report: IngestReport


def _jsonable(x: Any) -> Any:
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (np.floating, float)):
        v = float(x)
        return v if math.isfinite(v) else None
    return x



# ---------------------------------------------------------------------------------------------------------------
# summary of a table (shared by CSV, Parquet and concatenated reads)

def _iso(ns: int) -> str:
    return pd.Timestamp(int(ns), tz="UTC").isoformat().replace("+00:00", "Z")


def _link_stamps(table: pd.DataFrame, ns: np.ndarray) -> list[tuple[str, np.ndarray]]:
    """[(link id, its sorted distinct stamps)] per link, by link id.  The table is sorted by link, channel,
    quantity, stat, time, so each (channel, quantity, stat) block is already sorted and distinct; when every block
    of a link holds the same stamps (a wide log: every row has every column) the first block IS the union: no sort
    of all rows."""
    codes = [table[c].cat.codes.to_numpy() if isinstance(table[c].dtype, pd.CategoricalDtype)
             else pd.factorize(table[c])[0] for c in (S.LINK, S.CHANNEL, S.QUANTITY, S.STAT)]
    change = np.zeros(len(ns), dtype=bool)
    change[0] = True
    for c in codes:
        change[1:] |= c[1:] != c[:-1]
    starts = np.flatnonzero(change)
    del change
    ends = np.append(starts[1:], len(ns))
    by_link: dict = {}
    for a, b, k in zip(starts.tolist(), ends.tolist(), codes[0][starts].tolist()):
        by_link.setdefault(k, []).append((a, b))
    out = []
    for blocks in by_link.values():
        a0, b0 = blocks[0]
        first = ns[a0:b0]
        same = all(b - a == b0 - a0 and np.array_equal(ns[a:b], first) for a, b in blocks[1:])
        if same and bool(np.all(first[1:] > first[:-1])):
            t = first
        else:
            t = sorted_unique(np.concatenate([ns[a:b] for a, b in blocks]))
        out.append((str(table[S.LINK].iloc[a0]), t))
    return sorted(out, key=lambda item: item[0])


def summarise(table: pd.DataFrame, report: IngestReport) -> None:
    report.links = S.present(table[S.LINK]) if len(table) else []
    report.channels = S.present(table[S.CHANNEL]) if len(table) else []
    report.quantities = S.present(table[S.QUANTITY]) if len(table) else []
    if not len(table):
        report.kind = None
        return
    levels = S.is_in(table[S.QUANTITY], [S.RSL, S.XPL, S.TSL, S.XPD])
    stats = S.present(table[S.STAT][levels] if levels.any() else table[S.STAT])   # one column only
    report.kind = "stats" if S.SAMPLE not in stats else ("sample" if len(stats) == 1 else "mixed")
    ns = table[S.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
    report.start_utc, report.end_utc = _iso(ns.min()), _iso(ns.max())
    gaps = []
    steps, stepped = [], []
    for lk, t in _link_stamps(table, ns):
        if len(t) < 2:
            continue
        step = mode_step_ns(t)     # (its own diff array is freed before ours is made)
        d = np.diff(t)
        steps.append(step)
        stepped.append(lk)
        big = np.flatnonzero(d > 1.5 * step)
        for i in big:
            start = int(t[i] + step)
            gaps.append((lk, start, int(t[i + 1]), (int(t[i + 1]) - start) / 1e9))
    # typical row step: the links' common step, or the shortest when they differ (see link_intervals_s)
    report.link_intervals_s = {lk: st / 1e9 for lk, st in zip(stepped, steps)}
    report.interval_s = float(min(steps)) / 1e9 if steps else None
    report.gap_count = len(gaps)
    report.gap_seconds = float(sum(g[3] for g in gaps))
    report.gaps = [{"link_id": g[0], "start_utc": _iso(g[1]), "end_utc": _iso(g[2]), "seconds": g[3]}
                   for g in gaps[:MAX_LISTED]]
    if len(gaps) > MAX_LISTED:
        report.warnings.append(f"{len(gaps)} gaps; the first {MAX_LISTED} are listed")


PER_LINK_LISTS = ("gaps", "conflicts")   # list items carrying a "link_id" (or a "key" starting with it)


_SETS: dict[int, tuple[list, frozenset]] = {}


def _as_set(items: list) -> frozenset:
    """A set of ``items``, kept while the same list object is asked about (one file's report, hop after hop)."""
    hit = _SETS.get(id(items))
    if hit is None or hit[0] is not items:
        _SETS.clear()
        hit = _SETS[id(items)] = (items, frozenset(items))
    return hit[1]


def hop_view(report: dict, log_ids) -> dict:
    """The part of a file's report (``IngestReport.to_dict()``) that concerns some of its hops (``log_ids``: the
    link ids as the log writes them): file-level facts whole, per-link entries (``links``, ``link_intervals_s``,
    gaps, conflicts) only for those hops; ``hops_in_file`` keeps the count.  Its size does not grow with the
    number of hops in the file, so a report repeated per hop stays linear in the input (issue 15, case 10)."""
    ids = {str(i) for i in ([log_ids] if isinstance(log_ids, str) else log_ids)}
    if len(report.get("links") or []) <= 1 and not report.get("files"):
        return report    # one hop in the file: the whole report is the hop's
    out = {k: v for k, v in report.items() if k not in ("links", "link_intervals_s", "files", *PER_LINK_LISTS)}
    links = report.get("links") or []
    out["hops_in_file"] = len(links)
    out["links"] = [i for i in sorted(ids) if i in _as_set(links)]   # lookups only: O(1) per hop, not O(hops)
    intervals = report.get("link_intervals_s") or {}
    out["link_intervals_s"] = {k: intervals[k] for k in sorted(ids) if k in intervals}
    for name in PER_LINK_LISTS:
        items = report.get(name) or []
        out[name] = [g for g in items if str(g.get("link_id", str(g.get("key", "")).split("/")[0])) in ids]
    if report.get("files"):
        out["files"] = [hop_view(f, ids) for f in report["files"] if ids & set(f.get("links") or [])]
    return out
