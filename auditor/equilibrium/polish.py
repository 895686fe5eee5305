"""Newton's refinement of a converged T,P state on its own present species.

cantera's ``vcs`` solver stops when its own convergence test holds, which for species of
very small amount (an ion at 1e-10 of the moles, the hydroxide of an acid solution) can
leave a reaction affinity of 1e-4 RT: the state is right to the eye, but the certificate
(``settings.AFFINITY_TOLERANCE_RT``) rejects it.  With the set of present species fixed,
the state solves a square system: the conserved quantities of the feed, and zero affinity
of every independent reaction among the present species (W. R. Smith and R. W. Missen,
*Chemical Reaction Equilibrium Analysis*, 1982, ch. 6).  It is solved in ln n, so trace
amounts stay positive and are resolved relative to themselves, by least squares (scipy's
Levenberg-Marquardt) from the solver's state.  The certificate then checks the result like
any other state: this changes no phase and decides nothing.
"""
from __future__ import annotations

import numpy as np

from .. import settings
from .routes import RouteSolver, SolvedState

POLISHED = "polished by Newton's method on its present species"
EQUATION_TOLERANCE = 1e-10   # largest residual (balances relative, affinities in RT) of a polished state


def polish(solver: RouteSolver, sol: SolvedState) -> SolvedState | None:
    """``sol`` refined so that its present species meet the balances and zero affinities to
    ``EQUATION_TOLERANCE``; None when the refinement does not converge or there is nothing
    to refine (no reaction among the present species)."""
    from scipy.optimize import least_squares
    a = solver.arrays
    n = np.maximum(sol.n, 0.0)
    totals = n @ a.membership
    phase_present = totals > settings.PHASE_PRESENCE_FRACTION * max(float(totals.sum()), 1e-300)
    present = phase_present[a.phase_of] & (n > 0) & solver.candidate
    idx = np.flatnonzero(present)
    basis = solver.workspace.present_species(present).basis[:, idx]
    if idx.size == 0 or basis.shape[0] == 0:
        return None
    W = a.W[:, idx]
    b = a.W @ solver.n0
    b_scale = max(float(np.abs(b).max()), 1e-300)
    outside = a.W @ np.where(present, 0.0, n)      # what the species left out hold (traces of absent phases)

    def amounts(z):
        out = np.where(present, 0.0, n)
        out[idx] = np.exp(z)
        return out

    def equations(z):
        m = amounts(z)
        mu = solver.model.at_state(sol.T, sol.P, m)[0][idx]
        return np.concatenate(((W @ m[idx] + outside - b) / b_scale, basis @ mu))

    z0 = np.log(n[idx])
    try:
        res = least_squares(equations, z0, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=100 * z0.size)
    except Exception:               # a model that cannot be evaluated on the way: no refinement
        return None
    if not np.isfinite(res.x).all() or np.max(np.abs(equations(res.x))) > EQUATION_TOLERANCE:
        return None
    return SolvedState(amounts(res.x), sol.T, sol.P, sol.solver, True, "", sol.sides, f"{sol.route}, {POLISHED}")
