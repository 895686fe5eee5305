"""Specification audit: count against F and Duhem, and the structure of the equations.

Counting rules (design §2): intensive specifications (temperature, pressure, a mole
fraction, a ratio of mole fractions) count against ``F``; extensive ones (a phase
fraction, an adiabatic enthalpy balance) only against Duhem's two.  With a feed the case
is a closed-system problem: well posed when ``intensive <= F`` and ``intensive +
extensive == 2``.  Without a feed it is an intensive problem: well posed when
``intensive == F``.

Structure: variables ``T, P`` and every present mole fraction; equations one
normalisation per phase, one equilibrium condition per independent reaction (touching
``T``, ``P`` and the mole fractions of its species in solution phases), the
restrictions, and the intensive specifications.  The Dulmage–Mendelsohn decomposition
(A. L. Dulmage and N. S. Mendelsohn, Can. J. Math. 10, 1958; :mod:`auditor.dm`) of this
incidence names the over-determined part (specifications that conflict) and the
under-determined part (variables still free).
"""
from __future__ import annotations

from dataclasses import dataclass

from .case import Case
from .dm import DMDecomposition, dulmage_mendelsohn
from .phase_rule import PhaseRuleCount
from .system import ChemicalSystem


@dataclass(frozen=True)
class Equation:
    name: str
    kind: str                       # normalisation, equilibrium, restriction, specification
    variables: tuple[int, ...]      # variable indices touched
    key_path: str = ""


@dataclass(frozen=True)
class SpecificationAudit:
    intensive: tuple[str, ...]      # names of the intensive specifications
    extensive: tuple[str, ...]
    variables: tuple[str, ...]      # T, P, x(...)
    equations: tuple[Equation, ...]
    decomposition: DMDecomposition
    free: tuple[str, ...]           # variables in the under-determined part
    conflicting: tuple[str, ...]    # specifications in the over-determined part (or by count)
    status: str                     # well-posed, under-specified, over-specified
    reasons: tuple[str, ...]        # each verdict rule as applied
    suggestion: str
    degrees_of_freedom: int
    has_feed: bool

    @property
    def structural_freedom(self) -> int:
        """Variables minus non-specification equations: equals F when restrictions are independent."""
        return len(self.variables) - sum(1 for e in self.equations if e.kind != "specification")


def _x_name(system: ChemicalSystem, k: int) -> str:
    s = system.species[k]
    return f"x({s.label})" if s.label.endswith(f"[{s.phase}]") else f"x({s.label}) in {s.phase}"


def build_incidence(case: Case, system: ChemicalSystem, count: PhaseRuleCount):
    """Variables and equations of the intensive problem."""
    present = count.present_species
    variables = ["temperature T", "pressure P"] + [_x_name(system, k) for k in present]
    col = {k: 2 + j for j, k in enumerate(present)}
    solution = {p.name: len(p.species) > 1 for p in system.phases}
    eqs: list[Equation] = []
    for phase in count.coexisting:
        eqs.append(Equation(f"sum of mole fractions in {phase} = 1", "normalisation",
                            tuple(col[k] for k in system.phase_indices(phase) if k in col)))
    for r in count.reactions_present:
        touched = [0, 1] + [col[k] for k, _ in r.stoich if solution[system.species[k].phase]]
        eqs.append(Equation(f"equilibrium of {r.equation}", "equilibrium", tuple(touched)))
    for rel in count.relations:
        eqs.append(Equation(f"{rel.origin} restriction {rel.text}", "restriction",
                            tuple(col[k] for k, _ in rel.coefficients), rel.key_path))
    s = case.specified
    intensive, extensive = [], []
    if s.temperature_K is not None:
        eqs.append(Equation("temperature", "specification", (0,), "specified.temperature"))
        intensive.append("temperature")
    if s.pressure_Pa is not None:
        eqs.append(Equation("pressure", "specification", (1,), "specified.pressure"))
        intensive.append("pressure")
    for m in s.mole_fractions:
        k = system.index_in(m.species, m.phase)
        name = f"mole fraction x({m.species}) = {m.value:g} in {m.phase}"
        intensive.append(name)
        if k in col:
            eqs.append(Equation(name, "specification", (col[k],), m.key_path))
    for r in s.ratios:
        ks = [system.index_in(n, r.phase) for n in (r.numerator, r.denominator)]
        name = f"ratio x({r.numerator})/x({r.denominator}) = {r.value:g} in {r.phase}"
        intensive.append(name)
        if all(k in col for k in ks):
            eqs.append(Equation(name, "specification", tuple(col[k] for k in ks), r.key_path))
    for p in s.phase_fractions:
        extensive.append(f"phase fraction of {p.phase} = {p.value:g}")
    if s.adiabatic_feed_temperature_K is not None:
        extensive.append(f"adiabatic enthalpy balance (feed at {s.adiabatic_feed_temperature_K:g} K)")
    return variables, eqs, intensive, extensive


def audit(case: Case, system: ChemicalSystem, count: PhaseRuleCount) -> SpecificationAudit:
    variables, eqs, intensive, extensive = build_incidence(case, system, count)
    pairs = [(i, v) for i, e in enumerate(eqs) for v in set(e.variables)]
    dm = dulmage_mendelsohn(pairs, n_rows=len(eqs), n_cols=len(variables))
    F = count.degrees_of_freedom
    n_int, n_ext = len(intensive), len(extensive)
    free = tuple(variables[c] for c in dm.under_cols)
    over_specs = tuple(eqs[r].name for r in dm.over_rows if eqs[r].kind == "specification")
    reasons: list[str] = []
    conflicting: tuple[str, ...] = over_specs
    if case.feed is not None:
        reasons.append(f"closed system with a known feed: intensive specifications ({n_int}) must not exceed "
                       f"F = {F}, and intensive + extensive ({n_int} + {n_ext} = {n_int + n_ext}) must equal 2 (Duhem)")
        if n_int > F or n_int + n_ext > 2 or over_specs:
            status = "over-specified"
            if n_int > F:
                reasons.append(f"{n_int} intensive specifications exceed F = {F}")
            if n_int + n_ext > 2:
                reasons.append(f"{n_int + n_ext} specifications exceed Duhem's 2")
            if not conflicting:
                conflicting = tuple(intensive + extensive) if n_int + n_ext > 2 else tuple(intensive)
            drop = max(n_int - F, n_int + n_ext - 2, 1)
            suggestion = (f"drop {drop} of the conflicting specifications ({'; '.join(conflicting)})"
                          + (f"; with F = {F} at most {max(F, 0)} of them may be intensive" if n_int > F else ""))
            if n_int > F and n_int + n_ext - drop < 2:
                suggestion += ("; then fix an extensive variable in its place (a phase fraction, or an adiabatic "
                               "enthalpy balance) to keep Duhem's two")
        elif n_int + n_ext < 2:
            status = "under-specified"
            need = 2 - n_int - n_ext
            reasons.append(f"{n_int + n_ext} specification{'s are' if n_int + n_ext != 1 else ' is'} fewer than Duhem's 2")
            room = F - n_int
            hint = []
            if room > 0:
                hint.append(f"an intensive variable such as {' or '.join(free[:3]) or 'temperature or pressure'}")
            hint.append("an extensive one: a phase fraction, or an adiabatic enthalpy balance")
            suggestion = f"fix {need} more variable{'s' if need > 1 else ''}: " + ", or ".join(hint)
        else:
            status = "well-posed"
            reasons.append("the counts satisfy both rules and no specification conflicts in the structure")
            suggestion = ""
    else:
        reasons.append(f"no feed: an intensive problem, well posed when the intensive specifications ({n_int}) "
                       f"equal F = {F}")
        if n_ext:
            reasons.append(f"extensive specifications ({n_ext}) cannot be used without a feed")
        if n_int > F or over_specs or n_ext:
            status = "over-specified"
            if not conflicting:
                conflicting = tuple(intensive + extensive) if n_int > F else tuple(extensive)
            suggestion = (f"drop {max(n_int - F, 0) + n_ext} specification(s) among: {'; '.join(conflicting)}"
                          if n_int > F or n_ext else f"drop one of: {'; '.join(conflicting)}")
            if n_ext:
                suggestion += " (or give the feed, which makes extensive specifications meaningful)"
        elif n_int < F:
            status = "under-specified"
            suggestion = (f"fix {F - n_int} more intensive variable(s), e.g. "
                          + (", ".join(free[:F - n_int + 1]) if free else "temperature or pressure")
                          + "; or give the feed and fix a phase fraction or an adiabatic balance")
        else:
            status = "well-posed"
            suggestion = ""
    if F < 0:
        reasons.append(f"F = {F} < 0: the assumed phases cannot coexist")
        status = "over-specified"
        conflicting = ()
        suggestion = (f"the {count.n_phases} phases assumed to coexist ({', '.join(count.coexisting)}) cannot all "
                      f"be present at equilibrium: assume at most {count.n_phases + F} of them (remove {-F} from "
                      "'coexisting'), or check the reactions and restrictions")
    return SpecificationAudit(
        intensive=tuple(intensive), extensive=tuple(extensive), variables=tuple(variables),
        equations=tuple(eqs), decomposition=dm, free=free, conflicting=conflicting, status=status,
        reasons=tuple(reasons), suggestion=suggestion, degrees_of_freedom=F, has_feed=case.feed is not None)
