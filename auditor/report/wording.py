"""Engineering words for what a report states: the named tolerances, the hazards of the
species a case holds, and a remedy when the equilibrium does not confirm the case.

The JSON keeps the settings' identifiers (``affinity_tolerance_RT``); people read the words
and units below.
"""
from __future__ import annotations

# settings.TOLERANCES key -> (what it bounds, in words; its unit)
TOLERANCE_WORDS: dict[str, tuple[str, str]] = {
    "coefficient_tolerance": ("distance at which a mechanism's decimal coefficient is read as a fraction", "-"),
    "coefficient_max_denominator": ("largest denominator of such a fraction", "-"),
    "element_balance_tolerance": ("element balance error accepted from the minimisation (relative)", "-"),
    "affinity_tolerance_RT": ("largest reaction affinity accepted among present species", "RT"),
    "phase_presence_fraction": ("smallest share of all moles for a phase to count as present", "mol/mol"),
    "uniqueness_tolerance": ("largest mole-fraction difference between two starts called the same state",
                             "mol/mol"),
    "phase_amount_rcond_tolerance": ("smallest/largest singular value below which phase amounts are "
                                     "called indeterminate", "-"),
    "lnK_additivity_tolerance": ("ln K additivity error accepted for a dependent reaction", "-"),
    "jacobian_rank_tolerance": ("smallest/largest singular value below which the equations are called "
                                "numerically singular", "-"),
    "hindered_element_share": ("share of an element in a kinetically hindered product that raises a "
                               "warning", "mol/mol"),
    "thermo_range_tolerance_K": ("widening of each thermo data range at both ends", "K"),
}


def tolerance_rows(tolerances: dict) -> list[tuple[str, str, str]]:
    """(tolerance in words, value, unit), in the order of the settings."""
    rows = []
    for key, value in tolerances.items():
        words, unit = TOLERANCE_WORDS.get(key, (key.replace("_", " "), "-"))
        rows.append((words, f"{value:g}" if isinstance(value, float) else str(value), unit))
    return rows


# species name (as the databases and common mechanisms spell it, compared in any letter case)
# -> its hazard in words (common practice: safety data sheets of the trade)
HAZARDS: dict[str, str] = {
    "H2S": "highly toxic, deadens the sense of smell, flammable",
    "SO2": "toxic, corrosive when wet",
    "SO3": "toxic, corrosive",
    "COS": "toxic, flammable",
    "CS2": "toxic, highly flammable, ignites on hot surfaces",
    "CO": "toxic and odourless, flammable",
    "H2": "flammable over a wide range in air, asphyxiant",
    "CH4": "flammable, asphyxiant",
    "C2H6": "flammable", "C2H4": "flammable", "C3H8": "flammable", "C2H2": "flammable, unstable under pressure",
    "C6H6": "flammable, carcinogenic", "C7H8": "flammable",
    "CH3OH": "toxic, flammable", "C2H5OH": "flammable", "CH3OCH3": "flammable",
    "NH3": "toxic, corrosive",
    "HCL": "toxic, corrosive",
    "CL2": "toxic, oxidising",
    "HCN": "highly toxic, flammable",
    "NO": "toxic", "NO2": "toxic, oxidising", "N2O": "oxidising",
    "O2": "oxidising, enriched air makes fires fiercer",
    "H2O2": "oxidising, corrosive",
    "CO2": "asphyxiant, toxic at high concentration",
    "N2": "asphyxiant", "AR": "asphyxiant", "HE": "asphyxiant",
}


def hazards_of(species_names) -> list[tuple[str, str]]:
    """(species, hazard) of the case's species found in HAZARDS, in the table's order (the
    more dangerous first)."""
    order = {k.upper(): i for i, k in enumerate(HAZARDS)}
    table = {k.upper(): v for k, v in HAZARDS.items()}
    out = {}
    for name in species_names:
        if name.upper() in table:
            out.setdefault(name.upper(), (name, table[name.upper()]))
    return [out[k] for k in sorted(out, key=order.__getitem__)]


def hazard_caution(species_names) -> str:
    """The caution naming the hazardous species the case holds."""
    found = hazards_of(species_names)
    if not found:
        return ("None of this case's species is in the tool's short hazard table; check each one's safety "
                "data sheet and handle it under your site's safety rules.")
    return ("Hazardous species in this case (common practice): " + "; ".join(f"{n}: {h}" for n, h in found)
            + ". Handle them under your site's safety rules.")


def remedy(doc: dict) -> str:
    """What to change when the specifications are complete but the equilibrium does not confirm
    the case ("" when it is confirmed or was not run)."""
    eq = doc.get("equilibrium")
    if not eq or not eq.get("solved") or eq.get("confirmed"):
        return ""
    assumed = list(doc["phase_rule"]["coexisting"])
    present = list(eq["phases_present"])
    formed = [p for p in present if p not in assumed]
    vanished = [p for p in assumed if p not in present]
    out = []
    if formed:
        names = ", ".join(formed)
        out.append(f"either add {names} to 'coexisting' (if {names} may form in the plant) and audit again, or "
                   f"change what makes {names} form (the feed composition, the temperature or the pressure) "
                   "until the audit confirms the phases assumed")
    if vanished:
        names = ", ".join(vanished)
        out.append(f"{'also ' if formed else 'either '}remove {names} from 'coexisting', or change the feed, "
                   f"temperature or pressure so that {names} is present at equilibrium")
    if not out:
        out.append("the minimisation's state could not be certified: see the certificate and the solve routes "
                   "under Equilibrium and certificate; check the thermo data ranges and the feed")
    return "; ".join(out)
