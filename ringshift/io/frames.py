"""Trajectory frames: multi-frame XYZ and multi-record SD files read one frame at a time.

:func:`iter_xyz_frames` and :func:`iter_sdf_records` never read the whole file. Every frame must list the
atoms of the first frame in the same order, else :class:`InputError` naming the frame. Rule for damaged
files: an XYZ frame cut short by the end of the file (fewer atom lines than announced, or a last line
without x y z) and an SD record that RDKit cannot parse are skipped with a :class:`TrajectoryWarning`
naming the frame/record number, and the remaining frames are used (an SD record ends at its ``$$$$``
line, so the next record is safe to read). Anything malformed before the last XYZ frame is an error:
the frame boundaries after it cannot be trusted. ``strict=True`` makes the skipped cases errors too.

Energies. XYZ comment lines: ``energy=-123.4``, ``E: -123.4``, ``energy_hartree=-0.5``, or a bare number,
optionally followed by a unit word (``kcal/mol``, ``kj/mol``, ``hartree``/``Eh``/``au``, ``ev``); without
a unit the reader's ``energy_unit`` applies (default kcal/mol; xtb and ORCA trajectories write Hartree
without saying so, ASE's extended XYZ writes eV: pass ``energy_unit``). SD records: the fields of
:data:`ringshift.io.molecule_files.ENERGY_PROPERTIES`.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import re
import tempfile
import warnings
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from rdkit import Chem, rdBase

from ringshift.constants import KCAL_PER_EV, KCAL_PER_HARTREE, KCAL_PER_KJ
from ringshift.errors import InputError, RingshiftWarning
from ringshift.io.molecule_files import ENERGY_PROPERTIES
from ringshift.io.structures import Structure, load_structure
from ringshift.io.xyz import parse_xyz_frames
from ringshift.limits import check_coordinates

__all__ = ['TrajectoryWarning', 'Frame', 'FrameStream', 'iter_xyz_frames', 'iter_sdf_records', 'parse_energy',
           'ENERGY_UNITS', 'bond_length_limits', 'broken_bond', 'BROKEN_BOND_FACTOR']

#: A bond of the template longer than this multiple of the sum of its atoms' covalent radii (RDKit's table,
#: Cordero et al., Dalton Trans. 2008, 2832) is broken in that frame: C–H beyond 1.61 Å, C–C beyond 2.28 Å.
#: Thermal stretching stays far below (C–H ± 0.1 Å at 300 K; common practice, no source).
BROKEN_BOND_FACTOR = 1.5


_SDF = (".sdf", ".sd")


#: Energy unit words (lower case) and their factor to kcal/mol.
ENERGY_UNITS: dict[str, float] = {"kcal/mol": 1.0, "kcal": 1.0, "kj/mol": KCAL_PER_KJ, "kj": KCAL_PER_KJ,
                                  "hartree": KCAL_PER_HARTREE, "eh": KCAL_PER_HARTREE, "au": KCAL_PER_HARTREE,
                                  "ev": KCAL_PER_EV}

_NUM = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eEdD][-+]?\d+)?"

_UNIT = r"(kcal/mol|kcal|kj/mol|kj|hartree|eh|au|ev)\b"

_KEYED = re.compile(r"\b(?:energy|e(?=(?:_\w+)?\s*[=:]|\s+[-+.\d]))(?:_(kcal_mol|kj_mol|hartree|eh|ev))?"
                    rf"\s*[=:]?\s*({_NUM})\s*(?:{_UNIT})?", re.IGNORECASE)

_BARE = re.compile(rf"^\s*({_NUM})\s*(?:{_UNIT})?\s*$", re.IGNORECASE)

_SUFFIX_UNIT = {"kcal_mol": "kcal/mol", "kj_mol": "kj/mol", "hartree": "hartree", "eh": "eh", "ev": "ev"}



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


def bond_length_limits(mol: Chem.Mol) -> tuple[np.ndarray, np.ndarray]:
    """The bonds (m, 2) of a template molecule and the length (m,), Å, beyond which each counts as broken
    (:data:`BROKEN_BOND_FACTOR` × the sum of the covalent radii)."""
    pt = Chem.GetPeriodicTable()
    bonds = np.array([(b.GetBeginAtomIdx(), b.GetEndAtomIdx()) for b in mol.GetBonds()], dtype=np.intp).reshape(-1, 2)
    radii = np.array([pt.GetRcovalent(a.GetAtomicNum()) for a in mol.GetAtoms()], dtype=np.float64)
    return bonds, BROKEN_BOND_FACTOR * (radii[bonds[:, 0]] + radii[bonds[:, 1]])


def broken_bond(mol: Chem.Mol, bonds: np.ndarray, limits_A: np.ndarray, coords) -> str | None:
    """A one-line description of the longest broken bond of one frame (coords (n_atoms, 3), Å), or None.

    ``bonds`` and ``limits_A`` from :func:`bond_length_limits` of the template molecule."""
    x = np.asarray(coords, dtype=np.float64)
    if not bonds.shape[0]:
        return None
    d = np.linalg.norm(x[bonds[:, 0]] - x[bonds[:, 1]], axis=1)
    over = d / limits_A
    k = int(np.argmax(over))
    if over[k] <= 1.0:
        return None
    i, j = sorted(int(a) for a in bonds[k])
    si, sj = mol.GetAtomWithIdx(i).GetSymbol(), mol.GetAtomWithIdx(j).GetSymbol()
    n_bad = int(np.count_nonzero(over > 1.0))
    more = f" and {n_bad - 1} more" if n_bad > 1 else ""
    return (f"bond {si}{i}–{sj}{j} (0-based) is {d[k]:.2f} Å long{more}, beyond {limits_A[k]:.2f} Å "
            f"({BROKEN_BOND_FACTOR:g} × the covalent radii): a broken bond, not the molecule of the first frame")


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
        :func:`ringshift.io.structures.load_structure`), named after the file."""
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
        def truncated(number: int, reason: str, where: str) -> None:
            stream.n_seen = number
            stream._skip(number, reason, where)

        with path.open(encoding="utf-8") as fh:
            for fr in parse_xyz_frames(fh, str(path), on_truncated=truncated):
                stream.n_seen = fr.number
                yield Frame(fr.number, fr.coords, parse_energy(fr.comment, energy_unit))

    return FrameStream(path, "xyz", gen, first_text, strict)


def _sd_records(path: Path) -> Iterator[tuple[int, int, str, bool]]:
    """(record number, first line, text, complete) of each SD record, read line by line."""
    with path.open(encoding="utf-8") as fh:
        buf: list[str] = []
        start, number, line_no = 1, 0, 0
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
    :data:`ringshift.io.molecule_files.ENERGY_PROPERTIES`, converted to kcal/mol.

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
