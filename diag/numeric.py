"""Small numeric helpers shared by the analysis stages: numpy's own steps without its wrappers (bit-identical
results on the many short arrays of a record's events, where the wrappers cost more than the arithmetic), and the
rounding of figures written to the outputs.

Each bit-exact helper is checked against the numpy function it repeats in ``tests/test_numeric.py``.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["add_reduce", "nanmax", "pearson", "round_figures", "round_sig", "std"]

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
