"""Tests for auditor.exact (exact sparse rational linear algebra).

Reference for every property test: sympy's exact ``Matrix`` over the rationals
(``rank``, ``rref``, ``nullspace``), which is independent of the code under test.
Matrices are small (up to 7x7) with entries drawn from small integers and the
fractions that occur as stoichiometric coefficients (1/2, 3/2, 1/3, ...); a share of
them are built as products of thinner matrices so that rank deficiency is common.

Table cases give exact values with their source in a comment beside each one.
"""

from __future__ import annotations

from fractions import Fraction
from math import gcd

import pytest
import sympy
from sympy import QQ
from sympy.polys.matrices import DomainMatrix
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from auditor import exact

# ------------------------------------------------------------------ strategies

FRACTIONS = [Fraction(1, 2), Fraction(3, 2), Fraction(-1, 2), Fraction(-3, 2), Fraction(1, 3),
             Fraction(-2, 3), Fraction(5, 4)]
# Entries are decoded from one byte string per matrix (one hypothesis draw instead of
# ~50 keeps generation fast; bytes shrink towards 0, which decodes to the entry 0).
SPARSE_TABLE = [0, 0, 0, 0, 1, -1, 2, -2, 3, -3, 1, -1] + FRACTIONS   # many zeros, as in stoichiometry
DENSE_TABLE = [1, -1, 2, -2, 3, -3, 0] + FRACTIONS
SCALES = [1, -1, 2, Fraction(1, 2), Fraction(-3, 2), 0]


def _decode(blob: bytes, table, r: int, c: int):
    return [[table[blob[i * c + j] % len(table)] for j in range(c)] for i in range(r)]


@st.composite
def matrices(draw, max_rows: int = 7, max_cols: int = 7):
    """A dense list-of-lists matrix of int/Fraction entries, often rank deficient."""
    r = draw(st.integers(1, max_rows))
    c = draw(st.integers(1, max_cols))
    kind = draw(st.sampled_from(["plain", "low-rank", "repeated-rows"]))
    if kind == "plain":
        return _decode(draw(st.binary(min_size=r * c, max_size=r * c)), SPARSE_TABLE, r, c)
    if kind == "low-rank":  # a product of r x k and k x c factors has rank <= k < min(r, c)
        k = draw(st.integers(0, max(0, min(r, c) - 1)))
        B = _decode(draw(st.binary(min_size=r * k, max_size=r * k)), DENSE_TABLE, r, k)
        C = _decode(draw(st.binary(min_size=k * c, max_size=k * c)), DENSE_TABLE, k, c)
        return [[_norm(sum((Fraction(B[i][t]) * C[t][j] for t in range(k)), Fraction(0))) for j in range(c)]
                for i in range(r)]
    # rows that repeat a few base rows, scaled (duplicates, reversals, halves, zero rows)
    b = draw(st.integers(1, r))
    base = _decode(draw(st.binary(min_size=b * c, max_size=b * c)), SPARSE_TABLE, b, c)
    picks = draw(st.binary(min_size=2 * r, max_size=2 * r))
    return [[_norm(Fraction(SCALES[picks[2 * i + 1] % len(SCALES)]) * x) for x in base[picks[2 * i] % b]]
            for i in range(r)]


def _norm(x):
    x = Fraction(x)
    return x.numerator if x.denominator == 1 else x


def sym(matrix, n_cols=None) -> sympy.Matrix:
    """sympy Matrix with exact Rational entries (the reference implementation)."""
    if not matrix:
        return sympy.zeros(0, n_cols or 0)
    return sympy.Matrix([[sympy.Rational(Fraction(x).numerator, Fraction(x).denominator) for x in row]
                         for row in matrix])


def to_fraction(x) -> Fraction:
    return Fraction(int(sympy.numer(x)), int(sympy.denom(x)))


def dm(rows, n_cols) -> DomainMatrix:
    data = [[QQ(Fraction(x).numerator, Fraction(x).denominator) for x in r] for r in rows]
    return DomainMatrix(data, (len(rows), n_cols), QQ)


def dm_nullspace(rows, n_cols) -> list[list[Fraction]]:
    """sympy's exact null space (DomainMatrix over QQ), as Fraction rows."""
    ns = dm(rows, n_cols).nullspace()
    return [[Fraction(int(x.numerator), int(x.denominator)) for x in row] for row in ns.to_list()]


def sym_rank(rows, n_cols) -> int:
    """Exact rank with sympy's DomainMatrix over QQ (same algorithm family, much faster than Matrix.rank)."""
    if not rows:
        return 0
    return dm(rows, n_cols).rank()


def densify(vectors, n):
    return [[Fraction(v.get(j, 0)) for j in range(n)] for v in vectors]


FAST = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
QUICK = settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])


# ------------------------------------------------------------------ rank and pivot rows

@FAST
@given(matrices())
def test_rank_matches_sympy(M):
    rank_found = exact.rank(M)
    assert rank_found == sym(M).rank()  # reference: sympy exact rank


@FAST
@given(matrices())
def test_pivot_rows_are_the_earliest_independent_rows(M):
    pivots_found = exact.pivot_rows(M)
    # definition (greedy basis of the row matroid): row i is kept iff it raises the
    # rank of the rows before it; checked with sympy one prefix at a time
    expected = []
    previous = 0
    for i in range(len(M)):
        r = sym_rank(M[: i + 1], len(M[0]))
        if r > previous:
            expected.append(i)
        previous = r
    assert pivots_found == expected
    # the same set is the pivot columns of the transpose's rref (theorem)
    assert tuple(pivots_found) == sym(M).T.rref()[1]


@QUICK
@given(matrices())
def test_pivot_rows_accepts_sparse_rows(M):
    sparse = [{j: x for j, x in enumerate(row) if x != 0} for row in M]
    pivots_found = exact.pivot_rows(sparse)
    assert pivots_found == exact.pivot_rows(M)


# ------------------------------------------------------------------ rref

@FAST
@given(matrices())
def test_rref_matches_sympy(M):
    R_found, pivots_found = exact.rref(M)
    R_ref, pivots_ref = sym(M).rref()
    assert tuple(pivots_found) == pivots_ref
    assert [[Fraction(x) for x in row] for row in R_found] == \
        [[to_fraction(R_ref[i, j]) for j in range(R_ref.cols)] for i in range(R_ref.rows)]
    assert all(type(x) is Fraction for row in R_found for x in row)


# ------------------------------------------------------------------ null spaces

@FAST
@given(matrices())
def test_nullspace_is_a_basis_of_sympys_nullspace(M):
    n = len(M[0])
    basis_found = exact.nullspace(M)
    # count: rank-nullity (theorem)
    assert len(basis_found) == n - sym_rank(M, n)
    for v in basis_found:
        assert all(type(x) is int for x in v)
        assert gcd(*v) == 1  # primitive integer vector
        assert all(sum(Fraction(M[i][j]) * v[j] for j in range(n)) == 0 for i in range(len(M)))
    # same span as sympy's null space: ranks of each and of the two stacked agree
    ref = dm_nullspace(M, n)
    assert sym_rank(basis_found, n) == len(basis_found)
    assert sym_rank(basis_found + ref, n) == len(ref) == len(basis_found)


@QUICK
@given(matrices())
def test_nullspace_vector_is_positive_at_its_free_column(M):
    _, pivots = exact.rref(M)
    free = [j for j in range(len(M[0])) if j not in pivots]
    basis_found = exact.nullspace(M)
    for f, v in zip(free, basis_found):
        assert v[f] > 0
        assert all(v[g] == 0 for g in free if g != f)


@QUICK
@given(matrices())
def test_left_nullspace(M):
    m, n = len(M), len(M[0])
    basis_found = exact.left_nullspace(M)
    assert len(basis_found) == m - sym_rank(M, n)  # rank-nullity on the transpose (theorem)
    for y in basis_found:
        assert all(type(x) is int for x in y)
        assert all(sum(y[i] * Fraction(M[i][j]) for i in range(m)) == 0 for j in range(n))
    ref = dm_nullspace([list(col) for col in zip(*M)], m)
    assert sym_rank(basis_found + ref, m) == len(ref) == len(basis_found)


def test_nullspace_of_full_rank_and_zero_matrices():
    assert exact.nullspace([[1, 0], [0, 1]]) == []            # theorem: trivial null space
    assert exact.nullspace([[0, 0, 0]]) == [[1, 0, 0], [0, 1, 0], [0, 0, 1]]  # theorem: all of Q^3
    assert exact.left_nullspace([[1, 2], [2, 4]]) == [[-2, 1]]  # row 2 = 2 x row 1 (by hand)
    # formula matrix of CH4, H2O, CO, CO2, H2 (rows C, H, O); its null space has
    # N - rank A = 5 - 3 = 2 vectors (Smith & Missen 1982, formula-matrix method)
    A = [[1, 0, 1, 1, 0], [4, 2, 0, 0, 2], [0, 1, 1, 2, 0]]
    ns_found = exact.nullspace(A)
    assert len(ns_found) == 2
    assert all(sum(A[i][j] * v[j] for j in range(5)) == 0 for v in ns_found for i in range(3))


# ------------------------------------------------------------------ RowEchelon

@FAST
@given(matrices(), st.booleans())
def test_row_echelon_combinations_recompose_each_row(M, leftmost):
    n = len(M[0])
    ech = exact.RowEchelon(leftmost=leftmost)
    kept: list[int] = []
    for i, row in enumerate(M):
        combo_found = ech.add({j: x for j, x in enumerate(row) if x != 0})
        if combo_found is None:
            kept.append(i)
            continue
        assert all(0 <= b < len(kept) for b in combo_found)
        recomposed = [sum((Fraction(c) * Fraction(M[kept[b]][j]) for b, c in combo_found.items()), Fraction(0))
                      for j in range(n)]
        assert recomposed == [Fraction(x) for x in row]
        assert all(c != 0 for c in combo_found.values())
    assert kept == exact.pivot_rows(M)
    assert ech.rank == len(kept) == sym_rank(M, n)
    # the reduced basis spans the row space (theorem: rank of the stack is unchanged)
    basis = densify(ech.basis_rows(), n)
    assert sym_rank(basis, n) == ech.rank
    assert sym_rank(basis + [list(map(Fraction, r)) for r in M], n) == ech.rank
    # fully reduced: every basis row is 1 at its own pivot and 0 at the others
    for p, row in zip(ech.pivots, ech.basis_rows()):
        assert row[p] == 1
        assert all(q not in row for q in ech.pivots if q != p)


@QUICK
@given(matrices())
def test_row_echelon_leftmost_pivots_are_the_rref_pivots(M):
    ech = exact.RowEchelon(track=False, leftmost=True)
    for row in M:
        ech.add({j: x for j, x in enumerate(row) if x != 0})
    assert sorted(ech.pivots) == list(sym(M).rref()[1])  # reference: sympy rref pivots


@QUICK
@given(matrices())
def test_row_echelon_nullspace(M):
    n = len(M[0])
    ech = exact.RowEchelon(track=False)
    for row in M:
        ech.add({j: x for j, x in enumerate(row) if x != 0})
    basis_found = ech.nullspace(range(n))
    assert len(basis_found) == n - ech.rank  # rank-nullity (theorem)
    for w in basis_found:
        assert all(type(x) is int for x in w.values())
        assert all(sum(Fraction(M[i][j]) * w.get(j, 0) for j in range(n)) == 0 for i in range(len(M)))
    ref = dm_nullspace(M, n)
    assert sym_rank(densify(basis_found, n) + ref, n) == len(ref)


def test_row_echelon_table():
    # SMR, WGS and their sum over (CH4, H2O, CO, CO2, H2): the third is r0 + r1
    # (Xu & Froment, AIChE J. 1989 use these three reactions — from memory)
    ech = exact.RowEchelon()
    assert ech.add({0: -1, 1: -1, 2: 1, 4: 3}) is None
    assert ech.add({1: -1, 2: -1, 3: 1, 4: 1}) is None
    combo_found = ech.add({0: -1, 1: -2, 3: 1, 4: 4})
    assert combo_found == {0: 1, 1: 1}           # by hand
    # a half reaction: 1/2 of WGS (by hand)
    assert ech.add({1: Fraction(-1, 2), 2: Fraction(-1, 2), 3: Fraction(1, 2), 4: Fraction(1, 2)}) == {1: Fraction(1, 2)}
    assert ech.add({}) == {}                      # the zero row is the empty combination (by hand)
    assert ech.rank == 2


# ------------------------------------------------------------------ small helpers

@pytest.mark.parametrize("vector, expected", [
    ({0: Fraction(1, 2), 2: Fraction(3, 2)}, {0: 1, 2: 3}),       # by hand: x2
    ({0: 2, 1: -4, 2: 6}, {0: 1, 1: -2, 2: 3}),                    # by hand: /2
    ({0: Fraction(-1, 2)}, {0: -1}),                                # by hand: sign kept
    ({0: 0, 1: 3, 2: Fraction(3, 2)}, {1: 2, 2: 1}),               # by hand: zeros dropped, x2/3
    ({0: Fraction(2, 3), 1: Fraction(4, 9)}, {0: 3, 1: 2}),        # by hand: x9/2
    ({0: 5, 1: 7}, {0: 5, 1: 7}),                                   # by hand: coprime already
    ({}, {}),                                                       # by hand: empty
    ({0: 0}, {}),                                                   # by hand: zero vector
])
def test_primitive_table(vector, expected):
    primitive_found = exact.primitive(vector)
    assert primitive_found == expected
    assert all(type(x) is int for x in primitive_found.values())


sparse_vectors = st.dictionaries(st.integers(0, 6), st.sampled_from(SPARSE_TABLE), max_size=6)


@QUICK
@given(sparse_vectors)
def test_primitive_properties(v):
    p = exact.primitive(v)
    nonzero = {k: Fraction(x) for k, x in v.items() if x != 0}
    assert set(p) == set(nonzero)
    if not p:
        return
    assert all(type(x) is int for x in p.values())
    assert gcd(*p.values()) == 1
    k0 = min(p)
    t = nonzero[k0] / p[k0]
    assert t > 0  # same direction and sign
    assert all(nonzero[k] == t * p[k] for k in p)


@pytest.mark.parametrize("vector, key, factor", [
    ({0: -2, 3: 4}, ((0, 1), (3, -2)), Fraction(-2)),                        # by hand
    ({1: Fraction(1, 2), 2: Fraction(1, 2)}, ((1, 1), (2, 1)), Fraction(1, 2)),  # by hand
    ({2: Fraction(-3, 2), 5: 3}, ((2, 1), (5, -2)), Fraction(-3, 2)),       # by hand
    ({}, (), Fraction(0)),                                                  # by hand: zero vector
])
def test_canonical_direction_table(vector, key, factor):
    key_found, factor_found = exact.canonical_direction(vector)
    assert key_found == key
    assert factor_found == factor


@QUICK
@given(sparse_vectors, st.sampled_from([1, -1, 2, -3, Fraction(1, 2), Fraction(-3, 2), Fraction(7, 5)]))
def test_canonical_direction_is_shared_by_parallel_vectors(v, t):
    key, factor = exact.canonical_direction(v)
    nonzero = {k: Fraction(x) for k, x in v.items() if x != 0}
    if not nonzero:
        assert key == ()
        return
    assert key[0][1] > 0  # lowest-index entry positive
    assert {k: factor * c for k, c in key} == nonzero  # vector = factor * key
    key2, factor2 = exact.canonical_direction({k: t * x for k, x in v.items()})
    assert key2 == key
    assert factor2 == t * factor


@pytest.mark.parametrize("value, expected", [
    (0.5, Fraction(1, 2)),            # common practice (exact binary value)
    (1.5, Fraction(3, 2)),            # common practice
    (0.333333333333, Fraction(1, 3)), # |1/3 - value| = 3.3e-13 < 1e-9 (by hand)
    (2.0, Fraction(2)),               # integer
    (-0.25, Fraction(-1, 4)),         # by hand
    (0.1, Fraction(1, 10)),           # nearest double to 1/10 (by hand)
    (1 / 7, Fraction(1, 7)),          # by hand
    (0.001, Fraction(1, 1000)),       # denominator exactly at the bound
    (0.3183, None),                   # nearest q <= 1000 is 7/22, 1.2e-4 away (by hand)
    (0.0005, None),                   # halfway between 0 and 1/1000 (by hand)
    (1 / 1001, None),                 # denominator above the bound (by hand)
    (float("nan"), None),             # not a number
    (float("inf"), None),             # not finite
])
def test_as_simple_fraction(value, expected):
    fraction_found = exact.as_simple_fraction(value, 1000, 1e-9)
    assert fraction_found == expected
    if expected is not None:
        assert type(fraction_found) is Fraction


@pytest.mark.parametrize("value, text", [
    (Fraction(1, 2), "1/2"),     # design §4 "p/q"
    (Fraction(-3, 2), "-3/2"),   # design §4
    (3, "3"),                    # design §4: "p" when whole
    (Fraction(4, 2), "2"),       # normalised
    (0, "0"),
    (Fraction(-7, 1), "-7"),
])
def test_format_fraction(value, text):
    assert exact.format_fraction(value) == text


def test_sparse_matvec():
    # formula-matrix columns of CH4, H2O, CO, CO2, H2 (rows C=0, H=1, O=2) times the
    # SMR vector gives zero: the reaction balances (by hand)
    cols = [{0: 1, 1: 4}, {1: 2, 2: 1}, {0: 1, 2: 1}, {0: 1, 2: 2}, {1: 2}]
    assert exact.sparse_matvec(cols, {0: -1, 1: -1, 2: 1, 4: 3}) == {}
    # CH4 + H2O -> CO + 2 H2 is two hydrogen atoms short (by hand)
    assert exact.sparse_matvec(cols, {0: -1, 1: -1, 2: 1, 4: 2}) == {1: -2}
    assert exact.sparse_matvec(cols, {4: Fraction(1, 2)}) == {1: 1}


# ------------------------------------------------------------------ small_integer_basis

@st.composite
def vector_sets(draw):
    M = draw(matrices())
    n = len(M[0])
    pivots = exact.pivot_rows(M)  # an independent set, as the function requires
    return [{j: M[i][j] for j in range(n) if M[i][j] != 0} for i in pivots], n


@FAST
@given(vector_sets())
def test_small_integer_basis_preserves_the_span(data):
    vectors, n = data
    basis_found = exact.small_integer_basis(vectors)
    assert len(basis_found) == len(vectors)
    assert all(type(x) is int for v in basis_found for x in v.values())
    old = densify(vectors, n)
    new = densify(basis_found, n)
    r = sym_rank(old, n)
    assert sym_rank(new, n) == r == len(vectors)
    assert sym_rank(old + new, n) == r  # same span (theorem: stacking adds no rank)


def test_small_integer_basis_makes_vectors_smaller():
    # v = w + e2: the heuristic should find v - w = e2 (by hand)
    basis_found = exact.small_integer_basis([{0: 1, 1: 1, 2: 1}, {0: 1, 1: 1}])
    assert {0: 1, 1: 1} in basis_found
    assert {2: 1} in basis_found


# ------------------------------------------------------------------ eliminate_columns

@st.composite
def rows_and_columns(draw):
    vectors, n = draw(vector_sets())
    cols = sorted(draw(st.sets(st.integers(0, n - 1), max_size=n)))
    return vectors, n, cols


@QUICK
@given(rows_and_columns())
def test_eliminate_columns_spans_the_subspace_zero_on_those_columns(data):
    vectors, n, cols = data
    out_found = exact.eliminate_columns(vectors, cols)
    for v in out_found:
        assert all(v.get(c, 0) == 0 for c in cols)
    r = sym_rank(densify(vectors, n), n)
    # theorem: dim(span(rows) ∩ {v_c = 0, c in cols}) = rank(rows) - rank(rows restricted to cols)
    projected = [[Fraction(v.get(c, 0)) for c in cols] for v in vectors]
    expected_dim = r - (sym_rank(projected, len(cols)) if cols else 0)
    out = densify(out_found, n)
    assert len(out_found) == expected_dim
    assert sym_rank(out, n) == expected_dim                           # independent
    assert sym_rank(densify(vectors, n) + out, n) == r                # inside span(rows)


def test_eliminate_columns_table():
    # SMR and WGS over (CH4, H2O, CO, CO2, H2): the combination free of CO is their sum,
    # CH4 + 2 H2O <=> CO2 + 4 H2 (by hand)
    out_found = exact.eliminate_columns([{0: -1, 1: -1, 2: 1, 4: 3}, {1: -1, 2: -1, 3: 1, 4: 1}], [2])
    assert [exact.primitive(v) for v in out_found] in ([{0: -1, 1: -2, 3: 1, 4: 4}], [{0: 1, 1: 2, 3: -1, 4: -4}])
