"""The output contract (ringshift.io.writing, .folders, .locks) case by case: what is refused leaves every file as
it was (bytes, inode, mtime), what is written respects the umask, leftovers of killed runs are removed, a held
lock refuses a second writer, OS errors name the output and never a temporary.

All files here are invented placeholders (the text "mine", "original"); no chemistry is checked.
"""

from __future__ import annotations

import errno
import fcntl
import os
import stat
from pathlib import Path

import pytest

from ringshift.errors import OutputError
from ringshift.io import writing
from ringshift.io.folders import MARKER, check_output_folder, is_marked_folder, output_folder
from ringshift.io.locks import lock_path, output_lock
from ringshift.io.writing import (
    atomic_write,
    check_output_file,
    public_path,
    remove_stale_temporaries,
    temporary_name,
)


def snapshot(root: Path) -> dict[str, tuple]:
    """Every entry under ``root``: (kind, bytes or link target, inode, mtime_ns)."""
    out = {}
    for p in sorted(root.rglob("*")):
        st = os.lstat(p)
        if stat.S_ISLNK(st.st_mode):
            body: object = ("link", os.readlink(p))
        elif stat.S_ISREG(st.st_mode):
            body = ("file", p.read_bytes())
        else:
            body = ("other", stat.S_IFMT(st.st_mode))
        out[str(p.relative_to(root))] = (body, st.st_ino, st.st_mtime_ns)
    return out


# ------------------------------------------------------------------------------------------ refusals
def _input_itself(d):       # the output is the input's own path
    return d / "in.xyz", {"inputs": [str(d / "in.xyz")], "force": True}


def _hard_link(d):          # another name of the input's inode
    os.link(d / "in.xyz", d / "alias.xyz")
    return d / "alias.xyz", {"inputs": [str(d / "in.xyz")], "force": True}


def _symlink_to_input(d):
    os.symlink(d / "in.xyz", d / "link.xyz")
    return d / "link.xyz", {"inputs": [str(d / "in.xyz")], "force": True}


def _relative_path(d):      # the input given by a path relative to the current folder
    return Path(os.path.relpath(d / "in.xyz")), {"inputs": [str(d / "in.xyz")], "force": True}


def _symlink_elsewhere(d):  # a link to another file: the link is not replaced
    (d / "target.txt").write_text("mine")
    os.symlink(d / "target.txt", d / "out.txt")
    return d / "out.txt", {"force": True}


def _folder(d):
    (d / "sub").mkdir()
    (d / "sub" / "keep.txt").write_text("mine")
    return d / "sub", {"force": True}


def _fifo(d):
    os.mkfifo(d / "pipe")
    return d / "pipe", {"force": True}


def _existing_without_force(d):
    (d / "out.txt").write_text("mine")
    return d / "out.txt", {}


def _missing_folder(d):
    return d / "nowhere" / "out.txt", {"force": True}


def _empty_path(d):  # noqa: ARG001
    return "", {"force": True}


REFUSALS = [
    (_input_itself, "is an input of this run"),
    (_hard_link, "is an input of this run"),
    (_symlink_to_input, "is an input of this run"),
    (_relative_path, "is an input of this run"),
    (_symlink_elsewhere, "is a symbolic link"),
    (_folder, "not a regular file"),
    (_fifo, "not a regular file"),
    (_existing_without_force, "already exists"),
    (_missing_folder, "does not exist"),
    (_empty_path, "empty path"),
]


@pytest.mark.parametrize("make, message", REFUSALS, ids=[f.__name__.strip("_") for f, _ in REFUSALS])
def test_atomic_write_refuses_and_changes_nothing(tmp_path, monkeypatch, make, message):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "in.xyz").write_text("original\n")
    target, kwargs = make(tmp_path)
    before = snapshot(tmp_path)
    with pytest.raises(OutputError, match=message) as exc:
        atomic_write(target, "new\n", **kwargs)
    assert "\n" not in str(exc.value) and ".tmp" not in str(exc.value)
    assert snapshot(tmp_path) == before          # bytes, inode and mtime of every entry; no lock or temp left


def test_devices_are_refused_by_the_check_itself():
    # checked on the guard function only: a test must never risk replacing /dev/null
    if not os.path.exists("/dev/null"):
        pytest.skip("no /dev/null")
    with pytest.raises(OutputError, match="not a regular file"):
        check_output_file("/dev/null", force=True)


# ------------------------------------------------------------------------------------------ permissions
@pytest.mark.parametrize("mask, mode", [(0o022, 0o644), (0o077, 0o600), (0o002, 0o664)],
                         ids=["umask-022", "umask-077", "umask-002"])
def test_new_files_and_folders_respect_the_umask(tmp_path, mask, mode):
    old = os.umask(mask)
    try:
        atomic_write(tmp_path / "out.txt", "x")
        with output_folder(tmp_path / "rep", kind="report") as tmp:
            (tmp / "a.txt").write_text("x")
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(tmp_path / "out.txt").st_mode) == mode
    assert stat.S_IMODE(os.stat(tmp_path / "rep").st_mode) == mode | 0o111 & ~mask
    assert stat.S_IMODE(os.stat(tmp_path / "rep" / "a.txt").st_mode) == mode


def test_a_replaced_file_keeps_its_permissions(tmp_path):
    out = tmp_path / "out.txt"
    out.write_text("old")
    os.chmod(out, 0o640)
    atomic_write(out, "new", force=True)
    assert out.read_text() == "new" and stat.S_IMODE(os.stat(out).st_mode) == 0o640


# ------------------------------------------------------------------------------------------ leftovers, locks
def test_stale_temporaries_of_our_own_are_removed_and_nothing_else(tmp_path):
    out = tmp_path / "out.txt"
    stale_file = temporary_name(out)
    stale_file.write_text("partial")
    stale_dir = tmp_path / ".out.txt.abcd1234.old"
    stale_dir.mkdir()
    (stale_dir / "x").write_text("old")
    others = [tmp_path / ".out.txt.b.abcd1234.tmp", tmp_path / ".other.abcd1234.tmp", tmp_path / "out.txt.bak"]
    for p in others:
        p.write_text("not ours")
    atomic_write(out, "x")
    assert not stale_file.exists() and not stale_dir.exists()
    assert all(p.read_text() == "not ours" for p in others)
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(["out.txt"] + [p.name for p in others])


def test_a_held_lock_refuses_a_second_writer(tmp_path):
    out = tmp_path / "out.txt"
    fd = os.open(lock_path(out), os.O_RDWR | os.O_CREAT)   # another run holds the lock (its own descriptor)
    os.write(fd, b"4242\n")
    fcntl.flock(fd, fcntl.LOCK_EX)
    try:
        with pytest.raises(OutputError, match=r"another ringshift run \(process 4242\) is writing it"):
            atomic_write(out, "x")
        assert not out.exists()
    finally:
        os.close(fd)
    atomic_write(out, "x")                                 # released: the next writer goes ahead
    assert out.read_text() == "x" and not lock_path(out).exists()


def test_locks_are_reentrant_within_a_process(tmp_path):
    out = tmp_path / "out.txt"
    with output_lock(out):
        atomic_write(out, "x")                             # the command holds it, the writer takes it again
        assert lock_path(out).exists()
    assert not lock_path(out).exists()


# ------------------------------------------------------------------------------------------ OS errors
_REAL_FDOPEN = os.fdopen


class _FullDisk:
    def __init__(self, fd, mode):
        self._fh = _REAL_FDOPEN(fd, mode)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self._fh.close()

    def fileno(self):
        return self._fh.fileno()

    def write(self, data):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))


def _disk_full(monkeypatch, tmp_path):
    monkeypatch.setattr(writing.os, "fdopen", _FullDisk)
    return tmp_path / "out.txt"


def _read_only(monkeypatch, tmp_path):
    real_open = os.open

    def fake_open(path, flags, *a, **k):
        if str(path).endswith(".tmp"):
            raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(path))
        return real_open(path, flags, *a, **k)

    monkeypatch.setattr(writing.os, "open", fake_open)
    return tmp_path / "out.txt"


def _name_too_long(monkeypatch, tmp_path):  # noqa: ARG001
    return tmp_path / ("x" * 300 + ".txt")


@pytest.mark.parametrize("setup, reason", [(_disk_full, "No space left"), (_read_only, "Read-only file system"),
                                           (_name_too_long, "too long")],
                         ids=["disk-full", "read-only", "name-too-long"])
def test_os_errors_are_one_line_naming_the_output(tmp_path, monkeypatch, setup, reason):
    out = setup(monkeypatch, tmp_path)
    with pytest.raises(OutputError, match=reason) as exc:
        atomic_write(out, "x")
    text = str(exc.value)
    assert text.startswith(str(out)[:40]) and ".tmp" not in text and "\n" not in text
    assert list(tmp_path.iterdir()) == []                  # no temporary, no lock left


def test_public_path_hides_temporaries():
    assert public_path("/a/b/.rep.ab12cd34.tmp") == "/a/b/rep"
    assert public_path("/a/b/.out.txt.ab12cd34.old") == "/a/b/out.txt"
    assert public_path("/a/b/out.txt") == "/a/b/out.txt"


# ------------------------------------------------------------------------------------------ marked folders
def _ours(d, kind="report"):
    with output_folder(d / "rep", kind=kind) as tmp:
        (tmp / "report.html").write_text("<p>ours</p>")
        (tmp / "figures").mkdir()
        (tmp / "figures" / "a.svg").write_text("<svg/>")
    return d / "rep"


def _user_added_a_file(d):
    (_ours(d) / "chapter1.tex").write_text("mine")
    return d / "rep", "chapter1.tex"


def _user_changed_a_file(d):
    (_ours(d) / "figures" / "a.svg").write_text("<svg>edited</svg>")
    return d / "rep", "figures/a.svg"


def _foreign_folder(d):
    (d / "rep").mkdir()
    (d / "rep" / "report.html").write_text("someone else's")
    return d / "rep", "is not a ringshift report folder"


def _other_kind(d):
    _ours(d, kind="demo")
    return d / "rep", "is not a ringshift report folder"


def _current_folder(d):
    _ours(d)
    os.chdir(d / "rep")
    return Path("."), "is the current folder"


def _parent_of_current(d):
    _ours(d)
    (d / "rep" / "figures").mkdir(exist_ok=True)
    os.chdir(d / "rep" / "figures")
    return Path(".."), "is the current folder or contains it"


def _link_to_ours(d):
    _ours(d)
    os.symlink(d / "rep", d / "alias")
    return d / "alias", "symbolic link"


FOLDER_REFUSALS = [_user_added_a_file, _user_changed_a_file, _foreign_folder, _other_kind, _current_folder,
                   _parent_of_current, _link_to_ours]


@pytest.mark.parametrize("make", FOLDER_REFUSALS, ids=[f.__name__.strip("_") for f in FOLDER_REFUSALS])
def test_force_replaces_only_untouched_folders_of_ours(tmp_path, monkeypatch, make):
    monkeypatch.chdir(tmp_path)
    target, message = make(tmp_path)
    before = snapshot(tmp_path)
    with pytest.raises(OutputError, match=message):
        with output_folder(target, force=True, kind="report") as tmp:
            (tmp / "report.html").write_text("<p>new</p>")
    assert snapshot(tmp_path) == before


def test_an_untouched_folder_of_ours_is_replaced_whole(tmp_path):
    rep = _ours(tmp_path)
    assert is_marked_folder(rep, "report") and (rep / MARKER).is_file()
    with output_folder(rep, force=True, kind="report") as tmp:
        (tmp / "report.html").write_text("<p>new</p>")
    assert (rep / "report.html").read_text() == "<p>new</p>" and not (rep / "figures").exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rep"]
    with pytest.raises(OutputError, match="already exists"):
        check_output_folder(rep, force=False, kind="report")


def test_a_failure_inside_leaves_the_old_folder_and_no_temporary(tmp_path):
    rep = _ours(tmp_path)
    before = snapshot(tmp_path)
    with pytest.raises(ZeroDivisionError):
        with output_folder(rep, force=True, kind="report") as tmp:
            (tmp / "report.html").write_text("half")
            1 / 0  # noqa: B018
    assert snapshot(tmp_path) == before


def test_stale_folder_temporaries_are_removed_on_the_next_run(tmp_path):
    # what a SIGKILL during a report leaves: the half-built folder (.rep.XXXXXXXX.tmp)
    stale = temporary_name(tmp_path / "rep")
    stale.mkdir()
    (stale / "report.html").write_text("half")
    assert remove_stale_temporaries(tmp_path / "rep") == [stale.name]
    assert list(tmp_path.iterdir()) == []
