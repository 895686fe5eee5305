"""Edge cases of the confirmation stage: bounds, phases that can never form, incomplete lists."""
from __future__ import annotations

import json
import math

import pytest

from auditor import settings
from auditor.audit import audit_file
from auditor.report.document import check_document


def write(tmp_path, text, name="case.yaml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


LIME_WITHOUT_CALCIUM = """\
system:
  source: packaged
  phases:
    gas: [CO2, CO, O2, N2]
    lime: [CaO(s)]
feed: {CO2: 1, N2: 1}
coexisting: [gas]
specified: {temperature: 1000 K, pressure: 1 atm}
"""


def test_phase_needing_an_absent_element_cannot_form(tmp_path):
    # cantera's vcs fails on a pure phase holding an element of zero abundance; the tool keeps
    # such a phase out of the mixture and reports that it cannot form (common practice: a
    # phase without its elements in the feed has zero amount in every feasible state)
    result = audit_file(write(tmp_path, LIME_WITHOUT_CALCIUM))
    eq = result.equilibrium
    assert result.verdict == "well-posed" and eq.confirmed
    assert dict(eq.absent_phase_driving_force)["lime"] == math.inf
    doc = check_document(result)
    assert doc["equilibrium"]["absent_phase_driving_force_RT"]["lime"] is None
    json.dumps(doc, allow_nan=False)  # strict JSON: no Infinity


def test_wall_clock_bound_is_a_finding(tmp_path, monkeypatch):
    monkeypatch.setattr(settings, "MINIMISATION_WALL_SECONDS", -1.0)
    result = audit_file(write(tmp_path, LIME_WITHOUT_CALCIUM))
    assert result.verdict == "not-confirmed"
    assert any("wall-clock bound" in f.message for f in result.findings)
    assert result.exit_status == 1


INCOMPLETE_METHANOL = """\
system:
  source: packaged
  phases:
    gas: [CO, CO2, H2, H2O, CH3OH, CH4]
reactions:
  - CO + 2 H2 <=> CH3OH
  - CO + H2O <=> CO2 + H2
feed: {CO: 1.0, CO2: 0.2, H2: 3.0, CH4: 0.1}
specified: {temperature: 523.15 K, pressure: 80 bar}
"""


def test_incomplete_list_holds_the_extra_conserved_quantity(tmp_path):
    # design §2: methane cannot be formed or consumed by the listed reactions, so the
    # minimisation must keep it at its feed amount (an unconstrained minimisation would
    # turn most of the carbon into methane at 523 K and 80 bar)
    result = audit_file(write(tmp_path, INCOMPLETE_METHANOL))
    eq = result.equilibrium
    assert not result.reactions.complete and len(result.reactions.frozen) == 1
    assert eq.confirmed, [f.message for f in eq.findings]
    gas = {p.name: p for p in eq.phases}["gas"]
    x = dict(gas.mole_fractions)
    assert x["CH4"] * gas.moles == pytest.approx(0.1, rel=1e-9)
    assert eq.element_balance_error < 1e-9


SPECIES_WITHOUT_ITS_ELEMENT = """\
system:
  source: packaged
  phases:
    gas: [CH4, H2O, CO, CO2, H2, HCL]
feed: {CH4: 1, H2O: 2}
specified: {temperature: 900 K, pressure: 10 bar}
"""


def test_species_whose_element_is_not_fed_is_left_out_of_the_count(tmp_path):
    # HCL needs chlorine, which the feed lacks: x(HCL) is identically zero, so HCL is not a
    # phase-species of the equilibrium state.  Counting it would add N + 1 and a restriction
    # x(HCL) = 0 (same F) and make the Jacobian singular; the Duhem count (F = 2 for a single
    # phase with a known feed, theorem) must hold either way.
    result = audit_file(write(tmp_path, SPECIES_WITHOUT_ITS_ELEMENT))
    pr = result.phase_rule
    assert pr.excluded == ("HCL",)
    assert (pr.n_species, pr.independent_reactions, pr.restrictions, pr.degrees_of_freedom) == (5, 2, 2, 2)
    assert result.verdict == "well-posed" and result.equilibrium.confirmed
    assert result.equilibrium.nonsingularity_test.startswith("proof")


def test_assumed_phase_that_cannot_exist_is_inconsistent(tmp_path):
    text = LIME_WITHOUT_CALCIUM.replace("coexisting: [gas]", "coexisting: [gas, lime]")
    result = audit_file(write(tmp_path, text))
    assert result.phase_rule.empty_phases == ("lime",)
    assert result.verdict == "inconsistent"
    assert any("phase lime is assumed to coexist" in f.message for f in result.findings)


HEXANE_FLAME = """\
title: large mechanism, lean hexane products
system:
  mechanism: n-hexane-NUIG-2015.yaml
reactions: from-mechanism
feed: {NC6H14: 1, O2: 9.5, N2: 35.7}
specified: {pressure: 1 atm, temperature: 1500 K}
"""


def test_largest_shipped_mechanism_through_the_whole_audit(tmp_path):
    # 1268 species, 5336 reactions.  He and Ar are not fed, so those two species are left
    # out (N = 1266); rank of the reactions 1262 = N - rank A over C, H, N, O (formula-matrix
    # theorem, Smith & Missen 1982); one gas phase with a known feed has F = 2 (Duhem).
    result = audit_file(write(tmp_path, HEXANE_FLAME))
    pr = result.phase_rule
    assert sorted(pr.excluded) == ["AR", "HE"]
    assert (pr.n_species, pr.independent_reactions, pr.degrees_of_freedom) == (1266, 1262, 2)
    assert result.verdict == "well-posed" and result.equilibrium.confirmed
    assert result.equilibrium.element_balance_error < 1e-9
