"""The small graph walks of ringshift._graphs against SciPy's compiled ones (outside reference)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import breadth_first_order, connected_components

from ringshift._graphs import bfs_order, component_labels


def _random_graph(seed: int, n: int, k: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return rng.integers(0, n, size=(k, 2))


@pytest.mark.parametrize(("seed", "n", "k"), [(0, 1, 0), (1, 10, 4), (2, 60, 50), (3, 200, 400)],
                         ids=["single-node", "sparse", "medium", "dense"])
def test_components_partition_like_scipy(seed, n, k):
    e = _random_graph(seed, n, k)
    ours = component_labels(n, e)
    ref = connected_components(coo_matrix((np.ones(len(e)), (e[:, 0], e[:, 1])), shape=(n, n)), directed=False)[1]
    # the same partition: labels agree up to renaming
    pairs = {(int(a), int(b)) for a, b in zip(ours, ref)}
    assert len(pairs) == len(set(ours)) == len(set(ref))


@pytest.mark.parametrize("seed", [4, 5, 6], ids=["g4", "g5", "g6"])
def test_bfs_reaches_the_same_nodes_at_the_same_depths(seed):
    n = 80
    e = _random_graph(seed, n, 120)
    order, pred = bfs_order(n, e, 0)
    ref_order, ref_pred = breadth_first_order(coo_matrix((np.ones(len(e)), (e[:, 0], e[:, 1])), shape=(n, n)), 0,
                                              directed=False, return_predecessors=True)
    assert set(order.tolist()) == set(ref_order.tolist())

    def depth(p, v):
        d = 0
        while p[v] >= 0:
            v, d = p[v], d + 1
        return d

    assert [depth(pred, v) for v in order] == sorted(depth(pred, v) for v in order)   # breadth-first
    assert {v: depth(pred, v) for v in order} == {v: depth(ref_pred, v) for v in ref_order.tolist()}
    assert all(pred[v] == -9999 for v in range(n) if v not in set(order.tolist()))
