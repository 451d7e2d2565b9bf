"""Hard physics limits of cause attribution (diag.analysis.attribution / priors), on small synthetic series.

Each series here is written by the test itself (a smooth fade profile plus 0.1-dB receiver noise, read through the
ordinary log reader): no simulator cause logic is involved.  Sources beside each check:

- ITU-R P.530-17 §2.3 (clear-air fading: p_w = K d^3.4 (1 + |eps_p|)^-1.03 f^0.8 10^(-A/10), shallow-fade
  interpolation eqs. (12)-(18); docs/references.md §8: "negligible below 5 km");
- ITU-R P.530-17 §2.4.1 with ITU-R P.838-3 (rain attenuation exceeded p % of the year);
- ITU-R P.526 eq. (31) knife-edge loss with the Earth-bulge change between k = 4/3 and k = 0.5 (refractive depth);
- recorded rain rates: path averages beyond ~500 mm/h are unrecorded (from memory; see attribution.RAIN_RATE_MAX_MMH).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.analysis.attribution import RAIN_RATE_MAX_MMH, F, attribute, evidence_terms, implied_rate_mmh
from diag.analysis.priors import clear_air_negligible, hop_prior
from diag.config import AnalysisConfig
from diag.links import make_link
from diag.pipeline import analyze_link
from diag.read.ingest import read_log

START = pd.Timestamp("2026-03-02T00:00:00Z")



POSTERIOR = AnalysisConfig(attribution="posterior")   # the physics attribution under test (the default)

def _link(f, d, pol="H", **extra):
    return make_link({"link_id": "T", "frequency_ghz": f, "length_km": d, "polarization": pol,
                      "threshold_dbm": -85.0, **extra})


def _raised(t_s, start_s, rise_s, hold_s, fall_s, depth_db):
    """Smooth fade: raised-cosine onset, flat top, raised-cosine recovery (depth in dB, positive)."""
    x = np.zeros_like(t_s, dtype=float)
    a = (t_s >= start_s) & (t_s < start_s + rise_s)
    x[a] = 0.5 * (1 - np.cos(np.pi * (t_s[a] - start_s) / rise_s))
    b = (t_s >= start_s + rise_s) & (t_s < start_s + rise_s + hold_s)
    x[b] = 1.0
    c = (t_s >= start_s + rise_s + hold_s) & (t_s < start_s + rise_s + hold_s + fall_s)
    x[c] = 0.5 * (1 + np.cos(np.pi * (t_s[c] - start_s - rise_s - hold_s) / fall_s))
    return depth_db * x


def _analyse(tmp_path, link, fade_db, *, step_s=60, hours=12, seed=1):
    t = np.arange(0, hours * 3600, step_s, dtype=float)
    rng = np.random.default_rng(seed)
    level = -45.0 - fade_db(t) + rng.normal(0.0, 0.1, t.size)
    times = (START + pd.to_timedelta(t, unit="s")).strftime("%Y-%m-%dT%H:%M:%SZ")
    path = tmp_path / "hop.csv"
    pd.DataFrame({"time_utc": times, "rsl_dbm": np.round(level, 1)}).to_csv(path, index=False)
    table = read_log(str(path), link_id=link.link_id).table
    events = analyze_link(table, link, config=POSTERIOR).events
    return events[events["event_kind"] == "fade"]


def _deepest(events):
    assert len(events), "no fade event found"
    return events.loc[events["peak_fade_db"].idxmax()]


def test_27_db_smooth_fade_on_short_38_ghz_hop_is_not_refractive(tmp_path):
    # P.530 §2.3: clear-air fading on a 3.5-km hop (below 5 km) at 27 dB is negligible; P.526/bulge: k from 4/3 to
    # 0.5 raises the bulge by 0.3 m against F1 = 2.6 m, so refraction cannot fade it by 27 dB.  Rain can (P.530
    # §2.4 with R0.01 = 35 mm/h gives A0.01 ~ 26 dB on this hop).
    link = _link(38.0, 3.5)
    assert clear_air_negligible(hop_prior(link), 27.0)[0]
    row = _deepest(_analyse(tmp_path, link, lambda t: _raised(t, 5 * 3600, 900, 600, 1800, 27.0)))
    assert row["cause"] not in (S.REFRACTIVE, S.MULTIPATH), row["evidence"]
    assert row["cause"] == S.RAIN, row["evidence"]


@pytest.mark.parametrize("length_km", [0.155, 0.2])
def test_rain_on_sub_km_hops_is_rain(tmp_path, length_km):
    # a 25-GHz urban hop of 155/200 m: P.530 clear-air fading is negligible (d^3.4, below 5 km) and refraction
    # cannot move the bulge by a fraction of F1; a wet radome plus path rain gives several dB (Leijnse et al. 2008)
    link = _link(25.0, length_km)
    row = _deepest(_analyse(tmp_path, link, lambda t: _raised(t, 14 * 3600 - 7200, 600, 1200, 2400, 7.0),
                            hours=14))
    assert row["cause"] == S.RAIN, row["evidence"]


def test_short_smooth_night_fade_on_long_6_ghz_hop_is_not_rain(tmp_path):
    # 6 GHz, 50 km, 03:00 local (longitude 0), 10 min, 8 dB: P.530 §2.4 gives rain exceeding 8 dB here ~3e-4 % of
    # the year, §2.3 clear-air fading ~4 % (average year); a 10-min smooth fade is clear-air
    link = _link(6.0, 50.0, site_a_lat=45.0, site_a_lon=0.0, site_b_lat=45.4, site_b_lon=0.1)
    prior = hop_prior(link)
    assert prior.rain_exceed_pct(np.array([8.0]))[0] < 1e-3 < 1.0 < prior.clear_air_exceed_pct(np.array([8.0]))[0]
    row = _deepest(_analyse(tmp_path, link, lambda t: _raised(t, 3 * 3600 - 300, 240, 120, 240, 8.0)))
    assert row["cause"] != S.RAIN, row["evidence"]


def test_stratiform_two_hour_fade_on_18_ghz_10_km_is_rain(tmp_path):
    # 18 GHz, 10 km, 2 h, 6 dB, flat (light stratiform rain of ~3 mm/h by P.838-3): P.530 §2.4 puts 6 dB of rain at
    # ~0.6 % of the year; the refractive share of clear-air fading at 6 dB is several times less (REFRACTIVE_SHARE
    # of P.530 §2.3), and the fade is within what the hop's geometry allows, so the prior decides: rain
    link = _link(18.0, 10.0)
    row = _deepest(_analyse(tmp_path, link, lambda t: _raised(t, 9 * 3600, 1200, 7200 - 2400, 1200, 6.0)))
    assert row["cause"] == S.RAIN, row["evidence"]


@pytest.mark.xfail(strict=True, reason="known gap (2026-12-06): the night term (rain -1, clear air +1: attribution."
                   "HOUR_NIGHT) and the fitted refractive scale (WEIGHTS['refractive'] 3.21) outweigh the P.530/P.838 "
                   "prior; it comes out rain only with the scale at 0.5.  A neutral night for rain alone leaves it "
                   "refractive and turned dry nights of the OpenRainER subset into rain (docs/validation.md §3a)")
def test_stratiform_two_hour_fade_at_night_is_still_rain(tmp_path):
    # the same light stratiform rain between 01 and 03 h local solar time (site longitude 0): drizzle and
    # non-showery rain fall most often around 06 h local solar time over land (Dai, J. Climate 14(6), 2001), so the
    # night hours are no evidence against rain and the P.530/P.838 prior (rain 7:1 over refraction at 6 dB on this
    # hop) should decide.  The fade is 6.2 dB against the 4.8 dB this hop's geometry allows a refractive fade
    link = _link(18.0, 10.0, site_a_lat=45.0, site_a_lon=0.0, site_b_lat=45.09, site_b_lon=0.0)
    row = _deepest(_analyse(tmp_path, link, lambda t: _raised(t, 1 * 3600, 1200, 7200 - 2400, 1200, 6.0)))
    assert row["cause"] == S.RAIN, row["evidence"]


def test_fade_beyond_any_recorded_rain_rate_is_not_rain(tmp_path):
    # 7 GHz, 0.3 km, 40 dB smooth fade: P.838-3 would need thousands of mm/h over the path; and clear-air fading
    # on a 0.3-km hop is negligible (P.530 §2.3): neither may be named
    link = _link(7.0, 0.3)
    prior = hop_prior(link)
    assert implied_rate_mmh(40.0, link, prior) > RAIN_RATE_MAX_MMH
    row = _deepest(_analyse(tmp_path, link, lambda t: _raised(t, 5 * 3600, 900, 1200, 900, 40.0)))
    assert row["cause"] not in (S.RAIN, S.MULTIPATH, S.REFRACTIVE), row["evidence"]


def _row(peak, duration_s=1800.0, interval_s=60.0):
    return {"peak_fade_db": peak, "peak_fade_db_finite": peak, "mean_fade_db": peak / 2, "duration_s": duration_s,
            "interval_s": interval_s, "kind": "samples", "hour_utc": 3, "variability_db": 3.0,
            "upfade_context_db": 4.0, "upfade_within_db": 0.0, "start_utc": START, "end_utc": START,
            "group_id": 0}


@pytest.mark.parametrize("f,d", [(38.0, 0.5), (38.0, 3.5), (80.0, 1.0), (25.0, 0.2), (15.0, 2.0), (7.0, 48.0),
                                 (6.0, 50.0), (18.0, 10.0)])
def test_no_verdict_names_a_physically_excluded_cause(f, d):
    # whatever the evidence (here: night, upfades and large sample-to-sample changes all pointing to clear air),
    # no event may be called clear-air where P.530 §2.3 makes it negligible at that depth, nor rain beyond any
    # recorded path-average rate (P.838-3 inverted)
    link = _link(f, d)
    prior = hop_prior(link)
    depths = [3.0, 6.0, 10.0, 15.0, 20.0, 27.0, 35.0, 45.0, 60.0]
    for depth, (cause, _, text) in zip(depths, attribute([_row(a) for a in depths], link)):
        if clear_air_negligible(prior, depth)[0]:
            assert cause not in (S.MULTIPATH, S.REFRACTIVE), (f, d, depth, text)
        if implied_rate_mmh(depth, link, prior) > RAIN_RATE_MAX_MMH:
            assert cause != S.RAIN, (f, d, depth, text)


def test_no_refractive_verdict_for_a_fade_over_within_ten_minutes():
    # a slow refractive fade follows the refractivity profile of the lowest hundred metres, which changes over tens
    # of minutes (from memory; attribution.REFRACTIVE_MIN_S): on a long 6.5-GHz hop where refraction can fade 19 dB
    # (P.526 knife edge plus beam decoupling), smooth 8-dB fades of 2-8 min at 1-min samples are never refractive,
    # while the same fade lasting an hour may be
    link = _link(6.5, 37.0)
    rows = [{**_row(8.0, duration_s=d), "variability_db": 0.3, "upfade_context_db": 0.0} for d in (120, 300, 480, 3600)]
    _, _, _, allowed = evidence_terms(rows, link)
    assert not allowed[:3, F].any() and allowed[3, F]
    assert S.REFRACTIVE not in [cause for cause, _, _ in attribute(rows[:3], link)]


def test_prior_orders_of_magnitude():
    # the two anchors: a 20 dB clear-air fade on a 3.5-km 38-GHz hop practically impossible against rain;
    # a 20 dB rain fade on a 48-km 7-GHz hop rare but possible (P.530 §2.4: A0.01 ~ 6 dB, so 20 dB lies far out on
    # the curve, yet its share stays above the clear-air floor of a physically impossible event)
    short = hop_prior(_link(38.0, 3.5)).band_pct(20.0)
    assert (short["multipath"] + short["refractive"])[0] < 1e-2 * short["rain"][0]
    long_ = hop_prior(_link(7.0, 48.0)).band_pct(20.0)
    assert 1e-7 < long_["rain"][0] < 1e-2 * long_["multipath"][0]


@pytest.mark.slow
def test_posterior_on_a_network_reruns_the_later_stages():
    # several hops analysed together: the network term re-scores the events and the later stages run again, so the
    # outage by cause names only causes the events carry (a project rule; no outside source needed)
    from pathlib import Path

    from diag.links import read_links_table
    from diag.pipeline import analyze_files

    root = Path(__file__).resolve().parents[2] / "demo_logs"
    with pytest.warns(Warning):                  # the demo logs have rows out of time order, on purpose
        results = analyze_files([root / "logs"], links=read_links_table(root / "links.csv"), config=POSTERIOR)
    assert len(results) == 5 and all(r.error is None for r in results)
    for r in results:
        assert r.outage is not None and r.findings is not None
        by_cause = r.outage.by_cause
        named = set(by_cause.loc[by_cause["unavailable_s"].fillna(0) > 0, "cause"]) if len(by_cause) else set()
        assert named <= set(r.events["cause"]) | {S.UNKNOWN}


def test_beam_decoupling_grows_with_path_length_against_the_main_lobe():
    # ray optics: a change of the refractivity gradient dG [N/km] turns the arrival angle by about (d / 2) dG 1e-6;
    # main lobe of ITU-R F.699-8 / RR Appendix 8 (from memory): loss 2.5e-3 (D/lambda phi)^2 with
    # 20 log(D/lambda) = G - 7.7.  Hand computation for 50 km, 300 N/km, 45 dBi: phi = 0.4297 deg,
    # D/lambda = 73.3, 2.47 dB per antenna, 4.95 dB for both
    from diag.analysis.priors import beam_decoupling_db, refractive_max_depth_db
    assert float(beam_decoupling_db(50.0, 45.0)) == pytest.approx(4.95, abs=0.03)
    # quadratic in the path length and in D/lambda (6 dB more gain = twice D/lambda = four times the loss)
    assert float(beam_decoupling_db(25.0, 45.0)) == pytest.approx(4.95 / 4.0, abs=0.02)
    assert float(beam_decoupling_db(50.0, 39.0)) == pytest.approx(4.95 / 4.0 * 1.0, rel=0.03)
    # a path of a few km cannot be faded slowly by refraction: the bulge rise from k = 4/3 to 0.5 at 3 km is
    # 3^2/8 (2 - 0.75) / 6371 km = 0.22 m against a first Fresnel zone of 1.5-5.5 m (dv 0.06-0.2), which moves
    # the P.526 knife-edge loss by under 2 dB whatever the design clearance (J's slope is at most ~9 dB per unit v)
    for f in (6.0, 15.0, 38.0, 80.0):
        assert refractive_max_depth_db(3.0, f) < 2.0
    # a long hop can (sub-refraction diffraction, P.526 knife edge): 15 dB or more at 50 km (dv = 3.45 at 6 GHz)
    assert refractive_max_depth_db(50.0, 6.0) > 15.0
    # the 0.6 F1 design (v0 = -0.85) is one of the clearances searched: the bound is at least its loss
    from diag.analysis.priors import _knife_edge_db
    assert refractive_max_depth_db(31.0, 8.0) >= float(_knife_edge_db(-0.85 + 1.955)) - 0.05


def test_a_dip_of_seconds_is_never_a_slow_refractive_fade():
    # slow refractive fades follow the refractivity profile of the lowest air, which changes over minutes to hours
    # (common practice); the demo's 46-km 7-GHz hop had 11-19 s, 3-dB dips called refractive before this limit
    from diag.analysis import attribution as A
    from diag.links import make_link
    link = make_link({"link_id": "R", "frequency_ghz": 7.0, "length_km": 46.0, "polarization": "V",
                      "threshold_dbm": -80.0})
    rows = [{"peak_fade_db_finite": 3.0, "duration_s": 11.0, "interval_s": 1.0, "floor_fraction": 0.0},
            {"peak_fade_db_finite": 3.0, "duration_s": 1800.0, "interval_s": 1.0, "floor_fraction": 0.0}]
    _, _, _, allowed = A.evidence_terms(rows, link)
    assert not allowed[0, A.F] and allowed[0, A.M]
    assert allowed[1, A.F]
