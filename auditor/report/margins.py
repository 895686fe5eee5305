"""The margins of a confirmed state (equilibrium/margins.py) in the JSON document, the
terminal and the filed report."""
from __future__ import annotations

import math

from .. import settings
from ..equilibrium.margin_findings import boundary_sentence, threshold_words
from ..equilibrium.margins import is_near
from .blocks import Block
from .blocks import items_list as _list
from .blocks import paragraph as _para
from .blocks import table as _table


def _finite(x):
    return x if x is not None and math.isfinite(x) else None


def _distance(b) -> str:
    """In kelvin for a temperature, else in the case's unit."""
    if b.variable == "temperature":
        return f"{b.distance:.4g} K"
    return f"{abs(b.user_value - b.user_design):.4g} {b.user_unit}".rstrip()


def margins_list(report) -> list[dict]:
    """The JSON ``margins`` list: one entry per phase boundary found (nearest first), then one per
    phase and variable with none inside the interval searched (``value_SI`` null)."""
    return [{"phase": b.phase, "change": b.change, "variable": b.variable, "side": b.side or None,
             "value_SI": b.value, "unit_SI": b.unit, "value": b.user_value, "unit": b.user_unit,
             "design_SI": b.design, "design": b.user_design, "distance_SI": b.distance,
             "relative_distance": _finite(b.relative), "near": is_near(b), "searched_SI": list(b.searched),
             "searched": list(b.user_searched)} for b in report.boundaries]


def sensitivities_document(report) -> dict | None:
    """The JSON ``sensitivities`` block: derivatives at the confirmed state (implicit
    differentiation of the equilibrium conditions with the present phases held)."""
    s = report.sensitivities
    if s is None:
        return None
    names = [v for v, _ in s.variables]

    def by_item(items, rows):
        return {item: {v: row[i] for v, row in zip(names, rows)} for i, item in enumerate(items)}
    return {
        "variables": {v: u for v, u in s.variables},
        "held": list(report.held),
        "species_amounts": by_item(s.species, s.amounts),
        "mole_fractions": by_item(s.species, s.mole_fractions),
        "phase_amounts": by_item(s.phases, s.phase_amounts),
        "heat_capacity_J_K": s.heat_capacity_J_K,
        "frozen_heat_capacity_J_K": s.frozen_heat_capacity_J_K,
        "outlet_temperature_K": dict(s.outlet_temperature) if s.outlet_temperature else None,
    }


def search_document(report) -> dict:
    """How the margins were searched: what was held, what could not be probed, the bounds."""
    return {"held": list(report.held), "not_probed": [{"phase": p, "reason": why} for p, why in report.not_probed],
            "problems": list(report.problems),
            "bounds": {"temperature_span_K": settings.MARGIN_TEMPERATURE_SPAN_K,
                       "pressure_factor": settings.MARGIN_PRESSURE_FACTOR,
                       "feed_factor": settings.MARGIN_FEED_FACTOR},
            "near_threshold": {"temperature_K": settings.MARGIN_NEAR_TEMPERATURE_K,
                               "relative": settings.MARGIN_NEAR_RELATIVE}}


def margin_lines(report) -> list[str]:
    """Terminal lines: one per margin, nearest first, then the variables with none found."""
    out = ["Margins (present phases held; each variable moved alone; nearest first):"]
    for b in report.boundaries:
        mark = "  ! " if is_near(b) else "    "
        out.append(mark + boundary_sentence(b))
    if not report.boundaries:
        out.append("    no phase can appear or vanish along the probed variables")
    out += [f"    not probed: {p}: {why}" for p, why in report.not_probed]
    out += [f"    {p}" for p in report.problems]
    s = report.sensitivities
    if s is not None:
        line = (f"    equilibrium heat capacity {s.heat_capacity_J_K:.6g} J/K (at fixed amounts "
                f"{s.frozen_heat_capacity_J_K:.6g} J/K)")
        if s.outlet_temperature:
            line += "; outlet temperature " + ", ".join(f"dT/d({v}) = {d:.4g} K per unit" for v, d in s.outlet_temperature)
        out.append(line)
    return out


def nearest_words(report) -> str | None:
    """The nearest boundary when it is nearer than the stated threshold, for the verdict box."""
    near = [b for b in (report.boundaries if report else ()) if is_near(b)]
    return f"Nearest phase boundary: {boundary_sentence(near[0])}." if near else None


def margin_blocks(r, doc: dict) -> list[Block]:
    """The report's Margins section."""
    report = getattr(r, "margins", None)
    if report is None:
        return [_para("Margins were not computed (the case has no 'margins:' key and --margins was not given, "
                      "or there is no confirmed state).")]
    blocks = [_para("Each variable is moved alone from the design point with the phases present there held; a "
                    "boundary is where an absent phase's driving force or a present phase's amount reaches zero "
                    "(bracketed: false position with bisection steps). The first boundary on each side ends that side's search. "
                    f"Named as near: closer than {threshold_words()}.")]
    found = [b for b in report.boundaries if b.value is not None]
    blocks.append(_table(("phase", "change", "variable", "at the boundary", "design", "distance", "near"),
                         [(b.phase, f"{b.change} {b.side}", b.variable, f"{b.user_value:.6g} {b.user_unit}".rstrip(),
                           f"{b.user_design:.6g} {b.user_unit}".rstrip(), _distance(b),
                           "yes" if is_near(b) else "no") for b in found], "Phase boundaries, nearest first")
                  if found else _para("No phase boundary lies inside the intervals searched."))
    none = [boundary_sentence(b) for b in report.boundaries if b.value is None]
    if none:
        blocks += [_para("No boundary inside the interval searched:"), _list(none)]
    blocks += [_para(f"Not probed: {p}: {why}.") for p, why in report.not_probed]
    blocks += [_para(p + ".") for p in report.problems]
    s = doc.get("sensitivities")
    if s:
        names = list(s["variables"])
        head = ("quantity",) + tuple(f"d/d {v} ({'per ' + u if u else 'per unit'})" for v, u in s["variables"].items())
        rows = [(f"amount of {k}, mol", *(f"{d[v]:.4g}" for v in names)) for k, d in s["species_amounts"].items()]
        rows += [(f"mole fraction of {k}", *(f"{d[v]:.4g}" for v in names)) for k, d in s["mole_fractions"].items()]
        rows += [(f"amount of phase {k}, mol", *(f"{d[v]:.4g}" for v in names)) for k, d in s["phase_amounts"].items()]
        blocks.append(_table(head, rows, "Sensitivities at the confirmed state (implicit differentiation)"))
        text = (f"Equilibrium heat capacity {s['heat_capacity_J_K']:.6g} J/K (the shift of the equilibrium "
                f"included); at fixed amounts {s['frozen_heat_capacity_J_K']:.6g} J/K.")
        if s["outlet_temperature_K"]:
            text += " Outlet temperature of the energy balance: " + "; ".join(
                f"dT/d({v}) = {d:.4g} K per unit" for v, d in s["outlet_temperature_K"].items()) + "."
        blocks.append(_para(text))
    return blocks
