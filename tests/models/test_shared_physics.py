"""The shared hop physics (one place each): P.838-3 rain rate and V/H ratio for given coefficients
(diag.models.p838), the links table's plausibility ranges and a channel's polarisation (diag.links), and the rain
plausibility rule (diag.analysis.features).

Sources: ITU-R P.838-3 (03/2005) eq. (1) with the coefficient values of docs/references.md §2 table [C]
(computed from the P.838-3 regressions, matching itur 0.4.0), the same values test_models_p838 checks.
"""
import math

import numpy as np
import pytest

from diag.analysis.features import rain_plausible
from diag.config import AnalysisConfig
from diag.errors import InputError
from diag.links import PLAUSIBLE_RANGES, channel_polarization, in_plausible_range, make_link
from diag.models import p838

# f [GHz], k_H, alpha_H, k_V, alpha_V (P.838-3 regressions, docs/references.md §2 table [C])
COEFFICIENTS = [(11, 0.017719, 1.2140, 0.017307, 1.1617), (18, 0.070784, 1.0818, 0.077076, 1.0025),
                (23, 0.12864, 1.0214, 0.12836, 0.9630), (38, 0.40011, 0.8816, 0.38440, 0.8552)]


@pytest.mark.parametrize("f, kh, ah, kv, av", COEFFICIENTS)
def test_hv_coefficients_match_the_reference_values(f, kh, ah, kv, av):
    coef = p838.hv_coefficients(f)
    assert coef["H"] == pytest.approx((kh, ah), rel=5e-4)
    assert coef["V"] == pytest.approx((kv, av), rel=5e-4)


@pytest.mark.parametrize("f, kh, ah, kv, av", COEFFICIENTS)
def test_rain_rate_inverts_eq_1(f, kh, ah, kv, av):
    # A = k R^alpha L (P.838-3 eq. (1), uniform rain) for the reference coefficients, then back to R
    length_km = 7.5
    rates = np.array([0.5, 5.0, 25.0, 80.0, 150.0])
    att = kh * rates ** ah * length_km
    got = p838.rain_rate_for_coefficients_mmh(att, length_km, kh, ah)
    assert got == pytest.approx(rates, rel=1e-12)
    # one value (Python floats) and the vector give the same rate to the last few bits
    for a, r in zip(att, got):
        assert p838.rain_rate_for_coefficients_mmh(float(a), length_km, kh, ah) == pytest.approx(r, rel=1e-14)
    # no rain for a level at or above the reference, or no value
    assert p838.rain_rate_for_coefficients_mmh(-2.0, length_km, kh, ah) == 0.0
    assert p838.rain_rate_for_coefficients_mmh(math.nan, length_km, kh, ah) == 0.0
    assert p838.rain_rate_for_coefficients_mmh(np.array([0.0, -1.0, np.nan]), length_km, kh, ah).tolist() == [0, 0, 0]


@pytest.mark.parametrize("f, kh, ah, kv, av", COEFFICIENTS)
def test_v_over_h_is_the_ratio_of_the_specific_attenuations(f, kh, ah, kv, av):
    coef = p838.hv_coefficients(f)
    for rate in (1.0, 10.0, 50.0, 120.0):
        expected = (kv * rate ** av) / (kh * rate ** ah)   # eq. (1) for V over eq. (1) for H
        assert p838.v_over_h_ratio(rate, coef) == pytest.approx(expected, rel=2e-3)
        # the same ratio from the general tilt form (eqs. (4), (5) at 90 and 0 deg)
        ratio = (p838.specific_attenuation_db_per_km(rate, f, 90.0)
                 / p838.specific_attenuation_db_per_km(rate, f, 0.0))
        assert p838.v_over_h_ratio(rate, coef) == pytest.approx(ratio, rel=1e-9)
    assert math.isnan(p838.v_over_h_ratio(0.0, coef))
    vector = p838.v_over_h_ratio(np.array([0.0, 10.0]), coef)
    assert math.isnan(vector[0]) and vector[1] == pytest.approx(p838.v_over_h_ratio(10.0, coef), rel=1e-14)


def test_rain_plausible_bounds():
    config = AnalysisConfig()
    assert rain_plausible(30.0, config) is True
    assert rain_plausible(0.0, config) is False
    assert rain_plausible(config.rain_plausible_max_mmh, config) is True
    assert rain_plausible(config.rain_plausible_max_mmh + 1.0, config) is False
    assert rain_plausible(np.array([0.0, 30.0, 1e4, np.nan]), config).tolist() == [False, True, False, False]


def test_plausible_ranges_are_the_links_table_rule():
    lo, hi = PLAUSIBLE_RANGES["frequency_ghz"]
    assert in_plausible_range("frequency_ghz", [lo, 23.0, hi]).all()
    assert not in_plausible_range("frequency_ghz", [lo / 2, hi * 2, np.nan]).any()
    # the links table refuses what the ranges refuse
    values = {"link_id": "X", "frequency_ghz": hi * 2, "length_km": 5, "polarization": "H", "threshold_dbm": -70}
    with pytest.raises(InputError):
        make_link(values)


def test_channel_polarization_one_rule():
    dual = make_link({"link_id": "D", "frequency_ghz": 23, "length_km": 5, "polarization": "dual",
                      "threshold_dbm": -70})
    single_v = make_link({"link_id": "S", "frequency_ghz": 23, "length_km": 5, "polarization": "V",
                          "threshold_dbm": -70})
    assert channel_polarization("H", dual) == "H" and channel_polarization("main V", dual) == "V"
    assert channel_polarization("A>B", dual) is None
    assert channel_polarization("A>B", dual, default="H") == "H"
    # on a single-polarised hop the links table wins over a name that reads like a polarisation token
    assert channel_polarization("S1>H2", single_v) == "V"
