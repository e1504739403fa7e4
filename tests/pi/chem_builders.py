"""Synthetic (invented) geometries for the chemistry-limits tests: twisted annulene rings and a
planar ring of given bond lengths. Nothing here is measured data; each builder states its construction."""

from __future__ import annotations

import numpy as np

CC_A = 1.40   # mean aromatic C–C, Å (common practice, no source)
CH_A = 1.09   # aromatic C–H, Å (common practice, no source)


def annulene_ring(n: int, *, twists: int = 0, lengths_A=None) -> tuple[list[str], np.ndarray]:
    """C_nH_n ring, symbols and (2n, 3) coordinates in Å: carbons 0..n−1 on a planar closed polygon, H n..2n−1.

    ``twists`` half-turns of the local σ plane about the ring tangent over one circuit (0: planar Hückel ring;
    1: a Möbius strip, the p-orbital phase reverses once). ``lengths_A`` (n,) optional C–C lengths of bonds
    (k, k+1) for a planar ring (an irregular polygon with the vertices on a circle is not needed: the lengths
    are used through the angles they subtend on a circle, so the ring stays cyclic and planar)."""
    if lengths_A is None:
        lengths_A = np.full(n, CC_A)
    lengths_A = np.asarray(lengths_A, dtype=float)
    # radius R of the circle on which chords of the given lengths close: sum of 2 asin(l/2R) = 2π
    lo, hi = lengths_A.max() / 2 + 1e-9, 100.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if np.sum(2 * np.arcsin(lengths_A / (2 * mid))) > 2 * np.pi:
            lo = mid
        else:
            hi = mid
    rad = 0.5 * (lo + hi)
    theta = np.concatenate([[0.0], np.cumsum(2 * np.arcsin(lengths_A / (2 * rad)))[:-1]])
    r_hat = np.column_stack([np.cos(theta), np.sin(theta), np.zeros(n)])
    c = rad * r_hat
    phi = 0.5 * twists * theta - (0.5 * np.pi * twists / 2 if twists else 0.0)  # H direction angle from r̂
    u = np.cos(phi)[:, None] * r_hat + np.sin(phi)[:, None] * np.array([0.0, 0.0, 1.0])
    h = c + CH_A * u
    return ["C"] * n + ["H"] * n, np.vstack([c, h])


def xyz_text(symbols, coords, comment: str = "synthetic") -> str:
    """XYZ file text of one frame."""
    rows = [f"{s} {x:.6f} {y:.6f} {z:.6f}" for s, (x, y, z) in zip(symbols, np.asarray(coords, float))]
    return f"{len(symbols)}\n{comment}\n" + "\n".join(rows) + "\n"


def c60_coordinates(edge_A: float = 1.42) -> np.ndarray:
    """Vertices (60, 3), Å, of a regular truncated icosahedron (I_h) with every edge ``edge_A``: the even
    permutations of (0, ±1, ±3φ), (±1, ±(2+φ), ±2φ), (±φ, ±2, ±φ³) for edge 2 (the standard Cartesian
    form of the truncated icosahedron, common practice, no source). Idealised: real C60 has two bond lengths."""
    phi = (1 + 5 ** 0.5) / 2
    base = [(0.0, 1.0, 3 * phi), (1.0, 2 + phi, 2 * phi), (phi, 2.0, phi ** 3)]
    pts = set()
    for a, b, c in base:
        for sa in (1, -1):
            for sb in (1, -1):
                for sc in (1, -1):
                    v = (sa * a, sb * b, sc * c)
                    for p in ((v[0], v[1], v[2]), (v[1], v[2], v[0]), (v[2], v[0], v[1])):
                        pts.add(tuple(round(x, 12) + 0.0 for x in p))
    xyz = np.array(sorted(pts))
    assert xyz.shape == (60, 3)
    return xyz * (edge_A / 2.0)


def c60h2_coordinates() -> tuple[list[str], np.ndarray]:
    """Synthetic 1,2-dihydro[60]fullerene: the I_h cage of :func:`c60_coordinates` with the two atoms of one
    6:6 bond pulled 0.15 Å outward (sp³) and an H 1.10 Å outward on each (invented geometry)."""
    x = c60_coordinates()
    d = np.linalg.norm(x[:, None] - x[None], axis=2)
    nb = [set(np.flatnonzero((d[k] > 0.1) & (d[k] < 1.6))) for k in range(60)]
    # a 6:6 bond is shared by two hexagons: its ends have no common neighbour and ... pick the bond whose
    # four other neighbours are pairwise not adjacent across a pentagon: use the shortest-path rule below
    def in_pentagon(i, j):
        for a in nb[i] - {j}:
            for b in nb[j] - {i}:
                if b in nb[a]:
                    return False        # i-a-b-j closes a 4-path: never in a fullerene
                if nb[a] & nb[b] - {i, j}:
                    return True         # i-a-c-b-j is a 5-ring
        return False
    i, j = next((i, j) for i in range(60) for j in sorted(nb[i]) if j > i and not in_pentagon(i, j))
    c = x.mean(axis=0)
    out = x.copy()
    hs = []
    for a in (i, j):
        u = (x[a] - c) / np.linalg.norm(x[a] - c)
        out[a] = x[a] + 0.15 * u
        hs.append(out[a] + 1.10 * u)
    return ["C"] * 60 + ["H", "H"], np.vstack([out, hs])
