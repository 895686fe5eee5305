"""Sweeps: the Gibbs confirmation of one case over a grid of temperature, pressure and feed.

Axes are temperature, pressure, the amount of one feed species (``feed.H2O``), an element
ratio of the feed at a fixed total feed amount (``ratio.O/C``), or a ternary grid of three
elements at fixed T and P (``ternary``: the feed is made of one single-element species per
element, e.g. graphite, H2 and O2, in every atom ratio i:j:k with i + j + k = divisions).

The counting stages run once; each grid point re-runs only the minimisation and its
certificate.  Points are grouped in blocks (one unit of work for an executor); every
worker builds the case's stages and equilibrium workspace once and reuses them, so
nothing heavy crosses process or network boundaries: a block is (case path, points).
Results come back in any order and are assembled in grid order, so the output does not
depend on the executor or the number of workers.
"""
from __future__ import annotations

import functools
import math
from fractions import Fraction
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Callable, Iterable, NamedTuple, Sequence

from .case import Case, load_case, outside_limits, parse_quantity
from .errors import InputError, Problem
from .sweep_energy import SPEC_AXES, VARIABLES, check_state_axes, with_spec_axes
from .sweep_files import PointResult, csv_text  # noqa: F401  (csv_text: re-exported for callers)
from .verdicts import Verdict

if TYPE_CHECKING:
    from .audit import CountingStages
    from .equilibrium import Workspace

FEED, RATIO, TERNARY = "feed.", "ratio.", "ternary"


@dataclass(frozen=True)
class Axis:
    name: str                  # temperature, pressure, feed.SPECIES, ratio.X/Y, or ternary
    values: tuple              # SI (K, Pa, mol), a plain ratio, or (i, j, k) atom counts for a ternary
    elements: tuple[str, ...] = ()   # ternary: its three elements, in the order of (i, j, k)


def parse_vary(text: str) -> Axis:
    """``temperature=600:1400:25`` (K), ``pressure=1:40:5`` (bar), ``feed.H2O=1:5:0.5`` (mol of a
    feed species), ``feed-temperature=300:700:50`` (K, the feed temperature of the case's energy
    balance), ``fill-pressure=1:10:1`` (bar, the pressure a rigid vessel is filled at) or ``ratio.O/C=0.5:3:0.25`` (atoms of O per atom of C in the feed); a unit may
    follow the step, e.g. ``temperature=500:900:50 degC``.  The end point is included when the
    steps reach it."""
    def fail(msg):
        raise InputError(Problem("--vary", msg, text))
    if "=" not in text:
        fail("expected NAME=START:STOP:STEP, e.g. temperature=600:1400:25")
    name, rng = (t.strip() for t in text.split("=", 1))
    if name.startswith(FEED) and name[len(FEED):]:
        kind, default_unit = "amount", "mol"
    elif name.startswith(RATIO):
        pair = name[len(RATIO):].split("/")
        if len(pair) != 2 or not all(p.strip() for p in pair) or pair[0].strip() == pair[1].strip():
            fail(f"an element ratio is written ratio.X/Y with two different elements, e.g. ratio.O/C, not {name!r}")
        kind, default_unit = "ratio", ""
    elif name in VARIABLES or name in SPEC_AXES:
        kind, default_unit = VARIABLES.get(name) or SPEC_AXES[name]
    else:
        fail(f"can vary only {', '.join([*VARIABLES, *SPEC_AXES])}, feed.SPECIES or ratio.X/Y, not {name!r}")
    parts = rng.split(":")
    if len(parts) != 3:
        fail("expected START:STOP:STEP")
    last = parts[2].strip().split(None, 1)
    unit = last[1] if len(last) > 1 else default_unit
    if kind == "ratio" and len(last) > 1:
        fail("an element ratio has no unit")
    try:
        start, stop, step = float(parts[0]), float(parts[1]), float(last[0])
    except ValueError:
        fail(f"START, STOP and STEP must be numbers{' in ' + default_unit if default_unit else ''}"
             + (" (or give a unit after STEP)" if default_unit else ""))
    if not all(math.isfinite(v) for v in (start, stop, step)) or step <= 0 or stop < start:
        fail("need START <= STOP and STEP > 0, all finite")
    n = int(math.floor((stop - start) / step + 1e-9)) + 1
    if n > 100_000:
        fail(f"{n} values is too many for one axis (limit 100000)")
    values = []
    for i in range(n):
        v = start + i * step
        if kind == "ratio":
            si = v
        else:
            try:
                si = parse_quantity(f"{v!r} {unit}", kind)
            except ValueError as exc:
                fail(str(exc))
        if si < 0 or (si == 0 and kind in ("temperature", "pressure")):
            fail(f"{name} must stay above zero (got {v} {unit})".rstrip() if kind in ("temperature", "pressure")
                 else f"{name} must not be negative (got {v})")
        beyond = outside_limits(kind, si, f"{v:g} {unit}") if kind in ("temperature", "pressure") else \
            _outside_amount_limits(kind, v, unit)
        if beyond:
            fail(f"{name}: {beyond}")
        values.append(si)
    return Axis(name, tuple(values))


def _outside_amount_limits(kind: str, v: float, unit: str) -> str | None:
    """Why a feed amount (in the unit written) or an atom ratio of an axis cannot be physical:
    outside the case file's limits for feed amounts (0 is allowed: "not fed")."""
    from . import settings
    if v == 0 or settings.MIN_FEED_AMOUNT <= v <= settings.MAX_FEED_AMOUNT:
        return None
    what = f"an amount lies between {settings.MIN_FEED_AMOUNT:g} and {settings.MAX_FEED_AMOUNT:g} in its unit " \
           f"({unit})" if kind == "amount" else \
        f"a ratio lies between {settings.MIN_FEED_AMOUNT:g} and {settings.MAX_FEED_AMOUNT:g}"
    return f"{v:g} cannot be physical: {what}, or is 0; check the number and its unit"


def parse_ternary(text: str, divisions: int, edges: bool = False) -> Axis:
    """``C,H,O`` with ``divisions`` N: every atom ratio i:j:k with i + j + k = N, each at least 1
    (or 0 with ``edges``): (N - 1)(N - 2)/2 compositions, or (N + 1)(N + 2)/2 with the edges."""
    elements = tuple(e.strip() for e in text.split(","))
    if len(elements) != 3 or not all(elements) or len(set(elements)) != 3:
        raise InputError(Problem("--ternary", "expected three different elements separated by commas, e.g. C,H,O", text))
    if not 2 <= divisions <= 200:
        raise InputError(Problem("--divisions", f"must be between 2 and 200, got {divisions}"))
    lo = 0 if edges else 1
    values = tuple((i, j, divisions - i - j) for j in range(lo, divisions + 1) for i in range(lo, divisions + 1)
                   if divisions - i - j >= lo)
    if not values:
        raise InputError(Problem("--divisions", f"{divisions} divisions leave no composition with every element present; "
                                 "use more divisions or --edges"))
    return Axis(TERNARY, values, elements)


@dataclass(frozen=True)
class Point:
    index: int
    temperature_K: float | None
    pressure_Pa: float | None
    feed: tuple | None = None                        # (label, Fraction) replacing the case's feed
    coordinates: tuple[tuple[str, float], ...] = ()  # feed-axis values of this point, for the CSV


def _as_fraction(v) -> Fraction:
    return v if isinstance(v, Fraction) else Fraction(repr(float(v)))


def _feed_points(case: Case, axes: Sequence[Axis]) -> list[tuple[tuple, tuple]] | None:
    """(feed, coordinates) for every combination of the feed axes, first axis fastest; None
    when no axis touches the feed."""
    feed_axes = [a for a in axes if a.name.startswith((FEED, RATIO)) or a.name == TERNARY]
    if not feed_axes:
        return None
    from .system import build_system
    system = build_system(case)
    base = {label: Fraction(a) for label, a in case.feed}

    def formula(label, where):
        try:
            ks = system.find(label)
        except Exception:
            ks = []
        if not ks:
            raise InputError(Problem(where, f"{label!r} is not a species of the case's system"))
        return system.species[ks[0]].formula

    if feed_axes[0].name == TERNARY:
        ax = feed_axes[0]
        pure = {}
        for label in base:
            f = formula(label, "feed")
            if len(f) == 1 and next(iter(f)) in ax.elements:
                pure.setdefault(next(iter(f)), (label, Fraction(next(iter(f.values())))))
        missing = [e for e in ax.elements if e not in pure]
        if missing:
            raise InputError(Problem("--ternary", f"the case's feed needs a species made of {' / '.join(missing)} alone "
                                     "(e.g. C(gr), H2, O2): a ternary point feeds each element as that species"))
        rest = {k: v for k, v in base.items() if k not in {lab for lab, _ in pure.values()}}
        atoms = sum(base[lab] * per for lab, per in pure.values())   # the total stays the case's
        out = []
        for ijk in ax.values:
            n = sum(ijk)
            feed = dict(rest)
            for e, c in zip(ax.elements, ijk):
                lab, per = pure[e]
                if c:
                    feed[lab] = atoms * Fraction(c, n) / per
            coords = tuple((f"atoms[{e}]", float(Fraction(c, n))) for e, c in zip(ax.elements, ijk))
            out.append((tuple(feed.items()), coords))
        return out

    combos: list[dict] = [{}]
    for ax in feed_axes:      # the first axis varies fastest
        combos = [{**c, ax.name: v} for v in ax.values for c in combos]
    ratio_axes = [a.name for a in feed_axes if a.name.startswith(RATIO)]
    labels = list(base)
    elements_of = {lab: formula(lab, "feed") for lab in labels}
    for a in feed_axes:
        if a.name.startswith(FEED):
            formula(a.name[len(FEED):], "--vary " + a.name)
    out = []
    for c in combos:
        feed = dict(base)
        for name, v in c.items():
            if name.startswith(FEED):
                label = name[len(FEED):]
                feed[label] = _as_fraction(v)
        if ratio_axes:
            feed = _ratio_feed(feed, elements_of, [(n[len(RATIO):].split("/"), c[n]) for n in ratio_axes])
        out.append((tuple((k, v) for k, v in feed.items() if v), tuple((n, float(v)) for n, v in c.items())))
    return out


def _ratio_feed(feed: dict, elements_of: dict, ratios: list) -> dict:
    """The feed with the element ratios X/Y asked: species holding none of the ratios' elements
    keep their amounts; the others change as little as possible (least squares in mol) with
    their total amount unchanged.  Exact rational arithmetic (the KKT system of an
    equality-constrained least-squares problem)."""
    from .exact import solve_rational
    ratios = [((x.strip(), y.strip()), _as_fraction(r)) for (x, y), r in ratios]
    involved = {e for (x, y), _ in ratios for e in (x, y)}
    for (x, y), _ in ratios:
        if not any(x in elements_of[lab] for lab in feed) or not any(y in elements_of[lab] for lab in feed):
            raise InputError(Problem("--vary", f"ratio.{x}/{y}: the case's feed must hold both {x} and {y}"))
    labels = [lab for lab in feed if involved & set(elements_of[lab])]
    fixed = {lab: v for lab, v in feed.items() if lab not in labels}
    rows, rhs = [[Fraction(1)] * len(labels)], [sum(feed[lab] for lab in labels)]
    for (x, y), r in ratios:
        # atoms of x from the fixed species count too: sum (A_x - r A_y) n = -(fixed part)
        rows.append([Fraction(elements_of[lab].get(x, 0)) - r * Fraction(elements_of[lab].get(y, 0)) for lab in labels])
        rhs.append(-sum((Fraction(elements_of[lab].get(x, 0)) - r * Fraction(elements_of[lab].get(y, 0))) * v
                        for lab, v in fixed.items()))
    k, m = len(labels), len(rows)
    # [I A^T; A 0] [n; mu] = [n0; rhs]
    kkt = [[Fraction(int(i == j)) for j in range(k)] + [rows[q][i] for q in range(m)] for i in range(k)]
    kkt += [rows[q] + [Fraction(0)] * m for q in range(m)]
    sol = solve_rational(kkt, [feed[lab] for lab in labels] + rhs)
    if sol is None or any(v < 0 for v in sol[:k]):
        asked = ", ".join(f"{x}/{y} = {float(r):g}" for (x, y), r in ratios)
        raise InputError(Problem("--vary", f"no feed of the species {', '.join(labels)} with their total amount "
                                 f"unchanged has {asked} with every amount non-negative"))
    return {lab: (fixed[lab] if lab in fixed else sol[labels.index(lab)]) for lab in feed}


def grid(case: Case, axes: Sequence[Axis]) -> list[Point]:
    """Grid points in a fixed order (the first axis varies fastest)."""
    names = [a.name for a in axes]
    if not axes or len(axes) > 2 or len(set(names)) != len(names):
        raise InputError(Problem("--vary", "vary one or two of temperature, pressure, feed-temperature, "
                                 "fill-pressure, feed.SPECIES, ratio.X/Y, each once"))
    if TERNARY in names and len(axes) > 1:
        raise InputError(Problem("--ternary", "a ternary map runs at the case's temperature and pressure; drop --vary"))
    if (any(n.startswith((FEED, RATIO)) for n in names) or TERNARY in names) and case.feed is None:
        raise InputError(Problem("--vary", "feed axes need a case with a feed"))
    check_state_axes(case.specified, names)
    feeds = _feed_points(case, axes)
    other_axes = [a for a in axes if a.name in VARIABLES or a.name in SPEC_AXES]
    combos: list[dict] = [{}]
    for ax in other_axes:
        combos = [{**c, ax.name: v} for v in ax.values for c in combos]
    T, P = case.specified.temperature_K, case.specified.pressure_Pa

    def point(i, c, f=(None, ())):
        spec = tuple((n, float(v)) for n, v in c.items() if n in SPEC_AXES)
        return Point(i, c.get("temperature", T), c.get("pressure", P), f[0], tuple(f[1]) + spec)
    if feeds is None:
        return [point(i, c) for i, c in enumerate(combos)]
    # the feed axis first (fastest) when it is named first, else the other axis
    first_is_feed = names[0] not in VARIABLES and names[0] not in SPEC_AXES
    order = [(f, c) for c in combos for f in feeds] if first_is_feed else [(f, c) for f in feeds for c in combos]
    return [point(i, c, f) for i, (f, c) in enumerate(order)]


class Prepared(NamedTuple):
    """What every point of one case's sweep shares in a worker: the case (its varied variables
    counted as specified), its counting stages and its equilibrium workspace."""

    case: Case
    stages: CountingStages
    workspace: Workspace


@functools.lru_cache(maxsize=8)
def _prepared(case_path: str, vary: tuple[str, ...]) -> Prepared:
    """Counting stages of a case and its equilibrium workspace, made once per worker process."""
    from .audit import counting_stages
    case = load_case(case_path)
    # the varied variables count as specified, whatever the case file says
    spec = case.specified
    spec = replace(spec, temperature_K=spec.temperature_K if spec.temperature_K or "temperature" not in vary else 300.0,
                   pressure_Pa=spec.pressure_Pa if spec.pressure_Pa or "pressure" not in vary else 1e5)
    case = replace(case, specified=spec)
    stages = counting_stages(case)
    from .equilibrium import Workspace
    # one workspace per case and worker: every point of the sweep shares its cantera objects
    return Prepared(case, stages, Workspace(stages.system, stages.analysis))


def validate(case_path: str, axes: Sequence[Axis]) -> list[Point]:
    """The grid, after the checks ``check`` makes (names, mechanism, counting stages) and those
    of the first point's inputs, so that bad input is an ``InputError`` before any file is
    written; the stages made here are the ones a point run in this process reuses."""
    case = load_case(case_path)
    points = grid(case, axes)
    vary = tuple(sorted(a.name for a in axes))
    prepared = _prepared(case_path, vary)
    first = points[0]
    if first.feed is not None:
        from .phase_rule import count_phase_rule
        from .structure import audit_specification
        here = replace(prepared.case, feed=first.feed)
        stages = prepared.stages
        audit_specification(here, stages.system, count_phase_rule(here, stages.system, stages.reactions,
                                                                  stages.analysis))
    return points


def evaluate_point(case_path: str, vary: tuple[str, ...], point: Point) -> PointResult:
    from .equilibrium import certificate_holds, confirm
    case, stages, workspace = _prepared(case_path, vary)
    system, reactions, analysis = stages.system, stages.reactions, stages.analysis
    count, structure = stages.count, stages.specification
    spec = case.specified.at_conditions(point.temperature_K, point.pressure_Pa)
    here = case.with_specified(with_spec_axes(spec, point.coordinates))
    where = (point.index, point.temperature_K, point.pressure_Pa)
    try:
        if point.feed is not None:
            # the feed enters the restriction count; the system and reactions do not change
            from .phase_rule import count_phase_rule
            from .structure import audit_specification
            here = replace(here, feed=point.feed)
            count = count_phase_rule(here, system, reactions, analysis)
            structure = audit_specification(here, system, count)
        eq = confirm(here, system, analysis, count, structure, workspace, heat=False)
    except Exception as exc:  # a point that fails is recorded, never fatal
        return PointResult(*where, Verdict.FAILED, (), (), (), f"{type(exc).__name__}: {exc}", point.coordinates)
    if not eq.solved:
        msg = "; ".join(f.message for f in eq.findings if f.severity != "note") or \
            "; ".join(f.message for f in eq.findings)
        verdict = structure.status if structure.status != Verdict.WELL_POSED else Verdict.NOT_CONFIRMED
        return PointResult(*where, verdict, (), (), (), msg, point.coordinates)
    xs = tuple((f"{p.name}:{k}", round(v, 12)) for p in eq.phases for k, v in p.mole_fractions)
    moles = tuple((p.name, round(p.moles, 12)) for p in eq.phases)
    msg = "; ".join(f.message for f in eq.findings if f.severity == "error")
    certified = certificate_holds(eq)
    # an assumed phase outside its thermo data at this T: the point is not a possible state (as ``check`` says)
    impossible = any(p in count.coexisting for p, _ in eq.set_aside)
    verdict = (Verdict.WELL_POSED if eq.confirmed else Verdict.INCONSISTENT if impossible
               else Verdict.NOT_CONFIRMED)
    return PointResult(point.index, eq.temperature_K, eq.pressure_Pa, verdict, eq.phases_present, xs, moles, msg,
                       point.coordinates, certified, eq.route if certified else "", len(eq.attempts) > 1)


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
            outcome = [PointResult(p.index, p.temperature_K, p.pressure_Pa, Verdict.FAILED, (), (), (),
                                   f"{type(outcome).__name__}: {outcome}", p.coordinates) for p in block[2]]
        for r in outcome:
            finished[r.index] = r
            if on_result:
                on_result(r)
    return [finished[p.index] for p in points]
