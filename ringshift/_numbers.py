"""The one place where numbers are rounded and formatted for output.

:func:`rounded` is used for the JSON of predictions, trajectories and π summaries (and the CSV/DataFrame
forms made from it): a float rounded to a fixed number of decimals, ``None`` for missing or non-finite
values, never ``-0.0``. Comparison results keep full precision (``None`` for non-finite values).
:func:`text` is used for tables, figures and the HTML report: Python format specs, a stated placeholder
for missing values, and never a negative zero ("-0.00" prints as "0.00"; "+0.00" stays as it is).
Human-readable outputs (text, HTML, figures) write ± for uncertainties, × for ratios and multiples, Å
for lengths and ° for angles.
"""

from __future__ import annotations

import math

__all__ = ["FLOAT_DIGITS", "rounded", "text"]

#: Decimals kept in JSON for shifts (ppm), currents (nA/T) and lengths (Å).
FLOAT_DIGITS = 4


def _finite(x) -> float | None:
    """``x`` as a float, or None for None, NaN or ±inf."""
    if x is None:
        return None
    value = float(x)
    return value if math.isfinite(value) else None


def rounded(x, nd: int = FLOAT_DIGITS) -> float | None:
    """``x`` rounded to ``nd`` decimals as a float; None for None, NaN or ±inf; 0.0 instead of -0.0."""
    value = _finite(x)
    if value is None:
        return None
    v = round(value, nd)
    return 0.0 if v == 0 else v


def text(x, spec: str = ".2f", missing: str = "") -> str:
    """``format(x, spec)`` without negative zeros; ``missing`` for None or non-finite values."""
    value = _finite(x)
    if value is None:
        return missing
    out = format(value, spec)
    try:
        if float(out) == 0.0:       # "-0.00" (or "-0.000e+00") comes from a tiny negative value
            out = format(0.0, spec)
    except ValueError:              # specs whose output is not a plain number (e.g. "%")
        pass
    return out
