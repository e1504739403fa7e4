"""Ring-current shielding kernels: pure numpy, arrays in, arrays out.

Every ``*_shielding`` kernel returns the isotropic shielding produced by a loop (or network) carrying a
unit current susceptibility, in **ppm per (nA/T)**; multiply by the current susceptibility J (nA/T) to
get sigma_iso in ppm.

Conventions
-----------
* Geometry in Å, float64. A loop is given by ordered vertices ``(m, 3)`` (a closed polygon: the last
  vertex joins the first) and a normal ``n`` ``(3,)`` (normalised here; its length is irrelevant).
* A diatropic current (J > 0) is the circulation whose own field at the loop centre points along −n
  when the external field points along +n, i.e. clockwise seen from the tip of n. The order in which
  the vertices are given does not matter: the circulation sense is fixed by n alone (the polygon is
  re-oriented from the sign of its vector area projected on n).
* Only the field component along n induces the planar ring current, so for fast isotropic tumbling
  sigma_iso = (1/3)·sigma_nn = −(1/3)·J·(b·n), b the induced field per unit current susceptibility.
  With mu0 × (1 nA/T) = 12.566 ppm·Å (:data:`ringshift.constants.MU0_PPM_A_PER_NA_T`), a geometric
  factor g in Å⁻¹ (field = mu0·I/(4π)·g) becomes ppm per nA/T as (mu0/4π)·g.
* sigma > 0 is shielding (upfield): positive above and inside a diatropic loop, negative in its plane
  outside it.

Near-wire regularisation
------------------------
The thin-wire field diverges on the wire. A point whose distance q to a straight wire segment is below
:data:`ringshift.constants.WIRE_CUTOFF_A` (r_c) gets that segment's contribution multiplied by
(q/r_c)². Beside a long straight wire this turns 2/q into 2q/r_c², the field inside a uniformly
conducting cylinder of radius r_c (Ampère's law); it is continuous at q = r_c, zero on the wire and
finite at vertices. Such points are counted and reported once per call with a
:class:`ringshift.errors.GeometryWarning`; results are never NaN or inf.

Sources: Biot–Savart field of a straight segment (any electromagnetism textbook); double loop at
±0.64 Å with half the current each (Johnson & Bovey, J. Chem. Phys. 1958, 29, 1012); point dipole
(Pople, J. Chem. Phys. 1956, 24, 1111); geometric factor of Haigh & Mallion (Prog. NMR Spectrosc.
1979, 13, 303).
"""

from __future__ import annotations

import numpy as np

from ringshift import _validation as _v
from ringshift.constants import BAND_NODES, JB_SEPARATION_A, WIRE_CUTOFF_A
from ringshift.errors import InputError
from ringshift.fields._common import _MU0_4PI, _chunk, _cross, _polygons, _warn_near
from ringshift.fields.band import band_quadrature, offset_directions

__all__ = ['segment_field', 'polygon_shielding']


# ----------------------------------------------------------------------------------------------------
# Core kernel: sum over straight segments of  w_k,d · (u_d · g_k(r))
# ----------------------------------------------------------------------------------------------------
def _segment_kernel(points, verts, ia, ib, dirs, weights, chunk_size):
    """Direction components of the summed Biot–Savart geometric factor of straight segments, per frame.

    Parameters
    ----------
    points : (F, n, 3) float64, Å
        Field points of each frame (F = 1 for a single structure).
    verts : (F, nv, 3) float64, Å
        Segment end points; in frame f segment k runs verts[f, ia[k]] → verts[f, ib[k]]. ``ia``/``ib``
        are slices (views, no copy) or integer index arrays.
    dirs : (F, nd, 3) float64
        Unit directions u_d onto which the field is projected, per frame.
    weights : (nd, k) float64
        Current of segment k for output column d (units carried through).
    chunk_size : int
        Frame×point pairs per chunk (a frame with more points is split).

    Returns
    -------
    out : (F, nd, n) float64
        sum_k weights[d, k] · u_d · g_k(r), with B = mu0·I/(4π)·g, g in Å⁻¹.
    near : (F, n) bool
        Point lies within WIRE_CUTOFF_A of at least one segment (regularised).

    Notes
    -----
    With a = P_a − r, b = P_b − r, s = |a| + |b| and L = |P_b − P_a|, the segment field
    g = (a × b)(|a| + |b|) / (|a||b|(|a||b| + a·b)) (textbook Biot–Savart for a finite straight wire)
    is evaluated as g·u = 2 T s / (|a||b| (s² − L²)) with |a||b| + a·b = (s² − L²)/2 and
    T = u·(a × b) = u·(P_a × P_b) + r·(u × (P_b − P_a)), which is linear in r. The sum over k is then
    one small matrix product per frame, so only |r − P| has to be formed per point×vertex pair.
    """
    rc = WIRE_CUTOFF_A
    nf, n, nd, k = points.shape[0], points.shape[1], dirs.shape[1], weights.shape[1]
    out = np.empty((nf, nd, n))
    near = np.zeros((nf, n), dtype=bool)
    fb, pb_ = max(1, chunk_size // max(n, 1)), max(1, min(n, chunk_size))  # frames, points per block
    X = np.empty((min(fb, nf), 5, pb_))  # [r, |r|², 1] of one block
    X[:, 4] = 1.0
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for f0 in range(0, nf, fb):  # per-frame set-up, block by block so memory stays O(chunk)
            fs = slice(f0, f0 + fb)
            origin = np.einsum("fij->fj", verts[fs])[:, None] / verts.shape[1]
            V = verts[fs] - origin
            pa, pb = V[:, ia], V[:, ib]
            e = pb - pa
            L2 = np.einsum("fkj,fkj->fk", e, e)
            L = np.sqrt(L2)
            L2c, screen_c = L2[..., None], (L + 2.0 * rc)[..., None]  # |a| + |b| < L + 2 r_c: q < r_c inside
            C = np.empty((V.shape[0], 4 * nd, k))  # C[f, 4d:4d+4, k] = w_dk · [u_d·(P_a × P_b), u_d × e_k]
            cab = _cross(pa, pb)
            for d in range(nd):
                C[:, 4 * d] = weights[d] * np.einsum("fkj,fj->fk", cab, dirs[fs, d])
                C[:, 4 * d + 1:4 * d + 4] = _cross(dirs[fs, d, None], e * weights[d][:, None]).transpose(0, 2, 1)
            # |r − v|² = [−2v, 1, |v|²]·[r, |r|², 1]; layout (frame, vertex, point): elementwise passes run
            # over point rows, and the ends of a closed polygon's segments are row slices of D (no copies).
            Yt = np.concatenate([-2.0 * V, np.ones(V.shape[:2] + (1,)), np.einsum("fij,fij->fi", V, V)[..., None]],
                                axis=2)
            for lo in range(0, n, pb_):
                ps = slice(lo, lo + pb_)
                x = X[:V.shape[0], :, :min(pb_, n - lo)]
                np.subtract(points[fs, ps].transpose(0, 2, 1), origin.transpose(0, 2, 1), out=x[:, :3])
                r = x[:, :3].transpose(0, 2, 1)  # (frames, points, 3) view, relative to the ring
                np.einsum("fij,fij->fj", x[:, :3], x[:, :3], out=x[:, 3])
                D = np.matmul(Yt, x)
                np.maximum(D, 0.0, out=D)
                np.sqrt(D, out=D)
                Da, Db = D[:, ia], D[:, ib]
                s = Da + Db
                cand = s < screen_c
                F = np.multiply(Da, Db)
                t = np.multiply(s, s)
                t -= L2c
                F *= t
                np.divide(s, F, out=F)  # F = s / (|a||b|(s² − L²)); g·u = 2·T·F
                if cand.any():
                    fk, row = np.nonzero(cand.reshape(-1, cand.shape[2]))  # 2-D: faster than 3-D
                    f, seg = np.divmod(fk, k)
                    F_reg, hit = _regularised_factor(r[f, row], pa[f, seg], pb[f, seg], L[f, seg], rc)
                    F[f[hit], seg[hit], row[hit]] = F_reg[hit]
                    near[fs, ps][f[hit], row[hit]] = True
                H = np.matmul(C, F)
                for d in range(nd):
                    out[fs, d, ps] = H[:, 4 * d] + np.einsum("fjp,fjp->fp", H[:, 4 * d + 1:4 * d + 4], x[:, :3])
    out *= 2.0
    return out, near


def _regularised_factor(r, pa, pb, L, rc):
    """Factor F' replacing s/(|a||b|(s² − L²)) for point–segment pairs closer than r_c.

    The exact factor is bracket/(2 L d²), with d the distance to the segment's line, u the
    coordinate of the foot along it and bracket = u/|r − P_a| + (L − u)/|r − P_b|. It is multiplied by
    (q/r_c)², q the distance to the finite segment. Between the ends (q = d) this gives
    bracket/(2 L r_c²); beyond an end the algebraically equivalent
    q² (2u − L) / (2 r_c² |a||b| (u|b| + (u − L)|a|)) has no cancellation. Returns (F', q < r_c).
    """
    t = (pb - pa) / L[:, None]
    w = r - pa
    u = np.einsum("ij,ij->i", w, t)
    dvec = w - u[:, None] * t
    d = np.sqrt(np.einsum("ij,ij->i", dvec, dvec))
    Da = np.sqrt(np.einsum("ij,ij->i", w, w))
    wb = r - pb
    Db = np.sqrt(np.einsum("ij,ij->i", wb, wb))
    mid = (u >= 0.0) & (u <= L)
    q = np.where(mid, d, np.where(u < 0.0, Da, Db))
    hit = q < rc
    ca = np.divide(u, Da, out=np.zeros_like(u), where=Da > 0)
    cb = np.divide(L - u, Db, out=np.zeros_like(u), where=Db > 0)
    F_mid = (ca + cb) / (2.0 * L * rc * rc)
    den = 2.0 * rc * rc * Da * Db * (u * Db + (u - L) * Da)
    F_cap = np.divide(q * q * (2.0 * u - L), den, out=np.zeros_like(u), where=~mid & (den != 0))
    return np.where(mid, F_mid, F_cap), hit

# ----------------------------------------------------------------------------------------------------
# Public kernels
# ----------------------------------------------------------------------------------------------------
def segment_field(points, starts, ends, *, currents=None, chunk_size=None) -> np.ndarray:
    """Biot–Savart field of straight current segments, in units of mu0·I/(4π).

    Parameters
    ----------
    points : (n, 3) array_like, Å
        Field points.
    starts, ends : (m, 3) array_like, Å
        Segment k carries its current from ``starts[k]`` to ``ends[k]``.
    currents : (m,) array_like, optional
        Current of each segment in any unit I0 (default 1 for every segment).
    chunk_size : int, optional
        Points per chunk (default: about 65 000 point×vertex pairs per chunk).

    Returns
    -------
    g : (n, 3) float64, Å⁻¹
        Geometric factor of the summed field: B = (mu0·I0/4π)·g. For currents in nA/T,
        (mu0/4π)·g = 1e-6·(induced field / external field) in ppm, i.e. multiply by
        ``MU0_PPM_A_PER_NA_T / (4π)``.

    Notes
    -----
    Per segment, with a = start − r, b = end − r:
    g = (a × b)(|a| + |b|) / (|a||b| (|a||b| + a·b)) (textbook Biot–Savart for a straight wire).
    Points within WIRE_CUTOFF_A of a segment are regularised (module notes) and reported with a
    GeometryWarning.
    """
    pts = _v.array(points, "points", (-1, 3), "points of shape (n, 3)")
    a = _v.array(starts, "starts", (-1, 3), "segment starts of shape (m, 3)")
    b = _v.array(ends, "ends", (a.shape[0], 3), f"segment ends of shape ({a.shape[0]}, 3) like starts")
    m = a.shape[0]
    w = np.ones(m) if currents is None else _v.array(currents, "currents", (m,), f"currents of shape ({m},)")
    if m == 0 or pts.shape[0] == 0:
        return np.zeros((pts.shape[0], 3))
    _v.nonzero_segments(a, b, "starts/ends")
    verts = np.concatenate([a, b])
    out, near = _segment_kernel(pts[None], verts[None], np.arange(m), np.arange(m, 2 * m), np.eye(3)[None],
                                np.tile(w, (3, 1)), _chunk(chunk_size, 2 * m))
    _warn_near(int(near.sum()))
    return np.ascontiguousarray(out[0].T)


def polygon_shielding(points, vertices, normal, *, separation_A=JB_SEPARATION_A, width_A=0.0,
                      height_width_A=0.0, band_nodes=BAND_NODES, chunk_size=None):
    """Isotropic shielding of a polygonal double loop (thin or a band of finite width), unit diatropic current.

    Parameters
    ----------
    points : (n, 3) or (n_conf, n, 3) array_like, Å
        Proton positions (a conformer stack gives a stack of results).
    vertices : (m, 3) or (n_conf, m, 3) array_like, Å
        Ring atoms in ring order (either direction; closed automatically, m >= 3).
    normal : (3,) or (n_conf, 3) array_like
        Ring normal; fixes the diatropic circulation (module notes).
    separation_A : float, keyword-only
        Each loop is the polygon shifted by ±separation_A along the normal with half the current
        (Johnson & Bovey, J. Chem. Phys. 1958, 29, 1012; default 0.64 Å). 0 gives a single loop.
    width_A : float, keyword-only, Å
        Standard deviation of the spread of the current perpendicular to each edge in the ring plane
        (a parabolic profile of half-width √5·width_A; :mod:`ringshift.fields.band`). Default 0: the thin
        wire. The half-width must stay below the polygon's inradius.
    height_width_A : float, keyword-only, Å
        Standard deviation of each lobe's (parabolic) spread along the normal about ±separation_A.
        Default 0: thin lobes. With both widths 0 the result is the thin double loop, bit for bit.
    band_nodes : int, keyword-only
        Gauss–Jacobi nodes per non-zero width (default :data:`ringshift.constants.BAND_NODES`); the cost
        is about (nodes if width_A else 1) × (nodes if height_width_A else 1) thin double loops.
    chunk_size : int, optional
        Points (for a stack: frame×point pairs) per chunk; memory use is O(chunk_size × m),
        independent of n and n_conf.

    Returns
    -------
    sigma : (n,) or (n_conf, n) float64, ppm per (nA/T)
        sigma_iso = (1/3) sigma_nn for J = 1 nA/T; multiply by J.

    Notes
    -----
    Exact Biot–Savart sum over the straight segments (formula in :func:`segment_field`); the two loops
    are evaluated as one loop in the ring plane seen from the points moved by ∓separation_A (the band:
    offset copies of the polygon, seen from points moved by minus each quadrature height). A stack is
    evaluated frame-batched in blocks of about chunk_size frame×point pairs; it equals separate calls
    per conformer to rounding (tested). Points within WIRE_CUTOFF_A of a wire are regularised and
    reported by one GeometryWarning per call, counting points over all conformers.
    """
    h = _v.real(separation_A, "separation_A", nonneg=True)
    wt = _v.real(width_A, "width_A", nonneg=True)
    wz = _v.real(height_width_A, "height_width_A", nonneg=True)
    if isinstance(band_nodes, bool) or not isinstance(band_nodes, (int, np.integer)) or not 1 <= band_nodes <= 20:
        raise InputError(f"band_nodes: expected an integer number of quadrature nodes from 1 to 20, got "
                         f"{band_nodes!r}", "band_nodes")
    stacked = np.ndim(points) == 3
    if stacked:
        P = _v.array(points, "points", (-1, -1, 3), "points of shape (n_conf, n, 3)")
        nc = P.shape[0]
        V = _v.array(vertices, "vertices", (nc, -1, 3), f"vertices of shape ({nc}, m, 3) for {nc} conformers")
        N = _v.array(normal, "normal", (nc, 3), f"normals of shape ({nc}, 3) for {nc} conformers")
    else:
        P = _v.array(points, "points", (-1, 3), "points of shape (n, 3) or (n_conf, n, 3)")[None]
        V = _v.array(vertices, "vertices", (-1, 3), "ring vertices of shape (m, 3) with m >= 3")[None]
        N = _v.array(normal, "normal", (3,), "a vector of shape (3,)")[None]
    N, sign = _polygons(V, N, stacked)
    k, m = P.shape[1], V.shape[1]
    offsets, w_off, heights, w_h = band_quadrature(h, wt, wz, int(band_nodes))
    nz = heights.size
    if nz > 1:  # points moved by −z along n see one loop in the ring plane; filled in place
        P = np.concatenate([P] * nz, axis=1)
        for j, z in enumerate(heights):
            P[:, j * k:(j + 1) * k] -= z * N[:, None]
    # one closed polygon per in-plane offset, evaluated as extra frames (offset-major: frame o·F + f)
    nt, nf = offsets.size, V.shape[0]
    loops = np.concatenate([V, V[:, :1]], axis=1)
    if nt > 1:
        d = offset_directions(V, N, sign)
        loops = np.concatenate([loops + t * np.concatenate([d, d[:, :1]], axis=1) for t in offsets])
        P = np.concatenate([P] * nt)
    g, near = _segment_kernel(P, loops, slice(0, m), slice(1, m + 1), np.tile(N, (nt, 1))[:, None], np.ones((1, m)),
                              _chunk(chunk_size, m + 1))
    if nt > 1:
        g = np.einsum("o,ofdp->fdp", w_off, g.reshape(nt, nf, *g.shape[1:]))
        near = near.reshape(nt, nf, -1).any(axis=0)
    if nz > 1:
        g = np.einsum("j,fdjp->fdp", w_h, g.reshape(g.shape[0], g.shape[1], nz, k))
        near = near.reshape(near.shape[0], nz, k).any(axis=1)
    _warn_near(int(near.sum()))
    sigma = (_MU0_4PI / 3.0) * sign[:, None] * g[:, 0]
    return sigma if stacked else sigma[0]
