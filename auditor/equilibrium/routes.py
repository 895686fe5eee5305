"""The T,P minimisation of one case along fixed fallback routes.

No single solver call is trusted to succeed.  Routes are tried in a fixed order
(``RouteSolver.routes``): cantera's ``vcs`` and ``gibbs`` solvers from the feed, both from
an element-preserving interior estimate (a linear program), ``vcs`` from a shifted
estimate, then the element-potential minimiser (:mod:`auditor.equilibrium.minimiser`).
"""
from __future__ import annotations

import contextlib
import functools
import io
import time
import warnings
from dataclasses import dataclass

import numpy as np

from .. import settings
from ..errors import one_line
from .workspace import MixtureSlot, Workspace

ROUTE_OURS = "element-potential minimiser"
# route -> (cantera's MultiPhase.equilibrate solver, starting estimate)
ROUTE_PLAN = {
    "cantera vcs from the feed": ("vcs", "feed"),
    "cantera gibbs from the feed": ("gibbs", "feed"),
    "cantera vcs from an interior estimate": ("vcs", "interior"),
    "cantera gibbs from an interior estimate": ("gibbs", "interior"),
    "cantera vcs from a shifted estimate": ("vcs", "shifted"),
}
CANTERA_ROUTES = tuple(ROUTE_PLAN)


class SolveError(Exception):
    """A solve that cannot go on (wall-clock bound, no bracket, an unhandled specification)."""


@dataclass
class SolvedState:
    """A state a solve reached: amounts, T, P, and how it was reached."""

    n: np.ndarray
    T: float
    P: float
    solver: str
    converged: bool
    message: str = ""
    sides: tuple | None = None      # the two end states when the solve stopped on a univariant transition
    route: str = ""                 # which route of ``RouteSolver.routes`` produced it


def interior_estimate(W: np.ndarray, n0: np.ndarray, usable: np.ndarray) -> np.ndarray | None:
    """Amounts with the feed's conserved quantities, every usable species as far from zero as
    possible: maximise t subject to W n = W n0, n_k >= t (k usable), n_k = 0 otherwise
    (a linear program; scipy's HiGHS).  None when no such point exists."""
    from scipy.optimize import linprog
    idx = np.flatnonzero(usable)
    if idx.size == 0:
        return None
    k = idx.size
    total = float(n0.sum())
    A_eq = np.hstack((W[:, idx], np.zeros((W.shape[0], 1))))
    A_ub = np.hstack((-np.eye(k), np.ones((k, 1))))          # t - n_k <= 0
    c = np.zeros(k + 1)
    c[-1] = -1.0
    res = linprog(c, A_ub=A_ub, b_ub=np.zeros(k), A_eq=A_eq, b_eq=W @ n0,
                  bounds=[(0, None)] * k + [(0, total)], method="highs")
    if res.status != 0 or res.x[-1] <= 0:
        return None
    n = np.zeros_like(n0, dtype=float)
    n[idx] = res.x[:k]
    return n


def _moved(start: np.ndarray, d: np.ndarray) -> np.ndarray | None:
    """``start + t d`` with ``t`` half of the largest step that keeps every amount non-negative
    (or 30 % of the total amount when no amount decreases); None when no step is possible."""
    neg = d < 0
    step = 0.5 * float((start[neg] / -d[neg]).min()) if neg.any() else \
        float(start.sum()) * 0.3 / max(float(d.sum()), 1e-300)
    return start + step * d if step > 0 else None


def perturbed_start(n: np.ndarray, combined: np.ndarray, V: np.ndarray) -> np.ndarray | None:
    """A different composition with the same conserved quantities: ``n`` moved along ``d``, a
    fixed signed sum of the reaction directions ``V`` (``CaseArrays.trial_directions``);
    when amounts at zero block it, along the rows of ``V`` one by one.  Deterministic, so
    the audit is reproducible."""
    best = _moved(n, combined)
    if best is None:
        best = _moved(n, -combined)     # the other sense when an amount at zero blocks this one
    if best is None:
        # amounts at zero block the combined direction: move along the directions one by one
        best = n.astype(float)
        for v in V:
            for d in (v, -v):
                nxt = _moved(best, d)
                if nxt is not None:
                    best = nxt
                    break
        if np.array_equal(best, n):
            return None
    return np.where(best > 0, best, 0.0)


class RouteSolver:
    """T,P minimisation of one case from one feed, reusable for outer solves.

    ``workspace`` gives the cantera phases and arrays; ``n0`` is the feed; ``candidate``
    says, per species, whether it is in a phase that may form.
    """

    def __init__(self, workspace: Workspace, n0: np.ndarray, candidate: np.ndarray):
        self.workspace = workspace
        self.model = workspace.model
        self.system = workspace.system
        self.arrays = workspace.arrays
        self.complete = workspace.analysis.complete
        self.n0 = n0
        self.candidate = candidate
        self.calls = 0
        self.first = 0                # index into ``routes`` where solves begin
        self.failures: dict[str, str] = {}   # route -> its first failure in this pass
        self.attempts: tuple = ()     # (route, outcome) of the passes before the current one
        self._estimates: dict[str, np.ndarray | None] = {}
        self.log: list[str] = []      # what cantera's solver printed (summarised, never shown as is)
        self.details: list[str] = []  # cantera's exception texts, for the failure classifier only
        self.lower: SolvedState | None = None   # a uniqueness restart's state of lower G than the one certified
        self.deadline = time.perf_counter() + settings.MINIMISATION_WALL_SECONDS
        self.slot: MixtureSlot = workspace.mixture(candidate)

    def _ours(self, T: float, P: float) -> SolvedState:
        from .minimiser import MinimiserInputs, minimise_gibbs
        a = self.arrays
        g = self.model.g_RT(T, P)
        idx = np.flatnonzero(self.candidate & a.usable_species)
        phases_used = sorted(set(a.phase_of[idx]))
        remap = {p: i for i, p in enumerate(phases_used)}
        res = minimise_gibbs(MinimiserInputs.from_arrays(A=a.W[:, idx], g=g[idx],
                                             phase_of=np.array([remap[p] for p in a.phase_of[idx]]),
                                             solution=a.solution[phases_used], b=a.W @ self.n0))
        n = np.zeros(self.system.n_species)
        n[idx] = res.moles
        # the label is part of the JSON output (``solver``): kept as it was before the module moved
        return SolvedState(n, T, P, "element-potential minimiser (auditor.minimiser)", bool(res.converged), res.message)

    def _cantera(self, T: float, P: float, start: np.ndarray, solver: str = "vcs") -> SolvedState:
        usable_mask = self.slot.in_mixture
        if self.slot.mixture is None:
            return SolvedState(np.zeros(self.system.n_species), T, P, f"cantera {solver}", False,
                               "no phase of the system can form from this feed")
        start = start[usable_mask]        # a copy
        total = None
        # a phase that may appear needs a trace seed: zero-seeded phases break the solver
        for idx in self.slot.seeds:
            if start[idx].sum() <= 0:
                if total is None:
                    total = max(float(start[self.candidate[usable_mask]].sum()), 1e-300)
                start[idx] = 1e-12 * total / idx.size
        mix = self.slot.mixture
        mix.T = T
        mix.P = P
        mix.species_moles = start
        log = io.StringIO()
        try:
            # cantera's solver log goes to stdout; keep it out of the tool's output (and JSON)
            with warnings.catch_warnings(), contextlib.redirect_stdout(log):
                warnings.simplefilter("ignore")
                mix.equilibrate("TP", solver=solver, max_steps=2000, max_iter=200, estimate_equil=0)
            converged, msg = True, ""
        except Exception as exc:
            # cantera's own text stays inside (the failure classifier reads it); the route
            # history gets what it means
            from .diagnosis import solver_words
            raw = one_line(str(exc).replace("*", " "), 300)
            if raw not in self.details:
                self.details.append(raw)
            converged, msg = False, solver_words(raw, solver)
        for line in log.getvalue().splitlines():
            if line.strip() and line.strip() not in self.log:
                self.log.append(line.strip())
        n = np.zeros(self.system.n_species)
        n[usable_mask] = mix.species_moles
        return SolvedState(n, T, P, f"cantera {solver}", converged, msg)

    # ---- routes: fixed, deterministic order; each tried only when the ones before it fail
    @functools.cached_property
    def routes(self) -> tuple[str, ...]:
        """The routes this case may take, in order.  cantera's two multiphase solvers from the
        feed, then from element-preserving starting estimates, then the project's own minimiser
        (ideal phases only: it treats every phase as ideal).  An incomplete reaction list has
        one route: only the own minimiser holds the extra conserved quantities."""
        if not self.complete or not all(self.model.usable) or self.slot.mixture is None:
            return (ROUTE_OURS,)
        return CANTERA_ROUTES + ((ROUTE_OURS,) if self.arrays.ideal else ())

    def start_at(self, first: int) -> None:
        """Later solves begin at route ``first`` (routes before it gave a state that failed its
        certificate); forget what earlier passes recorded."""
        self.first = first
        self.failures = {}

    def _estimate(self, kind: str) -> np.ndarray | None:
        """Element-preserving starting estimates (same conserved quantities as the feed), kept
        per solver: ``interior`` maximises the smallest amount of any candidate species (a
        linear program), ``shifted`` moves the feed along the reaction directions."""
        if kind not in self._estimates:
            if kind == "interior":
                self._estimates[kind] = interior_estimate(self.arrays.W, self.n0, self.candidate & self.slot.in_mixture)
            else:
                self._estimates[kind] = perturbed_start(self.n0, *self.arrays.trial_directions[0]) \
                    if self.arrays.directions.shape[0] else None
        return self._estimates[kind]

    def _run(self, route: str, T: float, P: float, start: np.ndarray | None) -> SolvedState:
        if route == ROUTE_OURS:
            sol = self._ours(T, P)
        else:
            method, origin = ROUTE_PLAN[route]
            if start is None:
                start = self.n0 if origin == "feed" else self._estimate(origin)
                if start is None:
                    return SolvedState(np.zeros(self.system.n_species), T, P, f"cantera {method}", False,
                                       "no such starting estimate for this feed", route=route)
            sol = self._cantera(T, P, start, method)
        sol.route = route
        # a state that breaks a balance is caught by the certificate, which sends the
        # confirmation on to the next route; here only what no certificate can read
        if sol.converged and not np.isfinite(sol.n).all():
            sol.converged, sol.message = False, "amounts that are not finite numbers"
        return sol

    def solve(self, T: float, P: float, start: np.ndarray | None = None) -> SolvedState:
        """The first route from ``self.first`` on that converges; when none does, the first
        failed state (never None: a state that did not converge, saying why).

        ``start``, when given, is a uniqueness restart: it replaces the routes' own starting
        estimates, so each of cantera's solvers among the routes is tried once from it (the
        element-potential minimiser takes no starting estimate and is not restarted), and
        its failures are not route failures (``self.failures`` is left alone)."""
        failed = None
        tried: set[str] = set()
        for route in self.routes[self.first:]:
            # the wall-clock bound is checked between solves (a running cantera call cannot be stopped)
            if time.perf_counter() > self.deadline:
                raise SolveError(f"the minimisation exceeded its wall-clock bound of "
                                 f"{settings.MINIMISATION_WALL_SECONDS:g} s (settings.MINIMISATION_WALL_SECONDS)")
            if start is not None:
                method = ROUTE_PLAN[route][0] if route in ROUTE_PLAN else None
                if method is None or method in tried:
                    continue                  # a restart keeps its own starting estimate
                tried.add(method)
            self.calls += 1
            sol = self._run(route, T, P, start)
            if sol.converged:
                return sol
            if start is None:
                self.failures.setdefault(route, sol.message or "did not converge")
            failed = failed or sol
        if failed is None:
            why = "no route that takes a starting estimate is left" if start is not None else "no route is left"
            failed = SolvedState(np.zeros(self.system.n_species), T, P, "", False, why)
        return failed
