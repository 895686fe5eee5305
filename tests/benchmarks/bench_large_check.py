"""``auditor check`` of a T,P case on the largest shipped mechanism against a bare cantera
script (a script; pytest does not collect it).

    python tests/benchmarks/bench_large_check.py [--repeats N]

Both run as a user runs them: a fresh process each (imports, loading the 1 268-species
n-hexane mechanism), with the BLAS threads and bytecode cache as the environment has them.

* bare  -- a script that loads ``n-hexane-NUIG-2015.yaml`` with cantera and calls
           ``equilibrate('TP')`` on a stoichiometric n-hexane/air feed at 1 800 K, 1 atm;
* check -- ``auditor check CASE --json`` on the same state (``reactions: complete``):
           every stage of the audit, the minimisation and its certificate.

Rounds alternate the two commands; the best of N rounds of each is compared (the minimum
is the least disturbed by other load).  Target: check <= 1.5 x bare.
"""
from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

TARGET = 1.5
CASE = """\
title: stoichiometric n-hexane/air products on the largest shipped mechanism (benchmark)
system:
  mechanism: n-hexane-NUIG-2015.yaml
reactions: complete
feed: {NC6H14: 1, O2: 9.5, N2: 35.72}
specified: {temperature: 1800 K, pressure: 1 atm}
"""
BARE = """\
import warnings
from pathlib import Path
import cantera as ct
warnings.simplefilter("ignore")
path = Path(ct.get_data_directories()[-1]) / "example_data" / "n-hexane-NUIG-2015.yaml"
gas = ct.Solution(str(path))
gas.TPX = 1800.0, 101325.0, {"NC6H14": 1, "O2": 9.5, "N2": 35.72}
gas.equilibrate("TP")
print(gas["CO2"].X[0])
"""


def timed(cmd: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(cmd, check=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeats", type=int, default=7)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        case, bare = Path(tmp) / "hexane.yaml", Path(tmp) / "bare.py"
        case.write_text(CASE, encoding="utf-8")
        bare.write_text(BARE, encoding="utf-8")
        check_cmd = [sys.executable, "-m", "auditor", "check", str(case), "--json"]
        bare_cmd = [sys.executable, str(bare)]
        timed(check_cmd), timed(bare_cmd)           # warm the bytecode and file caches
        b, c = [], []
        for _ in range(args.repeats):
            b.append(timed(bare_cmd))
            c.append(timed(check_cmd))
    ratio = min(c) / min(b)
    print(f"n-hexane-NUIG-2015.yaml (1268 species), T,P check, best of {args.repeats}")
    print(f"  bare cantera load + equilibrate('TP'): {min(b):.3f} s (median {sorted(b)[len(b) // 2]:.3f} s)")
    print(f"  auditor check --json:                  {min(c):.3f} s (median {sorted(c)[len(c) // 2]:.3f} s)")
    print(f"  ratio check/bare: {ratio:.2f} (target <= {TARGET})")


if __name__ == "__main__":
    main()
