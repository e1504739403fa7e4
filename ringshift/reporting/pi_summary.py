"""The π-system judgement of a structure as plain data: counts, classes, planarity, levels, currents.

Used by ``ringshift pi`` and the report. Built on :func:`ringshift.shifts.prediction.predict` (circuits and
Hückel–London currents; the levels of the most populated conformer come from that step, or from
:func:`ringshift.pi.huckel.huckel` when the prediction has none).
"""

from __future__ import annotations

import numpy as np

from ringshift._numbers import rounded as _r
from ringshift._records import to_plain
from ringshift.pi.huckel import HuckelResult
from ringshift.pi.huckel import huckel as _pisystem_huckel
from ringshift.pi.perception import PiSystem
from ringshift.pi.perception import huckel_class as _pisystem_huckel_class
from ringshift.reporting.json import CAUTION, SCHEMA_VERSION, circuit_to_dict
from ringshift.shifts.prediction import predict


def pi_summary(structure, *, beta_model: str = "scf", prediction=None) -> dict:
    """Plain-data π summary of a structure (the JSON form of ``ringshift pi``)."""
    pred = prediction if prediction is not None else predict(structure, currents="huckel", beta_model=beta_model)
    pi = pred.pi
    # Prediction.pi is typed ``object | None`` in ringshift.shifts.records; predict() stores a PiSystem
    assert pi is None or isinstance(pi, PiSystem), \
        f"prediction.pi: expected a PiSystem, got {type(pi).__name__}"
    best = int(np.argmax(structure.weights))
    levels = None
    if pi is not None and pi.atoms:
        hr = pred.huckel
        # not from the London step (None), or computed with other parameters
        if not isinstance(hr, HuckelResult) or hr.beta_model != beta_model:
            hr = _pisystem_huckel(pi, structure.mol, structure.coords[best], beta_model=beta_model)
        levels = {
            "energies_beta": [_r(x) for x in hr.energies_beta],
            "occupations": [_r(x, 3) for x in hr.occupations],
            "homo_lumo_gap_beta": _r(hr.homo_lumo_gap_beta),
            "open_shell": bool(hr.open_shell),
            "degenerate_homo": bool(hr.degenerate_homo),
            "convention": "x = (E - alpha)/|beta|; bonding levels negative",
            "parameters": to_plain(dict(hr.parameters)),
        }
    n_el = int(pi.n_electrons) if pi is not None else 0
    return {
        "ringshift_result": "pi_system",
        "schema_version": SCHEMA_VERSION,
        "name": structure.name,
        "charge": structure.charge,
        "pi_atoms": list(pi.atoms) if pi is not None else [],
        "pi_electrons": n_el,
        "huckel_class": _pisystem_huckel_class(n_el) if pi is not None and pi.atoms else None,
        "fragments": [list(f) for f in pi.fragments] if pi is not None else [],
        "radical": bool(pi.radical) if pi is not None else False,
        "beta_model": beta_model,
        "circuits": [circuit_to_dict(cr) for cr in pred.circuits],
        "perimeters": [circuit_to_dict(cr) for cr in pred.perimeters],
        "levels": levels,
        "warnings": list(pred.warnings),
        "caution": CAUTION,
    }


def circuit_verdict(c: dict) -> str:
    cls, planar = c.get("huckel_class"), c.get("planar")
    if cls is None:
        return "not a pi circuit"
    shape = "planar enough" if planar else "too far from planar for continuous overlap"
    return f"{c['pi_electrons']} pi e, {cls}, {shape}"
