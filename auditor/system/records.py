"""Chemical system: phases, phase-species, elements and the exact formula matrix.

A *phase-species* is one species in one phase; H2O in a gas and H2O in a
liquid are two phase-species, and the transfer between them is a reaction like any
other.  The formula matrix ``A`` has one row per element that occurs, plus a row
``charge`` when any species is charged (the electron is a species; cantera's pseudo
element ``E`` is replaced by the charge row so that it is not counted twice).

Two sources: a Cantera-format YAML mechanism (all its phases or the ones named), or
species lists per phase picked from the thermo databases that ship with cantera
(``nasa_gas.yaml`` for an ideal-gas phase, ``nasa_condensed.yaml`` for condensed phases).
"""
from __future__ import annotations

import difflib
import functools
from dataclasses import dataclass
from fractions import Fraction
from typing import Iterator, Mapping, Sequence

GAS_DATABASE = "nasa_gas.yaml"
SITES_PREFIX = "sites of "   # name of an interface's site-conservation row: "sites of Pt_surf"
# cantera thermo models of interfaces: their species occupy sites (cantera's Species.size)
INTERFACE_MODELS = ("ideal-surface", "coverage-dependent-surface", "edge")
CONDENSED_DATABASE = "nasa_condensed.yaml"
CHARGE = "charge"


class Formula(Mapping[str, Fraction]):
    """Exact read-only mapping element -> amount; equality and hash are exact."""

    __slots__ = ("_items",)

    def __init__(self, items: Mapping[str, object] | Sequence[tuple[str, object]] = ()):
        pairs = items.items() if isinstance(items, Mapping) else items
        # whole amounts kept as int (equal, with equal hashes, to the Fraction): one exact form
        self._items = tuple(sorted((str(k), _exact_value(v)) for k, v in pairs if v != 0))

    def __getitem__(self, key: str) -> Fraction:
        for k, v in self._items:
            if k == key:
                return v
        raise KeyError(key)

    def __iter__(self) -> Iterator[str]:
        return (k for k, _ in self._items)

    # direct versions of the Mapping mixins (which go through __getitem__, a linear search)
    def get(self, key: str, default=None):
        for k, v in self._items:
            if k == key:
                return v
        return default

    def items(self):
        return self._items

    def values(self):
        return tuple(v for _, v in self._items)

    def __len__(self) -> int:
        return len(self._items)

    def __hash__(self) -> int:
        return hash(self._items)

    def __eq__(self, other: object) -> bool:
        if isinstance(other, Formula):
            return self._items == other._items
        if isinstance(other, Mapping):
            return self == Formula(other)
        return NotImplemented

    def __repr__(self) -> str:
        return "Formula({" + ", ".join(f"{k!r}: {v}" for k, v in self._items) + "})"


def _exact_value(v) -> int | Fraction:
    if type(v) is int:
        return v
    f = Fraction(v)
    return f.numerator if f.denominator == 1 else f


@dataclass(frozen=True)
class SpeciesDef:
    """One phase-species."""

    name: str            # the species name in its source
    phase: str           # the phase it belongs to
    label: str           # unique label in the system: name, or name[phase] when ambiguous
    formula: Formula     # atoms per molecule (the electron pseudo-element excluded)
    charge: Fraction
    t_min: float         # thermo data validity range, K
    t_max: float
    database: str        # file the species definition came from
    molar_mass: float = float("nan")   # kg/kmol (g/mol), cantera's molecular_weight


@dataclass(frozen=True)
class PhaseDef:
    name: str
    model: str           # cantera thermo model: ideal-gas, fixed-stoichiometry, ideal-condensed, ...
    species: tuple[str, ...]  # labels of its phase-species
    is_gas: bool


@dataclass(frozen=True)
class MechanismReaction:
    """A reaction read from a mechanism: its equation and net exact stoichiometry."""

    equation: str
    stoich: tuple[tuple[int, int | Fraction], ...]  # (phase-species index, net coefficient, products > 0)
    phase: str


@dataclass(frozen=True)
class ChemicalSystem:
    source: str                       # "packaged" or the mechanism path
    phases: tuple[PhaseDef, ...]
    species: tuple[SpeciesDef, ...]   # phase-species, phase by phase
    elements: tuple[str, ...]         # rows of the formula matrix (may end with "charge")
    formula_matrix: tuple[tuple[Fraction | int, ...], ...]
    reactions: tuple[MechanismReaction, ...] = ()   # the mechanism's own reactions, if any
    library_warnings: tuple[str, ...] = ()          # what cantera warned about while loading
    file_phases: tuple[str, ...] = ()               # every phase the mechanism file defines
    set_aside: tuple[tuple[str, str], ...] = ()     # (phase not used, the alternative model used instead)
    site_creating: tuple[str, ...] = ()             # interfaces whose reactions change their site total
    condensed_in_gas: tuple[tuple[str, str, str], ...] = ()  # (gas phase, species, why it is condensed)

    @functools.cached_property
    def labels(self) -> tuple[str, ...]:
        return tuple(s.label for s in self.species)

    @property
    def n_species(self) -> int:
        return len(self.species)

    def index(self, label: str) -> int:
        return self._index()[label]

    def find(self, name: str) -> list[int]:
        """Indices of phase-species whose label or plain name is ``name``."""
        idx = self._index()
        if name in idx:
            return [idx[name]]
        return [i for i, s in enumerate(self.species) if s.name == name]

    def index_in(self, name: str, phase: str) -> int:
        """Index of the phase-species called ``name`` (label or plain name) in ``phase``."""
        return next(i for i in self.find(name) if self.species[i].phase == phase)

    def phase(self, name: str) -> PhaseDef:
        for p in self.phases:
            if p.name == name:
                return p
        raise KeyError(name)

    def phase_indices(self, name: str) -> list[int]:
        return [i for i, s in enumerate(self.species) if s.phase == name]

    def column(self, k: int) -> dict[int, Fraction | int]:
        """Sparse column ``k`` of the formula matrix."""
        return {e: row[k] for e, row in enumerate(self.formula_matrix) if row[k] != 0}

    def _index(self) -> dict[str, int]:
        return _label_index(self.labels)


@functools.lru_cache(maxsize=64)
def _label_index(labels: tuple[str, ...]) -> dict[str, int]:
    return {lab: i for i, lab in enumerate(labels)}


def _close(name: str, known: Sequence[str], n: int = 5, formulas: Mapping[str, Mapping] | None = None,
           chemistry: bool = False) -> list[str]:
    """Closest names, comparing case-insensitively (``HCl`` finds ``HCL``); for species, the
    names that are the same chemistry come first (``H20`` -> ``H2O``, ``OCS`` -> ``COS``)."""
    from .names import chemistry_matches
    out = chemistry_matches(name, known, formulas) if chemistry else []
    upper = {k.upper(): k for k in known}
    hits = difflib.get_close_matches(name.upper(), list(upper), n=n, cutoff=0.6)
    out += [upper[h] for h in hits if upper[h] not in out]
    return out[:n]


def unknown_name_message(kind: str, name: str, known: Sequence[str], where: str,
                         formulas: Mapping[str, Mapping] | None = None) -> str:
    """'unknown KIND NAME in WHERE' with the closest known names (for a species: by chemistry
    first, ``formulas`` giving the element counts of known names when the caller has them)."""
    hint = _close(name, known, formulas=formulas, chemistry=kind == "species")
    tail = f"; closest names: {', '.join(hint)}" if hint else ""
    return f"unknown {kind} {name!r} in {where}{tail}"

