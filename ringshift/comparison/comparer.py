"""Compare predicted ring-current shifts with an observed ¹H peak list.

Given per-hydrogen-group predictions (:class:`GroupModel`), a priori circuit currents
(:class:`CircuitPrior`) and observed peaks (:class:`ObservedPeak`), :func:`compare` assigns peaks to
groups, fits the circuit currents with their uncertainty and weighs the evidence for a diatropic,
paratropic or no current in each circuit.

Model (linear in the currents; Bradley, Jirásek, Anderson & Peeks, Chem. Sci. 2023, 14, 1762 fitted
porphyrin-nanoring currents this way)::

    δ_obs,i = ref_i + u_class(i) + Σ_c J_c g_ic + q_i + ε_i

* ``ref_i`` the table reference shift of group i (ppm) and ``u_k`` one offset per proton class
  shared by the groups of that class, prior u_k ~ N(0, s_k²) with s_k the largest ``reference_sd_ppm``
  among the groups of class k;
* ``J_c`` the current of circuit c (nA/T, > 0 diatropic), prior N(prior, prior_sd²);
* ``g_ic`` the ring-current shift of group i per nA/T of circuit c (ppm per nA/T, positive =
  downfield per unit diatropic current);
* ``q_i`` the fixed π-charge term (ppm);
* ε_i ~ N(0, σ²), σ the model error: 0.3 ppm by default (:data:`DEFAULT_NOISE_PPM`, the typical
  size of the residual scatter of additive reference-shift plus ring-current models; common practice,
  no source), or chosen by maximum evidence over :data:`NOISE_GRID_PPM` with ``noise_ppm="auto"``.

Each assigned group is one observation. Posterior and evidence are closed form
(:mod:`ringshift.comparison.evidence`); assignment is optimal matching on integral slots
(:mod:`ringshift.comparison.assignment`), alternated with the fit until the assignment is stable, from several
starting currents (every circuit diatropic at |prior|, paratropic at −|prior|, zero, and
``n_random_starts`` draws from the sign prior using ``seed``), then polished by pair swaps and
re-solves with one used pair forbidden. The best assignment is the one of lowest cost::

    cost = −2 ln Z(assigned shifts) + overflow_cost_per_h × (protons beyond integrals)
           + missing_cost × (unassigned groups)

so cost differences are on the 2 ln B scale; alternatives within ``alternative_max_delta`` are
reported. Evidence per circuit: see :mod:`ringshift.comparison.evidence` (sign hypotheses from a symmetric prior
N(0, w²), w = 1.5 × benzene by default, the other circuits keeping their priors). A circuit's
verdict is the hypothesis with the largest evidence if it leads the runner-up by log10 B ≥ 0.43 (2 ln B ≥ 2,
the "positive" boundary of Kass & Raftery, JASA 1995, 90, 773), else "inconclusive".

The overall verdict: when every circuit is identified (posterior sd ≤ half the prior sd,
:data:`~ringshift.comparison.evidence.IDENTIFIED_SD_RATIO`) or there is only one, it is that of the circuit
with the largest lead. When two or more circuits are present and some are not identified, the combined current
of :mod:`ringshift.comparison.combined` (the a priori pattern scaled as a whole) is fitted too; the verdict is
that of the identified circuit with the largest lead if that one is decisive, else that of the combined
current (``verdict_basis`` "combined").
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Sequence
from dataclasses import replace
from numbers import Integral

import numpy as np

from ringshift import _validation as _v
from ringshift.comparison.assignment import slot_counts
from ringshift.comparison.combined import combined_current, combined_subject
from ringshift.comparison.constraints import (
    CORRELATION_COST,
    CouplingEvidence,
    correlation_check,
    coupling_forbidden,
    pair_links,
    repair,
)
from ringshift.comparison.evidence import (
    CLAIM_VERDICT,
    circuit_fits,
    circuit_subject,
    claim_check,
    claim_check_without_circuit,
)
from ringshift.comparison.records import (
    SIGN_PRIOR_SD_NA_PER_T,
    Alternative,
    CircuitFit,
    CircuitPrior,
    ClassOffset,
    Comparison,
    GroupModel,
    ObservedPeak,
    PeakSummary,
)
from ringshift.comparison.search import SearchProblem, group_results, peak_label, polish, starting_points
from ringshift.comparison.search import search as _assign_search
from ringshift.errors import AssignmentWarning, InputError

__all__ = ['compare']


#: Default model error σ of a predicted shift, ppm (common practice, no source).
DEFAULT_NOISE_PPM: float = 0.3

#: Grid of σ values (ppm) searched by ``noise_ppm="auto"`` (maximum evidence).
NOISE_GRID_PPM: tuple[float, ...] = (0.1, 0.15, 0.2, 0.3, 0.45, 0.7, 1.0)


#: Surcharge per proton placed beyond a peak's integral (one proton ≈ a 2σ residual).
OVERFLOW_COST_PER_H: float = 4.0

#: Cost of leaving a group unassigned (a 5σ outlier).
MISSING_COST: float = 25.0

#: Alternatives are reported when their cost exceeds the best by less than this (2 ln B units).
ALTERNATIVE_MAX_DELTA: float = 2.0

#: Peak kinds never assigned to groups (the peak-list names; see :data:`KIND_ALIASES` for older ones).
IGNORED_KINDS: frozenset[str] = frozenset({"solvent", "impurity", "tms"})

#: Earlier names of peak kinds, still accepted and read as the peak-list names.
KIND_ALIASES: dict[str, str] = {"signal": "sample", "reference": "tms"}


def peak_kind(kind: str) -> str:
    """The peak-list name of a kind ("signal" → "sample", "reference" → "tms"; others unchanged)."""
    return KIND_ALIASES.get(kind, kind)


def _validate(groups, peaks, circuits) -> None:
    """The one validation gate of this module; raises InputError with a one-line message."""
    for name, seq, cls in (("groups", groups, GroupModel), ("peaks", peaks, ObservedPeak),
                           ("circuits", circuits, CircuitPrior)):
        if isinstance(seq, (str, bytes)) or not isinstance(seq, Sequence):
            raise InputError(f"expected a sequence of {cls.__name__}, got {type(seq).__name__}", name)
        if len(seq) == 0 and name != "circuits":
            raise InputError(f"expected at least one {cls.__name__}, got none", name)
        for i, item in enumerate(seq):
            if not isinstance(item, cls):
                raise InputError(f"expected a {cls.__name__}, got {type(item).__name__}", f"{name}[{i}]")
    n_circ = len(circuits)
    for i, c in enumerate(circuits):
        _v.real(c.prior_nA_per_T, f"circuits[{i}].prior_nA_per_T")
        _v.real(c.prior_sd_nA_per_T, f"circuits[{i}].prior_sd_nA_per_T", positive=True)
    for i, g in enumerate(groups):
        src = f"groups[{i}]"
        if isinstance(g.n_h, bool) or not isinstance(g.n_h, (Integral, np.integer)) or g.n_h < 1:
            raise InputError(f"expected an integer >= 1, got {g.n_h!r}", f"{src}.n_h")
        for name in ("atoms", "parents"):
            value = getattr(g, name)
            if not isinstance(value, (tuple, list)) or not all(
                    isinstance(v, (Integral, np.integer)) and not isinstance(v, bool) for v in value):
                raise InputError(f"expected a tuple of atom indices, got {value!r}", f"{src}.{name}")
        _v.real(g.reference_ppm, f"{src}.reference_ppm")
        _v.real(g.reference_sd_ppm, f"{src}.reference_sd_ppm", positive=True)
        _v.real(g.charge_ppm, f"{src}.charge_ppm")
        garr = g.geometric_ppm_per_nA_T
        if not isinstance(garr, np.ndarray) or garr.shape != (n_circ,):
            shape = getattr(garr, "shape", type(garr).__name__)
            raise InputError(f"expected {n_circ} values (one per circuit), got {shape}",
                             f"{src}.geometric_ppm_per_nA_T")
        if not np.all(np.isfinite(garr)):
            raise InputError(f"expected finite values, got {garr.tolist()}", f"{src}.geometric_ppm_per_nA_T")
        if not isinstance(g.proton_class, str) or not g.proton_class:
            raise InputError(f"expected a non-empty class name, got {g.proton_class!r}", f"{src}.proton_class")
    owner: dict[int, int] = {}
    for i, p in enumerate(peaks):
        src = f"peaks[{i}]"
        _v.real(p.shift_ppm, f"{src}.shift_ppm")
        if p.integral is not None:
            _v.real(p.integral, f"{src}.integral", nonneg=True)
        for j in p.fixed_groups or ():
            if isinstance(j, bool) or not isinstance(j, (Integral, np.integer)) or not 0 <= int(j) < len(groups):
                raise InputError(f"expected group indices 0..{len(groups) - 1}, got {j!r}", f"{src}.fixed_groups")
            if int(j) in owner and owner[int(j)] != i:
                raise InputError(f"group {j} is already fixed to peaks[{owner[int(j)]}]", f"{src}.fixed_groups")
            owner[int(j)] = i
        if p.fixed_groups and peak_kind(p.kind) in IGNORED_KINDS:
            raise InputError(f"a {p.kind!r} peak cannot hold fixed groups", f"{src}.fixed_groups")
    if all(peak_kind(p.kind) in IGNORED_KINDS for p in peaks):
        raise InputError("every peak is a solvent/tms/impurity peak; expected at least one sample peak", "peaks")


def _check_options(noise_ppm, claim, n_alternatives, n_random_starts, integral_scale) -> None:
    if noise_ppm is not None and not (isinstance(noise_ppm, str) and noise_ppm == "auto"):
        _v.real(noise_ppm, "noise_ppm", positive=True)
    if claim is not None and claim not in CLAIM_VERDICT:
        raise InputError(f"expected one of {sorted(CLAIM_VERDICT)} or None, got {claim!r}", "claim")
    for name, v in (("n_alternatives", n_alternatives), ("n_random_starts", n_random_starts)):
        if isinstance(v, bool) or not isinstance(v, (Integral, np.integer)) or v < 0:
            raise InputError(f"expected an integer >= 0, got {v!r}", name)
    if integral_scale is not None:
        _v.real(integral_scale, "integral_scale", positive=True)


def _check_evidence(ev, n: int, n_peaks: int) -> None:
    """Shapes and indices of the 2D/multiplet evidence against the groups (n) and peaks (P)."""
    from ringshift.comparison.couplings import CORRELATION_KINDS

    if not isinstance(ev, CouplingEvidence):
        raise InputError(f"expected a CouplingEvidence or None, got {type(ev).__name__}", "correlations")
    masks = np.asarray(ev.group_masks)
    if masks.shape != (n, n) or len(ev.partners) != n or len(ev.peak_j) != n_peaks:
        raise InputError(f"group masks {masks.shape}, {len(ev.partners)} partner lists and {len(ev.peak_j)} "
                         f"coupling lists; expected ({n}, {n}), {n} and {n_peaks}", "correlations")
    for c in ev.pairs:
        ok = all(isinstance(v, (Integral, np.integer)) and 0 <= int(v) < n_peaks for v in (c.peak_a, c.peak_b))
        if not ok or c.peak_a == c.peak_b or c.kind not in CORRELATION_KINDS:
            raise InputError(f"cross peak {c.peak_a}-{c.peak_b} ({c.kind!r}); expected two different peak indices "
                             f"0..{n_peaks - 1} and a kind among {sorted(CORRELATION_KINDS)}", c.where)


def _build_problem(groups, peaks, circuits, noise, integral_scale, overflow_cost, missing_cost, evidence=None):
    classes = list(dict.fromkeys(g.proton_class for g in groups))
    n, K, C = len(groups), len(classes), len(circuits)
    X = np.zeros((n, K + C))
    for i, g in enumerate(groups):
        X[i, classes.index(g.proton_class)] = 1.0
        X[i, K:] = g.geometric_ppm_per_nA_T
    class_sd = [max(g.reference_sd_ppm for g in groups if g.proton_class == k) for k in classes]
    prior_mean = np.array([0.0] * K + [c.prior_nA_per_T for c in circuits])
    prior_sd = np.array(class_sd + [c.prior_sd_nA_per_T for c in circuits])
    integrals = np.array([np.nan if p.integral is None else p.integral for p in peaks], dtype=np.float64)
    active = np.array([p.kind not in IGNORED_KINDS for p in peaks])
    has_integral = np.isfinite(integrals) & active
    n_h = np.array([g.n_h for g in groups], dtype=np.int64)
    if integral_scale is None:
        total = float(np.sum(integrals[has_integral]))
        every = bool(np.all(has_integral[active]))
        integral_scale = n_h.sum() / total if every and total > 0 else 1.0
    slots = slot_counts(np.where(active, integrals, np.nan), integral_scale)
    fixed = np.full(n, -1, dtype=np.int64)
    for p_index, p in enumerate(peaks):
        for j in p.fixed_groups or ():
            fixed[int(j)] = p_index
    problem = SearchProblem(
        peak_ppm=np.array([p.shift_ppm for p in peaks], dtype=np.float64), slots=slots,
        has_integral=has_integral, active=active,
        base=np.array([g.reference_ppm + g.charge_ppm for g in groups]), X=X, n_h=n_h, fixed=fixed,
        prior_mean=prior_mean, prior_sd=prior_sd, n_classes=K, noise=float(noise),
        overflow_cost=float(overflow_cost), missing_cost=float(missing_cost),
    )
    if evidence is not None:
        forbidden, _ = coupling_forbidden(evidence.partners, evidence.peak_j, active)
        problem = dataclasses.replace(problem, forbidden=forbidden if forbidden.any() else None,
                                      links=pair_links(evidence.pairs, evidence.group_masks),
                                      correlation_cost=CORRELATION_COST)
    return problem, classes, float(integral_scale)


def _circuit_results(problem: SearchProblem, a, fit, circuits, width: float) -> tuple[CircuitFit, ...]:
    X, y = problem.data(a)
    return circuit_fits(X, y, problem.prior_mean, problem.prior_sd, problem.noise, problem.n_classes, fit,
                        circuits, width)


def _alternatives(problem, state, neigh, groups, peaks, circuits, width, n_max, max_delta):
    """The cheapest neighbouring assignments within ``max_delta`` of the best, at most ``n_max``."""
    def where(p: int) -> str | None:
        return peak_label(peaks[p]) if p >= 0 else None

    out: list[Alternative] = []
    a = state.assignment
    for key in sorted(neigh, key=lambda k: (neigh[k][0], k)):
        sc, alt, alt_fit = neigh[key]
        if sc - state.score >= max_delta or len(out) >= n_max:
            break
        changes = tuple((groups[i].label, where(int(a[i])), where(int(alt[i]))) for i in np.flatnonzero(alt != a))
        alt_circuits = _circuit_results(problem, alt, alt_fit, circuits, width)
        out.append(Alternative(
            delta_cost=float(sc - state.score), changes=changes,
            currents_nA_per_T=tuple(float(cf.current_nA_per_T) for cf in alt_circuits),
            verdicts=tuple(cf.verdict for cf in alt_circuits),
            delta_cost_log10=float(sc - state.score) / (2.0 * math.log(10.0)),
        ))
    return tuple(out)


def _check_search_options(width, overflow_cost, missing_cost, max_delta, max_iter) -> None:
    _v.real(width, "sign_prior_sd_nA_per_T", positive=True)
    _v.real(overflow_cost, "overflow_cost_per_h", nonneg=True)
    _v.real(missing_cost, "missing_cost", nonneg=True)
    _v.real(max_delta, "alternative_max_delta", nonneg=True)
    if isinstance(max_iter, bool) or not isinstance(max_iter, (Integral, np.integer)) or max_iter < 1:
        raise InputError(f"expected an integer >= 1, got {max_iter!r}", "max_iter")

# ------------------------------------------------------------------------------------- public API
def compare(
    groups: Sequence[GroupModel],
    peaks: Sequence[ObservedPeak],
    circuits: Sequence[CircuitPrior],
    *,
    noise_ppm: float | str | None = None,
    claim: str | None = None,
    n_alternatives: int = 3,
    seed: int = 0,
    n_random_starts: int = 2,
    sign_prior_sd_nA_per_T: float = SIGN_PRIOR_SD_NA_PER_T,
    integral_scale: float | None = None,
    overflow_cost_per_h: float = OVERFLOW_COST_PER_H,
    missing_cost: float = MISSING_COST,
    alternative_max_delta: float = ALTERNATIVE_MAX_DELTA,
    max_iter: int = 25,
    no_circuit_reason: str | None = None,
    correlations: CouplingEvidence | None = None,
) -> Comparison:
    """Assign peaks to groups, fit the circuit currents and weigh the evidence for their sign.

    Parameters
    ----------
    groups : sequence of GroupModel, length n
        Predictions per hydrogen group; each ``geometric_ppm_per_nA_T`` has shape (n_circuits,).
    peaks : sequence of ObservedPeak, length P
    circuits : sequence of CircuitPrior, length n_circuits
        May be empty (no closed conjugated circuit): the peaks are then assigned by reference shifts and
        class offsets alone and the verdict is "atropic", with ``no_circuit_reason`` as its reason.
    noise_ppm : float, "auto" or None, optional
        Model error σ (ppm); None → :data:`DEFAULT_NOISE_PPM`; "auto" → the value of
        :data:`NOISE_GRID_PPM` with the lowest cost (maximum evidence).
    claim : {"aromatic", "antiaromatic", "nonaromatic"}, optional
        Checked against the overall verdict.
    n_alternatives : int, optional
        Maximum number of alternative assignments reported (cost within ``alternative_max_delta``).
    seed : int, optional
        Seed of the random starting currents; the result is deterministic for a given seed.
    n_random_starts : int, optional
        Starting currents drawn from N(0, w²) in addition to diatropic, paratropic and zero.
    sign_prior_sd_nA_per_T : float, optional
        Width w of the prior whose halves are the sign hypotheses (default 1.5 × benzene).
    integral_scale : float, optional
        Protons per integral unit; None → total protons of the groups / sum of the signal-peak
        integrals when every signal peak has one, else 1 (integrals already in protons).
    overflow_cost_per_h, missing_cost : float, optional
        Assignment penalties (see :mod:`ringshift.comparison.assignment`).
    alternative_max_delta : float, optional
        Cost window (2 ln B units) of reported alternatives.
    max_iter : int, optional
        Maximum assignment/fit cycles per start.
    no_circuit_reason : str, optional
        Why there is no circuit (one sentence); used only when ``circuits`` is empty.
    correlations : CouplingEvidence, optional
        2D cross peaks and ³J couplings (:mod:`ringshift.comparison.constraints`): couplings forbid (group, peak)
        pairs, each unmet cross peak costs :data:`~ringshift.comparison.constraints.CORRELATION_COST`; the
        result's ``correlations`` reports what they confirmed and ruled out against the 1D evidence alone.

    Returns
    -------
    Comparison

    Raises
    ------
    InputError
        Empty or malformed groups, peaks or circuits, non-finite values, negative integrals,
        invalid fixed assignments or options.
    """
    _validate(groups, peaks, circuits)
    _check_options(noise_ppm, claim, n_alternatives, n_random_starts, integral_scale)
    _check_search_options(sign_prior_sd_nA_per_T, overflow_cost_per_h, missing_cost, alternative_max_delta,
                          max_iter)
    groups, circuits = tuple(groups), tuple(circuits)
    peaks = tuple(replace(p, kind=peak_kind(p.kind)) if p.kind in KIND_ALIASES else p for p in peaks)
    if correlations is not None:
        _check_evidence(correlations, len(groups), len(peaks))
    width = float(sign_prior_sd_nA_per_T)
    if noise_ppm == "auto":
        grid = NOISE_GRID_PPM
    else:
        grid = (DEFAULT_NOISE_PPM if noise_ppm is None else float(noise_ppm),)
    run = None
    for noise in grid:
        problem, classes, scale = _build_problem(groups, peaks, circuits, noise, integral_scale,
                                                 overflow_cost_per_h, missing_cost, correlations)
        starts = starting_points(problem.prior_mean, problem.prior_sd, problem.n_classes,
                                         int(n_random_starts), width, int(seed))
        state = _assign_search(problem, starts, int(max_iter))
        if problem.links:
            state = repair(problem, state, int(max_iter))
        state, neigh = polish(problem, state, int(max_iter))
        if run is None or state.score < run[1].score - 1e-9:
            run = (problem, state, neigh, classes, scale)
    assert run is not None, "the noise grid holds at least one level"
    problem, state, neigh, classes, scale = run
    a, fit = state.assignment, state.fit
    corr_check = None
    if correlations is not None:      # the same search on the 1D evidence alone, for the report of what changed
        plain = dataclasses.replace(problem, forbidden=None, links=(), correlation_cost=0.0)
        starts = starting_points(plain.prior_mean, plain.prior_sd, plain.n_classes, int(n_random_starts), width,
                                 int(seed))
        one_d, _ = polish(plain, _assign_search(plain, starts, int(max_iter)), int(max_iter))
        corr_check = correlation_check(correlations, problem, a, one_d.assignment, one_d.score, groups, peaks,
                                       peak_label)

    circuit_fits = _circuit_results(problem, a, fit, circuits, width)
    combined = None
    if len(circuit_fits) >= 2 and not all(cf.identified for cf in circuit_fits):
        X, y = problem.data(a)
        combined = combined_current(X, y, problem.prior_mean, problem.prior_sd, problem.noise, problem.n_classes,
                                    circuit_fits, width)
    why: str | None = None
    basis = "circuit"
    if circuit_fits:
        pool = [c for c in range(len(circuit_fits)) if combined is None or circuit_fits[c].identified]
        strongest = max(pool, key=lambda c: (circuit_fits[c].evidence.two_ln_bf_margin, -c), default=None)
        if combined is not None and (strongest is None or circuit_fits[strongest].verdict == "inconclusive"):
            basis, verdict, verdict_circuit, why = "combined", combined.verdict, None, combined.note
            check = None if claim is None else claim_check(claim, combined_subject(combined), combined.evidence,
                                                           verdict)
        else:
            assert strongest is not None, "without a combined current every circuit is in the pool"
            best = circuit_fits[strongest]
            verdict, verdict_circuit = best.verdict, best.label
            check = None if claim is None else claim_check(claim, circuit_subject(best), best.evidence, verdict)
    else:       # no closed conjugated circuit: no ring current can flow, the peaks are assigned by reference shifts
        why = no_circuit_reason or "the molecule has no closed conjugated circuit"
        basis, verdict, verdict_circuit = "structure", "atropic", None
        check = None if claim is None else claim_check_without_circuit(claim, why)

    alternatives = _alternatives(problem, state, neigh, groups, peaks, circuits, width, n_alternatives,
                                 alternative_max_delta)
    held = [tuple(int(i) for i in np.flatnonzero(a == p)) for p in range(len(peaks))]
    peak_rows = tuple(PeakSummary(
        index=p, label=peak_label(pk), shift_ppm=float(pk.shift_ppm),
        integral=None if pk.integral is None else float(pk.integral), kind=pk.kind,
        slots=int(problem.slots[p]) if problem.has_integral[p] else None, groups=held[p],
        assigned_h=int(sum(groups[i].n_h for i in held[p])),
    ) for p, pk in enumerate(peaks))
    unassigned_groups = tuple(int(i) for i in np.flatnonzero(a < 0))
    if unassigned_groups:
        names = ", ".join(groups[i].label for i in unassigned_groups)
        warnings.warn(f"no peak assigned to group(s) {names}", AssignmentWarning, stacklevel=2)
    offsets = tuple(ClassOffset(k, float(fit.mean[j]), float(math.sqrt(fit.cov[j, j])), float(problem.prior_sd[j]))
                    for j, k in enumerate(classes))
    return Comparison(
        verdict=verdict, verdict_circuit=verdict_circuit, circuits=circuit_fits,
        assignment=group_results(problem, a, fit, groups, peaks, classes), peaks=peak_rows,
        unassigned_peaks=tuple(p for p in range(len(peaks)) if problem.active[p] and not held[p]),
        unassigned_groups=unassigned_groups,
        ignored_peaks=tuple(p for p in range(len(peaks)) if not problem.active[p]),
        alternatives=alternatives,
        claim=check, verdict_reason=why, combined=combined, verdict_basis=basis,
        class_offsets=offsets, noise_ppm=float(problem.noise), noise_estimated=isinstance(noise_ppm, str),
        integral_scale=scale, converged=bool(state.converged), iterations=int(state.iterations),
        start=state.start, cost=float(state.score), log10_evidence=float(fit.log_evidence / math.log(10.0)),
        correlations=corr_check,
    )
