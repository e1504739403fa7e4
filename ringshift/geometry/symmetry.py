"""Molecular symmetry: groups of NMR-equivalent hydrogens, graph automorphisms, symmetry-aware RMSD.

:func:`group_equivalent_hydrogens` finds the graph symmetry that the 3D geometry realises (slow exchange)
or, with ``exchange="fast"``, the classes of protons that conformational and bond-shift processes
interchange (:func:`fast_exchange_classes`); the conformer generator (:mod:`ringshift.geometry.conformers`)
prunes duplicates with :func:`prune_conformers` (RMSD minimised over automorphisms, :func:`kabsch_rmsd`).
"""

from __future__ import annotations

import numpy as np
from rdkit import Chem

from ringshift._graphs import component_labels
from ringshift.errors import InputError

__all__ = ['group_equivalent_hydrogens', 'fast_exchange_classes', 'EXCHANGE_RULES', 'H_SYMMETRY_TOLERANCE_A',
           'symmetry_graph', 'automorphisms', 'kabsch_rmsd', 'prune_conformers']

#: Exchange rules of :func:`group_equivalent_hydrogens`: the static (low-temperature) structure, or the
#: fast-exchange (high-temperature) limit of conformational and bond-shift processes.
EXCHANGE_RULES: tuple[str, ...] = ("slow", "fast")

#: Isotope number that marks the substituted proton in the substitution test (no real H isotope has it).
_MARK_ISOTOPE = 99


#: Largest heavy-atom displacement (Å) of an approximate symmetry operation (group_equivalent_hydrogens).
#: Measured on MMFF94 minima: C5H5- is off its D5h symmetry by 0.09 Å, bond-localised
#: 1,6-methano[10]annulene off C2v by 0.28 Å; operations that would swap diastereotopic protons
#: (butan-2-ol 0.67 Å, 4-chloro-2-methylpentane 0.96 Å) or D6h [18]annulene's inner/outer H (0.91 Å) move more.
H_SYMMETRY_TOLERANCE_A: float = 0.4

_MAX_AUTOMORPHISMS = 1000
_PERM_CHUNK = 64              # automorphisms fitted per batch (memory ~ chunk x n_H x 9 floats)


def kabsch_rmsd(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """RMSD after optimal superposition by translation and proper rotation.

    Closed form from the singular values of the covariance matrix (Kabsch, Acta Cryst. A 1976, 32, 922;
    Coutsias, Seok & Dill, J. Comput. Chem. 2004, 25, 1849).

    Parameters
    ----------
    a, b : numpy.ndarray, shape (..., n, 3)
        Point sets in Å; leading axes broadcast.

    Returns
    -------
    numpy.ndarray, shape (...)
        RMSD in Å.
    """
    a = np.asarray(a, dtype=np.float64)
    b = np.asarray(b, dtype=np.float64)
    a = a - a.mean(axis=-2, keepdims=True)
    b = b - b.mean(axis=-2, keepdims=True)
    cov = np.swapaxes(a, -1, -2) @ b
    s = np.linalg.svd(cov, compute_uv=False)
    d = np.where(np.linalg.det(cov) < 0.0, -1.0, 1.0)
    msd = (np.sum(a * a, axis=(-1, -2)) + np.sum(b * b, axis=(-1, -2))
           - 2.0 * (s[..., 0] + s[..., 1] + d * s[..., 2])) / a.shape[-2]
    return np.sqrt(np.clip(msd, 0.0, None))


def prune_conformers(heavy_xyz: np.ndarray, perms: np.ndarray, threshold_A: float) -> list[int]:
    """Greedy pruning of energy-sorted conformers (n_conf, n_heavy, 3): keep one whose RMSD, minimised
    over automorphisms ``perms`` and proper rotations, to every kept one exceeds ``threshold_A``."""
    if threshold_A <= 0.0 or heavy_xyz.shape[1] == 0:
        return list(range(heavy_xyz.shape[0]))
    keep = [0]
    for c in range(1, heavy_xyz.shape[0]):
        if kabsch_rmsd(heavy_xyz[c][perms][:, None], heavy_xyz[keep][None]).min() > threshold_A:
            keep.append(c)
    return keep


def symmetry_graph(mol: Chem.Mol, nodes, tags: dict | None = None) -> Chem.Mol:
    """Induced subgraph on ``nodes`` with elements and connectivity only (single bonds; no charges,
    aromaticity or stereo), so resonance forms and a localised written charge ([cH-]) keep the symmetry;
    ``tags`` {atom: int} become isotopes, which atom matching respects."""
    pos = {int(a): k for k, a in enumerate(nodes)}
    rw = Chem.RWMol()
    for a in pos:
        atom = Chem.Atom(mol.GetAtomWithIdx(a).GetAtomicNum())
        atom.SetIsotope(int((tags or {}).get(a, 0)))
        atom.SetNoImplicit(True)
        rw.AddAtom(atom)
    for b in mol.GetBonds():
        if b.GetBeginAtomIdx() in pos and b.GetEndAtomIdx() in pos:
            rw.AddBond(pos[b.GetBeginAtomIdx()], pos[b.GetEndAtomIdx()], Chem.BondType.SINGLE)
    rw.UpdatePropertyCache(strict=False)
    return rw.GetMol()


def automorphisms(graph: Chem.Mol) -> np.ndarray:
    """(n_aut, n) automorphisms of a graph, identity first, at most _MAX_AUTOMORPHISMS."""
    ident = tuple(range(graph.GetNumAtoms()))
    if not ident:                                 # no atoms (e.g. no heavy atom in H2): identity only
        return np.zeros((1, 0), dtype=int)
    found = graph.GetSubstructMatches(graph, uniquify=False, useChirality=False, maxMatches=_MAX_AUTOMORPHISMS)
    return np.array([ident] + [m for m in found if m != ident], dtype=int).reshape(-1, len(ident))


def _free_single_bonds(mol: Chem.Mol, rank: list[int], hybridization, n_subs, *, aryl_links: bool = False):
    """(Y, Z, other neighbours of Y) over non-ring, non-conjugated single bonds Y-Z where Y has the given
    hybridisation and ``n_subs(k)`` other neighbours, all of one topological class. ``aryl_links`` also admits a
    conjugated single bond from an aromatic ring atom Y to a ring atom Z of another ring (a biaryl bond, the
    meso-aryl bond of a tetraarylporphyrin)."""
    for bond in mol.GetBonds():
        if bond.GetBondType() != Chem.BondType.SINGLE or bond.IsInRing():
            continue
        if bond.GetIsConjugated() and not (aryl_links and bond.GetBeginAtom().IsInRing()
                                           and bond.GetEndAtom().IsInRing()):
            continue
        for y, z in ((bond.GetBeginAtom(), bond.GetEndAtom()), (bond.GetEndAtom(), bond.GetBeginAtom())):
            if bond.GetIsConjugated() and not y.GetIsAromatic():
                continue
            subs = [n.GetIdx() for n in y.GetNeighbors() if n.GetIdx() != z.GetIdx()]
            if y.GetHybridization() == hybridization and n_subs(len(subs)) and len({rank[k] for k in subs}) == 1:
                yield y.GetIdx(), z.GetIdx(), subs


def _rotor_sites(mol: Chem.Mol, rank: list[int]) -> tuple[np.ndarray, set, dict]:
    """Anchor atom of each rotor H (-1: rigid H), heavy atoms beyond rotor centres, and graph tags.

    Symmetric rotors: sp3 Y with >= 2 other neighbours of one class and nothing beyond two bonds (CH3,
    NH3+, C(CH3)3, SiMe3); their H share the anchor Y. O-H and S-H protons are anchored to their atom.
    Tags (1 + isotope + 200 n_H + 1000 sum Z of removed neighbours) keep the reduced graph faithful.
    """
    anchor, beyond, sides = np.full(mol.GetNumAtoms(), -1), set(), []
    for y, _, subs in _free_single_bonds(mol, rank, Chem.HybridizationType.SP3, lambda k: k >= 2):
        side = set(subs) | {m.GetIdx() for k in subs for m in mol.GetAtomWithIdx(k).GetNeighbors()} - {y}
        if all(mol.GetAtomWithIdx(k).GetDegree() == 1 for k in side - set(subs)):
            sides.append((len(side), y, side))
    for _, y, side in sorted(sides, reverse=True):             # outermost first: tBu before its CH3
        if y not in beyond:
            for k in side:
                if mol.GetAtomWithIdx(k).GetAtomicNum() > 1:
                    beyond.add(k)
                elif anchor[k] < 0:
                    anchor[k] = y
    for at in mol.GetAtoms():
        nbs = list(at.GetNeighbors())
        nums = sorted(n.GetAtomicNum() for n in nbs)
        if at.GetAtomicNum() in (8, 16) and len(nums) == 2 and nums[0] == 1 and nums[1] > 1:   # X-O-H, X-S-H
            h = next(n.GetIdx() for n in nbs if n.GetAtomicNum() == 1)
            anchor[h] = at.GetIdx() if anchor[h] < 0 else anchor[h]
    tags = {at.GetIdx(): 1 + at.GetIsotope() + 200 * at.GetTotalNumHs(includeNeighbors=True)
            + 1000 * sum(n.GetAtomicNum() for n in at.GetNeighbors() if n.GetIdx() in beyond)
            for at in mol.GetAtoms()}
    return anchor, beyond, tags


def _ring_flips(mol: Chem.Mol, x: np.ndarray, rank: list[int], anchor: np.ndarray, beyond: set, tol_A: float):
    """(atoms, images) of 180 deg flips that carry a group onto itself within ``tol_A``: the group beyond
    a free single bond Y-Z, Y sp2 with two other neighbours of one class (phenyl on an sp3 carbon), or an aryl
    on a ring atom of another ring (biaryl, meso-aryl of a porphyrin: the two faces of a tilted aryl are
    equivalent in the time average of the spectrum, TPP's eight ortho H give one signal)."""
    for y, z, subs in _free_single_bonds(mol, rank, Chem.HybridizationType.SP2, lambda k: k == 2, aryl_links=True):
        if mol.GetAtomWithIdx(z).GetDegree() < 2:
            # a flip about the bond to a terminal atom (an aryl C-H, C-Cl) moves the whole rest of the
            # molecule rigidly: a point-group operation, tested by the automorphism pass already
            continue
        side, stack = {y}, list(subs)
        while stack:
            k = stack.pop()
            if k not in side:
                side.add(k)
                stack.extend(n.GetIdx() for n in mol.GetAtomWithIdx(k).GetNeighbors())
        atoms = np.array(sorted(k for k in side if anchor[k] < 0 and k not in beyond), dtype=int)
        u = (x[y] - x[z]) / np.linalg.norm(x[y] - x[z])
        moved = (x[atoms] - x[y]) @ (2.0 * np.outer(u, u) - np.eye(3)) + x[y]
        d = np.linalg.norm(moved[:, None] - x[atoms][None], axis=2)
        elem = np.array([mol.GetAtomWithIdx(int(k)).GetAtomicNum() for k in atoms])
        d[elem[:, None] != elem[None, :]] = np.inf
        best = np.argmin(d, axis=1)
        if np.max(d[np.arange(atoms.size), best]) <= tol_A and len(set(best.tolist())) == atoms.size:
            yield atoms, atoms[best]


def group_equivalent_hydrogens(mol: Chem.Mol, coords: np.ndarray, *, tol_A: float = H_SYMMETRY_TOLERANCE_A,
                               exchange: str = "slow") -> tuple[tuple[int, ...], ...]:
    """Groups of NMR-equivalent protons, for slow or fast exchange.

    ``exchange="slow"`` (the static structure, the low-temperature spectrum): two 1H are equivalent
    when an automorphism of the heavy-atom graph, realised by a rotation or reflection of the reference
    geometry with every heavy atom within ``tol_A`` (approximate point-group symmetry), carries one onto
    the other; each H follows its parent atom (the nearest image among the H of the image atom,
    one-to-one). Motions fast at any temperature are averaged first: H of a symmetric rotor (CH3, NH3+,
    C(CH3)3, ...) form one site, O-H/S-H follow their atom, a phenyl on an sp3 carbon or an aryl on another
    ring may flip. Graph
    symmetry alone (``Chem.CanonicalRankAtoms(mol, breakTies=False)``) lumps [18]annulene's inner and outer
    H and diastereotopic CH2 protons; no rotation or reflection of the geometry swaps those. Motions that
    leave a static minimum of lower symmetry are not averaged (ring inversion, the inner/outer exchange of
    annulenes, the twist of [2.2]paracyclophane, the tilt of meso-aryl groups in porphyrins): such groups
    come out split, as in the static structure.

    ``exchange="fast"`` (the high-temperature limit): every conformational and bond-shift process is fast,
    so the slow groups are merged further by :func:`fast_exchange_classes`: protons related by the
    constitution (elements and connectivity; ring bond orders, E/Z of ring double bonds and conformation
    ignored) are averaged unless the configuration of the molecule keeps them apart (diastereotopic
    protons). Bonds are never broken: tautomeric proton transfer (porphyrin NH) is not averaged.

    Deuterium and tritium are not 1H and are left out.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Sanitised explicit-H molecule.
    coords : numpy.ndarray, shape (n_atoms, 3) or (n_conf, n_atoms, 3)
        Reference geometry in Å, normally the lowest-energy conformer (first of a stack); with "fast" it
        also fixes the configuration (stereocentres, E/Z outside rings).
    tol_A : float
        Largest atomic displacement (Å) for a symmetry operation to count.
    exchange : {"slow", "fast"}
        Exchange rule, see above.

    Returns
    -------
    tuple of tuple of int
        Sorted groups of H atom indices, ordered by first index; empty without hydrogens.
    """
    from ringshift._validation import choice

    choice(exchange, EXCHANGE_RULES, "exchange", "exchange rule")
    x = np.asarray(coords, dtype=np.float64)
    x, n = (x[0] if x.ndim == 3 else x), mol.GetNumAtoms()
    if x.shape != (n, 3):
        raise InputError(f"expected shape ({n}, 3), got {x.shape}", source="coords")
    hs = [at.GetIdx() for at in mol.GetAtoms() if at.GetAtomicNum() == 1 and at.GetIsotope() in (0, 1)]
    if not hs:
        return ()
    groups = _static_groups(mol, x, hs, tol_A)
    if exchange == "fast":
        groups = _merge(groups, fast_exchange_classes(mol, x))
    return groups


def _merge(a, b) -> tuple[tuple[int, ...], ...]:
    """Finest common coarsening of two partitions of the same atoms (groups that share an atom join)."""
    owner: dict[int, int] = {}
    merged: list[set[int]] = []
    for grp in list(a) + list(b):
        hit = sorted({owner[h] for h in grp if h in owner})
        target = hit[0] if hit else len(merged)
        if not hit:
            merged.append(set())
        for k in hit[1:]:
            merged[target] |= merged[k]
            for h in merged[k]:
                owner[h] = target
            merged[k] = set()
        merged[target] |= set(grp)
        for h in grp:
            owner[h] = target
    return tuple(sorted(tuple(sorted(g)) for g in merged if g))


def _substituted_key(mol: Chem.Mol, x: np.ndarray, h: int) -> str:
    """Canonical isomeric SMILES of the constitution graph with proton ``h`` marked, stereo read from ``x``.

    Bonds in rings become single (bond shift), charges are dropped; bonds outside rings keep their order
    so that their E/Z is perceived. All H are explicit atoms, so only tetrahedral centres with four
    neighbours and double bonds outside rings can carry stereo.
    """
    rw = Chem.RWMol()
    for at in mol.GetAtoms():
        atom = Chem.Atom(at.GetAtomicNum())
        atom.SetIsotope(_MARK_ISOTOPE if at.GetIdx() == h else at.GetIsotope())
        atom.SetNoImplicit(True)
        rw.AddAtom(atom)
    for b in mol.GetBonds():
        kind = b.GetBondType()
        if b.IsInRing() or kind not in (Chem.BondType.DOUBLE, Chem.BondType.TRIPLE):
            kind = Chem.BondType.SINGLE
        rw.AddBond(b.GetBeginAtomIdx(), b.GetEndAtomIdx(), kind)
    graph = rw.GetMol()
    graph.UpdatePropertyCache(strict=False)
    Chem.FastFindRings(graph)
    conf = Chem.Conformer(graph.GetNumAtoms())
    conf.SetPositions(np.ascontiguousarray(x))
    conf.Set3D(True)
    graph.AddConformer(conf)
    Chem.AssignStereochemistryFrom3D(graph)
    return Chem.MolToSmiles(graph)


def fast_exchange_classes(mol: Chem.Mol, coords: np.ndarray) -> tuple[tuple[int, ...], ...]:
    """Classes of protons averaged when conformational and bond-shift processes are fast on the NMR timescale.

    Rule (the substitution test of stereochemistry textbooks: replace each proton in turn by a test group
    and compare the products; e.g. Eliel & Wilen, Stereochemistry of Organic Compounds, Wiley 1994, ch. 8,
    from memory): proton ``h`` is marked in the constitution graph (elements, connectivity; ring bonds
    single, charges dropped, conformation ignored), the configuration is read from ``coords``
    (``Chem.AssignStereochemistryFrom3D``), and the canonical isomeric SMILES of the marked graph is
    compared with that of its mirror image. Two protons are in one class when their marked graphs are
    the same molecule (homotopic) or mirror images (enantiotopic, isochronous in an achiral solvent);
    diastereomeric products (diastereotopic protons) keep them apart.

    What RDKit can and cannot tell (RDKit 2026.09, measured): ``Chem.CanonicalRankAtoms(mol,
    breakTies=False, includeChirality=True)`` ranks the two CH2 protons of (R)-butan-2-ol, the two =CH2
    protons of vinyl chloride and the two isopropyl methyls of 4-chloro-2-methylpentane alike, so ranks
    alone would merge diastereotopic protons. The substitution test tells them apart whenever the stereo
    element that makes them different is one RDKit perceives: tetrahedral centres with four neighbours
    (including a pseudo-asymmetric CH2 such as C3 of meso-pentane-2,4-diol) and E/Z of double bonds outside
    rings. It cannot tell protons made diastereotopic by axial chirality (allenes, hindered biaryls),
    planar chirality (cyclophanes) or helicity, which RDKit does not perceive: those come out merged. E/Z of
    ring double bonds is ignored on purpose (in a delocalised annulene, inner/outer exchange moves the
    cis/trans labels around the ring); so is every conformational barrier, including slow ones such as
    amide C-N rotation (the two N-methyls of DMF merge).

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Explicit-H molecule.
    coords : numpy.ndarray, shape (n_atoms, 3)
        Geometry in Å that fixes the configuration.

    Returns
    -------
    tuple of tuple of int
        Sorted classes of 1H indices (D and T left out), ordered by first index.
    """
    x = np.asarray(coords, dtype=np.float64)
    hs = [at.GetIdx() for at in mol.GetAtoms() if at.GetAtomicNum() == 1 and at.GetIsotope() in (0, 1)]
    isotopes = {at.GetIdx(): at.GetIsotope() for at in mol.GetAtoms()}
    rank = list(Chem.CanonicalRankAtoms(symmetry_graph(mol, range(mol.GetNumAtoms()), isotopes), breakTies=False,
                                        includeChirality=False))
    by_rank: dict[int, list[int]] = {}
    for h in hs:
        by_rank.setdefault(rank[h], []).append(h)
    mirror = x * np.array([-1.0, 1.0, 1.0])
    classes: list[tuple[int, ...]] = []
    for members in by_rank.values():           # equal ranks are necessary; the test decides
        if len(members) == 1:
            classes.append(tuple(members))
            continue
        by_key: dict[str, list[int]] = {}
        for h in members:
            key = min(_substituted_key(mol, x, h), _substituted_key(mol, mirror, h))
            by_key.setdefault(key, []).append(h)
        classes.extend(tuple(g) for g in by_key.values())
    return tuple(sorted(tuple(sorted(c)) for c in classes))


def _batch_fit(p: np.ndarray, q: np.ndarray, improper: bool) -> tuple[np.ndarray, np.ndarray]:
    """Least-squares rotations R (det +1, or -1 if ``improper``) and shifts t with p @ R.T + t ~ q for a
    stack of targets (Kabsch, Acta Cryst. A 1976, 32, 922): p (m, 3), q (k, m, 3) Å -> R (k, 3, 3), t (k, 3)."""
    pc, qc = p.mean(axis=0), q.mean(axis=1)
    u, _, vt = np.linalg.svd(np.einsum("mi,kmj->kij", p - pc, q - qc[:, None]))
    v, ut = np.swapaxes(vt, 1, 2), np.swapaxes(u, 1, 2)
    d = np.where(np.linalg.det(v @ ut) >= 0, 1.0, -1.0)
    diag = np.ones((len(q), 3))
    diag[:, 2] = -d if improper else d
    rot = (v * diag[:, None, :]) @ ut
    return rot, qc - np.einsum("i,kji->kj", pc, rot)


def _realised_pairs(x, frame, perms, follow, rigid, parents, slots, tol_A) -> list[np.ndarray]:
    """Equivalent-atom pairs (k, 2) from the automorphisms ``perms`` (k_aut, m) of the frame that a
    rotation or rotation-reflection of the geometry realises within ``tol_A`` (Å); rigid H follow their
    parents to the nearest free image, one-to-one, or the operation does not count."""
    out: list[np.ndarray] = []
    p, q = x[frame], x[frame[perms]]
    not_identity = ~np.all(perms == np.arange(perms.shape[1]), axis=1)
    for improper in (False, True):
        rot, t = _batch_fit(p, q, improper)
        dev = np.linalg.norm(np.einsum("mi,kji->kmj", p, rot) + t[:, None] - q, axis=2).max(axis=1)
        ok = (dev <= tol_A) & (not_identity | improper)
        if not ok.any():
            continue
        pk, rk, tk = perms[ok], rot[ok], t[ok]
        if rigid.size:
            image = np.broadcast_to(np.arange(len(x)), (len(pk), len(x))).copy()
            image[:, frame] = frame[pk]
            cand = slots[image[:, parents]]                                   # (k, r, 3)
            moved = np.einsum("ri,kji->krj", x[rigid], rk) + tk[:, None]      # (k, r, 3)
            d = np.linalg.norm(moved[:, :, None] - x[cand], axis=3)
            d[cand < 0] = np.inf
            best = np.take_along_axis(cand, np.argmin(d, axis=2)[..., None], axis=2)[..., 0]   # (k, r)
            srt = np.sort(best, axis=1)
            one_to_one = np.all(srt[:, 1:] != srt[:, :-1], axis=1)
            pk, best = pk[one_to_one], best[one_to_one]
            out.append(np.stack([np.broadcast_to(rigid, best.shape), best], axis=2).reshape(-1, 2))
        out.append(np.stack([np.broadcast_to(frame[follow], (len(pk), follow.size)),
                             frame[pk[:, follow]]], axis=2).reshape(-1, 2))
    return out


def _static_groups(mol: Chem.Mol, x: np.ndarray, hs: list[int], tol_A: float) -> tuple[tuple[int, ...], ...]:
    """Slow-exchange groups of the protons ``hs`` from the geometry ``x`` (n_atoms, 3), Å; see
    :func:`group_equivalent_hydrogens`."""
    n = mol.GetNumAtoms()
    isotopes = {at.GetIdx(): at.GetIsotope() for at in mol.GetAtoms()}
    rank = list(Chem.CanonicalRankAtoms(symmetry_graph(mol, range(n), isotopes), breakTies=False,
                                        includeChirality=False))
    anchor, beyond, tags = _rotor_sites(mol, rank)
    pairs: list[np.ndarray] = []                  # (k, 2) atom pairs that are equivalent; joined at the end
    rotor_h = np.array([h for h in hs if anchor[h] >= 0], dtype=int)
    pairs.append(np.stack([rotor_h, anchor[rotor_h]], axis=1))
    anchors = {int(a) for a in anchor if a >= 0}
    # rigid H follow their one heavy parent; a bare H (H+, an H with no bond) or an H bonded only to H
    # (H2) has none and joins the frame, where it is matched like an atom of the skeleton
    on_heavy = {h for h in hs if [nb.GetAtomicNum() > 1 for nb in mol.GetAtomWithIdx(h).GetNeighbors()] == [True]}
    rigid_atoms = [h for h in hs if anchor[h] < 0 and h in on_heavy]
    frame_atoms = [a for a in range(n) if a not in beyond and (a not in hs or (anchor[a] < 0 and a not in on_heavy))]
    spread = (np.linalg.svd(x[frame_atoms] - x[frame_atoms].mean(axis=0), compute_uv=False)
              if len(frame_atoms) > 1 else [0.0, 0.0])
    if len(frame_atoms) < 3 or spread[1] < 0.05:        # point or line: the H fix the orientation
        frame_atoms, rigid_atoms = frame_atoms + rigid_atoms, []
    frame, rigid = np.array(frame_atoms, dtype=int), np.array(rigid_atoms, dtype=int)
    slots = np.full((n, 3), -1)                   # rigid H of each heavy atom
    parents = np.array([mol.GetAtomWithIdx(int(h)).GetNeighbors()[0].GetIdx() for h in rigid], dtype=int)
    for h, p in zip(rigid, parents):
        slots[p, int(np.argmax(slots[p] < 0))] = h
    follow = np.array([k for k, a in enumerate(frame)
                       if int(a) in anchors or mol.GetAtomWithIdx(int(a)).GetAtomicNum() == 1], dtype=int)
    perms = automorphisms(symmetry_graph(mol, frame, tags))
    for lo in range(0, len(perms), _PERM_CHUNK):
        pairs.extend(_realised_pairs(x, frame, perms[lo:lo + _PERM_CHUNK], follow, rigid, parents, slots, tol_A))
    for atoms, images in _ring_flips(mol, x, rank, anchor, beyond, tol_A):
        keep = [k for k, a in enumerate(atoms) if int(a) in anchors or mol.GetAtomWithIdx(int(a)).GetAtomicNum() == 1]
        pairs.append(np.stack([atoms[keep], images[keep]], axis=1).reshape(-1, 2))
    edges = np.concatenate([p.reshape(-1, 2) for p in pairs]) if pairs else np.zeros((0, 2), dtype=int)
    label = component_labels(n, edges)
    groups: dict[int, list[int]] = {}
    for h in hs:
        groups.setdefault(int(label[h]), []).append(h)
    return tuple(sorted(tuple(sorted(g)) for g in groups.values()))
