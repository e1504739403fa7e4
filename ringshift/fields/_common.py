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


def _check_lengths(a, b, name):
    if np.any(np.einsum("ij,ij->i", b - a, b - a) < 1e-12):
        raise InputError(f"{name}: a segment has zero length; expected distinct start and end points")
