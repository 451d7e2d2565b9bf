"""The report's chart pages kept between reports (issue 18: figures made once, updated per hop).

Pages 1-3 of the management report hold charts and tables on matplotlib Axes.  Making an Axes (spines, axis,
title texts) and its ticks (each a few lines and texts) was about a third of a one-hop report's CPU, the same
work for every hop.  A :class:`Templates` set keeps each page's Figure and Axes: the next report removes the
previous one's texts, lines, patches, collections, tables and legends, puts the kept Axes back in the order the
painters ask for them (same place, same role), resets their scales and limits as a fresh Axes has them, and the
painters draw on them as on new ones.  The ticks stay (matplotlib updates their places and labels when drawing).
The PDF is the same byte for byte as from new figures (``tests/report/test_pdf_templates.py`` compares them).

Sets are taken from a pool and given back after a report, so threads never share one.  Only the PDF uses them
(the PNG preview draws with other rc settings); pages without charts (findings, glossary) are made new.
"""
from __future__ import annotations

import threading

PAGE_SIZE_IN = (8.27, 11.69)  # A4 portrait

_POOL: list["Templates"] = []
_POOL_LOCK = threading.Lock()
_POOL_MAX = 4   # sets kept at most (one per drawing thread; a set holds 3-7 MiB after a one- or 12-hop report)


class Templates:
    """The Figures and Axes of one report's chart pages, reused by the next report drawn with this set."""

    def __init__(self) -> None:
        self._figures: dict = {}    # page -> Figure
        self._axes: dict = {}       # (page, role, n-th of that role on the page) -> Axes
        self._page = ""
        self._counts: dict = {}

    def figure(self, page: str):
        """The Figure of ``page``, emptied (its Axes detached, its texts and legends removed)."""
        from matplotlib.figure import Figure

        fig = self._figures.get(page)
        if fig is None:
            fig = self._figures[page] = Figure(figsize=PAGE_SIZE_IN)
        else:
            for ax in list(fig.axes):
                fig.delaxes(ax)
            for artist in [*fig.texts, *fig.legends, *fig.lines, *fig.patches, *fig.images, *fig.artists]:
                artist.remove()
        self._page, self._counts = page, {}
        return fig

    def axes(self, fig, rect, role: str):
        """The next Axes of ``role`` on the current page at ``rect``, kept or new."""
        n = self._counts.get(role, 0)
        self._counts[role] = n + 1
        key = (self._page, role, n)
        ax = self._axes.get(key)
        if ax is None:
            ax = self._axes[key] = fig.add_axes(rect)
        else:
            fig.add_axes(ax)
            _as_new(ax, rect)
        return ax


def _as_new(ax, rect) -> None:
    """A kept Axes as the painters find a new one: nothing drawn on it, no units (dates), linear scales, limits
    autoscaled from nothing, axis on, colour cycle at its start.  What the painters always set again (titles,
    labels, tick and grid style, spines, locators and formatters) is left to them."""
    from matplotlib import cbook
    from matplotlib.transforms import Bbox

    ax.set_position(rect)
    ax.set_in_layout(True)      # (set_position takes an Axes out of automatic layouts; add_axes does not)
    for group in (ax.lines, ax.patches, ax.collections, ax.texts, ax.tables, ax.images, ax.artists):
        for artist in list(group):
            artist.remove()
    if ax.get_legend() is not None:
        ax.get_legend().remove()
    ax.containers.clear()
    for axis in (ax.xaxis, ax.yaxis):   # units found again from the data, as after Axis.clear
        axis._converter, axis._converter_is_explicit, axis.units = None, False, None
        axis.callbacks = cbook.CallbackRegistry(signals=["units"])
    ax.set_axis_on()
    ax.set_xscale("linear")
    ax.set_yscale("linear")
    ax.xaxis.label.set_text("")
    ax.yaxis.label.set_text("")
    ax.set_prop_cycle(None)
    ax.dataLim.set(Bbox.null())
    ax.ignore_existing_data_limits = True
    ax.set_xlim(0, 1, auto=True)
    ax.set_ylim(0, 1, auto=True)


def new_axes(fig, rect, role: str, state: dict):
    """An Axes at ``rect`` for the painters: from the report's template set when it has one, else new."""
    templates = state.get("templates")
    return fig.add_axes(rect) if templates is None else templates.axes(fig, rect, role)


def new_figure(page: str, state: dict):
    """A page's Figure: from the report's template set when it has one, else new."""
    from matplotlib.figure import Figure

    templates = state.get("templates")
    return Figure(figsize=PAGE_SIZE_IN) if templates is None else templates.figure(page)


def take() -> Templates:
    """A template set no other thread is drawing with (a new one when the pool is empty)."""
    with _POOL_LOCK:
        return _POOL.pop() if _POOL else Templates()


def give_back(templates: Templates) -> None:
    """Return a set after a report drawn to the end (a set left half-way by an error is dropped)."""
    with _POOL_LOCK:
        if len(_POOL) < _POOL_MAX:
            _POOL.append(templates)
