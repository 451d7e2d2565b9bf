"""Convert the raw OpenRainER 8-day NetCDF files into the CSV layout that realdata.py reads, for ALL usable links.

NEEDS h5py (not a dependency of the project: install it into a throw-away virtual environment with h5py, numpy and
pandas, and run this script with that environment's python).  Without h5py it stops with a one-line message.

Data (not ours; CC BY 4.0, https://creativecommons.org/licenses/by/4.0/): Covi, E., Roversi, G., et al.: OpenRainER
(version 1.1), Zenodo, https://doi.org/10.5281/zenodo.10593848; CML data source Lepida ScpA, Bologna; gauges
ARPAE-SIMC, Bologna; cropped 8-day example by C. Chwala, OpenSenseAction/opensense_example_data
(docs/references.md §10).  The raw files sit beside the checkout in the real-data folder (openrainer/raw); the
output goes to openrainer/csv_all there, never into the repository.

    python bench/validation/openrainer_convert.py [--root DIR] [--out DIR] [--check-against DIR]

Rules (what is changed, nothing else is):

- ``rsl``/``tsl`` are int16 with ``_FillValue`` -999 and ``scale_factor`` 0.1 (read from the variables' attributes,
  not assumed): a stored -999 becomes empty (NaN), every other value is ``stored * 0.1`` rounded to 0.1 dB.
- one file per sub-link, ``links/openrainer_<cml>_<channel>.csv`` with ``time_utc`` (ISO 8601, ``Z``), ``rsl_dbm``,
  ``tsl_dbm``; every time stamp of the file is one row (the 108 minutes missing on 18 Aug stay missing rows);
  whole window 2022-08-14T00:00Z .. 2022-08-21T23:59Z.  A sub-link whose RSL is NaN at every time stamp is skipped
  and counted (printed).
- ``frequency`` is MHz in the file (no units attribute): written /1000 as GHz; ``length`` m -> km.
- nearest gauge: the gauge with >= 90 % non-missing 15-min values in the window that is nearest to the path midpoint
  (mean of the two sites' latitude and longitude), great-circle distance on a sphere of radius 6371.0 km.
- gauges: ``gauges_all_15min_mm.csv`` (every gauge, wide, ``time_utc_end_of_interval``: a gauge stamp marks the END
  of its 15-min interval), ``gauges_nearest_15min_mm.csv`` (the nearest gauges only) and ``gauges_metadata.csv``
  (gauge_id, lat, lon, elevation_m, and the fraction of values present); gauge values are rounded to 0.001 mm
  (the file holds float32 noise such as 8.60000038 for 8.6 mm).

``--check-against DIR`` (default: the 15-link ``csv`` folder when present) compares the overlap: the same values,
row by row, for every sub-link in both, inside that folder's window, and the metadata columns.
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
import pandas as pd

REPO = Path(__file__).resolve().parents[2]
# the real-data folder beside the checkout (for a worktree deeper down: beside the first parent that has one)
_PLACE = Path("shared", "realdata", "openrainer")
ROOT = next((p / _PLACE for p in REPO.parents if (p / _PLACE).is_dir()), REPO.parent / _PLACE)
CML_FILE = "openrainer_cml_8d.nc"
GAUGE_FILE = "openrainer_gauges_8d.nc"
GAUGE_MIN_PRESENT = 0.90
EARTH_RADIUS_KM = 6371.0
META_COLUMNS = ["dataset", "cml_id", "sublink_id", "file", "frequency_ghz", "polarization", "length_km",
                "site_0_lat", "site_0_lon", "site_1_lat", "site_1_lon", "site_0_elev_m", "site_1_elev_m",
                "nearest_gauge_id", "nearest_gauge_dist_km", "n_rows", "rsl_nan_fraction", "rsl_min_dbm",
                "rsl_median_dbm", "rsl_max_dbm", "tsl_n_distinct", "tsl_nan_fraction"]


def _text(values) -> list[str]:
    return [v.decode() if isinstance(v, bytes) else str(v) for v in values]


def _decode(var) -> np.ndarray:
    """A packed NetCDF variable as float: _FillValue -> NaN, then scale_factor / add_offset from its attributes."""
    raw = var[...]
    out = raw.astype(float)
    fill = var.attrs.get("_FillValue")
    if fill is not None:
        out[raw == np.asarray(fill).ravel()[0]] = np.nan
    scale = var.attrs.get("scale_factor")
    if scale is not None:
        out *= float(np.asarray(scale).ravel()[0])
    offset = var.attrs.get("add_offset")
    if offset is not None:
        out += float(np.asarray(offset).ravel()[0])
    return out


def _times(var) -> pd.DatetimeIndex:
    units = var.attrs["units"]
    units = units.decode() if isinstance(units, bytes) else str(units)
    if not units.startswith("seconds since 1970-01-01"):
        raise SystemExit(f"error: unexpected time units {units!r}")
    return pd.to_datetime(var[...].astype(np.int64), unit="s", utc=True)


def great_circle_km(lat1, lon1, lat2, lon2) -> np.ndarray:
    """Haversine distance on a sphere of radius 6371.0 km (the mean Earth radius); degrees in, km out."""
    p1, p2 = np.radians(lat1), np.radians(lat2)
    dp, dl = p2 - p1, np.radians(np.asarray(lon2) - np.asarray(lon1))
    a = np.sin(dp / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dl / 2) ** 2
    return 2 * EARTH_RADIUS_KM * np.arcsin(np.sqrt(a))


def _fmt(values: np.ndarray) -> list[str]:
    """0.1-dB values as short text (-48.2, -49, empty for NaN)."""
    out = []
    for v in np.round(values, 1):
        if np.isnan(v):
            out.append("")
        else:
            s = f"{v:.1f}"
            out.append(s[:-2] if s.endswith(".0") else s)
    return out


def _num(v: float) -> float | int:
    v = round(float(v), 1)
    return int(v) if v == int(v) else v


def read_raw(root: Path) -> tuple[dict, dict]:
    try:
        import h5py
    except ImportError:
        raise SystemExit("error: this converter needs h5py (not a project dependency); "
                         "run it with a python that has h5py, numpy and pandas") from None
    with h5py.File(root / "raw" / CML_FILE, "r") as f:
        cml = {"cml_id": _text(f["cml_id"][...]), "sublink_id": _text(f["sublink_id"][...]),
               "time": _times(f["time"]), "rsl": _decode(f["rsl"]), "tsl": _decode(f["tsl"]),
               "frequency_mhz": f["frequency"][...], "length_m": f["length"][...],
               "polarization": np.array([_text(row) for row in f["polarization"][...]])}
        for k in ("site_0_lat", "site_0_lon", "site_1_lat", "site_1_lon", "site_0_elev", "site_1_elev"):
            cml[k] = f[k][...]
        for k in ("frequency", "length"):   # the float variables carry a NaN fill only
            fill = f[k].attrs.get("_FillValue")
            if fill is not None and not np.isnan(np.asarray(fill).ravel()[0]):
                raise SystemExit(f"error: {k} has a non-NaN fill value; not handled")
    with h5py.File(root / "raw" / GAUGE_FILE, "r") as f:
        gauges = {"id": _text(f["id"][...]), "time": _times(f["time"]), "mm": _decode(f["rainfall_amount"]),
                  "lat": f["lat"][...], "lon": f["lon"][...], "elevation": f["elevation"][...]}
    return cml, gauges


def convert(root: Path, out: Path) -> dict:
    cml, gauges = read_raw(root)
    (out / "links").mkdir(parents=True, exist_ok=True)
    gt = gauges["time"]
    gmm = pd.DataFrame(gauges["mm"].T, index=gt, columns=gauges["id"])
    present = gmm.notna().mean()
    gmeta = pd.DataFrame({"gauge_id": gauges["id"], "lat": gauges["lat"], "lon": gauges["lon"],
                          "elevation_m": gauges["elevation"], "present_fraction": present.to_numpy().round(4)})
    usable = present >= GAUGE_MIN_PRESENT
    glat, glon = gauges["lat"][usable.to_numpy()], gauges["lon"][usable.to_numpy()]
    gids = np.array(gauges["id"])[usable.to_numpy()]
    times = cml["time"]
    stamp = times.strftime("%Y-%m-%dT%H:%M:%SZ")
    rows, skipped = [], []
    for i, cid in enumerate(cml["cml_id"]):
        mid_lat = (cml["site_0_lat"][i] + cml["site_1_lat"][i]) / 2
        mid_lon = (cml["site_0_lon"][i] + cml["site_1_lon"][i]) / 2
        d = great_circle_km(mid_lat, mid_lon, glat, glon)
        j = int(np.argmin(d))
        for k, ch in enumerate(cml["sublink_id"]):
            rsl, tsl = cml["rsl"][i, k], cml["tsl"][i, k]
            if np.isnan(rsl).all():
                skipped.append((cid, ch, bool(np.isnan(tsl).all())))
                continue
            name = f"links/openrainer_{cid}_{ch}.csv"
            pd.DataFrame({"time_utc": stamp, "rsl_dbm": _fmt(rsl), "tsl_dbm": _fmt(tsl)}).to_csv(
                out / name, index=False)
            rows.append({
                "dataset": "openrainer", "cml_id": cid, "sublink_id": ch, "file": name,
                "frequency_ghz": cml["frequency_mhz"][i, k] / 1000.0, "polarization": cml["polarization"][i, k],
                "length_km": round(cml["length_m"][i] / 1000.0, 3),
                "site_0_lat": cml["site_0_lat"][i], "site_0_lon": cml["site_0_lon"][i],
                "site_1_lat": cml["site_1_lat"][i], "site_1_lon": cml["site_1_lon"][i],
                "site_0_elev_m": cml["site_0_elev"][i], "site_1_elev_m": cml["site_1_elev"][i],
                "nearest_gauge_id": gids[j], "nearest_gauge_dist_km": round(float(d[j]), 2),
                "n_rows": int(rsl.size), "rsl_nan_fraction": round(float(np.isnan(rsl).mean()), 4),
                "rsl_min_dbm": _num(np.nanmin(rsl)), "rsl_median_dbm": _num(np.nanmedian(rsl)),
                "rsl_max_dbm": _num(np.nanmax(rsl)),
                "tsl_n_distinct": int(pd.Series(np.round(tsl, 1)).nunique()),
                "tsl_nan_fraction": round(float(np.isnan(tsl).mean()), 4)})
    meta = pd.DataFrame(rows, columns=META_COLUMNS)
    meta.to_csv(out / "links_metadata.csv", index=False)
    gmeta.to_csv(out / "gauges_metadata.csv", index=False)
    for fname, cols in (("gauges_all_15min_mm.csv", list(gmm.columns)),
                        ("gauges_nearest_15min_mm.csv", sorted(set(meta["nearest_gauge_id"])))):
        wide = gmm[cols].round(3)   # the file holds float32 noise (8.60000038 for 8.6 mm)
        wide.insert(0, "time_utc_end_of_interval", gt.strftime("%Y-%m-%dT%H:%M:%SZ"))
        wide.to_csv(out / fname, index=False)
    return {"meta": meta, "skipped": skipped, "n_links": len(cml["cml_id"]), "times": times,
            "gauges_usable": int(usable.sum()), "gauges": len(gauges["id"]),
            "gauges_all_nan": int((present == 0).sum())}


def check_against(out: Path, ref: Path) -> list[str]:
    """Compare the converted files with an earlier subset (ref) over ref's window; returns the mismatches."""
    bad = []
    rmeta = pd.read_csv(ref / "links_metadata.csv", dtype={"cml_id": str})
    ometa = pd.read_csv(out / "links_metadata.csv", dtype={"cml_id": str}).set_index(["cml_id", "sublink_id"])
    n_values = 0
    for _, r in rmeta.iterrows():
        key = (r["cml_id"], r["sublink_id"])
        if key not in ometa.index:
            bad.append(f"{key}: missing in the conversion")
            continue
        o = ometa.loc[key]
        for col in ("frequency_ghz", "length_km", "site_0_lat", "site_0_lon", "site_1_lat", "site_1_lon",
                    "site_0_elev_m", "site_1_elev_m"):
            if abs(float(o[col]) - float(r[col])) > 6e-4:
                bad.append(f"{key}: {col} {o[col]} vs {r[col]}")
        if o["polarization"] != r["polarization"]:
            bad.append(f"{key}: polarization {o['polarization']} vs {r['polarization']}")
        a = pd.read_csv(ref / r["file"])
        b = pd.read_csv(out / o["file"])
        b = b[b["time_utc"].isin(set(a["time_utc"]))].reset_index(drop=True)
        if len(a) != len(b) or not (a["time_utc"] == b["time_utc"]).all():
            bad.append(f"{key}: time stamps differ ({len(a)} vs {len(b)} rows)")
            continue
        for col in ("rsl_dbm", "tsl_dbm"):
            x, y = a[col].to_numpy(float), b[col].to_numpy(float)
            same = (np.isnan(x) & np.isnan(y)) | (np.abs(x - y) < 1e-9)
            n_values += x.size
            if not same.all():
                bad.append(f"{key}: {col} differs in {int((~same).sum())} rows")
    rg = pd.read_csv(ref / "gauges_nearest_15min_mm.csv")
    og = pd.read_csv(out / "gauges_all_15min_mm.csv")
    og = og[og["time_utc_end_of_interval"].isin(set(rg["time_utc_end_of_interval"]))].reset_index(drop=True)
    for col in rg.columns[1:]:
        x, y = rg[col].to_numpy(float), og[col].to_numpy(float)
        if x.size != y.size or not ((np.isnan(x) & np.isnan(y)) | (np.abs(x - y) < 1e-9)).all():
            bad.append(f"gauge {col} differs")
    print(f"check against {ref.name}/: {len(rmeta)} sub-links, {n_values} RSL/TSL values and "
          f"{len(rg.columns) - 1} gauges x {len(rg)} intervals compared, {len(bad)} mismatches")
    return bad


def nearest_gauge_changes(out: Path, ref: Path) -> list[str]:
    """Sub-links whose nearest gauge differs from ref's (its >= 90 % rule ran over a shorter window)."""
    rmeta = pd.read_csv(ref / "links_metadata.csv", dtype={"cml_id": str})
    ometa = pd.read_csv(out / "links_metadata.csv", dtype={"cml_id": str}).set_index(["cml_id", "sublink_id"])
    notes = []
    for _, r in rmeta.iterrows():
        o = ometa.loc[(r["cml_id"], r["sublink_id"])]
        if o["nearest_gauge_id"] != r["nearest_gauge_id"] or abs(o["nearest_gauge_dist_km"]
                                                                  - r["nearest_gauge_dist_km"]) > 0.011:
            notes.append(f"{r['cml_id']} {r['sublink_id']}: {o['nearest_gauge_id']} {o['nearest_gauge_dist_km']} km "
                         f"(csv: {r['nearest_gauge_id']} {r['nearest_gauge_dist_km']} km)")
    return notes


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description="raw OpenRainER NetCDF -> per-sub-link CSV (all links); needs h5py")
    ap.add_argument("--root", default=str(ROOT), help="the openrainer folder holding raw/ (default: beside the repo)")
    ap.add_argument("--out", default=None, help="output folder (default ROOT/csv_all)")
    ap.add_argument("--check-against", default=None, help="earlier subset to compare with (default ROOT/csv)")
    args = ap.parse_args(argv)
    try:
        import h5py  # noqa: F401
    except ImportError:
        print("error: this converter needs h5py (not a project dependency); "
              "run it with a python that has h5py, numpy and pandas", file=sys.stderr)
        return 2
    root = Path(args.root)
    out = Path(args.out) if args.out else root / "csv_all"
    for name in (CML_FILE, GAUGE_FILE):
        if not (root / "raw" / name).is_file():
            print(f"error: {root / 'raw' / name} not found", file=sys.stderr)
            return 2
    res = convert(root, out)
    meta = res["meta"]
    both_nan = sum(1 for s in res["skipped"] if s[2])
    print(f"{res['n_links']} links x 2 sub-links; written {len(meta)} sub-links of {meta['cml_id'].nunique()} links "
          f"({res['times'].size} rows each, {res['times'][0]:%Y-%m-%dT%H:%MZ} .. {res['times'][-1]:%Y-%m-%dT%H:%MZ})")
    print(f"skipped {len(res['skipped'])} sub-links whose RSL is NaN throughout ({both_nan} of them TSL too): "
          + ", ".join(f"{c} {ch}" for c, ch, _ in res["skipped"]))
    print(f"gauges: {res['gauges']} ({res['gauges_all_nan']} entirely NaN), {res['gauges_usable']} with >= 90 % data;"
          f" nearest-gauge distance median {meta['nearest_gauge_dist_km'].median():.2f} km, "
          f"max {meta['nearest_gauge_dist_km'].max():.2f} km")
    ref = Path(args.check_against) if args.check_against else root / "csv"
    if (ref / "links_metadata.csv").is_file():
        bad = check_against(out, ref)
        for line in bad[:20]:
            print("  MISMATCH " + line)
        for line in nearest_gauge_changes(out, ref):
            print("  nearest gauge over the 8-day window differs: " + line)
        if bad:
            return 1
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
