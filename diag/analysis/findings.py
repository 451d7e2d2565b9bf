"""Findings: a short ranked list per hop of what is wrong, the numbers behind it and what a practitioner usually
does about it, with the usual cautions for field work.

Entry point :func:`rank_findings` (fills ``LinkResult.findings``); it reads what the other stages left on the
``LinkResult``: ``outage`` (time below threshold and unavailable time by cause), ``events``, ``statistics``,
``cross_polar`` and ``level_changes``.  Each finding is a dict with ``title, detail, numbers, actions, cautions,
severity`` (``"high"``, ``"medium"``, ``"low"``) plus ``cause`` and ``score`` (the ranking key).

Ranking (common practice, no outside source): unavailable time first, then time below threshold, then the size of
a defect that costs margin without outage yet (tilt, level shift, drift).  Severity "high" when the cause holds
most of the hop's unavailable time or the availability objective is missed, "medium" when it took the hop below
threshold or costs >= 1 dB of margin, "low" otherwise.

The actions are the usual remedies of the trade (common practice); they are suggestions for a qualified engineer,
not instructions.  Every action that involves the site carries the field-work cautions.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

from diag import glossary
from diag import schema as S
from diag.numeric import round_sig as _num

# the cautions are worded once, in diag.glossary (every field action carries them)
CAUTION_HEIGHT = glossary.HEIGHT_CAUTION
CAUTION_RF = glossary.RF_CAUTION
CAUTION_CODES = glossary.LICENCE_CAUTION
CAUTION_ELECTRICAL = glossary.ELECTRICAL_CAUTION
SITE_CAUTIONS = [CAUTION_HEIGHT, CAUTION_RF, CAUTION_CODES]

TILT_FINDING_DEG = 2.0        # common practice: a residual polarisation tilt above ~2 deg is worth realigning
STEP_FINDING_DB = 2.0
DRIFT_MEDIUM_DB_PER_WEEK = 3.0    # a fall this fast is worth a site check soon (common practice)
SHIFT_MEDIUM_DB = 3.0             # a persistent drop this large costs margin worth restoring (common practice)

_CAUSE_TEXT = {
    S.RAIN: ("Rain fades", "rain fade event(s)"),
    S.MULTIPATH: ("Clear-air multipath fading", "multipath fading event(s)"),
    S.REFRACTIVE: ("Slow refractive fading", "refractive fade event(s)"),
    S.LEVEL_SHIFT: ("Level shift / misalignment", "level-shift event(s)"),
    S.SIGNAL_LOSS: ("Equipment signal loss", "signal-loss episode(s)"),
    S.UNKNOWN: ("Fades of unknown cause", "unclassified fade event(s)"),
}


def _loss_text(loss_db) -> str:
    """A small loss in dB with the digits it supports (two significant figures, at least 0.01 dB shown)."""
    try:
        value = float(loss_db)
    except (TypeError, ValueError):
        return "unknown"
    if not math.isfinite(value):
        return "unknown"
    return "under 0.01 dB" if value < 0.01 else f"{value:.2g} dB"


def _pct(share: float) -> str:
    """A share as a whole percentage, '<1 %' for a small non-zero one."""
    return "<1 %" if 0 < share < 0.005 else f"{100 * share:.0f} %"


def _by_cause(result) -> dict[str, dict]:
    """{cause: {unavailable_s, below_threshold_s, events}} from the outage accounting (upper bounds when coarse),
    else from the events table."""
    out: dict[str, dict] = {}
    outage = getattr(result, "outage", None)
    if outage is not None and isinstance(outage.by_cause, pd.DataFrame) and len(outage.by_cause):
        df = outage.by_cause
        for _, row in df.iterrows():
            def pick(col):
                value = row.get(col) if col in df.columns else None
                try:
                    value = float(value)
                except (TypeError, ValueError):
                    return None
                return value if np.isfinite(value) else None

            entry = {"events": int(row.get("events", 0) or 0)}
            for name in ("unavailable_s", "below_threshold_s"):
                exact, lo, hi = pick(name), pick(f"{name}_lo"), pick(f"{name}_hi")
                entry[name] = exact if exact is not None else (hi if hi is not None else 0.0)  # rank on worst case
                entry[f"{name}_lo"] = exact if exact is not None else (lo if lo is not None else entry[name])
                entry[f"{name}_hi"] = entry[name]
            entry["bounds"] = (entry["unavailable_s_lo"] != entry["unavailable_s_hi"] or
                               entry["below_threshold_s_lo"] != entry["below_threshold_s_hi"])
            out[str(row["cause"])] = entry
    events = result.events if isinstance(result.events, pd.DataFrame) else pd.DataFrame()
    if len(events) and "cause" in events:
        for cause, part in events.groupby(events["cause"].astype(str)):
            entry = out.setdefault(cause, {"unavailable_s": 0.0, "below_threshold_s": 0.0,
                                           "events": int(len(part)), "bounds": False})
            entry["events"] = max(entry["events"], int(len(part)))
            entry["peak_fade_db"] = _num(pd.to_numeric(part["peak_fade_db"], errors="coerce").max())
            entry["longest_s"] = _num(pd.to_numeric(part["duration_s"], errors="coerce").max())
            entry["total_event_s"] = _num(pd.to_numeric(part["duration_s"], errors="coerce").sum())
    return out


def _margin_db(result) -> float | None:
    """Clear-sky fade margin: median reference level minus the receiver threshold (lowest channel)."""
    margins = []
    for series in result.series.values():
        frame = series.frame
        if "reference_dbm" in frame and frame["reference_dbm"].notna().any():
            margins.append(float(np.nanmedian(frame["reference_dbm"].to_numpy(dtype=float))) -
                           float(result.link.threshold_dbm))
    return min(margins) if margins else None


def _stat(result, *path):
    node = result.statistics or {}
    for key in path:
        if not isinstance(node, dict) or key not in node:
            return None
        node = node[key]
    return node


def _first_channel_stat(result, *path):
    for ch in (result.statistics or {}).get("channels", {}):
        got = _stat(result, "channels", ch, *path)
        if got is not None:
            return got
    return None


def _cause_finding(cause: str, figures: dict, result, total_unav: float, objective_missed: bool,
                   margin: float | None) -> dict | None:
    """One cause's finding; ``margin`` is :func:`_margin_db` of the hop (computed once by the caller)."""
    unav = figures.get("unavailable_s", 0.0)
    below = figures.get("below_threshold_s", 0.0)
    n_events = figures.get("events", 0)
    if n_events == 0 and unav == 0 and below == 0:
        return None
    link = result.link
    title, noun = _CAUSE_TEXT.get(cause, (cause, cause))
    numbers = {"events": n_events, "unavailable_s": _num(unav), "below_threshold_s": _num(below),
               "deepest_fade_db": figures.get("peak_fade_db"), "longest_event_s": figures.get("longest_s")}
    share = unav / total_unav if total_unav > 0 else 0.0
    if unav > 0 and (share >= 0.5 or objective_missed):
        severity = "high"
    elif below > 0:
        severity = "medium"
    else:
        severity = "low"
    if margin is not None:
        numbers["fade_margin_db"] = _num(margin)
    actions: list[str]
    cautions: list[str] = []
    detail = f"{n_events} {noun}"
    if below > 0 or unav > 0:
        if figures.get("bounds"):   # coarse logs: the accounting gives bounds, never one made-up number
            b_lo, u_lo = figures.get("below_threshold_s_lo", below), figures.get("unavailable_s_lo", unav)
            numbers.update({"below_threshold_s_lo": _num(b_lo), "below_threshold_s_hi": _num(below),
                            "unavailable_s_lo": _num(u_lo), "unavailable_s_hi": _num(unav)})
            numbers["below_threshold_s"] = numbers["unavailable_s"] = None
            dur = glossary.duration_text
            detail += (f" took the hop below threshold for {dur(b_lo)} to {dur(below)} ({dur(u_lo)} to {dur(unav)} "
                       "unavailable; bounds from coarse statistics")
            detail += (f", at most {_pct(share)} of the hop's worst-case unavailable time)"
                       if total_unav > 0 else ")")
        else:
            detail += (f" took the hop below threshold for {glossary.duration_text(below)} "
                       f"({glossary.duration_text(unav)} unavailable")
            detail += f", {_pct(share)} of the hop's unavailable time)" if total_unav > 0 else ")"
    else:
        detail += " without taking the hop below threshold"
    if cause == S.RAIN:
        a001 = _first_channel_stat(result, "rain", "p530", "a001_db")
        deepest = _first_channel_stat(result, "rain", "deepest_rain_fade_db")
        numbers.update({"p530_a001_db": a001, "deepest_rain_fade_db": deepest})
        actions = ["add fade margin: higher-gain antennas or more transmit power within the licence",
                   "move to a lower frequency band where rain attenuation is smaller",
                   "adaptive modulation, so the hop steps down in capacity instead of dropping in heavy rain",
                   "route or path diversity (a shorter hop, or a second path in another direction)"]
        if link.polarization == "H":
            actions.insert(2, "vertical polarisation: rain attenuates V less than H above about 10 GHz "
                              "(ITU-R P.838-3)")
        if a001 is not None and margin is not None:
            detail += f"; fade margin {margin:.1f} dB against a P.530 A0.01 of {a001:.1f} dB"
            numbers["margin_minus_a001_db"] = _num(margin - a001)
        cautions = list(SITE_CAUTIONS)   # new antennas, more power, a second path: all mean site work
    elif cause == S.MULTIPATH:
        slope = _first_channel_stat(result, "exceedance", "multipath_tail", "slope_db_per_decade")
        p0 = _first_channel_stat(result, "exceedance", "multipath_tail", "p0_percent")
        p0_pred = _first_channel_stat(result, "exceedance", "p530_multipath", "p0_percent")
        k = _first_channel_stat(result, "rice_k", "k_moments")
        numbers.update({"tail_slope_db_per_decade": slope, "observed_p0_percent": p0,
                        "p530_p0_percent_worst_month": p0_pred, "rice_k_moments": k})
        if slope is not None:
            detail += f"; deep-fade tail {slope:.1f} dB/decade (Rayleigh: 10)"
        actions = ["review antenna heights and tilt against ground/water reflection geometry (path profile)",
                   "space diversity (second antenna vertically separated) or frequency diversity",
                   "adaptive equalisation / adaptive modulation on the radios",
                   "check that the fades are not interference: look at the radio's error counters"]
        cautions = list(SITE_CAUTIONS)
    elif cause == S.REFRACTIVE:
        actions = ["review path clearance (Fresnel-zone clearance at low effective earth-radius factors) "
                   "with a path profile",
                   "raise the antennas where clearance is marginal; consider space diversity",
                   "keep the fade margin for slow, deep refractive fades in the budget"]
        cautions = list(SITE_CAUTIONS)
    elif cause == S.LEVEL_SHIFT:
        steps = [dict(s, channel=ch) for ch, block in ((result.level_changes or {}).get("channels") or {}).items()
                 for s in block.get("steps", [])]
        if steps:
            worst = max(steps, key=lambda s: abs(float(s["size_db"])))
            numbers["steps"] = steps[:6]
            detail += f"; largest step {float(worst['size_db']):+.1f} dB on {worst['channel']} at {worst['time_utc']}"
            if severity == "low" and float(worst["size_db"]) <= -SHIFT_MEDIUM_DB:
                severity = "medium"          # margin lost for good until someone restores it
        # two channels on one polarisation are the hop's two directions (common practice: a step seen in both
        # directions is the antenna at one end, which transmits and receives; a step in one is that transmitter)
        both = ("both directions" if link.polarization in ("H", "V") and len(result.series) == 2
                else "both polarisations")
        actions = [f"check antenna alignment (a step on {both} points at the antenna or its mount)",
                   "check the hardware of the affected channel: connectors, waveguide/cable, radio output",
                   "compare the clear-sky level with the planned receive level"]
        cautions = list(SITE_CAUTIONS)
    elif cause == S.SIGNAL_LOSS:
        actions = ["check equipment alarms and logs of both ends for the episode times",
                   "check power supply and batteries, earthing and the indoor/outdoor unit connection",
                   "a drop on one direction only points at that direction's transmitter or receiver"]
        cautions = [CAUTION_ELECTRICAL, *SITE_CAUTIONS]
    else:
        actions = ["look at these events in the level plot; add a rain gauge file to confirm or refute rain"]
    score = unav * 1.0 + below * 0.1 + n_events * 0.01
    return {"title": title, "detail": detail + ".", "numbers": numbers, "actions": actions, "cautions": cautions,
            "severity": severity, "cause": cause, "score": _num(score, 8)}


def _tilt_finding(result) -> dict | None:
    cp = result.cross_polar or {}
    tilt = cp.get("tilt_deg")
    if tilt is None:
        return None
    channel = cp.get("tilt_channel")
    block = (cp.get("xpd") or {}).get(channel, {})
    below = bool(block.get("below_required"))
    if tilt < TILT_FINDING_DEG and not below:
        return None
    loss = block.get("copolar_loss_db")
    numbers = {"tilt_deg": tilt, "tilt_deg_perfect_antenna": block.get("tilt_deg_perfect_antenna"),
               "clear_xpd_db": block.get("clear_xpd_db"), "xpd_required_db": block.get("xpd_required_db"),
               "copolar_loss_db": loss, "assumption": block.get("assumption")}
    detail = (f"clear-sky XPD {block.get('clear_xpd_db')} dB on {channel} implies a polarisation tilt of about "
              f"{tilt:.1f} deg (co-polar loss {_loss_text(loss)})")
    if below:
        detail += f"; below the required {block.get('xpd_required_db')} dB"
    severity = "high" if below else ("medium" if tilt >= 5.0 else "low")
    return {"title": "Polarisation tilt (feed rotated)", "detail": detail + ".", "numbers": numbers,
            "actions": ["realign the feed polarisation on site (rotate the feed to the marked orientation) at "
                        "one end, watching XPD live",
                        "check the antenna mount for movement (a tilt that appeared with a level step)",
                        "if XPD stays low after realignment, check the antennas' own XPD (damaged radome/feed)"],
            "cautions": list(SITE_CAUTIONS), "severity": severity, "cause": "polarisation_tilt",
            "score": _num(tilt * 10.0 + (1000.0 if below else 0.0), 8)}


def _shift_findings(result, covered: set[str]) -> list[dict]:
    lc = result.level_changes or {}
    out = []
    for channel, block in (lc.get("channels") or {}).items():
        steps = [s for s in block.get("steps", []) if abs(float(s.get("size_db", 0))) >= STEP_FINDING_DB]
        if steps and S.LEVEL_SHIFT not in covered:
            worst = max(steps, key=lambda s: abs(float(s["size_db"])))
            out.append({"title": f"Level step on {channel}",
                        "detail": f"{len(steps)} persistent step(s); largest {worst['size_db']:+.1f} dB at "
                                  f"{worst['time_utc']}.",
                        "numbers": {"steps": steps[:5]},
                        "actions": ["check antenna alignment and the mount", "check connectors, cable/waveguide "
                                    "and the radio's output power for that time"],
                        "cautions": list(SITE_CAUTIONS),
                        "severity": "medium" if float(worst["size_db"]) < 0 else "low", "cause": S.LEVEL_SHIFT,
                        "score": _num(abs(float(worst["size_db"])), 8)})
        trend = block.get("trend") or {}
        if block.get("drifting"):
            slope = trend.get("slope_db_per_week")
            wet = bool(len(result.events)) and "cause" in result.events and \
                bool((result.events["cause"].astype(str) == S.RAIN).any())
            detail = (f"clear-sky level changes by {slope:+.2f} dB per week (95 % interval "
                      f"{trend.get('low_db_per_week')} to {trend.get('high_db_per_week')}) over "
                      f"{trend.get('span_days')} days")
            if wet and slope < 0:
                detail += ("; the record holds rain, and a level that sinks during a wet spell and recovers after "
                           "it is wet antennas/radomes or wet ground, not hardware: confirm over a longer dry record")
            out.append({"title": f"Slow level drift on {channel}",
                        "detail": detail + ".",
                        "numbers": trend,
                        "actions": ["watch the trend; a steady fall points at ageing hardware, water in the "
                                    "feed/waveguide or a slowly moving mount",
                                    "check the radio's transmit power log at the far end"],
                        "cautions": list(SITE_CAUTIONS),
                        "severity": "medium" if slope <= -DRIFT_MEDIUM_DB_PER_WEEK else "low",
                        "cause": "drift", "score": _num(abs(slope), 8)})
    return out


def _hv_finding(result) -> dict | None:
    hv = (result.cross_polar or {}).get("hv") or {}
    imbalance = hv.get("clear_sky_imbalance_db")
    if imbalance is None or not hv.get("imbalance_flag"):
        return None
    return {"title": "Clear-sky H/V level imbalance",
            "detail": f"the H channel sits {imbalance:+.1f} dB relative to V in clear sky.",
            "numbers": {"clear_sky_imbalance_db": imbalance},
            "actions": ["check the weaker channel's feed port, connectors and the radio's output power",
                        "check feed alignment (a rotated feed moves power between the ports)"],
            "cautions": list(SITE_CAUTIONS), "severity": "low", "cause": "hv_imbalance",
            "score": _num(abs(imbalance), 8)}


def rank_findings(result) -> list[dict]:
    """Ranked findings of one hop (most important first).  JSON-able; fills ``LinkResult.findings``."""
    figures = _by_cause(result)
    total_unav = sum(f.get("unavailable_s", 0.0) for f in figures.values())
    summary = result.outage.summary if getattr(result, "outage", None) is not None else {}
    objective_missed = str(summary.get("meets_objective", "")) == "no"
    findings: list[dict] = []
    margin = _margin_db(result) if any(cause in figures for cause in S.CAUSES) else None
    for cause in S.CAUSES:
        if cause in figures:
            item = _cause_finding(cause, figures[cause], result, total_unav, objective_missed, margin)
            if item is not None:
                findings.append(item)
    covered = {f["cause"] for f in findings}
    for extra in (_tilt_finding(result), _hv_finding(result)):
        if extra is not None:
            findings.append(extra)
    findings.extend(_shift_findings(result, covered))
    order = {"high": 0, "medium": 1, "low": 2}
    findings.sort(key=lambda f: (order.get(f["severity"], 3), -(f.get("score") or 0.0)))
    for rank, item in enumerate(findings, start=1):
        item["rank"] = rank
    if summary:
        for item in findings:
            item["numbers"].setdefault("hop_availability_pct", _num(summary.get("availability_pct"), 8))
    return findings
