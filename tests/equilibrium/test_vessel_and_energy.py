"""Issue 21, items 1-3: a rigid vessel (volume), a heat duty (heat-added), isentropic expansion,
and the heat every confirmed state reports.

Each case is a real case file on disk run through the real CLI or ``audit_file``; references are
cantera run directly (its single-phase equilibrium at fixed U,V, H,P and S,P on the same species),
hand calculations from the packaged species data, and the ideal-gas law.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

ct = pytest.importorskip("cantera")

from auditor.audit import audit_file  # noqa: E402
from auditor.case import load_case  # noqa: E402
from clitools import run  # noqa: E402

R = 8.314462618            # J/(mol K), CODATA 2018 (exact since the 2019 SI)
AIR = {"CH4": 1.0, "O2": 2.0, "N2": 7.52}
FEED_MOL = sum(AIR.values())

GRI30 = """\
title: invented rigid vessel, stoichiometric methane-air
system:
  mechanism: gri30.yaml
  phases:
    gri30: all
reactions: complete
feed: {CH4: 1.0, O2: 2.0, N2: 7.52}
specified:
"""

WATER = """\
title: invented sealed sample bomb holding water
system:
  source: packaged
  phases:
    gas: [H2O]
    water: [H2O(L)]
reactions: complete
feed: {H2O: 1.0}
specified:
  temperature: 400 K
"""


def write(tmp_path: Path, text: str, name: str = "case.yaml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def gri30_case(tmp_path: Path, specified: str) -> Path:
    return write(tmp_path, GRI30 + specified)


def cantera_gas(T: float, P: float):
    gas = ct.Solution("gri30.yaml")
    gas.TPX = T, P, AIR
    return gas


# ------------------------------------------------------------------ item 1: volume


def test_rigid_adiabatic_vessel_matches_cantera_UV(tmp_path):
    """Explosion in a closed vessel: T and P equal cantera's single-phase equilibrate('UV') on
    the same species (cantera run directly; about 2586 K and 8.86 bar; common practice quotes
    about 9 bar for the closed-vessel explosion pressure of methane-air)."""
    path = gri30_case(tmp_path, "  volume: {feed-at: {temperature: 300 K, pressure: 1 atm}}\n"
                                "  adiabatic: {feed-temperature: 300 K}\n")
    result = audit_file(path)
    eq = result.equilibrium
    assert result.verdict == "well-posed" and eq.confirmed
    gas = cantera_gas(300.0, 101325.0)
    gas.equilibrate("UV")
    assert eq.temperature_K == pytest.approx(gas.T, rel=1e-6)        # cantera run directly: 2586.29 K
    assert eq.pressure_Pa == pytest.approx(gas.P, rel=1e-6)          # cantera run directly: 8.861 bar
    assert 8.5e5 < eq.pressure_Pa < 9.2e5                            # common practice: about 9 bar
    assert eq.heat_balance == "internal energy" and eq.heat_J == pytest.approx(0.0, abs=1e-2)


def test_rigid_vessel_of_water_sits_on_the_vapour_pressure_with_the_liquid_from_the_volume_balance(tmp_path):
    """1 mol of water in 10 L at 400 K: an ideal gas would need 3.3 bar, more than the vapour
    pressure, so liquid and vapour coexist at the packaged data's vapour pressure (IAPWS-95
    gives 245.8 kPa at 400 K, W. Wagner and A. Pruss, J. Phys. Chem. Ref. Data 31, 2002; the
    packaged data give about 242 kPa).  Hand calculation from the packaged species data:
    ln(Psat/P0) = [g0(liquid) + v_l (Psat - P0) - g0(gas)] / RT, and the volume balance
    V = n_g RT/Psat + (1 - n_g) v_l with v_l = M/rho (rho 997 kg/m3, the density table)."""
    result = audit_file(write(tmp_path, WATER + "  volume: 10 L\n"))
    eq = result.equilibrium
    assert result.verdict == "well-posed" and eq.confirmed
    assert set(eq.phases_present) == {"gas", "water"}
    T, V, P0 = 400.0, 0.010, 101325.0
    gas = {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml")}["H2O"]
    liq = {s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")}["H2O(L)"]

    def g0(sp):                                   # J/mol at T and the standard pressure
        return (sp.thermo.h(T) - T * sp.thermo.s(T)) / 1000.0

    v_l = 18.01528e-3 / 997.0                     # m3/mol: molar mass (IUPAC) over the tabulated density
    p_sat = P0
    for _ in range(5):
        p_sat = P0 * math.exp((g0(liq) + v_l * (p_sat - P0) - g0(gas)) / (R * T))
    assert p_sat == pytest.approx(245.8e3, rel=0.03)          # IAPWS-95, 245.8 kPa
    assert eq.pressure_Pa == pytest.approx(p_sat, rel=1e-6)
    n_gas = (V - v_l) / (R * T / p_sat - v_l)
    phases = {p.name: p.moles for p in eq.phases}
    assert phases["water"] == pytest.approx(1.0 - n_gas, rel=1e-6)
    assert phases["gas"] == pytest.approx(n_gas, rel=1e-6)


def test_volume_with_pressure_gives_the_ideal_gas_temperature(tmp_path):
    """1 mol of nitrogen filling 24.5 L at 1 atm: T = PV/(nR) (the ideal-gas law)."""
    text = ("title: invented nitrogen cylinder\nsystem:\n  source: packaged\n  phases:\n    gas: [N2]\n"
            "reactions: complete\nfeed: {N2: 1.0}\nspecified:\n  pressure: 1 atm\n  volume: 24.5 L\n")
    eq = audit_file(write(tmp_path, text)).equilibrium
    assert eq.confirmed
    assert eq.temperature_K == pytest.approx(101325.0 * 0.0245 / R, rel=1e-8)   # ideal-gas law


def test_a_vessel_smaller_than_its_liquid_is_a_finding_not_a_crash(tmp_path):
    """1 mol of liquid water needs about 18 mL (M/rho); a 1 mL vessel has no state: exit 1, the reason named."""
    path = write(tmp_path, WATER + "  volume: 1 mL\n")
    rc, out, err = run(["check", path, "--json"])
    assert rc == 1, err
    doc = json.loads(out)
    messages = " ".join(f["message"] for f in doc["findings"])
    assert "the vessel is smaller than its contents at 400.00 K" in messages


# ------------------------------------------------------------------ item 2: heat added, heat reported


def test_heat_removed_at_fixed_pressure_matches_cantera_HP(tmp_path):
    """200 kJ removed from the products of 1 mol of methane burnt in air at 1 atm: cantera's
    single-phase equilibrate('HP') at the feed's enthalpy less 200 kJ (cantera run directly)."""
    path = gri30_case(tmp_path, "  pressure: 1 atm\n  heat-added: {feed-temperature: 300 K, amount: -200 kJ}\n")
    rc, out, err = run(["check", path, "--json"])
    assert rc == 0, err
    eq = json.loads(out)["equilibrium"]
    gas = cantera_gas(300.0, 101325.0)
    mass = FEED_MOL / 1000.0 * gas.mean_molecular_weight                  # kg of feed
    h_target = gas.enthalpy_mass - 200e3 / mass
    gas.TP = 1800.0, 101325.0
    gas.equilibrate("TP")                           # start near the answer so the frozen HP set succeeds
    gas.HP = h_target, 101325.0
    gas.equilibrate("HP")
    assert eq["temperature_K"] == pytest.approx(gas.T, rel=1e-6)          # cantera run directly: 1855 K
    assert eq["heat_J"] == pytest.approx(-200e3, rel=1e-6) and eq["heat_feed_temperature_K"] == 300.0
    assert eq["heat_balance"] == "enthalpy"
    # heat of reaction at the state: products minus the feed, both at T and P (cantera run directly)
    products = gas.enthalpy_mass * mass
    feed = cantera_gas(gas.T, 101325.0)
    assert eq["heat_of_reaction_J"] == pytest.approx(products - feed.enthalpy_mass * mass, rel=1e-6)


def test_every_confirmed_state_reports_its_heat_in_words(tmp_path):
    """A T,P case: the heat from the feed at the state's own temperature is the heat of reaction."""
    path = gri30_case(tmp_path, "  temperature: 2000 K\n  pressure: 1 atm\n")
    rc, out, err = run(["check", path])
    assert rc == 0, err
    assert "heat added from the feed at 2000.00 K to this state:" in out
    rc, out, err = run(["check", path, "--json"])
    eq = json.loads(out)["equilibrium"]
    assert eq["heat_J"] == pytest.approx(eq["heat_of_reaction_J"], rel=1e-12)


# ------------------------------------------------------------------ item 3: isentropic


def test_isentropic_expansion_matches_cantera_SP(tmp_path):
    """Shifting-equilibrium expansion of methane-air products from 2226 K, 20 bar to 1 bar:
    cantera's single-phase equilibrate('SP') from the equilibrium state at 2226 K and 20 bar
    (cantera run directly; about 1219 K)."""
    path = gri30_case(tmp_path, "  pressure: 1 bar\n  isentropic: {from-temperature: 2226 K, from-pressure: 20 bar}\n")
    eq = audit_file(path).equilibrium
    assert eq.confirmed
    gas = cantera_gas(2226.0, 20e5)
    gas.equilibrate("TP")
    gas.SP = gas.entropy_mass, 1e5
    gas.equilibrate("SP")
    assert eq.temperature_K == pytest.approx(gas.T, rel=1e-6)             # cantera run directly


# ------------------------------------------------------------------ counting and bad input


def test_volume_counts_as_extensive(tmp_path):
    case = load_case(gri30_case(tmp_path, "  temperature: 2000 K\n  volume: 300 L\n"))
    kinds = {s.kind: s.extent for s in case.specified.specifications}
    assert kinds == {"temperature": "intensive", "volume": "extensive"}
    rc, out, err = run(["check", gri30_case(tmp_path, "  temperature: 2000 K\n  pressure: 1 bar\n  volume: 300 L\n"),
                        "--no-confirm", "--json"])
    assert json.loads(out)["specification"]["status"] == "over-specified"


@pytest.mark.parametrize("specified, key_path, words", [
    ("  temperature: 400 K\n  volume: 5 bar\n", "specified.volume", "not a unit of volume"),
    ("  temperature: 400 K\n  volume: -2 L\n", "specified.volume", "a volume must be positive"),
    ("  temperature: 400 K\n  volume: 3\n", "specified.volume", "a volume needs a unit"),
    ("  temperature: 400 K\n  volume: {feed-at: {temperature: 300 K}}\n", "specified.volume.feed-at",
     "missing key(s) 'pressure'"),
    ("  pressure: 1 atm\n  heat-added: {feed-temperature: 300 K, amount: 5 bar}\n", "specified.heat-added.amount",
     "not a unit of energy"),
    ("  pressure: 1 atm\n  heat-added: {feed-temperature: 300 K}\n", "specified.heat-added", "missing key(s) 'amount'"),
    ("  adiabatic: {feed-temperature: 300 K}\n  heat-added: {feed-temperature: 300 K, amount: 1 kJ}\n",
     "specified.heat-added", "give one of 'adiabatic' and 'heat-added'"),
    ("  pressure: 1 bar\n  isentropic: {from-temperature: 2226 K}\n", "specified.isentropic",
     "missing key(s) 'from-pressure'"),
])
def test_bad_input_for_each_new_key_is_refused_where_it_is(tmp_path, specified, key_path, words):
    path = gri30_case(tmp_path, specified)
    rc, out, err = run(["check", path])
    assert rc == 2 and out == "", (rc, out, err)
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"auditor: error: {path}:"), err
    assert key_path in lines[0] and words in lines[0], lines[0]


def test_a_temperature_axis_on_an_energy_balanced_case_is_refused_with_the_reason(tmp_path):
    """The adiabatic balance already sets the temperature: an axis on it would make three specifications."""
    path = Path(__file__).resolve().parents[2] / "cases" / "combustor_adiabatic.yaml"
    rc, out, err = run(["sweep", path, "--vary", "temperature=1500:2000:500", "--jobs", "1", "--out", tmp_path / "s"])
    assert rc == 2, (rc, out, err)
    assert "does not fix the temperature: it is solved from adiabatic enthalpy balance" in err
    assert "would over-specify" in err and not list(tmp_path.iterdir())
