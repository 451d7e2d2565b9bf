"""The normalised table's categorical key columns (diag.schema.conform / concat) and what they buy in memory.

Issue 2/8: five "str" key columns cost ~78 bytes a row each; as Categoricals the whole row is ~29 bytes
(8 time + 8 interval + 8 value + 5 one-byte codes).  Sorting on the categoricals must give the order of the
strings (categories are kept sorted), and concatenating tables with different links must stay categorical.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.read.ingest import read_log, read_logs
from diag.read.store import read_parquet, write_parquet


def _rows(link: str, channels: list[str], n: int = 5) -> pd.DataFrame:
    t = pd.date_range("2026-12-01T00:00Z", periods=n, freq="1s")
    return pd.DataFrame({S.TIME: np.tile(t, len(channels)), S.LINK: link,
                         S.CHANNEL: np.repeat(channels, n), S.QUANTITY: S.RSL, S.STAT: S.SAMPLE, S.INTERVAL: 0.0,
                         S.VALUE: np.arange(n * len(channels), dtype=float), S.STATUS: S.OK})


def test_conform_makes_sorted_categoricals_and_is_idempotent():
    table = S.conform(_rows("zeta", ["V", "H"]))
    for c in S.KEY_COLUMNS:
        cats = list(table[c].cat.categories)
        assert cats == sorted(cats)
    assert set(S.QUANTITIES) <= set(table[S.QUANTITY].cat.categories)   # whole vocabulary, always
    assert list(table[S.CHANNEL].cat.categories) == ["H", "V"]          # only the values present
    assert S.conform(table) is table and S.conforms(table)
    # values unchanged
    assert table[S.CHANNEL].astype(str).tolist() == ["V"] * 5 + ["H"] * 5


def test_sorting_on_categories_equals_sorting_the_strings():
    raw = pd.concat([_rows("b-hop", ["V", "H"]), _rows("a-hop", ["ch10", "ch2"])], ignore_index=True)
    keys = [S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.TIME]
    want = raw.sort_values(keys, kind="stable")
    got = S.conform(raw).sort_values(keys, kind="stable")
    assert got.index.tolist() == want.index.tolist()


def test_concat_of_different_links_stays_categorical():
    a, b = S.conform(_rows("a", ["H"])), S.conform(_rows("b", ["V"]))
    both = S.concat([a, b])
    assert S.conforms(both)
    assert both[S.LINK].astype(str).tolist() == ["a"] * 5 + ["b"] * 5
    assert both[S.CHANNEL].astype(str).tolist() == ["H"] * 5 + ["V"] * 5
    assert both.index.tolist() == list(range(10))


def test_conform_refuses_missing_keys():
    t = _rows("a", ["H"])
    t.loc[2, S.CHANNEL] = None
    with pytest.raises(ValueError):
        S.conform(t)


def test_reader_table_is_categorical_and_small(tmp_path):
    n = 20_000
    t = pd.date_range("2026-12-01T00:00Z", periods=n, freq="1s").strftime("%Y-%m-%dT%H:%M:%SZ")
    rng = np.random.default_rng(3)
    text = "Time,RSL H (dBm),RSL V (dBm)\n" + "\n".join(
        f"{s},{h:.1f},{v:.1f}" for s, h, v in zip(t, rng.normal(-45, 1, n), rng.normal(-46, 1, n)))
    path = tmp_path / "hop-x.csv"
    path.write_text(text + "\n")
    table = read_log(path).table
    assert S.conforms(table) and len(table) == 2 * n
    per_value = table.memory_usage(deep=True).sum() / len(table)
    # 8 (time) + 8 (interval) + 8 (value) + 5 x 1 (codes) = 29 bytes a value; "str" columns gave ~94
    assert per_value < 32, per_value
    # Parquet keeps the categoricals (dictionary columns) and the exact table
    back = read_parquet(write_parquet(table, tmp_path / "x.parquet"))
    pd.testing.assert_frame_equal(back, table, check_exact=True)


def test_read_logs_of_two_hops_stays_categorical(tmp_path):
    (tmp_path / "hop-a.csv").write_text("Time,RSL (dBm)\n2026-12-01T10:00:00Z,-40\n2026-12-01T10:00:01Z,-41\n")
    (tmp_path / "hop-b.csv").write_text("Time,RSL (dBm)\n2026-12-01T10:00:00Z,-50\n")
    table = read_logs([tmp_path / "hop-b.csv", tmp_path / "hop-a.csv"]).table
    assert S.conforms(table)
    assert table[S.LINK].astype(str).tolist() == ["hop-a", "hop-a", "hop-b"]   # sorted by link


@pytest.mark.parametrize("n_values", [1, 3, 16, 17, 40])
def test_present_lists_the_values_in_use_as_sorted_unique_strings(n_values):
    """schema.present against Python's own sorted(set(...)) of the strings, unused categories and missing
    values left out, for few and for many categories."""
    rng = np.random.default_rng(n_values)
    names = [f"hop-{i:02d}" for i in range(n_values)]
    values = list(rng.choice(names, 500)) + [None]
    column = pd.Series(pd.Categorical(values, categories=sorted(names + ["unused"])))
    assert S.present(column) == sorted({v for v in values if v is not None})
    assert S.present(pd.Series(values[:-1], dtype=object)) == sorted(set(values[:-1]))
