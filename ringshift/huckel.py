"""Hückel and Hückel–London kernels: arrays in, arrays out.

This module holds the numerical core used by :mod:`ringshift.pisystem` (which turns an RDKit molecule
into the arrays below and wraps the results in dataclasses). Nothing here knows about RDKit.

Units and signs
---------------
* Energies are in units of |β| with ``x = (E − α)/|β|``: bonding levels are **negative** (benzene:
  −2, −1, −1, 1, 1, 2). The Hückel matrix in these units is ``h0 = −A`` where A holds the
  heteroatom parameters h_X on the diagonal (α_X = α + h_X β) and the resonance factors
  k_rs · f(r_rs) · |cos ω_rs| off the diagonal (β_rs = k_rs f(r) |cos ω| β0, β0 < 0).
* Positions in Å. The London phase of ⟨r|H|s⟩ is θ_rs = (e/2ħ) B·(r_r × r_s) (symmetric gauge,
  London, J. Phys. Radium 1937, 8, 397); internally b = eB/ħ in Å⁻², so θ_rs = ½ b·(r_r × r_s).
* Bond currents are *conventional* currents (the sense used by :func:`ringshift.fields.network_shielding`).
  With E = Tr(H P), P = Σ_k n_k c_k c_k†, the current from s to r is
  I_{s→r} = −(2e/ħ) Im(H_rs P_sr); it follows from the Hellmann–Feynman magnetic moment
  m = −∂E/∂B = ½ Σ_bonds I_{s→r} (r_s × r_r) (McWeeny, Mol. Phys. 1958, 1, 311; Pople, Mol. Phys. 1958,
  1, 175). The first-order response is evaluated analytically (sum over states), which is exactly
  gauge-origin invariant in this model: moving the origin is a diagonal unitary transformation.

Parameters
----------
``HETERO_PARAMETERS`` maps an atom type to (h_X, k_CX, source). N and O (and halogens) come from
Derflinger & Lischka, Monatsh. Chem. 1969, 100, 1003 (values read from a secondary reproduction of
their table, not from the original paper): pyridine-type N h 0.83 / k 1.06, pyrrole-type N 1.47 / 1.30,
furan-type O 2.06 / 1.31, carbonyl O 1.18 / 1.93, F 2.84 / 0.68, Cl 1.45 / 0.57, Br 1.16 / 0.38,
I 0.78 / 0.19. Cationic N⁺ (pyridinium, 2.0 / 1.0), O⁺ (pyrylium, 2.5 / 1.0) and B (−1.0 / 0.7) come
from Streitwieser, *Molecular Orbital Theory for Organic Chemists*, Wiley 1961, p. 135 (from memory).
Thiophene-type S (1.11 / 0.69) from Van-Catledge, J. Org. Chem. 1980, 45, 4801 (from memory). Anions
(pyrrolide N⁻, phenolate O⁻) and thione S use the parameters of the atom with the same core (stated
approximation, no source). A bond between two heteroatoms gets k = sqrt(k_CX k_CY) (common practice,
no source).

β(r) models
-----------
``"uniform"``: f = 1. ``"distance"``: f = exp(−(r − 1.397 Å)/0.3106 Å) for C–C bonds, from the
geometry (Longuet-Higgins & Salem, Proc. R. Soc. A 1959, 251, 172, from memory); bonds to heteroatoms
keep f = 1 (their k already encodes the bond). ``"scf"`` and ``"scf-coulson"``: the C–C lengths are not
taken from the geometry but made self-consistent with the π bond orders through a linear
bond-order/bond-length relation r = R0 − S p, then β(r) as for ``"distance"``. In the
Longuet-Higgins–Salem / Su–Schrieffer–Heeger energy E = E_π(β(r)) + Σ ½ K (r − r0)² the stationary
lengths obey exactly such a relation with S = 2|β'|/K, so S is the electron–lattice coupling that sets
the Peierls-type alternation of long conjugated chains.

* ``"scf-coulson"`` (the earlier ``"scf"``): R0 = 1.520, S = 0.186 Å, a linearisation of Coulson
  (Proc. R. Soc. A 1939, 169, 413, from memory) through ethylene 1.334 Å (p = 1) and benzene 1.396 Å
  (p = 2/3). Measured (:func:`polyene_chain_lengths`): the infinite all-trans polyene comes out
  1.369/1.437 Å, BLA 0.067 Å, i.e. it under-alternates.
* ``"scf"`` (calibrated): the line passes through benzene (1.397 Å at p = 2/3, so small 4n+2 rings stay
  D6h) and S is chosen so that the self-consistent infinite all-trans polyene (analytic band integrals,
  :func:`calibrate_chain_slope`) has the bond-length alternation of trans-polyacetylene, 0.08 Å
  (1.36/1.44 Å from nutation NMR; Yannoni & Clarke, Phys. Rev. Lett. 1983, 51, 1191, from memory).
  This gives S = 0.1988 Å, R0 = 1.5295 Å; the chain comes out 1.365/1.445 Å (the mean is not fitted).
  Checks not used in the calibration: ethylene 1.331 Å (1.339 Å by electron diffraction), naphthalene
  and planar cyclooctatetraene within 0.015 / 0.01 Å of experiment (tests/test_pisystem.py). No
  annulene NMR datum enters; see :mod:`ringshift.pisystem` for what it does to annulene currents.

The search starts from a small (±0.01 Å) bond alternation along the RDKit Kekulé structure and accepts
only a stable, closed-shell fixed point, so it leaves the equal-bond solution when that is unstable
(the Longuet-Higgins–Salem alternation of large annulenes).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from scipy import constants as _sc

from ringshift.errors import InputError

__all__ = [
    "HETERO_PARAMETERS", "BETA_REF_LENGTH_A", "BETA_DECAY_A", "COULSON_R0_A", "COULSON_SLOPE_A", "BETA0_EV",
    "beta_distance_factor", "huckel_matrix", "occupy", "solve_fragments", "density_matrix", "london_bond_response",
    "bond_polarizability", "scf_cc_lengths", "polyene_chain_lengths", "calibrate_chain_slope",
    "POLYACETYLENE_BLA_A", "SCF_R0_A", "SCF_SLOPE_A", "SCF_RELATIONS", "kirchhoff_decomposition",
    "regular_polygon", "benzene_reference_response",
    "absolute_current_nA_per_T", "pi_charge_shift_ppm", "PI_CHARGE_PPM_PER_E",
]

_DL = "Derflinger & Lischka, Monatsh. Chem. 1969, 100, 1003"
_ST = "Streitwieser, Molecular Orbital Theory for Organic Chemists, Wiley 1961, p. 135 (from memory)"
_VC = "Van-Catledge, J. Org. Chem. 1980, 45, 4801 (from memory)"

#: atom type -> (h_X, k_CX, source). Carbon of any charge is the reference (h 0, k 1).
HETERO_PARAMETERS: dict[str, tuple[float, float, str]] = {
    "C": (0.0, 1.0, "reference"), "C+": (0.0, 1.0, "reference"),
    "C-": (0.0, 1.0, "reference"), "C.": (0.0, 1.0, "reference"),
    "N_pyridine": (0.83, 1.06, _DL), "N_nitrile": (0.83, 1.06, _DL + " (pyridine-type N)"),
    "N-": (0.83, 1.06, _DL + " (pyridine-type core; approximation)"),
    "N_pyrrole": (1.47, 1.30, _DL), "N+_pyridinium": (2.0, 1.0, _ST),
    "O_furan": (2.06, 1.31, _DL), "O_carbonyl": (1.18, 1.93, _DL),
    "O-": (1.18, 1.93, _DL + " (carbonyl-type core; approximation)"), "O+_pyrylium": (2.5, 1.0, _ST),
    "S_thiophene": (1.11, 0.69, _VC), "S_thione": (1.11, 0.69, _VC + " (thiophene-type S; approximation)"),
    "B": (-1.0, 0.7, _ST), "F": (2.84, 0.68, _DL), "Cl": (1.45, 0.57, _DL), "Br": (1.16, 0.38, _DL),
    "I": (0.78, 0.19, _DL),
}

#: Reference C–C length of β0 (benzene), Å.
BETA_REF_LENGTH_A = 1.397
#: Decay length of β(r) = β0 exp(−(r − 1.397)/0.3106), Å (Longuet-Higgins & Salem 1959, from memory).
BETA_DECAY_A = 0.3106
#: Linear bond-order/bond-length relation r = R0 − SLOPE·p (Coulson 1939, linearised; from memory):
#: the ``"scf-coulson"`` model.
COULSON_R0_A = 1.520
COULSON_SLOPE_A = 0.186
#: Bond-length alternation of trans-polyacetylene, Å (1.36 / 1.44 Å; Yannoni & Clarke, Phys. Rev.
#: Lett. 1983, 51, 1191, from memory): the calibration target of the ``"scf"`` model.
POLYACETYLENE_BLA_A = 0.08
#: Absolute β0 at 1.397 Å, eV: the graphene nearest-neighbour hopping t ≈ 2.8 eV at 1.42 Å
#: (Castro Neto et al., Rev. Mod. Phys. 2009, 81, 109; from memory), carried to 1.397 Å by β(r).
BETA0_EV = -2.8 * float(np.exp((1.42 - BETA_REF_LENGTH_A) / BETA_DECAY_A))

#: Shift per π charge: Δδ = k·q, q = Z − P (q > 0 electron-poor, downfield); 10.7 ppm/e
#: (Schaefer & Schneider, Can. J. Chem. 1963, 41, 966; from memory).
PI_CHARGE_PPM_PER_E = 10.7

#: Levels closer than this (units of |β|) count as degenerate.
DEGENERACY_TOL = 1e-6


def beta_distance_factor(r_A) -> np.ndarray:
    """β(r)/β0 = exp(−(r − 1.397 Å)/0.3106 Å) (Longuet-Higgins & Salem 1959, from memory).

    Parameters: r_A (m,) bond lengths in Å. Returns: (m,) float64, dimensionless.
    """
    r = np.asarray(r_A, dtype=np.float64)
    return np.exp(-(r - BETA_REF_LENGTH_A) / BETA_DECAY_A)


def huckel_matrix(h_diag, bonds, resonance) -> np.ndarray:
    """Hückel matrix in units of |β| (x = (E − α)/|β|, bonding negative).

    Parameters: h_diag (n,) Coulomb parameters h_X (α_X = α + h_X β); bonds (m, 2) local index pairs;
    resonance (m,) β_rs/β0 (k_rs × f(r) × overlap). Returns: h0 (n, n) float64 symmetric with
    h0_rr = −h_r and h0_rs = −resonance_rs.
    """
    h = np.asarray(h_diag, dtype=np.float64)
    n = h.shape[0]
    b = np.asarray(bonds, dtype=np.intp).reshape(-1, 2)
    k = np.asarray(resonance, dtype=np.float64).reshape(-1)
    h0 = np.diag(-h)
    if b.shape[0]:
        h0[b[:, 0], b[:, 1]] = -k
        h0[b[:, 1], b[:, 0]] = -k
    return h0.reshape(n, n)


def occupy(energies, n_electrons: int, *, tol: float = DEGENERACY_TOL):
    """Aufbau occupations; a partly filled degenerate shell is filled evenly (fractional occupations).

    Parameters: energies (n,) ascending, units of |β|; n_electrons int in 0..2n.

    Returns
    -------
    occ : (n,) float64 occupation numbers (0..2)
    open_shell : bool, the highest occupied shell is not full (radical, degenerate half-filled shell)
    degenerate_homo : bool, the highest occupied shell has more than one orbital
    gap : float or None, e(LUMO) − e(HOMO) ≥ 0 in |β| (0.0 for a partly filled shell; None if there
        is no occupied or no empty level)
    """
    e = np.asarray(energies, dtype=np.float64)
    n = e.shape[0]
    occ = np.zeros(n)
    if n_electrons < 0 or n_electrons > 2 * n:
        raise ValueError(f"n_electrons={n_electrons} outside 0..{2 * n}")
    if n == 0 or n_electrons == 0:
        return occ, False, False, None
    # shells of (near-)degenerate levels
    cuts = [0] + [i for i in range(1, n) if e[i] - e[i - 1] > tol] + [n]
    shells = list(zip(cuts[:-1], cuts[1:]))
    left = float(n_electrons)
    homo_shell = None
    for si, (a, b) in enumerate(shells):
        if left <= 0:
            break
        cap = 2.0 * (b - a)
        put = min(cap, left)
        occ[a:b] = put / (b - a)
        left -= put
        homo_shell = si
    a, b = shells[homo_shell]
    filled = abs(occ[a] - 2.0) < 1e-12
    open_shell = not filled
    degenerate_homo = (b - a) > 1
    if open_shell:
        gap = 0.0
    elif homo_shell + 1 < len(shells):
        gap = float(e[shells[homo_shell + 1][0]] - e[b - 1])
    else:
        gap = None
    return occ, open_shell, degenerate_homo, gap


def solve_fragments(h0, fragments, n_electrons):
    """Diagonalise a block-diagonal Hückel matrix fragment by fragment, each with its own electrons.

    Parameters
    ----------
    h0 : (n, n) Hückel matrix (no elements between fragments)
    fragments : sequence of local index arrays partitioning 0..n−1
    n_electrons : sequence of int, π electrons of each fragment

    Returns
    -------
    energies (n,) ascending; vectors (n, n) columns; occ (n,); labels (n,) fragment of each MO;
    open_shell (any fragment); degenerate_homo (any fragment); degenerate_open (a fragment with a partly
    filled degenerate HOMO shell); gap (smallest fragment HOMO–LUMO gap, None if none is defined).
    """
    h = np.asarray(h0, dtype=np.float64)
    n = h.shape[0]
    e, c, occ, lab = np.zeros(n), np.zeros((n, n)), np.zeros(n), np.zeros(n, dtype=np.intp)
    col, flags, gaps = 0, [False, False, False], []
    for f, (idx, ne) in enumerate(zip(fragments, n_electrons)):
        idx = np.asarray(idx, dtype=np.intp)
        ef, cf = np.linalg.eigh(h[np.ix_(idx, idx)])
        of, op, dg, gp = occupy(ef, int(ne))
        sl = slice(col, col + idx.size)
        e[sl], occ[sl], lab[sl] = ef, of, f
        c[idx, sl] = cf
        col += idx.size
        flags = [flags[0] or op, flags[1] or dg, flags[2] or (op and dg)]
        if gp is not None:
            gaps.append(gp)
    order = np.argsort(e, kind="stable")
    return (e[order], c[:, order], occ[order], lab[order], flags[0], flags[1], flags[2],
            min(gaps) if gaps else None)


def density_matrix(vectors, occ) -> np.ndarray:
    """P = Σ_k n_k c_k c_kᵀ for real MO coefficients: vectors (n, n) columns, occ (n,).

    Returns (n, n) float64: diagonal = π populations, off-diagonal = Coulson bond orders.
    """
    c = np.asarray(vectors, dtype=np.float64)
    return (c * np.asarray(occ, dtype=np.float64)) @ c.T


def london_bond_response(h0, xyz, bonds, energies, vectors, occ, *, labels=None, tol: float = DEGENERACY_TOL):
    """First-order Hückel–London bond currents for unit b = eB/ħ along x, y and z.

    Parameters
    ----------
    h0 : (n, n) real symmetric, units of |β|
    xyz : (n, 3) Å, positions of the π centres (any origin)
    bonds : (m, 2) local index pairs (i, j)
    energies, vectors : eigen-decomposition of h0 (ascending, columns)
    occ : (n,) occupations
    labels : (n,) int, optional
        Fragment of each MO (from :func:`solve_fragments`); MOs of different fragments do not couple.
    tol : float
        Levels with different occupations closer than this make the response undefined.

    Returns
    -------
    g : (3, m) float64, Å²
        g[a, k] = ∂ Im(h_ji P_ij)/∂b_a for bond k = (i, j): the conventional current from i to j is
        I = −2 (e/ħ)² |β| g · B (SI, with Å² → m²). Divergence-free at every centre.

    Raises
    ------
    ValueError
        If two levels with different occupations are degenerate (open shell).
    """
    h0 = np.asarray(h0, dtype=np.float64)
    r = np.asarray(xyz, dtype=np.float64)
    b = np.asarray(bonds, dtype=np.intp).reshape(-1, 2)
    e = np.asarray(energies, dtype=np.float64)
    c = np.asarray(vectors, dtype=np.float64)
    nocc = np.asarray(occ, dtype=np.float64)
    m = b.shape[0]
    if m == 0:
        return np.zeros((3, 0))
    r = r - r.mean(axis=0)  # origin-independent; centring keeps the numbers small
    dn = nocc[None, :] - nocc[:, None]  # n_k − n_l at [l, k]
    de = e[None, :] - e[:, None]  # e_k − e_l at [l, k]
    mask = np.abs(dn) > 1e-12
    if labels is not None:
        lab = np.asarray(labels)
        mask &= lab[None, :] == lab[:, None]
    if np.any(mask & (np.abs(de) <= tol)):
        raise ValueError("degenerate levels with different occupations: open shell, no linear response")
    f = np.zeros_like(de)
    f[mask] = dn[mask] / de[mask]
    p0 = density_matrix(c, nocc)
    cross = np.cross(r[:, None, :], r[None, :, :])  # (n, n, 3): r_r × r_s
    i, j = b[:, 0], b[:, 1]
    g = np.empty((3, m))
    for a in range(3):
        amat = 0.5 * h0 * cross[:, :, a]  # V_a = i·amat, antisymmetric real
        q = c @ (f * (c.T @ amat @ c)) @ c.T  # Im(P1)
        # Im(h_ji P_ij) to first order: h0_ji [θ_ji P0_ij + Im P1_ij], θ_ji = ½ b·(r_j × r_i)
        g[a] = h0[j, i] * (0.5 * cross[j, i, a] * p0[i, j] + q[i, j])
    return g


def bond_polarizability(vectors, energies, occ, bonds, *, tol: float = DEGENERACY_TOL) -> np.ndarray:
    """Bond–bond polarisability π_bc = ∂p_b/∂(β_c/β0) from first-order perturbation theory.

    Parameters
    ----------
    vectors, energies, occ : eigen-decomposition and occupations of the Hückel matrix
    bonds : (m, 2) local index pairs

    Returns
    -------
    (m, m) float64, symmetric (Coulson & Longuet-Higgins, Proc. R. Soc. A 1947, 191, 39).
    """
    c = np.asarray(vectors, dtype=np.float64)
    e = np.asarray(energies, dtype=np.float64)
    nocc = np.asarray(occ, dtype=np.float64)
    b = np.asarray(bonds, dtype=np.intp).reshape(-1, 2)
    hi = np.flatnonzero(nocc > 1e-12)  # k: occupied at least partly
    lo = np.flatnonzero(nocc < 2.0 - 1e-12)  # l: not completely filled
    dn = nocc[hi][None, :] - nocc[lo][:, None]  # n_k − n_l over the (l, k) block
    de = e[hi][None, :] - e[lo][:, None]
    mask = (dn > 1e-12) & (np.abs(de) > tol)  # each unordered pair once (n_k > n_l)
    f = np.zeros_like(de)
    f[mask] = dn[mask] / de[mask]
    ci, cj = c[b[:, 0]], c[b[:, 1]]  # (m, n): MO coefficients on the bond atoms
    w = (ci[:, lo, None] * cj[:, None, hi] + cj[:, lo, None] * ci[:, None, hi]).reshape(b.shape[0], -1)
    return -(w * f.reshape(1, -1)) @ w.T  # −½ Σ over ordered pairs = −Σ over n_k > n_l


def scf_cc_lengths(h_diag, bonds, fixed_resonance, is_cc, overlap, kekule_double, n_electrons, *,
                   r0_A: float = COULSON_R0_A, slope_A: float = COULSON_SLOPE_A, seed_A: float = 0.01,
                   tol_A: float = 1e-9, max_iter: int = 300, depth: int = 6):
    """Self-consistent C–C bond lengths from π bond orders: r = R0 − S p, β(r) = β0 e^(−Δr/0.3106).

    The fixed point r = F(r) is found with Anderson acceleration (Walker & Ni, SIAM J. Numer. Anal.
    2011, 49, 1715) from a small alternation along the Kekulé structure. Anderson can land on an
    unstable fixed point (e.g. equal bonds in a large annulene), so every solution is checked: it is
    accepted only if the largest eigenvalue of the Jacobian of F, S/0.3106 · π · β(r)/β0 with π the
    bond–bond polarisability, is below 1 and the shell is closed; otherwise it is displaced along the
    unstable mode (or the Kekulé pattern) and the search restarts.

    Parameters: h_diag (n,) Coulomb parameters; bonds (m, 2) local index pairs; fixed_resonance (m,)
    β_rs/β0 of bonds whose β does not depend on length (k_CX; ignored for C–C); is_cc (m,) bool, the
    iterated C–C bonds; overlap (m,) factors on every β (|cos ω| alignment, explicit distortion);
    kekule_double (m,) bool, double bonds of a Kekulé structure (the seed); n_electrons int; r0_A, slope_A
    (keyword-only) R0 and S in Å (default the Coulson line of ``"scf-coulson"``).

    Returns: lengths (m,) float64 Å (C–C entries self-consistent, others 0 and unused); converged (True
    if a stable, closed-shell fixed point was found); n_iter.
    """
    hd = np.asarray(h_diag, dtype=np.float64)
    b = np.asarray(bonds, dtype=np.intp).reshape(-1, 2)
    kfix = np.asarray(fixed_resonance, dtype=np.float64)
    cc = np.asarray(is_cc, dtype=bool)
    ov = np.asarray(overlap, dtype=np.float64)
    dbl = np.asarray(kekule_double, dtype=bool)
    r = np.zeros(b.shape[0])
    if not cc.any():
        return r, True, 0

    def solve(x):
        rr = np.full(b.shape[0], BETA_REF_LENGTH_A)
        rr[cc] = x
        fac = np.where(cc, beta_distance_factor(rr), kfix) * ov
        e, c = np.linalg.eigh(huckel_matrix(hd, b, fac))
        occ, open_shell = occupy(e, n_electrons)[:2]
        return fac, e, c, occ, open_shell

    def fmap(x):
        _, _, c, occ, _ = solve(x)
        return r0_A - slope_A * density_matrix(c, occ)[b[cc, 0], b[cc, 1]]

    seed = np.where(dbl[cc], -1.0, 1.0)
    x = BETA_REF_LENGTH_A + seed_A * seed
    total = 0
    for _attempt in range(5):
        dxs, dfs = [], []
        x_old = f_old = None
        done = False
        for _ in range(max_iter):
            total += 1
            f = fmap(x) - x
            if np.max(np.abs(f)) < tol_A:
                done = True
                break
            if x_old is not None:
                dxs.append(x - x_old)
                dfs.append(f - f_old)
                if len(dxs) > depth:
                    dxs.pop(0)
                    dfs.pop(0)
            x_old, f_old = x, f
            if dfs:
                dfm, dxm = np.array(dfs).T, np.array(dxs).T
                x = x + f - (dxm + dfm) @ np.linalg.lstsq(dfm, f, rcond=None)[0]
            else:
                x = x + 0.5 * f
            x = np.clip(x, 1.25, 1.60)  # keep iterates physical; fixed points lie within 1.33–1.52 Å
        if not done:
            break
        fac, e, c, occ, open_shell = solve(x)
        if open_shell:
            x = x + 0.02 * seed
            continue
        d = (fac * slope_A / BETA_DECAY_A)[cc]  # ∂F/∂x = slope · π · f/λ
        pol = bond_polarizability(c, e, occ, b)[np.ix_(cc, cc)]
        lam, vec = np.linalg.eigh(np.sqrt(d)[:, None] * pol * np.sqrt(d)[None, :])
        if lam[-1] < 1.0 - 1e-9:
            r[cc] = x
            return r, True, total
        mode = vec[:, -1] / np.sqrt(d)
        mode *= np.sign(mode @ seed) or 1.0
        x = x + 0.02 * mode / np.max(np.abs(mode))
    r[cc] = x
    return r, False, total


_GL_X, _GL_W = np.polynomial.legendre.leggauss(400)
_GL_K, _GL_W = 0.5 * np.pi * (_GL_X + 1.0), 0.5 * np.pi * _GL_W  # Gauss–Legendre on [0, π]


def polyene_chain_lengths(r0_A: float, slope_A: float, *, decay_A: float = BETA_DECAY_A, tol_A: float = 1e-12,
                          max_iter: int = 5000) -> tuple[float, float, float, float]:
    """Self-consistent bond lengths of the infinite all-trans polyene for r = R0 − S p and β(r).

    Two sites per cell, resonance integrals t1 = f(r1), t2 = f(r2) (f = β/β0 of
    :func:`beta_distance_factor`, decay ``decay_A``), lower band filled. Coulson bond orders from the
    band integrals (Gauss–Legendre, 400 nodes): p1 = (1/π) ∫_0^π (t1 + t2 cos k)/ε(k) dk and p2 likewise
    with t1 ↔ t2, ε = (t1² + t2² + 2 t1 t2 cos k)^½ (p1 = p2 = 2/π for t1 = t2, textbook). The
    equal-bond solution is unstable for any coupling (Peierls), so the damped iteration starts from an
    alternated seed and reaches the dimerised one.

    Returns (r_short, r_long, p_short, p_long): Å, Å, bond orders. Raises RuntimeError without
    convergence.
    """
    f = lambda r: np.exp(-(r - BETA_REF_LENGTH_A) / decay_A)  # noqa: E731
    cosk = np.cos(_GL_K)
    r1, r2 = r0_A - slope_A * 0.8, r0_A - slope_A * 0.45
    for _ in range(max_iter):
        t1, t2 = f(r1), f(r2)
        eps = np.sqrt(t1 * t1 + t2 * t2 + 2.0 * t1 * t2 * cosk)
        p1 = float(_GL_W @ ((t1 + t2 * cosk) / eps)) / np.pi
        p2 = float(_GL_W @ ((t2 + t1 * cosk) / eps)) / np.pi
        n1, n2 = r0_A - slope_A * p1, r0_A - slope_A * p2
        if abs(n1 - r1) + abs(n2 - r2) < tol_A:
            return float(n1), float(n2), p1, p2
        r1, r2 = 0.5 * (r1 + n1), 0.5 * (r2 + n2)
    raise RuntimeError("polyene_chain_lengths: no self-consistent solution")


def calibrate_chain_slope(bla_A: float, *, r_ref_A: float = BETA_REF_LENGTH_A, p_ref: float = 2.0 / 3.0,
                          decay_A: float = BETA_DECAY_A) -> tuple[float, float]:
    """Slope S and intercept R0 of r = R0 − S p that pass through (p_ref, r_ref_A) (benzene: 2/3,
    1.397 Å) and give the infinite all-trans polyene the bond-length alternation ``bla_A`` (Å).

    Solved with Brent's method on S in [0.05, 0.6] Å. Returns (S, R0) in Å.
    """
    from scipy.optimize import brentq

    def excess(s):
        r1, r2 = polyene_chain_lengths(r_ref_A + s * p_ref, s, decay_A=decay_A)[:2]
        return (r2 - r1) - bla_A

    s = brentq(excess, 0.05, 0.6, xtol=1e-12)
    return float(s), float(r_ref_A + s * p_ref)


#: The calibrated ``"scf"`` relation r = SCF_R0_A − SCF_SLOPE_A p (module notes), computed here from its
#: two inputs (benzene 1.397 Å, polyacetylene BLA 0.08 Å): S = 0.1988 Å, R0 = 1.5295 Å.
SCF_SLOPE_A, SCF_R0_A = calibrate_chain_slope(POLYACETYLENE_BLA_A)
#: beta_model name -> (R0, S, source) of the self-consistent bond-length models.
SCF_RELATIONS: dict[str, tuple[float, float, str]] = {
    "scf": (SCF_R0_A, SCF_SLOPE_A, "through benzene 1.397 A; infinite-polyene BLA 0.08 A of trans-polyacetylene "
            "(Yannoni & Clarke, Phys. Rev. Lett. 1983, 51, 1191, from memory)"),
    "scf-coulson": (COULSON_R0_A, COULSON_SLOPE_A, "Coulson 1939, linearised through ethylene and benzene "
                    "(from memory)"),
}


def kirchhoff_decomposition(bond_currents, incidence):
    """Least-squares circuit currents x with incidence @ x ≈ bond_currents (exact for a cycle basis).

    Parameters
    ----------
    bond_currents : (k, m) currents in m bonds for k field directions
    incidence : (m, c) +1/−1/0: +1 if circuit c traverses bond (i, j) from i to j

    Returns
    -------
    x : (k, c) circuit currents in the sense of the traversal
    residual : float, max over rows of ‖incidence x − J‖ / max(‖J‖, 1e-300)
    """
    jb = np.atleast_2d(np.asarray(bond_currents, dtype=np.float64))
    inc = np.asarray(incidence, dtype=np.float64)
    if inc.shape[1] == 0:
        return np.zeros((jb.shape[0], 0)), 1.0 if np.any(jb) else 0.0
    x = np.linalg.lstsq(inc, jb.T, rcond=None)[0]
    res = np.linalg.norm((inc @ x).T - jb, axis=1)
    return x.T, float(np.max(res) / max(float(np.max(np.linalg.norm(jb, axis=1))), 1e-300))


def regular_polygon(n: int, side_A: float = BETA_REF_LENGTH_A) -> np.ndarray:
    """Vertices (n, 3) of a regular n-gon in the xy plane, counter-clockwise about +z, centred at 0."""
    rad = side_A / (2.0 * np.sin(np.pi / n))
    t = 2.0 * np.pi * np.arange(n) / n
    return np.column_stack([rad * np.cos(t), rad * np.sin(t), np.zeros(n)])


@lru_cache(maxsize=None)
def benzene_reference_response(beta_model: str) -> float:
    """Diatropic ring-current response g of benzene (regular hexagon, 1.397 Å) in the given β model.

    Returns the positive number, in Å², that a circuit current is divided by to give J/J_benzene.
    A constant of the model: computed once per β model and process (cached).
    """
    xyz = regular_polygon(6)
    bonds = np.array([(i, (i + 1) % 6) for i in range(6)])
    ov = np.ones(6)
    if beta_model in SCF_RELATIONS:
        dbl = np.array([True, False] * 3)
        r0, slope = SCF_RELATIONS[beta_model][:2]
        r, _, _ = scf_cc_lengths(np.zeros(6), bonds, np.ones(6), np.ones(6, bool), ov, dbl, 6, r0_A=r0, slope_A=slope)
        res = beta_distance_factor(r)
    else:  # uniform and distance coincide at 1.397 Å
        res = np.ones(6)
    h0 = huckel_matrix(np.zeros(6), bonds, res)
    e, c = np.linalg.eigh(h0)
    occ = occupy(e, 6)[0]
    g = london_bond_response(h0, xyz, bonds, e, c, occ)[2]
    # g > 0 along the counter-clockwise bonds for B along +z: the conventional current −K g runs
    # clockwise, i.e. diatropic (checked against m = −∂E/∂B in the tests)
    return float(np.mean(g))


def absolute_current_nA_per_T(g_A2, beta0_eV: float = BETA0_EV):
    """Convert a response g (Å²) into a current susceptibility in nA/T: 2 (e/ħ)² |β0| g.

    The conventional current is −2 (e/ħ)² |β| g B (module notes); the sign is left to the caller.
    """
    e_over_hbar = _sc.e / _sc.hbar  # 1/(T m²)
    beta_j = abs(beta0_eV) * _sc.e
    return 2.0 * e_over_hbar**2 * beta_j * 1e-20 * np.asarray(g_A2, dtype=np.float64) * 1e9


def pi_charge_shift_ppm(charges_on_parent_atoms, *, k_ppm_per_e: float = PI_CHARGE_PPM_PER_E) -> np.ndarray:
    """π-charge shift Δδ = k·q of a proton on an atom of π charge q = Z − P (ppm, positive = downfield).

    Excess π density (q < 0) moves the proton upfield: k ≈ 10.7 ppm per electron (Schaefer &
    Schneider, Can. J. Chem. 1963, 41, 966; from memory); Fraenkel et al. (J. Am. Chem. Soc. 1960, 82,
    5846) measured C5H5⁻ 1.85 ppm upfield and C7H7⁺ 1.9 ppm downfield of benzene.

    Parameters
    ----------
    charges_on_parent_atoms : (n,) array_like, electrons
    k_ppm_per_e : float, keyword-only

    Returns
    -------
    (n,) float64, ppm. Apply separately from the ring-current term.
    """
    try:
        q = np.asarray(charges_on_parent_atoms, dtype=np.float64).reshape(-1)
    except (TypeError, ValueError):
        raise InputError("charges_on_parent_atoms: expected a sequence of π charges (numbers)") from None
    if not np.all(np.isfinite(q)):
        raise InputError("charges_on_parent_atoms: contains NaN or inf; expected finite π charges")
    return k_ppm_per_e * q
