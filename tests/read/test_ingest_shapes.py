"""Table-driven corpus of log shapes, one small file per shape, written here; each read back through ``read_log``.

Each case asserts the normalised rows (UTC time, link, channel, quantity, stat, interval, value, status) and the row
accounting.  The shapes are the export variants found in the trade (common practice: separators, decimal comma,
BOM, Latin-1, preambles, local time with DST, receiver floors, interval statistics); the DST instants are those of
the EU rule (last Sunday of March / October at 01:00 UTC, Directive 2000/84/EC) as encoded in the IANA tz database.
"""
from __future__ import annotations

import gzip
import math

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.errors import InputError
from diag.read.ingest import read_log, read_logs

pytestmark = pytest.mark.filterwarnings("ignore::diag.errors.DataWarning")

KEYS = [S.LINK, S.CHANNEL, S.QUANTITY, S.STAT, S.TIME]


def check_accounting(result) -> None:
    """The invariants every read must satisfy (the module docstring of diag.read.normalise)."""
    rep, table = result.report, result.table
    assert rep.rows_read == rep.rows_kept + sum(rep.rejected.values())
    v = rep.values
    assert v["read"] == len(table) == v["ok"] + v["signal_lost"] + v["missing"]
    assert sum(v["reasons"].values()) == v["signal_lost"] + v["missing"]
    assert list(table.columns) == S.COLUMNS
    assert S.conforms(table)   # categorical key columns, sorted categories (diag.schema)
    st = table[S.STATUS]
    assert st.isin(S.STATUSES).all() and table[S.QUANTITY].isin(S.QUANTITIES).all()
    assert table[S.STAT].isin(S.STATS).all()
    assert table.loc[st != S.OK, S.VALUE].isna().all() and table.loc[st == S.OK, S.VALUE].notna().all()
    assert table.equals(table.sort_values(KEYS, kind="stable").reset_index(drop=True))
    assert not table.duplicated(KEYS).any()
    import json
    json.dumps(rep.to_dict())  # JSON-able


def rows(table: pd.DataFrame) -> list[tuple]:
    out = []
    for r in table.itertuples(index=False):
        v = None if math.isnan(r.value) else round(r.value, 6)
        out.append((r.time_utc.strftime("%Y-%m-%dT%H:%M:%S"), r.link_id, r.channel, r.quantity, r.stat,
                    r.interval_s, v, r.status))
    return out


def R(t, ch, v, status="ok", link="x", q=S.RSL, stat=S.SAMPLE, iv=0.0):
    return (t, link, ch, q, stat, iv, v, status)


T0, T1, T2 = "2026-12-01T10:00:00", "2026-12-01T10:00:01", "2026-12-01T10:00:02"
WIDE_HV = [R(T0, "H", -45.5), R(T1, "H", -45.6), R(T0, "V", -47.25), R(T1, "V", -47.3)]

# (id, file bytes, read_log keyword arguments, expected rows, expected rows_read, rows_kept, rejected, extra checks)
CASES = [
    ("comma_iso_z", b"Time,RSL H (dBm),RSL V (dBm)\n2026-12-01T10:00:00Z,-45.5,-47.25\n"
                    b"2026-12-01T10:00:01Z,-45.6,-47.3\n", {}, WIDE_HV, 2, 2, {}, {"separator": ","}),
    ("semicolon_decimal_comma", b"Time;RSL H (dBm);RSL V (dBm)\n2026-12-01T10:00:00Z;-45,5;-47,25\n"
                                b"2026-12-01T10:00:01Z;-45,6;-47,3\n", {}, WIDE_HV, 2, 2, {},
     {"separator": ";", "decimal": ","}),
    ("tab", b"Time\tRSL H (dBm)\tRSL V (dBm)\n2026-12-01T10:00:00Z\t-45.5\t-47.25\n"
            b"2026-12-01T10:00:01Z\t-45.6\t-47.3\n", {}, WIDE_HV, 2, 2, {}, {"separator": "\t"}),
    ("pipe", b"Time|RSL H (dBm)|RSL V (dBm)\n2026-12-01T10:00:00Z|-45.5|-47.25\n"
             b"2026-12-01T10:00:01Z|-45.6|-47.3\n", {}, WIDE_HV, 2, 2, {}, {"separator": "|"}),
    ("utf8_bom", b"\xef\xbb\xbfTime,RSL H (dBm),RSL V (dBm)\n2026-12-01T10:00:00Z,-45.5,-47.25\n"
                 b"2026-12-01T10:00:01Z,-45.6,-47.3\n", {}, WIDE_HV, 2, 2, {}, {"encoding": "utf-8-sig"}),
    ("latin1_preamble", "Standort: Wörth Süd\nExport: Pegel\n\nZeit;Empfangspegel H [dBm];Empfangspegel V [dBm]\n"
                        "2026-12-01 10:00:00;-45,5;-47,25\n2026-12-01 10:00:01;-45,6;-47,3\n".encode("latin-1"),
     {}, WIDE_HV, 2, 2, {}, {"encoding": "latin-1", "header_line": 4}),
    ("preamble_utf8", b"# radio export\n# hop x\nTime,RSL H (dBm),RSL V (dBm)\n2026-12-01T10:00:00Z,-45.5,-47.25\n"
                      b"2026-12-01T10:00:01Z,-45.6,-47.3\n", {}, WIDE_HV, 2, 2, {}, {"header_line": 3}),
    ("quoted_fields", b'"Time","RSL H (dBm)","RSL V (dBm)"\n"2026-12-01 10:00:00","-45,5","-47,25"\n'
                      b'"2026-12-01 10:00:01","-45,6","-47,3"\n', {}, WIDE_HV, 2, 2, {},
     {"separator": ",", "decimal": ","}),
    ("iso_offset", b"timestamp,RSL H (dBm),RSL V (dBm)\n2026-12-01T11:00:00+01:00,-45.5,-47.25\n"
                   b"2026-12-01T05:00:01-05:00,-45.6,-47.3\n", {}, WIDE_HV, 2, 2, {}, {}),
    ("date_and_time_columns", b"Date;Time;RSL H (dBm);RSL V (dBm)\n01.12.2026;10:00:00;-45,5;-47,25\n"
                              b"01.12.2026;10:00:01;-45,6;-47,3\n", {}, WIDE_HV, 2, 2, {}, {}),
    # 13th of the month: only one reading exists, no guess needed
    ("day_first", b"Time,RSL (dBm)\n13/12/2026 10:00:00,-45.5\n13/12/2026 10:15:00,-45.6\n", {},
     [R("2026-12-13T10:00:00", "main", -45.5), R("2026-12-13T10:15:00", "main", -45.6)], 2, 2, {}, {}),
    ("month_first", b"Time,RSL (dBm)\n12/13/2026 10:00:00 PM,-45.5\n12/13/2026 10:15:00 PM,-45.6\n", {},
     [R("2026-12-13T22:00:00", "main", -45.5), R("2026-12-13T22:15:00", "main", -45.6)], 2, 2, {}, {}),
    # epoch 1796119200 = 2026-12-01T10:00:00Z (date -u -d @1796119200)
    ("epoch_s", b"unix_time,RxLevel-H,RxLevel-V\n1796119200,-45.5,-47.25\n1796119201,-45.6,-47.3\n", {},
     WIDE_HV, 2, 2, {}, {}),
    ("epoch_ms", b"epoch_ms,RxLevel_H,RxLevel_V\n1796119200000,-45.5,-47.25\n1796119201000,-45.6,-47.3\n", {},
     WIDE_HV, 2, 2, {}, {}),
    # Europe/Vienna: 2026-03-29 02:00 local does not exist (CET -> CEST at 01:00 UTC); 2026-10-25 02:30 local occurs
    # twice (CEST -> CET at 01:00 UTC).  Both are counted, never guessed.
    ("local_dst", b"Zeit;Rx level [dBm]\n29.03.2026 01:59:59;-40\n29.03.2026 02:30:00;-41\n29.03.2026 03:00:00;-42\n"
                  b"25.10.2026 01:59:59;-43\n25.10.2026 02:30:00;-44\n25.10.2026 03:00:00;-45\n",
     {"tz": "Europe/Vienna"},
     [R("2026-03-29T00:59:59", "main", -40.0), R("2026-03-29T01:00:00", "main", -42.0),
      R("2026-10-24T23:59:59", "main", -43.0), R("2026-10-25T02:00:00", "main", -45.0)],
     6, 4, {"dst_nonexistent": 1, "dst_ambiguous": 1}, {}),
    ("wide_tsl_xpd", b"Time,RSL H (dBm),RSL V (dBm),TSL H (dBm),XPD H (dB)\n"
                     b"2026-12-01T10:00:00Z,-45.5,-47.25,18,31.5\n",
     {}, [R(T0, "H", -45.5), R(T0, "H", 18.0, q=S.TSL), R(T0, "H", 31.5, q=S.XPD), R(T0, "V", -47.25)],
     1, 1, {}, {}),
    ("long_channel_column", b"time_utc,channel,rsl_dbm\n2026-12-01T10:00:00Z,H,-45.5\n2026-12-01T10:00:00Z,V,-47.25\n"
                            b"2026-12-01T10:00:01Z,H,-45.6\n2026-12-01T10:00:01Z,V,-47.3\n", {}, WIDE_HV, 4, 4, {},
     {"layout": "long"}),
    ("multi_link_long", b"Time,Link ID,Pol,RSL (dBm)\n2026-12-01T10:00:00Z,HOP-B,H,-50\n"
                        b"2026-12-01T10:00:00Z,HOP-A,H,-40\n"
                        b"2026-12-01T10:00:01Z,HOP-A,H,-41\n", {},
     [R(T0, "H", -40.0, link="HOP-A"), R(T1, "H", -41.0, link="HOP-A"), R(T0, "H", -50.0, link="HOP-B")], 3, 3, {},
     {"links": ["HOP-A", "HOP-B"], "link_source": "column"}),
    ("long_quantity_names", b"time_utc,link_id,channel,quantity,value\n2026-12-01T10:00:00Z,L,H,RSL,-45.5\n"
                            b"2026-12-01T10:00:00Z,L,H,XPD,30\n2026-12-01T10:00:00Z,L,H,FOO,1\n", {},
     [R(T0, "H", -45.5, link="L"), R(T0, "H", 30.0, link="L", q=S.XPD)], 3, 2, {"unknown_quantity": 1},
     {"layout": "long-named"}),
    # receiver floor (-99 is a common floor reading), markers, junk text and an impossible level
    ("floors_and_markers", b"Time,RSL H (dBm),RSL V (dBm)\n2026-12-01T10:00:00Z,-99,LOS\n2026-12-01T10:00:01Z,-99,N/A\n"
                           b"2026-12-01T10:00:02Z,-45.1,---\n2026-12-01T10:00:03Z,,abc\n2026-12-01T10:00:04Z,-46,999\n",
     {}, [R(T0, "H", None, "signal_lost"), R(T1, "H", None, "signal_lost"), R(T2, "H", -45.1),
          R("2026-12-01T10:00:03", "H", None, "missing"), R("2026-12-01T10:00:04", "H", -46.0),
          R(T0, "V", None, "signal_lost"), R(T1, "V", None, "missing"), R(T2, "V", None, "missing"),
          R("2026-12-01T10:00:03", "V", None, "missing"), R("2026-12-01T10:00:04", "V", None, "missing")],
     5, 5, {}, {"values.reasons": {"receiver_floor": 2, "signal_lost_marker": 1, "missing_marker": 2, "blank": 1,
                                   "non_numeric": 1, "out_of_range": 1}}),
    # empty cells (gaps) among clean numbers only: blank, the numbers kept as they are (exponent, sign, bare dot)
    ("numbers_and_blanks", b"Time,RSL H (dBm),RSL V (dBm)\n2026-12-01T10:00:00Z,-45.5,\n2026-12-01T10:00:01Z,,-4.73e1\n"
                           b"2026-12-01T10:00:02Z,-45.,+.5\n",
     {}, [R(T0, "H", -45.5), R(T1, "H", None, "missing"), R(T2, "H", -45.0), R(T0, "V", None, "missing"),
          R(T1, "V", -47.3), R(T2, "V", 0.5)],
     3, 3, {}, {"values.reasons": {"blank": 2}}),
    # a plateau at an unlisted minimum (-105 dBm held 3 rows) is a floor; the single -95 reading above it is not
    ("floor_plateau", b"Time,RSL (dBm)\n2026-12-01T10:00:00Z,-95\n2026-12-01T10:00:01Z,-105\n"
                      b"2026-12-01T10:00:02Z,-105\n"
                      b"2026-12-01T10:00:03Z,-105\n2026-12-01T10:00:04Z,-60\n", {},
     [R(T0, "main", -95.0), R(T1, "main", None, "signal_lost"), R(T2, "main", None, "signal_lost"),
      R("2026-12-01T10:00:03", "main", None, "signal_lost"), R("2026-12-01T10:00:04", "main", -60.0)],
     5, 5, {}, {}),
    ("duplicates_conflicts_order", b"Time,RSL (dBm)\n2026-12-01T10:00:01Z,-41\n2026-12-01T10:00:00Z,-40\n"
                                   b"2026-12-01T10:00:01Z,-41\n2026-12-01T10:00:02Z,-42\n"
                                   b"2026-12-01T10:00:02Z,-43\n", {},
     [R(T0, "main", -40.0), R(T1, "main", -41.0), R(T2, "main", -42.0)], 5, 3,
     {"duplicate": 1, "conflicting_duplicate": 1},
     {"duplicates": 1, "conflicting_duplicates": 1, "out_of_order_rows": 1}),
    ("gaps", b"Time,RSL (dBm)\n2026-12-01T10:00:00Z,-40\n2026-12-01T10:00:01Z,-40\n2026-12-01T10:00:02Z,-40\n"
             b"2026-12-01T10:00:10Z,-40\n2026-12-01T10:00:11Z,-40\n", {},
     [R(t, "main", -40.0) for t in (T0, T1, T2, "2026-12-01T10:00:10", "2026-12-01T10:00:11")], 5, 5, {},
     {"gap_count": 1, "gap_seconds": 7.0, "interval_s": 1.0}),
    # 15-min statistics stamped at the interval END, interval in the names
    ("stats_15min_end", b"Period end;RSL min 15min (dBm);RSL avg 15min (dBm);RSL max 15min (dBm)\n"
                        b"01.12.2026 10:15;-50,5;-45;-44\n01.12.2026 10:30;-48;-45,5;-44,5\n", {},
     [R(T0, "main", -45.0, stat=S.AVG, iv=900.0), R("2026-12-01T10:15:00", "main", -45.5, stat=S.AVG, iv=900.0),
      R(T0, "main", -44.0, stat=S.MAX, iv=900.0), R("2026-12-01T10:15:00", "main", -44.5, stat=S.MAX, iv=900.0),
      R(T0, "main", -50.5, stat=S.MIN, iv=900.0), R("2026-12-01T10:15:00", "main", -48.0, stat=S.MIN, iv=900.0)],
     2, 2, {}, {"kind": "stats"}),
    ("counters", b"Interval start,ES,SES,UAS,RSL min (dBm)\n2026-12-01T10:00:00Z,3,1,0,-70\n"
                 b"2026-12-01T10:15:00Z,0,0,0,-50\n", {},
     [R(T0, "main", 3.0, q=S.ES, iv=900.0), R("2026-12-01T10:15:00", "main", 0.0, q=S.ES, iv=900.0),
      R(T0, "main", -70.0, stat=S.MIN, iv=900.0), R("2026-12-01T10:15:00", "main", -50.0, stat=S.MIN, iv=900.0),
      R(T0, "main", 1.0, q=S.SES, iv=900.0), R("2026-12-01T10:15:00", "main", 0.0, q=S.SES, iv=900.0),
      R(T0, "main", 0.0, q=S.UAS, iv=900.0), R("2026-12-01T10:15:00", "main", 0.0, q=S.UAS, iv=900.0)],
     2, 2, {}, {}),
    ("gzip", gzip.compress(b"Time,RSL H (dBm),RSL V (dBm)\n2026-12-01T10:00:00Z,-45.5,-47.25\n"
                           b"2026-12-01T10:00:01Z,-45.6,-47.3\n"), {}, WIDE_HV, 2, 2, {}, {}),
    ("trailing_separator", b"Time;RSL H (dBm);RSL V (dBm)\n2026-12-01T10:00:00Z;-45,5;-47,25;\n"
                           b"2026-12-01T10:00:01Z;-45,6;-47,3;\n", {}, WIDE_HV, 2, 2, {}, {}),
    ("too_long_and_bad_time", b"Time,RSL H (dBm),RSL V (dBm)\n2026-12-01T10:00:00Z,-45.5,-47.25\n"
                              b"2026-12-01T10:00:01Z,-45.6,-47.3,7,8\nnot a time,-1,-2\n"
                              b"2026-12-01T10:00:01Z,-45.6,-47.3\n", {}, WIDE_HV, 4, 2,
     {"too_many_fields": 1, "bad_time": 1}, {}),
    # rows shorter than the header are kept: the absent cells are missing values (reason absent_field)
    ("ragged_rows", b"time,rsl_h_dbm,rsl_v_dbm\n2026-12-01T10:00:00Z,-45.5,-47.25,,\n2026-12-01T10:00:01Z,-45.6\n"
                    b"2026-12-01T10:00:02Z,-45,-46,1,2\n", {},
     [R(T0, "h", -45.5), R(T1, "h", -45.6), R(T0, "v", -47.25), R(T1, "v", None, "missing")], 3, 2,
     {"too_many_fields": 1}, {"values.reasons": {"absent_field": 1}, "out_of_order_rows": 0}),
    ("utf16_bom", "Time\tRSL H (dBm)\tRSL V (dBm)\n2026-12-01T10:00:00Z\t-45.5\t-47.25\n"
                  "2026-12-01T10:00:01Z\t-45.6\t-47.3\n".encode("utf-16"), {}, WIDE_HV, 2, 2, {},
     {"encoding": "utf-16"}),
    # stamps outside 1980..2100 are no radio log's: counted, never converted (and never an overflow)
    ("far_dates", b"time,rsl_dbm\n1970-01-01T00:00:00Z,-45\n9999-12-31T23:59:59Z,-46\n2026-12-01T10:00:00Z,-45\n", {},
     [R(T0, "main", -45.0)], 3, 1, {"time_out_of_range": 2}, {}),
    ("units_in_cells", b"Time,RSL (dBm)\n2026-12-01T10:00:00Z,-45.3 dBm\n2026-12-01T10:00:01Z,-46dBm\n", {},
     [R(T0, "main", -45.3), R(T1, "main", -46.0)], 2, 2, {}, {}),
    # 1 mW = 0 dBm, so 1e-3 mW = -30 dBm and 1e-6 mW = -60 dBm (definition of dBm); 0 mW has no level
    ("milliwatts", b"Time,Rx power (mW)\n2026-12-01T10:00:00Z,1e-3\n2026-12-01T10:00:01Z,0\n"
                   b"2026-12-01T10:00:02Z,1e-6\n",
     {}, [R(T0, "main", -30.0), R(T1, "main", None, "missing"), R(T2, "main", -60.0)], 3, 3, {},
     {"values.reasons": {"non_positive_power": 1}}),
    # levels written as positive dB below 1 mW (no dBm in the name): negated, said in the guesses
    ("positive_levels", b"Time,rx level\n2026-12-01T10:00:00Z,45\n2026-12-01T10:00:01Z,46\n2026-12-01T10:00:02Z,47\n",
     {}, [R(T0, "main", -45.0), R(T1, "main", -46.0), R(T2, "main", -47.0)], 3, 3, {}, {}),
    # a floor at -103 dBm with the receiver parked at -102 (ten identical rows running): floor readings too; a fade
    # wandering near the floor (-102.5, -102.2, -102.4) stays a reading
    ("floor_band", b"Time,RSL (dBm)\n2026-12-01T10:00:00Z,-60\n2026-12-01T10:00:01Z,-103\n"
                   + b"".join(b"2026-12-01T10:00:%02dZ,-102\n" % (i + 2) for i in range(10))
                   + b"2026-12-01T10:00:12Z,-102.5\n2026-12-01T10:00:13Z,-102.2\n2026-12-01T10:00:14Z,-102.4\n", {},
     [R(T0, "main", -60.0), R(T1, "main", None, "signal_lost")]
     + [R(f"2026-12-01T10:00:{i + 2:02d}", "main", None, "signal_lost") for i in range(10)]
     + [R("2026-12-01T10:00:12", "main", -102.5), R("2026-12-01T10:00:13", "main", -102.2),
        R("2026-12-01T10:00:14", "main", -102.4)],
     15, 15, {}, {"values.reasons": {"receiver_floor": 11}}),
]


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_shape(case, tmp_path):
    name, data, kwargs, expected, read, kept, rejected, extra = case
    path = tmp_path / ("x.csv.gz" if name == "gzip" else "x.csv")
    path.write_bytes(data)
    result = read_log(path, **kwargs)
    check_accounting(result)
    rep = result.report
    assert rows(result.table) == expected
    assert (rep.rows_read, rep.rows_kept, rep.rejected) == (read, kept, rejected)
    for key, want in extra.items():
        if key.startswith("values."):
            assert rep.values[key.split(".", 1)[1]] == want
        else:
            assert getattr(rep, key) == want, key
    # the same bytes as an upload give the same table
    up = read_log(data, name=path.name, **kwargs)
    assert up.table.equals(result.table)


def test_ambiguous_day_month_is_reported_as_guess(tmp_path):
    # 1-s steps within one day: day-first and month-first both read every stamp; the guess is said with its override
    p = tmp_path / "hop.csv"
    p.write_text("Time,RSL (dBm)\n01/12/2026 10:00:00,-40\n01/12/2026 10:00:01,-41\n01/12/2026 10:00:02,-42\n")
    r = read_log(p)
    assert r.table[S.TIME].iloc[0] == pd.Timestamp("2026-12-01T10:00:00Z")   # day-first default
    assert any("the evidence ties" in g and "--time-format" in g for g in r.report.guesses)
    r2 = read_log(p, mapping={"time": {"format": "%m/%d/%Y %H:%M:%S"}})
    assert r2.table[S.TIME].iloc[0] == pd.Timestamp("2026-01-12T10:00:00Z")
    check_accounting(r2)


def test_day_month_resolved_by_step(tmp_path):
    # 15-min rows across midnight: read month-first the stamps would jump by a month, day-first by 15 min
    p = tmp_path / "hop.csv"
    p.write_text("Time,RSL (dBm)\n01/12/2026 23:45,-40\n02/12/2026 00:00,-41\n02/12/2026 00:15,-42\n")
    r = read_log(p)
    assert list(r.table[S.TIME]) == list(pd.to_datetime(["2026-12-01T23:45Z", "2026-12-02T00:00Z",
                                                         "2026-12-02T00:15Z"]))


def test_tz_for_naive_iso_and_no_tz_means_utc(tmp_path):
    p = tmp_path / "hop.csv"
    p.write_text("Time,RSL (dBm)\n2026-07-01 12:00:00,-40\n")
    assert read_log(p).table[S.TIME].iloc[0] == pd.Timestamp("2026-07-01T12:00:00Z")
    # Europe/Lisbon is UTC+1 in July (WEST)
    assert read_log(p, tz="Europe/Lisbon").table[S.TIME].iloc[0] == pd.Timestamp("2026-07-01T11:00:00Z")
    with pytest.raises(InputError, match="time zone"):
        read_log(p, tz="Mars/Olympus")


def test_mapping_names_columns_and_floor(tmp_path):
    p = tmp_path / "hop.csv"
    p.write_text("when;lvl a;lvl b;note\n2026-12-01 10:00:00;-45,5;-90;x\n2026-12-01 10:00:01;-45,6;-91;y\n")
    m = tmp_path / "map.toml"
    m.write_text('[time]\ncolumns = ["when"]\nformat = "%Y-%m-%d %H:%M:%S"\nzone = "UTC"\n'
                 '[link]\nid = "HOP-7"\n[signals."lvl a"]\nquantity = "rsl"\nchannel = "A"\n'
                 '[signals."lvl b"]\nquantity = "rsl"\nchannel = "B"\n[floor]\ndbm = -90\n')
    r = read_log(p, mapping=m)
    check_accounting(r)
    assert rows(r.table) == [R(T0, "A", -45.5, link="HOP-7"), R(T1, "A", -45.6, link="HOP-7"),
                             R(T0, "B", None, "signal_lost", link="HOP-7"),
                             R(T1, "B", None, "signal_lost", link="HOP-7")]
    assert r.report.ignored_columns == ["note"]


def test_floor_detection_can_be_switched_off(tmp_path):
    p = tmp_path / "hop.csv"
    p.write_text("Time,RSL (dBm)\n2026-12-01T10:00:00Z,-99\n2026-12-01T10:00:01Z,-50\n")
    assert read_log(p).table[S.STATUS].tolist() == ["signal_lost", "ok"]
    assert read_log(p, mapping={"floor": {"dbm": "none"}}).table[S.VALUE].tolist() == [-99.0, -50.0]


def test_folder_reads_its_files_not_subfolders(tmp_path):
    (tmp_path / "a.csv").write_text("Time,RSL (dBm)\n2026-12-01T10:00:00Z,-40\n")
    (tmp_path / "b.csv.gz").write_bytes(gzip.compress(b"Time,RSL (dBm)\n2026-12-01T10:00:00Z,-50\n"))
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "c.csv").write_text("Time,RSL (dBm)\n2026-12-01T10:00:00Z,-60\n")
    r = read_log(tmp_path)
    check_accounting(r)
    assert r.report.links == ["a", "b"] and r.report.link_source is None
    assert sorted(r.table[S.VALUE]) == [-50.0, -40.0]
    assert len(r.report.files) == 2 and r.report.rows_read == 2


def test_read_logs_overlap_counted(tmp_path):
    a = "Time,Link,RSL (dBm)\n2026-12-01T10:00:00Z,L,-40\n2026-12-01T10:00:01Z,L,-41\n"
    b = "Time,Link,RSL (dBm)\n2026-12-01T10:00:01Z,L,-41\n2026-12-01T10:00:02Z,L,-42\n"
    r = read_logs([("a.csv", a.encode()), ("b.csv", b.encode())])
    assert r.report.rows_read == 4 and r.report.rows_kept == 4 and r.report.overlap_values_dropped == 1
    assert r.table[S.VALUE].tolist() == [-40.0, -41.0, -42.0]
    assert r.report.values["read"] == len(r.table) + r.report.overlap_values_dropped


@pytest.mark.parametrize("data, message, line", [
    (b"", "empty", None),
    (b"\x00\x01\x02\x03binary\x00\xff" * 20, "binary", None),
    (b"a,b\n1,2\n", "no time column", 1),
    (b"time,b\n2026-12-01T10:00:00Z,2\n", "no signal column", 1),
    (b"Time,RSL (dBm)\n", "no data rows", 1),
    (b"Time,RSL (dBm)\nfoo,1\nbar,2\n", "cannot read the time column 'Time'", 2),
])
def test_bad_input_is_one_line_error(data, message, line):
    with pytest.raises(InputError, match=message) as exc:
        read_log(data, name="bad.csv")
    assert exc.value.path == "bad.csv"
    if line is not None:
        assert exc.value.line == line
    assert "\n" not in exc.value.one_line()


def test_large_wide_file_streams_in_blocks(tmp_path, monkeypatch):
    # more rows than one read block: the block loop must give the same table as reading at once
    import diag.read.ingest as ingest

    n = 5000
    t = pd.date_range("2026-12-01", periods=n, freq="s", tz="UTC")
    h = np.round(-45 + np.sin(np.arange(n) / 50.0), 1)
    df = pd.DataFrame({"Time": t.strftime("%Y-%m-%dT%H:%M:%SZ"), "RSL H (dBm)": h, "RSL V (dBm)": h - 1})
    p = tmp_path / "big.csv"
    df.to_csv(p, index=False)
    whole = read_log(p)
    monkeypatch.setattr(ingest, "BLOCK_BYTES", 4096)
    blocks = read_log(p)
    assert blocks.table.equals(whole.table)
    check_accounting(blocks)
    assert blocks.report.rows_read == n and len(blocks.table) == 2 * n
    np.testing.assert_array_equal(blocks.table.loc[blocks.table[S.CHANNEL] == "H", S.VALUE].to_numpy(), h)
