"""The one current a spectrum determines when it cannot separate the circuits.

A polycyclic molecule has more circuits than its spectrum can tell apart: coronene's twelve equivalent
protons give one line, which fixes one sum Σ_c g_c J_c of seven circuit currents. The per-circuit posteriors
then stay close to their priors (:data:`~ringshift.comparison.evidence.IDENTIFIED_SD_RATIO` decides when a
circuit is identified) and each circuit's sign test is inconclusive, although the line plainly shows a
diatropic current. What the data do determine is a combination of the currents. ringshift uses the a priori
pattern (the Hückel–London currents, or whatever the priors hold) scaled as a whole::

    J_c = w_c · J,   w_c = J_c,prior / J_lead,prior

with "lead" the circuit of largest |a priori current|, so J is the lead circuit's current and s = J /
J_lead,prior the common scale of the pattern (1 = as computed, 0 = no current, < 0 = reversed). Without any
a priori current every w_c = 1 (one common current in every circuit: for faces of one fused system, a
current around the outer perimeter only, since inner bonds carry the difference of equal face currents).
The model stays linear-Gaussian with the class offsets and one current column X_circuits · w, so its
posterior, evidence and sign test are the closed forms of :mod:`ringshift.comparison.evidence`
(Bishop, *Pattern Recognition and Machine Learning*, 2006, §3.3 and eq. 3.86).
"""

from __future__ import annotations

import math

import numpy as np

from ringshift.comparison.evidence import Z95, evidence_record, linear_gaussian_fit, sign_evidence
from ringshift.comparison.records import CircuitFit, CombinedCurrent
from ringshift.constants import BENZENE_CURRENT_NA_PER_T

__all__ = ["pattern_weights", "combined_design", "combined_current", "combined_subject"]

#: An a priori current below this (nA/T) counts as none when the pattern is built.
_NO_CURRENT_NA_PER_T = 1e-6


def pattern_weights(prior_nA_per_T: np.ndarray) -> tuple[np.ndarray, int, str]:
    """Weights w_c of the combined current, the index of the lead circuit and the basis.

    Parameters
    ----------
    prior_nA_per_T : ndarray, shape (C,), C ≥ 1
        A priori current of each circuit, nA/T.

    Returns
    -------
    weights : ndarray, shape (C,)
        J_c,prior / J_lead,prior ("a priori pattern"; the lead weight is 1), or all 1 ("common current")
        when no circuit has an a priori current.
    lead : int
        Index of the circuit with the largest |a priori current| (the first of equals).
    basis : str
        "a priori pattern" or "common current".
    """
    p = np.asarray(prior_nA_per_T, dtype=np.float64).reshape(-1)
    top = float(np.max(np.abs(p)))
    lead = int(np.flatnonzero(np.abs(p) >= top * (1.0 - 1e-3))[0])   # the first of circuits equal by symmetry
    if top < _NO_CURRENT_NA_PER_T:
        return np.ones_like(p), 0, "common current"
    return p / p[lead], lead, "a priori pattern"


def combined_design(X: np.ndarray, n_classes: int, weights: np.ndarray) -> np.ndarray:
    """Design of the combined model: the K class columns and one current column Σ_c w_c g_ic.

    Parameters
    ----------
    X : ndarray, shape (n, K + C)
        Class indicators, then geometric factors g_ic (ppm per nA/T).
    n_classes : int
        K.
    weights : ndarray, shape (C,)

    Returns
    -------
    ndarray, shape (n, K + 1)
    """
    X = np.asarray(X, dtype=np.float64)
    return np.column_stack([X[:, :n_classes], X[:, n_classes:] @ np.asarray(weights, dtype=np.float64)])


def combined_current(X, y, prior_mean, prior_sd, noise_sd: float, n_classes: int,
                     fits: tuple[CircuitFit, ...], width: float) -> CombinedCurrent:
    """Fit the combined current J (module docstring) and weigh the evidence for its sign.

    Parameters
    ----------
    X, y, prior_mean, prior_sd, noise_sd
        The full model, as for :func:`ringshift.comparison.evidence.linear_gaussian_fit`: K class offsets,
        then one current per circuit (prior means = the a priori currents, nA/T).
    n_classes : int
        K.
    fits : tuple of CircuitFit, length C ≥ 1
        The per-circuit results (labels and which are identified).
    width : float
        Width w (nA/T) of the symmetric sign prior of J, as for one circuit.

    Returns
    -------
    CombinedCurrent
        J's prior is that of the lead circuit: N(J_lead,prior, sd_lead²).
    """
    K = int(n_classes)
    m0 = np.asarray(prior_mean, dtype=np.float64)
    s0 = np.asarray(prior_sd, dtype=np.float64)
    weights, lead, basis = pattern_weights(m0[K:])
    Xc = combined_design(X, K, weights)
    mc = np.append(m0[:K], m0[K + lead])
    sc = np.append(s0[:K], s0[K + lead])
    fit = linear_gaussian_fit(Xc, y, mc, sc, noise_sd)
    verdict, evidence = evidence_record(sign_evidence(Xc, y, mc, sc, noise_sd, K, width), width)
    J = float(fit.mean[K])
    se = float(math.sqrt(fit.cov[K, K]))
    ci = (J - Z95 * se, J + Z95 * se)
    scale = scale_ci = None
    if basis == "a priori pattern":
        ref = float(m0[K + lead])
        scale = J / ref
        lo, hi = sorted((ci[0] / ref, ci[1] / ref))
        scale_ci = (lo, hi)
    labels = tuple(f.label for f in fits)
    loose = tuple(f.label for f in fits if not f.identified)
    mixed = bool(np.any(weights < 0))
    how = ("all circuits scaled together with the a priori pattern" if basis == "a priori pattern"
           else "one common current in every circuit")
    note = (f"the spectrum does not separate the currents of {_listed(loose)} (posterior sd above half the prior "
            f"sd), so the verdict rests on the one current it determines: {how}" if loose else
            f"every circuit is identified; the combined current ({how}) is given for comparison"
            + (f"; the pattern has currents of both signs, so the verdict is the sign of circuit {labels[lead]}"
               if mixed else ""))
    return CombinedCurrent(
        basis=basis, lead_circuit=labels[lead], circuits=labels, weights=tuple(float(w) for w in weights),
        verdict=verdict, current_nA_per_T=J, current_rel_benzene=J / BENZENE_CURRENT_NA_PER_T, stderr_nA_per_T=se,
        ci95_nA_per_T=ci, scale_vs_a_priori=scale, scale_ci95=scale_ci, prior_nA_per_T=float(mc[K]),
        prior_sd_nA_per_T=float(sc[K]), evidence=evidence, unidentified=loose, note=note)


def combined_subject(comb: CombinedCurrent) -> str:
    """The subject of a claim check that rests on the combined current: what it is and its value."""
    scale = ("" if comb.scale_vs_a_priori is None
             else f", {comb.scale_vs_a_priori:.2f} × the a priori pattern")
    how = ("all circuits scaled together with the a priori pattern" if comb.basis == "a priori pattern"
           else "one common current in every circuit")
    return (f"{how} (their split is not identified) gives J({comb.lead_circuit}) = {comb.current_nA_per_T:+.1f} ± "
            f"{comb.stderr_nA_per_T:.1f} nA/T ({comb.current_rel_benzene:+.2f} × benzene{scale})")


def _listed(labels: tuple[str, ...]) -> str:
    return labels[0] if len(labels) == 1 else ", ".join(labels[:-1]) + " and " + labels[-1]
