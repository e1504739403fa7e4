"""π systems of RDKit molecules: perception, electron counts, Hückel levels and Hückel–London currents.

Pipeline: ``perceive_pi(mol, coords)`` → :class:`PiSystem`; ``huckel(pi, mol, coords)`` →
:class:`HuckelResult`; ``london_currents(pi, mol, coords, circuits)`` → :class:`LondonCurrents`. The
numerical kernels (Hückel matrix, occupations, analytic London response, Kirchhoff decomposition, the
parameter table and its sources) live in :mod:`ringshift.huckel`; conventions are stated there.

π atoms and electrons
---------------------
A heavy atom (B, C, N, O, S, F, Cl, Br, I) with at most three σ bonds (two if sp) is a π atom when it is
aromatic or has a double/triple bond to such an atom in RDKit's Kekulé structure, or when it carries a
lone pair, an empty p orbital or an unpaired electron (carbanion, carbocation, radical, pyrrole/furan-type
heteroatom, boron, halogen) and is bonded to such an atom. Its π electrons follow from valence
bookkeeping: with V valence electrons, formal charge q and n_σ σ bonds, the n_nb = V − q − n_σ
non-bonding electrons first fill the free σ hybrids (3 − n_σ for sp2, 2 − n_σ for sp, two each) and
the rest go into the p orbital (sp: half of the rest). This gives C 1, C⁻ 2, C⁺ 0, pyridine N 1,
pyrrole N 2, furan O and thiophene S 2, carbonyl O 1, B 0, pyridinium N⁺ 1. The core charge is
Z = electrons + q, so the π charges q_r = Z_r − P_rr add up to the formal charge on the π atoms.

Annulenes and the β model (measured; tests/test_pisystem.py)
-----------------------------------------------------------
Hückel–London overestimates large (4n+2)-annulenes: uniform β gives 3.14 × benzene for a regular
18-gon and 2.24 × for the real-shaped (honeycomb: the coronene perimeter, 120°, 1.397 Å) [18]annulene;
β(r) on MMFF94 bonds of 1.35–1.36 Å gives more (2.6 ×). The a priori treatment is
``beta_model="scf"``: C–C lengths made self-consistent with the π bond orders through a linear
relation r = R0 − S p (the stationarity condition of a Longuet-Higgins–Salem / SSH energy), with β(r)
of Longuet-Higgins & Salem. Its one free parameter, the electron–lattice coupling S, is calibrated on
data outside annulene NMR: the line passes through benzene (1.397 Å) and the self-consistent infinite
all-trans polyene reproduces the bond-length alternation of trans-polyacetylene, 0.08 Å (1.36/1.44 Å;
Yannoni & Clarke, Phys. Rev. Lett. 1983, 51, 1191, from memory): S = 0.1988 Å, R0 = 1.5295 Å
(:mod:`ringshift.huckel`). The earlier Coulson line through ethylene and benzene (S = 0.186 Å) remains
as ``beta_model="scf-coulson"``; it under-alternates the infinite chain (BLA 0.067 Å).

Measured J/J_benzene (distance on the given geometry / scf-coulson / scf), ideal honeycomb perimeters
(pyrene, coronene, ovalene, circumanthracene; 4, 6, 8, 10 inner H) and MMFF94 geometries relaxed from
them: [14] 1.65 / 1.63 / 1.63 (MMFF, 0.2 Å non-planar: 1.95 / 1.67 / 1.67; no alternation in either
scf model); [18] 2.24 / 1.85 / 1.24 (MMFF 2.60 / 1.86 / 1.25; scf bonds 1.374/1.433 Å); [22] 2.61 /
1.34 / 0.85 (MMFF 3.08 / 1.36 / 0.86); [26] 2.87 / 0.95 / 0.56 (MMFF 3.49 / 0.98 / 0.58). Regular
polygons: [14] 2.40, [18] 1.74, [22] 1.25, [26] 0.89 with scf. For the honeycomb [18]annulene the
calibrated model gives an inner/outer shift difference of 13.2 ppm with the Johnson–Bovey double loop
of :mod:`ringshift.fields` (scf-coulson 19.6 ppm), against 12.2 ppm observed at low temperature
(Oth, Pure Appl. Chem. 1971, 25, 573, from memory), which was not used in the calibration. The
agreement is sensitive: [18]annulene sits just above the alternation threshold, and calibrating on a
chain BLA of 0.070 / 0.075 / 0.085 / 0.090 Å instead of 0.080 Å would give the honeycomb [18]annulene
1.69 / 1.45 / 1.07 / 0.92 × (18.0 / 15.4 / 11.3 / 9.7 ppm); at 0.060 Å it does not alternate (2.21 ×).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
from rdkit import Chem
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from ringshift.huckel import BETA0_EV, BETA_REF_LENGTH_A, HETERO_PARAMETERS, SCF_RELATIONS, absolute_current_nA_per_T, benzene_reference_response, beta_distance_factor, density_matrix, huckel_matrix, kirchhoff_decomposition, london_bond_response, scf_cc_lengths, solve_fragments
from ringshift import pigeometry as pg
from ringshift.constants import BENZENE_CURRENT_NA_PER_T
from ringshift.errors import InputError
from ringshift.huckel import PI_CHARGE_PPM_PER_E, pi_charge_shift_ppm

__all__ = [
    "PiSystem", "HuckelResult", "LondonCurrents", "perceive_pi", "circuit_electrons", "huckel_class",
    "huckel", "london_currents", "circuit_normals", "orbital_axes", "pi_charge_shift_ppm", "PI_CHARGE_PPM_PER_E",
    "BETA_MODELS",
]

BETA_MODELS = ("uniform", "distance", "scf", "scf-coulson")
_ELEMENTS = {5: "B", 6: "C", 7: "N", 8: "O", 9: "F", 16: "S", 17: "Cl", 35: "Br", 53: "I"}
_PT = Chem.GetPeriodicTable()
_OVERLAP_WARN = 0.7  # |cos| below this (misalignment above ~45°) is reported
_PYRAMID_WARN_A = 0.3  # a π atom this far from the plane of its three neighbours is reported
_PLANAR_TOL_A = 0.1  # largest deviation from the fitted plane for a "planar" verdict


@dataclass(frozen=True)
class PiSystem:
    """The π system of a molecule (all indices in RDKit atom numbering).

    Attributes
    ----------
    atoms : sorted π atom indices. bonds : π–π bonds (i < j), sorted.
    electrons : π electrons per atom (aligned with atoms). n_electrons : their total.
    atom_types : parameter type per atom ("C", "C+", "C-", "C.", "N_pyridine", "N_pyrrole",
        "N+_pyridinium", "N_nitrile", "N-", "O_furan", "O_carbonyl", "O-", "O+_pyrylium",
        "S_thiophene", "S_thione", "B", "F", "Cl", "Br", "I").
    core_charges : Z per atom (electrons + formal charge). charge : Σ Z − n_electrons (net π charge).
    bond_kekule : bond order of each π bond in RDKit's Kekulé structure (1, 2 or 3).
    fragments : connected π fragments (sorted tuples). radical : odd electron count.
    bond_overlap : |cos| of the p-orbital axes per bond, or None without coordinates.
    fragment_max_deviation_A, fragment_planar : plane-fit verdict per fragment, or None.
    warnings : human-readable notes (radical, fragments, poor overlap, pyramidal atoms, ...).
    """

    atoms: tuple[int, ...]
    bonds: tuple[tuple[int, int], ...]
    electrons: tuple[int, ...]
    n_electrons: int
    atom_types: tuple[str, ...]
    fragments: tuple[tuple[int, ...], ...]
    warnings: tuple[str, ...]
    core_charges: tuple[int, ...] = ()
    charge: int = 0
    bond_kekule: tuple[int, ...] = ()
    radical: bool = False
    bond_overlap: tuple[float, ...] | None = None
    fragment_max_deviation_A: tuple[float, ...] | None = None
    fragment_planar: tuple[bool, ...] | None = None


@dataclass(frozen=True, eq=False)
class HuckelResult:
    """Hückel levels of a π system; arrays are read-only, aligned with ``pi.atoms`` / ``pi.bonds``.

    energies_beta (n,) ascending, x = (E − α)/|β| (bonding negative); vectors (n, n) MO columns;
    occupations (n,), each π fragment filled with its own electrons; homo_lumo_gap_beta (smallest
    over fragments; None if undefined; 0 for a partly filled shell); open_shell; degenerate_homo;
    degenerate_open_shell (a partly filled degenerate HOMO shell); mo_fragment (n,); charges (n,) q = Z − P_rr (e); bond_orders (n_bonds,) Coulson P_rs;
    resonance (n_bonds,) β_rs/β0 used; bond_lengths_A (n_bonds,) lengths entering β(r) (geometry, or
    self-consistent C–C lengths for "scf" / "scf-coulson"; None for "uniform"); beta_model; parameters (table and
    citations); converged (scf); warnings.
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


@dataclass(frozen=True, eq=False)
class LondonCurrents:
    """Hückel–London currents. Numbers are None when ``status`` is not "ok" (no NaN anywhere).

    field_dirs (3, 3): rows x, y, z. bond_currents_rel (3, n_bonds): conventional current from i to j
    of bond (i, j), i < j, for a unit field along each row of field_dirs, in units of the benzene ring
    current (same model; benzene's clockwise-about-B circulation has magnitude 1), i.e. the sense of
    :func:`ringshift.fields.network_shielding`. bond_currents_nA_per_T = rel × 12 nA/T.
    circuits: the circuits, reordered counter-clockwise about ``normals`` (n_circuits, 3).
    circuit_response_rel (n_circuits, 3): circuit currents for unit fields along x, y, z (Kirchhoff
    decomposition); circuit_currents_rel (n_circuits,): response to a field along the circuit's own
    normal, J/J_benzene, positive = diatropic. circuit_currents_nA_per_T = rel × 12 nA/T.
    circuit_currents_abs_nA_per_T: rel × the benzene current computed from β0 (``benzene_abs_nA_per_T``).
    kirchhoff_residual: relative least-squares residual (≈1e-15 for a cycle basis);
    conservation_residual: largest net current at an atom relative to the largest bond current.
    circuit_max_deviation_A: largest deviation of each circuit from its fitted plane.
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


# ---------------------------------------------------------------------------------------------------
# validation
# ---------------------------------------------------------------------------------------------------
def _check_mol(mol) -> None:
    if not isinstance(mol, Chem.Mol):
        raise InputError(f"mol: expected an RDKit Chem.Mol, got {type(mol).__name__}")


def _check_coords(mol, coords, required: bool, name: str = "coords") -> np.ndarray | None:
    if coords is None:
        if required:
            raise InputError(f"{name}: required here; pass one conformer as an (n_atoms, 3) array in Å")
        return None
    try:
        xyz = np.ascontiguousarray(coords, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected an (n_atoms, 3) array of numbers, got {type(coords).__name__}") from None
    n = mol.GetNumAtoms()
    if xyz.shape != (n, 3):
        raise InputError(f"{name}: expected shape ({n}, 3) for this molecule, got {xyz.shape}")
    if not np.all(np.isfinite(xyz)):
        raise InputError(f"{name}: contains NaN or inf; expected finite coordinates in Å")
    return xyz


def _check_model(beta_model: str, pi) -> None:
    if beta_model not in BETA_MODELS:
        raise InputError(f"beta_model: expected one of {', '.join(BETA_MODELS)}, got {beta_model!r}")
    if not isinstance(pi, PiSystem):
        raise InputError(f"pi: expected a PiSystem from perceive_pi, got {type(pi).__name__}")


# ---------------------------------------------------------------------------------------------------
# perception
# ---------------------------------------------------------------------------------------------------
def _kekule_orders(mol) -> tuple[dict, list[str]]:
    m = Chem.Mol(mol)
    notes = []
    try:
        Chem.Kekulize(m, clearAromaticFlags=True)
    except Exception:  # noqa: BLE001 - RDKit raises several types; fall back to rounded orders
        notes.append("RDKit could not kekulise the molecule; aromatic bonds treated as single")
    orders = {}
    for b in m.GetBonds():
        i, j = sorted((b.GetBeginAtomIdx(), b.GetEndAtomIdx()))
        bt = b.GetBondType()
        orders[(i, j)] = 3 if bt == Chem.BondType.TRIPLE else 2 if bt == Chem.BondType.DOUBLE else 1
    return orders, notes


def _pi_count(atom) -> int | None:
    """π electrons of an atom with one p orbital in the π system, or None if not a π centre."""
    sym = _ELEMENTS.get(atom.GetAtomicNum())
    if sym is None:
        return None
    nsig = atom.GetTotalDegree()
    n_nb = _PT.GetNOuterElecs(atom.GetAtomicNum()) - atom.GetFormalCharge() - nsig
    if atom.GetHybridization() == Chem.HybridizationType.SP:
        free = 2 - nsig
        if free < 0 or (n_nb - 2 * free) % 2:
            return None
        pi = (n_nb - 2 * free) // 2
    else:
        free = 3 - nsig
        if free < 0:
            return None
        pi = n_nb - 2 * free
    return pi if 0 <= pi <= 2 else None


def _atom_type(atom, pi: int) -> str | None:
    sym = _ELEMENTS[atom.GetAtomicNum()]
    q = atom.GetFormalCharge()
    core = pi + q
    if sym == "C":
        return "C+" if q > 0 else "C-" if q < 0 else ("C." if atom.GetNumRadicalElectrons() else "C")
    if sym == "N":
        if core == 1:
            sp = atom.GetHybridization() == Chem.HybridizationType.SP
            return "N-" if q < 0 else "N_nitrile" if sp else "N_pyridine"
        if core == 2:
            return "N+_pyridinium" if q > 0 else "N_pyrrole"
    if sym == "O":
        if core == 1:
            return "O-" if q < 0 else "O_carbonyl"
        if core == 2:
            return "O+_pyrylium" if q > 0 else "O_furan"
    if sym == "S" and q == 0:
        return {1: "S_thione", 2: "S_thiophene"}.get(core)
    if sym == "B" and core == 0:
        return "B"
    if sym in ("F", "Cl", "Br", "I") and core == 2:
        return sym
    return None


def _components(atoms, bonds) -> list[tuple[int, ...]]:
    """Connected components of the π graph (scipy.sparse.csgraph), as sorted tuples of atom indices."""
    if not atoms:
        return []
    idx = {a: k for k, a in enumerate(atoms)}
    e = np.array([(idx[i], idx[j]) for i, j in bonds], dtype=np.intp).reshape(-1, 2)
    graph = coo_matrix((np.ones(len(e)), (e[:, 0], e[:, 1])), shape=(len(atoms), len(atoms)))
    labels = connected_components(graph, directed=False)[1]
    return sorted(tuple(a for a, lab in zip(atoms, labels) if lab == k) for k in set(labels))


def _p_axes(mol, xyz: np.ndarray, atoms, bonds) -> tuple[np.ndarray, list[str]]:
    """p-orbital axes of the π atoms (:func:`ringshift.pigeometry.p_orbital_axes`) and notes."""
    idx = {a: k for k, a in enumerate(atoms)}
    nbrs = [[n.GetIdx() for n in mol.GetAtomWithIdx(a).GetNeighbors()] for a in atoms]
    lb = np.array([(idx[i], idx[j]) for i, j in bonds], dtype=np.intp).reshape(-1, 2)
    axes, height, twist = pg.p_orbital_axes(xyz, list(atoms), nbrs, lb)
    notes = [f"pyramidal π atom {a}: {h:.2f} Å out of the plane of its neighbours"
             for a, h in zip(atoms, height) if h > _PYRAMID_WARN_A]
    if twist is not None:
        i, j = atoms[lb[twist, 0]], atoms[lb[twist, 1]]
        notes.append(f"Möbius-type twist: p-orbital phase reverses around a ring at bond ({i}, {j}); "
                     "Hückel topology (|cos|) used")
    return axes, notes


def orbital_axes(pi: "PiSystem", mol, coords) -> np.ndarray:
    """Unit p-orbital axes (n_pi, 3) of the π atoms of one conformer (coords (n_atoms, 3), Å).

    The axes of :func:`ringshift.pigeometry.p_orbital_axes` (POAV1 for three σ neighbours), signs made
    consistent along the π graph; an atom without a defined axis of its own (one σ neighbour, as a
    carbonyl O, or a linear pair, as a nitrile C) takes a π neighbour's.
    """
    return _p_axes(mol, np.asarray(coords, dtype=np.float64), pi.atoms, pi.bonds)[0]


def perceive_pi(mol, coords=None) -> PiSystem:
    """Find the π atoms, bonds, electrons and fragments of an RDKit molecule.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Sanitised, explicit hydrogens, aromaticity perceived.
    coords : (n_atoms, 3) array_like, Å, optional
        One conformer; enables p-orbital overlap, pyramidality and planarity checks.

    Returns
    -------
    PiSystem
        Never raises for chemistry: radicals, no π system, fragments go into ``warnings``.
    """
    _check_mol(mol)
    xyz = _check_coords(mol, coords, required=False)
    orders, notes = _kekule_orders(mol)
    counts = {}
    for atom in mol.GetAtoms():
        if atom.GetAtomicNum() == 1:
            continue
        pi = _pi_count(atom)
        if pi is not None and _atom_type(atom, pi) is not None:
            counts[atom.GetIdx()] = pi
    seeds = {a for a in counts if mol.GetAtomWithIdx(a).GetIsAromatic()}
    for (i, j), o in orders.items():
        if o >= 2 and i in counts and j in counts:
            seeds.update((i, j))
    pi_atoms = set(seeds)
    for a, pi in counts.items():
        atom = mol.GetAtomWithIdx(a)
        if a not in seeds and (pi != 1 or atom.GetNumRadicalElectrons()):
            if any(n.GetIdx() in seeds for n in atom.GetNeighbors()):
                pi_atoms.add(a)
    notes += [f"atom {at.GetIdx()} ({at.GetSymbol()}) looks conjugated but has no Hückel parameters here; "
              "left out of the π system" for at in mol.GetAtoms()
              if at.GetIdx() not in counts and at.GetAtomicNum() > 1 and at.GetTotalDegree() <= 3
              and any(b.GetIsConjugated() for b in at.GetBonds())
              and any(n.GetIdx() in pi_atoms for n in at.GetNeighbors())]
    atoms = tuple(sorted(pi_atoms))
    bonds = tuple(sorted((i, j) for (i, j) in orders if i in pi_atoms and j in pi_atoms))
    electrons = tuple(counts[a] for a in atoms)
    types = tuple(_atom_type(mol.GetAtomWithIdx(a), counts[a]) for a in atoms)
    cores = tuple(e + mol.GetAtomWithIdx(a).GetFormalCharge() for a, e in zip(atoms, electrons))
    n_el = int(sum(electrons))
    frags = tuple(_components(atoms, bonds))
    if not atoms:
        notes.append("no π system: no sp2/sp atom in a conjugated network")
    if n_el % 2:
        notes.append(f"radical: odd π-electron count ({n_el}); open shell at the Hückel level")
    if len(frags) > 1:
        notes.append(f"π system split into {len(frags)} disconnected fragments (sizes "
                     f"{', '.join(str(len(f)) for f in frags)}); no current can pass between them")
    pi_charge = sum(mol.GetAtomWithIdx(a).GetFormalCharge() for a in atoms)
    if pi_charge != Chem.GetFormalCharge(mol):
        notes.append(f"formal charge {Chem.GetFormalCharge(mol):+d} of the molecule, {pi_charge:+d} of it on π atoms")
    overlap = dev = planar = None
    if xyz is not None and atoms:
        axes, more = _p_axes(mol, xyz, atoms, bonds)
        notes.extend(more)
        idx = {a: k for k, a in enumerate(atoms)}
        overlap = tuple(float(min(1.0, abs(np.dot(axes[idx[i]], axes[idx[j]])))) for i, j in bonds)
        poor = [(b, o) for b, o in zip(bonds, overlap) if o < _OVERLAP_WARN]
        if poor:
            notes.append("poor p-orbital overlap (β scaled by |cos|) at bonds "
                         + ", ".join(f"{b} |cos| = {o:.2f}" for b, o in poor[:6]) + (" ..." if len(poor) > 6 else ""))
        dev = tuple(float(np.max(np.abs(pg.plane_fit(xyz[list(f)])[2]), initial=0.0)) for f in frags)
        planar = tuple(d <= _PLANAR_TOL_A for d in dev)
        for f, d in zip(frags, dev):
            if d > _PLANAR_TOL_A:
                notes.append(f"non-planar π fragment of {len(f)} atoms: largest deviation from its plane {d:.2f} Å")
    return PiSystem(atoms=atoms, bonds=bonds, electrons=electrons, n_electrons=n_el, atom_types=types,
                    fragments=frags, warnings=tuple(notes), core_charges=cores,
                    charge=int(sum(cores) - n_el), bond_kekule=tuple(orders[b] for b in bonds),
                    radical=bool(n_el % 2), bond_overlap=overlap, fragment_max_deviation_A=dev,
                    fragment_planar=planar)


def huckel_class(n_electrons) -> str:
    """"4n+2", "4n" or "odd" for a π-electron count (0 counts as 4n)."""
    if isinstance(n_electrons, bool) or not isinstance(n_electrons, (int, np.integer)) or n_electrons < 0:
        raise InputError(f"n_electrons: expected a non-negative integer, got {n_electrons!r}")
    return "odd" if n_electrons % 2 else ("4n+2" if n_electrons % 4 == 2 else "4n")


def _check_circuit(pi: PiSystem, circuit, name: str, closed: bool = False) -> tuple[int, ...]:
    try:
        cyc = tuple(int(a) for a in circuit)
    except (TypeError, ValueError):
        raise InputError(f"{name}: expected a sequence of atom indices, got {circuit!r}") from None
    if len(cyc) < 3 or len(set(cyc)) != len(cyc):
        raise InputError(f"{name}: expected at least 3 distinct atom indices, got {cyc}")
    missing = [a for a in cyc if a not in set(pi.atoms)]
    if missing:
        raise InputError(f"{name}: atoms {missing} are not π atoms; expected a cycle of π atoms")
    bset = set(pi.bonds)
    bad = [(a, b) for a, b in zip(cyc, cyc[1:] + cyc[:1]) if closed and (min(a, b), max(a, b)) not in bset]
    if bad:
        raise InputError(f"{name}: atoms {bad[0][0]} and {bad[0][1]} are consecutive but not π-bonded; "
                         "expected the atoms in ring order")
    return cyc


def circuit_electrons(pi: PiSystem, circuit_atoms, mol) -> int:
    """π electrons of one circuit (monocycle, perimeter, ring of a fused system).

    Sum of the atoms' contributions, except that an sp2 carbon with an exocyclic (non-ring) Kekulé double
    bond to N, O or S gives its electron to that bond (counts 0), the rule of RDKit's aromaticity model
    (tropone, 2-pyridone: 6; p-benzoquinone: 4).
    """
    _check_mol(mol)
    atoms = set(_check_circuit(pi, circuit_atoms, "circuit_atoms"))
    e = dict(zip(pi.atoms, pi.electrons))
    kek = dict(zip(pi.bonds, pi.bond_kekule))
    total = 0
    for a in atoms:
        n = e[a]
        if mol.GetAtomWithIdx(a).GetAtomicNum() == 6 and n == 1:
            for (i, j), o in kek.items():
                other = j if i == a else i if j == a else None
                if other is not None and o >= 2 and other not in atoms \
                        and mol.GetAtomWithIdx(other).GetAtomicNum() in (7, 8, 16) \
                        and not mol.GetBondBetweenAtoms(a, other).IsInRing():
                    n = 0
        total += n
    return total


# ---------------------------------------------------------------------------------------------------
# Hückel
# ---------------------------------------------------------------------------------------------------
def _frozen(a, dtype=np.float64) -> np.ndarray:
    arr = np.array(a, dtype=dtype)
    arr.setflags(write=False)
    return arr


def _hetero_k(ta: str, tb: str) -> float:
    """k_XY: 1 for C–C, k_CX for C–X, sqrt(k_CX k_CY) for X–Y (common practice, no source)."""
    ka = 1.0 if ta.startswith("C") else HETERO_PARAMETERS[ta][1]
    kb = 1.0 if tb.startswith("C") else HETERO_PARAMETERS[tb][1]
    return ka * kb if ta.startswith("C") or tb.startswith("C") else float(np.sqrt(ka * kb))


def _setup(pi: PiSystem, mol, xyz, distortion):
    idx = {a: k for k, a in enumerate(pi.atoms)}
    lb = np.array([(idx[i], idx[j]) for i, j in pi.bonds], dtype=np.intp).reshape(-1, 2)
    hd = np.array([HETERO_PARAMETERS[t][0] for t in pi.atom_types])
    k = np.array([_hetero_k(pi.atom_types[i], pi.atom_types[j]) for i, j in lb])
    is_cc = np.array([pi.atom_types[i].startswith("C") and pi.atom_types[j].startswith("C") for i, j in lb], bool)
    dbl = np.array([o >= 2 for o in pi.bond_kekule], bool).reshape(-1) if pi.bond_kekule else np.zeros(len(lb), bool)
    if xyz is not None and pi.atoms:
        axes, _ = _p_axes(mol, xyz, pi.atoms, pi.bonds)
        ov = np.array([min(1.0, abs(np.dot(axes[i], axes[j]))) for i, j in lb])
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
        Used for β(r) ("distance") and for the p-orbital alignment factor |cos ω| of every bond
        (β scaled by |cos| of the angle between the two p-orbital axes; the cosine law for twisted π
        bonds, common practice, no source).
    beta_model : "uniform" | "distance" | "scf" | "scf-coulson", keyword-only (see :mod:`ringshift.huckel`)
    distortion : float, optional, keyword-only
        Explicit bond alternation δ (|δ| < 1): β × (1 + δ) for the Kekulé double bonds, × (1 − δ)
        for the single bonds. Breaks the degeneracy of D_Nh 4n annulenes (Pople & Untch 1966).

    Returns
    -------
    HuckelResult
    """
    _check_mol(mol)
    _check_model(beta_model, pi)
    xyz = _check_coords(mol, coords, required=beta_model != "uniform")
    if distortion is not None and not (isinstance(distortion, (int, float)) and -1.0 < float(distortion) < 1.0):
        raise InputError(f"distortion: expected a bond-alternation fraction in (-1, 1), got {distortion!r}")
    lb, hd, k, is_cc, dbl, ov, lengths, dist = _setup(pi, mol, xyz, distortion)
    notes, converged = [], True
    frags = [np.searchsorted(pi.atoms, f) for f in pi.fragments]
    f_elec = [sum(pi.electrons[i] for i in f) for f in frags]
    if beta_model == "uniform":
        res, used_len = k * dist * ov, None
    elif beta_model == "distance":
        res = np.where(is_cc, beta_distance_factor(lengths), k) * dist * ov
        used_len = lengths
    else:  # each fragment keeps its own electrons
        r0, slope = SCF_RELATIONS[beta_model][:2]
        r = np.zeros(len(lb))
        for f_idx, f_el in zip(frags, f_elec):
            sel = np.flatnonzero(np.isin(lb[:, 0], f_idx))
            loc = np.searchsorted(f_idx, lb[sel])
            r[sel], ok, nit = scf_cc_lengths(hd[f_idx], loc, k[sel], is_cc[sel], (ov * dist)[sel], dbl[sel], f_el,
                                                r0_A=r0, slope_A=slope)
            if not ok:
                converged = False
                notes.append(f"scf bond lengths: no stable closed-shell solution after {nit} iterations")
        res = np.where(is_cc, beta_distance_factor(np.where(is_cc, r, BETA_REF_LENGTH_A)), k) * dist * ov
        used_len = np.where(is_cc, r, lengths)
    h0 = huckel_matrix(hd, lb, res)
    e, c, occ, labels, open_shell, deg, deg_open, gap = solve_fragments(h0, frags, f_elec)
    p = density_matrix(c, occ)
    if open_shell:
        notes.append("open shell: " + ("degenerate, partly filled HOMO" if deg_open else "singly occupied HOMO"))
    elif gap is not None and gap < 0.05:
        notes.append(f"near-degenerate HOMO/LUMO (gap {gap:.3g} |β|): currents are large and geometry-sensitive")
    params = {"table": {t: HETERO_PARAMETERS[t] for t in sorted(set(pi.atom_types))}, "beta_model": beta_model,
              "beta_r": "beta0*exp(-(r-1.397)/0.3106), Longuet-Higgins & Salem 1959 (from memory)",
              "bond_order_length": ({"relation": f"r = {SCF_RELATIONS[beta_model][0]:.4f} - "
                                     f"{SCF_RELATIONS[beta_model][1]:.4f} p", "source": SCF_RELATIONS[beta_model][2]}
                                    if beta_model in SCF_RELATIONS else None),
              "overlap": "|cos| of POAV-type p-orbital axes" if xyz is not None else "none (no coordinates)",
              "distortion": distortion}
    return HuckelResult(
        energies_beta=_frozen(e), vectors=_frozen(c), occupations=_frozen(occ), homo_lumo_gap_beta=gap,
        open_shell=open_shell, degenerate_homo=deg, degenerate_open_shell=deg_open, mo_fragment=_frozen(labels, np.intp),
        charges=_frozen(np.array(pi.core_charges, float) - np.diag(p)),
        bond_orders=_frozen(p[lb[:, 0], lb[:, 1]] if len(lb) else np.zeros(0)), resonance=_frozen(res),
        bond_lengths_A=None if used_len is None else _frozen(used_len), beta_model=beta_model,
        parameters=params, converged=converged, warnings=tuple(notes))


# ---------------------------------------------------------------------------------------------------
# London currents
# ---------------------------------------------------------------------------------------------------
def circuit_normals(coords, circuits) -> np.ndarray:
    """Unit circuit normals (n_circuits, 3) from SVD plane fits, consistently oriented
    (:func:`ringshift.pigeometry.circuit_normals`)."""
    return pg.circuit_normals(np.asarray(coords, dtype=np.float64), [list(c) for c in circuits])


def london_currents(pi: PiSystem, mol, coords, circuits: Sequence[Sequence[int]], normals=None, *,
                    beta_model: str = "distance", distortion: float | None = None,
                    beta0_eV: float = BETA0_EV) -> LondonCurrents:
    """Hückel–London bond and circuit currents (analytic first-order response, any orientation).

    Parameters
    ----------
    pi, mol : as for :func:`huckel`
    coords : (n_atoms, 3) array_like, Å
    circuits : sequence of ordered cycles of π atoms (e.g. the faces of the π graph: a cycle basis)
    normals : (n_circuits, 3) array_like, optional; default :func:`circuit_normals`
    beta_model, distortion : as for :func:`huckel`
    beta0_eV : float, keyword-only; β0 in eV for the absolute current (default ``huckel.BETA0_EV``)

    Returns
    -------
    LondonCurrents
        Ring currents relative to benzene (same model, regular hexagon of 1.397 Å), positive =
        diatropic; None with an explanatory ``status`` when there is no number to give (no π system,
        open shell with degenerate partly filled HOMO).
    """
    _check_mol(mol)
    _check_model(beta_model, pi)
    xyz = _check_coords(mol, coords, required=True)
    if isinstance(beta0_eV, bool) or not isinstance(beta0_eV, (int, float)) or not np.isfinite(beta0_eV) or beta0_eV == 0:
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
    base = dict(field_dirs=_frozen(np.eye(3)), circuits=tuple(oriented), normals=_frozen(nrm.reshape(-1, 3)),
                circuit_max_deviation_A=_frozen(devs), benzene_abs_nA_per_T=bz_abs, beta_model=beta_model,
                beta0_eV=float(beta0_eV), huckel=hr)
    notes = list(pi.warnings) + list(hr.warnings) + [
        f"circuit {n} ({len(c)} atoms) is non-planar: largest deviation {d:.2f} Å from its plane; the current "
        "is its response to a field along its mean normal" for n, (c, d) in enumerate(zip(oriented, devs)) if d > _PLANAR_TOL_A]
    none = dict(bond_currents_rel=None, bond_currents_nA_per_T=None, circuit_response_rel=None,
                circuit_currents_rel=None, circuit_currents_nA_per_T=None, circuit_currents_abs_nA_per_T=None,
                kirchhoff_residual=None, conservation_residual=None)
    if not pi.atoms:
        return LondonCurrents(status="no π system", open_shell=False, warnings=tuple(notes), **base, **none)
    lb = np.array([(pi.atoms.index(i), pi.atoms.index(j)) for i, j in pi.bonds], dtype=np.intp).reshape(-1, 2)
    h0 = huckel_matrix([HETERO_PARAMETERS[t][0] for t in pi.atom_types], lb, hr.resonance)
    status = ("open shell: degenerate, partly filled HOMO (e.g. a D_Nh 4n annulene); Hückel–London gives no "
              "finite current. Pass a distortion (bond alternation) or a geometry that breaks the degeneracy")
    if hr.degenerate_open_shell:
        return LondonCurrents(status=status, open_shell=True, warnings=tuple(notes), **base, **none)
    try:
        g = london_bond_response(h0, xyz[list(pi.atoms)], lb, hr.energies_beta, hr.vectors, hr.occupations,
                                    labels=hr.mo_fragment)
    except ValueError:
        return LondonCurrents(status=status, open_shell=True, warnings=tuple(notes), **base, **none)
    diat = g / g_bz  # diatropic-sense current from i to j, benzene = 1
    x, resid = kirchhoff_decomposition(diat, inc)
    div = np.zeros((3, len(pi.atoms)))  # net current leaving each atom
    np.add.at(div, (slice(None), lb[:, 0]), diat)
    np.add.at(div, (slice(None), lb[:, 1]), -diat)
    cons = float(np.max(np.abs(div)) / max(np.max(np.abs(diat)), 1e-300)) if diat.size else 0.0
    resp = x.T  # (n_circuits, 3)
    rel = np.einsum("ca,ca->c", resp, nrm.reshape(-1, 3))
    return LondonCurrents(
        status="ok", open_shell=hr.open_shell, warnings=tuple(notes), **base,
        bond_currents_rel=_frozen(-diat), bond_currents_nA_per_T=_frozen(-diat * BENZENE_CURRENT_NA_PER_T),
        circuit_response_rel=_frozen(resp), circuit_currents_rel=_frozen(rel),
        circuit_currents_nA_per_T=_frozen(rel * BENZENE_CURRENT_NA_PER_T),
        circuit_currents_abs_nA_per_T=_frozen(rel * bz_abs), kirchhoff_residual=resid, conservation_residual=cons)
