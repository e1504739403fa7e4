"""Assignment of hydrogen groups to observed peaks: optimal matching on integral slots.

Array kernels (matching, alternating search) used by :mod:`ringshift.compare`, and the per-group,
per-peak and alternative-assignment result records.

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

The matching is alternated with the linear-Gaussian fit (:class:`SearchProblem`, :func:`search`):
fit → predictive mean and variance of every group → z² → matching → fit, until the assignment
repeats, from several starting currents; :func:`polish` then tries every pair swap and every
re-solve with one used (group, peak) pair forbidden, keeps any improvement, and returns the
neighbouring assignments for the report of alternatives.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import linear_sum_assignment

from .evidence import LinearGaussianFit, ToDictMixin, linear_gaussian_fit

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
    col_peak, col_pen = [], []
    for p in np.flatnonzero(active):
        if has_integral[p]:
            col_peak += [p] * int(remaining[p]) + [p] * min(n_rows, 4 * max_nh)
            col_pen += [0.0] * int(remaining[p]) + [overflow_cost_per_h] * min(n_rows, 4 * max_nh)
        else:
            col_peak += [p] * n_rows
            col_pen += [0.0] * n_rows
    col_peak = np.asarray(col_peak + [-1] * n_rows, dtype=np.int64)
    col_pen = np.asarray(col_pen + [0.0] * n_rows, dtype=np.float64)
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


# ------------------------------------------------------------------------- alternating search
@dataclass(frozen=True, eq=False)
class SearchProblem:
    """Arrays of one comparison at one noise level.

    Parameters: ``peak_ppm`` (P,) observed shifts; ``slots`` (P,) int; ``has_integral``, ``active``
    (P,) bool; ``base`` (n,) reference + charge shift, ppm; ``X`` (n, K + C) design (class
    indicators, then g in ppm per nA/T); ``n_h`` (n,) int; ``fixed`` (n,) int (−1 free);
    ``prior_mean``, ``prior_sd`` (K + C,); ``n_classes`` K; ``noise`` σ (ppm); ``overflow_cost``
    per proton; ``missing_cost`` per unassigned group.
    """

    peak_ppm: np.ndarray
    slots: np.ndarray
    has_integral: np.ndarray
    active: np.ndarray
    base: np.ndarray
    X: np.ndarray
    n_h: np.ndarray
    fixed: np.ndarray
    prior_mean: np.ndarray
    prior_sd: np.ndarray
    n_classes: int
    noise: float
    overflow_cost: float
    missing_cost: float

    def data(self, a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Design rows (m, K + C) and data y = δ_obs − base (m,) of the assigned groups."""
        ok = a >= 0
        return self.X[ok], self.peak_ppm[a[ok]] - self.base[ok]

    def fit(self, a: np.ndarray) -> LinearGaussianFit:
        """Posterior and evidence of the shifts assigned by ``a`` (n,)."""
        X, y = self.data(a)
        return linear_gaussian_fit(X, y, self.prior_mean, self.prior_sd, self.noise)

    def score(self, a: np.ndarray, fit: LinearGaussianFit) -> float:
        """Cost −2 ln Z + overflow and missing penalties (2 ln B units)."""
        over = overflow_protons(a, self.n_h, self.slots, self.has_integral)
        return -2.0 * fit.log_evidence + self.overflow_cost * over + self.missing_cost * int(np.sum(a < 0))

    def solve(self, mean: np.ndarray, cov: np.ndarray, forbidden: np.ndarray | None = None) -> np.ndarray:
        """Optimal assignment (n,) under the parameter distribution N(mean, cov)."""
        mu = self.base + self.X @ mean
        var = self.noise**2 + np.einsum("ij,jk,ik->i", self.X, cov, self.X)
        z2 = standardized_cost(self.peak_ppm, mu, var)
        return solve_assignment(z2, self.slots, self.has_integral, self.active, self.n_h, self.fixed,
                                overflow_cost_per_h=self.overflow_cost, missing_cost=self.missing_cost,
                                forbidden=forbidden)


@dataclass(frozen=True, eq=False)
class SearchState:
    """An assignment (n,), its fit and cost, and how the search reached it."""

    assignment: np.ndarray
    fit: LinearGaussianFit
    score: float
    iterations: int
    converged: bool
    start: str


def _key(a: np.ndarray) -> tuple[int, ...]:
    return tuple(int(v) for v in a)


def search(problem: SearchProblem, starts, max_iter: int, forbidden: np.ndarray | None = None) -> SearchState:
    """Alternate matching and fit from each start; return the lowest-cost state seen.

    Parameters
    ----------
    problem : SearchProblem
    starts : sequence of (label, mean (K + C,), cov (K + C, K + C))
        Starting parameter distributions.
    max_iter : int
        Maximum matching/fit cycles per start.
    forbidden : ndarray of bool, shape (n, P), optional

    Returns
    -------
    SearchState
        ``converged`` is True when the winning start reached an assignment that reproduces itself.
    """
    best = None
    for label, mean, cov in starts:
        own, previous, seen, converged, it = None, None, set(), False, 0
        while it < max_iter:
            a = problem.solve(mean, cov, forbidden)
            it += 1
            key = _key(a)
            if key == previous:
                converged = True
                break
            if key in seen:  # a cycle; its members are already scored
                break
            seen.add(key)
            previous = key
            fit = problem.fit(a)
            sc = problem.score(a, fit)
            if own is None or sc < own.score - 1e-9:
                own = SearchState(a, fit, sc, it, False, label)
            mean, cov = fit.mean, fit.cov
        own = dataclasses.replace(own, iterations=it, converged=converged)
        if best is None or own.score < best.score - 1e-9:
            best = own
    return best


def neighbours(problem: SearchProblem, best: SearchState) -> dict:
    """Assignments one move from ``best``: pair swaps, and re-solves (under the fit of ``best``)
    with one used (group, peak) pair forbidden.

    Returns
    -------
    dict
        key (tuple of peak indices) → (cost, assignment (n,), fit); ``best`` itself excluded.
    """
    out = {}
    for a in pair_swaps(best.assignment, problem.fixed):
        fit = problem.fit(a)
        out.setdefault(_key(a), (problem.score(a, fit), a, fit))
    n, n_peaks = problem.X.shape[0], problem.peak_ppm.shape[0]
    for i in np.flatnonzero((best.assignment >= 0) & (problem.fixed < 0)):
        forbidden = np.zeros((n, n_peaks), dtype=bool)
        forbidden[i, best.assignment[i]] = True
        a = problem.solve(best.fit.mean, best.fit.cov, forbidden)
        fit = problem.fit(a)
        out.setdefault(_key(a), (problem.score(a, fit), a, fit))
    out.pop(_key(best.assignment), None)
    return out


def polish(problem: SearchProblem, best: SearchState, max_iter: int, rounds: int = 5):
    """Local search around ``best``: move to any cheaper neighbour, re-run the alternation from it.

    Returns
    -------
    (SearchState, dict)
        The final best state and its neighbours (see :func:`neighbours`).
    """
    for _ in range(rounds):
        neigh = neighbours(problem, best)
        key = min(neigh, key=lambda k: (neigh[k][0], k), default=None)
        if key is None or neigh[key][0] >= best.score - 1e-9:
            return best, neigh
        sc, a, fit = neigh[key]
        again = search(problem, [(best.start, fit.mean, fit.cov)], max_iter)
        stable = _key(problem.solve(fit.mean, fit.cov)) == _key(a)  # a fixed point of the alternation?
        moved = SearchState(a, fit, sc, best.iterations + 1, stable, best.start)
        if again.score < sc - 1e-9:
            best = dataclasses.replace(again, start=best.start, iterations=best.iterations + again.iterations)
        else:
            best = moved
    return best, neighbours(problem, best)


def starting_points(prior_mean: np.ndarray, prior_sd: np.ndarray, n_classes: int, n_random: int,
                    width: float, seed: int):
    """Starting parameter distributions: every circuit diatropic (|prior|), paratropic (−|prior|),
    zero, and ``n_random`` draws of N(0, width²) per circuit from ``numpy.random.default_rng(seed)``.
    A zero prior current starts at ± its prior sd. Class offsets start at 0; covariance is the prior's.

    Returns
    -------
    list of (label, mean (K + C,), cov (K + C, K + C))
    """
    prior = np.asarray(prior_mean[n_classes:], dtype=np.float64)
    size = np.where(np.abs(prior) > 0, np.abs(prior), prior_sd[n_classes:])
    cov = np.diag(np.asarray(prior_sd, dtype=np.float64) ** 2)
    lead = np.zeros(n_classes)
    out = [("diatropic", np.concatenate([lead, size]), cov),
           ("paratropic", np.concatenate([lead, -size]), cov),
           ("zero", np.concatenate([lead, np.zeros_like(size)]), cov)]
    rng = np.random.default_rng(seed)
    for r in range(n_random):
        out.append((f"random {r + 1}", np.concatenate([lead, rng.normal(0.0, width, size.size)]), cov))
    return out


# ---------------------------------------------------------------------------- result records
@dataclass(frozen=True)
class GroupAssignment(ToDictMixin):
    """One group's assignment and the parts of its shift.

    ``predicted_ppm`` = ref + class offset + ring current + charge (posterior mean),
    ``predicted_sd_ppm`` its predictive sd including the model error, ``prior_predicted_ppm`` the
    a priori prediction (prior currents, no offset). ``ring_current_ppm`` = Σ_c J_c g_ic is the part
    of the shift the fitted currents explain; ``needed_ref_ppm`` = δ_obs − q is the reference shift
    the peak would need without any ring current, ``needed_ref_z`` its distance from ``ref_ppm`` in
    units of √(ref_sd² + σ²). Observed quantities are None for unassigned groups.
    """

    index: int
    label: str
    atoms: tuple[int, ...]
    parents: tuple[int, ...]
    n_h: int
    proton_class: str
    peak_index: int | None
    peak_label: str | None
    fixed: bool
    observed_ppm: float | None
    predicted_ppm: float
    predicted_sd_ppm: float
    prior_predicted_ppm: float
    residual_ppm: float | None
    ring_current_ppm: float
    ring_current_sd_ppm: float
    charge_ppm: float
    class_offset_ppm: float
    ref_ppm: float
    ref_sd_ppm: float
    needed_ref_ppm: float | None
    needed_ref_z: float | None


@dataclass(frozen=True)
class PeakSummary(ToDictMixin):
    """One peak: its integral in protons (``slots``, None if unknown) and the groups it holds."""

    index: int
    label: str
    shift_ppm: float
    integral: float | None
    kind: str
    slots: int | None
    groups: tuple[int, ...]
    assigned_h: int


@dataclass(frozen=True)
class Alternative(ToDictMixin):
    """An assignment nearly as good as the best: its extra cost (2 ln B units), what moved
    (group label, from peak, to peak; None = unassigned) and the currents and verdicts it implies."""

    delta_cost: float
    changes: tuple[tuple[str, str | None, str | None], ...]
    currents_nA_per_T: tuple[float, ...]
    verdicts: tuple[str, ...]


def peak_label(peak) -> str:
    """Label of a peak for reports: its own, else its shift."""
    return peak.label if peak.label else f"{peak.shift_ppm:.2f} ppm"


def group_results(problem: SearchProblem, a: np.ndarray, fit: LinearGaussianFit, groups, peaks,
                  classes) -> tuple[GroupAssignment, ...]:
    """Per-group assignment rows: parts of the predicted shift and what the observed peak implies.

    Parameters
    ----------
    problem : SearchProblem
    a : ndarray of int, shape (n,)
        Assignment.
    fit : LinearGaussianFit
        Its fit.
    groups, peaks : sequences of the group and peak records (``ringshift.compare``)
    classes : list of str
        Proton classes in parameter order.

    Returns
    -------
    tuple of GroupAssignment
    """
    K = problem.n_classes
    m, S = fit.mean, fit.cov
    out = []
    for i, g in enumerate(groups):
        x = problem.X[i]
        gv = x[K:]
        k = classes.index(g.proton_class)
        pred = float(problem.base[i] + x @ m)
        p = int(a[i])
        obs = float(peaks[p].shift_ppm) if p >= 0 else None
        needed = obs - g.charge_ppm if obs is not None else None
        spread = math.sqrt(g.ref_sd_ppm**2 + problem.noise**2)
        out.append(GroupAssignment(
            index=i, label=g.label, atoms=tuple(int(v) for v in g.atoms), parents=tuple(int(v) for v in g.parents),
            n_h=int(g.n_h), proton_class=g.proton_class, peak_index=p if p >= 0 else None,
            peak_label=peak_label(peaks[p]) if p >= 0 else None, fixed=bool(problem.fixed[i] >= 0),
            observed_ppm=obs, predicted_ppm=pred,
            predicted_sd_ppm=float(math.sqrt(problem.noise**2 + x @ S @ x)),
            prior_predicted_ppm=float(problem.base[i] + gv @ problem.prior_mean[K:]),
            residual_ppm=obs - pred if obs is not None else None,
            ring_current_ppm=float(gv @ m[K:]), ring_current_sd_ppm=float(math.sqrt(gv @ S[K:, K:] @ gv)),
            charge_ppm=float(g.charge_ppm), class_offset_ppm=float(m[k]), ref_ppm=float(g.ref_ppm),
            ref_sd_ppm=float(g.ref_sd_ppm), needed_ref_ppm=needed,
            needed_ref_z=(needed - g.ref_ppm) / spread if needed is not None else None,
        ))
    return tuple(out)

