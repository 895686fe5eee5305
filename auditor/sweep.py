"""Envelope sweeps: the Gibbs confirmation of one case over a grid of temperature and pressure.

The counting stages run once; each grid point re-runs only the minimisation and its
certificate.  Points are grouped in blocks (one unit of work for an executor); every
worker builds the case's cantera objects once and reuses them (module-level caches), so
nothing heavy crosses process or network boundaries: a block is (case path, points).
Results come back in any order and are assembled in grid order, so the output does not
depend on the executor or the number of workers.
"""
from __future__ import annotations

import functools
import json
import math
from dataclasses import dataclass, replace
from typing import Callable, Iterable, Sequence

from .case import Case, load_case, parse_quantity
from .errors import InputError, Problem

VARIABLES = {"temperature": ("temperature", "K"), "pressure": ("pressure", "bar")}


@dataclass(frozen=True)
class Axis:
    name: str                  # temperature or pressure
    values: tuple[float, ...]  # SI (K, Pa)


def parse_vary(text: str) -> Axis:
    """``temperature=600:1400:25`` (K) or ``pressure=1:40:5`` (bar); a unit may follow the step,
    e.g. ``temperature=500:900:50 degC``.  The end point is included when the steps reach it."""
    def fail(msg):
        raise InputError(Problem("--vary", msg, text))
    if "=" not in text:
        fail("expected NAME=START:STOP:STEP, e.g. temperature=600:1400:25")
    name, rng = (t.strip() for t in text.split("=", 1))
    if name not in VARIABLES:
        fail(f"can vary only {', '.join(VARIABLES)}, not {name!r}")
    parts = rng.split(":")
    if len(parts) != 3:
        fail("expected START:STOP:STEP")
    kind, default_unit = VARIABLES[name]
    last = parts[2].strip().split(None, 1)
    unit = last[1] if len(last) > 1 else default_unit
    try:
        start, stop, step = float(parts[0]), float(parts[1]), float(last[0])
    except ValueError:
        fail(f"START, STOP and STEP must be numbers in {default_unit} (or give a unit after STEP)")
    if not all(math.isfinite(v) for v in (start, stop, step)) or step <= 0 or stop < start:
        fail("need START <= STOP and STEP > 0, all finite")
    n = int(math.floor((stop - start) / step + 1e-9)) + 1
    if n > 100_000:
        fail(f"{n} values is too many for one axis (limit 100000)")
    values = []
    for i in range(n):
        v = start + i * step
        try:
            si = parse_quantity(f"{v!r} {unit}", kind)
        except ValueError as exc:
            fail(str(exc))
        if si <= 0:
            fail(f"{name} must stay above zero (got {v} {unit})")
        values.append(si)
    return Axis(name, tuple(values))


@dataclass(frozen=True)
class Point:
    index: int
    temperature_K: float | None
    pressure_Pa: float | None


def grid(case: Case, axes: Sequence[Axis]) -> list[Point]:
    """Grid points in a fixed order (the first axis varies fastest)."""
    names = [a.name for a in axes]
    if not axes or len(axes) > 2 or len(set(names)) != len(names):
        raise InputError(Problem("--vary", "vary temperature, pressure, or both, each once"))
    if len(axes) == 1:
        combos = [{axes[0].name: v} for v in axes[0].values]
    else:
        a0, a1 = axes
        combos = [{a0.name: v0, a1.name: v1} for v1 in a1.values for v0 in a0.values]
    return [Point(i, c.get("temperature", case.specified.temperature_K), c.get("pressure", case.specified.pressure_Pa))
            for i, c in enumerate(combos)]


@dataclass(frozen=True)
class PointResult:
    index: int
    temperature_K: float | None
    pressure_Pa: float | None
    verdict: str
    phases_present: tuple[str, ...]
    mole_fractions: tuple[tuple[str, float], ...]   # phase:species -> x
    phase_moles: tuple[tuple[str, float], ...]
    message: str = ""

    def to_json(self) -> str:
        return json.dumps({"index": self.index, "temperature_K": self.temperature_K, "pressure_Pa": self.pressure_Pa,
                           "verdict": self.verdict, "phases_present": list(self.phases_present),
                           "mole_fractions": [list(x) for x in self.mole_fractions],
                           "phase_moles": [list(x) for x in self.phase_moles], "message": self.message},
                          sort_keys=True)

    @classmethod
    def from_json(cls, text: str) -> "PointResult":
        d = json.loads(text)
        return cls(d["index"], d["temperature_K"], d["pressure_Pa"], d["verdict"], tuple(d["phases_present"]),
                   tuple((a, b) for a, b in d["mole_fractions"]), tuple((a, b) for a, b in d["phase_moles"]),
                   d.get("message", ""))


@functools.lru_cache(maxsize=8)
def _prepared(case_path: str, vary: tuple[str, ...]):
    """Counting stages of a case, done once per worker process."""
    from .audit import counting_stages
    case = load_case(case_path)
    # the varied variables count as specified, whatever the case file says
    spec = case.specified
    spec = replace(spec, temperature_K=spec.temperature_K if spec.temperature_K or "temperature" not in vary else 300.0,
                   pressure_Pa=spec.pressure_Pa if spec.pressure_Pa or "pressure" not in vary else 1e5)
    case = replace(case, specified=spec)
    system, _, analysis, count, structure = counting_stages(case)
    return case, system, analysis, count, structure


def evaluate_point(case_path: str, vary: tuple[str, ...], point: Point) -> PointResult:
    from .equilibrium import confirm
    case, system, analysis, count, structure = _prepared(case_path, vary)
    spec = replace(case.specified, temperature_K=point.temperature_K, pressure_Pa=point.pressure_Pa)
    here = replace(case, specified=spec)
    try:
        eq = confirm(here, system, analysis, count, structure)
    except Exception as exc:  # a point that fails is recorded, never fatal
        return PointResult(point.index, point.temperature_K, point.pressure_Pa, "failed", (), (), (),
                           f"{type(exc).__name__}: {exc}")
    if not eq.solved:
        msg = "; ".join(f.message for f in eq.findings if f.severity != "note") or \
            "; ".join(f.message for f in eq.findings)
        verdict = structure.status if structure.status != "well-posed" else "not-confirmed"
        return PointResult(point.index, point.temperature_K, point.pressure_Pa, verdict, (), (), (), msg)
    xs = tuple((f"{p.name}:{k}", round(v, 12)) for p in eq.phases for k, v in p.mole_fractions)
    moles = tuple((p.name, round(p.moles, 12)) for p in eq.phases)
    msg = "; ".join(f.message for f in eq.findings if f.severity == "error")
    return PointResult(point.index, eq.temperature_K, eq.pressure_Pa,
                       "well-posed" if eq.confirmed else "not-confirmed", eq.phases_present, xs, moles, msg)


def evaluate_block(case_path: str, vary: tuple[str, ...], points: Sequence[Point]) -> list[PointResult]:
    """One unit of work: a block of grid points of one case."""
    return [evaluate_point(case_path, vary, p) for p in points]


def blocks_of(points: Sequence[Point], workers: int, block_size: int | None = None,
              blocks_per_worker: int = 8) -> list[list[Point]]:
    """Blocks big enough that scheduling overhead stays small, small enough to balance load
    (and to keep progress and resume fine-grained: at most 500 points a block)."""
    if block_size is None:
        block_size = max(1, min(500, -(-len(points) // max(1, workers * blocks_per_worker))))
    return [list(points[i:i + block_size]) for i in range(0, len(points), block_size)]


def csv_text(results: Sequence[PointResult]) -> str:
    """CSV of the sweep in grid order (deterministic: fixed columns, repr of floats)."""
    import csv
    import io
    x_cols: list[str] = []
    p_cols: list[str] = []
    for r in results:
        for k, _ in r.mole_fractions:
            if k not in x_cols:
                x_cols.append(k)
        for k, _ in r.phase_moles:
            if k not in p_cols:
                p_cols.append(k)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["index", "temperature_K", "pressure_Pa", "verdict", "phases_present"]
               + [f"x[{c}]" for c in x_cols] + [f"moles[{c}]" for c in p_cols] + ["message"])
    for r in sorted(results, key=lambda r: r.index):
        xs, ps = dict(r.mole_fractions), dict(r.phase_moles)
        w.writerow([r.index, _num(r.temperature_K), _num(r.pressure_Pa), r.verdict, " ".join(r.phases_present)]
                   + [_num(xs.get(c)) for c in x_cols] + [_num(ps.get(c)) for c in p_cols] + [r.message])
    return buf.getvalue()


def _num(v) -> str:
    return "" if v is None else repr(float(v))


def run_sweep(case_path: str, axes: Sequence[Axis], executor, *, done: Iterable[PointResult] = (),
              on_result: Callable[[PointResult], None] | None = None, block_size: int | None = None,
              workers: int = 1) -> list[PointResult]:
    """Run every grid point not already ``done``; return all results in grid order.

    A block that raises is retried once; its points are then recorded as failed.
    """
    case = load_case(case_path)
    points = grid(case, axes)
    vary = tuple(sorted(a.name for a in axes))
    finished = {r.index: r for r in done}
    todo = [p for p in points if p.index not in finished]
    blocks = blocks_of(todo, workers, block_size, getattr(executor, "blocks_per_worker", 8))
    for block, outcome in executor.map_blocks(evaluate_block, [(case_path, vary, b) for b in blocks]):
        if isinstance(outcome, BaseException):
            outcome = [PointResult(p.index, p.temperature_K, p.pressure_Pa, "failed", (), (), (),
                                   f"{type(outcome).__name__}: {outcome}") for p in block[2]]
        for r in outcome:
            finished[r.index] = r
            if on_result:
                on_result(r)
    return [finished[p.index] for p in points]
