"""diag.pipeline: the stage order and the LinkResult contract (results.py docstring, schema.EVENT_COLUMNS).

Checks against the simulator's truth (per-sample cause) and the contract; no timing here (bench/ does that).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.errors import InputError
from diag.links import make_link
from diag.pipeline import AnalysisConfig, analyze_files, analyze_link, analyze_tables
from diag.results import LinkResult
from diag.sim.log_shapes import write_log
from diag.sim.simulate import Effect, LinkSpec

H = 3600.0


SIMULATED_HOP = (LinkSpec(link_id="PL-A", frequency_ghz=23.0, length_km=5.0, polarization="dual",
                          threshold_dbm=-70.0, nominal_dbm=-38.0, duration_s=10 * H, objective_pct=99.99,
                          effects=(Effect("rain", 3 * H, H, {"peak_mmh": 60.0}),
                                   Effect("signal_loss", 7 * H, 600.0))), 4)   # (spec, seed): tests/conftest.py


@pytest.fixture(scope="module")
def sim(simulated_hop):
    return simulated_hop[0]


@pytest.fixture(scope="module")
def result(simulated_hop):
    return simulated_hop[1]


def test_result_fields_filled(result, sim):
    assert isinstance(result, LinkResult)
    assert set(result.series) == {"H", "V"}
    for item in result.series.values():
        cols = set(item.frame.columns)
        assert {"rsl_dbm", "status", "reference_dbm", "attenuation_db", "event_id", "cause"} <= cols
        assert isinstance(item.frame.index, pd.DatetimeIndex) and str(item.frame.index.tz) == "UTC"
    assert list(result.events.columns[:len(S.EVENT_COLUMNS)]) == S.EVENT_COLUMNS
    assert set(result.events["cause"]) <= set(S.CAUSES)
    assert result.events["confidence"].between(0, 1).all()
    assert (result.events["peak_fade_db"] >= 0).all()
    # the downstream stages ran and filled their parts
    assert result.statistics and result.level_changes
    assert result.outage is not None
    assert isinstance(result.findings, list)
    # optional fields missing from the link are named as skipped checks
    assert any("r001_mmh" in text for text in result.skipped)
    assert any("gauge" in text for text in result.skipped)


def test_event_id_and_cause_columns_agree(result):
    events = result.events
    for item in result.series.values():
        ids = item.frame["event_id"].to_numpy()
        cause = item.frame["cause"].to_numpy(dtype=object)
        inside = ids >= 0
        assert (cause[~inside] == "").all()
        assert (cause[inside] == events["cause"].to_numpy(dtype=object)[ids[inside]]).all()


def test_per_sample_causes_match_truth(result, sim):
    # the truth: the largest contribution of each faded sample (simulator); 1-s bar of the issue is F1 >= 0.90
    for name, item in result.series.items():
        tr = sim.truth_samples[(sim.truth_samples["channel"] == name) & (sim.truth_samples["cause"] != "")]
        got = item.frame["cause"].reindex(pd.DatetimeIndex(tr["time_utc"])).to_numpy(dtype=object)
        assert np.mean(got == tr["cause"].to_numpy(dtype=object)) >= 0.95


def test_outage_below_threshold_by_cause(result):
    by_cause = result.outage.by_cause.set_index("cause")
    # the 10-min equipment drop-out is below threshold and counted under signal_loss (G.826-style accounting)
    assert by_cause.at[S.SIGNAL_LOSS, "below_threshold_s"] == pytest.approx(600, abs=2)


def test_analyze_tables_matches_links_by_id(sim):
    other = sim.table.assign(**{S.LINK: "PL-B"})
    both = pd.concat([sim.table, other], ignore_index=True)
    links = [sim.link, make_link({**sim.link.to_dict(), "link_id": "PL-B"})]
    calls = []
    results = analyze_tables(both, links, progress=lambda d, t, m: calls.append((d, t)))
    assert [r.link.link_id for r in results] == ["PL-A", "PL-B"]
    assert len(results[0].events) == len(results[1].events)
    assert calls[-1] == (2, 2)


def test_analyze_files_from_bytes_and_paths(sim, tmp_path):
    path = tmp_path / "PL-A.csv"
    write_log(sim.table, path, "wide_iso")
    calls = []
    from_path = analyze_files([path], links=[sim.link], progress=lambda d, t, m: calls.append(m))
    from_bytes = analyze_files([("PL-A.csv", path.read_bytes())], links=[sim.link])
    assert len(from_path) == len(from_bytes) == 1
    a, b = from_path[0].events, from_bytes[0].events
    assert list(a["cause"]) == list(b["cause"])
    assert any("reading" in m for m in calls) and any("analysing" in m for m in calls)
    assert from_path[0].ingest["files"]
    # a folder is expanded to its files
    folder = analyze_files([tmp_path], links=[sim.link])
    assert list(folder[0].events["cause"]) == list(a["cause"])


def test_bad_inputs_raise_input_error(sim, tmp_path):
    with pytest.raises(InputError, match="no such file"):
        analyze_files([tmp_path / "nope.csv"], links=[sim.link])
    no_rsl = sim.table[sim.table[S.QUANTITY] != S.RSL]
    with pytest.raises(InputError, match="receive level"):
        analyze_link(no_rsl, sim.link)
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(InputError, match="no files"):
        analyze_files([empty], links=[sim.link])


def test_config_changes_segmentation(sim):
    strict = analyze_link(sim.table, sim.link, config=AnalysisConfig(fade_start_db=10.0, fade_end_db=8.0))
    loose = analyze_link(sim.table, sim.link)
    fades_strict = strict.events[strict.events["event_kind"] == "fade"]
    fades_loose = loose.events[loose.events["event_kind"] == "fade"]
    assert fades_strict["duration_s"].sum() < fades_loose["duration_s"].sum()


def test_overlapping_files_of_one_hop_keep_each_value_once(sim, tmp_path):
    # the same export saved twice: every value is in both files; kept once and counted (as read_logs does)
    first, second = tmp_path / "PL-A.csv", tmp_path / "PL-A_again.csv"
    write_log(sim.table, first, "wide_iso")
    second.write_bytes(first.read_bytes())
    single = analyze_files([first], links=[sim.link])[0]
    double = analyze_files([first, second], links=[sim.link])[0]
    assert double.ingest["overlap_values_dropped"] == len(sim.table)
    assert list(double.events["cause"]) == list(single.events["cause"])
    assert list(double.events["duration_s"]) == list(single.events["duration_s"])


def _same_result(a: LinkResult, b: LinkResult) -> None:
    pd.testing.assert_frame_equal(a.events, b.events)
    assert a.statistics == b.statistics and a.cross_polar == b.cross_polar and a.level_changes == b.level_changes
    assert a.findings == b.findings and a.skipped == b.skipped
    assert a.outage.summary == b.outage.summary and a.outage.notes == b.outage.notes
    pd.testing.assert_frame_equal(a.outage.by_cause, b.outage.by_cause)
    pd.testing.assert_frame_equal(a.outage.per_channel, b.outage.per_channel)


def test_threads_give_the_same_result(sim):
    """The independent stages run side by side in threads; the result must not depend on it."""
    _same_result(analyze_link(sim.table, sim.link, threads=1), analyze_link(sim.table, sim.link, threads=2))


def test_failed_stages_named_in_stage_order_whatever_the_threads(sim, monkeypatch):
    import time

    import diag.analysis.crosspol
    import diag.analysis.fading_stats

    def slow_failure(result):
        time.sleep(0.2)   # finishes after the cross-polar failure in the threaded run
        raise RuntimeError("statistics broke")

    def quick_failure(result):
        raise RuntimeError("cross-polar broke")

    monkeypatch.setattr(diag.analysis.fading_stats, "link_statistics", slow_failure)
    monkeypatch.setattr(diag.analysis.crosspol, "cross_polar", quick_failure)
    serial = analyze_link(sim.table, sim.link, threads=1)
    threaded = analyze_link(sim.table, sim.link, threads=2)
    failed = [text for text in serial.skipped if "failed" in text]
    assert failed == ["stats: failed (RuntimeError: statistics broke)",
                      "crosspol: failed (RuntimeError: cross-polar broke)"]
    assert threaded.skipped == serial.skipped
    assert serial.statistics == {} and serial.cross_polar == {}
    assert serial.outage is not None and serial.level_changes   # the other stages still ran


def test_one_thread_inside_a_dask_worker(monkeypatch):
    import sys
    import types

    from diag.pipeline import default_threads

    fake = types.ModuleType("distributed")
    fake.get_worker = lambda: object()          # as inside a worker: the cluster already holds the cores
    monkeypatch.setitem(sys.modules, "distributed", fake)
    assert default_threads() == 1

    def no_worker():
        raise ValueError("No worker found")     # what distributed.get_worker raises outside a worker

    fake.get_worker = no_worker
    monkeypatch.setattr("os.cpu_count", lambda: 2)
    assert default_threads() == 2
    monkeypatch.setattr("os.cpu_count", lambda: 1)
    assert default_threads() == 1
