"""Every user-facing failure kind, through the real command line (design §4, §5).

The contract: an input that cannot be used ends with exit status 2 and one short message
on stderr naming the file, the key path, the line where known and what was expected; no
traceback unless ``--debug``; with several files every bad file is reported, the good ones
are still audited and the worst status wins.

Each row of ``CHECK_FAILURES`` / ``REACTIONS_FAILURES`` builds one broken input in a
temporary directory and gives the regular expression its message must match.  Most rows
run in-process through ``auditor.cli.main`` (capsys); a few whole runs go through
``python -m auditor`` in a subprocess to prove that no 'Traceback' reaches stderr.
"""
from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

from auditor.cli import main
from auditor.errors import CaseError

REPO = Path(__file__).resolve().parents[1]
CASES = REPO / "cases"
DEMO = (CASES / "reformer_design_point.yaml").read_text(encoding="utf-8")   # well posed, exit 0
OVERSPECIFIED = CASES / "lime_kiln_overspecified.yaml"                       # exit 1

MECHANISM_SPECIES = """
species:
- name: H2
  composition: {H: 2}
  thermo: {model: constant-cp, T0: 298.15 K, h0: 0, s0: 130.68 J/mol/K, cp0: 28.8 J/mol/K}
- name: O2
  composition: {O: 2}
  thermo: {model: constant-cp, T0: 298.15 K, h0: 0, s0: 205.1 J/mol/K, cp0: 29.4 J/mol/K}
- name: H2O
  composition: {H: 2, O: 1}
  thermo: {model: constant-cp, T0: 298.15 K, h0: -241.8 kJ/mol, s0: 188.8 J/mol/K, cp0: 33.6 J/mol/K}
"""
GOOD_MECHANISM = """\
phases:
- name: gas
  thermo: ideal-gas
  elements: [H, O]
  species: [H2, O2, H2O]
  state: {T: 300, P: 1 atm}
""" + MECHANISM_SPECIES
# the phase names a species the file does not define: cantera refuses to build it
UNBUILDABLE_MECHANISM = GOOD_MECHANISM.replace("species: [H2, O2, H2O]", "species: [H2, O2, H2O, XYZ]")
# YAML garbage inside the phases section (the error is on line 2)
MALFORMED_MECHANISM = "phases: [ {name: gas\n  : : ]\n"
MECHANISM_CASE = """\
title: mechanism case
system:
  mechanism: {mech}
reactions: from-mechanism
feed: {{H2: 2, O2: 1}}
specified: {{temperature: 1000 K, pressure: 1 bar}}
"""


# ------------------------------------------------------------------ helpers

def _in_comment(text: str, pos: int) -> bool:
    start = text.rfind("\n", 0, pos) + 1
    return "#" in text[start:pos]


def demo_with(old: str, new: str) -> str:
    """The demo case with the first occurrence of ``old`` outside a comment replaced."""
    pos = DEMO.find(old)
    while pos >= 0 and _in_comment(DEMO, pos):
        pos = DEMO.find(old, pos + 1)
    assert pos >= 0, f"the demo case changed: {old!r} not found"
    return DEMO[:pos] + new + DEMO[pos + len(old):]


def line_of(text: str, needle: str) -> int:
    """1-based number of the first line containing ``needle`` outside a comment."""
    return next(i for i, ln in enumerate(text.splitlines(), 1) if needle in ln.split("#")[0])


def write(tmp: Path, name: str, content: str | bytes) -> Path:
    p = tmp / name
    if isinstance(content, bytes):
        p.write_bytes(content)
    else:
        p.write_text(content, encoding="utf-8")
    return p


def run_main(argv, capsys):
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


def run_cli(*args, cwd: Path | None = None) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    env.pop("NO_COLOR", None)
    return subprocess.run([sys.executable, "-m", "auditor", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd or REPO, env=env, timeout=120)


def E(path) -> str:
    return re.escape(str(path))


# ------------------------------------------------------------------ the tables
# Each builder takes the temporary directory and returns (argv, regex of the stderr message).

def case_row(name: str, text: str | bytes, message: str, needle: str | None = None, column=True):
    """A broken case file; ``needle`` finds the line the message must cite."""
    def build(tmp: Path):
        p = write(tmp, f"{name}.yaml", text)
        where = E(p)
        if needle is not None:
            where += f":{line_of(text, needle)}" + (r":\d+" if column else "")
        return ["check", "--no-confirm", p], rf"^auditor: error: {where}: {message}"
    return build


def _missing(tmp):
    p = tmp / "nothere.yaml"
    return ["check", p], rf"^auditor: error: {E(p)}: .*(No such file or directory|not found)"


def _directory(tmp):
    d = tmp / "adirectory.yaml"
    d.mkdir()
    return ["check", d], rf"^auditor: error: {E(d)}: .*[Ii]s a directory"


def _mechanism_case(name: str, mech_text: str | None, message, phases: str | None = None):
    def build(tmp: Path):
        mech = tmp / f"{name}_mech.yaml"
        if mech_text is not None:
            mech.write_text(mech_text, encoding="utf-8")
        text = MECHANISM_CASE.format(mech=mech.name)
        if phases is not None:
            text = text.replace("reactions: from-mechanism", f"  phases: {phases}\nreactions: complete")
        p = write(tmp, f"{name}.yaml", text)
        return ["check", "--no-confirm", p], message(p, mech, text)
    return build


def _reactions(mech_text: str | None, extra: list[str], message):
    def build(tmp: Path):
        mech = tmp / "mechanism.yaml"
        if mech_text is not None:
            mech.write_text(mech_text, encoding="utf-8")
        return ["reactions", mech, *extra], message(mech)
    return build


# formerly a bug (scalars PyYAML cannot construct escaped the loader); no mark now
BUG_SCALAR_CONSTRUCTION = ()


def known(build, **marks):
    """Attach xfail marks for known bugs to a row, per test ('message' or 'one_line')."""
    build.known_bugs = marks
    return build


CHECK_FAILURES = {
    "missing file": _missing,
    "a directory": _directory,
    "YAML syntax error": case_row("syntax", demo_with("coexisting: [gas]", "- coexisting"),
                                  r"YAML syntax error: a list item \('- \.\.\.'\) where a 'key: value' line was expected "
                                  r"\(the YAML parser says: expected <block end>, but found '-'\)", "- coexisting"),
    "empty file": case_row("empty", "  \n\n \n", r"case file is empty"),
    "comment-only file": case_row("comments", "# title: to do\n# system: to do\n", r"case file is empty"),
    "binary file": case_row("binary", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", r"this is a binary file"),
    "latin-1 bytes": case_row("latin1", demo_with("design point A", "caf\u00e9 A").encode("latin-1"),
                              r"case file is not UTF-8 text \(byte \d+\): save it as UTF-8"),
    "not a mapping": case_row("scalar", "just a sentence\n",
                              r"a case file is a mapping of keys such as title", "just a sentence",
                              column=False),
    "two documents": case_row("twodocs", DEMO + "\n---\n" + DEMO, r"expected one YAML document, found 2"),
    "impossible date": known(case_row("date", demo_with("title: Kestrel", "title: 2024-02-30\n#"), r"title: .+",
                                      "2024-02-30"), message=BUG_SCALAR_CONSTRUCTION, one_line=BUG_SCALAR_CONSTRUCTION),
    "python object tag": known(case_row("pytag", demo_with("title: Kestrel", "title: !!python/object:os.system x\n#"),
                                        r"title: .+", "!!python"),
                               message=BUG_SCALAR_CONSTRUCTION, one_line=BUG_SCALAR_CONSTRUCTION),
    "unknown tag": known(case_row("tag", demo_with("CH4: 1.0,", "CH4: !custom 1,"), r"feed\.CH4: .+", "!custom"),
                         message=BUG_SCALAR_CONSTRUCTION, one_line=BUG_SCALAR_CONSTRUCTION),
    "'!!float abc'": known(case_row("float", demo_with("CH4: 1.0,", "CH4: !!float abc,"), r"feed\.CH4: .+", "abc"),
                           message=BUG_SCALAR_CONSTRUCTION, one_line=BUG_SCALAR_CONSTRUCTION),
    "integer of 5000 digits": known(case_row("digits", demo_with("CH4: 1.0,", "CH4: 1" + "0" * 5000 + ","),
                                             r"feed\.CH4: .+", "CH4: 1000"),
                                    message=BUG_SCALAR_CONSTRUCTION, one_line=BUG_SCALAR_CONSTRUCTION),
    "unknown key": case_row("unknown", demo_with("reactions: complete", "reactons: complete"),
                            r"reactons: unknown key 'reactons'; did you mean 'reactions'\?", "reactons"),
    "unknown nested key": case_row("unknown2", demo_with("pressure: 25 bar", "presure: 25 bar"),
                                   r"specified\.presure: unknown key 'presure'; did you mean 'pressure'\?",
                                   "presure"),
    "list for a mapping (feed)": case_row(
        "feedlist", demo_with("feed: {CH4: 1.0, H2O: 3.0, N2: 0.02}", "feed: [CH4, H2O, N2]"),
        r"feed: expected a mapping \(key: value lines\), got a list", "feed:"),
    "list for a mapping (specified)": case_row(
        "speclist", demo_with("specified:\n  temperature: 850 degC\n  pressure: 25 bar",
                              "specified: [850 degC, 25 bar]"),
        r"specified: expected a mapping \(key: value lines\), got a list", "specified:"),
    "text for a whole number (claim)": case_row(
        "claimtype", demo_with("independent-reactions: 2", "independent-reactions: two"),
        r"claims\.independent-reactions: expected a whole number, got 'two'", "independent-reactions"),
    "wrong unit dimension (pressure)": case_row(
        "unitp", demo_with("pressure: 25 bar", "pressure: 25 K"),
        r"specified\.pressure: unit 'K' is not a unit of pressure", "pressure: 25 K"),
    "wrong unit dimension (amount)": case_row(
        "unitn", demo_with("CH4: 1.0,", "CH4: 1.0 bar,"),
        r"feed\.CH4: unit 'bar' is not a unit of amount", "CH4: 1.0 bar"),
    "undefined unit": case_row(
        "unitx", demo_with("temperature: 850 degC", "temperature: 850 degZ"),
        r"specified\.temperature: cannot read unit 'degZ' of temperature", "degZ"),
    "amount .nan": case_row("nan", demo_with("CH4: 1.0,", "CH4: .nan,"),
                            r"feed\.CH4: amount must be a finite number, got nan", "CH4: .nan"),
    "amount .inf": case_row("inf", demo_with("CH4: 1.0,", "CH4: .inf,"),
                            r"feed\.CH4: amount must be a finite number, got inf", "CH4: .inf"),
    "amount '1e400 mol'": case_row("inf2", demo_with("CH4: 1.0,", "CH4: 1e400 mol,"),
                                   r"feed\.CH4: amount must be a finite number", "1e400"),
    "temperature .nan": case_row("tnan", demo_with("temperature: 850 degC", "temperature: .nan"),
                                 r"specified\.temperature: temperature must be a finite number", "temperature"),
    "negative amount": case_row("neg", demo_with("CH4: 1.0,", "CH4: -1.0,"),
                                r"feed\.CH4: feed amount must not be negative, got -1\.0", "CH4: -1.0"),
    "all amounts zero": case_row("zero", demo_with("{CH4: 1.0, H2O: 3.0, N2: 0.02}", "{CH4: 0, H2O: 0 kmol}"),
                                 r"feed: the feed is empty", "feed:"),
    "temperature 0 K": case_row("t0", demo_with("850 degC", "0 K"),
                                r"specified\.temperature: temperature must be above absolute zero, got 0 K",
                                "temperature"),
    "temperature -273.15 degC": case_row("t27315", demo_with("850 degC", "-273.15 degC"),
                                         r"specified\.temperature: temperature must be above absolute zero",
                                         "temperature"),
    "temperature -300 degC": case_row("t300", demo_with("850 degC", "-300 degC"),
                                      r"specified\.temperature: temperature must be above absolute zero, "
                                      r"got -26\.85 K", "temperature"),
    "temperature -5 K": case_row("tm5", demo_with("850 degC", "-5 K"),
                                 r"specified\.temperature: temperature must be above absolute zero", "temperature"),
    "adiabatic feed temperature below 0 K": case_row(
        "adiab", demo_with("temperature: 850 degC", "adiabatic: {feed-temperature: -500 degF}"),
        r"specified\.adiabatic\.feed-temperature: temperature must be above absolute zero", "adiabatic"),
    "pressure 0 bar": case_row("p0", demo_with("25 bar", "0 bar"),
                               r"specified\.pressure: pressure must be positive, got 0 Pa", "pressure"),
    "pressure -1 atm": case_row("pneg", demo_with("25 bar", "-1 atm"),
                                r"specified\.pressure: pressure must be positive, got -101325 Pa", "pressure"),
    "unknown species (feed)": case_row("spfeed", demo_with("N2: 0.02}", "XE2: 0.02}"),
                                       r"feed\.XE2: unknown species 'XE2' in any phase", "XE2", column=False),
    "unknown species (phases)": case_row("spphase", demo_with("CO2, H2, N2]", "CO2, H2, N2, XE2]"),
                                         r"system\.phases\.gas\[6\]: unknown species 'XE2' in nasa_gas\.yaml or "
                                         r"nasa_condensed\.yaml; closest names: Xe", "XE2", column=False),
    "unknown species (equation)": case_row(
        "speq", demo_with("reactions: complete", 'reactions: ["CH4 + H2O <=> CO + 3 HX"]'),
        r"reactions\[0\]: unknown species 'HX' in equation 'CH4 \+ H2O <=> CO \+ 3 HX'", "reactions:",
        column=False),
    "unknown phase (coexisting)": case_row("phase", demo_with("coexisting: [gas]", "coexisting: [gaz]"),
                                           r"coexisting\[0\]: unknown phase 'gaz' in the system; closest names: gas",
                                           "coexisting", column=False),
    "equation without an arrow": case_row(
        "eqarrow", demo_with("reactions: complete", 'reactions: ["CH4 + H2O -> CO + 3 H2"]'),
        r"reactions\[0\]: equation 'CH4 \+ H2O -> CO \+ 3 H2' needs exactly one of '<=>', '=>' or '='",
        "reactions:", column=False),
    "equation with a zero coefficient": case_row(
        "eqzero", demo_with("reactions: complete", 'reactions: ["CH4 + H2O <=> CO + 0 H2"]'),
        r"reactions\[0\]: zero coefficient in equation", "reactions:", column=False),
    "equation with coefficient 1/0": case_row(
        "eqdiv", demo_with("reactions: complete", 'reactions: ["CH4 + H2O <=> CO + 3/0 H2"]'),
        r"reactions\[0\]: cannot read coefficient '3/0'", "reactions:", column=False),
    "equation with an empty side": case_row(
        "eqempty", demo_with("reactions: complete", 'reactions: ["CH4 + H2O <=> "]'),
        r"reactions\[0\]: equation 'CH4 \+ H2O <=> ' has an empty side", "reactions:", column=False),
    "missing mechanism file": _mechanism_case(
        "nomech", None, lambda p, m, t: rf"^auditor: error: {E(p)}:{line_of(t, 'mechanism:')}:\d+: system\.mechanism: "
                                        rf"mechanism file '{m.name}' not found"),
    "malformed mechanism file": _mechanism_case(
        "badmech", MALFORMED_MECHANISM, lambda p, m, t: rf"{E(m)}\S*: phases: malformed 'phases:' section"),
    "malformed mechanism file, its line kept": _mechanism_case(
        "badmech", MALFORMED_MECHANISM, lambda p, m, t: rf"{E(m)}:2: phases: malformed 'phases:' section"),
    "mechanism that is not a Cantera file": _mechanism_case(
        "notmech", "just: some yaml\n", lambda p, m, t: rf"{E(m)}: no top-level 'phases:' section"),
    "mechanism phase cantera cannot build": _mechanism_case(
        "cantera", UNBUILDABLE_MECHANISM,
        lambda p, m, t: rf"{E(m)}: phases\[gas\]: cantera cannot build phase 'gas': .*"
                        r"Could not find a species named 'XYZ'"),
    "unknown species in a mechanism phase": _mechanism_case(
        "mechsp", GOOD_MECHANISM, lambda p, m, t: rf"^auditor: error: {E(p)}:{line_of(t, 'XYZ')}: "
                                                  r"system\.phases\.gas\[1\]: .*unknown species 'XYZ' in phase 'gas'",
        phases="{gas: [H2, XYZ]}"),
    "unknown phase named in a mechanism case": _mechanism_case(
        "mechph", GOOD_MECHANISM, lambda p, m, t: rf"^auditor: error: {E(p)}:{line_of(t, 'gaz')}: system\.phases.*"
                                                  r"unknown phase 'gaz'", phases="[gaz]"),
}

REACTIONS_FAILURES = {
    "reactions: missing file": _reactions(None, [], lambda m: rf"^auditor: error: {E(m)}: mechanism file not found"),
    "reactions: malformed file": _reactions(
        MALFORMED_MECHANISM, [], lambda m: rf"^auditor: error: {E(m)}:\d+: phases: malformed 'phases:' section"),
    "reactions: not a mechanism": _reactions(
        "title: not a mechanism\n", [], lambda m: rf"^auditor: error: {E(m)}: no top-level 'phases:' section"),
    "reactions: latin-1 bytes": _reactions(
        None, [], lambda m: rf"^auditor: error: {E(m)}: cannot read mechanism file"),
    "reactions: unknown --phase": _reactions(
        GOOD_MECHANISM, ["--phase", "gaz"],
        lambda m: rf"^auditor: error: {E(m)}: phases: unknown phase 'gaz' in {m.name}; closest names: gas"),
    "reactions: phase cantera cannot build": _reactions(
        UNBUILDABLE_MECHANISM, [], lambda m: rf"^auditor: error: {E(m)}: phases\[gas\]: cantera cannot build phase "
                                             r"'gas': .*Could not find a species named 'XYZ'"),
}


def _latin1(builder):
    def build(tmp):
        argv, msg = builder(tmp)
        argv[1].write_bytes("phases: [{name: caf\u00e9}]\n".encode("latin-1"))
        return argv, msg
    return build


REACTIONS_FAILURES["reactions: latin-1 bytes"] = _latin1(REACTIONS_FAILURES["reactions: latin-1 bytes"])
ALL_FAILURES = {**CHECK_FAILURES, **REACTIONS_FAILURES}


def _params(table, test: str):
    return [pytest.param(build, id=name, marks=getattr(build, "known_bugs", {}).get(test, ()))
            for name, build in table.items()]


# ------------------------------------------------------------------ one test per failure kind

@pytest.mark.parametrize("build", _params(ALL_FAILURES, "message"))
def test_failure_message(build, tmp_path, capsys):
    """Exit 2; the message names the file, the key path, the line and what was expected."""
    argv, pattern = build(tmp_path)
    rc, out, err = run_main(argv, capsys)
    assert rc == 2, (rc, err)
    assert re.search(pattern, err, re.MULTILINE), f"stderr:\n{err}\nexpected to match:\n{pattern}"
    assert "Traceback" not in err
    assert "internal error" not in err


@pytest.mark.parametrize("build", _params(ALL_FAILURES, "one_line"))
def test_failure_is_one_short_line(build, tmp_path, capsys):
    """One problem -> one line on stderr, and nothing on stdout."""
    argv, _ = build(tmp_path)
    rc, out, err = run_main(argv, capsys)
    assert rc == 2
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert len(lines[0]) < 600, lines[0]
    assert out == ""


def test_every_problem_in_a_file_is_reported(tmp_path, capsys):
    text = demo_with("CH4: 1.0,", "CH4: -1.0,").replace("25 bar", "25 K").replace("\nreactions:", "\nreactons:")
    p = write(tmp_path, "three.yaml", text)
    rc, out, err = run_main(["check", p], capsys)
    assert rc == 2
    for needle in ("feed.CH4: feed amount must not be negative", "specified.pressure: unit 'K'",
                   "reactons: unknown key"):
        assert needle in err
    assert err.count(str(p)) == 3


@pytest.mark.parametrize("title", ["2024-02-03", "42", "1.5"])
def test_title_that_looks_like_a_date_or_number(title, tmp_path):
    from auditor.case import load_case
    p = write(tmp_path, "dated.yaml", demo_with("title: Kestrel", f"title: {title}\n#"))
    assert load_case(p).title == title


# ------------------------------------------------------------------ --debug

def test_debug_raises_the_error_in_process(tmp_path):
    p = write(tmp_path, "t0.yaml", demo_with("850 degC", "0 K"))
    with pytest.raises(CaseError, match="above absolute zero"):
        main(["--debug", "check", str(p)])
    with pytest.raises(CaseError, match="above absolute zero"):
        main(["check", "--debug", str(p)])


def test_debug_shows_a_traceback_only_when_asked(tmp_path):
    p = write(tmp_path, "t0.yaml", demo_with("850 degC", "0 K"))
    loud = run_cli("--debug", "check", p)
    assert loud.returncode != 0
    assert "Traceback (most recent call last)" in loud.stderr
    assert "CaseError" in loud.stderr and "above absolute zero" in loud.stderr


# ------------------------------------------------------------------ several files

def test_several_files_each_reported_good_one_audited(tmp_path, capsys):
    good = write(tmp_path, "good.yaml", DEMO)
    t0 = write(tmp_path, "t0.yaml", demo_with("850 degC", "0 K"))
    missing = tmp_path / "missing.yaml"
    binary = write(tmp_path, "binary.yaml", b"\x00\x01\x02")
    rc, out, err = run_main(["check", "--no-confirm", t0, good, missing, binary, OVERSPECIFIED], capsys)
    assert rc == 2                                           # the worst status wins
    errors = [ln for ln in err.splitlines() if ln.startswith("auditor: error:")]
    assert len(errors) == 3, err
    assert f"{t0}:" in errors[0] and f"{missing}:" in errors[1] and f"{binary}:" in errors[2]
    summary = out.splitlines()
    assert len(summary) == 2, out                            # the good ones are still audited
    assert "well-posed" in summary[0] and "good.yaml" in summary[0]
    assert "over-specified" in summary[1] and OVERSPECIFIED.name in summary[1]


def test_several_files_json_lists_only_the_good_ones(tmp_path, capsys):
    good = write(tmp_path, "good.yaml", DEMO)
    bad = write(tmp_path, "bad.yaml", demo_with("25 bar", "0 bar"))
    rc, out, err = run_main(["check", "--no-confirm", "--json", bad, good], capsys)
    assert rc == 2
    docs = json.loads(out)
    assert isinstance(docs, list) and len(docs) == 1 and docs[0]["verdict"] == "well-posed"
    assert f"{bad}:" in err and "pressure must be positive" in err


def test_worst_status_wins_without_input_errors(tmp_path, capsys):
    good = write(tmp_path, "good.yaml", DEMO)
    rc, out, err = run_main(["check", "--no-confirm", good, OVERSPECIFIED], capsys)
    assert rc == 1 and err == ""
    rc, out, err = run_main(["check", "--no-confirm", good, good], capsys)
    assert rc == 0 and len(out.splitlines()) == 2


def test_several_broken_files_in_a_subprocess(tmp_path):
    """A whole run with many kinds of broken input: every one reported, no traceback, exit 2."""
    names = ["missing file", "a directory", "YAML syntax error", "binary file", "latin-1 bytes", "amount .nan",
             "unknown species (feed)", "equation without an arrow", "mechanism phase cantera cannot build"]
    argv, patterns = [], []
    for name in names:
        sub = tmp_path / re.sub(r"\W+", "_", name)
        sub.mkdir()
        a, pat = ALL_FAILURES[name](sub)
        argv.append(a[-1])
        patterns.append(pat)
    good = write(tmp_path, "good.yaml", DEMO)
    proc = run_cli("check", argv[0], good, *argv[1:])          # with confirmation: the real thing
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr
    for pat in patterns:
        assert re.search(pat, proc.stderr, re.MULTILINE), (pat, proc.stderr)
    assert len(proc.stderr.splitlines()) == len(names)
    assert re.search(r"well-posed .*good\.yaml", proc.stdout), proc.stdout


def test_reactions_failures_in_a_subprocess(tmp_path):
    mech = write(tmp_path, "m.yaml", GOOD_MECHANISM)
    bad = write(tmp_path, "bad.yaml", UNBUILDABLE_MECHANISM)
    for args, needle in (([tmp_path / "none.yaml"], "mechanism file not found"),
                         ([mech, "--phase", "gaz"], "unknown phase 'gaz'"),
                         ([bad], "Could not find a species named 'XYZ'")):
        proc = run_cli("reactions", *args)
        assert proc.returncode == 2
        assert "Traceback" not in proc.stderr
        assert needle in proc.stderr and proc.stderr.startswith("auditor: error: ")
