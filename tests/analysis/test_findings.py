"""Ranked findings (diag.analysis.findings).

The remedies are the trade's usual ones (common practice, no outside source): rain -> margin, lower band,
vertical polarisation, adaptive modulation; tilt -> feed realignment; site work carries the work-at-height, RF
exposure and licensed-practice cautions (project rule).  Inputs: simulated hops with known causes (diag.sim.simulate
truth, so the test does not depend on the classifier), outage from diag.analysis.outage, statistics from
diag.analysis.fading_stats,
cross-polar from diag.analysis.crosspol and level changes from diag.analysis.steps.
"""
import json

from diag.analysis import crosspol, findings
from diag.analysis import fading_stats as stats
from diag.analysis import steps as shifts
from diag.analysis.outage import account_link
from diag.sim.simulate import Effect, LinkSpec

KEYS = {"title", "detail", "numbers", "actions", "cautions", "severity"}


def _analysed(hops, spec, seed=4):
    result = hops.truth(spec, seed=seed)
    result.statistics = stats.link_statistics(result)
    result.cross_polar = crosspol.cross_polar(result)
    result.level_changes = shifts.level_changes(result)
    result.outage = account_link(result)
    return result


def test_rain_dominated_hop_gets_rain_first_with_remedies(hops):
    spec = LinkSpec(link_id="wet", frequency_ghz=23, length_km=12, polarization="H", threshold_dbm=-68,
                    r001_mmh=40, objective_pct=99.99, duration_s=6 * 3600,
                    effects=(Effect("rain", 3600, 2 * 3600, {"peak_mmh": 90}),))
    out = findings.rank_findings(_analysed(hops, spec))
    assert out and KEYS <= set(out[0])
    top = out[0]
    assert top["cause"] == "rain" and top["severity"] == "high"
    text = " ".join(top["actions"]).lower()
    for remedy in ("margin", "lower frequency band", "vertical polarisation", "adaptive modulation"):
        assert remedy in text
    assert top["numbers"]["unavailable_s"] > 0 and top["numbers"]["p530_a001_db"] > 0
    assert any("licen" in c for c in top["cautions"])
    assert [f["rank"] for f in out] == list(range(1, len(out) + 1))
    json.dumps(out)


def test_tilt_and_step_get_site_cautions(hops):
    spec = LinkSpec(link_id="tilted", frequency_ghz=18, length_km=8, polarization="dual", threshold_dbm=-80,
                    xpd_required_db=25, duration_s=18 * 3600,
                    effects=(Effect("level_shift", 6 * 3600, None, {"step_db": 5, "tilt_deg": 8}),))
    out = findings.rank_findings(_analysed(hops, spec))
    tilt = [f for f in out if f["cause"] == "polarisation_tilt"]
    assert len(tilt) == 1 and tilt[0]["severity"] == "high"        # XPD below the required 25 dB
    assert abs(tilt[0]["numbers"]["tilt_deg"] - 8.0) <= 1.0
    assert "realign" in " ".join(tilt[0]["actions"])
    cautions = " ".join(tilt[0]["cautions"]).lower()
    assert "work at height" in cautions and "rf exposure" in cautions and "licensed practice" in cautions
    shift = [f for f in out if f["cause"] == "level_shift"]
    assert shift and "alignment" in " ".join(shift[0]["actions"])
    assert shift[0]["severity"] == "medium"          # a 5-dB persistent drop costs margin (common practice)
    assert all(KEYS <= set(f) for f in out)


def test_quiet_hop_has_no_high_findings(hops):
    spec = LinkSpec(link_id="calm", frequency_ghz=15, length_km=5, polarization="V", threshold_dbm=-80,
                    duration_s=3 * 3600)
    out = findings.rank_findings(_analysed(hops, spec))
    assert all(f["severity"] != "high" for f in out)


def test_coarse_logs_quote_bounds_not_one_number(hops):
    # 15-min statistics give outage bounds (diag.analysis.outage); the finding must quote "lo to hi", never a made-up
    # value
    import numpy as np

    spec = LinkSpec(link_id="coarse", frequency_ghz=23, length_km=12, polarization="H", threshold_dbm=-68,
                    duration_s=6 * 3600, effects=(Effect("rain", 3600, 2 * 3600, {"peak_mmh": 90}),))
    result = _analysed(hops, spec)
    by = result.outage.by_cause
    rain = by["cause"] == "rain"
    by.loc[rain, "unavailable_s_lo"] = 600.0
    by.loc[rain, "unavailable_s_hi"] = 1500.0
    by.loc[rain, "below_threshold_s_lo"] = 700.0
    by.loc[rain, "below_threshold_s_hi"] = 1600.0
    by["unavailable_s"] = np.nan
    by["below_threshold_s"] = np.nan
    top = [f for f in findings.rank_findings(result) if f["cause"] == "rain"][0]
    # durations read as h:mm:ss (issue 16): 700-1600 s below threshold, 600-1500 s unavailable
    assert "0:11:40 to 0:26:40" in top["detail"] and "0:10:00 to 0:25:00" in top["detail"]
    assert top["numbers"]["unavailable_s"] is None and top["numbers"]["unavailable_s_hi"] == 1500.0
