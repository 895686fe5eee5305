"""The layout rules of the design (§3) and the house style, checked on the source itself.

Imports point one way: cli -> report -> audit -> stages -> {system, exact}; computation
modules never print, never import the report or CLI layers, and keep plotting libraries out.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "auditor"
PRESENTATION = {"cli", "cli_parser", "api", "report", "__main__"}   # api: the Python interface, a peer of the CLI
COMPUTATION = sorted([*(p for p in PACKAGE.glob("*.py") if p.stem not in PRESENTATION),
                      *PACKAGE.glob("equilibrium/*.py"), *PACKAGE.glob("system/*.py"),
                      *PACKAGE.glob("case/*.py")])


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


@pytest.mark.parametrize("path", COMPUTATION, ids=lambda p: str(p.relative_to(PACKAGE)))
def test_computation_modules_do_not_import_presentation(path):
    bad = {m for m in imports_of(path) if m.lstrip(".").split(".")[0] in ("report", "cli", "matplotlib", "argparse")}
    assert not bad, f"{path.name} imports {bad}"


@pytest.mark.parametrize("path", COMPUTATION, ids=lambda p: str(p.relative_to(PACKAGE)))
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


def test_package_does_not_import_sympy_and_does_not_require_it():
    """sympy checks the exact ranks in the tests only: it belongs to the test extra (issue 19, item 11)."""
    tomllib = pytest.importorskip("tomllib")     # Python 3.11 on
    assert not [p.name for p in PACKAGE.rglob("*.py") if "sympy" in {m.split(".")[0] for m in imports_of(p)}]
    project = tomllib.loads((PACKAGE.parent / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    assert not [d for d in project["dependencies"] if d.lower().startswith("sympy")]
    assert [d for d in project["optional-dependencies"]["test"] if d.lower().startswith("sympy")]


def test_readme_links_stay_inside_the_repository():
    import re
    readme = (PACKAGE.parent / "README.md").read_text(encoding="utf-8")
    outside = [t for t in re.findall(r"`([^`\s]+\.(?:md|py|yaml|txt|toml))`|\]\(([^)]+)\)", readme)
               for t in t if t and (t.startswith(("../", "/")) or "/../" in t)]
    assert not outside, outside


# Import direction (DEVELOPERS.md): cli -> report -> audit -> {stoichiometry, phase_rule,
# structure, equilibrium} -> {system, exact}; case -> system, units.  (system/from_case.py
# names the Case type for annotations only.)  A room may import only
# rooms of a lower rank; the support modules may be imported from anywhere.
SUPPORT = {"errors", "settings", "findings", "verdicts", "sentences", "exact", "units", "dm", "dm_plain", "yaml_nodes",
           "yaml_syntax", "common_names", "__version__"}
RANK = {"system": 1, "case": 2, "stoichiometry": 3, "phase_rule": 4, "structure": 5, "equilibrium": 6,
        "hindered": 7, "audit": 8, "sweep_files": 8.5, "sweep": 9, "executors": 9, "boundaries": 9.5, "report": 10,
        "cli_parser": 10.5, "cli": 11, "api": 11, "__main__": 12}


def internal_imports(path: Path) -> set[str]:
    """The rooms of the package (top-level module or subpackage) that ``path`` imports,
    its own room left out."""
    rel = path.relative_to(PACKAGE)
    own = rel.parts[0].removesuffix(".py")
    depth = len(rel.parts) - 1              # 1 inside a subpackage
    out = set()
    tree = ast.parse(path.read_text(encoding="utf-8"))
    # imports for type annotations only (``if TYPE_CHECKING:``) do not run
    typing_only = {id(n) for block in ast.walk(tree) if isinstance(block, ast.If)
                   and isinstance(block.test, ast.Name) and block.test.id == "TYPE_CHECKING"
                   for n in ast.walk(block)}
    for node in ast.walk(tree):
        if id(node) in typing_only:
            continue
        if isinstance(node, ast.ImportFrom):
            if node.level == 0:
                parts = (node.module or "").split(".")
                names = [parts[1]] if parts[0] == "auditor" and len(parts) > 1 else []
            elif node.level <= depth:
                continue                    # inside its own subpackage
            else:
                names = [node.module.split(".")[0]] if node.module else [a.name for a in node.names]
            out.update(names)
        elif isinstance(node, ast.Import):
            out.update(a.name.split(".")[1] for a in node.names if a.name.startswith("auditor."))
    return out - {own}


RANK["sweep_energy"] = 8.5     # the sweep axes inside a specification: below sweep, beside sweep_files


@pytest.mark.parametrize("path", sorted(PACKAGE.rglob("*.py")), ids=lambda p: str(p.relative_to(PACKAGE)))
def test_imports_point_one_way(path):
    own = path.relative_to(PACKAGE).parts[0].removesuffix(".py")
    if own in SUPPORT or own == "__init__":
        return
    bad = {m for m in internal_imports(path) if m not in SUPPORT and RANK.get(m, 99) >= RANK[own]}
    assert not bad, f"{path.relative_to(PACKAGE)} imports {bad}, which come later in the pipeline"


def test_every_room_has_a_rank():
    rooms = {p.relative_to(PACKAGE).parts[0].removesuffix(".py") for p in PACKAGE.rglob("*.py")}
    assert rooms - SUPPORT - {"__init__"} <= set(RANK), rooms - SUPPORT - set(RANK)
