"""The one validation gate of the library API: checks of numbers, choices, arrays and molecules.

Every public function checks its arguments here, so one kind of mistake gives one kind of message. An
error is an :class:`~ringshift.errors.InputError` whose ``source`` is the name of the API parameter
(``model``, ``coords``, ``noise_ppm`` ...); the message says what arrived and what was expected. The
command line maps parameter names to its options (:data:`ringshift.cli.OPTION_OF_PARAMETER`), so the
library never names a command-line flag.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from numbers import Real

import numpy as np

from ringshift.errors import InputError

__all__ = ["real", "optional_real", "integer", "choice", "label_numbers", "index_lists", "array", "unit_vector",
           "vector", "nonzero_segments", "molecule", "coordinates"]


def real(value, param: str, *, positive: bool = False, nonneg: bool = False, minimum: float | None = None,
         maximum: float | None = None) -> float:
    """A finite real number (not a bool), optionally > 0, ≥ 0 or within [minimum, maximum]."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (Real, np.floating, np.integer)):
        raise InputError(f"expected a real number, got {value!r}", param)
    out = float(value)
    if not math.isfinite(out):
        raise InputError(f"expected a finite number, got {out}", param)
    if positive and out <= 0.0:
        raise InputError(f"expected a number > 0, got {out:g}", param)
    if nonneg and out < 0.0:
        raise InputError(f"expected a number >= 0, got {out:g}", param)
    if (minimum is not None and out < minimum) or (maximum is not None and out > maximum):
        lo = "-inf" if minimum is None else f"{minimum:g}"
        hi = "inf" if maximum is None else f"{maximum:g}"
        raise InputError(f"expected a number in [{lo}, {hi}], got {out:g}", param)
    return out


def optional_real(value, param: str, *, minimum: float | None = None, strict: bool = False) -> float | None:
    """None, or a finite number (text such as "7.26" accepted) ≥ minimum (> minimum when ``strict``)."""
    if value is None:
        return None
    try:
        out = float(value)
    except (TypeError, ValueError):
        out = math.nan
    if not math.isfinite(out) or (minimum is not None and (out <= minimum if strict else out < minimum)):
        rule = "" if minimum is None else f" {'>' if strict else '≥'} {minimum:g}"
        raise InputError(f"got {value!r}; expected a finite number{rule}", param)
    return out


def integer(value, param: str, *, minimum: int | None = None, maximum: int | None = None) -> int:
    """An int (not a bool), optionally within [minimum, maximum]."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
        raise InputError(f"expected an integer, got {value!r}", param)
    out = int(value)
    if (minimum is not None and out < minimum) or (maximum is not None and out > maximum):
        raise InputError(f"expected an integer in [{minimum}, {maximum}], got {out}", param)
    return out


def choice(value, choices: Iterable[str], param: str, what: str = "value") -> str:
    """One of ``choices`` (exact match; anything that is not a str, e.g. a list or an array, is refused too)."""
    options = tuple(choices)
    if not isinstance(value, str) or value not in options:
        raise InputError(f"unknown {what} {value!r}; expected one of {', '.join(options)}", param)
    return value


#: Longest compound name accepted for titles (characters).
MAX_NAME_CHARS = 200


def compound_name(value, param: str = "name") -> str | None:
    """A compound's display name for titles: None, or one line of 1–200 printable characters (stripped)."""
    if value is None:
        return None
    if not isinstance(value, str):
        raise InputError(f"expected a text (the compound's name), got {type(value).__name__}", param)
    text = value.strip()
    if not text or len(text) > MAX_NAME_CHARS or not text.isprintable():
        raise InputError(f"expected one line of 1 to {MAX_NAME_CHARS} printable characters, got {value[:40]!r}"
                         f"{'...' if len(value) > 40 else ''}", param)
    return text


def label_numbers(value, param: str) -> dict[str, float] | None:
    """None, or a mapping of circuit label (str) to a finite number, as a new dict of floats."""
    from collections.abc import Mapping

    if value is None:
        return None
    if not isinstance(value, Mapping):
        raise InputError(f"expected a mapping of circuit label to number, e.g. {{'R1': 0.8}}, got "
                         f"{type(value).__name__}", param)
    for key, num in value.items():
        if not isinstance(key, str):
            raise InputError(f"expected circuit labels (str) as keys, got {key!r}", param)
        real(num, param)
    return {k: float(v) for k, v in value.items()}


def index_lists(value, param: str) -> list[list[int]] | None:
    """None, or a list of circuits, each a list of int atom indices (not bools), as new lists of int."""
    from numbers import Integral

    def listlike(x) -> bool:
        return hasattr(x, "__len__") and hasattr(x, "__iter__") and not isinstance(x, (str, bytes, dict))

    if value is None:
        return None
    if not (listlike(value) and all(listlike(c) and all(isinstance(a, Integral) and not isinstance(a, bool)
                                                        for a in c) for c in value)):
        raise InputError("expected a list of circuits, each a list of 0-based atom indices in ring order, "
                         f"e.g. [[0, 1, 2, 3, 4, 5]], got {value!r}", param)
    return [[int(a) for a in c] for c in value]


def array(x, param: str, shape: tuple[int, ...], what: str) -> np.ndarray:
    """Float64 C-contiguous array of a fixed shape pattern (``-1`` = any length) with finite values."""
    try:
        arr = np.ascontiguousarray(x, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"expected {what} of numbers, got {type(x).__name__}", param) from None
    if arr.ndim != len(shape) or any(s != -1 and s != t for s, t in zip(shape, arr.shape)):
        raise InputError(f"expected {what}, got an array of shape {arr.shape}", param)
    if not np.all(np.isfinite(arr)):
        raise InputError("contains NaN or inf; expected finite coordinates/values", param)
    return arr


def unit_vector(x, param: str) -> np.ndarray:
    """A non-zero (3,) vector, normalised."""
    v = array(x, param, (3,), "a vector of shape (3,)")
    norm = float(np.linalg.norm(v))
    if norm < 1e-12:
        raise InputError("the normal/direction has zero length; expected a non-zero (3,) vector", param)
    return v / norm


def vector(values, param: str, what: str = "values") -> np.ndarray:
    """A 1-D float64 array (n,) of finite numbers."""
    try:
        arr = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"got {type(values).__name__}; expected a 1-D array of {what}", param) from None
    if arr.ndim != 1:
        raise InputError(f"has shape {arr.shape}; expected a 1-D array (n,) of {what}", param)
    if not np.all(np.isfinite(arr)):
        raise InputError(f"contains NaN or infinity; expected finite {what}", param)
    return arr


def nonzero_segments(starts: np.ndarray, ends: np.ndarray, param: str) -> None:
    """Every segment start→end (both (m, 3)) has a non-zero length."""
    if np.any(np.einsum("ij,ij->i", ends - starts, ends - starts) < 1e-12):
        raise InputError("a segment has zero length; expected distinct start and end points", param)


def molecule(mol, param: str = "mol") -> None:
    """An RDKit molecule."""
    from rdkit import Chem

    if not isinstance(mol, Chem.Mol):
        raise InputError(f"expected an RDKit Chem.Mol, got {type(mol).__name__}", param)


def coordinates(mol, coords, param: str = "coords", *, required: bool = False) -> np.ndarray | None:
    """One conformer of ``mol`` as a finite (n_atoms, 3) float64 array in Å, or None when not required."""
    if coords is None:
        if required:
            raise InputError("required here; pass one conformer as an (n_atoms, 3) array in Å", param)
        return None
    try:
        xyz = np.ascontiguousarray(coords, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"expected an (n_atoms, 3) array of numbers, got {type(coords).__name__}", param) from None
    n = mol.GetNumAtoms()
    if xyz.shape != (n, 3):
        raise InputError(f"expected shape ({n}, 3) for this molecule, got {xyz.shape}", param)
    if not np.all(np.isfinite(xyz)):
        raise InputError("contains NaN or inf; expected finite coordinates in Å", param)
    return xyz
