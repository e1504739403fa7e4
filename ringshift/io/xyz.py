"""The one XYZ parser: frames of a one- or multi-frame XYZ text, from any iterator of lines.

Used by the structure reader :mod:`ringshift.io.molecule_files` (a structure file, every frame required whole) and
:func:`ringshift.io.frames.iter_xyz_frames` (a trajectory read as a stream, where a frame cut short by
the end of the file may be skipped). Format: an atom count line, a comment line, then one
``element x y z`` line per atom (Å; the element as a symbol in any case, or an atomic number). Blank
lines between frames are allowed. Every frame must list the atoms of the first frame in the same order.
A first frame whose bonded distances read as bohr, pm or nm rather than Å is refused with that diagnosis
(:func:`unit_problem`).
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass

import numpy as np
from rdkit import Chem

from ringshift import limits as _limits
from ringshift.errors import InputError

__all__ = ["XyzFrame", "parse_xyz_frames", "element_symbol", "unit_problem", "BOHR_A"]

_PT = Chem.GetPeriodicTable()
_COUNT = re.compile(r"[0-9]{1,12}")

#: The bohr radius in Å (CODATA 2018, scipy.constants.physical_constants["Bohr radius"]).
BOHR_A = 0.529177210903

#: Nearest-neighbour distances of bonded H, C, N and O atoms in Å: 0.74 (H2) to 1.60 (a long C–C);
#: C–H 1.09, C–C 1.20–1.54, C=O 1.21 (CRC Handbook of Chemistry and Physics, bond lengths; from memory).
_NN_RANGE_A = (0.70, 1.65)

_ORGANIC = ("H", "C", "N", "O")


def unit_problem(symbols, coords) -> str | None:
    """A one-line diagnosis when the coordinates of one frame are not in Å, else None.

    The median nearest-neighbour distance of the H, C, N and O atoms (bonded atoms: 0.7–1.65 Å) is compared
    with the same range in bohr (× 0.529 Å), picometres (/ 100) and nanometres (× 10). Frames with fewer than
    three such atoms, or where they are fewer than half of all atoms, are not judged (a metal cluster or an
    inorganic salt has longer bonds).

    Parameters
    ----------
    symbols : sequence of str, element symbols (n,)
    coords : (n, 3) array_like, the frame as written in the file
    """
    x = np.asarray(coords, dtype=np.float64)
    sel = [k for k, sym in enumerate(symbols) if sym in _ORGANIC]
    if len(sel) < 3 or 2 * len(sel) < len(symbols) or not np.all(np.abs(x) <= _limits.MAX_ABS_COORDINATE_A):
        return None                                     # too few to judge, or beyond the limits' own refusal
    xs = x[sel]
    nearest = np.empty(len(sel))
    for start in range(0, len(sel), 256):    # row blocks: memory ~256 × n, not n² × 3 (700 MB for 3202 atoms)
        d = np.linalg.norm(xs[start:start + 256, None, :] - xs[None, :, :], axis=2)
        d[np.arange(d.shape[0]), start + np.arange(d.shape[0])] = np.inf
        nearest[start:start + d.shape[0]] = d.min(axis=1)
    nearest = np.sort(nearest)                       # the median by hand: np.median loads numpy.ma (~30 ms)
    nn = float(0.5 * (nearest[(len(nearest) - 1) // 2] + nearest[len(nearest) // 2]))
    lo, hi = _NN_RANGE_A
    if lo <= nn <= hi:
        return None
    for unit, factor in (("bohr", BOHR_A), ("pm", 0.01), ("nm", 10.0)):
        if lo <= nn * factor <= hi:
            return (f"coordinates look like {unit}, expected Å: the median nearest-neighbour distance of the H, C, "
                    f"N and O atoms is {nn:.3g}, which is {nn * factor:.2f} Å in {unit} (bonded atoms: "
                    f"{lo}–{hi} Å); convert the file to Å")
    if nn > hi:
        return (f"atoms too far apart for a molecule: the median nearest-neighbour distance of the H, C, N and O "
                f"atoms is {nn:.3g} Å (bonded atoms: {lo}–{hi} Å); expected one molecule in Å")
    return None


@dataclass(frozen=True)
class XyzFrame:
    """One parsed frame: 1-based ``number``, ``line`` of its count line, ``symbols``, ``coords``
    (n_atoms, 3) float64 Å and the ``comment`` line (stripped)."""

    number: int
    line: int
    symbols: tuple[str, ...]
    coords: np.ndarray
    comment: str


def element_symbol(token: str) -> str | None:
    """Element symbol of an XYZ atom token (symbol in any case, or atomic number 1–118), else None."""
    if _COUNT.fullmatch(token):
        z = int(token)
        return _PT.GetElementSymbol(z) if 1 <= z <= 118 else None
    sym = token.capitalize()
    try:
        return sym if _PT.GetAtomicNumber(sym) > 0 else None
    except RuntimeError:
        return None


def _floats(items) -> bool:
    try:
        [float(v) for v in items]
        return True
    except ValueError:
        return False


def parse_xyz_frames(lines: Iterable[str], source: str,
                     on_truncated: Callable[[int, str, str], None] | None = None) -> Iterator[XyzFrame]:
    """Parse XYZ frames from an iterable of text lines, one frame at a time.

    Parameters
    ----------
    lines : iterable of str
        The file's lines (with or without line ends); read lazily.
    source : str
        File name used in error messages (``source:line``).
    on_truncated : callable (number, reason, where) or None
        Called for a final frame cut short by the end of the input (fewer atom lines than announced, or
        a last line without x y z); parsing then stops. None: such a frame is an error.

    Yields
    ------
    XyzFrame
    """
    it = iter(lines)
    line_no = 0
    ref_tokens: list[str] | None = None
    ref_symbols: tuple[str, ...] | None = None
    number = 0

    def nxt() -> str | None:
        nonlocal line_no
        try:
            text = next(it)
        except StopIteration:
            return None
        line_no += 1
        return text

    while (head := nxt()) is not None:
        if not head.strip():
            continue
        number += 1
        start = line_no
        parts = head.split()
        if len(parts) != 1 or not _COUNT.fullmatch(parts[0]) or int(parts[0]) < 1:
            hint = "; is the previous frame's count right?" if number > 1 else ""
            raise InputError(f"expected the atom count of frame {number} (one positive integer), got "
                             f"{head.strip()[:40]!r}{hint}", source=f"{source}:{start}")
        n = int(parts[0])
        _limits.check_count(n, _limits.MAX_ATOMS, f"atoms in frame {number}", f"{source}:{start}")
        _limits.check_count(number, _limits.MAX_RECORDS, "XYZ frames", f"{source}:{start}")
        if ref_symbols is not None and n != len(ref_symbols):
            raise InputError(f"frame {number} has {n} atoms, frame 1 has {len(ref_symbols)}; every frame "
                             f"needs the same atoms in the same order", source=f"{source}:{start}")
        comment = nxt()
        rows_text: list[str] = []
        for _ in range(n):
            text = nxt()
            if text is None:
                break
            rows_text.append(text)
        rows = [t.split() for t in rows_text]
        at_end = False
        if comment is not None and len(rows) == n and len(rows[-1]) < 4:
            # a last atom line without x y z counts as a cut, but only at the very end of the input
            probe = nxt()
            at_end = probe is None
            if probe is not None:
                it = _chain(probe, it)
                line_no -= 1
        if comment is None or len(rows) < n or at_end:
            complete = len(rows) - (1 if rows and len(rows[-1]) < 4 else 0)
            reason = (f"frame {number} is truncated (announces {n} atoms, the file ends after {complete} "
                      f"complete atom lines)")
            if on_truncated is None:
                raise InputError(reason, source=f"{source}:{start}")
            on_truncated(number, reason, f"{source}:{start}")
            return
        tokens = [r[0] if r else "" for r in rows]
        for k, r in enumerate(rows):
            if len(r) < 4 or not _floats(r[1:4]) or element_symbol(r[0]) is None:
                what = f": unknown element {r[0]!r}" if len(r) >= 4 and _floats(r[1:4]) else ""
                if what and r[0].capitalize() in ("D", "T"):
                    what += " (XYZ carries no isotopes; give ²H/³H as [2H]/[3H] in a SMILES or as a MOL/SDF file)"
                raise InputError(f"expected 'element x y z' (atom {k + 1} of {n}, frame {number}), got "
                                 f"{rows_text[k].strip()[:40]!r}{what}", source=f"{source}:{start + 2 + k}")
        xyz = np.array([r[1:4] for r in rows], dtype=np.float64)
        if not np.all(np.isfinite(xyz)):
            k = int(np.flatnonzero(~np.all(np.isfinite(xyz), axis=1))[0])
            raise InputError(f"non-finite coordinate in frame {number}", source=f"{source}:{start + 2 + k}")
        if ref_tokens is None or ref_symbols is None:  # frame 1 (both are set together)
            ref_tokens = tokens
            ref_symbols = tuple(element_symbol(t) or "" for t in tokens)
        elif tokens != ref_tokens:
            syms = tuple(element_symbol(t) or "" for t in tokens)
            if syms != ref_symbols:
                k = next(k for k, (a, b) in enumerate(zip(syms, ref_symbols)) if a != b)
                raise InputError(f"frame {number} does not list the atoms of frame 1 in the same order (atom "
                                 f"{k + 1} is {tokens[k]}, frame 1 has {ref_tokens[k]})",
                                 source=f"{source}:{start + 2 + k}")
        if number == 1 and (why := unit_problem(ref_symbols, xyz)):
            raise InputError(why, source=f"{source}:{start} (frame 1)")
        _limits.check_coordinates(xyz[None], list(ref_symbols), f"{source}:{start} (frame {number})")
        yield XyzFrame(number, start, ref_symbols, xyz, comment.strip())


def _chain(first: str, rest: Iterator[str]) -> Iterator[str]:
    yield first
    yield from rest
