"""The comparer's records: its inputs (observed peaks, group models, circuit priors) and its results.

Inputs: :class:`ObservedPeak`, :class:`GroupModel`, :class:`CircuitPrior`. Results: :class:`Comparison`
with per-group (:class:`GroupAssignment`), per-peak (:class:`PeakSummary`) and per-circuit
(:class:`CircuitFit`, :class:`CircuitEvidence`) parts, the claim check (:class:`ClaimCheck`), alternative
assignments (:class:`Alternative`), class offsets (:class:`ClassOffset`) and candidate scores
(:class:`CandidateScore`). Units: ppm, nA/T; indices 0-based.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ringshift._records import ToDictMixin, fields_to_plain
from ringshift.constants import BENZENE_CURRENT_NA_PER_T

if TYPE_CHECKING:
    from ringshift.comparison.constraints import CorrelationCheck

#: Width w (nA/T) of the symmetric prior whose halves are the sign hypotheses: 1.5 × benzene.
SIGN_PRIOR_SD_NA_PER_T: float = 1.5 * BENZENE_CURRENT_NA_PER_T

__all__ = ['ObservedPeak', 'GroupModel', 'CircuitPrior', 'Comparison', 'CandidateScore', 'ClassOffset']


# ----------------------------------------------------------------------------------------- inputs
@dataclass(frozen=True)
class ObservedPeak:
    """One observed ¹H peak.

    Attributes
    ----------
    shift_ppm : float
        Chemical shift, ppm.
    integral : float or None
        Integral in any unit (scaled to protons, see ``integral_scale`` of :func:`compare`); None if
        unknown.
    fixed_groups : tuple of int or None
        Indices of groups the user assigns to this peak; they are kept there.
    label : str
        Name used in reports (default: the shift).
    kind : str
        The peak-list kinds: "sample" (default, a line of the molecule), "solvent", "tms" or "impurity";
        kinds in :data:`~ringshift.comparison.comparer.IGNORED_KINDS` (solvent, tms, impurity) are never
        assigned. The earlier names "signal" (= sample) and "reference" (= tms) are still accepted and read
        as the new ones.
    """

    shift_ppm: float
    integral: float | None = None
    fixed_groups: tuple[int, ...] | None = None
    label: str = ""
    kind: str = "sample"


@dataclass(frozen=True, eq=False)
class GroupModel:
    """Prediction for one group of equivalent hydrogens.

    Attributes
    ----------
    label : str
    atoms : tuple of int
        Hydrogen atom indices.
    parents : tuple of int
        Indices of the heavy atoms carrying them.
    n_h : int
        Number of protons (≥ 1).
    proton_class : str
        Reference class; groups of one class share a fitted offset.
    reference_ppm, reference_sd_ppm : float
        Table reference shift and its spread (> 0), ppm.
    geometric_ppm_per_nA_T : ndarray, shape (n_circuits,)
        Ring-current shift per nA/T of each circuit, ppm per nA/T (positive = downfield for a
        diatropic current).
    charge_ppm : float
        π-charge shift term, ppm (fixed).
    """

    label: str
    atoms: tuple[int, ...]
    parents: tuple[int, ...]
    n_h: int
    proton_class: str
    reference_ppm: float
    reference_sd_ppm: float
    geometric_ppm_per_nA_T: np.ndarray
    charge_ppm: float = 0.0

    def __post_init__(self):
        try:
            g = np.array(self.geometric_ppm_per_nA_T, dtype=np.float64).reshape(-1)
        except (TypeError, ValueError):
            return  # left as given; the validation gate of compare() reports it
        g.setflags(write=False)
        object.__setattr__(self, "geometric_ppm_per_nA_T", g)


@dataclass(frozen=True)
class CircuitPrior:
    """A priori current of one circuit (e.g. Hückel–London), used as a weak prior.

    Attributes
    ----------
    label : str
    prior_nA_per_T : float
        Prior mean, nA/T (> 0 diatropic).
    prior_sd_nA_per_T : float
        Prior sd, nA/T (> 0); default 1.5 × benzene.
    """

    label: str
    prior_nA_per_T: float
    prior_sd_nA_per_T: float = SIGN_PRIOR_SD_NA_PER_T

# ---------------------------------------------------------------------------------------- results
@dataclass(frozen=True)
class ClassOffset(ToDictMixin):
    """Fitted offset of one proton class from its table references, ppm."""

    proton_class: str
    offset_ppm: float
    sd_ppm: float
    prior_sd_ppm: float


@dataclass(frozen=True)
class Comparison(ToDictMixin):
    """Result of :func:`compare`.

    ``verdict_basis`` says what the verdict rests on: "circuit" (the identified circuit with the largest
    evidence margin, ``verdict_circuit``), "combined" (the circuits are not separately identified, so the
    verdict is that of ``combined``, the one current the data do determine; ``verdict_circuit`` is None and
    ``verdict_reason`` says so) or "structure" (no closed conjugated circuit: "atropic", ``verdict_circuit``
    None and ``verdict_reason`` says why). ``combined`` is given whenever some circuit of two or more is not
    identified (see :func:`ringshift.comparison.combined.combined_current`), else None.
    ``cost`` is the assignment cost (module docstring), ``log10_evidence`` the log10 marginal
    likelihood of the assigned shifts. ``start`` names the starting current of the winning search,
    ``iterations`` its assignment/fit cycles and ``converged`` whether it reached a fixed point.
    """

    verdict: str
    verdict_circuit: str | None
    circuits: tuple[CircuitFit, ...]
    assignment: tuple[GroupAssignment, ...]
    peaks: tuple[PeakSummary, ...]
    unassigned_peaks: tuple[int, ...]
    unassigned_groups: tuple[int, ...]
    ignored_peaks: tuple[int, ...]
    alternatives: tuple[Alternative, ...]
    claim: ClaimCheck | None
    class_offsets: tuple[ClassOffset, ...]
    noise_ppm: float
    noise_estimated: bool
    integral_scale: float
    converged: bool
    iterations: int
    start: str
    cost: float
    log10_evidence: float
    verdict_reason: str | None = None
    combined: CombinedCurrent | None = None
    verdict_basis: str = "circuit"
    correlations: CorrelationCheck | None = None

    def to_dict(self) -> dict:
        """Plain JSON-able dict; unassigned peaks and groups are given with labels."""
        out = fields_to_plain(self)
        out["unassigned_peaks"] = [
            {"index": int(i), "label": self.peaks[i].label, "shift_ppm": float(self.peaks[i].shift_ppm)}
            for i in self.unassigned_peaks
        ]
        out["unassigned_groups"] = [
            {"index": int(i), "label": self.assignment[i].label} for i in self.unassigned_groups
        ]
        return out


@dataclass(frozen=True)
class CandidateScore(ToDictMixin):
    """Rank of one candidate structure by :func:`rank_candidates`.

    ``cost`` = the comparison cost + ``unassigned_peak_cost`` × unassigned sample peaks;
    ``log10_bf_vs_best`` = −(cost − best cost) / (2 ln 10); ``probability`` ∝ exp(−cost/2) with
    equal prior probabilities of the candidates.
    """

    name: str
    rank: int
    cost: float
    log10_bf_vs_best: float
    probability: float
    comparison: Comparison

# ---------------------------------------------------------------------------- result records
@dataclass(frozen=True)
class GroupAssignment(ToDictMixin):
    """One group's assignment and the parts of its shift.

    ``predicted_ppm`` = ref + class offset + ring current + charge (posterior mean),
    ``predicted_sd_ppm`` its predictive sd including the model error, ``prior_predicted_ppm`` the
    a priori prediction (prior currents, no offset). ``ring_current_ppm`` = Σ_c J_c g_ic is the part
    of the shift the fitted currents explain; ``needed_reference_ppm`` = δ_obs − q is the reference shift
    the peak would need without any ring current, ``needed_reference_z`` its distance from ``reference_ppm`` in
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
    reference_ppm: float
    reference_sd_ppm: float
    needed_reference_ppm: float | None
    needed_reference_z: float | None


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
    """An assignment nearly as good as the best: its extra cost (2 ln B units, ``delta_cost``; the same as
    ``delta_cost_log10`` on the log10 scale of the reports), what moved (group label, from peak, to
    peak; None = unassigned) and the currents and verdicts it implies (empty without a circuit)."""

    delta_cost: float
    changes: tuple[tuple[str, str | None, str | None], ...]
    currents_nA_per_T: tuple[float, ...]
    verdicts: tuple[str, ...]
    delta_cost_log10: float = 0.0


@dataclass(frozen=True)
class CircuitEvidence(ToDictMixin):
    """Evidence for the sign of one circuit's current.

    ``log10_bf_*`` are log10 Bayes factors; ``log10_bf_margin`` is log10 B of the best hypothesis over the
    runner-up (``two_ln_bf_margin`` the same on the 2 ln B scale, kept for earlier readers), read with the
    categories of Kass & Raftery (``kass_raftery``); ``p_diatropic`` is P(J > 0 | data) under the symmetric
    prior of width ``sign_prior_sd_nA_per_T``.
    """

    log10_bf_dia_vs_none: float
    log10_bf_para_vs_none: float
    log10_bf_dia_vs_para: float
    best: str
    runner_up: str
    two_ln_bf_margin: float
    kass_raftery: str
    p_diatropic: float
    sign_prior_sd_nA_per_T: float
    log10_bf_margin: float


@dataclass(frozen=True)
class CircuitFit(ToDictMixin):
    """Fitted current of one circuit (posterior under its :class:`CircuitPrior`) and its verdict.

    ``sd_ratio`` is the posterior sd over the prior sd of the current; ``identified`` is True when it is at
    most :data:`ringshift.comparison.evidence.IDENTIFIED_SD_RATIO` (the data determine this circuit on
    its own). For a circuit that is not identified only the interval ``ci95_nA_per_T`` is meaningful: the
    split of the current between the circuits is set by the prior, not the spectrum.
    """

    label: str
    verdict: str
    current_nA_per_T: float
    current_rel_benzene: float
    stderr_nA_per_T: float
    ci95_nA_per_T: tuple[float, float]
    prior_nA_per_T: float
    prior_sd_nA_per_T: float
    evidence: CircuitEvidence
    identified: bool = True
    sd_ratio: float | None = None


@dataclass(frozen=True)
class CombinedCurrent(ToDictMixin):
    """The one current the data determine when the circuits are not separately identified.

    Every circuit carries ``weights[c]`` × J (``weights`` in the order of ``circuits``, the labels): with
    ``basis`` "a priori pattern" the weights are the a priori currents over that of ``lead_circuit`` (the
    circuit with the largest |a priori current|), so J is the lead circuit's current and the others keep the
    a priori proportions; ``scale_vs_a_priori`` = J / (a priori current of the lead circuit) is the common
    scale s of the a priori pattern (1 = as computed, 0 = no current). With ``basis`` "common current" (no a
    priori current) every weight is 1 and ``scale_vs_a_priori`` is None. J, its sd and 95 % interval
    (nA/T), the verdict and its evidence come from the same closed-form fit and sign test as a circuit's.
    ``unidentified`` lists the circuits the data do not separate; ``note`` says so in one sentence.
    """

    basis: str
    lead_circuit: str
    circuits: tuple[str, ...]
    weights: tuple[float, ...]
    verdict: str
    current_nA_per_T: float
    current_rel_benzene: float
    stderr_nA_per_T: float
    ci95_nA_per_T: tuple[float, float]
    scale_vs_a_priori: float | None
    scale_ci95: tuple[float, float] | None
    prior_nA_per_T: float
    prior_sd_nA_per_T: float
    evidence: CircuitEvidence
    unidentified: tuple[str, ...]
    note: str


@dataclass(frozen=True)
class ClaimCheck(ToDictMixin):
    """Outcome ("supported", "contradicted", "inconclusive") of an aromaticity claim, with a reason."""

    claim: str
    outcome: str
    reason: str
