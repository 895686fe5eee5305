"""Text of the stages' results (auditor/report/text.py): words for people, no Python literals."""
from __future__ import annotations

import re
from pathlib import Path

import pytest

pytest.importorskip("cantera")

from auditor.audit import audit_file  # noqa: E402
from auditor.report.terminal import audit_text  # noqa: E402
from auditor.report.text import phase_rule_explanation, yes_no  # noqa: E402

CASES = Path(__file__).resolve().parents[2] / "cases"
PYTHON_LITERAL = re.compile(r"\b(True|False|None)\b")


def test_yes_no():
    assert (yes_no(True), yes_no(False), yes_no(None)) == ("yes", "no", "not decided")


@pytest.mark.parametrize("name", ["reformer_design_point.yaml", "reformer_carbon_risk.yaml",
                                  "lime_kiln_overspecified.yaml"])
def test_summary_and_explanation_say_yes_or_no(name):
    result = audit_file(CASES / name)
    lines = phase_rule_explanation(result.phase_rule)
    lines += audit_text(result).splitlines()
    assert lines and not [line for line in lines if PYTHON_LITERAL.search(line)]


def test_unique_is_said_in_words():
    # the design point is a single ideal gas: uniqueness is proved (convexity; see
    # auditor/equilibrium/uniqueness.py), so the summary says "unique yes"
    text = " ".join(audit_text(audit_file(CASES / "reformer_design_point.yaml")).split())
    assert "unique yes (proved" in text
