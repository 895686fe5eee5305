"""Chemical system: phases, phase-species, elements and the exact formula matrix.

A *phase-species* is one species in one phase (design §2); H2O in a gas and H2O in a
liquid are two phase-species, and the transfer between them is a reaction like any
other.  The formula matrix ``A`` has one row per element that occurs, plus a row
``charge`` when any species is charged (the electron is a species; cantera's pseudo
element ``E`` is replaced by the charge row so that it is not counted twice).

Two sources: a Cantera-format YAML mechanism (all its phases or the ones named), or
species lists per phase picked from the thermo databases that ship with cantera
(``nasa_gas.yaml`` for an ideal-gas phase, ``nasa_condensed.yaml`` for condensed phases).
"""
from __future__ import annotations

import dataclasses
import difflib
import functools
import re
import warnings
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import Iterator, Mapping, Sequence


from .cache import remember
from .errors import CoefficientError, MechanismError, Problem
from .settings import COEFFICIENT_MAX_DENOMINATOR, COEFFICIENT_TOLERANCE
from .exact import as_simple_fraction

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


def _close(name: str, known: Sequence[str], n: int = 5) -> list[str]:
    """Closest names, comparing case-insensitively (``HCl`` finds ``HCL``)."""
    upper = {k.upper(): k for k in known}
    hits = difflib.get_close_matches(name.upper(), list(upper), n=n, cutoff=0.6)
    return [upper[h] for h in hits]


def unknown_name_message(kind: str, name: str, known: Sequence[str], where: str) -> str:
    hint = _close(name, known)
    tail = f"; closest names: {', '.join(hint)}" if hint else ""
    return f"unknown {kind} {name!r} in {where}{tail}"


def _cantera():
    import cantera as ct
    return ct


@functools.lru_cache(maxsize=4)
def packaged_species(database: str) -> dict[str, object]:
    """Species of a database shipped with cantera, by name (cached: parsing costs ~0.3 s)."""
    ct = _cantera()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return {s.name: s for s in ct.Species.list_from_file(database)}


def _formula_and_charge(sp, source: str = "") -> tuple[Formula, Fraction]:
    comp = {k: v for k, v in sp.composition.items() if k not in ("E",)}
    formula = {}
    for k, v in comp.items():
        if float(v).is_integer():
            formula[k] = int(v)
            continue
        f = as_simple_fraction(v, COEFFICIENT_MAX_DENOMINATOR, COEFFICIENT_TOLERANCE)
        if f is None:
            raise MechanismError.single(source or "mechanism", f"species {sp.name}: element amount {v!r} of {k} is "
                                        f"not within {COEFFICIENT_TOLERANCE:g} of a fraction with denominator <= "
                                        f"{COEFFICIENT_MAX_DENOMINATOR}", "species")
        formula[k] = f
    charge = as_simple_fraction(sp.charge, COEFFICIENT_MAX_DENOMINATOR, COEFFICIENT_TOLERANCE) or Fraction(0)
    return Formula(formula), charge


def _site_sizes(source: str, sps) -> dict[str, Fraction]:
    """Sites each species of an interface occupies (cantera's ``Species.size``; ``sites:`` in
    the file, 1 by default), exact."""
    out = {}
    for sp in sps:
        f = as_simple_fraction(float(sp.size), COEFFICIENT_MAX_DENOMINATOR, COEFFICIENT_TOLERANCE)
        if f is None or f <= 0:
            raise MechanismError.single(source or "mechanism", f"species {sp.name}: site size {sp.size!r} is not a "
                                        f"positive fraction with denominator <= {COEFFICIENT_MAX_DENOMINATOR}",
                                        "species")
        out[sp.name] = f
    return out


def _thermo_range(sp) -> tuple[float, float]:
    try:
        return float(sp.thermo.min_temp), float(sp.thermo.max_temp)
    except Exception:  # a species without a parametrised thermo model
        return 0.0, float("inf")


def _assemble(source: str, raw: list[tuple[str, str, bool, list]], reactions=(), library_warnings=(),
              site_phases: Sequence[str] = ()) -> ChemicalSystem:
    """raw: (phase name, model, is_gas, [cantera Species]) in order; ``site_phases``: the
    interfaces whose total site count is a conserved row ("sites of PHASE")."""
    counts: dict[str, int] = {}
    for _, _, _, sps in raw:
        for sp in sps:
            counts[sp.name] = counts.get(sp.name, 0) + 1
    species: list[SpeciesDef] = []
    phases: list[PhaseDef] = []
    elements: list[str] = []
    charged = False
    for pname, model, is_gas, sps in raw:
        labels = []
        for sp in sps:
            formula, charge = _formula_and_charge(sp, source)
            label = sp.name if counts[sp.name] == 1 else f"{sp.name}[{pname}]"
            t_min, t_max = _thermo_range(sp)
            species.append(SpeciesDef(sp.name, pname, label, formula, charge, t_min, t_max, source,
                                      float(sp.molecular_weight)))
            labels.append(label)
            for e in formula:
                if e not in elements:
                    elements.append(e)
            charged = charged or charge != 0
        phases.append(PhaseDef(pname, model, tuple(labels), is_gas))
    rows = [tuple(_norm(s.formula.get(e, 0)) for s in species) for e in elements]
    for pname in site_phases:
        sizes = _site_sizes(source, next(sps for n, _, _, sps in raw if n == pname))
        rows.append(tuple(_norm(sizes[s.name]) if s.phase == pname else 0 for s in species))
        elements.append(SITES_PREFIX + pname)
    if charged:
        elements.append(CHARGE)
        rows.append(tuple(_norm(s.charge) for s in species))
    return ChemicalSystem(source, tuple(phases), tuple(species), tuple(elements), tuple(rows), tuple(reactions),
                          tuple(library_warnings))


def _norm(x: Fraction) -> Fraction | int:
    if type(x) is int:
        return x
    x = Fraction(x)
    return x.numerator if x.denominator == 1 else x


# ---------------------------------------------------------------- packaged databases

def from_packaged(phases: Mapping[str, Sequence[str]], where: str = "system.phases") -> ChemicalSystem:
    """Phases of species picked by name from the databases shipped with cantera.

    Raises
    ------
    MechanismError
        Listing every unknown species (with the closest known names) and every phase
        that mixes gas and condensed species.
    """
    gas_db = packaged_species(GAS_DATABASE)
    cond_db = packaged_species(CONDENSED_DATABASE)
    problems: list[Problem] = []
    raw = []
    for pname, names in phases.items():
        sps, kinds = [], set()
        for i, name in enumerate(names):
            if name in gas_db:
                sps.append(gas_db[name]); kinds.add("gas")
            elif name in cond_db:
                sps.append(cond_db[name]); kinds.add("condensed")
            else:
                problems.append(Problem("packaged databases", unknown_name_message(
                    "species", name, list(gas_db) + list(cond_db), f"{GAS_DATABASE} or {CONDENSED_DATABASE}"),
                    f"{where}.{pname}[{i}]"))
        if len(kinds) > 1:
            problems.append(Problem("packaged databases", f"phase {pname!r} mixes gas species "
                                    f"({', '.join(n for n in names if n in gas_db)}) with condensed species "
                                    f"({', '.join(n for n in names if n in cond_db)}); put them in separate phases",
                                    f"{where}.{pname}"))
        if not names:
            problems.append(Problem("packaged databases", f"phase {pname!r} lists no species", f"{where}.{pname}"))
        twice = sorted({n for n in names if list(names).count(n) > 1})
        if twice:
            problems.append(Problem("packaged databases", f"phase {pname!r} lists {', '.join(twice)} more than once",
                                    f"{where}.{pname}"))
        is_gas = kinds == {"gas"}
        model = "ideal-gas" if is_gas else ("fixed-stoichiometry" if len(sps) == 1 else "ideal-condensed")
        raw.append((pname, model, is_gas, sps))
    if problems:
        raise MechanismError(problems)
    return _assemble("packaged", raw)


# ---------------------------------------------------------------- mechanism files

def shipped_data_file(name: str) -> Path | None:
    """A data file shipped with cantera (``gri30.yaml``, ``example_data/...``), for a name not
    found where the user said; never looked up in the current directory."""
    if Path(name).is_absolute() or ".." in Path(name).parts:
        return None
    try:
        import cantera as ct
    except ImportError:
        return None
    for d in ct.get_data_directories():
        if not Path(d).is_absolute():
            continue  # '.' is the current directory: a case must not depend on where it is run
        for candidate in (Path(d) / name, Path(d) / "example_data" / name):
            if candidate.is_file():
                return candidate.resolve()
    return None


_TOP_KEY = re.compile(r"^[A-Za-z_][\w-]*\s*:")
_TOP_KEY_ML = re.compile(r"^[A-Za-z_][\w-]*\s*:", re.M)


def mechanism_phase_names(path: str | Path) -> list[str]:
    """Names of the phases a Cantera-format YAML file defines, in file order."""
    return [str(p["name"]) for p in mechanism_phase_entries(path)]


def mechanism_phase_entries(path: str | Path) -> list[dict]:
    """The entries of a Cantera-format YAML file's ``phases:`` list, without parsing the whole file.

    Full YAML parsing of a large mechanism takes seconds, so only the top-level
    ``phases:`` block is cut out and parsed.
    """
    return list(_phase_entries(*_file_key(Path(path))))


def _file_key(path: Path) -> tuple[str, int, int]:
    try:
        st = path.stat()
    except OSError as exc:
        raise MechanismError.single(path, f"cannot read mechanism file: {exc}") from None
    return str(path), st.st_mtime_ns, st.st_size


@functools.lru_cache(maxsize=16)
def _phase_entries(path_text: str, _mtime: int, _size: int) -> tuple[dict, ...]:
    import yaml
    path = Path(path_text)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise MechanismError.single(path, f"cannot read mechanism file: {exc}") from None
    # the block runs from a line starting 'phases:' to the next top-level key (found by
    # searching the text: splitting an 8 MB file into lines costs more than the parse)
    at = 0 if text.startswith("phases:") else text.find("\nphases:") + 1
    if at == 0 and not text.startswith("phases:"):
        raise MechanismError.single(path, "no top-level 'phases:' section: not a Cantera-format mechanism")
    nl = text.find("\n", at)
    nxt = _TOP_KEY_ML.search(text, nl + 1 if nl >= 0 else len(text))
    block_text = text[at:nxt.start() if nxt else len(text)]
    start = text.count("\n", 0, at)    # 0-based line of 'phases:'
    try:
        try:   # libyaml when present (same result, faster); errors are worded by the Python parser
            block = yaml.load(block_text, Loader=getattr(yaml, "CSafeLoader", yaml.SafeLoader))
        except yaml.YAMLError:
            block = yaml.safe_load(block_text)
        entries = tuple(dict(p) for p in block["phases"])
        for p in entries:
            p["name"] = str(p["name"])
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = start + 1 + mark.line if mark else start + 1
        what = getattr(exc, "problem", None) or "cannot be parsed"
        raise MechanismError.single(path, f"malformed 'phases:' section: {what}", "phases", line) from None
    except (TypeError, KeyError, AttributeError, ValueError):
        raise MechanismError.single(path, "malformed 'phases:' section: expected a list of phases, each with a "
                                    "'name'", "phases", start + 1) from None
    return entries


def _canonical(value) -> str:
    """A comparable text of a ``species:`` or ``reactions:`` entry (lists of names as sets)."""
    import json

    def norm(v):
        if isinstance(v, dict):
            return {str(k): norm(x) for k, x in v.items()}
        if isinstance(v, list):
            items = [norm(x) for x in v]
            if all(isinstance(x, str) for x in items):
                return sorted(items)
            return items
        return v
    return json.dumps(norm(value), sort_keys=True, default=str)


GAS_MODELS = ("ideal-gas", "Redlich-Kwong", "Peng-Robinson", "plasma")


def _alternative_key(entry: dict) -> tuple[str, str, bool, str]:
    species = _canonical(entry.get("species", "all"))
    kinetics = entry.get("kinetics")
    reactions = "none" if kinetics in (None, "none") else _canonical(entry.get("reactions", "all"))
    return species, reactions, entry.get("thermo") in GAS_MODELS, str(entry.get("thermo"))


def are_alternatives(a: dict, b: dict) -> bool:
    """Two phase entries model one mixture when they list the same species and either both
    are gases (a gas mixture never splits into two gas phases) or they hold the same
    reactions under different thermo models (an ideal and a real-fluid model).  Two
    condensed phases defined alike may be the two liquids of a split, so they are not."""
    ka, kb = _alternative_key(a), _alternative_key(b)
    return ka[0] == kb[0] and ((ka[2] and kb[2]) or (ka[1] == kb[1] and ka[3] != kb[3]))


def default_phases(path: str | Path) -> tuple[list[str], list[tuple[str, str]]]:
    """The phases used when none are named: every phase of the file except a later
    alternative model of one already used (cantera itself loads the first phase of a file).

    Returns (phases used, [(phase set aside, the alternative used instead)]).
    """
    entries = mechanism_phase_entries(path)
    used: list[dict] = []
    aside: list[tuple[str, str]] = []
    for e in entries:
        twin = next((u for u in used if are_alternatives(u, e)), None)
        if twin is None:
            used.append(e)
        else:
            aside.append((e["name"], twin["name"]))
    return [u["name"] for u in used], aside


def alternative_pairs(path: str | Path, names: Sequence[str]) -> list[tuple[str, str]]:
    """Pairs among ``names`` that are alternative models of one mixture (see :func:`are_alternatives`)."""
    by_name = {e["name"]: e for e in mechanism_phase_entries(path)}
    chosen = [by_name[n] for n in dict.fromkeys(names) if n in by_name]
    return [(a["name"], b["name"]) for i, a in enumerate(chosen) for b in chosen[i + 1:] if are_alternatives(a, b)]


def alternatives_message(path: str | Path, a: str, b: str) -> str:
    return (f"phases {a!r} and {b!r} of {Path(path).name} list the same species and "
            f"{'reactions' if _alternative_key(_entry(path, a))[1] == _alternative_key(_entry(path, b))[1] else 'are both gases'}"
            f": they are alternative models of one mixture, not two phases that coexist; name only one of them")


def _entry(path, name: str) -> dict:
    return next(e for e in mechanism_phase_entries(path) if e["name"] == name)


def _load_phase(ct, path: Path, name: str, notes: list[str]):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        # transport data are never used here, and a file's transport model may lack them
        sol = ct.Solution(str(path), name, transport_model=None)
        if sol.thermo_model in ("ideal-surface", "coverage-dependent-surface", "edge"):
            # an interface's reactions involve its adjacent phases: cantera loads them
            sol = ct.Interface(str(path), name, transport_model=None)
    notes.extend(_library_note(w.message) for w in caught)
    return sol


_LOADED: dict = {}   # (file, phase, mtime, size) -> (cantera object, cantera's warnings)


def cantera_phase(path: str | Path, name: str):
    """The cantera object of one phase of a mechanism file, and what cantera warned while
    building it; built once per file version and shared by every stage (building a large
    mechanism takes seconds).  Callers only read it or set its state."""
    ct = _cantera()
    path = Path(path)
    st = path.stat()
    key = (str(path.resolve()), name, st.st_mtime_ns, st.st_size)
    if key not in _LOADED:
        notes: list[str] = []
        sol = _load_phase(ct, path, name, notes)
        remember(_LOADED, key, (sol, tuple(notes)), 64)
    return _LOADED[key]


def _library_note(message) -> str:
    """One line from a cantera warning (kept in cantera's words)."""
    text = " ".join(str(message).split())
    return text[:400]


def _cantera_message(exc: Exception) -> str:
    text = str(exc).strip()
    # cantera's own words, without its banner lines and without the excerpt of the file it
    # quotes ("|  Line |", "|   12 | ...", ">   13 > ...", a caret line): the line number stays
    lines = [ln for ln in text.splitlines() if ln.strip() and not set(ln.strip()) <= set("*-^ ")
             and not ln.lstrip().startswith(("|", ">"))]
    return " ".join(ln.strip() for ln in lines[:6])


def load_phases(path: str | Path, phase_names: Sequence[str] | None = None, notes: list[str] | None = None,
                set_aside: list[tuple[str, str]] | None = None):
    """Cantera objects for the named phases of a mechanism (default: :func:`default_phases`),
    with interface neighbours.

    Returns a list of (name, Solution) in order; the adjacent bulk phases of an
    interface are added after the phases asked for when they are not already there.
    Two named phases that are alternative models of one mixture are refused;
    ``set_aside`` receives the alternatives left out by default.
    """
    path = Path(path)
    if not path.is_file():
        raise MechanismError.single(path, "mechanism file not found")
    available = mechanism_phase_names(path)
    if phase_names:
        names = list(dict.fromkeys(phase_names))
        problems = [Problem(str(path), unknown_name_message("phase", n, available, path.name), "phases")
                    for n in names if n not in available]
        problems += [Problem(str(path), alternatives_message(path, a, b), "phases")
                     for a, b in (alternative_pairs(path, names) if not problems else ())]
    else:
        names, aside = default_phases(path)
        problems = []
        if set_aside is not None:
            set_aside.extend(aside)
    if problems:
        raise MechanismError(problems)
    loaded: dict[str, object] = {}
    notes = [] if notes is None else notes
    for n in names:
        try:
            sol, warned = cantera_phase(path, n)
            notes.extend(warned)
        except Exception as exc:  # cantera's error text is shown as it is
            raise MechanismError.single(path, f"cantera cannot build phase {n!r}: {_cantera_message(exc)}",
                                        f"phases[{n}]") from None
        if sol.n_species == 0:   # cantera refuses this today; kept so a later version cannot slip it by
            raise MechanismError.single(path, f"phase {n!r} has no species", f"phases[{n}]")
        loaded[n] = sol
        for adj_name, adj in getattr(sol, "adjacent", {}).items():
            loaded.setdefault(adj_name, adj)
    return list(loaded.items())


def _exact_coefficient(value: float, path: Path, equation: str, species: str, phase: str = "") -> Fraction:
    f = as_simple_fraction(value, COEFFICIENT_MAX_DENOMINATOR, COEFFICIENT_TOLERANCE)
    if f is None:
        raise CoefficientError.single(
            path, f"stoichiometric coefficient {value!r} of {species} in reaction '{equation}' is not within "
            f"{COEFFICIENT_TOLERANCE:g} of a fraction with denominator <= {COEFFICIENT_MAX_DENOMINATOR}",
            f"phases[{phase}].reactions" if phase else "reactions")
    return f


def _net_pairs(path: Path, pname: str, sol) -> list[tuple[str, dict[int, int | Fraction]]]:
    """(equation, {kinetics species index: exact net coefficient}) for each reaction of a
    phase's kinetics, products positive.

    Read from cantera's reactant and product coefficient dicts, from which cantera builds
    its own stoichiometric matrices: no dense reactions x species arrays, and no import
    of scipy (which alone costs more than this whole extraction for 5000 reactions).
    """
    index: dict[str, int] = {}
    for k, nm in enumerate(sol.kinetics_species_names):
        index.setdefault(nm, k)          # cantera resolves a name to its first kinetics species

    def position(nm: str) -> int:
        k = index.get(nm)
        if k is None:   # a name cantera matches otherwise (e.g. 'E' for the electron 'e')
            k = index[nm] = sol.kinetics_species_index(nm)
        return k

    out = []
    for rxn in sol.reactions():
        net: dict[int, float] = {}
        for nm, x in rxn.reactants.items():
            k = position(nm)
            net[k] = net.get(k, 0.0) - float(x)
        for nm, x in rxn.products.items():
            k = position(nm)
            net[k] = net.get(k, 0.0) + float(x)
        exact_net = {}
        for k, x in net.items():
            if x.is_integer():
                if x:
                    exact_net[k] = int(x)
                continue
            c = _exact_coefficient(x, path, rxn.equation, sol.kinetics_species_names[k], pname)
            exact_net[k] = c.numerator if c.denominator == 1 else c
        out.append((rxn.equation, exact_net))
    return out


def _site_creating(ct, path: Path, loaded, kinetic) -> set[str]:
    """Interfaces among ``loaded`` whose total site count some reaction of ``kinetic`` changes.

    Cantera checks the site balance of a reaction on its own interface only; a reaction
    of an edge can still change the site total of an adjacent surface.  Each interface is
    checked against every kinetics object that holds its species, exactly (sizes and
    coefficients as fractions).
    """
    interfaces = {n for n, sol in loaded if sol.thermo_model in INTERFACE_MODELS}
    creating: set[str] = set()
    if not interfaces:
        return creating
    for name, sol in kinetic:
        if not getattr(sol, "n_reactions", 0):
            continue
        weights: dict[int, tuple[str, Fraction]] = {}
        k0 = 0
        for ph_name, ph in [(name, sol)] + list(getattr(sol, "adjacent", {}).items()):
            if ph_name in interfaces:
                sizes = _site_sizes(str(path), [ph.species(k) for k in range(ph.n_species)])
                for k in range(ph.n_species):
                    weights[k0 + k] = (ph_name, sizes[ph.species_name(k)])
            k0 += ph.n_species
        if not weights:
            continue
        totals: dict[tuple[str, int], Fraction] = {}
        for j, (_, net) in enumerate(_net_pairs(path, name, sol)):
            for k, c in net.items():
                if k in weights:
                    ph_name, size = weights[k]
                    totals[ph_name, j] = totals.get((ph_name, j), Fraction(0)) + size * c
        creating |= {ph_name for (ph_name, _), t in totals.items() if t != 0}
    return creating


def _mechanism_reactions(ct, path: Path, pname: str, sol, offsets: dict[str, int], system_names) -> list[MechanismReaction]:
    """Net exact stoichiometry of every reaction of one phase's kinetics, over the system's
    phase-species (see :func:`_net_pairs`)."""
    n_rxn = getattr(sol, "n_reactions", 0)
    if not n_rxn:
        return []
    # kinetics species: the phase itself, then its adjacent phases (checked by name)
    parts = [(pname, sol)] + list(getattr(sol, "adjacent", {}).items())
    kin_to_system: list[int] = []
    for ph_name, ph in parts:
        for k in range(ph.n_species):
            kin_to_system.append(offsets[ph_name] + k)
    kin_names = sol.kinetics_species_names
    if len(kin_names) != len(kin_to_system) or any(
            system_names[i] != nm for i, nm in zip(kin_to_system, kin_names)):
        raise MechanismError.single(path, f"cannot map the kinetics species of phase {pname!r} to its phases", "phases")
    out = []
    for equation, net in _net_pairs(path, pname, sol):
        out.append(MechanismReaction(equation, tuple(sorted((kin_to_system[k], c) for k, c in net.items())), pname))
    return out


def from_mechanism(path: str | Path, phase_names: Sequence[str] | None = None,
                   species: Mapping[str, Sequence[str]] | None = None,
                   with_reactions: bool = True) -> ChemicalSystem:
    """All (or the named) phases of a Cantera-format mechanism, and their reactions.

    ``species`` optionally restricts a phase to a subset of its species (case files);
    reactions are then not read, because they may involve the species left out.
    """
    ct = _cantera()
    path = Path(path)
    notes: list[str] = []
    aside: list[tuple[str, str]] = []
    loaded = load_phases(path, phase_names, notes, aside)
    raw = []
    problems = []
    for name, sol in loaded:
        sps = [sol.species(k) for k in range(sol.n_species)]
        if species and name in species:
            known = {s.name: s for s in sps}
            chosen = []
            for i, nm in enumerate(species[name]):
                if nm in known:
                    chosen.append(known[nm])
                else:
                    problems.append(Problem(str(path), unknown_name_message("species", nm, list(known), f"phase {name!r}"),
                                            f"system.phases.{name}[{i}]"))
            sps = chosen
        is_gas = sol.thermo_model in ("ideal-gas", "Redlich-Kwong", "Peng-Robinson", "plasma")
        raw.append((name, sol.thermo_model, is_gas, sps))
    if problems:
        raise MechanismError(problems)
    # the kinetics whose reactions are the system's: not those of a phase brought in only
    # as the neighbour of a named interface
    kinetic = [(name, sol) for name, sol in loaded
               if not (phase_names and name not in phase_names
                       and any(name in getattr(s, "adjacent", {}) for _, s in loaded))]
    creating = _site_creating(ct, path, loaded, kinetic)
    site_phases = [name for name, model, _, _ in raw if model in INTERFACE_MODELS and name not in creating]
    system = _assemble(str(path), raw, library_warnings=tuple(dict.fromkeys(notes)), site_phases=site_phases)
    system = dataclasses.replace(system, file_phases=tuple(mechanism_phase_names(path)), set_aside=tuple(aside),
                                 site_creating=tuple(n for n, model, _, _ in raw if n in creating))
    if not with_reactions or species:
        return system
    offsets, n = {}, 0
    for name, _, _, sps in raw:
        offsets[name] = n
        n += len(sps)
    reactions = []
    for name, sol in kinetic:
        reactions.extend(_mechanism_reactions(ct, path, name, sol, offsets, [sp.name for sp in system.species]))
    return dataclasses.replace(system, reactions=tuple(reactions))


_FORMULA_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)")


def _parse_formula(text: str) -> dict[str, int] | None:
    """``CH4O`` -> {C: 1, H: 4, O: 1}; None when the text is not a plain formula."""
    if not text or "".join(m.group(0) for m in _FORMULA_TOKEN.finditer(text)) != text:
        return None
    out: dict[str, int] = {}
    for el, n in _FORMULA_TOKEN.findall(text):
        out[el.upper()] = out.get(el.upper(), 0) + int(n or 1)
    return out


def search_species(query: str, limit: int = 40) -> list[dict]:
    """Species of the packaged databases whose name contains ``query`` (any case) or whose
    formula equals it; exact name matches first."""
    q = query.strip()
    formula = _parse_formula(q)
    hits = []
    for db, kind in ((GAS_DATABASE, "gas"), (CONDENSED_DATABASE, "condensed")):
        for name, sp in packaged_species(db).items():
            comp = {k.upper(): v for k, v in sp.composition.items() if k != "E"}
            by_formula = formula is not None and comp == {k: float(v) for k, v in formula.items()}
            if q.upper() in name.upper() or by_formula:
                t_min, t_max = _thermo_range(sp)
                hits.append({"name": name, "kind": kind, "database": db,
                             "formula": "".join(f"{k}{'' if v == 1 else int(v) if float(v).is_integer() else v}"
                                                for k, v in sp.composition.items() if k != "E"),
                             "charge": int(sp.charge) if float(sp.charge).is_integer() else sp.charge,
                             "t_min": t_min, "t_max": t_max,
                             "_rank": (name.upper() != q.upper(), not by_formula, not name.upper().startswith(q.upper()), len(name))})
    hits.sort(key=lambda h: h["_rank"])
    for h in hits:
        del h["_rank"]
    return hits[:limit]
