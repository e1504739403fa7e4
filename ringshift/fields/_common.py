"""Shared pieces of the shielding kernels: argument checks, chunk sizes, polygon orientation, the
near-wire warning and μ0/4π in ppm·Å per nA/T.
"""

from __future__ import annotations

import warnings

import numpy as np

from ringshift.constants import MU0_PPM_A_PER_NA_T, WIRE_CUTOFF_A
from ringshift.errors import GeometryWarning, InputError

#: (mu0/4π) × (1 nA/T) in ppm·Å: turns a geometric factor in Å⁻¹ into ppm per nA/T.
_MU0_4PI = MU0_PPM_A_PER_NA_T / (4.0 * np.pi)

#: Point×vertex pairs handled per chunk: ~0.5 MB per temporary, so a chunk stays in cache and the
#: memory in use does not grow with the number of points (measured in benchmarks/bench_fields.py).
_PAIRS_PER_CHUNK = 1 << 16

#: Terms of the far-field multipole series of a circular loop; beyond FAR_FIELD_RADII radii each term
#: is smaller than the previous by about (a/R)² ≤ 0.01, so 12 terms are exact to rounding.
_N_MULTIPOLE = 12


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


