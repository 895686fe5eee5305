"""The JSON contract is complete: every key ``check --json`` emits is described in the
schema shipped with the package (``auditor/data/check.schema.json``).  A key added without
a description fails here; maps keyed by names (species, phases, tolerances) are described
by their ``additionalProperties``."""
from __future__ import annotations

import json
from importlib import resources
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
GOLDEN = sorted((ROOT / "tests" / "golden").glob("*.json"))


def schema() -> dict:
    return json.loads((resources.files("auditor") / "data" / "check.schema.json").read_text(encoding="utf-8"))


def _alternatives(node: dict) -> list[dict]:
    return node.get("oneOf", node.get("anyOf", [node])) if isinstance(node, dict) else []


def undocumented(doc, node, path="") -> list[str]:
    """Key paths of ``doc`` that the schema ``node`` does not describe."""
    out: list[str] = []
    if isinstance(doc, dict):
        props, extra = {}, None
        for alt in _alternatives(node):
            props.update(alt.get("properties", {}))
            extra = extra or (alt.get("additionalProperties") if isinstance(alt.get("additionalProperties"), dict)
                              else None)
        for key, value in doc.items():
            if key in props:
                out += undocumented(value, props[key], f"{path}/{key}")
            elif extra is not None:
                out += undocumented(value, extra, f"{path}/*")
            else:
                out.append(f"{path}/{key}")
    elif isinstance(doc, list):
        items = next((alt["items"] for alt in _alternatives(node) if "items" in alt), {})
        for value in doc:
            out += undocumented(value, items, f"{path}[]")
    return sorted(set(out))


@pytest.mark.parametrize("golden", GOLDEN, ids=[p.stem for p in GOLDEN])
def test_every_key_of_the_golden_documents_is_documented(golden):
    assert undocumented(json.loads(golden.read_text(encoding="utf-8")), schema()) == []


@pytest.mark.parametrize("with_context", [False, True], ids=["check --json", "filed report"])
def test_every_key_of_a_fresh_document_is_documented(with_context):
    pytest.importorskip("cantera")
    from auditor.audit import audit_file
    from auditor.report.document import check_document
    doc = check_document(audit_file(resources.files("auditor") / "data" / "default_case.yaml"), with_context)
    assert undocumented(doc, schema()) == []


def test_an_undocumented_key_is_caught():
    assert undocumented({"schema": 1, "surprise": 2, "phase_rule": {"species": 3, "odd": 1}}, schema()) == \
        ["/phase_rule/odd", "/surprise"]
