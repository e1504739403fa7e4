"""A ring current of finite width: quadrature over copies of a thin loop.

The thin-wire double loop (Johnson & Bovey, J. Chem. Phys. 1958, 29, 1012) puts the whole current on two
lines at ±separation_A from the ring plane. The π current density really has finite width following
the p-orbital lobes, and a thin wire over-estimates the field at points 1.5–2.5 Å from it (inner
annulene H, NH of porphyrins, bridges, methyls over a ring; design notes §6). The band spreads the
current of a circuit over

* an in-plane offset t perpendicular to each edge, Gaussian with standard deviation ``width_A``
  (t > 0 outwards): every edge of the polygon is moved parallel to itself by t, i.e. every vertex moves
  along its in-plane bisector (the polygon offset below);
* a height z along the normal, two Gaussian lobes centred at ±``separation_A`` with standard
  deviation ``height_width_A`` and half the current each.

The two are independent, so the current density is a product of the two Gaussians and the field is the
weighted sum of the fields of offset copies of the exact polygon loop. Each Gaussian is integrated by
Gauss–Hermite quadrature (exact for polynomials of degree 2·nodes − 1 times the Gaussian; numpy's
``hermgauss``). A width of 0 collapses its Gaussian to one node of weight 1, so widths of 0 give back
the thin double loop exactly. Every copy is a closed loop, so Ampère's law holds for the band as a
whole: ∫ B·n dz along a line threading every copy is μ0 I, along a line outside every copy 0.

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


def _gauss(sigma: float, nodes: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes (k,) and weights (k,) (summing to 1) of a centred Gaussian of standard deviation sigma."""
    if sigma == 0.0:
        return np.zeros(1), np.ones(1)
    x, w = np.polynomial.hermite.hermgauss(nodes)
    return np.sqrt(2.0) * sigma * x, w / np.sqrt(np.pi)


def band_quadrature(separation_A: float, width_A: float, height_width_A: float,
                    nodes: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Quadrature of the band: in-plane offsets and heights with their current fractions.

    Parameters
    ----------
    separation_A : float, Å
        Lobe centres at ±separation_A along the normal (0: one lobe in the plane).
    width_A, height_width_A : float, Å
        Standard deviations of the in-plane offset and of the height about each lobe centre.
    nodes : int
        Gauss–Hermite nodes per non-zero width.

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
    t, wt = _gauss(width_A, nodes)
    z, wz = _gauss(height_width_A, nodes)
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
