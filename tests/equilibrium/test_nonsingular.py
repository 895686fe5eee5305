"""Non-singularity of the specification audit's equations at the solution: the proof for
ideal phases at fixed T and P, and the numerical test that does not depend on how the feed
relations are written (issue: stoichiometric fuel/air products were called singular)."""
from __future__ import annotations

import random
from fractions import Fraction

import numpy as np
import pytest

ct = pytest.importorskip("cantera")

from auditor import settings  # noqa: E402
from auditor.audit import audit_file, counting_stages  # noqa: E402
from auditor.case import load_case  # noqa: E402
from auditor.equilibrium import Workspace, confirm, jacobian  # noqa: E402

from clitools import run  # noqa: E402

# fuel -> moles of O2 for complete combustion of one mole (stoichiometry, common practice);
# air as O2 + 3.76 N2 (common practice)
FUELS = {"CH4": 2, "C2H6": 3.5, "C3H8": 5, "CH3OH": 1.5}

GRI_CASE = """\
title: stoichiometric {fuel}/air products, {T} K, {P} atm (test family)
system:
  mechanism: gri30.yaml
reactions: complete
feed: {{{fuel}: 1, O2: {o2}, N2: {n2}}}
specified:
  temperature: {T} K
  pressure: {P} atm
"""


def gri_case(tmp_path, fuel, T, P=1):
    o2 = FUELS[fuel]
    path = tmp_path / f"{fuel}_{T}_{P}.yaml"
    path.write_text(GRI_CASE.format(fuel=fuel, T=T, P=P, o2=o2, n2=round(3.76 * o2, 6)), encoding="utf-8")
    return path


def numerical_rcond(path):
    """The numerical test at the certified state, whatever decided the verdict."""
    case = load_case(path)
    system, _, analysis, count, spec = counting_stages(case)
    ws = Workspace(system, analysis)
    eq = confirm(case, system, analysis, count, spec, ws)
    n = np.zeros(system.n_species)
    for p in eq.phases:
        for name, x in p.mole_fractions:
            n[system.index_in(name, p.name)] = x * p.moles
    ws.model.at_state(eq.temperature_K, eq.pressure_Pa, n)
    dT, dP = ws.model.derivatives(eq.temperature_K, eq.pressure_Pa)
    lay = jacobian.layout(ws, case, count, spec)
    return lay, jacobian.jacobian_rcond(lay, dT, dP, n, ws.arrays.phase_of, n @ ws.arrays.membership), eq, system


@pytest.mark.parametrize("fuel", sorted(FUELS))
@pytest.mark.parametrize("T", [300, 500, 800])
def test_stoichiometric_fuel_air_products_are_well_posed(tmp_path, fuel, T):
    # at equivalence ratio 1 the products are CO2 + H2O + N2 with traces; one gas phase with a
    # known feed at fixed T and P is fixed by Duhem's theorem (F = 2, theorem)
    path = gri_case(tmp_path, fuel, T, P=1 if T != 500 else 10)
    result = audit_file(path)
    eq = result.equilibrium
    assert result.verdict == "well-posed", [f.message for f in result.findings]
    assert eq.nonsingularity_test == jacobian.BY_PROOF and eq.jacobian_rcond is None
    # the state against cantera run directly on the same mechanism (equilibrate 'TP')
    gas = ct.Solution("gri30.yaml")
    o2 = FUELS[fuel]
    gas.TPX = T, eq.pressure_Pa, {fuel: 1, "O2": o2, "N2": 3.76 * o2}
    gas.equilibrate("TP")
    x = dict(next(p for p in eq.phases if p.name == eq.phases_present[0]).mole_fractions)
    for name in ("CO2", "H2O", "N2"):
        assert x[name] == pytest.approx(gas[name].X[0], rel=1e-6)


@pytest.mark.parametrize("fuel", ["CH4", "CH3OH"])
def test_numerical_test_passes_the_same_states(tmp_path, fuel):
    # the numerical test, run although the proof decided, must agree with the proof: the
    # redox direction of trace species is a row of its own after the exact echelon form
    _, rcond, _, _ = numerical_rcond(gri_case(tmp_path, fuel, 300))
    assert rcond > settings.JACOBIAN_RANK_TOLERANCE


def test_numerical_test_ignores_how_the_relations_are_written(tmp_path):
    # the same equations written as other combinations of the linear rows (an invertible
    # integer transformation) give the same echelon form, hence the same singular values
    # (row operations do not change the row space; theorem of linear algebra)
    lay, rcond, eq, system = numerical_rcond(gri_case(tmp_path, "C3H8", 500))
    rng = random.Random(7)
    rows = list(lay.linear)
    mixed = []
    for i, r in enumerate(rows):
        out = {k: Fraction(3) * c for k, c in r.items()}
        for j in range(i):
            f = Fraction(rng.randint(-4, 4))
            for k, c in rows[j].items():
                out[k] = out.get(k, 0) + f * c
        mixed.append({k: c for k, c in out.items() if c})
    x = np.linspace(1.0, 1e-30, len(lay.present))
    assert np.array_equal(jacobian.echelon_by_abundance(rows, x), jacobian.echelon_by_abundance(mixed, x))


def test_dependent_linear_rows_are_singular_outright():
    # a row that is an exact combination of the others: the system is singular whatever the values
    rows = [{0: Fraction(1), 1: Fraction(1)}, {1: Fraction(2)}, {0: Fraction(2), 1: Fraction(4)}]
    ech = jacobian.echelon_by_abundance(rows, np.array([0.7, 0.3]))
    assert not ech[2].any() and ech[:2].any(axis=1).all()


SHIFT_SINGULAR = """\
title: CO shift, T and x(N2) fixed, P free (test)
system:
  source: packaged
  phases:
    gas: [CO, H2O, CO2, H2, N2]
reactions: complete
feed: {CO: 1, H2O: 1, N2: 1}
specified:
  temperature: 600 K
  mole-fractions: {gas: {N2: 0.33333333333333333}}
"""


def test_shift_with_no_mole_change_and_pressure_free_stays_singular(tmp_path):
    # CO + H2O <=> CO2 + H2 has no change in moles, so no equation depends on P: the
    # Jacobian's P column is zero (theorem: K of a reaction with sum(nu) = 0 is independent
    # of P for an ideal gas)
    path = tmp_path / "shift.yaml"
    path.write_text(SHIFT_SINGULAR, encoding="utf-8")
    result = audit_file(path)
    eq = result.equilibrium
    assert result.verdict == "not-confirmed"
    assert eq.nonsingularity_test == jacobian.BY_NUMBERS
    assert eq.jacobian_rcond < settings.JACOBIAN_RANK_TOLERANCE
    assert any("numerically singular" in f.message for f in result.findings)
    code, out, _ = run(["check", str(path)])
    assert code == 1 and "equations nonsingular at the solution: no (numerical" in out


REFORMER_X_CH4 = """\
title: reformer outlet, T and x(CH4) fixed, P free (test)
system:
  source: packaged
  phases:
    gas: [CH4, H2O, CO, CO2, H2, N2]
reactions: complete
feed: {CH4: 1.0, H2O: 3.0, N2: 0.02}
specified:
  temperature: 850 degC
  mole-fractions: {gas: {CH4: 0.0348}}
"""


def test_mole_fraction_specification_decided_numerically(tmp_path):
    # methane reforming changes the moles, so x(CH4) moves with P: the square system is
    # nonsingular (Le Chatelier, common practice); the numerical test decides
    path = tmp_path / "reformer.yaml"
    path.write_text(REFORMER_X_CH4, encoding="utf-8")
    result = audit_file(path)
    eq = result.equilibrium
    assert result.verdict == "well-posed", [f.message for f in result.findings]
    assert eq.nonsingularity_test == jacobian.BY_NUMBERS
    assert eq.jacobian_rcond > settings.JACOBIAN_RANK_TOLERANCE
    assert eq.pressure_Pa == pytest.approx(25e5, rel=0.05)   # the design-point demo case holds 3.48 % at 25 bar
