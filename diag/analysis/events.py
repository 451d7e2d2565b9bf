"""Fade events: segmentation with hysteresis, per channel, grouped across the channels of a hop, with features.

Segmentation (per channel, on ``attenuation_db`` for 1-s samples, on ``attenuation_peak_db`` = reference minus
interval minimum for 15-min statistics):

- a grid point is *in a fade* while the attenuation is at least ``fade_end_db`` (or the receiver is at its floor,
  status "signal_lost"); a run of such points is an event when it reaches ``fade_start_db`` somewhere (hysteresis:
  start at 3 dB, end below 1.5 dB by default);
- events closer than ``min_separation_s`` are merged (the bursts of one multipath episode, a gap of a few polls
  inside a rain fade);
- events shorter than ``min_duration_s`` are dropped unless they hold a below-threshold or floor sample (so every
  second below threshold is inside some event);
- events of different channels that overlap in time share a ``group_id`` (one physical event seen on H and V).

Level-shift spans from :func:`diag.analysis.reference.level_shift_spans` become events of their own (they may last
days and
contain shorter fades; the per-sample cause is that of the innermost event, see :func:`paint_series`).

Per-event features (units in the column names): start/end, duration, peak and mean fade, slope in and out
[dB/s], short-term variability (std of the sample-to-sample differences; for 1-s logs the std of 1-s
differences), roughness (std of the attenuation about its 5-min running mean, relative to the peak), upfades
(level above the reference) within and within ``context_s`` before/after, hour of the peak (UTC), fraction of
samples at the receiver floor, the fade just before the first floor sample, seconds below threshold, the
partner channel's correlation and V/H (or direction) attenuation ratio, the rain rate implied by ITU-R P.838-3
for the peak and mean fade under uniform rain over the path, and whether that rate is plausible.  For 15-min
statistics: the median min-max spread within an interval and the ratio of the average fade to the minimum fade.
"""
from __future__ import annotations

import math
import re

import numpy as np
import pandas as pd

from diag import schema as S
from diag.analysis import features as F
from diag.analysis.reference import LevelSpan
from diag.config import AnalysisConfig
from diag.links import Link, channel_polarization
from diag.models import p838
from diag.numeric import nanmax as _nanmax
from diag.results import ChannelSeries

__all__ = ["segment", "find_events", "paint_series", "channel_polarization", "FEATURE_COLUMNS"]

FEATURE_COLUMNS = [
    "event_kind", "group_id", "kind", "interval_s", "start_index", "end_index", "partner_channel",
    "peak_fade_db_finite", "mean_fade_db", "time_to_peak_s", "slope_in_db_s", "slope_out_db_s", "variability_db",
    "roughness", "upfade_within_db", "upfade_before_db", "upfade_after_db", "hour_utc", "floor_fraction",
    "pre_floor_fade_db", "below_threshold_s", "valid_fraction", "partner_corr", "partner_ratio", "v_over_h_ratio",
    "expected_v_over_h", "rain_rate_mmh", "rain_rate_mean_mmh", "rain_plausible", "spread_db", "avg_to_min_ratio",
    "step_db", "gauge_rain_mmh", "fast_std_db", "half_peak_fraction", "noise_diff_db", "near_floor_fraction",
    "upfade_context_db",
]


def _partners(channels: list[str], link: Link | None) -> dict[str, str]:
    """H<->V pairs of the same path, else the two channels of a two-channel hop (two directions; on a
    single-polarised hop every channel has the hop's polarisation, so only this second rule pairs them)."""
    out: dict[str, str] = {}
    pols = {ch: channel_polarization(ch, link) for ch in channels}
    rest = {ch: re.sub(r"(?i)\b(h|v|horizontal|vertical)\b", "", ch).strip(" _-") for ch in channels}
    for a in channels:
        for b in channels:
            if a != b and pols[a] and pols[b] and pols[a] != pols[b] and rest[a] == rest[b]:
                out[a] = b
    if not out and len(channels) == 2:
        out[channels[0]], out[channels[1]] = channels[1], channels[0]
    return out


def _count_in(mask: np.ndarray, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
    """Number of True entries of ``mask`` in each range ``[start, end)`` (positions, then binary searches: exact
    integers without a cumulative sum over the whole series)."""
    where = np.flatnonzero(mask)
    return np.searchsorted(where, ends) - np.searchsorted(where, starts)


def segment(attenuation_db: np.ndarray, floor: np.ndarray, below: np.ndarray, interval_s: float,
            config: AnalysisConfig, extend_db: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Fade events of one channel as index ranges ``[start, end)`` (see module docstring).  ``extend_db``: the
    attenuation the hysteresis extension reads, when it differs from the one that starts a fade
    (:func:`clear_min_gap_db`)."""
    att = np.asarray(attenuation_db, dtype=float)
    longer = att if extend_db is None else np.asarray(extend_db, dtype=float)
    with np.errstate(invalid="ignore"):
        ext = (longer >= config.fade_end_db) | floor
        core = (att >= config.fade_start_db) | floor
    if ext.size == 0:
        return np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp)
    # runs of ``ext``: the series split where it changes; every other run (those starting on True) is a fade
    change = np.flatnonzero(ext[1:] != ext[:-1]) + 1
    first = np.concatenate([[0], change])
    last = np.concatenate([change, [ext.size]])
    run = ext[first]
    starts, ends = first[run], last[run]
    if starts.size == 0:
        return starts, ends
    keep = _count_in(core, starts, ends) > 0
    starts, ends = starts[keep], ends[keep]
    if starts.size > 1:
        sep = max(1, int(math.ceil(config.min_separation_s / interval_s)))
        new = np.concatenate([[True], (starts[1:] - ends[:-1]) >= sep])
        last = np.concatenate([new[1:], [True]])
        starts, ends = starts[new], ends[last]
    if starts.size:
        long_enough = (ends - starts) * interval_s >= config.min_duration_s
        keep = long_enough | (_count_in(below | floor, starts, ends) > 0)
        starts, ends = starts[keep], ends[keep]
    return starts, ends


STATS_MIN_GAP = True
CLEAR_GAP_ATT_DB = 1.5   # intervals this close to the reference count as clear air (the default fade_end_db)


def clear_min_gap_db(frame: pd.DataFrame) -> float:
    """Interval statistics with an average: how far an interval's minimum sits below its average in clear air [dB],
    the median of (average - minimum) over the intervals whose average is within ``CLEAR_GAP_ATT_DB`` of the reference
    (0 without an average or with too few such intervals).  The reference of a min/avg/max log follows the
    averages, so the attenuation at the interval minimum (``attenuation_peak_db``) already carries the receiver's
    noise extremes and any slow wander within the interval in clear air: about 1-1.5 dB for a 0.1-dB radio with
    0.3-0.4 dB of noise over 900 one-second readings.  With the hysteresis at ``fade_end_db`` (1.5 dB) on it, clear-air
    intervals kept fades open whenever a night's detector drift added a few tenths of a dB, and a night of short
    multipath bursts became one 15-hour slow fade.  A fade still starts where an interval's minimum reaches
    ``fade_start_db`` below the reference (some reading was that far below the clear level), but it only extends
    while the minimum stays ``fade_end_db`` below the clear-air minimum (:func:`segment` ``extend_db``), as in a
    min/max log, whose reference follows the minima.  Common practice (no outside source)."""
    if not STATS_MIN_GAP or "rsl_min_dbm" not in frame.columns or not _has_average(frame):
        return 0.0
    level = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
    low = frame["rsl_min_dbm"].to_numpy(dtype=float, na_value=np.nan)
    att = frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
    with np.errstate(invalid="ignore"):
        clear = np.isfinite(level) & np.isfinite(low) & (np.abs(att) < CLEAR_GAP_ATT_DB)
    if clear.sum() < 8:
        return 0.0
    return float(max(0.0, np.median(level[clear] - low[clear])))


def _has_average(frame: pd.DataFrame) -> bool:
    """Interval statistics with a logged average: somewhere the level carried differs from the interval minimum."""
    if "rsl_min_dbm" not in frame.columns:
        return True
    level = frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
    low = frame["rsl_min_dbm"].to_numpy(dtype=float, na_value=np.nan)
    both = np.isfinite(level) & np.isfinite(low)
    return bool(np.any(level[both] != low[both]))


def _channel_events(series: ChannelSeries, link: Link, config: AnalysisConfig, partner: ChannelSeries | None,
                    gauge: pd.DataFrame | None) -> list[dict]:
    """The fade events of one channel with their features (rows of the events table; see the module docstring)."""
    frame = series.frame
    step = series.interval_s
    stats = series.kind == "stats"
    floor = F.channel_floor(frame)
    att = frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
    seg_att = frame["attenuation_peak_db"].to_numpy(dtype=float, na_value=np.nan) if stats else att
    level_low = frame["rsl_min_dbm" if stats else "rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
    below = F.link_below(level_low, floor, link)
    gap = clear_min_gap_db(frame) if stats else 0.0
    starts, ends = segment(seg_att, floor, below, step, config, extend_db=seg_att - gap if gap > 0 else None)
    if starts.size == 0:
        return []
    arr = F.channel_arrays(series, config, partner, floor=floor, att=att, seg_att=seg_att, level_low=level_low,
                           below=below)
    packed = F.pack_events(arr, starts, ends)
    pol = channel_polarization(series.channel, link)
    p_pol = channel_polarization(partner.channel, link) if partner is not None else None
    coefficients = p838.hv_coefficients(link.frequency_ghz)
    length_km = float(link.length_km)
    index = frame.index
    t_last = index[ends - 1]
    t_first, t_end = list(index[starts]), list(t_last + pd.Timedelta(seconds=step))   # Timestamps, boxed at once
    spread_all = arr.spread_all
    # a min/max export has no interval average: the grid carries the minimum in its place (reference.py), so the
    # average-to-minimum ratio would read 1.0 for every interval; it is unknown, not 1
    averaged = stats and _has_average(frame)
    peaks_at = []
    rows = []
    for i, (a, b) in enumerate(zip(starts.tolist(), ends.tolist())):
        n = b - a
        peak, ipeak, mean_fade, slope_in, slope_out = F.fade_shape(arr, packed, i, a, b)
        peaks_at.append(ipeak)
        variability, roughness, fast_std, half = F.fade_texture(arr, packed, i, a, b, peak)
        up_in, up_before, up_after, up_context = F.upfades(arr, packed, i, a, b)
        pre_floor, peak_reported = F.floor_depths(arr, packed, i, a, b, peak, link.threshold_dbm)
        corr, ratio, vh = F.partner_features(arr, packed, i, a, b, peak, pol, p_pol, config)
        rate, rate_mean, expected_vh, plausible = F.rain_features(coefficients, length_km, peak, mean_fade, vh,
                                                                  pol, config)
        rows.append({
            "link_id": link.link_id, "channel": series.channel, "start_utc": t_first[i], "end_utc": t_end[i],
            "duration_s": float(n * step), "peak_fade_db": float(peak_reported) if math.isfinite(peak_reported)
            else math.nan,
            "event_kind": "fade", "kind": series.kind, "interval_s": float(step), "start_index": a, "end_index": b,
            "partner_channel": partner.channel if partner is not None else "",
            "peak_fade_db_finite": peak, "mean_fade_db": mean_fade, "time_to_peak_s": float((ipeak - a) * step),
            "slope_in_db_s": float(slope_in), "slope_out_db_s": float(slope_out), "variability_db": variability,
            "roughness": roughness, "upfade_within_db": up_in, "upfade_before_db": up_before,
            "upfade_after_db": up_after, "hour_utc": 0, "floor_fraction": packed.n_floor[i] / n,
            "pre_floor_fade_db": pre_floor, "below_threshold_s": float(packed.n_below[i] * step),
            "valid_fraction": packed.n_valid[i] / n, "partner_corr": corr, "partner_ratio": ratio,
            "v_over_h_ratio": vh, "expected_v_over_h": expected_vh,
            "rain_rate_mmh": rate, "rain_rate_mean_mmh": rate_mean, "rain_plausible": plausible,
            "spread_db": float(np.nanmedian(spread_all[a:b])) if stats and np.isfinite(spread_all[a:b]).any()
            else math.nan,
            "avg_to_min_ratio": float(_nanmax(att[a:b]) / peak) if averaged and peak > 0 else math.nan,
            "step_db": math.nan, "gauge_rain_mmh": F.gauge_rate(gauge, t_first[i], t_last[i]),
            "fast_std_db": fast_std, "half_peak_fraction": half, "noise_diff_db": arr.noise_diff,
            "near_floor_fraction": packed.n_near[i] / n, "upfade_context_db": up_context,
        })
    for row, hour in zip(rows, index[np.asarray(peaks_at)].hour.tolist()):
        row["hour_utc"] = int(hour)
    return rows

def _span_row(span: LevelSpan, series: ChannelSeries, link: Link) -> dict:
    row = {name: math.nan for name in FEATURE_COLUMNS}
    row.update({
        "link_id": link.link_id, "channel": span.channel, "start_utc": span.start, "end_utc": span.end,
        "duration_s": float((span.end - span.start).total_seconds()), "peak_fade_db": float(span.size_db),
        "event_kind": "level_shift", "kind": series.kind, "interval_s": float(series.interval_s),
        "start_index": span.start_index, "end_index": span.end_index, "partner_channel": "",
        "peak_fade_db_finite": float(span.size_db), "step_db": float(span.step_db), "rain_plausible": False,
        "hour_utc": int(span.start.hour), "below_threshold_s": 0.0, "floor_fraction": 0.0,
    })
    return row


def find_events(series: dict[str, ChannelSeries], link: Link, *, config: AnalysisConfig | None = None,
                spans: list[LevelSpan] | None = None, gauge: pd.DataFrame | None = None) -> pd.DataFrame:
    """All fade events of one hop (EVENT_COLUMNS first, then FEATURE_COLUMNS; cause columns still empty)."""
    config = config or AnalysisConfig()
    partners = _partners(list(series), link)
    rows: list[dict] = []
    for name, item in series.items():
        partner = series.get(partners.get(name, ""))
        rows.extend(_channel_events(item, link, config, partner, gauge))
    by_channel = {name: item for name, item in series.items()}
    for span in spans or []:
        rows.append(_span_row(span, by_channel[span.channel], link))
    columns = S.EVENT_COLUMNS + FEATURE_COLUMNS
    if not rows:
        empty = pd.DataFrame({c: pd.Series([], dtype=float) for c in columns})
        for c in ("link_id", "channel", "cause", "evidence", "event_kind", "kind", "partner_channel"):
            empty[c] = pd.Series([], dtype="str")
        for c in ("start_utc", "end_utc"):
            empty[c] = pd.Series([], dtype="datetime64[ns, UTC]")
        return empty[columns]
    # by start time, then channel: the order of sort_values(["start_utc", "channel"], kind="stable") (a stable
    # sort, NaT last), given to the rows before the table is built instead of reordering every column after
    rows.sort(key=lambda row: (row["start_utc"] is pd.NaT,
                               0 if row["start_utc"] is pd.NaT else row["start_utc"].value, str(row["channel"])))
    events = pd.DataFrame(rows)
    events["cause"] = ""
    events["confidence"] = math.nan
    events["evidence"] = ""
    # groups: fades of different channels overlapping in time (level-shift spans stay on their own)
    group = np.full(len(events), -1, dtype=np.int64)
    fade = (events["event_kind"] == "fade").to_numpy()
    starts = events["start_utc"].to_numpy()
    ends = events["end_utc"].to_numpy()
    gap = np.timedelta64(int(config.merge_gap_s * 1e9), "ns")
    current, current_end = -1, None
    for i in np.flatnonzero(fade):
        if current_end is None or starts[i] > current_end + gap:
            current += 1
            current_end = ends[i]
        else:
            current_end = max(current_end, ends[i])
        group[i] = current
    for i in np.flatnonzero(~fade):
        current += 1
        group[i] = current
    events["group_id"] = group
    return events[columns]


CAUSE_DTYPE = pd.CategoricalDtype(list(S.CAUSES) + [""])   # the painted "cause" column ("" = no event)


# a fade of two clear-air parts (fine samples, classify.split_causes): the samples where the other part is the
# larger contribution get its cause
SPLIT_WINDOW_S = 300.0          # the slow part: running median over 5 min (multipath decorrelates in seconds,
#                                 refraction changes over minutes to hours)
STATS_SPLIT_MP_DB = 3.0         # interval average under which multipath holds most faded seconds
# min/max exports: the interval maximum lifted 2 dB or more above the reference (multipath upfades, no slow fade
# under them) / still 1 dB or more down (a slow fade under any upfade).  Chosen on family B fit seeds 1-50 among
# (-1, 2) / (0, 3) / (-2, 1) / (-3, 0.5) dB: 15-min min/max macro-F1 0.745 / 0.742 / 0.750 / 0.750 (0.711 unsplit)
STATS_SPLIT_MM_MP_DB = -2.0
STATS_SPLIT_MM_SLOW_DB = 1.0
STATS_SPLIT_SLOW_DB = 5.0       # interval average from which the slow fade does (3 dB + most of the 2.5-dB bias)
SPLIT_SLOW_DB = 3.5             # a slow part this deep or more (Rayleigh log-mean bias 2.5 dB + 1 dB) is a fade


def _paint_split(item: ChannelSeries, events: pd.DataFrame, mine: np.ndarray, event_id: np.ndarray,
                 cause: np.ndarray, lookup: dict) -> None:
    """Events with a ``split_cause`` (set by :func:`diag.analysis.classify.split_causes`): the attenuation is cut into
    a slow part (its 5-min running median) and a fast part (the rest).  In an event called refractive the samples
    where the fast part exceeds the slow part are multipath (``split_cause`` "multipath"); in one called multipath
    the samples where the slow part, ``SPLIT_SLOW_DB`` or more, is the larger are refractive.  Interval statistics
    read the slow part from the interval average (``STATS_SPLIT_MP_DB`` / ``STATS_SPLIT_SLOW_DB``) or, without one,
    from the interval maximum (``STATS_SPLIT_MM_*``).  In a temporary step with a fade on top (cause level_shift,
    ``split_step_db`` the step) the samples faded more than twice the step take the fade's cause.  A sample's cause
    is its larger contribution, as for fades on a shifted level."""
    if "split_cause" not in events:
        return
    split = events["split_cause"].astype(str).to_numpy()
    first, last = events["start_index"].to_numpy(), events["end_index"].to_numpy()
    row_ids = events.index.to_numpy()
    called = events["cause"].astype(str).to_numpy()
    step_db = (events["split_step_db"].to_numpy(dtype=float, na_value=np.nan) if "split_step_db" in events
               else np.full(len(events), np.nan))
    todo = [k for k in mine if split[k] in (S.MULTIPATH, S.REFRACTIVE, S.RAIN)]
    if not todo:
        return
    att = item.frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
    width = max(3, int(round(SPLIT_WINDOW_S / item.interval_s)) | 1)
    averaged = None
    for k in todo:
        a, b = int(first[k]), int(last[k])
        own = event_id[a:b] == row_ids[k]
        if called[k] == S.LEVEL_SHIFT:
            # a step with a fade on top: the fade's seconds are those where it exceeds the step
            if np.isfinite(step_db[k]):
                with np.errstate(invalid="ignore"):
                    part = own & (att[a:b] > 2.0 * step_db[k])
                cause[a:b][part] = lookup[split[k]]
            continue
        if split[k] == S.RAIN:
            continue
        if item.kind == "stats":
            # interval statistics: the average is the slow part (multipath lowers a dB average by at most the
            # Rayleigh log-mean bias): multipath holds most faded seconds of an interval whose average stays under
            # STATS_SPLIT_MP_DB, the slow fade those of one at STATS_SPLIT_SLOW_DB or more.  Without an average
            # (min/max exports) the interval maximum bounds the slow part from below (multipath lifts the maximum
            # above the slow level by its upfades): STATS_SPLIT_MM_*
            if averaged is None:
                averaged = _has_average(item.frame)
            if not averaged and "attenuation_low_db" not in item.frame:
                continue
            low = att if averaged else item.frame["attenuation_low_db"].to_numpy(dtype=float, na_value=np.nan)
            mp_db, slow_db = ((STATS_SPLIT_MP_DB, STATS_SPLIT_SLOW_DB) if averaged
                              else (STATS_SPLIT_MM_MP_DB, STATS_SPLIT_MM_SLOW_DB))
            with np.errstate(invalid="ignore"):
                part = own & ((low[a:b] < mp_db) if split[k] == S.MULTIPATH else (low[a:b] >= slow_db))
            cause[a:b][part] = lookup[split[k]]
            continue
        slow = pd.Series(att[a:b]).rolling(width, center=True, min_periods=1).median().to_numpy()
        with np.errstate(invalid="ignore"):
            fast_larger = att[a:b] - slow > np.maximum(slow, 0.0)
            part = own & (fast_larger if split[k] == S.MULTIPATH else ~fast_larger & (slow >= SPLIT_SLOW_DB))
        cause[a:b][part] = lookup[split[k]]


# a still level inside a fade that meets the clear level through one interval or sample: a step
STILL_EDGE = True
# a level no propagation fade holds (shared with rule 1d, classify._stats_step): this long or longer, within this
# standard deviation, each interval's min-max spread at most this
STILL_EDGE_MIN_S = 2700.0       # 45 min (three 15-min intervals)
STILL_EDGE_FLAT_DB = 0.3
STILL_EDGE_SPREAD_DB = 3.0
STILL_EDGE_CLEAR_DB = 1.0       # the edge interval's maximum (the edge sample) back within this of the reference
STILL_EDGE_WANDER = 0.1         # rain wanders by a tenth of its fade or more within 45 min (tens of per cent)
STILL_EDGE_READOUT_DB = 1.0     # many radios read RSL in whole dB (common practice)
# the shallowest still level that says anything: rain's wander must exceed half a readout step (5 dB)
STILL_EDGE_MIN_DB = 0.5 * STILL_EDGE_READOUT_DB / STILL_EDGE_WANDER
STILL_EDGE_SAMPLED_MAX_S = 60.0  # samples up to 1 min apart (an edge within one 5-min sample is no longer abrupt)
STILL_EDGE_MODAL = 0.5          # samples: a run holding one value over half the time is a held reading


def _still_run(level: np.ndarray, spread: np.ndarray, ends_at: int, step: int) -> int:
    """Length of the longest run of intervals ending at ``ends_at`` (walking by ``step`` -1 backwards, +1 forwards)
    whose level holds within STILL_EDGE_FLAT_DB (standard deviation), STILL_EDGE_MIN_DB or more down, spread within
    STILL_EDGE_SPREAD_DB."""
    best, i, total, squares, count = 0, ends_at, 0.0, 0.0, 0
    while 0 <= i < level.size:
        x = level[i]
        if not (x >= STILL_EDGE_MIN_DB and spread[i] <= STILL_EDGE_SPREAD_DB):
            break
        total, squares, count = total + x, squares + x * x, count + 1
        if count >= 2 and squares / count - (total / count) ** 2 > STILL_EDGE_FLAT_DB ** 2 + 1e-9:
            break
        best = count
        i += step
    return best


def _varied(values: np.ndarray) -> bool:
    """False for a held reading: a logger repeating its last value through a storm, or a whole-dB readout, keeps one
    value over half of the run (real 1-min logs do: OpenRainER link 116 on 19 Aug 2022 read 17.7 dB for 45 min
    under gauge rain); a level measured still varies by its noise from sample to sample."""
    _, count = np.unique(values, return_counts=True)
    return bool(count.max() <= STILL_EDGE_MODAL * values.size)


def _paint_still_edges(item: ChannelSeries, events: pd.DataFrame, mine: np.ndarray, event_id: np.ndarray,
                       cause: np.ndarray, lookup: dict) -> None:
    """Inside a propagation fade event, a run of ``STILL_EDGE_MIN_S`` or more at its end (or start) whose level holds
    still (rule 1d's tests: within ``STILL_EDGE_FLAT_DB``, an interval's min-max spread within
    ``STILL_EDGE_SPREAD_DB``), ``STILL_EDGE_MIN_DB`` or more down, and that meets the clear level through one
    interval or sample (the next interval's maximum, or the next sample, back within ``STILL_EDGE_CLEAR_DB`` of the
    reference) is a level step: an antenna knocked in a storm and set right later, or one set right while it rains.
    Rain follows a rate that changes by tens of per cent within minutes and recedes over minutes; a level held that
    still which then jumps back whole is equipment (the physics of rules 1b and 1d, common practice).  Only levels
    of 5 dB or more: with a whole-dB readout a shallower rain fade can read still (the 141 OpenRainER links seen as
    15-min min/max had 12 rain plateaus of 3-5 dB at one readout value; a wander of a tenth of the fade must exceed
    half a readout step).  Samples up to ``STILL_EDGE_SAMPLED_MAX_S`` apart, and only runs that vary
    (:func:`_varied`).  Family B fit seeds 1-50: 15-min min/avg/max macro-F1 0.766 -> 0.791, min/max 0.750 ->
    0.765, 1 min 0.922 -> 0.930, 1 s 0.930 -> 0.932, rain recall unchanged everywhere (level-shift minutes called
    rain 8488 -> 7228 and 4984 -> 4329 at 15 min, called refractive 925 -> 412 at 1 min); the real links, 1-min
    and as 15-min min/max, unchanged."""
    if not STILL_EDGE:
        return
    stats = item.kind == "stats"
    if stats and "attenuation_low_db" not in item.frame:
        return
    if not stats and not item.interval_s <= STILL_EDGE_SAMPLED_MAX_S:
        return
    min_n = max(3, int(math.ceil(STILL_EDGE_MIN_S / item.interval_s)))
    kind = events["event_kind"].astype(str).to_numpy()
    called = events["cause"].astype(str).to_numpy()
    first, last = events["start_index"].to_numpy(), events["end_index"].to_numpy()
    row_ids = events.index.to_numpy()
    todo = [k for k in mine if kind[k] == "fade" and called[k] in (S.RAIN, S.REFRACTIVE, S.MULTIPATH, S.UNKNOWN)]
    if not todo:
        return
    level = item.frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
    if stats:
        low = item.frame["attenuation_low_db"].to_numpy(dtype=float, na_value=np.nan)
        peak = item.frame["attenuation_peak_db"].to_numpy(dtype=float, na_value=np.nan)
    else:
        low = peak = level
    with np.errstate(invalid="ignore"):
        spread = np.where(np.isfinite(peak - low), peak - low, np.inf)
        clear = low < STILL_EDGE_CLEAR_DB
    n = level.size
    for k in todo:
        a, b = int(first[k]), int(last[k])
        if b - a < min_n + 1:
            continue
        # tail (walking back from the edge: the event's last interval or the next one) and head (walking on from the
        # event's first interval or the one before); something of the event must stay on the run's other side
        for edges, step in (((b - 1, b), -1), ((a, a - 1), 1)):
            for e in edges:
                if not ((a < e < n) if step < 0 else (0 <= e < b - 1)) or not clear[e]:
                    continue
                m = _still_run(level, spread, e + step, step)
                r0, r1 = (e - m, e) if step < 0 else (e + 1, e + 1 + m)
                if m >= min_n and (r0 > a if step < 0 else r1 < b) and (stats or _varied(level[r0:r1])):
                    if STILL_EDGE_DOMINANT:
                        r0, r1 = _step_dominates(level, event_id, row_ids[k], r0, r1, step)
                    own = event_id[r0:r1] == row_ids[k]
                    cause[r0:r1][own] = lookup[S.LEVEL_SHIFT]
                break


# the step found by the still run stays the cause of the event's samples beside it while it is the larger part of
# the fade (``_step_dominates``)
STILL_EDGE_DOMINANT = True


def _step_dominates(level: np.ndarray, event_id: np.ndarray, row_id, r0: int, r1: int, step: int) -> tuple[int, int]:
    """Widen the still run ``[r0, r1)`` into its event (walking by ``step``: -1 from ``r0`` backwards, +1 from ``r1``
    forwards) over the samples where the step is still the larger part of the fade: the level no shallower than the
    step's plateau P (less ``STILL_EDGE_READOUT_DB``: the step has not been set right) and the fade on top under P
    (level below 2 P).  A fade on a stepped level is the sum of the two losses in dB; each sample goes to the larger
    one, as rule 1c does at 1 s (``classify.SPLIT_UNDER_STEP``: the fade on top is named only where it exceeds the
    step).  Stops at the first sample that fails, or leaves the event."""
    plateau = float(np.nanmean(level[r0:r1]))
    i = r0 - 1 if step < 0 else r1
    while 0 <= i < level.size and event_id[i] == row_id:
        x = level[i]
        if not (plateau - STILL_EDGE_READOUT_DB <= x < 2.0 * plateau):
            break
        i += step
    return (i + 1, r1) if step < 0 else (r0, i)


LOSS_MIN_S = 10.0       # a lost run this long or longer (multipath dips to the floor last a second or two)


def _paint_losses(item: ChannelSeries, events: pd.DataFrame, mine: np.ndarray, event_id: np.ndarray,
                  cause: np.ndarray, lookup: dict) -> None:
    """Inside events with a ``loss_edge_dbm`` (set by :func:`diag.analysis.classify.classify_events`): each run of
    ``LOSS_MIN_S`` or more of lost samples (status signal_lost) whose valid neighbours on both sides read at least
    ``loss_edge_dbm`` is a signal loss (equipment), whatever the event around it.  For interval statistics (events
    with a ``loss_clear_db``) a run of one or more lost intervals whose neighbouring intervals on both sides kept
    their lowest reading within ``loss_clear_db`` of the reference."""
    if "loss_edge_dbm" not in events or S.SIGNAL_LOSS not in lookup:
        return
    edge = events["loss_edge_dbm"].to_numpy(dtype=float, na_value=np.nan)
    clear = (events["loss_clear_db"].to_numpy(dtype=float, na_value=np.nan) if "loss_clear_db" in events
             else np.full(len(events), np.nan))
    todo = [k for k in mine if np.isfinite(edge[k]) or np.isfinite(clear[k])]
    if not todo:
        return
    lost = (item.frame["status"] == S.SIGNAL_LOST).to_numpy(dtype=bool)
    if not lost.any():
        return
    if item.kind == "stats":
        # interval statistics: the neighbours' fade at their lowest reading, counted from the clear-air minimum
        # level (reference minus interval minimum, less the clear-air gap of a min/avg/max log: clear_min_gap_db)
        low_col = "rsl_min_dbm" if "rsl_min_dbm" in item.frame else "rsl_dbm"
        fade = (item.frame["reference_dbm"].to_numpy(dtype=float, na_value=np.nan)
                - item.frame[low_col].to_numpy(dtype=float, na_value=np.nan) - clear_min_gap_db(item.frame))
        min_run = 1
    else:
        rsl = item.frame["rsl_dbm"].to_numpy(dtype=float, na_value=np.nan)
        min_run = max(2, int(math.ceil(LOSS_MIN_S / item.interval_s)))
    first, last = events["start_index"].to_numpy(), events["end_index"].to_numpy()
    row_ids = events.index.to_numpy()
    n = len(lost)
    for k in todo:
        a, b = int(first[k]), int(last[k])
        seg = lost[a:b]
        if not seg.any():
            continue
        change = np.flatnonzero(np.diff(np.r_[False, seg, False].astype(np.int8)))
        for r0, r1 in zip(change[::2] + a, change[1::2] + a):
            if r1 - r0 < min_run or r0 == 0 or r1 >= n:
                continue
            if item.kind == "stats":
                ok = fade[r0 - 1] < clear[k] and fade[r1] < clear[k]
            else:
                ok = rsl[r0 - 1] >= edge[k] and rsl[r1] >= edge[k]
            if ok:
                own = event_id[r0:r1] == row_ids[k]
                cause[r0:r1][own] = lookup[S.SIGNAL_LOSS]


def paint_series(series: dict[str, ChannelSeries], events: pd.DataFrame) -> None:
    """Add ``event_id`` (row of ``events``, -1 none) and ``cause`` to each channel frame.

    Longer events are painted first, so the innermost (shortest) event covering a point wins.
    """
    # categorical over the cause vocabulary ("" = no event): built from codes in O(n); the code of each event row
    # (and, last, of "no event") is looked up once for all channels
    categories = list(CAUSE_DTYPE.categories)
    lookup = {c: i for i, c in enumerate(categories)}
    codes = np.array([lookup.get(str(c), lookup[S.UNKNOWN]) for c in events["cause"]] + [len(categories) - 1],
                     dtype=np.int16) if len(events) else np.array([len(categories) - 1], dtype=np.int16)
    if len(events):   # the columns as arrays once (filtering the frame per channel copies every column)
        channel = events["channel"].to_numpy()
        row_ids = events.index.to_numpy()
        first, last = events["start_index"].to_numpy(), events["end_index"].to_numpy()
        duration = events["duration_s"].to_numpy(dtype=float)
        shift = (events["event_kind"] == "level_shift").to_numpy(dtype=bool, na_value=False)
        size_db = events["peak_fade_db"].to_numpy(dtype=float)
    for name, item in series.items():
        n = len(item.frame)
        event_id = np.full(n, -1, dtype=np.int64)
        cause = np.full(n, codes[-1], dtype=np.int16)   # codes[event_id], painted alongside
        if len(events):
            mine = np.flatnonzero(channel == name)
            # longest first; a stable sort of the negated durations keeps ties in table order, as
            # sort_values(ascending=False, kind="stable") does
            for k in mine[np.argsort(-duration[mine], kind="stable")]:
                event_id[int(first[k]):int(last[k])] = row_ids[k]
                cause[int(first[k]):int(last[k])] = codes[row_ids[k]]
            # inside a level-shift span a nested fade names the sample only where it is the larger contribution
            # (its attenuation against the shifted level exceeds the shift), as the truth of a sample is defined
            spans = mine[shift[mine]]
            if len(spans):
                att = item.frame["attenuation_db"].to_numpy(dtype=float, na_value=np.nan)
                lost = (item.frame["status"] == S.SIGNAL_LOST).to_numpy(dtype=bool)
                for k in spans:
                    a, b, row_id, size = int(first[k]), int(last[k]), row_ids[k], size_db[k]
                    inner = event_id[a:b]
                    with np.errstate(invalid="ignore"):
                        weaker = (inner != row_id) & ~(att[a:b] > size) & ~lost[a:b]
                    inner[weaker] = row_id
                    cause[a:b][weaker] = codes[row_id]
        if len(events):
            _paint_split(item, events, mine, event_id, cause, lookup)
            _paint_still_edges(item, events, mine, event_id, cause, lookup)
            _paint_losses(item, events, mine, event_id, cause, lookup)
        item.frame["event_id"] = event_id
        item.frame["cause"] = pd.Categorical.from_codes(cause, dtype=CAUSE_DTYPE, validate=False)
