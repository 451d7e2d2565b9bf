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

The analysis runs on all links together (one network: ``analyze_tables`` and then the project's network
corroboration where it has one), WITHOUT the gauge (the gauge defines wet/dry; feeding it in would make the count
circular).  ``evaluate(links=..., fit=callable)``: for each evaluated link L, ``fit(training)`` is called with the
data of the OTHER links only (dict cml_id -> (table, link, gauge, metadata row)) and returns a callable
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

DATA = REPO.parent / "shared" / "realdata" / "openrainer" / "csv"
ASSUMED_THRESHOLD_DBM = -90.0
FADE_DB = 3.0
FLOOR_DBM = -99.0
WET_MM = 0.2
WET_WINDOW = pd.Timedelta(minutes=20)
DRY_WINDOW = pd.Timedelta(hours=3)
GAUGE_STEP = pd.Timedelta(minutes=15)


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
            table[col] = table[col].astype(str)
        out[str(cml)] = (table, link, g, first)
    return out


def _network_table(data: dict) -> pd.DataFrame:
    from diag import schema as S

    table = pd.concat([d[0] for d in data.values()], ignore_index=True)
    return S.conform(table) if hasattr(S, "conform") else table


def _wet_dry(minutes: pd.DatetimeIndex, gauge: pd.Series | None) -> tuple[np.ndarray, np.ndarray]:
    """wet / dry flags per minute from the gauge (interval (end - 15 min, end])."""
    if gauge is None:
        z = np.zeros(minutes.size, dtype=bool)
        return z, z
    g = gauge.sort_index()
    ends = g.index.as_unit("ns").asi8
    starts = ends - GAUGE_STEP.value
    vals = g.to_numpy(dtype=float)
    t = minutes.as_unit("ns").asi8

    def window(w):
        # intervals overlapping [t - w, t + w]: start < t + w and end > t - w
        lo = np.searchsorted(ends, t - w.value, side="right")
        hi = np.searchsorted(starts, t + w.value, side="left")
        return lo, hi

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


@dataclass
class Count:
    wet_faded: int = 0
    wet_rain: int = 0
    wet_thumb: int = 0
    dry_faded: int = 0
    dry_rain: int = 0
    dry_thumb: int = 0

    def add(self, other: Count) -> None:
        for k in self.__dict__:
            setattr(self, k, getattr(self, k) + getattr(other, k))


def count_link(data_item, result) -> Count:
    table, link, gauge, _ = data_item
    from diag import schema as S

    c = Count()
    events = result.events
    dur = events["duration_s"].to_numpy(dtype=float) if len(events) else np.zeros(0)
    for ch in sorted(set(table[S.CHANNEL].astype(str))):
        part = table[table[S.CHANNEL].astype(str) == ch]
        rsl_rows = part[(part[S.QUANTITY] == S.RSL)]
        rsl = pd.Series(np.where(rsl_rows[S.STATUS] == S.SIGNAL_LOST, FLOOR_DBM - 4.0, rsl_rows[S.VALUE]),
                        index=pd.DatetimeIndex(rsl_rows[S.TIME])).sort_index()
        rsl = rsl[~rsl.index.duplicated()].asfreq("1min")
        tsl_rows = part[(part[S.QUANTITY] == S.TSL)]
        tsl = (pd.Series(tsl_rows[S.VALUE].to_numpy(), index=pd.DatetimeIndex(tsl_rows[S.TIME])).sort_index()
               if len(tsl_rows) else None)
        if tsl is not None:
            tsl = tsl[~tsl.index.duplicated()]
        minutes, faded, _ = _faded(rsl, tsl)
        wet, dry = _wet_dry(minutes, gauge)
        series = result.series.get(ch)
        if series is None:
            called = np.zeros(minutes.size, dtype=bool)
            thumb = called
        else:
            fr = series.frame.reindex(minutes)
            called = (fr["cause"].astype(str) == "rain").to_numpy()
            eid = fr["event_id"].fillna(-1).to_numpy(dtype=np.int64)
            thumb = np.zeros(minutes.size, dtype=bool)
            has = eid >= 0
            thumb[has] = dur[eid[has]] > 300.0
        w = faded & wet
        d = faded & dry
        c.add(Count(int(w.sum()), int((w & called).sum()), int((w & thumb).sum()),
                    int(d.sum()), int((d & called).sum()), int((d & thumb).sum())))
    return c


def _analyse_network(table: pd.DataFrame, links) -> list:
    """The project's analysis of several hops: every hop, then the network corroboration where the project has one
    (``analyze_files`` does the same for log files)."""
    import os

    from diag.config import AnalysisConfig
    from diag.pipeline import analyze_tables

    attribution = os.environ.get("DIAG_BENCH_ATTRIBUTION", "posterior")   # as score.ATTRIBUTION
    results = analyze_tables(table, links, config=AnalysisConfig(attribution=attribution))
    try:
        from diag.analysis.network import corroborate
    except ImportError:
        return results
    return corroborate(results)


def evaluate(links=None, fit=None, base: Path = DATA) -> dict:
    """Per-link counts (and the total) for the chosen links (cml ids as str or int; default all 15)."""
    data = load(base)
    chosen = [str(x) for x in (links or list(data))]
    per_link: dict[str, Count] = {}
    if fit is None:
        results = _analyse_network(_network_table(data), [d[1] for d in data.values()])
        by_id = {r.link.link_id: r for r in results}
        for k in chosen:
            per_link[k] = count_link(data[k], by_id[k])
    else:
        for k in chosen:
            training = {o: v for o, v in data.items() if o != k}
            analyse = fit(training)
            results = analyse(_network_table(data), [d[1] for d in data.values()])
            by_id = {r.link.link_id: r for r in results}
            per_link[k] = count_link(data[k], by_id[k])
    total = Count()
    for c in per_link.values():
        total.add(c)
    return {"per_link": per_link, "total": total, "meta": {k: data[k][3] for k in chosen}}


def _pct(a: int, b: int) -> str:
    return f"{100 * a / b:6.1f}%" if b else "     -"


def report(res: dict) -> str:
    lines = ["== OpenRainER (real links, CC BY 4.0, Lepida ScpA / ARPAE-SIMC via OpenRainER): faded minutes ==",
             f"{'link':<6}{'km':>7}{'wet faded':>10}{'rain':>8}{'thumb':>8}{'dry faded':>10}{'rain':>8}{'thumb':>8}"]
    for k, c in res["per_link"].items():
        km = float(res["meta"][k]["length_km"])
        lines.append(f"{k:<6}{km:7.2f}{c.wet_faded:10d}{_pct(c.wet_rain, c.wet_faded):>8}"
                     f"{_pct(c.wet_thumb, c.wet_faded):>8}{c.dry_faded:10d}{_pct(c.dry_rain, c.dry_faded):>8}"
                     f"{_pct(c.dry_thumb, c.dry_faded):>8}")
    c = res["total"]
    lines.append(f"{'total':<13}{c.wet_faded:10d}{_pct(c.wet_rain, c.wet_faded):>8}{_pct(c.wet_thumb, c.wet_faded):>8}"
                 f"{c.dry_faded:10d}{_pct(c.dry_rain, c.dry_faded):>8}{_pct(c.dry_thumb, c.dry_faded):>8}")
    lines.append("targets: wet faded minutes called rain >= 90 %, dry faded minutes called rain <= 5 %")
    return "\n".join(lines)


def main() -> int:
    print(report(evaluate()))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
