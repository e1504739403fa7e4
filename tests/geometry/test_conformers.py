"""Conformer search for macrocycles and polycycles: planar perimeters found for every seed, E/Z kept, determinism."""

from __future__ import annotations

import os
import signal
import threading
import time

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal
from rdkit import Chem
from rdkit.Chem import rdForceFieldHelpers

from ringshift.geometry import conformers as cf
from ringshift.geometry import macrocycle as mc
from ringshift.io.molecule_files import _mol_from_smiles

ANNULENE_18 = "[H]/C1=C/C=C/C=C/C=C\\C=C\\C=C\\C=C/C=C/C=C1\\[H]"     # design notes §6
# Lowest MMFF94 energy of [18]annulene (RDKit's MMFF94, absolute, kcal/mol) from a larger search: 8 seeds x 200
# ETKDG embeddings, each minimised as embedded and after projection onto its plane (3186 minimisations, measured
# 2026-12-04); the planar D6h conformer with 6 inner H. Tolerance 0.05 kcal/mol: minimiser convergence.
ANNULENE_18_LOWEST_KCAL_MOL = 107.43


def _mmff_energy(mol: Chem.Mol, x: np.ndarray) -> float:
    m = Chem.Mol(mol)
    m.RemoveAllConformers()
    conf = Chem.Conformer(m.GetNumAtoms())
    conf.SetPositions(x)
    m.AddConformer(conf)
    props = rdForceFieldHelpers.MMFFGetMoleculeProperties(m)
    return float(rdForceFieldHelpers.MMFFGetMoleculeForceField(m, props).CalcEnergy())


def _inner_h(x: np.ndarray) -> int:
    """Hydrogens closer to the ring centroid than their carbon (ring atoms 0..17, H 18..35)."""
    c = x[:18].mean(axis=0)
    parent = np.linalg.norm(x[:18] - c, axis=1)
    return sum(np.linalg.norm(x[18 + k] - c) < parent[k] for k in range(18))


@pytest.fixture(scope="module")
def annulene():
    return _mol_from_smiles(ANNULENE_18)[0]


@pytest.mark.parametrize("seed", [0, 1, 2, 3, 7, 42, 99, 12345], ids=lambda s: f"seed{s}")
def test_annulene18_lowest_mmff_conformer_for_every_seed(annulene, seed):
    coords, energies, info = cf._generate(annulene, cf.default_conformer_count(annulene), seed, 10.0, 0.3, "test")
    best = coords[0]
    assert_allclose(_mmff_energy(annulene, best), ANNULENE_18_LOWEST_KCAL_MOL, atol=0.05)
    # planar with 6 inner and 12 outer H (Jackman, Sondheimer et al., J. Am. Chem. Soc. 1962, 84, 4307, from
    # memory); 0.01 Å: the planar MMFF94 minimum comes out planar to 1e-4 Å after the 0.02 Å noise.
    assert mc.planarity_rms_A(best, list(range(18))) < 0.01 and info["planarity_rms_A"] < 0.01
    assert _inner_h(best) == 6
    assert energies is not None and energies[0] == 0.0
    for x in coords:                                   # E/Z of every kept conformer as in the SMILES
        assert cf.ez_stereo_check(annulene, x) == []
    assert info["search"] == "multi-seed+flat-starts" and len(info["search_seeds"]) == 4
    assert info["search_seeds"][0] == seed and info["candidates_perimeter"] >= 1


def test_same_seed_gives_identical_search(annulene):
    # common practice, no source: a seeded run reproduces exactly (embeddings, flat-start noise, ranking)
    a = cf._generate(annulene, 16, 5, 30.0, 0.3, "test")
    b = cf._generate(annulene, 16, 5, 30.0, 0.3, "test")
    assert_array_equal(a[0], b[0])
    assert_array_equal(a[1], b[1])
    assert a[2] == b[2]


def test_derived_seeds_are_deterministic_and_in_range():
    s = mc.derived_seeds(42, 4)
    assert s == mc.derived_seeds(42, 4) and s[0] == 42 and len(set(s)) == 4
    assert all(0 <= k < mc.MAX_SEED for k in s)
    assert mc.derived_seeds(7, 1) == [7] and mc.derived_seeds(43, 4) != s


def test_honeycomb_perimeter_of_annulene18_is_the_coronene_perimeter(annulene):
    ring = mc.perimeter_rings(annulene)
    assert ring == [list(range(18))]
    paths, complete = mc.honeycomb_perimeters(mc.ring_cis_pattern(cf._cis_references(annulene), ring[0]))
    assert complete and paths
    # largest enclosed area first: the 18-atom perimeter of coronene encloses 7 hexagons of area 3√3/2 L²
    # (textbook geometry); the closure property is checked on every path
    x = mc.lattice_coordinates(paths[0], 1.0)
    area = 0.5 * abs(np.sum(x[:, 0] * np.roll(x[:, 1], -1) - np.roll(x[:, 0], -1) * x[:, 1]))
    assert_allclose(area, 7 * 1.5 * np.sqrt(3.0), rtol=1e-12)
    for p in paths:
        y = mc.lattice_coordinates(p, 1.0)
        assert_allclose(np.linalg.norm(np.roll(y, -1, axis=0) - y, axis=1), 1.0, atol=1e-12)   # closed, unit bonds
        assert len(set(p)) == 18                                                               # self-avoiding


def test_honeycomb_small_cases():
    # benzene: all ring dihedrals cis, exactly one closed path (the hexagon); common practice, no source
    paths, _ = mc.honeycomb_perimeters([True] * 6)
    assert len(paths) == 1
    assert mc.honeycomb_perimeters([None] * 7)[0] == []          # odd rings cannot close on the honeycomb
    assert mc.honeycomb_perimeters([False] * 6)[0] == []         # all-trans 6-ring: a zig-zag, never closed


def _annulene14_from_pyrene_perimeter() -> Chem.Mol:
    """[14]annulene with the E/Z of the planar pyrene-perimeter shape (4 inner H), stereo set on the ring bonds."""
    paths, _ = mc.honeycomb_perimeters([None] * 14)
    x = mc.lattice_coordinates(paths[0])
    rw = Chem.RWMol()
    for _ in range(14):
        rw.AddAtom(Chem.Atom(6))
    for k in range(14):
        rw.AddBond(k, (k + 1) % 14, Chem.BondType.DOUBLE if k % 2 == 0 else Chem.BondType.SINGLE)
    mol = rw.GetMol()
    Chem.SanitizeMol(mol, Chem.SanitizeFlags.SANITIZE_ALL ^ Chem.SanitizeFlags.SANITIZE_SETAROMATICITY)
    for k in range(0, 14, 2):
        a, d = (k - 1) % 14, (k + 2) % 14
        b = mol.GetBondBetweenAtoms(k, k + 1)
        dih = cf._dihedral_deg(x[a], x[k], x[k + 1], x[d])
        b.SetStereoAtoms(a, d)
        b.SetStereo(Chem.BondStereo.STEREOCIS if abs(dih) < 90 else Chem.BondStereo.STEREOTRANS)
    return Chem.AddHs(mol)


def test_annulene14_perimeter_start_keeps_ez():
    mol = _annulene14_from_pyrene_perimeter()
    coords, _, info = cf._generate(mol, 12, 3, 10.0, 0.3, "test")
    assert info["perimeter_closures_found"] >= 1 and info["candidates_perimeter"] >= 1
    for x in coords:
        assert cf.ez_stereo_check(mol, x) == []


@pytest.mark.parametrize(("smiles", "expected"), [
    ("c1ccccc1", False), ("c1ccc2ccccc2c1", False), ("CCCCc1ccccc1", False),
    ("C1(C2)=CC=CC=C2C=CC=C1", True),                            # 1,6-methano[10]annulene (bridged)
    ("C1=CC=C2C=CC3=CC=CC4=CC=C1[C@@]2(C)[C@@]34C", True),         # trans-15,16-dimethyldihydropyrene (4 rings)
    ("C1Cc2ccc(cc2)CCc2ccc1cc2", True),                           # [2.2]paracyclophane (12-ring)
    ("c1cc2cc3ccc(cc4ccc(cc5ccc(cc1n2)[nH]5)n4)[nH]3", True),       # porphine (16-ring)
], ids=["benzene", "naphthalene", "butylbenzene", "methano10", "dhp", "paracyclophane", "porphine"])
def test_needs_search(smiles, expected):
    assert mc.needs_search(_mol_from_smiles(smiles)[0]) is expected


def test_bridged_annulene_search_reports_its_bent_perimeter():
    mol = _mol_from_smiles("C1(C2)=CC=CC=C2C=CC=C1")[0]
    assert mol.GetNumAtoms() == 21                                # C11H10
    coords, _, info = cf._generate(mol, cf.default_conformer_count(mol), 42, 10.0, 0.3, "test")
    assert info["planarity_atoms"] == 10
    # the 10 perimeter carbons of 1,6-methano[10]annulene are not coplanar (X-ray: a shallow boat, Bianchi et
    # al., Acta Cryst. B 1980, 36, 3146, from memory); MMFF94 gives 0.26 Å RMS (measured). Bounds 0.1-0.5 Å.
    assert 0.1 < info["planarity_rms_A"] < 0.5
    assert coords.shape[0] >= 1


def test_default_counts():
    assert cf.default_conformer_count(_mol_from_smiles("c1ccccc1")[0]) == 30
    assert cf.default_conformer_count(_mol_from_smiles(ANNULENE_18)[0]) == 1200 // 36


def test_genuine_embedding_failure_is_not_taken_for_ctrl_c():
    # [2.2]paracyclophane fails with basic knowledge (design notes §7): every attempt is spent, nothing raised
    mol = _mol_from_smiles("C1Cc2ccc(cc2)CCc2ccc1cc2")[0]
    assert cf._embed_confs(mol, 2, cf._etkdg(1, True, 1, 20)) == []


@pytest.mark.skipif(not hasattr(signal, "SIGINT") or os.name != "posix", reason="POSIX signals")
def test_ctrl_c_during_embedding_raises_instead_of_falling_back():
    # design notes §6: RDKit cancels on Ctrl-C and returns no conformer; the failing basic-knowledge embedding of
    # [2.2]paracyclophane runs ~20 s, so a SIGINT after 0.5 s lands inside it
    mol = _mol_from_smiles("C1Cc2ccc(cc2)CCc2ccc1cc2")[0]
    timer = threading.Timer(0.5, lambda: os.kill(os.getpid(), signal.SIGINT))
    t0 = time.perf_counter()
    timer.start()
    with pytest.raises(KeyboardInterrupt, match="conformer embedding cancelled"):
        cf._embed_confs(mol, 4, cf._etkdg(1, True, 1))
    timer.join()
    assert time.perf_counter() - t0 < 10.0


PORPHINE = "c1cc2cc3ccc(cc4ccc(cc5ccc(cc1n2)[nH]5)n4)[nH]3"


def test_rigid_porphine_search_stops_after_two_rounds():
    # porphine has one MMFF94 minimum (planar D2h core; X-ray of porphine: Webb & Fleischer, J. Chem. Phys. 1965,
    # 43, 3100, from memory): round 1 finds it, round 2 adds nothing, so the search stops at 16 of 31 embeddings
    mol = _mol_from_smiles(PORPHINE)[0]
    n = cf.default_conformer_count(mol)
    coords, _, info = cf._generate(mol, n, 42, 10.0, 0.3, "test")
    assert n == 1200 // 38 and info["conformers_requested"] == n
    assert info["search_rounds"] == 2 and info["search_stop"] == "converged"
    assert info["conformers_embedded"] == 2 * cf._ROUND_PER_SEED * cf._SEARCH_SEEDS < n
    assert coords.shape[0] == 1 and mc.planarity_rms_A(coords[0], mc.conjugated_ring_atoms(mol)) < 0.05


def test_search_never_exceeds_the_count_and_small_molecules_keep_one_round():
    mol = _mol_from_smiles("[H]/C1=C/C=C\\C=C/C=C\\C=C/C=C\\C=C1\\[H]")[0]      # [14]annulene, flexible
    _, _, info = cf._generate(mol, 12, 0, 10.0, 0.3, "test")
    assert info["conformers_embedded"] <= 12 and info["search_stop"] in ("cap", "converged")
    assert info["search_rounds"] == 2                           # 8 + 4 embeddings: the cap cuts round 2
    benzene = _mol_from_smiles("c1ccccc1")[0]
    _, _, info = cf._generate(benzene, 30, 42, 10.0, 0.3, "test")
    assert info["search_rounds"] == 1 and info["search_stop"] == "fixed-count" and info["conformers_embedded"] == 30


def test_new_minima_rule():
    # synthetic (invented) coordinates: 3 points, identity permutation only
    x = np.array([[[0, 0, 0], [1, 0, 0], [0, 1, 0]],
                  [[0, 0, 0], [1, 0, 0], [0, 1, 0]],              # duplicate of 0
                  [[0, 0, 0], [3, 0, 0], [0, 3, 0]],              # distinct shape
                  [[0, 0, 0], [2, 0, 0], [0, 2, 0]]], dtype=float)
    perms = np.array([[0, 1, 2]])
    e = np.array([0.0, 0.1, 5.0, 50.0])
    assert cf._new_minima(x, e, [0], [1], perms, 10.0, 0.3) == 0          # duplicate: not new
    assert cf._new_minima(x, e, [0], [1, 2], perms, 10.0, 0.3) == 1       # distinct, within the window
    assert cf._new_minima(x, e, [0], [3], perms, 10.0, 0.3) == 0          # distinct but 50 kcal/mol above
    assert cf._new_minima(x, None, [0], [3], perms, 10.0, 0.3) == 1       # no force field: shape alone
    assert cf._new_minima(x, e, [], [], perms, 10.0, 0.3) == 0            # nothing passed the E/Z check


def test_progress_is_quiet_off_a_terminal(capsys):
    p = cf._Progress()
    p.t0 -= 10.0                                                  # as if the search had run 10 s
    p.update("round 3")
    p.close()
    assert capsys.readouterr().err == ""                          # pytest's captured stderr is not a terminal
    p = cf._Progress()
    p.tty = True                                                  # as on a terminal
    p.update("round 1")
    assert capsys.readouterr().err == ""                          # a search shorter than 2 s stays silent
    p.t0 -= 10.0
    p.update("round 2")
    p.close()
    err = capsys.readouterr().err
    assert "conformer search: round 2" in err and err.endswith("\r\033[K")   # the line is erased at the end
