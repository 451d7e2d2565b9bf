"""diag dashboard: drop in a hop's receive-level logs, see why it faded and what each cause cost.

Run it with ``.venv/bin/streamlit run dashboard.py`` (settings in ``.streamlit/config.toml``: loopback only, upload
limit).  The page only draws: reading (``diag.read.ingest``), analysis (``diag.pipeline``), outage accounting and the
report files (``diag.report``) come from the library; ``diag.report.views`` shapes the tables the charts take.

Nothing from an uploaded file is executed or unpickled: uploads are bytes handed to the CSV reader, and results
stay in this process's memory.  The page writes no file.
"""
from __future__ import annotations

import datetime as dt
import hashlib
import io
import json
import logging
import os
import re
import threading
import zipfile
from collections import OrderedDict
from pathlib import Path

import altair as alt
import pandas as pd
import streamlit as st

from diag import __version__, schema
from diag.errors import InputError
from diag.links import OPTIONAL, Link, make_link, polarisation_from_channels, read_links_table
from diag.read.hops import NAMED_SOURCES, assign_hops
from diag.read.sniff import file_stem
from diag.report import views

LOG = logging.getLogger("diag.dashboard")
ROOT = Path(__file__).resolve().parent
DEMO_DIR = Path(os.environ.get("DIAG_DEMO_DIR") or ROOT / "demo_logs")
LOG_SUFFIXES = (".csv", ".csv.gz", ".txt", ".tsv", ".gz")
MAX_CACHED_ANALYSES = 4   # the demo network holds ~90 MB of results
QUANTITY_CHOICES = ["rsl", "tsl", "xpd", "xpl", "es", "ses", "uas"]

SAFETY_NOTE = ("Before any work on site: climbing and work near antennas is hazardous. Follow the local codes for "
               "work at height and fall protection, respect the RF exposure limits (switch the transmitter off or "
               "stay out of the exclusion zone), and leave the work to trained, licensed staff.")


# --- data in and cached analysis --------------------------------------------------------------------------------
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


def analyse(sources, links: list[Link], tz: str, mapping: dict | None, progress=None):
    """``diag.pipeline.analyze_files`` over the given files, cached by file bytes and parameters."""
    from diag.pipeline import analyze_files

    key = digest([n for n, _ in sources], *[b for _, b in sources], [link.to_dict() for link in links], tz,
                 mapping)
    store, lock = _analysis_store()
    with lock:
        if key in store:
            store.move_to_end(key)
            return key, store[key]
    results = analyze_files(list(sources), links=links, tz=tz or None, mapping=mapping, progress=progress)
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
def cause_scale() -> alt.Scale:
    from diag.report.style import CAUSE_COLORS

    return alt.Scale(domain=[views.cause_label(c) for c in schema.CAUSES],
                     range=[CAUSE_COLORS[c] for c in schema.CAUSES])


def cause_shapes() -> alt.Scale:
    """Marker shapes by cause, so causes differ by shape as well as colour."""
    shapes = ["circle", "square", "triangle-up", "diamond", "cross", "triangle-down"]
    return alt.Scale(domain=[views.cause_label(c) for c in schema.CAUSES], range=shapes[:len(schema.CAUSES)])


def curve_colours(curves: list[str]) -> alt.Scale:
    """Exceedance curves: rain curves in the rain colour, multipath in the multipath colour (measured solid,
    prediction dotted), all fades in ink, the Rayleigh reference in a neutral violet."""
    from diag.report.style import CAUSE_COLORS, INK

    def colour(name: str) -> str:
        if "rain" in name:
            return CAUSE_COLORS[schema.RAIN]
        if "multipath" in name:
            return CAUSE_COLORS[schema.MULTIPATH]
        if "Rayleigh" in name:
            return "#6a51a3"
        return "#8a8a8a" if "upper bound" in name else INK

    return alt.Scale(domain=curves, range=[colour(c) for c in curves])


def cause_legend(present: list[str]) -> alt.Legend:
    return alt.Legend(values=[views.cause_label(c) for c in present], title="cause", orient="bottom")


_MD_SPECIAL = re.compile(r"([\\`*_\[\]<>|$~])")


def md(text) -> str:
    """Text from files or the library made safe for Streamlit's markdown: one line, markup characters escaped
    (a hop id like ``**x**`` or ``[a](b)`` or ``$y$`` is shown as written, never rendered)."""
    return _MD_SPECIAL.sub(r"\\\1", " ".join(str(text).split()))


def show_input_error(exc: InputError, *, prefix: str = "") -> None:
    st.error(f"{prefix}{md(exc.one_line())}", icon=":material/warning:")


def fit_height(rows: int, most: int = 460) -> int:
    """Pixel height that shows ``rows`` table rows without empty space (scrolls beyond ``most``)."""
    return min(most, 35 * (rows + 1) + 3)


TIME_AXIS = alt.Axis(format="%d %b %H:%M", labelOverlap=True)


def _utc_naive(stamp: pd.Timestamp) -> dt.datetime:
    return stamp.tz_convert("UTC").tz_localize(None).to_pydatetime()


# --- sidebar and inputs -----------------------------------------------------------------------------------------
def sidebar() -> dict:
    st.sidebar.markdown("### Logs")
    mode = st.sidebar.radio("Data", ["Demo network", "My files"], key="mode", horizontal=True,
                            help="The demo network is bundled with diag (invented operator and hops).")
    choice: dict = {"mode": mode, "logs": [], "links": None}
    if mode == "My files":
        choice["logs"] = st.sidebar.file_uploader(
            "Receive-level logs", type=["csv", "gz", "txt", "tsv"], accept_multiple_files=True, key="logs",
            help="Exports of the radios' management system in any layout the reader knows; .csv.gz accepted.")
        choice["links"] = st.sidebar.file_uploader(
            "Links table (optional)", type=["csv", "txt"], key="links_file",
            help="Columns link_id, frequency_ghz, length_km, polarization, threshold_dbm (+ optional ones).")
    choice["tz"] = st.sidebar.text_input(
        "Time zone of local time stamps", key="tz", placeholder="blank: UTC or as written in the file",
        help="IANA zone name (Region/City), used only for stamps written without an offset.").strip()
    st.sidebar.divider()
    st.sidebar.caption(f"diag {__version__}. Everything is computed on this server; uploads are read as CSV "
                       "text and kept in memory only.")
    return choice


def link_form(hop: str, base: Link | None) -> Link | None:
    """The parameter form of one hop (pre-filled from the links table); returns the Link the analysis uses."""
    overrides: dict = st.session_state.setdefault("link_overrides", {})
    values = dict(base.to_dict()) if base else {"link_id": hop}
    values.update(overrides.get(hop, {}))
    with st.form(key=f"form_{hop}", border=False):
        c1, c2, c3, c4 = st.columns(4)
        freq = c1.number_input("Frequency (GHz)", min_value=1.0, max_value=100.0, step=0.5,
                               value=values.get("frequency_ghz"), key=f"f_{hop}")
        length = c2.number_input("Length (km)", min_value=0.01, max_value=200.0, step=0.1,
                                 value=values.get("length_km"), key=f"d_{hop}")
        pols = ["H", "V", "dual"]
        known = values.get("polarization") or polarisation_from_channels(
            st.session_state.get("hop_channels", {}).get(hop, []))   # from the channels, else asked: never assumed
        pol = c3.selectbox("Polarisation", pols, index=pols.index(known) if known in pols else None,
                           placeholder="choose H, V or dual", key=f"p_{hop}")
        thr = c4.number_input("Receiver threshold (dBm)", min_value=-120.0, max_value=-20.0, step=0.5,
                              value=values.get("threshold_dbm"), key=f"t_{hop}")
        c5, c6, c7, c8 = st.columns(4)
        nominal = c5.number_input("Nominal level (dBm, optional)", min_value=-120.0, max_value=10.0, step=0.5,
                                  value=values.get("nominal_dbm"), key=f"n_{hop}")
        r001 = c6.number_input("R0.01 (mm/h, optional)", min_value=0.0, max_value=300.0, step=1.0,
                               value=values.get("r001_mmh"), key=f"r_{hop}")
        objective = c7.number_input("Availability objective (%)", min_value=50.0, max_value=100.0, step=0.001,
                                    format="%.4f", value=values.get("objective_pct"), key=f"o_{hop}")
        xpd = c8.number_input("XPD requirement (dB, optional)", min_value=0.0, max_value=60.0, step=1.0,
                              value=values.get("xpd_required_db"), key=f"x_{hop}")
        submitted = st.form_submit_button("Use these parameters", type="primary")
    if submitted:
        overrides[hop] = {"frequency_ghz": freq, "length_km": length, "polarization": pol, "threshold_dbm": thr,
                          "nominal_dbm": nominal, "r001_mmh": r001, "objective_pct": objective,
                          "xpd_required_db": xpd}
        values.update(overrides[hop])
    return _make(hop, values, show=True)


def _make(hop: str, values: dict, *, show: bool) -> Link | None:
    missing = [label for label, name in (("frequency", "frequency_ghz"), ("length", "length_km"),
                                         ("polarisation", "polarization"), ("threshold", "threshold_dbm"))
               if values.get(name) is None]
    if missing:
        if show:
            st.info(f"Hop **{md(hop)}**: enter the {', '.join(missing)} to analyse it.")
        return None
    try:
        return make_link({k: v for k, v in values.items() if k in ("link_id", "polarization", "frequency_ghz",
                                                                   "length_km", "threshold_dbm", *OPTIONAL)},
                         where=f"parameters of hop {hop}")
    except InputError as exc:
        if show:
            show_input_error(exc)
        return None


def _link_without_form(hop: str, base: Link | None) -> Link | None:
    """The Link of a hop whose form is not on screen: its table row with the user's earlier edits applied."""
    values = dict(base.to_dict()) if base else {"link_id": hop}
    values.update(st.session_state.get("link_overrides", {}).get(hop, {}))
    return _make(hop, values, show=False)


def mapping_editor(reports: dict[str, dict], errors: dict[str, str]) -> None:
    """Correct what the reader detected: a mapping (``diag.read.ingest`` keys) applied to every file of this upload."""
    columns = sorted({c for r in reports.values() for c in [*(r.get("columns") or {}),
                                                            *(r.get("ignored_columns") or [])]})
    current = st.session_state.get("mapping") or {}
    st.caption("Applies to every file of this upload. Leave a field empty to keep what was detected.")
    with st.form("mapping_form", border=False):
        c1, c2, c3 = st.columns(3)
        time_default = ", ".join((current.get("time") or {}).get("columns") or [])
        time_cols = c1.text_input("Time column(s), comma separated", value=time_default, key="map_time",
                                  help=("Columns: " + ", ".join(columns)) if columns else None)
        formats = ["detect", "iso", "epoch_s", "epoch_ms", "%d.%m.%Y %H:%M:%S", "%m/%d/%Y %I:%M:%S %p",
                   "%d/%m/%Y %H:%M"]
        fmt = c2.selectbox("Time format", formats, key="map_format",
                           index=formats.index((current.get("time") or {}).get("format", "detect"))
                           if (current.get("time") or {}).get("format", "detect") in formats else 0)
        marks = c3.selectbox("Stamps mark the", ["detect", "start", "end"], help="of each statistics interval",
                             key="map_marks")
        c4, c5, c6 = st.columns(3)
        link_id = c4.text_input("Hop id for these files", value=(current.get("link") or {}).get("id", ""),
                                key="map_link")
        floor = c5.text_input("Receiver floor (dBm, or 'none')",
                              value=str((current.get("floor") or {}).get("dbm", "")), key="map_floor")
        header = c6.number_input("Header on line", min_value=1, max_value=500, step=1,
                                 value=(current.get("file") or {}).get("header_line"), key="map_header")
        signals_text = st.text_area(
            "Signal columns, one per line: column = quantity[:channel[:stat[:interval_s]]]",
            value="\n".join(f"{col} = {spec.get('quantity', 'rsl')}" + (f":{spec['channel']}" if spec.get("channel")
                                                                        else "")
                            + (f":{spec['stat']}" if spec.get("stat") else "")
                            for col, spec in (current.get("signals") or {}).items()),
            placeholder="Level A = rsl:A\nRx min = rsl:V:min", height=90, key="map_signals",
            help="quantity: " + ", ".join(QUANTITY_CHOICES) + "; stat: sample, min, avg, max; an optional fourth "
                 "part is the statistics interval in seconds (e.g. RSL low = rsl:H:min:900)")
        applied = st.form_submit_button("Apply to the reader", key="map_apply")
    if st.button("Back to automatic detection", disabled=not current, key="map_reset"):
        st.session_state.pop("mapping", None)
        st.rerun()
    if applied:
        from diag.read.mapping import mapping_from_options

        lines = [re.sub(r"\s*([=:])\s*", r"\1", line.strip()) for line in signals_text.splitlines() if line.strip()]
        try:
            mapping = mapping_from_options(
                time_cols=[c.strip() for c in time_cols.split(",") if c.strip()] or None,
                time_format=None if fmt == "detect" else fmt, time_marks=None if marks == "detect" else marks,
                signal_cols=lines or None, floor=floor.strip() or None,
                header_line=int(header) if header else None)
        except InputError as exc:
            show_input_error(exc, prefix="Correct the detection: ")
            return
        if link_id.strip():
            mapping["link"] = {"id": link_id.strip()}
        st.session_state["mapping"] = mapping or None
        st.rerun()


def input_check(reports: dict[str, dict], errors: dict[str, str], *, expanded_editor: bool = False) -> None:
    """What the reader detected in each file, the rows it kept or not, and the detection override."""
    for name, message in errors.items():
        st.error(f"{md(name)} was left out: {md(message)}", icon=":material/warning:")
    for name, report in reports.items():
        with st.container(border=True):
            st.markdown(f"**{md(name)}**")
            left, right = st.columns([3, 2])
            summary = views.reader_summary(report)
            left.dataframe(summary, hide_index=True, width="stretch", height=fit_height(len(summary), 600))
            roles = views.column_roles(report)
            right.dataframe(roles, hide_index=True, width="stretch", height=fit_height(len(roles), 320))
            rejected = views.rejected_rows(report)
            if len(rejected):
                right.dataframe(rejected, hide_index=True, width="stretch", height=fit_height(len(rejected), 250))
            for guess in report.get("guesses") or []:
                st.info(f"Guessed: {md(guess)}. To change it, use “Correct the detection” below.",
                        icon=":material/search:")
            for note in report.get("warnings") or []:
                st.warning(md(note))
    unsure = bool(errors) or any(r.get("guesses") for r in reports.values())
    with st.expander("Correct the detection", expanded=expanded_editor or (unsure and bool(errors))):
        mapping_editor(reports, errors)


# --- result views -----------------------------------------------------------------------------------------------
def overview(result, hop: dict) -> None:
    if hop["error"]:
        st.error(f"Hop {md(hop['link_id'])} could not be analysed: {md(hop['error'])}")
        return
    exact = all(pair[0] == pair[1] for pair in (hop["availability_pct"], hop["unavailable_min"]))
    c1, c2, c3, c4 = st.columns(4) if exact else (*st.columns(2), *st.columns(2))
    low, high = hop["availability_pct"]
    objective = hop["objective_pct"]
    if low is not None and low == high and objective is not None:
        delta = f"{low - objective:+.4f} % vs objective {objective:g} %"
    else:
        delta = None
    c1.metric("Availability", views.range_text(hop["availability_pct"], "{:.4f}" if low == high else "{:.3f}",
                                               " %"), delta=delta,
              delta_color="normal",
              help=None if hop["exact"] else "Bounds: the logs are too coarse to count seconds exactly. "
              + hop["method"])
    verdict = {True: "meets the objective", False: "**misses the objective**"}.get(
        hop["meets_objective"], "objective: " + (hop["meets_text"] or "not given"))
    c1.caption(verdict + (f" ({objective:g} %)" if objective is not None and delta is None else ""))
    c2.metric("Unavailable time", views.range_text(hop["unavailable_min"], "{:.1f}", " min"),
              help="ITU-T G.826 rule: 10 consecutive severely errored seconds start unavailable time")
    c3.metric("Time below threshold", views.range_text(hop["below_threshold_min"], "{:.1f}", " min"))
    c4.metric("Main cause", hop["dominant_cause_label"],
              help="cause with the most unavailable time (time below threshold for coarse logs)")
    if hop["period_start_utc"]:
        gap = views.no_data_share(result)
        st.caption(f"Analysed period (UTC): {hop['period_start_utc']} → {hop['period_end_utc']}"
                   + (f" · no data for {gap:.2%} of it (gaps are never counted as outage)" if gap else ""))

    left, right = st.columns([3, 2], gap="large")
    with left:
        st.markdown("##### Outage by cause")
        table = views.outage_minutes_by_cause(result)
        if len(table) == 0:
            st.success("No fade event in this period.")
        elif table["below_threshold_hi_min"].max() <= 0:
            st.success("No fade reached the receiver threshold in this period.")
            st.dataframe(table[["cause_label", "events"]], hide_index=True,
                         column_config={"cause_label": "Cause", "events": "Fade events"})
        else:
            table["label"] = [views.range_text((lo, hi), "{:.1f}", " min") for lo, hi in
                              zip(table["below_threshold_lo_min"], table["below_threshold_hi_min"])]
            base = alt.Chart(table).encode(
                y=alt.Y("cause_label:N", sort=None, title=None, axis=alt.Axis(labelLimit=220)),
                tooltip=[alt.Tooltip("cause_label:N", title="cause"), alt.Tooltip("events:Q", title="events"),
                         alt.Tooltip("label:N", title="below threshold"),
                         alt.Tooltip("unavailable_hi_min:Q", format=".1f", title="unavailable (min, upper)")])
            color = alt.Color("cause_label:N", scale=cause_scale(), legend=None)
            upper = base.mark_bar(opacity=0.35).encode(x=alt.X("below_threshold_hi_min:Q",
                                                               title="minutes below threshold"), color=color)
            lower = base.mark_bar().encode(x="below_threshold_lo_min:Q", color=color)
            text = base.mark_text(align="left", dx=4).encode(x="below_threshold_hi_min:Q", text="label:N")
            st.altair_chart((upper + lower + text).properties(height=44 * len(table) + 50), width="stretch")
            if not table["exact"].all():
                st.caption("Solid: time certainly below threshold; light: the most it can have been (coarse logs).")
            shown = pd.DataFrame({
                "Cause": table["cause_label"], "Fade events": table["events"],
                "Below threshold": table["label"],
                "Unavailable": [views.range_text((lo, hi), "{:.1f}", " min") for lo, hi in
                                zip(table["unavailable_lo_min"], table["unavailable_hi_min"])]})
            st.dataframe(shown, hide_index=True, width="stretch")
    with right:
        st.markdown("##### What to look at first")
        findings = views.top_findings(result)
        if not findings:
            st.caption("No findings for this hop.")
        any_action = False
        cautions: list[str] = []
        for item in findings:
            with st.container(border=True):
                st.markdown(f"**{md(item['title'])}**")
                if item["detail"]:
                    st.markdown(md(item["detail"]))
                for action in item["actions"]:
                    any_action = True
                    st.markdown(f"- {md(action)}")
            cautions += [c for c in item["cautions"] if c not in cautions]
        if any_action or cautions:
            st.warning("**Before any work on site.** " + (md(" ".join(cautions)) if cautions else SAFETY_NOTE),
                       icon=":material/warning:")
    if result.skipped:
        with st.expander(f"Checks skipped ({len(result.skipped)})"):
            for line in dict.fromkeys(result.skipped):
                st.markdown(f"- {md(line)}")


def level_timeline(result) -> None:
    channels = list(result.series)
    if not channels:
        st.info("No level series for this hop.")
        return
    hop = result.link.link_id
    c1, c2, c3 = st.columns([1, 1, 3])
    channel = c1.selectbox("Channel", channels, key=f"tl_ch_{hop}")
    plot = c2.radio("Plot", ["Receive level", "Fade depth"], key=f"tl_plot_{hop}",
                    help="Fade depth = clear-sky reference minus level, with transmit-power (ATPC) changes removed")
    series = result.series[channel]
    span = views.series_span(series)
    if span is None:
        st.info("This channel has no samples.")
        return
    first, last = (_utc_naive(t) for t in span)
    step = dt.timedelta(seconds=max(60.0, series.interval_s))
    window = (first, last)
    if last - first > step:
        key = f"tl_win_{hop}_{channel}"
        saved = st.session_state.get(key)
        if not (isinstance(saved, tuple) and first <= saved[0] <= saved[1] <= last):
            st.session_state[key] = (first, last)
        window = c3.slider("Time window (UTC)", min_value=first, max_value=last, step=step, format="MM-DD HH:mm",
                           key=key)
    start, end = (pd.Timestamp(w, tz="UTC") for w in window)
    fade = plot == "Fade depth"
    if fade:
        line = views.timeline(series, start=start, end=end, max_points=1500, column="attenuation_db",
                              low_column="attenuation_low_db", high_column="attenuation_peak_db")
        line["limit"] = line["reference_dbm"] - result.link.threshold_dbm    # fade margin
        y_title, limit_text = "fade depth (dB), deeper down", "fade margin (reference − threshold)"
        y_scale = alt.Scale(zero=False, reverse=True)
    else:
        line = views.timeline(series, start=start, end=end, max_points=1500)
        line["limit"] = result.link.threshold_dbm
        y_title, limit_text = "receive level (dBm)", "receiver threshold"
        y_scale = alt.Scale(zero=False)
    spans = views.event_spans(result.events, channel=channel, start=start, end=end)
    present = [c for c in schema.CAUSES if c in set(spans["cause"])]
    x = alt.X("time_utc:T", title="time (UTC)", axis=TIME_AXIS)
    layers = []
    if len(spans):
        edge = pd.concat([line["level_max_dbm"], line["level_min_dbm"], line["limit"]])
        spans["marker"] = float(edge.min() - 3.0) if fade else float(edge.max() + 3.0)
        event_tooltip = [alt.Tooltip("cause_label:N", title="cause"),
                         alt.Tooltip("start_utc:T", format="%Y-%m-%d %H:%M:%S", title="start"),
                         alt.Tooltip("duration_s:Q", format=".0f", title="duration (s)"),
                         alt.Tooltip("peak_fade_db:Q", format=".1f", title="peak fade (dB)")]
        layers.append(alt.Chart(spans).mark_rect(opacity=0.2).encode(
            x="start_utc:T", x2="end_utc:T", tooltip=event_tooltip,
            color=alt.Color("cause_label:N", scale=cause_scale(), legend=cause_legend(present))))
        layers.append(alt.Chart(spans).mark_point(filled=True, size=80, opacity=0.95).encode(
            x="start_utc:T", y=alt.Y("marker:Q", scale=y_scale), tooltip=event_tooltip,
            color=alt.Color("cause_label:N", scale=cause_scale(), legend=cause_legend(present)),
            shape=alt.Shape("cause_label:N", scale=cause_shapes(), legend=cause_legend(present))))
        from diag.report.style import CAUSE_MARKS

        spans["mark"] = spans["cause"].map(lambda c: CAUSE_MARKS.get(c, "?"))
        layers.append(alt.Chart(spans).mark_text(dy=13, fontSize=10, fontWeight="bold", color="#1d2329").encode(
            x="start_utc:T", y=alt.Y("marker:Q", scale=y_scale), text="mark:N"))
    layers.append(alt.Chart(line).mark_area(opacity=0.3, color="#7a8791").encode(
        x=x, y=alt.Y("level_min_dbm:Q", title=y_title, scale=y_scale), y2="level_max_dbm:Q"))
    if not fade:
        layers.append(alt.Chart(line).mark_line(color="#1b5e7a", strokeDash=[2, 3], strokeWidth=1.3).encode(
            x=x, y=alt.Y("reference_dbm:Q", scale=y_scale)))
    layers.append(alt.Chart(line).mark_line(color="#1d2329", strokeWidth=1).encode(
        x=x, y=alt.Y("level_dbm:Q", scale=y_scale),
        tooltip=[alt.Tooltip("time_utc:T", format="%Y-%m-%d %H:%M:%S", title="time (UTC)"),
                 alt.Tooltip("level_dbm:Q", format=".1f", title="fade (dB)" if fade else "level (dBm)"),
                 alt.Tooltip("limit:Q", format=".1f", title=limit_text)]))
    layers.append(alt.Chart(line).mark_line(color="#b2182b", strokeDash=[7, 4], strokeWidth=1.6).encode(
        x=x, y=alt.Y("limit:Q", scale=y_scale)))
    steps = [s for s in ((result.level_changes or {}).get("channels", {}).get(channel, {}).get("steps") or [])
             if start <= pd.Timestamp(s.get("time_utc")) <= end]
    if steps:
        frame = pd.DataFrame({"time_utc": [pd.Timestamp(s["time_utc"]) for s in steps],
                              "size_db": [s.get("size_db") for s in steps]})
        layers.append(alt.Chart(frame).mark_rule(color="#5e3c99", strokeWidth=1.5, strokeDash=[1, 2]).encode(
            x="time_utc:T", tooltip=[alt.Tooltip("time_utc:T", format="%Y-%m-%d %H:%M:%S", title="level step"),
                                     alt.Tooltip("size_db:Q", format="+.1f", title="step (dB)")]))
    chart = alt.layer(*layers).properties(height=400)
    st.altair_chart(chart.interactive(bind_y=False), width="stretch")
    what = ("Black: fade depth (grey band: shallowest–deepest within each plotted point). Red dashed: fade margin."
            if fade else "Black: receive level (grey band: lowest–highest within each plotted point). Blue dotted: "
            "clear-sky reference. Red dashed: receiver threshold.")
    st.caption(what + " Shading and markers along the edge: fade events, told apart by colour, shape and mark "
               "(RN rain, MP multipath, RF refractive, LS level shift, SL signal loss)"
               + ("; purple dotted: level steps" if steps else "")
               + ". Drag to pan, scroll to zoom, or narrow the time window for full detail.")


def event_list(result) -> None:
    events = result.events
    if events is None or len(events) == 0:
        st.info("No fade events were found for this hop.")
        return
    hop = result.link.link_id
    present = [c for c in schema.CAUSES if c in set(events["cause"].astype(str))]
    c1, c2 = st.columns([3, 1])
    chosen = c1.multiselect("Causes", present, default=present, format_func=views.cause_label,
                            key=f"ev_causes_{hop}")
    depth = c2.number_input("Peak fade at least (dB)", min_value=0.0, max_value=80.0, value=0.0, step=1.0,
                            key=f"ev_depth_{hop}")
    table = views.event_table(events, causes=chosen, min_peak_fade_db=depth)
    order = ["Start (UTC)", "Duration s", "Peak fade dB", "Cause", "Confidence", "Channel", "Evidence", "End (UTC)"]
    st.caption(f"{len(table)} of {len(events)} events. Click a column title to sort; select a row to read its "
               "evidence in full.")
    picked = st.dataframe(table, hide_index=True, width="stretch", height=fit_height(len(table)),
                          column_order=order, on_select="rerun", selection_mode="single-row",
                          key=f"ev_table_{hop}", column_config={
                              "Start (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm:ss"),
                              "End (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm:ss"),
                              "Duration s": st.column_config.NumberColumn(format="%.0f"),
                              "Peak fade dB": st.column_config.NumberColumn(format="%.1f"),
                              "Confidence": st.column_config.NumberColumn(format="%.2f"),
                              "Evidence": st.column_config.TextColumn(width="large")})
    rows = (picked.selection.rows if picked is not None and hasattr(picked, "selection") else []) or []
    if rows and rows[0] < len(table):
        row = table.iloc[rows[0]]
        st.info(f"**{md(row['Cause'])}** on {md(row['Channel'])}, {row['Start (UTC)']:%Y-%m-%d %H:%M:%S} → "
                f"{row['End (UTC)']:%H:%M:%S} UTC, peak {row['Peak fade dB']:.1f} dB: {md(row['Evidence'])}")
        st.button("Zoom the level timeline to this event", key=f"ev_zoom_{hop}", on_click=_zoom_timeline,
                  args=(result, str(row["Channel"]), row["Start (UTC)"], row["End (UTC)"]),
                  icon=":material/zoom_in:")


def _zoom_timeline(result, channel: str, start: pd.Timestamp, end: pd.Timestamp) -> None:
    """Button callback: point the timeline tab at one event (its duration again on each side, at least 30 min)."""
    series = result.series.get(channel)
    span = views.series_span(series) if series is not None else None
    if span is None:
        return
    margin = max(end - start, pd.Timedelta(minutes=30))
    first, last = (_utc_naive(t) for t in span)
    low = max(first, _utc_naive(start - margin))
    high = min(last, _utc_naive(end + margin))
    hop = result.link.link_id
    st.session_state[f"tl_ch_{hop}"] = channel
    st.session_state[f"tl_win_{hop}_{channel}"] = (low, max(low, high))


def fading_statistics(result) -> None:
    channels = (result.statistics or {}).get("channels") or {}
    if not channels:
        st.info("No fading statistics for this hop.")
        return
    names = list(channels)
    channel = st.radio("Channel", names, horizontal=True, key=f"fs_ch_{result.link.link_id}") \
        if len(names) > 1 else names[0]
    stats = channels[channel]
    left, right = st.columns([3, 2], gap="large")
    with left:
        st.markdown("##### Fade depth exceeded")
        curves = views.exceedance_curves(stats)
        if len(curves):
            chart = alt.Chart(curves).mark_line(point=True).encode(
                x=alt.X("depth_db:Q", title="fade depth (dB)"),
                y=alt.Y("percent:Q", title="% of time exceeded", scale=alt.Scale(type="log")),
                color=alt.Color("curve:N", title=None, scale=curve_colours(list(dict.fromkeys(curves["curve"]))),
                                legend=alt.Legend(orient="bottom", columns=2, labelLimit=320)),
                strokeDash=alt.StrokeDash("kind:N", legend=None, scale=alt.Scale(
                    domain=["measured", "theory", "prediction"], range=[[1, 0], [6, 3], [2, 2]])),
                tooltip=["curve:N", alt.Tooltip("depth_db:Q", format=".1f"),
                         alt.Tooltip("percent:Q", format=".4g")])
            st.altair_chart(chart.properties(height=340), width="stretch")
            notes = [stats.get("exceedance", {}).get("note"), stats.get("exceedance", {}).get("p530_note"),
                     (stats.get("rain") or {}).get("note")]
            st.caption("Solid: measured; dashed: Rayleigh distribution; dotted: ITU-R P.530 design prediction.")
            for note in filter(None, notes):
                st.caption(md(note))
        else:
            st.caption("No fade deep enough to draw an exceedance curve.")
    with right:
        st.markdown("##### Fading figures")
        for title, key in (("Rice K-factor (multipath)", "rice_k"), ("Level crossings and fade durations",
                                                                      "lcr_afd"), ("Rain", "rain")):
            part = stats.get(key) or {}
            if not part:
                continue
            st.markdown(f"**{title}**")
            if set(part) == {"skipped"}:
                st.caption(f"not computed: {md(part['skipped'])}")
            else:
                st.dataframe(views.key_figures(part, skip=("note",)), hide_index=True, width="stretch")
    st.markdown("##### Fading by hour of day (UTC)")
    hourly = views.hourly_fading(stats)
    if len(hourly) and hourly["faded_min"].sum() > 0:
        present = list(dict.fromkeys(hourly["cause"]))
        st.altair_chart(alt.Chart(hourly).mark_bar().encode(
            x=alt.X("hour:O", title="hour of day (UTC)"), y=alt.Y("faded_min:Q", title="faded minutes"),
            color=alt.Color("cause_label:N", scale=cause_scale(), legend=cause_legend(present)),
            tooltip=["hour:O", alt.Tooltip("cause_label:N", title="cause"),
                     alt.Tooltip("faded_min:Q", format=".1f", title="faded minutes"),
                     alt.Tooltip("event_starts:Q", title="fades starting")]).properties(height=240),
            width="stretch")
    else:
        st.caption("No faded time by hour.")


def cross_polar(result) -> None:
    xp = result.cross_polar or {}
    with_xpd = [ch for ch, s in result.series.items() if "xpd_db" in s.frame and s.frame["xpd_db"].notna().any()]
    if not with_xpd and not xp.get("xpd"):
        st.info("No cross-polar discrimination (XPD) was logged for this hop.")
        return
    if with_xpd:
        channel = st.radio("Channel", with_xpd, horizontal=True, key=f"xp_ch_{result.link.link_id}") \
            if len(with_xpd) > 1 else with_xpd[0]
        line = views.timeline(result.series[channel], column="xpd_db", max_points=1500)
        layers = [alt.Chart(line).mark_area(opacity=0.25, color="#7a8791").encode(
            x=alt.X("time_utc:T", title="time (UTC)", axis=TIME_AXIS),
            y=alt.Y("level_min_dbm:Q", title="XPD (dB)", scale=alt.Scale(zero=False)), y2="level_max_dbm:Q"),
            alt.Chart(line).mark_line(color="#1d2329", strokeWidth=1).encode(
                x="time_utc:T", y="level_dbm:Q",
                tooltip=[alt.Tooltip("time_utc:T", format="%Y-%m-%d %H:%M:%S"),
                         alt.Tooltip("level_dbm:Q", format=".1f", title="XPD (dB)")])]
        if result.link.xpd_required_db is not None:
            rule = pd.DataFrame({"level": [result.link.xpd_required_db], "what": ["required XPD"]})
            layers.append(alt.Chart(rule).mark_rule(color="#b2182b", strokeDash=[7, 4]).encode(
                y="level:Q", tooltip=["what:N", "level:Q"]))
        st.altair_chart(alt.layer(*layers).properties(height=260).interactive(bind_y=False), width="stretch")
    per_channel = xp.get("xpd") or {}
    chosen = channel if with_xpd else next(iter(per_channel), None)
    figures = per_channel.get(chosen) or {}
    if figures:
        def number(key, unit):
            value = figures.get(key)
            return f"{value:.1f} {unit}" if isinstance(value, (int, float)) else "–"

        st.markdown(f"##### Channel {md(chosen)}")
        c1, c2, c3, c4 = st.columns(4)
        c1.metric("Clear-sky XPD", number("clear_xpd_db", "dB"))
        c2.metric("Polarisation tilt", number("tilt_deg", "°"),
                  help="feed rotation implied by the clear-sky XPD, with the antennas' own XPD assumed")
        c3.metric("Co-polar loss from tilt", number("copolar_loss_db", "dB"))
        required = result.link.xpd_required_db
        c4.metric("Required XPD", "–" if required is None else f"{required:g} dB")
        st.dataframe(views.key_figures(figures, skip=("segments",)), hide_index=True, width="stretch")
    if xp.get("hv"):
        st.markdown("##### H and V compared")
        st.dataframe(views.key_figures(xp["hv"]), hide_index=True, width="stretch")


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
    st.set_page_config(page_title="diag · hop fade diagnosis", page_icon=":material/cell_tower:", layout="wide")
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
        sources = tuple((f.name, f.getvalue()) for f in (choice["logs"] or []))
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
        pick = st.selectbox("Hop", names, key="param_hop") if len(names) > 1 else names[0]
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
        st.dataframe(views.network_table(results), hide_index=True, width="stretch",
                     height=fit_height(len(results), 420),
                     column_config={"Objective %": st.column_config.NumberColumn(format="%.3f")})
    network = views.network_table(results)
    by_id = {r.link.link_id: r for r in results}
    order = [h for h in network["Hop"] if h in by_id] or list(by_id)
    hop_id = st.selectbox("Hop", order, key="hop", help="worst availability first") if len(order) > 1 else order[0]
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


try:
    main()
except InputError as _exc:  # bad input that slipped past the page's own checks: still one line
    st.error(md(_exc.one_line()), icon=":material/warning:")
except Exception as _exc:  # a bug: one line in the page, the traceback only in the server log
    LOG.exception("dashboard failed")
    st.error(f"Internal error ({type(_exc).__name__}): {md(str(_exc)[:300])}", icon=":material/error:")
