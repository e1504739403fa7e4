"""Ring currents averaged over the zero-point and thermal motion of the Kekulé (bond-alternation) mode.

The self-consistent bond lengths of :mod:`ringshift.pi.scf_lengths` are the minimum of the Longuet-Higgins–Salem
model energy E(r). A measured shift is a vibrational average, and the Hückel–London current is a strongly
non-linear function of the bond-length alternation (BLA): in a (4n+2)-perimeter near its alternation instability
(a [14]-perimeter lies at the stability limit of the ``"scf"`` line, :mod:`ringshift.pi.bond_lengths`) the
Kekulé mode is soft and anharmonic, its zero-point amplitude reaches several hundredths of an ångström, and
the current at the minimum is not the average current. Here, per π fragment with a Kekulé structure:

* coordinate q (Å): every C–C bond of the fragment moves by q × (−1 for the Kekulé double bonds, +1 for the
  single bonds) from the chosen self-consistent lengths, the other bonds held (a frozen cut through E);
* potential V(q) = E(r* + q s) − E(r*) from the model energy (:class:`ringshift.pi.scf_lengths._Model`);
* mass: for a ring whose bonds alternate by ±q every atom moves ±q/2 along the ring, so the kinetic energy is
  (Σ m_a / 8) q̇² and the mass of q is Σ m_a / 4 over the fragment's π atoms, each with its attached hydrogens
  (the exact value for a monocycle; an approximation for fused rings);
* the one-dimensional Schrödinger equation on a grid (second-order finite differences, textbook), its levels
  Boltzmann-populated at the spectrum's temperature, gives the probability density P(q);
* the Hückel–London circuit and bond currents are computed at every grid point and averaged with P(q).

Vibrational averaging of NMR properties over zero-point motion: e.g. Ruud, Åstrand & Taylor, J. Am. Chem. Soc.
2001, 123, 4826 (from memory); the soft, π-distortive Kekulé mode of aromatic rings: Shaik, Shurki, Danovich &
Hiberty, Chem. Rev. 2001, 101, 1501 (from memory). The current ratio to benzene divides the average current by
benzene's own average (same procedure on the regular hexagon, 298.15 K), so benzene stays exactly 1.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

import numpy as np
from scipy import constants as _sc

from ringshift.pi.bond_lengths import SCF_RELATIONS
from ringshift.pi.huckel import _assemble, _setup, beta_distance_factor
from ringshift.pi.parameters import BETA0_EV, BETA_REF_LENGTH_A

__all__ = ["KekuleAverage", "kekule_mode_average", "mode_density", "benzene_kekule_factor",
           "KEKULE_GRID_POINTS", "KEKULE_Q_MAX_A"]

#: Grid of the Kekulé coordinate: points and half-width (Å). The wavefunction (not only the density) must vanish
#: at the Dirichlet ends: ±0.25 Å is more than 4 standard deviations of ψ for the softest mode measured
#: ([18]annulene, rms amplitude 0.04 Å); spacing 0.005 Å. A harmonic check reproduces <q²> and ħω within 1 %
#: (tests/pi/test_scf_solutions.py). Currents are computed only where the density exceeds KEKULE_MIN_DENSITY.
KEKULE_GRID_POINTS = 101
KEKULE_Q_MAX_A = 0.25
KEKULE_MIN_DENSITY = 1e-6

_AMU_KG = _sc.atomic_mass
_EV_J = _sc.e


@dataclass(frozen=True, eq=False)
class KekuleAverage:
    """Currents averaged over the Kekulé mode (module notes).

    circuit_currents_rel (n_circuits,): J/J_benzene, positive diatropic, averaged (benzene's own average = 1);
    bond_currents_rel (3, n_bonds): conventional bond currents, averaged, same units and sense as
    :class:`ringshift.pi.london.LondonCurrents`; rms_q_A (n_fragments,): root-mean-square Kekulé amplitude
    (Å, BLA amplitude is twice this); gap_cm1 (n_fragments,): first vibrational excitation of the mode (cm⁻¹);
    averaged (n_fragments,) bool: False where a fragment has no Kekulé C–C bonds or its grid had no finite
    current (then its currents are those at the minimum).
    """

    circuit_currents_rel: np.ndarray
    bond_currents_rel: np.ndarray
    rms_q_A: np.ndarray
    gap_cm1: np.ndarray
    averaged: np.ndarray


def mode_density(q_A, v_eV, mass_amu: float, temperature_K: float) -> tuple[np.ndarray, float]:
    """Thermal probability density of a one-dimensional vibration on a grid.

    q_A (g,) uniform grid, Å; v_eV (g,) potential, eV; mass_amu; temperature_K (≥ 0; 0 gives the ground state).
    Hamiltonian −ħ²/(2M) d²/dq² + V by second-order finite differences (Dirichlet ends), levels populated
    with Boltzmann weights. Returns (P (g,) summing to 1, first excitation energy in cm⁻¹).
    """
    q = np.asarray(q_A, dtype=np.float64) * 1e-10
    v = np.asarray(v_eV, dtype=np.float64) * _EV_J
    h = q[1] - q[0]
    t = _sc.hbar ** 2 / (2.0 * mass_amu * _AMU_KG * h * h)
    ham = np.diag(v + 2.0 * t) - t * (np.eye(q.size, k=1) + np.eye(q.size, k=-1))
    e, vec = np.linalg.eigh(ham)
    if temperature_K > 0:
        w = np.exp(-(e - e[0]) / (_sc.k * temperature_K))
    else:
        w = np.zeros(e.size)
        w[0] = 1.0
    w /= w.sum()
    p = (vec ** 2) @ w
    gap = float((e[1] - e[0]) / (_sc.h * _sc.c * 100.0))
    return p / p.sum(), gap


def _fragment_masses(pi, mol, frag_atoms) -> float:
    """Σ (atomic mass + attached hydrogens) over a fragment's π atoms, amu."""
    total = 0.0
    for a in frag_atoms:
        atom = mol.GetAtomWithIdx(int(pi.atoms[a]))
        total += atom.GetMass() + sum(nb.GetMass() for nb in atom.GetNeighbors() if nb.GetAtomicNum() == 1)
    return total


def kekule_mode_average(pi, mol, xyz, huckel_result, response, *, temperature_K: float = 298.15,
                        n_grid: int = KEKULE_GRID_POINTS, q_max_A: float = KEKULE_Q_MAX_A,
                        benzene_factor: float | None = None) -> KekuleAverage | None:
    """Average the Hückel–London currents over each fragment's Kekulé mode.

    Parameters
    ----------
    pi, mol : the π system and molecule; xyz (n_atoms, 3) Å, the conformer
    huckel_result : HuckelResult of an ``"scf"``/``"scf-coulson"`` step on this conformer (its C–C lengths are r*)
    response : callable(HuckelResult) -> (diatropic bond currents (3, m), circuit currents (c,)) relative to
        benzene, or None for no finite current (:func:`ringshift.pi.london.london_currents` passes its own)
    temperature_K : spectrum temperature, K
    benzene_factor : benzene's averaged/minimum current ratio (default :func:`benzene_kekule_factor`)

    Returns
    -------
    KekuleAverage, or None when the β model has no model energy (``"uniform"``, ``"distance"``) or the
    current at the minimum is undefined.
    """
    from ringshift.pi.scf_lengths import _Model

    hr = huckel_result
    if hr.beta_model not in SCF_RELATIONS or hr.bond_lengths_A is None:
        return None
    base = response(hr)
    if base is None:
        return None
    r0, slope = SCF_RELATIONS[hr.beta_model][:2]
    lb, hd, k, is_cc, dbl, ov, _lengths, dist = _setup(pi, mol, xyz, None)
    r_star = np.where(is_cc, np.asarray(hr.bond_lengths_A, dtype=np.float64), BETA_REF_LENGTH_A)
    frags = [np.searchsorted(pi.atoms, f) for f in pi.fragments]
    f_elec = [sum(pi.electrons[i] for i in f) for f in frags]
    diat0, rel0 = base
    diat, rel = np.array(diat0, dtype=np.float64), np.array(rel0, dtype=np.float64)
    qs = np.linspace(-q_max_A, q_max_A, int(n_grid))
    rms: list[float] = []
    gaps: list[float] = []
    done: list[bool] = []
    atom_frag = np.zeros(len(pi.atoms), dtype=np.intp)
    for n, f in enumerate(frags):
        atom_frag[f] = n
    bfrag = atom_frag[lb[:, 0]] if len(lb) else np.zeros(0, np.intp)  # lb holds local (π-atom) indices
    for n, (f_idx, f_el) in enumerate(zip(frags, f_elec)):
        sel = np.flatnonzero(bfrag == n)
        cc = sel[is_cc[sel]]
        if cc.size < 2 or not np.any(dbl[cc]) or np.all(dbl[cc]):
            rms.append(0.0)
            gaps.append(float("nan"))
            done.append(False)
            continue
        loc = np.searchsorted(f_idx, lb[sel])
        model = _Model(hd[f_idx], loc, k[sel], is_cc[sel], (ov * dist)[sel], f_el, r0, slope, BETA0_EV)
        s = np.where(dbl[cc], -1.0, 1.0)
        x0 = r_star[cc]
        e0 = model.energy_grad(x0)[0]
        v = np.array([model.energy_grad(x0 + q * s)[0] - e0 for q in qs])
        p, gap = mode_density(qs, v, _fragment_masses(pi, mol, f_idx) / 4.0, temperature_K)
        acc_d, acc_r, wsum = np.zeros_like(diat), np.zeros_like(rel), 0.0
        moved = np.zeros(rel.shape, bool)
        for q, pq in zip(qs, p):
            if pq < KEKULE_MIN_DENSITY:
                continue
            r = r_star.copy()
            r[cc] = x0 + q * s
            res = np.where(is_cc, beta_distance_factor(r), k) * dist * ov
            out = response(_assemble(pi, lb, hd, frags, f_elec, res, r, hr.beta_model, {}))
            if out is None:
                continue
            acc_d += pq * out[0]
            acc_r += pq * out[1]
            moved |= np.abs(np.asarray(out[1]) - rel0) > 1e-12
            wsum += pq
        if wsum < 0.5:  # most of the density without a finite current: keep the minimum's numbers
            rms.append(0.0)
            gaps.append(gap)
            done.append(False)
            continue
        # this fragment's mode changes only its own bonds and circuits (fragments do not couple)
        fb = np.zeros(len(lb), bool)
        fb[sel] = True
        diat[:, fb] = (acc_d / wsum)[:, fb]
        rel = np.where(moved, acc_r / wsum, rel)  # the circuits of this fragment
        rms.append(float(np.sqrt(p @ qs ** 2)))
        gaps.append(gap)
        done.append(True)
    fac = benzene_kekule_factor(hr.beta_model) if benzene_factor is None else benzene_factor
    return KekuleAverage(circuit_currents_rel=rel / fac, bond_currents_rel=-diat / fac, rms_q_A=np.array(rms),
                         gap_cm1=np.array(gaps), averaged=np.array(done, dtype=bool))


@cache
def benzene_kekule_factor(beta_model: str) -> float:
    """Benzene's current averaged over its Kekulé mode at 298.15 K divided by its current at the minimum
    (regular hexagon of 1.397 Å, CH masses); the constant that keeps benzene's averaged ratio exactly 1."""
    from rdkit import Chem

    from ringshift.geometry import planes as pg
    from ringshift.pi.huckel import huckel
    from ringshift.pi.london import _circuit_response, benzene_reference_response, regular_polygon
    from ringshift.pi.perception import perceive_pi

    mol = Chem.AddHs(Chem.MolFromSmiles("c1ccccc1"))
    xyz = np.zeros((mol.GetNumAtoms(), 3))
    ring = regular_polygon(6)
    order = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 6]
    cyc = [order[0]]
    while len(cyc) < 6:
        nxt = [nb.GetIdx() for nb in mol.GetAtomWithIdx(cyc[-1]).GetNeighbors()
               if nb.GetAtomicNum() == 6 and nb.GetIdx() not in cyc]
        cyc.append(nxt[0])
    for pos, a in zip(ring, cyc):
        xyz[a] = pos
        h = [nb.GetIdx() for nb in mol.GetAtomWithIdx(a).GetNeighbors() if nb.GetAtomicNum() == 1][0]
        xyz[h] = pos * (1.0 + 1.08 / np.linalg.norm(pos))
    pi = perceive_pi(mol, xyz)
    hr = huckel(pi, mol, xyz, beta_model=beta_model)
    nrm = np.array([[0.0, 0.0, 1.0]])
    _oriented, inc, _devs = pg.circuit_incidence(xyz, [cyc], pi.bonds, nrm)
    lb = np.array([(pi.atoms.index(i), pi.atoms.index(j)) for i, j in pi.bonds], dtype=np.intp)
    g_bz = benzene_reference_response(beta_model)

    def response(h):
        out = _circuit_response(h, pi, xyz, lb, inc, nrm, g_bz)
        return None if out is None else (out[0], out[2])

    avg = kekule_mode_average(pi, mol, xyz, hr, response, temperature_K=298.15, benzene_factor=1.0)
    base = response(hr)
    assert avg is not None and base is not None
    return float(avg.circuit_currents_rel[0] / base[1][0])
