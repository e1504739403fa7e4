"""Geometry of metal chelates given without coordinates: embed the ligand, then put the metal among its donors.

RDKit's distance geometry has no sound bounds for a metal bonded to a macrocycle's donors (a zinc porphine SMILES
with four Zn–N bonds raises an invariant violation while its bounds are set up, measured with RDKit 2026.09), and
MMFF94 has no parameters for a covalently bound metal, so UFF then bends the ring (a zinc porphine with two Zn–N
bonds came out 1.1 Å out of plane, measured). Left unbonded, as an ion pair, the metal lets the dianion of a
porphyrin pucker by 1.6 Å under MMFF94 (measured). The ring currents need the ligand's π framework, not the
metal–donor distances, so the conformers are generated for a *proxy*: the ligand with each metal–donor single
bond (or the charge of an anionic donor of an unbonded metal) replaced by an N–H/O–H/S–H proton, and dative bonds
dropped (also a dative bond written charge-separated, M(−)–N(+): the donor loses its + charge) — the free-base
ligand (free-base porphine for a metalloporphine). Each metal is then put at the centroid
of its donors; for an ion pair the metal is bonded back to its donors within :data:`DONOR_RANGE_A` (a single bond
from each anionic donor, whose charge moves to the metal; a dative bond from each neutral one), the connection
table of an SDF of the complex. Only N, O, S and P donors are handled; a metal bonded to carbon (a sandwich or
σ-organometallic) is left to the ordinary route.

Pure graph and array helpers; the conformer search itself stays in :mod:`ringshift.geometry.conformers`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from rdkit import Chem, rdBase

__all__ = ["NON_METALS", "DONOR_ELEMENTS", "DONOR_RANGE_A", "MetalProxy", "metal_proxy", "coordinate_metals",
           "normalise_dative"]

#: Elements that are not treated as metals (main-group non-metals and metalloids RDKit's bond perception knows).
NON_METALS = frozenset("H He B C N O F Ne Si P S Cl Ar Ge As Se Br Kr Te I Xe".split())
#: Donor elements of a chelate.
DONOR_ELEMENTS = ("N", "O", "S", "P")
#: A donor atom at most this far from a metal is bonded to it, Å (metalloporphyrin M–N 1.9–2.1 Å; common
#: practice, no source).
DONOR_RANGE_A = 2.6


@dataclass(frozen=True)
class MetalProxy:
    """The free-base proxy of a metal chelate.

    mol : the proxy (explicit H, Kekulé), to embed instead of the complex.
    to_proxy : (n_atoms_complex,) index of each complex atom in the proxy, −1 for a metal.
    donors : metal index (complex) → donor indices (complex).
    ionic : True when at least one metal was given unbonded (ion pair).
    neutral_donors : N/O/S/P atoms without H or metal bond (complex indices); an unbonded metal's position also
        takes those within 3.2 Å of its anionic donors' centroid (the imine N of a porphyrin written with its two
        anionic N cis).
    """

    mol: Chem.Mol
    to_proxy: np.ndarray
    donors: dict[int, tuple[int, ...]]
    ionic: bool
    neutral_donors: tuple[int, ...] = ()

    def lift(self, proxy_coords: np.ndarray) -> np.ndarray:
        """Complex coordinates (k, n_atoms, 3), Å, from proxy coordinates (k, n_proxy, 3): every ligand atom as in
        the proxy, each metal at the centroid of its donors."""
        x = np.asarray(proxy_coords, dtype=np.float64)
        n = self.to_proxy.shape[0]
        out = np.zeros((x.shape[0], n, 3))
        keep = self.to_proxy >= 0
        out[:, keep] = x[:, self.to_proxy[keep]]
        for m, ds in self.donors.items():
            centre = out[:, list(ds)].mean(axis=1)
            if self.ionic and self.neutral_donors:
                for k in range(out.shape[0]):
                    near = [a for a in self.neutral_donors if np.linalg.norm(out[k, a] - centre[k]) <= 3.2]
                    centre[k] = out[k, list(ds) + near].mean(axis=0)
            out[:, m] = centre
        return out


def _is_metal(atom: Chem.Atom) -> bool:
    return atom.GetSymbol() not in NON_METALS


def _metal_bound(atom: Chem.Atom) -> bool:
    return any(_is_metal(nb) for nb in atom.GetNeighbors())


def _metals(mol: Chem.Mol) -> list[int]:
    return [a.GetIdx() for a in mol.GetAtoms() if _is_metal(a)]


def metal_proxy(mol: Chem.Mol) -> MetalProxy | None:
    """The proxy of an explicit-H complex, or None when it has no metal chelate this module handles.

    A bonded metal counts when all its neighbours are N/O/S/P donors and it has at least two; an unbonded metal
    with a positive formal charge counts when it is the only metal and the molecule has at least two anionic
    (−1) N/O/S donors not bonded to a metal.
    """
    metals = _metals(mol)
    if not metals:
        return None
    donors: dict[int, tuple[int, ...]] = {}
    unbonded = []
    for m in metals:
        nbs = list(mol.GetAtomWithIdx(m).GetNeighbors())
        if not nbs:
            unbonded.append(m)
            continue
        if any(nb.GetSymbol() not in DONOR_ELEMENTS for nb in nbs) or len(nbs) < 2:
            return None
        donors[m] = tuple(nb.GetIdx() for nb in nbs)
    ionic = False
    if unbonded:
        anionic = tuple(a.GetIdx() for a in mol.GetAtoms()
                        if a.GetSymbol() in DONOR_ELEMENTS and a.GetFormalCharge() == -1 and not _metal_bound(a))
        if len(unbonded) != 1 or len(anionic) < 2 or mol.GetAtomWithIdx(unbonded[0]).GetFormalCharge() <= 0:
            return None
        donors[unbonded[0]] = anionic
        ionic = True
    rw = Chem.RWMol(mol)
    protonate = []
    for m, ds in donors.items():
        for d in ds:
            bond = mol.GetBondBetweenAtoms(m, d)
            if bond is None:                                   # anionic donor of an unbonded metal
                protonate.append(d)
                rw.GetAtomWithIdx(d).SetFormalCharge(0)
            elif rw.GetAtomWithIdx(d).GetFormalCharge() > 0:  # charge-separated dative bond, M(−)–N(+)
                rw.GetAtomWithIdx(d).SetFormalCharge(rw.GetAtomWithIdx(d).GetFormalCharge() - 1)
            elif bond.GetBondType() != Chem.BondType.DATIVE:   # a covalent M–X bond becomes X–H
                protonate.append(d)
            if bond is not None:
                rw.RemoveBond(m, d)
    for d in protonate:
        h = rw.AddAtom(Chem.Atom(1))
        rw.AddBond(d, h, Chem.BondType.SINGLE)
    for m in sorted(donors, reverse=True):
        rw.RemoveAtom(m)
    proxy = rw.GetMol()
    try:
        with rdBase.BlockLogs():
            Chem.SanitizeMol(proxy)
            Chem.Kekulize(proxy, clearAromaticFlags=True)
    except Exception:                    # noqa: BLE001 - the free-base form is not a valid molecule: ordinary route
        return None
    to_proxy = np.full(mol.GetNumAtoms(), -1, dtype=np.intp)
    left = [i for i in range(mol.GetNumAtoms()) if i not in donors]
    to_proxy[left] = np.arange(len(left))
    neutral = tuple(a.GetIdx() for a in mol.GetAtoms() if a.GetSymbol() in DONOR_ELEMENTS and a.GetFormalCharge() == 0
                    and a.GetTotalNumHs() == 0 and not _metal_bound(a))
    return MetalProxy(mol=proxy, to_proxy=to_proxy, donors=donors, ionic=ionic, neutral_donors=neutral)


def coordinate_metals(mol: Chem.Mol, xyz: np.ndarray) -> Chem.Mol | None:
    """``mol`` with each positive metal ion bonded to the N/O/S/P donors within :data:`DONOR_RANGE_A` of it in
    ``xyz`` (n_atoms, 3), Å: a single bond from a donor carrying −1 (its charge moves to the metal), a dative bond
    from a neutral donor without H. None when RDKit cannot sanitise the result."""
    work = Chem.RWMol(mol)
    for mi in _metals(mol):
        metal = work.GetAtomWithIdx(mi)
        for a in work.GetAtoms():
            if a.GetSymbol() not in DONOR_ELEMENTS or work.GetBondBetweenAtoms(a.GetIdx(), mi) is not None \
                    or float(np.linalg.norm(xyz[a.GetIdx()] - xyz[mi])) > DONOR_RANGE_A:
                continue
            if a.GetFormalCharge() == -1 and metal.GetFormalCharge() > 0:
                work.AddBond(a.GetIdx(), mi, Chem.BondType.SINGLE)
                a.SetFormalCharge(0)
                metal.SetFormalCharge(metal.GetFormalCharge() - 1)
            elif a.GetFormalCharge() == 0 and a.GetTotalNumHs() == 0:
                work.AddBond(a.GetIdx(), mi, Chem.BondType.DATIVE)
    out = work.GetMol()
    try:
        with rdBase.BlockLogs():
            Chem.SanitizeMol(Chem.Mol(out))
    except Exception:                    # noqa: BLE001 - RDKit refuses the valence: keep the ion pair
        return None
    return out


def normalise_dative(mol: Chem.Mol) -> Chem.Mol:
    """``mol`` with each charge-separated metal–donor bond, M(−)–X(+) (a common way to write a metalloporphyrin or a
    bipyridine chelate), rewritten as the dative bond X→M with both charges moved back (X to 0, M up by one), so the
    π perception sees a neutral donor whose lone pair goes to the metal rather than a cationic π atom. Returns the
    input unchanged when there is nothing to rewrite or RDKit cannot sanitise the result."""
    metals = set(_metals(mol))
    pairs = []
    for b in mol.GetBonds():
        i, j = b.GetBeginAtomIdx(), b.GetEndAtomIdx()
        if b.GetBondType() != Chem.BondType.SINGLE or (i in metals) == (j in metals):
            continue
        m, d = (i, j) if i in metals else (j, i)
        if mol.GetAtomWithIdx(d).GetSymbol() in DONOR_ELEMENTS and mol.GetAtomWithIdx(d).GetFormalCharge() > 0:
            pairs.append((m, d))
    if not pairs:
        return mol
    rw = Chem.RWMol(mol)
    for m, d in pairs:
        if rw.GetAtomWithIdx(m).GetFormalCharge() >= 0:
            continue                          # only a metal that carries the balancing negative charge
        rw.RemoveBond(m, d)
        rw.AddBond(d, m, Chem.BondType.DATIVE)
        rw.GetAtomWithIdx(d).SetFormalCharge(rw.GetAtomWithIdx(d).GetFormalCharge() - 1)
        rw.GetAtomWithIdx(m).SetFormalCharge(rw.GetAtomWithIdx(m).GetFormalCharge() + 1)
    out = rw.GetMol()
    try:
        with rdBase.BlockLogs():
            Chem.SanitizeMol(Chem.Mol(out))
    except Exception:                         # noqa: BLE001 - keep the input as written
        return mol
    return out
