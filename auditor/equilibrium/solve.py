"""Solving at the specified state.

Temperature and pressure fixed: one T,P minimisation (``RouteSolver.solve``).  Other
specifications are met by a bracketed scalar solve (``scipy.optimize.brentq``) on T or P
around the T,P minimisation; where the answer sits on a univariant transition (the
residual jumps: ice melting, a solid decomposing) the state is solved there directly,
amounts and T (or P) together (``refine_transition``).
"""
from __future__ import annotations

import math
import time
from dataclasses import replace
from typing import Callable

import numpy as np

from .. import settings
from ..errors import one_line
from ..case import Case, Specified
from ..findings import Finding
from ..phase_rule import PhaseRuleCount
from ..structure import SpecificationAudit
from ..system import ChemicalSystem
from .certificate import certify
from .result import EquilibriumCheck, certificate_failure, certificate_holds
from .routes import RouteSolver, SolvedState, SolveError

Residual = Callable[[SolvedState], float]
RESIDUAL_TOLERANCE = 1e-6   # an extensive specification met to this (scaled) residual
INCIPIENT = "incipient phase"
INCIPIENT_SCAN_POINTS = 97  # values scanned for a sign change of an incipient phase's residual


class NoSolution(SolveError):
    """The specifications the count accepts have no solution (a finding about the case, not a solver failure)."""


def bracket_solve(f, lo: float, hi: float, log: bool, what: str, points: int = 25, others: list | None = None):
    """Root of f on [lo, hi] by Brent's method (R. P. Brent, Algorithms for Minimization
    without Derivatives, 1973), scanning ``points`` values for a sign change first.  The
    first sign change is solved; when ``others`` is a list, the roots of the later sign
    changes are appended to it."""
    from scipy.optimize import brentq
    grid = np.geomspace(lo, hi, points) if log else np.linspace(lo, hi, points)
    vals = []
    for x in grid:
        try:
            vals.append(f(x))
        except Exception:
            vals.append(np.nan)
    brackets = [(a, b) for (a, fa), (b, fb) in zip(zip(grid, vals), zip(grid[1:], vals[1:]))
                if np.isfinite(fa) and np.isfinite(fb) and fa * fb <= 0]
    if brackets:
        roots = [brentq(f, a, b, xtol=1e-10 * max(abs(a), 1.0), rtol=1e-12, maxiter=200)
                 for a, b in (brackets if others is not None else brackets[:1])]
        if others is not None:
            others.extend(r for r in roots[1:] if r > roots[0] * (1 + 1e-9))
        return roots[0]
    finite = [v for v in vals if np.isfinite(v)]
    if len(finite) == len(vals) and (min(finite) > 0 or max(finite) < 0):
        raise NoSolution(f"no {what} from {lo:g} to {hi:g} {'K' if what == 'temperature' else 'Pa'} meets the "
                         f"specifications: the residual keeps one sign ({finite[0]:+.3g} to {finite[-1]:+.3g})")
    raise SolveError(f"no {what} in [{lo:g}, {hi:g}] meets the specification (no sign change found)")


def other_residuals(s: Specified, system: ChemicalSystem, solver: RouteSolver) -> list[tuple[str, Residual]]:
    """A residual function of the solved state for each specification other than T and P."""
    others = []
    phase_index = {p.name: i for i, p in enumerate(system.phases)}
    membership = solver.arrays.membership

    def phase_total(n, phase):
        return float(n @ membership[:, phase_index[phase]])

    for m in s.mole_fractions:
        k = system.index_in(m.species, m.phase)
        others.append(("mole fraction", lambda sol, k=k, m=m: sol.n[k] / max(phase_total(sol.n, m.phase), 1e-300) - m.value))
    for r in s.ratios:
        a, b = system.index_in(r.numerator, r.phase), system.index_in(r.denominator, r.phase)
        others.append(("ratio", lambda sol, a=a, b=b, r=r: math.log(max(sol.n[a], 1e-300) / max(sol.n[b], 1e-300)) - math.log(r.value)))
    for pf in s.phase_fractions:
        if pf.value == 0:
            from .certificate import incipient_residual
            others.append((INCIPIENT, lambda sol, p=phase_index[pf.phase]: incipient_residual(solver, sol, p)))
        else:
            others.append(("phase fraction", lambda sol, pf=pf: phase_total(sol.n, pf.phase) / sol.n.sum() - pf.value))
    from .energy import residuals
    others += residuals(s, solver.model, solver.n0, lambda T, P: _reference(solver, T, P))
    return others


def _reference(solver: RouteSolver, T: float, P: float) -> SolvedState:
    """The equilibrium state an isentropic specification starts from."""
    sol = solver.solve(T, P)
    if not sol.converged:
        raise SolveError(f"the reference state of the isentropic specification ({T:g} K, {P:g} Pa) did not converge")
    return sol


def temperature_range(system: ChemicalSystem, energy: bool) -> tuple[float, float]:
    """Where an outer solve on T looks: inside every species' data, 200 K (250 K for an energy
    balance) to 6000 K."""
    t_lo = max(max(sp.t_min for sp in system.species), 200.0)
    t_hi = min(min(sp.t_max for sp in system.species), 6000.0)
    if energy:
        t_lo = max(t_lo, 250.0)
    if not t_lo < t_hi:
        t_lo, t_hi = 250.0, 6000.0
    return t_lo, t_hi


ENERGY_KINDS = ("adiabatic", "heat-added", "isentropic")


def solve_specified(case: Case, solver: RouteSolver) -> SolvedState | None:
    """The state at the case's specifications: a T,P minimisation, or an outer solve on the
    one of T and P that is not fixed."""
    system = solver.system
    s = case.specified
    T, P = s.temperature_K, s.pressure_Pa
    if T is not None and P is not None and len(s.specifications) == 2:
        return solver.solve(T, P)     # T and P only (every specification has its record): no other residual
    others = other_residuals(s, system, solver)
    if T is not None and P is not None:
        if others:
            raise SolveError("more than two specifications reached the solver")
        return solver.solve(T, P)
    if T is None and P is None and len(others) == 2 and any(w == "volume" for w, _ in others):
        from .vessel import solve_rigid
        return solve_rigid(solver, others, temperature_range(system, True))
    if len(others) != 1 or (T is None and P is None):
        raise SolveError("this combination of specifications (neither temperature nor pressure fixed, or more than one "
                         "other) is not handled by the confirmation yet; fix temperature or pressure")
    what, resid = others[0]

    def held(sol: SolvedState) -> float:
        # a solve that holds nothing (no species valid at this T can carry the feed) has no residual
        return resid(sol) if sol.converged or sol.n.any() else math.nan

    # an incipient phase may appear and vanish again (graphite in a reformer gas): a finer scan,
    # and every point where it is incipient is kept
    points, also = (INCIPIENT_SCAN_POINTS, []) if what == INCIPIENT else (25, None)
    if T is None:
        t_lo, t_hi = temperature_range(system, what in ENERGY_KINDS)
        x = bracket_solve(lambda v: held(solver.solve(v, P)), t_lo, t_hi, False, "temperature", points, also)
    else:
        try:
            x = bracket_solve(lambda v: held(solver.solve(T, v)), 1.0, 1e9, True, "pressure", points, also)
        except NoSolution as exc:
            raise NoSolution(_no_pressure(what, T, solver, resid) or str(exc)) from None
    sol = solver.solve(x, P) if T is None else solver.solve(T, x)
    if abs(resid(sol)) > RESIDUAL_TOLERANCE:
        sol = on_transition(solver, resid, x, T, P) or sol
    if abs(resid(sol)) > RESIDUAL_TOLERANCE:
        sol.converged = False
        sol.message = f"the {what} specification is met only to {abs(resid(sol)):.2e}"
    sol.also_incipient = tuple(also or ())
    return sol


def _no_pressure(what: str, T: float, solver: RouteSolver, resid: Residual) -> str:
    """Why no pressure meets a volume at fixed T: the vessel is smaller than its contents at the
    highest pressure a case may hold, or larger than they fill at 1 Pa."""
    if what != "volume":
        return ""
    from .energy import totals
    hi, lo = solver.solve(T, 1e9), solver.solve(T, 1.0)
    if resid(hi) > 0:
        v = totals(solver.model, hi.T, hi.P, hi.n).V
        return (f"the vessel is smaller than its contents at {T:.2f} K even at 1e4 bar ({v * 1000:.4g} L at "
                "equilibrium there): no state fills it, the temperature and volume given cannot both hold")
    v = totals(solver.model, lo.T, lo.P, lo.n).V
    return (f"the vessel is larger than its contents fill at {T:.2f} K even at 1 Pa ({v * 1000:.4g} L): "
            "no state fills it")


def on_transition(solver: RouteSolver, resid: Residual, x: float, T: float | None, P: float | None
                  ) -> SolvedState | None:
    """The residual jumps across x (a univariant transition: calcite/lime, boiling): every
    mixture of the states on either side is an equilibrium state at x; return the one that
    meets the extensive specification."""
    from scipy.optimize import brentq
    d = 1e-8 * x
    at = (lambda v: solver.solve(v, P)) if T is None else (lambda v: solver.solve(T, v))
    lo, hi = at(x - d), at(x + d)
    if not (lo.converged and hi.converged):
        return None
    Tm, Pm = (x, P) if T is None else (T, x)

    def mix(t):
        return SolvedState((1 - t) * lo.n + t * hi.n, Tm, Pm, lo.solver, True, "", (lo.n, hi.n), lo.route)

    if resid(mix(0.0)) * resid(mix(1.0)) > 0:
        return None
    guess = mix(brentq(lambda t: resid(mix(t)), 0.0, 1.0, xtol=1e-15))
    return refine_transition(solver, resid, guess, T is None) or guess


LN_AMOUNT_FLOOR = math.log(1e-300)   # ln mol: the smallest amount the rigid-vessel refinement may reach
RIGID_LN_T_STEP = 0.02               # how far ln T (about 2 %) may move from the mixture's on the
#                                      rigid-vessel refinement (the transition is already bracketed)


def refine_transition(solver: RouteSolver, resid: Residual, guess: SolvedState, t_free: bool,
                      volume: Residual | None = None) -> SolvedState | None:
    """Solve the state on the transition directly: the T,P solver sets phase boundaries only
    to its own tolerance (about 1e-4 K for ice/water), too coarse for the certificate.  On the
    transition the phases of both sides coexist, and the state is fixed by the conserved
    quantities, zero affinity of every independent reaction among their species, and the
    extensive specification: as many equations as unknowns (the amounts and T, or P).  In a
    rigid vessel (``volume`` given, the residual ln(V/V_vessel)) T and P are both unknowns and
    the volume balance is the extra equation.  Solved by least squares (scipy's
    Levenberg-Marquardt) in ln n and ln T (or ln P) from the mixture of the two sides; None
    when it does not converge."""
    from scipy.optimize import least_squares
    a = solver.arrays
    n_g = np.maximum(guess.n, 0.0)
    totals = n_g @ a.membership
    phase_present = totals > settings.PHASE_PRESENCE_FRACTION * max(totals.sum(), 1e-300)
    present = phase_present[a.phase_of] & (n_g > 0) & solver.candidate_at(guess.T)
    idx = np.flatnonzero(present)
    basis = solver.workspace.present_species(present).basis[:, idx]
    W = a.W[:, idx]
    b = a.W @ solver.n0
    b_scale = max(float(np.abs(b).max()), 1e-300)
    k = idx.size

    def state(z):
        n = np.zeros_like(n_g)
        if volume is not None:
            # no amount may underflow to zero: a pure phase of no amount would meet its
            # zero-affinity equation at any T
            n[idx] = np.exp(np.maximum(z[:k], LN_AMOUNT_FLOOR))
            T, P = math.exp(z[k]), math.exp(z[k + 1])
        else:
            n[idx] = np.exp(z[:k])
            x = math.exp(z[-1])
            T, P = (x, guess.P) if t_free else (guess.T, x)
        return SolvedState(n, T, P, guess.solver, True, "", guess.sides, guess.route)

    def equations(z):
        sol = state(z)
        mu = solver.potentials(sol.T, sol.P, sol.n)[0][idx]
        extra = [resid(sol)] if volume is None else [resid(sol), volume(sol)]
        return np.concatenate(((W @ sol.n[idx] - b) / b_scale, basis @ mu, extra))

    unknowns = [guess.T, guess.P] if volume is not None else [guess.T if t_free else guess.P]
    z0 = np.concatenate((np.log(np.maximum(n_g[idx], 1e-300)), np.log(unknowns)))
    try:
        res = least_squares(equations, z0, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=200 * z0.size)
    except Exception:
        return None
    out = state(res.x)
    if np.max(np.abs(equations(res.x))) > 1e-9:
        return None
    if volume is not None and abs(math.log(out.T / guess.T)) > RIGID_LN_T_STEP:
        return None         # a state far from the bracketed transition is not the one sought
    return out


def certified_on_routes(case: Case, count: PhaseRuleCount, spec: SpecificationAudit, solver: RouteSolver,
                        findings: list[Finding], t0: float) -> EquilibriumCheck:
    """Every route in turn until one gives a state whose certificate holds (fallbacks cost
    time only where the first route fails).  A state whose certificate fails sends the next
    pass to the routes after the one that produced it; when none is certified, the first
    checked state is returned with every route's outcome as findings, or a check that is
    not solved."""
    attempts: list[tuple[str, str]] = []
    first_check, no_solution = None, ""
    first = 0
    while first < len(solver.routes):
        solver.start_at(first)
        sol, stop = None, False
        try:
            sol = solve_specified(case, solver)
        except SolveError as exc:
            failure, stop = str(exc), "wall-clock" in str(exc) or isinstance(exc, NoSolution)
            no_solution = str(exc) if isinstance(exc, NoSolution) else no_solution
        except Exception as exc:
            # a library's text is kept for the classifier, never shown
            from .diagnosis import solver_words
            solver.details.append(one_line(str(exc).replace("*", " "), 300))
            failure = solver_words(solver.details[-1], "multiphase") if "cantera" in type(exc).__module__ else \
                "the solve stopped on an error while evaluating a state"
        else:
            failure = "" if sol is not None and sol.converged else \
                "did not converge" + (f": {sol.message}" if sol is not None and sol.message else "")
        tried = {r for r, _ in attempts}
        attempts.extend((r, "failed: " + m) for r, m in solver.failures.items()
                        if r != getattr(sol, "route", None) and r not in tried)
        route = sol.route if sol is not None and sol.route else solver.routes[first]
        if failure:
            if not any(r == route for r, _ in attempts):
                attempts.append((route, "failed: " + failure))
            # a T,P solve that failed has already tried every route from ``first`` on
            if stop or sol is None or not sol.route or route in solver.failures:
                break
        else:
            check, failed_check = _certified_from(case, count, spec, solver, sol, findings, t0, attempts)
            if check is not None:
                return check
            first_check = first_check or failed_check
        # the next pass starts after the route that produced this state
        first = max(first, solver.routes.index(route)) + 1
    notes = [Finding("error", "equilibrium", f"route {r}: {o}") for r, o in attempts]
    if first_check is not None:
        return replace(first_check, findings=first_check.findings + tuple(notes), route="", attempts=tuple(attempts))
    from .diagnosis import failure_cause
    tried = ", ".join(dict.fromkeys(r for r, _ in attempts))
    s = case.specified
    assumed = case.coexisting or tuple(p.name for p in solver.system.phases)
    cause = no_solution or failure_cause(solver, s.temperature_K, s.pressure_Pa, solver.details,
                                         count.degrees_of_freedom, assumed)
    findings = findings + [Finding("error", "equilibrium", f"the minimisation did not reach a certified state on any "
                                   f"route ({tried}); cause: {cause}")] + notes
    return replace(EquilibriumCheck.not_solved(findings, solver.model.assumed, time.perf_counter() - t0),
                   attempts=tuple(attempts))


DESCENTS = 3    # states tried after a route's own: a polished one, or a restart's of lower Gibbs energy


def _certified_from(case: Case, count: PhaseRuleCount, spec: SpecificationAudit, solver: RouteSolver,
                    sol: SolvedState, findings: list[Finding], t0: float, attempts: list[tuple[str, str]]
                    ) -> tuple[EquilibriumCheck | None, EquilibriumCheck | None]:
    """Certify a route's state; when its certificate fails, go on from it while there is a
    better state to try: the state polished by Newton's method on its present species (a
    small affinity left by the solver's own stopping test), or a uniqueness restart's state
    of lower Gibbs energy (the route stopped at a saddle point or a local minimum: two liquids
    that must split).  Each failure is appended to ``attempts``.  Returns (the certified
    check or None, the first check whose certificate failed or None)."""
    first_failed, polished = None, False
    for _ in range(DESCENTS + 1):
        solver.attempts = tuple(attempts)   # the certified check carries them (no copy on the common path)
        try:
            check = certify(case, count, spec, solver, sol, list(findings), t0)
        except SolveError as exc:
            attempts.append((sol.route, f"failed: {exc}"))
            return None, first_failed
        if certificate_holds(check):
            return check, first_failed
        failure = certificate_failure(check) or "see findings"
        attempts.append((sol.route, "certificate failed: " + failure))
        first_failed = first_failed or check
        if solver.lower is not None:
            sol = replace(solver.lower, route=f"{sol.route}, then a restart of lower Gibbs energy")
        elif not polished and failure.startswith("affinity") and sol.sides is None and sol.solver.startswith("cantera"):
            from .polish import polish
            polished, better = True, polish(solver, sol)
            if better is None:
                attempts.append((f"{sol.route}, polished by Newton's method", "failed: the refinement on the present "
                                 "species did not converge"))
                return None, first_failed
            sol = better
        else:
            return None, first_failed
    return None, first_failed