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
