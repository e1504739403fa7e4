"""One advisory lock per output: a second ringshift run writing the same output refuses at once.

The lock is ``fcntl.flock`` on a small file beside the output, ``.NAME.lock`` (it holds the process id for
the message). A second run does not wait: it stops before any work with a one-line error that names the
output and the process holding it. The lock is released (and its file removed) when the writer finishes;
the operating system releases it when a process dies, so a ``kill -9`` never leaves an output locked (the
file itself may stay behind and is reused). Locks are re-entrant within a process: the command line
takes the lock before the computation and the writer takes it again to write.
Advisory means only ringshift runs respect it; other programs are not kept out.
"""

from __future__ import annotations

import errno
import os
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from ringshift import _signals
from ringshift.errors import OutputError

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX: no locking
    fcntl = None  # type: ignore[assignment]

_HELD: dict[str, int] = {}      # lock file (real path) → nesting depth, in this process
_GUARD = threading.Lock()


def lock_path(output: str | os.PathLike) -> Path:
    """The lock file of an output: ``.NAME.lock`` in the output's folder."""
    out = Path(os.path.abspath(output))
    return out.with_name(f".{out.name}.lock")


def _holder(fd: int) -> str:
    try:
        text = os.pread(fd, 32, 0).decode("ascii", "replace").strip()
    except OSError:
        text = ""
    return f" (process {text})" if text.isdigit() else ""


@contextmanager
def output_lock(output: str | os.PathLike) -> Iterator[None]:
    """Hold the advisory lock of ``output`` for the block; refuse with :class:`OutputError` if another
    process holds it. Folder errors (missing, read-only, permission) are OutputErrors naming ``output``."""
    lock = lock_path(output)
    key = os.path.join(os.path.realpath(lock.parent), lock.name)
    with _GUARD:
        if key in _HELD:
            _HELD[key] += 1
            nested = True
        else:
            nested = False
    if nested:
        try:
            yield
        finally:
            with _GUARD:
                _HELD[key] -= 1
        return
    if fcntl is None:  # pragma: no cover
        yield
        return
    fd = _acquire(lock, output)
    try:
        with _GUARD:
            _HELD[key] = 1
        _signals.register_temporary(lock)       # a forced exit on a signal removes it too
        yield
    finally:
        with _GUARD:
            _HELD.pop(key, None)
        _release(lock, fd)


def _release(lock: Path, fd: int) -> None:
    try:
        os.unlink(lock)     # still ours: we hold the lock, and _acquire checked the path is this file
    except OSError:
        pass
    _signals.forget_temporary(lock)
    os.close(fd)


def _acquire(lock: Path, output) -> int:
    while True:
        same = False
        try:
            fd = os.open(lock, os.O_RDWR | os.O_CREAT | os.O_CLOEXEC | os.O_NOFOLLOW, 0o666)
        except OSError as exc:
            if exc.errno == errno.ELOOP:
                raise OutputError(f"{output}: its lock file {lock.name} is a symbolic link; remove it") from None
            reason = exc.strerror or str(exc)
            if not lock.parent.is_dir():
                reason = f"folder {lock.parent} does not exist"
            raise OutputError(f"{output}: cannot write in its folder ({reason})") from None
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BaseException as exc:
            if not isinstance(exc, OSError):        # a signal: nothing is held
                os.close(fd)
                raise
            who = _holder(fd)
            os.close(fd)
            if exc.errno in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
                raise OutputError(f"{output}: another ringshift run{who} is writing it; wait until it has "
                                  "finished, or choose another output") from None
            raise OutputError(f"{output}: cannot lock it ({exc.strerror})") from None
        try:  # the holder before us may have removed the file after we opened it: lock the current file
            try:
                same = os.path.samestat(os.fstat(fd), os.stat(lock, follow_symlinks=False))
            except FileNotFoundError:
                same = False
            if same:
                os.ftruncate(fd, 0)
                os.pwrite(fd, f"{os.getpid()}\n".encode("ascii"), 0)
                return fd
        except BaseException:                       # a signal, a full disk: let go of what we hold
            if same:
                _release(lock, fd)
            else:
                os.close(fd)
            raise
        os.close(fd)
