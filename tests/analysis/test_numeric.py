"""diag.numeric: each bit-exact helper gives the same bits as the function it repeats (reference libraries: numpy's
np.sum, np.std, np.corrcoef, np.nanmax; scipy.stats.theilslopes); round_sig against Python's own "%g" formatting."""
import math

import numpy as np
import pytest

from diag.numeric import add_reduce, nanmax, pearson, round_sig, std, theil_sen

SIZES = [2, 3, 7, 8, 9, 100, 129, 1000, 4097]


def _arrays(seed: int):
    rng = np.random.default_rng(seed)
    for n in SIZES:
        yield rng.normal(-50.0, 7.0, n), rng.normal(3.0, 0.01, n) * rng.normal(1.0, 5.0, n)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_add_reduce_is_np_sum_bit_for_bit(seed):
    for x, y in _arrays(seed):
        assert add_reduce(x) == np.sum(x)
        assert add_reduce(x * y) == np.sum(x * y)
        rows = np.vstack([x, y])
        assert np.array_equal(add_reduce(rows, axis=1), np.sum(rows, axis=1))


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_std_is_np_std_bit_for_bit(seed):
    for x, y in _arrays(seed):
        assert std(x) == float(np.std(x))
        assert std(y) == float(np.std(y))
    assert std(np.full(5, 2.5)) == float(np.std(np.full(5, 2.5))) == 0.0


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_pearson_is_np_corrcoef_bit_for_bit(seed):
    for x, y in _arrays(seed):
        assert pearson(x, y) == float(np.corrcoef(x, y)[0, 1])
        assert pearson(x, 2.0 * x + 1.0) == float(np.corrcoef(x, 2.0 * x + 1.0)[0, 1])
        assert pearson(x, -x) == float(np.corrcoef(x, -x)[0, 1])
    # a value numpy clips into [-1, 1] is clipped the same way
    x = np.array([1.0, 2.0, 3.0])
    assert -1.0 <= pearson(x, x) <= 1.0 and pearson(x, x) == float(np.corrcoef(x, x)[0, 1])


def test_nanmax_is_np_nanmax_over_finite_values():
    x = np.array([np.nan, -3.0, np.inf, 7.5, -np.inf, 2.0])
    assert nanmax(x) == float(np.nanmax(x[np.isfinite(x)])) == 7.5
    assert math.isnan(nanmax(np.array([np.nan, np.inf])))
    assert nanmax(np.array([]), default=0.0) == 0.0


def test_round_sig_matches_g_formatting():
    for value in (123.456789, -0.000123456, 98765.4321, 1e-12, 3.0):
        for digits in (2, 4, 6):
            assert round_sig(value, digits) == float(f"{value:.{digits}g}")
    assert round_sig(0.00012345678) == 0.0001235
    assert round_sig(None) is None and round_sig("abc") is None
    assert round_sig(math.nan) is None and round_sig(math.inf) is None
    assert math.copysign(1.0, round_sig(-0.0)) == 1.0
    assert math.copysign(1.0, round_sig(-0.0, keep_negative_zero=True)) == -1.0


def test_as_float_and_duration_word():
    # project helpers for event-table cells and evidence words (no outside source needed)
    from diag.numeric import as_float, duration_word

    assert as_float("2.5") == 2.5 and np.isnan(as_float(None)) and np.isnan(as_float("x"))
    assert [duration_word(s) for s in (45, 1200, 9000, 12600)] == ["45-s", "20-min", "150-min", "3.5-h"]


def _theil_cases(seed: int):
    """Hourly-trend-like points (increasing x, with and without ties in y) and general points (x unsorted, ties in
    x), of the sizes a trend sees."""
    rng = np.random.default_rng(seed)
    for n in (2, 3, 12, 13, 168, 500):
        x = np.arange(n) * 3600.0 / 604800.0
        yield rng.normal(-45.0, 0.3, n) + 0.2 * x, x
        yield np.round(rng.normal(-45.0, 0.3, n), 1), x                       # levels printed to 0.1 dB: ties
        yield rng.normal(0.0, 1.0, n), np.sort(rng.choice(np.arange(n // 2 + 1), n)).astype(float)   # ties in x
        yield rng.normal(0.0, 1.0, n), rng.permutation(np.arange(n, dtype=float))                     # unsorted x


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_theil_sen_is_scipy_theilslopes_bit_for_bit(seed):
    """scipy.stats.theilslopes (the reference library; Sen 1968 eq. 2.6 for the interval) at 95 % and 90 %."""
    from scipy.stats import theilslopes

    for y, x in _theil_cases(seed):
        if np.ptp(x) == 0:
            continue
        for alpha in (0.95, 0.90):
            want = theilslopes(y, x, alpha=alpha)
            got = theil_sen(y, x, alpha=alpha)
            assert np.array_equal(np.array(got), np.array([want.slope, want.intercept, want.low_slope,
                                                           want.high_slope]), equal_nan=True), (len(y), alpha)


def test_theil_sen_refuses_what_it_cannot_fit():
    with pytest.raises(ValueError):
        theil_sen(np.array([1.0]), np.array([0.0]))
    with pytest.raises(ValueError):
        theil_sen(np.array([1.0, np.nan]), np.array([0.0, 1.0]))
    with pytest.raises(ValueError):
        theil_sen(np.array([1.0, 2.0]), np.array([3.0, 3.0]))


def test_theil_sen_normal_quantiles_are_scipy_ndtri_bit_for_bit():
    """The kept lower-tail quantiles (no scipy.special import in an analysis) against scipy.special.ndtri, the
    reference library, for the alpha theil_sen is asked with (0.95, given as 0.95 or as 0.05)."""
    from scipy.special import ndtri

    from diag.numeric import _NORMAL_QUANTILE

    assert (1.0 - 0.95) / 2.0 in _NORMAL_QUANTILE
    for half, z in _NORMAL_QUANTILE.items():
        assert z == float(ndtri(half)) and type(z) is float
