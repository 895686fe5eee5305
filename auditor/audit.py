"""Runs the stages in order, collects findings and decides the verdict (design §2, §3)."""
from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from . import case as case_mod
from .case import Case
from .errors import InputError
from .exact import format_fraction
from .findings import Finding
from .phase_rule import PhaseRuleCount, count as count_phase_rule
from .stoichiometry import ReactionAnalysis, analyse
from .structure import SpecificationAudit, audit as audit_specification
from .system import ChemicalSystem

VERDICT_ORDER = ("well-posed", "under-specified", "over-specified", "not-confirmed", "inconsistent")


@dataclass(frozen=True)
class ClaimCheck:
    name: str
    claimed: Any
    found: Any
    held: bool | None          # None: could not be checked


@dataclass(frozen=True)
class AuditResult:
    case: Case
    system: ChemicalSystem
    reactions: ReactionAnalysis
    phase_rule: PhaseRuleCount
    specification: SpecificationAudit
    equilibrium: Any             # EquilibriumCheck or None
    claims: tuple[ClaimCheck, ...]
    findings: tuple[Finding, ...]
    verdict: str

    @property
    def exit_status(self) -> int:
        return 0 if self.verdict == "well-posed" and all(c.held is not False for c in self.claims) else 1


def _reaction_findings(a: ReactionAnalysis) -> list[Finding]:
    out = []
    for u in a.unbalanced:
        imb = ", ".join(f"{e} {'+' if v > 0 else ''}{format_fraction(v)}" for e, v in u.imbalance)
        out.append(Finding("error", "reactions", f"reaction #{u.index + 1} '{a.reactions[u.index].equation}' does not "
                           f"balance (products - reactants: {imb})", tuple(e for e, _ in u.imbalance)))
    dup = {i for g in a.duplicates for i, _ in g.members}
    for d in a.dependent:
        if d.index in dup:
            continue
        combo = " ".join(f"{'+' if c > 0 else '-'} {format_fraction(abs(c))} x #{j + 1}" for j, c in d.combination)
        out.append(Finding("note", "reactions", f"reaction #{d.index + 1} '{a.reactions[d.index].equation}' is "
                           f"redundant: it equals {combo.lstrip('+ ')}"))
    for g in a.duplicates:
        out.append(Finding("note", "reactions", f"reactions {', '.join('#' + str(i + 1) for i, _ in g.members)} repeat the "
                           f"net change of #{g.representative + 1} '{a.reactions[g.representative].equation}'"))
    if a.frozen:
        extra = [c.name for c in a.conserved if not c.is_element]
        out.append(Finding("warning", "reactions", f"the listed reactions are incomplete: {len(a.frozen)} composition "
                           f"direction(s) are frozen ({'; '.join(r.equation for r in a.frozen)}); extra conserved "
                           f"quantities: {'; '.join(extra)}"))
    return out


def counting_stages(case: Case, system: ChemicalSystem | None = None):
    """The stages before the minimisation: system, reactions, analysis, phase-rule count, specification audit."""
    if system is None:
        system = case_mod.build_system(case)
    case_mod.check_names(case, system)
    reactions = case_mod.build_reactions(case, system)
    analysis = analyse(system, reactions)
    count = count_phase_rule(case, system, reactions, analysis)
    return system, reactions, analysis, count, audit_specification(case, system, count)


def run(case: Case, system: ChemicalSystem | None = None, confirm: bool = True) -> AuditResult:
    """Audit one validated case (its system may be passed in when already built)."""
    system, reactions, analysis, count, spec = counting_stages(case, system)
    findings = _reaction_findings(analysis)
    for w in system.library_warnings:
        severity = "warning" if "discontinuity" in w.lower() or "outside" in w.lower() else "note"
        findings.append(Finding(severity, "data", f"cantera: {w}"))
    for aside, used in system.set_aside:
        findings.append(Finding("note", "data", f"the mechanism also defines phase {aside}, an alternative model "
                                f"of the mixture of {used}; {used} is used (name a phase under system.phases to "
                                "choose)", (aside, used)))
    for phase in system.site_creating:
        findings.append(Finding("note", "reactions", f"the mechanism's reactions create or remove sites of {phase}, "
                                "so its site total is not a conserved quantity", (phase,)))
    F = count.degrees_of_freedom
    for phase in count.empty_phases:
        findings.append(Finding("error", "phase-rule", f"phase {phase} is assumed to coexist but none of its species "
                                "can form from this feed (each needs an element the feed lacks, or a reaction the "
                                "list does not hold)", (phase,)))
    if count.excluded:
        findings.append(Finding("note", "phase-rule", f"{', '.join(count.excluded)} cannot be present (the feed lacks "
                                "an element of each, or the listed reactions cannot form it) and are left out of the "
                                "count", count.excluded))
    if F < 0:
        findings.append(Finding("error", "phase-rule", f"F = {F} < 0: the phases assumed to coexist "
                                f"({', '.join(count.coexisting)}) cannot coexist at equilibrium with these "
                                "reactions and restrictions", count.coexisting))
    for rel in count.double_counted:
        findings.append(Finding("warning", "phase-rule", f"declared restriction '{rel.text}' ({rel.key_path}) is "
                                f"already {rel.origin}: counted once, not twice", (rel.key_path,)))
    for rel in count.relations:
        if rel.origin == "feed":
            findings.append(Finding("note", "phase-rule", f"the feed imposes {rel.text}", (rel.phase,)))
    if spec.status != "well-posed":
        findings.append(Finding("error", "specification", f"{spec.status}: {spec.reasons[-1] if len(spec.reasons) > 1 else spec.reasons[0]}"
                                + (f"; {spec.suggestion}" if spec.suggestion else ""),
                                spec.conflicting or spec.free))
    if spec.conflicting and spec.status == "over-specified":
        findings.append(Finding("error", "specification", "conflicting specifications: " + "; ".join(spec.conflicting),
                                spec.conflicting))

    equilibrium = None
    if confirm and case.feed is not None:
        from .equilibrium import confirm as confirm_equilibrium
        equilibrium = confirm_equilibrium(case, system, analysis, count, spec)
        findings.extend(equilibrium.findings)
        found = equilibrium.phases_present
        if equilibrium.solved and set(found) != set(count.coexisting) and found:
            actual = count_phase_rule(replace(case, coexisting=tuple(found)), system, reactions, analysis)
            findings.append(Finding("warning", "phase-rule", f"for the phases found present ({', '.join(found)}) the "
                                    f"phase rule gives N = {actual.n_species}, pi = {actual.n_phases}, m = "
                                    f"{actual.independent_reactions}, r = {actual.restrictions}, F = "
                                    f"{actual.degrees_of_freedom}; revise 'coexisting' or the specifications",
                                    tuple(found)))

    # verdict before claims
    verdict = spec.status
    if analysis.unbalanced or F < 0 or count.empty_phases:
        verdict = "inconsistent"
    elif verdict == "well-posed" and equilibrium is not None and not equilibrium.confirmed:
        verdict = "not-confirmed"

    checks = []
    for name, claimed in case.claims:
        found: Any
        if name == "independent-reactions":
            found = count.independent_reactions
        elif name == "degrees-of-freedom":
            found = F
        elif name == "components":
            found = count.components
        elif name == "phases-present":
            found = tuple(sorted(equilibrium.phases_present)) if equilibrium is not None and equilibrium.solved else None
        else:
            found = verdict
        held = None if found is None else found == claimed
        checks.append(ClaimCheck(name, claimed, found, held))
        if held is False:
            findings.append(Finding("error", "claims", f"claim {name} = {show_value(claimed)} is refuted: the audit finds "
                                    f"{show_value(found)}", (name,)))
        elif held is None:
            findings.append(Finding("warning", "claims", f"claim {name} = {show_value(claimed)} could not be checked "
                                    "(no equilibrium was computed)", (name,)))
    if any(c.held is False for c in checks):
        verdict = "inconsistent"
    return AuditResult(case, system, analysis, count, spec, equilibrium, tuple(checks), tuple(findings), verdict)


def show_value(v) -> str:
    """A claimed or found value as text: lists as [a, b], a missing value as 'not computed'."""
    if isinstance(v, (tuple, list)):
        return "[" + ", ".join(map(str, v)) + "]"
    return "not computed" if v is None else str(v)


def audit_file(path: str | Path, confirm: bool = True) -> AuditResult:
    return run(case_mod.load_case(path), confirm=confirm)


def audit_for_batch(path: str | Path, confirm: bool = True, raise_errors: bool = False):
    """One unit of work of a multi-case run: the result, or the input error as a value (so that
    an executor does not retry a file that is simply invalid)."""
    try:
        return audit_file(path, confirm=confirm)
    except InputError as exc:
        if raise_errors:
            raise
        return exc
