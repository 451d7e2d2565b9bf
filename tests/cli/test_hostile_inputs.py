"""Bad, odd and hostile input files through the command line (issue 9).

Every corpus file is written by the test itself.  For each one, `python -m diag ingest --json` must either
succeed (status 0) with a report whose row accounting adds up (rows read = kept + rejected by reason), or fail with
status 2 and ONE line on stderr naming the file; never a traceback, never a hang (each call runs under an alarm),
never a file written outside the output folder.  The inputs that read cleanly also go through `analyze`.

No outside source is needed here: the rules are the project's own contract (docs/usage.md §1-§3), and the
conventions (mW vs dBm, receiver floors at -99/-100/-128 dBm) are common practice of the trade.
"""
from __future__ import annotations

import contextlib
import gzip
import io
import json
import signal
import zipfile
from pathlib import Path

import numpy as np
import pytest

from diag.cli import main

T0 = 1_780_000_000  # an arbitrary epoch second (2026)


def _iso(i: int, step: int = 60) -> str:
    import datetime as dt

    return dt.datetime.fromtimestamp(T0 + i * step, dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _rows(n: int, fmt, step: int = 60) -> str:
    return "".join(fmt(i, _iso(i, step)) for i in range(n))


def _good(n: int = 50) -> str:
    return "time,rsl_h_dbm,rsl_v_dbm\n" + _rows(
        n, lambda i, t: f"{t},{-45 - (i % 7) * 0.3:.1f},{-46 - (i % 5) * 0.2:.1f}\n")


def _corpus() -> dict[str, bytes]:
    c: dict[str, bytes] = {}
    good = _good()
    c["empty.csv"] = b""
    c["header_only.csv"] = b"time,rsl_dbm\n"
    c["binary.csv"] = bytes(np.random.default_rng(1).integers(0, 256, 4000, dtype=np.uint8))
    c["gzipped.csv.gz"] = gzip.compress(good.encode(), mtime=0)
    c["gzip_truncated.csv.gz"] = gzip.compress(good.encode(), mtime=0)[:60]
    c["utf16.csv"] = good.encode("utf-16")
    c["latin1_header.csv"] = ("zeit (°UTC);Empfangspegel H (dBm)\n" + _rows(
        30, lambda i, t: f"{t};{-50 - i % 3},5\n")).encode("latin-1")
    c["mixed_separators.csv"] = ("time,rsl_dbm\n" + _rows(
        30, lambda i, t: f"{t}{';' if i % 2 else ','}{-45 - i % 4}\n")).encode()
    c["ragged_rows.csv"] = ("time,rsl_h_dbm,rsl_v_dbm\n" + _rows(
        40, lambda i, t: f"{t},-45" + (",-46,99,extra\n" if i % 3 == 0 else ("\n" if i % 3 == 1 else ",-46\n")))
    ).encode()
    c["mixed_time_formats.csv"] = ("time,rsl_dbm\n" + _rows(
        40, lambda i, t: (f"{t},-45\n" if i % 2 else f"{t[8:10]}/{t[5:7]}/{t[:4]} {t[11:19]},-46\n"))).encode()
    lines = _good(60).splitlines(keepends=True)
    c["non_monotonic.csv"] = ("".join([lines[0]] + lines[1:][::-1])).encode()
    c["duplicated_times.csv"] = ("".join([lines[0]] + lines[1:] + lines[10:20])).encode()
    c["conflicting_duplicates.csv"] = ("".join([lines[0]] + lines[1:]) + lines[5].replace("-4", "-7")).encode()
    c["dst_spring_local.csv"] = ("time;rsl_dbm\n" + "".join(
        f"2026-03-29 {h:02d}:{m:02d}:00;-45,{m % 10}\n" for h in range(1, 4) for m in range(0, 60, 10))).encode()
    c["dst_autumn_local.csv"] = ("time;rsl_dbm\n" + "".join(
        f"2026-10-25 {h:02d}:{m:02d}:00;-45,{m % 10}\n" for h in (1, 2, 2, 3) for m in range(0, 60, 15))).encode()
    c["all_floor.csv"] = ("time,rsl_dbm\n" + _rows(50, lambda i, t: f"{t},-100\n")).encode()
    c["constant.csv"] = ("time,rsl_dbm\n" + _rows(50, lambda i, t: f"{t},-45.0\n")).encode()
    c["single_row.csv"] = b"time,rsl_dbm\n2026-05-01T00:00:00Z,-45\n"
    c["milliwatts.csv"] = ("time,rx power (mW)\n"
                           + _rows(40, lambda i, t: f"{t},{3.2e-5 * (1 + i % 3):.3e}\n")).encode()
    c["positive_db_below_mw.csv"] = ("time,rx level\n" + _rows(40, lambda i, t: f"{t},{45 + i % 4}\n")).encode()
    c["absurd_high.csv"] = ("time,rsl_dbm\n" + _rows(40, lambda i, t: f"{t},{50 if i % 5 == 0 else -45}\n")).encode()
    c["absurd_low.csv"] = ("time,rsl_dbm\n" + _rows(40, lambda i, t: f"{t},{-300 if i % 5 == 0 else -45}\n")).encode()
    head = "time," + ",".join(f"rsl_ch{k:03d}_dbm" for k in range(500)) + "\n"
    c["500_channels.csv"] = (head + _rows(20, lambda i, t: t + "," + ",".join(["-45.5"] * 500) + "\n")).encode()
    c["very_long_line.csv"] = ("time,rsl_dbm,note\n" + _rows(
        10, lambda i, t: f"{t},-45,{'x' * (400_000 if i == 3 else 5)}\n")).encode()
    c["formula_link_names.csv"] = ("time,link,rsl_dbm\n" + _rows(
        20, lambda i, t: f"{t},\"=cmd|' /C calc'!A0\",-45\n{t},+SUM(A1),-47\n{t},@evil,-46\n")).encode()
    c["path_link_names.csv"] = ("time,link,rsl_dbm\n" + _rows(
        20, lambda i, t: f"{t},../../etc/passwd,-45\n{t},C:\\\\Windows\\\\x,-46\n{t},/abs/path,-44\n")).encode()
    c["no_time_column.csv"] = b"foo,rsl_dbm\n1,-45\n2,-46\n"
    c["no_signal_column.csv"] = ("time,comment\n" + _rows(10, lambda i, t: f"{t},hello\n")).encode()
    c["only_blanks.csv"] = ("time,rsl_dbm\n" + _rows(20, lambda i, t: f"{t},\n")).encode()
    c["bom_crlf.csv"] = b"\xef\xbb\xbf" + good.replace("\n", "\r\n").encode()
    c["cr_only.csv"] = good.replace("\n", "\r").encode()
    c["tab_trailing.tsv"] = ("time\trsl_dbm\t\n" + _rows(20, lambda i, t: f"{t}\t-45\t\n")).encode()
    c["quoted_newlines.csv"] = ('time,rsl_dbm,comment\n' + _rows(
        20, lambda i, t: f'"{t}","-45","a, b\nsecond line"\n')).encode()
    c["epoch_ms.csv"] = ("epoch_ms,rsl_dbm\n" + "".join(f"{(T0 + i) * 1000},-45\n" for i in range(30))).encode()
    c["far_dates.csv"] = b"time,rsl_dbm\n1970-01-01T00:00:00Z,-45\n9999-12-31T23:59:59Z,-46\n2026-01-01T00:00:00Z,-45\n"
    c["some_bad_times.csv"] = ("time,rsl_dbm\n" + _rows(
        30, lambda i, t: f"{'not-a-time' if i % 7 == 0 else t},-45\n")).encode()
    c["nul_bytes.csv"] = good.encode().replace(b",-4", b",\x00-4", 3)
    c["separators_only_line.csv"] = (good + ",,,\n,,\n").encode()
    c["html_export.csv"] = b"<!DOCTYPE html><html><body><table><tr><td>time</td></tr></table></body></html>\n"
    c["json_export.csv"] = json.dumps([{"time": _iso(i), "rsl": -45} for i in range(5)]).encode()
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        zf.writestr("[Content_Types].xml", "<Types/>")
    c["spreadsheet.xlsx"] = buf.getvalue()
    c["repeated_header.csv"] = (good + _good(10)).encode()
    c["blank_column_names.csv"] = ("time,,,rsl_dbm,\n" + _rows(20, lambda i, t: f"{t},1,2,-45,\n")).encode()
    c["duplicate_column_names.csv"] = ("time,rsl_dbm,rsl_dbm\n" + _rows(20, lambda i, t: f"{t},-45,-46\n")).encode()
    c["units_in_cells.csv"] = ("time,rsl\n" + _rows(20, lambda i, t: f"{t},-45.{i % 10} dBm\n")).encode()
    c["fractional_seconds.csv"] = ("time,rsl_dbm\n" + "".join(
        f"2026-05-01T00:00:{i // 10:02d}.{i % 10}00Z,-45\n" for i in range(50))).encode()
    c["markers.csv"] = ("time,rsl_dbm\n" + _rows(
        40, lambda i, t: f"{t},{['-45', 'LOS', 'N/A', '---', '', '-128'][i % 6]}\n")).encode()
    # a few 1-s readings and one stray stamp 17 months later: a regular grid over it would need ~45 M points
    c["stray_far_timestamp.csv"] = (b"time,rsl_dbm\n2026-01-01T00:00:00Z,-45\n2026-01-01T00:00:01Z,-46\n"
                                    b"2026-01-01T00:00:02Z,-46\n2027-06-01T00:00:00Z,-45\n")
    return c


CORPUS = _corpus()
OPTIONS = {"dst_spring_local.csv": ["--tz", "Europe/Vienna"], "dst_autumn_local.csv": ["--tz", "Europe/Vienna"]}


# What `ingest --json` must do with each file, worked out from how the file is built above (not copied from a run):
# status 2 with a word the one-line message must contain, or status 0 with (rows read, rows kept, {reason: rows}).
REFUSED = {
    "binary.csv": "binary", "nul_bytes.csv": "binary",            # NUL bytes / random bytes are not text
    "empty.csv": "empty", "header_only.csv": "no data rows",
    "gzip_truncated.csv.gz": "truncated",                         # a 60-byte head of a gzip stream
    "html_export.csv": "HTML", "json_export.csv": "JSON", "spreadsheet.xlsx": "spreadsheet",
    "no_time_column.csv": "no time column", "no_signal_column.csv": "no signal column",
    "500_channels.csv": "channels",   # over the channels-per-hop bound (64; README "Limits", diag/read/limits.py)
}
READ = {
    # name: (rows read, rows kept, rejected by reason)
    "absurd_high.csv": (40, 40, {}), "absurd_low.csv": (40, 40, {}),
    "all_floor.csv": (50, 50, {}), "blank_column_names.csv": (20, 20, {}), "bom_crlf.csv": (50, 50, {}),
    "conflicting_duplicates.csv": (61, 60, {"conflicting_duplicate": 1}),   # one repeated time, another value
    "constant.csv": (50, 50, {}), "cr_only.csv": (50, 50, {}),
    "dst_autumn_local.csv": (16, 8, {"dst_ambiguous": 8}),     # 02:00-02:59 happens twice on 25 Oct (Vienna)
    "dst_spring_local.csv": (18, 12, {"dst_nonexistent": 6}),  # 02:00-02:59 does not exist on 29 Mar (Vienna)
    "duplicate_column_names.csv": (20, 20, {}), "duplicated_times.csv": (70, 60, {"duplicate": 10}),
    "epoch_ms.csv": (30, 30, {}), "far_dates.csv": (3, 1, {"time_out_of_range": 2}),   # 1970 and 9999
    "formula_link_names.csv": (60, 60, {}), "fractional_seconds.csv": (50, 50, {}), "gzipped.csv.gz": (50, 50, {}),
    "latin1_header.csv": (30, 30, {}), "markers.csv": (40, 40, {}), "milliwatts.csv": (40, 40, {}),
    "mixed_separators.csv": (30, 15, {"bad_time": 15}),        # the ';' half does not split: time cell unreadable
    "mixed_time_formats.csv": (40, 20, {"bad_time": 20}),      # one format per column: the dd/mm/yyyy half
    "non_monotonic.csv": (60, 60, {}), "only_blanks.csv": (20, 20, {}), "path_link_names.csv": (60, 60, {}),
    "positive_db_below_mw.csv": (40, 40, {}), "quoted_newlines.csv": (20, 20, {}),
    "ragged_rows.csv": (40, 26, {"too_many_fields": 14}),      # rows i % 3 == 0 of 40: 14 carry extra fields
    "repeated_header.csv": (61, 50, {"bad_time": 1, "duplicate": 10}),   # the 2nd header, then 10 repeated times
    "separators_only_line.csv": (52, 50, {"bad_time": 2}), "single_row.csv": (1, 1, {}),
    "some_bad_times.csv": (30, 25, {"bad_time": 5}),          # i % 7 == 0 for i < 30: 5 rows
    "stray_far_timestamp.csv": (4, 4, {}), "tab_trailing.tsv": (20, 20, {}), "units_in_cells.csv": (20, 20, {}),
    "utf16.csv": (50, 50, {}), "very_long_line.csv": (10, 10, {}),
}


def test_every_corpus_file_has_an_expected_outcome():
    assert not set(REFUSED) & set(READ)
    assert set(REFUSED) | set(READ) == set(CORPUS)
    assert len(CORPUS) >= 40  # issue 9: at least 40 bad or odd inputs


@contextlib.contextmanager
def _bounded(seconds: int):
    """Fail (instead of hanging) when a call takes longer than ``seconds``."""

    def _raise(signum, frame):
        raise TimeoutError(f"call took longer than {seconds} s")

    old = signal.signal(signal.SIGALRM, _raise)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


def _files_under(root: Path) -> set[Path]:
    return {p for p in root.rglob("*")}


def _run(capsys, argv: list[str], seconds: int = 60) -> tuple[int, str, str]:
    with _bounded(seconds):
        rc = main(argv)
    captured = capsys.readouterr()
    return rc, captured.out, captured.err


def _check_failure(rc: int, err: str, name: str):
    assert rc == 2, f"{name}: status {rc}, stderr {err!r}"
    lines = [ln for ln in err.splitlines() if ln.startswith("diag: error")]
    assert len(lines) == 1, f"{name}: expected one error line, got {err!r}"
    assert lines[0].startswith("diag: error:")
    assert name in lines[0], f"{name}: the message must name the file: {lines[0]!r}"
    assert "Traceback" not in err


@pytest.mark.parametrize("name", sorted(CORPUS))
def test_ingest_corpus(tmp_path, capsys, name):
    path = tmp_path / name
    path.write_bytes(CORPUS[name])
    before = _files_under(tmp_path)
    rc, out, err = _run(capsys, ["ingest", str(path), "--json", *OPTIONS.get(name, [])])
    assert "Traceback" not in err and "internal error" not in err, f"{name}: {err!r}"
    if rc == 0:
        report = json.loads(out)
        rejected = sum(report["rejected"].values())
        assert report["rows_read"] == report["rows_kept"] + rejected, (name, report["rejected"])
        assert name in READ, f"{name}: read, but it should have been refused"
        rows_read, rows_kept, reasons = READ[name]
        assert (report["rows_read"], report["rows_kept"]) == (rows_read, rows_kept), name
        assert {k: v for k, v in report["rejected"].items() if v} == reasons, name
    else:
        _check_failure(rc, err, name)
        assert name in REFUSED, f"{name}: refused, but it should have been read"
        assert REFUSED[name].lower() in err.lower(), (name, err)
    assert _files_under(tmp_path) == before  # ingest without --out writes nothing


# `analyze` costs ~1 s a file (45 s for the corpus, 500_channels.csv alone ~7 s): the quick run (-m "not slow")
# analyses one file of each kind of trouble; the full run analyses them all.  `ingest` runs on every file always.
QUICK_ANALYSE = {"empty.csv", "binary.csv", "markers.csv", "formula_link_names.csv", "path_link_names.csv",
                 "dst_spring_local.csv", "stray_far_timestamp.csv", "ragged_rows.csv"}
LINK_FLAGS = ["--freq-ghz", "23", "--length-km", "8", "--polarization", "H", "--threshold-dbm", "-72"]


@pytest.mark.parametrize("name", [n if n in QUICK_ANALYSE else pytest.param(n, marks=pytest.mark.slow)
                                  for n in sorted(CORPUS)])
def test_analyze_corpus(tmp_path, capsys, name):
    path = tmp_path / "in" / name
    path.parent.mkdir()
    path.write_bytes(CORPUS[name])
    out_dir = tmp_path / "out"
    rc, out, err = _run(capsys, ["analyze", str(path), *LINK_FLAGS, "--out", str(out_dir),
                                 *OPTIONS.get(name, [])], seconds=120)
    assert "Traceback" not in err and "internal error" not in err, f"{name}: {err!r}"
    if rc != 0:
        _check_failure(rc, err, name)
    # nothing written outside the output folder (hostile link ids must not escape it)
    outside = {p for p in _files_under(tmp_path) if out_dir not in p.parents and p != out_dir}
    assert outside == {path.parent, path}
    for written in _files_under(out_dir) if out_dir.exists() else ():
        assert written.resolve().is_relative_to(out_dir.resolve())


def test_no_traceback_in_a_real_process(tmp_path):
    """The same contract seen from outside: a separate interpreter, status 2, one line, no traceback."""
    import subprocess
    import sys

    bad = tmp_path / "binary.csv"
    bad.write_bytes(CORPUS["binary.csv"])
    proc = subprocess.run([sys.executable, "-m", "diag", "ingest", str(bad)], capture_output=True, text=True,
                          timeout=120, cwd=Path(__file__).resolve().parents[2])
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1


def test_truncated_gzip_is_named_as_such(tmp_path, capsys):
    """A cut-off download must not be reported as an empty file (project convention: the message says what to fix)."""
    for name, data in (("head.csv.gz", CORPUS["gzip_truncated.csv.gz"]),
                       ("half.csv.gz", gzip.compress(_good(2000).encode(), mtime=0)[:3000])):
        path = tmp_path / name
        path.write_bytes(data)
        rc, out, err = _run(capsys, ["ingest", str(path), "--json"])
        _check_failure(rc, err, name)
        assert "gzip" in err and "truncated" in err
