"""Benchmark of the exact stoichiometric analysis (a script, not a test).

    python tests/benchmarks/bench_stoichiometry.py

(a) complete analysis ``stoichiometry.analyse(system, from_mechanism(system))`` of the
    n-hexane mechanism (1268 species x 5336 reactions) from an already loaded system,
    best of 3;
(b) ``numpy.linalg.matrix_rank`` of the dense float reactions x species matrix, best of 3,
    with numpy's default BLAS threads and with one BLAS thread; ratio (a)/(b), target <= 1.0;
(c) gri30: sympy's classic ``Matrix(nu).rank()`` against the analysis; speed-up, target >= 100x;
(d) peak memory of the analysis: tracemalloc peak of Python allocations and the process's
    maximum resident set size; target < 500 MB.
"""
from __future__ import annotations

import contextlib
import ctypes
import gc
import glob
import os
import resource
import sys
import time
import tracemalloc
from pathlib import Path

import cantera as ct
import numpy as np
import sympy

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))  # run from a checkout

from auditor import stoichiometry, system  # noqa: E402

DATA = Path(ct.get_data_directories()[-1])
HEXANE = DATA / "example_data" / "n-hexane-NUIG-2015.yaml"
GRI30 = DATA / "gri30.yaml"


def best_of(n: int, fn):
    times, result = [], None
    for _ in range(n):
        gc.collect()
        t = time.perf_counter()
        result = fn()
        times.append(time.perf_counter() - t)
    return min(times), result


@contextlib.contextmanager
def blas_threads(n: int):
    """Set OpenBLAS's thread count for numpy's bundled library (no-op if not found)."""
    setter = getter = None
    for path in glob.glob(os.path.join(os.path.dirname(np.__file__), os.pardir, "numpy.libs", "*openblas*")):
        lib = ctypes.CDLL(path)
        for name in ("scipy_openblas_set_num_threads64_", "openblas_set_num_threads64_", "openblas_set_num_threads"):
            if hasattr(lib, name):
                setter = getattr(lib, name)
                getter = getattr(lib, name.replace("set_", "get_"))
                break
    if setter is None:
        yield None
        return
    before = getter()
    setter(n)
    try:
        yield before
    finally:
        setter(before)


def maxrss_mb() -> float:
    """High-water mark of the process's resident set (ru_maxrss is in KiB on Linux)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def dense_nu(reactions, n_species: int) -> np.ndarray:
    out = np.zeros((len(reactions), n_species))
    for i, r in enumerate(reactions):
        for k, c in r.stoich:
            out[i, k] = float(c)
    return out


def main() -> int:
    rows = []

    # ---------------------------------------------------------------- (a), (b) n-hexane
    t = time.perf_counter()
    hexane = system.from_mechanism(HEXANE)
    load_s = time.perf_counter() - t
    rss_loaded = maxrss_mb()
    rx = stoichiometry.from_mechanism(hexane)
    stoichiometry.analyse(hexane, rx)  # first run, before numpy and sympy raise the high-water mark
    rss_analysed = maxrss_mb()
    t_analyse, analysis = best_of(3, lambda: stoichiometry.analyse(hexane, stoichiometry.from_mechanism(hexane)))
    nu = dense_nu(rx, hexane.n_species)
    t_numpy, rank_numpy = best_of(3, lambda: np.linalg.matrix_rank(nu))  # numpy as installed
    with blas_threads(1) as default_threads:
        t_numpy1, rank_numpy1 = best_of(3, lambda: np.linalg.matrix_rank(nu))
    assert analysis.rank == rank_numpy == rank_numpy1, (analysis.rank, rank_numpy, rank_numpy1)
    t_numpy_best = min(t_numpy, t_numpy1)
    ratio = t_analyse / t_numpy_best

    # ---------------------------------------------------------------- (c) gri30 vs sympy
    gri = system.from_mechanism(GRI30)
    gri_rx = stoichiometry.from_mechanism(gri)
    t_ours_gri, gri_analysis = best_of(3, lambda: stoichiometry.analyse(gri, stoichiometry.from_mechanism(gri)))
    M = sympy.Matrix([[sympy.Rational(int(x)) if float(x).is_integer() else sympy.nsimplify(x) for x in row]
                      for row in dense_nu(gri_rx, gri.n_species).tolist()])
    t_sympy, rank_sympy = best_of(1, lambda: M.rank())
    assert rank_sympy == gri_analysis.rank, (rank_sympy, gri_analysis.rank)
    speedup = t_sympy / t_ours_gri

    # ---------------------------------------------------------------- (d) memory
    gc.collect()
    tracemalloc.start()
    stoichiometry.analyse(hexane, stoichiometry.from_mechanism(hexane))
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss_end = maxrss_mb()
    peak_mb = peak / 2**20

    # ---------------------------------------------------------------- table
    print(f"n-hexane: {hexane.n_species} species x {len(rx)} reactions, rank A = {analysis.formula_rank}, "
          f"rank nu = {analysis.rank}, complete = {analysis.complete}; load {load_s:.2f} s (not timed below)")
    print(f"gri30:    {gri.n_species} species x {len(gri_rx)} reactions, rank nu = {gri_analysis.rank}")
    print(f"machine:  {os.cpu_count()} cores, load average {os.getloadavg()[0]:.2f}; "
          f"numpy {np.__version__}, default BLAS threads {default_threads}")
    print()
    rows = [
        ("(a) analyse n-hexane (exact, complete), best of 3", f"{t_analyse:.3f} s", ""),
        ("(b) numpy matrix_rank n-hexane, default BLAS threads", f"{t_numpy:.3f} s", ""),
        ("    numpy matrix_rank n-hexane, 1 BLAS thread", f"{t_numpy1:.3f} s", ""),
        ("    ratio (a) / fastest numpy", f"{ratio:.2f}", "<= 1.0 " + ("PASS" if ratio <= 1.0 else "FAIL")),
        ("(c) sympy Matrix.rank() gri30, once", f"{t_sympy:.3f} s", ""),
        ("    analyse gri30, best of 3", f"{t_ours_gri * 1000:.1f} ms", ""),
        ("    speed-up", f"{speedup:.0f}x", ">= 100x " + ("PASS" if speedup >= 100 else "FAIL")),
        ("(d) tracemalloc peak of analyse n-hexane", f"{peak_mb:.1f} MB",
         "< 500 MB " + ("PASS" if peak_mb < 500 else "FAIL")),
        ("    process max RSS after loading n-hexane (cantera)", f"{rss_loaded:.0f} MB", ""),
        ("    process max RSS after the first analysis", f"{rss_analysed:.0f} MB",
         "< 500 MB " + ("PASS" if rss_analysed < 500 else "FAIL")),
        ("    process max RSS at the end (numpy SVD, sympy incl.)", f"{rss_end:.0f} MB", "(information)"),
    ]
    w0 = max(len(r[0]) for r in rows)
    w1 = max(len(r[1]) for r in rows)
    print(f"{'measurement':<{w0}}  {'value':>{w1}}  target")
    print("-" * (w0 + w1 + 18))
    for name, value, target in rows:
        print(f"{name:<{w0}}  {value:>{w1}}  {target}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
