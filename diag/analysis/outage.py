"""Outage accounting of one hop: below-threshold time, G.826 unavailable time and SES, by cause, with bounds.

``account_link(result)`` reads ``result.series`` (one ``ChannelSeries`` per channel on a regular grid), the hop's
receiver threshold and availability objective, and returns a ``diag.results.OutageResult``.

Counting rules (see docs/method.md §6):

* A second is **below threshold** when the receive level is strictly below ``link.threshold_dbm`` or the radio
  reported loss of signal (status "signal_lost").  Statuses "missing" and "no_data" are **no data**: excluded from
  the observed time, reported apart, never outage.
* A below-threshold second is taken as a **severely errored second** (SES).  This is a level-based estimate: the
  radio's own counters (when logged) are shown beside it.
* **Unavailable time** follows ITU-T G.826 / G.828 Annex A (``diag.models.g826``): it starts at the first of ten
  consecutive SES (those ten count as unavailable) and ends at the first of ten consecutive non-SES seconds (those
  count as available).  A data gap of ten seconds or more restarts the rule; a shorter one (a missed poll, a blank
  reading) is bridged.  **SES in available time** are the SES outside it.
* **Availability** = 100 (1 - unavailable / observed) over the observed time only.
* **Link level** (ITU-T G.826 (12/2002) Annex A, A.2): each traffic channel of the hop (each direction, each
  polarisation) gets its own ten-second rule, and the hop is unavailable when any channel is (the union of the
  per-channel unavailable times).  A second is SES at hop level if any channel is, and SES are counted only in the
  hop's available time; a second is observed if any channel has data.  Short SES bursts that alternate between the
  two directions therefore stay SES in available time (300 s of alternating 5-s bursts: 0 s unavailable, 300 SES).
  Interval statistics (bounds only) keep the combined record for the upper bound (never less than the union, so
  still a valid bound); the lower bound is the same either way (whole intervals of at least ten seconds).
* **Cause**: each below-threshold second takes the cause of the fade event covering it (``frame["cause"]``).  An
  unavailable second that is not itself covered by an event takes the dominant cause of its unavailable period;
  "unknown" where there is none.  Every second has exactly one cause, so the per-cause rows add up exactly.
  The hop's **main cause** is the cause with the most unavailable time (upper bound), "no outage" without any
  (``diag.glossary``).

Bounds (logs coarser than one second, and interval min/avg/max statistics) are described in ``_sample_masks`` and
``_stats_masks``; the exact columns are then NaN and the ``*_lo`` / ``*_hi`` fields carry the bounds.
"""
from __future__ import annotations

import logging
import math

import numpy as np
import pandas as pd

from diag import glossary, schema
from diag.analysis.outage_masks import (  # noqa: F401  (stats_interval_bounds, METHOD_* are public here too)
    _AVG_TEXT,
    _COUNTERS,
    _UNKNOWN,
    CAUSES,
    MAX_SECONDS,
    METHOD_STATS,
    _aligned_stats_interval,
    _cause_codes,
    _channel_masks,
    _combine_units,
    _Masks,
    _offsets,
    _stats_units,
    _status_flags,
    _unit_figures,
    stats_interval_bounds,
)
from diag.errors import InputError
from diag.models import g826
from diag.results import ChannelSeries, LinkResult, OutageResult

log = logging.getLogger(__name__)

def _combine(masks: list[_Masks]) -> _Masks:
    """Link level: a second is below threshold if any channel is, observed if any channel is."""
    first = masks[0]
    out = _Masks(first.observed.copy(), first.lo.copy(), first.hi.copy(), first.certain.copy(),
                 first.possible.copy(), first.cause.copy(), all(m.exact for m in masks),
                 "; ".join(dict.fromkeys(m.method for m in masks)), max(m.interval_s for m in masks),
                 "stats" if any(m.kind == "stats" for m in masks) else "sample",
                 next((m.block for m in masks if m.block is not None), None))
    for m in masks[1:]:
        # cause: a second below on this channel but not yet below at link level takes this channel's cause;
        # an unknown cause is replaced by a known one from another channel covering the same second
        take = (m.hi & ~out.hi) | ((out.cause == _UNKNOWN) & (m.cause != _UNKNOWN))
        out.cause[take] = m.cause[take]
        for name in ("observed", "lo", "hi", "certain", "possible"):
            np.logical_or(getattr(out, name), getattr(m, name), out=getattr(out, name))
    return out


def _clusters(possible: np.ndarray, observed: np.ndarray, consecutive_s: int) -> np.ndarray:
    """Cluster id per second: runs of possible-SES seconds not separated by >= 10 clear observed seconds or a gap of
    >= 10 s (shorter gaps are bridged by the rule); -1 for separator seconds."""
    code = np.where(observed, possible.astype(np.int8), np.int8(-1))
    n = code.size
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    change = np.flatnonzero(code[1:] != code[:-1]) + 1
    starts = np.concatenate(([0], change))
    lengths = np.diff(np.concatenate((starts, [n])))
    values = code[starts]
    separator = ((values == -1) & (lengths >= consecutive_s)) | ((values == 0) & (lengths >= consecutive_s))
    run_id = np.cumsum(separator)
    run_id = np.where(separator, -1, run_id)
    return np.repeat(run_id, lengths)


def _unavailable(m: _Masks, consecutive_s: int) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper unavailable masks (equal for exact data)."""
    u_lo = g826.unavailable_mask(m.certain, m.observed, consecutive_s=consecutive_s, bridge_gaps_s=consecutive_s)
    if m.exact:
        return u_lo, u_lo
    u_hi = g826.unavailable_mask(m.possible, m.observed, consecutive_s=consecutive_s, bridge_gaps_s=consecutive_s)
    # a cluster that cannot hold `consecutive_s` below-threshold seconds cannot start unavailable time
    cid = _clusters(m.possible, m.observed, consecutive_s)
    if u_hi.any():
        valid = cid >= 0
        counts = np.bincount(cid[valid], weights=m.hi[valid].astype(float), minlength=int(cid.max()) + 1)
        small = np.zeros(cid.size, dtype=bool)
        small[valid] = counts[cid[valid]] < consecutive_s
        u_hi &= ~small
    if m.block is not None and u_hi.any():
        u_hi = _cap_per_block(u_hi, m.hi, m.block, consecutive_s)
    return u_lo, u_hi


def _cap_per_block(u_hi: np.ndarray, hi: np.ndarray, block: np.ndarray, consecutive_s: int) -> np.ndarray:
    """In a statistics interval holding at most k below-threshold seconds, at most k + (consecutive_s - 1)(k + 1)
    seconds can be unavailable: the k SES themselves plus fewer than ``consecutive_s`` clear seconds in each of the
    k + 1 clear stretches around them (a longer clear stretch ends unavailable time)."""
    inside = block >= 0
    ids = block[inside]
    uniq, first = np.unique(ids, return_index=True)
    pos = np.searchsorted(uniq, ids)
    k = np.bincount(pos, weights=hi[inside].astype(float), minlength=uniq.size)
    cap = k + (consecutive_s - 1) * (k + 1)
    u_in = u_hi[inside]
    csum = np.cumsum(u_in)
    before = np.where(first > 0, csum[np.maximum(first - 1, 0)], 0)
    rank = csum - before[pos]
    trimmed = u_hi.copy()
    trimmed[np.flatnonzero(inside)] = u_in & (rank <= cap[pos])
    return trimmed


def _union_unavailable(parts: list[tuple[np.ndarray, np.ndarray]]) -> tuple[np.ndarray, np.ndarray]:
    """Hop-level unavailable masks: the union of each channel's (ITU-T G.826 (12/2002) Annex A, A.2: a
    bidirectional path is unavailable when either direction is).  Exact channels keep lower is upper."""
    lo = np.logical_or.reduce([p[0] for p in parts])
    if all(p[0] is p[1] for p in parts):
        return lo, lo
    return lo, np.logical_or.reduce([p[1] for p in parts])


def _unavailable_causes(unav: np.ndarray, cause: np.ndarray) -> np.ndarray:
    """Cause per unavailable second: the covering event's; otherwise the dominant cause of its period."""
    out = cause.copy()
    periods = g826.unavailable_periods(unav)
    for start, end in periods:
        seg = out[start:end]
        unknown = seg == _UNKNOWN
        if unknown.any() and not unknown.all():
            counts = np.bincount(seg[~unknown], minlength=len(CAUSES))
            seg[unknown] = int(np.argmax(counts))
    return out


def _by_cause(mask: np.ndarray, cause: np.ndarray) -> np.ndarray:
    return np.bincount(cause[mask].astype(np.int64), minlength=len(CAUSES)).astype(np.int64)


def _figures(m: _Masks, consecutive_s: int, unavailable: tuple[np.ndarray, np.ndarray] | None = None) -> dict:
    """All counts of one mask set, with per-cause arrays for below / unavailable (lo and hi).

    ``unavailable``: the (lower, upper) unavailable masks when they come from elsewhere (the hop-level union of the
    per-channel masks, G.826 Annex A); by default the ten-second rule runs on ``m`` itself."""
    u_lo, u_hi = _unavailable(m, consecutive_s) if unavailable is None else unavailable
    obs = m.observed
    below_lo = int(np.count_nonzero(m.lo & obs))
    below_hi = int(np.count_nonzero(m.hi & obs))
    unav_lo = int(np.count_nonzero(u_lo))
    unav_hi = int(np.count_nonzero(u_hi))
    if m.exact:
        ses_av_lo = ses_av_hi = g826.available_count(m.lo, u_lo, obs)
    else:
        ses_in_u_max = min(int(np.count_nonzero(u_hi & m.possible)), below_hi)
        ses_av_lo = max(0, below_lo - ses_in_u_max)
        ses_av_hi = max(ses_av_lo, below_hi - int(np.count_nonzero(m.certain & u_lo)))
    cause_u_lo = _unavailable_causes(u_lo, m.cause)
    cause_u_hi = cause_u_lo if u_hi is u_lo else _unavailable_causes(u_hi, m.cause)
    return {
        "observed_s": int(np.count_nonzero(obs)),
        "below_lo": below_lo, "below_hi": below_hi,
        "unav_lo": unav_lo, "unav_hi": unav_hi,
        "ses_av_lo": int(ses_av_lo), "ses_av_hi": int(ses_av_hi),
        "cause_below_lo": _by_cause(m.lo & obs, m.cause), "cause_below_hi": _by_cause(m.hi & obs, m.cause),
        "cause_unav_lo": _by_cause(u_lo, cause_u_lo), "cause_unav_hi": _by_cause(u_hi, cause_u_hi),
        "unavailable_periods": int(len(g826.unavailable_periods(u_lo))),
        "exact": m.exact, "method": m.method,
    }


# --- interval statistics on one aligned grid: the same figures counted per interval ---------------------------
# With every channel's intervals on one grid of dt >= 10 s, each interval is either wholly certain, wholly possible or
# clear in the per-second masks above, so the G.826 rule reduces to interval arithmetic: certain intervals are
# unavailable (lower bound); runs of possible intervals are unavailable unless the run cannot hold ten below-threshold
# seconds, at most min(dt, 10k + 9) s per interval (upper bound); an interval holding fewer than dt unavailable
# seconds ends its period (those seconds at its start), so an uncaused interval takes the main cause of the same
# period as its seconds in the per-second masks.  tests/analysis/test_outage.py checks both ways agree.

def _iso(ts: pd.Timestamp) -> str:
    return ts.tz_convert("UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


def _meets(avail_lo: float, avail_hi: float, objective_pct: float | None) -> str:
    if objective_pct is None or not math.isfinite(avail_lo) or not math.isfinite(avail_hi):
        return ""
    if avail_lo >= objective_pct:
        return "yes"
    if avail_hi < objective_pct:
        return "no"
    return "undetermined"


def _row(link_id: str, t0: pd.Timestamp, t1: pd.Timestamp, n: int, f: dict, objective_pct: float | None) -> dict:
    exact = f["exact"]
    obs = f["observed_s"]
    av_lo = g826.availability_percent(f["unav_hi"], obs)
    av_hi = g826.availability_percent(f["unav_lo"], obs)
    nan = float("nan")
    row = {
        "link_id": link_id, "period_start_utc": _iso(t0), "period_end_utc": _iso(t1),
        "observed_s": obs, "no_data_s": n - obs,
        "below_threshold_s": f["below_lo"] if exact else nan,
        "unavailable_s": f["unav_lo"] if exact else nan,
        "ses_available_s": f["ses_av_lo"] if exact else nan,
        "availability_pct": av_hi if exact else nan,
        "objective_pct": objective_pct if objective_pct is not None else nan,
        "meets_objective": _meets(av_lo, av_hi, objective_pct),
        "exact": exact,
        "below_threshold_s_lo": f["below_lo"], "below_threshold_s_hi": f["below_hi"],
        "unavailable_s_lo": f["unav_lo"], "unavailable_s_hi": f["unav_hi"],
        "ses_available_s_lo": f["ses_av_lo"], "ses_available_s_hi": f["ses_av_hi"],
        "availability_pct_lo": av_lo, "availability_pct_hi": av_hi,
        "unavailable_periods": f["unavailable_periods"],
        "method": f["method"],
    }
    return row


def _annual(row: dict, objective_pct: float | None) -> dict:
    """The observed outage put on a yearly scale, two ways, both with their caveat."""
    obs = row["observed_s"]
    out: dict = {}
    for tag in ("lo", "hi"):
        unav = row[f"unavailable_s_{tag}"]
        out[f"unavailable_min_per_year_linear_{tag}"] = g826.scale_to_year_s(unav, obs) / 60.0
        pct = 100.0 * unav / obs if obs > 0 else float("nan")
        annual_pct = g826.annual_from_worst_month_percent(pct) if obs > 0 else float("nan")
        out[f"unavailable_min_per_year_if_worst_month_{tag}"] = annual_pct / 100.0 * g826.SECONDS_PER_YEAR / 60.0
    out["objective_min_per_year"] = (g826.objective_minutes_per_year(objective_pct)
                                     if objective_pct is not None else float("nan"))
    out["observed_days"] = obs / 86400.0
    return out


def _counters(series: ChannelSeries, f: dict) -> dict | None:
    """The radio's own ES/SES/UAS counters (frame columns es_count/ses_count/uas_count) beside our estimate."""
    frame = series.frame
    present = [c for c in _COUNTERS if c in frame.columns and frame[c].notna().any()]
    if not present:
        return None
    out: dict = {"logged": present}
    for c in present:
        out[f"radio_{c}"] = float(np.nansum(frame[c].to_numpy(dtype=float)))
    pairs = {schema.UAS: ("unav_lo", "unav_hi"), schema.SES: ("ses_av_lo", "ses_av_hi")}
    for c, (lo_key, hi_key) in pairs.items():
        if c not in present:
            continue
        radio = out[f"radio_{c}"]
        lo, hi = f[lo_key], f[hi_key]
        out[f"level_based_{c}_lo"] = lo
        out[f"level_based_{c}_hi"] = hi
        out[f"{c}_difference_s"] = radio - (lo + hi) / 2.0 if f["exact"] else float("nan")
        out[f"{c}_within_bounds"] = bool(lo - 0.5 <= radio <= hi + 0.5)
    if schema.ES in present:
        out["level_based_es_note"] = "ES is not estimated from levels (errors above threshold are not visible)"
    return out


def account_link(result: LinkResult, *, consecutive_s: int = g826.CONSECUTIVE_S,
                 stats_average: str = "either", _force_seconds: bool = False) -> OutageResult:
    """Outage accounting of one hop over the analysed period (see the module docstring for the rules).

    Returns an ``OutageResult`` whose ``summary`` has ``schema.OUTAGE_SUMMARY_COLUMNS`` first, then the bounds
    (``*_lo``/``*_hi``), ``exact``, ``method``, the yearly scaling and the radio counters; ``by_cause`` has one row
    per cause in ``schema.CAUSES`` (they add up to the summary); ``per_channel`` one row per channel.
    ``stats_average``: how the radio averages its interval statistics ("db", "mw", or "either" when unknown).
    """
    link = result.link
    threshold = float(link.threshold_dbm)
    objective = link.objective_pct
    notes: list[str] = []
    series = [s for s in result.series.values() if s is not None and len(s.frame) > 0 and "rsl_dbm" in s.frame]
    by_cause_cols = schema.OUTAGE_BY_CAUSE_COLUMNS + ["below_threshold_s_lo", "below_threshold_s_hi",
                                                      "unavailable_s_lo", "unavailable_s_hi"]
    if not series:
        nan = float("nan")
        summary = {c: nan for c in schema.OUTAGE_SUMMARY_COLUMNS}
        summary.update(link_id=link.link_id, period_start_utc="", period_end_utc="", observed_s=0, no_data_s=0,
                       objective_pct=objective if objective is not None else nan, meets_objective="",
                       exact=False, method="no receive-level data")
        notes.append("No receive-level data for this hop: nothing to account.")
        return OutageResult(summary, pd.DataFrame(columns=by_cause_cols), pd.DataFrame(), notes)

    t0 = min(s.frame.index[0] for s in series).floor("s")
    t1 = max(s.frame.index[-1] + pd.Timedelta(seconds=float(s.interval_s)) for s in series).ceil("s")
    n = int(round((t1 - t0) / pd.Timedelta(seconds=1)))
    dt = None if _force_seconds else _aligned_stats_interval(series, t0, n, consecutive_s)
    if dt is not None:   # interval statistics on one grid: count per interval (same figures, far less memory)
        units = [_stats_units(s, t0, n // dt, dt, threshold, stats_average) for s in series]
        channel_figures = [_unit_figures(u, dt, consecutive_s, METHOD_STATS.format(dt=dt,
                                                                                   avg=_AVG_TEXT[stats_average]))
                           for u in units]
        f = _unit_figures(_combine_units(units, dt), dt, consecutive_s, channel_figures[0]["method"])
        kinds = [("stats", float(dt))] * len(series)
    else:
        if n > MAX_SECONDS:
            raise InputError(f"hop {link.link_id!r}: a period of {n / 86400:.0f} days is too long to count second by "
                             f"second (at most {MAX_SECONDS / 86400:.0f} days); split the log into shorter periods")
        rotation: dict[int, int] = {}
        masks = [_channel_masks(s, t0, n, threshold, rotation, stats_average) for s in series]
        channel_unav = [_unavailable(m, consecutive_s) for m in masks]
        channel_figures = [_figures(m, consecutive_s, u) for m, u in zip(masks, channel_unav)]
        hop_unav = _union_unavailable(channel_unav) if all(m.kind != "stats" for m in masks) else None
        f = _figures(_combine(masks), consecutive_s, hop_unav)
        kinds = [(m.kind, m.interval_s) for m in masks]

    per_channel_rows = []
    counters: dict[str, dict] = {}
    for s, fc, (kind, interval_s) in zip(series, channel_figures, kinds):
        row = _row(link.link_id, t0, t1, n, fc, objective)
        row = {"channel": s.channel, **row, "interval_s": interval_s, "kind": kind}
        found = _counters(s, fc)
        if found:
            counters[s.channel] = found
            row.update({f"counter_{k}": v for k, v in found.items() if k != "logged"})
        per_channel_rows.append(row)
    summary = _row(link.link_id, t0, t1, n, f, objective)
    summary["channels"] = [s.channel for s in series]
    summary["threshold_dbm"] = threshold
    summary.update(_annual(summary, objective))
    summary["radio_counters"] = counters

    events = result.events if isinstance(result.events, pd.DataFrame) else pd.DataFrame()
    event_counts = (events["cause"].astype(str).value_counts() if "cause" in events.columns and len(events)
                    else pd.Series(dtype="int64"))
    exact = f["exact"]
    nan = float("nan")
    by_cause = pd.DataFrame({
        "link_id": [link.link_id] * len(CAUSES),
        "cause": CAUSES,
        "events": [int(event_counts.get(c, 0)) for c in CAUSES],
        "below_threshold_s": f["cause_below_lo"] if exact else [nan] * len(CAUSES),
        "unavailable_s": f["cause_unav_lo"] if exact else [nan] * len(CAUSES),
        "below_threshold_s_lo": f["cause_below_lo"], "below_threshold_s_hi": f["cause_below_hi"],
        "unavailable_s_lo": f["cause_unav_lo"], "unavailable_s_hi": f["cause_unav_hi"],
    }, columns=by_cause_cols)
    ranked = by_cause.sort_values(["unavailable_s_hi", "below_threshold_s_hi"], ascending=False, kind="stable")
    top = ranked.iloc[0]
    # main cause (diag.glossary): the cause with the most outage (upper bound); "no outage" without unavailable time
    summary["main_cause"] = str(top["cause"]) if top["unavailable_s_hi"] > 0 else glossary.NO_OUTAGE

    # --- notes: method and caveats (plain words, shown in the report) ---
    notes.append("Counting: a second below the receiver threshold ({:g} dBm) or with loss of signal is taken as a "
                 "severely errored second; unavailable time follows the ITU-T G.826/G.828 ten-second rule; "
                 "data gaps are excluded and never counted as outage.".format(threshold))
    if len(series) > 1:
        notes.append("Hop level: each channel ({}) gets its own ten-second rule and the hop is unavailable when "
                     "any channel is (ITU-T G.826 Annex A); a second is severely errored if any channel is, and "
                     "counted only in available time.".format(", ".join(s.channel for s in series)))
    if not exact:
        notes.append("Coarse data: outage is given as a lower and an upper bound, not one number. Method: "
                     + f["method"] + ".")
    if objective is None:
        notes.append("No availability objective (objective_pct) in the links table: the comparison with an "
                     "objective is skipped.")
    else:
        notes.append(f"Objective {objective:g} % allows {summary['objective_min_per_year']:.2f} min of "
                     "unavailability per 365-day year. The measured availability covers only "
                     f"{summary['observed_days']:.1f} days of observed time.")
    notes.append("A week is not a year: the yearly figures scale the observed outage linearly (as if every week "
                 "were like this one) and, alternatively, treat the observed period as the worst month and convert "
                 "with ITU-R P.841's global parameters (Q1 = 2.85, beta = 0.13). Rain and multipath are seasonal; "
                 "only a year or more of data supports an annual figure.")
    if not counters:
        notes.append("The log carries no ES/SES/UAS counters from the radio: the level-based figures could not be "
                     "cross-checked.")
    else:
        notes.append("The radio's own counters are shown beside the level-based estimate; they count bit errors, so "
                     "they also see interference and equipment errors above the threshold.")
    per_channel = pd.DataFrame(per_channel_rows)
    return OutageResult(summary=summary, by_cause=by_cause, per_channel=per_channel, notes=notes)
