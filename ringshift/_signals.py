"""Stopping on Ctrl-C (SIGINT) and SIGTERM: promptly, with no partial output, exit code 128 + signal number.

The command line installs :func:`stop_on_signals` around a command. The first SIGINT or SIGTERM raises
:class:`Stopped` (a ``KeyboardInterrupt``) in the main thread, so every writer's cleanup runs (temporary
files and folders are removed, locks released) and :mod:`ringshift.cli` exits 130 or 143 with one line.
Later signals do not raise again, so a cleanup is never cut short.

A Python signal handler only runs between bytecodes: a long call into compiled code (an RDKit force
field, a large NumPy block) would delay it. A watchdog thread therefore hears every signal through
``signal.set_wakeup_fd``; if the command has not finished :data:`GRACE_S` seconds after the first signal,
it removes the temporary outputs registered with :func:`register_temporary` and ends the process with
``os._exit`` (same exit code, same one-line message). Worker processes end with it (see
:func:`ringshift.runners.batch.worker_init`).

A signal that is ignored when the command starts (e.g. SIGINT of a job started with ``&`` by a
non-interactive shell) stays ignored.
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import sys
import threading
from collections.abc import Iterator
from contextlib import contextmanager

#: Seconds between the first signal and the watchdog's forced exit, when the command has not ended by then.
GRACE_S = 3.0

#: The signals that stop a command, with the words the one-line message uses.
STOP_SIGNALS = {signal.SIGINT: "Ctrl-C (SIGINT)", signal.SIGTERM: "SIGTERM"}

# Process state (a signal is process-wide): the first stopping signal received, and the temporary outputs
# in progress that a forced exit must remove. Guarded by _LOCK.
_LOCK = threading.Lock()
_STATE: dict[str, int | None] = {"signum": None}
_TEMPORARIES: set[str] = set()


class Stopped(KeyboardInterrupt):
    """Raised in the main thread by the first SIGINT or SIGTERM; ``signum`` says which."""

    def __init__(self, signum: int):
        super().__init__(f"stopped by {STOP_SIGNALS.get(signal.Signals(signum), signum)}")
        self.signum = signum


def register_temporary(path: str | os.PathLike) -> None:
    """Note a temporary file or folder that a forced exit must remove (until :func:`forget_temporary`)."""
    with _LOCK:
        _TEMPORARIES.add(os.fspath(path))


def forget_temporary(path: str | os.PathLike) -> None:
    with _LOCK:
        _TEMPORARIES.discard(os.fspath(path))


def received_signal() -> int | None:
    """The stopping signal received during the current command, or None."""
    return _STATE["signum"]


def exit_code(exc: BaseException | None = None) -> int:
    """128 + the signal number: 130 for SIGINT (also a KeyboardInterrupt raised without a signal, e.g. by a
    cancelled RDKit embedding), 143 for SIGTERM."""
    signum = getattr(exc, "signum", None) or _STATE["signum"] or int(signal.SIGINT)
    return 128 + int(signum)


def stop_message(exc: BaseException | None = None) -> str:
    """The one line printed when a command is stopped."""
    signum = getattr(exc, "signum", None) or _STATE["signum"] or int(signal.SIGINT)
    what = STOP_SIGNALS.get(signal.Signals(signum), f"signal {signum}")
    detail = getattr(exc, "detail", None) or "no partial output was left"
    return f"ringshift: stopped by {what}; {detail}"


def _handler(signum, frame):  # noqa: ARG001
    with _LOCK:
        first = _STATE["signum"] is None
        if first:
            _STATE["signum"] = signum
    if first:
        raise Stopped(signum)


def _remove_temporaries() -> None:
    with _LOCK:
        paths = sorted(_TEMPORARIES)
    for p in paths:
        try:
            if os.path.isdir(p) and not os.path.islink(p):
                shutil.rmtree(p, ignore_errors=True)
            else:
                os.unlink(p)
        except OSError:
            pass


def _watchdog(sock: socket.socket, finished: threading.Event) -> None:
    while True:
        try:
            data = sock.recv(64)
        except OSError:
            return
        if not data or finished.is_set():
            return
        signums = [b for b in data if b in (int(signal.SIGINT), int(signal.SIGTERM))]
        if not signums:
            continue
        with _LOCK:
            if _STATE["signum"] is None:
                _STATE["signum"] = signums[0]
        if finished.wait(GRACE_S):
            return
        _remove_temporaries()
        try:
            print(stop_message(), file=sys.stderr, flush=True)
        finally:
            os._exit(exit_code())


@contextmanager
def stop_on_signals() -> Iterator[None]:
    """Within the block, SIGINT and SIGTERM raise :class:`Stopped` once and a watchdog forces the exit after
    :data:`GRACE_S` s. Restores the previous handlers on exit. Outside the main thread it does nothing."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    _STATE["signum"] = None
    previous = {}
    for sig in STOP_SIGNALS:
        old = signal.getsignal(sig)
        if old is signal.SIG_IGN:
            continue
        previous[sig] = old
        signal.signal(sig, _handler)
    reader, writer = socket.socketpair()
    reader.setblocking(True)
    writer.setblocking(False)
    finished = threading.Event()
    old_fd = signal.set_wakeup_fd(writer.fileno(), warn_on_full_buffer=False)
    thread = threading.Thread(target=_watchdog, args=(reader, finished), name="ringshift-stop-watchdog",
                              daemon=True)
    thread.start()
    try:
        yield
    finally:
        finished.set()
        signal.set_wakeup_fd(old_fd)
        for sig, old in previous.items():
            signal.signal(sig, old)
        writer.close()          # ends the watchdog's recv
        thread.join(1.0)
        reader.close()


def reset_in_child() -> None:
    """In a forked worker: no wakeup descriptor shared with the parent, SIGTERM kills, SIGINT is left to the
    parent (a terminal's Ctrl-C reaches the whole process group; the parent stops the workers)."""
    try:
        signal.set_wakeup_fd(-1)
    except ValueError:           # not the main thread of the worker
        pass
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    signal.signal(signal.SIGINT, signal.SIG_IGN)
