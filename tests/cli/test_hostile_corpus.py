"""The hostile corpus of issue 15: more than 100 inputs through ``diag ingest --json --out``.

Each input must end with status 0 or 2 (one error line, never a traceback); on status 0 the row accounting is exact
(rows read = kept + rejected by reason, and rows read = the data lines the test wrote where it knows them; values
read = ok + signal lost + missing) and nothing is written outside ``--out``.  Inputs are written by the test itself.
Memory against input size is measured in ``bench/bench_input_bounds.py``, not timed here.

No outside source is needed: the rules are the project's own contract (docs/usage.md §1-§3); the shapes are
common practice of network-management exports (separators, decimal commas, local time, markers such as LOS).
"""
from __future__ import annotations

import codecs
import datetime as dt
import gzip
import io
import json
import zipfile

import pytest

from diag.cli import main

T0 = dt.datetime(2026, 3, 2, tzinfo=dt.timezone.utc)
N = 40


def _t(i: int, fmt: str = "%Y-%m-%dT%H:%M:%SZ", step: int = 60) -> str:
    return (T0 + dt.timedelta(seconds=i * step)).strftime(fmt)


def _log(fmt: str = "%Y-%m-%dT%H:%M:%SZ", sep: str = ",", dec: str = ".", n: int = N, head: str | None = None,
         value=lambda i: -45 - (i % 7) * 0.3) -> tuple[str, int]:
    head = head or f"time{sep}RSL (dBm)"
    rows = [f"{_t(i, fmt)}{sep}{value(i):.1f}".replace(".", dec) if dec != "." else f"{_t(i, fmt)}{sep}{value(i):.1f}"
            for i in range(n)]
    if dec != ".":   # only the value gets the decimal comma
        rows = [f"{_t(i, fmt)}{sep}{f'{value(i):.1f}'.replace('.', dec)}" for i in range(n)]
    return head + "\n" + "\n".join(rows) + "\n", n


def _corpus() -> dict[str, tuple[bytes, int | None]]:
    """name -> (bytes, data rows written or None when the count is not the point)."""
    c: dict[str, tuple[bytes, int | None]] = {}

    def add(name: str, text: str | bytes, rows: int | None = None) -> None:
        c[name] = (text.encode() if isinstance(text, str) else text, rows)

    # 1. time shapes x separators x decimal marks (readable: every row kept)
    fmts = {"iso_z": "%Y-%m-%dT%H:%M:%SZ", "iso_naive": "%Y-%m-%d %H:%M:%S", "iso_off": "%Y-%m-%dT%H:%M:%S+01:00",
            "dmy_dot": "%d.%m.%Y %H:%M:%S", "mdy_slash": "%m/%d/%Y %H:%M", "ymd_slash": "%Y/%m/%d %H:%M:%S",
            "mon_name": "%d-%b-%Y %H:%M:%S", "ampm": "%m/%d/%Y %I:%M:%S %p"}
    for fname, fmt in fmts.items():
        for sname, sep in {"comma": ",", "semi": ";", "tab": "\t", "pipe": "|"}.items():
            dec = "," if sep != "," and fname in ("dmy_dot", "iso_z") else "."
            add(f"shape_{fname}_{sname}.csv", *_log(fmt, sep, dec))
    add("epoch_s.csv", "epoch,rsl_dbm\n" + "".join(f"{1772409600 + 60 * i},-45.{i % 9}\n" for i in range(N)), N)
    add("epoch_ms.csv", "ts_ms,rsl_dbm\n" + "".join(f"{1772409600000 + 60000 * i},-45.{i % 9}\n" for i in range(N)), N)
    add("date_and_time_cols.csv", "Datum;Uhrzeit;Pegel RSL (dBm)\n" + "".join(
        f"{_t(i, '%d.%m.%Y')};{_t(i, '%H:%M:%S')};-44,{i % 9}\n" for i in range(N)), N)
    add("date_and_time_offset.csv", "Datum;Uhrzeit;RSL (dBm)\n" + "".join(
        f"{_t(i, '%d.%m.%Y')};{_t(i, '%H:%M:%S')}+01:00;-44,{i % 9}\n" for i in range(N)), N)
    add("date_and_time_z.csv", "date,time,rsl_dbm\n" + "".join(
        f"{_t(i, '%Y-%m-%d')},{_t(i, '%H:%M:%S')}Z,-44.{i % 9}\n" for i in range(N)), N)

    # 2. defects in an otherwise good log (counted, never silent)
    good, n = _log()
    lines = good.splitlines()
    # an empty line is no row; a line of blanks is a row without a readable time (counted under bad_time)
    add("blank_lines.csv", "\n".join(lines[:10] + ["", "   "] + lines[10:]) + "\n", n + 1)
    add("exact_duplicates.csv", "\n".join(lines + lines[5:9]) + "\n", n + 4)
    add("conflicting_duplicate.csv", "\n".join(lines + [lines[3].rsplit(",", 1)[0] + ",-60.0"]) + "\n", n + 1)
    add("bad_time_rows.csv", "\n".join(lines + ["not a time,-45", "2026-13-45T99:00:00Z,-45"]) + "\n", n + 2)
    add("future_2150.csv", "\n".join(lines + ["2150-01-01T00:00:00Z,-45"]) + "\n", n + 1)
    add("past_1970.csv", "\n".join(lines + ["1970-01-01T00:00:00Z,-45"]) + "\n", n + 1)
    add("short_rows.csv", "time,rsl_h_dbm,rsl_v_dbm\n" + "".join(
        f"{_t(i)},-45" + (",-46\n" if i % 3 else "\n") for i in range(N)), N)
    add("long_rows.csv", "time,rsl_dbm\n" + "".join(
        f"{_t(i)},-45" + (",1,2\n" if i % 5 == 0 else "\n") for i in range(N)), N)
    add("trailing_separators.csv", "time,rsl_dbm,\n" + "".join(f"{_t(i)},-45.{i % 9},\n" for i in range(N)), N)
    add("quoted_fields.csv", '"time","rsl_dbm"\n' + "".join(f'"{_t(i)}","-45.{i % 9}"\n' for i in range(N)), N)
    add("crlf.csv", good.replace("\n", "\r\n"), n)
    add("bom_utf8.csv", codecs.BOM_UTF8 + good.encode(), n)
    add("utf16.csv", good.encode("utf-16"), n)
    add("latin1.csv", ("zeit (°UTC);Empfangspegel (dBm)\n" + "".join(
        f"{_t(i)};-45,{i % 9}\n" for i in range(N))).encode("latin-1"), N)
    for marker in ("LOS", "N/A", "---", "", "nan", "inf", "-inf", "1e400", "-0", "+-45", "=1+1", "@SUM(A1)"):
        add(f"marker_{marker or 'empty'}.csv".replace("/", "_"),
            "\n".join(lines[:20] + [f"{_t(100 + i)},{marker}" for i in range(3)] + lines[20:]) + "\n", n + 3)
    add("milliwatts.csv", "time,rx power (mW)\n" + "".join(f"{_t(i)},{1e-5 * (1 + i % 3):.6f}\n"
                                                           for i in range(N)), N)
    add("positive_db_levels.csv", "time,RSL (-dBm)\n" + "".join(f"{_t(i)},45.{i % 9}\n" for i in range(N)), N)
    add("floor_plateau.csv", "time,rsl_dbm\n" + "".join(f"{_t(i)},{-99 if 10 <= i < 25 else -45}\n"
                                                        for i in range(N)), N)
    add("out_of_order.csv", "\n".join(lines[:1] + lines[1:][::-1]) + "\n", n)
    add("preamble.csv", "Export of NE 17\nOperator: none\n\n" + good, n)
    add("month_first_week.csv", "Time;RSL (dBm)\n" + "".join(
        f"{(dt.datetime(2026, 11, 1) + dt.timedelta(minutes=15 * i)).strftime('%m/%d/%Y %H:%M')};-45.{i % 9}\n"
        for i in range(7 * 96)), 7 * 96)
    add("dst_gap_local.csv", "time,rsl_dbm\n" + "".join(
        f"2026-03-29 0{h}:{m:02d}:00,-45\n" for h in range(1, 4) for m in (0, 30)), 6)

    # 3. not logs at all, or damaged ones (status 2)
    add("empty.csv", b"")
    add("whitespace_only.csv", "  \n\n \t\n")
    add("header_only.csv", "time,rsl_dbm\n")
    add("binary_noise.csv", bytes((i * 131 + 7) % 256 for i in range(3000)))
    add("nul_bytes.csv", good.encode().replace(b"-45", b"\x00\x00", 3))
    add("json.csv", json.dumps([{"time": _t(i), "rsl": -45} for i in range(5)]))
    add("html.csv", "<!doctype html><html><body><table><tr><td>x</td></tr></table></body></html>")
    add("xml.csv", '<?xml version="1.0"?><log><row t="1"/></log>')
    add("pdf.csv", b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\n1 0 obj\n")
    add("png.csv", b"\x89PNG\r\n\x1a\n" + b"\x00" * 100)
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr("log.csv", good)
    add("zip.csv", buf.getvalue())
    add("gzip_ok.csv.gz", gzip.compress(good.encode(), mtime=0), n)
    add("gzip_truncated.csv.gz", gzip.compress(good.encode(), mtime=0)[:40])
    add("gzip_garbage.csv.gz", b"\x1f\x8b" + b"\x07" * 200)
    add("no_time_column.csv", "a,b\n" + "".join(f"x{i},y{i}\n" for i in range(10)))
    add("no_signal_column.csv", "time,comment\n" + "".join(f"{_t(i)},hello\n" for i in range(10)))
    add("all_bad_times.csv", "time,rsl_dbm\n" + "".join(f"soon {i},-45\n" for i in range(10)))
    add("one_separator_line.csv", ",,,,\n,,,,\n")
    add("control_chars.csv", "time,rsl_dbm\n" + "".join(f"{_t(i)}\x07,-45\x1b\n" for i in range(10)))
    add("very_long_line.csv", "time,rsl_dbm\n" + _t(0) + ",-45" + "9" * 200_000 + "\n" + _t(1) + ",-45\n")
    add("many_columns.csv", "time," + ",".join(f"RSL c{i} (dBm)" for i in range(200)) + "\n" + "".join(
        _t(i) + "," + ",".join("-45" for _ in range(200)) + "\n" for i in range(3)))

    # 4. long layouts with hostile link ids (store partitions must stay inside --out)
    for k, hop in enumerate(["../../escape", "/etc/passwd", "C:\\Windows\\x", "$\\foo{$", "CON", "a/b/../c",
                             "\u202eevil", "hop\ttab", "  spaced  ", "x" * 300, "%2e%2e%2f", "😀hop", ".", "..",
                             "=cmd|' /C calc'!A0", "hop\u0000nul"]):
        field = '"' + hop.replace('"', '""') + '"'
        add(f"hostile_id_{k:02d}.csv", "time,link_id,rsl_dbm\n" + "".join(f"{_t(i)},{field},-45.{i % 9}\n"
                                                                           for i in range(10)), None)
    add("two_hops_long.csv", "time,link_id,channel,rsl_dbm\n" + "".join(
        f"{_t(i)},{hop},{ch},-45.{i % 9}\n" for i in range(N) for hop in ("A", "B") for ch in ("H", "V")), 4 * N)
    add("quantity_name_layout.csv", "time,link,quantity,value\n" + "".join(
        f"{_t(i)},A,{q},{v}\n" for i in range(N) for q, v in (("rsl", -45), ("tsl", 20), ("bogus", 1))), 3 * N)
    return c


CORPUS = _corpus()


def test_the_corpus_has_more_than_100_inputs():
    assert len(CORPUS) > 100


@pytest.mark.parametrize("name", sorted(CORPUS))
def test_hostile_input(name, tmp_path, capsys):
    data, rows = CORPUS[name]
    inputs = tmp_path / "in"
    inputs.mkdir()
    path = inputs / name
    path.write_bytes(data)
    out = tmp_path / "out" / "store"
    before = {p for p in tmp_path.rglob("*")}
    code = main(["ingest", str(path), "--json", "--out", str(out)])
    got = capsys.readouterr()
    assert code in (0, 2), got.err
    assert "Traceback" not in got.err and "internal error" not in got.err
    written = {p for p in tmp_path.rglob("*")} - before
    assert all(tmp_path / "out" in p.parents or p == tmp_path / "out" for p in written), written
    if code == 2:
        errors = [ln for ln in got.err.splitlines() if ln.startswith("diag: error:")]
        assert len(errors) == 1 and (name in errors[0] or str(out) in errors[0]), got.err   # names what failed
        assert not out.exists()
        return
    rep = json.loads(got.out)
    assert rep["rows_read"] == rep["rows_kept"] + sum(rep["rejected"].values())
    v = rep["values"]
    assert v["read"] == v["ok"] + v["signal_lost"] + v["missing"]
    if rows is not None:
        assert rep["rows_read"] == rows, rep["rejected"]
    assert out.is_dir()
