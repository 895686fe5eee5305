"""Cold start of ``auditor check`` as whole processes (a script; pytest does not collect it).

    python tests/benchmarks/bench_coldstart.py [--base PATH] [--rounds N]

In one run, alternately, N rounds of three fresh Python processes (the same interpreter):

* new     -- ``python -m auditor check cases/reformer_design_point.yaml`` from this tree;
* base    -- the same command from the base commit (default ab698dd, before this work):
             a temporary ``git worktree`` of it is made inside a temp directory and removed
             afterwards, or ``--base PATH`` names a checkout of it;
* cantera -- a minimal cantera script doing the same thermodynamic work: load the species
             of the two packaged databases, build the gas, equilibrate it at T and P.

Medians of the N rounds (default 7).  Targets: new <= 0.6 x base, new <= 1.5 x cantera.

Bytecode: an installed package runs from compiled bytecode (pip writes it), while an
editable checkout under ``PYTHONDONTWRITEBYTECODE=1`` compiles every module from source on
every run (about 0.07 s for auditor), which cantera, installed, never pays.  So by default
the processes write and read bytecode in a temporary ``PYTHONPYCACHEPREFIX`` (filled by
one warm-up run of each command), as an installed tool would; ``--as-is`` keeps the
environment unchanged instead.
"""
from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
BASE_COMMIT = "ab698dd"
CASE = "cases/reformer_design_point.yaml"

CANTERA_SCRIPT = """
import cantera as ct
gas_species = ct.Species.list_from_file("nasa_gas.yaml")
condensed = ct.Species.list_from_file("nasa_condensed.yaml")
wanted = ["CH4", "H2O", "CO", "CO2", "H2", "N2"]
by_name = {s.name: s for s in gas_species}
gas = ct.Solution(thermo="ideal-gas", species=[by_name[n] for n in wanted])
gas.TPX = 1123.15, 25e5, {"CH4": 1.0, "H2O": 3.0, "N2": 0.02}
gas.equilibrate("TP")
print(gas.X)
"""


def run(cmd: list[str], cwd: Path, env: dict) -> float:
    t0 = time.perf_counter()
    done = subprocess.run(cmd, cwd=cwd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    elapsed = time.perf_counter() - t0
    if done.returncode not in (0, 1):
        raise SystemExit(f"{' '.join(cmd)} in {cwd} failed ({done.returncode}): {done.stderr.decode()[-500:]}")
    return elapsed


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--base", type=Path, help=f"a checkout of the base commit (default: a temporary worktree of {BASE_COMMIT})")
    ap.add_argument("--base-commit", default=BASE_COMMIT)
    ap.add_argument("--rounds", type=int, default=7)
    ap.add_argument("--as-is", action="store_true",
                    help="keep the environment's bytecode settings (see above) instead of a temporary bytecode cache")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        base = args.base
        made = None
        if base is None:
            made = Path(tmp) / "base"
            subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", "-q", str(made), args.base_commit],
                           check=True)
            base = made
        try:
            script = Path(tmp) / "cantera_minimal.py"
            script.write_text(CANTERA_SCRIPT, encoding="utf-8")
            # each tree's own package first on the path, so the base runs its own code
            env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
            if not args.as_is:
                env.pop("PYTHONDONTWRITEBYTECODE", None)
                env["PYTHONPYCACHEPREFIX"] = str(Path(tmp) / "pycache")
            env_new = dict(env, PYTHONPATH=str(ROOT))
            env_base = dict(env, PYTHONPATH=str(base))
            cmds = {
                "new": (["python", "-m", "auditor", "check", CASE], ROOT, env_new),
                "base": (["python", "-m", "auditor", "check", CASE], base, env_base),
                "cantera": (["python", str(script)], ROOT, env),
            }
            for name, (cmd, cwd, e) in cmds.items():      # warm the file cache once
                run([sys.executable if c == "python" else c for c in cmd], cwd, e)
            times: dict[str, list[float]] = {k: [] for k in cmds}
            for _ in range(max(1, args.rounds)):
                for name, (cmd, cwd, e) in cmds.items():
                    times[name].append(run([sys.executable if c == "python" else c for c in cmd], cwd, e))
        finally:
            if made is not None:
                subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force", str(made)], check=False)
    med = {k: statistics.median(v) for k, v in times.items()}
    mode = "environment as is" if args.as_is else "bytecode cached as for an installed package"
    print(f"cold 'auditor check {CASE}', whole processes, {args.rounds} alternating rounds ({mode}); seconds")
    for k, v in times.items():
        print(f"  {k:<8} median {med[k]:.3f}  (min {min(v):.3f}, max {max(v):.3f})")
    r_base = med["new"] / med["base"]
    r_ct = med["new"] / med["cantera"]
    print(f"new / base ({args.base_commit})     {r_base:.2f}   target <= 0.6 -> {'MET' if r_base <= 0.6 else 'NOT MET'}")
    print(f"new / minimal cantera   {r_ct:.2f}   target <= 1.5 -> {'MET' if r_ct <= 1.5 else 'NOT MET'}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
