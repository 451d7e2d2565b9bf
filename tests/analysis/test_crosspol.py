"""Cross-polar analysis (diag.analysis.crosspol).

Tilt and XPD: the co- and cross-polar levels of a rotated feed are built HERE from Jones vectors, not by the
simulator.  A linearly polarised wave E = (1, 0) meets a feed rotated by theta whose ports respond to
u = (cos t, sin t) and v = (-sin t, cos t), each with the antenna's own cross-polar response c (|c| = 10^(-XPD_a/20),
taken in quadrature, c = j|c|, the case in which the two leaks add in power exactly):
co = u.E + c v.E = cos t - c sin t,  cross = v.E + c u.E = -sin t + c cos t  (docs/references.md §6: polarisation loss
factor cos^2 t, leak sin^2 t; Balanis, Antenna Theory, 3rd ed. §2.12.2).  Tolerance: +-10 % of the tilt or
+-0.3 deg, whichever is larger (issue 17).
Rain XPD: built here from the P.530-17 §4.2 relation XPD = U - V log10(CPA) with a U0 other than the project's
(12 dB instead of 15), so the fit must find the 3-dB difference.  H/V ratio: itur 0.4.0 (ITU-R P.838-3).
Other inputs (H/V ratio, single polarisation) come from diag.sim.simulate and check only the plumbing.
"""
import json
import math

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.analysis import crosspol
from diag.links import make_link
from diag.results import ChannelSeries, LinkResult
from diag.sim.simulate import Effect, LinkSpec

T0 = pd.Timestamp("2026-06-01T00:00:00Z")
STEP_AT = pd.Timestamp("2026-06-01T12:00:00Z")   # the feed is turned at noon (a maintenance visit)


def _rotated_feed_levels(tilt_deg, antenna_xpd_db):
    """(co, cross) received amplitudes of a feed rotated by ``tilt_deg`` (Jones vectors, see the module docstring)."""
    t = math.radians(tilt_deg)
    c = 1j * 10 ** (-antenna_xpd_db / 20)
    return abs(math.cos(t) - c * math.sin(t)), abs(-math.sin(t) + c * math.cos(t))


def _feed_result(tilt_deg, antenna_xpd_db, *, column="xpl_dbm", rain_u0_db=None, seed=0, hours=24):
    """A dual-polarised 23-GHz hop logged every minute: clear sky, the feed turned by ``tilt_deg`` at noon; with
    ``rain_u0_db`` a 2-h rain event at 04:00 whose XPD follows P.530-17 §4.2 with that U0 (V = 22.6 dB at 23 GHz).
    Levels carry 0.1 dB rms noise and 0.1 dB readout steps (common practice for RSL readouts)."""
    rng = np.random.default_rng(seed)
    idx = pd.date_range(T0, periods=hours * 60, freq="60s", name=S.TIME)
    turned = idx >= STEP_AT
    co0, cross0 = _rotated_feed_levels(0.0, antenna_xpd_db)
    co1, cross1 = _rotated_feed_levels(tilt_deg, antenna_xpd_db)
    co = np.where(turned, 20 * np.log10(co1), 20 * np.log10(co0))
    static_xpd = np.where(turned, 20 * np.log10(co1 / cross1), 20 * np.log10(co0 / cross0))
    cpa = np.zeros(len(idx))
    cause = np.full(len(idx), "", dtype=object)
    xpd = static_xpd.copy()
    if rain_u0_db is not None:
        rain = (idx >= T0 + pd.Timedelta(hours=4)) & (idx < T0 + pd.Timedelta(hours=6))
        k = np.arange(rain.sum())
        cpa[rain] = 1.0 + 24.0 * np.sin(np.pi * k / rain.sum()) ** 2          # 1 .. 25 dB co-polar attenuation
        rain_xpd = rain_u0_db + 30 * math.log10(23.0) - 22.6 * np.log10(cpa[rain])   # P.530-17 §4.2, V(23) = 22.6
        xpd[rain] = -10 * np.log10(10 ** (-static_xpd[rain] / 10) + 10 ** (-rain_xpd / 10))
        cause[rain] = S.RAIN
    rsl = np.round(-40.0 + co - cpa + rng.normal(0, 0.1, len(idx)), 1)
    xpl = np.round(-40.0 + co - cpa - xpd + rng.normal(0, 0.1, len(idx)), 1)
    series = {}
    for ch in ("H", "V"):   # by symmetry the V port of the turned feed sees the same magnitudes
        frame = pd.DataFrame({"rsl_dbm": rsl, "status": pd.array([S.OK] * len(idx), dtype="str"),
                              "reference_dbm": -40.0, "attenuation_db": np.clip(-40.0 - rsl, 0, None),
                              "event_id": -1, "cause": pd.array(cause.astype(str), dtype="str")}, index=idx)
        frame[column] = xpl if column == "xpl_dbm" else rsl - xpl
        series[ch] = ChannelSeries(link_id="xp", channel=ch, interval_s=60.0, kind="sample", frame=frame)
    link = make_link({"link_id": "xp", "frequency_ghz": 23, "length_km": 10, "polarization": "dual",
                      "threshold_dbm": -75, "xpd_required_db": 25})
    return LinkResult(link=link, series=series, events=pd.DataFrame(columns=S.EVENT_COLUMNS))


def _tilt_tolerance(tilt_deg):
    return max(0.1 * tilt_deg, 0.3)   # issue 17: +-10 % of the tilt or +-0.3 deg, whichever is larger


@pytest.mark.parametrize("tilt", [1.0, 3.0, 5.0, 10.0])
@pytest.mark.parametrize("column", ["xpl_dbm", "xpd_db"])
def test_tilt_of_a_rotated_feed(tilt, column):
    # antennas of 35 dB own XPD, the value the analysis assumes by default
    out = crosspol.cross_polar(_feed_result(tilt, 35.0, column=column))
    assert out["tilt_deg"] == pytest.approx(tilt, abs=_tilt_tolerance(tilt))
    seg = out["xpd"][out["tilt_channel"]]["segments"]
    assert len(seg) == 2 and abs(pd.Timestamp(seg[1]["start_utc"]) - STEP_AT) <= pd.Timedelta(minutes=15)
    # the co-polar loss reported is the drop the construction put in, within what the tilt tolerance allows
    co_drop = -20 * math.log10(_rotated_feed_levels(tilt, 35.0)[0])
    lo, hi = (-20 * math.log10(math.cos(math.radians(t)))
              for t in (tilt - _tilt_tolerance(tilt), tilt + _tilt_tolerance(tilt)))
    assert max(lo, 0.0) <= out["copolar_loss_db"] <= hi and lo <= co_drop <= hi


@pytest.mark.parametrize("tilt", [5.0, 10.0])
def test_tilt_when_the_antennas_are_worse_than_assumed(tilt):
    # 30-dB antennas read with the default 35-dB assumption: the extra leak is taken for tilt.  From 5 deg up the
    # estimate stays within 10 %; at 1-3 deg it does not (1 deg reads as ~1.7 deg, 3 as ~3.3: the limit of the power-sum
    # inversion with an unknown antenna XPD, reported beside the estimate as tilt_deg_by_antenna_xpd_db)
    out = crosspol.cross_polar(_feed_result(tilt, 30.0))
    assert out["tilt_deg"] == pytest.approx(tilt, abs=_tilt_tolerance(tilt))
    assert out["xpd"][out["tilt_channel"]]["tilt_deg_by_antenna_xpd_db"]["30"] == pytest.approx(
        tilt, abs=_tilt_tolerance(tilt))


def test_tilt_from_measured_xpd_inverts_a_quadrature_leak():
    # a 5-deg feed on 35-dB antennas, co and cross built from Jones vectors (module docstring); docs/references.md §6:
    # 20 log cot(5 deg) = 21.16 dB for a perfect antenna
    co, cross = _rotated_feed_levels(5.0, 35.0)
    # (the co level carries |c|^2 sin^2 t too: the power-sum inversion is exact to terms of order |c|^2 tan^2 t)
    assert crosspol.tilt_from_measured_xpd_deg(20 * math.log10(co / cross), 35.0) == pytest.approx(5.0, rel=1e-5)
    co, cross = _rotated_feed_levels(5.0, math.inf)
    assert 20 * math.log10(co / cross) == pytest.approx(21.16, abs=0.01)
    assert crosspol.tilt_from_measured_xpd_deg(36.0, 35.0) == 0.0


def test_xpd_flag_and_rain_fit_next_to_p530():
    # a 7-deg feed (XPD 20 log cot 7 = 18.2 dB, docs/references.md §6) against 25 dB required, and rain
    # depolarising with U0 = 12 dB, 3 dB below the P.530 default the analysis compares with (U0 = 15)
    out = crosspol.cross_polar(_feed_result(7.0, 35.0, rain_u0_db=12.0))
    h = out["xpd"]["H"]
    assert h["below_required"] is True
    rain = h["rain"]
    # P.530 values (diag.models.p530): U - V log10(15) = 29.27 dB at 23 GHz (docs/references.md §3.3, computed
    # from the Rec)
    assert rain["p530"]["u_db"] - rain["p530"]["v_db"] * math.log10(15) == pytest.approx(29.27, abs=0.02)
    # the equiprobable fit finds the U0 put into the data: 3 dB below P.530 at every CPA, within the 0.1-dB
    # readout and noise of the levels (0.5 dB)
    assert rain["equiprobable_fit"]["v_db"] == pytest.approx(22.6, abs=1.0)
    for cpa in ("5", "10", "20"):
        assert rain["difference_from_p530_at_cpa_db"][cpa] == pytest.approx(-3.0, abs=0.5)
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


def test_single_polarisation_without_xpd_skips_by_name(hops):
    spec = LinkSpec(link_id="h", frequency_ghz=18, length_km=5, polarization="H", threshold_dbm=-80,
                    duration_s=3600)
    out = crosspol.cross_polar(hops.truth(spec, seed=0))
    assert out["xpd"] == {} and "hv" not in out
    assert len(out["skipped"]) >= 2 and all(isinstance(s, str) for s in out["skipped"])
