"""Both directions of one single-polarised hop (channels named by direction, e.g. "A>B" and "B>A").

The simulator (diag.sim.simulate, ``LinkSpec.directions``) is checked against a standard result for correlated
complex Gaussian scatter, and the analysis (diag.pipeline.analyze_link) against the simulator's truth: rain,
multipath, a one-end antenna misalignment, a one-direction transmitter power drop and a one-direction
transmitter loss.  Physics of the expectations, as the simulator's docstring states it: the same path and the
same polarisation give both directions the same rain fade (common practice; the duplex frequency split is
ignored); go and return multipath is strongly but not fully correlated (a modelling choice); an antenna at one
end both transmits and receives, so its misalignment lowers both directions (common practice); a transmitter
fault lowers only the direction it feeds (common practice).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.errors import InputError
from diag.pipeline import analyze_link
from diag.read.ingest import read_log
from diag.sim.log_shapes import write_epoch, write_semicolon_local, write_wide_iso
from diag.sim.simulate import DIRECTION_MP_CORRELATION, Effect, LinkSpec

H = 3600.0
GO, BACK = "A>B", "B>A"
START = pd.Timestamp("2026-06-01T00:00:00Z")
MP = (0.5 * H, 3.0 * H)             # multipath window
MISALIGN_AT, MISALIGN_DB = 3.5 * H, 4.0    # antenna knocked at one end: both directions
RAIN = (4.5 * H, 6.0 * H)
TX_DROP_AT, TX_DROP_DB = 8.0 * H, 3.0      # transmitter at B loses 3 dB: B>A only
LOSS = (10.0 * H, 10.0 * H + 1200.0)       # transmitter at A off for 20 min: A>B only


def _spec(**changes) -> LinkSpec:
    spec = LinkSpec(
        "DIR1", 15.0, 12.0, "V", -72.0, nominal_dbm=-38.0, duration_s=12 * H, objective_pct=99.99,
        directions=True,
        effects=(
            Effect("multipath", MP[0], MP[1] - MP[0], {"k_min": 0.0, "k_max": 30.0, "fade_rate_hz": 0.08}),
            Effect("level_shift", MISALIGN_AT, None, {"step_db": MISALIGN_DB}),
            Effect("rain", RAIN[0], RAIN[1] - RAIN[0], {"peak_mmh": 45.0, "wet_antenna_db": 1.0}),
            Effect("level_shift", TX_DROP_AT, None, {"step_db": TX_DROP_DB, "channels": [BACK]}),
            Effect("signal_loss", LOSS[0], LOSS[1] - LOSS[0], {"channels": [GO]}),
        ))
    return spec.replace(**changes) if changes else spec


@pytest.fixture(scope="module")
def hop(hops):
    return hops.analysed(_spec(), seed=7)


def _at(seconds: float) -> pd.Timestamp:
    return START + pd.Timedelta(seconds=seconds)


def _events_in(events: pd.DataFrame, channel: str, window: tuple[float, float]) -> pd.DataFrame:
    fades = events[(events["event_kind"] == "fade") & (events["channel"] == channel)]
    return fades[(fades["start_utc"] < _at(window[1])) & (fades["end_utc"] > _at(window[0]))]


# ---------------------------------------------------------------------------------------------------------------
# the simulator


def test_directions_spec_channels_and_defaults():
    spec = _spec()
    assert spec.channels == [GO, BACK]
    assert _spec(directions=False).channels == ["V"]              # default unchanged: one channel per polarisation
    assert _spec(direction_names=["near", "far"]).channels == ["near", "far"]
    with pytest.raises(InputError, match="single polarisation"):
        _spec(polarization="dual")
    with pytest.raises(InputError, match="two different names"):
        _spec(direction_names=("A>B", "A>B"))


def test_simulated_directions_follow_the_stated_physics(hop):
    sim, _ = hop
    truth = sim.truth_samples
    go, back = (truth[truth["channel"] == ch].reset_index(drop=True) for ch in (GO, BACK))
    # single polarisation: RSL only, no XPD rows (simulator contract)
    assert set(sim.table[S.QUANTITY].astype(str)) == {S.RSL}
    # same path, same polarisation: the same rain fade on both directions (common practice)
    assert go[S.RAIN].max() > 25.0
    np.testing.assert_array_equal(go[S.RAIN].to_numpy(), back[S.RAIN].to_numpy())
    # one-end misalignment on both, the transmitter power drop on B>A only (common practice)
    t = np.arange(len(go))
    np.testing.assert_allclose(go[S.LEVEL_SHIFT], np.where(t >= MISALIGN_AT, MISALIGN_DB, 0.0))
    np.testing.assert_allclose(back[S.LEVEL_SHIFT], np.where(t >= MISALIGN_AT, MISALIGN_DB, 0.0)
                               + np.where(t >= TX_DROP_AT, TX_DROP_DB, 0.0))
    # the transmitter loss on A>B only
    lost_go = go[S.SIGNAL_LOSS] > 0
    assert lost_go.sum() == LOSS[1] - LOSS[0] and not (back[S.SIGNAL_LOSS] > 0).any()
    # multipath: correlated, not identical
    mp = slice(int(MP[0]), int(MP[1]))
    r = np.corrcoef(go[S.MULTIPATH][mp], back[S.MULTIPATH][mp])[0, 1]
    assert 0.3 < r < 0.98


def test_direction_scatter_power_correlation_is_rho_squared(hops):
    # For jointly circular complex Gaussian scatter with complex correlation rho, the power envelopes |x|^2, |y|^2
    # have correlation |rho|^2 (standard result for Rayleigh fading, e.g. Jakes 1974 ch. 1; from memory).  K = 0
    # (pure Rayleigh), 0.2 Hz fading sampled every 5 s: ~8000 nearly independent pairs, std error ~0.01.
    spec = LinkSpec("DIRMP", 8.0, 40.0, "H", -75.0, duration_s=40_000.0, noise_db=0.0, quantisation_db=0.0,
                    directions=True,
                    effects=(Effect("multipath", 0.0, None, {"k_min": 0.0, "k_max": 0.0, "fade_rate_hz": 0.2}),))
    truth = hops.sim(spec, seed=5).truth_samples
    power = [10.0 ** (-truth.loc[truth["channel"] == ch, S.MULTIPATH].to_numpy()[::5] / 10.0) for ch in (GO, BACK)]
    r = np.corrcoef(power[0], power[1])[0, 1]
    assert r == pytest.approx(DIRECTION_MP_CORRELATION ** 2, abs=0.04)
    assert r < 0.95          # not fully correlated: go and return differ in frequency


# ---------------------------------------------------------------------------------------------------------------
# the analysis against the simulator truth


def test_rain_is_rain_on_both_directions_with_equal_fades(hop):
    _, res = hop
    for channel in (GO, BACK):
        rain = _events_in(res.events, channel, RAIN)
        deep = rain[rain["peak_fade_db"] > 10.0]
        assert len(deep) == 1, deep
        row = deep.iloc[0]
        assert row["cause"] == S.RAIN                                         # simulator truth
        assert row["partner_channel"] == (BACK if channel == GO else GO)
        assert row["partner_corr"] > 0.95                                     # same rain on both (truth)
        assert row["partner_ratio"] == pytest.approx(1.0, abs=0.05)
        # two directions of one polarisation are no V/H pair: no V/H ratio may be formed
        assert np.isnan(row["v_over_h_ratio"])


def test_multipath_is_multipath(hop):
    _, res = hop
    for channel in (GO, BACK):
        mp = _events_in(res.events, channel, MP)
        assert len(mp) >= 3
        assert (mp["cause"] == S.MULTIPATH).all(), mp[["start_utc", "cause", "evidence"]]   # simulator truth
        # partner correlation over the deepest fade: well below the rain's (partly decorrelated go and return)
        deepest = mp.loc[mp["peak_fade_db"].idxmax()]
        assert deepest["partner_corr"] < 0.9
        # the evidence names the pair by its channels, not as a polarisation pair
        assert "H/V" not in " ".join(mp["evidence"])


def test_misalignment_step_on_both_directions_and_tx_drop_on_one(hop):
    _, res = hop
    steps = {ch: res.level_changes["channels"][ch]["steps"] for ch in (GO, BACK)}
    found = {}
    for ch, items in steps.items():
        at = [s for s in items if abs((pd.Timestamp(s["time_utc"]) - _at(MISALIGN_AT)).total_seconds()) <= 60]
        assert len(at) == 1, items
        found[ch] = -at[0]["size_db"]
        assert found[ch] == pytest.approx(MISALIGN_DB, abs=0.5)                 # simulator truth
    assert abs(found[GO] - found[BACK]) < 0.3                                   # same antenna, same step
    common = [c for c in res.level_changes["common"]
              if abs((pd.Timestamp(c["time_utc"]) - _at(MISALIGN_AT)).total_seconds()) <= 60]
    assert len(common) == 1 and set(common[0]["size_db_by_channel"]) == {GO, BACK}
    # the transmitter at B dropping 3 dB: a step on B>A only (common practice: the fault lowers its own direction)
    drop = [s for s in steps[BACK] if abs((pd.Timestamp(s["time_utc"]) - _at(TX_DROP_AT)).total_seconds()) <= 60]
    assert len(drop) == 1 and -drop[0]["size_db"] == pytest.approx(TX_DROP_DB, abs=0.5)
    assert not [s for s in steps[GO] if abs((pd.Timestamp(s["time_utc"]) - _at(TX_DROP_AT)).total_seconds()) <= 600]
    assert not [c for c in res.level_changes["common"]
                if abs((pd.Timestamp(c["time_utc"]) - _at(TX_DROP_AT)).total_seconds()) <= 600]


def test_signal_loss_only_on_the_direction_it_hit(hop):
    _, res = hop
    loss = _events_in(res.events, GO, LOSS)
    assert list(loss["cause"]) == [S.SIGNAL_LOSS]                                # simulator truth
    assert abs((loss.iloc[0]["start_utc"] - _at(LOSS[0])).total_seconds()) <= 2
    assert abs((loss.iloc[0]["end_utc"] - _at(LOSS[1])).total_seconds()) <= 2
    assert _events_in(res.events, BACK, LOSS).empty                             # the other direction stayed up
    assert not (res.events.loc[res.events["channel"] == BACK, "cause"] == S.SIGNAL_LOSS).any()


def test_outage_accounting_adds_up(hop):
    sim, res = hop
    summary, by_cause, per_channel = res.outage.summary, res.outage.by_cause, res.outage.per_channel
    # per-cause rows add up to the hop totals (outage contract)
    assert by_cause["below_threshold_s"].sum() == summary["below_threshold_s"]
    assert by_cause["unavailable_s"].sum() == summary["unavailable_s"]
    assert summary["below_threshold_s"] == summary["unavailable_s"] + summary["ses_available_s"]
    # the hop is down when either direction is (G.826 takes the union of the directions' unavailable time)
    rows = per_channel.set_index("channel")
    assert summary["unavailable_s"] >= rows["unavailable_s"].max()
    assert summary["unavailable_s"] <= rows["unavailable_s"].sum()
    # the 20-min transmitter loss is 1200 unavailable seconds, all signal loss, and only on A>B (simulator truth)
    loss = by_cause.set_index("cause").loc[S.SIGNAL_LOSS]
    assert loss["unavailable_s"] == LOSS[1] - LOSS[0]
    assert rows.loc[GO, "unavailable_s"] >= LOSS[1] - LOSS[0] > rows.loc[BACK, "unavailable_s"]
    # seconds below threshold against the truth: a second is down when its true total fade passes the margin
    truth = sim.truth_samples
    margin = sim.spec.nominal_dbm - sim.spec.threshold_dbm
    down = truth.assign(down=truth["total_fade_db"] > margin).groupby("channel")["down"].sum()
    for channel in (GO, BACK):
        assert rows.loc[channel, "below_threshold_s"] == pytest.approx(down[channel], abs=10)


# ---------------------------------------------------------------------------------------------------------------
# direction names through a log file


@pytest.mark.parametrize("names", [(GO, BACK), ("near", "far")])
@pytest.mark.parametrize("writer,kwargs", [(write_wide_iso, {}), (write_semicolon_local, {"tz": "Europe/Berlin"}),
                                           (write_epoch, {})])
def test_direction_columns_round_trip(hops, tmp_path, names, writer, kwargs):
    spec = LinkSpec("DIR2", 23.0, 5.0, "H", -70.0, duration_s=900.0, directions=True, direction_names=names,
                    effects=(Effect("signal_loss", 100.0, 60.0, {"channels": [names[1]]}),))
    sim = hops.sim(spec, seed=1)
    path = tmp_path / "DIR2.csv"
    writer(sim.table, path, **kwargs)
    header = path.read_text().splitlines()[0]
    assert all(name in header for name in names)
    table = read_log(path, **kwargs).table
    assert set(table[S.LINK].astype(str)) == {"DIR2"}
    key = [S.CHANNEL, S.TIME]
    got = table[key + [S.VALUE, S.STATUS]].astype({S.CHANNEL: str, S.STATUS: str}).sort_values(key)
    want = sim.table[key + [S.VALUE, S.STATUS]].astype({S.CHANNEL: str, S.STATUS: str}).sort_values(key)
    assert sorted(set(got[S.CHANNEL])) == sorted(names)
    np.testing.assert_array_equal(got[S.TIME].to_numpy(), want[S.TIME].to_numpy())
    np.testing.assert_array_equal(got[S.CHANNEL].to_numpy(), want[S.CHANNEL].to_numpy())
    np.testing.assert_array_equal(got[S.STATUS].to_numpy(), want[S.STATUS].to_numpy())
    np.testing.assert_allclose(got[S.VALUE].to_numpy(), want[S.VALUE].to_numpy(), equal_nan=True)
    assert (got[S.STATUS] == S.SIGNAL_LOST).sum() == 60          # the one-direction loss survives the file


def test_direction_names_do_not_set_the_polarisation(hops):
    # a site code such as "V2" in a direction name is no polarisation: on a single-polarised hop the links table's
    # polarisation (H here) sets the P.838 coefficients, whatever the channels are called (links-table contract)
    def rain_rows(names):
        spec = LinkSpec("DIR3", 23.0, 6.0, "H", -70.0, nominal_dbm=-35.0, duration_s=4 * H, directions=True,
                        direction_names=names,
                        effects=(Effect("rain", 1.5 * H, 1.0 * H, {"peak_mmh": 40.0, "wet_antenna_db": 0.5}),))
        sim = hops.sim(spec, seed=3)
        events = analyze_link(sim.table, sim.link).events
        return events[events["event_kind"] == "fade"].sort_values(["start_utc", "channel"], kind="stable")

    plain, coded = rain_rows(("A>B", "B>A")), rain_rows(("S1>V2", "V2>S1"))
    assert len(plain) >= 2 and (plain["cause"] == S.RAIN).all()
    np.testing.assert_allclose(coded["rain_rate_mmh"].to_numpy(float), plain["rain_rate_mmh"].to_numpy(float))
    assert list(coded["cause"]) == list(plain["cause"])


def test_step_advice_names_directions_not_polarisations(hop):
    """A two-direction hop's level-shift advice speaks of directions (common practice: the antenna at one end both
    transmits and receives, so its misalignment shows in both directions)."""
    _, res = hop
    shift = [f for f in res.findings if f["cause"] == "level_shift"]
    assert shift, [f["cause"] for f in res.findings]
    text = " ".join(shift[0]["actions"])
    assert "both directions" in text and "polarisations" not in text


def test_scenario_file_describes_a_directions_hop():
    """A scenario file can ask for both directions and a step on one of them (the TOML keys are LinkSpec's)."""
    import tomllib

    from diag.sim.scenarios import parse_scenario

    text = """
    name = "dirs"
    start = "2026-06-08T00:00:00Z"
    duration_h = 2
    interval_s = 1
    [[link]]
    link_id = "DX-1"
    frequency_ghz = 18.0
    length_km = 8.0
    polarization = "V"
    threshold_dbm = -70
    directions = true
    direction_names = ["east>west", "west>east"]
    [[link.level_shift]]
    at_h = 1
    step_db = 3
    channels = ["west>east"]
    """
    scen = parse_scenario(tomllib.loads(text))
    (spec,) = scen.links
    assert spec.directions and list(spec.channels) == ["east>west", "west>east"]
    (step,) = spec.effects
    assert step.kind == "level_shift" and step.params["channels"] == ["west>east"]
    with pytest.raises(InputError, match="unknown key"):
        parse_scenario(tomllib.loads(text.replace('channels = ["west>east"]', 'lanes = ["west>east"]')))
