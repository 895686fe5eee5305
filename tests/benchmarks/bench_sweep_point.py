"""Cost of one certified sweep point against a bare cantera multiphase solve of the same
point, in process, one worker (a script; pytest does not collect it).

    python tests/benchmarks/bench_sweep_point.py [--repeats N]

Case: the pre-reformer demo (``cases/reformer_carbon_risk.yaml``: reformer gas and
graphite), swept over an 847-point grid, 77 temperatures from 450 to 1000 degC by 11
pressures from 1 to 41 bar.

* bare  -- ``cantera.Mixture.equilibrate('TP', solver='vcs')`` at every point, on the same
           cantera phases the tool builds (same species, densities, same solver options),
           nothing else; two starts: every species absent from the feed seeded at 1e-12 of the
           feed (the fastest start found, the reference of the target), and the feed as a user
           writes it with only the empty graphite phase seeded (cantera needs that much);
* sweep -- ``auditor.sweep.evaluate_block`` over the same points: the minimisation, its
           certificate (balances, element potentials, affinities, absent-phase driving
           forces, uniqueness, ln K additivity) and the point's record.

Best of N rounds of each (the minimum is the least disturbed by other load), with the
BLAS threads as the environment has them.  Target: sweep <= 2.5 x bare per point.
"""
from __future__ import annotations

import argparse
import contextlib
import io
import time
import warnings
from pathlib import Path

import numpy as np

from auditor import sweep

TARGET = 2.5
CASE = str(Path(__file__).resolve().parents[2] / "cases" / "reformer_carbon_risk.yaml")


def grid_axes():
    t = sweep.Axis("temperature", tuple(723.15 + 550.0 * i / 76 for i in range(77)))
    p = sweep.Axis("pressure", tuple(1e5 * (1 + 4.0 * j) for j in range(11)))
    return [t, p]


def bare_round(points, vary, seed_all: bool = True) -> float:
    """Every point solved by cantera's vcs on the tool's own phases, from the feed (every absent
    species seeded, or only the graphite phase)."""
    prepared = sweep._prepared(CASE, vary)
    case, system, ws = prepared.case, prepared.stages.system, prepared.workspace
    from auditor.equilibrium.workspace import feed_vector
    import cantera as ct
    n0 = feed_vector(case, system)
    mix = ct.Mixture([(ph, 0.0) for ph in ws.model.phases])
    start = n0.copy()
    if seed_all:
        start[start == 0] = 1e-12 * n0.sum()
    else:
        start[-1] = 1e-12 * n0.sum()        # C(gr), the last species: an empty phase stops vcs
    t0 = time.perf_counter()
    for p in points:
        mix.T, mix.P = p.temperature_K, p.pressure_Pa
        mix.species_moles = start
        with warnings.catch_warnings(), contextlib.redirect_stdout(io.StringIO()):
            warnings.simplefilter("ignore")
            mix.equilibrate("TP", solver="vcs", max_steps=2000, max_iter=200, estimate_equil=0)
    return time.perf_counter() - t0


def sweep_round(points, vary) -> float:
    t0 = time.perf_counter()
    results = sweep.evaluate_block(CASE, vary, points)
    elapsed = time.perf_counter() - t0
    assert all(r.certified for r in results), "a point was not certified"
    return elapsed


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args()
    case = sweep.load_case(CASE)
    points = sweep.grid(case, grid_axes())
    vary = ("pressure", "temperature")
    sweep.evaluate_block(CASE, vary, points[:20])        # build the workspace and warm the tables
    bare_round(points[:20], vary)
    b = min(bare_round(points, vary) for _ in range(args.repeats))
    b_feed = min(bare_round(points, vary, seed_all=False) for _ in range(args.repeats))
    s = min(sweep_round(points, vary) for _ in range(args.repeats))
    n = len(points)
    print(f"reformer gas + graphite, {n}-point T x P grid, in process, best of {args.repeats}")
    print(f"  bare cantera vcs:        {1e3 * b / n:.3f} ms a point (absent species seeded)")
    print(f"  bare cantera vcs:        {1e3 * b_feed / n:.3f} ms a point (the feed as written, graphite seeded)")
    print(f"  certified sweep point:   {1e3 * s / n:.3f} ms a point")
    print(f"  ratio sweep/bare: {s / b:.2f} against the seeded start (target <= {TARGET}); "
          f"{s / b_feed:.2f} against the feed as written")
    print(f"  graphite present at {sum('graphite' in r.phases_present for r in sweep.evaluate_block(CASE, vary, points))}"
          f" of {n} points")


if __name__ == "__main__":
    np.seterr(all="ignore")
    main()
