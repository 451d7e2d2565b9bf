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


def _evidence(values: list[str], fmt: str) -> tuple[int, int, int, float]:
    """How well ``fmt`` reads the stamps, in file order: (stamps read, steps between successive distinct stamps,
    steps equal to the commonest step, span in seconds).  A regular log read the right way has (nearly) every step
    equal; read the wrong way (day and month swapped) its steps jump by months at each day change and its span
    grows from days to months."""
    ts = []
    for v in values:
        try:
            ts.append(_dt.datetime.strptime(v, fmt).replace(tzinfo=_dt.timezone.utc).timestamp())
        except ValueError:
            pass
    x = np.asarray(ts, dtype=float)
    d = np.abs(np.diff(x))
    d = d[d > 0]
    if not d.size:
        return len(ts), 0, 0, 0.0
    steps, counts = np.unique(d, return_counts=True)
    return len(ts), int(d.size), int(counts.max()), float(x.max() - x.min())


def _day_text(seconds: float) -> str:
    return f"{seconds / 86400:.3g} d" if seconds >= 86400 else f"{seconds / 3600:.3g} h"


def choose_reading(values: list[str], formats: list[str], what: str) -> tuple[str, str | None, bool]:
    """Pick among formats that all read the sample (day-first against month-first ...) by counted evidence:
    the most stamps read (a month field over 12 fails the wrong reading), then the most regular steps, then the
    shortest span.  -> (format, guess text naming the evidence and the override, tie).  On a true tie (the
    evidence cannot tell, e.g. every stamp on one day) the day-first reading is taken and ``tie`` is True."""
    ev = {f: _evidence(values, f) for f in formats}
    day_first = {f: 0 if "%d" in f.split("%m")[0] else 1 for f in formats}
    order = sorted(formats, key=lambda f: (-ev[f][0], -ev[f][2], ev[f][3], day_first[f]))
    best = order[0]
    key = lambda f: (ev[f][0], ev[f][2], ev[f][3])  # noqa: E731
    tie = any(key(f) == key(best) for f in order[1:])

    def text(f: str) -> str:
        n, steps, regular, span = ev[f]
        return f"'{f}': {n} of {len(values)} stamps read, {regular} of {steps} steps regular, span {_day_text(span)}"

    others = "; ".join(text(f) for f in order[1:])
    if tie:
        guess = (f"{what}: the evidence ties ({text(best)}; {others}); read as '{best}' (day first); check it and "
                 f"override with --time-format or [time] format in the mapping file")
    else:
        guess = (f"{what} read as {text(best)} (against {others}); override with --time-format or [time] format "
                 f"in the mapping file")
    return best, guess, tie


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
    # several readings (day-first / month-first ...): counted evidence decides (choose_reading)
    best, guess, _ = choose_reading(vals, ok, "time format")
    return ("format", best, guess)


def detect_date_format(values: list[str]) -> str | None:
    return detect_date_reading(values)[0]


def detect_date_reading(values: list[str]) -> tuple[str | None, str | None]:
    """(format of a date column, guess text when several readings fit; see ``choose_reading``)."""
    vals = _sample_strings(values, 400)
    if not vals:
        return None, None
    ok = _try_formats(vals[:60], _DATES)
    if not ok:
        return None, None
    if len(ok) > 1:
        ok = _try_formats(vals, ok) or ok
    if len(ok) == 1:
        return ok[0], None
    best, guess, _ = choose_reading(vals, ok, "date format")
    return best, guess


def detect_clock_format(values: list[str]) -> str | None:
    """Format of a time-of-day column; ``...%z`` when the times carry a UTC offset or ``Z`` (``01:00:00+01:00``)."""
    vals = _sample_strings(values, 60)
    if not vals:
        return None
    ok = _try_formats(vals, _TIMES)
    if not ok and sum(1 for v in vals if _ISO_OFFSET_RE.search(v)) >= 0.5 * len(vals):
        ok = _try_formats(vals, [f + "%z" for f in _TIMES if "%p" not in f])
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
    else:   # a format with %z: offsets may change within the file (DST), so read straight to UTC
        t = pd.to_datetime(ser, format=spec.fmt, errors="coerce", utc="%z" in (spec.fmt or ""))
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
        # the plausible range holds on this path too (one stray 2150 stamp must not stretch the grid)
        lo, hi = TIME_MIN.tz_localize("UTC").value, TIME_MAX.tz_localize("UTC").value
        oor = (ns < lo) | (ns >= hi)
        if oor.any():
            ns = np.where(oor, 0, ns)
        return ns, oor.astype(np.int8) * 4
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
