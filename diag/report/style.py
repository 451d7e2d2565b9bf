"""One palette for every chart of diag (PDF report and dashboard): colour, hatch and label per cause.

The colours are our own choice: hues far apart for the common colour-vision deficiencies (blue against orange
rather than red against green) and lightness steps that still separate the causes on a grey-scale print.  Colour is
never the only cue: every cause also has a hatch pattern and a text label.
"""
from __future__ import annotations

from diag import glossary, schema

CAUSE_ORDER = (schema.RAIN, schema.MULTIPATH, schema.REFRACTIVE, schema.LEVEL_SHIFT, schema.SIGNAL_LOSS,
               schema.UNKNOWN)

CAUSE_COLORS = {
    schema.RAIN: "#1F5FA8",          # deep blue
    schema.MULTIPATH: "#E08A00",     # orange
    schema.REFRACTIVE: "#6CC0E8",    # light sky blue
    schema.LEVEL_SHIFT: "#B8488F",   # magenta-purple
    schema.SIGNAL_LOSS: "#303030",   # near black
    schema.UNKNOWN: "#A6A6A6",       # mid grey
    schema.NO_DATA: "#FFFFFF",       # white, drawn with an outline and dots
}

# matplotlib hatch patterns (the dashboard maps them to its own dash/marker styles)
CAUSE_HATCHES = {
    schema.RAIN: "////",
    schema.MULTIPATH: "xxx",
    schema.REFRACTIVE: "\\\\\\\\",
    schema.LEVEL_SHIFT: "---",
    schema.SIGNAL_LOSS: "",
    schema.UNKNOWN: "...",
    schema.NO_DATA: "..",
}

CAUSE_LABELS = glossary.CAUSE_LABELS      # labels and two-letter marks are defined once, in diag.glossary

# short marks printed on timelines above each group of fades, so a black-and-white print still names the cause
CAUSE_MARKS = glossary.CAUSE_CODES

# neutral colours for lines and text
INK = "#1A1A1A"
GRID = "#D0D0D0"
THRESHOLD = "#C0392B"      # receiver threshold line (also dashed, so it reads in grey)
LEVEL_LINES = ("#1A1A1A", "#7A7A7A")   # first and second channel of a hop
OK_TEXT = "#1B7F3B"
BAD_TEXT = "#B03A2E"

__all__ = ["CAUSE_ORDER", "CAUSE_COLORS", "CAUSE_HATCHES", "CAUSE_LABELS", "CAUSE_MARKS", "INK", "GRID", "THRESHOLD",
           "LEVEL_LINES", "OK_TEXT", "BAD_TEXT", "cause_color", "cause_hatch", "cause_label"]


def cause_color(cause: str) -> str:
    return CAUSE_COLORS.get(cause, CAUSE_COLORS[schema.UNKNOWN])


def cause_hatch(cause: str) -> str:
    return CAUSE_HATCHES.get(cause, CAUSE_HATCHES[schema.UNKNOWN])


def cause_label(cause: str) -> str:
    return glossary.cause_label(cause)
