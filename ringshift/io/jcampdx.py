"""JCAMP-DX files of 1D ¹H NMR spectra and peak tables: a small reader and writer of our own.

Implements the parts of JCAMP-DX 4.24 (McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151) and of its
NMR version 5.01 (Davies & Lampen, Appl. Spectrosc. 1993, 47, 1093) that a ¹H spectrum or peak list
needs. This module works on text and arrays only; :mod:`ringshift.io.peak_tables` turns the result into
:class:`~ringshift.spectra.peaks.PeakList` objects.

Read
    Labels ``##TITLE``, ``##JCAMP-DX``, ``##DATA TYPE``, ``##XUNITS`` (PPM or HZ), ``##YUNITS``,
    ``##FIRSTX``, ``##LASTX``, ``##NPOINTS``, ``##XFACTOR``, ``##YFACTOR``, ``##FIRSTY``,
    ``##.OBSERVE FREQUENCY`` (MHz), ``##.OBSERVE NUCLEUS``, ``##.SHIFT REFERENCE``; data
    ``##XYDATA=(X++(Y..Y))`` in AFFN, PAC, SQZ, DIF and DUP forms, mixed freely, with the DIF
    Y-check value at line starts; ``##PEAK TABLE=(XY..XY)`` and ``(XYW..XYW)``; ``##END=``.
    Label names are compared without spaces, ``-``, ``/``, ``_`` and case; ``$$`` starts a comment.
    Compound files: the first block holding ``##XYDATA`` or ``##PEAK TABLE`` is read.
Not read
    ``##NTUPLES`` (multi-page data), ``##XYPOINTS``, ``##PEAK ASSIGNMENTS`` (ignored with a
    warning): these raise :class:`~ringshift.errors.InputError` or are reported.
Write
    :func:`write_jcamp_spectrum` (AFFN, PAC, SQZ or DIF with DUP and Y checks, lines ≤ 80
    characters) and :func:`write_jcamp_peak_table`.

Rules the reader applies (chosen here, stated so users can predict them):

- The ppm axis is built from FIRSTX, LASTX and NPOINTS (``np.linspace``); with ``XUNITS=HZ`` it is
  divided by ``.OBSERVE FREQUENCY``, whose absence is an error. The X value that starts each data
  line is only checked (a warning when it is more than 2 points off).
- In compressed data an ``E``/``e`` is an SQZ digit unless it is an exponent written with a sign
  after a digit (``1.5E+03``), as C and Python print them.
- ``##.SHIFT REFERENCE=(INTERNAL, TMS, p, δ)`` shifts the axis so that point p (1-based) is at δ.
- Peak-table Y values are integrals when ``##YUNITS`` contains INTEGRAL or AREA, heights otherwise.
- Peak-table W values are in X units and become Hz (needs the observe frequency for PPM); 0 = unknown.
- XFACTOR and YFACTOR (default 1) scale XYDATA and peak tables alike.
"""

from __future__ import annotations

import dataclasses
import math
import os
import re
from dataclasses import dataclass

import numpy as np

from ringshift import limits as _limits
from ringshift.errors import InputError
from ringshift.io.jcampdx_codec import FORMS, decode_xydata, encode_xydata

#: Largest NPOINTS accepted (a guard against absurd or hostile files; :mod:`ringshift.limits`).
MAX_POINTS: int = _limits.MAX_SPECTRUM_POINTS

#: Largest file read, bytes (:mod:`ringshift.limits`).
MAX_FILE_BYTES: int = _limits.MAX_FILE_BYTES

_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")

_PEAK_SEP = re.compile(r"[\s,;()]+")

_LABEL = re.compile(r"^\s*##([^=]*)=(.*)$")

_DATA_LABELS = frozenset({"XYDATA", "PEAKTABLE", "XYPOINTS", "NTUPLES", "PEAKASSIGNMENTS", "DATATABLE"})



@dataclass(frozen=True, eq=False)
class JcampData:
    """What one JCAMP-DX data block holds, in ppm (Hz for widths).

    Attributes
    ----------
    title, source : str
        ``##TITLE`` and the file name (or ``"<string>"``); ``observe_mhz``: MHz or None.
    ppm, intensity : numpy.ndarray (n,) or None
        Spectrum axis (ppm, file order) and intensities × YFACTOR, when the block has ``##XYDATA``.
    peak_ppm, peak_y, peak_width_hz, peak_lines : tuple
        Peak-table positions (ppm), Y × YFACTOR (integrals if ``y_is_integral``: ``##YUNITS`` names
        INTEGRAL or AREA), widths (Hz or None) and 1-based file lines; ``has_peak_table``.
    """

    title: str
    source: str
    observe_mhz: float | None
    ppm: np.ndarray | None
    intensity: np.ndarray | None
    peak_ppm: tuple[float, ...]
    peak_y: tuple[float, ...]
    peak_width_hz: tuple[float | None, ...]
    peak_lines: tuple[int, ...]
    y_is_integral: bool
    has_peak_table: bool
    warnings: tuple[str, ...]

# ------------------------------------------------------------------------------------ text files
def read_text_file(path: str | os.PathLike) -> tuple[str, tuple[str, ...]]:
    """Read a text file as UTF-8 (BOM stripped), else Latin-1; returns (text, warnings).

    The limits of :mod:`ringshift.limits` apply (file size, binary content, line length).
    """
    name = os.fspath(path)
    raw = _limits.read_text_bytes(name, "a peak list (CSV/TSV) or a JCAMP-DX file")
    notes: tuple[str, ...]
    try:
        text, notes = raw.decode("utf-8-sig"), ()
    except UnicodeDecodeError:
        text, notes = raw.decode("latin-1"), ("not valid UTF-8; read as Latin-1",)
    _limits.check_lines(text, name)
    return text, notes

# -------------------------------------------------------------------------------- block parsing
def normalise_label(name: str) -> str:
    """JCAMP label name without spaces, ``-``, ``/``, ``_``, upper case (``Data Type`` → ``DATATYPE``)."""
    return re.sub(r"[\s\-/_]", "", name).upper()


def _blocks(text: str, source: str) -> list[dict]:
    stack: list[dict] = []
    done: list[dict] = []
    data_lines: list | None = None
    last_label: list | None = None
    for lineno, raw in enumerate(text.splitlines(), 1):
        line = raw.split("$$", 1)[0]
        if not line.strip():
            continue
        where = f"{source}:{lineno}"
        m = _LABEL.match(line)
        if m is None:
            if line.lstrip().startswith("##"):
                raise InputError("label without '=' (expected ##NAME=value)", where)
            if not stack:
                raise InputError("text before the first ##TITLE= label; not a JCAMP-DX file", where)
            if data_lines is not None:
                data_lines.append((lineno, line))
            elif last_label is not None:
                last_label[0] += " " + line.strip()
            continue
        name, value = normalise_label(m.group(1)), m.group(2).strip()
        if name == "TITLE":
            stack.append({"labels": {}, "data": {}, "line": lineno})
        elif not stack:
            raise InputError(f"##{m.group(1).strip()}= before ##TITLE=; JCAMP-DX files start with ##TITLE=", where)
        block = stack[-1]
        data_lines = last_label = None
        if name == "END":
            done.append(stack.pop())
            if not stack:
                break
        elif name in _DATA_LABELS:
            if name in block["data"] and name != "DATATABLE":  # NTUPLES pages repeat ##DATA TABLE
                raise InputError(f"second ##{m.group(1).strip()}= in one block", where)
            data_lines = []
            block["data"].setdefault(name, (lineno, value, data_lines))
        elif name not in block["labels"]:
            last_label = block["labels"][name] = [value, lineno]
    if stack:
        raise InputError(f"no ##END= for the block opened by ##TITLE= at line {stack[-1]['line']} "
                         "(file truncated?)", source)
    if not done:
        raise InputError("no ##TITLE= label; not a JCAMP-DX file", source)
    return done

_SHOWN = {"JCAMPDX": "JCAMP-DX", "DATATYPE": "DATA TYPE", ".OBSERVEFREQUENCY": ".OBSERVE FREQUENCY",
          ".OBSERVENUCLEUS": ".OBSERVE NUCLEUS", ".SHIFTREFERENCE": ".SHIFT REFERENCE"}


class _Labels:
    """Typed access to one block's labels (normalised names), with file:line in every message."""

    def __init__(self, labels: dict, source: str):
        self.labels, self.source = labels, source

    def text(self, name: str, default: str | None = None) -> str:
        if name in self.labels:
            return self.labels[name][0]
        if default is None:
            raise InputError(f"missing required label ##{_SHOWN.get(name, name)}=", self.source)
        return default

    def number(self, name: str, default: float | None = None, *, required=False, positive=False,
               nonzero=False) -> float | None:
        if name not in self.labels:
            if required:
                self.text(name)
            return default
        value, line = self.labels[name]
        shown, where = _SHOWN.get(name, name), f"{self.source}:{line}"
        try:
            number = float(value.replace("D", "E").replace("d", "e"))
        except ValueError:
            raise InputError(f"##{shown}={value!r} is not a number", where) from None
        if not math.isfinite(number):
            raise InputError(f"##{shown}={value!r} is not a finite number", where)
        if (positive and number <= 0) or (nonzero and number == 0):
            raise InputError(f"##{shown}={value!r}; expected a {'positive' if positive else 'non-zero'} number",
                             where)
        return number


def parse_jcamp_text(text: str, *, source: str = "<string>") -> JcampData:
    """Parse JCAMP-DX ``text`` (module notes: what is read, rules applied) into a :class:`JcampData`.

    ``source`` names the file in messages. Raises InputError for missing required labels
    (``##TITLE``, ``##JCAMP-DX``, ``##XUNITS``, ``##END``; for ``##XYDATA`` also ``##FIRSTX``,
    ``##LASTX``, ``##NPOINTS``), bad numbers, Hz data without ``##.OBSERVE FREQUENCY``, NPOINTS not
    matching the data and unsupported forms.
    """
    _limits.check_lines(text, source)
    blocks = _blocks(text.lstrip("\ufeff"), source)
    chosen = [b for b in blocks if "XYDATA" in b["data"] or "PEAKTABLE" in b["data"]]
    if not chosen:
        kinds = {k for b in blocks for k in b["data"]}
        if kinds & {"NTUPLES", "DATATABLE"}:
            raise InputError("##NTUPLES (multi-page) data are not supported; export the real spectrum as "
                             "##XYDATA=(X++(Y..Y)) or a ##PEAK TABLE", source)
        if "XYPOINTS" in kinds:
            raise InputError("##XYPOINTS data are not supported; expected ##XYDATA=(X++(Y..Y)) or ##PEAK TABLE",
                             source)
        raise InputError("no ##XYDATA= or ##PEAK TABLE= in the file", source)
    block = chosen[0]
    notes: list[str] = []
    if len(chosen) > 1:
        notes.append(f"{len(chosen)} data blocks; read the one starting at line {block['line']}")
    lab = _Labels(block["labels"], source)
    version = lab.text("JCAMPDX")
    if not version.strip().startswith(("4", "5", "6")):
        notes.append(f"##JCAMP-DX={version!r}: version not 4.x/5.x, read as 5.01")
    if "NMR" not in lab.text("DATATYPE", "NMR").upper():
        notes.append(f"##DATA TYPE={lab.text('DATATYPE')!r} is not an NMR type")
    if re.sub(r"[^0-9A-Za-z]", "", lab.text(".OBSERVENUCLEUS", "1H")).upper() not in ("1H", "H1", "H"):
        notes.append(f"##.OBSERVE NUCLEUS={lab.text('.OBSERVENUCLEUS')}: not 1H")
    xunits = lab.text("XUNITS").strip().upper()
    if xunits not in ("PPM", "HZ"):
        raise InputError(f"##XUNITS={xunits}; expected PPM or HZ", source)
    observe = lab.number(".OBSERVEFREQUENCY", positive=True)
    if xunits == "HZ" and observe is None:
        raise InputError("##XUNITS=HZ but no ##.OBSERVE FREQUENCY= (MHz) to convert Hz to ppm", source)
    scale = (xunits, observe, lab.number("XFACTOR", 1.0, nonzero=True), lab.number("YFACTOR", 1.0, nonzero=True))
    if "PEAKASSIGNMENTS" in block["data"]:
        notes.append("##PEAK ASSIGNMENTS ignored (not supported)")
    ppm, intensity = _spectrum(block, lab, *scale, source, notes) if "XYDATA" in block["data"] else (None, None)
    peaks: tuple[tuple[float, ...], tuple[float, ...], tuple[float | None, ...], tuple[int, ...]] = (
        _peak_table(block, lab, *scale, source, notes) if "PEAKTABLE" in block["data"] else ((), (), (), ()))
    yunits = lab.text("YUNITS", "").upper()
    return JcampData(lab.text("TITLE").strip(), source, observe, ppm, intensity, *peaks,
                     y_is_integral="INTEGRAL" in yunits or "AREA" in yunits,
                     has_peak_table="PEAKTABLE" in block["data"], warnings=tuple(notes))


def _spectrum(block, lab, xunits, observe, xfactor, yfactor, source, notes):
    line0, varlist, lines = block["data"]["XYDATA"]
    if re.sub(r"\s", "", varlist).upper() != "(X++(Y..Y))":
        raise InputError(f"##XYDATA={varlist}; only (X++(Y..Y)) is supported", f"{source}:{line0}")
    firstx, lastx, npoints_f = (lab.number(name, required=True) for name in ("FIRSTX", "LASTX", "NPOINTS"))
    if npoints_f != int(npoints_f) or not 2 <= npoints_f <= MAX_POINTS:
        raise InputError(f"##NPOINTS={npoints_f:g}; expected an integer from 2 to {MAX_POINTS}",
                         f"{source}:{lab.labels['NPOINTS'][1]}")
    npoints = int(npoints_f)
    if firstx == lastx:
        raise InputError("##FIRSTX equals ##LASTX; the spectrum has no width", source)
    values, x_checks = decode_xydata(lines, npoints=npoints, source=source)
    if len(values) != npoints:
        raise InputError(f"##NPOINTS={npoints} but ##XYDATA holds {len(values)} values", f"{source}:{line0}")
    with np.errstate(all="ignore"):
        intensity = np.asarray(values, dtype=np.float64) * yfactor
        x = np.linspace(firstx, lastx, npoints)
        if not (np.all(np.isfinite(intensity)) and np.all(np.isfinite(x))):
            raise InputError("intensities × YFACTOR or the X axis overflow to non-finite values",
                             f"{source}:{line0}")
        ppm = x / observe if xunits == "HZ" else x
    dx = (lastx - firstx) / (npoints - 1)
    off = [ln for ln, xv, k in x_checks if not abs(xv * xfactor - (firstx + k * dx)) <= 2 * abs(dx)]
    if off:
        notes.append(f"X values at the start of {len(off)} ##XYDATA line(s) (first: line {off[0]}) are more "
                     "than 2 points from FIRSTX + k·DELTAX; the axis was built from FIRSTX/LASTX/NPOINTS")
    firsty = lab.number("FIRSTY")
    if firsty is not None:
        if not math.isclose(firsty, intensity[0], rel_tol=1e-6, abs_tol=abs(yfactor)):
            notes.append(f"##FIRSTY={firsty:g} but the first decoded Y is {intensity[0]:g}")
    if ".SHIFTREFERENCE" in lab.labels:
        ppm = _shift_reference(lab.text(".SHIFTREFERENCE"), ppm, notes)
    if not np.all(np.isfinite(ppm)):
        raise InputError("the ppm axis is not finite", source)
    return np.ascontiguousarray(ppm), np.ascontiguousarray(intensity)


def _shift_reference(value: str, ppm: np.ndarray, notes: list[str]) -> np.ndarray:
    parts = [p.strip() for p in value.strip().strip("()").split(",")]
    try:
        point, shift = int(float(parts[2])), float(parts[3])
    except (IndexError, ValueError, OverflowError):
        notes.append(f"##.SHIFT REFERENCE={value!r} not understood; ignored")
        return ppm
    if not (1 <= point <= ppm.size and math.isfinite(shift)):
        notes.append(f"##.SHIFT REFERENCE point {point} outside the data; ignored")
        return ppm
    offset = shift - ppm[point - 1]
    if abs(offset) > 1e-3:
        notes.append(f"axis moved by {offset:+.4f} ppm to honour ##.SHIFT REFERENCE")
    return ppm + offset


def _peak_table(block, lab, xunits, observe, xfactor, yfactor, source, notes):
    line0, varlist, lines = block["data"]["PEAKTABLE"]
    form = re.sub(r"\s", "", varlist).upper()
    size = {"(XY..XY)": 2, "(XYW..XYW)": 3}.get(form)
    if size is None:
        raise InputError(f"##PEAK TABLE={varlist}; expected (XY..XY) or (XYW..XYW)", f"{source}:{line0}")
    numbers: list[tuple[float, int]] = []
    for lineno, text in lines:
        for item in _PEAK_SEP.split(text.strip()):
            if not item:
                continue
            if not _NUMBER.fullmatch(item):
                raise InputError(f"{item!r} in ##PEAK TABLE is not a number", f"{source}:{lineno}")
            value = float(item)
            if not math.isfinite(value):
                raise InputError(f"{item!r} in ##PEAK TABLE is not finite", f"{source}:{lineno}")
            numbers.append((value, lineno))
            if len(numbers) > size * _limits.MAX_PEAKS:
                _limits.check_count(len(numbers) // size, _limits.MAX_PEAKS, "peaks in ##PEAK TABLE",
                                    f"{source}:{lineno}")
    if len(numbers) % size:
        raise InputError(f"##PEAK TABLE={form} holds {len(numbers)} numbers, not a multiple of {size}",
                         f"{source}:{numbers[-1][1]}")
    groups = [numbers[i:i + size] for i in range(0, len(numbers), size)]
    _limits.check_count(len(groups), _limits.MAX_PEAKS, "peaks in ##PEAK TABLE", f"{source}:{line0}")
    n_declared = lab.number("NPOINTS")
    if n_declared is not None:
        if n_declared != len(groups):
            raise InputError(f"##NPOINTS={n_declared:g} but ##PEAK TABLE holds {len(groups)} peaks", source)
    to_ppm = (1.0 / observe) if xunits == "HZ" else 1.0
    to_hz = 1.0 if xunits == "HZ" else observe
    ppm, ys, widths = [], [], []
    for g in groups:
        ppm.append(g[0][0] * xfactor * to_ppm)
        ys.append(g[1][0] * yfactor)
        w = g[2][0] * xfactor if size == 3 else 0.0
        if w < 0:
            raise InputError(f"negative peak width W={g[2][0]:g}", f"{source}:{g[2][1]}")
        widths.append(None if w == 0 or to_hz is None else w * to_hz)
    if size == 3 and to_hz is None:
        notes.append("peak widths in ppm but no ##.OBSERVE FREQUENCY; widths dropped")
    for value in ppm + ys + [w for w in widths if w is not None]:
        if not math.isfinite(value):
            raise InputError("peak table values overflow with XFACTOR/YFACTOR", f"{source}:{line0}")
    return tuple(ppm), tuple(ys), tuple(widths), tuple(g[0][1] for g in groups)


def read_jcamp_file(path: str | os.PathLike) -> JcampData:
    """Read a JCAMP-DX file; see :func:`parse_jcamp_text`."""
    text, notes = read_text_file(path)
    data = parse_jcamp_text(text, source=os.fspath(path))
    if notes:
        data = dataclasses.replace(data, warnings=notes + data.warnings)
    return data

# ---------------------------------------------------------------------------------------- writing
def _one_line(text: str) -> str:
    return " ".join(str(text).split()).replace("##", "#") or "untitled"


def _write(path, lines: list[str]) -> None:
    from ringshift.io.writing import atomic_write  # the output contract of every writer

    atomic_write(path, ("\n".join(lines) + "\n").encode("ascii", errors="replace"), force=True)


def _check_observe(observe_mhz, needed: bool) -> float | None:
    if observe_mhz is None:
        if needed:
            raise InputError("observe_mhz is needed for Hz data or widths", "observe_mhz")
        return None
    try:
        value = float(observe_mhz)
    except (TypeError, ValueError):
        value = math.nan
    if not (math.isfinite(value) and value > 0):
        raise InputError(f"observe_mhz={observe_mhz!r}; expected a positive number of MHz", "observe_mhz")
    return value


def write_jcamp_spectrum(path: str | os.PathLike, ppm, intensity, *, observe_mhz: float | None, title: str,
                         compress: str = "DIF", xunits: str = "PPM") -> None:
    """Write a 1D ¹H spectrum as JCAMP-DX 5.01 ``##XYDATA=(X++(Y..Y))``, lines ≤ 80 characters.

    Parameters
    ----------
    path : str or os.PathLike
    ppm, intensity : array_like (n,)
        Evenly spaced δ axis (ppm, either direction, n ≥ 2) and intensities, stored as integers ×
        YFACTOR = max|y| / 1e8: the round-trip error is at most max|y| × 5e-9.
    observe_mhz : float or None
        Spectrometer frequency, MHz; required when ``xunits="HZ"``.
    title : str
    compress : {"AFFN", "PAC", "SQZ", "DIF"}
        ASDF form; "DIF" means DIF with DUP runs and Y checks.
    xunits : {"PPM", "HZ"}

    Raises InputError (wrong shapes, non-finite values, uneven axis) or OutputError (unwritable).
    """
    x = np.asarray(ppm, dtype=np.float64)
    y = np.asarray(intensity, dtype=np.float64)
    if x.ndim != 1 or y.shape != x.shape or x.size < 2:
        raise InputError(f"ppm {x.shape} and intensity {y.shape}; expected two (n,) arrays with n ≥ 2", "ppm")
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
        raise InputError("ppm and intensity must be finite", "ppm")
    step = np.diff(x)
    if step[0] == 0 or np.max(np.abs(step - step.mean())) > 1e-6 * abs(step.mean()):
        raise InputError("the ppm axis must be evenly spaced and strictly monotonic", "ppm")
    xunits = str(xunits).upper()
    if xunits not in ("PPM", "HZ"):
        raise InputError(f"xunits={xunits!r}; expected 'PPM' or 'HZ'", "xunits")
    if compress not in FORMS:
        raise InputError(f"compress={compress!r}; expected one of {', '.join(FORMS)}", "compress")
    observe = _check_observe(observe_mhz, xunits == "HZ")
    if xunits == "HZ":
        assert observe is not None, "_check_observe(needed=True) raises when observe_mhz is missing"
        xv = x * observe
    else:
        xv = x
    ymax = float(np.max(np.abs(y)))
    yfactor = float(f"{ymax / 1e8:.10g}") or 1.0
    yi = np.rint(y / yfactor).astype(np.int64)
    head = [f"##TITLE={_one_line(title)}", "##JCAMP-DX=5.01", "##DATA TYPE=NMR SPECTRUM",
            "##DATA CLASS=XYDATA", "##ORIGIN=ringshift", "##OWNER=public domain"]
    if observe is not None:
        head += [f"##.OBSERVE FREQUENCY={observe!r}", "##.OBSERVE NUCLEUS=^1H"]
    head += [f"##XUNITS={xunits}", "##YUNITS=ARBITRARY UNITS", "##XFACTOR=1", f"##YFACTOR={yfactor!r}",
             f"##FIRSTX={float(xv[0])!r}", f"##LASTX={float(xv[-1])!r}",
             f"##DELTAX={float((xv[-1] - xv[0]) / (x.size - 1))!r}", f"##NPOINTS={x.size}",
             f"##FIRSTY={float(yi[0] * yfactor)!r}", "##XYDATA=(X++(Y..Y))"]
    _write(path, head + encode_xydata(xv, yi, compress) + ["##END="])


def write_jcamp_peak_table(path: str | os.PathLike, ppm, y, width_hz=None, *, observe_mhz: float | None,
                           title: str, y_is_integral: bool) -> None:
    """Write a JCAMP-DX 5.01 ``##PEAK TABLE`` in ppm: (XYW..XYW) when every width is known, else (XY..XY).

    ``ppm`` and ``y`` (n,) are written exactly (shortest round-trip repr); ``y`` are integrals
    (``##YUNITS=INTEGRAL``, read back as such) if ``y_is_integral``, else heights. ``width_hz`` (n,
    Hz or None) is written as W in ppm, which needs ``observe_mhz`` (MHz).
    """
    ppm = [float(v) for v in ppm]
    y = [float(v) for v in y]
    widths = list(width_hz) if width_hz is not None else [None] * len(ppm)
    if len(y) != len(ppm) or len(widths) != len(ppm):
        raise InputError("ppm, y and width_hz must have the same length", "peaks")
    if not all(math.isfinite(v) for v in ppm + y):
        raise InputError("peak positions and Y values must be finite", "peaks")
    observe = _check_observe(observe_mhz, False)
    w_ppm: list[float] | None = None  # the W column, when the frequency and every width are known
    if ppm and observe is not None and all(w is not None for w in widths):
        w_ppm = [float(w) / observe for w in widths if w is not None]
    xyw = w_ppm is not None
    head = [f"##TITLE={_one_line(title)}", "##JCAMP-DX=5.01", "##DATA TYPE=NMR PEAK TABLE",
            "##DATA CLASS=PEAK TABLE", "##ORIGIN=ringshift", "##OWNER=public domain"]
    if observe is not None:
        head += [f"##.OBSERVE FREQUENCY={observe!r}", "##.OBSERVE NUCLEUS=^1H"]
    head += ["##XUNITS=PPM", f"##YUNITS={'INTEGRAL' if y_is_integral else 'ARBITRARY UNITS'}",
             f"##NPOINTS={len(ppm)}", f"##PEAK TABLE=({'XYW..XYW' if xyw else 'XY..XY'})"]
    if w_ppm is None:
        rows = [f"{p!r}, {v!r}" for p, v in zip(ppm, y)]
    else:
        rows = [f"{p!r}, {v!r}, {w!r}" for p, v, w in zip(ppm, y, w_ppm)]
    _write(path, head + rows + ["##END="])
