"""Wet-antenna fades on a short hop are not refractive (diag.analysis.priors: wet-antenna term and refractive geometry).

Truth: the simulator (diag.sim.simulate) puts a radome water film (``wet_antenna_db``, building up over
``wetting_s`` and drying over ``drying_min``) under light constant rain on a 1-km 25-GHz hop, logged each minute
with 1-dB steps (as the real OpenRainER logs): a flat-topped, nearly symmetric 4-dB fade whose profile the shape
tests alone read as refractive.  Refraction cannot fade a 1-km hop by several dB (Earth-bulge geometry with the
ITU-R P.526 knife-edge loss, see diag.analysis.priors), so the verdict must be rain.  Control: a refractive fade on
a 10-km hop stays refractive.  A 12-dB slow fade on a 1.5-km hop is NOT refractive (changed with the physics prior:
the bulge moves 0.055 m between k = 4/3 and 0.5 against F1 = 1.3 m at 25 GHz, so the deepest refractive fade the
geometry allows is the beam-decoupling allowance of ~6 dB, and P.530 §2.3 clear-air fading is negligible below
5 km; the old rulebook's "keeps its shape evidence" contradicted that).
"""
from __future__ import annotations

from diag import schema as S
from diag.analysis.priors import refractive_max_depth_db
from diag.pipeline import analyze_link
from diag.sim.simulate import Effect, LinkSpec, simulate_link

H = 3600.0


def _events(length_km, effects, *, interval_s=60.0, quantisation_db=1.0, frequency_ghz=25.0):
    spec = LinkSpec("W1", frequency_ghz, length_km, "V", -75.0, interval_s=interval_s, duration_s=12 * H,
                    quantisation_db=quantisation_db, effects=tuple(effects))
    sim = simulate_link(spec, seed=3)
    return analyze_link(sim.table, sim.link).events


def test_wet_film_plateau_on_short_hop_is_rain():
    wet = Effect("rain", 4 * H, 1 * H, {"peak_mmh": 2.0, "profile": "constant", "wet_antenna_db": 5.0,
                                         "wetting_s": 900.0, "drying_min": 15.0})
    ev = _events(1.0, [wet])
    assert len(ev) == 1
    row = ev.iloc[0]
    assert 3.0 <= row["peak_fade_db"] <= 8.0     # a few dB: the film, ~0.2 dB of path rain
    assert row["cause"] == S.RAIN, row["evidence"]
    assert "P.530 prior rain" in row["evidence"] or "physically excluded" in row["evidence"]


def test_refractive_fade_on_long_hop_stays_refractive():
    # control moved from 25 GHz / 10 km to 8 GHz / 40 km (changed with the physics prior): at 25 GHz on 10 km a
    # smooth 5-dB hour-long fade is several times more often rain than refraction (P.530 §2.4 vs §2.3) and a
    # 1-min smooth profile cannot tell them apart; on a long low-frequency hop refraction is the likely mechanism
    ev = _events(40.0, [Effect("refractive", 4 * H, 2 * H, {"depth_db": 8.0})], frequency_ghz=8.0)
    assert refractive_max_depth_db(40.0, 8.0) > 8.0
    assert list(ev["cause"]) == [S.REFRACTIVE], list(ev["evidence"])


def test_deep_slow_fade_on_short_hop_is_not_refractive():
    # 12 dB slow fade on 1.5 km at 25 GHz: beyond the refractive depth the geometry allows (docstring above)
    ev = _events(1.5, [Effect("refractive", 4 * H, 2 * H, {"depth_db": 12.0})], interval_s=1.0,
                 quantisation_db=0.1)
    assert refractive_max_depth_db(1.5, 25.0) < 8.0
    assert len(ev) == 1 and ev["peak_fade_db"].iloc[0] > 10.0
    assert list(ev["cause"]) != [S.REFRACTIVE], list(ev["evidence"])
