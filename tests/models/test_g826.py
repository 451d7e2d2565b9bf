"""ITU-T G.826 / G.828 availability rule on hand-built second masks at the boundaries.

Source of the rule (docs/references.md §7): ITU-T G.826 (12/2002) Annex A, as quoted in an equipment reference
manual (Ericsson EN/LZT 720 0008: unavailable state declared at the onset of 10 consecutive SES, those seconds part
of the unavailable time; available again at the onset of 10 consecutive non-SES seconds, those part of the available
time; ES/SES not counted in unavailable time) and a G.832 MIB description saying the same.
"""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from diag.models import g826


def mask(*parts: tuple[int, int]) -> np.ndarray:
    """Build a mask from (value, count) pairs: (1, 10) = ten SES, (0, 5) = five clear seconds."""
    return np.concatenate([np.full(count, bool(value)) for value, count in parts])


def literal_rule(ses: np.ndarray, valid: np.ndarray) -> np.ndarray:
    """Second-by-second reading of the G.826 Annex A wording (reference for the vectorised function)."""
    n = ses.size
    out = np.zeros(n, dtype=bool)
    unavailable = False
    for i in range(n):
        if not valid[i]:
            unavailable = False   # our choice: a gap restarts the rule (documented in diag.models.g826)
            continue
        window = slice(i, i + 10)
        full = i + 10 <= n and valid[window].all()
        if not unavailable and full and ses[window].all():
            unavailable = True    # onset of 10 consecutive SES: these 10 s are unavailable
        elif unavailable and full and not ses[window].any():
            unavailable = False   # onset of 10 consecutive non-SES: these 10 s are available
        out[i] = unavailable
    return out


# --- boundaries: 9 vs 10 SES (G.826 Annex A: ten consecutive SES enter unavailable time) ----------------------
def test_nine_ses_stay_available_and_count_as_ses():
    ses = mask((0, 20), (1, 9), (0, 20))
    unav = g826.unavailable_mask(ses)
    assert unav.sum() == 0
    assert g826.available_count(ses, unav) == 9          # SES counted in available time


def test_ten_ses_are_unavailable_and_not_counted_as_ses():
    ses = mask((0, 20), (1, 10), (0, 20))
    unav = g826.unavailable_mask(ses)
    assert unav.sum() == 10
    assert np.array_equal(np.flatnonzero(unav), np.arange(20, 30))   # the 10 SES themselves are unavailable
    assert g826.available_count(ses, unav) == 0


def test_exit_needs_ten_clear_seconds_and_short_recovery_stays_unavailable():
    # 10 SES, 9 clear, 1 SES, then 10 clear: the 9 clear seconds do not end unavailability
    ses = mask((1, 10), (0, 9), (1, 1), (0, 30))
    unav = g826.unavailable_mask(ses)
    assert unav.sum() == 20
    assert not unav[20:].any()                            # the 10 clear seconds that end it are available


def test_re_entry_after_exactly_ten_clear_seconds():
    ses = mask((1, 12), (0, 10), (1, 10), (0, 15))
    unav = g826.unavailable_mask(ses)
    assert unav.sum() == 22
    assert not unav[12:22].any()                          # ten clear seconds: back to available
    periods = g826.unavailable_periods(unav)
    assert periods.tolist() == [[0, 12], [22, 32]]


def test_nine_ses_inside_unavailable_time_are_not_counted():
    ses = mask((1, 10), (0, 3), (1, 9), (0, 12))
    unav = g826.unavailable_mask(ses)
    assert unav.sum() == 22
    assert g826.available_count(ses, unav) == 0


def test_trailing_periods():
    # unavailable at the end of the record with fewer than 10 clear seconds: exit not reached, stays unavailable
    ses = mask((0, 5), (1, 10), (0, 5))
    assert g826.unavailable_mask(ses).sum() == 15
    # 9 SES at the very end: entry not reached, they are SES in available time
    ses = mask((0, 5), (1, 9))
    unav = g826.unavailable_mask(ses)
    assert unav.sum() == 0 and g826.available_count(ses, unav) == 9
    # record starting inside an outage: the first 10 SES enter at once
    ses = mask((1, 25), (0, 10))
    assert g826.unavailable_mask(ses).sum() == 25


def test_gap_breaks_consecutive_runs_and_is_never_unavailable():
    ses = mask((1, 5), (1, 3), (1, 5))
    valid = mask((1, 5), (0, 3), (1, 5))
    unav = g826.unavailable_mask(ses, valid)
    assert unav.sum() == 0                                 # 5 + 5 SES across a gap are not 10 consecutive
    ses = mask((1, 12), (0, 4), (1, 3))
    valid = mask((1, 12), (0, 4), (1, 3))
    unav = g826.unavailable_mask(ses, valid)
    assert unav[:12].all() and not unav[12:].any()         # gap seconds never unavailable
    assert g826.available_count(ses, unav, valid) == 3


def test_short_gaps_bridged_when_asked():
    # our option (not in G.826): a gap shorter than bridge_gaps_s is taken out of the time line
    ses = mask((1, 5), (1, 3), (1, 5), (0, 12))
    valid = mask((1, 5), (0, 3), (1, 5), (1, 12))
    unav = g826.unavailable_mask(ses, valid, bridge_gaps_s=10)
    assert unav.sum() == 10 and not unav[5:8].any()       # 5 + 5 SES joined; the gap itself is not unavailable
    valid_long = mask((1, 5), (0, 3), (1, 5), (1, 12))
    valid_long[5:8] = False
    assert g826.unavailable_mask(ses, valid_long, bridge_gaps_s=3).sum() == 0   # a 3-s gap is not < 3: restarts


def test_bidirectional_union():
    # G.826 Annex A: a bidirectional path is unavailable if either direction is
    a = mask((1, 10), (0, 30))
    b = mask((0, 15), (1, 10), (0, 15))
    both = g826.bidirectional_unavailable_mask(a, b)
    assert both.sum() == 20
    assert np.array_equal(both, g826.unavailable_mask(a) | g826.unavailable_mask(b))


def test_empty_and_shape_errors():
    assert g826.unavailable_mask(np.zeros(0, dtype=bool)).size == 0
    with pytest.raises(ValueError, match="same length"):
        g826.unavailable_mask(np.zeros(3, dtype=bool), np.ones(4, dtype=bool))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.sampled_from([0, 1, 2]), min_size=0, max_size=200),
       st.integers(min_value=1, max_value=14))
def test_vectorised_matches_literal_reading(codes, run):
    # build masks with long runs so the 10-s boundaries are hit often: each code is repeated 1..14 times
    arr = np.repeat(np.array(codes, dtype=int), run) if codes else np.zeros(0, dtype=int)
    ses = arr == 1
    valid = arr != 2
    assert np.array_equal(g826.unavailable_mask(ses, valid), literal_rule(ses, valid))


@settings(max_examples=50, deadline=None)
@given(st.lists(st.booleans(), min_size=1, max_size=150), st.data())
def test_more_ses_never_means_less_unavailable_time(bits, data):
    # monotonicity (used by diag.analysis.outage for lower/upper bounds): S subset of S' implies U(S) subset of U(S')
    ses = np.array(bits)
    extra = np.array(data.draw(st.lists(st.booleans(), min_size=ses.size, max_size=ses.size)))
    more = ses | extra
    assert not (g826.unavailable_mask(ses) & ~g826.unavailable_mask(more)).any()


# --- objectives: docs/references.md §7 [C] values for a 365-day year -------------------------------------------
@pytest.mark.parametrize("objective, minutes", [(99.9, 525.6), (99.95, 262.8), (99.99, 52.56), (99.995, 26.28),
                                                (99.999, 5.256)])
def test_objective_minutes_per_year(objective, minutes):
    assert g826.objective_minutes_per_year(objective) == pytest.approx(minutes, rel=1e-9)


def test_availability_and_scaling():
    assert g826.availability_percent(60.48, 604800) == pytest.approx(99.99)
    assert np.isnan(g826.availability_percent(0, 0))
    # one week's 60.48 s scales to 3153.6 s a year (= 52.56 min, the 99.99 % figure)
    assert g826.scale_to_year_s(60.48, 7 * 86400) == pytest.approx(3153.6)


def test_p841_global_parameters_against_the_inverse_form():
    # Outside form, not the one in the code: the global annual <-> worst-month relation written the other way round,
    # p = 0.30 p_w^1.15 (ITU-R P.841 global planning form; from memory: the Recommendation's text was not available
    # to check, the same form is used by independent public implementations).  0.30 and 1.15 correspond to
    # Q1 = 0.30^(-1/1.15) = 2.849 and beta = 1 - 1/1.15 = 0.1304: the code's Q1 = 2.85, beta = 0.13 must reproduce
    # it within 0.5 % over the whole Q1 p^-beta branch (1e-4 .. 3 %); beta = 0.15 or Q1 = 3.0 would miss by up to
    # 23 % or 6 %.
    p = np.logspace(-4, np.log10(2.99), 25)
    pw = g826.worst_month_factor(p) * p
    np.testing.assert_allclose(0.30 * pw ** 1.15, p, rtol=5e-3)
    np.testing.assert_allclose(g826.annual_from_worst_month_percent((p / 0.30) ** (1 / 1.15)), p, rtol=5e-3)
    # the cap Q = 12 (P.841, from memory) is the P.530 §2.3.4 bound Delta G <= 10.8 dB (from memory): 10 log 12
    assert g826.worst_month_factor(1e-7) == 12.0
    assert 10 * np.log10(12.0) == pytest.approx(10.8, abs=0.01)


def test_p841_conversion_inverse_round_trip():
    # self-consistency only (the inverse against the forward function; the outside check is the test above)
    p = np.array([1e-6, 1e-4, 0.01, 0.5, 2.9, 5.0])
    pw = g826.worst_month_factor(p) * p
    assert np.allclose(g826.annual_from_worst_month_percent(pw), p, rtol=1e-9)
    assert np.isnan(g826.annual_from_worst_month_percent(-1.0))
