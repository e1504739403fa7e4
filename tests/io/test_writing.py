"""Writers never replace what is not ringshift's: an input of the run, a folder, a device or a foreign folder."""

import os

import pytest

from ringshift.cli import main
from ringshift.errors import OutputError
from ringshift.io.writing import atomic_write
from ringshift.reporting.html import is_report_folder
from ringshift.runners.demo import run_demo


def test_atomic_write_refuses_an_input_even_with_force(tmp_path):
    source = tmp_path / "in.xyz"
    source.write_text("original\n")
    with pytest.raises(OutputError, match="is an input of this run"):
        atomic_write(source, "new\n", force=True, inputs=["c1ccccc1", str(source)])   # a SMILES is ignored
    assert source.read_text() == "original\n"
    atomic_write(tmp_path / "out.txt", "x", inputs=[str(source)])                     # another path is fine
    assert (tmp_path / "out.txt").read_text() == "x"


@pytest.mark.parametrize("target", ["folder", "device"], ids=["folder", "device"])
def test_atomic_write_refuses_what_is_not_a_regular_file(tmp_path, target):
    path = tmp_path if target == "folder" else "/dev/null"
    if target == "device" and not os.path.exists(path):
        pytest.skip("no /dev/null on this system")
    with pytest.raises(OutputError, match="not a regular file"):
        atomic_write(path, "x", force=True)


def test_cli_output_onto_the_input_is_one_line_and_leaves_it(tmp_path, capsys):
    xyz = tmp_path / "benzene.xyz"
    xyz.write_text("12\nbenzene\n" + "".join(f"C {x} {y} 0\n" for x, y in [
        (1.39, 0), (0.695, 1.2038), (-0.695, 1.2038), (-1.39, 0), (-0.695, -1.2038), (0.695, -1.2038)])
        + "".join(f"H {x} {y} 0\n" for x, y in [(2.47, 0), (1.235, 2.139), (-1.235, 2.139), (-2.47, 0),
                                                (-1.235, -2.139), (1.235, -2.139)]))
    before = xyz.read_text()
    with pytest.raises(SystemExit) as exc:
        main(["predict", str(xyz), "-o", str(xyz), "--force"])
    err = capsys.readouterr().err
    assert exc.value.code == 2 and "is an input of this run" in err and len(err.strip().splitlines()) == 1
    assert xyz.read_text() == before


def test_demo_and_report_refuse_a_folder_they_did_not_write(tmp_path):
    theirs = tmp_path / "theirs"
    theirs.mkdir()
    (theirs / "keep.txt").write_text("mine")
    assert not is_report_folder(theirs)
    with pytest.raises(OutputError, match="not a ringshift demo folder"):
        run_demo(theirs, force=True)
    assert (theirs / "keep.txt").read_text() == "mine" and len(list(theirs.iterdir())) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["theirs"]       # nothing half-written beside it


def test_report_with_force_replaces_its_own_folder_only(tmp_path):
    from ringshift.io.structures import load_structure
    from ringshift.reporting.html import write_report
    from ringshift.shifts.prediction import predict

    pred = predict(load_structure("c1ccccc1"))
    theirs = tmp_path / "theirs"
    theirs.mkdir()
    (theirs / "keep.txt").write_text("mine")
    with pytest.raises(OutputError, match="not a ringshift report folder"):
        write_report(theirs, pred, force=True)
    assert [p.name for p in theirs.iterdir()] == ["keep.txt"]
    ours = tmp_path / "ours"
    write_report(ours, pred)
    assert is_report_folder(ours)
    write_report(ours, pred, force=True)                                   # its own folder: replaced
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ours", "theirs"]
