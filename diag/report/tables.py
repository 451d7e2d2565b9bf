"""The CSV and JSON outputs: events, outage summary, outage by cause, findings.

Every function returns bytes (the dashboard offers them as downloads) and is deterministic: the same results give
byte-identical files.  CSV text cells that a spreadsheet would run as a formula (starting with = + - @, tab or
carriage return) are neutralised with a leading apostrophe; numbers, including negative ones, stay numbers.
"""
from __future__ import annotations

import json
import math
import re
from datetime import date, datetime
from typing import Any, Iterable

import numpy as np
import pandas as pd

from diag import glossary, schema
from diag.results import LinkResult

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")

SUMMARY_EXTRA = ["exact", "below_threshold_s_lo", "below_threshold_s_hi", "unavailable_s_lo", "unavailable_s_hi",
                 "ses_available_s_lo", "ses_available_s_hi", "availability_pct_lo", "availability_pct_hi",
                 "main_cause", "method"]
BY_CAUSE_EXTRA = ["below_threshold_s_lo", "below_threshold_s_hi", "unavailable_s_lo", "unavailable_s_hi"]

__all__ = ["safe_cell", "safe_filename", "events_frame", "outage_summary_frame", "outage_by_cause_frame",
           "events_csv_bytes", "outage_summary_csv_bytes", "outage_by_cause_csv_bytes", "findings_json_bytes",
           "json_safe", "SUMMARY_EXTRA", "BY_CAUSE_EXTRA"]


def safe_cell(value: Any) -> Any:
    """A CSV cell that no spreadsheet runs as a formula.

    Text beginning with ``= + - @``, tab or carriage return gets a leading apostrophe; text that is just a number
    (``"-3.5"``) and non-text values are returned unchanged.
    """
    if not isinstance(value, str) or not value:
        return value
    if value.startswith(_FORMULA_START) and not _NUMBER.match(value):
        return "'" + value
    return value


def safe_filename(name: str, *, default: str = "link", max_length: int = 80) -> str:
    """A file-name part from a link id: letters, digits, ``. _ -`` only, no path separators, never ``.``/``..``,
    never starting with a dot or a dash."""
    text = re.sub(r"[^A-Za-z0-9._-]+", "_", str(name))
    text = re.sub(r"\.{2,}", "_", text)
    text = text.lstrip(".-_")[:max_length].rstrip(". ")
    return text or default


def _neutralise(frame: pd.DataFrame) -> pd.DataFrame:
    out = frame.copy()
    for column in out.columns:
        if out[column].dtype == object or pd.api.types.is_string_dtype(out[column]):
            out[column] = out[column].map(safe_cell).astype(object)
    out.columns = [safe_cell(str(c)) for c in out.columns]
    return out


def _csv_bytes(frame: pd.DataFrame) -> bytes:
    return _neutralise(frame).to_csv(index=False, lineterminator="\n", na_rep="").encode("utf-8")


def _iso(value) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    try:
        ts = pd.Timestamp(value)
    except (TypeError, ValueError):
        return str(value)
    if ts is pd.NaT or pd.isna(ts):
        return ""
    ts = ts.tz_localize("UTC") if ts.tzinfo is None else ts.tz_convert("UTC")
    text = ts.strftime("%Y-%m-%dT%H:%M:%S")
    if ts.microsecond:
        text += f".{ts.microsecond:06d}".rstrip("0")
    return text + "Z"


def _round_col(series: pd.Series, digits: int) -> pd.Series:
    return pd.to_numeric(series, errors="coerce").round(digits)


# --------------------------------------------------------------------------------------------------- events
def events_frame(results: Iterable[LinkResult]) -> pd.DataFrame:
    """All hops' events in ``schema.EVENT_COLUMNS`` order, times as ISO 8601 UTC text, sorted."""
    parts = []
    for result in results:
        ev = result.events
        if not isinstance(ev, pd.DataFrame) or ev.empty:
            continue
        part = pd.DataFrame({c: (ev[c] if c in ev.columns else np.nan) for c in schema.EVENT_COLUMNS})
        part["link_id"] = part["link_id"].fillna(result.link.link_id).astype(str).replace("", result.link.link_id)
        parts.append(part)
    if not parts:
        return pd.DataFrame(columns=schema.EVENT_COLUMNS)
    frame = pd.concat(parts, ignore_index=True)
    order_key = pd.to_datetime(frame["start_utc"], utc=True, errors="coerce")
    frame = frame.assign(_key=order_key).sort_values(["link_id", "channel", "_key", "end_utc"], kind="stable",
                                                      key=lambda s: s.astype(str) if s.name != "_key" else s)
    frame = frame.drop(columns="_key").reset_index(drop=True)
    frame["start_utc"] = frame["start_utc"].map(_iso)
    frame["end_utc"] = frame["end_utc"].map(_iso)
    frame["duration_s"] = _round_col(frame["duration_s"], 3)
    frame["peak_fade_db"] = _round_col(frame["peak_fade_db"], 2)
    frame["confidence"] = _round_col(frame["confidence"], 3)
    for column in ("link_id", "channel", "cause", "evidence"):
        frame[column] = frame[column].astype(object).where(frame[column].notna(), "").astype(str)
    return frame[schema.EVENT_COLUMNS]


def events_csv_bytes(results: Iterable[LinkResult]) -> bytes:
    return _csv_bytes(events_frame(results))


# --------------------------------------------------------------------------------------------------- outage
def _summary_row(result: LinkResult) -> dict:
    row = {c: np.nan for c in schema.OUTAGE_SUMMARY_COLUMNS + SUMMARY_EXTRA}
    row["link_id"] = result.link.link_id
    row["objective_pct"] = result.link.objective_pct if result.link.objective_pct is not None else np.nan
    if result.outage is None:
        row.update(meets_objective="", exact=False, main_cause=glossary.NOT_ANALYSED, period_start_utc="",
                   period_end_utc="",
                   method=f"not analysed: {result.error}" if result.error else "not analysed")
        return row
    for key in row:
        if key in result.outage.summary:
            row[key] = result.outage.summary[key]
    return row


def outage_summary_frame(results: Iterable[LinkResult]) -> pd.DataFrame:
    """One row per hop: ``schema.OUTAGE_SUMMARY_COLUMNS`` then the bounds, main cause and method."""
    rows = [_summary_row(r) for r in results]
    frame = pd.DataFrame(rows, columns=schema.OUTAGE_SUMMARY_COLUMNS + SUMMARY_EXTRA)
    for column in ("availability_pct", "availability_pct_lo", "availability_pct_hi"):
        frame[column] = _round_col(frame[column], 6)
    frame["objective_pct"] = _round_col(frame["objective_pct"], 6)
    for column in ("observed_s", "no_data_s", "below_threshold_s", "unavailable_s", "ses_available_s",
                   "below_threshold_s_lo", "below_threshold_s_hi", "unavailable_s_lo", "unavailable_s_hi",
                   "ses_available_s_lo", "ses_available_s_hi"):
        frame[column] = pd.to_numeric(frame[column], errors="coerce").astype("Int64")
    return frame


def outage_by_cause_frame(results: Iterable[LinkResult]) -> pd.DataFrame:
    """One row per hop and cause: ``schema.OUTAGE_BY_CAUSE_COLUMNS`` then the bounds; adds up to the summary."""
    columns = schema.OUTAGE_BY_CAUSE_COLUMNS + BY_CAUSE_EXTRA
    parts = []
    for result in results:
        if result.outage is None or result.outage.by_cause is None or result.outage.by_cause.empty:
            continue
        bc = result.outage.by_cause
        parts.append(pd.DataFrame({c: (bc[c] if c in bc.columns else np.nan) for c in columns}))
    if not parts:
        return pd.DataFrame(columns=columns)
    frame = pd.concat(parts, ignore_index=True)
    for column in columns[2:]:
        frame[column] = pd.to_numeric(frame[column], errors="coerce").astype("Int64")
    return frame


def outage_summary_csv_bytes(results: Iterable[LinkResult]) -> bytes:
    return _csv_bytes(outage_summary_frame(results))


def outage_by_cause_csv_bytes(results: Iterable[LinkResult]) -> bytes:
    return _csv_bytes(outage_by_cause_frame(results))


# --------------------------------------------------------------------------------------------------- JSON
def json_safe(value: Any) -> Any:
    """A structure ``json.dumps(..., allow_nan=False)`` accepts: NaN/inf -> null, numpy -> Python, times -> ISO."""
    if value is None or isinstance(value, (bool, str)):
        return value
    if value is pd.NaT:
        return None
    if isinstance(value, (np.bool_,)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(float(value)) else None
    if isinstance(value, (pd.Timestamp, datetime, np.datetime64)):
        return _iso(value)
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, pd.Timedelta):
        return value.total_seconds()
    if isinstance(value, dict):
        return {str(k): json_safe(v) for k, v in value.items()}
    if isinstance(value, pd.DataFrame):
        return [json_safe(r) for r in value.to_dict(orient="records")]
    if isinstance(value, pd.Series):
        return json_safe(value.tolist())
    if isinstance(value, np.ndarray):
        return json_safe(value.tolist())
    if isinstance(value, (list, tuple, set)):
        return [json_safe(v) for v in (sorted(value, key=str) if isinstance(value, set) else value)]
    if hasattr(value, "to_dict"):
        return json_safe(value.to_dict())
    try:
        if pd.isna(value):
            return None
    except (TypeError, ValueError):
        pass
    return str(value)


def _link_json(result: LinkResult) -> dict:
    out = {"link": result.link.to_dict(), "error": result.error, "statistics": result.statistics,
           "cross_polar": result.cross_polar, "level_changes": result.level_changes, "findings": result.findings,
           "skipped": result.skipped, "ingest": result.ingest, "events": len(result.events)
           if isinstance(result.events, pd.DataFrame) else 0}
    if result.outage is not None:
        out["outage"] = {"summary": result.outage.summary, "by_cause": result.outage.by_cause,
                         "per_channel": result.outage.per_channel, "notes": result.outage.notes}
    else:
        out["outage"] = None
    return out


def glossary_json() -> dict:
    """The words of the outputs (``diag.glossary``): each term's label and definition, the cause labels and marks,
    and the machine values of the verdict and main-cause fields, so findings.json explains itself."""
    return {
        "terms": {t.key: {"label": t.label, "definition": t.definition} for t in glossary.TERMS.values()},
        "causes": {c: {"label": glossary.CAUSE_LABELS[c], "mark": glossary.CAUSE_CODES[c]}
                   for c in list(schema.CAUSES) + [schema.NO_DATA]},
        "meets_objective_values": {v: glossary.VERDICT_LABELS[v] for v in glossary.VERDICTS},
        "main_cause_values": sorted(glossary.allowed_main_cause_values()),
    }


def findings_json_bytes(results: Iterable[LinkResult]) -> bytes:
    """``findings.json``: per hop the statistics, cross-polar results, level changes, ranked findings with actions
    and cautions, skipped checks, reader report and the outage accounting (NaN written as null)."""
    from diag import __version__

    doc = {"tool": "diag", "version": __version__, "glossary": glossary_json(),
           "links": [_link_json(r) for r in results]}
    text = json.dumps(json_safe(doc), indent=2, ensure_ascii=False, allow_nan=False)
    return (text + "\n").encode("utf-8")
