"""Circuit perception and ring geometry."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from rdkit import Chem
from scipy.spatial.transform import Rotation

from ringshift.errors import InputError
from ringshift.geometry.circuits import circuit_geometry, find_circuits, plane_fit_rms, ring_p_axes


def _mol(smi):
    return Chem.AddHs(Chem.MolFromSmiles(smi))


# Faces of ordinary fused aromatics equal RDKit's SSSR rings (reference library: RDKit ring perception).
@pytest.mark.parametrize(
    "smiles",
    ["c1ccccc1", "c1ccc2ccccc2c1", "c1ccc2cc3ccccc3cc2c1", "c1ccc2cccc2cc1", "c1ccncc1", "c1cc[nH]c1",
     "c1ccc2[nH]ccc2c1"],
    ids=["benzene", "naphthalene", "anthracene", "azulene", "pyridine", "pyrrole", "indole"],
)
def test_faces_match_rdkit_sssr_for_fused_aromatics(smiles):
    mol = _mol(smiles)
    faces = {frozenset(c.atoms) for c in find_circuits(mol) if c.carries_loop}
    rdkit_rings = {frozenset(r) for r in mol.GetRingInfo().AtomRings()}
    assert faces == rdkit_rings


def test_perimeter_of_naphthalene_is_the_10_ring():
    # Naphthalene's perimeter is the 10-atom outline (textbook, common practice, no source).
    circuits = find_circuits(_mol("c1ccc2ccccc2c1"))
    per = [c for c in circuits if c.kind == "perimeter"]
    assert len(per) == 1 and per[0].size == 10 and not per[0].carries_loop


def test_bridged_annulene_circuit_is_the_10_perimeter():
    # 1,6-methano[10]annulene: the conjugated circuit is the 10-atom perimeter; RDKit's own rings are
    # the two 7-rings through the CH2 bridge (design notes §6; Vogel & Roth, Angew. Chem. 1964, from memory).
    mol = _mol("C1=CC=C2CC(=C1)C=CC=C2")
    rdkit_sizes = sorted(len(r) for r in mol.GetRingInfo().AtomRings())
    assert rdkit_sizes == [7, 7]
    loops = [c for c in find_circuits(mol) if c.carries_loop]
    assert [c.size for c in loops] == [10]
    bridge = [a.GetIdx() for a in mol.GetAtoms() if a.GetSymbol() == "C" and a.GetTotalNumHs() == 2]
    assert not set(bridge) & set(loops[0].atoms)


def test_porphine_faces():
    # Porphine: 24 pi atoms, 28 pi bonds → cycle space of dimension 28 − 24 + 1 = 5 (Euler, textbook):
    # four pyrrole rings and the inner 16-ring.
    mol = _mol("C1=CC2=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=CC1=N2)N5")
    loops = [c for c in find_circuits(mol) if c.carries_loop]
    assert sorted(c.size for c in loops) == [5, 5, 5, 5, 16]


def test_user_circuit_validation():
    mol = _mol("c1ccccc1")
    (c,) = find_circuits(mol, user_circuits=[[0, 1, 2, 3, 4, 5]])
    assert c.kind == "user" and c.atoms == (0, 1, 2, 3, 4, 5)
    with pytest.raises(InputError, match="not bonded"):
        find_circuits(mol, user_circuits=[[0, 2, 1, 3, 4, 5]])
    with pytest.raises(InputError, match="out of range"):
        find_circuits(mol, user_circuits=[[0, 1, 99]])


def _hexagon(side=1.397):
    ang = np.arange(6) * np.pi / 3
    return np.stack([side * np.cos(ang), side * np.sin(ang), np.zeros(6)], axis=1)


def test_regular_hexagon_geometry():
    # Regular hexagon: circumradius = side, area = 3*sqrt(3)/2 * side^2 (textbook geometry).
    hexa = _hexagon()
    geo = circuit_geometry(hexa[None], list(range(6)))
    assert_allclose(geo.radius_A, [1.397], rtol=1e-12)
    assert_allclose(geo.area_A2, [1.5 * np.sqrt(3) * 1.397**2], rtol=1e-12)
    assert_allclose(geo.planarity_rms_A, [0.0], atol=1e-12)
    assert_allclose(geo.normal[0], [0, 0, 1], atol=1e-12)  # counter-clockwise about +z
    assert_allclose(geo.max_misalignment_deg, [0.0], atol=1e-6)


def test_normal_follows_atom_order():
    hexa = _hexagon()
    geo = circuit_geometry(hexa[None], [0, 5, 4, 3, 2, 1])
    assert_allclose(geo.normal[0], [0, 0, -1], atol=1e-12)


def test_chair_is_not_planar():
    # Cyclohexane chair: alternate atoms ±0.25 Å from the mean plane (textbook geometry, from memory);
    # RMS deviation equals that displacement exactly for an ideal ±h puckering.
    hexa = _hexagon(1.45)
    hexa[:, 2] = 0.25 * (-1.0) ** np.arange(6)
    geo = circuit_geometry(hexa[None], list(range(6)))
    assert_allclose(geo.planarity_rms_A, [0.25], rtol=1e-12)
    assert geo.max_misalignment_deg[0] > 10


def test_collinear_ring_is_refused():
    pts = np.zeros((1, 3, 3))
    pts[0, :, 0] = [0.0, 1.0, 2.0]
    with pytest.raises(InputError, match="collinear"):
        circuit_geometry(pts, [0, 1, 2])


@settings(max_examples=40, deadline=None)
@given(
    rot=st.lists(st.floats(-np.pi, np.pi), min_size=3, max_size=3),
    shift=st.lists(st.floats(-50, 50), min_size=3, max_size=3),
    n=st.integers(3, 20),
    seed=st.integers(0, 10_000),
)
def test_geometry_is_invariant_under_rigid_motions(rot, shift, n, seed):
    # Invariance under rotation and translation (common practice, no source).
    rng = np.random.default_rng(seed)
    ang = np.sort(rng.uniform(0, 2 * np.pi, n))
    ang += np.linspace(0, 2 * np.pi, n, endpoint=False) - ang  # keep a convex, well-spread polygon
    r = rng.uniform(1.0, 4.0)
    pts = np.stack([r * np.cos(ang), r * np.sin(ang), rng.normal(0, 0.05, n)], axis=1)
    R = Rotation.from_euler("xyz", rot).as_matrix()
    moved = pts @ R.T + np.asarray(shift)
    a = circuit_geometry(pts[None], list(range(n)))
    b = circuit_geometry(moved[None], list(range(n)))
    assert_allclose(b.radius_A, a.radius_A, rtol=1e-9)
    assert_allclose(b.area_A2, a.area_A2, rtol=1e-9)
    assert_allclose(b.planarity_rms_A, a.planarity_rms_A, atol=1e-9)
    assert_allclose(b.normal[0], R @ a.normal[0], atol=1e-9)


def test_plane_fit_stack_shapes():
    pts = np.stack([_hexagon(), _hexagon(1.5)])
    c, n, rms = plane_fit_rms(pts)
    assert c.shape == (2, 3) and n.shape == (2, 3) and rms.shape == (2,)


def test_p_orbital_axis_is_poav1_with_unequal_bonds():
    # POAV1: the p-orbital axis makes equal angles with the three sigma bonds of a pyramidal atom
    # (Haddon, Acc. Chem. Res. 1988, 21, 243, from memory), whatever the bond lengths. 1e-10: rounding.
    rng = np.random.default_rng(5)
    for _ in range(20):
        dirs = rng.normal(size=(3, 3)) + np.array([0.0, 0.0, -1.5])   # three bonds pointing downwards
        dirs /= np.linalg.norm(dirs, axis=1)[:, None]
        xyz = np.vstack([np.zeros(3), dirs * rng.uniform(1.0, 1.6, (3, 1))])[None]
        axis = ring_p_axes(xyz, [0], [[1, 2, 3]])[0, 0]
        cosines = dirs @ axis
        assert_allclose(cosines, np.full(3, cosines[0]), atol=1e-10)


def test_ring_axes_equal_the_huckel_axes():
    # One definition for the reported misalignment and the Hueckel overlap (common practice, no source):
    # the ring-geometry axes equal the sign-oriented Hueckel axes up to sign on a bent MMFF structure.
    from ringshift.geometry import planes as pg
    from ringshift.io.structures import load_structure

    s = load_structure("C1=CC=CC=CC=C1", conformers=1, seed=3)   # tub-shaped cyclooctatetraene
    atoms = [a.GetIdx() for a in s.mol.GetAtoms() if a.GetAtomicNum() == 6]
    nbrs = [[n.GetIdx() for n in s.mol.GetAtomWithIdx(a).GetNeighbors()] for a in atoms]
    ring = ring_p_axes(s.coords[:1], atoms, nbrs)[0]
    bonds = [(k, (k + 1) % 8) for k in range(8)]
    hu = pg.p_orbital_axes(s.coords[0], atoms, nbrs, bonds)[0]
    assert_allclose(np.abs(np.einsum("ij,ij->i", ring, hu)), np.ones(8), atol=1e-12)


def test_near_linear_ring_atoms_follow_the_ring_normal():
    # sp-like ring atoms (bond angle 165 deg in a regular 24-gon) have no p-axis of their own: the cross
    # product of two nearly antiparallel bonds swings with 0.03 A of noise. They follow the ring normal, so
    # the misalignment stays small while the RMS deviation reports the noise (common practice, no source).
    rng = np.random.default_rng(2)
    t = 2 * np.pi * np.arange(24) / 24
    ring = np.stack([4.0 * np.cos(t), 4.0 * np.sin(t), rng.normal(0, 0.03, 24)], axis=1)
    geo = circuit_geometry(ring[None], list(range(24)))
    assert geo.max_misalignment_deg[0] < 3.0
    assert 0.01 < geo.planarity_rms_A[0] < 0.06


def test_pigeometry_plane_fit_single_equals_stack_and_follows_atom_order():
    # A rotated regular hexagon lies in the rotated xy plane; its normal is the rotated +z when the atoms
    # run counter-clockwise (right-hand rule, textbook). 1e-12: rounding.
    from ringshift.geometry import planes as pg

    R = Rotation.from_euler("xyz", [0.3, -1.1, 2.0]).as_matrix()
    hexa = _hexagon() @ R.T + np.array([1.0, -2.0, 0.5])
    c, n, dev = pg.plane_fit(hexa)
    cs, ns, devs = pg.plane_fit(hexa[None])
    assert_allclose(n, R @ np.array([0.0, 0.0, 1.0]), atol=1e-12)
    assert_allclose(dev, np.zeros(6), atol=1e-12)
    assert_allclose(cs[0], c, atol=1e-12)
    assert_allclose(ns[0], n, atol=1e-12)
    assert_allclose(devs[0], dev, atol=1e-12)
    assert_allclose(pg.plane_fit(hexa[::-1])[1], -n, atol=1e-12)
