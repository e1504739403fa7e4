"""Ring-current shifts against published spectra where a ring current dominates a proton.

Each check compares the *ring-current part* of an observed shift (observed δ minus a ring-current-free
reference δ of the same proton class) with the loop model's prediction: sign, and size within a stated
factor. The loop models are tested with the benzene-equivalent current (12 nA/T; Fliegl et al., J. Phys.
Chem. A 2009, 113, 8668, from memory) so that geometry, not the a priori current model, is what is
checked here; the Hückel–London currents are checked for sign only. Geometries are ETKDG v3 + MMFF94
from ringshift itself, so a factor of about two is the honest tolerance for near-ring protons (MMFF
gets C–C lengths and inner-H positions of large annulenes visibly wrong, design notes §7).

Observed shifts are from memory (CDCl3 or similar, room temperature unless stated); reference shifts
are the packaged ring-current-free table (ringshift/data/reference_shifts.csv, its own sources).
"""

import numpy as np
import pytest

from ringshift.io.structures import load_structure
from ringshift.shifts.prediction import predict

BENZENE_J = 12.0


def _rc(pred, predicate):
    vals = [g.ring_current_ppm for g in pred.groups if predicate(g)]
    assert vals, "no group matched"
    return float(np.mean(vals))


@pytest.fixture(scope="module")
def annulene18():
    return load_structure("[H]/C1=C/C=C/C=C/C=C\\C=C\\C=C\\C=C/C=C/C=C1\\[H]")


def test_benzene_ring_current_shift_is_classical():
    # Benzene 7.27 ppm vs an olefinic conjugated-ring reference (1,3-cyclohexadiene ≈5.8 ppm): the
    # classical ≈1.5 ppm ring-current shift (Günther, NMR Spectroscopy, Wiley; from memory). The issue
    # asks for +1.0 … +1.8 ppm at the benzene current.
    pred = predict(load_structure("c1ccccc1"), currents="benzene")
    assert 1.0 <= pred.groups[0].ring_current_ppm <= 1.8


def test_benzene_huckel_current_equals_benzene():
    # Hückel–London currents are reported relative to benzene with the same parameters: benzene = 1
    # (definition; DESIGN.md §5). The reference is a regular 1.397 Å hexagon; the MMFF94 ring differs
    # by < 0.01 Å, which moves the ring area (and the London response) by < 1 %.
    pred = predict(load_structure("c1ccccc1"))
    assert pred.circuits[0].current_rel_benzene == pytest.approx(1.0, abs=0.01)


def test_annulene18_inner_and_outer(annulene18):
    # [18]annulene at about −60 °C: outer H 9.28, inner H −2.99 ppm (Oth, Bünzli & de Julien de
    # Zélicourt, Helv. Chim. Acta 1974, 57, 2276; from memory). Reference 5.90 ppm → ring-current parts
    # +3.4 (outer) and −8.9 ppm (inner). Model at 12 nA/T: sign right, size within a factor 2.
    pred = predict(annulene18, set_current={"M1": BENZENE_J})
    assert sorted(g.n_h for g in pred.groups) == [6, 12] or len(pred.protons) == 18
    inner = _rc(pred, lambda g: g.ring_current_ppm < 0)
    outer = _rc(pred, lambda g: g.ring_current_ppm > 0)
    assert -8.9 * 2 < inner < -8.9 / 2
    assert 3.4 / 2 < outer < 3.4 * 2


def test_methano10annulene_bridge():
    # 1,6-methano[10]annulene: bridge CH2 at −0.52 ppm (Vogel & Roth, Angew. Chem. Int. Ed. 1964, 3,
    # 228; from memory); bridge reference 2.2 ppm (table) → ring-current part ≈ −2.7 ppm. The CH2 sits
    # over the 10π perimeter: upfield, size within a factor 2 at the benzene current.
    pred = predict(load_structure("C1=CC=C2CC(=C1)C=CC=C2"), set_current={"M1": BENZENE_J})
    bridge = _rc(pred, lambda g: g.proton_class == "bridge_CH2_over_pi")
    assert -2.7 * 2 < bridge < -2.7 / 2
    # and the perimeter H are deshielded (observed 6.9-7.3 ppm vs 5.9: +1.0 … +1.4)
    ring = _rc(pred, lambda g: g.proton_class.startswith("sp2"))
    assert 0.5 < ring < 2.8


def test_dimethyldihydropyrene_internal_methyls():
    # trans-15,16-dimethyldihydropyrene: internal CH3 at −4.25 ppm, ring H 8.1-8.7 ppm (Boekelheide &
    # Phillips, J. Am. Chem. Soc. 1967, 89, 1695; from memory). CH3 reference 1.0 ppm (table, homoallylic CH3)
    # → ring-current part ≈ −5.25 ppm; ring H +2.2 … +2.8 ppm.
    pred = predict(load_structure("C1=CC2=CC=C3C=CC=C4C=CC(=C1)[C@]2(C)[C@]34C"),
                   set_current={"M1": BENZENE_J})
    me = _rc(pred, lambda g: g.proton_class == "sp3_CH3_beta_to_pi")
    assert -5.25 * 2 < me < -5.25 / 2
    ring = _rc(pred, lambda g: g.proton_class.startswith("sp2"))
    assert 2.5 / 2 < ring < 2.5 * 2


def test_paracyclophane_facing_ring():
    # [2.2]paracyclophane: aromatic H 6.47 ppm vs p-xylene 7.05 ppm (Cram et al., J. Am. Chem. Soc.
    # 1950s; Günther, NMR Spectroscopy; from memory): the facing ring moves them ≈0.6 ppm upfield.
    # Check: the other ring's contribution at each aromatic H is upfield, −0.2 … −1.2 ppm.
    pred = predict(load_structure("C1Cc2ccc(cc2)CCc2ccc1cc2"), currents="benzene")
    rings = [c.circuit for c in pred.circuits]
    assert len(rings) == 2
    checked = 0
    for p in pred.protons:
        if not p.proton_class.startswith("sp2"):
            continue
        own = 0 if p.parent in rings[0].atoms else 1
        other = p.per_circuit_ppm[1 - own]
        assert -1.2 < other < -0.2
        checked += 1
    assert checked == 8


def test_porphine_nh_and_meso():
    # Free-base porphine: inner NH ≈ −3.8 ppm, meso H ≈ 10.6 ppm, β H ≈ 9.7 ppm (from memory; compare
    # tetraphenylporphyrin NH −2.76 ppm, common practice). With the a priori Hückel–London currents the
    # NH are strongly shielded (ring-current part below −4 ppm against a 6.4 ppm NH reference) and the
    # meso H deshielded (above +1.5 ppm). Sign and size class only.
    pred = predict(load_structure("C1=CC2=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=CC1=N2)N5"))
    nh = _rc(pred, lambda g: g.proton_class.startswith("NH"))
    mol = pred.structure.mol
    # meso carbons: CH between two ring carbons that each carry N (pattern [cH,CH] bonded to two C-N)
    def is_meso(atom_idx):
        a = mol.GetAtomWithIdx(atom_idx)
        heavy = [n for n in a.GetNeighbors() if n.GetAtomicNum() > 1]
        return a.GetSymbol() == "C" and len(heavy) == 2 and all(
            any(x.GetSymbol() == "N" for x in n.GetNeighbors()) for n in heavy)
    meso = [p.ring_current_ppm for p in pred.protons if is_meso(p.parent)]
    assert nh < -4.0
    assert len(meso) == 4 and min(meso) > 1.5


def test_cyclooctatetraene_is_atropic():
    # Tub-shaped cyclooctatetraene: 5.75 ppm, a typical olefinic shift (Günther, NMR Spectroscopy; from
    # memory): its ring-current part is small. Hückel–London on the tub geometry: |Δδ| < 0.5 ppm.
    pred = predict(load_structure("C1=CC=CC=CC=C1"))
    assert not pred.circuits[0].planar
    assert abs(pred.groups[0].ring_current_ppm) < 0.5


@pytest.mark.parametrize("smiles,sign", [("c1cc[cH+]ccc1", 1), ("[cH-]1cccc1", 1)],
                         ids=["tropylium", "cyclopentadienide"])
def test_ion_currents_diatropic_and_charge_term(smiles, sign):
    # Tropylium and cyclopentadienide are 6π diatropic ions; their π-charge terms have the sign of the
    # charge: C7H7+ 1.9 ppm downfield, C5H5- 1.85 ppm upfield of benzene (Fraenkel et al., J. Am. Chem. Soc.
    # 1960, 82, 5846). Charge term within 0.6 ppm of k·q = ±10.7/N ppm (Schaefer & Schneider 1963, from
    # memory): +1.53 (N = 7), −2.14 (N = 5).
    pred = predict(load_structure(smiles))
    assert pred.circuits[0].current_rel_benzene * sign > 0
    n = len(pred.protons)
    q = pred.structure.charge
    assert pred.groups[0].charge_ppm == pytest.approx(10.7 * q / n, abs=0.6)


def test_annulene18_default_pipeline_inner_outer_difference(annulene18):
    # With the default settings (Hückel–London, self-consistent bond lengths calibrated on the
    # trans-polyacetylene bond alternation, polygon double loops) the mean outer-minus-inner ring-current
    # shift difference of [18]annulene must lie within 25 % of the published low-temperature difference
    # 9.28 − (−2.99) = 12.27 ppm (Oth, Bünzli & de Julien de Zélicourt, Helv. Chim. Acta 1974, 57, 2276;
    # from memory). These NMR data play no part in the calibration (ringshift.pi.huckel docstring).
    pred = predict(annulene18)
    inner = _rc(pred, lambda g: g.ring_current_ppm < 0)
    outer = _rc(pred, lambda g: g.ring_current_ppm > 0)
    assert abs((outer - inner) - 12.27) <= 0.25 * 12.27, (outer, inner)


def test_annulene16_sign_pattern_paratropic():
    # Planar-ish 4n annulene with bond alternation: paratropic (Pople & Untch, J. Am. Chem. Soc. 1966, 88,
    # 4811): inner H downfield, outer H upfield, as observed for [16]annulene at low temperature (inner
    # 10.43, outer 5.40 ppm; Calder et al., J. Chem. Soc. C 1967, 1041; from memory).
    from tests.comparison.test_compare_published import _annulene_smiles

    pred = predict(load_structure(_annulene_smiles("ZEZEZEZE")))
    assert pred.circuits[0].current_nA_per_T < 0
    X = pred.structure.coords[int(np.argmax(pred.structure.weights))]
    centre = np.array(pred.circuits[0].centre)
    radius = pred.circuits[0].radius_A
    inner = [p.ring_current_ppm for p in pred.protons if np.linalg.norm(X[p.index] - centre) < radius]
    outer = [p.ring_current_ppm for p in pred.protons if np.linalg.norm(X[p.index] - centre) >= radius]
    assert len(inner) == 4 and np.mean(inner) > 0 > np.mean(outer)


@pytest.mark.parametrize("smiles, observed_ppm", [
    ("c1cc[nH]c1", 8.0),                      # pyrrole NH, CDCl3 (Pretsch, Buehlmann, Badertscher; from memory)
    ("c1ccc2[nH]ccc2c1", 8.1),                # indole NH, CDCl3 (same handbook; from memory)
    ("c1ccc2c(c1)[nH]c1ccccc12", 8.0),        # carbazole NH, CDCl3 (same handbook; from memory)
])
def test_pyrrole_type_nh_reference_is_model_consistent(smiles, observed_ppm):
    # The packaged NH_pyrrole_type reference is the mean over these three compounds of observed NH minus the
    # ring-current part the default pipeline computes for them, so each predicted NH must land within the
    # spread of that mean (±0.7 ppm: the three ring-current parts differ by 1.3 ppm, max - min) of the
    # observed value. A reference that again assumed a benzene-like 1.5-2 ppm for a five-membered ring
    # (6.0 ppm) puts pyrrole 1.1 ppm low and fails.
    pred = predict(load_structure(smiles))
    nh = [g.predicted_ppm for g in pred.groups if g.proton_class == "NH_pyrrole_type"]
    assert len(nh) == 1
    assert nh[0] == pytest.approx(observed_ppm, abs=0.7)
