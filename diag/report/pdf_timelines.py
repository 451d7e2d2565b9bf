"""Page 2 of the management report: each hop's receive level over the period (min-max envelope kept at every
width), its fade events as spans and grouped marks, and signal-loss spans always visible."""
from __future__ import annotations

from typing import Sequence

import numpy as np
import pandas as pd

from diag import schema
from diag.report import style
from diag.report.pdf_templates import new_axes
from diag.report.pdf_text import (
    _wrap,
    format_availability,
    format_minutes,
)
from diag.results import LinkResult

MAX_TIMELINES = 5   # hops drawn on the timeline page (the worst by outage); the rest are in the tables


def _envelope(index: pd.DatetimeIndex, values: np.ndarray, bins: int = 1200):
    """Min/max envelope for plotting a long series (NaN kept as breaks)."""
    n = len(values)
    if n <= 2 * bins:
        return index, values, values
    starts = np.linspace(0, n, bins + 1).astype(int)[:-1]       # strictly increasing: n > 2 * bins
    with np.errstate(invalid="ignore"):
        lo = np.fmin.reduceat(values, starts)     # fmin/fmax skip NaN; a bin with no finite value stays NaN
        hi = np.fmax.reduceat(values, starts)
    return pd.DatetimeIndex(index[starts]), lo, hi


def _plain_times(index: pd.DatetimeIndex) -> np.ndarray:
    """UTC times as numpy datetime64 for matplotlib: a pandas index is first turned into Python datetimes by
    matplotlib's unit lookup (slow on long series); the dates drawn are the same."""
    if getattr(index, "tz", None) is not None:
        index = index.tz_convert("UTC").tz_localize(None)
    return np.asarray(index, dtype="datetime64[ns]")


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    m = np.concatenate(([0], mask.astype(np.int8), [0]))
    d = np.diff(m)
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)))


def _timeline(ax, r: LinkResult, legend_causes: set) -> None:
    link = r.link
    threshold = link.threshold_dbm
    lows = []
    for i, (channel, s) in enumerate(sorted(r.series.items())):
        frame = s.frame
        if "rsl_dbm" not in frame or frame.empty:
            continue
        color = style.LEVEL_LINES[min(i, len(style.LEVEL_LINES) - 1)]
        level = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
        if "status" in frame:
            lost = (frame["status"] == schema.SIGNAL_LOST).to_numpy(dtype=bool, na_value=False)
            level = np.where(lost, threshold - 8.0, level)
        if s.kind == "stats" and "rsl_min_dbm" in frame:
            mn = frame["rsl_min_dbm"].to_numpy(dtype=float, na_value=np.nan)
            mx = frame["rsl_max_dbm"].to_numpy(dtype=float, na_value=np.nan) if "rsl_max_dbm" in frame else level
            x = _plain_times(frame.index)
            ax.fill_between(x, mn, mx, color=color, alpha=0.15, lw=0, step="post")
            ax.step(x, level, where="post", color=color, lw=0.7, label=f"{channel} level")
            lows.append(np.nanmin(mn) if np.isfinite(mn).any() else np.nan)
        else:
            t, lo, hi = _envelope(frame.index, level)
            ax.fill_between(_plain_times(t), lo, hi, color=color, alpha=0.6 if i == 0 else 0.4, lw=0.4,
                            label=f"{channel} level")
            lows.append(np.nanmin(lo) if np.isfinite(lo).any() else np.nan)
        if "status" in frame and i == 0:
            gap = frame["status"].isin(["no_data", schema.MISSING]).to_numpy(dtype=bool, na_value=False)
            for a, b in _runs(gap):
                if b - a < 2:
                    continue
                end = frame.index[b - 1] + pd.Timedelta(seconds=float(s.interval_s))
                ax.axvspan(frame.index[a], end, facecolor="white", edgecolor="#777777", hatch="..", lw=0.0,
                           zorder=0.5)
                legend_causes.add(schema.NO_DATA)
    ev = r.events if isinstance(r.events, pd.DataFrame) else pd.DataFrame()
    if not ev.empty and {"start_utc", "end_utc", "cause"} <= set(ev.columns):
        ev = ev.assign(_dur=pd.to_datetime(ev["end_utc"], utc=True) - pd.to_datetime(ev["start_utc"], utc=True))
        ev = ev.sort_values("_dur", ascending=False, kind="stable")      # long ones first, short on top
        _event_spans(ax, ev, legend_causes)
        _mark_groups(ax, ev)
    ax.axhline(threshold, color=style.THRESHOLD, ls="--", lw=0.9, label="receiver threshold")
    finite_lows = [v for v in lows if np.isfinite(v)]
    ymin = min([threshold - 10.0] + finite_lows)
    ax.set_ylim(max(ymin, threshold - 40.0), None)
    s = r.outage.summary if r.outage is not None else {}
    ax.set_title(f"{link.link_id}  ·  {link.frequency_ghz:g} GHz, {link.length_km:g} km  ·  availability "
                 f"{format_availability(s)}  ·  outage {format_minutes(s)}", loc="left", fontsize=8.5)
    ax.set_ylabel("dBm", fontsize=7.5)
    ax.tick_params(labelsize=7)
    ax.grid(color=style.GRID, lw=0.4)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


def _event_spans(ax, ev: pd.DataFrame, legend_causes: set) -> None:
    """One shaded vertical span per event (in ``ev``'s order), drawn as one collection per run of events of the
    same cause: the look of one ``axvspan`` per event (same rectangles, colours, hatches and drawing order)
    without its per-call cost (a hop with hundreds of multipath events took seconds)."""
    from matplotlib.collections import PolyCollection

    causes = [str(c) if str(c) in style.CAUSE_COLORS else schema.UNKNOWN for c in ev["cause"]]
    x0 = np.asarray(ax.convert_xunits(list(pd.to_datetime(ev["start_utc"], utc=True))), dtype=float)
    x1 = np.asarray(ax.convert_xunits(list(pd.to_datetime(ev["end_utc"], utc=True))), dtype=float)
    k = 0
    while k < len(causes):
        cause = causes[k]
        end = k
        while end < len(causes) and causes[end] == cause:
            end += 1
        # a level shift lasts hours or days: a strip along the bottom, so the fades inside it stay readable
        lo, hi = (0.0, 0.07) if cause == schema.LEVEL_SHIFT else (0.0, 1.0)
        verts = [[(a, lo), (a, hi), (b, hi), (b, lo), (a, lo)] for a, b in zip(x0[k:end], x1[k:end])]
        ax.add_collection(PolyCollection(
            verts, transform=ax.get_xaxis_transform(), facecolors=style.cause_color(cause),
            edgecolors=style.cause_color(cause), alpha=0.6 if cause == schema.LEVEL_SHIFT else 0.28,
            hatch=style.cause_hatch(cause), linewidths=0.0, zorder=0.8), autolim=False)
        legend_causes.add(cause)
        k = end
    if len(x0):  # the x data limits take the spans in, as axvspan does
        ax.dataLim.update_from_data_x(np.concatenate([x0, x1]), ignore=False)
        ax.autoscale_view(scaley=False)


def _mark_groups(ax, ev: pd.DataFrame) -> None:
    """Print each cause's short mark (style.CAUSE_MARKS) once above every group of its fades (fades closer than 2 %
    of the plotted span form one group), so the cause reads without colour."""
    start = pd.to_datetime(ev["start_utc"], utc=True)
    end = pd.to_datetime(ev["end_utc"], utc=True)
    if start.empty:
        return
    span = (end.max() - start.min()).total_seconds()
    xlim = ax.get_xlim()
    import matplotlib.dates as mdates

    total_s = max((mdates.num2date(xlim[1]) - mdates.num2date(xlim[0])).total_seconds(), span, 1.0)
    join_s = 0.02 * total_s
    for cause in style.CAUSE_ORDER:
        sel = (ev["cause"].astype(str) == cause).to_numpy()
        if not sel.any() or not style.CAUSE_MARKS.get(cause):
            continue
        order = np.argsort(start[sel].to_numpy())
        s_times = start[sel].to_numpy()[order]
        e_times = end[sel].to_numpy()[order]
        groups = []
        g0, g1 = s_times[0], e_times[0]
        for a, b in zip(s_times[1:], e_times[1:]):
            if (a - g1) / np.timedelta64(1, "s") <= join_s:
                g1 = max(g1, b)
            else:
                groups.append((g0, g1))
                g0, g1 = a, b
        groups.append((g0, g1))
        y = 0.02 if cause == schema.LEVEL_SHIFT else 0.9
        for a, b in groups:
            mid = pd.Timestamp(a) + (pd.Timestamp(b) - pd.Timestamp(a)) / 2
            ax.text(mid, y, style.CAUSE_MARKS[cause], transform=ax.get_xaxis_transform(), ha="center",
                    va="bottom", fontsize=6, weight="bold", color=style.INK, zorder=5,
                    bbox={"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.8})


def _page_timelines(fig, results: Sequence[LinkResult], state: dict) -> None:
    import matplotlib.dates as mdates
    from matplotlib.patches import Patch

    fig.text(0.06, 0.965, "What happened on each hop", fontsize=15, weight="bold", va="top")
    fig.text(0.06, 0.94, _wrap("Receive level (band = spread within each plotted step), receiver threshold "
             "(dashed), fades shaded by cause; level shifts as a strip along the bottom; dotted white = no data; "
             "loss of signal drawn below the threshold.", 130), fontsize=8, va="top")
    shown = [r for r in results if r.series]
    if len(shown) > MAX_TIMELINES:
        shown = sorted(shown, key=lambda r: -((r.outage.summary.get("unavailable_s_hi") or 0)
                                             if r.outage is not None else 0))[:MAX_TIMELINES]
        fig.text(0.06, 0.925, f"The {MAX_TIMELINES} hops with the most outage are shown; the others are in the "
                 "table on page 1 and in events.csv.", fontsize=7.5, va="top", style="italic")
    legend_causes: set = set()
    if not shown:
        fig.text(0.5, 0.5, "No receive-level series to show.", ha="center")
        return
    height = 0.80 / len(shown)
    for i, r in enumerate(shown):
        ax = new_axes(fig, [0.09, 0.09 + (len(shown) - 1 - i) * height + 0.035, 0.87, height - 0.06], "timeline",
                      state)
        _timeline(ax, r, legend_causes)
        locator = mdates.AutoDateLocator(minticks=4, maxticks=9)
        ax.xaxis.set_major_locator(locator)
        formatter = mdates.ConciseDateFormatter(locator)
        ax.xaxis.set_major_formatter(formatter)
        ax.xaxis.get_offset_text().set_fontsize(7)
        if i == 0 and ax.get_legend_handles_labels()[0]:   # an empty legend would draw an empty box
            ax.legend(fontsize=6.5, loc="lower left", ncol=3, frameon=True)
    handles = [Patch(facecolor=style.cause_color(c), edgecolor=style.INK if c == schema.NO_DATA else
                     style.cause_color(c), hatch=style.cause_hatch(c), alpha=0.5 if c != schema.NO_DATA else 1,
                     label=(f"{style.CAUSE_MARKS[c]}  " if style.CAUSE_MARKS.get(c) else "") + style.cause_label(c))
               for c in list(style.CAUSE_ORDER) + [schema.NO_DATA] if c in legend_causes]
    if handles:
        fig.legend(handles=handles, loc="lower center", ncol=min(len(handles), 4), fontsize=7.5, frameon=False,
                   bbox_to_anchor=(0.5, 0.01))
