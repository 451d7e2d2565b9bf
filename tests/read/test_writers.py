"""Every log shape the writers produce reads back through diag.read.ingest.read_log with exact row and value
accounting, and the values come back as simulated (within nothing: the text is the shortest exact form)."""

from __future__ import annotations

import gzip
import warnings

import numpy as np
import pandas as pd
import pytest

from diag import schema
from diag.errors import DataWarning, InputError
from diag.links import read_links_table
from diag.read.ingest import read_log
from diag.sim.log_shapes import SHAPES, write_links_table, write_log, write_long, write_stats, write_truth
from diag.sim.simulate import Effect, LinkSpec, aggregate_statistics, simulate_link

SORT = [schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.TIME]


def _spec(link_id="WR-ONE", polarization="dual", **extra) -> LinkSpec:
    values = dict(
        nominal_dbm=-40.0,
        duration_s=3 * 3600,
        atpc=True,
        duplicate_fraction=0.002,
        swap_fraction=0.002,
        blank_fraction=0.002,
        drop_fraction=0.002,
        start="2026-06-03T00:00:00Z",
        effects=(
            Effect("rain", 3600.0, 3600.0, {"peak_mmh": 90.0}),
            Effect("signal_loss", 8000.0, 120.0),
            Effect("gap", 9000.0, 300.0),
        ),
    )
    values.update(extra)
    return LinkSpec(link_id, 23.0, 9.0, polarization, -70.0, **values)


@pytest.fixture(scope="module")
def sim():
    return simulate_link(_spec(), seed=9)


def _same(expected: pd.DataFrame, got: pd.DataFrame) -> None:
    a = expected.sort_values(SORT, ignore_index=True)
    b = got.sort_values(SORT, ignore_index=True)
    assert len(a) == len(b)
    for column in schema.COLUMNS:
        if column == schema.VALUE:
            np.testing.assert_allclose(a[column].to_numpy(), b[column].to_numpy(), rtol=0, atol=1e-9)
        else:
            assert (a[column].astype(str).to_numpy() == b[column].astype(str).to_numpy()).all(), column


def _values_accounting(report, table: pd.DataFrame) -> None:
    counts = table[schema.STATUS].value_counts()
    values = report.values
    assert values["read"] == len(table)
    assert values["ok"] == counts.get(schema.OK, 0)
    assert values["signal_lost"] == counts.get(schema.SIGNAL_LOST, 0)
    assert values["missing"] == counts.get(schema.MISSING, 0)


@pytest.mark.parametrize(
    "shape, compress",
    [
        ("wide_iso", False),
        ("semicolon_local", False),
        ("epoch", False),
        ("long", False),
        ("wide_iso", True),
        ("long", True),
    ],
)
def test_sample_shapes_read_back_exactly(sim, tmp_path, shape, compress):
    path = tmp_path / f"WR-ONE_{shape}.csv{'.gz' if compress else ''}"
    info = write_log(
        sim.table,
        path,
        shape,
        tz="Europe/Vienna",
        defects=sim.file_defects,
        floor_dbm=sim.spec.floor_value_dbm,
    )
    assert info.duplicate_rows > 0 and info.swapped_pairs > 0  # the file really has the defects
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)  # "rows out of time order (sorted)"
        result = read_log(path, tz="Europe/Vienna" if shape == "semicolon_local" else None, link_id="WR-ONE")
    report = result.report
    # rows: every line of the file is kept or counted under a reason; the repeats are exactly the duplicates
    assert report.rows_read == info.rows
    assert report.rows_read == report.rows_kept + sum(report.rejected.values())
    assert report.rejected == {"duplicate": info.duplicate_rows}
    per_time = 1 if shape != "long" else len(sim.table) // sim.table[schema.TIME].nunique()
    assert report.out_of_order_rows == info.swapped_pairs * per_time
    # values: the table that comes back is the simulated one, status by status
    _values_accounting(report, sim.table)
    _same(sim.table, result.table)
    if compress:
        assert gzip.decompress(path.read_bytes()).startswith(b"time_utc")


def test_statistics_shape_reads_back_with_floor_and_interval(sim, tmp_path):
    table = aggregate_statistics(sim.table, interval_s=900, floor_dbm=sim.spec.floor_value_dbm)
    assert (table[schema.STATUS] == schema.SIGNAL_LOST).any()  # the storm and the drop-out reach the floor
    info = write_log(table, tmp_path / "net_15min.csv", "stats", floor_dbm=sim.spec.floor_value_dbm)
    result = read_log(info.path)
    assert result.report.rows_read == info.rows == result.report.rows_kept
    assert result.report.kind == "stats"
    _values_accounting(result.report, table)
    _same(table, result.table)


def test_long_and_stats_hold_several_hops(tmp_path):
    a = simulate_link(_spec("WR-AAA", "H", duration_s=3600, effects=()), seed=1)
    b = simulate_link(_spec("WR-BBB", "V", duration_s=3600, atpc=False, effects=()), seed=2)
    info = write_long(
        [a.table, b.table],
        tmp_path / "net_long.csv",
        defects={"WR-AAA": a.file_defects, "WR-BBB": b.file_defects},
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        result = read_log(info.path)
    assert sorted(result.report.links) == ["WR-AAA", "WR-BBB"]
    assert result.report.rejected == {"duplicate": info.duplicate_rows}
    _same(pd.concat([a.table, b.table]), result.table)
    # statistics of hops with the same quantities share one file (other hops would leave blank = missing
    # cells)
    b_stats = b.table.assign(channel="H")
    stats = [
        aggregate_statistics(t, interval_s=900) for t in (a.table[a.table.quantity == schema.RSL], b_stats)
    ]
    info = write_stats(stats, tmp_path / "net_15min.csv")
    result = read_log(info.path)
    _same(pd.concat(stats), result.table)


def test_local_time_across_the_autumn_clock_change_is_counted_not_guessed(tmp_path):
    # 2026-10-25 01:00 UTC: Central European clocks go back from 03:00 to 02:00, so local stamps 02:00-02:59
    # occur
    # twice (EU summer-time rule, Directive 2000/84/EC: last Sunday of October, 01:00 UTC).
    spec = LinkSpec(
        "WR-DST",
        18.0,
        12.0,
        "H",
        -72.0,
        nominal_dbm=-42.0,
        start="2026-10-24T22:00:00Z",
        duration_s=6 * 3600,
        interval_s=60.0,
    )
    sim = simulate_link(spec, seed=0)
    info = write_log(sim.table, tmp_path / "dst.csv", "semicolon_local", tz="Europe/Berlin")
    with pytest.warns(DataWarning, match="ambiguous"):
        result = read_log(info.path, tz="Europe/Berlin", link_id="WR-DST")
    report = result.report
    ambiguous = 2 * 60  # two local hours 02:00-02:59 of 60 one-minute rows each
    assert report.rows_read == info.rows == 360
    assert report.rejected == {"dst_ambiguous": ambiguous}
    assert report.rows_kept == 360 - ambiguous
    kept = sim.table[
        (sim.table.time_utc < "2026-10-25T00:00:00Z") | (sim.table.time_utc >= "2026-10-25T02:00:00Z")
    ]
    _same(kept, result.table)


def test_links_table_and_truth_files_round_trip(sim, tmp_path):
    path = write_links_table([sim.link], tmp_path / "links.csv")
    assert read_links_table(path) == [sim.link]
    paths = write_truth({"WR-ONE": sim}, tmp_path / "truth", samples=True)
    events = pd.read_csv(paths[0])
    assert set(events.cause) == {"rain", "signal_loss", "no data"}
    labels = pd.read_csv(paths[1])
    samples = pd.read_parquet(paths[2])
    # the run-length labels hold exactly the labelled samples
    assert labels.samples.sum() == (samples.cause != "").sum()


def test_writer_rejects_wrong_input(sim, tmp_path):
    with pytest.raises(InputError, match="unknown shape"):
        write_log(sim.table, tmp_path / "x.csv", "xml")
    with pytest.raises(InputError, match="time zone"):
        write_log(sim.table, tmp_path / "x.csv", "semicolon_local")
    with pytest.raises(InputError, match="stats"):
        write_log(sim.table, tmp_path / "x.csv", "stats")
    assert set(SHAPES) == {"wide_iso", "semicolon_local", "epoch", "long", "stats"}


def test_statistics_counters_follow_the_g826_rule_and_read_back(tmp_path):
    # a 100-s drop to the floor: ITU-T G.826 Annex A counts all of it unavailable (the 10 SES that start
    # unavailable time count as unavailable; the 10 good seconds that end it count as available)
    spec = LinkSpec(
        "WR-CNT",
        18.0,
        9.0,
        "V",
        -72.0,
        nominal_dbm=-40.0,
        duration_s=2 * 3600,
        effects=(Effect("signal_loss", 1000.0, 100.0), Effect("signal_loss", 4000.0, 5.0)),
    )
    sim = simulate_link(spec, seed=0)
    table = aggregate_statistics(sim.table, interval_s=900, threshold_dbm=-72.0)
    uas = table[table.quantity == schema.UAS].set_index("time_utc")["value"]
    ses = table[table.quantity == schema.SES].set_index("time_utc")["value"]
    assert uas.sum() == 100 and uas.loc["2026-06-01T00:15:00Z"] == 100
    assert ses.sum() == 5 and ses.loc["2026-06-01T01:00:00Z"] == 5  # too short for unavailability
    info = write_stats(table, tmp_path / "WR-CNT_15min.csv")
    result = read_log(info.path)
    _values_accounting(result.report, table)
    _same(table, result.table)
