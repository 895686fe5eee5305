"""Cost of the stoichiometric analysis of one phase with many species and two reactions
(a script; pytest does not collect it).

    python tests/benchmarks/bench_many_species.py

``auditor reactions FILE --json`` as a user runs it (a fresh process) on invented C/H gases of
1000 to 8000 species (tests/test_stoichiometry_scale.py writes them): the time per species
should stay about constant (linear cost), where the incremental choice of the complements
grew quadratically (2000: 2.0 s, 4000: 5.6 s, 8000: 15.9 s before).
"""
from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from test_stoichiometry_scale import many_species  # noqa: E402


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        for n in (1000, 2000, 4000, 8000):
            path = many_species(Path(tmp), n)
            best = float("inf")
            for _ in range(3):
                t0 = time.perf_counter()
                subprocess.run([sys.executable, "-m", "auditor", "reactions", str(path), "--json"],
                               check=True, stdout=subprocess.DEVNULL)
                best = min(best, time.perf_counter() - t0)
            print(f"{n:5d} species: {best:.2f} s, {1e3 * best / n:.3f} ms a species")


if __name__ == "__main__":
    main()
