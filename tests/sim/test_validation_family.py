"""Checks of the independent validation family (bench/validation/family_b.py) against published values.

The family is only useful if its physics is right and the reader takes its logs whole, so:
- P.838-3 coefficients and gamma against the check values of docs/references.md §2 ([C], which match itur 0.4.0);
- the P.530-18 §2.4.1 distance factor r against docs/references.md §3.1 [C] (d 10 km, 23 GHz, R 42 mm/h, H: r = 0.5800);
- the P.530-17 §2.3.1 multipath occurrence p0 against docs/references.md §3.2 [C] (K = 1.0012e-4, p0 = 10.311 %);
- the first Fresnel radius against docs/references.md §1 [C];
- the scatter of the multipath model at K = 0 against the Rayleigh law P(y < -10 dB) = 1 - exp(-0.1)
(docs/references.md §5);
- every log shape read by diag.read.ingest.read_log with no row rejected, and the fixed fit/held-out split.
"""
from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "bench" / "validation"))
import family_b as fb  # noqa: E402

from tests.sim._family_support import read_back  # noqa: E402


@pytest.mark.parametrize("f, kh, ah, kv, av", [
    (6, 7.0559e-4, 1.5900, 4.8782e-4, 1.5728),
    (11, 0.017719, 1.2140, 0.017307, 1.1617),
    (15, 0.044815, 1.1233, 0.050082, 1.0440),
    (18, 0.070784, 1.0818, 0.077076, 1.0025),
    (23, 0.12864, 1.0214, 0.12836, 0.9630),
    (38, 0.40011, 0.8816, 0.38440, 0.8552),
])
def test_p838_coefficients(f, kh, ah, kv, av):
    # docs/references.md §2 table, computed from P.838-3 Tables 1-4 and matching itur 0.4.0
    got = fb.p838_coefficients(f)
    assert np.allclose(got, (kh, ah, kv, av), rtol=1e-3)


def test_p838_gamma():
    # docs/references.md §2: 23 GHz, R = 50 mm/h: H 6.9929, V 5.5532 dB/km; 38 GHz: H 12.587, V 10.909 dB/km
    assert fb.p838_gamma_db_per_km(23.0, 50.0, 0.0) == pytest.approx(6.9929, rel=1e-3)
    assert fb.p838_gamma_db_per_km(23.0, 50.0, 90.0) == pytest.approx(5.5532, rel=1e-3)
    assert fb.p838_gamma_db_per_km(38.0, 50.0, 0.0) == pytest.approx(12.587, rel=1e-3)
    assert fb.p838_gamma_db_per_km(38.0, 50.0, 90.0) == pytest.approx(10.909, rel=1e-3)


def test_p530_distance_factor():
    # docs/references.md §3.1 (P.530-18 §2.4.1): d = 10 km, f = 23 GHz, R0.01 = 42 mm/h, H: r = 0.5800,
    # A0.01 = 33.942 dB
    _, ah, _, _ = fb.p838_coefficients(23.0)
    r = fb.p530_rain_reduction_factor(10.0, 42.0, 23.0, ah)
    assert r == pytest.approx(0.5800, rel=1e-3)
    assert fb.p838_gamma_db_per_km(23.0, 42.0, 0.0) * 10.0 * r == pytest.approx(33.942, rel=1e-3)


def test_p530_multipath_p0():
    # docs/references.md §3.2 (P.530-17 §2.3.1): dN1 = -400, s_a = 20, d = 30 km, f = 8 GHz, he = 200 m, hr = 100 m
    assert fb.GEOCLIMATIC_K == pytest.approx(1.0012e-4, rel=1e-3)
    assert fb.p530_multipath_p0_pct(30.0, 8.0, 200.0, 100.0) == pytest.approx(10.311, rel=1e-3)


def test_fresnel_radius():
    # docs/references.md §1: 23 GHz, d1 = d2 = 5 km: 5.704 m; 6 GHz, 25/25 km: 24.97 m
    assert fb.fresnel_radius_m(5.0, 5.0, 23.0) == pytest.approx(5.704, rel=1e-3)
    assert fb.fresnel_radius_m(25.0, 25.0, 6.0) == pytest.approx(24.97, rel=1e-3)


def test_scatter_is_rayleigh_at_k0():
    # docs/references.md §5: Rayleigh power P(y < -10 dB) = 1 - exp(-0.1) = 0.095163
    rng = np.random.default_rng(3)
    g = fb._doppler_scatter(rng, 400_000, 0.3)
    frac = float(np.mean(np.abs(g) ** 2 < 0.1))
    assert frac == pytest.approx(1 - np.exp(-0.1), abs=0.006)


def test_split_is_fixed_and_disjoint():
    assert set(fb.FIT_SEEDS).isdisjoint(fb.HELDOUT_SEEDS)
    assert set(fb.FIT_SEEDS) | set(fb.HELDOUT_SEEDS) == set(range(1, 101))
    with pytest.raises(ValueError):
        fb.fit_half([3, 60])


def test_mechanisms_follow_the_hop_physics():
    # multipath only where P.530 p0 >= 1 %; refractive only where the k = 2/3 clearance rule allows it
    for world in fb.worlds([1, 2, 3]):
        for t in world.hops:
            hop = t.hop
            p0 = fb.p530_multipath_p0_pct(hop.length_km, hop.frequency_ghz, hop.ground_a_m + hop.antenna_height_m,
                                          hop.ground_b_m + hop.antenna_height_m)
            for ch in hop.channels:
                if p0 < 1.0:
                    assert not np.any(t.contributions[ch]["multipath"])
                if not fb.refractive_possible(hop):
                    assert not np.any(t.contributions[ch]["refractive"])


def test_every_shape_is_read_whole(tmp_path):
    world = fb.make_world(2)
    world.hops = world.hops[:3]
    # channels, the statistics of each shape and every row kept are checked by read_back
    seen = {shape for shape, _, _, _ in read_back(fb, world, tmp_path)}
    assert seen == set(fb.SHAPES)


def test_truth_convention():
    # faded = total >= 3 dB or signal lost; cause = largest contribution; a floor reached by a deep rain fade stays
    # rain, only an equipment loss is signal_loss (the family's stated convention)
    n = 6
    hop = fb.Hop("T", 23.0, 5.0, "H", False, -80.0, -40.0, 40.0, 20.0, 100.0, 100.0, (48.0, 15.0), (48.0, 15.1))
    zero = np.zeros(n, dtype=np.float32)
    c = {k: zero.copy() for k in fb.CAUSES}
    c["rain"][:] = [0.0, 2.0, 2.0, 80.0, 0.0, 1.0]
    c["multipath"][:] = [0.0, 1.5, -1.5, 0.0, 0.0, 0.0]
    c["level_shift"][:] = [0.0, 0.0, 0.0, 0.0, 0.0, 4.0]
    lost = np.array([False, False, False, True, True, False])
    equipment = np.array([False, False, False, False, True, False])
    truth = fb.HopTruth(hop, {"A>B": c}, {"A>B": lost}, {"A>B": zero}, None, {"A>B": equipment})
    code = truth.cause_codes("A>B")
    names = [fb.CAUSES[k] if k >= 0 else "-" for k in code]
    assert names == ["-", "rain", "-", "rain", "signal_loss", "level_shift"]
