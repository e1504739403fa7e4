"""--exchange and --geometry on every command that loads a structure, and the same options in the Python API.

The [18]annulene geometry is an ideal planar D6h construction given as XYZ text
(tests/geometry/test_symmetry.py), so nothing here depends on the conformer search. The GFN2-xTB route is
exercised with a SYNTHETIC stand-in for ringshift.geometry.xtb (wiring only) and, for the missing-extra
error, with the real module and tblite hidden.
"""

from __future__ import annotations

import json
import sys
import types

import numpy as np
import pytest

import ringshift
from ringshift.cli import EXCHANGE_CHOICES, GEOMETRY_CHOICES, OPTION_OF_PARAMETER, main
from ringshift.errors import InputError
from ringshift.geometry.symmetry import EXCHANGE_RULES
from ringshift.io.structures import GEOMETRY_ROUTES
from tests.geometry.test_symmetry import annulene18_d6h_xyz

STRUCTURE_COMMANDS = ["predict", "compare", "pi", "report", "map", "batch"]


def run(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return exc.value.code, out, err


@pytest.fixture(scope="module")
def annulene18(tmp_path_factory):
    text, inner = annulene18_d6h_xyz()
    path = tmp_path_factory.mktemp("annulene") / "annulene18.xyz"
    path.write_text(text)
    return str(path), inner


def _synthetic_xtb(result=None, error: InputError | None = None) -> types.ModuleType:
    """SYNTHETIC stand-in for ringshift.geometry.xtb: returns the input conformers shifted by +0.001 Å in x
    with invented energies 0, 1, 2, ... kcal/mol (or raises ``error``); no quantum chemistry."""
    module = types.ModuleType("ringshift.geometry.xtb")

    def gfn2_optimise(mol, coords, *, charge, unpaired=0, source="structure", **_):
        if error is not None:
            raise error
        x = np.array(coords) + np.array([0.001, 0.0, 0.0])
        return x, np.arange(x.shape[0], dtype=float), {"method": "synthetic stand-in", "charge": charge}

    module.gfn2_optimise = gfn2_optimise  # type: ignore[attr-defined]
    return module


# ------------------------------------------------------------------------------ option plumbing
def test_choices_match_the_library_and_errors_name_the_options():
    assert EXCHANGE_CHOICES == EXCHANGE_RULES and GEOMETRY_CHOICES == GEOMETRY_ROUTES
    assert OPTION_OF_PARAMETER["exchange"] == "--exchange" and OPTION_OF_PARAMETER["geometry"] == "--geometry"


@pytest.mark.parametrize("command", STRUCTURE_COMMANDS)
def test_every_structure_command_offers_both_options(command, capsys):
    code, out, _ = run([command, "--help"], capsys)
    assert code == 0
    assert "--exchange [slow|fast]" in out and "--geometry [force-field|gfn2-xtb]" in out


@pytest.mark.parametrize("argv,option", [
    (["predict", "CCO", "--exchange", "medium"], "--exchange"),
    (["pi", "CCO", "--geometry", "dft"], "--geometry"),
], ids=["exchange", "geometry"])
def test_bad_choice_is_one_line_exit_2(argv, option, capsys):
    code, out, err = run(argv, capsys)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and option in err and "Traceback" not in err


# ------------------------------------------------------------------------------ exchange
def test_predict_slow_and_fast_exchange_on_annulene18(annulene18, capsys):
    path, inner = annulene18
    groups = {}
    for rule in ("slow", "fast"):
        code, out, err = run(["predict", path, "--exchange", rule, "--currents", "benzene", "--format", "json"],
                             capsys)
        assert code == 0, err
        data = json.loads(out)
        groups[rule] = data["groups"]
        assert data["provenance"]["structure"]["exchange"] == rule
        assert data["provenance"]["structure"]["geometry"] == "force-field"
    # 12 outer + 6 inner H at low temperature, one averaged line at high temperature (Jackman, Sondheimer et
    # al., J. Am. Chem. Soc. 1962, 84, 4307; from memory)
    assert sorted(len(g["atoms"]) for g in groups["slow"]) == [6, 12]
    assert [len(g["atoms"]) for g in groups["fast"]] == [18]
    mean = sum(len(g["atoms"]) * g["predicted_ppm"] for g in groups["slow"]) / 18
    assert abs(groups["fast"][0]["predicted_ppm"] - mean) < 0.01      # JSON rounds shifts to 0.01 ppm at worst


def test_pi_and_batch_accept_exchange(annulene18, tmp_path, capsys):
    path, _ = annulene18
    code, _, err = run(["pi", path, "--exchange", "fast"], capsys)
    assert code == 0, err
    library = tmp_path / "lib.smi"
    library.write_text("C1CCCCC1 cyclohexane\n")
    counts = {}
    for rule in ("slow", "fast"):
        out_file = tmp_path / f"{rule}.jsonl"
        code, _, err = run(["batch", library, "-o", out_file, "--quiet", "--conformers", "5", "--exchange", rule],
                           capsys)
        assert code == 0, err
        record = json.loads(out_file.read_text().splitlines()[0])
        counts[rule] = len(record["result"]["groups"])
    # cyclohexane: axial/equatorial in the chair, one line with fast ring inversion (Jensen, Noyce, Sederholm &
    # Berlin, J. Am. Chem. Soc. 1960, 82, 1256; from memory)
    assert counts == {"slow": 2, "fast": 1}


# ------------------------------------------------------------------------------ geometry
def test_gfn2_route_without_the_extra_is_one_line(monkeypatch, capsys):
    pytest.importorskip("ringshift.geometry.xtb")
    monkeypatch.setitem(sys.modules, "tblite", None)              # as if the extra were not installed
    monkeypatch.setitem(sys.modules, "tblite.interface", None)
    code, out, err = run(["predict", "CCO", "--conformers", "1", "--geometry", "gfn2-xtb"], capsys)
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and "pip install 'ringshift[xtb]'" in err and "Traceback" not in err


def test_gfn2_route_error_of_the_module_is_one_line(monkeypatch, capsys):
    # synthetic stand-in that fails as the real module does without tblite
    error = InputError("the GFN2-xTB geometry needs the optional package tblite: pip install 'ringshift[xtb]'",
                       source="CCO")
    monkeypatch.setitem(sys.modules, "ringshift.geometry.xtb", _synthetic_xtb(error=error))
    code, _, err = run(["pi", "CCO", "--conformers", "1", "--geometry", "gfn2-xtb"], capsys)
    assert code == 2 and len(err.strip().splitlines()) == 1 and "ringshift[xtb]" in err


def test_gfn2_route_is_recorded_in_the_json(annulene18, monkeypatch, capsys):
    path, _ = annulene18
    monkeypatch.setitem(sys.modules, "ringshift.geometry.xtb", _synthetic_xtb())
    code, out, err = run(["predict", path, "--geometry", "gfn2-xtb", "--currents", "benzene", "--format", "json"],
                         capsys)
    assert code == 0, err
    prov = json.loads(out)["provenance"]["structure"]
    assert prov["geometry"] == "gfn2-xtb" and prov["coordinates"] == "input+gfn2-xtb"
    assert prov["geometry_refinement"] == {"method": "synthetic stand-in", "charge": 0}


# ------------------------------------------------------------------------------ Python API
def test_api_passes_exchange_and_geometry(annulene18, monkeypatch, tmp_path):
    path, _ = annulene18
    s = ringshift.load_structure(path, exchange="fast")
    assert len(s.h_groups) == 1 and s.provenance["exchange"] == "fast"
    assert len(ringshift.predict(path, exchange="fast", currents="benzene").groups) == 1
    with pytest.raises(InputError) as err:          # a loaded Structure cannot be re-grouped silently
        ringshift.predict(s, exchange="slow")
    assert err.value.source == "exchange"
    with pytest.raises(InputError) as err:
        ringshift.load_structure(path, exchange="medium")
    assert err.value.source == "exchange" and "slow, fast" in str(err.value)
    # compare passes the options on: one fast-exchange group matched to the averaged line (invented peak list)
    peaks = tmp_path / "peaks.csv"
    peaks.write_text("shift_ppm,integral\n5.45,18\n")
    res = ringshift.compare(path, peaks, exchange="fast", currents="benzene")
    assert len(res.prediction.groups) == 1
    monkeypatch.setitem(sys.modules, "ringshift.geometry.xtb", _synthetic_xtb())
    s = ringshift.load_structure(path, geometry="gfn2-xtb")
    assert s.provenance["geometry"] == "gfn2-xtb"
    np.testing.assert_allclose(s.coords[0] - ringshift.load_structure(path).coords[0], [[0.001, 0.0, 0.0]] * 36,
                               atol=1e-9)


def test_rdkit_bounds_invariant_is_a_one_line_error(capsys, monkeypatch):
    # RDKit raised "Invariant Violation bad lower bound" (RuntimeError) while setting up the distance bounds of a
    # zinc porphine SMILES with four Zn–N bonds (measured, RDKit 2026.09; that molecule now takes the free-base
    # route of geometry.metal_ligand); any such RuntimeError must end as a one-line input error, exit 2
    from ringshift.geometry import conformers as cf

    def boom(*args, **kwargs):
        raise RuntimeError("Invariant Violation bad lower bound Violation occurred on line 204")

    monkeypatch.setattr(cf, "_embed_confs", boom)
    code, out, err = run(["predict", "c1ccccc1CC"], capsys)
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "c1ccccc1CC" in lines[0] and "distance bounds" in lines[0] and "SDF" in lines[0]
    assert "Traceback" not in err and "internal error" not in err
