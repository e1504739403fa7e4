"""Starting geometries for the conformer search of macrocycles and polycycles: seeds, flat and perimeter starts.

ETKDG (Wang, Witek, Landrum & Riniker, J. Chem. Inf. Model. 2020, 60, 2044) rarely embeds a large
conjugated ring flat: with seed 42, 200 embeddings of [18]annulene minimised with MMFF94 (Halgren,
J. Comput. Chem. 1996, 17, 490) never reach the planar minimum (design notes §7). This module makes
flat candidates on purpose, without changing any double-bond configuration:

* :func:`honeycomb_perimeters` — an isolated conjugated ring whose atoms are all sp2 is laid out as a
  closed, self-avoiding path on the honeycomb lattice (every bond angle 120°). Walking along the ring, the
  path turns ±60° at every atom; a cis ring bond keeps the turn direction of its first atom, a trans bond
  reverses it (common practice, no source: the planar zig-zag/U geometry of polyenes). Double bonds take
  cis/trans from the input's E/Z; single bonds are enumerated. The closures are the planar perimeters of
  polyhex shapes (the planar, 6-inner-H [18]annulene is the perimeter of coronene).
* :func:`project_onto_plane` — an embedded or minimised conformer with its conjugated ring atoms and their
  hydrogens projected onto their least-squares plane.

Every flat start gets a small deterministic out-of-plane displacement so that the force field can leave an
exactly planar saddle point. The search itself (embedding, minimisation, ranking) is in
:mod:`ringshift.geometry.conformers`.
"""

from __future__ import annotations

import numpy as np
from rdkit import Chem

from ringshift.geometry.planes import plane_fit

__all__ = ['needs_search', 'derived_seeds', 'conjugated_ring_atoms', 'perimeter_rings', 'ring_cis_pattern',
           'honeycomb_perimeters', 'lattice_coordinates', 'project_onto_plane', 'planarity_rms_A']

MACROCYCLE_RING = 12                 #: rings of this many atoms or more are searched (design notes §7)
MAX_SEED = 2**31 - 1                 #: ETKDG's randomSeed is a C int
LATTICE_BOND_A = 1.40                #: C–C bond of the lattice perimeters, Å (benzene 1.39–1.40 Å; from memory)
FLAT_NOISE_A = 0.02                  #: out-of-plane displacement (standard deviation) of flat starts, Å

# the six unit steps of the triangular lattice in the basis e0 = (1, 0), e1 = (1/2, √3/2), 60° apart
_STEPS = ((1, 0), (0, 1), (-1, 1), (-1, 0), (0, -1), (1, -1))


def needs_search(mol: Chem.Mol) -> bool:
    """True for a ring of >= 12 atoms, a bridged ring pair (two SSSR rings sharing >= 3 atoms) or a fused
    system of >= 3 rings: the molecules whose conformers get the multi-seed search with flat starts."""
    rings = [set(r) for r in mol.GetRingInfo().AtomRings()]
    if any(len(r) >= MACROCYCLE_RING for r in rings):
        return True
    shared = [(a, b) for a in range(len(rings)) for b in range(a + 1, len(rings)) if rings[a] & rings[b]]
    if any(len(rings[a] & rings[b]) >= 3 for a, b in shared):
        return True
    parent = list(range(len(rings)))             # ring systems by union-find over shared atoms

    def root(k: int) -> int:
        while parent[k] != k:
            k = parent[k]
        return k

    for a, b in shared:
        parent[root(a)] = root(b)
    sizes = np.bincount([root(k) for k in range(len(rings))]) if rings else np.zeros(0, dtype=int)
    return bool(sizes.size and sizes.max() >= 3)


def derived_seeds(seed: int, count: int) -> list[int]:
    """``count`` ETKDG seeds from one user seed: the seed itself, then NumPy ``SeedSequence(seed)`` states
    reduced to 0..2³¹−2. The same seed always gives the same list."""
    if count <= 1:
        return [int(seed)]
    extra = np.random.SeedSequence(int(seed)).generate_state(count - 1, dtype=np.uint64) % np.uint64(MAX_SEED)
    return [int(seed)] + [int(s) for s in extra]


def _flat(atom: Chem.Atom) -> bool:
    return atom.GetAtomicNum() > 1 and atom.IsInRing() and atom.GetHybridization() in (
        Chem.HybridizationType.SP2, Chem.HybridizationType.SP)


def conjugated_ring_atoms(mol: Chem.Mol) -> list[int]:
    """Atoms of the largest connected set of sp2/sp ring atoms (heavy atoms only), sorted.

    For [18]annulene its 18 carbons, for a porphyrin the 24 core atoms, for 1,6-methano[10]annulene the
    10 perimeter carbons (the bridge is sp3). Empty when the molecule has no sp2/sp ring atom.
    """
    flat = {a.GetIdx() for a in mol.GetAtoms() if _flat(a)}
    best: list[int] = []
    seen: set[int] = set()
    for start in sorted(flat):
        if start in seen:
            continue
        comp, stack = [], [start]
        seen.add(start)
        while stack:
            k = stack.pop()
            comp.append(k)
            for nb in mol.GetAtomWithIdx(k).GetNeighbors():
                if nb.GetIdx() in flat and nb.GetIdx() not in seen:
                    seen.add(nb.GetIdx())
                    stack.append(nb.GetIdx())
        if len(comp) > len(best):
            best = comp
    return sorted(best)


def perimeter_rings(mol: Chem.Mol) -> list[list[int]]:
    """SSSR rings of >= 12 sp2 atoms that share no atom with another ring, in ring order (annulenes)."""
    info = mol.GetRingInfo()
    out = []
    for ring in info.AtomRings():
        if len(ring) < MACROCYCLE_RING:
            continue
        atoms = [mol.GetAtomWithIdx(k) for k in ring]
        if all(a.GetHybridization() == Chem.HybridizationType.SP2 and info.NumAtomRings(a.GetIdx()) == 1
               for a in atoms):
            out.append(list(ring))
    return out


def ring_cis_pattern(cis_refs, ring: list[int]) -> list[bool | None]:
    """Cis (True) / trans (False) of the ring dihedral about each ring bond ring[k]–ring[k+1], from the E/Z of
    the input; None where the bond carries no stereo (single bonds, free to choose).

    ``cis_refs`` are tuples (a, i, j, d, want_cis, label) with want_cis for the dihedral a–i–j–d
    (:func:`ringshift.geometry.conformers._cis_references`); swapping a reference atom for the other
    neighbour (the ring neighbour) flips cis and trans.
    """
    n, pos = len(ring), {a: k for k, a in enumerate(ring)}
    out: list[bool | None] = [None] * n
    for a, i, j, d, want_cis, _ in cis_refs:
        if i not in pos or j not in pos:
            continue
        if pos[j] != (pos[i] + 1) % n:
            if pos[i] != (pos[j] + 1) % n:
                continue
            i, j, a, d = j, i, d, a
        k = pos[i]
        flips = (a != ring[k - 1]) + (d != ring[(k + 2) % n])
        out[k] = bool(want_cis) ^ (flips % 2 == 1)
    return out


def honeycomb_perimeters(cis: list[bool | None], max_nodes: int = 200_000) -> tuple[list[list[tuple[int, int]]], bool]:
    """Closed self-avoiding honeycomb paths of a ring with the given cis/trans pattern.

    Parameters
    ----------
    cis : list of bool or None, length n
        Per ring bond k (atom k to atom k+1, cyclic): True cis, False trans, None either.
    max_nodes : int
        Search budget (partial paths visited).

    Returns
    -------
    paths : list of list of (int, int)
        Lattice sites (coefficients of e0 = (1, 0) and e1 = (1/2, √3/2)) of atoms 0..n-1, one list per
        closed path; atom 0 at the origin, bond 0 along e0, the path turning left at atom 0 (the mirror
        image is the same planar shape). Sorted by enclosed area, largest first, then by sites.
    complete : bool
        False when the budget ran out before the enumeration finished.
    """
    n = len(cis)
    found: list[list[tuple[int, int]]] = []
    if n < 6 or n % 2:                           # a closed honeycomb path has an even length >= 6
        return found, True
    sites: list[tuple[int, int]] = [(0, 0)]
    occupied = {(0, 0)}
    budget = [max_nodes]

    def walk(k: int, d: int, turn: int) -> None:
        """Atom k is placed; bond k leaves it along step d; ``turn`` is the turn sign (+1 left) at atom k."""
        budget[0] -= 1
        if budget[0] < 0:
            return
        x, y = sites[k][0] + _STEPS[d][0], sites[k][1] + _STEPS[d][1]
        if k == n - 1:                           # bond n-1 returns to atom 0, which must turn left into e0
            if (x, y) == (0, 0) and d == 5 and (cis[k] is None or cis[k] == (turn == 1)):
                found.append(list(sites))
            return
        # lattice distance back to the origin must fit in the bonds left
        if (x, y) in occupied or (abs(x) + abs(y) + abs(x + y)) // 2 > n - 1 - k:
            return
        sites.append((x, y))
        occupied.add((x, y))
        for c in ((True, False) if cis[k] is None else (cis[k],)):
            t = turn if c else -turn
            walk(k + 1, (d + t) % 6, t)
        sites.pop()
        occupied.discard((x, y))

    walk(0, 0, 1)
    return _sorted(found), budget[0] >= 0


def _area(sites: list[tuple[int, int]]) -> float:
    p = lattice_coordinates(sites, 1.0)
    return 0.5 * abs(float(np.sum(p[:, 0] * np.roll(p[:, 1], -1) - np.roll(p[:, 0], -1) * p[:, 1])))


def _sorted(paths: list[list[tuple[int, int]]]) -> list[list[tuple[int, int]]]:
    return sorted(paths, key=lambda s: (-round(_area(s), 6), s))


def lattice_coordinates(sites, bond_A: float = LATTICE_BOND_A) -> np.ndarray:
    """Cartesian coordinates (n, 3), Å, z = 0, of honeycomb sites given as (e0, e1) coefficients."""
    s = np.asarray(sites, dtype=np.float64).reshape(-1, 2)
    return np.column_stack([bond_A * (s[:, 0] + 0.5 * s[:, 1]), bond_A * np.sqrt(3.0) / 2.0 * s[:, 1],
                            np.zeros(len(s))])


def project_onto_plane(mol: Chem.Mol, coords: np.ndarray, atoms: list[int]) -> np.ndarray:
    """Project ``atoms`` and the hydrogens bonded to them onto the least-squares plane of ``atoms``.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        The molecule (for the hydrogens of ``atoms``).
    coords : numpy.ndarray, shape (n_atoms, 3)
        One conformer, Å.
    atoms : list of int
        The conjugated ring atoms (:func:`conjugated_ring_atoms`), at least 3.

    Returns
    -------
    numpy.ndarray, shape (n_atoms, 3)
        A copy with those atoms in the plane; every other atom unchanged (the force field repairs the bonds).
    """
    x = np.array(coords, dtype=np.float64)
    centre, normal, _ = plane_fit(x[atoms])
    moved = set(atoms) | {nb.GetIdx() for k in atoms for nb in mol.GetAtomWithIdx(k).GetNeighbors()
                          if nb.GetAtomicNum() == 1}
    idx = sorted(moved)
    x[idx] -= np.outer((x[idx] - centre) @ normal, normal)
    return x


def planarity_rms_A(coords: np.ndarray, atoms: list[int]) -> float:
    """RMS distance (Å) of ``atoms`` from their least-squares plane in one conformer (n_atoms, 3)."""
    if len(atoms) < 3:
        return 0.0
    return float(np.sqrt(np.mean(plane_fit(np.asarray(coords, dtype=np.float64)[atoms])[2] ** 2)))
