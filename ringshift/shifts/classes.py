"""Proton classes: which ring-current-free reference shift a hydrogen gets.

:func:`classify_hydrogens` names the class of each H from its parent atom and the π system around it
(CH on a π ring, CH next to N/O/S, allylic and alkyl CH, NH, OH, ...); classes index the reference table
of :mod:`ringshift.shifts.reference`. A hydrogen that fits no class gets :data:`FALLBACK_CLASS`.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Iterable

import numpy as np
from rdkit import Chem

from ringshift.errors import InputError
from ringshift.pi.perception import perceive_pi

__all__ = ['classify_hydrogens']


_MULTIPLE = (Chem.BondType.DOUBLE, Chem.BondType.TRIPLE, Chem.BondType.AROMATIC)


def _prepared_copy(mol) -> Chem.Mol:
    """Copy of ``mol`` with valences, rings, conjugation and hybridisation set; aromatic flags kept."""
    if not isinstance(mol, Chem.Mol):
        raise InputError(f"got {type(mol).__name__}; expected an RDKit Chem.Mol", source="mol")
    copy = Chem.Mol(mol)
    ops = (Chem.SanitizeFlags.SANITIZE_PROPERTIES | Chem.SanitizeFlags.SANITIZE_SYMMRINGS
           | Chem.SanitizeFlags.SANITIZE_SETCONJUGATION
           | Chem.SanitizeFlags.SANITIZE_SETHYBRIDIZATION)
    failed = Chem.SanitizeMol(copy, ops, catchErrors=True)
    if failed != Chem.SanitizeFlags.SANITIZE_NONE:
        raise InputError(f"RDKit could not prepare the molecule ({failed}); expected a valid "
                         "structure", source="mol")
    for atom in copy.GetAtoms():
        if atom.GetAtomicNum() != 1 and atom.GetTotalNumHs(includeNeighbors=False) > 0:
            raise InputError(f"atom {atom.GetIdx()} ({atom.GetSymbol()}) carries hydrogens that "
                             "are not atoms; expected explicit H atoms, add them with "
                             "Chem.AddHs(mol)", source="mol")
    return copy


def _has_multiple_bond(atom) -> bool:
    return atom.GetIsAromatic() or any(b.GetBondType() in _MULTIPLE for b in atom.GetBonds())


def _share_pi_circuit(mol, pi: frozenset[int], u: int, v: int) -> bool:
    """True if non-adjacent π atoms ``u`` and ``v`` lie on one cycle of the π subgraph.

    By Menger's theorem two non-adjacent vertices lie on a common cycle exactly when no single other
    vertex separates them; this checks that directly (breadth-first search with each other vertex
    removed in turn), which is cheap for molecular graphs.
    """
    adj: dict[int, list[int]] = {i: [] for i in pi}
    for bond in mol.GetBonds():
        a, b = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
        if a in pi and b in pi:
            adj[a].append(b)
            adj[b].append(a)
    if v in adj[u]:
        return False

    def connected(removed: int | None) -> tuple[bool, set[int]]:
        seen = {u}
        queue = deque([u])
        while queue:
            x = queue.popleft()
            for y in adj[x]:
                if y != removed and y not in seen:
                    seen.add(y)
                    queue.append(y)
        return v in seen, seen

    ok, component = connected(None)
    return ok and all(connected(w)[0] for w in component if w not in (u, v))


def _is_carbonyl_carbon(atom) -> bool:
    return atom.GetAtomicNum() == 6 and any(
        b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(atom).GetAtomicNum() == 8
        for b in atom.GetBonds()
    )


def _is_pyridine_type_n(atom) -> bool:
    """Imine-like N: a double bond, or aromatic and two-coordinate or cationic (pyridine, C=N, N+)."""
    if any(b.GetBondType() == Chem.BondType.DOUBLE for b in atom.GetBonds()):
        return True
    if atom.GetIsAromatic():
        return atom.GetTotalDegree() == 2 or atom.GetFormalCharge() > 0
    return False


def _heavy_neighbours(atom) -> list:
    return [nb for nb in atom.GetNeighbors() if nb.GetAtomicNum() > 1]


def _classify_pi_ch(carbon, n_h: int, pi: frozenset[int]) -> str:
    """Class of an H on a π carbon (sp2, sp or a conjugated charged carbon)."""
    heavy = _heavy_neighbours(carbon)
    for bond in carbon.GetBonds():
        other = bond.GetOtherAtom(carbon)
        if bond.GetBondType() == Chem.BondType.TRIPLE:
            if other.GetAtomicNum() != 6:
                return FALLBACK_CLASS  # HC#N and the like
            far = [nb for nb in other.GetNeighbors() if nb.GetIdx() != carbon.GetIdx()]
            return "sp_CH_alkyne_conjugated" if any(nb.GetIdx() in pi for nb in far) \
                else "sp_CH_alkyne"
    if _is_carbonyl_carbon(carbon):
        others = [b.GetOtherAtom(carbon) for b in carbon.GetBonds()
                  if b.GetOtherAtom(carbon).GetAtomicNum() > 1
                  and not (b.GetBondType() == Chem.BondType.DOUBLE
                           and b.GetOtherAtom(carbon).GetAtomicNum() == 8)]
        if any(nb.GetAtomicNum() in (7, 8) for nb in others):
            return "CHO_formyl_heteroatom"
        if all(nb.GetAtomicNum() == 6 for nb in others):
            return "CHO_aldehyde"
        return FALLBACK_CLASS
    elements = {nb.GetAtomicNum() for nb in heavy}
    if elements - {6, 7, 8, 16}:
        return FALLBACK_CLASS  # halogen, Si, P, B, Se ... on the π carbon
    if any(b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(carbon).GetAtomicNum() == 16
           for b in carbon.GetBonds()):
        return FALLBACK_CLASS  # thioaldehyde
    nitrogens = [nb for nb in heavy if nb.GetAtomicNum() == 7]
    if any(_is_pyridine_type_n(n) for n in nitrogens):
        return "sp2_CH_alpha_N_pyridine_type"
    if 8 in elements:
        return "sp2_CH_alpha_O_furan_type"
    if 16 in elements:
        return "sp2_CH_alpha_S_thiophene_type"
    if nitrogens:
        return "sp2_CH_alpha_N_pyrrole_type"
    if n_h == 2:
        return "sp2_CH2_terminal"
    if n_h > 2:
        return FALLBACK_CLASS
    if carbon.GetIsAromatic():
        return "sp2_CH_aromatic_type"
    conjugated = any(b.GetIsConjugated() for b in carbon.GetBonds()) or (
        sum(1 for nb in heavy if nb.GetIdx() in pi) >= 2)
    if carbon.IsInRing() and conjugated:
        return "sp2_CH_ring_conjugated"
    if conjugated:
        return "sp2_CH_polyene"
    return "sp2_CH_alkene"


def _classify_sp3_ch(carbon, n_h: int, pi: frozenset[int]) -> str:
    """Class of an H on a carbon with only single bonds (not in the π system)."""
    mol = carbon.GetOwningMol()
    heavy = _heavy_neighbours(carbon)
    if not heavy or n_h > 3 or carbon.GetFormalCharge() != 0 or carbon.GetNumRadicalElectrons():
        return FALLBACK_CLASS
    elements = {nb.GetAtomicNum() for nb in heavy}
    if elements - {6, 7, 8}:
        return FALLBACK_CLASS  # S, halogen, Si, P, B ... neighbours
    size = {1: "CH", 2: "CH2", 3: "CH3"}[n_h]

    def bears_pi(hetero) -> bool:
        return hetero.GetIdx() in pi or any(
            nb.GetIdx() != carbon.GetIdx() and (nb.GetIdx() in pi or _is_carbonyl_carbon(nb))
            for nb in hetero.GetNeighbors())

    oxygens = [nb for nb in heavy if nb.GetAtomicNum() == 8]
    if oxygens:
        if n_h == 3 and any(bears_pi(o) for o in oxygens):
            return "sp3_CH3_on_O_pi"
        return f"sp3_{size}_on_O"
    nitrogens = [nb for nb in heavy if nb.GetAtomicNum() == 7]
    if nitrogens:
        if n_h == 3 and any(bears_pi(n) for n in nitrogens):
            return "sp3_CH3_on_N_pi"
        return f"sp3_{size}_on_N"
    if any(_is_carbonyl_carbon(nb) for nb in heavy):
        return f"sp3_{size}_on_CO"
    pi_nbrs = [nb.GetIdx() for nb in heavy if nb.GetIdx() in pi]
    if not pi_nbrs:
        if n_h == 3 and any(nb.GetIdx() in pi for c in heavy for nb in c.GetNeighbors()):
            return "sp3_CH3_beta_to_pi"  # homoallylic/homobenzylic CH3 (tert-butyl or ethyl on a π system)
        return f"sp3_{size}_alkyl"
    if n_h == 2 and len(pi_nbrs) == 2:
        if _share_pi_circuit(mol, pi, pi_nbrs[0], pi_nbrs[1]):
            return "bridge_CH2_over_pi"
        return "sp3_CH2_between_pi"
    return f"sp3_{size}_on_pi"


def _classify_nh(nitrogen, pi: frozenset[int]) -> str:
    heavy = _heavy_neighbours(nitrogen)
    if not heavy or any(nb.GetAtomicNum() != 6 for nb in heavy):
        return FALLBACK_CLASS  # NH3, hydrazines, N-oxides, ...
    if any(_is_carbonyl_carbon(nb) for nb in heavy):
        return "NH_amide"
    ring_pi = [nb for nb in heavy if nb.GetIdx() in pi
               and nitrogen.GetOwningMol().GetBondBetweenAtoms(
                   nitrogen.GetIdx(), nb.GetIdx()).IsInRing()]
    if nitrogen.IsInRing() and (nitrogen.GetIsAromatic() or len(ring_pi) >= 2):
        return "NH_pyrrole_type"
    if nitrogen.GetFormalCharge() != 0 or _has_multiple_bond(nitrogen):
        return FALLBACK_CLASS  # ammonium, imine NH
    if any(nb.GetIdx() in pi for nb in heavy):
        return "NH_amine_on_pi"
    return "NH_amine"


def _classify_oh(oxygen, pi: frozenset[int]) -> str:
    heavy = _heavy_neighbours(oxygen)
    if len(heavy) != 1 or heavy[0].GetAtomicNum() != 6 or oxygen.GetFormalCharge() != 0:
        return FALLBACK_CLASS  # water, hydroperoxides, oxonium, ...
    carbon = heavy[0]
    if _is_carbonyl_carbon(carbon):
        return "OH_carboxylic_acid"
    if carbon.GetIdx() in pi:
        return "OH_phenol"
    return "OH_alcohol"


def _classify_one(h_atom, pi: frozenset[int]) -> str:
    neighbours = list(h_atom.GetNeighbors())
    if len(neighbours) != 1:
        return FALLBACK_CLASS
    host = neighbours[0]
    z = host.GetAtomicNum()
    if z == 6:
        n_h = sum(1 for nb in host.GetNeighbors() if nb.GetAtomicNum() == 1)
        if host.GetIdx() in pi:
            return _classify_pi_ch(host, n_h, pi)
        return _classify_sp3_ch(host, n_h, pi)
    if z == 7:
        return _classify_nh(host, pi)
    if z == 8:
        return _classify_oh(host, pi)
    return FALLBACK_CLASS


def _checked_h_indices(mol, h_indices) -> list[int]:
    all_h = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1]
    if h_indices is None:
        return all_h
    try:
        wanted = [int(i) for i in np.asarray(h_indices, dtype=np.int64).ravel()]
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"got {h_indices!r}; expected a sequence of atom indices",
                         source="h_indices") from None
    n = mol.GetNumAtoms()
    for i in wanted:
        if not 0 <= i < n:
            raise InputError(f"index {i} is out of range; expected 0..{n - 1}", source="h_indices")
        atom = mol.GetAtomWithIdx(i)
        if atom.GetAtomicNum() != 1:
            raise InputError(f"atom {i} is {atom.GetSymbol()}; expected a hydrogen atom index",
                             source="h_indices")
    return wanted


def classify_hydrogens(mol, h_indices: Iterable[int] | None = None) -> dict[int, str]:
    """Give each hydrogen a proton class.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Explicit H atoms (``Chem.AddHs``); not modified. Aromatic flags are used as given: Kekulé
        input gives ``sp2_CH_ring_conjugated`` where aromatised input gives ``sp2_CH_aromatic_type``,
        two classes with one reference in the packaged table.
    h_indices : iterable of int, optional
        Atom indices of the hydrogens to classify; default all hydrogens.

    Returns
    -------
    dict[int, str]
        H atom index -> proton class, in the order of ``h_indices`` (default atom order).

    Notes
    -----
    π atoms are aromatic atoms, atoms with a double or triple bond, charged/radical carbons next to
    them and neutral N/O/S joining two of them. Rules, by the atom that carries the H:

    * π carbon: C#C-H -> ``sp_CH_alkyne`` (``_conjugated`` if the far alkyne carbon has a π
      neighbour); H-C=O -> ``CHO_aldehyde`` or ``CHO_formyl_heteroatom`` (C bonded to O/N); bonded
      to an imine-like N (double bond, or aromatic two-coordinate/cationic N) ->
      ``sp2_CH_alpha_N_pyridine_type``; to O -> ``..._alpha_O_furan_type``; to S ->
      ``..._alpha_S_thiophene_type``; to another N -> ``..._alpha_N_pyrrole_type``; =CH2 ->
      ``sp2_CH2_terminal``; aromatic flag -> ``sp2_CH_aromatic_type``; in a ring and conjugated ->
      ``sp2_CH_ring_conjugated``; conjugated chain -> ``sp2_CH_polyene``; else ``sp2_CH_alkene``.
      Other heteroatoms on the carbon give the fallback.
    * sp3 carbon (CH3/CH2/CH), first match: bonded to O -> ``sp3_<n>_on_O`` (CH3 on an O bearing a
      π atom or C=O -> ``sp3_CH3_on_O_pi``); to N -> ``sp3_<n>_on_N`` (``sp3_CH3_on_N_pi``
      likewise); to a C=O carbon -> ``sp3_<n>_on_CO``; CH2 with two π neighbours that are
      non-adjacent atoms of one cycle of the π subgraph -> ``bridge_CH2_over_pi`` (the methano
      bridge of 1,6-methano[10]annulene), other CH2 with two π neighbours ->
      ``sp3_CH2_between_pi``; any π neighbour -> ``sp3_<n>_on_pi`` (this includes the CH2 of
      [2.2]paracyclophane, each bonded to one ring atom: they do not span a circuit); CH3 on an sp3
      carbon that bears a π atom -> ``sp3_CH3_beta_to_pi`` (tert-butyl and ethyl CH3 on a π system, the
      internal methyls of dimethyldihydropyrene); else ``sp3_<n>_alkyl``. Other heteroatoms, charged carbon or
      CH4 give the fallback.
    * N: bonded to C=O -> ``NH_amide``; ring N that is aromatic or joins two π ring atoms ->
      ``NH_pyrrole_type`` (also cationic NH of protonated porphyrins); bonded to a π atom ->
      ``NH_amine_on_pi``; sp3 amine -> ``NH_amine``.
    * O: on a C=O carbon -> ``OH_carboxylic_acid``; on a π carbon -> ``OH_phenol``; on sp3 C ->
      ``OH_alcohol``.
    * Anything else -> ``other_H``.

    Raises
    ------
    InputError
        ``mol`` is not an RDKit molecule, has implicit hydrogens, or ``h_indices`` names a non-H atom.
    """
    prepared = _prepared_copy(mol)
    wanted = _checked_h_indices(prepared, h_indices)
    pi = frozenset(perceive_pi(prepared).atoms)   # the one π perception
    return {i: _classify_one(prepared.GetAtomWithIdx(i), pi) for i in wanted}


#: Class given to any hydrogen that fits no other rule (large spread in the packaged table).
FALLBACK_CLASS = "other_H"
