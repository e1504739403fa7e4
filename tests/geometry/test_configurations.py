"""Ring E/Z configurations: enumeration counts, symmetry dedupe, SMILES round trips, inner H, mode choice."""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pytest
from rdkit import Chem
from rdkit.Chem.EnumerateStereoisomers import EnumerateStereoisomers, StereoEnumerationOptions

from ringshift.cli_spectra import CONFIGURATION_CHOICES
from ringshift.errors import GeometryWarning, InputError
from ringshift.geometry.configurations import (
    CONFIGURATION_MODES,
    enumerate_configurations,
    inner_hydrogens,
    open_ring_bonds,
)
from ringshift.geometry.stereo_smiles import ConfigurationSpace, configuration_key, isomeric_smiles
from ringshift.io.molecule_files import _mol_from_smiles, _mol_from_xyz
from ringshift.runners.configurations import resolve_mode
from tests.geometry.test_symmetry import annulene18_d6h_xyz

#: [18]annulene with every ring E/Z fixed through [H] reference atoms (design notes §6).
ANNULENE18_FIXED = "[H]/C1=C/C=C/C=C/C=C\\C=C\\C=C\\C=C/C=C/C=C1\\[H]"


def _annulene(n_double: int) -> str:
    return "C1=C" + "C=C" * (n_double - 1) + "1"


def _bracelets(n: int) -> int:
    """Distinct binary strings of length n up to rotation and reflection, counted by brute force (the slow twin
    of the automorphism key)."""
    seen = set()
    for p in itertools.product((0, 1), repeat=n):
        seen.add(min(q[r:] + q[:r] for q in (p, p[::-1]) for r in range(n)))
    return len(seen)


@pytest.mark.parametrize("smiles", ["C1=CC=CC=CC=C1", "C1=CC=CC=CC=CC=C1", "C1=CC=C/C=C/C=CC=C1",
                                    "CC1=CC=CC=CC=C1"],
                         ids=["COT", "[10]annulene", "[10]-one-fixed", "methyl-COT"])
def test_assignments_match_rdkit_enumeration(smiles):
    # outside reference: RDKit's EnumerateStereoisomers with onlyUnassigned (every assignment, no dedupe)
    mol, _ = _mol_from_smiles(smiles)
    bonds, assignments, isomers = enumerate_configurations(mol, "open")
    rdkit_count = len(list(EnumerateStereoisomers(Chem.Mol(mol), options=StereoEnumerationOptions(
        onlyUnassigned=True, unique=False))))
    assert assignments == rdkit_count == 2 ** len(bonds)
    assert len(open_ring_bonds(mol)) == len(bonds)
    assert 1 <= len(isomers) <= assignments


@pytest.mark.parametrize("n_double, expected", [(4, 6), (5, 8), (6, 13), (8, 30)],
                         ids=["[8]", "[10]", "[12]", "[16]"])
def test_dedupe_by_ring_symmetry_gives_the_bracelet_numbers(n_double, expected):
    # the cis/trans patterns of an [n]annulene's n/2 double bonds, up to the ring's rotations and reflections, are
    # binary bracelets: 6, 8, 13, 30 for 4, 5, 6, 8 beads (OEIS A000029; Burnside's lemma, textbook identity)
    mol, _ = _mol_from_smiles(_annulene(n_double))
    _, assignments, isomers = enumerate_configurations(mol, "open")
    assert assignments == 2 ** n_double
    assert len(isomers) == expected == _bracelets(n_double)
    keys = {configuration_key(m) for _, m in isomers}
    assert len(keys) == expected                         # the public key agrees with the enumeration's


def test_key_is_independent_of_atom_order():
    # the same configuration written from another atom (RDKit renumbering) has the same key
    mol, _ = _mol_from_smiles(_annulene(6))
    _, _, isomers = enumerate_configurations(mol, "open")
    for _, m in isomers[:5]:
        order = list(range(m.GetNumAtoms()))[::-1]
        assert configuration_key(Chem.RenumberAtoms(m, order)) == configuration_key(m)


@pytest.mark.parametrize("n_double", [4, 5, 7], ids=["[8]", "[10]", "[14]"])
def test_isomeric_smiles_round_trip_through_rdkit(n_double):
    # outside reference: RDKit's SMILES parser reads back each written SMILES; its E/Z labels must give the
    # configuration enumerated (odd-cis patterns included, which RDKit's own writer loses; design notes §6)
    mol, _ = _mol_from_smiles(_annulene(n_double))
    _, _, isomers = enumerate_configurations(mol, "open")
    keys = set()
    for _, m in isomers:
        smiles = isomeric_smiles(m)
        assert smiles is not None
        back, _ = _mol_from_smiles(smiles)
        assert configuration_key(back) == configuration_key(m)
        keys.add(configuration_key(back))
    assert len(keys) == len(isomers)


def test_states_follow_the_rdkit_labels_of_a_written_smiles():
    # (Z)/(E) read by RDKit from the SMILES of the design notes: 1Z,3E,5E,7Z,9E,11E,13Z,15E,17E
    mol, _ = _mol_from_smiles(ANNULENE18_FIXED)
    space = ConfigurationSpace(mol)
    states = space.states_of(mol)
    assert sorted(states) == [0] * 6 + [1] * 3                   # three cis (Z), six trans (E)
    assert open_ring_bonds(mol) == []


def test_inner_hydrogens_of_planar_d6h_annulene18(tmp_path):
    # [18]annulene in its planar D6h form has 6 inner and 12 outer H (textbook, e.g. Sondheimer's annulenes)
    text, inner = annulene18_d6h_xyz()
    path = tmp_path / "a18.xyz"
    path.write_text(text)
    mol, frames = _mol_from_xyz(path, None)
    assert set(inner_hydrogens(mol, frames[0], list(range(18)))) == inner
    # a rigid motion changes nothing (invariance)
    rot = np.array([[0.0, 0.0, 1.0], [0.0, 1.0, 0.0], [-1.0, 0.0, 0.0]])
    assert set(inner_hydrogens(mol, frames[0] @ rot.T + 3.0, list(range(18))[::-1])) == inner


def test_modes_and_cli_choices():
    assert CONFIGURATION_CHOICES == CONFIGURATION_MODES
    assert resolve_mode(ANNULENE18_FIXED, None)[0] == "given"             # fully specified: nothing enumerated
    assert resolve_mode(ANNULENE18_FIXED, "open")[:2] == ("given", "the input fixes the E/Z of every ring double "
                                                                   "bond")
    assert resolve_mode(ANNULENE18_FIXED, "all")[0] == "all"
    mode, reason, base = resolve_mode(_annulene(7), None)
    assert mode == "open" and "7 ring double bonds open" in reason and base is not None
    assert resolve_mode("c1ccccc1", None)[0] == "given"                    # benzene: no ring E/Z
    # porphine: RDKit lets the 16-ring's alpha=meso bonds carry E/Z, but they sit at fusion atoms: not enumerated
    assert resolve_mode("C1=CC2=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=CC1=N2)N5", None)[0] == "given"
    with pytest.raises(InputError, match="configuration"):
        resolve_mode(_annulene(4), "sideways")


def test_files_fix_the_configuration(tmp_path):
    text, _ = annulene18_d6h_xyz()
    path = tmp_path / "a18.xyz"
    path.write_text(text)
    assert resolve_mode(str(path), None)[0] == "given"
    with pytest.raises(InputError, match="structure file fixes the configuration"):
        resolve_mode(str(path), "open")


def test_too_many_open_bonds_is_refused():
    mol, _ = _mol_from_smiles(_annulene(11))
    with pytest.raises(InputError, match="at most 10"):
        enumerate_configurations(mol, "open")


def test_file_ensemble_with_another_configuration_warns(tmp_path):
    # two SD records of 2-butene: the first E, the second Z (coordinates made by RDKit, synthetic)
    from rdkit.Chem import AllChem

    from ringshift.io.structures import load_structure

    blocks = []
    for smi in ("C/C=C/C", "C/C=C\\C"):
        m = Chem.AddHs(Chem.MolFromSmiles(smi))
        AllChem.EmbedMolecule(m, randomSeed=3)
        blocks.append(Chem.MolToMolBlock(m) + "$$$$\n")
    path = tmp_path / "butene.sdf"
    path.write_text("".join(blocks))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            load_structure(str(path))
        except InputError:
            pytest.skip("the SD reader refuses records that differ in stereo")
    texts = [str(w.message) for w in caught if issubclass(w.category, GeometryWarning)]
    assert any("record 2" in t and "bond 1-2" in t for t in texts), texts


def test_ctrl_c_in_the_screen_propagates(monkeypatch):
    # a cancelled embedding raises KeyboardInterrupt (conformers._embed_confs); the screen must not swallow it
    import ringshift.geometry.configurations as configurations
    from ringshift.geometry.configurations import screen_configurations

    def cancelled(*args, **kwargs):
        raise KeyboardInterrupt("conformer embedding cancelled")

    monkeypatch.setattr(configurations, "_generate", cancelled)
    mol, _ = _mol_from_smiles(_annulene(4))
    with pytest.raises(KeyboardInterrupt):
        screen_configurations(mol, "open")


def test_odd_cis_annulene18_smiles_is_written_and_read_back():
    # the design-notes SMILES has three cis bonds (odd): RDKit's own writer cannot keep it (§6); ours must
    mol, _ = _mol_from_smiles(ANNULENE18_FIXED)
    smiles = isomeric_smiles(mol)
    assert smiles is not None and "[H]" in smiles
    back, _ = _mol_from_smiles(smiles)
    assert configuration_key(back) == configuration_key(mol)
