"""Open shells get no current; Möbius circuits follow the Möbius rule, never the Hückel rule.

Rules checked against: Heilbronner, Tetrahedron Lett. 1964, 5, 1923 (Möbius rings: 4n closed shell and
aromatic, 4n+2 antiaromatic), Pople & Untch, J. Am. Chem. Soc. 1966, 88, 4811 (planar 4n annulenes
paratropic, 4n+2 diatropic), and the README promise that an open shell is reported, never given a number.
The twisted rings are synthetic (invented) geometries from :func:`tests.pi.chem_builders.annulene_ring`.
"""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem
from rdkit.Chem import AllChem

import ringshift as rs
from ringshift.io.structures import load_structure
from ringshift.pi.huckel import huckel
from ringshift.pi.london import london_currents
from ringshift.pi.perception import circuit_topology, expected_tropicity, perceive_pi
from tests.pi.chem_builders import annulene_ring, xyz_text

# ------------------------------------------------------------------------------------------ open shells
OPEN_SHELLS = [
    # (id, SMILES, π electrons): odd counts are radicals, open at the Hückel level whatever the geometry
    ("cyclopentadienyl-radical", "[CH]1C=CC=C1", 5),   # D5h: 3 electrons in a degenerate e1'' pair (from memory)
    ("benzyl-radical", "[CH2]c1ccccc1", 7),            # non-degenerate singly occupied NBMO (from memory)
    ("tropyl-radical", "[CH]1C=CC=CC=C1", 7),          # C7H7 radical, 7 π electrons (common practice)
]


@pytest.mark.parametrize("smiles,n_el", [c[1:] for c in OPEN_SHELLS], ids=[c[0] for c in OPEN_SHELLS])
def test_open_shell_gets_no_current(smiles, n_el):
    pred = rs.predict(smiles, conformers=1, seed=7)
    assert pred.pi.n_electrons == n_el and pred.pi.radical
    for c in pred.circuits:
        assert c.current_nA_per_T is None and c.current_rel_benzene is None
        assert c.current_source.startswith("none: open shell: odd π-electron count")
    assert all(p.ring_current_ppm == 0.0 for p in pred.protons)   # no current, no ring-current shift
    assert any(w.startswith("open shell: odd") for w in pred.warnings)


CLOSED_SHELLS = [
    # (id, SMILES, sign): Hückel rule, 4n+2 diatropic (Pople & Untch 1966)
    ("benzene", "c1ccccc1", +1),
    ("tropylium", "[CH+]1C=CC=CC=C1", +1),
    ("cyclopentadienide", "[CH-]1C=CC=C1", +1),
]


@pytest.mark.parametrize("smiles,sign", [c[1:] for c in CLOSED_SHELLS], ids=[c[0] for c in CLOSED_SHELLS])
def test_closed_shell_controls_keep_their_number(smiles, sign):
    pred = rs.predict(smiles, conformers=1, seed=7)
    assert not pred.huckel.open_shell
    cur = pred.circuits[0].current_nA_per_T
    assert cur is not None and np.sign(cur) == sign


def test_open_shell_levels_say_gap_zero():
    # the gap check the current decision reads: 0 for a partly filled shell (ringshift.pi.huckel.occupy)
    m = Chem.AddHs(Chem.MolFromSmiles("[CH]1C=CC=C1"))
    AllChem.EmbedMolecule(m, randomSeed=3)
    xyz = m.GetConformer().GetPositions()
    hr = huckel(perceive_pi(m, xyz), m, xyz, beta_model="distance")
    assert hr.open_shell and hr.homo_lumo_gap_beta == 0.0
    lc = london_currents(perceive_pi(m, xyz), m, xyz, [[0, 1, 2, 3, 4]], beta_model="distance")
    assert lc.status.startswith("open shell") and lc.circuit_currents_rel is None and lc.bond_currents_rel is None


# ------------------------------------------------------------------------------------------ Möbius
MOBIUS = [
    # (id, ring size = π electrons, half-twists); expected sign from expected_tropicity (Heilbronner 1964 for
    # Möbius, Pople & Untch 1966 for the untwisted controls)
    ("mobius-16", 16, 1),
    ("mobius-20", 20, 1),
    ("mobius-18", 18, 1),
    ("mobius-14", 14, 1),
    ("planar-16", 16, 0),
    ("planar-18", 18, 0),
]


def _xyz(tmp_path, n, twists, order=None):
    sym, xyz = annulene_ring(n, twists=twists)
    if order is not None:
        sym, xyz = [sym[k] for k in order], xyz[order]
    path = tmp_path / f"ring{n}_{twists}.xyz"
    path.write_text(xyz_text(sym, xyz, "synthetic twisted annulene (invented geometry)"))
    return path


@pytest.mark.parametrize("n,twists", [c[1:] for c in MOBIUS], ids=[c[0] for c in MOBIUS])
def test_mobius_rule_not_huckel_rule(tmp_path, n, twists):
    # charge 0 given: the untwisted equal-bond 4n rings have an ion's shape and are refused without it
    pred = rs.predict(str(_xyz(tmp_path, n, twists)), charge=0)
    (c,) = pred.circuits
    topo = "mobius" if twists % 2 else "huckel"
    assert circuit_topology(pred.pi, pred.structure.mol, pred.structure.coords[0], c.circuit.atoms) == topo
    rule = expected_tropicity(n, topo)
    if c.current_nA_per_T is None:   # a degenerate open shell is also a Möbius-rule answer for 4n+2 (no number)
        assert rule == "paratropic" and "open shell" in c.current_source
    else:
        assert (c.current_nA_per_T > 0) == (rule == "diatropic"), (c.current_nA_per_T, rule)
    assert any("Möbius rule" in w for w in pred.warnings) == (topo == "mobius")


def test_mobius_current_does_not_depend_on_atom_order(tmp_path):
    # which bond carries the negative β is a gauge (the spanning tree); the current must not move with it
    n = 16
    base = rs.predict(str(_xyz(tmp_path, n, 1))).circuits[0].current_nA_per_T
    rng = np.random.default_rng(5)
    perm = np.concatenate([rng.permutation(n), n + rng.permutation(n)])
    other = rs.predict(str(_xyz(tmp_path, n, 1, order=perm))).circuits[0].current_nA_per_T
    assert base is not None and other is not None
    assert abs(base - other) < 1e-6 * abs(base)   # same geometry, relabelled: identical up to round-off


TROPICITY = [
    ("huckel-6", 6, "huckel", "diatropic"), ("huckel-8", 8, "huckel", "paratropic"),
    ("mobius-8", 8, "mobius", "diatropic"), ("mobius-10", 10, "mobius", "paratropic"),
    ("odd-5", 5, "huckel", "open shell"),
]


@pytest.mark.parametrize("n,topo,want", [c[1:] for c in TROPICITY], ids=[c[0] for c in TROPICITY])
def test_expected_tropicity_table(n, topo, want):
    # Heilbronner 1964 (Möbius) and the Hückel 4n+2 rule (common practice)
    assert expected_tropicity(n, topo) == want


def test_twisted_structure_loads_with_input_geometry(tmp_path):
    s = load_structure(str(_xyz(tmp_path, 16, 1)))
    assert s.coords.shape == (1, 32, 3)
