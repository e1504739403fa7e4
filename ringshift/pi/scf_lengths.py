"""Self-consistent C–C bond lengths: the model energy, its stable fixed points from several starts, the choice.

The ``"scf"`` and ``"scf-coulson"`` β models make the C–C lengths r self-consistent with the π bond orders p
through r = R0 − S w p, β(r) = β0 w f(r), f(r) = exp(−(r − 1.397 Å)/λ), λ = 0.3106 Å (lines and their
calibration: :mod:`ringshift.pi.bond_lengths`); w is the bond's fixed factor (p-orbital alignment |cos ω|
and any explicit distortion; w = 1 for a planar, undistorted bond, where the relation is the plain line).

Energy (Longuet-Higgins & Salem, Proc. R. Soc. A 1959, 251, 172; Su, Schrieffer & Heeger, Phys. Rev. Lett.
1979, 42, 1698; both from memory): E(r) = E_π(β(r)) + Σ_CC U(r_b), with E_π = |β0| Σ_k n_k x_k (eV; x_k the
Hückel levels in units of |β0|) and a σ-bond energy U. Longuet-Higgins & Salem take U harmonic,
½ K (r − r0)²; its stationarity gives r = r0 − (2|β0| f(r)/(λK)) w p, a line only where f ≈ 1. To make the
model's straight line r = R0 − S w p *exactly* the stationarity condition, U is chosen so that
U'(r) = K f(r) (r − R0) with K = 2|β0|/(λ S) and r0 = R0:

    U(r) = K λ² [f(R0) − f(r) (1 + (r − R0)/λ)],

which is the harmonic ½ K f(R0) (r − R0)² to second order about R0. For ``"scf"`` (R0 1.5295, S 0.1988 Å,
β0 −3.02 eV of :data:`ringshift.pi.parameters.BETA0_EV`) K = 97.6 eV/Å², K f(R0) = 63.8 eV/Å².
Then ∇E = D (r − F(r)) with D = diag(K f(r)) > 0 and F the map r ↦ R0 − S w p(r): the fixed points of the
map are exactly the stationary points of E, a fixed point is a minimum exactly when the largest
eigenvalue of the Jacobian of F (similar to the symmetric S/λ · (w²f)^½ π (w²f)^½, π the bond–bond
polarisability) is below 1, and E orders the solutions.

Search (:func:`scf_fixed_points`): from each start, a damped descent of E (L-BFGS-B on E and its exact
gradient; Byrd, Lu, Nocedal & Zhu, SIAM J. Sci. Comput. 1995, 16, 1190), then Anderson acceleration of the
fixed-point map to 1e-9 Å (Walker & Ni, SIAM J. Numer. Anal. 2011, 49, 1715). Starts, in this order: the
Kekulé alternation at the infinite-chain amplitude (±0.04 Å, so an alternated minimum is reached whenever
one exists), the opposite Kekulé phase, equal bonds with a small deterministic perturbation (1e-3 Å,
a fixed pseudo-random pattern, so no symmetry keeps the descent on a saddle), and the geometry's own C–C
lengths. A stationary point that is not a minimum is left along its unstable mode (both senses) unless a
minimum already found lies below it (in the annulenes the saddle is the equal-bond point above both Kekulé
minima, and following it only found them again at twice the cost). Distinct
stable closed-shell minima (max |Δr| > 1e-4 Å) are kept. The choice is the lowest E; ties within 1e-9 eV
(e.g. the two Kekulé phases of a symmetric ring) go to the lexicographically smaller rounded lengths, so the
same input always gives the same choice.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ringshift.pi.huckel import beta_distance_factor, bond_polarizability, huckel_matrix, occupy
from ringshift.pi.parameters import BETA0_EV, BETA_DECAY_A, BETA_REF_LENGTH_A, DEGENERACY_TOL

__all__ = ["ScfPoint", "ScfSearch", "scf_fixed_points", "scf_cc_lengths", "sigma_energy_eV", "spring_constant",
           "KCAL_PER_MOL_PER_EV", "bond_length_alternation"]

#: 1 eV per molecule in kcal/mol (CODATA e·N_A / 4184 J/kcal).
KCAL_PER_MOL_PER_EV = 23.060548

_KEKULE_AMPLITUDE_A = 0.04  # half the trans-polyacetylene BLA of 0.08 Å (Yannoni & Clarke 1983, from memory)

_SAME_A = 1e-4  # two minima closer than this (max |Δr|) are one solution


def spring_constant(slope_A: float, beta0_eV: float = BETA0_EV) -> float:
    """K = 2|β0|/(λ S) in eV/Å² (module notes): S the slope of r = R0 − S p, λ = 0.3106 Å."""
    return 2.0 * abs(beta0_eV) / (BETA_DECAY_A * slope_A)


def sigma_energy_eV(r_A, r0_A: float, slope_A: float, beta0_eV: float = BETA0_EV) -> np.ndarray:
    """σ energy U(r) = K λ² [f(R0) − f(r)(1 + (r − R0)/λ)] of each bond, eV; r_A (m,) Å. Returns (m,)."""
    r = np.asarray(r_A, dtype=np.float64)
    lam = BETA_DECAY_A
    k = spring_constant(slope_A, beta0_eV)
    return k * lam**2 * (beta_distance_factor(r0_A) - beta_distance_factor(r) * (1.0 + (r - r0_A) / lam))


def bond_length_alternation(lengths_A, bonds) -> float:
    """Mean |r_a − r_b| over pairs of bonds sharing an atom, Å (0 without such pairs).

    lengths_A (m,) Å; bonds (m, 2) index pairs. For a monocycle, the alternation amplitude of adjacent bonds.
    """
    r = np.asarray(lengths_A, dtype=np.float64)
    b = np.asarray(bonds).reshape(-1, 2)
    diffs = []
    for a in sorted(set(b.ravel().tolist())):    # not np.unique: it loads numpy.ma (~30 ms at start-up)
        at = np.flatnonzero((b == a).any(axis=1))  # the bonds of atom a
        diffs += [abs(r[i] - r[j]) for n, i in enumerate(at) for j in at[n + 1:]]
    return float(np.mean(diffs)) if diffs else 0.0


@dataclass(frozen=True, eq=False)
class ScfPoint:
    """One stationary point of the model energy: lengths_A (m_cc,) Å of the iterated C–C bonds; energy_eV =
    E_π + Σ U (eV, α dropped); pi_energy_eV; max_jacobian (largest eigenvalue of the map's Jacobian, < 1 for a
    minimum; inf for a degenerate open shell); degenerate_open_shell (a partly filled degenerate shell: no
    linear response, not accepted; a non-degenerate singly occupied level, a radical, is accepted); residual_A =
    max |F(r) − r|; start (which start found it)."""

    lengths_A: np.ndarray
    energy_eV: float
    pi_energy_eV: float
    max_jacobian: float
    degenerate_open_shell: bool
    residual_A: float
    start: str

    @property
    def stable(self) -> bool:
        return not self.degenerate_open_shell and self.residual_A < 1e-7 and self.max_jacobian < 1.0 - 1e-9


@dataclass(frozen=True, eq=False)
class ScfSearch:
    """Result of :func:`scf_fixed_points`: points (distinct stable minima, chosen first, then by energy; when no
    stable minimum was found, the best point found, unstable); converged (a stable closed-shell minimum was
    found); n_evaluations (diagonalisations); n_starts."""

    points: tuple[ScfPoint, ...]
    converged: bool
    n_evaluations: int
    n_starts: int

    @property
    def chosen(self) -> ScfPoint:
        return self.points[0]


class _Model:
    """The fragment's arrays and the energy, map and stability of the self-consistent step."""

    def __init__(self, h_diag, bonds, fixed_resonance, is_cc, weight, n_electrons, r0_A, slope_A, beta0_eV):
        self.hd = np.asarray(h_diag, dtype=np.float64)
        self.b = np.asarray(bonds, dtype=np.intp).reshape(-1, 2)
        self.kfix = np.asarray(fixed_resonance, dtype=np.float64)
        self.cc = np.asarray(is_cc, dtype=bool)
        self.w = np.asarray(weight, dtype=np.float64)
        self.n_el, self.r0, self.s, self.beta = int(n_electrons), r0_A, slope_A, abs(beta0_eV)
        self.h0 = huckel_matrix(self.hd, self.b, np.zeros(self.b.shape[0]))
        self.k = spring_constant(slope_A, beta0_eV)
        self.n_eval = 0
        # |p| <= 1 and w <= 1 put every fixed point inside R0 ± S: the box never excludes one
        self.box = (r0_A - slope_A * max(1.0, float(np.max(self.w, initial=1.0))) - 0.02,
                    r0_A + slope_A * max(1.0, float(np.max(self.w, initial=1.0))) + 0.02)

    def levels(self, x):
        self.n_eval += 1
        rr = np.full(self.b.shape[0], BETA_REF_LENGTH_A)
        rr[self.cc] = x
        fac = np.where(self.cc, beta_distance_factor(rr), self.kfix) * self.w
        h = self.h0.copy()
        h[self.b[:, 0], self.b[:, 1]] = h[self.b[:, 1], self.b[:, 0]] = -fac
        e, c = np.linalg.eigh(h)
        half = self.n_el // 2
        if self.n_el % 2 == 0 and 0 < half < e.size and e[half] - e[half - 1] > DEGENERACY_TOL:  # closed shell
            occ = np.zeros(e.size)
            occ[:half] = 2.0
            bad = False
        else:
            occ, open_shell, degenerate = occupy(e, self.n_el)[:3]
            bad = open_shell and degenerate
        nz = occ > 0
        p = (c[self.b[:, 0]][:, nz] * c[self.b[:, 1]][:, nz]) @ occ[nz]
        return fac, e, c, occ, bad, p

    def energy_grad(self, x):
        fac, e, _, occ, _, p = self.levels(x)
        e_pi = self.beta * float(occ @ e)
        u = sigma_energy_eV(x, self.r0, self.s, -self.beta)
        g = self.k * beta_distance_factor(x) * (x - self.fmap_from(p))  # ∇E = K f (r − F(r))
        return e_pi + float(np.sum(u)), g, e_pi

    def fmap_from(self, p):
        return self.r0 - self.s * self.w[self.cc] * p[self.cc]

    def fmap(self, x):
        return self.fmap_from(self.levels(x)[5])

    def assess(self, x, start):
        """ScfPoint at x, with the unstable mode (None for a minimum)."""
        fac, e, c, occ, open_shell, p = self.levels(x)
        en, _, e_pi = self.energy_grad(x)
        res = float(np.max(np.abs(self.fmap_from(p) - x)))
        if open_shell:
            return ScfPoint(x.copy(), en, e_pi, float("inf"), True, res, start), None
        d = self.s / BETA_DECAY_A * (fac * self.w)[self.cc]  # S/λ · w² f  (fac = w f)
        pol = bond_polarizability(c, e, occ, self.b)[np.ix_(self.cc, self.cc)]
        lam, vec = np.linalg.eigh(np.sqrt(d)[:, None] * pol * np.sqrt(d)[None, :])
        mode = vec[:, -1] / np.sqrt(d)
        pt = ScfPoint(x.copy(), en, e_pi, float(lam[-1]), False, res, start)
        return pt, (None if pt.stable else mode / np.max(np.abs(mode)))


def _anderson(model: _Model, x, tol_A: float, max_iter: int, depth: int = 6):
    """Anderson-accelerated fixed-point iteration of r = F(r) from x; returns (x, converged)."""
    dxs: list[np.ndarray] = []
    dfs: list[np.ndarray] = []
    x_old = f_old = None
    for _ in range(max_iter):
        f = model.fmap(x) - x
        if np.max(np.abs(f)) < tol_A:
            return x, True
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
        x = np.clip(x, *model.box)
    return x, False


def _descend(model: _Model, x0, tol_A: float, start: str, max_iter: int):
    """One start: Anderson iteration (fast); where it fails or ends on an open shell, a damped descent of E
    (L-BFGS-B) and an Anderson polish. Returns (ScfPoint, unstable mode or None)."""
    x, ok = _anderson(model, np.asarray(x0, dtype=np.float64), tol_A, max_iter)
    if ok:  # a minimum, or a saddle that the caller leaves along its unstable mode
        pt, mode = model.assess(x, start)
        if pt.stable or not pt.degenerate_open_shell:
            return pt, mode
    from scipy.optimize import minimize  # imported on first use: SciPy's optimize costs ~0.3 s at start-up

    out = minimize(lambda v: model.energy_grad(v)[:2], np.clip(x0, *model.box), jac=True, method="L-BFGS-B",
                   bounds=[model.box] * x0.size, options={"maxiter": 5 * max_iter, "ftol": 1e-15, "gtol": 1e-10})
    x, ok = _anderson(model, np.asarray(out.x, dtype=np.float64), tol_A, max_iter)
    if not ok or np.max(np.abs(x - out.x)) > 0.01:  # the polish left the basin: keep the descent's point
        x = np.asarray(out.x, dtype=np.float64)
    return model.assess(x, start)


def _key(pt: ScfPoint):
    return (round(pt.energy_eV, 9), tuple(np.round(pt.lengths_A, 5)))


def scf_fixed_points(h_diag, bonds, fixed_resonance, is_cc, weight, kekule_double, n_electrons, *,
                     r0_A: float, slope_A: float, beta0_eV: float = BETA0_EV, geometry_lengths_A=None,
                     tol_A: float = 1e-9, max_restarts: int = 4, max_iter: int = 80) -> ScfSearch:
    """All stable closed-shell self-consistent C–C lengths found from several starts, chosen one first.

    Parameters
    ----------
    h_diag : (n,) Coulomb parameters h_X
    bonds : (m, 2) local index pairs
    fixed_resonance : (m,) β/β0 of bonds whose β does not depend on length (k_CX; ignored for C–C)
    is_cc : (m,) bool, the iterated C–C bonds
    weight : (m,) fixed factor w on every β (|cos ω| alignment × explicit distortion)
    kekule_double : (m,) bool, double bonds of a Kekulé structure (the alternated starts)
    n_electrons : int
    r0_A, slope_A : R0 and S of r = R0 − S w p, Å (keyword-only)
    beta0_eV : β0 for the energy scale, eV
    geometry_lengths_A : (m,) Å, optional; the geometry's lengths, one more start
    tol_A : fixed-point tolerance, Å; max_restarts : displacements along unstable modes; max_iter : Anderson
        iterations per start (L-BFGS-B: five times as many)

    Returns
    -------
    ScfSearch (module notes: starts, the energy, the choice)
    """
    model = _Model(h_diag, bonds, fixed_resonance, is_cc, weight, n_electrons, r0_A, slope_A, beta0_eV)
    cc = model.cc
    m = int(cc.sum())
    if m == 0:
        return ScfSearch((ScfPoint(np.zeros(0), 0.0, 0.0, 0.0, False, 0.0, "none"),), True, 0, 0)
    seed = np.where(np.asarray(kekule_double, dtype=bool)[cc], -1.0, 1.0)
    pattern = np.cos(2.399963 * np.arange(m) + 0.5)  # golden-angle pattern: deterministic, no symmetry
    starts = [("kekule", BETA_REF_LENGTH_A + _KEKULE_AMPLITUDE_A * seed),
              ("kekule-reversed", BETA_REF_LENGTH_A - _KEKULE_AMPLITUDE_A * seed),
              ("equal", BETA_REF_LENGTH_A + 1e-3 * pattern)]
    if geometry_lengths_A is not None:
        geo = np.clip(np.asarray(geometry_lengths_A, dtype=np.float64)[cc], *model.box)
        starts.append(("geometry", geo + 1e-4 * pattern))
    found: list[ScfPoint] = []
    others: list[ScfPoint] = []
    n_starts, restarts = 0, 0
    while starts:
        name, x0 = starts.pop(0)
        n_starts += 1
        pt, mode = _descend(model, x0, tol_A, name, max_iter)
        if pt.stable:
            if not any(np.max(np.abs(pt.lengths_A - q.lengths_A)) < _SAME_A for q in found):
                found.append(pt)
            continue
        others.append(pt)
        if restarts < max_restarts and not any(q.energy_eV < pt.energy_eV for q in found):
            # leave a saddle (or an open shell) along its unstable mode, both senses, unless a minimum found
            # already lies below it (measured: its descents then meet the minima of the Kekulé starts)
            restarts += 2
            step = seed if mode is None else mode
            starts += [(name + "+mode", pt.lengths_A + 0.02 * step), (name + "-mode", pt.lengths_A - 0.02 * step)]
    if found:
        return ScfSearch(tuple(sorted(found, key=_key)), True, model.n_eval, n_starts)
    best = min(others, key=lambda q: (q.residual_A > 1e-7, q.degenerate_open_shell, _key(q)))
    return ScfSearch((best,), False, model.n_eval, n_starts)


def scf_cc_lengths(h_diag, bonds, fixed_resonance, is_cc, overlap, kekule_double, n_electrons, *,
                   r0_A: float, slope_A: float, beta0_eV: float = BETA0_EV):
    """The chosen solution of :func:`scf_fixed_points` as (lengths (m,) Å with C–C entries set and others 0,
    converged, n_evaluations)."""
    s = scf_fixed_points(h_diag, bonds, fixed_resonance, is_cc, overlap, kekule_double, n_electrons,
                         r0_A=r0_A, slope_A=slope_A, beta0_eV=beta0_eV)
    r = np.zeros(np.asarray(bonds).reshape(-1, 2).shape[0])
    r[np.asarray(is_cc, dtype=bool)] = s.chosen.lengths_A
    return r, s.converged, s.n_evaluations
