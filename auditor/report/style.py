"""The project's own look, defined once: chart colours, verdict tints, report ink.

Every renderer takes its colours from here; nothing else in the package names a colour.
The series palette is ordered so that neighbours differ in hue and in lightness, which
keeps the first few series apart in greyscale print too.
"""
from __future__ import annotations

from ..verdicts import Verdict

# Series colours for charts (compositions, phase-presence maps), in order of use.
SERIES = ("#1b6f6a",  # deep teal
          "#c07a12",  # ochre
          "#8e3b46",  # brick
          "#5b4a8b",  # dusk violet
          "#4f6d2f",  # moss
          "#2f5d8a",  # harbour blue
          "#a35d2e",  # rust
          "#6b6f73",  # slate grey
          "#b39b2d",  # mustard
          "#3c8d93")  # sea green

INDEPENDENT = SERIES[0]        # reaction kept as independent
DEPENDENT = SERIES[1]          # reaction that is a combination of the kept ones
SHADE_OUT_OF_RANGE = "#ecd9cf"  # band where thermo data are extrapolated

INK = "#1d232a"                # body text
RULE = "#8a9099"               # table and heading rules
HEADER_FILL = "#e8ebe4"        # table header cells
DIFFERS_FILL = "#fff3c4"     # a comparison row whose value changes between operating cases
GRID = "#d5d9de"               # chart gridlines
PAPER_TINT = "#f4f3ee"         # background of embedded files
AXIS = INK                     # chart frames, axes and legend outlines
LABEL_HALO = "#ffffff"         # outline behind labels drawn over coloured regions
BOUNDARY = INK                 # a traced phase boundary on a map
DESIGN_POINT = "#c2185b"       # the case's own design point on a map (crimson, apart from every series colour)

# Verdict box: (fill, border) per verdict.
_GOOD, _TO_FIX, _WRONG = ("#e2eee4", "#2f6b45"), ("#f5ecd7", "#9a6a12"), ("#f2e0db", "#8e3b46")
VERDICT = {
    Verdict.WELL_POSED: _GOOD,
    Verdict.UNDER_SPECIFIED: _TO_FIX,
    Verdict.OVER_SPECIFIED: _TO_FIX,
    Verdict.INCONSISTENT: _WRONG,
    Verdict.NOT_CONFIRMED: _WRONG,
}

# Terminal (ANSI SGR codes): verdict words and finding severities on a colour terminal.
_TERMINAL_TINT = {_GOOD: "1;32", _TO_FIX: "1;33", _WRONG: "1;31"}
TERMINAL_VERDICT = {v.upper(): _TERMINAL_TINT[tint] for v, tint in VERDICT.items()}
TERMINAL_SEVERITY = {"error": "31", "warning": "33"}


def series(i: int) -> str:
    """Colour of series ``i`` (0-based), cycling through ``SERIES``."""
    return SERIES[i % len(SERIES)]
