"""``python -m diag analyze``: status 0 on demo-like inputs with the contract outputs, status 2 with one line on bad
input (docs/usage.md §1: commands and exit status; output file columns from diag.schema)."""
from __future__ import annotations

import csv
import json

import pytest

from diag import schema as S
from diag.cli import main
from diag.sim.log_shapes import write_scenario
from diag.sim.scenarios import load_scenario
from diag.sim.simulate import simulate_scenario


@pytest.fixture(scope="module")
def demo_like(tmp_path_factory):
    """The built-in 'quick' scenario (2 invented hops, 6 h; one 1-s log, one 15-min statistics file)."""
    root = tmp_path_factory.mktemp("quick")
    scenario = load_scenario("quick")
    results, _ = simulate_scenario(scenario, seed=1)
    write_scenario(results, scenario, root, truth_samples=False)
    return root


def _header(path):
    with open(path, newline="", encoding="utf-8") as handle:
        return next(csv.reader(handle))


def test_analyze_demo_like_folder(demo_like, tmp_path, capsys):
    out = tmp_path / "out"
    status = main(["analyze", str(demo_like / "logs"), "--links", str(demo_like / "links.csv"), "--out", str(out)])
    captured = capsys.readouterr()
    assert status == 0, captured.err
    for name in ("events.csv", "findings.json", "outage_summary.csv", "outage_by_cause.csv", "report.pdf"):
        assert (out / name).exists() and (out / name).stat().st_size > 0
    assert _header(out / "events.csv")[:len(S.EVENT_COLUMNS)] == S.EVENT_COLUMNS
    assert _header(out / "outage_summary.csv")[:len(S.OUTAGE_SUMMARY_COLUMNS)] == S.OUTAGE_SUMMARY_COLUMNS
    assert _header(out / "outage_by_cause.csv")[:len(S.OUTAGE_BY_CAUSE_COLUMNS)] == S.OUTAGE_BY_CAUSE_COLUMNS
    with open(out / "events.csv", newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert rows and {r["cause"] for r in rows} <= set(S.CAUSES)
    assert all(r["start_utc"].endswith("Z") or "+00:00" in r["start_utc"] for r in rows)  # ISO 8601 UTC
    json.loads((out / "findings.json").read_text(encoding="utf-8"))
    assert "[" in captured.err and "analysing" in captured.err  # progress lines on stderr
    assert "QK-RIDGE-FORD" in captured.out


def test_analyze_single_hop_from_flags(demo_like, tmp_path, capsys):
    log = demo_like / "logs" / "QK-RIDGE-FORD.csv"
    out = tmp_path / "flags"
    status = main(["analyze", str(log), "--freq-ghz", "23", "--length-km", "4", "--polarization", "dual",
                   "--threshold-dbm", "-70", "--link-id", "QK-RIDGE-FORD", "--out", str(out), "--quiet"])
    captured = capsys.readouterr()
    assert status == 0, captured.err
    assert (out / "events.csv").exists()
    assert captured.err.strip() == "" or "warning" in captured.err


@pytest.mark.parametrize("argv,needle", [
    (["analyze", "missing.csv", "--freq-ghz", "23", "--length-km", "4", "--polarization", "H",
      "--threshold-dbm", "-70", "--out", "OUT"], "no such file"),
    (["analyze", "LOGS", "--freq-ghz", "23", "--out", "OUT"], "describe the hop"),
    (["analyze", "LOGS", "--links", "LINKS", "--freq-ghz", "23", "--out", "OUT"], "not both"),
    (["analyze", "LOGS", "--freq-ghz", "23", "--length-km", "4", "--polarization", "X", "--threshold-dbm", "-70",
      "--out", "OUT"], "polarization"),
])
def test_bad_input_is_status_2_one_line(demo_like, tmp_path, capsys, argv, needle):
    argv = [a.replace("LOGS", str(demo_like / "logs")).replace("LINKS", str(demo_like / "links.csv"))
            .replace("OUT", str(tmp_path / "o")).replace("missing.csv", str(tmp_path / "missing.csv")) for a in argv]
    status = main(argv)
    err = capsys.readouterr().err
    assert status == 2
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1 and needle in lines[0]
    assert "Traceback" not in err


def test_garbage_log_is_status_2(tmp_path, capsys):
    bad = tmp_path / "hop.csv"
    bad.write_text("this is not,a log\nat,all\n", encoding="utf-8")
    status = main(["analyze", str(bad), "--freq-ghz", "23", "--length-km", "4", "--polarization", "H",
                   "--threshold-dbm", "-70", "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert status == 2
    assert str(bad) in err and "Traceback" not in err
