"""Solvent-residual and TMS lines of a peak list.

:data:`SOLVENT_RESIDUAL_PPM` holds the residual ¹H lines of common deuterated solvents (Fulmer et al.,
Organometallics 2010, 29, 2176). :func:`flag_reference_peaks` marks a peak within
:data:`REFERENCE_TOLERANCE_PPM` (0.03 ppm) of the chosen solvent's line as ``kind="solvent"`` and one
within it of 0.00 ppm as ``kind="tms"``; peaks whose kind the user gave are left alone.
"""

from __future__ import annotations

import re
from dataclasses import replace

from ringshift._numbers import text
from ringshift.errors import InputError
from ringshift.spectra.peaks import Peak

__all__ = ['flag_reference_peaks']


#: Tolerance for flagging solvent-residual and TMS peaks, ppm.
REFERENCE_TOLERANCE_PPM: float = 0.03

#: Residual ¹H signals of deuterated solvents, ppm (Fulmer et al., Organometallics 2010, 29, 2176;
#: from memory). Water signals are not flagged: they move with temperature and concentration.
SOLVENT_RESIDUAL_PPM: dict[str, tuple[float, ...]] = {
    "CDCl3": (7.26,), "DMSO-d6": (2.50,), "acetone-d6": (2.05,), "CD2Cl2": (5.32,), "C6D6": (7.16,),
    "THF-d8": (1.72, 3.58), "CD3OD": (3.31,), "D2O": (4.79,), "CD3CN": (1.94,),
    "toluene-d8": (2.08, 6.97, 7.01, 7.09)}

_SOLVENT_ALIASES = {re.sub(r"[\s\-_()]", "", k).lower(): k for k in SOLVENT_RESIDUAL_PPM} | {
    "chloroformd": "CDCl3", "chloroform": "CDCl3", "dmso": "DMSO-d6", "cd32so": "DMSO-d6", "acetone": "acetone-d6",
    "cd32co": "acetone-d6", "dichloromethaned2": "CD2Cl2", "benzened6": "C6D6", "tetrahydrofurand8": "THF-d8",
    "methanold4": "CD3OD", "acetonitriled3": "CD3CN", "c7d8": "toluene-d8"}

# ------------------------------------------------------------------------- flags and integrals
def _solvent_name(solvent: str) -> str:
    key = re.sub(r"[\s\-_()]", "", str(solvent)).lower()
    if key not in _SOLVENT_ALIASES:
        raise InputError(f"solvent {solvent!r} unknown; expected one of {', '.join(SOLVENT_RESIDUAL_PPM)}",
                         "solvent")
    return _SOLVENT_ALIASES[key]


def _flag(peaks, solvent, flag_tms, tolerance, eligible=None):
    refs = [(s, "solvent", _solvent_name(solvent)) for s in SOLVENT_RESIDUAL_PPM[_solvent_name(solvent)]] \
        if solvent is not None else []
    if flag_tms:
        refs.append((0.0, "tms", "TMS"))
    out, notes = [], []
    for i, p in enumerate(peaks):
        hit = next((r for r in refs if abs(p.shift_ppm - r[0]) <= tolerance), None)
        if hit and p.kind == "sample" and (eligible is None or eligible[i]):
            p = replace(p, kind=hit[1])
            where = f" (line {p.line})" if p.line else ""
            notes.append(f"peak at {text(p.shift_ppm, '.3f')} ppm{where} flagged as {hit[2]} ({hit[0]:.2f} ppm); "
                         "not assigned")
        out.append(p)
    return tuple(out), notes


def flag_reference_peaks(peaks, *, solvent: str | None = None, flag_tms: bool = True,
                         tolerance_ppm: float = REFERENCE_TOLERANCE_PPM) -> tuple[Peak, ...]:
    """Mark sample peaks within ``tolerance_ppm`` of the solvent's residual signal(s) ``kind="solvent"``
    and (``flag_tms``) of 0.00 ppm ``kind="tms"``, so they are reported, not assigned.

    ``solvent`` is a key or alias of :data:`SOLVENT_RESIDUAL_PPM` ("CDCl3", "DMSO-d6", "benzene-d6",
    ...). Returns a tuple of Peak.
    """
    return _flag(tuple(peaks), solvent, flag_tms, float(tolerance_ppm))[0]
