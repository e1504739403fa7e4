"""Documented limits of ringshift's inputs, and the checks that enforce them.

The readers behind :func:`ringshift.io.structures.load_structure` (SMILES, MOL/SDF, XYZ), the peak-list
and JCAMP-DX readers (:mod:`ringshift.io.peak_tables`, :mod:`ringshift.io.jcampdx`) and user reference-shift
tables (:mod:`ringshift.shifts.reference`) apply these limits before they do expensive work; a file or string
beyond a limit raises :class:`~ringshift.errors.InputError` with a one-line message naming the
input, the limit and what to do. The values are generous for real molecules and 1D ¹H spectra
(side-chain-complete porphyrin nanorings are the largest molecules in view, hence 5000 atoms) and
small enough that a broken or hostile file cannot exhaust memory or time.

Safety. Inputs are only ever parsed as text (RDKit's SMILES and MOL parsers, and ringshift's own
XYZ, CSV and JCAMP-DX readers): nothing read from a file or the command line is executed,
evaluated (no ``eval``/``exec``) or deserialised with ``pickle``, ``marshal`` or ``yaml``. Binary
files (with NUL bytes) are refused before parsing.

===========================  ==============  =========================================================
limit                        value           applies to
===========================  ==============  =========================================================
MAX_FILE_BYTES               200 MiB         every input file (structures, peak lists, spectra)
MAX_LINE_CHARS               100 000         every line of a text input file
MAX_SMILES_CHARS             10 000          a SMILES given on the command line / to load_structure
MAX_ATOMS                    5 000           atoms of one molecule, hydrogens included
MAX_RECORDS                  5 000           SD records or XYZ frames of one ensemble file
MAX_PEAKS                    10 000          rows of a peak table, JCAMP peaks, picked peaks
MAX_SPECTRUM_POINTS          4 194 304       NPOINTS of a JCAMP-DX spectrum (2**22)
MAX_ABS_COORDINATE_A         10 000 Å        every coordinate (larger: wrong units or a crystal cell)
MIN_EXTENT_A                 0.001 Å         spread of a molecule of ≥ 2 atoms (smaller: all zero?)
MIN_ATOM_DISTANCE_A          0.5 Å           any two atoms (closer: duplicated or overlapping atoms)
===========================  ==============  =========================================================

Memory and time. Before conformer generation (:func:`estimate_conformers`: atoms and candidate geometries),
the Hückel–London step (:func:`estimate_predict`) and a shielding map (:func:`estimate_map`) the cost is
estimated from sizes and compared with the limits (:func:`check_estimate`): :data:`DEFAULT_MEMORY_MB` and
:data:`DEFAULT_TIME_S`, or the environment variables :data:`MEMORY_ENV` / :data:`TIME_ENV`, or the command-line
options :data:`MEMORY_OPTION` / :data:`TIME_OPTION` (:func:`set_limits`; the option wins). Over a limit, the
step is refused with one line naming the option, before any output is written. Steps estimated at more than
:data:`PROGRESS_AFTER_S` show a progress line on stderr when it is a terminal (:class:`progress`).

The shortest real interatomic distance is that of H₂, 0.741 Å (CRC Handbook of Chemistry and
Physics, bond lengths table; from memory), so 0.5 Å cannot refuse a real structure.
"""

from __future__ import annotations

import os
from typing import Any

import numpy as np

from ringshift.errors import InputError

__all__ = ["MAX_FILE_BYTES", "MAX_LINE_CHARS", "MAX_SMILES_CHARS", "MAX_ATOMS", "MAX_RECORDS", "MAX_PEAKS",
           "MAX_SPECTRUM_POINTS", "MAX_ABS_COORDINATE_A", "MIN_EXTENT_A", "MIN_ATOM_DISTANCE_A",
           "check_file_size", "read_text_bytes", "read_text", "check_lines", "check_count", "check_coordinates",
           "DEFAULT_MEMORY_MB", "MEMORY_ENV", "DEFAULT_TIME_S", "TIME_ENV", "Estimate", "estimate_predict",
           "estimate_map", "estimate_conformers", "check_estimate", "progress", "set_limits", "MEMORY_OPTION",
           "TIME_OPTION", "current_limits", "overrides", "note"]

MAX_FILE_BYTES: int = 200 * 2**20
MAX_LINE_CHARS: int = 100_000
MAX_SMILES_CHARS: int = 10_000
MAX_ATOMS: int = 5_000
MAX_RECORDS: int = 5_000
MAX_PEAKS: int = 10_000
MAX_SPECTRUM_POINTS: int = 2**22
MAX_ABS_COORDINATE_A: float = 1.0e4
MIN_EXTENT_A: float = 1.0e-3
MIN_ATOM_DISTANCE_A: float = 0.5


def check_file_size(path: str | os.PathLike, what: str) -> None:
    """Raise InputError if ``path`` is larger than :data:`MAX_FILE_BYTES` (``what``: the expected kind
    of file, for the message). Missing files are left to the reader."""
    name = os.fspath(path)
    try:
        size = os.path.getsize(name)
    except OSError:
        return
    if size > MAX_FILE_BYTES:
        raise InputError(f"file of {size} bytes exceeds the limit of {MAX_FILE_BYTES} bytes "
                         f"({MAX_FILE_BYTES / 2**20:g} MiB); expected {what}", name)


def read_text_bytes(path: str | os.PathLike, what: str) -> bytes:
    """The bytes of a text input file, after the size limit and a binary-content check.

    Parameters
    ----------
    path : str or os.PathLike
    what : str
        The kind of file expected ("a peak list or spectrum", "an XYZ file", ...), for messages.

    Returns
    -------
    bytes
        File content (not yet decoded).

    Raises
    ------
    InputError
        Missing file, a folder, unreadable, larger than :data:`MAX_FILE_BYTES`, or holding NUL bytes
        (a binary file).
    """
    name = os.fspath(path)
    check_file_size(name, what)
    try:
        with open(name, "rb") as handle:
            # read in blocks: a single read(MAX + 1) makes CPython allocate the whole 200 MiB buffer up front
            blocks, total = [], 0
            while total <= MAX_FILE_BYTES:
                block = handle.read(1 << 20)
                if not block:
                    break
                blocks.append(block)
                total += len(block)
            raw = b"".join(blocks)
    except FileNotFoundError:
        raise InputError("file not found", name) from None
    except IsADirectoryError:
        raise InputError(f"is a folder; expected {what}", name) from None
    except OSError as exc:
        raise InputError(f"cannot be read ({exc.strerror or exc})", name) from None
    if len(raw) > MAX_FILE_BYTES:       # grew while being read, or a device without a size
        raise InputError(f"more than {MAX_FILE_BYTES // 2**20} MiB; expected {what}", name)
    if b"\x00" in raw:
        raise InputError(f"binary file (NUL bytes); expected {what} as text", name)
    return raw


def read_text(path: str | os.PathLike, what: str) -> str:
    """UTF-8 text of an input file (BOM stripped): :func:`read_text_bytes`, decoding, :func:`check_lines`.

    Raises InputError naming ``path:line`` of the first byte that is not UTF-8, besides the errors of
    :func:`read_text_bytes` and :func:`check_lines`.
    """
    raw = read_text_bytes(path, what)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise InputError(f"byte 0x{raw[exc.start]:02x} is not UTF-8 text; expected {what} (a binary file, or "
                         "another encoding?)", f"{os.fspath(path)}:{line}") from None
    check_lines(text, os.fspath(path))
    return text


def check_lines(text: str, source: str) -> None:
    """Raise InputError naming the first line longer than :data:`MAX_LINE_CHARS` characters."""
    if len(text) <= MAX_LINE_CHARS:
        return
    for lineno, line in enumerate(text.splitlines(), 1):
        if len(line) > MAX_LINE_CHARS:
            raise InputError(f"line of {len(line)} characters exceeds the {MAX_LINE_CHARS} character limit "
                             "(a binary file, or line breaks lost?)", f"{source}:{lineno}")


def check_count(count: int, limit: int, what: str, source: str) -> None:
    """Raise InputError if ``count`` (of ``what``, e.g. "atoms") exceeds ``limit``."""
    if count > limit:
        raise InputError(f"{count} {what} exceed the limit of {limit} (see ringshift.limits)", source)


def check_coordinates(coords, symbols, source: str, *, unit: str = "frame") -> None:
    """Refuse coordinates no real molecule has, naming the atoms (0-based indices) and the frame.

    Parameters
    ----------
    coords : array_like, shape (n_frames, n_atoms, 3)
        Cartesian coordinates, Å.
    symbols : sequence of str, length n_atoms
        Element symbols, for messages.
    source : str
        The file, for messages.
    unit : str
        What a frame is called in messages ("frame" for XYZ, "record" for SD files).

    Raises
    ------
    InputError
        A NaN or infinite coordinate; one beyond ±:data:`MAX_ABS_COORDINATE_A`; a molecule of at least
        two atoms all within :data:`MIN_EXTENT_A` of each other; two atoms closer than
        :data:`MIN_ATOM_DISTANCE_A`.
    """
    x = np.asarray(coords, dtype=np.float64)
    if x.ndim != 3 or x.shape[-1] != 3:
        raise InputError(f"expected coordinates of shape (n_frames, n_atoms, 3), got {x.shape}", source)

    def name(k: int) -> str:
        return f"{k} ({symbols[k]})" if k < len(symbols) else str(k)

    for f in range(x.shape[0]):
        xf = x[f]
        where = f"{source} ({unit} {f + 1})" if x.shape[0] > 1 else source
        bad = np.flatnonzero(~np.all(np.isfinite(xf), axis=1))
        if bad.size:
            raise InputError(f"non-finite coordinate of atom {name(int(bad[0]))}", where)
        if xf.size and np.max(np.abs(xf)) > MAX_ABS_COORDINATE_A:
            k = int(np.argmax(np.max(np.abs(xf), axis=1)))
            raise InputError(f"coordinate {xf[k][np.argmax(np.abs(xf[k]))]:.4g} of atom {name(k)} is beyond "
                             f"±{MAX_ABS_COORDINATE_A:g} Å; expected Å near the origin (wrong unit, or a "
                             "crystal cell?)", where)
        if xf.shape[0] < 2:
            continue
        if np.max(np.ptp(xf, axis=0)) < MIN_EXTENT_A:
            raise InputError(f"all {xf.shape[0]} atoms lie within {MIN_EXTENT_A:g} Å of each other; expected "
                             "coordinates in Å (all zero, or written in another unit?)", where)
        pairs = _close_pairs(xf, MIN_ATOM_DISTANCE_A)
        if pairs.size:
            d = np.linalg.norm(xf[pairs[:, 0]] - xf[pairs[:, 1]], axis=1)
            i, j = sorted(int(v) for v in pairs[int(np.argmin(d))])
            raise InputError(f"atoms {name(i)} and {name(j)} (0-based) are {d.min():.3f} Å apart; expected at "
                             f"least {MIN_ATOM_DISTANCE_A:g} Å (a duplicated or misplaced atom?)", where)


def _close_pairs(x: np.ndarray, r_A: float) -> np.ndarray:
    """(k, 2) index pairs i < j of the points x (n, 3) Å closer than ``r_A``: a direct distance check in
    row blocks for ordinary molecules (no SciPy import at start-up), a k-d tree for very large ones."""
    n = x.shape[0]
    if n > 2000:
        from scipy.spatial import cKDTree

        return cKDTree(x).query_pairs(r_A, output_type="ndarray")
    out = []
    for lo in range(0, n, 256):
        d2 = np.sum((x[lo:lo + 256, None, :] - x[None, :, :]) ** 2, axis=2)
        i, j = np.nonzero(d2 < r_A * r_A)
        keep = (i + lo) < j
        out.append(np.stack([i[keep] + lo, j[keep]], axis=1))
    return np.concatenate(out) if out else np.zeros((0, 2), dtype=int)


# ----------------------------------------------------------------------------------------------------
# Memory and time of the heavy steps, estimated from sizes before the work starts
# ----------------------------------------------------------------------------------------------------
#: Memory a single predict or map may need before it is refused, MB; raised with this environment variable.
DEFAULT_MEMORY_MB: float = 4000.0
MEMORY_ENV: str = "RINGSHIFT_MEMORY_MB"
#: Time a single predict or map may need before it is refused, s; raised with this environment variable.
DEFAULT_TIME_S: float = 900.0
TIME_ENV: str = "RINGSHIFT_TIME_LIMIT_S"
#: The command-line options of our own that set the limits (they override the environment variables).
MEMORY_OPTION: str = "--memory-limit"
TIME_OPTION: str = "--time-limit"
#: Limits given by the command line or the API (None: the environment variable, else the default).
_OVERRIDE: dict[str, float | None] = {"memory_MB": None, "time_s": None}
#: Steps estimated to take longer than this show a progress line on stderr (only on a terminal), s.
PROGRESS_AFTER_S: float = 3.0
#: Interval of the progress line's clock, s.
PROGRESS_TICK_S: float = 1.0

# Calibration (benchmarks/bench_resources.py, hexagonal C–H flakes, one core of a shared 2-core machine):
# after the blocked bond polarisability, a 474-carbon flake peaks at 47 MB traced / 178 MB RSS, of
# which ~130 MB is the interpreter with numpy, scipy and RDKit loaded. The self-consistent β step runs
# about 7 bond-polarisability evaluations (m² n²/4 multiply-adds each, ~1.25e10 per s measured) and
# about 16 eigen-decompositions per evaluation (n³ at ~2.1e9 per s measured), for n π atoms and m π bonds
# (profile of a C302H44 flake: 2.24 s and 1.48 s of 8.0 s; the model gives 2.37 s and 1.47 s). Times are
# for an idle core; with other work on the machine they run up to 2-3 times longer.
_BASE_MB = 130.0
_BASE_S = 4.5  # first-use imports (~2.8 s) and the light steps (perception, circuits, classes) of a 302-C flake
_POL_STEPS = 7
_POL_RATE = 1.25e10
_EIGH_PER_STEP = 16
_EIGH_RATE = 2.1e9
_MAP_RATE = 2.0e7  # point × wire-segment evaluations per s (half the fields benchmark's target; not measured here)


class Estimate:
    """Estimated peak memory (MB, resident) and wall time (s) of one step, and what was counted."""

    __slots__ = ("memory_MB", "seconds", "what")

    def __init__(self, memory_MB: float, seconds: float, what: str) -> None:
        self.memory_MB, self.seconds, self.what = float(memory_MB), float(seconds), what

    def __repr__(self) -> str:
        return f"Estimate(memory_MB={self.memory_MB:.0f}, seconds={self.seconds:.1f}, what={self.what!r})"


def estimate_predict(n_pi: int, n_bonds: int, n_h: int, n_loops: int, n_conf: int = 1, *,
                     huckel: bool = True) -> Estimate:
    """Memory and time of a prediction: the Hückel–London step (n_pi π atoms, n_bonds π bonds, per
    conformer) and the geometric factors (n_conf × n_loops × n_h floats). Calibration in the module."""
    n, m = float(n_pi), float(n_bonds)
    dense_MB = 8e-6 * (6.0 * n * n + 4.0 * m * m) + 40.0 * (n > 0)     # matrices + 5 polarisability blocks
    factors_MB = 8e-6 * 3.0 * n_conf * n_loops * n_h
    secs = _BASE_S + 1e-6 * n_conf * n_loops * n_h * 20
    if huckel:
        secs += n_conf * _POL_STEPS * (m * m * n * n / 4.0 / _POL_RATE + _EIGH_PER_STEP * n ** 3 / _EIGH_RATE)
    return Estimate(_BASE_MB + (dense_MB if huckel else 0.0) + factors_MB, secs,
                    f"{n_pi} π atoms, {n_bonds} π bonds, {n_loops} loops, {n_h} H, {n_conf} conformer(s)")


def estimate_map(n_points: int, n_loops: int, n_segments: int, block: int, max_loop_atoms: int = 6) -> Estimate:
    """Memory and time of a shielding map of n_points grid points over n_loops loops with n_segments wire
    segments in all (largest loop: max_loop_atoms), evaluated in blocks of ``block`` points."""
    b = min(block, n_points)
    mem = _BASE_MB + 8e-6 * (6.0 * n_points + 4.0 * b * max(n_loops, 1) + 12.0 * b * max(max_loop_atoms, 1))
    return Estimate(mem, 1.0 + 2.0 * n_points * n_segments / _MAP_RATE,
                    f"{n_points} grid points, {n_loops} loops, {n_segments} wire segments")


# Conformer generation (measured with 'C=C'*k polyene SMILES, one core of the shared 2-core machine,
# benchmarks/bench_resources.py): the MMFF94 minimisation of one conformer of N atoms takes ~9.1 s at N = 202
# and grows as N³ (2000 iterations at most, each over all N² atom pairs; 30 conformers of N = 42, 62, 82
# took 3.7, 12 and 21 s, the model gives 3.0, 7.9 and 18 s); one ETKDG attempt (bounds smoothing and
# embedding) takes 1.3 s at N = 402 and 8.6 s at N = 802 (~N^2.7), and peaks at 73 MB and 550 MB above the
# interpreter at N = 802 and 1602 (~N^2.9). Every candidate costs at least one attempt and one minimisation.
_FF_S_202 = 9.1
_EMBED_S_402 = 1.3
_EMBED_MB_802 = 73.0


def estimate_conformers(n_atoms: int, n_candidates: int) -> Estimate:
    """Memory and time of conformer generation for a molecule of ``n_atoms`` atoms (hydrogens included):
    ``n_candidates`` embeddings each minimised (the cap of the search plus its extra starts). A lower bound
    for flexible molecules, where ETKDG needs many attempts per conformer. Calibration in the module."""
    n = float(n_atoms)
    per = _EMBED_S_402 * (n / 402.0) ** 2.7 + _FF_S_202 * (n / 202.0) ** 3
    return Estimate(_BASE_MB + _EMBED_MB_802 * (n / 802.0) ** 2.9, 1.0 + n_candidates * per,
                    f"{n_atoms} atoms, {n_candidates} conformer candidates")


def set_limits(memory_MB: float | None = None, time_s: float | None = None) -> None:
    """Set the memory (MB) and time (s) limits of this process (the command-line options
    :data:`MEMORY_OPTION` and :data:`TIME_OPTION` call this); None returns to the environment variable or
    the default. Raises InputError for a value that is not a positive number."""
    for key, value, name in (("memory_MB", memory_MB, MEMORY_OPTION), ("time_s", time_s, TIME_OPTION)):
        if value is not None and not (isinstance(value, (int, float)) and float(value) > 0
                                      and np.isfinite(float(value))):
            raise InputError(f"expected a positive number, got {value!r}", name)
        _OVERRIDE[key] = None if value is None else float(value)


def overrides() -> tuple[float | None, float | None]:
    """The limits set by :func:`set_limits` (memory MB, time s; None where not set), e.g. to pass to workers."""
    return _OVERRIDE["memory_MB"], _OVERRIDE["time_s"]


def current_limits() -> tuple[float, float]:
    """The memory (MB) and time (s) limits in force: the option (:func:`set_limits`), else the environment
    variable, else the default."""
    mem, t = _OVERRIDE["memory_MB"], _OVERRIDE["time_s"]
    return (mem if mem is not None else _limit(MEMORY_ENV, DEFAULT_MEMORY_MB),
            t if t is not None else _limit(TIME_ENV, DEFAULT_TIME_S))


def _limit(env: str, default: float) -> float:
    raw = os.environ.get(env, "").strip()
    if not raw:
        return default
    try:
        value = float(raw)
    except ValueError:
        raise InputError(f"{env}={raw!r}; expected a number", env) from None
    if not value > 0:
        raise InputError(f"{env}={raw!r}; expected a positive number", env)
    return value


def check_estimate(est: Estimate, step: str, source: str, hint: str = "") -> None:
    """Refuse (InputError, one line) a step whose estimate exceeds the memory or time limit, naming the option
    and the variable that raise it; the limits are those of :func:`current_limits`. ``hint``: another way
    out, appended to the message (e.g. "or give 3D coordinates")."""
    mem_max, t_max = current_limits()
    extra = f"; {hint}" if hint else ""
    if est.memory_MB > mem_max:
        raise InputError(f"{step} would need about {est.memory_MB:.0f} MB of memory ({est.what}), over the "
                         f"limit of {mem_max:g} MB; raise it with {MEMORY_OPTION} MB (or {MEMORY_ENV}=MB) if the "
                         f"machine has the memory{extra}", source)
    if est.seconds > t_max:
        took = f"{est.seconds:.0f} s" if est.seconds < 120 else (f"{est.seconds / 60:.0f} min" if est.seconds < 7200
                                                                  else f"{est.seconds / 3600:.0f} h")
        raise InputError(f"{step} would take about {took} ({est.what}), over the limit of "
                         f"{t_max:g} s; raise it with {TIME_OPTION} SECONDS (or {TIME_ENV}=SECONDS) to run it "
                         f"anyway{extra}", source)


class progress:  # noqa: N801 - used as a context manager, like open()
    """Context manager: while a step estimated at ``est.seconds`` runs, a line on stderr shows the elapsed
    and estimated time once a second ("ringshift: Hückel–London step … 12 s of about 40 s"), cleared at
    the end. Quiet when stderr is not a terminal or the estimate is under :data:`PROGRESS_AFTER_S`.
    ``stream`` (default sys.stderr) is for tests."""

    current: progress | None = None   # the progress line shown now, if any (for :func:`note`)

    def __init__(self, step: str, est: Estimate, stream=None) -> None:
        import sys
        self.step, self.est, self.stream = step, est, stream if stream is not None else sys.stderr
        self.detail = est.what
        self._stop: Any = None      # threading.Event while a progress line is shown
        self._thread: Any = None

    def _active(self) -> bool:
        try:
            return bool(self.stream.isatty()) and self.est.seconds >= PROGRESS_AFTER_S
        except (AttributeError, ValueError):
            return False

    def _run(self, t0: float) -> None:
        import time
        assert self._stop is not None
        while not self._stop.wait(PROGRESS_TICK_S):
            self.stream.write(f"\r\x1b[Kringshift: {self.step} ({self.detail}) … {time.monotonic() - t0:.0f} s of "
                              f"about {self.est.seconds:.0f} s ")
            self.stream.flush()

    def __enter__(self) -> progress:
        if self._active():
            import threading
            import time
            self._stop = threading.Event()
            self._thread = threading.Thread(target=self._run, args=(time.monotonic(),), daemon=True)
            self._thread.start()
            progress.current = self
        return self

    def __exit__(self, *exc) -> None:
        if self._thread is not None and self._stop is not None:
            self._stop.set()
            self._thread.join()
            progress.current = None
            self.stream.write("\r\x1b[K")  # erase the progress line
            self.stream.flush()


def note(text: str) -> bool:
    """Show ``text`` as the detail of the progress line shown now (e.g. "round 2, 16/40 embeddings");
    False when no progress line is shown (quiet, or not on a terminal)."""
    cur = progress.current
    if cur is None:
        return False
    cur.detail = text
    return True
