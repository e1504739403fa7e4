"""The Haigh–Mallion geometric factor (Haigh & Mallion, Prog. NMR Spectrosc. 1979, 13, 303).

G = Σ_bonds S_ij (1/r_i³ + 1/r_j³), S_ij the signed area of the triangle made by atoms i, j and the
proton's projection onto the ring plane; the small-angle form of the polygon Biot–Savart sum. Output in
ppm per nA/T, σ > 0 shielding.
"""

from __future__ import annotations

import numpy as np

from ringshift import _validation as _v
from ringshift.constants import WIRE_CUTOFF_A
from ringshift.fields._common import _MU0_4PI, _chunk, _polygons, _warn_near
from ringshift.fields.polygon import _segment_kernel

__all__ = ['haigh_mallion_shielding']



def haigh_mallion_shielding(points, vertices, normal, *, chunk_size=None):
    """Haigh–Mallion isotropic shielding of a single planar loop with unit diatropic current.

    Parameters
    ----------
    points : (n, 3) array_like, Å
    vertices : (m, 3) array_like, Å
        Ring atoms in ring order (either direction, m >= 3).
    normal : (3,) array_like
        Ring normal; the ring plane passes through the vertex centroid.
    chunk_size : int, optional
        Points per chunk.

    Returns
    -------
    sigma : (n,) float64, ppm per (nA/T)
        sigma_iso = (1/3)(mu0/4π) G for J = 1 nA/T, G = Σ_ij S_ij (1/r_i³ + 1/r_j³) in Å⁻¹
        (Haigh & Mallion, Prog. NMR Spectrosc. 1979, 13, 303), S_ij the signed area of the triangle
        (atom i, atom j, projection of the point on the ring plane), positive when i → j runs
        counter-clockwise about the normal, r_i the distance from the point to atom i.

    Notes
    -----
    Scaling, derived here: for a loop in the plane z = 0 and a point r = p + z n, the Biot–Savart
    integrand is (dl × (r − l))·n = 2 dA, dA the area swept by p→l, so exactly
    B_n = (mu0 I/4π) ∮ 2 dA/|r − l|³. Along a straight bond dA = S_ij dt (t from 0 to 1), and the
    trapezoidal rule for ∫ dt/|r − l(t)|³ gives S_ij (1/r_i³ + 1/r_j³): G is the polygon Biot–Savart
    sum with each bond integrated by the trapezoidal rule, equal to it when bonds subtend small
    angles (far points) and with error O(bond²) per bond otherwise. The current sense then gives
    sigma_iso = (1/3)(mu0/4π)·J·G with G as defined above. Distances are floored at WIRE_CUTOFF_A;
    points within WIRE_CUTOFF_A of a bond are reported by a GeometryWarning.
    """
    pts = _v.array(points, "points", (-1, 3), "points of shape (n, 3)")
    v = _v.array(vertices, "vertices", (-1, 3), "ring vertices of shape (m, 3) with m >= 3")
    n, sign = _polygons(v[None], _v.array(normal, "normal", (3,), "a vector of shape (3,)")[None], False)
    n, m = n[0], v.shape[0]
    chunk = _chunk(chunk_size, m)
    origin = v.mean(axis=0)
    V = v - origin
    P = pts - origin
    Vn = np.roll(V, -1, axis=0)
    c = np.cross(V, Vn) @ n  # 2 S_k = n·(v_i × v_j) + r·(n × (v_j − v_i)): the in-plane part of r only
    W = np.cross(n, Vn - V)
    out = np.empty(pts.shape[0])
    for lo in range(0, P.shape[0], chunk):
        r = P[lo:lo + chunk]
        twoS = c + r @ W.T
        d = np.linalg.norm(r[:, None, :] - V[None], axis=2)
        inv3 = np.maximum(d, WIRE_CUTOFF_A) ** -3
        out[lo:lo + chunk] = 0.5 * np.einsum("ij,ij->i", twoS, inv3 + np.roll(inv3, -1, axis=1))
    verts = np.concatenate([V, V[:1]])
    near = _segment_kernel(P[None], verts[None], slice(0, m), slice(1, m + 1), n[None, None], np.ones((1, m)),
                           chunk)[1]
    _warn_near(int(near.sum()), stacklevel=3)
    return sign[0] * _MU0_4PI / 3.0 * out  # sign: the sums above run along the vertex order as given
