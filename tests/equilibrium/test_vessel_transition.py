"""Issue 21 item 6: a rigid adiabatic vessel (U and V fixed, T and P both free) whose answer
sits on a univariant transition of the outer variable.

``cases/ice_melter_rigid.yaml``: 2 mol of ice with 0.02 mol of hydrogen, its stoichiometric
oxygen and 0.1 mol of nitrogen, fed at 270 K into a 2 L can.  The heat of the burn warms the
contents to the melting point and melts part of the ice: the internal energy residual of the
outer solve on T jumps there (heat goes into melting at a fixed temperature), so the state is
found as the mixture of the two sides and refined with amounts, T and P together.

References: the internal energy and volume of the state are recomputed with cantera's own
phase objects built here from the packaged species data (cantera run directly: nasa_gas.yaml,
nasa_condensed.yaml, the condensed phases at the densities the tool reports: ice 917 kg/m3,
water 997 kg/m3, CRC Handbook, from memory); the amount of ice left is checked against a hand
energy balance whose every number comes from the same packaged data; the ice point 273.15 K
at 1 atm (NIST), which the packaged data reproduce to within their 0.01 K tolerance.
"""
from __future__ import annotations

import math
from pathlib import Path

import pytest

ct = pytest.importorskip("cantera")

from auditor.audit import audit_file  # noqa: E402
from auditor.equilibrium import certificate_holds  # noqa: E402
from clitools import run  # noqa: E402

CASE = Path(__file__).resolve().parents[2] / "cases" / "ice_melter_rigid.yaml"
FEED = {"H2O(s)": 2.0, "H2": 0.02, "O2": 0.01, "N2": 0.1}   # mol, as in the case file
T_FEED = 270.0                 # K, the case's feed temperature
P_FEED = 101325.0              # Pa: the feed's pressure where the case states none (the tool's rule)
V_VESSEL = 0.002               # m3, the case's volume
R = ct.gas_constant / 1000.0   # J/(mol K)
DENSITY = {"H2O(s)": 917.0, "H2O(L)": 997.0}   # kg/m3, the tool's stated values (CRC, from memory)
ICE_POINT = 273.15             # K at 1 atm (NIST)
DATA_TOLERANCE_K = 0.01        # the packaged data place the melting point within this


def _species(name: str):
    db = "nasa_condensed.yaml" if "(" in name else "nasa_gas.yaml"
    return {s.name: s for s in ct.Species.list_from_file(db)}[name]


def _gas():
    return ct.Solution(thermo="ideal-gas", species=[_species(s) for s in ("H2", "O2", "N2", "H2O")])


def _condensed(name: str):
    data = dict(_species(name).input_data)
    data["equation-of-state"] = {"model": "constant-volume", "density": f"{DENSITY[name]} kg/m^3"}
    return ct.Solution(thermo="fixed-stoichiometry", species=[ct.Species.from_dict(data)])


def _u_and_v(T: float, P: float, gas: dict, ice: float, water: float) -> tuple[float, float]:
    """Internal energy (J) and volume (m3) from cantera's phase properties (per kmol)."""
    U = V = 0.0
    g = _gas()
    if gas:
        g.TPX = T, P, gas
        n = sum(gas.values())
        U += n * g.int_energy_mole / 1000.0
        V += n * g.volume_mole / 1000.0
    for name, n in (("H2O(s)", ice), ("H2O(L)", water)):
        ph = _condensed(name)
        ph.TP = T, P
        U += n * ph.int_energy_mole / 1000.0
        V += n * ph.volume_mole / 1000.0
    return U, V


def _state():
    eq = audit_file(CASE).equilibrium
    phases = {p.name: p for p in eq.phases}
    gas = {s: phases["gas"].moles * x for s, x in phases["gas"].mole_fractions}
    return eq, gas, phases["ice"].moles, phases["water"].moles


def test_rigid_ice_melter_is_certified_on_the_melting_plateau():
    rc, out, err = run(["check", str(CASE)])
    assert rc == 0, out + err
    assert "CONFIRMED" in out
    eq, gas, ice, water = _state()
    assert eq.confirmed and certificate_holds(eq)
    assert set(eq.phases_present) == {"gas", "ice", "water"}
    assert eq.temperature_K == pytest.approx(ICE_POINT, abs=DATA_TOLERANCE_K)     # NIST ice point
    assert 0.0 < ice < 2.0 and water > 0.02                                      # some, not all, ice melted


def test_rigid_ice_melter_meets_the_internal_energy_and_volume_balances():
    """cantera run directly: U of the state equals U of the feed, V equals the vessel's."""
    eq, gas, ice, water = _state()
    U_out, V_out = _u_and_v(eq.temperature_K, eq.pressure_Pa, gas, ice, water)
    feed_gas = {s: n for s, n in FEED.items() if s != "H2O(s)"}
    U_feed, _ = _u_and_v(T_FEED, P_FEED, feed_gas, FEED["H2O(s)"], 0.0)
    assert U_out == pytest.approx(U_feed, rel=1e-6)
    assert V_out == pytest.approx(V_VESSEL, rel=1e-6)


def _melted_by_hand(T: float, P: float) -> float:
    """Moles of ice that leave the solid (hand energy balance at constant volume, every
    number from the packaged species data): heat released by burning the hydrogen to liquid
    water at T = sensible heat of the feed from 270 K to T + heat of melting x ice melted +
    heat of evaporating the water vapour the gas holds.  Internal energies: u = h - RT for
    the ideal gases, u = h for the condensed phases (their P*v is below 1e-5 of h here)."""
    h = {s: _species(s).thermo.h(T) / 1000.0 for s in ("H2", "O2", "H2O", "H2O(s)", "H2O(L)")}
    u = {s: h[s] - (R * T if "(" not in s else 0.0) for s in h}
    q_burn = FEED["H2"] * -(u["H2O(L)"] - u["H2"] - 0.5 * u["O2"])
    sensible = 0.0
    for s, n in FEED.items():
        sp = _species(s)
        gas_term = 0.0 if "(" in s else R * (T - T_FEED)
        sensible += n * ((sp.thermo.h(T) - sp.thermo.h(T_FEED)) / 1000.0 - gas_term)
    # vapour pressure of the liquid from the packaged data: g(gas, p_sat) = g(liquid)
    g = {s: (_species(s).thermo.h(T) - T * _species(s).thermo.s(T)) / 1000.0 for s in ("H2O", "H2O(L)")}
    p_sat = 1e5 * math.exp(-(g["H2O"] - g["H2O(L)"]) / (R * T))    # Pa; the data's reference pressure is 1 bar
    v_condensed = (FEED["H2O(s)"] + FEED["H2"]) * 0.018015 / 950.0          # m3, about 38 mL of ice and water
    vapour = p_sat * (V_VESSEL - v_condensed) / (R * T)
    return (q_burn - sensible - vapour * (u["H2O"] - u["H2O(L)"])) / (u["H2O(L)"] - u["H2O(s)"])


def test_rigid_ice_melter_ice_left_matches_a_hand_energy_balance():
    eq, gas, ice, water = _state()
    melted_hand = _melted_by_hand(eq.temperature_K, eq.pressure_Pa)
    assert 0.8 < melted_hand < 1.0
    assert FEED["H2O(s)"] - ice == pytest.approx(melted_hand, rel=3e-4)   # measured 7.6e-5: condensed P*v left out
    vapour = gas.get("H2O", 0.0)
    assert water + vapour + ice == pytest.approx(FEED["H2O(s)"] + FEED["H2"], rel=1e-9)   # hydrogen balance
