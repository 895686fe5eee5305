"""What one case's solves and certificates share: the per-case workspace.

``confirm`` creates a :class:`Workspace` for a system and its reaction analysis (or is
handed one: a sweep evaluates many points of one case with one workspace) and passes it
down.  It holds the cantera phases (:class:`PhaseModel`), the arrays of the case
(:class:`CaseArrays`), and tables filled as the solves meet them: the cantera ``Mixture``
of each set of species that can form, what the certificate needs for each set of present
species, the absent phases' species for each set of present phases, and the Jacobian layout
of the counting stages last seen.  Each table is bounded (``TABLE_ENTRIES``), so a long
sweep does not grow memory.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np

from .. import settings
from ..case import Case
from ..stoichiometry import ReactionAnalysis, basis_within
from ..system import ChemicalSystem, feed_moles
from .model import IDEAL_MODELS, PhaseModel

RESTARTS = 2        # cantera restarts from other starting estimates for the uniqueness check
TABLE_ENTRIES = 64  # entries kept per table of a workspace (present sets, absent-phase groups, mixtures)


def direction_matrix(vectors, n_species: int) -> np.ndarray:
    """Sparse vectors (species index -> coefficient) as the rows of a float matrix."""
    V = np.zeros((len(vectors), n_species))
    for i, v in enumerate(vectors):
        for k, c in v.items():
            V[i, k] = float(c)
    return V


def feed_vector(case: Case, system: ChemicalSystem) -> np.ndarray:
    """The feed's amounts, mol, per phase-species of the system."""
    n0 = np.zeros(system.n_species)
    for name, amount in feed_moles(case, system) or ():
        n0[system.find(name)[0]] += float(amount)
    return n0


@dataclass(frozen=True)
class CaseArrays:
    """The arrays of a case that no state changes (built once per workspace)."""

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
    condensed: np.ndarray           # per species: in a phase that is not a gas
    condensed_low: float            # every condensed species' data are valid from condensed_low
    condensed_high: float           # to condensed_high (within settings.THERMO_RANGE_TOLERANCE_K)
    ideal: bool                     # every usable phase has an ideal model (G convex)
    potential_names: tuple

    @classmethod
    def from_stages(cls, system: ChemicalSystem, analysis: ReactionAnalysis, model: PhaseModel) -> "CaseArrays":
        ns, n_phases = system.n_species, len(system.phases)
        index = {p.name: i for i, p in enumerate(system.phases)}
        phase_of = np.array([index[s.phase] for s in system.species], dtype=int)
        membership = np.zeros((ns, n_phases))
        membership[np.arange(ns), phase_of] = 1.0
        directions = direction_matrix([dict(r.stoich) for r in analysis.derived_basis], ns)
        trials = []
        for trial in range(RESTARTS):
            signs = np.where(np.arange(directions.shape[0]) % 2 == trial % 2, 1.0, -1.0)
            trials.append((signs @ directions, signs[:, None] * directions))
        comb = np.zeros((len(analysis.dependent), len(analysis.reactions)))
        for i, d in enumerate(analysis.dependent):
            comb[i, d.index] = -1.0
            for j, c in d.combination:
                comb[i, j] += float(c)
        elements = [i for i, e in enumerate(system.elements) if e != "charge"]
        gas = {p.name for p in system.phases if p.is_gas}
        condensed = [s for s in system.species if s.phase not in gas]
        return cls(
            W=direction_matrix([dict(c.vector) for c in analysis.conserved], ns),
            phase_of=phase_of,
            solution=np.array([len(p.species) > 1 for p in system.phases]),
            directions=directions,
            usable_species=np.concatenate([[ok] * ph.n_species for ph, ok in zip(model.phases, model.usable)]),
            element_rows=np.array([[float(x) for x in system.formula_matrix[i]] for i in elements]).reshape(len(elements), ns),
            membership=membership,
            phase_species=tuple(np.flatnonzero(phase_of == p) for p in range(n_phases)),
            phase_labels=tuple(tuple(system.labels[k] for k in np.flatnonzero(phase_of == p)) for p in range(n_phases)),
            trial_directions=tuple(trials),
            lnk_rows=direction_matrix([dict(r.stoich) for r in analysis.reactions], ns),
            lnk_combination=comb,
            lnk_dependent=np.array([d.index for d in analysis.dependent], dtype=int),
            t_min=np.array([s.t_min for s in system.species]),
            t_max=np.array([s.t_max for s in system.species]),
            t_low=max((s.t_min for s in system.species), default=0.0),
            t_high=min((s.t_max for s in system.species), default=math.inf),
            condensed=np.array([s.phase not in gas for s in system.species], dtype=bool),
            condensed_low=max((s.t_min for s in condensed), default=0.0) - settings.THERMO_RANGE_TOLERANCE_K,
            condensed_high=min((s.t_max for s in condensed), default=math.inf) + settings.THERMO_RANGE_TOLERANCE_K,
            ideal=all(ph.model in IDEAL_MODELS for ph, ok in zip(system.phases, model.usable) if ok),
            potential_names=tuple(c.name if c.is_element else f"q{i}" for i, c in enumerate(analysis.conserved)))


def outside_range(arrays: CaseArrays, T: float) -> np.ndarray | None:
    """Per species: a condensed species whose thermo data do not cover ``T`` (closed interval,
    widened by ``settings.THERMO_RANGE_TOLERANCE_K``); None when every condensed species'
    data cover it (the common case, one comparison)."""
    if arrays.condensed_low <= T <= arrays.condensed_high:
        return None
    tol = settings.THERMO_RANGE_TOLERANCE_K
    return arrays.condensed & ((T < arrays.t_min - tol) | (T > arrays.t_max + tol))


@dataclass(frozen=True)
class PresentSpecies:
    """What the certificate needs for one set of present species (in a sweep the same set
    recurs at most points)."""

    index: np.ndarray          # present species
    basis: np.ndarray          # independent reactions among them, as rows over all species
    pinv: np.ndarray           # least-squares map from their mu/RT to element potentials
    rows: np.ndarray           # their conserved-quantity vectors (species x conserved)
    free: np.ndarray           # element-potential directions they leave undetermined


@dataclass(frozen=True)
class MixtureSlot:
    """The cantera Mixture of the phases that can form from one feed, with where each
    candidate species sits in it."""

    mixture: object | None     # cantera Mixture; None when no phase can form
    seeds: tuple               # per phase in the mixture: its candidate species' positions (trace seeds)
    in_mixture: np.ndarray     # per system species: in the mixture
    one_gas: bool = False      # the mixture is one ideal-gas phase (cantera's element-potential solver applies)
    neutral_seeds: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))  # positions of the uncharged species that may form
    whole: bool = False        # every species of the system is in the mixture (no mask to apply)


def _store(table: dict, key, value):
    """Keep ``key -> value``, first dropping the oldest entry when the table is full."""
    if len(table) >= TABLE_ENTRIES:
        table.pop(next(iter(table)))
    table[key] = value
    return value


class Workspace:
    """Per-case state shared by every solve and certificate of one system and reaction
    analysis.  The cantera phases and the arrays are built on first use (building them can
    fail, which ``confirm`` reports as a finding)."""

    def __init__(self, system: ChemicalSystem, analysis: ReactionAnalysis):
        self.system = system
        self.analysis = analysis
        self._mixtures: dict[bytes, MixtureSlot] = {}
        self._present: dict[bytes, PresentSpecies] = {}
        self._absent: dict[bytes, tuple[dict, dict]] = {}
        self._layout_stages: tuple = ()      # the counting stages the layouts below belong to
        self._layouts: dict = {}
        self._feeds: dict[tuple, tuple[np.ndarray, np.ndarray]] = {}
        self._last_feed: tuple = (None, None)  # (key, value) of the last feed asked, compared by value
        self.routes: dict[bytes, tuple[str, ...]] = {}   # candidate species -> routes (RouteSolver.routes; bounded)

    def feed(self, case: Case) -> tuple[np.ndarray, np.ndarray]:
        """The feed vector of ``case`` (``feed_vector``) and, per species, whether it may form
        from that feed (a species holding an element the feed lacks never can), kept by the
        feed's value; both read-only."""
        key = (case.feed, case.feed_mass)
        if self._feeds and self._last_feed[0] == key:
            return self._last_feed[1]      # the feed of the last call (a sweep over T and P: every point)
        got = self._feeds.get(key)
        if got is None:
            n0 = feed_vector(case, self.system)
            # only element rows count here, the charge row has both signs
            rows = self.arrays.element_rows
            candidate = ~(rows[rows @ n0 == 0] != 0).any(axis=0)
            n0.setflags(write=False)
            candidate.setflags(write=False)
            got = _store(self._feeds, key, (n0, candidate))
        self._last_feed = (key, got)
        return got

    @functools.cached_property
    def model(self) -> PhaseModel:
        return PhaseModel(self.system)

    @functools.cached_property
    def arrays(self) -> CaseArrays:
        return CaseArrays.from_stages(self.system, self.analysis, self.model)

    def mixture(self, candidate: np.ndarray) -> MixtureSlot:
        """One Mixture per set of species that can form, reused for every state (building one
        costs more than a solve); a phase none of whose species can form stays out of it."""
        key = candidate.tobytes()
        got = self._mixtures.get(key)
        if got is None:
            m = self.model
            offsets = np.cumsum([0] + [p.n_species for p in m.phases])
            keep = [ok and bool(candidate[lo:hi].any()) for ok, lo, hi in zip(m.usable, offsets[:-1], offsets[1:])]
            mixture = m.ct.Mixture([(ph, 0.0) for ph, k in zip(m.phases, keep) if k]) if any(keep) else None
            in_mixture = np.concatenate([[k] * ph.n_species for ph, k in zip(m.phases, keep)])
            # the candidate species of each phase in the mixture, as positions in the mixture
            # (each such phase gets a trace seed)
            position = np.cumsum(in_mixture) - 1
            seeds = [position[lo + np.flatnonzero(candidate[lo:hi])] for k, lo, hi
                     in zip(keep, offsets[:-1], offsets[1:]) if k]
            kept = [ph for ph, k in zip(self.system.phases, keep) if k]
            one_gas = len(kept) == 1 and kept[0].model == "ideal-gas"
            neutral = np.array([s.charge == 0 for s in self.system.species]) & candidate & in_mixture
            got = _store(self._mixtures, key, MixtureSlot(mixture, tuple(s for s in seeds if s.size), in_mixture,
                                                          one_gas, position[neutral], bool(in_mixture.all())))
        return got

    def present_species(self, present: np.ndarray, counted=None) -> PresentSpecies:
        """What the certificate needs for these present species.  ``counted``: the phase-rule
        count (its present species and the basis of reactions among them), whose basis is taken
        as it is when the sets agree instead of being computed again (``basis_within``)."""
        got = self._present.get(present.tobytes())
        if got is None:
            W = self.arrays.W
            idx = np.flatnonzero(present)
            within = tuple(int(k) for k in idx)
            if counted is not None and tuple(counted.present_species) == within:
                vectors = [dict(r.stoich) for r in counted.reactions_present]
            else:
                vectors = basis_within(self.analysis.reactions, len(present), within)
            basis = direction_matrix(vectors, len(present))
            rows = W[:, idx].T
            m = W.shape[0]
            if rows.size == 0:
                pinv, free = np.zeros((m, 0)), np.eye(m)
            else:
                # one SVD: lambda = V S^-1 U^T mu over the numerical rank; the rest of V is free
                # the thin SVD holds all of V when there are at least as many species as rows of
                # W (the common case; the full one would build a square U over every species)
                u, s, vt = np.linalg.svd(rows, full_matrices=rows.shape[0] < rows.shape[1])
                rank = int((s > 1e-10 * s[0]).sum()) if s.size else 0
                pinv = vt[:rank].T @ (u[:, :rank] / s[:rank]).T
                free = vt[rank:].T
            got = _store(self._present, present.tobytes(), PresentSpecies(idx, basis, pinv, rows, free))
        return got

    def absent_groups(self, phase_present: np.ndarray, candidate: np.ndarray) -> tuple[dict, dict]:
        """For the phases not present: the usable species that can form, by phase, and the
        phases that can never form (every species needs an element the feed lacks)."""
        key = phase_present.tobytes() + candidate.tobytes()
        got = self._absent.get(key)
        if got is None:
            a = self.arrays
            groups = {p: idx[a.usable_species[idx]] for p, idx in enumerate(a.phase_species) if not phase_present[p]}
            groups = {p: g for p, g in groups.items() if g.size}
            never = {p: math.inf for p, g in groups.items() if not candidate[g].any()}
            got = _store(self._absent, key, ({p: g[candidate[g]] for p, g in groups.items() if p not in never}, never))
        return got

    def jacobian_layouts(self, count, spec) -> dict:
        """The Jacobian layouts (``jacobian.build_layout``) of these counting stages, by kind
        of specification.  A sweep over T and P passes the same stages at every point and
        shares them; a new count (a new feed) starts a new table."""
        if len(self._layout_stages) != 2 or self._layout_stages[0] is not count or self._layout_stages[1] is not spec:
            self._layout_stages, self._layouts = (count, spec), {}
        return self._layouts
