"""Scoring of the accuracy benchmark (benchmarks/accuracy/scoring.py) and the consistency of its data file.

The benchmark helper is not part of the package; it is loaded from its file.
"""

from __future__ import annotations

import importlib.util
import pathlib
import sys

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.optimize import linear_sum_assignment

_PATH = pathlib.Path(__file__).resolve().parents[1] / "benchmarks" / "accuracy" / "scoring.py"
_spec = importlib.util.spec_from_file_location("_accuracy_scoring", _PATH)
assert _spec is not None and _spec.loader is not None
scoring = importlib.util.module_from_spec(_spec)
sys.modules["_accuracy_scoring"] = scoring
_spec.loader.exec_module(scoring)


def _optimal_mean(pred: np.ndarray, obs: np.ndarray) -> float:
    """Least mean |p − o| over one-to-one assignments of min(n, m) pairs (SciPy, Hungarian-type solver)."""
    cost = np.abs(pred[:, None] - obs[None, :])
    r, c = linear_sum_assignment(cost)
    return float(cost[r, c].mean())


def test_identical_lists_give_zero():
    res = scoring.sorted_match_mae([(7.0, 2), (1.0, 3)], [(1.0, 3), (7.0, 2)])
    assert res.mae_ppm == 0.0 and res.n_matched == 5 and res.note == ""


def test_hand_example():
    # predicted protons [0, 0, 10], observed [1, 9, 9]: sorted pairs (0,1), (0,9), (10,9) -> (1 + 9 + 1) / 3
    res = scoring.sorted_match_mae([(0.0, 2), (10.0, 1)], [(1.0, 1), (9.0, 2)])
    assert_allclose(res.mae_ppm, 11.0 / 3.0, rtol=0, atol=1e-12)
    assert_allclose(res.pairs, [[0, 1], [0, 9], [10, 9]])


@pytest.mark.parametrize("seed", range(20), ids=lambda s: f"seed{s}")
def test_sorted_matching_is_optimal_for_equal_counts(seed):
    # Textbook identity (common practice, no source): on a line, the monotone (sorted) matching minimises
    # the sum of |p_i − o_π(i)| over all permutations π. Reference: scipy.optimize.linear_sum_assignment.
    rng = np.random.default_rng(seed)
    n_groups = rng.integers(1, 8)
    pred = [(float(rng.normal(5, 4)), int(rng.integers(1, 4))) for _ in range(n_groups)]
    n_h = sum(n for _, n in pred)
    obs_shifts = rng.normal(5, 4, size=n_h)
    obs = [(float(s), 1) for s in obs_shifts]
    res = scoring.sorted_match_mae(pred, obs)
    ref = _optimal_mean(scoring.expand_protons(pred), np.sort(obs_shifts))
    assert res.note == ""
    # both are sums of the same float differences: only rounding separates them
    assert_allclose(res.mae_ppm, ref, rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("seed", range(20), ids=lambda s: f"seed{s}")
def test_common_count_matching_is_optimal_for_unequal_counts(seed):
    # With unequal counts SciPy's rectangular assignment picks the best min(n, m) pairs; the sorted-order
    # subset chosen by the dynamic programme must reach the same optimum (common practice, no source).
    rng = np.random.default_rng(1000 + seed)
    n_p, n_o = rng.integers(1, 12, size=2)
    if n_p == n_o:
        n_o += 1
    p = rng.normal(5, 4, size=n_p)
    o = rng.normal(5, 4, size=n_o)
    res = scoring.sorted_match_mae([(float(x), 1) for x in p], [(float(x), 1) for x in o])
    assert res.n_matched == min(n_p, n_o) and res.n_predicted == n_p and res.n_observed == n_o
    assert "H counts differ" in res.note
    assert_allclose(res.mae_ppm, _optimal_mean(p, o), rtol=1e-12, atol=1e-12)


def test_invalid_counts_rejected():
    with pytest.raises(ValueError):
        scoring.sorted_match_mae([(1.0, 1.5)], [(1.0, 1)])
    with pytest.raises(ValueError):
        scoring.sorted_match_mae([(float("nan"), 1)], [(1.0, 1)])


def test_empty_prediction_gives_nan():
    res = scoring.sorted_match_mae([], [(1.0, 2)])
    assert np.isnan(res.mae_ppm) and res.n_matched == 0


@pytest.mark.parametrize(("currents", "expected"), [
    ([12.0, -3.0], "diatropic"),
    ([4.0, -20.0], "paratropic"),
    ([1.0, -1.5, None], "atropic"),
    ([], "atropic"),
    ([None], "atropic"),
], ids=["dia", "para", "small", "none", "only-none"])
def test_verdict_from_currents(currents, expected):
    # J > 0 diatropic (design notes §4); the largest |J| decides; below 2 nA/T atropic (benchmark convention)
    assert scoring.verdict_from_currents(currents) == expected


def test_data_file_is_consistent():
    mols = scoring.load_published()
    ids = [m.molecule_id for m in mols]
    assert len(ids) == len(set(ids))
    # the split column follows the rule stated in the module (fixed before any model was run)
    assert {m.molecule_id: m.split for m in mols} == scoring.split_by_rule(mols)
    for m in mols:
        assert m.source and m.recall


def test_data_file_h_counts_match_the_formula():
    # every molecule's signals must integrate to its number of H (no signal forgotten)
    rdkit = pytest.importorskip("rdkit.Chem")
    for m in scoring.load_published():
        mol = rdkit.MolFromSmiles(m.smiles)
        assert mol is not None, m.molecule_id
        n_h = sum(a.GetTotalNumHs() for a in mol.GetAtoms()) + sum(1 for a in mol.GetAtoms() if a.GetAtomicNum() == 1)
        assert n_h == m.n_h, m.molecule_id
        assert rdkit.GetFormalCharge(mol) == m.charge, m.molecule_id
