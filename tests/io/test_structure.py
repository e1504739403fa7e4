"""Tests of ringshift.io.structures: SMILES/MOL/SDF/XYZ input, conformers, E/Z, Boltzmann weights, H groups.

References are RDKit (graph symmetry, stereo perception, alignment, writers), SciPy (constants,
softmax), textbook facts (topicity, proton counts of the named molecules) and a few published
numbers; each check names its source. Runtimes: one [18]annulene embedding (default 200 conformers)
is shared through a module fixture; everything else uses small molecules or few conformers.
"""

from __future__ import annotations

import sys
import types

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal
from rdkit import Chem
from rdkit.Chem import AllChem, rdDepictor, rdMolAlign, rdMolTransforms
from scipy import constants, special
from scipy.spatial.transform import Rotation

from ringshift.errors import InputError
from ringshift.geometry.conformers import boltzmann_weights, ez_stereo_check
from ringshift.geometry.symmetry import group_equivalent_hydrogens, kabsch_rmsd
from ringshift.io.molecule_files import read_mol_records
from ringshift.io.structures import Structure, load_structure
from tests.geometry.test_symmetry import annulene18_d6h_xyz  # the one D6h [18]annulene builder of the tests

#: (1Z,3E,5E,7Z,9E,11E,13Z,15E,17E)-[18]annulene; heavy atom k is ring locant k+1.
ANNULENE18 = r"[H]/C1=C/C=C/C=C/C=C\C=C\C=C\C=C/C=C/C=C1\[H]"
Z_BONDS = {(0, 1), (6, 7), (12, 13)}                      # locants 1, 7, 13 of the name


@pytest.fixture(scope="module")
def annulene() -> Structure:
    return load_structure(ANNULENE18)


def _dihedral(x, a, b, c, d):
    """Dihedral angle in degrees by RDKit (rdMolTransforms) as the reference implementation."""
    conf = Chem.Conformer(len(x))
    conf.SetPositions(np.asarray(x, dtype=np.float64))
    return rdMolTransforms.GetDihedralDeg(conf, int(a), int(b), int(c), int(d))


def _inner_h(x: np.ndarray) -> np.ndarray:
    """Indices of H (atoms 18-35) closer to the ring centroid than their carbon."""
    centre = x[:18].mean(axis=0)
    return np.array([h for h in range(18, 36) if np.linalg.norm(x[h] - centre) < 3.0])


def _rdkit_h_partition(smiles: str) -> set[frozenset[int]]:
    """Graph-symmetry classes of H from RDKit (same atom order as ringshift for H-free SMILES)."""
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    classes: dict[int, set[int]] = {}
    for at in mol.GetAtoms():
        if at.GetAtomicNum() == 1:
            classes.setdefault(ranks[at.GetIdx()], set()).add(at.GetIdx())
    return {frozenset(c) for c in classes.values()}


def _embedded(smiles: str, n: int = 1, seed: int = 11) -> Chem.Mol:
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    AllChem.EmbedMultipleConfs(mol, n, randomSeed=seed)
    AllChem.MMFFOptimizeMoleculeConfs(mol)
    return mol


def _write(tmp_path, name: str, text: str):
    path = tmp_path / name
    path.write_text(text)
    return str(path)


# ------------------------------------------------------------------------------ [18]annulene
def test_annulene_keeps_ez_stereo_in_every_conformer(annulene):
    x_all = annulene.coords
    assert annulene.mol.GetNumAtoms() == 36 and x_all.shape[1:] == (36, 3)
    # Stereo named (1Z,3E,5E,...,17E) in the brief: ring dihedral about each double bond ~0 (Z) or ~180 (E).
    # 40 deg tolerance: MMFF94 twists the ring double bonds by <= 15 deg (measured), far from the 90 deg divide.
    for x in x_all:
        for k in range(9):
            i, j = 2 * k, 2 * k + 1
            dih = abs(_dihedral(x, (i - 1) % 18, i, j, (j + 1) % 18))
            assert (dih < 40.0) if (i, j) in Z_BONDS else (dih > 140.0), (i, j, dih)
        # RDKit as reference: stereo perceived from each 3D conformer equals the stereo of the input
        probe = Chem.Mol(annulene.mol, confId=0)
        probe.GetConformer().SetPositions(x)
        Chem.AssignStereochemistryFrom3D(probe)
        ref = Chem.Mol(annulene.mol)
        assert [b.GetStereo() for b in probe.GetBonds()] == [b.GetStereo() for b in ref.GetBonds()]
        assert ez_stereo_check(annulene.mol, x) == []


def test_annulene_six_inner_twelve_outer_and_groups_never_mix(annulene):
    # 6 inner + 12 outer protons (Jackman, Sondheimer et al., J. Am. Chem. Soc. 1962, 84, 4307; from memory).
    for x in annulene.coords:
        assert len(_inner_h(x)) == 6
    inner = set(_inner_h(annulene.coords[0]).tolist())
    assert sorted(h for g in annulene.h_groups for h in g) == list(range(18, 36))
    for group in annulene.h_groups:
        assert set(group) <= inner or not set(group) & inner


def test_annulene_best_conformer_is_near_planar_and_aromatic(annulene):
    x = annulene.coords[0][:18]
    x = x - x.mean(axis=0)
    rms = np.sqrt(np.mean((x @ np.linalg.svd(x)[2][2]) ** 2))
    # The macrocycle search's perimeter starts reach the exactly planar MMFF94 minimum (< 1e-4 Å measured for
    # seeds 0-12345, tests/geometry/test_conformers.py); the old 200-embedding search kept a 0.095 Å twisted one.
    # Threshold 0.01 Å: the best-fit-plane RMS of the heavy atoms, well below the 0.1 Å of any bent minimum.
    assert rms < 0.01
    assert annulene.energies_kcal_mol[0] == 0.0 and np.all(np.diff(annulene.energies_kcal_mol) >= 0)
    assert annulene.provenance["coordinates"] == "etkdg-v3+mmff94"
    # embeddings scale with size for searched molecules: 1200 / 36 atoms = 33 (geometry/conformers.py)
    assert annulene.provenance["conformers_requested"] == 33
    assert annulene.provenance["best_conformer_origin"] == "perimeter"
    # the returned molecule is aromatic (RDKit's 4n+2 rule, 18 pi electrons) and keeps its 9 E/Z labels
    assert all(annulene.mol.GetBondBetweenAtoms(k, (k + 1) % 18).GetIsAromatic() for k in range(18))
    labels = [b.GetStereo() for b in annulene.mol.GetBonds() if b.GetStereo() != Chem.BondStereo.STEREONONE]
    assert labels.count(Chem.BondStereo.STEREOZ) == 3 and labels.count(Chem.BondStereo.STEREOE) == 6


def test_explicit_h_atoms_go_after_heavy_atoms(annulene):
    plain = Chem.MolFromSmiles("C1=C" + "C=C" * 8 + "1")             # same ring without [H] anchors
    bonds = {tuple(sorted((b.GetBeginAtomIdx(), b.GetEndAtomIdx()))) for b in annulene.mol.GetBonds()}
    heavy_bonds = {b for b in bonds if max(b) < 18}
    assert heavy_bonds == {tuple(sorted((b.GetBeginAtomIdx(), b.GetEndAtomIdx()))) for b in plain.GetBonds()}
    assert [a.GetAtomicNum() for a in annulene.mol.GetAtoms()] == [6] * 18 + [1] * 18


def test_d6h_annulene_xyz_gives_twelve_outer_and_six_inner(tmp_path):
    text, inner = annulene18_d6h_xyz()
    s = load_structure(_write(tmp_path, "annulene18.xyz", text))
    # D6h orbits: 12 outer H and 6 inner H, two 1H signals (Jackman et al. 1962, from memory)
    assert len(inner) == 6
    assert set(s.h_groups) == {tuple(sorted(inner)), tuple(sorted(set(range(18, 36)) - inner))}
    assert s.provenance["coordinates"] == "input" and s.charge == 0
    # bonds from rdDetermineBonds: an 18-membered ring of CH (RDKit as reference)
    assert Chem.MolToSmiles(Chem.RemoveHs(s.mol), isomericSmiles=False) == \
        Chem.MolToSmiles(Chem.MolFromSmiles("c1ccccccccccccccccc1"))


# ------------------------------------------------------------------------------ H groups
@pytest.mark.parametrize("smiles", ["c1ccccc1", "Cc1ccccc1", "c1ccc2ccccc2c1", "Cc1ccc(C)cc1"],
                         ids=["benzene", "toluene", "naphthalene", "p-xylene"])
def test_h_groups_of_rigid_achiral_molecules_match_rdkit_symmetry(smiles):
    s = load_structure(smiles, conformers=5)
    # rigid achiral molecules: RDKit graph symmetry is the right answer (common practice, no source)
    assert {frozenset(g) for g in s.h_groups} == _rdkit_h_partition(smiles)


def test_toluene_group_sizes():
    s = load_structure("Cc1ccccc1", conformers=5)
    # CH3 3H, ortho 2H, meta 2H, para 1H (textbook first-order analysis, from memory)
    assert sorted(len(g) for g in s.h_groups) == [1, 2, 2, 3]
    assert (7, 8, 9) in s.h_groups          # the methyl H follow the heavy atoms: C0 carries H 7-9


@pytest.mark.parametrize("smiles,sizes,graph_sizes", [
    ("CC[C@@H](C)O", [1, 1, 1, 1, 3, 3], [1, 1, 2, 3, 3]),        # butan-2-ol: CH2 next to the stereocentre
    ("CC(C)[C@H](N)C(=O)O", [1, 1, 1, 2, 3, 3], [1, 1, 1, 2, 6]),  # valine: the two isopropyl methyls
], ids=["butan-2-ol", "valine"])
def test_diastereotopic_protons_are_split(smiles, sizes, graph_sizes):
    # Diastereotopic protons/methyls next to a stereocentre are anisochronous (textbook topicity rule,
    # e.g. Clayden, Greeves & Warren, Organic Chemistry; from memory). RDKit graph symmetry lumps them:
    assert sorted(len(c) for c in _rdkit_h_partition(smiles)) == graph_sizes
    assert sorted(len(g) for g in load_structure(smiles, conformers=10).h_groups) == sizes


@pytest.mark.parametrize("smiles,sizes", [
    ("CCO", [1, 2, 3]),                            # enantiotopic CH2 of ethanol stays one group
    ("CC(C)c1ccccc1", [1, 1, 2, 2, 6]),           # cumene: fast methyl rotation and phenyl flip
    ("CC(C)(C)c1ccccc1", [1, 2, 2, 9]),           # tert-butylbenzene: 9H singlet
], ids=["ethanol", "cumene", "tert-butylbenzene"])
def test_fast_motions_and_enantiotopic_protons_are_merged(smiles, sizes):
    # 1H counts of the textbook spectra (ethanol 3:2:1; cumene 6:1 plus 5 aromatic as 2:2:1;
    # tert-butylbenzene 9H singlet) (from memory)
    assert sorted(len(g) for g in load_structure(smiles, conformers=10).h_groups) == sizes


def test_bridged_annulene_groups_survive_mmff_bond_localisation():
    # 1,6-methano[10]annulene: two 4H multiplets and a 2H bridge singlet (Vogel & Roth, Angew. Chem. 1964,
    # 76, 145; from memory). MMFF94 localises the bonds (0.28 Å off C2v, measured), within the tolerance.
    s = load_structure("C1=CC=C2CC(=C1)C=CC=C2", conformers=10)
    assert sorted(len(g) for g in s.h_groups) == [2, 4, 4]
    bridge = tuple(sorted(n.GetIdx() for n in s.mol.GetAtomWithIdx(4).GetNeighbors() if n.GetAtomicNum() == 1))
    assert bridge in s.h_groups


@pytest.mark.parametrize("smiles,charge,n_h", [("[cH-]1cccc1", -1, 5), ("[cH+]1cccccc1", 1, 7)],
                         ids=["cyclopentadienide", "tropylium"])
def test_formal_charges_and_one_proton_signal_of_aromatic_ions(smiles, charge, n_h):
    s = load_structure(smiles, conformers=5)
    assert s.charge == charge == Chem.GetFormalCharge(s.mol)
    # one line for all ring protons (Fraenkel, Carter, McLachlan & Richards, J. Am. Chem. Soc. 1960, 82, 5846)
    assert len(s.h_groups) == 1 and len(s.h_groups[0]) == n_h


def test_molecule_without_hydrogens_is_not_an_error():
    s = load_structure("ClC(Cl)(Cl)Cl", conformers=3)
    assert s.h_groups == () and s.coords.shape == (1, 5, 3)


def test_group_equivalent_hydrogens_rejects_wrong_shape():
    mol = Chem.AddHs(Chem.MolFromSmiles("C"))
    with pytest.raises(InputError, match="coords"):
        group_equivalent_hydrogens(mol, np.zeros((3, 3)))


# ------------------------------------------------------------------------------ conformers
def test_paracyclophane_embeds_with_fallback_and_has_the_xray_bridgehead_distance():
    s = load_structure("C1Cc2ccc(cc2)CCc2ccc1cc2", conformers=5)
    assert s.provenance["embedding_basic_knowledge"] is False        # design notes §7
    x, mol = s.coords[0], s.mol
    bridgeheads = [a.GetIdx() for a in mol.GetAtoms() if a.GetIsAromatic() and
                   any(n.GetAtomicNum() == 6 and not n.GetIsAromatic() for n in a.GetNeighbors())]
    d = sorted(np.linalg.norm(x[i] - x[j]) for i in bridgeheads for j in bridgeheads if i < j)[:2]
    # facing bridgehead carbons 2.78 Å apart (Hope, Bernstein & Trueblood, Acta Cryst. B 1972, 28, 1733;
    # from memory); MMFF94 gives 2.777 Å (measured). Tolerance 0.1 Å.
    assert_allclose(d, 2.78, atol=0.1)


def test_same_seed_gives_identical_coordinates():
    a = load_structure("CCCCc1ccccc1", conformers=10, seed=7)
    b = load_structure("CCCCc1ccccc1", conformers=10, seed=7)
    assert_array_equal(a.coords, b.coords)                   # common practice: seeded runs reproduce exactly
    assert_array_equal(a.weights, b.weights)
    assert a.provenance["seed"] == 7 and a.provenance["conformers_requested"] == 10


def test_structure_array_contract_and_boltzmann_weights():
    s = load_structure("CCCCc1ccccc1", conformers=10, temperature_K=250.0)
    n_conf = s.coords.shape[0]
    assert s.coords.dtype == np.float64 and s.coords.flags.c_contiguous and not s.coords.flags.writeable
    assert s.mol.GetNumConformers() == n_conf
    assert_allclose(s.mol.GetConformer(n_conf - 1).GetPositions(), s.coords[-1], atol=1e-12)
    # Boltzmann distribution with R from SciPy (CODATA): p ~ exp(-E/RT), E in kcal/mol
    e = s.energies_kcal_mol
    assert_allclose(s.weights, special.softmax(-e * 4184.0 / (constants.R * 250.0)), rtol=1e-10)
    assert np.all(e <= s.provenance["energy_window_kcal_mol"])


def test_rmsd_pruning_leaves_one_benzene_conformer():
    s = load_structure("c1ccccc1", conformers=30)
    # benzene has a single conformer (common practice, no source); all 30 embeddings are duplicates
    assert s.coords.shape[0] == 1 and s.provenance["conformers_embedded"] == 30


# ------------------------------------------------------------------------------ kernels
def test_kabsch_rmsd_matches_rdkit_alignment():
    mol = _embedded("CCCCc1ccccc1", n=2)
    ref = rdMolAlign.AlignMol(Chem.Mol(mol, confId=1), Chem.Mol(mol, confId=0),
                              atomMap=[(k, k) for k in range(mol.GetNumAtoms())])
    x = np.array([c.GetPositions() for c in mol.GetConformers()])
    assert_allclose(kabsch_rmsd(x[1], x[0]), ref, atol=1e-8)   # RDKit AlignMol as reference


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 10_000))
def test_kabsch_rmsd_is_zero_for_rigid_motions(seed):
    rng = np.random.default_rng(seed)
    a = rng.normal(size=(8, 3))
    b = Rotation.random(random_state=seed).apply(a) + rng.normal(size=3)
    # rigid motion leaves RMSD 0 (identity); atol 1e-6 Å: the closed form loses sqrt(eps)*|a| ~ 1e-7 Å
    assert_allclose(kabsch_rmsd(a, b), 0.0, atol=1e-6)
    assert_allclose(kabsch_rmsd(a, b[::-1]), kabsch_rmsd(b[::-1], a), atol=1e-6)    # symmetric


def test_boltzmann_weights_against_softmax():
    e = np.array([0.0, 0.5, 1.2, 3.0])
    kt = constants.R * 310.0 / 4184.0                           # kcal/mol from SciPy's R
    assert_allclose(boltzmann_weights(e, 310.0), special.softmax(-e / kt), rtol=1e-10)
    assert boltzmann_weights(np.array([]), 300.0).shape == (0,)


def test_ez_stereo_check_flags_contradicting_geometry():
    e_mol = _embedded("C/C=C/C")
    z_mol = Chem.AddHs(Chem.MolFromSmiles("C/C=C\\C"))
    x = e_mol.GetConformer().GetPositions()
    probe = Chem.Mol(e_mol)
    Chem.AssignStereochemistryFrom3D(probe)                    # RDKit: this geometry is E
    assert probe.GetBondWithIdx(1).GetStereo() == Chem.BondStereo.STEREOE
    assert ez_stereo_check(Chem.AddHs(Chem.MolFromSmiles("C/C=C/C")), x) == []
    problems = ez_stereo_check(z_mol, x)
    assert len(problems) == 1 and "bond 1-2" in problems[0]


# ------------------------------------------------------------------------------ MOL / SDF
def test_mol_3d_round_trip_keeps_coordinates(tmp_path):
    mol = _embedded("Cc1ccccc1")
    s = load_structure(_write(tmp_path, "toluene.mol", Chem.MolToMolBlock(mol)))
    # MOL blocks carry 4 decimals: 5e-5 Å rounding, tolerance 1e-4 Å
    assert_allclose(s.coords[0], mol.GetConformer().GetPositions(), atol=1e-4)
    assert [a.GetAtomicNum() for a in s.mol.GetAtoms()] == [a.GetAtomicNum() for a in mol.GetAtoms()]
    assert s.provenance["coordinates"] == "input" and s.provenance["format"] == "mol"
    assert sorted(len(g) for g in s.h_groups) == [1, 2, 2, 3]


def test_mol_3d_without_hydrogens_gets_them_with_coordinates(tmp_path):
    heavy = Chem.RemoveHs(_embedded("Cc1ccccc1"))
    s = load_structure(_write(tmp_path, "toluene_noh.mol", Chem.MolToMolBlock(heavy)))
    assert s.mol.GetNumAtoms() == 15 and s.provenance["hydrogens_added"] == 8
    for b in s.mol.GetBonds():
        if b.GetEndAtom().GetAtomicNum() == 1:
            d = np.linalg.norm(s.coords[0][b.GetBeginAtomIdx()] - s.coords[0][b.GetEndAtomIdx()])
            assert 1.0 < d < 1.2          # C-H about 1.09 Å (handbook value, from memory); RDKit places them


def test_mol_2d_is_embedded_with_its_drawn_stereo(tmp_path):
    mol = Chem.MolFromSmiles("Cl/C=C\\Cl")
    rdDepictor.Compute2DCoords(mol)
    block = Chem.MolToMolBlock(mol)
    assert Chem.MolFromMolBlock(block).GetBondWithIdx(1).GetStereo() == Chem.BondStereo.STEREOZ   # RDKit reading
    s = load_structure(_write(tmp_path, "dce.mol", block), conformers=5)
    assert s.provenance["coordinates"] == "etkdg-v3+mmff94"
    assert abs(_dihedral(s.coords[0], 0, 1, 2, 3)) < 30.0    # Z: Cl-C=C-Cl cis; 30 deg is far from 90
    assert len(s.h_groups) == 1                             # the two vinyl H of (Z)-1,2-dichloroethene


def _butane_sdf(tmp_path, prop: str | None, values) -> tuple[str, Chem.Mol]:
    mol = _embedded("CCCC", n=6, seed=3)
    path = tmp_path / "butane.sdf"
    with Chem.SDWriter(str(path)) as writer:
        for cid, value in zip(range(3), values):
            rec = Chem.Mol(mol, confId=cid)
            if prop:
                rec.SetProp(prop, str(value))
            writer.write(rec)
    return str(path), mol


@pytest.mark.parametrize("prop,factor", [("E_kcal_mol", 1.0), ("energy_kJ_mol", 1 / 4.184)],
                         ids=["kcal", "kJ"])
def test_sdf_ensemble_is_boltzmann_weighted(tmp_path, prop, factor):
    path, mol = _butane_sdf(tmp_path, prop, [1.3, 0.4, 2.0])
    s = load_structure(path, temperature_K=298.15)
    e = (np.array([1.3, 0.4, 2.0]) - 0.4) * factor
    assert_allclose(s.energies_kcal_mol, e, atol=1e-12)
    # Boltzmann weights with R from SciPy (CODATA); thermochemical calorie 4.184 J
    assert_allclose(s.weights, special.softmax(-e * 4184.0 / (constants.R * 298.15)), rtol=1e-10)
    assert s.coords.shape == (3, 14, 3) and s.provenance["energy_property"] == prop
    assert_allclose(s.coords[2], mol.GetConformer(2).GetPositions(), atol=1e-4)


def test_sdf_ensemble_without_energies_has_uniform_weights(tmp_path):
    path, _ = _butane_sdf(tmp_path, None, [0, 0, 0])
    s = load_structure(path)
    assert s.energies_kcal_mol is None
    assert_allclose(s.weights, np.full(3, 1.0 / 3.0), rtol=1e-12)
    assert len(read_mol_records(path)) == 3


def test_sdf_with_different_molecules_points_to_batch_use(tmp_path):
    path = tmp_path / "two.sdf"
    with Chem.SDWriter(str(path)) as writer:
        writer.write(_embedded("CCO"))
        writer.write(_embedded("CCN"))
    with pytest.raises(InputError, match="batch") as err:
        load_structure(str(path))
    assert "record 2" in str(err.value) and "\n" not in str(err.value)


# ------------------------------------------------------------------------------ XYZ
def test_xyz_single_and_multi_frame_round_trip(tmp_path):
    mol = _embedded("Cc1ccccc1", n=3, seed=5)
    blocks = [Chem.MolToXYZBlock(mol, confId=c) for c in range(3)]
    one = load_structure(_write(tmp_path, "tol1.xyz", blocks[0]))
    # RDKit's XYZ writer prints 6 decimals: tolerance 1e-6 Å
    assert_allclose(one.coords[0], mol.GetConformer(0).GetPositions(), atol=1e-6)
    assert Chem.MolToSmiles(Chem.RemoveHs(one.mol)) == Chem.MolToSmiles(Chem.MolFromSmiles("Cc1ccccc1"))
    three = load_structure(_write(tmp_path, "tol3.xyz", "".join(blocks)))
    assert three.coords.shape == (3, 15, 3) and three.provenance["frames"] == 3
    assert_allclose(three.coords[2], mol.GetConformer(2).GetPositions(), atol=1e-6)
    assert_allclose(three.weights, np.full(3, 1 / 3), rtol=1e-12)
    assert three.energies_kcal_mol is None


def test_xyz_ion_needs_its_charge(tmp_path):
    mol = _embedded("[cH-]1cccc1")
    path = _write(tmp_path, "cp.xyz", Chem.MolToXYZBlock(mol))
    # 35 electrons as a neutral molecule: odd, so an ion or a radical; the charge decides
    with pytest.raises(InputError, match="odd number.*give its net charge") as info:
        load_structure(path)
    assert info.value.parameter == "charge"      # the CLI names its option from this
    s = load_structure(path, charge=-1)
    assert s.charge == -1 and [len(g) for g in s.h_groups] == [5]


def test_xyz_frames_with_other_atoms_are_rejected(tmp_path):
    text = "2\nf1\nC 0 0 0\nO 0 0 1.13\n2\nf2\nO 0 0 0\nC 0 0 1.13\n"
    with pytest.raises(InputError, match="frame 2"):
        load_structure(_write(tmp_path, "co.xyz", text))


# ------------------------------------------------------------------------------ bad input
BAD_FILES = {
    "empty.mol": "",
    "garbage.sdf": "this is not\na molecule\n",
    "count_large.xyz": "3\ncomment\nC 0 0 0\nO 0 0 1.13\n",
    "count_small.xyz": "1\ncomment\nC 0 0 0\nO 0 0 1.13\n",
    "nonnumeric.xyz": "2\ncomment\nC 0 zero 0\nO 0 0 1.13\n",
    "nonfinite.xyz": "2\ncomment\nC 0 0 nan\nO 0 0 1.13\n",
    "element.xyz": "2\ncomment\nXx 0 0 0\nO 0 0 1.13\n",
    "unknown.mol2": "@<TRIPOS>MOLECULE\n",
}
BAD_MESSAGES = {"empty.mol": "empty", "garbage.sdf": "not a readable", "count_large.xyz": "announces 3",
                "count_small.xyz": "atom count of frame 2", "nonnumeric.xyz": ":3", "nonfinite.xyz": "non-finite",
                "element.xyz": "element x y z", "unknown.mol2": "unknown file format"}


@pytest.mark.parametrize("name", sorted(BAD_FILES), ids=sorted(BAD_FILES))
def test_bad_files_raise_one_line_input_errors(tmp_path, name):
    path = _write(tmp_path, name, BAD_FILES[name])
    with pytest.raises(InputError) as err:
        load_structure(path)
    message = str(err.value)
    assert name in message and BAD_MESSAGES[name] in message and "\n" not in message


def test_mol_block_with_nan_coordinate_is_rejected(tmp_path):
    mol = _embedded("CO")
    block = Chem.MolToMolBlock(mol).splitlines()
    block[4] = "       nan" + block[4][10:]
    with pytest.raises(InputError, match="nan.mol:1"):       # strict MOL parsing rejects the record
        load_structure(_write(tmp_path, "nan.mol", "\n".join(block) + "\n"))


@pytest.mark.parametrize("spec,kwargs,needle", [
    ("C1CC", {}, "C1CC"),
    ("c1cccc1", {}, "c1cccc1"),
    ("not a smiles((", {}, "not a readable SMILES"),
    ("missing_file.sdf", {}, "file not found"),
    ("c1ccccc1", {"charge": 1}, "charge=1"),
    ("CCO", {"temperature_K": 0.0}, "temperature_K"),
    ("CCO", {"conformers": 0}, "conformers"),
    ("CCO", {"rmsd_prune_A": -1.0}, "rmsd_prune_A"),
    ("CCO", {"charge": 1.5}, "charge"),
    ("CCO", {"fmt": "pdb"}, "fmt"),
    ("", {}, "spec"),
    ("CCO", {"exchange": "medium"}, "exchange"),
    ("CCO", {"exchange": None}, "exchange"),
    ("CCO", {"geometry": "dft"}, "geometry"),
], ids=["unclosed-ring", "bad-aromatic", "garbage", "missing-file", "charge-mismatch", "temperature",
        "conformers", "rmsd", "charge-type", "fmt", "empty", "exchange", "exchange-none", "geometry"])
def test_bad_arguments_raise_one_line_input_errors(spec, kwargs, needle):
    with pytest.raises(InputError) as err:
        load_structure(spec, **kwargs)
    assert needle in str(err.value) and "\n" not in str(err.value)


# ------------------------------------------------------------------------------ exchange and geometry options
def test_default_options_are_recorded_in_provenance():
    s = load_structure("CCO", conformers=2)
    assert s.provenance["exchange"] == "slow" and s.provenance["geometry"] == "force-field"
    assert "geometry_refinement" not in s.provenance


def test_fast_exchange_merges_cyclohexane_protons():
    slow = load_structure("C1CCCCC1", conformers=5)
    fast = load_structure("C1CCCCC1", conformers=5, exchange="fast")
    # chair: axial and equatorial lines at low temperature, one line at room temperature (Jensen, Noyce,
    # Sederholm & Berlin, J. Am. Chem. Soc. 1960, 82, 1256; from memory)
    assert sorted(len(g) for g in slow.h_groups) == [6, 6]
    assert fast.h_groups == (tuple(range(6, 18)),) and fast.provenance["exchange"] == "fast"
    np.testing.assert_array_equal(slow.coords, fast.coords)       # the option changes the groups only


def _synthetic_xtb(calls: list, answer) -> types.ModuleType:
    """SYNTHETIC stand-in for ringshift.geometry.xtb (no quantum chemistry): records its arguments and returns
    ``answer(coords)`` = (coords (k, n, 3) Å, energies (k,) kcal/mol, info). Tests the wiring only."""
    module = types.ModuleType("ringshift.geometry.xtb")

    def gfn2_optimise(mol, coords, *, charge, unpaired=0, source="structure", energies_kcal_mol=None, **_):
        calls.append({"n_atoms": mol.GetNumAtoms(), "coords": np.array(coords), "charge": charge,
                      "unpaired": unpaired, "source": source, "energies": energies_kcal_mol})
        return answer(np.array(coords))

    module.gfn2_optimise = gfn2_optimise  # type: ignore[attr-defined]
    return module


def _xyz_coords(text: str) -> np.ndarray:
    return np.array([[float(v) for v in line.split()[1:]] for line in text.splitlines()[2:]])


def test_gfn2_route_takes_conformers_energies_and_groups_from_the_refinement(tmp_path, monkeypatch):
    text, inner = annulene18_d6h_xyz()
    ideal = _xyz_coords(text)
    squashed = ideal * np.array([1.15, 0.95, 1.0])          # invented D2h distortion, ring atoms move up to 0.7 Å
    body = "\n".join(f"{'C' if k < 18 else 'H'} {x:.6f} {y:.6f} {z:.6f}" for k, (x, y, z) in enumerate(squashed))
    path = _write(tmp_path, "squashed18.xyz", f"36\ndistorted [18]annulene (synthetic)\n{body}\n")
    as_read = load_structure(path)
    assert len(as_read.h_groups) > 2                   # D6h symmetry lost in the distorted input
    calls: list = []
    info = {"method": "synthetic stand-in", "conformers_kept": 2}

    def answer(x):    # the distorted input at 3 kcal/mol and the ideal D6h geometry at 0, unsorted
        return np.stack([x[0], ideal]), np.array([3.0, 0.0]), info

    monkeypatch.setitem(sys.modules, "ringshift.geometry.xtb", _synthetic_xtb(calls, answer))
    s = load_structure(path, geometry="gfn2-xtb")
    assert len(calls) == 1 and calls[0]["charge"] == 0 and calls[0]["unpaired"] == 0
    assert calls[0]["source"] == path and calls[0]["energies"] is None
    np.testing.assert_allclose(calls[0]["coords"], as_read.coords, atol=1e-12)
    # sorted by the refinement's energy: the ideal geometry first, and the H groups come from it
    np.testing.assert_allclose(s.coords[0], ideal, atol=1e-12)
    np.testing.assert_allclose(s.energies_kcal_mol, [0.0, 3.0], atol=1e-12)
    boltzmann = np.exp(-np.array([0.0, 3.0]) / (constants.R / constants.calorie / 1000.0 * 298.15))
    np.testing.assert_allclose(s.weights, boltzmann / boltzmann.sum(), rtol=1e-3)   # R rounded in constants
    assert set(s.h_groups) == {tuple(sorted(inner)), tuple(sorted(set(range(18, 36)) - inner))}
    assert s.provenance["geometry"] == "gfn2-xtb" and s.provenance["coordinates"] == "input+gfn2-xtb"
    assert s.provenance["geometry_refinement"] == info and s.provenance["conformers_kept"] == 2


@pytest.mark.parametrize("smiles,charge,unpaired", [("[cH+]1cccccc1", 1, 0), ("[CH2]c1ccccc1", 0, 1)],
                         ids=["tropylium", "benzyl-radical"])
def test_gfn2_route_passes_charge_and_unpaired_electrons(monkeypatch, smiles, charge, unpaired):
    calls: list = []

    def answer(x):
        return x, np.zeros(x.shape[0]), {"method": "synthetic stand-in"}

    monkeypatch.setitem(sys.modules, "ringshift.geometry.xtb", _synthetic_xtb(calls, answer))
    s = load_structure(smiles, conformers=2, geometry="gfn2-xtb")
    assert calls[0]["charge"] == charge and calls[0]["unpaired"] == unpaired
    assert calls[0]["energies"] is not None and len(calls[0]["energies"]) == calls[0]["coords"].shape[0]
    assert s.provenance["coordinates"] == "etkdg-v3+mmff94+gfn2-xtb"


def test_gfn2_route_with_a_wrong_shape_is_an_internal_error(monkeypatch):
    def answer(x):
        return x[:, :-1], np.zeros(x.shape[0]), {}

    monkeypatch.setitem(sys.modules, "ringshift.geometry.xtb", _synthetic_xtb([], answer))
    with pytest.raises(RuntimeError, match="gfn2_optimise returned"):
        load_structure("CCO", conformers=1, geometry="gfn2-xtb")


def test_gfn2_route_without_tblite_is_a_one_line_error(monkeypatch):
    pytest.importorskip("ringshift.geometry.xtb")
    monkeypatch.setitem(sys.modules, "tblite", None)           # as if the optional extra were not installed
    monkeypatch.setitem(sys.modules, "tblite.interface", None)
    with pytest.raises(InputError) as err:
        load_structure("CCO", conformers=1, geometry="gfn2-xtb")
    assert "pip install 'ringshift[xtb]'" in str(err.value) and "\n" not in str(err.value)
