"""Which candidate structure fits the spectrum: ranking several predictions against one peak list.

:func:`rank_candidates` runs the comparer for each candidate on the same peaks and ranks them by
evidence (log marginal likelihood); :func:`rank` does the same from predictions and a
:class:`ringshift.spectra.peaks.PeakList`.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence

import numpy as np

from ringshift import _validation as _v
from ringshift.comparison.comparer import MISSING_COST, compare
from ringshift.comparison.records import CandidateScore, CircuitPrior, GroupModel, ObservedPeak
from ringshift.comparison.run import circuit_priors, group_models, observed_peaks
from ringshift.errors import AssignmentWarning, InputError

__all__ = ['rank_candidates', 'rank']



def rank_candidates(
    candidates: Sequence[tuple[str, Sequence[GroupModel], Sequence[CircuitPrior]]],
    peaks: Sequence[ObservedPeak],
    *,
    noise_ppm: float | str | None = None,
    seed: int = 0,
    n_random_starts: int = 2,
    n_alternatives: int = 0,
    integral_scale: float | None = None,
    unassigned_peak_cost: float = MISSING_COST,
) -> list[CandidateScore]:
    """Rank candidate structures (isomers, tautomers, charge states) by how well they explain the peaks.

    Each candidate is compared with :func:`compare`; its cost adds ``unassigned_peak_cost`` per
    signal peak it leaves unexplained. Costs are on the 2 ln B scale (an unassigned group's
    likelihood is replaced by its missing cost, so candidates with the same groups compare
    consistently); when candidates have different numbers of groups the costs compare likelihoods
    of different data, which is approximate (an :class:`~ringshift.errors.AssignmentWarning` says so).

    Parameters
    ----------
    candidates : sequence of (name, groups, circuits)
    peaks : sequence of ObservedPeak
    noise_ppm, seed, n_random_starts, n_alternatives, integral_scale
        Passed to :func:`compare`.
    unassigned_peak_cost : float, optional
        Cost per unassigned signal peak (default :data:`MISSING_COST`).

    Returns
    -------
    list of CandidateScore
        Best first (rank 1).
    """
    if isinstance(candidates, (str, bytes)) or not isinstance(candidates, Sequence) or len(candidates) == 0:
        raise InputError("expected a non-empty sequence of (name, groups, circuits)", "candidates")
    _v.real(unassigned_peak_cost, "unassigned_peak_cost", nonneg=True)
    results = []
    for i, cand in enumerate(candidates):
        if not isinstance(cand, (tuple, list)) or len(cand) != 3 or not isinstance(cand[0], str):
            raise InputError("expected a (name, groups, circuits) triple", f"candidates[{i}]")
        name, groups, circuits = cand
        comp = compare(groups, peaks, circuits, noise_ppm=noise_ppm, seed=seed, n_random_starts=n_random_starts,
                       n_alternatives=n_alternatives, integral_scale=integral_scale)
        results.append((name, comp.cost + unassigned_peak_cost * len(comp.unassigned_peaks), comp))
    if len({len(r[2].assignment) for r in results}) > 1:
        warnings.warn("candidates have different numbers of hydrogen groups; their costs are only "
                      "approximately comparable", AssignmentWarning, stacklevel=2)
    costs = np.array([r[1] for r in results])
    best = float(costs.min())
    weights = np.exp(-0.5 * (costs - best))
    prob = weights / weights.sum()
    order = sorted(range(len(results)), key=lambda j: (costs[j], j))
    return [CandidateScore(name=results[j][0], rank=r + 1, cost=float(costs[j]),
                           log10_bf_vs_best=float(-(costs[j] - best) / (2.0 * math.log(10.0))),
                           probability=float(prob[j]), comparison=results[j][2])
            for r, j in enumerate(order)]


def rank(preds: Sequence, peaklist, *, noise_ppm=None, seed: int = 0):
    """Rank several candidate structures against one peak list (isomers, tautomers, charge states)."""
    cands = []
    for p in preds:
        cands.append((p.structure.name, group_models(p), circuit_priors(p)))
    obs = observed_peaks(peaklist, preds[0])
    return rank_candidates(cands, obs, noise_ppm=noise_ppm, seed=seed)
