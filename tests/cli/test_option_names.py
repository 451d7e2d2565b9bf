"""One set of option names across commands (issue 16): the same flag for the same quantity, old names kept.

Consistency checks of our own command-line surface (docs/usage.md §1-§3); no outside source needed.
"""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def _diag(*args, cwd=ROOT):
    return subprocess.run([sys.executable, "-m", "diag", *map(str, args)], capture_output=True, text=True, cwd=cwd,
                          timeout=300)


@pytest.mark.parametrize("new, old", [(["--antenna-gain-dbi", "40"], ["--gain-dbi", "40"]),
                                      (["--antenna-height-m", "1200"],
                                       ["--height-tx-m", "1200", "--height-rx-m", "1200"])])
def test_predict_takes_the_analyze_names_and_keeps_its_own(new, old):
    base = ["predict", "--freq-ghz", "18", "--length-km", "12", "--tx-dbm", "20", "--threshold-dbm", "-73",
            "--geoclimatic-k", "1e-4", "--json"]
    a, b = _diag(*base, *new), _diag(*base, *old)
    assert a.returncode == 0 and b.returncode == 0, a.stderr + b.stderr
    assert json.loads(a.stdout) == json.loads(b.stdout)


def test_links_table_accepts_a_high_site():
    # an antenna 1200 m above sea level (a hill site) is a plausible altitude, not a typing mistake
    from diag.links import make_link

    link = make_link({"link_id": "X", "frequency_ghz": 18, "length_km": 12, "polarization": "V",
                      "threshold_dbm": -73, "antenna_height_m": 1200})
    assert link.antenna_height_m == 1200


def test_analyze_takes_the_reader_overrides_of_ingest(tmp_path):
    # a semicolon file with decimal commas and a header on line 3: analyze reads it with ingest's flags
    rows = ["exported by site tool", "", "stamp;level"]
    rows += [f"2026-03-02T{h:02d}:{m:02d}:00Z;{-45.0 - (10 if h == 5 else 0):.1f}".replace(".", ",")
             for h in range(12) for m in range(60)]
    log = tmp_path / "HOPX.csv"
    log.write_text("\n".join(rows) + "\n", encoding="utf-8")
    out = tmp_path / "out"
    proc = _diag("analyze", log, "--freq-ghz", "23", "--length-km", "8", "--polarization", "V",
                 "--threshold-dbm", "-70", "--out", out, "--sep", ";", "--decimal", ",", "--header-line", "3",
                 "--time-col", "stamp", "--signal-col", "level=rsl", "--quiet")
    assert proc.returncode == 0, proc.stderr
    assert (out / "outage_summary.csv").read_text().count("HOPX") == 1
    ing = _diag("ingest", log, "--sep", ";", "--decimal", ",", "--header-line", "3", "--time-col", "stamp",
                "--signal-col", "level=rsl", "--json")
    assert ing.returncode == 0 and json.loads(ing.stdout)["rows_kept"] == 720
