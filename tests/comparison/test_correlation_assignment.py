"""Correlations and couplings as evidence in the assignment: synthetic round trips (done-when tests).

Every spectrum, cross peak and coupling list here is invented (synthetic): the truth is set by construction, and
the peaks are placed so that the 1D evidence alone prefers a wrong assignment, which the 2D/multiplet evidence must
then overturn. Bond counts come from the molecular graph; the checks that the graph rule itself is right are in
test_couplings.py (against RDKit's distance matrix).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from ringshift import api
from ringshift.api import predict
from ringshift.cli import main
from ringshift.comparison.comparer import compare
from ringshift.comparison.constraints import CORRELATION_COST, CouplingEvidence
from ringshift.comparison.couplings import Partner
from ringshift.comparison.records import CircuitPrior, GroupModel, ObservedPeak
from ringshift.comparison.run import run_compare
from ringshift.errors import InputError
from ringshift.io.correlations import MatchedCorrelation, parse_correlations
from ringshift.io.peak_tables import parse_peak_table_csv, read_peaks
from ringshift.reporting import schemas
from ringshift.reporting.json import comparison_to_dict, to_json
from ringshift.reporting.text import comparison_text


# ------------------------------------------------------------------ invented groups, no molecule
def _groups():
    """Invented: two ring CH groups of one class whose predictions differ by 0.02 ppm, and a methyl."""
    return [GroupModel("A", (10,), (0,), 1, "ring CH", 7.20, 0.3, np.array([0.012])),
            GroupModel("B", (11,), (1,), 1, "ring CH", 7.20, 0.3, np.array([0.010])),
            GroupModel("M", (12, 13, 14), (2,), 3, "methyl", 2.30, 0.2, np.array([0.004]))]


PEAKS = [ObservedPeak(7.10, 1.0, label="p1"), ObservedPeak(7.30, 1.0, label="p2"), ObservedPeak(2.35, 3.0, label="p3")]
PRIOR = [CircuitPrior("R1", 12.0, 12.0)]


def _evidence(pairs=(), peak_j=(None, None, None), partners=((), (), ())):
    masks = np.zeros((3, 3), dtype=np.int64)
    masks[0, 2] = masks[2, 0] = 1 << 4          # A–M: 4 bonds (invented)
    masks[1, 2] = masks[2, 1] = 1 << 5          # B–M: 5 bonds
    masks[0, 1] = masks[1, 0] = 1 << 3          # A–B: 3 bonds
    return CouplingEvidence(pairs=tuple(pairs), group_masks=masks, partners=partners, peak_j=peak_j,
                            source="invented.csv", tolerance_ppm=0.05)


def _peaks_of(comp):
    return {g.label: g.peak_label for g in comp.assignment}


def test_cross_peak_overturns_a_near_tie_of_the_1d_evidence():
    plain = compare(_groups(), PEAKS, PRIOR)
    assert _peaks_of(plain)["A"] == "p2"          # 1D alone: A (predicted higher) on the higher peak
    cross = MatchedCorrelation(2, 0, "cosy", None, "invented.csv:2")    # methyl ↔ p1
    comp = compare(_groups(), PEAKS, PRIOR, correlations=_evidence([cross]))
    assert _peaks_of(comp) == {"A": "p1", "B": "p2", "M": "p3"}        # the truth of the invented spectrum
    check = comp.correlations
    assert check.n_confirmed == 1 and check.n_violated == 0
    assert check.pairs[0].status == "confirmed" and check.pairs[0].status_1d == "violated"
    assert check.pairs[0].bonds == 4
    assert {(c.group, c.peak_1d, c.peak, c.by) for c in check.changes} == {("A", "p2", "p1", "correlations"),
                                                                         ("B", "p1", "p2", "correlations")}
    assert check.cost_1d == pytest.approx(plain.cost)
    assert comp.cost >= plain.cost - 1e-9          # the correlation cannot buy a cheaper 1D fit


def test_cross_peak_that_agrees_with_the_1d_assignment_changes_nothing():
    plain = compare(_groups(), PEAKS, PRIOR)
    cross = MatchedCorrelation(0, 1, "vicinal", "strong", "invented.csv:2")      # p1 ↔ p2: A–B are 3 bonds apart
    comp = compare(_groups(), PEAKS, PRIOR, correlations=_evidence([cross]))
    assert _peaks_of(comp) == _peaks_of(plain) and comp.correlations.changes == ()
    assert comp.cost == pytest.approx(plain.cost)


def test_a_cross_peak_no_assignment_can_meet_is_reported_and_costs_its_penalty():
    cross = MatchedCorrelation(0, 1, "long-range", None, "invented.csv:2")       # A–B have no 4-bond pair
    comp = compare(_groups(), PEAKS, PRIOR, correlations=_evidence([cross]))
    assert comp.correlations.n_violated == 1 and comp.correlations.pairs[0].status == "violated"
    assert comp.cost - comp.correlations.cost_1d == pytest.approx(CORRELATION_COST, abs=1e-6)


def test_overlap_any_group_at_a_peak_may_supply_the_neighbour():
    # A and B overlap in one 2-H peak; the methyl correlates with it: A (4 bonds from M) supplies the pair
    peaks = [ObservedPeak(7.20, 2.0, label="p12"), ObservedPeak(2.35, 3.0, label="p3")]
    ev = _evidence([MatchedCorrelation(1, 0, "cosy", None, "invented.csv:2")], peak_j=(None, None))
    comp = compare(_groups(), peaks, PRIOR, correlations=ev)
    assert set(comp.correlations.pairs[0].groups_a) == {"M"}
    assert set(comp.correlations.pairs[0].groups_b) == {"A", "B"}
    assert comp.correlations.pairs[0].status == "confirmed"


def test_couplings_forbid_pairs_in_the_matching():
    # invented: A has a trans partner across a C=C (needs J ≥ 11 Hz), B only a cis one; p1 shows J = 16 Hz
    partners = ((Partner(2, "trans", 12.0, 18.0, 180.0),), (Partner(2, "cis", 6.0, 12.0, 0.0),), ())
    ev = _evidence(peak_j=((16.0,), (9.5,), None), partners=partners)
    comp = compare(_groups(), PEAKS, PRIOR, correlations=ev)
    assert _peaks_of(comp)["A"] == "p1" and _peaks_of(comp)["B"] == "p2"
    rows = {r.peak_label: r for r in comp.correlations.couplings}
    assert rows["p1"].status == "consistent" and "B" in rows["p1"].ruled_out_groups
    assert rows["p2"].status == "consistent" and "A" in rows["p2"].ruled_out_groups
    assert {c.by for c in comp.correlations.changes} == {"couplings"}


def test_couplings_that_fit_no_group_forbid_nothing_and_are_reported():
    # invented: p1 lists J = 16 Hz but no group has a trans partner; the assignment is then the 1D one
    partners = ((Partner(2, "cis", 6.0, 12.0, 0.0),), (Partner(2, "cis", 6.0, 12.0, 0.0),), ())
    ev = _evidence(peak_j=((16.0,), None, None), partners=partners)
    plain = compare(_groups(), PEAKS, PRIOR)
    comp = compare(_groups(), PEAKS, PRIOR, correlations=ev)
    assert _peaks_of(comp) == _peaks_of(plain)
    (row,) = comp.correlations.couplings
    assert row.status == "inconsistent" and row.ruled_out_groups == () and "16" in row.reason


@pytest.mark.filterwarnings("ignore::ringshift.errors.AssignmentWarning")   # contradictory invented data
@pytest.mark.parametrize("seed", [0, 1, 2], ids=["seed0", "seed1", "seed2"])
def test_forbidden_pairs_are_never_used(seed):
    # invented: random couplings on random peaks; whatever the search does, no group sits where its couplings
    # forbid it (unless every group is forbidden there, when nothing is)
    rng = np.random.default_rng(seed)
    partners = ((Partner(2, "trans", 12.0, 18.0, 180.0),), (Partner(2, "cis", 6.0, 12.0, 0.0),), ())
    peak_j = tuple((float(rng.uniform(6.5, 17.5)),) if rng.random() < 0.7 else None for _ in PEAKS)
    from ringshift.comparison.constraints import coupling_forbidden

    forbidden, _ = coupling_forbidden(partners, peak_j, np.ones(len(PEAKS), dtype=bool))
    comp = compare(_groups(), PEAKS, PRIOR, correlations=_evidence(peak_j=peak_j, partners=partners), seed=seed)
    for i, g in enumerate(comp.assignment):
        assert g.peak_index is None or not forbidden[i, g.peak_index]


def test_malformed_evidence_is_refused():
    with pytest.raises(InputError, match="expected two different peak indices"):
        compare(_groups(), PEAKS, PRIOR, correlations=_evidence([MatchedCorrelation(0, 7, "cosy", None, "x:2")]))
    with pytest.raises(InputError, match="CouplingEvidence"):
        compare(_groups(), PEAKS, PRIOR, correlations="cosy.csv")


def test_deterministic_for_a_seed():
    cross = MatchedCorrelation(2, 0, "cosy", None, "invented.csv:2")
    a = compare(_groups(), PEAKS, PRIOR, correlations=_evidence([cross]), seed=3).to_dict()
    b = compare(_groups(), PEAKS, PRIOR, correlations=_evidence([cross]), seed=3).to_dict()
    assert a == b


# --------------------------------------------------------------- real molecules, invented spectra
#: Invented toluene spectrum: the ortho H (4 bonds from the methyl H) at 7.10, meta at 7.30, para at 7.18.
TOLUENE_PEAKS = "# invented (synthetic)\nshift_ppm,integral,label\n7.30,2,pA\n7.10,2,pB\n7.18,1,pC\n2.35,3,pM\n"
TOLUENE_COSY = "# invented (synthetic)\nshift_a_ppm,shift_b_ppm,kind,strength\n2.35,7.10,long-range,weak\n"


@pytest.fixture(scope="module")
def toluene():
    return predict("Cc1ccccc1", seed=1)


def _ortho_label(pred):
    return next(g.label for g in pred.groups if set(g.parents) == {2, 6})


def test_toluene_round_trip_cosy_fixes_ortho_and_meta(toluene):
    pl = parse_peak_table_csv(TOLUENE_PEAKS, source="toluene_peaks.csv")
    ortho = _ortho_label(toluene)
    plain = run_compare(toluene, pl)
    assert _peaks_of(plain.comparison)[ortho] == "pA"        # 1D alone: ortho and meta tie, the wrong one wins
    res = run_compare(toluene, pl, correlations=parse_correlations(TOLUENE_COSY, source="toluene_cosy.csv"))
    assert _peaks_of(res.comparison)[ortho] == "pB"          # the invented truth
    check = res.comparison.correlations
    assert check.pairs[0].status == "confirmed" and check.pairs[0].bonds == 4 and check.pairs[0].status_1d == "violated"
    doc = json.loads(to_json(comparison_to_dict(res)))
    assert schemas.validate(doc, "comparison") == "comparison"
    assert doc["correlations"]["changes"] and doc["correlations"]["pairs"][0]["strength"] == "weak"
    text = comparison_text(res)
    assert "1 confirmed, 0 violated" in text and "ruled out by correlations" in text


#: Invented styrene spectrum: the vinyl H trans to Hα at 5.28 ppm (J 17.6 Hz), the cis one at 5.40 (J 10.9 Hz).
STYRENE_PEAKS = ("# invented (synthetic)\nshift_ppm,integral,label,j_hz\n7.40,2,pO,\n7.32,2,pM,\n7.25,1,pP,\n"
                 "6.72,1,pA,17.6/10.9\n5.28,1,pT,17.6\n5.40,1,pC,10.9\n")


def test_styrene_round_trip_couplings_fix_the_terminal_protons():
    pred = predict("C=Cc1ccccc1", seed=1)
    pl = parse_peak_table_csv(STYRENE_PEAKS, source="styrene_peaks.csv")
    res = run_compare(pred, pl)
    mol, xyz = pred.structure.mol, pred.structure.coords[0]
    alpha_h = next(a.GetIdx() for a in mol.GetAtomWithIdx(1).GetNeighbors() if a.GetAtomicNum() == 1)
    from ringshift.comparison.couplings import dihedral_deg
    trans = {}
    for g in pred.groups:
        if g.parents == (0,):           # the two terminal =CH2 protons
            phi = float(dihedral_deg(xyz[g.atoms[0]], xyz[0], xyz[1], xyz[alpha_h]))
            trans[g.label] = abs(phi) > 90.0
    (trans_label,) = [k for k, v in trans.items() if v]
    (cis_label,) = [k for k, v in trans.items() if not v]
    got = _peaks_of(res.comparison)
    assert got[trans_label] == "pT" and got[cis_label] == "pC"
    check = res.comparison.correlations
    assert check.source is None and {c.by for c in check.changes} == {"couplings"}
    assert all(r.status == "consistent" for r in check.couplings)


# ---------------------------------------------------------------------------------- CLI and API
def _files(tmp_path):
    peaks = tmp_path / "toluene_peaks.csv"
    cosy = tmp_path / "toluene_cosy.csv"
    peaks.write_text(TOLUENE_PEAKS, encoding="utf-8")
    cosy.write_text(TOLUENE_COSY, encoding="utf-8")
    return peaks, cosy


def run(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        main(argv)
    out, err = capsys.readouterr()
    return exc.value.code, out, err


def test_cli_compare_and_report_with_correlations(tmp_path, capsys):
    peaks, cosy = _files(tmp_path)
    code, out, err = run(["compare", "Cc1ccccc1", str(peaks), "--correlations", str(cosy), "--seed", "1",
                          "--format", "json"], capsys)
    assert code == 0, err
    doc = json.loads(out)
    assert doc["correlations"]["n_confirmed"] == 1
    code, out, err = run(["report", "Cc1ccccc1", str(peaks), "--correlations", str(cosy), "--seed", "1",
                          "-o", str(tmp_path / "rep"), "--quiet"], capsys)
    assert code == 0, err
    html = (tmp_path / "rep" / "report.html").read_text(encoding="utf-8")
    assert '<section id="correlations">' in html and 'data-path="/correlations/pairs/0/status"' in html


def test_cli_bad_correlation_file_is_one_line_exit_2(tmp_path, capsys):
    peaks, cosy = _files(tmp_path)
    cosy.write_text("shift_a_ppm,shift_b_ppm\n2.35,5.00\n", encoding="utf-8")
    code, out, err = run(["compare", "Cc1ccccc1", str(peaks), "--correlations", str(cosy)], capsys)
    assert code == 2 and out == "" and "Traceback" not in err
    assert err.strip().count("\n") == 0 and f"{cosy}:2" in err and "matches no peak" in err
    code, _, err = run(["report", "Cc1ccccc1", "--correlations", str(cosy), "-o", str(tmp_path / "r")], capsys)
    assert code == 2 and "--correlations needs observed peaks" in err


def test_api_compare_accepts_a_path_or_a_list(tmp_path, toluene):
    peaks, cosy = _files(tmp_path)
    pl = read_peaks(peaks, n_hydrogens=len(toluene.protons))
    by_path = api.compare(toluene, pl, correlations=cosy)
    by_list = api.compare(toluene, pl, correlations=parse_correlations(TOLUENE_COSY, source=str(cosy)))
    assert by_path.comparison.to_dict() == by_list.comparison.to_dict()
    with pytest.raises(InputError, match="correlation CSV"):
        api.compare(toluene, pl, correlations=3)


def test_every_cross_peak_the_truth_meets_is_met():
    """Invented 1-methylnaphthalene spectrum (predictions + N(0, 0.15 ppm) scatter) with every vicinal pair as a
    'cosy' cross peak (3 or 4 bonds allowed): the truth meets them all, so the search must find an assignment that
    does too (a greedy one-move repair, the first version, left one unmet here)."""
    from ringshift.comparison.couplings import group_bond_masks, mol_bond_distances

    pred = predict("Cc1cccc2ccccc12", seed=1)
    rng = np.random.default_rng(0)
    shifts = [round(g.predicted_ppm + rng.normal(0, 0.15), 3) for g in pred.groups]
    rows = "\n".join(f"{s},{g.n_h},q{i}" for i, (s, g) in enumerate(zip(shifts, pred.groups)))
    pl = parse_peak_table_csv("shift_ppm,integral,label\n" + rows + "\n", source="invented.csv")
    masks = group_bond_masks(mol_bond_distances(pred.structure.mol), [g.atoms for g in pred.groups])
    n = len(pred.groups)
    pairs = [(i, j) for i in range(n) for j in range(i + 1, n) if masks[i, j] & (1 << 3)]
    assert len(pairs) >= 5
    cosy = "shift_a_ppm,shift_b_ppm,kind\n" + "\n".join(f"q{i},q{j},cosy" for i, j in pairs) + "\n"
    res = run_compare(pred, pl, correlations=parse_correlations(cosy, source="invented_cosy.csv"))
    assert res.comparison.correlations.n_violated == 0
