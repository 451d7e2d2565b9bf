"""Exact Parquet round trips of the normalised table: one file and the partitioned store folder."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.errors import InputError
from diag.read.ingest import read_log
from diag.read.store import read_parquet, read_store, store_links, write_parquet, write_store


def sample_table() -> pd.DataFrame:
    """Two links, two channels, three UTC days, all statuses and stats, NaN values; schema dtypes and order."""
    rng = np.random.default_rng(1)
    parts = []
    for link in ("HOP A/1", "hop-b"):           # a link id with a space and a slash must survive the folder name
        for ch in ("H", "V"):
            t = pd.date_range("2026-12-01T22:00:00Z", periods=180, freq="20min")
            v = np.round(rng.normal(-45, 3, len(t)), 2)
            status = np.where(v < -50, S.SIGNAL_LOST, S.OK).astype(object)
            status[::17] = S.MISSING
            v[status != S.OK] = np.nan
            parts.append(pd.DataFrame({S.TIME: t, S.LINK: link, S.CHANNEL: ch, S.QUANTITY: S.RSL, S.STAT: S.SAMPLE,
                                       S.INTERVAL: 0.0, S.VALUE: v, S.STATUS: status}))
        parts.append(pd.DataFrame({S.TIME: pd.date_range("2026-12-01T23:45Z", periods=4, freq="15min"), S.LINK: link,
                                   S.CHANNEL: "H", S.QUANTITY: S.RSL, S.STAT: S.MIN, S.INTERVAL: 900.0,
                                   S.VALUE: [-60.0, -61.5, np.nan, -59.0],
                                   S.STATUS: [S.OK, S.OK, S.SIGNAL_LOST, S.OK]}))
    table = pd.concat(parts, ignore_index=True)
    table = S.conform(table)
    return table.sort_values([S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.TIME], kind="stable").reset_index(drop=True)


def test_store_round_trip_is_exact(tmp_path):
    table = sample_table()
    out = write_store(table, tmp_path / "store")
    days = sorted(p.name for p in out.glob("link=*/day=*"))
    assert {"day=2026-12-01", "day=2026-12-02", "day=2026-12-03"} <= set(days)
    back = read_store(out)
    pd.testing.assert_frame_equal(back, table, check_exact=True)
    assert S.conforms(back)   # categorical key columns (diag.schema)
    # read_log reads the store folder too
    via = read_log(out)
    pd.testing.assert_frame_equal(via.table, table, check_exact=True)
    assert via.report.rows_read == via.report.rows_kept == len(table)


def test_store_keeps_any_row_order(tmp_path):
    table = sample_table().sample(frac=1.0, random_state=3).reset_index(drop=True)
    pd.testing.assert_frame_equal(read_store(write_store(table, tmp_path / "s")), table, check_exact=True)


def test_single_parquet_round_trip(tmp_path):
    table = sample_table()
    p = write_parquet(table, tmp_path / "t.parquet")
    pd.testing.assert_frame_equal(read_parquet(p), table, check_exact=True)
    pd.testing.assert_frame_equal(read_log(p).table, table, check_exact=True)
    pd.testing.assert_frame_equal(read_log(p.read_bytes(), name="t.parquet").table, table, check_exact=True)


def test_empty_table_round_trip(tmp_path):
    empty = S.empty_table()
    pd.testing.assert_frame_equal(read_store(write_store(empty, tmp_path / "s")), empty)
    pd.testing.assert_frame_equal(read_parquet(write_parquet(empty, tmp_path / "e.parquet")), empty)


def test_csv_to_store_to_table(tmp_path):
    src = tmp_path / "hop.csv"
    src.write_text("Time;RSL H (dBm);RSL V (dBm)\n01.12.2026 23:59:59;-45,5;LOS\n02.12.2026 00:00:00;;-47\n")
    first = read_log(src, tz="Europe/Vienna")
    again = read_log(write_store(first.table, tmp_path / "st"))
    pd.testing.assert_frame_equal(again.table, first.table, check_exact=True)


def test_store_refuses_foreign_folder_and_damage(tmp_path):
    d = tmp_path / "notes"
    d.mkdir()
    (d / "keep.txt").write_text("mine")
    with pytest.raises(InputError, match="not a diag store"):
        write_store(sample_table(), d)
    assert (d / "keep.txt").exists()
    with pytest.raises(InputError, match="not a diag store"):
        read_store(d)
    out = write_store(sample_table(), tmp_path / "s")
    next(out.glob("link=*/day=*/part.parquet")).unlink()
    with pytest.raises(InputError, match="marker says"):
        read_store(out)
    bad = tmp_path / "bad.parquet"
    bad.write_bytes(b"PAR1 not really")
    with pytest.raises(InputError, match="Parquet"):
        read_log(bad)


def test_read_one_link_of_a_store(tmp_path):
    table = sample_table()
    out = write_store(table, tmp_path / "s")
    assert store_links(out) == ["HOP A/1", "hop-b"]
    for link in store_links(out):
        want = S.conform(table[table[S.LINK] == link].reset_index(drop=True))   # only its own link category
        pd.testing.assert_frame_equal(read_store(out, link_id=link), want, check_exact=True)
    pd.testing.assert_frame_equal(read_store(out, link_id="absent"), S.empty_table())
