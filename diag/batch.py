"""Many hops at once on a Dask cluster: read, group by hop, analyse each hop in its own task, rank the network.

``run(inputs, links, out_dir=...)`` is the whole job.  It starts a local Dask cluster (``workers`` processes with one
thread each) or connects to an existing scheduler (``scheduler="tcp://host:port"``), then

1. submits one *read* task per input file; each task parses its file (``diag.read.ingest.read_log``) and gives
   every row its hop (by the ``link_id`` in the data, else by a link id contained in the file name, else the links
   table's only row).  A file that holds one hop (the usual export: one file per hop) has that hop analysed and
   rendered in the same task, as the hop task of step 2 would, and its parsed table dropped there, so a worker
   holds one hop's table at a time whatever the size of the network (``_read_analyse_task``); the driver keeps
   that outcome when no other input holds the hop.  A file of several hops keeps its table on the worker, split
   by hop.  The driver receives the list of hops in each file, the reader's row accounting and those outcomes.
2. submits one *hop* task per hop not analysed yet (or per group of small consecutive hops, ``hop_groups``:
   scheduling overhead must not dominate a network of many small hops); it gathers that hop's rows from the files
   that hold them (worker to worker; a file whose table was dropped in step 1 is read again), runs
   ``diag.pipeline.analyze_link`` and renders the hop's outputs (``diag.report.write_outputs``, the PDF included,
   so PDFs are drawn in the workers) into bytes.
   The driver writes each hop's files to ``OUT/hops/<hop>/`` as the hop finishes and keeps only a slim
   ``LinkResult`` (without the per-sample ``series``), so a network run never holds every hop's data in the driver.
   Under the posterior attribution with two hops or more, the network corroborates (``corroborate``; the results
   of ``diag.pipeline.analyze_files``, which holds every hop at once): the analyses of steps 1 and 2 are a first
   pass that also returns each hop's faded minutes (``diag.analysis.network.faded_minutes``, one value a minute)
   and renders only the hops without fade events (nothing the network says can change them); the driver computes
   the network columns of every other hop's events (``network_columns``) and a second pass analyses those hops
   again with their columns given to ``analyze_link(network=)`` and renders them.  Between the passes such a hop's
   input table waits in a file of the worker's temporary folder (one folder per run, removed at its end), not in
   memory; a second-pass task that does not find it there (another machine) reads the hop's files again.  Memory
   per task stays that of one hop.
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
import tempfile
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path

import pandas as pd

from diag import schema
from diag.errors import InputError, one_line_warnings
from diag.links import Link
from diag.read.hop_match import NAMED_SOURCES, assign_hops, hop_of_file_name
from diag.read.hops import expand_inputs, hop_table, read_file_table, sorted_table, store_part
from diag.read.ingest_report import hop_view
from diag.report.network import (  # noqa: F401 - re-exported: the network table is part of a run
    COMBINED_FILES,
    RANKING_COLUMNS,
    bounds,
    network_ranking,
    spreadsheet_safe,
    write_combined,
    write_network_page,
)
from diag.results import LinkResult

log = logging.getLogger(__name__)

AnalyzeFn = Callable[..., LinkResult]          # analyze(table, link, *, config=None, ingest=None) -> LinkResult
WriterFn = Callable[[list, Path], list]         # write(results, out_dir) -> list[Path]
ReaderFn = Callable[..., tuple]                 # read(path, *, tz=None, mapping=None) -> (table, report dict)
ProgressFn = Callable[[str, int, int, str], None]   # progress(stage "read"|"analyse"|"network", done, total, msg)

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
    rows: dict[str, int] | None = None             # rows per hop, kept when ``tables`` was dropped
    outcome: tuple[str, _HopOutcome] | None = None  # (hop, outcome) of a file of one hop, analysed at once


@dataclass
class _Reread:
    """A file whose parsed table was dropped once its only hop was analysed (``_read_analyse_task``): a hop task
    that needs the table again (the network pass, or a hop found in other inputs too) reads the file again."""

    path: str
    links: list
    tz: object
    mapping: object
    reader: object

    def piece(self) -> _FilePiece:
        return _read_task(self.path, self.links, self.tz, self.mapping, self.reader)


@dataclass
class _HopOutcome:
    result: LinkResult
    files: dict[str, bytes]
    minutes: pd.Series | None = None          # first pass of a network run: the hop's faded minutes
    pending: bool = False                     # ... its outputs wait for the second pass (files empty)
    network_events: pd.DataFrame | None = None   # ... a settled hop's events as corroboration leaves them
    spilled: str | None = None                # ... a pending hop's input table, kept in a file on the worker


FIRST_PASS = "first"   # ``_hop_task(network=FIRST_PASS)``: the first pass of a corroborated network run


# --- a pending hop's input between the passes --------------------------------------------------------------------
# A hop that waits for the network pass needs its input table again.  Kept in worker memory, every such hop's table
# would stay there until the whole first pass is done (worker memory growing with the network); read again from
# its log files, the second pass would parse every such file twice.  Instead the table goes to a file in the
# worker's temporary folder (one folder per run, removed at the end of the run) and the second pass loads it; where
# that file is not found (a task run on another machine), the hop's files are read again.
def _spill_folder(token: str) -> Path:
    return Path(tempfile.gettempdir()) / f"diag-batch-{token}"


def _spill(data: bytes, token: str) -> str | None:
    """``data`` into a new file of the run's folder; its path, or ``None`` when it cannot be written."""
    try:
        folder = _spill_folder(token)
        folder.mkdir(mode=0o700, exist_ok=True)
        fd, path = tempfile.mkstemp(suffix=".pkl", dir=folder)
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
        return path
    except OSError:
        return None


def _unspill(path: str | None) -> tuple | None:
    """The ``(table, ingest)`` a first pass kept in ``path`` (the file removed), or ``None`` when it is not here."""
    import pickle

    if not path:
        return None
    try:
        with open(path, "rb") as handle:
            data = handle.read()
        os.unlink(path)
    except OSError:
        return None
    return pickle.loads(data)


def _remove_spill_folder(token: str) -> None:
    """Run on every worker (and the driver) at the end of a run."""
    import shutil

    shutil.rmtree(_spill_folder(token), ignore_errors=True)


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


def _assign_hops(table: pd.DataFrame, links: list[Link], file_name: str, report: dict | None = None) -> pd.DataFrame:
    """Give each row its hop by the rule ``diag.pipeline.analyze_files`` uses (``diag.read.hop_match.assign_hops``);
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



# --- worker tasks -----------------------------------------------------------------------------------------------
@one_line_warnings   # worker warnings: one line each, no Python source lines (issue 15 case 16)
def _read_task(path: str, links: list[Link], tz, mapping, reader: ReaderFn | None) -> _FilePiece:
    name = Path(path).name
    try:
        table, report = (reader or read_file_table)(path, tz=tz, mapping=mapping)
        if table.empty:
            raise InputError("no usable rows in the log", path=name)
        table = _assign_hops(table, links, name, report)
        tables = {str(k): sorted_table(g) for k, g in table.groupby(schema.LINK, sort=True, observed=True)}
        return _FilePiece(name=name, tables=tables, report=report)
    except Exception as exc:  # one bad file must never stop the run
        try:
            hop = hop_of_file_name(links, name) or (links[0].link_id if len(links) == 1 else None)
        except InputError:
            hop = None
        return _FilePiece(name=name, tables={}, report={}, error=_one_line(exc), hop_of_error=hop)


@one_line_warnings
def _read_analyse_task(path: str, links: list[Link], tz, mapping, reader: ReaderFn | None, config,
                       analyze: AnalyzeFn | None, writer: WriterFn | None, keep_series: bool,
                       network, spill: str | None = None) -> _FilePiece:
    """``_read_task``, and when the file holds one hop only, that hop's ``_hop_task`` at once (as if no other input
    held it), after which the parsed table is dropped: the worker holds one hop's table at a time, whatever the
    size of the network.  The driver keeps the outcome when no other input holds the hop and ``network`` was the
    mode of the run, else that hop is analysed again in a hop task that reads the file again (``_Reread``)."""
    piece = _read_task(path, links, tz, mapping, reader)
    if piece.error or len(piece.tables) != 1:
        return piece
    (hop,) = piece.tables
    link = {item.link_id: item for item in links}.get(hop)
    outcome = _hop_task(hop, link, [piece], [], config, analyze, writer, keep_series, network, spill=spill)
    piece.rows = {hop: len(piece.tables[hop])}
    piece.tables = {}
    piece.outcome = (hop, outcome)
    return piece


def _file_meta(piece: _FilePiece) -> dict:
    rows = piece.rows if piece.rows is not None else {k: len(v) for k, v in piece.tables.items()}
    return {"file": piece.name, "hops": rows, "rows": int(sum(rows.values())), "error": piece.error,
            "hop_of_error": piece.hop_of_error, "report": piece.report, "outcome": piece.outcome}


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


@one_line_warnings
def _hop_task(link_id: str, link: Link | None, pieces: list, store_refs: list, config,
              analyze: AnalyzeFn | None, writer: WriterFn | None, keep_series: bool,
              network=None, *, given: tuple | None = None, spill: str | None = None) -> _HopOutcome:
    """Analyse one hop on a worker and render its outputs; never raises.

    ``pieces``: the parsed files holding the hop; ``store_refs``: ``(store folder, hop id in the store)`` pairs,
    read here, so a hop kept in a store never passes through the driver.

    ``network`` (network corroboration, see :func:`run`): ``None`` as a hop alone; ``FIRST_PASS`` to analyse and
    return the hop's faded minutes, rendering now only a hop that corroboration cannot change (else ``pending``);
    a DataFrame of network columns for the second pass (``analyze(..., network=)``).

    ``given``: the hop's ``(table, ingest)`` kept by its first pass (then ``pieces`` and ``store_refs`` are not
    read); ``spill``: the run's token, under which a first pass keeps a pending hop's ``(table, ingest)`` in a file
    (``outcome.spilled``)."""
    if link is None:
        return _HopOutcome(failed_result(_placeholder_link(link_id), f"hop {link_id!r} has no row in the links "
                                         "table; add one"), {})
    bad = [p for p in pieces if p.error] if given is None else []
    if bad:
        return _HopOutcome(failed_result(link, "; ".join(p.error if p.name in p.error else f"{p.name}: {p.error}"
                                                         for p in bad)), {})
    kept = None
    try:
        if given is not None:
            table, ingest = given
            del given
        else:
            parts = [p.tables.get(link_id) for p in pieces]
            parts += [store_part(path, sid, link_id) for path, sid in store_refs]
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
        first = isinstance(network, str) and network == FIRST_PASS   # (a string: sent through pickle)
        if first and spill:   # the input as it is now, before the analysis
            import pickle

            kept = pickle.dumps((table, ingest), protocol=pickle.HIGHEST_PROTOCOL)
        extra = {"network": network} if isinstance(network, pd.DataFrame) else {}
        result = analyze(table, link, config=config, ingest=ingest, **extra)
        del table
        outcome = _first_pass(result, config) if first and result.error is None else None
    except Exception as exc:
        return _HopOutcome(failed_result(link, _one_line(exc)), {})
    if outcome is not None and outcome.pending:
        outcome.result = replace(result, series={})
        if kept is not None:
            outcome.spilled = _spill(kept, spill)
        return outcome
    files: dict[str, bytes] = {}
    if result.error is None:
        try:
            files = _render(result, writer)
        except Exception as exc:
            result.error = f"writing outputs: {_one_line(exc)}"
    if not keep_series:
        result = replace(result, series={})
    if outcome is None:
        return _HopOutcome(result, files)
    outcome.result, outcome.files = result, files
    return outcome


def _first_pass(result: LinkResult, config) -> _HopOutcome:
    """The first-pass outcome of an analysed hop (result and files filled by the caller): its faded minutes, and
    whether corroboration can change it.  A hop without fade events or level-shift spans gets no network term
    (the network columns of other events are empty whatever the other hops did), so it is re-scored here as
    :func:`diag.analysis.network.corroborate` would; it is settled when that leaves the causes and the written
    columns as they are, else pending like a hop with fade events."""
    from diag.analysis.network import asked_kinds, faded_minutes, network_columns, rescore, without_network

    minutes = faded_minutes(result)
    events = result.events
    if events is None or not len(events):
        return _HopOutcome(result, {}, minutes=minutes)
    if "event_kind" not in events or events["event_kind"].isin(asked_kinds()).any():
        return _HopOutcome(result, {}, minutes=minutes, pending=True)
    rescored = rescore(result, network_columns(without_network(events), result.link, []), config=config)
    same = rescored[schema.EVENT_COLUMNS].equals(events[schema.EVENT_COLUMNS])
    return _HopOutcome(result, {}, minutes=minutes, pending=not same, network_events=rescored if same else None)


def _hops_task(items: list[tuple], config, analyze: AnalyzeFn | None, writer: WriterFn | None,
               keep_series: bool, spill: str | None, *pieces) -> list[_HopOutcome]:
    """Several small hops in one task (``_hop_task`` for each): ``items`` are ``(hop, link, piece positions,
    store refs, network, spilled)``, the positions index ``pieces``, the parsed files the group needs (each passed
    once; a ``_Reread`` is read here, once, and only when a hop's first pass left no file ``spilled``)."""
    ready: dict[int, _FilePiece] = {}

    def piece(i: int) -> _FilePiece:
        if i not in ready:
            ready[i] = pieces[i].piece() if isinstance(pieces[i], _Reread) else pieces[i]
        return ready[i]

    out = []
    for hop, link, where, refs, network, spilled in items:
        given = _unspill(spilled)
        out.append(_hop_task(hop, link, [] if given is not None else [piece(i) for i in where],
                             [] if given is not None else refs, config, analyze, writer, keep_series, network,
                             given=given, spill=spill))
        del given
    return out


ROWS_PER_TASK = 200_000     # hops are grouped into one task up to this many rows (small hops: scheduling overhead)
TASKS_PER_WORKER = 4        # ... and no fewer tasks than this per worker, so the work still spreads evenly


def hop_groups(sizes: Sequence[tuple[str, int | None]], n_workers: int, *, rows_per_task: int = ROWS_PER_TASK,
               tasks_per_worker: int = TASKS_PER_WORKER) -> list[list[str]]:
    """Cut hops (in order, ``(hop, rows)``; rows ``None`` = unknown, e.g. in a store) into tasks: consecutive small
    hops share a task up to ``rows_per_task`` rows and at most ``len(hops) / (n_workers * tasks_per_worker)`` hops;
    a hop of unknown size gets a task of its own."""
    most = max(1, len(sizes) // max(1, n_workers * tasks_per_worker))
    groups: list[list[str]] = []
    rows = 0
    for hop, n in sizes:
        if n is None:
            groups.append([hop])
            rows = rows_per_task
            continue
        if groups and rows < rows_per_task and rows + n <= rows_per_task and len(groups[-1]) < most:
            groups[-1].append(hop)
            rows += n
        else:
            groups.append([hop])
            rows = n
    return groups


# --- network corroboration ---------------------------------------------------------------------------------------
def _network_pass(results: dict[str, LinkResult], minutes: dict[str, pd.Series],
                  settled_events: dict[str, pd.DataFrame], pending: list[str], order: list[str]) -> dict:
    """After the first pass: the hops of the second pass, each with its network columns (``None``: as a hop alone,
    when fewer than two hops were analysed).  Settled hops take the events corroboration leaves them (in place).

    The same choice as :func:`diag.analysis.network.corroborate` in ``analyze_files``: the hops analysed, in
    links-table order, each hop against all the others."""
    from diag.analysis.network import minute_counts, network_columns, without_network

    ok = [hop for hop in order if hop in minutes]
    if len(ok) < 2:
        return {hop: None for hop in pending}
    counts = {hop: minute_counts(minutes[hop]) for hop in ok}   # once per hop, read for every other hop
    for hop, events in settled_events.items():
        results[hop] = replace(results[hop], events=events)
    out = {}
    for hop in pending:
        result = results[hop]
        events = without_network(result.events)
        others = [(results[o].link, counts[o]) for o in ok if o != hop]
        columns = network_columns(events, result.link, others)
        out[hop] = pd.concat([events[["start_utc", "end_utc"]], columns], axis=1)
    return out


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


def run(inputs: Sequence[str | os.PathLike], links: list[Link], *, out_dir: str | os.PathLike | None = None,
        workers: int | None = None, scheduler: str | None = None, client=None, tz=None, mapping=None, config=None,
        analyze: AnalyzeFn | None = None, writer: WriterFn | None = None, reader: ReaderFn | None = None,
        progress: ProgressFn | None = None, keep_series: bool = False, hop_pdf: bool = True,
        connect_timeout_s: float = 10.0, corroborate: bool = True) -> BatchResult:
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
    hop_pdf : write each hop's ``report.pdf`` (about 0.15-0.2 s CPU per hop in a busy worker, docs/speed.md
        §3a); ``False`` writes the other files only (``write_tables``).  Ignored when ``writer`` is given.
    connect_timeout_s : how long to try reaching ``scheduler``.
    corroborate : under the posterior attribution (``config.attribution == "posterior"``) and with at least two
        hops, a fade shared with other hops is rain evidence (:mod:`diag.analysis.network`), with the results of
        ``diag.pipeline.analyze_files``: a first pass gives each hop's faded minutes (a hop without fade events is
        finished there), the driver computes each hop's network columns, and a second pass analyses the hops with
        fade events again with their columns and writes their files.  ``False``: every hop as if alone (so is
        every hop when ``analyze`` is replaced).
    """
    from diag.pipeline import with_local_tz  # the hour term's clock from --tz (batch and analyze alike)

    config = with_local_tz(config, tz)
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
                        progress, keep_series, corroborate)
        finally:
            if own:
                client.close()
                if cluster is not None:
                    cluster.close()


def _run(client, files, stores, links, by_id, out_dir, tz, mapping, config, analyze, writer, reader, progress,
         keep_series, corroborate=True) -> BatchResult:
    import uuid

    from diag.config import AnalysisConfig

    def tell(stage, done, total, message):
        log.info("%s %d/%d %s", stage, done, total, message)
        if progress is not None:
            progress(stage, done, total, message)

    # network corroboration (posterior attribution, several hops): a first pass gives every hop's faded minutes,
    # the driver computes each hop's network columns, a second pass re-analyses the hops they can change.  A
    # replacement ``analyze`` (tests, benchmarks) is not corroborated: it need not take ``network=`` nor return
    # per-sample series.  Whether a run corroborates is known once its files are read (two hops or more); the hops
    # analysed while their file is read assume it from the number of inputs (a wrong guess costs those hops a
    # second analysis, never a different result)
    may_corroborate = corroborate and analyze is None and (config or AnalysisConfig()).attribution == "posterior"
    guessed = may_corroborate and len(files) + len(stores) >= 2

    spill = uuid.uuid4().hex if may_corroborate else None    # names the run's folder for pending hops' inputs
    try:
        return _run_passes(client, files, stores, links, by_id, out_dir, tz, mapping, config, analyze, writer,
                           reader, tell, keep_series, may_corroborate, guessed, spill)
    finally:
        if spill:
            try:
                client.run(_remove_spill_folder, spill)
            except Exception:  # noqa: BLE001 - a worker gone: its temporary folder goes with its machine's cleanup
                pass
            _remove_spill_folder(spill)


def _run_passes(client, files, stores, links, by_id, out_dir, tz, mapping, config, analyze, writer, reader, tell,
                keep_series, may_corroborate, guessed, spill) -> BatchResult:
    from distributed import as_completed

    # 1. read every file on the workers.  A file of one hop is analysed in the same task and its table dropped
    # there (``_read_analyse_task``), so a worker holds one hop's table at a time; a file of several hops keeps its
    # table on the worker, split by hop, for the hop tasks.  The driver sees which hops each file holds, and the
    # outcome of a hop analysed while read
    pieces = [client.submit(_read_analyse_task, str(p), links, tz, mapping, reader, config, analyze, writer,
                            keep_series, FIRST_PASS if guessed else None, spill, key=f"read-{i}-{p.name}",
                            pure=False)
              for i, p in enumerate(files)]
    metas = [client.submit(_file_meta, f, pure=False) for f in pieces]
    index = {m.key: i for i, m in enumerate(metas)}
    reads: list[dict | None] = [None] * len(files)
    early: dict[int, tuple[str, _HopOutcome]] = {}     # file -> (its only hop, that hop's outcome)
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
        fut.release()
        metas[i] = None
        if meta.get("outcome") is not None:
            early[i] = meta["outcome"]
            pieces[i] = None          # nothing left on the worker but the file's report: read again if needed
        meta.pop("outcome", None)
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

    # 2. tasks of one hop, or of several small ones; results stream back and are written as they arrive
    sizes = []
    for hop in order:
        if hop not in hop_files and hop not in store_hops:
            continue
        rows = None if hop in store_hops else sum(reads[i]["hops"].get(hop, 0) for i in hop_files[hop])
        sizes.append((hop, rows))
    n_workers = max(1, len(client.scheduler_info().get("workers", {})))
    corroborating = may_corroborate and len(sizes) >= 2
    # an outcome of step 1 stands when its file was the hop's only input and the run's mode was guessed right
    ready = {hop: outcome for i, (hop, outcome) in early.items()
             if corroborating == guessed and hop_files.get(hop) == [i] and hop not in store_hops}
    del early
    spilled: dict[str, str] = {}      # a pending hop -> the file its first pass kept its input in

    def source(i: int):
        """What a hop task is given for file ``i``: its table on a worker, or the file to read again."""
        return pieces[i] if pieces[i] is not None else _Reread(str(files[i]), links, tz, mapping, reader)

    def submit(now: list, network_of: Callable, prefix: str) -> dict:
        futures = {}
        for group in hop_groups(now, n_workers):
            needed = sorted({i for hop in group for i in hop_files.get(hop, [])})
            position = {i: k for k, i in enumerate(needed)}
            items = [(hop, by_id.get(hop), [position[i] for i in hop_files.get(hop, [])], store_hops.get(hop, []),
                      network_of(hop), spilled.pop(hop, None)) for hop in group]
            futures[client.submit(_hops_task, items, config, analyze, writer, keep_series, spill,
                                  *[source(i) for i in needed],
                                  key=f"{prefix}-{safe_name(group[0])}-{len(futures)}", pure=False)] = group
        return futures

    hop_futures = submit([(hop, rows) for hop, rows in sizes if hop not in ready],
                         lambda hop: FIRST_PASS if corroborating else None, "hops")
    # each file's table is released by the cluster as soon as its last hop task has finished (in a corroborated
    # run: as soon as none of its hops waits for the second pass without its input kept in a file)
    files_of = {i: set(meta["hops"]) for i, meta in enumerate(reads)} if corroborating else {}
    if not corroborating:
        pieces = [None] * len(files)
    results: dict[str, LinkResult] = {}
    written: list[Path] = []
    out = Path(out_dir) if out_dir is not None else None
    if out is not None:
        _clear_outputs(out, folders.values())
    unmatched = [m for m in reads if m["error"] and not m["hop_of_error"]]
    minutes: dict[str, pd.Series] = {}
    settled_events: dict[str, pd.DataFrame] = {}
    pending: list[str] = []

    def take(hop: str, outcome: _HopOutcome) -> str:
        """Keep a hop's outcome, write its files; returns the note for the progress line."""
        results[hop] = outcome.result
        if outcome.minutes is not None:
            minutes[hop] = outcome.minutes
        if outcome.network_events is not None:
            settled_events[hop] = outcome.network_events
        if outcome.pending:
            pending.append(hop)
            if outcome.spilled:
                spilled[hop] = outcome.spilled
        if not outcome.pending or outcome.spilled:    # the hop needs its files' tables no more
            for i in hop_files.get(hop, []):
                files_of.get(i, set()).discard(hop)
                if i in files_of and not files_of[i]:
                    pieces[i] = None
        if out is not None and outcome.files:
            folder = out / "hops" / folders[hop]
            for rel, data in outcome.files.items():
                target = folder / rel
                target.parent.mkdir(parents=True, exist_ok=True)
                target.write_bytes(data)
                written.append(target)
        return (f" (error: {outcome.result.error})" if outcome.result.error
                else " (waits for the network pass)" if outcome.pending else "")

    def collect(futures: dict, stage: str, total: int, done: int = 0) -> None:
        for fut in as_completed(list(futures)):
            group = futures.pop(fut)
            try:
                outcomes: list[_HopOutcome] = fut.result()
            except Exception as exc:  # a worker died or the task could not run: its hops fail, the rest go on
                outcomes = [_HopOutcome(failed_result(by_id.get(hop) or _placeholder_link(hop), _one_line(exc)),
                                        {}) for hop in group]
            fut.release()
            for hop, outcome in zip(group, outcomes):
                note = take(hop, outcome)
                done += 1
                tell(stage, done, total, hop + note)

    done = 0
    for hop, _rows in sizes:     # the hops analysed while their file was read, in links-table order
        if hop in ready:
            done += 1
            tell("analyse", done, len(sizes), hop + take(hop, ready.pop(hop)))
    collect(hop_futures, "analyse", len(sizes), done)
    if corroborating:
        network_of = _network_pass(results, minutes, settled_events, pending, order)
        second = [(hop, rows) for hop, rows in sizes if hop in network_of]
        futures = submit(second, network_of.get, "network")
        pieces = [None] * len(files)
        files_of.clear()
        collect(futures, "network", len(second))
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
        written += write_combined(out, order, folders)
        target = out / "network_ranking.csv"
        spreadsheet_safe(ranking).to_csv(target, index=False, float_format="%.6g")
        written.append(target)
        written.append(write_network_page(ordered, ranking, out / "network_report.pdf"))
    return BatchResult(results=ordered, ranking=ranking, files=written, reads=[m for m in reads if m])


__all__ = ["BatchResult", "RANKING_COLUMNS", "expand_inputs", "failed_result", "hop_groups", "hop_table",
           "network_ranking", "run", "safe_name", "write_network_page"]
