"""Phases of species picked by name from the thermo databases that ship with cantera
(``nasa_gas.yaml`` for an ideal-gas phase, ``nasa_condensed.yaml`` for condensed phases)."""
from __future__ import annotations

import functools
import re
import warnings
from typing import Mapping, Sequence

from ..errors import MechanismError, Problem
from .assemble import _assemble, _cantera, _thermo_range
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


def find_species(query: str, limit: int = 40) -> list[dict]:
    """What ``auditor species`` lists: species a common name stands for (marked with it) first,
    then the database matches of the query itself, each once, at most ``limit``."""
    from ..common_names import lookup
    hits, seen = [], set()
    for common, name in lookup(query):
        for h in search_species(name, limit=limit):
            if h["name"] == name and name not in seen:
                seen.add(name)
                hits.append(dict(h, common_name=common))
    for h in search_species(query, limit=limit):
        if h["name"] not in seen:
            seen.add(h["name"])
            hits.append(h)
    return hits[:limit]
