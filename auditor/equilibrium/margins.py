"""Margins of a confirmed state: how far each phase boundary lies, and what the state is sensitive to.

Holding the certified set of present phases (:mod:`.fixed_set`), each probed variable
(temperature, pressure, the case's feed axes of :mod:`.feed_axes`) is moved away from the
design point on both sides, the state followed by Newton's method from the tangent
(predictor-corrector continuation), until a boundary function changes sign:

* for an absent phase, its driving force to form (the certificate's ``absent_driving_forces``,
  in RT): zero where the phase appears;
* for a present phase, its amount: zero where it vanishes.

The crossing is then found by a bracketed method (Illinois false position, with bisection
steps) on that function.  The first boundary
met on a side ends that side's search: beyond it the phase set is another one.  Where no
boundary lies inside the searched interval (the data ranges of the present species and the
stated bounds of ``settings``), the result says so with the interval.

Sensitivities are the derivatives at the design point by implicit differentiation of the
same equations (``FixedSet.tangent``), with the equilibrium heat capacity
``Cp_eq = sum_p N_p cp_p + sum_k h_k dn_k/dT`` and, for an energy-balanced case,
``dT/dv = -(sum_k h_k dn_k/dv - dH_feed/dv) / Cp_eq`` of the outlet temperature.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from .. import settings
from .certificate import absent_driving_forces
from .feed_axes import FeedAxis, FeedMap
from .fixed_set import FixedSet, NotFollowed, Point
from .workspace import Workspace, feed_vector

TEMPERATURE, PRESSURE = "temperature", "pressure"
APPEARS, VANISHES = "appears", "vanishes"
BELOW, ABOVE = "below", "above"


@dataclass(frozen=True)
class Boundary:
    """Where ``phase`` appears or vanishes along ``variable`` (SI: K, Pa, mol, or a plain ratio);
    ``value`` None when no boundary lies in ``searched``."""

    phase: str
    change: str
    variable: str
    side: str                       # BELOW or ABOVE the design value; "" when none was found
    value: float | None
    design: float
    searched: tuple[float, float]
    unit: str = ""                  # SI unit of value, design and searched
    user_unit: str = ""             # the unit the case writes this variable in
    user_value: float | None = None
    user_design: float | None = None
    user_searched: tuple[float, float] = (0.0, 0.0)

    @property
    def distance(self) -> float | None:
        return None if self.value is None else abs(self.value - self.design)

    @property
    def relative(self) -> float | None:
        """Distance over the design value (for pressure and feed axes)."""
        if self.value is None:
            return None
        return self.distance / abs(self.design) if self.design else math.inf


@dataclass(frozen=True)
class Sensitivities:
    variables: tuple[tuple[str, str], ...]        # (variable, SI unit)
    species: tuple[str, ...]                      # "phase:species" of the present species
    amounts: tuple[tuple[float, ...], ...]        # per variable: dn_k/dv, mol per unit
    mole_fractions: tuple[tuple[float, ...], ...]
    phases: tuple[str, ...]
    phase_amounts: tuple[tuple[float, ...], ...]
    heat_capacity_J_K: float                      # equilibrium (the shift of the equilibrium included)
    frozen_heat_capacity_J_K: float               # at fixed amounts
    outlet_temperature: tuple[tuple[str, float], ...] = ()   # energy balance: dT/dv per feed axis


@dataclass(frozen=True)
class MarginReport:
    boundaries: tuple[Boundary, ...]              # found, nearest first (by relative distance), then none found
    sensitivities: Sensitivities | None
    held: tuple[str, ...]                         # what stays fixed while a variable moves
    not_probed: tuple[tuple[str, str], ...] = ()  # (phase, why)
    problems: tuple[str, ...] = ()
    seconds: float = 0.0


class _Probe:
    """One variable moved alone: the state (T, P, feed) at a value, and the dF/dv there."""

    def __init__(self, name: str, design: float, unit: str, bounds: tuple[float, float], log: bool, step: float,
                 state, dF):
        self.name, self.design, self.unit, self.bounds, self.log, self.step = name, design, unit, bounds, log, step
        self.state, self.dF = state, dF      # value -> (T, P, b) or None; Point -> dF/dv


def _bounds_T(ws: Workspace, species: np.ndarray, T0: float) -> tuple[float, float]:
    a, tol = ws.arrays, settings.THERMO_RANGE_TOLERANCE_K
    lo = max(float(a.t_min[species].max()) - tol, T0 - settings.MARGIN_TEMPERATURE_SPAN_K, settings.MIN_TEMPERATURE_K)
    hi = min(float(a.t_max[species].min()) + tol, T0 + settings.MARGIN_TEMPERATURE_SPAN_K)
    return min(lo, T0), max(hi, T0)


def _probes(fs: FixedSet, ws: Workspace, feeds: FeedMap, T0: float, P0: float, b0: np.ndarray) -> list[_Probe]:
    f = settings.MARGIN_FEED_FACTOR
    out = [_Probe(TEMPERATURE, T0, "K", _bounds_T(ws, fs.species, T0), False, settings.MARGIN_TEMPERATURE_STEP_K,
                  lambda v: (v, P0, b0), lambda pt: fs.partials(pt)[0]),
           _Probe(PRESSURE, P0, "Pa", (P0 / settings.MARGIN_PRESSURE_FACTOR,
                                        min(P0 * settings.MARGIN_PRESSURE_FACTOR, settings.MAX_PRESSURE_PA)), True,
                  settings.MARGIN_RELATIVE_STEP, lambda v: (T0, v, b0), lambda pt: fs.partials(pt)[1])]
    for ax in feeds.axes:
        def state(v, ax=ax):
            n = feeds.feed(ax, v)
            return None if n is None else (T0, P0, fs.Wr @ n)
        scale = ax.design if ax.design > 0 else float(feeds.n0.sum())
        out.append(_Probe(ax.name, ax.design, ax.unit, feeds.bounds(ax, f), False, settings.MARGIN_RELATIVE_STEP * scale,
                          state, lambda pt, ax=ax: fs.feed_partial(feeds.slope(ax, _value_of(pt, ax, feeds)))))
    return out


def _value_of(pt: Point, ax: FeedAxis, feeds: FeedMap) -> float:
    return ax.design if pt.value is None else pt.value


class _Boundaries:
    """The boundary functions at a state: present phases' amounts, absent phases' driving forces."""

    def __init__(self, fs: FixedSet, ws: Workspace, names: tuple[str, ...], groups: dict):
        self.fs, self.ws, self.names = fs, ws, names
        a = ws.arrays
        # an absent species counts when the present species span its conserved quantities: it can
        # form from them alone (the certificate's free element-potential directions do not touch it)
        W = a.W
        off = np.linalg.norm(W - fs.U @ (fs.U.T @ W), axis=0) <= 1e-9 * np.maximum(np.linalg.norm(W, axis=0), 1.0)
        self.groups = {p: g[off[g]] for p, g in groups.items() if off[g].any()}
        self.skipped = tuple((names[p], "it cannot form from the present phases alone (it needs an element or "
                              "quantity they do not hold)") for p, g in groups.items() if not off[g].any())

    def values(self, pt: Point) -> dict[str, float | None]:
        a = self.ws.arrays
        out: dict[str, float | None] = {self.names[p]: float(n) for p, n in zip(self.fs.phases, pt.N)}
        tol = settings.THERMO_RANGE_TOLERANCE_K
        valid = {p: g[(a.t_min[g] - tol <= pt.T) & (pt.T <= a.t_max[g] + tol)] for p, g in self.groups.items()}
        lam = self.fs.U @ pt.y[:self.fs.r]
        drive = absent_driving_forces(a, {p: g for p, g in valid.items() if g.size}, {}, pt.g, lam,
                                      np.zeros((len(lam), 0)))
        for p in self.groups:
            out[self.names[p]] = drive.get(p)
        return out

    def change(self, phase: str) -> str:
        return VANISHES if phase in {self.names[p] for p in self.fs.phases} else APPEARS


def _solve_at(fs: FixedSet, probe: _Probe, v: float, near: Point, near_dy: np.ndarray | None) -> Point:
    st = probe.state(v)
    if st is None:
        raise NotFollowed("no feed with every amount non-negative")
    y0 = near.y if near_dy is None else near.y + near_dy * (v - near.value)
    try:
        pt = fs.solve(y0, *st)
    except NotFollowed:
        if near_dy is None:
            raise
        pt = fs.solve(near.y, *st)
    pt.value = v
    return pt


def _follow(fs: FixedSet, bf: _Boundaries, probe: _Probe, pt0: Point, f0: dict, side: int):
    """Move ``probe`` away from the design on one side; returns ([(phase, value)], end reached, why)."""
    bound = probe.bounds[1] if side > 0 else probe.bounds[0]
    prev, f_prev = pt0, f0
    step = probe.step
    while (bound - prev.value) * side > 1e-12 * max(abs(bound), 1.0):
        t = (math.log(prev.value) + side * step) if probe.log else prev.value + side * step
        v = math.exp(t) if probe.log else t
        v = min(v, bound) if side > 0 else max(v, bound)
        try:
            dy = fs.tangent(prev, probe.dF(prev))
            pt = _solve_at(fs, probe, v, prev, dy)
        except (NotFollowed, np.linalg.LinAlgError):
            if step <= probe.step * settings.MARGIN_STEP_MIN_MULTIPLE:
                return [], prev.value, "not followed"
            step, bound = step / 4, v       # closer steps towards where it failed
            continue
        f = bf.values(pt)
        crossed = [p for p, val in f.items() if val is not None and f_prev.get(p) is not None and val <= 0 < f_prev[p]]
        if crossed:
            found = []
            for p in crossed:
                def g(w, p=p, prev=prev, dy=dy):
                    return bf.values(_solve_at(fs, probe, w, prev, dy))[p]
                try:
                    found.append((p, bracketed_root(g, prev.value, v, f_prev[p], f[p], _xtol(probe))))
                except (NotFollowed, np.linalg.LinAlgError):
                    found.append((p, 0.5 * (prev.value + v)))
            return found, min(w for _, w in found) if side > 0 else max(w for _, w in found), "boundary"
        prev, f_prev = pt, f
        step = min(step * settings.MARGIN_STEP_GROWTH, probe.step * settings.MARGIN_STEP_MAX_MULTIPLE)
    return [], bound, "bound"


def bracketed_root(g, a: float, b: float, fa: float, fb: float, xtol: float) -> float:
    """A zero of ``g`` between ``a`` and ``b`` (``fa``, ``fb`` of opposite signs or zero): the
    Illinois false-position method, with a bisection step whenever the bracket does not shrink
    by half in two steps (Dowell & Jarratt 1971; guaranteed to stay in the bracket)."""
    if fa == 0:
        return a
    if fb == 0:
        return b
    side, width = 0, abs(b - a)
    for i in range(200):
        if abs(b - a) <= xtol:
            break
        c = b - fb * (b - a) / (fb - fa)
        if i % 2 == 1 and abs(b - a) > 0.5 * width:       # slow: bisect instead
            c = 0.5 * (a + b)
        if i % 2 == 1:
            width = abs(b - a)
        fc = g(c)
        if fc == 0:
            return c
        if (fc > 0) == (fb > 0):
            b, fb = c, fc
            if side == -1:
                fa *= 0.5
            side = -1
        else:
            a, fa = b, fb
            b, fb = c, fc
            side = 1
    return b if abs(fb) <= abs(fa) else a


def _xtol(probe: _Probe) -> float:
    return settings.MARGIN_TEMPERATURE_XTOL_K if probe.name == TEMPERATURE else \
        settings.MARGIN_RELATIVE_XTOL * max(abs(probe.design), 1e-12 if probe.log else probe.step)


def _boundaries_of(fs: FixedSet, bf: _Boundaries, probe: _Probe, pt0: Point) -> tuple[list[Boundary], list[str]]:
    f0 = bf.values(pt0)
    found, problems, ends = [], [], {}
    for side, word in ((-1, BELOW), (1, ABOVE)):
        hits, end, why = _follow(fs, bf, probe, pt0, f0, side)
        ends[side] = end
        if why == "not followed":
            problems.append(f"{probe.name}: the present phases' equations could not be followed {word} "
                            f"{end:.6g} {probe.unit}".rstrip())
        found += [Boundary(p, bf.change(p), probe.name, word, float(v), probe.design, (0.0, 0.0), probe.unit)
                  for p, v in hits]
    searched = (min(ends[-1], ends[1]), max(ends[-1], ends[1]))
    found = [Boundary(b.phase, b.change, b.variable, b.side, b.value, b.design, searched, b.unit) for b in found]
    hit = {b.phase for b in found}
    none = [Boundary(p, bf.change(p), probe.name, "", None, probe.design, searched, probe.unit)
            for p in f0 if p not in hit and f0[p] is not None]
    return found + none, problems


def _sensitivities(fs: FixedSet, probes: list[_Probe], feeds: FeedMap, pt0: Point, labels: tuple[str, ...],
                   phase_names: tuple[str, ...], T_feed: float | None) -> Sensitivities:
    fs.model.at_state(pt0.T, pt0.P, fs.full_x(pt0.x))
    frozen = fs.frozen_heat_capacity(pt0.N)
    h = fs.molar_enthalpies()[fs.species]
    rows = []
    for probe in probes:
        dF = probe.dF(pt0)
        rows.append(fs.state_derivatives(pt0, fs.tangent(pt0, dF)))
    cp = frozen + float(h @ rows[0][0])
    outlet = []
    if T_feed is not None:
        fs.model.set_state(T_feed, pt0.P, feeds.n0)
        h_feed = fs.molar_enthalpies()
        for ax, (dn, _, _) in zip(feeds.axes, rows[2:]):
            outlet.append((ax.name, -(float(h @ dn) - float(h_feed @ feeds.slope(ax, ax.design))) / cp))
        fs.model.at_state(pt0.T, pt0.P, fs.full_x(pt0.x))
    return Sensitivities(variables=tuple((p.name, p.unit) for p in probes),
                         species=tuple(labels[k] for k in fs.species),
                         amounts=tuple(tuple(r[0].tolist()) for r in rows),
                         mole_fractions=tuple(tuple(r[1].tolist()) for r in rows),
                         phases=tuple(phase_names[p] for p in fs.phases),
                         phase_amounts=tuple(tuple(r[2].tolist()) for r in rows),
                         heat_capacity_J_K=cp, frozen_heat_capacity_J_K=frozen, outlet_temperature=tuple(outlet))


def _design_state(check, ws: Workspace) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Amounts (system order), which phases are present, element potentials (as ``arrays.W``'s rows)."""
    a = ws.arrays
    n = np.zeros(ws.system.n_species)
    present_names = set(check.phases_present)
    phase_present = np.array([p.name in present_names for p in ws.system.phases])
    for idx, state in zip(a.phase_species, check.phases):
        n[idx] = state.moles * np.array([x for _, x in state.mole_fractions])
    pots = dict(check.element_potentials)
    lam = np.array([pots.get(name, 0.0) for name in a.potential_names])
    return n, phase_present, lam


def margins(case, check, workspace: Workspace, axes: tuple[str, ...] = ()) -> MarginReport:
    """The margins and sensitivities of a confirmed state ``check`` of ``case`` (solved with
    ``workspace``); ``axes`` are the feed axes to probe besides T and P."""
    t0 = time.perf_counter()
    ws, system = workspace, workspace.system
    a = ws.arrays
    n0 = feed_vector(case, system)
    feeds = FeedMap(system, n0, tuple(x for x in axes if x not in (TEMPERATURE, PRESSURE)))
    n, phase_present, lam = _design_state(check, ws)
    species = np.flatnonzero(phase_present[a.phase_of] & (n > 0))
    fs = FixedSet(ws.model, a.W, a.phase_of, species, tuple(p.model for p in system.phases))
    T0, P0 = float(check.temperature_K), float(check.pressure_Pa)
    held = ("the phases present at the design point", "the other probed variables at their design values")
    try:
        pt0 = fs.solve(fs.start(n, lam), T0, P0, fs.Wr @ n0)
    except NotFollowed as exc:
        return MarginReport((), None, held, problems=(f"the design state could not be reproduced: {exc}",),
                            seconds=time.perf_counter() - t0)
    rows = a.element_rows
    candidate = ~(rows[rows @ n0 == 0] != 0).any(axis=0)
    groups, _ = ws.absent_groups(phase_present, candidate)
    names = tuple(p.name for p in system.phases)
    bf = _Boundaries(fs, ws, names, groups)
    probes = _probes(fs, ws, feeds, T0, P0, fs.Wr @ n0)
    pt0.value = T0
    found, problems = [], []
    for probe in probes:
        pt0.value = probe.design
        got, more = _boundaries_of(fs, bf, probe, pt0)
        found += got
        problems += more
    pt0.value = None
    sens = _sensitivities(fs, probes, feeds, pt0, system.labels, names, case.specified.adiabatic_feed_temperature_K)
    found = _in_user_units(case, found)
    hit = sorted((b for b in found if b.value is not None), key=lambda b: _nearness(b))
    return MarginReport(tuple(hit + [b for b in found if b.value is None]), sens, held, bf.skipped, tuple(problems),
                        time.perf_counter() - t0)


def _in_user_units(case, found: list[Boundary]) -> list[Boundary]:
    """Each boundary with its values also in the unit the case writes the variable in (the
    temperature and pressure as specified, a feed amount as fed; SI when the case writes none)."""
    from dataclasses import replace
    from .. import units
    written = {TEMPERATURE: ("specified.temperature", "temperature"), PRESSURE: ("specified.pressure", "pressure")}
    out = []
    for b in found:
        key, kind = written.get(b.variable, (b.variable, "amount"))
        unit = b.unit
        if b.unit and key in case.as_written:
            try:
                unit = units.split(case.as_written[key], kind)[2]
                units.from_si([1.0], unit, kind)
            except ValueError:
                unit = b.unit
        if unit == b.unit:
            out.append(replace(b, user_unit=unit, user_value=b.value, user_design=b.design, user_searched=b.searched))
            continue
        v, d, lo, hi = units.from_si([0.0 if b.value is None else b.value, b.design, *b.searched], unit, kind)
        out.append(replace(b, user_unit=unit, user_value=None if b.value is None else v, user_design=d,
                           user_searched=(lo, hi)))
    return out


def _nearness(b: Boundary) -> float:
    """Distance on one scale for ordering: a temperature in units of the nearness threshold,
    anything else relative to its design value in units of its threshold."""
    if b.variable == TEMPERATURE:
        return b.distance / settings.MARGIN_NEAR_TEMPERATURE_K
    return b.relative / settings.MARGIN_NEAR_RELATIVE


def is_near(b: Boundary) -> bool:
    """Closer to the design point than the stated threshold."""
    return b.value is not None and _nearness(b) <= 1.0
