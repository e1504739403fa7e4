"""The output contract of every writer (files, folders, JSON lines), and atomic file writes.

* ``-`` means standard output (text outputs); an empty path is an error.
* Only a regular file (or a folder ringshift made, :mod:`ringshift.io.folders`) is ever replaced, and only
  with ``force``. Never replaced, ``force`` or not: a folder, device, pipe or socket given as a file; a
  symbolic link; an input of the run, recognised by inode (hard links, links, relative paths).
* A file is written to a temporary sibling ``.NAME.XXXXXXXX.tmp`` and renamed into place, so an
  interrupted or failed write leaves nothing half-written; a new file gets the permissions the umask
  allows (0666 & ~umask), a replaced file keeps its own.
* Each output has an advisory lock (:mod:`ringshift.io.locks`); with it held, temporaries of our own left
  by a killed run (``.NAME.XXXXXXXX.tmp`` / ``.old``) are removed.
* Every OS error becomes an :class:`~ringshift.errors.OutputError` naming the output, never the temporary.
"""

from __future__ import annotations

import errno
import os
import re
import stat
from collections.abc import Sequence
from pathlib import Path

from ringshift import _signals
from ringshift.errors import OutputError
from ringshift.io.locks import output_lock

STDOUT = "-"

#: What a temporary of ours looks like: ``.NAME.`` + 8 characters + ``.tmp`` (or ``.old``: a replaced folder).
_TEMP_TAIL = r"\.[a-z0-9_]{8}\.(?:tmp|old)"


def umask() -> int:
    """The process umask, read without changing it where the system allows (Linux ``/proc``)."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    old = os.umask(0o022)
    os.umask(old)
    return old


def new_file_mode() -> int:
    """Permission bits of a new output file: 0666 masked by the umask."""
    return 0o666 & ~umask()


def temporary_name(output: Path, kind: str = "tmp") -> Path:
    """A fresh hidden sibling name ``.NAME.XXXXXXXX.<kind>`` of ``output``."""
    return output.with_name(f".{output.name}.{os.urandom(4).hex()}.{kind}")


def public_path(path: str) -> str:
    """A path as messages show it: a temporary of ours is named by the output it stands for."""
    folder, name = os.path.split(path)
    m = re.fullmatch(r"\.(.+)" + _TEMP_TAIL, name)
    return os.path.join(folder, m.group(1)) if m else path


def remove_stale_temporaries(output: str | os.PathLike) -> list[str]:
    """Remove ``.NAME.XXXXXXXX.tmp``/``.old`` files and folders of ``output`` left by an interrupted run.

    Call it only with the output's lock held (then no live run owns them). Returns the names removed."""
    import shutil  # here, not at start-up

    out = Path(os.path.abspath(output))
    pattern = re.compile(r"\." + re.escape(out.name) + _TEMP_TAIL)
    removed: list[str] = []
    try:
        entries = list(os.scandir(out.parent))
    except OSError:
        return removed
    for entry in entries:
        if not pattern.fullmatch(entry.name):
            continue
        try:
            if entry.is_dir(follow_symlinks=False):
                shutil.rmtree(entry.path)
            elif entry.is_file(follow_symlinks=False):
                os.unlink(entry.path)
            else:
                continue
            removed.append(entry.name)
        except OSError:
            pass
    return removed


def check_not_empty(path, option: str = "output") -> None:
    if path is not None and not str(os.fspath(path)).strip():
        raise OutputError(f"{option}: empty path; give a file name (or - for standard output)")


def same_file(path: str | os.PathLike, other: str | os.PathLike) -> bool:
    """Whether two paths are the same file (inode and device; links followed). False if either is missing."""
    try:
        return os.path.samestat(os.stat(path), os.stat(other))
    except (OSError, ValueError):
        return False


def check_output_file(path: str | os.PathLike, *, force: bool = False,
                      inputs: Sequence[str | os.PathLike] = (), append: bool = False) -> Path:
    """Refuse an output file that the contract (module notes) forbids; returns it as a Path.

    ``append``: the file is extended, not replaced (batch), so ``force`` is not asked for."""
    check_not_empty(path)
    p = Path(path)
    for source in inputs:
        if same_file(p, source):
            raise OutputError(f"{p}: is an input of this run (the same file); choose another output path")
    try:
        st = os.lstat(p)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise OutputError(f"{p}: cannot use it as an output ({exc.strerror})") from None
    if st is not None:
        if stat.S_ISLNK(st.st_mode):
            raise OutputError(f"{p}: is a symbolic link; ringshift does not replace links, give the file's own path")
        if not stat.S_ISREG(st.st_mode):
            what = "a folder" if stat.S_ISDIR(st.st_mode) else "a device, pipe or socket"
            raise OutputError(f"{p}: exists and is not a regular file ({what}); ringshift replaces only regular files")
        if not force and not append:
            raise OutputError(f"{p}: already exists; use force to overwrite it")
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{p}: folder {folder} does not exist")
    return p


def os_error(output, exc: OSError, doing: str = "cannot write it") -> OutputError:
    """An OSError as a one-line OutputError naming ``output`` (not a temporary)."""
    reason = exc.strerror or str(exc)
    if exc.errno == errno.ENAMETOOLONG:
        reason = "file name too long"
    return OutputError(f"{output}: {doing} ({reason})")


def atomic_write(path: str | os.PathLike, data: str | bytes, *, force: bool = False,
                 inputs: Sequence[str | os.PathLike] = ()) -> Path:
    """Write a file by the output contract (module notes): checked, locked, temporary sibling, rename.

    An existing file is kept unless ``force``; ``inputs`` are the files this run reads (a SMILES or a
    missing path among them is ignored). Raises :class:`OutputError` (one line naming ``path``)."""
    path = check_output_file(path, force=force, inputs=inputs)
    with output_lock(path):
        remove_stale_temporaries(path)
        check_output_file(path, force=force, inputs=inputs)      # again, under the lock
        try:
            mode = stat.S_IMODE(os.stat(path).st_mode) if path.exists() else new_file_mode()
        except OSError:
            mode = new_file_mode()
        tmp = temporary_name(path)
        _signals.register_temporary(tmp)
        try:
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | os.O_CLOEXEC, 0o600)
            with os.fdopen(fd, "wb") as fb:
                fb.write(data if isinstance(data, bytes) else data.encode("utf-8"))
                os.fchmod(fb.fileno(), mode)
            _put_in_place(tmp, path, force)
        except BaseException as exc:
            try:
                os.unlink(tmp)
            except OSError:
                pass
            if isinstance(exc, OSError) and not isinstance(exc, OutputError):
                raise os_error(path, exc) from None
            raise
        finally:
            _signals.forget_temporary(tmp)
    return path


def _put_in_place(tmp: Path, path: Path, force: bool) -> None:
    if force:
        os.replace(tmp, path)
        return
    try:                       # no-clobber: a link fails if a file appeared at the path meanwhile
        os.link(tmp, path)
    except FileExistsError:
        raise OutputError(f"{path}: already exists; use force to overwrite it") from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EMLINK, errno.EXDEV):
            raise
        if path.exists():
            raise OutputError(f"{path}: already exists; use force to overwrite it") from None
        os.replace(tmp, path)
        return
    os.unlink(tmp)
