"""The output contract from the command line: every writer (predict/trajectory -o, map -o, pi --plot, batch -o,
report and demo folders) refuses what is not ringshift's before anything is touched, with one line and exit 2;
OS errors are exit 2 naming the path; `-o -` is standard output and `-o ""` an error.

Each case compares every entry of the working folder (bytes, inode, mtime) before and after. The files are
invented placeholders ("mine", a two-line SMILES library of benzene and pyridine).
"""

from __future__ import annotations

import json
import os
import stat
from pathlib import Path

import pytest

from ringshift.cli import main
from tests.io.test_output_contract import snapshot

LIBRARY = "c1ccccc1 benzene\nc1ccncc1 pyridine\n"
BENZENE_XYZ = "12\nbenzene\n" + "".join(f"C {x} {y} 0\n" for x, y in [
    (1.39, 0), (0.695, 1.2038), (-0.695, 1.2038), (-1.39, 0), (-0.695, -1.2038), (0.695, -1.2038)]) + "".join(
    f"H {x} {y} 0\n" for x, y in [(2.47, 0), (1.235, 2.139), (-1.235, 2.139), (-2.47, 0), (-1.235, -2.139),
                                  (1.235, -2.139)])


def run(args, capsys):
    with pytest.raises(SystemExit) as exc:
        main([str(a) for a in args])
    out, err = capsys.readouterr()
    return exc.value.code, out, err


@pytest.fixture()
def work(tmp_path, monkeypatch):
    """A working folder with an XYZ input, a SMILES library, a user's file and a user's folder."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "in.xyz").write_text(BENZENE_XYZ)
    (tmp_path / "L.smi").write_text(LIBRARY)
    (tmp_path / "notes.txt").write_text("mine, no newline at the end")
    (tmp_path / "userdata").mkdir()
    (tmp_path / "userdata" / "chapter1.tex").write_text("mine")
    os.link(tmp_path / "in.xyz", tmp_path / "hard.xyz")
    os.symlink(tmp_path / "in.xyz", tmp_path / "soft.xyz")
    os.mkfifo(tmp_path / "pipe")
    try:        # a private null device (major 1, minor 3, as /dev/null): a test must never risk the real one
        os.mknod(tmp_path / "nulldev", stat.S_IFCHR | 0o666, os.makedev(1, 3))
    except (OSError, AttributeError):       # not root, or no mknod here: the device rows are skipped
        pass
    return tmp_path


# (id, arguments, words expected in the one-line error)
REFUSED = [
    ("predict-onto-input", ["predict", "in.xyz", "-o", "in.xyz", "--force"], "is an input of this run"),
    ("predict-onto-hard-link", ["predict", "in.xyz", "-o", "hard.xyz", "--force"], "is an input of this run"),
    ("predict-onto-symlink", ["predict", "soft.xyz", "-o", "in.xyz", "--force"], "is an input of this run"),
    ("predict-onto-relative-path", ["predict", "in.xyz", "-o", "./userdata/../in.xyz", "--force"], "is an input"),
    ("predict-onto-fifo", ["predict", "c1ccccc1", "-o", "pipe", "--force"], "not a regular file"),
    ("predict-onto-device", ["predict", "c1ccccc1", "-o", "nulldev", "--force"], "not a regular file"),
    ("trajectory-onto-device", ["trajectory", "in.xyz", "-o", "nulldev", "--force"], "not a regular file"),
    ("batch-onto-device", ["batch", "L.smi", "-o", "nulldev", "--quiet"], "not a regular file"),
    ("predict-empty-output", ["predict", "c1ccccc1", "-o", ""], "empty path"),
    ("predict-existing-no-force", ["predict", "c1ccccc1", "-o", "notes.txt"], "--force"),
    ("trajectory-onto-input", ["trajectory", "in.xyz", "-o", "hard.xyz", "--force"], "is an input of this run"),
    ("map-onto-input", ["map", "in.xyz", "-o", "soft.xyz", "--force"], "is an input of this run"),
    ("map-to-stdout", ["map", "c1ccccc1", "-o", "-"], "a figure needs a file name"),
    ("map-onto-folder", ["map", "c1ccccc1", "-o", "userdata", "--force"], "is a directory"),
    ("pi-plot-onto-input", ["pi", "in.xyz", "--plot", "in.xyz", "--force"], "is an input of this run"),
    ("pi-plot-existing", ["pi", "c1ccccc1", "--plot", "notes.txt"], "--force"),
    ("batch-onto-library", ["batch", "L.smi", "-o", "L.smi", "--quiet"], "is an input of this run"),
    ("batch-onto-library-restart", ["batch", "L.smi", "-o", "L.smi", "--restart", "--quiet"], "is an input"),
    ("batch-onto-library-link", ["batch", "L.smi", "-o", "./L.smi", "--restart", "--quiet"], "is an input"),
    ("batch-onto-foreign-file", ["batch", "L.smi", "-o", "notes.txt", "--quiet"], "is not a ringshift batch output"),
    ("batch-onto-foreign-restart", ["batch", "L.smi", "-o", "notes.txt", "--restart", "--quiet"],
     "is not a ringshift batch output"),
    ("batch-onto-xyz", ["batch", "L.smi", "-o", "in.xyz", "--quiet"], "is not a ringshift batch output"),
    ("batch-onto-fifo", ["batch", "L.smi", "-o", "pipe", "--quiet"], "not a regular file"),
    ("batch-empty-output", ["batch", "L.smi", "-o", "", "--quiet"], "empty path"),
    ("report-current-folder", ["report", "c1ccccc1", "-o", ".", "--force", "--quiet"], "is the current folder"),
    ("report-foreign-folder", ["report", "c1ccccc1", "-o", "userdata", "--force", "--quiet"],
     "is not a ringshift report folder"),
    ("report-to-stdout", ["report", "c1ccccc1", "-o", "-", "--quiet"], "standard output"),
    ("report-onto-file", ["report", "c1ccccc1", "-o", "notes.txt", "--force", "--quiet"], "is a file"),
    ("demo-foreign-folder", ["demo", "-o", "userdata", "--force", "--quiet"], "is not a ringshift demo folder"),
    ("name-too-long", ["predict", "c1ccccc1", "-o", "x" * 300 + ".txt"], "too long"),
]


@pytest.mark.parametrize("args, words", [c[1:] for c in REFUSED], ids=[c[0] for c in REFUSED])
def test_refused_outputs_change_nothing(work, capsys, args, words):
    if "nulldev" in args and not (work / "nulldev").exists():
        pytest.skip("creating a device node needs root")
    before = snapshot(work)
    code, out, err = run(args, capsys)
    assert code == 2, err
    assert words in err and len(err.strip().splitlines()) == 1 and err.startswith("ringshift: error: ")
    assert ".tmp" not in err and "Traceback" not in err and out == ""
    assert snapshot(work) == before


# (id, arguments, a check of standard output): `-o -` writes to standard output and never a file named "-"
DASH = [
    ("predict-text", ["predict", "c1ccccc1", "--conformers", "1", "-o", "-"], lambda out: "H" in out),
    ("predict-json", ["predict", "c1ccccc1", "--conformers", "1", "--format", "json", "-o", "-"],
     lambda out: len(json.loads(out)["protons"]) == 6),
    ("trajectory", ["trajectory", "in.xyz", "-o", "-"], lambda out: "H" in out),
    ("compare", ["compare", "c1ccccc1", "p.csv", "--conformers", "1", "-o", "-"], lambda out: "7.3" in out),
    ("batch", ["batch", "L.smi", "-o", "-", "--conformers", "1", "--quiet"],
     lambda out: [json.loads(x)["name"] for x in out.splitlines() if x.startswith("{")] == ["benzene", "pyridine"]),
]


@pytest.mark.parametrize("args, check", [c[1:] for c in DASH], ids=[c[0] for c in DASH])
def test_dash_is_standard_output(work, capsys, args, check):
    (work / "p.csv").write_text("shift_ppm,integral\n7.3,6\n")      # invented one-line peak list
    before = snapshot(work)
    code, out, err = run(args, capsys)
    assert code == 0, err
    assert check(out) and not (work / "-").exists()
    assert snapshot(work) == before


def test_a_file_added_to_a_report_folder_is_never_deleted(work, capsys):
    code, _, err = run(["report", "c1ccccc1", "--conformers", "1", "-o", "rep", "--quiet"], capsys)
    assert code == 0, err
    (work / "rep" / "chapter1.tex").write_text("mine")
    before = snapshot(work)
    code, _, err = run(["report", "c1ccccc1", "--conformers", "1", "-o", "rep", "--force", "--quiet"], capsys)
    assert code == 2 and "holds chapter1.tex" in err and len(err.strip().splitlines()) == 1
    assert snapshot(work) == before
    (work / "rep" / "chapter1.tex").unlink()
    code, _, err = run(["report", "c1ccccc1", "--conformers", "1", "-o", "rep", "--force", "--quiet"], capsys)
    assert code == 0, err


def test_batch_resume_removes_duplicate_and_cut_off_records_and_says_so(work, capsys):
    code, _, err = run(["batch", "L.smi", "-o", "out.jsonl", "--conformers", "1", "--quiet"], capsys)
    assert code == 0, err
    full = (work / "out.jsonl").read_text()
    first, second = full.splitlines(keepends=True)
    # what two unlocked runs and a kill could leave: molecule 0 twice, then molecule 1 cut off
    (work / "out.jsonl").write_text(first + first + second[:30])
    code, out, err = run(["batch", "L.smi", "-o", "out.jsonl", "--conformers", "1", "--quiet"], capsys)
    assert code == 0, err
    assert "removed 1 duplicate record (molecule index 0" in err and "removed a cut-off last line" in err
    assert (work / "out.jsonl").read_text() == full
    assert "1 computed" in out and "1 already done" in out


def test_jobs_above_the_usable_cores_are_lowered_with_a_note(work, capsys):
    cores = len(os.sched_getaffinity(0))
    code, out, err = run(["batch", "L.smi", "-o", "o.jsonl", "--jobs", str(cores + 1), "--conformers", "1",
                          "--quiet"], capsys)
    assert code == 0, err
    assert f"jobs lowered from {cores + 1} to {cores}" in err
    code, _, err = run(["batch", "L.smi", "-o", "o2.jsonl", "--jobs", "65"], capsys)   # the hard upper bound
    assert code == 2 and "65" in err and not Path("o2.jsonl").exists()


def test_an_os_error_is_exit_2_naming_the_path(work, capsys, monkeypatch):
    import errno

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(work / ".out.txt.ab12cd34.tmp"))

    # an OSError that escapes a writer's own handling still names the output, not the temporary
    monkeypatch.setattr("ringshift.io.writing.atomic_write", full)
    before = snapshot(work)
    code, _, err = run(["predict", "c1ccccc1", "--conformers", "1", "-o", "out.txt"], capsys)
    assert code == 2 and err.strip() == f"ringshift: error: {work / 'out.txt'}: No space left on device"
    assert snapshot(work) == before


LEAKS = [
    # (id, arguments, words expected, internal names that must not appear)
    ("no-hydrogen-compare", ["compare", "ClC1=C(Cl)C(Cl)=C(Cl)C(Cl)=C1Cl", "p.csv"], "has no hydrogens",
     ["n_hydrogens", "=0"]),
    ("open-shell-map", ["map", "[CH]1C=CC=C1", "-o", "m.png"], "(option --set-current)", ["set_current"]),
]


@pytest.mark.parametrize("args, words, hidden", [c[1:] for c in LEAKS], ids=[c[0] for c in LEAKS])
def test_messages_do_not_leak_internal_names(work, capsys, args, words, hidden):
    (work / "p.csv").write_text("shift_ppm,integral\n7.3,1\n")
    before = snapshot(work)
    code, _, err = run([*args, "--conformers", "1"], capsys)
    assert code == 2 and words in err and len(err.strip().splitlines()) == 1, err
    assert not any(h in err for h in hidden)
    assert snapshot(work) == before


@pytest.mark.parametrize("source, message, want", [
    ("peaks[1].fixed_groups", "group 3 is already fixed to peaks[0]",
     "peak 2 of the peak list (fixed atoms): group 3 is already fixed to peak 1 of the peak list"),
    ("peaks[0].shift_ppm", "expected a finite number, got nan", "peak 1 of the peak list (shift): expected a finite"),
], ids=["fixed-groups", "shift"])
def test_library_argument_paths_are_worded_for_the_command_line(source, message, want):
    from ringshift.cli import _error_text
    from ringshift.errors import InputError

    text = _error_text(InputError(message, source))
    assert text.startswith(want) and "peaks[" not in text and "fixed_groups" not in text
