"""Gibbs-energy minimisation at the specified state, and a certificate of optimality.

Method: minimise G over the phase-species subject to the conserved quantities
(W. R. Smith and R. W. Missen, *Chemical Reaction Equilibrium Analysis*, 1982, ch. 6-7),
with cantera's multiphase solver (``vcs``; D. G. Goodwin et al., Cantera, www.cantera.org)
when the reaction list is complete, and with the element-potential minimiser of
:mod:`auditor.minimiser` holding the extra conserved quantities fixed when it is not.
Specifications other than temperature and pressure are met by a bracketed scalar solve
(``scipy.optimize.brentq``) on T or P around the T,P minimisation; where the answer sits on
a univariant transition (the residual jumps: ice melting, a solid decomposing) the state
is solved there directly, amounts and T (or P) together (``_refine_transition``).

No single solver call is trusted to succeed.  Routes are tried in a fixed order
(``_Solver.routes``): cantera's ``vcs`` and ``gibbs`` solvers from the feed, both from an
element-preserving interior estimate (a linear program), ``vcs`` from a shifted estimate,
then the element-potential minimiser; the first state whose certificate holds is kept and
its route reported, and only when every route fails is the case not confirmed.

The answer is not trusted: a certificate is checked instead.
* balance: ``|W n - W n0| / |W n0|`` for every conserved quantity;
* element potentials ``lambda`` fitted to ``mu_k / RT = A_k . lambda`` over present
  species, and the largest residual;
* the largest affinity, in RT, of any independent reaction among present species;
* the driving force to form each absent phase, maximised over the element potentials
  that the present species leave undetermined (rank-deficient present formula matrix,
  elements of zero abundance), so that non-uniqueness raises no false alarm;
* uniqueness (``unique``): proved for ideal phases from convexity, the absent phases'
  driving forces and the rank of the present phases' conserved-quantity vectors, and
  checked by restarting cantera from other starting estimates (``_uniqueness``);
* present phases against those assumed; temperature inside each present species' data;
* ``ln K`` of every dependent reaction equal to the combination of the independent ones;
* for structurally square cases, the Jacobian of the specification audit's equations
  at the solution has full numerical rank.
"""
from __future__ import annotations

import contextlib
import functools
import io
import math
import time
import warnings
from dataclasses import dataclass, field, replace

import numpy as np

from . import settings
from .case import Case, feed_moles
from .cache import by_identity, remember
from .findings import Finding
from .phase_rule import PhaseRuleCount
from .stoichiometry import ReactionAnalysis, basis_within
from .structure import SpecificationAudit
from .system import CONDENSED_DATABASE, GAS_DATABASE, ChemicalSystem, cantera_phase, packaged_species

R = 8.314462618  # J/(mol K), CODATA 2018 (exact since the 2019 SI)
RESTARTS = 2     # cantera restarts from other starting estimates for the uniqueness check


# ------------------------------------------------------------------ densities

@functools.lru_cache(maxsize=1)
def density_table() -> dict[str, tuple[float, str]]:
    """Densities (kg/m3) of condensed species of the packaged database, with their source."""
    import yaml
    from importlib import resources
    data = yaml.safe_load((resources.files("auditor") / "data" / "densities.yaml").read_text(encoding="utf-8"))
    return {name: (float(entry["density"]), str(entry["source"])) for name, entry in data["densities"].items()}


DEFAULT_DENSITY = 2000.0  # kg/m3: a typical inorganic solid; only the P*V term uses it


# ------------------------------------------------------------------ results

@dataclass(frozen=True)
class PhaseState:
    name: str
    moles: float
    mole_fractions: tuple[tuple[str, float], ...]


@dataclass(frozen=True)
class EquilibriumCheck:
    solved: bool
    converged: bool
    solver: str
    temperature_K: float | None
    pressure_Pa: float | None
    phases: tuple[PhaseState, ...]
    phases_present: tuple[str, ...]
    max_affinity_RT: float | None
    element_balance_error: float | None
    potential_residual_RT: float | None
    absent_phase_driving_force: tuple[tuple[str, float], ...]   # phase -> min driving force, RT
    unique: bool | None
    starts: int
    lnK_additivity_error: float | None
    jacobian_rcond: float | None
    assumed_densities: tuple[tuple[str, float, str], ...]
    findings: tuple[Finding, ...]
    confirmed: bool
    seconds: float = 0.0
    element_potentials: tuple[tuple[str, float], ...] = ()
    unique_basis: str = ""                  # how ``unique`` was decided
    phase_amount_rcond: float | None = None  # present phases' conserved-quantity vectors: s_min/s_max
    route: str = ""                         # the solve route whose state the certificate accepted
    attempts: tuple[tuple[str, str], ...] = ()   # (route, outcome) in the order tried

    def document(self) -> dict:
        return {
            "converged": self.converged,
            "temperature_K": self.temperature_K,
            "pressure_Pa": self.pressure_Pa,
            "phases_present": list(self.phases_present),
            "phases": [{"name": p.name, "moles": p.moles, "mole_fractions": dict(p.mole_fractions)} for p in self.phases],
            "max_affinity_RT": self.max_affinity_RT,
            "element_balance_error": self.element_balance_error,
            "unique": self.unique,
            # additive fields
            "solved": self.solved,
            "confirmed": self.confirmed,
            "solver": self.solver,
            "starts": self.starts,
            "unique_basis": self.unique_basis,
            "phase_amount_rcond": self.phase_amount_rcond,
            "potential_residual_RT": self.potential_residual_RT,
            # null: the phase can never form (it needs an element the feed lacks)
            "absent_phase_driving_force_RT": {k: (v if math.isfinite(v) else None)
                                              for k, v in self.absent_phase_driving_force},
            "lnK_additivity_error": self.lnK_additivity_error,
            "jacobian_rcond": self.jacobian_rcond,
            "element_potentials_RT": dict(self.element_potentials),
            "assumed_densities": [{"species": s, "density_kg_m3": d, "source": src}
                                  for s, d, src in self.assumed_densities],
            "route": self.route or None,
            "attempts": [{"route": r, "outcome": o} for r, o in self.attempts],
        }

    def summary_lines(self) -> list[str]:
        if not self.solved:
            msgs = [f.message for f in self.findings if f.topic == "equilibrium"][:3]
            return msgs or ["Gibbs minimisation: not solved"]
        out = [f"Gibbs minimisation ({self.solver}) at T = {self.temperature_K:.2f} K, P = {self.pressure_Pa:.6g} Pa: "
               + ("CONFIRMED" if self.confirmed else "NOT CONFIRMED")]
        for p in self.phases:
            if p.moles <= 0:
                continue
            major = sorted(p.mole_fractions, key=lambda kv: -kv[1])[:8]
            out.append(f"  {p.name}: {p.moles:.6g} mol; " + ", ".join(f"{k} {v:.4g}" for k, v in major))
        absent = ", ".join(f"{n} {d:+.3g}" if math.isfinite(d) else f"{n} cannot form (needs an element the feed lacks)"
                           for n, d in self.absent_phase_driving_force)
        out.append(f"  certificate: balance error {self.element_balance_error:.2e}, max affinity "
                   f"{_fmt(self.max_affinity_RT)} RT, potential residual {_fmt(self.potential_residual_RT)} RT, "
                   f"unique {self.unique} ({self.unique_basis})")
        if absent:
            out.append(f"  driving force to form absent phases (RT, must be >= 0): {absent}")
        if self.jacobian_rcond is not None:
            out.append(f"  Jacobian smallest/largest singular value: {self.jacobian_rcond:.3e}")
        if len(self.attempts) > 1:
            out.append(f"  solve route: {self.route or 'none certified'}, after " + "; ".join(
                f"{r} {o}" for r, o in self.attempts if o != "certified"))
        return out


def _fmt(x):
    return "n/a" if x is None else f"{x:.2e}"


# ------------------------------------------------------------------ building cantera phases

def _plain(obj):
    """cantera's input data as plain Python containers (for YAML output)."""
    from collections.abc import Mapping
    if isinstance(obj, Mapping):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if isinstance(obj, (np.floating, np.integer)):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return [_plain(v) for v in obj.tolist()]
    return obj


class _Model:
    """Cantera objects for a system, built once and reused for every state."""

    def __init__(self, system: ChemicalSystem):
        import cantera as ct
        self.ct = ct
        self.system = system
        self.assumed: list[tuple[str, float, str]] = []
        self.problems: list[str] = []
        self.phases: list = []          # cantera phases, in system order
        self.usable: list[bool] = []
        if system.source == "packaged":
            self._packaged()
        else:
            self._mechanism()
        self.density_notes = tuple(Finding("note", "data", f"density of {label} taken as {rho:g} kg/m3 ({src})", (label,))
                                   for label, rho, src in self.assumed)

    def _species_entry(self, sp_def, condensed: bool) -> dict:
        base = packaged_species(CONDENSED_DATABASE if condensed else GAS_DATABASE)[sp_def.name]
        entry = _plain(base.input_data)
        if condensed:
            if sp_def.name in density_table():
                rho, src = density_table()[sp_def.name]
            else:
                rho, src = DEFAULT_DENSITY, "default (no tabulated value; only the P*V term uses it)"
            self.assumed.append((sp_def.label, rho, src))
            entry["equation-of-state"] = {"model": "constant-volume", "density": f"{rho} kg/m^3"}
        return entry

    def _packaged(self):
        import yaml
        ct = self.ct
        for ph in self.system.phases:
            sps = [s for s in self.system.species if s.phase == ph.name]
            entries = [self._species_entry(s, not ph.is_gas) for s in sps]
            thermo = {"ideal-gas": "ideal-gas", "fixed-stoichiometry": "fixed-stoichiometry"}.get(ph.model, "ideal-condensed")
            phase = {"name": ph.name, "thermo": thermo, "species": [e["name"] for e in entries],
                     "state": {"T": 300.0, "P": 101325.0}}
            if thermo == "ideal-condensed":
                phase["standard-concentration-basis"] = "unity"
            text = yaml.safe_dump({"phases": [phase], "species": entries}, sort_keys=False)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                self.phases.append(ct.Solution(yaml=text, name=ph.name))
            self.usable.append(True)

    def _mechanism(self):
        ct = self.ct
        for ph in self.system.phases:
            sol, _ = cantera_phase(self.system.source, ph.name)   # the object the system stage built
            names = [s.name for s in self.system.species if s.phase == ph.name]
            ok = sol.thermo_model not in ("pure-fluid", "liquid-water-IAPWS95", "ideal-surface", "edge",
                                          "coverage-dependent-surface", "electron-cloud")
            if ok and names != list(sol.species_names):
                # the same thermo model over the chosen species (a real-gas model keeps its own
                # equation-of-state data, which each species carries)
                try:
                    keep = [sol.species(n) for n in names]
                    with warnings.catch_warnings():
                        warnings.simplefilter("ignore")
                        sol = ct.Solution(thermo=sol.thermo_model, species=keep)
                except Exception as exc:
                    ok = False
                    self.problems.append(f"phase {ph.name}: cantera cannot build its {sol.thermo_model} model over the "
                                         f"chosen species ({' '.join(str(exc).split())[:200]}); the phase is left out "
                                         "of the minimisation rather than treated as ideal")
            if not ok and sol.thermo_model in ("pure-fluid", "liquid-water-IAPWS95"):
                self.problems.append(f"phase {ph.name} ({sol.thermo_model}) cannot enter a multiphase minimisation; "
                                     "model the vapour and the liquid as two phases")
            elif not ok and "surface" in sol.thermo_model or sol.thermo_model == "edge":
                self.problems.append(f"phase {ph.name} ({sol.thermo_model}) is an interface and is left out of the minimisation")
            self.phases.append(sol)
            self.usable.append(ok)

    # ---- thermodynamics at a state
    def set_state(self, T: float, P: float, n: np.ndarray):
        off = 0
        for ph in self.phases:
            k = ph.n_species
            x = n[off:off + k]
            tot = x.sum()
            if tot > 0:
                ph.TPX = T, P, x / tot
            else:
                ph.TP = T, P
            off += k

    def g_RT(self, T: float, P: float) -> np.ndarray:
        """Standard chemical potentials mu°_k(T, P)/RT (pressure term included)."""
        out = []
        for ph in self.phases:
            ph.TP = T, P
            out.append(ph.standard_gibbs_RT)
        return np.concatenate(out)

    def at_state(self, T: float, P: float, n: np.ndarray) -> tuple[np.ndarray, ...]:
        """At amounts n, T, P, from one setting of the state: chemical potentials mu_k/RT,
        standard ones mu°_k(T, P)/RT, and the latter's derivatives d(mu°/RT)/d ln T = -H°/RT
        (Gibbs-Helmholtz) and d(mu°/RT)/d ln P = P V/RT."""
        self.set_state(T, P, n)
        RT = R * 1000.0 * T
        phases = self.phases
        mu = np.concatenate([ph.chemical_potentials for ph in phases]) / RT
        g = np.concatenate([ph.standard_gibbs_RT for ph in phases])
        dT = -np.concatenate([ph.standard_enthalpies_RT for ph in phases])
        dP = np.concatenate([ph.partial_molar_volumes for ph in phases]) * (P / RT)
        return mu, g, dT, dP

    def enthalpy(self, T: float, P: float, n: np.ndarray) -> float:
        """Total enthalpy, J, of amounts n (mol) at T, P."""
        self.set_state(T, P, n)
        h = np.concatenate([ph.partial_molar_enthalpies for ph in self.phases]) / 1000.0  # J/mol
        return float(h @ n)


@by_identity
def _model_cached(system: ChemicalSystem) -> _Model:
    return _Model(system)


# ------------------------------------------------------------------ minimisation

@dataclass
class _Solution:
    n: np.ndarray
    T: float
    P: float
    solver: str
    converged: bool
    message: str = ""
    sides: tuple | None = None      # the two end states when the solve stopped on a univariant transition
    route: str = ""                 # which route of ``_Solver.routes`` produced it


@dataclass
class _Static:
    """What a case's solves and certificates share and do not change: arrays, the cantera
    Mixture, what each set of present species needs (built once per system and reaction
    analysis)."""

    W: np.ndarray                   # conserved quantities x species
    phase_of: np.ndarray            # phase index of each species
    solution: np.ndarray            # per phase: more than one species
    directions: np.ndarray          # a complete independent reaction set, as rows
    usable_species: np.ndarray      # species of phases that can enter a minimisation
    element_rows: np.ndarray        # formula-matrix rows of the elements (not charge)
    membership: np.ndarray          # species x phases, 1.0 where the species belongs to the phase
    phase_species: tuple            # species indices of each phase
    phase_labels: tuple             # species labels of each phase
    trial_directions: tuple         # per restart: a signed sum of the directions, and the signed rows
    lnk_rows: np.ndarray            # stoichiometry of every listed reaction (ln K = -rows @ g)
    lnk_combination: np.ndarray     # dependent x listed: the combination, minus one at its own index
    lnk_dependent: np.ndarray       # indices of the dependent reactions
    t_min: np.ndarray
    t_max: np.ndarray
    t_low: float                    # every species' data are valid from t_low to t_high
    t_high: float
    ideal: bool                     # every usable phase has an ideal model (G convex)
    potential_names: tuple
    mixtures: dict = field(default_factory=dict)   # candidate mask -> (Mixture, seeds, in_mixture)
    present_sets: dict = field(default_factory=dict)  # present species -> _PresentSet
    absent_groups: dict = field(default_factory=dict)  # present phases, candidates -> absent phases' species


IDEAL_MODELS = ("ideal-gas", "fixed-stoichiometry", "ideal-condensed", "ideal-solid-solution")


@by_identity
def _static_for(system: ChemicalSystem, analysis: ReactionAnalysis) -> _Static:
    model = _model_cached(system)
    ns, n_phases = system.n_species, len(system.phases)
    index = {p.name: i for i, p in enumerate(system.phases)}
    phase_of = np.array([index[s.phase] for s in system.species], dtype=int)
    membership = np.zeros((ns, n_phases))
    membership[np.arange(ns), phase_of] = 1.0
    directions = _direction_matrix([dict(r.stoich) for r in analysis.derived_basis], ns)
    trials = []
    for trial in range(RESTARTS):
        signs = np.where(np.arange(directions.shape[0]) % 2 == trial % 2, 1.0, -1.0)
        trials.append((signs @ directions, signs[:, None] * directions))
    lnk_rows = _direction_matrix([dict(r.stoich) for r in analysis.reactions], ns)
    comb = np.zeros((len(analysis.dependent), len(analysis.reactions)))
    for i, d in enumerate(analysis.dependent):
        comb[i, d.index] = -1.0
        for j, c in d.combination:
            comb[i, j] += float(c)
    elements = [i for i, e in enumerate(system.elements) if e != "charge"]
    return _Static(
        W=_direction_matrix([dict(c.vector) for c in analysis.conserved], ns),
        phase_of=phase_of,
        solution=np.array([len(p.species) > 1 for p in system.phases]),
        directions=directions,
        usable_species=np.concatenate([[ok] * ph.n_species for ph, ok in zip(model.phases, model.usable)]),
        element_rows=np.array([[float(x) for x in system.formula_matrix[i]] for i in elements]).reshape(len(elements), ns),
        membership=membership,
        phase_species=tuple(np.flatnonzero(phase_of == p) for p in range(n_phases)),
        phase_labels=tuple(tuple(system.labels[k] for k in np.flatnonzero(phase_of == p)) for p in range(n_phases)),
        trial_directions=tuple(trials),
        lnk_rows=lnk_rows,
        lnk_combination=comb,
        lnk_dependent=np.array([d.index for d in analysis.dependent], dtype=int),
        t_min=np.array([s.t_min for s in system.species]),
        t_max=np.array([s.t_max for s in system.species]),
        t_low=max((s.t_min for s in system.species), default=0.0),
        t_high=min((s.t_max for s in system.species), default=math.inf),
        ideal=all(ph.model in IDEAL_MODELS for ph, ok in zip(system.phases, model.usable) if ok),
        potential_names=tuple(c.name if c.is_element else f"q{i}" for i, c in enumerate(analysis.conserved)))


@dataclass(frozen=True)
class _PresentSet:
    """What the certificate needs for one set of present species (cached: in a sweep the
    same set recurs at most points)."""

    index: np.ndarray          # present species
    basis: np.ndarray          # independent reactions among them, as rows over all species
    pinv: np.ndarray           # least-squares map from their mu/RT to element potentials
    rows: np.ndarray           # their conserved-quantity vectors (species x conserved)
    free: np.ndarray           # element-potential directions they leave undetermined


def _present_set(static: _Static, reactions, present: np.ndarray) -> _PresentSet:
    key = present.tobytes()
    got = static.present_sets.get(key)
    if got is None:
        idx = np.flatnonzero(present)
        basis = _direction_matrix(basis_within(reactions, len(present), tuple(int(k) for k in idx)), len(present))
        rows = static.W[:, idx].T
        m = static.W.shape[0]
        if rows.size == 0:
            pinv, free = np.zeros((m, 0)), np.eye(m)
        else:
            # one SVD: lambda = V S^-1 U^T mu over the numerical rank; the rest of V is free
            u, s, vt = np.linalg.svd(rows, full_matrices=True)
            rank = int((s > 1e-10 * s[0]).sum()) if s.size else 0
            pinv = vt[:rank].T @ (u[:, :rank] / s[:rank]).T
            free = vt[rank:].T
        remember(static.present_sets, key, got := _PresentSet(idx, basis, pinv, rows, free), PER_CASE_CACHE)
    return got


PER_CASE_CACHE = 64   # entries kept per cache of a case (present sets, absent-phase groups)


class _Solver:
    """T,P minimisation of one case, reusable for outer solves."""

    def __init__(self, model: _Model, system: ChemicalSystem, analysis: ReactionAnalysis,
                 n0: np.ndarray, candidate: np.ndarray):
        self.model = model
        self.system = system
        self.n0 = n0
        self.candidate = candidate            # bool per species: in a phase that may form
        static = _static_for(system, analysis)
        self.static = static
        self.complete = analysis.complete
        self.reactions = analysis.reactions
        self.calls = 0
        self.first = 0                # index into ``routes`` where solves begin
        self.failures: dict[str, str] = {}   # route -> its first failure in this pass
        self.attempts: tuple = ()     # (route, outcome) of the passes before the current one
        self._estimates: dict[str, np.ndarray | None] = {}
        self.log: list[str] = []      # what cantera's solver printed
        self.deadline = time.perf_counter() + settings.MINIMISATION_WALL_SECONDS
        key = candidate.tobytes()
        if key not in static.mixtures:
            # one Mixture per case, reused for every state (building one costs more than a solve);
            # a phase none of whose species can form stays out of it
            m = model
            offsets = np.cumsum([0] + [p.n_species for p in m.phases])
            keep = [ok and bool(candidate[lo:hi].any()) for ok, lo, hi in zip(m.usable, offsets[:-1], offsets[1:])]
            mixture = m.ct.Mixture([(ph, 0.0) for ph, k in zip(m.phases, keep) if k]) if any(keep) else None
            in_mixture = np.concatenate([[k] * ph.n_species for ph, k in zip(m.phases, keep)])
            # the candidate species of each phase in the mixture, as positions in the mixture
            # (each such phase gets a trace seed)
            position = np.cumsum(in_mixture) - 1
            seeds = [position[lo + np.flatnonzero(candidate[lo:hi])] for k, lo, hi
                     in zip(keep, offsets[:-1], offsets[1:]) if k]
            static.mixtures[key] = (mixture, [s for s in seeds if s.size], in_mixture)
        self._mixture, self._seeds, self._in_mixture = static.mixtures[key]

    def _ours(self, T: float, P: float) -> _Solution:
        from .minimiser import minimise_gibbs
        st = self.static
        g = self.model.g_RT(T, P)
        idx = np.flatnonzero(self.candidate & st.usable_species)
        phases_used = sorted(set(st.phase_of[idx]))
        remap = {p: i for i, p in enumerate(phases_used)}
        res = minimise_gibbs(st.W[:, idx], g[idx], np.array([remap[p] for p in st.phase_of[idx]]),
                             st.solution[phases_used], st.W @ self.n0)
        n = np.zeros(self.system.n_species)
        n[idx] = res.moles
        return _Solution(n, T, P, "element-potential minimiser (auditor.minimiser)", bool(res.converged), res.message)

    def _cantera(self, T: float, P: float, start: np.ndarray, solver: str = "vcs") -> _Solution:
        usable_mask = self._in_mixture
        if self._mixture is None:
            return _Solution(np.zeros(self.system.n_species), T, P, f"cantera {solver}", False,
                             "no phase of the system can form from this feed")
        start = start[usable_mask]        # a copy
        total = None
        # a phase that may appear needs a trace seed: zero-seeded phases break the solver
        for idx in self._seeds:
            if start[idx].sum() <= 0:
                if total is None:
                    total = max(float(start[self.candidate[usable_mask]].sum()), 1e-300)
                start[idx] = 1e-12 * total / idx.size
        mix = self._mixture
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
            # cantera frames its message in rows of asterisks: keep the words
            converged, msg = False, " ".join(str(exc).replace("*", " ").split())[:300]
        for line in log.getvalue().splitlines():
            if line.strip() and line.strip() not in self.log:
                self.log.append(line.strip())
        n = np.zeros(self.system.n_species)
        n[usable_mask] = mix.species_moles
        return _Solution(n, T, P, f"cantera {solver}", converged, msg)

    # ---- routes: fixed, deterministic order; each tried only when the ones before it fail
    @functools.cached_property
    def routes(self) -> tuple[str, ...]:
        """The routes this case may take, in order.  cantera's two multiphase solvers from the
        feed, then from element-preserving starting estimates, then the project's own minimiser
        (ideal phases only: it treats every phase as ideal).  An incomplete reaction list has
        one route: only the own minimiser holds the extra conserved quantities."""
        if not self.complete or not all(self.model.usable) or self._mixture is None:
            return (ROUTE_OURS,)
        return CANTERA_ROUTES + ((ROUTE_OURS,) if self.static.ideal else ())

    def start_at(self, first: int) -> None:
        """Later solves begin at route ``first`` (routes before it gave a state that failed its
        certificate); forget what earlier passes recorded."""
        self.first = first
        self.failures = {}

    def _estimate(self, kind: str) -> np.ndarray | None:
        """Element-preserving starting estimates (same conserved quantities as the feed), cached
        per solver: ``interior`` maximises the smallest amount of any candidate species (a
        linear program), ``shifted`` moves the feed along the reaction directions."""
        if kind not in self._estimates:
            if kind == "interior":
                self._estimates[kind] = _interior_estimate(self.static.W, self.n0, self.candidate & self._in_mixture)
            else:
                self._estimates[kind] = _perturbed_start(self.n0, *self.static.trial_directions[0]) \
                    if self.static.directions.shape[0] else None
        return self._estimates[kind]

    def _run(self, route: str, T: float, P: float, start: np.ndarray | None) -> _Solution:
        if route == ROUTE_OURS:
            sol = self._ours(T, P)
        else:
            method, origin = ROUTE_PLAN[route]
            if start is None:
                start = self.n0 if origin == "feed" else self._estimate(origin)
                if start is None:
                    return _Solution(np.zeros(self.system.n_species), T, P, f"cantera {method}", False,
                                     "no such starting estimate for this feed", route=route)
            sol = self._cantera(T, P, start, method)
        sol.route = route
        # a state that breaks a balance is caught by the certificate, which sends the
        # confirmation on to the next route; here only what no certificate can read
        if sol.converged and not np.isfinite(sol.n).all():
            sol.converged, sol.message = False, "amounts that are not finite numbers"
        return sol

    def solve(self, T: float, P: float, start: np.ndarray | None = None) -> _Solution:
        """The first route from ``self.first`` on that converges (``start``, when given, replaces
        the routes' own starting estimates: a uniqueness restart)."""
        failed = None
        for route in self.routes[self.first:]:
            # the wall-clock bound is checked between solves (a running cantera call cannot be stopped)
            if time.perf_counter() > self.deadline:
                raise _SpecError(f"the minimisation exceeded its wall-clock bound of "
                                 f"{settings.MINIMISATION_WALL_SECONDS:g} s (settings.MINIMISATION_WALL_SECONDS)")
            if start is not None and ROUTE_PLAN.get(route, ("", "feed"))[1] != "feed":
                continue                      # a restart keeps its own starting estimate
            self.calls += 1
            sol = self._run(route, T, P, start)
            if sol.converged:
                return sol
            self.failures.setdefault(route, sol.message or "did not converge")
            failed = failed or sol
        return failed


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


def _interior_estimate(W: np.ndarray, n0: np.ndarray, usable: np.ndarray) -> np.ndarray | None:
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


# ------------------------------------------------------------------ certificate

def _direction_matrix(vectors, n_species: int) -> np.ndarray:
    V = np.zeros((len(vectors), n_species))
    for i, v in enumerate(vectors):
        for k, c in v.items():
            V[i, k] = float(c)
    return V


def _absent_driving_forces(static: _Static, model_g, lam, free, phase_present, candidate):
    """Minimum over absent phases of the driving force to form them, maximised over the free
    element-potential directions (a valid certificate needs only one such lambda)."""
    key = phase_present.tobytes() + candidate.tobytes()
    if key not in static.absent_groups:
        groups = {p: idx[static.usable_species[idx]] for p, idx in enumerate(static.phase_species)
                  if not phase_present[p]}
        groups = {p: g for p, g in groups.items() if g.size}
        # a phase made only of species holding an element the feed lacks can never form
        never = {p: math.inf for p, g in groups.items() if not candidate[g].any()}
        remember(static.absent_groups, key, ({p: g[candidate[g]] for p, g in groups.items() if p not in never}, never),
                 PER_CASE_CACHE)
    groups, never = static.absent_groups[key]
    if not groups:
        return dict(never)
    A, solution = static.W, static.solution

    def forces(z):
        lz = lam + (free @ z if free.shape[1] else 0.0)
        d = model_g - A.T @ lz
        out = {}
        for p, idx in groups.items():
            if solution[p]:
                m = np.min(d[idx])
                out[p] = float(m - math.log(np.sum(np.exp(-(d[idx] - m)))))
            else:
                out[p] = float(d[idx][0])
        return out

    base = forces(np.zeros(free.shape[1]))
    if free.shape[1] == 0 or not base or min(base.values()) >= 0:
        return {**base, **never}
    # maximise the worst driving force over the free directions (concave: a smooth solve suffices)
    from scipy.optimize import minimize
    k = free.shape[1]

    def neg_worst(z):
        return -min(forces(z).values())

    best = None
    for z0 in (np.zeros(k), np.ones(k), -np.ones(k)):
        res = minimize(neg_worst, z0, method="Nelder-Mead", options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 4000})
        if best is None or res.fun < best.fun:
            best = res
        if -best.fun > 1e3:
            break
    better = forces(best.x)
    return {**(better if min(better.values()) > min(base.values()) else base), **never}


def _feed_vector(case: Case, system: ChemicalSystem) -> np.ndarray:
    n0 = np.zeros(system.n_species)
    for name, amount in feed_moles(case, system) or ():
        n0[system.find(name)[0]] += float(amount)
    return n0


def confirm(case: Case, system: ChemicalSystem, analysis: ReactionAnalysis, count: PhaseRuleCount,
            spec: SpecificationAudit) -> EquilibriumCheck:
    """Solve the case's equilibrium and check the certificate; failures become findings."""
    t0 = time.perf_counter()
    findings: list[Finding] = []

    def not_solved(message: str, severity="error", assumed=(), extra=()):
        findings.append(Finding(severity, "equilibrium", message))
        findings.extend(extra)
        return EquilibriumCheck(False, False, "", None, None, (), (), None, None, None, (), None, 0, None, None,
                                tuple(assumed), tuple(findings), False, time.perf_counter() - t0)

    if analysis.unbalanced:
        return not_solved("Gibbs minimisation not run: a listed reaction does not balance, so the conserved "
                          "quantities are not those of the elements", "note")
    if spec.status != "well-posed":
        return not_solved(f"Gibbs minimisation not run: the case is {spec.status}, so its equilibrium state "
                          "is not determined by what it fixes", "note")
    try:
        model = _model_cached(system)
    except Exception as exc:
        return not_solved(f"cantera cannot build the phases for the minimisation: {' '.join(str(exc).split())[:300]}")
    for p in model.problems:
        findings.append(Finding("warning", "equilibrium", p))
    non_ideal = [ph.name for ph, ok in zip(system.phases, model.usable) if ok and ph.model not in IDEAL_MODELS]
    if non_ideal and (not analysis.complete or not all(model.usable)):
        # the element-potential minimiser knows only standard potentials: say which model it drops
        why = ("the reaction list is incomplete, so the element-potential minimiser holds the extra conserved "
               "quantities" if not analysis.complete else "a phase cannot enter cantera's multiphase solver, so "
               "the element-potential minimiser solves the rest")
        models = ", ".join(f"{p} ({system.phase(p).model})" for p in non_ideal)
        findings.append(Finding("warning", "equilibrium", f"{why}; it treats phase(s) {models} as ideal: their "
                                "model is not used in the minimisation", tuple(non_ideal)))
    if not any(model.usable):
        return not_solved("no phase of this system can enter a Gibbs minimisation", assumed=model.assumed)
    n0 = _feed_vector(case, system)
    # a species holding an element the feed lacks can never form (and a pure phase of one makes
    # cantera's vcs solver fail); only element rows count here, the charge row has both signs
    rows = _static_for(system, analysis).element_rows
    candidate = ~(rows[rows @ n0 == 0] != 0).any(axis=0)
    solver = _Solver(model, system, analysis, n0, candidate)

    # every route in turn until one gives a state whose certificate holds (fallbacks cost time
    # only where the first route fails)
    attempts: list[tuple[str, str]] = []
    first_check = None
    first = 0
    while first < len(solver.routes):
        solver.start_at(first)
        sol, stop = None, False
        try:
            sol = _solve_specified(case, solver, spec)
        except _SpecError as exc:
            failure, stop = str(exc), "wall-clock" in str(exc)
        except Exception as exc:
            failure = f"{type(exc).__name__}: {' '.join(str(exc).split())[:300]}"
        else:
            failure = "" if sol is not None and sol.converged else \
                "did not converge" + (f": {sol.message}" if sol is not None and sol.message else "")
        tried = {r for r, _ in attempts}
        attempts.extend((r, "failed: " + m) for r, m in solver.failures.items()
                        if r != getattr(sol, "route", None) and r not in tried)
        route = sol.route if sol is not None and sol.route else solver.routes[first]
        if failure:
            if not any(r == route for r, _ in attempts):
                attempts.append((route, "failed: " + failure))
            # a T,P solve that failed has already tried every route from ``first`` on
            if stop or sol is None or not sol.route or route in solver.failures:
                break
        else:
            solver.attempts = tuple(attempts)   # the certified check carries them (no copy on the common path)
            try:
                check = _certify(case, system, analysis, count, spec, model, solver, sol, list(findings), t0)
            except _SpecError as exc:
                attempts.append((route, f"failed: {exc}"))
            else:
                if certificate_holds(check):
                    return check
                attempts.append((route, "certificate failed: " + (_certificate_failure(check) or "see findings")))
                first_check = first_check or check
        # the next pass starts after the route that produced this state
        first = max(first, solver.routes.index(route)) + 1
    tried = ", ".join(dict.fromkeys(r for r, _ in attempts))
    if first_check is not None:
        notes = [Finding("error", "equilibrium", f"route {r}: {o}") for r, o in attempts]
        return _with_route(replace(first_check, findings=first_check.findings + tuple(notes)), "", attempts)
    notes = [Finding("error", "equilibrium", f"route {r}: {o}") for r, o in attempts]
    return _with_route(not_solved(f"the minimisation did not reach a certified state on any route ({tried})",
                                  assumed=model.assumed, extra=notes), "", attempts)


def certificate_holds(check: EquilibriumCheck) -> bool:
    """The numerical certificate holds (whatever the phases assumed): balance, zero affinity,
    no absent phase that should form, and restarts that agree (an indeterminate split
    between phases is a property of the problem, not of the solver, and does not count)."""
    return check.solved and not _certificate_failure(check)


def _certificate_failure(check: EquilibriumCheck) -> str:
    if not check.solved:
        return "not solved"
    tol = settings.AFFINITY_TOLERANCE_RT
    if check.element_balance_error is None or not check.element_balance_error <= settings.ELEMENT_BALANCE_TOLERANCE:
        return f"conserved-quantity balance error {check.element_balance_error}"
    if check.max_affinity_RT is None or not check.max_affinity_RT <= tol:
        return f"affinity {check.max_affinity_RT} RT"
    bad = [n for n, d in check.absent_phase_driving_force if d < -tol]
    if bad:
        return f"absent phase(s) {', '.join(bad)} should form"
    indeterminate = check.phase_amount_rcond is not None and check.phase_amount_rcond < settings.PHASE_AMOUNT_RCOND_TOLERANCE
    if check.unique is False and not indeterminate:
        return "starting estimates disagree"
    return ""


def _with_route(check: EquilibriumCheck, route: str, attempts) -> EquilibriumCheck:
    return replace(check, route=route, attempts=tuple(attempts))


class _SpecError(Exception):
    pass


def _bracket_solve(f, lo: float, hi: float, log: bool, what: str):
    """Root of f on [lo, hi] by Brent's method (R. P. Brent, Algorithms for Minimization
    without Derivatives, 1973), scanning for a sign change first."""
    from scipy.optimize import brentq
    grid = np.geomspace(lo, hi, 25) if log else np.linspace(lo, hi, 25)
    vals = []
    for x in grid:
        try:
            vals.append(f(x))
        except Exception:
            vals.append(np.nan)
    for (a, fa), (b, fb) in zip(zip(grid, vals), zip(grid[1:], vals[1:])):
        if np.isfinite(fa) and np.isfinite(fb) and fa * fb <= 0:
            return brentq(f, a, b, xtol=1e-10 * max(abs(a), 1.0), rtol=1e-12, maxiter=200)
    raise _SpecError(f"no {what} in [{lo:g}, {hi:g}] meets the specification (no sign change found)")


def _solve_specified(case: Case, solver: _Solver, spec: SpecificationAudit) -> _Solution | None:
    system = solver.system
    s = case.specified
    T, P = s.temperature_K, s.pressure_Pa
    others = []   # residual functions of the solution for specifications other than T, P
    phase_index = {p.name: i for i, p in enumerate(system.phases)}

    def phase_total(n, phase):
        return float(n @ solver.static.membership[:, phase_index[phase]])

    for m in s.mole_fractions:
        k = system.index_in(m.species, m.phase)
        others.append(("mole fraction", lambda sol, k=k, m=m: sol.n[k] / max(phase_total(sol.n, m.phase), 1e-300) - m.value))
    for r in s.ratios:
        a, b = system.index_in(r.numerator, r.phase), system.index_in(r.denominator, r.phase)
        others.append(("ratio", lambda sol, a=a, b=b, r=r: math.log(max(sol.n[a], 1e-300) / max(sol.n[b], 1e-300)) - math.log(r.value)))
    for pf in s.phase_fractions:
        others.append(("phase fraction", lambda sol, pf=pf: phase_total(sol.n, pf.phase) / sol.n.sum() - pf.value))
    if s.adiabatic_feed_temperature_K is not None:
        H_feed = solver.model.enthalpy(s.adiabatic_feed_temperature_K, P if P else 101325.0, solver.n0)
        scale = max(abs(H_feed), 1e3 * solver.n0.sum())
        others.append(("adiabatic", lambda sol: (solver.model.enthalpy(sol.T, sol.P, sol.n) - H_feed) / scale))
    if T is not None and P is not None:
        if others:
            raise _SpecError("more than two specifications reached the solver")
        return solver.solve(T, P)
    if len(others) != 1 or (T is None and P is None):
        raise _SpecError("this combination of specifications (neither temperature nor pressure fixed, or more than one "
                         "other) is not handled by the confirmation yet; fix temperature or pressure")
    what, resid = others[0]
    last = {}

    if T is None:
        t_lo = max(max(sp.t_min for sp in system.species), 200.0)
        t_hi = min(min(sp.t_max for sp in system.species), 6000.0)
        if what == "adiabatic":
            t_lo = max(t_lo, 250.0)
        if not t_lo < t_hi:
            t_lo, t_hi = 250.0, 6000.0

        def f(x):
            sol = solver.solve(x, P)
            last["sol"] = sol
            return resid(sol)
        x = _bracket_solve(f, t_lo, t_hi, False, "temperature")
    else:
        def f(x):
            sol = solver.solve(T, x)
            last["sol"] = sol
            return resid(sol)
        x = _bracket_solve(f, 1.0, 1e9, True, "pressure")
    sol = solver.solve(x, P) if T is None else solver.solve(T, x)
    if abs(resid(sol)) > 1e-6:
        sol = _on_transition(solver, resid, x, T, P) or sol
    if abs(resid(sol)) > 1e-6:
        sol.converged = False
        sol.message = f"the {what} specification is met only to {abs(resid(sol)):.2e}"
    return sol


def _on_transition(solver, resid, x, T, P):
    """The residual jumps across x (a univariant transition: calcite/lime, boiling): every
    mixture of the states on either side is an equilibrium state at x; return the one that
    meets the extensive specification."""
    from scipy.optimize import brentq
    d = 1e-8 * x
    at = (lambda v: solver.solve(v, P)) if T is None else (lambda v: solver.solve(T, v))
    lo, hi = at(x - d), at(x + d)
    if not (lo.converged and hi.converged):
        return None
    Tm, Pm = (x, P) if T is None else (T, x)

    def mix(t):
        return _Solution((1 - t) * lo.n + t * hi.n, Tm, Pm, lo.solver, True, "", (lo.n, hi.n), lo.route)

    if resid(mix(0.0)) * resid(mix(1.0)) > 0:
        return None
    guess = mix(brentq(lambda t: resid(mix(t)), 0.0, 1.0, xtol=1e-15))
    return _refine_transition(solver, resid, guess, T is None) or guess


def _refine_transition(solver, resid, guess: _Solution, t_free: bool) -> _Solution | None:
    """Solve the state on the transition directly: the T,P solver sets phase boundaries only
    to its own tolerance (about 1e-4 K for ice/water), too coarse for the certificate.  On the
    transition the phases of both sides coexist, and the state is fixed by the conserved
    quantities, zero affinity of every independent reaction among their species, and the
    extensive specification: as many equations as unknowns (the amounts and T, or P).
    Solved by least squares (scipy's Levenberg-Marquardt) in ln n and ln T (or ln P)
    from the mixture of the two sides; None when it does not converge."""
    from scipy.optimize import least_squares
    st, model = solver.static, solver.model
    n_g = np.maximum(guess.n, 0.0)
    totals = n_g @ st.membership
    phase_present = totals > settings.PHASE_PRESENCE_FRACTION * max(totals.sum(), 1e-300)
    present = phase_present[st.phase_of] & (n_g > 0) & solver.candidate
    idx = np.flatnonzero(present)
    basis = _present_set(st, solver.reactions, present).basis[:, idx]
    W = st.W[:, idx]
    b = st.W @ solver.n0
    b_scale = max(float(np.abs(b).max()), 1e-300)

    def state(z):
        n = np.zeros_like(n_g)
        n[idx] = np.exp(z[:-1])
        x = math.exp(z[-1])
        T, P = (x, guess.P) if t_free else (guess.T, x)
        return _Solution(n, T, P, guess.solver, True, "", guess.sides, guess.route)

    def equations(z):
        sol = state(z)
        mu = model.at_state(sol.T, sol.P, sol.n)[0][idx]
        return np.concatenate(((W @ sol.n[idx] - b) / b_scale, basis @ mu, [resid(sol)]))

    z0 = np.concatenate((np.log(np.maximum(n_g[idx], 1e-300)), [math.log(guess.T if t_free else guess.P)]))
    try:
        res = least_squares(equations, z0, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=200 * z0.size)
    except Exception:
        return None
    out = state(res.x)
    if np.max(np.abs(equations(res.x))) > 1e-9:
        return None
    return out


def _certify(case, system, analysis, count, spec, model, solver, sol, findings, t0) -> EquilibriumCheck:
    static = solver.static
    n = np.maximum(sol.n, 0.0)
    # a finite sum proves every amount finite (one reduction instead of a mask); otherwise look
    if not math.isfinite(float(n.sum())) and not np.isfinite(sol.n).all():
        raise _SpecError("the minimisation returned amounts that are not finite numbers")
    T, P = sol.T, sol.P
    phase_of = static.phase_of
    totals = n @ static.membership
    phase_present = totals > settings.PHASE_PRESENCE_FRACTION * max(float(totals.sum()), 1e-300)
    present_names = tuple(p.name for p, pr in zip(system.phases, phase_present.tolist()) if pr)
    x_all = _mole_fractions(n, phase_of, totals)

    # balance of every conserved quantity (elements, charge, extra frozen quantities)
    W = static.W
    b = W @ solver.n0
    bal = _max_abs(W @ n - b) / max(_max_abs(b), 1e-300) if b.size else 0.0

    # element potentials fitted to the present species, and the affinities of the
    # independent reactions among them
    mu, g, g_dlnT, g_dlnP = model.at_state(T, P, n)
    present = phase_present[phase_of] & (n > 0)
    ps = _present_set(static, analysis.reactions, present)
    mu_p = mu[ps.index]
    lam = ps.pinv @ mu_p
    resid = _max_abs(ps.rows @ lam - mu_p) if mu_p.size else 0.0
    max_aff = _max_abs(ps.basis @ np.where(present, mu, 0.0)) if ps.basis.shape[0] else 0.0

    drive = _absent_driving_forces(static, g, lam, ps.free, phase_present, solver.candidate)
    drive_named = tuple((system.phases[p].name, d) for p, d in sorted(drive.items()))
    unique, starts, unique_basis, amount_rcond = _uniqueness(static, solver, sol, n, totals, phase_present, drive,
                                                             x_all)

    # ln K additivity of dependent reactions
    lnk_err = None
    if static.lnk_dependent.size:
        lnK = -(static.lnk_rows @ g)
        lnk_err = float(np.max(np.abs(static.lnk_combination @ lnK)
                               / np.maximum(1.0, np.abs(lnK[static.lnk_dependent]))))

    # Jacobian of the specification audit's equations (structurally square cases only)
    jac = None
    if spec.decomposition.structurally_nonsingular and not spec.extensive and tuple(count.coexisting) == present_names:
        try:
            jac = _jacobian_rcond(case, system, count, spec, g_dlnT, g_dlnP, n, phase_of, totals)
        except Exception as exc:
            findings.append(Finding("warning", "equilibrium", f"the Jacobian check could not be evaluated: {exc}"))

    # findings
    ok = True
    if bal > settings.ELEMENT_BALANCE_TOLERANCE:
        ok = False
        findings.append(Finding("error", "equilibrium", f"conserved-quantity balance error {bal:.2e} exceeds "
                                f"{settings.ELEMENT_BALANCE_TOLERANCE:g}"))
    if max_aff > settings.AFFINITY_TOLERANCE_RT:
        ok = False
        findings.append(Finding("error", "equilibrium", f"a reaction among present species is not at equilibrium: "
                                f"affinity {max_aff:.2e} RT exceeds {settings.AFFINITY_TOLERANCE_RT:g} RT"))
    if resid > settings.AFFINITY_TOLERANCE_RT * 10:
        findings.append(Finding("warning", "equilibrium", f"element potentials fit the present species only to "
                                f"{resid:.2e} RT"))
    for name, d in drive_named:
        if d < -settings.AFFINITY_TOLERANCE_RT:
            ok = False
            findings.append(Finding("error", "equilibrium", f"absent phase {name} has a negative driving force "
                                    f"({d:.3g} RT): it should form, so the minimisation stopped short", (name,)))
    if not unique:
        ok = False
        if amount_rcond is not None and amount_rcond < settings.PHASE_AMOUNT_RCOND_TOLERANCE:
            findings.append(Finding("error", "equilibrium", f"the amounts of the present phases ({', '.join(present_names)}) "
                                    "are not determined: their compositions are linearly dependent in the conserved "
                                    f"quantities (smallest/largest singular value {amount_rcond:.2e}), so material can "
                                    "shift between them without changing G; the state is indeterminate at this T and P",
                                    present_names))
        else:
            findings.append(Finding("error", "equilibrium", f"different starting estimates ({starts}) reached different "
                                    "states: the answer is not unique or the solver is unreliable here"))
    if lnk_err is not None and lnk_err > settings.LNK_ADDITIVITY_TOLERANCE:
        findings.append(Finding("warning", "equilibrium", f"ln K of a dependent reaction differs from the combination "
                                f"of the independent ones by {lnk_err:.2e} (relative)"))
    if jac is not None and jac < settings.JACOBIAN_RANK_TOLERANCE:
        ok = False
        findings.append(Finding("error", "equilibrium", f"the equations are numerically singular at the solution "
                                f"(smallest/largest singular value {jac:.2e})"))
    assumed = tuple(count.coexisting)
    if set(present_names) != set(assumed):
        ok = False
        appeared = sorted(set(present_names) - set(assumed))
        vanished = sorted(set(assumed) - set(present_names))
        parts = []
        if appeared:
            parts.append(f"phase(s) {', '.join(appeared)} appeared")
        if vanished:
            parts.append(f"phase(s) {', '.join(vanished)} vanished")
        findings.append(Finding("error", "equilibrium", f"the minimisation does not land on the assumed phases: "
                                f"{'; '.join(parts)} (present: {', '.join(present_names)})", tuple(appeared + vanished)))
    outside = () if static.t_low <= T <= static.t_high else \
        np.flatnonzero(present & ((T < static.t_min) | (T > static.t_max)))
    for k in outside:
        sp = system.species[k]
        findings.append(Finding("warning", "data", f"T = {T:.1f} K is outside the thermo data range of "
                                f"{sp.label} ({sp.t_min:g}-{sp.t_max:g} K): extrapolated", (sp.label,)))
    for line in solver.log[:5]:
        findings.append(Finding("note", "equilibrium", f"cantera's solver reported: {line} (the certificate "
                                "above is what decides)"))
    findings.extend(model.density_notes)

    phases_out = []
    x_list = x_all.tolist()                 # zero in an empty phase (_mole_fractions)
    for p, idx, labels, tot in zip(system.phases, static.phase_species, static.phase_labels, totals.tolist()):
        phases_out.append(PhaseState(p.name, tot, tuple(zip(labels, (x_list[k] for k in idx.tolist())))))
    return EquilibriumCheck(
        solved=True, converged=sol.converged, solver=sol.solver, temperature_K=float(T), pressure_Pa=float(P),
        phases=tuple(phases_out), phases_present=present_names, max_affinity_RT=max_aff,
        element_balance_error=bal, potential_residual_RT=resid, absent_phase_driving_force=drive_named,
        unique=unique, starts=starts, lnK_additivity_error=lnk_err, jacobian_rcond=jac,
        assumed_densities=tuple(model.assumed), findings=tuple(findings), confirmed=ok,
        seconds=time.perf_counter() - t0,
        element_potentials=tuple(zip(static.potential_names, lam.tolist())),
        unique_basis=unique_basis, phase_amount_rcond=amount_rcond,
        route=sol.route, attempts=solver.attempts + ((sol.route, "certified"),))


def _max_abs(a: np.ndarray) -> float:
    """Largest absolute entry of a small vector, as a float; NaN when any entry is NaN (as
    numpy's ``max``).  Plain Python: cheaper than numpy's reduction on a few entries."""
    values = a.tolist()
    m = max(map(abs, values), default=0.0)
    return m if all(v == v for v in values) else math.nan


def _phase_amount_rcond(static: _Static, n: np.ndarray, phase_present: np.ndarray) -> float:
    """Smallest over largest singular value of the matrix whose columns are the conserved
    quantities held by each present phase (columns scaled to unit length).  Zero when the
    columns are dependent: then material can shift between the phases at fixed
    compositions, the conserved quantities unchanged."""
    present = np.flatnonzero(phase_present)
    k = present.size
    if k == 0:
        return 1.0
    cols = (static.W * n) @ static.membership[:, present]
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


def _uniqueness(static: _Static, solver, sol: _Solution, n: np.ndarray, totals: np.ndarray,
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
    vectors are independent (``_phase_amount_rcond``); dependent vectors prove it is not.
    Cantera is still restarted from another starting estimate (one when the proof holds,
    ``RESTARTS`` otherwise), and a restart that lands elsewhere makes the state not unique.
    The element-potential minimiser solves that convex problem itself and is not restarted.
    """
    proved, rcond = None, None
    cantera = sol.solver.startswith("cantera")
    if (static.ideal or not cantera) and sol.sides is None:
        rcond = _phase_amount_rcond(static, n, phase_present)
        if rcond < settings.PHASE_AMOUNT_RCOND_TOLERANCE:
            proved = False
        elif all(d > settings.AFFINITY_TOLERANCE_RT for d in drive.values()):
            proved = True
    if proved is False:
        return False, 1, "proved not unique: the phase amounts are indeterminate", rcond
    starts, unique = 1, True
    if cantera and static.directions.shape[0]:
        phase_of = static.phase_of
        if x_ref is None:
            x_ref = _mole_fractions(n, phase_of, totals)
        for trial in range(1 if proved else RESTARTS):
            start = _perturbed_start(n if trial == 0 else solver.n0, *static.trial_directions[trial])
            if start is None:
                continue
            other = solver.solve(sol.T, sol.P, start)
            starts += 1
            if not other.converged or not np.isfinite(other.n).all():
                unique = False
                continue
            n_o = np.maximum(other.n, 0.0)
            tot_o = n_o @ static.membership
            pres_o = tot_o > settings.PHASE_PRESENCE_FRACTION * max(float(tot_o.sum()), 1e-300)
            x_other = _mole_fractions(n_o, phase_of, tot_o)
            if sol.sides is not None:
                # on a transition a T,P restart lands on one side: it must agree on every phase it
                # finds and find no other (the extensive specification sets the split)
                found = pres_o[phase_of]
                if (pres_o & ~phase_present).any() or (
                        found.any() and np.max(np.abs(x_other[found] - x_ref[found])) > settings.UNIQUENESS_TOLERANCE):
                    unique = False
            elif pres_o.tolist() != phase_present.tolist() or _max_abs(x_other - x_ref) > settings.UNIQUENESS_TOLERANCE:
                unique = False
    agree = f"{starts} starting estimates " + ("agree" if unique else "disagree") if starts > 1 else ""
    if proved:
        how = "proved: ideal phases, every absent phase has a positive driving force, phase amounts determined"
        return unique, starts, how + (f"; {agree}" if agree else ""), rcond
    if not cantera:
        return True, 1, "convex minimisation (ideal phases)", rcond
    return unique, starts, agree or "one starting estimate (no other composition with the same conserved quantities)", rcond


def _mole_fractions(n: np.ndarray, phase_of: np.ndarray, totals: np.ndarray) -> np.ndarray:
    """Mole fraction of every phase-species in its own phase (zero in an empty phase)."""
    tot = totals[phase_of]
    return n / np.where(tot > 0, tot, 1.0)


def _perturbed_start(n: np.ndarray, combined: np.ndarray, V: np.ndarray) -> np.ndarray | None:
    """A different composition with the same conserved quantities: ``n + t d`` with ``d`` a
    fixed signed sum of the reaction directions ``V`` (``_Static.trial_directions``), ``t`` half
    of the largest step that keeps every amount non-negative (or 30 % of the total amount
    when no amount decreases); when amounts at zero block it, the rows of ``V`` one by one.
    Deterministic, so the audit is reproducible."""
    def moved(start, d):
        neg = d < 0
        step = 0.5 * float((start[neg] / -d[neg]).min()) if neg.any() else \
            float(start.sum()) * 0.3 / max(float(d.sum()), 1e-300)
        return start + step * d if step > 0 else None

    best = moved(n, combined)
    if best is None:
        best = moved(n, -combined)     # the other sense when an amount at zero blocks this one
    if best is None:
        # amounts at zero block the combined direction: move along the directions one by one
        best = n.astype(float)
        for v in V:
            for d in (v, -v):
                nxt = moved(best, d)
                if nxt is not None:
                    best = nxt
                    break
        if np.array_equal(best, n):
            return None
    return np.where(best > 0, best, 0.0)


@by_identity
def _jacobian_layouts(system, count, spec) -> dict:
    return {}


def _jacobian_layout(case, system, count, spec):
    """The layout for a case, built once per kind of specification: the values of T and P
    do not enter it, so the points of a sweep share one."""
    s = case.specified
    key = (s.temperature_K is not None, s.pressure_Pa is not None, s.mole_fractions, s.ratios)
    layouts = _jacobian_layouts(system, count, spec)
    if key not in layouts:
        layouts[key] = _build_jacobian_layout(s, system, count, spec)
    return layouts[key]


def _build_jacobian_layout(s, system, count, spec):
    """Constant parts of the Jacobian of the audit's equations, as arrays.

    Rows in the order of ``structure.build_incidence``: normalisations, equilibria,
    restrictions, specifications.  Columns ``ln T, ln P`` and the present mole fractions.
    Returns (present, X, C, S, TP): entries multiplied by the mole fraction of their column, constant
    entries, reaction stoichiometry over all species (for the T and P derivatives), and the
    constant T, P entries.
    """
    present = list(count.present_species)
    col = {k: j for j, k in enumerate(present)}
    solution = {p.name: len(p.species) > 1 for p in system.phases}
    X_rows, C_rows, R_rows, TP_rows = [], [], [], []

    def row():
        X_rows.append(np.zeros(len(present)))
        C_rows.append(np.zeros(len(present)))
        R_rows.append(np.zeros(system.n_species))
        TP_rows.append(np.zeros(2))
        return len(X_rows) - 1

    for e in spec.equations:
        if e.kind == "normalisation":
            i = row()
            for c in e.variables:
                X_rows[i][c - 2] = 1.0
    for rxn in count.reactions_present:
        i = row()
        for k, c in rxn.stoich:
            R_rows[i][k] = float(c)
            if solution[system.species[k].phase]:
                C_rows[i][col[k]] += float(c)      # d(c ln x)/dx * x = c
    for rel in count.relations:
        i = row()
        for k, c in rel.coefficients:
            X_rows[i][col[k]] += float(c)

    if s.temperature_K is not None:
        TP_rows[row()][0] = 1.0
    if s.pressure_Pa is not None:
        TP_rows[row()][1] = 1.0
    for m in s.mole_fractions:
        k = system.index_in(m.species, m.phase)
        if k in col:
            X_rows[row()][col[k]] = 1.0
    for q in s.ratios:
        a, b = system.index_in(q.numerator, q.phase), system.index_in(q.denominator, q.phase)
        if a in col and b in col:
            i = row()
            X_rows[i][col[a]] = 1.0
            X_rows[i][col[b]] = -q.value
    return np.array(present, dtype=int), np.array(X_rows), np.array(C_rows), np.array(R_rows), np.array(TP_rows)


def _jacobian_rcond(case, system, count, spec, g_dlnT, g_dlnP, n, phase_of, totals) -> float:
    """Smallest over largest singular value of the scaled Jacobian of the audit's equations.

    Variables ``ln T, ln P`` and the mole fractions, columns of mole fractions scaled by
    their values (relative changes); derivatives are exact for the ideal phases: d ln x / d x
    = 1/x, d(mu°/RT)/d ln T = -H°/RT, d(mu°/RT)/d ln P = P V/RT; rows scaled to unit length.
    """
    present, X, C, S, TP = _jacobian_layout(case, system, count, spec)
    x = n[present] / totals[phase_of[present]]
    J = np.concatenate((S @ np.column_stack((g_dlnT, g_dlnP)) + TP, X * x + C), axis=1)
    norms = np.sqrt(np.einsum("ij,ij->i", J, J))
    J /= np.where(norms > 0, norms, 1.0)[:, None]
    sv = np.linalg.svd(J, compute_uv=False)
    return float(sv[-1] / sv[0]) if sv.size and sv[0] > 0 else 0.0
