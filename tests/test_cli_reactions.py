"""Tests for ``auditor reactions`` (design §4): JSON contract, phase selection, exit codes.

The CLI runs both as a real subprocess (``python -m auditor``) and in-process through
``auditor.cli.main`` with pytest's capsys.  Expected values for gri30 are computed here
from cantera's own matrices with sympy (exact) rather than copied from the tool.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import cantera as ct
import numpy as np
import pytest
from sympy import QQ
from sympy.polys.matrices import DomainMatrix

import auditor.system
from auditor import stoichiometry, system
from auditor.cli import main

from isomers import isomer_mechanism

REPO = Path(__file__).resolve().parents[1]
DATA = Path(ct.get_data_directories()[-1])
GRI30 = DATA / "gri30.yaml"
YZA = DATA / "example_data" / "YZA.yaml"

REACTIONS_KEYS = {"species", "reactions", "formula_rank", "rank", "max_independent", "independent",
                  "dependent", "unbalanced", "complete"}  # design §4, JSON of `reactions --json`
COEFFICIENT = re.compile(r"^-?\d+(/\d+)?$")  # design §4: "p/q" (or "p" when whole)


def run_cli(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.run([sys.executable, "-m", "auditor", *args], capture_output=True, text=True,
                          cwd=cwd or REPO, env=env, timeout=300)


# ------------------------------------------------------------------ reference values for gri30

def _exact(x: float) -> Fraction:
    f = Fraction(x).limit_denominator(1000)
    assert float(f) == pytest.approx(x, abs=1e-12)
    return f


@pytest.fixture(scope="module")
def gri30_reference():
    """Counts, ranks and the earliest independent reactions of gri30, from cantera + sympy."""
    gas = ct.Solution(str(GRI30), transport_model=None)
    n, r = gas.n_species, gas.n_reactions
    A = [[_exact(gas.n_atoms(k, e)) for k in range(n)] for e in gas.element_names]
    net = np.asarray(gas.product_stoich_coeffs - gas.reactant_stoich_coeffs)
    nu = [[_exact(net[k, j]) for k in range(n)] for j in range(r)]
    dmA = DomainMatrix([[QQ(x.numerator, x.denominator) for x in row] for row in A], (len(A), n), QQ)
    dmT = DomainMatrix([[QQ(nu[j][k].numerator, nu[j][k].denominator) for j in range(r)] for k in range(n)],
                       (n, r), QQ)
    _, pivots = dmT.rref()  # pivot columns of nu^T = earliest independent reactions (theorem)
    return {"species": n, "reactions": r, "formula_rank": dmA.rank(), "rank": len(pivots),
            "independent": list(pivots), "nu": nu, "elements": gas.element_names}


def check_gri30_document(doc: dict, ref: dict):
    assert REACTIONS_KEYS <= set(doc)
    assert doc["species"] == ref["species"] == 53           # gri30: 53 species (cantera)
    assert doc["reactions"] == ref["reactions"] == 325       # gri30: 325 reactions (cantera)
    assert ref["elements"] == ["O", "H", "C", "N", "Ar"]
    assert doc["formula_rank"] == ref["formula_rank"] == 5   # five independent element rows (sympy)
    assert doc["rank"] == ref["rank"] == 48                  # sympy rank of nu
    assert doc["max_independent"] == doc["species"] - doc["formula_rank"] == 48  # theorem N - rank A
    assert doc["complete"] is True
    assert doc["unbalanced"] == []
    assert doc["independent"] == ref["independent"]
    dependent = {d["index"]: d["combination"] for d in doc["dependent"]}
    assert sorted(dependent) == sorted(set(range(ref["reactions"])) - set(ref["independent"]))
    nu = ref["nu"]
    for i, combo in dependent.items():
        recomposed = [Fraction(0)] * ref["species"]
        for term in combo:
            assert set(term) == {"index", "coefficient"}
            assert COEFFICIENT.match(term["coefficient"]), term
            assert term["index"] in ref["independent"] and term["index"] < i
            c = Fraction(term["coefficient"])
            recomposed = [x + c * y for x, y in zip(recomposed, nu[term["index"]])]
        assert recomposed == nu[i], i


def test_gri30_json_subprocess(gri30_reference):
    proc = run_cli("reactions", "gri30.yaml", "--json")
    assert proc.returncode == 0, proc.stderr
    assert proc.stderr == ""
    check_gri30_document(json.loads(proc.stdout), gri30_reference)


def test_gri30_json_in_process(gri30_reference, capsys):
    rc = main(["reactions", str(GRI30), "--json"])
    out, err = capsys.readouterr()
    assert rc == 0
    assert err == ""
    doc = json.loads(out)
    check_gri30_document(doc, gri30_reference)
    # additive fields stay consistent with the contract fields
    assert len(doc["derived_complete_set"]) == doc["max_independent"]
    assert len(doc["conserved_quantities"]) == doc["species"] - doc["rank"]
    assert len(doc["equations"]) == doc["reactions"]
    for g in doc["duplicates"]:
        for m in g["members"]:
            assert COEFFICIENT.match(m["factor"])


def test_gri30_text_subprocess():
    proc = run_cli("reactions", "gri30.yaml", "--limit", "3")
    assert proc.returncode == 0, proc.stderr
    out = proc.stdout
    assert re.search(r"phase-species \(N\)\s+53\n", out)
    assert re.search(r"reactions listed\s+325\n", out)
    assert re.search(r"formula-matrix rank \(rank A\)\s+5\n", out)
    assert re.search(r"rank of the reactions \(m\)\s+48\n", out)
    assert "Verdict on the list: complete" in out
    assert "... and 45 more (use --json for all)" in out  # 48 independent, 3 shown


# ------------------------------------------------------------------ phase selection

@pytest.mark.parametrize("phases", [["gas"], ["Pt_surf"], ["Pt_surf", "gas"]], ids="+".join)
def test_phase_selection(phases, capsys):
    path = DATA / "ptcombust.yaml"
    argv = ["reactions", str(path), "--json"]
    for p in phases:
        argv += ["--phase", p]
    rc = main(argv)
    out, err = capsys.readouterr()
    assert rc == 0 and err == ""
    doc = json.loads(out)
    gas = ct.Solution(str(path), "gas", transport_model=None)
    surf = ct.Interface(str(path), "Pt_surf")
    if phases == ["gas"]:
        n, r = gas.n_species, gas.n_reactions                       # 32 and 186 (cantera)
    elif phases == ["Pt_surf"]:  # the adjacent gas is loaded for its species, not its reactions
        n, r = surf.n_species + gas.n_species, surf.n_reactions     # 11 + 32 and 24 (cantera)
    else:
        n, r = surf.n_species + gas.n_species, surf.n_reactions + gas.n_reactions
    assert (doc["species"], doc["reactions"]) == (n, r)
    # independent check of the rank with the tool's own parse of the same selection
    s = system.from_mechanism(path, phases)
    rows = {i: {k: QQ(Fraction(c).numerator, Fraction(c).denominator) for k, c in rx.stoich}
            for i, rx in enumerate(s.reactions)}
    assert doc["rank"] == DomainMatrix(rows, (len(rows), n), QQ).rank()
    assert doc["complete"] == (doc["rank"] == doc["max_independent"])


# ------------------------------------------------------------------ small mechanisms written here

def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_fractional_mechanism_coefficients_are_exact(tmp_path, capsys):
    path = write(tmp_path, "half.yaml", isomer_mechanism("A + 0.5 B => 1.5 C"))
    ct.Solution(str(path))  # cantera accepts it
    rc = main(["reactions", str(path), "--json"])
    out, err = capsys.readouterr()
    assert rc == 0 and err == ""
    doc = json.loads(out)
    # N = 3 isomers, one element row: rank A = 1, N - rank A = 2, one reaction listed (by hand)
    assert {k: doc[k] for k in ("species", "reactions", "formula_rank", "rank", "max_independent",
                                "independent", "dependent", "unbalanced", "complete")} == {
        "species": 3, "reactions": 1, "formula_rank": 1, "rank": 1, "max_independent": 2,
        "independent": [0], "dependent": [], "unbalanced": [], "complete": False}
    assert len(doc["frozen_directions"]) == 1
    s = system.from_mechanism(path)
    assert s.reactions[0].stoich == ((0, -1), (1, Fraction(-1, 2)), (2, Fraction(3, 2)))  # exact


def test_unbalanced_reaction_exits_1(monkeypatch, capsys):
    """Cantera refuses unbalanced reactions in a file, so the exit-1 path is reached by
    handing the CLI a system whose mechanism reaction does not balance."""
    base = system.from_packaged({"gas": ["CH4", "H2O", "CO", "CO2", "H2"]})
    bad = stoichiometry.parse_equation("CH4 + H2O => CO + 2 H2", base)
    good = stoichiometry.parse_equation("CO + H2O <=> CO2 + H2", base)
    fake = auditor.system.ChemicalSystem(
        "fake.yaml", base.phases, base.species, base.elements, base.formula_matrix,
        (auditor.system.MechanismReaction(bad.equation, bad.stoich, "gas"),
         auditor.system.MechanismReaction(good.equation, good.stoich, "gas")))
    monkeypatch.setattr(auditor.system, "from_mechanism", lambda path, phases=None: fake)
    rc = main(["reactions", "fake.yaml", "--json"])
    out, err = capsys.readouterr()
    assert rc == 1  # design §4: an audit finds a problem
    doc = json.loads(out)
    assert doc["unbalanced"] == [0]
    assert doc["imbalance"] == [{"index": 0, "number": 1, "imbalance": {"H": "-2"}}]  # by hand: 4 H vs 6 H
    assert doc["unbalanced_numbers"] == [1]
    assert doc["complete"] is False


# ------------------------------------------------------------------ bad input: exit 2, one message

def assert_one_clean_error(rc: int, out: str, err: str, *fragments: str):
    assert rc == 2
    assert out == ""
    assert "Traceback" not in err
    assert err.startswith("auditor: error: ")
    assert err.endswith("\n") and err.count("\n") == 1, err  # one message, one line
    for f in fragments:
        assert f in err, (f, err)


def _bad_inputs(tmp_path: Path) -> dict[str, tuple[list[str], tuple[str, ...]]]:
    """name -> (argv after 'reactions', fragments the message must hold)."""
    missing = tmp_path / "nothere.yaml"
    nophases = write(tmp_path, "nophases.yaml", "description: only text\nspecies: []\n")
    empty = write(tmp_path, "empty.yaml", "")
    bad_species = write(tmp_path, "badspecies.yaml",
                        isomer_mechanism("A => B").replace("composition: {H: 2}", "composition: {H: 2", 1))
    nonrational = write(tmp_path, "nonrational.yaml", isomer_mechanism("A + 0.3183 B => 1.3183 C"))
    unbalanced = write(tmp_path, "unbalanced.yaml", isomer_mechanism("A + B => C"))
    return {
        "missing file": ([str(missing)], (f"{missing}: mechanism file not found",)),
        "no phases": ([str(nophases)],
                      (f"{nophases}: no top-level 'phases:' section: not a Cantera-format mechanism",)),
        "empty file": ([str(empty)], (f"{empty}: no top-level 'phases:' section",)),
        "malformed species yaml": ([str(bad_species)],
                                   (f"{bad_species}: phases[gas]: cantera cannot build phase 'gas'",
                                    "line 13", "end of map flow not found")),
        "unknown phase": ([str(GRI30), "--phase", "gri"],
                          (f"{GRI30}: phases: unknown phase 'gri' in gri30.yaml; closest names: gri30",)),
        "unknown phase, small file": ([str(nonrational), "--phase", "gaz"],
                                      ("unknown phase 'gaz' in nonrational.yaml; closest names: gas",)),
        "non-rational coefficient": ([str(nonrational)], (
            f"{nonrational}: phases[gas].reactions: stoichiometric coefficient -0.3183 of B in reaction "
            "'A + 0.3183 B => 1.3183 C' is not within 1e-09 of a fraction with denominator <= 1000",)),
        # cantera refuses an unbalanced reaction itself; its message is passed on
        "unbalanced reaction": ([str(unbalanced)], (
            f"{unbalanced}: phases[gas]: cantera cannot build phase 'gas'",
            "The following reaction is unbalanced: A + B => C")),
    }


BAD_INPUT_NAMES = ["missing file", "no phases", "empty file", "malformed species yaml", "unknown phase",
                   "unknown phase, small file", "non-rational coefficient", "unbalanced reaction"]


@pytest.mark.parametrize("name", BAD_INPUT_NAMES)
def test_bad_input_in_process(name, tmp_path, capsys):
    argv, fragments = _bad_inputs(tmp_path)[name]
    rc = main(["reactions", *argv])
    out, err = capsys.readouterr()
    assert_one_clean_error(rc, out, err, *fragments)


@pytest.mark.parametrize("name", ["missing file", "non-rational coefficient"])
def test_bad_input_subprocess(name, tmp_path):
    argv, fragments = _bad_inputs(tmp_path)[name]
    proc = run_cli("reactions", *argv)
    assert_one_clean_error(proc.returncode, proc.stdout, proc.stderr, *fragments)


def test_non_rational_coefficient_is_really_accepted_by_cantera(tmp_path):
    # guard for the case above: the tool, not cantera, must be the one refusing
    path = write(tmp_path, "nonrational.yaml", isomer_mechanism("A + 0.3183 B => 1.3183 C"))
    gas = ct.Solution(str(path))
    assert gas.reactant_stoich_coeff("B", 0) == pytest.approx(0.3183)


MALFORMED_PHASES = "description: test\nunits: {length: cm}\n\n\nphases:\n- name: gas\n  thermo: [ideal-gas\n  species: [A]\n"


def test_malformed_phases_section(tmp_path, capsys):
    # found by this test: the YAML error came out on several lines, with line numbers
    # counted from the cut-out 'phases:' block ("<unicode string>", line 3) (fixed)
    path = write(tmp_path, "malformed.yaml", MALFORMED_PHASES)
    rc = main(["reactions", str(path)])
    out, err = capsys.readouterr()
    assert_one_clean_error(rc, out, err)
    assert "<unicode string>" not in err
    # by hand: the '[' opened on line 7 is found unclosed at the ':' of line 8 of the file
    assert err == f"auditor: error: {path}:8: phases: malformed 'phases:' section: expected ',' or ']', but got ':'\n"


def test_non_rational_composition_is_an_input_error_naming_the_file(capsys):
    # found by this test: the file was missing from the message ("auditor: error: : species YZA") (fixed)
    rc = main(["reactions", str(YZA)])
    out, err = capsys.readouterr()
    assert_one_clean_error(rc, out, err)
    assert err == (f"auditor: error: {YZA}: species: species YZA: element amount 0.7353222707095146 of Al is "
                   "not within 1e-09 of a fraction with denominator <= 1000\n")


def test_no_command_prints_help_and_exits_2(capsys):
    assert main([]) == 2
    assert "reactions" in capsys.readouterr().out


def test_bare_name_is_found_among_cantera_data(capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # no gri30.yaml here: the CLI looks in cantera's data directories
    rc = main(["reactions", "h2o2.yaml", "--json"])
    out, err = capsys.readouterr()
    assert rc == 0 and err == ""
    ohmech = ct.Solution("h2o2.yaml", "ohmech", transport_model=None)
    doc = json.loads(out)
    # ohmech-RK is the same mixture under another model: the first phase of the file is used
    assert doc["species"] == ohmech.n_species
    assert doc["other_phases"] == [{"name": "ohmech-RK", "alternative_of": "ohmech"}]


def test_json_is_compact_off_a_terminal_and_indented_with_pretty():
    # stdout of a subprocess is a pipe, not a terminal: one compact line
    compact = run_cli("reactions", str(GRI30), "--json")
    assert compact.returncode == 0
    assert compact.stdout.count("\n") == 1 and ", " not in compact.stdout[:200]
    pretty = run_cli("reactions", str(GRI30), "--json", "--pretty")
    assert pretty.stdout.startswith('{\n "species": 53,\n')
    assert json.loads(compact.stdout) == json.loads(pretty.stdout)


def test_reaction_numbers_shown_to_people_start_at_1(capsys):
    # gri30's first reaction, '2 O + M <=> O2 + M', is #1 in text; JSON keeps index 0 and adds numbers
    assert main(["reactions", str(GRI30), "--limit", "2"]) == 0
    out = capsys.readouterr().out
    assert "  #1: 2 O + M <=> O2 + M\n" in out
    rc = main(["reactions", str(GRI30), "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert doc["independent"][0] == 0 and doc["independent_numbers"][0] == 1
    assert doc["independent_numbers"] == [i + 1 for i in doc["independent"]]
    assert doc["dependent_numbers"] == [d["index"] + 1 for d in doc["dependent"]]
    assert doc["unbalanced_numbers"] == []
