"""Rain-gauge CSV reader and the gauge check of rain verdicts (diag.read.gauge).

Conventions checked here are the module's documented ones (common practice: accumulation time labels mark the END
of the interval, as in the OpenRainER gauge data, see tests/data/openrainer/README.md); no outside numbers needed
beyond unit arithmetic (mm per 15 min x 4 = mm/h).
"""
import gzip

import pandas as pd
import pytest

from diag.errors import InputError
from diag.read.gauge import check_rain_verdicts, gauge_rain_over, read_gauge, summarise_gauge_check


def test_rate_column_end_labels(tmp_path):
    path = tmp_path / "rain.csv"
    path.write_text("time_utc,rain_mmh\n2026-06-01T10:15:00Z,4.0\n2026-06-01T10:30:00Z,0\n")
    g = read_gauge(path)
    assert g.attrs["report"]["read_as"] == "rate_mmh" and g.attrs["report"]["label"] == "end"
    assert g["start_utc"].iloc[0] == pd.Timestamp("2026-06-01T10:00:00Z")
    assert g["end_utc"].iloc[0] == pd.Timestamp("2026-06-01T10:15:00Z")
    assert g["rain_mmh"].tolist() == [4.0, 0.0]


def test_amount_column_start_labels_semicolon_local_time():
    text = "Date;rain_mm\n2026-06-01 12:00;1,5\n2026-06-01 12:15;0,5\n2026-06-01 12:30;\n"
    g = read_gauge(text.encode(), name="station.csv", tz="Europe/Rome", label="start")
    # 1.5 mm in 15 min = 6 mm/h; 12:00 local (CEST, UTC+2) = 10:00 UTC; label marks the START
    assert g["rain_mmh"].iloc[0] == pytest.approx(6.0)
    assert g["start_utc"].iloc[0] == pd.Timestamp("2026-06-01T10:00:00Z")
    assert g["end_utc"].iloc[0] == pd.Timestamp("2026-06-01T10:15:00Z")
    assert g.attrs["report"]["rows_without_value"] == 1 and g["rain_mmh"].isna().sum() == 1


def test_gzip_bytes_and_explicit_column_units():
    body = "time,G1,G2\n2026-06-01T00:15:00Z,0.2,1.0\n2026-06-01T00:30:00Z,0.0,0.0\n"
    g = read_gauge(gzip.compress(body.encode()), name="g.csv.gz", column="G2", units="mm")
    assert g["rain_mmh"].iloc[0] == pytest.approx(4.0)


@pytest.mark.parametrize("body, fragment", [
    ("", "empty"),
    ("when,rain\n1,2\n", "no time column"),
    ("time,a,b\n2026-06-01T00:00Z,1,2\n", "which column"),
    ("time,rain_mmh\nyesterday,1\n2026-06-01T00:15Z,0\n", "unreadable time"),
    ("time,rain_mmh\n2026-06-01T00:00Z,-1\n2026-06-01T00:15Z,0\n", "negative"),
    ("time,rain_mmh\n", "no rows"),
])
def test_bad_gauge_files_are_one_line_input_errors(tmp_path, body, fragment):
    path = tmp_path / "bad.csv"
    path.write_text(body)
    with pytest.raises(InputError, match=fragment) as info:
        read_gauge(path)
    assert "\n" not in info.value.one_line() and "bad.csv" in info.value.one_line()


def test_missing_file_is_input_error(tmp_path):
    with pytest.raises(InputError, match="cannot read"):
        read_gauge(tmp_path / "nope.csv")


def _gauge():
    text = ("time_utc,rain_mmh\n" + "\n".join(
        f"2026-06-01T{h:02d}:{m:02d}:00Z,{v}" for h, m, v in
        [(10, 15, 0), (10, 30, 8.0), (10, 45, 2.0), (11, 0, 0), (11, 15, 0), (11, 30, 0), (11, 45, 0),
         (12, 0, 0), (12, 15, 0.4), (12, 30, 0), (12, 45, 0), (13, 0, 0)]) + "\n")
    return read_gauge(text.encode(), name="g.csv")


def test_rain_over_window_totals():
    got = gauge_rain_over(_gauge(), pd.Timestamp("2026-06-01T10:15Z"), pd.Timestamp("2026-06-01T10:45Z"))
    assert got["rain_mm"] == pytest.approx(8.0 * 0.25 + 2.0 * 0.25)   # mm/h x hours
    assert got["peak_mmh"] == 8.0 and got["coverage"] == 1.0


def test_verdicts():
    events = pd.DataFrame({
        "start_utc": pd.to_datetime(["2026-06-01T10:20Z", "2026-06-01T11:30Z", "2026-06-01T12:00Z",
                                     "2026-06-01T10:20Z", "2026-06-01T11:30Z", "2026-06-02T05:00Z"], utc=True),
        "end_utc": pd.to_datetime(["2026-06-01T10:40Z", "2026-06-01T11:35Z", "2026-06-01T12:15Z",
                                   "2026-06-01T10:40Z", "2026-06-01T11:35Z", "2026-06-02T05:10Z"], utc=True),
        "cause": ["rain", "rain", "rain", "multipath", "multipath", "rain"]})
    checked = check_rain_verdicts(events, _gauge(), margin_s=0)
    assert checked["gauge_verdict"].tolist() == ["confirmed", "refuted", "unclear", "gauge saw rain",
                                                 "consistent", "no gauge data"]
    summary = summarise_gauge_check(checked, events)
    assert summary["rain_events"] == {"confirmed": 1, "refuted": 1, "unclear": 1, "no gauge data": 1}
    assert list(checked.index) == list(events.index)
