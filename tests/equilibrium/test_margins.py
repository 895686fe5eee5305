"""Margins (issue 22): phase boundaries of a confirmed state along T, P and feed axes, and its
sensitivities, against outside references and against the tool's own solves."""
from __future__ import annotations

import json
from dataclasses import replace
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from clitools import run
from auditor.audit import run as audit_run
from auditor.case import load_case

ROOT = Path(__file__).resolve().parents[2]
DATA = Path(__file__).resolve().parents[1] / "data"
WINDOW = DATA / "margins_carbon_window.yaml"
FLUE = DATA / "margins_flue_dew.yaml"
KILN = ROOT / "cases" / "lime_kiln_calciner.yaml"
REFORMER = ROOT / "cases" / "reformer_design_point.yaml"
R = 8.314462618


def boundary(result, phase, variable, side):
    got = [b for b in result.margins.boundaries if b.phase == phase and b.variable == variable and b.side == side]
    assert got, (phase, variable, side, result.margins.boundaries)
    return got[0].value


# ---------------------------------------------------------------- cantera run directly

def _direct_gas(T, P, feed):
    """Gas-only equilibrium with cantera's own solver, species from its packaged NASA data."""
    import cantera as ct
    names = ["CH4", "H2O", "CO", "CO2", "H2"]
    sp = [s for s in ct.Species.list_from_file("nasa_gas.yaml") if s.name in names]
    gas = ct.Solution(thermo="ideal-gas", species=sp)
    gas.TPX = T, P, feed
    gas.equilibrate("TP")
    return gas


def _graphite_g_RT(T, P):
    """mu°(C(gr))/RT at T, P: NASA data plus (P - 1 bar) V, density 2260 kg/m3 (CRC Handbook, graphite)."""
    import cantera as ct
    c = next(s for s in ct.Species.list_from_file("nasa_condensed.yaml") if s.name == "C(gr)")
    g = (c.thermo.h(T) - T * c.thermo.s(T)) / 1000.0             # J/mol
    return (g + (P - 1e5) * 12.011e-3 / 2260.0) / (R * T)


def _graphite_drive(T, P, feed):
    """Driving force to form graphite from the gas-only equilibrium: mu°_C - (mu_CH4 - 2 mu_H2), RT."""
    gas = _direct_gas(T, P, feed)
    mu = dict(zip(gas.species_names, gas.chemical_potentials / (R * 1000.0 * T)))
    return _graphite_g_RT(T, P) - (mu["CH4"] - 2 * mu["H2"])


@pytest.fixture(scope="module")
def window():
    return audit_run(load_case(WINDOW))


def test_carbon_window_of_a_one_to_one_feed_at_5_bar(window):
    from scipy.optimize import brentq
    low, high = boundary(window, "graphite", "temperature", "below"), boundary(window, "graphite", "temperature", "above")
    feed = "CH4:1, H2O:1"
    # cantera run directly: bisection on the graphite driving force of the gas-only equilibrium
    direct_low = brentq(lambda T: _graphite_drive(T, 5e5, feed), 700.0, 900.0, xtol=1e-6)
    direct_high = brentq(lambda T: _graphite_drive(T, 5e5, feed), 1000.0, 1200.0, xtol=1e-6)
    assert low == pytest.approx(direct_low, abs=0.05)
    assert high == pytest.approx(direct_high, abs=0.05)
    # issue 22: graphite stable between about 836 and 1090 K
    assert low == pytest.approx(836.0, abs=2.0) and high == pytest.approx(1090.0, abs=2.0)


def test_minimum_steam_to_carbon_ratio_at_650_degC_and_5_bar(window):
    from scipy.optimize import brentq
    found = boundary(window, "graphite", "feed.H2O", "above")
    # cantera run directly: bisection on the steam amount (CH4 1 mol) at 923.15 K, 5 bar
    direct = brentq(lambda s: _graphite_drive(923.15, 5e5, f"CH4:1, H2O:{s}"), 1.0, 2.0, xtol=1e-9)
    assert found == pytest.approx(direct, rel=1e-5)
    assert found == pytest.approx(1.15, abs=0.01)          # issue 22: about 1.15


def test_water_dew_point_of_a_flue_gas_at_150_degC():
    import cantera as ct
    from scipy.optimize import brentq
    r = audit_run(load_case(FLUE))
    dew = boundary(r, "water", "temperature", "below")
    # steam tables (IAPWS): p_sat(60 degC) = 19.946 kPa = 0.19685 atm, the water partial pressure
    assert dew == pytest.approx(333.15, abs=0.6)
    # cantera run directly: the IAPWS-95 water model's saturation temperature at that partial pressure
    w = ct.Water()
    w.PQ = 0.19685 * 101325.0, 0.0
    assert dew == pytest.approx(w.T, abs=0.6)
    # cantera run directly: the same NASA data, liquid against the water in the gas
    liq = next(s for s in ct.Species.list_from_file("nasa_condensed.yaml") if s.name == "H2O(L)")
    vap = next(s for s in ct.Species.list_from_file("nasa_gas.yaml") if s.name == "H2O")

    def drive(T):
        g_l = (liq.thermo.h(T) - T * liq.thermo.s(T)) / 1000.0 + (101325.0 - 1e5) * 18.015e-3 / 997.0
        g_v = (vap.thermo.h(T) - T * vap.thermo.s(T)) / 1000.0 + R * T * np.log(0.19685 * 101325.0 / 101325.0)
        return (g_l - g_v) / (R * T)
    assert dew == pytest.approx(brentq(drive, 300.0, 380.0, xtol=1e-8), abs=0.01)


def test_calcite_decomposition_under_one_atmosphere_of_CO2_is_the_lime_kiln_margin():
    r = audit_run(load_case(KILN))
    # Baker 1962; Hill & Winter 1956: CaCO3 decomposes under 1 atm CO2 at 1171 +- 10 K
    assert boundary(r, "lime", "temperature", "above") == pytest.approx(1171.0, abs=10.0)
    near = [f for f in r.findings if f.topic == "margins" and f.severity == "warning"]
    assert near and "lime" in near[0].message and "K above the design point" in near[0].message


# ---------------------------------------------------------------- sensitivities against the tool's own solves

def _state(case, **change):
    """Amounts, mole fractions and phase amounts of the tool's own confirmed solve of ``case`` changed."""
    spec = case.specified
    if "T" in change:
        spec = replace(spec, temperature_K=change["T"])
    if "P" in change:
        spec = replace(spec, pressure_Pa=change["P"])
    here = replace(case, specified=spec, margins=None)
    if "feed" in change:
        here = replace(here, feed=change["feed"])
    eq = audit_run(here).equilibrium
    assert eq.confirmed
    amounts = {f"{k}": p.moles * x for p in eq.phases for k, x in p.mole_fractions}
    fractions = {k: x for p in eq.phases for k, x in p.mole_fractions}
    return amounts, fractions, {p.name: p.moles for p in eq.phases}, eq


def _close(analytic: float, fd: float, scale: float):
    assert abs(analytic - fd) <= 1e-4 * max(abs(analytic), abs(fd)) + 1e-9 * scale, (analytic, fd)


def _feed_with(case, label, value):
    return tuple((k, Fraction(value) if k == label else v) for k, v in case.feed)


@pytest.mark.parametrize("path", [REFORMER, WINDOW], ids=["gas only", "gas and graphite"])
def test_sensitivities_match_central_differences_of_the_tools_solves(path):
    case = replace(load_case(path), margins=("feed.H2O",))
    r = audit_run(case)
    s = r.margins.sensitivities
    T, P = r.equilibrium.temperature_K, r.equilibrium.pressure_Pa
    h2o = float(dict(case.feed)["H2O"])
    steps = {"temperature": ("T", T, 0.02), "pressure": ("P", P, P * 1e-4), "feed.H2O": ("feed", h2o, 1e-4)}
    for i, (variable, _) in enumerate(s.variables):
        key, v0, h = steps[variable]
        if key == "feed":
            up, down = (_state(case, feed=_feed_with(case, "H2O", Fraction(repr(v0 + d)))) for d in (h, -h))
        else:
            up, down = (_state(case, **{key: v0 + d}) for d in (h, -h))
        for j, sp in enumerate(s.species):
            _close(s.amounts[i][j], (up[0][sp] - down[0][sp]) / (2 * h), 1.0)
            _close(s.mole_fractions[i][j], (up[1][sp] - down[1][sp]) / (2 * h), 1.0)
        for j, ph in enumerate(s.phases):
            _close(s.phase_amounts[i][j], (up[2][ph] - down[2][ph]) / (2 * h), 1.0)


def test_equilibrium_heat_capacity_matches_the_enthalpy_of_the_tools_solves():
    from auditor.equilibrium.model import PhaseModel
    case = load_case(WINDOW)
    r = audit_run(case)
    T = r.equilibrium.temperature_K
    model = PhaseModel(r.system)
    H = []
    for d in (0.02, -0.02):
        _, _, _, eq = _state(case, T=T + d)
        n = np.concatenate([[p.moles * x for _, x in p.mole_fractions] for p in eq.phases])
        H.append(model.enthalpy(T + d, eq.pressure_Pa, n))
    _close(r.margins.sensitivities.heat_capacity_J_K, (H[0] - H[1]) / 0.04, 1.0)


def test_outlet_temperature_of_an_energy_balance_moves_as_the_tools_solves(tmp_path):
    text = (ROOT / "cases" / "combustor_adiabatic.yaml").read_text(encoding="utf-8") + "margins: [feed.N2]\n"
    path = tmp_path / "burner.yaml"
    path.write_text(text, encoding="utf-8")
    case = load_case(path)
    r = audit_run(case)
    (axis, dT), = r.margins.sensitivities.outlet_temperature
    h = 1e-3
    Ts = [_state(case, feed=_feed_with(case, "N2", Fraction(repr(7.52 + d))))[3].temperature_K for d in (h, -h)]
    assert axis == "feed.N2"
    _close(dT, (Ts[0] - Ts[1]) / (2 * h), 1000.0)


def test_ratio_axis_sensitivities_match_the_tools_solves_of_the_same_feeds():
    from auditor.sweep import _ratio_feed
    case = replace(load_case(REFORMER), margins=("ratio.O/C",))
    r = audit_run(case)
    s = r.margins.sensitivities
    i = [v for v, _ in s.variables].index("ratio.O/C")
    elements = {"CH4": {"C": 1, "H": 4}, "H2O": {"H": 2, "O": 1}, "N2": {"N": 2}}
    h = Fraction(1, 10000)
    states = [_state(case, feed=tuple(_ratio_feed(dict(case.feed), elements, [(("O", "C"), 3 + d)]).items()))
              for d in (h, -h)]
    for j, sp in enumerate(s.species):
        _close(s.amounts[i][j], (states[0][0][sp] - states[1][0][sp]) / float(2 * h), 1.0)


# ---------------------------------------------------------------- outputs

def test_json_terminal_and_report_carry_the_margins(tmp_path):
    rc, out, _ = run(["check", KILN, "--json"])
    doc = json.loads(out)
    assert rc == 0
    first = doc["margins"][0]
    assert (first["phase"], first["change"], first["variable"], first["side"]) == ("lime", "appears", "temperature", "above")
    assert first["unit_SI"] == "K" and first["near"] is True and first["distance_SI"] == pytest.approx(first["value_SI"] - 1150)
    assert doc["sensitivities"]["heat_capacity_J_K"] > 0
    rc, out, _ = run(["check", KILN])
    lines = [l for l in out.splitlines() if " appears " in l or " vanishes " in l]
    assert "lime appears above a temperature" in lines[0]
    report = tmp_path / "kiln.md"
    rc, _, _ = run(["check", KILN, "--report", report])
    text = report.read_text(encoding="utf-8")
    assert "## Margins" in text and "Nearest phase boundary: lime appears above" in text


def test_margins_only_when_asked():
    rc, out, _ = run(["check", REFORMER.parent / "methanol_loop_complete_set.yaml", "--json"])
    assert "margins" not in json.loads(out)
    rc, out, _ = run(["check", REFORMER.parent / "methanol_loop_complete_set.yaml", "--json", "--margins"])
    assert "margins" in json.loads(out)


def test_a_bad_margins_axis_is_an_input_error_with_its_line(tmp_path):
    path = tmp_path / "bad.yaml"
    path.write_text(WINDOW.read_text(encoding="utf-8").replace("margins: [feed.H2O]", "margins: [ratio.O/O]"),
                    encoding="utf-8")
    rc, _, err = run(["check", path])
    assert rc == 2 and "margins[0]" in err and ":15:" in err
    path.write_text(WINDOW.read_text(encoding="utf-8").replace("margins: [feed.H2O]", "margins: [feed.Ar]"),
                    encoding="utf-8")
    rc, _, err = run(["check", path])
    assert rc == 2 and "feed.Ar" in err
