"""Streams of structures and bulk runs: trajectory frames, libraries, and library runs to JSON lines.

Trajectories (one molecule, many frames; used by :mod:`ringshift.ensemble`).
`iter_xyz_frames` and `iter_sdf_records` read a multi-frame XYZ or multi-record SD
file one frame at a time (never the whole file) for :func:`ringshift.ensemble.predict_trajectory`.
Every frame must list the atoms of the first frame in the same order, else :class:`InputError` naming
the frame. Rule for damaged files: an XYZ frame cut short by the end of the file (fewer atom lines than
announced, or a last line without x y z) and an SD record that RDKit cannot parse are skipped with a
:class:`TrajectoryWarning` naming the frame/record number, and the remaining frames are used (an SD
record ends at its ``$$$$`` line, so the next record is safe to read). Anything malformed before the
last XYZ frame is an error: the frame boundaries after it cannot be trusted. ``strict=True`` makes the
skipped cases errors too.

Energies. XYZ comment lines: ``energy=-123.4``, ``E: -123.4``, ``energy_hartree=-0.5``, or a bare number,
optionally followed by a unit word (``kcal/mol``, ``kj/mol``, ``hartree``/``Eh``/``au``, ``ev``); without
a unit the reader's ``energy_unit`` applies (default kcal/mol; xtb and ORCA trajectories write Hartree
without saying so, ASE's extended XYZ writes eV: pass ``energy_unit``). SD records: the fields of
:data:`ringshift.structure.ENERGY_PROPERTIES`. Energies become Boltzmann weights
p_k ∝ exp(−E_k / RT) (CODATA R via SciPy).

Libraries (many molecules; :func:`run_batch`), one prediction per molecule, in parallel, resumable.

Output. One JSON object per line and molecule, in library order:
``{"name", "index", "source", "ok": true, "result": <prediction_to_dict>}`` or
``{"name", "index", "source", "ok": false, "error": "<one line>"}``. A failing molecule never stops the
batch. Lines are appended and flushed one by one, so an interruption loses at most the molecules in
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
import math
import re
import sys
import tempfile
import time
import warnings
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from pathlib import Path
from typing import Iterator, Mapping

import numpy as np
from rdkit import Chem, rdBase
from scipy import constants as _sc

from ringshift.errors import InputError, OutputError, RingshiftWarning
from ringshift.limits import check_coordinates
from ringshift.structure import ENERGY_PROPERTIES, Structure, load_structure

__all__ = ["TrajectoryWarning", "Frame", "FrameStream", "iter_xyz_frames", "iter_sdf_records", "parse_energy",
           "ENERGY_UNITS", "LibraryItem", "BatchSummary", "iter_library", "run_batch", "work_item"]

_SDF = (".sdf", ".sd")
_HARTREE_KCAL = _sc.physical_constants["Hartree energy"][0] * _sc.N_A / 4184.0   # CODATA via SciPy
#: Energy unit words (lower case) and their factor to kcal/mol.
ENERGY_UNITS: dict[str, float] = {"kcal/mol": 1.0, "kcal": 1.0, "kj/mol": 1.0 / 4.184, "kj": 1.0 / 4.184,
                                  "hartree": _HARTREE_KCAL, "eh": _HARTREE_KCAL, "au": _HARTREE_KCAL,
                                  "ev": _sc.e * _sc.N_A / 4184.0}   # CODATA via SciPy
_NUM = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eEdD][-+]?\d+)?"
_UNIT = r"(kcal/mol|kcal|kj/mol|kj|hartree|eh|au|ev)\b"
_KEYED = re.compile(rf"\b(?:energy|e(?=(?:_\w+)?\s*[=:]|\s+[-+.\d]))(?:_(kcal_mol|kj_mol|hartree|eh|ev))?\s*[=:]?\s*({_NUM})\s*(?:{_UNIT})?",
                    re.IGNORECASE)
_BARE = re.compile(rf"^\s*({_NUM})\s*(?:{_UNIT})?\s*$", re.IGNORECASE)
_SUFFIX_UNIT = {"kcal_mol": "kcal/mol", "kj_mol": "kj/mol", "hartree": "hartree", "eh": "eh", "ev": "ev"}
_PT = Chem.GetPeriodicTable()


class TrajectoryWarning(RingshiftWarning):
    """A trajectory frame or record was skipped (truncated, unreadable), or weights look odd."""


@dataclass(frozen=True)
class Frame:
    """One frame: 1-based ``number`` in its file, ``coords`` (n_atoms, 3) Å, energy in kcal/mol or None."""

    number: int
    coords: np.ndarray
    energy_kcal_mol: float | None = None


def parse_energy(comment: str, default_unit: str = "kcal/mol") -> float | None:
    """Energy (kcal/mol) in an XYZ comment line, or None. Formats: module docstring."""
    m = _BARE.match(comment) or _KEYED.search(comment)
    if m is None:
        return None
    groups = m.groups()
    if m.re is _BARE:
        number, unit = groups[0], groups[1]
    else:
        number, unit = groups[1], groups[2] or (_SUFFIX_UNIT.get(groups[0].lower()) if groups[0] else None)
    value = float(number.replace("d", "e").replace("D", "e"))
    return value * ENERGY_UNITS[(unit or default_unit).lower()]


class FrameStream:
    """Iterator over the frames of one file; ``skipped`` lists (number, reason) of skipped frames and
    ``n_seen`` counts every frame met so far (used or skipped). Made by :func:`iter_xyz_frames` /
    :func:`iter_sdf_records`; iterate once."""

    def __init__(self, path: Path, kind: str, gen_factory, first_text_fn, strict: bool):
        self.path, self.kind, self.strict = path, kind, strict
        self.skipped: list[tuple[int, str]] = []
        self.n_seen = 0
        self._gen = gen_factory(self)
        self._first_text = first_text_fn

    def __iter__(self) -> Iterator[Frame]:
        return self

    def __next__(self) -> Frame:
        try:
            return next(self._gen)
        except UnicodeDecodeError as exc:
            raise InputError(f"is not UTF-8 text (byte {exc.start}); expected a text XYZ/SD file",
                             source=str(self.path)) from None

    def _skip(self, number: int, reason: str, where: str) -> None:
        if self.strict:
            raise InputError(reason, source=where)
        self.skipped.append((number, reason))
        warnings.warn(TrajectoryWarning(f"{where}: {reason}; skipped, the other frames are used"), stacklevel=3)

    def template(self, *, charge: int | None = None) -> Structure:
        """The first frame as a one-conformer :class:`Structure` (bonds perceived by
        :func:`ringshift.structure.load_structure`), named after the file."""
        try:
            text = self._first_text()
        except UnicodeDecodeError as exc:
            raise InputError(f"is not UTF-8 text (byte {exc.start}); expected a text XYZ/SD file",
                             source=str(self.path)) from None
        suffix = ".xyz" if self.kind == "xyz" else ".sdf"
        with tempfile.TemporaryDirectory() as tmp:
            p = Path(tmp) / f"{self.path.stem}{suffix}"
            p.write_text(text, encoding="utf-8")
            try:
                s = load_structure(str(p), charge=charge)
            except InputError as exc:
                raise InputError(str(exc).replace(str(p), str(self.path))) from None
        if s.provenance.get("hydrogens_added"):
            raise InputError("the first record lacks explicit hydrogens; trajectory records must carry every "
                             "atom (write them with all H)", source=str(self.path))
        return dataclasses.replace(s, source=str(self.path), provenance=dict(s.provenance, trajectory=str(self.path)))


def _open(path) -> Path:
    path = Path(path)
    if not path.is_file():
        raise InputError("file not found", source=str(path))
    return path


def iter_xyz_frames(path, *, energy_unit: str = "kcal/mol", strict: bool = False) -> FrameStream:
    """Stream the frames of a (multi-frame) XYZ file.

    Parameters
    ----------
    path : str or os.PathLike
    energy_unit : str
        Unit of comment-line energies that name none (:data:`ENERGY_UNITS`).
    strict : bool
        Raise instead of skipping a truncated final frame.

    Returns
    -------
    FrameStream
        Yields :class:`Frame` with coords (n_atoms, 3) float64 Å; damaged-file rule in the module notes.
    """
    path = _open(path)
    if str(energy_unit).lower() not in ENERGY_UNITS:
        raise InputError(f"unknown energy unit {energy_unit!r}; expected one of {', '.join(ENERGY_UNITS)}",
                         source="energy_unit")

    def first_text():
        with path.open(encoding="utf-8") as fh:
            head = fh.readline()
            parts = head.split()
            if not parts:
                raise InputError("file is empty or starts with a blank line; expected an atom count",
                                 source=f"{path}:1")
            if len(parts) != 1 or not re.fullmatch(r"[0-9]+", parts[0]):
                raise InputError(f"expected the atom count of frame 1 (one positive integer), got "
                                 f"{head.strip()[:40]!r}", source=f"{path}:1")
            return head + "".join(itertools.islice(fh, int(parts[0]) + 1))

    def gen(stream: FrameStream):
        ref_tokens = ref_symbols = None
        line_no = 0
        with path.open(encoding="utf-8") as fh:
            while head := fh.readline():
                line_no += 1
                if not head.strip():
                    continue
                number, start = stream.n_seen + 1, line_no
                stream.n_seen = number
                parts = head.split()
                if len(parts) != 1 or not re.fullmatch(r"[0-9]+", parts[0]) or int(parts[0]) < 1:
                    raise InputError(f"expected the atom count of frame {number} (one positive integer), got "
                                     f"{head.strip()[:40]!r}", source=f"{path}:{line_no}")
                n = int(parts[0])
                if ref_symbols is not None and n != len(ref_symbols):
                    raise InputError(f"frame {number} has {n} atoms, frame 1 has {len(ref_symbols)}; every frame "
                                     f"needs the same atoms in the same order", source=f"{path}:{line_no}")
                comment = fh.readline()
                lines = [ln for ln in (fh.readline() for _ in range(n)) if ln]
                line_no += 1 + len(lines)
                rows = [ln.split() for ln in lines]
                if not comment or len(lines) < n or (len(rows[-1]) < 4 and _at_eof(fh)):
                    stream._skip(number, f"frame {number} is truncated (announces {n} atoms, the file ends after "
                                 f"{len(lines) - (1 if rows and len(rows[-1]) < 4 else 0)} complete atom lines)", f"{path}:{start}")
                    return
                tokens = [r[0] for r in rows]
                try:
                    xyz = np.array([r[1:4] for r in rows], dtype=np.float64)
                    if xyz.shape != (n, 3):
                        raise ValueError
                except ValueError:
                    bad = next(k for k, r in enumerate(rows) if len(r) < 4 or not _floats(r[1:4]))
                    raise InputError(f"expected 'element x y z' (atom {bad + 1} of {n}, frame {number}), got "
                                     f"{lines[bad].strip()[:40]!r}", source=f"{path}:{start + 2 + bad}") from None
                if not np.all(np.isfinite(xyz)):
                    raise InputError(f"non-finite coordinate in frame {number}", source=f"{path}:{start}")
                if ref_tokens is None:
                    ref_tokens, ref_symbols = tokens, [_symbol(t, f"{path}:{start + 2 + k}") for k, t in enumerate(tokens)]
                elif tokens != ref_tokens and [_symbol(t, str(path)) for t in tokens] != ref_symbols:
                    k = next(k for k, (a, b) in enumerate(zip(tokens, ref_tokens)) if _symbol(a, str(path)) != _symbol(b, str(path)))
                    raise InputError(f"frame {number} does not list the atoms of frame 1 in the same order (atom "
                                     f"{k + 1} is {tokens[k]}, frame 1 has {ref_tokens[k]})", source=f"{path}:{start + 2 + k}")
                check_coordinates(xyz[None], ref_symbols, f"{path}:{start} (frame {number})")
                yield Frame(number, xyz, parse_energy(comment.strip(), energy_unit))

    return FrameStream(path, "xyz", gen, first_text, strict)


def _at_eof(fh) -> bool:
    pos = fh.tell()
    if fh.readline() == "":
        return True
    fh.seek(pos)
    return False


def _floats(items) -> bool:
    try:
        [float(v) for v in items]
        return True
    except ValueError:
        return False


def _symbol(token: str, where: str) -> str:
    if re.fullmatch(r"[0-9]+", token):
        z = int(token)
        if 1 <= z <= 118:
            return _PT.GetElementSymbol(z)
    sym = token.capitalize()
    try:
        if _PT.GetAtomicNumber(sym) > 0:
            return sym
    except RuntimeError:
        pass
    raise InputError(f"unknown element {token!r}", source=where)


def _sd_records(path: Path) -> Iterator[tuple[int, int, str, bool]]:
    """(record number, first line, text, complete) of each SD record, read line by line."""
    with path.open(encoding="utf-8") as fh:
        buf, start, number, line_no = [], 1, 0, 0
        for line in fh:
            line_no += 1
            if line.rstrip("\r\n").strip() == "$$$$":
                number += 1
                yield number, start, "".join(buf), True
                buf, start = [], line_no + 1
            else:
                buf.append(line)
        if "".join(buf).strip():
            yield number + 1, start, "".join(buf), False


def _sd_energy(mol: Chem.Mol) -> float | None:
    names = {p.lower(): p for p in mol.GetPropNames()}
    for key, factor in ENERGY_PROPERTIES:
        if key in names:
            try:
                value = float(mol.GetProp(names[key])) * factor
            except ValueError:
                return None
            return value if math.isfinite(value) else None
    return None


def iter_sdf_records(path, *, strict: bool = False) -> FrameStream:
    """Stream the records of a multi-record SD file as frames.

    Records must carry every atom (hydrogens included) in the order of record 1. A record RDKit cannot
    parse (or a final record without ``$$$$`` that does not parse) is skipped with a
    :class:`TrajectoryWarning` (an error with ``strict``). Energies from the SD fields of
    :data:`ringshift.structure.ENERGY_PROPERTIES`, converted to kcal/mol.

    Returns
    -------
    FrameStream
        Yields :class:`Frame` with coords (n_atoms, 3) float64 Å.
    """
    path = _open(path)

    def first_text():
        for _, _, text, _ in _sd_records(path):
            return text + "$$$$\n"
        raise InputError("no SD record found", source=str(path))

    def gen(stream: FrameStream):
        ref = None
        for number, start, text, complete in _sd_records(path):
            stream.n_seen = number
            where = f"{path}:{start}"
            with rdBase.BlockLogs():
                mol = Chem.MolFromMolBlock(text, sanitize=False, removeHs=False, strictParsing=True)
            if mol is None or mol.GetNumAtoms() == 0 or mol.GetNumConformers() == 0:
                stream._skip(number, f"record {number} is not a readable MOL block"
                             + ("" if complete else " (the file ends inside it)"), where)
                continue
            for prop in re.finditer(r"^>\s*.*?<([^>]+)>.*\n(.*)$", text.split("M  END", 1)[-1], re.MULTILINE):
                mol.SetProp(prop.group(1), prop.group(2).strip())
            elems = [a.GetAtomicNum() for a in mol.GetAtoms()]
            if ref is None:
                ref = elems
            elif elems != ref:
                what = (f"has {len(elems)} atoms, record 1 has {len(ref)}" if len(elems) != len(ref) else
                        "does not list the atoms of record 1 in the same order")
                raise InputError(f"record {number} {what}; every record needs the same atoms in the same order",
                                 source=where)
            xyz = np.ascontiguousarray(mol.GetConformer().GetPositions(), dtype=np.float64)
            if not np.all(np.isfinite(xyz)):
                raise InputError(f"non-finite coordinate in record {number}", source=where)
            check_coordinates(xyz[None], [a.GetSymbol() for a in mol.GetAtoms()], f"{where} (record {number})")
            yield Frame(number, xyz, _sd_energy(mol))

    return FrameStream(path, "sdf", gen, first_text, strict)


# ----------------------------------------------------------------------------------------------------
# Libraries
# ----------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class LibraryItem:
    """One molecule of a library: 0-based ``index``, ``name``, ``kind`` ("smiles" or "sdf"), ``text`` (the
    SMILES or the SD record) and ``source`` ("path:line")."""

    index: int
    name: str
    kind: str
    text: str
    source: str


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


def iter_library(path) -> Iterator[LibraryItem]:
    """Stream the molecules of an SD or SMILES library (formats: module notes)."""
    try:
        yield from _iter_library(path)
    except UnicodeDecodeError as exc:
        raise InputError(f"is not UTF-8 text (byte {exc.start}); expected an SD or SMILES file",
                         source=str(path)) from None


def _iter_library(path) -> Iterator[LibraryItem]:
    path = Path(path)
    if not path.is_file():
        raise InputError("library file not found", source=str(path))
    with path.open(encoding="utf-8") as fh:
        if path.suffix.lower() in _SDF:
            index = 0
            for _, start, text, _ in _sd_records(path):
                if text.strip():
                    title = text.splitlines()[0].strip()
                    body = text if text.endswith("\n") else text + "\n"
                    yield LibraryItem(index, title or f"record {index + 1}", "sdf", body + "$$$$\n", f"{path}:{start}")
                    index += 1
            return
        index = 0
        for line_no, line in enumerate(fh, start=1):
            body = line.strip()
            if not body or body.startswith("#"):      # whole-line comments only: '#' is a SMILES triple bond
                continue
            smiles, name = (body.split(None, 1) + [""])[:2]
            name = name.strip()
            yield LibraryItem(index, name or smiles, "smiles", smiles, f"{path}:{line_no}")
            index += 1


def _one_line(exc: BaseException) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text if isinstance(exc, InputError) else f"internal error ({type(exc).__name__}): {text}"


def work_item(item: LibraryItem, load_kwargs: Mapping | None = None, predict_kwargs: Mapping | None = None) -> str:
    """Predict one library molecule; returns its JSON line (never raises for a bad molecule)."""
    from ringshift.output import prediction_to_dict
    from ringshift.predict import predict

    head = {"name": item.name, "index": item.index, "source": item.source}
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
        return json.dumps(head | {"ok": True, "result": result}, ensure_ascii=False, allow_nan=False)
    except Exception as exc:                  # one molecule's failure is its record, not the batch's end
        return json.dumps(head | {"ok": False, "error": _one_line(exc)}, ensure_ascii=False)


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
        return json.dumps({"name": item.name, "index": item.index, "source": item.source, "ok": False,
                           "error": "the worker process died on this molecule (crash or out of memory)"})


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
        Keyword arguments of :func:`ringshift.structure.load_structure` (charge, conformers, seed, ...).
    **predict_kwargs
        Keyword arguments of :func:`ringshift.predict.predict` (model, currents, beta_model, ...).

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
        return executor.submit(work_item, item, load_kwargs, predict_kwargs)

    def flush() -> None:
        while order and order[0].index in buffer:
            emit(buffer.pop(order.pop(0).index))

    try:
        futures = {}
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
                    buffer[item.index] = json.dumps({"name": item.name, "index": item.index, "source": item.source,
                                                     "ok": False, "error": _one_line(exc)})
            if broken:                        # the pool is dead: isolate everything in flight, then go on
                broken += list(futures.values())
                futures.clear()
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
