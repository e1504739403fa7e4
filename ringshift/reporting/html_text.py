"""How the HTML report writes things: its style sheet, numbers, symbols, names and file paths.

One place for the report's typography, so every table, note and caption follows the same rules:

* numbers never print a negative zero (``-0.00`` → ``0.00``), by :func:`ringshift._numbers.text`;
* symbols: ``±``, ``×``, ``Å``, ``°``, ``α``, ``β`` and "Hückel" replace the ASCII spellings that
  older JSON and logs used (``+/-``, `` x ``, ``0.64 A``, ``50 deg``, ``alpha``, ``beta``,
  ``Hueckel``/``huckel``); :func:`ascii_form` is the inverse used to check displayed text;
* file paths show the file name only: a report must not reveal the folders of the machine it was
  made on;
* provenance keys get readable names.
"""

from __future__ import annotations

import os
import re

from ringshift import _numbers as numbers

__all__ = ["CSS", "number", "readable", "ascii_form", "file_name", "scrub_paths", "provenance_label"]

CSS = """
:root{--ink:#1c1c1c;--accent:#b4531c;--muted:#5f5f5f;--rule:#dcd7ce;--paper:#fbfaf7;--warn:#fff4dc}
*{box-sizing:border-box}
body{margin:0;background:var(--paper);color:var(--ink);font:15px/1.45 "DejaVu Sans",system-ui,sans-serif}
main{max-width:1320px;margin:0 auto;padding:22px 28px 64px}
h1{font-size:1.45rem;margin:0 0 2px;font-weight:700;letter-spacing:.01em}
h2{font-size:1.1rem;margin:30px 0 8px;padding-bottom:3px;border-bottom:2px solid var(--ink)}
h3{font-size:.98rem;margin:18px 0 4px}
.sub{color:var(--muted);font-size:.9rem;margin:0 0 14px;overflow-wrap:anywhere}
.verdict{background:#fff;border:1px solid var(--rule);border-left:7px solid var(--accent);
 padding:12px 16px;margin:14px 0}
.verdict .big{font-size:1.25rem;font-weight:700}
.caution{background:var(--warn);border:2px dashed #9a6a00;padding:10px 14px;margin:14px 0;font-weight:600}
.numbering{font-size:.9rem;border-left:3px solid var(--rule);padding:2px 10px;margin:10px 0}
nav{font-size:.88rem;margin:10px 0}
nav a{color:var(--ink);margin-right:14px}
.wide{max-width:100%;overflow-x:auto;margin:4px 0 16px}
table{border-collapse:collapse;font-size:12.5px;background:#fff;border:1px solid var(--rule);max-width:100%}
.wide>table{margin:0}
th,td{padding:3px 7px;border-bottom:1px solid var(--rule);text-align:left;vertical-align:top}
th{background:#f1eee8;font-weight:600;overflow-wrap:normal;hyphens:manual}
thead th{vertical-align:bottom}
td{overflow-wrap:break-word}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap;overflow-wrap:normal}
td.list{white-space:normal;min-width:4em}
.def{font-size:.85rem;color:var(--muted);max-width:70em}
figure{margin:12px 0 22px;background:#fff;border:1px solid var(--rule);padding:10px}
figure svg{display:block;max-width:100%;height:auto;margin:0 auto}
#fig-structure svg{width:100%;max-width:760px}
figcaption{font-size:.85rem;color:var(--muted);margin-top:6px}
ul.notes{font-size:.9rem}
footer{margin-top:40px;font-size:.8rem;color:var(--muted)}
@media (max-width:900px){main{padding:14px 12px 40px}table{font-size:11.5px}th,td{padding:2px 5px}}
@page{size:A4;margin:14mm 12mm}
@media print{
 body{background:#fff;font-size:9.5pt}
 main{max-width:none;padding:0}
 nav{display:none}
 h2{break-after:avoid;page-break-after:avoid;margin-top:16px}
 h3{break-after:avoid;page-break-after:avoid}
 section{break-before:auto}
 figure{break-inside:avoid;page-break-inside:avoid;border:none;padding:0;margin:6px 0 12px}
 figure svg{max-width:100%;max-height:235mm;width:auto;height:auto}
 .verdict,.caution{break-inside:avoid}
 .wide{overflow:visible}
 table{font-size:7pt;width:auto;max-width:100%}
 th,td{padding:1px 3px}
 th{white-space:normal}
 td.num{white-space:nowrap}
 td.list{white-space:normal}
 thead{display:table-header-group}
 tr{break-inside:avoid;page-break-inside:avoid}
 a{color:inherit;text-decoration:none}
}
"""

_SYMBOLS = [
    (re.compile(r"\+/-"), "±"),
    (re.compile(r"(?<=\d) ?A\b(?![/-])"), " Å"),
    (re.compile(r"(?<=\d) deg\b"), "°"),
    (re.compile(r"(?<=[\w)]) x (?=[\w(+\-.])"), " × "),
    (re.compile(r"\balpha\b"), "α"),
    (re.compile(r"\bbeta\b"), "β"),
    (re.compile(r"\b[Hh](?:ue|u)ckel"), "Hückel"),
    (re.compile(r"Hückel-[Ll]ondon"), "Hückel–London"),
]
_ASCII = [("±", "+/-"), (" Å", " A"), ("Å", "A"), ("°", " deg"), (" × ", " x "), ("α", "alpha"), ("β", "beta"),
          ("Hückel", "huckel"), ("hückel", "huckel"), ("Hueckel", "huckel"), ("hueckel", "huckel"),
          ("Huckel", "huckel"), ("−", "-"), ("–", "-")]
#: An absolute POSIX or Windows path inside running text (at least two components).
_ABS_PATH = re.compile(r"(?<![\w.\]])(?:[A-Za-z]:[\\/]|/)(?:[\w.+~-]+[\\/])+([\w.+~-]+)")

_PROVENANCE = {
    "model": "shielding model", "model_description": "shielding model, in words",
    "separation_A": "loop separation from the ring plane, ± (Å)", "currents": "a priori currents",
    "beta_model": "resonance integrals (β model)", "pi_charge_ppm_per_electron": "π-charge shift (ppm per electron)",
    "benzene_current_nA_per_T": "benzene current (nA/T)", "structure": "structure",
    "format": "file format", "records": "records read", "hydrogens_added": "hydrogens added",
    "energy_property": "energy property", "coordinates": "coordinates", "conformers_kept": "conformers kept",
    "temperature_K": "temperature (K)", "source": "source file", "seed": "random seed",
    "conformers_rejected_ez": "conformers rejected (E/Z changed)", "rmsd_prune_A": "RMSD pruning (Å)",
    "embedding_basic_knowledge": "embedding with basic knowledge", "not_converged": "force field not converged",
    "energy_window_kcal_mol": "energy window (kcal/mol)",
}
_UNITS = [("_nA_per_T", " (nA/T)"), ("_ppm_per_electron", " (ppm per electron)"), ("_ppm", " (ppm)"),
          ("_A2", " (Å²)"), ("_A", " (Å)"), ("_K", " (K)"), ("_deg", " (°)"), ("_kcal_mol", " (kcal/mol)")]


def number(value: float, spec: str) -> str:
    """``format(value, spec)`` without a negative zero (the one rule of :func:`ringshift._numbers.text`)."""
    return numbers.text(value, spec)


def readable(text: str) -> str:
    """Report spelling of a text: ±, ×, Å, °, α, β and Hückel (see the module notes)."""
    for pat, rep in _SYMBOLS:
        text = pat.sub(rep, text)
    return text


def ascii_form(text: str) -> str:
    """Undo :func:`readable` (and typographic minus), lower-casing "Hückel": for comparing shown text with JSON."""
    for a, b in _ASCII:
        text = text.replace(a, b)
    return re.sub(r"(?<=\d) A\b", " A", text)


def file_name(path) -> str:
    """The last component of a file path (either separator); other text unchanged."""
    text = str(path)
    return re.split(r"[\\/]", text.rstrip("/\\"))[-1] or text


def scrub_paths(text: str) -> str:
    """Replace every absolute path in running text by its file name."""
    return _ABS_PATH.sub(lambda m: m.group(1), text)


def provenance_label(parts) -> str:
    """Readable name of a provenance key path: ``("structure", "temperature_K")`` → "structure: temperature (K)"."""
    names = []
    for p in parts:
        key = str(p)
        if key in _PROVENANCE:
            names.append(_PROVENANCE[key])
            continue
        unit = ""
        for suffix, u in _UNITS:
            if key.endswith(suffix):
                key, unit = key[: -len(suffix)], u
                break
        names.append(key.replace("_", " ") + unit)
    return ": ".join(names)


def looks_like_path(text: str) -> bool:
    """True for text that names a file by a path (has a folder separator and no spaces or SMILES brackets)."""
    return bool(re.search(r"[\\/]", text)) and not re.search(r"[\s\[\]=#@()]", text) and (
        os.path.isabs(text) or bool(re.match(r"^[A-Za-z]:[\\/]", text)) or "." in file_name(text))
