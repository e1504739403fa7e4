"""Circular-loop kernels: Johnson–Bovey double loop and the Pople point dipole.

Johnson & Bovey (J. Chem. Phys. 1958, 29, 1012): B_z of a circular loop of radius a at (ρ, z) from the
complete elliptic integrals K(m), E(m) (parameter m = k², :mod:`ringshift.fields.elliptic`), two
loops at ±0.64 Å with half the current each; beyond :data:`ringshift.constants.FAR_FIELD_RADII` radii a
multipole series replaces the exact form, which cancels badly there. Pople (J. Chem. Phys. 1956, 24,
1111): σ_iso = −(μ0/4π)(J S/3)(1 − 3cos²θ)/R³ for a ring of area S, a far-field form. Outputs in ppm per
nA/T, σ > 0 shielding.
"""

from __future__ import annotations

import numpy as np

from ringshift import _validation as _v
from ringshift.constants import FAR_FIELD_RADII, JB_SEPARATION_A, MU0_PPM_A_PER_NA_T, WIRE_CUTOFF_A
from ringshift.fields._common import _MU0_4PI, _N_MULTIPOLE, _warn_near
from ringshift.fields.elliptic import ellipk_ellipe

__all__ = ['johnson_bovey_shielding', 'point_dipole_shielding']



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
    # m = 4aρ/((a+ρ)² + z²)  (the parameter m = k²).
    i = ~far & (q > 0)
    rr, zz, qq = rho[i], z[i], q[i]
    s2 = (a + rr) ** 2 + zz * zz
    m = np.minimum(4.0 * a * rr / s2, 1.0 - 1e-16)
    k_m, e_m = ellipk_ellipe(m)
    bz = (k_m + (a * a - rr * rr - zz * zz) / (qq * qq) * e_m) / (2.0 * np.pi * np.sqrt(s2))
    out[i] = MU0_PPM_A_PER_NA_T * bz * np.where(qq < WIRE_CUTOFF_A, (qq / WIRE_CUTOFF_A) ** 2, 1.0)
    out[~far & (q == 0)] = 0.0
    # Far: B_z = (mu0 I a²/2) Σ_n C(−3/2, n) (a/R)^(2n) P_(2n+2)(cos θ) / R³ (exterior multipole
    # expansion of the on-axis field μ0 I a²/(2 (a² + z²)^(3/2)), textbook; n = 0 is the point dipole).
    if np.any(far):
        from numpy.polynomial.legendre import legval  # loaded here: numpy.polynomial costs ~10 ms at start-up

        R = np.sqrt(R2[far])
        ct = z[far] / R
        series = np.zeros_like(R)
        for k in range(_N_MULTIPOLE):
            series += _binom_minus_three_halves(k) * (a / R) ** (2 * k) * legval(ct, [0.0] * (2 * k + 2) + [1.0])
        out[far] = MU0_PPM_A_PER_NA_T * 0.5 * a * a * series / R ** 3
    return out, near


def _binom_minus_three_halves(k: int) -> float:
    """Generalised binomial coefficient C(−3/2, k) = Π_{j<k} (−3/2 − j)/(j + 1)."""
    out = 1.0
    for j in range(k):
        out *= (-1.5 - j) / (j + 1)
    return out


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
    pts = _v.array(points, "points", (-1, 3), "points of shape (n, 3)")
    c = _v.array(centre, "centre", (3,), "a centre of shape (3,)")
    n = _v.unit_vector(normal, "normal")
    a = _v.real(radius_A, "radius_A", positive=True)
    h = _v.real(separation_A, "separation_A", nonneg=True)
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
    pts = _v.array(points, "points", (-1, 3), "points of shape (n, 3)")
    c = _v.array(centre, "centre", (3,), "a centre of shape (3,)")
    n = _v.unit_vector(normal, "normal")
    S = _v.real(area_A2, "area_A2", positive=True)
    rel = pts - c
    R = np.sqrt(np.einsum("ij,ij->i", rel, rel))
    z = rel @ n
    cos2 = np.divide(z * z, R * R, out=np.ones_like(R), where=R > 0)
    close = R < WIRE_CUTOFF_A
    _warn_near(int(close.sum()), stacklevel=3, what="the dipole centre",
               how=f"computed at R = {WIRE_CUTOFF_A} Å")
    R = np.maximum(R, WIRE_CUTOFF_A)
    return -_MU0_4PI * (S / 3.0) * (1.0 - 3.0 * cos2) / R ** 3
