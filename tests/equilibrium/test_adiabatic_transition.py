"""An enthalpy-pressure (adiabatic) case whose answer sits on a phase transition.

``cases/ice_melter_adiabatic.yaml``: 2 mol of ice, a nitrogen carrier and 0.02 mol of
hydrogen with its stoichiometric oxygen, fed at 273.15 K and 1 atm, burn adiabatically.
The heat melts some but not all of the ice, so the outlet holds ice, liquid water and gas
at the melting point: T is pinned while the split between ice and liquid takes up the
enthalpy.  An outer solve on T around a T,P minimisation sees the residual jump there;
the tool must find the state on the plateau and certify it.

Hand calculation (energy balance; every value with its source):
* Delta_f H(H2O, liquid, 298.15 K) = -285.830 kJ/mol (CODATA Key Values for
  Thermodynamics, J. D. Cox, D. D. Wagman, V. A. Medvedev, 1989);
* heat capacities at 298.15 K, J/(mol K): H2 28.836, O2 29.376, H2O(l) 75.35 (NIST-JANAF
  Thermochemical Tables, 4th ed., 1998; the liquid value from memory), to carry the heat of
  reaction to 273.15 K;
* Delta_fus H(H2O, 273.15 K) = 6.01 kJ/mol (CRC Handbook of Chemistry and Physics; NIST
  Chemistry WebBook);
* vapour pressure of water at 273.15 K 611.2 Pa and Delta_vap H = 45.05 kJ/mol (CRC
  Handbook, from memory): the nitrogen carries some water away as vapour;
* the ice point, 273.15 K at 1 atm (NIST).
"""
from __future__ import annotations

from pathlib import Path

import pytest
import yaml

ct = pytest.importorskip("cantera")

from auditor.audit import audit_file  # noqa: E402
from auditor.equilibrium import certificate_holds  # noqa: E402

CASE = Path(__file__).resolve().parents[2] / "cases" / "ice_melter_adiabatic.yaml"
P_ATM = 101325.0

DFH_WATER_LIQUID_298 = -285.830            # kJ/mol, CODATA 1989
CP_298 = {"H2": 28.836, "O2": 29.376, "H2O(l)": 75.35}   # J/(mol K), NIST-JANAF
DH_FUSION = 6.01                           # kJ/mol at 273.15 K, CRC / NIST WebBook
P_VAPOUR = 611.2                           # Pa at 273.15 K, CRC (from memory)
DH_VAPOUR = 45.05                          # kJ/mol at 273.15 K, CRC (from memory)


def _melted_by_hand(h2: float, n2: float) -> float:
    """Moles of ice melted when h2 mol of H2 burn to liquid water at 273.15 K and n2 mol of
    nitrogen leave saturated with water vapour."""
    d_cp = CP_298["H2O(l)"] - CP_298["H2"] - 0.5 * CP_298["O2"]              # J/(mol K)
    dh_reaction = DFH_WATER_LIQUID_298 + d_cp * (273.15 - 298.15) / 1000.0   # kJ/mol, Kirchhoff's law
    y = P_VAPOUR / P_ATM
    vapour = n2 * y / (1.0 - y)
    return (h2 * -dh_reaction - vapour * DH_VAPOUR) / DH_FUSION


def _phases(eq) -> dict:
    return {p.name: p for p in eq.phases}


def test_ice_melter_lands_on_the_melting_plateau_and_matches_the_hand_energy_balance():
    result = audit_file(CASE)
    eq = result.equilibrium
    assert result.verdict == "well-posed"
    assert eq.confirmed and certificate_holds(eq)
    assert set(eq.phases_present) == {"gas", "ice", "water"}
    assert eq.temperature_K == pytest.approx(273.15, abs=0.02)              # the ice point (NIST)
    melted_found = 2.0 - _phases(eq)["ice"].moles
    melted_hand = _melted_by_hand(0.02, 0.1)
    assert 0.9 < melted_hand < 1.0                                          # some, not all, of the ice
    assert melted_found == pytest.approx(melted_hand, rel=0.01)
    water_found = _phases(eq)["water"].moles
    vapour_found = _phases(eq)["gas"].moles * dict(_phases(eq)["gas"].mole_fractions)["H2O"]
    assert water_found + vapour_found == pytest.approx(melted_found + 0.02, rel=1e-9)   # hydrogen balance


def _species(name: str):
    db = "nasa_condensed.yaml" if "(" in name else "nasa_gas.yaml"
    return {s.name: s for s in ct.Species.list_from_file(db)}[name]


def _enthalpy(amounts: dict, T: float) -> float:
    """J; ideal phases, so the enthalpy is the sum of the pure species' (P*V terms of the
    condensed phases are below 1e-6 of the total and left out)."""
    return sum(n * _species(s).thermo.h(T) / 1000.0 for s, n in amounts.items())


@pytest.mark.parametrize("ice,h2,o2,n2", [(2.0, 0.02, 0.01, 0.1), (5.0, 0.01, 0.02, 0.5), (2.0, 0.04, 0.02, 0.1)])
def test_plateau_state_meets_the_energy_balance_and_the_melting_condition(tmp_path, ice, h2, o2, n2):
    """Identities with cantera's species data read independently of the tool: the products
    carry the feed's enthalpy, and ice and liquid have the same molar Gibbs energy at T (the
    5 mol case, with excess oxygen, once failed the certificate by 2e-6 RT)."""
    doc = yaml.safe_load(CASE.read_text())
    doc["feed"] = {"H2O(s)": ice, "H2": h2, "O2": o2, "N2": n2}
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(doc))
    eq = audit_file(path).equilibrium
    assert certificate_holds(eq) and set(eq.phases_present) == {"gas", "ice", "water"}
    T = eq.temperature_K
    out = {}
    for p in eq.phases:
        for sp, x in p.mole_fractions:
            out[sp] = out.get(sp, 0.0) + p.moles * x
    h_feed = _enthalpy({"H2O(s)": ice, "H2": h2, "O2": o2, "N2": n2}, 273.15)
    assert _enthalpy(out, T) == pytest.approx(h_feed, rel=1e-7)
    g = {s: _species(s).thermo.h(T) - T * _species(s).thermo.s(T) for s in ("H2O(s)", "H2O(L)")}
    assert (g["H2O(L)"] - g["H2O(s)"]) / (ct.gas_constant * T) == pytest.approx(0.0, abs=1e-6)
