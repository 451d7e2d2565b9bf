"""Small numeric helpers shared by the analysis stages: numpy's own steps without its wrappers (bit-identical
results on the many short arrays of a record's events, where the wrappers cost more than the arithmetic), and the
rounding of figures written to the outputs.

Each bit-exact helper is checked against the numpy (or scipy) function it repeats in
``tests/analysis/test_numeric.py``.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["add_reduce", "nanmax", "pearson", "round_figures", "round_sig", "std", "theil_sen"]

# what ndarray.sum() calls (the same pairwise summation), without the method's wrapper
add_reduce = np.add.reduce


def std(x: np.ndarray) -> float:
    """``float(np.std(x))`` of a 1-D float array by numpy's steps (sum, divide, subtract, square, sum, divide,
    square root): the same bits."""
    n = x.size
    d = x - add_reduce(x) / n
    d *= d
    return math.sqrt(add_reduce(d) / n)


def pearson(x: np.ndarray, y: np.ndarray) -> float:
    """``float(np.corrcoef(x, y)[0, 1])`` of two 1-D float arrays by the steps of numpy.cov / numpy.corrcoef (the
    same row means, the same BLAS product, the same scaling, division and clipping): the same bits."""
    rows = np.empty((2, x.size))
    rows[0] = x
    rows[1] = y
    rows -= (add_reduce(rows, axis=1) / x.size)[:, None]   # rows.mean(axis=1): the row sums over the count
    c = np.dot(rows, rows.T)
    c *= np.true_divide(1, x.size - 1)
    r = float(c[0, 1] / np.sqrt(c[0, 0]) / np.sqrt(c[1, 1]))
    return 1.0 if r > 1.0 else -1.0 if r < -1.0 else r


# scipy.special.ndtri (what scipy.stats.norm.ppf evaluates) at the lower tail of the intervals diag asks for, as
# theil_sen computes it from alpha: 0.95 -> (1 - 0.95) / 2 = 0.025000000000000022.  The same bits as scipy's
# (tests/analysis/test_numeric.py), without importing scipy.special in an analysis.
_NORMAL_QUANTILE = {(1.0 - 0.95) / 2.0: -1.959963984540054}


def theil_sen(y: np.ndarray, x: np.ndarray, alpha: float = 0.95) -> tuple[float, float, float, float]:
    """Theil-Sen line of finite points (x, y): (slope, intercept, low slope, high slope) of the ``alpha``
    confidence interval, by the steps of ``scipy.stats.theilslopes`` (method "separate"): the same bits.

    Sources: H. Theil (1950) and P. K. Sen, "Estimates of the regression coefficient based on Kendall's tau",
    J. Am. Stat. Assoc. 63(324):1379-1389, 1968, eq. (2.6) for the variance of the interval (ties in x and in y).
    Why not scipy's: importing ``scipy.stats`` costs about 0.35 s of CPU, more than analysing a 1-s link-week's
    level changes.  Points with increasing x (the hourly levels of a trend) are paired row by row, so the
    temporaries stay one slope per pair (scipy builds two n-by-n difference matrices and a mask); the order
    statistics come from a partition instead of a full sort (the same values).
    """
    y = np.array(y, dtype=float).ravel()
    x = np.array(x, dtype=float).ravel()
    if len(x) != len(y) or len(x) < 2 or not (np.isfinite(x).all() and np.isfinite(y).all()):
        raise ValueError("theil_sen needs two or more finite points of the same length")
    n = len(y)
    if (x[1:] > x[:-1]).all():     # increasing x: pair (i, j) with j < i is a pair of positive x difference
        slopes = np.empty(n * (n - 1) // 2)
        at = 0
        for i in range(1, n):
            slopes[at:at + i] = (y[i] - y[:i]) / (x[i] - x[:i])
            at += i
    else:                           # scipy's own pairing
        deltax = x[:, np.newaxis] - x
        deltay = y[:, np.newaxis] - y
        positive = deltax > 0
        slopes = deltay[positive] / deltax[positive]
    if not slopes.size:
        raise ValueError("theil_sen: all x coordinates are identical")
    medslope = np.median(slopes)
    medinter = np.median(y) - medslope * np.median(x)
    if alpha > 0.5:
        alpha = 1.0 - alpha
    z = _NORMAL_QUANTILE.get(alpha / 2.0)
    if z is None:
        from scipy.special import ndtri  # what scipy.stats.norm.ppf evaluates (about 0.15 s of CPU to import)

        z = ndtri(alpha / 2.0)
    nt = len(slopes)
    sigsq = 1 / 18. * (n * (n - 1) * (2 * n + 5) - sum(k * (k - 1) * (2 * k + 5) for k in _repeat_counts(x))
                       - sum(k * (k - 1) * (2 * k + 5) for k in _repeat_counts(y)))
    try:
        sigma = np.sqrt(sigsq)
        high = min(int(np.round((nt - z * sigma) / 2.)), nt - 1)
        low = max(int(np.round((nt + z * sigma) / 2.)) - 1, 0)
        ordered = np.partition(slopes, [low, high])
        delta = (ordered[low], ordered[high])
    except (ValueError, IndexError):
        delta = (np.nan, np.nan)
    return float(medslope), float(medinter), float(delta[0]), float(delta[1])


def _repeat_counts(values: np.ndarray) -> np.ndarray:
    """How often each repeated value occurs (values seen once left out), as scipy.stats' ``_find_repeats``."""
    arr = np.sort(values)
    change = np.concatenate(([True], arr[1:] != arr[:-1]))
    freq = np.diff(np.concatenate(np.nonzero(change) + ([arr.size],)))
    return freq[freq > 1]


def nanmax(x: np.ndarray, default: float = math.nan) -> float:
    """Largest finite value of ``x`` (``np.nanmax`` over the finite values), ``default`` when there is none."""
    x = x[np.isfinite(x)]
    return float(x.max()) if x.size else default


def round_sig(value, digits: int = 4, *, keep_negative_zero: bool = False) -> float | None:
    """``value`` rounded to ``digits`` significant figures, as the outputs (JSON, CSV) write figures.

    None for None, a value that is not a number, NaN or an infinity; ``0.0`` for a zero (``-0.0`` stays ``-0.0``
    with ``keep_negative_zero``)."""
    try:
        value = float(value)
    except (TypeError, ValueError):
        return None
    if not math.isfinite(value):
        return None
    if value == 0 and not keep_negative_zero:
        return 0.0
    return float(f"{value:.{digits}g}")


def round_figures(value, digits: int = 4):
    """:func:`round_sig` for the statistics' figures: a list, tuple or array is rounded element by element (a
    list back), and an infinity becomes +-1e300 (a depth beyond every finite one stays ordered in JSON)."""
    if value is None:
        return None
    if isinstance(value, (list, tuple, np.ndarray)):
        return [round_figures(v, digits) for v in value]
    value = float(value)
    if math.isinf(value):
        return 1e300 if value > 0 else -1e300
    return round_sig(value, digits)


def as_float(value) -> float:
    """``float(value)``, or NaN when the value is missing or not a number (event-table cells)."""
    try:
        return float(value)
    except (TypeError, ValueError):
        return math.nan


def duration_word(seconds: float) -> str:
    """A duration as an evidence word: "45-s", "20-min", "2.5-h"."""
    if seconds < 120:
        return f"{seconds:.0f}-s"
    if seconds < 3 * 3600:
        return f"{seconds / 60:.0f}-min"
    return f"{seconds / 3600:.1f}-h"
