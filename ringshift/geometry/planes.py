"""Geometry of π systems: plane fits, p-orbital axes, circuit normals and orientation (arrays only).

Kernels shared by the Hückel step (:mod:`ringshift.pi.perception`, overlap |cos ω| of neighbouring p
orbitals) and the circuit geometry (:mod:`ringshift.geometry.circuits`, reported planarity and p-orbital
misalignment), so that what is reported is what the currents see.

Conventions: coordinates in Å, float64; ``xyz`` is (n_atoms, 3) or, where stated, a conformer stack
(k, n_atoms, 3). Atom indices are 0-based into ``xyz``.
"""

from __future__ import annotations

import numpy as np

from ringshift._graphs import bfs_order

__all__ = ['plane_fit', 'poav_vectors', 'poav_defined', 'LINEAR_BOND_ANGLE_DEG', 'p_orbital_axes', 'circuit_normals',
           'circuit_incidence']



def plane_fit(points) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Least-squares plane of a point set, or of each set in a stack, by SVD.

    Parameters
    ----------
    points : (m, 3) or (k, m, 3) array_like, Å
        For a ring, its atoms in cyclic order (that order fixes the sign of the normal).

    Returns
    -------
    centre : (3,) or (k, 3)
        Centroid, Å.
    normal : (3,) or (k, 3)
        Unit normal, oriented so that the points, taken in the given order, run counter-clockwise
        about it (vector area · normal ≥ 0). Fewer than 3 points: +z.
    deviation_A : (m,) or (k, m)
        Signed distance of each point from the plane, Å (0 for fewer than 3 points).
    """
    p = np.asarray(points, dtype=np.float64)
    single = p.ndim == 2
    p = p.reshape(1, -1, 3) if single else p
    k, m = p.shape[:2]
    centre = p.mean(axis=1) if m else np.zeros((k, 3))
    if m < 3:
        normal, dev = np.tile([0.0, 0.0, 1.0], (k, 1)), np.zeros((k, m))
    else:
        rel = p - centre[:, None, :]
        normal = np.linalg.svd(rel, full_matrices=False)[2][:, -1, :]
        area = np.cross(rel, np.roll(rel, -1, axis=1)).sum(axis=1)
        normal = normal * np.where(np.einsum("ij,ij->i", area, normal) < 0, -1.0, 1.0)[:, None]
        dev = np.einsum("kmj,kj->km", rel, normal)
    return (centre[0], normal[0], dev[0]) if single else (centre, normal, dev)


def poav_vectors(xyz, centres, neighbours) -> tuple[np.ndarray, np.ndarray]:
    """Unnormalised p-orbital axis vectors of atoms from their σ neighbours, for one geometry or a stack.

    An atom with three neighbours gets the normal of the plane through the tips of its three unit bond
    vectors (the POAV1 axis: equal angles to the three σ bonds; Haddon, Acc. Chem. Res. 1988, 21, 243,
    from memory); with two, the normal of the plane of the atom and its neighbours (cross product of the
    unit bond vectors); any other count gives the zero vector. The sign of each vector is arbitrary.

    Parameters
    ----------
    xyz : (n_atoms, 3) or (k, n_atoms, 3) array_like, Å
    centres : (n,) atom indices
    neighbours : length-n sequence of neighbour atom indices (all σ neighbours, H included)

    Returns
    -------
    v : (n, 3) or (k, n, 3)
        Length is a measure of how well the axis is defined: 2.6 for a planar trigonal atom, 1 for a
        bent two-coordinate atom at 90°, 0 when undefined (linear, or fewer than two neighbours).
    height_A : (n,) or (k, n)
        Distance of a three-coordinate atom from the plane of its neighbours (pyramidalisation), else 0.
    """
    x = np.asarray(xyz, dtype=np.float64)
    stack = x.ndim == 3
    x = x if stack else x[None]
    n = len(centres)
    v = np.zeros((x.shape[0], n, 3))
    height = np.zeros((x.shape[0], n))
    nbl = [list(nb) for nb in neighbours]
    for deg in (2, 3):  # batched by σ-neighbour count
        ks = np.array([k for k, nb in enumerate(nbl) if len(nb) == deg], dtype=np.intp)
        if not len(ks):
            continue
        at = x[:, np.asarray(centres, dtype=np.intp)[ks]]              # (c, q, 3)
        nb_xyz = x[:, np.array([nbl[k] for k in ks], dtype=np.intp)]    # (c, q, deg, 3)
        u = nb_xyz - at[:, :, None, :]
        u /= np.maximum(np.linalg.norm(u, axis=3), 1e-12)[..., None]
        if deg == 3:
            v[:, ks] = np.cross(u[:, :, 1] - u[:, :, 0], u[:, :, 2] - u[:, :, 0])
            pn = np.cross(nb_xyz[:, :, 1] - nb_xyz[:, :, 0], nb_xyz[:, :, 2] - nb_xyz[:, :, 0])
            pn_len = np.linalg.norm(pn, axis=2)
            h = np.abs(np.einsum("cqj,cqj->cq", at - nb_xyz[:, :, 0], pn)) / np.maximum(pn_len, 1e-300)
            height[:, ks] = np.where(pn_len > 1e-9, h, 0.0)
        else:
            v[:, ks] = np.cross(u[:, :, 0], u[:, :, 1])
    return (v, height) if stack else (v[0], height[0])

#: A two-coordinate atom whose bond angle exceeds this (sp-like: alkyne and cumulene carbons, nitrile
#: C) has no axis of its own: the cross product of its bond vectors is dominated by noise there.
LINEAR_BOND_ANGLE_DEG = 150.0


def poav_defined(v, neighbours) -> np.ndarray:
    """Which vectors of :func:`poav_vectors` define an axis: (…, n) bool.

    Three neighbours: |v| > 0.1 (the tip triangle is not degenerate); two: the bond angle is below
    :data:`LINEAR_BOND_ANGLE_DEG` (|v| = sin of the bond angle); any other count: never.
    """
    deg = np.array([len(nb) for nb in neighbours])
    limit = np.where(deg == 3, 0.1, np.where(deg == 2, np.sin(np.radians(LINEAR_BOND_ANGLE_DEG)), np.inf))
    return np.linalg.norm(np.asarray(v), axis=-1) > limit


def p_orbital_axes(xyz, centres, neighbours, bonds):
    """p-orbital axes of π centres, with signs made consistent along a spanning tree of the π graph.

    An atom with three σ neighbours gets the POAV1 axis and one with two the normal of the plane of the
    atom and its neighbours (:func:`poav_vectors`); with one, four or more, or a near-linear pair (bond
    angle above :data:`LINEAR_BOND_ANGLE_DEG`), the axis of a π neighbour (else the plane normal of all
    centres).

    Parameters
    ----------
    xyz : (n_atoms, 3) Å
    centres : (n,) atom indices of the π centres
    neighbours : length-n sequence of neighbour atom indices (all σ neighbours, H included)
    bonds : (m, 2) local index pairs of π bonds

    Returns
    -------
    axes : (n, 3) unit vectors
    height_A : (n,) distance of each three-coordinate centre from the plane of its neighbours (else 0)
    twist_bond : int or None
        Index of a bond whose two axes stay antiparallel after the tree orientation (a ring with an odd
        number of phase inversions: Möbius-type topology), else None.
    """
    x = np.asarray(xyz, dtype=np.float64)
    n = len(centres)
    b = np.asarray(bonds, dtype=np.intp).reshape(-1, 2)
    v, height = poav_vectors(x, centres, neighbours)
    ok = poav_defined(v, neighbours)
    v_len = np.linalg.norm(v, axis=1)
    axes = np.where(ok[:, None], v / np.where(ok, v_len, 1.0)[:, None], 0.0)
    done = np.zeros(n, bool)
    for s0 in [k for k in range(n) if ok[k]] + list(range(n)):  # each component from a defined axis
        if done[s0]:
            continue
        if not ok[s0]:
            axes[s0], ok[s0] = plane_fit(x[list(centres)])[1], True
        order, pred = bfs_order(n, b, s0)
        for q in order[1:]:  # undefined axes (one neighbour, linear) inherit; signs follow the tree
            if not ok[q]:
                axes[q], ok[q] = axes[pred[q]], True
            elif np.dot(axes[pred[q]], axes[q]) < 0:
                axes[q] = -axes[q]
        done[order] = True
    twist = next((k for k, (i, j) in enumerate(b) if np.dot(axes[i], axes[j]) < -0.2), None)
    return axes, height, twist


def circuit_normals(xyz, circuits) -> np.ndarray:
    """Unit normals (n_circuits, 3) of SVD plane fits through each circuit's atoms, oriented along the
    plane normal of all circuit atoms (itself given a non-negative z component, else x, else y).

    Parameters
    ----------
    xyz : (n_atoms, 3) Å
    circuits : sequence of atom-index sequences
    """
    x = np.asarray(xyz, dtype=np.float64)
    cyc = [list(c) for c in circuits]
    if not cyc:
        return np.zeros((0, 3))
    ref = plane_fit(x[sorted({a for c in cyc for a in c})])[1]
    for ax in (2, 0, 1):
        if abs(ref[ax]) > 1e-6:
            ref = ref * np.sign(ref[ax])
            break
    out = np.array([plane_fit(x[c])[1] for c in cyc])
    out[out @ ref < 0] *= -1.0
    return out


def circuit_incidence(xyz, circuits, bonds, normals):
    """Orient circuits counter-clockwise about their normals and build the signed incidence matrix.

    Parameters
    ----------
    xyz : (n_atoms, 3) Å
    circuits : sequence of atom-index cycles (ring order, either direction)
    bonds : sequence of (i, j), i < j, atom indices (the π bonds; every circuit edge must be one)
    normals : (n_circuits, 3) unit normals

    Returns
    -------
    oriented : tuple of tuples, each cycle counter-clockwise about its normal (vector area · n ≥ 0)
    incidence : (n_bonds, n_circuits), +1 if the oriented circuit runs i → j along bond (i, j), −1 if j → i
    max_deviation_A : (n_circuits,) largest distance of a circuit atom from the circuit's fitted plane
    """
    x = np.asarray(xyz, dtype=np.float64)
    where = {tuple(b): k for k, b in enumerate(bonds)}
    oriented, devs = [], []
    inc = np.zeros((len(where), len(circuits)))
    for n, (c, nv) in enumerate(zip(circuits, np.asarray(normals, dtype=np.float64).reshape(-1, 3))):
        c = tuple(c)
        p = x[list(c)]
        area = 0.5 * np.sum(np.cross(p, np.roll(p, -1, axis=0)), axis=0)
        c = c if area @ nv >= 0 else c[::-1]
        oriented.append(c)
        devs.append(float(np.max(np.abs(plane_fit(p)[2]), initial=0.0)))
        for a, b in zip(c, c[1:] + c[:1]):
            inc[where[(min(a, b), max(a, b))], n] = 1.0 if a < b else -1.0
    return tuple(oriented), inc, np.array(devs)
