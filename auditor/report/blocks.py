"""The blocks a filed report is made of, and the larger ones built from the JSON document:
the reaction-species incidence, the equilibrium composition and the certificate table.
Numbers shown to people count from 1; the JSON keeps 0-based indices.
"""
from __future__ import annotations

from dataclasses import dataclass

from ..audit import AuditResult
from ..exact import format_fraction
from ..sentences import yes_no
from . import entered as entered_mod
from . import svg
from .text import kilojoules, nonsingular_words

# the reaction-species incidence is a table up to this size, a picture beyond it
INCIDENCE_TABLE_MAX_SPECIES = 12
INCIDENCE_TABLE_MAX_REACTIONS = 12
INCIDENCE_ROWS_PER_PICTURE = 60      # beyond the table size: pictures of at most this many reactions
INCIDENCE_COLUMNS_PER_PICTURE = 50   # ... and this many phase-species (fits an A4 page at 11 px a cell)


@dataclass(frozen=True)
class Block:
    kind: str                  # paragraph, table, list, svg, file (an embedded input), signoff
    text: str = ""
    headers: tuple = ()
    rows: tuple = ()
    items: tuple = ()
    caption: str = ""          # a table's caption (kept with the table in print)


def table(headers, rows, caption: str = "") -> Block:
    return Block("table", headers=tuple(headers), rows=tuple(tuple(str(c) for c in r) for r in rows), caption=caption)


def items_list(items) -> Block:
    return Block("list", items=tuple(str(i) for i in items))


def paragraph(text) -> Block:
    return Block("paragraph", text=str(text))


def _amount(mol: float, e: entered_mod.Entered) -> str:
    return f"{mol / e.mol_per_unit:.6g}"


def incidence(r: AuditResult) -> list[Block]:
    reactions = r.reactions.reactions
    if not reactions:
        return []
    independent = set(r.reactions.independent)
    labels = list(r.system.labels)
    rows = [dict(x.stoich) for x in reactions]
    used = sorted({k for row in rows for k in row})
    if len(used) <= INCIDENCE_TABLE_MAX_SPECIES and len(rows) <= INCIDENCE_TABLE_MAX_REACTIONS:
        body = []
        for i, row in enumerate(rows):
            kind = "independent" if i in independent else "dependent"
            body.append([f"{i + 1}", kind] + [(format_fraction(row[k]) if row[k] < 0 else "+" + format_fraction(row[k]))
                                               if k in row else "" for k in used])
        return [table(["reaction", "kind", *(labels[k] for k in used)], body,
                       "Reaction-species incidence: stoichiometric coefficients (products +, reactants -)")]
    # a picture per block of reactions, showing only the phase-species they involve, so that each
    # fits a printed page at a legible size (an SVG cannot break across pages)
    blocks = []
    for start in range(0, len(rows), INCIDENCE_ROWS_PER_PICTURE):
        chunk = rows[start:start + INCIDENCE_ROWS_PER_PICTURE]
        cols = sorted({k for row in chunk for k in row})
        for c0 in range(0, len(cols), INCIDENCE_COLUMNS_PER_PICTURE):
            part = cols[c0:c0 + INCIDENCE_COLUMNS_PER_PICTURE]
            where = {k: j for j, k in enumerate(part)}
            sub = [{where[k]: c for k, c in row.items() if k in where} for row in chunk]
            last = start + len(chunk)
            cols_note = "" if len(cols) <= INCIDENCE_COLUMNS_PER_PICTURE else \
                f", phase-species {c0 + 1}-{c0 + len(part)} of the {len(cols)} they involve"
            blocks.append(Block("svg", text=svg.sparsity(sub, len(part), {i - start for i in independent
                                                                          if start <= i < last},
                                                         [labels[k] for k in part],
                                                         [str(i + 1) for i in range(start, last)]),
                                caption=f"Reaction-species incidence, reactions {start + 1}-{last} of {len(rows)}"
                                        f"{cols_note}"))
    return blocks


def composition(eq: dict, e: entered_mod.Entered, coexisting) -> Block:
    """One row per species, two columns per phase (amount in the feed's unit, mole fraction)."""
    phases = eq["phases"]
    species: list[str] = []
    for p in phases:
        species += [s for s in p["mole_fractions"] if s not in species]
    present = set(eq["phases_present"])
    headers = ["species"]
    for p in phases:
        status = ("present" if p["name"] in present else "absent") + \
            (", assumed" if p["name"] in coexisting else ", not assumed")
        headers += [f"{p['name']} ({status}): amount, {e.amount_unit}", f"{p['name']}: mole fraction"]
    rows = []
    for s in species:
        row = [s]
        for p in phases:
            x = p["mole_fractions"].get(s)
            row += ["", ""] if x is None else [_amount(p["moles"] * x, e), f"{x:.6g}"]
        rows.append(row)
    rows.append(["phase total"] + [x for p in phases for x in (_amount(p["moles"], e), "1" if p["moles"] > 0 else "")])
    if e.unit_is_the_feeds:
        unit_words = f"amounts in {e.amount_unit}, the unit of the feed"
    else:
        unit_words = (f"amounts in {e.amount_unit}; the feed was written in {' and '.join(e.feed_units)} and "
                      "converted to mol" + (", a mass with each species' molar mass" if _has_mass(e) else "")
                      if e.feed_units
                      else f"amounts in {e.amount_unit}")
    return table(headers, rows, f"Equilibrium composition ({unit_words})")


def _has_mass(e: entered_mod.Entered) -> bool:
    return any(entered_mod._molar_unit(u) is None for u in e.feed_units)


def route_text(eq: dict) -> str:
    """The route whose state the certificate accepted, and the outcomes of the routes tried before it."""
    earlier = [f"{a['route']}: {a['outcome']}" for a in eq.get("attempts", []) if a["outcome"] != "certified"]
    route = eq.get("route") or "none certified"
    return f"{route} (after {'; '.join(earlier)})" if earlier else f"{route} (the first route tried)"


def certificate(eq: dict, doc: dict) -> Block:
    sp = doc["specification"]

    def num(v, fmt=".3e", why="not computed"):
        return f"n/a ({why})" if v is None else format(v, fmt)

    if not eq["nonsingularity_test"]:
        if sp["extensive"]:
            jac_why = "an extensive specification is given; the check covers intensive specifications only"
        elif set(eq["phases_present"]) != set(doc["phase_rule"]["coexisting"]):
            jac_why = "the phases found differ from those assumed"
        else:
            jac_why = "the structure is singular, see the specification audit"
    unique = f"{yes_no(eq['unique'])} ({eq['unique_basis']})" if eq["unique_basis"] else yes_no(eq["unique"])
    rows = [("converged", yes_no(eq["converged"])),
            ("confirmed (every check below passes and the assumed phases are found)", yes_no(eq["confirmed"])),
            ("unique", unique),
            ("starting estimates tried", eq["starts"]),
            ("solve route that gave this state", route_text(eq)),
            ("conserved-quantity balance error (relative)", num(eq["element_balance_error"])),
            ("largest affinity among present species, RT", num(eq["max_affinity_RT"])),
            ("element-potential fit residual, RT", num(eq["potential_residual_RT"])),
            ("present phases' conserved-quantity vectors, smallest/largest singular value",
             num(eq["phase_amount_rcond"], why="not used: uniqueness was decided by restarts (a non-ideal phase or "
                                               "an outer solve)")),
            ("ln K additivity error of dependent reactions",
             num(eq["lnK_additivity_error"], why="no dependent reaction among the listed ones")),
            ("equations nonsingular at the solution",
             nonsingular_words(eq["nonsingularity_test"], eq["jacobian_rcond"]) if eq["nonsingularity_test"]
             else f"n/a ({jac_why})")]
    if eq.get("heat_J") is not None:
        change = "internal-energy change" if eq["heat_balance"] == "internal energy" else "enthalpy change"
        rows.append((f"heat added from the feed at {eq['heat_feed_temperature_K']:.2f} K to this state ({change}), kJ",
                     kilojoules(eq["heat_J"])))
        rows.append(("heat of reaction at the state (state minus feed, both at its T and P), kJ",
                     kilojoules(eq["heat_of_reaction_J"]) if eq["heat_of_reaction_J"] is not None else "n/a"))
    rows += [(f"approached reaction {a['reaction']} ({a['approach_K']:g} K): ln Q; ln K at {a['K_temperature_K']:.2f} K "
              "(must be equal)", f"{a['lnQ']:.6g}; {a['lnK_at_approach']:.6g}" if a["lnQ"] is not None
              else f"n/a; {a['lnK_at_approach']:.6g}") for a in eq.get("approach", ())]
    rows += [(f"incipient phase {i['phase']} (fraction fixed at 0): driving force to form, RT; phase fraction "
              "(both must be zero)", f"{i['driving_force_RT']:+.3g}; {i['phase_fraction']:.3g}"
              if i["driving_force_RT"] is not None else f"n/a; {i['phase_fraction']:.3g}")
             for i in eq.get("incipient_phases", ())]
    aside = {a["phase"] for a in eq.get("phases_set_aside", ())}
    rows += [(f"driving force to form absent phase {k}, RT (must be positive)",
              f"{v:+.4g}" if v is not None else "n/a (cannot form at this T: outside its thermo data range)"
              if k in aside else "n/a (cannot form: needs an element the feed lacks)")
             for k, v in eq["absent_phase_driving_force_RT"].items()]
    return table(("certificate item", "value"), rows, "Certificate of the Gibbs minimisation")
