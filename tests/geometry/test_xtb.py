"""Optional GFN2-xTB geometry (ringshift.geometry.xtb): checks that run everywhere, and tblite runs that skip
cleanly where the optional package is absent."""

import sys

import numpy as np
import pytest
from rdkit import Chem
from rdkit.Chem import rdDistGeom, rdForceFieldHelpers

from ringshift.errors import InputError
from ringshift.geometry import xtb
from ringshift.geometry.conformers import ez_stereo_check

# (1Z,3E,5Z,7E,9Z,11E)-style [12]annulene with [H]-anchored stereo marks (design notes §6): not aromatic in
# RDKit (12 = 4n), so its six ring double bonds keep their marks and ez_stereo_check has something to check.
ANNULENE_12 = r"[H]/C1=C/C=C\C=C/C=C/C=C\C=C/1"


def _conformers(smiles: str, n: int = 1, seed: int = 7) -> tuple[Chem.Mol, np.ndarray]:
    """Explicit-H molecule and n MMFF94 conformers (n, n_atoms, 3) Å, embedded with a fixed seed."""
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    params = rdDistGeom.ETKDGv3()
    params.randomSeed = seed
    assert len(rdDistGeom.EmbedMultipleConfs(mol, n, params)) == n
    work = Chem.Mol(mol)
    rdForceFieldHelpers.MMFFOptimizeMoleculeConfs(work, maxIters=2000)
    return mol, np.stack([c.GetPositions() for c in work.GetConformers()])


def _cc_bonds(mol: Chem.Mol, x: np.ndarray) -> np.ndarray:
    """Lengths (Å) of every C–C bond of one conformer (n_atoms, 3)."""
    return np.array([np.linalg.norm(x[b.GetBeginAtomIdx()] - x[b.GetEndAtomIdx()]) for b in mol.GetBonds()
                     if b.GetBeginAtom().GetAtomicNum() == 6 == b.GetEndAtom().GetAtomicNum()])


@pytest.fixture(scope="module")
def tblite():
    return pytest.importorskip("tblite")


# --------------------------------------------------------------------------------------- without tblite
def test_missing_tblite_is_one_line_naming_input_and_install_command(monkeypatch):
    monkeypatch.setitem(sys.modules, "tblite", None)           # a None entry makes `import` raise ImportError
    monkeypatch.setitem(sys.modules, "tblite.interface", None)
    mol, x = _conformers("c1ccccc1")
    with pytest.raises(InputError) as err:
        xtb.gfn2_optimise(mol, x, charge=0, source="benzene.sdf")
    text = str(err.value)
    assert "\n" not in text
    assert text.startswith("benzene.sdf: ")
    assert "pip install 'ringshift[xtb]'" in text and "pip install 'ringshift[xtb]'" in xtb.INSTALL_HINT
    assert "\n" not in xtb.INSTALL_HINT


def test_odd_electron_count_needs_unpaired_electrons():
    # methyl radical: 6 + 3 = 9 electrons cannot be a closed shell (common practice, no source)
    mol, x = _conformers("[CH3]")
    with pytest.raises(InputError, match="9 electrons .* 0 unpaired") as err:
        xtb.gfn2_optimise(mol, x, charge=0, unpaired=0)
    assert err.value.source == "unpaired"
    with pytest.raises(InputError, match="unpaired"):
        xtb.gfn2_optimise(*_conformers("c1ccccc1"), charge=0, unpaired=1)    # 42 electrons, 1 unpaired


def test_charge_must_match_the_formal_charges_and_hydrogens_must_be_explicit():
    mol, x = _conformers("[cH+]1cccccc1")
    with pytest.raises(InputError, match="formal charges") as err:
        xtb.gfn2_optimise(mol, x, charge=0)                  # tblite would compute the neutral radical
    assert err.value.source == "charge"
    heavy = Chem.MolFromSmiles("c1ccccc1")
    with pytest.raises(InputError, match="implicit"):
        xtb.gfn2_optimise(heavy, np.zeros((1, 6, 3)), charge=0)


def test_default_selection_takes_the_lowest_five_within_the_energy_window():
    energies = np.array([0.0, 0.5, 2.9, 3.1, 1.0, 0.2, 0.1])
    assert xtb._selection(7, None, None) == [0, 1, 2, 3, 4]
    assert xtb._selection(7, None, energies) == [0, 1, 2, 4]      # 3.1 kcal/mol is outside the 3 kcal/mol window
    assert xtb._selection(7, 2, energies) == [0, 1]
    assert xtb._selection(3, 10, None) == [0, 1, 2]


def test_ez_change_is_detected_against_the_start():
    # (E)-but-2-ene's marks against a (Z) geometry of the same atom order (common practice, no source)
    mol_e, x_e = _conformers("C/C=C/C")
    mol_z, x_z = _conformers(r"C/C=C\C")
    assert xtb._new_problems(mol_e, x_e[0], x_e[0]) == []
    assert len(xtb._new_problems(mol_e, x_e[0], x_z[0])) == 1
    assert xtb._new_problems(mol_e, x_z[0], x_z[0]) == []         # already wrong at the start: no new change

# --------------------------------------------------------------------------------------- with tblite
def test_benzene_is_d6h_with_the_gfn2_bond_length(tblite):
    mol, x = _conformers("c1ccccc1", n=3)
    xo, e, info = xtb.gfn2_optimise(mol, x, charge=0)
    assert xo.shape == (1, 12, 3) and e.tolist() == [0.0]
    assert info["conformers_optimised"] == 3 and info["conformers_dropped_duplicate"] == 2
    cc = _cc_bonds(mol, xo[0])
    # Six equal bonds (D6h): L-BFGS-B stops at 1e-4 Eh/bohr, which leaves bonds equal to about 1e-4 Å.
    assert np.ptp(cc) < 2e-3
    # Equilibrium C–C of benzene r_e = 1.3915 Å (Gauss & Stanton, J. Phys. Chem. A 2000, 104, 2865; from
    # memory); GFN2-xTB bond lengths of organic molecules are typically within about 0.01–0.02 Å of
    # experiment (Bannwarth, Ehlert & Grimme, J. Chem. Theory Comput. 2019, 15, 1652; from memory).
    # Measured here with tblite 0.8.0: 1.3846 Å.
    assert abs(cc.mean() - 1.3915) < 0.015
    z = xo[0] - xo[0].mean(axis=0)
    assert np.linalg.svd(z, compute_uv=False)[2] < 1e-2     # planar: smallest singular value of the centred atoms
    assert info["method"] == "GFN2-xTB" and info["program"].startswith("tblite ")
    assert info["gradient_tol_Eh_per_bohr"] == 5e-4 and "1652" in info["reference"]


def test_tropylium_cation_is_a_closed_shell_with_seven_equal_bonds(tblite):
    # C7H7+ (6π, D7h; common practice, no source): 48 electrons, closed shell with the charge passed
    mol, x = _conformers("[cH+]1cccccc1")
    xo, _, info = xtb.gfn2_optimise(mol, x, charge=1, unpaired=0)
    assert info["charge"] == 1 and info["unpaired"] == 0 and info["not_converged"] == 0
    cc = _cc_bonds(mol, xo[0])
    assert cc.size == 7 and np.ptp(cc) < 2e-3          # equal to the optimiser's precision, as for benzene
    assert max(info["max_gradient_Eh_per_bohr"]) <= xtb.GRADIENT_TOL_EH_PER_BOHR


@pytest.fixture(scope="module")
def annulene12(tblite):
    mol, x = _conformers(ANNULENE_12)
    return mol, x, xtb.gfn2_optimise(mol, x, charge=0)


def test_annulene12_keeps_its_ez_configuration_and_converges(annulene12):
    mol, x, (xo, e, info) = annulene12
    assert ez_stereo_check(mol, x[0]) == []                  # the MMFF94 start is right ...
    for k in range(xo.shape[0]):
        assert ez_stereo_check(mol, xo[k]) == []             # ... and so is every GFN2 conformer
    assert info["conformers_dropped_ez"] == 0 and info["not_converged"] == 0
    assert max(info["max_gradient_Eh_per_bohr"]) <= xtb.GRADIENT_TOL_EH_PER_BOHR
    assert e[0] == 0.0 and np.all(np.diff(e) >= 0.0)          # sorted by GFN2 energy, relative to the lowest
    # [12]annulene bond-alternates (common practice, no source): short and long C–C differ by > 0.05 Å
    assert np.ptp(_cc_bonds(mol, xo[0])) > 0.05


def test_the_result_is_deterministic(annulene12):
    mol, x, (xo, e, _) = annulene12
    xo2, e2, _ = xtb.gfn2_optimise(mol, x, charge=0)
    assert np.array_equal(xo, xo2) and np.array_equal(e, e2)


def test_an_iteration_limit_keeps_the_result_and_says_so(annulene12):
    mol, x, _ = annulene12
    xo, _, info = xtb.gfn2_optimise(mol, x[:1], charge=0, max_iterations=2)
    assert xo.shape == (1, mol.GetNumAtoms(), 3)
    assert info["not_converged"] == 1 and info["max_gradient_Eh_per_bohr"][0] > xtb.GRADIENT_TOL_EH_PER_BOHR
    assert any("did not reach" in note for note in info["notes"])
