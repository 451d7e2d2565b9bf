"""Cross-polar analysis (diag.analysis.crosspol).

Sources: issue 5 accuracy bar (tilt within +-1 deg for tilts of 1-10 deg); REFERENCES.md §6 (tilt loss and XPD:
XPD = 20 log cot(tilt), loss = -20 log cos(tilt)); REFERENCES.md §3.3 (P.530 rain XPD: f = 23 GHz, CPA = 15 dB gives
29.27 dB); itur 0.4.0 (ITU-R P.838-3 gamma for the H/V ratio check).  Inputs from diag.sim.simulate, whose antennas
have their own XPD (xpd_antenna_db) added in power to the tilt leak.
"""
import json
import math

import pandas as pd
import pytest

from diag.analysis import crosspol
from diag.sim.simulate import Effect, LinkSpec


def _dual(hops, tilt, *, antenna_xpd=35.0, seed=2, rain=True, required=25.0, hours=24):
    effects = [Effect("level_shift", 3600 * 12, None, {"step_db": 3, "tilt_deg": tilt})]
    if rain:
        effects.append(Effect("rain", 3600 * 5, 3600 * 2, {"peak_mmh": 60}))
    spec = LinkSpec(link_id="xp", frequency_ghz=23, length_km=10, polarization="dual", threshold_dbm=-75,
                    duration_s=hours * 3600, xpd_required_db=required, xpd_antenna_db=antenna_xpd,
                    effects=tuple(effects))
    return hops.truth(spec, seed=seed)


@pytest.mark.parametrize("tilt", [1.0, 3.0, 5.0, 10.0])
@pytest.mark.parametrize("antenna_xpd", [35.0, 30.0])
def test_tilt_within_one_degree(hops, tilt, antenna_xpd):
    # antenna_xpd 30 dB checks the default assumption (35 dB) being wrong by 5 dB: still within the bar
    out = crosspol.cross_polar(_dual(hops, tilt, antenna_xpd=antenna_xpd, rain=False, hours=18))
    assert abs(out["tilt_deg"] - tilt) <= 1.0                    # issue 5: +-1 deg for tilts of 1-10 deg
    seg = out["xpd"][out["tilt_channel"]]["segments"]
    if tilt >= 3.0:   # the XPD step of a 1-deg tilt on a 30-dB antenna (1.2 dB) is below the 1.5-dB step size
        assert len(seg) == 2 and pd.Timestamp(seg[1]["start_utc"]) == pd.Timestamp("2026-06-01T12:00:00Z")
    # REFERENCES §6: co-polar loss of the tilt = -20 log10 cos(tilt)
    assert out["copolar_loss_db"] == pytest.approx(-20 * math.log10(math.cos(math.radians(out["tilt_deg"]))),
                                                   abs=1e-3)


def test_tilt_from_measured_xpd_inverts_power_sum():
    # REFERENCES §6: XPD(tilt) = 20 log cot(tilt) -> 5 deg gives 21.16 dB; with a 35 dB antenna leak added in power
    measured = -10 * math.log10(10 ** (-21.16 / 10) + 10 ** (-35 / 10))
    assert crosspol.tilt_from_measured_xpd_deg(measured, 35.0) == pytest.approx(5.0, abs=0.01)
    assert crosspol.tilt_from_measured_xpd_deg(36.0, 35.0) == 0.0


def test_xpd_flag_and_rain_fit_next_to_p530(hops):
    out = crosspol.cross_polar(_dual(hops, 7.0))
    h = out["xpd"]["H"]
    assert h["below_required"] is True                  # 7 deg -> XPD about 18 dB < 25 dB required
    rain = h["rain"]
    # P.530 values (diag.models.p530): U - V log10(15) = 29.27 dB at 23 GHz (REFERENCES §3.3)
    assert rain["p530"]["u_db"] - rain["p530"]["v_db"] * math.log10(15) == pytest.approx(29.27, abs=0.02)
    # the simulator depolarises rain by the P.530 relation: the equiprobable fit recovers it within 1 dB
    for cpa in ("5", "10", "20"):
        assert abs(rain["difference_from_p530_at_cpa_db"][cpa]) <= 1.0
    json.dumps(out)


def test_hv_rain_ratio_matches_p838_via_itur(hops):
    import itur.models.itu838 as itu838

    spec = LinkSpec(link_id="hv", frequency_ghz=23, length_km=10, polarization="dual", threshold_dbm=-90,
                    duration_s=4 * 3600, effects=(Effect("rain", 3600, 3600, {"peak_mmh": 30, "profile": "constant",
                                                                                 "wet_antenna_db": 0.0}),))
    result = hops.truth(spec, seed=1)
    # drop the XPD column: the H/V path is the fallback when only levels are logged
    for s in result.series.values():
        del s.frame["xpd_db"]
    out = crosspol.cross_polar(result)
    ratio = out["hv"]["rain_ratio"]
    gamma_h = itu838.rain_specific_attenuation(30, 23, 0, 0).value
    gamma_v = itu838.rain_specific_attenuation(30, 23, 0, 90).value
    assert ratio["observed_av_over_ah"] == pytest.approx(gamma_v / gamma_h, abs=0.03)
    assert ratio["p838_av_over_ah"] == pytest.approx(gamma_v / gamma_h, abs=0.01)
    assert ratio["consistent_with_rain"] is True
    assert abs(out["hv"]["clear_sky_imbalance_db"]) < 1.0
    assert any("XPD" in s for s in out["skipped"])


def test_cross_polar_level_column_gives_xpd(hops):
    result = _dual(hops, 3.0, rain=False, hours=14)
    for s in result.series.values():
        s.frame["xpl_dbm"] = s.frame["rsl_dbm"] - s.frame.pop("xpd_db")
    out = crosspol.cross_polar(result)
    assert abs(out["tilt_deg"] - 3.0) <= 1.0


def test_single_polarisation_without_xpd_skips_by_name(hops):
    spec = LinkSpec(link_id="h", frequency_ghz=18, length_km=5, polarization="H", threshold_dbm=-80,
                    duration_s=3600)
    out = crosspol.cross_polar(hops.truth(spec, seed=0))
    assert out["xpd"] == {} and "hv" not in out
    assert len(out["skipped"]) >= 2 and all(isinstance(s, str) for s in out["skipped"])
