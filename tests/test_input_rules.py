"""Every input read as the engineer meant it (issue 19, items 1, 2, 3, 10, 11): no silent units,
no impossible values, YAML mistakes at their own line, nothing tied to where the tool is
installed, and the newcomer's small gaps.

Each test is what a new user meets: a real case file on disk (an invented sulphur-recovery
furnace written from the README), the real CLI, and one located message with a fix on
stderr, exit 2, nothing written.  Lines and columns are counted by hand in the texts here.
"""
from __future__ import annotations

import json
import re
from pathlib import Path

import cantera as ct
import pytest

from auditor import settings
from auditor.case import load_case
from clitools import run

ROOT = Path(__file__).resolve().parents[1]

# INVENTED: a Claus furnace fed acid gas (H2S with some CO2) and air, one third of the H2S burnt.
# Lines 1-7 here; 'specified' on line 8, temperature line 9, pressure line 10.
FURNACE = """\
title: invented sulphur-recovery furnace
system:
  source: packaged
  phases:
    gas: [H2S, O2, N2, SO2, S2, H2O, H2, CO2, CO, COS, CS2]
reactions: complete
feed: {H2S: 90 kmol, CO2: 6 kmol, O2: 45 kmol, N2: 170 kmol}
specified:
  temperature: 1250 degC
  pressure: 1.6 bar
"""


def furnace(tmp_path: Path, *edits: tuple[str, str], name: str = "furnace.yaml") -> Path:
    text = FURNACE
    for old, new in edits:
        assert old in text, old
        text = text.replace(old, new)
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def refused(tmp_path: Path, path: Path, *extra) -> str:
    """Run the CLI with a report requested; assert exit 2, one message, nothing written; return it."""
    report = tmp_path / "audit.html"
    rc, out, err = run(["check", path, "--report", report, *extra])
    assert rc == 2, (rc, out, err)
    assert not report.exists() and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"auditor: error: {path}:"), err
    return lines[0]


def test_the_furnace_as_written_is_well_posed(tmp_path):
    rc, out, err = run(["check", furnace(tmp_path), "--json"])
    doc = json.loads(out)
    assert rc == 0 and doc["verdict"] == "well-posed", err
    # 1250 degC = 1523.15 K (definition of the Celsius scale); 1.6 bar = 160000 Pa (definition of the bar)
    assert doc["equilibrium"]["temperature_K"] == pytest.approx(1523.15)
    assert doc["equilibrium"]["pressure_Pa"] == pytest.approx(1.6e5)


# ------------------------------------------------------------------ item 1: no silent units

def test_bare_pressure_is_refused_with_the_spellings_to_write(tmp_path):
    path = furnace(tmp_path, ("pressure: 1.6 bar", "pressure: 1.6"))
    msg = refused(tmp_path, path)
    assert msg.startswith(f"auditor: error: {path}:10:13: specified.pressure: a pressure needs a unit: "
                          "write 1.6 bar or 160 kPa")
    assert "units: {pressure: bar}" in msg                      # how to state a convention instead


def test_bare_pressure_that_reads_like_pascals_is_offered_in_pascals(tmp_path):
    msg = refused(tmp_path, furnace(tmp_path, ("pressure: 1.6 bar", "pressure: 160000")))
    assert "write 160000 Pa or 160 kPa" in msg


def test_bare_temperature_is_refused(tmp_path):
    path = furnace(tmp_path, ("temperature: 1250 degC", "temperature: 1250"))
    msg = refused(tmp_path, path)
    assert msg.startswith(f"auditor: error: {path}:9:16: specified.temperature: a temperature needs a unit: "
                          "write 1250 K or 1250 degC")


def test_bare_feed_temperature_is_refused(tmp_path):
    path = furnace(tmp_path, ("temperature: 1250 degC", "adiabatic: {feed-temperature: 350}"))
    msg = refused(tmp_path, path)
    assert msg.startswith(f"auditor: error: {path}:9:33: specified.adiabatic.feed-temperature: a temperature "
                          "needs a unit: write 350 K or 350 degC")


def test_feed_mixing_amounts_with_and_without_units_is_refused(tmp_path):
    path = furnace(tmp_path, ("H2S: 90 kmol", "H2S: 90"))
    msg = refused(tmp_path, path)
    assert msg.startswith(f"auditor: error: {path}:7:13: feed.H2S: this feed mixes amounts with a unit "
                          "(CO2: 6 kmol) and without one (H2S): write H2S: 90 kmol")


def test_feed_without_any_unit_is_in_mol(tmp_path):
    path = furnace(tmp_path, ("{H2S: 90 kmol, CO2: 6 kmol, O2: 45 kmol, N2: 170 kmol}", "{H2S: 90, CO2: 6, O2: 45, N2: 170}"))
    rc, out, err = run(["check", path, "--no-confirm"])
    assert rc == 0, err
    assert dict(load_case(path).feed) == {"H2S": 90, "CO2": 6, "O2": 45, "N2": 170}      # mol, as documented


def test_bare_zero_beside_amounts_with_units_needs_no_unit(tmp_path):
    path = furnace(tmp_path, ("CO2: 6 kmol", "CO2: 0"))
    rc, _, err = run(["check", path, "--no-confirm"])
    assert rc == 0, err


def test_declared_units_give_bare_numbers_their_meaning(tmp_path):
    path = furnace(tmp_path, ("specified:", "units: {temperature: degC, pressure: bar, feed: kmol}\nspecified:"),
                   ("temperature: 1250 degC", "temperature: 1250"), ("pressure: 1.6 bar", "pressure: 1.6"),
                   ("H2S: 90 kmol", "H2S: 90"))
    rc, out, err = run(["check", path, "--json"])
    doc = json.loads(out)
    assert rc == 0, err
    # the same state as the furnace written with units: 1523.15 K and 1.6e5 Pa (definitions of degC, bar)
    assert doc["equilibrium"]["temperature_K"] == pytest.approx(1523.15)
    assert doc["equilibrium"]["pressure_Pa"] == pytest.approx(1.6e5)
    case = load_case(path)
    assert dict(case.feed)["H2S"] == 90_000                     # 90 kmol = 90000 mol, exact (SI prefix)
    assert case.as_written["specified.pressure"] == "1.6 bar"   # reports show the unit the case declared
    assert case.as_written["feed.H2S"] == "90 kmol"
    report = tmp_path / "furnace.md"
    assert run(["check", path, "--report", report])[0] == 0
    assert "| pressure | 1.6 (read as 1.6 bar, from 'units:') | 160000 Pa |" in report.read_text(encoding="utf-8")


@pytest.mark.parametrize("units_text, key_path, message", [
    ("units: {pressure: K}", "units.pressure", "unit 'K' is not a unit of pressure"),
    ("units: {temperature: C}", "units.temperature", "did you mean 1 degC?"),
    ("units: {pressur: bar}", "units.pressur", "unknown key 'pressur'; did you mean 'pressure'?"),
    ("units: {feed: bar}", "units.feed", "unit 'bar' is not a unit of amount or mass"),
    ("units: bar", "units", "expected a mapping"),
])
def test_a_units_declaration_that_does_not_fit_is_refused(tmp_path, units_text, key_path, message):
    path = furnace(tmp_path, ("specified:", f"{units_text}\nspecified:"))
    msg = refused(tmp_path, path)
    assert re.match(rf"auditor: error: {re.escape(str(path))}:8:\d+: {re.escape(key_path)}: ", msg), msg
    assert message in msg


def test_a_feed_mixing_a_rate_and_amounts_is_answered_in_engineering_words(tmp_path):
    # rates are supported (issue 24): a feed of rates per one time unit; a mix is refused
    path = furnace(tmp_path, ("H2S: 90 kmol", "H2S: 3060 kg/h"))
    msg = refused(tmp_path, path)
    assert msg.startswith(f"auditor: error: {path}:7:29: feed.CO2: this feed mixes a rate (H2S: 3060 kg/h) "
                          "with an amount (CO2: 6 kmol): write every feed entry as a rate per hour (e.g. CO2: 6 kmol/h)")
    assert "registry" not in msg and "not defined" not in msg


def test_rates_per_different_time_units_are_refused(tmp_path):
    path = furnace(tmp_path, ("H2S: 90 kmol", "H2S: 90 kmol/h"), ("CO2: 6 kmol", "CO2: 144 kmol/d"))
    msg = refused(tmp_path, path)
    assert "feed.CO2: this feed mixes rates per hour and per day (CO2: 144 kmol/d)" in msg


def test_a_flow_key_without_its_colon_is_named(tmp_path):
    path = furnace(tmp_path, ("O2: 45 kmol", "O2 45 kmol"))
    msg = refused(tmp_path, path)
    assert msg.startswith(f"auditor: error: {path}:7:35: feed.O2: a colon is missing after 'O2': write 'O2: 45 kmol'")


# ------------------------------------------------------------------ item 2: values that cannot be physical

@pytest.mark.parametrize("old, new, key_path, message", [
    ("pressure: 1.6 bar", "pressure: 20000 bar", "specified.pressure",
     "pressure 20000 bar (20000 bar) cannot be physical: a case may hold up to 10000 bar (1e+09 Pa)"),
    ("pressure: 1.6 bar", "pressure: 1.6 GPa", "specified.pressure", "a case may hold up to 10000 bar"),
    ("temperature: 1250 degC", "temperature: 0.5 K", "specified.temperature",
     "temperature 0.5 K (0.5 K) cannot be physical: a case may hold 1 K to 100000 K"),
    ("temperature: 1250 degC", "temperature: 2e5 K", "specified.temperature", "a case may hold 1 K to 100000 K"),
    ("temperature: 1250 degC", "temperature: -300 degC", "specified.temperature",
     "temperature must be above absolute zero, got -26.85 K"),          # -300 degC = -26.85 K (definition)
    ("H2S: 90 kmol", "H2S: 1e31 kmol", "feed.H2S",
     "feed amount 1e31 kmol cannot be physical: an amount lies between 1e-30 and 1e+30 in its unit (kmol)"),
    ("CO2: 6 kmol", "CO2: 1e-31 kmol", "feed.CO2", "an amount lies between 1e-30 and 1e+30 in its unit (kmol)"),
])
def test_values_that_cannot_be_physical_are_refused_with_the_range(tmp_path, old, new, key_path, message):
    msg = refused(tmp_path, furnace(tmp_path, (old, new)))
    assert f" {key_path}: " in msg and message in msg, msg


def test_limits_are_named_settings():
    assert settings.MAX_PRESSURE_PA == 1e9                       # 1e4 bar (issue 19)
    assert (settings.MIN_TEMPERATURE_K, settings.MAX_TEMPERATURE_K) == (1.0, 1e5)
    assert (settings.MIN_FEED_AMOUNT, settings.MAX_FEED_AMOUNT) == (1e-30, 1e30)


def test_in_range_but_beyond_the_species_data_stays_a_finding(tmp_path):
    # 8000 K lies inside 1 K to 1e5 K but beyond the NASA fits (H2S: 300-5000 K, from the packaged data)
    rc, out, err = run(["check", furnace(tmp_path, ("temperature: 1250 degC", "temperature: 8000 K")), "--json"])
    assert rc in (0, 1), err
    doc = json.loads(out)
    assert any(f["topic"] == "data" and "H2S" in f["message"] and "(300-5000 K)" in f["message"]
               for f in doc["findings"])


def test_a_sweep_beyond_the_physical_range_is_refused(tmp_path):
    path = furnace(tmp_path)
    rc, out, err = run(["sweep", path, "--vary", "pressure=1:20001:10000", "--out", tmp_path / "s"])
    assert rc == 2 and "a case may hold up to 10000 bar" in err
    assert not list(tmp_path.glob("s*"))


# ------------------------------------------------------------------ item 3: YAML mistakes at their line

def test_missing_colon_after_pressure_is_reported_on_the_pressure_line(tmp_path):
    path = furnace(tmp_path, ("  pressure: 1.6 bar", "  pressure 1.6 bar\ncoexisting: [gas]"))
    msg = refused(tmp_path, path)
    assert msg.startswith(f"auditor: error: {path}:10:3: specified.pressure: YAML syntax error: a colon is "
                          "missing after 'pressure': write 'pressure: 1.6 bar'")
    assert msg.endswith("(the YAML parser says: could not find expected ':')")


def test_missing_colon_before_the_next_key_is_reported_on_its_own_line(tmp_path):
    path = furnace(tmp_path, ("  temperature: 1250 degC\n  pressure: 1.6 bar", "  pressure 1.6 bar\n  temperature: 1250 degC"))
    msg = refused(tmp_path, path)
    assert msg.startswith(f"auditor: error: {path}:9:3: specified.pressure: YAML syntax error: a colon is "
                          "missing after 'pressure'")


# ------------------------------------------------------------------ every case the project ships still loads

SHIPPED_CASES = sorted([*ROOT.glob("cases/*.yaml"), ROOT / "auditor" / "data" / "default_case.yaml",
                        ROOT / "auditor" / "data" / "starter_case.yaml", *ROOT.glob("tests/data/*_case.yaml"),
                        *(p for p in ROOT.glob("tests/golden/cases/*.yaml") if not p.name.endswith("_mech.yaml"))])


@pytest.mark.parametrize("path", SHIPPED_CASES, ids=lambda p: str(p.relative_to(ROOT)))
def test_every_shipped_case_loads_under_the_unit_rules(path):
    load_case(path)


def test_the_starter_case_checks(tmp_path):
    rc, out, err = run(["new", tmp_path / "mine.yaml", "--quiet"])
    assert rc == 0 and out == ""
    rc, out, err = run(["check", tmp_path / "mine.yaml", "--no-confirm"])
    assert rc in (0, 1), err


# ------------------------------------------------------------------ item 10: nothing tied to the install

SHIPPED_MECHANISM_CASE = """\
title: invented burner outlet
system:
  mechanism: h2o2.yaml
  phases: {ohmech: [H2, O2, H2O, OH, H, O, N2]}
reactions: complete
feed: {H2: 2.0, O2: 1.0, N2: 4.0}
specified: {temperature: 2500 K, pressure: 1 bar}
"""


def install_paths() -> list[str]:
    return [str(Path(d).resolve()) for d in ct.get_data_directories() if Path(d).is_absolute()]


def test_shipped_mechanism_is_named_as_the_user_named_it(tmp_path):
    case = tmp_path / "burner.yaml"
    case.write_text(SHIPPED_MECHANISM_CASE, encoding="utf-8")
    report = tmp_path / "burner.html"
    rc, out, err = run(["check", case, "--json"])
    rc2, text, err2 = run(["check", case, "--report", report])
    assert rc == rc2 == 0, err + err2
    doc = json.loads(out)
    assert doc["system"]["source"] == "h2o2.yaml"
    html = report.read_text(encoding="utf-8")
    assert f"mechanism (ships with cantera {ct.__version__})" in html
    for where in [out, text, html]:
        assert not any(p in where for p in install_paths()) and "site-packages" not in where


def test_reactions_header_names_the_shipped_file_with_version_and_hash():
    import hashlib
    rc, out, err = run(["reactions", "h2o2.yaml"])
    found = Path(next(p for p in install_paths() if (Path(p) / "h2o2.yaml").is_file())) / "h2o2.yaml"
    digest = hashlib.sha256(found.read_bytes()).hexdigest()
    assert out.splitlines()[0] == (f"Stoichiometric analysis of h2o2.yaml (ships with cantera {ct.__version__}, "
                                   f"SHA-256 {digest})")
    assert not any(p in out for p in install_paths())


def test_golden_files_carry_no_machine_path():
    for path in (ROOT / "tests" / "golden").glob("*.*"):
        text = path.read_text(encoding="utf-8")
        assert "site-packages" not in text and ".venv" not in text and str(ROOT) not in text, path.name


# ------------------------------------------------------------------ item 11: help a newcomer reads

@pytest.mark.parametrize("argv, words", [
    (["new", "--help"], ["PATH where to write the starter case", "--quiet write the file without printing"]),
    (["species", "--help"], ["--limit N", "show at most N matching species", "--json", "as a JSON list"]),
    (["sweep", "--help"], ["CASE", "the case file to sweep"]),
])
def test_help_explains_every_argument(argv, words, capsys):
    from auditor.cli import main
    with pytest.raises(SystemExit) as info:
        main(argv)
    assert info.value.code == 0
    text = " ".join(capsys.readouterr().out.split())
    for w in words:
        assert " ".join(w.split()) in text, (w, text)
