"""Exact sparse rational linear algebra: the only module that does exact arithmetic.

Method: Gauss–Jordan elimination over the rationals (any linear-algebra text; for its
use on stoichiometric matrices see W. R. Smith and R. W. Missen, *Chemical Reaction
Equilibrium Analysis*, Wiley 1982, ch. 2).  Vectors are sparse mappings
``column -> int | Fraction``; no floating-point number ever enters a rank decision.

The workhorse is :class:`RowEchelon`, which takes rows one at a time in the caller's
order.  A row that reduces to zero is dependent and comes back with its exact
combination of the earlier independent rows; otherwise it joins the basis.  Taking the
rows in order makes the independent set the *earliest* independent rows (the greedy
basis of a matroid), which is unique whatever pivot columns are chosen inside.

Invariant of the basis: it is kept fully reduced (every basis row is 1 at its own pivot
column and 0 at every other row's pivot column).  Reducing a new row is then a single
pass, and every basis row has at most ``1 + (touched columns - rank)`` entries, which
keeps the rows of a stoichiometric matrix (rank close to the number of species) short.
Entries stay Python integers whenever a pivot of magnitude one is available and become
``Fraction`` only when needed.
"""
from __future__ import annotations

from fractions import Fraction
from math import gcd, lcm
from typing import Iterable, Mapping, Sequence

Number = int | Fraction
SparseVector = dict[int, Number]

__all__ = [
    "Fraction",
    "RowEchelon",
    "as_simple_fraction",
    "canonical_direction",
    "format_fraction",
    "left_nullspace",
    "nullspace",
    "pivot_rows",
    "primitive",
    "rank",
    "rref",
    "small_integer_basis",
    "sparse_matvec",
    "whole",
]


def whole(x: Number) -> Number:
    """Collapse a Fraction with denominator one to an int (keeps arithmetic fast)."""
    if type(x) is Fraction and x.denominator == 1:
        return x.numerator
    return x


def _subtract(target: SparseVector, factor: Number, source: Mapping[int, Number]) -> None:
    """``target -= factor * source`` in place, dropping entries that become zero."""
    for k, x in source.items():
        y = target.get(k, 0) - factor * x
        if y:
            target[k] = whole(y)
        else:
            target.pop(k, None)


def _div(x: Number, s: Number) -> Number:
    if type(x) is int and type(s) is int:
        q, r = divmod(x, s)
        if r == 0:
            return q
        return Fraction(x, s)
    return whole(Fraction(x) / s)


def as_simple_fraction(value: float, max_denominator: int, tolerance: float) -> Fraction | None:
    """Nearest fraction with denominator <= ``max_denominator``, or None if farther than ``tolerance``."""
    if value != value or value in (float("inf"), float("-inf")):
        return None
    if float(value).is_integer():
        return Fraction(int(value))
    f = Fraction(value).limit_denominator(max_denominator)
    if abs(float(f) - value) > tolerance:
        return None
    return f


def format_fraction(x: Number) -> str:
    """``"p/q"`` or ``"p"``: the exact text used in reports and JSON."""
    if type(x) is int:
        return str(x)
    x = Fraction(x)
    return str(x.numerator) if x.denominator == 1 else f"{x.numerator}/{x.denominator}"


def primitive(vector: Mapping[int, Number]) -> dict[int, int]:
    """Scale a rational vector to the integer vector with coprime entries, same sign."""
    if all(type(v) is int for v in vector.values()):
        g = 0
        for v in vector.values():
            g = gcd(g, v)
        return {k: v // g for k, v in vector.items() if v} if g > 1 else {k: v for k, v in vector.items() if v}
    den = 1
    for v in vector.values():
        den = lcm(den, Fraction(v).denominator)
    ints = {k: int(Fraction(v) * den) for k, v in vector.items() if v != 0}
    g = 0
    for v in ints.values():
        g = gcd(g, v)
    return {k: v // g for k, v in ints.items()} if g > 1 else ints


def canonical_direction(vector: Mapping[int, Number]) -> tuple[tuple[tuple[int, int], ...], Fraction]:
    """Key shared by all vectors parallel to ``vector``, and the factor ``vector = factor * key``.

    The key is the primitive integer vector whose lowest-index entry is positive.
    """
    prim = primitive(vector)
    if not prim:
        return (), Fraction(0)
    first = min(prim)
    if prim[first] < 0:
        prim = {k: -v for k, v in prim.items()}
    factor = Fraction(vector[first]) / prim[first]
    return tuple(sorted(prim.items())), factor


def sparse_matvec(columns: Sequence[Mapping[int, Number]], vector: Mapping[int, Number]) -> dict[int, Number]:
    """``sum_k vector[k] * columns[k]`` as a sparse vector (zero entries dropped)."""
    out: dict[int, Number] = {}
    for k, c in vector.items():
        for row, a in columns[k].items():
            out[row] = out.get(row, 0) + a * c
    return {r: whole(v) for r, v in out.items() if v != 0}


class RowEchelon:
    """Incremental exact row reduction with combination tracking.

    ``add(row)`` returns ``None`` when the row is independent of the rows added before
    (it then joins the basis under the next *basis index*), or the exact combination
    ``{basis index: coefficient}`` of earlier independent rows that equals it.
    """

    def __init__(self, track: bool = True, leftmost: bool = False):
        self.track = track
        self.leftmost = leftmost  # pivot on the lowest column (true RREF) instead of the sparsest
        self._rows: dict[int, SparseVector] = {}     # pivot column -> reduced row
        self._expr: dict[int, SparseVector] = {}     # pivot column -> row as combination of basis indices
        self._holders: dict[int, set[int]] = {}      # non-pivot column -> pivots of rows using it
        self.pivots: list[int] = []                  # pivot column of each basis index, in order

    @property
    def rank(self) -> int:
        return len(self.pivots)

    def reduce(self, row: Mapping[int, Number]) -> tuple[SparseVector, dict[int, Number]]:
        """Residual of ``row`` against the basis and the multipliers used (pivot -> factor)."""
        v: SparseVector = {k: x for k, x in row.items() if x != 0}
        rows = self._rows
        used = [p for p in v if p in rows]
        alpha: dict[int, Number] = {}
        for p in used:
            a = v[p]
            alpha[p] = a
            _subtract(v, a, rows[p])
        return v, alpha

    def _combine(self, alpha: Mapping[int, Number]) -> dict[int, Number]:
        out: dict[int, Number] = {}
        get = out.get
        exprs = self._expr
        for p, a in alpha.items():
            for i, c in exprs[p].items():
                out[i] = get(i, 0) + a * c
        # _norm inlined: this runs once per dependent row of a mechanism
        return {i: c.numerator if type(c) is Fraction and c.denominator == 1 else c for i, c in out.items() if c}

    def add(self, row: Mapping[int, Number]) -> dict[int, Number] | None:
        v, alpha = self.reduce(row)
        if not v:
            return self._combine(alpha) if self.track else {}
        holders = self._holders
        # Pivot choice affects only speed: prefer a column few basis rows use (little
        # fill-in), then a coefficient of magnitude one (entries stay integers).
        if self.leftmost:
            q = min(v)
        else:
            q = min(v, key=lambda k: (len(holders.get(k, ())), abs(v[k]) != 1, k))
        s = v[q]
        if s != 1:
            v = {k: _div(x, s) for k, x in v.items()}
        index = len(self.pivots)
        if self.track:
            expr = {index: 1}
            for i, c in self._combine(alpha).items():
                expr[i] = -c
            if s != 1:
                expr = {i: _div(c, s) for i, c in expr.items()}
        # Keep the basis fully reduced: clear column q from every row holding it.
        for p in holders.pop(q, ()):
            rp = self._rows[p]
            c = rp.pop(q)
            for k, x in v.items():
                if k == q:
                    continue
                y = rp.get(k, 0) - c * x
                if y:
                    if k not in rp:
                        holders.setdefault(k, set()).add(p)
                    rp[k] = whole(y)
                elif k in rp:
                    del rp[k]
                    holders[k].discard(p)
            if self.track:
                _subtract(self._expr[p], c, expr)
        for k in v:
            if k != q:
                holders.setdefault(k, set()).add(q)
        self._rows[q] = v
        if self.track:
            self._expr[q] = expr
        self.pivots.append(q)
        return None

    def basis_rows(self) -> list[SparseVector]:
        """The fully reduced basis rows, in basis-index order."""
        return [dict(self._rows[p]) for p in self.pivots]

    def nullspace(self, columns: Iterable[int]) -> list[dict[int, int]]:
        """Primitive integer basis of ``{w : w . row = 0 for every basis row}`` over ``columns``.

        One vector per non-pivot column ``c``: ``w_c = 1`` and ``w_p = -row_p[c]``.
        """
        pivot_set = set(self._rows)
        out = []
        for c in columns:
            if c in pivot_set:
                continue
            w: SparseVector = {c: 1}
            for p in self._holders.get(c, ()):
                w[p] = -self._rows[p][c]
            out.append(primitive(w))
        return out


def eliminate_columns(rows: Sequence[Mapping[int, Number]], columns: Iterable[int]) -> list[SparseVector]:
    """Independent rows spanning ``span(rows) ∩ {v : v_c = 0 for c in columns}``.

    ``rows`` must be linearly independent.  For each column in turn one row holding it
    becomes the pivot and leaves the set, after clearing that column from the others;
    what remains is zero on every listed column (dimension = rank - rank of the
    projection onto those columns).
    """
    remaining = [dict(r) for r in rows]
    for c in columns:
        holders = [i for i, r in enumerate(remaining) if r.get(c, 0) != 0]
        if not holders:
            continue
        pi = min(holders, key=lambda i: (len(remaining[i]), i))
        pivot = remaining[pi]
        for i in holders:
            if i == pi:
                continue
            r = remaining[i]
            _subtract(r, Fraction(r[c]) / pivot[c], pivot)
        del remaining[pi]
    return remaining


def _sparse_rows(matrix: Sequence[Sequence[Number]]) -> list[SparseVector]:
    return [{j: x for j, x in enumerate(row) if x != 0} for row in matrix]


def pivot_rows(matrix: Sequence[Sequence[Number]] | Sequence[Mapping[int, Number]]) -> list[int]:
    """Indices of the earliest independent rows, in order."""
    ech = RowEchelon(track=False)
    out = []
    rows = matrix if matrix and isinstance(matrix[0], Mapping) else _sparse_rows(matrix)  # type: ignore[arg-type]
    for i, r in enumerate(rows):
        if ech.add(r) is None:
            out.append(i)
    return out


def rank(matrix) -> int:
    """Exact rank (number of pivots)."""
    return len(pivot_rows(matrix))


def rref(matrix: Sequence[Sequence[Number]]) -> tuple[list[list[Fraction]], list[int]]:
    """Reduced row echelon form (dense, exact) and the pivot columns, left to right."""
    rows = [[Fraction(x) for x in r] for r in matrix]
    n_rows = len(rows)
    n_cols = len(rows[0]) if rows else 0
    pivots: list[int] = []
    r = 0
    for c in range(n_cols):
        if r == n_rows:
            break
        pr = next((i for i in range(r, n_rows) if rows[i][c] != 0), None)
        if pr is None:
            continue
        rows[r], rows[pr] = rows[pr], rows[r]
        s = rows[r][c]
        rows[r] = [x / s for x in rows[r]]
        for i in range(n_rows):
            if i != r and rows[i][c] != 0:
                f = rows[i][c]
                rows[i] = [a - f * b for a, b in zip(rows[i], rows[r])]
        pivots.append(c)
        r += 1
    return rows, pivots


def solve_rational(matrix: Sequence[Sequence[Number]], rhs: Sequence[Number]) -> list[Fraction] | None:
    """The unique exact solution x of the square system ``matrix @ x = rhs``; None when the
    matrix is singular."""
    n = len(matrix)
    reduced, pivots = rref([list(row) + [b] for row, b in zip(matrix, rhs)])
    if pivots != list(range(n)):
        return None
    return [reduced[i][n] for i in range(n)]


def nullspace(matrix: Sequence[Sequence[Number]], n_cols: int | None = None) -> list[list[int]]:
    """Primitive integer basis of ``{x : M x = 0}``, one vector per free column, in column order.

    Each vector has a 1 (before scaling to integers) at its free column and is positive there.
    """
    if n_cols is None:
        n_cols = len(matrix[0]) if matrix else 0
    R, pivots = rref(matrix) if matrix else ([], [])
    out = []
    pset = set(pivots)
    for f in range(n_cols):
        if f in pset:
            continue
        v: dict[int, Number] = {f: 1}
        for i, p in enumerate(pivots):
            if R[i][f] != 0:
                v[p] = -R[i][f]
        prim = primitive(v)
        out.append([prim.get(j, 0) for j in range(n_cols)])
    return out


def left_nullspace(matrix: Sequence[Sequence[Number]]) -> list[list[int]]:
    """Primitive integer basis of ``{y : y^T M = 0}``."""
    n_rows = len(matrix)
    n_cols = len(matrix[0]) if matrix else 0
    transposed = [[matrix[i][j] for i in range(n_rows)] for j in range(n_cols)]
    return nullspace(transposed, n_rows) if n_cols else [[int(i == j) for j in range(n_rows)] for i in range(n_rows)]


def _size(v: Mapping[int, int]) -> tuple[int, int]:
    return (len(v), sum(abs(x) for x in v.values()))


def small_integer_basis(vectors: Sequence[Mapping[int, Number]], passes: int = 2) -> list[dict[int, int]]:
    """Same span, with integer vectors made sparser and smaller where a cheap step helps.

    Heuristic (no lattice reduction, which is too slow at mechanism scale): replace a
    vector ``v`` by the primitive form of ``v + t w`` (``t`` a small integer or the
    ratio that cancels a shared entry) whenever that is strictly smaller in (support
    size, sum of absolute coefficients).  Each replacement keeps the set a basis of the
    same space because ``w`` stays in the set and the step is invertible over the
    rationals.
    """
    basis = [primitive(v) for v in vectors]
    # the pairwise search costs (vectors^2 x support^2): keep it to the small sets people read
    if len(basis) > 200 or any(len(v) > 64 for v in basis):
        return basis
    for _ in range(passes):
        changed = False
        for i in range(len(basis)):
            for j in range(len(basis)):
                if i == j:
                    continue
                v, w = basis[i], basis[j]
                shared = set(v) & set(w)
                if not shared:
                    continue
                best = v
                union = v.keys() | w.keys()
                for k in shared:
                    # v - (v_k / w_k) w, scaled by w_k to stay in integers (same sign as v + t w)
                    a, c_ = (w[k], v[k]) if w[k] > 0 else (-w[k], -v[k])
                    cand = {c: a * v.get(c, 0) - c_ * w.get(c, 0) for c in union}
                    cand = primitive({c: x for c, x in cand.items() if x != 0})
                    if cand and _size(cand) < _size(best):
                        best = cand
                if best is not v:
                    basis[i] = best
                    changed = True
        if not changed:
            break
    return basis
