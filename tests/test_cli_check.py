"""The ``check`` command as outside checks use it (design §4): exit statuses, the JSON
document, several cases at once, bad input, and ``--help``.

Most tests call ``auditor.cli.main([...])`` in this process with capsys; a few run the
real ``python -m auditor`` in a subprocess, where a traceback or the exit status of the
interpreter itself is what matters.  ``--no-confirm`` is used wherever the Gibbs
minimisation is not the point.  Sources of expected values: "design §4" (the contract),
the demo case's header comment, or "by hand".
"""
from __future__ import annotations

import argparse
import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from auditor.cli import main
from auditor.cli_parser import build_parser

REPO = Path(__file__).resolve().parents[1]
CASES_DIR = REPO / "cases"
DESIGN = CASES_DIR / "reformer_design_point.yaml"             # well-posed (header comment)
AMMONIA = CASES_DIR / "ammonia_converter_ratio.yaml"          # well-posed
LIME = CASES_DIR / "lime_kiln_overspecified.yaml"             # over-specified
SALT = CASES_DIR / "salt_vessel_underspecified.yaml"          # under-specified
METHANOL = CASES_DIR / "methanol_loop_inconsistent.yaml"      # inconsistent: unbalanced + dependent reactions
VERDICTS = {"well-posed", "under-specified", "over-specified", "inconsistent", "not-confirmed"}   # design §4
FRACTION = re.compile(r"^-?\d+(/\d+)?$")                       # design §4: coefficient "p/q"


def cli(capsys, *args) -> tuple[int, str, str]:
    capsys.readouterr()
    rc = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return rc, out, err


def run_module(*args, timeout: float = 120) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    env.pop("FORCE_COLOR", None)
    return subprocess.run([sys.executable, "-m", "auditor", *map(str, args)], capture_output=True, text=True,
                          cwd=REPO, env=env, timeout=timeout)


# ------------------------------------------------------------------ default case

@pytest.fixture(scope="module")
def default_json() -> tuple[int, dict, str]:
    """The real CLI with no CASE, confirmation included (one subprocess for the module)."""
    proc = run_module("check", "--json")
    return proc.returncode, json.loads(proc.stdout), proc.stderr


def test_check_without_case_audits_packaged_default(default_json):
    rc, doc, err = default_json
    assert rc == 0                                                      # design §4: well posed, claims hold
    assert doc["verdict"] == "well-posed"                               # its header comment
    assert doc["case"].endswith(os.path.join("auditor", "data", "default_case.yaml"))
    assert "Traceback" not in err
    assert all(c["held"] is True for c in doc["claims"])


def test_check_without_case_in_process(capsys):
    rc, out, err = cli(capsys, "check", "--no-confirm")
    assert rc == 0
    assert "Verdict: WELL-POSED" in out
    assert err == ""


def test_default_equilibrium_block(default_json):
    _, doc, _ = default_json
    eq = doc["equilibrium"]
    assert set(eq) >= {"converged", "temperature_K", "pressure_Pa", "phases_present", "phases", "max_affinity_RT",
                       "element_balance_error", "unique"}                 # design §4
    assert eq["converged"] is True and eq["unique"] is True
    assert eq["temperature_K"] == pytest.approx(1123.15)                  # 850 degC (BIPM: +273.15)
    assert eq["pressure_Pa"] == pytest.approx(25e5)                       # 25 bar
    assert eq["phases_present"] == ["gas"]
    atoms = {"CH4": {"C": 1, "H": 4}, "H2O": {"H": 2, "O": 1}, "CO": {"C": 1, "O": 1}, "CO2": {"C": 1, "O": 2},
             "H2": {"H": 2}, "N2": {"N": 2}, "C(gr)": {"C": 1}}
    elements_found = {}
    for phase in eq["phases"]:
        assert set(phase) >= {"name", "moles", "mole_fractions"}
        if phase["moles"] > 0:
            assert sum(phase["mole_fractions"].values()) == pytest.approx(1.0)
        for sp, x in phase["mole_fractions"].items():
            for e, a in atoms[sp].items():
                elements_found[e] = elements_found.get(e, 0.0) + a * x * phase["moles"]
    # by hand from the feed {CH4: 1, H2O: 3, N2: 0.02} mol
    assert elements_found == pytest.approx({"C": 1.0, "H": 10.0, "O": 3.0, "N": 0.04}, rel=1e-8)
    assert eq["max_affinity_RT"] <= 1e-6                                  # settings.AFFINITY_TOLERANCE_RT


# ------------------------------------------------------------------ the JSON document

def check_document_shape(doc: dict) -> None:
    """Every key of design §4 with its type."""
    assert doc["schema"] == 1
    assert doc["verdict"] in VERDICTS
    pr = doc["phase_rule"]
    for key in ("species", "phases", "independent_reactions", "restrictions", "degrees_of_freedom"):
        assert isinstance(pr[key], int) and not isinstance(pr[key], bool)
    rx = doc["reactions"]
    assert isinstance(rx["rank"], int)
    assert isinstance(rx["complete"], bool)
    assert all(isinstance(e, str) for e in rx["independent"])
    for dep in rx["dependent"]:
        assert isinstance(dep["equation"], str)
        for term in dep["combination"]:
            assert set(term) >= {"equation", "coefficient"}
            assert FRACTION.match(term["coefficient"])
    for unb in rx["unbalanced"]:
        assert isinstance(unb["equation"], str)
        assert all(FRACTION.match(v) for v in unb["imbalance"].values())
    spec = doc["specification"]
    assert isinstance(spec["intensive"], int) and isinstance(spec["extensive"], int)
    assert all(isinstance(x, str) for x in spec["free"] + spec["conflicting"])
    assert doc["equilibrium"] is None or isinstance(doc["equilibrium"], dict)
    for f in doc["findings"]:
        assert f["severity"] in ("error", "warning", "note")
        assert isinstance(f["topic"], str) and isinstance(f["message"], str)


def test_json_has_every_contract_key(capsys):
    rc, out, _ = cli(capsys, "check", METHANOL, "--json", "--no-confirm")
    doc = json.loads(out)
    check_document_shape(doc)
    assert rc == 1
    assert doc["verdict"] == "inconsistent"                              # its header comment
    assert doc["equilibrium"] is None                                    # --no-confirm
    assert {k: doc["phase_rule"][k] for k in ("species", "phases")} == {"species": 6, "phases": 1}   # by hand
    # by hand: CO + H2O -> CO2 + H2 is (CO + 2 H2 -> CH3OH) - (CO2 + 3 H2 -> CH3OH + H2O)
    assert doc["reactions"]["dependent"] == [{
        "equation": "CO + H2O <=> CO2 + H2",
        "combination": [{"equation": "CO + 2 H2 <=> CH3OH", "coefficient": "1"},
                        {"equation": "CO2 + 3 H2 <=> CH3OH + H2O", "coefficient": "-1"}]}]
    # by hand: CH4 + H2 - CO - 3 H2 leaves one O short on the right
    assert doc["reactions"]["unbalanced"] == [{"equation": "CO + 3 H2 <=> CH4 + H2", "imbalance": {"O": "-1"}}]
    assert doc["reactions"]["complete"] is False


def test_json_fractional_coefficient(capsys, tmp_path):
    path = tmp_path / "half.yaml"
    path.write_text("system:\n  source: packaged\n  phases:\n    gas: [N2, H2, NH3]\nreactions:\n"
                    "  - N2 + 3 H2 <=> 2 NH3\n  - 1/2 N2 + 3/2 H2 <=> NH3\nfeed: {N2: 1, H2: 3}\n"
                    "specified: {temperature: 700 K, pressure: 150 bar}\n")
    rc, out, _ = cli(capsys, "check", path, "--json", "--no-confirm")
    doc = json.loads(out)
    check_document_shape(doc)
    assert rc == 0
    assert doc["reactions"]["dependent"] == [{"equation": "1/2 N2 + 3/2 H2 <=> NH3", "combination": [
        {"equation": "N2 + 3 H2 <=> 2 NH3", "coefficient": "1/2"}]}]      # by hand: exactly half


def test_json_over_specified_names_conflicts(capsys):
    rc, out, _ = cli(capsys, "check", LIME, "--json", "--no-confirm")
    doc = json.loads(out)
    check_document_shape(doc)
    assert (rc, doc["verdict"]) == (1, "over-specified")                 # header comment
    assert doc["specification"]["conflicting"] == ["temperature", "pressure"]
    assert (doc["specification"]["intensive"], doc["specification"]["extensive"]) == (2, 0)
    assert doc["phase_rule"]["degrees_of_freedom"] == 1                  # header comment: F = 1


def test_several_cases_give_a_list_and_the_worst_status(capsys):
    rc, out, err = cli(capsys, "check", DESIGN, AMMONIA, LIME, "--json", "--no-confirm")
    docs = json.loads(out)
    assert isinstance(docs, list) and len(docs) == 3
    for doc in docs:
        check_document_shape(doc)
    assert [d["verdict"] for d in docs] == ["well-posed", "well-posed", "over-specified"]
    assert [Path(d["case"]).name for d in docs] == [DESIGN.name, AMMONIA.name, LIME.name]
    assert rc == 1 and err == ""


def test_several_good_cases_exit_zero(capsys):
    rc, out, _ = cli(capsys, "check", DESIGN, AMMONIA, "--no-confirm")
    assert rc == 0
    lines_found = out.splitlines()
    assert len(lines_found) == 2 and lines_found[0].startswith("well-posed") and str(DESIGN) in lines_found[0]


# ------------------------------------------------------------------ exit statuses

EXIT = {
    # case: exit status (design §4)
    "well-posed": (DESIGN, 0),
    "over-specified": (LIME, 1),
    "under-specified": (SALT, 1),
    "inconsistent": (METHANOL, 1),
    "invalid": (None, 2),
}


@pytest.mark.parametrize("case,status", list(EXIT.values()), ids=list(EXIT))
def test_exit_status(capsys, tmp_path, case, status):
    if case is None:
        case = tmp_path / "bad.yaml"
        case.write_text("system:\n  source: packaged\n  phases:\n    gas: [CH4, HCl]\n")
    rc, out, err = cli(capsys, "check", case, "--no-confirm")
    assert rc == status
    if status == 2:
        assert err.startswith(f"auditor: error: {case}:4: system.phases.gas[1]: unknown species 'HCl'")  # by hand
        assert out == ""


def test_refuted_claim_exits_one(capsys, tmp_path):
    path = tmp_path / "claim.yaml"
    path.write_text(DESIGN.read_text().replace("degrees-of-freedom: 2", "degrees-of-freedom: 3"))
    rc, out, _ = cli(capsys, "check", path, "--json", "--no-confirm")
    doc = json.loads(out)
    assert rc == 1
    assert {"claim": "degrees-of-freedom", "claimed": 3, "found": 2, "held": False} in doc["claims"]


# ------------------------------------------------------------------ bad input

def bad_files(tmp_path: Path) -> dict[str, Path]:
    files = {
        "missing": tmp_path / "missing.yaml",
        "directory": tmp_path / "adir.yaml",
        "binary": tmp_path / "binary.yaml",
        "not-utf8": tmp_path / "latin1.yaml",
        "empty": tmp_path / "empty.yaml",
        "yaml-syntax": tmp_path / "syntax.yaml",
        "not-a-mapping": tmp_path / "list.yaml",
        "unknown-species": tmp_path / "species.yaml",
        "bad-unit": tmp_path / "unit.yaml",
        "alias-bomb": tmp_path / "bomb.yaml",
    }
    files["directory"].mkdir()
    files["binary"].write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00")
    files["not-utf8"].write_bytes(b"title: caf\xe9\n")
    files["empty"].write_text("")
    files["yaml-syntax"].write_text("system: [a\n")
    files["not-a-mapping"].write_text("- 1\n- 2\n")
    files["unknown-species"].write_text("system:\n  source: packaged\n  phases:\n    gas: [CH4, HCl]\n")
    files["bad-unit"].write_text("system:\n  source: packaged\n  phases:\n    gas: [CH4]\nfeed: {CH4: 1 bar}\n")
    bomb = ["a0: &a0 [lol, lol, lol, lol, lol, lol, lol, lol, lol]"]
    bomb += [f"a{i}: &a{i} [{', '.join([f'*a{i - 1}'] * 9)}]" for i in range(1, 10)]
    files["alias-bomb"].write_text("system:\n  source: packaged\n  phases:\n    gas: [CH4]\n"
                                   + "\n".join(bomb) + "\nreactions: *a9\n")
    return files


BAD = ("missing", "directory", "binary", "not-utf8", "empty", "yaml-syntax", "not-a-mapping", "unknown-species",
       "bad-unit", "alias-bomb")


@pytest.mark.parametrize("which", BAD)
def test_bad_input_exits_two_with_one_clear_message(capsys, tmp_path, which):
    path = bad_files(tmp_path)[which]
    rc, out, err = cli(capsys, "check", path, "--no-confirm")
    assert rc == 2                                                       # design §4
    assert err.startswith(f"auditor: error: {path}")                    # names the file
    assert "Traceback" not in err and "internal error" not in err
    assert out == ""


def test_bad_input_with_json_prints_no_document(capsys, tmp_path):
    path = bad_files(tmp_path)["bad-unit"]
    rc, out, err = cli(capsys, "check", path, "--json", "--no-confirm")
    assert (rc, out) == (2, "")                                          # design §4: the message goes to stderr
    assert err == (f"auditor: error: {path}:5:13: feed.CH4: unit 'bar' is not a unit of amount or mass "
                   "(expected e.g. '2 kmol', '10 kg' or 1.5 (mol))\n")               # by hand: line 5, column 13


def test_bad_inputs_in_a_real_process_have_no_traceback(tmp_path):
    files = bad_files(tmp_path)
    proc = run_module("check", *[files[k] for k in BAD], DESIGN, "--no-confirm")
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    for k in BAD:
        assert f"auditor: error: {files[k]}" in proc.stderr               # every file reported
    (line_found,) = proc.stdout.splitlines()                             # the good one still audited
    assert line_found.split()[0] == "well-posed" and f" {DESIGN}: " in line_found     # then why, in words


def test_bad_file_among_good_ones(capsys, tmp_path):
    bad = bad_files(tmp_path)["unknown-species"]
    rc, out, err = cli(capsys, "check", DESIGN, bad, LIME, "--no-confirm")
    assert rc == 2                                                       # design §4: worst status
    assert [line.split()[0] for line in out.splitlines()] == ["well-posed", "over-specified"]
    assert str(DESIGN) in out and str(LIME) in out
    assert err.count("auditor: error:") == 1 and str(bad) in err


def test_bad_file_among_good_ones_json(capsys, tmp_path):
    bad = bad_files(tmp_path)["yaml-syntax"]
    rc, out, err = cli(capsys, "check", DESIGN, bad, LIME, "--json", "--no-confirm")
    docs = json.loads(out)
    assert rc == 2
    assert [Path(d["case"]).name for d in docs] == [DESIGN.name, LIME.name]
    # by hand: the parser finds the unclosed '[' of line 1 at the end of the stream (line 2); the
    # message points at the '[' itself, line 1 column 9
    assert (f"auditor: error: {bad}:1:9: system: YAML syntax error: the '[' opened here is not closed: end it with "
            "']' on this line (the YAML parser says: expected ',' or ']', but got '<stream end>')") in err


def test_deeply_nested_file_among_good_ones(capsys, tmp_path):
    deep = tmp_path / "deep.yaml"
    deep.write_text("title: " + "{a: " * 3000 + "1" + "}" * 3000 + "\n")
    rc, out, err = cli(capsys, "check", deep, DESIGN, "--no-confirm")
    assert rc == 2
    assert "internal error" not in err
    assert str(DESIGN) in out


def test_unknown_mechanism_phase_names_the_case_file(capsys, tmp_path):
    import cantera as ct
    mech = next(Path(d) / "h2o2.yaml" for d in ct.get_data_directories() if (Path(d) / "h2o2.yaml").is_file())
    case = tmp_path / "mech_case.yaml"
    case.write_text(f"system:\n  mechanism: {mech}\n  phases: [gaz]\n")
    rc, _, err = cli(capsys, "check", case, "--no-confirm")
    assert rc == 2
    assert err.startswith(f"auditor: error: {case}:3:")                  # by hand: the phases line


# ------------------------------------------------------------------ help

def subcommands() -> list[str]:
    parser = build_parser()
    actions = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    return sorted(actions[0].choices)


@pytest.mark.parametrize("command", subcommands())
def test_help_of_every_command_has_an_example(capsys, command):
    with pytest.raises(SystemExit) as info:
        main([command, "--help"])
    out = capsys.readouterr().out
    assert info.value.code == 0
    assert re.search(r"^examples?:$", out, re.MULTILINE)
    assert re.search(rf"^\s+auditor {command}\b", out, re.MULTILINE)       # the example runs this command


def test_check_help_in_a_real_process():
    proc = run_module("check", "--help")
    assert proc.returncode == 0
    assert "examples:" in proc.stdout and "auditor check cases/*.yaml" in proc.stdout
    assert "exit status: 0" in proc.stdout
