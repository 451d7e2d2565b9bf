"""Many hops at once on a Dask cluster: read, group by hop, analyse each hop in its own task, rank the network.

``run(inputs, links, out_dir=...)`` is the whole job.  It starts a local Dask cluster (``workers`` processes with one
thread each) or connects to an existing scheduler (``scheduler="tcp://host:port"``), then

1. submits one *read* task per input file; each task parses its file (``diag.read.ingest.read_log``), gives every row
its
   hop (by the ``link_id`` in the data, else by a link id contained in the file name, else the links table's only
   row) and keeps the table on the worker, split by hop.  The driver receives only the list of hops in each file
   and the reader's row accounting.
2. submits one *hop* task per hop; it gathers that hop's rows from the files that hold them (worker to worker),
   runs ``diag.pipeline.analyze_link`` and renders the hop's outputs (``diag.report.write_outputs``) into bytes.
   The driver writes each hop's files to ``OUT/hops/<hop>/`` as the hop finishes and keeps only a slim
   ``LinkResult`` (without the per-sample ``series``), so a network run never holds every hop's data in the driver.
3. writes the network files: ``network_ranking.csv`` (hops ranked by outage minutes, failed hops listed with their
   error), ``network_report.pdf`` (one page), and ``events.csv``, ``outage_summary.csv``, ``outage_by_cause.csv``
   holding every hop (the per-hop files concatenated in links-table order).

A Parquet store written by ``ingest --out`` (``diag.read.store``) may be given instead of (or besides) log files: then
each hop task reads only its own hop's partition from the store, and no data passes through the driver at all.

A hop that cannot be analysed (a file that cannot be read, no row in the links table, no data, an analysis error)
becomes a ``LinkResult`` with ``error`` set and a row in the ranking; it never stops the other hops.
"""
from __future__ import annotations

import logging
import math
import os
import shutil
import tempfile
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd

from diag import schema
from diag.errors import InputError, one_line_warnings
from diag.links import Link
from diag.read import store
from diag.read.hops import NAMED_SOURCES, assign_hops, hop_of_file_name
from diag.read.ingest import expand_paths
from diag.read.ingest_report import hop_view
from diag.results import LinkResult

log = logging.getLogger(__name__)

AnalyzeFn = Callable[..., LinkResult]          # analyze(table, link, *, config=None, ingest=None) -> LinkResult
WriterFn = Callable[[list, Path], list]         # write(results, out_dir) -> list[Path]
ReaderFn = Callable[..., tuple]                 # read(path, *, tz=None, mapping=None) -> (table, report dict)
ProgressFn = Callable[[str, int, int, str], None]   # progress(stage "read"|"analyse", done, total, message)

RANKING_COLUMNS = ["rank", "link_id", "outage_min_lo", "outage_min_hi", "exact", "below_threshold_min_lo",
                   "below_threshold_min_hi", "availability_pct_lo", "availability_pct_hi", "objective_pct",
                   "meets_objective", "main_cause", "main_cause_min_lo", "main_cause_min_hi", "events", "observed_h",
                   "no_data_h", "folder", "error"]
COMBINED_FILES = ("events.csv", "outage_summary.csv", "outage_by_cause.csv")
_SORT = [schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.TIME]
_RESERVED = {"CON", "PRN", "AUX", "NUL", *(f"COM{i}" for i in range(1, 10)), *(f"LPT{i}" for i in range(1, 10))}


# --- results ----------------------------------------------------------------------------------------------------
@dataclass
class BatchResult:
    """What a network run produced.

    ``results``  one slim ``LinkResult`` per hop (``series`` emptied), in links-table order, then hops found only in
                 the data; a failed hop has ``error`` set.
    ``ranking``  the network table (``RANKING_COLUMNS``), worst hop first.
    ``files``    every file written.
    ``reads``    per input file: ``{"file", "hops", "rows", "error", "report"}``.
    """

    results: list[LinkResult]
    ranking: pd.DataFrame
    files: list[Path] = field(default_factory=list)
    reads: list[dict] = field(default_factory=list)


@dataclass
class _FilePiece:
    """One parsed file, kept on the worker that read it: its rows split by hop."""

    name: str
    tables: dict[str, pd.DataFrame]
    report: dict
    error: str | None = None
    hop_of_error: str | None = None


@dataclass
class _HopOutcome:
    result: LinkResult
    files: dict[str, bytes]


# --- small helpers ----------------------------------------------------------------------------------------------
def safe_name(link_id: str) -> str:
    """A folder name for a hop id: ``diag.report.safe_filename`` (letters, digits, ``._-``; no leading dot or dash),
    with Windows' reserved device names (CON, NUL, COM1 ...) prefixed by ``_``."""
    from diag.report.tables import safe_filename

    name = safe_filename(str(link_id), default="hop")
    if name.split(".")[0].upper() in _RESERVED:
        name = "_" + name
    return name


def _folder_names(link_ids: Iterable[str]) -> dict[str, str]:
    """Distinct sanitised folder names (``-2``, ``-3`` ... on collisions, case-insensitively)."""
    used: set[str] = set()
    out: dict[str, str] = {}
    for link_id in link_ids:
        base = safe_name(link_id)
        name, k = base, 2
        while name.lower() in used:
            name, k = f"{base}-{k}", k + 1
        used.add(name.lower())
        out[link_id] = name
    return out


def _one_line(exc: BaseException) -> str:
    if isinstance(exc, InputError):
        return exc.one_line()
    text = " ".join(str(exc).split())[:300]
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


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




def _default_reader(path: str, *, tz=None, mapping=None) -> tuple[pd.DataFrame, dict]:
    from diag.read.ingest import read_log

    result = read_log(path, tz=tz, mapping=mapping)
    report = result.report.to_dict() if hasattr(result.report, "to_dict") else dict(result.report or {})
    return result.table, report


def _assign_hops(table: pd.DataFrame, links: list[Link], file_name: str, report: dict | None = None) -> pd.DataFrame:
    """Give each row its hop by the rule ``diag.pipeline.analyze_files`` uses (``diag.read.hops.assign_hops``);
    rows of a hop the links table lacks keep their id: that hop then fails with the reason."""
    ids = [str(x) for x in pd.unique(table[schema.LINK])]
    assigned = assign_hops(ids, links, file_name=file_name,
                           names_hop=(report or {}).get("link_source", "column") in NAMED_SOURCES,
                           keep_unlisted=True)
    if report is not None and assigned.warnings:
        report.setdefault("warnings", []).extend(assigned.warnings)
    renames = {k: v for k, v in assigned.hops.items() if k != v}
    if not renames:
        return table
    links_now = table[schema.LINK].astype("str").map(lambda v: renames.get(v, v))
    return schema.conform(table.assign(**{schema.LINK: links_now.to_numpy(dtype=object)}))


def _sorted(table: pd.DataFrame) -> pd.DataFrame:
    return table.sort_values(_SORT, kind="mergesort").reset_index(drop=True)


def hop_table(tables: Iterable[pd.DataFrame]) -> tuple[pd.DataFrame, int]:
    """One hop's normalised table from its pieces (in input order), sorted as ``diag.schema`` prescribes, and the
    number of values dropped because an earlier file already held them (same rule as ``diag.read.ingest.read_logs``:
    same link, channel, quantity, stat and time -> the first file's value is kept)."""
    parts = [t for t in tables if t is not None and len(t)]
    if not parts:
        return schema.empty_table(), 0
    if len(parts) == 1:
        return _sorted(schema.conform(parts[0])), 0
    table = _sorted(schema.concat(parts))   # keeps the key columns categorical (diag.schema)
    dup = table.duplicated(subset=_SORT, keep="first").to_numpy()
    if dup.any():
        table = table[~dup].reset_index(drop=True)
    return table, int(dup.sum())


# --- worker tasks -----------------------------------------------------------------------------------------------
@one_line_warnings   # worker warnings: one line each, no Python source lines (issue 15 case 16)
def _read_task(path: str, links: list[Link], tz, mapping, reader: ReaderFn | None) -> _FilePiece:
    name = Path(path).name
    try:
        table, report = (reader or _default_reader)(path, tz=tz, mapping=mapping)
        if table.empty:
            raise InputError("no usable rows in the log", path=name)
        table = _assign_hops(table, links, name, report)
        tables = {str(k): _sorted(g) for k, g in table.groupby(schema.LINK, sort=True, observed=True)}
        return _FilePiece(name=name, tables=tables, report=report)
    except Exception as exc:  # one bad file must never stop the run
        try:
            hop = hop_of_file_name(links, name) or (links[0].link_id if len(links) == 1 else None)
        except InputError:
            hop = None
        return _FilePiece(name=name, tables={}, report={}, error=_one_line(exc), hop_of_error=hop)


def _file_meta(piece: _FilePiece) -> dict:
    return {"file": piece.name, "hops": {k: len(v) for k, v in piece.tables.items()},
            "rows": int(sum(len(v) for v in piece.tables.values())), "error": piece.error,
            "hop_of_error": piece.hop_of_error, "report": piece.report}


def failed_result(link: Link, error: str) -> LinkResult:
    """The ``LinkResult`` of a hop that could not be analysed."""
    return LinkResult(link=link, series={}, events=pd.DataFrame(columns=schema.EVENT_COLUMNS), error=error)


def _placeholder_link(link_id: str) -> Link:
    nan = math.nan
    return Link(link_id=link_id, frequency_ghz=nan, length_km=nan, polarization="", threshold_dbm=nan)


def write_tables(results: list[LinkResult], out_dir: Path) -> list[Path]:
    """``diag.report.write_outputs`` without the PDF: events.csv, findings.json, outage_summary.csv,
    outage_by_cause.csv, byte for byte the same files (for networks where a PDF per hop is not wanted)."""
    from diag.report import events_csv_bytes, findings_json_bytes, outage_by_cause_csv_bytes, outage_summary_csv_bytes

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    written = []
    for name, make in (("events.csv", events_csv_bytes), ("findings.json", findings_json_bytes),
                       ("outage_summary.csv", outage_summary_csv_bytes),
                       ("outage_by_cause.csv", outage_by_cause_csv_bytes)):
        (out / name).write_bytes(make(results))
        written.append(out / name)
    return written


def _render(result: LinkResult, writer: WriterFn | None) -> dict[str, bytes]:
    if writer is None:
        from diag.report import write_outputs as writer
    with tempfile.TemporaryDirectory(prefix="diag-hop-") as tmp:
        writer([result], Path(tmp))
        return {str(p.relative_to(tmp)).replace(os.sep, "/"): p.read_bytes()
                for p in sorted(Path(tmp).rglob("*")) if p.is_file()}


def _store_part(store_path: str, store_id: str, hop: str) -> pd.DataFrame:
    from diag.read.store import read_store

    table = read_store(store_path, link_id=store_id)
    if store_id != hop:
        table = schema.conform(table.assign(**{schema.LINK: hop}))
    return table


@one_line_warnings
def _hop_task(link_id: str, link: Link | None, pieces: list, store_refs: list, config,
              analyze: AnalyzeFn | None, writer: WriterFn | None, keep_series: bool) -> _HopOutcome:
    """Analyse one hop on a worker and render its outputs; never raises.

    ``pieces``: the parsed files holding the hop; ``store_refs``: ``(store folder, hop id in the store)`` pairs,
    read here, so a hop kept in a store never passes through the driver."""
    if link is None:
        return _HopOutcome(failed_result(_placeholder_link(link_id), f"hop {link_id!r} has no row in the links "
                                         "table; add one"), {})
    bad = [p for p in pieces if p.error]
    if bad:
        return _HopOutcome(failed_result(link, "; ".join(p.error if p.name in p.error else f"{p.name}: {p.error}"
                                                         for p in bad)), {})
    try:
        parts = [p.tables.get(link_id) for p in pieces]
        parts += [_store_part(path, sid, link_id) for path, sid in store_refs]
        table, dropped = hop_table(parts)
        ingest = {"files": [hop_view(p.report, link_id) for p in pieces]   # the hop's part: O(1) per hop
                  + [{"file": path, "layout": "store", "store_link_id": sid} for path, sid in store_refs]}
        if dropped:
            ingest["overlap_values_dropped"] = dropped
        del parts
        if table.empty:
            return _HopOutcome(failed_result(link, "no data for this hop in the inputs"), {})
        if analyze is None:
            from diag.pipeline import analyze_link as analyze
        result = analyze(table, link, config=config, ingest=ingest)
        del table
    except Exception as exc:
        return _HopOutcome(failed_result(link, _one_line(exc)), {})
    files: dict[str, bytes] = {}
    if result.error is None:
        try:
            files = _render(result, writer)
        except Exception as exc:
            result.error = f"writing outputs: {_one_line(exc)}"
    if not keep_series:
        result = replace(result, series={})
    return _HopOutcome(result, files)


# --- network table and page -------------------------------------------------------------------------------------
def _num(mapping, key: str) -> float:
    try:
        return float(mapping.get(key))
    except (TypeError, ValueError):
        return math.nan


def bounds(mapping, key: str) -> tuple[float, float]:
    """(low, high) of an outage figure: ``key_lo``/``key_hi`` when the accounting gives bounds (coarse logs,
    15-min statistics; see ``diag.analysis.outage``), else the exact ``key`` twice."""
    exact, lo, hi = _num(mapping, key), _num(mapping, f"{key}_lo"), _num(mapping, f"{key}_hi")
    if math.isfinite(lo) and math.isfinite(hi):
        return lo, hi
    return exact, exact


def _cause_minutes(by_cause: pd.DataFrame | None, cause: str) -> tuple[float, float]:
    if by_cause is None or not len(by_cause) or "cause" not in by_cause:
        return 0.0, 0.0
    lo = hi = 0.0
    for _, row in by_cause[by_cause["cause"] == cause].iterrows():
        a, b = bounds(row, "unavailable_s")
        lo += a if math.isfinite(a) else 0.0
        hi += b if math.isfinite(b) else 0.0
    return lo / 60, hi / 60


def network_ranking(results: Sequence[LinkResult], folders: dict[str, str] | None = None) -> pd.DataFrame:
    """The network table: one row per hop, worst first.

    Outage = unavailable time (ITU-T G.826 sense) in minutes.  1-s logs give it exactly (``exact``; low = high);
    coarser logs and 15-min statistics give bounds (``diag.analysis.outage``).  Hops are ranked by the upper bound
    (worst
    case), then the lower bound, then minutes below threshold (upper bound); no number between the bounds is made
    up.  Hops that could not be analysed come last, with their error and no rank."""
    rows = []
    for res in results:
        link_id = res.link.link_id
        row = {"link_id": link_id, "folder": (folders or {}).get(link_id, ""), "error": res.error or ""}
        if res.error is None and res.outage is not None:
            s = res.outage.summary or {}
            minutes = {c: _cause_minutes(res.outage.by_cause, c) for c in schema.CAUSES}
            main = max(minutes, key=lambda c: (minutes[c][1], minutes[c][0]))
            if minutes[main][1] <= 0:
                main = ""
            lo, hi = bounds(s, "unavailable_s")
            blo, bhi = bounds(s, "below_threshold_s")
            alo, ahi = bounds(s, "availability_pct")
            meets = s.get("meets_objective")
            row.update(outage_min_lo=lo / 60, outage_min_hi=hi / 60,
                       exact=bool(math.isfinite(_num(s, "unavailable_s")) and lo == hi),
                       below_threshold_min_lo=blo / 60, below_threshold_min_hi=bhi / 60,
                       availability_pct_lo=alo, availability_pct_hi=ahi, objective_pct=_num(s, "objective_pct"),
                       meets_objective="" if meets is None or (isinstance(meets, float) and math.isnan(meets))
                       else str(meets),
                       main_cause=main, main_cause_min_lo=minutes[main][0] if main else 0.0,
                       main_cause_min_hi=minutes[main][1] if main else 0.0, events=int(len(res.events)),
                       observed_h=_num(s, "observed_s") / 3600, no_data_h=_num(s, "no_data_s") / 3600)
        elif res.error is None:
            row["error"] = "analysis returned no outage accounting"
        rows.append(row)
    table = pd.DataFrame(rows, columns=[c for c in RANKING_COLUMNS if c != "rank"])
    ok = table["error"] == ""
    good = table[ok].sort_values(["outage_min_hi", "outage_min_lo", "below_threshold_min_hi", "link_id"],
                                 ascending=[False, False, False, True], kind="mergesort", na_position="last")
    good.insert(0, "rank", np.arange(1, len(good) + 1))
    bad = table[~ok].sort_values("link_id", kind="mergesort")
    bad.insert(0, "rank", pd.NA)
    out = pd.concat([good, bad], ignore_index=True) if len(bad) else good.reset_index(drop=True)
    out["rank"] = out["rank"].astype("Int64")
    return out[RANKING_COLUMNS]


def _spreadsheet_safe(table: pd.DataFrame) -> pd.DataFrame:
    """Text cells a spreadsheet would run as a formula get a leading apostrophe (``diag.report.safe_cell``)."""
    from diag.report.tables import safe_cell

    out = table.copy()
    for col in ("link_id", "folder", "main_cause", "error", "meets_objective"):
        out[col] = out[col].map(safe_cell).astype(object)
    return out


_FALLBACK_COLOURS = {"rain": "#2f6db5", "multipath": "#d9822b", "refractive": "#6a9f3b", "level_shift": "#8e5ea2",
                     "signal_loss": "#c23b3b", "unknown": "#8c8c8c"}


def _cause_colours() -> tuple[dict[str, str], dict[str, str]]:
    """Cause colours and labels from the report's palette (``diag.report.style``), with a fallback."""
    try:
        from diag.report import style
    except ImportError:
        return dict(_FALLBACK_COLOURS), {}
    palette = getattr(style, "CAUSE_COLORS", None)
    labels = getattr(style, "CAUSE_LABELS", None)
    return ({**_FALLBACK_COLOURS, **(palette if isinstance(palette, dict) else {})},
            dict(labels) if isinstance(labels, dict) else {})


def _short(text: str, width: int) -> str:
    """Shorten in the middle so hop ids that differ only at the end stay distinct."""
    text = str(text)
    if len(text) <= width:
        return text
    head = (width - 2) // 2
    return f"{text[:head]}..{text[-(width - 2 - head):]}"


def write_network_page(results: Sequence[LinkResult], ranking: pd.DataFrame, path: Path, *, top: int = 20) -> Path:
    """One A4-landscape PDF page: outage minutes by cause for the worst hops, the ranking, and failed hops."""
    import matplotlib

    matplotlib.use("Agg", force=False)
    from matplotlib.backends.backend_pdf import PdfPages
    from matplotlib.figure import Figure

    colours, names = _cause_colours()
    ok = ranking[ranking["error"] == ""].head(top)
    failed = ranking[ranking["error"] != ""]
    by_id = {r.link.link_id: r for r in results}
    fig = Figure(figsize=(11.69, 8.27))
    fig.text(0.04, 0.955, "Network outage ranking", fontsize=16, weight="bold")
    fig.text(0.04, 0.925, f"{len(ranking)} hops: {int((ranking['error'] == '').sum())} analysed, {len(failed)} "
             "could not be analysed.  Outage = unavailable time (ITU-T G.826 sense), by cause.", fontsize=9)
    ax = fig.add_axes((0.17, 0.57, 0.79, 0.31))
    labels = list(ok["link_id"])[::-1]
    shown = [f"{_short(h, 30)} " for h in labels]
    left = np.zeros(len(labels))
    for cause in schema.CAUSES:
        minutes = np.asarray([_cause_minutes(by_id[h].outage.by_cause if h in by_id and by_id[h].outage else None,
                                             cause)[1] for h in labels])
        if labels and minutes.sum() > 0:
            ax.barh(range(len(labels)), minutes, left=left, color=colours.get(cause, "#888888"),
                    label=names.get(cause, cause))
            left += minutes
    ax.set_yticks(range(len(labels)), shown)
    ax.set_ylim(-0.6, max(len(labels), 1) - 0.4)
    ax.set_xlabel("outage [min] (upper bound where the log gives bounds)")
    ax.set_title(f"Worst {len(labels)} hops", fontsize=10, loc="left")
    ax.tick_params(axis="y", labelsize=6 if len(labels) > 12 else 7)
    if left.sum() > 0:
        ax.legend(fontsize=7, loc="lower right")
    else:
        ax.text(0.5, 0.5, "no outage on any analysed hop", transform=ax.transAxes, ha="center", fontsize=9)
    lines = ["rank  hop                         outage min       avail. %   objective  main cause"]
    for row in ok.itertuples():
        minutes = f"{row.outage_min_hi:.1f}" if row.exact else f"{row.outage_min_lo:.0f}-{row.outage_min_hi:.0f}"
        avail = ("" if pd.isna(row.availability_pct_lo) else f"{row.availability_pct_lo:.3f}" if row.exact
                 else f">={row.availability_pct_lo:.3f}")
        met = {"yes": "met", "no": "NOT met", "undetermined": "unclear"}.get(str(row.meets_objective), "-")
        lines.append(f"{int(row.rank):>4}  {_short(row.link_id, 26):<26}  {minutes:>12}  {avail:>12}  "
                     f"{met:>9}  {names.get(row.main_cause, row.main_cause)}")
    if len(ok) and not ok["exact"].all():
        lines.append("a-b: lower and upper bound (15-min statistics or coarse logs); ranked by the upper bound")
    fig.text(0.04, 0.50, "\n".join(lines), fontsize=6.5, family="monospace", va="top")
    if len(failed):
        text = ["Hops not analysed (fix and rerun):"] + [f"  {_short(r.link_id, 26)}: {_short(r.error, 140)}"
                                                      for r in failed.head(8).itertuples()]
        if len(failed) > 8:
            text.append(f"  ... and {len(failed) - 8} more (network_ranking.csv)")
        fig.text(0.04, 0.19, "\n".join(text), fontsize=6.5, family="monospace", va="top", color="#a02020")
    fig.text(0.04, 0.03, "Per-hop outputs: hops/<hop>/.  Advice that involves work on towers or near radiating "
             "antennas: follow local codes for work at height and RF exposure limits.", fontsize=7)
    for text_obj in fig.findobj(matplotlib.text.Text):   # hop ids are user text: a "$" must print, not typeset
        text_obj.set_parse_math(False)

    def build(tmp: Path) -> None:
        with PdfPages(tmp, metadata={"Title": "Network outage ranking", "Creator": "diag"}) as pdf:
            pdf.savefig(fig)

    from diag.outputs import replace_file

    return replace_file(Path(path), build)   # made beside, renamed into place: never a truncated page


# --- the run ----------------------------------------------------------------------------------------------------
def _open_client(workers: int | None, scheduler: str | None, connect_timeout_s: float = 10.0):
    from distributed import Client, LocalCluster

    if scheduler:
        try:
            return Client(scheduler, timeout=f"{connect_timeout_s}s"), None
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError(f"cannot reach the Dask scheduler at {scheduler}: {_one_line(exc)}") from None
    n = int(workers or os.cpu_count() or 1)
    if n < 1:
        raise InputError(f"--workers must be at least 1, not {n}")
    cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=":0",
                           silence_logs=logging.ERROR)
    return Client(cluster), cluster


class _quiet_dask:
    """Dask's own start/stop chatter (INFO/WARNING lines such as "Worker process still alive ... killing" while a
    busy local cluster shuts down) is kept off the user's terminal unless ``diag``'s logging is at DEBUG."""

    def __enter__(self):
        import distributed  # noqa: F401  (creates its loggers)

        self._saved = {}
        if not log.isEnabledFor(logging.DEBUG):
            names = ["distributed"] + [n for n in logging.root.manager.loggerDict if n.startswith("distributed.")]
            for name in names:
                logger = logging.getLogger(name)
                self._saved[name] = logger.level
                logger.setLevel(logging.ERROR)
        return self

    def __exit__(self, *exc):
        for name, level in self._saved.items():
            logging.getLogger(name).setLevel(level)


def _prepare_out(out_dir) -> Path | None:
    """Create the output folder up front, so an unwritable folder fails before the analysis, not after it."""
    if out_dir is None:
        return None
    out = Path(out_dir)
    try:
        (out / "hops").mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the output folder: {exc.strerror}", path=str(out)) from None
    return out


def _clear_outputs(out: Path, folders: Iterable[str]) -> None:
    """Remove the files a previous run left under our names (network files, each hop's output files), so a hop
    that fails now leaves no stale results behind and the network files hold this run only."""
    from diag.report import OUTPUT_FILES

    names = set(OUTPUT_FILES)
    stale = [out / name for name in (*COMBINED_FILES, "network_ranking.csv", "network_report.pdf")]
    stale += [out / "hops" / folder / name for folder in folders if folder for name in names]
    for path in stale:
        try:
            path.unlink(missing_ok=True)
        except OSError as exc:
            raise InputError(f"cannot replace an old output file: {exc.strerror}", path=str(path)) from None


def _write_combined(out_dir: Path, order: list[str], folders: dict[str, str]) -> list[Path]:
    """Concatenate the per-hop CSV files into network-wide ones (header once, hops in ``order``)."""
    written = []
    for name in COMBINED_FILES:
        parts = [out_dir / "hops" / folders[h] / name for h in order if folders.get(h)
                 and (out_dir / "hops" / folders[h] / name).exists()]
        if not parts:
            continue
        target = out_dir / name
        with target.open("wb") as dst:
            for i, part in enumerate(parts):
                with part.open("rb") as src:
                    header = src.readline()
                    if i == 0:
                        dst.write(header)
                    shutil.copyfileobj(src, dst)
        written.append(target)
    return written


def run(inputs: Sequence[str | os.PathLike], links: list[Link], *, out_dir: str | os.PathLike | None = None,
        workers: int | None = None, scheduler: str | None = None, client=None, tz=None, mapping=None, config=None,
        analyze: AnalyzeFn | None = None, writer: WriterFn | None = None, reader: ReaderFn | None = None,
        progress: ProgressFn | None = None, keep_series: bool = False, hop_pdf: bool = True,
        connect_timeout_s: float = 10.0) -> BatchResult:
    """Analyse every hop found in ``inputs`` (files, folders, Parquet stores) in parallel on Dask.

    Parameters
    ----------
    inputs : paths of log files, folders of log files, or stores written by ``ingest --out``.
    links : the links table (``diag.links.read_links_table``).
    out_dir : where to write ``hops/<hop>/...`` and the network files; ``None`` writes nothing.
    workers : local cluster size (processes, one thread each); default: the number of CPUs.
    scheduler : address of an existing Dask scheduler (``tcp://host:port``); the scheduler and its workers must import
        ``diag``, and the workers must see the input paths.
    client : an existing ``distributed.Client`` (wins over ``workers`` and ``scheduler``; left open).
    analyze, writer, reader : replace ``diag.pipeline.analyze_link``, ``diag.report.write_outputs`` and the reader
        (tests and benchmarks); they must be importable by the workers (module-level functions).
    progress : ``progress(stage, done, total, message)``; stage ``"read"`` per file, ``"analyse"`` per hop.
    keep_series : keep each hop's per-sample ``series`` in the returned results (memory grows with the network).
    hop_pdf : write each hop's ``report.pdf`` (about a second or more per hop); ``False`` writes the other files
        only (``write_tables``).  Ignored when ``writer`` is given.
    connect_timeout_s : how long to try reaching ``scheduler``.
    """
    files, stores = expand_inputs(inputs)
    if not links:
        raise InputError("the links table holds no links")
    _prepare_out(out_dir)
    by_id = {link.link_id: link for link in links}
    if writer is None and not hop_pdf:
        writer = write_tables
    own = client is None
    cluster = None
    with _quiet_dask():
        if own:
            client, cluster = _open_client(workers, scheduler, connect_timeout_s)
        try:
            return _run(client, files, stores, links, by_id, out_dir, tz, mapping, config, analyze, writer, reader,
                        progress, keep_series)
        finally:
            if own:
                client.close()
                if cluster is not None:
                    cluster.close()


def _run(client, files, stores, links, by_id, out_dir, tz, mapping, config, analyze, writer, reader, progress,
         keep_series) -> BatchResult:
    from distributed import as_completed

    def tell(stage, done, total, message):
        log.info("%s %d/%d %s", stage, done, total, message)
        if progress is not None:
            progress(stage, done, total, message)

    # 1. read every file on the workers; the driver sees only which hops each file holds
    pieces = [client.submit(_read_task, str(p), links, tz, mapping, reader, key=f"read-{i}-{p.name}", pure=False)
              for i, p in enumerate(files)]
    metas = [client.submit(_file_meta, f, pure=False) for f in pieces]
    index = {m.key: i for i, m in enumerate(metas)}
    reads: list[dict | None] = [None] * len(files)
    for done, fut in enumerate(as_completed(metas), start=1):
        i = index[fut.key]
        try:
            meta = fut.result()
        except Exception as exc:  # the task itself could not run (a worker died, environments differ ...)
            try:
                hop = hop_of_file_name(links, files[i].name) or (links[0].link_id if len(links) == 1 else None)
            except InputError:
                hop = None
            meta = {"file": files[i].name, "hops": {}, "rows": 0, "error": _one_line(exc), "hop_of_error": hop,
                    "report": {}}
        reads[i] = meta
        tell("read", done, len(files), meta["file"] + (f" (error: {meta['error']})" if meta["error"] else ""))
    del metas

    hop_files: dict[str, list[int]] = {}
    for i, meta in enumerate(reads):
        hops = list(meta["hops"]) if not meta["error"] else ([meta["hop_of_error"]] if meta["hop_of_error"] else [])
        for hop in hops:
            hop_files.setdefault(hop, []).append(i)
    # stores: only the list of hops is read here; each hop task reads its own partition
    store_hops: dict[str, list[tuple[str, str]]] = {}
    for store_path in stores:
        from diag.read.store import store_links

        for store_id in store_links(store_path):
            try:
                hop = assign_hops([store_id], links, file_name=str(store_path)).hops[store_id]
            except InputError:
                hop = store_id
            store_hops.setdefault(hop, []).append((str(store_path), store_id))
    order = [link.link_id for link in links] + sorted((set(hop_files) | set(store_hops)) - set(by_id))
    folders = _folder_names(order)

    # 2. one task per hop; results stream back and are written as they arrive
    hop_futures = {}
    for hop in order:
        if hop not in hop_files and hop not in store_hops:
            continue
        deps = [pieces[i] for i in hop_files.get(hop, [])]
        hop_futures[client.submit(_hop_task, hop, by_id.get(hop), deps, store_hops.get(hop, []), config, analyze,
                                  writer, keep_series, key=f"hop-{safe_name(hop)}-{len(hop_futures)}",
                                  pure=False)] = hop
    del pieces  # each file's table is released by the cluster as soon as its last hop task has finished
    results: dict[str, LinkResult] = {}
    written: list[Path] = []
    out = Path(out_dir) if out_dir is not None else None
    if out is not None:
        _clear_outputs(out, folders.values())
    unmatched = [m for m in reads if m["error"] and not m["hop_of_error"]]
    total = len(hop_futures)
    for done, fut in enumerate(as_completed(list(hop_futures)), start=1):
        hop = hop_futures.pop(fut)
        try:
            outcome: _HopOutcome = fut.result()
        except Exception as exc:  # a worker died or the task could not run: that hop fails, the rest go on
            outcome = _HopOutcome(failed_result(by_id.get(hop) or _placeholder_link(hop), _one_line(exc)), {})
        fut.release()
        results[hop] = outcome.result
        if out is not None and outcome.files:
            folder = out / "hops" / folders[hop]
            for rel, data in outcome.files.items():
                target = folder / rel
                target.parent.mkdir(parents=True, exist_ok=True)
                target.write_bytes(data)
                written.append(target)
        tell("analyse", done, total, hop + (f" (error: {outcome.result.error})" if outcome.result.error else ""))
    for hop in order:  # hops in the links table that no input mentions
        if hop not in results:
            results[hop] = failed_result(by_id[hop], "no data for this hop in the inputs")
    ordered = [results[h] for h in order]
    for meta in unmatched:
        ordered.append(failed_result(_placeholder_link(f"file:{meta['file']}"),
                                     f"{meta['file']}: {meta['error']} (no hop matches this file name)"))
        folders[f"file:{meta['file']}"] = ""
    ranking = network_ranking(ordered, folders)
    if out is not None:
        out.mkdir(parents=True, exist_ok=True)
        written += _write_combined(out, order, folders)
        target = out / "network_ranking.csv"
        _spreadsheet_safe(ranking).to_csv(target, index=False, float_format="%.6g")
        written.append(target)
        written.append(write_network_page(ordered, ranking, out / "network_report.pdf"))
    return BatchResult(results=ordered, ranking=ranking, files=written, reads=[m for m in reads if m])


__all__ = ["BatchResult", "RANKING_COLUMNS", "expand_inputs", "failed_result", "hop_table", "network_ranking",
           "run", "safe_name", "write_network_page"]
