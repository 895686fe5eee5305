"""Mechanism files as engineers have them: alternative phase models of one mixture,
surface and edge phases (site conservation), real-gas phases in a case, a mechanism
written by hand, and bad mechanism input.

Outside references: the formula-matrix theorem (the most independent reactions over N
phase-species is N - rank A; W. R. Smith and R. W. Missen, *Chemical Reaction
Equilibrium Analysis*, 1982, §2.3), with every rank counted by hand in the comment
beside it; cantera's own species counts, site sizes and single-phase equilibrium.
"""
from __future__ import annotations

import json
import shutil
from fractions import Fraction
from pathlib import Path

import cantera as ct
import pytest

from auditor import system
from auditor.audit import audit_file
from auditor.cli import main
from auditor.report.document import equilibrium_document  # noqa: E402

from isomers import isomer_mechanism

DATA = Path(ct.get_data_directories()[-1])
EXAMPLES = DATA / "example_data"
HERE = Path(__file__).resolve().parent / "data"


def reactions_json(capsys, *argv: str) -> tuple[int, dict]:
    rc = main(["reactions", *argv, "--json"])
    out, err = capsys.readouterr()
    assert err == ""
    return rc, json.loads(out)


def counts(doc: dict) -> tuple[int, int, int, int, bool]:
    return doc["species"], doc["formula_rank"], doc["max_independent"], doc["rank"], doc["complete"]


def one_error(capsys, argv) -> str:
    rc = main(argv)
    out, err = capsys.readouterr()
    assert rc == 2 and out == "" and "Traceback" not in err
    assert err.startswith("auditor: error: ") and err.count("\n") == 1, err
    return err


# ------------------------------------------------------------------ alternative models of one mixture

# file -> (first phase, the alternative, species of each (cantera), rank A by hand, reactions listed)
ALTERNATIVES = {
    # H2 H O O2 OH H2O HO2 H2O2 AR N2: elements H, O, Ar, N each in a species of its own kind -> rank A 4
    "h2o2.yaml": ("ohmech", "ohmech-RK", 10, 4, 29),
    # one species CO2: the C and O rows are multiples of each other -> rank A 1, N - rank A = 0
    "co2-thermo.yaml": ("CO2-Ideal", "CO2-RK", 1, 1, 0),
    # n-dodecane mechanism over C, H, O, N (all four occur independently) -> rank A 4
    "nDodecane_Reitz.yaml": ("nDodecane_RK", "nDodecane_IG", 100, 4, 553),
}


@pytest.mark.parametrize("name", sorted(ALTERNATIVES))
def test_default_is_the_first_phase_and_the_alternative_is_named(name, capsys):
    first, other, n, rank_a, n_rxn = ALTERNATIVES[name]
    path = DATA / name if (DATA / name).exists() else EXAMPLES / name
    assert ct.Solution(str(path)).name == first            # cantera's own default: the first phase
    assert ct.Solution(str(path), first).n_species == n    # (cantera)
    rc, doc = reactions_json(capsys, str(path))
    assert rc == 0
    assert [p["name"] for p in doc["phases"]] == [first]
    assert doc["other_phases"] == [{"name": other, "alternative_of": first}]
    # formula-matrix theorem: N - rank A, ranks by hand in ALTERNATIVES
    assert (doc["species"], doc["formula_rank"], doc["max_independent"]) == (n, rank_a, n - rank_a)
    assert doc["reactions"] == n_rxn
    # today's bug was a doubled N and a list reported incomplete; one model is complete
    assert doc["complete"] is True


def test_text_says_which_phase_was_used(capsys):
    assert main(["reactions", str(DATA / "h2o2.yaml")]) == 0
    out = capsys.readouterr().out
    assert "Phases used: ohmech (ideal-gas, 10 species)\n" in out
    assert "The file also defines: ohmech-RK (an alternative model of ohmech, set aside); choose phases with " \
           "--phase NAME\n" in out


def test_the_alternative_alone_gives_the_same_counts(capsys):
    _, ideal = reactions_json(capsys, str(DATA / "h2o2.yaml"), "--phase", "ohmech")
    _, real = reactions_json(capsys, str(DATA / "h2o2.yaml"), "--phase", "ohmech-RK")
    # same species and reactions under another thermo model: N 10, rank A 4, m 6 (by hand above)
    assert counts(ideal) == counts(real) == (10, 4, 6, 6, True)
    assert real["phases"] == [{"name": "ohmech-RK", "model": "Redlich-Kwong", "species": 10}]


def test_two_alternatives_are_refused_as_a_pair(capsys):
    path = DATA / "h2o2.yaml"
    err = one_error(capsys, ["reactions", str(path), "--phase", "ohmech", "--phase", "ohmech-RK"])
    assert err == (f"auditor: error: {path}: phases: phases 'ohmech' and 'ohmech-RK' of h2o2.yaml list the same "
                   "species and reactions: they are alternative models of one mixture, not two phases that "
                   "coexist; name only one of them\n")


def test_two_gas_models_with_different_reaction_lists_are_alternatives(capsys):
    # the same 42 species under two reaction sets (common reactions + one of two
    # pressure-dependent variants), both ideal gases
    path = EXAMPLES / "ammonia-CO-H2-Alzueta-2023.yaml"
    rc, doc = reactions_json(capsys, str(path))
    assert rc == 0
    assert doc["other_phases"] == [{"name": "linear-Burke", "alternative_of": "baseline"}]
    assert doc["species"] == ct.Solution(str(path), "baseline").n_species
    err = one_error(capsys, ["reactions", str(path), "--phase", "baseline", "--phase", "linear-Burke"])
    assert "phases 'baseline' and 'linear-Burke' of ammonia-CO-H2-Alzueta-2023.yaml list the same species and " \
           "are both gases" in err


def test_fluid_models_of_water_are_alternatives(capsys):
    # liquidvapor.yaml: 'water' (pure-fluid) and 'liquid-water-IAPWS95' both model H2O alone
    rc, doc = reactions_json(capsys, str(DATA / "liquidvapor.yaml"))
    assert {"name": "liquid-water-IAPWS95", "alternative_of": "water"} in doc["other_phases"]


def test_two_liquids_defined_alike_may_coexist(tmp_path, capsys):
    # INVENTED: two ideal-condensed liquids over the same species and model (a liquid-liquid
    # split is modelled so): not alternatives, both are used
    species = "".join(f"""- name: {n}
  composition: {{H: 2}}
  thermo: {{model: constant-cp, T0: 298.15 K, h0: 0 J/mol, s0: 100 J/mol/K, cp0: 75 J/mol/K}}
  equation-of-state: {{model: constant-volume, molar-volume: 0.02 m^3/kmol}}
""" for n in "AB")
    liquid = "  thermo: ideal-condensed\n  standard-concentration-basis: unity\n  species: [A, B]\n"
    path = tmp_path / "two_liquids.yaml"
    path.write_text(f"phases:\n- name: upper\n{liquid}- name: lower\n{liquid}species:\n{species}")
    rc, doc = reactions_json(capsys, str(path))
    assert [p["name"] for p in doc["phases"]] == ["upper", "lower"] and doc["other_phases"] == []
    # N = 4 phase-species over one element: rank A = 1, N - rank A = 3, no reactions listed
    assert counts(doc) == (4, 1, 3, 0, False)


def test_phases_that_coexist_are_all_used_by_default(capsys):
    # ptcombust: a gas and a platinum surface are different phases, not alternatives
    rc, doc = reactions_json(capsys, str(DATA / "ptcombust.yaml"))
    assert rc == 0
    assert [p["name"] for p in doc["phases"]] == ["gas", "Pt_surf"]
    assert doc["other_phases"] == []


def _case(tmp_path: Path, phases: str, extra: str = "") -> Path:
    shutil.copy(DATA / "h2o2.yaml", tmp_path / "h2o2.yaml")
    path = tmp_path / "case.yaml"
    path.write_text(f"""title: invented burner outlet
system:
  mechanism: h2o2.yaml
  phases: {phases}
reactions: complete
feed: {{H2: 2.0, O2: 1.0, N2: 4.0}}
specified:
  temperature: 3000 K
  pressure: 1000 bar
{extra}""", encoding="utf-8")
    return path


def test_case_naming_two_alternatives_is_refused_at_its_line(tmp_path, capsys):
    path = _case(tmp_path, "[ohmech, ohmech-RK]")
    err = one_error(capsys, ["check", str(path)])
    assert err.startswith(f"auditor: error: {path}:4: system.phases[1]: phases 'ohmech' and 'ohmech-RK' of h2o2.yaml "
                          "list the same species and reactions")


def test_case_without_phases_uses_the_first_model(tmp_path):
    path = _case(tmp_path, "[ohmech]").read_text().replace("  phases: [ohmech]\n", "")
    (tmp_path / "case.yaml").write_text(path)
    result = audit_file(tmp_path / "case.yaml", confirm=False)
    assert [p.name for p in result.system.phases] == ["ohmech"]
    assert result.system.set_aside == (("ohmech-RK", "ohmech"),)
    assert [f.message for f in result.findings if "alternative" in f.message] == [
        "the mechanism also defines phase ohmech-RK, an alternative model of the mixture of ohmech; ohmech is "
        "used (name a phase under system.phases to choose)"]


# ------------------------------------------------------------------ real-gas phase in a case

def _cantera_equilibrium(phase: str, T: float, P: float) -> dict[str, float]:
    gas = ct.Solution(str(DATA / "h2o2.yaml"), phase)
    gas.TPX = T, P, "H2:2, O2:1, N2:4"
    gas.equilibrate("TP")
    return dict(zip(gas.species_names, gas.X))


def test_real_gas_phase_is_confirmed_with_its_own_model(tmp_path):
    result = audit_file(_case(tmp_path, "[ohmech-RK]"), confirm=True)
    eq = result.equilibrium
    assert eq.converged and result.verdict == "well-posed"
    found = dict(next(p for p in equilibrium_document(eq)["phases"] if p["name"] == "ohmech-RK")["mole_fractions"])
    real = _cantera_equilibrium("ohmech-RK", 3000.0, 1e8)     # reference: cantera's own equilibrate
    ideal = _cantera_equilibrium("ohmech", 3000.0, 1e8)
    # at 1000 bar the Redlich-Kwong answer differs from the ideal one by about 4 % in H2
    assert abs(real["H2"] - ideal["H2"]) / real["H2"] > 0.02
    for sp in ("H2", "O2", "H2O", "OH", "N2"):
        assert found[sp] == pytest.approx(real[sp], rel=1e-5), sp
    assert not [f for f in result.findings if "as ideal" in f.message]


def test_peng_robinson_phase_is_confirmed_with_its_own_model(tmp_path):
    # INVENTED: a dry reformer on a Peng-Robinson gas (cantera takes the critical properties of
    # CH4, CO, CO2 and H2 from its critical-properties.yaml); mechanism written next to the case
    mech = ("phases:\n- name: pr-gas\n  thermo: Peng-Robinson\n"
            "  species: [{gri30.yaml/species: [CH4, CO, CO2, H2]}]\n  state: {T: 300, P: 1 atm}\n")
    (tmp_path / "dry_reformer.yaml").write_text(mech)
    case = tmp_path / "case.yaml"
    case.write_text("""title: invented dry reformer on a real-gas model
system:
  mechanism: dry_reformer.yaml
reactions: complete
feed: {CH4: 1.0, CO2: 1.0}
specified:
  temperature: 900 K
  pressure: 100 bar
""")
    result = audit_file(case, confirm=True)
    assert result.verdict == "well-posed"
    found = dict(equilibrium_document(result.equilibrium)["phases"][0]["mole_fractions"])
    out = {}
    for model in ("Peng-Robinson", "ideal-gas"):   # reference: cantera's own equilibrate
        gas = ct.Solution(yaml=mech.replace("Peng-Robinson", model))
        gas.TPX = 900.0, 100e5, "CH4:1, CO2:1"
        gas.equilibrate("TP")
        out[model] = gas["CO"].X[0]
    assert abs(out["Peng-Robinson"] - out["ideal-gas"]) / out["ideal-gas"] > 0.01   # about 1.7 % apart
    assert found["CO"] == pytest.approx(out["Peng-Robinson"], rel=1e-5)


def test_real_gas_species_subset_keeps_its_model(tmp_path):
    path = _case(tmp_path, "{ohmech-RK: [H2, O2, H2O, OH, H, O, N2]}")
    result = audit_file(path, confirm=True)
    assert result.equilibrium.converged
    assert not [f for f in result.findings if "cannot be minimised" in f.message or "as ideal" in f.message]
    # reference: cantera's equilibrate of the same Redlich-Kwong model over the same species
    src = ct.Solution(str(DATA / "h2o2.yaml"), "ohmech-RK")
    sub = ct.Solution(thermo="Redlich-Kwong", species=[src.species(n) for n in ("H2", "O2", "H2O", "OH", "H", "O", "N2")])
    sub.TPX = 3000.0, 1e8, "H2:2, O2:1, N2:4"
    sub.equilibrate("TP")
    found = dict(next(p for p in equilibrium_document(result.equilibrium)["phases"])["mole_fractions"])
    assert found["H2"] == pytest.approx(sub["H2"].X[0], rel=1e-5)


def test_real_gas_with_an_incomplete_list_is_named_as_treated_ideal(tmp_path):
    # a list missing the OH and H directions: the element-potential minimiser holds the extra
    # conserved quantities but knows only standard potentials, which it must say
    path = _case(tmp_path, "{ohmech-RK: [H2, O2, H2O, OH, H, N2]}")
    text = path.read_text().replace("reactions: complete", "reactions: ['2 H2 + O2 <=> 2 H2O']")
    path.write_text(text)
    result = audit_file(path, confirm=True)
    msgs = [f.message for f in result.findings if f.topic == "equilibrium" and f.severity == "warning"]
    assert any("ohmech-RK (Redlich-Kwong) as ideal" in m for m in msgs), msgs


# ------------------------------------------------------------------ surfaces and edges

def test_site_sizes_weight_the_site_row():
    # SiF4/NH3 deposition: surface species occupy 2 or 4 sites (cantera's Species.size)
    path = DATA / "SiF4_NH3_mec.yaml"
    s = system.from_mechanism(path, ["SI3N4"])
    row = s.formula_matrix[s.elements.index("sites of SI3N4")]
    surf = ct.Interface(str(path), "SI3N4")
    for k, sp in enumerate(s.species):
        expected = surf.species(sp.name).size if sp.phase == "SI3N4" else 0
        assert row[k] == Fraction(expected).limit_denominator(1000)
    assert {row[k] for k, sp in enumerate(s.species) if sp.phase == "SI3N4"} == {2, 4}


# file, phases -> (N, rank A, m, complete, frozen directions); counts by hand in the comments
SURFACES = {
    # sofc: gas H2 H2O N2 O2, metal electron, oxide_bulk Ox VO**, metal_surface (m) H(m) O(m) OH(m)
    # H2O(m), oxide_surface (ox) O''(ox) OH'(ox) H2O(ox), tpb (tpb): N = 4+1+2+5+4+1 = 17.
    # Rows H, O, N, charge (the electron and Ox, O''(ox), OH'(ox) carry it) and one site row for
    # each of the two surfaces and the edge, each holding a bare site of no atoms: all
    # independent, rank A = 7, N - rank A = 10.  The 11 reactions have rank 9 (2 dependent);
    # the one direction left is the bulk oxide's lattice (Ox + VO**), not an interface.
    ("sofc.yaml", ()): (17, 7, 9, False, ["(nothing) <=> VO**"]),
    # diamond: gas H H2 CH3 CH4, bulk C(d), surface 8 species (c6** a bare site): N = 13.
    # Rows H, C and "sites of diamond_100": rank A = 3, N - rank A = 10; 20 reactions of rank 9;
    # CH4 is in no reaction (the gas has no kinetics), so one direction is frozen, and no
    # "(nothing) <=> c6**" any more.
    ("diamond.yaml", ()): (13, 3, 9, False, ["2 H2 + C(d) <=> CH4"]),
    # ptcombust surface: each of the 11 surface species holds one Pt atom and one site, so the
    # site row equals the Pt row: rank A stays 6 (O H C N Ar Pt) over N = 11 + 32 = 43 and the
    # gas and surface reactions together are complete (m = 37 = 43 - 6).
    ("ptcombust.yaml", ()): (43, 6, 37, True, []),
    # invented step edge: O2 AR, terrace X(s) O(s), edge (e): N = 5; the edge's reaction
    # O2 + 2 (e) => 2 (e) + 2 O(s) adds two terrace sites, so the terrace gets no row; rows O,
    # Ar, "sites of step": rank A = 3, N - rank A = 2 = m (both reactions independent).
    ("invented_step_edge.yaml", ()): (5, 3, 2, True, []),
}


@pytest.mark.parametrize("key", list(SURFACES), ids=lambda k: k[0])
def test_interfaces_conserve_sites(key, capsys):
    name, phases = key
    path = HERE / name if (HERE / name).exists() else DATA / name
    argv = [str(path)] + [a for p in phases for a in ("--phase", p)]
    rc, doc = reactions_json(capsys, *argv)
    n, rank_a, m, complete, frozen = SURFACES[key]
    assert rc == 0
    assert counts(doc) == (n, rank_a, n - rank_a, m, complete)     # formula-matrix theorem
    assert doc["frozen_directions"] == frozen
    assert not any(f.startswith("(nothing) <=>") and "VO**" not in f for f in doc["frozen_directions"])
    interfaces = [p["name"] for p in doc["phases"] if p["model"] in ("ideal-surface", "edge")]
    assert sorted(doc["site_conservation"] + [f"sites of {p}" for p in doc["site_creating_phases"]]) == \
        sorted(f"sites of {p}" for p in interfaces)


def test_site_creating_surface_gets_no_row(capsys):
    rc, doc = reactions_json(capsys, str(HERE / "invented_step_edge.yaml"))
    assert doc["site_creating_phases"] == ["terrace"]
    assert doc["site_conservation"] == ["sites of step"]
    assert doc["unbalanced"] == []      # with a terrace row, reaction #2 would show as unbalanced


def test_site_rows_are_named_in_text_and_findings(tmp_path, capsys):
    assert main(["reactions", str(HERE / "invented_step_edge.yaml")]) == 0
    out = capsys.readouterr().out
    assert "Site conservation counted in rank A: sites of step\n" in out
    assert "No site-conservation row (reactions create or remove sites): terrace\n" in out
    shutil.copy(HERE / "invented_step_edge.yaml", tmp_path / "edge.yaml")
    case = tmp_path / "case.yaml"
    case.write_text("title: invented step edge, counting only\nsystem:\n  mechanism: edge.yaml\n"
                    "reactions: from-mechanism\nspecified:\n  temperature: 800 K\n  pressure: 1 bar\n")
    result = audit_file(case, confirm=False)
    assert "the mechanism's reactions create or remove sites of terrace, so its site total is not a conserved " \
           "quantity" in [f.message for f in result.findings]


def test_charge_stays_conserved_with_electrons(capsys):
    rc, doc = reactions_json(capsys, str(DATA / "sofc.yaml"))
    assert "charge" in doc["conserved_quantities"]
    s = system.from_mechanism(DATA / "sofc.yaml")
    charge = s.formula_matrix[s.elements.index("charge")]
    assert charge[s.index("electron")] == -1 and charge[s.index("Ox")] == -2   # (cantera: Ox has E 2)
    # each listed reaction balances charge: the electron enters the tpb reactions
    assert doc["unbalanced"] == []


def test_site_row_counts_in_the_phase_rule(tmp_path):
    shutil.copy(DATA / "diamond.yaml", tmp_path / "film.yaml")
    case = tmp_path / "case.yaml"
    case.write_text("""title: invented diamond film reactor, counting only
system:
  mechanism: film.yaml
  phases: [gas, diamond, diamond_100]
reactions: complete
specified:
  temperature: 1200 K
  pressure: 20 torr
""")
    result = audit_file(case, confirm=False)
    pr = result.phase_rule
    # N = 13, pi = 3, rank A = 3 (H, C, sites of diamond_100) so m = 10 and, with no feed,
    # F = 2 + N - pi - m - r = 2 + 13 - 3 - 10 - 0 = 2 (without the site row m = 11, F = 1)
    assert (pr.n_species, pr.n_phases, pr.independent_reactions, pr.degrees_of_freedom) == (13, 3, 10, 2)
    assert result.verdict == "well-posed"


# ------------------------------------------------------------------ a mechanism written by hand

def test_hand_written_mechanism_loads_and_analyses(capsys):
    rc, doc = reactions_json(capsys, str(HERE / "invented_ammonia_mech.yaml"))
    assert rc == 0
    # N2 H2 NH3 AR over N, H, Ar: rank A = 3 (AR alone holds Ar; N2 and H2 separate N and H),
    # N - rank A = 1; reaction 2 is reaction 1 halved: m = 1, complete
    assert counts(doc) == (4, 3, 1, 1, True)
    assert doc["independent_numbers"] == [1]
    assert doc["duplicates"] == [{"representative": 0, "representative_number": 1,
                                  "members": [{"index": 1, "number": 2, "factor": "1/2"}]}]


def test_hand_written_mechanism_case_is_confirmed():
    result = audit_file(HERE / "invented_ammonia_case.yaml", confirm=True)
    assert result.verdict == "well-posed"
    pr = result.phase_rule
    # one gas fed in a fixed N:H:Ar ratio: r = rank A - 1 = 2; F = 2 + 4 - 1 - 1 - 2 = 2
    assert (pr.n_species, pr.independent_reactions, pr.r_feed, pr.degrees_of_freedom) == (4, 1, 2, 2)
    # reference: cantera's own equilibrate of the same hand-written file
    gas = ct.Solution(str(HERE / "invented_ammonia_mech.yaml"))
    gas.TPX = 700.0, 200e5, "N2:1, H2:3, AR:0.05"
    gas.equilibrate("TP")
    found = dict(equilibrium_document(result.equilibrium)["phases"][0]["mole_fractions"])
    assert found["NH3"] == pytest.approx(gas["NH3"].X[0], rel=1e-6)


# ------------------------------------------------------------------ bad mechanism input

def _isomers(tmp_path: Path, name: str, species_line: str, equation: str = "A => B") -> Path:
    path = tmp_path / name
    path.write_text(isomer_mechanism(equation, species_line), encoding="utf-8")
    return path


def test_phase_naming_an_undefined_species(tmp_path, capsys):
    path = _isomers(tmp_path, "undefined.yaml", "species: [A, B, C, Q]")
    err = one_error(capsys, ["reactions", str(path)])
    # cantera's own words, with the file and the phase; its quoted excerpt of the file is left out
    assert err.startswith(f"auditor: error: {path}: phases[gas]: cantera cannot build phase 'gas': InputFileError "
                          "thrown by addSpecies: Error on lines 6 and ")
    assert err.endswith(f"of {path}: Could not find a species named 'Q'.\n")


def test_phase_with_no_species(tmp_path, capsys):
    path = _isomers(tmp_path, "empty.yaml", "species: []")
    err = one_error(capsys, ["reactions", str(path)])
    assert err == (f"auditor: error: {path}: phases[gas]: cantera cannot build phase 'gas': InputFileError thrown "
                   f"by setupPhase: Error on line 6 of {path}: Could not parse species declaration of type "
                   "'vector<AnyValue>'\n")


def test_coefficient_not_near_a_simple_fraction_names_the_phase(tmp_path, capsys):
    path = _isomers(tmp_path, "odd.yaml", "species: [A, B, C]", "A + 0.3183 B => 1.3183 C")
    err = one_error(capsys, ["reactions", str(path)])
    assert err == (f"auditor: error: {path}: phases[gas].reactions: stoichiometric coefficient -0.3183 of B in "
                   "reaction 'A + 0.3183 B => 1.3183 C' is not within 1e-09 of a fraction with denominator <= 1000\n")


def test_file_cantera_refuses(tmp_path, capsys):
    # a surface reaction that creates a site: cantera checks the site balance itself
    path = tmp_path / "bad_surface.yaml"
    text = (HERE / "invented_step_edge.yaml").read_text()
    path.write_text(text.replace("- equation: O2 + 2 X(s) <=> 2 O(s)", "- equation: O2 <=> 2 O(s)"))
    err = one_error(capsys, ["reactions", str(path)])
    assert err.startswith(f"auditor: error: {path}: phases[terrace]: cantera cannot build phase 'terrace': ")
    assert "Number of surface sites not balanced in reaction O2 <=> 2 O(s). Reactant sites: 0 Product sites: 2" in err
