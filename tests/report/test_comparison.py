"""Several operating cases in one report (issue 24, item 4): the comparison table first with the
differences marked, then each case's sections with its own hashes and provenance; the HTML one
is laid out by headless Chromium.  Cases: invented start-of-run, end-of-run and turndown
operating points of one reformer (tests/data/operating_cases)."""
from __future__ import annotations

import hashlib
import json
import shutil
import subprocess
from pathlib import Path

import pytest

from clitools import run

CASES = Path(__file__).resolve().parents[1] / "data" / "operating_cases"
NAMES = ["start_of_run.yaml", "end_of_run.yaml", "turndown.yaml"]
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser") or shutil.which("google-chrome")
PDFTOTEXT = shutil.which("pdftotext")


def _report(tmp_path, suffix):
    out = tmp_path / f"cases{suffix}"
    rc, stdout, err = run(["check", *NAMES, "--report", out], cwd=CASES)
    assert rc == 1, err                              # the turndown case deposits carbon
    assert len(stdout.strip().splitlines()) == 3     # one summary line per case
    return out


def _sha(name):
    return hashlib.sha256((CASES / name).read_bytes()).hexdigest()


def test_json_has_the_comparison_and_every_case_with_its_inputs(tmp_path):
    doc = json.loads(_report(tmp_path, ".json").read_text(encoding="utf-8"))
    assert doc["kind"] == "comparison" and [c["case"] for c in doc["cases"]] == NAMES
    rows = {r["item"]: r for r in doc["comparison"]}
    assert rows["verdict"]["values"] == ["well-posed", "well-posed", "not-confirmed"] and rows["verdict"]["differs"]
    assert rows["degrees of freedom F"]["values"] == ["2", "2", "2"] and not rows["degrees of freedom F"]["differs"]
    assert rows["phases present at equilibrium"]["values"][2] == "gas, graphite"
    assert rows["flow basis"]["values"] == ["per hour"] * 3
    for case, name in zip(doc["cases"], NAMES):
        assert case["inputs"][0] == {"path": name, "sha256": _sha(name), "role": "case file"}
        assert case["versions"]["auditor"] and case["generated"]


def test_markdown_puts_the_comparison_first_and_marks_differences(tmp_path):
    text = _report(tmp_path, ".md").read_text(encoding="utf-8")
    assert text.index("## Comparison") < text.index("## Case 1: R-101 start of run") \
        < text.index("## Case 2: R-101 end of run") < text.index("## Case 3: R-101 turndown, low steam")
    assert "| **verdict** | well-posed | well-posed | not-confirmed | yes |" in text
    assert "| degrees of freedom F | 2 | 2 | 2 |  |" in text
    assert text.count("### Provenance") == 3
    for name in NAMES:
        assert _sha(name) in text


@pytest.mark.skipif(not (CHROMIUM and PDFTOTEXT), reason="needs headless Chromium and pdftotext (poppler-utils)")
def test_three_case_html_in_headless_chromium(tmp_path):
    page = _report(tmp_path, ".html")
    html = page.read_text(encoding="utf-8")
    assert html.count('<tr class="differs">') >= 5 and 'id="case-3-verdict"' in html
    pdf = tmp_path / "cases.pdf"
    proc = subprocess.run([CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                           "--disable-background-networking", "--disable-component-update", "--disable-sync",
                           f"--user-data-dir={tmp_path / 'profile'}", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
                           page.as_uri()], capture_output=True, text=True, timeout=180)
    if not pdf.exists():
        pytest.skip(f"Chromium could not print here: {proc.stderr[-300:]}")
    pages = [p for p in subprocess.run([PDFTOTEXT, "-layout", str(pdf), "-"], capture_output=True,
                                       text=True).stdout.split("\f") if p.strip()]
    first = pages[0]
    assert "Comparison of 3 operating cases" in first
    assert "start_of_run.yaml" in first and "turndown.yaml" in first and "not-confirmed" in first
    everything = "\n".join(pages)
    for title in ("Case 1: R-101 start of run", "Case 2: R-101 end of run", "Case 3: R-101 turndown, low steam"):
        assert title in everything
    assert everything.count("Mass basis: graphite") == 1      # graphite deposits in the turndown case only
