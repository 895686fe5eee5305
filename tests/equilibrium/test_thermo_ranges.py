"""Thermo data ranges are part of the physics (issue 18, item 2).

A condensed species is used only inside its thermo data's temperature range: outside it,
the phase is set aside (it cannot form at that T), a species of the same formula valid at T
stands in where the system holds one, and a case that assumes such a phase present is not
well posed.  Every state below goes through the real pipeline (``audit_file`` on a case file
written here, or the real CLI) and is compared with **cantera run directly**: a cantera
``Mixture`` of only the phases whose data cover T (the out-of-range phases named in each
test), equilibrated with its ``vcs`` solver.

Data: cantera's packaged ``nasa_gas.yaml`` / ``nasa_condensed.yaml`` (B. J. McBride,
S. Gordon, M. A. Reno, NASA TM-4513, 1993) and cantera's ``KOH.yaml``; the ranges quoted
are those files' (H2O(s) 200-273.15 K, H2O(L) 273.15-600 K, PbO(yw) 762-1159 K, PbO(rd)
300-762 K, K(cr) 200-336.86 K).
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest
import yaml

ct = pytest.importorskip("cantera")

from auditor.audit import audit_file  # noqa: E402
from auditor.equilibrium.workspace import CaseArrays, outside_range  # noqa: E402

from clitools import run  # noqa: E402

ATM = 101325.0
REL = 1e-6          # agreement of amounts with cantera run directly (both solve to ~1e-9)


def write_case(tmp: Path, name: str, body: dict) -> Path:
    path = tmp / f"{name}.yaml"
    path.write_text(yaml.safe_dump(body, sort_keys=False), encoding="utf-8")
    return path


def water_case(T: float, coexisting=None) -> dict:
    body = {"title": f"argon and water at {T} K",
            "system": {"source": "packaged",
                       "phases": {"gas": ["Ar", "H2O"], "ice": ["H2O(s)"], "water": ["H2O(L)"]}},
            "reactions": "complete", "feed": {"Ar": 0.6, "H2O": 0.4},
            "specified": {"temperature": f"{T} K", "pressure": "1 atm"}}
    if coexisting:
        body["coexisting"] = coexisting
    return body


def cantera_direct(phases: list, feed: dict, T: float, P: float = ATM) -> dict[str, float]:
    """cantera run directly: a Mixture of ``phases`` (gas first), feed into the gas, vcs at T, P;
    returns phase name -> moles."""
    mix = ct.Mixture([(p, 0.0) for p in phases])
    mix.T, mix.P = T, P
    n = [0.0] * mix.n_species
    for s, v in feed.items():
        n[mix.species_index(0, s)] = v
    mix.species_moles = n
    mix.equilibrate("TP", solver="vcs")
    return {p.name: mix.phase_moles(i) for i, p in enumerate(phases)}


def packaged_phase(name: str, species: list[str], gas: bool):
    db = "nasa_gas.yaml" if gas else "nasa_condensed.yaml"
    sps = [s for s in ct.Species.list_from_file(db) if s.name in species]
    ph = ct.Solution(thermo="ideal-gas" if gas else "fixed-stoichiometry", species=sps)
    ph.name = name
    return ph


def moles(eq) -> dict[str, float]:
    return {p.name: p.moles for p in eq.phases}


# ---------------------------------------------------------------------------------------
# the ice case: 1000 K, ice and liquid water offered

def test_ice_at_1000_K_is_set_aside_gas_only(tmp_path):
    res = audit_file(write_case(tmp_path, "ice", water_case(1000.0, ["gas"])))
    eq = res.equilibrium
    assert res.verdict == "well-posed", res.reason
    assert eq.phases_present == ("gas",)
    # cantera run directly on the gas alone (ice H2O(s) and water H2O(L) removed: out of range at 1000 K)
    ref = cantera_direct([packaged_phase("gas", ["Ar", "H2O"], True)], {"Ar": 0.6, "H2O": 0.4}, 1000.0)
    assert moles(eq)["gas"] == pytest.approx(ref["gas"], rel=REL)
    assert moles(eq)["ice"] == 0.0
    assert dict(eq.set_aside).keys() == {"ice", "water"}
    notes = [f.message for f in eq.findings if f.topic == "data" and "set aside" in f.message]
    assert any("phase ice set aside at T = 1000.00 K" in m and "726.9 K above the upper end" in m
               and "H2O (phase gas)" in m for m in notes), notes
    # set-aside phases cannot form: no negative (nor any finite) driving force
    assert all(d == float("inf") for p, d in eq.absent_phase_driving_force if p in ("ice", "water"))


def test_ice_assumed_at_1000_K_is_not_well_posed(tmp_path):
    path = write_case(tmp_path, "ice", water_case(1000.0, ["gas", "ice"]))
    rc, out, err = run(["check", path, "--json"])
    doc = json.loads(out)
    assert rc == 1, err
    assert doc["verdict"] == "inconsistent"
    assert doc["verdict"] != "well-posed"
    assert doc["equilibrium"]["phases_present"] == ["gas"]
    assert {a["phase"] for a in doc["equilibrium"]["phases_set_aside"]} == {"ice", "water"}
    errors = [f["message"] for f in doc["findings"] if f["severity"] == "error"]
    assert any("assumes phase ice present" in m and "cannot exist" in m for m in errors), errors
    rc, out, _ = run(["check", path])
    assert rc == 1 and "ice cannot exist at T = 1000.00 K" in out and "not a well-posed case" in out


# ---------------------------------------------------------------------------------------
# a family across the ice/liquid boundary: the set aside and the state at each T

FAMILY = {  # T, K -> (phases set aside, phases present)
    250.0: ({"water"}, ("gas", "ice")),          # H2O(L) data start at 273.15 K
    273.15: (set(), ("gas", "water")),           # both in range (closed intervals); liquid G lower by the data
    300.0: ({"ice"}, ("gas", "water")),          # H2O(s) data end at 273.15 K
    400.0: ({"ice"}, ("gas",)),                  # 0.4 atm of steam is below the saturation pressure at 400 K
}


@pytest.mark.parametrize("T", sorted(FAMILY))
def test_water_family_across_range_ends(tmp_path, T):
    aside, present = FAMILY[T]
    res = audit_file(write_case(tmp_path, "w", water_case(T, list(present))))
    eq = res.equilibrium
    assert eq.confirmed, [f.message for f in eq.findings]
    assert set(dict(eq.set_aside)) == aside
    assert eq.phases_present == present
    # cantera run directly on the phases whose data cover T (those in ``aside`` removed)
    phases = [packaged_phase("gas", ["Ar", "H2O"], True)]
    phases += [packaged_phase(n, [s], False) for n, s in (("ice", "H2O(s)"), ("water", "H2O(L)")) if n not in aside]
    ref = cantera_direct(phases, {"Ar": 0.6, "H2O": 0.4}, T)
    for name, amount in ref.items():
        assert moles(eq)[name] == pytest.approx(amount, rel=REL, abs=1e-12), name


# ---------------------------------------------------------------------------------------
# cantera's KOH.yaml, every phase, 1250 K

def test_koh_at_1250_K_is_liquid_koh_and_gas(tmp_path):
    body = {"title": "KOH.yaml, all phases", "system": {"mechanism": "KOH.yaml"}, "reactions": "complete",
            "feed": {"K": 1.03, "H2": 2.12, "O2": 0.9}, "coexisting": ["KOH_plasma", "KOH_liquid"],
            "specified": {"temperature": "1250 K", "pressure": "1 atm"}}
    res = audit_file(write_case(tmp_path, "koh", body))
    eq = res.equilibrium
    assert res.verdict == "well-posed", res.reason
    assert eq.phases_present == ("KOH_plasma", "KOH_liquid")
    assert {"K_solid", "ice"} <= set(dict(eq.set_aside))
    # cantera run directly on the phases valid at 1250 K: K_solid (K(cr) to 336.86 K), KOH_a, KOH_b
    # (to 516 and 679 K), ice and liquid_water removed
    valid = ["KOH_plasma", "K_liquid", "KOH_liquid", "K2O2_solid", "K2O_solid", "KO2_solid"]
    ref = cantera_direct([ct.Solution("KOH.yaml", n) for n in valid], {"K": 1.03, "H2": 2.12, "O2": 0.9}, 1250.0)
    for name, amount in ref.items():
        assert moles(eq)[name] == pytest.approx(amount, rel=1e-5, abs=1e-10), name
    assert moles(eq)["K_solid"] == 0.0 and moles(eq)["ice"] == 0.0


# ---------------------------------------------------------------------------------------
# lead oxide at 400 K: PbO(yw) (762-1159 K) is not used

def lead_case(phases: dict, coexisting: list) -> dict:
    return {"title": "lead in air at 400 K", "system": {"source": "packaged", "phases": phases},
            "reactions": "complete", "feed": {"Pb(cr)": 1.0, "O2": 1.0, "N2": 3.76}, "coexisting": coexisting,
            "specified": {"temperature": "400 K", "pressure": "1 atm"}}


def test_lead_oxide_uses_the_polymorph_valid_at_400_K(tmp_path):
    phases = {"gas": ["O2", "N2"], "lead": ["Pb(cr)"], "massicot": ["PbO(yw)"], "litharge": ["PbO(rd)"]}
    res = audit_file(write_case(tmp_path, "pbo", lead_case(phases, ["gas", "litharge"])))
    eq = res.equilibrium
    assert res.verdict == "well-posed", res.reason
    assert eq.phases_present == ("gas", "litharge")
    assert set(dict(eq.set_aside)) == {"massicot"}
    notes = [f.message for f in eq.findings if "set aside" in f.message]
    assert any("PbO(yw) 362 K below the lower end" in m and "PbO(rd) (phase litharge)" in m for m in notes), notes
    # cantera run directly without massicot (PbO(yw), data from 762 K)
    phases = [packaged_phase("gas", ["O2", "N2"], True), packaged_phase("lead", ["Pb(cr)"], False),
              packaged_phase("litharge", ["PbO(rd)"], False)]
    mix = ct.Mixture([(p, 0.0) for p in phases])
    mix.T, mix.P = 400.0, ATM
    mix.species_moles = [1.0, 3.76, 1.0, 0.0]          # O2, N2 (gas), Pb(cr), PbO(rd)
    mix.equilibrate("TP", solver="vcs")
    for i, p in enumerate(phases):
        assert moles(eq)[p.name] == pytest.approx(mix.phase_moles(i), rel=REL, abs=1e-12), p.name


def test_lead_oxide_only_the_high_polymorph_offered(tmp_path):
    """Only PbO(yw) offered: it is set aside at 400 K and the finding names the packaged
    polymorph valid there; the lead stays metal (cantera run directly: gas + Pb(cr) alone)."""
    phases = {"gas": ["O2", "N2"], "lead": ["Pb(cr)"], "massicot": ["PbO(yw)"]}
    res = audit_file(write_case(tmp_path, "pbo", lead_case(phases, ["gas", "massicot"])))
    eq = res.equilibrium
    assert res.verdict == "inconsistent", res.reason
    assert "massicot cannot exist at T = 400.00 K" in res.reason
    assert "massicot" not in eq.phases_present
    text = " ".join(f.message for f in res.findings)
    assert "the packaged data hold PbO(rd) (300-762 K" in text


# ---------------------------------------------------------------------------------------
# the mask itself: closed intervals with a named tolerance, ice at exactly 273.15 K valid

def test_outside_range_closed_intervals():
    from auditor.audit import counting_stages
    from auditor.case import load_case
    from auditor.equilibrium.model import PhaseModel
    case = load_case(Path(__file__).resolve().parents[2] / "cases" / "ice_melter_adiabatic.yaml")
    system, _, analysis, _, _ = counting_stages(case)
    a = CaseArrays.from_stages(system, analysis, PhaseModel(system))
    ice, water = system.index("H2O(s)"), system.index("H2O(L)")
    assert outside_range(a, 273.15) is None                         # both ranges end/start at 273.15 K
    assert outside_range(a, 273.144) is None                        # the data's own melting point
    assert outside_range(a, 300.0)[ice] and not outside_range(a, 300.0)[water]
    assert outside_range(a, 250.0)[water] and not outside_range(a, 250.0)[ice]
    assert not outside_range(a, 1000.0)[system.index("N2")]         # gases are never set aside


def test_gas_extrapolation_names_the_distance(tmp_path):
    """A gas species beyond its data range gets a warning with the distance in K (H2O of
    nasa_gas.yaml has data to 6000 K)."""
    body = {"title": "hot steam", "system": {"source": "packaged", "phases": {"gas": ["H2O", "H2", "O2", "OH", "H", "O"]}},
            "reactions": "complete", "feed": {"H2O": 1.0},
            "specified": {"temperature": "6100 K", "pressure": "1 atm"}}
    res = audit_file(write_case(tmp_path, "hot", body))
    warn = [f.message for f in res.equilibrium.findings if f.severity == "warning" and f.topic == "data"]
    assert any("gas species H2O" in m and "100 K above the upper end of its data (200-6000 K)" in m
               for m in warn), warn


def test_sweep_across_the_melting_point(tmp_path):
    """``auditor sweep`` reuses one workspace at every T: each point gets its own set of phases
    that may form (ice below 273.15 K, liquid water above), and a point whose assumed phase is
    outside its data is inconsistent, as ``check`` says (test_ice_assumed_at_1000_K_is_not_well_posed)."""
    path = write_case(tmp_path, "w", water_case(300.0, ["gas", "water"]))
    rc, out, err = run(["sweep", path, "--vary", "temperature=250:400:50", "--jobs", "1", "--out", tmp_path / "s"])
    assert rc == 1, err
    from clitools import read_csv
    rows = {float(r["temperature_K"]): r for r in read_csv(tmp_path / "s.csv")}
    assert rows[250.0]["verdict"] == "inconsistent" and rows[250.0]["phases_present"] == "gas ice"
    assert rows[300.0]["verdict"] == "well-posed" and rows[300.0]["phases_present"] == "gas water"
    assert rows[350.0]["phases_present"] == "gas" and rows[400.0]["phases_present"] == "gas"
    assert all(float(r["moles[ice]"]) == 0.0 for T, r in rows.items() if T > 273.15)
    # the amounts at 300 K equal those of a single check (cantera run directly: test_water_family_across_range_ends)
    single = audit_file(path).equilibrium
    assert float(rows[300.0]["moles[water]"]) == pytest.approx(dict((p.name, p.moles) for p in single.phases)["water"],
                                                               rel=1e-9)
