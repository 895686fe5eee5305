"""Stage 0 of the element-potential minimiser (:mod:`.minimiser`): the species that are zero
in every feasible composition, a strictly feasible starting point of the dual, and the
shift of the element potentials that keeps the forced-absent species absent."""
from __future__ import annotations

import numpy as np
from scipy.optimize import linprog

# Reduced potential g_k - A_k.lambda (beyond ln(phase size)) given to species that
# are zero in every feasible composition: hypothetical x < exp(-100) ~ 4e-44.
_ABSENT_MARGIN = 100.0


def forced_absent(A: np.ndarray, b: np.ndarray):
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


def start_point(C, g, size, c):
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


def absent_shift(A, g, zero, lam0, Nperp, size_of_species):
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
