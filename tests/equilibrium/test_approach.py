"""Issue 21, item 4: approach to equilibrium.  A top-level ``approach:`` list holds a reaction
short of equilibrium by a temperature approach: its quotient equals its equilibrium constant at
T - dT (endothermic) or T + dT (exothermic); every other independent reaction stays at
equilibrium; the counts do not change; the certificate checks the modified condition.

References: the reaction-quotient equations solved directly with K from cantera's standard
Gibbs energies of the packaged species (hand calculation, scipy), and cantera's own equilibrium
of the water-gas shift at the approach's temperature.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

ct = pytest.importorskip("cantera")

from scipy.optimize import fsolve  # noqa: E402

from auditor.audit import audit_file  # noqa: E402
from clitools import run  # noqa: E402

GAS = ("CH4", "H2O", "CO", "CO2", "H2")
_SPECIES = {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml")}

REFORMER = """\
title: invented steam reformer outlet, 10 K approach on reforming
system:
  source: packaged
  phases:
    gas: [CH4, H2O, CO, CO2, H2]
reactions: complete
feed: {CH4: 1.0, H2O: 3.0}
specified:
  temperature: 850 degC
  pressure: 25 bar
approach:
  - {reaction: "CH4 + H2O <=> CO + 3 H2", temperature: 10 K}
"""

SHIFT = """\
title: invented shift converter
system:
  source: packaged
  phases:
    gas: [CO, H2O, CO2, H2]
reactions: complete
feed: {CO: 1.0, H2O: 1.0}
specified:
  temperature: {T}
  pressure: 1 atm
"""


def write(tmp_path: Path, text: str, name: str = "case.yaml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def lnK(nu: dict, T: float) -> float:
    """ln K from cantera's standard Gibbs energies of the packaged species (1 atm standard state)."""
    gas = ct.Solution(thermo="ideal-gas", species=[_SPECIES[s] for s in nu])
    gas.TP = T, ct.one_atm
    return -sum(v * g for v, g in zip(nu.values(), gas.standard_gibbs_RT))


REFORMING = {"CH4": -1, "H2O": -1, "CO": 1, "H2": 3}
WGS = {"CO": -1, "H2O": -1, "CO2": 1, "H2": 1}


def reformer_by_hand(T: float, P: float, approach: float) -> dict:
    """Extents x1 (reforming), x2 (shift) from CH4 1, H2O 3: ln Q_ref = ln K_ref(T - approach)
    (reforming is endothermic), ln Q_shift = ln K_shift(T); ideal gas, P over 1 atm."""
    k1, k2 = lnK(REFORMING, T - approach), lnK(WGS, T)
    p = P / ct.one_atm

    def moles(z):
        x1, x2 = z
        return {"CH4": 1 - x1, "H2O": 3 - x1 - x2, "CO": x1 - x2, "CO2": x2, "H2": 3 * x1 + x2}

    def eqs(z):
        n = moles(z)
        tot = sum(n.values())
        y = {s: v / tot for s, v in n.items()}
        q1 = math.log(y["CO"]) + 3 * math.log(y["H2"]) - math.log(y["CH4"]) - math.log(y["H2O"]) + 2 * math.log(p)
        q2 = math.log(y["CO2"]) + math.log(y["H2"]) - math.log(y["CO"]) - math.log(y["H2O"])
        return [q1 - k1, q2 - k2]

    z = fsolve(eqs, [0.7, 0.3], xtol=1e-13)
    n = moles(z)
    tot = sum(n.values())
    return {s: v / tot for s, v in n.items()}


def test_reformer_with_a_10_K_approach_against_the_quotient_equations(tmp_path):
    """Steam reformer at 850 degC, 25 bar, S/C = 3, 10 K approach on CH4 + H2O <=> CO + 3 H2: its
    quotient equals K(840 degC) from cantera's standard Gibbs energies, the shift sits at
    K(850 degC); the two quotient equations solved by hand give the same gas."""
    res = audit_file(write(tmp_path, REFORMER))
    eq = res.equilibrium
    assert res.verdict == "well-posed" and eq.confirmed
    x = dict(next(p for p in eq.phases if p.name == "gas").mole_fractions)
    expected = reformer_by_hand(1123.15, 25e5, 10.0)
    for s in GAS:
        assert x[s] == pytest.approx(expected[s], abs=1e-8), s          # measured: x(CH4) 0.03924
    (row,) = eq.approach
    equation, dt, t_of_K, lnk, lnq = row
    assert t_of_K == pytest.approx(1113.15) and lnk == pytest.approx(lnK(REFORMING, 1113.15), abs=1e-9)
    assert lnq == pytest.approx(lnk, abs=1e-6)
    # the approach leaves more methane than equilibrium (the reaction stops short)
    plain = audit_file(write(tmp_path, REFORMER.split("approach:")[0], "plain.yaml")).equilibrium
    x_eq = dict(next(p for p in plain.phases if p.name == "gas").mole_fractions)
    assert x["CH4"] > x_eq["CH4"]
    # no count changes
    assert res.phase_rule.degrees_of_freedom == 2 and len(res.reactions.independent) == 2


def test_shift_with_a_20_K_approach_equals_equilibrium_at_720_K(tmp_path):
    """Water-gas shift (exothermic) at 700 K with a 20 K approach: the gas equals the equilibrium
    gas at 720 K (one reaction, no change in moles), which cantera's own equilibrium gives."""
    approached = audit_file(write(tmp_path, SHIFT.replace("{T}", "700 K") + "approach:\n  - {reaction: "
                                  "\"CO + H2O <=> CO2 + H2\", temperature: 20 K}\n")).equilibrium
    assert approached.confirmed
    assert approached.approach[0][2] == pytest.approx(720.0)           # exothermic: T + dT
    gas = ct.Solution(thermo="ideal-gas", species=[_SPECIES[s] for s in ("CO", "H2O", "CO2", "H2")])
    gas.TPX = 720.0, ct.one_atm, {"CO": 1.0, "H2O": 1.0}
    gas.equilibrate("TP", rtol=1e-14)
    x = dict(approached.phases[0].mole_fractions)
    for s, v in zip(gas.species_names, gas.X):
        assert x[s] == pytest.approx(v, abs=1e-8), s


def test_approach_is_stated_in_json_and_text(tmp_path):
    path = write(tmp_path, REFORMER)
    code, out, _ = run(["check", "--json", str(path)])
    assert code == 0
    (row,) = json.loads(out)["equilibrium"]["approach"]
    assert row["reaction"] == "CH4 + H2O <=> CO + 3 H2" and row["approach_K"] == 10.0
    assert row["lnQ"] == pytest.approx(row["lnK_at_approach"], abs=1e-6)
    code, out, _ = run(["check", str(path)])
    assert code == 0 and "approach to equilibrium: CH4 + H2O <=> CO + 3 H2 held 10 K short" in out


BAD = {
    "unknown-species": ("CH4 + H2O <=> CO + 3 H2 + N2", "10 K", "approach[0].reaction", "N2"),
    "unbalanced": ("CH4 + H2O <=> CO + 2 H2", "10 K", "approach[0].reaction", "does not balance"),
    "negative": ("CH4 + H2O <=> CO + 3 H2", "-5 K", "approach[0].temperature", "zero or positive"),
    "no-unit": ("CH4 + H2O <=> CO + 3 H2", "10", "approach[0].temperature", "with its unit"),
    "larger-than-T": ("CH4 + H2O <=> CO + 3 H2", "2000 K", "approach[0].temperature", "not below the temperature"),
}


@pytest.mark.parametrize("name", sorted(BAD))
def test_bad_approach_is_refused_with_its_place(tmp_path, name):
    equation, dt, key_path, words = BAD[name]
    text = REFORMER.replace('"CH4 + H2O <=> CO + 3 H2", temperature: 10 K', f'"{equation}", temperature: {dt}')
    code, _, err = run(["check", str(write(tmp_path, text))])
    assert code == 2, err
    assert key_path in err and words in err and ".yaml:12:" in err


def test_approach_outside_the_listed_reactions_is_refused(tmp_path):
    """A reaction the case's (incomplete) list cannot produce cannot be held short of equilibrium."""
    text = REFORMER.replace("reactions: complete", "reactions:\n  - CO + H2O <=> CO2 + H2")
    code, _, err = run(["check", str(write(tmp_path, text))])
    assert code == 2 and "approach[0].reaction" in err and "not a combination" in err


def test_two_dependent_approaches_are_refused(tmp_path):
    text = REFORMER + '  - {reaction: "2 CH4 + 2 H2O <=> 2 CO + 6 H2", temperature: 5 K}\n'
    code, _, err = run(["check", str(write(tmp_path, text))])
    assert code == 2 and "approach[1].reaction" in err and "approached before it" in err
