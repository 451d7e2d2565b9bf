"""The demo report's PDF keeps its text and draws every page (issue 18: core fonts instead of embedded TrueType).

``data/demo_report_text.txt`` is ``pdftotext`` of the demo report as drawn before the font change (DejaVu Sans
embedded as TrueType).  The report now uses the PDF standard Helvetica; the words on each page must be the same.
The only deliberate difference: tick labels print the ASCII minus instead of U+2212 (WinAnsi has no minus sign).
Regenerate the fixture only when the report's content changes on purpose:
``pdftotext out/report.pdf tests/report/data/demo_report_text.txt`` after ``diag analyze`` on ``demo_logs``.
"""
from __future__ import annotations

import collections
import io
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from diag.links import read_links_table
from diag.pipeline import analyze_files
from diag.report import pdf_bytes
from diag.report.pdf import pdf_safe

ROOT = Path(__file__).resolve().parents[2]
FIXTURE = Path(__file__).parent / "data" / "demo_report_text.txt"
needs_poppler = pytest.mark.skipif(not (shutil.which("pdftotext") and shutil.which("pdftoppm")),
                                   reason="poppler-utils (pdftotext, pdftoppm) not installed")


def _words_per_page(text: str) -> list[collections.Counter]:
    text = text.replace("\u2212", "-")          # the one deliberate change: ASCII minus in tick labels
    return [collections.Counter(page.split()) for page in text.split("\f")]


@pytest.fixture(scope="module")
def demo_pdf(tmp_path_factory) -> Path:
    links = read_links_table(ROOT / "demo_logs" / "links.csv")
    with pytest.warns(Warning):                  # the demo logs have rows out of time order, on purpose
        results = analyze_files([ROOT / "demo_logs" / "logs"], links=links)
    path = tmp_path_factory.mktemp("demo") / "report.pdf"
    path.write_bytes(pdf_bytes(results))
    return path


@needs_poppler
def test_demo_report_text_is_unchanged(demo_pdf):
    now = subprocess.run(["pdftotext", str(demo_pdf), "-"], capture_output=True, text=True, check=True,
                         timeout=60).stdout
    before = _words_per_page(FIXTURE.read_text(encoding="utf-8"))
    after = _words_per_page(now)
    assert len(after) == len(before)
    for page, (b, a) in enumerate(zip(before, after)):
        assert a == b, (page, b - a, a - b)
    assert sum(sum(c.values()) for c in after) > 2000
    for char in "–·•—":                          # non-ASCII characters of the report still print as themselves
        assert char in now, char


@needs_poppler
def test_every_demo_page_renders_non_blank(demo_pdf, tmp_path):
    from PIL import Image

    subprocess.run(["pdftoppm", "-png", "-r", "40", str(demo_pdf), str(tmp_path / "page")], check=True, timeout=120)
    pages = sorted(tmp_path.glob("page*.png"))
    assert len(pages) == len(FIXTURE.read_text(encoding="utf-8").rstrip("\f").split("\f"))
    for png in pages:
        image = np.asarray(Image.open(io.BytesIO(png.read_bytes())).convert("L"), dtype=float)
        dark = np.count_nonzero(image < 200) / image.size
        assert 0.005 < dark < 0.6, (png.name, dark)


@pytest.mark.parametrize("text, printed", [
    ("fade ≥ 10 dB", "fade >= 10 dB"),          # not in WinAnsi: replaced by the ASCII spelling
    ("−40 dBm", "-40 dBm"),
    ("tilt 5°, 3 µs, 1–2 h … • ·", "tilt 5°, 3 µs, 1–2 h … • ·"),   # in WinAnsi (cp1252): kept
    ("HOP-東", "HOP-?"),                          # anything else: a visible "?"
])
def test_pdf_safe_keeps_or_replaces_deliberately(text, printed):
    assert pdf_safe(text) == printed


def test_degree_and_micro_sign_print_in_the_pdf(tmp_path):
    pypdf = pytest.importorskip("pypdf")
    import matplotlib
    from matplotlib.backends.backend_pdf import PdfPages
    from matplotlib.figure import Figure

    from diag.report.pdf import _RC, _make_pdf_safe

    buffer = io.BytesIO()
    with matplotlib.rc_context(_RC), PdfPages(buffer) as pdf:
        fig = Figure()
        fig.text(0.1, 0.5, "5° 3µs 1–2 ≥9")
        _make_pdf_safe(fig)
        pdf.savefig(fig)
    text = pypdf.PdfReader(io.BytesIO(buffer.getvalue())).pages[0].extract_text()
    assert "5° 3µs 1–2 >=9" in text
