"""Tests of ringshift.comparison.comparer (assignment, Bayesian fit of currents, evidence, verdicts).

All molecules and spectra here are invented (synthetic round trips): peaks are simulated from the
model itself with known currents, offsets and noise, so the truth is known. Geometric factors g are
invented but of the size a Johnson–Bovey double loop gives: an in-plane benzene proton at 2.48 Å
has Δδ_rc = +1.32 ppm for 12 nA/T, i.e. g ≈ +0.11 ppm per nA/T (Johnson & Bovey, J. Chem. Phys.
1958, 29, 1012, check value of the design notes); inner protons of large rings have g of −0.5 to
−1 ppm per nA/T.
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import integrate, linalg, stats

from ringshift.comparison.assignment import overflow_protons, slot_counts, solve_assignment, standardized_cost
from ringshift.comparison.candidates import rank_candidates
from ringshift.comparison.comparer import compare
from ringshift.comparison.evidence import kass_raftery_category, linear_gaussian_fit, sign_evidence
from ringshift.comparison.records import CircuitPrior, GroupModel, ObservedPeak
from ringshift.errors import AssignmentWarning, InputError

# ------------------------------------------------------------------ invented model and simulator
#: Invented bridged [14]annulene-like molecule: (label, n_h, class, ref ppm, ref sd ppm, g ppm per nA/T).
ANNULENE = (
    ("H-outer-a", 2, "alkene CH", 6.40, 0.40, 0.085),
    ("H-outer-b", 2, "alkene CH", 6.40, 0.40, 0.070),
    ("H-outer-c", 4, "alkene CH", 6.40, 0.40, 0.100),
    ("H-outer-d", 2, "alkene CH", 6.40, 0.40, 0.055),
    ("H-inner", 2, "alkene CH", 6.40, 0.40, -0.750),
    ("CH2-bridge", 2, "alkyl CH2", 1.30, 0.30, -0.300),
    ("CH3-above", 3, "alkyl CH3", 0.90, 0.20, -0.220),
)
PRIOR = (CircuitPrior("C14 perimeter", 12.0, 12.0),)


def make_groups(spec=ANNULENE, charge_ppm=0.0):
    return [GroupModel(label, (10 + i,), (i,), n_h, cls, ref, sd, np.array([g]), charge_ppm)
            for i, (label, n_h, cls, ref, sd, g) in enumerate(spec)]


def simulate(groups, currents, noise, rng, *, offsets=True, shuffle=True):
    """Invented spectrum: shift = ref + class offset (drawn from its prior) + Σ J g + charge + noise.

    Returns the peaks (integral = n_h) and, for each group, the index of its generating peak.
    """
    classes = sorted({g.proton_class for g in groups})
    sd = {k: max(g.reference_sd_ppm for g in groups if g.proton_class == k) for k in classes}
    u = {k: (rng.normal(0.0, sd[k]) if offsets else 0.0) for k in classes}
    shifts = [g.reference_ppm + u[g.proton_class] + float(np.dot(g.geometric_ppm_per_nA_T, currents)) + g.charge_ppm
              + rng.normal(0.0, noise) for g in groups]
    order = rng.permutation(len(groups)) if shuffle else np.arange(len(groups))
    peaks = [ObservedPeak(shifts[i], float(groups[i].n_h), None, f"peak of {groups[i].label}") for i in order]
    truth = np.argsort(order)  # group i generated peak truth[i]
    return peaks, truth


def assigned(result):
    return np.array([-1 if g.peak_index is None else g.peak_index for g in result.assignment])


# ------------------------------------------------------------------ closed-form evidence
def test_log_evidence_equals_quadrature_one_parameter():
    # Textbook identity of the linear-Gaussian model (Bishop, Pattern Recognition and Machine
    # Learning, 2006, §3.5, eq. 3.86): Z = ∫ Π N(y_i; g_i J, σ²) N(J; m0, s0²) dJ.
    rng = np.random.default_rng(3)
    g = np.array([0.08, -0.7, 0.1, -0.25])
    y = g * 11.0 + rng.normal(0, 0.3, 4)
    m0, s0, sigma = 12.0, 9.0, 0.3
    fit = linear_gaussian_fit(g[:, None], y, np.array([m0]), np.array([s0]), sigma)

    def integrand(J):
        return np.prod(stats.norm.pdf(y, g * J, sigma)) * stats.norm.pdf(J, m0, s0)

    z, err = integrate.quad(integrand, -200, 200, points=[fit.mean[0]], epsabs=0, epsrel=1e-12, limit=200)
    assert_allclose(fit.log_evidence, math.log(z), atol=1e-8)  # quadrature error ~1e-12 relative


def test_log_evidence_equals_data_space_gaussian():
    # Same identity in data space: y ~ N(X m0, σ² I + X S0 Xᵀ) (Bishop 2006, eq. 3.111 / §3.5),
    # evaluated by scipy.stats.multivariate_normal, a reference library.
    rng = np.random.default_rng(5)
    X = np.column_stack([np.ones(6), [0, 0, 1, 1, 0, 1], rng.normal(0, 0.5, 6), rng.normal(0, 0.1, 6)])
    y = rng.normal(0, 1, 6)
    m0 = np.array([0.0, 0.0, 12.0, -3.0])
    s0 = np.array([0.4, 0.3, 18.0, 5.0])
    sigma = 0.25
    fit = linear_gaussian_fit(X, y, m0, s0, sigma)
    cov = sigma**2 * np.eye(6) + X @ np.diag(s0**2) @ X.T
    ref = stats.multivariate_normal(X @ m0, cov).logpdf(y)
    assert_allclose(fit.log_evidence, ref, rtol=0, atol=1e-10)  # both closed form; rounding only


def test_posterior_equals_augmented_least_squares():
    # Gaussian-prior regression = least squares on the prior-augmented system
    # [X/σ; diag(1/s0)] θ = [y/σ; m0/s0] (Bishop 2006, §3.3; common textbook identity);
    # covariance = (AᵀA)⁻¹. Reference: scipy.linalg.lstsq.
    rng = np.random.default_rng(7)
    X = np.column_stack([np.ones(5), rng.normal(0, 0.6, 5)])
    y = rng.normal(3, 1, 5)
    m0, s0, sigma = np.array([0.0, 12.0]), np.array([0.4, 18.0]), 0.3
    A = np.vstack([X / sigma, np.diag(1 / s0)])
    b = np.concatenate([y / sigma, m0 / s0])
    theta, *_ = linalg.lstsq(A, b)
    fit = linear_gaussian_fit(X, y, m0, s0, sigma)
    assert_allclose(fit.mean, theta, rtol=1e-10, atol=1e-12)  # same linear system, rounding only
    assert_allclose(fit.cov, linalg.inv(A.T @ A), rtol=1e-10, atol=1e-14)


def test_half_gaussian_evidence_equals_quadrature():
    # Derived identity Z_dia = 2 Z_full P(J > 0 | y) (module docstring of ringshift.comparison.evidence),
    # checked by direct integration of the likelihood against the half-Gaussian prior 2 N(J; 0, w²)
    # over J > 0 (and J < 0 for Z_para); the J = 0 model has no parameter: Z = Π N(y; 0, σ²).
    rng = np.random.default_rng(11)
    g = np.array([0.1, -0.6, 0.09])
    y = g * 4.0 + rng.normal(0, 0.3, 3)
    w, sigma = 18.0, 0.3
    ev = sign_evidence(g[:, None], y, np.array([12.0]), np.array([12.0]), sigma, 0, w)

    def like(J):
        return np.prod(stats.norm.pdf(y, g * J, sigma))

    z_dia, _ = integrate.quad(lambda J: like(J) * 2 * stats.norm.pdf(J, 0, w), 0, 150, epsabs=0, epsrel=1e-12,
                              limit=200)
    z_para, _ = integrate.quad(lambda J: like(J) * 2 * stats.norm.pdf(J, 0, w), -150, 0, epsabs=0,
                               epsrel=1e-12, limit=200)
    assert_allclose(ev.ln_z_dia, math.log(z_dia), atol=1e-8)  # quadrature, ~1e-12 relative
    assert_allclose(ev.ln_z_para, math.log(z_para), atol=1e-8)
    assert_allclose(ev.ln_z_none, np.sum(stats.norm.logpdf(y, 0, sigma)), atol=1e-12)


@pytest.mark.parametrize(
    "two_ln_b, expected",
    [(0.0, "not worth more than a bare mention"), (1.999, "not worth more than a bare mention"),
     (2.0, "positive"), (5.999, "positive"), (6.0, "strong"), (9.999, "strong"), (10.0, "very strong"),
     (250.0, "very strong"), (-7.0, "strong")],
    ids=["0", "below-2", "2", "below-6", "6", "below-10", "10", "250", "negative-uses-abs"],
)
def test_kass_raftery_boundaries(two_ln_b, expected):
    # Kass & Raftery, J. Am. Stat. Assoc. 1995, 90, 773, §3.2: 2 ln B 0–2 / 2–6 / 6–10 / > 10.
    assert kass_raftery_category(two_ln_b) == expected


# ------------------------------------------------------------------ assignment kernel
def _group_objective(a, z2, n_h, slots, has_integral, over_cost, miss_cost):
    z = sum(z2[i, p] for i, p in enumerate(a) if p >= 0)
    return z + over_cost * overflow_protons(np.array(a), n_h, slots, has_integral) + miss_cost * sum(p < 0 for p in a)


def test_slot_matching_against_brute_force():
    # Slow, obvious twin: enumerate every group -> peak (or missing) map of small random problems
    # and take the lowest group-level objective Σ z² + overflow + missing penalties. Group
    # assignment under capacities is NP-hard (generalized assignment), so proton-slot matching plus
    # single moves and pair exchanges is a heuristic: require the exact optimum in >= 90 % of 100
    # problems (measured 94.5 % over 200) and never more than 20 % above it (measured max 14 %)
    # (common practice, no source).
    exact, worst = 0, 0.0
    for seed in range(100):
        rng = np.random.default_rng(seed)
        n_h = rng.integers(1, 4, size=4)
        peaks, mean = rng.normal(5, 3, size=4), rng.normal(5, 3, size=4)
        z2 = standardized_cost(peaks, mean, rng.uniform(0.05, 2.0, size=4))
        slots = rng.permutation(n_h)  # integrals match the group sizes in some order
        has = np.ones(4, bool)
        a = solve_assignment(z2, slots, has, has, n_h, np.full(4, -1), overflow_cost_per_h=4.0, missing_cost=25.0)
        got = _group_objective(a, z2, n_h, slots, has, 4.0, 25.0)
        best = min(_group_objective(c, z2, n_h, slots, has, 4.0, 25.0)
                   for c in itertools.product(range(-1, 4), repeat=4))
        assert got >= best - 1e-9
        exact += got <= best + 1e-9
        worst = max(worst, (got - best) / best)
    assert exact >= 90
    assert worst < 0.20


def test_slot_matching_obvious_case_is_identity():
    # Each group sits next to its own peak, integrals equal the group sizes: the matching must be the
    # identity (common practice, no source).
    n_h = np.array([2, 4, 1, 3])
    peaks = np.array([7.3, 6.9, -2.0, 1.1])
    z2 = standardized_cost(peaks, peaks + 0.05, np.full(4, 0.09))
    has = np.ones(4, bool)
    a = solve_assignment(z2, n_h, has, has, n_h, np.full(4, -1), overflow_cost_per_h=4.0, missing_cost=25.0)
    assert a.tolist() == [0, 1, 2, 3]


@pytest.mark.parametrize(
    "integrals, scale, expected",
    [([2.0, 4.1, 0.9], 1.0, [2, 4, 1]), ([1.0, 2.0, 3.0], 2.0, [2, 4, 6]), ([0.2, 0.0, np.nan], 1.0, [1, 0, 0])],
    ids=["round", "scaled", "small-zero-unknown"],
)
def test_slot_counts(integrals, scale, expected):
    # Integral rounding to whole protons, at least one slot for any positive integral
    # (common practice, no source).
    assert slot_counts(np.array(integrals), scale).tolist() == expected


# ------------------------------------------------------------------ synthetic round trips
def test_current_recovered_within_95_interval():
    # Synthetic round trip (invented data): 60 seeded spectra simulated from the model with
    # J = 14 nA/T, class offsets drawn from their priors and Gaussian noise σ = 0.3 ppm, fitted with
    # the same σ (assignment not given). A calibrated 95 % interval covers the truth in ~95 % of
    # trials; require >= 90 % as the brief states (binomial sd at n = 60 is ~2.8 %; measured 97 %
    # over 100 trials) (common practice, no source).
    groups = make_groups()
    hits = 0
    for seed in range(60):
        peaks, _ = simulate(groups, [14.0], 0.3, np.random.default_rng(seed))
        lo, hi = compare(groups, peaks, PRIOR, n_alternatives=0).circuits[0].ci95_nA_per_T
        hits += lo <= 14.0 <= hi
    assert hits >= 54


@pytest.mark.parametrize("seed", list(range(8)), ids=lambda s: f"seed{s}")
def test_small_noise_assignment_is_right(seed):
    # Synthetic round trip (invented data), σ = 0.02 ppm: the nearest outer groups differ by
    # 0.015 ppm per nA/T × 14 nA/T = 0.21 ppm ≈ 10 σ, so the generating assignment must be found.
    # Class offsets are set to zero here: an offset drawn 2.5 sd out can make another assignment
    # genuinely better (seen for seed 3: CH2 and inner H of equal integral traded places)
    # (common practice, no source).
    groups = make_groups()
    peaks, truth = simulate(groups, [14.0], 0.02, np.random.default_rng(seed), offsets=False)
    result = compare(groups, peaks, PRIOR, noise_ppm=0.05)
    assert assigned(result).tolist() == truth.tolist()
    assert result.verdict == "diatropic"
    assert result.converged
    lo, hi = result.circuits[0].ci95_nA_per_T
    assert lo <= 14.0 <= hi


@pytest.mark.parametrize("prior_sd", [12.0, 6.0], ids=["weak-prior", "moderate-prior"])
def test_hidden_paratropic_current_gives_paratropic(prior_sd):
    # Synthetic round trip (invented data): the a priori current is diatropic (+12 nA/T) but the
    # spectrum is simulated with J = −8 nA/T; the multi-start search must not stick at the diatropic
    # start, and the verdict must be paratropic (common practice, no source).
    groups = make_groups()
    prior = (CircuitPrior("C14 perimeter", 12.0, prior_sd),)
    for seed in range(5):
        peaks, _ = simulate(groups, [-8.0], 0.3, np.random.default_rng(100 + seed))
        result = compare(groups, peaks, prior)
        assert result.verdict == "paratropic"
        assert result.circuits[0].evidence.best == "paratropic"
        lo, hi = result.circuits[0].ci95_nA_per_T
        assert hi < 0


def _pople_in_plane_g(distance_A, ring_radius_A=1.39):
    # Pople point dipole in the ring plane (θ = 90°): Δδ = +(μ0/4π) J S / (3 R³)
    # (Pople, J. Chem. Phys. 1956, 24, 1111); μ0/4π × 1 nA/T = 12.566/(4π) ppm·Å; S of a regular
    # hexagon = (3√3/2) a².
    area = 1.5 * math.sqrt(3.0) * ring_radius_A**2
    return 12.566 / (4 * math.pi) * area / (3.0 * distance_A**3)


def test_remote_protons_without_current_are_inconclusive():
    # Synthetic round trip (invented data): J = 0 and every proton 6–8 Å from a benzene-sized ring,
    # where |g| < 0.01 ppm per nA/T (Pople far field): the spectrum cannot tell diatropic, paratropic
    # and atropic apart. Expected verdict: "inconclusive" (not "atropic": with g·w ≈ 0.1 ppm the
    # J = 0 model is hardly more predictive than the sign models). Require it in >= 18 of 20 trials
    # (a 2 ln B >= 2 lead by chance is rare, measured 1 in 10 at g up to 0.01) and never a "strong"
    # lead (common practice, no source).
    spec = (("CH3-remote", 3, "alkyl CH3", 0.90, 0.20, _pople_in_plane_g(8.0)),
            ("CH2-remote", 2, "alkyl CH2", 1.30, 0.30, _pople_in_plane_g(7.0)),
            ("CH-remote", 1, "aryl CH", 7.20, 0.30, _pople_in_plane_g(6.0)))
    groups = make_groups(spec)
    verdicts, margins = [], []
    for seed in range(20):
        peaks, _ = simulate(groups, [0.0], 0.3, np.random.default_rng(seed))
        result = compare(groups, peaks, PRIOR)
        verdicts.append(result.verdict)
        margins.append(result.circuits[0].evidence.two_ln_bf_margin)
    assert verdicts.count("inconclusive") >= 18
    assert max(margins) < 6.0


def test_no_current_near_the_ring_gives_atropic():
    # Synthetic round trip (invented data): J = 0 but inner and above-face protons with large |g|:
    # the posterior of J is narrow around 0, so the Occam factor w/sd favours J = 0; expect
    # "atropic" in most trials (measured 16/20 at σ = 0.3 ppm; require >= 14) and never a "strong"
    # lead for either sign (common practice, no source).
    groups = make_groups()
    verdicts, sign_margin = [], []
    for seed in range(20):
        peaks, _ = simulate(groups, [0.0], 0.3, np.random.default_rng(seed))
        result = compare(groups, peaks, PRIOR, n_alternatives=0)
        verdicts.append(result.verdict)
        if result.circuits[0].evidence.best != "atropic":
            sign_margin.append(result.circuits[0].evidence.two_ln_bf_margin)
    assert verdicts.count("atropic") >= 14
    assert max(sign_margin, default=0.0) < 6.0


def test_inner_protons_carry_the_evidence():
    # Physics weighting (Wannere et al., Org. Lett. 2005, 7, 1457: outer CH shifts are weak
    # indicators; inner and above-face protons carry the evidence). Synthetic data (invented):
    # the 4 outer groups (10 H, g ≈ +0.06–0.1, class spread 0.4 ppm) against the 3 inner/above-face
    # groups (7 H, g −0.2 to −0.75): the inner set must give a far larger Bayes factor and a far
    # smaller current uncertainty (measured median log10 B ≈ 130 vs ≈ 1.3; sd 0.6 vs 4.4 nA/T).
    groups = make_groups()
    outer, inner = [0, 1, 2, 3], [4, 5, 6]
    bf = {"outer": [], "inner": []}
    sd = {"outer": [], "inner": []}
    for seed in range(10):
        peaks, _ = simulate(groups, [14.0], 0.3, np.random.default_rng(seed), shuffle=False)
        for name, idx in (("outer", outer), ("inner", inner)):
            r = compare([groups[i] for i in idx], [peaks[i] for i in idx], PRIOR, n_alternatives=0)
            bf[name].append(r.circuits[0].evidence.log10_bf_dia_vs_none)
            sd[name].append(r.circuits[0].stderr_nA_per_T)
    assert np.median(bf["inner"]) > 20 * max(np.median(bf["outer"]), 1.0)
    assert np.max(sd["inner"]) < np.min(sd["outer"]) / 5
    assert np.median(bf["outer"]) < 5  # outer protons alone: at most "strong", never overwhelming


def test_two_circuits_recovered_and_strongest_gives_verdict():
    # Synthetic round trip (invented porphyrinoid-like model, two circuits: macrocycle 18 nA/T and a
    # local benzenoid ring 10 nA/T); small noise σ = 0.05 ppm. Both currents must lie in their 95 %
    # intervals and the overall verdict must come from the circuit with the larger 2 ln B margin
    # (common practice, no source).
    spec = [("H-meso", 2, "aryl CH", 7.0, 0.3, (0.09, 0.01)), ("H-beta-a", 4, "aryl CH", 7.0, 0.3, (0.08, 0.02)),
            ("H-beta-b", 4, "aryl CH", 7.0, 0.3, (0.06, 0.04)), ("NH", 2, "NH", 8.0, 0.5, (-0.60, -0.02)),
            ("H-benzo", 2, "aryl CH", 7.0, 0.3, (0.03, 0.11)), ("CH3-benzo", 3, "alkyl CH3", 2.3, 0.2, (0.01, 0.05))]
    groups = [GroupModel(lab, (i,), (i,), nh, cls, ref, sd, np.array(g)) for i, (lab, nh, cls, ref, sd, g) in
              enumerate(spec)]
    circuits = (CircuitPrior("macrocycle", 15.0, 12.0), CircuitPrior("benzo", 12.0, 12.0))
    peaks, truth = simulate(groups, np.array([18.0, 10.0]), 0.05, np.random.default_rng(2))
    result = compare(groups, peaks, circuits, noise_ppm=0.1)
    for fit, true in zip(result.circuits, (18.0, 10.0)):
        assert fit.ci95_nA_per_T[0] <= true <= fit.ci95_nA_per_T[1]
    margins = [c.evidence.two_ln_bf_margin for c in result.circuits]
    assert result.verdict_circuit == result.circuits[int(np.argmax(margins))].label
    assert result.verdict == result.circuits[int(np.argmax(margins))].verdict == "diatropic"


def _clean_spectrum(seed=0, J=14.0, noise=0.02, spec=ANNULENE):
    groups = make_groups(spec)
    peaks, truth = simulate(groups, [J], noise, np.random.default_rng(seed), offsets=False)
    return groups, peaks, truth


# ------------------------------------------------------------------ assignment features
def test_fixed_assignment_is_honoured():
    # Invented data: fix CH2-bridge to the CH3 peak (a wrong assignment on purpose); it must stay
    # there and be flagged, and no other group is flagged (common practice, no source).
    groups, peaks, truth = _clean_spectrum()
    target = int(truth[6])
    peaks[target] = ObservedPeak(peaks[target].shift_ppm, peaks[target].integral, (5,), peaks[target].label)
    result = compare(groups, peaks, PRIOR, noise_ppm=0.1)
    rows = result.assignment
    assert rows[5].peak_index == target and rows[5].fixed
    assert not any(r.fixed for i, r in enumerate(rows) if i != 5)


def test_fixed_assignment_resolves_an_ambiguity():
    # Invented data (seed 3, σ = 0.02 ppm, class offsets drawn): the CH2 offset came out 2.5 sd low
    # and the free search prefers trading the CH2 and inner-H peaks (both 2 H). Fixing the inner H
    # to its generating peak (e.g. from a NOESY) must give the generating assignment throughout
    # (common practice, no source).
    groups = make_groups()
    peaks, truth = simulate(groups, [14.0], 0.02, np.random.default_rng(3))
    free = compare(groups, peaks, PRIOR, noise_ppm=0.05)
    assert assigned(free).tolist() != truth.tolist()  # the ambiguity this test is about
    p = int(truth[4])
    peaks[p] = ObservedPeak(peaks[p].shift_ppm, peaks[p].integral, (4,), peaks[p].label)
    fixed = compare(groups, peaks, PRIOR, noise_ppm=0.05)
    assert assigned(fixed).tolist() == truth.tolist()
    assert fixed.assignment[4].fixed


def test_overlap_one_peak_holds_two_groups():
    # Invented data: H-outer-b and H-outer-d made equivalent in shift (same g) and reported as one
    # peak of integral 4 at their mean shift; both groups must be assigned to it (common practice,
    # no source).
    spec = list(ANNULENE)
    spec[3] = ("H-outer-d", 2, "alkene CH", 6.40, 0.40, 0.070)
    groups, peaks, truth = _clean_spectrum(spec=tuple(spec))
    pb, pd = int(truth[1]), int(truth[3])
    merged = ObservedPeak(0.5 * (peaks[pb].shift_ppm + peaks[pd].shift_ppm), 4.0, None, "outer b+d")
    new_peaks = [merged if i == pb else p for i, p in enumerate(peaks) if i != pd]
    result = compare(groups, new_peaks, PRIOR, noise_ppm=0.1)
    at = {r.label: r.peak_label for r in result.assignment}
    assert at["H-outer-b"] == at["H-outer-d"] == "outer b+d"
    row = next(p for p in result.peaks if p.label == "outer b+d")
    assert row.assigned_h == 4 and row.slots == 4
    assert result.unassigned_groups == () and result.unassigned_peaks == ()


def test_extra_peak_reported_unassigned_and_solvent_ignored():
    # Invented data: one more signal peak than groups (an impurity at 2.17 ppm, integral 1) and a
    # solvent peak: the impurity is reported unassigned, the solvent ignored, the rest assigned as
    # generated (common practice, no source).
    groups, peaks, truth = _clean_spectrum()
    peaks = peaks + [ObservedPeak(2.17, 1.0, None, "unknown 2.17"), ObservedPeak(7.26, 0.4, None, "CHCl3", "solvent")]
    result = compare(groups, peaks, PRIOR, noise_ppm=0.1)
    assert result.unassigned_peaks == (len(peaks) - 2,)
    assert result.ignored_peaks == (len(peaks) - 1,)
    assert assigned(result).tolist() == truth.tolist()
    d = result.to_dict()
    assert d["unassigned_peaks"] == [{"index": len(peaks) - 2, "label": "unknown 2.17", "shift_ppm": 2.17}]


def test_group_without_a_peak_is_reported():
    # Invented data: an OH group expected near 12 ppm has no peak (exchange-broadened); it must be
    # reported unassigned with an AssignmentWarning rather than forced onto a peak 4 ppm away
    # (z² ≈ 50 > missing cost 25) (common practice, no source).
    groups, peaks, truth = _clean_spectrum()
    groups = groups + [GroupModel("OH", (40,), (41,), 1, "OH", 12.0, 0.5, np.array([0.0]))]
    with pytest.warns(AssignmentWarning, match="OH"):
        result = compare(groups, peaks, PRIOR, noise_ppm=0.1)
    assert result.unassigned_groups == (len(groups) - 1,)
    assert result.assignment[-1].observed_ppm is None and result.assignment[-1].residual_ppm is None
    assert assigned(result)[:-1].tolist() == truth.tolist()


def test_alternatives_are_close_and_describe_the_change():
    # Invented data with realistic noise σ = 0.3 ppm: outer groups 0.1–0.2 ppm apart can be swapped
    # at little cost; every reported alternative must cost less than 2 (2 ln B units) more than the
    # best, be sorted, name the moved groups, and there are at most n_alternatives (common practice,
    # no source).
    groups = make_groups()
    peaks, _ = simulate(groups, [14.0], 0.3, np.random.default_rng(4))
    result = compare(groups, peaks, PRIOR, n_alternatives=2)
    assert 1 <= len(result.alternatives) <= 2
    deltas = [alt.delta_cost for alt in result.alternatives]
    assert all(0 <= d < 2.0 for d in deltas) and deltas == sorted(deltas)
    for alt in result.alternatives:
        assert len(alt.changes) >= 1
        for label, old, new in alt.changes:
            row = next(r for r in result.assignment if r.label == label)
            assert row.peak_label == old and new != old


def test_shift_parts_add_up():
    # Bookkeeping of the reported parts (model definition, Bradley et al., Chem. Sci. 2023, 14,
    # 1762): predicted = ref + class offset + Σ J g + charge; ring-current part = J g; the reference
    # needed without a current = δ_obs − charge; its z uses √(ref_sd² + σ²).
    groups = make_groups(charge_ppm=0.4)
    peaks, _ = simulate(groups, [14.0], 0.02, np.random.default_rng(1), offsets=False)
    result = compare(groups, peaks, PRIOR, noise_ppm=0.1)
    J = result.circuits[0].current_nA_per_T
    for g, row in zip(groups, result.assignment):
        assert_allclose(row.ring_current_ppm, J * g.geometric_ppm_per_nA_T[0], rtol=1e-12)
        assert_allclose(row.predicted_ppm, g.reference_ppm + row.class_offset_ppm + row.ring_current_ppm + 0.4,
                        atol=1e-12)
        assert_allclose(row.needed_reference_ppm, row.observed_ppm - 0.4, atol=1e-12)
        z_sd = math.hypot(g.reference_sd_ppm, 0.1)
        assert_allclose(row.needed_reference_z, (row.needed_reference_ppm - g.reference_ppm) / z_sd, rtol=1e-12)
    # the inner proton needs a reference far outside its class spread without a ring current
    inner = next(r for r in result.assignment if r.label == "H-inner")
    assert inner.needed_reference_z < -10
    assert_allclose(result.circuits[0].current_rel_benzene, J / 12.0, rtol=1e-12)  # BENZENE_CURRENT 12 nA/T


# ------------------------------------------------------------------ claims, ranking, output
@pytest.mark.parametrize(
    "J, claim, outcome",
    [(14.0, "aromatic", "supported"), (14.0, "antiaromatic", "contradicted"), (14.0, "nonaromatic", "contradicted"),
     (-8.0, "antiaromatic", "supported"), (-8.0, "aromatic", "contradicted")],
    ids=["dia-aromatic", "dia-antiaromatic", "dia-nonaromatic", "para-antiaromatic", "para-aromatic"],
)
def test_claim_check_wording(J, claim, outcome):
    # Claim logic: aromatic ↔ diatropic, antiaromatic ↔ paratropic, nonaromatic ↔ no current
    # (Pople & Untch, JACS 1966, 88, 4811, for the link of 4n annulenes to paratropic currents);
    # the reason is one sentence quoting J, its error and 2 ln B (common practice, no source).
    groups, peaks, _ = _clean_spectrum(J=J)
    result = compare(groups, peaks, PRIOR, noise_ppm=0.1, claim=claim)
    check = result.claim
    assert check.claim == claim and check.outcome == outcome
    fit = result.circuits[0]
    assert f"J = {fit.current_nA_per_T:+.1f} ± {fit.stderr_nA_per_T:.1f} nA/T" in check.reason
    # one evidence scale in the words: log10 B, the Kass & Raftery (JASA 1995, 90, 773) 2 ln B divided by 2 ln 10
    assert f"log10 B = {fit.evidence.log10_bf_margin:.2f}" in check.reason and "2 ln B" not in check.reason
    assert_allclose(fit.evidence.log10_bf_margin, fit.evidence.two_ln_bf_margin / (2 * math.log(10)), rtol=1e-12)
    assert check.reason.count(f"'{claim}'") == 1 and check.reason.count(outcome) == 1  # said once
    assert f"is {outcome}" in check.reason
    assert check.reason.endswith(".") and ". " not in check.reason and "\n" not in check.reason


def test_claim_check_inconclusive():
    # Remote protons only (Pople far field, as above), J = 0: the claim can be neither supported nor
    # contradicted (common practice, no source).
    spec = (("CH3-remote", 3, "alkyl CH3", 0.90, 0.20, _pople_in_plane_g(8.0)),
            ("CH-remote", 1, "aryl CH", 7.20, 0.30, _pople_in_plane_g(6.0)))
    groups = make_groups(spec)
    peaks, _ = simulate(groups, [0.0], 0.3, np.random.default_rng(0))
    result = compare(groups, peaks, PRIOR, claim="aromatic")
    assert result.verdict == "inconclusive"
    assert result.claim.outcome == "inconclusive"
    assert "neither supported nor contradicted" in result.claim.reason and "log10 B = " in result.claim.reason


def test_rank_candidates_picks_generating_structure():
    # Invented data generated from the annulene; candidates: the same structure, an isomer whose
    # methyl points outwards (g +0.05 instead of −0.22, inner H less shielded) and the cation
    # (π-charge term +1.0 ppm on every CH, of the size Schaefer & Schneider, Can. J. Chem. 1963, 41,
    # 966, give for a fraction of a charge per carbon, from memory). The generating structure must
    # rank first with a clear lead (common practice, no source).
    groups = make_groups()
    isomer = list(ANNULENE)
    isomer[4] = ("H-inner", 2, "alkene CH", 6.40, 0.40, -0.50)
    isomer[6] = ("CH3-outside", 3, "alkyl CH3", 0.90, 0.20, 0.050)
    cation = make_groups(charge_ppm=1.0)
    peaks, _ = simulate(groups, [14.0], 0.2, np.random.default_rng(8))
    with pytest.warns(AssignmentWarning, match="CH3-outside"):  # the isomer cannot place its methyl
        ranked = rank_candidates([("isomer", make_groups(tuple(isomer)), PRIOR), ("annulene", groups, PRIOR),
                                  ("cation", cation, PRIOR)], peaks)
    assert [r.rank for r in ranked] == [1, 2, 3]
    assert ranked[0].name == "annulene"
    assert ranked[0].probability > 0.9
    assert all(r.log10_bf_vs_best < -1 for r in ranked[1:])  # each loser at least 10× less likely
    assert_allclose(sum(r.probability for r in ranked), 1.0, rtol=1e-12)
    as_dict = json.loads(json.dumps(ranked[0].to_dict()))  # nested comparison in its own to_dict form
    assert as_dict["comparison"] == ranked[0].comparison.to_dict()


def test_to_dict_is_plain_json_and_deterministic():
    # Output contract: plain JSON types with the documented fields; same seed -> same result
    # (common practice, no source).
    groups = make_groups()
    peaks, _ = simulate(groups, [14.0], 0.3, np.random.default_rng(9))
    a = compare(groups, peaks, PRIOR, claim="aromatic", seed=3).to_dict()
    b = compare(groups, peaks, PRIOR, claim="aromatic", seed=3).to_dict()
    assert a == b
    assert json.loads(json.dumps(a)) == a
    for key in ("verdict", "circuits", "assignment", "unassigned_peaks", "unassigned_groups", "alternatives",
                "claim", "noise_ppm", "converged", "iterations"):
        assert key in a
    circ = a["circuits"][0]
    for key in ("label", "verdict", "current_nA_per_T", "current_rel_benzene", "stderr_nA_per_T", "ci95_nA_per_T"):
        assert key in circ
    for key in ("log10_bf_dia_vs_none", "log10_bf_para_vs_none", "log10_bf_dia_vs_para", "kass_raftery"):
        assert key in circ["evidence"]
    row = a["assignment"][0]
    for key in ("label", "atoms", "parents", "predicted_ppm", "observed_ppm", "residual_ppm"):
        assert key in row
    assert type(circ["current_nA_per_T"]) is float and type(row["atoms"][0]) is int


def test_noise_auto_maximises_evidence_over_grid():
    # Type-II maximum likelihood of σ over a grid (Bishop 2006, §3.5 evidence approximation):
    # "auto" must pick the grid value with the lowest cost of the fixed-σ comparisons, and a noisier
    # spectrum must not get a smaller σ (invented data, σ_sim 0.1 vs 0.7 ppm).
    groups = make_groups()
    quiet, _ = simulate(groups, [14.0], 0.1, np.random.default_rng(2), offsets=False)
    noisy, _ = simulate(groups, [14.0], 0.7, np.random.default_rng(2), offsets=False)
    chosen = {}
    for name, peaks in (("quiet", quiet), ("noisy", noisy)):
        auto = compare(groups, peaks, PRIOR, noise_ppm="auto", n_alternatives=0)
        costs = {s: compare(groups, peaks, PRIOR, noise_ppm=s, n_alternatives=0).cost for s in
                 (0.1, 0.15, 0.2, 0.3, 0.45, 0.7, 1.0)}
        assert auto.noise_estimated
        assert auto.noise_ppm == min(costs, key=costs.get)
        assert_allclose(auto.cost, min(costs.values()), rtol=1e-12)
        chosen[name] = auto.noise_ppm
    assert chosen["quiet"] < chosen["noisy"]


# ------------------------------------------------------------------ bad input
def _ok():
    groups, peaks, _ = _clean_spectrum()
    return groups, peaks


def _bad_cases():
    g, p = _ok()
    nan_peak = [ObservedPeak(float("nan"), 2.0)] + p[1:]
    neg = [ObservedPeak(p[0].shift_ppm, -1.0)] + p[1:]
    bad_g = [GroupModel("x", (0,), (0,), 2, "c", 7.0, 0.3, np.array([np.nan]))] + g[1:]
    short_g = [GroupModel("x", (0,), (0,), 2, "c", 7.0, 0.3, np.array([0.1, 0.2]))] + g[1:]
    inf_ref = [GroupModel("x", (0,), (0,), 2, "c", float("inf"), 0.3, np.array([0.1]))] + g[1:]
    zero_sd = [GroupModel("x", (0,), (0,), 2, "c", 7.0, 0.0, np.array([0.1]))] + g[1:]
    fixed_out = [ObservedPeak(p[0].shift_ppm, 2.0, (99,))] + p[1:]
    return [
        ("no-peaks", (g, [], PRIOR), {}, "peaks"),
        ("no-groups", ([], p, PRIOR), {}, "groups"),
        ("nan-shift", (g, nan_peak, PRIOR), {}, "peaks[0].shift_ppm"),
        ("negative-integral", (g, neg, PRIOR), {}, "peaks[0].integral"),
        ("nan-g", (bad_g, p, PRIOR), {}, "groups[0].geometric_ppm_per_nA_T"),
        ("g-wrong-length", (short_g, p, PRIOR), {}, "groups[0].geometric_ppm_per_nA_T"),
        ("inf-ref", (inf_ref, p, PRIOR), {}, "groups[0].reference_ppm"),
        ("zero-ref-sd", (zero_sd, p, PRIOR), {}, "groups[0].reference_sd_ppm"),
        ("fixed-out-of-range", (g, fixed_out, PRIOR), {}, "peaks[0].fixed_groups"),
        ("nan-prior", (g, p, (CircuitPrior("c", float("nan"), 12.0),)), {}, "circuits[0].prior_nA_per_T"),
        ("bad-claim", (g, p, PRIOR), {"claim": "aromatic-ish"}, "claim"),
        ("negative-noise", (g, p, PRIOR), {"noise_ppm": -0.3}, "noise_ppm"),
    ]


@pytest.mark.parametrize("name, args, kwargs, source", _bad_cases(), ids=[c[0] for c in _bad_cases()])
def test_bad_input_raises_one_line_input_error(name, args, kwargs, source):
    # Validation gate: InputError with a one-line message naming the input (common practice, no source).
    with pytest.raises(InputError) as info:
        compare(*args, **kwargs)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(source + ":")


def test_rank_candidates_bad_input():
    # Same gate for the candidate list (common practice, no source).
    _, p = _ok()
    with pytest.raises(InputError, match="candidates"):
        rank_candidates([], p)
    with pytest.raises(InputError, match=r"candidates\[0\]"):
        rank_candidates([("only a name",)], p)


def test_invariant_to_peak_and_group_order():
    # Invariance (design-notes convention): listing peaks or groups in another order must not change
    # the fitted current or which shift each group gets (invented data; common practice, no source).
    groups = make_groups()
    peaks, _ = simulate(groups, [14.0], 0.3, np.random.default_rng(12))
    base = compare(groups, peaks, PRIOR, n_alternatives=0)
    shift_of = {r.label: r.observed_ppm for r in base.assignment}
    rng = np.random.default_rng(0)
    for _ in range(3):
        g_perm = [groups[i] for i in rng.permutation(len(groups))]
        p_perm = [peaks[i] for i in rng.permutation(len(peaks))]
        other = compare(g_perm, p_perm, PRIOR, n_alternatives=0)
        assert_allclose(other.circuits[0].current_nA_per_T, base.circuits[0].current_nA_per_T, rtol=1e-9)
        assert {r.label: r.observed_ppm for r in other.assignment} == shift_of
