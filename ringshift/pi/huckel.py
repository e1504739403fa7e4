"""Hückel levels: the Hückel matrix, occupations, bond orders and the self-consistent bond lengths.

The kernels take arrays and return arrays; :func:`huckel` is the wrapper that takes a
:class:`ringshift.pi.perception.PiSystem` and an RDKit molecule and returns a :class:`HuckelResult`.

Energies are in units of |β| with ``x = (E − α)/|β|``: bonding levels are **negative** (benzene: −2, −1,
−1, 1, 1, 2). The Hückel matrix in these units is ``h0 = −A`` where A holds the heteroatom parameters h_X on
the diagonal (α_X = α + h_X β) and the resonance factors k_rs · f(r_rs) · |cos ω_rs| off the diagonal
(β_rs = k_rs f(r) |cos ω| β0, β0 < 0). Parameters and their sources: :mod:`ringshift.pi.parameters`; the
London response built on these levels: :mod:`ringshift.pi.london`.

Möbius topology
---------------
Every β carries the cosine of the angle between the two p-orbital axes *with its sign*: the axes are
oriented consistently along a spanning tree of the π graph, so a negative cosine is left only on a bond
that closes a ring with an odd number of p-orbital phase inversions. Such a ring has Möbius topology: its
levels are those of Heilbronner's Möbius Hückel model (Tetrahedron Lett. 1964, 5, 1923), 2β cos((2k+1)π/N),
4n π electrons close the shell and 4n+2 leave a degenerate half-filled pair, so the Hückel–London currents
built on these levels follow the Möbius rule (4n diatropic, 4n+2 paratropic or open shell), never the
Hückel rule. Which sign a bond gets is a gauge (another spanning tree moves it to another bond of the same
ring); the levels and currents do not depend on it. In a ring of Hückel topology all cosines come out
positive and the model is the usual |cos| one.

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
  (p = 2/3). Measured (:func:`ringshift.pi.bond_lengths.polyene_chain_lengths`): the infinite all-trans
  polyene comes out 1.369/1.437 Å, BLA 0.067 Å, i.e. it under-alternates.
* ``"scf"`` (calibrated): the line passes through benzene (1.397 Å at p = 2/3, so small 4n+2 rings stay
  D6h) and S is chosen so that the self-consistent infinite all-trans polyene (analytic band integrals,
  :func:`ringshift.pi.bond_lengths.calibrate_chain_slope`) has the bond-length alternation of
  trans-polyacetylene, 0.08 Å
  (1.36/1.44 Å from nutation NMR; Yannoni & Clarke, Phys. Rev. Lett. 1983, 51, 1191, from memory).
  This gives S = 0.1988 Å, R0 = 1.5295 Å; the chain comes out 1.365/1.445 Å (the mean is not fitted).
  Checks not used in the calibration: ethylene 1.331 Å (1.339 Å by electron diffraction), naphthalene
  and planar cyclooctatetraene within 0.015 / 0.01 Å of experiment (tests/pi/test_pisystem.py). No
  annulene NMR datum enters; see :mod:`ringshift.pi.perception` for what it does to annulene currents.

The self-consistent lengths come from :mod:`ringshift.pi.scf_lengths`: several starts (both Kekulé phases,
perturbed equal bonds, the geometry's lengths), a damped descent of the Longuet-Higgins–Salem model energy
E = E_π + Σ U(r) (U chosen so that its stationary points are exactly the fixed points of r = R0 − S w p, w the
bond's alignment/distortion factor), and the lowest-energy stable closed-shell solution; the other stable
solutions are kept (``HuckelResult.scf_alternatives``) and a search without a stable solution says so
(``converged=False`` and a warning). Measured on regular planar annulenes with ``"scf"``: [14] equal bonds,
[18] onwards alternated (BLA 0.060 Å for [18], 0.079 Å for [34]); 4n rings alternated and paratropic
(benchmarks/bench_scf_step.py). The published onset of (4n+2) alternation lies near [30] (Choi & Kertesz,
J. Chem. Phys. 1998, 108, 6681, from memory; [18]annulene delocalised, Wannere et al. 2003, from memory):
the polyacetylene calibration (whose alternation owes much to electron correlation, absent here) makes the
model alternate too early; its [18]annulene current (1.24×, honeycomb) is nonetheless close to what the
observed shifts imply (:mod:`ringshift.pi.perception`).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from ringshift import _validation as _v
from ringshift.constants import BETA_MODELS
from ringshift.errors import InputError
from ringshift.pi.bond_lengths import SCF_RELATIONS
from ringshift.pi.parameters import (
    BETA_DECAY_A,
    BETA_REF_LENGTH_A,
    DEGENERACY_TOL,
    HETERO_PARAMETERS,
)
from ringshift.pi.perception import (
    PiSystem,
    _frozen,
    _p_axes,
    circuit_electrons,
)

#: Opening words of the warning of a self-consistent step that found no stable solution (read by predict).
SCF_NO_SOLUTION_NOTE = "scf bond lengths: no stable closed-shell self-consistent solution"

__all__ = ['SCF_NO_SOLUTION_NOTE', 'HuckelResult', 'huckel', 'beta_distance_factor', 'huckel_matrix', 'occupy',
           'solve_fragments', 'density_matrix', 'bond_polarizability', 'shared_ring_overlap']



@dataclass(frozen=True, eq=False)
class HuckelResult:
    """Hückel levels of a π system; arrays are read-only, aligned with ``pi.atoms`` / ``pi.bonds``.

    energies_beta (n,) ascending, x = (E − α)/|β| (bonding negative); vectors (n, n) MO columns;
    occupations (n,), each π fragment filled with its own electrons; homo_lumo_gap_beta (smallest
    over fragments; None if undefined; 0 for a partly filled shell); open_shell; degenerate_homo;
    degenerate_open_shell (a partly filled degenerate HOMO shell); mo_fragment (n,); charges (n,) q = Z − P_rr (e);
    bond_orders (n_bonds,) Coulson P_rs; resonance (n_bonds,) β_rs/β0 used; bond_lengths_A (n_bonds,) lengths
    entering β(r) (geometry, or self-consistent C–C lengths for "scf" / "scf-coulson"; None for "uniform");
    beta_model; parameters (table and citations); converged (scf); warnings.
    """

    energies_beta: np.ndarray
    vectors: np.ndarray
    occupations: np.ndarray
    homo_lumo_gap_beta: float | None
    open_shell: bool
    degenerate_homo: bool
    charges: np.ndarray
    bond_orders: np.ndarray
    resonance: np.ndarray
    bond_lengths_A: np.ndarray | None
    beta_model: str
    parameters: dict = field(default_factory=dict)
    converged: bool = True
    warnings: tuple[str, ...] = ()
    degenerate_open_shell: bool = False
    mo_fragment: np.ndarray | None = None
    scf_energy_eV: float | None = None
    scf_alternatives: tuple[HuckelResult, ...] = ()
    scf_energy_above_kcal_per_mol: float = 0.0
    scf_fragment: int | None = None
    scf_starts: int = 0
    scf_evaluations: int = 0


def _check_model(beta_model: str, pi) -> None:
    if beta_model not in BETA_MODELS:
        raise InputError(f"beta_model: expected one of {', '.join(BETA_MODELS)}, got {beta_model!r}")
    if not isinstance(pi, PiSystem):
        raise InputError(f"pi: expected a PiSystem from perceive_pi, got {type(pi).__name__}")


def _hetero_k(ta: str, tb: str) -> float:
    """k_XY: 1 for C–C, k_CX for C–X, sqrt(k_CX k_CY) for X–Y (common practice, no source)."""
    ka = 1.0 if ta.startswith("C") else HETERO_PARAMETERS[ta][1]
    kb = 1.0 if tb.startswith("C") else HETERO_PARAMETERS[tb][1]
    return ka * kb if ta.startswith("C") or tb.startswith("C") else float(np.sqrt(ka * kb))


def shared_ring_overlap(pi: PiSystem, mol, local_bonds, overlap) -> np.ndarray:
    """p-orbital alignment factors with the misalignment of every (4n+2)-electron circuit shared by its bonds.

    A force field with localised single/double bond parameters (MMFF94) puts the torsional strain of a
    non-planar conjugated ring on the formal single bonds; read back as an alternating β, the imposed pattern
    locks the self-consistent step into a localised solution (1,6-methano[10]annulene: |cos ω| 0.69–1.00,
    alternation 0.14 Å and 0.16 × benzene). A (4n+2)-electron perimeter below the alternation onset is
    delocalised (X-ray of 1,6-methano[10]annulene: Bianchi, Pilati & Simonetta, Acta Cryst. B 1980, 36, 3146,
    from memory; its GFN2-xTB geometry, Bannwarth, Ehlert & Grimme, J. Chem. Theory Comput. 2019, 15, 1652,
    spreads the misalignment: |cos ω| 0.89–0.99), so each of its bonds takes the circuit's geometric-mean |cos ω|
    (a bond in several such circuits, the arithmetic mean of those). The geometric mean keeps the product of the
    alignment factors around the loop, the term of the secular determinant that carries the flux through the ring
    (a ring's only closed path; textbook tight-binding identity); an arithmetic mean would raise it whenever the
    twist is uneven (1,6-methano[10]annulene 1.11 → 1.09 × benzene; an anti-bridged [14]annulene with two bonds
    twisted 82°, 1.15 → 0.95). A 4n-electron circuit is genuinely bond-alternated
    (first-order Jahn–Teller) and keeps its bond-by-bond factors (GFN2-xTB [16]annulene twists four single
    bonds, |cos ω| 0.83, the others 1.00); so do bonds outside every (4n+2) circuit (biaryl links).

    local_bonds (m, 2) π-local indices; overlap (m,) |cos ω|. Returns (m,).
    """
    from ringshift.geometry.circuits import find_circuits  # circuits build on the π graph of this package

    ov = np.asarray(overlap, dtype=np.float64)
    if not len(ov) or np.all(ov >= 1.0 - 1e-12):
        return ov
    pos = {(int(min(i, j)), int(max(i, j))): n for n, (i, j) in enumerate(np.asarray(local_bonds).reshape(-1, 2))}
    where = {a: k for k, a in enumerate(pi.atoms)}
    sums, counts = np.zeros(len(ov)), np.zeros(len(ov))
    for circ in find_circuits(mol, pi.atoms, pi.bonds):
        if any(a not in where for a in circ.atoms):
            continue
        try:
            if circuit_electrons(pi, circ.atoms, mol) % 4 != 2:
                continue
        except InputError:
            continue
        loc = [where[a] for a in circ.atoms]
        pairs = [(min(a, b), max(a, b)) for a, b in zip(loc, loc[1:] + loc[:1])]
        if any(pr not in pos for pr in pairs):
            continue
        idx = np.array([pos[pr] for pr in pairs], dtype=np.intp)
        sums[idx] += float(np.exp(np.mean(np.log(np.maximum(ov[idx], 1e-6)))))
        counts[idx] += 1
    return np.where(counts > 0, sums / np.maximum(counts, 1), ov)


def _setup(pi: PiSystem, mol, xyz, distortion):
    idx = {a: k for k, a in enumerate(pi.atoms)}
    lb = np.array([(idx[i], idx[j]) for i, j in pi.bonds], dtype=np.intp).reshape(-1, 2)
    hd = np.array([HETERO_PARAMETERS[t][0] for t in pi.atom_types])
    k = np.array([_hetero_k(pi.atom_types[i], pi.atom_types[j]) for i, j in lb])
    is_cc = np.array([pi.atom_types[i].startswith("C") and pi.atom_types[j].startswith("C") for i, j in lb], bool)
    dbl = np.array([o >= 2 for o in pi.bond_kekule], bool).reshape(-1) if pi.bond_kekule else np.zeros(len(lb), bool)
    if xyz is not None and pi.atoms:
        axes, _ = _p_axes(mol, xyz, pi.atoms, pi.bonds)
        # signed overlap: the axes are oriented along a spanning tree, so a negative cosine remains only on a
        # bond closing a ring with an odd number of phase inversions (Möbius topology; module notes); the
        # magnitude of a (4n+2)-electron circuit's misalignment is shared by its bonds (shared_ring_overlap)
        signed = np.array([float(np.clip(np.dot(axes[i], axes[j]), -1.0, 1.0)) for i, j in lb])
        ov = np.where(signed < 0.0, -1.0, 1.0) * shared_ring_overlap(pi, mol, lb, np.abs(signed))
        ends = np.array(pi.bonds, dtype=np.intp).reshape(-1, 2)
        lengths = np.linalg.norm(xyz[ends[:, 0]] - xyz[ends[:, 1]], axis=1)
    else:
        ov, lengths = np.ones(len(lb)), None
    dist = np.ones(len(lb)) if distortion is None else np.where(dbl, 1.0 + distortion, 1.0 - distortion)
    return lb, hd, k, is_cc, dbl, ov, lengths, dist


def huckel(pi: PiSystem, mol, coords=None, *, beta_model: str = "distance",
           distortion: float | None = None) -> HuckelResult:
    """Hückel levels, occupations, π charges and bond orders.

    Parameters
    ----------
    pi : PiSystem from :func:`perceive_pi`
    mol : rdkit.Chem.Mol (the same molecule)
    coords : (n_atoms, 3) array_like, Å; required for every beta_model except "uniform"
        Used for β(r) ("distance") and for the p-orbital alignment factor cos ω of every bond
        (β scaled by the cosine of the angle between the two tree-oriented p-orbital axes; the cosine law for
        twisted π bonds, common practice, no source; its sign carries Möbius topology, module notes); within a
        (4n+2)-electron circuit the circuit's geometric-mean |cos ω| (:func:`shared_ring_overlap`).
    beta_model : "uniform" | "distance" | "scf" | "scf-coulson", keyword-only (see :mod:`ringshift.pi.huckel`)
    distortion : float, optional, keyword-only
        Explicit bond alternation δ (|δ| < 1): β × (1 + δ) for the Kekulé double bonds, × (1 − δ)
        for the single bonds. Breaks the degeneracy of D_Nh 4n annulenes (Pople & Untch 1966).

    Returns
    -------
    HuckelResult
        For "scf"/"scf-coulson": the lowest-energy stable self-consistent solution, its model energy
        (``scf_energy_eV``) and the other stable solutions found (``scf_alternatives``, each a HuckelResult
        with ``scf_energy_above_kcal_per_mol``); :mod:`ringshift.pi.scf_lengths`.
    """
    _v.molecule(mol)
    _check_model(beta_model, pi)
    xyz = _v.coordinates(mol, coords, required=beta_model != "uniform")
    if distortion is not None and not (isinstance(distortion, (int, float)) and -1.0 < float(distortion) < 1.0):
        raise InputError(f"distortion: expected a bond-alternation fraction in (-1, 1), got {distortion!r}")
    lb, hd, k, is_cc, dbl, ov, lengths, dist = _setup(pi, mol, xyz, distortion)
    frags = [np.searchsorted(pi.atoms, f) for f in pi.fragments]
    f_elec = [sum(pi.electrons[i] for i in f) for f in frags]
    params = {"table": {t: HETERO_PARAMETERS[t] for t in sorted(set(pi.atom_types))}, "beta_model": beta_model,
              "beta_r": "beta0*exp(-(r-1.397)/0.3106), Longuet-Higgins & Salem 1959 (from memory)",
              "bond_order_length": ({"relation": f"r = {SCF_RELATIONS[beta_model][0]:.4f} - "
                                     f"{SCF_RELATIONS[beta_model][1]:.4f} p", "source": SCF_RELATIONS[beta_model][2]}
                                    if beta_model in SCF_RELATIONS else None),
              "overlap": ("|cos| of POAV-type p-orbital axes, shared within (4n+2) circuits" if xyz is not None
                          else "none (no coordinates)"),
              "distortion": distortion}
    if beta_model == "uniform":
        return _assemble(pi, lb, hd, frags, f_elec, k * dist * ov, None, beta_model, params)
    if beta_model == "distance":
        return _assemble(pi, lb, hd, frags, f_elec, np.where(is_cc, beta_distance_factor(lengths), k) * dist * ov,
                         lengths, beta_model, params)
    from ringshift.pi.scf_lengths import KCAL_PER_MOL_PER_EV, scf_fixed_points  # builds on this module's kernels

    r0, slope = SCF_RELATIONS[beta_model][:2]
    searches, sels = [], []
    for f_idx, f_el in zip(frags, f_elec):  # each fragment keeps its own electrons
        sel = np.flatnonzero(np.isin(lb[:, 0], f_idx))
        loc = np.searchsorted(f_idx, lb[sel])
        searches.append(scf_fixed_points(hd[f_idx], loc, k[sel], is_cc[sel], (ov * dist)[sel], dbl[sel], f_el,
                                         r0_A=r0, slope_A=slope, geometry_lengths_A=lengths[sel]))
        sels.append(sel[is_cc[sel]])

    def result(choice, notes=(), **extra):
        r = np.where(is_cc, BETA_REF_LENGTH_A, 0.0)
        for sel, s, c in zip(sels, searches, choice):
            r[sel] = s.points[c].lengths_A
        res = np.where(is_cc, beta_distance_factor(np.where(is_cc, r, BETA_REF_LENGTH_A)), k) * dist * ov
        energy = float(sum(s.points[c].energy_eV for s, c in zip(searches, choice)))
        return _assemble(pi, lb, hd, frags, f_elec, res, np.where(is_cc, r, lengths), beta_model, params,
                         notes=notes, scf_energy_eV=energy, **extra)

    notes = [f"{SCF_NO_SOLUTION_NOTE} for fragment {n} "
             f"({len(frags[n])} atoms) from {s.n_starts} starts; the lowest-energy point found is used "
             f"(largest Jacobian eigenvalue {s.chosen.max_jacobian:.3g}, residual {s.chosen.residual_A:.1e} Å)"
             for n, s in enumerate(searches) if not s.converged]
    base = [0] * len(searches)
    chosen = result(base)
    alternatives = []
    for n, s in enumerate(searches):
        for c in range(1, len(s.points)):
            alt = base.copy()
            alt[n] = c
            d_kcal = (s.points[c].energy_eV - s.chosen.energy_eV) * KCAL_PER_MOL_PER_EV
            alternatives.append(result(alt, scf_energy_above_kcal_per_mol=d_kcal, scf_fragment=n))
    alternatives.sort(key=lambda h: h.scf_energy_above_kcal_per_mol)
    return replace(chosen, converged=all(s.converged for s in searches),
                   warnings=tuple(notes) + chosen.warnings, scf_alternatives=tuple(alternatives),
                   scf_starts=sum(s.n_starts for s in searches),
                   scf_evaluations=sum(s.n_evaluations for s in searches))


def _assemble(pi: PiSystem, lb, hd, frags, f_elec, res, used_len, beta_model, params, *, notes=(),
              **extra) -> HuckelResult:
    """Levels, occupations, charges and bond orders for given resonance factors res (n_bonds,)."""
    notes = list(notes)
    h0 = huckel_matrix(hd, lb, res)
    e, c, occ, labels, open_shell, deg, deg_open, gap = solve_fragments(h0, frags, f_elec)
    p = density_matrix(c, occ)
    if open_shell:
        notes.append("open shell: " + ("degenerate, partly filled HOMO" if deg_open else "singly occupied HOMO"))
    elif gap is not None and gap < 0.05:
        notes.append(f"near-degenerate HOMO/LUMO (gap {gap:.3g} |β|): currents are large and geometry-sensitive")
    return HuckelResult(
        energies_beta=_frozen(e), vectors=_frozen(c), occupations=_frozen(occ), homo_lumo_gap_beta=gap,
        open_shell=open_shell, degenerate_homo=deg, degenerate_open_shell=deg_open,
        mo_fragment=_frozen(labels, np.intp), charges=_frozen(np.array(pi.core_charges, float) - np.diag(p)),
        bond_orders=_frozen(p[lb[:, 0], lb[:, 1]] if len(lb) else np.zeros(0)), resonance=_frozen(res),
        bond_lengths_A=None if used_len is None else _frozen(used_len), beta_model=beta_model,
        parameters=params, warnings=tuple(notes), **extra)


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
    homo_shell = 0  # n_electrons > 0: the loop below puts electrons into shell 0 at least
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


#: Elements of one (bonds × orbital pairs) block of :func:`bond_polarizability` (8 MB of float64).
_POL_BLOCK_ELEMENTS = 1 << 20


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
    # blocks of occupied orbitals k: memory O(m·n_l·block), not O(m·n²) (2.3 GB for 726 π atoms)
    block = max(1, _POL_BLOCK_ELEMENTS // max(1, b.shape[0] * lo.size))
    out = np.zeros((b.shape[0], b.shape[0]))
    for k0 in range(0, hi.size, block):
        ks, fk = hi[k0:k0 + block], f[:, k0:k0 + block]
        if not fk.any():
            continue
        w = (ci[:, lo, None] * cj[:, None, ks] + cj[:, lo, None] * ci[:, None, ks]).reshape(b.shape[0], -1)
        out -= (w * fk.reshape(1, -1)) @ w.T  # −½ Σ over ordered pairs = −Σ over n_k > n_l
    return out
