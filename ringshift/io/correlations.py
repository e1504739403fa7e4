"""H–H correlation lists (COSY cross peaks) from a small CSV of our own, and their match to observed peaks.

File layout (one header row, then one row per cross peak; ``#`` lines are comments)::

    # tolerance_ppm = 0.03          (optional; default 0.05 ppm)
    shift_a_ppm,shift_b_ppm,kind,strength
    7.21,2.35,cosy,strong
    p3,6.54,vicinal,

* ``shift_a_ppm``, ``shift_b_ppm`` (required): the two ends of the cross peak, in ppm; a cell that is not
  a number names a peak by its ``label`` in the peak list instead (exact text, case-insensitive).
* ``kind`` (optional): which H–H paths through bonds may give the cross peak: ``cosy`` (default: 3 or 4
  bonds, H–C–C–H or H–C–C–C–H), ``vicinal`` (3 bonds), ``long-range`` (4 bonds) or ``geminal``
  (2 bonds, diastereotopic CH2).
* ``strength`` (optional): free text or a number (e.g. ``strong``, ``weak``); kept and reported, not used.

Delimiter: tab, ``;`` or ``,`` (the first found in the header row). Each end is matched to the peak whose
shift lies nearest, within the tolerance; no peak within it, or two peaks at nearly the same distance
(the nearest not at most half as far as the next), is an error naming the file and row.
"""

from __future__ import annotations

import csv
import math
import os
import re
from dataclasses import dataclass

from ringshift import limits as _limits
from ringshift.comparison.couplings import CORRELATION_KINDS
from ringshift.errors import InputError

__all__ = ["Correlation", "CorrelationList", "MatchedCorrelation", "CORRELATION_KINDS", "parse_correlations",
           "read_correlations", "match_correlations"]


#: Default matching tolerance between a cross-peak coordinate and a 1D peak, ppm. The F1 axis of a routine
#: COSY has a digital resolution of a few hundredths of a ppm (common practice, no source).
DEFAULT_TOLERANCE_PPM: float = 0.05

_COLUMNS = {
    "a": ("shift_a_ppm", "shift_a", "a_ppm", "ppm_a", "shift1_ppm", "f2_ppm", "peak_a"),
    "b": ("shift_b_ppm", "shift_b", "b_ppm", "ppm_b", "shift2_ppm", "f1_ppm", "peak_b"),
    "kind": ("kind", "type"),
    "strength": ("strength", "intensity"),
}
_HEADER_TO_FIELD = {name: field for field, names in _COLUMNS.items() for name in names}
_FLOAT = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_TOLERANCE = re.compile(r"^#\s*tolerance_ppm\s*[:=]\s*(\S+)\s*$", re.I)


@dataclass(frozen=True)
class Correlation:
    """One cross peak as written: each end a shift (ppm, float) or a peak label (str); ``line`` 1-based."""

    a: float | str
    b: float | str
    kind: str = "cosy"
    strength: str | None = None
    line: int | None = None


@dataclass(frozen=True)
class CorrelationList:
    """The rows of one correlation file, its ``source`` and matching ``tolerance_ppm``."""

    rows: tuple[Correlation, ...]
    source: str
    tolerance_ppm: float = DEFAULT_TOLERANCE_PPM


@dataclass(frozen=True)
class MatchedCorrelation:
    """A cross peak matched to two observed peaks (0-based indices into the peak list, ``peak_a`` ≠ ``peak_b``)."""

    peak_a: int
    peak_b: int
    kind: str
    strength: str | None
    where: str


def _key(cell: str) -> str:
    text = re.sub(r"[(\[].*?[)\]]", "", cell.strip().lower())
    return re.sub(r"[\s\-]+", "_", text.strip())


def _end(cell: str, where: str) -> float | str:
    text = cell.strip().replace("\u2212", "-")
    if not text:
        raise InputError("empty shift cell; expected a shift in ppm or a peak label", where)
    if _FLOAT.match(text):
        value = float(text)
        if not math.isfinite(value) or not -20.0 <= value <= 40.0:
            raise InputError(f"shift {text} ppm outside -20…40 ppm", where)
        return value
    return text


def parse_correlations(text: str, *, source: str = "<string>") -> CorrelationList:
    """Parse the text of a correlation file (layout in the module notes); returns a :class:`CorrelationList`."""
    _limits.check_lines(text, source)
    tolerance = DEFAULT_TOLERANCE_PPM
    rows: list[tuple[int, str]] = []
    for lineno, line in enumerate(text.lstrip("\ufeff").splitlines(), 1):
        stripped = line.strip()
        m = _TOLERANCE.match(stripped)
        if m:
            value = float(m.group(1)) if _FLOAT.match(m.group(1)) else float("nan")
            if not 0.0 < value <= 1.0:
                raise InputError(f"{stripped!r}; expected a tolerance in ppm, 0 < t ≤ 1", f"{source}:{lineno}")
            tolerance = value
        elif stripped and not stripped.startswith("#"):
            rows.append((lineno, line))
    if not rows:
        raise InputError("empty correlation list: expected a header row 'shift_a_ppm,shift_b_ppm' and rows", source)
    head_line, header = rows[0]
    delim = next((d for d in ("\t", ";", ",") if d in header), None)
    if delim is None:
        raise InputError("the header row has no separator; expected 'shift_a_ppm,shift_b_ppm' (tab, ';' or ',')",
                         f"{source}:{head_line}")
    names = [c.strip() for c in next(csv.reader([header], delimiter=delim))]
    fields: dict[str, int] = {}
    for col, cell in enumerate(names):
        field = _HEADER_TO_FIELD.get(_key(cell))
        if field is not None and field in fields:
            raise InputError(f"two columns give {field} ({names[fields[field]]!r} and {cell!r})",
                             f"{source}:{head_line}")
        if field is not None:
            fields[field] = col
    if "a" not in fields or "b" not in fields:
        raise InputError(f"columns {names}; expected shift_a_ppm and shift_b_ppm", f"{source}:{head_line}")
    if len(rows) == 1:
        raise InputError("header row but no correlation rows", source)
    _limits.check_count(len(rows) - 1, _limits.MAX_PEAKS, "correlation rows", source)
    out = []
    for lineno, line in rows[1:]:
        where = f"{source}:{lineno}"
        cells = next(csv.reader([line], delimiter=delim, skipinitialspace=True))
        if any(c.strip() for c in cells[len(names):]):
            raise InputError(f"row has {len(cells)} cells but the header has {len(names)}", where)
        cells += [""] * (len(names) - len(cells))
        get = {f: cells[i].strip() for f, i in fields.items()}
        kind = get.get("kind", "").lower() or "cosy"
        if kind not in CORRELATION_KINDS:
            raise InputError(f"kind {kind!r}; expected one of {', '.join(CORRELATION_KINDS)}", where)
        out.append(Correlation(_end(get["a"], where), _end(get["b"], where), kind, get.get("strength") or None,
                               lineno))
    return CorrelationList(tuple(out), source, tolerance)


def read_correlations(path: str | os.PathLike) -> CorrelationList:
    """Read a correlation file (CSV/TSV, layout in the module notes); returns a :class:`CorrelationList`.

    Raises InputError (one line naming the file and row) for a missing file, a missing header or shift
    column, a shift outside −20…40 ppm, an unknown kind or a bad ``# tolerance_ppm`` line.
    """
    name = os.fspath(path)
    raw = _limits.read_text_bytes(name, "an H-H correlation list (CSV/TSV)")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    return parse_correlations(text, source=name)


def _match_end(end: float | str, peaks, tolerance: float, where: str) -> int:
    if isinstance(end, str):
        hits = [k for k, p in enumerate(peaks) if (p.label or "").strip().lower() == end.lower()]
        if len(hits) != 1:
            what = "no peak" if not hits else f"{len(hits)} peaks"
            raise InputError(f"{what} of the peak list {'is' if not hits else 'are'} labelled {end!r}; expected "
                             "a shift in ppm or the label of exactly one peak", where)
        return hits[0]
    dist = sorted((abs(float(p.shift_ppm) - end), k) for k, p in enumerate(peaks))
    near = [(d, k) for d, k in dist if d <= tolerance + 1e-9]
    if not near:
        closest = f"; the nearest peak is at {peaks[dist[0][1]].shift_ppm:.3f} ppm" if dist else ""
        raise InputError(f"{end:g} ppm matches no peak within {tolerance:g} ppm{closest}", where)
    if len(near) > 1 and near[0][0] > 0.5 * near[1][0]:
        shown = " and ".join(f"{peaks[k].shift_ppm:.3f}" for _, k in near[:2])
        raise InputError(f"{end:g} ppm matches peaks at {shown} ppm within {tolerance:g} ppm; ambiguous: name the "
                         "peak by its label or set a smaller '# tolerance_ppm ='", where)
    return near[0][1]


def match_correlations(correlations: CorrelationList, peaks) -> tuple[MatchedCorrelation, ...]:
    """Match both ends of every cross peak to the observed peaks.

    Parameters
    ----------
    correlations : CorrelationList
    peaks : sequence of peaks with ``shift_ppm`` (ppm), ``label`` and ``kind`` (the peak list, length P)

    Returns
    -------
    tuple of MatchedCorrelation
        One per row, in file order; a repeated pair (either order, same kind) is kept once.

    Raises
    ------
    InputError
        An end that matches no peak, two peaks almost equally near, both ends on one peak, or an end on a
        solvent, reference or impurity line; the message names the file and row.
    """
    out: list[MatchedCorrelation] = []
    seen: set[tuple[int, int, str]] = set()
    for row in correlations.rows:
        where = f"{correlations.source}:{row.line}" if row.line else correlations.source
        a = _match_end(row.a, peaks, correlations.tolerance_ppm, where)
        b = _match_end(row.b, peaks, correlations.tolerance_ppm, where)
        if a == b:
            raise InputError(f"both ends match the peak at {peaks[a].shift_ppm:.3f} ppm; a diagonal peak is not a "
                             "correlation", where)
        for k in (a, b):
            if getattr(peaks[k], "kind", "sample") not in ("sample", "signal"):
                raise InputError(f"the peak at {peaks[k].shift_ppm:.3f} ppm is a {peaks[k].kind} line, not a signal "
                                 "of the molecule (give it kind 'sample' in the peak list if it is one)", where)
        key = (min(a, b), max(a, b), row.kind)
        if key in seen:
            continue
        seen.add(key)
        out.append(MatchedCorrelation(a, b, row.kind, row.strength, where))
    return tuple(out)
