"""Error-performance events from a per-second severely-errored mask (ITU-T G.826 / G.828 availability rule).

Every function here is pure and vectorised over a 1-D sequence of one-second slots.

Rules implemented (ITU-T G.826 (12/2002) Annex A, the same scheme in G.828 (03/2000) for SDH paths):

* A period of unavailable time begins at the onset of ten consecutive severely errored seconds (SES); those ten
  seconds are part of the unavailable time.
* A new period of available time begins at the onset of ten consecutive non-SES seconds; those ten seconds are
  part of the available time.
* Errored seconds (ES) and SES are counted only in available time.
* A bidirectional path is unavailable when either direction is.

Sources actually read for the rule: the G.826 wording as quoted in an equipment reference manual (Ericsson
EN/LZT 720 0008, "An unavailable state ... is declared at the onset of P consecutive SES ... These P seconds are
considered to be part of the unavailable time ... Q consecutive seconds with no SES ... part of the available
time"; "The counting of ES and SES is stopped for both directions as soon as at least one of the directions is in
the unavailable state") and a G.832 MIB description ("unavailable at the onset of 10 consecutive ... SES ...
includes the initial 10 seconds to enter ... but not the 10 seconds to exit").  See docs/references.md §7.

Choices of our own (not in the Recommendations, which assume a continuous measurement):

* Seconds with no data (``valid`` False) are neither SES nor non-SES.  By default a gap interrupts "consecutive":
  the state machine restarts in the available state after it, so the seconds on either side never join into one
  run of ten.  With ``bridge_gaps_s`` a short gap (a missed poll, a blank reading) is taken out of the time line
  instead and the rule carries on across it.  Gap seconds are never unavailable.
* At the end of the record, a trailing run of fewer than ten non-SES seconds after unavailable time stays
  unavailable (the exit was not reached); a trailing run of fewer than ten SES in available time stays available
  (the entry was not reached) and counts as SES.

The worst-month conversion (``annual_from_worst_month_percent``) follows ITU-R P.841 with its global parameters
Q1 = 2.85 and beta = 0.13, as implemented in open-source propagation codes; the Recommendation's own text was not
available to check (from memory).  The tests check them against the global relation in its other published form,
p = 0.30 p_w^1.15 (Q1 = 2.849, beta = 0.1304; also from memory), within 0.5 %.
"""
from __future__ import annotations

import numpy as np
import numpy.typing as npt

CONSECUTIVE_S = 10              # G.826 Annex A: ten consecutive seconds to enter or leave unavailable time
SECONDS_PER_YEAR = 365 * 86400  # 365-day year, as in docs/references.md §7 (99.99 % -> 52.56 min)

__all__ = ["CONSECUTIVE_S", "SECONDS_PER_YEAR", "unavailable_mask", "bidirectional_unavailable_mask",
           "available_count", "unavailable_periods", "availability_percent",
           "unavailability_minutes_per_year", "objective_minutes_per_year", "scale_to_year_s",
           "worst_month_factor", "annual_from_worst_month_percent"]


def _runs(values: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Run-length encoding of a 1-D integer array: (starts, lengths, run values)."""
    n = values.size
    if n == 0:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty, values[:0]
    change = np.flatnonzero(values[1:] != values[:-1]) + 1
    starts = np.concatenate(([0], change))
    lengths = np.diff(np.concatenate((starts, [n])))
    return starts, lengths, values[starts]


def unavailable_mask(ses: npt.ArrayLike, valid: npt.ArrayLike | None = None, *,
                     consecutive_s: int = CONSECUTIVE_S, bridge_gaps_s: int = 0) -> np.ndarray:
    """Unavailable seconds from a per-second SES mask (ITU-T G.826 (12/2002) Annex A; G.828 Annex A).

    Parameters
    ----------
    ses : array_like of bool, shape (n,)
        True where the second is severely errored.
    valid : array_like of bool, shape (n,), optional
        False where the second has no data (excluded; restarts the rule; never unavailable).  Default: all valid.
    consecutive_s : int
        Run length that enters/leaves unavailable time (10 in G.826/G.828).
    bridge_gaps_s : int
        Gaps shorter than this many seconds are bridged: taken out of the time line, so the rule carries on across
        them as if the seconds on either side were adjacent (a single blank reading inside a long outage does not
        end it).  Longer gaps restart the rule.  Gap seconds are never unavailable either way.  Default 0: every
        gap restarts the rule.

    Returns
    -------
    numpy.ndarray of bool, shape (n,)
        True for unavailable seconds.  The ``consecutive_s`` SES that start a period are unavailable; the
        ``consecutive_s`` non-SES seconds that end it are available.
    """
    ses_arr = np.asarray(ses, dtype=bool).ravel()
    valid_arr = np.ones_like(ses_arr) if valid is None else np.asarray(valid, dtype=bool).ravel()
    if valid_arr.shape != ses_arr.shape:
        raise ValueError("ses and valid must have the same length")
    if bridge_gaps_s > 0 and not valid_arr.all():
        gap_starts, gap_lengths, gap_values = _runs(valid_arr.astype(np.int8))
        short = (gap_values == 0) & (gap_lengths < bridge_gaps_s)
        if short.any():
            keep = ~np.repeat(short, gap_lengths)               # drop the short gaps from the time line
            out = np.zeros(ses_arr.shape, dtype=bool)
            out[keep] = unavailable_mask(ses_arr[keep], valid_arr[keep], consecutive_s=consecutive_s)
            return out
    # code: 1 = SES, 0 = non-SES, -1 = no data
    code = np.where(valid_arr, ses_arr.astype(np.int8), np.int8(-1))
    starts, lengths, values = _runs(code)
    if starts.size == 0:
        return np.zeros(0, dtype=bool)
    # state decided by a run: 1 (enter unavailable) for a long SES run, 0 (available) for a long non-SES run or a
    # gap; -1 (keep the previous state) for a short run.  Initial state: available.
    decided = np.full(values.shape, -1, dtype=np.int8)
    long_run = lengths >= consecutive_s
    decided[(values == 1) & long_run] = 1
    decided[(values == 0) & long_run] = 0
    decided[values == -1] = 0
    # forward-fill the last decided state over the short runs
    idx = np.where(decided >= 0, np.arange(decided.size), -1)
    np.maximum.accumulate(idx, out=idx)
    state = np.where(idx >= 0, decided[np.maximum(idx, 0)], 0).astype(bool)
    state &= values != -1
    return np.repeat(state, lengths)


def bidirectional_unavailable_mask(ses_a_to_b: npt.ArrayLike, ses_b_to_a: npt.ArrayLike,
                                   valid_a_to_b: npt.ArrayLike | None = None,
                                   valid_b_to_a: npt.ArrayLike | None = None, *,
                                   consecutive_s: int = CONSECUTIVE_S) -> np.ndarray:
    """A bidirectional path is unavailable when either direction is (ITU-T G.826 Annex A, A.2).

    Each direction gets its own ``unavailable_mask``; the result is their union.
    """
    return (unavailable_mask(ses_a_to_b, valid_a_to_b, consecutive_s=consecutive_s)
            | unavailable_mask(ses_b_to_a, valid_b_to_a, consecutive_s=consecutive_s))


def available_count(event_mask: npt.ArrayLike, unavailable: npt.ArrayLike,
                    valid: npt.ArrayLike | None = None) -> int:
    """Number of seconds flagged in ``event_mask`` (ES or SES) that lie in available, observed time.

    ITU-T G.826 (12/2002) section 5: ES and SES are counted only during available time.
    """
    events = np.asarray(event_mask, dtype=bool).ravel()
    keep = ~np.asarray(unavailable, dtype=bool).ravel()
    if valid is not None:
        keep &= np.asarray(valid, dtype=bool).ravel()
    return int(np.count_nonzero(events & keep))


def unavailable_periods(unavailable: npt.ArrayLike) -> np.ndarray:
    """Start and end (exclusive) indices of each period of unavailable time, shape (k, 2)."""
    mask = np.asarray(unavailable, dtype=bool).ravel().astype(np.int8)
    edges = np.diff(np.concatenate(([0], mask, [0])))
    return np.column_stack((np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)))


def availability_percent(unavailable_s: npt.ArrayLike, observed_s: npt.ArrayLike):
    """Availability over observed time [%]: 100 (1 - unavailable / observed); NaN when nothing was observed.

    Common practice (availability ratio, ITU-T G.827 style, over the observed time only: data gaps excluded).
    """
    unav = np.asarray(unavailable_s, dtype=float)
    obs = np.asarray(observed_s, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        result = np.where(obs > 0, 100.0 * (1.0 - unav / np.where(obs > 0, obs, 1.0)), np.nan)
    return float(result) if result.ndim == 0 else result


def objective_minutes_per_year(objective_pct: npt.ArrayLike):
    """Unavailability allowed per 365-day year by an availability objective [min].

    (100 - objective) / 100 * 525 600 min; 99.99 % gives 52.56 min (docs/references.md §7, computed).
    """
    obj = np.asarray(objective_pct, dtype=float)
    result = (100.0 - obj) / 100.0 * SECONDS_PER_YEAR / 60.0
    return float(result) if result.ndim == 0 else result


def unavailability_minutes_per_year(availability_pct: npt.ArrayLike):
    """Minutes per 365-day year of unavailability implied by an availability [%] (same formula as the objective)."""
    return objective_minutes_per_year(availability_pct)


def scale_to_year_s(unavailable_s: npt.ArrayLike, observed_s: npt.ArrayLike):
    """Linear scaling of observed unavailable time to a 365-day year [s] (NaN when nothing was observed).

    Assumes the observed period is representative of the year, which a week is not: quote with a caveat.
    """
    unav = np.asarray(unavailable_s, dtype=float)
    obs = np.asarray(observed_s, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        result = np.where(obs > 0, unav * SECONDS_PER_YEAR / np.where(obs > 0, obs, 1.0), np.nan)
    return float(result) if result.ndim == 0 else result


# ITU-R P.841 global parameters (as implemented in open-source codes; Rec text not available: from memory; consistent
# within 0.5 % with the inverse form p = 0.30 p_w^1.15, see tests/models/test_g826.py)
P841_Q1 = 2.85
P841_BETA = 0.13


def worst_month_factor(annual_pct: npt.ArrayLike, *, q1: float = P841_Q1, beta: float = P841_BETA):
    """Ratio Q of worst-month to annual time percentage, ITU-R P.841 (global parameters).

    Q = 12 for p < (Q1/12)^(1/beta); Q = Q1 p^-beta up to p = 3 %; Q = Q1 3^-beta from 3 % to 30 %
    (the form above 30 % is not implemented: NaN).  p in percent of the average year.
    """
    p = np.asarray(annual_pct, dtype=float)
    p_low = (q1 / 12.0) ** (1.0 / beta)
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.where(p < p_low, 12.0, q1 * np.power(np.minimum(np.maximum(p, 1e-300), 3.0), -beta))
    q = np.where((p >= 30.0) | ~np.isfinite(p), np.nan, q)
    return float(q) if q.ndim == 0 else q


def annual_from_worst_month_percent(worst_month_pct: npt.ArrayLike, *, q1: float = P841_Q1,
                                    beta: float = P841_BETA):
    """Annual time percentage p whose worst-month percentage Q(p) p equals ``worst_month_pct`` (inverse of P.841).

    Piecewise closed form: p_w = 12 p below the cap; p_w = Q1 p^(1-beta) up to 3 %; p_w = Q1 3^-beta p above.
    """
    pw = np.asarray(worst_month_pct, dtype=float)
    p_low = (q1 / 12.0) ** (1.0 / beta)
    pw_low = 12.0 * p_low
    pw_3 = q1 * 3.0 ** (1.0 - beta)
    with np.errstate(divide="ignore", invalid="ignore"):
        p = np.where(pw < pw_low, pw / 12.0,
                     np.where(pw < pw_3, np.power(np.maximum(pw, 0.0) / q1, 1.0 / (1.0 - beta)),
                              pw / (q1 * 3.0 ** -beta)))
    p = np.where((pw < 0) | (p >= 30.0) | ~np.isfinite(pw), np.nan, p)
    return float(p) if p.ndim == 0 else p
