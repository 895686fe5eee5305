"""Smaller commands and output conventions of the CLI: ``species``, ``new``, ``--help``,
colour (NO_COLOR, https://no-color.org, and non-terminal output), ``--quiet`` and
several cases at once.

Runs the real CLI in this process (``auditor.cli.main`` with capsys), and as a real
``python -m auditor`` subprocess where a terminal or a pipe matters.
"""
from __future__ import annotations

import io
import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from auditor.cli import main

from clitools import on_terminal

REPO = Path(__file__).resolve().parents[1]
CASES_DIR = REPO / "cases"
ALL_CASES = sorted(CASES_DIR.glob("*.yaml"))
DESIGN = CASES_DIR / "reformer_design_point.yaml"          # well-posed, exit 0
AMMONIA = CASES_DIR / "ammonia_converter_ratio.yaml"       # well-posed, exit 0
LIME = CASES_DIR / "lime_kiln_overspecified.yaml"          # over-specified, exit 1
CARBON = CASES_DIR / "reformer_carbon_risk.yaml"           # not-confirmed, exit 1; has [error]/[warning] findings
ANSI = re.compile(r"\x1b\[[0-9;]*[A-Za-z]")
VERDICTS = ("well-posed", "under-specified", "over-specified", "inconsistent", "not-confirmed")
SUBCOMMANDS = ("check", "sweep", "new", "species", "reactions")


def cli(capsys, *args) -> tuple[int, str, str]:
    capsys.readouterr()
    rc = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return rc, out, err


def subprocess_env(**extra) -> dict:
    env = {k: v for k, v in os.environ.items() if k not in ("NO_COLOR", "FORCE_COLOR")}
    env["PYTHONPATH"] = str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", "")
    env.update(extra)
    return env


# ------------------------------------------------------------------ species

SPECIES_HITS = {
    # query: (a name that must be found, its kind, its formula)
    "CaCO3": ("CaCO3(caL)", "condensed", "CCaO3"),
    "CH4O": ("CH3OH", "gas", "CH4O"),                       # a formula finds the species by composition
    "methanol-formula-order": ("CH3OH", "gas", "CH4O"),     # any element order in the query
    "name-any-case": ("CH3OH", "gas", "CH4O"),
}
QUERY = {"methanol-formula-order": "OCH4", "name-any-case": "ch3oh"}


@pytest.mark.parametrize("name", list(SPECIES_HITS))
def test_species_search_finds(capsys, name):
    query = QUERY.get(name, name)
    want, kind, formula = SPECIES_HITS[name]
    rc, out, _ = cli(capsys, "species", query, "--json")
    hits = json.loads(out)
    assert rc == 0
    hit = next(h for h in hits if h["name"] == want)
    assert (hit["kind"], hit["formula"]) == (kind, formula)
    assert hit["t_min"] < hit["t_max"]
    rc, out, _ = cli(capsys, "species", query)
    assert rc == 0
    lines = out.splitlines()
    assert lines[0].split()[:4] == ["name", "kind", "formula", "charge"]
    assert any(ln.split()[:3] == [want, kind, formula] for ln in lines[1:])


@pytest.mark.parametrize("as_json", [False, True], ids=["text", "json"])
def test_species_unknown_query_exits_1(capsys, as_json):
    rc, out, err = cli(capsys, "species", "Zz9NoSuchSpecies", *(["--json"] if as_json else []))
    assert rc == 1
    if as_json:
        assert json.loads(out) == []
    else:
        assert "Zz9NoSuchSpecies" in out + err


# ------------------------------------------------------------------ new

def test_new_writes_a_case_that_check_accepts(capsys, tmp_path):
    target = tmp_path / "my_case.yaml"
    rc, out, err = cli(capsys, "new", target)
    assert rc == 0 and f"auditor check {target}" in out
    text = target.read_text(encoding="utf-8")
    assert text.startswith("#")
    rc, out, err = cli(capsys, "check", target)
    assert rc in (0, 1), err                               # an audit result, never an input error
    assert "Verdict: " in out
    rc, out, err = cli(capsys, "check", target, "--json")
    assert json.loads(out)["verdict"] in VERDICTS


def test_new_refuses_to_overwrite_without_force(capsys, tmp_path):
    target = tmp_path / "mine.yaml"
    target.write_text("title: my own work\n", encoding="utf-8")
    rc, out, err = cli(capsys, "new", target)
    assert rc == 2 and "--force" in err and str(target) in err
    assert target.read_text(encoding="utf-8") == "title: my own work\n"
    rc, out, err = cli(capsys, "new", target, "--force", "--quiet")
    assert rc == 0 and out == ""
    assert target.read_text(encoding="utf-8").startswith("#")


def test_new_into_missing_directory(capsys, tmp_path):
    rc, out, err = cli(capsys, "new", tmp_path / "nope" / "c.yaml")
    assert rc == 2 and "cannot write" in err and "Traceback" not in err


# ------------------------------------------------------------------ help

@pytest.mark.parametrize("command", SUBCOMMANDS)
def test_every_subcommand_help_has_an_example(capsys, command):
    with pytest.raises(SystemExit) as info:
        main([command, "--help"])
    assert info.value.code == 0
    out = capsys.readouterr().out
    assert "example" in out.lower()
    assert f"auditor {command}" in out.split("example", 1)[1], "the example should show the command itself"


# ------------------------------------------------------------------ colour

class FakeTerminal(io.StringIO):
    def isatty(self):
        return True


COLOUR = {
    # name: (stdout is a terminal, NO_COLOR value or None for unset, colour expected)
    "terminal": (True, None, True),
    "terminal-NO_COLOR=1": (True, "1", False),
    "terminal-NO_COLOR=any": (True, "false", False),          # any non-empty value disables colour
    "terminal-NO_COLOR-empty": (True, "", True),              # empty means unset (no-color.org)
    "pipe": (False, None, False),
}


@pytest.mark.parametrize("name", list(COLOUR))
def test_colour_only_on_a_terminal_without_no_color(monkeypatch, name):
    tty, no_color, expected = COLOUR[name]
    monkeypatch.delenv("NO_COLOR", raising=False)
    if no_color is not None:
        monkeypatch.setenv("NO_COLOR", no_color)
    out = FakeTerminal() if tty else io.StringIO()
    monkeypatch.setattr(sys, "stdout", out)
    assert main(["check", str(CARBON)]) == 1
    text = out.getvalue()
    assert bool(ANSI.search(text)) is expected
    assert "Verdict: " in text
    assert ANSI.sub("", text).count("[error]") >= 1


def test_real_process_output_to_a_pipe_has_no_escape_codes():
    proc = subprocess.run([sys.executable, "-m", "auditor", "check", str(CARBON), "--explain"], capture_output=True,
                          text=True, env=subprocess_env(), timeout=300, cwd=REPO)
    assert proc.returncode == 1, proc.stderr
    assert "\x1b" not in proc.stdout and "\x1b" not in proc.stderr
    assert "Verdict: NOT-CONFIRMED" in proc.stdout


def test_real_terminal_with_no_color_has_no_escape_codes():
    """A real pseudo-terminal: isatty() is true, NO_COLOR=1 must still switch colour off."""
    rc, text = on_terminal(["check", CARBON], subprocess_env(NO_COLOR="1"), REPO, silence_s=120)
    assert rc == 1
    assert "Verdict: NOT-CONFIRMED" in text
    assert "\x1b" not in text


# ------------------------------------------------------------------ --quiet and several cases

QUIET = {
    "well-posed": (DESIGN, 0),
    "over-specified": (LIME, 1),
    "not-confirmed": (CARBON, 1),
}


@pytest.mark.parametrize("name", list(QUIET))
def test_quiet_prints_nothing_for_one_case(capsys, name):
    case, status = QUIET[name]
    rc, out, err = cli(capsys, "check", case, "--quiet")
    assert (rc, out, err) == (status, "", "")


def test_quiet_with_report_prints_nothing(capsys, tmp_path):
    rc, out, err = cli(capsys, "check", DESIGN, "--quiet", "--report", tmp_path / "r.md")
    assert (rc, out, err) == (0, "", "")
    assert (tmp_path / "r.md").read_text(encoding="utf-8").startswith("# Equilibrium-problem audit")


def test_quiet_still_reports_an_unreadable_case(capsys, tmp_path):
    missing = tmp_path / "missing.yaml"
    rc, out, err = cli(capsys, "check", missing, "--quiet")
    assert rc == 2 and out == "" and str(missing) in err and "Traceback" not in err


# verdict, F, m, the case path, then why in words (the verdict's reason, or a well-posed case's first warning)
SUMMARY = re.compile(r"^(?P<verdict>[a-z-]+) +F=(?P<F>-?\d+) +m=(?P<m>\d+) +(?P<path>.+?\.yaml): (?P<why>\S.*)$")

SEVERAL = {
    # name: (cases, expected exit status, expected verdicts of the readable cases, or None)
    "all-well-posed": ([DESIGN, AMMONIA], 0, ["well-posed", "well-posed"]),
    "one-problem": ([DESIGN, LIME], 1, ["well-posed", "over-specified"]),
    "problem-first": ([CARBON, DESIGN], 1, ["not-confirmed", "well-posed"]),
    "unreadable-case": ([DESIGN, "MISSING", LIME], 2, ["well-posed", "over-specified"]),
    "every-demo-case": (ALL_CASES, 1, None),
}


@pytest.mark.parametrize("name", list(SEVERAL))
def test_several_cases_one_summary_line_each_worst_status(capsys, tmp_path, name):
    cases, status, verdicts = SEVERAL[name]
    cases = [tmp_path / "missing.yaml" if c == "MISSING" else c for c in cases]
    rc, out, err = cli(capsys, "check", *cases)
    assert rc == status
    readable = [c for c in cases if Path(c).exists()]
    lines = out.splitlines()
    assert len(lines) == len(readable)
    found = []
    for line, case in zip(lines, readable):
        m = SUMMARY.match(line)
        assert m, line
        assert m["path"] == str(case)
        assert m["verdict"] in VERDICTS
        found.append(m["verdict"])
    if verdicts is not None:
        assert found == verdicts
    if len(readable) < len(cases):
        assert "missing.yaml" in err and err.startswith("auditor: error:")
    else:
        assert err == ""
    assert not ANSI.search(out)


# ------------------------------------------------------------------ presentation

def test_terminal_claims_are_not_python_reprs(capsys):
    """Regression: list-valued claims were printed as Python tuples: "claimed ('gas',), found ('gas',)"."""
    rc, out, _ = cli(capsys, "check", DESIGN)
    assert rc == 0
    line = next(ln for ln in out.splitlines() if ln.strip().startswith("phases-present:"))
    assert "(" not in line and "'" not in line, line
    assert line.strip() == "phases-present: claimed [gas], found [gas] -> held"
