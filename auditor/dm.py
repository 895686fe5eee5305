"""Dulmage--Mendelsohn decomposition of a bipartite (equation/variable) graph.

Rows are equations and columns are variables; an entry ``(i, j)`` means that
equation ``i`` involves variable ``j``.  The decomposition splits the system
into three parts that do not depend on which maximum matching is used:

* the *over-determined* part: the rows reachable by alternating paths
  (non-matching edge row->column, matching edge column->row) from rows left
  unmatched by a maximum matching, together with the columns on those paths;
* the *under-determined* part: the columns reachable by alternating paths
  from columns left unmatched, together with the rows on those paths;
* the *well-determined* (square) part: everything else, which has a perfect
  matching.

The square part is further split into irreducible blocks, the strongly
connected components of the directed graph "equation -> equation whose
matched variable it uses"; ordering those blocks topologically gives a block
triangular form in which the blocks can be solved one after another.

Method and source
-----------------
A. L. Dulmage and N. S. Mendelsohn, "Coverings of bipartite graphs",
Canadian Journal of Mathematics 10 (1958), pp. 517-534.  The coarse parts are
computed as in A. Pothen and C.-J. Fan, "Computing the block triangular form
of a sparse matrix", ACM Trans. Math. Software 16(4), 1990: one maximum
matching (Hopcroft--Karp, via
:func:`scipy.sparse.csgraph.maximum_bipartite_matching`), two alternating
breadth-first searches, and strongly connected components
(:func:`scipy.sparse.csgraph.connected_components`) of the square part.
Everything runs in time linear in the number of entries, apart from the
matching (``O(nnz * sqrt(n))``).
"""

from __future__ import annotations

import heapq
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

import numpy as np

from . import settings

# scipy (sparse matrices, csgraph) is imported only for patterns larger than
# settings.DM_PLAIN_PYTHON_MAX_ENTRIES: a case's incidence is decomposed in plain Python
# by the same method (augmenting-path matching, alternating searches, strong components),
# which costs less than importing scipy.

__all__ = ["DMDecomposition", "dulmage_mendelsohn"]

_Block = tuple[tuple[int, ...], tuple[int, ...]]


@dataclass(frozen=True)
class DMDecomposition:
    """Result of :func:`dulmage_mendelsohn`.

    All index tuples are sorted ascending.  The coarse parts and the set of
    blocks are independent of the matching; ``matching`` is one maximum
    matching, and ``blocks`` is listed in a solvable (block triangular) order.
    """

    matching: tuple[tuple[int, int], ...]
    over_rows: tuple[int, ...]
    over_cols: tuple[int, ...]
    square_rows: tuple[int, ...]
    square_cols: tuple[int, ...]
    under_rows: tuple[int, ...]
    under_cols: tuple[int, ...]
    blocks: tuple[_Block, ...]

    @property
    def structurally_nonsingular(self) -> bool:
        """True when there is neither an over- nor an under-determined part."""
        return not (self.over_rows or self.over_cols or self.under_rows or self.under_cols)

    @property
    def structural_rank(self) -> int:
        """Size of a maximum matching (the generic rank of the pattern)."""
        return len(self.matching)


def _pairs(incidence: Any, n_rows: int, n_cols: int) -> tuple[np.ndarray, np.ndarray]:
    """Validated (rows, cols) of a list of pairs (duplicates kept)."""
    if n_rows < 0 or n_cols < 0:
        raise ValueError("n_rows and n_cols must be non-negative")
    pairs = np.asarray(list(incidence) if not isinstance(incidence, np.ndarray) else incidence)
    if pairs.size == 0:
        pairs = np.empty((0, 2), dtype=np.int64)
    if pairs.ndim != 2 or pairs.shape[1] != 2:
        raise ValueError("incidence must be an iterable of (row, col) pairs")
    if not np.issubdtype(pairs.dtype, np.integer):
        raise ValueError("row and column indices must be integers")
    rows, cols = pairs[:, 0].astype(np.int64), pairs[:, 1].astype(np.int64)
    if rows.size and (rows.min() < 0 or rows.max() >= n_rows or cols.min() < 0 or cols.max() >= n_cols):
        raise ValueError("a (row, col) pair is out of range")
    return rows, cols


def _as_pattern(incidence: Any, n_rows: int | None, n_cols: int | None):
    """Return the 0/1 pattern of ``incidence`` as canonical CSR (sorted, no duplicates)."""
    import scipy.sparse as sp
    if sp.issparse(incidence) or (n_rows is None and n_cols is None):
        a = sp.csr_matrix(incidence)
        if a.ndim != 2:  # pragma: no cover - csr_matrix always yields 2-D
            raise ValueError("incidence must be two-dimensional")
        if (n_rows is not None and n_rows != a.shape[0]) or (
            n_cols is not None and n_cols != a.shape[1]
        ):
            raise ValueError(f"incidence has shape {a.shape}, expected ({n_rows}, {n_cols})")
        a = a.copy()
        # An explicitly stored zero is not an incidence; scipy's matching would
        # otherwise treat it as an edge.
        a.eliminate_zeros()
    else:
        if n_rows is None or n_cols is None:
            raise ValueError("both n_rows and n_cols are needed for a list of (row, col) pairs")
        rows, cols = _pairs(incidence, n_rows, n_cols)
        a = sp.csr_matrix(
            (np.ones(rows.size, dtype=np.int8), (rows, cols)), shape=(n_rows, n_cols)
        )
    # Duplicates are summed (and could cancel), so fix the pattern first and
    # only then set every stored value to 1.
    a.sum_duplicates()
    a.data = np.ones(a.data.size, dtype=np.int8)
    a.sort_indices()
    return a


def _reach(succ_src: np.ndarray, succ_dst: np.ndarray, n: int, starts: np.ndarray) -> np.ndarray:
    """Boolean mask of the nodes ``0..n-1`` reachable from ``starts`` along the given arcs."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import breadth_first_order
    reached = np.zeros(n, dtype=bool)
    if starts.size == 0:
        return reached
    # A super-source (node n) with arcs to every start lets one C-level BFS do it.
    src = np.concatenate([succ_src, np.full(starts.size, n)])
    dst = np.concatenate([succ_dst, starts])
    g = sp.csr_matrix((np.ones(src.size, dtype=np.int8), (src, dst)), shape=(n + 1, n + 1))
    order = breadth_first_order(g, n, directed=True, return_predecessors=False)
    reached[order[order < n]] = True
    return reached


def _ordered_blocks(
    src: np.ndarray, dst: np.ndarray, k: int
) -> list[np.ndarray]:
    """Strong components of a k-node digraph, dependencies (arc heads) first.

    An arc ``u -> v`` means "node u needs node v", so v's component must come
    no later than u's.  Ties are broken by the smallest node in a component,
    which makes the order deterministic and independent of scipy's labelling.
    """
    if k == 0:
        return []
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components
    g = sp.csr_matrix((np.ones(src.size, dtype=np.int8), (src, dst)), shape=(k, k))
    n_comp, label = connected_components(g, directed=True, connection="strong")
    members = np.argsort(label, kind="stable")  # nodes grouped by label, ascending within
    bounds = np.searchsorted(label[members], np.arange(n_comp + 1))
    groups = [members[bounds[i] : bounds[i + 1]] for i in range(n_comp)]
    # Condensation arcs (dependency -> dependant), deduplicated.
    cu, cv = label[dst], label[src]
    keep = cu != cv
    arcs = np.unique(cu[keep].astype(np.int64) * n_comp + cv[keep])
    a_from, a_to = arcs // n_comp, arcs % n_comp
    indeg = np.bincount(a_to, minlength=n_comp)
    out_ptr = np.searchsorted(a_from, np.arange(n_comp + 1))  # arcs are sorted by a_from
    first = np.array([grp[0] for grp in groups])
    heap = [(int(first[c]), c) for c in range(n_comp) if indeg[c] == 0]
    heapq.heapify(heap)
    ordered: list[np.ndarray] = []
    while heap:  # Kahn's algorithm; the condensation is acyclic by construction
        _, c = heapq.heappop(heap)
        ordered.append(groups[c])
        for d in a_to[out_ptr[c] : out_ptr[c + 1]].tolist():
            indeg[d] -= 1
            if indeg[d] == 0:
                heapq.heappush(heap, (int(first[d]), d))
    return ordered


def _sorted_indices(mask_or_idx: np.ndarray) -> tuple[int, ...]:
    """The indices a boolean mask selects, or the given indices, sorted, as a tuple."""
    idx = np.flatnonzero(mask_or_idx) if mask_or_idx.dtype == bool else np.sort(mask_or_idx)
    return tuple(idx.tolist())


def dulmage_mendelsohn(
    incidence: Any | Iterable[tuple[int, int]],
    n_rows: int | None = None,
    n_cols: int | None = None,
) -> DMDecomposition:
    """Dulmage--Mendelsohn decomposition of an equation/variable incidence pattern.

    Parameters
    ----------
    incidence
        Anything :class:`scipy.sparse.csr_matrix` accepts (dense array, sparse
        matrix, ...), whose nonzero entries are the incidences (explicitly
        stored zeros are not); or an iterable of ``(row, col)`` pairs
        (duplicates allowed).  A non-sparse ``incidence`` is read as pairs
        whenever ``n_rows`` or ``n_cols`` is given.
    n_rows, n_cols
        Numbers of rows (equations) and columns (variables).  Needed for a
        list of pairs; checked against the shape of a sparse matrix.

    Returns
    -------
    DMDecomposition
        Coarse parts, one maximum matching and the block triangular fine
        decomposition of the square part.
    """
    # longer than 80 lines on purpose: one pass over the matching and its alternating paths; the three parts
    # share its arrays
    small = not _is_sparse(incidence) and n_rows is not None and n_cols is not None
    if small:
        rows, cols = _pairs(incidence, n_rows, n_cols)
        if rows.size <= settings.DM_PLAIN_PYTHON_MAX_ENTRIES:
            from .dm_plain import plain_decomposition
            return plain_decomposition(n_rows, n_cols, rows.tolist(), cols.tolist())
    from scipy.sparse.csgraph import maximum_bipartite_matching
    a = _as_pattern(incidence, n_rows, n_cols)
    m, n = a.shape
    rows = np.repeat(np.arange(m), np.diff(a.indptr))  # row of every stored entry
    cols = a.indices.astype(np.int64)

    col_of_row = np.asarray(maximum_bipartite_matching(a, perm_type="column"), dtype=np.int64)
    row_of_col = np.full(n, -1, dtype=np.int64)
    matched = col_of_row >= 0
    row_of_col[col_of_row[matched]] = np.flatnonzero(matched)

    # Over part.  Alternating paths from unmatched rows go row -> any column
    # -> the row matched to it.  Every column met is matched (else the path
    # would augment a maximum matching), so a row-to-row digraph suffices and
    # the over columns are exactly the neighbours of the over rows.  Each over
    # row is matched to an over column or unmatched, and every over column is
    # matched to an over row, so |over_rows| = |over_cols| + #unmatched rows.
    e = row_of_col[cols] >= 0
    over_r = _reach(rows[e], row_of_col[cols[e]], m, np.flatnonzero(~matched))
    over_c = np.zeros(n, dtype=bool)
    over_c[cols[over_r[rows]]] = True

    # Under part, symmetrically from unmatched columns: column -> any row ->
    # the column matched to it.  Every row met is matched to an under column,
    # so |under_cols| = |under_rows| + #unmatched columns.  The two parts are
    # disjoint: a shared vertex would close an augmenting path.
    e = col_of_row[rows] >= 0
    under_c = _reach(cols[e], col_of_row[rows[e]], n, np.flatnonzero(row_of_col < 0))
    under_r = np.zeros(m, dtype=bool)
    under_r[rows[under_c[cols]]] = True

    # Square part: what is left.  Its rows are all matched, to its columns,
    # and its columns all matched, to its rows, so it has a perfect matching.
    sq_r = ~(over_r | under_r)
    sq_c = ~(over_c | under_c)
    sq_rows = np.flatnonzero(sq_r)
    local = np.full(m, -1, dtype=np.int64)
    local[sq_rows] = np.arange(sq_rows.size)
    # Arc "equation r needs the variable matched to equation s"; entries of
    # square rows in over columns are known once the over part is solved and
    # square rows never touch under columns, so only square-square entries count.
    e = sq_r[rows] & sq_c[cols]
    src = local[rows[e]]
    dst = local[row_of_col[cols[e]]]
    blocks = []
    for grp in _ordered_blocks(src, dst, sq_rows.size):
        b_rows = sq_rows[grp]  # grp is ascending, hence so is b_rows
        blocks.append((tuple(b_rows.tolist()), _sorted_indices(col_of_row[b_rows])))

    r_idx = np.flatnonzero(matched)
    return DMDecomposition(
        matching=tuple(zip(r_idx.tolist(), col_of_row[r_idx].tolist())),
        over_rows=_sorted_indices(over_r),
        over_cols=_sorted_indices(over_c),
        square_rows=_sorted_indices(sq_r),
        square_cols=_sorted_indices(sq_c),
        under_rows=_sorted_indices(under_r),
        under_cols=_sorted_indices(under_c),
        blocks=tuple(blocks),
    )


def _is_sparse(x) -> bool:
    """A scipy sparse matrix or array, told without importing scipy."""
    return type(x).__module__.startswith("scipy.sparse")
