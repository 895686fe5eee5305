"""A notebook executed in a real Jupyter kernel (issue 24): the Python interface as a notebook
user meets it, with the audit's rich display."""
from __future__ import annotations

from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")
pytest.importorskip("ipykernel")

ROOT = Path(__file__).resolve().parent.parent


def test_the_notebook_runs_and_shows_the_report():
    nb = nbformat.read(ROOT / "tests" / "data" / "python_interface.ipynb", as_version=4)
    nbclient.NotebookClient(nb, timeout=300, kernel_name="python3",
                            resources={"metadata": {"path": str(ROOT)}}).execute()
    shown = nb.cells[1].outputs[0]["data"]
    assert "text/html" in shown
    html = shown["text/html"]
    assert "Verdict: not-confirmed" in html and "Equilibrium composition" in html
    assert nb.cells[2].outputs[0]["text"].strip() == "not-confirmed 2 True"
    assert nb.cells[3].outputs[0]["text"].strip() == "well-posed h"
    refused = nb.cells[4].outputs[0]["text"]
    assert refused.startswith("refused: <mapping>:") and "feed.CH4" in refused
