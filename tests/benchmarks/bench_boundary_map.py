"""Cost of tracing the phase boundaries of a map (issue 22, item 4) against the same map
without them (a script; pytest does not collect it).

    python tests/benchmarks/bench_boundary_map.py [--repeats N]

A temperature x pressure map of a 1:1 methane-steam reformer feed
(tests/data/margins_carbon_window.yaml, 400-900 degC by 25 K, 1-41 bar by 4 bar: 231 points,
with the carbon window crossing it), in this process, side by side in one run (the case's
workspace built once and shared, as a sweep worker does):

* map     -- every grid point solved and certified, then the CSV and the picture;
* traced  -- the same, plus the boundaries traced along the edges that change phase set,
             their CSV, and the picture with the traced lines and the design point.

Each number is the best of 3 rounds (``--repeats N``).  Target: traced <= 1.5 x map.
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from auditor import sweep  # noqa: E402
from auditor.boundaries import trace  # noqa: E402
from auditor.case import load_case  # noqa: E402
from auditor.executors import InProcess  # noqa: E402
from auditor.report.boundary_lines import boundaries_csv  # noqa: E402
from auditor.report.sweep_plot import sweep_svg  # noqa: E402
from auditor.sweep_files import csv_text  # noqa: E402

REPEATS = 3
TARGET = 1.5
CASE = ROOT / "tests" / "data" / "margins_carbon_window.yaml"
VARY = ["temperature=400:900:25 degC", "pressure=1:41:4"]


def _map(case, axes, traced: bool):
    results = sweep.run_sweep(str(CASE), axes, InProcess())
    csv_text(results)
    bmap = trace(str(CASE), axes, results, case) if traced else None
    if bmap is not None:
        boundaries_csv(bmap)
    sweep_svg(results, axes, case.coexisting, case=case, units=["degC", "bar"], boundaries=bmap)
    return results, bmap


def main(argv: list[str]) -> int:
    repeats = int(argv[argv.index("--repeats") + 1]) if "--repeats" in argv else REPEATS
    case = load_case(CASE)
    axes = [sweep.parse_vary(v) for v in VARY]
    results, bmap = _map(case, axes, True)          # warm: the workspace and the data files
    best = {False: float("inf"), True: float("inf")}
    for _ in range(repeats):
        for traced in (False, True):
            t = time.perf_counter()
            _map(case, axes, traced)
            best[traced] = min(best[traced], time.perf_counter() - t)
    ratio = best[True] / best[False]
    edges = len({(c.first, c.second) for c in bmap.crossings})
    print(f"case: {CASE.name}; {len(results)} points; {edges} edges change phase set; "
          f"{len(bmap.crossings)} crossings in {len(bmap.lines)} line(s), "
          f"{sum(c.traced for c in bmap.crossings)} located by the bracketed solve")
    print(f"map           {best[False] * 1e3:9.1f} ms")
    print(f"with tracing  {best[True] * 1e3:9.1f} ms   ratio {ratio:.3f} (target <= {TARGET:g})")
    return 0 if ratio <= TARGET else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
