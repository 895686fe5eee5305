"""A :class:`ChemicalSystem` from cantera species: exact formulas, charges, site sizes, the
formula matrix (one row per element, per interface's sites, and for charge)."""
from __future__ import annotations

from fractions import Fraction
from typing import Sequence

from ..errors import MechanismError
from ..exact import as_simple_fraction, whole
from ..settings import COEFFICIENT_MAX_DENOMINATOR, COEFFICIENT_TOLERANCE
from .records import CHARGE, SITES_PREFIX, ChemicalSystem, Formula, PhaseDef, SpeciesDef


def _cantera():
    import cantera as ct
    return ct



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
    rows = [tuple(whole(s.formula.get(e, 0)) for s in species) for e in elements]
    for pname in site_phases:
        sizes = _site_sizes(source, next(sps for n, _, _, sps in raw if n == pname))
        rows.append(tuple(whole(sizes[s.name]) if s.phase == pname else 0 for s in species))
        elements.append(SITES_PREFIX + pname)
    if charged:
        elements.append(CHARGE)
        rows.append(tuple(whole(s.charge) for s in species))
    return ChemicalSystem(source, tuple(phases), tuple(species), tuple(elements), tuple(rows), tuple(reactions),
                          tuple(library_warnings))
