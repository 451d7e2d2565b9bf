"""Network corroboration arithmetic (``diag.analysis.network``): which hops count, the time window, the plain and
the distance-weighted share, the faded minutes of a 15-min statistics log, and the guard of the second pass.

Distances: great-circle on a sphere of radius 6371 km (the mean Earth radius, common practice), so one degree of
latitude is 2*pi*6371/360 = 111.195 km; the weights are exp(-d / CORRELATION_KM) as the module documents.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.analysis import network as N
from diag.links import Link
from diag.results import ChannelSeries, LinkResult

T0 = pd.Timestamp("2026-06-10 12:00", tz="UTC")
KM_PER_DEG = 2 * math.pi * 6371.0 / 360.0


def _link(hop: str, lat: float | None = None) -> Link:
    coords = {} if lat is None else {"site_a_lat": lat - 0.01, "site_a_lon": 5.0, "site_b_lat": lat + 0.01,
                                      "site_b_lon": 5.0}
    return Link(link_id=hop, frequency_ghz=23.0, length_km=2.2, polarization="V", threshold_dbm=-70.0, **coords)


def _minutes(faded_at: list[int], seen: range = range(-60, 120)) -> pd.Series:
    """Per-minute faded flags from T0 + minute offsets: True at ``faded_at``, False elsewhere in ``seen``."""
    index = pd.DatetimeIndex([T0 + pd.Timedelta(minutes=m) for m in seen])
    return pd.Series([m in faded_at for m in seen], index=index, dtype=object)


def _events(kinds=("fade",), start_min=0, end_min=10) -> pd.DataFrame:
    return pd.DataFrame({"event_kind": list(kinds), "start_utc": [T0 + pd.Timedelta(minutes=start_min)] * len(kinds),
                         "end_utc": [T0 + pd.Timedelta(minutes=end_min)] * len(kinds)})


def test_plain_share_counts_hops_with_data_in_the_window():
    others = [(_link("A"), _minutes([5])), (_link("B"), _minutes([])),
              (_link("C"), _minutes([5], seen=range(200, 300)))]   # C has no data near the event: not counted
    got = N.network_columns(_events(), _link("X"), others)
    assert got["network_share"].iloc[0] == pytest.approx(0.5)
    assert got["network_hops"].iloc[0] == 2


def test_window_reaches_the_margin_either_side():
    margin_min = N.MARGIN_S / 60.0
    inside = _minutes([int(10 + margin_min) - 1])      # 4 min after the end
    outside = _minutes([int(10 + margin_min) + 1])     # 6 min after the end
    before = _minutes([-int(margin_min) + 1])          # 4 min before the start
    for minutes, want in ((inside, 1.0), (outside, 0.0), (before, 1.0)):
        got = N.network_columns(_events(), _link("X"), [(_link("A"), minutes)])
        assert got["network_share"].iloc[0] == want


def test_distance_weighted_share():
    """X and A share a midpoint (weight 1, A faded); B's midpoint is 20 km north (weight exp(-1), not faded)."""
    d_km = N.CORRELATION_KM
    others = [(_link("A", 0.0), _minutes([5])), (_link("B", d_km / KM_PER_DEG), _minutes([]))]
    got = N.network_columns(_events(), _link("X", 0.0), others)
    assert got["network_share"].iloc[0] == pytest.approx(1.0 / (1.0 + math.exp(-1.0)), rel=1e-6)
    # one hop without coordinates: every weight is 1 (the plain share)
    plain = N.network_columns(_events(), _link("X"), others)
    assert plain["network_share"].iloc[0] == pytest.approx(0.5)


def test_a_hop_alone_gets_no_columns():
    alone = N.network_columns(_events(), _link("X"), [])
    assert alone["network_hops"].tolist() == [0] and math.isnan(alone["network_share"].iloc[0])


def test_a_level_step_is_asked_about_the_hour_after_it():
    """A level-shift span of 3 h from T0: the window is [T0 - margin, T0 + STEP_WINDOW_S + margin], not the whole
    span (a knocked antenna's span runs for days, through any weather); it forms no episode."""
    span = _events(kinds=("fade", "level_shift"), start_min=0, end_min=180)
    step_min = N.STEP_WINDOW_S / 60.0
    within = _minutes([int(step_min) + 2], seen=range(-60, 300))     # 2 min after the hour: inside the margin
    later = _minutes([int(step_min) + 30], seen=range(-60, 300))     # half an hour later: outside
    got = N.network_columns(span, _link("X"), [(_link("A"), within)])
    assert got["network_hops"].tolist() == [1, 1] and got["network_share"].tolist() == [1.0, 1.0]
    assert math.isnan(got["episode_share"].iloc[1])
    got = N.network_columns(span, _link("X"), [(_link("A"), later)])
    assert got["network_share"].tolist() == [1.0, 0.0]     # the fade's own window is the whole 3 h


def test_without_the_switch_a_level_step_gets_no_columns(monkeypatch):
    monkeypatch.setattr(N, "NETWORK_STEPS", False)
    got = N.network_columns(_events(kinds=("fade", "level_shift")), _link("X"), [(_link("A"), _minutes([5]))])
    assert got["network_hops"].tolist() == [1, 0] and math.isnan(got["network_share"].iloc[1])


def _stats_result(peaks_db: list[float]) -> LinkResult:
    index = pd.date_range(T0, periods=len(peaks_db), freq="15min")
    frame = pd.DataFrame({"attenuation_db": np.zeros(len(peaks_db)), "attenuation_peak_db": peaks_db,
                          "status": [S.OK] * len(peaks_db)}, index=index)
    series = ChannelSeries(link_id="X", channel="V", interval_s=900.0, kind="stats", frame=frame)
    return LinkResult(link=_link("X"), series={"V": series}, events=pd.DataFrame())


def test_a_15min_statistic_covers_every_minute_of_its_interval():
    minutes = N.faded_minutes(_stats_result([0.0, 8.0, 0.0]))
    assert len(minutes) == 45
    assert minutes.iloc[15:30].all() and not minutes.iloc[:15].any() and not minutes.iloc[30:].any()


def test_corroborate_leaves_a_single_hop_alone():
    result = _stats_result([0.0, 8.0])
    result.events = _events()
    assert N.corroborate([result]) == [result]
    assert "network_share" not in result.events


def test_second_pass_refuses_columns_of_other_events():
    events = _events()
    columns = pd.concat([events[["start_utc", "end_utc"]],
                         N.network_columns(events, _link("X"), [(_link("A"), _minutes([5]))])], axis=1)
    assert N.with_network(events, columns)["network_hops"].tolist() == [1]
    with pytest.raises(RuntimeError, match="other fade events"):
        N.with_network(_events(start_min=1), columns)


def test_base_rates_and_the_share_expected_by_chance():
    # a hop faded in two episodes (minutes 5-7 and 50) out of 180 seen minutes: faded share 4/180, 2 episode
    # starts per 180 minutes.  Chance of at least one faded minute in a window of w minutes at a random time:
    # 1 - (1 - 4/180) exp(-2/180 w) (hand computation; Poisson episode starts)
    counts = N.minute_counts(_minutes([5, 6, 7, 50]))
    assert counts.faded_share == pytest.approx(4 / 180)
    assert counts.starts_per_min == pytest.approx(2 / 180)
    assert counts.chance(np.array([20.0]))[0] == pytest.approx(1 - (1 - 4 / 180) * math.exp(-2 / 180 * 20))
    # the event window is the event (minutes 0-10) plus MARGIN_S either side, in minutes, ends included
    window = 10 + 2 * N.MARGIN_S / 60.0 + 1
    got = N.network_columns(_events(), _link("X"), [(_link("A"), _minutes([5, 6, 7, 50])),
                                                    (_link("B"), _minutes([]))])
    want = (counts.chance(np.array([window]))[0] + 0.0) / 2.0
    assert got["network_chance"].iloc[0] == pytest.approx(want)
    assert got["network_weight"].iloc[0] == pytest.approx(2.0)   # two hops watched, weight 1 each
    assert got["network_share"].iloc[0] == pytest.approx(0.5)


def test_the_chance_rate_leaves_out_the_window_under_test():
    # one day of minutes (-600 .. 839): the neighbour fades through the whole event window (a storm, minutes
    # -5 .. 15 with the margins) and in one episode of 10 minutes outside it.  The rate of fading "by chance"
    # comes from the 1419 minutes outside the window: share 10/1419, 1 start per 1419 minutes (hand computation);
    # counting the storm's own minutes would put the share at 31/1440 and make the coincidence look like chance
    storm = list(range(-5, 16))
    other = list(range(400, 410))
    minutes = _minutes(storm + other, seen=range(-600, 840))
    counts = N.minute_counts(minutes)
    window = 10 + 2 * N.MARGIN_S / 60.0 + 1
    outside = 1440 - 21
    want = 1 - (1 - 10 / outside) * math.exp(-1 / outside * window)
    got = N.network_columns(_events(), _link("X"), [(_link("A"), minutes)])
    assert got["network_chance"].iloc[0] == pytest.approx(want)
    assert got["network_chance"].iloc[0] < counts.chance(np.array([window]))[0] / 2   # well under the whole-day rate
    # a record too short to leave the window out (under OUTSIDE_MIN_MINUTES outside it) keeps the whole-record rate
    short = _minutes([5, 6, 7, 50])
    got = N.network_columns(_events(), _link("X"), [(_link("A"), short)])
    assert got["network_chance"].iloc[0] == pytest.approx(N.minute_counts(short).chance(np.array([window]))[0])


def test_neighbours_fading_no_more_than_chance_are_no_rain_evidence():
    # a likelihood ratio needs the rate under "no rain" too: in a large network some hops fade somewhere most of
    # the time (OpenRainER, 141 links: about 10 % of the hops in any six hours of a dry day), so a share at that
    # level says nothing for rain, while a storm that fades 80 % of the hops against a chance of 10 % does
    from diag.analysis import attribution as A
    from diag.analysis.priors import hop_prior
    link = _link("X", lat=45.0)
    prior = hop_prior(link)
    dry = {"network_share": 0.1, "network_hops": 140, "network_faded_weight": 14.0, "network_chance": 0.12,
           "peak_fade_db_finite": 20.0}
    vec, text = A.term_network(dry, link, prior)
    assert vec[A.R] == pytest.approx(-0.3) and "no more than chance (12%)" in text
    # the more near hops were watched, the less likely rain on this path spared them all (Poisson, about
    # NETWORK_SHARED_RAIN of each unit of nearness weight should have faded): -0.3 x 9 = -2.7 for a short fade;
    # rain lasting T hours is advected over a wider area, so (1 + T / 1 h) times that, bounded to -10
    assert A.term_network({**dry, "network_weight": 9.0}, link, prior)[0][A.R] == pytest.approx(-0.3 * 9.0)
    assert A.term_network({**dry, "network_weight": 9.0, "duration_s": 7200.0}, link, prior)[0][A.R] == \
        pytest.approx(-0.3 * 9.0 * 3.0)
    assert A.term_network({**dry, "network_weight": 9.0, "duration_s": 6 * 3600.0}, link, prior)[0][A.R] == \
        pytest.approx(-A.NETWORK_SILENCE_MAX)
    assert A.term_network({**dry, "network_weight": 40.0}, link, prior)[0][A.R] == pytest.approx(-10.0)
    # few near hops watched, little evidence: no floor under it (until 2026-12-05 it was at least 0.3) ...
    assert A.term_network({**dry, "network_weight": 0.5}, link, prior)[0][A.R] == pytest.approx(-0.3 * 0.5)
    # ... and none at all from hops that lie far away: three hops 100 km off weigh 3 exp(-100 / 20) = 0.02, and
    # their silence says nothing about rain on this path (a lone hop far from the network, family B's "independent"
    # hops and family C's outlying ones)
    far = 3.0 * np.exp(-100.0 / N.CORRELATION_KM)
    assert A.term_network({**dry, "network_weight": far}, link, prior) is None
    # without site coordinates the watched hops may lie anywhere: their silence weighs the former flat -0.3
    unplaced = _link("U")
    assert A.term_network({**dry, "network_weight": 9.0}, unplaced, hop_prior(unplaced))[0][A.R] == pytest.approx(-0.3)
    storm = {"network_share": 0.8, "network_hops": 140, "network_faded_weight": 112.0, "network_chance": 0.1}
    vec, text = A.term_network(storm, link, prior)
    assert vec[A.R] == pytest.approx(4.0) and "chance 10%" in text
    # without the chance column (older tables) the share is read as before
    old = {"network_share": 0.3, "network_hops": 10, "network_faded_weight": 1.0}
    assert A.term_network(old, link, prior)[0][A.R] == pytest.approx(2.0)


def test_episodes_chain_fades_less_than_the_gap_apart():
    # windows [0, 10], [20, 30], [100, 110] and [25, 40] minutes with a 30-min gap: the first, second and fourth
    # chain into one episode [0, 40] (each begins within 30 min of the latest end before it); the third begins 60
    # min after 40 and stands alone (hand computation)
    m = 60 * 10 ** 9
    lo = np.array([0, 20, 100, 25]) * m
    hi = np.array([10, 30, 110, 40]) * m
    ids, e_lo, e_hi = N._episodes(lo, hi, 30 * m)
    assert ids.tolist() == [0, 0, 1, 0]
    assert (e_lo // m).tolist() == [0, 100]
    assert (e_hi // m).tolist() == [40, 110]


def test_episode_columns_and_the_silence_of_a_whole_episode():
    # this hop fades four times for 10 min, 20 min apart (minutes 0-10, 30-40, 60-70, 90-100): one episode of
    # 100 min.  A neighbour that never faded leaves the episode's share at 0; its hours (100 min, without the
    # margins) replace each fade's own in the silence term, so every short fade of the spell weighs like the spell
    from diag.analysis import attribution as A
    from diag.analysis.priors import hop_prior
    starts = [0, 30, 60, 90]
    events = pd.DataFrame({"event_kind": ["fade"] * 4,
                           "start_utc": [T0 + pd.Timedelta(minutes=s) for s in starts],
                           "end_utc": [T0 + pd.Timedelta(minutes=s + 10) for s in starts]})
    quiet = _minutes([], seen=range(-600, 840))
    near = _link("X", lat=45.0)
    got = N.network_columns(events, near, [(_link(h, lat=45.0), quiet) for h in "ABC"])
    assert got["network_weight"].tolist() == pytest.approx([3.0] * 4)   # three hops at the same place
    assert got["episode_hours"].tolist() == pytest.approx([100 / 60] * 4)
    assert got["episode_share"].tolist() == [0.0] * 4
    prior = hop_prior(near)
    row = {**got.iloc[1].to_dict(), "duration_s": 600.0}
    assert A.term_network(row, near, prior)[0][A.R] == pytest.approx(-0.3 * 3.0 * (1 + 100 / 60))
    # the neighbour faded at minute 65 (inside the episode, outside the second fade's window): the spell was not
    # quiet, so the second fade keeps its own 10 minutes
    busy = _minutes([65], seen=range(-600, 840))
    got = N.network_columns(events, near, [(_link("A", lat=45.0), busy)] +
                            [(_link(h, lat=45.0), quiet) for h in "BC"])
    assert got["network_share"].iloc[1] == 0.0 and got["episode_share"].iloc[1] == pytest.approx(1 / 3)
    row = {**got.iloc[1].to_dict(), "duration_s": 600.0}
    assert A.term_network(row, near, prior)[0][A.R] == pytest.approx(-0.3 * 3.0 * (1 + 10 / 60))
