"""The dual (D) of the element-potential minimiser (:mod:`.minimiser`, whose docstring states
the problem and the method): its constraint functions, the log-barrier stage and the
Newton solve of one active set's KKT equations."""
from __future__ import annotations

import numpy as np

# A present solution phase whose scaled amount falls below this is removed.
_MIN_PHASE_AMOUNT = 1e-25


class DualProblem:
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


def barrier(dual: DualProblem, c: np.ndarray, nu: np.ndarray, max_newton: int):
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


def kkt_newton(dual, c, nu, sol_act, lnN, pure_act, npure, tol, max_iter):
    """Newton on the equations of the present phases.

    Unknowns: nu, ln N_i (i in sol_act), n_j (j in pure_act).  Equations:
      sum_i N_i a_i(nu) + sum_j n_j C_j = c        (element balance, a_i = C x_i)
      h_i(nu) = ln sum_k exp(C_k.nu - g_k) = 0     (present solution phases)
      C_j.nu - g_j = 0                             (present pure phases)
    With dN = N dlnN the Jacobian is the symmetric saddle-point matrix
    [[sum_i N_i Cov_i, B], [B^T, 0]], B = [a_i..., C_j...].
    Returns (status, nu, lnN, npure, iterations); status is "ok", "collapse:i" or "fail".
    """
    # longer than 80 lines on purpose: one Newton loop; residual, Jacobian and step share the active set's
    # index arrays
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
