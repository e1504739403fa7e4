"""Tests of ringshift.pi.perception and ringshift.pi.huckel: π perception, Hückel levels, Hückel–London currents.

Geometries are built here: regular polygons and RDKit 2D depictions of benzenoids (regular hexagons)
scaled to 1.397 Å, a honeycomb [18]annulene, and ETKDGv3 + MMFF94 conformers with fixed seeds.
"""

from __future__ import annotations

import time

import numpy as np
import pytest
from numpy.testing import assert_allclose
from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms

from ringshift.constants import BENZENE_CURRENT_NA_PER_T
from ringshift.errors import InputError
from ringshift.pi.bond_lengths import SCF_R0_A, SCF_RELATIONS, SCF_SLOPE_A, polyene_chain_lengths
from ringshift.pi.huckel import huckel, huckel_matrix, occupy
from ringshift.pi.london import benzene_reference_response, london_currents, pi_charge_shift_ppm, regular_polygon
from ringshift.pi.parameters import (
    BETA0_EV,
    BETA_REF_LENGTH_A,
    COULSON_R0_A,
    COULSON_SLOPE_A,
    HETERO_PARAMETERS,
    POLYACETYLENE_BLA_A,
)
from ringshift.pi.perception import circuit_electrons, huckel_class, perceive_pi


# ------------------------------------------------------------------------------------------ helpers
def _mol(smiles: str) -> Chem.Mol:
    return Chem.AddHs(Chem.MolFromSmiles(smiles))


def _flat(smiles: str):
    """Molecule with an RDKit 2D depiction (regular hexagons for benzenoids) scaled to C–C 1.397 Å."""
    m = _mol(smiles)
    AllChem.Compute2DCoords(m)
    xyz = m.GetConformer().GetPositions()
    cc = [np.linalg.norm(xyz[b.GetBeginAtomIdx()] - xyz[b.GetEndAtomIdx()]) for b in m.GetBonds()
          if b.GetBeginAtom().GetAtomicNum() == 6 and b.GetEndAtom().GetAtomicNum() == 6]
    assert np.ptp(cc) < 1e-6  # the depiction really is made of equal bonds
    return m, xyz * (1.397 / np.mean(cc))


def _ring(n: int, smiles: str | None = None, side: float = 1.397):
    """Monocycle of n carbons (atoms 0..n−1 in ring order) on a regular polygon, H radial, z = 0."""
    m = _mol(smiles or "C1=C" + "C=C" * (n // 2 - 1) + "1")
    p = regular_polygon(n, side)
    xyz = np.zeros((m.GetNumAtoms(), 3))
    xyz[:n] = p
    for k in range(n):
        for h in (x.GetIdx() for x in m.GetAtomWithIdx(k).GetNeighbors() if x.GetAtomicNum() == 1):
            xyz[h] = p[k] * (1.0 + 1.09 / np.linalg.norm(p[k]))
    return m, xyz


def _embed(smiles: str, seed: int = 42, **kw):
    m = _mol(smiles)
    params = AllChem.ETKDGv3()
    params.randomSeed = seed
    for k, v in kw.items():
        setattr(params, k, v)
    assert AllChem.EmbedMolecule(m, params) == 0
    AllChem.MMFFOptimizeMolecule(m, maxIters=2000)
    return m, m.GetConformer().GetPositions()


def _rings(m):
    return [list(r) for r in m.GetRingInfo().AtomRings()]


def _annulene18():
    """[18]annulene on the honeycomb lattice (the perimeter of coronene, C–C 1.397 Å, 120° angles), six
    inner H. Returns mol, xyz, ring order, inner H, outer H."""
    cor = Chem.MolFromSmiles("c1cc2ccc3ccc4ccc5ccc6ccc1c7c2c3c4c5c67")
    AllChem.Compute2DCoords(cor)
    x = cor.GetConformer().GetPositions()
    x = (x - x.mean(axis=0)) * 1.397 / np.mean([np.linalg.norm(x[b.GetBeginAtomIdx()] - x[b.GetEndAtomIdx()])
                                                for b in cor.GetBonds()])
    inner = {a.GetIdx() for a in cor.GetAtoms() if all(n.GetDegree() == 3 for n in a.GetNeighbors())}
    per = [a for a in range(24) if a not in inner]
    cyc = [per[0]]
    while len(cyc) < 18:
        cyc.append(next(n.GetIdx() for n in cor.GetAtomWithIdx(cyc[-1]).GetNeighbors()
                        if n.GetIdx() in per and n.GetIdx() not in cyc))
    m = _mol("C1=C" + "C=C" * 8 + "1")
    p = x[cyc]
    xyz = np.zeros((m.GetNumAtoms(), 3))
    xyz[:18] = p
    h_in, h_out = [], []
    for k in range(18):
        h = next(n.GetIdx() for n in m.GetAtomWithIdx(k).GetNeighbors() if n.GetAtomicNum() == 1)
        u = 2 * p[k] - p[k - 1] - p[(k + 1) % 18]
        xyz[h] = p[k] + 1.09 * u / np.linalg.norm(u)
        (h_in if np.linalg.norm(xyz[h]) < np.linalg.norm(p[k]) else h_out).append(h)
    return m, xyz, list(range(18)), h_in, h_out


def _energy(h0, xyz, bvec, n_el):
    """Slow twin: total π energy (|β|) of the London Hamiltonian h0_rs exp(i½ b·(r_r × r_s))."""
    cross = np.cross(xyz[:, None, :], xyz[None, :, :]) @ np.asarray(bvec, float)
    e = np.linalg.eigvalsh(h0 * np.exp(0.5j * cross))
    occ = occupy(e, n_el)[0]
    return float(occ @ e)


def _h0(lc, pi):
    lb = np.array([(pi.atoms.index(i), pi.atoms.index(j)) for i, j in pi.bonds])
    return huckel_matrix([HETERO_PARAMETERS[t][0] for t in pi.atom_types], lb, lc.huckel.resonance), lb


# ------------------------------------------------------------------ perception and electron counts
AROMATICS = [  # (name, SMILES, total π electrons: Hückel's rule counts, textbook, common practice)
    ("benzene", "c1ccccc1", 6), ("pyridine", "c1ccncc1", 6), ("pyrrole", "c1cc[nH]c1", 6),
    ("furan", "c1ccoc1", 6), ("thiophene", "c1ccsc1", 6), ("naphthalene", "c1ccc2ccccc2c1", 10),
    ("indole", "c1ccc2[nH]ccc2c1", 10), ("imidazole", "c1c[nH]cn1", 6), ("pyrimidine", "c1cncnc1", 6),
    ("quinoline", "c1ccc2ncccc2c1", 10), ("thiazole", "c1cscn1", 6), ("oxazole", "c1cocn1", 6),
    ("pyrazole", "c1cn[nH]c1", 6), ("purine", "c1ncc2[nH]cnc2n1", 10), ("tropylium", "[CH+]1C=CC=CC=C1", 6),
    ("cyclopentadienide", "[CH-]1C=CC=C1", 6), ("pyridinium", "c1cc[nH+]cc1", 6), ("pyrylium", "c1cc[o+]cc1", 6),
    ("tropone", "O=C1C=CC=CC=C1", 8), ("2-pyridone", "O=c1cccc[nH]1", 8),
    ("COT dianion", "[CH-]1C=CC=C[CH-]C=C1", 10),
    ("cyclooctatetraene", "C1=CC=CC=CC=C1", 8), ("p-benzoquinone", "O=C1C=CC(=O)C=C1", 8),
    ("borole", "B1C=CC=C1", 4),
]


@pytest.mark.parametrize("name,smiles,n_total", AROMATICS, ids=[a[0] for a in AROMATICS])
def test_ring_counts_agree_with_rdkit_aromaticity(name, smiles, n_total):
    # Reference library: RDKit's aromaticity flags (Hückel 4n+2 rule on its electron model). Every ring
    # RDKit calls aromatic must count 4n+2 here and every ring it does not must not.
    m = _mol(smiles)
    pi = perceive_pi(m)
    assert pi.n_electrons == n_total  # textbook counts (common practice, no source)
    for ring in _rings(m):
        rd_aromatic = all(m.GetAtomWithIdx(a).GetIsAromatic() for a in ring)
        ours = huckel_class(circuit_electrons(pi, ring, m)) == "4n+2"
        assert ours == rd_aromatic, (name, ring)


ATOMS = [  # (SMILES, element symbol, type, π electrons): textbook assignments (common practice, no source)
    ("c1ccncc1", "N", "N_pyridine", 1), ("c1cc[nH]c1", "N", "N_pyrrole", 2), ("c1ccoc1", "O", "O_furan", 2),
    ("c1ccsc1", "S", "S_thiophene", 2), ("O=C1C=CC=CC=C1", "O", "O_carbonyl", 1), ("B1C=CC=C1", "B", "B", 0),
    ("c1cc[nH+]cc1", "N", "N+_pyridinium", 1), ("N#Cc1ccccc1", "N", "N_nitrile", 1),
    ("[O-]c1ccccc1", "O", "O-", 2), ("Nc1ccccc1", "N", "N_pyrrole", 2),
]


@pytest.mark.parametrize("smiles,sym,typ,n", ATOMS, ids=[f"{a[2]}:{a[0]}" for a in ATOMS])
def test_heteroatom_types_and_electrons(smiles, sym, typ, n):
    m = _mol(smiles)
    pi = perceive_pi(m)
    k = next(k for k, a in enumerate(pi.atoms) if m.GetAtomWithIdx(a).GetSymbol() == sym)
    assert (pi.atom_types[k], pi.electrons[k]) == (typ, n)


CHARGED = [("[CH+]1C=CC=CC=C1", "C+", 0), ("[CH-]1C=CC=C1", "C-", 2)]


@pytest.mark.parametrize("smiles,typ,n", CHARGED, ids=["carbocation", "carbanion"])
def test_charged_carbons_in_rings(smiles, typ, n):
    m = _mol(smiles)
    pi = perceive_pi(m)
    assert pi.atom_types[0] == typ and pi.electrons[0] == n and len(pi.atoms) == m.GetNumHeavyAtoms()


IONS = [("[CH+]1C=CC=CC=C1", 1), ("[CH-]1C=CC=C1", -1), ("[CH-]1C=CC=C[CH-]C=C1", -2),
        ("c1cc[nH+]cc1", 1), ("c1cc[nH]c1", 0), ("O=c1cccc[nH]1", 0)]


@pytest.mark.parametrize("smiles,charge", IONS, ids=[s for s, _ in IONS])
def test_pi_charges_add_up_to_the_net_charge(smiles, charge):
    # Identity: Σ_r P_rr = number of π electrons, so Σ q_r = Σ Z_r − N = net π charge (textbook).
    m = _mol(smiles)
    pi = perceive_pi(m)
    h = huckel(pi, m, beta_model="uniform")
    assert pi.charge == charge
    assert_allclose(h.charges.sum(), charge, atol=1e-10)  # rounding only


def test_each_fragment_keeps_its_own_electrons():
    # A salt in one molecule: tropylium and cyclopentadienide are separate π systems; aufbau over both
    # would move electrons between them. Σ q over each fragment = its own charge (textbook identity).
    m, xyz = _embed("[CH+]1C=CC=CC=C1.[CH-]1C=CC=C1")
    pi = perceive_pi(m, xyz)
    h = huckel(pi, m, xyz)
    assert_allclose([h.charges[:7].sum(), h.charges[7:].sum()], [1.0, -1.0], atol=1e-10)
    lc = london_currents(pi, m, xyz, _rings(m))
    assert lc.status == "ok" and np.all(lc.circuit_currents_rel > 0)  # both 6π rings diatropic


def test_annulene_ions_and_bridged_perimeter():
    # [16]annulene dianion 18π, COT dianion 10π (Hückel's rule, textbook); 1,6-methano[10]annulene:
    # the 10-carbon perimeter is the π circuit (10π), the CH2 bridge is not π; RDKit's ring perception
    # does not return the perimeter (DESIGN notes), so it is passed explicitly.
    m = _mol("[CH-]1C=CC=CC=CC=C[CH-]C=CC=CC=C1")
    pi = perceive_pi(m)
    assert circuit_electrons(pi, range(16), m) == 18 and huckel_class(18) == "4n+2"
    m = _mol("[CH-]1C=CC=C[CH-]C=C1")
    assert circuit_electrons(perceive_pi(m), range(8), m) == 10
    m = _mol("C12=CC=CC=C(C2)C=CC=C1")  # atoms: 0-5 ring, 6 = CH2 bridge, 7-10 ring
    pi = perceive_pi(m)
    perimeter = [0, 1, 2, 3, 4, 5, 7, 8, 9, 10]
    assert 6 not in pi.atoms and len(pi.atoms) == 10
    assert sorted(len(r) for r in _rings(m)) == [7, 7]
    assert circuit_electrons(pi, perimeter, m) == 10
    lc = london_currents(pi, m, _embed("C12=CC=CC=C(C2)C=CC=C1")[1], [perimeter])
    assert lc.status == "ok" and lc.circuit_currents_rel[0] > 0  # aromatic 10π perimeter, diatropic


@pytest.mark.parametrize("n,cls", [(0, "4n"), (2, "4n+2"), (4, "4n"), (6, "4n+2"), (7, "odd"), (18, "4n+2")],
                         ids=["0", "2", "4", "6", "7", "18"])
def test_huckel_class(n, cls):
    assert huckel_class(n) == cls  # Hückel's rule (textbook)


# ----------------------------------------------------------------------------------- Hückel levels
FROST = [(3, "[CH+]1C=C1"), (4, None), (5, "[CH-]1C=CC=C1"), (6, None), (7, "[CH+]1C=CC=CC=C1"), (8, None),
         (10, None), (12, None)]


@pytest.mark.parametrize("n,smiles", FROST, ids=[f"C{f[0]}" for f in FROST])
def test_frost_levels_of_monocycles(n, smiles):
    # Frost & Musulin, J. Chem. Phys. 1953, 21, 572: E_k = α + 2β cos(2πk/N), i.e. x = −2cos(2πk/N).
    m, xyz = _ring(n, smiles)
    h = huckel(perceive_pi(m, xyz), m, xyz, beta_model="uniform")
    assert_allclose(h.energies_beta, np.sort(-2 * np.cos(2 * np.pi * np.arange(n) / n)), atol=1e-12)


def test_textbook_huckel_values():
    # Butadiene: x = ±1.618, ±0.618; Coulson bond orders 0.894 (C1–C2), 0.447 (C2–C3). Naphthalene bond
    # orders 0.725 (C1–C2), 0.603 (C2–C3), 0.555 (C1–C9), 0.518 (C9–C10) (Coulson 1939; textbook, from
    # memory). Tolerance 1e-3: the tabulated values have three decimals.
    m = _mol("C=CC=C")
    h = huckel(perceive_pi(m), m, beta_model="uniform")
    assert_allclose(h.energies_beta, [-1.618034, -0.618034, 0.618034, 1.618034], atol=1e-6)
    assert_allclose(sorted(h.bond_orders), [0.447, 0.894, 0.894], atol=1e-3)
    m, xyz = _flat("c1ccc2ccccc2c1")
    pi = perceive_pi(m, xyz)
    h = huckel(pi, m, xyz, beta_model="uniform")
    assert_allclose(sorted(set(np.round(h.bond_orders, 6))), [0.518, 0.555, 0.603, 0.725], atol=1e-3)
    assert h.homo_lumo_gap_beta == pytest.approx(2 * 0.618034, abs=1e-5)  # naphthalene HOMO/LUMO ±0.618


@pytest.mark.parametrize("model", ["scf", "scf-coulson"], ids=["scf", "scf-coulson"])
def test_scf_bond_lengths_of_naphthalene_and_cyclooctatetraene(model):
    # Self-consistent lengths against experiment (neither is used to fix either relation): naphthalene
    # (gas electron diffraction, C1–C2 1.371, C2–C3 1.412, C1–C9 1.422, C9–C10 1.420 Å; Ketkar & Fink,
    # J. Mol. Struct. 1981, 77, 139, from memory) within 0.015 Å; cyclooctatetraene 1.340 / 1.476 Å
    # (Traetteberg, Acta Chem. Scand. 1966, 20, 1724, from memory; tub-shaped, here planar) within 0.03 Å.
    m, xyz = _flat("c1ccc2ccccc2c1")
    pi = perceive_pi(m, xyz)
    h = huckel(pi, m, xyz, beta_model=model)
    assert h.converged
    r = dict(zip(pi.bonds, h.bond_lengths_A))
    assert_allclose([r[(0, 1)], r[(0, 9)], r[(3, 8)], r[(2, 3)]], [1.412, 1.371, 1.420, 1.422], atol=0.015)
    r0, slope = SCF_RELATIONS[model][:2]
    assert_allclose(h.bond_lengths_A, r0 - slope * h.bond_orders, atol=1e-8)  # the relation holds (identity)
    m, xyz = _ring(8)
    h = huckel(perceive_pi(m, xyz), m, xyz, beta_model=model)
    assert not h.open_shell and h.converged
    assert_allclose([h.bond_lengths_A.min(), h.bond_lengths_A.max()], [1.340, 1.476], atol=0.03)


def test_scf_keeps_benzene_d6h_and_ethylene_sensible():
    # Benzene is D6h with 1.397 Å bonds (textbook; the calibrated line passes through it, and the equal-bond
    # solution must also be the stable one, tolerance 1e-6 Å). Ethylene C=C 1.339 Å (electron diffraction;
    # Bartell et al., J. Chem. Phys. 1965, 42, 2683, from memory) is not used by the calibrated "scf" line:
    # within 0.01 Å (it gives 1.331 Å, close to the equilibrium r_e ≈ 1.331 Å).
    m, xyz = _ring(6)
    h = huckel(perceive_pi(m, xyz), m, xyz, beta_model="scf")
    assert h.converged
    assert_allclose(h.bond_lengths_A, np.full(6, 1.397), atol=1e-6)
    m, xyz = _embed("C=C")
    h = huckel(perceive_pi(m, xyz), m, xyz, beta_model="scf")
    assert_allclose(h.bond_lengths_A, [1.339], atol=0.01)


def test_infinite_polyene_alternation_and_its_calibration():
    # The calibrated "scf" line reproduces trans-polyacetylene, 1.36 / 1.44 Å (nutation NMR; Yannoni &
    # Clarke, Phys. Rev. Lett. 1983, 51, 1191, from memory): the BLA 0.08 Å is fitted (1e-9 Å), the two
    # lengths themselves are a check (0.01 Å, the two decimals of the data). The Coulson line through
    # ethylene and benzene under-alternates (measured 0.067 Å).
    r1, r2, p1, p2 = polyene_chain_lengths(SCF_R0_A, SCF_SLOPE_A)
    assert r2 - r1 == pytest.approx(POLYACETYLENE_BLA_A, abs=1e-9)
    assert_allclose([r1, r2], [1.36, 1.44], atol=0.01)
    assert SCF_R0_A - SCF_SLOPE_A * 2 / 3 == pytest.approx(BETA_REF_LENGTH_A, abs=1e-12)
    c1, c2 = polyene_chain_lengths(COULSON_R0_A, COULSON_SLOPE_A)[:2]
    assert 0.06 < c2 - c1 < 0.075
    # Band integrals: with vanishing coupling the bond orders tend to the uniform chain's 2/π (textbook;
    # tolerance 2e-3 for the residual alternation and the log-singular integrand).
    assert_allclose(polyene_chain_lengths(1.5, 1e-3)[2:], [2 / np.pi] * 2, atol=2e-3)


def test_large_annulene_scf_alternation_approaches_the_chain_limit():
    # Independent numerical route: full diagonalisation of [98]annulene (regular polygon, Anderson
    # iteration with a stability check) against the band integrals of the infinite chain. The finite-ring
    # correction at N = 98 (4n+2, gapped chain) is measured 1e-7 Å; tolerance 1e-5 Å.
    m, xyz = _ring(98)
    h = huckel(perceive_pi(m, xyz), m, xyz, beta_model="scf")
    assert h.converged
    r1, r2 = polyene_chain_lengths(SCF_R0_A, SCF_SLOPE_A)[:2]
    assert_allclose([h.bond_lengths_A.min(), h.bond_lengths_A.max()], [r1, r2], atol=1e-5)


# ------------------------------------------------------------------------- Hückel–London currents
def _faces(smiles):
    m, xyz = _flat(smiles)
    return m, xyz, perceive_pi(m, xyz), _rings(m)


@pytest.mark.parametrize("model", ["uniform", "distance"], ids=["uniform", "distance"])
def test_polyacene_check_values(model):
    # Regular hexagons, uniform β (β(r) = β0 at 1.397 Å): naphthalene 1.093 per ring; anthracene 1.084
    # outer / 1.279 inner (Myrvold, Fowler & Clarke, Chemistry 2021, 3, 1138: 1.0844 end ring).
    # Tolerance 5e-4 absolute: the published values have three to four decimals.
    m, xyz, pi, rings = _faces("c1ccc2ccccc2c1")
    assert_allclose(london_currents(pi, m, xyz, rings, beta_model=model).circuit_currents_rel, [1.093] * 2, atol=5e-4)
    m, xyz, pi, rings = _faces("c1ccc2cc3ccccc3cc2c1")
    lc = london_currents(pi, m, xyz, rings, beta_model=model)
    n_h = [sum(m.GetAtomWithIdx(a).GetTotalNumHs(includeNeighbors=True) for a in r) for r in lc.circuits]
    inner = [k for k, n in enumerate(n_h) if n == 2]  # the middle ring carries two H, the end rings four
    j = lc.circuit_currents_rel
    assert_allclose(j[inner], [1.279], atol=5e-4)
    assert_allclose(np.delete(j, inner), [1.0844] * 2, atol=5e-4)


def _flux_ring_current(n, n_el):
    """Threaded-flux identity for a regular N-ring (London 1937; textbook): levels −2cos((2πk + φ)/N) with
    φ = bS; the diatropic current ∝ S·d²E/dφ². Returns J/J_benzene."""
    def curv(n, n_el):
        k = np.arange(n)
        e = -2 * np.cos(2 * np.pi * k / n)
        order = np.argsort(e, kind="stable")
        occ = occupy(e[order], n_el)[0]
        return float(occ @ (2 * np.cos(2 * np.pi * k[order] / n)) / n**2)

    def area(n):
        return n / 4 * 1.397**2 / np.tan(np.pi / n)

    return curv(n, n_el) * area(n) / (curv(6, 6) * area(6))


RINGS = [(5, "[CH-]1C=CC=C1", 6), (7, "[CH+]1C=CC=CC=C1", 6), (6, None, 6), (8, "[CH-]1C=CC=C[CH-]C=C1", 10),
         (10, None, 10), (14, None, 14), (18, None, 18), (30, None, 30)]


@pytest.mark.parametrize("n,smiles,n_el", RINGS, ids=[f"C{r[0]}_{r[2]}e" for r in RINGS])
def test_monocycle_currents_equal_threaded_flux_formula(n, smiles, n_el):
    # Includes tropylium (1.155) and cyclopentadienide (0.772): diatropic, as Hückel's rule predicts.
    m, xyz = _ring(n, smiles)
    lc = london_currents(perceive_pi(m, xyz), m, xyz, [list(range(n))], beta_model="uniform")
    assert lc.status == "ok"
    assert lc.circuit_currents_rel[0] > 0
    assert_allclose(lc.circuit_currents_rel, [_flux_ring_current(n, n_el)], rtol=1e-10)  # rounding only


MOMENT_CASES = [("naphthalene", "c1ccc2ccccc2c1"), ("azulene", "c1ccc2cccc2cc1"), ("pyridine", "c1ccncc1"),
                ("biphenyl", "c1ccc(cc1)-c1ccccc1"), ("styrene", "C=Cc1ccccc1")]


@pytest.mark.parametrize("name,smiles", MOMENT_CASES, ids=[c[0] for c in MOMENT_CASES])
def test_currents_give_the_energy_susceptibility(name, smiles):
    # Hellmann–Feynman: the magnetic moment of the bond currents, m = ½ Σ I (r_i × r_j), equals −∂E/∂B;
    # so for unit fields along x, y, z it must reproduce the Hessian of the total energy of the London
    # Hamiltonian (finite differences, step 2e-4 Å⁻²; truncation and rounding ~1e-7 relative;
    # tolerance 1e-5).
    # MMFF94 geometries (non-planar for biphenyl) test all three field directions and gauge invariance
    # (the energy uses the raw coordinates as gauge origin, the currents their centroid).
    m, xyz = _embed(smiles)
    pi = perceive_pi(m, xyz)
    lc = london_currents(pi, m, xyz, [r for r in _rings(m)])
    h0, lb = _h0(lc, pi)
    r = xyz[list(pi.atoms)]
    g_bz = benzene_reference_response("distance")
    moment = np.array([[g_bz * np.sum(lc.bond_currents_rel[b] * np.cross(r[lb[:, 0]], r[lb[:, 1]])[:, a])
                        for b in range(3)] for a in range(3)])
    step, hess = 2e-4, np.zeros((3, 3))
    e0 = _energy(h0, r, np.zeros(3), pi.n_electrons)
    for a in range(3):
        for b in range(3):
            ea, eb = np.eye(3)[a] * step, np.eye(3)[b] * step
            e = [_energy(h0, r, v, pi.n_electrons) for v in (ea + eb, ea - eb, eb - ea, -ea - eb)]
            hess[a, b] = (e[0] - e[1] - e[2] + e[3]) / (4 * step**2)
    assert e0 < 0
    assert_allclose(moment, -hess, atol=1e-5 * np.abs(hess).max())


def test_analytic_bond_currents_equal_finite_field_currents():
    # Slow twin of london_bond_response: I ∝ Im(H_ji P_ij) at a finite field b, central difference
    # (step 1e-4 Å⁻², truncation ~1e-8 relative; tolerance 1e-6), twisted biphenyl, three directions.
    m, xyz = _embed("c1ccc(cc1)-c1ccccc1")
    pi = perceive_pi(m, xyz)
    lc = london_currents(pi, m, xyz, _rings(m))
    h0, lb = _h0(lc, pi)
    r = xyz[list(pi.atoms)] + np.array([3.0, -2.0, 5.0])  # another gauge origin
    cross = np.cross(r[:, None, :], r[None, :, :])

    def imhp(bvec):
        h = h0 * np.exp(0.5j * (cross @ bvec))
        e, c = np.linalg.eigh(h)
        p = (c * occupy(e, pi.n_electrons)[0]) @ c.conj().T
        return np.imag(h[lb[:, 1], lb[:, 0]] * p[lb[:, 0], lb[:, 1]])

    step = 1e-4
    fd = np.array([(imhp(np.eye(3)[a] * step) - imhp(-np.eye(3)[a] * step)) / (2 * step) for a in range(3)])
    g_bz = benzene_reference_response("distance")
    assert_allclose(-lc.bond_currents_rel * g_bz, fd, atol=1e-6 * np.abs(fd).max())


def test_kirchhoff_and_cycle_bases():
    # Current conservation at every atom and exact decomposition onto a cycle basis (linear algebra:
    # divergence-free flows on a graph span the cycle space); porphine: 4 pyrroles + inner 16-ring.
    for smiles in ["c1ccc2ccccc2c1", "c1ccc2cccc2cc1", "C1=CC2=NC1=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=C2)N5",
                   "c1ccc2c(c1)ccc1ccccc12"]:
        m, xyz = _embed(smiles)
        pi = perceive_pi(m, xyz)
        lc = london_currents(pi, m, xyz, _rings(m))
        assert lc.status == "ok" and lc.conservation_residual < 1e-12 and lc.kirchhoff_residual < 1e-12
    # an incomplete basis cannot represent the flow: the residual says so
    m, xyz, pi, rings = _faces("c1ccc2cc3ccccc3cc2c1")
    assert london_currents(pi, m, xyz, rings[:1]).kirchhoff_residual > 0.1


def test_invariance_under_rigid_motion_and_ring_order():
    # Physics is unchanged by translation, rotation (responses rotate as vectors) and by the direction in
    # which a circuit is listed. Tolerance 1e-10: rounding only.
    m, xyz = _embed("c1ccc2cccc2cc1")
    pi, rings = perceive_pi(m, xyz), _rings(m)
    ref = london_currents(pi, m, xyz, rings)
    q = np.linalg.qr(np.random.default_rng(3).standard_normal((3, 3)))[0]
    moved = xyz @ q.T + np.array([10.0, -4.0, 2.5])
    lc = london_currents(pi, m, moved, [r[::-1] for r in rings], normals=ref.normals @ q.T)
    assert_allclose(lc.circuit_currents_rel, ref.circuit_currents_rel, atol=1e-10)
    assert_allclose(lc.circuit_response_rel @ q, ref.circuit_response_rel, atol=1e-10)
    assert_allclose(q.T @ lc.bond_currents_rel, ref.bond_currents_rel, atol=1e-10)


def test_bond_currents_use_the_sense_of_the_network_shielding_kernel():
    # Convention check against ringshift.fields.polygon: benzene's bond currents (field along z) fed to
    # network_shielding must give the shielding of a diatropic 12 nA/T double loop (polygon_shielding);
    # a point 1 Å above the centre is shielded (Johnson & Bovey 1958). Tolerance 1e-10: rounding only.
    from ringshift.fields.network import network_shielding
    from ringshift.fields.polygon import polygon_shielding
    m, xyz = _ring(6)
    pi = perceive_pi(m, xyz)
    lc = london_currents(pi, m, xyz, [list(range(6))])
    pts = np.array([[0.0, 0.0, 1.0], xyz[6], [0.3, 0.2, 2.0]])
    starts = xyz[[i for i, _ in pi.bonds]]
    ends = xyz[[j for _, j in pi.bonds]]
    z = np.array([0.0, 0.0, 1.0])
    net = network_shielding(pts, starts, ends, lc.bond_currents_nA_per_T[2], field_dir=z)
    assert_allclose(net, BENZENE_CURRENT_NA_PER_T * polygon_shielding(pts, xyz[:6], z), atol=1e-10)
    assert net[0] > 0 > net[1]


def test_degenerate_4n_annulenes_are_open_shell_and_alternation_gives_paratropic_current():
    # D_Nh 4n annulenes with uniform β have a degenerate half-filled HOMO: no current. With explicit bond
    # alternation they are paratropic (Pople & Untch, JACS 1966, 88, 4811), and the paratropic current
    # grows as the alternation shrinks (same paper).
    for n in (4, 8, 12, 16, 20):
        m, xyz = _ring(n)
        pi = perceive_pi(m, xyz)
        lc = london_currents(pi, m, xyz, [list(range(n))], beta_model="uniform")
        assert lc.open_shell and lc.status.startswith("open shell")
        assert lc.circuit_currents_rel is None and lc.bond_currents_rel is None
        j = [london_currents(pi, m, xyz, [list(range(n))], beta_model="uniform", distortion=d).circuit_currents_rel[0]
             for d in (0.05, 0.1, 0.2)]
        assert all(x < 0 for x in j) and j[0] < j[1] < j[2]


def test_large_4n2_annulene_currents_fall_with_alternation():
    # Uniform-β Hückel–London current of (4n+2)-annulenes grows with ring size and falls with bond
    # alternation (Pople & Untch 1966; Longuet-Higgins & Salem 1959).
    prev = 0.0
    for n in (14, 18, 22, 26):
        m, xyz = _ring(n)
        pi = perceive_pi(m, xyz)
        j = [london_currents(pi, m, xyz, [list(range(n))], beta_model="uniform", distortion=d).circuit_currents_rel[0]
             for d in (0.0, 0.05, 0.1, 0.2)]
        assert np.all(np.diff(j) < 0) and j[0] > prev
        prev = j[0]


def test_benzene_current_from_beta():
    # Absolute Hückel–London current J = 2(e/ħ)²|β| g with β0 = −3.02 eV (graphene hopping 2.8 eV at
    # 1.42 Å carried to 1.397 Å; Castro Neto et al., Rev. Mod. Phys. 2009, 81, 109, from memory) against
    # the ab initio 12 nA/T (Fliegl et al., J. Phys. Chem. A 2009, 113, 8668, from memory): within 20 %.
    # Independent check of the formula: the threaded-flux value (e/ħ)²(2|β|/9)·S for benzene.
    m, xyz = _ring(6)
    lc = london_currents(perceive_pi(m, xyz), m, xyz, [list(range(6))])
    assert_allclose(lc.benzene_abs_nA_per_T, BENZENE_CURRENT_NA_PER_T, rtol=0.20)
    import scipy.constants as sc
    area = 1.5 * np.sqrt(3) * 1.397**2 * 1e-20
    flux = (sc.e / sc.hbar) ** 2 * 2 * abs(BETA0_EV) * sc.e / 9 * area * 1e9
    assert_allclose(lc.circuit_currents_abs_nA_per_T, [flux], rtol=1e-10)
    assert_allclose(lc.circuit_currents_nA_per_T, [BENZENE_CURRENT_NA_PER_T], rtol=1e-12)


def test_annulene18_models_and_observed_shift_difference():
    # The [18]annulene over-estimate, measured on the honeycomb geometry (all bonds 1.397 Å, six inner H):
    # uniform/distance 2.24 × benzene; the self-consistent lengths alternate (Longuet-Higgins & Salem
    # 1959) and lower it, the more so the stronger the coupling (calibrated scf: 1.374/1.433 Å; Coulson
    # line: 1.386/1.417 Å).
    m, xyz, cyc, _, _ = _annulene18()
    pi = perceive_pi(m, xyz)
    j = {mod: london_currents(pi, m, xyz, [cyc], beta_model=mod).circuit_currents_rel[0]
         for mod in ("uniform", "distance", "scf-coulson", "scf")}
    assert j["uniform"] == pytest.approx(j["distance"], rel=1e-12)
    assert 1.0 < j["scf"] < j["scf-coulson"] < j["distance"]
    bla = {mod: np.ptp(huckel(pi, m, xyz, beta_model=mod).bond_lengths_A) for mod in ("scf-coulson", "scf")}
    assert 0.02 < bla["scf-coulson"] < bla["scf"]


def _inner_outer_difference(beta_model):
    from ringshift.fields.polygon import polygon_shielding
    m, xyz, cyc, h_in, h_out = _annulene18()
    pi = perceive_pi(m, xyz)
    j = london_currents(pi, m, xyz, [cyc], beta_model=beta_model).circuit_currents_nA_per_T[0]
    n = np.array([0.0, 0.0, 1.0])
    return j * (polygon_shielding(xyz[h_in], xyz[cyc], n).mean() - polygon_shielding(xyz[h_out], xyz[cyc], n).mean())


def test_annulene18_inner_outer_difference_within_25_percent():
    # Independent check of the a priori "scf" currents: its one parameter was calibrated on the
    # bond-length alternation of trans-polyacetylene (Yannoni & Clarke, PRL 1983, 51, 1191, from memory),
    # never on annulene NMR. Observed low-temperature [18]annulene (from memory): 9.28 − (−2.99) = 12.27 ppm
    # (Oth, Pure Appl. Chem. 1971, 25, 573); shielding per nA/T from ringshift.fields.polygon.polygon_shielding
    # (Johnson–Bovey double loop). Measured 13.2 ppm; tolerance 25 %, the spread expected of a Hückel-level
    # model (the result moves by ~2 ppm per 0.005 Å of the calibration BLA; ringshift.pi.perception notes).
    assert _inner_outer_difference("scf") == pytest.approx(12.27, rel=0.25)


@pytest.mark.xfail(strict=True, reason="measured: the uncalibrated Coulson line (scf-coulson) gives 1.85 x benzene, "
                   "an inner/outer difference of 19.6 ppm against the observed 12.27 ppm")
def test_annulene18_inner_outer_difference_coulson_line():
    # Same check for the earlier Coulson line (ethylene/benzene only; Oth 1971, from memory): known to fail.
    assert _inner_outer_difference("scf-coulson") == pytest.approx(12.27, rel=0.25)


def test_speed_100_pi_atoms():
    # 98-carbon [98]annulene (4n+2) on a regular polygon: a full Hückel–London calculation. Measured
    # 0.03 s with single-threaded BLAS and 0.3–0.9 s when OpenBLAS threads compete on a loaded two-core
    # machine; the bound (best of three, 2 s) guards against algorithmic regressions, not BLAS contention.
    m, xyz = _ring(98)
    pi = perceive_pi(m, xyz)
    times = []
    for _ in range(3):
        t = time.perf_counter()
        lc = london_currents(pi, m, xyz, [list(range(98))])
        times.append(time.perf_counter() - t)
    assert lc.status == "ok" and min(times) < 2.0
    assert_allclose(lc.circuit_currents_rel, [_flux_ring_current(98, 98)], rtol=1e-8)


# ---------------------------------------------------------------------------- geometry and charges
def test_p_orbital_overlap_follows_the_dihedral():
    # |cos| of the p-orbital axes across the biphenyl inter-ring bond against RDKit's dihedral angle
    # (reference library) on an MMFF94 geometry and after setting it to 90°. Tolerance 0.02: the POAV
    # axis is not exactly the dihedral of the heavy-atom plane.
    m, xyz = _embed("c1ccc(cc1)-c1ccccc1")
    pi = perceive_pi(m, xyz)
    k = next(k for k, (i, j) in enumerate(pi.bonds) if not m.GetBondBetweenAtoms(i, j).IsInRing())
    i, j = pi.bonds[k]
    a = next(n.GetIdx() for n in m.GetAtomWithIdx(i).GetNeighbors() if n.GetIdx() != j)
    b = next(n.GetIdx() for n in m.GetAtomWithIdx(j).GetNeighbors() if n.GetIdx() != i)
    conf = m.GetConformer()
    dih = rdMolTransforms.GetDihedralRad(conf, a, i, j, b)
    assert_allclose(pi.bond_overlap[k], abs(np.cos(dih)), atol=0.02)
    rdMolTransforms.SetDihedralDeg(conf, a, i, j, b, 90.0)
    pi = perceive_pi(m, conf.GetPositions())
    assert pi.bond_overlap[k] < 0.02 and any("poor p-orbital overlap" in w for w in pi.warnings)
    assert huckel(pi, m, conf.GetPositions()).resonance[k] < 0.02


def test_planarity_verdicts():
    m, xyz = _embed("c1ccccc1")
    assert perceive_pi(m, xyz).fragment_planar == (True,)
    m, xyz = _embed("C1=CC=CC=CC=C1")  # tub-shaped cyclooctatetraene (MMFF94)
    pi = perceive_pi(m, xyz)
    assert pi.fragment_planar == (False,) and any("non-planar" in w for w in pi.warnings)


def test_pi_charge_shift_of_ions():
    # Hückel charges of the regular ions are q = ±1/N (textbook); with k = 10.7 ppm/e (Schaefer &
    # Schneider 1963, from memory) the charge term is compared with Fraenkel et al., JACS 1960, 82, 5846
    # (C7H7+ 1.9 ppm downfield, C5H5− 1.85 ppm upfield of benzene): within 0.4 ppm, since the observed
    # differences also contain the ring-current differences from benzene.
    out = {}
    for n, smiles in ((7, "[CH+]1C=CC=CC=C1"), (5, "[CH-]1C=CC=C1"), (6, None)):
        m, xyz = _ring(n, smiles)
        q = huckel(perceive_pi(m, xyz), m, xyz).charges
        assert_allclose(q, np.full(n, (1 / 7, -1 / 5, 0.0)[(7, 5, 6).index(n)]), atol=1e-12)
        out[n] = pi_charge_shift_ppm(q)[0]
    assert out[6] == pytest.approx(0.0, abs=1e-12)
    assert_allclose([out[7], out[5]], [1.9, -1.85], atol=0.4)


# -------------------------------------------------------------------------------------- bad input
def test_radicals_fragments_and_no_pi_system_do_not_crash():
    m, xyz = _embed("[CH2]c1ccccc1")  # benzyl radical: odd count, non-degenerate SOMO
    pi = perceive_pi(m, xyz)
    assert pi.radical and any("radical" in w for w in pi.warnings)
    lc = london_currents(pi, m, xyz, _rings(m))
    # any open shell gets no number (README: open shells are reported, never given a current)
    assert lc.open_shell and lc.circuit_currents_rel is None and lc.status.startswith("open shell: odd")
    m, xyz = _ring(5, "[CH]1C=CC=C1")  # cyclopentadienyl radical: degenerate partly filled HOMO
    lc = london_currents(perceive_pi(m, xyz), m, xyz, [list(range(5))])
    assert lc.open_shell and lc.circuit_currents_rel is None and "open shell" in lc.status
    m, xyz = _embed("C1CCCCC1")
    pi = perceive_pi(m, xyz)
    assert pi.atoms == () and any("no π system" in w for w in pi.warnings)
    lc = london_currents(pi, m, xyz, [])
    assert lc.status == "no π system" and lc.circuit_currents_rel is None
    m, xyz = _embed("c1ccccc1Cc1ccccc1")
    pi = perceive_pi(m, xyz)
    assert len(pi.fragments) == 2 and any("disconnected" in w for w in pi.warnings)
    lc = london_currents(pi, m, xyz, _rings(m))
    assert_allclose(lc.circuit_currents_rel, [1.0, 1.0], atol=0.05)  # two benzene rings (MMFF bonds)


BAD = [
    ("coords shape", lambda m, x, pi: london_currents(pi, m, x[:3], _rings(m))),
    ("coords nan", lambda m, x, pi: perceive_pi(m, np.full_like(x, np.nan))),
    ("beta model", lambda m, x, pi: huckel(pi, m, x, beta_model="fancy")),
    ("distance needs coords", lambda m, x, pi: huckel(pi, m, None, beta_model="distance")),
    ("circuit non-pi atom", lambda m, x, pi: london_currents(pi, m, x, [[0, 1, 11]])),
    ("circuit order", lambda m, x, pi: london_currents(pi, m, x, [[0, 2, 1, 3, 4, 5]])),
    ("circuit short", lambda m, x, pi: circuit_electrons(pi, [0, 1], m)),
    ("normals shape", lambda m, x, pi: london_currents(pi, m, x, _rings(m), normals=np.ones((2, 3)))),
    ("distortion", lambda m, x, pi: huckel(pi, m, x, distortion=1.5)),
    ("beta0", lambda m, x, pi: london_currents(pi, m, x, _rings(m), beta0_eV="big")),
    ("mol type", lambda m, x, pi: perceive_pi("c1ccccc1")),
    ("pi type", lambda m, x, pi: huckel("pi", m, x)),
    ("class negative", lambda m, x, pi: huckel_class(-2)),
    ("charges", lambda m, x, pi: pi_charge_shift_ppm([0.1, np.inf])),
]


@pytest.mark.parametrize("name,call", BAD, ids=[b[0] for b in BAD])
def test_bad_input_raises_input_error(name, call):
    m, xyz = _ring(6)
    pi = perceive_pi(m, xyz)
    with pytest.raises(InputError) as err:
        call(m, xyz, pi)
    assert "\n" not in str(err.value)
