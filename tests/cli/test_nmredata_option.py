"""compare --nmredata FILE: written atomically beside -o, refused (exit 2, one line) when it would replace an
input, the -o file or an existing file, or when the spectrometer frequency is unknown. Peak lists invented."""

from __future__ import annotations

import pytest

from ringshift.cli import main
from ringshift.io.nmredata import read_nmredata


def run(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        main(argv)
    out, err = capsys.readouterr()
    return exc.value.code, out, err


@pytest.fixture()
def peaks(tmp_path):
    path = tmp_path / "benzene.csv"
    path.write_text("# observe_mhz = 400\nshift_ppm,integral\n7.36,6\n")
    return path


def test_compare_writes_nmredata(tmp_path, peaks, capsys):
    out = tmp_path / "benzene.nmredata.sdf"
    code, text, err = run(["compare", "c1ccccc1", str(peaks), "--nmredata", str(out)], capsys)
    assert code == 0, err
    assert "wrote" in err and "verdict" in text.lower()
    record = read_nmredata(out)
    assert record.larmor_mhz == 400 and [a.atoms for a in record.assignments] == [(6, 7, 8, 9, 10, 11)]


@pytest.mark.parametrize("case", ["input", "same-as-o", "exists", "no-frequency"])
def test_compare_nmredata_refusals(tmp_path, peaks, capsys, case):
    target = tmp_path / "x.nmredata.sdf"
    argv = ["compare", "c1ccccc1", str(peaks), "--nmredata", str(target)]
    if case == "input":
        argv[-1] = str(peaks)
        argv.append("--force")
    elif case == "same-as-o":
        argv += ["-o", str(target)]
    elif case == "exists":
        target.write_text("kept\n")
    else:
        peaks.write_text("shift_ppm,integral\n7.36,6\n")
    before = peaks.read_text()
    code, _, err = run(argv, capsys)
    assert code == 2 and err.count("\n") == 1 and err.startswith("ringshift: error:"), err
    assert peaks.read_text() == before
    if case == "exists":
        assert target.read_text() == "kept\n"
    elif case != "input":
        assert not target.exists()
