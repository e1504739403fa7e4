"""The report, map, trajectory, batch and demo commands end to end (in-process)."""

import json

import pytest
from rdkit import Chem
from rdkit.Chem import AllChem

from ringshift.cli import main


def run(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        main(argv)
    out, err = capsys.readouterr()
    return exc.value.code, out, err


def test_report_with_peaks(tmp_path, capsys):
    peaks = tmp_path / "p.csv"
    peaks.write_text("shift_ppm,integral\n7.36,6\n", encoding="utf-8")
    out_dir = tmp_path / "rep"
    code, out, err = run(["report", "c1ccccc1", str(peaks), "-o", str(out_dir), "--quiet"], capsys)
    assert code == 0, err
    assert (out_dir / "report.html").is_file() and (out_dir / "structure.sdf").is_file()
    data = json.loads((out_dir / "results.json").read_text())
    assert data["ringshift_result"] == "comparison"
    # existing folder refused without --force, nothing changed
    code, _, err = run(["report", "c1ccccc1", "-o", str(out_dir), "--quiet"], capsys)
    assert code == 2 and "--force" in err


def test_map_and_scan(tmp_path, capsys):
    for plane in ("both", "scan"):
        target = tmp_path / f"m_{plane}.png"
        code, _, err = run(["map", "c1ccccc1", "-o", str(target), "--plane", plane, "--grid", "41"], capsys)
        assert code == 0, err
        assert target.stat().st_size > 1000
    code, _, err = run(["map", "C1CCCCC1", "-o", str(tmp_path / "x.png")], capsys)
    assert code == 2 and "no conjugated ring" in err and not (tmp_path / "x.png").exists()


def test_trajectory_exchange(tmp_path, capsys):
    m = Chem.AddHs(Chem.MolFromSmiles("c1ccc2ccccc2c1"))
    ids = AllChem.EmbedMultipleConfs(m, 3, randomSeed=5)
    AllChem.MMFFOptimizeMoleculeConfs(m)
    path = tmp_path / "t.xyz"
    path.write_text("".join(Chem.MolToXYZBlock(m, confId=i) for i in ids))
    code, out, err = run(["trajectory", str(path), "--format", "json", "--exchange", "auto"], capsys)
    assert code == 0, err
    data = json.loads(out)
    assert data["n_frames"] == 3
    # naphthalene: alpha and beta protons (4 + 4) after exchange over topological equivalents (RDKit ranks)
    assert sorted(g["n_h"] for g in data["groups"]) == [4, 4]


def test_batch_survives_a_bad_molecule_and_resumes(tmp_path, capsys):
    lib = tmp_path / "lib.smi"
    lib.write_text("c1ccccc1 benzene\nC1CC(( broken\nc1ccncc1 pyridine\n", encoding="utf-8")
    out = tmp_path / "out.jsonl"
    code, text, err = run(["batch", str(lib), "-o", str(out), "--quiet"], capsys)
    assert code == 0, err
    recs = [json.loads(line) for line in out.read_text().splitlines()]
    assert [r["name"] for r in recs] == ["benzene", "broken", "pyridine"]
    assert [r["ok"] for r in recs] == [True, False, True]
    code, text, _ = run(["batch", str(lib), "-o", str(out), "--quiet"], capsys)
    assert code == 0 and "3 already done" in text


def test_demo_runs(tmp_path, capsys):
    out_dir = tmp_path / "demo"
    code, out, err = run(["demo", "-o", str(out_dir), "--quiet"], capsys)
    assert code == 0, err
    assert "FJ14C: verdict diatropic" in out and "claim 'aromatic': supported" in out
    assert (out_dir / "fj14c" / "report.html").is_file() and (out_dir / "fj14o" / "report.html").is_file()


def _naphthalene_frames(tmp_path, n=3):
    m = Chem.AddHs(Chem.MolFromSmiles("c1ccc2ccccc2c1"))
    ids = AllChem.EmbedMultipleConfs(m, n, randomSeed=5)
    AllChem.MMFFOptimizeMoleculeConfs(m)
    path = tmp_path / "t.xyz"
    path.write_text("".join(Chem.MolToXYZBlock(m, confId=i) for i in ids))
    return path


def test_trajectory_given_weights_and_exchange_groups(tmp_path, capsys):
    path = _naphthalene_frames(tmp_path)
    single = []
    for k in range(3):       # each frame alone, by a weight file that puts all weight on it
        wfile = tmp_path / f"w{k}.txt"
        wfile.write_text("# one weight per frame\n" + "\n".join("1" if j == k else "0" for j in range(3)) + "\n")
        code, out, err = run(["trajectory", str(path), "--format", "json", "--frame-weights", str(wfile)], capsys)
        assert code == 0, err
        single.append({p["index"]: p["ring_current_ppm"] for p in json.loads(out)["protons"]})
    wfile = tmp_path / "w.txt"
    wfile.write_text("1\n2\n1\n")
    code, out, err = run(["trajectory", str(path), "--format", "json", "--frame-weights", str(wfile),
                          "--exchange-group", "10,11,12"], capsys)
    assert code == 0, err
    got = {p["index"]: p["ring_current_ppm"] for p in json.loads(out)["protons"]}
    # weighted mean over frames (weights 1:2:1), then the fast-exchange mean over the group's sites
    # (Gutowsky & Holm, J. Chem. Phys. 1956, 25, 1228); 2e-4 ppm: the JSON rounds to 4 decimals
    framed = {h: (single[0][h] + 2 * single[1][h] + single[2][h]) / 4 for h in single[0]}
    mean = sum(framed[h] for h in (10, 11, 12)) / 3
    for h in (10, 11, 12):
        assert got[h] == pytest.approx(mean, abs=2e-4)
    assert got[13] == pytest.approx(framed[13], abs=2e-4)


@pytest.mark.parametrize("extra, text, msg", [
    (["--frame-weights", "{w}"], "1\nabc\n1\n", "w.txt:2"),
    (["--frame-weights", "{w}"], "1\n-1\n1\n", "non-negative"),
    (["--frame-weights", "{w}"], "1\n1\n", "w.txt: got 2 weights, fewer than the frames"),
    (["--frame-weights", "{w}"], "0\n0\n0\n", "no positive weight"),
    (["--frame-weights", "{w}", "--weights", "boltzmann"], "1\n1\n1\n", "not both"),
    (["--exchange-group", "10,11", "--exchange", "auto"], "", "not both"),
    (["--exchange-group", "10,x"], "", "atom indices"),
    (["--exchange-group", "0,1"], "", "--exchange-group: atom(s) [0, 1] are not hydrogens"),
], ids=["word", "negative", "too-few", "all-zero", "two-weightings", "two-exchanges", "bad-index", "heavy-atoms"])
def test_trajectory_bad_weights_and_groups(tmp_path, capsys, extra, text, msg):
    path = _naphthalene_frames(tmp_path)
    w = tmp_path / "w.txt"
    w.write_text(text)
    out_file = tmp_path / "out.json"
    argv = ["trajectory", str(path), "-o", str(out_file)] + [a.format(w=w) for a in extra]
    code, _, err = run(argv, capsys)
    assert code == 2 and msg in err and len(err.strip().splitlines()) == 1, err
    assert not out_file.exists()


def test_name_labels_titles_and_json(tmp_path, capsys):
    # --name replaces the SMILES in every title and goes into the JSON as compound_name (additive field);
    # without it compound_name is null. A name that is not one printable line is refused with one line.
    code, out, err = run(["predict", "c1ccccc1", "--conformers", "1", "--name", "benzene (ref.)"], capsys)
    assert code == 0, err
    assert out.startswith("benzene (ref.): 6 H")
    code, out, err = run(["predict", "c1ccccc1", "--conformers", "1", "--format", "json"], capsys)
    assert code == 0 and json.loads(out)["compound_name"] is None
    peaks = tmp_path / "p.csv"
    peaks.write_text("shift_ppm,integral,kind\n7.36,6,\n0.00,0.2,tms\n", encoding="utf-8")
    code, out, err = run(["compare", "c1ccccc1", str(peaks), "--conformers", "1", "--name", "Benzene"], capsys)
    assert code == 0, err
    assert out.splitlines()[0].startswith("Benzene against ")
    assert "0.00 (tms)" in out and "signal" not in out and "reference)" not in out
    assert "log10 Bayes factors" in out and "2 ln B =" not in out
    out_dir = tmp_path / "rep"
    code, _, err = run(["report", "c1ccccc1", str(peaks), "-o", str(out_dir), "--quiet", "--conformers", "1",
                        "--name", "Benzene"], capsys)
    assert code == 0, err
    page = (out_dir / "report.html").read_text(encoding="utf-8")
    assert "<title>ringshift report: Benzene</title>" in page
    data = json.loads((out_dir / "results.json").read_text())
    assert data["name"] == data["compound_name"] == "Benzene"
    assert data["prediction"]["compound_name"] == "Benzene"
    code, _, err = run(["predict", "c1ccccc1", "--name", "two\nlines"], capsys)
    assert code == 2 and "--name" in err and len(err.strip().splitlines()) == 1
