"""Fading statistics (diag.analysis.fading_stats) against published theory and reference libraries.

Sources: docs/references.md §5 (Rayleigh/Rice statistics, computed values), scipy.stats (expon = Rayleigh power, rice),
docs/references.md §3.1 / §3.2 (P.530 rain and multipath check values, computed from the printed formulas).  The two
tests on simulated multipath periods are simulator consistency checks only; the crossing-rate / fade-duration
theory is checked against an independent process in tests/models/test_fading_sum_of_sinusoids.py.
"""
import json

import numpy as np
import pandas as pd
import pytest
from scipy import stats as sps

from diag.analysis import fading_stats as stats
from diag.links import make_link
from diag.models import fading
from diag.results import ChannelSeries
from diag.sim.simulate import Effect, LinkSpec


def _link(**extra):
    values = {"link_id": "hop-s", "frequency_ghz": 23.0, "length_km": 10.0, "polarization": "H",
              "threshold_dbm": -75.0}
    values.update(extra)
    return make_link(values)


def _series(att, *, status=None, cause=None, level=None, step_s=1.0, channel="H", kind="sample"):
    n = len(att)
    idx = pd.date_range("2026-07-01", periods=n, freq=pd.Timedelta(seconds=step_s), tz="UTC", name="time_utc")
    att = np.asarray(att, dtype=float)
    frame = pd.DataFrame({
        "rsl_dbm": -40.0 - att if level is None else level,
        "status": pd.array(["ok"] * n if status is None else status, dtype="str"),
        "reference_dbm": -40.0, "attenuation_db": att,
        "event_id": -1, "cause": pd.array([""] * n if cause is None else cause, dtype="str")}, index=idx)
    return ChannelSeries(link_id="hop-s", channel=channel, interval_s=step_s, kind=kind, frame=frame)


def test_exceedance_counts_floor_and_excludes_gaps():
    att = np.array([0, 1, 4, 6, 12, 25, np.nan, np.nan, 2, 0.5])
    status = ["ok"] * 6 + ["signal_lost", "no_data", "ok", "ok"]
    s = _series(att, status=status)
    out = stats.exceedance_block(s, _link(), (3.0, 10.0, 20.0, 30.0), [])
    # 9 observed samples (the no_data point is a gap); the signal-lost sample exceeds every depth
    assert out["samples"] == 9
    assert out["all_percent"] == pytest.approx([100 * 5 / 9, 100 * 3 / 9, 100 * 2 / 9, 100 * 1 / 9], rel=1e-3)


def test_rayleigh_reference_matches_references_and_scipy():
    s = _series(np.zeros(10))
    out = stats.exceedance_block(s, _link(), (10.0, 20.0, 30.0, 40.0), [])
    # docs/references.md §5 [C]: Rayleigh P(y < -F dB) = 0.095163 / 0.0099502 / 9.995e-4 / 9.9995e-5
    assert out["rayleigh_percent"] == pytest.approx([9.5163, 0.99502, 0.09995, 0.0099995], rel=1e-3)
    # scipy.stats: the Rayleigh power ratio is exponential with unit mean
    assert out["rayleigh_percent"][1] == pytest.approx(100 * sps.expon.cdf(10 ** (-20 / 10)), rel=1e-3)


def test_rayleigh_samples_give_ten_db_per_decade_tail():
    # i.i.d. Rayleigh power (scipy expon) relative to its mean, all samples in a multipath period
    power = sps.expon.rvs(size=400_000, random_state=np.random.default_rng(4))
    att = -10 * np.log10(power)
    s = _series(att, cause=["multipath"] * len(att))
    out = stats.exceedance_block(s, _link(), stats.DEFAULT_DEPTHS_DB, [])
    tail = out["multipath_tail"]
    # docs/references.md §5: deep Rayleigh fades fall 10 dB per decade of probability; p0 -> 100 % (p ~ 10^(-A/10))
    assert tail["slope_db_per_decade"] == pytest.approx(10.0, abs=0.7)
    assert tail["p0_percent"] == pytest.approx(100.0, rel=0.15)
    # and the observed curve sits on the Rayleigh law at 20 dB within sampling error
    i = stats.DEFAULT_DEPTHS_DB.index(20.0)
    assert out["multipath_percent"][i] == pytest.approx(out["rayleigh_percent"][i], rel=0.1)


def test_p530_multipath_prediction_matches_formula():
    # docs/references.md §3.2: p_w = K d^3.4 (1+|eps|)^-1.03 f^0.8 10^(-0.00076 hL - A/10); with eps = 0 (one antenna
    # height in the links table) and hL = antenna_height_m. Check values: K = 1.0012e-4, d = 30 km, f = 8 GHz.
    link = make_link({"link_id": "m", "frequency_ghz": 8.0, "length_km": 30.0, "polarization": "V",
                      "threshold_dbm": -80, "geoclimatic_k": 1.0012e-4, "antenna_height_m": 100.0})
    s = _series(np.zeros(10))
    out = stats.exceedance_block(s, link, (30.0, 40.0), [])
    p0 = 1.0012e-4 * 30 ** 3.4 * 8 ** 0.8 * 10 ** (-0.00076 * 100)
    assert out["p530_multipath"]["p0_percent"] == pytest.approx(p0, rel=1e-3)
    # deep fades (A >= A_t = 25 + 1.2 log p0) follow p0 10^(-A/10)
    assert out["p530_multipath"]["percent_worst_month"][1] == pytest.approx(p0 * 1e-4, rel=1e-3)


def test_p530_rain_prediction_matches_reference_case():
    # docs/references.md §3.1 [C]: d = 10 km, f = 23 GHz, R0.01 = 42 mm/h, H: A0.01 = 33.942 dB; A(0.1 %) = 12.822 dB
    # (the C0 reading of the ITU reference code, which diag.models.p530 pins)
    link = _link(r001_mmh=42.0)
    out = stats.rain_block(_series(np.zeros(10)), link, [])
    assert out["p530"]["a001_db"] == pytest.approx(33.942, rel=1e-3)
    assert out["p530"]["attenuation_db"][1] == pytest.approx(12.822, rel=1e-3)


def test_rice_k_estimates_on_rice_samples():
    # Rice envelopes from scipy.stats.rice with K = 5: nu^2 = K/(K+1), 2 sigma^2 = 1/(K+1) (docs/references.md §5)
    k = 5.0
    sigma = np.sqrt(1 / (2 * (k + 1)))
    nu = np.sqrt(k / (k + 1))
    rng = np.random.default_rng(9)
    r = sps.rice.rvs(nu / sigma, scale=sigma, size=60_000, random_state=rng)
    level = -45 + 20 * np.log10(r)
    att = np.clip(-20 * np.log10(r), 0, None)
    s = _series(att, level=level, cause=["multipath"] * len(r))
    out = stats.rice_block(s)
    # Tolerance from the sample size: the spread of each estimator over 20 more scipy.stats.rice samples of the
    # same size (60 000 for the moments, the block's MLE_MAX_SAMPLES for the likelihood fit); the estimate must lie
    # within 4 standard deviations of the true K (a biased estimator fails; measured: sd ~0.04 and ~0.15).
    sd_mom = np.std([fading.rice_k_moments(sps.rice.rvs(nu / sigma, scale=sigma, size=r.size, random_state=rng))
                     for _ in range(20)], ddof=1)
    sd_mle = np.std([fading.fit_rice(sps.rice.rvs(nu / sigma, scale=sigma, size=stats.MLE_MAX_SAMPLES,
                                                  random_state=rng), "mle").k_factor for _ in range(20)], ddof=1)
    assert out["mle_samples"] == stats.MLE_MAX_SAMPLES
    assert abs(out["k_moments"] - k) <= 4 * sd_mom
    assert abs(out["k_mle"] - k) <= 4 * sd_mle


def test_lcr_fit_recovers_simulated_fading_bandwidth(hops):
    # Simulator consistency only (diag.sim.simulate documents its multipath fade rate as the f_m of the Rayleigh
    # LCR formula); the outside check of the crossing counts and the fit is
    # tests/models/test_fading_sum_of_sinusoids.py (an independent Clarke/Jakes process against Rice 1944).
    spec = LinkSpec(link_id="mp", frequency_ghz=8, length_km=40, polarization="H", threshold_dbm=-95,
                    duration_s=6 * 3600, effects=(Effect("multipath", 1800, 5 * 3600,
                                                         {"k_min": 0, "k_max": 0, "fade_rate_hz": 0.05}),))
    result = hops.truth(spec, seed=3)
    out = stats.lcr_block(result.series["H"])
    # tolerance: 99.9 % Poisson interval of the -10 dB crossing count (~620 crossings: 3.29/sqrt(n) = 13 %) plus
    # 10 % for crossings missed between 1-s samples of a 0.05-Hz process (f_m dt = 0.05), which bias f_m low
    n10 = out["crossings"][out["level_db"].index(-10.0)]
    assert out["fading_bandwidth_hz"] == pytest.approx(0.05, rel=3.29 / np.sqrt(n10) + 0.10)
    # the theory columns are the closed forms at the fitted f_m (Rappaport (5.80), (5.84), written out here)
    lv = np.array(out["level_db"])
    rho = np.sqrt(10 ** (lv / 10))
    fm = out["fading_bandwidth_hz"]
    assert out["rayleigh_crossing_rate_hz"] == pytest.approx(np.sqrt(2 * np.pi) * fm * rho * np.exp(-rho ** 2),
                                                             rel=1e-3)
    assert out["rayleigh_afd_s"] == pytest.approx(np.expm1(rho ** 2) / (rho * fm * np.sqrt(2 * np.pi)), rel=1e-3)
    # Rice K of the same Rayleigh (K = 0) period is small
    assert stats.rice_block(result.series["H"])["k_moments"] < 0.5


def test_link_statistics_skips_named_checks_and_is_json(hops):
    spec = LinkSpec(link_id="r", frequency_ghz=23, length_km=8, polarization="dual", threshold_dbm=-70,
                    duration_s=4 * 3600, effects=(Effect("rain", 3600, 3600, {"peak_mmh": 50}),))
    result = hops.truth(spec, seed=1)
    out = stats.link_statistics(result)
    json.dumps(out)
    text = " ".join(out["skipped"])
    assert "geoclimatic_k" in text and "r001_mmh" in text
    assert "multipath" in text     # no multipath period: K and LCR skipped, named
    h = out["channels"]["H"]
    assert h["rain"]["deepest_rain_fade_db"] > 10
    assert sum(sum(v) for v in h["by_hour"]["faded_s_by_cause"].values()) > 0
    assert len(h["by_hour"]["hour_utc"]) == 24


def test_statistics_log_gives_bounds_and_skips_envelope():
    att = np.array([0.0, 2.0, 8.0, 1.0])
    s = _series(att, step_s=900.0, kind="stats")
    s.frame["rsl_min_dbm"] = -40.0 - np.array([1.0, 12.0, 30.0, 4.0])
    s.frame["cause"] = pd.array(["", "multipath", "multipath", ""], dtype="str")
    out = stats.channel_statistics(s, _link(), None)
    ex = out["exceedance"]
    # from the averages 1 of 4 intervals exceeds 3 dB; from the minima 3 of 4 do (upper bound)
    assert ex["all_percent"][0] == pytest.approx(25.0)
    assert ex["all_percent_upper_bound"][0] == pytest.approx(75.0)
    assert "skipped" in out["rice_k"] and "skipped" in out["lcr_afd"]


def test_rice_crossing_fit_recovers_bandwidth_when_k_is_large(hops):
    # Simulator consistency (a Rician period, K = 5): the Rayleigh formula misreads the crossing rate, the Rice
    # formula with the measured K gives back the simulator's f_m.  Outside check of the same:
    # tests/models/test_fading_sum_of_sinusoids.py::test_rice_crossings_and_fade_durations_match_the_rician_closed_form
    spec = LinkSpec(link_id="mpk", frequency_ghz=8, length_km=40, polarization="H", threshold_dbm=-95,
                    duration_s=6 * 3600, effects=(Effect("multipath", 1800, 5 * 3600,
                                                         {"k_min": 5, "k_max": 5, "fade_rate_hz": 0.05}),))
    result = hops.truth(spec, seed=3)
    out = stats.channel_statistics(result.series["H"], result.link)
    # K from ~18 000 correlated 1-s samples: +-20 % (about 4 sd of the moment estimate from the ~1 800 independent
    # samples 5 h of 0.05-Hz fading holds; sd measured on scipy.stats.rice samples of that size: ~5 %)
    assert out["rice_k"]["k_moments"] == pytest.approx(5.0, rel=0.2)
    # f_m: Poisson interval of the -5 dB count (~240 crossings: 3.29/sqrt(n) = 21 %) plus 10 % for 1-s sampling
    n5 = out["lcr_afd"]["crossings"][out["lcr_afd"]["level_db"].index(-5.0)]
    assert out["lcr_afd"]["rice_fading_bandwidth_hz"] == pytest.approx(0.05, rel=3.29 / np.sqrt(n5) + 0.10)
    assert out["lcr_afd"]["fading_bandwidth_hz"] < 0.03      # the Rayleigh reading is far off at K = 5


def test_categorical_cause_codes_do_not_overflow():
    # the pipeline stores cause as a Categorical (int8 codes): a faded sample outside any event has code 6 and
    # 6 * 24 overflows int8 (bug found by the fuzz tests); by-hour counting must still work
    from diag import schema as S
    s = _series(np.array([0.0, 5.0, 6.0, 7.0]))
    s.frame["cause"] = pd.Categorical(["", "", "rain", ""], categories=list(S.CAUSES) + [""])
    s.frame.index = s.frame.index + pd.Timedelta(hours=23)
    out = stats.hourly_block(s, None)
    assert out["faded_s_by_cause"]["unknown"][23] == 2.0 and out["faded_s_by_cause"]["rain"][23] == 1.0
