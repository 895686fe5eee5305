"""Golden JSON: ``auditor check CASE --json`` of every demo case and of a set of the suite's
reference cases, compared with the documents written before a restructuring.

A restructuring must leave behaviour unchanged: the documents must agree except in what
depends on the machine or the run (the tool's version, the case's absolute path, the time
the document was generated), which ``normalise`` removes.  Floats are compared to
``FLOAT_RTOL`` relative (and ``FLOAT_ATOL`` absolute, for residuals that are zero to
rounding): the same arithmetic may round differently in its last bits when the order of
cantera's solves within one process differs.

The text report (``auditor check CASE``) is kept beside each document and compared exactly,
except residuals printed below ``TEXT_RESIDUAL_FLOOR`` (balances, affinities at rounding
level differ between numpy and BLAS builds), which both sides show as ``<floor``.

Regenerate after an intended change of output: ``python tests/test_golden.py``.
"""
from __future__ import annotations

import contextlib
import io
import json
import math
import re
from pathlib import Path

import pytest

pytest.importorskip("cantera")

from auditor.cli import main  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
GOLDEN = ROOT / "tests" / "golden"
FLOAT_RTOL = 1e-7     # relative: last-bit differences of one solve, carried through a certificate
FLOAT_ATOL = 1e-12    # absolute: residuals at rounding level (balances, affinities)
HEAT_ATOL_J = 1e-6    # absolute, for heats in J (an adiabatic balance's zero is rounding of ~1e5 J sums)
TEXT_RESIDUAL_FLOOR = re.compile(r"\b\d\.\d+e-(1[0-9]|[2-9][0-9]|\d{3})\b")   # printed numbers below 1e-10

# every demo case, the packaged default, and reference cases taken from the suite (copied
# under tests/golden/cases/ so that the golden set does not depend on a test's text)
CASES = sorted([*(p.relative_to(ROOT) for p in (ROOT / "cases").glob("*.yaml")),
                Path("auditor/data/default_case.yaml"),
                *(p.relative_to(ROOT) for p in (GOLDEN / "cases").glob("*.yaml")
                  if not p.name.endswith("_mech.yaml"))])


def golden_name(case: Path) -> str:
    return "__".join(case.with_suffix("").parts) + ".json"


def document(case: Path) -> dict:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        main(["check", str(ROOT / case), "--json"])
    # paths inside the repository (a mechanism's, the case's) relative to its root
    return normalise(json.loads(out.getvalue().replace(str(ROOT) + "/", "")), case)


def text(case: Path) -> str:
    """The text report, with the case's absolute path made relative."""
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        main(["check", str(ROOT / case)])
    return out.getvalue().replace(str(ROOT) + "/", "")


def normalise(doc: dict, case: Path) -> dict:
    """Drop what depends on the machine or the run."""
    doc = dict(doc)
    doc["case"] = case.as_posix()
    doc.pop("generated", None)
    doc["tool"] = {k: v for k, v in doc.get("tool", {}).items() if k != "version"}
    return doc


def differences(found, expected, where="") -> list[str]:
    if isinstance(expected, dict) and isinstance(found, dict):
        out = [f"{where}/{k}: missing" for k in expected if k not in found]
        out += [f"{where}/{k}: unexpected" for k in found if k not in expected]
        for k in expected:
            if k in found:
                out += differences(found[k], expected[k], f"{where}/{k}")
        return out
    if isinstance(expected, list) and isinstance(found, list):
        if len(found) != len(expected):
            return [f"{where}: {len(found)} entries, expected {len(expected)}"]
        return [d for i, (f, e) in enumerate(zip(found, expected)) for d in differences(f, e, f"{where}/{i}")]
    if isinstance(expected, float) and isinstance(found, (int, float)) and not isinstance(found, bool):
        # heats in J are sums of enthalpies of order 1e5 J: zero to rounding is 1e-10 J, not 1e-12
        atol = HEAT_ATOL_J if where.endswith("_J") else FLOAT_ATOL
        if math.isclose(found, expected, rel_tol=FLOAT_RTOL, abs_tol=atol):
            return []
    elif found == expected and type(found) is type(expected):
        return []
    return [f"{where}: {found!r}, expected {expected!r}"]


@pytest.mark.parametrize("case", CASES, ids=[c.as_posix() for c in CASES])
def test_document_unchanged(case):
    expected = json.loads((GOLDEN / golden_name(case)).read_text(encoding="utf-8"))
    found = document(case)
    assert differences(found, expected) == []


@pytest.mark.parametrize("case", CASES, ids=[c.as_posix() for c in CASES])
def test_text_unchanged(case):
    # the text rounds every float, so it is compared exactly
    expected = (GOLDEN / golden_name(case)).with_suffix(".txt").read_text(encoding="utf-8")
    assert masked(text(case)) == masked(expected)


def masked(report: str) -> str:
    """The text with rounding-level residuals (below 1e-10) replaced by one word."""
    return TEXT_RESIDUAL_FLOOR.sub("<1e-10", report)


if __name__ == "__main__":
    for case in CASES:
        written = json.dumps(document(case), indent=1, sort_keys=True, allow_nan=False)
        (GOLDEN / golden_name(case)).write_text(written + "\n", encoding="utf-8")
        (GOLDEN / golden_name(case)).with_suffix(".txt").write_text(text(case), encoding="utf-8")
        print("wrote", golden_name(case))
