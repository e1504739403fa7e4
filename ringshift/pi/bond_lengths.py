"""The bond-order/bond-length lines of the self-consistent β models and their calibration.

``"scf"`` and ``"scf-coulson"`` make C–C lengths self-consistent with the π bond orders through r = R0 − S p
(:func:`ringshift.pi.scf_lengths.scf_fixed_points`). ``"scf-coulson"``: R0 = 1.520, S = 0.186 Å, a linearisation of
Coulson (Proc. R. Soc. A 1939, 169, 413, from memory) through ethylene and benzene. ``"scf"``: the line
passes through benzene (1.397 Å at p = 2/3) and S is chosen so that the self-consistent infinite all-trans
polyene (:func:`polyene_chain_lengths`, analytic band integrals) has the bond-length alternation of
trans-polyacetylene, 0.08 Å (Yannoni & Clarke, Phys. Rev. Lett. 1983, 51, 1191, from memory); no NMR datum
enters. :data:`SCF_RELATIONS` maps the model name to (R0, S, source).
"""

from __future__ import annotations

import functools

import numpy as np

from ringshift.pi.parameters import (
    BETA_DECAY_A,
    BETA_REF_LENGTH_A,
    COULSON_R0_A,
    COULSON_SLOPE_A,
)

__all__ = ["polyene_chain_lengths", "calibrate_chain_slope", "SCF_R0_A", "SCF_SLOPE_A", "SCF_RELATIONS"]



@functools.cache
def _gauss_legendre_0_pi() -> tuple[np.ndarray, np.ndarray]:
    """400 Gauss–Legendre nodes and weights on [0, π], computed on first use (not at import)."""
    x, w = np.polynomial.legendre.leggauss(400)
    return 0.5 * np.pi * (x + 1.0), 0.5 * np.pi * w


def polyene_chain_lengths(r0_A: float, slope_A: float, *, decay_A: float = BETA_DECAY_A, tol_A: float = 1e-12,
                          max_iter: int = 5000) -> tuple[float, float, float, float]:
    """Self-consistent bond lengths of the infinite all-trans polyene for r = R0 − S p and β(r).

    Two sites per cell, resonance integrals t1 = f(r1), t2 = f(r2) (f = β/β0 of
    :func:`beta_distance_factor`, decay ``decay_A``), lower band filled. Coulson bond orders from the
    band integrals (Gauss–Legendre, 400 nodes): p1 = (1/π) ∫_0^π (t1 + t2 cos k)/ε(k) dk and p2 likewise
    with t1 ↔ t2, ε = (t1² + t2² + 2 t1 t2 cos k)^½ (p1 = p2 = 2/π for t1 = t2, textbook). The
    equal-bond solution is unstable for any coupling (Peierls), so the damped iteration starts from an
    alternated seed and reaches the dimerised one.

    Returns (r_short, r_long, p_short, p_long): Å, Å, bond orders. Raises RuntimeError without
    convergence.
    """
    def f(r):
        return np.exp(-(r - BETA_REF_LENGTH_A) / decay_A)

    gl_k, gl_w = _gauss_legendre_0_pi()
    cosk = np.cos(gl_k)
    r1, r2 = r0_A - slope_A * 0.8, r0_A - slope_A * 0.45
    for _ in range(max_iter):
        t1, t2 = f(r1), f(r2)
        eps = np.sqrt(t1 * t1 + t2 * t2 + 2.0 * t1 * t2 * cosk)
        p1 = float(gl_w @ ((t1 + t2 * cosk) / eps)) / np.pi
        p2 = float(gl_w @ ((t2 + t1 * cosk) / eps)) / np.pi
        n1, n2 = r0_A - slope_A * p1, r0_A - slope_A * p2
        if abs(n1 - r1) + abs(n2 - r2) < tol_A:
            return float(n1), float(n2), p1, p2
        r1, r2 = 0.5 * (r1 + n1), 0.5 * (r2 + n2)
    raise RuntimeError("polyene_chain_lengths: no self-consistent solution")


def calibrate_chain_slope(bla_A: float, *, r_ref_A: float = BETA_REF_LENGTH_A, p_ref: float = 2.0 / 3.0,
                          decay_A: float = BETA_DECAY_A) -> tuple[float, float]:
    """Slope S and intercept R0 of r = R0 − S p that pass through (p_ref, r_ref_A) (benzene: 2/3,
    1.397 Å) and give the infinite all-trans polyene the bond-length alternation ``bla_A`` (Å).

    Solved with Brent's method on S in [0.05, 0.6] Å. Returns (S, R0) in Å.
    """
    from scipy.optimize import brentq

    def excess(s):
        r1, r2 = polyene_chain_lengths(r_ref_A + s * p_ref, s, decay_A=decay_A)[:2]
        return (r2 - r1) - bla_A

    s = brentq(excess, 0.05, 0.6, xtol=1e-12)
    return float(s), float(r_ref_A + s * p_ref)

#: The calibrated ``"scf"`` relation r = SCF_R0_A − SCF_SLOPE_A p (module notes): the values of
#: ``calibrate_chain_slope(POLYACETYLENE_BLA_A)`` for its two inputs (benzene 1.397 Å, polyacetylene BLA
#: 0.08 Å), written out so that importing the module does no numerical work; a test recomputes them.
SCF_SLOPE_A: float = 0.19879698818080416
SCF_R0_A: float = 1.5295313254538694

#: beta_model name -> (R0, S, source) of the self-consistent bond-length models.
SCF_RELATIONS: dict[str, tuple[float, float, str]] = {
    "scf": (SCF_R0_A, SCF_SLOPE_A, "through benzene 1.397 A; infinite-polyene BLA 0.08 A of trans-polyacetylene "
            "(Yannoni & Clarke, Phys. Rev. Lett. 1983, 51, 1191, from memory)"),
    "scf-coulson": (COULSON_R0_A, COULSON_SLOPE_A, "Coulson 1939, linearised through ethylene and benzene "
                    "(from memory)"),
}
