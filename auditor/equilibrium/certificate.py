"""A certificate of optimality for a solved state.

The answer is not trusted: a certificate is checked instead.
* balance: ``|W n - W n0| / |W n0|`` for every conserved quantity;
* element potentials ``lambda`` fitted to ``mu_k / RT = A_k . lambda`` over present
  species, and the largest residual;
* the largest affinity, in RT, of any independent reaction among present species;
* the driving force to form each absent phase, maximised over the element potentials
  that the present species leave undetermined (rank-deficient present formula matrix,
  elements of zero abundance), so that non-uniqueness raises no false alarm;
* uniqueness (``unique``): proved for ideal phases from convexity, the absent phases'
  driving forces and the rank of the present phases' conserved-quantity vectors, and
  checked by restarting cantera from other starting estimates (``uniqueness``);
* present phases against those assumed; temperature inside each present species' data
  (condensed species outside their data were set aside before the solve: :mod:`.ranges`);
* ``ln K`` of every dependent reaction equal to the combination of the independent ones;
* for structurally square cases, the specification audit's equations are nonsingular at
  the solution: by proof for ideal phases at fixed T and P, else the Jacobian has full
  numerical rank (:mod:`.jacobian`).
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from .. import settings
from ..case import Case
from ..findings import Finding
from ..phase_rule import PhaseRuleCount
from ..structure import SpecificationAudit
from . import jacobian
from .ranges import RangeReport, range_report
from .result import EquilibriumCheck, PhaseState, solved_check
from .routes import RouteSolver, SolvedState, SolveError
from .uniqueness import NOT_CHECKED, PROVED, max_abs, mole_fractions, uniqueness
from .workspace import CaseArrays


def absent_driving_forces(arrays: CaseArrays, groups: dict, never: dict, model_g: np.ndarray, lam: np.ndarray,
                          free: np.ndarray) -> dict:
    """Minimum over absent phases of the driving force to form them, maximised over the free
    element-potential directions (a valid certificate needs only one such lambda).
    ``groups``: absent phase -> its species that can form; ``never``: phases that cannot."""
    if not groups:
        return dict(never)
    A, solution = arrays.W, arrays.solution

    def forces(z):
        lz = lam + (free @ z if free.shape[1] else 0.0)
        d = model_g - A.T @ lz
        out = {}
        for p, idx in groups.items():
            if solution[p]:
                m = np.min(d[idx])
                out[p] = float(m - math.log(np.sum(np.exp(-(d[idx] - m)))))
            else:
                out[p] = float(d[idx][0])
        return out

    base = forces(np.zeros(free.shape[1]))
    if free.shape[1] == 0 or not base or min(base.values()) >= 0:
        return {**base, **never}
    # maximise the worst driving force over the free directions (concave: a smooth solve suffices)
    from scipy.optimize import minimize
    k = free.shape[1]
    best = None
    for z0 in (np.zeros(k), np.ones(k), -np.ones(k)):
        res = minimize(lambda z: -min(forces(z).values()), z0, method="Nelder-Mead",
                       options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 4000})
        if best is None or res.fun < best.fun:
            best = res
        if -best.fun > 1e3:
            break
    better = forces(best.x)
    return {**(better if min(better.values()) > min(base.values()) else base), **never}


def incipient_residual(solver: RouteSolver, sol: SolvedState, phase: int) -> float:
    """The residual of a phase fixed at a fraction of 0 (incipient): its driving force to form,
    RT, while it is absent (positive: it would not form yet), minus its phase fraction once it
    is present.  Both vanish at incipience, where the phase is present in zero amount, so the
    bracketed outer solve finds the bubble, dew or onset point from either side."""
    a, ws = solver.arrays, solver.workspace
    n = np.maximum(sol.n, 0.0)
    totals = n @ a.membership
    total = max(float(totals.sum()), 1e-300)
    if totals[phase] > settings.PHASE_PRESENCE_FRACTION * total:
        return -float(totals[phase]) / total
    phase_present = totals > settings.PHASE_PRESENCE_FRACTION * total
    mu, g = solver.potentials(sol.T, sol.P, n)
    present = phase_present[a.phase_of] & (n > 0)
    ps = ws.present_species(present)
    lam = ps.pinv @ mu[ps.index]
    groups, never = ws.absent_groups(phase_present, solver.candidate_at(sol.T))
    if phase in never or phase not in groups:
        return math.inf            # it cannot form here (an element the feed lacks, or outside its data)
    return absent_driving_forces(a, {phase: groups[phase]}, {}, g, lam, ps.free)[phase]


@dataclass(slots=True)
class Measured:
    """The certificate's numbers at one solved state (a transient record inside ``certify``;
    not frozen, which halves its construction cost on the path every sweep point takes)."""

    n: np.ndarray                  # amounts, negatives clipped
    totals: np.ndarray             # per phase
    phase_present: np.ndarray
    present: np.ndarray            # per species: in a present phase with a positive amount
    present_names: tuple[str, ...]
    mole_fractions: np.ndarray
    balance_error: float
    potentials: np.ndarray         # element potentials, RT
    potential_residual: float
    max_affinity: float
    drive: tuple[tuple[str, float], ...]   # absent phase -> driving force, RT
    unique: bool | None            # None: neither the proof nor a restart decided
    starts: int
    unique_basis: str
    amount_rcond: float | None
    lnk_error: float | None
    jacobian_rcond: float | None
    nonsingularity_test: str            # which test decided that the equations are nonsingular ("" when none ran)


def measure(case: Case, count: PhaseRuleCount, spec: SpecificationAudit, solver: RouteSolver, sol: SolvedState,
            findings: list[Finding]) -> Measured:
    """Every number of the certificate at the solved state (a Jacobian that cannot be
    evaluated adds a warning to ``findings``)."""
    ws, a = solver.workspace, solver.arrays
    system = ws.system
    n = np.maximum(sol.n, 0.0)
    # a finite sum proves every amount finite (one reduction instead of a mask); otherwise look
    if not math.isfinite(float(n.sum())) and not np.isfinite(sol.n).all():
        raise SolveError("the minimisation returned amounts that are not finite numbers")
    totals = n @ a.membership
    phase_present = totals > settings.PHASE_PRESENCE_FRACTION * max(float(totals.sum()), 1e-300)
    present_names = tuple(p.name for p, pr in zip(system.phases, phase_present.tolist()) if pr)
    x_all = mole_fractions(n, a.phase_of, totals)

    # balance of every conserved quantity (elements, charge, extra frozen quantities)
    b = a.W @ solver.n0
    bal = max_abs(a.W @ n - b) / max(max_abs(b), 1e-300) if b.size else 0.0

    # element potentials fitted to the present species, and the affinities of the
    # independent reactions among them
    mu, g = solver.potentials(sol.T, sol.P, n)
    present = phase_present[a.phase_of] & (n > 0)
    ps = ws.present_species(present, count)
    mu_p = mu[ps.index]
    lam = ps.pinv @ mu_p
    resid = max_abs(ps.rows @ lam - mu_p) if mu_p.size else 0.0
    max_aff = max_abs(ps.basis @ np.where(present, mu, 0.0)) if ps.basis.shape[0] else 0.0

    # phases set aside at this T (outside their data) cannot form: like those lacking an element
    groups, never = ws.absent_groups(phase_present, solver.candidate_at(sol.T))
    drive = absent_driving_forces(a, groups, never, g, lam, ps.free)
    unique, starts, unique_basis, amount_rcond = uniqueness(a, solver, sol, n, totals, phase_present, drive, x_all)
    if NOT_CHECKED in unique_basis:
        findings.append(Finding("warning" if unique is None else "note", "equilibrium", "restarting cantera from "
                                "another starting estimate reached no converged state, so the uniqueness of this "
                                "state is " + ("not decided" if unique is None else "decided by the proof alone")))

    # ln K additivity of dependent reactions
    lnk_err = None
    if a.lnk_dependent.size:
        lnK = -(a.lnk_rows @ g)
        lnk_err = float(np.max(np.abs(a.lnk_combination @ lnK) / np.maximum(1.0, np.abs(lnK[a.lnk_dependent]))))

    # the specification audit's equations are nonsingular at the solution (structurally
    # square cases only): by proof where it applies, else numerically
    jac, nonsingularity_test = None, ""
    if spec.decomposition.structurally_nonsingular and not spec.extensive and tuple(count.coexisting) == present_names:
        if jacobian.proof_applies(a.ideal, case, unique_basis.startswith(PROVED), n, present):
            nonsingularity_test = jacobian.BY_PROOF
        else:
            try:
                solver.model.at_state(sol.T, sol.P, n)        # the uniqueness restarts may have moved it
                g_dlnT, g_dlnP = solver.model.derivatives(sol.T, sol.P)
                jac = jacobian.jacobian_rcond(jacobian.layout(ws, case, count, spec), g_dlnT, g_dlnP, n, a.phase_of,
                                              totals)
                nonsingularity_test = jacobian.BY_NUMBERS
            except Exception as exc:
                findings.append(Finding("warning", "equilibrium", f"the Jacobian check could not be evaluated: {exc}"))
    return Measured(n=n, totals=totals, phase_present=phase_present, present=present, present_names=present_names,
                    mole_fractions=x_all, balance_error=bal, potentials=lam, potential_residual=resid,
                    max_affinity=max_aff, drive=tuple((system.phases[p].name, d) for p, d in sorted(drive.items())),
                    unique=unique, starts=starts, unique_basis=unique_basis, amount_rcond=amount_rcond,
                    lnk_error=lnk_err, jacobian_rcond=jac, nonsingularity_test=nonsingularity_test)


def _numerical_findings(m: Measured) -> tuple[bool, list[Finding]]:
    """Findings on the certificate's numbers; False when one of them fails it."""
    ok, out = True, []
    if m.balance_error > settings.ELEMENT_BALANCE_TOLERANCE:
        ok = False
        out.append(Finding("error", "equilibrium", f"conserved-quantity balance error {m.balance_error:.2e} exceeds "
                           f"{settings.ELEMENT_BALANCE_TOLERANCE:g}"))
    if m.max_affinity > settings.AFFINITY_TOLERANCE_RT:
        ok = False
        out.append(Finding("error", "equilibrium", f"a reaction among present species is not at equilibrium: "
                           f"affinity {m.max_affinity:.2e} RT exceeds {settings.AFFINITY_TOLERANCE_RT:g} RT"))
    if m.potential_residual > settings.AFFINITY_TOLERANCE_RT * 10:
        out.append(Finding("warning", "equilibrium", f"element potentials fit the present species only to "
                           f"{m.potential_residual:.2e} RT"))
    for name, d in m.drive:
        if d < -settings.AFFINITY_TOLERANCE_RT:
            ok = False
            out.append(Finding("error", "equilibrium", f"absent phase {name} has a negative driving force "
                               f"({d:.3g} RT): it should form, so the minimisation stopped short", (name,)))
    if m.unique is False:
        ok = False
        if m.amount_rcond is not None and m.amount_rcond < settings.PHASE_AMOUNT_RCOND_TOLERANCE:
            out.append(Finding("error", "equilibrium", f"the amounts of the present phases ({', '.join(m.present_names)}) "
                               "are not determined: their compositions are linearly dependent in the conserved "
                               f"quantities (smallest/largest singular value {m.amount_rcond:.2e}), so material can "
                               "shift between them without changing G; the state is indeterminate at this T and P",
                               m.present_names))
        else:
            out.append(Finding("error", "equilibrium", f"different starting estimates ({m.starts}) reached different "
                               "states: the answer is not unique or the solver is unreliable here"))
    if m.lnk_error is not None and m.lnk_error > settings.LNK_ADDITIVITY_TOLERANCE:
        out.append(Finding("warning", "equilibrium", f"ln K of a dependent reaction differs from the combination "
                           f"of the independent ones by {m.lnk_error:.2e} (relative)"))
    if m.jacobian_rcond is not None and m.jacobian_rcond < settings.JACOBIAN_RANK_TOLERANCE:
        ok = False
        out.append(Finding("error", "equilibrium", f"the equations are numerically singular at the solution "
                           f"(smallest/largest singular value {m.jacobian_rcond:.2e})"))
    return ok, out


def _phase_findings(m: Measured, count: PhaseRuleCount, solver: RouteSolver, T: float,
                    ranges: RangeReport, incipient: tuple[str, ...] = ()) -> tuple[bool, list[Finding]]:
    """Findings on the phases found against those assumed (an incipient phase is present in
    zero amount: it counts as present, as it does in the phase rule), and on the data's T range."""
    ok, out = ranges.ok, []
    assumed = tuple(count.coexisting)
    if (incipient or m.present_names != assumed) and set(m.present_names) | set(incipient) != set(assumed):
        found = set(m.present_names) | set(incipient)
        ok = False
        appeared = sorted(found - set(assumed))
        vanished = sorted(set(assumed) - found)
        parts = []
        if appeared:
            parts.append(f"phase(s) {', '.join(appeared)} appeared")
        if vanished:
            parts.append(f"phase(s) {', '.join(vanished)} vanished")
        out.append(Finding("error", "equilibrium", f"the minimisation does not land on the assumed phases: "
                           f"{'; '.join(parts)} (present: {', '.join(m.present_names)})", tuple(appeared + vanished)))
    out.extend(ranges.findings)
    if solver.log:
        from .diagnosis import log_summary
        out.append(Finding("note", "equilibrium", f"cantera's solver printed diagnostics on the way ("
                           f"{log_summary(solver.log)}); the certificate above is what decides"))
    out.extend(solver.model.density_notes)
    return ok, out


def _with_incipient(present: tuple[str, ...], incipient: tuple[str, ...], system) -> tuple[str, ...]:
    """The phases present, an incipient phase among them (present in zero amount, as the phase
    rule counts it), in the system's order (``present`` already is: ``measure`` builds it so)."""
    if not incipient:
        return present
    return tuple(p.name for p in system.phases if p.name in present or p.name in incipient)


def incipient_findings(case: Case, m: Measured, sol: SolvedState, system) -> tuple[bool, list, list[Finding]]:
    """The phases fixed at a fraction of 0: each must be absent with zero driving force (to
    ``INCIPIENT_DRIVING_FORCE_TOLERANCE_RT``) or present in at most ``INCIPIENT_FRACTION_TOLERANCE``
    of all moles; every other absent phase must have a positive one (``_numerical_findings``).
    Returns (holds, (phase, driving force RT, phase fraction) per incipient phase, findings)."""
    ok, records, out = True, [], []
    if not case.specified.phase_fractions:
        return ok, records, out             # no phase fixed at a fraction (the common case)
    drive, total = dict(m.drive), max(float(m.totals.sum()), 1e-300)
    names = [p.name for p in system.phases]
    for name in case.specified.incipient_phases:
        frac = float(m.totals[names.index(name)]) / total
        d = 0.0 if name in m.present_names else drive.get(name, math.inf)
        records.append((name, d, frac))
        if name in m.present_names and frac > settings.INCIPIENT_FRACTION_TOLERANCE:
            ok = False
            out.append(Finding("error", "equilibrium", f"phase {name} is fixed as incipient (fraction 0) but holds "
                               f"{frac:.3g} of all moles (accepted: {settings.INCIPIENT_FRACTION_TOLERANCE:g})", (name,)))
        elif not abs(d) <= settings.INCIPIENT_DRIVING_FORCE_TOLERANCE_RT:
            ok = False
            out.append(Finding("error", "equilibrium", f"phase {name} is fixed as incipient (fraction 0) but its "
                               f"driving force to form is {d:.3g} RT, not zero (accepted: "
                               f"{settings.INCIPIENT_DRIVING_FORCE_TOLERANCE_RT:g} RT)", (name,)))
    if records and sol.also_incipient:
        what, unit = ("temperature", "K") if case.specified.temperature_K is None else ("pressure", "Pa")
        others = ", ".join(f"{v:.6g} {unit}" for v in sol.also_incipient)
        out.append(Finding("note", "equilibrium", f"{', '.join(case.specified.incipient_phases)} is also incipient "
                           f"at {what} {others}: the lowest {what} where it is incipient is reported", 
                           case.specified.incipient_phases))
    return ok, records, out


def certify(case: Case, count: PhaseRuleCount, spec: SpecificationAudit, solver: RouteSolver, sol: SolvedState,
            findings: list[Finding], t0: float) -> EquilibriumCheck:
    """The equilibrium check of a solved state: its certificate's numbers and findings.
    ``findings`` (those gathered before the solve) is extended; ``t0`` is when the stage began."""
    m = measure(case, count, spec, solver, sol, findings)
    ok_numbers, more = _numerical_findings(m)
    ranges = range_report(solver.system, solver.arrays, solver.candidate, solver.candidate_at(sol.T), m.present,
                          m.mole_fractions, sol.T, tuple(count.coexisting))
    ok_incipient, incipient, incipient_notes = incipient_findings(case, m, sol, solver.system)
    if solver.approach is None:
        ok_approach, approached, approach_notes = True, (), []     # as approach_findings says of no plan
    else:
        from .approach import approach_findings
        ok_approach, approached, approach_notes = approach_findings(solver, float(sol.T), float(sol.P), m.n)
    incipient_notes += approach_notes
    ok_incipient = ok_incipient and ok_approach
    incipient_phases = case.specified.incipient_phases
    ok_phases, phase_notes = _phase_findings(m, count, solver, sol.T, ranges, incipient_phases)
    findings += more + incipient_notes + phase_notes
    a = solver.arrays
    heat = None
    if solver.report_heat:
        from .energy import heat_of
        heat = heat_of(case.specified, solver.model, solver.n0, float(sol.T), float(sol.P), sol.n)
    x_list = m.mole_fractions.tolist()                 # zero in an empty phase (mole_fractions)
    phases = tuple(PhaseState(p.name, tot, tuple(zip(labels, (x_list[k] for k in idx.tolist()))))
                   for p, idx, labels, tot in zip(solver.system.phases, a.phase_species, a.phase_labels, m.totals.tolist()))
    return solved_check(
        solved=True, converged=sol.converged, solver=sol.solver, temperature_K=float(sol.T), pressure_Pa=float(sol.P),
        phases=phases, phases_present=_with_incipient(m.present_names, incipient_phases, solver.system), max_affinity_RT=m.max_affinity,
        element_balance_error=m.balance_error, potential_residual_RT=m.potential_residual,
        absent_phase_driving_force=m.drive, unique=m.unique, starts=m.starts, lnK_additivity_error=m.lnk_error,
        jacobian_rcond=m.jacobian_rcond, nonsingularity_test=m.nonsingularity_test, assumed_densities=tuple(solver.model.assumed), findings=tuple(findings),
        confirmed=ok_numbers and ok_phases and ok_incipient, incipient=tuple(incipient), approach=approached, seconds=time.perf_counter() - t0,
        element_potentials=tuple(zip(a.potential_names, m.potentials.tolist())),
        unique_basis=m.unique_basis, phase_amount_rcond=m.amount_rcond,
        route=sol.route, attempts=solver.attempts + ((sol.route, "certified"),), set_aside=ranges.set_aside,
        heat_J=heat and heat.heat_J, heat_feed_temperature_K=heat and heat.feed_temperature_K,
        heat_balance=heat.balance if heat else "", heat_of_reaction_J=heat and heat.heat_of_reaction_J)
