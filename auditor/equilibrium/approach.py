"""Approach to equilibrium: a reaction held short of equilibrium by a temperature approach.

The trade's temperature approach (reformer, shift and converter design, common practice): the
approached reaction's quotient equals its equilibrium constant at ``T - dT`` for an
endothermic reaction and at ``T + dT`` for an exothermic one (the sign from the reaction's
standard enthalpy at ``T``), so that in both cases the reaction stops short in the forward
direction; every other independent reaction stays at equilibrium.

How it is solved: at equilibrium ``sum_k nu_k mu_k / RT = 0`` for every reaction.  The
approach asks instead ``sum_k nu_jk mu_k / RT = t_j = ln K_j(T') - ln K_j(T)`` for an approached
reaction ``j``.  Shifting the standard potentials by a vector ``d`` (in RT) with
``nu_j . d = -t_j`` for each approached reaction and ``nu_i . d = 0`` for the other reactions of
a basis that includes the approached ones turns the approach into an ordinary Gibbs
minimisation with the shifted potentials ``g + d``: its zero affinities are the approached
conditions and the unchanged ones.  ``d`` is the minimum-norm solution of that small linear
system (any solution gives the same state: two differ by element potentials).  cantera's
solvers take no shifted potentials, so an approach case goes to the element-potential
minimiser (:mod:`.minimiser`), which takes them directly.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from .. import exact
from ..case import Case
from ..errors import CaseError, InputError, Problem
from ..stoichiometry import ReactionAnalysis, parse_equation
from ..system import ChemicalSystem


@dataclass(frozen=True)
class ApproachPlan:
    """The approached reactions of a case and the basis the shift is solved over."""

    equations: tuple[str, ...]        # as the case writes them
    deltas_K: tuple[float, ...]
    basis: np.ndarray                 # rows: the approached reactions first, then the rest of a reaction basis
    key_paths: tuple[str, ...] = ()

    @property
    def rows(self) -> np.ndarray:
        return self.basis[:len(self.equations)]


def approach_plan(case: Case, system: ChemicalSystem, analysis: ReactionAnalysis) -> ApproachPlan | None:
    """The case's ``approach:`` list checked against its system and reactions: each equation
    names the system's species, balances, lies in the span of the case's reactions and is
    independent of the other approached ones; the approach is below a fixed temperature.
    Raises CaseError with every problem, located; None when the case approaches nothing."""
    if not case.approach:
        return None
    file, problems, rows = str(case.path), [], []
    columns = [system.column(k) for k in range(system.n_species)]
    listed = [dict(analysis.reactions[i].stoich) for i in analysis.independent]
    T = case.specified.temperature_K
    for a in case.approach:
        kp = f"{a.key_path}.reaction"

        def fail(msg: str, kp=kp):
            problems.append(Problem(file, msg, kp, case.line(kp)))

        try:
            r = parse_equation(a.equation, system, file, kp, case.line(kp))
        except InputError as exc:         # an unknown species, an unreadable equation: located
            problems.extend(exc.problems)
            continue
        vec = dict(r.stoich)
        imbalance = {system.elements[e]: Fraction(v) for e, v in exact.sparse_matvec(columns, vec).items() if v}
        if not vec:
            fail(f"reaction {a.equation!r} has no net change")
        elif imbalance:
            fail(f"reaction {a.equation!r} does not balance: " + ", ".join(f"{e} {'+' if v > 0 else ''}{v}" for e, v in imbalance.items()))
        elif exact.rank(_dense(listed + [vec], system.n_species)) > len(listed):
            fail(f"reaction {a.equation!r} is not a combination of the case's independent reactions "
                 f"({len(listed)}): it cannot be held short of an equilibrium the reactions cannot reach")
        elif rows and exact.rank(_dense(rows + [vec], system.n_species)) <= len(rows):
            fail(f"reaction {a.equation!r} is a combination of the reactions approached before it: "
                 "each approached reaction must be independent of the others")
        else:
            rows.append(vec)
        if T is not None and a.delta_K >= T:
            kt = f"{a.key_path}.temperature"
            problems.append(Problem(file, f"an approach of {a.delta_K:g} K is not below the temperature of "
                                    f"{T:g} K: no equilibrium constant is defined at {T - a.delta_K:g} K", kt,
                                    case.line(kt)))
    if problems:
        raise CaseError(problems)
    # a basis that begins with the approached reactions and holds every independent one
    basis = list(rows)
    for vec in listed:
        if exact.rank(_dense(basis + [vec], system.n_species)) > len(basis):
            basis.append(vec)
    return ApproachPlan(tuple(a.equation for a in case.approach), tuple(a.delta_K for a in case.approach),
                        np.array(_dense(basis, system.n_species), dtype=float),
                        tuple(a.key_path for a in case.approach))


def _dense(vectors, n: int) -> list[list[Fraction]]:
    return [[Fraction(v.get(k, 0)) for k in range(n)] for v in vectors]


@dataclass(frozen=True)
class ApproachState:
    """One approached reaction at a temperature: where its K is taken, and the condition."""

    equation: str
    delta_K: float
    temperature_of_K: float           # T - dT (endothermic) or T + dT (exothermic)
    endothermic: bool
    lnK: float                        # ln K at the state's temperature
    lnK_target: float                 # ln K at temperature_of_K: what ln Q must equal


def approach_states(model, plan: ApproachPlan, T: float) -> tuple[ApproachState, ...]:
    """Each approached reaction's target at ``T``: the standard potentials at each phase's
    reference pressure (the data's standard state), the sign from nu . H°(T)."""
    g, h = model.standard_at(T)
    out = []
    for eq, dt, nu in zip(plan.equations, plan.deltas_K, plan.rows):
        endo = float(nu @ h) > 0
        t2 = T - dt if endo else T + dt
        out.append(ApproachState(eq, dt, t2, endo, -float(nu @ g), -float(nu @ model.standard_at(t2)[0])))
    return tuple(out)


def potential_shift(model, plan: ApproachPlan, T: float) -> np.ndarray:
    """The shift ``d`` of the standard potentials (RT) that makes a Gibbs minimisation meet the
    approach at ``T``: ``nu_j . d = -(ln K_j(T') - ln K_j(T))``, zero on the other basis reactions."""
    e = np.zeros(plan.basis.shape[0])
    for j, st in enumerate(approach_states(model, plan, T)):
        e[j] = -(st.lnK_target - st.lnK)
    d, *_ = np.linalg.lstsq(plan.basis, e, rcond=None)
    return d


def ln_quotient(st: ApproachState, nu: np.ndarray, mu: np.ndarray) -> float:
    return float(nu @ mu) + st.lnK


def approach_findings(solver, T: float, P: float, n: np.ndarray) -> tuple[bool, tuple, list]:
    """The certificate's check of each approached reaction at the solved state: ln Q equals
    ln K at T -+ dT to ``AFFINITY_TOLERANCE_RT`` (instead of zero affinity).  Returns (holds,
    (equation, dT K, temperature of K, ln K there, ln Q) per reaction, findings)."""
    plan = solver.approach
    if plan is None:
        return True, (), []
    from .. import settings
    from ..findings import Finding
    states = approach_states(solver.model, plan, T)
    mu = solver.model.at_state(T, P, n)[0]
    ok, records, out = True, [], []
    for st, nu in zip(states, plan.rows):
        involved = np.flatnonzero(nu)
        if (n[involved] <= 0).any():
            missing = ", ".join(solver.system.labels[k] for k in involved if n[k] <= 0)
            records.append((st.equation, st.delta_K, st.temperature_of_K, st.lnK_target, None))
            out.append(Finding("warning", "equilibrium", f"the approach on {st.equation!r} cannot be checked: "
                               f"{missing} is absent at the state, so its quotient is not defined"))
            continue
        lnq = ln_quotient(st, nu, mu)
        records.append((st.equation, st.delta_K, st.temperature_of_K, st.lnK_target, lnq))
        if not abs(lnq - st.lnK_target) <= settings.AFFINITY_TOLERANCE_RT:
            ok = False
            out.append(Finding("error", "equilibrium", f"the approached reaction {st.equation!r} is off its "
                               f"condition: ln Q = {lnq:.6g}, ln K({st.temperature_of_K:.2f} K) = "
                               f"{st.lnK_target:.6g} (accepted difference {settings.AFFINITY_TOLERANCE_RT:g})"))
    return ok, tuple(records), out
