"""Plain-data conversion of result records: dataclasses and numpy values to JSON-able Python types.
"""

from __future__ import annotations

import dataclasses
import math
from numbers import Integral, Real

import numpy as np


# ------------------------------------------------------------------------ results per circuit
def fields_to_plain(obj) -> dict:
    """The fields of a dataclass instance as a dict of plain JSON-able values."""
    return {f.name: to_plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}


def to_plain(value):
    """Recursively convert dataclasses, tuples and numpy scalars to JSON-able Python types.

    A nested result record is converted by its own ``to_dict()``, so every record looks the same
    wherever it appears.
    """
    if isinstance(value, ToDictMixin):
        return value.to_dict()
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return fields_to_plain(value)
    if isinstance(value, (list, tuple)):
        return [to_plain(v) for v in value]
    if isinstance(value, dict):
        return {str(k): to_plain(v) for k, v in value.items()}
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (Integral, np.integer)):
        return int(value)
    if isinstance(value, (Real, np.floating)):
        out = float(value)
        return out if math.isfinite(out) else None     # JSON has no NaN/inf: a missing value

    if isinstance(value, np.ndarray):
        return to_plain(value.tolist())
    return value


class ToDictMixin:
    """Gives a frozen result dataclass a ``to_dict()`` of plain JSON-able types."""

    def to_dict(self) -> dict:
        """Plain JSON-able dict (floats, ints, str, lists, None)."""
        return fields_to_plain(self)
