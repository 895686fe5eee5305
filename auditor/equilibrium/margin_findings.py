"""The margins of a confirmed state as findings and sentences (one wording for the terminal,
the report and the findings)."""
from __future__ import annotations

from .. import settings
from ..findings import Finding
from .margins import TEMPERATURE, Boundary, MarginReport, is_near, margins

NAMES = {TEMPERATURE: "temperature", "pressure": "pressure"}


def _value(v: float, unit: str) -> str:
    if unit in ("K", "degC", "degF", "degR"):
        return f"{v:.1f} {unit}"
    text = f"{v:.4g}"
    return f"{text} {unit}".rstrip()


def variable_words(variable: str) -> str:
    if variable.startswith("feed."):
        return f"a feed of {variable[5:]}"
    if variable.startswith("ratio."):
        return f"a feed atom ratio {variable[6:]}"
    return f"a {variable}"


def distance_words(b: Boundary) -> str:
    """How far the boundary is from the design point: kelvin for a temperature, else the
    difference in the case's unit and as a percentage of the design value."""
    if b.variable == TEMPERATURE:
        return f"{b.distance:.1f} K {b.side} the design point"
    pct = f", {100 * b.relative:.3g} %" if b.design else ""
    return f"{_value(abs(b.user_value - b.user_design), b.user_unit)} {b.side} the design value " \
           f"{_value(b.user_design, b.user_unit)}{pct}"


def boundary_sentence(b: Boundary) -> str:
    """``graphite appears below a temperature of 612.4 degC (37.6 K below the design point)``; for
    none found, the interval searched."""
    if b.value is None:
        lo, hi = b.user_searched
        return (f"{b.phase} {b.change} nowhere between {_value(lo, b.user_unit)} and {_value(hi, b.user_unit)} "
                f"of {b.variable} (searched)")
    return (f"{b.phase} {b.change} {b.side} {variable_words(b.variable)} of {_value(b.user_value, b.user_unit)} "
            f"({distance_words(b)})")


def threshold_words() -> str:
    return (f"{settings.MARGIN_NEAR_TEMPERATURE_K:g} K in temperature, "
            f"{100 * settings.MARGIN_NEAR_RELATIVE:g} % of the design value otherwise")


def margin_report_and_findings(case, check, workspace) -> tuple[MarginReport | None, list[Finding]]:
    """The margins of a confirmed state, and findings: a boundary nearer than the stated
    threshold, a variable along which the state could not be followed, a phase not probed."""
    if not check.confirmed:
        return None, [Finding("note", "margins", "margins not computed: the equilibrium state is not confirmed, so "
                              "there is no design state to measure them from")]
    report = margins(case, check, workspace, case.margins or ())
    out = []
    for b in report.boundaries:
        if is_near(b):
            out.append(Finding("warning", "margins", f"design point within {distance_words(b).split(' the ')[0]} "
                               f"of the {b.phase} boundary: {boundary_sentence(b)}", (b.phase,)))
    out += [Finding("note", "margins", f"margins: {p}") for p in report.problems]
    out += [Finding("note", "margins", f"margins: phase {p} is not probed: {why}", (p,)) for p, why in report.not_probed]
    return report, out
