"""XYZ files with a metal atom: a metal ion beside its ligand, bonded back to its donors (ringshift.io.molecule_files).

The geometry is SYNTHETIC: free-base porphine embedded and MMFF94-minimised by RDKit, its two N–H protons removed
and a Zn atom put at the centre of the four N — a stand-in for a quantum-chemical zinc porphine geometry.
"""

from __future__ import annotations

import warnings

import pytest
from rdkit import Chem
from rdkit.Chem import AllChem

from ringshift.errors import GeometryWarning
from ringshift.io.structures import load_structure
from ringshift.shifts.prediction import predict

PORPHINE = "c1cc2cc3ccc([nH]3)cc4ccc(n4)cc5ccc([nH]5)cc1n2"


@pytest.fixture(scope="module")
def zinc_porphine_xyz(tmp_path_factory):
    mol = Chem.AddHs(Chem.MolFromSmiles(PORPHINE))
    assert AllChem.EmbedMolecule(mol, randomSeed=7) == 0
    AllChem.MMFFOptimizeMolecule(mol)
    x = mol.GetConformer().GetPositions()
    nh = {a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1 and a.GetNeighbors()[0].GetAtomicNum() == 7}
    n = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 7]
    rows = [f"{a.GetSymbol()} {x[a.GetIdx(), 0]:.6f} {x[a.GetIdx(), 1]:.6f} {x[a.GetIdx(), 2]:.6f}"
            for a in mol.GetAtoms() if a.GetIdx() not in nh]
    zn = x[n].mean(axis=0)
    rows.append(f"Zn {zn[0]:.6f} {zn[1]:.6f} {zn[2]:.6f}")
    path = tmp_path_factory.mktemp("metal") / "zinc_porphine.xyz"
    path.write_text(f"{len(rows)}\nzinc porphine, synthetic test geometry\n" + "\n".join(rows) + "\n")
    return str(path)


def test_zinc_porphine_xyz_is_zinc_two_plus_and_a_porphyrin_dianion_bonded_back(zinc_porphine_xyz):
    # a metalloporphyrin is M(2+) and porphyrinato(2-), written as two covalent M–N bonds and two dative N->M
    # bonds in a connection table: common practice, no source
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", GeometryWarning)
        st = load_structure(zinc_porphine_xyz)
    assert any("Zn+2 beside ligands of net charge -2" in str(w.message) for w in caught)
    zn = [a for a in st.mol.GetAtoms() if a.GetSymbol() == "Zn"][0]
    assert zn.GetFormalCharge() == 0 and zn.GetDegree() == 4
    kinds = sorted(str(b.GetBondType()) for b in zn.GetBonds())
    assert kinds == ["DATIVE", "DATIVE", "SINGLE", "SINGLE"]
    assert all(a.GetFormalCharge() == 0 for a in st.mol.GetAtoms())
    assert Chem.GetFormalCharge(st.mol) == 0
    assert sum(a.GetAtomicNum() == 1 for a in st.mol.GetAtoms()) == 12       # no proton was added or lost


def test_zinc_porphine_xyz_gives_a_diatropic_macrocycle(zinc_porphine_xyz):
    # metalloporphyrins are diatropic 18-pi macrocycles, meso H further downfield than beta H and both far
    # downfield of benzene (zinc porphine about 10.2 and 9.4 ppm; from memory): only the ordering and the sign
    # are checked, the numbers belong to the accuracy benchmark
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", GeometryWarning)
        pred = predict(load_structure(zinc_porphine_xyz))
    macro = [c for c in pred.circuits if len(c.circuit.atoms) == 16]
    assert len(macro) == 1 and macro[0].pi_electrons == 18 and macro[0].current_nA_per_T > 12.0
    groups = sorted(pred.groups, key=lambda g: g.predicted_ppm)
    assert [g.n_h for g in groups] == [8, 4]                     # 8 beta H, then the 4 meso H further downfield
    assert groups[0].predicted_ppm > 7.5 and groups[1].predicted_ppm > groups[0].predicted_ppm
