"""The dashboard page: data in (demo network or uploads), cached analysis, the hop screens and the downloads.

``dashboard.py`` at the repository root only calls :func:`run`.  Reading (``diag.read.ingest``), analysis
(``diag.pipeline``), outage accounting and the report files (``diag.report``) come from the library.  Nothing from
an uploaded file is executed or unpickled: uploads are bytes handed to the CSV reader, and results stay in this
process's memory.  The page writes no file.
"""
from __future__ import annotations

import hashlib
import io
import json
import logging
import os
import threading
import zipfile
from collections import OrderedDict
from pathlib import Path

import streamlit as st

from diag import glossary, schema
from diag.errors import InputError
from diag.links import Link, read_links_table
from diag.read.hop_match import NAMED_SOURCES, assign_hops
from diag.read.sniff import file_stem
from diag.report import views
from diag.ui.charts import event_list, level_timeline, overview
from diag.ui.forms import (
    SPREADSHEET_SUFFIXES,
    _link_without_form,
    fit_height,
    input_check,
    link_form,
    md,
    show_input_error,
    sidebar,
)
from diag.ui.stat_charts import cross_polar, fading_statistics

LOG = logging.getLogger("diag.dashboard")
ROOT = Path(__file__).resolve().parents[2]
DEMO_DIR = Path(os.environ.get("DIAG_DEMO_DIR") or ROOT / "demo_logs")
LOG_SUFFIXES = (".csv", ".csv.gz", ".txt", ".tsv", ".gz")
MAX_CACHED_ANALYSES = 4   # the demo network holds ~90 MB of results


def demo_sources() -> tuple[tuple[tuple[str, bytes], ...], str | None]:
    """The bundled demo network: its log files as (name, bytes) and the text of its links table."""
    folder = DEMO_DIR / "logs"
    files = sorted(p for p in folder.iterdir() if p.is_file() and p.name.lower().endswith(LOG_SUFFIXES)) \
        if folder.is_dir() else []
    links_path = DEMO_DIR / "links.csv"
    links_text = links_path.read_text(encoding="utf-8") if links_path.is_file() else None
    return tuple((p.name, p.read_bytes()) for p in files), links_text


def digest(*parts) -> str:
    """Cache key: SHA-256 over file names, file bytes and the parameters."""
    h = hashlib.sha256()
    for part in parts:
        if isinstance(part, bytes):
            h.update(len(part).to_bytes(8, "little"))
            h.update(part)
        else:
            h.update(json.dumps(part, sort_keys=True, default=str).encode())
        h.update(b"\x00")
    return h.hexdigest()


@st.cache_resource(show_spinner=False)
def _analysis_store() -> tuple[OrderedDict, threading.Lock]:
    """Analyses kept in memory across reruns, most recently used last, keyed by ``digest``.

    A small LRU rather than ``st.cache_data``: the analysis reports progress to a bar drawn outside it, which
    Streamlit's cached-function replay does not allow.  Results are the library's own objects, shared read-only.
    """
    return OrderedDict(), threading.Lock()


@st.cache_data(show_spinner=False, max_entries=64)
def read_report(name: str, data: bytes, tz: str, mapping_json: str) -> dict:
    """What the reader detected in one file (its report as a dict); raises ``InputError`` for a bad file."""
    from diag.read.ingest import read_log

    mapping = json.loads(mapping_json) if mapping_json else None
    return read_log(data, name=name, tz=tz or None, mapping=mapping).report.to_dict()


def analyse(sources, links: list[Link], tz: str, mapping: dict | None, progress=None, config=None):
    """``diag.pipeline.analyze_files`` over the given files, cached by file bytes and parameters.  Several hops are
    analysed together, so under the posterior attribution their fades corroborate each other (as in ``analyze``).
    ``config``: a ``diag.config.AnalysisConfig`` (None: the library's default, which the page uses)."""
    from dataclasses import asdict

    from diag.pipeline import analyze_files

    key = digest([n for n, _ in sources], *[b for _, b in sources], [link.to_dict() for link in links], tz,
                 mapping, asdict(config) if config is not None else None)
    store, lock = _analysis_store()
    with lock:
        if key in store:
            store.move_to_end(key)
            return key, store[key]
    results = analyze_files(list(sources), links=links, tz=tz or None, mapping=mapping, progress=progress,
                            config=config)
    with lock:
        store[key] = results
        while len(store) > MAX_CACHED_ANALYSES:
            store.popitem(last=False)
    return key, results


@st.cache_data(show_spinner=False, max_entries=16)
def table_files(key: str, _results) -> dict[str, bytes]:
    """The CSV and JSON files the command line writes (``diag.report``), as bytes, keyed like the analysis."""
    from diag import report

    return {"events.csv": report.events_csv_bytes(_results),
            "outage_summary.csv": report.outage_summary_csv_bytes(_results),
            "outage_by_cause.csv": report.outage_by_cause_csv_bytes(_results),
            "findings.json": report.findings_json_bytes(_results)}


def pdf_file(key: str, results) -> bytes:
    """The PDF report (built on first request and kept with the analysis)."""
    from diag import report

    store, lock = _analysis_store()
    pdf_key = f"{key}:pdf"
    with lock:
        if pdf_key in store:
            return store[pdf_key]
    data = report.pdf_bytes(results)
    with lock:
        store[pdf_key] = data
    return data


# --- drawing helpers --------------------------------------------------------------------------------------------


def downloads(key: str, results) -> None:
    st.markdown("#### Files for the report")
    st.caption("The same files `python -m diag analyze` writes, for all hops analysed here.")
    try:
        files = table_files(key, results)
    except InputError as exc:
        show_input_error(exc)
        return
    mimes = {".csv": "text/csv", ".json": "application/json"}
    columns = st.columns(3)
    columns[0].download_button("report.pdf", lambda: pdf_file(key, results), file_name="report.pdf",
                               mime="application/pdf", key="dl_report.pdf", on_click="ignore", type="primary",
                               icon=":material/picture_as_pdf:", width="stretch")
    for number, (name, data) in enumerate(files.items(), start=1):
        columns[number % 3].download_button(name, data, file_name=name, mime=mimes[Path(name).suffix],
                                            key=f"dl_{name}", on_click="ignore", icon=":material/download:",
                                            width="stretch")

    def bundle() -> bytes:
        buffer = io.BytesIO()
        with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
            for name, data in {**files, "report.pdf": pdf_file(key, results)}.items():
                archive.writestr(name, data)
        return buffer.getvalue()

    columns[(len(files) + 1) % 3].download_button(
        "all files (zip)", bundle, file_name="diag_results.zip", mime="application/zip", key="dl_zip",
        on_click="ignore", icon=":material/folder_zip:", width="stretch")


# --- the page ---------------------------------------------------------------------------------------------------


def main() -> None:
    # the icon is drawn here (no file, nothing fetched from another host: the page works offline)
    st.set_page_config(page_title="diag · hop fade diagnosis", page_icon=page_icon(), layout="wide")
    st.markdown("## Why did the hop fade?")
    st.caption("Receive-level logs in; fade events, their causes and the outage each cause cost out — rain, "
               "clear-air multipath, refractive fading, level shifts, equipment signal loss.")
    choice = sidebar()

    if choice["mode"] == "Demo network":
        sources, links_text = demo_sources()
        if not sources or links_text is None:
            st.warning("The bundled demo network (demo_logs/) is not installed; choose “My files”.")
            return
        links_name = "demo_logs/links.csv"
        st.caption("Showing the bundled demo network (invented hops). Choose “My files” in the sidebar to "
                   "analyse your own logs.")
    else:
        uploads = list(choice["logs"] or [])
        for f in uploads:
            if f.name.lower().endswith(SPREADSHEET_SUFFIXES):
                st.error(f"{md(f.name)} is a spreadsheet workbook, which diag does not read: open it, save the "
                         "sheet as CSV (comma- or semicolon-separated text) and upload that file.",
                         icon=":material/warning:")
        sources = tuple((f.name, f.getvalue()) for f in uploads
                        if not f.name.lower().endswith(SPREADSHEET_SUFFIXES))
        links_text, links_name = None, ""
        if choice["links"] is not None:
            links_name = choice["links"].name
            raw = choice["links"].getvalue()
            try:
                links_text = raw.decode("utf-8-sig")
            except UnicodeDecodeError:
                links_text = raw.decode("latin-1")
        if not sources:
            st.info("Upload one or more receive-level logs in the sidebar (CSV or .csv.gz; 1-s samples or "
                    "interval min/avg/max statistics), and optionally a links table with the hops' parameters.")
            return

    links: list[Link] = []
    if links_text is not None:
        try:
            links = read_links_table(links_name, text=links_text)
        except InputError as exc:
            show_input_error(exc)
            return

    mapping = st.session_state.get("mapping") or None
    mapping_json = json.dumps(mapping, sort_keys=True) if mapping else ""
    reports: dict[str, dict] = {}
    errors: dict[str, str] = {}
    with st.spinner("Reading the logs…"):
        for name, data in sources:
            try:
                reports[name] = read_report(name, data, choice["tz"], mapping_json)
            except InputError as exc:
                errors[name] = exc.one_line()
    good = tuple((n, b) for n, b in sources if n in reports)
    if not good:
        for name, message in errors.items():
            st.error(f"{md(name)} cannot be read: {md(message)}", icon=":material/warning:")
        st.markdown("#### What the reader found")
        input_check({}, {}, expanded_editor=True)
        return
    for name, message in errors.items():
        st.error(f"{md(name)} cannot be read and is left out: {md(message)}", icon=":material/warning:")

    # hops: one per link id the reader found, matched to the links table where one is given
    hops: dict[str, Link | None] = {}
    for name, report in reports.items():
        for hop in [i for i in report.get("links") or [] if i and i != schema.DEFAULT_LINK_ID] \
                or [file_stem(name)]:   # as the reader names it: never an empty id ('.csv')
            st.session_state.setdefault("hop_channels", {})[hop] = report.get("channels") or []
            base = None
            if links:
                try:
                    found = assign_hops([hop], links, file_name=name,
                                        names_hop=report.get("link_source") in NAMED_SOURCES).hops[hop]
                    base = next(link for link in links if link.link_id == found)
                except InputError:
                    base = None
            hops.setdefault(base.link_id if base else hop, base)
    chosen_links: list[Link] = []
    need = any(base is None for base in hops.values())
    with st.expander("Link parameters", expanded=need):
        st.caption("Pre-filled from the links table when one is given; change a value and press the button to "
                   "analyse again.")
        names = list(hops)
        pick = st.selectbox("Hop", names, key="param_hop", on_change=_follow, args=("param_hop", "hop"),
                            help="follows the Hop chosen below, and the other way round") \
            if len(names) > 1 else names[0]
        for hop in names:
            link = link_form(hop, hops[hop]) if hop == pick else _link_without_form(hop, hops[hop])
            if link is not None:
                chosen_links.append(link)
    if len(chosen_links) < len(hops):
        missing = [h for h in hops if h not in {link.link_id for link in chosen_links}]
        st.info(f"Analysis starts once every hop has its frequency, length, polarisation and threshold (still missing: "
                f"{md(', '.join(missing))}). Several files of one hop that name no hop: give them one hop id under "
                "“Correct the detection” below, or upload a links table.")
        st.markdown("#### What the reader found")
        input_check(reports, errors)
        return

    bar = st.progress(0.0, text="Analysing…")

    def progress(done, total, message):
        bar.progress(min(1.0, done / total) if total else 0.0, text=str(message)[:120])

    try:
        key, results = analyse(good, chosen_links, choice["tz"], mapping, progress=progress)
    except InputError as exc:
        bar.empty()
        show_input_error(exc)
        st.markdown("#### What the reader found")
        input_check(reports, errors)
        return
    bar.empty()
    if not results:
        st.warning("No hop could be analysed.")
        return

    if len(results) > 1:
        st.markdown("#### Network")
        cols = views.NETWORK_COLUMNS
        st.dataframe(views.network_table(results), hide_index=True, width="stretch",
                     height=fit_height(len(results), 420), column_config={
                         cols[1]: st.column_config.TextColumn("Availability %",
                                                              help=glossary.definition("availability")),
                         cols[2]: st.column_config.NumberColumn("Objective %", format="%.3f", width="small",
                                                                help=glossary.definition("objective")),
                         cols[3]: st.column_config.TextColumn(cols[3],
                                                              help=glossary.definition("meets_objective")),
                         cols[4]: st.column_config.TextColumn("Outage h:mm:ss", help=glossary.definition("outage")),
                         cols[5]: st.column_config.TextColumn("Below threshold h:mm:ss",
                                                              help=glossary.definition("below_threshold")),
                         cols[6]: st.column_config.NumberColumn("Events", width="small",
                                                                help="fade events found on the hop"),
                         cols[7]: st.column_config.TextColumn(cols[7], help=glossary.definition("main_cause"))})
    network = views.network_table(results)
    by_id = {r.link.link_id: r for r in results}
    order = [h for h in network["Hop"] if h in by_id] or list(by_id)
    hop_id = st.selectbox("Hop", order, key="hop", help="worst availability first", on_change=_follow,
                          args=("hop", "param_hop")) if len(order) > 1 else order[0]
    result = by_id[hop_id]
    hop = views.hop_overview(result)
    link = result.link
    st.markdown(f"### Hop {md(hop_id)}")
    st.caption(f"{link.frequency_ghz:g} GHz · {link.length_km:g} km · polarisation {link.polarization} · "
               f"threshold {link.threshold_dbm:g} dBm · {hop['events']} fade events")
    tabs = st.tabs(["Overview", "Level timeline", "Fade events", "Fading statistics", "Cross-polar",
                    "Input check"])
    with tabs[0]:
        overview(result, hop)
    with tabs[1]:
        level_timeline(result)
    with tabs[2]:
        event_list(result)
    with tabs[3]:
        fading_statistics(result)
    with tabs[4]:
        cross_polar(result)
    with tabs[5]:
        input_check(reports, errors)
    st.divider()
    downloads(key, results)


def _follow(source: str, target: str) -> None:
    """Widget callback: the two Hop selectors (parameters, results) follow each other.  Runs before the next rerun,
    so the other selector is not drawn yet and may be set; a hop it does not list is left alone."""
    value = st.session_state.get(source)
    if value is not None:
        st.session_state[target] = value


def page_icon():
    """A small tower-and-waves icon drawn with Pillow (Streamlit serves it from this server)."""
    from PIL import Image, ImageDraw

    image = Image.new("RGBA", (64, 64), (0, 0, 0, 0))
    draw = ImageDraw.Draw(image)
    ink = (27, 94, 122, 255)
    draw.line([(32, 14), (18, 60)], fill=ink, width=5)
    draw.line([(32, 14), (46, 60)], fill=ink, width=5)
    draw.line([(24, 40), (40, 40)], fill=ink, width=4)
    for r in (10, 18):
        draw.arc([32 - r, 14 - r, 32 + r, 14 + r], start=200, end=340, fill=ink, width=3)
    return image


def run() -> None:
    """The page, with its last-resort error handling: bad input is one line, a bug one line plus the server log."""
    try:
        main()
    except InputError as exc:  # bad input that slipped past the page's own checks: still one line
        st.error(md(exc.one_line()), icon=":material/warning:")
    except Exception as exc:  # a bug: one line in the page, the traceback only in the server log
        LOG.exception("dashboard failed")
        st.error(f"Internal error ({type(exc).__name__}): {md(str(exc)[:300])}", icon=":material/error:")
