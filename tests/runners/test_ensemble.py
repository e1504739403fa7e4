"""Trajectories and ensembles (ringshift.runners.trajectory): frame averages, streaming, weights, exchange,
damaged files."""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from rdkit import Chem
from scipy import constants, special

from ringshift import fields
from ringshift.errors import GeometryWarning, InputError
from ringshift.io.frames import ENERGY_UNITS, Frame, TrajectoryWarning, iter_sdf_records, iter_xyz_frames, parse_energy
from ringshift.io.structures import load_structure
from ringshift.reporting.json import trajectory_to_dict
from ringshift.runners.averaging import exchange_groups
from ringshift.runners.trajectory import polygon_shielding_frames, predict_trajectory, predict_trajectory_file
from ringshift.shifts.prediction import predict

N_FRAMES = 12


@pytest.fixture(scope="module")
def naphthalene():
    return load_structure("c1ccc2ccccc2c1", conformers=1)


@pytest.fixture(scope="module")
def frames(naphthalene):
    rng = np.random.default_rng(7)
    return naphthalene.coords[0][None] + rng.normal(0.0, 0.06, (N_FRAMES,) + naphthalene.coords.shape[1:])


def _single(structure, xyz):
    return dataclasses.replace(structure, coords=xyz[None], weights=np.array([1.0]), energies_kcal_mol=None)


def _write_xyz(path, mol, stack, comments=None):
    syms = [a.GetSymbol() for a in mol.GetAtoms()]
    with open(path, "w") as fh:
        for k, x in enumerate(stack):
            fh.write(f"{len(syms)}\n{'' if comments is None else comments[k]}\n")
            fh.write("".join(f"{s} {p[0]:.10f} {p[1]:.10f} {p[2]:.10f}\n" for s, p in zip(syms, x)))
    return path


def _write_sdf(path, mol, stack, energies=None):
    w = Chem.SDWriter(str(path))
    for k, x in enumerate(stack):
        m = Chem.Mol(mol)
        m.RemoveAllConformers()
        conf = Chem.Conformer(m.GetNumAtoms())
        conf.SetPositions(np.asarray(x, dtype=float))
        m.AddConformer(conf, assignId=True)
        if energies is not None:
            m.SetProp("energy_kcal_mol", f"{energies[k]:.6f}")
        w.write(m)
    w.close()
    return path


# ------------------------------------------------------------------------------------------ kernel
def test_polygon_shielding_frames_is_the_fields_stack_kernel():
    # The old name is an alias of the one frame-batched kernel, fields.polygon_shielding on a stack; that
    # kernel is compared with its slow twins (per-conformer calls, pure Python) in tests/test_fields.py.
    # Identity of the two calls and the shape check: common practice, no source.
    rng = np.random.default_rng(3)
    th = 2 * np.pi * np.arange(7) / 7
    V = np.c_[1.5 * np.cos(th), 1.5 * np.sin(th), np.zeros(7)][None] + rng.normal(0, 0.05, (30, 7, 3))
    P = rng.uniform(-4, 4, (30, 9, 3))
    N = np.tile([0.0, 0.0, 1.0], (30, 1)) + rng.normal(0, 0.05, (30, 3))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", GeometryWarning)
        np.testing.assert_array_equal(polygon_shielding_frames(P, V, N, separation_A=0.5),
                                      fields.polygon_shielding(P, V, N, separation_A=0.5))
    with pytest.raises(InputError, match=r"\(n_frames, n, 3\)"):
        polygon_shielding_frames(P[0], V[0], N[0])


# ------------------------------------------------------------------------------------------ averages
@pytest.mark.parametrize("model", ["polygon", "johnson-bovey", "haigh-mallion", "dipole"],
                         ids=["polygon", "johnson-bovey", "haigh-mallion", "dipole"])
def test_frame_average_equals_mean_of_single_frame_predictions(naphthalene, frames, model):
    tp = predict_trajectory(naphthalene, frames, model=model, currents="benzene")
    single = np.array([[p.ring_current_ppm for p in predict(_single(naphthalene, x), model=model,
                                                              currents="benzene").protons] for x in frames])
    # mean and population sd of the single-frame runs, numpy as reference (common practice, no source);
    # rtol 1e-10: rounding of a different summation order
    assert_allclose(tp.ring_current_ppm, single.mean(axis=0), rtol=1e-10, atol=1e-12)
    assert_allclose(tp.spread_ppm, single.std(axis=0), rtol=1e-8, atol=1e-12)


def test_per_frame_huckel_currents_equal_single_frame_huckel_predictions(naphthalene, frames):
    tp = predict_trajectory(naphthalene, frames[:4], currents="huckel-per-frame")
    preds = [predict(_single(naphthalene, x)) for x in frames[:4]]
    single = np.array([[p.ring_current_ppm for p in pr.protons] for pr in preds])
    assert_allclose(tp.ring_current_ppm, single.mean(axis=0), rtol=1e-9, atol=1e-12)  # rounding only
    cur = np.array([[c.current_nA_per_T for c in pr.circuits] for pr in preds])
    assert_allclose([c.current_nA_per_T for c in tp.circuits], cur.mean(axis=0), rtol=1e-9)
    assert_allclose([c.current_sd_nA_per_T for c in tp.circuits], cur.std(axis=0), rtol=1e-6, atol=1e-12)


def test_fixed_huckel_currents_are_the_template_currents(naphthalene, frames):
    tp = predict_trajectory(naphthalene, frames[:5])
    fixed = {c.circuit.label: c.current_nA_per_T for c in predict(naphthalene).circuits}
    single = np.array([[p.ring_current_ppm for p in predict(_single(naphthalene, x), set_current=fixed).protons]
                       for x in frames[:5]])
    assert_allclose(tp.ring_current_ppm, single.mean(axis=0), rtol=1e-10, atol=1e-12)  # rounding only
    assert all(c.current_sd_nA_per_T == 0.0 for c in tp.circuits)


def test_rigid_trajectory_has_no_spread_and_equals_predict(naphthalene):
    stack = np.repeat(naphthalene.coords, 6, axis=0)
    tp = predict_trajectory(naphthalene, stack)
    assert_allclose(tp.ring_current_ppm, [p.ring_current_ppm for p in predict(naphthalene).protons], rtol=1e-12)
    assert_allclose(tp.spread_ppm, 0.0, atol=1e-12)   # identical frames (textbook: sd of a constant is 0)


def test_chunking_does_not_change_weighted_statistics(naphthalene, frames):
    rng = np.random.default_rng(11)
    w = rng.uniform(0.1, 2.0, N_FRAMES)
    big = predict_trajectory(naphthalene, frames, weights=w, currents="benzene")
    small = predict_trajectory(naphthalene, frames, weights=w, currents="benzene", memory_MB=1e-3)
    assert small.provenance["chunk_frames"] == 1 and big.provenance["chunk_frames"] >= N_FRAMES
    single = np.array([[p.ring_current_ppm for p in predict(_single(naphthalene, x), currents="benzene").protons]
                       for x in frames])
    mean = np.average(single, axis=0, weights=w)      # numpy weighted mean and variance as reference
    sd = np.sqrt(np.average((single - mean) ** 2, axis=0, weights=w))
    for tp in (big, small):   # Chan-Golub-LeVeque merging is exact up to rounding
        assert_allclose(tp.ring_current_ppm, mean, rtol=1e-10)
        assert_allclose(tp.spread_ppm, sd, rtol=1e-8)
    assert_allclose(big.weights, w / w.sum(), rtol=1e-12)


# ------------------------------------------------------------------------------------------ streaming
def test_streamed_xyz_and_sdf_agree_with_in_memory(naphthalene, frames, tmp_path):
    mem = predict_trajectory(naphthalene, frames, currents="benzene")
    xyz = predict_trajectory(naphthalene, iter_xyz_frames(_write_xyz(tmp_path / "t.xyz", naphthalene.mol, frames)),
                             currents="benzene", memory_MB=0.05)
    sdf = predict_trajectory(naphthalene, iter_sdf_records(_write_sdf(tmp_path / "t.sdf", naphthalene.mol, frames)),
                             currents="benzene")
    assert xyz.provenance["chunk_frames"] < N_FRAMES    # several chunks really streamed
    # the XYZ file holds 10 decimals, the SD file 4 (MOL V2000 format): atol follows the rounding
    assert_allclose(xyz.ring_current_ppm, mem.ring_current_ppm, atol=1e-8)
    assert_allclose(sdf.ring_current_ppm, mem.ring_current_ppm, atol=2e-3)
    assert_allclose(sdf.spread_ppm, mem.spread_ppm, atol=2e-3)


def test_trajectory_file_uses_first_frame_as_template(naphthalene, frames, tmp_path):
    path = _write_xyz(tmp_path / "naph.xyz", naphthalene.mol, frames)
    tp = predict_trajectory_file(path)
    assert tp.n_frames == N_FRAMES and tp.template.structure.name == "naph"
    first = load_structure(str(_write_xyz(tmp_path / "first.xyz", naphthalene.mol, frames[:1])))
    assert_allclose([c.current_nA_per_T for c in tp.circuits],
                    [c.current_nA_per_T for c in predict(first).circuits], rtol=1e-9)   # rounding only
    d = trajectory_to_dict(tp)
    assert d["n_frames"] == N_FRAMES and len(d["protons"]) == 8 and len(d["frames"]["weights"]) == N_FRAMES


# ------------------------------------------------------------------------------------------ weights
def test_boltzmann_weights_from_comment_energies(naphthalene, frames, tmp_path):
    e_h = np.linspace(0.0, 0.004, N_FRAMES)           # Hartree, named by the keyword
    path = _write_xyz(tmp_path / "e.xyz", naphthalene.mol, frames, [f"energy={-1.0 + e:.9f} hartree" for e in e_h])
    tp = predict_trajectory(naphthalene, iter_xyz_frames(path), weights="boltzmann", temperature_K=300.0)
    kcal = constants.physical_constants["Hartree energy"][0] * constants.N_A / 4184.0   # CODATA via SciPy
    rt = constants.R * 300.0 / 4184.0
    want = special.softmax(-e_h * kcal / rt)          # p_k = exp(-E_k/RT)/Z, SciPy softmax as reference
    assert_allclose(tp.weights, want, rtol=1e-6)      # rtol: 9 decimals of Hartree in the file
    assert_allclose(tp.energies_kcal_mol, e_h * kcal, atol=1e-5)


@pytest.mark.parametrize("comment, value", [
    ("energy=-123.4", -123.4), ("-7.5", -7.5), ("E: 2.0 kj/mol", 2.0 / 4.184),
    ("energy_hartree=-0.5", -0.5 * 627.509474), (" energy: -1.25 gnorm: 0.0001 xtb: 6.4.1", -1.25),
    ("Properties=species:S:1 energy=-2.0 ev pbc=\"F F F\"", -2.0 * 23.0605478),
    ("frame 12", None), ("", None)],
    ids=["keyed", "bare", "kj", "suffix-hartree", "xtb-style", "extxyz-ev", "no-energy", "empty"])
def test_parse_energy(comment, value):
    # 1 Hartree = 627.509474 kcal/mol, 1 eV = 23.0605478 kcal/mol (CODATA 2018, from memory); rtol 1e-8
    # covers the digits quoted here
    got = parse_energy(comment)
    if value is None:
        assert got is None
    else:
        assert_allclose(got, value, rtol=1e-8)


def test_energy_unit_factors_match_codata():
    c = constants.physical_constants
    # CODATA via SciPy; rtol 1e-12: the module derives them from the same constants
    assert_allclose(ENERGY_UNITS["hartree"], c["Hartree energy"][0] * constants.N_A / 4184.0, rtol=1e-12)
    assert_allclose(ENERGY_UNITS["ev"], constants.e * constants.N_A / 4184.0, rtol=1e-12)
    assert_allclose(ENERGY_UNITS["hartree"], 627.509474, rtol=1e-8)   # CODATA 2018 table value, from memory


# ------------------------------------------------------------------------------------------ exchange
def test_exchange_average_is_arithmetic_mean_of_the_sites(naphthalene, frames):
    slow = predict_trajectory(naphthalene, frames, currents="benzene")
    hs = list(slow.h_indices)
    group = [hs[0], hs[2], hs[5]]                     # an arbitrary set of sites
    fast = predict_trajectory(naphthalene, frames, currents="benzene", exchange=[group])
    k = [hs.index(h) for h in group]
    # fast-exchange limit: the observed shift is the mean of the sites (Gutowsky & Holm, J. Chem. Phys.
    # 1956, 25, 1228); equal populations -> arithmetic mean; rounding only
    assert_allclose(fast.ring_current_ppm[k], np.mean(slow.ring_current_ppm[k]), rtol=1e-12)
    assert_allclose(fast.ring_current_slow_ppm, slow.ring_current_ppm, rtol=1e-12)
    others = [i for i in range(len(hs)) if i not in k]
    assert_allclose(fast.ring_current_ppm[others], slow.ring_current_ppm[others], rtol=1e-12)
    assert any(set(group) <= set(g.atoms) for g in fast.groups)


def test_auto_exchange_groups_follow_rdkit_ranks():
    s = load_structure("CC(C)c1ccccc1", conformers=1)   # cumene: the two CH3 groups and ring H pairs
    rank = list(Chem.CanonicalRankAtoms(s.mol, breakTies=False))   # RDKit as reference
    want = {}
    for a in s.mol.GetAtoms():
        if a.GetAtomicNum() == 1:
            want.setdefault(rank[a.GetIdx()], []).append(a.GetIdx())
    assert set(exchange_groups(s.mol, "auto")) == {tuple(v) for v in want.values() if len(v) > 1}
    assert exchange_groups(s.mol, None) == ()


def test_auto_exchange_keeps_diastereotopic_protons_apart():
    # (R)-butan-2-ol: the C3 methylene protons are diastereotopic (no motion exchanges them; Eliel & Wilen,
    # Stereochemistry of Organic Compounds, Wiley 1994, ch. 8, from memory), although RDKit's canonical ranks
    # lump them; "auto" follows the structure commands' fast-exchange rule and keeps them apart
    s = load_structure("C[C@@H](O)CC", conformers=1)
    ch2 = sorted(n.GetIdx() for n in s.mol.GetAtomWithIdx(3).GetNeighbors() if n.GetAtomicNum() == 1)
    rank = list(Chem.CanonicalRankAtoms(s.mol, breakTies=False))
    assert rank[ch2[0]] == rank[ch2[1]]                      # the ranks alone would merge them
    assert not any(set(ch2) <= set(g) for g in exchange_groups(s.mol, "auto"))
    assert any(len(g) == 3 for g in exchange_groups(s.mol, "auto"))   # the methyls still average


@pytest.mark.parametrize("bad, msg", [([[0, 1]], "not hydrogens"), ([[10, 11], [11, 12]], "two exchange groups"),
                                      ("fast", "'auto'")], ids=["heavy-atom", "overlap", "word"])
def test_bad_exchange_groups(naphthalene, bad, msg):
    with pytest.raises(InputError, match=msg):
        exchange_groups(naphthalene.mol, bad)


# ------------------------------------------------------------------------------------------ damaged files
def test_truncated_final_xyz_frame_is_reported_and_skipped(naphthalene, frames, tmp_path):
    path = _write_xyz(tmp_path / "cut.xyz", naphthalene.mol, frames[:5])
    text = path.read_text()
    path.write_text(text[: len(text) - 120])           # cut inside frame 5
    with pytest.warns(TrajectoryWarning, match="frame 5 is truncated"):
        tp = predict_trajectory(naphthalene, iter_xyz_frames(path), currents="benzene")
    assert tp.n_frames == 4 and list(tp.frame_numbers) == [1, 2, 3, 4]
    assert tp.provenance["frames_skipped"][0][0] == 5
    want = predict_trajectory(naphthalene, frames[:4], currents="benzene")
    assert_allclose(tp.ring_current_ppm, want.ring_current_ppm, atol=1e-8)   # 10-decimal file
    with pytest.raises(InputError, match="frame 5 is truncated"):
        list(iter_xyz_frames(path, strict=True))


def test_xyz_frame_with_other_atoms_names_the_frame(naphthalene, frames, tmp_path):
    path = _write_xyz(tmp_path / "a.xyz", naphthalene.mol, frames[:3])
    lines = path.read_text().splitlines(keepends=True)
    n = naphthalene.mol.GetNumAtoms()
    bad_count = lines[: 2 * (n + 2)] + [f"{n - 1}\n", "\n"] + lines[2 * (n + 2) + 2: 3 * (n + 2) - 1]
    (tmp_path / "b.xyz").write_text("".join(bad_count))
    with pytest.raises(InputError, match="frame 3 has 17 atoms, frame 1 has 18"):
        list(iter_xyz_frames(tmp_path / "b.xyz"))
    swapped = list(lines)
    i, j = n + 2 + 2, n + 2 + 2 + 12                   # frame 2: a C line and an H line swap places
    swapped[i], swapped[j] = swapped[j], swapped[i]
    (tmp_path / "c.xyz").write_text("".join(swapped))
    with pytest.raises(InputError, match="frame 2 does not list the atoms of frame 1 in the same order"):
        list(iter_xyz_frames(tmp_path / "c.xyz"))


def test_unreadable_sd_record_is_reported_with_its_number(naphthalene, frames, tmp_path):
    path = _write_sdf(tmp_path / "t.sdf", naphthalene.mol, frames[:4])
    recs = path.read_text().split("$$$$\n")
    recs[1] = "broken\n  no counts line\n\nnot a mol block\nM  END\n"
    path.write_text("$$$$\n".join(recs))
    with pytest.warns(TrajectoryWarning, match="record 2 is not a readable MOL block"):
        got = [f.number for f in iter_sdf_records(path)]
    assert got == [1, 3, 4]
    other = Chem.AddHs(Chem.MolFromSmiles("c1ccccc1"))
    Chem.rdDistGeom.EmbedMolecule(other, randomSeed=1)
    _write_sdf(tmp_path / "m.sdf", naphthalene.mol, frames[:2])
    with open(tmp_path / "m.sdf", "a") as fh:
        fh.write(Chem.MolToMolBlock(other) + "$$$$\n")
    with pytest.raises(InputError, match="record 3 has 12 atoms, record 1 has 18"):
        list(iter_sdf_records(tmp_path / "m.sdf"))


# ------------------------------------------------------------------------------------------ bad input
def test_bad_trajectory_options(naphthalene, frames):
    with pytest.raises(InputError, match="model"):
        predict_trajectory(naphthalene, frames, model="circle")
    with pytest.raises(InputError, match="frame 1 has no energy"):
        predict_trajectory(naphthalene, frames, weights="boltzmann")
    with pytest.raises(InputError, match="got 3 weights, fewer than the frames"):
        predict_trajectory(naphthalene, frames, weights=[1.0, 1.0, 1.0], currents="benzene")
    with pytest.raises(InputError, match="got 13 weights for 12 frames"):
        predict_trajectory(naphthalene, frames, weights=np.ones(13), currents="benzene")
    with pytest.raises(InputError, match="has coordinates of shape"):
        predict_trajectory(naphthalene, [Frame(1, frames[0][:5])])
    with pytest.raises(InputError, match="memory_MB"):
        predict_trajectory(naphthalene, frames, memory_MB=0)
    with pytest.raises(InputError, match="no frame"):
        predict_trajectory(naphthalene, frames[:0])
