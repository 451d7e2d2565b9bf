"""One vocabulary across every output (issue 16): the demo run's CSVs, JSON, PDF text, dashboard tables, network
ranking and command-line messages use only the words of ``diag.glossary``.

The rules checked are the project's own (the glossary), so these are consistency checks, not proofs of physics.
The G.826 wording ("unavailable time", "severely errored second") is ITU-T G.826 (12/2002) Annex A's.
"""
from __future__ import annotations

import csv
import json
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from diag import glossary, schema
from diag.report import pdf, views

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_logs"

# words that once named the same thing as a glossary term (issue 16's list); none may appear in any output
SYNONYMS = [r"\bunclear\b", r"not yet checked", r"not checked against the Recommendation", r"\bdominant cause\b"]


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    proc = subprocess.run([sys.executable, "-m", "diag", "analyze", str(DEMO / "logs"), "--links",
                           str(DEMO / "links.csv"), "--out", str(out)], capture_output=True, text=True, cwd=ROOT,
                          timeout=600)
    assert proc.returncode == 0, proc.stderr
    return out, proc.stdout + proc.stderr


def _rows(path: Path) -> list[dict]:
    with path.open(newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def test_glossary_defines_each_term_once_and_labels_are_distinct():
    labels = [t.label for t in glossary.TERMS.values()]
    assert len(labels) == len(set(labels))
    assert set(glossary.CAUSE_LABELS) == set(schema.CAUSES) | {schema.NO_DATA}
    codes = list(glossary.CAUSE_CODES.values())
    assert all(len(c) == 2 and c.isalpha() and c.isupper() for c in codes) and len(set(codes)) == len(codes)
    assert "unavailable" in glossary.OUTAGE.lower() and "G.826" in glossary.definition("outage")
    assert glossary.verdict_label("undetermined") == glossary.UNDETERMINED
    assert glossary.main_cause_label("") == glossary.main_cause_label(None) == glossary.NO_OUTAGE


def test_csv_outputs_use_only_glossary_values(demo_run):
    out, _ = demo_run
    causes = glossary.allowed_cause_values()
    for name in ("events.csv", "outage_by_cause.csv"):
        found = {r["cause"] for r in _rows(out / name)}
        assert found and found <= causes, (name, found - causes)
    summary = _rows(out / "outage_summary.csv")
    assert {r["meets_objective"] for r in summary} <= set(glossary.VERDICTS) | {""}
    mains = {r["main_cause"] for r in summary}
    assert mains <= glossary.allowed_main_cause_values(), mains
    # a hop without unavailable time says "no outage", never blank or the cause of its short dips
    for r in summary:
        hi = float(r["unavailable_s_hi"] or 0)
        assert (r["main_cause"] == glossary.NO_OUTAGE) == (hi == 0), r
    assert glossary.NO_OUTAGE in mains          # the demo's multipath hop has dips but no outage


def test_findings_json_explains_its_words_and_uses_them(demo_run):
    out, _ = demo_run
    doc = json.loads((out / "findings.json").read_text(encoding="utf-8"))
    terms = doc["glossary"]["terms"]
    for key in ("outage", "below_threshold", "main_cause", "no_outage", "undetermined", "peak_fade_db",
                "deepest_rain_fade_db", "deepest_fade_db"):
        assert terms[key]["label"] and terms[key]["definition"]
    assert doc["glossary"]["causes"]["unknown"]["mark"] == glossary.CAUSE_CODES["unknown"]
    for link in doc["links"]:
        summary = link["outage"]["summary"]
        assert summary["main_cause"] in glossary.allowed_main_cause_values()
        assert summary["meets_objective"] in set(glossary.VERDICTS) | {""}
        assert {row["cause"] for row in link["outage"]["by_cause"]} <= glossary.allowed_cause_values()


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils (pdftotext) not installed")
def test_pdf_text_uses_glossary_labels(demo_run):
    out, _ = demo_run
    text = subprocess.run(["pdftotext", "-layout", str(out / "report.pdf"), "-"], capture_output=True, text=True,
                          check=True).stdout
    for pattern in SYNONYMS:
        assert not re.search(pattern, text, flags=re.IGNORECASE), pattern
    assert glossary.OUTAGE.split(" (")[0] in text and "unavailable" in text
    # a hop without outage is "no outage" in the headline table, never "none"
    assert glossary.NO_OUTAGE in text and not re.search(r"\bnone\b", text)


def test_headline_cells_and_network_table_are_glossary_words(demo_run):
    from diag.links import read_links_table
    from diag.pipeline import analyze_files

    links = read_links_table(DEMO / "links.csv")
    results = analyze_files(sorted((DEMO / "logs").iterdir()), links=links)
    allowed_short = set(glossary.CAUSE_SHORT.values()) | {glossary.NO_OUTAGE}
    for row in pdf._headline_rows(results):
        assert row[4] in set(glossary.VERDICT_LABELS.values()), row
        assert row[7] in allowed_short, row
    table = views.network_table(results)
    allowed_labels = {glossary.cause_label(c) for c in schema.CAUSES} | {glossary.NO_OUTAGE}
    assert set(table[glossary.MAIN_CAUSE]) <= allowed_labels
    assert set(table[glossary.TERMS["meets_objective"].label]) <= set(glossary.VERDICT_LABELS.values())
    # durations on screen are h:mm:ss, never bare seconds
    for cell in table[glossary.OUTAGE + " h:mm:ss"]:
        assert re.fullmatch(r"\d+:\d\d:\d\d( – \d+:\d\d:\d\d)?", cell), cell
    for result in results:
        assert views.hop_overview(result)["main_cause_label"] in allowed_labels


def test_command_line_messages_use_glossary_words(demo_run):
    _, messages = demo_run
    for pattern in SYNONYMS:
        assert not re.search(pattern, messages, flags=re.IGNORECASE), pattern


def test_every_field_action_carries_the_safety_cautions(demo_run):
    # the owner's rule (common practice of the trade): advice that may send someone up a tower or near radiating
    # antennas carries work-at-height and RF-exposure cautions and defers to local codes and licensed practice;
    # rain actions included (issue 16).  The wording is diag.glossary's, the one place it is written.
    out, _ = demo_run
    doc = json.loads((out / "findings.json").read_text(encoding="utf-8"))
    seen = 0
    for link in doc["links"]:
        for finding in link["findings"]:
            if finding["cause"] == "unknown" or not finding["actions"]:
                continue                 # "look at the level plot" is desk work
            seen += 1
            for caution in glossary.SAFETY_CAUTIONS:
                assert caution in finding["cautions"], (finding["title"], caution[:30])
    assert seen >= 5
    assert any(f["cause"] == "rain" for link in doc["links"] for f in link["findings"])


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils (pdftotext) not installed")
def test_pdf_lists_every_hops_findings_level_shifts_included(demo_run):
    # issue 16: the PDF had cut the findings to one, and the demo's 6.4 dB pointing step was in no PDF text
    out, _ = demo_run
    text = " ".join(subprocess.run(["pdftotext", str(out / "report.pdf"), "-"], capture_output=True, text=True,
                                   check=True).stdout.split())
    doc = json.loads((out / "findings.json").read_text(encoding="utf-8"))
    for link in doc["links"]:
        assert link["link"]["link_id"] in text
        for finding in link["findings"][:3]:
            assert finding["title"] in text, finding["title"]
    assert "-6.4 dB" in text
    assert "Glossary" in text and "more findings in findings.json" not in text
