"""Private helpers shared by the model modules: array in, same shape out.

Every public model function accepts scalars, numpy arrays or pandas Series.  ``as_float_array`` turns an input
into a float array; ``like_input`` gives the result back as a Python float for scalar inputs, a Series (same
index) when any input was a Series, and an array otherwise.
"""
from __future__ import annotations

from typing import Any, Union

import numpy as np
import numpy.typing as npt

ArrayLike = Union[float, int, npt.ArrayLike]


def as_float_array(value: Any) -> np.ndarray:
    """``value`` as a float ndarray (a Series loses its index here; ``like_input`` restores it)."""
    return np.asarray(getattr(value, "values", value), dtype=float)


def like_input(result: Any, *inputs: Any):
    """``result`` shaped like the inputs: float for all-scalar inputs, Series for a Series input, else ndarray."""
    for item in inputs:
        if type(item).__name__ == "Series" and hasattr(item, "index"):
            import pandas as pd  # local import: the models do not otherwise need pandas

            return pd.Series(np.broadcast_to(result, (len(item),)).copy(), index=item.index)
    array = np.asarray(result, dtype=float)
    if array.ndim == 0:
        return float(array)
    return array
