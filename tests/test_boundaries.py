"""Phase boundaries traced on maps (issue 22, item 4): the crossings lie on the boundary,
against cantera run directly and a handbook statement; the files and picture a map writes;
the same bytes from every executor."""
from __future__ import annotations

import csv
import math
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from scipy.optimize import brentq

from clitools import run

ROOT = Path(__file__).resolve().parent.parent
DATA = Path(__file__).resolve().parent / "data"
BOUDOUARD = DATA / "boudouard_graphite.yaml"
WINDOW = DATA / "margins_carbon_window.yaml"        # CH4/H2O 1:1, the reformer's carbon window
CHO = ROOT / "cases" / "carbon_map_cho.yaml"
R = 8.314462618
ATM = 101325.0
SVG_NS = "{http://www.w3.org/2000/svg}"
BOUDOUARD_VARY = ["temperature=850:1050:25", "feed.CO2=2:3:0.5"]
WINDOW_VARY = ["temperature=400:900:50 degC", "pressure=1:41:8"]


def _rows(path: Path) -> list[dict[str, str]]:
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def _sweep(tmp_path: Path, case: Path, vary: list[str], name: str, *extra) -> tuple[int, str, Path]:
    prefix = tmp_path / name
    argv = ["sweep", case, "--out", prefix, "--jobs", "1", *extra] + [a for v in vary for a in ("--vary", v)]
    rc, out, err = run(argv)
    assert rc in (0, 1), err
    return rc, out, prefix


# ---------------------------------------------------------------- cantera run directly

def _species(names, source):
    import cantera as ct
    return {s.name: s for s in ct.Species.list_from_file(source) if s.name in names}


def _g_RT(sp, T):
    """mu°/RT at T and the data's reference pressure (1 atm in cantera's NASA files) from the
    species' NASA polynomials (J/kmol in cantera)."""
    return (sp.thermo.h(T) - T * sp.thermo.s(T)) / (R * 1000.0 * T)


def _graphite_g_RT(T, P):
    """mu°(C(gr))/RT at T, P: cantera's NASA data plus (P - P_ref) V, density 2260 kg/m3 (CRC Handbook,
    graphite; from memory), as the tool's data file states."""
    c = _species({"C(gr)"}, "nasa_condensed.yaml")["C(gr)"]
    return _g_RT(c, T) + (P - c.thermo.reference_pressure) * 12.011e-3 / 2260.0 / (R * T)


def _boudouard_ln_K(T, P=ATM):
    """ln K of C(gr) + CO2 <=> 2 CO from cantera's packaged NASA data (gas standard state at the
    data's reference pressure, 1 atm)."""
    gas = _species({"CO", "CO2"}, "nasa_gas.yaml")
    return -(2 * _g_RT(gas["CO"], T) - _g_RT(gas["CO2"], T) - _graphite_g_RT(T, P))


def _graphite_vanishes_at(co2_feed: float) -> float:
    """The temperature where 1 mol graphite under ``co2_feed`` mol CO2 at 1 atm is just used up:
    the gas 2 CO + (b - 1) CO2 satisfies x_CO^2 P / (x_CO2 P°) = K (a bisection, cantera's data)."""
    b = co2_feed
    x_co, x_co2 = 2 / (b + 1), (b - 1) / (b + 1)
    p_ref = _species({"CO"}, "nasa_gas.yaml")["CO"].thermo.reference_pressure
    return brentq(lambda T: _boudouard_ln_K(T) - math.log(x_co ** 2 * (ATM / p_ref) / x_co2), 700.0, 1300.0,
                  xtol=1e-9)


def _graphite_drive(T, P, feed="CH4:1, H2O:1"):
    """Driving force to form graphite from the gas-only equilibrium (cantera's own solver):
    mu°_C(gr) - (mu_CH4 - 2 mu_H2), in RT; zero on the carbon boundary."""
    import cantera as ct
    sp = _species({"CH4", "H2O", "CO", "CO2", "H2"}, "nasa_gas.yaml")
    gas = ct.Solution(thermo="ideal-gas", species=list(sp.values()))
    gas.TPX = T, P, feed
    gas.equilibrate("TP")
    mu = dict(zip(gas.species_names, gas.chemical_potentials / (R * 1000.0 * T)))
    return _graphite_g_RT(T, P) - (mu["CH4"] - 2 * mu["H2"])


# ---------------------------------------------------------------- Boudouard


@pytest.fixture(scope="module")
def boudouard(tmp_path_factory):
    return _sweep(tmp_path_factory.mktemp("boudouard"), BOUDOUARD, BOUDOUARD_VARY, "boud")


def test_boudouard_graphite_vanishing_temperature_matches_cantera(boudouard):
    _, out, prefix = boudouard
    rows = _rows(Path(f"{prefix}_boundaries.csv"))
    on_T_edges = {float(r["feed.CO2"]): r for r in rows if r["towards"] == "higher temperature_K"}
    assert sorted(on_T_edges) == [2.0, 2.5, 3.0]
    for b, row in on_T_edges.items():
        assert row["phase"] == "graphite" and row["change"] == "vanishes" and row["located"] == "yes"
        # cantera run directly: log K of C + CO2 <=> 2 CO from the same NASA data, bisection
        assert float(row["temperature_K"]) == pytest.approx(_graphite_vanishes_at(b), abs=1e-3)
    assert "traced 1 phase boundary line(s)" in out


def test_boudouard_equimolar_near_700_degC(boudouard):
    _, _, prefix = boudouard
    row = next(r for r in _rows(Path(f"{prefix}_boundaries.csv"))
               if r["towards"] == "higher temperature_K" and float(r["feed.CO2"]) == 3.0)
    # with 3 mol CO2 per mol C the gas left when graphite vanishes is equimolar CO/CO2;
    # handbooks: CO and CO2 are equimolar over graphite at 1 atm near 700 degC (from memory)
    assert float(row["temperature_K"]) - 273.15 == pytest.approx(700.0, abs=40.0)


# ---------------------------------------------------------------- reformer carbon window, T x P


@pytest.fixture(scope="module")
def window(tmp_path_factory):
    return _sweep(tmp_path_factory.mktemp("window"), WINDOW, WINDOW_VARY, "window")


def test_traced_points_of_a_reformer_map_lie_on_the_carbon_boundary(window):
    _, _, prefix = window
    rows = _rows(Path(f"{prefix}_boundaries.csv"))
    assert len(rows) >= 8 and {r["phase"] for r in rows} == {"graphite"}
    assert all(r["located"] == "yes" for r in rows)
    for r in rows:
        T, P = float(r["temperature_K"]), float(r["pressure_Pa"])
        # cantera run directly: the graphite driving force of the gas-only equilibrium is zero there
        assert abs(_graphite_drive(T, P)) < 1e-6, (T, P)


def test_carbon_window_line_at_5_bar_matches_the_issue(window):
    _, _, prefix = window
    rows = _rows(Path(f"{prefix}_boundaries.csv"))
    # the traced line is one polyline through every crossing, in order along it
    assert {r["line"] for r in rows} == {"1"}
    P = [float(r["pressure_Pa"]) for r in rows]
    T = [float(r["temperature_K"]) for r in rows]
    # on the 9 bar grid line: two crossings, the carbon window's ends at 9 bar (cantera bisection)
    ends = sorted(t for t, p in zip(T, P) if p == 9e5)
    assert len(ends) == 2
    assert ends[0] == pytest.approx(brentq(lambda t: _graphite_drive(t, 9e5), 700, 1000, xtol=1e-9), abs=1e-3)
    assert ends[1] == pytest.approx(brentq(lambda t: _graphite_drive(t, 9e5), 1000, 1300, xtol=1e-9), abs=1e-3)


def test_map_picture_draws_the_traced_line_and_the_design_point(window):
    _, _, prefix = window
    root = ET.parse(f"{prefix}.svg").getroot()
    traced = [e for e in root.iter(SVG_NS + "polyline") if (e.findtext(SVG_NS + "title") or "") == "traced boundary"]
    assert len(traced) == 1 and len(traced[0].get("points").split()) == len(_rows(Path(f"{prefix}_boundaries.csv")))
    design = [e for e in root.iter(SVG_NS + "circle") if (e.findtext(SVG_NS + "title") or "") == "the case's design point"]
    assert len(design) == 2, "the design point on the map and in the legend"
    texts = [t.text or "" for t in root.iter(SVG_NS + "text")]
    assert any(t.startswith("heavy lines: 1 phase boundary traced") for t in texts)
    assert "design point" in texts and "boundary (traced)" in texts


def test_map_boundaries_identical_with_two_worker_processes(window, tmp_path):
    _, _, prefix = window
    _, _, two = _sweep(tmp_path, WINDOW, WINDOW_VARY, "two", "--jobs", "2")
    for suffix in (".csv", "_boundaries.csv", ".svg"):
        assert Path(f"{two}{suffix}").read_bytes() == Path(f"{prefix}{suffix}").read_bytes(), suffix


# ---------------------------------------------------------------- ternary


def test_ternary_map_traces_the_carbon_line(tmp_path):
    rc, out, prefix = _sweep(tmp_path, CHO, [], "cho", "--ternary", "C,H,O", "--divisions", "10")
    rows = _rows(Path(f"{prefix}_boundaries.csv"))
    assert rows and all(r["phase"] == "graphite" and r["located"] == "yes" for r in rows)
    for r in rows:
        assert float(r["atoms[C]"]) + float(r["atoms[H]"]) + float(r["atoms[O]"]) == pytest.approx(1.0, abs=1e-12)
    assert {r["line"] for r in rows} == {"1"}
    root = ET.parse(f"{prefix}.svg").getroot()
    assert [e for e in root.iter(SVG_NS + "polyline") if (e.findtext(SVG_NS + "title") or "") == "traced boundary"]
    assert [e for e in root.iter(SVG_NS + "circle") if (e.findtext(SVG_NS + "title") or "") == "the case's design point"]


def test_one_axis_sweep_writes_no_boundary_file(tmp_path):
    _, _, prefix = _sweep(tmp_path, WINDOW, ["temperature=800:900:50"], "line")
    assert not Path(f"{prefix}_boundaries.csv").exists()
