"""Cost of the ideal-gas check (issue 23) against the plain check (a script; pytest does not
collect it).

    python tests/benchmarks/bench_real_gas.py [--repeats N]

For each case, side by side in one run (the case file read once, caches warm):

* plain -- ``audit.run(case)`` with the ideal-gas check switched off
           (``settings.REAL_GAS_AUDIT_PRESSURE_PA`` set to infinity): counting stages,
           minimisation and certificate;
* full  -- ``audit.run(case)`` as shipped, with the check;
* check -- ``real_gas.audit_ideal_gas`` alone on the certified state (its own cost).

Every number is the best of 20 rounds (``--repeats N``), each round running every
measurement once: the minimum is the least disturbed by other load.  Target: full <= 2 x plain.
"""
from __future__ import annotations

import math
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from auditor import audit, settings  # noqa: E402
from auditor import case as case_mod  # noqa: E402
from auditor.audit import counting_stages  # noqa: E402
from auditor.equilibrium import Workspace, confirm  # noqa: E402
from auditor.equilibrium.real_gas import audit_ideal_gas  # noqa: E402

REPEATS = 20
TARGET = 2.0
CASES = [ROOT / "cases" / "ammonia_converter_ratio.yaml",
         ROOT / "tests" / "data" / "real_gas" / "ammonia_300atm.yaml",
         ROOT / "tests" / "data" / "real_gas" / "methanol_80bar.yaml",
         ROOT / "auditor" / "data" / "default_case.yaml"]


def _timed(f) -> float:
    t = time.perf_counter()
    f()
    return time.perf_counter() - t


def measure(path: Path, repeats: int) -> tuple[float, float, float]:
    case = case_mod.load_case(path)
    system, _, analysis, count, spec = counting_stages(case)
    ws = Workspace(system, analysis)
    check = confirm(case, system, analysis, count, spec, ws)
    on = settings.REAL_GAS_AUDIT_PRESSURE_PA
    best = [math.inf] * 3
    for _ in range(repeats):
        settings.REAL_GAS_AUDIT_PRESSURE_PA = math.inf
        try:
            plain = _timed(lambda: audit.run(case))
        finally:
            settings.REAL_GAS_AUDIT_PRESSURE_PA = on
        full = _timed(lambda: audit.run(case))
        alone = _timed(lambda: audit_ideal_gas(case, system, analysis, check, ws))
        best = [min(b, x) for b, x in zip(best, (plain, full, alone))]
    return tuple(best)


def main(argv: list[str]) -> int:
    repeats = int(argv[argv.index("--repeats") + 1]) if "--repeats" in argv else REPEATS
    print(f"ideal-gas check cost, best of {repeats} rounds (target: full <= {TARGET:g} x plain)")
    print(f"{'case':<34} {'plain ms':>9} {'full ms':>9} {'check ms':>9} {'full/plain':>11}")
    worst = 0.0
    for path in CASES:
        plain, full, alone = measure(path, repeats)
        ratio = full / plain
        worst = max(worst, ratio)
        print(f"{path.stem:<34} {plain * 1e3:9.2f} {full * 1e3:9.2f} {alone * 1e3:9.2f} {ratio:11.2f}")
    print(f"worst ratio {worst:.2f}: {'within' if worst <= TARGET else 'ABOVE'} the target of {TARGET:g}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
