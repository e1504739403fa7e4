"""Coverage-guided fuzzing of ringshift's readers (not run by the test suite).

Usage::

    .venv/bin/python tests/fuzz/fuzz_readers.py --target csv --seconds 60
    .venv/bin/python tests/fuzz/fuzz_readers.py --target all --seconds 120 --engine mutate

Targets
    ``csv``     :func:`ringshift.io.peak_tables.parse_peak_table_csv` on the input decoded as UTF-8 (or Latin-1)
    ``jcamp``   :func:`ringshift.io.jcampdx.parse_jcamp_text`, then picking via
                :func:`ringshift.io.peak_tables.read_peaks`
    ``peaks``   :func:`ringshift.io.peak_tables.read_peaks` on the raw bytes written to a ``.csv`` or ``.jdx`` file
    ``xyz``     :func:`ringshift.io.structures.load_structure` on the bytes as an ``.xyz`` file
    ``sdf``     :func:`ringshift.io.structures.load_structure` on the bytes as an ``.sdf`` file (3D records only;
                2D records would start conformer generation and are skipped)
    ``smiles``  SMILES parsing, sanitising and hydrogen grouping (``load_structure`` with one conformer,
                inputs up to 80 characters)

A finding is any exception other than :class:`ringshift.errors.InputError`, an InputError whose
message is empty or spans lines, or a non-finite number in a result. The engine stops at the first
finding and leaves the input in ``--artifacts`` (``crash-*``).

Engines
    ``atheris`` (default when installed): libFuzzer's coverage-guided mutation, with ringshift's own
    modules instrumented (``atheris.instrument_imports``). libFuzzer prints the number of runs.
    ``mutate``: a dependency-free fallback. Random byte- and token-level mutations of a corpus; an
    input is kept in the corpus when it reaches lines of ringshift that no earlier input reached
    (measured with :mod:`coverage` if installed, else with :func:`sys.settrace`), so it is
    coverage-guided too, only slower.

Seeds come from ``tests/data/peaks`` and small invented structures written by this script.
"""

from __future__ import annotations

import argparse
import math
import os
import random
import sys
import tempfile
import time
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "tests" / "data" / "peaks"
TARGETS = ("csv", "jcamp", "peaks", "xyz", "sdf", "smiles")

_BENZENE_XYZ = (
    "12\nbenzene, invented test geometry\n"
    "C 1.3970 0.0000 0.0000\nC 0.6985 1.2099 0.0000\nC -0.6985 1.2099 0.0000\nC -1.3970 0.0000 0.0000\n"
    "C -0.6985 -1.2099 0.0000\nC 0.6985 -1.2099 0.0000\nH 2.4810 0.0000 0.0000\nH 1.2405 2.1486 0.0000\n"
    "H -1.2405 2.1486 0.0000\nH -2.4810 0.0000 0.0000\nH -1.2405 -2.1486 0.0000\nH 1.2405 -2.1486 0.0000\n")
_SMILES_SEEDS = ["c1ccccc1", "C1=CC=CC=CC=C1", "[cH-]1cccc1", "c1ccc2ccccc2c1", "C1=CC=C2CC(=C1)C=CC=C2",
                 "[H]/C1=C/C=C\\C=C/C=C\\1", "c1cc[nH]c1", "O=C1C=CC(=O)C=C1", "[2H]c1ccccc1", "C[N+](C)(C)C"]


class Finding(Exception):
    """A reader misbehaved (see module notes)."""


# ----------------------------------------------------------------------------------- target bodies
def _decode(data: bytes) -> str:
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def _finite(v) -> bool:
    return v is None or (isinstance(v, (int, float)) and math.isfinite(v))


def _check_peaklist(pl) -> None:
    import numpy as np

    for p in pl.peaks:
        if not (math.isfinite(p.shift_ppm) and _finite(p.integral) and _finite(p.width_hz) and _finite(p.height)):
            raise Finding(f"non-finite peak {p}")
    if pl.spectrum is not None and not (np.all(np.isfinite(pl.spectrum.ppm))
                                        and np.all(np.isfinite(pl.spectrum.intensity))):
        raise Finding("non-finite spectrum")


def _check_structure(s) -> None:
    import numpy as np

    if not (np.all(np.isfinite(s.coords)) and np.all(np.isfinite(s.weights))):
        raise Finding("non-finite coordinates or weights")


class Runner:
    """Holds a scratch folder for file-based targets and calls one target on bytes."""

    def __init__(self, target: str):
        self.target = target
        self.tmp = Path(tempfile.mkdtemp(prefix="ringshift-fuzz-"))
        # imported here (instrumented by atheris)
        from ringshift.errors import InputError
        from ringshift.io import jcampdx, molecule_files, peak_tables, structures

        self.jcamp, self.peaks, self.InputError = jcampdx, peak_tables, InputError

        self.structure, self.molfiles = structures, molecule_files

    def __call__(self, data: bytes) -> None:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            try:
                self._run(data)
            except self.InputError as exc:
                text = str(exc)
                if not text.strip() or "\n" in text:
                    raise Finding(f"badly formed InputError message {text!r}") from exc

    def _file(self, name: str, data: bytes) -> Path:
        path = self.tmp / name
        path.write_bytes(data)
        return path

    def _run(self, data: bytes) -> None:
        t = self.target
        if t == "csv":
            _check_peaklist(self.peaks.parse_peak_table_csv(_decode(data), source="fuzz.csv"))
        elif t == "jcamp":
            text = _decode(data)
            self.jcamp.parse_jcamp_text(text, source="fuzz.jdx")
            _check_peaklist(self.peaks.read_peaks(self._file("fuzz.jdx", data), n_hydrogens=6))
        elif t == "peaks":
            name = "fuzz.jdx" if data[:1] == b"#" else "fuzz.csv"
            _check_peaklist(self.peaks.read_peaks(self._file(name, data), n_hydrogens=12, solvent="CDCl3"))
        elif t == "xyz":
            _check_structure(self.structure.load_structure(str(self._file("fuzz.xyz", data))))
        elif t == "sdf":
            path = self._file("fuzz.sdf", data)
            records = self.molfiles.read_mol_records(path)
            if all(r.GetNumConformers() and r.GetConformer().Is3D() for r in records):
                _check_structure(self.structure.load_structure(str(path)))
        elif t == "smiles":
            text = _decode(data).strip()
            if 0 < len(text) <= 80 and "\x00" not in text and not os.path.exists(text):
                _check_structure(self.structure.load_structure(text, conformers=1, fmt="smiles"))


# ----------------------------------------------------------------------------------- seeds
def seeds(target: str) -> list[bytes]:
    """Valid (and a few nearly valid) inputs to start from."""
    if target == "csv":
        return [p.read_bytes() for p in sorted(DATA.glob("*.csv")) + sorted(DATA.glob("*.tsv"))] + [
            b"ppm;nH\n7,36;6\n", b"\xef\xbb\xbfshift_ppm\tintegral\twidth_hz\n7.2\t1\t1.5\n"]
    if target == "jcamp":
        return [p.read_bytes() for p in sorted(DATA.glob("*.jdx"))]
    if target == "peaks":
        return seeds("csv") + seeds("jcamp")
    if target == "xyz":
        return [_BENZENE_XYZ.encode(), (_BENZENE_XYZ * 2).encode()]
    if target == "sdf":
        from rdkit import Chem

        mol = Chem.MolFromXYZBlock(_BENZENE_XYZ)
        from rdkit.Chem import rdDetermineBonds

        rdDetermineBonds.DetermineBonds(mol, charge=0)
        block = Chem.MolToMolBlock(mol)
        return [block.encode(), (block + "$$$$\n" + block + "> <energy>\n1.5\n\n$$$$\n").encode()]
    return [s.encode() for s in _SMILES_SEEDS]


# ----------------------------------------------------------------------------------- engines
def run_atheris(target: str, seconds: int, corpus: Path, artifacts: Path) -> int:
    import atheris

    with atheris.instrument_imports(include=["ringshift"]):
        runner = Runner(target)
    corpus.mkdir(parents=True, exist_ok=True)
    for k, s in enumerate(seeds(target)):
        (corpus / f"seed-{k}").write_bytes(s)
    artifacts.mkdir(parents=True, exist_ok=True)
    tokens = corpus.parent / f"{corpus.name}.dict"          # libFuzzer dictionary: the mutate engine's tokens
    tokens.write_text("".join('"' + "".join(f"\\x{b:02x}" for b in t) + '"\n' for t in _TOKENS), encoding="ascii")
    args = [sys.argv[0], f"-max_total_time={seconds}", f"-artifact_prefix={artifacts}/", "-max_len=20000",
            "-rss_limit_mb=4096", "-timeout=20", "-print_final_stats=1", f"-dict={tokens}", str(corpus)]
    atheris.Setup(args, runner)
    atheris.Fuzz()          # exits the process; libFuzzer prints "Done N runs in S second(s)"
    return 0


_TOKENS = [b"\n", b"\r\n", b",", b";", b"\t", b" ", b"#", b"##", b"=", b"-", b".", b"e", b"nan", b"inf", b"1e400",
           b"-0", b"$$", b"$$$$", b"(", b")", b"\xef\xbb\xbf", b"\x00", b"\xff", b"9" * 20, b"##END=", b"##TITLE=x",
           b"##XYDATA=(X++(Y..Y))", b"##PEAK TABLE=(XY..XY)", b"##NPOINTS=", b"@", b"J", b"S", b"%", b"j",
           b"V2000", b"M  END", b"C", b"H", b"[", b"]", b"=", b"#", b"/", b"\\", b"1", b"2", b"+", b"@@",
           "\u00b2".encode(), "\u0661".encode(), "\uff17".encode(), "\u2212".encode(), "\u03b4".encode(), b"[*]",
           b"M  CHG  1   1   1", b"  1  2  0  0", b"  1  2  8  0", b"> <energy>"]


def _mutate(data: bytes, rng: random.Random) -> bytes:
    buf = bytearray(data)
    for _ in range(rng.randint(1, 8)):
        op = rng.randrange(6)
        i = rng.randint(0, len(buf))
        j = min(len(buf), i + rng.randint(0, 32))
        if op == 0:
            del buf[i:j]
        elif op == 1:
            buf[i:i] = rng.choice(_TOKENS)
        elif op == 2 and buf:
            buf[min(i, len(buf) - 1)] = rng.randrange(256)
        elif op == 3:
            buf[j:j] = buf[i:j] * rng.randint(1, 4)
        elif op == 4:
            buf[i:i] = bytes(rng.randrange(32, 127) for _ in range(rng.randint(1, 6)))
        else:
            lines = bytes(buf).split(b"\n")
            if len(lines) > 1:
                a, b = rng.randrange(len(lines)), rng.randrange(len(lines))
                lines[a], lines[b] = lines[b], lines[a]
                buf = bytearray(b"\n".join(lines))
    return bytes(buf[:20000])


class _LineTracer:
    """Set of (file, line) pairs executed inside ringshift, via sys.settrace (fallback of coverage.py)."""

    def __init__(self):
        self.root = str(ROOT / "ringshift")
        self.hits: set = set()

    def _trace(self, frame, event, arg):
        if not frame.f_code.co_filename.startswith(self.root):
            return None
        if event == "line":
            self.hits.add((frame.f_code.co_filename, frame.f_lineno))
        return self._trace

    def run(self, fn, data):
        self.hits = set()
        sys.settrace(self._trace)
        try:
            fn(data)
        finally:
            sys.settrace(None)
        return self.hits


def run_mutate(target: str, seconds: int, corpus: Path, artifacts: Path, seed: int) -> int:
    runner = Runner(target)
    rng = random.Random(seed)
    pool = list(seeds(target))
    if corpus.is_dir():
        pool += [p.read_bytes() for p in sorted(corpus.iterdir()) if p.is_file()]
    tracer, seen = _LineTracer(), set()
    runs, kept, start = 0, 0, time.monotonic()
    while time.monotonic() - start < seconds:
        data = _mutate(rng.choice(pool), rng) if runs >= len(pool) else pool[runs]
        runs += 1
        try:
            new = tracer.run(runner, data) - seen
        except Exception as exc:  # noqa: BLE001 - every other exception is a finding
            artifacts.mkdir(parents=True, exist_ok=True)
            path = artifacts / f"crash-{target}-{runs}"
            path.write_bytes(data)
            print(f"FINDING after {runs} runs: {type(exc).__name__}: {exc} (input saved to {path})")
            return 1
        if new:
            seen |= new
            pool.append(data)
            kept += 1
    print(f"Done {runs} runs in {seconds} second(s): target {target}, {len(seen)} ringshift lines covered, "
          f"{kept} inputs kept in the corpus, no finding")
    return 0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--target", choices=TARGETS + ("all",), required=True)
    ap.add_argument("--seconds", type=int, default=60, help="run time per target (default 60)")
    ap.add_argument("--engine", choices=("atheris", "mutate"), default=None,
                    help="default: atheris when installed, else mutate")
    ap.add_argument("--corpus", type=Path, default=None, help="corpus folder (default: a new temporary one)")
    ap.add_argument("--artifacts", type=Path, default=Path(tempfile.gettempdir()) / "ringshift-fuzz-artifacts")
    ap.add_argument("--seed", type=int, default=0, help="random seed of the mutate engine")
    args = ap.parse_args(argv)
    engine = args.engine
    if engine is None:
        try:
            import atheris  # noqa: F401
            engine = "atheris"
        except ImportError:
            engine = "mutate"
    targets = TARGETS if args.target == "all" else (args.target,)
    if engine == "atheris" and len(targets) > 1:      # libFuzzer owns the process: one target per run
        import subprocess

        return max(subprocess.call([sys.executable, __file__, "--target", t, "--seconds", str(args.seconds),
                                    "--engine", "atheris", "--artifacts", str(args.artifacts)]) for t in targets)
    status = 0
    for t in targets:
        corpus = args.corpus or Path(tempfile.mkdtemp(prefix=f"ringshift-corpus-{t}-"))
        if engine == "atheris":
            status |= run_atheris(t, args.seconds, corpus, args.artifacts)
        else:
            status |= run_mutate(t, args.seconds, corpus, args.artifacts, args.seed)
    return status


if __name__ == "__main__":
    sys.exit(main())
