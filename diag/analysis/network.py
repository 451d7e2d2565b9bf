"""Network corroboration: a fade that coincides with fades on other hops of the network is rain evidence.

Rain is weather: a rain cell or a storm front fades neighbouring hops together within minutes, while multipath and
refractive fading depend on each hop's own geometry and are hop-local (docs/references.md §8,
"Neighbouring hops"; the nearby-link rain detection of Overeem, Leijnse and Uijlenhoet, Atmos. Meas. Tech. 9,
2425-2444, 2016, rests on the same fact).

For each fade event of a hop, the other hops analysed with it are asked whether they faded (attenuation above
``FADED_DB`` or the receiver at its floor) in any minute from ``MARGIN_S`` before the event to ``MARGIN_S`` after
it.  ``network_share`` is the weighted share of those hops that did, ``network_hops`` how many had data then,
``network_faded_weight`` the summed weights of those that faded (how much near evidence the share rests on: hops
far away fading in a regional storm say little about this path), ``network_chance`` the weighted share expected by
chance in a window that long from each hop's own rate of fading over the record outside that window (the
coincidence under test must not set its own base rate), ``network_weight`` the summed
weights of the hops watched (in a network of many hops some
fade somewhere most of the time: 0.1 in six hours of a dry day among the 141 OpenRainER links).
Weights: exp(-distance / ``CORRELATION_KM``) between path midpoints when the links table gives both hops' site
coordinates (rain fields decorrelate over tens of km: convective cells of a few km, fronts of tens of km; 20 km
is a stated choice), else 1 (the plain share of the network's hops).  The term that reads them is
:func:`diag.analysis.attribution.term_network`; a hop analysed alone gets no term.

:func:`corroborate` re-scores the events of each result with the two columns and, where a cause changed, repaints
the series and reruns the stages that read the causes (statistics, cross-polar, level changes, outage, findings).
"""
from __future__ import annotations

import math
from collections.abc import Sequence
from typing import NamedTuple

import numpy as np
import pandas as pd

from diag import schema as S
from diag.links import Link

__all__ = ["faded_minutes", "minute_counts", "MinuteCounts", "network_columns", "rescore", "apply_network",
           "with_network", "without_network", "corroborates", "corroborate", "NETWORK_COLUMNS", "FADED_DB",
           "MARGIN_S", "CORRELATION_KM", "midpoint", "NETWORK_STEPS", "STEP_WINDOW_S", "asked_kinds"]

FADED_DB = 3.0
# the chance rate of each other hop from its minutes OUTSIDE the event's window (``MinuteCounts.chance_outside``),
# when at least OUTSIDE_MIN_MINUTES (six hours, a stated choice) of them were seen; else from the whole record
CHANCE_OUTSIDE = True
OUTSIDE_MIN_MINUTES = 360
MARGIN_S = 300.0
CORRELATION_KM = 20.0
NETWORK_COLUMNS = ("network_share", "network_hops", "network_faded_weight", "network_chance", "network_weight",
                   "episode_share", "episode_chance", "episode_hours", "step_end_share", "step_end_chance")
# fades of one hop less than this apart make one episode (:func:`network_columns`): rain that keeps returning to a
# path for hours is one spell of weather over the area, and in that time it reaches the near hops (stated choice)
EPISODE_GAP_S = 1800.0
# causes that do not fade a neighbouring hop with this one: multipath is hop-local (each hop's own geometry) and
# equipment is one hop's own.  Refraction is hop-local too, but a first-pass "refractive" or "unknown" is the call
# most often wrong in a storm (rain read as a slow fade on every hop at once), and leaving those out took the
# storm's own evidence away (family B seed 93: a 5.7-h 44-dB storm fade at 41 GHz called refractive); they count.
HOP_LOCAL = (S.MULTIPATH, S.LEVEL_SHIFT, S.SIGNAL_LOSS)
# a level-shift span (a step of the hop's clear-sky level found by the reference stage) is asked about too, over
# the hour after its step (``STEP_WINDOW_S``, clipped to the span; the usual columns) and the hour before its level
# came back (``step_end_share``, ``step_end_chance``): a knocked antenna is one hop's own, while a storm that lowers
# many hops' levels together and hands them back together is weather (classify reads the columns).  A knock in a
# storm's wind is repaired when the crew comes, not when the rain stops.  Stated choice: a front crosses a city
# network of 10-20 km at 10-20 m/s within about half an hour
NETWORK_STEPS = True
STEP_WINDOW_S = 3600.0


def faded_minutes(result) -> pd.Series:
    """Per UTC minute: True when any channel of the hop was faded by something that may be weather (boolean Series
    on a minute index).  Samples the hop's own analysis put down to a hop-local cause (``HOP_LOCAL``: multipath,
    a level shift, equipment signal loss) do not count: a neighbour's multipath night is no rain evidence."""
    parts = []
    for series in result.series.values():
        frame = series.frame
        col = "attenuation_peak_db" if series.kind == "stats" and "attenuation_peak_db" in frame else "attenuation_db"
        att = frame[col].to_numpy(dtype=float, na_value=np.nan)
        lost = (frame["status"] == S.SIGNAL_LOST).to_numpy(dtype=bool)
        local = (frame["cause"].astype(object).isin(HOP_LOCAL).to_numpy(dtype=bool) if "cause" in frame
                 else np.zeros(len(frame), dtype=bool))
        with np.errstate(invalid="ignore"):
            faded = ((att > FADED_DB) | lost) & ~local
        seen = np.isfinite(att) | lost
        idx = pd.DatetimeIndex(frame.index).floor("1min")
        # as floats (1/0, NaN where a reindexed minute has no value): pandas reduces them in compiled code, where
        # the object columns that bools with NaN become are reduced one Python call per minute (~0.6 s a week)
        part = pd.DataFrame({"faded": faded.astype(float), "seen": seen.astype(float)},
                            index=idx).groupby(level=0).max()
        if series.interval_s > 60.0:   # an interval statistic covers every minute of its interval
            step = int(round(series.interval_s / 60.0))
            part = part.reindex(pd.date_range(part.index[0], part.index[-1] + pd.Timedelta(minutes=step - 1),
                                              freq="1min")).ffill(limit=step - 1)
        parts.append(part)
    if not parts:
        return pd.Series(dtype=bool)
    both = pd.concat(parts).groupby(level=0).max()
    faded = both["faded"].map({1.0: True, 0.0: False})   # True/False, NaN kept
    return faded.where(both["seen"].astype(bool))


def midpoint(link: Link) -> tuple[float, float] | None:
    """The path midpoint (lat, lon) [deg] from the links table's site coordinates; None when any is missing."""
    vals = (link.site_a_lat, link.site_a_lon, link.site_b_lat, link.site_b_lon)
    if any(v is None for v in vals):
        return None
    return (vals[0] + vals[2]) / 2.0, (vals[1] + vals[3]) / 2.0


def _distance_km(a: tuple[float, float], b: tuple[float, float]) -> float:
    """Great-circle distance (haversine, Earth radius 6371 km)."""
    la1, lo1, la2, lo2 = map(math.radians, (a[0], a[1], b[0], b[1]))
    h = math.sin((la2 - la1) / 2) ** 2 + math.cos(la1) * math.cos(la2) * math.sin((lo2 - lo1) / 2) ** 2
    return 2 * 6371.0 * math.asin(min(1.0, math.sqrt(h)))


class MinuteCounts(NamedTuple):
    """A hop's faded minutes ready for window counts: the minute stamps (UTC ns, sorted) and the running counts of
    minutes seen and minutes faded up to each (``seen[k]``: among the first k minutes); its base rates over the
    whole record: the share of seen minutes faded and the fade episodes begun per seen minute."""

    stamps_ns: np.ndarray
    seen: np.ndarray
    faded: np.ndarray
    faded_share: float = 0.0
    starts_per_min: float = 0.0
    starts: np.ndarray | None = None    # running count of fade episodes begun, like ``faded``

    def chance(self, window_min: np.ndarray) -> np.ndarray:
        """Probability that this hop shows a faded minute in a window of ``window_min`` minutes at a random time:
        faded at its start, or a fade beginning inside it (episodes as a Poisson stream at the hop's own rate)."""
        w = np.asarray(window_min, dtype=float)
        return 1.0 - (1.0 - self.faded_share) * np.exp(-self.starts_per_min * w)

    def chance_outside(self, window_min: np.ndarray, first: np.ndarray, last: np.ndarray) -> np.ndarray:
        """:meth:`chance` with the hop's rates taken from the minutes OUTSIDE the window itself (positions
        ``first:last`` of ``stamps_ns``): the rate of fading "by chance" must not contain the coincidence under test.
        In a short record one storm fades every hop for hours, and counting its own minutes in the base rate makes
        the storm look like chance.  Falls back to the whole record's rates when fewer than
        ``OUTSIDE_MIN_MINUTES`` lie outside."""
        w = np.asarray(window_min, dtype=float)
        if self.starts is None:
            return self.chance(w)
        seen_out = self.seen[-1] - (self.seen[last] - self.seen[first])
        faded_out = self.faded[-1] - (self.faded[last] - self.faded[first])
        starts_out = self.starts[-1] - (self.starts[last] - self.starts[first])
        with np.errstate(invalid="ignore", divide="ignore"):
            share = np.where(seen_out >= OUTSIDE_MIN_MINUTES, faded_out / seen_out, self.faded_share)
            rate = np.where(seen_out >= OUTSIDE_MIN_MINUTES, starts_out / seen_out, self.starts_per_min)
        return 1.0 - (1.0 - share) * np.exp(-rate * w)


def minute_counts(minutes: pd.Series | MinuteCounts) -> MinuteCounts:
    """:class:`MinuteCounts` of a :func:`faded_minutes` series (made once per hop, read for every other hop)."""
    if isinstance(minutes, MinuteCounts):
        return minutes
    if not minutes.index.is_monotonic_increasing:
        minutes = minutes.sort_index()
    seen = minutes.notna().to_numpy(dtype=bool)
    faded = minutes.where(seen, False).astype(bool).to_numpy() & seen
    zero = np.zeros(1, dtype=np.int64)
    stamps = pd.DatetimeIndex(minutes.index).as_unit("ns").asi8 if len(minutes) else np.zeros(0, dtype=np.int64)
    n_seen = int(seen.sum())
    # an episode begins at a faded minute whose previous minute (one minute earlier) was not faded
    prev = np.zeros(faded.size, dtype=bool)
    if faded.size > 1:
        prev[1:] = faded[:-1] & (np.diff(stamps) == 60 * 10 ** 9)
    starts = int(np.count_nonzero(faded & ~prev))
    return MinuteCounts(stamps, np.concatenate([zero, np.cumsum(seen)]), np.concatenate([zero, np.cumsum(faded)]),
                        faded_share=float(faded.sum()) / n_seen if n_seen else 0.0,
                        starts_per_min=starts / n_seen if n_seen else 0.0,
                        starts=np.concatenate([zero, np.cumsum(faded & ~prev)]))


def _episodes(lo: np.ndarray, hi: np.ndarray, gap_ns: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(episode of each window, episode starts, episode ends): an episode is a chain of windows [lo, hi], each
    beginning within ``gap_ns`` of the latest end before it."""
    order = np.argsort(lo, kind="stable")
    s_lo, s_hi = lo[order], hi[order]
    reach = np.maximum.accumulate(s_hi)
    new = np.ones(s_lo.size, dtype=bool)
    new[1:] = s_lo[1:] > reach[:-1] + gap_ns
    ids = np.empty(lo.size, dtype=np.int64)
    ids[order] = np.cumsum(new) - 1
    return ids, s_lo[new], np.maximum.reduceat(s_hi, np.flatnonzero(new))


def _window_counts(lo: np.ndarray, hi: np.ndarray, mine, others) -> tuple[np.ndarray, ...]:
    """(hops seen, weight watched, weight faded, share faded, share expected by chance) over the windows [lo, hi]
    (UTC ns); the shares NaN where no hop was seen."""
    num = np.zeros(len(lo))
    den = np.zeros(len(lo))
    expected = np.zeros(len(lo))
    window_min = (hi - lo) / 6e10 + 1.0
    count = np.zeros(len(lo), dtype=np.int64)
    for other, minutes in others:
        theirs = midpoint(other)
        w = math.exp(-_distance_km(mine, theirs) / CORRELATION_KM) if mine and theirs else 1.0
        counts = minute_counts(minutes)
        first = np.searchsorted(counts.stamps_ns, lo, side="left")
        last = np.searchsorted(counts.stamps_ns, hi, side="right")
        seen = (counts.seen[last] - counts.seen[first]) > 0
        faded = (counts.faded[last] - counts.faded[first]) > 0
        count += seen
        den = den + np.where(seen, w, 0.0)
        num = num + np.where(seen & faded, w, 0.0)
        expected = expected + np.where(seen, w * (counts.chance_outside(window_min, first, last) if CHANCE_OUTSIDE
                                                  else counts.chance(window_min)), 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(count > 0, num / den, np.nan)
        chance = np.where(count > 0, expected / den, np.nan)
    return count, den, num, share, chance


def asked_kinds() -> tuple[str, ...]:
    """The ``event_kind`` values :func:`network_columns` fills: fades, and level-shift spans (``NETWORK_STEPS``)."""
    return ("fade", "level_shift") if NETWORK_STEPS else ("fade",)


def network_columns(events: pd.DataFrame, link: Link,
                    others: Sequence[tuple[Link, pd.Series | MinuteCounts]]) -> pd.DataFrame:
    """``network_share`` and ``network_hops`` for each event of ``events`` (NaN / 0 for non-fade events), and the
    same over the event's EPISODE (``episode_share``, ``episode_chance``, ``episode_hours``): the chain of this
    hop's fades, on any channel, each beginning within ``EPISODE_GAP_S`` of the one before.

    ``others``: each other hop's link and its :func:`faded_minutes` (or their :func:`minute_counts`, made once when
    the same hop is asked about for many hops).  Vectorised over the events, one pass per other hop; the weighted
    sums add the hops in the order given, as a loop over them would (the same floating-point result)."""
    share = np.full(len(events), np.nan)
    chance = np.full(len(events), np.nan)
    watched = np.zeros(len(events))
    hops = np.zeros(len(events))
    mass = np.zeros(len(events))
    ep_share = np.full(len(events), np.nan)
    ep_chance = np.full(len(events), np.nan)
    ep_hours = np.full(len(events), np.nan)
    end_share = np.full(len(events), np.nan)
    end_chance = np.full(len(events), np.nan)

    def table() -> pd.DataFrame:
        return pd.DataFrame({"network_share": share, "network_hops": hops, "network_faded_weight": mass,
                             "network_chance": chance, "network_weight": watched, "episode_share": ep_share,
                             "episode_chance": ep_chance, "episode_hours": ep_hours, "step_end_share": end_share,
                             "step_end_chance": end_chance}, index=events.index)

    if not len(events) or not others:
        return table()
    start, end = pd.DatetimeIndex(events["start_utc"]), pd.DatetimeIndex(events["end_utc"])
    use = (events["event_kind"] == "fade").to_numpy(dtype=bool, na_value=False) & ~start.isna() & ~end.isna()
    steps = ((events["event_kind"] == "level_shift").to_numpy(dtype=bool, na_value=False) & ~start.isna()
             & ~end.isna()) if "level_shift" in asked_kinds() else np.zeros(len(events), dtype=bool)
    margin_ns = int(MARGIN_S * 1e9)
    mine = midpoint(link)

    def fill(rows: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> None:   # the columns of one window per row
        count, den, num, share[rows], chance[rows] = _window_counts(lo, hi, mine, others)
        hops[rows] = count
        mass[rows] = np.where(count > 0, num, 0.0)
        watched[rows] = den

    if use.any():
        # a minute counts when its stamp lies in [start - margin, end + margin], ends included
        lo = start[use].as_unit("ns").asi8 - margin_ns
        hi = end[use].as_unit("ns").asi8 + margin_ns
        fill(use, lo, hi)
        # each episode counted once (an episode of one fade is that fade's own window, so the same figures)
        ids, e_lo, e_hi = _episodes(lo, hi, int(EPISODE_GAP_S * 1e9))
        _, _, _, e_share, e_chance = _window_counts(e_lo, e_hi, mine, others)
        ep_share[use], ep_chance[use] = e_share[ids], e_chance[ids]
        ep_hours[use] = (e_hi[ids] - e_lo[ids] - 2 * MARGIN_S * 1e9) / 3.6e12
    if steps.any():   # the hour after each level step, and the hour before the level came back (no episode)
        s0, s1 = start[steps].as_unit("ns").asi8, end[steps].as_unit("ns").asi8
        window = int(STEP_WINDOW_S * 1e9)
        fill(steps, s0 - margin_ns, np.minimum(s1, s0 + window) + margin_ns)
        _, _, _, end_share[steps], end_chance[steps] = _window_counts(np.maximum(s0, s1 - window) - margin_ns,
                                                                      s1 + margin_ns, mine, others)
    return table()



def without_network(events: pd.DataFrame) -> pd.DataFrame:
    """``events`` without the network columns (the table :func:`network_columns` is computed for)."""
    return events.drop(columns=[c for c in NETWORK_COLUMNS if c in events], errors="ignore")


def with_network(events: pd.DataFrame, network: pd.DataFrame) -> pd.DataFrame:
    """``events`` with the network columns of ``network`` (``NETWORK_COLUMNS`` plus the ``start_utc`` and
    ``end_utc`` of the events they were computed for, row for row).  Raises ``RuntimeError`` when the events are
    not those (the analysis of the same rows is deterministic, so this means a changed input or code)."""
    same = len(events) == len(network) and all(
        np.array_equal(events[c].to_numpy(), network[c].to_numpy()) for c in ("start_utc", "end_utc"))
    if not same:
        raise RuntimeError("the network columns were computed for other fade events than this analysis found")
    extra = network[list(NETWORK_COLUMNS)].set_axis(events.index)
    return pd.concat([without_network(events), extra], axis=1)


def rescore(result, extra: pd.DataFrame, *, config=None, gauge=None) -> pd.DataFrame:
    """``result.events`` classified again with the network columns ``extra`` (:func:`network_columns` of
    :func:`without_network` of them); the gauge check is redone when ``gauge`` is given, else kept."""
    from diag.analysis.classify import classify_events

    base = without_network(result.events)
    gauge_cols = [c for c in base.columns if c.startswith("gauge_") and c != "gauge_rain_mmh"]
    rescored = classify_events(pd.concat([base.drop(columns=gauge_cols), extra], axis=1), result.link,
                               config=config)
    if gauge_cols and gauge is not None:
        from diag.read import gauge as gauge_mod

        rescored = pd.concat([rescored, gauge_mod.check_rain_verdicts(rescored, gauge)], axis=1)
    elif gauge_cols:
        rescored = pd.concat([rescored, base[gauge_cols]], axis=1)
    return rescored


def apply_network(result, extra: pd.DataFrame, *, config=None, gauge=None, rerun=None) -> bool:
    """``result.events`` := :func:`rescore`; where a cause changed, repaint the series and call ``rerun(result)``
    (the stages after painting).  Returns whether a cause changed.  The step :func:`corroborate` applies to each
    hop."""
    from diag.analysis.events import paint_series

    rescored = rescore(result, extra, config=config, gauge=gauge)
    changed = not rescored["cause"].equals(result.events["cause"])
    result.events = rescored
    if changed:
        paint_series(result.series, rescored)
        if rerun is not None:
            rerun(result)
    return changed


def corroborates(result) -> bool:
    """Whether a result takes part in corroboration: analysed (no error) with series and an event table."""
    return getattr(result, "error", None) is None and bool(result.series) and result.events is not None


def corroborate(results: list, *, config=None, gauge=None, rerun=None) -> list:
    """Re-score every hop's events with the network term (see the module docstring); results analysed alone or
    failed are returned unchanged.  ``rerun(result)`` runs the stages after painting again where a cause changed
    (the pipeline passes its own; the analysis stage does not import the pipeline)."""
    ok = [r for r in results if corroborates(r)]
    if len(ok) < 2:
        return results
    minutes = {id(r): minute_counts(faded_minutes(r)) for r in ok}
    for r in ok:
        if not len(r.events):
            continue
        others = [(o.link, minutes[id(o)]) for o in ok if o is not r]
        extra = network_columns(without_network(r.events), r.link, others)
        apply_network(r, extra, config=config, gauge=gauge, rerun=rerun)
    return results
