"""Stopping on Ctrl-C (SIGINT) and SIGTERM: promptly, with no partial output, exit code 128 + signal number.

The command line runs each command inside :func:`stop_on_signals`. There SIGINT and SIGTERM are blocked in
the main thread and taken by a watchdog thread (``signal.sigwait``), never by a handler that a library may
have swapped in: RDKit catches SIGINT itself during embedding and substructure searches and carries on with
a partial result, so a Ctrl-C that reached it would be lost or, worse, give a different answer. The watchdog
passes the first signal to the main thread (``_thread.interrupt_main``), where it raises :class:`Stopped`
(a ``KeyboardInterrupt``) at the next Python step: every writer's cleanup runs (temporary files and folders
removed, locks released) and :mod:`ringshift.cli` exits 130 or 143 with one line. Later signals do not
raise again, so a cleanup is never cut short.

A long call into compiled code (an RDKit force field, a large NumPy block) delays that step. If the
command has not ended :data:`GRACE_S` seconds after the first signal, the watchdog removes the temporary
outputs registered with :func:`register_temporary` (and lock files) and ends the process with ``os._exit``
(same exit code, same one-line message). Batch worker processes die with it
(:func:`ringshift.runners.batch.worker_init`).

A signal that is ignored when the command starts (e.g. SIGINT of a job started with ``&`` by a
non-interactive shell) stays ignored. Outside the main thread, or without ``pthread_sigmask``, the ordinary
Python handlers are used (Ctrl-C then reaches RDKit as before).
"""

from __future__ import annotations

import _thread
import os
import signal
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
_STATE: dict[str, int | None] = {"signum": None, "raised": None}
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
        first = _STATE["raised"] is None
        if first:
            _STATE["raised"] = signum
            if _STATE["signum"] is None:
                _STATE["signum"] = signum
    if first:
        raise Stopped(signum)


def _remove_temporaries() -> None:
    import shutil  # only when a stop leaves temporaries: shutil is not needed at start-up

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


#: Ends the watchdog's sigwait when the command is over (sent to the watchdog thread only).
_WAKE: signal.Signals | None = getattr(signal, "SIGUSR2", None)


def _watchdog(watched: set[int], finished: threading.Event) -> None:
    first = None
    while not finished.is_set():
        signum = signal.sigwait(watched | {_WAKE} if _WAKE is not None else watched)
        if finished.is_set():
            return
        if signum == _WAKE or first is not None:
            continue                          # a second Ctrl-C changes nothing: the first is being handled
        first = signum
        with _LOCK:
            if _STATE["signum"] is None:
                _STATE["signum"] = signum
        _thread.interrupt_main(signal.Signals(signum))
        if finished.wait(GRACE_S):
            return
        _remove_temporaries()
        try:
            print(stop_message(), file=sys.stderr, flush=True)
        finally:
            os._exit(exit_code())


@contextmanager
def stop_on_signals() -> Iterator[None]:
    """Within the block, the first SIGINT or SIGTERM raises :class:`Stopped` in the main thread, and the process
    ends after :data:`GRACE_S` s if it has not by then (module notes). Restores handlers and mask on exit."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    _STATE["signum"] = _STATE["raised"] = None
    watched = {int(sig) for sig in STOP_SIGNALS if signal.getsignal(sig) is not signal.SIG_IGN}
    previous = {sig: signal.getsignal(sig) for sig in watched}
    for sig in watched:
        signal.signal(sig, _handler)
    if not watched or _WAKE is None or not hasattr(signal, "pthread_sigmask"):   # plain handlers only
        try:
            yield
        finally:
            for sig, old in previous.items():
                signal.signal(sig, old)
        return
    old_mask = signal.pthread_sigmask(signal.SIG_BLOCK, watched | {_WAKE})
    finished = threading.Event()
    thread = threading.Thread(target=_watchdog, args=(watched, finished), name="ringshift-stop-watchdog",
                              daemon=True)
    thread.start()                            # it inherits the blocked mask, as sigwait requires
    try:
        yield
    finally:
        finished.set()
        if thread.ident is not None and thread.is_alive():
            try:
                signal.pthread_kill(thread.ident, _WAKE)
            except ProcessLookupError:         # it has just ended
                pass
        thread.join(GRACE_S + 1.0)
        while signal.sigtimedwait(watched | {_WAKE}, 0) is not None:   # drop signals left pending
            pass
        signal.pthread_sigmask(signal.SIG_SETMASK, old_mask)
        for sig, old in previous.items():
            signal.signal(sig, old)


def block_early() -> None:
    """Block SIGINT and SIGTERM (those not ignored) in the main thread before heavy imports start threads, which
    inherit the mask; :func:`stop_on_signals` then takes them with ``sigwait``. For the console entry only."""
    if hasattr(signal, "pthread_sigmask") and threading.current_thread() is threading.main_thread():
        watched = {int(sig) for sig in STOP_SIGNALS if signal.getsignal(sig) is not signal.SIG_IGN}
        signal.pthread_sigmask(signal.SIG_BLOCK, watched)


def reset_in_child() -> None:
    """In a forked worker: SIGTERM kills, SIGINT is left to the parent (a terminal's Ctrl-C reaches the whole
    process group; the parent stops the workers), nothing blocked."""
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if hasattr(signal, "pthread_sigmask"):       # a fork inherits the parent's blocked mask
        signal.pthread_sigmask(signal.SIG_UNBLOCK, set(STOP_SIGNALS) | ({_WAKE} if _WAKE else set()))
