"""Hydrogen isotopes: ²H and ³H are not ¹H in predictions, H groups or comparisons.

Outside references: a ¹H spectrum shows no ²H/³H signal (common practice, no source); the ¹H classes of the
partly deuterated benzenes follow from RDKit's CanonicalRankAtoms(breakTies=False) on the labelled molecule.
"""

from __future__ import annotations

import pytest
from rdkit import Chem

import ringshift as rs
from ringshift.errors import InputError

ISOTOPES = [
    # (id, SMILES, ¹H count, non-¹H hydrogens)
    ("c6d6", "[2H]c1c([2H])c([2H])c([2H])c([2H])c1[2H]", 0, 6),
    ("c6h5d", "[2H]c1ccccc1", 5, 1),
    ("c6h5t", "[3H]c1ccccc1", 5, 1),
    ("p-c6h4d2", "[2H]c1ccc([2H])cc1", 4, 2),
    ("explicit-1h", "[1H]c1ccccc1", 6, 0),
    ("c6h6", "c1ccccc1", 6, 0),
]


def _h_classes(smiles: str) -> int:
    """Number of ¹H classes from RDKit's symmetry ranks (isotopes distinguish atoms in the ranking)."""
    m = Chem.AddHs(Chem.MolFromSmiles(smiles))
    for a in m.GetAtoms():
        if a.GetIsotope() == 1:   # an explicit ¹H label is plain hydrogen
            a.SetIsotope(0)
    ranks = list(Chem.CanonicalRankAtoms(m, breakTies=False))
    return len({ranks[a.GetIdx()] for a in m.GetAtoms() if a.GetAtomicNum() == 1 and a.GetIsotope() in (0, 1)})


@pytest.mark.parametrize("smiles,n_1h,n_other", [c[1:] for c in ISOTOPES], ids=[c[0] for c in ISOTOPES])
def test_only_1h_are_protons(smiles, n_1h, n_other):
    pred = rs.predict(smiles, conformers=1, seed=1)
    assert len(pred.protons) == n_1h
    assert sum(g.n_h for g in pred.groups) == n_1h
    assert len(pred.groups) == _h_classes(smiles)
    assert all(pred.structure.mol.GetAtomWithIdx(p.index).GetIsotope() in (0, 1) for p in pred.protons)
    said = [w for w in pred.warnings if "not ¹H" in w or "no ¹H" in w]
    assert bool(said) == (n_other > 0)
    if n_1h == 0:
        assert said[0].startswith("the molecule has no ¹H")


def test_compare_without_1h_says_so(tmp_path):
    peaks = tmp_path / "peaks.csv"
    peaks.write_text("shift_ppm,integral\n7.27,1\n")   # invented peak list
    with pytest.raises(InputError, match="no ¹H"):
        rs.compare("[2H]c1c([2H])c([2H])c([2H])c([2H])c1[2H]", str(peaks))


def test_compare_partly_deuterated_assigns_only_1h(tmp_path):
    peaks = tmp_path / "peaks.csv"
    peaks.write_text("shift_ppm,integral\n7.30,5\n")   # invented: one line for the five ¹H
    res = rs.compare("[2H]c1ccccc1", str(peaks))
    assigned = {h for g in res.prediction.groups for h in g.atoms}
    mol = res.prediction.structure.mol
    assert len(assigned) == 5 and all(mol.GetAtomWithIdx(h).GetIsotope() == 0 for h in assigned)


def test_xyz_deuterium_symbol_is_explained(tmp_path):
    path = tmp_path / "d2.xyz"
    path.write_text("2\ninvented\nD 0 0 0\nD 0 0 0.74\n")
    with pytest.raises(InputError, match="XYZ carries no isotopes"):
        rs.load_structure(str(path))
