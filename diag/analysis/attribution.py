"""Cause of a propagation fade as a posterior probability: the hop's physics (prior) times the measured evidence.

For each fade event (not a level shift, not a loss of signal: those are equipment rules applied first, see
:mod:`diag.analysis.classify`) and each propagation cause c in (rain, multipath, refractive)::

    logit_c = w_prior * ln prior_c(A)  +  sum_k  w_k * term_k,c          posterior = softmax(logit)

- ``prior_c(A)``: the share of the year the hop spends between A - 1 and A + 1 dB by mechanism c, from ITU-R
  P.530 §2.3/§2.4 with P.838 and a wet-antenna loss (:mod:`diag.analysis.priors`);
- ``term_k``: bounded log-likelihood terms, one small function each below, with its source in its docstring.  Each
  returns a vector over the three causes and "other" (only differences matter) and a short text, or None when
  the data cannot say anything (a term that the sampling interval cannot resolve is absent, so coarser data keep
  the same decision with less evidence: a lower confidence, not another cause);
- hard physics limits: a cause whose P.530 time share at this depth is negligible on this hop
  (:func:`diag.analysis.priors.clear_air_negligible`) or, for rain, an implied path-average rain rate beyond any
  recorded (``RAIN_RATE_MAX_MMH``) gets probability zero; so does refraction for a fade over in under
  ``REFRACTIVE_MIN_S``.

The weights ``WEIGHTS`` are the only fitted numbers (bench/fit_attribution.py, on the fit halves only; see its
docstring for what they were fitted on); every term's internal scale is a stated physical value.
``confidence`` is the posterior of the verdict, calibrated per sampling (``TEMPERATURE``, which keeps the
verdict); ``unknown`` only when "other" wins or the best cause's posterior before calibration is below
``UNKNOWN_BAR``.
"""
from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import pandas as pd

from diag.analysis.network import midpoint
from diag.analysis.priors import HopPrior, clear_air_negligible, hop_prior, prior_log_odds
from diag.links import Link
from diag.models import p838
from diag.models.fading import RAYLEIGH_LOG_MEAN_DB
from diag.numeric import as_float as _f  # a cell as float, NaN when missing
from diag.numeric import duration_word

__all__ = ["PROPAGATION", "WEIGHTS", "UNKNOWN_BAR", "RAIN_RATE_MAX_MMH", "TERMS", "evidence_terms", "posterior",
           "local_solar_hour", "local_hour", "attribute"]

PROPAGATION = ("rain", "multipath", "refractive")
R, M, F, OTHER = 0, 1, 2, 3
NAMES = PROPAGATION + ("other",)
# the null hypothesis "other": a dip that is no propagation fade (reference wander, equipment, interference, dew on
# a radome without rain).  Real logs hold such shallow dips; the simulators do not.  Its time share at depth A
# [% of the year in A +- 1 dB]: OTHER_PCT_AT_3DB x 10^(-(A - 3) / OTHER_DECADE_DB), scaled by the fitted weight
# "other" (fitted with the real OpenRainER links leave-one-link-out, see bench/fit_attribution.py).  When it wins
# the verdict is "unknown": the fade is not explained by the mechanisms the hop's physics allows.
OTHER_PCT_AT_3DB = 0.5
OTHER_DECADE_DB = 2.0
# posterior (before the calibration below) under this for the best cause: "unknown" (a flat posterior over three
# causes is 1/3)
UNKNOWN_BAR = 0.45
# confidence temperature per sampling kind (``_sampling``): the logits are divided by it before the softmax, which
# keeps every arg-max and makes the confidence match how often such verdicts are right (temperature scaling, Guo
# et al., ICML 2017).  Fitted by bench/fit_calibration.py on family B FIT seeds 1-20 only (2026-12-04): before,
# verdicts stated 0.99 / 0.97 / 0.95 and were right 0.92 / 0.92 / 0.70 of the time (1 s / 1 min / 15 min).
# Refitted the same way after the refractive bound and the chance-corrected network term (2026-12-04 evening: the
# fit seeds' stated 0.905 / 0.853 / 0.674 against right 0.927 / 0.921 / 0.718; factors 0.95 / 0.66 / 0.74 applied)
TEMPERATURE = {"fine": 2.70, "coarse": 1.52, "stats": 3.84}
# path-average rain rate no rain gauge network has recorded over a path (the heaviest 1-min POINT rates on record
# are of order 1000-1900 mm/h, and the P.837-7 maps give R0.01 up to ~150 mm/h; path averages over hundreds of
# metres or more stay far below the point records: from memory).  Computed after allowing twice the hop's
# typical wet-antenna loss, so a sub-km hop's wet radome does not turn rain into "impossible".
RAIN_RATE_MAX_MMH = 500.0
# shortest slow refractive fade [s]: the refractivity profile of the lowest hundred metres changes over tens of
# minutes to hours (a nocturnal inversion forming, sunrise break-up, advection of a layer; P.453 profiles, common
# practice, from memory), so a fade down and back up again within ten minutes, even at its longest (a sample more),
# is multipath, rain or equipment, never refraction (term_duration weighs 10-15 min).  Was 120 s; on 2026-12-06 the
# fit seeds' refractive verdicts on events over within 10 min at 1-min samples were multipath or no fade in 346 of
# 364 cases and refractive in 2 (families B 1-50 and C 1-12); 1-min macro-F1 B 0.9462 -> 0.9497, C 0.8775 -> 0.8938
# (docs/validation.md §3a).  15-min statistics are never this short
REFRACTIVE_MIN_S = 600.0

# fitted weights: bench/fit_attribution.py on the fit halves only (in-house simulator TUNING_SEEDS 101-106 at 1 s,
# 1 min and 15 min; family B seeds 1-12, four samplings; the 15 OpenRainER links), each source's duration-weighted
# cross-entropy weighing the same.  Not fitted (see that script): "prior" (P.530's climatic base rates), "shape"
# (the simulators' rain is mostly convective), "hour" and "gauge".  Before fitting all were 1.0.
WEIGHTS: dict[str, float] = {
    "prior": 1.0, "fast": 2.159, "variability": 1.347, "spread": 1.557, "upfade": 0.474, "polarisation": 5.0,
    "decorrelation": 1.643, "duration": 0.996, "shape": 1.0, "hour": 1.0, "gauge": 1.0, "network": 1.56,
    "context": 1.055, "other": 0.891, "refractive": 3.21,
}




def _clip(x: float, lo: float, hi: float) -> float:
    return float(min(hi, max(lo, x)))


def _v(rain: float, multipath: float, refractive: float, other: float = 0.0) -> np.ndarray:
    """A term's log-likelihood vector over (rain, multipath, refractive, other); "other" (a dip that is no
    propagation fade: equipment, reference wander) is neutral unless the term says how such dips behave."""
    return np.array([rain, multipath, refractive, other], dtype=float)


def _sampling(row) -> str:
    """"fine" (10 s or finer), "coarse" (instantaneous samples up to 5 min apart) or "stats" (interval min/avg/max)."""
    if row.get("kind") == "stats":
        return "stats"
    step = _f(row.get("interval_s"))
    return "fine" if math.isfinite(step) and step <= 10.0 else "coarse"


# ------------------------------------------------------------------------------------------------------ terms
def term_fast(row, link: Link, prior: HopPrior):
    """Fast fluctuation about the 1-min running mean, resolved only by samples of 10 s or finer.

    Multipath is the interference of rays whose phases drift in seconds: Rayleigh/Rice fading (docs/references.md §5),
    std of the level of several dB; rain and refractive fades change over minutes (Schleiss & Berne, IEEE GRSL 7,
    2010, use the rolling std to tell wet from dry).  Judged against the log's own clear-air noise and a scale of
    0.3 dB + 8 % of the mean fade (a rain fade's own trend inside a minute).  Bounded to +-2 (log2 of the ratio)."""
    if _sampling(row) != "fine":
        return None
    fast, noise, mean = _f(row.get("fast_std_db")), _f(row.get("noise_diff_db")), max(_f(row.get("mean_fade_db")), 0.5)
    if not math.isfinite(fast):
        return None
    excess = math.sqrt(max(fast ** 2 - (noise ** 2 / 2.0 if math.isfinite(noise) else 0.0), 1e-6))
    s = _clip(math.log2(max(excess, 1e-3) / (0.3 + 0.08 * mean)), -2.0, 2.0)
    return _v(-s, s, -s, -s), f"fast fluctuation {fast:.2f} dB rms"


def term_variability(row, link: Link, prior: HopPrior):
    """Sample-to-sample change in coarse instantaneous samples (1-min logs): multipath samples a minute apart are
    nearly independent draws of the fading (its decorrelation time is seconds), so successive values jump by a
    good part of the fade; rain and refraction move steadily.  Scale 0.5 dB + 35 % of the mean fade (a rain
    fade's onset over a minute); log2 ratio bounded to +-2.  Needs 3 samples or more."""
    if _sampling(row) != "coarse":
        return None
    var, mean = _f(row.get("variability_db")), max(_f(row.get("mean_fade_db")), 0.5)
    step, dur = _f(row.get("interval_s")), _f(row.get("duration_s"))
    if not math.isfinite(var) or not (dur >= 3 * step):
        return None
    s = _clip(math.log2(max(var, 1e-3) / (0.5 + 0.35 * mean)), -2.0, 2.0)
    return _v(-s, s, -s, -s), f"sample-to-sample change {var:.1f} dB"


def term_spread(row, link: Link, prior: HopPrior):
    """15-min min/avg/max: multipath widens the min-max spread while the average stays near the clear-sky level
    (the fading is two-sided and brief); rain and refraction lower the average with the minimum (Overeem et al.,
    Atmos. Meas. Tech. 9, 2016 use min/max per 15 min to detect rain).  Evidence = the average fade as a share of
    the minimum's (mp below 0.35) and the spread (mp above 8 dB); bounded to +-1.5."""
    if _sampling(row) != "stats":
        return None
    spread, ratio = _f(row.get("spread_db")), _f(row.get("avg_to_min_ratio"))
    if not math.isfinite(spread):
        return None
    s = _clip((spread - 8.0) / 4.0, -1.0, 1.5)
    if math.isfinite(ratio):
        s = min(s, _clip((0.35 - ratio) / 0.15, -1.5, 1.5)) if s > 0 else _clip((0.35 - ratio) / 0.15, -1.5, 0.0)
        text = f"15-min spread {spread:.1f} dB, average {ratio:.0%} of the minimum's fade"
    else:
        text = f"15-min spread {spread:.1f} dB"
    return _v(-s, s, -s, -s), text


def term_upfade(row, link: Link, prior: HopPrior):
    """Level above the clear-sky reference in or near the fade: clear-air fading enhances as well as fades (P.530
    §2.3.3), rain only attenuates.  Within 5 min for fine samples, 30 min for coarser ones (a rise must be seen
    by a sample).  Excess over 1.5 dB (reference uncertainty) per dB, bounded to -1..+2; refraction (ducting) can
    enhance too, at a third of the weight (from memory)."""
    kind = _sampling(row)
    if kind == "fine":
        up = max(_f(row.get("upfade_within_db")), _f(row.get("upfade_before_db")), _f(row.get("upfade_after_db")))
    else:
        up = max(_f(row.get("upfade_context_db")), _f(row.get("upfade_within_db")))
    if not math.isfinite(up):
        return None
    s = _clip((up - 1.5) / 1.0, -1.0, 2.0)
    text = (f"level up to {up:.1f} dB above the reference nearby" if up >= 1.0
            else "no rise above the reference nearby (rain only lowers the level)")
    return _v(-s, s, s / 3.0), text


# RAYLEIGH_LOG_MEAN_DB (diag.models.fading): the mean in dB of a Rayleigh-faded level lies 2.507 dB below its mean power
SLOW_MIN_S = 600.0       # an event long enough to hold many independent multipath fades (they decorrelate in seconds)
SLOW_MARGIN_DB = 1.0     # reference error and the event's own edges (stated)
SLOW_SCALE_DB = 1.0
SLOW_MAX = 6.0


def term_slow(row, link: Link, prior: HopPrior):
    """Mean fade of a long event against flat fading alone.  Multipath scatters the level about its clear-air mean
    power; its mean in dB lies at most the Rayleigh log-mean bias (``RAYLEIGH_LOG_MEAN_DB``, 2.5 dB: E[10 log10 X] for
    an exponential X of mean 1 is -10 gamma / ln 10) below it.  Over an event of ``SLOW_MIN_S`` or more (many fades)
    a mean fade beyond that bias plus ``SLOW_MARGIN_DB`` needs a slow component under the fading (rain or
    refraction), which then is the larger contributor most of the time.  Against multipath, 1 per ``SLOW_SCALE_DB``
    of excess, bounded to ``SLOW_MAX`` (weight 1, not fitted; the bound was chosen on family B fit seeds 1-50 among
    3 / 6 / 10); samples only (the interval statistics are judged by :func:`term_spread`)."""
    excess = _slow_excess_db(row)
    if not excess > 0.0:
        return None
    s = _clip(excess / SLOW_SCALE_DB, 0.0, SLOW_MAX)
    dur, mean = _f(row.get("duration_s")), _f(row.get("mean_fade_db"))
    text = f"mean fade {mean:.1f} dB over the {duration_word(dur)} fade (flat fading alone: under 2.5 dB)"
    return _v(0.0, -s, 0.0), text


def _slow_excess_db(row) -> float:
    """How far the mean fade of a long sampled event lies beyond flat fading's own (Rayleigh log-mean bias plus
    ``SLOW_MARGIN_DB``) [dB]; NaN for interval statistics or an event shorter than ``SLOW_MIN_S``."""
    if _sampling(row) == "stats":
        return math.nan
    dur, mean = _f(row.get("duration_s")), _f(row.get("mean_fade_db"))
    if not (math.isfinite(mean) and dur >= SLOW_MIN_S):
        return math.nan
    return mean - RAYLEIGH_LOG_MEAN_DB - SLOW_MARGIN_DB


def slow_depth(row) -> float:
    """Depth at which rain and refraction are judged when fast fluctuation rides on a slow component: the mean fade
    of a long fine- or coarse-sampled event that flat fading alone cannot give (:func:`term_slow`) and whose
    fluctuation or sample-to-sample change argues for multipath (:func:`term_fast`, :func:`term_variability`, which
    read only the row), else NaN (the peak is used)."""
    if not _slow_excess_db(row) > 0.0:
        return math.nan
    fast = term_fast(row, None, None) or term_variability(row, None, None)
    return _f(row.get("mean_fade_db")) if fast is not None and fast[0][M] > 0 else math.nan


def term_polarisation(row, link: Link, prior: HopPrior):
    """V/H attenuation ratio against ITU-R P.838-3: rain gives A_V/A_H = gamma_V/gamma_H at the implied rate (below
    1 above ~8 GHz in moderate rain, near 1 in some bands and light rain), pulled towards 1 by the wet-antenna
    loss common to both; clear-air fading is polarisation-independent on average (ratio 1; multipath scatters it).
    Gaussian likelihoods with a spread of 0.05 + 0.6 / fade (reference errors of ~0.3 dB per channel); where
    P.838's ratio is near 1 the two likelihoods coincide and the term says nothing.  Bounded to -3..0."""
    vh, expected = _f(row.get("v_over_h_ratio")), _f(row.get("expected_v_over_h"))
    if not (math.isfinite(vh) and math.isfinite(expected)):
        return None
    fade = max(_f(row.get("peak_fade_db_finite")), 3.0)
    wet = min(prior.wet_db / 2.0, 0.5 * fade)
    expected_wet = (expected * (fade - wet) + wet) / fade
    sigma = 0.05 + 0.6 / fade
    ll = _v(-0.5 * ((vh - expected_wet) / sigma) ** 2, -0.5 * ((vh - 1.0) / max(sigma, 0.3)) ** 2
            - math.log(max(sigma, 0.3) / sigma), -0.5 * ((vh - 1.0) / sigma) ** 2)
    ll = np.clip(ll - ll[:3].max(), -3.0, 0.0)
    ll[OTHER] = 0.0   # a dip that is no propagation fade: the ratio says nothing about it
    return ll, f"V/H attenuation ratio {vh:.2f} (P.838 rain {expected_wet:.2f} with wet antennas, clear air 1.00)"


def term_decorrelation(row, link: Link, prior: HopPrior):
    """Correlation of the two polarisations or the two directions over the fade: rain and refraction fade both
    together (the same medium along the same path), multipath decorrelates them (different frequencies in the two
    directions, different polarisations: P.530 §2.3 diversity improvement rests on this).  Only over a fade with a
    shape (peak - mean >= 2 dB).  Correlation below 0.8 per 0.2, bounded to -1..+2."""
    corr = _f(row.get("partner_corr"))
    peak, mean = _f(row.get("peak_fade_db_finite")), _f(row.get("mean_fade_db"))
    if not math.isfinite(corr) or not (peak - mean >= 2.0):
        return None
    s = _clip((0.8 - corr) / 0.2, -1.0, 2.0)
    return _v(-s, s, -s), f"correlation with the other channel {corr:.2f}"


def term_companion(row, link: Link, prior: HopPrior):
    """The other direction of the same path NOT fading (two channels of one polarisation; the H/V pair is judged by
    :func:`term_polarisation`): rain, wet antennas and refraction sit on the path and antennas both directions
    share, so both fade (reciprocity; across a 1-GHz duplex split near 25 GHz P.838-3 k differs by about 10 %).
    Multipath is frequency-selective and may fade one direction only (P.530 §2.3 frequency-diversity improvement
    rests on this); an equipment fault hits one direction.  Real duplex pairs in rain differ more than P.838 says
    (one end's wet radome, ATPC, the receiver floor: ratios of 0.3-3 are seen in heavy rain), so the term speaks
    only when the partner barely moved: ``partner_ratio`` (the partner's attenuation over this channel's deep
    samples) below 0.45 AND the partner's own deep fade (ratio x 0.75 x peak, the deep samples lying between half
    the peak and the peak) under 2.5 dB.  -1 per 0.1 of ratio below 0.45 times the share of 1 dB by which the
    partner stayed under 2.5 dB; bounded to -3..0 for rain and refraction (weight 1, not fitted)."""
    ratio = _f(row.get("partner_ratio"))
    if not math.isfinite(ratio) or math.isfinite(_f(row.get("v_over_h_ratio"))):
        return None
    peak = max(_f(row.get("peak_fade_db_finite")), 3.0)
    partner_db = max(ratio, 0.0) * 0.75 * peak
    s = _clip((0.45 - ratio) / 0.1, 0.0, 3.0) * _clip(2.5 - partner_db, 0.0, 1.0)
    if s <= 0.0:
        return None
    return _v(-s, 0.0, -s), f"the other direction faded {max(ratio, 0.0):.0%} as much (about {partner_db:.1f} dB)"


def term_duration(row, link: Link, prior: HopPrior):
    """Duration against path length: a rain cell advected at 10-30 m/s needs about 30 s per km (at least a minute)
    to cross a path (common practice, from memory); a slow refractive fade follows the boundary layer over 15 min
    or more (from memory); deep multipath fades last seconds (Vigants, BSTJ 50(3), 1971) but an episode's bursts
    merge into long events, so duration argues only against rain and refraction when short.  A fade over 12 h is
    not rain (common practice).  log2 of the shortfall, bounded to 3."""
    dur = _f(row.get("duration_s"))
    if not math.isfinite(dur) or dur <= 0:
        return None
    step = max(_f(row.get("interval_s")), 1.0)
    rain_min = max(60.0, 30.0 * link.length_km)
    vec = _v(0.0, 0.0, 0.0)
    # a duration is known only to within a sample: judge the longest it could be
    longest = dur + step
    if longest < rain_min:
        vec[R] -= _clip(math.log2(rain_min / longest), 0.0, 3.0)
    if longest < 900.0:
        vec[F] -= _clip(math.log2(900.0 / longest), 0.0, 3.0)
    if dur > 12 * 3600.0:
        vec[R] -= 1.0
    if not vec.any():
        return None
    return vec, f"{duration_word(dur)} long ({link.length_km:g}-km path)"


def term_shape(row, link: Link, prior: HopPrior):
    """Profile of a resolved fade (samples of 10 s or finer, or 30 samples or more): convective rain cells give a
    peaked profile with a faster onset than recovery; refractive fades are broad and symmetric (common practice,
    from memory).  Weak by design: stratiform rain is broad too.  Each part bounded to +-0.5."""
    kind = _sampling(row)
    dur, step = _f(row.get("duration_s")), _f(row.get("interval_s"))
    vec = _v(0.0, 0.0, 0.0)
    notes = []
    if kind == "stats":
        ratio = _f(row.get("avg_to_min_ratio"))
        if math.isfinite(ratio) and dur >= 1800.0:
            s = _clip((ratio - 0.67) / 0.1, -1.0, 1.0) * 0.5
            vec += _v(-s, 0.0, s)
            notes.append(f"average {ratio:.0%} of the 15-min minimum's fade")
    elif kind == "fine" or dur >= 30 * step:
        half = _f(row.get("half_peak_fraction"))
        if math.isfinite(half):
            s = _clip((half - 0.4) / 0.15, -1.0, 1.0) * 0.5
            vec += _v(-s, 0.0, s)
            notes.append(f"{half:.0%} of it above half the peak")
        slope_in, slope_out = _f(row.get("slope_in_db_s")), _f(row.get("slope_out_db_s"))
        if dur >= 900.0 and slope_in > 0 and slope_out > 0:
            s = _clip(math.log2(slope_in / slope_out), -1.0, 1.0) * 0.5
            vec += _v(s, 0.0, -s)
            notes.append(f"onset {slope_in / slope_out:.1f}x the recovery rate")
    if not notes:
        return None
    return vec, ", ".join(notes)


def local_solar_hour(hour_utc: float, link: Link) -> tuple[float, bool]:
    """Local mean solar hour from the mid-path longitude (hour_utc + lon / 15); (hour_utc, False) without it."""
    lons = [v for v in (link.site_a_lon, link.site_b_lon) if v is not None]
    if not lons:
        return float(hour_utc) % 24.0, False
    return (float(hour_utc) + float(np.mean(lons)) / 15.0) % 24.0, True


def local_hour(row, link: Link) -> tuple[float, str] | None:
    """(hour, clock name): local solar time from the site longitudes, else the civil time of the ``local_tz`` zone
    (``--tz``; civil time runs up to two hours ahead of solar time), else UTC."""
    hour = _f(row.get("hour_utc"))
    if not math.isfinite(hour):
        return None
    local, solar = local_solar_hour(hour, link)
    if solar:
        return local, "local solar"
    tz, start = row.get("local_tz"), row.get("start_utc")
    if tz and start is not None and not pd.isna(start):
        try:
            t = pd.Timestamp(start).tz_convert(str(tz))
        except (ValueError, TypeError, KeyError):
            return local, "UTC"
        return t.hour + t.minute / 60.0, f"{tz}"
    return local, "UTC"


# (rain, multipath, refractive) log-likelihoods of a fade at night (21-08 h) and in the afternoon (12-20 h)
HOUR_NIGHT = (-1.0, 1.0, 1.0)
HOUR_AFTERNOON = (0.5, -0.5, -0.5)


def term_hour(row, link: Link, prior: HopPrior):
    """Hour in local solar time (site longitudes), else in the logs' local zone (``--tz``), else UTC: clear-air
    fading comes with the stable stratified air of nights and early mornings (P.530 §2.3 worst month,
    docs/references.md §8 "Timing"), convective rain peaks in the afternoon.  Weak, +-1 at most (weight not
    fitted: the simulators place causes by hour, so fitting would learn them)."""
    got = local_hour(row, link)
    if got is None:
        return None
    local, clock = got
    if local >= 21.0 or local < 8.0:
        vec = HOUR_NIGHT
    elif 12.0 <= local < 20.0:
        vec = HOUR_AFTERNOON
    else:
        return None
    return _v(*vec), f"at {local:02.0f} h {clock} time"


def term_gauge(row, link: Link, prior: HopPrior):
    """Rain gauge within 15 min of the fade (optional input): rain confirms; a dry gauge argues weakly against (a
    gauge is a point and misses cells crossing the path).  +1.5 / -1.0 (from memory, not fitted)."""
    gauge = _f(row.get("gauge_rain_mmh"))
    if not math.isfinite(gauge):
        return None
    if gauge >= 0.5:
        return _v(1.5, 0.0, 0.0), f"gauge {gauge:.1f} mm/h"
    return _v(-1.0, 0.0, 0.0), "gauge dry"


# share of the hops at nearness weight 1 that a rain fade on this path also fades by 3 dB or more beyond their own
# chance rate (rain cells of a few km against CORRELATION_KM; stated, from memory, not fitted)
NETWORK_SHARED_RAIN = 0.3
# rain on a path for T hours is advected over tens of km (cells move at 3-8 m/s: common practice, from memory), so
# the near hops it should have touched grow with T: 0.3 W (1 + T / 1 h).  The bound of the resulting evidence, and
# the per-hour growth, were chosen LEAVE-ONE-LINK-OUT on the 141 real OpenRainER links among five candidates (per
# hour 0 / 1, bound 3 / 6 / 10; loss = missed wet share + dry rain share of the other 140 links): bound 10 in 140 of
# the 141 folds, 6 in one; the left-out links scored so: wet faded minutes called rain 93.0 %, dry 5.5 % (2026-12-05)
NETWORK_SILENCE_PER_HOUR = 1.0
# the silence grows with the hours of the hop's whole episode of fades, not only this fade's (term_network);
# neutral on family B fit seeds 1-50, real OpenRainER dry days 4.9 -> 3.5 % called rain in-sample (2026-12-05)
EPISODE_SILENCE = True
NETWORK_SILENCE_MAX = 10.0
# silence evidence under this (log-likelihood) is no term: the watched hops lie too far away to say anything.  Until
# 2026-12-05 (sixth sitting) a placed hop's silence counted at least 0.3 however far away the other hops were
NETWORK_SILENCE_NEGLIGIBLE = 0.01


def network_excess(row) -> tuple[float, float, float] | None:
    """(share, chance, weight beyond chance) of an event's network columns (:mod:`diag.analysis.network`): the
    share of the other hops that faded, the share expected by chance (0 when unknown), and the nearness weight of
    the hops that faded scaled to the excess over chance (NaN without ``network_faded_weight``).  None when no
    other hop was seen or none faded."""
    share, others = _f(row.get("network_share")), _f(row.get("network_hops"))
    if not (math.isfinite(share) and others >= 1 and share > 0.0):
        return None
    chance = _f(row.get("network_chance"))
    chance = chance if math.isfinite(chance) else 0.0
    mass = _f(row.get("network_faded_weight"))
    return share, chance, (mass * (share - chance) / share if math.isfinite(mass) else math.nan)


def term_network(row, link: Link, prior: HopPrior):
    """Other hops of the network fading in the same minutes BEYOND CHANCE (columns of
    :mod:`diag.analysis.network`: ``network_share``, the distance-weighted share that faded; ``network_chance``, the
    share expected in a window that long from each hop's own rate of fading over the record): rain is weather and
    fades neighbouring hops together, clear-air fading is hop-local (docs/references.md §8, "Neighbouring hops";
    Overeem et al. 2016 nearby-link method).  In a large network some hops fade somewhere most of the time, so
    only the excess of the share over chance is evidence (a likelihood ratio needs the rate under "no rain" as
    much as under rain).  Up to +2 for rain at an excess of 0.2 or more, scaled by the weight of the hops that
    faded beyond chance up to 1, and up to +2 more as that weight grows from 1 to 3 (several near hops).  When three
    or more other hops were watched and no more faded than chance: -``NETWORK_SHARED_RAIN`` x the watched nearness
    weight (``network_weight``) x (1 + ``NETWORK_SILENCE_PER_HOUR`` x the fade's hours: long rain sweeps a wider area),
    bounded to -``NETWORK_SILENCE_MAX``, where the links table gives site coordinates (else -0.3); hops so far away
    that the product is under ``NETWORK_SILENCE_NEGLIGIBLE`` give no term (their silence says nothing).  The hours
    are those of the hop's whole episode (``episode_hours``: its fades less than ``network.EPISODE_GAP_S`` apart)
    when the near hops stayed no busier than chance over all of it (``episode_share``, ``episode_chance``): a
    morning of dips returning every few minutes is one spell, and rain on this path for that long would have
    reached them, however short each dip (``EPISODE_SILENCE``)."""
    share, others = _f(row.get("network_share")), _f(row.get("network_hops"))
    if not (math.isfinite(share) and others >= 1):
        return None
    chance = _f(row.get("network_chance"))
    chance = chance if math.isfinite(chance) else 0.0
    excess = share - chance
    if share <= 0.0 or excess <= 0.0:
        if others < 3:
            return None
        # rain that fades this path falls on the near hops too: with a watched nearness weight W, about
        # NETWORK_SHARED_RAIN x W of them should have faded beyond chance, and none did (Poisson: ln P = -q W).
        # Only where the links table places the hop (site coordinates): otherwise every hop weighs 1 wherever it
        # lies, and their silence says little about rain on this path (the flat -0.3)
        watched = _f(row.get("network_weight"))
        placed = midpoint(link) is not None and math.isfinite(watched)
        hours = max(_f(row.get("duration_s")), 0.0) / 3600.0
        hours = hours if math.isfinite(hours) else 0.0
        # the hop's whole episode of fades (its fades less than network.EPISODE_GAP_S apart), when the near hops
        # stayed as quiet over all of it: rain that keeps fading this path for hours would have reached them
        ep_share, ep_chance, ep_hours = (_f(row.get(c)) for c in ("episode_share", "episode_chance",
                                                                   "episode_hours"))
        if (EPISODE_SILENCE and math.isfinite(ep_hours) and ep_hours > hours and math.isfinite(ep_share)
                and (ep_share <= 0.0 or ep_share - (ep_chance if math.isfinite(ep_chance) else 0.0) <= 0.0)):
            hours = ep_hours
        # placed: no floor.  Hops tens of km away or more weigh next to nothing (exp(-d / CORRELATION_KM)), and
        # their silence is no evidence about rain on this path: a lone hop 100 km from the rest gets no term
        s = (_clip(NETWORK_SHARED_RAIN * watched * (1.0 + NETWORK_SILENCE_PER_HOUR * hours), 0.0,
                   NETWORK_SILENCE_MAX) if placed else 0.3)
        if s < NETWORK_SILENCE_NEGLIGIBLE:
            return None
        text = (f"none of {others:.0f} other hops faded" if share <= 0.0 else
                f"{share:.0%} of the network's other hops faded with it, no more than chance ({chance:.0%})")
        return _v(-s, 0.0, 0.0), text
    # the evidence rests on the hops that faded beyond chance, weighted by nearness (1 each without coordinates):
    # one faded hop at 0 km, or several further off, give the full term; hops 50 km away fading in a regional
    # storm give little
    mass = network_excess(row)[2]
    near = min(1.0, mass) if math.isfinite(mass) else 1.0
    # several near hops fading together (a storm over the network) are more than one: +1 per further near hop's
    # worth of weight, up to +2 more (hop-local mechanisms almost never fade three neighbours in the same minutes)
    more = _clip(mass - 1.0, 0.0, 2.0) if math.isfinite(mass) and excess >= 0.2 else 0.0
    text = f"{share:.0%} of the network's other hops faded with it"
    if chance >= 0.005:
        text += f" (chance {chance:.0%})"
    return _v(2.0 * min(1.0, excess / 0.2) * near + more, 0.0, 0.0), text


def term_context(row, link: Link, prior: HopPrior):
    """A short (< 10 min) fade within 30 min of multipath fades on the same hop is one more dip of that episode:
    multipath activity lasts hours and comes and goes (P.530 §2.3 worst-month statistics; Vigants 1971).  Column
    ``multipath_nearby`` (set by :func:`attribute` from a first pass); up to +1.5 for multipath."""
    near = _f(row.get("multipath_nearby"))
    if not (near > 0) or _f(row.get("duration_s")) >= 600.0:
        return None
    return _v(0.0, 1.5 * min(1.0, near / 2.0), 0.0), f"{near:.0f} multipath fade(s) within 30 min on this hop"


DIURNAL_WINDOW_S = 4500.0   # +-75 min: "the same time of day" (sunrise moves little in a week; the layer's
#                             break-up and a mount's heating wander by about an hour: stated choice)
DIURNAL_P_RECUR = 0.7       # a clock-bound fade (a sunrise fade, a heated mount) recurs on most days (stated)


def term_diurnal(row, link: Link, prior: HopPrior):
    """The same hop fading at the same time of day (+-75 min) on the other days of the record: the break-up of
    the night's stable layer after sunrise and the sun heating a mount or a radome keep the clock (the morning
    fades of P.530 §2.3's clear-air mechanisms; common practice), rain does not.  Columns ``diurnal_days`` (other
    days the record spans), ``diurnal_matches`` (of them, days with a fade starting that close in time of day) and
    ``diurnal_chance`` (the chance of such a match on one day from the hop's own rate of fade starts, Poisson),
    set by :func:`attribute`.  Log-likelihood ratio of recurrence on ``DIURNAL_P_RECUR`` of the days against
    chance, bounded to 0..3, against rain only (multipath nights recur too)."""
    days, hits, chance = _f(row.get("diurnal_days")), _f(row.get("diurnal_matches")), _f(row.get("diurnal_chance"))
    if not (days >= 3 and 0.0 < chance < DIURNAL_P_RECUR) or not math.isfinite(hits):
        return None
    p1 = DIURNAL_P_RECUR
    llr = hits * math.log(p1 / chance) + (days - hits) * math.log((1.0 - p1) / (1.0 - chance))
    s = _clip(llr, 0.0, 3.0)
    if s <= 0.0:
        return None
    return _v(-s, 0.0, 0.0), f"faded at this time of day on {hits:.0f} of {days:.0f} other days (chance {chance:.0%})"


TERMS: dict[str, Callable] = {
    "fast": term_fast, "variability": term_variability, "spread": term_spread, "upfade": term_upfade,
    "polarisation": term_polarisation, "decorrelation": term_decorrelation, "companion": term_companion,
    "duration": term_duration, "slow": term_slow,
    "shape": term_shape, "hour": term_hour, "gauge": term_gauge, "network": term_network, "context": term_context,
    "diurnal": term_diurnal,
}




# ------------------------------------------------------------------------------------------------- posterior
def implied_rate_mmh(peak_db: float, link: Link, prior: HopPrior) -> float:
    """Path-average rain rate implied by the fade after allowing twice the typical wet-antenna loss (P.838-3 eq. (1)
    inverted)."""
    path_db = peak_db - 2.0 * prior.wet_db
    if not (math.isfinite(path_db) and path_db > 0):
        return 0.0
    tilt = 90.0 if link.polarization == "V" else 0.0
    k, alpha = p838.rain_coefficients(link.frequency_ghz, tilt)
    return float((path_db / (float(k) * link.length_km)) ** (1.0 / float(alpha)))


# the terms that read a fade's deepest samples or its fluctuation; in a long event with multipath on a slow
# component they speak of the multipath only (evidence_terms; chosen on family C fit seeds 1-12 and B fit 1-50,
# docs/validation.md §3a)
FAST_PART_TERMS = ("upfade", "polarisation", "decorrelation")
MIXED_SLOW_NEUTRAL = True


def evidence_terms(rows: list[dict], link: Link, prior: HopPrior | None = None):
    """Per event: prior log-shares [n, 4] (rain, multipath, refractive, other), term vectors {name: [n, 4]}
    (zeros where absent), texts {name: [n]},
    and the hard-limit mask [n, 4] (False = cause impossible)."""
    prior = prior or hop_prior(link)
    n = len(rows)
    peak = np.array([_f(r.get("peak_fade_db_finite")) for r in rows], dtype=float)
    # an event that reached the receiver floor has an unknown depth beyond the floor: judge it by the fade measured
    # just before the floor (else 10 dB), and never veto rain on a depth the receiver could not measure
    floored = np.array([_f(r.get("floor_fraction")) > 0 for r in rows], dtype=bool)
    pre = np.array([_f(r.get("pre_floor_fade_db")) for r in rows], dtype=float)
    peak = np.where(floored, np.where(np.isfinite(pre), np.maximum(pre, 3.0), 10.0), peak)
    # ATPC: the transmitter rose by tsl_rise_db to hide part of the path fade from the RSL (evidence.py)
    peak = peak + np.array([max(_f(r.get("tsl_rise_db")), 0.0) if _f(r.get("tsl_rise_db")) > 0 else 0.0
                            for r in rows])
    depth = np.where(np.isfinite(peak), np.maximum(peak, 1.0), 3.0)
    logs = prior_log_odds(prior, depth)
    # a long event whose mean fade needs a slow component under fast fluctuation (slow_depth): rain and refraction
    # are judged at the slow component's depth (the mean) too, not only at a multipath dip on top of it
    slow = np.array([slow_depth(r) for r in rows], dtype=float)
    if np.isfinite(slow).any():
        at = prior_log_odds(prior, np.where(np.isfinite(slow), np.maximum(slow, 1.0), depth))
        for cause in ("rain", "refractive"):
            logs[cause] = np.where(np.isfinite(slow), np.maximum(at[cause], logs[cause]), logs[cause])
    other = math.log(OTHER_PCT_AT_3DB) - np.maximum(depth - 3.0, 0.0) * math.log(10.0) / OTHER_DECADE_DB
    base = np.stack([logs["rain"], logs["multipath"], logs["refractive"], other], axis=1) if n else np.zeros((0, 4))
    terms = {name: np.zeros((n, 4)) for name in TERMS}
    texts = {name: [""] * n for name in TERMS}
    for i, row in enumerate(rows):
        for name, fn in TERMS.items():
            got = fn(row, link, prior)
            if got is not None:
                terms[name][i, :] = got[0]
                texts[name][i] = got[1]
    if MIXED_SLOW_NEUTRAL and np.isfinite(slow).any():
        # fast fluctuation on a slow component: the rises, the V/H ratio of the deepest samples and the channels'
        # correlation are those of the multipath on top; they cannot tell rain from refraction underneath
        mixed = np.isfinite(slow)
        for name in FAST_PART_TERMS:
            level = np.maximum(terms[name][mixed, R], terms[name][mixed, F])
            terms[name][mixed, R] = level
            terms[name][mixed, F] = level
    allowed = np.ones((n, 4), dtype=bool)
    if n:
        negligible = clear_air_negligible(prior, depth)
        allowed[:, M] &= ~negligible
        allowed[:, F] &= ~negligible
        # a slow refractive fade follows the boundary layer over many minutes: one over in under REFRACTIVE_MIN_S
        # (even at its longest, a sample more) is no refractive fade
        longest = np.array([_f(r.get("duration_s")) + max(_f(r.get("interval_s")), 0.0) for r in rows])
        allowed[:, F] &= ~(longest < REFRACTIVE_MIN_S)
        rates = np.array([implied_rate_mmh(p, link, prior) for p in peak])
        allowed[:, R] &= ~((rates > RAIN_RATE_MAX_MMH) & ~floored)
    return base, terms, texts, allowed


def posterior(base: np.ndarray, terms: dict[str, np.ndarray], allowed: np.ndarray,
              weights: dict[str, float] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """(logits [n, 4], posterior [n, 4]); impossible causes get probability 0."""
    w = WEIGHTS if weights is None else weights
    logit = w.get("prior", 1.0) * base
    for name, vec in terms.items():
        logit = logit + w.get(name, 1.0) * vec
    # fitted scale factors of two stated prior constants: priors.REFRACTIVE_SHARE and OTHER_PCT_AT_3DB
    logit = logit + np.array([0.0, 0.0, math.log(max(w.get("refractive", 1.0), 1e-12)),
                              math.log(max(w.get("other", 1.0), 1e-12))])
    logit = np.where(allowed, logit, -np.inf)
    top = np.max(logit, axis=1, keepdims=True)
    with np.errstate(invalid="ignore"):
        e = np.exp(logit - np.where(np.isfinite(top), top, 0.0))
        post = e / e.sum(axis=1, keepdims=True)
    return logit, post


def _context_counts(rows: list[dict], p_multipath: np.ndarray, window_s: float = 1800.0) -> np.ndarray:
    """Per row: how many OTHER rows of the hop called multipath (posterior > 0.6) lie within ``window_s``."""
    n = len(rows)
    out = np.zeros(n)
    mp = np.flatnonzero(p_multipath > 0.6)
    if not mp.size:
        return out
    t0 = np.array([pd.Timestamp(r["start_utc"]).value if r.get("start_utc") is not None else 0 for r in rows],
                  dtype=np.int64)
    t1 = np.array([pd.Timestamp(r["end_utc"]).value if r.get("end_utc") is not None else 0 for r in rows],
                  dtype=np.int64)
    win = int(window_s * 1e9)
    for i in range(n):
        near = (t1[mp] >= t0[i] - win) & (t0[mp] <= t1[i] + win) & (mp != i)
        out[i] = float(np.count_nonzero(near))
    return out


def _diurnal(rows: list[dict]) -> None:
    """Set ``diurnal_days``, ``diurnal_matches`` and ``diurnal_chance`` on each fade row (see :func:`term_diurnal`).
    Days spanned: calendar days (UTC) from the hop's first to its last fade start; the chance of a match on one day
    comes from the MEDIAN number of fade starts per day (one per ``group_id``: one physical fade seen on several
    channels), so a few stormy days do not make every quiet day's recurrence look like chance."""
    starts = [pd.Timestamp(r["start_utc"]) if r.get("start_utc") is not None and r.get("event_kind") == "fade"
              else None for r in rows]
    valid = [t for t in starts if t is not None and not pd.isna(t)]
    if len(valid) < 2:
        return
    t_ns = np.array(sorted({t.value for t in valid}), dtype=np.int64)
    day_ns = 86400 * 10 ** 9
    first_day, last_day = t_ns.min() // day_ns, t_ns.max() // day_ns
    n_days = int(last_day - first_day + 1)
    first_start: dict = {}
    for r, t in zip(rows, starts):
        if t is not None and not pd.isna(t):
            g = r.get("group_id")
            first_start[g] = min(first_start.get(g, t.value), t.value)
    per_day = np.bincount(np.array([v // day_ns - first_day for v in first_start.values()], dtype=np.int64),
                          minlength=n_days)
    rate_per_s = float(np.median(per_day)) / 86400.0
    chance = 1.0 - math.exp(-rate_per_s * 2.0 * DIURNAL_WINDOW_S)
    day = t_ns // day_ns
    tod = t_ns % day_ns
    win = int(DIURNAL_WINDOW_S * 1e9)
    for r, t in zip(rows, starts):
        if t is None or pd.isna(t):
            continue
        my_day, my_tod = t.value // day_ns, t.value % day_ns
        gap = np.abs(tod - my_tod)
        close = np.minimum(gap, day_ns - gap) <= win
        r["diurnal_days"] = float(n_days - 1)
        r["diurnal_matches"] = float(len(set(day[close & (day != my_day)].tolist())))
        r["diurnal_chance"] = chance


def _group_ids(rows: list[dict]) -> np.ndarray:
    out = np.full(len(rows), -1, dtype=np.int64)
    for i, row in enumerate(rows):
        g = row.get("group_id")
        if g is not None and g == g:
            out[i] = int(g)
    return out


# the members of a group share their rain-vs-refractive log-odds weighted by their durations: a 3-h fade seen on two
# channels is not outvoted by four 5-min dips on its tail that overlap it (family C fit seed 10: two 3-h, 33-dB
# rain fades with rain ahead by 8 in log-odds each were called refractive by the unweighted mean)
POOL_BY_DURATION = True


def group_durations(rows: list[dict]) -> np.ndarray:
    """Each row's duration [s] (at least 1 s; 1 where unknown): its weight in the group pooling."""
    d = np.array([_f(r.get("duration_s")) for r in rows], dtype=float)
    return np.where(np.isfinite(d), np.maximum(d, 1.0), 1.0)


def _pool_groups(groups: np.ndarray, logit: np.ndarray, durations: np.ndarray | None = None) -> np.ndarray:
    """One physical event seen on several channels of the hop (same ``group_id``): rain and refraction act on the
    whole path, so the members share the mean rain-vs-refractive log-odds (multipath stays per channel), each
    member weighted by its duration when ``durations`` is given (``POOL_BY_DURATION``), else equally."""
    out = logit.copy()
    ok = (groups >= 0) & np.isfinite(logit[:, R]) & np.isfinite(logit[:, F])
    if not ok.any():
        return out
    ids, inverse, counts = np.unique(groups[ok], return_inverse=True, return_counts=True)
    delta = logit[ok, R] - logit[ok, F]
    wt = durations[ok] if (POOL_BY_DURATION and durations is not None) else np.ones(int(ok.sum()))
    mean = np.bincount(inverse, weights=delta * wt) / np.bincount(inverse, weights=wt)
    shift = np.where(counts[inverse] > 1, (mean[inverse] - delta) / 2.0, 0.0)
    idx = np.flatnonzero(ok)
    out[idx, R] += shift
    out[idx, F] -= shift
    return out


def prepare(rows: list[dict], link: Link, prior: HopPrior | None = None, weights: dict[str, float] | None = None):
    """Everything the posterior needs, evaluated once: (base, terms, texts, allowed, groups).  The hop-context term
    comes from a first pass with ``weights``."""
    prior = prior or hop_prior(link)
    w = WEIGHTS if weights is None else weights
    _diurnal(rows)
    base, terms, texts, allowed = evidence_terms(rows, link, prior)
    _, first = posterior(base, terms, allowed, w)
    if len(rows):
        near = _context_counts(rows, np.nan_to_num(first[:, M]))
        for i, row in enumerate(rows):
            row["multipath_nearby"] = near[i]
            got = term_context(row, link, prior)
            terms["context"][i, :] = got[0] if got else 0.0
            texts["context"][i] = got[1] if got else ""
    return base, terms, texts, allowed, _group_ids(rows)


def pooled_logits(base, terms, allowed, groups, weights: dict[str, float] | None = None,
                  durations: np.ndarray | None = None) -> np.ndarray:
    """Logits [n, 4] after the group pooling (members weighted by ``durations`` when given)."""
    logit, _ = posterior(base, terms, allowed, weights)
    return _pool_groups(groups, logit, durations)


def final_posterior(base, terms, allowed, groups, weights: dict[str, float] | None = None,
                    temperature: np.ndarray | None = None, durations: np.ndarray | None = None,
                    logit: np.ndarray | None = None) -> np.ndarray:
    """Posterior [n, 4] after the group pooling (members weighted by ``durations`` when given), each row's logits
    divided by its ``temperature`` (1 when None); ``logit``: the pooled logits when already computed
    (:func:`pooled_logits`)."""
    if logit is None:
        logit = pooled_logits(base, terms, allowed, groups, weights, durations)
    if temperature is not None and len(logit):
        logit = logit / np.asarray(temperature, dtype=float)[:, None]
    top = np.max(logit, axis=1, keepdims=True) if len(logit) else np.zeros((0, 1))
    with np.errstate(invalid="ignore"):
        e = np.exp(logit - np.where(np.isfinite(top), top, 0.0))
        return e / e.sum(axis=1, keepdims=True)


def attribute(rows: list[dict], link: Link, *, weights: dict[str, float] | None = None,
              prior: HopPrior | None = None) -> list[tuple[str, float, str]]:
    """(cause, confidence, evidence) of each propagation event row (dicts of the event table's columns): prior and
    terms, then the hop context (multipath episodes, a first pass) and the pooling of a group's channels."""
    prior = prior or hop_prior(link)
    w = WEIGHTS if weights is None else weights
    base, terms, texts, allowed, groups = prepare(rows, link, prior, w)
    # the verdict (and "unknown" for a flat posterior) from the evidence as it stands; the confidence stated is the
    # calibrated probability (TEMPERATURE keeps the arg-max)
    logit = pooled_logits(base, terms, allowed, groups, w, group_durations(rows))   # once for both
    raw = final_posterior(base, terms, allowed, groups, logit=logit)
    post = final_posterior(base, terms, allowed, groups, logit=logit,
                           temperature=np.array([TEMPERATURE[_sampling(r)] for r in rows]))
    out = []
    for i, row in enumerate(rows):
        p = post[i]
        peak = _f(row.get("peak_fade_db"))
        shape = f"{duration_word(_f(row.get('duration_s')))} fade, peak {peak:.1f} dB"
        if not np.isfinite(p).all():
            out.append(("unknown", 0.0, f"{shape}: no propagation cause is physically possible on this hop "
                        f"(beyond any recorded rain rate and P.530 clear-air fading)"))
            continue
        k = int(np.argmax(p))
        second = int(np.argsort(p)[-2])
        cause = NAMES[k]
        # the evidence is stated against the strongest other propagation cause, vetoed or not (what the data say)
        free = base[i] * w.get("prior", 1.0) + sum(w.get(nm, 1.0) * terms[nm][i] for nm in TERMS)
        rival = max((j for j in range(3) if j != k), key=lambda j: free[j]) if k != OTHER else second
        # the terms that decided: largest contribution to the winner over the runner-up
        contrib = []
        if np.isfinite(base[i, rival]):
            contrib.append((w.get("prior", 1.0) * (base[i, k] - base[i, rival]),
                            f"P.530 prior {NAMES[k]}:{NAMES[rival]} "
                            f"{_odds(base[i, k] - base[i, rival])} at "
                            f"{max(_f(row.get('peak_fade_db_finite')), 1.0):.0f} dB on {link.frequency_ghz:g} GHz/"
                            f"{link.length_km:g} km" + (f" (rain and refraction at the {slow:.0f}-dB mean)"
                                                        if math.isfinite(slow := slow_depth(row))
                                                        else "")))
        for name in TERMS:
            if texts[name][i]:
                contrib.append((w.get(name, 1.0) * (terms[name][i, k] - terms[name][i, rival]), texts[name][i]))
        contrib.sort(key=lambda item: -item[0])
        deciding = [text for value, text in contrib if value > 0.05][:3]
        if texts["gauge"][i] and texts["gauge"][i] not in deciding:   # a gauge the user gave is always reported
            deciding.append(texts["gauge"][i])
        # the V/H ratio is the one measurement P.838 predicts number for number: shown whenever it supports the verdict
        pol = [text for value, text in contrib if value > 0.05 and text == texts["polarisation"][i]]
        if pol and pol[0] not in deciding:
            deciding.append(pol[0])
        vetoed = [PROPAGATION[j] for j in range(3) if not allowed[i, j]]
        if vetoed:
            deciding.append("no " + "/".join(vetoed) + ": physically excluded on this hop")
        conf = float(p[k])
        if k == OTHER:
            why = ("no propagation cause is physically possible on this hop" if not allowed[i, :3].any()
                   else f"a dip not explained by rain, multipath or refraction ({conf:.0%}; best propagation cause "
                   f"{NAMES[second]} {float(p[second]):.0%})")
            out.append(("unknown", conf, f"{shape}: {why}; " + "; ".join(deciding)))
            continue
        if float(raw[i, k]) < UNKNOWN_BAR:
            out.append(("unknown", conf, f"{shape}: no cause above {UNKNOWN_BAR:.0%} before calibration (best {cause} "
                        f"{float(raw[i, k]):.0%}); " + "; ".join(deciding)))
            continue
        if cause == "rain":
            rate = implied_rate_mmh(_f(row.get("peak_fade_db_finite")) + prior.wet_db, link, prior)
            shape += f", implied {rate:.0f} mm/h over the path after {prior.wet_db:.1f} dB wet antennas"
        if row.get("kind") == "stats":
            deciding.append("15-min statistics")
        out.append((cause, conf, f"{shape}; " + "; ".join(deciding) if deciding else shape))
    return out


def _odds(log_ratio: float) -> str:
    if not math.isfinite(log_ratio):
        return "inf"
    r = math.exp(log_ratio)
    return f"{r:.0f}:1" if r >= 10 else (f"{r:.1f}:1" if r >= 1 else f"1:{1 / max(r, 1e-300):.0f}")


def rows_of(events: pd.DataFrame) -> list[dict]:
    columns = list(events.columns)
    return [dict(zip(columns, values)) for values in zip(*(events[c].tolist() for c in columns))]
