"""Renderers for the stoichiometric analysis alone (``auditor reactions``)."""
from __future__ import annotations

from pathlib import Path

from ..exact import format_fraction
from ..sentences import imbalance_text, signed_terms
from ..stoichiometry import ReactionAnalysis
from ..system import SITES_PREFIX


def _combo_text(combination, prefix="#") -> str:
    return signed_terms(((c, f"{prefix}{j + 1}") for j, c in combination), empty="0 (no net change)")


def _phases_used(system) -> list[dict]:
    return [{"name": p.name, "model": p.model, "species": len(p.species)} for p in system.phases]


def _other_phases(system) -> list[dict]:
    used = {p.name for p in system.phases}
    aside = dict(system.set_aside)
    return [{"name": n, "alternative_of": aside.get(n)} for n in system.file_phases if n not in used]


def reactions_document(a: ReactionAnalysis, warnings_: tuple[str, ...] = (), system=None) -> dict:
    """The ``reactions --json`` document (its keys are listed in the README), plus additive fields.

    Reaction ``index`` values are 0-based in file order (the contract, whose objects keep
    exactly their keys); the 1-based numbers shown to people come in sibling lists
    (``independent_numbers``, ``dependent_numbers``, ``unbalanced_numbers``, parallel to the
    contract lists; a combination's term ``index`` j is reaction number j + 1) and as a
    ``number`` key in the additive objects.
    """
    return {
        "species": a.n_species,
        "reactions": len(a.reactions),
        "formula_rank": a.formula_rank,
        "rank": a.rank,
        "max_independent": a.max_independent,
        "independent": list(a.independent),
        "dependent": [{"index": d.index,
                       "combination": [{"index": j, "coefficient": format_fraction(c)} for j, c in d.combination]}
                      for d in a.dependent],
        "unbalanced": [u.index for u in a.unbalanced],
        "complete": a.complete,
        # additive fields
        "independent_numbers": [i + 1 for i in a.independent],
        "dependent_numbers": [d.index + 1 for d in a.dependent],
        "unbalanced_numbers": [u.index + 1 for u in a.unbalanced],
        "imbalance": [{"index": u.index, "number": u.index + 1, "imbalance": {e: format_fraction(v) for e, v in u.imbalance}}
                      for u in a.unbalanced],
        "duplicates": [{"representative": g.representative, "representative_number": g.representative + 1,
                        "members": [{"index": i, "number": i + 1, "factor": format_fraction(f)} for i, f in g.members]}
                       for g in a.duplicates],
        "no_net_change": list(a.no_net_change),
        "no_net_change_numbers": [i + 1 for i in a.no_net_change],
        "frozen_directions": [r.equation for r in a.frozen],
        "derived_complete_set": [r.equation for r in a.derived_basis],
        "conserved_quantities": [c.name for c in a.conserved],
        "equations": [r.equation for r in a.reactions],
        "library_warnings": list(warnings_),
        **({} if system is None else {
            "phases": _phases_used(system),
            "other_phases": _other_phases(system),
            "site_conservation": [e for e in system.elements if e.startswith(SITES_PREFIX)],
            "site_creating_phases": list(system.site_creating)}),
    }


def _cap(items, limit: int | None) -> tuple[list, int]:
    """The first ``limit`` items (all when no limit) and how many were left out."""
    items = list(items)
    if limit is not None and len(items) > limit:
        return items[:limit], len(items) - limit
    return items, 0


def _system_lines(system) -> list[str]:
    """The phases used, the other phases the file defines, and the site-conservation rows."""
    lines = ["Phases used: " + ", ".join(f"{p['name']} ({p['model']}, {p['species']} species)"
                                         for p in _phases_used(system))]
    others = _other_phases(system)
    if others:
        lines.append("The file also defines: " + ", ".join(
            o["name"] + (f" (an alternative model of {o['alternative_of']}, set aside)" if o["alternative_of"] else "")
            for o in others) + "; choose phases with --phase NAME")
    sites = [e for e in system.elements if e.startswith(SITES_PREFIX)]
    if sites:
        lines.append("Site conservation counted in rank A: " + ", ".join(sites))
    if system.site_creating:
        lines.append("No site-conservation row (reactions create or remove sites): "
                     + ", ".join(system.site_creating))
    return lines + [""]


def _count_lines(a: ReactionAnalysis) -> list[str]:
    """The counts and the verdict on the list."""
    rows = [("phase-species (N)", a.n_species), ("reactions listed", len(a.reactions)),
            ("formula-matrix rank (rank A)", a.formula_rank), ("rank of the reactions (m)", a.rank),
            ("most independent reactions possible (N - rank A)", a.max_independent)]
    width = max(len(r[0]) for r in rows)
    lines = [f"  {name:<{width}}  {value}" for name, value in rows]
    if a.unbalanced:
        state = "the list has unbalanced reactions, so completeness is not defined"
    elif a.complete:
        state = "complete: the listed reactions reach every element-balanced composition"
    else:
        state = (f"incomplete: {len(a.frozen)} composition direction(s) frozen "
                 f"({a.max_independent} possible, {a.rank} listed)")
    return lines + ["", f"Verdict on the list: {state}", ""]


def _relation_lines(a: ReactionAnalysis, limit: int | None) -> list[str]:
    """The independent reactions, the dependent ones as combinations, and the duplicates."""
    shown, more = _cap(a.independent, limit)
    lines = [f"Independent reactions ({len(a.independent)}, earliest in file order):"]
    lines += [f"  #{i + 1}: {a.reactions[i].equation}" for i in shown]
    if more:
        lines.append(f"  ... and {more} more (use --json for all)")
    dup_members = {i for g in a.duplicates for i, _ in g.members}
    others = [d for d in a.dependent if d.index not in dup_members]
    if others:
        lines += ["", f"Dependent reactions ({len(others)}, each an exact combination of independent ones):"]
        shown, more = _cap(others, limit)
        for d in shown:
            lines.append(f"  #{d.index + 1}: {a.reactions[d.index].equation}")
            lines.append(f"      = {_combo_text(d.combination)}")
        if more:
            lines.append(f"  ... and {more} more (use --json for all)")
    if a.duplicates:
        n = sum(len(g.members) for g in a.duplicates)
        lines += ["", f"Duplicates ({n} reactions with the same net change as an earlier one, in {len(a.duplicates)} groups):"]
        shown, more = _cap(a.duplicates, limit)
        for g in shown:
            mem = ", ".join(f"#{i + 1}" + ("" if f == 1 else f" (x {format_fraction(f)})") for i, f in g.members)
            lines.append(f"  #{g.representative + 1} {a.reactions[g.representative].equation}: {mem}")
        if more:
            lines.append(f"  ... and {more} more groups")
    return lines


def _defect_lines(a: ReactionAnalysis) -> list[str]:
    """Reactions with no net change, unbalanced reactions, frozen directions and extra conserved quantities."""
    lines = []
    if a.no_net_change:
        lines += ["", "Reactions with no net change (catalytic or third-body only): "
                  + ", ".join(f"#{i + 1}" for i in a.no_net_change)]
    if a.unbalanced:
        lines += ["", f"Unbalanced reactions ({len(a.unbalanced)}; imbalance = products - reactants):"]
        for u in a.unbalanced:
            imb = imbalance_text(u.imbalance)
            lines.append(f"  #{u.index + 1}: {a.reactions[u.index].equation}   [{imb}]")
    if a.frozen:
        lines += ["", "Frozen directions (reactions the list cannot produce):"]
        lines += [f"  {r.equation}" for r in a.frozen]
        extra = [c.name for c in a.conserved if not c.is_element]
        if extra:
            lines += ["", "Extra conserved quantities beyond the elements:"] + [f"  {x}" for x in extra]
    return lines


def _source_label(source: str) -> str:
    """A file that ships with cantera by its name, the library's version and the file's hash
    (never where the library is installed); any other file as given."""
    import hashlib
    from ..system import shipped_by, shipped_name
    name = shipped_name(source)
    if name is None:
        return source
    return f"{name} (ships with {shipped_by()}, SHA-256 {hashlib.sha256(Path(source).read_bytes()).hexdigest()})"


def reactions_text(a: ReactionAnalysis, source: str, limit: int | None = None, warnings_: tuple[str, ...] = (),
                   system=None) -> str:
    """Human-readable account; reaction numbers ``#n`` count from 1 in file order (the
    mechanism's first reaction is #1; JSON's ``index`` is this number minus one)."""
    lines = [f"Stoichiometric analysis of {_source_label(source)}", ""]
    if system is not None:
        lines += _system_lines(system)
    lines += _count_lines(a)
    lines += _relation_lines(a, limit)
    lines += _defect_lines(a)
    if warnings_:
        lines += ["", f"Cantera warned while loading ({len(warnings_)}):"]
        shown_w, more_w = _cap(warnings_, limit)
        lines += [f"  {w}" for w in shown_w]
        if more_w:
            lines.append(f"  ... and {more_w} more")
    shown, more = _cap(a.derived_basis, limit)
    lines += ["", f"A complete independent set from the species alone ({len(a.derived_basis)}):"]
    lines += [f"  {r.equation}" for r in shown]
    if more:
        lines.append(f"  ... and {more} more (use --json for all)")
    return "\n".join(lines) + "\n"
