"""Start-up stays lean (issue 18): the parser, ``ingest`` and the analysis import no plotting, no Dask and not the
slow-to-import parts of scipy; those load only in the commands and functions that use them.  (Time itself is
measured in bench/, never in a test: this checks which modules load.)"""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
HEAVY = ("matplotlib", "dask", "distributed", "pyarrow.dataset", "pyarrow.parquet", "scipy.special", "scipy.stats",
         "scipy.optimize", "streamlit")

_PROBE = """
import json, sys
from diag.cli import build_parser
build_parser()
after_parser = sorted(m for m in {heavy} if m in sys.modules)
import diag.read.ingest, diag.read.store, diag.commands.ingest
after_ingest = sorted(m for m in {heavy} if m in sys.modules)
import diag.pipeline
after_pipeline = sorted(m for m in {heavy} if m in sys.modules)
print(json.dumps([after_parser, after_ingest, after_pipeline]))
"""


def test_parser_ingest_and_pipeline_import_no_heavy_module():
    done = subprocess.run([sys.executable, "-c", _PROBE.format(heavy=HEAVY)], cwd=ROOT, capture_output=True,
                          text=True, timeout=120, check=True)
    after_parser, after_ingest, after_pipeline = json.loads(done.stdout)
    assert after_parser == []
    assert after_ingest == []
    assert after_pipeline == []


_ANALYSIS_PROBE = """
import json, sys, warnings
warnings.simplefilter("ignore")
from diag.links import read_links_table
from diag.pipeline import analyze_files
from diag.report import tables
results = analyze_files([sys.argv[1]], links=read_links_table(sys.argv[2]))
tables.findings_json_bytes(results)
print(json.dumps(sorted(m for m in {heavy} if m in sys.modules)))
"""


def test_analysis_of_a_hop_loads_no_scipy_stats_no_optimizer_and_no_plotting():
    """The analysis and its tables (the trend's Theil-Sen line and the Rice law's CDF are computed without
    scipy.stats, the Rice K-factor's likelihood fit without scipy.optimize, the Bessel functions, the Rice CDF and
    the normal quantile of the trend's interval without scipy.special)."""
    done = subprocess.run([sys.executable, "-c", _ANALYSIS_PROBE.format(heavy=HEAVY),
                           str(ROOT / "demo_logs" / "logs"), str(ROOT / "demo_logs" / "links.csv")], cwd=ROOT,
                          capture_output=True, text=True, timeout=300, check=True)
    assert json.loads(done.stdout.strip().splitlines()[-1]) == []


_ONE_PROCESS_PROBE = """
import gc, json, sys
gc.disable()                                  # as python -m diag starts
from diag import cli
seen = {}
handler = cli._load_command
def probe(args):
    seen["paused_while_loading"] = not gc.isenabled()
    handler(args)
    seen["loaded"] = all(name in sys.modules for name in ("diag.pipeline", "diag.report", "diag.outputs",
                                                          "matplotlib.backends.backend_pdf"))
    seen["subsetter"] = type(sys.modules["fontTools.subset"]).__name__   # still deferred (pdf_fonts)
    seen["resumed"] = gc.isenabled()
    seen["frozen"] = gc.get_freeze_count()
cli._load_command = probe
status = cli.main(sys.argv[1:], one_process=True)
print(json.dumps({**seen, "status": status, "enabled_after": gc.isenabled()}))
"""


def test_one_process_command_loads_its_modules_with_the_collector_paused_then_resumes_it(tmp_path):
    """``python -m diag``: the collector is paused while the command's modules load and is running again, with those
    objects frozen, before the command itself runs (a collector left off would let a long analysis's cyclic garbage
    pile up); after ``--help`` too."""
    out = tmp_path / "out"
    args = ["analyze", str(ROOT / "demo_logs" / "logs"), "--links", str(ROOT / "demo_logs" / "links.csv"), "--out",
            str(out), "--quiet"]
    done = subprocess.run([sys.executable, "-c", _ONE_PROCESS_PROBE, *args], cwd=ROOT, capture_output=True,
                          text=True, timeout=300)
    assert done.returncode == 0, done.stderr[-2000:]
    seen = json.loads(done.stdout.strip().splitlines()[-1])
    assert seen == {"loaded": True, "subsetter": "_LazyModule", "paused_while_loading": True, "resumed": True,
                    "frozen": seen["frozen"], "status": 0, "enabled_after": True}
    assert seen["frozen"] > 10_000
    assert (out / "report.pdf").stat().st_size > 0
    done = subprocess.run([sys.executable, "-c", _ONE_PROCESS_PROBE, "--help"], cwd=ROOT, capture_output=True,
                          text=True, timeout=120)
    assert json.loads(done.stdout.strip().splitlines()[-1]) == {"status": 0, "enabled_after": True}
