"""Metal chelates given as SMILES: free-base proxy, metal at its donors' centroid (ringshift.geometry.metal_ligand)."""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem
from rdkit.Chem import rdMolDescriptors

from ringshift.geometry.metal_ligand import metal_proxy
from ringshift.io.molecule_files import _mol_from_smiles
from ringshift.io.structures import load_structure
from ringshift.shifts.prediction import predict

# zinc porphine written as an ion pair (the usual database form) and with two covalent Zn–N bonds
ZNP_IONIC = "[Zn+2].C1=CC2=NC1=CC1=CC=C([N-]1)C=C1C=CC(=N1)C=C1C=CC(=C2)[N-]1"
ZNP_BONDED = "c1cc2cc3ccc4n3[Zn]n5c(cc1n2)ccc5cc6ccc(c4)n6"


def test_proxy_of_an_ion_pair_is_free_base_porphine():
    # the ligand of a metalloporphine is porphyrinato(2-); with two protons it is free-base porphine, C20H14N4
    # (common practice, no source)
    mol = _mol_from_smiles(ZNP_IONIC)[0]
    proxy = metal_proxy(mol)
    assert proxy is not None and proxy.ionic
    assert rdMolDescriptors.CalcMolFormula(proxy.mol) == "C20H14N4"
    porphine = Chem.MolFromSmiles("c1cc2cc3ccc([nH]3)cc4ccc(n4)cc5ccc([nH]5)cc1n2")
    assert Chem.MolToSmiles(Chem.RemoveHs(proxy.mol)) == Chem.MolToSmiles(porphine)


@pytest.mark.parametrize("smiles", ["c1ccccc1", "[Na+].[O-]c1ccccc1",
                                    "[CH-]1C=CC=C1.[CH-]1C=CC=C1.[Fe+2]"])
def test_no_proxy_without_a_chelate(smiles):
    # no metal; a metal with a single anionic donor; a carbon-bound (sandwich) metal: the ordinary route
    assert metal_proxy(_mol_from_smiles(smiles)[0]) is None


@pytest.fixture(scope="module")
def zinc_porphines():
    return load_structure(ZNP_IONIC), load_structure(ZNP_BONDED)


def test_zinc_porphine_smiles_is_planar_with_zinc_in_the_centre(zinc_porphines):
    # metalloporphyrins are planar, the metal at the centre of the four N (common practice, no source); the
    # ion pair is bonded back to its donors (two single, two dative bonds)
    for st in zinc_porphines:
        zn = [a.GetIdx() for a in st.mol.GetAtoms() if a.GetSymbol() == "Zn"][0]
        n = [a.GetIdx() for a in st.mol.GetAtoms() if a.GetSymbol() == "N"]
        x = st.coords[int(np.argmax(st.weights))]
        d = np.linalg.norm(x[n] - x[zn], axis=1)
        assert np.all(np.abs(d - 2.05) < 0.15)           # M–N of a metalloporphyrin 1.95–2.10 Å (from memory)
        heavy = x[[a.GetIdx() for a in st.mol.GetAtoms() if a.GetAtomicNum() > 1]]
        rms = np.linalg.svd(heavy - heavy.mean(axis=0), compute_uv=False)[-1] / np.sqrt(len(heavy))
        assert rms < 0.05
    assert zinc_porphines[0].mol.GetAtomWithIdx(0).GetDegree() == 4


def test_two_notations_of_zinc_porphine_give_the_same_shifts(zinc_porphines):
    # the same complex written two ways must give the same prediction (common practice, no source); both are
    # diatropic, meso H downfield of beta H (zinc porphine about 10.2 and 9.4 ppm, from memory)
    preds = [sorted((g.predicted_ppm, g.n_h) for g in predict(st).groups) for st in zinc_porphines]
    ionic, bonded = preds
    assert [n for _, n in ionic] == [8, 4]
    beta_bonded = np.average([p for p, n in bonded[:-1]], weights=[n for _, n in bonded[:-1]])
    assert abs(ionic[0][0] - beta_bonded) < 0.1 and abs(ionic[1][0] - bonded[-1][0]) < 0.05
    assert 8.5 < ionic[0][0] < ionic[1][0]


def test_charge_separated_metal_porphine_matches_the_ion_pair():
    # nickel porphine written with M(2-)–N(+) bonds (a common database form) is the same complex as the ion pair
    # and must give the same shifts (common practice, no source); before, the proxy protonated the N(+) donors
    # and the ligand embedded saddled, with no ring current
    sep = "C1=CC2=[N+]3C1=Cc1ccc4[n]1[Ni-2]31[n]3c(ccc3=CC3=[N+]1C(=C4)C=C3)=C2"
    pair = "[Ni+2].C1=CC2=NC1=CC1=CC=C([N-]1)C=C1C=CC(=N1)C=C1C=CC(=C2)[N-]1"
    a, b = (sorted((round(g.predicted_ppm, 2), g.n_h) for g in predict(load_structure(s)).groups) for s in (sep, pair))
    assert [n for _, n in a] == [n for _, n in b] == [8, 4]
    assert all(abs(x - y) < 0.05 for (x, _), (y, _) in zip(a, b))
    st = load_structure(sep)
    assert all(at.GetFormalCharge() == 0 for at in st.mol.GetAtoms())


def test_report_of_a_metal_chelate_prints_no_rdkit_log_lines(tmp_path):
    # dative bonds made RDKit's CoordGen depiction (and the V2000 SDF writer) log "unrecognized bond type" on
    # the C++ stderr during `report` (measured); the user must see only ringshift's own lines
    import subprocess
    import sys

    out = tmp_path / "rep"
    run = subprocess.run([sys.executable, "-m", "ringshift", "report", ZNP_IONIC, "-o", str(out)],
                         capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stderr
    assert "unrecognized" not in run.stderr and "[" not in "".join(
        line[:1] for line in run.stderr.splitlines())           # no RDKit "[hh:mm:ss]" log line
    assert (out / "structure.sdf").exists()
