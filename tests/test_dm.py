"""Tests for auditor.dm (Dulmage--Mendelsohn decomposition).

The table cases were worked by hand; their matrices are drawn in comments
(rows = equations r0.., columns = variables c0.., ``x`` = incidence).  Where a
maximum matching is not unique, the case lists every maximum matching
(worked by hand) and the test accepts any one of them; the coarse parts and
the blocks are unique, so they are compared exactly.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.sparse.csgraph import maximum_bipartite_matching

from auditor.dm import DMDecomposition, dulmage_mendelsohn

Block = tuple[tuple[int, ...], tuple[int, ...]]


@dataclass(frozen=True)
class Case:
    name: str
    shape: tuple[int, int]
    entries: tuple[tuple[int, int], ...]
    matchings: tuple[frozenset[tuple[int, int]], ...]  # every maximum matching
    over: tuple[tuple[int, ...], tuple[int, ...]]
    square: tuple[tuple[int, ...], tuple[int, ...]]
    under: tuple[tuple[int, ...], tuple[int, ...]]
    blocks: tuple[Block, ...]
    nonsingular: bool
    rank: int


def M(*pairs: tuple[int, int]) -> frozenset[tuple[int, int]]:
    return frozenset(pairs)


def dense(shape: tuple[int, int], entries) -> np.ndarray:
    a = np.zeros(shape)
    for r, c in entries:
        a[r, c] = 1.0
    return a


CASES = [
    # Worked by hand.  Lower triangular, solved top-down.
    #      c0 c1 c2
    # r0 [ x  .  . ]
    # r1 [ x  x  . ]
    # r2 [ .  x  x ]
    # Only one perfect matching (r0 has only c0, then r1 c1, r2 c2); every
    # equation is its own block and needs the variable of the row above.
    Case(
        name="square_nonsingular_lower_triangular",
        shape=(3, 3),
        entries=((0, 0), (1, 0), (1, 1), (2, 1), (2, 2)),
        matchings=(M((0, 0), (1, 1), (2, 2)),),
        over=((), ()),
        square=((0, 1, 2), (0, 1, 2)),
        under=((), ()),
        blocks=(((0,), (0,)), ((1,), (1,)), ((2,), (2,))),
        nonsingular=True,
        rank=3,
    ),
    # Worked by hand.  Upper triangular, so it must be solved bottom-up.
    #      c0 c1 c2
    # r0 [ x  x  . ]
    # r1 [ .  x  x ]
    # r2 [ .  .  x ]
    # r2 gives c2, then r1 gives c1, then r0 gives c0.
    Case(
        name="square_nonsingular_upper_triangular_solved_bottom_up",
        shape=(3, 3),
        entries=((0, 0), (0, 1), (1, 1), (1, 2), (2, 2)),
        matchings=(M((0, 0), (1, 1), (2, 2)),),
        over=((), ()),
        square=((0, 1, 2), (0, 1, 2)),
        under=((), ()),
        blocks=(((2,), (2,)), ((1,), (1,)), ((0,), (0,))),
        nonsingular=True,
        rank=3,
    ),
    # Worked by hand.  Structurally singular square: two equations in the
    # single variable c0, and c1 in no equation.
    #      c0 c1
    # r0 [ x  . ]
    # r1 [ x  . ]
    # Matching: c0 with r0 or with r1.  The unmatched row reaches c0 and the
    # other row -> over = ({r0, r1}, {c0}); the unmatched c1 has no entries
    # -> under = ({}, {c1}).
    Case(
        name="square_structurally_singular",
        shape=(2, 2),
        entries=((0, 0), (1, 0)),
        matchings=(M((0, 0)), M((1, 0))),
        over=((0, 1), (0,)),
        square=((), ()),
        under=((), (1,)),
        blocks=(),
        nonsingular=False,
        rank=1,
    ),
    # Worked by hand.  Over-determined: 3 equations, 2 variables.
    #      c0 c1
    # r0 [ x  . ]
    # r1 [ .  x ]
    # r2 [ x  x ]
    # Maximum matchings (size 2): {r0c0, r1c1}, {r0c0, r2c1}, {r2c0, r1c1}.
    # Each leaves a different row unmatched, and from any of them the
    # alternating paths reach everything.
    Case(
        name="over_determined_3x2",
        shape=(3, 2),
        entries=((0, 0), (1, 1), (2, 0), (2, 1)),
        matchings=(M((0, 0), (1, 1)), M((0, 0), (2, 1)), M((2, 0), (1, 1))),
        over=((0, 1, 2), (0, 1)),
        square=((), ()),
        under=((), ()),
        blocks=(),
        nonsingular=False,
        rank=2,
    ),
    # Worked by hand.  Under-determined: 2 equations, 3 variables.
    #      c0 c1 c2
    # r0 [ x  x  . ]
    # r1 [ .  x  x ]
    # Maximum matchings: {r0c0, r1c1}, {r0c0, r1c2}, {r0c1, r1c2}; every
    # column is unmatched in one of them, so everything is under-determined.
    Case(
        name="under_determined_2x3",
        shape=(2, 3),
        entries=((0, 0), (0, 1), (1, 1), (1, 2)),
        matchings=(M((0, 0), (1, 1)), M((0, 0), (1, 2)), M((0, 1), (1, 2))),
        over=((), ()),
        square=((), ()),
        under=((0, 1), (0, 1, 2)),
        blocks=(),
        nonsingular=False,
        rank=2,
    ),
    # Worked by hand.  All three parts.
    #      c0 c1 c2 c3 c4
    # r0 [ x  .  .  .  . ]   over
    # r1 [ x  .  .  .  . ]   over
    # r2 [ x  x  .  .  . ]   square (also touches the over column c0)
    # r3 [ .  x  x  .  . ]   square
    # r4 [ .  .  x  x  x ]   under (also touches the square column c2)
    # r0, r1 share their only column c0, so the rank is at most 4, and
    # {r0c0, r2c1, r3c2, r4c3} attains it.  In every maximum matching c0 goes
    # to r0 or r1, r2-c1 and r3-c2 are forced, and r4 takes c3 or c4.
    # Over: unmatched r1 -> c0 -> r0.  Under: unmatched c4 -> r4 -> c3.
    # Square: r2 (c1) first, then r3 which needs c1.
    Case(
        name="mixed_over_square_under",
        shape=(5, 5),
        entries=((0, 0), (1, 0), (2, 0), (2, 1), (3, 1), (3, 2), (4, 2), (4, 3), (4, 4)),
        matchings=tuple(
            M((a, 0), (2, 1), (3, 2), (4, b)) for a in (0, 1) for b in (3, 4)
        ),
        over=((0, 1), (0,)),
        square=((2, 3), (1, 2)),
        under=((4,), (3, 4)),
        blocks=(((2,), (1,)), ((3,), (2,))),
        nonsingular=False,
        rank=4,
    ),
    # Worked by hand.  The empty 0 x 0 system: nothing to do, vacuously
    # nonsingular.
    Case(
        name="empty_0x0",
        shape=(0, 0),
        entries=(),
        matchings=(M(),),
        over=((), ()),
        square=((), ()),
        under=((), ()),
        blocks=(),
        nonsingular=True,
        rank=0,
    ),
    # Worked by hand.  Equations but no variables: both rows are unmatched
    # and empty, hence over-determined with no columns.
    Case(
        name="empty_2x0_equations_only",
        shape=(2, 0),
        entries=(),
        matchings=(M(),),
        over=((0, 1), ()),
        square=((), ()),
        under=((), ()),
        blocks=(),
        nonsingular=False,
        rank=0,
    ),
    # Worked by hand.  Variables but no equations: all under-determined.
    Case(
        name="empty_0x3_variables_only",
        shape=(0, 3),
        entries=(),
        matchings=(M(),),
        over=((), ()),
        square=((), ()),
        under=((), (0, 1, 2)),
        blocks=(),
        nonsingular=False,
        rank=0,
    ),
    # Worked by hand.  An empty row.
    #      c0 c1
    # r0 [ x  . ]
    # r1 [ .  . ]   <- empty equation
    # r2 [ .  x ]
    # Unique maximum matching {r0c0, r2c1}; r1 is unmatched with no entries,
    # so over = ({r1}, {}).  The rest is square with two independent 1x1
    # blocks (ties broken by smallest row).
    Case(
        name="empty_row",
        shape=(3, 2),
        entries=((0, 0), (2, 1)),
        matchings=(M((0, 0), (2, 1)),),
        over=((1,), ()),
        square=((0, 2), (0, 1)),
        under=((), ()),
        blocks=(((0,), (0,)), ((2,), (1,))),
        nonsingular=False,
        rank=2,
    ),
    # Worked by hand.  An empty column.
    #      c0 c1 c2
    # r0 [ x  .  . ]
    # r1 [ x  .  x ]
    #         ^ empty variable
    # Unique maximum matching {r0c0, r1c2} (r0 has only c0); c1 is unmatched
    # with no entries, so under = ({}, {c1}).  Square: r0 gives c0, then r1
    # (which also uses c0) gives c2.
    Case(
        name="empty_column",
        shape=(2, 3),
        entries=((0, 0), (1, 0), (1, 2)),
        matchings=(M((0, 0), (1, 2)),),
        over=((), ()),
        square=((0, 1), (0, 2)),
        under=((), (1,)),
        blocks=(((0,), (0,)), ((1,), (2,))),
        nonsingular=False,
        rank=2,
    ),
    # Worked by hand.  4x4 with two 2x2 cycles, block upper triangular.
    #      c0 c1 c2 c3
    # r0 [ x  x  .  x ]
    # r1 [ x  x  .  . ]
    # r2 [ .  .  x  x ]
    # r3 [ .  .  x  x ]
    # r2, r3 only use c2, c3, so they must take them (2 ways), leaving c0, c1
    # for r0, r1 (2 ways): 4 perfect matchings.  Block {r2,r3}x{c2,c3} is
    # solved first; block {r0,r1}x{c0,c1} needs c3, so it comes second even
    # though its rows are smaller.
    Case(
        name="block_triangular_two_2x2_cycles",
        shape=(4, 4),
        entries=(
            (0, 0), (0, 1), (0, 3),
            (1, 0), (1, 1),
            (2, 2), (2, 3),
            (3, 2), (3, 3),
        ),
        matchings=tuple(
            M(*p, *q)
            for p in (((0, 0), (1, 1)), ((0, 1), (1, 0)))
            for q in (((2, 2), (3, 3)), ((2, 3), (3, 2)))
        ),
        over=((), ()),
        square=((0, 1, 2, 3), (0, 1, 2, 3)),
        under=((), ()),
        blocks=(((2, 3), (2, 3)), ((0, 1), (0, 1))),
        nonsingular=True,
        rank=4,
    ),
    # Worked by hand.  A 3-cycle is one irreducible block.
    #      c0 c1 c2
    # r0 [ x  x  . ]
    # r1 [ .  x  x ]
    # r2 [ x  .  x ]
    # Perfect matchings: the diagonal, or {r0c1, r1c2, r2c0}.
    Case(
        name="irreducible_3_cycle",
        shape=(3, 3),
        entries=((0, 0), (0, 1), (1, 1), (1, 2), (2, 0), (2, 2)),
        matchings=(M((0, 0), (1, 1), (2, 2)), M((0, 1), (1, 2), (2, 0))),
        over=((), ()),
        square=((0, 1, 2), (0, 1, 2)),
        under=((), ()),
        blocks=(((0, 1, 2), (0, 1, 2)),),
        nonsingular=True,
        rank=3,
    ),
]


def _inputs(case: Case):
    """The same pattern in every accepted input form."""
    a = dense(case.shape, case.entries)
    return {
        "dense": (a, {}),
        "csr": (sp.csr_matrix(a), {}),
        "coo_array": (sp.coo_array(a), {}),
        "pairs": (list(case.entries), {"n_rows": case.shape[0], "n_cols": case.shape[1]}),
    }


@pytest.mark.parametrize("form", ["dense", "csr", "coo_array", "pairs"])
@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_hand_worked_cases(case: Case, form: str) -> None:
    incidence, kw = _inputs(case)[form]
    d = dulmage_mendelsohn(incidence, **kw)
    assert isinstance(d, DMDecomposition)
    assert d.matching == tuple(sorted(d.matching))
    assert frozenset(d.matching) in case.matchings
    assert (d.over_rows, d.over_cols) == case.over
    assert (d.square_rows, d.square_cols) == case.square
    assert (d.under_rows, d.under_cols) == case.under
    assert d.blocks == case.blocks
    assert d.structurally_nonsingular is case.nonsingular
    assert d.structural_rank == case.rank


def test_result_is_frozen_and_plain_python_ints() -> None:
    d = dulmage_mendelsohn([[1, 1], [0, 1]])
    with pytest.raises(AttributeError):
        d.blocks = ()  # type: ignore[misc]
    flat = [i for pair in d.matching for i in pair] + [i for b in d.blocks for part in b for i in part]
    assert all(type(i) is int for i in flat)
    hash(d)


def test_duplicates_and_explicit_zeros() -> None:
    # Duplicate pairs are one incidence; a stored zero is no incidence.
    d = dulmage_mendelsohn([(0, 0), (0, 0), (1, 1), (1, 1)], n_rows=2, n_cols=2)
    assert d.matching == ((0, 0), (1, 1)) and d.structurally_nonsingular
    a = sp.csr_matrix((np.array([1.0, 0.0]), (np.array([0, 1]), np.array([0, 1]))), shape=(2, 2))
    assert a.nnz == 2
    d = dulmage_mendelsohn(a)
    assert d.matching == ((0, 0),)
    assert (d.over_rows, d.over_cols, d.under_rows, d.under_cols) == ((1,), (), (), (1,))


def test_cancelling_duplicates_in_coo_still_count_by_value() -> None:
    # csr_matrix sums duplicates: 1 + (-1) = 0 is no incidence by value.
    a = sp.coo_matrix((np.array([1.0, -1.0]), (np.array([0, 0]), np.array([0, 0]))), shape=(1, 1))
    assert dulmage_mendelsohn(a).structural_rank == 0


@pytest.mark.parametrize(
    "args, kwargs",
    [
        pytest.param(([(0, 2)],), {"n_rows": 1, "n_cols": 2}, id="col_out_of_range"),
        pytest.param(([(-1, 0)],), {"n_rows": 1, "n_cols": 2}, id="negative_row"),
        pytest.param(([(0, 0)],), {"n_rows": 1}, id="pairs_need_both_sizes"),
        pytest.param(([(0, 0, 0)],), {"n_rows": 1, "n_cols": 1}, id="not_pairs"),
        pytest.param(([(0.5, 0)],), {"n_rows": 1, "n_cols": 1}, id="non_integer"),
        pytest.param((sp.csr_matrix((2, 2)),), {"n_rows": 3, "n_cols": 2}, id="shape_mismatch"),
    ],
)
def test_bad_input(args, kwargs) -> None:
    with pytest.raises(ValueError):
        dulmage_mendelsohn(*args, **kwargs)


def test_large_random_smoke() -> None:
    rng = np.random.default_rng(12345)
    n = 5000
    rows = np.repeat(np.arange(n), 4)
    cols = rng.integers(0, n, rows.size)
    a = sp.csr_matrix((np.ones(rows.size), (rows, cols)), shape=(n, n))
    d = dulmage_mendelsohn(a)
    a.sum_duplicates()
    assert d.structural_rank == int((maximum_bipartite_matching(a, perm_type="column") >= 0).sum())
    assert sorted(d.over_rows + d.square_rows + d.under_rows) == list(range(n))
    assert sorted(d.over_cols + d.square_cols + d.under_cols) == list(range(n))
    assert d == dulmage_mendelsohn(a)  # deterministic


# ---------------------------------------------------------------------------
# Property tests on random small patterns.
# ---------------------------------------------------------------------------


@st.composite
def patterns(draw) -> tuple[int, int, frozenset[tuple[int, int]]]:
    m = draw(st.integers(0, 7))
    n = draw(st.integers(0, 7))
    cells = [(r, c) for r in range(m) for c in range(n)]
    entries = draw(st.sets(st.sampled_from(cells), max_size=len(cells))) if cells else set()
    return m, n, frozenset(entries)


def _matrix(m: int, n: int, entries, values=None) -> sp.csr_matrix:
    e = sorted(entries)
    r = np.array([i for i, _ in e], dtype=np.int64)
    c = np.array([j for _, j in e], dtype=np.int64)
    v = np.ones(len(e)) if values is None else values
    return sp.csr_matrix((v, (r, c)), shape=(m, n))


def _scipy_rank(m: int, n: int, entries) -> int:
    return int((maximum_bipartite_matching(_matrix(m, n, entries), perm_type="column") >= 0).sum())


PROPERTY = settings(max_examples=100, deadline=None, database=None, derandomize=True)


@PROPERTY
@given(patterns())
def test_partition_matching_and_rank(p) -> None:
    m, n, entries = p
    d = dulmage_mendelsohn(_matrix(m, n, entries))
    # Parts partition rows and columns; every tuple is sorted.
    for t in (d.over_rows, d.over_cols, d.square_rows, d.square_cols, d.under_rows, d.under_cols):
        assert list(t) == sorted(set(t))
    assert sorted(d.over_rows + d.square_rows + d.under_rows) == list(range(m))
    assert sorted(d.over_cols + d.square_cols + d.under_cols) == list(range(n))
    # The matching is a matching of the pattern, sorted by row.
    assert list(d.matching) == sorted(d.matching)
    assert set(d.matching) <= entries
    assert len({r for r, _ in d.matching}) == len({c for _, c in d.matching}) == len(d.matching)
    # Structural rank = matching size = scipy's = generic numerical rank.
    rank = d.structural_rank
    assert rank == len(d.matching) == _scipy_rank(m, n, entries)
    if m and n:
        vals = np.random.default_rng(len(entries)).uniform(1.0, 2.0, len(entries))
        vals *= np.where(np.random.default_rng(m * 8 + n).random(len(entries)) < 0.5, -1.0, 1.0)
        assert rank == np.linalg.matrix_rank(_matrix(m, n, entries, vals).toarray())
    else:
        assert rank == 0
    # Surplus counts.
    assert m - rank == len(d.over_rows) - len(d.over_cols)
    assert n - rank == len(d.under_cols) - len(d.under_rows)
    assert len(d.square_rows) == len(d.square_cols)
    assert d.structurally_nonsingular == (m == n == rank)


@PROPERTY
@given(patterns())
def test_coarse_structure(p) -> None:
    m, n, entries = p
    d = dulmage_mendelsohn(_matrix(m, n, entries))
    over_r, sq_r = set(d.over_rows), set(d.square_rows)
    over_c, sq_c, under_c = set(d.over_cols), set(d.square_cols), set(d.under_cols)
    # No edge from over rows to square/under columns, nor square rows to under columns.
    for r, c in entries:
        assert not (r in over_r and (c in sq_c or c in under_c))
        assert not (r in sq_r and c in under_c)
    # The matching respects the parts, and the square part is perfectly matched.
    part_r = {**{r: "o" for r in d.over_rows}, **{r: "s" for r in d.square_rows}, **{r: "u" for r in d.under_rows}}
    part_c = {**{c: "o" for c in over_c}, **{c: "s" for c in sq_c}, **{c: "u" for c in under_c}}
    assert all(part_r[r] == part_c[c] for r, c in d.matching)
    assert {r for r, _ in d.matching} >= sq_r | set(d.under_rows)
    assert {c for _, c in d.matching} >= sq_c | over_c
    # Independent characterisation (Gallai--Edmonds): a row is over-determined
    # iff some maximum matching misses it, i.e. deleting it keeps the rank; the
    # over columns are the neighbours of the over rows.  Dually for under.
    rank = d.structural_rank
    miss_r = {r for r in range(m) if _scipy_rank(m, n, {e for e in entries if e[0] != r}) == rank}
    miss_c = {c for c in range(n) if _scipy_rank(m, n, {e for e in entries if e[1] != c}) == rank}
    assert over_r == miss_r
    assert over_c == {c for r, c in entries if r in miss_r}
    assert under_c == miss_c
    assert set(d.under_rows) == {r for r, c in entries if c in miss_c}


def _fully_indecomposable(rows, cols, entries) -> bool:
    """Every proper nonempty row subset S has more than |S| neighbouring columns."""
    cols = set(cols)
    nbrs = {r: {c for rr, c in entries if rr == r and c in cols} for r in rows}
    k = len(rows)
    for size in range(1, k):
        for s in itertools.combinations(rows, size):
            if len(set().union(*(nbrs[r] for r in s))) <= size:
                return False
    return all(nbrs[r] for r in rows) if k == 1 else True


@PROPERTY
@given(patterns(), st.randoms(use_true_random=False))
def test_fine_blocks(p, rnd) -> None:
    m, n, entries = p
    d = dulmage_mendelsohn(_matrix(m, n, entries))
    matched = dict(d.matching)
    # Blocks partition the square part and are square, perfectly matched.
    assert sorted(r for b in d.blocks for r in b[0]) == list(d.square_rows)
    assert sorted(c for b in d.blocks for c in b[1]) == list(d.square_cols)
    where_c = {}
    for i, (br, bc) in enumerate(d.blocks):
        assert list(br) == sorted(br) and list(bc) == sorted(bc)
        assert sorted(matched[r] for r in br) == list(bc)
        # Irreducible (finest): the block cannot be split further.
        assert _fully_indecomposable(br, bc, entries)
        where_c.update({c: i for c in bc})
    # Block triangular: a block only uses square variables of itself or of earlier blocks.
    for i, (br, _) in enumerate(d.blocks):
        for r, c in entries:
            if r in br and c in where_c:
                assert where_c[c] <= i
    # Independent of labels/matching: relabelling rows and columns permutes
    # the coarse parts and the set of blocks accordingly.
    pr, pc = list(range(m)), list(range(n))
    rnd.shuffle(pr)
    rnd.shuffle(pc)
    e2 = {(pr[r], pc[c]) for r, c in entries}
    d2 = dulmage_mendelsohn(list(e2), n_rows=m, n_cols=n)
    R = lambda t: tuple(sorted(pr[i] for i in t))  # noqa: E731
    C = lambda t: tuple(sorted(pc[i] for i in t))  # noqa: E731
    assert (d2.over_rows, d2.over_cols) == (R(d.over_rows), C(d.over_cols))
    assert (d2.square_rows, d2.square_cols) == (R(d.square_rows), C(d.square_cols))
    assert (d2.under_rows, d2.under_cols) == (R(d.under_rows), C(d.under_cols))
    assert set(d2.blocks) == {(R(br), C(bc)) for br, bc in d.blocks}
    assert d2.structural_rank == d.structural_rank


@PROPERTY
@given(patterns())
def test_plain_python_path_agrees_with_scipy(p) -> None:
    """A list of pairs no larger than settings.DM_PLAIN_PYTHON_MAX_ENTRIES is decomposed in
    plain Python; the parts and blocks do not depend on the matching (Dulmage & Mendelsohn,
    1958), so they must equal those of scipy's path on the same pattern."""
    m, n, entries = p
    plain_found = dulmage_mendelsohn(sorted(entries), n_rows=m, n_cols=n)
    scipy_found = dulmage_mendelsohn(_matrix(m, n, entries))
    for part in ("over_rows", "over_cols", "square_rows", "square_cols", "under_rows", "under_cols", "blocks"):
        assert getattr(plain_found, part) == getattr(scipy_found, part), part
    assert set(plain_found.matching) <= entries
    assert len({r for r, _ in plain_found.matching}) == len({c for _, c in plain_found.matching})
    assert plain_found.structural_rank == scipy_found.structural_rank == _scipy_rank(m, n, entries)
