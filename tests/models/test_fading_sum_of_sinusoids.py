"""Level-crossing rate and average fade duration against an independent fading process written here.

The process: a Clarke/Jakes sum-of-sinusoids complex Gaussian channel in the improved form of Zheng & Xiao
(IEEE Commun. Lett. 6(6):256-258, 2002): M sinusoids per quadrature with arrival angles
alpha_k = (2 pi k - pi + theta) / (4 M) and random phases, maximum Doppler f_m, unit mean power.  Rayleigh: its
envelope; Rice: a static (zero-Doppler) line-of-sight phasor of power K/(K+1) plus the scattered part scaled to
1/(K+1).  Nothing here comes from the project's simulator.

Closed forms, written in this file from the sources (not imported from the project):
- Rayleigh (Rice 1944; Rappaport, Wireless Communications 2nd ed. eqs. (5.80), (5.84); Jakes 1974):
  N_R = sqrt(2 pi) f_m rho e^(-rho^2), tau = (e^(rho^2) - 1) / (rho f_m sqrt(2 pi)), rho^2 = level power / mean.
- Rice with a static specular part (Rice 1944/1945; Stueber, Principles of Mobile Communication, Rician LCR):
  N_R = sqrt(2 pi (K+1)) f_m rho e^(-K - (K+1) rho^2) I0(2 rho sqrt(K (K+1))), tau = P(below) / N_R with
  P(below) from scipy.stats.rice (an outside reference library).

Tolerances come from the sample size: deep-fade downward crossings are close to a Poisson process, so the count in
T seconds is N ~ Poisson(N_R T) and a 99.9 % interval for the ratio observed/expected is about
1 +- 3.29 / sqrt(N_R T).  The average fade duration is (time below) / N; its relative error is taken as sqrt(2)
times that of the count (time below and count treated as independent, which overstates it a little).  Added to
that: 3 % for the finite number of sinusoids and the sampling step (Zheng & Xiao report LCR/AFD of this model
within a few per cent of theory for M >= 8; the -30 dB fades last ~13 ms against 1-ms samples here).
"""
import math

import numpy as np
import pandas as pd
import pytest
from scipy import special
from scipy import stats as sps

from diag.analysis import fading_stats
from diag.models import fading
from diag.results import ChannelSeries

FM_HZ = 1.0            # maximum Doppler (fading bandwidth) of the process
DT_S = 0.001           # sampling step: 1000 samples per Doppler period
REALISATIONS = 12      # independent sum-of-sinusoids realisations, concatenated
N_EACH = 125_000       # samples per realisation (125 s)
LEVELS_DB = (-5.0, -10.0, -20.0, -30.0)
Z999 = 3.29            # two-sided 99.9 % normal quantile
MODEL_SLACK = 0.03     # finite number of sinusoids, 1-ms sampling (see the module docstring)


def _sum_of_sinusoids(rng, n, m=16):
    """Zheng & Xiao (2002) sum-of-sinusoids: unit-power complex Gaussian fading with maximum Doppler FM_HZ."""
    theta = rng.uniform(-np.pi, np.pi)
    alpha = (2.0 * np.pi * np.arange(1, m + 1) - np.pi + theta) / (4.0 * m)
    phi, psi = rng.uniform(-np.pi, np.pi, (2, m))
    w_i, w_q = 2.0 * np.pi * FM_HZ * np.cos(alpha), 2.0 * np.pi * FM_HZ * np.sin(alpha)
    out = np.empty(n, dtype=complex)
    for a in range(0, n, 50_000):
        t = (np.arange(a, min(n, a + 50_000)) * DT_S)[:, None]
        out[a:a + t.shape[0]] = (np.cos(w_i * t + phi).sum(axis=1) + 1j * np.cos(w_q * t + psi).sum(axis=1))
    return out / math.sqrt(m)   # E|g|^2 = 2 M (1/2) / M = 1


def _process(k_factor, seed):
    rng = np.random.default_rng(seed)
    scattered = np.concatenate([_sum_of_sinusoids(rng, N_EACH) for _ in range(REALISATIONS)])
    h = math.sqrt(k_factor / (k_factor + 1.0)) + scattered / math.sqrt(k_factor + 1.0)
    return np.abs(h) ** 2   # power relative to the mean (mean 1)


def _series(power):
    """The process as a logged channel: every sample in one multipath period (the project's lcr_block input)."""
    n = power.size
    idx = pd.date_range("2026-07-01", periods=n, freq=pd.Timedelta(milliseconds=1), tz="UTC", name="time_utc")
    level = -50.0 + 10.0 * np.log10(power)
    frame = pd.DataFrame({"rsl_dbm": level, "status": pd.array(["ok"] * n, dtype="str"), "reference_dbm": -50.0,
                          "attenuation_db": np.clip(-50.0 - level, 0.0, None), "event_id": -1,
                          "cause": pd.array(["multipath"] * n, dtype="str")}, index=idx)
    return ChannelSeries(link_id="sos", channel="H", interval_s=DT_S, kind="sample", frame=frame)


def _rayleigh_lcr(rho2):       # Rappaport eq. (5.80)
    return math.sqrt(2.0 * math.pi) * FM_HZ * math.sqrt(rho2) * math.exp(-rho2)


def _rayleigh_afd(rho2):       # Rappaport eq. (5.84)
    return math.expm1(rho2) / (math.sqrt(rho2) * FM_HZ * math.sqrt(2.0 * math.pi))


def _rice_lcr(rho2, k):        # Rice 1944 / Stueber, static specular component
    rho = math.sqrt(rho2)
    return (math.sqrt(2.0 * math.pi * (k + 1.0)) * FM_HZ * rho * math.exp(-k - (k + 1.0) * rho2)
            * special.i0(2.0 * rho * math.sqrt(k * (k + 1.0))))


def _rice_below(rho2, k):      # scipy.stats.rice: nu^2 = K/(K+1), 2 sigma^2 = 1/(K+1) for unit mean power
    sigma = math.sqrt(1.0 / (2.0 * (k + 1.0)))
    return float(sps.rice.cdf(math.sqrt(rho2), math.sqrt(k / (k + 1.0)) / sigma, scale=sigma))


def _tolerance(expected_count, factor=1.0):
    return factor * Z999 / math.sqrt(expected_count) + MODEL_SLACK


@pytest.fixture(scope="module")
def rayleigh():
    power = _process(0.0, seed=11)
    return power, fading_stats.lcr_block(_series(power), levels_db=LEVELS_DB)


@pytest.fixture(scope="module")
def rice():
    k = 5.0
    power = _process(k, seed=12)
    return k, power, fading_stats.lcr_block(_series(power), levels_db=LEVELS_DB, rice_k=k)


@pytest.mark.slow
def test_rayleigh_crossings_and_fade_durations_match_rice_1944(rayleigh):
    power, out = rayleigh
    total_s = power.size * DT_S
    assert out["observed_s"] == pytest.approx(total_s, rel=1e-9)
    for j, level in enumerate(LEVELS_DB):
        rho2 = 10.0 ** (level / 10.0)
        expected = _rayleigh_lcr(rho2) * total_s   # e.g. -30 dB: 0.0792 /s x 1500 s = 119 crossings
        # the project's crossing count and fade duration (diag.analysis.fading_stats.lcr_block) vs the closed forms
        assert out["crossings"][j] / expected == pytest.approx(1.0, abs=_tolerance(expected)), level
        assert out["afd_s"][j] / _rayleigh_afd(rho2) == pytest.approx(1.0, abs=_tolerance(expected, math.sqrt(2))), \
            level
        # the project's closed forms (diag.models.fading) against the ones written here
        assert fading.rayleigh_level_crossing_rate_hz(level, FM_HZ) == pytest.approx(_rayleigh_lcr(rho2), rel=1e-9)
        assert fading.rayleigh_average_fade_duration_s(level, FM_HZ) == pytest.approx(_rayleigh_afd(rho2), rel=1e-9)
    # the fitted fading bandwidth: a count-weighted mean of the per-level fits, dominated by the shallow levels;
    # bounded here by the interval of the -10 dB count (~1080 crossings)
    assert out["fading_bandwidth_hz"] == pytest.approx(FM_HZ, rel=_tolerance(_rayleigh_lcr(0.1) * total_s))


@pytest.mark.slow
def test_rice_crossings_and_fade_durations_match_the_rician_closed_form(rice):
    k, power, out = rice
    total_s = power.size * DT_S
    for j, level in enumerate(LEVELS_DB):
        rho2 = 10.0 ** (level / 10.0)
        expected = _rice_lcr(rho2, k) * total_s
        if expected < 30:      # K = 5: fades 20-30 dB below the mean are rare (a handful in 1500 s): not tested
            continue
        assert out["crossings"][j] / expected == pytest.approx(1.0, abs=_tolerance(expected)), level
        afd = _rice_below(rho2, k) / _rice_lcr(rho2, k)
        assert out["afd_s"][j] / afd == pytest.approx(1.0, abs=_tolerance(expected, math.sqrt(2))), level
        assert fading.rice_level_crossing_rate_hz(level, k, FM_HZ) == pytest.approx(_rice_lcr(rho2, k), rel=1e-9)
        assert fading.rice_average_fade_duration_s(level, k, FM_HZ) == pytest.approx(afd, rel=1e-6)
    # with the true K the Rice reading of the crossings gives back f_m; the Rayleigh reading does not (K = 5)
    expected_5 = _rice_lcr(10 ** -0.5, k) * total_s
    assert out["rice_fading_bandwidth_hz"] == pytest.approx(FM_HZ, rel=_tolerance(expected_5))
    assert out["fading_bandwidth_hz"] < 0.7 * FM_HZ


def test_closed_forms_at_k_zero_and_the_published_check_values():
    # Rice with K = 0 is Rayleigh (Rice 1944); docs/references.md §5 [C]: f_m = 1 Hz, -10 dB: N = 0.71723 /s,
    # tau = 0.13268 s; -20 dB: 0.24817 /s, 0.04009 s (computed from Rappaport (5.80)/(5.84))
    for level, n_r, tau in ((-10.0, 0.71723, 0.13268), (-20.0, 0.24817, 0.04009)):
        assert fading.rayleigh_level_crossing_rate_hz(level, 1.0) == pytest.approx(n_r, rel=1e-4)
        assert fading.rayleigh_average_fade_duration_s(level, 1.0) == pytest.approx(tau, rel=2e-4)
        assert fading.rice_level_crossing_rate_hz(level, 0.0, 1.0) == pytest.approx(n_r, rel=1e-4)
        assert fading.rice_average_fade_duration_s(level, 0.0, 1.0) == pytest.approx(tau, rel=2e-4)
        # and the f_m the project's fit infers from such a crossing rate (inverse of N_R) is the 1 Hz put in
        assert fading.doppler_from_crossing_rate_hz(n_r, level) == pytest.approx(1.0, rel=1e-4)
