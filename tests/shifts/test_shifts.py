"""Tests of ringshift.shifts.reference: proton classes, the ring-current-free reference table, assembly."""

from __future__ import annotations

import csv
import io
import re
from collections import Counter
from importlib import resources

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from rdkit import Chem
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

from ringshift.errors import InputError
from ringshift.shifts.classes import FALLBACK_CLASS, classify_hydrogens
from ringshift.shifts.reference import (
    CSV_COLUMNS,
    ReferenceTable,
    assemble_prediction,
    load_reference_table,
    reference_arrays,
    reference_shifts,
)

# 1,6-methano[10]annulene = bicyclo[4.4.1]undeca-1,3,5,7,9-pentaene: C11 bridges C1 and C6.
METHANO10 = "C1C2=CC=CC=C1C=CC=C2"
PORPHINE = "C1=CC2=NC1=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=C2)N5"
PARACYCLOPHANE = "C1Cc2ccc(cc2)CCc2ccc1cc2"
# trans-15,16-dimethyl-15,16-dihydropyrene (stereo not needed for classification).
DIMETHYLDIHYDROPYRENE = "CC12C=3C=CC(C24C)=CC=CC4=CC=C1C=CC3"


def molh(smiles: str) -> Chem.Mol:
    mol = Chem.MolFromSmiles(smiles)
    assert mol is not None, smiles
    return Chem.AddHs(mol)


def class_counts(smiles: str) -> Counter:
    return Counter(classify_hydrogens(molh(smiles)).values())


def h_on(mol: Chem.Mol, smarts: str) -> set[int]:
    """H atom indices matched as the first atom of a SMARTS (RDKit substructure search)."""
    patt = Chem.MolFromSmarts(smarts)
    return {match[0] for match in mol.GetSubstructMatches(patt)}


@pytest.fixture(scope="module")
def table() -> ReferenceTable:
    return load_reference_table()


# --------------------------------------------------------------------------------------------------
# Classification of whole molecules. Expected H counts are the molecular formulas (textbook
# structures, common practice, no source); the class of each H follows the documented rules.
# --------------------------------------------------------------------------------------------------

WHOLE_MOLECULES = [
    ("benzene", "c1ccccc1", {"sp2_CH_aromatic_type": 6}),
    ("toluene", "Cc1ccccc1", {"sp3_CH3_on_pi": 3, "sp2_CH_aromatic_type": 5}),
    ("pyridine", "c1ccncc1", {"sp2_CH_alpha_N_pyridine_type": 2, "sp2_CH_aromatic_type": 3}),
    ("pyrrole", "c1cc[nH]c1",
     {"NH_pyrrole_type": 1, "sp2_CH_alpha_N_pyrrole_type": 2, "sp2_CH_aromatic_type": 2}),
    ("cyclohexane", "C1CCCCC1", {"sp3_CH2_alkyl": 12}),
    ("ethanol", "CCO", {"sp3_CH3_alkyl": 3, "sp3_CH2_on_O": 2, "OH_alcohol": 1}),
    ("acetaldehyde", "CC=O", {"sp3_CH3_on_CO": 3, "CHO_aldehyde": 1}),
    ("methano10annulene", METHANO10, {"sp2_CH_ring_conjugated": 8, "bridge_CH2_over_pi": 2}),
    ("paracyclophane", PARACYCLOPHANE, {"sp3_CH2_on_pi": 8, "sp2_CH_aromatic_type": 8}),
    ("cyclooctatetraene", "C1=CC=CC=CC=C1", {"sp2_CH_ring_conjugated": 8}),
    ("dimethyldihydropyrene", DIMETHYLDIHYDROPYRENE,
     {"sp2_CH_ring_conjugated": 10, "sp3_CH3_beta_to_pi": 6}),
]


@pytest.mark.parametrize("smiles, expected", [w[1:] for w in WHOLE_MOLECULES],
                         ids=[w[0] for w in WHOLE_MOLECULES])
def test_whole_molecule_classes(smiles, expected):
    counts = class_counts(smiles)
    assert dict(counts) == expected
    # Number of H equals the molecular formula's H count (RDKit formula, reference library).
    formula = CalcMolFormula(Chem.MolFromSmiles(smiles))
    n_h = sum(expected.values())
    assert re.search(rf"H{n_h}(?!\d)", formula), formula


def test_toluene_methyl_versus_ring_by_substructure():
    mol = molh("Cc1ccccc1")
    classes = classify_hydrogens(mol)
    methyl_h = h_on(mol, "[#1][CX4]")  # RDKit SMARTS: H on sp3 carbon
    ring_h = h_on(mol, "[#1]c")  # H on an aromatic carbon
    assert len(methyl_h) == 3 and len(ring_h) == 5  # toluene C7H8 (textbook structure)
    assert {classes[i] for i in methyl_h} == {"sp3_CH3_on_pi"}
    assert {classes[i] for i in ring_h} == {"sp2_CH_aromatic_type"}


def test_pyrrole_alpha_beta_and_nh():
    mol = molh("c1cc[nH]c1")
    classes = classify_hydrogens(mol)
    alpha = h_on(mol, "[#1]c[nH]")  # α-CH: carbon bonded to N (RDKit SMARTS)
    beta = h_on(mol, "[#1]c(c[nH])")  # β-CH: carbon two bonds from N
    beta -= alpha
    nh = h_on(mol, "[#1][nH]")
    assert (len(alpha), len(beta), len(nh)) == (2, 2, 1)  # pyrrole C4H5N (textbook structure)
    assert {classes[i] for i in alpha} == {"sp2_CH_alpha_N_pyrrole_type"}
    assert {classes[i] for i in beta} == {"sp2_CH_aromatic_type"}
    assert {classes[i] for i in nh} == {"NH_pyrrole_type"}


def test_pyridine_alpha_is_imine_type():
    mol = molh("c1ccncc1")
    classes = classify_hydrogens(mol)
    alpha = h_on(mol, "[#1]cn")
    assert len(alpha) == 2  # pyridine has two α-CH (textbook structure)
    assert {classes[i] for i in alpha} == {"sp2_CH_alpha_N_pyridine_type"}
    assert {classes[i] for i in set(classes) - alpha} == {"sp2_CH_aromatic_type"}


def test_methano10annulene_smiles_and_bridge():
    mol = Chem.MolFromSmiles(METHANO10)
    # bicyclo[4.4.1]undeca-1,3,5,7,9-pentaene is C11H10 with ten sp2 C and one sp3 C (IUPAC name).
    assert CalcMolFormula(mol) == "C11H10"
    sp2 = [a.GetIdx() for a in mol.GetAtoms()
           if a.GetHybridization() == Chem.HybridizationType.SP2]
    sp3 = [a.GetIdx() for a in mol.GetAtoms()
           if a.GetHybridization() == Chem.HybridizationType.SP3]
    assert len(sp2) == 10 and len(sp3) == 1
    bridge = mol.GetAtomWithIdx(sp3[0])
    heads = [nb.GetIdx() for nb in bridge.GetNeighbors()]
    # RDKit: the bridge CH2 is bonded to two sp2 (π) atoms.
    assert len(heads) == 2 and all(h in sp2 for h in heads)
    # Without the bridge the ten sp2 atoms form one 10-membered ring and the bridgeheads are
    # positions 1 and 6 of it (five bonds apart both ways) - RDKit ring perception and paths.
    rw = Chem.RWMol(mol)
    rw.RemoveAtom(sp3[0])
    perimeter = rw.GetMol()
    Chem.SanitizeMol(perimeter)
    ring_sizes = [len(r) for r in perimeter.GetRingInfo().AtomRings()]
    assert ring_sizes == [10]
    new = [h if h < sp3[0] else h - 1 for h in heads]
    assert len(Chem.GetShortestPath(perimeter, new[0], new[1])) - 1 == 5
    # and the classifier calls exactly its two bridge H "bridge_CH2_over_pi".
    molh_ = Chem.AddHs(mol)
    classes = classify_hydrogens(molh_)
    bridge_h = {nb.GetIdx() for nb in molh_.GetAtomWithIdx(sp3[0]).GetNeighbors()
                if nb.GetAtomicNum() == 1}
    assert {i for i, c in classes.items() if c == "bridge_CH2_over_pi"} == bridge_h


def test_porphine_inner_nh_meso_beta(table):
    mol = molh(PORPHINE)
    assert CalcMolFormula(Chem.RemoveHs(mol)) == "C20H14N4"  # porphine (textbook formula)
    classes = classify_hydrogens(mol)
    nh = h_on(mol, "[#1][#7]")
    meso = h_on(mol, "[#1][#6]([#6][#7])[#6][#7]")  # CH between two α-carbons
    beta = set(classes) - nh - meso
    assert (len(nh), len(meso), len(beta)) == (2, 4, 8)  # 2 inner NH, 4 meso, 8 β (textbook)
    assert {classes[i] for i in nh} == {"NH_pyrrole_type"}
    assert {classes[i] for i in meso} == {"sp2_CH_aromatic_type"}
    # RDKit aromatises only part of the macrocycle, so β-CH fall in two classes ...
    beta_classes = {classes[i] for i in beta}
    assert beta_classes <= {"sp2_CH_aromatic_type", "sp2_CH_ring_conjugated"}
    # ... which share one reference by design, so all β-H get the same value.
    refs = reference_shifts(mol, table)
    assert len({refs[i].ref_ppm for i in beta}) == 1


def test_porphyrin_dication_nh_all_pyrrole_type():
    # Protonated porphine (4 inner NH, the 2+ ion): the four NH are equivalent by resonance
    # (textbook), so they must share a class.
    dication = "C1=CC2=[NH+]C1=CC3=CC=C(N3)C=C4C=CC(=[NH+]4)C=C5C=CC(=C2)N5"
    mol = molh(dication)
    classes = classify_hydrogens(mol)
    assert [classes[i] for i in sorted(h_on(mol, "[#1][#7]"))] == ["NH_pyrrole_type"] * 4


def test_paracyclophane_bridges_are_on_pi_not_over_circuit():
    # [2.2]paracyclophane: each bridge CH2 is bonded to one ring carbon and one CH2 (RDKit check
    # below), so it is a benzylic CH2, not a CH2 spanning a π circuit.
    mol = molh(PARACYCLOPHANE)
    classes = classify_hydrogens(mol)
    for atom in mol.GetAtoms():
        if atom.GetAtomicNum() == 6 and atom.GetHybridization() == Chem.HybridizationType.SP3:
            heavy = [nb for nb in atom.GetNeighbors() if nb.GetAtomicNum() == 6]
            assert sorted(nb.GetIsAromatic() for nb in heavy) == [False, True]
            hs = [nb.GetIdx() for nb in atom.GetNeighbors() if nb.GetAtomicNum() == 1]
            assert {classes[h] for h in hs} == {"sp3_CH2_on_pi"}


@pytest.mark.parametrize(
    "smiles, expected",
    [
        ("C1=CC=CCC=C1", "sp3_CH2_between_pi"),  # cycloheptatriene: π atoms form a chain only
        ("C1=CCC=CC1", "sp3_CH2_between_pi"),  # 1,4-cyclohexadiene: two separate C=C
        ("c1ccc2c(c1)Cc1ccccc1-2", "sp3_CH2_between_pi"),  # fluorene: rings joined by one bond
    ],
    ids=["cycloheptatriene", "1,4-cyclohexadiene", "fluorene"],
)
def test_doubly_allylic_ch2_without_common_circuit(smiles, expected):
    # These CH2 have two π neighbours, but no cycle of π atoms passes through both
    # (graph structure of the textbook formulas), so they are not bridges over a circuit.
    counts = class_counts(smiles)
    assert counts[expected] >= 2 and "bridge_CH2_over_pi" not in counts


# --------------------------------------------------------------------------------------------------
# Every packaged class is reachable.
# --------------------------------------------------------------------------------------------------

CATALOGUE = {
    "benzene": "c1ccccc1", "cyclooctatetraene": "C1=CC=CC=CC=C1",
    "(E)-hexatriene": "C=C/C=C/C=C", "(Z)-2-butene": "C/C=C\\C", "pyridine": "c1ccncc1",
    "pyrrole": "c1cc[nH]c1", "furan": "c1ccoc1", "thiophene": "c1ccsc1", "acetaldehyde": "CC=O",
    "methyl formate": "COC=O", "propyne": "CC#C", "vinylacetylene": "C=CC#C",
    "1-butene": "C=CCC", "3-methyl-1-butene": "C=CC(C)C", "1,4-pentadiene": "C=CCC=C",
    "methano10annulene": METHANO10, "isobutane": "CC(C)C", "methanol": "CO",
    "methyl acetate": "COC(C)=O", "2-propanol": "CC(C)O", "dimethylamine": "CNC",
    "N-methylacetamide": "CNC(C)=O", "isopropylamine": "CC(C)N", "butanone": "CCC(C)=O",
    "3-methyl-2-butanone": "CC(C)C(C)=O", "aniline": "Nc1ccccc1", "ethanol": "CCO",
    "phenol": "Oc1ccccc1", "acetic acid": "CC(=O)O", "methane": "C", "ethylamine": "CCN",
    "cyclohexane": "C1CCCCC1",
}


def test_every_packaged_class_is_reachable(table):
    produced = set()
    for smiles in CATALOGUE.values():
        produced |= set(class_counts(smiles))
    # The hydrogen-bonded NH class is assigned from 3D geometry (ringshift.shifts.hbonds), not from the
    # graph: tests/shifts/test_hbonds.py reaches it.
    assert produced | {"NH_pyrrole_type_H_bonded_N"} == set(table.classes)


@pytest.mark.parametrize(
    "smiles, h_smarts, expected",
    [
        ("CCC(C)=O", "[#1][CH2]", "sp3_CH2_on_CO"),  # butanone CH2
        ("CC(C)C(C)=O", "[#1][CH1]", "sp3_CH_on_CO"),  # 3-methyl-2-butanone CH
        ("C=CC(C)C", "[#1][CX4H1]", "sp3_CH_on_pi"),  # allylic methine
        ("CNC", "[#1][NH]", "NH_amine"),  # dimethylamine NH
        ("CNC", "[#1][CH3]", "sp3_CH3_on_N"),  # trimethylamine-like N-CH3
        ("CNC(C)=O", "[#1][CH3][NH]", "sp3_CH3_on_N_pi"),  # amide N-CH3
        ("CC(C)N", "[#1][CH1]N", "sp3_CH_on_N"),
        ("CCN", "[#1][CH2]N", "sp3_CH2_on_N"),
        ("CO", "[#1][CH3]", "sp3_CH3_on_O"),
        ("CC(C)O", "[#1][CH1]O", "sp3_CH_on_O"),
        ("C/C=C\\C", "[#1][CH1]=*", "sp2_CH_alkene"),
        ("C=CCC=C", "[#1][CH2]([CX3])[CX3]", "sp3_CH2_between_pi"),
        ("C=CC#C", "[#1]C#C", "sp_CH_alkyne_conjugated"),
        ("CC#C", "[#1]C#C", "sp_CH_alkyne"),
        ("COC=O", "[#1]C=O", "CHO_formyl_heteroatom"),
        ("CCC=C", "[#1][CH2]=C", "sp2_CH2_terminal"),
        ("CCC=C", "[#1][CH3]", "sp3_CH3_beta_to_pi"),  # 1-butene CH3 (homoallylic)
        ("CC(C)(C)c1ccccc1", "[#1][CH3]", "sp3_CH3_beta_to_pi"),  # tert-butylbenzene CH3
    ],
    ids=["CH2_on_CO", "CH_on_CO", "CH_on_pi", "NH_amine", "CH3_on_N", "CH3_on_N_pi", "CH_on_N",
         "CH2_on_N", "CH3_on_O", "CH_on_O", "alkene", "between_pi", "alkyne_conj", "alkyne",
         "formyl", "terminal_CH2", "CH3_beta_to_pi", "tBu_on_arene"],
)
def test_specific_hydrogens(smiles, h_smarts, expected):
    # Each H picked by an RDKit SMARTS gets the class the documented rules give it.
    mol = molh(smiles)
    hs = h_on(mol, h_smarts)
    assert hs
    classes = classify_hydrogens(mol, sorted(hs))
    assert set(classes.values()) == {expected}


# --------------------------------------------------------------------------------------------------
# Packaged values against handbook ranges of the model compounds (all from memory).
# --------------------------------------------------------------------------------------------------

HANDBOOK_RANGES = [
    # Ring-current-free conjugated-ring CH: (E)-1,3,5-hexatriene inner CH 6.1-6.4 and
    # 1,3-cyclohexadiene 5.8-5.9 bracket it; 5.5-6.5 allows for COT 5.75 (Pretsch et al., from memory).
    ("sp2_CH_ring_conjugated", 5.5, 6.5),
    ("sp2_CH_aromatic_type", 5.5, 6.5),
    ("sp2_CH_polyene", 6.0, 6.5),  # hexatriene inner 6.1-6.4, butadiene inner 6.3 (from memory)
    ("sp2_CH_alkene", 5.3, 5.7),  # 2-butenes 5.45-5.5, cyclohexene 5.67 (from memory)
    ("sp2_CH2_terminal", 4.8, 5.3),  # butadiene/propene =CH2 4.9-5.2 (from memory)
    ("sp2_CH_alpha_N_pyridine_type", 7.5, 8.2),  # aldimines CH=N 7.5-8.2 (Pretsch, from memory)
    ("sp2_CH_alpha_N_pyrrole_type", 5.8, 6.4),  # enamine N-CH= (from memory)
    ("sp2_CH_alpha_O_furan_type", 6.1, 6.5),  # enol ethers O-CH= 6.2-6.45 (from memory)
    ("sp2_CH_alpha_S_thiophene_type", 6.0, 6.5),  # vinyl sulfides (from memory)
    ("CHO_aldehyde", 9.4, 9.9),  # acetaldehyde 9.79, crotonaldehyde 9.5 (from memory)
    ("CHO_formyl_heteroatom", 7.9, 8.2),  # methyl formate 8.05, DMF 8.02 (from memory)
    ("sp_CH_alkyne", 1.7, 2.1),  # propyne 1.8, 1-hexyne 1.94 (from memory)
    ("sp3_CH3_on_pi", 1.6, 1.85),  # allylic CH3 ~1.7 (2-methylpropene 1.71, from memory)
    ("sp3_CH2_on_pi", 1.9, 2.3),  # allylic CH2 2.0-2.3 (from memory)
    ("sp3_CH2_between_pi", 2.6, 2.9),  # 1,4-pentadiene 2.8, 1,4-cyclohexadiene 2.67 (from memory)
    ("bridge_CH2_over_pi", 2.0, 2.8),  # cycloheptatriene 2.2 .. 1,4-cyclohexadiene 2.7 (from memory)
    ("sp3_CH3_alkyl", 0.8, 1.0),  # ethane 0.86, propane 0.91 (Silverstein & Webster, from memory)
    ("sp3_CH3_beta_to_pi", 0.95, 1.1),  # 1-butene CH3 1.00, 3,3-dimethyl-1-butene 1.01 (Pretsch, from memory)
    ("sp3_CH2_alkyl", 1.2, 1.45),  # propane CH2 1.33, cyclohexane 1.43 (from memory)
    ("sp3_CH3_on_O", 3.2, 3.5),  # dimethyl ether 3.24, methanol 3.43 (from memory)
    ("sp3_CH3_on_CO", 2.0, 2.2),  # acetone 2.17, acetic acid 2.10 (from memory)
    ("OH_carboxylic_acid", 10.0, 13.0),  # carboxylic acids 10-13 (from memory)
]


@pytest.mark.parametrize("proton_class, lo, hi", HANDBOOK_RANGES,
                         ids=[r[0] for r in HANDBOOK_RANGES])
def test_packaged_values_in_handbook_ranges(table, proton_class, lo, hi):
    assert lo <= table[proton_class].ref_ppm <= hi


def test_benzene_ring_current_shift_against_olefinic_reference(table):
    # Benzene 7.27 ppm in CDCl3 (handbook, from memory); the classical ring-current shift of
    # benzene against an olefinic reference is about 1.5 ppm, so 1.0-1.8 ppm.
    shift = 7.27 - table["sp2_CH_ring_conjugated"].ref_ppm
    assert 1.0 <= shift <= 1.8


def test_aromatic_type_shares_the_olefinic_reference(table):
    # Design choice documented in the CSV header: aromatic-type CH are referenced to the
    # olefinic conjugated-ring value, the ring-current term supplies the aromatic part.
    a, b = table["sp2_CH_aromatic_type"], table["sp2_CH_ring_conjugated"]
    assert (a.ref_ppm, a.sd_ppm) == (b.ref_ppm, b.sd_ppm)


OBSERVED_SIGNS = [
    # (name, SMILES, H SMARTS, observed δ in CDCl3 (from memory), expected sign of δ_obs − δ_ref)
    # Outside protons of a diatropic ring are deshielded (Δδ_rc > 0, Pople 1956; design notes);
    # the bound 2.0 is the benzene-like size of that shift, a little above its 1.3-1.5 ppm.
    ("benzene", "c1ccccc1", "[#1]c", 7.27, +1),
    ("pyridine_alpha", "c1ccncc1", "[#1]cn", 8.60, +1),
    ("pyridine_beta", "c1ccncc1", "[#1]ccn", 7.25, +1),
    ("pyrrole_alpha", "c1cc[nH]c1", "[#1]c[nH]", 6.70, +1),
    ("furan_alpha", "c1ccoc1", "[#1]co", 7.42, +1),
    ("thiophene_alpha", "c1ccsc1", "[#1]cs", 7.33, +1),
    ("toluene_CH3", "Cc1ccccc1", "[#1][CH3]", 2.35, +1),
    ("ethylbenzene_CH2", "CCc1ccccc1", "[#1][CH2]", 2.63, +1),
    # Protons held over or inside a diatropic ring are shielded: the methano[10]annulene bridge
    # (about −0.5, Vogel, from memory) and the porphine inner NH (about −3.8, from memory).
    ("methano10_bridge", METHANO10, "[#1][CH2]", -0.5, -1),
    ("porphine_NH", PORPHINE, "[#1][#7]", -3.76, -1),
]


@pytest.mark.parametrize("smiles, h_smarts, observed, sign", [o[1:] for o in OBSERVED_SIGNS],
                         ids=[o[0] for o in OBSERVED_SIGNS])
def test_reference_gives_ring_current_residual_of_the_right_sign(table, smiles, h_smarts,
                                                                  observed, sign):
    mol = molh(smiles)
    hs = sorted(h_on(mol, h_smarts))
    refs = reference_shifts(mol, table, hs)
    residual = np.array([observed - refs[i].ref_ppm for i in hs])
    if sign > 0:
        assert np.all((residual > 0.0) & (residual < 2.0))
    else:
        assert np.all(residual < 0.0)


def test_benzene_prediction_from_johnson_bovey_value(table):
    # Johnson-Bovey double loop for benzene (J = 12 nA/T, a = 1.39 A, ±0.64 A) gives
    # σ_iso ≈ −1.32 ppm at the ring H (design notes check value; Johnson & Bovey 1958), so
    # Δδ_rc = +1.32. Reference + ring current + no charge must land near the observed 7.27 ppm
    # (CDCl3, from memory); 0.15 ppm is half the class spread.
    mol = molh("c1ccccc1")
    arrays = reference_arrays(mol, table=table)
    n = arrays.ref_ppm.shape[0]
    pred = assemble_prediction(arrays.ref_ppm, np.full(n, 1.32), np.zeros(n))
    assert_allclose(pred, 7.27, atol=0.15)


# --------------------------------------------------------------------------------------------------
# Table loading and user overrides
# --------------------------------------------------------------------------------------------------


def test_packaged_csv_is_package_data(table):
    resource = resources.files("ringshift").joinpath("data", "reference_shifts.csv")
    assert resource.is_file()
    assert "ring-current" in table.basis and "non-aromatic" in table.basis.lower()
    for entry in table.entries.values():
        assert entry.source and entry.description and entry.sd_ppm > 0
    assert table[FALLBACK_CLASS].sd_ppm >= 2.0  # fallback has a large spread (common practice)


def test_entries_are_read_only(table):
    with pytest.raises(TypeError):
        table.entries["x"] = table["other_H"]  # type: ignore[index]


def write(tmp_path, text: str, name: str = "user.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


HEADER = ",".join(CSV_COLUMNS) + "\n"


def test_user_override_and_extension(tmp_path, table):
    path = write(tmp_path, "# invented lab calibration (Lab of Example Chemistry)\n" + HEADER
                 + 'sp2_CH_aromatic_type,6.10,0.20,"invented calibration, not a measurement",ring\n'
                 + "custom_CH_class,3.00,0.50,from memory,an added class\n")
    user = load_reference_table(path)
    assert user["sp2_CH_aromatic_type"].ref_ppm == 6.10
    assert user["custom_CH_class"].sd_ppm == 0.50
    assert user["sp2_CH_ring_conjugated"] == table["sp2_CH_ring_conjugated"]  # untouched rows
    assert len(user) == len(table) + 1
    assert "invented lab calibration" in user.basis and table.basis in user.basis
    refs = reference_shifts(molh("c1ccccc1"), user)
    assert {r.ref_ppm for r in refs.values()} == {6.10}

    alone = load_reference_table(path, extend_default=False)
    assert set(alone.classes) == {"sp2_CH_aromatic_type", "custom_CH_class"}
    with pytest.raises(InputError, match="sp3_CH3_on_pi"):
        reference_shifts(molh("Cc1ccccc1"), alone)


BAD_ROWS = [
    ("header", "class,ref,sd,source,description\n", 1),
    ("not_number", HEADER + "a_class,abc,0.3,from memory,x\n", 2),
    ("sd_zero", HEADER + "a_class,1.0,0,from memory,x\n", 2),
    ("sd_negative", HEADER + "a_class,1.0,-0.2,from memory,x\n", 2),
    ("out_of_range", HEADER + "a_class,99,0.2,from memory,x\n", 2),
    ("nan", HEADER + "a_class,nan,0.2,from memory,x\n", 2),
    ("too_few", HEADER + "a_class,1.0,0.2\n", 2),
    ("unquoted_comma", HEADER + "a_class,1.0,0.2,Smith, Jones,x\n", 2),
    ("empty_source", HEADER + "a_class,1.0,0.2,,x\n", 2),
    ("bad_name", HEADER + "a class,1.0,0.2,from memory,x\n", 2),
    ("duplicate", HEADER + "a_class,1.0,0.2,from memory,x\n# note\na_class,2.0,0.2,from memory,y\n", 4),
    ("empty_file", "# only notes\n", None),
]


@pytest.mark.parametrize("text, line", [b[1:] for b in BAD_ROWS], ids=[b[0] for b in BAD_ROWS])
def test_bad_user_rows_name_file_and_line(tmp_path, text, line):
    path = write(tmp_path, text)
    with pytest.raises(InputError) as info:
        load_reference_table(path)
    message = str(info.value)
    assert "\n" not in message
    expected = f"{path}:{line}" if line is not None else str(path)
    assert message.startswith(expected)


def test_missing_user_file(tmp_path):
    with pytest.raises(InputError, match="not found"):
        load_reference_table(tmp_path / "nope.csv")


_names = st.from_regex(r"[A-Za-z][A-Za-z0-9_]{0,15}", fullmatch=True)
_text = st.text(st.characters(blacklist_categories=("Cs", "Cc")), min_size=1, max_size=30).filter(
    lambda s: s.strip() == s and s and not s.startswith("#"))


@settings(max_examples=40, deadline=None)
@given(st.dictionaries(_names, st.tuples(
    st.floats(-20, 30, allow_nan=False), st.floats(1e-3, 10, allow_nan=False), _text, _text),
    min_size=1, max_size=6))
def test_csv_round_trip(tmp_path_factory, rows):
    # Writer: the standard library csv module (reference implementation of the format).
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for name, (ref, sd, source, desc) in rows.items():
        writer.writerow([name, repr(ref), repr(sd), source, desc])
    path = tmp_path_factory.mktemp("rt") / "t.csv"
    path.write_text(buf.getvalue(), encoding="utf-8")
    loaded = load_reference_table(path, extend_default=False)
    assert set(loaded.classes) == set(rows)
    for name, (ref, sd, source, desc) in rows.items():
        entry = loaded[name]
        assert (entry.ref_ppm, entry.sd_ppm, entry.source, entry.description) == (
            ref, sd, source.strip(), desc.strip())


# --------------------------------------------------------------------------------------------------
# Input checks, invariance, arrays
# --------------------------------------------------------------------------------------------------


def test_implicit_hydrogens_are_rejected():
    with pytest.raises(InputError, match="Chem.AddHs"):
        classify_hydrogens(Chem.MolFromSmiles("c1ccccc1"))


def test_not_a_molecule():
    with pytest.raises(InputError, match="RDKit"):
        classify_hydrogens("c1ccccc1")


@pytest.mark.parametrize("bad, match", [([0], "expected a hydrogen"), ([99], "out of range"),
                                        (["x"], "atom indices")],
                         ids=["carbon", "out_of_range", "not_int"])
def test_bad_h_indices(bad, match):
    with pytest.raises(InputError, match=match):
        classify_hydrogens(molh("c1ccccc1"), bad)


def test_h_indices_subset_keeps_order():
    mol = molh("Cc1ccccc1")
    hs = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1]
    picked = [hs[-1], hs[0]]
    assert list(classify_hydrogens(mol, picked)) == picked
    assert classify_hydrogens(mol, []) == {}


def test_kekule_and_aromatic_input_give_the_same_reference(table):
    # RDKit's Kekulé form (aromatic flags cleared) and the aromatised form differ in class label
    # but not in reference value (design choice above).
    aromatic = molh("c1ccccc1")
    kekule = Chem.Mol(aromatic)
    Chem.Kekulize(kekule, clearAromaticFlags=True)
    assert set(classify_hydrogens(kekule).values()) == {"sp2_CH_ring_conjugated"}
    a = reference_arrays(aromatic, table=table)
    k = reference_arrays(kekule, table=table)
    assert_allclose(a.ref_ppm, k.ref_ppm, rtol=0, atol=0)


@pytest.mark.parametrize("smiles", [PORPHINE, METHANO10, "CC(=O)Oc1ccccc1C(=O)O"],
                         ids=["porphine", "methano10", "aspirin"])
def test_classes_invariant_to_atom_order(smiles):
    # Renumbering the atoms (RDKit RenumberAtoms, seeded permutation) must not change any H's class.
    mol = molh(smiles)
    rng = np.random.default_rng(20261201)
    order = [int(i) for i in rng.permutation(mol.GetNumAtoms())]
    shuffled = Chem.RenumberAtoms(mol, order)
    before = classify_hydrogens(mol)
    after = classify_hydrogens(shuffled)
    assert {order[new]: c for new, c in after.items()} == before


def test_input_molecule_is_not_modified():
    mol = molh("c1ccccc1")
    before = Chem.MolToMolBlock(mol)
    classify_hydrogens(mol)
    assert Chem.MolToMolBlock(mol) == before


def test_reference_arrays_shapes_and_read_only(table):
    mol = molh("CCO")
    arrays = reference_arrays(mol, table=table)
    assert arrays.h_indices.shape == arrays.ref_ppm.shape == arrays.sd_ppm.shape == (6,)
    assert arrays.ref_ppm.dtype == np.float64 and arrays.h_indices.dtype == np.int64
    assert len(arrays.proton_classes) == 6
    with pytest.raises(ValueError):
        arrays.ref_ppm[0] = 0.0
    for i, cls, ref in zip(arrays.h_indices, arrays.proton_classes, arrays.ref_ppm):
        assert table[cls].ref_ppm == ref
        assert mol.GetAtomWithIdx(int(i)).GetAtomicNum() == 1


# --------------------------------------------------------------------------------------------------
# Assembly
# --------------------------------------------------------------------------------------------------


def test_assemble_prediction_is_the_sum():
    # δ = δ_ref + Δδ_rc + Δδ_q (design notes §5, fitting model); checked against numpy's add.
    rng = np.random.default_rng(7)
    ref, rc, q = rng.normal(size=(3, 9))
    assert_allclose(assemble_prediction(ref, rc, q), np.add(np.add(ref, rc), q), rtol=0, atol=1e-15)
    assert assemble_prediction([], [], []).shape == (0,)


@pytest.mark.parametrize(
    "args, match",
    [(([1.0, 2.0], [1.0], [0.0, 0.0]), "equal length"),
     (([[1.0]], [1.0], [1.0]), "1-D"),
     (([1.0], [np.nan], [0.0]), "NaN"),
     ((["a"], [1.0], [0.0]), "1-D array")],
    ids=["lengths", "2d", "nan", "text"],
)
def test_assemble_prediction_rejects_bad_input(args, match):
    with pytest.raises(InputError, match=match):
        assemble_prediction(*args)
