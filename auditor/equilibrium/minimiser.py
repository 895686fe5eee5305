"""Independent Gibbs-energy minimiser for ideal multiphase systems at fixed T and P.

Used to cross-check cantera's multiphase equilibrium with code that shares nothing
with it but numpy/scipy.  Phases are ideal solutions (ideal gas or ideal mixing,
``mu_k/RT = g_k + ln x_k``) or pure single-species phases (``mu_k/RT = g_k``).

Problem (P)::

    minimise  G/RT = sum_k n_k (g_k + [ln x_k, solution phases only])
    subject to A n = b,  n >= 0.

Method
------
The element-potential formulation (W. R. Smith and R. W. Missen, *Chemical
Reaction Equilibrium Analysis: Theory and Algorithms*, Wiley 1982 -- the RAND /
element-potential methods, the Newton iteration on element potentials and phase
amounts, and the phase-stability test for adding or removing phases in ideal
multiphase systems).  Minimising (P) over the species of one phase at
fixed element potentials ``lambda`` gives ``x_k = exp(A_k.lambda - g_k)``, so the
Lagrangian dual of (P) is the small convex program (D) in ``lambda`` alone::

    maximise  b.lambda
    subject to ln sum_{k in p} exp(A_k.lambda - g_k) <= 0   for each solution phase p
               A_k.lambda - g_k <= 0                         for each pure phase k,

whose constraint multipliers are the phase amounts of (P) (Smith & Missen's
stability criteria are exactly its constraints: a pure phase can be present only
if ``g_k - A_k.lambda <= 0``, a solution phase only if ``sum exp(-(g_k -
A_k.lambda)) >= 1``).  The solver runs in three stages:

0. Presolve.  Scale ``b`` to ``max|b| = 1`` (G is homogeneous of degree 1 in n).
   Find the species that are zero in *every* feasible n (those containing an
   element of zero abundance whose row is one-signed, repeatedly, then a linear
   program for any remaining such species).  They are reported with n = 0 and
   their element potentials are shifted (in the directions that leave every
   other species unchanged) so that ``g_k - A_k.lambda >= 100 + ln(phase size)``
   for each of them.  Replace the rows of ``A`` by an orthonormal basis of the
   column space of the remaining species (SVD), so linearly dependent rows
   (e.g. an electron element and a charge row) are harmless.
1. Log-barrier interior-point method on (D) (S. Boyd and L. Vandenberghe,
   *Convex Optimization*, Cambridge 2004, ch. 11), started from a strictly
   feasible point given by a linear program (a polyhedral inner approximation
   of (D)).  Globally convergent because (D) is convex; it sees species only
   through ``exp(A_k.lambda - g_k)`` evaluated with a max-shift, so huge
   positive or negative ``g`` and trace species (x ~ 1e-30 or smaller) are
   harmless.  It gives lambda and estimates of the phase amounts.
2. Active-set Newton polish (Smith & Missen): Newton's method on the
   equations of the present phases -- element balance, ``ln sum x = 0`` for
   present solution phases, ``A_k.lambda = g_k`` for present pure phases -- in
   the unknowns lambda, ln N_p (solution phases) and n_k (pure phases), always
   started from the barrier point (minimum-norm steps, so directions of lambda
   that the present phases leave undetermined keep their stable barrier
   value); then remove the most negative pure phase (or a solution phase whose
   amount collapses below 1e-25 of the scaled feed) or add the most unstable
   absent phase (stability function > 1e-10), and repeat.  The initial set is
   read off the barrier path (multiplier > slack, or multiplier not falling
   like 1/t); if the loop cycles, it is retried from every phase with a
   non-negligible barrier amount, then from all phases.

Convergence: KKT residual <= tol, the element balance relative to max |b| (or
its rounding floor 8 eps (1 + max |g_k| + |A_k.lambda|) if larger) and the phase
equations relative to 1 + max |g_k| + |A_k.lambda| over the phase.  Mole
fractions below 1e-300 are reported as 0; pure-phase amounts within 1e-13 of
the scaled feed below zero are reported as 0.

Never raises on a well-formed input (shape and finiteness errors raise
ValueError); infeasible or unbounded problems and non-convergence are reported
with ``converged=False`` and a message (then the barrier estimate is returned).
Known limitation: when ``b`` lies (almost) exactly on a face of one phase's
composition cone, the optimum needs vanishing amounts of other phases and the
element potentials run off to infinity; the polish may then cycle and report
``converged=False`` (about 1 in 2000 random problems of the kind in the
tests; none of the chemical test systems).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .dual import DualProblem, barrier, kkt_newton
from .presolve import absent_shift, forced_absent, start_point

__all__ = ["MinimiserInputs", "MinimiserResult", "minimise_gibbs"]

# An absent phase is added only if its stability function exceeds this
# (ln sum x for solution phases, A_k.lambda - g_k for pure phases).
_STABILITY_TOL = 1e-10
# Pure-phase amounts in [-_ZERO_AMOUNT, 0] (scaled feed) are rounding noise: reported as 0.
_ZERO_AMOUNT = 1e-13


@dataclass(frozen=True)
class MinimiserResult:
    moles: np.ndarray  # (N,) amounts of each phase-species, mol
    element_potentials: np.ndarray  # (E,) lambda_e/RT: mu_k/RT = sum_e A[e,k] lambda_e, present k
    phase_moles: np.ndarray  # (P,)
    present: np.ndarray  # (P,) bool
    converged: bool
    iterations: int
    message: str


# ----------------------------------------------------------------------------- main


@dataclass(frozen=True)
class MinimiserInputs:
    """One minimisation problem, validated.

    A: (E, N) formula matrix (rows may be dependent or have zero abundance);
    g: (N,) mu°_k/RT at the state including the pressure term;
    phase_of: (N,) phase index of each species; solution: (P,) True for ideal
    mixing, False for a pure single-species phase; b: (E,) abundances, mol.
    Build with ``from_arrays`` (or by keyword from arrays already of these shapes).
    """

    A: np.ndarray
    g: np.ndarray
    phase_of: np.ndarray
    solution: np.ndarray
    b: np.ndarray

    @classmethod
    def from_arrays(cls, A, g, phase_of, solution, b) -> "MinimiserInputs":
        """Convert and check shapes, finiteness and phase indices (ValueError otherwise)."""
        A = np.atleast_2d(np.asarray(A, dtype=float))
        g = np.asarray(g, dtype=float).ravel()
        phase_of = np.asarray(phase_of).ravel()
        solution = np.asarray(solution, dtype=bool).ravel()
        b = np.asarray(b, dtype=float).ravel()
        E, N = A.shape
        P = solution.size
        if g.size != N or phase_of.size != N or b.size != E:
            raise ValueError(f"shape mismatch: A {A.shape}, g {g.shape}, phase_of {phase_of.shape}, b {b.shape}")
        if not (np.all(np.isfinite(A)) and np.all(np.isfinite(g)) and np.all(np.isfinite(b))):
            raise ValueError("A, g and b must be finite")
        if N and (phase_of.min() < 0 or phase_of.max() >= P or not np.all(phase_of == np.round(phase_of))):
            raise ValueError("phase_of must hold integer phase indices in [0, P)")
        phase_of = phase_of.astype(int)
        counts = np.bincount(phase_of, minlength=P)
        for p in range(P):
            if not solution[p] and counts[p] > 1:
                raise ValueError(f"phase {p} is pure (solution=False) but holds {counts[p]} species")
        return cls(A=A, g=g, phase_of=phase_of, solution=solution, b=b)


@dataclass(frozen=True)
class _Reduced:
    """The problem after the presolve: scaled feed, the species that can be non-zero, the
    orthonormal row basis of their formula matrix, and the dual (D) over them."""

    A: np.ndarray
    g: np.ndarray
    phase_of: np.ndarray
    P: int                      # number of phases
    scale: float                # max |b|: amounts are solved for b / scale
    zero: np.ndarray            # species zero in every feasible n
    free: np.ndarray            # the other species
    size_of_species: np.ndarray  # size of each species' phase
    Ur: np.ndarray              # row basis of the free species' formula matrix
    Nperp: np.ndarray           # its orthogonal complement
    c: np.ndarray               # the scaled feed in the row basis
    dual: DualProblem
    groups: list                # solution phases' free species (indices into free)
    pure: np.ndarray            # pure phases' free species (indices into free)
    pre_msg: str                # what the presolve noted


@dataclass(frozen=True)
class _BarrierPoint:
    """Where the barrier stage ended: the dual point, the phase-amount estimates at the last
    two barrier parameters, the iterations it took and whether it finished."""

    nu: np.ndarray
    eta: np.ndarray
    eta_prev: np.ndarray
    iterations: int
    finished: bool


def _result(problem: MinimiserInputs, n, lam, converged, iters, msg) -> MinimiserResult:
    P, N = problem.solution.size, problem.A.shape[1]
    pm = np.bincount(problem.phase_of, weights=n, minlength=P) if N else np.zeros(P)
    return MinimiserResult(moles=n, element_potentials=lam, phase_moles=pm, present=pm > 0,
                           converged=converged, iterations=iters, message=msg)


def _reduce(problem: MinimiserInputs) -> _Reduced | MinimiserResult:
    """Stage 0, the presolve (module docstring); a result when nothing is left to solve."""
    A, g, phase_of, solution, b = problem.A, problem.g, problem.phase_of, problem.solution, problem.b
    E, N = A.shape
    P = solution.size
    scale = float(np.abs(b).max()) if E else 0.0
    if scale == 0.0:
        bh = np.zeros(E)
    else:
        bh = b / scale
        bh[np.abs(bh) <= 64 * np.finfo(float).eps] = 0.0  # rounding noise (e.g. charge rows)

    zero, feasible, pre_msg = forced_absent(A, bh)
    if not feasible:
        return _result(problem, np.zeros(N), np.zeros(E), False, 0, pre_msg)
    free = np.flatnonzero(~zero)
    size_of_species = np.bincount(phase_of, minlength=P)[phase_of].astype(float) if N else np.zeros(0)

    # Row basis of the free species' formula matrix (invariant: A_free n = b <=> C n = c).
    if free.size:
        U, sv, _ = np.linalg.svd(A[:, free], full_matrices=True)
        r = int(np.sum(sv > max(A.shape) * np.finfo(float).eps * (sv[0] if sv.size else 0.0)))
    else:
        U, r = np.eye(E), 0
    Ur, Nperp = U[:, :r], U[:, r:]
    C = Ur.T @ A[:, free]
    c = Ur.T @ bh
    if free.size and np.abs(bh - Ur @ c).max() > 1e-9:
        return _result(problem, np.zeros(N), np.zeros(E), False, 0,
                       "infeasible: b is not in the span of the species' compositions")

    if free.size == 0 or r == 0:
        lam0 = np.zeros(E)
        shift, smsg = absent_shift(A, g, zero, lam0, Nperp, size_of_species)
        if free.size and r == 0:
            return _result(problem, np.zeros(N), lam0 + shift, False, 0,
                           "species with no conserved content: amount undetermined")
        return _result(problem, np.zeros(N), lam0 + shift, not smsg, 0, smsg or "empty feed: all amounts zero")

    # Constraint structure of (D) over free species (indices into `free`).
    pos = {k: i for i, k in enumerate(free)}
    groups, pure = [], []
    for p in range(P):
        members = [pos[k] for k in np.flatnonzero(phase_of == p) if k in pos]
        if not members:
            continue
        if solution[p]:
            groups.append(np.array(members))
        else:
            pure.append(members[0])
    pure = np.array(pure, dtype=int)
    return _Reduced(A=A, g=g, phase_of=phase_of, P=P, scale=scale, zero=zero, free=free,
                    size_of_species=size_of_species, Ur=Ur, Nperp=Nperp, c=c, dual=DualProblem(C, g[free], groups, pure),
                    groups=groups, pure=pure, pre_msg=pre_msg)


def _assemble(red: _Reduced, nu: np.ndarray, sol_amounts: dict, pure_amounts: dict) -> np.ndarray:
    """Full-length moles (unscaled) from nu and phase amounts.

    n_k = N_p x_k with x_k = exp(C_k.nu - g_k - h_p), so ln x_k + g_k = C_k.nu
    when h_p = 0; forced-absent species stay exactly 0."""
    _, _, _, xs_ = red.dual.eval(nu)
    nf = np.zeros(red.free.size)
    for i, amt in sol_amounts.items():
        # mole fractions below 1e-300 (subnormal range: ln x inaccurate) -> 0
        nf[red.groups[i]] = amt * np.where(xs_[i] < 1e-300, 0.0, xs_[i])
    for j, amt in pure_amounts.items():
        nf[red.pure[j]] = max(amt, 0.0)
    n = np.zeros(red.A.shape[1])
    n[red.free] = nf * red.scale
    return n


def _potentials(red: _Reduced, nu: np.ndarray) -> tuple[np.ndarray, str]:
    # Invariant: A_k.(Ur nu) = C_k.nu for every free species k (its column lies
    # in span(Ur)), and the shift lies in span(Nperp), orthogonal to those
    # columns: so mu_k/RT = C_k.nu - h_p = A_k.lambda for present species.
    lam0 = red.Ur @ nu
    shift, amsg = absent_shift(red.A, red.g, red.zero, lam0, red.Nperp, red.size_of_species)
    return lam0 + shift, amsg


def _fallback(problem: MinimiserInputs, red: _Reduced, bp: _BarrierPoint, msg: str, it_p: int) -> MinimiserResult:
    """The barrier estimate, not converged."""
    ns = red.dual.ns
    n = _assemble(red, bp.nu, {i: bp.eta[i] for i in range(ns)}, {j: bp.eta[ns + j] for j in range(len(red.pure))})
    lam, _ = _potentials(red, bp.nu)
    return _result(problem, n, lam, False, bp.iterations + it_p, msg)


def _polished(problem: MinimiserInputs, red: _Reduced, bp: _BarrierPoint, nu, amounts, sol_act, pure_act, it_p
              ) -> MinimiserResult:
    """The result at a converged active set."""
    ns = red.dual.ns
    n = _assemble(red, nu, {i: amounts[i] for i in sol_act}, {j: amounts[ns + j] for j in pure_act})
    lam, amsg = _potentials(red, nu)
    n_present = int(np.count_nonzero(np.bincount(red.phase_of, weights=n, minlength=red.P) > 0))
    msg = (f"converged: {n_present} of {red.P} phases present; "
           f"{bp.iterations} barrier + {it_p} Newton iterations")
    if red.pre_msg:
        msg += f"; note: {red.pre_msg}"
    if amsg:
        return _result(problem, n, lam, False, bp.iterations + it_p, amsg)
    if not bp.finished:
        msg += "; note: barrier stage hit its iteration limit"
    return _result(problem, n, lam, True, bp.iterations + it_p, msg)


def _polish(problem: MinimiserInputs, red: _Reduced, bp: _BarrierPoint, present: np.ndarray, it_p: int,
            tol: float, max_iter: int) -> tuple[MinimiserResult | None, str, int]:
    """Stage 2, the active-set Newton polish from the initial set ``present``.
    Returns (result or None, message, Newton iterations so far)."""
    dual, c = red.dual, red.c
    ns, m, n_pure = dual.ns, dual.m, len(red.pure)
    present = present.copy()
    seen = set()
    for _loop in range(4 * m + 20):
        key = tuple(np.flatnonzero(present))
        if key in seen:
            return None, "active-set cycling in Newton polish", it_p
        seen.add(key)
        sol_act = [i for i in range(ns) if present[i]]
        pure_act = [j for j in range(n_pure) if present[ns + j]]
        # Every active set is solved from the barrier point, which is close to
        # the optimum; a Newton iterate of a wrong set may have drifted far away.
        lnN = np.log(np.maximum(bp.eta[sol_act], 1e-30))
        npure = bp.eta[[ns + j for j in pure_act]]
        budget = min(60, max_iter - it_p)
        if budget <= 0:
            return None, "iteration limit reached in Newton polish", it_p
        status, nu, lnN, npure, its = kkt_newton(dual, c, bp.nu, sol_act, lnN, pure_act, npure, tol, budget)
        it_p += its
        if status == "fail":
            # Usually a wrong active set (no solution with these phases): if an
            # absent phase is unstable at the last iterate, add it and go on.
            if not np.all(np.isfinite(nu)):
                return None, "Newton polish diverged", it_p
            viol = np.where(present, -np.inf, dual.h(nu))
            if viol.max() <= _STABILITY_TOL:
                return None, "Newton polish did not converge", it_p
            present[int(np.argmax(viol))] = True
            continue
        amounts = np.zeros(m)
        amounts[sol_act] = np.exp(lnN)
        amounts[[ns + j for j in pure_act]] = npure
        if status.startswith("collapse"):
            present[sol_act[int(status.split(":")[1])]] = False
            continue
        # Remove the most negative pure phase.  Amounts within rounding of zero
        # (|n| <= _ZERO_AMOUNT of the scaled feed) are kept in the set and
        # reported as 0, so that marginal phases cannot make the set cycle.
        if len(pure_act) and npure.min() < -_ZERO_AMOUNT:
            present[ns + pure_act[int(np.argmin(npure))]] = False
            continue
        viol = np.where(present, -np.inf, dual.h(nu))
        if viol.max() > _STABILITY_TOL:  # add the most unstable absent phase
            present[int(np.argmax(viol))] = True
            continue
        res = _polished(problem, red, bp, nu, amounts, sol_act, pure_act, it_p)
        return res, res.message, it_p
    return None, "active-set loop limit reached", it_p


def minimise_gibbs(problem: MinimiserInputs, *, tol=1e-12, max_iter=500) -> MinimiserResult:
    """Minimise G/RT = sum_k n_k (g_k + ln x_k [solution phases]) s.t. A n = b, n >= 0.

    tol: Newton tolerance on the scaled KKT residual; max_iter: Newton iterations
    budget (barrier and polish separately).
    """
    red = _reduce(problem)
    if isinstance(red, MinimiserResult):
        return red
    nu0, smsg = start_point(red.dual.C, red.dual.g, red.size_of_species[red.free], red.c)
    if nu0 is None:
        return _result(problem, np.zeros(problem.A.shape[1]), np.zeros(problem.A.shape[0]), False, 0, smsg)

    # ---- stage 1: barrier
    nu_b, eta, eta_prev, it_b, ok_b = barrier(red.dual, red.c, nu0, max_iter)
    bp = _BarrierPoint(nu_b, eta, eta_prev, it_b, ok_b)
    h_b = red.dual.h(nu_b)

    # Initial active sets, tried in turn: (1) multiplier larger than slack, or not
    # falling like 1/t between the last two barrier parameters (t grew 20-fold);
    # (2) every phase the barrier gives a non-negligible amount; (3) all phases.
    first = (eta > -h_b) | (eta > 0.3 * eta_prev)
    if not first.any():
        first[int(np.argmax(eta))] = True
    tried, it_p, msgs = [], 0, []
    for start_set in (first, eta > 1e-30, np.ones(red.dual.m, dtype=bool)):
        if not start_set.any() or any(np.array_equal(start_set, t_) for t_ in tried):
            continue
        tried.append(start_set)
        res, why, it_p = _polish(problem, red, bp, start_set, it_p, tol, max_iter)
        if res is not None:
            return res
        msgs.append(why)
    return _fallback(problem, red, bp, "; ".join(msgs) + "; barrier estimate returned", it_p)
