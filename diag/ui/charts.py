"""The dashboard's result screens: overview, level timeline, fade events (statistics screens: ``stat_charts``).

Every number on screen has a human label and a unit (``diag.glossary``), durations are h:mm:ss, and the tables are
shaped by ``diag.report.views`` (tested there).  Only draws.
"""
from __future__ import annotations

import datetime as dt

import altair as alt
import pandas as pd
import streamlit as st

from diag import glossary, schema
from diag.report import views, views_reader
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
        gap = views_reader.no_data_share(result)
        period = [str(t).replace("T", " ").replace("Z", "")[:16] for t in (hop["period_start_utc"],
                                                                          hop["period_end_utc"])]
        st.caption(f"Analysed period: {period[0]} → {period[1]} UTC"
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
                "Below threshold h:mm:ss": table["label"],
                "Outage h:mm:ss": [views.duration_range_text((lo, hi)) for lo, hi in
                                   zip(table["unavailable_lo_min"], table["unavailable_hi_min"])]})
            st.dataframe(shown, hide_index=True, width="stretch", column_config={
                "Fade events": st.column_config.NumberColumn(width="small"),
                "Below threshold h:mm:ss": st.column_config.TextColumn(help=glossary.definition("below_threshold")),
                "Outage h:mm:ss": st.column_config.TextColumn(help=glossary.definition("outage"))})
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
    min_width = (end - start) / 500            # about two screen pixels: no fade or loss too short to see
    spans = views.episodes(result.events, channel=channel)
    if len(spans):
        spans = spans[(spans["end_utc"] >= start) & (spans["start_utc"] <= end)].copy()
        spans["start_utc"] = spans["start_utc"].clip(lower=start)
        spans["end_utc"] = spans["end_utc"].clip(upper=end)
        pad = ((min_width - (spans["end_utc"] - spans["start_utc"])) / 2).clip(lower=pd.Timedelta(0))
        spans["start_utc"] -= pad
        spans["end_utc"] += pad
        spans["faded"] = spans["faded_s"].map(views.duration_text)
    present = [c for c in schema.CAUSES if len(spans) and c in set(spans["cause"])]
    x = alt.X("time_utc:T", title="time (UTC)", axis=TIME_AXIS)
    layers = []
    if len(spans):
        edge = pd.concat([line["level_max_dbm"], line["level_min_dbm"], line["limit"]]).dropna()
        span_db = float(edge.max() - edge.min()) if len(edge) else 10.0
        # marks in rows above the plot: long-lasting causes (level shift, signal loss) in their own row, so the
        # marks of short fades never sit on them
        lane = spans["cause"].map(lambda c: 1 if c in (schema.LEVEL_SHIFT, schema.SIGNAL_LOSS) else 0)
        step = max(span_db * 0.07, 1.5)
        base = float(edge.min() - 3.0) if fade else float(edge.max() + 3.0)
        spans["marker"] = base - lane * step if fade else base + lane * step
        spans["mark"] = [glossary.cause_code(c) + (f" ×{n}" if n > 1 else "") for c, n in
                         zip(spans["cause"], spans["events"])]
        event_tooltip = [alt.Tooltip("cause_label:N", title="cause"),
                         alt.Tooltip("events:Q", title="fade events in the episode"),
                         alt.Tooltip("start_utc:T", format="%Y-%m-%d %H:%M:%S", title="start (UTC)"),
                         alt.Tooltip("end_utc:T", format="%Y-%m-%d %H:%M:%S", title="end (UTC)"),
                         alt.Tooltip("faded:N", title="time faded (h:mm:ss)"),
                         alt.Tooltip("peak_fade_db:Q", format=".1f", title=glossary.label("peak_fade_db"))]
        layers.append(alt.Chart(spans).mark_rect(opacity=0.22).encode(
            x="start_utc:T", x2="end_utc:T", tooltip=event_tooltip,
            color=alt.Color("cause_label:N", scale=cause_scale(), legend=cause_legend(present))))
        layers.append(alt.Chart(spans).mark_point(filled=True, size=60, opacity=0.95).encode(
            x="start_utc:T", y=alt.Y("marker:Q", title=y_title, scale=y_scale), tooltip=event_tooltip,
            color=alt.Color("cause_label:N", scale=cause_scale(), legend=cause_legend(present)),
            shape=alt.Shape("cause_label:N", scale=cause_shapes(), legend=cause_legend(present))))
        layers.append(alt.Chart(spans).mark_text(dx=6, align="left", fontSize=10, fontWeight="bold",
                                                 color="#1d2329").encode(
            x="start_utc:T", y=alt.Y("marker:Q", scale=y_scale), text="mark:N", tooltip=event_tooltip))
    # the interval's lowest and highest level as a vertical stroke per plotted point: drawn at every zoom, so a dip
    # inside one 15-min interval (or one thinned bucket) is never hidden by the averaged line
    layers.append(alt.Chart(line).mark_rule(color="#7a8791", strokeWidth=1.2, opacity=0.8).encode(
        x=x, y=alt.Y("level_min_dbm:Q", title=y_title, scale=y_scale), y2="level_max_dbm:Q",
        tooltip=[alt.Tooltip("time_utc:T", format="%Y-%m-%d %H:%M:%S", title="time (UTC)"),
                 alt.Tooltip("level_min_dbm:Q", format=".1f", title="lowest in the interval"),
                 alt.Tooltip("level_max_dbm:Q", format=".1f", title="highest in the interval")]))
    lost = line[line["signal_lost"]]
    if len(lost):
        from diag.report.style import CAUSE_COLORS

        lost = lost.assign(end_utc=lost["time_utc"] + max(min_width, pd.Timedelta(seconds=series.interval_s)))
        layers.append(alt.Chart(lost).mark_rect(color=CAUSE_COLORS[schema.SIGNAL_LOSS], opacity=0.55).encode(
            x="time_utc:T", x2="end_utc:T",
            tooltip=[alt.Tooltip("time_utc:T", format="%Y-%m-%d %H:%M:%S", title="signal lost (UTC)")]))
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
    what = ("Black: fade depth. Red dashed: fade margin." if fade else
            "Black: receive level. Blue dotted: clear-sky reference. Red dashed: receiver threshold.")
    marks = ", ".join(f"{glossary.cause_code(c)} {glossary.cause_label(c).lower()}" for c in schema.CAUSES)
    st.caption(what + " Grey strokes: lowest to highest level within each plotted point, at every zoom. Shading "
               "and marks above the plot: fade episodes (events of one cause less than 30 min apart), told apart "
               f"by colour, shape and mark ({marks}); ×n counts the events in an episode"
               + ("; dark bands: signal lost" if len(lost) else "")
               + ("; purple dotted: level steps" if steps else "")
               + ". Drag to pan, scroll to zoom, or narrow the time window.")


def event_list(result) -> None:
    events = result.events
    if events is None or len(events) == 0:
        st.info("No fade events were found for this hop.")
        return
    hop = result.link.link_id
    present = [c for c in schema.CAUSES if c in set(events["cause"].astype(str))]
    c1, c2, c3 = st.columns([3, 1, 1])
    chosen = c1.multiselect("Causes", present, default=present, format_func=views.cause_label,
                            key=f"ev_causes_{hop}")
    depth = c2.number_input(glossary.label("peak_fade_db") + " at least", min_value=0.0, max_value=80.0,
                            value=0.0, step=1.0, key=f"ev_depth_{hop}")
    grouped = c3.toggle("Episodes", value=len(events) > 50, key=f"ev_group_{hop}",
                        help="Group the events: those of one cause less than 30 min apart form one episode (a night "
                             "of multipath, a storm), listed once with its event count.")
    table = views.event_table(events, causes=chosen, min_peak_fade_db=depth)
    if grouped:
        kept = events[events["cause"].astype(str).isin(chosen)
                      & (pd.to_numeric(events["peak_fade_db"], errors="coerce") >= depth)]
        eps = views.episodes(kept)
        shown = pd.DataFrame({"Start (UTC)": eps["start_utc"], "End (UTC)": eps["end_utc"],
                              "Cause": eps["cause_label"], "Fade events": eps["events"],
                              glossary.label("peak_fade_db"): eps["peak_fade_db"],
                              "Time faded (h:mm:ss)": eps["faded_s"].map(views.duration_text),
                              "Channel": eps["channel"]})
        st.caption(f"{len(eps)} episodes holding {len(kept)} of {len(events)} events.")
        st.dataframe(shown, hide_index=True, width="stretch", height=fit_height(len(shown)), column_config={
            "Start (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm"),
            "End (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm"),
            glossary.label("peak_fade_db"): st.column_config.NumberColumn(format="%.1f")})
        return
    order = ["Start (UTC)", "Duration", "Deepest fade [dB]", "Cause", "Confidence", "Channel", "Evidence",
             "End (UTC)"]
    st.caption(f"{len(table)} of {len(events)} events. Click a column title to sort; select a row to read its "
               "evidence in full. Durations h:mm:ss.")
    picked = st.dataframe(table, hide_index=True, width="stretch", height=fit_height(len(table)),
                          column_order=order, on_select="rerun", selection_mode="single-row",
                          key=f"ev_table_{hop}", column_config={
                              "Start (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm:ss"),
                              "End (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm:ss"),
                              "Deepest fade [dB]": st.column_config.NumberColumn(format="%.1f"),
                              "Confidence": st.column_config.NumberColumn(format="%.2f"),
                              "Evidence": st.column_config.TextColumn(width="large")})
    rows = (picked.selection.rows if picked is not None and hasattr(picked, "selection") else []) or []
    if rows and rows[0] < len(table):
        row = table.iloc[rows[0]]
        st.info(f"**{md(row['Cause'])}** on {md(row['Channel'])}, {row['Start (UTC)']:%Y-%m-%d %H:%M:%S} → "
                f"{row['End (UTC)']:%H:%M:%S} UTC, deepest {row['Deepest fade [dB]']:.1f} dB: "
                f"{md(row['Evidence'])}")
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
