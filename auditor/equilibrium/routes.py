"""The T,P minimisation of one case along fixed fallback routes.

No single solver call is trusted to succeed.  Routes are tried in a fixed order
(``RouteSolver.routes``): cantera's ``vcs`` and ``gibbs`` solvers from the feed, both from
an element-preserving interior estimate (a linear program), ``vcs`` from a shifted
estimate, then the element-potential minimiser (:mod:`auditor.equilibrium.minimiser`).
"""
from __future__ import annotations

import functools
import io
import sys
import time
import warnings
from dataclasses import dataclass

import numpy as np

from .. import settings
from ..errors import one_line
from .workspace import MixtureSlot, Workspace, _store, outside_range

ROUTE_OURS = "element-potential minimiser"
ROUTE_ONE_GAS = "cantera element-potential solver from the feed"
# route -> (cantera's MultiPhase.equilibrate solver, starting estimate); the first route
# only for a single ideal-gas phase (cantera's Solution.equilibrate)
ROUTE_PLAN = {
    ROUTE_ONE_GAS: ("element_potential", "feed"),
    "cantera vcs from the feed": ("vcs", "feed"),
    "cantera gibbs from the feed": ("gibbs", "feed"),
    "cantera vcs from an interior estimate": ("vcs", "interior"),
    "cantera gibbs from an interior estimate": ("gibbs", "interior"),
    "cantera vcs from a shifted estimate": ("vcs", "shifted"),
}
CANTERA_ROUTES = tuple(r for r in ROUTE_PLAN if r != ROUTE_ONE_GAS)
_NOT_HELD = ("the species whose thermo data cover T = {T:.2f} K cannot hold the feed's elements (the condensed "
             "phases that could are outside their data ranges)")


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
    also_incipient: tuple = ()      # other T (or P) where a phase fixed at a fraction of 0 is incipient


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
    says, per species, whether it is in a phase that may form from this feed.  At each
    temperature the condensed species whose thermo data do not cover it are set aside as
    well (``candidate_at``): outer solves on T meet different sets, each with its own Mixture.
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
        self._estimates: dict[tuple, np.ndarray | None] = {}
        self._at: tuple = (None, candidate)  # the last temperature asked and its candidate species
        self.log: list[str] = []      # what cantera's solver printed (summarised, never shown as is)
        self.details: list[str] = []  # cantera's exception texts, for the failure classifier only
        self.lower: SolvedState | None = None   # a uniqueness restart's state of lower G than the one certified
        self.deadline = time.perf_counter() + settings.MINIMISATION_WALL_SECONDS
        self.report_heat = True       # the certificate also gives the heat from the feed (not in sweeps)
        self.approach = None          # an ApproachPlan (approach.py): standard potentials shifted per T
        self._shift: tuple = (None, 0.0)

    def shift_at(self, T: float):
        """The shift of the standard potentials (RT) that holds the approached reactions short of
        equilibrium at ``T`` (``approach.potential_shift``); 0 when the case approaches nothing."""
        if self.approach is None:
            return 0.0
        if self._shift[0] != T:
            from .approach import potential_shift
            self._shift = (T, potential_shift(self.model, self.approach, T))
        return self._shift[1]

    def potentials(self, T: float, P: float, n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """``model.at_state`` with the approach's shift: the potentials whose zero affinities are
        the conditions this case's state meets."""
        mu, g = self.model.at_state(T, P, n)
        if self.approach is None:
            return mu, g
        d = self.shift_at(T)
        return mu + d, g + d

    def candidate_at(self, T: float) -> np.ndarray:
        """The species that may form at ``T``: ``candidate`` less the condensed species whose
        thermo data do not cover ``T`` (``workspace.outside_range``)."""
        if self._at[0] != T:
            out = outside_range(self.arrays, T)
            self._at = (T, self.candidate if out is None else self.candidate & ~out)
        return self._at[1]

    def slot_at(self, T: float) -> MixtureSlot:
        """The Mixture of the phases that may form at ``T`` (one per set, kept by the workspace)."""
        return self.workspace.mixture(self.candidate_at(T))

    def _ours(self, T: float, P: float) -> SolvedState:
        from .minimiser import MinimiserInputs, minimise_gibbs
        a = self.arrays
        g = self.model.g_RT(T, P) + self.shift_at(T)
        idx = np.flatnonzero(self.candidate_at(T) & a.usable_species)
        if idx.size == 0:
            return SolvedState(np.zeros(self.system.n_species), T, P, "element-potential minimiser (auditor.minimiser)",
                               False, _NOT_HELD.format(T=T))
        phases_used = sorted(set(a.phase_of[idx]))
        remap = {p: i for i, p in enumerate(phases_used)}
        res = minimise_gibbs(MinimiserInputs.from_arrays(A=a.W[:, idx], g=g[idx],
                                             phase_of=np.array([remap[p] for p in a.phase_of[idx]]),
                                             solution=a.solution[phases_used], b=a.W @ self.n0))
        n = np.zeros(self.system.n_species)
        n[idx] = res.moles
        # the label is part of the JSON output (``solver``): kept as it was before the module moved
        return SolvedState(n, T, P, "element-potential minimiser (auditor.minimiser)", bool(res.converged), res.message)

    def _failure(self, exc: Exception, solver: str) -> str:
        """What a cantera failure means, in words; cantera's own text stays inside (kept in
        ``details`` for the failure classifier)."""
        from .diagnosis import solver_words
        raw = one_line(str(exc).replace("*", " "), 300)     # cantera frames its text in asterisks
        if raw not in self.details:
            self.details.append(raw)
        return solver_words(raw, solver)

    def _one_gas(self, T: float, P: float, start: np.ndarray) -> SolvedState:
        """A single ideal-gas phase: cantera's element-potential solver (``Solution.equilibrate``,
        several times faster than the multiphase solvers).  It returns mole fractions; the
        amount follows from the conserved quantities, ``N = argmin |W (N x) - W n0|``."""
        idx = np.flatnonzero(self.slot_at(T).in_mixture)
        gas = self.model.phases[self.arrays.phase_of[idx[0]]]
        n = np.zeros(self.system.n_species)
        try:
            x0 = np.maximum(start[idx], 0.0)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                gas.TPX = T, P, x0 / x0.sum()
                gas.equilibrate("TP", solver="element_potential", rtol=1e-14, max_steps=2000, max_iter=200)
        except Exception as exc:
            return SolvedState(n, T, P, "cantera element_potential", False, self._failure(exc, "element_potential"))
        w = self.arrays.W[:, idx] @ gas.X
        b = self.arrays.W @ self.n0
        n[idx] = gas.X * (float(w @ b) / max(float(w @ w), 1e-300))
        return SolvedState(n, T, P, "cantera element_potential", True)

    def _cantera(self, T: float, P: float, start: np.ndarray, solver: str = "vcs") -> SolvedState:
        slot = self.slot_at(T)
        usable_mask = slot.in_mixture
        if slot.mixture is None:
            return SolvedState(np.zeros(self.system.n_species), T, P, f"cantera {solver}", False,
                               _NOT_HELD.format(T=T) if (self.candidate & self.arrays.usable_species).any()
                               else "no phase of the system can form from this feed")
        if slot.whole:
            start = start.copy()
        else:
            if start[~usable_mask].any():
                # the start holds species set aside at this T (a feed of ice above its melting point)
                start = self._start_within(T, start)
                if start is None:
                    return SolvedState(np.zeros(self.system.n_species), T, P, f"cantera {solver}", False,
                                       _NOT_HELD.format(T=T))
            start = start[usable_mask]        # a copy
        # trace seeds: every uncharged species that may form (seeded species save the solver
        # iterations; a charged seed would break electroneutrality), then any phase still empty
        # (zero-seeded phases break the solver)
        total = max(float(start.sum()), 1e-300)
        seeds = slot.neutral_seeds
        empty = seeds[start[seeds] <= 0]
        if empty.size:
            start[empty] = 1e-12 * total
        for idx in slot.seeds:
            if start[idx].sum() <= 0:
                start[idx] = 1e-12 * total / idx.size
        mix = slot.mixture
        mix.T = T
        mix.P = P
        mix.species_moles = start
        log = io.StringIO()
        try:
            # cantera's solver log goes to sys.stdout (its logger writes there); keep it out of the
            # tool's output (and JSON): sys.stdout swapped as contextlib.redirect_stdout does, inline
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                stdout, sys.stdout = sys.stdout, log
                try:
                    mix.equilibrate("TP", solver=solver, max_steps=2000, max_iter=200, estimate_equil=0)
                finally:
                    sys.stdout = stdout
            converged, msg = True, ""
        except Exception as exc:
            converged, msg = False, self._failure(exc, solver)
        if log.tell():
            for line in log.getvalue().splitlines():
                if line.strip() and line.strip() not in self.log:
                    self.log.append(line.strip())
        if slot.whole:
            n = mix.species_moles         # a new array over every species
        else:
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
        if self.approach is not None:     # cantera's solvers take no shifted potentials
            return (ROUTE_OURS,)
        # the rest depends on the workspace and the candidate species only: kept per candidate set
        key = self.candidate.tobytes()
        got = self.workspace.routes.get(key)
        if got is None:
            if not self.complete or not all(self.model.usable) or not (self.candidate & self.arrays.usable_species).any():
                got = (ROUTE_OURS,)
            else:
                one_gas = self.workspace.mixture(self.candidate).one_gas
                got = ((ROUTE_ONE_GAS,) if one_gas else ()) + CANTERA_ROUTES + ((ROUTE_OURS,) if self.arrays.ideal else ())
            _store(self.workspace.routes, key, got)
        return got

    def start_at(self, first: int) -> None:
        """Later solves begin at route ``first`` (routes before it gave a state that failed its
        certificate); forget what earlier passes recorded."""
        self.first = first
        self.failures = {}

    def _estimate(self, kind: str, T: float) -> np.ndarray | None:
        """Element-preserving starting estimates (same conserved quantities as the feed), kept
        per solver and set of species that may form: ``interior`` maximises the smallest amount
        of any candidate species (a linear program), ``shifted`` moves the feed along the
        reaction directions."""
        mask = self.candidate_at(T)
        key = (kind, mask.tobytes()) if kind == "interior" else (kind, b"")
        if key not in self._estimates:
            if kind == "interior":
                self._estimates[key] = interior_estimate(self.arrays.W, self.n0, mask & self.slot_at(T).in_mixture)
            else:
                self._estimates[key] = perturbed_start(self.n0, *self.arrays.trial_directions[0]) \
                    if self.arrays.directions.shape[0] else None
        return self._estimates[key]

    def _start_within(self, T: float, start: np.ndarray) -> np.ndarray | None:
        """``start`` with the amounts of species set aside at ``T`` moved to a species that
        may form and holds the same conserved quantities (ice to liquid water or steam); the
        interior estimate when some have none; None when no estimate exists."""
        a, mask = self.arrays, self.candidate_at(T) & self.slot_at(T).in_mixture
        out = start.astype(float)
        for k in np.flatnonzero((out > 0) & ~mask):
            same = np.flatnonzero(mask & (np.abs(a.W - a.W[:, [k]]) <= 1e-12).all(axis=0))
            if not same.size:
                return self._estimate("interior", T)
            out[same[0]] += out[k]
            out[k] = 0.0
        return out

    def _run(self, route: str, T: float, P: float, start: np.ndarray | None) -> SolvedState:
        if route == ROUTE_OURS:
            sol = self._ours(T, P)
        else:
            method, origin = ROUTE_PLAN[route]
            if start is None:
                start = self.n0 if origin == "feed" else self._estimate(origin, T)
                if start is None:
                    return SolvedState(np.zeros(self.system.n_species), T, P, f"cantera {method}", False,
                                       "no such starting estimate for this feed", route=route)
            sol = self._one_gas(T, P, start) if route == ROUTE_ONE_GAS else self._cantera(T, P, start, method)
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
