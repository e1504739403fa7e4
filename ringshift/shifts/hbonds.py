"""Intramolecular N–H···N hydrogen bonds of pyrrole-type NH, found in 3D: a proton class of their own.

A pyrrole-type NH whose H points at an imine-like ring N of the same molecule (the inner NH of a
porphyrin, corrole or other porphyrinoid cavity; a syn dipyrrin) is hydrogen-bonded. Hydrogen bonding
deshields the proton by several ppm, and the packaged ``NH_pyrrole_type`` reference (free pyrrole,
indole, carbazole NH) does not contain it. :func:`refine_nh_classes` moves such protons to
:data:`HBOND_NH_CLASS`, which has its own row in the reference table.

The geometric test is the usual one for a (weak to moderate) hydrogen bond: H···A distance and
D–H···A angle (Jeffrey, *An Introduction to Hydrogen Bonding*, Oxford University Press 1997; Steiner,
Angew. Chem. Int. Ed. 2002, 41, 48; thresholds from memory). It is applied per conformer and the
Boltzmann weights decide: the class changes when conformers holding at least
:data:`HBOND_MIN_WEIGHT` of the population have the bond.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from rdkit import Chem

__all__ = ['HBOND_NH_CLASS', 'HBOND_MAX_H_ACCEPTOR_A', 'HBOND_MIN_ANGLE_DEG', 'HBOND_MIN_WEIGHT',
           'hbond_weight', 'refine_nh_classes']

#: Proton class of a pyrrole-type NH hydrogen-bonded to an imine-like N of the same molecule.
HBOND_NH_CLASS = "NH_pyrrole_type_H_bonded_N"
#: Largest H···N distance, Å: 2.6 Å, below the 2.75 Å sum of van der Waals radii of H and N
#: (Bondi, J. Phys. Chem. 1964, 68, 441: 1.20 + 1.55 Å; from memory), as in Jeffrey 1997 (from memory).
HBOND_MAX_H_ACCEPTOR_A = 2.6
#: Smallest N–H···N angle, degrees: 100°, the lower bound for weak and bent bonds (Steiner 2002, from memory).
#: The inner NH of free-base porphyrins make 2.3–2.5 Å, 115–120° contacts with both neighbouring imine N.
HBOND_MIN_ANGLE_DEG = 100.0
#: Population share (sum of Boltzmann weights of conformers with the bond) that moves the class.
HBOND_MIN_WEIGHT = 0.5
#: Donor and acceptor N at least this many bonds apart (a bond within one ring is not a hydrogen bond).
_MIN_BONDS_APART = 3


def hbond_weight(coords: np.ndarray, weights: np.ndarray, h: int, donor: int,
                 acceptors: Sequence[int]) -> float:
    """Population share of conformers in which H ``h`` on ``donor`` is hydrogen-bonded to any acceptor.

    Parameters
    ----------
    coords : ndarray, shape (n_conf, n_atoms, 3)
        Å.
    weights : ndarray, shape (n_conf,)
        Conformer weights (summing to 1).
    h, donor : int
        Atom indices of the hydrogen and the atom that carries it.
    acceptors : sequence of int
        Candidate acceptor atoms.

    Returns
    -------
    float
        Sum of the weights of the conformers with H···A ≤ :data:`HBOND_MAX_H_ACCEPTOR_A` and
        D–H···A ≥ :data:`HBOND_MIN_ANGLE_DEG` for at least one acceptor (0 when there is none).
    """
    acc = [int(a) for a in acceptors]
    if not acc:
        return 0.0
    x = np.asarray(coords, dtype=float)
    w = np.asarray(weights, dtype=float)
    to_acc = x[:, acc, :] - x[:, [h], :]                      # (n_conf, n_acc, 3)
    to_donor = x[:, [donor], :] - x[:, [h], :]                # (n_conf, 1, 3)
    dist = np.linalg.norm(to_acc, axis=2)
    cos = np.sum(to_acc * to_donor, axis=2) / (dist * np.linalg.norm(to_donor, axis=2))
    angle = np.degrees(np.arccos(np.clip(cos, -1.0, 1.0)))
    bonded = np.any((dist <= HBOND_MAX_H_ACCEPTOR_A) & (angle >= HBOND_MIN_ANGLE_DEG), axis=1)
    return float(np.sum(w[bonded]))


def _is_acceptor_n(atom) -> bool:
    """Imine-like N without H and without positive charge: the lone pair of a pyridine-type N."""
    if atom.GetAtomicNum() != 7 or atom.GetFormalCharge() > 0 or atom.GetTotalNumHs(includeNeighbors=True):
        return False
    if any(b.GetBondType() == Chem.BondType.DOUBLE for b in atom.GetBonds()):
        return True
    return atom.GetIsAromatic() and atom.GetTotalDegree() == 2


def refine_nh_classes(mol, classes: Mapping[int, str], coords: np.ndarray, weights: np.ndarray,
                      *, from_class: str = "NH_pyrrole_type") -> dict[int, str]:
    """``classes`` with hydrogen-bonded pyrrole-type NH moved to :data:`HBOND_NH_CLASS`.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        With explicit H atoms.
    classes : mapping H atom index -> proton class
        From :func:`ringshift.shifts.classes.classify_hydrogens`.
    coords : ndarray, shape (n_conf, n_atoms, 3)
        Å.
    weights : ndarray, shape (n_conf,)

    Returns
    -------
    dict[int, str]
        The same keys in the same order; only ``from_class`` entries can change.
    """
    out = dict(classes)
    candidates = [h for h, c in out.items() if c == from_class]
    if not candidates:
        return out
    acceptors = [a.GetIdx() for a in mol.GetAtoms() if _is_acceptor_n(a)]
    if not acceptors:
        return out
    dm = Chem.GetDistanceMatrix(mol)
    for h in candidates:
        nbrs = mol.GetAtomWithIdx(h).GetNeighbors()
        if len(nbrs) != 1:
            continue
        donor = nbrs[0].GetIdx()
        far = [a for a in acceptors if dm[donor, a] >= _MIN_BONDS_APART]
        if hbond_weight(coords, weights, h, donor, far) >= HBOND_MIN_WEIGHT:
            out[h] = HBOND_NH_CLASS
    return out
