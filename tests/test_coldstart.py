"""A cold `auditor check` of a small case imports no heavy library it does not use
(the cost people feel in hooks and pipelines; timed in tests/benchmarks/bench_coldstart.py)."""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

PROBE = """
import json, sys
from auditor.cli import main
try:
    status = main(["check", "cases/reformer_design_point.yaml"])
except SystemExit as exc:
    status = exc.code
heavy = sorted({m.split(".")[0] for m in sys.modules} & {"pint", "scipy", "sympy", "dask", "distributed"})
sys.stderr.write(json.dumps({"status": status, "heavy": heavy}))
"""


def test_cold_check_imports_no_heavy_library():
    done = subprocess.run([sys.executable, "-c", PROBE], cwd=ROOT, capture_output=True, text=True)
    found = json.loads(done.stderr.strip().splitlines()[-1])
    assert found == {"status": 0, "heavy": []}
