"""The ideal-gas assumption at pressure (issue 23): Peng-Robinson fugacity coefficients from
critical constants, the re-solve and its finding, and a Peng-Robinson gas on request.

Real case files (tests/data/real_gas/), the real cantera, the real CLI."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import yaml

from clitools import run
from auditor import settings
from auditor.equilibrium.peng_robinson import NoGasRoot, PengRobinsonGas, gas_root
from auditor.system.critical import critical_constants, own_table

DATA = Path(__file__).parents[1] / "data" / "real_gas"
ROOT = Path(__file__).parents[2]

# Larson & Dodge, J. Am. Chem. Soc. 45 (1923) 2918: measured equilibrium NH3 at 450 degC,
# 300 atm, 3 : 1 H2 : N2 feed (from memory)
LARSON_DODGE_300_ATM = 0.359


def check(path) -> dict:
    rc, out, err = run(["check", path, "--json"])
    assert rc in (0, 1), err
    return json.loads(out)


def gas_x(doc: dict, species: str) -> float:
    return dict(doc["equilibrium"]["phases"][0]["mole_fractions"])[species]


def cantera_ammonia(P_atm: float) -> float:
    """x(NH3) at 450 degC and P with the ideal gas of nasa_gas.yaml, cantera run directly."""
    import cantera as ct
    species = [s for s in ct.Species.list_from_file("nasa_gas.yaml") if s.name in ("N2", "H2", "NH3")]
    gas = ct.Solution(thermo="ideal-gas", species=species)
    gas.TPX = 723.15, P_atm * 101325.0, "H2:3, N2:1"
    gas.equilibrate("TP")
    return float(gas["NH3"].X[0])


@pytest.mark.parametrize("P, expected", [(100, 0.160), (300, 0.318)])
def test_ideal_ammonia_matches_cantera_run_directly(P, expected):
    doc = check(DATA / f"ammonia_{P}atm.yaml")
    assert doc["verdict"] == "well-posed"
    x = gas_x(doc, "NH3")
    assert x == pytest.approx(cantera_ammonia(P), abs=1e-6)   # cantera run directly
    assert x == pytest.approx(expected, abs=5e-4)             # 16.0 % and 31.8 % (issue 23, cantera run directly)


def test_peng_robinson_ammonia_is_near_larson_and_dodge():
    ideal = gas_x(check(DATA / "ammonia_300atm.yaml"), "NH3")
    doc = check(DATA / "ammonia_300atm_pr.yaml")
    assert doc["verdict"] == "well-posed" and doc["equilibrium"]["confirmed"]
    real = gas_x(doc, "NH3")
    assert abs(real - LARSON_DODGE_300_ATM) < 0.02            # Larson & Dodge 1923 (from memory)
    assert abs(real - LARSON_DODGE_300_ATM) < abs(ideal - LARSON_DODGE_300_ATM)
    # uniqueness by restarts: convexity no longer proves it
    assert "starting estimates" in doc["equilibrium"]["unique_basis"]
    note = [f["message"] for f in doc["findings"] if f["topic"] == "real-gas"]
    assert note and "Peng-Robinson" in note[0] and "NH3 Tc 405.40 K" in note[0] and "critical_constants.yaml" in note[0]
    assert "real_gas" not in doc      # no ideal gas left to check


def test_audit_re_solve_agrees_with_cantera_peng_robinson_phase():
    """Two implementations: the audit's own Peng-Robinson fixed point on the ideal case, and
    cantera's Peng-Robinson phase confirming the same case (same constants)."""
    audit = check(DATA / "ammonia_300atm.yaml")["real_gas"]
    confirmed = check(DATA / "ammonia_300atm_pr.yaml")
    for sp, x in audit["real_mole_fractions"].items():
        assert x == pytest.approx(gas_x(confirmed, sp), abs=1e-5)


def test_ammonia_finding_gives_both_answers_and_fugacity_coefficients():
    doc = check(DATA / "ammonia_300atm.yaml")
    rg = doc["real_gas"]
    assert rg["status"] == "checked" and rg["matters"] is True
    assert rg["largest_shift"]["species"] == "NH3" and rg["largest_shift"]["change"] > settings.REAL_GAS_MOLE_FRACTION_TOLERANCE
    assert rg["largest_lnK_shift"]["change"] > settings.REAL_GAS_LNK_TOLERANCE
    msg = next(f["message"] for f in doc["findings"] if f["topic"] == "real-gas" and "matters" in f["message"])
    assert "0.3178 as an ideal gas" in msg and "0.3521 with fugacity coefficients" in msg
    assert "largest fugacity coefficients: N2 1.12" in msg
    assert any("caution" in f["message"] and "304 bar" in f["message"] for f in doc["findings"])


def test_methanol_synthesis_gas_finding_states_methanol_shift():
    doc = check(DATA / "methanol_80bar.yaml")
    rg = doc["real_gas"]
    assert rg["matters"] is True
    shift = rg["real_mole_fractions"]["CH3OH"] - rg["ideal_mole_fractions"]["CH3OH"]
    # methanol's fugacity coefficient below one (a polar vapour well below its critical
    # temperature's multiple) favours methanol: common practice for loops at 50-100 bar
    assert shift > settings.REAL_GAS_MOLE_FRACTION_TOLERANCE
    msg = next(f["message"] for f in doc["findings"] if f["topic"] == "real-gas" and "matters" in f["message"])
    assert f"x(CH3OH) {rg['ideal_mole_fractions']['CH3OH']:.4f} as an ideal gas" in msg and f"({shift:+.4f})" in msg


@pytest.mark.parametrize("species, composition, published, tolerance", [
    # NIST WebBook fluid properties (Lemmon et al.) at 300 K, 100 bar, integrated Z (from memory)
    ("N2", {"N": 2}, 0.98, 0.03),
    ("H2", {"H": 2}, 1.06, 0.04),     # Peng-Robinson is known to underestimate H2 (common practice)
    ("CH4", {"C": 1, "H": 4}, 0.85, 0.04),
])
def test_pure_fugacity_coefficients_at_300_K_100_bar(species, composition, published, tolerance):
    c = critical_constants(species, composition)
    ln_phi, _ = PengRobinsonGas.of([(c.Tc, c.Pc, c.omega)]).ln_phi(300.0, 100e5, np.array([1.0]))
    assert float(np.exp(ln_phi[0])) == pytest.approx(published, abs=tolerance)


@pytest.mark.parametrize("species", ["N2", "CH4", "NH3"])
def test_compressibility_matches_cantera_peng_robinson(species):
    """Z of the pure gas from this module and from cantera's Peng-Robinson phase (cantera run directly)."""
    import cantera as ct
    from auditor.system import packaged_species
    sp = packaged_species("nasa_gas.yaml")[species]
    c = critical_constants(species, sp.composition)
    entry = dict(sp.input_data)
    entry["critical-parameters"] = {"critical-temperature": c.Tc, "critical-pressure": c.Pc, "acentric-factor": c.omega}
    text = yaml.safe_dump({"phases": [{"name": "g", "thermo": "Peng-Robinson", "species": [species]}],
                           "species": [json.loads(json.dumps(entry, default=float))]})
    gas = ct.Solution(yaml=text, name="g")
    T, P = 500.0, 100e5
    gas.TP = T, P
    Z_cantera = P / (gas.density_mole * 1000.0 * 8.314462618 * T)     # density_mole in kmol/m3
    _, Z = PengRobinsonGas.of([(c.Tc, c.Pc, c.omega)]).ln_phi(T, P, np.array([1.0]))
    # cantera's Omega_a, Omega_b are the exact roots (0.457235..., 0.077796...), these the rounded
    # published 0.45724, 0.07780: a few parts per million
    assert Z == pytest.approx(Z_cantera, rel=2e-5)


def test_species_without_constants_are_named():
    doc = check(DATA / "ammonia_with_radical.yaml")
    assert doc["real_gas"]["missing_constants"] == ["NH2"]
    assert any("no critical constants for NH2" in f["message"] for f in doc["findings"])


def test_peng_robinson_request_without_constants_is_bad_input():
    rc, out, err = run(["check", DATA / "radical_peng_robinson.yaml"])
    assert rc == 2 and "system.gas-model" in err and "NH2" in err and ":5:" in err


def test_gas_model_with_a_mechanism_is_bad_input():
    rc, out, err = run(["check", DATA / "mechanism_gas_model.yaml"])
    assert rc == 2 and "system.gas-model" in err and "mechanism" in err


def test_hard_state_for_the_cubic_is_reported_not_a_crash():
    rc, out, err = run(["check", DATA / "methanol_cold_peng_robinson.yaml", "--json"])
    assert rc in (0, 1), err


def test_low_pressure_is_not_checked_and_gets_no_caution():
    doc = check(DATA / "ammonia_5bar.yaml")
    assert "real_gas" not in doc
    assert not [f for f in doc["findings"] if f["topic"] == "real-gas"]


def test_no_gas_root_is_an_exception_of_its_own():
    with pytest.raises(NoGasRoot):
        gas_root(float("nan"), 0.1)


def test_demo_converter_shows_the_check_in_terminal_and_report(tmp_path):
    case = ROOT / "cases" / "ammonia_converter_ratio.yaml"
    rc, out, err = run(["check", case])
    assert "ideal-gas check (Peng-Robinson, 150 bar" in out and "caution: at 150 bar" in out
    report = tmp_path / "r.md"
    rc, out, err = run(["check", case, "--report", report])
    text = report.read_text(encoding="utf-8")
    assert "ideal-gas check (Peng-Robinson, 150 bar" in text and "Critical constants for the ideal-gas check" in text


def test_own_table_rows_fit_their_packaged_species_and_are_used():
    from auditor.system import packaged_species
    gas = packaged_species("nasa_gas.yaml")
    for name in own_table():
        c = critical_constants(name, gas[name].composition)
        assert c is not None and c.source.startswith("auditor critical_constants.yaml"), name


def test_formula_match_skips_isomers():
    # cantera's table calls dimethyl ether "C2H6O" (its descriptive name): ethanol must not get it
    ethanol = critical_constants("C2H5OH", {"C": 2, "H": 6, "O": 1})
    assert ethanol.Tc == pytest.approx(513.92) and "ethanol" in ethanol.source
    methanol = critical_constants("CH3OH", {"C": 1, "H": 4, "O": 1})
    assert "CH4O (methanol)" in methanol.source
