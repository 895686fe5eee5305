"""Units of a case file (auditor/units.py): the shipped table against pint, mass feeds
converted with cantera's molar masses, inputs kept as written, near-miss answers."""
from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

import pytest

from auditor import units
from auditor.case import CaseError, load_case, parse_quantity
from auditor.system import build_system, check_names, feed_moles
from auditor.equilibrium.workspace import feed_vector

SYS = """\
system:
  source: packaged
  phases:
    gas: [CH4, H2O, CO, CO2, H2, N2]
"""


def write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "case.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def test_shipped_table_is_what_pint_computes():
    """The table the fast path uses is the one pint computes from data/units.txt now."""
    shipped = json.loads(units.TABLE.read_text(encoding="utf-8"))["units"]
    assert shipped == units.table_from_pint()["units"]


@pytest.mark.parametrize("name", [u for names in units.TABLE_UNITS.values() for u in names])
def test_table_agrees_with_pint_default_registry(name):
    """Each table entry against pint's own default registry (not our small definitions file)."""
    import pint
    ureg = pint.UnitRegistry()
    # pint's default registry has no pound-mole: 453.59237 mol (common practice: 1 lb = 0.45359237 kg exactly)
    ureg.define("lbmol = 453.59237 * mol = lb_mol")
    kind, scale, offset = units._table()[name]
    si = units.KINDS[kind][1]
    for x in (0.0, 1.0, 850.0, -40.0):
        expected = float(ureg.Quantity(x, name).to(si).magnitude)
        found = x * float(scale) + float(offset)
        assert found == pytest.approx(expected, rel=1e-14, abs=1e-12), (name, x)


# value, kinds, SI value, source
CONVERSIONS = {
    "kg": ("10 kg", "mass", 10.0),                 # SI base unit
    "t": ("1 t", "mass", 1000.0),                  # BIPM SI brochure: 1 t = 1000 kg
    "lb": ("100 lb", "mass", 45.359237),           # NIST SP 811: 1 lb = 0.45359237 kg exactly
    "g": ("16 g", "mass", 0.016),                  # SI prefix
    "MPa": ("2.5 MPa", "pressure", 2.5e6),         # SI prefix
    "torr": ("760 torr", "pressure", 101325.0),    # BIPM SI brochure: 1 atm = 760 torr = 101325 Pa
    "degR": ("491.67 degR", "temperature", 273.15),  # common practice: T/degR = 9/5 T/K
}


@pytest.mark.parametrize("value, kind, si", CONVERSIONS.values(), ids=CONVERSIONS.keys())
def test_conversions(value, kind, si):
    si_found = parse_quantity(value, kind)
    assert si_found == pytest.approx(si, rel=1e-12)


def test_units_outside_the_table_go_to_pint():
    """Text the table does not hold is parsed by pint's registry of data/units.txt."""
    assert parse_quantity("2 kilobar", "pressure") == pytest.approx(2e8, rel=1e-12)   # SI prefix
    assert parse_quantity("3 K*K/K", "temperature") == 3.0
    assert parse_quantity("1 Mmol", "amount") == 1e6        # SI prefix: a megamole, not a misspelt mmol
    assert parse_quantity("3 lbs", "mass") == pytest.approx(3 * 0.45359237, rel=1e-12)  # pint's plural; NIST SP 811
    with pytest.raises(ValueError, match="cannot read unit 'furlong' of pressure"):
        parse_quantity("3 furlong", "pressure")


def test_mass_feed_converted_with_cantera_molar_mass(tmp_path):
    """10 kg CH4 and 18.015 kg of water: M(CH4) = 16.04 g/mol and M(H2O) = 18.015 g/mol
    (IUPAC standard atomic weights, from memory); the conversion uses cantera's own
    molecular_weight, exactly as it prints it."""
    path = write(tmp_path, SYS + "feed: {CH4: 10 kg, H2O: 18.015 kg, N2: 2 kmol}\n"
                 "specified:\n  temperature: 850 degC\n  pressure: 25 bar\n")
    case = load_case(path)
    assert case.feed_mass == frozenset({"CH4", "H2O"})
    assert dict(case.feed) == {"CH4": Fraction(10), "H2O": Fraction("18.015"), "N2": Fraction(2000)}
    system = build_system(case)
    check_names(case, system)
    moles_found = dict(feed_moles(case, system))
    m_ch4 = system.species[system.find("CH4")[0]].molar_mass
    m_h2o = system.species[system.find("H2O")[0]].molar_mass
    assert m_ch4 == pytest.approx(16.04, abs=0.01)
    assert m_h2o == pytest.approx(18.015, abs=0.001)
    assert moles_found["CH4"] == Fraction(10_000) / Fraction(repr(m_ch4))     # exact: kg -> g over g/mol
    assert float(moles_found["H2O"]) == pytest.approx(1000.0, rel=1e-4)
    assert moles_found["N2"] == 2000
    n0_found = feed_vector(case, system)
    assert n0_found[system.find("CH4")[0]] == pytest.approx(623.3, rel=1e-3)   # 10000 / 16.04


def test_mass_and_mole_feeds_give_the_same_audit(tmp_path):
    """The same feed written in kg and in mol is the same problem: same count, same equilibrium."""
    from auditor.audit import run
    by_mass = tmp_path / "mass.yaml"
    by_mass.write_text(SYS + "feed: {CH4: 16.04246 kg, H2O: 54.04584 kg}\n"
                       "specified:\n  temperature: 850 degC\n  pressure: 25 bar\n", encoding="utf-8")
    case = load_case(by_mass)
    system = build_system(case)
    moles = {sp: float(a) for sp, a in feed_moles(case, system)}
    by_mol = tmp_path / "mol.yaml"
    by_mol.write_text(SYS + f"feed: {{CH4: {moles['CH4']!r} mol, H2O: {moles['H2O']!r} mol}}\n"
                      "specified:\n  temperature: 850 degC\n  pressure: 25 bar\n", encoding="utf-8")
    a, b = run(load_case(by_mass)), run(load_case(by_mol))
    assert a.verdict == b.verdict == "well-posed"
    assert a.phase_rule.degrees_of_freedom == b.phase_rule.degrees_of_freedom
    xa = dict(a.equilibrium.phases[0].mole_fractions)
    xb = dict(b.equilibrium.phases[0].mole_fractions)
    assert xa == pytest.approx(xb, rel=1e-9, abs=1e-12)


def test_inputs_kept_as_written(tmp_path):
    path = write(tmp_path, SYS + "feed: {CH4: 2 kmol, H2O: 6.0 kmol, N2: 10 lb}\n"
                 "specified:\n  temperature: 850 degC\n  pressure: 25 bar\n")
    case = load_case(path)
    assert case.as_written == {"feed.CH4": "2 kmol", "feed.H2O": "6.0 kmol", "feed.N2": "10 lb",
                               "specified.temperature": "850 degC", "specified.pressure": "25 bar"}
    assert case.specified.temperature_K == pytest.approx(1123.15)


@pytest.mark.parametrize("written, meant", [("h2o", "H2O"), ("CH5", "CH4"), ("c02", "CO2")])
def test_misspelt_species_gets_the_closest_name_first(tmp_path, written, meant):
    path = write(tmp_path, SYS + f"feed: {{{written}: 1, CH4: 1}}\n")
    case = load_case(path)
    with pytest.raises(CaseError) as info:
        check_names(case, build_system(case))
    (problem,) = info.value.problems
    assert problem.key_path == f"feed.{written}" and problem.line == 5 and problem.file == str(path)
    assert f"unknown species {written!r} in any phase; did you mean {meant!r}?" in problem.message


def test_mass_feed_from_the_command_line(tmp_path):
    """The whole CLI on a mass feed: exit 0, well posed."""
    import subprocess
    import sys
    path = write(tmp_path, SYS + "feed: {CH4: 1 t, H2O: 3.4 t, N2: 0.02 t}\n"
                 "specified:\n  temperature: 850 degC\n  pressure: 25 bar\n")
    done = subprocess.run([sys.executable, "-m", "auditor", "check", str(path), "--json"], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["verdict"] == "well-posed"


def test_near_miss_from_the_command_line(tmp_path):
    """A near-miss unit: exit 2, one message with file, line and key path, no traceback."""
    import subprocess
    import sys
    path = write(tmp_path, SYS + "feed: {CH4: 1}\nspecified:\n  temperature: 250 C\n  pressure: 1 bar\n")
    done = subprocess.run([sys.executable, "-m", "auditor", "check", str(path)], capture_output=True, text=True)
    assert done.returncode == 2
    assert f"{path}:7" in done.stderr and "specified.temperature" in done.stderr
    assert "did you mean 250 degC?" in done.stderr and "Traceback" not in done.stderr
