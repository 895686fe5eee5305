"""The Dulmage–Mendelsohn decomposition in plain Python, for the small patterns of a case's
incidence (at most ``settings.DM_PLAIN_PYTHON_MAX_ENTRIES`` entries): the same method as
:func:`auditor.dm.dulmage_mendelsohn` (augmenting-path matching, alternating searches,
strong components), without importing scipy.  Called from there only."""
from __future__ import annotations

import heapq

from .dm import DMDecomposition


def _neighbours(reached: list[bool], adjacency, size: int) -> list[bool]:
    """Which of ``size`` vertices on the other side are adjacent to a reached vertex."""
    mask = [False] * size
    for v, hit in enumerate(reached):
        if hit:
            for w in adjacency[v]:
                mask[w] = True
    return mask


def plain_decomposition(m: int, n: int, rows: list[int], cols: list[int]) -> DMDecomposition:
    """The decomposition of :func:`dulmage_mendelsohn` in plain Python, for small patterns.

    The same steps on adjacency lists: a maximum matching by augmenting paths (Kuhn's
    method, breadth-first; O(rows * entries), small here), the two alternating searches,
    and strong components of the square part (Kosaraju, iterative) ordered by Kahn's
    algorithm with the smallest row first among ready blocks.  The coarse parts and the
    blocks do not depend on the matching, so both paths give the same parts.
    """
    # longer than 80 lines on purpose: the plain-Python twin of the scipy route, kept in one piece to compare
    # line by line
    adj: list[list[int]] = [[] for _ in range(m)]
    for r, c in sorted(set(zip(rows, cols))):
        adj[r].append(c)
    radj: list[list[int]] = [[] for _ in range(n)]
    for r in range(m):
        for c in adj[r]:
            radj[c].append(r)
    col_of_row, row_of_col = [-1] * m, [-1] * n
    for start in range(m):
        # breadth-first search for an augmenting path from an unmatched row
        parent: dict[int, int] = {}
        queue, i, done = [start], 0, False
        while i < len(queue) and not done:
            u = queue[i]
            i += 1
            for c in adj[u]:
                if c in parent:
                    continue
                parent[c] = u
                if row_of_col[c] < 0:
                    while True:          # flip the path back to the start row
                        r = parent[c]
                        prev = col_of_row[r]
                        col_of_row[r], row_of_col[c] = c, r
                        if r == start:
                            break
                        c = prev
                    done = True
                    break
                queue.append(row_of_col[c])

    def reach(starts, step) -> list[bool]:
        seen = [False] * (m if step is adj else n)
        stack = list(starts)
        for s in stack:
            seen[s] = True
        while stack:
            v = stack.pop()
            for w in step[v]:
                nxt = row_of_col[w] if step is adj else col_of_row[w]
                if not seen[nxt]:
                    seen[nxt] = True
                    stack.append(nxt)
        return seen

    # over part: from unmatched rows, row -> any column -> its matched row (see the scipy path)
    over_r = reach([r for r in range(m) if col_of_row[r] < 0], adj)
    over_c = _neighbours(over_r, adj, n)
    # under part: from unmatched columns, column -> any row -> its matched column
    under_c = reach([c for c in range(n) if row_of_col[c] < 0], radj)
    under_r = _neighbours(under_c, radj, m)
    sq_r = [not (a or b) for a, b in zip(over_r, under_r)]
    sq_c = [not (a or b) for a, b in zip(over_c, under_c)]
    sq_rows = [r for r in range(m) if sq_r[r]]
    local = {r: i for i, r in enumerate(sq_rows)}
    succ = [sorted({local[row_of_col[c]] for c in adj[r] if sq_c[c]}) for r in sq_rows]
    blocks = []
    for grp in _plain_ordered_blocks(succ):
        b_rows = [sq_rows[i] for i in grp]
        blocks.append((tuple(b_rows), tuple(sorted(col_of_row[r] for r in b_rows))))

    def tup(mask):
        return tuple(i for i, x in enumerate(mask) if x)

    return DMDecomposition(
        matching=tuple((r, col_of_row[r]) for r in range(m) if col_of_row[r] >= 0),
        over_rows=tup(over_r), over_cols=tup(over_c), square_rows=tup(sq_r), square_cols=tup(sq_c),
        under_rows=tup(under_r), under_cols=tup(under_c), blocks=tuple(blocks))


def _plain_ordered_blocks(succ: list[list[int]]) -> list[list[int]]:
    """Strong components of a digraph (``succ[u]``: the nodes u needs), dependencies first,
    ties by the smallest node: the order of :func:`_ordered_blocks`."""
    k = len(succ)
    order, seen = [], [False] * k
    for s in range(k):             # Kosaraju, first pass: finishing order
        if seen[s]:
            continue
        seen[s] = True
        stack = [(s, iter(succ[s]))]
        while stack:
            v, it = stack[-1]
            for w in it:
                if not seen[w]:
                    seen[w] = True
                    stack.append((w, iter(succ[w])))
                    break
            else:
                stack.pop()
                order.append(v)
    pred: list[list[int]] = [[] for _ in range(k)]
    for v in range(k):
        for w in succ[v]:
            pred[w].append(v)
    label, n_comp = [-1] * k, 0
    for s in reversed(order):      # second pass on the reversed graph
        if label[s] >= 0:
            continue
        label[s] = n_comp
        stack = [s]
        while stack:
            v = stack.pop()
            for w in pred[v]:
                if label[w] < 0:
                    label[w] = n_comp
                    stack.append(w)
        n_comp += 1
    groups: list[list[int]] = [[] for _ in range(n_comp)]
    for v in range(k):
        groups[label[v]].append(v)
    # condensation arcs: a node's component comes after the components of what it needs
    after: list[set[int]] = [set() for _ in range(n_comp)]
    indeg = [0] * n_comp
    for u in range(k):
        for v in succ[u]:
            a, b = label[v], label[u]
            if a != b and b not in after[a]:
                after[a].add(b)
                indeg[b] += 1
    heap = [(groups[c][0], c) for c in range(n_comp) if indeg[c] == 0]
    heapq.heapify(heap)
    out = []
    while heap:
        _, c = heapq.heappop(heap)
        out.append(groups[c])
        for d in after[c]:
            indeg[d] -= 1
            if indeg[d] == 0:
                heapq.heappush(heap, (groups[d][0], d))
    return out
