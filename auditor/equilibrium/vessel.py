"""A rigid vessel whose temperature and pressure are both free: the volume and one other
extensive specification (an energy balance, the entropy, a phase fraction).

Nested bracketed solves around the T,P minimisation: at each trial temperature the inner
solve finds the pressure at which the equilibrium state fills the vessel (Newton's method on
ln V against ln P with a secant slope, which for a gas is nearly -1, so it converges in a few
steps; a bracketed solve, and the state on a transition, when it does not); the outer solve
(Brent's method) finds the temperature that meets the other specification.  Where that
answer sits on a univariant transition of the outer variable (ice melting in a closed can:
heat goes into melting at a fixed temperature) the outer residual jumps there; the state is
then the mixture of the two sides that meets the specification, refined with the amounts,
T and P solved together (``on_transition_rigid``).
"""
from __future__ import annotations

import math

import numpy as np

from .routes import RouteSolver, SolvedState, SolveError

INNER_STEPS = 30            # Newton steps on ln P before the bracketed solve takes over
INNER_TOLERANCE = 1e-11     # |ln(V / V_vessel)| accepted by the inner solve
P_LIMITS = (1.0, 1e9)       # Pa: where the inner solve looks (as the outer solve on P does)


def pressure_for_volume(solver: RouteSolver, volume, T: float, start: list) -> SolvedState:
    """The equilibrium state at T that fills the vessel (``volume`` is the residual ln(V/V_vessel)).
    ``start`` holds the last pressure found, reused as the next starting point."""
    lo, hi = (math.log(p) for p in P_LIMITS)
    x = start[0] if start else math.log(1e5)
    slope, prev = -1.0, None
    for _ in range(INNER_STEPS):
        sol = solver.solve(T, math.exp(x))
        if not (sol.converged or sol.n.any()):
            break
        g = volume(sol)
        if abs(g) < INNER_TOLERANCE:
            start[:] = [x]
            return sol
        if prev is not None and x != prev[0]:
            s = (g - prev[1]) / (x - prev[0])
            slope = s if s < -1e-3 else slope       # V falls as P rises; a jump (a transition) keeps the old slope
        prev = (x, g)
        step = max(min(-g / slope, 2.0), -2.0)
        x_new = min(max(x + step, lo), hi)
        if x_new == x:
            break
        x = x_new
    from .solve import bracket_solve, on_transition
    p = bracket_solve(lambda v: _held(volume, solver.solve(T, v)), *P_LIMITS, True, "pressure")
    sol = solver.solve(T, p)
    if abs(volume(sol)) > INNER_TOLERANCE * 100:
        sol = on_transition(solver, volume, p, T, None) or sol
    start[:] = [math.log(sol.P)]
    return sol


def _held(resid, sol: SolvedState) -> float:
    return resid(sol) if sol.converged or sol.n.any() else math.nan


def solve_rigid(solver: RouteSolver, others: list, t_range: tuple[float, float]) -> SolvedState:
    """The state that fills the vessel and meets the other specification, T and P both solved."""
    from .solve import RESIDUAL_TOLERANCE, bracket_solve
    volume = next(r for w, r in others if w == "volume")
    what, resid = next((w, r) for w, r in others if w != "volume")
    start: list = []

    def outer(T: float) -> float:
        try:
            sol = pressure_for_volume(solver, volume, T, start)
        except SolveError:
            return math.nan
        return _held(resid, sol)

    t = bracket_solve(outer, *t_range, False, "temperature")
    sol = pressure_for_volume(solver, volume, t, start)
    worst = max(abs(volume(sol)), abs(resid(sol)))
    if not np.isfinite(worst) or worst > RESIDUAL_TOLERANCE:
        sol = on_transition_rigid(solver, volume, resid, t, start) or sol
        worst = max(abs(volume(sol)), abs(resid(sol)))
    if not np.isfinite(worst) or worst > RESIDUAL_TOLERANCE:
        sol.converged = False
        sol.message = f"the volume and the {what} specification are met only to {worst:.2e}"
    return sol


def on_transition_rigid(solver: RouteSolver, volume, resid, t: float, start: list) -> SolvedState | None:
    """The outer residual jumps across t (a univariant transition): the states just below and
    above t, each at the pressure that fills the vessel, are mixed (amounts and ln P in
    proportion) to meet the other specification, and the mixture is refined by
    ``refine_transition`` with T and P both unknown and the volume balance added; None when
    the two sides do not bracket the specification."""
    from scipy.optimize import brentq
    from .solve import refine_transition
    d = 1e-8 * t
    try:
        lo = pressure_for_volume(solver, volume, t - d, start)
        hi = pressure_for_volume(solver, volume, t + d, start)
    except SolveError:
        return None
    if not (lo.converged and hi.converged):
        return None
    ln_lo, ln_hi = math.log(lo.P), math.log(hi.P)

    def mix(s: float) -> SolvedState:
        return SolvedState((1 - s) * lo.n + s * hi.n, t, math.exp((1 - s) * ln_lo + s * ln_hi), lo.solver, True, "",
                           (lo.n, hi.n), lo.route)

    r0, r1 = resid(mix(0.0)), resid(mix(1.0))
    if not (np.isfinite(r0) and np.isfinite(r1)) or r0 * r1 > 0:
        return None
    guess = mix(brentq(lambda s: resid(mix(s)), 0.0, 1.0, xtol=1e-15))
    return refine_transition(solver, resid, guess, True, volume) or guess
