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
from diag.report import views, views_fading, views_reader
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


_RICE_KEYS = ("k_moments_db", "k_mle_db", "samples", "periods", "local_mean_s")
_RAIN_KEYS = ("rain_s", "deepest_rain_fade_db", "percent_of_period_above_a001")


def _figures_table(part: dict, keys: tuple[str, ...]) -> pd.DataFrame:
    """Chosen figures of a statistics block with their glossary labels and units (``views_fading.key_figures``)."""
    return views_fading.key_figures({k: part[k] for k in keys if k in part})


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
        curves = views_fading.exceedance_curves(stats)
        if len(curves):
            names_in = list(dict.fromkeys(curves["curve"]))
            kind_of = dict(zip(curves["curve"], curves["kind"]))
            dash = {"measured": [1, 0], "theory": [6, 3], "prediction": [2, 3]}
            # colour and line style on the same field, so the legend shows both: measured solid, Rayleigh dashed,
            # predictions dotted, whatever their colour
            chart = alt.Chart(curves).mark_line(point=True).encode(
                x=alt.X("depth_db:Q", title="fade depth [dB]"),
                y=alt.Y("percent:Q", title="time the depth was exceeded [%]", scale=alt.Scale(type="log")),
                color=alt.Color("curve:N", title=None, scale=curve_colours(names_in),
                                legend=alt.Legend(orient="bottom", columns=2, labelLimit=260, symbolType="stroke",
                                                  symbolSize=500, symbolStrokeWidth=2.5)),
                strokeDash=alt.StrokeDash("curve:N", title=None, scale=alt.Scale(
                    domain=names_in, range=[dash[kind_of[c]] for c in names_in])),
                tooltip=[alt.Tooltip("curve:N", title="curve"), alt.Tooltip("depth_db:Q", format=".1f",
                                                                            title="fade depth [dB]"),
                         alt.Tooltip("percent:Q", format=".4~g", title="time exceeded [%]")])
            # the page fits the whole chart, legend included, into this height: room for both
            st.altair_chart(chart.properties(height=340 + 22 * ((len(names_in) + 1) // 2)), width="stretch")
            st.caption("Solid lines: measured over the analysed period. Dashed: Rayleigh distribution. "
                       "Dotted: ITU-R P.530 design predictions, the multipath one for the worst "
                       "month, the rain one for an average year, so a short record is not expected to match them.")
            note = (stats.get("exceedance") or {}).get("note")
            if note:
                st.caption(md(note.replace("all_percent_upper_bound", "the upper-bound curve")))
        else:
            st.caption("No fade deep enough to draw an exceedance curve.")
    with right:
        st.markdown("##### Fading figures")
        rice = stats.get("rice_k") or {}
        if rice:
            st.markdown("**Rice K-factor (multipath)**")
            if set(rice) == {"skipped"}:
                st.caption(f"not computed: {md(rice['skipped'])}")
            else:
                st.dataframe(_figures_table(rice, _RICE_KEYS), hide_index=True, width="stretch")
        rain = stats.get("rain") or {}
        if rain and set(rain) != {"skipped"}:
            st.markdown("**Rain**")
            figures = _figures_table(rain, _RAIN_KEYS)
            a001 = (rain.get("p530") or {}).get("a001_db")
            if a001 is not None:
                figures.loc[len(figures)] = [glossary.field_label("a001_db"),
                                             views_fading.format_value("a001_db", a001)]
            st.dataframe(figures, hide_index=True, width="stretch")
            st.caption("Deepest rain fade here is from the interval averages (15-min logs) or the samples; the "
                       "event list's deepest fade uses the interval minimum and can be deeper.")
    lcr = stats.get("lcr_afd") or {}
    if lcr and set(lcr) != {"skipped"}:
        st.markdown("##### Level crossings and fade durations")
        table = views_fading.crossing_table(lcr)
        st.dataframe(table, hide_index=True, width="stretch", height=fit_height(len(table)), column_config={
            c: st.column_config.NumberColumn(format="%.1f" if "[1/h]" in c or "[s]" in c else "%g")
            for c in table.columns if c != "Sampling"})
        bits = []
        if lcr.get("fading_bandwidth_hz") is not None:
            bandwidth = views_fading.format_value('fading_bandwidth_hz', lcr['fading_bandwidth_hz'])
            bits.append(f"fading bandwidth {bandwidth}")
        if lcr.get("rice_k_used") is not None:
            bits.append(f"Rice K used {lcr['rice_k_used']:.2f}")
        st.caption("LCR: level-crossing rate (downward crossings per hour); AFD: average fade duration below the "
                   "level. Levels relative to the local mean power during multipath"
                   + (f"; {', '.join(bits)}" if bits else "") + ".")
    elif lcr:
        st.caption(f"Level crossings and fade durations not computed: {md(lcr['skipped'])}")
    st.markdown("##### Fading by hour of day (UTC)")
    hourly = views_fading.hourly_fading(stats)
    if len(hourly) and hourly["faded_min"].sum() > 0:
        present = list(dict.fromkeys(hourly["cause"]))
        st.altair_chart(alt.Chart(hourly).mark_bar().encode(
            x=alt.X("hour:O", title="hour of day (UTC)"), y=alt.Y("faded_min:Q", title="time faded [min]"),
            color=alt.Color("cause_label:N", scale=cause_scale(), legend=cause_legend(present)),
            tooltip=[alt.Tooltip("hour:O", title="hour (UTC)"), alt.Tooltip("cause_label:N", title="cause"),
                     alt.Tooltip("faded_min:Q", format=".1f", title="time faded [min]"),
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
        segments = figures.get("segments") or []
        if len(segments) > 1:
            st.markdown("**Clear-sky XPD between its steps**")
            st.dataframe(pd.DataFrame({
                "From (UTC)": pd.to_datetime([g.get("start_utc") for g in segments], utc=True),
                "To (UTC)": pd.to_datetime([g.get("end_utc") for g in segments], utc=True),
                glossary.field_label("clear_xpd_db"): [g.get("clear_xpd_db") for g in segments],
                glossary.field_label("tilt_deg"): [g.get("tilt_deg") for g in segments]}),
                hide_index=True, width="stretch", column_config={
                    "From (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm"),
                    "To (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm"),
                    glossary.field_label("clear_xpd_db"): st.column_config.NumberColumn(format="%.1f"),
                    glossary.field_label("tilt_deg"): st.column_config.NumberColumn(format="%.1f")})
        if figures.get("assumption"):
            st.caption("Assumption: " + md(figures["assumption"]).replace("tilt\\_deg\\_perfect\\_antenna",
                                                                            "the tilt if the antennas leaked nothing"))
    if xp.get("hv"):
        st.markdown("##### H and V compared")
        hv = xp["hv"]
        st.dataframe(views_fading.key_figures({k: hv[k] for k in ("clear_sky_imbalance_db", "imbalance_flag",
                                                              "imbalance_flag_db") if k in hv}),
                     hide_index=True, width="stretch")
