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
