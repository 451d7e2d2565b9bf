"""Tables of the dashboard's reader screen: what the reader made of a file (summary, column roles, rejected rows)
and the hop's no-data share (from the ingest report and ``LinkResult``; no new computation)."""
from __future__ import annotations

import pandas as pd

from diag.report.views import _number
from diag.results import LinkResult


# --- reader report ----------------------------------------------------------------------------------------------
def _interval_text(seconds) -> str:
    value = _number(seconds)
    if value is None:
        return "–"
    if value >= 60 and value % 60 == 0:
        return f"{value / 60:g} min"
    return f"{value:g} s"


def reader_summary(report: dict) -> pd.DataFrame:
    """What the reader detected in one file (``diag.read.ingest`` report dict), as ``What, Found`` rows for display."""
    time = report.get("time") or {}
    values = report.get("values") or {}
    rejected = report.get("rejected") or {}
    kind = {"sample": "instantaneous samples", "stats": "interval min/avg/max statistics",
            "mixed": "samples and statistics"}.get(str(report.get("kind")), str(report.get("kind") or "–"))
    floors = report.get("floors") or {}
    rows = [
        ("Layout", f"{report.get('layout') or '–'}; separator {report.get('separator')!r}, decimal "
                   f"{report.get('decimal')!r}, {report.get('encoding') or '?'}, header on line "
                   f"{report.get('header_line') or '?'}"),
        ("Time", f"{', '.join(time.get('columns') or []) or '–'} ({time.get('format') or '?'}; zone: "
                 f"{time.get('zone') or 'UTC'}; stamps mark the {time.get('marks') or 'start'})"),
        ("Hop", f"{', '.join(report.get('links') or []) or '–'} (from {report.get('link_source') or '?'})"),
        ("Channels", ", ".join(report.get("channels") or []) or "–"),
        ("Quantities", ", ".join(report.get("quantities") or []) or "–"),
        ("Data", f"{kind}, every {_interval_text(report.get('interval_s'))}"),
        ("Time span (UTC)", f"{report.get('start_utc') or '–'} → {report.get('end_utc') or '–'}"),
        ("Rows", f"{int(report.get('rows_read') or 0):,} read, {int(report.get('rows_kept') or 0):,} kept, "
                 f"{sum(int(v or 0) for v in rejected.values()):,} not kept"),
        ("Values", f"{int(values.get('ok') or 0):,} ok, {int(values.get('signal_lost') or 0):,} signal lost, "
                   f"{int(values.get('missing') or 0):,} missing"),
        ("Gaps (no data)", f"{int(report.get('gap_count') or 0):,} gaps, "
                           f"{_interval_text(report.get('gap_seconds') or 0)} in all"),
    ]
    if floors:
        rows.append(("Receiver floor", "; ".join(f"{q}: {f.get('dbm')} dBm" for q, f in floors.items()
                                                 if isinstance(f, dict))))
    if report.get("out_of_order_rows"):
        rows.append(("Out of order", f"{int(report['out_of_order_rows']):,} rows sorted into time order"))
    return pd.DataFrame(rows, columns=["What", "Found"])


def column_roles(report: dict) -> pd.DataFrame:
    """Each column of the file and the role the reader gave it (``ignored`` for the ones it left aside)."""
    rows = [{"Column": str(name), "Read as": str(role)} for name, role in (report.get("columns") or {}).items()]
    rows += [{"Column": str(name), "Read as": "ignored"} for name in report.get("ignored_columns") or []]
    return pd.DataFrame(rows, columns=["Column", "Read as"])


def rejected_rows(report: dict) -> pd.DataFrame:
    """Rows (and values) the reader did not keep or could not use, by reason, from a reader report."""
    rows = [{"Reason": str(k).replace("_", " "), "Count": int(v), "Of": "rows (not kept)"}
            for k, v in (report.get("rejected") or {}).items() if v]
    reasons = (report.get("values") or {}).get("reasons") or {}
    rows += [{"Reason": str(k).replace("_", " "), "Count": int(v), "Of": "values (row kept)"}
             for k, v in reasons.items() if v]
    return pd.DataFrame(rows, columns=["Reason", "Count", "Of"])


def no_data_share(result: LinkResult) -> float | None:
    """Fraction of the analysed period with no data (from the outage summary), None when unknown."""
    summary = result.outage.summary if result.outage is not None else {}
    observed = _number(summary.get("observed_s"))
    gap = _number(summary.get("no_data_s"))
    if observed is None or gap is None or observed + gap <= 0:
        return None
    return gap / (observed + gap)
