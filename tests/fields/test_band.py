"""The finite-width current band (ringshift.fields.band through polygon_shielding and geometric_factors):
thin-wire limit, slow twin, Ampère's law, the far-field moment, invariances, the circular-loop limit."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal
from scipy.integrate import quad
from scipy.spatial.transform import Rotation
from scipy.special import roots_jacobi

from ringshift import fields
from ringshift.constants import MU0_PPM_A_PER_NA_T as MU0
from ringshift.errors import GeometryWarning, InputError
from ringshift.fields.band import band_quadrature
from ringshift.fields.registry import geometric_factors
from ringshift.geometry.circuits import Circuit, circuit_geometry
from tests.fields.test_fields import N_TILT, PENTAGON, Z, regular_polygon, slow_polygon_shielding


def quiet(fn, *args, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", GeometryWarning)
        return fn(*args, **kw)


# ----------------------------------------------------------------------------------------------------
# Slow, obvious twin: offset vertices by intersecting the two offset edge lines in the plane ⊥ n
# (not the bisector formula of the kernel), then a sum of thin single loops.
# ----------------------------------------------------------------------------------------------------
def _offset_polygon(v, n, t):
    """Vertices of the polygon whose edges (projected on the plane ⊥ n) are moved outwards by t."""
    m = len(v)
    area = sum(np.cross(v[i], v[(i + 1) % m]) for i in range(m))
    ccw = float(np.dot(area, n)) > 0
    out = []
    for i in range(m):
        normals = []
        for a, b in ((v[i - 1], v[i]), (v[i], v[(i + 1) % m])):
            e = b - a
            e = e - np.dot(e, n) * n
            o = np.cross(e, n) / np.linalg.norm(np.cross(e, n))
            normals.append(o if ccw else -o)
        # δ ⊥ n with δ·o_prev = t and δ·o_next = t: solve in an orthonormal basis (p, q) of the plane
        p = normals[0]
        q = np.cross(n, p)
        A = np.array([[np.dot(o, p), np.dot(o, q)] for o in normals])
        x = np.linalg.solve(A, [t, t])
        out.append(v[i] + x[0] * p + x[1] * q)
    return np.array(out)


def slow_band_shielding(points, vertices, normal, separation_A, width_A, height_width_A, nodes=3):
    n = np.asarray(normal, float) / np.linalg.norm(normal)
    v = np.asarray(vertices, float)
    # parabolic profile 1 − (x/h)², h = √5 σ: Gauss–Jacobi (α = β = 1) nodes and weights, normalised
    x, w = roots_jacobi(nodes, 1.0, 1.0)

    def profile(sigma):
        if sigma == 0:
            return [(0.0, 1.0)]
        return [(math.sqrt(5) * sigma * xi, wi / sum(w)) for xi, wi in zip(x, w)]

    lobes = [(0.0, 1.0)] if separation_A == 0 else [(separation_A, 0.5), (-separation_A, 0.5)]
    total = np.zeros(len(points))
    for t, wt in profile(width_A):
        poly = _offset_polygon(v, n, t)
        for zc, wl in lobes:
            for dz, wz in profile(height_width_A):
                shifted = np.asarray(points, float) - (zc + dz) * n
                total += wt * wl * wz * slow_polygon_shielding(shifted, poly, n, separation_A=0.0)
    return total


def test_profile_has_the_stated_standard_deviation():
    # the quadrature reproduces the variance of the parabolic profile (exact for 2+ nodes): σ² = h²/5
    # (elementary integral, common practice, no source)
    for nodes in (2, 3, 5):
        t, wt, z, wz = band_quadrature(0.7, 0.3, 0.2, nodes)
        assert_allclose([wt.sum(), wt @ t, wt @ t**2], [1.0, 0.0, 0.09], atol=1e-14)
        assert_allclose([wz.sum(), wz @ z, wz @ (np.abs(z) - 0.7) ** 2], [1.0, 0.0, 0.04], atol=1e-14)


def _random_points(seed, n, scale=4.0):
    return np.random.default_rng(seed).uniform(-scale, scale, (n, 3))


# ----------------------------------------------------------------------------------------------------
# Thin-wire limit and slow twin
# ----------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("sep", [0.0, 0.64], ids=["single", "double"])
def test_zero_width_is_the_thin_wire_bit_for_bit(sep):
    P = _random_points(1, 50)
    thin = quiet(fields.polygon_shielding, P, PENTAGON, N_TILT, separation_A=sep)
    band = quiet(fields.polygon_shielding, P, PENTAGON, N_TILT, separation_A=sep, width_A=0.0,
                 height_width_A=0.0, band_nodes=7)
    assert_array_equal(band, thin)


def test_small_width_converges_to_the_thin_wire_quadratically():
    # The band is even in t and z, so the change from the thin wire is O(width²): halving the width
    # divides it by 4 (ratio within 4 ± 0.05, numerical; common practice, no source).
    P = np.array([[0.0, 0.0, 1.0], [2.5, 0.3, 0.0], [0.2, -0.4, 0.1], [1.0, 1.8, 1.5]])
    thin = fields.polygon_shielding(P, regular_polygon(6), Z)
    d1 = fields.polygon_shielding(P, regular_polygon(6), Z, width_A=0.02, height_width_A=0.02) - thin
    d2 = fields.polygon_shielding(P, regular_polygon(6), Z, width_A=0.01, height_width_A=0.01) - thin
    assert_allclose(d1 / d2, 4.0, atol=0.05)


@pytest.mark.parametrize("sep,wt,wz", [(0.64, 0.3, 0.0), (0.64, 0.0, 0.25), (0.5, 0.3, 0.25), (0.0, 0.2, 0.4)],
                         ids=["in-plane", "height", "both", "one-lobe"])
def test_band_matches_slow_twin(sep, wt, wz):
    P = np.r_[_random_points(4, 40), [[1.25, -0.2, 0.02], [0.0, 0.0, 0.0], [-1.2, 0.6, 0.7]]]
    got = quiet(fields.polygon_shielding, P, PENTAGON, N_TILT, separation_A=sep, width_A=wt, height_width_A=wz)
    ref = quiet(slow_band_shielding, P, PENTAGON, N_TILT, sep, wt, wz)
    # same closed form summed in another order: rounding only (common practice, no source)
    assert_allclose(got, ref, rtol=1e-10, atol=1e-12 * np.max(np.abs(ref)))


def test_band_stack_equals_per_conformer_calls_and_either_normal_sign():
    rng = np.random.default_rng(5)
    nf = 6
    V = regular_polygon(7, radius=1.6)[None] + rng.normal(0, 0.05, (nf, 7, 3))
    P = rng.uniform(-4, 4, (nf, 11, 3))
    N = Z + rng.normal(0, 0.05, (nf, 3))
    N[::2] *= -1.0
    kw = dict(width_A=0.3, height_width_A=0.2, chunk_size=13)
    got = quiet(fields.polygon_shielding, P, V, N, **kw)
    loop = np.stack([quiet(fields.polygon_shielding, P[f], V[f], N[f], **kw) for f in range(nf)])
    assert_allclose(got, loop, rtol=1e-10, atol=1e-12 * np.max(np.abs(loop)))
    twin = np.stack([quiet(slow_band_shielding, P[f], V[f], N[f], 0.64, 0.3, 0.2) for f in range(nf)])
    assert_allclose(got, twin, rtol=1e-10, atol=1e-12 * np.max(np.abs(twin)))


# ----------------------------------------------------------------------------------------------------
# Physics: Ampère, far-field moment (Steiner), circular limit, signs
# ----------------------------------------------------------------------------------------------------
def _line_integral(fn, x, y):
    def f(z):
        return float(fn(np.array([[x, y, z]]))[0])

    return sum(quad(f, lo, hi, epsabs=1e-13, epsrel=1e-12, limit=400)[0]
               for lo, hi in [(-np.inf, -3), (-3, 0), (0, 3), (3, np.inf)])


@pytest.mark.parametrize("xy,inside", [((0.0, 0.0), True), ((0.4, -0.2), True), ((3.6, 0.4), False),
                                       ((2.9, 2.2), False)], ids=["centre", "inside", "outside", "far-out"])
def test_ampere_line_integral_for_the_band(xy, inside):
    # Ampère's law (textbook; design notes §5): every quadrature copy is a closed loop, so a line threading
    # all of them (3 nodes at ±0.655 × √5 × 0.25 Å: the copies of a hexagon of apothem 1.2 Å run from
    # 0.83 to 1.57 Å) gives ∫ sigma_iso dz = mu0/3 per unit current and a line outside all gives 0.
    # Tolerance 1e-7 ppm·Å: quadrature error of a peaked integrand.
    def fn(p):
        return fields.polygon_shielding(p, regular_polygon(6), Z, width_A=0.25, height_width_A=0.3)
    assert_allclose(_line_integral(fn, *xy), MU0 / 3 if inside else 0.0, atol=1e-7)


def test_far_field_moment_of_the_band_follows_the_offset_area():
    # Far away a loop acts through its moment I·S. A regular m-gon of apothem r offset by t has area
    # m tan(π/m)(r + t)² (Steiner's formula for parallel bodies; common practice, no source), so a
    # spread of offsets of standard deviation w multiplies the mean area, hence the far field, by
    # 1 + w²/r² (exact for 3 quadrature nodes: the integrand is quadratic). At 300 Å on the axis the
    # next multipole is (r/300)² ≈ 2e-5 of the field: rtol 1e-4.
    r = A = 1.39 * math.cos(math.pi / 6)
    w = 0.35
    P = np.array([[0.0, 0.0, 300.0], [300.0, 10.0, 5.0]])
    ratio = fields.polygon_shielding(P, regular_polygon(6), Z, width_A=w) / fields.polygon_shielding(
        P, regular_polygon(6), Z)
    assert_allclose(ratio, 1.0 + w * w / (A * r), rtol=1e-4)


def test_polygon_band_of_a_fine_polygon_is_the_circular_band():
    # A 720-gon of circumradius a is a circle to (π/720)² ≈ 2e-5; its band offset by t is the circle of
    # radius a + t (the Johnson–Bovey form with that radius; J. Chem. Phys. 1958, 29, 1012), computed
    # in the registry. rtol 1e-3 covers the polygon-vs-circle difference near the wire.
    a = 1.39
    coords = np.r_[regular_polygon(720, radius=a), [[0, 0, 1.0], [2.48, 0, 0], [0.3, 0.2, 0.0], [3.4, 0.5, 1.8],
                                                   [1.0, 0.0, 2.0]]][None]
    ring = Circuit(atoms=tuple(range(720)), kind="ring", label="circle")
    geo = circuit_geometry(coords, ring.atoms)
    h = list(range(720, 725))
    kw = dict(width_A=0.3, height_width_A=0.25)
    poly = geometric_factors(coords, h, [ring], [geo], "polygon", **kw)
    circ = geometric_factors(coords, h, [ring], [geo], "johnson-bovey", **kw)
    assert_allclose(poly, circ, rtol=1e-3)
    # and the band differs from the thin wire at these points (the option is not ignored)
    thin = geometric_factors(coords, h, [ring], [geo], "johnson-bovey")
    assert np.all(np.abs(circ - thin) > 1e-3 * np.abs(thin))


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_band_invariant_under_rigid_motion_reversal_and_relabelling(seed):
    rng = np.random.default_rng(seed)
    P = _random_points(seed, 20)
    kw = dict(width_A=0.3, height_width_A=0.2)
    ref = quiet(fields.polygon_shielding, P, PENTAGON, N_TILT, **kw)
    R = Rotation.random(random_state=seed).as_matrix()
    shift = rng.uniform(-5, 5, 3)
    moved = quiet(fields.polygon_shielding, P @ R.T + shift, np.roll(PENTAGON[::-1], 2, axis=0) @ R.T + shift,
                  N_TILT @ R.T, **kw)
    assert_allclose(moved, ref, rtol=1e-9, atol=1e-12 * np.max(np.abs(ref)))
    mirrored = quiet(fields.polygon_shielding, P * [1, 1, -1], PENTAGON * [1, 1, -1], N_TILT * [1, 1, -1], **kw)
    assert_allclose(mirrored, ref, rtol=1e-9, atol=1e-12 * np.max(np.abs(ref)))


# ----------------------------------------------------------------------------------------------------
# Validation
# ----------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("kw,name", [({"width_A": -0.1}, "width_A"), ({"height_width_A": float("nan")},
                                                                      "height_width_A"),
                                     ({"band_nodes": 0}, "band_nodes"), ({"band_nodes": 2.5}, "band_nodes")],
                         ids=["negative-width", "nan-height-width", "zero-nodes", "float-nodes"])
def test_bad_band_arguments_raise_input_error(kw, name):
    with pytest.raises(InputError, match=name):
        fields.polygon_shielding([[0, 0, 1.0]], regular_polygon(6), Z, **kw)


def test_registry_refuses_a_width_for_models_without_a_loop():
    coords = np.r_[regular_polygon(6), [[0, 0, 1.0]]][None]
    ring = Circuit(atoms=tuple(range(6)), kind="ring", label="hexagon")
    geo = circuit_geometry(coords, ring.atoms)
    with pytest.raises(InputError, match="width_A"):
        geometric_factors(coords, [6], [ring], [geo], "haigh-mallion", width_A=0.3)
    # default width: every model still runs
    assert geometric_factors(coords, [6], [ring], [geo], "haigh-mallion").shape == (1, 1, 1)
