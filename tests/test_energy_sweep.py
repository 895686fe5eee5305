"""Issue 21, item 7: sweeps of energy-balanced cases.

Real case files on disk, run through the real CLI.  References: cantera run directly, its
single-phase equilibrium at fixed H,P (adiabatic flame) and U,V (closed-vessel explosion) on the
same species, taken from cantera's packaged ``nasa_gas.yaml`` like the case's packaged species.
"""
from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

ct = pytest.importorskip("cantera")

from clitools import read_csv, run  # noqa: E402

SPECIES = ["CH4", "O2", "N2", "H2O", "CO2", "CO", "H2", "OH", "H", "O", "NO"]
AIR = {"CH4": 1.0, "O2": 2.0, "N2": 7.52}
REL_TOL = 1e-6          # the brief's agreement with cantera, relative
SVG = "{http://www.w3.org/2000/svg}"

HEAD = f"""\
title: invented rig, stoichiometric methane-air
system:
  source: packaged
  phases:
    gas: [{", ".join(SPECIES)}]
reactions: complete
feed: {{CH4: 1.0, O2: 2.0, N2: 7.52}}
specified:
"""
COMBUSTOR = HEAD + "  pressure: 1 atm\n  adiabatic: {feed-temperature: 300 K}\n"
VESSEL = HEAD + ("  volume: {feed-at: {temperature: 300 K, pressure: 1 atm}}\n"
                 "  adiabatic: {feed-temperature: 300 K}\n")


def case_file(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "case.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def cantera_gas(T: float, P: float):
    """An ideal gas of the case's species, with the packaged NASA data the case reads."""
    by_name = {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml")}
    gas = ct.Solution(thermo="ideal-gas", species=[by_name[n] for n in SPECIES])
    gas.TPX = T, P, AIR
    return gas


def sweep(tmp_path: Path, case: Path, vary: str) -> list[dict[str, str]]:
    rc, out, err = run(["sweep", case, "--vary", vary, "--jobs", "1", "--out", tmp_path / "s", "--quiet", "--force"])
    assert rc == 0, (rc, out, err)
    return read_csv(tmp_path / "s.csv")


def chart(svg_path: Path, y_label: str):
    """The chart (nested svg) whose vertical axis is ``y_label``, and its curve's points."""
    root = ET.parse(svg_path).getroot()
    for part in root.findall(f"{SVG}svg"):
        if any(t.text == y_label for t in part.iter(f"{SVG}text")):
            line = part.find(f"{SVG}polyline")
            return part, [tuple(map(float, p.split(","))) for p in line.get("points").split()]
    raise AssertionError(f"no chart with the axis {y_label!r}")


def test_adiabatic_combustor_over_the_feed_temperature_matches_cantera_HP(tmp_path):
    """Adiabatic flame temperature of methane-air fed at 300..700 K and 1 atm: each point equals
    cantera's equilibrate('HP') from the same feed (cantera run directly)."""
    case = case_file(tmp_path, COMBUSTOR)
    rows = sweep(tmp_path, case, "feed-temperature=300:700:50")
    assert [float(r["feed-temperature"]) for r in rows] == [300.0 + 50 * i for i in range(9)]
    for r in rows:
        gas = cantera_gas(float(r["feed-temperature"]), 101325.0)
        gas.equilibrate("HP")
        assert r["verdict"] == "well-posed" and r["certified"] == "yes", r
        assert float(r["temperature_K"]) == pytest.approx(gas.T, rel=REL_TOL), (r["feed-temperature"], gas.T)
        assert float(r["pressure_Pa"]) == 101325.0
        assert float(r["x[gas:CO2]"]) == pytest.approx(gas["CO2"].X[0], rel=1e-4)
    temps = [float(r["temperature_K"]) for r in rows]
    assert temps == sorted(temps)          # a hotter feed gives a hotter flame
    # the picture plots the solved temperature: one point per feed temperature, rising
    part, points = chart(tmp_path / "s.svg", "solved temperature, K")
    assert len(points) == 9 and [y for _, y in points] == sorted((y for _, y in points), reverse=True)
    assert any("feed-temperature, K" == t.text for t in part.iter(f"{SVG}text"))
    held = [t.text for t in ET.parse(tmp_path / "s.svg").getroot().iter(f"{SVG}text") if t.text and "held fixed" in t.text]
    assert held and all("feed-temperature" not in h for h in held)   # the swept value is not "held fixed"


def test_feed_temperature_in_degC_and_a_heat_duty(tmp_path):
    """A heat-added case: the axis replaces its feed temperature and keeps its duty; the flame
    equals cantera's 'HP' with the duty added to the feed's enthalpy (cantera run directly)."""
    case = case_file(tmp_path, HEAD + "  pressure: 1 atm\n  heat-added: {feed-temperature: 300 K, amount: -100 kJ}\n")
    rows = sweep(tmp_path, case, "feed-temperature=100:300:200 degC")
    for r, t_feed in zip(rows, (373.15, 573.15)):
        assert float(r["feed-temperature"]) == pytest.approx(t_feed, rel=1e-12)
        gas = cantera_gas(t_feed, 101325.0)
        n = sum(AIR.values())                       # mol of feed (the case's amounts)
        h = gas.enthalpy_mass + (-100e3) / (n * gas.mean_molecular_weight * 1e-3)   # J/kg after the duty
        gas.HP = h, 101325.0
        gas.equilibrate("HP")
        assert float(r["temperature_K"]) == pytest.approx(gas.T, rel=REL_TOL)


def test_adiabatic_combustor_over_pressure_feed_and_ratio(tmp_path):
    """Pressure, feed-amount and element-ratio axes on an adiabatic case solve the enthalpy
    balance at every point (cantera's 'HP' from the same feed; cantera run directly)."""
    case = case_file(tmp_path, COMBUSTOR)
    for vary, feed_of, P_of in (
            ("pressure=1:9:4", lambda r: AIR, lambda r: float(r["pressure_Pa"])),
            ("feed.CH4=0.8:1.2:0.2", lambda r: {**AIR, "CH4": float(r["feed.CH4"])}, lambda r: 101325.0)):
        rows = sweep(tmp_path, case, vary)
        assert len(rows) == 3
        for r in rows:
            gas = cantera_gas(300.0, P_of(r))
            gas.TPX = 300.0, P_of(r), feed_of(r)
            gas.equilibrate("HP")
            assert float(r["temperature_K"]) == pytest.approx(gas.T, rel=REL_TOL), (vary, r)
    rows = sweep(tmp_path, case, "ratio.O/C=3:5:1")
    assert [r["verdict"] for r in rows] == ["well-posed"] * 3
    # O/C = 4 is the case's own feed: the same flame as the feed-temperature sweep's first point
    gas = cantera_gas(300.0, 101325.0)
    gas.equilibrate("HP")
    assert float(rows[1]["temperature_K"]) == pytest.approx(gas.T, rel=REL_TOL)


def test_rigid_adiabatic_vessel_over_the_fill_pressure_matches_cantera_UV(tmp_path):
    """Closed-vessel explosion of methane-air filled at 300 K and 1..9 bar: final T and P equal
    cantera's equilibrate('UV') (cantera run directly; about 2586 K and 8.9 bar from 1 atm)."""
    case = case_file(tmp_path, VESSEL)
    rows = sweep(tmp_path, case, "fill-pressure=1:9:2")
    assert len(rows) == 5
    for r in rows:
        gas = cantera_gas(300.0, float(r["fill-pressure"]))
        gas.equilibrate("UV")
        assert r["verdict"] == "well-posed", r
        assert float(r["temperature_K"]) == pytest.approx(gas.T, rel=REL_TOL)
        assert float(r["pressure_Pa"]) == pytest.approx(gas.P, rel=REL_TOL)
    # the picture plots both solved variables
    _, temps = chart(tmp_path / "s.svg", "solved temperature, K")
    _, press = chart(tmp_path / "s.svg", "solved pressure, bar")
    assert len(temps) == len(press) == 5


def test_rigid_vessel_over_the_feed_temperature_is_filled_at_that_temperature(tmp_path):
    """A vessel the case fills with the feed at its feed temperature is filled at each new one
    (same fill pressure): cantera's 'UV' from that state (cantera run directly)."""
    case = case_file(tmp_path, VESSEL)
    rows = sweep(tmp_path, case, "feed-temperature=300:500:200")
    for r in rows:
        gas = cantera_gas(float(r["feed-temperature"]), 101325.0)
        gas.equilibrate("UV")
        assert float(r["temperature_K"]) == pytest.approx(gas.T, rel=REL_TOL)
        assert float(r["pressure_Pa"]) == pytest.approx(gas.P, rel=REL_TOL)


@pytest.mark.parametrize("text, vary, words", [
    (COMBUSTOR, "temperature=1500:2000:500", "a temperature axis would over-specify the case"),
    (VESSEL, "pressure=1:5:1", "a pressure axis would over-specify the case (vary the feed, the feed-temperature, "
                               "the fill-pressure, or a variable the case fixes)"),
    (HEAD + "  pressure: 1 atm\n  temperature: 2000 K\n", "feed-temperature=300:700:50",
     "the case has none (give 'adiabatic' or 'heat-added'"),
    (COMBUSTOR, "fill-pressure=1:5:1", "the case states no such vessel"),
])
def test_axes_that_do_not_fit_the_case_are_refused_before_any_point_runs(tmp_path, text, vary, words):
    case = case_file(tmp_path, text)
    (tmp_path / "out").mkdir()
    rc, out, err = run(["sweep", case, "--vary", vary, "--jobs", "1", "--out", tmp_path / "out" / "s"])
    assert rc == 2 and out == "", (rc, out, err)
    assert err.startswith("auditor: error: --vary:") and words in err, err
    assert not list((tmp_path / "out").iterdir())
