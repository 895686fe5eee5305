"""Is the state determined by what the case fixes?  Non-singularity of the specification
audit's equations at the solution, by proof where one applies, numerically otherwise.

For structurally square cases the Dulmage–Mendelsohn decomposition says the equations can
be solved; at the equilibrium state their Jacobian must also be nonsingular.

*Proof* (``proof_applies``).  Ideal phases at fixed T and P, every present mole fraction
positive and the phase amounts determined: the equilibrium rows force a mole-fraction
change ``v`` to lie in ``range(Aᵀ)`` (``d ln x = Aᵀ dλ`` over the present species), and
with ``M = A X Aᵀ`` positive definite the normalisation and relation rows then force
``dλ = 0`` (W. R. Smith and R. W. Missen, *Chemical Reaction Equilibrium Analysis*, 1982,
ch. 2 and 6: the element-potential form of the equilibrium conditions).  When the
uniqueness proof of :mod:`.uniqueness` holds (convexity, positive driving forces,
independent phase compositions) the equations are nonsingular and no number overrules it.

*Numerical test* (every other square case: mole-fraction or ratio specifications, an
outer solve, a non-ideal model).  Columns ``ln T, ln P`` and the present mole fractions,
the latter scaled by their values (relative changes); derivatives exact for ideal phases:
d ln x / d x = 1/x, d(mu°/RT)/d ln T = -H°/RT, d(mu°/RT)/d ln P = P V/RT.  The rows that are
linear in the mole fractions (normalisations, relations, mole-fraction and ratio
specifications) are first reduced exactly to reduced row echelon form over the species
ordered by abundance, so that the test does not depend on how the feed relations happen
to be written: a combination of them that touches only trace species becomes a row of its
own, whose scale is its own.  A linear row that is an exact combination of the others
makes the system singular outright.  Rows are then scaled to unit length and the smallest
over largest singular value is compared with ``settings.JACOBIAN_RANK_TOLERANCE``.
"""
from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from ..case import Case
from ..exact import RowEchelon
from ..phase_rule import PhaseRuleCount
from ..structure import SpecificationAudit
from ..system import ChemicalSystem
from .workspace import Workspace

BY_PROOF = ("proof: ideal phases at fixed temperature and pressure, every present mole fraction positive, "
            "phase amounts determined (element-potential form of the equilibrium conditions)")
BY_NUMBERS = ("numerical: scaled Jacobian, linear rows in exact echelon form over the species ordered by "
              "abundance")


@dataclass(frozen=True)
class JacobianLayout:
    """Constant parts of the Jacobian.

    Columns ``ln T, ln P`` and the present mole fractions.  ``constant``, ``stoich`` and
    ``tp`` give the rows that are not linear in the mole fractions (equilibria, then the T
    and P specifications); ``linear`` the rows that are, exactly, as sparse rows over the
    mole-fraction columns.
    """

    present: np.ndarray      # the present species, one column each
    constant: np.ndarray     # equilibria and T, P rows: constant entries of the mole-fraction columns
    stoich: np.ndarray       # those rows' stoichiometry over all species (for the T and P derivatives)
    tp: np.ndarray           # those rows' constant entries of the T and P columns
    linear: tuple            # rows linear in the mole fractions: {column: Fraction}


def proof_applies(ideal: bool, case: Case, unique_proved: bool, n: np.ndarray, present: np.ndarray) -> bool:
    """The non-singularity proof of the module docstring holds at this state."""
    s = case.specified
    return (ideal and unique_proved and s.temperature_K is not None and s.pressure_Pa is not None
            and bool((n[present] > 0).all()))


def layout(workspace: Workspace, case: Case, count: PhaseRuleCount, spec: SpecificationAudit) -> JacobianLayout:
    """The layout for a case, built once per kind of specification: the values of T and P
    do not enter it, so the points of a sweep share one."""
    s = case.specified
    key = (s.temperature_K is not None, s.pressure_Pa is not None, s.mole_fractions, s.ratios)
    layouts = workspace.jacobian_layouts(count, spec)
    if key not in layouts:
        layouts[key] = build_layout(case, workspace.system, count, spec)
    return layouts[key]


def _linear_rows(case: Case, system: ChemicalSystem, count: PhaseRuleCount, spec: SpecificationAudit,
                 col: dict) -> list[dict]:
    """Normalisations, relations, mole-fraction and ratio specifications, as exact sparse
    rows over the mole-fraction columns (a specification on a species not present is left
    out, as the structure does)."""
    rows: list[dict] = []
    for e in spec.equations:
        if e.kind == "normalisation":
            rows.append({c - 2: Fraction(1) for c in e.variables})
    for rel in count.relations:
        row: dict = {}
        for k, c in rel.coefficients:
            row[col[k]] = row.get(col[k], 0) + Fraction(c)
        rows.append(row)
    for m in case.specified.mole_fractions:
        k = system.index_in(m.species, m.phase)
        if k in col:
            rows.append({col[k]: Fraction(1)})
    for q in case.specified.ratios:
        a, b = system.index_in(q.numerator, q.phase), system.index_in(q.denominator, q.phase)
        if a in col and b in col:
            rows.append({col[a]: Fraction(1), col[b]: -Fraction(q.value)})
    return rows


def build_layout(case: Case, system: ChemicalSystem, count: PhaseRuleCount, spec: SpecificationAudit) -> JacobianLayout:
    s = case.specified
    present = list(count.present_species)
    col = {k: j for j, k in enumerate(present)}
    solution = {p.name: len(p.species) > 1 for p in system.phases}
    n_rows = len(count.reactions_present) + (s.temperature_K is not None) + (s.pressure_Pa is not None)
    constant = np.zeros((n_rows, len(present)))
    stoich = np.zeros((n_rows, system.n_species))
    tp = np.zeros((n_rows, 2))
    for i, rxn in enumerate(count.reactions_present):
        for k, c in rxn.stoich:
            stoich[i, k] = float(c)
            if solution[system.species[k].phase]:
                constant[i, col[k]] += float(c)      # d(c ln x)/dx * x = c
    i = len(count.reactions_present)
    if s.temperature_K is not None:
        tp[i, 0] = 1.0
        i += 1
    if s.pressure_Pa is not None:
        tp[i, 1] = 1.0
    linear = tuple(_linear_rows(case, system, count, spec, col))
    return JacobianLayout(np.array(present, dtype=int), constant, stoich, tp, linear)


def echelon_by_abundance(rows, x: np.ndarray) -> np.ndarray:
    """The exact reduced row echelon form of ``rows`` with the columns taken in order of
    decreasing ``x``, as floats over the original columns; a row that depends on the others
    gives a row of zeros (the system is then singular whatever the values)."""
    order = np.argsort(-x, kind="stable")
    position = np.empty_like(order)
    position[order] = np.arange(order.size)
    ech = RowEchelon(track=False, leftmost=True)
    for r in rows:
        ech.add({int(position[j]): c for j, c in r.items()})
    out = np.zeros((len(rows), x.size))
    for i, r in enumerate(ech.basis_rows()):
        for p, c in r.items():
            out[i, order[p]] = float(c)
    return out


def jacobian_rcond(lay: JacobianLayout, g_dlnT: np.ndarray, g_dlnP: np.ndarray, n: np.ndarray,
                   phase_of: np.ndarray, totals: np.ndarray) -> float:
    """Smallest over largest singular value of the scaled Jacobian of the audit's equations
    (the numerical test of the module docstring)."""
    x = n[lay.present] / totals[phase_of[lay.present]]
    upper = np.concatenate((lay.stoich @ np.column_stack((g_dlnT, g_dlnP)) + lay.tp, lay.constant), axis=1)
    lower = echelon_by_abundance(lay.linear, x) * x
    J = np.concatenate((upper, np.concatenate((np.zeros((lower.shape[0], 2)), lower), axis=1)), axis=0)
    norms = np.sqrt(np.einsum("ij,ij->i", J, J))
    if not norms.all():
        return 0.0
    J /= norms[:, None]
    sv = np.linalg.svd(J, compute_uv=False)
    return float(sv[-1] / sv[0]) if sv.size and sv[0] > 0 else 0.0
