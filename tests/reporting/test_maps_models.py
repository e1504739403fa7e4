"""Maps use the chosen shielding model: the kernel behind each map is the one behind the proton shifts.

Benzene as an exact regular hexagon (C–C 1.39 Å, C–H 1.08 Å) and naphthalene with its a priori
currents; the far-field check compares the polygon loops with Pople's point dipole.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from ringshift.cli import main
from ringshift.errors import InputError
from ringshift.io.structures import load_structure
from ringshift.reporting import maps as M
from ringshift.shifts.prediction import predict

MAPPABLE = ["polygon", "johnson-bovey", "haigh-mallion", "dipole"]


@pytest.mark.parametrize("model", MAPPABLE, ids=MAPPABLE)
def test_map_read_at_the_protons_is_the_proton_shift(model):
    # naphthalene, one conformer: the map's kernel at the H positions gives the predicted Δδ_rc exactly
    pred = predict(load_structure("c1ccc2ccccc2c1", conformers=1), model=model)
    loops, _ = M.loops_of(pred)
    mol = pred.structure.mol
    h = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1]
    got = M.loop_shift_ppm(pred.structure.coords[0][h], loops, model=model)
    assert_allclose(got, [p.ring_current_ppm for p in pred.protons], rtol=1e-9, atol=1e-12)


def test_dipole_and_polygon_maps_differ_near_and_agree_far(hexagon_file):
    s = load_structure(hexagon_file, charge=0)
    poly = predict(s, model="polygon", set_current={"R1": 12.0})
    dip = predict(s, model="dipole", set_current={"R1": 12.0})
    a = M.shielding_map(poly, plane="perpendicular", extent_A=4.0, grid=41)
    b = M.shielding_map(dip, plane="perpendicular", extent_A=4.0, grid=41)
    assert a.model == "polygon" and b.model == "dipole"
    both = np.isfinite(a.shift_ppm) & np.isfinite(b.shift_ppm)
    assert np.nanmax(np.abs(a.shift_ppm - b.shift_ppm)[both]) > 5.0  # different maps near the ring
    # 1 Å above the centre, circular double loops (a = 1.39 Å, ±0.64 Å, 12 nA/T): σ_zz ≈ +31.9 ppm (design
    # notes §5), so Δδ_rc = −σ_zz/3 ≈ −10.6 ppm; the map's model argument selects that kernel
    up = M.normal_scan(poly, z_max_A=1.0, n_points=2, model="johnson-bovey").shift_ppm[-1]
    assert_allclose(up, -31.9 / 3, atol=0.05)
    # the point dipole over-estimates the field close over the ring (Pople, J. Chem. Phys. 1956, 24, 1111)
    assert M.normal_scan(dip, z_max_A=1.0, n_points=2).shift_ppm[-1] < up - 5.0
    # far away a loop is a point dipole of moment J·S (textbook magnetostatics): at 25 Å, ≈ 18 ring radii,
    # the loop-size and ±0.64 Å corrections are O((a/R)²) ≈ 0.3 %; allow 2 %
    far_a, _ = M.loops_of(poly)
    rng = np.random.default_rng(11)
    d = rng.normal(size=(20, 3))
    pts = 25.0 * d / np.linalg.norm(d, axis=1, keepdims=True)
    pts = pts[np.abs(pts[:, 2] / 25.0 - 1 / math.sqrt(3)) > 0.1]  # stay off the dipole's zero cone (magic angle)
    assert_allclose(M.loop_shift_ppm(pts, far_a, model="polygon"), M.loop_shift_ppm(pts, far_a, model="dipole"),
                    rtol=0.02)


def test_network_model_has_no_map():
    pred = predict(load_structure("c1ccccc1"), model="network")
    with pytest.raises(InputError, match="network model has no map"):
        M.shielding_map(pred)
    with pytest.raises(InputError, match="network model has no map"):
        M.normal_scan_figure(pred)
    with pytest.raises(InputError, match="unknown shielding model"):
        M.loop_shift_ppm(np.zeros((1, 3)), M.loops_of(pred)[0], model="nonsense")


def run(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        main(argv)
    out, err = capsys.readouterr()
    return exc.value.code, out, err


def test_map_command_uses_the_model(tmp_path, capsys, hexagon_file):
    files = {}
    for model in ("polygon", "dipole"):
        files[model] = tmp_path / f"{model}.svg"
        code, _, err = run(["map", hexagon_file, "--charge", "0", "--model", model, "--plane", "perpendicular",
                            "--grid", "31", "-o", str(files[model])], capsys)
        assert code == 0, err
    a, b = (files[m].read_text(encoding="utf-8") for m in ("polygon", "dipole"))
    assert "polygon model" in a and "dipole model" in b
    assert a.replace("polygon", "dipole") != b  # more than the title differs: the contours do
    code, _, err = run(["map", hexagon_file, "--charge", "0", "--model", "network", "-o", str(tmp_path / "n.svg")],
                       capsys)
    # the command line offers only the models a map can draw (the library's refusal is tested above)
    assert code == 2 and err.count("\n") == 1 and "'network' is not one of" in err and "polygon" in err
    assert not (tmp_path / "n.svg").exists()


def test_map_command_contour_max(tmp_path, capsys, hexagon_file):
    out = tmp_path / "m.svg"
    code, _, err = run(["map", hexagon_file, "--charge", "0", "--plane", "ring", "--grid", "31", "--contour-max", "3",
                        "-o", str(out)], capsys)
    assert code == 0, err
    assert "fixed scale ±3 ppm" in out.read_text(encoding="utf-8")
    code, _, err = run(["map", hexagon_file, "--contour-max", "0", "-o", str(tmp_path / "z.svg")], capsys)
    assert code == 2 and "--contour-max" in err
