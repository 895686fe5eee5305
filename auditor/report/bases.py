"""Reporting bases of the equilibrium composition (issue 24): besides mole fractions and amounts,
dry-basis mole fractions of a gas phase that holds water, ppm by volume of its minor species,
mass fractions and masses.  Also the flow basis: a feed written as rates is audited as the
closed system fed in one time unit, and every extensive result is per that unit.

Conversions (ideal gas: ppm by volume = ppm by mole):

* dry basis: x_i,dry = x_i / (1 - x_H2O), water left out;
* ppm(v): 1e6 x_i, for the species of a gas phase below ``MINOR_FRACTION``;
* mass fraction: w_i = x_i M_i / sum_j x_j M_j;
* mass: m_i = n_i M_i, in kg (n_i in mol, M_i in g/mol, divided by 1000).

Molar masses are cantera's ``molecular_weight`` of each species (kg/kmol = g/mol).
"""
from __future__ import annotations

from .blocks import Block, table

MINOR_FRACTION = 0.01          # a species below 1 mol % of a gas phase is listed in ppm(v) (common practice)
WATER = {"H": 2, "O": 1}       # the formula of water: the species left out of the dry basis
BASES = ("dry", "ppm", "mass")


def _species_of(system) -> dict:
    """(phase, name or label) -> species record."""
    out = {}
    for sp in system.species:
        out[(sp.phase, sp.name)] = sp
        out[(sp.phase, sp.label)] = sp
    return out


def _is_water(sp) -> bool:
    return sp is not None and dict(sp.formula) == WATER and sp.charge == 0


def flow_document(case) -> dict | None:
    """The ``flow_basis`` block: None for a feed of amounts."""
    per = getattr(case, "rate_per", None)
    if per is None:
        return None
    from ..units import time_word
    word = time_word(per)
    return {"time_unit": per, "time_unit_words": word,
            "statement": f"the feed is written as rates per {word}; the case is audited as the closed system fed "
                         f"in one {word}, so every amount and mass reported is per {word} (mol/{per}, kg/{per}); "
                         "the phase-rule count and the equilibrium composition do not depend on this basis"}


def bases_document(r) -> dict | None:
    """The ``bases`` block of the equilibrium: dry, ppm(v), mass fractions and masses by phase."""
    eq = r.equilibrium
    if eq is None or not eq.solved:
        return None
    per = getattr(r.case, "rate_per", None)
    species = _species_of(r.system)
    gas = {p.name for p in r.system.phases if p.is_gas}
    dry, ppm, wfrac, mass, phase_mass = {}, {}, {}, {}, {}
    for p in eq.phases:
        xs = dict(p.mole_fractions)
        molar = {k: species[(p.name, k)].molar_mass if (p.name, k) in species else float("nan") for k in xs}
        mean = sum(x * molar[k] for k, x in xs.items())
        wfrac[p.name] = {k: (x * molar[k] / mean if mean > 0 else 0.0) for k, x in xs.items()}
        mass[p.name] = {k: p.moles * x * molar[k] / 1000.0 for k, x in xs.items()}
        phase_mass[p.name] = p.moles * mean / 1000.0
        if p.name not in gas:
            continue
        water = [k for k in xs if _is_water(species.get((p.name, k)))]
        wet = sum(xs[k] for k in water)
        if water and 0 < wet < 1:
            dry[p.name] = {k: x / (1.0 - wet) for k, x in xs.items() if k not in water}
        ppm[p.name] = {k: x * 1e6 for k, x in xs.items() if x < MINOR_FRACTION}
    return {"mass_unit": "kg" if per is None else f"kg/{per}",
            "dry_mole_fractions": dry, "ppmv": ppm, "ppmv_below_mole_fraction": MINOR_FRACTION,
            "mass_fractions": wfrac, "masses": mass, "phase_masses": phase_mass}


def basis_tables(bases: dict, which=BASES) -> list[tuple[str, tuple, list]]:
    """(caption, headers, rows) of one table per basis asked for (dry, ppm, mass)."""
    out = []
    unit = bases["mass_unit"]
    if "dry" in which:
        if bases["dry_mole_fractions"]:
            for ph, xs in bases["dry_mole_fractions"].items():
                out.append((f"Dry basis: mole fractions of {ph} with water left out",
                            ("species", "dry mole fraction"), [(k, f"{v:.6g}") for k, v in xs.items()]))
        else:
            out.append(("Dry basis", ("species", "dry mole fraction"), [("(no gas phase holds water)", "")]))
    if "ppm" in which:
        for ph, xs in bases["ppmv"].items():
            rows = [(k, f"{v:.4g}") for k, v in sorted(xs.items(), key=lambda kv: -kv[1])]
            out.append((f"Minor species of {ph} in ppm(v) (below {bases['ppmv_below_mole_fraction']:g} mole "
                        "fraction, wet basis)", ("species", "ppm(v)"), rows or [("(none)", "")]))
    if "mass" in which:
        for ph, ws in bases["mass_fractions"].items():
            if not bases["phase_masses"][ph] > 0:
                continue               # an absent phase has no mass
            ms = bases["masses"][ph]
            rows = [(k, f"{w:.6g}", f"{ms[k]:.6g}") for k, w in ws.items()]
            rows.append(("phase total", "1" if bases["phase_masses"][ph] > 0 else "", f"{bases['phase_masses'][ph]:.6g}"))
            out.append((f"Mass basis: {ph}", ("species", "mass fraction", f"mass, {unit}"), rows))
    return out


def basis_blocks(doc: dict) -> list[Block]:
    """One report table per basis, and the flow basis stated, for the report's equilibrium section."""
    eq = doc.get("equilibrium") or {}
    blocks = []
    if doc.get("flow_basis"):
        from .blocks import paragraph
        blocks.append(paragraph("Flow basis: " + doc["flow_basis"]["statement"] + "."))
    if eq.get("bases"):
        blocks += [table(h, rows, cap) for cap, h, rows in basis_tables(eq["bases"])]
    return blocks


def basis_lines(r, which) -> list[str]:
    """The bases asked for with ``--basis``, as terminal lines."""
    doc = bases_document(r)
    if doc is None:
        return ["bases: no equilibrium composition (the Gibbs minimisation was not run or did not solve)"]
    out = []
    for caption, headers, rows in basis_tables(doc, which):
        out.append(caption + ":")
        widths = [max(len(str(x[i])) for x in (headers, *rows)) for i in range(len(headers))]
        out += ["  " + "  ".join(str(c).ljust(w) if i == 0 else str(c).rjust(w)
                                 for i, (c, w) in enumerate(zip(x, widths))).rstrip() for x in (headers, *rows)]
    return out
