"""Tests of ringshift.geometry.symmetry: equivalent protons for slow and fast exchange.

Geometries come from ideal constructions written as XYZ text ([18]annulene) or from RDKit's own embedding
and MMFF94 (small molecules), so nothing here depends on ringshift's conformer search. Each chemistry fact
names its source; tolerances are stated where numbers are compared.
"""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms

from ringshift.errors import InputError
from ringshift.geometry.symmetry import EXCHANGE_RULES, _merge, fast_exchange_classes, group_equivalent_hydrogens
from ringshift.io.structures import load_structure


def annulene18_d6h_xyz(cc_A: float = 1.40, ch_A: float = 1.08) -> tuple[str, set[int]]:
    """Planar D6h [18]annulene as XYZ text (carbons 0-17 around the ring, H 18-35 with H 18+k on C k) and the
    indices of the six inner H.

    Construction (common practice, no source): the carbon ring is the 18-atom perimeter of coronene on a
    regular hexagonal lattice (C-C ``cc_A``, all ring angles 120 deg). The six perimeter carbons that coronene
    bonds to its central hexagon carry inner H pointing along that removed bond; the twelve others carry
    outer H on the external bisector; C-H ``ch_A``.
    """
    a = cc_A
    centres = [np.zeros(2)] + [np.sqrt(3.0) * a * np.array([np.cos(np.pi / 6 + k * np.pi / 3),
                                                             np.sin(np.pi / 6 + k * np.pi / 3)]) for k in range(6)]
    lattice: list[np.ndarray] = []
    for c in centres:
        for k in range(6):
            p = c + a * np.array([np.cos(k * np.pi / 3), np.sin(k * np.pi / 3)])
            if not any(np.linalg.norm(p - q) < 0.1 for q in lattice):
                lattice.append(p)
    pts = np.array(lattice)
    radius = np.linalg.norm(pts, axis=1)
    ring = pts[radius > 1.1 * a]
    ring = ring[np.argsort(np.arctan2(ring[:, 1], ring[:, 0]))]
    hub = pts[radius < 1.1 * a]
    hs, inner = [], set()
    for k, p in enumerate(ring):
        if np.linalg.norm(p) < 2.2 * a:                 # bonded to the central hexagon of coronene
            q = hub[np.argmin(np.linalg.norm(hub - p, axis=1))]
            u = q - p
            inner.add(18 + k)
        else:
            u = 2 * p - ring[k - 1] - ring[(k + 1) % 18]
        hs.append(p + ch_A * u / np.linalg.norm(u))
    lines = [f"C {x:.6f} {y:.6f} 0.000000" for x, y in ring] + [f"H {x:.6f} {y:.6f} 0.000000" for x, y in hs]
    return "36\nD6h [18]annulene, ideal geometry (synthetic)\n" + "\n".join(lines) + "\n", inner


@pytest.fixture(scope="module")
def annulene18_path(tmp_path_factory):
    text, inner = annulene18_d6h_xyz()
    path = tmp_path_factory.mktemp("annulene") / "annulene18.xyz"
    path.write_text(text)
    return str(path), inner


def _embedded(smiles: str, seed: int = 7) -> tuple[Chem.Mol, np.ndarray]:
    """Explicit-H molecule and one RDKit ETKDG + MMFF94 geometry (n_atoms, 3), Å."""
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    assert AllChem.EmbedMolecule(mol, randomSeed=seed) == 0
    AllChem.MMFFOptimizeMolecule(mol, maxIters=2000)
    return mol, mol.GetConformer().GetPositions()


def _sizes(groups) -> list[int]:
    return sorted(len(g) for g in groups)


def _h_of(mol: Chem.Mol, atom: int) -> tuple[int, ...]:
    return tuple(sorted(n.GetIdx() for n in mol.GetAtomWithIdx(atom).GetNeighbors() if n.GetAtomicNum() == 1))


# ------------------------------------------------------------------------------ [18]annulene
def test_annulene18_slow_two_groups_fast_one_group(annulene18_path):
    path, inner = annulene18_path
    outer = set(range(18, 36)) - inner
    slow = load_structure(path, exchange="slow")
    fast = load_structure(path, exchange="fast")
    # Low temperature (about -60 C): 12 outer H and 6 inner H, two lines; high temperature (about +110 C):
    # one averaged line for all 18 H (Jackman, Sondheimer, Amiel, Ben-Efraim, Gaoni, Wolovsky & Bothner-By,
    # J. Am. Chem. Soc. 1962, 84, 4307; from memory).
    assert len(inner) == 6
    assert set(slow.h_groups) == {tuple(sorted(inner)), tuple(sorted(outer))}
    assert fast.h_groups == (tuple(range(18, 36)),)
    assert slow.provenance["exchange"] == "slow" and fast.provenance["exchange"] == "fast"
    # the geometry is read as given: both runs share it
    np.testing.assert_array_equal(slow.coords, fast.coords)


def test_annulene18_fast_group_shift_is_the_mean_of_its_members(annulene18_path):
    from ringshift import predict

    path, inner = annulene18_path
    slow = predict(path, exchange="slow", currents="benzene")
    fast = predict(path, exchange="fast", currents="benzene")
    assert len(fast.groups) == 1 and len(slow.groups) == 2
    # fast exchange averages the site shifts with their populations, 12:6 here (Gutowsky & Holm,
    # J. Chem. Phys. 1956, 25, 1228): the group is the plain mean of its 18 protons. Same geometry and model,
    # so the per-proton shifts agree to rounding (1e-9 ppm).
    expected = sum(g.n_h * g.predicted_ppm for g in slow.groups) / 18
    assert abs(fast.groups[0].predicted_ppm - expected) < 1e-9
    assert abs(fast.groups[0].predicted_ppm - np.mean([p.predicted_ppm for p in fast.protons])) < 1e-9
    by_inner = {g.atoms[0] in inner: g.predicted_ppm for g in slow.groups}
    assert by_inner[True] < fast.groups[0].predicted_ppm < by_inner[False]   # between inner and outer lines


# ------------------------------------------------------------------------------ small molecules
def _is_chair(mol: Chem.Mol, x: np.ndarray) -> bool:
    ring = list(mol.GetRingInfo().AtomRings()[0])
    conf = Chem.Conformer(mol.GetNumAtoms())
    conf.SetPositions(x)
    tau = [rdMolTransforms.GetDihedralDeg(conf, *(ring[(k + j) % 6] for j in range(4))) for k in range(6)]
    # chair: ring torsions alternate in sign, each about 55 deg (common practice, no source)
    return all(40 < abs(t) < 70 for t in tau) and all(tau[k] * tau[k + 1] < 0 for k in range(5))


def test_cyclohexane_chair_splits_axial_and_equatorial_fast_merges():
    mol, x = _embedded("C1CCCCC1")
    assert _is_chair(mol, x)
    slow = group_equivalent_hydrogens(mol, x, exchange="slow")
    fast = group_equivalent_hydrogens(mol, x, exchange="fast")
    # Below about -70 C ring inversion is slow and axial and equatorial H give separate lines; at room
    # temperature one line (Jensen, Noyce, Sederholm & Berlin, J. Am. Chem. Soc. 1960, 82, 1256; from memory).
    assert _sizes(slow) == [6, 6] and _sizes(fast) == [12]
    # the slow groups are the axial set (C-H along the mean ring normal) and the equatorial set
    ring = list(mol.GetRingInfo().AtomRings()[0])
    centred = x[ring] - x[ring].mean(axis=0)
    normal = np.linalg.svd(centred)[2][2]
    for g in slow:
        along = [abs(np.dot(x[h] - x[mol.GetAtomWithIdx(h).GetNeighbors()[0].GetIdx()], normal)) for h in g]
        assert np.ptp(along) < 0.05            # Å; axial ~1.09, equatorial ~0.35 (MMFF94 geometry)


@pytest.mark.parametrize("exchange", EXCHANGE_RULES)
def test_toluene_methyl_is_one_group(exchange):
    mol, x = _embedded("Cc1ccccc1")
    groups = group_equivalent_hydrogens(mol, x, exchange=exchange)
    # CH3 3H singlet, ortho 2H, meta 2H, para 1H (textbook first-order analysis, from memory)
    assert _sizes(groups) == [1, 2, 2, 3]
    assert _h_of(mol, 0) in groups


@pytest.mark.parametrize("exchange", EXCHANGE_RULES)
def test_diastereotopic_ch2_next_to_a_stereocentre_stays_split(exchange):
    mol, x = _embedded("CC[C@@H](C)O")                # (R)-butan-2-ol; C1 is the CH2
    groups = group_equivalent_hydrogens(mol, x, exchange=exchange)
    # The CH2 protons are diastereotopic: no motion interchanges them (textbook topicity rule, e.g. Eliel &
    # Wilen, Stereochemistry of Organic Compounds, Wiley 1994, ch. 8; from memory).
    ch2 = _h_of(mol, 1)
    assert len(ch2) == 2 and all((h,) in groups for h in ch2)
    assert _sizes(groups) == [1, 1, 1, 1, 3, 3]


@pytest.mark.parametrize("smiles,ch2_split", [
    ("C[C@H](O)C[C@H](O)C", True),           # meso (2R,4S): C3 is pseudo-asymmetric, its H diastereotopic
    ("C[C@H](O)C[C@@H](O)C", False),         # (2R,4R)/(2S,4S): a C2 axis swaps the C3 protons (homotopic)
], ids=["meso", "chiral"])
def test_pentane_2_4_diol_ch2_in_fast_exchange(smiles, ch2_split):
    # meso- vs rac-pentane-2,4-diol: the central CH2 is an AB pattern only in the meso isomer (Eliel & Wilen,
    # Stereochemistry of Organic Compounds, Wiley 1994, ch. 8; from memory).
    mol, x = _embedded(smiles)
    fast = fast_exchange_classes(mol, x)
    ch2 = _h_of(mol, 3)
    assert (ch2 in fast) is not ch2_split
    assert all((h,) in fast for h in ch2) is ch2_split


def test_fast_keeps_geminal_vinyl_protons_apart_and_merges_enantiotopic_ones():
    vinyl, xv = _embedded("ClC=C")
    ethanol, xe = _embedded("CCO")
    # =CH2 of vinyl chloride: cis and trans to Cl, an ABC system; ethanol's CH2 is enantiotopic, one quartet
    # (textbook spectra, from memory)
    assert _sizes(group_equivalent_hydrogens(vinyl, xv, exchange="fast")) == [1, 1, 1]
    assert _h_of(ethanol, 1) in group_equivalent_hydrogens(ethanol, xe, exchange="fast")


def test_rdkit_ranks_cannot_tell_diastereotopic_protons():
    # The measured fact stated in fast_exchange_classes: RDKit's canonical ranks with chirality lump them.
    for smiles, parent in (("CC[C@@H](C)O", 1), ("ClC=C", 2)):
        mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
        rank = list(Chem.CanonicalRankAtoms(mol, breakTies=False, includeChirality=True))
        h1, h2 = _h_of(mol, parent)
        assert rank[h1] == rank[h2]
    mol = Chem.AddHs(Chem.MolFromSmiles("C[C@H](Cl)CC(C)C"))   # 4-chloro-2-methylpentane: methyls C5, C6
    rank = list(Chem.CanonicalRankAtoms(mol, breakTies=False, includeChirality=True))
    assert rank[5] == rank[6]
    mol, x = _embedded("C[C@H](Cl)CC(C)C")
    fast = fast_exchange_classes(mol, x)
    assert _h_of(mol, 5) in fast and _h_of(mol, 6) in fast    # the two diastereotopic methyls stay apart


def test_fast_cannot_tell_axial_chirality():
    # Stated limit: RDKit does not perceive axial chirality, so the diastereotopic CH2 of the ethyl group of
    # the chiral allene 3-methylhexa-3,4-diene (CC=C=C(C)CC) comes out as one group in fast exchange.
    # If this starts to fail, RDKit has learnt allene stereo: update fast_exchange_classes' docstring.
    mol, x = _embedded("CC=C=C(C)CC")
    assert _h_of(mol, 5) in fast_exchange_classes(mol, x)


def test_fast_ignores_every_conformational_barrier():
    # Stated rule: every conformational barrier counts as low, even amide C-N rotation: the two N-methyls of
    # DMF, separate lines at room temperature (coalescence near 120 C; from memory), merge in fast exchange.
    mol, x = _embedded("CN(C)C=O")
    assert _sizes(group_equivalent_hydrogens(mol, x, exchange="slow")) == [1, 3, 3]
    assert _sizes(group_equivalent_hydrogens(mol, x, exchange="fast")) == [1, 6]


def test_fast_keeps_bonds_so_nh_tautomerism_is_not_averaged():
    # Stated limit: bonds are never broken, so porphine's NH tautomerism (fast at room temperature, which
    # makes its eight beta-H one line; Storm & Teklu, J. Am. Chem. Soc. 1972, 94, 1745; from memory) is not
    # averaged: the beta-H of the NH rings and of the N rings stay two groups of 4.
    mol, x = _embedded("c1cc2cc3ccc(cc4ccc(cc5ccc(cc1n2)[nH]5)n4)[nH]3")
    fast = group_equivalent_hydrogens(mol, x, exchange="fast")
    assert _sizes(fast) == [2, 4, 4, 4]


def test_fast_groups_are_never_finer_than_slow_groups():
    for smiles in ("C1CCCCC1", "CC(C)c1ccccc1", "CC[C@@H](C)O", "[cH-]1cccc1", "C1=CC=C2CC(=C1)C=CC=C2"):
        mol, x = _embedded(smiles)
        slow = group_equivalent_hydrogens(mol, x, exchange="slow")
        fast = group_equivalent_hydrogens(mol, x, exchange="fast")
        owner = {h: k for k, g in enumerate(fast) for h in g}
        assert all(len({owner[h] for h in g}) == 1 for g in slow), smiles
        assert sorted(h for g in fast for h in g) == sorted(h for g in slow for h in g)


def test_merge_of_partitions():
    # pure helper: groups sharing an atom join, transitively
    assert _merge([(1, 2), (3,), (4,), (5,)], [(2, 3), (4, 5), (1,)]) == ((1, 2, 3), (4, 5))
    assert _merge([], []) == ()


def test_deuterium_is_left_out_and_no_hydrogen_gives_empty_groups():
    mol, x = _embedded("[2H]C([2H])([2H])c1ccccc1")
    fast = group_equivalent_hydrogens(mol, x, exchange="fast")
    assert _sizes(fast) == [1, 2, 2]                 # ring H only; CD3 is not 1H
    mol, x = _embedded("ClC(Cl)(Cl)Cl")
    assert group_equivalent_hydrogens(mol, x, exchange="fast") == ()


@pytest.mark.parametrize("bad", ["medium", "FAST", None, 1], ids=["word", "case", "none", "number"])
def test_bad_exchange_rule_is_one_line_input_error(bad):
    mol, x = _embedded("CCO")
    with pytest.raises(InputError) as err:
        group_equivalent_hydrogens(mol, x, exchange=bad)
    assert err.value.source == "exchange" and "slow, fast" in str(err.value) and "\n" not in str(err.value)


def test_batch_fit_matches_scipy_alignment():
    # outside reference: scipy.spatial.transform.Rotation.align_vectors (Kabsch/Wahba least squares)
    from scipy.spatial.transform import Rotation

    from ringshift.geometry.symmetry import _batch_fit

    rng = np.random.default_rng(7)
    p = rng.normal(size=(9, 3))
    rots = Rotation.random(5, random_state=3)
    q = np.stack([r.apply(p) + rng.normal(size=3) for r in rots]) + rng.normal(scale=0.01, size=(5, 9, 3))
    rot, t = _batch_fit(p, q, improper=False)
    for k in range(5):
        ref, _ = Rotation.align_vectors(q[k] - q[k].mean(axis=0), p - p.mean(axis=0))
        assert np.allclose(rot[k], ref.as_matrix(), atol=1e-8)              # same optimum, rounding only
        assert np.allclose(p.mean(axis=0) @ rot[k].T + t[k], q[k].mean(axis=0), atol=1e-12)
    mirror, _ = _batch_fit(p, q, improper=True)
    assert np.allclose(np.linalg.det(mirror), -1.0)                          # a rotation-reflection


def test_regular_large_annulene_is_one_group():
    # every C-H of a regular planar [N]annulene is equivalent by its D_Nh symmetry (common practice, no
    # source); the C-H bonds are not tried as ring-flip axes (a flip about a terminal bond is a point-group
    # operation), which kept this O(N^3)
    n = 60
    ang = 2 * np.pi * np.arange(n) / n
    r = 1.40 / (2 * np.sin(np.pi / n))
    u = np.stack([np.cos(ang), np.sin(ang), np.zeros(n)], axis=1)
    rw = Chem.RWMol()
    for z in (6,) * n + (1,) * n:
        rw.AddAtom(Chem.Atom(z))
    for k in range(n):
        rw.AddBond(k, (k + 1) % n, Chem.BondType.DOUBLE if k % 2 == 0 else Chem.BondType.SINGLE)
        rw.AddBond(k, n + k, Chem.BondType.SINGLE)
    mol = rw.GetMol()
    Chem.SanitizeMol(mol)
    x = np.concatenate([r * u, (r + 1.08) * u])
    assert group_equivalent_hydrogens(mol, x) == (tuple(range(n, 2 * n)),)


def test_meso_aryl_faces_are_one_group_in_tetraphenylporphyrin():
    # the eight ortho H (and the eight meta H) of tetraphenylporphyrin give one signal each at room temperature
    # (ortho 8.22 ppm, 8 H, CDCl3; Lindsey et al., J. Org. Chem. 1987, 52, 827, from memory): the porphyrin plane
    # is a mirror of the time-averaged structure, so a phenyl's two faces are equivalent even though the lowest
    # MMFF94 conformer tilts the phenyls; a flip about the meso-aryl bond relates them (slow exchange too)
    from ringshift.io.structures import load_structure

    tpp = ("c1ccc(cc1)-c1c2ccc(n2)c(-c2ccccc2)c2ccc([nH]2)c(-c2ccccc2)c2ccc(n2)c(-c2ccccc2)c2ccc1[nH]2")
    st = load_structure(tpp)
    mol = st.mol
    phenyl_h = [h for h in range(mol.GetNumAtoms()) if mol.GetAtomWithIdx(h).GetAtomicNum() == 1
                and mol.GetAtomWithIdx(h).GetNeighbors()[0].IsInRingSize(6)]
    sizes = sorted(len(g) for g in st.h_groups if set(g) <= set(phenyl_h))
    assert sizes == [4, 8, 8]                          # para, meta, ortho
