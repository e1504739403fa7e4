"""Ring-current-free reference shifts by proton class, and assembly of a predicted ¹H shift.

δ_pred = δ_ref(proton class) + Δδ_rc (ring current, = −σ_rc) + Δδ_q (π-charge term). This module gives
the first part (:func:`classify_hydrogens`, :func:`reference_shifts`) and the explicit sum
(:func:`assemble_prediction`). The references must contain no ring current, or it is counted twice:
the packaged table (``ringshift/data/reference_shifts.csv``, basis in its header and in
:attr:`ReferenceTable.basis`) takes them from non-aromatic model compounds: atropic conjugated
polyenes for CH on π rings, olefins carrying the heteroatom for CH next to N/O/S, allylic and alkyl
compounds for sp3 CH. A CH on a ring RDKit flags aromatic gets the same reference as an olefinic CH of
a conjugated ring: its aromatic character is what the ring-current term supplies. A user CSV with the
same columns overrides or extends the table (:func:`load_reference_table`).
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from types import MappingProxyType

import numpy as np

from ringshift import _validation as _v
from ringshift import limits as _limits
from ringshift.errors import InputError
from ringshift.shifts.classes import classify_hydrogens
from ringshift.shifts.hbonds import refine_nh_classes

__all__ = ['ReferenceShift', 'ReferenceTable', 'ReferenceArrays', 'CSV_COLUMNS', 'load_reference_table',
           'reference_shifts', 'reference_arrays', 'assemble_prediction']


#: Columns of a reference-shift CSV, in this order.
CSV_COLUMNS: tuple[str, ...] = ("proton_class", "ref_ppm", "sd_ppm", "source", "description")


#: Accepted range of a reference shift, ppm. Wider than any ring-current-free ¹H shift; a value
#: outside it is a typo (common practice, no source).
_REF_RANGE_PPM = (-20.0, 30.0)

_CLASS_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")

_PACKAGE_CSV = "reference_shifts.csv"


@dataclass(frozen=True)
class ReferenceShift:
    """Ring-current-free reference shift of one proton class.

    Attributes: ``proton_class`` (stable identifier, e.g. ``"sp3_CH3_on_pi"``); ``ref_ppm`` (reference
    δ, ppm vs TMS, no ring current in it); ``sd_ppm`` (typical 1-sd spread of the class, ppm, > 0);
    ``source`` (citation, or "from memory" / "common practice, no source"); ``description``.
    """

    proton_class: str
    ref_ppm: float
    sd_ppm: float
    source: str
    description: str


@dataclass(frozen=True)
class ReferenceTable:
    """Reference shifts keyed by proton class.

    Attributes: ``entries`` (read-only mapping proton class -> :class:`ReferenceShift`, file order);
    ``name`` (where the table came from); ``basis`` (how the values were made ring-current free: the
    ``#`` notes of the CSV files). ``table[cls]`` raises :class:`InputError` for an unknown class.
    """

    entries: Mapping[str, ReferenceShift]
    name: str
    basis: str

    def __post_init__(self) -> None:
        for key, entry in self.entries.items():
            if key != entry.proton_class:
                raise InputError(f"entry under key {key!r} has proton_class "
                                 f"{entry.proton_class!r}; expected the key to equal the class",
                                 source=f"ReferenceTable {self.name!r}")
        object.__setattr__(self, "entries", MappingProxyType(dict(self.entries)))

    def __getitem__(self, proton_class: str) -> ReferenceShift:
        try:
            return self.entries[proton_class]
        except KeyError:
            raise InputError(f"no entry for proton class {proton_class!r}; expected one of its "
                             f"{len(self.entries)} classes, or add a row for it to a user CSV",
                             source=f"reference table {self.name!r}") from None

    def __contains__(self, proton_class: object) -> bool:
        return proton_class in self.entries

    def __len__(self) -> int:
        return len(self.entries)

    @property
    def classes(self) -> tuple[str, ...]:
        """Proton classes of the table, in file order."""
        return tuple(self.entries)


@dataclass(frozen=True, eq=False)
class ReferenceArrays:
    """Reference shifts of hydrogens as aligned read-only arrays (input to fits and predictions).

    Attributes: ``h_indices`` (n,) int64 atom indices; ``proton_classes`` (n strings);
    ``ref_ppm`` (n,) float64 reference δ, ppm; ``sd_ppm`` (n,) float64 class spread, ppm.
    """

    h_indices: np.ndarray
    proton_classes: tuple[str, ...]
    ref_ppm: np.ndarray
    sd_ppm: np.ndarray


def _number(text: str, column: str, where: str, ok, expected: str) -> float:
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not (math.isfinite(value) and ok(value)):
        raise InputError(f"{column} {text!r} is not usable; expected {expected}", source=where)
    return value


def _parse_table_text(text: str, label: str) -> tuple[dict[str, ReferenceShift], str]:
    """Entries (file order) and joined ``#`` notes of CSV text; bad rows name ``label:line``."""
    notes: list[str] = []
    header: list[str] | None = None
    entries: dict[str, ReferenceShift] = {}
    for lineno, raw in enumerate(text.splitlines(), start=1):
        stripped = raw.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            notes.append(stripped[1:].strip())
            continue
        where = f"{label}:{lineno}"
        try:
            fields = next(csv.reader(io.StringIO(raw), skipinitialspace=True))
        except csv.Error as exc:
            raise InputError(f"unreadable CSV row ({exc}); expected {','.join(CSV_COLUMNS)}",
                             source=where) from None
        fields = [f.strip() for f in fields]
        if header is None:
            if tuple(fields) != CSV_COLUMNS:
                raise InputError(f"header is {','.join(fields)!r}; expected the first non-comment "
                                 f"line to be {','.join(CSV_COLUMNS)!r}", source=where)
            header = fields
            continue
        if len(fields) != len(CSV_COLUMNS):
            raise InputError(f"row has {len(fields)} fields; expected {len(CSV_COLUMNS)} "
                             f"({','.join(CSV_COLUMNS)}); quote fields that contain commas",
                             source=where)
        name, ref_s, sd_s, source, description = fields
        if not _CLASS_NAME.match(name):
            raise InputError(f"proton_class {name!r} is not an identifier; expected letters, digits, "
                             "underscores, starting with a letter", source=where)
        if name in entries:
            raise InputError(f"proton_class {name!r} appears twice; expected one row per class",
                             source=where)
        ref = _number(ref_s, "ref_ppm", where, lambda x: _REF_RANGE_PPM[0] <= x <= _REF_RANGE_PPM[1],
                      f"a 1H shift within {_REF_RANGE_PPM[0]:g}..{_REF_RANGE_PPM[1]:g} ppm")
        sd = _number(sd_s, "sd_ppm", where, lambda x: x > 0.0, "a spread > 0 ppm")
        if not source:
            raise InputError("source is empty; expected a citation, 'from memory' or "
                             "'common practice, no source'", source=where)
        entries[name] = ReferenceShift(name, ref, sd, source, description)
    if header is None:
        raise InputError(f"no header line; expected {','.join(CSV_COLUMNS)!r}", source=label)
    return entries, "\n".join(notes).strip()


@lru_cache(maxsize=1)
def _packaged_table() -> ReferenceTable:
    """The packaged table, parsed once per process (it is immutable: entries is a read-only mapping)."""
    path = Path(__file__).resolve().parent.parent / "data" / _PACKAGE_CSV
    if path.is_file():                       # an installed or source tree: read the file, no importlib.resources
        text = path.read_text(encoding="utf-8")
    else:                                    # a zipped install: through the package's resource reader
        from importlib import resources

        text = resources.files("ringshift").joinpath("data").joinpath(_PACKAGE_CSV).read_text(encoding="utf-8")
    entries, notes = _parse_table_text(text, f"ringshift/data/{_PACKAGE_CSV}")
    return ReferenceTable(entries=entries, name=f"ringshift default ({_PACKAGE_CSV})", basis=notes)


def load_reference_table(path: str | Path | None = None, *, extend_default: bool = True
                         ) -> ReferenceTable:
    """Load the packaged reference table, or a user CSV merged over it.

    Parameters
    ----------
    path : str or Path, optional
        UTF-8 CSV, one row per line, columns ``proton_class,ref_ppm,sd_ppm,source,description``
        (first non-comment line is this header; ``#`` lines are notes, appended to ``basis``; quote
        fields containing commas). ``None`` gives the packaged table.
    extend_default : bool, keyword-only
        With a path: ``True`` lets user rows override packaged rows of the same class and add new
        classes; ``False`` uses the user rows alone (a class they lack raises when it is needed).

    Returns
    -------
    ReferenceTable

    Raises
    ------
    InputError
        File missing or unreadable, wrong header, bad row (the message names ``file:line``).
    """
    default = _packaged_table()
    if path is None:
        return default
    path = Path(path)
    entries, notes = _parse_table_text(_limits.read_text(path, "a reference-shift CSV file"), str(path))
    user_notes = notes if notes else "(no notes in the file)"
    if not extend_default:
        return ReferenceTable(entries=entries, name=str(path), basis=user_notes)
    merged = dict(default.entries)
    merged.update(entries)
    basis = f"{default.basis}\n\nUser rows from {path} (override or extend the default):\n{user_notes}"
    return ReferenceTable(entries=merged, name=f"{default.name} + {path}", basis=basis)


def reference_shifts(mol, table: ReferenceTable | None = None,
                     h_indices: Iterable[int] | None = None, *, coords=None,
                     weights=None) -> dict[int, ReferenceShift]:
    """Reference shift of each hydrogen: H atom index -> the table entry of its class.

    ``mol`` and ``h_indices`` as in :func:`classify_hydrogens`; ``table`` defaults to the packaged
    table. With ``coords`` (n_conf, n_atoms, 3) Å and ``weights`` (n_conf,), pyrrole-type NH that are
    hydrogen-bonded to an imine-like N in 3D get their own class
    (:func:`ringshift.shifts.hbonds.refine_nh_classes`). Raises :class:`InputError` as there, or when the
    table lacks a class that is needed.
    """
    if table is None:
        table = load_reference_table()
    elif not isinstance(table, ReferenceTable):
        raise InputError(f"got {type(table).__name__}; expected a ReferenceTable "
                         "(see load_reference_table)", source="table")
    classes = classify_hydrogens(mol, h_indices)
    if coords is not None:
        w = np.full(len(coords), 1.0 / len(coords)) if weights is None else np.asarray(weights, dtype=float)
        classes = refine_nh_classes(mol, classes, np.asarray(coords, dtype=float), w)
    return {i: table[c] for i, c in classes.items()}


def reference_arrays(mol, *, table: ReferenceTable | None = None,
                     h_indices: Iterable[int] | None = None) -> ReferenceArrays:
    """:func:`reference_shifts` as a :class:`ReferenceArrays` (order of ``h_indices``, default atoms)."""
    refs = reference_shifts(mol, table, h_indices)
    idx = np.fromiter(refs.keys(), dtype=np.int64, count=len(refs))
    ref = np.array([r.ref_ppm for r in refs.values()], dtype=np.float64)
    sd = np.array([r.sd_ppm for r in refs.values()], dtype=np.float64)
    for arr in (idx, ref, sd):
        arr.setflags(write=False)
    return ReferenceArrays(h_indices=idx, proton_classes=tuple(r.proton_class for r in refs.values()),
                           ref_ppm=ref, sd_ppm=sd)


def assemble_prediction(ref_ppm, ring_current_ppm, charge_ppm) -> np.ndarray:
    """Predicted shift: reference + ring-current shift + π-charge term.

    Kept as an explicit function so that every caller adds the same three parts with the same signs.

    Parameters
    ----------
    ref_ppm : array_like, shape (n,)
        Ring-current-free reference δ, ppm vs TMS.
    ring_current_ppm : array_like, shape (n,)
        Ring-current shift Δδ_rc = −σ_rc, ppm (positive = downfield).
    charge_ppm : array_like, shape (n,)
        π-charge shift, ppm (positive = downfield), computed separately from the ring current.

    Returns
    -------
    numpy.ndarray, shape (n,), float64
        δ_pred in ppm vs TMS.

    Raises
    ------
    InputError
        An input is not 1-D, not finite, or the lengths differ.
    """
    ref, rc, q = (_v.vector(ref_ppm, "ref_ppm", "ppm values"),
                  _v.vector(ring_current_ppm, "ring_current_ppm", "ppm values"),
                  _v.vector(charge_ppm, "charge_ppm", "ppm values"))
    if not ref.shape == rc.shape == q.shape:
        raise InputError(f"lengths are {ref.shape[0]}, {rc.shape[0]}, {q.shape[0]}; expected ref_ppm, "
                         "ring_current_ppm and charge_ppm of equal length (one value per proton)",
                         source="assemble_prediction")
    return ref + rc + q
