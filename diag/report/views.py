"""Tables shaped for the dashboard's charts and lists, from the analysis results (no new computation).

The dashboard (``dashboard.py``) only draws; everything here turns a ``diag.results.LinkResult`` (or the reader's
report) into small pandas frames a chart can take: a level timeline thinned to a few thousand points, the fade
events that fall in a time window, outage minutes by cause, the hop's overview figures, the event list, fades by
hour of day.  Each function is pure and tested in ``tests/test_dashboard_views.py``.
"""
from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

import numpy as np
import pandas as pd

from diag import glossary, schema
from diag.glossary import duration_text  # noqa: F401  (the views' duration format is the glossary's)
from diag.report.style import CAUSE_LABELS
from diag.results import ChannelSeries, LinkResult


def cause_label(cause: str) -> str:
    """Display label of a cause name (``diag.glossary``, also used by the PDF and the CSV readers' labels)."""
    text = str(cause)
    return CAUSE_LABELS.get(text, text.replace("_", " ").capitalize() or glossary.NO_OUTAGE)


def _utc(value) -> pd.Timestamp | None:
    if value is None:
        return None
    stamp = pd.Timestamp(value)
    return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")


# --- level timeline ---------------------------------------------------------------------------------------------
TIMELINE_COLUMNS = ["time_utc", "level_dbm", "level_min_dbm", "level_max_dbm", "reference_dbm", "signal_lost"]


def series_span(series: ChannelSeries) -> tuple[pd.Timestamp, pd.Timestamp] | None:
    """First and last grid time of a channel (None when the channel is empty)."""
    index = series.frame.index
    if len(index) == 0:
        return None
    return _utc(index[0]), _utc(index[-1])


def timeline(series: ChannelSeries, *, start=None, end=None, max_points: int = 2000, column: str = "rsl_dbm",
             low_column: str | None = None, high_column: str | None = None) -> pd.DataFrame:
    """The receive level of one channel between ``start`` and ``end``, thinned to at most ``max_points`` rows.

    The grid is regular, so consecutive runs of ``ceil(n / max_points)`` points are equal time bins; each bin keeps
    its first time, the mean level, the lowest and highest level seen (the logged interval min/max for statistics
    logs, so a deep fade inside a bin is never hidden) and whether the receiver lost the signal in it.  A bin with no
    level (gap, signal lost) has NaN levels so the chart line breaks there.  Columns: ``TIMELINE_COLUMNS``; the
    ``level_*`` columns hold ``column`` (e.g. ``attenuation_db`` or ``xpd_db``), ``low_column``/``high_column`` name
    the logged interval extremes (by default ``rsl_min_dbm``/``rsl_max_dbm`` for the receive level).
    """
    if max_points < 1:
        raise ValueError("max_points must be at least 1")
    frame = series.frame
    if start is not None:
        frame = frame[frame.index >= _utc(start)]
    if end is not None:
        frame = frame[frame.index <= _utc(end)]
    n = len(frame)
    if n == 0:
        return pd.DataFrame({name: pd.Series([], dtype="float64") for name in TIMELINE_COLUMNS}).assign(
            time_utc=pd.Series([], dtype="datetime64[ns, UTC]"), signal_lost=pd.Series([], dtype="bool"))
    if column == "rsl_dbm":
        low_column, high_column = low_column or "rsl_min_dbm", high_column or "rsl_max_dbm"
    level = frame[column].to_numpy(dtype=float)
    low = frame[low_column].to_numpy(dtype=float) if low_column and low_column in frame else level
    high = frame[high_column].to_numpy(dtype=float) if high_column and high_column in frame else level
    reference = (frame["reference_dbm"].to_numpy(dtype=float) if "reference_dbm" in frame
                 else np.full(n, np.nan))
    lost = (frame["status"] == schema.SIGNAL_LOST).to_numpy(dtype=bool) if "status" in frame else np.zeros(n, bool)
    size = max(1, math.ceil(n / max_points))
    bins = np.arange(n) // size
    shaped = pd.DataFrame({"bin": bins, "level_dbm": level, "level_min_dbm": low, "level_max_dbm": high,
                           "reference_dbm": reference, "signal_lost": lost})
    grouped = shaped.groupby("bin", sort=True)
    out = pd.DataFrame({
        "time_utc": frame.index[::size][: bins[-1] + 1],
        "level_dbm": grouped["level_dbm"].mean().to_numpy(),       # NaN only when the whole bin has no level
        "level_min_dbm": grouped["level_min_dbm"].min().to_numpy(),
        "level_max_dbm": grouped["level_max_dbm"].max().to_numpy(),
        "reference_dbm": grouped["reference_dbm"].mean().to_numpy(),
        "signal_lost": grouped["signal_lost"].any().to_numpy(),
    })
    times = pd.DatetimeIndex(out["time_utc"])
    out["time_utc"] = times.tz_convert("UTC") if times.tz is not None else times.tz_localize("UTC")
    return out


def event_spans(events: pd.DataFrame, *, channel: str | None = None, start=None, end=None,
                max_spans: int = 300, min_width=None) -> pd.DataFrame:
    """Fade events overlapping ``[start, end]`` (clipped to it), for shading the timeline by cause.

    When more than ``max_spans`` events overlap the window, the longest ``max_spans`` are kept (a week of 1-s
    multipath fades can hold thousands of sub-second events; the chart shades the ones a person can see).
    Columns: ``start_utc, end_utc, cause, cause_label, peak_fade_db, duration_s, channel``.
    """
    columns = ["start_utc", "end_utc", "cause", "cause_label", "peak_fade_db", "duration_s", "channel"]
    if events is None or len(events) == 0:
        return pd.DataFrame({name: [] for name in columns})
    frame = events
    if channel is not None and "channel" in frame:
        frame = frame[frame["channel"].astype(str) == str(channel)]
    begin = pd.to_datetime(frame["start_utc"], utc=True)
    finish = pd.to_datetime(frame["end_utc"], utc=True)
    keep = np.ones(len(frame), dtype=bool)
    if start is not None:
        keep &= (finish >= _utc(start)).to_numpy()
    if end is not None:
        keep &= (begin <= _utc(end)).to_numpy()
    out = pd.DataFrame({
        "start_utc": begin[keep],
        "end_utc": finish[keep],
        "cause": frame["cause"].astype(str)[keep],
        "peak_fade_db": pd.to_numeric(frame["peak_fade_db"], errors="coerce")[keep],
        "duration_s": pd.to_numeric(frame["duration_s"], errors="coerce")[keep],
        "channel": frame["channel"].astype(str)[keep] if "channel" in frame else "",
    })
    if start is not None:
        out["start_utc"] = out["start_utc"].clip(lower=_utc(start))
    if end is not None:
        out["end_utc"] = out["end_utc"].clip(upper=_utc(end))
    if len(out) > max_spans:
        out = out.nlargest(max_spans, "duration_s", keep="first").sort_values("start_utc")
    if min_width is not None and len(out):
        # a span narrower than a screen pixel would vanish: draw it at least ``min_width`` wide (centred)
        width = out["end_utc"] - out["start_utc"]
        pad = ((pd.Timedelta(min_width) - width) / 2).clip(lower=pd.Timedelta(0))
        out["start_utc"] = out["start_utc"] - pad
        out["end_utc"] = out["end_utc"] + pad
    out["cause_label"] = out["cause"].map(cause_label)
    return out[columns].reset_index(drop=True)


# --- overview ---------------------------------------------------------------------------------------------------
def _number(value) -> float | None:
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return number if math.isfinite(number) else None


def _bounds(mapping, key: str) -> tuple[float | None, float | None]:
    """(low, high) of an outage figure: the exact value twice when known, else its ``_lo``/``_hi`` bounds."""
    exact = _number(mapping.get(key))
    if exact is not None:
        return exact, exact
    return _number(mapping.get(f"{key}_lo")), _number(mapping.get(f"{key}_hi"))


def outage_minutes_by_cause(result: LinkResult, *, include_zero: bool = False) -> pd.DataFrame:
    """Outage of one hop by cause in minutes, in the order of ``diag.schema.CAUSES``.

    From ``result.outage.by_cause`` (seconds) without recomputing anything.  For coarse logs the outage module
    gives bounds instead of exact figures; both are carried: ``*_lo_min``/``*_hi_min`` equal the exact value when
    it is known.  Columns: ``cause, cause_label, events, below_threshold_lo_min, below_threshold_hi_min,
    unavailable_lo_min, unavailable_hi_min, exact``.  Causes with no events and no time are left out unless
    ``include_zero``.
    """
    columns = ["cause", "cause_label", "events", "below_threshold_lo_min", "below_threshold_hi_min",
               "unavailable_lo_min", "unavailable_hi_min", "exact"]
    by_cause = result.outage.by_cause if result.outage is not None else None
    if by_cause is None or len(by_cause) == 0:
        return pd.DataFrame({name: [] for name in columns})
    rows = []
    for record in by_cause.to_dict("records"):
        below = _bounds(record, "below_threshold_s")
        unavailable = _bounds(record, "unavailable_s")
        rows.append({
            "cause": str(record["cause"]),
            "cause_label": cause_label(record["cause"]),
            "events": int(_number(record.get("events")) or 0),
            "below_threshold_lo_min": (below[0] or 0.0) / 60.0,
            "below_threshold_hi_min": (below[1] or 0.0) / 60.0,
            "unavailable_lo_min": (unavailable[0] or 0.0) / 60.0,
            "unavailable_hi_min": (unavailable[1] or 0.0) / 60.0,
            "exact": _number(record.get("below_threshold_s")) is not None,
        })
    out = pd.DataFrame(rows, columns=columns)
    out = out.groupby(["cause", "cause_label"], sort=False, as_index=False).agg(
        {"events": "sum", "below_threshold_lo_min": "sum", "below_threshold_hi_min": "sum",
         "unavailable_lo_min": "sum", "unavailable_hi_min": "sum", "exact": "all"})
    order = {cause: number for number, cause in enumerate(schema.CAUSES)}
    out = out.sort_values("cause", key=lambda c: c.map(lambda x: order.get(x, len(order))), kind="stable")
    if not include_zero:
        out = out[(out["events"] > 0) | (out["below_threshold_hi_min"] > 0) | (out["unavailable_hi_min"] > 0)]
    return out[columns].reset_index(drop=True)


def main_cause(result: LinkResult) -> str:
    """The hop's main cause (``diag.glossary``): the cause with the most outage (unavailable time, upper bound for
    coarse logs), as the outage module names it; ``glossary.NO_OUTAGE`` when the hop had no unavailable time."""
    summary = result.outage.summary if result.outage is not None else {}
    named = summary.get("main_cause")
    if named and (str(named) in schema.CAUSES or str(named) == glossary.NO_OUTAGE):
        return str(named)
    table = outage_minutes_by_cause(result)
    if len(table) and table["unavailable_hi_min"].max() > 0:
        return str(table.loc[table["unavailable_hi_min"].idxmax(), "cause"])
    return glossary.NO_OUTAGE


MEETS = {"yes": True, "true": True, "no": False, "false": False}


def hop_overview(result: LinkResult) -> dict:
    """Headline figures of one hop: availability against the objective, minutes, dominant cause, counts.

    Figures are (low, high) pairs in minutes or percent; low == high when the outage module counted exactly.
    ``meets_objective`` is True / False / None (undetermined: the bounds straddle the objective, or no objective).
    """
    summary = dict(result.outage.summary) if result.outage is not None else {}
    meets = summary.get("meets_objective")
    if isinstance(meets, str):
        meets = MEETS.get(meets.strip().lower())
    elif not isinstance(meets, bool):
        meets = None

    def minutes(key):
        low, high = _bounds(summary, f"{key}_s")
        return (None if low is None else low / 60.0, None if high is None else high / 60.0)

    cause = main_cause(result)
    below = minutes("below_threshold")
    label = glossary.main_cause_label(cause)
    return {
        "link_id": result.link.link_id,
        "period_start_utc": summary.get("period_start_utc"),
        "period_end_utc": summary.get("period_end_utc"),
        "exact": bool(summary.get("exact", True)),
        "method": str(summary.get("method") or ""),
        "availability_pct": _bounds(summary, "availability_pct"),
        "objective_pct": _number(summary.get("objective_pct")),
        "meets_objective": meets,
        "meets_text": str(summary.get("meets_objective") or ""),
        "observed_min": minutes("observed"),
        "no_data_min": minutes("no_data"),
        "below_threshold_min": below,
        "unavailable_min": minutes("unavailable"),
        "events": 0 if result.events is None else int(len(result.events)),
        "main_cause": cause,
        "main_cause_label": label,
        "error": result.error,
    }


def range_text(pair: tuple[float | None, float | None], fmt: str = "{:.1f}", unit: str = "") -> str:
    """``12.3 min`` for an exact figure, ``0.0–45.0 min`` for bounds, ``–`` when unknown."""
    low, high = pair
    if low is None and high is None:
        return "–"
    if low is None or high is None or low == high:
        return fmt.format(low if low is not None else high) + unit
    return f"{fmt.format(low)}–{fmt.format(high)}{unit}"


def duration_range_text(pair_min: tuple[float | None, float | None]) -> str:
    """Bounds in minutes as h:mm:ss, "0:00:00" exact, "0:00:00 – 0:15:00" for bounds."""
    low, high = pair_min
    if low is None and high is None:
        return "–"
    if low is None or high is None or low == high:
        return duration_text(60.0 * (low if low is not None else high))
    return f"{duration_text(60.0 * low)} – {duration_text(60.0 * high)}"


NETWORK_COLUMNS = ["Hop", "Availability [%]", "Objective [%]", glossary.TERMS["meets_objective"].label,
                   glossary.OUTAGE + " h:mm:ss", glossary.BELOW_THRESHOLD + " h:mm:ss", "Fade events",
                   glossary.MAIN_CAUSE]


def network_table(results: Sequence[LinkResult]) -> pd.DataFrame:
    """One row per hop for the network list, worst availability (lower bound) first, failed hops last.  Labels
    and verdict words come from ``diag.glossary``; durations as h:mm:ss."""
    rows = []
    for result in results:
        item = hop_overview(result)
        rows.append(dict(zip(NETWORK_COLUMNS, [
            item["link_id"],
            range_text(item["availability_pct"], "{:.4f}"),
            item["objective_pct"],
            glossary.verdict_label(item["meets_text"]),
            duration_range_text(item["unavailable_min"]),
            duration_range_text(item["below_threshold_min"]),
            item["events"],
            item["main_cause_label"] if not item["error"] else f"{glossary.NOT_ANALYSED}: {item['error']}",
        ]), _sort=item["availability_pct"][0]))
    table = pd.DataFrame(rows, columns=NETWORK_COLUMNS + ["_sort"])
    table = table.sort_values("_sort", na_position="last", kind="stable")
    return table.drop(columns="_sort").reset_index(drop=True)


def top_findings(result: LinkResult, limit: int = 5) -> list[dict]:
    """The first ``limit`` ranked findings, each with the keys the page shows (missing keys become empty)."""
    out = []
    for item in (result.findings or [])[:limit]:
        out.append({
            "title": str(item.get("title", "")),
            "detail": str(item.get("detail", "")),
            "numbers": item.get("numbers") or {},
            "actions": [str(a) for a in (item.get("actions") or [])],
            "cautions": [str(c) for c in (item.get("cautions") or [])],
        })
    return out


# --- event list -------------------------------------------------------------------------------------------------
EVENT_TABLE_COLUMNS = ["Start (UTC)", "End (UTC)", "Duration", "Deepest fade [dB]", "Cause", "Confidence", "Channel",
                       "Evidence"]


def event_table(events: pd.DataFrame, *, causes: Iterable[str] | None = None,
                min_peak_fade_db: float | None = None) -> pd.DataFrame:
    """The event list for display, filtered to ``causes`` (names) and peak fades of at least ``min_peak_fade_db``."""
    if events is None or len(events) == 0:
        return pd.DataFrame({name: [] for name in EVENT_TABLE_COLUMNS})
    frame = events
    if causes is not None:
        wanted = {str(c) for c in causes}
        frame = frame[frame["cause"].astype(str).isin(wanted)]
    peak = pd.to_numeric(frame["peak_fade_db"], errors="coerce")
    if min_peak_fade_db is not None:
        keep = (peak >= float(min_peak_fade_db)).to_numpy()
        frame, peak = frame[keep], peak[keep]
    confidence = frame["confidence"] if "confidence" in frame else pd.Series("", index=frame.index)
    out = pd.DataFrame({
        "Start (UTC)": pd.to_datetime(frame["start_utc"], utc=True),
        "End (UTC)": pd.to_datetime(frame["end_utc"], utc=True),
        "Duration": pd.to_numeric(frame["duration_s"], errors="coerce").map(duration_text),
        "Deepest fade [dB]": peak,
        "Cause": frame["cause"].astype(str).map(cause_label),
        "Confidence": confidence,
        "Channel": frame["channel"].astype(str) if "channel" in frame else "",
        "Evidence": frame["evidence"].astype(str) if "evidence" in frame else "",
    })
    return out.reset_index(drop=True)


EPISODE_GAP_S = 1800.0   # events of one cause closer than this form one episode (a night of multipath, a storm)


def episodes(events: pd.DataFrame, *, channel: str | None = None, gap_s: float = EPISODE_GAP_S) -> pd.DataFrame:
    """Fade events grouped into episodes: events of the same cause (and channel) less than ``gap_s`` apart.

    A night of clear-air multipath holds hundreds of short events; a person reads it as one episode with a count.
    Columns: ``start_utc, end_utc, cause, cause_label, channel, events, peak_fade_db, faded_s`` (faded_s: the
    summed duration of the events), sorted by start."""
    columns = ["start_utc", "end_utc", "cause", "cause_label", "channel", "events", "peak_fade_db", "faded_s"]
    if events is None or len(events) == 0:
        return pd.DataFrame({name: [] for name in columns})
    frame = events
    if channel is not None and "channel" in frame:
        frame = frame[frame["channel"].astype(str) == str(channel)]
    if len(frame) == 0:
        return pd.DataFrame({name: [] for name in columns})
    work = pd.DataFrame({
        "start_utc": pd.to_datetime(frame["start_utc"], utc=True).to_numpy(),
        "end_utc": pd.to_datetime(frame["end_utc"], utc=True).to_numpy(),
        "cause": frame["cause"].astype(str).to_numpy(),
        "channel": frame["channel"].astype(str).to_numpy() if "channel" in frame else "",
        "peak_fade_db": pd.to_numeric(frame["peak_fade_db"], errors="coerce").to_numpy(),
        "duration_s": pd.to_numeric(frame["duration_s"], errors="coerce").to_numpy(),
    }).sort_values(["cause", "channel", "start_utc"], kind="stable")
    gap = pd.Timedelta(seconds=gap_s)
    group_end = work.groupby(["cause", "channel"], sort=False)["end_utc"].transform(lambda e: e.cummax().shift())
    new = (work["start_utc"] - group_end > gap) | group_end.isna()
    work["episode"] = new.cumsum()
    out = work.groupby("episode", sort=False).agg(
        start_utc=("start_utc", "min"), end_utc=("end_utc", "max"), cause=("cause", "first"),
        channel=("channel", "first"), events=("cause", "size"), peak_fade_db=("peak_fade_db", "max"),
        faded_s=("duration_s", "sum"))
    out["cause_label"] = out["cause"].map(cause_label)
    return out.sort_values("start_utc", kind="stable")[columns].reset_index(drop=True)
