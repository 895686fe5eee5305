"""Phase boundaries traced on a map (a two-variable sweep or a ternary composition grid).

A map's grid points are joined by edges (neighbours along an axis; on a ternary lattice, the
three directions of the triangular lattice).  Along each edge whose end points hold different
phases, the state of one end is followed towards the other with its phase set held
(:mod:`.equilibrium.fixed_set`, Newton's method from the tangent), and the crossing is the zero
of the changing phase's boundary function (an absent phase's driving force to form, or a
present phase's amount; those of :mod:`.equilibrium.margins`) by a bracketed solve.  Every map
variable moves linearly along an edge (a ratio axis: its feed is rebuilt by the sweep's own
rule), so a crossing at fraction ``t`` of the edge lies at the interpolated coordinates.

The crossings of one phase are then joined cell by cell (a square of four grid points, or
a triangle of three): a cell that the phase's boundary enters on one side leaves it on
another, so two crossings make one segment (four, in a square: the pairing with the shorter
segments).  Segments are chained into polylines.

Only edges whose end points differ are traced, with the case's equilibrium workspace of the
sweep (``sweep._prepared``).  The work runs in one process after the grid, in a fixed
order, from the grid's results only: every executor gives the same bytes.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace
from fractions import Fraction
from typing import Sequence

import numpy as np

from . import sweep
from .sweep import FEED, RATIO, TERNARY, Axis, PointResult

APPEARS, VANISHES = "appears", "vanishes"


@dataclass(frozen=True)
class Crossing:
    """Where ``phase`` appears or vanishes along the edge from grid point ``first`` to ``second``."""

    phase: str
    change: str                                   # APPEARS or VANISHES, going from first to second
    first: int                                    # grid indices of the edge's end points
    second: int
    t: float                                      # fraction of the edge from first (0) to second (1)
    coordinates: tuple[tuple[str, float], ...]    # map coordinates there (SI, a plain ratio, atom fractions)
    traced: bool                                  # located by the bracketed solve; else the edge's midpoint
    direction: tuple[int, ...] = ()               # sign of each coordinate's change from first to second


@dataclass(frozen=True)
class BoundaryLine:
    phase: str
    points: tuple[int, ...]       # indices into BoundaryMap.crossings, in order along the line
    closed: bool = False


@dataclass(frozen=True)
class BoundaryMap:
    names: tuple[str, ...]                        # the map's coordinate names
    crossings: tuple[Crossing, ...]
    lines: tuple[BoundaryLine, ...]
    design: tuple[tuple[str, float], ...] | None  # the case's own point in map coordinates, when it has one
    problems: tuple[str, ...] = ()


# ---------------------------------------------------------------- the lattice


FIELD = {"temperature": "temperature_K", "pressure": "pressure_Pa"}


def _coordinate_names(axes: Sequence[Axis]) -> tuple[str, ...]:
    if axes[0].name == TERNARY:
        return tuple(f"atoms[{e}]" for e in axes[0].elements)
    return tuple(FIELD.get(a.name, a.name) for a in axes)


def _lattice(axes: Sequence[Axis]) -> tuple[list[tuple[int, int]], list[list[tuple[int, int]]]]:
    """The edges (lower grid index first) and the cells (their edges in order around them)."""
    if axes[0].name == TERNARY:
        where = {ijk: n for n, ijk in enumerate(axes[0].values)}
        cells = []
        for (i, j, k) in axes[0].values:
            for tri in (((i, j, k), (i + 1, j, k - 1), (i, j + 1, k - 1)),
                        ((i + 1, j, k - 1), (i + 1, j + 1, k - 2), (i, j + 1, k - 1))):
                if all(c in where for c in tri):
                    ids = [where[c] for c in tri]
                    cells.append([tuple(sorted((ids[q], ids[(q + 1) % 3]))) for q in range(3)])
    else:
        nx, ny = len(axes[0].values), len(axes[1].values)
        cells = []
        for j in range(ny - 1):
            for i in range(nx - 1):
                c00, c10, c01, c11 = i + j * nx, i + 1 + j * nx, i + (j + 1) * nx, i + 1 + (j + 1) * nx
                cells.append([(c00, c10), (c10, c11), (c01, c11), (c00, c01)])
        if ny == 1 or nx == 1:      # a single row or column: its edges, no cells
            return [(n, n + (1 if ny == 1 else nx)) for n in range(nx * ny - (1 if ny == 1 else nx))], []
    edges = sorted({e for c in cells for e in c})
    return edges, cells


def _known(r: PointResult) -> frozenset | None:
    """The phases present at a certified point; None where the point tells nothing."""
    return frozenset(r.phases_present) if r.certified and r.phases_present else None


# ---------------------------------------------------------------- states along an edge


class _Context:
    """What the edges of one map share: the case's prepared stages, its workspace, the grid."""

    def __init__(self, case_path: str, axes: Sequence[Axis]):
        self.axes = axes
        self.case, self.stages, self.ws = sweep._prepared(case_path, tuple(sorted(a.name for a in axes)))
        self.system = self.ws.system
        self.points = sweep.grid(self.case, axes)
        self.ratios = [a.name for a in axes if a.name.startswith(RATIO)]
        self.fixed_sets: dict[tuple, object] = {}
        self._feeds: dict[int, np.ndarray] = {}
        if self.ratios:
            self.elements_of = {lab: self.system.species[self.system.find(lab)[0]].formula for lab, _ in self.case.feed}

    def feed_of(self, feed) -> np.ndarray:
        from .equilibrium import feed_vector
        return feed_vector(self.case if feed is None else replace(self.case, feed=feed), self.system)

    def feed_at_point(self, n: int) -> np.ndarray:
        if n not in self._feeds:
            self._feeds[n] = self.feed_of(self.points[n].feed)
        return self._feeds[n]

    def feed_at(self, a: int, b: int, t: float) -> np.ndarray:
        """The feed at fraction ``t`` of the edge a-b."""
        if not self.ratios:
            return (1 - t) * self.feed_at_point(a) + t * self.feed_at_point(b)
        ca, cb = dict(self.points[a].coordinates), dict(self.points[b].coordinates)
        at = {k: (1 - t) * ca[k] + t * cb[k] for k in ca}
        feed = {lab: Fraction(v) for lab, v in self.case.feed}
        for name, v in at.items():
            if name.startswith(FEED):
                feed[name[len(FEED):]] = sweep._as_fraction(v)
        feed = sweep._ratio_feed(feed, self.elements_of, [(n[len(RATIO):].split("/"), at[n]) for n in self.ratios])
        return self.feed_of(tuple((k, v) for k, v in feed.items() if v))

    def coordinates(self, a: int, b: int, t: float) -> tuple[tuple[str, float], ...]:
        ca, cb = _coords_of(self.points[a], self.axes), _coords_of(self.points[b], self.axes)
        return tuple((name, (1 - t) * va + t * vb) for (name, va), (_, vb) in zip(ca, cb))


    def direction(self, a: int, b: int) -> tuple[int, ...]:
        ca, cb = _coords_of(self.points[a], self.axes), _coords_of(self.points[b], self.axes)
        return tuple((vb > va) - (vb < va) for (_, va), (_, vb) in zip(ca, cb))


def _coords_of(p: sweep.Point, axes: Sequence[Axis]) -> tuple[tuple[str, float], ...]:
    if axes[0].name == TERNARY:
        return tuple(p.coordinates)
    c = dict(p.coordinates)
    return tuple((FIELD[a.name], float(getattr(p, FIELD[a.name]))) if a.name in FIELD else (a.name, float(c[a.name]))
                 for a in axes)


class _Start:
    """The state of one grid point on its own phase set: the fixed-set equations, their
    solution there, and the boundary functions of every phase."""

    def __init__(self, ctx: _Context, r: PointResult, n: int):
        from .equilibrium.fixed_set import FixedSet
        from .equilibrium.margins import _Boundaries
        ws, a = ctx.ws, ctx.ws.arrays
        names = tuple(p.name for p in ctx.system.phases)
        xs, moles = dict(r.mole_fractions), dict(r.phase_moles)
        amounts = np.zeros(ctx.system.n_species)
        for p, (idx, labels) in enumerate(zip(a.phase_species, a.phase_labels)):
            if names[p] in moles:
                amounts[idx] = moles[names[p]] * np.array([xs.get(f"{names[p]}:{lab}", 0.0) for lab in labels])
        present = np.array([name in r.phases_present for name in names])
        species = np.flatnonzero(present[a.phase_of] & (amounts > 0))
        key = tuple(species.tolist())
        if key not in ctx.fixed_sets:
            ctx.fixed_sets[key] = FixedSet(ws.model, a.W, a.phase_of, species, tuple(p.model for p in ctx.system.phases))
        fs = self.fs = ctx.fixed_sets[key]
        pt = ctx.points[n]
        self.n0 = ctx.feed_at_point(n)
        y0 = fs.start(amounts, np.zeros(a.W.shape[0]))
        mu, _ = ws.model.at_state(pt.temperature_K, pt.pressure_Pa, amounts)
        y0[:fs.r] = np.linalg.lstsq(fs.Ws.T, mu[fs.species], rcond=None)[0]
        self.point = fs.solve(y0, pt.temperature_K, pt.pressure_Pa, fs.Wr @ self.n0)
        rows = a.element_rows
        candidate = ~(rows[rows @ self.n0 == 0] != 0).any(axis=0)
        groups, _ = ws.absent_groups(present, candidate)
        self.functions = _Boundaries(fs, ws, names, groups)


def _follow_edge(ctx: _Context, start: _Start, a: int, b: int, side: int, differ) -> list[tuple[str, float]]:
    """(phase, t) of the first crossings met going from the start (a at t = 0 when ``side`` is
    +1, b at t = 1 when it is -1) along the edge a-b: one Newton solve at the far end from the
    tangent, then the crossing by a bracketed solve on the changing phase's boundary function; the
    margins' stepping continuation where the far end cannot be reached in one step."""
    from .equilibrium.margins import _follow, _Probe
    fs, bf = start.fs, start.functions
    pa, pb = ctx.points[a], ctx.points[b]
    dT, dP = pb.temperature_K - pa.temperature_K, pb.pressure_Pa - pa.pressure_Pa

    def state(t):
        return (pa.temperature_K + t * dT, pa.pressure_Pa + t * dP, fs.Wr @ ctx.feed_at(a, b, t))

    def dF(pt):
        t = pt.value
        hi, lo = min(t + EDGE_DIFFERENCE, 1.0), max(t - EDGE_DIFFERENCE, 0.0)
        fT, fP = fs.partials(pt)
        return dT * fT + dP * fP + fs.feed_partial((ctx.feed_at(a, b, hi) - ctx.feed_at(a, b, lo)) / (hi - lo))

    t0, t1 = (0.0, 1.0) if side > 0 else (1.0, 0.0)
    pt0 = start.point
    pt0.value = t0
    try:
        f0 = bf.values(pt0)
        far = fs.solve(pt0.y + fs.tangent(pt0, dF(pt0)) * (t1 - t0), *state(t1))
        f1 = bf.values(far)
        crossed = [p for p in differ if f1.get(p) is not None and f0.get(p) is not None and f1[p] <= 0 < f0[p]]
        if crossed:
            return [(p, _bracketed(fs, bf, state, p, (t0, pt0.y, f0[p]), (t1, far.y, f1[p]))) for p in crossed]
    except (RuntimeError, np.linalg.LinAlgError):      # NotFollowed, or cantera refusing a state
        pass
    probe = _Probe("edge", t0, "", (0.0, 1.0), False, 0.25, state, dF)
    try:
        found, _, why = _follow(fs, bf, probe, pt0, bf.values(pt0), side)
    except (RuntimeError, np.linalg.LinAlgError):
        return []
    return found if why == "boundary" else []


def _bracketed(fs, bf, state, phase: str, lo: tuple, hi: tuple) -> float:
    """The zero of ``phase``'s boundary function between two solved states (t, y, f) of opposite
    signs: Brent's bracketed method (scipy's ``brentq``), each state solved by Newton's method
    from the straight line between the nearest solved states on either side."""
    from scipy.optimize import brentq
    known = {lo[0]: (lo[1], lo[2]), hi[0]: (hi[1], hi[2])}        # t -> (y, f) of the solved states

    def f(t):
        if t in known:
            return known[t][1]
        below, above = max(k for k in known if k <= t), min(k for k in known if k >= t)
        w = (t - below) / (above - below)
        pt = fs.solve(known[below][0] + w * (known[above][0] - known[below][0]), *state(t))
        value = bf.values(pt)[phase]
        if value is None:
            raise RuntimeError("the boundary function is not defined here")
        known[t] = (pt.y, value)
        return value

    a, b = sorted((lo[0], hi[0]))
    return float(brentq(f, a, b, xtol=EDGE_XTOL, maxiter=EDGE_ITERATIONS))


EDGE_XTOL = 1e-6            # a crossing is located to this fraction of its grid edge ...
EDGE_FTOL = 1e-10           # ... or where its boundary function (RT, or mol) is this small
EDGE_ITERATIONS = 60
EDGE_DIFFERENCE = 1e-4      # a step in t for the feed's derivative along an edge (exact where the feed is linear)


def _trace_edge(ctx: _Context, results: Sequence[PointResult], a: int, b: int, starts: dict) -> list[Crossing]:
    """The crossings of every phase that differs between grid points a and b."""
    sa, sb = _known(results[a]), _known(results[b])
    differ = sorted(sa ^ sb)
    located: dict[str, float] = {}
    for end, side in ((a, 1), (b, -1)):
        if all(p in located for p in differ):
            break
        if end not in starts:
            try:
                starts[end] = _Start(ctx, results[end], end)
            except (RuntimeError, np.linalg.LinAlgError, ValueError):   # NotFollowed, or cantera refusing a state
                starts[end] = None
        if starts[end] is None:
            continue
        for phase, t in _follow_edge(ctx, starts[end], a, b, side, differ):
            if phase in differ and phase not in located and 0.0 <= t <= 1.0:
                located[phase] = float(t)
    out = []
    for phase in differ:
        t = located.get(phase, 0.5)
        out.append(Crossing(phase, APPEARS if phase in sb else VANISHES, a, b, t, ctx.coordinates(a, b, t),
                            phase in located, ctx.direction(a, b)))
    return out


# ---------------------------------------------------------------- lines


def _scaled(crossings: Sequence[Crossing]) -> list[np.ndarray]:
    """Each crossing's coordinates scaled by the span of the map (for comparing lengths)."""
    if not crossings:
        return []
    c = np.array([[v for _, v in x.coordinates] for x in crossings], dtype=float)
    span = c.max(axis=0) - c.min(axis=0)
    span[span == 0] = 1.0
    return list(c / span)


def _join(crossings: Sequence[Crossing], cells: list[list[tuple[int, int]]]) -> list[BoundaryLine]:
    """Segments cell by cell, chained into polylines (open lines first, from their ends)."""
    where = {((x.first, x.second), x.phase): i for i, x in enumerate(crossings)}
    at = _scaled(crossings)
    phases = sorted({x.phase for x in crossings})
    links: dict[int, list[int]] = {i: [] for i in range(len(crossings))}
    for cell in cells:
        for phase in phases:
            ids = [where[(e, phase)] for e in cell if (e, phase) in where]
            if len(ids) == 2:
                pairs = [(ids[0], ids[1])]
            elif len(ids) == 4:      # a saddle: the pairing with the shorter segments
                one = [(ids[0], ids[1]), (ids[2], ids[3])]
                two = [(ids[0], ids[3]), (ids[1], ids[2])]
                length = [sum(float(np.linalg.norm(at[p] - at[q])) for p, q in pairing) for pairing in (one, two)]
                pairs = one if length[0] <= length[1] else two
            else:
                pairs = []          # a corner not known: the line stops here
            for p, q in pairs:
                links[p].append(q)
                links[q].append(p)
    lines, seen = [], set()

    def walk(first: int) -> list[int]:
        path, prev, here = [first], None, first
        seen.add(first)
        while True:
            nxt = [q for q in links[here] if q != prev and q not in seen]
            if not nxt:
                return path
            prev, here = here, nxt[0]
            seen.add(here)
            path.append(here)

    for i in sorted(links, key=lambda i: (len(links[i]) == 2, i)):   # ends of open lines first
        if i not in seen:
            path = walk(i)
            closed = len(path) > 2 and path[0] in links[path[-1]]
            lines.append(BoundaryLine(crossings[i].phase, tuple(path), closed))
    return sorted(lines, key=lambda ln: (ln.phase, ln.points[0]))


# ---------------------------------------------------------------- the map


def design_coordinates(case, axes: Sequence[Axis]) -> tuple[tuple[str, float], ...] | None:
    """Where the case itself lies on the map; None when it does not fix every map variable."""
    from .system import build_system
    out = []
    if axes[0].name == TERNARY:
        system = build_system(case)
        atoms = {}
        for label, amount in case.feed or ():
            f = system.species[system.find(label)[0]].formula
            if len(f) == 1 and next(iter(f)) in axes[0].elements:
                e = next(iter(f))
                atoms[e] = atoms.get(e, 0) + float(amount) * float(f[e])
        total = sum(atoms.values())
        if len(atoms) != 3 or total <= 0:
            return None
        return tuple((f"atoms[{e}]", atoms[e] / total) for e in axes[0].elements)
    feed = {label: float(v) for label, v in case.feed or ()}
    for a in axes:
        if a.name in FIELD:
            v = getattr(case.specified, FIELD[a.name])
        elif a.name.startswith(FEED):
            v = feed.get(a.name[len(FEED):], 0.0)
        else:
            system = build_system(case)
            x, y = (s.strip() for s in a.name[len(RATIO):].split("/"))
            count = {e: sum(v * float(system.species[system.find(lab)[0]].formula.get(e, 0)) for lab, v in feed.items())
                     for e in (x, y)}
            v = count[x] / count[y] if count[y] else None
        if v is None or not math.isfinite(v):
            return None
        out.append((FIELD.get(a.name, a.name), float(v)))
    return tuple(out)


def trace(case_path: str, axes: Sequence[Axis], results: Sequence[PointResult], case=None) -> BoundaryMap:
    """The phase boundaries of a map's ``results`` (in grid order), traced between grid points;
    ``case``, the case file as loaded (read again when not given), places its design point."""
    from .case import load_case
    ctx = _Context(case_path, axes)
    edges, cells = _lattice(axes)
    crossings, starts = [], {}
    for a, b in edges:
        sa, sb = _known(results[a]), _known(results[b])
        if sa is None or sb is None or sa == sb:
            continue
        crossings += _trace_edge(ctx, results, a, b, starts)
    loose = sum(1 for x in crossings if not x.traced)
    problems = (f"{loose} of {len(crossings)} crossings could not be located by the bracketed solve; "
                "they are drawn at the middle of their grid edge",) if loose else ()
    return BoundaryMap(_coordinate_names(axes), tuple(crossings), tuple(_join(crossings, cells)),
                       design_coordinates(case or load_case(case_path), axes), problems)
