"""Benchmark of ``auditor reactions`` on the largest mechanism that ships with cantera
(a script, not a test).

    python tests/benchmarks/bench_reactions.py [--runs N]

Both ratios are measured in the same run against a reference computed on the same file,
with single-threaded BLAS for the reference (``OPENBLAS_NUM_THREADS=1``, set for every
child process), each repetition in fresh processes so that imports and cantera's file
parse are paid as a user pays them:

(a) whole process: ``auditor reactions n-hexane-NUIG-2015.yaml --json`` with stdout a pipe
    (compact JSON), against a script that loads the same file with cantera and computes
    numpy's float rank of its stoichiometric matrix.  Target <= 1.0.
(b) the tool's own work once cantera has built the phase: matrix extraction, exact
    elimination, every dependent combination, the derived basis, the document and its
    compact JSON text (``scipy.sparse`` is imported inside this window when cantera's
    sparse arrays first need it), against ``numpy.linalg.matrix_rank`` of the dense
    reactions x species matrix in the same process.  Target <= 0.3.

Printed: each repetition's ratios, then the median and the range (min - max).
"""
from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

import cantera as ct

ROOT = Path(__file__).resolve().parents[2]
HEXANE = Path(ct.get_data_directories()[-1]) / "example_data" / "n-hexane-NUIG-2015.yaml"
ENV = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1",
       "PYTHONPATH": str(ROOT)}

REFERENCE = """
import sys, warnings
warnings.simplefilter("ignore")
import numpy as np, cantera as ct
gas = ct.Solution(sys.argv[1], transport_model=None)
nu = gas.product_stoich_coeffs - gas.reactant_stoich_coeffs
print(np.linalg.matrix_rank(nu.T))
"""

IN_PROCESS = """
import gc, json, sys, time, warnings
warnings.simplefilter("ignore")
import numpy as np
from auditor import stoichiometry, system
from auditor.report.reactions import reactions_document
path = sys.argv[1]
sol, _ = system.cantera_phase(path, "gas")          # cantera's parse and build: not the tool's work
nu = (sol.product_stoich_coeffs - sol.reactant_stoich_coeffs).T.copy()
gc.disable()                                        # as the CLI does for this work
t0 = time.perf_counter()
chem = system.from_mechanism(path)
t1 = time.perf_counter()
analysis = stoichiometry.analyse(chem, stoichiometry.from_mechanism(chem))
t2 = time.perf_counter()
text = json.dumps(reactions_document(analysis, chem.library_warnings, chem), separators=(",", ":"))
t3 = time.perf_counter()
gc.enable()
rank = int(np.linalg.matrix_rank(nu))
t4 = time.perf_counter()
assert rank == analysis.rank, (rank, analysis.rank)   # the float rank agrees here; it never decides
print(json.dumps({"extraction": t1 - t0, "analysis": t2 - t1, "document": t3 - t2, "tool": t3 - t0,
                  "numpy_rank": t4 - t3, "rank": rank}))
"""


def timed(argv: list[str]) -> tuple[float, str]:
    t = time.perf_counter()
    proc = subprocess.run(argv, env=ENV, capture_output=True, text=True, check=True)
    return time.perf_counter() - t, proc.stdout


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=5)
    runs = ap.parse_args().runs
    py = sys.executable
    # warm the file cache and the interpreter's bytecode once
    timed([py, "-m", "auditor", "reactions", str(HEXANE), "--json"])
    timed([py, "-c", REFERENCE, str(HEXANE)])
    whole, own = [], []
    print(f"n-hexane-NUIG-2015.yaml, {runs} repetitions, OPENBLAS_NUM_THREADS=1")
    for i in range(runs):
        t_tool, out = timed([py, "-m", "auditor", "reactions", str(HEXANE), "--json"])
        doc = json.loads(out)
        t_ref, ref_out = timed([py, "-c", REFERENCE, str(HEXANE)])
        assert int(ref_out) == doc["rank"], (ref_out, doc["rank"])
        _, stage_out = timed([py, "-c", IN_PROCESS, str(HEXANE)])
        st = json.loads(stage_out)
        whole.append(t_tool / t_ref)
        own.append(st["tool"] / st["numpy_rank"])
        print(f"  run {i + 1}: (a) tool process {t_tool:.2f} s / reference {t_ref:.2f} s = {whole[-1]:.2f}   "
              f"(b) tool {st['tool']:.3f} s (extraction {st['extraction']:.3f}, analysis {st['analysis']:.3f}, "
              f"document+JSON {st['document']:.3f}) / numpy rank {st['numpy_rank']:.3f} s = {own[-1]:.3f}")
    print(f"(a) whole process / cantera load + numpy rank: median {statistics.median(whole):.2f} "
          f"(range {min(whole):.2f} - {max(whole):.2f}); target <= 1.0")
    print(f"(b) tool's own work / numpy rank:              median {statistics.median(own):.3f} "
          f"(range {min(own):.3f} - {max(own):.3f}); target <= 0.3")


if __name__ == "__main__":
    main()
