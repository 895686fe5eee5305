"""Benchmark: the C-H-O composition map of 1,326 points (50 divisions, sides included).

Run:  python tests/benchmarks/bench_composition_grid.py [--divisions 50] [--repeats 3]

Case ``cases/carbon_map_cho.yaml``: gas of 14 C-H-O species plus graphite at 923 K and
1 atm, fed as graphite, H2 and O2.  Prints
* how many points are certified (target: all) and failed (target: none);
* how many needed a fallback route, and which route solved them;
* the cost of fallbacks: per-point time in this process of the points that took the first
  route against those that needed another (fallbacks may cost time only where needed);
* wall time on a process pool of 2 workers against in-process, in the same run (best of
  ``--repeats``; the machine is shared, so ratios within one run are what counts), and
  that both give the same CSV bytes.
"""
from __future__ import annotations

import argparse
import statistics
import time
from collections import Counter
from pathlib import Path

from auditor import sweep
from auditor.executors import InProcess, ProcessPool

CASE = str(Path(__file__).resolve().parents[2] / "cases" / "carbon_map_cho.yaml")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--divisions", type=int, default=50)
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args()
    axes = [sweep.parse_ternary("C,H,O", args.divisions, edges=True)]
    vary = ("ternary",)
    points = sweep.grid(sweep.load_case(CASE), axes)
    sweep.evaluate_block(CASE, vary, points[:2])     # warm up: cantera databases, the case's objects

    # per point, in this process
    seconds, results = [], []
    for p in points:
        t0 = time.perf_counter()
        results.append(sweep.evaluate_point(CASE, vary, p))
        seconds.append(time.perf_counter() - t0)
    t_in = sum(seconds)
    certified = sum(r.certified for r in results)
    failed = sum(r.verdict == "failed" for r in results)
    fallback = [s for s, r in zip(seconds, results) if r.fallback]
    first = [s for s, r in zip(seconds, results) if not r.fallback]
    print(f"{len(points)} compositions ({args.divisions} divisions, sides included): {certified} certified, "
          f"{failed} failed, {len(fallback)} needed a fallback route")
    for route, n in sorted(Counter(r.route for r in results if r.fallback).items()):
        print(f"  {n:5d} solved by {route}")
    print(f"per point in-process: first route median {1e3 * statistics.median(first):.2f} ms"
          + (f", fallback points median {1e3 * statistics.median(fallback):.2f} ms "
             f"(x{statistics.median(fallback) / statistics.median(first):.1f}); fallbacks are "
             f"{100 * sum(fallback) / t_in:.1f} % of the total time" if fallback else ""))

    def timed(executor):
        best, text = float("inf"), ""
        for _ in range(args.repeats):
            t0 = time.perf_counter()
            res = sweep.run_sweep(CASE, axes, executor, workers=executor.workers)
            best = min(best, time.perf_counter() - t0)
            text = sweep.csv_text(res)
        return best, text

    t_inproc, csv_in = timed(InProcess())
    pool = ProcessPool(2)
    try:
        sweep.run_sweep(CASE, [sweep.parse_ternary("C,H,O", 6, edges=True)], pool, workers=2)  # start workers
        t_pool, csv_pool = timed(pool)
    finally:
        pool.close()
    print(f"{'executor':<14}{'workers':>8}{'wall s':>9}{'points/s':>10}{'speed-up':>10}")
    for name, w, t in (("in-process", 1, t_inproc), ("process pool", 2, t_pool)):
        print(f"{name:<14}{w:>8}{t:>9.2f}{len(points) / t:>10.0f}{t_inproc / t:>10.2f}")
    print("same CSV bytes from both executors:", "yes" if csv_in == csv_pool else "NO")


if __name__ == "__main__":
    main()
