"""``python -m diag ingest``: exit status 0 / 2, one-line errors naming file and line, --json content, --out."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from diag import schema as S
from diag.cli import main
from diag.read.store import read_parquet, read_store

ROOT = Path(__file__).resolve().parents[2]
GOOD = ("Time;Rx level H [dBm];Rx level V [dBm]\n01.12.2026 10:00:00;-45,5;-47,25\n01.12.2026 10:00:01;-99;LOS\n"
        "01.12.2026 10:00:01;-99;LOS\n01.12.2026 10:00:05;-46;\n")


def run_cli(args, capsys):
    code = main(["ingest", *map(str, args)])
    out, err = capsys.readouterr()
    return code, out, err


def test_json_report(tmp_path, capsys):
    p = tmp_path / "hop7.csv"
    p.write_text(GOOD)
    code, out, err = run_cli([p, "--json", "--tz", "Europe/Vienna"], capsys)
    assert code == 0
    rep = json.loads(out)
    assert rep["rows_read"] == 4 and rep["rows_kept"] == 3 and rep["rejected"] == {"duplicate": 1}
    assert rep["rows_read"] == rep["rows_kept"] + sum(rep["rejected"].values())
    assert rep["separator"] == ";" and rep["decimal"] == "," and rep["layout"] == "wide"
    assert rep["channels"] == ["H", "V"] and rep["links"] == ["hop7"] and rep["quantities"] == [S.RSL]
    assert rep["start_utc"] == "2026-12-01T09:00:00Z" and rep["end_utc"] == "2026-12-01T09:00:05Z"  # CET = UTC+1
    assert rep["values"] == {"read": 6, "ok": 3, "signal_lost": 2, "missing": 1,
                             "reasons": {"blank": 1, "signal_lost_marker": 1, "receiver_floor": 1}}
    assert rep["gap_count"] == 1 and rep["gaps"][0]["seconds"] == 3.0
    assert rep["time"]["zone"] == "Europe/Vienna"


def test_human_summary_and_out_parquet(tmp_path, capsys):
    p = tmp_path / "hop7.csv"
    p.write_text(GOOD)
    target = tmp_path / "n.parquet"
    code, out, _ = run_cli([p, "--out", target, "--link-id", "HOP-7"], capsys)
    assert code == 0 and "rows: read 4, kept 3" in out and "written:" in out
    t = read_parquet(target)
    assert t[S.LINK].unique().tolist() == ["HOP-7"] and len(t) == 6


def test_out_store_and_read_back(tmp_path, capsys):
    p = tmp_path / "hop7.csv"
    p.write_text(GOOD)
    code, _, _ = run_cli([p, "--out", tmp_path / "store"], capsys)
    assert code == 0
    code, out, _ = run_cli([tmp_path / "store", "--json"], capsys)
    assert code == 0 and json.loads(out)["rows_read"] == 6
    assert len(read_store(tmp_path / "store")) == 6


def test_override_flags(tmp_path, capsys):
    p = tmp_path / "x.csv"
    p.write_text("# export\nwhen|a|b\n2026-12-01 10:00:00|-45,5|-90\n2026-12-01 10:00:01|-45,6|-91\n")
    code, out, err = run_cli([p, "--json", "--header-line", "2", "--sep", "|", "--decimal", ",", "--time-col",
                              "when", "--time-format", "%Y-%m-%d %H:%M:%S", "--signal-col", "a=rsl:A",
                              "--signal-col", "b=rsl:B:min:900", "--floor-dbm", "-91", "--link-id", "L"], capsys)
    assert code == 0, err
    rep = json.loads(out)
    assert rep["channels"] == ["A", "B"] and rep["values"]["signal_lost"] == 1
    assert rep["columns"] == {"when": "time", "a": "rsl_dbm/sample", "b": "rsl_dbm/min"}


def test_mapping_file(tmp_path, capsys):
    p = tmp_path / "x.csv"
    p.write_text("stamp,lvl\n1796119200,-40\n1796119201,-41\n")
    m = tmp_path / "m.toml"
    m.write_text('[time]\ncolumns = ["stamp"]\nformat = "epoch_s"\n[signals]\nlvl = "rsl"\n[link]\nid = "Q"\n')
    code, out, err = run_cli([p, "--map", m, "--json"], capsys)
    assert code == 0, err
    assert json.loads(out)["start_utc"] == "2026-12-01T10:00:00Z"
    bad = tmp_path / "bad.toml"
    bad.write_text("[time\n")
    code, out, err = run_cli([p, "--map", bad], capsys)
    assert code == 2 and "bad.toml" in err and err.count("\n") == 1


@pytest.mark.parametrize("content, expect", [
    (b"", "empty"),
    (b"\x00\x01\x02PK\x03\x04" * 50, "binary"),
    (b"a;b\n1;2\n", "line 1: no time column"),
    (b"Time,foo\n2026-12-01T10:00:00Z,1\n", "line 1: no signal column"),
])
def test_bad_input_status_2_one_line(tmp_path, capsys, content, expect):
    p = tmp_path / "bad.csv"
    p.write_bytes(content)
    code, out, err = run_cli([p], capsys)
    assert code == 2 and out == ""
    assert err.startswith("diag: error: ") and str(p) in err and expect in err
    assert err.count("\n") == 1 and "Traceback" not in err


def test_missing_file_and_bad_zone(tmp_path, capsys):
    code, _, err = run_cli([tmp_path / "nope.csv"], capsys)
    assert code == 2 and "file not found" in err
    p = tmp_path / "x.csv"
    p.write_text(GOOD)
    code, _, err = run_cli([p, "--tz", "Nowhere/Else"], capsys)
    assert code == 2 and "time zone" in err and err.count("\n") == 1


def test_real_process_no_traceback(tmp_path):
    p = tmp_path / "bad.csv"
    p.write_bytes(b"Time,RSL (dBm)\n")
    r = subprocess.run([sys.executable, "-m", "diag", "ingest", str(p), "--json"], capture_output=True, text=True,
                       cwd=ROOT)
    assert r.returncode == 2 and r.stdout == ""
    assert r.stderr.strip().endswith("line 1: no data rows after the header") and "Traceback" not in r.stderr
