"""Rain verdicts on real links against rain gauges, minute by minute: the OpenRainER subset.

Data (not ours; CC BY 4.0, https://creativecommons.org/licenses/by/4.0/): the OpenRainER subset beside the checkout
(docs/references.md §10)/csv, an
adapted excerpt (15 links, 1-min RSL/TSL, 14-19 Aug 2022, and the nearest rain gauges' 15-min accumulations) of
Covi, E., Roversi, G., et al.: OpenRainER (version 1.1), Zenodo, https://doi.org/10.5281/zenodo.10593848; CML data
source Lepida ScpA, Bologna; gauges ARPAE-SIMC, Bologna; cropped 8-day example by C. Chwala,
OpenSenseAction/opensense_example_data.  What was changed is in that folder's PROVENANCE.md.

Counting (as issue 14 defines it), per sub-link and minute:

- faded: the channel's path level (RSL - TSL, so ATPC steps do not count as fades; RSL alone when TSL is absent) is
  >= 3 dB below its own running median (centred 24 h), or the receiver reads its floor (<= -99 dBm);
- wet: the link's nearest gauge measured >= 0.2 mm in a 15-min interval overlapping minute +-20 min (a gauge stamp
  marks the END of its interval);
- dry: every gauge interval overlapping minute +-3 h is present and 0 mm;
- called rain: the analysis' per-minute cause on that channel is ``rain``; the rule of thumb beside it calls rain
  when the analysed event covering the minute lasts longer than 5 min.

Added beside those (never replacing them), when the folder also holds ``gauges_all_15min_mm.csv`` and
``gauges_metadata.csv`` (the all-links conversion, ``openrainer_convert.py``), labels from the whole gauge network
around the path midpoint (great-circle distance):

- wet (any gauge within 5 km): at least one gauge within 5 km measured >= 0.2 mm in an interval overlapping
  minute +-20 min;
- dry (network, radius R; R = 10 km by choice, 5 and 15 km reported too): at least one gauge within R has every
  interval overlapping minute +-3 h present and 0 mm, no gauge within R measured > 0 mm in any interval of that
  window that it has (a gauge with gaps can still veto), and the nearest-gauge wet label is not set.

The analysis runs on all links together (one network: ``analyze_tables``, which for the posterior attribution
includes the project's network corroboration), WITHOUT the gauge (the gauge defines wet/dry; feeding it in would
make the count circular).  ``evaluate(links=..., fit=callable)``: for each evaluated link L, ``fit(training)`` is
called with the data of the OTHER links only (dict cml_id -> (table, link, gauge, metadata row)) and returns a callable
``analyse(table, links) -> list[LinkResult]`` used for L (leave-one-link-out).  The links' threshold (-90 dBm) is
assumed (the data set has none); it affects outage figures, not these counts.
"""
from __future__ import annotations

import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

REPO = Path(__file__).resolve().parents[2]
try:  # a ``diag`` on PYTHONPATH (e.g. an exported older version, to compare) wins over this checkout's
    import diag  # noqa: F401
except ImportError:
    sys.path.insert(0, str(REPO))

_PLACE = Path("shared", "realdata", "openrainer")   # beside the checkout (or beside a parent, for a worktree)
DATA = next((p / _PLACE for p in REPO.parents if (p / _PLACE).is_dir()), REPO.parent / _PLACE) / "csv"
DATA_ALL = DATA.parent / "csv_all"   # every usable link, made by openrainer_convert.py
ASSUMED_THRESHOLD_DBM = -90.0
FADE_DB = 3.0
FLOOR_DBM = -99.0
WET_MM = 0.2
WET_WINDOW = pd.Timedelta(minutes=20)
DRY_WINDOW = pd.Timedelta(hours=3)
GAUGE_STEP = pd.Timedelta(minutes=15)
WET_ANY_RADIUS_KM = 5.0
DRY_NET_RADII_KM = (5.0, 10.0, 15.0)
DRY_NET_MAIN_KM = 10.0          # the radius of the headline network-dry label (a choice, not a standard)
NOISE_FLOOR_MEDIAN_DBM = -90.0   # a channel whose median RSL is this low carries no working signal (see report)
LENGTH_BANDS_KM = ((0.0, 1.0, "<1 km"), (1.0, 5.0, "1-5 km"), (5.0, 15.0, "5-15 km"), (15.0, np.inf, ">15 km"))


def _link_rows(base: Path) -> pd.DataFrame:
    return pd.read_csv(base / "links_metadata.csv")


def load(base: Path = DATA) -> dict:
    """cml_id -> (normalised table, Link, gauge Series of mm per interval indexed by interval END, metadata row)."""
    from diag.links import make_link
    from diag.read.ingest import read_log

    meta = _link_rows(base)
    gauges = pd.read_csv(base / "gauges_nearest_15min_mm.csv")
    gauges.index = pd.to_datetime(gauges.pop("time_utc_end_of_interval"), utc=True)
    out = {}
    for cml, part in meta.groupby("cml_id", sort=False):
        tables = []
        for _, row in part.iterrows():
            table = read_log(str(base / row["file"]), link_id=str(cml)).table.copy()
            table["channel"] = row["sublink_id"]
            tables.append(table)
        first = part.iloc[0]
        link = make_link({
            "link_id": str(cml), "frequency_ghz": float(part["frequency_ghz"].mean()),
            "length_km": float(first["length_km"]),
            "polarization": "H" if first["polarization"] == "horizontal" else "V",
            "threshold_dbm": ASSUMED_THRESHOLD_DBM,
            "site_a_lat": first["site_0_lat"], "site_a_lon": first["site_0_lon"],
            "site_b_lat": first["site_1_lat"], "site_b_lon": first["site_1_lon"],
        })
        g = gauges[first["nearest_gauge_id"]] if first["nearest_gauge_id"] in gauges else None
        table = pd.concat(tables, ignore_index=True)
        for col in ("link_id", "channel"):
            table[col] = table[col].astype(str).astype("category")   # one small code per row, not a string
        out[str(cml)] = (table, link, g, first)
    return out


def _network_table(data: dict) -> pd.DataFrame:
    from diag import schema as S

    table = pd.concat([d[0] for d in data.values()], ignore_index=True)
    return S.conform(table) if hasattr(S, "conform") else table


def _gauge_windows(minutes: pd.DatetimeIndex, gauge: pd.Series):
    """(values, window): the gauge's values in time order, and ``window(w)`` -> (lo, hi), per minute t the index
    range of the intervals (end - 15 min, end] overlapping [t - w, t + w] (start < t + w and end > t - w)."""
    g = gauge.sort_index()
    ends = g.index.as_unit("ns").asi8
    starts = ends - GAUGE_STEP.value
    t = minutes.as_unit("ns").asi8

    def window(w):
        lo = np.searchsorted(ends, t - w.value, side="right")
        hi = np.searchsorted(starts, t + w.value, side="left")
        return lo, hi

    return g.to_numpy(dtype=float), window


def _gauge_flags(minutes: pd.DatetimeIndex, gauge: pd.Series) -> dict:
    """Per minute, for one gauge: wet (>= 0.2 mm overlapping +-20 min), seen_rain (> 0 mm in a present interval
    overlapping +-3 h) and zero (every interval overlapping +-3 h present and 0 mm)."""
    vals, window = _gauge_windows(minutes, gauge)

    def csum(flags):
        return np.concatenate([[0], np.cumsum(flags)])

    cw, cs = csum(np.nan_to_num(vals, nan=0.0) >= WET_MM), csum(np.nan_to_num(vals, nan=0.0) > 0.0)
    cn = csum(~(np.nan_to_num(vals, nan=1.0) == 0.0))   # missing or rain: not a dry interval
    lo, hi = window(WET_WINDOW)
    wet = (cw[hi] - cw[lo]) > 0
    lo, hi = window(DRY_WINDOW)
    covered = (hi - lo) >= 24
    return {"wet": wet, "seen_rain": (cs[hi] - cs[lo]) > 0, "zero": covered & ((cn[hi] - cn[lo]) == 0)}


class GaugeNetwork:
    """Every gauge of the folder (15-min mm, stamps at interval END) with its position, for the network labels."""

    def __init__(self, mm: pd.DataFrame, meta: pd.DataFrame):
        self.mm = mm
        self.meta = meta.set_index("gauge_id").loc[list(mm.columns)]
        self._flags: dict = {}

    @classmethod
    def load(cls, base: Path) -> GaugeNetwork | None:
        if not ((base / "gauges_all_15min_mm.csv").is_file() and (base / "gauges_metadata.csv").is_file()):
            return None
        mm = pd.read_csv(base / "gauges_all_15min_mm.csv")
        mm.index = pd.to_datetime(mm.pop("time_utc_end_of_interval"), utc=True)
        return cls(mm, pd.read_csv(base / "gauges_metadata.csv"))

    def within(self, lat: float, lon: float, radius_km: float) -> list[str]:
        from openrainer_convert import great_circle_km

        d = great_circle_km(lat, lon, self.meta["lat"].to_numpy(float), self.meta["lon"].to_numpy(float))
        return [g for g, dist in zip(self.meta.index, d) if dist <= radius_km]

    def flags(self, gauge_id: str, minutes: pd.DatetimeIndex) -> dict:
        key = (gauge_id, minutes[0], minutes.size)
        if key not in self._flags:
            self._flags[key] = _gauge_flags(minutes, self.mm[gauge_id])
        return self._flags[key]

    def labels(self, minutes: pd.DatetimeIndex, lat: float, lon: float) -> dict:
        """wet_any5 and dry_net<R> per minute around a path midpoint."""
        out = {}
        near = self.within(lat, lon, WET_ANY_RADIUS_KM)
        wet = np.zeros(minutes.size, dtype=bool)
        for g in near:
            wet |= self.flags(g, minutes)["wet"]
        out["wet5"] = wet
        for r in DRY_NET_RADII_KM:
            zero = np.zeros(minutes.size, dtype=bool)
            seen = np.zeros(minutes.size, dtype=bool)
            for g in self.within(lat, lon, r):
                f = self.flags(g, minutes)
                zero |= f["zero"]
                seen |= f["seen_rain"]
            out[f"drynet{int(r)}"] = zero & ~seen
        return out


def _wet_dry(minutes: pd.DatetimeIndex, gauge: pd.Series | None) -> tuple[np.ndarray, np.ndarray]:
    """wet / dry flags per minute from the gauge (interval (end - 15 min, end])."""
    if gauge is None:
        z = np.zeros(minutes.size, dtype=bool)
        return z, z
    vals, window = _gauge_windows(minutes, gauge)

    wet_v = np.nan_to_num(vals, nan=0.0) >= WET_MM
    rain_v = np.nan_to_num(vals, nan=1.0) > 0.0   # a missing value cannot show dryness
    cw = np.concatenate([[0], np.cumsum(wet_v)])
    cr = np.concatenate([[0], np.cumsum(rain_v)])
    lo, hi = window(WET_WINDOW)
    wet = (cw[hi] - cw[lo]) > 0
    lo, hi = window(DRY_WINDOW)
    # dry needs the whole +-3 h covered by gauge intervals (13 of them for an exact alignment; at least 24)
    covered = (hi - lo) >= 24
    dry = covered & ((cr[hi] - cr[lo]) == 0) & ~wet
    return wet, dry


def _faded(frame_rsl: pd.Series, frame_tsl: pd.Series | None) -> tuple[pd.DatetimeIndex, np.ndarray, np.ndarray]:
    """Per minute of the channel: faded flag, and whether the minute has a reading at all."""
    rsl = frame_rsl
    level = rsl.copy()
    if frame_tsl is not None:
        tsl = frame_tsl.reindex(rsl.index).ffill().bfill()
        if tsl.notna().any() and tsl.nunique() > 1:
            level = rsl - (tsl - tsl.median())
    floor = rsl <= FLOOR_DBM
    ok = level.where(~floor)
    med = ok.rolling("24h", center=True, min_periods=60).median()
    faded = ((med - ok) >= FADE_DB) | floor
    has = rsl.notna()
    return rsl.index, (faded & has).to_numpy(), has.to_numpy()


LABELS = ("wet", "dry", "wet5", *(f"drynet{int(r)}" for r in DRY_NET_RADII_KM))


@dataclass
class Count:
    """Faded minutes under each label, and of them those called rain (analysis) and by the rule of thumb.
    wet/dry: the nearest gauge (issue 14); wet5 / drynet<R>: the gauge network (zero when the folder has none)."""
    wet_faded: int = 0
    wet_rain: int = 0
    wet_thumb: int = 0
    dry_faded: int = 0
    dry_rain: int = 0
    dry_thumb: int = 0
    wet5_faded: int = 0
    wet5_rain: int = 0
    wet5_thumb: int = 0
    drynet5_faded: int = 0
    drynet5_rain: int = 0
    drynet5_thumb: int = 0
    drynet10_faded: int = 0
    drynet10_rain: int = 0
    drynet10_thumb: int = 0
    drynet15_faded: int = 0
    drynet15_rain: int = 0
    drynet15_thumb: int = 0

    def add(self, other: Count) -> None:
        for k in self.__dict__:
            setattr(self, k, getattr(self, k) + getattr(other, k))


def _midpoint(meta_row) -> tuple[float, float]:
    return ((float(meta_row["site_0_lat"]) + float(meta_row["site_1_lat"])) / 2,
            (float(meta_row["site_0_lon"]) + float(meta_row["site_1_lon"])) / 2)


def _channel_faded(part: pd.DataFrame) -> tuple[pd.DatetimeIndex, np.ndarray]:
    """One channel's rows of the 1-min log: (its minutes, the faded flag of each, :func:`_faded`)."""
    from diag import schema as S

    rsl_rows = part[part[S.QUANTITY] == S.RSL]
    rsl = pd.Series(np.where(rsl_rows[S.STATUS] == S.SIGNAL_LOST, FLOOR_DBM - 4.0, rsl_rows[S.VALUE]),
                    index=pd.DatetimeIndex(rsl_rows[S.TIME])).sort_index()
    rsl = rsl[~rsl.index.duplicated()].asfreq("1min")
    tsl_rows = part[part[S.QUANTITY] == S.TSL]
    tsl = (pd.Series(tsl_rows[S.VALUE].to_numpy(), index=pd.DatetimeIndex(tsl_rows[S.TIME])).sort_index()
           if len(tsl_rows) else None)
    if tsl is not None:
        tsl = tsl[~tsl.index.duplicated()]
    minutes, faded, _ = _faded(rsl, tsl)
    return minutes, faded


def _frame_at(series, minutes: pd.DatetimeIndex) -> pd.DataFrame:
    """The analysed grid read at each minute: an interval-statistics grid gives each minute its interval's row."""
    if series.kind == "stats":
        return series.frame.reindex(minutes, method="ffill", tolerance=pd.Timedelta(seconds=series.interval_s - 1))
    return series.frame.reindex(minutes)


def count_link(data_item, result, network: GaugeNetwork | None = None) -> Count:
    table, link, gauge, meta_row = data_item
    from diag import schema as S

    c = Count()
    events = result.events
    dur = events["duration_s"].to_numpy(dtype=float) if len(events) else np.zeros(0)
    for ch in sorted(set(table[S.CHANNEL].astype(str))):
        minutes, faded = _channel_faded(table[table[S.CHANNEL].astype(str) == ch])
        wet, dry = _wet_dry(minutes, gauge)
        series = result.series.get(ch)
        if series is None:
            called = np.zeros(minutes.size, dtype=bool)
            thumb = called
        else:
            fr = _frame_at(series, minutes)
            called = (fr["cause"].astype(str) == "rain").to_numpy()
            eid = fr["event_id"].fillna(-1).to_numpy(dtype=np.int64)
            thumb = np.zeros(minutes.size, dtype=bool)
            has = eid >= 0
            thumb[has] = dur[eid[has]] > 300.0
        labels = {"wet": wet, "dry": dry}
        if network is not None:
            net = network.labels(minutes, *_midpoint(meta_row))
            labels.update(net)
            for r in DRY_NET_RADII_KM:
                labels[f"drynet{int(r)}"] = net[f"drynet{int(r)}"] & ~wet
        part_count = Count()
        for name, flag in labels.items():
            m = faded & flag
            setattr(part_count, f"{name}_faded", int(m.sum()))
            setattr(part_count, f"{name}_rain", int((m & called).sum()))
            setattr(part_count, f"{name}_thumb", int((m & thumb).sum()))
        c.add(part_count)
    return c


def _analyse_network(table: pd.DataFrame, links) -> list:
    """The project's analysis of several hops, as ``analyze_files`` runs it: ``analyze_tables`` with the chosen
    attribution.  The network corroboration (a posterior re-scoring) belongs to the posterior only; the pipeline runs
    it itself inside ``analyze_tables`` where it has it, so it is added here only for an older ``diag`` whose
    ``analyze_tables`` does not (running it after the rulebook would score the posterior under the name ``rules``,
    and running it twice would count the network term twice)."""
    import inspect
    import os

    from diag.config import AnalysisConfig
    from diag.pipeline import analyze_tables

    attribution = os.environ.get("DIAG_BENCH_ATTRIBUTION", "posterior")   # as score.ATTRIBUTION
    results = analyze_tables(table, links, config=AnalysisConfig(attribution=attribution))
    if attribution != "posterior" or "corroborate" in inspect.getsource(analyze_tables):
        return results
    try:
        from diag.analysis.network import corroborate
    except ImportError:
        return results
    return corroborate(results)


def interval_minmax(table: pd.DataFrame, interval_s: int = 900) -> pd.DataFrame:
    """The 1-min log as a radio's 15-min min/max performance export would hold it (no average): per channel and
    interval (stamped at its start, as the normalised table is), the lowest and highest valid RSL and the highest TSL
    (an ATPC transmitter rises as the path fades).  An interval with a lost-signal minute keeps its lowest valid
    value but is marked ``signal_lost`` on the minimum (the receiver reached its floor); an interval with no valid
    minute is left out, as an export leaves it out."""
    from diag import schema as S

    rows = []
    step = pd.Timedelta(seconds=interval_s)
    for (channel, quantity), part in table.groupby([table[S.CHANNEL].astype(str), table[S.QUANTITY].astype(str)],
                                                   observed=True, sort=False):
        start = part[S.TIME].dt.floor(step)
        ok = part[S.STATUS].astype(str) == S.OK
        lost = (part[S.STATUS].astype(str) == S.SIGNAL_LOST).groupby(start).any()
        valid = part[S.VALUE].where(ok)
        stats = {"max": valid.groupby(start).max()} if quantity == S.TSL else \
            {"min": valid.groupby(start).min(), "max": valid.groupby(start).max()}
        for stat, values in stats.items():
            flag = lost.reindex(values.index, fill_value=False) if stat == "min" else \
                pd.Series(False, index=values.index)
            keep = values.notna() | flag
            values, flag = values[keep], flag[keep]
            rows.append(pd.DataFrame({
                S.TIME: values.index, S.LINK: str(part[S.LINK].iloc[0]), S.CHANNEL: channel, S.QUANTITY: quantity,
                S.STAT: getattr(S, stat.upper()), S.INTERVAL: float(interval_s), S.VALUE: values.to_numpy(),
                S.STATUS: np.where(flag.to_numpy(), S.SIGNAL_LOST, S.OK)}))
    out = pd.concat(rows, ignore_index=True).sort_values([S.CHANNEL, S.QUANTITY, S.STAT, S.TIME],
                                                           kind="stable", ignore_index=True)
    for col in (S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.STATUS):
        out[col] = out[col].astype("category")
    return out[list(table.columns)]


def _minute_causes(data_item, result) -> dict:
    """Per channel: (minutes, faded flag from the 1-min log, the analysis' cause per minute as str)."""
    from diag import schema as S

    table = data_item[0]
    out = {}
    for ch in sorted(set(table[S.CHANNEL].astype(str))):
        series = result.series.get(ch)
        if series is None:
            continue
        minutes, faded = _channel_faded(table[table[S.CHANNEL].astype(str) == ch])
        out[ch] = (minutes, faded, _frame_at(series, minutes)["cause"].astype(str).to_numpy())
    return out


def agreement(base: Path = DATA, minmax_s: int = 900) -> dict:
    """Issue 14's "one decision for all sampling" on real logs: the faded minutes (1-min labels) where the analysis of
    the 1-min samples and of the same log as ``minmax_s`` min/max exports name the same cause, per cause of the
    1-min verdict, and the confusion of the two (1-min cause -> min/max cause, minutes)."""
    data = load(base)
    fine = {r.link.link_id: r for r in _analyse_network(_network_table(data), [d[1] for d in data.values()])}
    stats_data = {k: (interval_minmax(v[0], minmax_s),) + tuple(v[1:]) for k, v in data.items()}
    coarse = {r.link.link_id: r for r in _analyse_network(_network_table(stats_data),
                                                          [d[1] for d in data.values()])}
    pairs: dict = {}
    signal = [0, 0]    # the same, leaving out the links that read noise only (at_noise_floor)
    for k, item in data.items():
        if k not in fine or k not in coarse or fine[k].error or coarse[k].error:
            continue
        a, b = _minute_causes(item, fine[k]), _minute_causes(item, coarse[k])
        noise = at_noise_floor(item)
        for ch in a.keys() & b.keys():
            _, faded, c1 = a[ch]
            c1, c2 = c1[faded], b[ch][2][faded]
            for x, y in zip(c1, c2):
                pairs[(x, y)] = pairs.get((x, y), 0) + 1
            if not noise:
                signal[0] += int(c1.size)
                signal[1] += int((c1 == c2).sum())
    total = sum(pairs.values())
    same = sum(n for (x, y), n in pairs.items() if x == y)
    return {"faded_minutes": total, "agree": same, "pairs": pairs, "faded_minutes_signal": signal[0],
            "agree_signal": signal[1]}


def at_noise_floor(data_item) -> bool:
    """True when every channel of the link has a median RSL <= -90 dBm: the receiver reads noise, not a signal
    (in OpenRainER 1133, 1134, 152 and 164, each with the other direction entirely missing)."""
    from diag import schema as S

    table = data_item[0]
    rsl = table[table[S.QUANTITY] == S.RSL]
    med = rsl.groupby(rsl[S.CHANNEL].astype(str))[S.VALUE].median()
    return bool(len(med)) and bool((med <= NOISE_FLOOR_MEDIAN_DBM).all())


def evaluate(links=None, fit=None, base: Path = DATA, minmax_s: int | None = None) -> dict:
    """Per-link counts (and the total) for the chosen links (cml ids as str or int; default all 15).
    ``minmax_s``: analyse the logs as min/max exports of that interval (:func:`interval_minmax`) instead of the
    1-min samples; the minutes are still labelled and counted from the 1-min log, each taking its interval's cause."""
    data = load(base)
    if minmax_s:
        analysed = {k: (interval_minmax(v[0], minmax_s),) + tuple(v[1:]) for k, v in data.items()}
    else:
        analysed = data
    network = GaugeNetwork.load(Path(base))
    chosen = [str(x) for x in (links or list(data))]
    per_link: dict[str, Count] = {}
    if fit is None:
        results = _analyse_network(_network_table(analysed), [d[1] for d in data.values()])
        by_id = {r.link.link_id: r for r in results}
        del results
        for k in chosen:
            per_link[k] = count_link(data[k], by_id[k], network)
    else:
        for k in chosen:
            training = {o: v for o, v in data.items() if o != k}
            analyse = fit(training)
            results = analyse(_network_table(analysed), [d[1] for d in data.values()])
            by_id = {r.link.link_id: r for r in results}
            per_link[k] = count_link(data[k], by_id[k], network)
    total = Count()
    for c in per_link.values():
        total.add(c)
    return {"per_link": per_link, "total": total, "meta": {k: data[k][3] for k in chosen},
            "network": network is not None, "noise_floor": [k for k in chosen if at_noise_floor(data[k])]}


def _pct(a: int, b: int) -> str:
    return f"{100 * a / b:6.1f}%" if b else "     -"


def _triple(c: Count, name: str) -> str:
    n = getattr(c, f"{name}_faded")
    return f"{n:8d}{_pct(getattr(c, f'{name}_rain'), n):>8}{_pct(getattr(c, f'{name}_thumb'), n):>8}"


def _label_title(name: str) -> str:
    return {"wet": "wet (nearest gauge)", "dry": "dry (nearest gauge)", "wet5": "wet (any gauge <= 5 km)"}.get(
        name, f"dry (network, {name[6:]} km)")


def band_totals(res: dict) -> dict[str, tuple[int, Count]]:
    """Total counts by path length band (<1, 1-5, 5-15, >15 km): band -> (number of links, Count)."""
    out = {}
    for lo, hi, name in LENGTH_BANDS_KM:
        c, n = Count(), 0
        for k, lc in res["per_link"].items():
            if lo <= float(res["meta"][k]["length_km"]) < hi:
                c.add(lc)
                n += 1
        out[name] = (n, c)
    return out


def report(res: dict, per_link: bool = True) -> str:
    net = res.get("network", False)
    names = ["wet", "dry"] + (["wet5", f"drynet{int(DRY_NET_MAIN_KM)}"] if net else [])
    head = "".join(f"{t:>24}" for t in ("wet nearest", "dry nearest", "wet any<=5km", "dry net 10km")[:len(names)])
    sub = f"{'faded':>8}{'rain':>8}{'thumb':>8}" * len(names)
    lines = ["== OpenRainER (real links, CC BY 4.0, Lepida ScpA / ARPAE-SIMC via OpenRainER): faded minutes ==",
             f"{'':<13}{head}", f"{'link':<6}{'km':>7}{sub}"]
    if per_link:
        for k, c in res["per_link"].items():
            km = float(res["meta"][k]["length_km"])
            lines.append(f"{k:<6}{km:7.2f}" + "".join(_triple(c, n) for n in names))
    c = res["total"]
    lines.append(f"{'total':<13}" + "".join(_triple(c, n) for n in names))
    lines.append("")
    lines.append(f"totals, {len(res['per_link'])} links: faded minutes under each label, % called rain by the "
                 "analysis, % by the rule of thumb (an event longer than 5 min is rain)")
    shown = list(LABELS) if net else ["wet", "dry"]
    lines.append(f"{'label':<28}{'faded':>8}{'rain':>8}{'thumb':>8}")
    for n in shown:
        lines.append(f"{_label_title(n):<28}" + _triple(c, n))
    dead = res.get("noise_floor", [])
    if dead:
        rest = Count()
        for k, lc in res["per_link"].items():
            if k not in dead:
                rest.add(lc)
        lines.append(f"the same without the {len(dead)} links whose every channel has a median RSL <= "
                     f"{NOISE_FLOOR_MEDIAN_DBM:.0f} dBm (noise, no signal: {', '.join(dead)}):")
        for n in shown:
            lines.append(f"{_label_title(n):<28}" + _triple(rest, n))
    lines.append("")
    lines.append("by path length (links; per label: faded minutes, % called rain, % thumb)")
    lines.append(f"{'band':<9}{'links':>6}" + "".join(f"{_label_title(n)[:23]:>24}" for n in shown))
    for band, (n_links, bc) in band_totals(res).items():
        lines.append(f"{band:<9}{n_links:6d}" + "".join(_triple(bc, n) for n in shown))
    lines.append("targets: wet faded minutes called rain >= 90 %, dry faded minutes called rain <= 5 %")
    return "\n".join(lines)


def main(argv=None) -> int:
    import argparse

    ap = argparse.ArgumentParser(description="rain verdicts on the OpenRainER links against the rain gauges")
    ap.add_argument("base", nargs="?", default=str(DATA), help="folder with links_metadata.csv (default: csv)")
    args = ap.parse_args(argv)
    print(report(evaluate(base=Path(args.base))))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
