"""The layout rules of the design (§3) and the house style, checked on the source itself.

Imports point one way: cli -> report -> audit -> stages -> {system, exact}; computation
modules never print, never import the report or CLI layers, and keep plotting libraries out.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "auditor"
PRESENTATION = {"cli", "report", "__main__"}
COMPUTATION = sorted(p for p in PACKAGE.glob("*.py") if p.stem not in PRESENTATION)


def imports_of(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            mod = node.module or ""
            out.add(("." * node.level) + mod)
        elif isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
    return out


@pytest.mark.parametrize("path", COMPUTATION, ids=lambda p: p.stem)
def test_computation_modules_do_not_import_presentation(path):
    bad = {m for m in imports_of(path) if m.lstrip(".").split(".")[0] in ("report", "cli", "matplotlib", "argparse")}
    assert not bad, f"{path.name} imports {bad}"


@pytest.mark.parametrize("path", COMPUTATION, ids=lambda p: p.stem)
def test_computation_modules_never_print(path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    calls = [n.lineno for n in ast.walk(tree)
             if isinstance(n, ast.Call) and isinstance(n.func, ast.Name) and n.func.id == "print"]
    assert not calls, f"{path.name} prints at lines {calls}"


def test_report_modules_do_not_import_cli():
    for path in (PACKAGE / "report").glob("*.py"):
        assert not any(m.lstrip(".").startswith("cli") for m in imports_of(path)), path.name


def test_only_exact_does_rank_decisions_with_sympy_or_flint():
    # exact arithmetic lives in exact.py; nothing else brings in a computer-algebra matrix
    for path in PACKAGE.rglob("*.py"):
        mods = {m.split(".")[0] for m in imports_of(path)}
        assert not mods & {"sympy", "flint"} or path.name == "exact.py", path.name


def test_stages_do_not_import_the_stages_after_them():
    order = ["system", "stoichiometry", "phase_rule", "structure", "equilibrium", "audit"]
    for i, stage in enumerate(order):
        later = set(order[i + 1:])
        mods = {m.lstrip(".").split(".")[0] for m in imports_of(PACKAGE / f"{stage}.py")}
        assert not mods & later, f"{stage} imports a later stage: {mods & later}"
