"""H–H neighbours through bonds and ³J patterns (ringshift.comparison.couplings).

Outside references: RDKit's topological distance matrix (``Chem.GetDistanceMatrix``) for the bond counts,
RDKit's ``rdMolTransforms.GetDihedralDeg`` for the dihedral kernel, the E/Z marks of SMILES (IUPAC definition of
E and Z) for cis/trans, and published ³J ranges and the Karplus relation for the coupling categories.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from numpy.testing import assert_allclose
from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms

from ringshift.comparison.couplings import (
    J_RANGES_HZ,
    Partner,
    bond_distances,
    categories_of_coupling,
    couplings_consistent,
    dihedral_deg,
    group_bond_masks,
    karplus_hz,
    mol_bond_distances,
    vicinal_partners,
)


def embedded(smiles: str, seed: int = 7):
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    assert AllChem.EmbedMolecule(mol, randomSeed=seed) == 0
    return mol


MOLECULES = {
    "toluene": "Cc1ccccc1",
    "styrene": "C=Cc1ccccc1",
    "naphthalene": "c1ccc2ccccc2c1",
    "1,6-methano[10]annulene": "C1=CC2=CC=CC(=C1)C2",
    "cyclooctatetraene": "C1=CC=CC=CC=C1",
    "salt (two fragments)": "C[NH3+].[Cl-]",
}


@pytest.mark.parametrize("smiles", MOLECULES.values(), ids=MOLECULES.keys())
def test_bond_distances_match_rdkit_distance_matrix(smiles):
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    ours = mol_bond_distances(mol)
    ref = Chem.GetDistanceMatrix(mol)          # RDKit: topological distance, 1e8 between fragments
    expected = np.where(ref > 1e6, -1, ref).astype(int)
    np.testing.assert_array_equal(ours, expected)


def test_bond_distances_of_an_empty_and_a_single_atom_graph():
    assert bond_distances(0, np.zeros((0, 2))).shape == (0, 0)
    np.testing.assert_array_equal(bond_distances(1, np.zeros((0, 2))), [[0]])


def _h_groups_by_symmetry(mol):
    """Equivalent-H groups from RDKit's canonical ranks (graph symmetry; enough for these rigid aromatics)."""
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    groups: dict[int, list[int]] = {}
    for a in mol.GetAtoms():
        if a.GetAtomicNum() == 1:
            groups.setdefault(ranks[a.GetIdx()], []).append(a.GetIdx())
    return [tuple(v) for v in groups.values()]


@pytest.mark.parametrize("smiles", ["Cc1ccccc1", "c1ccc2ccccc2c1", "C=Cc1ccccc1"], ids=["toluene", "naphthalene",
                                                                                        "styrene"])
def test_neighbour_rule_any_member_pair_against_rdkit(smiles):
    """Groups i, j are COSY neighbours when some member pair is 3 or 4 bonds apart (RDKit distance matrix)."""
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    groups = _h_groups_by_symmetry(mol)
    masks = group_bond_masks(mol_bond_distances(mol), groups)
    ref = Chem.GetDistanceMatrix(mol)
    for i, j in itertools.permutations(range(len(groups)), 2):
        dists = {int(ref[a, b]) for a in groups[i] for b in groups[j]}
        ours = (int(masks[i, j]) & ((1 << 3) | (1 << 4))) != 0
        assert ours == bool(dists & {3, 4}), (groups[i], groups[j], dists)


def test_toluene_methyl_reaches_ortho_but_not_meta():
    # H–C(H2)–C1–C2–H(ortho) is 4 bonds; to the meta H it is 5 (counted by hand on the formula)
    mol = Chem.AddHs(Chem.MolFromSmiles("Cc1ccccc1"))
    methyl = tuple(a.GetIdx() for a in mol.GetAtomWithIdx(0).GetNeighbors() if a.GetAtomicNum() == 1)
    ortho = tuple(a.GetIdx() for c in (2, 6) for a in mol.GetAtomWithIdx(c).GetNeighbors() if a.GetAtomicNum() == 1)
    meta = tuple(a.GetIdx() for c in (3, 5) for a in mol.GetAtomWithIdx(c).GetNeighbors() if a.GetAtomicNum() == 1)
    masks = group_bond_masks(mol_bond_distances(mol), [methyl, ortho, meta])
    assert masks[0, 1] == 1 << 4 and masks[0, 2] == 1 << 5
    assert masks[1, 2] & (1 << 3)          # ortho–meta: H–C–C–H


def test_dihedral_kernel_matches_rdkit():
    mol = embedded("C=Cc1ccccc1")
    conf = mol.GetConformer()
    xyz = conf.GetPositions()
    for quad in [(8, 0, 1, 10), (9, 0, 1, 10), (10, 1, 2, 3), (11, 3, 4, 12)]:
        ours = float(dihedral_deg(*(xyz[k] for k in quad)))
        ref = rdMolTransforms.GetDihedralDeg(conf, *quad)
        assert abs((ours - ref + 180.0) % 360.0 - 180.0) < 1e-8     # same angle, modulo 360°


@pytest.mark.parametrize("smiles,category", [("C/C=C/C", "trans"), ("C/C=C\\C", "cis")], ids=["E-but-2-ene",
                                                                                              "Z-but-2-ene"])
def test_cis_trans_partner_follows_the_e_z_mark(smiles, category):
    # IUPAC: in E-but-2-ene the two methyls are on opposite sides, so the two vinyl H are trans (φ ≈ 180°)
    mol = embedded(smiles)
    coords = mol.GetConformer().GetPositions()[None]
    vinyl = [tuple(a.GetIdx() for a in mol.GetAtomWithIdx(c).GetNeighbors() if a.GetAtomicNum() == 1) for c in (1, 2)]
    partners = vicinal_partners(mol, coords, np.ones(1), vinyl)
    assert [p.category for p in partners[0]] == [category] and partners[0][0].group == 1
    assert (partners[0][0].low_hz, partners[0][0].high_hz) == J_RANGES_HZ[category]
    expected_phi = 180.0 if category == "trans" else 0.0
    assert abs(partners[0][0].dihedral_deg - expected_phi) < 10.0       # a planar alkene; 10° covers the embedding


def test_partner_categories_of_a_conjugated_chain_and_an_ethyl_group():
    mol = embedded("C=CC=C")              # buta-1,3-diene: H2–C2–C3–H3 across the central single bond
    coords = mol.GetConformer().GetPositions()[None]
    h2 = tuple(a.GetIdx() for a in mol.GetAtomWithIdx(1).GetNeighbors() if a.GetAtomicNum() == 1)
    h3 = tuple(a.GetIdx() for a in mol.GetAtomWithIdx(2).GetNeighbors() if a.GetAtomicNum() == 1)
    cats = {p.category for p in vicinal_partners(mol, coords, np.ones(1), [h2, h3])[0]}
    assert cats == {"single"}
    mol = embedded("CC")                   # ethane: every H–C–C–H pair through sp3 carbons → Karplus, averaged
    coords = mol.GetConformer().GetPositions()[None]
    left = tuple(range(2, 5))
    right = tuple(range(5, 8))
    (p,) = vicinal_partners(mol, coords, np.ones(1), [left, right])[0]
    # staggered ethane: 2 gauche (60°) + 1 anti (180°) per H → mean J(φ) = (2·4 + 13)/3 = 7 Hz (Karplus 1963)
    assert p.category == "karplus" and p.low_hz + 2.0 == pytest.approx(7.0, abs=0.5)


# ------------------------------------------------------------------------------ Karplus and ranges
def test_karplus_relation_values():
    # J = 7 − cos φ + 5 cos 2φ Hz (Karplus, J. Am. Chem. Soc. 1963, 85, 2870; constants from memory)
    assert_allclose(karplus_hz(np.array([0.0, 60.0, 90.0, 180.0])), [11.0, 4.0, 2.0, 13.0], atol=1e-12)
    # the mean over a free rotation is A = 7 Hz (the mean of cos φ and cos 2φ over a turn is 0); the ³J of an
    # ethyl group is about 7 Hz (Pretsch et al. 2009, ¹H section, from memory)
    phi = np.linspace(-180.0, 180.0, 3601)[:-1]
    assert float(np.mean(karplus_hz(phi))) == pytest.approx(7.0, abs=1e-9)


CLASSIFIED = {
    # ³J across C=C: cis 6–12 Hz, trans 12–18 Hz; across a conjugated single bond 6–9 Hz (Pretsch, Bühlmann &
    # Badertscher, Structure Determination of Organic Compounds, Springer 2009, ¹H section; from memory), each
    # widened by the 1 Hz tolerance
    "trans alkene 17 Hz": (17.0, ("trans",)),
    "trans lower edge 12.5": (12.5, ("trans", "cis")),
    "cis alkene 10.5 Hz": (10.5, ("cis",)),
    "ortho benzene 7.5 Hz": (7.5, ("cis", "single")),
    "above every range": (20.0, ()),
    "below every range": (3.0, ()),
}


@pytest.mark.parametrize("j,expected", CLASSIFIED.values(), ids=CLASSIFIED.keys())
def test_coupling_classification_against_published_ranges(j, expected):
    assert set(categories_of_coupling(j)) == set(expected)


def test_published_ranges_are_the_cited_ones():
    # Pretsch et al. 2009 (from memory): the cis/trans boundary at 12 Hz, trans up to 18 Hz
    assert J_RANGES_HZ["cis"] == (6.0, 12.0) and J_RANGES_HZ["trans"] == (12.0, 18.0)
    assert J_RANGES_HZ["single"] == (6.0, 9.0)


TRANS = Partner(1, "trans", 12.0, 18.0, 180.0)
CIS = Partner(2, "cis", 6.0, 12.0, 0.0)
SINGLE = Partner(3, "single", 6.0, 9.0, 180.0)
CONSISTENCY = {
    "trans and cis seen": ((17.6, 10.9), (TRANS, CIS), True),
    "large J needs a trans partner": ((17.6,), (CIS,), False),
    "trans partner needs a large J": ((10.9,), (TRANS,), False),
    "small couplings are not checked": ((2.1, 1.2), (CIS,), True),
    "no partner for a vicinal J": ((7.5,), (), False),
    "single bond explains 8 Hz": ((8.0,), (SINGLE,), True),
}


@pytest.mark.parametrize("js,partners,ok", CONSISTENCY.values(), ids=CONSISTENCY.keys())
def test_couplings_consistent_rules(js, partners, ok):
    answer, why = couplings_consistent(js, partners)
    assert answer is ok and (why == "") is ok
