"""Trusting the input (issue 15): no silent reassignment, no silent guess, validated tables and flags, bounded
resources, atomic outputs.  Each numbered case of the issue is one or more tests here, named ``test_case<N>_...``.

No outside source is needed: the rules are the project's own contract (docs/usage.md §1-§3 and the accounting
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
    from diag.read.hop_match import assign_hops, hop_of_file_name

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
    stamps = []   # every day number <= 12: only the steps and the span tell month-first from day-first
    t = dt.datetime(2026, 11, 1, 0, 0)
    while t < dt.datetime(2026, 11, 4):
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


# ---------------------------------------------------------------------------------------------------------------
# cases 12, 13, 14: atomic outputs, non-regular files, status 2 (never 1) with one line

@pytest.fixture()
def hop(tmp_path):
    """A small clean log of HOP-A and its one-row links table."""
    log = tmp_path / "HOP-A.csv"
    log.write_text(_wide_log(n=300))
    links = tmp_path / "links.csv"
    links.write_text(LINKS_HEADER + "HOP-A,23,10,V,-70\n")
    return tmp_path, log, links


def _status(capsys, *argv: str) -> tuple[int, str]:
    code = main(list(argv))
    err = capsys.readouterr().err.strip()
    return code, err


def _one_error_line(err: str) -> bool:
    lines = [ln for ln in err.splitlines() if not ln.startswith("diag: warning:")]
    return len(lines) == 1 and lines[0].startswith("diag: error:") and "Traceback" not in err


def test_case12_symlink_in_out_is_replaced_never_followed(hop, capsys):
    root, log, links = hop
    victim = root / "victim.txt"
    victim.write_text("keep me")
    out = root / "out"
    out.mkdir()
    (out / "events.csv").symlink_to(victim)
    code, _ = _status(capsys, "analyze", str(log), "--links", str(links), "--out", str(out), "--quiet")
    assert code == 0 and victim.read_text() == "keep me"
    assert not (out / "events.csv").is_symlink() and (out / "events.csv").read_text().startswith("link_id")
    assert sorted(p.name for p in root.iterdir()) == ["HOP-A.csv", "links.csv", "out", "victim.txt"]  # no temp left


def test_case12_outputs_made_beside_then_moved_a_failure_leaves_the_old_run_whole(hop, capsys, monkeypatch):
    root, log, links = hop
    out = root / "out"
    assert _status(capsys, "analyze", str(log), "--links", str(links), "--out", str(out), "--quiet")[0] == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    import diag.report as report

    def broken_pdf(results):   # the PDF stage dies after the CSV files were made
        raise MemoryError
    monkeypatch.setattr(report, "pdf_bytes", broken_pdf)
    faded = _wide_log(n=300).splitlines()
    faded[101:140] = [f"{_stamp(i - 1)},-80.0" for i in range(101, 140)]   # a deep fade: new events.csv rows
    log.write_text("\n".join(faded) + "\n")
    code, err = _status(capsys, "analyze", str(log), "--links", str(links), "--out", str(out), "--quiet")
    assert code == 2 and {p.name: p.read_bytes() for p in out.iterdir()} == before
    assert sorted(p.name for p in root.iterdir()) == ["HOP-A.csv", "links.csv", "out"]


def test_case12_store_replaced_only_when_the_new_one_is_complete(hop, capsys, monkeypatch):
    root, log, _ = hop
    from diag.read import store

    out = root / "store"
    assert _status(capsys, "ingest", str(log), "--out", str(out))[0] == 0
    marker = (out / store.MARKER).read_bytes()
    real = store.write_store

    def dies_halfway(table, directory):
        real(table, directory)
        raise OSError(28, "No space left on device")
    monkeypatch.setattr(store, "write_store", dies_halfway)
    code, err = _status(capsys, "ingest", str(log), "--out", str(out))
    assert code == 2 and "No space left" in err and (out / store.MARKER).read_bytes() == marker
    assert store.read_store(out).shape[0] == 300
    assert sorted(p.name for p in root.iterdir()) == ["HOP-A.csv", "links.csv", "store"]


@pytest.mark.skipif(not hasattr(__import__("os"), "mkfifo"), reason="needs named pipes")
@pytest.mark.parametrize("where", ["log", "gauge", "links", "map"])
def test_case13_fifo_is_refused_never_opened(hop, capsys, where):
    import os

    root, log, links = hop
    fifo = root / "pipe.csv"
    os.mkfifo(fifo)
    args = {"log": ["analyze", str(fifo), "--links", str(links)],
            "gauge": ["analyze", str(log), "--links", str(links), "--gauge", str(fifo)],
            "links": ["analyze", str(log), "--links", str(fifo)],
            "map": ["analyze", str(log), "--links", str(links), "--map", str(fifo)]}[where]
    code, err = _status(capsys, *args, "--out", str(root / "out"), "--quiet")   # would block forever if opened
    assert code == 2 and _one_error_line(err) and "not a regular file" in err


def _case14(root, log, links) -> dict[str, list[str]]:
    (root / "afile").write_text("x")
    (root / "dir.parquet").mkdir()
    (root / "bin.toml").write_bytes(bytes(range(256)))
    maps = {"hl": '[file]\nheader_line = "abc"\n', "sep": '[file]\nseparator = "ab"\n', "ivx": 'interval_s = "x"\n',
            "ivinf": "interval_s = inf\n", "ivbig": "interval_s = 1e12\n", "sect": 'file = "x"\n',
            "fmt": '[time]\nformat = "%"\n', "zone": '[time]\nzone = "Mars/Olympus"\n'}
    for name, body in maps.items():
        (root / f"{name}.toml").write_text(body)
    (root / "g_range.csv").write_text("time,rain_mmh\n2026-03-02T00:00:00Z,0\n2150-03-02T00:05:00Z,1\n")
    (root / "g_mixed.csv").write_text("time,rain_mmh\n2026-03-02T00:00:00+01:00,0\n2026-03-02T00:05:00+02:00,1\n"
                                      "2026-03-02T00:10:00,1\n")
    a = ["analyze", str(log), "--links", str(links), "--quiet", "--out"]
    cases = {"out_is_file": a + [str(root / "afile")],
             "parquet_out_is_folder": ["ingest", str(log), "--out", str(root / "dir.parquet")],
             "binary_map": ["ingest", str(log), "--map", str(root / "bin.toml")],
             "sep_flag": ["ingest", str(log), "--sep", "::"],
             "time_format_flag": ["ingest", str(log), "--time-format", "%"],
             "gauge_out_of_range": a + [str(root / "o1"), "--gauge", str(root / "g_range.csv")],
             "gauge_mixed_offsets": a + [str(root / "o2"), "--gauge", str(root / "g_mixed.csv")],
             "store_name_too_long": ["ingest", str(log), "--out", str(root / ("s" * 300))],
             "interval_flag_nan": ["ingest", str(log), "--interval-s", "nan"],
             "floor_flag_inf": ["ingest", str(log), "--floor-dbm", "inf"]}
    for name in maps:
        cases[f"map_{name}"] = ["ingest", str(log), "--map", str(root / f"{name}.toml")]
    return cases


CASE14 = ["out_is_file", "parquet_out_is_folder", "binary_map", "sep_flag", "time_format_flag", "gauge_out_of_range",
          "gauge_mixed_offsets", "store_name_too_long", "interval_flag_nan", "floor_flag_inf", "map_hl", "map_sep",
          "map_ivx", "map_ivinf", "map_ivbig", "map_sect", "map_fmt", "map_zone"]


@pytest.mark.parametrize("case", CASE14)
def test_case14_status_2_with_one_line(hop, capsys, case):
    root, log, links = hop
    code, err = _status(capsys, *_case14(root, log, links)[case])
    assert code == 2 and _one_error_line(err), err
    assert not (root / "o1").exists() and not (root / "o2").exists()


def test_case14_tampered_store_is_status_2(hop, capsys):
    import pyarrow as pa
    import pyarrow.parquet as pq

    root, log, _ = hop
    out = root / "store"
    assert _status(capsys, "ingest", str(log), "--out", str(out))[0] == 0
    part = next(out.glob("link=*/day=*/part.parquet"))
    pq.write_table(pa.table({"a": [1, 2]}), part)
    code, err = _status(capsys, "ingest", str(out))
    assert code == 2 and _one_error_line(err) and "store" in err


def test_case14_batch_with_a_dollar_id_writes_a_whole_network_page(tmp_path, capsys):
    log = tmp_path / "net.csv"
    log.write_text(_long_log(["$\\foo{$"], n=200))
    links = tmp_path / "links.csv"
    links.write_text(LINKS_HEADER + "$\\foo{$,23,10,V,-70\n")
    code, err = _status(capsys, "batch", str(log), "--links", str(links), "--out", str(tmp_path / "o"), "--workers",
                        "1", "--quiet", "--no-hop-pdf")
    assert code == 0, err
    from pypdf import PdfReader

    assert len(PdfReader(tmp_path / "o" / "network_report.pdf").pages) == 1


# ---------------------------------------------------------------------------------------------------------------
# case 11: the simulator writes only under --out

@pytest.mark.parametrize("shape", ["wide_iso", "stats", "long"])
def test_case11_simulate_never_writes_outside_out(tmp_path, capsys, shape):
    scen = tmp_path / "evil.toml"
    scen.write_text(f'''name = "../../escape"
description = "hostile ids"
start = "2026-06-08T00:00:00Z"
duration_h = 1
interval_s = 10

[[link]]
link_id = "../../../outside"
frequency_ghz = 23.0
length_km = 6.0
polarization = "V"
threshold_dbm = -70
log_shape = "{shape}"

[[link]]
link_id = "{tmp_path / 'abs'}"
frequency_ghz = 13.0
length_km = 20.0
polarization = "V"
threshold_dbm = -76
log_shape = "{shape}"
''')
    out = tmp_path / "a" / "b" / "out"
    code = main(["simulate", "--scenario", str(scen), "--out", str(out), "--no-truth-samples"])
    assert code == 0, capsys.readouterr().err
    files = [p for p in tmp_path.rglob("*") if p.is_file() and p != scen]
    assert files and all(out.resolve() in p.resolve().parents for p in files)
    assert not list(tmp_path.glob("abs*"))   # the absolute id named a place outside --out: nothing there
    assert any(p.suffix == ".csv" for p in (out / "logs").rglob("*"))


# ---------------------------------------------------------------------------------------------------------------
# case 10: resource bounds (enforced here; memory against input size is measured in bench/bench_input_bounds.py)

def test_case10_gzip_bomb_stops_at_the_decompressed_bound(monkeypatch):
    import gzip

    from diag.read import limits

    monkeypatch.setattr(limits, "MAX_DECOMPRESSED_BYTES", 2_000_000)
    line = b"2026-03-02T00:00:00Z,-45.0\n"
    bomb = gzip.compress(b"time,rsl_dbm\n" + line * (20_000_000 // len(line)), mtime=0)
    assert len(bomb) < 100_000
    with pytest.raises(InputError, match="decompresses to more than 2 MB"):
        read_log(bomb, name="bomb.csv.gz")
    from diag.read.gauge import read_gauge

    with pytest.raises(InputError, match="decompresses"):
        read_gauge(gzip.compress(b"time,rain_mmh\n" + b"2026-03-02T00:00:00Z,1\n" * 200_000, mtime=0),
                   name="g.csv.gz")


def test_case10_hops_per_file_and_channels_per_hop_are_bounded(monkeypatch):
    from diag.read import limits

    monkeypatch.setattr(limits, "MAX_HOPS_PER_FILE", 50)
    with pytest.raises(InputError, match="more than 50 hops"):
        read_log(_long_log([f"H{i}" for i in range(60)], n=2).encode(), name="many.csv")
    assert read_log(_long_log([f"H{i}" for i in range(50)], n=2).encode(), name="ok.csv").report.rows_kept == 100
    monkeypatch.setattr(limits, "MAX_CHANNELS_PER_HOP", 8)
    wide = "time," + ",".join(f"RSL c{i} (dBm)" for i in range(9)) + "\n" + "".join(
        f"{_stamp(i)}," + ",".join("-45" for _ in range(9)) + "\n" for i in range(5))
    with pytest.raises(InputError, match="channels"):
        read_log(wide.encode(), name="wide.csv")
    long_ = "time,link_id,channel,rsl_dbm\n" + "".join(f"{_stamp(0)},A,c{i},-45\n" for i in range(9))
    with pytest.raises(InputError, match="channels"):
        read_log(long_.encode(), name="long.csv")


def test_case10_report_per_hop_does_not_grow_with_the_hops_in_the_file(tmp_path):
    import json

    from diag.pipeline import analyze_files
    from diag.read.ingest_report import hop_view

    sizes = {}
    for n in (2, 400):
        rep = read_log(_long_log([f"H{i:03d}" for i in range(n)], n=3).encode(), name="net.csv").report.to_dict()
        view = hop_view(rep, "H000")
        assert view["links"] == ["H000"] and view["hops_in_file"] == n and view["rows_read"] == 3 * n
        sizes[n] = (len(json.dumps(view)), len(json.dumps(rep)))
    assert sizes[400][0] < 1.2 * sizes[2][0]      # the hop's part: independent of the ids in the file
    assert sizes[400][1] > 5 * sizes[2][1]        # (the whole report, once copied per hop, grows with them)
    path = tmp_path / "net3.csv"
    path.write_text(_long_log(["H0", "H1", "H2"], n=240))
    results = analyze_files([path], links=[_link("H0"), _link("H1"), _link("H2")])
    assert [r.ingest["files"][0]["links"] for r in results] == [["H0"], ["H1"], ["H2"]]


# ---------------------------------------------------------------------------------------------------------------
# cases 4 and 15: what the dashboard relies on (library side; the page itself is tests/test_dashboard.py)

def test_case4_polarisation_comes_from_the_channels_or_is_none():
    from diag.links import polarisation_from_channels

    assert polarisation_from_channels(["H", "V"]) == "dual"
    assert polarisation_from_channels(["RSL V near", "RSL V far"]) == "V"
    assert polarisation_from_channels(["main"]) is None     # never assumed (the form then asks)


def test_case15_upload_named_dot_csv_and_a_1e12_interval():
    from diag.read.mapping import mapping_from_options
    from diag.read.sniff import file_stem

    assert file_stem(".csv") == "link" and file_stem("x/.csv.gz") == "link"
    rep = read_log(_wide_log().encode(), name=".csv").report
    assert rep.links == ["link"]
    with pytest.raises(InputError, match="finite number of seconds"):
        mapping_from_options(signal_cols=["Lo=rsl:H:min:1e12"])


# ---------------------------------------------------------------------------------------------------------------
# case 16: worker warnings on batch output, one line each

def test_case16_batch_worker_warnings_are_one_line_each(tmp_path):
    log = tmp_path / "HOP-A.csv"
    log.write_text(_wide_log(n=300) + f"{_stamp(400)},-45,99,extra\n{_stamp(401)}\n")
    links = tmp_path / "links.csv"
    links.write_text(LINKS_HEADER + "HOP-A,23,10,V,-70\n")
    run = _cli("batch", str(log), "--links", str(links), "--out", str(tmp_path / "o"), "--workers", "1",
               "--no-hop-pdf", "--quiet", timeout=300)
    assert run.returncode == 0, run.stderr
    warned = [ln for ln in run.stderr.splitlines() if "warning" in ln.lower()]
    assert warned and all(ln.startswith("diag: warning: ") for ln in warned), run.stderr
    assert ".py:" not in run.stderr and "read_log(" not in run.stderr and len(warned) == len(set(warned))
