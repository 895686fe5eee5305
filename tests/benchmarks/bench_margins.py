"""Cost of the margins (issue 22) against the plain check (a script; pytest does not collect it).

    python tests/benchmarks/bench_margins.py [--repeats N]

The reformer design point with graphite offered (cases/reformer_design_point.yaml), side by
side in one run (the case file read once, caches warm):

* plain   -- ``audit.run(case)`` without margins: counting stages, minimisation, certificate;
* margins -- ``audit.run(case, margins=True)`` with the feed axes feed.H2O and ratio.O/C
             (T and P are always probed): boundaries and sensitivities.

Each number is the best of 20 rounds (``--repeats N``).  Target: margins <= 10 x plain.
"""
from __future__ import annotations

import sys
import time
from dataclasses import replace
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from auditor import audit  # noqa: E402
from auditor import case as case_mod  # noqa: E402

REPEATS = 20
TARGET = 10.0
CASE = ROOT / "cases" / "reformer_design_point.yaml"
AXES = ("feed.H2O", "ratio.O/C")


def _timed(f) -> float:
    t = time.perf_counter()
    f()
    return time.perf_counter() - t


def main(argv: list[str]) -> int:
    repeats = int(argv[argv.index("--repeats") + 1]) if "--repeats" in argv else REPEATS
    case = case_mod.load_case(CASE)
    plain, full = replace(case, margins=None), replace(case, margins=AXES)
    result = audit.run(full)
    found = [b for b in result.margins.boundaries if b.value is not None]
    best_plain = best_full = float("inf")
    for _ in range(repeats):
        best_plain = min(best_plain, _timed(lambda: audit.run(plain)))
        best_full = min(best_full, _timed(lambda: audit.run(full)))
    ratio = best_full / best_plain
    print(f"case: {CASE.name}; probed: temperature, pressure, {', '.join(AXES)}; boundaries found: {len(found)}")
    print(f"plain check   {best_plain * 1e3:8.2f} ms")
    print(f"with margins  {best_full * 1e3:8.2f} ms   ratio {ratio:.2f} (target <= {TARGET:g})")
    return 0 if ratio <= TARGET else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
