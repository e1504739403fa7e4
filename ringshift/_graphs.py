"""Two small graph walks on integer-labelled nodes, without SciPy at import (start-up time of the command).

:func:`component_labels` (connected components) and :func:`bfs_order` (breadth-first order with
predecessors) give what ``scipy.sparse.csgraph.connected_components`` and ``breadth_first_order`` give for
an undirected graph; tests compare them. Very large edge lists go to SciPy, loaded then.
"""

from __future__ import annotations

from collections import deque

import numpy as np

#: Above this many edges the components come from scipy.sparse.csgraph (compiled), imported on use.
_SCIPY_EDGES = 20000


def component_labels(n: int, edges) -> np.ndarray:
    """Component label (0, 1, ... in order of each component's lowest node) of each of the ``n`` nodes of the
    undirected graph with ``edges`` (k, 2) int. Returns (n,) int."""
    e = np.asarray(edges, dtype=np.intp).reshape(-1, 2)
    if len(e) > _SCIPY_EDGES:
        from scipy.sparse import coo_matrix
        from scipy.sparse.csgraph import connected_components

        raw = connected_components(coo_matrix((np.ones(len(e)), (e[:, 0], e[:, 1])), shape=(n, n)),
                                   directed=False)[1]
    else:
        parent = list(range(n))

        def root(a: int) -> int:
            while parent[a] != a:
                parent[a] = parent[parent[a]]
                a = parent[a]
            return a

        for a, b in e.tolist():
            ra, rb = root(a), root(b)
            if ra != rb:
                parent[max(ra, rb)] = min(ra, rb)
        raw = np.array([root(a) for a in range(n)], dtype=np.intp)
    _, first = np.unique(raw, return_index=True)
    relabel = {int(raw[k]): lab for lab, k in enumerate(sorted(first))}
    return np.array([relabel[int(r)] for r in raw], dtype=np.intp)


def bfs_order(n: int, edges, start: int) -> tuple[np.ndarray, np.ndarray]:
    """Breadth-first order of the nodes reachable from ``start`` and the predecessor of each node (-9999 for
    the start and unreached nodes, as SciPy's ``breadth_first_order``); neighbours are visited in ascending
    order. Returns (order (m,), predecessors (n,))."""
    adj: list[list[int]] = [[] for _ in range(n)]
    for a, b in np.asarray(edges, dtype=np.intp).reshape(-1, 2).tolist():
        adj[a].append(b)
        adj[b].append(a)
    pred = np.full(n, -9999, dtype=np.intp)
    seen, order, queue = {start}, [start], deque([start])
    while queue:
        a = queue.popleft()
        for b in sorted(adj[a]):
            if b not in seen:
                seen.add(b)
                pred[b] = a
                order.append(b)
                queue.append(b)
    return np.array(order, dtype=np.intp), pred
