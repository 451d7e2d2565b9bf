"""A level step the network contradicts is weather (diag.analysis.classify._network_weather).

A knocked or loosened antenna lowers one hop's clear-sky level; a storm front lowers the levels of many hops of a
network in the same hour and gives them back when it has passed (rain is weather and fades neighbouring hops
together: the nearby-link rain detection of Overeem, Leijnse and Uijlenhoet, Atmos. Meas. Tech. 9, 2425-2444, 2016,
rests on the same fact).  In 15-min statistics a rain fade that holds steady for a few hours looks like a level
step on its own hop (real OpenRainER links on 18 Aug 2022 were called level shifts that way).  Stated choices of the
module: other hops fading beyond chance by a quarter of the network, a level back within 12 h.

The min/max exports are written by hand; the network, its place and hop names are invented.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.analysis import classify
from diag.links import Link
from diag.pipeline import analyze_files
from tests._minmax_export import assert_mostly, write_minmax

T0 = pd.Timestamp("2031-07-02T00:00:00Z")
DAYS = 3
STORM = range(2 * 96 + 60, 2 * 96 + 72)      # day 3, 15:00-18:00 UTC: three hours


def _link(hop: str, k: int) -> Link:
    lat, lon = 47.10 + 0.01 * k, 8.30 + 0.01 * k      # hops a kilometre or two apart
    return Link(link_id=hop, frequency_ghz=23.0, length_km=4.0, polarization="V", threshold_dbm=-80.0,
                nominal_dbm=-45.0, site_a_lat=lat, site_a_lon=lon, site_b_lat=lat + 0.02, site_b_lon=lon + 0.02)


def _rows(held: bool, rain: bool, held_after_h: float = 0.0) -> list[tuple[float, float]]:
    held_until = STORM.stop + int(4 * held_after_h)
    rows = []
    for k in range(DAYS * 96):
        lo, hi = -46.0, -45.0
        if held and STORM.start <= k < held_until:   # the level held 6 dB down, flat, and back after three hours
            lo, hi = -52.0, -51.0
        elif k in STORM and rain:      # a rain fade: deeper in the middle, ragged
            depth = 4.0 + 8.0 * (1.0 - abs(k - STORM.start - 6) / 6.0) + (k % 3)
            lo, hi = -45.0 - depth - 2.0, -45.0 - depth + 1.0
        rows.append((lo, hi))
    return rows


def _storm_causes(tmp_path, neighbours_rain: bool, n_neighbours: int = 4, held_after_h: float = 0.0) -> list[str]:
    links = [_link("HOLLOW-1", 0)] + [_link(f"HOLLOW-{k + 2}", k + 1) for k in range(n_neighbours)]
    paths = [write_minmax(tmp_path, links[0], _rows(held=True, rain=False, held_after_h=held_after_h), start=T0)]
    paths += [write_minmax(tmp_path, link, _rows(held=False, rain=neighbours_rain), start=T0) for link in links[1:]]
    results = {r.link.link_id: r for r in analyze_files(paths, links=links)}
    frame = next(iter(results["HOLLOW-1"].series.values())).frame
    return [str(c) for c in frame["cause"].astype(str).iloc[STORM.start:STORM.stop]]


def test_a_held_drop_alone_on_its_hop_is_a_level_shift(tmp_path):
    causes = _storm_causes(tmp_path, neighbours_rain=False)
    assert_mostly(causes, S.LEVEL_SHIFT)


def test_the_same_drop_while_the_neighbours_fade_is_rain(tmp_path):
    assert classify.NETWORK_VETO
    causes = _storm_causes(tmp_path, neighbours_rain=True)
    assert_mostly(causes, S.RAIN)


def test_without_the_veto_the_network_does_not_move_the_step(tmp_path, monkeypatch):
    monkeypatch.setattr(classify, "NETWORK_VETO", False)
    causes = _storm_causes(tmp_path, neighbours_rain=True)
    assert_mostly(causes, S.LEVEL_SHIFT)


def test_a_drop_held_longer_than_the_bound_stays_a_level_shift(tmp_path, monkeypatch):
    """The network vetoes only a level back within WEATHER_STEP_MAX_S (12 h: longer is no rain, term_duration);
    with the bound lowered to 2 h the 3-h drop stays the hop's own step."""
    monkeypatch.setattr(classify, "WEATHER_STEP_MAX_S", 2 * 3600.0)
    causes = _storm_causes(tmp_path, neighbours_rain=True)
    assert_mostly(causes, S.LEVEL_SHIFT)


def test_a_knock_in_the_storm_that_stays_down_after_it_is_a_level_shift(tmp_path):
    """The network faded in the hour after the step, but the level came back four hours after the neighbours
    cleared (a repair, not the end of the rain): the hop's own step."""
    causes = _storm_causes(tmp_path, neighbours_rain=True, held_after_h=4.0)
    assert_mostly(causes, S.LEVEL_SHIFT)


# --- the step's own edge at fine samples ----------------------------------------------------------------------
def _span_row(interval_s: float, jump_db: float) -> dict:
    """A level-shift span of 3 h, 9 dB, with the network fading in its first and last hour (columns as
    diag.analysis.network writes them)."""
    return {"event_kind": "level_shift", "kind": "sample", "interval_s": interval_s, "duration_s": 3 * 3600.0,
            "peak_fade_db_finite": 9.0, "network_share": 0.9, "network_hops": 4.0, "network_chance": 0.1,
            "network_faded_weight": 3.6, "step_end_share": 0.8, "step_end_chance": 0.1, "jump_in_db": jump_db}


def test_an_abrupt_step_at_one_second_is_no_rain_whatever_the_network_did():
    """At 1 s a rain fade moves well under 3 dB in a sample (fade slopes near 1 dB/s or below, ITU-R P.1623, from
    memory): a 9-dB one-second edge is equipment even in a storm."""
    link = _link("HOLLOW-1", 0)
    assert classify._network_weather(_span_row(1.0, 9.0), link) is None
    assert classify._network_weather(_span_row(1.0, 0.6), link)[0] == S.RAIN


def test_at_one_minute_a_large_one_sample_edge_can_still_be_rain():
    """At 1 min a rain cell can move the level by several dB in one sample (real 1-min OpenRainER logs, link 61 on
    18 Aug 2022, show rain plateaus with one-minute edges; rule 1c of classify leaves 1-min steps under a fade to
    the posterior for the same reason): the edge bound is for samples of 10 s or finer only."""
    assert classify._network_weather(_span_row(60.0, 9.0), _link("HOLLOW-1", 0))[0] == S.RAIN


def test_the_span_edge_is_read_from_the_path_level_at_fine_samples():
    """evidence.add_evidence gives a 1-s span the largest one-sample move of the level in its step's direction
    near its start; at 1 min spans get none."""
    from diag.analysis.evidence import add_evidence
    from diag.results import ChannelSeries

    n, at = 3600, 1800
    index = pd.date_range(T0, periods=n, freq="1s")
    rsl = np.where(np.arange(n) < at, -45.0, -54.0) + 0.05 * np.sin(np.arange(n))
    frame = pd.DataFrame({"rsl_dbm": rsl, "status": ["ok"] * n, "attenuation_db": np.zeros(n)}, index=index)
    series = {"V": ChannelSeries(link_id="HOLLOW-1", channel="V", interval_s=1.0, kind="sample", frame=frame)}
    events = pd.DataFrame({"event_kind": ["level_shift"], "channel": ["V"], "start_index": [at + 30],
                           "end_index": [n], "step_db": [-9.0]})
    got = add_evidence(events, series)["jump_in_db"].iloc[0]
    assert got == pytest.approx(9.0, abs=0.2)
    coarse = {"V": ChannelSeries(link_id="HOLLOW-1", channel="V", interval_s=60.0, kind="sample", frame=frame)}
    assert np.isnan(add_evidence(events, coarse)["jump_in_db"].iloc[0])
