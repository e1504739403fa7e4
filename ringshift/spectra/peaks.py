"""Observed ¹H peaks and spectra as records: :class:`Peak`, :class:`PeakList`, :class:`Spectrum`.

Reading them from files is :mod:`ringshift.io.peak_tables`; picking peaks in a spectrum is
:mod:`ringshift.spectra.picking`; solvent and TMS lines are :mod:`ringshift.spectra.solvents`.

Rules (stated so users can predict them):

- Shifts must lie in :data:`SHIFT_RANGE_PPM` (−20…40 ppm); integrals ≥ 0; widths > 0 Hz.
- With ``n_hydrogens`` given: more sample peaks than hydrogens is a warning; more than
  :data:`MAX_LINES_PER_H` (16) per hydrogen is an error (a first-order proton coupled to four
  inequivalent partners shows 2⁴ = 16 lines; more means noise was picked or the file is wrong).
- After scaling, a sample integral more than 0.25 H from an integer (or below 0.5 H) is reported.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import asdict, dataclass, replace

import numpy as np

from ringshift import _validation as _v
from ringshift.errors import AssignmentWarning, InputError

__all__ = ['Peak', 'PeakList', 'Spectrum', 'normalise_integrals', 'check_couplings']


#: Accepted chemical-shift range, ppm (wide enough for strongly paratropic inner protons).
SHIFT_RANGE_PPM: tuple[float, float] = (-20.0, 40.0)

PEAK_KINDS: tuple[str, ...] = ("sample", "solvent", "tms", "impurity")

#: Largest accepted H–H coupling constant, Hz (exclusive): ²J of sp² CH2 and ³J trans across C=C stay below
#: about 20 Hz (Pretsch, Bühlmann & Badertscher, Structure Determination of Organic Compounds, Springer
#: 2009, ¹H section; from memory), so 30 Hz leaves room and catches values typed in ppm·1000 or Hz·10.
MAX_J_HZ: float = 30.0

#: More sample peaks than this many per hydrogen is an error (see module notes).
MAX_LINES_PER_H: int = 16

# ------------------------------------------------------------------------------------ data classes
def _check_shift(shift: float, where: str) -> None:
    if not SHIFT_RANGE_PPM[0] <= shift <= SHIFT_RANGE_PPM[1]:
        raise InputError(f"shift {shift:g} ppm outside {SHIFT_RANGE_PPM[0]:g}…{SHIFT_RANGE_PPM[1]:g} ppm", where)


def check_couplings(values, where: str) -> tuple[float, ...] | None:
    """Coupling constants as a tuple of floats (Hz), each finite, > 0 and < :data:`MAX_J_HZ`; None or an
    empty sequence gives None. Raises InputError naming ``where``."""
    if values is None:
        return None
    if isinstance(values, (str, bytes)) or not hasattr(values, "__iter__"):
        raise InputError(f"j_hz={values!r}; expected a sequence of coupling constants in Hz", where)
    out = []
    for v in values:
        if isinstance(v, bool):
            raise InputError(f"j_hz value {v!r}; expected a number of Hz", where)
        try:
            j = float(v)
        except (TypeError, ValueError):
            raise InputError(f"j_hz value {v!r}; expected a number of Hz", where) from None
        if not (math.isfinite(j) and 0.0 < j < MAX_J_HZ):
            raise InputError(f"coupling {v!r} Hz; expected 0 < J < {MAX_J_HZ:g} Hz", where)
        out.append(j)
    return tuple(out) or None


@dataclass(frozen=True)
class Peak:
    """One observed ¹H peak (a singlet, a whole multiplet or one picked group of lines).

    Attributes
    ----------
    shift_ppm : float
        δ, ppm, within :data:`SHIFT_RANGE_PPM`.
    integral, height : float or None
        Integral (≥ 0; protons after :func:`normalise_integrals`) and height above the baseline.
    width_hz : float or None
        Full width at half height, Hz (picked multiplet: its whole half-height span).
    multiplicity, label : str or None
        As written ("s", "dd", "m", ...); picked peaks get "s" (one line) or "m" (several).
    fixed_atoms : tuple of int or None
        Atom indices (H, or the heavy atom carrying them) the user fixes this peak to, sorted, in the
        numbering the user wrote (that of their structure file).
    line : int or None
        1-based line of the source file.
    kind : {"sample", "solvent", "tms", "impurity"}
        Only "sample" peaks are assigned to the molecule; the others are reported.
    flagged_as : str or None
        Set by :func:`ringshift.spectra.solvents.flag_reference_peaks` when the peak lies at a solvent
        residual or TMS line ("CDCl3 residual (7.26 ppm)", "TMS (0.00 ppm)"); such a peak is a candidate
        for both readings and :func:`ringshift.spectra.solvents.resolve_reference_lines` decides by the
        integrals. None for peaks whose kind the user gave (those are never changed).
    j_hz : tuple of float or None
        Coupling constants J read from the peak's multiplet, Hz (each > 0 and < :data:`MAX_J_HZ`), in the
        order written; used as ³J evidence in the assignment (:mod:`ringshift.comparison.couplings`).
    """

    shift_ppm: float
    integral: float | None = None
    width_hz: float | None = None
    multiplicity: str | None = None
    label: str | None = None
    fixed_atoms: tuple[int, ...] | None = None
    line: int | None = None
    kind: str = "sample"
    height: float | None = None
    flagged_as: str | None = None
    j_hz: tuple[float, ...] | None = None

    def __post_init__(self):
        shift = _v.optional_real(self.shift_ppm, "shift_ppm")
        if shift is None or not SHIFT_RANGE_PPM[0] <= shift <= SHIFT_RANGE_PPM[1]:
            raise InputError(f"shift_ppm={self.shift_ppm!r}; expected {SHIFT_RANGE_PPM[0]:g}…"
                             f"{SHIFT_RANGE_PPM[1]:g} ppm", "Peak")
        object.__setattr__(self, "shift_ppm", shift)
        object.__setattr__(self, "integral", _v.optional_real(self.integral, "integral", minimum=0.0))
        object.__setattr__(self, "width_hz", _v.optional_real(self.width_hz, "width_hz", minimum=0.0, strict=True))
        object.__setattr__(self, "height", _v.optional_real(self.height, "height"))
        if self.kind not in PEAK_KINDS:
            raise InputError(f"kind={self.kind!r}; expected one of {', '.join(PEAK_KINDS)}", "Peak")
        if self.fixed_atoms is not None:
            try:
                atoms = tuple(sorted({int(a) for a in self.fixed_atoms}))
            except (TypeError, ValueError):
                raise InputError(f"fixed_atoms={self.fixed_atoms!r}; expected integers", "Peak") from None
            if not atoms or atoms[0] < 0:
                raise InputError(f"fixed_atoms={self.fixed_atoms!r}; expected non-negative integers", "Peak")
            object.__setattr__(self, "fixed_atoms", atoms)
        if self.j_hz is not None:
            object.__setattr__(self, "j_hz", check_couplings(self.j_hz, "Peak.j_hz"))
        for name in ("multiplicity", "label"):
            value = getattr(self, name)
            object.__setattr__(self, name, (" ".join(str(value).split()) or None) if value is not None else None)


@dataclass(frozen=True, eq=False)
class Spectrum:
    """A 1D ¹H spectrum (read-only float64 arrays).

    Attributes
    ----------
    ppm, intensity : numpy.ndarray (n,)
        Strictly monotonic δ axis (ppm, in file order, usually decreasing) and intensities.
    observe_mhz : float or None
        Spectrometer ¹H frequency, MHz (needed for widths in Hz).
    source : str
        File name, or "synthetic: ..." for simulated data.
    noise_sigma : float
        Noise σ, intensity units; :func:`estimate_noise` when not given.
    """

    ppm: np.ndarray
    intensity: np.ndarray
    observe_mhz: float | None = None
    source: str = "<array>"
    noise_sigma: float | None = None

    def __post_init__(self):
        ppm = np.array(self.ppm, dtype=np.float64, copy=True, order="C")
        y = np.array(self.intensity, dtype=np.float64, copy=True, order="C")
        if ppm.ndim != 1 or y.shape != ppm.shape or ppm.size < 2:
            raise InputError(f"ppm {ppm.shape} and intensity {y.shape}; expected two (n,) arrays, n ≥ 2",
                             self.source)
        if not (np.all(np.isfinite(ppm)) and np.all(np.isfinite(y))):
            raise InputError("spectrum values must be finite", self.source)
        step = np.diff(ppm)
        if not (np.all(step > 0) or np.all(step < 0)):
            raise InputError("the ppm axis must be strictly increasing or decreasing", self.source)
        mhz = _v.optional_real(self.observe_mhz, "observe_mhz", minimum=0.0, strict=True)
        sigma = _v.optional_real(estimate_noise(y) if self.noise_sigma is None else self.noise_sigma, "noise_sigma",
                           minimum=0.0)
        ppm.flags.writeable = y.flags.writeable = False
        for name, value in (("ppm", ppm), ("intensity", y), ("noise_sigma", sigma), ("observe_mhz", mhz)):
            object.__setattr__(self, name, value)


@dataclass(frozen=True)
class PeakList:
    """Peaks read from one file: ``peaks`` (file order; picked peaks by decreasing shift), ``source``,
    ``spectrum`` (the one picked from, or that came with a JCAMP peak table), ``warnings``,
    ``observe_mhz`` (MHz or None), ``solvent`` (the deuterated solvent the list was read with, by its
    name in :data:`ringshift.spectra.solvents.SOLVENT_RESIDUAL_PPM`, or None)."""

    peaks: tuple[Peak, ...]
    source: str
    spectrum: Spectrum | None = None
    warnings: tuple[str, ...] = ()
    observe_mhz: float | None = None
    solvent: str | None = None

    def __post_init__(self):
        object.__setattr__(self, "peaks", tuple(self.peaks))
        object.__setattr__(self, "warnings", tuple(self.warnings))

    def __repr__(self) -> str:
        """One line: source, peak count by kind and the spectrum's size (no arrays in the text)."""
        kinds: dict[str, int] = {}
        for pk in self.peaks:
            kinds[pk.kind] = kinds.get(pk.kind, 0) + 1
        by_kind = ", ".join(f"{n} {k}" for k, n in kinds.items())
        spec = "" if self.spectrum is None else f", spectrum of {self.spectrum.ppm.size} points"
        return f"<PeakList {self.source}: {len(self.peaks)} peaks ({by_kind or 'none'}){spec}>"

    @property
    def sample_peaks(self) -> tuple[Peak, ...]:
        """The peaks of ``kind == "sample"`` (those to be assigned)."""
        return tuple(p for p in self.peaks if p.kind == "sample")

    def to_dict(self) -> dict:
        """Plain JSON-able dict; the spectrum is summarised (points, ppm range, noise σ), not copied."""
        spec = self.spectrum
        return {"source": self.source, "observe_mhz": self.observe_mhz, "solvent": self.solvent,
                "warnings": list(self.warnings),
                "peaks": [{**asdict(p), "fixed_atoms": list(p.fixed_atoms or []) or None,
                           "j_hz": list(p.j_hz) if p.j_hz else None} for p in self.peaks],
                "spectrum": None if spec is None else {
                    "source": spec.source, "points": int(spec.ppm.size), "noise_sigma": spec.noise_sigma,
                    "ppm_range": [float(spec.ppm.min()), float(spec.ppm.max())]}}


def _normalise(peaks, n_hydrogens):
    if isinstance(n_hydrogens, bool) or not isinstance(n_hydrogens, (int, np.integer)) or n_hydrogens < 1:
        raise InputError(f"n_hydrogens={n_hydrogens!r}; expected a positive integer", "n_hydrogens")
    from ringshift.spectra.solvents import resolve_reference_lines

    peaks, notes = resolve_reference_lines(peaks, int(n_hydrogens))
    sample = [p for p in peaks if p.kind == "sample"]
    known = [p.integral for p in sample if p.integral is not None]
    if not known or sum(known) <= 0:
        return tuple(peaks), notes + ["no sample-peak integrals; integrals not scaled to the hydrogen count"]
    if len(known) < len(sample):
        notes.append(f"{len(sample) - len(known)} sample peak(s) without an integral; the others were scaled "
                     f"to {n_hydrogens} H")
    factor = n_hydrogens / sum(known)
    out = tuple(p if p.integral is None else replace(p, integral=p.integral * factor) for p in peaks)
    odd = [p for p in out if p.kind == "sample" and p.integral is not None
           and (abs(p.integral - round(p.integral)) > 0.25 or p.integral < 0.5)]
    if odd:
        listed = ", ".join(f"{p.shift_ppm:.2f} ppm: {p.integral:.2f} H" for p in odd[:5])
        notes.append(f"integrals far from whole protons after scaling to {n_hydrogens} H ({listed}"
                     f"{', ...' if len(odd) > 5 else ''}); impurities, overlap or wrong n_hydrogens?")
    return out, notes


def normalise_integrals(peaks, n_hydrogens: int) -> tuple[Peak, ...]:
    """Scale integrals so that the sample peaks' integrals add up to ``n_hydrogens`` (the molecule's
    hydrogen count); returns a tuple of Peak.

    Solvent/TMS/impurity peaks are scaled by the same factor but do not enter the sum. Issues an
    :class:`~ringshift.errors.AssignmentWarning` when integrals are missing or far from whole protons.
    """
    out, notes = _normalise(tuple(peaks), n_hydrogens)
    for note in notes:
        warnings.warn(note, AssignmentWarning, stacklevel=2)
    return out


# -------------------------------------------------------------------------------- peak picking
def estimate_noise(intensity) -> float:
    """Noise σ (intensity units; 0 for n < 3) of ``intensity`` (n,) from the MAD of first differences.

    σ = 1.4826 · median|d − median d| / √2, d = diff(y): 1.4826 = 1/Φ⁻¹(3/4) makes the MAD a
    consistent σ estimate for Gaussian noise (Rousseeuw & Croux, J. Am. Stat. Assoc. 1993, 88, 1273;
    from memory) and differencing white noise doubles its variance. Peaks barely move the median.
    """
    y = np.asarray(intensity, dtype=np.float64).ravel()
    if y.size < 3:
        return 0.0
    with np.errstate(all="ignore"):
        d = np.diff(y)
        return float(1.482602218505602 * np.median(np.abs(d - np.median(d))) / math.sqrt(2.0))
