"""The dashboard's inputs: the sidebar (demo or own files), the per-hop parameter form, the reader's detection
report and its correction form, and small helpers shared by every screen (safe markdown, one-line errors, table
heights).  Only draws; reading and checking are the library's (``diag.read``, ``diag.links``)."""
from __future__ import annotations

import re

import streamlit as st

from diag import __version__
from diag.errors import InputError
from diag.links import OPTIONAL, Link, make_link, polarisation_from_channels
from diag.report import views_reader

QUANTITY_CHOICES = ["rsl", "tsl", "xpd", "xpl", "es", "ses", "uas"]
# spreadsheet workbooks are not read: offered in the uploader so the reason can be said in words, not an icon
SPREADSHEET_SUFFIXES = (".xlsx", ".xls", ".xlsm", ".ods")
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


def sidebar() -> dict:
    st.sidebar.markdown("### Logs")
    mode = st.sidebar.radio("Data", ["Demo network", "My files"], key="mode", horizontal=True,
                            help="The demo network is bundled with diag (invented operator and hops).")
    choice: dict = {"mode": mode, "logs": [], "links": None}
    if mode == "My files":
        choice["logs"] = st.sidebar.file_uploader(
            "Receive-level logs", type=["csv", "gz", "txt", "tsv", *(x.lstrip(".") for x in SPREADSHEET_SUFFIXES)],
            accept_multiple_files=True, key="logs",
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
                           placeholder="choose H, V or dual",
                           key=f"p_{hop}")
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
            summary = views_reader.reader_summary(report)
            left.dataframe(summary, hide_index=True, width="stretch", height=fit_height(len(summary), 600))
            roles = views_reader.column_roles(report)
            right.dataframe(roles, hide_index=True, width="stretch", height=fit_height(len(roles), 320))
            rejected = views_reader.rejected_rows(report)
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
