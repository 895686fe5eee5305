"""The Python interface (issue 24, item 1): ``auditor.check`` on a case file, a mapping and
cantera objects gives the CLI's JSON; errors are the CLI's located ones; sweeps return records
and write the CLI's CSV.  Equal documents are compared, so no physical value is asserted here
beyond "cantera run directly" agreement of the same solve."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
import yaml

import auditor
from auditor.errors import CaseError
from clitools import read_csv, run

ROOT = Path(__file__).resolve().parent.parent
CASE = "cases/reformer_carbon_risk.yaml"


def _cli_json(path, cwd=ROOT):
    rc, out, err = run(["check", path, "--json"], cwd=cwd)
    assert rc in (0, 1), err
    return json.loads(out)


def _without(doc, *keys):
    return {k: v for k, v in doc.items() if k not in keys}


def test_import_is_cheap():
    # importing the package loads neither cantera nor the stages (the CLI's cold start)
    code = "import sys, auditor; print(sorted(m for m in ('cantera', 'auditor.audit', 'auditor.api', 'yaml') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_check_a_file_gives_the_cli_json(monkeypatch):
    monkeypatch.chdir(ROOT)
    r = auditor.check(CASE)
    assert r.to_dict() == _cli_json(CASE)
    assert isinstance(r, auditor.Audit) and r.verdict == "not-confirmed"
    assert r.counts["degrees_of_freedom"] == 2 and r.certificate["unique"] is True
    assert r.exit_status == 1 and "graphite" in r.reason
    html = r._repr_html_()
    assert html.startswith('<div class="auditor-report">') and "Equilibrium and certificate" in html
    assert "<html" not in html and "Sign-off" not in html
    with pytest.raises(Exception):
        r.verdict = "well-posed"      # frozen


def test_check_a_mapping_gives_the_same_audit_as_the_file(monkeypatch):
    monkeypatch.chdir(ROOT)
    mapping = yaml.safe_load((ROOT / CASE).read_text(encoding="utf-8"))
    doc = auditor.check(mapping).to_dict()
    assert doc["case"] == "<mapping>"
    assert _without(doc, "case") == _without(_cli_json(CASE), "case")


def test_a_mapping_with_a_mistake_raises_the_located_case_error():
    mapping = {"system": {"source": "packaged", "phases": {"gas": ["CH4", "H2O", "CO", "CO2", "H2"]}},
               "feed": {"CH4": "1 kmool", "H2O": 2}, "specified": {"temperature": 900, "pressure": "1 bar"}}
    with pytest.raises(CaseError) as exc:
        auditor.check(mapping)
    keys = [p.key_path for p in exc.value.problems]
    assert keys == ["feed.CH4", "specified.temperature"]
    assert all(p.file == "<mapping>" and p.line for p in exc.value.problems)
    assert "kmool" in str(exc.value) and "needs a unit" in str(exc.value)


def test_check_cantera_objects(tmp_path):
    ct = pytest.importorskip("cantera")
    gas = ct.Solution("h2o2.yaml")
    gas.TPX = 1500.0, ct.one_atm, "H2:2, O2:1"
    via_solution = auditor.check(gas)
    case = tmp_path / "h2o2_case.yaml"
    case.write_text(yaml.safe_dump(auditor.case_from_cantera(gas), sort_keys=False), encoding="utf-8")
    from_file = _cli_json(str(case), cwd=tmp_path)
    assert _without(via_solution.to_dict(), "case", "title") == _without(from_file, "case", "title")
    assert via_solution.verdict == "well-posed"
    # a Mixture of the same phase with the same amounts (cantera's species_moles are kmol)
    mix = ct.Mixture([(gas, 0.003)])
    via_mixture = auditor.check(mix, specified={"temperature": "1500 K", "pressure": "1 atm"})
    assert via_mixture.verdict == "well-posed"
    eq_s, eq_m = via_solution.equilibrium, via_mixture.equilibrium
    # same composition on the 1 mol and the 3 mol basis (cantera run directly, through the tool)
    xs, xm = dict(eq_s.phases[0].mole_fractions), dict(eq_m.phases[0].mole_fractions)
    assert all(abs(xs[k] - xm[k]) < 1e-9 for k in xs)
    assert eq_m.phases[0].moles == pytest.approx(3 * eq_s.phases[0].moles, rel=1e-9)


def test_an_object_built_in_memory_is_refused_in_words():
    ct = pytest.importorskip("cantera")
    gas = ct.Solution(thermo="ideal-gas", species=ct.Species.list_from_file("h2o2.yaml")[:3])
    with pytest.raises(auditor.InputError, match="write_yaml"):
        auditor.check(gas)


def test_sweep_records_and_csv_match_the_cli(tmp_path, monkeypatch):
    monkeypatch.chdir(ROOT)
    records = auditor.sweep_records(CASE, vary=["temperature=800:1000:100"])
    assert [r.index for r in records] == [0, 1, 2] and all(r.certified for r in records)
    auditor.write_csv(records, tmp_path / "api.csv")
    rc, _, err = run(["sweep", CASE, "--vary", "temperature=800:1000:100", "--jobs", "1", "--quiet",
                      "--out", tmp_path / "cli"])
    assert rc in (0, 1), err
    assert read_csv(tmp_path / "api.csv") == read_csv(tmp_path / "cli.csv")
