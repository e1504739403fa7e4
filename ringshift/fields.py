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

import warnings

import numpy as np
from scipy.special import binom, ellipe, ellipk, eval_legendre

from ringshift.constants import FAR_FIELD_RADII, JB_SEPARATION_A, MU0_PPM_A_PER_NA_T, WIRE_CUTOFF_A
from ringshift.errors import GeometryWarning, InputError

__all__ = [
    "segment_field",
    "polygon_shielding",
    "johnson_bovey_shielding",
    "point_dipole_shielding",
    "haigh_mallion_shielding",
    "network_shielding",
]

#: (mu0/4π) × (1 nA/T) in ppm·Å: turns a geometric factor in Å⁻¹ into ppm per nA/T.
_MU0_4PI = MU0_PPM_A_PER_NA_T / (4.0 * np.pi)

#: Point×vertex pairs handled per chunk: ~0.5 MB per temporary, so a chunk stays in cache and the
#: memory in use does not grow with the number of points (measured in benchmarks/bench_fields.py).
_PAIRS_PER_CHUNK = 1 << 16

#: Terms of the far-field multipole series of a circular loop; beyond FAR_FIELD_RADII radii each term
#: is smaller than the previous by about (a/R)² ≤ 0.01, so 12 terms are exact to rounding.
_N_MULTIPOLE = 12


# ----------------------------------------------------------------------------------------------------
# Validation gate
# ----------------------------------------------------------------------------------------------------
def _array(x, name: str, shape: tuple, what: str) -> np.ndarray:
    """Float64 C-contiguous array of a fixed shape pattern (``-1`` = any length), finite values."""
    try:
        arr = np.ascontiguousarray(x, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected {what} of numbers, got {type(x).__name__}") from None
    if arr.ndim != len(shape) or any(s != -1 and s != t for s, t in zip(shape, arr.shape)):
        raise InputError(f"{name}: expected {what}, got an array of shape {arr.shape}")
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}: contains NaN or inf; expected finite coordinates/values")
    return arr


def _unit(x, name: str) -> np.ndarray:
    v = _array(x, name, (3,), "a vector of shape (3,)")
    norm = float(np.linalg.norm(v))
    if norm < 1e-12:
        raise InputError(f"{name}: the normal/direction has zero length; expected a non-zero (3,) vector")
    return v / norm


def _nonneg(x, name: str, strict: bool = False) -> float:
    try:
        val = float(x)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected a number, got {x!r}") from None
    if not np.isfinite(val) or val < 0 or (strict and val == 0):
        raise InputError(f"{name}: expected a finite number {'>' if strict else '>='} 0, got {x!r}")
    return val


def _chunk(chunk_size, n_vertices: int) -> int:
    if chunk_size is None:
        return max(16, _PAIRS_PER_CHUNK // max(n_vertices, 1))
    if isinstance(chunk_size, bool) or not isinstance(chunk_size, (int, np.integer)) or chunk_size < 1:
        raise InputError(f"chunk_size: expected a positive integer number of points, got {chunk_size!r}")
    return int(chunk_size)


def _cross(a, b):
    """a × b over the last axis (length 3), broadcast; cheaper than np.cross on small stacks."""
    return a[..., [1, 2, 0]] * b[..., [2, 0, 1]] - a[..., [2, 0, 1]] * b[..., [1, 2, 0]]


def _polygons(v: np.ndarray, n: np.ndarray, stacked: bool) -> tuple[np.ndarray, np.ndarray]:
    """Unit normals (F, 3) of rings v (F, m, 3) with normals n (F, 3), and the sign (F,) of each ring's
    vector area on its normal (+1: vertices counter-clockwise about n). Errors name the first bad ring."""
    if v.shape[1] < 3:
        raise InputError(f"vertices: expected at least 3 ring vertices, got {v.shape[1]}")
    norm = np.linalg.norm(n, axis=1)
    edges = np.roll(v, -1, axis=1) - v
    c = v - np.einsum("fij->fj", v)[:, None] / v.shape[1]  # einsum: numpy's axis-1 reductions are slow
    area_vec = 0.5 * np.einsum("fij->fj", _cross(c, edges))  # Σ c_i × c_(i+1) = Σ c_i × e_i
    a_n = np.einsum("fj,fj->f", area_vec, n) / np.maximum(norm, 1e-300)
    for what, bad, msg in (
            ("normal", norm < 1e-12, "the normal/direction has zero length; expected a non-zero (3,) vector"),
            ("vertices", np.min(np.einsum("fij,fij->fi", edges, edges), axis=1) < 1e-12, "two consecutive "
             "vertices coincide; expected distinct ring atoms in ring order (do not repeat the first vertex: "
             "the polygon is closed automatically)"),
            ("vertices", (np.abs(a_n) <= 1e-8 * np.maximum(np.linalg.norm(area_vec, axis=1), 1e-300))
             | (np.abs(a_n) < 1e-12), "the polygon has no area projected on the normal; expected a ring "
             "roughly perpendicular to `normal`")):
        if np.any(bad):
            raise InputError(f"{what}{f'[{int(np.argmax(bad))}]' if stacked else ''}: {msg}")
    return n / norm[:, None], np.where(a_n > 0, 1.0, -1.0)


def _warn_near(count: int, stacklevel: int = 3, what: str = "a current wire",
               how: str = f"regularised (wire treated as a {WIRE_CUTOFF_A} Å-radius conductor)") -> None:
    if count:
        warnings.warn(GeometryWarning(f"{count} point(s) lie within {WIRE_CUTOFF_A} Å of {what}; their "
                                      f"shielding was {how} and is unreliable"), stacklevel=stacklevel)


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
    pts = _array(points, "points", (-1, 3), "points of shape (n, 3)")
    a = _array(starts, "starts", (-1, 3), "segment starts of shape (m, 3)")
    b = _array(ends, "ends", (a.shape[0], 3), f"segment ends of shape ({a.shape[0]}, 3) like starts")
    m = a.shape[0]
    w = np.ones(m) if currents is None else _array(currents, "currents", (m,), f"currents of shape ({m},)")
    if m == 0 or pts.shape[0] == 0:
        return np.zeros((pts.shape[0], 3))
    _check_lengths(a, b, "starts/ends")
    verts = np.concatenate([a, b])
    out, near = _segment_kernel(pts[None], verts[None], np.arange(m), np.arange(m, 2 * m), np.eye(3)[None],
                                np.tile(w, (3, 1)), _chunk(chunk_size, 2 * m))
    _warn_near(int(near.sum()))
    return np.ascontiguousarray(out[0].T)


def _check_lengths(a, b, name):
    if np.any(np.einsum("ij,ij->i", b - a, b - a) < 1e-12):
        raise InputError(f"{name}: a segment has zero length; expected distinct start and end points")


def polygon_shielding(points, vertices, normal, *, separation_A=JB_SEPARATION_A, chunk_size=None):
    """Isotropic shielding of a polygonal double loop carrying a unit diatropic current.

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
    are evaluated as one loop in the ring plane seen from the points moved by ∓separation_A. A stack is
    evaluated frame-batched in blocks of about chunk_size frame×point pairs; it equals separate calls
    per conformer to rounding (tested). Points within WIRE_CUTOFF_A of a wire are regularised and
    reported by one GeometryWarning per call, counting points over all conformers.
    """
    h = _nonneg(separation_A, "separation_A")
    stacked = np.ndim(points) == 3
    if stacked:
        P = _array(points, "points", (-1, -1, 3), "points of shape (n_conf, n, 3)")
        nc = P.shape[0]
        V = _array(vertices, "vertices", (nc, -1, 3), f"vertices of shape ({nc}, m, 3) for {nc} conformers")
        N = _array(normal, "normal", (nc, 3), f"normals of shape ({nc}, 3) for {nc} conformers")
    else:
        P = _array(points, "points", (-1, 3), "points of shape (n, 3) or (n_conf, n, 3)")[None]
        V = _array(vertices, "vertices", (-1, 3), "ring vertices of shape (m, 3) with m >= 3")[None]
        N = _array(normal, "normal", (3,), "a vector of shape (3,)")[None]
    N, sign = _polygons(V, N, stacked)
    chunk, k, m = _chunk(chunk_size, V.shape[1] + 1), P.shape[1], V.shape[1]
    if h > 0.0:  # points moved by ∓h along n see one loop in the ring plane; filled in place
        P = np.concatenate([P, P], axis=1)
        P[:, :k] -= h * N[:, None]
        P[:, k:] += h * N[:, None]
    g, near = _segment_kernel(P, np.concatenate([V, V[:, :1]], axis=1), slice(0, m), slice(1, m + 1),
                              N[:, None], np.ones((1, m)), chunk)
    if h > 0.0:
        g, near = 0.5 * (g[..., :k] + g[..., k:]), near[:, :k] | near[:, k:]
    _warn_near(int(near.sum()))
    sigma = (_MU0_4PI / 3.0) * sign[:, None] * g[:, 0]
    return sigma if stacked else sigma[0]


def _loop_sigma_zz(rho, z, a):
    """sigma_nn per unit current (ppm per nA/T) of one circular loop of radius a, CCW about +z.

    Johnson & Bovey (J. Chem. Phys. 1958, 29, 1012) elliptic-integral form near the loop, multipole
    series (leading term: Pople's point dipole) beyond FAR_FIELD_RADII radii. Regularised within
    WIRE_CUTOFF_A of the wire. Returns (sigma_zz, near).
    """
    R2 = rho * rho + z * z
    far = R2 > (FAR_FIELD_RADII * a) ** 2
    q = np.sqrt((rho - a) ** 2 + z * z)
    near = q < WIRE_CUTOFF_A
    out = np.empty_like(rho)
    # Near: B_z = (mu0 I / 2π) [(a+ρ)² + z²]^(-1/2) [K(m) + (a² − ρ² − z²)/((a−ρ)² + z²) E(m)],
    # m = 4aρ/((a+ρ)² + z²)  (scipy's ellipk/ellipe take the parameter m = k²).
    i = ~far & (q > 0)
    rr, zz, qq = rho[i], z[i], q[i]
    s2 = (a + rr) ** 2 + zz * zz
    m = np.minimum(4.0 * a * rr / s2, 1.0 - 1e-16)
    bz = (ellipk(m) + (a * a - rr * rr - zz * zz) / (qq * qq) * ellipe(m)) / (2.0 * np.pi * np.sqrt(s2))
    out[i] = MU0_PPM_A_PER_NA_T * bz * np.where(qq < WIRE_CUTOFF_A, (qq / WIRE_CUTOFF_A) ** 2, 1.0)
    out[~far & (q == 0)] = 0.0
    # Far: B_z = (mu0 I a²/2) Σ_n C(−3/2, n) (a/R)^(2n) P_(2n+2)(cos θ) / R³ (exterior multipole
    # expansion of the on-axis field μ0 I a²/(2 (a² + z²)^(3/2)), textbook; n = 0 is the point dipole).
    if np.any(far):
        R = np.sqrt(R2[far])
        ct = z[far] / R
        series = np.zeros_like(R)
        for k in range(_N_MULTIPOLE):
            series += binom(-1.5, k) * (a / R) ** (2 * k) * eval_legendre(2 * k + 2, ct)
        out[far] = MU0_PPM_A_PER_NA_T * 0.5 * a * a * series / R ** 3
    return out, near


def johnson_bovey_shielding(points, centre, normal, radius_A, *, separation_A=JB_SEPARATION_A):
    """Isotropic shielding of a circular double loop carrying a unit diatropic current.

    Parameters
    ----------
    points : (n, 3) array_like, Å
    centre : (3,) array_like, Å
        Loop centre (in the ring plane).
    normal : (3,) array_like
        Ring normal.
    radius_A : float, Å
        Loop radius a (> 0).
    separation_A : float, keyword-only
        Loops at ±separation_A along the normal, half the current each (Johnson & Bovey, J. Chem.
        Phys. 1958, 29, 1012; default 0.64 Å). 0 gives one loop in the plane.

    Returns
    -------
    sigma : (n,) float64, ppm per (nA/T)
        sigma_iso = (1/3) sigma_nn for J = 1 nA/T.

    Notes
    -----
    Near the loop: complete elliptic integrals, B_z = (mu0 I/2π)[(a+ρ)²+z²]^(−1/2)[K(m) +
    (a²−ρ²−z²)/((a−ρ)²+z²) E(m)], m = 4aρ/((a+ρ)²+z²); on the axis (ρ = 0, m = 0) this is exactly
    mu0 I a²/(2(a²+z²)^(3/2)). Beyond FAR_FIELD_RADII radii from a loop centre, where K and E cancel,
    the exterior multipole series is used; its first term is the point dipole of
    :func:`point_dipole_shielding` (Pople 1956) and the further terms make the switch seamless.
    """
    pts = _array(points, "points", (-1, 3), "points of shape (n, 3)")
    c = _array(centre, "centre", (3,), "a centre of shape (3,)")
    n = _unit(normal, "normal")
    a = _nonneg(radius_A, "radius_A", strict=True)
    h = _nonneg(separation_A, "separation_A")
    rel = pts - c
    z = rel @ n
    rho = np.sqrt(np.maximum(np.einsum("ij,ij->i", rel, rel) - z * z, 0.0))
    if h == 0.0:
        szz, near = _loop_sigma_zz(rho, z, a)
    else:
        s_up, n_up = _loop_sigma_zz(rho, z - h, a)
        s_dn, n_dn = _loop_sigma_zz(rho, z + h, a)
        szz, near = 0.5 * (s_up + s_dn), n_up | n_dn
    _warn_near(int(near.sum()), stacklevel=3)
    return szz / 3.0


def point_dipole_shielding(points, centre, normal, area_A2):
    """Isotropic shielding of a point magnetic dipole for a unit diatropic ring current.

    Parameters
    ----------
    points : (n, 3) array_like, Å
    centre : (3,) array_like, Å
    normal : (3,) array_like
    area_A2 : float, Å²
        Area S enclosed by the current loop (> 0).

    Returns
    -------
    sigma : (n,) float64, ppm per (nA/T)
        sigma_iso = −(mu0/4π)(S/3)(1 − 3 cos²θ)/R³ (Pople, J. Chem. Phys. 1956, 24, 1111), θ the angle
        between the normal and the centre→point vector.

    Notes
    -----
    Far-field form only: it over-estimates near the ring and diverges at the centre. R is floored at
    WIRE_CUTOFF_A (a GeometryWarning counts such points) so that the result is always finite.
    """
    pts = _array(points, "points", (-1, 3), "points of shape (n, 3)")
    c = _array(centre, "centre", (3,), "a centre of shape (3,)")
    n = _unit(normal, "normal")
    S = _nonneg(area_A2, "area_A2", strict=True)
    rel = pts - c
    R = np.sqrt(np.einsum("ij,ij->i", rel, rel))
    z = rel @ n
    cos2 = np.divide(z * z, R * R, out=np.ones_like(R), where=R > 0)
    close = R < WIRE_CUTOFF_A
    _warn_near(int(close.sum()), stacklevel=3, what="the dipole centre",
               how=f"computed at R = {WIRE_CUTOFF_A} Å")
    R = np.maximum(R, WIRE_CUTOFF_A)
    return -_MU0_4PI * (S / 3.0) * (1.0 - 3.0 * cos2) / R ** 3


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
    pts = _array(points, "points", (-1, 3), "points of shape (n, 3)")
    v = _array(vertices, "vertices", (-1, 3), "ring vertices of shape (m, 3) with m >= 3")
    n, sign = _polygons(v[None], _array(normal, "normal", (3,), "a vector of shape (3,)")[None], False)
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


def network_shielding(points, starts, ends, bond_currents, normal_per_bond=None, *, field_dir=None,
                      separation_A=JB_SEPARATION_A, chunk_size=None):
    """Isotropic shielding of a network of bond currents (e.g. Hückel–London bond currents).

    Parameters
    ----------
    points : (n, 3) array_like, Å
    starts, ends : (m, 3) array_like, Å
        Bond k runs from ``starts[k]`` to ``ends[k]``.
    bond_currents : (m,) or (3, m) array_like, nA/T
        Current in bond k, positive along start → end, induced by a unit external field along
        ``field_dir``. A (3, m) array gives the currents for three orthonormal field directions (rows
        of ``field_dir``, default the x, y, z axes); sigma_iso is then the full trace average.
    normal_per_bond : (m, 3) or (3,) array_like, optional
        Local normal of each bond (sign irrelevant): each bond is duplicated at ±separation_A along it
        with half the current (Johnson & Bovey double loop). Default: ``field_dir`` for (m,) currents;
        required for (3, m) currents unless separation_A is 0.
    field_dir : (3,) or (3, 3) array_like, keyword-only
        Direction of the external field for (m,) currents (required; for a planar ring, its normal).
        For (3, m) currents: rows are the three orthonormal field directions.
    separation_A : float, keyword-only
        Half-separation of the double loop, Å (default 0.64; 0 = currents in the bonds themselves).
    chunk_size : int, optional
        Points per chunk.

    Returns
    -------
    sigma : (n,) float64, ppm
        With b^(d) the induced field per unit external field along e_d, sigma_dd = −b^(d)·e_d.
        (m,) currents: sigma_iso = sigma_dd / 3 (planar-current approximation: only the field along
        e_d induces currents). (3, m) currents: sigma_iso = (1/3) Σ_d sigma_dd (exact trace average).
        Units: ppm for currents in nA/T. For one ring whose bonds all carry J clockwise about n
        (diatropic) and field_dir = n this equals J · :func:`polygon_shielding` (tested).
    """
    pts = _array(points, "points", (-1, 3), "points of shape (n, 3)")
    a = _array(starts, "starts", (-1, 3), "bond starts of shape (m, 3)")
    m = a.shape[0]
    b = _array(ends, "ends", (m, 3), f"bond ends of shape ({m}, 3) like starts")
    h = _nonneg(separation_A, "separation_A")
    if np.ndim(bond_currents) == 2:
        cur = _array(bond_currents, "bond_currents", (3, m), f"currents of shape ({m},) or (3, {m})")
        dirs = np.eye(3) if field_dir is None else _array(field_dir, "field_dir", (3, 3),
                                                           "three field directions of shape (3, 3)")
        if not np.allclose(dirs @ dirs.T, np.eye(3), atol=1e-8):
            raise InputError("field_dir: expected three orthonormal rows for (3, m) bond currents")
    else:
        cur = _array(bond_currents, "bond_currents", (m,), f"currents of shape ({m},) or (3, {m})")[None]
        if field_dir is None:
            raise InputError("field_dir: expected the (3,) direction of the external field that induced "
                             "the (m,) bond currents (e.g. the ring normal), got None")
        dirs = _unit(field_dir, "field_dir")[None]
    if normal_per_bond is None:
        if h > 0 and dirs.shape[0] == 3:
            raise InputError("normal_per_bond: expected (m, 3) bond normals to place the double loop "
                             "for (3, m) currents, got None; pass them or separation_A=0")
        normals = np.tile(dirs[0], (m, 1))
    elif np.ndim(normal_per_bond) == 1:
        normals = np.tile(_unit(normal_per_bond, "normal_per_bond"), (m, 1))
    else:
        normals = _array(normal_per_bond, "normal_per_bond", (m, 3), f"bond normals of shape ({m}, 3)")
        lens = np.linalg.norm(normals, axis=1)
        if np.any(lens < 1e-12):
            raise InputError("normal_per_bond: a bond normal has zero length; expected non-zero vectors")
        normals = normals / lens[:, None]
    if m == 0 or pts.shape[0] == 0:
        return np.zeros(pts.shape[0])
    _check_lengths(a, b, "starts/ends")
    if h == 0.0:
        ends_all, w = np.concatenate([a, b]), cur
    else:
        up, dn = h * normals, -h * normals
        ends_all = np.concatenate([a + up, a + dn, b + up, b + dn])
        w = 0.5 * np.concatenate([cur, cur], axis=1)
    k = ends_all.shape[0] // 2
    verts, inv = np.unique(ends_all, axis=0, return_inverse=True)
    inv = inv.reshape(-1)
    g, near = _segment_kernel(pts[None], verts[None], inv[:k], inv[k:], dirs[None], w,
                              _chunk(chunk_size, verts.shape[0]))
    _warn_near(int(near.sum()), stacklevel=3)
    return -_MU0_4PI / 3.0 * g[0].sum(axis=0)
