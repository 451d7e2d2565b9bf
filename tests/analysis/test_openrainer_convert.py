"""The all-links OpenRainER conversion (bench/validation/openrainer_convert.py) against the 15-link subset.

Outside source: the OpenRainER 8-day example (CC BY 4.0; docs/references.md §10).  The 15-link ``csv`` folder was
made earlier with xarray/pandas from the same raw NetCDF files; ``csv_all`` is made from them with h5py by our
converter.  Over the subset's window (14-19 Aug 2022) both must hold the same RSL/TSL values row by row, the same
link metadata, and the same gauge accumulations.  Both folders live beside the checkout, outside the repository:
the test skips when either is absent (as in CI).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

_PLACE = Path("shared", "realdata", "openrainer")
_REPO = Path(__file__).resolve().parents[2]
ROOT = next((p / _PLACE for p in _REPO.parents if (p / _PLACE).is_dir()), _REPO.parent / _PLACE)
SUBSET, ALL = ROOT / "csv", ROOT / "csv_all"

pytestmark = [pytest.mark.slow,   # reads 60 files of 8532-11412 rows (about 5 s)
              pytest.mark.skipif(not (SUBSET / "links_metadata.csv").is_file()
                                 or not (ALL / "links_metadata.csv").is_file(),
                                 reason="OpenRainER csv/ and csv_all/ folders not present beside the checkout")]


def _same(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    return (np.isnan(x) & np.isnan(y)) | (np.abs(x - y) < 1e-9)


def test_every_subset_sublink_has_the_same_values_in_the_conversion():
    sub = pd.read_csv(SUBSET / "links_metadata.csv", dtype={"cml_id": str})
    conv = pd.read_csv(ALL / "links_metadata.csv", dtype={"cml_id": str}).set_index(["cml_id", "sublink_id"])
    compared = 0
    for _, r in sub.iterrows():
        o = conv.loc[(r["cml_id"], r["sublink_id"])]
        for col in ("frequency_ghz", "length_km", "site_0_lat", "site_0_lon", "site_1_lat", "site_1_lon",
                    "site_0_elev_m", "site_1_elev_m", "nearest_gauge_dist_km"):
            assert abs(float(o[col]) - float(r[col])) <= 0.011, (r["cml_id"], r["sublink_id"], col)
        assert o["polarization"] == r["polarization"]
        assert o["nearest_gauge_id"] == r["nearest_gauge_id"]
        a = pd.read_csv(SUBSET / r["file"])
        b = pd.read_csv(ALL / o["file"])
        b = b[b["time_utc"].isin(set(a["time_utc"]))].reset_index(drop=True)
        assert list(a["time_utc"]) == list(b["time_utc"])
        for col in ("rsl_dbm", "tsl_dbm"):
            assert _same(a[col].to_numpy(float), b[col].to_numpy(float)).all(), (r["file"], col)
            compared += len(a)
    assert compared == 2 * sub.shape[0] * 8532   # 30 sub-links x 8532 rows (the 108-min hole stays missing)


def test_the_nearest_gauges_have_the_same_accumulations():
    sub = pd.read_csv(SUBSET / "gauges_nearest_15min_mm.csv")
    conv = pd.read_csv(ALL / "gauges_all_15min_mm.csv")
    conv = conv[conv["time_utc_end_of_interval"].isin(set(sub["time_utc_end_of_interval"]))].reset_index(drop=True)
    assert list(sub["time_utc_end_of_interval"]) == list(conv["time_utc_end_of_interval"])
    for col in sub.columns[1:]:
        assert _same(sub[col].to_numpy(float), conv[col].to_numpy(float)).all(), col
    assert sub.iloc[:, 1:].to_numpy(float).sum() > 0    # some rain in the window, so the comparison can fail


def test_conversion_units_and_layout():
    conv = pd.read_csv(ALL / "links_metadata.csv")
    gauges = pd.read_csv(ALL / "gauges_metadata.csv")
    # the data set's notes: 24552-25606 MHz, 155 m - 25.2 km, 319 gauges (PROVENANCE of the subset)
    assert conv["frequency_ghz"].between(24.552, 25.606).all()
    assert conv["length_km"].min() >= 0.15 and conv["length_km"].max() <= 25.3
    assert len(gauges) == 319 and {"lat", "lon", "elevation_m"} <= set(gauges.columns)
    assert all((ALL / f).is_file() for f in conv["file"])
