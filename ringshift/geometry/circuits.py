"""Conjugated circuits and their geometry: which loops carry ring currents, and where they lie.

Two parts:

* Perception (graph only): the *faces* of the π graph — a minimum cycle basis of the subgraph made of
  π atoms and π–π bonds — are the current-carrying circuits. For benzene that is the hexagon; for
  naphthalene the two hexagons; for [18]annulene, 1,6-methano[10]annulene or
  15,16-dihydropyrene the conjugated macrocycle itself (its sp3 bridge atoms are not π atoms);
  for porphine the four pyrroles plus the inner 16-ring. Because the faces form a cycle basis, any
  conserved (Kirchhoff) bond-current pattern is exactly a sum of face currents, so loops on the faces
  lose nothing. The *perimeter* of each fused polycycle (naphthalene's 10-ring) is reported as a
  descriptive circuit (electron count, class) but carries no loop of its own, which would count its
  current twice. RDKit's ring perception alone misses such pathways (design notes §6).
  A closed cage (every atom of a fused cluster with three bonds in it: a fullerene) has no perimeter: a
  cycle basis leaves exactly one of its faces out (Euler, F = E − V + 2), and that face is added back, so
  every face carries a loop. The face currents of a closed surface are then fixed only up to one common
  circulation; :func:`ringshift.pi.london.kirchhoff_decomposition` takes the minimum-norm solution, which
  every symmetry operation of the cage maps onto itself, so equivalent faces get equal currents.
* Geometry (arrays): centre, unit normal from a least-squares plane (SVD), mean radius, area,
  RMS deviation from planarity and the largest p-orbital misalignment between bonded ring atoms.

Normals are oriented so that the ring atoms, in the stored order, run counter-clockwise about the
normal; a diatropic current J > 0 then circulates clockwise about n (its field inside opposes an
external field along +n). Isotropic shieldings do not depend on that choice.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
from rdkit import Chem

from ringshift.errors import InputError
from ringshift.geometry import planes as pg

#: RMS out-of-plane deviation (Å) above which a circuit is flagged as too far from planar. A tub
#: cyclooctatetraene deviates ≈0.4 Å; planar aromatics < 0.05 Å (common practice, no source).
PLANARITY_LIMIT_A = 0.25

#: Largest angle (degrees) between the p-orbital axes of two bonded ring atoms that still allows
#: continuous overlap: cos²(45°) = 0.5 halves the resonance integral's square (common practice, no source).
MISALIGNMENT_LIMIT_DEG = 45.0


@dataclass(frozen=True)
class Circuit:
    """A closed conjugated path.

    Attributes
    ----------
    atoms : tuple of int
        Atom indices in cyclic order (mol numbering, 0-based).
    kind : str
        ``"ring"`` (a face of size ≤ 8), ``"macrocycle"`` (a face of size > 8), ``"user"``
        (given explicitly) or ``"perimeter"`` (descriptive outline of a fused system, no loop).
    label : str
        Short stable name, e.g. ``"R1"``, ``"M1"``, ``"P1"``.
    fragment : int
        Index of the connected π fragment the circuit belongs to.
    """

    atoms: tuple[int, ...]
    kind: str
    label: str
    fragment: int = 0

    @property
    def size(self) -> int:
        return len(self.atoms)

    @property
    def carries_loop(self) -> bool:
        return self.kind != "perimeter"

    def bonds(self) -> list[tuple[int, int]]:
        """Bonds of the circuit as ordered pairs (a_k, a_{k+1})."""
        n = len(self.atoms)
        return [(self.atoms[k], self.atoms[(k + 1) % n]) for k in range(n)]


@dataclass(frozen=True)
class CircuitGeometry:
    """Geometry of one circuit in every conformer.

    Attributes
    ----------
    centre : ndarray, shape (n_conf, 3)
        Centroid of the ring atoms, Å.
    normal : ndarray, shape (n_conf, 3)
        Unit normal of the least-squares plane, oriented so the atoms run counter-clockwise about it.
    radius_A : ndarray, shape (n_conf,)
        Mean distance of the ring atoms from the centre, Å.
    area_A2 : ndarray, shape (n_conf,)
        Area of the polygon projected onto the mean plane, Å².
    planarity_rms_A : ndarray, shape (n_conf,)
        RMS distance of the ring atoms from the mean plane, Å.
    max_misalignment_deg : ndarray, shape (n_conf,)
        Largest angle between the p-orbital axes of two bonded ring atoms, degrees (0 = parallel).
    """

    centre: np.ndarray
    normal: np.ndarray
    radius_A: np.ndarray
    area_A2: np.ndarray
    planarity_rms_A: np.ndarray
    max_misalignment_deg: np.ndarray

    def planar_enough(self, weights: np.ndarray | None = None) -> bool:
        """True when the (weighted) mean geometry allows continuous p-orbital overlap."""
        w = _weights(weights, self.radius_A.shape[0])
        return bool(
            float(w @ self.planarity_rms_A) <= PLANARITY_LIMIT_A
            and float(w @ self.max_misalignment_deg) <= MISALIGNMENT_LIMIT_DEG
        )


def _weights(weights: np.ndarray | None, n: int) -> np.ndarray:
    if weights is None:
        return np.full(n, 1.0 / n)
    return np.asarray(weights, dtype=float)


def _cycle_basis(atoms: Sequence[int], bonds: Sequence[tuple[int, int]]):
    """Minimum cycle basis of the graph (atoms, bonds) using RDKit's SSSR on a bare copy."""
    index = {a: k for k, a in enumerate(atoms)}
    rw = Chem.RWMol()
    for _ in atoms:
        rw.AddAtom(Chem.Atom(6))
    for i, j in bonds:
        rw.AddBond(index[i], index[j], Chem.BondType.SINGLE)
    sub = rw.GetMol()
    sub.UpdatePropertyCache(strict=False)
    rings = Chem.GetSSSR(sub)
    return [tuple(atoms[k] for k in ring) for ring in rings]


def _fragments(atoms: Sequence[int], bonds: Sequence[tuple[int, int]]) -> list[set[int]]:
    adj: dict[int, set[int]] = {a: set() for a in atoms}
    for i, j in bonds:
        adj[i].add(j)
        adj[j].add(i)
    seen: set[int] = set()
    out = []
    for a in sorted(atoms):
        if a in seen:
            continue
        stack, comp = [a], set()
        while stack:
            x = stack.pop()
            if x in comp:
                continue
            comp.add(x)
            stack.extend(adj[x] - comp)
        seen |= comp
        out.append(comp)
    return out


def _order_cycle(bond_set: Iterable[tuple[int, int]]) -> tuple[int, ...] | None:
    """Order the atoms of a set of bonds forming one simple cycle; None if they do not."""
    adj: dict[int, list[int]] = {}
    for i, j in bond_set:
        adj.setdefault(i, []).append(j)
        adj.setdefault(j, []).append(i)
    if not adj or any(len(v) != 2 for v in adj.values()):
        return None
    start = min(adj)
    path = [start]
    prev, cur = None, start
    while True:
        nxt = adj[cur][0] if adj[cur][0] != prev else adj[cur][1]
        if nxt == start:
            break
        path.append(nxt)
        prev, cur = cur, nxt
        if len(path) > len(adj):
            return None
    return tuple(path) if len(path) == len(adj) else None


def find_circuits(
    mol: Chem.Mol,
    pi_atoms: Sequence[int] | None = None,
    pi_bonds: Sequence[tuple[int, int]] | None = None,
    *,
    user_circuits: Sequence[Sequence[int]] | None = None,
) -> tuple[Circuit, ...]:
    """Perceive the conjugated circuits of a molecule.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Molecule (explicit H allowed; hydrogens are ignored).
    pi_atoms, pi_bonds : sequences, optional
        The π graph; by default the π system of :func:`ringshift.pi.perception.perceive_pi`.
    user_circuits : sequence of sequences of int, optional
        Circuits given explicitly as atom-index lists; they replace the perceived faces. Each must
        be a closed path of bonded atoms (consecutive atoms bonded, last bonded to first).

    Returns
    -------
    tuple of Circuit
        Loop-carrying faces (labels R1.., M1.. in order of first atom), then descriptive perimeters
        (P1..) of fused systems with more than one face.
    """
    if pi_atoms is None or pi_bonds is None:
        from ringshift.pi.perception import perceive_pi  # geometry does not import pi at module level

        pi = perceive_pi(mol)
        pi_atoms, pi_bonds = pi.atoms, pi.bonds
    pi_bonds = [(min(i, j), max(i, j)) for i, j in pi_bonds]
    frags = _fragments(pi_atoms, pi_bonds) if pi_atoms else []
    frag_of = {a: k for k, comp in enumerate(frags) for a in comp}

    if user_circuits:
        out = []
        for k, cyc in enumerate(user_circuits):
            cyc = tuple(int(a) for a in cyc)
            _check_user_circuit(mol, cyc)
            out.append(Circuit(cyc, "user", f"U{k + 1}", frag_of.get(cyc[0], -1)))
        return tuple(out)

    faces = _cycle_basis(list(pi_atoms), pi_bonds) if pi_bonds else []
    faces = sorted(faces, key=lambda f: (frag_of[f[0]], min(f), len(f)))
    circuits: list[Circuit] = []
    n_ring = n_macro = 0
    for face in faces:
        face = _canonical_rotation(face)
        if len(face) <= 8:
            n_ring += 1
            circuits.append(Circuit(face, "ring", f"R{n_ring}", frag_of[face[0]]))
        else:
            n_macro += 1
            circuits.append(Circuit(face, "macrocycle", f"M{n_macro}", frag_of[face[0]]))

    # perimeters of fused systems: bonds that belong to exactly one face of a face-connected cluster
    n_per = 0
    for cluster in _face_clusters(circuits):
        if len(cluster) < 2:
            continue
        count: dict[tuple[int, int], int] = {}
        for c in cluster:
            for i, j in c.bonds():
                key = (min(i, j), max(i, j))
                count[key] = count.get(key, 0) + 1
        outline = _order_cycle([b for b, n in count.items() if n == 1])
        if outline is None:
            continue
        if _closed_surface(count):
            # a closed cage (fullerene): the outline is the one face the cycle basis leaves out, not a perimeter
            face = _canonical_rotation(outline)
            if len(face) <= 8:
                n_ring += 1
                circuits.append(Circuit(face, "ring", f"R{n_ring}", cluster[0].fragment))
            else:
                n_macro += 1
                circuits.append(Circuit(face, "macrocycle", f"M{n_macro}", cluster[0].fragment))
            continue
        n_per += 1
        circuits.append(Circuit(_canonical_rotation(outline), "perimeter", f"P{n_per}", cluster[0].fragment))
    loops = sorted((c for c in circuits if c.carries_loop), key=lambda c: (c.fragment, min(c.atoms), c.size))
    return tuple(loops + [c for c in circuits if not c.carries_loop])


def _closed_surface(count: dict[tuple[int, int], int]) -> bool:
    """True when the faces of a fused cluster close into a cage: every atom of the cluster has three bonds in
    it (a cubic polyhedral graph, e.g. a fullerene; Euler: F = E − V + 2, so the cycle basis, E − V + 1 cycles,
    leaves exactly one face out). A planar or bowl-shaped polycycle always has rim atoms with two."""
    degree: dict[int, int] = {}
    for i, j in count:
        degree[i] = degree.get(i, 0) + 1
        degree[j] = degree.get(j, 0) + 1
    return bool(degree) and all(d == 3 for d in degree.values())


def _face_clusters(circuits: Sequence[Circuit]) -> list[list[Circuit]]:
    """Group faces that share at least one bond (fused systems)."""
    bondsets = [{(min(i, j), max(i, j)) for i, j in c.bonds()} for c in circuits]
    parent = list(range(len(circuits)))

    def root(x):
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for a in range(len(circuits)):
        for b in range(a + 1, len(circuits)):
            if bondsets[a] & bondsets[b]:
                parent[root(a)] = root(b)
    groups: dict[int, list[Circuit]] = {}
    for k, c in enumerate(circuits):
        groups.setdefault(root(k), []).append(c)
    return list(groups.values())


def _canonical_rotation(cycle: Sequence[int]) -> tuple[int, ...]:
    """Rotate so the smallest index comes first and its smaller neighbour second."""
    cyc = list(cycle)
    k = cyc.index(min(cyc))
    cyc = cyc[k:] + cyc[:k]
    if len(cyc) > 2 and cyc[-1] < cyc[1]:
        cyc = [cyc[0]] + cyc[1:][::-1]
    return tuple(cyc)


def _check_user_circuit(mol: Chem.Mol, cyc: tuple[int, ...]) -> None:
    n = mol.GetNumAtoms()
    if len(cyc) < 3:
        raise InputError(f"a circuit needs at least 3 atoms, got {list(cyc)}", "user_circuits")
    if len(set(cyc)) != len(cyc):
        raise InputError(f"circuit {list(cyc)} repeats an atom", "user_circuits")
    for a in cyc:
        if not 0 <= a < n:
            raise InputError(f"atom index {a} is out of range 0..{n - 1}", "user_circuits")
    for k in range(len(cyc)):
        i, j = cyc[k], cyc[(k + 1) % len(cyc)]
        if mol.GetBondBetweenAtoms(i, j) is None:
            raise InputError(
                f"atoms {i} and {j} of circuit {list(cyc)} are not bonded; give the atoms in ring order",
                "user_circuits",
            )


def plane_fit_rms(points: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Least-squares plane of point sets by SVD (:func:`ringshift.geometry.planes.plane_fit`), RMS deviation.

    Parameters
    ----------
    points : ndarray, shape (n_conf, m, 3)
        Ring atoms in cyclic order, Å.

    Returns
    -------
    centre : ndarray, shape (n_conf, 3)
    normal : ndarray, shape (n_conf, 3)
        Unit normal, oriented so the points run counter-clockwise about it.
    rms : ndarray, shape (n_conf,)
        RMS distance from the plane, Å.
    """
    centre, normal, dev = pg.plane_fit(np.asarray(points, dtype=float))
    return centre, normal, np.sqrt(np.mean(dev**2, axis=1))


def ring_p_axes(coords: np.ndarray, atoms: Sequence[int], neighbours: Sequence[Sequence[int]]) -> np.ndarray:
    """Local p-orbital axis of each atom, for every conformer (:func:`ringshift.geometry.planes.poav_vectors`).

    Three neighbours: the POAV1 axis (normal of the plane through the tips of the unit bond vectors);
    two: the normal of the plane of the atom and its neighbours. The same definition sets the p-orbital
    overlap of the Hückel step, so the misalignment reported here is the one the currents see.

    Parameters
    ----------
    coords : ndarray, shape (n_conf, n_atoms, 3)
    atoms : sequence of int, length m
    neighbours : sequence of sequences of int
        Heavy-atom and hydrogen neighbours of each atom (at least two; the first three are used).

    Returns
    -------
    ndarray, shape (n_conf, m, 3)
        Unit axes (sign arbitrary); the zero vector where the atom has no axis of its own
        (:func:`ringshift.geometry.planes.poav_defined`: a near-linear pair, as an alkyne carbon).
    """
    nb3 = [list(nb)[:3] for nb in neighbours]
    v, _ = pg.poav_vectors(coords, list(atoms), nb3)
    ok = pg.poav_defined(v, nb3)
    norm = np.linalg.norm(v, axis=2, keepdims=True)
    return np.where(ok[..., None], v / np.where(norm > 1e-12, norm, 1.0), 0.0)


def circuit_geometry(coords: np.ndarray, circuit: Circuit | Sequence[int],
                     mol: Chem.Mol | None = None) -> CircuitGeometry:
    """Centre, normal, radius, area, planarity and p-orbital misalignment of one circuit.

    Parameters
    ----------
    coords : ndarray, shape (n_conf, n_atoms, 3) or (n_atoms, 3)
        Coordinates, Å.
    circuit : Circuit or sequence of int
        Ring atoms in cyclic order.
    mol : rdkit.Chem.Mol, optional
        Needed for the p-orbital misalignment (neighbours); without it the ring's own neighbours
        are used, i.e. the axis is the local normal of three consecutive ring atoms.
    """
    xyz = np.asarray(coords, dtype=float)
    if xyz.ndim == 2:
        xyz = xyz[None]
    atoms = list(circuit.atoms if isinstance(circuit, Circuit) else circuit)
    pts = xyz[:, atoms, :]
    if not np.all(np.isfinite(pts)):
        raise InputError("non-finite ring-atom coordinates", f"circuit {atoms}")
    centre, normal, rms = plane_fit_rms(pts)
    rel = pts - centre[:, None, :]
    radius = np.linalg.norm(rel, axis=2).mean(axis=1)
    area = 0.5 * np.abs(np.einsum("ij,ij->i", np.cross(rel, np.roll(rel, -1, axis=1)).sum(axis=1), normal))
    if np.any(area < 1e-3 * np.maximum(radius, 1e-9) ** 2):
        raise InputError("ring atoms are collinear or coincident (zero ring area)", f"circuit {atoms}")

    m = len(atoms)
    if mol is not None:
        nbrs = [[n.GetIdx() for n in mol.GetAtomWithIdx(a).GetNeighbors()] for a in atoms]
        nbrs = [nb if len(nb) >= 2 else [atoms[(k - 1) % m], atoms[(k + 1) % m]] for k, nb in enumerate(nbrs)]
    else:
        nbrs = [[atoms[(k - 1) % m], atoms[(k + 1) % m]] for k in range(m)]
    axes = ring_p_axes(xyz, atoms, nbrs)
    undefined = ~np.any(axes, axis=2)                      # sp-like ring atoms follow the ring normal
    axes = np.where(undefined[..., None], normal[:, None, :], axes)
    cosang = np.abs(np.einsum("kmj,kmj->km", axes, np.roll(axes, -1, axis=1)))
    mis = np.degrees(np.arccos(np.clip(cosang, 0.0, 1.0))).max(axis=1)
    return CircuitGeometry(centre, normal, radius, area, rms, mis)


