"""Ranking ring E/Z configurations against a spectrum: [14]annulene, the CLI listing and the JSON field."""

from __future__ import annotations

import json

import pytest

from ringshift.api import compare
from ringshift.cli import main
from ringshift.reporting.json import comparison_to_dict
from ringshift.reporting.schemas import validate

ANNULENE14 = "C1=CC=CC=CC=CC=CC=CC=C1"

#: [14]annulene at -60 °C: 10 outer H at tau 2.42 and 4 inner H at tau 10.0, i.e. 7.58 and 0.00 ppm (Jackman,
#: Sondheimer et al., J. Am. Chem. Soc. 1962, 84, 4307; from memory). The inner line sits on TMS: the integrals
#: decide that it is the sample's (design notes §6).
ANNULENE14_PEAKS = "shift_ppm,integral,label\n7.58,10,outer\n0.00,4,inner\n"


@pytest.fixture(scope="module")
def annulene14_result(tmp_path_factory):
    path = tmp_path_factory.mktemp("a14") / "a14.csv"
    path.write_text(ANNULENE14_PEAKS)
    with pytest.warns(UserWarning):       # isomers with different H groups: costs approximately comparable
        return compare(ANNULENE14, path)


def test_annulene14_best_configuration_has_four_inner_h(annulene14_result):
    conf = annulene14_result.configurations
    assert conf is not None and conf["mode"] == "open" and "open" in conf["reason"]
    # 7 double bonds: 128 assignments, 18 bracelets (OEIS A000029)
    assert conf["assignments"] == 128 and conf["distinct"] == 18 == len(conf["candidates"])
    ranked = [c for c in conf["candidates"] if c["status"] == "ranked"]
    assert len(ranked) == conf["ranked"] >= 2
    best = ranked[0]
    assert best["rank"] == 1 and best["log10_bf_vs_best"] == 0.0
    assert best["inner_h"] == 4                                   # the observed 4 H inner line
    assert any(c["inner_h"] == 3 for c in ranked[1:])             # the embedding's old answer is considered, lower
    assert all(c["log10_bf_vs_best"] < 0 for c in ranked[1:])
    # the full comparison is the best one's: the 4 H inner line is explained by 4 inner protons
    inner = [a for a in annulene14_result.comparison.assignment if a.peak_label == "inner"]
    assert sum(a.n_h for a in inner) == 4


def test_annulene14_json_validates(annulene14_result):
    doc = json.loads(json.dumps(comparison_to_dict(annulene14_result)))
    assert validate(doc) == "comparison"
    assert doc["configurations"]["best_smiles"] == annulene14_result.configurations["best_smiles"]


def test_cli_lists_configurations_and_given_does_not(tmp_path, capsys):
    # cyclo-octatetraene: one line at 5.68 ppm, 8 H (from memory); 6 configurations up to symmetry
    peaks = tmp_path / "cot.csv"
    peaks.write_text("shift_ppm,integral\n5.68,8\n")
    with pytest.raises(SystemExit) as exit_info:
        main(["compare", "C1=CC=CC=CC=C1", str(peaks)])
    out = capsys.readouterr().out
    assert exit_info.value.code == 0
    assert "configurations: open (default: the input leaves the E/Z of 4 ring double bonds open)" in out
    assert "6 distinct up to symmetry" in out and "best configuration:" in out
    with pytest.raises(SystemExit) as exit_info:
        main(["compare", "C1=CC=CC=CC=C1", str(peaks), "--configurations", "given"])
    assert exit_info.value.code == 0 and "configurations:" not in capsys.readouterr().out


def test_cli_open_with_a_file_is_a_one_line_error(tmp_path, capsys):
    from tests.geometry.test_symmetry import annulene18_d6h_xyz

    xyz = tmp_path / "a18.xyz"
    xyz.write_text(annulene18_d6h_xyz()[0])
    peaks = tmp_path / "p.csv"
    peaks.write_text("shift_ppm,integral\n9.3,12\n-3.0,6\n")
    with pytest.raises(SystemExit) as exit_info:
        main(["compare", str(xyz), str(peaks), "--configurations", "open"])
    err = capsys.readouterr().err
    assert exit_info.value.code == 2 and err.count("\n") == 1 and "--configurations" in err


def test_api_refuses_configurations_for_a_loaded_structure(tmp_path):
    from ringshift.api import load_structure
    from ringshift.errors import InputError

    peaks = tmp_path / "p.csv"
    peaks.write_text("shift_ppm,integral\n7.3,6\n")
    structure = load_structure("c1ccccc1", conformers=1)
    with pytest.raises(InputError, match="configurations"):
        compare(structure, peaks, configurations="open")
    with pytest.raises(InputError, match="configuration mode"):
        compare("c1ccccc1", peaks, configurations="sideways")
    assert compare(structure, peaks, configurations="given").configurations is None
