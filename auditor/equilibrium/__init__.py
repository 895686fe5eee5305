"""Gibbs-energy minimisation at the specified state, and a certificate of optimality.

Method: minimise G over the phase-species subject to the conserved quantities
(W. R. Smith and R. W. Missen, *Chemical Reaction Equilibrium Analysis*, 1982, ch. 6-7),
with cantera's multiphase solver (``vcs``; D. G. Goodwin et al., Cantera, www.cantera.org)
when the reaction list is complete, and with the element-potential minimiser of
:mod:`.minimiser` holding the extra conserved quantities fixed when it is not.

The rooms of this stage, in the order ``confirm`` runs them:

* ``workspace.py``  what a case's solves share (cantera phases of ``model.py``, arrays,
  mixtures, present-set bases, Jacobian layouts), created here or handed in by a sweep;
* ``routes.py``     the T,P minimisation along fixed fallback routes;
* ``solve.py``      the state at the specifications (outer solve on T or P, transitions),
  and the passes over the routes until a certificate holds;
* ``certificate.py`` the certificate (``uniqueness.py``, ``jacobian.py`` for two parts);
* ``result.py``     the frozen ``EquilibriumCheck``.
"""
from __future__ import annotations

import time

from ..case import Case
from ..findings import Finding
from ..phase_rule import PhaseRuleCount
from ..stoichiometry import ReactionAnalysis
from ..structure import SpecificationAudit
from ..system import ChemicalSystem
from ..errors import one_line
from ..verdicts import Verdict
from .model import IDEAL_MODELS, density_table
from .result import EquilibriumCheck, PhaseState, certificate_holds
from .routes import ROUTE_OURS, RouteSolver
from .solve import certified_on_routes
from .workspace import RESTARTS, Workspace, feed_vector

__all__ = ["confirm", "confirm_equilibrium", "feed_vector", "EquilibriumCheck", "PhaseState", "Workspace", "certificate_holds", "density_table",
           "ROUTE_OURS", "RESTARTS"]


def confirm(case: Case, system: ChemicalSystem, analysis: ReactionAnalysis, count: PhaseRuleCount,
            spec: SpecificationAudit, workspace: Workspace | None = None, heat: bool = True) -> EquilibriumCheck:
    """Solve the case's equilibrium and check the certificate; failures become findings.

    ``workspace`` holds what the solves of this system and reaction analysis share; a
    caller evaluating many states of one case (a sweep) passes the same one each time.
    ``heat``: compute the heat from the feed to the state (a sweep, which records no heat,
    leaves it out).
    """
    t0 = time.perf_counter()
    findings: list[Finding] = []

    def not_solved(message: str, severity="error", assumed=()):
        findings.append(Finding(severity, "equilibrium", message))
        return EquilibriumCheck.not_solved(findings, assumed, time.perf_counter() - t0)

    if analysis.unbalanced:
        return not_solved("Gibbs minimisation not run: a listed reaction does not balance, so the conserved "
                          "quantities are not those of the elements", "note")
    if spec.status != Verdict.WELL_POSED:
        return not_solved(f"Gibbs minimisation not run: the case is {spec.status}, so its equilibrium state "
                          "is not determined by what it fixes", "note")
    if workspace is None:
        workspace = Workspace(system, analysis)
    elif workspace.system is not system or workspace.analysis is not analysis:
        raise ValueError("the workspace belongs to another system or reaction analysis")
    try:
        model = workspace.model
    except Exception as exc:
        return not_solved(f"cantera cannot build the phases for the minimisation: {one_line(exc, 300)}")
    findings += [Finding("warning", "equilibrium", p) for p in model.problems]
    findings += _treated_as_ideal(system, analysis, model)
    if not any(model.usable):
        return not_solved("no phase of this system can enter a Gibbs minimisation", assumed=model.assumed)
    # a species holding an element the feed lacks can never form (and a pure phase of one makes
    # cantera's vcs solver fail)
    n0, candidate = workspace.feed(case)
    solver = RouteSolver(workspace, n0, candidate)
    solver.report_heat = heat
    if case.approach:
        from .approach import approach_plan
        solver.approach = approach_plan(case, system, analysis)
        if not workspace.arrays.ideal:
            findings.append(Finding("warning", "equilibrium", "an approach to equilibrium is solved by the "
                                    "element-potential minimiser, which treats every phase as ideal"))
    return certified_on_routes(case, count, spec, solver, findings, t0)


def _treated_as_ideal(system: ChemicalSystem, analysis: ReactionAnalysis, model) -> list[Finding]:
    """The element-potential minimiser knows only standard potentials: say which model it drops."""
    if analysis.complete and all(model.usable):
        return []
    non_ideal = [ph.name for ph, ok in zip(system.phases, model.usable) if ok and ph.model not in IDEAL_MODELS]
    if not non_ideal:
        return []
    why = ("the reaction list is incomplete, so the element-potential minimiser holds the extra conserved "
           "quantities" if not analysis.complete else "a phase cannot enter cantera's multiphase solver, so "
           "the element-potential minimiser solves the rest")
    models = ", ".join(f"{p} ({system.phase(p).model})" for p in non_ideal)
    return [Finding("warning", "equilibrium", f"{why}; it treats phase(s) {models} as ideal: their "
                    "model is not used in the minimisation", tuple(non_ideal))]


confirm_equilibrium = confirm      # the name a caller with its own 'confirm' flag imports
