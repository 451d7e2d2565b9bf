"""Rain-gauge / weather CSV: read it, then confirm or refute the rain verdicts of fade events.

File shape: a header row, a time column (name containing "time" or "date"; ISO 8601, with or without offset;
times without an offset are read in ``tz``, UTC by default) and a rain column.  The rain column is read as

- a **rate in mm/h** when its name says so ("mm/h", "mmh", "mm_h", "mm h-1", "rate", "intensity"), or when it is
  just called "rain" / "precip..." without a unit (the issue's "time, rain mm/h" form);
- an **amount in mm per interval** when its name says "mm" without "/h", or "amount", "accum", "total", "sum";
  it is turned into mm/h by dividing by the interval length.

Several candidate columns: pass ``column=``; otherwise the first rain-like column is used.

Interval labels: by default a time **marks the END** of its interval (the usual convention for gauge accumulations,
and what the measured gauge data in ``tests/data/openrainer`` use), so the row labelled 10:15 covers
(10:00, 10:15].  Pass ``label="start"`` for files that label the start.  The interval is the median spacing of the
rows (or ``interval_s``).  Every row is kept or counted: blank / non-numeric rain values become NaN ("no gauge
data" for that interval) and are counted in the report; a bad time is an ``InputError`` naming the line.
"""
from __future__ import annotations

import csv
import io
import logging
import math
import re
from pathlib import Path

import numpy as np
import pandas as pd

from diag.errors import InputError, require_regular_file

log = logging.getLogger(__name__)

_RATE = re.compile(r"mm\s*/\s*h|mmh|mm_h|mm\s*h-1|mm\s*h\^-1|per[_ ]?hour|rate|intensity", re.I)
_AMOUNT = re.compile(r"mm|amount|accum|total|sum", re.I)
_RAINLIKE = re.compile(r"rain|precip|mm|rate|intensity", re.I)
_TIMELIKE = re.compile(r"time|date|timestamp", re.I)


def _read_text(source, name: str | None) -> tuple[str, str]:
    if isinstance(source, (bytes, bytearray)):
        raw = bytes(source)
        where = name or "gauge file"
    else:
        where = name or str(source)
        require_regular_file(source, where)   # a FIFO or a device would block
        try:
            raw = Path(source).read_bytes()
        except OSError as exc:
            raise InputError(f"cannot read gauge file: {exc.strerror}", path=where) from None
    if where.endswith(".gz") or raw[:2] == b"\x1f\x8b":
        import gzip

        from diag.read.limits import MAX_DECOMPRESSED_BYTES, BoundedReader

        try:
            with gzip.GzipFile(fileobj=io.BytesIO(raw)) as fh:
                raw = BoundedReader(fh, MAX_DECOMPRESSED_BYTES, where).read()   # a bomb stops at the bound
        except (OSError, EOFError):
            raise InputError("gauge file is not valid gzip", path=where) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    return text, where


def read_gauge(source, *, name: str | None = None, tz: str = "UTC", label: str = "end",
               column: str | None = None, units: str = "auto", interval_s: float | None = None) -> pd.DataFrame:
    """Read a rain-gauge CSV into intervals with a rain rate.

    Parameters
    ----------
    source : path or bytes
        The CSV (``.csv`` or ``.csv.gz``).
    tz : str
        Zone for times written without an offset.
    label : {"end", "start"}
        Whether a row's time marks the end (default) or the start of its interval.
    column : str, optional
        The rain column to use when the file has several.
    units : {"auto", "mm/h", "mm"}
        "auto" reads the unit from the column name (module docstring); "mm/h" a rate; "mm" an amount per interval.
    interval_s : float, optional
        Interval length [s]; default the median spacing of the rows.

    Returns
    -------
    pd.DataFrame with columns ``start_utc, end_utc, rain_mmh`` (NaN = no gauge data) and ``attrs["report"]``
    (file, rows read, rows with no value, how the column was read, label convention, interval).
    """
    if label not in ("end", "start"):
        raise ValueError("label must be 'end' or 'start'")
    text, where = _read_text(source, name)
    lines = [ln for ln in text.splitlines()]
    first = next((i for i, ln in enumerate(lines) if ln.strip() and not ln.lstrip().startswith("#")), None)
    if first is None:
        raise InputError("gauge file is empty", path=where)
    header_line = lines[first]
    sep = ";" if header_line.count(";") > header_line.count(",") else ("\t" if "\t" in header_line and
                                                                       "," not in header_line else ",")
    reader = csv.reader(io.StringIO("\n".join(lines[first:])), delimiter=sep)
    header = [h.strip() for h in next(reader)]
    time_cols = [i for i, h in enumerate(header) if _TIMELIKE.search(h)]
    if not time_cols:
        raise InputError("gauge file has no time column (a header naming 'time' or 'date')", path=where,
                         line=first + 1)
    t_col = time_cols[0]
    if column is not None:
        if column not in header:
            raise InputError(f"gauge file has no column {column!r}", path=where, line=first + 1)
        r_col = header.index(column)
    else:
        rain_cols = [i for i, h in enumerate(header) if i != t_col and _RAINLIKE.search(h)]
        if not rain_cols:
            others = [i for i in range(len(header)) if i != t_col]
            if len(others) != 1:
                raise InputError("gauge file: cannot tell which column holds rain (name it 'rain_mmh' or "
                                 "'rain_mm', or pass column=)", path=where, line=first + 1)
            rain_cols = others
        r_col = rain_cols[0]
    r_name = header[r_col]
    if units not in ("auto", "mm/h", "mm"):
        raise ValueError("units must be 'auto', 'mm/h' or 'mm'")
    if units != "auto":
        kind = "rate_mmh" if units == "mm/h" else "amount_mm"
    elif _RATE.search(r_name):
        kind = "rate_mmh"
    elif _AMOUNT.search(r_name):
        kind = "amount_mm"
    else:
        kind = "rate_mmh"
    times: list[str] = []
    values: list[float] = []
    blank = 0
    for offset, row in enumerate(reader):
        line_no = first + 2 + offset
        if not row or all(not c.strip() for c in row):
            continue
        if len(row) <= max(t_col, r_col):
            raise InputError(f"gauge file: row has {len(row)} fields, expected {len(header)}", path=where,
                             line=line_no)
        times.append(row[t_col].strip())
        cell = row[r_col].strip().replace(",", ".") if sep != "," else row[r_col].strip()
        try:
            value = float(cell) if cell else math.nan
        except ValueError:
            value = math.nan
        if not math.isfinite(value):
            blank += 1
            value = math.nan
        elif value < 0:
            raise InputError(f"gauge file: negative rain {value:g}", path=where, line=line_no)
        values.append(value)
    if not times:
        raise InputError("gauge file has a header but no rows", path=where)
    try:
        stamp = pd.to_datetime(pd.Series(times), errors="coerce", utc=False, format="mixed")
    except (ValueError, TypeError, OverflowError):
        # stamps with different UTC offsets (a DST change) are fine when every stamp has one
        if not all(re.search(r"(Z|[+-]\d{2}:?\d{2})$", s.strip()) for s in times):
            raise InputError("gauge file: some stamps carry a UTC offset and some do not; give all or none",
                             path=where) from None
        stamp = pd.to_datetime(pd.Series(times), errors="coerce", utc=True, format="mixed")
    bad = stamp.isna().to_numpy()
    if bad.any():
        i = int(np.argmax(bad))
        raise InputError(f"gauge file: unreadable time {times[i][:30]!r}", path=where, line=first + 2 + i)
    try:
        if stamp.dt.tz is None:
            stamp = stamp.dt.tz_localize(tz, ambiguous="NaT", nonexistent="NaT").dt.tz_convert("UTC")
        else:
            stamp = stamp.dt.tz_convert("UTC")
    except (TypeError, ValueError) as exc:
        raise InputError(f"gauge file: mixed or bad time zones ({str(exc)[:60]})", path=where) from None
    from diag.read.timestamps import TIME_MAX, TIME_MIN

    out_of_range = ((stamp < TIME_MIN.tz_localize("UTC")) | (stamp >= TIME_MAX.tz_localize("UTC"))).to_numpy()
    if out_of_range.any():
        i = int(np.argmax(out_of_range))
        raise InputError(f"gauge file: time {times[i][:30]!r} outside {TIME_MIN.year}-{TIME_MAX.year}", path=where,
                         line=first + 2 + i)
    frame = pd.DataFrame({"t": stamp.to_numpy(), "v": values}).dropna(subset=["t"])
    frame = frame.sort_values("t").drop_duplicates("t", keep="first")
    if len(frame) < 2 and interval_s is None:
        raise InputError("gauge file: need two rows (or interval_s) to know the interval", path=where)
    step_s = float(interval_s) if interval_s else float(frame["t"].diff().dt.total_seconds().median())
    if not step_s > 0:
        raise InputError("gauge file: cannot find the interval between rows", path=where)
    delta = pd.to_timedelta(step_s, unit="s")
    t = pd.DatetimeIndex(frame["t"])
    start, end = (t - delta, t) if label == "end" else (t, t + delta)
    rate = frame["v"].to_numpy(dtype=float)
    if kind == "amount_mm":
        rate = rate / (step_s / 3600.0)
    out = pd.DataFrame({"start_utc": start, "end_utc": end, "rain_mmh": rate})
    out.attrs["report"] = {"file": where, "rows": len(times), "rows_without_value": blank,
                           "duplicate_times_dropped": len(times) - len(frame), "column": r_name,
                           "read_as": kind, "label": label, "interval_s": step_s}
    return out.reset_index(drop=True)


def _ns(column: pd.Series) -> np.ndarray:
    """UTC nanoseconds since the epoch of a tz-aware datetime column."""
    return pd.DatetimeIndex(column).tz_convert("UTC").as_unit("ns").asi8


def gauge_rain_over(gauge: pd.DataFrame, start, end) -> dict:
    """Gauge rain over [start, end): total mm, peak mm/h and the share of the window the gauge covers."""
    start, end = pd.Timestamp(start), pd.Timestamp(end)
    if end <= start:
        end = start + pd.Timedelta(seconds=1)
    start = start.tz_localize("UTC") if start.tzinfo is None else start.tz_convert("UTC")
    end = end.tz_localize("UTC") if end.tzinfo is None else end.tz_convert("UTC")
    s = _ns(gauge["start_utc"])
    e = _ns(gauge["end_utc"])
    overlap_s = (np.minimum(e, end.value) - np.maximum(s, start.value)) / 1e9
    overlap_s = np.clip(overlap_s, 0, None)
    use = overlap_s > 0
    rate = gauge["rain_mmh"].to_numpy(dtype=float)
    have = use & np.isfinite(rate)
    window_s = (end - start).total_seconds()
    covered = float(overlap_s[have].sum() / window_s) if window_s > 0 else 0.0
    if not have.any():
        return {"rain_mm": None, "peak_mmh": None, "coverage": 0.0}
    return {"rain_mm": float((rate[have] * overlap_s[have] / 3600.0).sum()), "peak_mmh": float(rate[have].max()),
            "coverage": min(1.0, covered)}


def check_rain_verdicts(events: pd.DataFrame, gauge: pd.DataFrame, *, wet_mmh: float = 0.5,
                        dry_mm: float = 0.05, margin_s: float = 900.0, min_coverage: float = 0.5) -> pd.DataFrame:
    """Compare each event's cause with the gauge over the event +- ``margin_s``.

    Verdicts (column ``gauge_verdict``):
      rain events:     "confirmed" (gauge peak >= ``wet_mmh``), "refuted" (gauge total <= ``dry_mm`` with the
                       window covered), otherwise "unclear";
      other events:    "gauge saw rain" (peak >= ``wet_mmh``: the cause may be wrong), otherwise "consistent";
      either:          "no gauge data" (coverage under ``min_coverage``).
    The margin allows for the distance between gauge and path and the gauge's interval (common practice).
    Returns a frame with the events' index and columns ``gauge_rain_mm, gauge_peak_mmh, gauge_coverage,
    gauge_verdict``.
    """
    margin = pd.Timedelta(seconds=margin_s)
    rows = []
    starts = pd.to_datetime(events["start_utc"], utc=True) if len(events) else pd.Series([], dtype=object)
    ends = pd.to_datetime(events["end_utc"], utc=True) if len(events) else pd.Series([], dtype=object)
    for i, (start, end) in enumerate(zip(starts, ends)):
        cause = str(events["cause"].iloc[i])
        got = gauge_rain_over(gauge, start - margin, end + margin)
        if got["rain_mm"] is None or got["coverage"] < min_coverage:
            verdict = "no gauge data"
        elif cause == "rain":
            if got["peak_mmh"] >= wet_mmh:
                verdict = "confirmed"
            elif got["rain_mm"] <= dry_mm:
                verdict = "refuted"
            else:
                verdict = "unclear"
        else:
            verdict = "gauge saw rain" if got["peak_mmh"] >= wet_mmh else "consistent"
        rows.append({"gauge_rain_mm": None if got["rain_mm"] is None else round(got["rain_mm"], 3),
                     "gauge_peak_mmh": None if got["peak_mmh"] is None else round(got["peak_mmh"], 3),
                     "gauge_coverage": round(got["coverage"], 3), "gauge_verdict": verdict})
    out = pd.DataFrame(rows, columns=["gauge_rain_mm", "gauge_peak_mmh", "gauge_coverage", "gauge_verdict"])
    out.index = events.index
    return out


def summarise_gauge_check(checked: pd.DataFrame, events: pd.DataFrame) -> dict:
    """Counts of the gauge verdicts, split into rain events and other events (JSON-able)."""
    if checked.empty:
        return {"rain_events": {}, "other_events": {}}
    is_rain = events["cause"].astype(str).to_numpy() == "rain"
    rain = checked.loc[is_rain, "gauge_verdict"].value_counts().to_dict()
    other = checked.loc[~is_rain, "gauge_verdict"].value_counts().to_dict()
    return {"rain_events": {str(k): int(v) for k, v in rain.items()},
            "other_events": {str(k): int(v) for k, v in other.items()}}
