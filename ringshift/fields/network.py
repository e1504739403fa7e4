"""Biot–Savart over a network of bond currents (each π bond carries its own Hückel–London current).

Every bond is a straight segment doubled at ±0.64 Å along its local p-orbital normal (Johnson & Bovey,
J. Chem. Phys. 1958, 29, 1012) with half its current each; the field of a straight segment is the
textbook Biot–Savart result. Output in ppm, σ > 0 shielding.
"""

from __future__ import annotations

import numpy as np

from ringshift import _validation as _v
from ringshift.constants import JB_SEPARATION_A
from ringshift.errors import InputError
from ringshift.fields._common import _MU0_4PI, _chunk, _warn_near
from ringshift.fields.polygon import _segment_kernel

__all__ = ['network_shielding']



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
    pts = _v.array(points, "points", (-1, 3), "points of shape (n, 3)")
    a = _v.array(starts, "starts", (-1, 3), "bond starts of shape (m, 3)")
    m = a.shape[0]
    b = _v.array(ends, "ends", (m, 3), f"bond ends of shape ({m}, 3) like starts")
    h = _v.real(separation_A, "separation_A", nonneg=True)
    if np.ndim(bond_currents) == 2:
        cur = _v.array(bond_currents, "bond_currents", (3, m), f"currents of shape ({m},) or (3, {m})")
        dirs = np.eye(3) if field_dir is None else _v.array(field_dir, "field_dir", (3, 3),
                                                           "three field directions of shape (3, 3)")
        if not np.allclose(dirs @ dirs.T, np.eye(3), atol=1e-8):
            raise InputError("field_dir: expected three orthonormal rows for (3, m) bond currents")
    else:
        cur = _v.array(bond_currents, "bond_currents", (m,), f"currents of shape ({m},) or (3, {m})")[None]
        if field_dir is None:
            raise InputError("field_dir: expected the (3,) direction of the external field that induced "
                             "the (m,) bond currents (e.g. the ring normal), got None")
        dirs = _v.unit_vector(field_dir, "field_dir")[None]
    if normal_per_bond is None:
        if h > 0 and dirs.shape[0] == 3:
            raise InputError("normal_per_bond: expected (m, 3) bond normals to place the double loop "
                             "for (3, m) currents, got None; pass them or separation_A=0")
        normals = np.tile(dirs[0], (m, 1))
    elif np.ndim(normal_per_bond) == 1:
        normals = np.tile(_v.unit_vector(normal_per_bond, "normal_per_bond"), (m, 1))
    else:
        normals = _v.array(normal_per_bond, "normal_per_bond", (m, 3), f"bond normals of shape ({m}, 3)")
        lens = np.linalg.norm(normals, axis=1)
        if np.any(lens < 1e-12):
            raise InputError("normal_per_bond: a bond normal has zero length; expected non-zero vectors")
        normals = normals / lens[:, None]
    if m == 0 or pts.shape[0] == 0:
        return np.zeros(pts.shape[0])
    _v.nonzero_segments(a, b, "starts/ends")
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
