"""The assignment search: matching alternated with the linear-Gaussian fit, and its result rows.

:class:`SearchProblem` holds the arrays of one comparison; :func:`search` alternates the optimal matching
of :mod:`ringshift.comparison.assignment` with the closed-form fit from several starting currents
(:func:`starting_points`), :func:`polish` re-solves with one used (group, peak) pair forbidden and keeps
any improvement, :func:`neighbours` lists the near-optimal alternatives, and :func:`group_results` turns
the final assignment into :class:`ringshift.comparison.records.GroupAssignment` rows.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from ringshift._numbers import text
from ringshift.comparison.assignment import overflow_protons, pair_swaps, solve_assignment, standardized_cost
from ringshift.comparison.constraints import violated
from ringshift.comparison.evidence import LinearGaussianFit, linear_gaussian_fit
from ringshift.comparison.records import GroupAssignment


# ------------------------------------------------------------------------- alternating search
@dataclass(frozen=True, eq=False)
class SearchProblem:
    """Arrays of one comparison at one noise level.

    Parameters: ``peak_ppm`` (P,) observed shifts; ``slots`` (P,) int; ``has_integral``, ``active``
    (P,) bool; ``base`` (n,) reference + charge shift, ppm; ``X`` (n, K + C) design (class
    indicators, then g in ppm per nA/T); ``n_h`` (n,) int; ``fixed`` (n,) int (−1 free);
    ``prior_mean``, ``prior_sd`` (K + C,); ``n_classes`` K; ``noise`` σ (ppm); ``overflow_cost``
    per proton; ``missing_cost`` per unassigned group; ``forbidden`` (n, P) bool pairs ruled out by couplings
    (or None); ``links`` the cross peaks as (peak a, peak b, allowed (n, n) bool) and ``correlation_cost`` the
    cost of each unmet one (:mod:`ringshift.comparison.constraints`).
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
    forbidden: np.ndarray | None = None
    links: tuple = ()
    correlation_cost: float = 0.0

    def data(self, a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Design rows (m, K + C) and data y = δ_obs − base (m,) of the assigned groups."""
        ok = a >= 0
        return self.X[ok], self.peak_ppm[a[ok]] - self.base[ok]

    def fit(self, a: np.ndarray) -> LinearGaussianFit:
        """Posterior and evidence of the shifts assigned by ``a`` (n,)."""
        X, y = self.data(a)
        return linear_gaussian_fit(X, y, self.prior_mean, self.prior_sd, self.noise)

    def score(self, a: np.ndarray, fit: LinearGaussianFit) -> float:
        """Cost −2 ln Z + overflow, missing and unmet-correlation penalties (2 ln B units)."""
        over = overflow_protons(a, self.n_h, self.slots, self.has_integral)
        unmet = violated(self.links, a) if self.links else 0
        return (-2.0 * fit.log_evidence + self.overflow_cost * over + self.missing_cost * int(np.sum(a < 0))
                + self.correlation_cost * unmet)

    def allowed(self, a: np.ndarray) -> bool:
        """Whether assignment ``a`` (n,) uses no forbidden (group, peak) pair."""
        if self.forbidden is None:
            return True
        ok = (a >= 0) & (self.fixed < 0)
        return not bool(np.any(self.forbidden[np.flatnonzero(ok), a[ok]]))

    def solve(self, mean: np.ndarray, cov: np.ndarray, forbidden: np.ndarray | None = None) -> np.ndarray:
        """Optimal assignment (n,) under the parameter distribution N(mean, cov)."""
        mu = self.base + self.X @ mean
        var = self.noise**2 + np.einsum("ij,jk,ik->i", self.X, cov, self.X)
        z2 = standardized_cost(self.peak_ppm, mu, var)
        if self.forbidden is not None:
            forbidden = self.forbidden if forbidden is None else (forbidden | self.forbidden)
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
    best: SearchState | None = None
    for label, mean, cov in starts:
        own: SearchState | None = None
        previous: tuple[int, ...] | None = None
        seen: set[tuple[int, ...]] = set()
        converged, it = False, 0
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
        if own is None:  # the first cycle always scores its assignment
            raise ValueError(f"max_iter={max_iter!r}; expected at least one matching/fit cycle")
        own = dataclasses.replace(own, iterations=it, converged=converged)
        if best is None or own.score < best.score - 1e-9:
            best = own
    if best is None:
        raise ValueError("starts: expected at least one starting point")
    return best


def neighbours(problem: SearchProblem, best: SearchState) -> dict:
    """Assignments one move from ``best``: pair swaps, and re-solves (under the fit of ``best``)
    with one used (group, peak) pair forbidden.

    Returns
    -------
    dict
        key (tuple of peak indices) → (cost, assignment (n,), fit); ``best`` itself excluded.
    """
    out: dict[tuple[int, ...], tuple[float, np.ndarray, LinearGaussianFit]] = {}
    for a in pair_swaps(best.assignment, problem.fixed):
        if not problem.allowed(a):
            continue
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


def peak_label(peak) -> str:
    """Label of a peak for reports: its own, else its shift."""
    return peak.label if peak.label else f"{text(peak.shift_ppm, '.2f')} ppm"


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
    groups, peaks : sequences of the group and peak records (``ringshift.comparison.comparer``)
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
        spread = math.sqrt(g.reference_sd_ppm**2 + problem.noise**2)
        out.append(GroupAssignment(
            index=i, label=g.label, atoms=tuple(int(v) for v in g.atoms), parents=tuple(int(v) for v in g.parents),
            n_h=int(g.n_h), proton_class=g.proton_class, peak_index=p if p >= 0 else None,
            peak_label=peak_label(peaks[p]) if p >= 0 else None, fixed=bool(problem.fixed[i] >= 0),
            observed_ppm=obs, predicted_ppm=pred,
            predicted_sd_ppm=float(math.sqrt(problem.noise**2 + x @ S @ x)),
            prior_predicted_ppm=float(problem.base[i] + gv @ problem.prior_mean[K:]),
            residual_ppm=obs - pred if obs is not None else None,
            ring_current_ppm=float(gv @ m[K:]), ring_current_sd_ppm=float(math.sqrt(gv @ S[K:, K:] @ gv)),
            charge_ppm=float(g.charge_ppm), class_offset_ppm=float(m[k]), reference_ppm=float(g.reference_ppm),
            reference_sd_ppm=float(g.reference_sd_ppm), needed_reference_ppm=needed,
            needed_reference_z=(needed - g.reference_ppm) / spread if needed is not None else None,
        ))
    return tuple(out)
