"""Time columns: format detection and vectorised parsing of stamps to UTC nanoseconds.

``detect_datetime_format`` / ``detect_date_format`` / ``detect_clock_format`` / ``epoch_kind`` / ``iso_has_offset``
look at sample strings; a ``TimeSpec`` says how to read a row's time; ``parse_times`` reads whole pyarrow columns
(codes in ``TIME_REASONS`` for stamps that are unreadable, in a DST gap or overlap, or out of range); ``check_tz``
validates an IANA zone name.  Used by ``diag.read.colplan`` (the column plan) and, through ``diag.read.normalise``, by
``diag.read.ingest``.
"""
from __future__ import annotations

import datetime as _dt
import math
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from diag.errors import InputError

# ---------------------------------------------------------------------------------------------------------------
# time formats

_ISO_RE = re.compile(r"^\d{4}-\d{2}-\d{2}([T ]\d{1,2}:\d{2}(:\d{2}([.,]\d+)?)?)?\s*(Z|z|UTC|[+-]\d{2}(:?\d{2})?)?$")
_ISO_OFFSET_RE = re.compile(r"(Z|z|UTC|[+-]\d{2}(:?\d{2})?)$")
_DATES = ["%d/%m/%Y", "%m/%d/%Y", "%d.%m.%Y", "%d-%m-%Y", "%m-%d-%Y", "%Y/%m/%d", "%Y.%m.%d", "%Y-%m-%d",
          "%d/%m/%y", "%m/%d/%y", "%d.%m.%y", "%d-%b-%Y", "%d %b %Y", "%b %d %Y", "%d-%b-%y", "%d/%b/%Y",
          "%Y%m%d", "%b %d, %Y"]
_TIMES = ["%H:%M:%S.%f", "%H:%M:%S", "%H:%M", "%I:%M:%S %p", "%I:%M %p", "%H%M%S", "%H.%M.%S"]
_SEPS = [" ", "T", ", ", "-"]


def _count_parsed(values: list[str], fmt: str) -> int:
    n = 0
    for v in values:
        try:
            _dt.datetime.strptime(v, fmt)
            n += 1
        except ValueError:
            pass
    return n


def _try_formats(values: list[str], formats: list[str], min_frac: float = 0.5) -> list[str]:
    """Formats that read at least ``min_frac`` of the values (a few damaged stamps do not hide the format)."""
    ok = []
    need = max(1, math.ceil(min_frac * len(values)))
    for fmt in formats:
        good = bad = 0
        for v in values:
            try:
                _dt.datetime.strptime(v, fmt)
                good += 1
            except ValueError:
                bad += 1
                if len(values) - bad < need:
                    break
        if good >= need:
            ok.append(fmt)
    return ok


@dataclass(frozen=True)
class TimeSpec:
    """How to read the time of a row."""

    columns: tuple[str, ...]        # one column, or (date column, time column)
    kind: str                       # "iso", "format", "epoch_s", "epoch_ms"
    fmt: str | None = None          # strftime format for kind == "format"
    has_offset: bool = False        # ISO stamps carry Z / an offset
    tz: str | None = None           # IANA zone for stamps without offset (None = UTC)
    marks_end: bool = False         # stamp marks the END of the interval (shifted to the start)
    guess: str | None = None        # what was guessed, with how to override


def _sample_strings(values, limit: int = 400) -> list[str]:
    out = []
    for v in values:
        if v is None:
            continue
        s = str(v).strip()
        if s:
            out.append(s)
        if len(out) >= limit:
            break
    return out


def _median_step(values: list[str], fmt: str) -> float:
    ts = []
    for v in values:
        try:
            ts.append(_dt.datetime.strptime(v, fmt).replace(tzinfo=_dt.timezone.utc).timestamp())
        except ValueError:
            pass
    d = np.abs(np.diff(np.asarray(ts, dtype=float)))
    d = d[d > 0]
    return float(np.median(d)) if d.size else math.inf


def _candidates(v: str) -> list[str]:
    """Date-and-time formats worth trying on strings shaped like ``v`` (keeps strptime's format cache warm)."""
    letters = bool(re.search(r"[A-Za-z]{3}", re.sub(r"\s*[AaPp][Mm]$", "", v).replace("T", " ")))
    ampm = bool(re.search(r"[AaPp][Mm]$", v))
    colons = v.count(":")
    out = []
    for d in _DATES:
        if ("%b" in d) != letters:
            continue
        for sep in _SEPS:
            if (sep == "T") != ("T" in v and not letters):
                continue
            for t in _TIMES:
                if ("%p" in t) != ampm:
                    continue
                if t.count(":") != colons:
                    continue
                out.append(d + sep + t)
    return out


def detect_datetime_format(values: list[str]) -> tuple[str, str | None, str | None] | None:
    """Format of date-and-time strings: ("iso", None, guess) or ("format", fmt, guess), or None."""
    vals = _sample_strings(values)
    if not vals:
        return None
    if sum(1 for v in vals if _ISO_RE.match(v)) >= 0.5 * len(vals):
        return ("iso", None, None)
    probe = vals[:60]
    cands = _candidates(vals[0])
    ok = _try_formats(probe[:5], cands)
    ok = _try_formats(probe, ok)
    if not ok:
        return None
    if len(ok) == 1:
        return ("format", ok[0], None)
    # several readings: keep those reading the most of the sample, then prefer the smallest time step
    ok = _try_formats(vals, ok) or ok
    counts = {f: _count_parsed(vals, f) for f in ok}
    ok = [f for f in ok if counts[f] == max(counts.values())]
    if len(ok) == 1:
        return ("format", ok[0], None)
    steps = {fmt: _median_step(vals, fmt) for fmt in ok}
    best = min(ok, key=lambda f: (steps[f], 0 if "%d" in f.split("%m")[0] else 1))
    others = [f for f in ok if f != best]
    tied = [f for f in others if steps[f] == steps[best]]
    guess = None
    if tied or len(vals) < 3:
        guess = (f"time format guessed as '{best}' (also readable as {', '.join(repr(f) for f in others)}); "
                 f"override with --time-format or [time] format in the mapping file")
    return ("format", best, guess)


def detect_date_format(values: list[str]) -> str | None:
    vals = _sample_strings(values, 60)
    if not vals:
        return None
    ok = _try_formats(vals, _DATES)
    if not ok:
        return None
    if len(ok) > 1:
        steps = {f: _median_step(vals, f) for f in ok}
        ok.sort(key=lambda f: (steps[f], 0 if "%d" in f.split("%m")[0] else 1))
    return ok[0]


def detect_clock_format(values: list[str]) -> str | None:
    vals = _sample_strings(values, 60)
    if not vals:
        return None
    ok = _try_formats(vals, _TIMES)
    return ok[0] if ok else None


def epoch_kind(values: list[str]) -> str | None:
    """'epoch_s' or 'epoch_ms' when the strings are numbers in a plausible epoch range (1973-2100)."""
    vals = _sample_strings(values, 200)
    if not vals:
        return None
    try:
        x = np.array([float(v) for v in vals])
    except ValueError:
        return None
    if not np.all(np.isfinite(x)):
        return None
    if np.all((x > 1e8) & (x < 4.2e9)):
        return "epoch_s"
    if np.all((x > 1e11) & (x < 4.2e12)):
        return "epoch_ms"
    return None


TIME_REASONS = ("bad_time", "dst_nonexistent", "dst_ambiguous", "time_out_of_range")


def parse_times(cols: list[pa.Array], spec: TimeSpec) -> tuple[np.ndarray, np.ndarray]:
    """Vectorised: (int64 ns since epoch UTC, int8 code 0 ok / 1 bad_time / 2 dst_nonexistent / 3 dst_ambiguous /
    4 time_out_of_range (before TIME_MIN or from TIME_MAX on))."""
    n = len(cols[0])
    if spec.kind in ("epoch_s", "epoch_ms"):
        s = pc.utf8_trim_whitespace(cols[0])
        good = pc.fill_null(pc.match_substring_regex(s, r"^[+-]?\d+(\.\d*)?([eE][+-]?\d+)?$"), False)
        num = pc.cast(pc.if_else(good, s, pa.scalar(None, pa.string())), pa.float64()).to_numpy(zero_copy_only=False)
        per_second = 1.0 if spec.kind == "epoch_s" else 1000.0
        lo = TIME_MIN.tz_localize("UTC").timestamp() * per_second
        hi = TIME_MAX.tz_localize("UTC").timestamp() * per_second
        finite = np.isfinite(num)
        ok = finite & (num >= lo) & (num < hi)
        ns = np.zeros(n, dtype=np.int64)
        ns[ok] = np.round(num[ok] * (1e9 / per_second)).astype(np.int64)
        code = np.where(ok, 0, np.where(finite, 4, 1)).astype(np.int8)
        return ns, code
    if len(cols) == 2:
        text = pc.binary_join_element_wise(pc.utf8_trim_whitespace(cols[0]), pc.utf8_trim_whitespace(cols[1]),
                                           " ")
    else:
        text = pc.utf8_trim_whitespace(cols[0])
    if spec.kind == "iso" and not spec.tz:
        fast = _iso_fast(text)
        if fast is not None:
            return fast
    if spec.kind == "iso":
        if pc.any(pc.match_substring(text, ",")).as_py():
            text = pc.replace_substring(text, ",", ".")
        if spec.has_offset and pc.any(pc.match_substring(text, "UTC")).as_py():
            text = pc.replace_substring_regex(text, r"\s*UTC$", "Z")
    ser = pd.Series(pd.array(text, dtype="str"), copy=False)
    if spec.kind == "iso":
        # stamps with Z/offset are exact; stamps without are local time in spec.tz (UTC when none), even when the
        # two kinds are mixed in one column
        off = pc.fill_null(pc.match_substring_regex(text, r"(Z|z|[+-]\d{2}(:?\d{2})?)$"), False)
        off = off.to_numpy(zero_copy_only=False) & (pc.utf8_length(text).to_numpy(zero_copy_only=False) > 10)
        ns = np.zeros(n, dtype=np.int64)
        code = np.ones(n, dtype=np.int8)
        if off.any():
            t = pd.to_datetime(ser[off], format="ISO8601", utc=True, errors="coerce")
            ns[off], code[off] = _finish_utc(t, int(off.sum()))
        if not off.all():
            naive = ~off
            t = pd.to_datetime(ser[naive], format="ISO8601", errors="coerce")
            if getattr(t.dt, "tz", None) is not None:   # cannot happen without an offset; be safe
                ns[naive], code[naive] = _finish_utc(t.dt.tz_convert("UTC"), int(naive.sum()))
            elif spec.tz:
                ns[naive], code[naive] = _localise(t, spec.tz)
            else:
                ns[naive], code[naive] = _finish_utc(t.dt.tz_localize("UTC"), int(naive.sum()))
        return ns, code
    else:
        t = pd.to_datetime(ser, format=spec.fmt, errors="coerce")
    if getattr(t.dt, "tz", None) is not None:
        return _finish_utc(t.dt.tz_convert("UTC"), n)
    if spec.tz:
        return _localise(t, spec.tz)
    return _finish_utc(t.dt.tz_localize("UTC"), n)


def _iso_fast(text: pa.Array) -> tuple[np.ndarray, np.ndarray] | None:
    """Arrow's own ISO 8601 cast when every stamp has an offset, or none has (read as UTC); None otherwise."""
    for typ in (pa.timestamp("ns", "UTC"), pa.timestamp("ns")):
        try:
            ts = pc.cast(text, typ)
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            continue
        if ts.null_count:
            return None
        ns = ts.cast(pa.int64()).to_numpy(zero_copy_only=False).astype(np.int64, copy=False)
        return ns, np.zeros(len(ns), dtype=np.int8)
    return None


# plausible time range of a radio log (common practice: management systems postdate 1980); outside -> code 4
TIME_MIN = pd.Timestamp("1980-01-01")
TIME_MAX = pd.Timestamp("2100-01-01")


def _out_of_range(t: pd.Series) -> np.ndarray:
    lo, hi = (TIME_MIN, TIME_MAX) if getattr(t.dt, "tz", None) is None else (TIME_MIN.tz_localize("UTC"),
                                                                            TIME_MAX.tz_localize("UTC"))
    return ((t < lo) | (t >= hi)).fillna(False).to_numpy(dtype=bool)


def _finish_utc(t: pd.Series, n: int) -> tuple[np.ndarray, np.ndarray]:
    oor = _out_of_range(t)
    if oor.any():
        t = t.where(~oor)
    t = t.astype("datetime64[ns, UTC]")
    bad = t.isna().to_numpy()
    ns = t.to_numpy(dtype="datetime64[ns]", na_value=np.datetime64("NaT")).view(np.int64).copy()
    ns[bad] = 0
    code = bad.astype(np.int8)
    code[oor] = 4
    return ns, code


def _localise(t: pd.Series, tz: str) -> tuple[np.ndarray, np.ndarray]:
    oor = _out_of_range(t)
    if oor.any():
        t = t.where(~oor)
    t = t.astype("datetime64[ns]")
    bad = t.isna().to_numpy() & ~oor
    loc = t.dt.tz_localize(tz, ambiguous="NaT", nonexistent="NaT")
    nat = loc.isna().to_numpy() & ~bad & ~oor
    code = bad.astype(np.int8)
    code[oor] = 4
    if nat.any():
        # which of the failures are in the spring-forward gap: those that stay NaT even when ambiguity is resolved
        sub = t[nat]
        gap = sub.dt.tz_localize(tz, ambiguous=np.ones(len(sub), dtype=bool), nonexistent="NaT").isna().to_numpy()
        idx = np.flatnonzero(nat)
        code[idx[gap]] = 2
        code[idx[~gap]] = 3
    ns, _ = _finish_utc(loc.dt.tz_convert("UTC"), len(t))
    ns[code != 0] = 0
    return ns, code


def iso_has_offset(values: list[str]) -> bool:
    vals = _sample_strings(values, 200)
    return bool(vals) and sum(1 for v in vals if _ISO_OFFSET_RE.search(v) and len(v) > 10) > len(vals) // 2


def check_tz(tz: str | None, where: str | None = None) -> str | None:
    if tz is None or tz == "":
        return None
    try:
        pd.Timestamp("2020-01-01").tz_localize(tz)
    except Exception as exc:  # zoneinfo / pytz raise several kinds
        raise InputError(f"unknown time zone '{tz}' (use an IANA name such as Europe/Vienna)", path=where) from exc
    return tz
