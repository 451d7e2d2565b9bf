"""One hop's table in the schema's row order: ``sorted_table`` skips the sort of a table already in that order, and
must give exactly what pandas' own stable sort gives (the reference: ``DataFrame.sort_values(kind="mergesort")``)
for tables in order, out of order, with ties, with missing keys and with categories in any order."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from diag import schema
from diag.read.hops import SORT_COLUMNS, _in_sort_order, sorted_table


def _table(rng: np.random.Generator, n: int, *, ordered_rows: bool, missing: bool, reversed_cats: bool,
           time_unit: str) -> pd.DataFrame:
    def key(values, size):
        cats = sorted(values, reverse=reversed_cats)
        codes = rng.integers(-1 if missing else 0, len(cats), size)
        return pd.Categorical.from_codes(codes, categories=cats)

    stamps = pd.Timestamp("2031-05-05", tz="UTC") + pd.to_timedelta(rng.integers(0, 6, n), unit="s")
    time = pd.Series(stamps).dt.as_unit(time_unit)
    if missing:
        time[rng.random(n) < 0.1] = pd.NaT
    table = pd.DataFrame({
        schema.TIME: time,
        schema.LINK: key(["hop-a", "hop-b"], n),
        schema.CHANNEL: key(["H", "V"], n),
        schema.QUANTITY: key(["rsl", "tsl"], n),
        schema.STAT: key(["avg", "inst"], n),
        schema.VALUE: np.arange(n, dtype=float),   # tells rows apart: a stable sort keeps ties in this order
    })
    if ordered_rows:
        table = table.sort_values(SORT_COLUMNS, kind="mergesort").reset_index(drop=True)
        if rng.random() < 0.5 and n > 1:   # and perhaps two rows swapped
            i, j = rng.choice(n, 2, replace=False)
            order = np.arange(n)
            order[[i, j]] = order[[j, i]]
            table = table.iloc[order].reset_index(drop=True)
    return table


@settings(max_examples=150, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(0, 40), ordered_rows=st.booleans(), missing=st.booleans(),
       reversed_cats=st.booleans(), time_unit=st.sampled_from(["ns", "us", "s"]))
def test_same_rows_and_order_as_pandas_stable_sort(seed, n, ordered_rows, missing, reversed_cats, time_unit):
    table = _table(np.random.default_rng(seed), n, ordered_rows=ordered_rows, missing=missing,
                   reversed_cats=reversed_cats, time_unit=time_unit)
    expected = table.sort_values(SORT_COLUMNS, kind="mergesort").reset_index(drop=True)
    got = sorted_table(table)
    pd.testing.assert_frame_equal(got, expected)
    assert isinstance(got.index, pd.RangeIndex)


def test_order_check_says_no_for_unsorted_missing_and_other_key_types():
    rng = np.random.default_rng(7)
    table = _table(rng, 50, ordered_rows=True, missing=False, reversed_cats=False, time_unit="ns")
    table = table.iloc[np.argsort(table[schema.TIME].to_numpy(), kind="stable")].reset_index(drop=True)
    assert _in_sort_order(table.sort_values(SORT_COLUMNS, kind="mergesort"))
    shuffled = table.sample(frac=1.0, random_state=1)
    assert not _in_sort_order(shuffled) or shuffled.equals(table)
    with_nat = table.sort_values(SORT_COLUMNS, kind="mergesort").reset_index(drop=True)
    with_nat.loc[len(with_nat) - 1, schema.TIME] = pd.NaT   # missing time in the last row: pandas puts it last too,
    assert not _in_sort_order(with_nat)                     # but the check leaves such tables to the sort
    as_text = with_nat.dropna().astype({schema.CHANNEL: str})
    assert not _in_sort_order(as_text)
    assert not _in_sort_order(table.drop(columns=[schema.STAT]))


@pytest.mark.parametrize("n", [0, 1])
def test_tiny_tables(n):
    table = _table(np.random.default_rng(n), n, ordered_rows=True, missing=False, reversed_cats=False,
                   time_unit="ns")
    pd.testing.assert_frame_equal(sorted_table(table),
                                  table.sort_values(SORT_COLUMNS, kind="mergesort").reset_index(drop=True))
