"""Determinism (issue 9): the same inputs give byte-identical outputs from two `analyze` runs.

Two runs of ``python -m diag analyze`` (in-process, through ``diag.cli.main``) on the same small simulated logs must
write the same bytes to events.csv, outage_summary.csv, outage_by_cause.csv, findings.json and report.pdf (the PDF
is written with fixed metadata and no creation date, see diag/report/pdf.py).  The same bytes again when the logs
are given as their folder, and from a separate interpreter with another PYTHONHASHSEED reading the files named in
reverse order: output order may depend neither on the order of the inputs nor on hash order.  The project's own
contract (docs/usage.md §1-§3); no outside source needed.
"""
from __future__ import annotations

import hashlib
import warnings

import pytest

from diag.cli import main
from diag.errors import DataWarning
from diag.sim import log_shapes as writers
from diag.sim.scenarios import load_scenario
from diag.sim.simulate import aggregate_statistics, simulate_link
from tests.cli.test_conservation import _short_spec

pytestmark = [pytest.mark.filterwarnings("ignore::diag.errors.DataWarning"),
              pytest.mark.filterwarnings("ignore::RuntimeWarning")]
OUTPUTS = ("events.csv", "outage_summary.csv", "outage_by_cause.csv", "findings.json", "report.pdf")


@pytest.fixture(scope="module")
def logs(tmp_path_factory):
    """Two hops of the built-in 'quick' scenario, 2 h each: a 1-s wide log and a 15-min statistics log."""
    root = tmp_path_factory.mktemp("det")
    folder = root / "logs"
    sc = load_scenario("quick")
    specs = [_short_spec(spec, window_s=2 * 3600) for spec in sc.links]
    sims = [simulate_link(spec, seed=7) for spec in specs]
    writers.write_log(sims[0].table, folder / f"{specs[0].link_id}.csv", "wide_iso", defects=sims[0].file_defects,
                      floor_dbm=specs[0].floor_value_dbm)
    stats = aggregate_statistics(sims[1].table, interval_s=900, floor_dbm=specs[1].floor_value_dbm,
                                 threshold_dbm=specs[1].threshold_dbm)
    writers.write_log(stats, folder / f"{specs[1].link_id}_15min.csv", "stats", floor_dbm=specs[1].floor_value_dbm)
    writers.write_links_table([s.link for s in sims], root / "links.csv")
    return root


def _run(logs, inputs, out, capsys) -> dict[str, bytes]:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        warnings.simplefilter("ignore", RuntimeWarning)
        rc = main(["analyze", *map(str, inputs), "--links", str(logs / "links.csv"), "--out", str(out)])
    err = capsys.readouterr().err
    assert rc == 0, err
    return {name: (out / name).read_bytes() for name in OUTPUTS}


@pytest.fixture(scope="module")
def first(logs, tmp_path_factory):

    out = tmp_path_factory.mktemp("first")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        warnings.simplefilter("ignore", RuntimeWarning)
        rc = main(["analyze", *map(str, sorted((logs / "logs").iterdir())), "--links", str(logs / "links.csv"),
                   "--out", str(out)])
    assert rc == 0
    return {name: (out / name).read_bytes() for name in OUTPUTS}


def test_two_runs_byte_identical(logs, first, tmp_path, capsys):
    second = _run(logs, sorted((logs / "logs").iterdir()), tmp_path / "b", capsys)
    for name in OUTPUTS:
        assert len(first[name]) > 0, name
        assert first[name] == second[name], (name, hashlib.sha256(first[name]).hexdigest(),
                                             hashlib.sha256(second[name]).hexdigest())
    # both hops are in the outputs (the comparison is not between two empty files)
    assert first["outage_summary.csv"].count(b"\n") == 3
    assert b"QK-RIDGE-FORD" in first["events.csv"] and b"QK-FORD-BARN" in first["outage_by_cause.csv"]


def test_folder_input_same_bytes(logs, first, tmp_path, capsys):
    folder = _run(logs, [logs / "logs"], tmp_path / "c", capsys)
    for name in OUTPUTS:
        assert first[name] == folder[name], name


@pytest.mark.slow
def test_other_process_other_hash_seed_reversed_inputs(logs, first, tmp_path):
    """A separate interpreter with another string-hash seed (set/dict order of str keys changes with it), inputs
    named in reverse order: still the same bytes."""
    import os
    import subprocess
    import sys
    from pathlib import Path

    out = tmp_path / "d"
    env = {**os.environ, "PYTHONHASHSEED": "4242"}
    root = Path(__file__).resolve().parents[2]
    proc = subprocess.run([sys.executable, "-m", "diag", "analyze",
                           *map(str, sorted((logs / "logs").iterdir())[::-1]), "--links", str(logs / "links.csv"),
                           "--out", str(out)], capture_output=True, text=True, timeout=300, cwd=root, env=env)
    assert proc.returncode == 0, proc.stderr
    for name in OUTPUTS:
        assert first[name] == (out / name).read_bytes(), name
