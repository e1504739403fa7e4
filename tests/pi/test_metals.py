"""Metal complexes: in-plane (σ) bound metals are kept outside the π system with the right electron count;
metals bound to the face of the π system get no current, with the reason.

Sources: the porphyrin main conjugation pathway is the 18π inner [16]annulene-like ring (Gouterman, J. Mol.
Spectrosc. 1961, 6, 138; from memory), with 26 π electrons over the 24 ring atoms of the free base and of the
metal porphyrinate dianion alike (common practice, no source); a dative N→M bond uses the N lone pair (IUPAC
Gold Book, "dative bond"; from memory); η² alkene–metal binding through the π bond (Dewar–Chatt–Duncanson
model; Chatt & Duncanson, J. Chem. Soc. 1953, 2939; from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem

import ringshift as rs
from ringshift.geometry.circuits import find_circuits
from ringshift.pi.perception import METAL_FACE_NOTE, circuit_electrons, perceive_pi

ZN_DATIVE = "C1=CC2=[N]3->[Zn]45<-[N]6=C(C=CC6=CC6=CC=C(C=C13)[N]64)C=C1C=CC(=C2)[N]15"
ZN_IONIC = "[Zn+2].C1=CC2=NC1=CC3=CC=C([N-]3)C=C4C=CC(=N4)C=C5C=CC(=C2)[N-]5"
PORPHINE = "C1=CC2=NC1=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=C2)N5"

COUNTS = [
    # (id, SMILES, total π electrons, π electrons of the inner 16-ring, π atoms)
    ("zn-porphyrin-dative", ZN_DATIVE, 26, 18, 24),
    ("zn-porphyrin-ionic", ZN_IONIC, 26, 18, 24),
    ("free-base-porphine", PORPHINE, 26, 18, 24),
]


def _mol(smiles):
    return Chem.AddHs(Chem.MolFromSmiles(smiles))


@pytest.mark.parametrize("smiles,total,inner,n_atoms", [c[1:] for c in COUNTS], ids=[c[0] for c in COUNTS])
def test_metal_porphyrin_counts_the_macrocycle_like_the_free_base(smiles, total, inner, n_atoms):
    m = _mol(smiles)
    pi = perceive_pi(m)
    assert len(pi.atoms) == n_atoms and pi.n_electrons == total
    assert not any(m.GetAtomWithIdx(a).GetSymbol() == "Zn" for a in pi.atoms)   # the metal is outside
    assert not pi.face_on_metals
    (macro,) = [c for c in find_circuits(m, pi.atoms, pi.bonds) if c.size == 16]
    assert circuit_electrons(pi, macro.atoms, m) == inner


def test_zn_porphyrin_main_pathway_is_diatropic():
    # 18π (4n+2) main pathway: diatropic (Hückel rule; porphyrins are aromatic, Gouterman 1961, from memory);
    # before the dative-bond fix the same input had a 20π inner ring and a paratropic current
    pred = rs.predict(ZN_DATIVE, conformers=1, seed=11)
    (macro,) = [c for c in pred.circuits if c.circuit.size == 16]
    assert macro.pi_electrons == 18 and macro.huckel_class == "4n+2"
    assert macro.current_nA_per_T is not None and macro.current_nA_per_T > 0
    assert any("kept outside the π system" in w for w in pred.warnings)


IN_PLANE = [
    # (id, SMILES, π electrons): 2,2'-bipyridine keeps its 12 π electrons when chelating
    ("zn-bipyridine", "c1ccc2n(c1)->[Zn+2]<-n1ccccc1-2", 12),
    ("free-bipyridine", "c1ccc(nc1)-c1ccccn1", 12),
]


@pytest.mark.parametrize("smiles,total", [c[1:] for c in IN_PLANE], ids=[c[0] for c in IN_PLANE])
def test_in_plane_chelate_keeps_ligand_count(smiles, total):
    pi = perceive_pi(_mol(smiles))
    assert pi.n_electrons == total and not pi.face_on_metals


FACE_ON = [
    # (id, SMILES): metal bonded to two bonded atoms (η²) of the π system
    ("eta2-ethylene-platinum", "C1=C[Pt]1"),
    ("eta2-styrene-platinum", "C1(c2ccccc2)=C[Pt]1"),
]


@pytest.mark.parametrize("smiles", [c[1] for c in FACE_ON], ids=[c[0] for c in FACE_ON])
def test_face_on_metal_gets_no_current(smiles):
    pred = rs.predict(smiles, conformers=1, seed=3)
    assert pred.pi.face_on_metals
    assert all(c.current_nA_per_T is None for c in pred.circuits)
    assert all(c.current_source.startswith("none: " + METAL_FACE_NOTE) for c in pred.circuits)
    assert any(w.startswith(METAL_FACE_NOTE) for w in pred.warnings)


GEOMETRY = [
    # (id, where the metal sits relative to the pyridine N: in the ring plane along the N lone pair, or on the
    # ring normal above the N, i.e. along its p axis); 2.0 Å Zn–N (common practice, no source)
    ("in-plane-sigma", "plane", False),
    ("on-p-axis", "normal", True),
]


@pytest.mark.parametrize("where,face_on", [c[1:] for c in GEOMETRY], ids=[c[0] for c in GEOMETRY])
def test_metal_bond_direction_decides(where, face_on):
    from rdkit.Chem import AllChem

    m = Chem.AddHs(Chem.MolFromSmiles("c1ccncc1"))
    AllChem.Compute2DCoords(m)               # a flat pyridine (z = 0)
    xyz = m.GetConformer().GetPositions()
    rw = Chem.RWMol(m)
    zn = rw.AddAtom(Chem.Atom(30))
    n_idx = next(a.GetIdx() for a in m.GetAtoms() if a.GetSymbol() == "N")
    rw.AddBond(n_idx, zn, Chem.BondType.DATIVE)
    mol = rw.GetMol()
    Chem.SanitizeMol(mol)
    ring = [a.GetIdx() for a in m.GetAtoms() if a.GetAtomicNum() > 1]
    out = (xyz[n_idx] - xyz[ring].mean(axis=0))
    out /= (out ** 2).sum() ** 0.5
    direction = out if where == "plane" else np.array([0.0, 0.0, 1.0])
    coords = np.vstack([xyz, xyz[n_idx] + 2.0 * direction])
    pi = perceive_pi(mol, coords)
    assert pi.n_electrons == 6                      # pyridine keeps its sextet either way
    assert (pi.face_on_metals == (zn,)) == face_on
