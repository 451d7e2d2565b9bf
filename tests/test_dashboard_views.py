"""diag.views: the tables the dashboard draws, checked against the results they come from.

These functions compute nothing new; the checks are conservation (nothing invented or lost when thinning a series,
seconds -> minutes, every event counted once) and the clipping arithmetic.  Where a fact of the trade is used it
is marked "common practice".
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from diag import schema, views
from diag.links import Link
from diag.results import ChannelSeries, LinkResult, OutageResult

LINK = Link("HOP-1", frequency_ghz=18.0, length_km=12.0, polarization="V", threshold_dbm=-70.0)
T0 = pd.Timestamp("2026-03-02 00:00:00", tz="UTC")


def _series(levels, *, interval_s=1.0, status=None, stats=False) -> ChannelSeries:
    levels = np.asarray(levels, dtype=float)
    index = pd.date_range(T0, periods=len(levels), freq=pd.Timedelta(seconds=interval_s), name="time_utc")
    frame = pd.DataFrame({"rsl_dbm": levels, "reference_dbm": -40.0, "attenuation_db": -40.0 - levels,
                          "event_id": -1, "cause": ""}, index=index)
    frame["status"] = status if status is not None else np.where(np.isnan(levels), "no_data", "ok")
    if stats:
        frame["rsl_min_dbm"] = levels - 3.0
        frame["rsl_max_dbm"] = levels + 1.0
    return ChannelSeries("HOP-1", "V", interval_s, "stats" if stats else "sample", frame)


def _events(rows) -> pd.DataFrame:
    frame = pd.DataFrame(rows, columns=["start_utc", "end_utc", "cause", "peak_fade_db"])
    frame["start_utc"] = pd.to_datetime(frame["start_utc"], utc=True)
    frame["end_utc"] = pd.to_datetime(frame["end_utc"], utc=True)
    frame["duration_s"] = (frame["end_utc"] - frame["start_utc"]).dt.total_seconds()
    frame["link_id"], frame["channel"], frame["confidence"], frame["evidence"] = "HOP-1", "V", 0.8, "test"
    return frame[schema.EVENT_COLUMNS]


def _result(events=None, by_cause=None, summary=None, findings=None) -> LinkResult:
    outage = None
    if by_cause is not None or summary is not None:
        outage = OutageResult(summary=summary or {}, by_cause=by_cause if by_cause is not None
                              else pd.DataFrame(columns=schema.OUTAGE_BY_CAUSE_COLUMNS), per_channel=pd.DataFrame())
    return LinkResult(link=LINK, series={"V": _series([-40.0] * 10)},
                      events=events if events is not None else _events([]), findings=findings or [], outage=outage)


# --- timeline thinning --------------------------------------------------------------------------------------------
def test_timeline_keeps_every_point_when_small():
    series = _series([-40, -41, -60, -42])
    out = views.timeline(series, max_points=10)
    assert list(out.columns) == views.TIMELINE_COLUMNS
    assert out["level_dbm"].tolist() == [-40, -41, -60, -42]
    assert out["time_utc"].iloc[2] == T0 + pd.Timedelta(seconds=2)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.one_of(st.floats(-95, -30), st.just(float("nan"))), min_size=1, max_size=400),
       st.integers(1, 60))
def test_timeline_thinning_never_hides_the_deepest_fade(levels, max_points):
    # Conservation: the lowest and highest plotted values are the lowest and highest logged values, whatever the
    # thinning (a thinned chart that hid the deepest fade would mislead the engineer).
    series = _series(levels)
    out = views.timeline(series, max_points=max_points)
    assert len(out) <= max_points
    finite = np.asarray(levels)[~np.isnan(levels)]
    if finite.size:
        assert out["level_min_dbm"].min() == pytest.approx(finite.min())
        assert out["level_max_dbm"].max() == pytest.approx(finite.max())
    else:
        assert out["level_dbm"].isna().all()
    assert out["time_utc"].is_monotonic_increasing
    assert out["time_utc"].iloc[0] == T0


def test_timeline_uses_logged_interval_extremes_and_marks_signal_loss():
    # 15-min statistics: the band shows the logged min/max, not the average's extremes.
    levels = [-40.0, -45.0, np.nan, -41.0]
    status = ["ok", "ok", "signal_lost", "ok"]
    series = _series(levels, interval_s=900.0, status=status, stats=True)
    out = views.timeline(series, max_points=2)
    assert len(out) == 2
    assert out["level_min_dbm"].tolist() == [-48.0, -44.0]
    assert out["level_max_dbm"].tolist() == [-39.0, -40.0]
    assert out["signal_lost"].tolist() == [False, True]
    assert out["level_dbm"].iloc[1] == pytest.approx(-41.0)


def test_timeline_window():
    series = _series(np.arange(100, dtype=float) * -0.1 - 40)
    out = views.timeline(series, start=T0 + pd.Timedelta(seconds=10), end=T0 + pd.Timedelta(seconds=19))
    assert len(out) == 10
    assert out["time_utc"].iloc[0] == T0 + pd.Timedelta(seconds=10)
    empty = views.timeline(series, start=T0 + pd.Timedelta(days=1))
    assert len(empty) == 0 and list(empty.columns) == views.TIMELINE_COLUMNS
    with pytest.raises(ValueError, match="max_points"):
        views.timeline(series, max_points=0)


# --- event spans and table ----------------------------------------------------------------------------------------
def test_event_spans_clip_to_window_and_label_causes():
    events = _events([
        ("2026-03-02 00:00:00", "2026-03-02 00:10:00", "rain", 25.0),
        ("2026-03-02 01:00:00", "2026-03-02 01:00:05", "multipath", 18.0),
        ("2026-03-02 05:00:00", "2026-03-02 06:00:00", "level_shift", 6.0),
    ])
    out = views.event_spans(events, start=T0 + pd.Timedelta(minutes=5), end=T0 + pd.Timedelta(hours=2))
    assert out["cause"].tolist() == ["rain", "multipath"]
    assert out["start_utc"].iloc[0] == T0 + pd.Timedelta(minutes=5)          # clipped
    assert out["cause_label"].tolist() == ["Rain", "Multipath (clear air)"]
    longest = views.event_spans(events, max_spans=1)
    assert longest["cause"].tolist() == ["level_shift"]
    assert len(views.event_spans(events, channel="H")) == 0


def test_event_table_filters_by_cause_and_depth():
    events = _events([
        ("2026-03-02 00:00:00", "2026-03-02 00:10:00", "rain", 25.0),
        ("2026-03-02 01:00:00", "2026-03-02 01:00:05", "multipath", 18.0),
        ("2026-03-02 02:00:00", "2026-03-02 02:00:09", "multipath", 4.0),
    ])
    assert len(views.event_table(events)) == 3
    only = views.event_table(events, causes=["multipath"], min_peak_fade_db=10.0)
    assert only["Peak fade dB"].tolist() == [18.0]
    assert only["Cause"].tolist() == ["Multipath (clear air)"]
    assert list(only.columns) == views.EVENT_TABLE_COLUMNS
    assert len(views.event_table(events.iloc[:0])) == 0


def test_fades_by_hour_counts_every_event_once():
    events = _events([
        ("2026-03-02 05:10:00", "2026-03-02 05:11:00", "multipath", 20.0),
        ("2026-03-02 05:50:00", "2026-03-02 05:51:00", "multipath", 20.0),
        ("2026-03-03 05:20:00", "2026-03-03 05:21:00", "multipath", 20.0),
        ("2026-03-02 15:00:00", "2026-03-02 16:00:00", "rain", 30.0),
    ])
    out = views.fades_by_hour(events)
    assert out["events"].sum() == len(events)
    assert set(out["hour"]) == set(range(24))
    assert out[(out.hour == 5) & (out.cause == "multipath")]["events"].item() == 3
    shifted = views.fades_by_hour(events, utc_offset_h=2)
    assert shifted[(shifted.hour == 17) & (shifted.cause == "rain")]["events"].item() == 1


# --- overview -------------------------------------------------------------------------------------------------------
BY_CAUSE = pd.DataFrame({"link_id": "HOP-1", "cause": ["rain", "multipath", "refractive"], "events": [3, 40, 0],
                         "below_threshold_s": [1800.0, 600.0, 0.0], "unavailable_s": [1500.0, 0.0, 0.0]})
SUMMARY = {"link_id": "HOP-1", "period_start_utc": "2026-03-02T00:00:00Z", "period_end_utc": "2026-03-09T00:00:00Z",
           "observed_s": 600000.0, "no_data_s": 4800.0, "below_threshold_s": 2400.0, "unavailable_s": 1500.0,
           "ses_available_s": 30.0, "availability_pct": 99.75, "objective_pct": 99.99, "meets_objective": False}


def test_outage_minutes_by_cause_converts_seconds_and_keeps_order():
    out = views.outage_minutes_by_cause(_result(by_cause=BY_CAUSE, summary=SUMMARY))
    assert out["cause"].tolist() == ["rain", "multipath"]                   # zero rows left out, CAUSES order
    assert out["below_threshold_min"].tolist() == [30.0, 10.0]
    assert out["unavailable_min"].tolist() == [25.0, 0.0]
    full = views.outage_minutes_by_cause(_result(by_cause=BY_CAUSE, summary=SUMMARY), include_zero=True)
    assert len(full) == 3
    assert len(views.outage_minutes_by_cause(_result())) == 0


def test_hop_overview_reads_the_summary():
    result = _result(by_cause=BY_CAUSE, summary=SUMMARY)
    hop = views.hop_overview(result)
    assert hop["availability_pct"] == 99.75 and hop["meets_objective"] is False
    assert hop["unavailable_min"] == 25.0 and hop["below_threshold_min"] == 40.0
    assert hop["dominant_cause"] == "rain" and hop["dominant_cause_label"] == "Rain"
    assert views.no_data_share(result) == pytest.approx(4800.0 / 604800.0)
    table = views.network_table([result, _result()])
    assert table["Hop"].tolist() == ["HOP-1", "HOP-1"]
    assert table["Meets objective"].iloc[0] == "NO"


def test_dominant_cause_falls_back_to_event_count():
    events = _events([("2026-03-02 00:00:00", "2026-03-02 00:00:05", "multipath", 8.0)] * 2
                     + [("2026-03-02 03:00:00", "2026-03-02 03:10:00", "rain", 9.0)])
    zero = BY_CAUSE.assign(below_threshold_s=0.0, unavailable_s=0.0, events=0)
    assert views.dominant_cause(_result(events=events, by_cause=zero, summary=SUMMARY)) == "multipath"
    assert views.dominant_cause(_result()) is None
    assert views.hop_overview(_result())["dominant_cause_label"] == "no fades"


def test_top_findings_normalises_keys():
    findings = [{"title": "Rain fades", "actions": ["check radome"], "numbers": {"events": 3}},
                {"title": "Step", "detail": "-4 dB", "cautions": ["work at height"]}]
    out = views.top_findings(_result(findings=findings), limit=1)
    assert out == [{"title": "Rain fades", "detail": "", "numbers": {"events": 3}, "actions": ["check radome"],
                    "cautions": []}]


def test_cause_labels_cover_the_vocabulary():
    assert set(views.CAUSE_LABELS) == set(schema.CAUSES)
    assert len(set(views.CAUSE_LABELS.values())) == len(schema.CAUSES)     # distinguishable by label alone
