"""Cross-check with the simulator's writers: every log shape it writes reads back to exactly the simulated table.

The simulator (diag.sim.simulate) draws an invented hop with rain, signal loss, gaps and file defects (repeated rows,
swapped neighbours, blank cells); diag.sim.log_shapes writes it in each export shape.  Reading the file back must give
the
same values, statuses and UTC times, and the row accounting must name every repeated row.
"""
from __future__ import annotations

import numpy as np
import pytest

from diag import schema as S
from diag.read.ingest import read_log
from diag.sim import log_shapes as writers
from diag.sim import simulate
from tests.read.test_ingest_shapes import check_accounting

pytestmark = pytest.mark.filterwarnings("ignore::diag.errors.DataWarning")
KEYS = [S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.TIME]


@pytest.fixture(scope="module")
def hop():
    # seed 2: one single-polarisation hop with a receiver-floor episode and a gap (12 h of 1-s samples)
    scenario = simulate.random_scenario(2, n_links=1, duration_h=12.0, causes=["signal_loss", "gap"], defects=True)
    results, _ = simulate.simulate_scenario(scenario, seed=2)
    result = next(iter(results.values()))
    assert (result.table[S.STATUS] == S.SIGNAL_LOST).any() and (result.table[S.STATUS] == S.MISSING).any()
    return result


@pytest.mark.parametrize("shape", writers.SHAPES)
def test_writer_shape_reads_back_exactly(hop, shape, tmp_path):
    table = hop.table if shape != "stats" else simulate.aggregate_statistics(
        hop.table, interval_s=900, floor_dbm=hop.spec.floor_value_dbm)
    path = tmp_path / f"log_{shape}.csv"
    tz = "Europe/Vienna" if shape == "semicolon_local" else None
    info = writers.write_log(table, path, shape, tz=tz, defects=hop.file_defects,
                             floor_dbm=hop.spec.floor_value_dbm)
    result = read_log(path, tz=tz, link_id=table[S.LINK].iloc[0])
    check_accounting(result)
    rep = result.report
    assert rep.rows_read == info.rows
    assert rep.rejected.get("duplicate", 0) == info.duplicate_rows and rep.conflicting_duplicates == 0
    got = result.table
    want = table.sort_values(KEYS, kind="stable").reset_index(drop=True)
    assert len(got) == len(want)
    for col in (S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.STATUS):
        assert got[col].tolist() == want[col].tolist(), col
    assert (got[S.TIME] == want[S.TIME]).all()
    np.testing.assert_allclose(got[S.INTERVAL], want[S.INTERVAL])
    np.testing.assert_allclose(got[S.VALUE].to_numpy(), want[S.VALUE].to_numpy(), atol=1e-9, equal_nan=True)
    if (want[S.STATUS] == S.SIGNAL_LOST).any():
        assert rep.floors[S.RSL]["dbm"] == pytest.approx(hop.spec.floor_value_dbm)
    if shape != "stats":
        assert rep.gap_count >= 1 and rep.interval_s == 1.0   # the simulated gap is reported as no data
