"""The sentences of the management report (``diag.report.pdf`` draws them): figures as printed, the headline
table's cells, the overview sentence, findings per hop, data gaps, method notes and the glossary page.

Every word of the outcome (outage, time below threshold, main cause, verdicts, cause labels, cautions) comes from
``diag.glossary``; everything said about method is in :func:`method_notes`, nowhere else in the report.
"""
from __future__ import annotations

import math
import textwrap
from typing import Sequence

from diag import glossary, schema
from diag.report import style
from diag.results import LinkResult

MAX_TABLE_ROWS = 14
FINDINGS_PER_HOP = 3
SAFETY_TEXT = glossary.SAFETY_SHORT
HEADLINE_NOTE = ("Outage is unavailable time (ITU-T G.826), counted over the time with data. A range a – b means "
                 "the log is too coarse for an exact count: the true value lies between the two figures.")
_SHORT = glossary.CAUSE_SHORT

# ------------------------------------------------------------------------------------------------ formatting
def _finite(x) -> bool:
    try:
        return x is not None and math.isfinite(float(x))
    except (TypeError, ValueError):
        return False


def _pct(value: float) -> str:
    decimals = 4 if value >= 99.9 else 3 if value >= 99.0 else 2
    return f"{value:.{decimals}f}"


def format_availability(summary: dict | None) -> str:
    """Availability as printed in the report: "99.9876 %" (exact) or "99.10 – 99.95 %" (bounds), "n/a" if none."""
    if not summary:
        return "n/a"
    if summary.get("exact") and _finite(summary.get("availability_pct")):
        return f"{_pct(float(summary['availability_pct']))} %"
    lo, hi = summary.get("availability_pct_lo"), summary.get("availability_pct_hi")
    if _finite(lo) and _finite(hi):
        if abs(float(hi) - float(lo)) < 1e-12:
            return f"{_pct(float(lo))} %"
        return f"{_pct(float(lo))} – {_pct(float(hi))} %"
    return "n/a"


def _minutes(seconds: float) -> str:
    m = float(seconds) / 60.0
    if m == 0:
        return "0"
    if m < 10:
        return f"{m:.1f}"
    return f"{m:.0f}"


def format_minutes(summary: dict | None, key: str = "unavailable_s") -> str:
    """Minutes for a summary figure: "12.5 min" or "2.0 – 15 min" (bounds)."""
    if not summary:
        return "n/a"
    if summary.get("exact") and _finite(summary.get(key)):
        return f"{_minutes(summary[key])} min"
    lo, hi = summary.get(f"{key}_lo"), summary.get(f"{key}_hi")
    if _finite(lo) and _finite(hi):
        if lo == hi:
            return f"{_minutes(lo)} min"
        return f"{_minutes(lo)} – {_minutes(hi)} min"
    return "n/a"


def _duration(seconds: float) -> str:
    seconds = float(seconds)
    if seconds < 120:
        return f"{seconds:.0f} s"
    if seconds < 7200:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


def _verdict(summary: dict | None) -> str:
    if not summary:
        return "—"
    return glossary.verdict_label(summary.get("meets_objective", ""))


def _wrap(text: str, width: int) -> str:
    return "\n".join(textwrap.wrap(" ".join(str(text).split()), width=width)) or ""


def _period(results: Sequence[LinkResult]) -> str:
    starts, ends = [], []
    for r in results:
        if r.outage is not None and r.outage.summary.get("period_start_utc"):
            starts.append(r.outage.summary["period_start_utc"])
            ends.append(r.outage.summary["period_end_utc"])
    if not starts:
        return "period unknown"
    fmt = lambda s: s.replace("T", " ")[:16]  # noqa: E731
    return f"{fmt(min(starts))} to {fmt(max(ends))} UTC"


# ------------------------------------------------------------------------------------------------ page 1
def _headline_rows(results: Sequence[LinkResult]) -> list[list[str]]:
    rows = []
    for r in results[:MAX_TABLE_ROWS]:
        link = r.link
        s = r.outage.summary if r.outage is not None else None
        objective = f"{link.objective_pct:g} %" if link.objective_pct is not None else "none given"
        if r.error or s is None:
            rows.append([link.link_id, f"{link.frequency_ghz:g} GHz, {link.length_km:g} km", "not analysed",
                         objective, "—", "—", "—", "—", "—"])
            continue
        obs, nod = s.get("observed_s", 0) or 0, s.get("no_data_s", 0) or 0
        share = 100 * nod / (obs + nod) if obs + nod > 0 else 0.0
        nodata = (f"{_duration(nod)} ({share:.2f} %)" if 0 < share < 0.1 else f"{_duration(nod)} ({share:.1f} %)"
                  ) if obs + nod > 0 else "—"
        main = s.get("main_cause") or glossary.NO_OUTAGE
        rows.append([link.link_id, f"{link.frequency_ghz:g} GHz, {link.length_km:g} km", format_availability(s),
                     objective, _verdict(s), format_minutes(s, "unavailable_s"),
                     format_minutes(s, "below_threshold_s"), _SHORT.get(main, main),
                     nodata])
    return rows


def _overview_sentence(results: Sequence[LinkResult]) -> str:
    """One or two plain sentences: how many hops missed the objective, total outage and its main causes."""
    judged = [r for r in results if r.outage is not None]
    missed = [r for r in judged if r.outage.summary.get("meets_objective") == "no"]
    unsure = [r for r in judged if r.outage.summary.get("meets_objective") == "undetermined"]
    with_objective = [r for r in judged if r.outage.summary.get("meets_objective") in ("yes", "no", "undetermined")]
    parts = []
    if with_objective:
        parts.append(f"{len(missed)} of {len(with_objective)} hop(s) missed their availability objective"
                     + (f" and {len(unsure)} cannot be judged from the coarse data" if unsure else "") + ".")
    totals = {c: [0.0, 0.0] for c in style.CAUSE_ORDER}
    for r in judged:
        bc = r.outage.by_cause
        if bc is None or bc.empty:
            continue
        for _, row in bc.iterrows():
            if row["cause"] in totals:
                totals[row["cause"]][0] += float(row["unavailable_s_lo"])
                totals[row["cause"]][1] += float(row["unavailable_s_hi"])
    lo = sum(v[0] for v in totals.values())
    hi = sum(v[1] for v in totals.values())
    if hi <= 0:
        parts.append("No hop had unavailable time in the period.")
    else:
        total = f"{_minutes(lo)} min" if lo == hi else f"between {_minutes(lo)} and {_minutes(hi)} min"
        ranked = sorted(((v[1], c) for c, v in totals.items() if v[1] > 0), reverse=True)[:2]
        causes = " and ".join(f"{style.cause_label(c).lower()} ({_minutes(v)} min"
                              + ("" if totals[c][0] == totals[c][1] else " at most") + ")" for v, c in ranked)
        parts.append(f"Total outage {total}, mostly {causes}.")
    return " ".join(parts)


def _top_findings(results: Sequence[LinkResult], limit: int) -> list[tuple[str, dict]]:
    """Round-robin over hops, worst outage first, so every hop's first finding comes before any second one."""
    results = sorted(results, key=lambda r: -(float(r.outage.summary.get("unavailable_s_hi") or 0)
                                              if r.outage is not None else 0.0))
    out: list[tuple[str, dict]] = []
    depth = 0
    while len(out) < limit:
        added = False
        for r in results:
            if depth < len(r.findings):
                out.append((r.link.link_id, r.findings[depth]))
                added = True
                if len(out) >= limit:
                    break
        if not added:
            break
        depth += 1
    return out


def _first_action(finding: dict) -> str:
    actions = finding.get("actions") or []
    if isinstance(actions, str):
        return actions
    return str(actions[0]) if actions else ""




def findings_by_hop(results: Sequence[LinkResult], per_hop: int = FINDINGS_PER_HOP) -> list[tuple[str, list[str]]]:
    """Every hop's findings, up to ``per_hop`` each (ranked by the findings module, level shifts included), worst
    outage first: (hop id, printed lines) per hop.  Each finding gives its detail, its actions and, when it has
    any, a pointer to the cautions printed under the list."""
    ordered = sorted(results, key=lambda r: -(float(r.outage.summary.get("unavailable_s_hi") or 0)
                                              if r.outage is not None else 0.0))
    out = []
    for r in ordered:
        lines = []
        if r.error:
            lines.append(_wrap(f"• {glossary.NOT_ANALYSED}: {r.error}", 130))
        for f in list(r.findings or [])[:per_hop]:
            text = f"• {f.get('title', '')}."
            if f.get("detail"):
                text += f" {f['detail']}"
            line = _wrap(text, 130)
            actions = f.get("actions") or []
            actions = [actions] if isinstance(actions, str) else list(actions)
            if actions:
                line += "\n" + _wrap("    Actions: " + "; ".join(str(a) for a in actions[:3])
                                     + (" (safety: see the cautions after the list)" if f.get("cautions") else ""), 130)
            lines.append(line)
        more = len(r.findings or []) - per_hop
        if more > 0:
            lines.append(f"    {more} more finding(s) for this hop in findings.json")
        if not lines:
            lines.append("• No findings for this hop.")
        out.append((r.link.link_id, lines))
    return out


def cautions_text(results: Sequence[LinkResult]) -> list[str]:
    """The cautions attached to the printed findings, each once (diag.glossary words), else the short one."""
    seen: dict[str, None] = {}
    for r in results:
        for f in list(r.findings or [])[:FINDINGS_PER_HOP]:
            for c in f.get("cautions") or []:
                seen.setdefault(str(c))
    return list(seen) or [SAFETY_TEXT]


def gaps_lines(results: Sequence[LinkResult]) -> list[str]:
    gaps = []
    for r in results:
        s = r.outage.summary if r.outage is not None else None
        if s and (s.get("no_data_s") or 0) > 0:
            total = (s.get("observed_s") or 0) + s["no_data_s"]
            share = 100 * s["no_data_s"] / total
            gaps.append(f"{r.link.link_id}: {_duration(s['no_data_s'])} without data "
                        f"({share:.2f} % of the period), excluded from availability." if share < 0.1 else
                        f"{r.link.link_id}: {_duration(s['no_data_s'])} without data "
                        f"({share:.1f} % of the period), excluded from availability.")
        elif r.error:
            gaps.append(f"{r.link.link_id}: {glossary.NOT_ANALYSED} ({r.error}).")
    return gaps or ["No gaps in the analysed period."]


def method_notes(results: Sequence[LinkResult]) -> list[str]:
    """Everything the report says about method (and only here)."""
    method = [
        "A second below the receiver threshold (or with loss of signal) counts as a severely errored second (SES). "
        "Outage is unavailable time: it begins with ten consecutive SES and ends with ten consecutive clear "
        "seconds (ITU-T G.826 / G.828 Annex A). Each direction or channel of a hop gets its own rule; the hop is "
        "unavailable when any one is. Data gaps are never counted as outage.",
        "Time below threshold counts every second under the threshold, outage or not; a dip shorter than ten "
        "seconds is an SES in available time, not outage.",
        "Each outage second is attributed to the cause of the fade covering it; the causes add up to the total. "
        "The main cause is the cause with the most outage.",
        "Coarse logs (15-min min/avg/max statistics, sparse samples) give a lower and an upper bound, never one "
        "invented number. Fade depths in the event list use the interval minimum; the fade-depth chart uses the "
        "interval averages, so it shows shallower fades.",
        "A week is not a year: yearly figures are only an extrapolation, scaled linearly (as if every week were "
        "like this one) or with the observed period taken as the worst month and converted to an average year "
        "with ITU-R P.841's global parameters (Q1 = 2.85, beta = 0.13). Rain and multipath are seasonal.",
        "Causes are judged from the shape, depth, timing and polarisation of each fade against ITU-R P.838 / P.530; "
        "15-min statistics give lower confidence than samples. Recommended actions are common practice.",
    ]
    if any(r.outage is not None and r.link.objective_pct is None for r in results):
        method.append("Hops without an availability objective in the links table are not judged against one.")
    return method


def counters_lines(results: Sequence[LinkResult]) -> list[str]:
    counters = []
    for r in results:
        rc = (r.outage.summary.get("radio_counters") or {}) if r.outage is not None else {}
        for channel, c in sorted(rc.items()):
            if "radio_uas_count" in c:
                agree = "agrees with" if c.get("uas_count_within_bounds") else "differs from"
                counters.append(f"{r.link.link_id} {channel}: the radio counted {c['radio_uas_count']:.0f} "
                                f"unavailable s; this {agree} the level-based {c['level_based_uas_count_lo']:.0f}"
                                + ("" if c["level_based_uas_count_lo"] == c["level_based_uas_count_hi"]
                                   else f"–{c['level_based_uas_count_hi']:.0f}") + " s.")
    return counters


GLOSSARY_KEYS = ("outage", "below_threshold", "ses_available", "availability", "objective", "meets_objective",
                 "main_cause",
                 "no_outage", "undetermined", "no_data", "fade_event", "peak_fade_db")


def glossary_entries() -> list[tuple[str, str]]:
    """(term, explanation) pairs of the glossary page: the report's own words, then the trade terms it uses."""
    entries = [(glossary.TERMS[k].label, glossary.TERMS[k].definition) for k in GLOSSARY_KEYS]
    entries.append(("Cause marks", "Printed over the fades on the timelines: " + ", ".join(
        f"{glossary.CAUSE_CODES[c]} {glossary.CAUSE_LABELS[c].lower()}" for c in schema.CAUSES) + "."))
    entries += list(glossary.TRADE_TERMS.items())
    return entries
