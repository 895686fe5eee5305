"""Is the certified state unique?  A proof for ideal phases, and cantera restarts."""
from __future__ import annotations

import math

import numpy as np

from .. import settings
from .routes import RouteSolver, SolvedState, perturbed_start
from .workspace import RESTARTS, CaseArrays


def mole_fractions(n: np.ndarray, phase_of: np.ndarray, totals: np.ndarray) -> np.ndarray:
    """Mole fraction of every phase-species in its own phase (zero in an empty phase)."""
    tot = totals[phase_of]
    return n / np.where(tot > 0, tot, 1.0)


def max_abs(a: np.ndarray) -> float:
    """Largest absolute entry of a small vector, as a float; NaN when any entry is NaN (as
    numpy's ``max``).  Plain Python: cheaper than numpy's reduction on a few entries."""
    values = a.tolist()
    m = max(map(abs, values), default=0.0)
    return m if all(v == v for v in values) else math.nan


def phase_amount_rcond(arrays: CaseArrays, n: np.ndarray, phase_present: np.ndarray) -> float:
    """Smallest over largest singular value of the matrix whose columns are the conserved
    quantities held by each present phase (columns scaled to unit length).  Zero when the
    columns are dependent: then material can shift between the phases at fixed
    compositions, the conserved quantities unchanged.  ``arrays`` needs ``W`` and
    ``membership`` only."""
    present = np.flatnonzero(phase_present)
    k = present.size
    if k == 0:
        return 1.0
    cols = (arrays.W * n) @ arrays.membership[:, present]
    if k == 1:
        return 1.0 if cols.any() else 0.0
    if k == 2:
        # unit columns u, v: singular values sqrt(1 +- |u.v|), in ratio |u - v| / |u + v|
        # (the smaller over the larger), free of the cancellation in 1 - |u.v|
        u, v = cols[:, 0], cols[:, 1]
        nu, nv = math.sqrt(float(u @ u)), math.sqrt(float(v @ v))
        if nu == 0.0 or nv == 0.0 or k > cols.shape[0]:
            return 0.0
        u, v = u / nu, v / nv
        d, e = u - v, u + v
        a, b = math.sqrt(float(d @ d)), math.sqrt(float(e @ e))
        return float(min(a, b) / max(a, b))
    norms = np.sqrt(np.einsum("ij,ij->j", cols, cols))
    if not norms.all() or k > cols.shape[0]:
        return 0.0
    cols = cols / norms
    s = np.linalg.svd(cols, compute_uv=False)
    return float(s[-1] / s[0])


def _restart_disagrees(arrays: CaseArrays, other: SolvedState, sol: SolvedState, phase_present: np.ndarray,
                       x_ref: np.ndarray) -> bool:
    """Did a restart land on another state than ``sol``?"""
    if not other.converged or not np.isfinite(other.n).all():
        return True
    phase_of = arrays.phase_of
    n_o = np.maximum(other.n, 0.0)
    tot_o = n_o @ arrays.membership
    pres_o = tot_o > settings.PHASE_PRESENCE_FRACTION * max(float(tot_o.sum()), 1e-300)
    x_other = mole_fractions(n_o, phase_of, tot_o)
    if sol.sides is not None:
        # on a transition a T,P restart lands on one side: it must agree on every phase it
        # finds and find no other (the extensive specification sets the split)
        found = pres_o[phase_of]
        return bool((pres_o & ~phase_present).any() or (
            found.any() and np.max(np.abs(x_other[found] - x_ref[found])) > settings.UNIQUENESS_TOLERANCE))
    return pres_o.tolist() != phase_present.tolist() or max_abs(x_other - x_ref) > settings.UNIQUENESS_TOLERANCE


def uniqueness(arrays: CaseArrays, solver: RouteSolver, sol: SolvedState, n: np.ndarray, totals: np.ndarray,
               phase_present: np.ndarray, drive: dict, x_ref: np.ndarray | None = None
               ) -> tuple[bool, int, str, float | None]:
    """Is the equilibrium state unique?  Returns (unique, starts, how it was decided, the
    phase-amount condition number or None).

    With ideal phases only, G(n) is convex and a certified state is a global minimum.
    Every minimiser then shares the certificate's element potentials (saddle-point theorem
    of convex duality; S. Boyd and L. Vandenberghe, *Convex Optimization*, 2004, sec. 5.4-5.5),
    so it holds only phases of zero driving force, each at the one composition those
    potentials give an ideal phase.  Hence the state is unique exactly when every absent
    phase has a strictly positive driving force and the present phases' conserved-quantity
    vectors are independent (``phase_amount_rcond``); dependent vectors prove it is not.
    Where the proof holds no restart can add to it; otherwise cantera is restarted from
    ``RESTARTS`` other starting estimates, and a restart that lands elsewhere makes the state
    not unique.  The element-potential minimiser solves that convex problem itself and is not
    restarted.
    """
    proved, rcond = None, None
    cantera = sol.solver.startswith("cantera")
    if (arrays.ideal or not cantera) and sol.sides is None:
        rcond = phase_amount_rcond(arrays, n, phase_present)
        if rcond < settings.PHASE_AMOUNT_RCOND_TOLERANCE:
            proved = False
        elif all(d > settings.AFFINITY_TOLERANCE_RT for d in drive.values()):
            proved = True
    if proved is False:
        return False, 1, "proved not unique: the phase amounts are indeterminate", rcond
    starts, unique = 1, True
    if cantera and arrays.directions.shape[0] and not proved:
        if x_ref is None:
            x_ref = mole_fractions(n, arrays.phase_of, totals)
        for trial in range(RESTARTS):
            start = perturbed_start(n if trial == 0 else solver.n0, *arrays.trial_directions[trial])
            if start is None:
                continue
            other = solver.solve(sol.T, sol.P, start)
            starts += 1
            if _restart_disagrees(arrays, other, sol, phase_present, x_ref):
                unique = False
    agree = f"{starts} starting estimates " + ("agree" if unique else "disagree") if starts > 1 else ""
    if proved:
        how = "proved: ideal phases, every absent phase has a positive driving force, phase amounts determined"
        return unique, starts, how + (f"; {agree}" if agree else ""), rcond
    if not cantera:
        return True, 1, "convex minimisation (ideal phases)", rcond
    return unique, starts, agree or "one starting estimate (no other composition with the same conserved quantities)", rcond
