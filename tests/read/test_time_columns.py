"""Separate date and time-of-day columns when the date is written ISO 8601 (``2030-07-12`` + ``16:15:00``).

Before: the ISO date column matched the date-and-time pattern on its own, the clock column was ignored, and a
15-min log read as one row a day, with every other row dropped as a repeated time (exit 0, only a warning).  The
reading expected here is the calendar arithmetic of ISO 8601 (date + time of day), no other source needed."""
from __future__ import annotations

import pandas as pd

from diag import schema as S
from diag.read.ingest import read_log


def _log(rows: int) -> str:
    t = pd.date_range("2030-07-12T16:00Z", periods=rows, freq="15min")
    body = "\n".join(f"{s.strftime('%Y-%m-%d')},{s.strftime('%H:%M:%S')},L1,{-40.0 - (i % 7) / 10:.1f}"
                     for i, s in enumerate(t))
    return "Date,Time (UTC),Link,RxLevel\n" + body + "\n"


def test_iso_date_and_clock_columns_are_joined(tmp_path):
    path = tmp_path / "split.csv"
    path.write_text(_log(382))
    res = read_log(path)
    rep = res.report
    assert rep.rows_read == rep.rows_kept == 382
    assert rep.interval_s == 900.0
    assert list(rep.time["columns"]) == ["Date", "Time (UTC)"]
    times = pd.DatetimeIndex(res.table[S.TIME].unique())
    assert times.min() == pd.Timestamp("2030-07-12T16:00Z")
    assert times.max() == pd.Timestamp("2030-07-12T16:00Z") + pd.Timedelta(minutes=15 * 381)


def test_iso_dates_alone_still_read_as_days(tmp_path):
    path = tmp_path / "daily.csv"
    path.write_text("Date,Link,RxLevel\n" + "\n".join(f"2030-07-{d:02d},L1,-40.0" for d in range(1, 21)) + "\n")
    rep = read_log(path).report
    assert rep.rows_read == rep.rows_kept == 20
    assert rep.interval_s == 86400.0
