"""The numpy views of one channel's frame that the fading statistics read, made once per channel (string columns
converted once): validity, attenuation (the floor as deeper than any depth), causes, UTC hours."""
from __future__ import annotations

import functools

import numpy as np
import pandas as pd

from diag import schema as S


def _equals(column: pd.Series, value: str) -> np.ndarray:
    """``(column == value).to_numpy(dtype=bool, na_value=False)``; for a categorical column one integer compare of
    its codes (a missing value has code -1, which no category has)."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        hit = np.flatnonzero(np.asarray(column.cat.categories == value))
        codes = column.cat.codes.to_numpy()
        return codes == hit[0] if hit.size else np.zeros(codes.size, dtype=bool)
    return (column == value).to_numpy(dtype=bool, na_value=False)


_UNITS_PER_SECOND = {"s": 1, "ms": 10 ** 3, "us": 10 ** 6, "ns": 10 ** 9}


class StatArrays:
    """The numpy views of one channel's frame the statistics need (string columns converted once)."""

    def __init__(self, series):
        frame = series.frame
        n = len(frame)
        if "status" in frame:
            self.ok = _equals(frame["status"], S.OK)
            self.lost = _equals(frame["status"], S.SIGNAL_LOST)
        else:
            self.ok, self.lost = np.ones(n, dtype=bool), np.zeros(n, dtype=bool)
        att = (frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan) if "attenuation_db" in frame
               else np.full(n, np.nan))
        self.observed = (self.ok & np.isfinite(att)) | self.lost
        self.att = np.where(self.lost, np.inf, att) if self.lost.any() else att   # at the floor: deeper than any depth
        if "cause" in frame and isinstance(frame["cause"].dtype, pd.CategoricalDtype):
            codes = frame["cause"].cat.codes.to_numpy()   # -1 = missing: given the code after the last category
            names = [str(c) for c in frame["cause"].cat.categories]
            if (codes < 0).any():
                codes = np.where(codes < 0, len(names), codes.astype(np.int64))
            names = names + [""]
        elif "cause" in frame:
            codes, uniques = pd.factorize(frame["cause"], use_na_sentinel=False)
            names = [str(x) if isinstance(x, str) else "" for x in uniques]
        else:
            codes, names = np.zeros(n, dtype=np.int64), [""]
        self.cause_codes = np.asarray(codes)   # small integers (int8 when from a categorical)
        self.cause_names = names
        self.n = n
        self.is_mp = self.is_cause(S.MULTIPATH)
        self.is_rain = self.is_cause(S.RAIN)
        self.is_none = self.is_cause("")
        self.level = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
        self._epoch = None   # UTC hours from the epoch time in the index unit (cheaper than .hour)
        if isinstance(frame.index, pd.DatetimeIndex):
            index = frame.index.tz_convert("UTC") if frame.index.tz is not None else frame.index
            self._epoch = index.asi8
            self._per_hour = 3600 * _UNITS_PER_SECOND[index.unit]
        self.relative_cache: dict = {}

    @functools.cached_property
    def hours(self) -> np.ndarray:
        """UTC hour (0-23) of every sample (floor divisions nest: the same hours as via whole seconds)."""
        if self._epoch is None:
            return np.zeros(self.n, dtype=np.int64)
        return (self._epoch // self._per_hour) % 24

    def hours_of(self, mask: np.ndarray) -> np.ndarray:
        """``hours[mask]``, computed for those samples only."""
        if self._epoch is None:
            return np.zeros(int(np.count_nonzero(mask)), dtype=np.int64)
        return (self._epoch[mask] // self._per_hour) % 24

    def count_by_hour(self, mask: np.ndarray) -> np.ndarray:
        """``np.bincount(hours[mask], minlength=24)``: on a time-ordered index, counted per run of samples of one
        clock hour (exact integers) instead of per sample."""
        t, per = self._epoch, self._per_hour
        # time-ordered, and no NaT (the smallest integer, so it could only come first)
        if t is None or not self.n or t[0] == np.iinfo(np.int64).min or not (t[1:] >= t[:-1]).all():
            return np.bincount(self.hours_of(mask), minlength=24)
        edges = np.arange(t[0] // per + 1, t[-1] // per + 1) * per
        starts = np.concatenate([[0], np.searchsorted(t, edges)])
        starts = starts[np.concatenate([starts[1:] > starts[:-1], [True]])]   # hours without a sample: no run
        runs = np.add.reduceat(mask, starts, dtype=np.int64)
        return np.bincount((t[starts] // per) % 24, weights=runs, minlength=24).astype(np.int64)

    def is_cause(self, cause: str) -> np.ndarray:
        hits = [i for i, name in enumerate(self.cause_names) if name == cause]
        if not hits:
            return np.zeros(self.n, dtype=bool)
        out = self.cause_codes == hits[0]
        for code in hits[1:]:
            out |= self.cause_codes == code
        return out
