"""Binding a case to its chemical system: building the system the case describes, and
checking that every name the case uses exists in it (all problems together, each with the
case file's line)."""
from __future__ import annotations

from fractions import Fraction
from pathlib import Path
from typing import TYPE_CHECKING

from ..errors import CaseError, InputError, Problem
from ..yaml_nodes import ranked
from .mechanism import from_mechanism
from .mechanism_file import alternative_pairs, alternatives_message, mechanism_phase_names
from .packaged import from_packaged
from .records import ChemicalSystem, unknown_name_message

if TYPE_CHECKING:   # the case module reads files and imports this package, never the reverse
    from ..case import Case


def build_system(case: Case) -> ChemicalSystem:
    """The :class:`~auditor.system.ChemicalSystem` a case describes (errors carry the case's lines)."""
    spec = case.system
    try:
        if spec.source == "packaged":
            return from_packaged(dict(spec.phases), gas_model=spec.gas_model)
        names = [p for p, _ in spec.phases] or None
        subsets = {p: s for p, s in spec.phases if s is not None}
        if names:
            available = mechanism_phase_names(spec.mechanism)
            listed_as_mapping = any(s is not None for _, s in spec.phases) or case.line("system.phases[0]") is None
            problems = []
            for i, n in enumerate(names):
                if n not in available:
                    kp = f"system.phases.{n}" if listed_as_mapping else f"system.phases[{i}]"
                    problems.append(Problem(str(case.path), unknown_name_message(
                        "phase", n, available, Path(spec.mechanism).name), kp, case.line(kp)))
            # two models of one mixture (an ideal gas and its real-gas twin) are not two phases
            for a, b in ([] if problems else alternative_pairs(spec.mechanism, names)):
                kp = f"system.phases.{b}" if listed_as_mapping else f"system.phases[{names.index(b)}]"
                problems.append(Problem(str(case.path), alternatives_message(spec.mechanism, a, b), kp, case.line(kp)))
            if problems:
                raise CaseError(problems)
        return from_mechanism(spec.mechanism, names, subsets or None, with_reactions=case.reactions == "from-mechanism")
    except InputError as exc:
        # problems with the case's own keys point at the case file; problems inside a
        # mechanism file keep that file and its line
        problems = []
        for p in exc.problems:
            if spec.source == "packaged" or p.key_path.startswith("system"):
                problems.append(Problem(str(case.path), p.message, p.key_path or "system",
                                        case.line(p.key_path) or case.line("system")))
            elif "mechanism file not found" in p.message or "cannot read mechanism file" in p.message:
                problems.append(Problem(str(case.path), f"{p.message}: {p.file}", "system.mechanism",
                                        case.line("system.mechanism")))
            else:
                problems.append(p)
        raise CaseError(problems) from None


def check_names(case: Case, system: ChemicalSystem) -> None:
    """Every species and phase the case names must exist in the system; all problems together."""
    problems: list[Problem] = []
    phases = [p.name for p in system.phases]
    formulas = {s.label: s.formula for s in system.species}
    file = str(case.path)

    def phase_ok(name, kp):
        if name not in phases:
            problems.append(Problem(file, unknown_name_message("phase", name, phases, "the system"), kp, case.line(kp)))
            return False
        return True

    def species_ok(name, kp, phase=None):
        hits = system.find(name)
        if phase is not None:
            hits = [h for h in hits if system.species[h].phase == phase]
            known = [system.labels[i] for i in system.phase_indices(phase)]
            where = f"phase {phase!r}"
        else:
            known, where = list(system.labels), "any phase"
        if not hits:
            problems.append(Problem(file, _unknown_species(name, known, where, formulas), kp, case.line(kp)))
        elif len(hits) > 1:
            problems.append(Problem(file, f"species {name!r} is in several phases; write one of "
                                    + ", ".join(system.labels[h] for h in hits), kp, case.line(kp)))

    for sp, _ in case.feed or ():
        species_ok(sp, f"feed.{sp}")
    for i, ph in enumerate(case.coexisting or ()):
        phase_ok(ph, f"coexisting[{i}]")
    s = case.specified
    for m in s.mole_fractions:
        if phase_ok(m.phase, m.key_path):
            species_ok(m.species, m.key_path, m.phase)
    ratios = list(s.ratios) + [r.ratio for r in case.restrictions if r.ratio]
    for r in ratios:
        if phase_ok(r.phase, f"{r.key_path}.phase"):
            species_ok(r.numerator, f"{r.key_path}.numerator", r.phase)
            species_ok(r.denominator, f"{r.key_path}.denominator", r.phase)
    for p in s.phase_fractions:
        phase_ok(p.phase, p.key_path)
    for r in case.restrictions:
        for i, ph in enumerate(r.phases):
            phase_ok(ph, f"{r.key_path}.same-composition[{i}]")
        if r.kind == "same-composition" and all(ph in phases for ph in r.phases):
            sets = {ph: sorted(_formula_key(system.species[k]) for k in system.phase_indices(ph)) for ph in r.phases}
            if len({tuple(v) for v in sets.values()}) > 1 or any(len(set(v)) != len(v) for v in sets.values()):
                listing = "; ".join(f"{ph}: {', '.join(system.labels[k] for k in system.phase_indices(ph))}"
                                    for ph in r.phases)
                problems.append(Problem(file, "same-composition needs phases whose species match one to one by "
                                        f"formula; {listing}", f"{r.key_path}.same-composition",
                                        case.line(f"{r.key_path}.same-composition")))
    for key, v in case.claims:
        if key == "phases-present":
            for ph in v:
                phase_ok(ph, "claims.phases-present")
    assumed = set(case.coexisting or phases)
    for kp, ph in ([(m.key_path, m.phase) for m in s.mole_fractions]
                   + [(f"{r.key_path}.phase", r.phase) for r in s.ratios]
                   + [(p.key_path, p.phase) for p in s.phase_fractions]
                   + [(f"{r.ratio.key_path}.phase", r.ratio.phase) for r in case.restrictions if r.ratio]):
        if ph in phases and ph not in assumed:
            problems.append(Problem(file, f"this concerns phase {ph!r}, which 'coexisting' assumes absent "
                                    f"(coexisting: {', '.join(sorted(assumed))})", kp, case.line(kp)))
    for r in case.restrictions:
        if r.kind == "same-composition" and any(ph in phases and ph not in assumed for ph in r.phases):
            kp = f"{r.key_path}.same-composition"
            problems.append(Problem(file, "same-composition names a phase that 'coexisting' assumes absent "
                                    f"(coexisting: {', '.join(sorted(assumed))})", kp, case.line(kp)))
    if case.feed and not problems:
        q = sum((system.species[system.find(sp)[0]].charge * a for sp, a in feed_moles(case, system)), Fraction(0))
        if q != 0:
            problems.append(Problem(file, f"the feed carries a net charge of {float(q):g} mol of elementary charge; "
                                    "every phase is electrically neutral: add counter-ions or electrons",
                                    "feed", case.line("feed")))
    if problems:
        raise CaseError(problems)


def _unknown_species(name: str, known, where: str, formulas=None) -> str:
    """'unknown species' with the closest name first, as a question, then the next closest:
    the same chemistry first (a digit/letter confusion undone, the same element counts)."""
    from .names import chemistry_matches
    close = chemistry_matches(name, known, formulas)
    close = (close + [k for k in ranked(name, known) if k not in close])[:4]
    if not close:
        return f"unknown species {name!r} in {where}"
    more = f" (other close names: {', '.join(close[1:])})" if len(close) > 1 else ""
    return f"unknown species {name!r} in {where}; did you mean {close[0]!r}?{more}"


def feed_moles(case: Case, system: ChemicalSystem) -> tuple[tuple[str, Fraction], ...] | None:
    """The feed in mol: amounts given in a mass unit divided by the species' molar mass
    (cantera's ``molecular_weight``, kg/kmol, taken as the exact decimal it prints)."""
    if case.feed is None or not case.feed_mass:
        return case.feed
    out = []
    for sp, amount in case.feed:
        if sp in case.feed_mass:
            molar_mass = system.species[system.find(sp)[0]].molar_mass   # kg/kmol = g/mol
            amount = amount * 1000 / Fraction(repr(molar_mass))          # kg -> g, / (g/mol)
        out.append((sp, amount))
    return tuple(out)


def _formula_key(species) -> tuple:
    return (tuple(sorted(species.formula.items())), species.charge)


def matching_species(system: ChemicalSystem, first: str, other: str) -> list[tuple[int, int]]:
    """Pairs (k in first, k in other) of the same substance, matched by formula and charge."""
    by_key = {_formula_key(system.species[k]): k for k in system.phase_indices(other)}
    return [(k, by_key[_formula_key(system.species[k])]) for k in system.phase_indices(first)]
