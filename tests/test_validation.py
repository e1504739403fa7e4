"""The validation gate (ringshift._validation) and the parameter → option mapping of the command line.

Checks of the contract only (no science): errors are InputError, one line, and name the API parameter;
the command line shows the matching option instead.
"""

import numpy as np
import pytest

from ringshift import _validation as v
from ringshift.cli import OPTION_OF_PARAMETER, main
from ringshift.errors import InputError
from ringshift.io.structures import load_structure
from ringshift.shifts.prediction import predict


@pytest.mark.parametrize("call, param, text", [
    (lambda: v.real(True, "noise_ppm"), "noise_ppm", "real number"),
    (lambda: v.real(float("nan"), "noise_ppm"), "noise_ppm", "finite"),
    (lambda: v.real(0.0, "width", positive=True), "width", "> 0"),
    (lambda: v.real(-1, "width", nonneg=True), "width", ">= 0"),
    (lambda: v.real(5, "x", minimum=0, maximum=1), "x", "[0, 1]"),
    (lambda: v.optional_real("abc", "observe_mhz", minimum=0, strict=True), "observe_mhz", "> 0"),
    (lambda: v.integer(2.0, "seed"), "seed", "integer"),
    (lambda: v.choice("magic", ("polygon", "dipole"), "model", "shielding model"), "model", "polygon, dipole"),
    (lambda: v.array([[1, 2]], "points", (-1, 3), "an (n, 3) array"), "points", "shape (1, 2)"),
    (lambda: v.array([[1, 2, np.inf]], "points", (-1, 3), "an (n, 3) array"), "points", "NaN or inf"),
    (lambda: v.unit_vector([0, 0, 0], "normal"), "normal", "zero length"),
    (lambda: v.vector([[1.0]], "ring_current_ppm", "ppm values"), "ring_current_ppm", "1-D"),
    (lambda: v.molecule("c1ccccc1"), "mol", "Chem.Mol"),
    (lambda: v.label_numbers([("R1", 0.8)], "scale"), "scale", "mapping of circuit label"),
    (lambda: v.label_numbers({"R1": "half"}, "scale"), "scale", "real number"),
    (lambda: v.index_lists("0,1,2", "user_circuits"), "user_circuits", "list of circuits"),
    (lambda: v.index_lists([[0, True, 2]], "user_circuits"), "user_circuits", "list of circuits"),
], ids=["bool", "nan", "positive", "nonneg", "range", "optional", "integer", "choice", "shape", "inf", "unit",
        "vector", "molecule", "labels-not-mapping", "label-value", "indices-text", "indices-bool"])
def test_gate_names_the_parameter(call, param, text):
    with pytest.raises(InputError) as info:
        call()
    assert info.value.source == param
    assert text in str(info.value) and "\n" not in str(info.value)


def test_gate_passes_good_values_through():
    assert v.real(2, "x", positive=True) == 2.0
    assert v.optional_real(None, "x") is None and v.optional_real("7.26", "x") == 7.26
    np.testing.assert_allclose(v.unit_vector([0, 0, 2], "n"), [0, 0, 1], rtol=0, atol=1e-15)
    assert v.array([[0, 0, 0]], "p", (-1, 3), "x").flags["C_CONTIGUOUS"]
    assert v.label_numbers({"R1": 1}, "scale") == {"R1": 1.0} and v.label_numbers(None, "scale") is None
    assert v.index_lists(((0, 1, 2),), "user_circuits") == [[0, 1, 2]]


def test_library_errors_name_api_parameters_not_options():
    s = load_structure("c1ccccc1", conformers=1)
    for kwargs, param in [(dict(model="magic"), "model"), (dict(currents="x"), "currents"),
                          (dict(beta_model="x"), "beta_model"), (dict(user_circuits=[[0, 1]]), "user_circuits")]:
        with pytest.raises(InputError) as info:
            predict(s, **kwargs)
        assert info.value.source == param
        assert "--" not in str(info.value)


@pytest.mark.parametrize("args, option", [
    (["predict", "c1ccccc1", "--conformers", "1", "--circuit", "0,1"], "--circuit"),
    (["predict", "c1ccccc1", "--conformers", "1", "--circuit", "0,1,99"], "--circuit"),
], ids=["short-circuit", "out-of-range"])
def test_cli_shows_the_option(args, option, capsys):
    with pytest.raises(SystemExit) as info:
        main(args)
    assert info.value.code == 2
    err = capsys.readouterr().err
    assert err.startswith(f"ringshift: error: {option}:") and err.count("\n") == 1


def test_every_mapped_parameter_is_an_option():
    assert all(o.startswith("--") for o in OPTION_OF_PARAMETER.values())


@pytest.mark.parametrize("command", [["predict", "c1ccccc1", "--conformers", "1"],
                                     ["pi", "c1ccccc1", "--conformers", "1"]],
                         ids=["predict", "pi"])
def test_one_format_vocabulary(command, capsys):
    """``text`` and ``json`` mean the same on every command; the old name ``table`` still gives text."""
    outs = {}
    for fmt in ("text", "table", "json"):
        with pytest.raises(SystemExit) as info:
            main(command + ["--format", fmt])
        assert info.value.code == 0
        outs[fmt] = capsys.readouterr().out
    assert outs["text"] == outs["table"] and outs["json"].lstrip().startswith("{")


@pytest.mark.parametrize("rows, expected", [
    ("shift_ppm,integral,atoms\n7.3,3,6\n7.2,3,7\n", "equivalent protons share one peak"),
    ("shift_ppm,integral,atoms,kind\n7.3,6,,\n7.26,1,6,solvent\n", "marked 'solvent' and also fixed"),
], ids=["group-on-two-peaks", "solvent-with-atoms"])
def test_fixed_atom_conflicts_name_the_file_line_not_internals(rows, expected, tmp_path, capsys):
    # benzene: H atoms 6..11 form one group of equivalent protons (common practice, no source)
    peaks = tmp_path / "peaks.csv"
    peaks.write_text(rows)
    with pytest.raises(SystemExit) as info:
        main(["compare", "c1ccccc1", str(peaks), "--conformers", "1"])
    err = capsys.readouterr().err
    assert info.value.code == 2 and expected in err and "peaks.csv:3" in err
    assert "fixed_groups" not in err and "peaks[" not in err and err.count("\n") == 1


def test_report_refuses_comparison_options_without_peaks(tmp_path, capsys):
    with pytest.raises(SystemExit) as info:
        main(["report", "c1ccccc1", "--conformers", "1", "--claim", "aromatic", "-o", str(tmp_path / "r")])
    err = capsys.readouterr().err
    assert info.value.code == 2 and "--claim needs observed peaks" in err
    assert not (tmp_path / "r").exists()


def test_a_file_error_names_the_parameter_that_fixes_it(tmp_path, capsys):
    # the cyclopentadienyl anion as XYZ without its charge: bonds do not fit a neutral molecule
    # (geometry invented, regular pentagon, common practice, no source)
    import math

    lines = ["10", "C5H5- without its charge"]
    for k in range(5):
        a = 2 * math.pi * k / 5
        lines.append(f"C {1.19 * math.cos(a):.6f} {1.19 * math.sin(a):.6f} 0.0")
    for k in range(5):
        a = 2 * math.pi * k / 5
        lines.append(f"H {2.27 * math.cos(a):.6f} {2.27 * math.sin(a):.6f} 0.0")
    path = tmp_path / "cp.xyz"
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(InputError) as info:
        load_structure(str(path))
    assert info.value.parameter == "charge" and "--" not in str(info.value)
    with pytest.raises(SystemExit):
        main(["predict", str(path)])
    assert "(option --charge)" in capsys.readouterr().err


def test_close_pairs_match_scipy_kdtree():
    # outside reference: scipy.spatial.cKDTree.query_pairs on random clouds with planted close pairs
    import numpy as np
    from scipy.spatial import cKDTree

    from ringshift.limits import _close_pairs

    rng = np.random.default_rng(3)
    for n in (2, 300, 700):
        x = rng.uniform(0, 0.9 * n ** (1 / 3) * 2, size=(n, 3))
        x[n // 2] = x[0] + 0.1
        got = {tuple(p) for p in _close_pairs(x, 0.5).tolist()}
        ref = {tuple(sorted(p)) for p in cKDTree(x).query_pairs(0.5, output_type="ndarray").tolist()}
        assert got == ref and (0, n // 2) in got
