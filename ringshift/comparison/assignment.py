"""Assignment of hydrogen groups to observed peaks: optimal matching on integral slots.

Array kernels (the matching) used by the search of :mod:`ringshift.comparison.search`, which
alternates them with the fit; the result records are in :mod:`ringshift.comparison.records`.

A peak whose integral corresponds to k protons offers k *slots*; a group of n_h equivalent protons
needs n_h slots. Every proton of every free group is a row of a cost matrix, every slot a column,
and :func:`scipy.optimize.linear_sum_assignment` finds the cheapest matching. Integrals are soft:

* integral slot of peak p: cost z²_gp / n_h per proton (z_gp the standardized residual of group g
  at peak p under the current fit), so a whole group costs z²_gp;
* overflow slot of peak p (more protons than its integral): the same plus ``overflow_cost_per_h``
  per proton; peaks without an integral offer only overflow slots, without the surcharge;
* "missing" column (group not observed): ``missing_cost / n_h`` per proton.

Several groups may share one peak (overlap). Rows of one group have identical costs, so the matching
splits a group only when capacity forces it; a split group is then placed where most of its protons
went (ties: the smaller z²), so each group ends at exactly one peak or is missing; single-group
moves and pair exchanges that lower the group-level objective then repair what the split may have
spoiled. When no group is split the matching is exactly optimal (the proton-level problem is a
relaxation of the group-level one and their costs agree on whole-group assignments); otherwise the
result is a local optimum (the group-level problem is a generalized assignment problem, NP-hard).

The matching is alternated with the linear-Gaussian fit (:mod:`ringshift.comparison.search`):
fit → predictive mean and variance of every group → z² → matching → fit, until the assignment
repeats, from several starting currents; ``search.polish`` then tries every pair swap and every
re-solve with one used (group, peak) pair forbidden, keeps any improvement, and returns the
neighbouring assignments for the report of alternatives.
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import linear_sum_assignment

#: Cost standing in for a forbidden (group, peak) pair; finite so the solver stays feasible.
FORBIDDEN_COST: float = 1e12


def slot_counts(integrals: np.ndarray, scale: float) -> np.ndarray:
    """Number of proton slots each peak offers.

    Parameters
    ----------
    integrals : ndarray, shape (P,)
        Peak integrals in arbitrary units, NaN where unknown, otherwise ≥ 0.
    scale : float
        Protons per integral unit.

    Returns
    -------
    ndarray of int, shape (P,)
        ``round(integral × scale)``, at least 1 for a positive integral, 0 for a zero or unknown one.
    """
    integrals = np.asarray(integrals, dtype=np.float64)
    known = np.isfinite(integrals)
    protons = np.where(known, integrals, 0.0) * scale
    slots = np.floor(protons + 0.5).astype(np.int64)
    slots = np.where(known & (protons > 0.0), np.maximum(slots, 1), np.where(known, slots, 0))
    return slots.astype(np.int64)


def standardized_cost(peak_ppm: np.ndarray, pred_mean: np.ndarray, pred_var: np.ndarray) -> np.ndarray:
    """Squared standardized residuals z² of every group at every peak.

    Parameters
    ----------
    peak_ppm : ndarray, shape (P,)
        Observed shifts, ppm.
    pred_mean, pred_var : ndarray, shape (n,)
        Predictive mean (ppm) and variance (ppm²) of each group's shift.

    Returns
    -------
    ndarray, shape (n, P)
    """
    diff = np.asarray(peak_ppm, dtype=np.float64)[None, :] - np.asarray(pred_mean)[:, None]
    return diff**2 / np.asarray(pred_var)[:, None]


def solve_assignment(
    z2: np.ndarray,
    slots: np.ndarray,
    has_integral: np.ndarray,
    active: np.ndarray,
    n_h: np.ndarray,
    fixed: np.ndarray,
    *,
    overflow_cost_per_h: float,
    missing_cost: float,
    forbidden: np.ndarray | None = None,
) -> np.ndarray:
    """Optimal group → peak assignment on expanded integral slots.

    Parameters
    ----------
    z2 : ndarray, shape (n, P)
        Squared standardized residual of group g at peak p (see :func:`standardized_cost`).
    slots : ndarray of int, shape (P,)
        Proton slots offered by each peak's integral (:func:`slot_counts`).
    has_integral : ndarray of bool, shape (P,)
        Whether the peak's integral is known (overflow is then surcharged).
    active : ndarray of bool, shape (P,)
        Peaks that may receive groups (solvent or impurity peaks do not).
    n_h : ndarray of int, shape (n,)
        Protons per group.
    fixed : ndarray of int, shape (n,)
        Peak index a group is fixed to by the user, −1 for free groups.
    overflow_cost_per_h : float
        Surcharge per proton placed beyond a peak's integral.
    missing_cost : float
        Cost of leaving a group unassigned.
    forbidden : ndarray of bool, shape (n, P), optional
        Pairs that must not be used.

    Returns
    -------
    ndarray of int, shape (n,)
        Peak index of each group, −1 for unassigned groups.
    """
    z2 = np.asarray(z2, dtype=np.float64)
    n, n_peaks = z2.shape
    n_h = np.asarray(n_h, dtype=np.int64)
    fixed = np.asarray(fixed, dtype=np.int64)
    result = fixed.copy()
    free = np.flatnonzero(fixed < 0)
    if free.size == 0:
        return result
    used = np.zeros(n_peaks, dtype=np.int64)
    np.add.at(used, fixed[fixed >= 0], n_h[fixed >= 0])
    remaining = np.maximum(np.asarray(slots, dtype=np.int64) - used, 0)
    rows_group = np.repeat(free, n_h[free])
    n_rows = rows_group.size
    max_nh = int(n_h[free].max())
    peak_of_col: list[int] = []
    pen_of_col: list[float] = []
    for p in np.flatnonzero(active):
        if has_integral[p]:
            peak_of_col += [int(p)] * int(remaining[p]) + [int(p)] * min(n_rows, 4 * max_nh)
            pen_of_col += [0.0] * int(remaining[p]) + [overflow_cost_per_h] * min(n_rows, 4 * max_nh)
        else:
            peak_of_col += [int(p)] * n_rows
            pen_of_col += [0.0] * n_rows
    col_peak = np.asarray(peak_of_col + [-1] * n_rows, dtype=np.int64)
    col_pen = np.asarray(pen_of_col + [0.0] * n_rows, dtype=np.float64)
    zg = z2.copy()
    if forbidden is not None:
        zg = np.where(forbidden, FORBIDDEN_COST, zg)
    nh_rows = n_h[rows_group].astype(np.float64)
    is_peak = col_peak >= 0
    cost = np.empty((n_rows, col_peak.size))
    cost[:, is_peak] = zg[rows_group][:, col_peak[is_peak]] / nh_rows[:, None] + col_pen[None, is_peak]
    cost[:, ~is_peak] = (missing_cost / nh_rows)[:, None]
    rows, cols = linear_sum_assignment(cost)
    chosen = col_peak[cols[np.argsort(rows)]]
    start = 0
    split = False
    for g in free:
        picks = chosen[start : start + n_h[g]]
        start += n_h[g]
        if np.all(picks == picks[0]):
            result[g] = int(picks[0])
            continue
        split = True
        options, counts = np.unique(picks, return_counts=True)
        top = options[counts == counts.max()]
        if top.size > 1:  # tie: the cheaper place (missing costs missing_cost)
            keyed = [(missing_cost if o < 0 else zg[g, o], o) for o in top]
            top = np.array([min(keyed)[1]])
        result[g] = int(top[0])
    if not split:  # the relaxation's optimum is a whole-group assignment, hence optimal
        return result
    return _improve_by_moves(result, zg, free, n_h, np.asarray(slots, dtype=np.int64),
                             np.asarray(has_integral, dtype=bool), np.flatnonzero(active),
                             overflow_cost_per_h, missing_cost)


def _improve_by_moves(a, zg, free, n_h, slots, has_integral, peaks, over_cost, miss_cost) -> np.ndarray:
    """Move single free groups, or exchange two, while the group-level objective decreases.

    Repairs what the proton-level matching can get wrong when it splits a group. The objective is
    Σ_g z²_g,a(g) + over_cost · Σ_p max(0, H_p − slots_p) (known integrals) + miss_cost · #missing.
    "Missing" is handled as an extra column P of unlimited capacity and cost ``miss_cost``.
    """
    n, n_peaks = zg.shape
    C = np.full((n, n_peaks + 1), FORBIDDEN_COST)
    C[:, peaks] = zg[:, peaks]
    C[:, n_peaks] = miss_cost
    cap = np.append(slots, 0).astype(np.float64)
    rate = over_cost * np.append(has_integral, False).astype(np.float64)  # surcharge per excess proton
    place = np.where(a >= 0, a, n_peaks)
    excess = np.bincount(place, weights=n_h, minlength=n_peaks + 1) - cap  # held − capacity
    nh = n_h.astype(np.float64)
    free = np.asarray(free)
    improved = True
    while improved:
        improved = False
        for g in free:  # single moves
            p, w = place[g], nh[g]
            here = C[g, p] + rate[p] * (max(0.0, excess[p]) - max(0.0, excess[p] - w))
            there = C[g] + rate * (np.maximum(0.0, excess + w) - np.maximum(0.0, excess))
            there[p] = np.inf
            q = int(np.argmin(there))
            if here - there[q] > 1e-9:
                excess[p] -= w
                excess[q] += w
                place[g] = q
                improved = True
        for g in free:  # exchanges of two groups' places
            p = place[g]
            others = free[place[free] != p]
            if others.size == 0:
                continue
            q = place[others]
            d = nh[others] - nh[g]
            ep, eq = excess[p], excess[q]
            gain = (C[g, p] + C[others, q] - C[g, q] - C[others, p]
                    + rate[p] * (max(0.0, ep) - np.maximum(0.0, ep + d))
                    + rate[q] * (np.maximum(0.0, eq) - np.maximum(0.0, eq - d)))
            k = int(np.argmax(gain))
            if gain[k] > 1e-9:
                h, qk = others[k], q[k]
                excess[p] += d[k]
                excess[qk] -= d[k]
                place[g], place[h] = qk, p
                improved = True
    return np.where(place == n_peaks, -1, place).astype(np.int64)


def overflow_protons(assignment: np.ndarray, n_h: np.ndarray, slots: np.ndarray, has_integral: np.ndarray) -> int:
    """Protons placed beyond the integrals of peaks with a known integral.

    Parameters
    ----------
    assignment : ndarray of int, shape (n,)
        Peak index per group, −1 for unassigned.
    n_h : ndarray of int, shape (n,)
    slots : ndarray of int, shape (P,)
    has_integral : ndarray of bool, shape (P,)

    Returns
    -------
    int
        Σ_p max(0, assigned protons at p − slots_p) over peaks with a known integral.
    """
    assignment = np.asarray(assignment, dtype=np.int64)
    held = np.zeros(len(slots), dtype=np.int64)
    ok = assignment >= 0
    np.add.at(held, assignment[ok], np.asarray(n_h, dtype=np.int64)[ok])
    excess = np.maximum(held - np.asarray(slots, dtype=np.int64), 0)
    return int(np.sum(excess[np.asarray(has_integral, dtype=bool)]))


def pair_swaps(assignment: np.ndarray, fixed: np.ndarray) -> list[np.ndarray]:
    """All assignments obtained by exchanging the peaks of two free groups at different places.

    Parameters
    ----------
    assignment : ndarray of int, shape (n,)
        Peak index per group (−1 = unassigned; a swap with an unassigned group moves the other).
    fixed : ndarray of int, shape (n,)
        −1 for free groups.

    Returns
    -------
    list of ndarray of int, shape (n,)
    """
    assignment = np.asarray(assignment, dtype=np.int64)
    free = np.flatnonzero(np.asarray(fixed) < 0)
    out = []
    for a, i in enumerate(free):
        for j in free[a + 1 :]:
            if assignment[i] != assignment[j]:
                new = assignment.copy()
                new[i], new[j] = assignment[j], assignment[i]
                out.append(new)
    return out
