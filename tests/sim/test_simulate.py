"""The simulator checked against the outside world: scipy's Rice distribution, the Rayleigh tail,
ITU-R P.838-3 (through itur 0.4.0 and the published regression), the polarisation-tilt relations, and its
own bookkeeping."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from diag import schema
from diag.errors import InputError
from diag.models import fading, p530
from diag.sim.simulate import (
    TRUTH_CAUSES,
    Effect,
    LinkSpec,
    aggregate_statistics,
    random_scenario,
    simulate_link,
    simulate_scenario,
)


def _multipath_only(k: float, *, seconds: int = 40_000, rate_hz: float = 0.2, seed: int = 3) -> np.ndarray:
    spec = LinkSpec(
        "MP",
        8.0,
        40.0,
        "H",
        -75.0,
        nominal_dbm=-40.0,
        duration_s=seconds,
        noise_db=0.0,
        quantisation_db=0.0,
        effects=(Effect("multipath", 0.0, None, {"k_min": k, "k_max": k, "fade_rate_hz": rate_hz}),),
    )
    return simulate_link(spec, seed=seed).truth_samples["multipath"].to_numpy()


@pytest.mark.parametrize("k_factor", [0.0, 2.0, 8.0])
def test_multipath_envelope_follows_scipy_rice(k_factor):
    # Source: scipy.stats.rice with b = nu/sigma, scale = sigma, nu^2 = K/(K+1), 2 sigma^2 = 1/(K+1) for unit
    # mean power (docs/references.md §5, [C]).  Samples 5 s apart are independent for a 0.2 Hz Gaussian spectrum
    # (autocorrelation exp(-2 pi^2 f^2 tau^2) ~ 1e-9), so the KS p-value is meaningful.
    fade_db = _multipath_only(k_factor)[::5]
    envelope = 10.0 ** (-fade_db / 20.0)
    nu, sigma = np.sqrt(k_factor / (k_factor + 1.0)), np.sqrt(0.5 / (k_factor + 1.0))
    result = stats.kstest(envelope, stats.rice(b=nu / sigma, scale=sigma).cdf)
    assert result.pvalue > 0.01, result
    # and the opposite hypothesis is rejected: K off by a factor of 3 (or Rayleigh vs K = 8) is detectable
    wrong = max(3.0 * k_factor, 2.0)
    nu_w, sigma_w = np.sqrt(wrong / (wrong + 1.0)), np.sqrt(0.5 / (wrong + 1.0))
    assert stats.kstest(envelope, stats.rice(b=nu_w / sigma_w, scale=sigma_w).cdf).pvalue < 1e-3
    # MODELS' K estimator recovers the K used (moment method, Abdi et al. 2001): within 25 % or 0.5
    estimate = fading.rice_k_moments(envelope)
    assert abs(estimate - k_factor) < max(0.25 * k_factor, 0.5)


def test_rayleigh_fade_depth_tail_is_10_db_per_decade():
    # Rayleigh (K = 0): P(fade deeper than F dB) = 1 - exp(-10^(-F/10)) ~ 10^(-F/10), the "10 dB per decade"
    # tail
    # (docs/references.md §5 [C]: 0.095163 at 10 dB, 0.0099502 at 20 dB).
    fade_db = _multipath_only(0.0, seconds=200_000, rate_hz=0.25, seed=11)[::4]
    p10, p20, p25 = (np.mean(fade_db > f) for f in (10.0, 20.0, 25.0))
    assert p10 == pytest.approx(0.095163, rel=0.05)
    assert p20 == pytest.approx(0.0099502, rel=0.15)  # ~500 samples: binomial 1-sigma ~ 4.5 %
    slope_decades_per_10db = np.log10(p10 / p20)
    assert slope_decades_per_10db == pytest.approx(1.0, abs=0.08)
    assert np.log10(p10 / p25) / 1.5 == pytest.approx(1.0, abs=0.12)
    np.testing.assert_allclose(p20, float(fading.rayleigh_cdf_db(-20.0)), rtol=0.15)


def test_multipath_crossing_rate_matches_rayleigh_formula():
    # Rayleigh level-crossing rate N_R = sqrt(2 pi) f_m rho exp(-rho^2) (Rappaport 2nd ed. §5.7.1, via
    # diag.models.fading); the simulator's fade_rate_hz is that f_m.  0.02 Hz keeps -10 dB fades (mean
    # duration
    # 6.6 s) well resolved by 1-s sampling; ~2900 crossings give a 2 % counting error.
    rate_hz = 0.02
    fade_db = _multipath_only(0.0, seconds=200_000, rate_hz=rate_hz, seed=5)
    level = -fade_db
    for threshold_db in (-10.0, -5.0):
        below = level < threshold_db
        crossings = np.count_nonzero(below[1:] & ~below[:-1]) / len(level)
        expected = float(fading.rayleigh_level_crossing_rate_hz(threshold_db, rate_hz))
        assert crossings == pytest.approx(expected, rel=0.12)


def test_multipath_upfades_and_weak_correlation_between_polarisations():
    spec = LinkSpec(
        "MP2",
        11.0,
        35.0,
        "dual",
        -75.0,
        nominal_dbm=-40.0,
        duration_s=30_000,
        noise_db=0.0,
        quantisation_db=0.0,
        effects=(
            Effect(
                "multipath", 0.0, None, {"k_min": 0.0, "k_max": 0.0, "fade_rate_hz": 0.1, "correlation": 0.3}
            ),
        ),
    )
    truth = simulate_link(spec, seed=2).truth_samples
    h = truth.loc[truth.channel == "H", "multipath"].to_numpy()
    v = truth.loc[truth.channel == "V", "multipath"].to_numpy()
    assert (h < -3.0).mean() > 0.01  # upfades above the mean level occur (P.530 §2.3.3: enhancements)
    power_corr = np.corrcoef(10 ** (-h / 10), 10 ** (-v / 10))[0, 1]
    assert 0.03 < power_corr < 0.25  # |rho|^2 = 0.09 for complex correlation 0.3 (Gaussian scatter)


@pytest.mark.parametrize("frequency_ghz", [15.0, 23.0, 38.0])
def test_constant_rain_equals_p838_times_length(frequency_ghz):
    import itur.models.itu838 as itu838

    length_km, rate = 7.5, 50.0
    spec = LinkSpec(
        "RN",
        frequency_ghz,
        length_km,
        "dual",
        -70.0,
        nominal_dbm=-35.0,
        duration_s=3600,
        noise_db=0.0,
        quantisation_db=0.0,
        effects=(
            Effect("rain", 600.0, 1200.0, {"profile": "constant", "peak_mmh": rate, "wet_antenna_db": 0.0}),
        ),
    )
    truth = simulate_link(spec, seed=0).truth_samples
    inside = truth.rain_rate_mmh > 0
    assert inside.sum() == 2 * 1200
    for channel, tau in (("H", 0.0), ("V", 90.0)):
        rain = truth.loc[inside & (truth.channel == channel), "rain"].to_numpy()
        # reference library: itur 0.4.0 (ITU-Rpy) P.838-3 specific attenuation, elevation 0
        gamma = float(itu838.rain_specific_attenuation(rate, frequency_ghz, 0.0, tau).value)
        np.testing.assert_allclose(rain, gamma * length_km, rtol=1e-9)
    if frequency_ghz == 23.0:
        # docs/references.md §2 [C]: gamma(23 GHz, 50 mm/h) = 6.9929 (H) and 5.5532 (V) dB/km
        assert truth.loc[inside & (truth.channel == "H"), "rain"].iloc[0] == pytest.approx(
            6.9929 * 7.5, rel=1e-4
        )
        assert truth.loc[inside & (truth.channel == "V"), "rain"].iloc[0] == pytest.approx(
            5.5532 * 7.5, rel=1e-4
        )


def test_storm_fades_h_more_than_v_at_23_ghz_and_degrades_xpd():
    spec = LinkSpec(
        "ST",
        23.0,
        8.0,
        "dual",
        -72.0,
        nominal_dbm=-36.0,
        duration_s=4 * 3600,
        noise_db=0.0,
        quantisation_db=0.0,
        effects=(Effect("rain", 3600.0, 5400.0, {"peak_mmh": 40.0}),),
    )
    result = simulate_link(spec, seed=4)
    truth = result.truth_samples
    h = truth.loc[truth.channel == "H"].reset_index(drop=True)
    v = truth.loc[truth.channel == "V"].reset_index(drop=True)
    wet = h.rain_rate_mmh > 1.0
    assert wet.sum() > 600
    # kH R^aH > kV R^aV at 23 GHz for R > 1 mm/h (P.838-3 Tables 1-4; docs/references.md §2 table)
    assert (h.rain[wet] > v.rain[wet]).all()
    # a realistic storm: onset within the storm window, a dry start and end
    assert h.rain_rate_mmh.iloc[:3600].max() == 0.0 and h.rain_rate_mmh.max() == pytest.approx(40.0)
    # XPD follows U - V log CPA (P.530 §4) combined in power with the antennas' 35 dB
    table = result.table
    xpd_h = table[(table.channel == "H") & (table.quantity == schema.XPD) & (table.status == "ok")]
    xpd_h = xpd_h.set_index("time_utc")["value"]
    cpa = h.set_index("time_utc").rain
    deep = cpa[cpa > 10.0].index.intersection(xpd_h.index)
    assert len(deep) > 100
    expected = -10 * np.log10(10 ** (-35 / 10) + 10 ** (-np.asarray(p530.xpd_rain_db(cpa[deep], 23.0)) / 10))
    np.testing.assert_allclose(xpd_h[deep].to_numpy(), expected, atol=1e-6)


def test_tilt_lowers_xpd_to_20_log_cot_and_costs_copolar_loss():
    # XPD = 20 log cot(tilt), co-polar loss -20 log cos(tilt) (docs/references.md §6 [C]: 10 deg -> 15.07 dB, 0.1330
    # dB)
    step_at = 3600.0
    spec = LinkSpec(
        "TL",
        18.0,
        12.0,
        "dual",
        -72.0,
        nominal_dbm=-40.0,
        duration_s=7200,
        noise_db=0.0,
        quantisation_db=0.0,
        xpd_antenna_db=60.0,
        effects=(Effect("level_shift", step_at, None, {"step_db": 2.0, "tilt_deg": 10.0}),),
    )
    result = simulate_link(spec, seed=0)
    table = result.table
    h = table[(table.channel == "H")]
    xpd = h[h.quantity == schema.XPD]["value"].to_numpy()
    rsl = h[h.quantity == schema.RSL]["value"].to_numpy()
    before, after = slice(0, 3600), slice(3600, None)
    combined = -10 * np.log10(10 ** (-60 / 10) + 10 ** (-15.07 / 10))  # the 60 dB antennas barely matter
    assert xpd[after] == pytest.approx(np.full(3600, combined), abs=0.006)  # 15.07 is given to 2 decimals
    assert xpd[before] == pytest.approx(np.full(3600, 60.0), abs=1e-9)
    assert rsl[before].mean() - rsl[after].mean() == pytest.approx(2.0 + 0.1330, abs=1e-3)
    events = result.truth_events
    assert set(events.loc[events.kind == "level_shift", "tilt_deg"]) == {10.0}
    assert (
        events.loc[events.kind == "level_shift", "shift_utc"] == pd.Timestamp("2026-06-01T01:00:00Z")
    ).all()


def test_atpc_holds_rsl_while_tsl_rises_then_floor_and_gap_bookkeeping():
    spec = LinkSpec(
        "AT",
        23.0,
        5.0,
        "V",
        -70.0,
        nominal_dbm=-45.0,
        duration_s=4 * 3600,
        noise_db=0.0,
        quantisation_db=0.0,
        atpc=True,
        atpc_range_db=10.0,
        tx_dbm=18.0,
        effects=(
            Effect("refractive", 600.0, 3600.0, {"depth_db": 8.0}),
            Effect("signal_loss", 7200.0, 300.0),
            Effect("gap", 9000.0, 120.0),
        ),
    )
    result = simulate_link(spec, seed=1)
    table = result.table
    rsl = table[table.quantity == schema.RSL].set_index("time_utc")
    tsl = table[table.quantity == schema.TSL].set_index("time_utc")["value"]
    fade = result.truth_samples.set_index("time_utc")["refractive"]
    inside = fade.index[fade > 1.0]
    np.testing.assert_allclose(rsl.loc[inside, "value"], -45.0, atol=1e-9)  # ATPC keeps the level
    np.testing.assert_allclose(tsl[inside], 8.0 + fade[inside], atol=0.0501)  # by raising the transmitter
    # (TSL is logged in 0.1 dB steps)
    lost = rsl.loc["2026-06-01T02:00:00Z":"2026-06-01T02:04:59Z"]
    assert len(lost) == 300 and (lost.status == schema.SIGNAL_LOST).all() and lost.value.isna().all()
    gap = table[(table.time_utc >= "2026-06-01T02:30:00Z") & (table.time_utc < "2026-06-01T02:32:00Z")]
    assert gap.empty
    assert len(table) == 2 * (4 * 3600 - 120)
    truth = result.truth_samples
    assert (~truth.logged).sum() == 120
    assert set(truth.loc[truth.signal_loss > 0, "cause"]) == {"signal_loss"}


def test_truth_labels_and_table_schema():
    scenario = random_scenario(123, n_links=2, duration_h=12)
    results, links = simulate_scenario(scenario, seed=5)
    assert [link.link_id for link in links] == [spec.link_id for spec in scenario.links]
    for result in results.values():
        table = result.table
        assert list(table.columns) == schema.COLUMNS
        assert schema.conforms(table)   # categorical key columns (diag.schema)
        assert set(table.status) <= set(schema.STATUSES)
        assert table.loc[table.status != schema.OK, "value"].isna().all()
        order = table.sort_values(
            [schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.TIME], kind="stable"
        )
        assert order.index.equals(table.index)  # sorted as the schema requires
        truth = result.truth_samples
        total = truth[list(TRUTH_CAUSES)].sum(axis=1)
        np.testing.assert_allclose(total, truth.total_fade_db, atol=1e-9)
        faded = truth.total_fade_db > 3.0
        assert (truth.cause[faded] != "").all() and (truth.cause[~faded] == "").all()
        largest = truth[list(TRUTH_CAUSES)].idxmax(axis=1)
        assert (truth.cause[faded] == largest[faded]).all()


@pytest.mark.slow
def test_same_seed_same_numbers_other_seed_other_numbers():
    scenario = random_scenario(7, n_links=1, duration_h=6)
    a, _ = simulate_scenario(scenario, seed=1)
    b, _ = simulate_scenario(scenario, seed=1)
    c, _ = simulate_scenario(scenario, seed=2)
    key = scenario.links[0].link_id
    pd.testing.assert_frame_equal(a[key].table, b[key].table)
    pd.testing.assert_frame_equal(a[key].truth_samples, b[key].truth_samples)
    assert not a[key].table["value"].equals(c[key].table["value"])


def test_aggregate_statistics_min_avg_max():
    spec = LinkSpec(
        "AG",
        15.0,
        10.0,
        "H",
        -74.0,
        nominal_dbm=-40.0,
        duration_s=3600,
        noise_db=0.3,
        effects=(Effect("signal_loss", 100.0, 10.0),),
    )
    result = simulate_link(spec, seed=0)
    stats_table = aggregate_statistics(result.table, interval_s=900, floor_dbm=-99.0)
    assert len(stats_table) == 4 * 3
    first = stats_table[stats_table.time_utc == stats_table.time_utc.min()].set_index("stat")
    assert first.loc["min", "status"] == schema.SIGNAL_LOST  # the floor was seen in the first 15 min
    samples = result.table["value"].to_numpy()[:900]
    expected_avg = np.mean(np.where(np.isnan(samples), -99.0, samples))
    assert first.loc["avg", "value"] == pytest.approx(expected_avg, abs=0.006)
    assert first.loc["max", "value"] == pytest.approx(np.nanmax(samples))


def test_bad_specs_raise_input_error():
    with pytest.raises(InputError, match="unknown effect kind"):
        Effect("hail", 0.0, 10.0)
    with pytest.raises(InputError, match="floor_dbm"):
        LinkSpec("X", 23.0, 5.0, "H", -70.0, floor_dbm=-60.0)
    with pytest.raises(InputError, match="polarization"):
        LinkSpec("X", 23.0, 5.0, "circular", -70.0)
    with pytest.raises(InputError, match="interval_s"):
        LinkSpec("X", 23.0, 5.0, "H", -70.0, interval_s=0.0)


def test_wet_antenna_dries_after_the_rain_and_drift_accumulates():
    # wet-antenna loss outlasts the rain and dries out exponentially (shape after Schleiss et al., IEEE GRSL
    # 10,
    # 2013; the time constant is the scenario's drying_min); drift adds db_per_week linearly (common practice:
    # vegetation growth is slow and steady)
    spec = LinkSpec(
        "WA",
        23.0,
        6.0,
        "H",
        -70.0,
        nominal_dbm=-38.0,
        duration_s=6 * 3600,
        noise_db=0.0,
        quantisation_db=1.0,
        effects=(
            Effect("rain", 1800.0, 1800.0, {"peak_mmh": 20.0, "wet_antenna_db": 2.0, "drying_min": 15.0}),
            Effect("drift", 0.0, None, {"db_per_week": 7.0}),
        ),
    )
    result = simulate_link(spec, seed=8)
    truth = result.truth_samples.set_index("time_utc")
    after = truth.loc["2026-06-01T01:00:00Z":, "rain"]
    assert (truth.loc["2026-06-01T01:00:00Z":, "rain_rate_mmh"] == 0).all()
    w0 = after.iloc[0]
    assert 0.5 < w0 <= 2.0
    w15 = after.loc["2026-06-01T01:15:00Z"]
    assert w15 / w0 == pytest.approx(np.exp(-1.0), rel=0.05)  # one drying time constant later
    assert truth["level_shift"].iloc[-1] == pytest.approx(7.0 * 6 / 168, rel=1e-3)
    values = result.table["value"].dropna().to_numpy()
    np.testing.assert_array_equal(values, np.round(values))  # 1 dB quantisation
