"""Specification audit: count against F and Duhem, and the structure of the equations.

Counting rules (the Gibbs phase rule with reactions, and Duhem's theorem): intensive specifications (temperature, pressure, a mole
fraction, a ratio of mole fractions) count against ``F``; extensive ones (a phase
fraction, a volume, an adiabatic or heat-added energy balance, an isentropic entropy)
only against Duhem's two.  With a feed the case
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

from . import sentences
from .case import Case, Specification
from .dm import DMDecomposition, dulmage_mendelsohn
from .phase_rule import PhaseRuleCount
from .system import ChemicalSystem
from .verdicts import Verdict


@dataclass(frozen=True)
class Equation:
    name: str
    kind: str                       # normalisation, equilibrium, restriction, specification
    variables: tuple[int, ...]      # variable indices touched
    key_path: str = ""


@dataclass(frozen=True)
class SpecificationAudit:
    intensive: tuple[str, ...]      # labels of the intensive specifications
    extensive: tuple[str, ...]
    variables: tuple[str, ...]      # T, P, x(...)
    equations: tuple[Equation, ...]
    decomposition: DMDecomposition
    free: tuple[str, ...]           # variables in the under-determined part
    conflicting: tuple[str, ...]    # specifications in the over-determined part (or by count)
    status: Verdict                 # well-posed, under-specified, over-specified
    reasons: tuple[str, ...]        # each verdict rule as applied
    suggestion: str
    degrees_of_freedom: int
    has_feed: bool
    specifications: tuple[Specification, ...] = ()     # the records the labels above name

    def symbols(self, labels) -> list[str]:
        """The short symbols (T, x(CO), the gas fraction) of specifications given by label."""
        by_label = {s.label: s.symbol for s in self.specifications}
        return [by_label.get(label, label) for label in labels]


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
    fixed = {"T": 0, "P": 1}
    for s in case.specified.specifications:
        if not s.intensive:
            continue
        cols = [fixed[v] if v in fixed else col.get(system.index_in(*v)) for v in s.touches]
        if None not in cols:        # a mole fraction of a species that cannot be present has no column
            eqs.append(Equation(s.label, "specification", tuple(cols), s.key_path))
    return variables, eqs


def _status_by_count(has_feed: bool, n_int: int, n_ext: int, F: int, over_specs) -> Verdict:
    """The verdict rules (README, 'Verdicts'): with a feed ``intensive <= F`` and ``intensive + extensive == 2``; without
    one ``intensive == F`` and nothing extensive; a structural conflict over-specifies."""
    if has_feed:
        if n_int > F or n_int + n_ext > 2 or over_specs:
            return Verdict.OVER_SPECIFIED
        return Verdict.UNDER_SPECIFIED if n_int + n_ext < 2 else Verdict.WELL_POSED
    if n_int > F or over_specs or n_ext:
        return Verdict.OVER_SPECIFIED
    return Verdict.UNDER_SPECIFIED if n_int < F else Verdict.WELL_POSED


def audit_specification(case: Case, system: ChemicalSystem, count: PhaseRuleCount) -> SpecificationAudit:
    """Count the case's specifications against F and Duhem and decompose their structure."""
    specs = case.specified.specifications
    intensive = tuple(s.label for s in specs if s.intensive)
    extensive = tuple(s.label for s in specs if not s.intensive)
    variables, eqs = build_incidence(case, system, count)
    pairs = [(i, v) for i, e in enumerate(eqs) for v in set(e.variables)]
    dm = dulmage_mendelsohn(pairs, n_rows=len(eqs), n_cols=len(variables))
    F, has_feed = count.degrees_of_freedom, case.feed is not None
    n_int, n_ext = len(intensive), len(extensive)
    free = tuple(variables[c] for c in dm.under_cols)
    conflicting = tuple(eqs[r].name for r in dm.over_rows if eqs[r].kind == "specification")
    status = _status_by_count(has_feed, n_int, n_ext, F, conflicting)
    if status == Verdict.OVER_SPECIFIED and not conflicting:
        too_many = n_int + n_ext > 2 if has_feed else n_int > F
        conflicting = intensive + extensive if too_many else (intensive if has_feed else extensive)
    reasons = sentences.specification_reasons(status, has_feed, n_int, n_ext, F)
    suggestion = sentences.specification_suggestion(status, has_feed, n_int, n_ext, F, conflicting, free)
    if F < 0:
        rule, suggestion = sentences.phases_cannot_coexist(F, count.n_phases, count.coexisting)
        reasons.append(rule)
        status, conflicting = Verdict.OVER_SPECIFIED, ()
    return SpecificationAudit(
        intensive=intensive, extensive=extensive, variables=tuple(variables), equations=tuple(eqs),
        decomposition=dm, free=free, conflicting=conflicting, status=status, reasons=tuple(reasons),
        suggestion=suggestion, degrees_of_freedom=F, has_feed=has_feed, specifications=specs)


audit = audit_specification        # the name tests and parallel work import
