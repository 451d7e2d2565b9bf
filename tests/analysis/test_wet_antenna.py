"""Wet-antenna fades on a short hop are not refractive (diag.analysis.classify, rule 4c: SHORT_HOP_KM, WET_FADE_MAX_DB).

Truth: the simulator (diag.sim.simulate) puts a radome water film (``wet_antenna_db``, building up over
``wetting_s`` and drying over ``drying_min``) under light constant rain on a 1-km 25-GHz hop, logged each minute
with 1-dB steps (as the real OpenRainER logs): a flat-topped, nearly symmetric 4-dB fade whose profile the shape
tests alone read as refractive.  Refraction cannot fade a 1-km hop by several dB (Earth-bulge and ray-tilt
geometry, see diag.analysis.classify), so the verdict must be rain.  Controls: a refractive fade on a 10-km hop stays
refractive.  A 12-dB slow fade on a 1.5-km 25-GHz hop stays refractive under the older rulebook (its shape
evidence), while the default physics posterior rules refraction out there (ITU-R P.530-18 §2.3 gives such a
clear-air fade a negligible share of the year on that hop; the Earth bulge at mid-path is a few cm) and names rain.
"""
from __future__ import annotations

from diag import schema as S
from diag.analysis.rulebook import SHORT_HOP_KM, WET_FADE_MAX_DB
from diag.config import AnalysisConfig
from diag.sim.simulate import Effect, LinkSpec

H = 3600.0


RULES = AnalysisConfig(attribution="rules")


def _events(hops, length_km, effects, *, interval_s=60.0, quantisation_db=1.0, config=None):
    spec = LinkSpec("W1", 25.0, length_km, "V", -75.0, interval_s=interval_s, duration_s=12 * H,
                    quantisation_db=quantisation_db, effects=tuple(effects))
    return hops.analysed(spec, seed=3, config=config)[1].events


def test_wet_film_plateau_on_short_hop_is_rain(hops):
    wet = Effect("rain", 4 * H, 1 * H, {"peak_mmh": 2.0, "profile": "constant", "wet_antenna_db": 5.0,
                                         "wetting_s": 900.0, "drying_min": 15.0})
    ev = _events(hops, 1.0, [wet])
    assert len(ev) == 1
    row = ev.iloc[0]
    assert 3.0 <= row["peak_fade_db"] <= WET_FADE_MAX_DB     # a few dB: the film, ~0.2 dB of path rain
    assert row["cause"] == S.RAIN, row["evidence"]
    assert "wet antennas" in row["evidence"]
    ev = _events(hops, 1.0, [wet], config=RULES)
    assert list(ev["cause"]) == [S.RAIN] and "too short for refractive fading" in ev["evidence"].iloc[0]


def test_refractive_fade_on_long_hop_stays_refractive(hops):
    ev = _events(hops, 10.0, [Effect("refractive", 4 * H, 2 * H, {"depth_db": 5.0})])
    assert 10.0 > SHORT_HOP_KM
    assert list(ev["cause"]) == [S.REFRACTIVE], list(ev["evidence"])


def test_deep_slow_fade_on_short_hop_keeps_its_shape_evidence(hops):
    # deeper than a wet film: the broad, symmetric profile still counts (1-s samples, 0.1-dB steps)
    effect = [Effect("refractive", 4 * H, 2 * H, {"depth_db": 12.0})]
    ev = _events(hops, 1.5, effect, interval_s=1.0, quantisation_db=0.1, config=RULES)
    assert list(ev["cause"]) == [S.REFRACTIVE], list(ev["evidence"])
    assert ev["peak_fade_db"].iloc[0] > WET_FADE_MAX_DB


def test_deep_slow_fade_on_short_hop_is_no_refraction_by_physics(hops):
    # the default posterior: P.530-18 §2.3 leaves clear-air fading of 12 dB on 1.5 km at 25 GHz a negligible share
    # of the year, so the verdict cannot be refractive (or multipath), and the evidence says why
    ev = _events(hops, 1.5, [Effect("refractive", 4 * H, 2 * H, {"depth_db": 12.0})], interval_s=1.0,
                 quantisation_db=0.1)
    assert len(ev) == 1 and ev["cause"].iloc[0] == S.RAIN, list(ev["evidence"])
    assert "multipath/refractive: physically excluded on this hop" in ev["evidence"].iloc[0]
