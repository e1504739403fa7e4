"""A ring current of finite width: quadrature over copies of a thin loop.

The thin-wire double loop (Johnson & Bovey, J. Chem. Phys. 1958, 29, 1012) puts the whole current on two
lines at ±separation_A from the ring plane. The π current density really has finite width following
the p-orbital lobes, and a thin wire over-estimates the field at points 1.5–2.5 Å from it (inner
annulene H, NH of porphyrins, bridges, methyls over a ring; design notes §6). The band spreads the
current of a circuit over

* an in-plane offset t perpendicular to each edge (t > 0 outwards), with standard deviation
  ``width_A``: every edge of the polygon is moved parallel to itself by t, i.e. every vertex moves
  along its in-plane bisector (the polygon offset below);
* a height z along the normal: two lobes centred at ±``separation_A``, half the current each, each with
  standard deviation ``height_width_A`` about its centre.

The two are independent, so the current density is a product of the two profiles and the field is the
weighted sum of the fields of offset copies of the exact polygon loop. Each profile is the parabola
p(x) ∝ 1 − (x/h)² on |x| ≤ h = √5·σ (standard deviation σ), integrated by Gauss–Jacobi quadrature with
α = β = 1 (exact for p times a polynomial of degree 2·nodes − 1; ``scipy.special.roots_jacobi``). A
bounded profile is chosen over a Gaussian on purpose: Gauss–Hermite nodes of a Gaussian reach 2–5 σ, where
inward copies of a small ring turn inside out and outer copies pass next to the ring's own protons, so the
quadrature converges erratically there (measured in benchmarks/calibrate_near_wire.py); for points outside
a bounded band the integrand is analytic and Gauss–Jacobi converges geometrically. A width of 0 collapses
its profile to one node of weight 1, so widths of 0 give back the thin double loop exactly. Every copy is a
closed loop, so Ampère's law holds for the band as a whole: ∫ B·n dz along a line threading every copy is
μ0 I, along a line outside every copy 0. The in-plane half-width √5·width_A must stay below the
polygon's inradius (for a perimeter, half its narrowest waist), or the innermost copies turn inside out;
:func:`band_quadrature` returns the offsets so callers can check.

The offset polygon: with o_i the outward unit in-plane normal of edge i (from vertex i to i + 1), the
vertex between edges i − 1 and i moves by t·(o_(i−1) + o_i)/(1 + o_(i−1)·o_i), which shifts both edges by
exactly t (elementary geometry, common practice, no source). The denominator is floored at
:data:`MIN_BISECTOR_DENOMINATOR` so that a hairpin turn (o_(i−1) ≈ −o_i) cannot send a vertex to
infinity; ring polygons (interior angles 60°–300°) never reach the floor.
"""

from __future__ import annotations

import numpy as np

from ringshift.fields._common import _cross

__all__ = ["band_quadrature", "offset_directions"]

#: Floor of 1 + o_(i−1)·o_i in the vertex offset: reached only for turns sharper than about 150°
#: (interior angles below 30° or above 330°), which no ring polygon has.
MIN_BISECTOR_DENOMINATOR = 0.134


#: Half-width of the parabolic profile 1 − (x/h)² in units of its standard deviation: Var = h²/5.
HALF_WIDTH_PER_SIGMA = float(np.sqrt(5.0))


def _profile(sigma: float, nodes: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes (k,) and weights (k,) (summing to 1) of the parabolic profile of standard deviation sigma."""
    if sigma == 0.0:
        return np.zeros(1), np.ones(1)
    from scipy.special import roots_jacobi  # only for a finite width; SciPy's special loads slowly

    x, w = roots_jacobi(nodes, 1.0, 1.0)   # ∫_{-1}^{1} (1 − x²) f(x) dx ≈ Σ w f(x)
    return HALF_WIDTH_PER_SIGMA * sigma * x, w / w.sum()


def band_quadrature(separation_A: float, width_A: float, height_width_A: float,
                    nodes: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Quadrature of the band: in-plane offsets and heights with their current fractions.

    Parameters
    ----------
    separation_A : float, Å
        Lobe centres at ±separation_A along the normal (0: one lobe in the plane).
    width_A, height_width_A : float, Å
        Standard deviations of the in-plane offset and of the height about each lobe centre (parabolic
        profiles of half-width √5·σ).
    nodes : int
        Gauss–Jacobi nodes per non-zero width.

    Returns
    -------
    offsets_A : (k_t,) float64, Å
        In-plane offsets (outwards positive); ``[0.]`` when width_A is 0.
    offset_weights : (k_t,) float64
        Fractions of the current, summing to 1.
    heights_A : (k_z,) float64, Å
        Heights along the normal; ``[0.]`` for a thin single loop, ``[+h, −h]`` for the thin double loop.
    height_weights : (k_z,) float64
        Fractions of the current, summing to 1 (½ per lobe for two lobes).
    """
    t, wt = _profile(width_A, nodes)
    z, wz = _profile(height_width_A, nodes)
    if separation_A > 0.0:
        z, wz = np.r_[separation_A + z, -separation_A + z], np.r_[0.5 * wz, 0.5 * wz]
    return t, wt, z, wz


def offset_directions(vertices: np.ndarray, normals: np.ndarray, sign: np.ndarray) -> np.ndarray:
    """Per-vertex displacement (F, m, 3) that moves every edge of each ring outwards by 1 Å in its plane.

    Parameters
    ----------
    vertices : (F, m, 3) float64, Å
        Ring atoms in ring order, one ring per frame.
    normals : (F, 3) float64
        Unit ring normals.
    sign : (F,) float64
        +1 where the vertices run counter-clockwise about the normal, −1 otherwise (from
        :func:`ringshift.fields._common._polygons`).

    Returns
    -------
    d : (F, m, 3) float64
        Vertex i of an offset polygon at distance t is ``vertices[:, i] + t * d[:, i]``.
    """
    e = np.roll(vertices, -1, axis=1) - vertices                      # edge i: vertex i → i + 1
    o = _cross(e, normals[:, None, :]) * sign[:, None, None]          # outward for either orientation
    o /= np.linalg.norm(o, axis=2, keepdims=True)
    o_prev = np.roll(o, 1, axis=1)                                    # edge i − 1 ends at vertex i
    den = np.maximum(1.0 + np.einsum("fij,fij->fi", o_prev, o), MIN_BISECTOR_DENOMINATOR)
    return (o_prev + o) / den[..., None]
