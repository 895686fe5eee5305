"""Reporting bases and the flow basis (issue 24, items 2 and 3), against hand conversion.

Molar masses for the hand conversion: IUPAC standard atomic weights (abridged, 2021):
H 1.008, C 12.011, O 15.999 g/mol.  Conversions: dry x_i = x_i / (1 - x_H2O); ppm(v) = 1e6 x_i
(ideal gas); w_i = x_i M_i / sum x_j M_j; m_i = n_i M_i (textbook definitions)."""
from __future__ import annotations

import json
from pathlib import Path

import pytest

import auditor
from clitools import run

ROOT = Path(__file__).resolve().parents[2]
IUPAC = {"H": 1.008, "C": 12.011, "O": 15.999}          # IUPAC 2021 abridged standard atomic weights
M = {"CH4": IUPAC["C"] + 4 * IUPAC["H"], "H2O": 2 * IUPAC["H"] + IUPAC["O"], "CO": IUPAC["C"] + IUPAC["O"],
     "CO2": IUPAC["C"] + 2 * IUPAC["O"], "H2": 2 * IUPAC["H"], "C(gr)": IUPAC["C"]}
REL = 1e-4        # cantera's molecular weights against the abridged IUPAC values

REFORMER = """\
title: {title}
system:
  source: packaged
  phases:
    gas: [CH4, H2O, CO, CO2, H2]
    graphite: [C(gr)]
reactions: complete
feed: {{CH4: 16.04 {mass}, H2O: 54.05 {mass}}}
coexisting: [gas]
specified:
  temperature: 650 degC
  pressure: 5 bar
"""


def _json(path):
    rc, out, err = run(["check", path, "--json"])
    assert rc in (0, 1), err
    return json.loads(out)


def test_bases_against_hand_conversion(tmp_path):
    doc = _json(ROOT / "cases" / "reformer_carbon_risk.yaml")
    eq = doc["equilibrium"]
    bases = eq["bases"]
    gas = next(p for p in eq["phases"] if p["name"] == "gas")
    x = gas["mole_fractions"]
    # dry basis: water left out and the rest renormalised
    for k, v in bases["dry_mole_fractions"]["gas"].items():
        assert v == pytest.approx(x[k] / (1 - x["H2O"]), rel=1e-12)
    assert "H2O" not in bases["dry_mole_fractions"]["gas"]
    assert sum(bases["dry_mole_fractions"]["gas"].values()) == pytest.approx(1, rel=1e-12)
    # mass fractions and masses
    mean = sum(x[k] * M[k] for k in x)
    for k in x:
        assert bases["mass_fractions"]["gas"][k] == pytest.approx(x[k] * M[k] / mean, rel=REL)
        assert bases["masses"]["gas"][k] == pytest.approx(gas["moles"] * x[k] * M[k] / 1000, rel=REL)
    graphite = next(p for p in eq["phases"] if p["name"] == "graphite")
    # kg of graphite deposited: n(C) M(C)
    assert bases["masses"]["graphite"]["C(gr)"] == pytest.approx(graphite["moles"] * M["C(gr)"] / 1000, rel=REL)
    # mass is conserved: the feed (1 mol CH4 + 0.5 mol H2O) weighs what the phases weigh
    feed_kg = (1.0 * M["CH4"] + 0.5 * M["H2O"]) / 1000
    assert sum(bases["phase_masses"].values()) == pytest.approx(feed_kg, rel=REL)
    assert bases["mass_unit"] == "kg" and doc["flow_basis"] is None


def test_ppm_lists_the_minor_species(tmp_path):
    case = tmp_path / "hot.yaml"
    case.write_text(REFORMER.format(title="hot reformer", mass="kg").replace("650 degC", "1000 degC")
                    .replace("coexisting: [gas]\n", "").replace("    graphite: [C(gr)]\n", ""), encoding="utf-8")
    doc = _json(case)
    x = doc["equilibrium"]["phases"][0]["mole_fractions"]
    ppm = doc["equilibrium"]["bases"]["ppmv"]["gas"]
    assert set(ppm) == {k for k, v in x.items() if v < 0.01} and ppm    # CH4 at 1000 degC is minor
    for k, v in ppm.items():
        assert v == pytest.approx(1e6 * x[k], rel=1e-12)
    rc, out, _ = run(["check", case, "--basis", "ppm", "--basis", "dry"])
    assert "Minor species of gas in ppm(v)" in out and "Dry basis: mole fractions of gas with water left out" in out


def test_a_kg_per_hour_feed_is_the_same_feed_in_kg_per_hour(tmp_path):
    hourly, batch = tmp_path / "hourly.yaml", tmp_path / "batch.yaml"
    hourly.write_text(REFORMER.format(title="per hour", mass="kg/h"), encoding="utf-8")
    batch.write_text(REFORMER.format(title="per hour", mass="kg"), encoding="utf-8")
    h, b = _json(hourly), _json(batch)
    assert h["phase_rule"] == b["phase_rule"] and h["verdict"] == b["verdict"]      # the count is unchanged
    for ph, pb in zip(h["equilibrium"]["phases"], b["equilibrium"]["phases"]):
        assert ph["moles"] == pytest.approx(pb["moles"], rel=1e-9)
        for k, v in pb["mole_fractions"].items():
            assert ph["mole_fractions"][k] == pytest.approx(v, rel=1e-9, abs=1e-15)
    assert h["equilibrium"]["bases"]["masses"] == b["equilibrium"]["bases"]["masses"]
    assert h["equilibrium"]["bases"]["mass_unit"] == "kg/h" and b["equilibrium"]["bases"]["mass_unit"] == "kg"
    assert h["flow_basis"]["time_unit"] == "h" and b["flow_basis"] is None
    assert "closed system fed in one hour" in h["flow_basis"]["statement"]
    # the terminal and the report give amounts as rates and say so
    rc, out, _ = run(["check", hourly, "--basis", "mass"])
    assert "mol/h; x:" in out and "flow basis: the feed is written as rates per hour" in out
    assert "mass, kg/h" in out
    report = tmp_path / "hourly.md"
    run(["check", hourly, "--report", report])
    text = report.read_text(encoding="utf-8")
    assert "Flow basis: the feed is written as rates per hour" in text
    assert "amounts in mol/h" in text and "**Mass basis: gas**" in text


def test_a_kmol_per_hour_feed_reports_kmol_per_hour(tmp_path):
    case = tmp_path / "kmolh.yaml"
    case.write_text(REFORMER.format(title="kmol/h", mass="kg").replace("16.04 kg", "1 kmol/h")
                    .replace("54.05 kg", "3 kmol/h").replace("coexisting: [gas]\n", ""), encoding="utf-8")
    r = auditor.check(str(case))
    gas = r.equilibrium.phases[0]
    rc, out, _ = run(["check", case])
    assert f"gas: {gas.moles / 1000:.6g} kmol/h" in out
    # 4 kmol of feed molecules in one hour: mass conserved at (16.043 + 3 x 18.015) kg/h (IUPAC weights)
    assert sum(r.to_dict()["equilibrium"]["bases"]["phase_masses"].values()) == pytest.approx(
        M["CH4"] + 3 * M["H2O"], rel=REL)
