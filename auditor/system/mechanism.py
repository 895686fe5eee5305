"""Phases, species and reactions of a Cantera-format YAML mechanism file.

A phase is loaded once per file version (``cantera_phase``) and shared by every stage.
Reaction coefficients are made exact; interfaces conserve their sites unless a reaction
creates or removes them; two models of one mixture (an ideal gas and its real-gas twin) are
alternatives, not two phases.
"""
from __future__ import annotations

import dataclasses
import functools
import warnings
from fractions import Fraction
from pathlib import Path
from typing import Mapping, Sequence

from ..errors import CoefficientError, MechanismError, Problem, one_line
from ..exact import as_simple_fraction
from ..settings import COEFFICIENT_MAX_DENOMINATOR, COEFFICIENT_TOLERANCE
from .assemble import _assemble, _cantera, _site_sizes
from .records import INTERFACE_MODELS, ChemicalSystem, MechanismReaction, unknown_name_message
from .phase_sets import condensed_in_gas
from .mechanism_file import alternative_pairs, alternatives_message, default_phases, mechanism_phase_names


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


@functools.lru_cache(maxsize=64)
def _loaded(path_text: str, name: str, _mtime: int, _size: int) -> tuple[object, tuple[str, ...]]:
    """One phase of one version of a mechanism file (the modification time and size make a
    changed file load again), and what cantera warned while building it."""
    notes: list[str] = []
    sol = _load_phase(_cantera(), Path(path_text), name, notes)
    return sol, tuple(notes)


def cantera_phase(path: str | Path, name: str):
    """The cantera object of one phase of a mechanism file, and what cantera warned while
    building it; built once per file version and shared by every stage (building a large
    mechanism takes seconds).  Callers only read it or set its state."""
    path = Path(path)
    st = path.stat()
    return _loaded(str(path.resolve()), name, st.st_mtime_ns, st.st_size)


def _library_note(message) -> str:
    """One line from a cantera warning (kept in cantera's words)."""
    return one_line(message, 400)


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
    available = mechanism_phase_names(path)     # the file is checked first (file_guard)
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
                    problems.append(Problem(str(path), unknown_name_message(
                        "species", nm, list(known), f"phase {name!r}", {k: v.composition for k, v in known.items()}),
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
                                 site_creating=tuple(n for n, model, _, _ in raw if n in creating),
                                 condensed_in_gas=condensed_in_gas(raw))
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
