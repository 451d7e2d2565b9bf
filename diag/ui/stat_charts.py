"""The dashboard's statistics screens: fading statistics (exceedance against P.530 and Rayleigh, Rice K, level
crossings, fades by hour) and cross-polar results (XPD, tilt, rain XPD against P.530).  Only draws; the tables come
from :mod:`diag.report.views_fading` and the results."""
from __future__ import annotations

import altair as alt
import pandas as pd
import streamlit as st

from diag import glossary
from diag.report import views, views_fading
from diag.ui.charts import TIME_AXIS, cause_legend, cause_scale, curve_colours
from diag.ui.forms import fit_height, md

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
