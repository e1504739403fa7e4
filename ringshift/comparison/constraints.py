"""2D correlations and ³J couplings as evidence inside the assignment search, and the report of what they decided.

Input: :class:`CouplingEvidence` (cross peaks matched to peaks, the bond-count masks of the group pairs and the
vicinal partners of every group, from :mod:`ringshift.comparison.couplings`). How it enters the search:

* **Couplings are unary** (one group, one peak): a group whose vicinal partners cannot explain a peak's listed
  couplings (:func:`ringshift.comparison.couplings.couplings_consistent`) is *forbidden* at that peak
  (:func:`coupling_forbidden`). Forbidden pairs are excluded from the linear-sum assignment itself, so the
  matching stays exactly optimal under them. A peak whose couplings fit no group forbids nothing (it is
  reported instead: the structure, the couplings or the peak list is wrong).
* **Correlations are pairwise** (two peaks must hold a 3- or 4-bond neighbour pair of groups; with overlapping
  groups at a peak any of them may supply it), so no (group, peak) pair can be forbidden on their account
  without excluding valid overlaps. Each unmet cross peak adds ``correlation_cost`` (2 ln B units) to the
  assignment cost (:func:`violated`); :func:`repair` then runs a beam search over *witnesses*: for an unmet
  cross peak it holds a neighbour pair (g at one end, h at the other) in place, re-runs the matching/fit
  alternation for the other groups (exactly optimal matching for them), and goes on with the next unmet cross
  peak while keeping the witnesses chosen so far; the cheapest assignment seen wins. The pair swaps and
  forbidden-pair re-solves of ``search.polish`` then run on the penalised cost.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from ringshift._records import ToDictMixin
from ringshift.comparison.couplings import CORRELATION_KINDS, couplings_consistent, partner_text

__all__ = ["CouplingEvidence", "CorrelationCheck", "PairCheck", "CouplingCheck", "RuledOut", "CORRELATION_COST",
           "coupling_forbidden", "pair_links", "violated", "repair", "correlation_check"]

#: Cost of one unmet cross peak, 2 ln B units: as costly as leaving a group unassigned (a 5σ outlier,
#: ``comparer.MISSING_COST``), so a cross peak outweighs any near-tie of the 1D evidence.
CORRELATION_COST: float = 25.0


@dataclass(frozen=True, eq=False)
class CouplingEvidence:
    """2D and multiplet evidence for one comparison.

    Attributes
    ----------
    pairs : tuple of objects with ``peak_a``, ``peak_b`` (peak indices), ``kind``, ``strength``, ``where``
        Cross peaks (:class:`ringshift.io.correlations.MatchedCorrelation`).
    group_masks : ndarray of int, shape (n, n)
        :func:`ringshift.comparison.couplings.group_bond_masks` of the groups.
    partners : tuple (length n) of tuples of Partner
        :func:`ringshift.comparison.couplings.vicinal_partners` of the groups.
    peak_j : tuple (length P) of tuple of float or None
        Couplings listed for each peak, Hz.
    source : str or None
        The correlation file; ``tolerance_ppm`` its matching tolerance.
    """

    pairs: tuple
    group_masks: np.ndarray
    partners: tuple
    peak_j: tuple
    source: str | None = None
    tolerance_ppm: float | None = None


# ------------------------------------------------------------------------------------------- records
@dataclass(frozen=True)
class PairCheck(ToDictMixin):
    """One cross peak: its row, the peaks and the groups assigned there, and whether the final assignment
    (``status``) and the assignment from the 1D evidence alone (``status_1d``) put 3- or 4-bond neighbours
    (``kind``) at its two ends ("confirmed") or not ("violated"); ``bonds`` is the H–H bond count found."""

    where: str
    kind: str
    strength: str | None
    peak_a: int
    peak_b: int
    peak_a_label: str
    peak_b_label: str
    groups_a: tuple[str, ...]
    groups_b: tuple[str, ...]
    status: str
    bonds: int | None
    status_1d: str


@dataclass(frozen=True)
class CouplingCheck(ToDictMixin):
    """One peak with listed couplings (Hz): the groups assigned to it, their vicinal partners with the expected
    ranges, ``status`` ("consistent", "inconsistent" or "unassigned"), why, and the groups its couplings rule out
    (empty when they fit no group: then nothing was ruled out)."""

    peak: int
    peak_label: str
    j_hz: tuple[float, ...]
    groups: tuple[str, ...]
    partners: str
    status: str
    reason: str
    ruled_out_groups: tuple[str, ...]


@dataclass(frozen=True)
class RuledOut(ToDictMixin):
    """A group whose peak differs from the assignment of the 1D evidence alone: from ``peak_1d`` to ``peak``
    (labels; None = unassigned), ``by`` "couplings" (its 1D peak is forbidden by them) or "correlations"."""

    group: str
    peak_1d: str | None
    peak: str | None
    by: str


@dataclass(frozen=True)
class CorrelationCheck(ToDictMixin):
    """What the correlations and couplings did: per cross peak (``pairs``), per peak with couplings
    (``couplings``), the assignments they changed (``changes``), the cost of the assignment from the 1D evidence
    alone (``cost_1d``, same units as ``Comparison.cost`` without the correlation term) and the penalty per unmet
    cross peak."""

    source: str | None
    tolerance_ppm: float | None
    correlation_cost: float
    n_confirmed: int
    n_violated: int
    pairs: tuple[PairCheck, ...]
    couplings: tuple[CouplingCheck, ...]
    changes: tuple[RuledOut, ...]
    cost_1d: float


# ------------------------------------------------------------------------------------------ kernels
def coupling_forbidden(partners, peak_j, active: np.ndarray) -> tuple[np.ndarray, list[str]]:
    """(group, peak) pairs ruled out by the peaks' couplings.

    Parameters
    ----------
    partners : sequence (n) of sequences of Partner
    peak_j : sequence (P) of sequence of float or None
        Couplings of each peak, Hz.
    active : ndarray of bool, shape (P,)
        Peaks that may hold groups.

    Returns
    -------
    (ndarray of bool, shape (n, P), list of str)
        Forbidden pairs, and the reason for each group at each peak ("" when allowed) as ``reasons[p][g]``.
    """
    n, n_peaks = len(partners), len(peak_j)
    out = np.zeros((n, n_peaks), dtype=bool)
    reasons: list = []
    for p, js in enumerate(peak_j):
        why = [""] * n
        if js and active[p]:
            for g in range(n):
                ok, why[g] = couplings_consistent(js, partners[g])
                out[g, p] = not ok
            if out[:, p].all():        # fits no group: say so, forbid nothing
                out[:, p] = False
        reasons.append(why)
    return out, reasons


def pair_links(pairs, group_masks: np.ndarray) -> tuple[tuple[int, int, np.ndarray], ...]:
    """For each cross peak (peak a, peak b, allowed (n, n) bool): may group i at a and group j at b explain it."""
    out = []
    for c in pairs:
        mask = 0
        for k in CORRELATION_KINDS[c.kind]:
            mask |= 1 << k
        out.append((int(c.peak_a), int(c.peak_b), (np.asarray(group_masks) & mask) != 0))
    return tuple(out)


def violated(links, a: np.ndarray) -> int:
    """Number of cross peaks whose two peaks hold no allowed group pair under assignment ``a`` (n,)."""
    return sum(1 for pa, pb, ok in links if not ok[np.ix_(a == pa, a == pb)].any())


def repair(problem, best, max_iter: int, beam: int = 6):
    """Beam search over witnesses of the unmet cross peaks (module notes); returns the cheapest ``SearchState``.

    A node holds some groups at chosen peaks (the witnesses picked so far) and the assignment the matching/fit
    alternation gives the others. A node is expanded on its first unmet cross peak (in file order): one child per
    neighbour pair (g, h) allowed there and compatible with the node's held groups. Every unmet cross peak must get
    some witness, so branching on one of them alone would lose no solution of the full tree; the search keeps only
    the ``beam`` cheapest children of each depth (a heuristic cut), for at most one depth per cross peak.
    """
    from ringshift.comparison.search import SearchState, search

    n, n_peaks = problem.X.shape[0], problem.peak_ppm.shape[0]
    forbidden = problem.forbidden if problem.forbidden is not None else np.zeros((n, n_peaks), dtype=bool)

    def unmet(a):
        return [(pa, pb, ok) for pa, pb, ok in problem.links if not ok[np.ix_(a == pa, a == pb)].any()]

    level = [(problem.fixed, best)] if unmet(best.assignment) else []
    seen = {tuple(int(v) for v in best.assignment)}
    for _ in range(len(problem.links)):
        children = []
        for held_at, state in level:
            pa, pb, ok = unmet(state.assignment)[0]
            for g, h in zip(*np.nonzero(ok)):
                g, h = int(g), int(h)
                if forbidden[g, pa] or forbidden[h, pb] or held_at[g] not in (-1, pa) or held_at[h] not in (-1, pb):
                    continue
                fixed = held_at.copy()
                fixed[g], fixed[h] = pa, pb
                st = search(dataclasses.replace(problem, fixed=fixed), [(best.start, state.fit.mean, state.fit.cov)],
                            max_iter)
                key = tuple(int(v) for v in st.assignment)
                if key in seen:
                    continue
                seen.add(key)
                child = SearchState(st.assignment, st.fit, problem.score(st.assignment, st.fit),
                                    best.iterations + st.iterations, st.converged, best.start)
                if child.score < best.score - 1e-9:
                    best = child
                if unmet(child.assignment):
                    children.append((fixed, child))
        if not children:
            break
        level = sorted(children, key=lambda c: (c[1].score, tuple(int(v) for v in c[1].assignment)))[:beam]
    return best


def _labels(a, p, groups) -> tuple[str, ...]:
    return tuple(groups[i].label for i in np.flatnonzero(a == p))


def _bonds(ok_masks, ga, gb, kind_mask) -> int | None:
    best = None
    for i in ga:
        for j in gb:
            m = int(ok_masks[i, j]) & kind_mask
            if m:
                k = (m & -m).bit_length() - 1
                best = k if best is None else min(best, k)
    return best


def correlation_check(evidence: CouplingEvidence, problem, a: np.ndarray, a_1d: np.ndarray, cost_1d: float,
                      groups, peaks, peak_label) -> CorrelationCheck:
    """The report of :class:`CorrelationCheck` for the final assignment ``a`` (n,) and the 1D-only ``a_1d`` (n,)."""
    pair_rows = []
    for c, (pa, pb, ok) in zip(evidence.pairs, problem.links):
        kind_mask = sum(1 << k for k in CORRELATION_KINDS[c.kind])

        def pair_status(x, pa=pa, pb=pb, ok=ok):
            return "confirmed" if ok[np.ix_(x == pa, x == pb)].any() else "violated"
        st = pair_status(a)
        bonds = _bonds(evidence.group_masks, np.flatnonzero(a == pa), np.flatnonzero(a == pb), kind_mask)
        pair_rows.append(PairCheck(
            where=c.where, kind=c.kind, strength=c.strength, peak_a=pa, peak_b=pb,
            peak_a_label=peak_label(peaks[pa]), peak_b_label=peak_label(peaks[pb]),
            groups_a=_labels(a, pa, groups), groups_b=_labels(a, pb, groups), status=st,
            bonds=bonds if st == "confirmed" else None, status_1d=pair_status(a_1d)))
    forbidden, reasons = coupling_forbidden(evidence.partners, evidence.peak_j, problem.active)
    labels = [g.label for g in groups]
    j_rows = []
    for p, js in enumerate(evidence.peak_j):
        if not js:
            continue
        here = np.flatnonzero(a == p)
        verdicts = [couplings_consistent(js, evidence.partners[i]) for i in here]
        status = "unassigned" if here.size == 0 else (
            "consistent" if all(ok for ok, _ in verdicts) else "inconsistent")
        j_rows.append(CouplingCheck(
            peak=p, peak_label=peak_label(peaks[p]), j_hz=tuple(float(j) for j in js), groups=_labels(a, p, groups),
            partners="; ".join(f"{labels[i]}: {partner_text(evidence.partners[i], labels)}" for i in here) or "–",
            status=status, reason="; ".join(f"{labels[i]}: {why}" for i, (ok, why) in zip(here, verdicts) if not ok),
            ruled_out_groups=tuple(labels[g] for g in np.flatnonzero(forbidden[:, p]))))
    changes = []
    for i in np.flatnonzero(a != a_1d):
        p1 = int(a_1d[i])
        by = "couplings" if p1 >= 0 and forbidden[i, p1] else "correlations"
        changes.append(RuledOut(group=labels[i], peak_1d=peak_label(peaks[p1]) if p1 >= 0 else None,
                                peak=peak_label(peaks[int(a[i])]) if a[i] >= 0 else None, by=by))
    n_conf = sum(r.status == "confirmed" for r in pair_rows)
    return CorrelationCheck(
        source=evidence.source, tolerance_ppm=evidence.tolerance_ppm, correlation_cost=float(problem.correlation_cost),
        n_confirmed=n_conf, n_violated=len(pair_rows) - n_conf, pairs=tuple(pair_rows), couplings=tuple(j_rows),
        changes=tuple(changes), cost_1d=float(cost_1d))
