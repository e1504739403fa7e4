"""NMReDATA: an assignment as an open-standard SD file (writer and reader).

NMReDATA (Pupier et al., "NMReDATA, a standard to report the NMR assignment and parameters of organic
compounds", Magn. Reson. Chem. 2018, 56, 703–715, doi:10.1002/mrc.4737) is an SD file whose molecule block
is the structure and whose data items ("tags") hold the NMR data. The tags and their syntax follow the
NMReDATA Initiative's definition of format version 1.1 (pages "NMReDATA tag format" and "1D attributes" of
nmredata.org / nmredatainitiative.github.io):

* the item lines of a tag end in ``\\`` (mandatory for tags of several lines from version 1.1 on); a reader
  drops the ASCII 10 line ends and splits at ``\\``; everything after ``;`` is a comment; ", " separates
  fields; labels holding ``,`` ``/`` ``\\`` ``|`` ``(`` ``)`` or ``&`` are quoted as ``<"...">``;
* atoms are numbered from 1 in the order of the molecule block; the block written here carries every
  hydrogen explicitly, so an assignment names H atoms directly (the ``H<n>`` form of implicit hydrogens
  is read, never written);
* ``NMREDATA_ASSIGNMENT``: ``label, shift, atom, atom, ...`` with one scalar shift (ppm);
* ``NMREDATA_1D_1H``: ``Larmor=`` (MHz, mandatory) and ``Spectrum_Location=`` (mandatory), then one line per
  signal: the shift (ppm, four decimals; a reader also takes a range ``a-b``) and the attributes in the
  order S= (multiplicity), N= (number of nuclei), L= (label(s) of NMREDATA_ASSIGNMENT), E= (integral).
  Only the shift is mandatory, so a signal with no assigned group is written without L= and N=.

What the writer puts in (:func:`nmredata_text`):

* the structure: the conformer of :func:`ringshift.reporting.sdf.best_conformer`'s rule (lowest energy, else
  most populated), all H, atom numbering that of the prediction plus one;
* NMREDATA_VERSION 1.1, NMREDATA_LEVEL 0 (one assignment, no interchangeable or ambiguous labels),
  NMREDATA_ID (Title= the structure's name; Comment= lines: the assignment is a ring-current-model estimate
  to be confirmed by 2D NMR or quantum-chemical shift calculation; groups left unassigned; lines left out;
  what Spectrum_Location points to), NMREDATA_FORMULA, NMREDATA_SMILES (with explicit H, as the molecule
  block), NMREDATA_SOLVENT (the solvent the peak list was read with, else "unknown"), NMREDATA_TEMPERATURE
  (the temperature of the model's Boltzmann weights, K, with a comment saying so);
* NMREDATA_ASSIGNMENT: one line per hydrogen group that the comparison assigned to a peak, with the
  observed shift of that peak; groups without a peak are not written (they are named in a Comment= line);
* NMREDATA_1D_1H: every sample line of the peak list, integrals in protons (the comparison's integral
  scale); lines taken as solvent, reference (TMS) or impurity are left out and named in a Comment= line,
  because a line of the 1D tag is a signal of the compound.

:func:`read_nmredata` reads such a file back into an :class:`NMReDataRecord` (molecule, header values,
assignments with 0-based atom indices, signals). Its errors are one line naming the file and the tag.
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import rdMolDescriptors

from ringshift.errors import InputError
from ringshift.io.writing import atomic_write

if TYPE_CHECKING:
    from ringshift.comparison.run import CompareResult

__all__ = ["NMReDataAssignment", "NMReDataSignal", "NMReDataRecord", "nmredata_text", "write_nmredata", "larmor_mhz_of",
           "read_nmredata", "parse_nmredata", "NMREDATA_VERSION", "ESTIMATE_COMMENT"]

#: Format version written (NMReDATA tag format 1.1).
NMREDATA_VERSION = "1.1"
#: Field separator of the format (comma + space; a reader accepts a bare comma).
SEP = ", "
#: The sentence of NMREDATA_ID's Comment= line.
ESTIMATE_COMMENT = ("assignment estimated by ringshift from a ring-current model of the 1H shifts: an estimate "
                    "to be confirmed by 2D NMR (COSY, HSQC, HMBC, NOESY) or by quantum-chemical shift calculation")
_QUOTE_CHARS = set(",/\\|()&")
_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_SHIFT = re.compile(rf"^({_NUMBER})(?:\s*-\s*({_NUMBER}))?$")
_MULTIPLICITY = re.compile(r"^[A-Za-z]{1,12}$")


# --------------------------------------------------------------------------------------- records
@dataclass(frozen=True)
class NMReDataAssignment:
    """One line of NMREDATA_ASSIGNMENT: ``label``, ``shift_ppm`` and the ``atoms`` (0-based indices of the
    molecule block, i.e. the file's numbers minus one)."""

    label: str
    shift_ppm: float
    atoms: tuple[int, ...]


@dataclass(frozen=True)
class NMReDataSignal:
    """One signal line of NMREDATA_1D_1H: ``shift_ppm`` (the centre of a range), ``range_ppm`` (the range
    as written, or None), ``multiplicity`` (S=), ``n_nuclei`` (N=), ``labels`` (L=, names of
    NMREDATA_ASSIGNMENT lines; empty when unassigned) and ``integral`` (E=)."""

    shift_ppm: float
    range_ppm: tuple[float, float] | None
    multiplicity: str | None
    n_nuclei: int | None
    labels: tuple[str, ...]
    integral: float | None


@dataclass(frozen=True, eq=False)
class NMReDataRecord:
    """An NMReDATA file as read: the RDKit molecule (hydrogens kept), ``version``, ``level``, ``solvent``,
    ``temperature_K``, ``larmor_mhz`` (of NMREDATA_1D_1H, MHz), ``assignments``, ``signals``, the
    ``comments`` of NMREDATA_ID (key → value) and every NMREDATA tag's raw text (``tags``)."""

    source: str
    mol: Chem.Mol
    version: str
    level: int
    solvent: str | None
    temperature_K: float | None
    larmor_mhz: float | None
    assignments: tuple[NMReDataAssignment, ...]
    signals: tuple[NMReDataSignal, ...]
    comments: dict[str, str]
    tags: dict[str, str]


# ---------------------------------------------------------------------------------------- writer
def _label(text: str) -> str:
    text = " ".join(str(text).replace(";", " ").split())
    return f'<"{text}">' if _QUOTE_CHARS & set(text) else text


def _value(text: str) -> str:
    """A free-text value of one tag line: no line separator, no comment mark, one line."""
    return " ".join(str(text).replace("\\", "/").replace(";", ",").split())


def _mhz(value: float) -> str:
    return f"{value:.6f}".rstrip("0").rstrip(".")


def _best_conformer(structure) -> int:
    """Lowest-energy conformer, else the most populated (the rule of ringshift.reporting.sdf.best_conformer)."""
    e = getattr(structure, "energies_kcal_mol", None)
    if e is not None and len(e) == structure.coords.shape[0] and np.all(np.isfinite(e)):
        return int(np.argmin(e))
    return int(np.argmax(structure.weights))


def _molecule(structure) -> Chem.Mol:
    mol = Chem.Mol(structure.mol)
    mol.RemoveAllConformers()
    conf = Chem.Conformer(mol.GetNumAtoms())
    for i, xyz in enumerate(np.asarray(structure.coords[_best_conformer(structure)], dtype=float)):
        conf.SetAtomPosition(i, [float(v) for v in xyz])
    conf.Set3D(True)
    mol.AddConformer(conf, assignId=True)
    mol.SetProp("_Name", _value(structure.name)[:80])
    return mol


def _solvent(peaks, solvent: str | None) -> str:
    if solvent is not None:
        from ringshift.spectra.solvents import _solvent_name

        return _solvent_name(solvent)
    if getattr(peaks, "solvent", None):
        return str(peaks.solvent)
    for p in peaks.peaks:  # a line flagged at a solvent's residual position names that solvent
        if p.flagged_as and " residual" in p.flagged_as:
            return p.flagged_as.split(" residual")[0]
    return "unknown"


#: Longest physical line of a tag's text (the SD data-line limit of the CTfile formats, from memory); longer
#: items are broken with a bare line end, which a version-1.1 reader drops (NMReDATA "End-of-line" page).
MAX_LINE = 200


def _wrap(line: str) -> str:
    out = []
    while len(line) > MAX_LINE:
        cut = MAX_LINE
        while line[cut] in ">$ " and cut > 1:  # a physical line must not start like an SD tag or record end
            cut -= 1
        out.append(line[:cut])
        line = line[cut:]
    return "\n".join([*out, line])


def _tag(name: str, lines) -> str:
    return f">  <{name}>\n" + "".join(f"{_wrap(line)}\\\n" for line in lines) + "\n"


def larmor_mhz_of(peaks, larmor_mhz: float | None = None) -> float:
    """The ¹H frequency (MHz) for NMREDATA_1D_1H's mandatory ``Larmor=``: ``larmor_mhz`` if given, else the
    peak list's ``observe_mhz``; InputError naming the peak list when neither is known."""
    mhz = larmor_mhz if larmor_mhz is not None else peaks.observe_mhz
    if mhz is None:
        raise InputError("the spectrometer's 1H frequency is unknown and NMReDATA requires it (Larmor=): add a line "
                         "'# observe_mhz = 400' (your frequency, MHz) to the peak table; JCAMP-DX files give it as "
                         "##.OBSERVE FREQUENCY", peaks.source, parameter="larmor_mhz")
    if not (isinstance(mhz, (int, float)) and not isinstance(mhz, bool) and math.isfinite(mhz) and mhz > 0):
        raise InputError(f"larmor_mhz={mhz!r}; expected a positive number of MHz", "larmor_mhz")
    return float(mhz)


def nmredata_text(result: CompareResult, *, solvent: str | None = None, larmor_mhz: float | None = None) -> str:
    """The NMReDATA SD record (text) of a comparison's assignment (module notes: what is written and why).

    Parameters
    ----------
    result : ringshift.comparison.run.CompareResult
    solvent : str, optional
        Deuterated solvent (a name or alias of :data:`ringshift.spectra.solvents.SOLVENT_RESIDUAL_PPM`);
        default: the one the peak list was read with.
    larmor_mhz : float, optional
        ¹H frequency of the spectrometer, MHz; default: the peak list's (``# observe_mhz = ...`` in a CSV,
        ``##.OBSERVE FREQUENCY`` in JCAMP-DX). NMReDATA requires it: without either, InputError.

    Returns
    -------
    str
        One SD record ending in ``$$$$``.
    """
    pred, comp, pl = result.prediction, result.comparison, result.peaks
    mhz = larmor_mhz_of(pl, larmor_mhz)
    mol = _molecule(pred.structure)
    scale = float(comp.integral_scale)
    groups = comp.assignment
    assigned = [g for g in groups if g.peak_index is not None and g.observed_ppm is not None]
    missing = [g for g in groups if g.peak_index is None or g.observed_ppm is None]
    left_out = [(k, p) for k, p in enumerate(pl.peaks) if p.kind != "sample"]

    ident = [f"Title={_value(pred.structure.name)}", f"Comment={ESTIMATE_COMMENT}"]
    n = 1
    if missing:
        ident.append(f"Comment{n}=hydrogen groups not assigned (no peak left for them): " + _value(", ".join(
            f"{g.label} (atoms {' '.join(str(h + 1) for h in g.atoms)})" for g in missing)))
        n += 1
    if left_out:
        ident.append(f"Comment{n}=lines of the peak list left out of NMREDATA_1D_1H as not of the compound: "
                     + _value(", ".join(f"{p.shift_ppm:.4f} ppm taken as {p.kind}"
                                        + (f" at the {p.flagged_as} line" if p.flagged_as else "")
                                        for _, p in left_out)))
        n += 1
    where = _value(Path(pl.source).name).replace(" ", "_") or "unknown"
    ident.append(f"Comment{n}=Spectrum_Location names the peak list that was compared ({where}), not the "
                 "spectrometer's data folder: point it to the raw data (folder or DOI) before deposition")
    out = [Chem.MolToMolBlock(mol, kekulize=True)]
    out.append(_tag("NMREDATA_VERSION", [NMREDATA_VERSION]))
    out.append(">  <NMREDATA_LEVEL>\n0\n\n")
    out.append(_tag("NMREDATA_ID", ident))
    out.append(f">  <NMREDATA_FORMULA>\n{rdMolDescriptors.CalcMolFormula(mol)}\n\n")
    out.append(f">  <NMREDATA_SMILES>\n{_wrap(Chem.MolToSmiles(mol))}\n\n")
    out.append(f">  <NMREDATA_SOLVENT>\n{_solvent(pl, solvent)}\n\n")
    temp = pred.provenance.get("structure", {}).get("temperature_K") if isinstance(
        pred.provenance.get("structure"), dict) else None
    if temp is not None:
        out.append(f">  <NMREDATA_TEMPERATURE>\n{float(temp):.2f} K ;temperature of the model's Boltzmann weights\n\n")
    if assigned:
        out.append(_tag("NMREDATA_ASSIGNMENT", [
            SEP.join([_label(g.label), f"{g.observed_ppm:.4f}", *(str(h + 1) for h in g.atoms)]) for g in assigned]))
    signals = [f"Larmor={_mhz(float(mhz))}", f"Spectrum_Location=file:./{where}"]
    for k, p in enumerate(pl.peaks):
        if p.kind != "sample":
            continue
        summary = comp.peaks[k]
        fields = [f"{p.shift_ppm:.4f}"]
        mult = (p.multiplicity or "").strip()
        if _MULTIPLICITY.match(mult):
            fields.append(f"S={mult}")
        if summary.groups:
            fields.append(f"N={sum(groups[g].n_h for g in summary.groups)}")
            fields.append("L=" + SEP.join(_label(groups[g].label) for g in summary.groups))
        if p.integral is not None:
            fields.append(f"E={p.integral * scale:.4f}")
        signals.append(SEP.join(fields) + ("" if summary.groups else " ;not assigned to the structure"))
    out.append(_tag("NMREDATA_1D_1H", signals))
    return "".join(out) + "$$$$\n"


def write_nmredata(path: str | os.PathLike, result: CompareResult, *, force: bool = False,
                   inputs=(), solvent: str | None = None, larmor_mhz: float | None = None) -> Path:
    """Write :func:`nmredata_text` to ``path`` atomically (:func:`ringshift.io.writing.atomic_write`: an
    existing file only with ``force``, never one of ``inputs``). Returns the path."""
    return atomic_write(path, nmredata_text(result, solvent=solvent, larmor_mhz=larmor_mhz), force=force,
                        inputs=inputs)


# ---------------------------------------------------------------------------------------- reader
def _items(raw: str, version: str) -> list[str]:
    """The items of a tag: line ends dropped and ``\\`` as separator (version > 1), comments removed."""
    if version.strip() in ("1", "1.0"):
        parts = raw.split("\n")
    else:
        parts = raw.replace("\r", "").replace("\n", "").split("\\")
    items = [p.split(";", 1)[0].strip() for p in parts]
    return [i for i in items if i]


def _fields(item: str) -> list[str]:
    """Comma-separated fields of an item, keeping ``<"...">`` quoted labels whole (quotes removed)."""
    out, cur, i = [], "", 0
    while i < len(item):
        if item.startswith('<"', i):
            end = item.find('">', i + 2)
            if end < 0:
                raise ValueError(f'unclosed quoted label in {item!r}')
            cur += item[i + 2:end]
            i = end + 2
        elif item[i] == ",":
            out.append(cur.strip())
            cur, i = "", i + 1
        else:
            cur += item[i]
            i += 1
    out.append(cur.strip())
    return out


def _float(text: str, what: str, where: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{what} {text!r} is not a number", where) from None
    if not math.isfinite(value):
        raise InputError(f"{what} {text!r} is not a finite number", where)
    return value


def _atoms(fields, mol, where: str) -> tuple[int, ...]:
    n = mol.GetNumAtoms()
    out: list[int] = []
    for f in fields:
        implicit = f[:1] in "Hh" and f[1:].isdigit()
        number = f[1:] if implicit else f
        if not number.isdigit() or not 1 <= int(number) <= n:
            raise InputError(f"atom {f!r}; expected an atom number 1..{n} of the molecule block (or H<number>)",
                             where)
        if implicit:
            hs = [a.GetIdx() for a in mol.GetAtomWithIdx(int(number) - 1).GetNeighbors() if a.GetAtomicNum() == 1]
            if not hs:
                raise InputError(f"atom {f!r} names the hydrogens of atom {number}, which has no explicit "
                                 "hydrogen in the molecule block", where)
            out += hs
        else:
            out.append(int(number) - 1)
    if not out:
        raise InputError("no atom numbers after the shift; expected 'label, shift, atom, ...'", where)
    return tuple(out)


def _assignments(raw, version, mol, where) -> tuple[NMReDataAssignment, ...]:
    out = []
    for k, item in enumerate(_items(raw, version), start=1):
        if item.startswith(("Interchangeable=", "Equivalent")):
            continue  # level > 0 annotations: not needed to read the assignment itself
        at = f"{where} item {k}"
        try:
            fields = _fields(item)
        except ValueError as exc:
            raise InputError(str(exc), at) from None
        if len(fields) < 3 or not fields[0]:
            raise InputError(f"{item!r}; expected 'label, shift, atom, ...'", at)
        out.append(NMReDataAssignment(fields[0], _float(fields[1], "shift", at), _atoms(fields[2:], mol, at)))
    return tuple(out)


def _signal(item: str, labels: set[str], at: str) -> NMReDataSignal:
    try:
        fields = _fields(item)
    except ValueError as exc:
        raise InputError(str(exc), at) from None
    m = _SHIFT.match(fields[0].replace(" ", ""))
    if not m:
        raise InputError(f"{fields[0]!r}; expected a shift (ppm) or a range 'a-b' first", at)
    lo = _float(m.group(1), "shift", at)
    rng = None if m.group(2) is None else (lo, _float(m.group(2), "shift", at))
    attrs: dict[str, list[str]] = {}
    key = None
    for f in fields[1:]:
        name, eq, value = f.partition("=")
        if eq and re.fullmatch(r"[A-Za-z][A-Za-z0-9]*", name.strip()):
            key = name.strip()
            attrs[key] = [value.strip()]
        elif key is not None:
            attrs[key].append(f)  # a continued list (several labels or couplings)
        else:
            raise InputError(f"{f!r}; expected NAME=value attributes after the shift", at)
    names = tuple(x for x in attrs.get("L", []) if x)
    unknown = [x for x in names if x not in labels]
    if unknown:
        raise InputError(f"label {unknown[0]!r} is not a label of NMREDATA_ASSIGNMENT", at)
    n = attrs.get("N", [None])[0]
    if n is not None and not n.isdigit():
        raise InputError(f"N={n!r}; expected a whole number of nuclei", at)
    e = attrs.get("E", [None])[0]
    return NMReDataSignal(shift_ppm=lo if rng is None else 0.5 * (rng[0] + rng[1]), range_ppm=rng,
                          multiplicity=attrs.get("S", [None])[0] or None, n_nuclei=None if n is None else int(n),
                          labels=names, integral=None if e is None else _float(e, "integral E=", at))


def parse_nmredata(text: str, source: str = "<string>") -> NMReDataRecord:
    """Read the first record of NMReDATA SD text (see :func:`read_nmredata`)."""
    supplier = Chem.SDMolSupplier()
    with rdBase.BlockLogs():  # RDKit's own parse messages would repeat the error below on stderr
        supplier.SetData(text, removeHs=False)
        mol = next(iter(supplier), None) if len(supplier) else None
    if mol is None:
        raise InputError("no readable molecule record; expected an SD file (molecule block, then tags)", source)
    tags = {name: mol.GetProp(name) for name in mol.GetPropNames() if name.startswith("NMREDATA_")}
    if "NMREDATA_VERSION" not in tags:
        raise InputError("missing; expected the format version, e.g. 1.1", f"{source}: <NMREDATA_VERSION>")
    version = tags["NMREDATA_VERSION"].replace("\\", "").split(";")[0].strip()
    if not re.fullmatch(r"\d+(\.\d+)?", version):
        raise InputError(f"{version!r}; expected a version number such as 1.1", f"{source}: <NMREDATA_VERSION>")

    def one(name: str) -> str | None:
        items = _items(tags[name], version) if name in tags else []
        return items[0] if items else None

    level_text = one("NMREDATA_LEVEL") or "0"
    if level_text not in ("0", "1", "2", "3"):
        raise InputError(f"{level_text!r}; expected 0, 1, 2 or 3", f"{source}: <NMREDATA_LEVEL>")
    temp = one("NMREDATA_TEMPERATURE")
    temperature = None
    if temp is not None:
        m = re.fullmatch(rf"({_NUMBER})\s*K", temp)
        if not m or not 0 < float(m.group(1)) < math.inf:
            raise InputError(f"{temp!r}; expected a temperature in kelvin such as '298.0 K'",
                             f"{source}: <NMREDATA_TEMPERATURE>")
        temperature = float(m.group(1))
    where = f"{source}: <NMREDATA_ASSIGNMENT>"
    assignments = _assignments(tags.get("NMREDATA_ASSIGNMENT", ""), version, mol, where)
    labels = {a.label for a in assignments}
    larmor, signals = None, []
    if "NMREDATA_1D_1H" in tags:
        where = f"{source}: <NMREDATA_1D_1H>"
        for k, item in enumerate(_items(tags["NMREDATA_1D_1H"], version), start=1):
            key, eq, value = item.partition("=")
            if eq and re.fullmatch(r"[A-Za-z][A-Za-z0-9_]*", key.strip()) and not _SHIFT.match(key.strip()):
                if key.strip() == "Larmor":
                    larmor = _float(value.strip(), "Larmor", where)
                    if larmor <= 0:
                        raise InputError(f"Larmor={value.strip()}; expected a positive frequency in MHz", where)
                continue  # Spectrum_Location=, Pulseprogram=, MD5...=, Decoupled=: parameters, not signals
            signals.append(_signal(item, labels, f"{where} item {k}"))
        if larmor is None:
            raise InputError("no Larmor= line; the format requires the spectrometer frequency (MHz)", where)
    comments = {}
    for item in _items(tags.get("NMREDATA_ID", ""), version):
        key, eq, value = item.partition("=")
        if eq:
            comments[key.strip()] = value.strip()
    return NMReDataRecord(source=source, mol=mol, version=version, level=int(level_text),
                          solvent=one("NMREDATA_SOLVENT"), temperature_K=temperature, larmor_mhz=larmor,
                          assignments=assignments, signals=tuple(signals), comments=comments, tags=tags)


def read_nmredata(path: str | os.PathLike) -> NMReDataRecord:
    """Read the first record of an NMReDATA file (``*.nmredata.sdf``) into an :class:`NMReDataRecord`.

    Raises InputError (one line naming the file and the tag) for a file that cannot be read, a missing or
    malformed NMREDATA_VERSION, LEVEL or TEMPERATURE, an assignment line without a numeric shift or with an
    atom number outside the molecule block, a 1D signal without a numeric shift, an L= label that
    NMREDATA_ASSIGNMENT does not define, or NMREDATA_1D_1H without its mandatory Larmor=.
    """
    from ringshift import limits

    name = os.fspath(path)
    raw = limits.read_text_bytes(name, "an NMReDATA file (SD file with NMREDATA_ tags)")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    limits.check_lines(text, name)
    return parse_nmredata(text, name)
