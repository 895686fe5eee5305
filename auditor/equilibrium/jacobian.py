"""Numerical rank of the Jacobian of the specification audit's equations at the solution.

For structurally square cases the Dulmage–Mendelsohn decomposition says the equations can
be solved; the smallest over largest singular value of their scaled Jacobian at the
equilibrium state says whether they are numerically nonsingular there.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..case import Case
from ..phase_rule import PhaseRuleCount
from ..structure import SpecificationAudit
from ..system import ChemicalSystem
from .workspace import Workspace


@dataclass(frozen=True)
class JacobianLayout:
    """Constant parts of the Jacobian, as arrays.

    Rows in the order of ``structure.build_incidence``: normalisations, equilibria,
    restrictions, specifications.  Columns ``ln T, ln P`` and the present mole fractions.
    """

    present: np.ndarray      # the present species, one column each
    by_fraction: np.ndarray  # entries multiplied by the mole fraction of their column
    constant: np.ndarray     # constant entries of the mole-fraction columns
    stoich: np.ndarray       # reaction stoichiometry over all species (for the T and P derivatives)
    tp: np.ndarray           # constant entries of the T and P columns


def layout(workspace: Workspace, case: Case, count: PhaseRuleCount, spec: SpecificationAudit) -> JacobianLayout:
    """The layout for a case, built once per kind of specification: the values of T and P
    do not enter it, so the points of a sweep share one."""
    s = case.specified
    key = (s.temperature_K is not None, s.pressure_Pa is not None, s.mole_fractions, s.ratios)
    layouts = workspace.jacobian_layouts(count, spec)
    if key not in layouts:
        layouts[key] = build_layout(case, workspace.system, count, spec)
    return layouts[key]


def build_layout(case: Case, system: ChemicalSystem, count: PhaseRuleCount, spec: SpecificationAudit) -> JacobianLayout:
    s = case.specified
    present = list(count.present_species)
    col = {k: j for j, k in enumerate(present)}
    solution = {p.name: len(p.species) > 1 for p in system.phases}
    X_rows, C_rows, R_rows, TP_rows = [], [], [], []

    def row():
        X_rows.append(np.zeros(len(present)))
        C_rows.append(np.zeros(len(present)))
        R_rows.append(np.zeros(system.n_species))
        TP_rows.append(np.zeros(2))
        return len(X_rows) - 1

    for e in spec.equations:
        if e.kind == "normalisation":
            i = row()
            for c in e.variables:
                X_rows[i][c - 2] = 1.0
    for rxn in count.reactions_present:
        i = row()
        for k, c in rxn.stoich:
            R_rows[i][k] = float(c)
            if solution[system.species[k].phase]:
                C_rows[i][col[k]] += float(c)      # d(c ln x)/dx * x = c
    for rel in count.relations:
        i = row()
        for k, c in rel.coefficients:
            X_rows[i][col[k]] += float(c)

    if s.temperature_K is not None:
        TP_rows[row()][0] = 1.0
    if s.pressure_Pa is not None:
        TP_rows[row()][1] = 1.0
    for m in s.mole_fractions:
        k = system.index_in(m.species, m.phase)
        if k in col:
            X_rows[row()][col[k]] = 1.0
    for q in s.ratios:
        a, b = system.index_in(q.numerator, q.phase), system.index_in(q.denominator, q.phase)
        if a in col and b in col:
            i = row()
            X_rows[i][col[a]] = 1.0
            X_rows[i][col[b]] = -q.value
    return JacobianLayout(np.array(present, dtype=int), np.array(X_rows), np.array(C_rows), np.array(R_rows),
                          np.array(TP_rows))


def jacobian_rcond(lay: JacobianLayout, g_dlnT: np.ndarray, g_dlnP: np.ndarray, n: np.ndarray,
                   phase_of: np.ndarray, totals: np.ndarray) -> float:
    """Smallest over largest singular value of the scaled Jacobian of the audit's equations.

    Variables ``ln T, ln P`` and the mole fractions, columns of mole fractions scaled by
    their values (relative changes); derivatives are exact for the ideal phases: d ln x / d x
    = 1/x, d(mu°/RT)/d ln T = -H°/RT, d(mu°/RT)/d ln P = P V/RT; rows scaled to unit length.
    """
    x = n[lay.present] / totals[phase_of[lay.present]]
    J = np.concatenate((lay.stoich @ np.column_stack((g_dlnT, g_dlnP)) + lay.tp, lay.by_fraction * x + lay.constant),
                       axis=1)
    norms = np.sqrt(np.einsum("ij,ij->i", J, J))
    J /= np.where(norms > 0, norms, 1.0)[:, None]
    sv = np.linalg.svd(J, compute_uv=False)
    return float(sv[-1] / sv[0]) if sv.size and sv[0] > 0 else 0.0
