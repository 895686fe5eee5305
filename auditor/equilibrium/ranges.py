"""Thermo data ranges at a solved state (design: "data ranges are physics").

A condensed species is used only inside its thermo data's temperature range
(``workspace.outside_range``; the route solver leaves such species out of every solve at
that temperature).  Here, at the certified state: which phases were set aside and what
may stand in for them (a species of the same formula whose data cover T: ice -> liquid
water -> steam; a low-temperature polymorph -> the high one), whether the case assumed a
phase that cannot exist at T, and how far a present species' data are extrapolated.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .. import settings
from ..findings import Finding
from ..system import ChemicalSystem
from .workspace import CaseArrays


def beyond(T: float, t_min: float, t_max: float) -> str:
    """How far ``T`` lies outside [t_min, t_max], in words with the distance in K."""
    if T < t_min:
        return f"{t_min - T:.4g} K below the lower end of its data ({t_min:g}-{t_max:g} K)"
    return f"{T - t_max:.4g} K above the upper end of its data ({t_min:g}-{t_max:g} K)"


@dataclass
class RangeReport:
    """What the data ranges say at one state."""

    ok: bool = True                                # no present or assumed phase outside its data
    findings: list = field(default_factory=list)
    set_aside: tuple = ()                          # (phase, why) for each phase left out at this T


def _stand_ins(system: ChemicalSystem, k: int, usable: np.ndarray, T: float) -> str:
    """Species of the same formula as species ``k`` that may form at ``T``, in words."""
    sp, tol = system.species[k], settings.THERMO_RANGE_TOLERANCE_K
    gas = {p.name for p in system.phases if p.is_gas}
    inside = [f"{s.label} (phase {s.phase})" for j, s in enumerate(system.species)
              if j != k and usable[j] and s.formula == sp.formula and s.charge == sp.charge
              and (s.phase in gas or s.t_min - tol <= T <= s.t_max + tol)]
    text = f"; {', '.join(inside)} of the same formula stay{'s' if len(inside) == 1 else ''} a candidate" if inside else ""
    if inside:
        return text
    if system.source == "packaged":
        from ..system import same_formula_species
        names = set(system.labels) | {s.name for s in system.species}
        extra = [f"{n} ({lo:g}-{hi:g} K, {db})" for n, db, lo, hi in
                 same_formula_species(dict(sp.formula.items()), float(sp.charge), T, tol) if n not in names]
        if extra:
            return (f"; the packaged data hold {', '.join(extra)} of the same formula, valid at this T: add "
                    f"{'it' if len(extra) == 1 else 'one'} to the system to let it form")
    return "; no species of the same formula in the system is valid at this T"


def range_report(system: ChemicalSystem, arrays: CaseArrays, candidate: np.ndarray, at_T: np.ndarray,
                 present: np.ndarray, x: np.ndarray, T: float, assumed: tuple) -> RangeReport:
    """Findings on the data ranges at a state of temperature ``T``.  ``candidate``: species
    that may form from the feed; ``at_T``: those that may form at ``T``; ``present`` and ``x``
    (mole fractions) describe the state; ``assumed``: the phases the case assumes present."""
    out = RangeReport()
    names = []
    # ``at_T`` is ``candidate`` less the condensed species outside their data (``outside_range``):
    # none when every condensed species' data cover T, the common case, and nothing is set aside
    inside = arrays.condensed_low <= T <= arrays.condensed_high
    aside = None if inside else candidate & arrays.usable_species & ~at_T
    for p in () if inside else sorted(set(arrays.phase_of[aside].tolist())):
        phase = system.phases[p].name
        idx = arrays.phase_species[p]
        left = idx[aside[idx]]
        whole = not (candidate[idx] & at_T[idx]).any()
        data = ", ".join(f"{system.species[k].label} {beyond(T, system.species[k].t_min, system.species[k].t_max)}"
                         for k in left)
        what = f"phase {phase}" if whole else f"species {', '.join(system.species[k].label for k in left)} of phase {phase}"
        if whole:
            names.append((phase, data))
        alternatives = "".join(_stand_ins(system, int(k), arrays.usable_species, T) for k in left)
        if phase in assumed and whole:
            out.ok = False
            out.findings.append(Finding("error", "data", f"the case assumes phase {phase} present, but at T = {T:.2f} K "
                                        f"it cannot exist: {data}, and a phase is valid only inside its thermo data's "
                                        f"temperature range{alternatives}", (phase,)))
        else:
            out.findings.append(Finding("note", "data", f"{what} set aside at T = {T:.2f} K: {data}; outside its "
                                        f"thermo data's temperature range it cannot form{alternatives}", (phase,)))
    out.set_aside = tuple(names)
    tol = settings.THERMO_RANGE_TOLERANCE_K
    if arrays.t_low - tol <= T <= arrays.t_high + tol:
        return out
    phase_of = arrays.phase_of
    for k in np.flatnonzero(present & ((T < arrays.t_min - tol) | (T > arrays.t_max + tol))).tolist():
        sp = system.species[k]
        where = beyond(T, sp.t_min, sp.t_max)
        if arrays.condensed[k] and x[k] > settings.PHASE_PRESENCE_FRACTION:
            out.ok = False
            out.findings.append(Finding("error", "data", f"the state holds condensed species {sp.label} (phase "
                                        f"{system.phases[phase_of[k]].name}) at T = {T:.2f} K, {where}: its data "
                                        "do not apply, so the state is not certified", (sp.label,)))
        elif not arrays.condensed[k]:
            out.findings.append(Finding("warning", "data", f"gas species {sp.label}: T = {T:.2f} K is {where}; "
                                        "its properties are extrapolated", (sp.label,)))
    return out
