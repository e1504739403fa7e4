"""Closed-form Bayesian linear regression and the evidence for a ring current's sign.

Pure array kernels (arrays in, arrays out) used by :mod:`ringshift.comparison.comparer`, the per-circuit
fits and the claim check (their records, :class:`~ringshift.comparison.records.CircuitFit` and
:class:`~ringshift.comparison.records.CircuitEvidence`, are in :mod:`ringshift.comparison.records`).

The model is linear-Gaussian: data ``y`` (n,), design ``X`` (n, p), parameters θ (p,) with an
independent Gaussian prior θ_k ~ N(m0_k, s0_k²) and noise ε ~ N(0, σ² I). Then the posterior of θ is
Gaussian and the marginal likelihood (evidence) has a closed form (Bishop, *Pattern Recognition and
Machine Learning*, Springer 2006, §3.3 eqs. 3.50–3.54 and §3.5.1 eq. 3.86, written here for a diagonal
prior with non-zero mean)::

    A   = diag(1/s0²) + XᵀX/σ²                      posterior precision
    m_N = A⁻¹ (m0/s0² + Xᵀy/σ²)                     posterior mean
    ln Z = −(n/2) ln(2πσ²) − Σ ln s0 − ½ ln|A|
           − ½ [ |y − X m_N|²/σ² + Σ ((m_N − m0)/s0)² ]

Sign hypotheses for one column c (a circuit current J): with a symmetric prior J ~ N(0, w²) the full
model has evidence Z_full. The diatropic hypothesis puts a half-Gaussian prior on J,
p(J | dia) = 2 N(J; 0, w²) for J > 0 (zero otherwise), so

    Z_dia = ∫ p(y | J, φ) p(φ) 2 N(J; 0, w²) [J > 0] dJ dφ
          = 2 Z_full ∫ p(J, φ | y, full) [J > 0] dJ dφ = 2 Z_full P(J > 0 | y, full),

because p(y | J, φ) p(φ) N(J; 0, w²) = Z_full p(J, φ | y, full) (Bayes' theorem), and the posterior
marginal of J is Gaussian, N(μ_c, Σ_cc), so P(J > 0 | y) = Φ(μ_c / √Σ_cc). Likewise
Z_para = 2 Z_full Φ(−μ_c / √Σ_cc). The no-current hypothesis fixes J = 0, i.e. drops column c.

Bayes factors are reported on one scale, log10 B (the scale of the tables), and read with the categories of
Kass & Raftery (J. Am. Stat. Assoc. 1995, 90, 773, §3.2). Their 2 ln B boundaries 2, 6 and 10 are converted
exactly, log10 B = 2 ln B / (2 ln 10): log10 B in 0–0.43 "not worth more than a bare mention", 0.43–1.30
"positive", 1.30–2.17 "strong", ≥ 2.17 "very strong". The verdict threshold stays the "positive" boundary
(2 ln B = 2, log10 B = 0.434), so the verdicts are those of the 2 ln B reading; ``two_ln_bf_margin`` is kept
in the records for readers of the earlier JSON.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ringshift.comparison.records import CircuitEvidence, CircuitFit, ClaimCheck
from ringshift.constants import BENZENE_CURRENT_NA_PER_T

#: Kass & Raftery (JASA 1995, 90, 773, §3.2) categories on the 2 ln B scale: (lower bound, name).
#: A value belongs to the last category whose lower bound it reaches.
KASS_RAFTERY_2LNB: tuple[tuple[float, str], ...] = (
    (0.0, "not worth more than a bare mention"),
    (2.0, "positive"),
    (6.0, "strong"),
    (10.0, "very strong"),
)

#: Minimum lead on the 2 ln B scale for a verdict: the "positive" boundary of Kass & Raftery.
DECISIVE_2LNB: float = 2.0

#: The same categories on the log10 B scale (log10 B = 2 ln B / (2 ln 10)): (lower bound, name).
KASS_RAFTERY_LOG10: tuple[tuple[float, str], ...] = tuple(
    (lower / (2.0 * math.log(10.0)), name) for lower, name in KASS_RAFTERY_2LNB)

#: Minimum lead on the log10 B scale for a verdict (DECISIVE_2LNB converted: 2 / (2 ln 10) = 0.434).
DECISIVE_LOG10: float = DECISIVE_2LNB / (2.0 * math.log(10.0))

#: Hypothesis names and the verdict each one gives.
HYPOTHESIS_VERDICT = {"dia": "diatropic", "para": "paratropic", "none": "atropic"}

#: Claims and the verdict that supports each.
CLAIM_VERDICT: dict[str, str] = {"aromatic": "diatropic", "antiaromatic": "paratropic", "nonaromatic": "atropic"}

#: Identifiability rule: a circuit's current is identified by the data when its posterior sd is at most this
#: fraction of its prior sd. At 0.5 the data carry at least three times the prior's information (precision
#: 1/sd² grows at least fourfold), and with the default prior sd of one benzene current (12 nA/T) the posterior
#: sd is then at most 6 nA/T, so a benzene-sized current stands two sd from zero on its own (common practice,
#: no source). Above it the prior still sets much of the circuit's number and its sign test cannot be decisive.
IDENTIFIED_SD_RATIO: float = 0.5

#: Two-sided 95 % quantile of the standard normal distribution.
Z95: float = 1.959963984540054


@dataclass(frozen=True)
class LinearGaussianFit:
    """Posterior and evidence of a linear-Gaussian model.

    Attributes
    ----------
    mean : ndarray, shape (p,)
        Posterior mean of the parameters.
    cov : ndarray, shape (p, p)
        Posterior covariance.
    log_evidence : float
        Natural log of the marginal likelihood p(y) (density in the units of ``y``).
    n_data : int
        Number of data points.
    """

    mean: np.ndarray
    cov: np.ndarray
    log_evidence: float
    n_data: int


def linear_gaussian_fit(
    X: np.ndarray, y: np.ndarray, prior_mean: np.ndarray, prior_sd: np.ndarray, noise_sd: float
) -> LinearGaussianFit:
    """Closed-form posterior and log evidence of ``y = X θ + ε`` (Bishop 2006, §3.3 and eq. 3.86).

    Parameters
    ----------
    X : ndarray, shape (n, p)
        Design matrix (for ringshift: class indicators and geometric factors, ppm per nA/T).
    y : ndarray, shape (n,)
        Data (ppm).
    prior_mean, prior_sd : ndarray, shape (p,)
        Independent Gaussian prior of each parameter; ``prior_sd`` > 0.
    noise_sd : float
        Standard deviation σ of the Gaussian noise, same units as ``y``; > 0.

    Returns
    -------
    LinearGaussianFit
        With ``n = 0`` the posterior is the prior and ``log_evidence`` is 0.
    """
    from scipy import linalg  # loaded on use: keeps the command's start-up light

    y = np.asarray(y, dtype=np.float64).reshape(-1)
    m0 = np.asarray(prior_mean, dtype=np.float64).reshape(-1)
    s0 = np.asarray(prior_sd, dtype=np.float64).reshape(-1)
    n = y.shape[0]
    X = np.asarray(X, dtype=np.float64).reshape(n, len(m0))
    beta = 1.0 / noise_sd**2
    if len(m0) == 0:  # no parameters: y ~ N(0, σ² I)
        log_z = -0.5 * n * math.log(2.0 * math.pi * noise_sd**2) - 0.5 * beta * float(y @ y)
        return LinearGaussianFit(np.zeros(0), np.zeros((0, 0)), log_z if n else 0.0, n)
    prec0 = 1.0 / s0**2
    A = np.diag(prec0) + beta * (X.T @ X)
    b = prec0 * m0 + beta * (X.T @ y)
    factor = linalg.cho_factor(A, lower=True)
    mean = linalg.cho_solve(factor, b)
    cov = linalg.cho_solve(factor, np.eye(len(m0)))
    cov = 0.5 * (cov + cov.T)
    if n == 0:
        return LinearGaussianFit(mean, cov, 0.0, 0)
    log_det_a = 2.0 * float(np.sum(np.log(np.diag(factor[0]))))
    resid = y - X @ mean
    quad = beta * float(resid @ resid) + float(np.sum(((mean - m0) / s0) ** 2))
    log_z = (
        -0.5 * n * math.log(2.0 * math.pi * noise_sd**2)
        - float(np.sum(np.log(s0)))
        - 0.5 * log_det_a
        - 0.5 * quad
    )
    return LinearGaussianFit(mean, cov, log_z, n)


@dataclass(frozen=True)
class SignEvidence:
    """Natural-log evidences of the three hypotheses about one circuit current.

    Attributes
    ----------
    ln_z_dia, ln_z_para, ln_z_none : float
        ln Z for J > 0 (half-Gaussian prior), J < 0 (half-Gaussian prior) and J = 0.
    ln_z_full : float
        ln Z with the symmetric prior J ~ N(0, w²).
    mean_nA_per_T, sd_nA_per_T : float
        Posterior mean and sd of J under the symmetric prior.
    sign_prior_sd_nA_per_T : float
        The prior width w.
    """

    ln_z_dia: float
    ln_z_para: float
    ln_z_none: float
    ln_z_full: float
    mean_nA_per_T: float
    sd_nA_per_T: float
    sign_prior_sd_nA_per_T: float


def sign_evidence(
    X: np.ndarray,
    y: np.ndarray,
    prior_mean: np.ndarray,
    prior_sd: np.ndarray,
    noise_sd: float,
    column: int,
    sign_prior_sd: float,
) -> SignEvidence:
    """Evidence for J_c > 0, J_c < 0 and J_c = 0 (see the module docstring for the derivation).

    Parameters
    ----------
    X, y, prior_mean, prior_sd, noise_sd
        As for :func:`linear_gaussian_fit`; the priors of the other columns are kept.
    column : int
        Index of the current J_c in the parameter vector.
    sign_prior_sd : float
        Width w (nA/T) of the symmetric prior N(0, w²) whose halves are the sign hypotheses.

    Returns
    -------
    SignEvidence
    """
    from scipy.special import log_ndtr

    m_full = np.array(prior_mean, dtype=np.float64)
    s_full = np.array(prior_sd, dtype=np.float64)
    m_full[column] = 0.0
    s_full[column] = sign_prior_sd
    full = linear_gaussian_fit(X, y, m_full, s_full, noise_sd)
    keep = np.arange(len(m_full)) != column
    X2 = np.asarray(X, dtype=np.float64).reshape(len(y), len(m_full))[:, keep]
    none = linear_gaussian_fit(X2, y, m_full[keep], s_full[keep], noise_sd)
    mu = float(full.mean[column])
    sd = float(math.sqrt(full.cov[column, column]))
    t = mu / sd
    ln2 = math.log(2.0)
    return SignEvidence(
        ln_z_dia=ln2 + full.log_evidence + float(log_ndtr(t)),
        ln_z_para=ln2 + full.log_evidence + float(log_ndtr(-t)),
        ln_z_none=none.log_evidence,
        ln_z_full=full.log_evidence,
        mean_nA_per_T=mu,
        sd_nA_per_T=sd,
        sign_prior_sd_nA_per_T=float(sign_prior_sd),
    )


def kass_raftery_category(two_ln_b: float) -> str:
    """Category of a Bayes factor on the Kass & Raftery 2 ln B scale (JASA 1995, 90, 773, §3.2).

    Parameters
    ----------
    two_ln_b : float
        2 ln B of the favoured hypothesis over the other (its absolute value is used).

    Returns
    -------
    str
        "not worth more than a bare mention" (< 2), "positive" (2–6), "strong" (6–10) or
        "very strong" (≥ 10). Lower bounds are inclusive.
    """
    value = abs(float(two_ln_b))
    name = KASS_RAFTERY_2LNB[0][1]
    for lower, label in KASS_RAFTERY_2LNB:
        if value >= lower:
            name = label
    return name


@dataclass(frozen=True)
class HypothesisVerdict:
    """The favoured hypothesis and its lead.

    Attributes
    ----------
    verdict : str
        "diatropic", "paratropic", "atropic" or "inconclusive".
    best, runner_up : str
        Keys "dia", "para", "none" of the best and second-best hypothesis.
    two_ln_b_margin : float
        2 ln (Z_best / Z_runner_up) ≥ 0.
    """

    verdict: str
    best: str
    runner_up: str
    two_ln_b_margin: float


def hypothesis_verdict(
    ln_z_dia: float, ln_z_para: float, ln_z_none: float, *, threshold_2lnb: float = DECISIVE_2LNB
) -> HypothesisVerdict:
    """Pick the hypothesis with the largest evidence; "inconclusive" unless it leads by a threshold.

    Parameters
    ----------
    ln_z_dia, ln_z_para, ln_z_none : float
        Natural-log evidences.
    threshold_2lnb : float, optional
        Minimum lead on the 2 ln B scale, default 2 (the "positive" boundary of Kass & Raftery 1995).

    Returns
    -------
    HypothesisVerdict
    """
    lnz = {"dia": ln_z_dia, "para": ln_z_para, "none": ln_z_none}
    order = sorted(lnz, key=lambda k: (-lnz[k], k))
    margin = 2.0 * (lnz[order[0]] - lnz[order[1]])
    verdict = HYPOTHESIS_VERDICT[order[0]] if margin >= threshold_2lnb else "inconclusive"
    return HypothesisVerdict(verdict, order[0], order[1], float(margin))


def evidence_record(ev: SignEvidence, width: float) -> tuple[str, CircuitEvidence]:
    """The verdict and the evidence record of one sign test (log10 Bayes factors and their category)."""
    from scipy.special import ndtr

    hv = hypothesis_verdict(ev.ln_z_dia, ev.ln_z_para, ev.ln_z_none)
    ln10 = math.log(10.0)
    return hv.verdict, CircuitEvidence(
        log10_bf_dia_vs_none=(ev.ln_z_dia - ev.ln_z_none) / ln10,
        log10_bf_para_vs_none=(ev.ln_z_para - ev.ln_z_none) / ln10,
        log10_bf_dia_vs_para=(ev.ln_z_dia - ev.ln_z_para) / ln10,
        best=HYPOTHESIS_VERDICT[hv.best], runner_up=HYPOTHESIS_VERDICT[hv.runner_up],
        two_ln_bf_margin=hv.two_ln_b_margin, kass_raftery=kass_raftery_category(hv.two_ln_b_margin),
        p_diatropic=float(ndtr(ev.mean_nA_per_T / ev.sd_nA_per_T)), sign_prior_sd_nA_per_T=float(width),
        log10_bf_margin=hv.two_ln_b_margin / (2.0 * ln10),
    )


def circuit_fits(X, y, prior_mean, prior_sd, noise_sd, n_classes, fit, circuits, width) -> tuple[CircuitFit, ...]:
    """Fitted current, sign evidence and identifiability of every circuit.

    Parameters
    ----------
    X, y, prior_mean, prior_sd, noise_sd
        As for :func:`linear_gaussian_fit`; parameters are K class offsets, then one current per circuit.
    n_classes : int
        K.
    fit : LinearGaussianFit
        The fit under the circuit priors (gives the reported currents).
    circuits : sequence with ``label``, ``prior_nA_per_T``, ``prior_sd_nA_per_T``
    width : float
        Sign-prior width w, nA/T.

    Returns
    -------
    tuple of CircuitFit
        ``identified`` is :func:`is_identified` of the posterior sd over the prior sd (``sd_ratio``).
    """
    K = n_classes
    out = []
    for c, circ in enumerate(circuits):
        ev = sign_evidence(X, y, prior_mean, prior_sd, noise_sd, K + c, width)
        verdict, evidence = evidence_record(ev, width)
        J = float(fit.mean[K + c])
        se = float(math.sqrt(fit.cov[K + c, K + c]))
        ratio = se / float(circ.prior_sd_nA_per_T)
        out.append(CircuitFit(
            label=circ.label, verdict=verdict, current_nA_per_T=J,
            current_rel_benzene=J / BENZENE_CURRENT_NA_PER_T, stderr_nA_per_T=se,
            ci95_nA_per_T=(J - Z95 * se, J + Z95 * se), prior_nA_per_T=float(circ.prior_nA_per_T),
            prior_sd_nA_per_T=float(circ.prior_sd_nA_per_T), evidence=evidence,
            identified=is_identified(ratio), sd_ratio=ratio,
        ))
    return tuple(out)


def is_identified(sd_ratio: float) -> bool:
    """True when the data identify a circuit's current on its own: posterior sd / prior sd ≤
    :data:`IDENTIFIED_SD_RATIO` (0.5). See the constant for the reason of the threshold."""
    return bool(sd_ratio <= IDENTIFIED_SD_RATIO)


def evidence_phrase(ev: CircuitEvidence) -> str:
    """"the diatropic hypothesis leads the atropic one by log10 B = 3.2 (very strong)": the lead on the one
    scale of the reports (log10 Bayes factor) with its Kass & Raftery category."""
    return (f"the {ev.best} hypothesis leads the {ev.runner_up} one by log10 B = {ev.log10_bf_margin:.2f} "
            f"({ev.kass_raftery})")


def claim_check(claim: str, subject: str, ev: CircuitEvidence, verdict: str) -> ClaimCheck:
    """Check an aromaticity claim against a verdict; the reason is one sentence that says everything once.

    Parameters
    ----------
    claim : {"aromatic", "antiaromatic", "nonaromatic"}
    subject : str
        What the verdict rests on, with its numbers, e.g. "circuit 'R1' has J = +14.0 ± 0.5 nA/T
        (+1.17 × benzene)".
    ev : CircuitEvidence
        The evidence behind the verdict.
    verdict : str
        "diatropic", "paratropic", "atropic" or "inconclusive".

    Returns
    -------
    ClaimCheck
        ``reason`` names the claim and the outcome once: "The claim 'aromatic' is supported: <subject> and
        <evidence>, so the spectrum says diatropic."
    """
    numbers = f"{subject} and {evidence_phrase(ev)}"
    if verdict == "inconclusive":
        outcome = "inconclusive"
        reason = (f"The claim '{claim}' is neither supported nor contradicted: {numbers}, "
                  f"short of the {DECISIVE_LOG10:.2f} needed for a verdict.")
    else:
        outcome = "supported" if verdict == CLAIM_VERDICT[claim] else "contradicted"
        reason = f"The claim '{claim}' is {outcome}: {numbers}, so the spectrum says {verdict}."
    return ClaimCheck(claim, outcome, reason)


def circuit_subject(fit: CircuitFit) -> str:
    """The subject of a claim check that rests on one circuit: its label and fitted current."""
    return (f"circuit '{fit.label}' has J = {fit.current_nA_per_T:+.1f} ± {fit.stderr_nA_per_T:.1f} nA/T "
            f"({fit.current_rel_benzene:+.2f} × benzene)")


def claim_check_without_circuit(claim: str, reason: str) -> ClaimCheck:
    """Check an aromaticity claim for a molecule without a closed conjugated circuit.

    No circuit means no ring current: the verdict is "atropic" by construction (not fitted), so the
    claim 'nonaromatic' is supported and 'aromatic' or 'antiaromatic' contradicted. ``reason`` says
    why there is no circuit (one sentence).
    """
    outcome = "supported" if CLAIM_VERDICT[claim] == "atropic" else "contradicted"
    return ClaimCheck(claim, outcome, f"The claim '{claim}' is {outcome}: {reason.rstrip('.')}, so no ring current "
                                      "can flow (atropic by structure, not fitted).")
