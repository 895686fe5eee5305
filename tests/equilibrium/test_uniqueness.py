"""Uniqueness of the equilibrium state: the convexity proof against restarts from other
starting estimates, and the phase-amount condition on its own.

Theory (``auditor.equilibrium._uniqueness``): with ideal phases G is convex; every minimiser
shares the certificate's element potentials (saddle-point theorem, S. Boyd and
L. Vandenberghe, Convex Optimization, 2004, sec. 5.4-5.5), so the state is unique exactly
when each absent phase has a strictly positive driving force and the present phases'
conserved-quantity vectors are independent.
"""
from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from auditor import case as case_mod
from auditor import equilibrium as eqm
from auditor.equilibrium import routes, uniqueness, workspace
from auditor import settings
from auditor.audit import audit_file, counting_stages

CASES = Path(__file__).resolve().parents[2] / "cases"


def stages(path: Path):
    case = case_mod.load_case(path)
    system, _, analysis, count, spec = counting_stages(case)
    return case, system, analysis, count, spec


def write(tmp_path, text, name="case.yaml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def amounts(system, **by_label):
    n = np.zeros(system.n_species)
    for label, v in by_label.items():
        n[system.labels.index(label)] = v
    return n


CALCINER = """\
system:
  source: packaged
  phases:
    gas: [{gas}]
    calcite: [CaCO3(caL)]
    lime: [CaO(s)]
feed: {{CaCO3(caL): 1, {diluent}}}
specified: {{temperature: 1100 K, pressure: 1 atm}}
"""


def _static_and_solver(path):
    case, system, analysis, count, spec = stages(path)
    ws = workspace.Workspace(system, analysis)
    static = ws.arrays
    n0 = workspace.feed_vector(case, system)
    solver = routes.RouteSolver(ws, n0, np.ones(system.n_species, dtype=bool))
    return system, static, solver


def test_calcite_lime_and_pure_co2_amounts_are_indeterminate(tmp_path):
    # CaCO3 = CaO + CO2: with a gas of CO2 alone the three phases' vectors (Ca, C, O) are
    # dependent, so at fixed T and P calcite can turn into lime and CO2 at no change in G
    # (Gibbs phase rule: two components, three phases -> univariant; common practice)
    path = write(tmp_path, CALCINER.format(gas="CO2", diluent="CO2: 0.5"))
    system, static, solver = _static_and_solver(path)
    n = amounts(system, **{"CO2": 0.7, "CaCO3(caL)": 0.4, "CaO(s)": 0.6})
    present = np.array([True, True, True])
    assert uniqueness.phase_amount_rcond(static, n, present) < 1e-14
    totals = n @ static.membership
    sol = routes.SolvedState(n, 1100.0, 101325.0, "cantera vcs", True)
    unique, starts, how, rcond = uniqueness.uniqueness(static, solver, sol, n, totals, present, {})
    assert unique is False and starts == 1 and "indeterminate" in how


def test_a_diluent_in_the_gas_fixes_the_phase_amounts(tmp_path):
    # with nitrogen in the gas the gas vector holds N and the three vectors are independent:
    # the nitrogen balance fixes the gas amount, then Ca and C fix calcite and lime
    path = write(tmp_path, CALCINER.format(gas="CO2, N2", diluent="N2: 1"))
    system, static, _ = _static_and_solver(path)
    n = amounts(system, **{"CO2": 0.3, "N2": 1.0, "CaCO3(caL)": 0.4, "CaO(s)": 0.6})
    assert uniqueness.phase_amount_rcond(static, n, np.array([True, True, True])) > 1e-3
    # two phases, or one, are always determined by independent vectors
    assert uniqueness.phase_amount_rcond(static, n, np.array([True, True, False])) > 1e-3
    assert uniqueness.phase_amount_rcond(static, n, np.array([True, False, False])) == 1.0


def test_more_present_phases_than_conserved_quantities_is_indeterminate(tmp_path):
    path = write(tmp_path, CALCINER.format(gas="CO2", diluent="CO2: 0.5"))
    system, static, _ = _static_and_solver(path)
    n = amounts(system, **{"CO2": 0.7, "CaCO3(caL)": 0.4, "CaO(s)": 0.6})
    wide = replace(static, W=static.W[:2])      # two conserved rows only
    assert uniqueness.phase_amount_rcond(wide, n, np.array([True, True, True])) == 0.0


SOLVING_DEMOS = ["reformer_design_point.yaml", "reformer_carbon_risk.yaml", "ammonia_converter_ratio.yaml",
                 "aromatics_flash_phase_fraction.yaml", "combustor_adiabatic.yaml"]


def restarts_agree_where_proved(path: Path) -> bool:
    """Audit the case; where the proof decides uniqueness, restart cantera from every other
    starting estimate (``RESTARTS`` of them, the proof made inconclusive) and require the
    same state.  Returns whether the proof decided."""
    case, system, analysis, count, spec = stages(path)
    if getattr(case, "approach", ()):
        return False        # a reaction held short of equilibrium: cantera's restarts solve another problem
    eq = eqm.confirm(case, system, analysis, count, spec)
    if not eq.solved or not eq.unique_basis.startswith("proved"):
        return False
    assert eq.unique is True and eq.phase_amount_rcond >= settings.PHASE_AMOUNT_RCOND_TOLERANCE
    ws = workspace.Workspace(system, analysis)
    n0 = workspace.feed_vector(case, system)
    rows = ws.arrays.element_rows
    candidate = ~(rows[rows @ n0 == 0] != 0).any(axis=0)
    solver = routes.RouteSolver(ws, n0, candidate)
    static = solver.arrays
    n = np.zeros(system.n_species)
    n[np.concatenate(static.phase_species)] = [x * p.moles for p in eq.phases for _, x in p.mole_fractions]
    totals = n @ static.membership
    sol = routes.SolvedState(n, eq.temperature_K, eq.pressure_Pa, "cantera vcs", True)
    unique, starts, how, _ = uniqueness.uniqueness(static, solver, sol, n, totals, totals > 0, {"x": 0.0})
    assert unique is True and starts == eqm.RESTARTS + 1 and how == f"{starts} starting estimates agree"
    return True


@pytest.mark.parametrize("name", sorted(p.name for p in CASES.glob("*.yaml")))
def test_proof_agrees_with_restarts_on_every_solving_demo(name):
    if not restarts_agree_where_proved(CASES / name):
        pytest.skip("the proof does not decide this case")


# invented study points, each at a fixed T and P (gas with pure condensed phases, and an
# ideal liquid solution); restarts must confirm every state the proof calls unique
AGREEMENT_SYSTEMS = {
    "ammonia-synthesis": ("gas: [N2, H2, NH3]", "{N2: 1, H2: 3}", "700 K", "200 bar"),
    "shift-with-methane": ("gas: [CO, H2O, CO2, H2, CH4]", "{CO: 1, H2O: 1.5}", "800 K", "30 bar"),
    "carbon-forming-reformer": ("gas: [CH4, H2O, CO, CO2, H2]\n    graphite: [C(gr)]", "{CH4: 1, H2O: 0.3}",
                                "900 K", "2 bar"),
    "calcite-below-decomposition": ("gas: [CO2, N2]\n    calcite: [CaCO3(caL)]\n    lime: [CaO(s)]",
                                    "{CaCO3(caL): 1, N2: 2}", "1000 K", "1 atm"),
    "calcite-above-decomposition": ("gas: [CO2, N2]\n    calcite: [CaCO3(caL)]\n    lime: [CaO(s)]",
                                    "{CaCO3(caL): 1, N2: 2}", "1150 K", "1 atm"),
    "aromatics-liquid-only": ("vapour: [C6H6, C7H8]\n    liquid: [C6H6(L), C7H8(L)]", "{C6H6: 0.6, C7H8: 0.4}",
                              "330 K", "1 atm"),
    "aromatics-two-phase": ("vapour: [C6H6, C7H8]\n    liquid: [C6H6(L), C7H8(L)]", "{C6H6: 0.6, C7H8: 0.4}",
                            "370 K", "1 atm"),
}


@pytest.mark.parametrize("name", sorted(AGREEMENT_SYSTEMS))
def test_proof_agrees_with_restarts_on_study_points(name, tmp_path):
    phases, feed, T, P = AGREEMENT_SYSTEMS[name]
    text = (f"title: {name} (invented check)\nsystem:\n  source: packaged\n  phases:\n    {phases}\n"
            f"reactions: complete\nfeed: {feed}\nspecified: {{temperature: {T}, pressure: {P}}}\n")
    assert restarts_agree_where_proved(write(tmp_path, text)), name


def test_demo_cases_decide_uniqueness_by_the_proof():
    decided = []
    for name in SOLVING_DEMOS:
        path = CASES / name
        if not path.exists():
            continue
        eq = audit_file(path).equilibrium
        if eq is not None and eq.solved:
            decided.append(eq.unique_basis.startswith("proved"))
    assert decided and all(decided)


@pytest.mark.parametrize("seed", range(20))
def test_two_phase_closed_form_matches_the_svd(seed, tmp_path_factory):
    # the two-column ratio |u - v| / |u + v| equals s_min / s_max of [u v] (u, v unit
    # vectors: singular values sqrt(1 +- |u.v|); theorem)
    rng = np.random.default_rng(seed)
    W = rng.normal(size=(4, 5))
    if seed % 4 == 0:
        W[:, 3] = W[:, 0] * 2.0                                    # nearly dependent columns
        W[0, 3] += 1e-7
    membership = np.zeros((5, 2))
    membership[[0, 1, 2], 0] = 1.0
    membership[[3, 4], 1] = 1.0
    n = np.array([1.0, 0.0, 0.0, 1.0, 0.0]) if seed % 4 == 0 else rng.uniform(0.1, 1.0, 5)
    fake = type("S", (), {"W": W, "membership": membership})
    got = uniqueness.phase_amount_rcond(fake, n, np.array([True, True]))
    cols = (W * n) @ membership
    s = np.linalg.svd(cols / np.linalg.norm(cols, axis=0), compute_uv=False)
    assert got == pytest.approx(s[-1] / s[0], rel=1e-6)


REDLICH_KWONG = """\
title: Non-ideal gas, uniqueness by restarts only (invented check)
system:
  mechanism: h2o2.yaml
  phases: [ohmech-RK]
reactions: complete
feed: {H2: 2.0, O2: 1.0, AR: 1.0}
specified: {temperature: 2500 K, pressure: 50 bar}
"""


def test_non_ideal_phase_is_decided_by_restarts(tmp_path):
    # a Redlich-Kwong gas (cantera's h2o2.yaml) is not an ideal mixture, so convexity of G is
    # not guaranteed and the proof does not apply: cantera is restarted RESTARTS times
    eq = audit_file(write(tmp_path, REDLICH_KWONG)).equilibrium
    assert eq.confirmed and eq.unique is True
    assert eq.starts == eqm.RESTARTS + 1 and eq.phase_amount_rcond is None
    assert eq.unique_basis == f"{eq.starts} starting estimates agree"


def test_per_case_caches_are_bounded():
    cache = {}
    for i in range(workspace.TABLE_ENTRIES + 10):
        workspace._store(cache, i, i)
    assert len(cache) == workspace.TABLE_ENTRIES and min(cache) == 10
