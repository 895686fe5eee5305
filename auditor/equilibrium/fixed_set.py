"""The equilibrium equations of one set of present phases, followed as a variable moves.

A certified state fixes which phases are present.  Holding that set, the state is the root
of a square system in the unknowns ``y = (lambda, N, u)``:

* ``mu_k(T, P, x) / RT - W'_k . lambda = 0`` for every present species ``k`` (zero affinity
  of every reaction among them, written with element potentials ``lambda``);
* ``sum_k x_k - 1 = 0`` for every present solution phase;
* ``sum_k W'_k N_p(k) x_k - b' = 0`` (the conserved quantities of the feed),

with ``N_p`` the amount of each present phase (free in sign, so that a phase's amount
passes through zero where it vanishes) and ``u_k = ln x_k`` for the species of solution
phases.  ``W' = U^T W`` keeps the conserved quantities the present species span (``U`` an
orthonormal basis of their columns), so the system stays square when an element is absent.

Implicit differentiation of this system gives the sensitivities of the state
(``dy/dtheta = -J^-1 dF/dtheta``): ``d(mu/RT)/dT = -h_k/(R T^2)`` and
``d(mu/RT)/dP = v_k/(R T)`` from the partial molar enthalpies and volumes, and ``dF/db' = -I``
for the feed.  Newton's method on the same system follows the state when T, P or the feed
move (the margins of :mod:`.margins`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .model import R, PhaseModel

IDEAL_SOLUTIONS = ("ideal-gas", "ideal-condensed", "ideal-solid-solution")
NEWTON_TOLERANCE = 1e-11      # largest scaled residual of a converged state
NEWTON_ITERATIONS = 40
LN_STEP_LIMIT = 4.0           # largest change of ln x in one Newton step


class NotFollowed(RuntimeError):
    """Newton's method did not converge on the present phases' equations."""


@dataclass
class Point:
    """One state of the fixed phase set: its unknowns and what follows from them."""

    T: float
    P: float
    b: np.ndarray             # conserved quantities of the feed (reduced: U^T W n0)
    y: np.ndarray
    x: np.ndarray             # mole fractions of the present species
    N: np.ndarray             # amount of each present phase
    g: np.ndarray             # standard potentials mu°/RT of every species at T, P
    value: float | None = None  # the probed variable's value here (margins)


class FixedSet:
    """The equations of one set of present species (``species``: system indices, ``phases``:
    system phase indices), with the cantera phases of ``model`` and the conserved-quantity
    matrix ``W`` (conserved quantities x species)."""

    def __init__(self, model: PhaseModel, W: np.ndarray, phase_of: np.ndarray, species: np.ndarray,
                 phase_models: tuple[str, ...]):
        self.model, self.W, self.ns_all = model, W, W.shape[1]
        self.species = np.asarray(species, dtype=int)
        phases = sorted(set(phase_of[self.species].tolist()))
        self.phases = np.array(phases, dtype=int)
        self.pos = np.searchsorted(self.phases, phase_of[self.species])      # present phase of each species
        counts = np.bincount(self.pos, minlength=len(phases))
        self.solution_species = counts[self.pos] > 1                         # has an unknown ln x
        self.u_index = np.cumsum(self.solution_species) - 1
        self.ideal = np.array([phase_models[p] in IDEAL_SOLUTIONS or counts[i] == 1 for i, p in enumerate(phases)])
        Ws = W[:, self.species]
        u, s, _ = np.linalg.svd(Ws, full_matrices=False)
        rank = int((s > 1e-10 * s[0]).sum()) if s.size and s[0] > 0 else 0
        self.U = u[:, :rank]
        self.Wr = self.U.T @ W                          # reduced conserved quantities x all species
        self.Ws = self.Wr[:, self.species]
        self.r, self.n_phases, self.n_u = rank, len(phases), int(self.solution_species.sum())
        self.size = rank + len(phases) + self.n_u
        self.solution_phases = np.flatnonzero(counts > 1)
        # the Jacobian's fixed pattern
        self._sol = np.flatnonzero(self.solution_species)
        self._cols = rank + len(phases) + self.u_index
        self._e2 = [(row, self._sol[self.pos[self._sol] == p]) for row, p in enumerate(self.solution_phases)]
        self._members = [np.flatnonzero(self.pos == i) for i in range(len(phases))]
        self._dmu_ideal = np.zeros((len(self.species), self.n_u))
        ideal_sol = self._sol[self.ideal[self.pos[self._sol]]]
        self._dmu_ideal[ideal_sol, self.u_index[ideal_sol]] = 1.0
        self._rough = [int(k) for k in self._sol if not self.ideal[self.pos[k]]]

    # -------------------------------------------------------------- unknowns

    def split(self, y: np.ndarray):
        lam, N, u = y[:self.r], y[self.r:self.r + self.n_phases], y[self.r + self.n_phases:]
        x = np.ones(len(self.species))
        x[self.solution_species] = np.exp(u)
        return lam, N, x

    def start(self, n: np.ndarray, lam_full: np.ndarray) -> np.ndarray:
        """The unknowns of a certified state (amounts ``n`` of every species, element potentials)."""
        n_s = n[self.species]
        N = np.bincount(self.pos, weights=n_s, minlength=self.n_phases)
        x = n_s / N[self.pos]
        return np.concatenate([self.U.T @ lam_full, N, np.log(x[self.solution_species])])

    def amounts(self, pt: Point) -> np.ndarray:
        """Amount of each present species."""
        return pt.N[self.pos] * pt.x

    def full_x(self, x: np.ndarray) -> np.ndarray:
        out = np.zeros(self.ns_all)
        out[self.species] = x
        return out

    # -------------------------------------------------------------- equations

    def residual(self, y: np.ndarray, T: float, P: float, b: np.ndarray):
        lam, N, x = self.split(y)
        if not (np.all(np.isfinite(y)) and np.all(np.isfinite(x))):
            raise NotFollowed("the state left the range of finite amounts")
        mu, g = self.model.at_state(T, P, self.full_x(x))
        Ws = self.Ws
        e1 = mu[self.species] - Ws.T @ lam
        e2 = np.bincount(self.pos, weights=x, minlength=self.n_phases)[self.solution_phases] - 1.0
        e3 = Ws @ (N[self.pos] * x) - b
        return np.concatenate([e1, e2, e3]), x, N, g

    def jacobian(self, y: np.ndarray, T: float, P: float) -> np.ndarray:
        """dF/dy at ``y`` (the cantera state must be the one ``residual`` set at ``y``)."""
        lam, N, x = self.split(y)
        ns, r, npn = len(self.species), self.r, self.n_phases
        Ws = self.Ws
        J = np.zeros((ns + len(self.solution_phases) + r, self.size))
        J[:ns, :r] = -Ws.T
        cols, sol = self._cols, self._sol
        J[:ns, r + npn:] = self._dmu_du(x, T, P)
        for row, ks in self._e2:
            J[ns + row, cols[ks]] = x[ks]
        top = ns + len(self.solution_phases)
        for i, ks in enumerate(self._members):
            J[top:, r + i] = Ws[:, ks] @ x[ks]
        J[top:, cols[sol]] = Ws[:, sol] * (N[self.pos[sol]] * x[sol])
        return J

    def _dmu_du(self, x: np.ndarray, T: float, P: float) -> np.ndarray:
        """d(mu_k/RT)/d(ln x_j) at fixed T, P: one for an ideal solution's own species; for a
        non-ideal phase, from the phase model (a central difference of its chemical potentials
        at fixed T and P, not of the equilibrium)."""
        if not self._rough:
            return self._dmu_ideal
        out = self._dmu_ideal.copy()
        h = 1e-6
        for k in self._rough:
            xs = []
            for sgn in (1.0, -1.0):
                xx = x.copy()
                xx[k] *= np.exp(sgn * h)
                xs.append(self.model.at_state(T, P, self.full_x(xx))[0][self.species])
            same = self.pos == self.pos[k]
            out[same, self.u_index[k]] = ((xs[0] - xs[1]) / (2 * h))[same]
        self.model.at_state(T, P, self.full_x(x))
        return out

    def partials(self, pt: Point) -> tuple[np.ndarray, np.ndarray]:
        """dF/dT and dF/dP at fixed y, at ``pt`` (which becomes the cantera state)."""
        T = pt.T
        self.model.at_state(pt.T, pt.P, self.full_x(pt.x))
        h, v = self.molar_enthalpies(), self.molar_volumes()
        ns = len(self.species)
        dT, dP = np.zeros(self.size), np.zeros(self.size)
        dT[:ns] = -h[self.species] / (R * T * T)
        dP[:ns] = v[self.species] / (R * T)
        return dT, dP

    def feed_partial(self, dn0: np.ndarray) -> np.ndarray:
        """dF/dv for a feed change dn0/dv (mol per unit of v)."""
        out = np.zeros(self.size)
        out[self.size - self.r:] = -(self.Wr @ dn0)
        return out

    def molar_enthalpies(self) -> np.ndarray:
        """Partial molar enthalpies, J/mol, of every species at the cantera state last set."""
        return np.concatenate([ph.partial_molar_enthalpies for ph in self.model.phases]) / 1000.0

    def molar_volumes(self) -> np.ndarray:
        return np.concatenate([ph.partial_molar_volumes for ph in self.model.phases]) / 1000.0

    def frozen_heat_capacity(self, N: np.ndarray) -> float:
        """J/K at fixed amounts: the phases' molar heat capacities at the state last set."""
        cps = np.array([self.model.phases[p].cp_mole / 1000.0 for p in self.phases])
        return float(cps @ N)

    # -------------------------------------------------------------- solving

    def solve(self, y0: np.ndarray, T: float, P: float, b: np.ndarray) -> Point:
        """Newton's method from ``y0``; raises NotFollowed when it does not converge."""
        y = y0.copy()
        scale = np.ones(self.size - self.r)
        scale = np.concatenate([scale, np.full(self.r, max(float(np.abs(b).max(initial=0.0)), 1e-300))])
        for _ in range(NEWTON_ITERATIONS):
            F, x, N, g = self.residual(y, T, P, b)
            if not np.all(np.isfinite(F)):
                raise NotFollowed("the equations are not finite here")
            if np.max(np.abs(F) / scale) < NEWTON_TOLERANCE:
                return Point(T, P, b, y, x, N, g)
            J = self.jacobian(y, T, P)
            try:
                step = np.linalg.solve(J, -F)
            except np.linalg.LinAlgError:
                raise NotFollowed("the equations of the present phases are singular here") from None
            du = step[self.r + self.n_phases:]
            big = float(np.abs(du).max(initial=0.0))
            if big > LN_STEP_LIMIT:
                step *= LN_STEP_LIMIT / big
            y = y + step
        raise NotFollowed("Newton's method did not converge on the present phases' equations")

    def tangent(self, pt: Point, dF: np.ndarray) -> np.ndarray:
        """dy/dtheta = -J^-1 dF/dtheta at ``pt`` (``dF`` evaluated there)."""
        self.model.at_state(pt.T, pt.P, self.full_x(pt.x))
        return np.linalg.solve(self.jacobian(pt.y, pt.T, pt.P), -dF)

    def state_derivatives(self, pt: Point, dy: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """From dy: the derivatives of each present species' amount and mole fraction, and of
        each present phase's amount."""
        dN = dy[self.r:self.r + self.n_phases]
        du = np.zeros(len(self.species))
        du[self.solution_species] = dy[self.r + self.n_phases:]
        dx = pt.x * du
        dn = pt.x * dN[self.pos] + pt.N[self.pos] * dx
        return dn, dx, dN
