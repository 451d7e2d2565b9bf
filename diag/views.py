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

from diag import schema
from diag.results import GRID_NO_DATA, ChannelSeries, LinkResult

# Labels shown for the cause vocabulary (the CSV files keep the bare names of diag.schema.CAUSES).
CAUSE_LABELS = {
    schema.RAIN: "Rain",
    schema.MULTIPATH: "Multipath (clear air)",
    schema.REFRACTIVE: "Refractive (slow, clear air)",
    schema.LEVEL_SHIFT: "Level shift / alignment",
    schema.SIGNAL_LOSS: "Signal loss (equipment)",
    schema.UNKNOWN: "Unknown",
}


def cause_label(cause: str) -> str:
    """Display label of a cause name ("" and unexpected names pass through readable)."""
    return CAUSE_LABELS.get(str(cause), str(cause).replace("_", " ").capitalize() or "None")


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


def timeline(series: ChannelSeries, *, start=None, end=None, max_points: int = 2000) -> pd.DataFrame:
    """The receive level of one channel between ``start`` and ``end``, thinned to at most ``max_points`` rows.

    The grid is regular, so consecutive runs of ``ceil(n / max_points)`` points are equal time bins; each bin keeps
    its first time, the mean level, the lowest and highest level seen (the logged interval min/max for statistics
    logs, so a deep fade inside a bin is never hidden) and whether the receiver lost the signal in it.  A bin with no
    level (gap, signal lost) has NaN levels so the chart line breaks there.  Columns: ``TIMELINE_COLUMNS``.
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
    level = frame["rsl_dbm"].to_numpy(dtype=float)
    low = frame["rsl_min_dbm"].to_numpy(dtype=float) if "rsl_min_dbm" in frame else level
    high = frame["rsl_max_dbm"].to_numpy(dtype=float) if "rsl_max_dbm" in frame else level
    reference = (frame["reference_dbm"].to_numpy(dtype=float) if "reference_dbm" in frame
                 else np.full(n, np.nan))
    lost = (frame["status"].astype(str).to_numpy() == schema.SIGNAL_LOST) if "status" in frame else np.zeros(n, bool)
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
                max_spans: int = 300) -> pd.DataFrame:
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
    out["cause_label"] = out["cause"].map(cause_label)
    return out[columns].reset_index(drop=True)


# --- overview ---------------------------------------------------------------------------------------------------
def outage_minutes_by_cause(result: LinkResult, *, include_zero: bool = False) -> pd.DataFrame:
    """Outage of one hop by cause in minutes, in the order of ``diag.schema.CAUSES``.

    Columns: ``cause, cause_label, events, below_threshold_min, unavailable_min``.  From ``result.outage.by_cause``
    (seconds) without recomputing anything; causes with no events and no time are left out unless ``include_zero``.
    """
    columns = ["cause", "cause_label", "events", "below_threshold_min", "unavailable_min"]
    by_cause = result.outage.by_cause if result.outage is not None else None
    if by_cause is None or len(by_cause) == 0:
        return pd.DataFrame({name: [] for name in columns})
    frame = by_cause.copy()
    frame["cause"] = frame["cause"].astype(str)
    frame = frame.groupby("cause", sort=False)[["events", "below_threshold_s", "unavailable_s"]].sum()
    order = [c for c in schema.CAUSES if c in frame.index] + [c for c in frame.index if c not in schema.CAUSES]
    frame = frame.reindex(order)
    out = pd.DataFrame({
        "cause": frame.index.astype(str),
        "cause_label": [cause_label(c) for c in frame.index],
        "events": frame["events"].fillna(0).astype(int).to_numpy(),
        "below_threshold_min": frame["below_threshold_s"].fillna(0).to_numpy(dtype=float) / 60.0,
        "unavailable_min": frame["unavailable_s"].fillna(0).to_numpy(dtype=float) / 60.0,
    })
    if not include_zero:
        out = out[(out["events"] > 0) | (out["below_threshold_min"] > 0) | (out["unavailable_min"] > 0)]
    return out.reset_index(drop=True)


def dominant_cause(result: LinkResult) -> str | None:
    """The cause with the most unavailable time, else the most time below threshold, else the most fade events.

    None when the hop had no fade event at all.
    """
    table = outage_minutes_by_cause(result)
    if len(table):
        for column in ("unavailable_min", "below_threshold_min", "events"):
            if table[column].max() > 0:
                return str(table.loc[table[column].idxmax(), "cause"])
    events = result.events
    if events is not None and len(events):
        counts = events["cause"].astype(str).value_counts()
        return str(counts.index[0])
    return None


def _summary_number(summary: dict, key: str) -> float | None:
    value = summary.get(key)
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return number if math.isfinite(number) else None


def hop_overview(result: LinkResult) -> dict:
    """Headline figures of one hop: availability against the objective, minutes, dominant cause, counts."""
    summary = dict(result.outage.summary) if result.outage is not None else {}
    meets = summary.get("meets_objective")
    if isinstance(meets, str):
        meets = {"true": True, "false": False}.get(meets.strip().lower())
    minutes = {key: (None if (value := _summary_number(summary, f"{key}_s")) is None else value / 60.0)
               for key in ("observed", "no_data", "below_threshold", "unavailable", "ses_available")}
    cause = dominant_cause(result)
    return {
        "link_id": result.link.link_id,
        "period_start_utc": summary.get("period_start_utc"),
        "period_end_utc": summary.get("period_end_utc"),
        "availability_pct": _summary_number(summary, "availability_pct"),
        "objective_pct": _summary_number(summary, "objective_pct"),
        "meets_objective": meets if isinstance(meets, bool) else None,
        "observed_min": minutes["observed"],
        "no_data_min": minutes["no_data"],
        "below_threshold_min": minutes["below_threshold"],
        "unavailable_min": minutes["unavailable"],
        "ses_available_min": minutes["ses_available"],
        "events": 0 if result.events is None else int(len(result.events)),
        "dominant_cause": cause,
        "dominant_cause_label": cause_label(cause) if cause else "no fades",
        "error": result.error,
    }


def network_table(results: Sequence[LinkResult]) -> pd.DataFrame:
    """One row per hop for the network list, worst availability first (hops that failed last)."""
    rows = []
    for result in results:
        item = hop_overview(result)
        rows.append({
            "Hop": item["link_id"],
            "Availability %": item["availability_pct"],
            "Objective %": item["objective_pct"],
            "Meets objective": (None if item["meets_objective"] is None
                                else ("yes" if item["meets_objective"] else "NO")),
            "Unavailable min": item["unavailable_min"],
            "Below threshold min": item["below_threshold_min"],
            "Fade events": item["events"],
            "Main cause": item["dominant_cause_label"] if not item["error"] else f"not analysed: {item['error']}",
        })
    table = pd.DataFrame(rows, columns=["Hop", "Availability %", "Objective %", "Meets objective", "Unavailable min",
                                        "Below threshold min", "Fade events", "Main cause"])
    if len(table):
        table = table.sort_values("Availability %", na_position="last", kind="stable").reset_index(drop=True)
    return table


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
EVENT_TABLE_COLUMNS = ["Start (UTC)", "End (UTC)", "Duration s", "Peak fade dB", "Cause", "Confidence", "Channel",
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
        "Duration s": pd.to_numeric(frame["duration_s"], errors="coerce"),
        "Peak fade dB": peak,
        "Cause": frame["cause"].astype(str).map(cause_label),
        "Confidence": confidence,
        "Channel": frame["channel"].astype(str) if "channel" in frame else "",
        "Evidence": frame["evidence"].astype(str) if "evidence" in frame else "",
    })
    return out.reset_index(drop=True)


def fades_by_hour(events: pd.DataFrame, *, utc_offset_h: float = 0.0) -> pd.DataFrame:
    """Number of fade events starting in each hour of the day (0..23, shifted by ``utc_offset_h``), by cause.

    Long format for a stacked bar chart: ``hour, cause, cause_label, events`` (every hour present; zero rows for
    causes that occur somewhere in the list).  Multipath fading peaks in still summer nights and mornings, rain
    in the afternoon in convective climates: the shape helps read the cause (common practice).
    """
    columns = ["hour", "cause", "cause_label", "events"]
    if events is None or len(events) == 0:
        return pd.DataFrame({name: [] for name in columns})
    start = pd.to_datetime(events["start_utc"], utc=True) + pd.Timedelta(hours=float(utc_offset_h))
    frame = pd.DataFrame({"hour": start.dt.hour.to_numpy(), "cause": events["cause"].astype(str).to_numpy()})
    causes = [c for c in schema.CAUSES if c in set(frame["cause"])] + sorted(
        set(frame["cause"]) - set(schema.CAUSES))
    counts = frame.groupby(["hour", "cause"]).size()
    index = pd.MultiIndex.from_product([range(24), causes], names=["hour", "cause"])
    out = counts.reindex(index, fill_value=0).rename("events").reset_index()
    out["cause_label"] = out["cause"].map(cause_label)
    out["events"] = out["events"].astype(int)
    return out[columns]


# --- reader report ----------------------------------------------------------------------------------------------
def rejected_rows(report: dict) -> pd.DataFrame:
    """Rows the reader did not keep, by reason, from a reader report (``ReadResult.report.to_dict()``)."""
    rejected = report.get("rejected") or report.get("rows_rejected") or {}
    if isinstance(rejected, dict):
        rows = [{"Reason": str(k), "Rows": int(v)} for k, v in rejected.items() if v]
    else:
        rows = []
    return pd.DataFrame(rows, columns=["Reason", "Rows"])


def no_data_share(result: LinkResult) -> float | None:
    """Fraction of the analysed period with no data (from the outage summary), None when unknown."""
    summary = result.outage.summary if result.outage is not None else {}
    observed = _summary_number(summary, "observed_s")
    gap = _summary_number(summary, "no_data_s")
    if observed is None or gap is None or observed + gap <= 0:
        return None
    return gap / (observed + gap)


def grid_status_counts(series: ChannelSeries) -> dict[str, int]:
    """How many grid points of a channel are ok / signal lost / missing / no data."""
    status = series.frame["status"].astype(str) if "status" in series.frame else pd.Series([], dtype=str)
    counts = status.value_counts()
    return {name: int(counts.get(name, 0)) for name in (schema.OK, schema.SIGNAL_LOST, schema.MISSING, GRID_NO_DATA)}
