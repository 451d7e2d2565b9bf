"""The management report: a PDF made with matplotlib (no other PDF stack).  This module draws; the sentences
are in ``diag.report.pdf_text`` and the words in ``diag.glossary``.

Page 1  headline table per hop (availability against objective, outage, main cause), outage by cause per hop, key
        points, yearly outlook, caution.
Page 2  timeline of each hop: receive level, threshold, fades shaded by cause (colour + hatch + mark), data gaps.
Page 3  fade-depth distribution against Rayleigh and the design prediction, data gaps, method notes.
Page 4  every hop's findings (up to three each, level shifts included) with their actions and the cautions
        (more pages when many hops have findings).
Last    glossary of the words and trade terms the report uses.

Deterministic: fixed metadata (no creation date), fixed fonts, no timestamps of the run in the text.
"""
from __future__ import annotations

import contextlib
import gc
import io
import threading
from typing import Callable, Iterable, Sequence

import numpy as np

from diag import glossary, schema
from diag.report import pdf_templates, style
from diag.report.pdf_fonts import (
    _RC,
    _RC_PNG,
    _keep_string_metrics,
    _make_pdf_safe,
    _quiet_font_lookup,
    _reuse_font_metrics,
    _size_blind_core_font_lookup,
    load_pdf_backend,
    pdf_safe,
)
from diag.report.pdf_templates import PAGE_SIZE_IN, Templates, new_axes, new_figure
from diag.report.pdf_text import (
    HEADLINE_NOTE,
    MAX_TABLE_ROWS,
    SAFETY_TEXT,
    _finite,
    _first_action,
    _headline_rows,
    _overview_sentence,
    _period,
    _top_findings,
    _wrap,
    cautions_text,
    counters_lines,
    findings_by_hop,
    format_availability,
    format_minutes,
    gaps_lines,
    glossary_entries,
    method_notes,
)
from diag.report.pdf_timelines import _page_timelines
from diag.results import LinkResult

MAX_FINDINGS_PAGES = 4

__all__ = ["build_figures", "pdf_bytes", "pdf_safe", "format_availability", "format_minutes",
           "SAFETY_TEXT"]


def _page_summary(fig, results: Sequence[LinkResult], state: dict) -> None:
    fig.text(0.06, 0.965, "Microwave hop outage report", fontsize=17, weight="bold", color=style.INK, va="top")
    fig.text(0.06, 0.937, f"Period: {_period(results)}   ·   {len(results)} hop(s)", fontsize=9, color=style.INK,
             va="top")
    overview = _wrap(_overview_sentence(results), 88)
    fig.text(0.06, 0.912, overview, fontsize=10, color=style.INK, va="top", weight="bold", linespacing=1.3)

    rows = _headline_rows(results)
    n_rows = max(len(rows), 1)
    row_h = 0.024 if n_rows <= 8 else 0.019
    table_h = row_h * (n_rows + 1.6)
    top = 0.912 - 0.019 * (overview.count("\n") + 1) - 0.02
    fig.text(0.06, top, "Headline per hop", fontsize=11, weight="bold", va="top")
    ax = new_axes(fig, [0.05, top - 0.02 - table_h, 0.90, table_h], "headline", state)
    ax.axis("off")
    header = ["Hop", "Band, length", "Availability\n(observed time)", "Objective", "Objective\nmet",
              "Outage\n(unavailable)", "Below\nthreshold", "Main cause", "No data"]
    table = ax.table(cellText=rows or [["—"] * len(header)], colLabels=header, bbox=[0, 0, 1, 1],
                     cellLoc="center", colLoc="center",
                     colWidths=[0.155, 0.115, 0.165, 0.07, 0.1, 0.095, 0.09, 0.095, 0.115])
    table.auto_set_font_size(False)
    table.set_fontsize(6.8 if n_rows <= 8 else 6.0)
    for (row, col), cell in table.get_celld().items():
        cell.set_edgecolor(style.GRID)
        if row == 0:
            cell.set_text_props(weight="bold")
            cell.set_facecolor("#EFEFEF")
        elif col == 4:
            text = cell.get_text().get_text()
            if text == "NOT met":
                cell.set_text_props(weight="bold", color=style.BAD_TEXT)
            elif text == "met":
                cell.set_text_props(color=style.OK_TEXT)
    y = top - 0.03 - table_h
    note = HEADLINE_NOTE
    if len(results) > MAX_TABLE_ROWS:
        note = f"{len(results) - MAX_TABLE_ROWS} more hop(s) in outage_summary.csv. " + note
    fig.text(0.06, y, _wrap(note, 135), fontsize=6.8, va="top", style="italic")

    bar_top = y - 0.085
    bar_h = min(0.22, max(0.1, 0.022 * len(rows) + 0.05))
    _bar_by_cause(new_axes(fig, [0.2, bar_top - bar_h, 0.74, bar_h], "bars", state), results)
    key_bottom = _key_points(fig, results, top=bar_top - bar_h - 0.105)
    state["outlook_done"] = _outlook(fig, results, top=key_bottom - 0.03, bottom=0.075, state=state)
    fig.text(0.06, 0.035, _wrap(SAFETY_TEXT, 140), fontsize=7, color=style.INK, va="bottom")


def _bar_by_cause(ax, results: Sequence[LinkResult]) -> None:
    ax.set_title("Outage minutes (unavailable time) by cause", loc="left", fontsize=11, weight="bold")
    shown = [r for r in results if r.outage is not None][:MAX_TABLE_ROWS]
    names = [r.link.link_id for r in shown]
    y = np.arange(len(shown))[::-1]
    any_outage = False
    bounds_note = False
    used: list[str] = []
    for yi, r in zip(y, shown):
        bc = r.outage.by_cause.set_index("cause") if not r.outage.by_cause.empty else None
        left = 0.0
        exact = bool(r.outage.summary.get("exact"))
        for cause in style.CAUSE_ORDER:
            if bc is None or cause not in bc.index:
                continue
            value = bc.loc[cause, "unavailable_s" if exact else "unavailable_s_lo"]
            value = float(value) / 60.0 if _finite(value) else 0.0
            if value <= 0:
                continue
            any_outage = True
            if cause not in used:
                used.append(cause)
            ax.barh(yi, value, left=left, height=0.6, color=style.cause_color(cause),
                    hatch=style.cause_hatch(cause), edgecolor="white", linewidth=0.5)
            left += value
        if not exact:
            lo = float(r.outage.summary.get("unavailable_s_lo", 0)) / 60.0
            hi = float(r.outage.summary.get("unavailable_s_hi", 0)) / 60.0
            if hi > lo:
                any_outage = True
                bounds_note = True
                ax.plot([lo, hi], [yi, yi], color=style.INK, lw=1.2)
                ax.plot([hi], [yi], marker="|", color=style.INK, markersize=10)
                ax.text(hi, yi + 0.32, f"up to {hi:.0f} min", fontsize=6.5, va="bottom", ha="right")
        total = left
        ax.text(total, yi, f" {total:.1f}" if exact else "", va="center", fontsize=7)
    ax.set_yticks(y)
    ax.set_yticklabels(names, fontsize=7.5)
    ax.set_xlabel("minutes in the analysed period", fontsize=8)
    ax.tick_params(axis="x", labelsize=7)
    ax.grid(axis="x", color=style.GRID, lw=0.5)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    if not any_outage:
        ax.text(0.5, 0.5, "No unavailable time on any hop in this period", ha="center", va="center",
                transform=ax.transAxes, fontsize=10)
        ax.set_xlim(0, 1)
    legend_lines = 0
    if used:
        ncol = min(len(used), 3)
        legend_lines = -(-len(used) // ncol)
        from matplotlib.patches import Patch

        handles = [Patch(facecolor=style.cause_color(c), hatch=style.cause_hatch(c), edgecolor="white",
                         label=style.cause_label(c)) for c in style.CAUSE_ORDER if c in used]
        ax.legend(handles=handles, fontsize=7, loc="upper left", bbox_to_anchor=(-0.2, -0.16), ncol=ncol,
                  frameon=False, borderaxespad=0.0)
    if bounds_note:
        ax.annotate("Bars: the part that is certain; line: how far the outage may reach (coarse logs).",
                    xy=(-0.2, 0), xycoords="axes fraction", xytext=(0, -40 - 12 * legend_lines),
                    textcoords="offset points", fontsize=6.5, style="italic", va="top")  # below the legend


def _key_points(fig, results: Sequence[LinkResult], top: float) -> None:
    fig.text(0.06, top, "Key points", fontsize=11, weight="bold", va="top")
    lines = []
    for link_id, f in _top_findings(results, 4):
        title = f.get("title", "")
        action = _first_action(f)
        lines.append(_wrap(f"• {link_id}: {title}" + (f" — Action: {action}" if action else ""), 125))
    if not lines:
        worst = sorted([r for r in results if r.outage is not None],
                       key=lambda r: -(r.outage.summary.get("unavailable_s_hi") or 0))
        for r in worst[:4]:
            s = r.outage.summary
            main = s.get("main_cause")
            main = None if main == glossary.NO_OUTAGE else main
            lines.append(_wrap(f"• {r.link.link_id}: outage {format_minutes(s)}"
                               + (f", mostly {style.cause_label(main).lower()}" if main else "")
                               + f"; availability {format_availability(s)}.", 125))
    text = "\n".join(lines) if lines else "No findings."
    fig.text(0.06, top - 0.025, text, fontsize=7.5, va="top", linespacing=1.35)
    return top - 0.025 - 0.0135 * (text.count("\n") + 1)


def _outlook(fig, results: Sequence[LinkResult], top: float, bottom: float, state: dict) -> bool:
    """Yearly outlook per hop: a labelled extrapolation next to what the objective allows."""
    rows = []
    for r in results[:MAX_TABLE_ROWS]:
        s = r.outage.summary if r.outage is not None else None
        if not s or not s.get("observed_s"):
            continue
        lo = s.get("unavailable_min_per_year_linear_lo")
        hi = s.get("unavailable_min_per_year_linear_hi")
        wlo = s.get("unavailable_min_per_year_if_worst_month_lo")
        whi = s.get("unavailable_min_per_year_if_worst_month_hi")

        def rng(a, b):
            if not (_finite(a) and _finite(b)):
                return "n/a"
            return f"{a:,.0f} min" if round(a) == round(b) else f"{a:,.0f} – {b:,.0f} min"

        allowed = s.get("objective_min_per_year")
        rows.append([r.link.link_id, format_minutes(s), f"{s['observed_s'] / 86400:.1f} d", rng(lo, hi),
                     rng(wlo, whi), f"{allowed:,.1f} min" if _finite(allowed) else "no objective"])
    if not rows:
        return True
    if top - 0.02 - 0.02 * (len(rows) + 1.8) - 0.05 < bottom:
        return False
    fig.text(0.06, top, "Outlook for a year (extrapolation only)", fontsize=11, weight="bold", va="top")
    height = 0.02 * (len(rows) + 1.8)
    ax = new_axes(fig, [0.05, top - 0.02 - height, 0.90, height], "outlook", state)
    ax.axis("off")
    header = ["Hop", "Outage in\nperiod", "Observed", "Per year if every week\nwere like this one",
              "Per year if this was\nthe worst month (P.841)", "Allowed per year\nby the objective"]
    table = ax.table(cellText=rows, colLabels=header, bbox=[0, 0, 1, 1], cellLoc="center",
                     colWidths=[0.17, 0.11, 0.09, 0.22, 0.22, 0.19])
    table.auto_set_font_size(False)
    table.set_fontsize(7)
    for (row, col), cell in table.get_celld().items():
        cell.set_edgecolor(style.GRID)
        if row == 0:
            cell.set_text_props(weight="bold")
            cell.set_facecolor("#EFEFEF")
    fig.text(0.06, top - 0.03 - height, _wrap(
        "A week is not a year: rain and multipath are seasonal, so these yearly figures are rough extrapolations, "
        "not predictions (how they are made: method notes). Only a year or more of data supports an annual "
        "figure.", 135),
        fontsize=6.8, va="top", style="italic")
    return True


# ------------------------------------------------------------------------------------------------ page 3
def _pick_distribution(results: Sequence[LinkResult]):
    """The hop and channel whose fade-depth curve says the most: the most multipath exceedance, else any."""
    best = None
    for r in results:
        channels = (r.statistics or {}).get("channels", {}) if isinstance(r.statistics, dict) else {}
        for channel, block in sorted(channels.items()):
            ex = (block or {}).get("exceedance") or {}
            if not ex.get("all_percent"):
                continue
            score = sum(v for v in (ex.get("multipath_percent") or []) if _finite(v))
            key = (score, sum(v for v in ex["all_percent"] if _finite(v)))
            if best is None or key > best[0]:
                best = (key, r, channel, ex)
    return None if best is None else best[1:]


def _distribution(ax, results: Sequence[LinkResult]) -> None:
    ax.set_title("Fade depth: how often each depth was exceeded", loc="left", fontsize=10, weight="bold")
    picked = _pick_distribution(results)
    if picked is None:
        ax.text(0.5, 0.5, "No fade statistics available", ha="center", va="center", transform=ax.transAxes)
        ax.axis("off")
        return
    r, channel, ex = picked
    depth = np.asarray(ex.get("depth_db", []), dtype=float)

    def curve(key, **kw):
        values = ex.get(key)
        if not values:
            return
        y = np.array([v if _finite(v) and v > 0 else np.nan for v in values], dtype=float)
        if np.isfinite(y).any():
            ax.semilogy(depth, y, **kw)

    curve("all_percent", color=style.INK, lw=1.8, marker="o", ms=3.5, label="measured, all fades")
    curve("multipath_percent", color=style.cause_color(schema.MULTIPATH), lw=1.4, marker="x", ms=4,
          label="measured, multipath fades")
    curve("rain_percent", color=style.cause_color(schema.RAIN), lw=1.4, marker="s", ms=3,
          label="measured, rain fades")
    curve("all_percent_upper_bound", color=style.INK, lw=0.8, ls=":", label="upper bound (interval minima)")
    # Rayleigh tail (10 dB per decade of probability) drawn through the measured curve at the first depth >= 10 dB:
    # the unconditional Rayleigh law assumes fading all the time, the measured curve covers the whole period
    anchor_key = "multipath_percent" if any(_finite(v) and v > 0 for v in (ex.get("multipath_percent") or [])) \
        else "all_percent"
    anchor = ex.get(anchor_key) or []
    ref = next(((d, float(v)) for d, v in zip(depth, anchor) if d >= 10 and _finite(v) and v > 0), None)
    if ref is not None:
        ax.semilogy(depth, ref[1] * 10 ** (-(depth - ref[0]) / 10.0), color="#555555", lw=1.0, ls="--",
                    label=f"Rayleigh tail, 10 dB per decade (through {ref[0]:g} dB)")
    pred = ex.get("p530_multipath") or {}
    if pred.get("percent_worst_month"):
        y = np.array([v if _finite(v) and v > 0 else np.nan for v in pred["percent_worst_month"]], dtype=float)
        ax.semilogy(depth, y, color=style.cause_color(schema.MULTIPATH), lw=1.0, ls="-.",
                    label="design prediction, ITU-R P.530 (worst month)")
    from matplotlib.ticker import FuncFormatter

    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))   # plain numbers: no mathtext
    ax.set_xlabel("fade depth below the clear-sky level [dB]", fontsize=8)
    ax.set_ylabel("% of observed time exceeded", fontsize=8)
    ax.tick_params(labelsize=7)
    ax.grid(color=style.GRID, lw=0.4, which="both")
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=6.5, loc="upper right")
    else:   # no curve to draw or name (nothing faded that deep): say so instead of an empty legend box
        ax.text(0.5, 0.5, "No fade deep enough to plot in this period.", transform=ax.transAxes, ha="center",
                va="center", fontsize=8, color=style.INK)
    ax.text(0.0, -0.2, _wrap(f"Hop {r.link.link_id}, channel {channel}; percentages of the observed time. A clear-"
            "air multipath tail falls about 10 dB per decade like the dashed line; a flatter tail points to another "
            "cause (rain, obstruction). The P.530 design curve is for the worst month of an average year.", 125),
            fontsize=6.8, transform=ax.transAxes, va="top")


def _page_method(fig, results: Sequence[LinkResult], state: dict) -> None:
    fig.text(0.06, 0.965, "Fade depths, data gaps and method", fontsize=15, weight="bold", va="top")
    if state.get("outlook_done", True):
        _distribution(new_axes(fig, [0.1, 0.66, 0.84, 0.26], "fade depth", state), results)
        y = 0.56
    else:   # the yearly outlook did not fit on page 1: it goes here, under a smaller fade-depth chart
        _distribution(new_axes(fig, [0.1, 0.735, 0.84, 0.18], "fade depth", state), results)
        n = min(len(results), MAX_TABLE_ROWS)
        top = 0.655
        _outlook(fig, results, top=top, bottom=0.0, state=state)
        y = top - 0.02 - 0.02 * (n + 1.8) - 0.07
    blocks: list[tuple[str, list[str]]] = [("Data gaps", gaps_lines(results))]
    counters = counters_lines(results)
    if counters:
        blocks.append(("The radios' own counters", [_wrap(line, 135) for line in counters]))
    blocks.append(("Method notes", [_wrap("• " + m, 135) for m in method_notes(results)]))
    _draw_blocks(fig, blocks, top=y, bottom=0.03)


def _findings_pages(results: Sequence[LinkResult]) -> list[list[tuple[str, list[str]]]]:
    """The findings per hop cut into pages: a hop's block is never split; the cautions close the last page."""
    blocks = [(hop, lines) for hop, lines in findings_by_hop(results)]
    caution = ("Safety for every action above", [_wrap("• " + c, 135) for c in cautions_text(results)])
    pages: list[list[tuple[str, list[str]]]] = [[]]
    room = 0.90 - 0.03
    used = 0.0
    for block in blocks:
        h = _block_height(block[1])
        if pages[-1] and used + h > room:
            if len(pages) == MAX_FINDINGS_PAGES:
                pages[-1].append(("More", ["… more hops' findings in findings.json"]))
                break
            pages.append([])
            used = 0.0
        pages[-1].append(block)
        used += h
    if used + _block_height(caution[1]) > room:
        pages.append([])
    pages[-1].append(caution)
    return pages


def _page_findings(fig, blocks: list[tuple[str, list[str]]], first: bool) -> None:
    title = "Findings and recommended actions, per hop" + ("" if first else " (continued)")
    fig.text(0.06, 0.965, title, fontsize=15, weight="bold", va="top")
    if first:
        fig.text(0.06, 0.935, "Up to three findings per hop, most important first; all of them in findings.json.",
                 fontsize=8, va="top", style="italic")
    _draw_blocks(fig, blocks, top=0.91, bottom=0.03)


def _page_glossary(fig, results: Sequence[LinkResult], state: dict) -> None:
    fig.text(0.06, 0.965, "Glossary", fontsize=15, weight="bold", va="top")
    fig.text(0.06, 0.935, "The words of this report, and the trade terms it uses.", fontsize=8, va="top",
             style="italic")
    entries = glossary_entries()
    y = 0.91
    size = 6.9 if len(entries) > 30 else 7.3
    for term, text in entries:
        body = _wrap(text, 105)
        fig.text(0.06, y, term, fontsize=size, weight="bold", va="top")
        fig.text(0.30, y, body, fontsize=size, va="top", linespacing=1.2)
        y -= 0.0125 * (body.count("\n") + 1) + 0.005
        if y < 0.03:
            break


_LINE_H = 0.0113   # one line of 7.3-pt text at linespacing 1.25 on an A4 page, with a little air


def _block_height(lines: list[str]) -> float:
    return 0.022 + sum(_LINE_H * (line.count("\n") + 1) + 0.004 for line in lines) + 0.012


def _draw_blocks(fig, blocks: list[tuple[str, list[str]]], *, top: float, bottom: float) -> None:
    """Text blocks from ``top`` down, each a bold title and its lines (callers size the pages; a block that would
    run past ``bottom`` is cut with a pointer to findings.json)."""
    y = top
    for title, lines in blocks:
        fig.text(0.06, y, title, fontsize=10, weight="bold", va="top")
        y -= 0.022
        for line in lines:
            n_lines = line.count("\n") + 1
            if y - _LINE_H * n_lines < bottom:
                fig.text(0.06, y, "… more in findings.json", fontsize=7, va="top", style="italic")
                return
            fig.text(0.06, y, line, fontsize=7.3, va="top", linespacing=1.25)
            y -= _LINE_H * n_lines + 0.004
        y -= 0.012


# ------------------------------------------------------------------------------------------------ assembly
def build_figures(results: Iterable[LinkResult], templates: Templates | None = None) -> list:
    """The report's pages as matplotlib Figures (also used to render a page to PNG).  With ``templates`` the chart
    pages are drawn on that set's kept Figures and Axes (``diag.report.pdf_templates``), else on new ones."""
    from matplotlib.figure import Figure

    results = list(results)
    pages = []
    state: dict = {"templates": templates}
    for painter in (_page_summary, _page_timelines, _page_method):
        fig = new_figure(painter.__name__, state)
        painter(fig, results, state)
        pages.append(fig)
    for number, blocks in enumerate(_findings_pages(results)):
        fig = Figure(figsize=PAGE_SIZE_IN)
        _page_findings(fig, blocks, number == 0)
        pages.append(fig)
    fig = Figure(figsize=PAGE_SIZE_IN)
    _page_glossary(fig, results, state)
    pages.append(fig)
    return pages


# text.parse_math off: link ids and findings are user text, and a "$" in them must print, not start mathtext.
# The PDF uses the PDF standard Helvetica (core font, WinAnsi encoding): nothing to embed or subset per document
# and cheap text layout (about a third of the cost of a report went to TrueType subsetting and glyph layout).
# Characters WinAnsi lacks are replaced deliberately (``pdf_safe``); tick labels use the ASCII minus for that reason.
def pdf_bytes(results: Iterable[LinkResult], *, progress: Callable | None = None) -> bytes:
    """The report as PDF bytes (deterministic: no creation date in the metadata).  The chart pages are drawn on
    Figures kept from the previous report of this process (``diag.report.pdf_templates``); the bytes are the same
    as from new ones."""
    with _collector_paused():    # the first report of a process also imports matplotlib: paused for that too
        templates = pdf_templates.take()
        data = _pdf_bytes(results, progress, templates)
        pdf_templates.give_back(templates)   # (not after an error: a set left half-way is dropped)
        return data


def _pdf_bytes(results: Iterable[LinkResult], progress: Callable | None, templates: Templates | None) -> bytes:
    load_pdf_backend()
    import matplotlib
    from matplotlib.backends.backend_pdf import PdfPages

    buffer = io.BytesIO()
    with matplotlib.rc_context(_RC), _quiet_font_lookup():
        _size_blind_core_font_lookup()
        _keep_string_metrics()
        pages = build_figures(results, templates)
        with PdfPages(buffer, metadata={"Title": "Microwave hop outage report", "Creator": "diag",
                                        "Producer": "diag (matplotlib)", "CreationDate": None,
                                        "ModDate": None}) as pdf:
            _reuse_font_metrics(pdf)
            for i, fig in enumerate(pages):
                _make_pdf_safe(fig)
                pdf.savefig(fig)
                if progress is not None:
                    progress(i + 1, len(pages), f"report page {i + 1}")
    return buffer.getvalue()


_GC_LOCK = threading.Lock()
_gc_holders = 0
_gc_was_enabled = False


@contextlib.contextmanager
def _collector_paused():
    """Python's cyclic garbage collector paused while a report is drawn (resumed when the last drawing thread is
    done).  Drawing makes tens of thousands of small matplotlib objects; each allocation burst would start a
    collection that walks every object of the process (the analysis results, pandas, matplotlib), about a quarter
    of a report's CPU.  The figures' own cycles are collected after the report, at the next collection."""
    global _gc_holders, _gc_was_enabled
    with _GC_LOCK:
        if _gc_holders == 0:
            _gc_was_enabled = gc.isenabled()
            gc.disable()
        _gc_holders += 1
    try:
        yield
    finally:
        with _GC_LOCK:
            _gc_holders -= 1
            if _gc_holders == 0 and _gc_was_enabled:
                gc.enable()


def page_png_bytes(results: Iterable[LinkResult], page: int = 0, *, dpi: int = 80) -> bytes:
    """One page rendered to PNG with the same drawing code (for previews and tests without a PDF renderer)."""
    import matplotlib
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    with matplotlib.rc_context(_RC_PNG):
        fig = build_figures(results)[page]
        FigureCanvasAgg(fig)
        buffer = io.BytesIO()
        fig.savefig(buffer, format="png", dpi=dpi)
    return buffer.getvalue()
