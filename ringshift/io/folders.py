"""Output folders (report, demo): built aside, marked as ringshift's, swapped in whole.

A folder ringshift writes holds a marker file, :data:`MARKER` (``.ringshift-folder.json``): the kind of
folder (``"report"``, ``"demo"``) and the SHA-256 of every file written into it. ``force`` replaces only a
folder with the marker of the same kind, and only while it holds nothing else: a file added or changed
since ringshift wrote the folder makes the replacement refuse, naming the file (move it out first).
Refused always: the current folder or one that contains it, a symbolic link, a file, ``-``.

The new folder is built as ``.NAME.XXXXXXXX.tmp`` beside the output and renamed into place; an existing
folder is exchanged with it in one step where the system allows (Linux ``renameat2``), otherwise moved
aside to ``.NAME.XXXXXXXX.old`` first. Either way an interruption leaves the old folder or the new one,
never a mixture; leftovers of a killed run are removed by the next run to the same output.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import errno
import hashlib
import json
import os
import shutil
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from ringshift import _signals
from ringshift.errors import OutputError
from ringshift.io.locks import output_lock
from ringshift.io.writing import check_not_empty, os_error, remove_stale_temporaries, temporary_name

MARKER = ".ringshift-folder.json"


def _digest(path: Path) -> str:
    h = hashlib.sha256()
    with path.open("rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _read_marker(folder: Path) -> dict | None:
    try:
        data = json.loads((folder / MARKER).read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError):
        return None
    return data if isinstance(data, dict) and isinstance(data.get("files"), dict) else None


def is_marked_folder(path: str | os.PathLike, kind: str | None = None) -> bool:
    """Whether ``path`` is a real folder (not a link) with ringshift's marker (of ``kind``, if given)."""
    folder = Path(path)
    if folder.is_symlink() or not folder.is_dir():
        return False
    marker = _read_marker(folder)
    return marker is not None and (kind is None or marker.get("ringshift_folder") == kind)


def foreign_entries(folder: Path) -> list[str]:
    """Paths (relative) in a marked folder that ringshift did not write there or that changed since."""
    marker = _read_marker(folder) or {"files": {}}
    known: dict = marker["files"]
    odd = []
    for root, dirs, files in os.walk(folder):
        rel_root = Path(root).relative_to(folder)
        for name in sorted(files) + sorted(d for d in dirs if (Path(root) / d).is_symlink()):
            rel = (rel_root / name).as_posix()
            p = Path(root) / name
            if rel == MARKER:
                continue
            if p.is_symlink() or rel not in known or known[rel] != _digest(p):
                odd.append(rel)
    return sorted(odd)


def check_output_folder(path: str | os.PathLike, *, force: bool, kind: str) -> Path:
    """Refuse an output folder the contract (module notes) forbids; returns it as an absolute Path."""
    check_not_empty(path)
    if os.fspath(path) == "-":
        raise OutputError(f"-: a {kind} is a folder and cannot go to standard output; give a folder name")
    out = Path(os.path.abspath(path))
    here = Path(os.path.abspath("."))
    if out == here or out in here.parents or out.parent == out:
        raise OutputError(f"{path}: is the current folder or contains it; give a new folder for the {kind}")
    if out.is_symlink():
        raise OutputError(f"{path}: is a symbolic link; ringshift does not replace links")
    if out.exists():
        if not out.is_dir():
            raise OutputError(f"{path}: exists and is not a folder")
        if not force:
            raise OutputError(f"{path}: already exists; use force to replace the {kind} folder")
        if not is_marked_folder(out, kind):
            raise OutputError(f"{path}: is not a ringshift {kind} folder (it has no {MARKER} of a {kind}); "
                              "ringshift replaces only folders it wrote")
        odd = foreign_entries(out)
        if odd:
            more = f" and {len(odd) - 1} more" if len(odd) > 1 else ""
            raise OutputError(f"{path}: holds {odd[0]}{more}, not written by ringshift or changed since; move "
                              "it out of the folder (or delete it) before replacing the folder")
    if not out.parent.is_dir():
        raise OutputError(f"{path}: parent folder {out.parent} does not exist")
    return out


def _write_marker(tmp: Path, kind: str) -> None:
    files = {}
    for root, _dirs, names in os.walk(tmp):
        for name in names:
            p = Path(root) / name
            files[p.relative_to(tmp).as_posix()] = _digest(p)
    text = json.dumps({"ringshift_folder": kind, "files": dict(sorted(files.items()))}, indent=1)
    (tmp / MARKER).write_text(text + "\n", encoding="utf-8")


_RENAME_NOREPLACE, _RENAME_EXCHANGE, _AT_FDCWD = 1, 2, -100


def _renameat2(src: Path, dst: Path, flags: int) -> bool:
    """Linux renameat2; False when the system or file system does not offer it (then use the fallback)."""
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6", use_errno=True)
        fn = libc.renameat2
    except (OSError, AttributeError):
        return False
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    if fn(_AT_FDCWD, os.fsencode(src), _AT_FDCWD, os.fsencode(dst), flags) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.EINVAL, errno.ENOSYS, errno.ENOTSUP):
        return False
    raise OSError(err, os.strerror(err), str(dst))


def _swap_in(tmp: Path, out: Path) -> None:
    if out.exists():
        if _renameat2(tmp, out, _RENAME_EXCHANGE):
            shutil.rmtree(tmp, ignore_errors=True)          # now the old folder
            return
        old = temporary_name(out, "old")
        os.rename(out, old)
        os.rename(tmp, out)
        shutil.rmtree(old, ignore_errors=True)
        return
    try:
        if not _renameat2(tmp, out, _RENAME_NOREPLACE):
            os.rename(tmp, out)
    except (FileExistsError, IsADirectoryError, OSError) as exc:
        if exc.errno not in (errno.EEXIST, errno.ENOTEMPTY, errno.EISDIR):
            raise
        raise OutputError(f"{out}: appeared while the folder was being written; nothing was replaced") from None


@contextmanager
def output_folder(path: str | os.PathLike, *, force: bool = False, kind: str) -> Iterator[Path]:
    """Yield a fresh temporary folder to fill; on success it is marked and put in place at ``path``.

    Refusals as :func:`check_output_folder`; the output's lock is held throughout. An exception (or a
    signal) removes the temporary folder and leaves ``path`` as it was. OS errors become OutputErrors
    naming ``path``."""
    out = check_output_folder(path, force=force, kind=kind)
    with output_lock(out):
        remove_stale_temporaries(out)
        check_output_folder(path, force=force, kind=kind)            # again, under the lock
        tmp = temporary_name(out)
        _signals.register_temporary(tmp)
        try:
            os.mkdir(tmp, 0o777)                    # the umask applies
            yield tmp
            _write_marker(tmp, kind)
            _swap_in(tmp, out)
        except OSError as exc:
            shutil.rmtree(tmp, ignore_errors=True)
            if isinstance(exc, OutputError):
                raise
            raise os_error(path, exc, f"cannot write the {kind} folder") from None
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise
        finally:
            _signals.forget_temporary(tmp)
