"""The one JSON form of each result, with ``schema_version``: prediction, comparison and trajectory.

There is one function per result type that produces plain Python data (:func:`prediction_to_dict`,
:func:`comparison_to_dict`, :func:`trajectory_to_dict`; the π summary is
:func:`ringshift.reporting.pi_summary.pi_summary`); the CLI, the report, the text and CSV tables and the API's
``to_frame`` all format from them, so they cannot disagree. The JSON Schemas are in
``ringshift/data/schemas/`` (:mod:`ringshift.reporting.schemas`).
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING

from ringshift._numbers import rounded as _r

if TYPE_CHECKING:
    from ringshift.comparison.run import CompareResult
    from ringshift.runners.trajectory import TrajectoryPrediction

__all__ = ['comparison_to_dict', 'trajectory_to_dict']



def comparison_to_dict(res: CompareResult) -> dict:
    """Plain-data form of a comparison, with the prediction it rests on."""
    comp = res.comparison.to_dict()
    out = {
        "ringshift_result": "comparison",
        "schema_version": SCHEMA_VERSION,
        "name": res.prediction.structure.name,
        "compound_name": res.prediction.structure.label,
        "peaks_source": res.peaks.source,
        "verdict": comp.pop("verdict"),
        "verdict_circuit": comp.pop("verdict_circuit"),
    }
    out.update(comp)
    out["peak_warnings"] = list(res.peaks.warnings)
    out["reference_lines"] = reference_lines(res)
    if getattr(res, "configurations", None) is not None:
        out["configurations"] = res.configurations
    out["prediction"] = prediction_to_dict(res.prediction)
    out["caution"] = CAUTION
    return out

def reference_lines(res: CompareResult) -> list[dict]:
    """The peak-list lines at a solvent-residual or TMS position, or given a non-sample kind: how each was
    taken (``taken_as``: sample, solvent, tms, impurity) and why (``reason``), from
    :func:`ringshift.spectra.solvents.reference_line_reasons`. ``index`` is the peak's index in ``peaks``."""
    from ringshift.spectra.solvents import reference_line_reasons

    reasons = reference_line_reasons(res.peaks.peaks, len(res.prediction.protons))
    out = []
    for i, (kind, why) in reasons.items():
        p = res.peaks.peaks[i]
        out.append({"index": i, "label": res.comparison.peaks[i].label, "shift_ppm": _r(p.shift_ppm),
                    "integral": None if p.integral is None else _r(p.integral), "at_line": p.flagged_as,
                    "taken_as": kind, "reason": why})
    return out

#: Version of the JSON layout written by every command (``schema_version`` in each object). The layout is
#: described by the JSON Schemas in ``ringshift/data/schemas/``; renamed or removed fields raise the major
#: number and are listed in README.md ("JSON output").
SCHEMA_VERSION = "2.0"

CAUTION = ("Ring-current models are approximate: they estimate the ring-current part of each shift, not "
           "the whole shift. Confirm assignments with 2D NMR and the current with quantum-chemical calculations.")

def circuit_to_dict(cr) -> dict:
    c = cr.circuit
    return {
        "label": c.label, "kind": c.kind, "atoms": list(c.atoms), "size": c.size,
        "centre": [_r(v) for v in cr.centre], "normal": [_r(v) for v in cr.normal],
        "radius_A": _r(cr.radius_A), "planarity_rms_A": _r(cr.planarity_rms_A),
        "max_p_misalignment_deg": _r(cr.max_misalignment_deg, 2), "planar": cr.planar,
        "pi_electrons": cr.pi_electrons, "huckel_class": cr.huckel_class,
        "current_nA_per_T": _r(cr.current_nA_per_T), "current_rel_benzene": _r(cr.current_rel_benzene),
        "current_source": cr.current_source, "note": cr.note,
    }


def prediction_to_dict(pred) -> dict:
    """Plain-data form of a :class:`ringshift.shifts.records.Prediction` (the JSON schema)."""
    s = pred.structure
    loops = [cr.circuit.label for cr in pred.circuits]
    out = {
        "ringshift_result": "prediction",
        "schema_version": SCHEMA_VERSION,
        "name": s.name,
        "compound_name": s.label,
        "source": s.source,
        "charge": s.charge,
        "n_atoms": s.mol.GetNumAtoms(),
        "n_hydrogens": len(pred.protons),
        "model": pred.model,
        "circuits": [circuit_to_dict(cr) | {"model": pred.model} for cr in pred.circuits],
        "perimeters": [circuit_to_dict(cr) for cr in pred.perimeters],
        "protons": [
            {
                "index": p.index, "parent": p.parent, "group": p.group,
                "ring_current_ppm": _r(p.ring_current_ppm),
                "ring_current_by_circuit_ppm": {lab: _r(v) for lab, v in zip(loops, p.per_circuit_ppm)},
                "conformer_spread_ppm": _r(p.spread_ppm),
                "charge_ppm": _r(p.charge_ppm),
                "proton_class": p.proton_class,
                "reference_ppm": _r(p.reference_ppm),
                "predicted_ppm": _r(p.predicted_ppm),
            }
            for p in pred.protons
        ],
        "groups": [
            {
                "group": g.group, "label": g.label, "atoms": list(g.atoms), "parents": list(g.parents),
                "n_h": g.n_h, "proton_class": g.proton_class,
                "ring_current_ppm": _r(g.ring_current_ppm),
                "ring_current_by_circuit_ppm": {lab: _r(v) for lab, v in zip(loops, g.per_circuit_ppm)},
                "geometric_factor_ppm_per_nA_T": {lab: _r(v, 6) for lab, v in zip(loops, g.geometric_ppm_per_nA_T)},
                "conformer_spread_ppm": _r(g.spread_ppm),
                "charge_ppm": _r(g.charge_ppm),
                "reference_ppm": _r(g.reference_ppm), "reference_sd_ppm": _r(g.reference_sd_ppm),
                "predicted_ppm": _r(g.predicted_ppm),
            }
            for g in pred.groups
        ],
        "conformers": {
            "count": int(s.coords.shape[0]),
            "weights": [_r(x, 6) for x in s.weights],
        },
        "provenance": pred.provenance,
        "warnings": list(pred.warnings),
        "caution": CAUTION,
    }
    return out


def to_json(data: dict) -> str:
    """Deterministic JSON text (sorted keys are not used: the schema order is the reading order)."""
    import json  # the standard library's, loaded when JSON is written (not at start-up)

    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


#: Record field -> JSON key of a trajectory circuit, so a quantity has the name it has in a prediction.
_TRAJECTORY_CIRCUIT_KEYS = {"max_misalignment_deg": "max_p_misalignment_deg",
                            "max_misalignment_sd_deg": "max_p_misalignment_sd_deg"}


def trajectory_to_dict(tp: TrajectoryPrediction) -> dict:
    """Plain-data (JSON) form of a :class:`TrajectoryPrediction`."""
    r = _r
    pos = {h: k for k, h in enumerate(tp.h_indices)}
    labels = [c.label for c in tp.circuits]
    return {
        "ringshift_result": "trajectory_prediction", "schema_version": SCHEMA_VERSION,
        "name": tp.template.structure.name, "source": tp.provenance["source"], "model": tp.model,
        "currents": tp.currents,
        "n_frames": tp.n_frames, "weights": tp.provenance["weights"], "temperature_K": tp.temperature_K,
        "exchange_groups": [list(g) for g in tp.exchange_groups],
        "circuits": [{_TRAJECTORY_CIRCUIT_KEYS.get(k, k): (list(v) if isinstance(v, tuple) else r(v)
                      if isinstance(v, float) else v) for k, v in dataclasses.asdict(c).items()}
                     for c in tp.circuits],
        "protons": [{"index": h, "ring_current_ppm": r(tp.ring_current_ppm[k]), "spread_ppm": r(tp.spread_ppm[k]),
                     "ring_current_slow_exchange_ppm": r(tp.ring_current_slow_ppm[k]),
                     "spread_slow_exchange_ppm": r(tp.spread_slow_ppm[k]),
                     "ring_current_by_circuit_ppm": {lab: r(tp.per_circuit_ppm[c, k]) for c, lab in enumerate(labels)},
                     "reference_ppm": r(tp.reference_ppm[k]), "charge_ppm": r(tp.charge_ppm[k]),
                     "predicted_ppm": r(tp.predicted_ppm[k])} for h, k in pos.items()],
        "groups": [{"label": g.label, "atoms": list(g.atoms), "n_h": len(g.atoms),
                    "ring_current_ppm": r(g.ring_current_ppm), "spread_ppm": r(g.spread_ppm),
                    "predicted_ppm": r(g.predicted_ppm)} for g in tp.groups],
        "frames": {"numbers": tp.frame_numbers.tolist(), "weights": [r(x, 8) for x in tp.weights]},
        "provenance": tp.provenance, "warnings": list(tp.warnings), "caution": CAUTION,
    }
