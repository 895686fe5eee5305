"""Phases of species picked by name from the thermo databases that ship with cantera
(``nasa_gas.yaml`` for an ideal-gas phase, ``nasa_condensed.yaml`` for condensed phases)."""
from __future__ import annotations

import functools
import warnings
from typing import Mapping, Sequence

from ..errors import MechanismError, Problem
from .assemble import _assemble, _cantera, _thermo_range
from .names import element_of_name, parse_formula, split_phase
from .records import CONDENSED_DATABASE, GAS_DATABASE, ChemicalSystem, unknown_name_message


@functools.lru_cache(maxsize=4)
def packaged_species(database: str) -> dict[str, object]:
    """Species of a database shipped with cantera, by name (cached: parsing costs ~0.3 s)."""
    ct = _cantera()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return {s.name: s for s in ct.Species.list_from_file(database)}



def from_packaged(phases: Mapping[str, Sequence[str]], where: str = "system.phases",
                 gas_model: str = "ideal-gas") -> ChemicalSystem:
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
                    "species", name, list(gas_db) + list(cond_db), f"{GAS_DATABASE} or {CONDENSED_DATABASE}",
                    _compositions()),
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
        if is_gas and gas_model == "peng-robinson":
            model = "Peng-Robinson"
            problems += _without_constants(pname, sps)
        raw.append((pname, model, is_gas, sps))
    if problems:
        raise MechanismError(problems)
    return _assemble("packaged", raw)


def _without_constants(phase: str, sps) -> list[Problem]:
    """A Peng-Robinson gas phase needs critical constants for every species (system/critical.py)."""
    from .critical import critical_constants
    missing = [sp.name for sp in sps if critical_constants(sp.name, sp.composition) is None]
    if not missing:
        return []
    return [Problem("packaged databases", f"gas-model peng-robinson needs the critical constants (Tc, Pc, acentric "
                    f"factor) of every species of phase {phase!r}; neither cantera's critical-properties.yaml nor "
                    f"auditor/data/critical_constants.yaml has {', '.join(missing)}", "system.gas-model")]


@functools.lru_cache(maxsize=1)
def _compositions() -> dict[str, dict[str, float]]:
    """Element counts of every packaged species, by name (gas database first)."""
    out: dict[str, dict[str, float]] = {}
    for db in (CONDENSED_DATABASE, GAS_DATABASE):
        out.update({n: dict(sp.composition) for n, sp in packaged_species(db).items()})
    return out


@functools.lru_cache(maxsize=1)
def _by_formula() -> dict[tuple, list[tuple[str, str, float, float]]]:
    """Every packaged species by (sorted element amounts, charge): (name, database, t_min, t_max)."""
    out: dict[tuple, list] = {}
    for db in (GAS_DATABASE, CONDENSED_DATABASE):
        for name, sp in packaged_species(db).items():
            key = (tuple(sorted((k, float(v)) for k, v in sp.composition.items() if k != "E")), float(sp.charge))
            out.setdefault(key, []).append((name, db, *_thermo_range(sp)))
    return out


def same_formula_species(formula: Mapping[str, object], charge: float, T: float,
                         tolerance: float = 0.0) -> list[tuple[str, str, float, float]]:
    """Packaged species of this formula and charge whose thermo data cover ``T`` (widened by
    ``tolerance`` at each end): (name, database, t_min, t_max), condensed ones first."""
    key = (tuple(sorted((k, float(v)) for k, v in formula.items())), float(charge))
    hits = [h for h in _by_formula().get(key, ()) if h[2] - tolerance <= T <= h[3] + tolerance]
    return sorted(hits, key=lambda h: (h[1] == GAS_DATABASE, h[0]))


def _hit(name: str, sp, db: str, kind: str) -> dict:
    t_min, t_max = _thermo_range(sp)
    return {"name": name, "kind": kind, "database": db,
            "formula": "".join(f"{k}{'' if v == 1 else int(v) if float(v).is_integer() else v}"
                               for k, v in sp.composition.items() if k != "E"),
            "charge": int(sp.charge) if float(sp.charge).is_integer() else sp.charge,
            "t_min": t_min, "t_max": t_max}


def _rank(q: str, name: str, kind: str, comp: dict, charged: bool, formula, phase, element) -> tuple | None:
    """Where a species stands for query ``q`` (lower first), None when it does not match. Tiers:
    0 the exact name; 1 the formula read case-sensitively (CS2 is carbon disulphide, not caesium;
    S(cr) the condensed sulphur, the phase suffix asked for first); 2 a species of the element
    named (``sulphur``), the pure element first; 3 a name containing the query as written;
    4 a name containing it in another letter case."""
    if name == q:
        return (0,)
    condensed_asked = phase is not None and phase.lower() not in ("g", "gas")
    if formula is not None and comp == formula and (phase is None or condensed_asked == (kind == "condensed")):
        return (1, phase is not None and not name.lower().startswith(f"{split_phase(q)[0]}({phase}".lower()),
                len(name), name)
    if element is not None and element in comp:
        return (2, len(comp), charged, sum(comp.values()), len(name), name)
    if q in name:
        return (3, not name.startswith(q), len(name), name)
    if q.upper() in name.upper():
        return (4, name.upper() != q.upper(), not name.upper().startswith(q.upper()), len(name), name)
    return None


def search_species(query: str, limit: int = 40) -> list[dict]:
    """Species of the packaged databases matching ``query``: its exact name, its formula read
    case-sensitively (in any element order, with an optional phase suffix: ``S(cr)``), the
    element it names (``sulfur``, ``nickel``) or a name containing it.  Names that match only
    in another letter case (``Cs2`` for ``CS2``) are listed only when nothing matches as written."""
    q = query.strip()
    body, phase = split_phase(q)
    formula = parse_formula(body)
    formula = {k: float(v) for k, v in formula.items()} if formula else None
    element = element_of_name(q)
    ranked = []
    for db, kind in ((GAS_DATABASE, "gas"), (CONDENSED_DATABASE, "condensed")):
        for name, sp in packaged_species(db).items():
            comp = {k: float(v) for k, v in sp.composition.items() if k != "E"}
            rank = _rank(q, name, kind, comp, bool(sp.charge), formula, phase, element)
            if rank is not None:
                ranked.append((rank, name, sp, db, kind))
    if any(r[0][0] < 4 for r in ranked):
        ranked = [r for r in ranked if r[0][0] < 4]
    ranked.sort(key=lambda r: r[0])
    return [_hit(name, sp, db, kind) for _, name, sp, db, kind in ranked[:limit]]


def species_suggestions(query: str, n: int = 5) -> list[str]:
    """Packaged names closest to a query that matches none, the same chemistry first
    (``H20`` -> ``H2O``)."""
    from .records import _close
    comps = _compositions()
    return _close(query.strip(), list(comps), n, comps, chemistry=True)


def find_species(query: str, limit: int = 40) -> list[dict]:
    """What ``auditor species`` lists: a common name as typed (marked with it) first, then the
    database matches of the query itself (an element's own species), then the longer common
    names that contain the query, each species once, at most ``limit``."""
    from ..common_names import lookup
    hits, seen = [], set()
    common_names = lookup(query)
    exact = " ".join(query.lower().split())

    def add_common(names):
        for common, name in names:
            for h in search_species(name, limit=limit):
                if h["name"] == name and name not in seen:
                    seen.add(name)
                    hits.append(dict(h, common_name=common))

    add_common([c for c in common_names if c[0] == exact])
    for h in search_species(query, limit=limit):
        if h["name"] not in seen:
            seen.add(h["name"])
            hits.append(h)
    add_common([c for c in common_names if c[0] != exact])
    return hits[:limit]
