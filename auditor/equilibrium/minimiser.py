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
element-potential methods and the phase-stability test for ideal multiphase
systems; S. Gordon and B. J. McBride, NASA RP-1311, 1994, Part I -- the Newton
iteration on element potentials and ln(phase moles) and the test for adding or
removing condensed phases).  Minimising (P) over the species of one phase at
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
2. Active-set Newton polish (Gordon & McBride): Newton's method on the
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
from scipy.optimize import linprog

__all__ = ["MinimiserResult", "minimise_gibbs"]

# Reduced potential g_k - A_k.lambda (beyond ln(phase size)) given to species that
# are zero in every feasible composition: hypothetical x < exp(-100) ~ 4e-44.
_ABSENT_MARGIN = 100.0
# An absent phase is added only if its stability function exceeds this
# (ln sum x for solution phases, A_k.lambda - g_k for pure phases).
_STABILITY_TOL = 1e-10
# A present solution phase whose scaled amount falls below this is removed.
_MIN_PHASE_AMOUNT = 1e-25
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


# ----------------------------------------------------------------------------- dual


class _Dual:
    """Constraint functions of (D) in reduced coordinates nu (lambda = U_r nu).

    Constraint i < ns is the solution phase ``groups[i]``:  h_i = ln sum exp(C_k.nu - g_k);
    constraint ns + j is the pure species ``pure[j]``:      h = C_k.nu - g_k.
    (D) is: maximise c.nu subject to h <= 0.  All indices are into the free species.
    """

    def __init__(self, C: np.ndarray, g: np.ndarray, groups: list[np.ndarray], pure: np.ndarray):
        self.C, self.g, self.groups, self.pure = C, g, groups, pure
        self.ns = len(groups)
        self.m = self.ns + len(pure)
        self.r = C.shape[0]

    def h(self, nu: np.ndarray) -> np.ndarray:
        z = self.C.T @ nu - self.g
        out = np.empty(self.m)
        for i, idx in enumerate(self.groups):
            zi = z[idx]
            zmax = zi.max()
            out[i] = zmax + np.log(np.exp(zi - zmax).sum())
        out[self.ns :] = z[self.pure]
        return out

    def eval(self, nu: np.ndarray):
        """h (m,), gradients G (r, m), per-solution-phase covariance Hessians, mole fractions."""
        C = self.C
        z = C.T @ nu - self.g
        h = np.empty(self.m)
        G = np.empty((self.r, self.m))
        covs, xs = [], []
        for i, idx in enumerate(self.groups):
            zi = z[idx]
            zmax = zi.max()
            e = np.exp(zi - zmax)  # max-shift: no overflow for any g
            s = e.sum()
            h[i] = zmax + np.log(s)
            x = e / s  # normalised mole fractions at nu
            Ci = C[:, idx]
            a = Ci @ x  # mean composition of the phase = grad h_i
            G[:, i] = a
            covs.append((Ci * x) @ Ci.T - np.outer(a, a))  # Hessian of h_i (PSD)
            xs.append(x)
        h[self.ns :] = z[self.pure]
        G[:, self.ns :] = C[:, self.pure]
        return h, G, covs, xs


def _solve(M: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    try:
        out = np.linalg.solve(M, rhs)
        if np.all(np.isfinite(out)):
            return out
    except np.linalg.LinAlgError:
        pass
    return np.linalg.lstsq(M, rhs, rcond=None)[0]


def _barrier(dual: _Dual, c: np.ndarray, nu: np.ndarray, max_newton: int):
    """Log-barrier method on (D) from strictly feasible nu.

    Returns (nu, eta, eta_prev, iterations, ok): eta = 1/(t (-h)) are the
    multipliers (phase amounts on the central path) at the final t, eta_prev at
    the previous t.  Along the path eta tends to the amount of a present phase
    and falls like 1/t for an absent one.
    """
    m = dual.m
    t = float(m)
    it = 0
    eta_prev = np.full(m, np.inf)
    # Only the active set and a starting point are needed from this stage (the
    # polish makes them exact), and beyond t ~ 1e10 rounding dominates phi.
    gap_target = 1e-8
    ok = True
    while True:
        for _ in range(50):  # centering: minimise phi = -t c.nu - sum log(-h)
            h, G, covs, _ = dual.eval(nu)
            s = -h  # invariant: s > 0 (strict feasibility)
            grad = -t * c + G @ (1.0 / s)
            H = (G / s**2) @ G.T
            for i in range(dual.ns):
                H += covs[i] / s[i]
            dnu = _solve(H, -grad)
            dec2 = float(-grad @ dnu)  # squared Newton decrement
            if not np.isfinite(dec2) or dec2 <= 1e-10:
                break
            phi0 = -t * (c @ nu) - np.log(s).sum()
            step = 1.0
            accepted = False
            while step > 1e-14:
                trial = nu + step * dnu
                ht = dual.h(trial)
                if np.all(ht < 0):
                    phi = -t * (c @ trial) - np.log(-ht).sum()
                    if phi <= phi0 - 0.25 * step * dec2:
                        accepted = True
                        break
                step *= 0.5
            it += 1
            if not accepted:
                break
            nu = trial
            if it >= max_newton:
                ok = False
                break
        eta = 1.0 / (t * -dual.h(nu))
        if m / t < gap_target or not ok:
            return nu, eta, eta_prev, it, ok
        eta_prev = eta
        t *= 20.0


def _kkt_newton(dual, c, nu, sol_act, lnN, pure_act, npure, tol, max_iter):
    """Newton on the equations of the present phases.

    Unknowns: nu, ln N_i (i in sol_act), n_j (j in pure_act).  Equations:
      sum_i N_i a_i(nu) + sum_j n_j C_j = c        (element balance, a_i = C x_i)
      h_i(nu) = ln sum_k exp(C_k.nu - g_k) = 0     (present solution phases)
      C_j.nu - g_j = 0                             (present pure phases)
    With dN = N dlnN the Jacobian is the symmetric saddle-point matrix
    [[sum_i N_i Cov_i, B], [B^T, 0]], B = [a_i..., C_j...].
    Returns (status, nu, lnN, npure, iterations); status is "ok", "collapse:i" or "fail".
    """
    r = dual.r
    ns = dual.ns
    cols = list(sol_act) + [ns + j for j in pure_act]
    ka, kp = len(sol_act), len(pure_act)

    def residual(nu_, lnN_, np_):
        h, G, covs, xs = dual.eval(nu_)
        Fe = -c.copy()
        for a, i in enumerate(sol_act):
            Fe += np.exp(lnN_[a]) * G[:, i]
        for a, j in enumerate(pure_act):
            Fe += np_[a] * G[:, ns + j]
        F = np.concatenate([Fe, h[sol_act] if ka else [], h[[ns + j for j in pure_act]] if kp else []])
        return F, h, G, covs

    lnN = np.array(lnN, dtype=float)
    npure = np.array(npure, dtype=float)
    F, h, G, covs = residual(nu, lnN, npure)
    norm = np.abs(F).max()
    prev_sr = np.inf
    for it in range(1, max_iter + 1):
        H = np.zeros((r, r))
        for a, i in enumerate(sol_act):
            H += np.exp(lnN[a]) * covs[i]
        B = G[:, cols]
        n = r + len(cols)
        J = np.zeros((n, n))
        J[:r, :r] = H
        J[:r, r:] = B
        J[r:, :r] = B.T
        # Minimum-norm step: where the active set leaves nu undetermined (e.g.
        # every present phase has compositions in a subspace), nu keeps its
        # barrier value, which is stable for the absent phases.
        d = np.linalg.lstsq(J, -F, rcond=1e-13)[0]
        dnu, dN, dn = d[:r], d[r : r + ka], d[r + ka :]
        dlnN = dN / np.exp(lnN) if ka else dN
        big = np.abs(dlnN).max() if ka else 0.0
        step = min(1.0, 4.0 / big) if big > 0 else 1.0  # cap |d ln N| per step
        while True:
            t_nu, t_lnN, t_np = nu + step * dnu, lnN + step * dlnN, npure + step * dn
            Ft, ht, Gt, covst = residual(t_nu, t_lnN, t_np)
            nt = np.abs(Ft).max()
            if np.isfinite(nt) and (nt <= (1 - 1e-4 * step) * norm or step < 1e-6):
                break
            step *= 0.5
        if not np.isfinite(nt):
            return "fail", nu, lnN, npure, it
        nu, lnN, npure, F, G, covs, norm = t_nu, t_lnN, t_np, Ft, Gt, covst, nt
        if ka and lnN.min() < np.log(_MIN_PHASE_AMOUNT):
            return f"collapse:{int(np.argmin(lnN))}", nu, lnN, npure, it
        # Thresholds.  Phase equations are differences of terms as large as |g_k|,
        # |C_k.nu|: tested relative to 1 + that size.  Element balance (b scaled to
        # max |b| = 1): tol, or its rounding floor -- amounts inherit the relative
        # error of exp(z), about eps |z| -- if larger (only with huge g or nu).
        zabs = np.abs(dual.C.T @ nu) + np.abs(dual.g)
        thr = np.full(F.size, tol)
        zmax = 0.0
        for a, i in enumerate(sol_act):
            zi = zabs[dual.groups[i]].max()
            thr[r + a] = tol * (1 + zi)
            zmax = max(zmax, zi)
        for a, j in enumerate(pure_act):
            zj = zabs[dual.pure[j]]
            thr[r + ka + a] = tol * (1 + zj)
            zmax = max(zmax, zj)
        thr[:r] = max(tol, 8 * np.finfo(float).eps * (1 + zmax))
        sr = float(np.max(np.abs(F) / thr))
        if sr <= 1:
            return "ok", nu, lnN, npure, it
        # A Newton step that no longer halves the residual within 10x the
        # thresholds has reached the rounding floor: accept.
        if sr <= 10 and sr > 0.5 * prev_sr:
            return "ok", nu, lnN, npure, it
        prev_sr = sr
    return "fail", nu, lnN, npure, max_iter


# ----------------------------------------------------------------------------- presolve


def _forced_absent(A: np.ndarray, b: np.ndarray):
    """Species zero in every n >= 0 with A n = b.  Returns (mask, feasible, message)."""
    E, N = A.shape
    zero = np.zeros(N, dtype=bool)
    # (a) one-signed rows with zero abundance, repeatedly (exact, cheap).
    changed = True
    while changed:
        changed = False
        for e in range(E):
            if b[e] != 0:
                continue
            row = np.where(zero, 0.0, A[e])
            if not np.any(row):
                continue
            if np.all(row >= 0) or np.all(row <= 0):
                zero |= row != 0
                changed = True
    free = np.flatnonzero(~zero)
    if free.size == 0:
        feasible = not np.any(b)
        return zero, feasible, "" if feasible else "infeasible: no species can carry the feed"
    # (b) homogeneous LP: max sum t, A n = b s, s >= 1, 0 <= t <= 1, t_k <= n_k/u_k.
    # Any species that can be positive reaches t_k = 1 (the feasible set is closed
    # under addition and under scaling by >= 1); species forced to zero have t_k = 0.
    Af = A[:, free]
    nf = free.size
    u = np.ones(nf)
    for k in range(nf):
        cand = [b[e] / Af[e, k] for e in range(E) if Af[e, k] > 0 and np.all(Af[e] >= 0) and b[e] > 0]
        if cand:
            u[k] = min(cand)
    cost = np.concatenate([np.zeros(nf), -np.ones(nf), [0.0]])
    A_eq = np.hstack([Af, np.zeros((E, nf)), -b[:, None]])
    A_ub = np.hstack([-np.diag(1.0 / u), np.eye(nf), np.zeros((nf, 1))])
    bounds = [(0, None)] * nf + [(0, 1)] * nf + [(1, None)]
    try:
        res = linprog(cost, A_ub=A_ub, b_ub=np.zeros(nf), A_eq=A_eq, b_eq=np.zeros(E),
                      bounds=bounds, method="highs")
    except Exception as exc:  # pragma: no cover - defensive
        return zero, True, f"feasibility LP raised {exc!r}; used zero-abundance rule only"
    if res.status == 2:
        return zero, False, "infeasible: no n >= 0 satisfies A n = b"
    if res.status != 0:
        return zero, True, f"feasibility LP status {res.status}; used zero-abundance rule only"
    tk = res.x[nf : 2 * nf]
    zero[free[tk < 0.5]] = True
    return zero, True, ""


def _start_point(C, g, size, c):
    """Strictly feasible nu for (D): max c.nu s.t. C_k.nu <= g_k - ln(size_k) - 1 (LP)."""
    try:
        res = linprog(-c, A_ub=C.T, b_ub=g - np.log(size) - 1.0,
                      bounds=[(None, None)] * C.shape[0], method="highs")
    except Exception:  # pragma: no cover - defensive
        return None, "start LP raised"
    if res.status == 0:
        return res.x, ""
    if res.status == 3:  # unbounded LP <=> its dual (a relaxed (P)) is infeasible
        return None, "start LP unbounded"
    if res.status == 2:  # no strictly feasible dual point <=> (P) unbounded (n >= 0, A n = 0)
        return None, "unbounded: some nonnegative combination of species has no conserved content"
    return None, f"start LP status {res.status}"


def _absent_shift(A, g, zero, lam0, Nperp, size_of_species):
    """delta in span(Nperp) with g_k - A_k.(lam0 + delta) >= margin for forced-absent k."""
    if not zero.any():
        return np.zeros_like(lam0), ""
    if Nperp.shape[1] == 0:
        return np.zeros_like(lam0), "no potential direction separates forced-absent species"
    Az = A[:, zero]
    M = Az.T @ Nperp  # (Z, q)
    rhs = g[zero] - _ABSENT_MARGIN - np.log(size_of_species[zero]) - Az.T @ lam0
    q = Nperp.shape[1]
    # minimise ||z||_1: z = zp - zm
    res = linprog(np.ones(2 * q), A_ub=np.hstack([M, -M]), b_ub=rhs,
                  bounds=[(0, None)] * (2 * q), method="highs")
    if res.status != 0:
        return np.zeros_like(lam0), "could not place potentials of forced-absent species"
    z = res.x[:q] - res.x[q:]
    return Nperp @ z, ""


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


def minimise_gibbs(problem: MinimiserInputs, *, tol=1e-12, max_iter=500) -> MinimiserResult:
    """Minimise G/RT = sum_k n_k (g_k + ln x_k [solution phases]) s.t. A n = b, n >= 0.

    tol: Newton tolerance on the scaled KKT residual; max_iter: Newton iterations
    budget (barrier and polish separately).
    """
    # one function with its stages as closures over the scaled problem: a reason to exceed
    # 80 lines (presolve, barrier, polish share a dozen arrays; see the module docstring)
    A, g, phase_of, solution, b = problem.A, problem.g, problem.phase_of, problem.solution, problem.b
    E, N = A.shape
    P = solution.size
    counts = np.bincount(phase_of, minlength=P)

    def result(n, lam, converged, iters, msg):
        pm = np.bincount(phase_of, weights=n, minlength=P) if N else np.zeros(P)
        return MinimiserResult(moles=n, element_potentials=lam, phase_moles=pm, present=pm > 0,
                               converged=converged, iterations=iters, message=msg)

    scale = float(np.abs(b).max()) if E else 0.0
    if scale == 0.0:
        bh = np.zeros(E)
    else:
        bh = b / scale
        bh[np.abs(bh) <= 64 * np.finfo(float).eps] = 0.0  # rounding noise (e.g. charge rows)

    zero, feasible, pre_msg = _forced_absent(A, bh)
    if not feasible:
        return result(np.zeros(N), np.zeros(E), False, 0, pre_msg)
    free = np.flatnonzero(~zero)
    size_of_species = counts[phase_of].astype(float) if N else np.zeros(0)

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
        return result(np.zeros(N), np.zeros(E), False, 0,
                      "infeasible: b is not in the span of the species' compositions")

    if free.size == 0 or r == 0:
        lam0 = np.zeros(E)
        shift, smsg = _absent_shift(A, g, zero, lam0, Nperp, size_of_species)
        if free.size and r == 0:
            return result(np.zeros(N), lam0 + shift, False, 0,
                          "species with no conserved content: amount undetermined")
        return result(np.zeros(N), lam0 + shift, not smsg, 0, smsg or "empty feed: all amounts zero")

    # Constraint structure of (D) over free species (indices into `free`).
    pos = {k: i for i, k in enumerate(free)}
    groups, group_phase, pure, pure_phase = [], [], [], []
    for p in range(P):
        members = [pos[k] for k in np.flatnonzero(phase_of == p) if k in pos]
        if not members:
            continue
        if solution[p]:
            groups.append(np.array(members))
            group_phase.append(p)
        else:
            pure.append(members[0])
            pure_phase.append(p)
    dual = _Dual(C, g[free], groups, np.array(pure, dtype=int))
    ns, m = dual.ns, dual.m

    nu0, smsg = _start_point(C, g[free], size_of_species[free], c)
    if nu0 is None:
        return result(np.zeros(N), np.zeros(E), False, 0, smsg)

    # ---- stage 1: barrier
    nu_b, eta, eta_prev, it_b, ok_b = _barrier(dual, c, nu0, max_iter)
    h_b = dual.h(nu_b)

    def assemble(nu_, sol_amounts: dict, pure_amounts: dict):
        """Full-length moles (unscaled) from nu and phase amounts.

        n_k = N_p x_k with x_k = exp(C_k.nu - g_k - h_p), so ln x_k + g_k = C_k.nu
        when h_p = 0; forced-absent species stay exactly 0."""
        _, _, _, xs_ = dual.eval(nu_)
        nf = np.zeros(free.size)
        for i, amt in sol_amounts.items():
            # mole fractions below 1e-300 (subnormal range: ln x inaccurate) -> 0
            nf[groups[i]] = amt * np.where(xs_[i] < 1e-300, 0.0, xs_[i])
        for j, amt in pure_amounts.items():
            nf[pure[j]] = max(amt, 0.0)
        n = np.zeros(N)
        n[free] = nf * scale
        return n

    def potentials(nu_):
        # Invariant: A_k.(Ur nu) = C_k.nu for every free species k (its column lies
        # in span(Ur)), and the shift lies in span(Nperp), orthogonal to those
        # columns: so mu_k/RT = C_k.nu - h_p = A_k.lambda for present species.
        lam0 = Ur @ nu_
        shift, amsg = _absent_shift(A, g, zero, lam0, Nperp, size_of_species)
        return lam0 + shift, amsg

    def fallback(msg, it_p):
        n = assemble(nu_b, {i: eta[i] for i in range(ns)}, {j: eta[ns + j] for j in range(len(pure))})
        lam, _ = potentials(nu_b)
        return result(n, lam, False, it_b + it_p, msg)

    # ---- stage 2: active-set Newton polish
    def polish(present: np.ndarray, it_p: int):
        """Active-set loop from the initial set `present`.  Returns (result or None, msg, it_p)."""
        present = present.copy()
        seen = set()
        for _loop in range(4 * m + 20):
            key = tuple(np.flatnonzero(present))
            if key in seen:
                return None, "active-set cycling in Newton polish", it_p
            seen.add(key)
            sol_act = [i for i in range(ns) if present[i]]
            pure_act = [j for j in range(len(pure)) if present[ns + j]]
            # Every active set is solved from the barrier point, which is close to
            # the optimum; a Newton iterate of a wrong set may have drifted far away.
            lnN = np.log(np.maximum(eta[sol_act], 1e-30))
            npure = eta[[ns + j for j in pure_act]]
            budget = min(60, max_iter - it_p)
            if budget <= 0:
                return None, "iteration limit reached in Newton polish", it_p
            status, nu, lnN, npure, its = _kkt_newton(dual, c, nu_b, sol_act, lnN, pure_act,
                                                      npure, tol, budget)
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
            n = assemble(nu, {i: amounts[i] for i in sol_act},
                         {j: amounts[ns + j] for j in pure_act})
            lam, amsg = potentials(nu)
            n_present = int(np.count_nonzero(np.bincount(phase_of, weights=n, minlength=P) > 0))
            msg = (f"converged: {n_present} of {P} phases present; "
                   f"{it_b} barrier + {it_p} Newton iterations")
            if pre_msg:
                msg += f"; note: {pre_msg}"
            if amsg:
                return result(n, lam, False, it_b + it_p, amsg), amsg, it_p
            if not ok_b:
                msg += "; note: barrier stage hit its iteration limit"
            return result(n, lam, True, it_b + it_p, msg), msg, it_p
        return None, "active-set loop limit reached", it_p

    # Initial active sets, tried in turn: (1) multiplier larger than slack, or not
    # falling like 1/t between the last two barrier parameters (t grew 20-fold);
    # (2) every phase the barrier gives a non-negligible amount; (3) all phases.
    first = (eta > -h_b) | (eta > 0.3 * eta_prev)
    if not first.any():
        first[int(np.argmax(eta))] = True
    tried, it_p, msgs = [], 0, []
    for start_set in (first, eta > 1e-30, np.ones(m, dtype=bool)):
        if not start_set.any() or any(np.array_equal(start_set, t_) for t_ in tried):
            continue
        tried.append(start_set)
        res, why, it_p = polish(start_set, it_p)
        if res is not None:
            return res
        msgs.append(why)
    return fallback("; ".join(msgs) + "; barrier estimate returned", it_p)
