"""The order of the analysis stages for one hop, and the entry points the command line, dashboard and batch call.

``analyze_link(table, link)``     normalised rows of ONE hop -> :class:`diag.results.LinkResult`
``analyze_tables(table, links)``  normalised rows of several hops -> one result per hop found in the table
``analyze_files(sources, links=)`` log files (paths, folders, or ``(name, bytes)`` pairs) -> one result per hop

Stages for one hop, in order (each a direct import below):

1. regular grid per channel and clear-sky reference (:mod:`diag.analysis.reference`); the channel's steps are
   detected once there (:func:`diag.analysis.steps.channel_steps`, kept in ``ChannelSeries.steps``);
2. fade events (:mod:`diag.analysis.events`) with their features (:mod:`diag.analysis.features`);
3. causes (:mod:`diag.analysis.classify`), then the per-sample cause painted on the grid;
4. side by side (threads): fading statistics (:mod:`diag.analysis.fading_stats`), cross-polar results
   (:mod:`diag.analysis.crosspol`), level changes (:mod:`diag.analysis.steps`, reading the steps of stage 1) and
   outage (:mod:`diag.analysis.outage`);
5. the ranked findings (:mod:`diag.analysis.findings`), which read all of these.

Thresholds: :class:`diag.config.AnalysisConfig`.  Files of one hop are assembled by :mod:`diag.read.hops`.
"""
from __future__ import annotations

import contextlib
import dataclasses
import logging
import os
import sys
import warnings
from collections.abc import Callable, Iterable, Sequence
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pandas as pd

from diag import schema as S
from diag.analysis import crosspol, fading_stats, findings, outage, rulebook, steps
from diag.analysis.classify import classify_events
from diag.analysis.events import find_events, paint_series
from diag.analysis.evidence import add_evidence
from diag.analysis.reference import add_reference, channel_grids, level_shift_spans
from diag.config import AnalysisConfig
from diag.errors import DataWarning, InputError
from diag.links import Link, polarisation_guesses
from diag.read.gauge import check_rain_verdicts, read_gauge
from diag.read.hop_match import NAMED_SOURCES, assign_hops
from diag.read.hops import hop_table
from diag.read.ingest import expand_paths, read_log
from diag.read.ingest_report import hop_view
from diag.results import LinkResult

log = logging.getLogger(__name__)

__all__ = ["AnalysisConfig", "analyze_link", "analyze_tables", "analyze_files", "expand_sources"]

Progress = Callable[[int, int, str], None]


def _skipped_for_link(link: Link) -> list[str]:
    """Checks that need an optional link field the description lacks."""
    needs = {
        "nominal_dbm": "expected clear-sky level vs measured reference (no nominal_dbm)",
        "objective_pct": "availability against its objective (no objective_pct)",
        "xpd_required_db": "clear-sky XPD against the required value (no xpd_required_db)",
    }
    return [text for name, text in needs.items() if getattr(link, name) is None]


def _load_gauge(gauge):
    if gauge is None or isinstance(gauge, pd.DataFrame):
        return gauge
    if isinstance(gauge, tuple):
        name, data = gauge
        return read_gauge(data, name=name)
    return read_gauge(gauge)


def _attempt(label: str, stage: Callable[[LinkResult], object], result: LinkResult) -> tuple:
    """``(stage(result), None)``, or ``(None, why)`` when it failed (logged); InputError rises.  ``label`` names the
    stage in the log and in ``result.skipped``.

    Touches nothing shared, so the independent stages can run in threads (see :func:`analyze_link`)."""
    try:
        return stage(result), None
    except InputError:
        raise
    except Exception as exc:  # one analysis step must not sink the hop: say it was skipped, log the details
        log.warning("%s failed on %s: %s", label, result.link.link_id, " ".join(str(exc).split()))
        log.info("details of the %s failure", label, exc_info=True)  # shown with -v only
        module = label.split(".")[0]
        return None, f"{module}: failed ({type(exc).__name__}: {' '.join(str(exc).split())[:120]})"


def _call(label: str, stage: Callable[[LinkResult], object], result: LinkResult):
    """``stage(result)``; a failure is logged and named in ``result.skipped``."""
    value, why = _attempt(label, stage, result)
    if why is not None:
        result.skipped.append(why)
    return value


# stages that read the painted series and events and write nothing shared: they may run side by side.  The labels
# ("module.function", the module's short name first) name a failed stage in ``LinkResult.skipped``; each stage is
# looked up in its module when called (so a benchmark may wrap the module's function).
_INDEPENDENT = (("stats.link_statistics", lambda result: fading_stats.link_statistics(result)),
                ("crosspol.cross_polar", lambda result: crosspol.cross_polar(result)),
                ("shifts.level_changes", lambda result: steps.level_changes(result)),
                ("outage.account_link", lambda result: outage.account_link(result)))


def default_threads() -> int:
    """Threads for one hop's independent stages: 1 inside a Dask worker (the cluster already uses the cores) or on
    a one-core machine, else 2 (numpy and pandas release the GIL in their array loops; more gains little)."""
    distributed = sys.modules.get("distributed")
    if distributed is not None:
        try:
            distributed.get_worker()
            return 1
        except (ValueError, AttributeError):
            pass
    return max(1, min(2, os.cpu_count() or 1))


def _independent_stages(result: LinkResult, threads: int) -> list:
    """Values of the ``_INDEPENDENT`` stages, in their order; failures named in ``result.skipped`` in that order
    (so the outputs do not depend on which thread finished first)."""
    if threads <= 1:
        attempts = [_attempt(label, stage, result) for label, stage in _INDEPENDENT]
    else:
        with ThreadPoolExecutor(max_workers=threads, thread_name_prefix="diag-stage") as pool:
            futures = [pool.submit(_attempt, label, stage, result) for label, stage in _INDEPENDENT]
            attempts = [future.result() for future in futures]
    values = []
    for value, why in attempts:
        if why is not None:
            result.skipped.append(why)
        values.append(value)
    return values


def _merge_skipped(result: LinkResult, part) -> None:
    if isinstance(part, dict):
        for text in part.get("skipped", []) or []:
            if text not in result.skipped:
                result.skipped.append(str(text))


def _several_values(column: pd.Series) -> bool:
    """``column.nunique() > 1`` (NaN not counted), from the codes when the column is categorical (~10x faster)."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = column.cat.codes.to_numpy()
        codes = codes[codes >= 0]
        return bool(codes.size) and bool((codes != codes[0]).any())
    return column.nunique() > 1


def _one_blas_thread():
    """Context holding BLAS (OpenBLAS) to one thread: the analysis only calls it on small problems (the Rice
    likelihood fit, event correlations), where its spinning helper threads cost more CPU than they save and
    compete with the stage threads (measured: ~0.1 s CPU on a 1-s link-week, results identical)."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:   # optional: without it BLAS keeps its own thread count
        return contextlib.nullcontext()
    return threadpool_limits(limits=1, user_api="blas")


def analyze_link(table: pd.DataFrame, link: Link, *, config: AnalysisConfig | None = None, gauge=None,
                 ingest: dict | None = None, threads: int | None = None,
                 network: pd.DataFrame | None = None) -> LinkResult:
    """Analyse the normalised rows of ONE hop (see the module docstring for the stages).

    ``gauge``: a rain-gauge table from :func:`diag.read.gauge.read_gauge`, or a path / ``(name, bytes)`` to read.
    ``threads``: threads for the independent stages (statistics, cross-polar, level changes, outage); None =
    :func:`default_threads`.  The result is the same for any number.
    ``network``: the network columns of this hop's fade events (:func:`diag.analysis.network.network_columns` with
    the ``start_utc``/``end_utc`` of the events they were computed for), given by ``diag.batch`` after a first
    analysis of the same rows; read by the posterior attribution only.  The result is the one
    :func:`diag.analysis.network.corroborate` makes of the first analysis.
    Raises ``InputError`` when the rows hold no receive level.
    """
    with _one_blas_thread():
        return _analyze_link(table, link, config=config, gauge=gauge, ingest=ingest, threads=threads,
                             network=network)


def _analyze_link(table: pd.DataFrame, link: Link, *, config, gauge, ingest, threads, network=None) -> LinkResult:
    config = config or AnalysisConfig()
    gauge_table = _load_gauge(gauge)
    if S.LINK in table.columns and _several_values(table[S.LINK]):
        table = table[table[S.LINK] == link.link_id]
    series = channel_grids(table)
    if not series:
        raise InputError(f"hop {link.link_id}: the log holds no receive level ({S.RSL}) rows")
    threads = default_threads() if threads is None else max(1, int(threads))
    items = list(series.values())
    if threads > 1 and len(items) > 1:   # each channel's reference touches only its own frame
        with ThreadPoolExecutor(max_workers=threads, thread_name_prefix="diag-reference") as pool:
            list(pool.map(lambda item: add_reference(item, config), items))
    else:
        for item in items:
            add_reference(item, config)
    spans = [span for item in items for span in level_shift_spans(item, config)]
    events = find_events(series, link, config=config, spans=spans, gauge=gauge_table)
    if config.attribution == "posterior":   # the default: the physics posterior (diag.analysis.classify)
        events = add_evidence(events, series)
        if network is not None:   # other hops fading with these events (diag.batch's second pass)
            from diag.analysis.network import with_network

            events = with_network(events, network)
        events = classify_events(events, link, config=config)
    else:                                  # the older rulebook (diag.analysis.rulebook), for comparison
        events = rulebook.classify_events(events, link, config=config)
    paint_series(series, events)
    result = LinkResult(link=link, series=series, events=events, ingest=ingest or {})
    pol_guesses = polarisation_guesses(link, sorted(series))
    if pol_guesses:   # the channel polarisations the links table could not give (issue 15 case 4)
        result.ingest = {**result.ingest, "polarisation_guesses": pol_guesses}
    result.skipped = _skipped_for_link(link)
    if gauge_table is not None and len(events):
        checked = check_rain_verdicts(events, gauge_table)
        result.events = pd.concat([events, checked], axis=1)
    elif gauge_table is None:
        result.skipped.append(_NO_GAUGE)
    _later_stages(result, threads)
    return result


_NO_GAUGE = "rain-gauge check of the rain verdicts (no gauge file given)"


def _later_stages(result: LinkResult, threads: int) -> None:
    """The stages after painting: statistics, cross-polar, level changes and outage (side by side), then findings."""
    statistics, cross_polar, level_changes, outage = _independent_stages(result, threads)
    result.statistics = statistics or {}
    _merge_skipped(result, result.statistics)
    result.cross_polar = cross_polar or {}
    _merge_skipped(result, result.cross_polar)
    result.level_changes = level_changes or {}
    _merge_skipped(result, result.level_changes)
    result.outage = outage
    result.findings = _call("findings.rank_findings", lambda res: findings.rank_findings(res), result) or []


def _rerun_later_stages(result: LinkResult, *, gauge_given: bool) -> None:
    """Run the stages after painting again (the causes changed after the network term): the skipped list starts
    again from what the hop's description and the gauge say, as in :func:`analyze_link`."""
    result.skipped = _skipped_for_link(result.link) + ([] if gauge_given else [_NO_GAUGE])
    _later_stages(result, 1)


def analyze_tables(table: pd.DataFrame, links: Sequence[Link], *, config: AnalysisConfig | None = None,
                   gauge=None, progress: Progress | None = None) -> list[LinkResult]:
    """Analyse every hop of a normalised table; rows are matched to ``links`` by ``link_id``
    (:func:`diag.read.hop_match.assign_hops`: a table with one link id and a links table of one row match each other
    whatever the id, with a warning naming both)."""
    gauge_table = _load_gauge(gauge)
    ids = list(pd.unique(table[S.LINK])) if len(table) else []
    if not ids:
        raise InputError("no rows to analyse")
    jobs = []
    by_id = {link.link_id: link for link in links}
    assigned = assign_hops([str(i) for i in ids], links)
    for message in assigned.warnings:
        warnings.warn(message, DataWarning, stacklevel=2)
    for link_id in ids:
        link = by_id[assigned.hops[str(link_id)]]
        part = table[table[S.LINK] == link_id]
        if link_id != link.link_id:
            part = part.assign(**{S.LINK: link.link_id})
        jobs.append((link, part))
    results = []
    for done, (link, part) in enumerate(jobs):
        if progress:
            progress(done, len(jobs), f"analysing {link.link_id}")
        results.append(analyze_link(part, link, config=config, gauge=gauge_table))
    if progress:
        progress(len(jobs), len(jobs), "analysis done")
    return results


def expand_sources(sources: Iterable) -> list:
    """Paths (expanded by ``diag.read.ingest.expand_paths``: folders give their logs, stores stay whole) and
    ``(name, bytes)`` pairs, in the order given."""
    out: list = []
    for source in sources:
        out.extend([source] if isinstance(source, tuple) else expand_paths([os.fspath(source)]))
    if not out:
        raise InputError("no input files given")
    return out


def with_local_tz(config: AnalysisConfig | None, tz) -> AnalysisConfig | None:
    """``config`` with ``local_tz`` set from the reader's ``--tz`` zone when it names one and none is set."""
    if not isinstance(tz, str) or not tz or (config is not None and config.local_tz):
        return config
    return dataclasses.replace(config or AnalysisConfig(), local_tz=tz)


def analyze_files(sources: Iterable, *, links: Sequence[Link], tz: str | None = None, mapping=None,
                  config: AnalysisConfig | None = None, gauge=None,
                  progress: Progress | None = None) -> list[LinkResult]:
    """Read log files (paths, folders or ``(name, bytes)`` pairs), match each to its hop, analyse every hop.

    A log's rows are matched to ``links`` by the rule of :mod:`diag.read.hop_match` (the ids the log names must be
    listed; a log that names none: the id its file name contains, else the table's only row).
    ``progress(done, total, message)`` is called after each file read and each hop analysed.
    """
    items = expand_sources(sources)
    gauge_table = _load_gauge(gauge)
    links = list(links)
    by_id = {link.link_id: link for link in links}
    config = with_local_tz(config, tz)
    pieces: dict[str, list[pd.DataFrame]] = {}
    reports: dict[str, list[dict]] = {}
    names: dict[str, list[str]] = {}
    total = len(items)
    for done, item in enumerate(items):
        if isinstance(item, tuple):
            name, data = item
        else:
            name, data = str(item), item
        if progress:
            progress(done, total, f"reading {Path(name).name}")
        read = read_log(data, name=name, tz=tz, mapping=mapping)
        table = read.table
        report = read.report.to_dict() if hasattr(read.report, "to_dict") else dict(read.report or {})
        if table.empty:
            raise InputError("no usable rows in the log", path=name)
        assigned = assign_hops([str(i) for i in pd.unique(table[S.LINK])], links, file_name=name,
                               names_hop=report.get("link_source") in NAMED_SOURCES)
        for message in assigned.warnings:
            warnings.warn(f"{name}: {message}", DataWarning, stacklevel=2)
            report.setdefault("warnings", []).append(message)
        for link_id, part in table.groupby(S.LINK, sort=False, observed=True):
            link = by_id[assigned.hops[str(link_id)]]
            if link_id != link.link_id:
                part = part.assign(**{S.LINK: link.link_id})
            pieces.setdefault(link.link_id, []).append(part)
            reports.setdefault(link.link_id, []).append(hop_view(report, str(link_id)))   # O(1) per hop
            names.setdefault(link.link_id, []).append(name)
    results = []
    hop_ids = [link.link_id for link in links if link.link_id in pieces]
    for done, link_id in enumerate(hop_ids):
        if progress:
            progress(done, len(hop_ids), f"analysing {link_id}")
        # files of one hop: concatenated, sorted, a value found in two files kept once (the first file's), as
        # read_logs and batch do; how many were dropped goes into the ingest report
        table, dropped = hop_table(pieces[link_id])
        ingest = {"files": reports[link_id]}
        if dropped:
            ingest["overlap_values_dropped"] = dropped
        try:
            results.append(analyze_link(table, by_id[link_id], config=config, gauge=gauge_table, ingest=ingest))
        except InputError as exc:
            if exc.path is None:  # a problem of the hop's data: name the file(s) it came from
                exc.path = ", ".join(dict.fromkeys(names[link_id]))
            raise
    if (config or AnalysisConfig()).attribution == "posterior":
        from diag.analysis.network import corroborate  # several hops: fades shared across the network (rain)

        results = corroborate(results, config=config, gauge=gauge_table,
                              rerun=lambda r: _rerun_later_stages(r, gauge_given=gauge_table is not None))
    if progress:
        progress(len(hop_ids), len(hop_ids), "analysis done")
    return results
