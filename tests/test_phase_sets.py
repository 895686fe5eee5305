"""Phase sets that cannot be right (issue 18, item 5) and the condensed-phase density table
(item 6), on real case files and the real CLI.

Physics behind the phase-set findings:
* Two ideal-gas phases at one T and P: equal chemical potentials of a shared species,
  mu = mu0(T) + RT ln(x P / P0), force equal mole fractions, so the two are one phase (any
  split gives the same G) or one of them is empty (Gibbs' criterion of phase equilibrium;
  e.g. Smith, Van Ness & Abbott, Introduction to Chemical Engineering Thermodynamics, ch. 10-11).
* A species in an ideal-gas phase is counted at its partial pressure; a condensed species
  there has the wrong chemical potential.
* A surface phase's amount is set by the catalyst's site count, not by a bulk balance.
"""
from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from auditor.audit import audit_file
from auditor.equilibrium.model import PhaseModel, density_table
from auditor.system import CONDENSED_DATABASE, packaged_species
from clitools import run

DATA = Path(__file__).parent / "data"


def write(tmp_path: Path, name: str, doc: dict) -> Path:
    path = tmp_path / f"{name}.yaml"
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return path


def gas_pair_case(vapour: list[str], feed: dict, coexisting=None) -> dict:
    doc = {"title": "two gas phases", "system": {"source": "packaged", "phases": {
        "gas": ["H2", "O2", "H2O", "N2"], "vapour": vapour}}, "reactions": "complete", "feed": feed}
    if coexisting:
        doc["coexisting"] = coexisting
    doc["specified"] = {"temperature": "1000 K", "pressure": "1 atm"}
    return doc


def phase_findings(result):
    return [f for f in result.findings if f.topic == "phases"]


def test_two_gas_phases_sharing_species_are_named(tmp_path):
    path = write(tmp_path, "pair", gas_pair_case(["H2O", "H2", "O2"], {"H2[gas]": 2, "O2[gas]": 1, "N2": 0.5}))
    result = audit_file(path)
    (f,) = phase_findings(result)
    assert f.severity == "error" and set(f.involved) == {"gas", "vapour"}
    assert "ideal gases mix in all proportions" in f.message and "one of them must be empty" in f.message
    assert "N2 only in gas" in f.message
    assert result.verdict == "inconsistent" and "phase set cannot be right" in result.reason
    rc, out, _ = run(["check", path])
    assert rc == 1 and "both ideal gases" in out


def test_two_gas_phases_over_the_same_species_have_an_indeterminate_split(tmp_path):
    doc = gas_pair_case(["H2", "O2", "H2O", "N2"], {"H2[gas]": 2, "O2[gas]": 1, "N2[vapour]": 1})
    result = audit_file(write(tmp_path, "same", doc))
    (f,) = phase_findings(result)
    assert "one phase under two names" in f.message and "indeterminate" in f.message
    assert result.verdict == "inconsistent"


def test_a_second_gas_phase_not_assumed_present_is_a_warning(tmp_path):
    doc = gas_pair_case(["H2O", "H2", "O2"], {"H2[gas]": 2, "O2[gas]": 1, "N2": 0.5}, coexisting=["gas"])
    result = audit_file(write(tmp_path, "one", doc))
    (f,) = phase_findings(result)
    assert f.severity == "warning"
    assert result.verdict != "inconsistent"


def test_condensed_species_in_a_packaged_gas_phase_is_refused(tmp_path):
    doc = {"title": "graphite in the gas", "system": {"source": "packaged", "phases": {"gas": ["CO2", "CO", "C(gr)"]}},
           "reactions": "complete", "feed": {"CO2": 1},
           "specified": {"temperature": "1000 K", "pressure": "1 atm"}}
    rc, _, err = run(["check", write(tmp_path, "cg", doc)])
    assert rc == 2 and "mixes gas species" in err and "C(gr)" in err


def test_condensed_species_in_a_mechanism_gas_phase_is_named(tmp_path):
    mech = tmp_path / "mech.yaml"
    mech.write_text((DATA / "condensed_in_gas_mech.yaml").read_text(encoding="utf-8"), encoding="utf-8")
    doc = {"title": "graphite in a mechanism's gas", "system": {"mechanism": "mech.yaml", "phases": ["gas", "vapour"]},
           "reactions": "complete", "feed": {"CO2": 1}, "coexisting": ["gas"],
           "specified": {"temperature": "1000 K", "pressure": "1 atm"}}
    result = audit_file(write(tmp_path, "cgm", doc))
    named = {f.involved[1]: f for f in phase_findings(result) if "condensed species" in f.message}
    assert set(named) == {"C(gr)", "soot"}
    assert "nasa_condensed.yaml" in named["C(gr)"].message
    assert "constant-volume" in named["soot"].message
    assert result.verdict == "inconsistent"


def ptcombust_case(coexisting=None) -> dict:
    doc = {"title": "methane over platinum", "system": {"mechanism": "ptcombust.yaml"}, "reactions": "complete",
           "feed": {"CH4": 1, "O2": 2, "N2": 7.52}}
    if coexisting:
        doc["coexisting"] = coexisting
    doc["specified"] = {"temperature": "1000 K", "pressure": "1 atm"}
    return doc


def test_surface_phase_assumed_present_in_a_bulk_audit_is_named(tmp_path):
    result = audit_file(write(tmp_path, "pt", ptcombust_case()))
    (f,) = phase_findings(result)
    assert f.severity == "error" and f.involved == ("Pt_surf",) and "surface" in f.message
    assert result.verdict == "inconsistent" and "Pt_surf is a surface" in result.reason


def test_surface_phase_left_out_of_coexisting_is_a_note(tmp_path):
    result = audit_file(write(tmp_path, "ptg", ptcombust_case(["gas"])))
    (f,) = phase_findings(result)
    assert f.severity == "note"
    assert result.verdict == "well-posed"


# ---------------------------------------------------------------------------------------
# item 6: the density table

def test_every_density_names_a_source_and_is_physical():
    table = density_table()
    condensed = packaged_species(CONDENSED_DATABASE)
    for name, (rho, source) in table.items():
        assert name in condensed, name
        # physical range: no condensed phase lies outside liquid hydrocarbons (~700 kg/m3) and
        # osmium (22 590 kg/m3, CRC Handbook, from memory)
        assert 700 <= rho <= 22590, name
        assert len(source) > 10 and ("CRC" in source or "looked up" in source), name


def test_magnesium_sulfate_decomposition_uses_the_tabulated_density(tmp_path):
    doc = {"title": "MgSO4 decomposition", "system": {"source": "packaged", "phases": {
        "gas": ["SO3", "SO2", "O2"], "sulfate": ["MgSO4(s)"], "magnesia": ["MgO(s)"]}},
        "reactions": "complete", "feed": {"MgSO4(s)": 1}, "coexisting": ["gas", "magnesia"],
        "specified": {"temperature": "1300 K", "pressure": "1 atm"}}
    result = audit_file(write(tmp_path, "mgso4", doc))
    # anhydrous MgSO4: 2.66 g/cm3 (Wikipedia infobox, looked up; the table's source)
    assert density_table()["MgSO4(s)"][0] == 2660
    assert result.equilibrium is not None and result.equilibrium.solved
    used = {s: (d, src) for s, d, src in result.equilibrium.assumed_densities}
    assert used["MgSO4(s)"][0] == 2660 and "default" not in used["MgSO4(s)"][1]
    assert used["MgO(s)"][0] == 3580
    model = PhaseModel(result.system)
    sulfate = model.phases[[p.name for p in result.system.phases].index("sulfate")]
    assert sulfate.density == pytest.approx(2660, rel=1e-9)
