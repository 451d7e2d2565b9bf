"""diag.report.views: the tables the dashboard draws, checked against the results they come from.

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

from diag import schema
from diag.links import Link
from diag.report import views, views_fading, views_reader
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
    series = _series(levels, interval_s=900.0, status=pd.Categorical(status, categories=["ok", "signal_lost",
                                                                                    "missing", "no_data"]),
                     stats=True)                               # the pipeline's status column is categorical
    out = views.timeline(series, max_points=2)
    assert len(out) == 2
    assert out["level_min_dbm"].tolist() == [-48.0, -44.0]
    assert out["level_max_dbm"].tolist() == [-39.0, -40.0]
    assert out["signal_lost"].tolist() == [False, True]
    assert out["level_dbm"].iloc[1] == pytest.approx(-41.0)


def test_timeline_of_fade_depth_uses_the_named_extremes():
    series = _series([-40.0, -50.0, -41.0, -40.0], interval_s=900.0)
    series.frame["attenuation_peak_db"] = [1.0, 25.0, 3.0, 0.5]      # deepest fade inside each interval
    series.frame["attenuation_low_db"] = [0.0, 5.0, 0.0, 0.0]
    out = views.timeline(series, column="attenuation_db", low_column="attenuation_low_db",
                         high_column="attenuation_peak_db", max_points=2)
    assert out["level_dbm"].tolist() == [(0.0 + 10.0) / 2, (1.0 + 0.0) / 2]   # mean of attenuation_db per bin
    assert out["level_max_dbm"].tolist() == [25.0, 3.0]
    assert out["level_min_dbm"].tolist() == [0.0, 0.0]


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
    assert out["cause_label"].tolist() == [views.cause_label("rain"), views.cause_label("multipath")]
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
    assert only["Deepest fade [dB]"].tolist() == [18.0]       # "Peak fade dB" before issue 16 (glossary label)
    assert only["Cause"].tolist() == [views.cause_label("multipath")]
    assert list(only.columns) == views.EVENT_TABLE_COLUMNS
    assert len(views.event_table(events.iloc[:0])) == 0


def test_hourly_fading_converts_seconds_and_keeps_every_hour():
    # diag.analysis.fading_stats' by_hour block (shape as the statistics module writes it)
    stats = {"by_hour": {"hour_utc": list(range(24)),
                         "faded_s_by_cause": {"rain": [0.0] * 15 + [1800.0] + [0.0] * 8,
                                              "multipath": [120.0] * 24},
                         "event_starts_by_cause": {"rain": [0] * 15 + [2] + [0] * 8, "multipath": [1] * 24}}}
    out = views_fading.hourly_fading(stats)
    assert len(out) == 48 and set(out["hour"]) == set(range(24))
    assert out["cause"].iloc[0] == "rain"                                   # CAUSES order, not dict order
    assert out[(out.hour == 15) & (out.cause == "rain")]["faded_min"].item() == 30.0
    assert out["event_starts"].sum() == 2 + 24                              # every fade start counted once
    assert len(views_fading.hourly_fading({})) == 0


def test_exceedance_curves_keep_measured_theory_and_predictions():
    stats = {"exceedance": {"depth_db": [3.0, 10.0, 20.0], "all_percent": [20.0, 5.0, 0.0],
                            "rayleigh_percent": [39.42, 9.516, 0.995], "multipath_percent": [0.0, 0.0, 0.0],
                            "p530_multipath": {"percent_worst_month": [16.0, 3.6, 0.72]}},
             "rain": {"p530": {"percent_of_year": [1.0, 0.1, 0.01], "attenuation_db": [2.4, 8.7, 23.0]}}}
    out = views_fading.exceedance_curves(stats)
    # zero percentages cannot be drawn on a log axis: dropped, never turned into a tiny number
    assert (out["percent"] > 0).all()
    assert set(out["kind"]) == {"measured", "theory", "prediction"}
    rain = out[out.curve.str.contains("rain prediction")]
    assert rain["depth_db"].tolist() == [2.4, 8.7, 23.0] and rain["percent"].tolist() == [1.0, 0.1, 0.01]
    # Rayleigh: P(fade > 10 dB) = 1 - exp(-10^(-10/10)) = 9.516 % (textbook Rayleigh CDF), carried unchanged
    assert out[(out.kind == "theory") & (out.depth_db == 10.0)]["percent"].item() == pytest.approx(9.516)
    assert len(out[out.curve == "measured, all fades"]) == 2
    assert len(views_fading.exceedance_curves({})) == 0


def test_key_figures_flatten_nested_results_with_human_labels_and_units():
    # issue 16: no raw keys ("k moments db", "afd s"), units shown, no exponent notation, durations h:mm:ss
    data = {"rice_k": {"k_moments_db": 3.2914, "samples": 176341}, "curve": list(range(50)), "skipped": None,
            "note": "drop me", "range_db": [1.0, 2.5], "observed_s": 176341.0, "imbalance_flag": False,
            "afd_s": 8.498}
    out = views_fading.key_figures(data, skip=("note",))
    table = dict(zip(out["Figure"], out["Value"]))
    assert table["Rice k › Rice K, moment estimate [dB]"] == "3.3 dB"
    assert table["Rice k › Samples"] == "176,341"
    assert table["Curve"] == "50 values"
    assert table["Range [dB]"] == "1.0 dB, 2.5 dB"
    assert table["Skipped"] == "–"
    assert table["Observed time"] == "2 d 00:59:01"
    assert table["H/V levels differ by more than the flag"] == "no"
    assert table["Average fade duration [s]"] == "8.5 s"
    assert "note" not in " ".join(table) and not any("_" in k for k in table)
    assert not any("e+" in v for v in table.values())


def test_crossing_table_one_row_per_level():
    lcr = {"level_db": [-5.0, -10.0], "crossings": [10, 4], "crossing_rate_hz": [0.01, 0.004],
           "rayleigh_crossing_rate_hz": [0.012, 0.005], "afd_s": [8.0, 4.0], "rayleigh_afd_s": [9.0, 5.0],
           "undersampled": [False, True]}
    out = views_fading.crossing_table(lcr)
    assert out["LCR measured [1/h]"].tolist() == pytest.approx([36.0, 14.4])
    assert out["Sampling"].tolist() == ["adequate", "too coarse: rate and duration biased"]


def test_episodes_group_short_events_of_one_cause():
    # 30 one-second multipath fades a minute apart, then a rain fade 3 h later: two episodes, with counts
    rows = [(f"2026-03-02 00:{m:02d}:00", f"2026-03-02 00:{m:02d}:01", "multipath", 5.0 + m / 10) for m in range(30)]
    rows.append(("2026-03-02 03:40:00", "2026-03-02 04:00:00", "rain", 12.0))
    out = views.episodes(_events(rows))
    assert out["events"].tolist() == [30, 1]
    assert out["cause"].tolist() == ["multipath", "rain"]
    assert out.loc[0, "peak_fade_db"] == pytest.approx(7.9) and out.loc[0, "faded_s"] == pytest.approx(30.0)
    assert views.episodes(_events(rows), gap_s=30.0)["events"].max() == 1


# --- overview -------------------------------------------------------------------------------------------------------
BY_CAUSE = pd.DataFrame({"link_id": "HOP-1", "cause": ["rain", "multipath", "refractive"], "events": [3, 40, 0],
                         "below_threshold_s": [1800.0, 600.0, 0.0], "unavailable_s": [1500.0, 0.0, 0.0]})
SUMMARY = {"link_id": "HOP-1", "period_start_utc": "2026-03-02T00:00:00Z", "period_end_utc": "2026-03-09T00:00:00Z",
           "observed_s": 600000.0, "no_data_s": 4800.0, "below_threshold_s": 2400.0, "unavailable_s": 1500.0,
           "ses_available_s": 30.0, "availability_pct": 99.75, "objective_pct": 99.99, "meets_objective": "no",
           "exact": True}
# a statistics log: exact figures unknown (NaN), bounds given instead (diag.analysis.outage's summary keys)
BY_CAUSE_BOUNDS = pd.DataFrame({"link_id": "HOP-1", "cause": ["multipath", "signal_loss"], "events": [1, 1],
                                "below_threshold_s": [np.nan, np.nan], "unavailable_s": [np.nan, np.nan],
                                "below_threshold_s_lo": [3, 0], "below_threshold_s_hi": [2481, 899],
                                "unavailable_s_lo": [0, 0], "unavailable_s_hi": [2700, 900]})
SUMMARY_BOUNDS = {"link_id": "HOP-1", "observed_s": 21600, "no_data_s": 0, "availability_pct": np.nan,
                  "availability_pct_lo": 83.3333, "availability_pct_hi": 100.0, "unavailable_s": np.nan,
                  "unavailable_s_lo": 0, "unavailable_s_hi": 3600, "below_threshold_s": np.nan,
                  "below_threshold_s_lo": 3, "below_threshold_s_hi": 3380, "objective_pct": 99.99,
                  "meets_objective": "undetermined", "exact": False, "method": "bounds from 900-s statistics"}


def test_outage_minutes_by_cause_converts_seconds_and_keeps_order():
    out = views.outage_minutes_by_cause(_result(by_cause=BY_CAUSE, summary=SUMMARY))
    assert out["cause"].tolist() == ["rain", "multipath"]                   # zero rows left out, CAUSES order
    assert out["below_threshold_lo_min"].tolist() == [30.0, 10.0]
    assert out["below_threshold_hi_min"].tolist() == [30.0, 10.0]
    assert out["unavailable_lo_min"].tolist() == [25.0, 0.0]
    assert out["exact"].all()
    full = views.outage_minutes_by_cause(_result(by_cause=BY_CAUSE, summary=SUMMARY), include_zero=True)
    assert len(full) == 3
    assert len(views.outage_minutes_by_cause(_result())) == 0


def test_outage_bounds_are_carried_not_invented():
    out = views.outage_minutes_by_cause(_result(by_cause=BY_CAUSE_BOUNDS, summary=SUMMARY_BOUNDS))
    assert out["below_threshold_lo_min"].tolist() == [3 / 60, 0.0]
    assert out["below_threshold_hi_min"].tolist() == [2481 / 60, 899 / 60]
    assert not out["exact"].any()
    hop = views.hop_overview(_result(by_cause=BY_CAUSE_BOUNDS, summary=SUMMARY_BOUNDS))
    assert hop["availability_pct"] == (83.3333, 100.0)
    assert hop["unavailable_min"] == (0.0, 60.0)
    assert hop["meets_objective"] is None and hop["meets_text"] == "undetermined"
    assert hop["exact"] is False
    assert views.range_text(hop["unavailable_min"], "{:.1f}", " min") == "0.0–60.0 min"
    assert views.range_text((None, None)) == "–"


def test_hop_overview_reads_the_summary():
    result = _result(by_cause=BY_CAUSE, summary=SUMMARY)
    hop = views.hop_overview(result)
    assert hop["availability_pct"] == (99.75, 99.75) and hop["meets_objective"] is False
    assert hop["unavailable_min"] == (25.0, 25.0) and hop["below_threshold_min"] == (40.0, 40.0)
    assert hop["main_cause"] == "rain" and hop["main_cause_label"] == views.cause_label("rain")
    assert views.range_text(hop["availability_pct"], "{:.4f}", " %") == "99.7500 %"
    assert views_reader.no_data_share(result) == pytest.approx(4800.0 / 604800.0)
    table = views.network_table([_result(by_cause=BY_CAUSE_BOUNDS, summary=SUMMARY_BOUNDS), result, _result()])
    assert table["Hop"].tolist() == ["HOP-1"] * 3
    assert table["Availability [%]"].tolist()[:2] == ["83.3333–100.0000", "99.7500"]   # worst lower bound first
    # verdict words and durations from diag.glossary (issue 16: one vocabulary; "NO" became "NOT met", minutes
    # became h:mm:ss)
    assert table["Objective met"].tolist()[:2] == ["undetermined", "NOT met"]
    assert table["Outage (unavailable time) h:mm:ss"].tolist()[:2] == ["0:00:00 – 1:00:00", "0:25:00"]
    assert views.duration_text(376200) == "4 d 08:30:00" and views.duration_text(59.6) == "0:01:00"


def test_main_cause_is_the_outage_modules_and_no_outage_without_unavailable_time():
    # issue 16: one word for a hop without outage everywhere ("no outage", diag.glossary), whatever its fades
    named = dict(SUMMARY, main_cause="multipath")
    assert views.main_cause(_result(by_cause=BY_CAUSE, summary=named)) == "multipath"
    quiet = dict(SUMMARY, below_threshold_s=0.0, unavailable_s=0.0, availability_pct=100.0, main_cause="no outage")
    assert views.hop_overview(_result(by_cause=BY_CAUSE, summary=quiet))["main_cause_label"] == "no outage"


def test_main_cause_without_a_named_one_is_the_most_unavailable_time():
    events = _events([("2026-03-02 00:00:00", "2026-03-02 00:00:05", "multipath", 8.0)] * 2
                     + [("2026-03-02 03:00:00", "2026-03-02 03:10:00", "rain", 9.0)])
    zero = BY_CAUSE.assign(below_threshold_s=0.0, unavailable_s=0.0, events=0)
    assert views.main_cause(_result(events=events, by_cause=zero, summary=SUMMARY)) == "no outage"
    assert views.main_cause(_result(by_cause=BY_CAUSE, summary=SUMMARY)) == "rain"
    assert views.hop_overview(_result())["main_cause_label"] == "no outage"


def test_top_findings_normalises_keys():
    findings = [{"title": "Rain fades", "actions": ["check radome"], "numbers": {"events": 3}},
                {"title": "Step", "detail": "-4 dB", "cautions": ["work at height"]}]
    out = views.top_findings(_result(findings=findings), limit=1)
    assert out == [{"title": "Rain fades", "detail": "", "numbers": {"events": 3}, "actions": ["check radome"],
                    "cautions": []}]


def test_cause_labels_cover_the_vocabulary():
    labels = [views.cause_label(c) for c in schema.CAUSES]
    assert len(set(labels)) == len(schema.CAUSES)          # distinguishable by label alone


# --- reader report --------------------------------------------------------------------------------------------------
REPORT = {"file": "a.csv", "encoding": "utf-8", "separator": ",", "decimal": ".", "header_line": 1, "layout": "wide",
          "columns": {"time_utc": "time", "RSL H (dBm)": "rsl_dbm/sample"}, "ignored_columns": ["Comment"],
          "time": {"columns": ["time_utc"], "format": "iso", "zone": "offset in the stamps", "marks": "start"},
          "guesses": [], "links": ["HOP-1"], "link_source": "file_name", "channels": ["H"],
          "quantities": ["rsl_dbm"], "kind": "sample", "interval_s": 1.0, "start_utc": "2026-06-08T00:00:00Z",
          "end_utc": "2026-06-08T05:59:59Z", "rows_read": 21590, "rows_kept": 21568,
          "rejected": {"duplicate": 22}, "values": {"read": 100, "ok": 97, "signal_lost": 1, "missing": 2,
                                                     "reasons": {"blank": 2, "receiver_floor": 1}},
          "floors": {"rsl_dbm": {"dbm": -88.7, "how": "plateau"}}, "gap_count": 3, "gap_seconds": 120.0,
          "out_of_order_rows": 16, "warnings": []}


def test_reader_summary_shows_detection_and_accounting():
    table = dict(zip(*views_reader.reader_summary(REPORT).to_dict("list").values()))
    assert table["Rows"] == "21,590 read, 21,568 kept, 22 not kept"       # read = kept + rejected
    assert table["Data"] == "instantaneous samples, every 1 s"
    assert table["Gaps (no data)"] == "3 gaps, 2 min in all"
    assert "-88.7 dBm" in table["Receiver floor"]
    roles = views_reader.column_roles(REPORT)
    assert roles["Read as"].tolist() == ["time", "rsl_dbm/sample", "ignored"]
    rejected = views_reader.rejected_rows(REPORT)
    assert rejected["Count"].tolist() == [22, 2, 1]
    assert rejected["Count"][rejected["Of"].str.startswith("rows")].sum() == REPORT["rows_read"] - REPORT["rows_kept"]
