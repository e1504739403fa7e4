"""Library runs (:func:`run_batch`): one prediction per molecule, in parallel, resumable, as JSON lines.

Output. One JSON object per line and molecule, in library order: ``{"ringshift_result": "batch_record",
"name", "index", "source", "schema_version", "ok": true, "result": <prediction_to_dict>}`` or the same with
``"ok": false, "error": "<one line>"``. A failing molecule never stops
the batch. Lines are appended and flushed one by one, so an interruption loses at most the molecules in
flight; out-of-order results from the workers wait in a buffer until their turn.
Resume. Molecules whose (index, name) is already in the output are skipped; a cut-off last line is
removed first. A record whose name differs from the library's molecule at that index means the output
belongs to another library: an error.
Library. ``.sdf``/``.sd``: one molecule per record (read as a stream, name from the title line). Any
other file: one SMILES per line with an optional name after it (whitespace-separated); blank lines and
lines starting with ``#`` are skipped.
Workers. ``jobs`` processes (:class:`concurrent.futures.ProcessPoolExecutor`), or a Dask cluster at
``scheduler`` (``pip install ringshift[dask]``). A worker that dies takes its molecules with it; those
are retried one by one in fresh single-worker pools so only the culprit is reported.
"""

from __future__ import annotations

import dataclasses
import itertools
import json
import sys
import tempfile
import time
from collections.abc import Iterator, Mapping
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ringshift.errors import InputError, OutputError
from ringshift.io.libraries import LibraryItem, iter_library
from ringshift.io.structures import load_structure
from ringshift.reporting.json import SCHEMA_VERSION

__all__ = ['BatchSummary', 'run_batch', 'work_item']



@dataclass(frozen=True)
class BatchSummary:
    """What a :func:`run_batch` call did: molecules in the library, computed now, skipped as already done,
    failed (of those computed now), the output path and the wall time in s."""

    n_total: int
    n_computed: int
    n_skipped: int
    n_failed: int
    output: str
    elapsed_s: float


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


def _done_records(output: Path) -> dict[int, str]:
    """(index → name) already in the output; cuts off a last line without its newline."""
    if not output.exists():
        return {}
    done: dict[int, str] = {}
    with output.open("rb+") as fh:
        data = fh.read()
        keep = data.rfind(b"\n") + 1
        if keep < len(data):
            fh.truncate(keep)
    for line_no, raw in enumerate(data[:keep].splitlines(), start=1):
        try:
            rec = json.loads(raw)
            done[int(rec["index"])] = str(rec["name"])
        except (ValueError, KeyError, TypeError):
            raise InputError(f"line {line_no} is not a batch record (JSON with index and name); is this the "
                             f"output of a ringshift batch?", source=str(output)) from None
    return done


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


def _isolated(item, load_kwargs, predict_kwargs) -> str:
    try:
        with ProcessPoolExecutor(max_workers=1) as ex:
            return ex.submit(work_item, item, load_kwargs, predict_kwargs).result()
    except BrokenProcessPool:
        return _record(item, ok=False, error="the worker process died on this molecule (crash or out of memory)")


def run_batch(library_path, output_jsonl, *, jobs: int = 1, scheduler: str | None = None, resume: bool = True,
              progress: bool = True, overwrite: bool = False, load_kwargs: Mapping | None = None,
              **predict_kwargs) -> BatchSummary:
    """Predict every molecule of a library into a JSON-lines file (format and rules: module notes).

    Parameters
    ----------
    library_path : path
        ``.sdf``/``.sd`` library or a SMILES file.
    output_jsonl : path
        JSON-lines output, appended to.
    jobs : int
        Worker processes (1 = in this process).
    scheduler : str, optional
        Address of a Dask scheduler (e.g. ``"tcp://127.0.0.1:8786"``); replaces ``jobs``.
    resume : bool
        Skip molecules already in the output. False with an existing output needs ``overwrite``.
    progress : bool
        Progress bar on stderr when it is a terminal.
    overwrite : bool
        With ``resume=False``, start the output afresh.
    load_kwargs : mapping, optional
        Keyword arguments of :func:`ringshift.io.structures.load_structure` (charge, conformers, seed, ...).
    **predict_kwargs
        Keyword arguments of :func:`ringshift.shifts.prediction.predict` (model, currents, beta_model, ...).

    Returns
    -------
    BatchSummary
    """
    t0 = time.perf_counter()
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"expected a positive integer, got {jobs!r}", source="jobs")
    library, output = Path(library_path), Path(output_jsonl)
    if not output.parent.is_dir():
        raise OutputError(f"{output}: folder {output.parent} does not exist")
    if output.exists() and not resume:
        if not overwrite:
            raise OutputError(f"{output}: already exists; resume it or allow overwriting")
        output.unlink()
    total = sum(1 for _ in iter_library(library))
    done = _done_records(output) if resume else {}

    def pending() -> Iterator[LibraryItem]:
        for item in iter_library(library):
            if item.index in done:
                if done[item.index] != item.name:
                    raise InputError(f"output record {item.index} is {done[item.index]!r} but library molecule "
                                     f"{item.index} is {item.name!r}: the output belongs to another library",
                                     source=str(output))
                continue
            yield item

    bar = _Progress(total - len(done), progress)
    failed = computed = 0
    with output.open("a", encoding="utf-8") as out:
        def emit(line: str) -> None:
            nonlocal failed, computed
            out.write(line + "\n")
            out.flush()
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
    return BatchSummary(total, computed, len(done), failed, str(output), time.perf_counter() - t0)


def _parallel(items: Iterator[LibraryItem], emit, jobs, scheduler, load_kwargs, predict_kwargs) -> None:
    """Keep at most 4 × workers molecules in flight; write results in library order."""
    client = _dask_client(scheduler) if scheduler is not None else None
    workers = len(client.scheduler_info().get("workers", {})) or 1 if client is not None else jobs
    window = 4 * workers
    buffer: dict[int, str] = {}
    order: list[LibraryItem] = []      # submitted, not yet written, in library order
    executor = None if client is not None else ProcessPoolExecutor(max_workers=jobs)

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
            else:
                finished = wait(list(futures), return_when=FIRST_COMPLETED).done
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
                executor = ProcessPoolExecutor(max_workers=jobs)
            flush()
    finally:
        if executor is not None:
            executor.shutdown(wait=True, cancel_futures=True)
        if client is not None:
            client.close()
