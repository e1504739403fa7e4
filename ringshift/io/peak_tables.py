"""Observed ¹H peak lists from files: CSV/TSV tables and JCAMP-DX, and their writers.

:func:`read_peaks` is the entry point: it reads a CSV/TSV peak table or a JCAMP-DX file (spectrum or
peak table; the codec is :mod:`ringshift.io.jcampdx`), picks and integrates a spectrum
(:mod:`ringshift.spectra.picking`), flags solvent-residual and TMS peaks
(:mod:`ringshift.spectra.solvents`), and scales the integrals to the molecule's hydrogen count.
CSV columns: a shift column (``shift_ppm``/``ppm``/``shift``/``delta``), an integral column
(``integral``/``nH``/``H``), optional ``width_hz``, ``multiplicity``, ``label``, ``atoms``, ``kind`` and
``j_hz`` (coupling constants in Hz, several separated by ``/`` or spaces: ``15.2/7.8``).
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
import unicodedata
from dataclasses import replace

from ringshift import limits as _limits
from ringshift.errors import InputError
from ringshift.io import jcampdx as _jcamp
from ringshift.spectra.peaks import (
    MAX_LINES_PER_H,
    PEAK_KINDS,
    Peak,
    PeakList,
    Spectrum,
    _check_shift,
    _normalise,
    check_couplings,
)
from ringshift.spectra.picking import MERGE_HZ, _pick
from ringshift.spectra.solvents import REFERENCE_TOLERANCE_PPM, _flag, _solvent_name

__all__ = ['parse_peak_table_csv', 'read_jcamp', 'read_peak_table_csv', 'read_peaks', 'write_jcamp_peaks',
           'write_peak_table_csv']


#: File name endings read as JCAMP-DX whatever their content.
JCAMP_SUFFIXES: tuple[str, ...] = (".jdx", ".dx", ".jcamp", ".jcm")

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
    "j": ("j_hz", "j", "couplings_hz", "couplings", "coupling_hz", "coupling"),
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


_J_SPLIT = re.compile(r"[\s/]+")


def _parse_couplings(cell: str, where: str, decimal_comma: bool) -> tuple[float, ...] | None:
    """A ``j_hz`` cell: couplings in Hz separated by ``/`` or spaces ("15.2/7.8", "15.2 7.8 Hz")."""
    text = re.sub(r"\s*hz\s*$", "", cell.strip(), flags=re.I)
    if not text:
        return None
    values = [_parse_number(v, "j_hz", where, decimal_comma) for v in _J_SPLIT.split(text) if v]
    return check_couplings(values, where)


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
            if observe is None or observe <= 0:
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
    numeric = [(ln, c[f]) for ln, c in table for f in (*_NUMERIC, "j") if f in c]
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
        couplings = _parse_couplings(get.get("j", ""), where, bool(commas))
        peaks.append(Peak(shift, integral, width, get.get("multiplicity") or None, get.get("label") or None,
                          tuple(map(int, items)) or None, lineno, kind, val.get("height"), j_hz=couplings))
    return PeakList(tuple(peaks), source, None, tuple(notes), observe), tuple(explicit)


def read_peak_table_csv(path: str | os.PathLike) -> PeakList:
    """Read a CSV/TSV peak table with a header row; returns a :class:`PeakList`.

    Delimiter: tab, semicolon or comma (the first found in the header row), else whitespace. Decimal
    commas are accepted when no numeric cell uses a decimal point. Columns (case-insensitive, units in
    brackets ignored): shift (``shift_ppm``, ``ppm``, ``shift``, ``delta``, ``δ``; a range "7.30–7.25"
    gives its midpoint), integral (``integral``, ``nH``, ``H``, ``int``), ``width_hz``,
    ``multiplicity``, ``label``, ``atoms``/``assign`` (indices "12 13" or "12;13"), ``kind``,
    ``height``, ``j_hz`` (coupling constants in Hz, several separated by ``/`` or spaces, each
    0 < J < 30 Hz). UTF-8 BOM, Windows line ends, blank lines and ``#`` comment lines are accepted;
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
    from ringshift.io.writing import atomic_write

    handle = io.StringIO(newline="")
    if observe is not None:
        handle.write(f"# observe_mhz = {observe!r}\n")
    writer = csv.writer(handle, lineterminator="\n")
    writer.writerow("shift_ppm integral width_hz multiplicity label atoms kind height j_hz".split())
    for p in items:
        writer.writerow([num(p.shift_ppm), num(p.integral), num(p.width_hz), p.multiplicity or "",
                         p.label or "", " ".join(map(str, p.fixed_atoms or ())), p.kind, num(p.height),
                         "/".join(repr(j) for j in p.j_hz or ())])
    # the output contract of every writer: atomic, never a folder, device, link or input (ringshift.io.writing)
    atomic_write(path, handle.getvalue(), force=True)

# ---------------------------------------------------------------------------------------- JCAMP
def _from_jcamp(data: _jcamp.JcampData, prominence_sigma: float) -> PeakList:
    notes = list(data.warnings)
    spectrum = (None if data.ppm is None or data.intensity is None
                else Spectrum(data.ppm, data.intensity, data.observe_mhz, data.source))
    peaks: list[Peak] | tuple[Peak, ...]
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
        if spectrum is None:  # parse_jcamp_text keeps only blocks with ##XYDATA or ##PEAK TABLE
            raise InputError("no ##XYDATA= or ##PEAK TABLE= in the file", data.source)
        peaks, picked_notes = _pick(spectrum, prominence_sigma, MERGE_HZ)
        notes += picked_notes + ([] if peaks else [f"no peak rises {prominence_sigma:g} σ above the noise"])
    return PeakList(tuple(peaks), data.source, spectrum, tuple(notes), data.observe_mhz)


def read_jcamp(path: str | os.PathLike, *, prominence_sigma: float = 8.0) -> PeakList:
    """Read a JCAMP-DX ¹H file: its peak table, or the peaks picked (:func:`pick_peaks`, threshold
    ``prominence_sigma`` × noise σ) from its spectrum. With both, the table's peaks and the spectrum
    are kept. See :mod:`ringshift.io.jcampdx` for what is read. Returns a :class:`PeakList`."""
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
    return replace(peak_list, peaks=peaks, warnings=tuple(notes),
                   solvent=None if solvent is None else _solvent_name(solvent))
