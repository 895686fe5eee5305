"""Runs the stages in order, collects findings and decides the verdict (README, "Verdicts")."""
from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, NamedTuple

from . import case as case_mod
from .case import Case
from .errors import InputError
from .findings import Finding
from .sentences import imbalance_text, show_value, signed_terms, verdict_reason
from .phase_rule import PhaseRuleCount, count_phase_rule
from .stoichiometry import Reaction, ReactionAnalysis, analyse, build_reactions, derived_basis
from .structure import SpecificationAudit, audit_specification
from .system import ChemicalSystem, build_system, check_names, feed_moles
from .verdicts import Verdict

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
    verdict: Verdict
    reason: str = ""             # the verdict's reason in one plain sentence
    real_gas: Any = None         # RealGasAudit (equilibrium/real_gas.py) or None: the ideal-gas assumption checked
    margins: Any = None          # MarginReport (equilibrium/margins.py) or None: not asked for, or no confirmed state


    @property
    def exit_status(self) -> int:
        return 0 if self.verdict == Verdict.WELL_POSED and all(c.held is not False for c in self.claims) else 1


def _reaction_findings(a: ReactionAnalysis) -> list[Finding]:
    out = []
    for u in a.unbalanced:
        imb = imbalance_text(u.imbalance)
        out.append(Finding("error", "reactions", f"reaction {u.index + 1} '{a.reactions[u.index].equation}' does not "
                           f"balance (products - reactants: {imb})", tuple(e for e, _ in u.imbalance)))
    dup = {i for g in a.duplicates for i, _ in g.members}
    for d in a.dependent:
        if d.index in dup:
            continue
        combo = signed_terms(((c, f"reaction {j + 1}") for j, c in d.combination), " x ", unit_coefficient=True)
        out.append(Finding("note", "reactions", f"reaction {d.index + 1} '{a.reactions[d.index].equation}' is "
                           f"redundant: it equals {combo}"))
    for g in a.duplicates:
        out.append(Finding("note", "reactions", f"reactions {', '.join(str(i + 1) for i, _ in g.members)} repeat the "
                           f"net change of reaction {g.representative + 1} '{a.reactions[g.representative].equation}'"))
    if a.frozen:
        extra = [c.name for c in a.conserved if not c.is_element]
        out.append(Finding("warning", "reactions", f"the listed reactions are incomplete: {len(a.frozen)} composition "
                           f"direction(s) are frozen ({'; '.join(r.equation for r in a.frozen)}); extra conserved "
                           f"quantities: {'; '.join(extra)}"))
    return out


class CountingStages(NamedTuple):
    """The frozen results of the stages before the minimisation, by name (a named tuple, so
    that ``system, reactions, analysis, count, specification = stages`` also reads)."""

    system: ChemicalSystem
    reactions: tuple[Reaction, ...]     # the reactions the case lists (or the derived complete set)
    analysis: ReactionAnalysis
    count: PhaseRuleCount
    specification: SpecificationAudit


def counting_stages(case: Case, system: ChemicalSystem | None = None) -> CountingStages:
    """The stages before the minimisation: system, reactions, analysis, phase-rule count, specification audit."""
    if system is None:
        system = build_system(case)
    check_names(case, system)
    basis = derived_basis(system)      # the complete set: the analysis needs it, a case may list it
    reactions = build_reactions(case, system, basis)
    analysis = analyse(system, reactions, basis)
    if case.approach:      # the approached reactions name the system's species and lie in the reactions' span
        from .equilibrium.approach import approach_plan
        approach_plan(case, system, analysis)
    count = count_phase_rule(case, system, reactions, analysis)
    return CountingStages(system, reactions, analysis, count, audit_specification(case, system, count))


def run(case: Case, system: ChemicalSystem | None = None, confirm: bool = True, margins: bool = False) -> AuditResult:
    """Audit one validated case (its system may be passed in when already built); the margins
    of a confirmed state are computed when ``margins`` or the case has a ``margins:`` key."""
    stages = counting_stages(case, system)
    system, reactions, analysis, count, spec = stages.system, stages.reactions, stages.analysis, stages.count, \
        stages.specification
    findings = _reaction_findings(analysis) + _system_findings(system) + _count_findings(count)
    findings += _specification_findings(spec)
    set_findings = phase_set_findings(system, count)
    findings += set_findings
    F = count.degrees_of_freedom

    equilibrium = None
    if confirm and case.feed is not None:
        from .equilibrium import Workspace, confirm_equilibrium
        workspace = Workspace(system, analysis)
        equilibrium = confirm_equilibrium(case, system, analysis, count, spec, workspace)
        findings.extend(equilibrium.findings)
        found = equilibrium.phases_present
        if equilibrium.solved and set(found) != set(count.coexisting) and found:
            actual = count_phase_rule(replace(case, coexisting=tuple(found)), system, reactions, analysis)
            findings.append(Finding("warning", "phase-rule", f"for the phases found present ({', '.join(found)}) the "
                                    f"phase rule gives N = {actual.n_present}, pi = {actual.n_phases}, m = "
                                    f"{actual.independent_reactions}, r = {actual.restrictions}, F = "
                                    f"{actual.degrees_of_freedom}; revise 'coexisting' or the specifications",
                                    tuple(found)))
        if case.reactions == "complete":
            findings.extend(hindered_product_findings(case, system, equilibrium))
    real_gas, gas_findings = _ideal_gas_check(case, system, analysis, equilibrium,
                                              workspace if equilibrium is not None else None)
    findings += gas_findings
    margin_report = None
    if (margins or case.margins is not None) and equilibrium is not None:
        from .equilibrium.margin_findings import margin_report_and_findings
        margin_report, more = margin_report_and_findings(case, equilibrium, workspace)
        findings += more

    impossible = assumed_outside_range(case, system, count)
    shown = set(dict(equilibrium.set_aside)) if equilibrium is not None else set()
    findings += [Finding("error", "data", f"the case assumes phase {p} present, but at the specified T = "
                         f"{case.specified.temperature_K:.2f} K it cannot exist: {why}; a phase is valid only inside "
                         "its thermo data's temperature range", (p,)) for p, why in impossible if p not in shown]

    # verdict before claims
    verdict = spec.status
    if analysis.unbalanced or F < 0 or count.empty_phases or count.unholdable or impossible or any(f.severity == "error"
                                                                               for f in set_findings):
        verdict = Verdict.INCONSISTENT
    elif verdict == Verdict.WELL_POSED and equilibrium is not None and not equilibrium.confirmed:
        verdict = Verdict.NOT_CONFIRMED

    checks, claim_findings = _claim_checks(case, count, equilibrium, verdict)
    findings += claim_findings
    physical = verdict          # what the physics says, before the claims are weighed
    if any(c.held is False for c in checks):
        verdict = Verdict.INCONSISTENT
    reason = verdict_reason(verdict, system, analysis, count, spec, equilibrium, checks, case, impossible, physical)
    wrong_set = [f for f in set_findings if f.severity == "error"]
    if verdict == Verdict.INCONSISTENT and wrong_set and not analysis.unbalanced:
        reason = "the phase set cannot be right: " + wrong_set[0].message.split(": ", 1)[0]
    return AuditResult(case, system, analysis, count, spec, equilibrium, tuple(checks), tuple(findings), verdict,
                       reason, real_gas, margin_report)


def _ideal_gas_check(case: Case, system: ChemicalSystem, analysis: ReactionAnalysis, equilibrium, workspace):
    """The ideal-gas assumption at pressure (equilibrium/real_gas.py): the check of a certified
    state, and the high-pressure caution.  Returns (RealGasAudit or None, findings)."""
    from . import settings
    if not any(p.is_gas and p.model == "ideal-gas" for p in system.phases):
        if system.source == "packaged" and any(p.model == "Peng-Robinson" for p in system.phases):
            from .equilibrium.real_gas import requested_model_findings
            return None, requested_model_findings(system)
        return None, []
    solved = equilibrium is not None and equilibrium.solved
    P = equilibrium.pressure_Pa if solved else case.specified.pressure_Pa
    if P is None or P < min(settings.REAL_GAS_AUDIT_PRESSURE_PA, settings.HIGH_PRESSURE_CAUTION_PA):
        return None, []     # (the common low-pressure path imports nothing more)
    from .equilibrium.real_gas import audit_ideal_gas, high_pressure_caution, real_gas_findings
    checked = audit_ideal_gas(case, system, analysis, equilibrium, workspace) if solved else None
    return checked, high_pressure_caution(system, P) + real_gas_findings(checked, system)


def assumed_outside_range(case: Case, system: ChemicalSystem, count: PhaseRuleCount) -> list[tuple[str, str]]:
    """(phase, why) for each condensed phase assumed to coexist whose every species' thermo
    data exclude the specified temperature (closed ranges, ``settings.THERMO_RANGE_TOLERANCE_K``)."""
    from .settings import THERMO_RANGE_TOLERANCE_K as tol
    T = case.specified.temperature_K
    if T is None:
        return []
    out = []
    for phase in count.coexisting:
        ph = system.phase(phase)
        sps = [system.species[k] for k in system.phase_indices(phase)]
        if ph.is_gas or not sps or any(s.t_min - tol <= T <= s.t_max + tol for s in sps):
            continue
        out.append((phase, ", ".join(f"{s.label} has data for {s.t_min:g}-{s.t_max:g} K" for s in sps)))
    return out


def _system_findings(system: ChemicalSystem) -> list[Finding]:
    """What cantera warned while loading, phases set aside, interfaces whose sites are not conserved."""
    findings = []
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
    return findings


def phase_set_findings(system: ChemicalSystem, count: PhaseRuleCount) -> list[Finding]:
    """Phase sets that cannot be right (system/phase_sets.py): an error when the case assumes
    the phases present (an interface: with a feed to minimise), a warning (a note for an
    interface) otherwise."""
    from .system.phase_sets import interface_phases, shared_gas_phases
    assumed = set(count.coexisting) | set(count.empty_phases)
    out = [Finding("error", "phases", f"species {sp} in the ideal-gas phase {ph} is a condensed species: {why}; "
                   "inside a gas it would be counted as a gas at its partial pressure; put it in a phase of its own",
                   (ph, sp)) for ph, sp, why in system.condensed_in_gas]
    for pair in shared_gas_phases(system):
        a, b = pair.phases
        both = a in assumed and b in assumed
        if pair.same_species:
            why = ("they are one phase under two names, and the split of material between them is indeterminate")
        else:
            only = "; ".join(f"{', '.join(names)} only in {ph}" for names, ph in zip(pair.only, pair.phases) if names)
            why = (f"both can be present only with one and the same composition ({only} absent), with an "
                   "indeterminate split; otherwise one of them must be empty")
        out.append(Finding("error" if both else "warning", "phases", f"phases {a} and {b} are both ideal gases "
                           f"sharing {', '.join(pair.shared)}: ideal gases mix in all proportions, so {why}; "
                           "list these species in one gas phase", (a, b)))
    for ph in interface_phases(system):
        # a count without a feed may hold an interface (its sites are a conserved row); the
        # Gibbs minimisation of a feed cannot
        bulk = ph in assumed and count.has_feed
        out.append(Finding("error" if bulk else "note", "phases", f"phase {ph} is a surface (interface) phase: "
                           "its species sit on the sites of a solid surface whose amount the catalyst's area sets, "
                           "not a bulk material balance, so a bulk equilibrium audit cannot place it; name the bulk "
                           "phases under system.phases (or leave it out of 'coexisting') and treat surface "
                           "coverage separately", (ph,)))
    return out


def _count_findings(count: PhaseRuleCount) -> list[Finding]:
    """Empty and excluded phases, a negative F, restrictions counted once, what the feed fixes."""
    findings = []
    F = count.degrees_of_freedom
    for phase in count.empty_phases:
        findings.append(Finding("error", "phase-rule", f"phase {phase} is assumed to coexist but none of its species "
                                "can form from this feed (each needs an element the feed lacks, or a reaction the "
                                "list does not hold)", (phase,)))
    if count.excluded:
        findings.append(Finding("note", "phase-rule", f"{', '.join(count.excluded)} cannot be present (the feed lacks "
                                "an element of each, or the listed reactions cannot form it) and are left out of the "
                                "count", count.excluded))
    for rel, absent in count.unholdable:
        findings.append(Finding("error", "phase-rule", f"declared restriction '{rel.text}' ({rel.key_path}) cannot "
                                f"hold: {', '.join(absent)} cannot be present (the feed lacks an element of it, or the "
                                "listed reactions cannot form it), so its mole fraction is zero; remove the restriction "
                                "or feed what forms the species", absent))
    if F < 0:
        findings.append(Finding("error", "phase-rule", f"F = {F} < 0: the phases assumed to coexist "
                                f"({', '.join(count.coexisting)}) cannot coexist at equilibrium with these "
                                "reactions and restrictions", count.coexisting))
    for rel in count.double_counted:
        findings.append(Finding("warning", "phase-rule", f"declared restriction '{rel.text}' ({rel.key_path}) is "
                                f"already {rel.origin}: counted once, not twice", (rel.key_path,)))
    words = dict(count.feed_words)
    by_phase: dict[str, list] = {}
    for rel in count.relations:
        if rel.origin == "feed":
            by_phase.setdefault(rel.phase, []).append(rel)
    for phase, rels in by_phase.items():
        if phase in words:
            findings.append(Finding("note", "phase-rule", f"the feed fixes {words[phase]} in the {phase} "
                                    f"({len(rels)} relation{'s' if len(rels) > 1 else ''} on its mole fractions, "
                                    "counted in r)", (phase,)))
        else:
            findings += [Finding("note", "phase-rule", f"the feed imposes {rel.text}", (rel.phase,)) for rel in rels]
    return findings


def _specification_findings(spec: SpecificationAudit) -> list[Finding]:
    findings = []
    if spec.status != Verdict.WELL_POSED:
        findings.append(Finding("error", "specification", f"{spec.status}: {spec.reasons[-1] if len(spec.reasons) > 1 else spec.reasons[0]}"
                                + (f"; {spec.suggestion}" if spec.suggestion else ""),
                                spec.conflicting or spec.free))
    if spec.conflicting and spec.status == Verdict.OVER_SPECIFIED:
        findings.append(Finding("error", "specification", "conflicting specifications: " + "; ".join(spec.conflicting),
                                spec.conflicting))
    return findings


def _claim_checks(case: Case, count: PhaseRuleCount, equilibrium, verdict: str) -> tuple[list[ClaimCheck], list[Finding]]:
    """Each claim of the case against what the audit found, and a finding for each that is
    refuted or cannot be checked."""
    F = count.degrees_of_freedom
    findings: list[Finding] = []
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
    return checks, findings


def hindered_product_findings(case: Case, system: ChemicalSystem, equilibrium) -> list[Finding]:
    """Warn when the equilibrium turns most of an element into a product that practice treats
    as kinetically hindered: judged by the share of the element the product gains from the
    feed to the equilibrium state (a product already in the feed, such as recycle methane in a
    methanol loop, is judged by what the equilibrium adds to it)."""
    from .hindered import HINDERED
    from .settings import HINDERED_ELEMENT_SHARE
    if equilibrium is None or not equilibrium.solved:
        return []
    fed: dict[int, float] = {}
    for name, amount in feed_moles(case, system) or ():
        k = system.find(name)[0]
        fed[k] = fed.get(k, 0.0) + float(amount)
    amounts: dict[int, float] = {}
    for p in equilibrium.phases:
        for name, x in p.mole_fractions:
            amounts[system.index_in(name, p.name)] = p.moles * x
    totals = {e: sum(float(row[k]) * n for k, n in amounts.items())
              for e, row in zip(system.elements, system.formula_matrix) if e != "charge"}
    out = []
    for k, n in sorted(amounts.items()):
        sp = system.species[k]
        if sp.name not in HINDERED or n <= fed.get(k, 0.0):
            continue
        gained = [(e, float(row[k]) * n / totals[e], float(row[k]) * fed.get(k, 0.0) / totals[e])
                  for e, row in zip(system.elements, system.formula_matrix) if e in totals and totals[e] > 0 and row[k]]
        most = [(e, x, x0) for e, x, x0 in gained if x - x0 > HINDERED_ELEMENT_SHARE]
        if most:
            common, why = HINDERED[sp.name]
            held = " and ".join(f"{x:.0%} of the {e}" for e, x, _ in most)
            before = ("the feed holds none" if not fed.get(k) else
                      "against " + " and ".join(f"{x0:.0%}" for _, _, x0 in most) + " in the feed")
            out.append(Finding("warning", "equilibrium", f"{sp.label} ({common}) holds {held} at equilibrium "
                               f"({n:.4g} mol), {before}; {why}. 'reactions: complete' lets it "
                               "form: if it is kinetically hindered in this unit, list the intended reactions "
                               "instead of 'complete'", (sp.label, *(e for e, _, _ in most))))
    return out


def audit_file(path: str | Path, confirm: bool = True, margins: bool = False) -> AuditResult:
    return run(case_mod.load_case(path), confirm=confirm, margins=margins)


def audit_for_batch(path: str | Path, confirm: bool = True, raise_errors: bool = False, margins: bool = False):
    """One unit of work of a multi-case run: the result, or the input error as a value (so that
    an executor does not retry a file that is simply invalid)."""
    try:
        return audit_file(path, confirm=confirm, margins=margins)
    except InputError as exc:
        if raise_errors:
            raise
        return exc
