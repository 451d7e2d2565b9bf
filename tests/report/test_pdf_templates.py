"""Chart pages kept between reports (``diag.report.pdf_templates``, issue 18): a report drawn on the Figures and
Axes of earlier reports is the same PDF, byte for byte, as one drawn on new figures, whatever came before it.

The check is against the project's own drawing on new figures (the output before the templates existed, which
``bench/output_hashes.py`` compares across versions), over reports that take every branch of the chart painters:
one hop and many (the yearly outlook moved to page 3), 1-s samples and 15-min statistics, no fade statistics
(axis off), no outage, a hop without any series, a channel without a level and a hop analysed from simulated
logs.
"""
from __future__ import annotations

import dataclasses

import pandas as pd
import pytest

from diag import schema
from diag.report import pdf, pdf_templates
from diag.results import ChannelSeries, LinkResult
from tests.report.test_report import _link, _sample_result, _stats_result


@pytest.fixture(scope="module")
def cases(hops):
    _, quick = hops.analysed("quick", 1)
    sample = _sample_result("HOP-A")
    no_outage = _sample_result("HOP-Q", fade_s=0)
    stats = _stats_result("HOP-C")                 # no fade statistics: the fade-depth chart's axis is off
    empty = LinkResult(link=_link("HOP-E"), series={}, events=pd.DataFrame(columns=schema.EVENT_COLUMNS),
                       error="no data")
    frame = sample.series["H"].frame.drop(columns=["rsl_dbm"])      # a channel without a level: no level drawn
    no_level = dataclasses.replace(sample, link=_link("HOP-L"),
                                   series={"H": ChannelSeries("HOP-L", "H", 1.0, "sample", frame)})
    many = [dataclasses.replace(sample, link=_link(f"HOP-{i:02d}")) for i in range(12)]
    return {"quick": [quick], "sample": [sample], "no outage": [no_outage], "stats": [stats], "empty": [empty],
            "no level": [no_level], "mixed": [quick, stats, sample], "many": many + [stats]}


def _fresh(results) -> bytes:
    with pdf._collector_paused():
        return pdf._pdf_bytes(results, None, None)


def test_kept_figures_draw_the_same_pdf_as_new_ones(cases):
    fresh = {name: _fresh(results) for name, results in cases.items()}
    templates = pdf_templates.Templates()
    order = ["quick", "many", "sample", "stats", "quick", "empty", "no level", "mixed", "no outage", "quick", "many",
             "stats", "no level", "mixed", "sample"]
    kept = None
    for name in order:
        with pdf._collector_paused():
            data = pdf._pdf_bytes(cases[name], None, templates)
        assert data == fresh[name], name
        if kept is None:
            kept = dict(templates._axes)
    # the set was reused, not remade: the Axes of the first report are still the ones drawn on
    assert kept and all(templates._axes[key] is ax for key, ax in kept.items())


def test_pdf_bytes_reuses_a_pooled_set_and_matches_new_figures(cases):
    for name in ("sample", "stats", "quick"):
        assert pdf.pdf_bytes(cases[name]) == _fresh(cases[name]), name
    assert pdf_templates._POOL, "a set is given back to the pool after a report"


def test_a_set_in_use_is_never_handed_out_twice():
    first, second = pdf_templates.take(), pdf_templates.take()
    assert first is not second
    pdf_templates.give_back(first)
    pdf_templates.give_back(second)
    assert pdf_templates.take() in (first, second)


def test_string_metrics_kept_for_the_process_are_matplotlibs_own(cases):
    """``pdf_fonts._keep_string_metrics``: the core fonts' string sizes are kept, and are the ones matplotlib's own
    AFM reader computes."""
    import matplotlib
    from matplotlib import font_manager
    from matplotlib._afm import AFM
    from matplotlib.backends._backend_pdf_ps import _cached_get_afm_from_fname
    from matplotlib.backends.backend_pdf import RendererPdf

    from diag.report.pdf_fonts import _RC, _quiet_font_lookup

    pdf.pdf_bytes(cases["sample"])
    with matplotlib.rc_context(_RC), _quiet_font_lookup():
        bold = font_manager.findfont(font_manager.FontProperties(weight="bold"), fontext="afm",
                                     directory=RendererPdf._afm_font_dir)
    afm = _cached_get_afm_from_fname(bold)
    kept = vars(afm)["get_str_bbox_and_descent"]
    assert kept.cache_info().hits > 0
    for text in ["Headline per hop", "HOP-A", "-12.5", "Ä ·", ""]:
        assert afm.get_str_bbox_and_descent(text) == AFM.get_str_bbox_and_descent(afm, text)


_SUBSETTER_CHECK = """
import io, sys
import matplotlib
from matplotlib.figure import Figure
from diag.report import pdf_bytes
from tests.report.test_report import _sample_result

pdf_bytes([_sample_result("HOP-A")])
print(type(sys.modules["fontTools.subset"]).__name__)          # not run yet: the report needs no TrueType subset
fig = Figure()
fig.text(0.5, 0.5, "TrueType glyphs")
with matplotlib.rc_context({"pdf.fonttype": 42}):                 # embeds a TrueType subset: needs the subsetter
    buffer = io.BytesIO()
    fig.savefig(buffer, format="pdf")
print(type(sys.modules["fontTools.subset"]).__name__, b"/FontFile2" in buffer.getvalue())
"""


def test_font_subsetter_loads_only_when_a_pdf_embeds_truetype():
    """``pdf_fonts._defer_font_subsetter``: the report's process does not run fontTools' subsetter, and a PDF
    that embeds a TrueType subset later in the same process still gets it (a fresh interpreter: the import order
    matters)."""
    import os
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    done = subprocess.run([sys.executable, "-c", _SUBSETTER_CHECK], cwd=root, capture_output=True, text=True,
                          timeout=120, env=dict(os.environ, PYTHONPATH=str(root)))
    assert done.returncode == 0, done.stderr[-2000:]
    assert done.stdout.split() == ["_LazyModule", "module", "True"]


def test_core_font_lookup_kept_per_face_gives_matplotlibs_own_answer(cases):
    """``pdf_fonts._size_blind_core_font_lookup``: after a report, matplotlib's font manager answers a look-up of a
    core (AFM) font from the answer kept for the same face at any size; every answer is the one matplotlib's own
    look-up (``FontManager._findfont_cached`` itself, its cache bypassed) gives, for faces, sizes, the PDF's font
    folder or none, under the report's rc settings and matplotlib's defaults; TrueType look-ups pass through."""
    import itertools

    import matplotlib
    from matplotlib import font_manager
    from matplotlib.backends.backend_pdf import RendererPdf

    from diag.report.pdf_fonts import _RC, _quiet_font_lookup

    pdf.pdf_bytes(cases["sample"])
    manager = font_manager.fontManager
    assert "_findfont_cached" in vars(manager), "installed by the report"
    own = type(manager)._findfont_cached.__wrapped__     # matplotlib's look-up without its cache
    props = [font_manager.FontProperties(family=family, style=style, weight=weight, stretch=stretch, size=size)
             for family, style, weight, stretch, size in itertools.product(
                 ["sans-serif", "serif", "Helvetica", "Courier", "monospace", "no such family"],
                 ["normal", "italic", "oblique"], ["normal", "bold", "light"], ["normal", "condensed"],
                 [6.5, 9, 12, "large"])]
    rc_sets = [_RC, {}, {**_RC, "font.size": 14.0}, {"font.sans-serif": ["Courier"], "font.size": 7.0}]
    checked = 0
    for rc, directory in itertools.product(rc_sets, [RendererPdf._afm_font_dir, None]):
        with matplotlib.rc_context(rc), _quiet_font_lookup():
            rc_params = tuple(tuple(v) if isinstance(v, list) else v for v in (
                matplotlib.rcParams[f"font.{key}"] for key in ["family", "style", "variant", "weight", "stretch",
                                                               "size", "serif", "sans-serif", "cursive", "fantasy",
                                                               "monospace"]))
            for prop in props:
                got = manager.findfont(prop, fontext="afm", directory=directory)
                assert got == own(manager, prop, "afm", directory, True, True, rc_params), (prop, rc, directory)
                checked += 1
            prop = font_manager.FontProperties(family="DejaVu Sans", size=11)
            assert manager.findfont(prop) == own(manager, prop, "ttf", None, True, True, rc_params)
    assert checked == len(props) * len(rc_sets) * 2


_DOCS_DUMP = """
import hashlib, inspect, sys
if sys.argv[1] == "diag":
    from diag.report.pdf_fonts import _import_pdf_backend
    _import_pdf_backend()
    from matplotlib.artist import ArtistInspector
    assert ArtistInspector.get_valid_values.__module__ == "matplotlib.artist", "matplotlib's own method put back"
import matplotlib.backends.backend_pdf
import matplotlib.figure
from matplotlib.artist import Artist, kwdoc
from matplotlib.axes import Axes
from matplotlib.figure import Figure

classes, todo = set(), [Artist]
while todo:
    cls = todo.pop()
    if cls not in classes:
        classes.add(cls)
        todo.extend(cls.__subclasses__())
texts = []
for cls in sorted(classes, key=lambda c: (c.__module__, c.__qualname__)):
    texts += [cls.__module__, cls.__qualname__, cls.set.__doc__ or "", str(inspect.signature(cls.set))]
for owner in (Axes, Figure):
    texts += [f"{name}:{getattr(value, '__doc__', '')}" for name, value in sorted(vars(owner).items())]
texts.append(kwdoc(matplotlib.lines.Line2D))
print(len(classes), hashlib.sha256("\\x00".join(texts).encode()).hexdigest())
"""


def test_pdf_backend_import_writes_matplotlibs_docs_unchanged():
    """``pdf_fonts._import_pdf_backend``: matplotlib's generated ``set`` signatures and docstrings of every Artist
    class, and the interpolated docs of ``Axes`` and ``Figure``, are the same as after a plain import (fresh
    interpreters: the import order matters), and matplotlib's method is put back after the import."""
    import os
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    env = dict(os.environ, PYTHONPATH=str(root))
    runs = [subprocess.run([sys.executable, "-c", _DOCS_DUMP, how], cwd=root, capture_output=True, text=True,
                           timeout=120, env=env) for how in ("plain", "diag")]
    for done in runs:
        assert done.returncode == 0, done.stderr[-2000:]
    plain, ours = (done.stdout.split() for done in runs)
    assert int(plain[0]) > 100        # the walk found matplotlib's Artist classes
    assert ours == plain
