"""RDKit outputs of a result: an SDF with per-atom shift properties, and a 2D drawing with shift notes.

SDF: one record, all hydrogens, the lowest-energy conformer (the most populated one when no energies
are known). Per-atom values are RDKit atom property lists (``atom.dprop.<name>`` data items, one value
per atom, ``n/a`` where an atom has none); RDKit's SD reader turns them back into atom properties.
Every value is taken from the JSON dictionaries (:func:`ringshift.report.json.prediction_to_dict`,
:func:`ringshift.report.json.comparison_to_dict`), so the SDF and ``results.json`` cannot disagree.

Drawing: heavy atoms only, each carbon (or other atom) bearing hydrogens annotated with its group's
ring-current shift (ASCII text: a Unicode minus vanished in RDKit notes), loop-carrying circuits
highlighted in pale colours with their label at the centre.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from rdkit import Chem
from rdkit.Chem import rdDepictor
from rdkit.Chem.Draw import rdMolDraw2D
from rdkit.Geometry import Point2D

from ringshift.errors import InputError
from ringshift.io.writing import atomic_write
from ringshift.report.json import prediction_to_dict

__all__ = ["best_conformer", "atom_properties", "structure_sdf", "write_sdf", "read_sdf", "structure_figure",
           "PROTON_PROPERTIES", "ASSIGNMENT_PROPERTIES"]

#: SDF atom property ← key of a ``prediction_to_dict(...)["protons"]`` entry.
PROTON_PROPERTIES = {"ring_current_ppm": "ring_current_ppm", "predicted_ppm": "predicted_ppm",
                     "reference_ppm": "reference_ppm", "charge_ppm": "charge_ppm",
                     "conformer_spread_ppm": "conformer_spread_ppm"}
#: SDF atom property ← key of a ``comparison_to_dict(...)["assignment"]`` entry (fitted values).
ASSIGNMENT_PROPERTIES = {"observed_ppm": "observed_ppm", "fitted_predicted_ppm": "predicted_ppm",
                         "fitted_ring_current_ppm": "ring_current_ppm", "residual_ppm": "residual_ppm"}

#: Pale highlight colours (RGB 0–1) of circuits R1, R2, ...; they differ in lightness as well as hue.
CIRCUIT_COLOURS = [(0.96, 0.82, 0.66), (0.74, 0.84, 0.95), (0.82, 0.92, 0.76), (0.91, 0.80, 0.93),
                   (0.98, 0.93, 0.68), (0.80, 0.80, 0.80)]


def best_conformer(structure) -> int:
    """Index of the lowest-energy conformer, or of the most populated one when energies are unknown."""
    e = getattr(structure, "energies_kcal_mol", None)
    if e is not None and len(e) == structure.coords.shape[0] and np.all(np.isfinite(e)):
        return int(np.argmin(e))
    return int(np.argmax(structure.weights))


def _results(prediction, compare_result):
    from ringshift.report.json import comparison_to_dict

    if compare_result is not None and compare_result.prediction is not prediction:
        raise InputError("the comparison was computed from a different prediction than the one given",
                         "compare_result")
    return (comparison_to_dict(compare_result) if compare_result is not None else None), prediction_to_dict(prediction)


def atom_properties(pred_dict: dict, comp_dict: dict | None = None) -> dict[str, dict[int, object]]:
    """Per-atom values for the SDF, from the JSON dictionaries.

    Returns
    -------
    dict
        property name → {atom index: value}; doubles for the shift columns, the group label
        (``group``, str) for hydrogens. Atoms without a value are absent.
    """
    out: dict[str, dict[int, object]] = {name: {} for name in [*PROTON_PROPERTIES, "group"]}
    labels = {g["group"]: g["label"] for g in pred_dict["groups"]}
    for p in pred_dict["protons"]:
        for name, key in PROTON_PROPERTIES.items():
            if p.get(key) is not None:
                out[name][p["index"]] = float(p[key])
        if p["group"] in labels:
            out["group"][p["index"]] = labels[p["group"]]
    if comp_dict is not None:
        for name in ASSIGNMENT_PROPERTIES:
            out[name] = {}
        for ga in comp_dict["assignment"]:
            for h in ga["atoms"]:
                for name, key in ASSIGNMENT_PROPERTIES.items():
                    if ga.get(key) is not None:
                        out[name][h] = float(ga[key])
    return out


def structure_sdf(prediction, *, compare_result=None) -> str:
    """SDF text: the structure (one conformer, all H) with per-atom ring-current properties.

    Parameters
    ----------
    prediction : ringshift.shifts.records.Prediction
    compare_result : ringshift.compare.run.CompareResult, optional
        Adds observed, fitted and residual shifts per hydrogen.

    Returns
    -------
    str
        One SD record. Molecule properties: ``ringshift_model``, ``ringshift_conformer`` (0-based
        index), ``ringshift_current_<label>_nA_per_T`` (a priori) and, with a comparison,
        ``ringshift_fitted_current_<label>_nA_per_T`` and ``ringshift_verdict``.
    """
    comp_dict, pred_dict = _results(prediction, compare_result)
    s = prediction.structure
    k = best_conformer(s)
    mol = Chem.Mol(s.mol)
    mol.RemoveAllConformers()
    conf = Chem.Conformer(mol.GetNumAtoms())
    for i, xyz in enumerate(np.asarray(s.coords[k], dtype=float)):
        conf.SetAtomPosition(i, [float(v) for v in xyz])
    conf.Set3D(True)
    mol.AddConformer(conf, assignId=True)
    mol.SetProp("_Name", str(s.name)[:80])
    mol.SetProp("ringshift_model", str(pred_dict["model"]))
    mol.SetIntProp("ringshift_conformer", k)
    for c in pred_dict["circuits"]:
        if c["current_nA_per_T"] is not None:
            mol.SetDoubleProp(f"ringshift_current_{c['label']}_nA_per_T", float(c["current_nA_per_T"]))
    if comp_dict is not None:
        mol.SetProp("ringshift_verdict", str(comp_dict["verdict"]))
        for c in comp_dict["circuits"]:
            mol.SetDoubleProp(f"ringshift_fitted_current_{c['label']}_nA_per_T", float(c["current_nA_per_T"]))
    for name, values in atom_properties(pred_dict, comp_dict).items():
        for i, v in values.items():
            atom = mol.GetAtomWithIdx(i)
            if isinstance(v, str):
                atom.SetProp(name, v)
            else:
                atom.SetDoubleProp(name, v)
        if any(isinstance(v, str) for v in values.values()):
            Chem.CreateAtomStringPropertyList(mol, name)
        else:
            Chem.CreateAtomDoublePropertyList(mol, name)
    buf = io.StringIO()
    with Chem.SDWriter(buf) as w:
        w.SetKekulize(True)
        w.write(mol)
    return buf.getvalue()


def write_sdf(path, prediction, *, compare_result=None, force: bool = False) -> Path:
    """Write :func:`structure_sdf` to ``path`` atomically."""
    return atomic_write(path, structure_sdf(prediction, compare_result=compare_result), force=force)


def read_sdf(path) -> Chem.Mol:
    """Read the first record of an SDF written by :func:`write_sdf` (hydrogens kept, atom lists parsed)."""
    sup = Chem.SDMolSupplier(str(path), removeHs=False)
    mol = next(iter(sup), None)
    if mol is None:
        raise InputError("no readable molecule record", str(path))
    return mol


# --------------------------------------------------------------------------------------- drawing
def _heavy_copy(mol: Chem.Mol) -> tuple[Chem.Mol, dict[int, int]]:
    """Hydrogen-free copy and the map original index → drawn index."""
    m = Chem.Mol(mol)
    m.RemoveAllConformers()
    for a in m.GetAtoms():
        a.SetIntProp("rs_index", a.GetIdx())
    try:
        h = Chem.RemoveHs(m)
    except Exception:  # RDKit refuses odd valences: draw with the hydrogens instead
        h = m
    return h, {a.GetIntProp("rs_index"): a.GetIdx() for a in h.GetAtoms()}


def _note(label: str, value: float) -> str:
    return f"{label} {value:+.2f}"  # ASCII sign and minus


def structure_figure(prediction, *, compare_result=None, fmt: str = "svg", size: tuple[int, int] = (640, 480)):
    """2D drawing with each hydrogen group's ring-current shift beside its parent atom.

    Parameters
    ----------
    prediction : ringshift.shifts.records.Prediction
    compare_result : ringshift.compare.run.CompareResult, optional
        When given the notes show the fitted ring-current shift (ppm), otherwise the a priori one.
    fmt : {"svg", "png"}
    size : (int, int)
        Pixels.

    Returns
    -------
    str (SVG text) or bytes (PNG)
    """
    if fmt not in ("svg", "png"):
        raise InputError(f"fmt={fmt!r}; expected 'svg' or 'png'", "fmt")
    mol, where = _heavy_copy(prediction.structure.mol)
    rdDepictor.Compute2DCoords(mol)
    shifts = {g.label: g.ring_current_ppm for g in prediction.groups}
    if compare_result is not None:
        shifts.update({ga.label: ga.ring_current_ppm for ga in compare_result.comparison.assignment})
    notes: dict[int, list[str]] = {}
    for g in prediction.groups:
        for parent in dict.fromkeys(g.parents):
            if parent in where:
                txt = _note(g.label, shifts[g.label])
                if txt not in notes.setdefault(where[parent], []):
                    notes[where[parent]].append(txt)
    for i, texts in notes.items():
        mol.GetAtomWithIdx(i).SetProp("atomNote", "/".join(texts))
    atom_hl: dict[int, list] = {}
    bond_hl: dict[int, list] = {}
    legend = []
    fitted = {cf.label: cf.current_nA_per_T for cf in compare_result.comparison.circuits} if compare_result else {}
    for c, cr in enumerate(prediction.circuits):
        col = CIRCUIT_COLOURS[c % len(CIRCUIT_COLOURS)]
        atoms = [where[a] for a in cr.circuit.atoms if a in where]
        for a in atoms:
            atom_hl.setdefault(a, []).append(col)
        for a, b in cr.circuit.bonds():
            bd = mol.GetBondBetweenAtoms(where.get(a, -1), where.get(b, -1)) if a in where and b in where else None
            if bd is not None:
                bond_hl.setdefault(bd.GetIdx(), []).append(col)
        cur = fitted.get(cr.circuit.label, cr.current_nA_per_T)
        legend.append(f"{cr.circuit.label} " + ("no current" if cur is None else f"{cur:+.1f} nA/T"))
    head = "fitted" if compare_result is not None else "a priori"
    legend_text = (f"ring-current shifts (ppm, {head}); " + ", ".join(legend)) if legend else \
        "ring-current shifts (ppm): no conjugated ring"
    w, h = int(size[0]), int(size[1])
    d = rdMolDraw2D.MolDraw2DSVG(w, h) if fmt == "svg" else rdMolDraw2D.MolDraw2DCairo(w, h)
    opts = d.drawOptions()
    opts.annotationFontScale = 0.62
    opts.padding = 0.12
    opts.legendFontSize = 14
    opts.clearBackground = True
    d.DrawMoleculeWithHighlights(mol, legend_text.encode("ascii", "replace").decode(), atom_hl, bond_hl, {}, {})
    pos = mol.GetConformer().GetPositions()
    d.SetFontSize(0.8 * d.FontSize())
    for cr in prediction.circuits:
        atoms = [where[a] for a in cr.circuit.atoms if a in where]
        if atoms:
            cx, cy = pos[atoms, 0].mean(), pos[atoms, 1].mean()
            d.DrawString(cr.circuit.label, Point2D(float(cx), float(cy)), 0)
    d.FinishDrawing()
    return d.GetDrawingText()
