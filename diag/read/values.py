"""Cell values of a log: parsed vectorised to float with a reason per cell (blank, missing marker, non-numeric,
out of range, loss-of-signal marker, at the receiver floor), the reason vocabulary, and the receiver-floor detection.
Used by :mod:`diag.read.normalise`, which assembles the long table.
"""
from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from diag import schema as S

# value status codes used internally (int8), in the order of schema.STATUSES
_OK, _LOST, _MISSING = 0, 1, 2
# value reason codes (int8)
R_NONE, R_BLANK, R_MARK_MISSING, R_NON_NUMERIC, R_RANGE, R_MARK_LOST, R_FLOOR, R_NONPOS, R_ABSENT = range(9)
REASON_NAMES = {R_BLANK: "blank", R_MARK_MISSING: "missing_marker", R_NON_NUMERIC: "non_numeric",
                R_RANGE: "out_of_range", R_MARK_LOST: "signal_lost_marker", R_FLOOR: "receiver_floor",
                R_NONPOS: "non_positive_power", R_ABSENT: "absent_field"}
FLOOR_BAND_DB = 1.0   # readings within this of a detected floor are floor readings too (common practice)

LOST_MARKERS = ("LOS", "LOF", "LOSS", "SIGNAL LOST", "NO SIGNAL", "NOSIGNAL", "-INF", "LOSS OF SIGNAL", "DOWN")
MISSING_MARKERS = ("N/A", "NA", "NAN", "#N/A", "---", "--", "-", "NULL", "NONE", "?", "ERR", "ERROR", "INVALID",
                   "*", "NIL", "N.A.", "#VALUE!", "TIMEOUT")
# common receiver-floor readings (common practice: radios report a fixed floor value when the receiver has lost
# the signal); used together with the plateau test below
KNOWN_FLOORS_DBM = (-99.0, -99.9, -100.0, -103.0, -110.0, -120.0, -127.0, -128.0)
FLOOR_MAX_DBM = -85.0   # a plateau above this level is not taken as a receiver floor (common practice)

# plausible ranges; outside -> missing (out_of_range).  Common practice, generous on purpose.
RANGES = {S.RSL: (-160.0, 30.0), S.XPL: (-160.0, 30.0), S.TSL: (-40.0, 50.0), S.XPD: (-20.0, 100.0),
          S.ES: (0.0, 1e7), S.SES: (0.0, 1e7), S.UAS: (0.0, 1e7)}
COUNTERS = (S.ES, S.SES, S.UAS)

# ---------------------------------------------------------------------------------------------------------------
# values

def parse_values(col: pa.Array, decimal: str) -> tuple[np.ndarray, np.ndarray]:
    """Vectorised: (float64 values, int8 reason code) for one string column (R_NONE when the number is fine)."""
    if decimal == "." and col.null_count == 0:
        try:   # clean numbers only (the usual case): one cast, no text work
            fast = pc.cast(col, pa.float64()).to_numpy(zero_copy_only=False).astype(np.float64, copy=True)
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            fast = None
        if fast is not None and np.isfinite(fast).all():
            return fast, np.zeros(len(fast), dtype=np.int8)
        if fast is None:   # often only empty cells (a gap) among clean numbers: the same cast around them
            clean = _numbers_and_blanks(col)
            if clean is not None:
                return clean
    s = pc.utf8_trim_whitespace(pc.fill_null(col, ""))
    s = pc.utf8_trim(s, '"\'')
    if decimal == ",":
        s = pc.replace_substring(s, ",", ".")
    try:
        fast = pc.cast(s, pa.float64()).to_numpy(zero_copy_only=False).astype(np.float64, copy=True)
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        fast = None
    if fast is not None and np.isfinite(fast).all():
        return fast, np.zeros(len(fast), dtype=np.int8)
    s = pc.replace_substring_regex(s, r"(?i)([0-9.])\s*(dbm|db|mw|uw|nw|w)$", r"\1")   # "-45.3 dBm" -> "-45.3"
    up = pc.utf8_upper(s)
    blank = pc.equal(pc.utf8_length(s), 0)
    lost = pc.is_in(up, value_set=pa.array(LOST_MARKERS))
    miss = pc.is_in(up, value_set=pa.array(MISSING_MARKERS))
    numeric = pc.match_substring_regex(s, r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d{1,3})?$")
    num = pc.cast(pc.if_else(numeric, s, pa.scalar(None, pa.string())), pa.float64())
    values = num.to_numpy(zero_copy_only=False).astype(np.float64, copy=True)
    reason = np.full(len(values), R_NON_NUMERIC, dtype=np.int8)
    reason[numeric.to_numpy(zero_copy_only=False)] = R_NONE
    reason[miss.to_numpy(zero_copy_only=False)] = R_MARK_MISSING
    reason[lost.to_numpy(zero_copy_only=False)] = R_MARK_LOST
    reason[blank.to_numpy(zero_copy_only=False)] = R_BLANK
    values[reason != R_NONE] = np.nan
    bad = ~np.isfinite(values) & (reason == R_NONE)
    reason[bad] = R_NON_NUMERIC
    values[bad] = np.nan
    return values, reason


def _numbers_and_blanks(col: pa.Array) -> tuple[np.ndarray, np.ndarray] | None:
    """(values, reasons) of a column of finite numbers and empty cells (reason blank, value NaN), as the general
    path below reads them; None when another kind of cell is there."""
    blank = pc.equal(pc.utf8_length(col), 0)
    if not pc.any(blank).as_py():
        return None
    try:
        num = pc.cast(pc.if_else(blank, pa.scalar(None, pa.string()), col), pa.float64())
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None
    values = num.to_numpy(zero_copy_only=False).astype(np.float64, copy=True)   # empty cells: NaN
    is_blank = blank.to_numpy(zero_copy_only=False)
    if not np.isfinite(values[~is_blank]).all():
        return None
    return values, np.where(is_blank, np.int8(R_BLANK), np.int8(R_NONE))


def status_of(reason: np.ndarray) -> np.ndarray:
    st = np.full(reason.shape, _MISSING, dtype=np.int8)
    st[reason == R_NONE] = _OK
    st[(reason == R_MARK_LOST) | (reason == R_FLOOR)] = _LOST
    return st


FLOOR_RUN = 10   # identical consecutive readings within FLOOR_BAND_DB above the floor that make a floor plateau


def _floor_mask(v: np.ndarray, floor_dbm: float) -> np.ndarray:
    """Readings at the floor, plus flat plateaus just above it: >= FLOOR_RUN consecutive identical readings within
    FLOOR_BAND_DB of the floor (a receiver parked 1 dB above its nominal floor, e.g. -102 next to -103 dBm, for
    hours).  A fading signal near the floor varies from row to row and stays a reading (common practice)."""
    at = (v > floor_dbm - 1e-6) & (v < floor_dbm + 1e-6)    # |v - floor| < 1e-6 without float temporaries
    bi = np.flatnonzero(v <= floor_dbm + FLOOR_BAND_DB + 1e-9)   # band readings (few): work on them only
    if len(bi) >= FLOOR_RUN:
        vb = v[bi]
        same = np.zeros(len(bi), dtype=bool)
        # a band reading equal to the band reading on the row just before it continues a run
        same[1:] = (np.diff(bi) == 1) & (np.abs(np.diff(vb)) < 1e-9)
        run_id = np.cumsum(~same) - 1
        long_run = np.bincount(run_id)[run_id] >= FLOOR_RUN
        at[bi[long_run]] = True
    return at


def detect_floor(series_values: list[np.ndarray]) -> tuple[float | None, str]:
    """Receiver floor of one level quantity: the minimum reading when it sits at or below FLOOR_MAX_DBM and is
    either a known floor value or held for at least 3 consecutive rows (a plateau at the minimum; common practice).
    Returns (floor_dbm or None, how)."""
    mins = [m for m in (np.fmin.reduce(v) if len(v) else np.nan for v in series_values) if np.isfinite(m)]  # no copy
    if not mins:
        return None, ""
    m = float(min(mins))
    if m > FLOOR_MAX_DBM:
        return None, ""
    count = 0
    longest = 0
    for v in series_values:
        tol = 1e-6 + 1e-5 * abs(m)          # np.isclose(v, m) without its float temporaries
        at = (v >= m - tol) & (v <= m + tol)
        count += int(at.sum())
        if at.any():
            # longest run of consecutive rows at the minimum
            pad = np.zeros(1, dtype=np.int8)
            d = np.diff(np.concatenate((pad, at.view(np.int8), pad)))   # int8 throughout (a list would be int64)
            starts, ends = np.flatnonzero(d == 1), np.flatnonzero(d == -1)
            longest = max(longest, int((ends - starts).max()))
    known = any(abs(m - f) < 1e-6 for f in KNOWN_FLOORS_DBM)
    if known:
        return m, f"minimum {m:g} dBm is a common receiver-floor reading ({count} values)"
    if longest >= 3:
        return m, f"minimum {m:g} dBm held for {longest} consecutive rows (plateau at the floor; {count} values)"
    return None, ""
