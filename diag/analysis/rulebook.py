"""The older cause attribution, kept for comparison (``AnalysisConfig.attribution = "rules"``, ``--attribution
rules``): an ordered rulebook, each event's cause with a confidence and a one-line evidence string that quotes the
numbers.  The default is the physics-based posterior (:mod:`diag.analysis.classify`, ``attribution =
"posterior"``), which replaced it on the independent scenario families and the real links (docs/validation.md §3a,
§6a).


Physics-based rules (no trained model).  The features come from :mod:`diag.analysis.events`; the physics behind each
test
is in docs/references.md §8 (rain vs multipath), with sources there.  The rules run in this order
and the first that fires wins.  Rain-vs-refractive points turn into a confidence 0.5 + 0.45 x (lead / max(total,
3)), so a verdict resting on little evidence stays near 0.5:

1. **level_shift** - a span of the record whose clear-sky level sits at least ``step_min_db`` below the best
   level, opened by an abrupt persistent step (:func:`diag.analysis.steps.detect_steps`).  Confidence grows with the
   step.
2. **signal_loss** - at least half of the event at the receiver floor, and the level in the 30 s before the first
   floor sample was within 6 dB of the reference: the signal vanished abruptly from near clear-sky level, which
   no propagation mechanism does (rain and refractive fades descend gradually; multipath dips last seconds).
   A level that sits within 2 dB of the channel's lowest reading for 80 % of an event of an hour or more, 20 dB
   or more below the reference, is also the floor (logs that print a value instead of flagging the loss).
3. **multipath** - fast fading, by points (multipath at 1 point or more): fluctuation about the 1-min running
   mean (``fast_std_db``) of at least max(0.6 dB, 15 % of the mean fade) - 1 point; 1-s difference spread
   (``variability_db``) in excess of the log's own clear-air noise of 0.5 dB (relative to depth for samples
   coarser than 2 s) - 0.6; the level above the clear-sky reference by 2 dB or more inside or within 5 min of the
   event (upfades: P.530 §2.3.3; rain and refractive fades never enhance the level) - 0.8; shorter than two
   minutes (rain cells and refractive fades last many minutes; deep multipath fades last seconds, Vigants 1971) -
   0.6; on a dual-polarised hop an H/V correlation under 0.8 over a fade with shape - 0.5 (rain and refraction
   fade both polarisations together; the same holds for the two directions of a hop, whose multipath the duplex
   frequency spacing partly decorrelates; the evidence then names the two channels).  15-min statistics: a
   min-max spread of 10 dB or more with the average fade under a quarter of the minimum's - 1 point; maxima 2 dB
   above the reference - 0.5.
4. **rain or refractive** - a smooth fade (one with the level 3 dB or more above the reference in or within 5 min
   of it is multipath: rain and refraction do not enhance the level).  Evidence for rain, in order of weight:
   a. V/H attenuation ratio (dual-polarised hops): rain follows ITU-R P.838-3 (A_V/A_H = gamma_V/gamma_H < 1 above
      ~8 GHz, pulled towards 1 by a wet-antenna loss of ``WET_ANTENNA_DB`` common to both); refractive fading is
      polarisation-independent (ratio ~ 1).  Up to 2 points, graded by which of the two ratios is nearer.
   b. the path-average rain rate implied by P.838-3 for the peak fade: above ``rain_plausible_max_mmh`` (or a
      12-h-long fade) the fade cannot be rain;
   c. shape (samples of 10 s or finer, or at least 30 samples): rain fades follow convective cells (a peaked
      profile: under ~35 % of the event above half its peak, onset >= 1.5x faster than the recovery), refractive
      fades are broad and symmetric; an event under 15 min is too short for refraction; a fade deeper than
      ``DEEP_RAIN_DB`` above 10 GHz with a plausible rain rate points to rain; a shallow fade shorter than
      ``MIN_RAIN_S_PER_KM`` x path length is not rain (multipath, or unknown when both polarisations fade
      together); on a hop of ``SHORT_HOP_KM`` or less, a fade no deeper than ``WET_FADE_MAX_DB`` gets no
      refractive point from a broad profile or a symmetric onset/recovery: refraction cannot fade so short a hop
      by several dB (Earth-bulge and ray-tilt geometry, see the constants), while a wet-antenna loss (radome water
      film, nearly independent of path length) rises with the rain and dries off slowly in a plateau that these
      tests would read as refractive (the short hop itself is no rain evidence: with no other point the fade is
      unknown);
   d. coarse samples (1-min logs), where the fast fading itself is not resolved: a level more than 2 dB above the
      reference within 30 min of a fade under 10 dB means two-sided clear-air fading (multipath, confidence 0.5);
      no enhancement above 1 dB within 30 min counts half a point for rain (rain only lowers the level); a shallow
      (< 6 dB) fade on a path of 15 km or more counts one point against rain (P.530 clear-air fading occurrence
      grows as d^3.4); in coarse samples a lead of less than one point is "unknown";
   e. a rain gauge, when given: rain at the gauge within 15 min confirms (1.5 points for rain), a dry gauge counts
      0.5 against; a rain call that stays weak (confidence < 0.7) with a dry gauge becomes the best non-rain cause
      (multipath when any fast-fading evidence exists, else refractive) at confidence 0.4 (a gauge is a point and
      can miss a cell, hence only weak calls are overturned).
5. **unknown** - no usable feature (e.g. all samples missing), or a short fade in coarse samples (1-min logs)
   for which none of the tests above says anything.
6. **context** - a short (< 10 min) shallow (< 6 dB) fade called rain (or unknown) within 30 min of multipath
   events on the same hop is re-labelled multipath (one more dip of the episode); within a group of overlapping
   events on several channels the rain/refractive verdict with the highest confidence is applied to all of them
   (multipath verdicts rest on each channel's own fast fading and stay).

15-min min/avg/max statistics: the same order, with the interval spread (max - min) standing in for the
short-term variability (multipath widens the spread while the average stays near the reference; rain lowers
the average and minimum together), and every confidence multiplied by 0.7 (the verdict rests on three numbers per
15 minutes).
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

from diag import schema as S
from diag.analysis.events import channel_polarization
from diag.config import AnalysisConfig
from diag.links import Link
from diag.numeric import as_float as _f  # a cell as float, NaN when missing
from diag.numeric import duration_word

__all__ = ["classify_events", "STATS_CONFIDENCE_FACTOR"]

STATS_CONFIDENCE_FACTOR = 0.7
# wet-antenna loss allowed for in the V/H test [dB]: 1-3 dB is typical (Leijnse et al., Adv. Water Res. 31(11),
# 2008; Schleiss et al., IEEE GRSL 10, 2013); from memory, not a fitted value
WET_ANTENNA_DB = 1.5
# refractive (beam-bending, diffraction) fades deeper than this are rare above 10 GHz, where rain of a plausible rate
# produces them easily (common practice; no outside source)
DEEP_RAIN_DB = 25.0
# shortest rain fade per km of path: a cell advected at ~15-30 m/s needs about 30 s per km to cross a path obliquely
# (common practice, from memory)
MIN_RAIN_S_PER_KM = 30.0
# hops up to this length cannot fade slowly by refraction: between k = 4/3 and an extreme k = 1/3 the midpoint
# Earth bulge of a 2-km hop moves by ~0.18 m (d^2/8 x (1/k2 - 1/k1) / 6371 km), ~7 % of the first Fresnel radius
# (2.45 m at 25 GHz), and a refractivity-gradient change of 1000 N/km tilts the rays at the antennas by
# d x dG / 2 = 1 mrad (0.06 deg) against beamwidths of 1-3 deg; P.530's multipath occurrence grows as d^3.4
# (geometry; the extreme k and gradient are from memory, the 2-km limit is a rounded choice, not a published one)
SHORT_HOP_KM = 2.0
# wet-antenna loss of both antennas together reaches a few dB, up to about 6-8 dB at 20-40 GHz (from memory: Leijnse
# et al. 2008; Schleiss et al. 2013; van Leth et al., Atmos. Meas. Tech. 11, 2018); a fade this shallow on a short
# hop can be the radome water film and light rain alone, whose flat-topped, slowly drying profile the shape tests
# would read as refractive
WET_FADE_MAX_DB = 8.0






def _clip(x: float) -> float:
    return float(min(0.99, max(0.05, x)))


def _pair_name(row) -> str:
    """How evidence names a channel and its partner: "H/V" for the two polarisations of a dual-polarised hop,
    else the channel names (e.g. the two directions "A>B/B>A" of a single-polarised hop)."""
    channel, partner = str(row.get("channel", "")), str(row.get("partner_channel", ""))
    pols = {channel_polarization(channel), channel_polarization(partner)}
    return "H/V" if pols == {"H", "V"} or not partner else f"{channel}/{partner}"


def _level_shift(row) -> tuple[str, float, str]:
    size = _f(row["peak_fade_db"])
    step = _f(row["step_db"])
    conf = _clip(0.6 + 0.06 * size)
    return (S.LEVEL_SHIFT, conf,
            f"clear-sky level {size:.1f} dB below its best for {duration_word(_f(row['duration_s']))} "
            f"after an abrupt persistent step of {step:+.1f} dB at {row['start_utc']:%Y-%m-%d %H:%M} UTC")


def _classify_row(row, link: Link, config: AnalysisConfig) -> tuple[str, float, str]:
    if row["event_kind"] == "level_shift":
        return _level_shift(row)
    stats = row["kind"] == "stats"
    dur = _f(row["duration_s"])
    peak = _f(row["peak_fade_db_finite"])
    peak_rep = _f(row["peak_fade_db"])
    floor_frac = _f(row["floor_fraction"])
    pre_floor = _f(row["pre_floor_fade_db"])
    shape = duration_word(dur)
    # 2. signal loss ------------------------------------------------------------------------------------------
    if floor_frac >= 0.5 and (not math.isfinite(pre_floor) or pre_floor < 6.0):
        before = f"{pre_floor:.1f} dB" if math.isfinite(pre_floor) else "no sample"
        return (S.SIGNAL_LOSS, 0.9 if math.isfinite(pre_floor) else 0.7,
                f"{shape} drop to the receiver floor ({floor_frac:.0%} of the event at the floor) with fade "
                f"{before} in the 30 s before: abrupt, not a propagation fade")
    near_floor = _f(row["near_floor_fraction"])
    if near_floor >= 0.8 and dur >= 3600.0 and peak_rep >= 20.0:
        return (S.SIGNAL_LOSS, 0.6,
                f"{shape} at the receiver floor: level within 2 dB of its lowest reading for {near_floor:.0%} of the "
                f"event, {peak_rep:.0f} dB below the reference; a propagation fade does not sit still at the floor")
    if not math.isfinite(peak) and floor_frac <= 0:
        return S.UNKNOWN, 0.1, f"{shape} event without valid samples"
    # 3. multipath ---------------------------------------------------------------------------------------------
    upfade = max(_f(row["upfade_within_db"]), _f(row["upfade_before_db"]), _f(row["upfade_after_db"]))
    corr = _f(row["partner_corr"])
    mean_fade = max(_f(row["mean_fade_db"]), 0.5)
    if stats:
        spread = _f(row["spread_db"])
        ratio = _f(row["avg_to_min_ratio"])
        mp_score = 0.0
        reasons = []
        if math.isfinite(spread) and spread >= 10.0 and (not math.isfinite(ratio) or ratio < 0.25):
            mp_score += 1.0
            reasons.append(f"min-max spread {spread:.1f} dB per 15 min with the average only "
                           f"{ratio:.0%} of the minimum's fade")
        if upfade >= 2.0:
            mp_score += 0.5
            reasons.append(f"maxima {upfade:.1f} dB above the reference")
        if mp_score >= 1.0:
            return (S.MULTIPATH, _clip(0.8 * STATS_CONFIDENCE_FACTOR),
                    f"{shape} fading, peak {peak_rep:.1f} dB, " + ", ".join(reasons) + " (15-min statistics)")
    else:
        noise = _f(row["noise_diff_db"])
        var = _f(row["variability_db"])
        var_excess = math.sqrt(max(var ** 2 - (noise ** 2 if math.isfinite(noise) else 0.0), 0.0)) \
            if math.isfinite(var) else math.nan
        fast = _f(row["fast_std_db"])
        reasons = []
        score = 0.0
        mp_score = 0.0
        if math.isfinite(fast) and fast >= max(0.6, 0.15 * mean_fade):
            score += 1.0
            reasons.append(f"fast fluctuation {fast:.1f} dB rms about the 1-min mean")
        # at 1-s sampling a rain fade changes by tenths of a dB per sample; at coarser sampling (1-min logs) a deep
        # rain fade moves several dB per sample, so the test becomes relative to the fade depth
        step_s = _f(row["interval_s"])
        var_limit = 0.5 if not (step_s > 2.0) else max(0.5, 0.4 * mean_fade)
        if math.isfinite(var_excess) and var_excess >= var_limit:
            score += 0.6
            reasons.append(f"1-s variability {var:.2f} dB")
        if upfade >= 2.0:
            score += 0.8
            reasons.append(f"upfades to {upfade:.1f} dB above the reference")
        if dur < 120.0:
            score += 0.6
            reasons.append("too short for rain or refraction")
        if math.isfinite(corr) and corr < 0.8 and peak - mean_fade >= 3.0:  # (a flat fade has no shape to share)
            score += 0.5
            reasons.append(f"{_pair_name(row)} correlation {corr:.2f}")
        mp_score = score
        if score >= 1.0:
            return (S.MULTIPATH, _clip(0.55 + 0.15 * score),
                    f"{shape} fast fading, peak {peak_rep:.1f} dB, " + ", ".join(reasons))
    # 4. rain vs refractive ----------------------------------------------------------------------------------
    if upfade >= 3.0:
        # the level rose well above the clear-sky reference in or around the fade: two-sided, clear-air fading
        return (S.MULTIPATH, _clip(0.5 + 0.15 * max(mp_score, 0.0) * (0.7 if stats else 1.0)),
                f"{shape} fade, peak {peak_rep:.1f} dB, with the level {upfade:.1f} dB above the reference in or "
                f"within 5 min of it: rain never lifts the level")
    vh = _f(row["v_over_h_ratio"])
    expected = _f(row["expected_v_over_h"])
    rate = _f(row["rain_rate_mmh"])
    half = _f(row["half_peak_fraction"])
    slope = _f(row["slope_in_db_s"])
    gauge = _f(row["gauge_rain_mmh"])
    rain_pts, refr_pts = 0.0, 0.0
    # the profile tests need the shape resolved: samples of 10 s or finer (not 1-min or 15-min logs)
    step_s = _f(row["interval_s"])
    fine = (not stats) and math.isfinite(step_s) and (step_s <= 10.0 or dur >= 30 * step_s)
    # a rain cell needs time to cross a path: a shallow fade shorter than ~30 s per km of path is not rain
    min_rain_s = MIN_RAIN_S_PER_KM * link.length_km
    coarse = (not stats) and math.isfinite(step_s) and step_s > 10.0
    up_context = _f(row["upfade_context_db"])
    if coarse and math.isfinite(up_context) and up_context >= 2.0 and peak < 10.0:
        # sampled too coarsely to see the fast fading itself, but clear-air fading swings both ways
        return (S.MULTIPATH, 0.5, f"{shape} fade, peak {peak_rep:.1f} dB, with the level {up_context:.1f} dB above "
                f"the reference within 30 min: two-sided clear-air fading (rain only lowers the level)")
    if not stats and dur < min_rain_s and peak < 6.0:
        return (S.MULTIPATH if mp_score > 0 or not math.isfinite(corr) or corr < 0.8 else S.UNKNOWN, 0.45,
                f"{shape} shallow fade, peak {peak_rep:.1f} dB: shorter than a rain cell takes to cross a "
                f"{link.length_km:g}-km path ({min_rain_s / 60:.0f} min), no slow refractive shape")
    notes = []
    if math.isfinite(vh) and math.isfinite(expected) and abs(1.0 - expected) > 0.05:
        # wet antennas add the same loss on both polarisations, pulling a small rain fade's ratio towards 1
        fade = max(peak, config.fade_start_db)
        wet = min(WET_ANTENNA_DB, 0.5 * fade)
        expected_wet = (expected * (fade - wet) + wet) / fade
        lean = (abs(vh - 1.0) - abs(vh - expected_wet)) / max(abs(1.0 - expected_wet), 0.02)
        lean = max(-1.0, min(1.0, lean))
        if lean > 0:
            rain_pts += 2.0 * lean
            notes.append(f"V/H attenuation ratio {vh:.2f} as P.838 predicts ({expected:.2f}, "
                         f"{expected_wet:.2f} with wet antennas) at {link.frequency_ghz:g} GHz")
        else:
            refr_pts += -2.0 * lean
            notes.append(f"V/H attenuation ratio {vh:.2f}, not the {expected_wet:.2f} rain gives at "
                         f"{link.frequency_ghz:g} GHz")
    plausible = math.isfinite(rate) and 0 < rate <= config.rain_plausible_max_mmh
    if math.isfinite(rate) and not plausible:
        refr_pts += 2.0
        notes.append(f"would need {rate:.0f} mm/h over the whole path")
    if coarse and math.isfinite(up_context) and up_context < 1.0:
        rain_pts += 0.5
        notes.append("no enhancement within 30 min (one-sided, as rain)")
    if coarse and link.length_km >= 15.0 and peak < 6.0:
        refr_pts += 1.0
        notes.append(f"shallow fade on a {link.length_km:g}-km path, where clear-air fading is common "
                     f"(P.530 occurrence grows as d^3.4)")
    if plausible and peak >= DEEP_RAIN_DB and link.frequency_ghz >= 10.0:
        rain_pts += 1.5
        notes.append(f"{peak:.0f} dB deep: deeper than refractive fades go at {link.frequency_ghz:g} GHz")
    if dur > 12 * 3600:
        refr_pts += 1.0
        notes.append("longer than rain lasts")
    if not stats and step_s <= 10.0 and dur < 900.0:  # (at coarser sampling multipath could not be ruled out)
        rain_pts += 1.5
        notes.append("too short for a refractive fade")
    # on a short hop refraction cannot fade the level by several dB, so a broad or symmetric profile of a fade in
    # the wet-antenna range is no evidence for it (a wet radome gives a plateau that dries off slowly)
    wet_film = link.length_km <= SHORT_HOP_KM and peak <= WET_FADE_MAX_DB
    uncounted = False   # a profile test set aside for that reason (with nothing else, the verdict is unknown)
    if stats:
        ratio = _f(row["avg_to_min_ratio"])
        if math.isfinite(ratio) and dur >= 1800.0:
            if ratio <= 0.62:
                rain_pts += 1.0
                notes.append(f"average fade {ratio:.0%} of the interval minimum's (rain varies within 15 min)")
            elif ratio >= 0.72:
                refr_pts += 1.0
                notes.append(f"average fade {ratio:.0%} of the interval minimum's (slow fading)")
    elif math.isfinite(half) and fine:
        if half < 0.35:
            rain_pts += 1.0
            notes.append(f"peaked profile ({half:.0%} of the time above half the peak)")
        elif half > 0.42 and wet_film:
            uncounted = True
            notes.append(f"broad profile ({half:.0%} of the time above half the peak) not counted: "
                         f"{link.length_km:g}-km hop, too short for refractive fading")
        elif half > 0.42:
            refr_pts += 1.0
            notes.append(f"broad profile ({half:.0%} of the time above half the peak)")
    slope_out = _f(row["slope_out_db_s"])
    if fine and dur >= 900.0 and math.isfinite(slope) and math.isfinite(slope_out) and slope_out > 0:
        asym = slope / slope_out
        if asym >= 1.5:
            rain_pts += 1.0
            notes.append(f"onset {asym:.1f}x faster than the recovery")
        elif asym <= 1.25 and wet_film:
            uncounted = True
            notes.append(f"onset and recovery alike, not counted on a {link.length_km:g}-km hop")
        elif asym <= 1.25:
            refr_pts += 1.0
            notes.append(f"onset and recovery alike ({slope * 60:.2f} and {slope_out * 60:.2f} dB/min)")
    if math.isfinite(gauge):
        if gauge >= 0.5:
            rain_pts += 1.5
            notes.append(f"gauge {gauge:.1f} mm/h")
        else:
            refr_pts += 0.5
            notes.append("gauge dry")
    total = rain_pts + refr_pts
    if (total == 0 or (coarse and abs(rain_pts - refr_pts) < 1.0)) and not fine and not stats:
        return (S.UNKNOWN, 0.3, f"smooth {shape} fade, peak {peak_rep:.1f} dB: too few samples "
                f"({dur / step_s:.0f}) to judge its shape and no deciding evidence"
                + (f" ({', '.join(notes)})" if notes else ""))
    if total == 0 and uncounted:
        return (S.UNKNOWN, 0.3, f"smooth {shape} fade, peak {peak_rep:.1f} dB: no deciding evidence ("
                + ", ".join(notes) + ")")
    gauge_dry = math.isfinite(gauge) and gauge < 0.5
    if gauge_dry and rain_pts >= refr_pts and 0.5 + 0.45 * (rain_pts - refr_pts) / max(total, 3.0) < 0.7:
        # a weak rain call with a dry gauge: take the best non-rain cause (the gauge is a point; say so)
        cause = S.MULTIPATH if mp_score > 0 else S.REFRACTIVE
        text = (f"{shape} fade, peak {peak_rep:.1f} dB, not rain: gauge dry within 15 min and the rain evidence is "
                f"weak" + (f" ({', '.join(notes[:-1])})" if len(notes) > 1 else ""))
        return cause, _clip(0.4 * (STATS_CONFIDENCE_FACTOR if stats else 1.0)), text
    if rain_pts >= refr_pts:
        cause = S.RAIN
        conf = 0.5 + 0.45 * (rain_pts - refr_pts) / max(total, 3.0)
        implied = f", implied {rate:.0f} mm/h" if plausible else ""
        text = f"smooth {shape} fade, peak {peak_rep:.1f} dB" + implied
    else:
        cause = S.REFRACTIVE
        conf = 0.5 + 0.45 * (refr_pts - rain_pts) / max(total, 3.0)
        text = f"smooth {shape} fade, peak {peak_rep:.1f} dB"
    if total == 0:
        conf = 0.35
    if stats:
        conf *= STATS_CONFIDENCE_FACTOR
        notes.append("15-min statistics")
    if notes:
        text += ", " + ", ".join(notes)
    return cause, _clip(conf), text


def classify_events(events: pd.DataFrame, link: Link, *, config: AnalysisConfig | None = None) -> pd.DataFrame:
    """Fill ``cause``, ``confidence`` and ``evidence`` of an event table from
    :func:`diag.analysis.events.find_events`."""
    config = config or AnalysisConfig()
    if events.empty:
        return events
    out = events.copy()
    columns = list(out.columns)   # rows as dicts of Python values (what to_dict("records") gives, faster)
    rows = (dict(zip(columns, values)) for values in zip(*(out[c].tolist() for c in columns)))
    verdicts = [_classify_row(row, link, config) for row in rows]
    out["cause"] = pd.array([v[0] for v in verdicts], dtype="str")
    out["confidence"] = np.round([v[1] for v in verdicts], 2)
    out["evidence"] = pd.array([v[2] for v in verdicts], dtype="str")
    _harmonise_groups(out)
    _short_fades_amid_multipath(out)
    out["peak_fade_db"] = out["peak_fade_db"].clip(lower=0.0)
    return out


def _short_fades_amid_multipath(events: pd.DataFrame, *, window_s: float = 1800.0) -> None:
    """A short (< 10 min), shallow (< 6 dB) fade called rain within 30 min of a multipath event on the same
    hop is one more dip of that multipath episode (multipath activity lasts hours and comes and goes;
    a shallow rain fade of a few minutes alone carries no shape to judge)."""
    is_mp = (events["cause"] == S.MULTIPATH).to_numpy(dtype=bool, na_value=False)
    if not is_mp.any():
        return
    # times as integer nanoseconds (NaT, which compares False with anything, is left out by hand)
    start = pd.DatetimeIndex(events["start_utc"]).as_unit("ns")
    end = pd.DatetimeIndex(events["end_utc"]).as_unit("ns")
    timed = ~(start.isna() | end.isna())
    t0, t1 = start.asi8, end.asi8
    window = pd.Timedelta(seconds=window_s).value
    mp_start, mp_end = t0[is_mp & timed], t1[is_mp & timed]
    candidates = (events["cause"].isin([S.RAIN, S.UNKNOWN]) & (events["duration_s"] < 600)
                  & (events["peak_fade_db"] < 6.0)).to_numpy(dtype=bool, na_value=False) & timed
    duration, peak = events["duration_s"].to_numpy(), events["peak_fade_db"].to_numpy()
    for k in np.flatnonzero(candidates):
        near = int(np.count_nonzero((mp_end >= t0[k] - window) & (mp_start <= t1[k] + window)))
        if near:
            i = events.index[k]
            events.at[i, "cause"] = S.MULTIPATH
            events.at[i, "confidence"] = 0.5
            events.at[i, "evidence"] = (f"short shallow fade ({duration[k] / 60:.0f} min, peak "
                                        f"{peak[k]:.1f} dB) within {window_s / 60:.0f} min of "
                                        f"{near} multipath event(s) on this hop")


def _harmonise_groups(events: pd.DataFrame) -> None:
    """Within a group (one physical event on several channels) propagation causes agree: the verdict with the
    highest confidence wins between rain and refractive when it is at least 0.15 more confident; multipath,
    signal_loss and level_shift stay per channel."""
    prop = {S.RAIN, S.REFRACTIVE}   # a channel whose own features say fast fading keeps its multipath verdict
    if not len(events):
        return
    # only groups holding two different propagation verdicts can change: find them in one pass
    causes_in: dict = {}
    for group, cause in zip(events["group_id"].tolist(), events["cause"].tolist()):
        if cause in prop and group == group:   # (a NaN group is no group, as groupby drops it)
            causes_in.setdefault(group, set()).add(cause)
    mixed = {group for group, causes in causes_in.items() if len(causes) > 1}
    if not mixed:
        return
    for group, idx in events.groupby("group_id").groups.items():
        if group not in mixed or len(idx) < 2:
            continue
        sub = events.loc[idx]
        mask = sub["cause"].isin(prop)
        if mask.sum() < 2 or sub.loc[mask, "cause"].nunique() == 1:
            continue
        best = sub.loc[mask, "confidence"].idxmax()
        cause = events.at[best, "cause"]
        for i in sub.index[mask]:
            if events.at[i, "cause"] != cause and events.at[best, "confidence"] - events.at[i, "confidence"] >= 0.15:
                events.at[i, "cause"] = cause
                events.at[i, "confidence"] = round(float(events.at[i, "confidence"]) * 0.8, 2)
                events.at[i, "evidence"] = (f"{events.at[i, 'evidence']}; called {cause} with the other "
                                            f"channel ({events.at[best, 'channel']})")
