"""Double-bond configurations as data: a symmetry-invariant key and an isomeric SMILES that keeps them.

:func:`configuration_key` identifies the E/Z configuration of a molecule independently of atom order: the
cis/trans state of every stereo-capable double bond about reference atoms chosen in RDKit's canonical atom
order, minimised over the graph automorphisms that keep the Kekulé bond orders (two configurations that a
ring rotation or reflection interchanges get the same key).

:func:`isomeric_smiles` writes a SMILES that keeps every double-bond configuration. RDKit 2026.09 writes the
direction marks (``/``, ``\\``) of ring double bonds on ring bonds only, and a ring of alternating bonds
can then hold only configurations with an even number of cis bonds: of the 16 cis/trans assignments of
cyclo-octatetraene, half come back from RDKit's own SMILES as a different isomer (measured; design notes
§6). Here each double bond end carries its mark on a hydrogen branch where it has one, as in
``[H]/C1=C/...`` (OpenSMILES specification, "cis/trans configuration"), and the written text is always
parsed back and checked against the key.
"""

from __future__ import annotations

import numpy as np
from rdkit import Chem, rdBase

from ringshift.geometry.conformers import _cis_references

__all__ = ['stereo_double_bonds', 'ConfigurationSpace', 'configuration_key', 'isomeric_smiles']

_ORGANIC = {"B": (3,), "C": (4,), "N": (3, 5), "O": (2,), "P": (3, 5), "S": (2, 4, 6), "F": (1,), "Cl": (1,),
            "Br": (1,), "I": (1,)}   # SMILES organic subset and its default valences (OpenSMILES)
_KEKULE_OPS = Chem.SanitizeFlags.SANITIZE_ALL ^ Chem.SanitizeFlags.SANITIZE_SETAROMATICITY
_MAX_AUTOMORPHISMS = 2000
_MAX_WRITTEN_ATOMS = 400          # the writer recurses once per atom along the depth-first tree


def stereo_double_bonds(mol: Chem.Mol) -> list[int]:
    """Indices of the double bonds that can carry E/Z (RDKit's ``FindPotentialStereo``), sorted."""
    work = Chem.Mol(mol)
    with rdBase.BlockLogs():
        info = Chem.FindPotentialStereo(work, cleanIt=False)
    return sorted(int(s.centeredOn) for s in info if s.type == Chem.StereoType.Bond_Double)


def _heavy_graph(mol: Chem.Mol) -> tuple[Chem.Mol, list[int]]:
    """Heavy atoms with element, charge, H count (as isotope) and Kekulé bond orders; no stereo."""
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    pos = {a: k for k, a in enumerate(heavy)}
    rw = Chem.RWMol()
    for a in heavy:
        src = mol.GetAtomWithIdx(a)
        atom = Chem.Atom(src.GetAtomicNum())
        atom.SetFormalCharge(src.GetFormalCharge())
        atom.SetIsotope(1 + src.GetTotalNumHs(includeNeighbors=True))
        atom.SetNoImplicit(True)
        rw.AddAtom(atom)
    for b in mol.GetBonds():
        i, j = b.GetBeginAtomIdx(), b.GetEndAtomIdx()
        if i in pos and j in pos:
            rw.AddBond(pos[i], pos[j], b.GetBondType())
    graph = rw.GetMol()
    graph.UpdatePropertyCache(strict=False)
    return graph, heavy


class ConfigurationSpace:
    """The stereo double bonds of one constitution and the symmetry that relates their configurations.

    Attributes
    ----------
    bonds : list of (int, int)
        Stereo double bonds as atom index pairs of the molecule it was built from, in canonical order.
    references : list of (int, int)
        Per bond (i, j): the neighbour of i and the neighbour of j (not the partner) with the lowest canonical
        rank; a state is cis (1) or trans (0) about these two atoms.
    """

    def __init__(self, mol: Chem.Mol):
        graph, heavy = _heavy_graph(mol)
        pos = {a: k for k, a in enumerate(heavy)}
        rank = list(Chem.CanonicalRankAtoms(graph, breakTies=True, includeChirality=False))

        def other(u: int, partner: int) -> int:
            nbs = [n.GetIdx() for n in graph.GetAtomWithIdx(u).GetNeighbors() if n.GetIdx() != partner]
            return min(nbs, key=lambda n: rank[n]) if nbs else -1

        pairs = []
        for b in stereo_double_bonds(mol):
            bond = mol.GetBondWithIdx(b)
            i, j = pos.get(bond.GetBeginAtomIdx()), pos.get(bond.GetEndAtomIdx())
            if i is not None and j is not None:
                pairs.append((i, j) if rank[i] < rank[j] else (j, i))
        pairs.sort(key=lambda p: (rank[p[0]], rank[p[1]]))
        index = {frozenset(p): k for k, p in enumerate(pairs)}
        with rdBase.BlockLogs():
            autos = graph.GetSubstructMatches(graph, uniquify=False, useChirality=False,
                                              maxMatches=_MAX_AUTOMORPHISMS)
        image = np.zeros((max(1, len(autos)), len(pairs)), dtype=np.int64)
        flip = np.zeros_like(image)
        image[0] = np.arange(len(pairs))
        for p, perm in enumerate(autos):                  # perm[k]: image of atom k
            for k, (i, j) in enumerate(pairs):
                image[p, k] = index[frozenset((perm[i], perm[j]))]
                flip[p, k] = ((perm[other(i, j)] != other(perm[i], perm[j]))
                              + (perm[other(j, i)] != other(perm[j], perm[i]))) % 2
        self._image, self._flip = image, flip
        self.bonds = [(heavy[i], heavy[j]) for i, j in pairs]
        self.references = [(heavy[other(i, j)] if other(i, j) >= 0 else -1,
                            heavy[other(j, i)] if other(j, i) >= 0 else -1) for i, j in pairs]
        self.constitution = Chem.MolToSmiles(Chem.RemoveHs(graph, sanitize=False), isomericSmiles=False)

    def states_of(self, mol: Chem.Mol) -> tuple[int, ...]:
        """States of ``mol`` (same atom numbering): 1 cis, 0 trans, 2 unspecified, per bond of :attr:`bonds`."""
        want = {frozenset((i, j)): (a, i, d, cis) for a, i, j, d, cis, _ in _cis_references(mol)}
        out = []
        for (i, j), (ra, rd) in zip(self.bonds, self.references):
            spec = want.get(frozenset((i, j)))
            if spec is None:
                out.append(2)
                continue
            a, si, d, cis = spec
            if si != i:
                a, d = d, a
            out.append(int(bool(cis) ^ (((a != ra) + (d != rd)) % 2 == 1)))
        return tuple(out)

    def key(self, states) -> tuple[int, ...]:
        """The lowest image of ``states`` (one per bond) under the automorphisms: equal for equivalent ones."""
        s = np.asarray(states, dtype=np.int64).reshape(-1)
        if s.size == 0:
            return ()
        images = np.empty_like(self._image)
        vals = np.where(s[None, :] < 2, s[None, :] ^ self._flip, s[None, :])
        np.put_along_axis(images, self._image, vals, axis=1)
        return tuple(int(v) for v in min(map(tuple, images)))


def configuration_key(mol: Chem.Mol) -> tuple:
    """An atom-order-independent identifier of the double-bond configuration of ``mol``.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Kekulé molecule (explicit or implicit H) whose double bonds carry E/Z or cis/trans stereo.

    Returns
    -------
    tuple
        ``(canonical SMILES without stereo, states)``: states lists, for every stereo double bond in canonical
        order, 1 (cis), 0 (trans) or 2 (unspecified) about canonical reference atoms, minimised over the
        automorphisms of the heavy-atom graph that keep bond orders. Equal keys mean the same configuration.
    """
    space = ConfigurationSpace(mol)
    return space.constitution, space.key(space.states_of(mol))


# ----------------------------------------------------------------------------------------- writer
def _traverse(mol: Chem.Mol, written: set[int]):
    """Depth-first tree over the written atoms from the lowest heavy atom, hydrogens visited first (they become
    branches): (parent, children, ring-closure bonds as sorted pairs)."""
    start = min(written, key=lambda a: (mol.GetAtomWithIdx(a).GetAtomicNum() == 1, a))

    def neighbours(a: int):
        return iter(sorted((n.GetIdx() for n in mol.GetAtomWithIdx(a).GetNeighbors() if n.GetIdx() in written),
                           key=lambda n: (mol.GetAtomWithIdx(n).GetAtomicNum() > 1, n)))

    parent: dict[int, int | None] = {start: None}
    children: dict[int, list[int]] = {a: [] for a in written}
    closures: set[tuple[int, int]] = set()
    stack = [(start, neighbours(start))]
    while stack:
        atom, todo = stack[-1]
        for n in todo:
            if parent[atom] == n or parent.get(n, -1) == atom:
                continue
            if n in parent:
                closures.add((min(atom, n), max(atom, n)))
                continue
            parent[n] = atom
            children[atom].append(n)
            stack.append((n, neighbours(n)))
            break
        else:
            stack.pop()
    return start, parent, children, closures


def _atom_text(mol: Chem.Mol, a: int, written: set[int]) -> str:
    atom = mol.GetAtomWithIdx(a)
    sym = atom.GetSymbol()
    if atom.GetAtomicNum() == 1:
        return "[H]"
    hidden = atom.GetNumImplicitHs() + sum(1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 1
                                           and n.GetIdx() not in written)
    valence = sum(b.GetBondTypeAsDouble() for b in atom.GetBonds()) - sum(
        1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 1 and n.GetIdx() not in written)
    if (sym in _ORGANIC and atom.GetFormalCharge() == 0 and atom.GetIsotope() == 0
            and atom.GetNumRadicalElectrons() == 0):
        fill = next((v for v in _ORGANIC[sym] if v >= valence), None)
        if int(round((fill if fill is not None else valence) - valence)) == hidden:
            return sym
    q = atom.GetFormalCharge()
    charge = "" if q == 0 else ("+" if q > 0 else "-") + (str(abs(q)) if abs(q) > 1 else "")
    iso = str(atom.GetIsotope()) if atom.GetIsotope() else ""
    hs = "" if hidden == 0 else "H" if hidden == 1 else f"H{hidden}"
    return f"[{iso}{sym}{hs}{charge}]"


def _marks(mol: Chem.Mol, refs, parent) -> dict[tuple[int, int], int] | None:
    """Directions (+1 '/', -1 '\\') of marked tree bonds (parent, child) that meet every configuration; None if
    none were found.

    A mark on a bond is read by every stereo double bond that bond touches, so each new mark brings all its
    constraints with the marks already placed: against the marks at the far end of each such double bond (equal
    sides for cis, opposite for trans, about the written references) and against a mark at the same end
    (opposite sides). side(x, i) is the mark read as written x-then-i. Double bonds are served in order, each
    end by the first candidate that keeps the system consistent: a heavy-atom tree bond, else a hydrogen branch
    (as ``[H]/C1=C/...``; design notes §6). Parity is solved by union-find."""
    link: dict[tuple[int, int], tuple[tuple[int, int], int]] = {}
    stereo: dict[int, list] = {}         # end atom -> [(partner, ref at end, ref at partner, cis)]
    for a, i, j, d, cis, _ in refs:
        stereo.setdefault(i, []).append((j, a, d, bool(cis)))
        stereo.setdefault(j, []).append((i, d, a, bool(cis)))

    def find(e):
        flip = 0
        while e in link:
            e, f = link[e]
            flip ^= f
        return e, flip

    def edge(x: int, i: int):
        """(tree edge, 0 if written x->i else 1) or None for a ring closure or an absent bond."""
        if parent.get(i) == x:
            return (x, i), 0
        if parent.get(x) == i:
            return (i, x), 1
        return None

    marked: dict[int, list[tuple[int, tuple[int, int], int]]] = {}   # end atom -> [(neighbour, edge, flip)]

    def relate(e1, f1, e2, f2, diff) -> bool:
        """Require mark(e1)^f1 ^ mark(e2)^f2 == diff (as bits: 0 same side, 1 opposite)."""
        (r1, p1), (r2, p2) = find(e1), find(e2)
        want = diff ^ f1 ^ f2
        if r1 == r2:
            return (p1 ^ p2) == want
        link[r1] = (r2, p1 ^ p2 ^ want)
        return True

    def place(x: int, i: int) -> bool:
        """Mark the bond x-i (x a neighbour of the stereo end i); False (nothing changed) if inconsistent."""
        found = edge(x, i)
        if found is None:
            return False
        e, f = found
        saved = dict(link)
        ok = True
        for end, nb in ((i, x), (x, i)):                 # the bond touches end i, and x if x is a stereo end too
            if end not in stereo:
                continue
            ee, ff = edge(nb, end) or (e, f)
            for nb2, e2, f2 in marked.get(end, []):
                if nb2 != nb:
                    ok = ok and relate(ee, ff, e2, f2, 1)      # two marks at one end: opposite sides
            for partner, ref_end, ref_partner, cis in stereo[end]:
                for nb2, e2, f2 in marked.get(partner, []):
                    flips = (nb != ref_end) + (nb2 != ref_partner)
                    same = cis ^ (flips % 2 == 1)
                    ok = ok and relate(ee, ff, e2, f2, 0 if same else 1)
        if not ok:
            link.clear()
            link.update(saved)
            return False
        for end, nb in ((i, x), (x, i)):
            if end in stereo:
                ee, ff = edge(nb, end) or (e, f)
                marked.setdefault(end, []).append((nb, ee, ff))
        return True

    for _, i, j, _, _, _ in refs:
        for end, partner in ((i, j), (j, i)):
            if marked.get(end):
                continue
            options = sorted((n.GetIdx() for n in mol.GetAtomWithIdx(end).GetNeighbors() if n.GetIdx() != partner),
                             key=lambda n: (mol.GetAtomWithIdx(n).GetAtomicNum() == 1, n))
            if not any(place(n, end) for n in options):
                return None
    edges = {e for lst in marked.values() for _, e, _ in lst}
    return {e: (1 if find(e)[1] == 0 else -1) for e in edges}


def _write(mol: Chem.Mol, written: set[int], start: int, children, closures, marks) -> str:
    digits: dict[tuple[int, int], int] = {}
    free: list[int] = []
    next_digit = [1]
    symbol = {Chem.BondType.DOUBLE: "=", Chem.BondType.TRIPLE: "#"}

    def bond_text(u: int, v: int) -> str:
        if (u, v) in marks:
            return "/" if marks[(u, v)] > 0 else "\\"
        return symbol.get(mol.GetBondBetweenAtoms(u, v).GetBondType(), "")

    def ring_text(a: int) -> str:
        out = ""
        for c in sorted(c for c in closures if a in c):
            if c in digits:
                k = digits.pop(c)
                free.append(k)
            else:
                if free:
                    free.sort()
                    k = free.pop(0)
                else:
                    k, next_digit[0] = next_digit[0], next_digit[0] + 1
                digits[c] = k
            bond = symbol.get(mol.GetBondBetweenAtoms(*c).GetBondType(), "")
            out += bond + (str(k) if k < 10 else f"%{k}")
        return out

    def emit(a: int) -> str:
        text = _atom_text(mol, a, written) + ring_text(a)
        kids = children[a]
        for k, c in enumerate(kids):
            part = bond_text(a, c) + emit(c)
            text += part if k == len(kids) - 1 else f"({part})"
        return text

    return emit(start)


def _parse(smiles: str) -> Chem.Mol | None:
    params = Chem.SmilesParserParams()
    params.sanitize, params.removeHs = False, False  # type: ignore[assignment]
    with rdBase.BlockLogs():
        mol = Chem.MolFromSmiles(smiles, params)
        if mol is None:
            return None
        try:
            Chem.SanitizeMol(mol, _KEKULE_OPS)
        except Exception:            # noqa: BLE001 - any failure means the text is not usable
            return None
        Chem.AssignStereochemistry(mol, cleanIt=True, force=True)
    return mol


def isomeric_smiles(mol: Chem.Mol) -> str | None:
    """A SMILES of ``mol`` that keeps every double-bond configuration, checked by parsing it back.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Kekulé molecule with explicit hydrogens whose double bonds carry E/Z or cis/trans stereo.

    Returns
    -------
    str or None
        RDKit's canonical isomeric SMILES when it parses back to the same :func:`configuration_key`, else the
        text of this module's writer (direction marks on hydrogen branches), else None (e.g. a molecule with
        tetrahedral stereocentres that RDKit's SMILES does not keep together with its ring E/Z).
    """
    key = configuration_key(mol)
    with rdBase.BlockLogs():
        work = Chem.RemoveHs(mol, sanitize=False)
        Chem.SetDoubleBondNeighborDirections(work)      # RDKit writes cis/trans set on bonds only with directions
        plain = Chem.MolToSmiles(work)
    back = _parse(plain)
    if back is not None and configuration_key(back) == key:
        return plain
    if any(a.GetChiralTag() != Chem.ChiralType.CHI_UNSPECIFIED for a in mol.GetAtoms()):
        return None
    refs = [r for r in _cis_references(mol)]
    written = {a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1}
    for _, i, j, _, _, _ in refs:                      # one hydrogen branch per double-bond end, where there is one
        for end in (i, j):
            hs = sorted(n.GetIdx() for n in mol.GetAtomWithIdx(end).GetNeighbors() if n.GetAtomicNum() == 1)
            written.update(hs[:1])
    if not written:
        return None
    if len(Chem.GetMolFrags(mol)) > 1 or mol.GetNumAtoms() > _MAX_WRITTEN_ATOMS:
        return None
    start, parent, children, closures = _traverse(mol, written)
    marks = _marks(mol, refs, parent)
    if marks is None:
        return None
    unmarked = {h for h in written if mol.GetAtomWithIdx(h).GetAtomicNum() == 1
                and not any(h in e for e in marks)}           # hydrogen branches that carry no mark stay implicit
    written -= unmarked
    children = {a: [c for c in kids if c not in unmarked] for a, kids in children.items() if a not in unmarked}
    text = _write(mol, written, start, children, closures, marks)
    back = _parse(text)
    return text if back is not None and configuration_key(back) == key else None
