"""Single evidence terms of the physics posterior (diag.analysis.attribution), each against the physical fact it
encodes (named beside each test).  Rows are dicts of event columns, as ``attribute`` receives them."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from diag.analysis import attribution as A
from diag.analysis.priors import hop_prior
from diag.links import make_link

LINK = make_link({"link_id": "T", "frequency_ghz": 25.0, "length_km": 6.0, "polarization": "H",
                  "threshold_dbm": -90.0})
PRIOR = hop_prior(LINK)


def _rain_minus_other(got):
    vec, _ = got
    return vec[A.R] - vec[A.OTHER]


def test_other_direction_not_fading_argues_against_rain_and_refraction():
    # reciprocity: rain and refraction on the shared path fade both directions of a duplex pair alike; one
    # direction fading 4 dB while the other stays at 0 is no rain (OpenRainER link 275, 19 Aug 2022: 3-4 dB dips
    # on one sub-link, no gauge within 10 km wet but one)
    row = {"partner_ratio": 0.0, "peak_fade_db_finite": 4.0}
    vec, text = A.term_companion(row, LINK, PRIOR)
    assert vec[A.R] <= -2.9 and vec[A.F] <= -2.9 and vec[A.M] == 0.0 and vec[A.OTHER] == 0.0
    assert "other direction faded 0%" in text
    # both directions faded alike: no term; a partner that faded clearly (9 dB of a 38-dB fade, heavy rain with
    # one end's radome wetter) is not "not fading": no term either
    assert A.term_companion({"partner_ratio": 0.95, "peak_fade_db_finite": 4.0}, LINK, PRIOR) is None
    assert A.term_companion({"partner_ratio": 0.33, "peak_fade_db_finite": 38.0}, LINK, PRIOR) is None
    # an H/V pair is judged by the P.838 polarisation term instead
    assert A.term_companion({"partner_ratio": 0.0, "peak_fade_db_finite": 4.0, "v_over_h_ratio": 0.0},
                            LINK, PRIOR) is None


def test_network_evidence_rests_on_near_hops():
    # rain fields decorrelate over tens of km: a share carried by hops 50 km away (weights exp(-50/20) = 0.08 each)
    # says little; the same share from one hop next door says much
    far = {"network_share": 0.3, "network_hops": 10, "network_faded_weight": 0.08}
    near = {"network_share": 0.3, "network_hops": 10, "network_faded_weight": 1.0}
    assert A.term_network(far, LINK, PRIOR)[0][A.R] == pytest.approx(2.0 * 0.08)
    assert A.term_network(near, LINK, PRIOR)[0][A.R] == pytest.approx(2.0)
    # without coordinates every hop weighs 1: the plain share decides (the faded weight is then >= 1)
    assert A.term_network({"network_share": 0.1, "network_hops": 10, "network_faded_weight": 1.0},
                          LINK, PRIOR)[0][A.R] == pytest.approx(1.0)


def _fade(day: int, hh: int, mm: int, group: int) -> dict:
    start = pd.Timestamp("2022-08-14T00:00Z") + pd.Timedelta(days=day, hours=hh, minutes=mm)
    return {"event_kind": "fade", "start_utc": start, "end_utc": start + pd.Timedelta(hours=3), "group_id": group}


def test_a_fade_that_keeps_the_clock_is_not_rain():
    # the morning break-up of the night's stable layer (and a sun-heated mount) recur at the same hour day after
    # day; rain does not (OpenRainER link 364: 4-7 dB from about 06:15 UTC for 4-6 h on each dry day)
    rows = [_fade(d, 6, 10 + 7 * (d % 3), d) for d in range(8)]
    A._diurnal(rows)
    got = A.term_diurnal(rows[0], LINK, PRIOR)
    assert got is not None and got[0][A.R] == pytest.approx(-3.0) and "7 of 7 other days" in got[1]
    # the same number of fades at hours scattered over the day: no recurrence beyond chance, no term
    scattered = [_fade(d, (5 * d + 3) % 24, 0, d) for d in range(8)]
    A._diurnal(scattered)
    assert all(A.term_diurnal(r, LINK, PRIOR) is None for r in scattered)


def test_texture_terms_count_smooth_dips_for_other_too():
    # a dip with no fast fluctuation is as smooth as an equipment or reference dip: "other" moves with rain and
    # refraction, against multipath (Rayleigh fading fluctuates within seconds)
    row = {"interval_s": 1.0, "fast_std_db": 0.05, "noise_diff_db": 0.05, "mean_fade_db": 4.0}
    vec, _ = A.term_fast(row, LINK, PRIOR)
    assert vec[A.OTHER] == vec[A.R] == vec[A.F] > 0 > vec[A.M]
    assert _rain_minus_other((vec, "")) == 0.0


def test_hour_term_reads_the_local_clock():
    # the issue: the hour in local solar time from the site longitude, else from --tz.  A fade starting 03:30 UTC:
    # at 150 deg E (10 h ahead in solar time) it is 13:30 local solar, an afternoon; in UTC it is night
    start = pd.Timestamp("2022-08-14T03:30Z")
    row = {"hour_utc": 3, "start_utc": start}
    east = make_link({"link_id": "E", "frequency_ghz": 25.0, "length_km": 6.0, "polarization": "H",
                      "threshold_dbm": -90.0, "site_a_lat": -33.0, "site_a_lon": 150.0, "site_b_lat": -33.05,
                      "site_b_lon": 150.05})
    assert A.term_hour(row, east, PRIOR)[0][A.R] > 0 and "local solar" in A.term_hour(row, east, PRIOR)[1]
    night = A.term_hour(row, LINK, PRIOR)
    assert night[0][A.M] > night[0][A.R] and night[0][A.F] > night[0][A.R] and "UTC" in night[1]
    # no coordinates, --tz Australia/Sydney (UTC+10 in August): 13:30 civil time, an afternoon
    got = A.term_hour({**row, "local_tz": "Australia/Sydney"}, LINK, PRIOR)
    assert got[0][A.R] > 0 and "Australia/Sydney" in got[1]


def test_tz_reaches_the_attribution():
    # analyze_files(tz=...) hands the zone to the posterior (AnalysisConfig.local_tz) unless one is set
    from diag.config import AnalysisConfig
    from diag.pipeline import with_local_tz

    assert with_local_tz(None, "Europe/Rome").local_tz == "Europe/Rome"
    assert with_local_tz(AnalysisConfig(local_tz="UTC"), "Europe/Rome").local_tz == "UTC"
    assert with_local_tz(None, None) is None



def test_rayleigh_log_mean_matches_scipy():
    # the mean of 10 log10 of an exponentially distributed power (Rayleigh amplitude) of mean 1: -10 gamma / ln 10
    # (textbook fading theory); checked against scipy.stats.expon's numerical expectation
    from scipy import stats
    expected = stats.expon.expect(lambda x: 10.0 * np.log10(x))
    assert A.RAYLEIGH_LOG_MEAN_DB == pytest.approx(-expected, abs=1e-6)
    assert A.RAYLEIGH_LOG_MEAN_DB == pytest.approx(2.507, abs=1e-3)


def test_a_long_deep_mean_fade_is_no_flat_fading_alone():
    # flat fading scatters the level about its clear-air mean power: over 30 min of many fades its mean in dB lies
    # at most ~2.5 dB below (Rayleigh); a mean fade of 8 dB needs a slow component under it
    row = {"interval_s": 1.0, "kind": "sample", "duration_s": 1800.0, "mean_fade_db": 8.0}
    vec, text = A.term_slow(row, LINK, PRIOR)
    assert vec[A.M] == pytest.approx(-(8.0 - A.RAYLEIGH_LOG_MEAN_DB - A.SLOW_MARGIN_DB) / A.SLOW_SCALE_DB)
    assert vec[A.R] == vec[A.F] == vec[A.OTHER] == 0.0 and "mean fade 8.0 dB" in text
    # a mean within the Rayleigh bias, a single short dip (whose mean is half its depth), interval statistics: no term
    assert A.term_slow({**row, "mean_fade_db": 2.0}, LINK, PRIOR) is None
    assert A.term_slow({**row, "duration_s": 120.0}, LINK, PRIOR) is None
    assert A.term_slow({**row, "kind": "stats", "interval_s": 900.0}, LINK, PRIOR) is None


def test_slow_fade_with_scintillation_on_a_long_hop_is_not_multipath():
    # a 2-h fade on a 40-km, 7-GHz hop at night: mean 8 dB, 35-dB dips and 2.5 dB rms fast fluctuation on top.
    # The fluctuation is multipath, but the mean says a slow refractive fade carries most of the fading time
    # (flat fading alone: mean under 2.5 dB, see above); P.530 gives both mechanisms on such a hop
    link = make_link({"link_id": "L", "frequency_ghz": 7.0, "length_km": 40.0, "polarization": "H",
                      "threshold_dbm": -80.0})
    row = {"interval_s": 1.0, "kind": "sample", "event_kind": "fade", "duration_s": 7200.0, "mean_fade_db": 8.0,
           "peak_fade_db": 35.0, "peak_fade_db_finite": 35.0, "fast_std_db": 2.5, "noise_diff_db": 0.1,
           "hour_utc": 2.0, "half_peak_fraction": 0.3, "start_utc": pd.Timestamp("2026-07-01T01:00Z"),
           "end_utc": pd.Timestamp("2026-07-01T03:00Z")}
    cause, _, evidence = A.attribute([row], link)[0]
    assert cause == "refractive", evidence
    # the same texture with a mean inside flat fading's own (1 dB): multipath
    assert A.attribute([{**row, "mean_fade_db": 1.0}], link)[0][0] == "multipath"


def _mixed_row(mean_db: float) -> dict:
    # a 5-h night fade on a 14-km, 15-GHz dual-polarised hop: 2 dB rms fast fluctuation with 32-dB dips on a slow
    # component of mean `mean_db`; the deepest samples are multipath's (V/H ratio 1.07, rises of 2.7 dB, the two
    # polarisations fading together as clear-air fading does)
    start = pd.Timestamp("2030-07-13T21:18Z")
    return {"interval_s": 1.0, "kind": "sample", "event_kind": "fade", "duration_s": 5 * 3600.0,
            "mean_fade_db": mean_db, "peak_fade_db": 32.7, "peak_fade_db_finite": 32.7, "fast_std_db": 2.0,
            "noise_diff_db": 0.1, "v_over_h_ratio": 1.07, "expected_v_over_h": 0.84, "upfade_within_db": 2.7,
            "partner_corr": 0.97, "hour_utc": 21, "start_utc": start, "end_utc": start + pd.Timedelta(hours=5)}


def test_multipath_on_a_slow_fade_does_not_judge_rain_against_refraction(monkeypatch):
    # A long fade whose mean needs a slow component (flat fading alone: under 2.5 dB, see above) with fast
    # fluctuation on it: its deepest samples, rises and channel correlation are those of the multipath on top
    # (clear-air ratio 1, P.530 §2.3.3 enhancements); they cannot say whether the slow part is rain or refraction,
    # which the prior at the mean depth, the network, the hour and the gauge then decide
    link = make_link({"link_id": "M", "frequency_ghz": 15.0, "length_km": 14.2, "polarization": "dual",
                      "threshold_dbm": -77.0})
    base, terms, _, _ = A.evidence_terms([_mixed_row(4.8)], link)
    for name in A.FAST_PART_TERMS:
        assert terms[name][0, A.R] == terms[name][0, A.F], name
    # the multipath reading is kept: the rises still argue for multipath over rain
    assert terms["upfade"][0, A.M] > terms["upfade"][0, A.R]
    # no slow component (mean within flat fading's own): the ratio and the rises still speak against rain
    _, plain, _, _ = A.evidence_terms([_mixed_row(1.0)], link)
    assert plain["polarisation"][0, A.R] < plain["polarisation"][0, A.F]
    assert plain["upfade"][0, A.R] < plain["upfade"][0, A.F]
    # the switch off: the multipath's ratio argues against rain underneath, as before
    monkeypatch.setattr(A, "MIXED_SLOW_NEUTRAL", False)
    _, off, _, _ = A.evidence_terms([_mixed_row(4.8)], link)
    assert off["polarisation"][0, A.R] < off["polarisation"][0, A.F]


def test_multipath_seconds_inside_a_rain_fade_are_split_off(monkeypatch):
    # the same texture called rain: its seconds where the fast part exceeds the slow part are multipath's, as in an
    # event called refractive (diag.analysis.classify.split_causes; a second's cause is its larger contribution)
    from diag.analysis import classify as C
    link = make_link({"link_id": "M", "frequency_ghz": 15.0, "length_km": 14.2, "polarization": "V",
                      "threshold_dbm": -77.0})
    out = pd.DataFrame([{**_mixed_row(4.8), "cause": "rain", "spread_db": np.nan, "avg_to_min_ratio": np.nan},
                        {**_mixed_row(4.8), "cause": "rain", "spread_db": np.nan, "avg_to_min_ratio": np.nan,
                         "fast_std_db": 0.4}])
    assert list(C.split_causes(out, link)) == ["multipath", ""]
    # by day (14 h UTC, no site coordinates: the UTC clock) fast edges are a convective cell's, not multipath's
    day = out.assign(hour_utc=14, start_utc=pd.Timestamp("2030-07-13T14:00Z"),
                     end_utc=pd.Timestamp("2030-07-13T19:00Z"))
    assert list(C.split_causes(day, link)) == ["", ""]
    # on a 2-km 38-GHz hop P.530 clear-air fading never reaches 33 dB (priors.clear_air_negligible): a convective
    # cell's fast edges there are no multipath
    short = make_link({"link_id": "S", "frequency_ghz": 38.0, "length_km": 2.0, "polarization": "V",
                       "threshold_dbm": -70.0})
    assert list(C.split_causes(out, short)) == ["", ""]
    monkeypatch.setattr(C, "SPLIT_RAIN", False)
    assert list(C.split_causes(out, link)) == ["", ""]


def test_group_pooling_weighs_members_by_duration():
    # one physical event on two channels: two 3-h fades with rain ahead of refraction by 8 in log-odds, and four
    # 5-min dips on their tail that overlap them (same group) with refraction ahead by 7.5.  Rain and refraction act
    # on the whole path, so the members share one log-odds; weighted by duration the 3-h fades decide it (stated
    # choice: each member's evidence grows with its samples).  Family C fit seed 10 had exactly this, and the plain
    # mean called two 33-dB rain fades refractive.
    logit = np.zeros((6, 4))
    logit[:2, A.R] = 8.0
    logit[2:, A.F] = 7.5
    groups = np.zeros(6, dtype=np.int64)
    dur = np.array([10800.0, 10800.0, 300.0, 300.0, 300.0, 300.0])
    pooled = A._pool_groups(groups, logit, dur)
    delta = pooled[:, A.R] - pooled[:, A.F]
    expect = (2 * 10800 * 8.0 - 4 * 300 * 7.5) / (2 * 10800 + 4 * 300)
    assert delta == pytest.approx(np.full(6, expect))
    assert (delta > 0).all()
    # control: without durations (or with the switch off) the plain mean, which the dips outvote
    plain = A._pool_groups(groups, logit)
    assert (plain[:, A.R] - plain[:, A.F]) == pytest.approx(np.full(6, (2 * 8.0 - 4 * 7.5) / 6))
    # multipath and "other" are untouched; a row in no group (-1) keeps its own log-odds
    assert pooled[:, A.M] == pytest.approx(logit[:, A.M])
    lone = A._pool_groups(np.array([-1, 0, 0]), logit[[0, 2, 3]], dur[[0, 2, 3]])
    assert lone[0, A.R] - lone[0, A.F] == pytest.approx(8.0)
