"""The general library's own equilibrium test cases, run through the tool.

Sources (cantera's public test suite, read in the Cantera/cantera repository):
``test/python/test_equilibrium.py`` (newest stored version) and ``test/equil/equil_gas.cpp``.
Each case below is written as a real auditor case file (YAML in tmp_path) over the same phases,
audited in process, and compared with cantera run directly on the same phases and feed
("cantera run directly": ``Mixture.equilibrate('TP')``); the cantera test function is named
beside each case.

Count (distinct physical cases; a test repeated for several solvers is one case, a sweep is one):
  found 268: test_equilibrium.py 165 (EquilTestCases 8, relaxed temperature limit 1, trace
  solution species 1, H2-O2 two gas phases 120, C/H/O single phase 6, gas + graphite 6,
  vcs gas + graphite 8, extra elements 1, KOH TP and HP sweeps 2, gas-carbon adiabatic sweeps 2,
  ideal solid solution 1, vapour/liquid hydrocarbons 7, excluded PbO(yw) 2) and equil_gas.cpp 103
  (CH + C2H2 1, GRI CH4/N2 5, O2/N2 5, CH4/O2/N2 6, CH4/O2 80 T,P points, property pairs 6).
  expressed here 26: the 23 CASES below, the H2-O2 two-gas-phase case and the two lead-oxide
  cases.  All 26 pass (the equivalence-point cases once gave a false singular verdict); the two-gas-phase case
  passes by naming why its phase split is indeterminate.  The others are sampled out to keep
  the run short (same families), need files the library does not ship (equilibrium.yaml is
  rebuilt below; IdealSolidSolnPhaseExample.yaml is test data only), pose U,V / S,V / S,P pairs the
  tests here do not sweep, or have a reference the library itself calls non-physical (KOH sweeps:
  ice above 1000 K; issue 18 item 2).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pytest
import yaml

from auditor.audit import audit_file

ct = pytest.importorskip("cantera")

RANGE = ("condensed data used outside their temperature range (issue 18 item 2, another session)")
ATOL = 1e-7        # mole-fraction agreement with cantera run directly (of the phase-species' total)


def gas(species, elements=None, name="gas", source="gri30.yaml") -> dict:
    entry = {"name": name, "thermo": "ideal-gas", "species": [{f"{source}/species": species}],
             "state": {"T": 300.0, "P": 101325.0}}
    if elements:
        entry["elements"] = elements
        entry["skip-undeclared-elements"] = True
    return entry


GRAPHITE = {"name": "graphite", "thermo": "fixed-stoichiometry", "species": [{"graphite.yaml/species": ["C(gr)"]}],
            "state": {"T": 300.0, "P": 101325.0}}


@dataclass(frozen=True)
class LibraryCase:
    id: str
    cantera_test: str            # the library's test function this reproduces
    phases: tuple                # phase entries of the mechanism file written for the case
    feed: dict
    T: float
    P: float
    expect: dict = field(default_factory=dict)   # the library test's own expected mole fractions


CASES = [
    LibraryCase("complete-stoich", "EquilTestCases.test_equil_complete_stoichiometric",
                (gas(["O2", "CH4", "H2O", "CO2"], ["C", "H", "O"]),), {"CH4": 1, "O2": 2}, 298, 1e5,
                {"CO2": 1 / 3, "H2O": 2 / 3}),
    LibraryCase("complete-lean", "EquilTestCases.test_equil_complete_lean",
                (gas(["O2", "CH4", "H2O", "CO2"], ["C", "H", "O"]),), {"CH4": 1, "O2": 3}, 298, 1e5,
                {"CO2": 0.25, "H2O": 0.5, "O2": 0.25}),
    LibraryCase("incomplete-stoich", "EquilTestCases.test_equil_incomplete_stoichiometric",
                (gas(["O2", "CH4", "H2O", "CO2", "CO", "H2", "OH"], ["C", "H", "O"]),), {"CH4": 1, "O2": 2}, 301, 1e5,
                {"CO2": 1 / 3, "H2O": 2 / 3}),
    LibraryCase("incomplete-lean", "EquilTestCases.test_equil_incomplete_lean",
                (gas(["O2", "CH4", "H2O", "CO2", "CO", "H2", "OH"], ["C", "H", "O"]),), {"CH4": 1, "O2": 3}, 301, 1e5,
                {"CO2": 0.25, "H2O": 0.5, "O2": 0.25}),
    LibraryCase("gri-stoich", "EquilTestCases.test_equil_gri_stoichiometric",
                (gas("all"),), {"CH4": 1, "O2": 2}, 301, 1e5, {"CO2": 1 / 3, "H2O": 2 / 3}),
    LibraryCase("gri-lean", "EquilTestCases.test_equil_gri_lean",
                (gas("all"),), {"CH4": 1, "O2": 3}, 301, 1e5, {"CO2": 0.25, "H2O": 0.5, "O2": 0.25}),
    LibraryCase("overconstrained-1", "EquilTestCases.test_equil_overconstrained1",
                (gas(["O2", "CH4"], ["C", "H", "O"]),), {"CH4": 1, "O2": 1}, 301, 1e5, {"CH4": 0.5, "O2": 0.5}),
    LibraryCase("overconstrained-2", "EquilTestCases.test_equil_overconstrained2",
                (gas(["O2", "CH4", "AR"], ["C", "H", "O", "N", "Ar"]),), {"CH4": 1, "O2": 1}, 301, 1e5,
                {"CH4": 0.5, "O2": 0.5}),
    LibraryCase("trace-solution-species", "TestMultiphaseEquil.test_trace_solution_species",
                (gas(["C", "CO", "CO2", "C2"], ["C", "O"], source="nasa_gas.yaml"),), {"CO2": 1}, 300, 1e5,
                {"CO2": 1.0}),
    LibraryCase("extra-elements", "TestEquilExtraElements.test_gibbs / test_vcs / test_auto",
                (gas(["AR", "N2", "CH4", "O2", "CO2", "H2O", "CO", "H2", "OH"], ["H", "Ar", "C", "O", "Cl", "N"]),),
                {"CH4": 0.8, "O2": 2, "N2": 7.52}, 300, 101325, {"CH4": 0.0}),
    LibraryCase("cho-C40-H147-O13", "TestMultiphase_CHO.test_single_phase[C40-H147-O13]",
                (gas("all"),), {"C": 40, "H": 147, "O": 13}, 923, 101325),
    LibraryCase("cho-C77-H120-O3", "TestMultiphase_CHO.test_single_phase[C77-H120-O3]",
                (gas("all"),), {"C": 77, "H": 120, "O": 3}, 923, 101325),
    LibraryCase("cho-gr-C23-H79-O98", "TestMultiphase_CHO.test_two_phase[C23-H79-O98]",
                (gas("all"), GRAPHITE), {"C": 23, "H": 79, "O": 98}, 923, 101325),
    LibraryCase("cho-gr-C100-H90-O10", "TestMultiphase_CHO.test_two_phase[C100-H90-O10]",
                (gas("all"), GRAPHITE), {"C": 100, "H": 90, "O": 10}, 923, 101325),
    LibraryCase("vcs-cho-gr-C20-H60-O20", "TestMultiphase_VCS_CHO.test_two_phase[C20-H60-O20]",
                (gas("all"), GRAPHITE), {"C": 20, "H": 60, "O": 20}, 923, 101325),
    LibraryCase("vcs-cho-gr-C30-H36-O34", "TestMultiphase_VCS_CHO.test_two_phase[C30-H36-O34]",
                (gas("all"), GRAPHITE), {"C": 30, "H": 36, "O": 34}, 923, 101325),
    LibraryCase("ch-c2h2", "equil_gas.cpp OverconstrainedEquil.ChemEquil / VcsNonideal",
                (gas(["CH", "C2H2"], ["H", "C", "O", "N", "Ar"]),), {"C2H2": 0.9, "CH": 0.1}, 1000, 1e5,
                {"C2H2": 1.0}),
    LibraryCase("gri-ch4-n2-500", "equil_gas.cpp GriMatrix.*_CH4_N2 (T = 500 K)",
                (gas("all"),), {"CH4": 3, "N2": 2}, 500, 101325),
    LibraryCase("gri-ch4-n2-1700", "equil_gas.cpp GriMatrix.*_CH4_N2 (T = 1700 K)",
                (gas("all"),), {"CH4": 3, "N2": 2}, 1700, 101325),
    LibraryCase("gri-o2-n2-800", "equil_gas.cpp GriMatrix.*_O2_N2 (T = 800 K)",
                (gas("all"),), {"O2": 3, "N2": 2}, 800, 101325),
    LibraryCase("gri-ch4-o2-n2-1100", "equil_gas.cpp GriMatrix.*_CH4_O2_N2 (T = 1100 K)",
                (gas("all"),), {"CH4": 3, "O2": 3, "N2": 4}, 1100, 101325),
    LibraryCase("gri-ch4-o2-2050-1e3", "equil_gas.cpp GriMatrix.*_CH4_O2 (T = 2050 K, P = 1e3 Pa)",
                (gas("all"),), {"CH4": 1, "O2": 1}, 2050, 1e3),
    LibraryCase("gri-pairs-tp", "equil_gas.cpp PropertyPairs.*_TP",
                (gas("all"),), {"CH4": 0.3, "O2": 0.3, "N2": 0.4}, 500, 1e5),
]


def _phase_entry(p: dict) -> dict:
    p = dict(p)
    (ref, names), = p["species"][0].items()
    if names == "all":
        p["species"] = [{ref: "all"}]
    return p


def _write_mechanism(tmp_path: Path, case: LibraryCase) -> Path:
    mech = {"phases": [_phase_entry(p) for p in case.phases]}
    path = tmp_path / "mech.yaml"
    path.write_text(yaml.safe_dump(mech, sort_keys=False), encoding="utf-8")
    return path


def _write(tmp_path: Path, case: LibraryCase, coexisting: list[str]) -> Path:
    """The case file: the phases cantera finds present are the phases assumed to coexist."""
    doc = {"title": f"cantera test {case.id}", "system": {"mechanism": "mech.yaml"}, "reactions": "complete",
           "feed": case.feed, "coexisting": coexisting,
           "specified": {"temperature": f"{case.T} K", "pressure": f"{case.P} Pa"}}
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return path


def _direct(mech: Path, case: LibraryCase) -> tuple[dict[str, float], list[str]]:
    """cantera run directly: the same phases, the same feed, T and P; moles by species and the
    phases present."""
    phases = [ct.Solution(str(mech), p["name"]) for p in case.phases]
    for solver in ("vcs", "gibbs"):     # the installed vcs may predate the library's fix of these cases
        mix = ct.Mixture([(ph, 0.0) for ph in phases])
        mix.T, mix.P = case.T, case.P
        mix.species_moles = ", ".join(f"{k}:{v}" for k, v in case.feed.items())
        try:
            mix.equilibrate("TP", solver=solver, max_steps=10000, log_level=0)
            break
        except ct.CanteraError:
            continue
    n = np.asarray(mix.species_moles)
    present = [p["name"] for i, p in enumerate(case.phases) if mix.phase_moles(i) > 0]
    return {mix.species_name(k).split(":")[-1]: float(n[k]) for k in range(mix.n_species)}, present


def _tool(eq) -> dict[str, float]:
    out: dict[str, float] = {}
    for ph in eq.phases:
        for sp, x in dict(ph.mole_fractions).items():
            out[sp] = out.get(sp, 0.0) + ph.moles * x
    return out


PARAMS = [pytest.param(c, id=c.id) for c in CASES]


@pytest.mark.parametrize("case", PARAMS)
def test_library_case(tmp_path, case):
    direct, present = _direct(_write_mechanism(tmp_path, case), case)     # cantera run directly
    result = audit_file(_write(tmp_path, case, present))
    assert result.verdict == "well-posed", (result.verdict, result.reason)
    tool = _tool(result.equilibrium)
    total_t, total_d = sum(tool.values()), sum(direct.values())
    for sp, n in direct.items():
        assert tool.get(sp, 0.0) / total_t == pytest.approx(n / total_d, abs=ATOL), sp
    for sp, x in case.expect.items():                   # the library test's own expectation
        assert tool.get(sp, 0.0) / total_t == pytest.approx(x, abs=1e-6), sp


def test_h2o2_two_gas_phases_are_named(tmp_path):
    """TestMultiphase_H2O2_TwoPhase.test_equilibrate[T=1000, P=5 atm, N2 0.7, phase2 = H2, O2, H2O]:
    two ideal-gas phases over shared species; the library checks element balance and element
    potentials, the tool says why the split between the phases is not determined."""
    mech = {"phases": [gas("all", name="gas", source="h2o2.yaml"),
                       gas(["H2", "O2", "H2O"], name="phase2", source="h2o2.yaml")]}
    (tmp_path / "mech.yaml").write_text(yaml.safe_dump(mech, sort_keys=False), encoding="utf-8")
    doc = {"title": "h2o2 two phases", "system": {"mechanism": "mech.yaml"}, "reactions": "complete",
           "feed": {"O2[gas]": 1.0, "H2[gas]": 2.0, "N2": 0.7},
           "specified": {"temperature": "1000 K", "pressure": "5 atm"}}
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    result = audit_file(path)
    assert result.verdict == "inconsistent"
    assert any(f.topic == "phases" and "ideal gases mix in all proportions" in f.message for f in result.findings)


@pytest.mark.parametrize("with_ice", [False, True], ids=["no-ice", "ice"])
def test_lead_oxides_at_400K(tmp_path, with_ice):
    """test_excluded_species_extra_element[gibbs/vcs, include_h2o]: Pb, O, C atoms over lead, its
    oxides and graphite at 400 K, 1 atm; PbO(yw) has data only from 762 K and must stay out.  The
    library's test expects PbO2(s) = 1 mol and no PbO(yw) (and no ice)."""
    phases = {"gas": ["Pb", "O", "C"], "C_gr": ["C(gr)"], "Pb_s": ["Pb(cr)"], "PbO_rd": ["PbO(rd)"],
              "PbO_yw": ["PbO(yw)"], "PbO2_s": ["PbO2(s)"], "Pb3O4_s": ["Pb3O4(s)"]}
    if with_ice:
        phases = {"gas": phases.pop("gas"), "H2O_s": ["H2O(s)"], **phases}
    doc = {"title": "lead oxides", "system": {"source": "packaged", "phases": phases}, "reactions": "complete",
           "feed": {"O": 3, "Pb": 1, "C": 1}, "coexisting": ["gas", "C_gr", "PbO2_s"],
           "specified": {"temperature": "400 K", "pressure": "1 atm"}}
    path = tmp_path / "lead.yaml"
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    result = audit_file(path)
    eq = result.equilibrium
    moles = {p.name: p.moles for p in eq.phases}
    assert moles.get("PbO_yw", 0.0) == pytest.approx(0.0, abs=1e-9)
    assert moles.get("H2O_s", 0.0) == pytest.approx(0.0, abs=1e-9)
    assert moles["PbO2_s"] == pytest.approx(1.0, rel=1e-6)      # the library test's expectation
    assert result.verdict == "well-posed", (result.verdict, result.reason)
