"""Hückel–London ring currents: the analytic London response and its wrapper on RDKit molecules.

Positions in Å. The London phase of ⟨r|H|s⟩ is θ_rs = (e/2ħ) B·(r_r × r_s) (symmetric gauge, London,
J. Phys. Radium 1937, 8, 397); internally b = eB/ħ in Å⁻², so θ_rs = ½ b·(r_r × r_s). Bond currents are
*conventional* currents (the sense used by :func:`ringshift.fields.network.network_shielding`). With
E = Tr(H P), P = Σ_k n_k c_k c_k†, the current from s to r is I_{s→r} = −(2e/ħ) Im(H_rs P_sr); it follows
from the Hellmann–Feynman magnetic moment m = −∂E/∂B = ½ Σ_bonds I_{s→r} (r_s × r_r) (McWeeny, Mol.
Phys. 1958, 1, 311; Pople, Mol. Phys. 1958, 1, 175). The first-order response is evaluated analytically
(sum over states), which is exactly gauge-origin invariant in this model.

Ring (face) currents come from the bond currents by a least-squares Kirchhoff decomposition
(:func:`kirchhoff_decomposition`); :func:`london_currents` reports them relative to benzene computed with
the same parameters (:func:`benzene_reference_response`) and in nA/T (× 12 nA/T, Fliegl et al., J. Phys.
Chem. A 2009, 113, 8668). :func:`pi_charge_shift_ppm` is the π-charge term of ions (Schaefer &
Schneider, Can. J. Chem. 1963, 41, 966).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from functools import cache

import numpy as np

from ringshift import _validation as _v
from ringshift.constants import BENZENE_CURRENT_NA_PER_T, ELEMENTARY_CHARGE_C, HBAR_J_S
from ringshift.errors import InputError
from ringshift.geometry import planes as pg
from ringshift.pi.bond_lengths import SCF_RELATIONS
from ringshift.pi.huckel import (
    HuckelResult,
    _check_model,
    beta_distance_factor,
    density_matrix,
    huckel,
    huckel_matrix,
    occupy,
)
from ringshift.pi.parameters import (
    BETA0_EV,
    BETA_REF_LENGTH_A,
    DEGENERACY_TOL,
    HETERO_PARAMETERS,
    PI_CHARGE_PPM_PER_E,
    SCF_CLOSE_KCAL_PER_MOL,
    SCF_CURRENT_DIFF_REL,
)
from ringshift.pi.perception import (
    _PLANAR_TOL_A,
    METAL_FACE_NOTE,
    MOBIUS_NOTE,
    PiSystem,
    _check_circuit,
    _frozen,
    circuit_topology,
)
from ringshift.pi.scf_lengths import bond_length_alternation, scf_cc_lengths

#: Fixed words of two warnings (read by predict): a circuit's non-planarity, and two self-consistent
#: solutions too close in energy to choose between.
NON_PLANAR_NOTE = "is non-planar: largest deviation"
CLOSE_SOLUTIONS_NOTE = "two self-consistent bond-length solutions within"
#: Opening words of the status of an open-shell π system, which gets no current.
OPEN_SHELL_NOTE = "open shell"

__all__ = ['NON_PLANAR_NOTE', 'CLOSE_SOLUTIONS_NOTE', 'OPEN_SHELL_NOTE', 'open_shell_status',
           'LondonCurrents', 'AlternativeCurrents', 'london_currents',
           'circuit_normals', 'london_bond_response', 'kirchhoff_decomposition', 'regular_polygon',
           'benzene_reference_response', 'absolute_current_nA_per_T', 'pi_charge_shift_ppm']


@dataclass(frozen=True, eq=False)
class LondonCurrents:
    """Hückel–London currents. Numbers are None when ``status`` is not "ok" (no NaN anywhere).

    field_dirs (3, 3): rows x, y, z. bond_currents_rel (3, n_bonds): conventional current from i to j
    of bond (i, j), i < j, for a unit field along each row of field_dirs, in units of the benzene ring
    current (same model; benzene's clockwise-about-B circulation has magnitude 1), i.e. the sense of
    :func:`ringshift.fields.network.network_shielding`. bond_currents_nA_per_T = rel × 12 nA/T.
    circuits: the circuits, reordered counter-clockwise about ``normals`` (n_circuits, 3).
    circuit_response_rel (n_circuits, 3): circuit currents for unit fields along x, y, z (Kirchhoff
    decomposition); circuit_currents_rel (n_circuits,): response to a field along the circuit's own
    normal, J/J_benzene, positive = diatropic. circuit_currents_nA_per_T = rel × 12 nA/T.
    circuit_currents_abs_nA_per_T: rel × the benzene current computed from β0 (``benzene_abs_nA_per_T``).
    kirchhoff_residual: relative least-squares residual (≈1e-15 for a cycle basis);
    conservation_residual: largest net current at an atom relative to the largest bond current.
    circuit_max_deviation_A: largest deviation of each circuit from its fitted plane.
    bla_A: bond-length alternation of the C–C lengths used (Å; mean |Δr| of bonds sharing an atom), None for
    "uniform". alternatives: the other stable self-consistent solutions ("scf" models), lowest energy first,
    each with its circuit currents (:class:`AlternativeCurrents`). warnings: everything the user must see,
    including a self-consistent step that found no stable solution and solutions that are too close in energy
    to choose between (with both currents). kekule: the :class:`ringshift.pi.kekule_mode.KekuleAverage` when the
    currents were averaged over the Kekulé mode (``kekule_average_K``), else None; circuit_response_rel stays the
    response at the minimum.
    """

    status: str
    open_shell: bool
    field_dirs: np.ndarray
    circuits: tuple[tuple[int, ...], ...]
    normals: np.ndarray
    circuit_max_deviation_A: np.ndarray
    bond_currents_rel: np.ndarray | None
    bond_currents_nA_per_T: np.ndarray | None
    circuit_response_rel: np.ndarray | None
    circuit_currents_rel: np.ndarray | None
    circuit_currents_nA_per_T: np.ndarray | None
    circuit_currents_abs_nA_per_T: np.ndarray | None
    benzene_abs_nA_per_T: float
    kirchhoff_residual: float | None
    conservation_residual: float | None
    beta_model: str
    beta0_eV: float
    huckel: HuckelResult
    warnings: tuple[str, ...] = ()
    bla_A: float | None = None
    alternatives: tuple[AlternativeCurrents, ...] = ()
    kekule: object | None = None


@dataclass(frozen=True, eq=False)
class AlternativeCurrents:
    """Another stable self-consistent bond-length solution and its currents (same circuits and normals).

    energy_above_kcal_per_mol: model energy above the chosen solution (:mod:`ringshift.pi.scf_lengths`);
    bla_A (Å); circuit_currents_rel (n_circuits,) J/J_benzene, positive diatropic, None if the solution
    has no finite current (open shell); circuit_currents_nA_per_T (n_circuits,) or None; huckel: its levels.
    """

    energy_above_kcal_per_mol: float
    bla_A: float | None
    circuit_currents_rel: np.ndarray | None
    circuit_currents_nA_per_T: np.ndarray | None
    huckel: HuckelResult

# ---------------------------------------------------------------------------------------------------
# London currents
# ---------------------------------------------------------------------------------------------------
def circuit_normals(coords, circuits) -> np.ndarray:
    """Unit circuit normals (n_circuits, 3) from SVD plane fits, consistently oriented
    (:func:`ringshift.geometry.planes.circuit_normals`)."""
    return pg.circuit_normals(np.asarray(coords, dtype=np.float64), [list(c) for c in circuits])


def london_currents(pi: PiSystem, mol, coords, circuits: Sequence[Sequence[int]], normals=None, *,
                    beta_model: str = "distance", distortion: float | None = None,
                    beta0_eV: float = BETA0_EV, kekule_average_K: float | None = None) -> LondonCurrents:
    """Hückel–London bond and circuit currents (analytic first-order response, any orientation).

    Parameters
    ----------
    pi, mol : as for :func:`huckel`
    coords : (n_atoms, 3) array_like, Å
    circuits : sequence of ordered cycles of π atoms (e.g. the faces of the π graph: a cycle basis)
    normals : (n_circuits, 3) array_like, optional; default :func:`circuit_normals`
    beta_model, distortion : as for :func:`huckel`
    beta0_eV : float, keyword-only; β0 in eV for the absolute current (default ``huckel.BETA0_EV``)
    kekule_average_K : float, optional, keyword-only
        Temperature (K) at which the circuit and bond currents are averaged over the zero-point and thermal
        motion of each fragment's Kekulé mode (:mod:`ringshift.pi.kekule_mode`; ``"scf"`` models only, with no
        explicit distortion); None (default) gives the currents at the self-consistent minimum.

    Returns
    -------
    LondonCurrents
        Ring currents relative to benzene (same model, regular hexagon of 1.397 Å), positive =
        diatropic; None with an explanatory ``status`` when there is no number to give (no π system;
        any open shell: an odd π-electron count or a partly filled HOMO shell, degenerate or not).
    """
    _v.molecule(mol)
    _check_model(beta_model, pi)
    xyz = _v.coordinates(mol, coords, required=True)
    assert xyz is not None, "_v.coordinates(required=True) raises rather than returning None"
    if (isinstance(beta0_eV, bool) or not isinstance(beta0_eV, (int, float)) or not np.isfinite(beta0_eV)
            or beta0_eV == 0):
        raise InputError(f"beta0_eV: expected a finite non-zero resonance integral in eV (e.g. -3.0), got {beta0_eV!r}")
    if isinstance(circuits, (str, bytes)) or not hasattr(circuits, "__iter__"):
        raise InputError("circuits: expected a sequence of atom-index cycles")
    cyc = [_check_circuit(pi, c, f"circuits[{n}]", closed=True) for n, c in enumerate(circuits)]
    if normals is None:
        nrm = circuit_normals(xyz, cyc)
    else:
        nrm = np.asarray(normals, dtype=np.float64)
        if nrm.shape != (len(cyc), 3) or not np.all(np.isfinite(nrm)) or np.any(np.linalg.norm(nrm, axis=1) < 1e-12):
            raise InputError(f"normals: expected ({len(cyc)}, 3) finite non-zero vectors, got shape {nrm.shape}")
        nrm = nrm / np.linalg.norm(nrm, axis=1)[:, None]
    oriented, inc, devs = pg.circuit_incidence(xyz, cyc, pi.bonds, nrm)
    hr = huckel(pi, mol, xyz, beta_model=beta_model, distortion=distortion)
    g_bz = benzene_reference_response(beta_model)
    bz_abs = float(absolute_current_nA_per_T(g_bz, beta0_eV))
    notes = list(pi.warnings) + list(hr.warnings) + [
        f"circuit {n} ({len(c)} atoms) {NON_PLANAR_NOTE} {d:.2f} Å from its plane; the current "
        "is its response to a field along its mean normal"
        for n, (c, d) in enumerate(zip(oriented, devs)) if d > _PLANAR_TOL_A]
    if any(w.startswith(MOBIUS_NOTE) for w in pi.warnings):
        notes += [f"circuits[{n}] ({len(c)} atoms) has Möbius topology (odd number of p-orbital phase inversions): "
                  "its current follows the Möbius rule (Heilbronner 1964), 4n π electrons diatropic, 4n+2 paratropic"
                  for n, c in enumerate(oriented) if circuit_topology(pi, mol, xyz, c) == "mobius"]
    # the result without numbers; the other outcomes replace its status and numbers
    empty = LondonCurrents(
        status="no π system", open_shell=False, field_dirs=_frozen(np.eye(3)), circuits=tuple(oriented),
        normals=_frozen(nrm.reshape(-1, 3)), circuit_max_deviation_A=_frozen(devs),
        bond_currents_rel=None, bond_currents_nA_per_T=None, circuit_response_rel=None,
        circuit_currents_rel=None, circuit_currents_nA_per_T=None, circuit_currents_abs_nA_per_T=None,
        benzene_abs_nA_per_T=bz_abs, kirchhoff_residual=None, conservation_residual=None,
        beta_model=beta_model, beta0_eV=float(beta0_eV), huckel=hr, warnings=tuple(notes))
    if pi.face_on_metals:
        reason = next((w for w in pi.warnings if w.startswith(METAL_FACE_NOTE)), METAL_FACE_NOTE)
        return replace(empty, status=reason)
    if not pi.atoms:
        return empty
    lb = np.array([(pi.atoms.index(i), pi.atoms.index(j)) for i, j in pi.bonds], dtype=np.intp).reshape(-1, 2)
    out = _circuit_response(hr, pi, xyz, lb, inc, nrm, g_bz)
    alts = tuple(_alternative(a, pi, xyz, lb, inc, nrm, g_bz) for a in hr.scf_alternatives)
    bla = _bla(hr, pi)
    notes += [n for n in (_close_note(None if out is None else out[2], bla, a, oriented) for a in alts) if n]
    empty = replace(empty, warnings=tuple(notes), alternatives=alts, bla_A=bla)
    if out is None:
        return replace(empty, status=open_shell_status(hr, pi), open_shell=True)
    diat, resp, rel, resid, cons = out
    kek = None
    if kekule_average_K is not None and beta_model in SCF_RELATIONS and distortion is None:
        from ringshift.pi.kekule_mode import kekule_mode_average

        def response(h):
            o = _circuit_response(h, pi, xyz, lb, inc, nrm, g_bz)
            return None if o is None else (o[0], o[2])

        kek = kekule_mode_average(pi, mol, xyz, hr, response, temperature_K=float(kekule_average_K))
        if kek is not None:
            diat, rel = -kek.bond_currents_rel, kek.circuit_currents_rel
    return replace(
        empty, status="ok", open_shell=hr.open_shell,
        bond_currents_rel=_frozen(-diat), bond_currents_nA_per_T=_frozen(-diat * BENZENE_CURRENT_NA_PER_T),
        circuit_response_rel=_frozen(resp), circuit_currents_rel=_frozen(rel),
        circuit_currents_nA_per_T=_frozen(rel * BENZENE_CURRENT_NA_PER_T),
        circuit_currents_abs_nA_per_T=_frozen(rel * bz_abs), kirchhoff_residual=resid, conservation_residual=cons,
        kekule=kek)


def open_shell_status(hr: HuckelResult, pi: PiSystem) -> str:
    """The one-line reason an open-shell π system gets no current (the ``status`` of :func:`london_currents`)."""
    if pi.n_electrons % 2:
        what = f"odd π-electron count ({pi.n_electrons}, a radical)"
    elif hr.degenerate_open_shell:
        what = "degenerate, partly filled HOMO (e.g. a D_Nh 4n annulene)"
    else:
        what = "partly filled HOMO shell"
    status = (f"{OPEN_SHELL_NOTE}: {what}; the closed-shell Hückel–London response does not apply, so no current "
              "is given")
    if not pi.n_electrons % 2:
        status += ". Pass a distortion (bond alternation) or a geometry that breaks the degeneracy"
    return status


def _bla(hr: HuckelResult, pi: PiSystem) -> float | None:
    if hr.bond_lengths_A is None:
        return None
    cc = [k for k, (i, j) in enumerate(pi.bonds) if pi.atom_types[pi.atoms.index(i)].startswith("C")
          and pi.atom_types[pi.atoms.index(j)].startswith("C")]
    return bond_length_alternation(np.asarray(hr.bond_lengths_A)[cc], np.asarray(pi.bonds).reshape(-1, 2)[cc])


def _circuit_response(hr: HuckelResult, pi: PiSystem, xyz, lb, inc, nrm, g_bz):
    """(diatropic bond currents (3, m), circuit responses (c, 3), currents along the normals (c,), Kirchhoff
    residual, conservation residual) relative to benzene; None for any open shell (odd electron count or a
    partly filled HOMO shell): the closed-shell linear response is not defined there (module notes)."""
    if hr.open_shell:
        return None
    h0 = huckel_matrix([HETERO_PARAMETERS[t][0] for t in pi.atom_types], lb, hr.resonance)
    try:
        g = london_bond_response(h0, xyz[list(pi.atoms)], lb, hr.energies_beta, hr.vectors, hr.occupations,
                                 labels=hr.mo_fragment)
    except ValueError:
        return None
    diat = g / g_bz  # diatropic-sense current from i to j, benzene = 1
    x, resid = kirchhoff_decomposition(diat, inc)
    div = np.zeros((3, len(pi.atoms)))  # net current leaving each atom
    np.add.at(div.T, lb[:, 0], diat.T)  # div[:, lb[k, 0]] += diat[:, k], through the transposed view
    np.add.at(div.T, lb[:, 1], -diat.T)
    cons = float(np.max(np.abs(div)) / max(np.max(np.abs(diat)), 1e-300)) if diat.size else 0.0
    resp = x.T  # (n_circuits, 3)
    return diat, resp, np.einsum("ca,ca->c", resp, nrm.reshape(-1, 3)), resid, cons


def _alternative(hr: HuckelResult, pi: PiSystem, xyz, lb, inc, nrm, g_bz) -> AlternativeCurrents:
    out = _circuit_response(hr, pi, xyz, lb, inc, nrm, g_bz)
    rel = None if out is None else _frozen(out[2])
    na = None if rel is None else _frozen(rel * BENZENE_CURRENT_NA_PER_T)
    return AlternativeCurrents(energy_above_kcal_per_mol=float(hr.scf_energy_above_kcal_per_mol),
                               bla_A=_bla(hr, pi), circuit_currents_rel=rel, circuit_currents_nA_per_T=na, huckel=hr)


def _close_note(rel, bla, alt: AlternativeCurrents, circuits) -> str:
    """A one-line warning when ``alt`` lies within SCF_CLOSE_KCAL_PER_MOL of the chosen solution and its
    currents differ by SCF_CURRENT_DIFF_REL or more on some circuit (or only one of the two has a finite
    current); it names the circuit that differs most and both currents. Empty string otherwise."""
    if alt.energy_above_kcal_per_mol >= SCF_CLOSE_KCAL_PER_MOL or not len(circuits):
        return ""
    a = alt.circuit_currents_rel
    if rel is None and a is None:  # neither has a current (an open shell): nothing to choose between
        return ""
    if rel is not None and a is not None:
        k = int(np.argmax(np.abs(a - rel)))
        if abs(a[k] - rel[k]) < SCF_CURRENT_DIFF_REL:
            return ""
        cur: tuple[str, ...] = (f"{rel[k]:.2f}x benzene", f"{a[k]:.2f}x")
    else:
        k = 0
        cur = tuple("no finite current (open shell)" if x is None else f"{x[0]:.2f}x benzene" for x in (rel, a))
    bl = tuple("" if x is None else f", BLA {x:.3f} A" for x in (bla, alt.bla_A))
    return (f"{CLOSE_SOLUTIONS_NOTE} {SCF_CLOSE_KCAL_PER_MOL:.2f} kcal/mol (RT at 298 K) "
            f"give circuits[{k}] ({len(circuits[k])} atoms) {cur[0]} (chosen: lower model energy{bl[0]}) and "
            f"{cur[1]} (+{alt.energy_above_kcal_per_mol:.2f} kcal/mol{bl[1]}); the model cannot decide between them")


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


def kirchhoff_decomposition(bond_currents, incidence):
    """Least-squares circuit currents x with incidence @ x ≈ bond_currents (exact for a cycle basis).

    With every face of a closed cage (a fullerene) the incidence has one null vector (all faces circulating
    together cancel on every bond); ``numpy.linalg.lstsq`` then returns the minimum-norm solution, which any
    symmetry of the cage maps onto itself, so equivalent faces get equal currents whatever the atom order.

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


#: :func:`benzene_reference_response` of the β models, Å², written out so that a run does not spend a benzene
#: self-consistent bond-length search (~25 ms) on a constant of the model; tests/test_start_up.py recomputes every
#: entry with :func:`benzene_reference_response_computed` (start-up, issue 16).
BENZENE_RESPONSE_A2: dict[str, float] = {"scf": 0.5633809915732876, "scf-coulson": 0.565197760859959,
                                         "distance": 0.5633809907514484, "uniform": 0.5633809907514484}


def benzene_reference_response(beta_model: str) -> float:
    """Diatropic ring-current response g of benzene (regular hexagon, 1.397 Å) in the given β model.

    Returns the positive number, in Å², that a circuit current is divided by to give J/J_benzene.
    A constant of the model: :data:`BENZENE_RESPONSE_A2`, or computed once per β model and process.
    """
    if beta_model in BENZENE_RESPONSE_A2:
        return BENZENE_RESPONSE_A2[beta_model]
    return benzene_reference_response_computed(beta_model)


@cache
def benzene_reference_response_computed(beta_model: str) -> float:
    """:func:`benzene_reference_response` computed from the model (cached per β model and process)."""
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
    e_over_hbar = ELEMENTARY_CHARGE_C / HBAR_J_S  # 1/(T m²)
    beta_j = abs(beta0_eV) * ELEMENTARY_CHARGE_C
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
