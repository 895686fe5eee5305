"""Critical constants (Tc, Pc, acentric factor) of gas species, each with its source.

Two tables, looked up in this order for a species of a given name and composition:

1. cantera's ``critical-properties.yaml`` (in cantera's data directory; compiled by
   C. Karakaya from NIST WebBook and Yaws, *Matheson Gas Data Book*, 7th ed., 2001, and
   Poling et al., 5th ed.), by the species' own name, then by formula: the table's names
   are formulas ("CH4O" is methanol), with a suffix for further isomers ("C2H6O-1").  A
   formula match is used only when it is unambiguous on both sides: one table entry of
   that formula, and one packaged gas species of that composition (the table's "C2H6O"
   is dimethyl ether, and ethanol shares its formula).
2. the project's own ``auditor/data/critical_constants.yaml``, for the species cantera's
   table lacks (ammonia, water, hydrogen sulfide, ...) or cannot identify (isomers); keyed
   by packaged species name, each row with its source; by formula (a mechanism's "AR") under
   the same rule as above.
"""
from __future__ import annotations

import functools
import re
from dataclasses import dataclass
from typing import Mapping

CANTERA_TABLE = "critical-properties.yaml"
OWN_TABLE = "critical_constants.yaml"


@dataclass(frozen=True)
class CriticalConstants:
    species: str
    Tc: float            # K
    Pc: float            # Pa
    omega: float         # acentric factor
    source: str


def _formula_key(composition: Mapping[str, object]) -> tuple:
    return tuple(sorted((str(k), float(v)) for k, v in composition.items() if k != "E" and float(v) != 0))


def _parse_formula(name: str) -> tuple | None:
    """The composition of a table name written as a formula ("C2H6O", "C2H6O-1"), or None."""
    base = re.sub(r"-\d+$", "", name)
    parts = re.findall(r"([A-Z][a-z]?)(\d*)", base)
    if not parts or "".join(e + c for e, c in parts) != base:
        return None
    out: dict[str, float] = {}
    for element, count in parts:
        # the table writes chlorine and bromine in capitals (CCL4): read CL, BR as elements
        out[element] = out.get(element, 0.0) + float(count or 1)
    return _formula_key(out)


@functools.lru_cache(maxsize=1)
def _cantera_table() -> tuple[dict, dict, str]:
    """cantera's table by name and by formula (formula -> list of entries), and its path."""
    import yaml
    from pathlib import Path
    import cantera as ct
    path = Path(ct.__file__).parent / "data" / CANTERA_TABLE
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    by_name, by_formula = {}, {}
    for entry in data.get("species", []):
        cp = entry.get("critical-parameters", {})
        if not {"critical-temperature", "critical-pressure", "acentric-factor"} <= set(cp):
            continue
        name = str(entry["name"])
        where = f"cantera {CANTERA_TABLE}, {name} ({entry.get('descriptive-name', 'no descriptive name')})"
        row = (float(cp["critical-temperature"]), float(cp["critical-pressure"]), float(cp["acentric-factor"]), where)
        by_name[name] = row
        key = _parse_formula(name)
        if key is not None:
            by_formula.setdefault(key, []).append(row)
    return by_name, by_formula, str(path)


@functools.lru_cache(maxsize=1)
def own_table() -> dict[str, tuple[tuple, tuple[float, float, float, str]]]:
    """The project's table: name -> (formula key, (Tc K, Pc Pa, omega, source))."""
    import yaml
    from importlib import resources
    data = yaml.safe_load((resources.files("auditor") / "data" / OWN_TABLE).read_text(encoding="utf-8"))
    return {str(name): (_formula_key(e["formula"]),
                        (float(e["Tc"]), float(e["Pc"]) * 1e5, float(e["omega"]), f"auditor {OWN_TABLE}: {e['source']}"))
            for name, e in data["species"].items()}


@functools.lru_cache(maxsize=1)
def _packaged_formula_counts() -> dict[tuple, int]:
    from .packaged import packaged_species
    from .records import GAS_DATABASE
    counts: dict[tuple, int] = {}
    for sp in packaged_species(GAS_DATABASE).values():
        key = _formula_key(sp.composition)
        counts[key] = counts.get(key, 0) + 1
    return counts


def critical_constants(name: str, composition: Mapping[str, object], packaged: bool = True) -> CriticalConstants | None:
    """The critical constants of a gas species, or None when neither table identifies it.

    ``packaged`` says the species comes from cantera's nasa_gas.yaml, whose isomers decide
    whether a formula match is unambiguous (for a mechanism's species a formula match needs
    only one table entry of that formula)."""
    by_name, by_formula, _ = _cantera_table()
    key = _formula_key(composition)
    row = by_name.get(name)
    if row is not None and _parse_formula(name) not in (None, key):
        row = None      # the same name for another substance
    if row is None and len(by_formula.get(key, ())) == 1 and key not in dict.fromkeys(
            k for k, _ in own_table().values()) and (not packaged or _packaged_formula_counts().get(key, 0) == 1):
        row = by_formula[key][0]
    if row is None:
        own = own_table().get(name)
        if own is not None and own[0] == key:
            row = own[1]
        else:
            # a mechanism's own spelling ("AR" for argon): by formula when one row has it
            rows = [r for k, r in own_table().values() if k == key]
            if len(rows) == 1 and (not packaged or _packaged_formula_counts().get(key, 0) == 1):
                row = rows[0]
    return None if row is None else CriticalConstants(name, *row)
