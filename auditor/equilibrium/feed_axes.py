"""Feed axes a case probes for its margins, written like sweep axes (``feed.H2O``, ``ratio.O/C``).

``feed.X`` is the amount of feed species X in mol (the other amounts kept); ``ratio.X/Y`` is
the feed's atom ratio of element X to element Y at a fixed total feed amount: the feed
species holding neither element keep their amounts, the others change as little as
possible (least squares in mol), as a sweep does (``sweep._ratio_feed``), with every other
ratio axis the case lists held at its design value.  Each axis gives the feed at a value and
its derivative (exact: the least-squares problem is solved in complex arithmetic with a
complex step, not by a difference).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError, Problem
from ..system import ChemicalSystem

FEED, RATIO = "feed.", "ratio."
STEP = 1e-30          # the complex step


@dataclass(frozen=True)
class FeedAxis:
    name: str
    design: float                  # the case's own value (mol, or atoms per atom)
    unit: str                      # "mol" or "" for a ratio
    index: int = -1                # feed.X: the species
    pair: tuple[str, str] = ()     # ratio.X/Y: the elements


class FeedMap:
    """The feed along each axis of a case, around the design feed ``n0`` (mol per species)."""

    def __init__(self, system: ChemicalSystem, n0: np.ndarray, names: tuple[str, ...], where: str = "margins"):
        self.system, self.n0 = system, n0
        elements = [e for e in system.elements if e != "charge"]
        self.atoms = {e: np.array([float(s.formula.get(e, 0)) for s in system.species]) for e in elements}
        self.axes: list[FeedAxis] = []
        for name in names:
            if name.startswith(FEED) and name[len(FEED):]:
                ks = system.find(name[len(FEED):])
                if not ks:
                    raise InputError(Problem(where, f"{name}: {name[len(FEED):]!r} is not a species of the case's system"))
                self.axes.append(FeedAxis(name, float(n0[ks[0]]), "mol", index=ks[0]))
            elif name.startswith(RATIO):
                x, y = (t.strip() for t in name[len(RATIO):].split("/"))
                if x not in self.atoms or y not in self.atoms or not self.atoms[y] @ n0:
                    raise InputError(Problem(where, f"{name}: the case's feed must hold both {x} and {y}"))
                self.axes.append(FeedAxis(name, float(self.atoms[x] @ n0 / (self.atoms[y] @ n0)), "", pair=(x, y)))

    def feed(self, axis: FeedAxis, v: complex) -> np.ndarray | None:
        """The feed (mol per species) with ``axis`` at ``v``; None when no feed with every amount
        non-negative has it."""
        if axis.index >= 0:
            n = self.n0.astype(type(v)).copy()
            n[axis.index] = v
            return n if v.real >= 0 else None
        ratios = [(a.pair, v if a is axis else a.design) for a in self.axes if a.pair]
        involved = {e for pair, _ in ratios for e in pair}
        sel = np.flatnonzero((self.n0 > 0) & np.any([self.atoms[e] > 0 for e in involved], axis=0))
        fixed = np.flatnonzero((self.n0 > 0) & ~np.isin(np.arange(len(self.n0)), sel))
        rows, rhs = [np.ones(len(sel), dtype=complex)], [complex(self.n0[sel].sum())]
        for (x, y), r in ratios:
            c = self.atoms[x] - r * self.atoms[y]
            rows.append(c[sel])
            rhs.append(-(c[fixed] @ self.n0[fixed]))
        A = np.array(rows)
        k, m = len(sel), len(rows)
        kkt = np.block([[np.eye(k), A.T], [A, np.zeros((m, m))]])
        try:
            sol = np.linalg.solve(kkt, np.concatenate([self.n0[sel], rhs]))
        except np.linalg.LinAlgError:
            return None
        n = self.n0.astype(complex).copy()
        n[sel] = sol[:k]
        if np.any(n.real < -1e-12 * max(float(self.n0.sum()), 1.0)):
            return None
        return n if isinstance(v, complex) else np.maximum(n.real, 0.0)

    def slope(self, axis: FeedAxis, v: float) -> np.ndarray:
        """d(feed)/dv at ``v``, mol per unit of the axis."""
        if axis.index >= 0:
            out = np.zeros(len(self.n0))
            out[axis.index] = 1.0
            return out
        n = self.feed(axis, complex(v, STEP))
        return np.zeros(len(self.n0)) if n is None else n.imag / STEP

    def bounds(self, axis: FeedAxis, factor: float) -> tuple[float, float]:
        """Where the axis is searched: from zero to ``factor`` times the design value (at least
        the total feed amount for an amount that the design does not feed)."""
        if axis.index >= 0:
            return 0.0, max(factor * axis.design, float(self.n0.sum()))
        return 0.0, factor * axis.design
