"""The report's text in the PDF core fonts (Helvetica, WinAnsi): rc settings, the deliberate replacements for
characters WinAnsi lacks, and font metrics read once per process (issue 18: no per-document font subsetting).

Also how matplotlib's PDF backend is loaded for the report (its subsetter on first use, setter docs parsed once)
and its core-font look-ups answered once per face."""
from __future__ import annotations

import contextlib
import functools
import importlib.util
import logging
import sys
import threading

_RC = {"pdf.fonttype": 3, "pdf.use14corefonts": True, "font.family": "sans-serif", "font.sans-serif": ["Helvetica"],
       "axes.unicode_minus": False, "svg.hashsalt": "diag", "hatch.linewidth": 0.6, "path.simplify": True,
       "text.parse_math": False, "axes.titley": 1.0}
# axes.titley 1.0: each chart's title at the top of its axes, where matplotlib's automatic placement puts it on these
# charts too (no tick labels or offset text above them), without measuring every tick label first (about 4 % of a
# report's function calls; the PDF is the same byte for byte: bench/output_hashes.py)
# the PNG preview is drawn by Agg, which needs a TrueType font
_RC_PNG = {"font.family": "DejaVu Sans", "svg.hashsalt": "diag", "hatch.linewidth": 0.6, "path.simplify": True,
           "text.parse_math": False}

# what the PDF prints for characters its WinAnsi (cp1252) fonts lack; anything else outside it prints as "?"
PDF_REPLACEMENTS = {"\u2212": "-", "\u2265": ">=", "\u2264": "<=", "\u2192": "->", "\u2190": "<-",
                    "\u2248": "~", "\u00b1": "+/-", "\u2260": "!=", "\u2009": " ", "\u202f": " ",
                    "\u2032": "'", "\u2033": '"', "\u0394": "delta ", "\u03c3": "sigma"}
_TRANSLATE = str.maketrans(PDF_REPLACEMENTS)


def pdf_safe(text: str) -> str:
    """``text`` as the PDF's core fonts can print it: the replacements above, then "?" for anything else."""
    if text.isascii():
        return text
    text = text.translate(_TRANSLATE)
    try:
        text.encode("cp1252")
        return text
    except UnicodeEncodeError:
        return "".join(c if _in_cp1252(c) else "?" for c in text)


def _in_cp1252(char: str) -> bool:
    try:
        char.encode("cp1252")
        return True
    except UnicodeEncodeError:
        return False


def _make_pdf_safe(fig) -> None:
    """Apply ``pdf_safe`` to every text of a page: figure texts, titles, labels, legends, tables and fixed tick
    labels (hop names). Walks the artists it knows rather than ``fig.findobj``, which would create every tick."""
    from matplotlib.ticker import FixedFormatter

    texts = list(fig.texts)
    legends = list(fig.legends)
    for ax in fig.axes:
        texts += list(ax.texts) + [ax.title, ax._left_title, ax._right_title, ax.xaxis.label, ax.yaxis.label]
        if ax.get_legend() is not None:
            legends.append(ax.get_legend())
        for table in ax.tables:
            texts += [cell.get_text() for cell in table.get_celld().values()]
        for axis in (ax.xaxis, ax.yaxis):
            formatter = axis.get_major_formatter()
            if isinstance(formatter, FixedFormatter):
                formatter.seq = [pdf_safe(str(label)) for label in formatter.seq]
    for legend in legends:
        texts += list(legend.get_texts()) + [legend.get_title()]
    for artist in texts:
        text = artist.get_text()
        if not text.isascii():
            artist.set_text(pdf_safe(text))


def _reuse_font_metrics(pages) -> None:
    """Name each core font from metrics parsed once per process, not once per document (matplotlib re-reads the
    font's AFM file, kerning table and all, for every PDF it writes; only the font's name is used)."""
    ensure = getattr(pages, "_ensure_file", None)
    file = ensure() if ensure is not None else getattr(pages, "_file", None)
    if file is None or not hasattr(file, "_write_afm_font"):
        return
    from matplotlib.backends._backend_pdf_ps import _cached_get_afm_from_fname
    from matplotlib.backends.backend_pdf import Name

    def write_afm_font(filename):
        name = _cached_get_afm_from_fname(filename).get_fontname()   # the same cache the text layout uses
        fontdict = {"Type": Name("Font"), "Subtype": Name("Type1"), "BaseFont": Name(name),
                    "Encoding": Name("WinAnsiEncoding")}
        obj = file.reserveObject("font dictionary")
        file.writeObject(obj, fontdict)
        return obj

    file._write_afm_font = write_afm_font


_DEFER_LOCK = threading.Lock()


def _defer_font_subsetter() -> None:
    """Load fontTools' subsetter when first used rather than with matplotlib's PDF backend.

    The backend imports ``fontTools.subset`` at its top (about 0.07 s of CPU, a quarter of the backend's import);
    it serves only to embed subsets of TrueType/OpenType fonts, which the core fonts of this report never need.
    The real module is registered with the standard library's ``importlib.util.LazyLoader``: it runs on the first
    use of any of its names, so a PDF of the same process that does embed a TrueType font still gets it
    (``tests/report/test_pdf_templates.py``).  Call before matplotlib's PDF backend is imported; does nothing
    after."""
    with _DEFER_LOCK:
        if "fontTools.subset" in sys.modules:
            return
        import fontTools

        spec = importlib.util.find_spec("fontTools.subset")
        if spec is None or spec.loader is None:
            return
        spec.loader = importlib.util.LazyLoader(spec.loader)
        module = importlib.util.module_from_spec(spec)
        sys.modules["fontTools.subset"] = module
        spec.loader.exec_module(module)
        fontTools.subset = module


def _import_pdf_backend() -> None:
    """Import matplotlib's PDF backend and ``Figure``, each setter's accepted-values text read from its docstring
    once rather than once per Artist class that inherits it.

    While its modules load, matplotlib writes the signature and docstring of every Artist class's ``set`` and
    ``%(Class:kwdoc)s`` texts, each a list of the class's setters and what they accept, parsed from every setter's
    docstring (``ArtistInspector.get_valid_values``).  Subclasses inherit most setters, so the same docstring was
    cleaned and searched again for each class: about 4,500 parses of under 800 docstrings, some 0.035 s of a
    process's CPU.  During the import the answer is kept per docstring text and the setter's first argument
    name (all it depends on); setters with a ``_kwarg_doc`` or no docstring of their own go to matplotlib as
    before; every text comes out the same (tested in a fresh interpreter), and matplotlib's own method is put back
    afterwards.  Call before matplotlib's PDF backend is imported; only the modules still to import are sped up."""
    with _DEFER_LOCK:
        if "matplotlib.backends.backend_pdf" in sys.modules and "matplotlib.figure" in sys.modules:
            return
        from matplotlib.artist import ArtistInspector

        own = ArtistInspector.get_valid_values
        kept: dict = {}

        def get_valid_values(self, attr):
            func = getattr(self.o, f"set_{attr}", None)
            doc = getattr(func, "__doc__", None)
            code = getattr(func, "__code__", None)
            if not isinstance(doc, str) or code is None or code.co_argcount < 2 or hasattr(func, "_kwarg_doc"):
                return own(self, attr)
            key = (doc, code.co_varnames[1])   # inspect.getdoc(func) is the cleaned doc; the 1st argument's name
            try:
                return kept[key]
            except KeyError:
                value = kept[key] = own(self, attr)
                return value

        ArtistInspector.get_valid_values = get_valid_values
        try:
            import matplotlib.backends.backend_pdf  # noqa: F401
            import matplotlib.figure  # noqa: F401
        finally:
            ArtistInspector.get_valid_values = own


def load_pdf_backend() -> None:
    """Load matplotlib's PDF backend as the report needs it: the font subsetter on first use
    (:func:`_defer_font_subsetter`), the setters' docs parsed once (:func:`_import_pdf_backend`)."""
    _defer_font_subsetter()
    _import_pdf_backend()


def _keep_string_metrics() -> None:
    """Keep each string's measured size in the core fonts for the process.  matplotlib measures every text of a
    page character by character in the font's AFM metrics (``AFM.get_str_bbox_and_descent``), again for every page
    of every report (its own text-size cache lives as long as one page's renderer); a font's metrics never change,
    so the answer for a string is kept on the font's AFM object, which matplotlib itself keeps for the process.
    Call under ``_RC`` (it names the fonts).  About 7 % of a one-hop report's CPU; same numbers, same PDF."""
    from matplotlib import font_manager
    from matplotlib.backends._backend_pdf_ps import _cached_get_afm_from_fname
    from matplotlib.backends.backend_pdf import RendererPdf

    # the faces the reports draw: bold titles, italic notes, no bold italic (whose metrics, parsed here, would only
    # cost a process its AFM file's parse, about 6 ms; a face not listed is measured by matplotlib as before)
    for weight, style in (("normal", "normal"), ("bold", "normal"), ("normal", "italic")):
        fname = font_manager.findfont(font_manager.FontProperties(weight=weight, style=style), fontext="afm",
                                      directory=RendererPdf._afm_font_dir)
        afm = _cached_get_afm_from_fname(fname)
        if "get_str_bbox_and_descent" not in vars(afm):
            afm.get_str_bbox_and_descent = functools.lru_cache(maxsize=8192)(afm.get_str_bbox_and_descent)


_LOOKUP_LOCK = threading.Lock()


def _size_blind_core_font_lookup() -> None:
    """Answer matplotlib's look-ups of a core font (``fontext="afm"``) once per face, not once per face and size.

    matplotlib keeps each answer of ``FontManager.findfont`` under the font properties *with* their size, and the
    report's texts come in a dozen sizes: each new size scanned the 61 AFM fonts again, comparing paths with
    ``pathlib`` (about 0.05 s of CPU in a process's first report, 42 scans).  The size takes no part in the choice
    when every AFM font is scalable (``FontManager.score_size`` is 0 for those; checked here), so the answer is
    kept under every other property, the look-up's arguments and the rc settings except ``font.size``, and is the
    one matplotlib's own look-up gives (tested).  Any other look-up (TrueType, a non-scalable AFM font, another
    matplotlib's argument list) goes to matplotlib unchanged.  Installed once per process, on matplotlib's font
    manager."""
    from matplotlib import font_manager

    manager = font_manager.fontManager
    with _LOOKUP_LOCK:
        if "_findfont_cached" in vars(manager):
            return
        lookup = type(manager)._findfont_cached      # matplotlib's own, with its cache by size
        kept: dict = {}
        scalable: dict = {}

        def findfont_cached(prop, fontext, directory, fallback_to_default, rebuild_if_missing, rc_params):
            args = (prop, fontext, directory, fallback_to_default, rebuild_if_missing, rc_params)
            if fontext != "afm" or type(prop) is not font_manager.FontProperties or len(rc_params) != 11:
                return lookup(manager, *args)
            fonts = manager.afmlist
            where = (id(fonts), len(fonts))
            if where not in scalable:
                scalable[where] = all(font.size == "scalable" for font in fonts)
            if not scalable[where]:
                return lookup(manager, *args)
            # rc_params: font.family, style, variant, weight, stretch, size, then the family lists
            key = (tuple((name, value) for name, value in vars(prop).items() if name != "_size"), fontext,
                   directory, fallback_to_default, rebuild_if_missing, rc_params[:5] + rc_params[6:], where)
            try:
                return kept[key]
            except KeyError:
                found = kept[key] = lookup(manager, *args)
                return found

        manager._findfont_cached = findfont_cached


@contextlib.contextmanager
def _quiet_font_lookup():
    """matplotlib warns that the core Helvetica has weight "medium", not "normal": expected, so not shown."""
    logger = logging.getLogger("matplotlib.font_manager")
    level = logger.level
    logger.setLevel(logging.ERROR)
    try:
        yield
    finally:
        logger.setLevel(level)
