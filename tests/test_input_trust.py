"""Trusting the input (issue 15): no silent reassignment, no silent guess, validated tables and flags, bounded
resources, atomic outputs.  Each numbered case of the issue is one or more tests here, named ``test_case<N>_...``.

No outside source is needed: the rules are the project's own contract (../shared/CONTRACT.md and the accounting
rule in diag.read.normalise).  Calendar facts (a month field is 1..12; a 15-min log steps 900 s) are common
practice.
"""
from __future__ import annotations

import datetime as dt
import subprocess
import sys
import warnings

import pytest

from diag.cli import main
from diag.errors import DataWarning, InputError
from diag.links import make_link
from diag.read.ingest import read_log

T0 = dt.datetime(2026, 3, 2, tzinfo=dt.timezone.utc)
LINKS_HEADER = "link_id,frequency_ghz,length_km,polarization,threshold_dbm\n"


def _stamp(i: int, step_s: int = 60) -> str:
    return (T0 + dt.timedelta(seconds=i * step_s)).strftime("%Y-%m-%dT%H:%M:%SZ")


def _long_log(ids: list[str], n: int = 120, step_s: int = 60) -> str:
    rows = ["time,link_id,rsl_dbm"]
    for i in range(n):
        for k, hop in enumerate(ids):
            rows.append(f"{_stamp(i, step_s)},{hop},{-45 - k - (i % 5) * 0.2:.1f}")
    return "\n".join(rows) + "\n"


def _wide_log(n: int = 120, step_s: int = 60) -> str:
    return "time,rsl_dbm\n" + "".join(f"{_stamp(i, step_s)},{-45 - (i % 5) * 0.2:.1f}\n" for i in range(n))


def _link(link_id: str, **kw):
    values = {"link_id": link_id, "frequency_ghz": 23, "length_km": 10, "polarization": "V", "threshold_dbm": -70}
    values.update(kw)
    return make_link(values)


def _cli(*args: str, timeout: float = 120) -> subprocess.CompletedProcess:
    """The command line in a child process (where what reaches stderr is the point)."""
    return subprocess.run([sys.executable, "-m", "diag", *args], capture_output=True, text=True, timeout=timeout)


def _accounted(report) -> bool:
    return report.rows_read == report.rows_kept + sum(report.rejected.values())


# ---------------------------------------------------------------------------------------------------------------
# case 1: data of one hop reported as another's

def test_case1_unlisted_hop_in_long_log_is_an_error_naming_it(tmp_path):
    from diag.pipeline import analyze_files

    path = tmp_path / "network.csv"
    path.write_text(_long_log(["HOP-A", "HOP-X"]))
    with pytest.raises(InputError, match="HOP-X") as info:
        analyze_files([path], links=[_link("HOP-A")])
    assert "--only-listed" in info.value.one_line()


def test_case1_only_listed_counts_unlisted_rows(tmp_path):
    from diag.read.mapping import only_listed

    path = tmp_path / "network.csv"
    path.write_text(_long_log(["HOP-A", "HOP-X"], n=50))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        read = read_log(path, mapping=only_listed(None, [_link("HOP-A")]))
    rep = read.report
    assert rep.rejected == {"unlisted_hop": 50} and rep.rows_read == 100 and _accounted(rep)
    assert rep.links == ["HOP-A"]


def test_case1_only_listed_on_the_command_line(tmp_path, capsys):
    log = tmp_path / "network.csv"
    log.write_text(_long_log(["HOP-A", "HOP-X"], n=240))
    links = tmp_path / "links.csv"
    links.write_text(LINKS_HEADER + "HOP-A,23,10,V,-70\n")
    assert main(["analyze", str(log), "--links", str(links), "--out", str(tmp_path / "o1"), "--quiet"]) == 2
    assert "HOP-X" in capsys.readouterr().err
    assert main(["analyze", str(log), "--links", str(links), "--out", str(tmp_path / "o2"), "--quiet",
                 "--only-listed"]) == 0
    out = capsys.readouterr().out
    assert "HOP-A" in out and "HOP-X" not in out


def test_case1_file_name_never_overrides_the_ids_the_log_names(tmp_path):
    from diag.pipeline import analyze_files

    path = tmp_path / "HOP-A_export.csv"
    path.write_text(_long_log(["HOP-B", "HOP-C"]))
    with pytest.raises(InputError, match="HOP-C"):
        analyze_files([path], links=[_link("HOP-A"), _link("HOP-B")])


def test_case1_file_name_matching_is_by_whole_word_and_never_ambiguous():
    from diag.read.hops import assign_hops, hop_of_file_name

    links = [_link("1"), _link("2")]
    assert hop_of_file_name(links, "link_12.csv") is None          # not read as hop 1
    with pytest.raises(InputError, match="several hops"):
        hop_of_file_name(links, "1_2.csv")
    with pytest.raises(InputError, match="names no hop"):
        assign_hops(["link_12"], links, file_name="link_12.csv", names_hop=False)
    assert hop_of_file_name([_link("HOP-A"), _link("HOP-A-2")], "HOP-A-2_week.csv") == "HOP-A-2"


def test_case1_single_row_table_for_another_hop_warns_naming_both(tmp_path):
    from diag.pipeline import analyze_files

    path = tmp_path / "export.csv"
    path.write_text(_long_log(["HM-QUARRY-FERRY"], n=240))
    with pytest.warns(DataWarning, match="HOP1.*HM-QUARRY-FERRY"):
        results = analyze_files([path], links=[_link("HOP1")])
    assert [r.link.link_id for r in results] == ["HOP1"]


# ---------------------------------------------------------------------------------------------------------------
# cases 2 and 3: month-first dates, UTC assumed silently; case 4 (library side): the polarisation taken

def _slash_log(first: dt.datetime, n: int, step_s: int, month_first: bool = True, sep: str = ";") -> str:
    fmt = "%m/%d/%Y %H:%M" if month_first else "%d/%m/%Y %H:%M"
    rows = [f"Time{sep}RSL (dBm)"]
    for i in range(n):
        rows.append(f"{(first + dt.timedelta(seconds=i * step_s)).strftime(fmt)}{sep}-45.{i % 10}")
    return "\n".join(rows) + "\n"


def test_case2_month_first_week_is_read_month_first():
    data = _slash_log(dt.datetime(2026, 11, 1), 7 * 96, 900).encode()
    rep = read_log(data, name="week.csv").report
    assert rep.start_utc == "2026-11-01T00:00:00Z" and rep.end_utc == "2026-11-07T23:45:00Z"
    assert rep.gap_count == 0
    guess = [g for g in rep.guesses if "time format read as" in g]
    assert guess and "'%m/%d/%Y %H:%M'" in guess[0] and "--time-format" in guess[0] and "steps regular" in guess[0]
    assert not rep.method_notes


def test_case2_day_first_still_read_day_first():
    data = _slash_log(dt.datetime(2026, 1, 11), 7 * 96, 900, month_first=False).encode()
    rep = read_log(data, name="week.csv").report
    assert rep.start_utc == "2026-01-11T00:00:00Z" and rep.end_utc == "2026-01-17T23:45:00Z"


def test_case2_repeated_dst_hour_of_a_month_first_log_is_dst_ambiguous():
    # US clocks go back on Sunday 1 November 2026 at 02:00 (common practice: first Sunday of November)
    stamps = []
    t = dt.datetime(2026, 10, 31, 0, 0)
    while t < dt.datetime(2026, 11, 2):
        stamps.append(t)
        if t == dt.datetime(2026, 11, 1, 1, 45) and len([s for s in stamps if s.hour == 1 and s.day == 1]) == 4:
            stamps.extend(dt.datetime(2026, 11, 1, 1, m) for m in (0, 15, 30, 45))   # the repeated hour
        t += dt.timedelta(minutes=15)
    data = ("Time;RSL (dBm)\n" + "".join(f"{s.strftime('%m/%d/%Y %H:%M')};-45.{i % 9}\n"
                                          for i, s in enumerate(stamps))).encode()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        rep = read_log(data, name="dst.csv", tz="America/New_York").report
    assert rep.rejected.get("dst_ambiguous") == 8 and "duplicate" not in rep.rejected and _accounted(rep)


def test_case2_a_true_tie_is_said_on_stderr_and_kept_for_the_method_notes(capsys, tmp_path):
    path = tmp_path / "oneday.csv"
    path.write_text(_slash_log(dt.datetime(2026, 2, 1), 96, 900, month_first=False))
    with pytest.warns(DataWarning, match="the evidence ties"):
        rep = read_log(path).report
    assert rep.method_notes and "the evidence ties" in rep.method_notes[0]
    run = _cli("ingest", str(path))
    assert run.returncode == 0 and "diag: warning:" in run.stderr and "the evidence ties" in run.stderr


def test_case3_utc_for_offsetless_stamps_is_a_listed_guess():
    rep = read_log(_wide_log().replace("Z,", ",").encode(), name="x.csv").report
    assert any("no UTC offset" in g and "--tz" in g for g in rep.guesses)
    assert not any("no UTC offset" in g for g in read_log(_wide_log().encode(), name="x.csv").report.guesses)
    rep = read_log(_wide_log().replace("Z,", ",").encode(), name="x.csv", tz="Europe/Vienna").report
    assert not any("no UTC offset" in g for g in rep.guesses)


def test_case4_polarisation_taken_for_a_channel_is_listed(tmp_path):
    from diag.links import polarisation_guesses

    dual = _link("D", polarization="dual")
    got = polarisation_guesses(dual, ["H", "main"])
    assert "'H'" in got[0] and "H-polarised" in got[0] and "not known" in got[1] and "--signal-col" in got[1]
    assert polarisation_guesses(_link("S", polarization="V"), ["main"]) == []


# ---------------------------------------------------------------------------------------------------------------
# cases 5 and 6: a time-of-day column with an offset; the 1980-2100 range on every time path

def test_case5_date_column_and_time_of_day_with_offset_or_z():
    body = "".join(f"02.03.2026;{h:02d}:00:00+01:00;-44,{h % 10}\n" for h in range(24))
    data = ("Datum;Uhrzeit;RSL (dBm)\n" + body + "03.03.2026;00:00:00Z;-44,0\n").encode("latin-1")
    rep = read_log(data, name="export.csv").report
    assert rep.rows_kept == 25 and not rep.rejected
    assert rep.start_utc == "2026-03-01T23:00:00Z" and rep.end_utc == "2026-03-03T00:00:00Z"
    assert not any("no UTC offset" in g for g in rep.guesses)


@pytest.mark.parametrize("stamp", ["2026-03-02T{h:02d}:00:00Z", "2026-03-02T{h:02d}:00:00", "2026-03-02 {h:02d}:00",
                                   "02/03/2026 {h:02d}:00"])
def test_case6_range_check_on_every_time_path(stamp):
    stray = stamp.replace("2026", "2150").format(h=0)
    data = ("time,rsl_dbm\n" + "".join(f"{stamp.format(h=h)},-44.{h % 10}\n" for h in range(24))
            + f"{stray},-44\n").encode()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        rep = read_log(data, name="x.csv").report
    assert rep.rejected == {"time_out_of_range": 1} and rep.rows_kept == 24 and _accounted(rep)
    assert rep.end_utc.startswith("2026-03")


def test_case6_one_stray_row_does_not_sink_the_analysis(tmp_path):
    from diag.pipeline import analyze_files

    path = tmp_path / "HOP-A.csv"
    path.write_text(_wide_log(n=600) + "2150-01-01T00:00:00Z,-45.0\n")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        results = analyze_files([path], links=[_link("HOP-A")])
    assert results[0].ingest["files"][0]["rejected"] == {"time_out_of_range": 1}


# ---------------------------------------------------------------------------------------------------------------
# cases 7, 8, 9: links-table and flag validation

def _links_file(tmp_path, text: str):
    path = tmp_path / "links.csv"
    path.write_text(text)
    return path


def test_case7_threshold_above_nominal_is_refused(tmp_path):
    from diag.links import read_links_table

    path = _links_file(tmp_path, LINKS_HEADER.strip() + ",nominal_dbm\nHOP-A,23,10,V,-40,-45\n")
    with pytest.raises(InputError, match="below nominal_dbm") as info:
        read_links_table(path)
    assert info.value.line == 2
    with pytest.raises(InputError, match="below nominal_dbm"):
        _link("x", threshold_dbm=-70, nominal_dbm=-70)


@pytest.mark.parametrize("text, fragment, line", [
    ("link_id,frequency_ghz,length_km,polarization,threshold_dbm,frequency_ghz\nA,23,10,V,-70,38\n",
     "more than once", 1),
    ('link_id,frequency_ghz,length_km,polarization,threshold_dbm\nA,"1,000",10,V,-70\n', "thousands", 2),
    ("link_id;frequency_ghz;length_km;polarization;threshold_dbm\nA;1.000,5;10;V;-70\n", "thousands", 2),
    ("# links of the north ring\n\n# fields in SI units\nlink_id,frequency_ghz,length_km,polarization,"
     "threshold_dbm\nA,23,10,V,-70\nB,23,abc,V,-70\n", "not a number", 6),
    ("link_id,frequency_ghz,length_km,polarization,threshold_dbm\nA\x07,23,10,V,-70\n", "control character", 2),
])
def test_case8_links_table_slips(tmp_path, text, fragment, line):
    from diag.links import read_links_table

    with pytest.raises(InputError, match=fragment) as info:
        read_links_table(_links_file(tmp_path, text))
    assert info.value.line == line


def test_case8_decimal_comma_in_a_semicolon_table_still_reads(tmp_path):
    from diag.links import read_links_table

    links = read_links_table(_links_file(tmp_path, "link_id;frequency_ghz;length_km;polarization;threshold_dbm\n"
                                                   "A;7,125;10,5;V;-70\n"))
    assert links[0].frequency_ghz == 7.125 and links[0].length_km == 10.5


@pytest.mark.parametrize("kwargs, fragment", [
    ({"floor": "inf"}, "receiver range"), ({"floor": "nan"}, "receiver range"), ({"floor": "-5"}, "receiver range"),
    ({"interval_s": -900}, "finite number of seconds"), ({"interval_s": float("nan")}, "finite number of seconds"),
    ({"interval_s": 1e12}, "finite number of seconds"), ({"signal_cols": ["Lo=rsl:H:min:inf"]}, "finite"),
])
def test_case9_nonsense_flags_refused(kwargs, fragment):
    from diag.read.mapping import mapping_from_options

    with pytest.raises(InputError, match=fragment):
        mapping_from_options(**kwargs)
    assert mapping_from_options(floor="-99", interval_s=900)["floor"]["dbm"] == -99.0
