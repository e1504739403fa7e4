"""Observed ¹H peaks and 1D spectra: peak tables (CSV/TSV, JCAMP-DX), peak picking and integrals.

:func:`read_peaks` is the entry point: it reads a CSV/TSV peak table or a JCAMP-DX file (spectrum or
peak table), flags solvent-residual and TMS peaks, and scales the integrals to the molecule's
hydrogen count. The JCAMP-DX codec is :mod:`ringshift.jcamp`; this module turns it into
:class:`PeakList` objects.

Warnings: functions that return a :class:`PeakList` record their warnings in ``PeakList.warnings``
and issue no Python warnings; :func:`pick_peaks` and :func:`normalise_integrals`, which return bare
peak tuples, issue :class:`~ringshift.errors.AssignmentWarning`.

Rules (stated so users can predict them):

- Shifts must lie in :data:`SHIFT_RANGE_PPM` (−20…40 ppm); integrals ≥ 0; widths > 0 Hz.
- A peak within :data:`REFERENCE_TOLERANCE_PPM` (0.03 ppm, covering usual referencing scatter) of
  the chosen solvent's residual signal becomes ``kind="solvent"``, within it of 0.00 ppm
  ``kind="tms"`` (unless ``flag_tms=False``); CSV rows with an explicit ``kind`` are left alone.
- With ``n_hydrogens`` given: more sample peaks than hydrogens is a warning; more than
  :data:`MAX_LINES_PER_H` (16) per hydrogen is an error (a first-order proton coupled to four
  inequivalent partners shows 2⁴ = 16 lines; more means noise was picked or the file is wrong).
- After scaling, a sample integral more than 0.25 H from an integer (or below 0.5 H) is reported.
"""

from __future__ import annotations

import csv
import math
import os
import re
import unicodedata
import warnings
from dataclasses import asdict, dataclass, replace

import numpy as np
from scipy.signal import find_peaks, peak_widths

from ringshift import jcamp as _jcamp
from ringshift import limits as _limits
from ringshift.errors import AssignmentWarning, InputError, OutputError
from ringshift.jcamp import write_jcamp_spectrum

__all__ = ["Peak", "PeakList", "Spectrum", "estimate_noise", "flag_reference_peaks", "normalise_integrals",
           "parse_peak_table_csv", "pick_peaks", "read_jcamp", "read_peak_table_csv", "read_peaks",
           "simulate_spectrum", "write_jcamp_peaks", "write_jcamp_spectrum", "write_peak_table_csv"]

#: File name endings read as JCAMP-DX whatever their content.
JCAMP_SUFFIXES: tuple[str, ...] = (".jdx", ".dx", ".jcamp", ".jcm")
#: Accepted chemical-shift range, ppm (wide enough for strongly paratropic inner protons).
SHIFT_RANGE_PPM: tuple[float, float] = (-20.0, 40.0)
PEAK_KINDS: tuple[str, ...] = ("sample", "solvent", "tms", "impurity")
#: Tolerance for flagging solvent-residual and TMS peaks, ppm.
REFERENCE_TOLERANCE_PPM: float = 0.03
#: More sample peaks than this many per hydrogen is an error (see module notes).
MAX_LINES_PER_H: int = 16
#: Largest coupling treated as within one multiplet when merging picked lines, Hz (³J_trans of
#: alkenes reaches ≈ 18 Hz; from memory).
MERGE_HZ: float = 18.0
#: Half-width of the integration window around each picked line, in FWHM.
WINDOW_FWHM: float = 10.0
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


# ------------------------------------------------------------------------------------ data classes
def _check_shift(shift: float, where: str) -> None:
    if not SHIFT_RANGE_PPM[0] <= shift <= SHIFT_RANGE_PPM[1]:
        raise InputError(f"shift {shift:g} ppm outside {SHIFT_RANGE_PPM[0]:g}…{SHIFT_RANGE_PPM[1]:g} ppm", where)


def _opt_float(value, name: str, *, minimum: float | None = None, strict: bool = False) -> float | None:
    if value is None:
        return None
    try:
        out = float(value)
    except (TypeError, ValueError):
        out = math.nan
    if not math.isfinite(out) or (minimum is not None and (out <= minimum if strict else out < minimum)):
        rule = "" if minimum is None else f" {'>' if strict else '≥'} {minimum:g}"
        raise InputError(f"{name}={value!r}; expected a finite number{rule}", name)
    return out


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

    def __post_init__(self):
        shift = _opt_float(self.shift_ppm, "shift_ppm")
        if shift is None or not SHIFT_RANGE_PPM[0] <= shift <= SHIFT_RANGE_PPM[1]:
            raise InputError(f"shift_ppm={self.shift_ppm!r}; expected {SHIFT_RANGE_PPM[0]:g}…"
                             f"{SHIFT_RANGE_PPM[1]:g} ppm", "Peak")
        object.__setattr__(self, "shift_ppm", shift)
        object.__setattr__(self, "integral", _opt_float(self.integral, "integral", minimum=0.0))
        object.__setattr__(self, "width_hz", _opt_float(self.width_hz, "width_hz", minimum=0.0, strict=True))
        object.__setattr__(self, "height", _opt_float(self.height, "height"))
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
        mhz = _opt_float(self.observe_mhz, "observe_mhz", minimum=0.0, strict=True)
        sigma = _opt_float(estimate_noise(y) if self.noise_sigma is None else self.noise_sigma, "noise_sigma",
                           minimum=0.0)
        ppm.flags.writeable = y.flags.writeable = False
        for name, value in (("ppm", ppm), ("intensity", y), ("noise_sigma", sigma), ("observe_mhz", mhz)):
            object.__setattr__(self, name, value)


@dataclass(frozen=True)
class PeakList:
    """Peaks read from one file: ``peaks`` (file order; picked peaks by decreasing shift), ``source``,
    ``spectrum`` (the one picked from, or that came with a JCAMP peak table), ``warnings``,
    ``observe_mhz`` (MHz or None)."""

    peaks: tuple[Peak, ...]
    source: str
    spectrum: Spectrum | None = None
    warnings: tuple[str, ...] = ()
    observe_mhz: float | None = None

    def __post_init__(self):
        object.__setattr__(self, "peaks", tuple(self.peaks))
        object.__setattr__(self, "warnings", tuple(self.warnings))

    @property
    def sample_peaks(self) -> tuple[Peak, ...]:
        """The peaks of ``kind == "sample"`` (those to be assigned)."""
        return tuple(p for p in self.peaks if p.kind == "sample")

    def to_dict(self) -> dict:
        """Plain JSON-able dict; the spectrum is summarised (points, ppm range, noise σ), not copied."""
        spec = self.spectrum
        return {"source": self.source, "observe_mhz": self.observe_mhz, "warnings": list(self.warnings),
                "peaks": [{**asdict(p), "fixed_atoms": list(p.fixed_atoms or []) or None} for p in self.peaks],
                "spectrum": None if spec is None else {
                    "source": spec.source, "points": int(spec.ppm.size), "noise_sigma": spec.noise_sigma,
                    "ppm_range": [float(spec.ppm.min()), float(spec.ppm.max())]}}


# ------------------------------------------------------------------------------------------- CSV
_COLUMNS = {
    "shift": ("shift_ppm", "ppm", "shift", "delta", "δ", "δh", "delta_ppm", "chemical_shift", "cs"),
    "integral": ("integral", "nh", "h", "int", "integration"),
    "width": ("width_hz", "width", "fwhm", "fwhm_hz", "linewidth", "linewidth_hz"),
    "multiplicity": ("multiplicity", "mult", "m"),
    "label": ("label", "name", "id"),
    "atoms": ("atoms", "assign", "fixed_atoms", "atom_indices"),
    "kind": ("kind", "type"),
    "height": ("height", "intensity"),
}
_HEADER_TO_FIELD = {name: field for field, names in _COLUMNS.items() for name in names}
_NUMERIC = ("shift", "integral", "width", "height")
_RANGE = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+))\s*[-–—]\s*([+-]?(?:\d+\.?\d*|\.\d+))$")
_FLOAT = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_OBSERVE_COMMENT = re.compile(r"^#\s*observe_mhz\s*[:=]\s*(\S+)\s*$", re.I)


def _header_key(cell: str) -> str:
    text = unicodedata.normalize("NFKC", cell).strip().lower()
    text = re.sub(r"[(\[].*?[)\]]", "", text)
    text = re.sub(r"\s*/\s*(ppm|hz)$", "", text).strip()
    return re.sub(r"[\s\-]+", "_", text)


def _parse_number(cell: str, column: str, where: str, decimal_comma: bool) -> float | None:
    text = cell.strip().replace("\u2212", "-")
    if not text:
        return None
    if decimal_comma:
        text = text.replace(",", ".")
    if column == "shift":
        m = _RANGE.match(text)
        if m:
            return 0.5 * (float(m.group(1)) + float(m.group(2)))
    if not _FLOAT.match(text):
        raise InputError(f"{column} cell {cell.strip()!r} is not a number", where)
    value = float(text)
    if not math.isfinite(value):
        raise InputError(f"{column} cell {cell.strip()!r} is not finite", where)
    return value


def parse_peak_table_csv(text: str, *, source: str = "<string>") -> PeakList:
    """Parse a CSV/TSV peak table (see :func:`read_peak_table_csv`)."""
    return _parse_csv(text, source)[0]


def _parse_csv(text: str, source: str) -> tuple[PeakList, tuple[bool, ...]]:
    _limits.check_lines(text, source)
    notes: list[str] = []
    observe = None
    rows: list[tuple[int, str]] = []
    for lineno, line in enumerate(text.lstrip("\ufeff").splitlines(), 1):
        stripped = line.strip()
        m = _OBSERVE_COMMENT.match(stripped)
        if m:
            observe = _parse_number(m.group(1), "observe_mhz", f"{source}:{lineno}", False)
            if observe <= 0:
                raise InputError(f"{stripped!r}; expected a positive frequency in MHz", f"{source}:{lineno}")
        elif stripped and not stripped.startswith("#"):
            rows.append((lineno, line))
    if not rows:
        raise InputError("empty peak table: expected a header row (e.g. 'shift_ppm,integral') and peak rows",
                         source)
    head_line, header = rows[0]
    bare = re.sub(r'"[^"]*"|\([^)]*\)|\[[^\]]*\]', "", header)   # separators inside quotes/brackets are text
    found = [d for d in ("\t", ";", ",") if d in bare]
    if len(found) > 1:
        shown = " and ".join(repr(d) for d in found)
        raise InputError(f"the header row uses {shown} as separators; ambiguous: use one separator (tab, ';' "
                         "or ',') throughout", f"{source}:{head_line}")
    delim = found[0] if found else next((d for d in ("\t", ";", ",") if d in header), None)

    def split(line: str, where: str) -> list[str]:
        if delim is None:
            return line.split()
        try:
            return next(csv.reader([line], delimiter=delim, skipinitialspace=True))
        except (csv.Error, StopIteration) as exc:
            raise InputError(f"cannot split the row ({exc})", where) from None

    at_head = f"{source}:{head_line}"
    names = [c.strip() for c in split(header, at_head)]
    if names and all(_FLOAT.match(c.replace(",", ".")) for c in names if c):
        raise InputError("the first row is numeric; add a header row such as 'shift_ppm,integral'", at_head)
    fields: dict[str, int] = {}
    for col, cell in enumerate(names):
        field = _HEADER_TO_FIELD.get(_header_key(cell))
        if field is None:
            notes += [f"column {cell!r} ignored"] if cell else []
        elif field in fields:
            raise InputError(f"two columns give the {field} ({names[fields[field]]!r} and {cell!r})", at_head)
        elif field == "width" and "ppm" in cell.lower():
            raise InputError(f"column {cell!r}: widths must be in Hz", at_head)
        else:
            fields[field] = col
    if "shift" not in fields:
        raise InputError(f"no shift column among {names}; expected one named shift_ppm, ppm, shift, delta or δ",
                         at_head)
    if len(rows) == 1:
        raise InputError("header row but no peak rows", source)
    _limits.check_count(len(rows) - 1, _limits.MAX_PEAKS, "peak rows", source)
    table = []
    for lineno, line in rows[1:]:
        cells = split(line, f"{source}:{lineno}")
        if any(c.strip() for c in cells[len(names):]):
            hint = " (decimal commas in a comma-separated file? use ';' or tabs)" if delim == "," else ""
            raise InputError(f"row has {len(cells)} cells but the header has {len(names)}{hint}",
                             f"{source}:{lineno}")
        cells += [""] * (len(names) - len(cells))
        table.append((lineno, {f: cells[i].strip() for f, i in fields.items()}))
    numeric = [(ln, c[f]) for ln, c in table for f in _NUMERIC if f in c]
    commas = [ln for ln, c in numeric if "," in c]
    if commas and any("." in c for _, c in numeric):
        raise InputError("numbers mix decimal commas and points; use one decimal mark", f"{source}:{commas[0]}")
    notes += ["decimal commas read as decimal marks"] if commas else []
    peaks, explicit = [], []
    for lineno, get in table:
        where = f"{source}:{lineno}"
        val = {f: _parse_number(get[f], f, where, bool(commas)) for f in _NUMERIC if f in get}
        shift, integral, width = val.get("shift"), val.get("integral"), val.get("width")
        if shift is None:
            raise InputError("empty shift cell", where)
        _check_shift(shift, where)
        if integral is not None and integral < 0:
            raise InputError(f"negative integral {integral:g}", where)
        if width is not None and width <= 0:
            raise InputError(f"width {width:g} Hz; expected > 0", where)
        items = [a for a in re.split(r"[\s;,+]+", get.get("atoms", "")) if a]
        if not all(re.fullmatch(r"[0-9]{1,9}", a) for a in items):
            raise InputError(f"atoms cell {get['atoms']!r}; expected atom indices like '12 13'", where)
        kind = get.get("kind", "").lower() or "sample"
        if kind not in PEAK_KINDS:
            raise InputError(f"kind {kind!r}; expected one of {', '.join(PEAK_KINDS)}", where)
        explicit.append(bool(get.get("kind")))
        peaks.append(Peak(shift, integral, width, get.get("multiplicity") or None, get.get("label") or None,
                          tuple(map(int, items)) or None, lineno, kind, val.get("height")))
    return PeakList(tuple(peaks), source, None, tuple(notes), observe), tuple(explicit)


def read_peak_table_csv(path: str | os.PathLike) -> PeakList:
    """Read a CSV/TSV peak table with a header row; returns a :class:`PeakList`.

    Delimiter: tab, semicolon or comma (the first found in the header row), else whitespace. Decimal
    commas are accepted when no numeric cell uses a decimal point. Columns (case-insensitive, units in
    brackets ignored): shift (``shift_ppm``, ``ppm``, ``shift``, ``delta``, ``δ``; a range "7.30–7.25"
    gives its midpoint), integral (``integral``, ``nH``, ``H``, ``int``), ``width_hz``,
    ``multiplicity``, ``label``, ``atoms``/``assign`` (indices "12 13" or "12;13"), ``kind``,
    ``height``. UTF-8 BOM, Windows line ends, blank lines and ``#`` comment lines are accepted;
    ``# observe_mhz = 400`` sets the spectrometer frequency. Bad input raises InputError naming file
    and line: empty or header-less file, no shift column, non-numeric cells, shifts outside −20…40
    ppm, negative integrals, bad atom indices.
    """
    text, notes = _jcamp.read_text_file(path)
    out = parse_peak_table_csv(text, source=os.fspath(path))
    return replace(out, warnings=notes + out.warnings)


def write_peak_table_csv(path: str | os.PathLike, peaks) -> None:
    """Write a PeakList or sequence of Peak as CSV that :func:`read_peak_table_csv` reads back exactly
    (a PeakList's ``observe_mhz`` is kept as a ``# observe_mhz = ...`` comment)."""
    observe = peaks.observe_mhz if isinstance(peaks, PeakList) else None
    items = peaks.peaks if isinstance(peaks, PeakList) else tuple(peaks)
    if not all(isinstance(p, Peak) for p in items):
        raise InputError("expected a PeakList or a sequence of Peak", "peaks")

    def num(v):
        return "" if v is None else repr(float(v))
    try:
        with open(os.fspath(path), "w", encoding="utf-8", newline="") as handle:
            if observe is not None:
                handle.write(f"# observe_mhz = {observe!r}\n")
            writer = csv.writer(handle, lineterminator="\n")
            writer.writerow("shift_ppm integral width_hz multiplicity label atoms kind height".split())
            for p in items:
                writer.writerow([num(p.shift_ppm), num(p.integral), num(p.width_hz), p.multiplicity or "",
                                 p.label or "", " ".join(map(str, p.fixed_atoms or ())), p.kind, num(p.height)])
    except OSError as exc:
        raise OutputError(f"{os.fspath(path)}: cannot be written ({exc.strerror or exc})") from None


# ---------------------------------------------------------------------------------------- JCAMP
def _from_jcamp(data: _jcamp.JcampData, prominence_sigma: float) -> PeakList:
    notes = list(data.warnings)
    spectrum = None if data.ppm is None else Spectrum(data.ppm, data.intensity, data.observe_mhz, data.source)
    if data.has_peak_table:
        peaks = []
        for ppm, y, w, line in zip(data.peak_ppm, data.peak_y, data.peak_width_hz, data.peak_lines):
            where = f"{data.source}:{line}"
            _check_shift(ppm, where)
            if data.y_is_integral and y < 0:
                raise InputError(f"negative integral {y:g}", where)
            peaks.append(Peak(ppm, integral=y if data.y_is_integral else None, width_hz=w, line=line,
                              height=None if data.y_is_integral else y))
        if not peaks:
            raise InputError("##PEAK TABLE holds no peaks", data.source)
    else:
        peaks, picked_notes = _pick(spectrum, prominence_sigma, MERGE_HZ)
        notes += picked_notes + ([] if peaks else [f"no peak rises {prominence_sigma:g} σ above the noise"])
    return PeakList(tuple(peaks), data.source, spectrum, tuple(notes), data.observe_mhz)


def read_jcamp(path: str | os.PathLike, *, prominence_sigma: float = 8.0) -> PeakList:
    """Read a JCAMP-DX ¹H file: its peak table, or the peaks picked (:func:`pick_peaks`, threshold
    ``prominence_sigma`` × noise σ) from its spectrum. With both, the table's peaks and the spectrum
    are kept. See :mod:`ringshift.jcamp` for what is read. Returns a :class:`PeakList`."""
    return _from_jcamp(_jcamp.read_jcamp_file(path), prominence_sigma)


def write_jcamp_peaks(path: str | os.PathLike, peaks, *, observe_mhz: float | None = None,
                      title: str = "peak table") -> None:
    """Write a PeakList or sequence of Peak as a JCAMP-DX ``##PEAK TABLE`` in ppm.

    Y is the integral when every peak has one (``##YUNITS=INTEGRAL``), else the height (1 if none).
    Widths are written (XYW) when every peak has one and ``observe_mhz`` (MHz; default: the
    PeakList's) is known. Labels, multiplicities, atoms and kinds are not stored (use CSV for those).
    """
    if isinstance(peaks, PeakList):
        observe_mhz = peaks.observe_mhz if observe_mhz is None else observe_mhz
        peaks = peaks.peaks
    peaks = tuple(peaks)
    if all(p.integral is not None for p in peaks):
        y, is_int = [p.integral for p in peaks], True
    else:
        y, is_int = [1.0 if p.height is None else p.height for p in peaks], False
    _jcamp.write_jcamp_peak_table(path, [p.shift_ppm for p in peaks], y, [p.width_hz for p in peaks],
                                  observe_mhz=observe_mhz, title=title, y_is_integral=is_int)


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


def pick_peaks(spectrum: Spectrum, *, prominence_sigma: float = 8.0,
               merge_hz: float = MERGE_HZ) -> tuple[Peak, ...]:
    """Pick and integrate the peaks of a spectrum.

    Lines are local maxima with prominence ≥ ``prominence_sigma`` × noise σ
    (``scipy.signal.find_peaks``; 8 σ gave ≈ 0.3 false picks per 32k points of pure noise). Each
    line's position is refined by a parabola through its top three points; its FWHM comes from
    ``scipy.signal.peak_widths``. Neighbouring lines closer than ``merge_hz`` (or whose half-height
    spans touch) form one peak (a multiplet). Each peak is integrated (``np.trapezoid``, above the
    median baseline) over ±10 FWHM of its outer lines, cut at the lowest point between neighbouring
    peaks; so integrals miss the far Lorentzian tails (≈3 % for a Lorentzian), alike for all peaks.

    ``merge_hz`` is used only when ``spectrum.observe_mhz`` is known. Returns a tuple of Peak by
    decreasing shift: shift = height-weighted mean of the lines, ``height`` (intensity units),
    ``integral`` (intensity·ppm), ``width_hz`` = half-height span (None without observe_mhz).
    """
    peaks, notes = _pick(spectrum, prominence_sigma, merge_hz)
    for note in notes:
        warnings.warn(note, AssignmentWarning, stacklevel=2)
    return peaks


def _pick(spectrum: Spectrum, prominence_sigma: float, merge_hz: float) -> tuple[tuple[Peak, ...], list[str]]:
    if not isinstance(spectrum, Spectrum):
        raise InputError(f"expected a Spectrum, got {type(spectrum).__name__}", "spectrum")
    if not (math.isfinite(prominence_sigma) and prominence_sigma > 0):
        raise InputError(f"prominence_sigma={prominence_sigma!r}; expected a positive number", "prominence_sigma")
    x = spectrum.ppm
    with np.errstate(all="ignore"):
        y = spectrum.intensity - np.median(spectrum.intensity)
        scale = float(np.max(np.abs(y)))
        if not math.isfinite(scale * x.size * abs(x[-1] - x[0])):
            raise InputError("intensities too large to integrate; rescale the spectrum", spectrum.source)
    if y.size < 3 or scale == 0:
        return (), []
    idx, props = find_peaks(y, prominence=max(prominence_sigma * spectrum.noise_sigma, 1e-9 * scale))
    if idx.size == 0:
        return (), []
    if idx.size > _limits.MAX_PEAKS:
        raise InputError(f"{idx.size} lines picked, more than the limit of {_limits.MAX_PEAKS} peaks: noise or a "
                         f"bad baseline; raise the threshold (prominence_sigma={prominence_sigma:g})", spectrum.source)
    fwhm, _, left, right = peak_widths(y, idx, rel_height=0.5, prominence_data=(
        props["prominences"], props["left_bases"], props["right_bases"]))
    lo_n, hi_n = np.clip(idx - 1, 0, None), np.clip(idx + 1, None, y.size - 1)
    curv = y[lo_n] - 2 * y[idx] + y[hi_n]
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.where(curv < 0, 0.5 * (y[lo_n] - y[hi_n]) / curv, 0.0)
    pos = idx + np.clip(np.nan_to_num(delta), -0.5, 0.5)
    step = abs(x[-1] - x[0]) / (x.size - 1)  # ppm per point
    mhz = spectrum.observe_mhz
    merge_pts = merge_hz / (mhz * step) if mhz else 0.0
    groups = [[0]]
    for k in range(1, idx.size):
        if pos[k] - pos[k - 1] <= merge_pts or right[k - 1] >= left[k]:
            groups[-1].append(k)
        else:
            groups.append([k])
    valleys = [int(idx[g[-1]] + np.argmin(y[idx[g[-1]]:idx[h[0]] + 1])) for g, h in zip(groups, groups[1:])]
    out, notes = [], []
    grid = np.arange(x.size, dtype=np.float64)
    for n, g in enumerate(groups):
        lo = int(math.floor(min(pos[k] - WINDOW_FWHM * fwhm[k] for k in g)))
        hi = int(math.ceil(max(pos[k] + WINDOW_FWHM * fwhm[k] for k in g)))
        lo = max(lo, 0, valleys[n - 1] if n > 0 else 0)
        hi = min(hi, x.size - 1, valleys[n] if n < len(valleys) else x.size - 1)
        area = float(np.trapezoid(y[lo:hi + 1], x[lo:hi + 1])) * (1.0 if x[hi] >= x[lo] else -1.0)
        heights = y[idx[g]]
        shift = float(np.sum(heights * np.interp(pos[g], grid, x)) / np.sum(heights))
        if not SHIFT_RANGE_PPM[0] <= shift <= SHIFT_RANGE_PPM[1]:
            notes.append(f"picked peak at {shift:.3f} ppm outside {SHIFT_RANGE_PPM[0]:g}…"
                         f"{SHIFT_RANGE_PPM[1]:g} ppm dropped")
            continue
        span = (right[g[-1]] - left[g[0]]) * step
        out.append(Peak(shift, integral=max(area, 0.0), width_hz=span * mhz if mhz and span > 0 else None,
                        multiplicity="s" if len(g) == 1 else "m", height=float(np.max(heights))))
    return tuple(sorted(out, key=lambda p: -p.shift_ppm)), notes


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
            notes.append(f"peak at {p.shift_ppm:.3f} ppm{where} flagged as {hit[2]} ({hit[0]:.2f} ppm); "
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


def _normalise(peaks, n_hydrogens):
    if isinstance(n_hydrogens, bool) or not isinstance(n_hydrogens, (int, np.integer)) or n_hydrogens < 1:
        raise InputError(f"n_hydrogens={n_hydrogens!r}; expected a positive integer", "n_hydrogens")
    sample = [p for p in peaks if p.kind == "sample"]
    known = [p.integral for p in sample if p.integral is not None]
    notes = []
    if not known or sum(known) <= 0:
        return tuple(peaks), ["no sample-peak integrals; integrals not scaled to the hydrogen count"]
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


# --------------------------------------------------------------------------------------- entry
def read_peaks(path: str | os.PathLike, *, n_hydrogens: int | None = None, solvent: str | None = None,
               flag_tms: bool = True, prominence_sigma: float = 8.0) -> PeakList:
    """Read observed peaks from a CSV/TSV table or a JCAMP-DX file.

    Files named ``*.jdx``, ``*.dx``, ``*.jcamp`` or whose first line is a ``##LABEL=`` are JCAMP-DX
    (:func:`read_jcamp`), anything else a CSV/TSV table (:func:`read_peak_table_csv`). Then peaks are
    flagged (:func:`flag_reference_peaks` with ``solvent`` and ``flag_tms``; CSV rows with an explicit
    ``kind`` are left alone) and, with ``n_hydrogens`` (the molecule's H count), the peak count is
    checked and the integrals are scaled to it (:func:`normalise_integrals`). ``prominence_sigma``
    is the picking threshold for spectra. Returns a :class:`PeakList` holding every warning.
    """
    if solvent is not None:
        _solvent_name(solvent)
    text, read_notes = _jcamp.read_text_file(path)
    source = os.fspath(path)
    first = text.lstrip("\ufeff \t\r\n").split("\n", 1)[0]
    if source.lower().endswith(JCAMP_SUFFIXES) or re.match(r"##[^=]*=", first):
        peak_list = _from_jcamp(_jcamp.parse_jcamp_text(text, source=source), prominence_sigma)
        eligible = None
    else:
        peak_list, eligible = _parse_csv(text, source)
        eligible = tuple(not e for e in eligible)
    peaks, notes = _flag(peak_list.peaks, solvent, flag_tms, REFERENCE_TOLERANCE_PPM, eligible)
    notes = list(read_notes) + list(peak_list.warnings) + notes
    if n_hydrogens is not None and not peaks:          # a comparison needs peaks: say why there are none
        why = "; ".join(w for w in peak_list.warnings if "σ above the noise" in w) or "the file holds no peaks"
        raise InputError(f"no peaks to compare: {why}; give a peak table or a spectrum with resolved peaks", source)
    if n_hydrogens is not None:
        peaks, more = _normalise(peaks, n_hydrogens)
        n_sample = sum(p.kind == "sample" for p in peaks)
        if n_sample > MAX_LINES_PER_H * n_hydrogens:
            raise InputError(f"{n_sample} sample peaks for {n_hydrogens} H (more than {MAX_LINES_PER_H} per H): "
                             "noise picked, or the wrong file or hydrogen count", source)
        if n_sample > n_hydrogens:
            notes.append(f"{n_sample} sample peaks but only {n_hydrogens} H: a line list? merge multiplet lines")
        notes += more
    return replace(peak_list, peaks=peaks, warnings=tuple(notes))


# ------------------------------------------------------------------------------------ simulation
def simulate_spectrum(peaks, *, observe_mhz: float = 400.0, linewidth_hz: float = 1.0, points: int = 32768,
                      sw_ppm: tuple[float, float] = (-5.0, 15.0), noise: float = 0.0, seed: int = 0) -> Spectrum:
    """Synthetic spectrum (invented data, for demos and tests): Lorentzians plus Gaussian noise.

    Each peak is one line L(δ) = (I/π) γ / ((δ − δ0)² + γ²), γ = FWHM/2 in ppm, of area I over all δ
    (I = the integral, 1 when None; FWHM = the peak's ``width_hz`` or ``linewidth_hz``, Hz).
    Multiplicities are not expanded. The axis has ``points`` points from ``sw_ppm[1]`` down to
    ``sw_ppm[0]`` (ppm); ``noise`` is the σ of the noise from ``numpy.random.default_rng(seed)``.
    Returns a :class:`Spectrum` whose ``source`` starts with "synthetic:".
    """
    peaks = tuple(peaks)
    low, high = float(sw_ppm[0]), float(sw_ppm[1])
    if not (math.isfinite(low) and math.isfinite(high) and low < high):
        raise InputError(f"sw_ppm={sw_ppm!r}; expected (low, high) with low < high", "sw_ppm")
    if int(points) < 16:
        raise InputError(f"points={points!r}; expected at least 16", "points")
    for name, value in (("observe_mhz", observe_mhz), ("linewidth_hz", linewidth_hz)):
        if not (math.isfinite(value) and value > 0):
            raise InputError(f"{name}={value!r}; expected a positive number", name)
    if not (math.isfinite(noise) and noise >= 0):
        raise InputError(f"noise={noise!r}; expected a number ≥ 0", "noise")
    ppm = np.linspace(high, low, int(points))
    y = np.zeros_like(ppm)
    for p in peaks:
        if not low <= p.shift_ppm <= high:
            raise InputError(f"peak at {p.shift_ppm:g} ppm outside sw_ppm={sw_ppm!r}", "peaks")
        gamma = 0.5 * (p.width_hz or linewidth_hz) / observe_mhz
        y += (1.0 if p.integral is None else p.integral) / math.pi * gamma / ((ppm - p.shift_ppm) ** 2 + gamma**2)
    if noise > 0:
        y += np.random.default_rng(seed).normal(0.0, noise, ppm.size)
    return Spectrum(ppm, y, observe_mhz, f"synthetic: {len(peaks)} Lorentzian lines, noise σ={noise:g} "
                                         "(invented data)")
