"""The dashboard's result screens: overview, level timeline, fade events, fading statistics, cross-polar.

Every number on screen has a human label and a unit (``diag.glossary``), durations are h:mm:ss, and the tables are
shaped by ``diag.report.views`` (tested there).  Only draws.
"""
from __future__ import annotations

import datetime as dt

import altair as alt
import pandas as pd
import streamlit as st

from diag import glossary, schema
from diag.report import views
from diag.ui.forms import fit_height, md

TIME_AXIS = alt.Axis(format="%d %b %H:%M", labelOverlap=True)


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


def _utc_naive(stamp: pd.Timestamp) -> dt.datetime:
    return stamp.tz_convert("UTC").tz_localize(None).to_pydatetime()


# --- sidebar and inputs -----------------------------------------------------------------------------------------


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
    c2.metric(glossary.OUTAGE + " h:mm:ss", views.duration_range_text(hop["unavailable_min"]),
              help=glossary.definition("outage"))
    c3.metric(glossary.BELOW_THRESHOLD + " h:mm:ss", views.duration_range_text(hop["below_threshold_min"]),
              help=glossary.definition("below_threshold"))
    c4.metric(glossary.MAIN_CAUSE, hop["main_cause_label"], help=glossary.definition("main_cause"))
    if hop["period_start_utc"]:
        gap = views.no_data_share(result)
        st.caption(f"Analysed period (UTC): {hop['period_start_utc']} → {hop['period_end_utc']}"
                   + (f" · no data for {gap:.2%} of it (gaps are never counted as outage)" if gap else ""))

    left, right = st.columns([3, 2], gap="large")
    with left:
        st.markdown("##### " + glossary.BELOW_THRESHOLD + " by cause")
        st.caption("Every second under the receiver threshold, whether or not it was outage; the outage "
                   "(unavailable time, ITU-T G.826) of each cause is in the table below the chart.")
        table = views.outage_minutes_by_cause(result)
        if len(table) == 0:
            st.success("No fade event in this period.")
        elif table["below_threshold_hi_min"].max() <= 0:
            st.success("No fade reached the receiver threshold in this period.")
            st.dataframe(table[["cause_label", "events"]], hide_index=True,
                         column_config={"cause_label": "Cause", "events": "Fade events"})
        else:
            table["label"] = [views.duration_range_text((lo, hi)) for lo, hi in
                              zip(table["below_threshold_lo_min"], table["below_threshold_hi_min"])]
            base = alt.Chart(table).encode(
                y=alt.Y("cause_label:N", sort=None, title=None, axis=alt.Axis(labelLimit=220)),
                tooltip=[alt.Tooltip("cause_label:N", title="cause"), alt.Tooltip("events:Q", title="events"),
                         alt.Tooltip("label:N", title=glossary.BELOW_THRESHOLD + " (h:mm:ss)")])
            color = alt.Color("cause_label:N", scale=cause_scale(), legend=None)
            upper = base.mark_bar(opacity=0.35).encode(x=alt.X("below_threshold_hi_min:Q",
                                                               title=glossary.BELOW_THRESHOLD + " [min]"), color=color)
            lower = base.mark_bar().encode(x="below_threshold_lo_min:Q", color=color)
            text = base.mark_text(align="left", dx=4).encode(x="below_threshold_hi_min:Q", text="label:N")
            st.altair_chart((upper + lower + text).properties(height=44 * len(table) + 50), width="stretch")
            if not table["exact"].all():
                st.caption("Solid: time certainly below threshold; light: the most it can have been (coarse logs).")
            shown = pd.DataFrame({
                "Cause": table["cause_label"], "Fade events": table["events"],
                glossary.BELOW_THRESHOLD + " h:mm:ss": table["label"],
                glossary.OUTAGE + " h:mm:ss": [views.duration_range_text((lo, hi)) for lo, hi in
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
            st.warning("**Before any work on site.** "
                       + (md(" ".join(cautions)) if cautions else glossary.SAFETY_SHORT),
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
