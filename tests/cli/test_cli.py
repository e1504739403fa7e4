"""Command-line contract: outputs, JSON schema, exit codes and one-line errors, atomic files."""

import json

import pytest

from ringshift.cli import main


def run(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        main(argv)
    out, err = capsys.readouterr()
    return exc.value.code, out, err


def test_predict_json_schema(capsys):
    code, out, err = run(["predict", "c1ccccc1", "--format", "json"], capsys)
    assert code == 0, err
    data = json.loads(out)
    assert {"protons", "circuits", "conformers", "provenance", "caution"} <= set(data)
    p = data["protons"][0]
    assert {"index", "parent", "group", "ring_current_ppm", "predicted_ppm"} <= set(p)
    assert len(data["protons"]) == 6 and all(q["parent"] in range(6) for q in data["protons"])
    c = data["circuits"][0]
    assert {"atoms", "centre", "normal", "planarity_rms_A", "current_nA_per_T", "model", "pi_electrons",
            "huckel_class", "current_rel_benzene", "current_source"} <= set(c)
    assert c["huckel_class"] == "4n+2" and c["pi_electrons"] == 6
    assert data["conformers"]["count"] == 1


def test_predict_table_and_csv(capsys):
    code, out, _ = run(["predict", "c1ccccc1"], capsys)
    assert code == 0 and "ring current" in out and "Caution" in out
    code, out, _ = run(["predict", "c1ccccc1", "--format", "csv"], capsys)
    lines = out.strip().splitlines()
    assert code == 0 and lines[0].startswith("index,parent") and len(lines) == 7


def test_json_is_deterministic(capsys):
    # Same input and seed → byte-identical JSON (brief: results deterministic for a given seed).
    args = ["predict", "C1=CC=C2CC(=C1)C=CC=C2", "--format", "json", "--seed", "3"]
    _, a, _ = run(args, capsys)
    _, b, _ = run(args, capsys)
    assert a == b


@pytest.mark.parametrize("argv,fragment", [
    (["predict", "C1CC(("], "SMILES"),
    (["predict", "nonexistent_file.sdf"], "nonexistent_file.sdf"),
    (["predict", "c1ccccc1", "--model", "magic"], "--model"),
    (["predict", "c1ccccc1", "--scale", "R9=2"], "R9"),
    (["predict", "c1ccccc1", "--scale", "R1"], "LABEL=NUMBER"),
    (["predict", "c1ccccc1", "--set-current", "R1=abc"], "not a number"),
    (["predict", "c1ccccc1", "--circuit", "0,2,1,3,4,5"], "not bonded"),
    (["predict", "c1ccccc1", "--circuit", "a,b"], "atom indices"),
    (["compare", "c1ccccc1", "missing_peaks.csv"], "missing_peaks.csv"),
], ids=["bad-smiles", "missing-file", "bad-model", "unknown-label", "bad-assignment", "bad-number",
        "unbonded-circuit", "bad-circuit", "missing-peaks"])
def test_bad_input_one_line_exit_2(capsys, argv, fragment):
    code, out, err = run(argv, capsys)
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("ringshift: error:") and fragment in lines[0]
    assert "Traceback" not in err


def test_output_file_is_atomic_and_not_overwritten(tmp_path, capsys):
    target = tmp_path / "out.json"
    code, _, _ = run(["predict", "c1ccccc1", "--format", "json", "-o", str(target)], capsys)
    assert code == 0 and json.loads(target.read_text())["n_hydrogens"] == 6
    before = target.read_text()
    code, _, err = run(["predict", "c1ccccc1", "--format", "json", "-o", str(target)], capsys)
    assert code == 2 and "--force" in err and target.read_text() == before
    code, _, _ = run(["predict", "c1ccccc1", "--format", "json", "-o", str(target), "--force"], capsys)
    assert code == 0
    assert [p.name for p in tmp_path.iterdir()] == ["out.json"]  # no temporary files left


def test_failed_run_leaves_no_file(tmp_path, capsys):
    target = tmp_path / "out.json"
    code, _, _ = run(["predict", "C1CC((", "-o", str(target)], capsys)
    assert code == 2 and not target.exists()


def test_no_conjugated_ring_is_not_an_error(capsys):
    code, out, err = run(["predict", "C1CCCCC1", "--format", "json"], capsys)
    data = json.loads(out)
    assert code == 0 and data["circuits"] == []
    assert all(p["ring_current_ppm"] == 0.0 for p in data["protons"])
    assert any("no conjugated ring" in w for w in data["warnings"])


def test_no_hydrogens_is_not_an_error(capsys):
    code, out, _ = run(["predict", "ClC(Cl)(Cl)Cl", "--format", "json"], capsys)
    assert code == 0 and json.loads(out)["protons"] == []


def test_compare_text_and_json(tmp_path, capsys):
    peaks = tmp_path / "p.csv"
    peaks.write_text("ppm;nH\n7,36;6\n", encoding="utf-8")  # semicolons with decimal commas
    code, out, err = run(["compare", "c1ccccc1", str(peaks), "--format", "json"], capsys)
    assert code == 0, err
    data = json.loads(out)
    assert {"verdict", "circuits", "assignment", "unassigned_peaks"} <= set(data)
    a = data["assignment"][0]
    assert {"atoms", "parents", "predicted_ppm", "observed_ppm", "residual_ppm"} <= set(a)
    assert a["observed_ppm"] == pytest.approx(7.36)
    c = data["circuits"][0]
    assert {"verdict", "current_nA_per_T", "current_rel_benzene", "stderr_nA_per_T", "evidence"} <= set(c)


def test_pi_command(capsys):
    code, out, _ = run(["pi", "C1=CC=CC=CC=C1", "--format", "json"], capsys)
    data = json.loads(out)
    assert code == 0 and data["pi_electrons"] == 8 and data["huckel_class"] == "4n"
    code, out, _ = run(["pi", "c1ccccc1"], capsys)
    assert code == 0 and "closed shell" in out
