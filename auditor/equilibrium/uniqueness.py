"""Is the certified state unique?  A proof for ideal phases, and cantera restarts."""
from __future__ import annotations

import math

import numpy as np

from .. import settings
from .routes import RouteSolver, SolvedState, perturbed_start
from .workspace import RESTARTS, CaseArrays

NOT_CHECKED = "not checked by restart"     # a restart that reached no state: said in ``unique_basis``
LOWER = "lower Gibbs energy"               # a restart below the state: said in ``unique_basis``


# how uniqueness was decided when the convexity proof holds (the certificate reads it: the same
# proof makes the equations nonsingular at fixed T and P)
PROVED = "proved: ideal phases, every absent phase has a positive driving force, phase amounts determined"

def mole_fractions(n: np.ndarray, phase_of: np.ndarray, totals: np.ndarray) -> np.ndarray:
    """Mole fraction of every phase-species in its own phase (zero in an empty phase)."""
    tot = totals[phase_of]
    return n / np.where(tot > 0, tot, 1.0)


def max_abs(a: np.ndarray) -> float:
    """Largest absolute entry of a small vector, as a float; NaN when any entry is NaN (as
    numpy's ``max``).  Plain Python: cheaper than numpy's reduction on a few entries."""
    values = a.tolist()
    m = max(map(abs, values), default=0.0)
    return math.nan if any(map(math.isnan, values)) else m


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


def _restart_outcome(solver: RouteSolver, other: SolvedState, sol: SolvedState, phase_present: np.ndarray,
                     x_ref: np.ndarray) -> str:
    """Where a restart that converged landed: "same" state as ``sol``; "higher" Gibbs energy
    (a stationary point the solver stopped at, which ``sol`` improves on); "lower" (``sol``
    is not the minimum: a saddle point or a local minimum of a non-ideal model); or a "rival"
    state (different, same G)."""
    arrays = solver.arrays
    phase_of = arrays.phase_of
    n_o = np.maximum(other.n, 0.0)
    tot_o = n_o @ arrays.membership
    pres_o = tot_o > settings.PHASE_PRESENCE_FRACTION * max(float(tot_o.sum()), 1e-300)
    x_other = mole_fractions(n_o, phase_of, tot_o)
    if sol.sides is not None:
        # on a transition a T,P restart lands on one side: it must agree on every phase it
        # finds and find no other (the extensive specification sets the split)
        found = pres_o[phase_of]
        differs = bool((pres_o & ~phase_present).any() or (
            found.any() and np.max(np.abs(x_other[found] - x_ref[found])) > settings.UNIQUENESS_TOLERANCE))
        return "rival" if differs else "same"
    if pres_o.tolist() == phase_present.tolist() and max_abs(x_other - x_ref) <= settings.UNIQUENESS_TOLERANCE:
        return "same"
    # G of states with the same conserved quantities; a difference below the affinity
    # tolerance per mole is no difference
    dg = gibbs_RT(solver, other) - gibbs_RT(solver, sol)
    tol = settings.AFFINITY_TOLERANCE_RT * max(float(np.abs(sol.n).sum()), 1e-300)
    return "higher" if dg > tol else "lower" if dg < -tol else "rival"


def gibbs_RT(solver: RouteSolver, state: SolvedState) -> float:
    """G / RT of a state's amounts with the phases' own models (species at zero amount add nothing)."""
    n = np.maximum(state.n, 0.0)
    mu = solver.model.at_state(state.T, state.P, n)[0]
    held = n > 0
    return float(n[held] @ mu[held])


def _balanced(solver: RouteSolver, state: SolvedState) -> bool:
    """Does the state keep the feed's conserved quantities (``settings.ELEMENT_BALANCE_TOLERANCE``)?"""
    W, b = solver.arrays.W, solver.arrays.W @ solver.n0
    return bool(np.isfinite(state.n).all()) and (not b.size or max_abs(W @ np.maximum(state.n, 0.0) - b)
                                                 <= settings.ELEMENT_BALANCE_TOLERANCE * max(max_abs(b), 1e-300))


def _restarts(solver: RouteSolver, sol: SolvedState, n: np.ndarray, phase_present: np.ndarray, x_ref: np.ndarray,
              trials: int) -> tuple[dict, list[str]]:
    """Restart cantera from other starting estimates: how many restarts reached each outcome
    (``_restart_outcome``), and why each restart that reached no usable state failed.  The
    restart state of lowest Gibbs energy below ``sol`` is left in ``solver.lower``."""
    arrays = solver.arrays
    counts = {"same": 0, "higher": 0, "lower": 0, "rival": 0}
    failed: list[str] = []
    best = None
    for trial in range(trials):
        start = perturbed_start(n if trial == 0 else solver.n0, *arrays.trial_directions[trial])
        if start is None:
            continue
        other = solver.solve(sol.T, sol.P, start)
        if not other.converged or not _balanced(solver, other):
            failed.append(other.message or "a state that breaks the conserved-quantity balances")
            continue
        outcome = _restart_outcome(solver, other, sol, phase_present, x_ref)
        counts[outcome] += 1
        if outcome == "lower" and (best is None or gibbs_RT(solver, other) < gibbs_RT(solver, best)):
            best = other
    solver.lower = best
    return counts, failed


def _restart_words(counts: dict, failed: list[str]) -> str:
    """The restarts' outcome in words (empty when no restart ran)."""
    parts = []
    reached = sum(counts.values())
    if reached:
        differ = counts["rival"] + counts["lower"]
        if differ:
            parts.append(f"{1 + reached} starting estimates disagree")
        elif counts["same"]:
            parts.append(f"{1 + counts['same']} starting estimates agree")
        else:
            parts.append("no restart reached another state of equal or lower Gibbs energy")
        if counts["lower"]:
            parts.append(f"{counts['lower']} restart(s) reached a state of {LOWER}")
        elif counts["higher"] and not differ:
            parts.append(f"{counts['higher']} restart(s) stopped at a state of higher Gibbs energy, which the "
                         "certified state improves on")
    if failed:
        parts.append(f"{NOT_CHECKED}: {len(failed)} restart(s) from another starting estimate reached "
                     "no converged state")
    return "; ".join(parts)


def uniqueness(arrays: CaseArrays, solver: RouteSolver, sol: SolvedState, n: np.ndarray, totals: np.ndarray,
               phase_present: np.ndarray, drive: dict, x_ref: np.ndarray | None = None
               ) -> tuple[bool | None, int, str, float | None]:
    """Is the equilibrium state unique?  Returns (unique, starts, how it was decided, the
    phase-amount condition number or None); ``unique`` is None when neither the proof nor a
    restart decided it.

    With ideal phases only, G(n) is convex and a certified state is a global minimum.
    Every minimiser then shares the certificate's element potentials (saddle-point theorem
    of convex duality; S. Boyd and L. Vandenberghe, *Convex Optimization*, 2004, sec. 5.4-5.5),
    so it holds only phases of zero driving force, each at the one composition those
    potentials give an ideal phase.  Hence the state is unique exactly when every absent
    phase has a strictly positive driving force and the present phases' conserved-quantity
    vectors are independent (``phase_amount_rcond``); dependent vectors prove it is not.
    Where the proof holds no restart can add to it.  Otherwise cantera is restarted from
    ``RESTARTS`` other starting estimates: a restart that lands on another state of no higher
    Gibbs energy makes the state not unique; one that stops at a higher G (a saddle or local
    minimum of a non-ideal model) does not refute it; one that fails leaves it not checked by
    restart.  The element-potential minimiser solves that convex problem itself and is not
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
    counts, failed = {}, []
    solver.lower = None
    if cantera and arrays.directions.shape[0] and not proved:
        if x_ref is None:
            x_ref = mole_fractions(n, arrays.phase_of, totals)
        counts, failed = _restarts(solver, sol, n, phase_present, x_ref, RESTARTS)
    starts = 1 + sum(counts.values())
    differ = bool(counts.get("rival") or counts.get("lower"))
    agree = _restart_words(counts, failed) if counts else ""
    if proved:
        how = PROVED
        return not differ, starts, how + (f"; {agree}" if agree else ""), rcond
    if not cantera:
        return True, 1, "convex minimisation (ideal phases)", rcond
    if differ:
        return False, starts, agree, rcond
    if starts > 1:
        return True, starts, agree, rcond
    if failed:
        return None, starts, agree, rcond
    return True, starts, "one starting estimate (no other composition with the same conserved quantities)", rcond
