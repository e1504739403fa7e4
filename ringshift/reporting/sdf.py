"""RDKit outputs of a result: an SDF with per-atom shift properties (and, re-exported, the 2D drawing).

SDF: one record, all hydrogens, the lowest-energy conformer (the most populated one when no energies
are known). Per-atom values are RDKit atom property lists (``atom.dprop.<name>`` data items, one value
per atom, ``n/a`` where an atom has none); RDKit's SD reader turns them back into atom properties.
Every value is taken from the JSON dictionaries (:func:`ringshift.reporting.json.prediction_to_dict`,
:func:`ringshift.reporting.json.comparison_to_dict`), so the SDF and ``results.json`` cannot disagree.

The 2D drawing with shift labels lives in :mod:`ringshift.reporting.structure_drawing`; its entry points
are re-exported here.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from rdkit import Chem, rdBase

from ringshift.errors import InputError
from ringshift.io.writing import atomic_write
from ringshift.reporting.json import prediction_to_dict
from ringshift.reporting.structure_drawing import (
    CIRCUIT_COLOURS,
    DrawnLabel,
    StructureLayout,
    glyph_boxes,
    structure_figure,
    structure_layout,
)

__all__ = ["best_conformer", "atom_properties", "structure_sdf", "write_sdf", "read_sdf", "structure_figure",
           "structure_layout", "StructureLayout", "DrawnLabel", "glyph_boxes", "CIRCUIT_COLOURS",
           "PROTON_PROPERTIES", "ASSIGNMENT_PROPERTIES"]

#: SDF atom property ← key of a ``prediction_to_dict(...)["protons"]`` entry.
PROTON_PROPERTIES = {"ring_current_ppm": "ring_current_ppm", "predicted_ppm": "predicted_ppm",
                     "reference_ppm": "reference_ppm", "charge_ppm": "charge_ppm",
                     "conformer_spread_ppm": "conformer_spread_ppm"}
#: SDF atom property ← key of a ``comparison_to_dict(...)["assignment"]`` entry (fitted values).
ASSIGNMENT_PROPERTIES = {"observed_ppm": "observed_ppm", "fitted_predicted_ppm": "predicted_ppm",
                         "fitted_ring_current_ppm": "ring_current_ppm", "residual_ppm": "residual_ppm"}


def best_conformer(structure) -> int:
    """Index of the lowest-energy conformer, or of the most populated one when energies are unknown."""
    e = getattr(structure, "energies_kcal_mol", None)
    if e is not None and len(e) == structure.coords.shape[0] and np.all(np.isfinite(e)):
        return int(np.argmin(e))
    return int(np.argmax(structure.weights))


def _results(prediction, compare_result):
    from ringshift.reporting.json import comparison_to_dict

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
    compare_result : ringshift.comparison.run.CompareResult, optional
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
                atom.SetDoubleProp(name, float(v))  # type: ignore[arg-type]  # numbers only here
        if any(isinstance(v, str) for v in values.values()):
            Chem.CreateAtomStringPropertyList(mol, name)
        else:
            Chem.CreateAtomDoublePropertyList(mol, name)
    buf = io.StringIO()
    # a metal chelate's dative bonds have no V2000 code: RDKit logs "unrecognized bond type" for each and writes
    # the record as V3000, which keeps them (measured with zinc porphine); the log lines are not for the user
    with rdBase.BlockLogs(), Chem.SDWriter(buf) as w:
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
