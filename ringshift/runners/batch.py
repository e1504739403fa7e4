"""Library runs (:func:`run_batch`): one prediction per molecule, in parallel, resumable, as JSON lines.

Output. One JSON object per line and molecule, in library order: ``{"ringshift_result": "batch_record",
"name", "index", "source", "schema_version", "ok": true, "result": <prediction_to_dict>}`` or the same with
``"ok": false, "error": "<one line>"``. A failing molecule never stops
the batch. Lines are appended and flushed one by one, so an interruption loses at most the molecules in
flight; out-of-order results from the workers wait in a buffer until their turn.
Output file. Only a batch output is appended to, emptied (``restart``) or tidied: a file that is not one
(the library itself, any other file) is refused before anything is changed (:mod:`ringshift.runners.batch_output`).
An advisory lock (:mod:`ringshift.io.locks`) keeps a second run off the same output: it refuses at once.
``"-"`` writes the records to standard output (no resume).
Resume. Molecules whose (index, name) is already in the output are skipped; a cut-off last line and
duplicate records are removed first, with a note (:class:`~ringshift.errors.OutputWarning`). A record whose
name differs from the library's molecule at that index means the output belongs to another library: an
error, before anything is computed.
Library. ``.sdf``/``.sd``: one molecule per record (read as a stream, name from the title line). Any
other file: one SMILES per line with an optional name after it (whitespace-separated); blank lines and
lines starting with ``#`` are skipped.
Workers. ``jobs`` processes (:class:`concurrent.futures.ProcessPoolExecutor`), or a Dask cluster at
``scheduler`` (``pip install ringshift[dask]``). ``jobs`` is at most :data:`MAX_JOBS` and is lowered to the
usable cores (``os.sched_getaffinity``) with a note. A worker that dies takes its molecules with it; those
are retried one by one in fresh single-worker pools so only the culprit is reported. Workers die with
their parent (Linux: ``PR_SET_PDEATHSIG``) and leave Ctrl-C to it; an interrupted batch kills its workers
at once and keeps the complete records written so far.
"""

from __future__ import annotations

import contextlib
import dataclasses
import itertools
import json
import os
import signal
import sys
import tempfile
import time
import warnings
from collections.abc import Iterator, Mapping
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ringshift import _signals
from ringshift.errors import InputError, OutputError, OutputWarning
from ringshift.io.libraries import LibraryItem, iter_library
from ringshift.io.locks import output_lock
from ringshift.io.structures import load_structure
from ringshift.io.writing import STDOUT, check_output_file, os_error, remove_stale_temporaries
from ringshift.reporting.json import SCHEMA_VERSION
from ringshift.runners.batch_output import read_batch_output, start_afresh, tidy_for_resume

__all__ = ['MAX_JOBS', 'BatchSummary', 'run_batch', 'usable_cores', 'work_item', 'worker_init']

_POLL_S = 0.2   # s between checks for a stop signal while waiting for workers

#: Hard upper bound of ``jobs`` (worker processes); ``jobs`` is also lowered to the usable cores.
MAX_JOBS = 64



@dataclass(frozen=True)
class BatchSummary:
    """What a :func:`run_batch` call did: molecules in the library, computed now, skipped as already done,
    failed (of those computed now), the output path, the wall time in s, and notes on what was tidied or
    lowered (also issued as :class:`~ringshift.errors.OutputWarning`)."""

    n_total: int
    n_computed: int
    n_skipped: int
    n_failed: int
    output: str
    elapsed_s: float
    notes: tuple[str, ...] = ()


def usable_cores() -> int:
    """Cores this process may run on (``os.sched_getaffinity``; ``os.cpu_count`` where that is missing)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def worker_init(parent_pid: int, resource_limits: tuple[float | None, float | None] = (None, None)) -> None:
    """Initializer of every worker process: die with the parent (Linux ``prctl(PR_SET_PDEATHSIG, SIGKILL)``),
    leave Ctrl-C to the parent, let SIGTERM kill (:func:`ringshift._signals.reset_in_child`), and apply the
    parent's memory and time limits (:func:`ringshift.limits.set_limits`; MB, s)."""
    from ringshift import limits

    _signals.reset_in_child()
    limits.set_limits(*resource_limits)
    if sys.platform.startswith("linux"):
        import ctypes

        try:
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(1, int(signal.SIGKILL), 0, 0, 0)        # PR_SET_PDEATHSIG = 1
        except (OSError, AttributeError):
            pass
    if os.getppid() != parent_pid:                             # the parent died before prctl took effect
        os._exit(1)


def _one_line(exc: BaseException) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text if isinstance(exc, InputError) else f"internal error ({type(exc).__name__}): {text}"


def work_item(item: LibraryItem, load_kwargs: Mapping | None = None, predict_kwargs: Mapping | None = None) -> str:
    """Predict one library molecule; returns its JSON line (never raises for a bad molecule)."""
    from ringshift.reporting.json import prediction_to_dict
    from ringshift.shifts.prediction import predict

    try:
        if item.kind == "sdf":
            with tempfile.TemporaryDirectory() as tmp:
                p = Path(tmp) / "record.sdf"
                p.write_text(item.text, encoding="utf-8")
                structure = load_structure(str(p), **dict(load_kwargs or {}))
        else:
            structure = load_structure(item.text, fmt="smiles", **dict(load_kwargs or {}))
        structure = dataclasses.replace(structure, name=item.name, source=item.source)
        result = prediction_to_dict(predict(structure, **dict(predict_kwargs or {})))
        return _record(item, ok=True, result=result)
    except Exception as exc:                  # one molecule's failure is its record, not the batch's end
        return _record(item, ok=False, error=_one_line(exc))


def _record(item: LibraryItem, **fields) -> str:
    """One JSON line of the batch output (module docstring)."""
    head = {"ringshift_result": "batch_record", "name": item.name, "index": item.index, "source": item.source,
            "schema_version": SCHEMA_VERSION}
    return json.dumps(head | fields, ensure_ascii=False, allow_nan=False)


class _Progress:
    def __init__(self, total: int, enabled: bool):
        self.total, self.done, self.failed, self.t0 = total, 0, 0, time.perf_counter()
        self.on = enabled and sys.stderr.isatty()

    def step(self, ok: bool) -> None:
        self.done += 1
        self.failed += not ok
        if self.on:
            frac = self.done / max(self.total, 1)
            rate = self.done / max(time.perf_counter() - self.t0, 1e-9)
            sys.stderr.write(f"\r[{'#' * int(30 * frac):<30}] {self.done}/{self.total} molecules, "
                             f"{self.failed} failed, {rate:.2f}/s")
            sys.stderr.flush()

    def close(self) -> None:
        if self.on:
            sys.stderr.write("\n")


def _dask_client(address: str):
    try:
        from dask.distributed import Client
    except ImportError:
        raise InputError("Dask is not installed; pip install ringshift[dask] (or give jobs instead)",
                         source="scheduler") from None
    try:
        return Client(address, timeout="10s")
    except Exception as exc:
        raise InputError(f"cannot reach the Dask scheduler at {address!r} ({_one_line(exc)})",
                         source="scheduler") from None


def _pool(workers: int) -> ProcessPoolExecutor:
    from ringshift import limits

    return ProcessPoolExecutor(max_workers=workers, initializer=worker_init,
                               initargs=(os.getpid(), limits.overrides()))


def _kill_workers(executor: ProcessPoolExecutor) -> None:
    """Stop a pool now: kill its processes (a running molecule is not waited for), cancel the rest."""
    for proc in list((getattr(executor, "_processes", None) or {}).values()):
        try:
            proc.kill()
        except (OSError, ValueError, AttributeError):
            pass
    executor.shutdown(wait=False, cancel_futures=True)


def _isolated(item, load_kwargs, predict_kwargs) -> str:
    ex = _pool(1)
    try:
        fut = ex.submit(work_item, item, load_kwargs, predict_kwargs)
        while not wait([fut], timeout=_POLL_S).done:    # a timeout keeps the main thread responsive to signals
            pass
        return fut.result()
    except BrokenProcessPool:
        return _record(item, ok=False, error="the worker process died on this molecule (crash or out of memory)")
    except BaseException:
        _kill_workers(ex)
        raise
    finally:
        ex.shutdown(wait=True)


def run_batch(library_path, output_jsonl, *, jobs: int = 1, scheduler: str | None = None, resume: bool = True,
              progress: bool = True, overwrite: bool = False, load_kwargs: Mapping | None = None,
              **predict_kwargs) -> BatchSummary:
    """Predict every molecule of a library into a JSON-lines file (format and rules: module notes).

    Parameters
    ----------
    library_path : path
        ``.sdf``/``.sd`` library or a SMILES file.
    output_jsonl : path
        JSON-lines output, appended to; it must be a batch output already if it exists (module notes).
        ``"-"``: standard output.
    jobs : int
        Worker processes (1 = in this process), 1 to :data:`MAX_JOBS`; lowered to :func:`usable_cores`.
    scheduler : str, optional
        Address of a Dask scheduler (e.g. ``"tcp://127.0.0.1:8786"``); replaces ``jobs``.
    resume : bool
        Skip molecules already in the output. False with an existing output needs ``overwrite``.
    progress : bool
        Progress bar on stderr when it is a terminal.
    overwrite : bool
        With ``resume=False``, start the output afresh (only a batch output is ever emptied).
    load_kwargs : mapping, optional
        Keyword arguments of :func:`ringshift.io.structures.load_structure` (charge, conformers, seed, ...).
    **predict_kwargs
        Keyword arguments of :func:`ringshift.shifts.prediction.predict` (model, currents, beta_model, ...).

    Returns
    -------
    BatchSummary
    """
    t0 = time.perf_counter()
    if isinstance(jobs, bool) or not isinstance(jobs, int) or not 1 <= jobs <= MAX_JOBS:
        raise InputError(f"expected a whole number of worker processes from 1 to {MAX_JOBS}, got {jobs!r}",
                         source="jobs")
    notes: list[str] = []
    if scheduler is None and jobs > usable_cores():
        notes.append(f"jobs lowered from {jobs} to {usable_cores()}, the cores this process may use")
        jobs = usable_cores()
    library = Path(library_path)
    if os.fspath(output_jsonl) == STDOUT:
        for note in notes:
            warnings.warn(note, OutputWarning, stacklevel=2)
        total = sum(1 for _ in iter_library(library))
        return _run(library, None, {}, total, notes, t0, jobs=jobs, scheduler=scheduler, progress=progress,
                    load_kwargs=load_kwargs, predict_kwargs=predict_kwargs)
    output = check_output_file(output_jsonl, inputs=(library,), append=True)
    with output_lock(output):
        remove_stale_temporaries(output)
        check_output_file(output, inputs=(library,), append=True)         # again, under the lock
        found = read_batch_output(output)                                   # refuses a file that is not ours
        if (found.lines or found.partial) and not resume and not overwrite:
            raise OutputError(f"{output}: already exists; resume it or allow overwriting")
        created = not os.path.lexists(output)        # a stopped run that wrote nothing leaves no file
        keys = {} if not resume else {i: n for i, n in reversed(found.keys)}
        total = _check_library(library, keys, output)
        if not resume:
            start_afresh(output)
            done: dict[int, str] = {}
        else:
            done, tidied = tidy_for_resume(output, found)
            notes += tidied
        for note in notes:
            warnings.warn(note, OutputWarning, stacklevel=2)
        return _run(library, output, done, total, notes, t0, jobs=jobs, scheduler=scheduler, progress=progress,
                    load_kwargs=load_kwargs, predict_kwargs=predict_kwargs, created=created)


def _check_library(library: Path, done: Mapping[int, str], output: Path) -> int:
    """Count the library's molecules; refuse an output whose records name other molecules (before any work)."""
    total = 0
    for item in iter_library(library):
        total += 1
        if item.index in done and done[item.index] != item.name:
            raise InputError(f"output record {item.index} is {done[item.index]!r} but library molecule "
                             f"{item.index} is {item.name!r}: the output belongs to another library",
                             source=str(output))
    extra = sorted(i for i in done if i >= total)
    if extra:
        raise InputError(f"output record {extra[0]} is beyond the library's {total} molecules: the output "
                         "belongs to another library", source=str(output))
    return total


def _run(library: Path, output: Path | None, done: Mapping[int, str], total: int, notes: list[str], t0: float, *,
         jobs: int, scheduler, progress: bool, load_kwargs, predict_kwargs, created: bool = False) -> BatchSummary:
    """Compute the molecules not yet done and append their records (standard output when ``output`` is None);
    an output that this run ``created`` is removed again when a stop leaves it empty."""
    def pending() -> Iterator[LibraryItem]:
        for item in iter_library(library):
            if item.index not in done:
                yield item

    bar = _Progress(total - len(done), progress)
    failed = computed = 0
    try:    # a file unbuffered: a record that cannot be written whole is cut off again, nothing left to flush
        out: Any = sys.stdout if output is None else output.open("ab", buffering=0)
    except OSError as exc:
        raise os_error(output, exc) from None
    try:
        def emit(line: str) -> None:
            nonlocal failed, computed
            if output is None:
                try:
                    out.write(line + "\n")
                    out.flush()
                except OSError as exc:
                    raise os_error("standard output", exc) from None
            else:
                _append_record(out, (line + "\n").encode("utf-8"), output)
            ok = json.loads(line)["ok"]
            computed += 1
            failed += not ok
            bar.step(ok)

        try:
            if scheduler is None and jobs == 1:
                for item in pending():
                    emit(work_item(item, load_kwargs, predict_kwargs))
            else:
                _parallel(pending(), emit, jobs, scheduler, load_kwargs, predict_kwargs)
        finally:
            bar.close()
    except BaseException as exc:       # Ctrl-C, SIGTERM, disk full: what is written is complete and resumable
        if output is not None and created and not done and not computed:
            out.close()
            with contextlib.suppress(OSError):
                output.unlink()
        elif output is not None and isinstance(exc, KeyboardInterrupt):
            exc.detail = (f"{output} keeps the {len(done) + computed} complete records written so far; run the "  # type: ignore[attr-defined]
                          "same command again to resume")
        raise
    finally:
        if output is not None:
            out.close()
    return BatchSummary(total, computed, len(done), failed, str(output or STDOUT), time.perf_counter() - t0,
                        tuple(notes))


def _append_record(fh, data: bytes, output: Path) -> None:
    """Append one record to the unbuffered output ``fh``; on an OS error (disk full, file size limit) the part
    that was written is truncated away, so the file keeps complete records only, and the error names ``output``."""
    mark = fh.tell()
    try:
        view = memoryview(data)
        while view:
            view = view[fh.write(view):]
    except OSError as exc:
        with contextlib.suppress(OSError):
            os.ftruncate(fh.fileno(), mark)
        raise os_error(output, exc) from None


def _parallel(items: Iterator[LibraryItem], emit, jobs, scheduler, load_kwargs, predict_kwargs) -> None:
    """Keep at most 4 × workers molecules in flight; write results in library order."""
    client = _dask_client(scheduler) if scheduler is not None else None
    workers = len(client.scheduler_info().get("workers", {})) or 1 if client is not None else jobs
    window = 4 * workers
    buffer: dict[int, str] = {}
    order: list[LibraryItem] = []      # submitted, not yet written, in library order
    executor = None if client is not None else _pool(jobs)

    def submit(item):
        if client is not None:
            return client.submit(work_item, item, load_kwargs, predict_kwargs, pure=False)
        assert executor is not None, "a process pool runs whenever there is no Dask client"
        return executor.submit(work_item, item, load_kwargs, predict_kwargs)

    def flush() -> None:
        while order and order[0].index in buffer:
            emit(buffer.pop(order.pop(0).index))

    try:
        futures: dict[Any, LibraryItem] = {}  # concurrent.futures or Dask futures
        source = iter(items)
        while True:
            for item in itertools.islice(source, max(0, window - len(futures))):
                order.append(item)
                futures[submit(item)] = item
            if not futures:
                break
            if client is not None:
                from dask.distributed import wait as dask_wait
                finished = dask_wait(list(futures), return_when="FIRST_COMPLETED").done
            else:   # a timeout keeps the main thread responsive to Ctrl-C and SIGTERM (ringshift._signals)
                finished = wait(list(futures), timeout=_POLL_S, return_when=FIRST_COMPLETED).done
            broken = []
            for fut in finished:
                item = futures.pop(fut)
                try:
                    buffer[item.index] = fut.result()
                except BrokenProcessPool:
                    broken.append(item)
                except Exception as exc:      # a Dask worker lost, a pickling problem, ...
                    buffer[item.index] = _record(item, ok=False, error=_one_line(exc))
            if broken:                        # the pool is dead: isolate everything in flight, then go on
                broken += list(futures.values())
                futures.clear()
                assert executor is not None, "BrokenProcessPool comes from the local process pool"
                executor.shutdown(wait=False, cancel_futures=True)
                for item in sorted(broken, key=lambda it: it.index):
                    buffer[item.index] = _isolated(item, load_kwargs, predict_kwargs)
                executor = _pool(jobs)
            flush()
    except BaseException:
        if executor is not None:            # interrupted or failed: do not wait for running molecules
            _kill_workers(executor)
            executor = None
        raise
    finally:
        if executor is not None:
            executor.shutdown(wait=True, cancel_futures=True)
        if client is not None:
            client.close()
