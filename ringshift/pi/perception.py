"""The one π perception: π atoms, bonds, electron counts, fragments and planarity of an RDKit molecule.

``perceive_pi(mol, coords)`` → :class:`PiSystem`. The Hückel levels built on it are
:func:`ringshift.pi.huckel.huckel`, the currents :func:`ringshift.pi.london.london_currents`, the
parameters :mod:`ringshift.pi.parameters`; proton classes and the default circuit graph use this
perception too.

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

Annulenes and the β model (measured; tests/pi/test_pisystem.py)
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
(:mod:`ringshift.pi.bond_lengths`). The earlier Coulson line through ethylene and benzene (S = 0.186 Å) remains
as ``beta_model="scf-coulson"``; it under-alternates the infinite chain (BLA 0.067 Å).

Measured J/J_benzene (distance on the given geometry / scf-coulson / scf), ideal honeycomb perimeters
(pyrene, coronene, ovalene, circumanthracene; 4, 6, 8, 10 inner H) and MMFF94 geometries relaxed from
them: [14] 1.65 / 1.63 / 1.63 (MMFF, 0.2 Å non-planar: 1.95 / 1.67 / 1.67; no alternation in either
scf model); [18] 2.24 / 1.85 / 1.24 (MMFF 2.60 / 1.86 / 1.25; scf bonds 1.374/1.433 Å); [22] 2.61 /
1.34 / 0.85 (MMFF 3.08 / 1.36 / 0.86); [26] 2.87 / 0.95 / 0.56 (MMFF 3.49 / 0.98 / 0.58). Regular
polygons: [14] 2.40, [18] 1.74, [22] 1.25, [26] 0.89 with scf. For the honeycomb [18]annulene the
calibrated model gives an inner/outer shift difference of 13.2 ppm with the Johnson–Bovey double loop
of :mod:`ringshift.fields.polygon` (scf-coulson 19.6 ppm), against 12.2 ppm observed at low temperature
(Oth, Pure Appl. Chem. 1971, 25, 573, from memory), which was not used in the calibration. The
agreement is sensitive: [18]annulene sits just above the alternation threshold, and calibrating on a
chain BLA of 0.070 / 0.075 / 0.085 / 0.090 Å instead of 0.080 Å would give the honeycomb [18]annulene
1.69 / 1.45 / 1.07 / 0.92 × (18.0 / 15.4 / 11.3 / 9.7 ppm); at 0.060 Å it does not alternate (2.21 ×).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from rdkit import Chem

from ringshift import _validation as _v
from ringshift._graphs import component_labels
from ringshift.errors import InputError
from ringshift.geometry import planes as pg

__all__ = ['PiSystem', 'perceive_pi', 'circuit_electrons', 'huckel_class', 'orbital_axes', 'circuit_topology',
           'expected_tropicity', 'MOBIUS_NOTE', 'METAL_FACE_NOTE', 'is_metal']


_ELEMENTS = {5: "B", 6: "C", 7: "N", 8: "O", 9: "F", 16: "S", 17: "Cl", 35: "Br", 53: "I"}

_PT = Chem.GetPeriodicTable()

_NONMETALS = frozenset({1, 2, 5, 6, 7, 8, 9, 10, 14, 15, 16, 17, 18, 33, 34, 35, 36, 52, 53, 54, 85, 86})

_FACE_ON_COS = float(np.cos(np.radians(45.0)))  # metal–atom bond within 45° of the p axis: face-on (η) binding

_OVERLAP_WARN = 0.7  # |cos| below this (misalignment above ~45°) is reported

_PYRAMID_WARN_A = 0.3  # a π atom this far from the plane of its three neighbours is reported

_PLANAR_TOL_A = 0.1  # largest deviation from the fitted plane for a "planar" verdict

#: Opening words of the note (and of the current status) of a metal bound to the face of the π system.
METAL_FACE_NOTE = "metal bound to the face of the π system"

#: Opening words of the note on a ring of Möbius topology.
MOBIUS_NOTE = "Möbius-type twist"


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
    metals : metal atoms (:func:`is_metal`) of the molecule; they are never π atoms.
    face_on_metals : metals bound to the face of the π system (η² or more, or a bond along a p axis); the
        Hückel–London step gives no current then (:data:`METAL_FACE_NOTE`).
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
    metals: tuple[int, ...] = ()
    face_on_metals: tuple[int, ...] = ()


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


def is_metal(atomic_number: int) -> bool:
    """True for an element outside the π-capable main-group set (H, He, B, C, N, O, F, Ne, Si, P, S, Cl, Ar,
    As, Se, Br, Kr, Te, I, Xe, At, Rn): metals and semi-metals that the Hückel parameters here do not cover."""
    return int(atomic_number) not in _NONMETALS


def _donated(atom) -> int:
    """Dative bonds the atom donates (its lone pair goes into the bond: two of its electrons, not one)."""
    return sum(1 for b in atom.GetBonds() if b.GetBondType() == Chem.BondType.DATIVE
               and b.GetBeginAtomIdx() == atom.GetIdx())


def _pi_count(atom) -> int | None:
    """π electrons of an atom with one p orbital in the π system, or None if not a π centre.

    Every σ bond takes one of the atom's electrons, a dative bond it donates takes two (N→Zn in a metal
    porphyrin drawn with dative bonds: the imine N keeps one π electron, as in the free base)."""
    sym = _ELEMENTS.get(atom.GetAtomicNum())
    if sym is None:
        return None
    nsig = atom.GetTotalDegree()
    n_nb = _PT.GetNOuterElecs(atom.GetAtomicNum()) - atom.GetFormalCharge() - nsig - _donated(atom)
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
    """Connected components of the π graph, as sorted tuples of atom indices."""
    if not atoms:
        return []
    idx = {a: k for k, a in enumerate(atoms)}
    e = np.array([(idx[i], idx[j]) for i, j in bonds], dtype=np.intp).reshape(-1, 2)
    labels = component_labels(len(atoms), e)
    return sorted(tuple(a for a, lab in zip(atoms, labels) if lab == k) for k in set(labels))


def _p_axes(mol, xyz: np.ndarray, atoms, bonds) -> tuple[np.ndarray, list[str]]:
    """p-orbital axes of the π atoms (:func:`ringshift.geometry.planes.p_orbital_axes`) and notes."""
    idx = {a: k for k, a in enumerate(atoms)}
    nbrs = [[n.GetIdx() for n in mol.GetAtomWithIdx(a).GetNeighbors()] for a in atoms]
    lb = np.array([(idx[i], idx[j]) for i, j in bonds], dtype=np.intp).reshape(-1, 2)
    axes, height, twist = pg.p_orbital_axes(xyz, list(atoms), nbrs, lb)
    notes = [f"pyramidal π atom {a}: {h:.2f} Å out of the plane of its neighbours"
             for a, h in zip(atoms, height) if h > _PYRAMID_WARN_A]
    if twist is not None:
        i, j = atoms[lb[twist, 0]], atoms[lb[twist, 1]]
        notes.append(f"{MOBIUS_NOTE}: p-orbital phase reverses around a ring at bond ({i}, {j}); the Hückel "
                     "matrix keeps the sign of the overlap, so that ring follows the Möbius rule (Heilbronner "
                     "1964: 4n π electrons diatropic, 4n+2 paratropic)")
    return axes, notes


def orbital_axes(pi: PiSystem, mol, coords) -> np.ndarray:
    """Unit p-orbital axes (n_pi, 3) of the π atoms of one conformer (coords (n_atoms, 3), Å).

    The axes of :func:`ringshift.geometry.planes.p_orbital_axes` (POAV1 for three σ neighbours), signs made
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
    _v.molecule(mol)
    xyz = _v.coordinates(mol, coords, required=False)
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
    types = tuple(t for a in atoms if (t := _atom_type(mol.GetAtomWithIdx(a), counts[a])) is not None)
    assert len(types) == len(atoms), "every pi atom was chosen for having an atom type"
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
    metals, face_on, more = _metal_binding(mol, xyz, atoms)
    notes.extend(more)
    return PiSystem(atoms=atoms, bonds=bonds, electrons=electrons, n_electrons=n_el, atom_types=types,
                    fragments=frags, warnings=tuple(notes), core_charges=cores,
                    charge=int(sum(cores) - n_el), bond_kekule=tuple(orders[b] for b in bonds),
                    radical=bool(n_el % 2), bond_overlap=overlap, fragment_max_deviation_A=dev,
                    fragment_planar=planar, metals=metals, face_on_metals=face_on)


def _metal_binding(mol, xyz, atoms) -> tuple[tuple[int, ...], tuple[int, ...], list[str]]:
    """Metals, the metals bound to the face of the π system, and notes on both.

    A metal is *in-plane* (σ, κ) bound when it is bonded to π atoms along their σ framework (the N of a
    metal porphyrin, a bipyridine): it is kept outside the π system and its bonds count as σ bonds. It is
    *face-on* (η) bound when two of its bonded heavy atoms are bonded to each other (η², ..., ηⁿ; a ferrocene or
    an alkene complex drawn with metal–carbon bonds) or, with coordinates, a metal–π-atom bond lies within 45°
    of that atom's p axis: the metal's d orbitals then mix with the π levels, which this Hückel model does not
    contain (common practice, no source).
    """
    metals = tuple(a.GetIdx() for a in mol.GetAtoms() if is_metal(a.GetAtomicNum()))
    notes: list[str] = []
    face_on = []
    where = {a: k for k, a in enumerate(atoms)}
    for m in metals:
        atom = mol.GetAtomWithIdx(m)
        heavy = [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() > 1 and not is_metal(n.GetAtomicNum())]
        name = f"{atom.GetSymbol()} (atom {m})"
        if not heavy:
            if atom.GetDegree() == 0:
                notes.append(f"metal {name} is not bonded to anything in the input: the π system is that of the "
                             "free ligand(s) with their formal charges")
            continue
        eta = sorted({a for i, a in enumerate(heavy) for b in heavy[i + 1:]
                      if mol.GetBondBetweenAtoms(a, b) is not None for a in (a, b)})
        along = []
        if xyz is not None:
            for n in heavy:
                # the p axis of the ligand atom from its own σ framework (the metal left out): the normal of
                # the plane of the atom and two of its other neighbours
                others = [b.GetIdx() for b in mol.GetAtomWithIdx(n).GetNeighbors() if not is_metal(b.GetAtomicNum())]
                if n not in where or len(others) < 2:
                    continue
                axis = np.cross(xyz[others[0]] - xyz[n], xyz[others[1]] - xyz[n])
                v = xyz[m] - xyz[n]
                norm = float(np.linalg.norm(axis) * np.linalg.norm(v))
                if norm > 1e-12 and abs(float(np.dot(v, axis))) > _FACE_ON_COS * norm:
                    along.append(n)
        if eta or along:
            face_on.append(m)
            why = (f"η{len(eta)} to atoms {eta}" if eta else f"bonded along the p axis of atom(s) {along}")
            notes.append(f"{METAL_FACE_NOTE}: {name} is {why}; its d orbitals mix with the π levels, which this "
                         "Hückel model does not contain, so no current is given")
        else:
            pin = [n for n in heavy if n in where]
            if pin:
                notes.append(f"metal {name} is bonded in the π plane to π atoms {pin}: kept outside the π system, "
                             "its bonds counted as σ bonds (a dative bond takes the donor's lone pair)")
    return metals, tuple(face_on), notes


def huckel_class(n_electrons) -> str:
    """"4n+2", "4n" or "odd" for a π-electron count (0 counts as 4n)."""
    if isinstance(n_electrons, bool) or not isinstance(n_electrons, (int, np.integer)) or n_electrons < 0:
        raise InputError(f"n_electrons: expected a non-negative integer, got {n_electrons!r}")
    return "odd" if n_electrons % 2 else ("4n+2" if n_electrons % 4 == 2 else "4n")


def circuit_topology(pi: PiSystem, mol, coords, circuit_atoms) -> str:
    """"mobius" when the p-orbital phase reverses an odd number of times around the circuit, else "huckel".

    The parity is the sign of the product of the cosines between consecutive p-orbital axes around the ring
    (each axis enters twice, so the arbitrary sign of an axis cancels; Heilbronner, Tetrahedron Lett. 1964, 5,
    1923). ``coords`` (n_atoms, 3), Å, one conformer; ``circuit_atoms`` π atoms in ring order.
    """
    _v.molecule(mol)
    xyz = _v.coordinates(mol, coords, required=True)
    cyc = _check_circuit(pi, circuit_atoms, "circuit_atoms", closed=True)
    axes = orbital_axes(pi, mol, xyz)
    idx = {a: k for k, a in enumerate(pi.atoms)}
    dots = [float(np.dot(axes[idx[a]], axes[idx[b]])) for a, b in zip(cyc, cyc[1:] + cyc[:1])]
    return "mobius" if sum(d < 0 for d in dots) % 2 else "huckel"


def expected_tropicity(n_electrons, topology: str = "huckel") -> str:
    """The ring-current rule for a circuit: "diatropic", "paratropic" or "open shell" (odd count).

    Hückel topology: 4n+2 diatropic, 4n paratropic; Möbius topology the reverse (Heilbronner, Tetrahedron
    Lett. 1964, 5, 1923).
    """
    cls = huckel_class(n_electrons)
    if topology not in ("huckel", "mobius"):
        raise InputError(f"topology: expected 'huckel' or 'mobius', got {topology!r}")
    if cls == "odd":
        return "open shell"
    return "diatropic" if (cls == "4n+2") == (topology == "huckel") else "paratropic"


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
    _v.molecule(mol)
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
