"""Solvent-residual and TMS lines of a peak list: candidates, decided by the integrals.

:data:`SOLVENT_RESIDUAL_PPM` holds the residual ¹H lines of common deuterated solvents (Fulmer et al.,
Organometallics 2010, 29, 2176). :func:`flag_reference_peaks` marks a peak within
:data:`REFERENCE_TOLERANCE_PPM` (0.03 ppm) of the chosen solvent's line as ``kind="solvent"`` and one
within it of 0.00 ppm as ``kind="tms"``, and records why in ``Peak.flagged_as``; peaks whose kind the
user gave are left alone.

A flagged line may be a real line of the sample (the inner protons of [14]annulene near 0 ppm, the ring
protons of 1,6-methano[10]annulene or benzene at 7.27 ppm in CDCl3), so the flag is a hypothesis.
:func:`resolve_reference_lines` decides, once the molecule's hydrogen count N is known, with this rule:

* every choice of flagged lines kept as sample lines is scored by how far the sample integrals, scaled
  to N H, are from whole protons: Σ (x − max(1, round x))² over the sample lines (H²); a line of less
  than one proton costs its shortfall, so a small residual line is a poor sample line;
* each flagged line taken as solvent/reference adds :data:`REFERENCE_TIE_H2` (0.05 H², one line 0.22 H
  off a whole number): when both readings give whole protons the line stays in the sample, because a
  line holding several protons of the molecule is not a reference line;
* the lowest total wins; without integrals a flagged line is a sample line only when no other sample
  line is left.

The user forces a reading with the peak list's ``kind`` column (``sample``, ``solvent``, ``tms``,
``impurity``); such peaks are never changed.
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import replace

import numpy as np

from ringshift._numbers import text
from ringshift.errors import InputError
from ringshift.spectra.peaks import Peak

__all__ = ['flag_reference_peaks', 'resolve_reference_lines', 'reference_line_reasons']


#: Tolerance for flagging solvent-residual and TMS peaks, ppm.
REFERENCE_TOLERANCE_PPM: float = 0.03

#: Cost (H²) of taking a flagged line as solvent/reference rather than sample (module notes).
REFERENCE_TIE_H2: float = 0.05

#: At most this many flagged lines are decided jointly (2^n readings); beyond it each keeps its flag.
MAX_JOINT_FLAGGED: int = 8

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
def _where(p) -> str:
    return f" (line {p.line})" if p.line else ""


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
            name = f"{hit[2]} residual" if hit[1] == "solvent" else hit[2]
            p = replace(p, kind=hit[1], flagged_as=f"{name} ({hit[0]:.2f} ppm)")
            notes.append(f"peak at {text(p.shift_ppm, '.3f')} ppm{_where(p)} lies at the {p.flagged_as} line: a "
                         "solvent/reference candidate, decided by the integrals against the molecule's H count")
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


def _whole_proton_misfit(integrals, n_hydrogens) -> float:
    """Σ (x − max(1, round x))², H², of ``integrals`` (k,) scaled to add up to ``n_hydrogens``."""
    x = np.asarray(integrals, dtype=float)
    x = x * (n_hydrogens / x.sum())
    return float(np.sum((x - np.maximum(1.0, np.round(x))) ** 2))


def resolve_reference_lines(peaks, n_hydrogens: int) -> tuple[tuple[Peak, ...], list[str]]:
    """Decide each flagged line (``Peak.flagged_as``) between sample and solvent/reference by the
    integrals against the molecule's ``n_hydrogens`` (rule in the module notes).

    Returns the peaks (kinds set: "sample" for a flagged line kept in the sample, else "solvent"/"tms")
    and one note per flagged line saying how it was taken and why, plus a note when integrals given in
    whole protons do not add up to ``n_hydrogens``. Deterministic and idempotent.
    """
    result, decisions = _decide(tuple(peaks), n_hydrogens)
    return result, [d[3] for d in decisions if d[3]] + _sum_note(result, n_hydrogens)


def reference_line_reasons(peaks, n_hydrogens: int) -> dict[int, tuple[str, str]]:
    """Why each line at a solvent/reference position, or of a non-sample kind, was taken as it was.

    Returns
    -------
    dict
        peak index (0-based, in ``peaks``) → (kind taken, reason), for every flagged line
        (``Peak.flagged_as``; the reason is the one :func:`resolve_reference_lines` gives in its note)
        and every line whose kind the peak list gave as solvent, tms or impurity. Sample lines at no
        reference position are absent. The decision is idempotent, so a resolved list gives the reasons
        of the decision that resolved it.
    """
    peaks = tuple(peaks)
    _, decisions = _decide(peaks, n_hydrogens)
    out = {i: (kind, why) for i, kind, why, _ in decisions}
    for i, p in enumerate(peaks):
        if i not in out and p.kind != "sample":
            out[i] = (p.kind, f"kind {p.kind!r} given in the peak list")
    return dict(sorted(out.items()))


def _decide(peaks, n_hydrogens):
    """The decision of :func:`resolve_reference_lines` on ``peaks`` (tuple of Peak): the peaks with their kinds
    decided (tuple of Peak) and, per flagged line, (index, kind taken, reason, note) (list of tuples)."""
    flagged = [i for i, p in enumerate(peaks) if p.flagged_as is not None]
    fixed = [i for i, p in enumerate(peaks) if p.flagged_as is None and p.kind == "sample"]
    ref_kind = {i: ("tms" if peaks[i].flagged_as.startswith("TMS") else "solvent") for i in flagged}
    if len(flagged) > MAX_JOINT_FLAGGED:  # too many to decide jointly: each keeps its flag, without a note
        why = f"more than {MAX_JOINT_FLAGGED} lines lie at solvent/reference positions, so each keeps its flag"
        return peaks, [(i, peaks[i].kind, why, "") for i in flagged]
    if not flagged:
        return peaks, []
    every_integral = all(peaks[i].integral is not None and peaks[i].integral > 0 for i in flagged + fixed)
    best: tuple[float, int, tuple[int, ...]] | None = None
    for keep in itertools.product((True, False), repeat=len(flagged)):
        kept = [i for i, k in zip(flagged, keep) if k]
        n_dropped = len(flagged) - len(kept)
        if not kept and not fixed:
            continue
        if every_integral:
            cost = _whole_proton_misfit([peaks[i].integral for i in fixed + kept], n_hydrogens)
        else:
            cost = 0.0 if n_dropped == (len(flagged) if fixed else 0) else math.inf
        cost += REFERENCE_TIE_H2 * n_dropped
        if best is None or cost < best[0] - 1e-12:
            best = (cost, n_dropped, tuple(kept))
    assert best is not None, "keeping every flagged line is always a candidate reading"
    kept_set = set(best[2])
    out = list(peaks)
    decisions = []
    scale = None
    if every_integral:
        scale = n_hydrogens / sum(peaks[i].integral for i in fixed + sorted(kept_set))
    for i in flagged:
        p = peaks[i]
        h = "" if scale is None else f" ({p.integral * scale:.2f} H with it)"
        if i in kept_set:
            out[i] = replace(p, kind="sample")
            why = ("with it the integrals give whole protons for the molecule's "
                   f"{n_hydrogens} H{h}" if every_integral else "it is the only line left for the molecule")
            note = (f"peak at {text(p.shift_ppm, '.3f')} ppm{_where(p)} lies at the {p.flagged_as} line but "
                    f"was taken as a sample line: {why}; give kind=solvent or kind=tms in the peak list to "
                    "force the other reading")
            decisions.append((i, "sample", why, note))
        else:
            out[i] = replace(p, kind=ref_kind[i])
            if every_integral:
                x = p.integral * n_hydrogens / sum(peaks[j].integral for j in fixed + sorted(kept_set | {i}))
                why = (f"as a sample line it would hold {x:.2f} H and the integrals fit the molecule's "
                       f"{n_hydrogens} H in whole protons better without it")
            else:
                why = "without integrals a flagged line is kept only when no other sample line is left"
            note = (f"peak at {text(p.shift_ppm, '.3f')} ppm{_where(p)} was taken as the {p.flagged_as} line "
                    f"and not assigned: {why}; give kind=sample in the peak list to force it into the sample")
            decisions.append((i, ref_kind[i], why, note))
    return tuple(out), decisions


def _sum_note(peaks, n_hydrogens) -> list[str]:
    """A note when sample integrals written in whole protons do not add up to the molecule's H count."""
    vals = [p.integral for p in peaks if p.kind == "sample"]
    if not vals or any(v is None for v in vals):
        return []
    if all(v >= 0.75 and abs(v - round(v)) <= 0.25 for v in vals) and abs(sum(vals) - n_hydrogens) > 0.5:
        return [f"the sample integrals add up to {sum(vals):g} H, but the molecule has {n_hydrogens} H: a line "
                "missing, overlapping, exchanged or a solvent/impurity line counted? (scaled to "
                f"{n_hydrogens} H)"]
    return []
