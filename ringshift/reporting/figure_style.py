"""The look shared by every figure: colours, matplotlib rc style (applied locally), and saving a figure.

Figures are built on the object-oriented API (``matplotlib.figure.Figure``, Agg), never pyplot, under a
local ``rc_context(STYLE)``; SVG text stays editable (``svg.fonttype = 'none'``) and output is made
reproducible (fixed hash salt, no dates in metadata). Used by :mod:`ringshift.reporting.figures`,
:mod:`ringshift.reporting.maps` and :mod:`ringshift.reporting.level_diagram`.
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any

from matplotlib import rc_context
from matplotlib.figure import Figure

from ringshift.errors import InputError
from ringshift.io.writing import atomic_write

#: Colours: distinct in hue and in lightness (greyscale: FITTED mid, PRIOR light, OBSERVED dark).
INK = "#1c1c1c"


OBSERVED = "#202a36"


FITTED = "#b4531c"


PRIOR = "#8c8c8c"


REFERENCE = "#4f6d3a"


MUTED = "#a6a6a6"


UNASSIGNED = "#7a1f1f"


#: rc parameters applied while a figure is built and saved (local rc_context, never global).
STYLE: dict[Any, Any] = {  # matplotlib types the keys as a Literal of rc names
    "font.family": "DejaVu Sans", "font.size": 8.5, "axes.titlesize": 9.5, "axes.titlelocation": "left",
    "axes.labelsize": 8.5, "axes.spines.top": False, "axes.spines.right": False, "axes.linewidth": 0.7,
    "xtick.major.width": 0.7, "ytick.major.width": 0.7, "legend.frameon": False, "legend.fontsize": 8,
    "svg.fonttype": "none", "svg.hashsalt": "ringshift", "pdf.fonttype": 42, "savefig.dpi": 150,
    "hatch.linewidth": 0.6, "hatch.color": PRIOR,
}


_FORMATS = {".png": "png", ".svg": "svg", ".pdf": "pdf"}


# ------------------------------------------------------------------------------------------ saving
def figure_bytes(fig: Figure, fmt: str) -> bytes:
    """Render a figure to ``png``, ``svg`` or ``pdf`` bytes (SVG text kept as text)."""
    if fmt not in _FORMATS.values():
        raise InputError(f"unknown figure format {fmt!r}; expected png, svg or pdf", "format")
    buf = io.BytesIO()
    with rc_context(STYLE):
        fig.savefig(buf, format=fmt, metadata=_metadata(fmt))
    return buf.getvalue()


def _metadata(fmt: str):
    # fixed metadata keeps files reproducible (no creation date)
    if fmt == "svg":
        return {"Date": None, "Creator": "ringshift"}
    if fmt == "pdf":
        return {"CreationDate": None, "Creator": "ringshift"}
    return {"Software": "ringshift"}


def save_figure(fig: Figure, path, *, force: bool = False) -> Path:
    """Write a figure as PNG, SVG or PDF (by the file extension), atomically.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    path : str or os.PathLike
        Ends in ``.png``, ``.svg`` or ``.pdf``.
    force : bool
        Overwrite an existing file.

    Returns
    -------
    pathlib.Path
        The written path. Raises :class:`~ringshift.errors.InputError` for another extension and
        :class:`~ringshift.errors.OutputError` when the file exists (without ``force``) or the folder
        cannot be written.
    """
    p = Path(path)
    fmt = _FORMATS.get(p.suffix.lower())
    if fmt is None:
        raise InputError(f"cannot tell the figure format from {p.name!r}; expected a .png, .svg or .pdf file",
                         str(path))
    return atomic_write(p, figure_bytes(fig, fmt), force=force)
