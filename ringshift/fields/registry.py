"""The shielding models by name: descriptions and per-proton geometric factors.

:data:`MODEL_DESCRIPTIONS` maps each model name of :data:`ringshift.constants.MODELS` to one line of text;
:func:`geometric_factors` evaluates the named model's kernel for every conformer, circuit and proton and
returns ppm of ring-current shift per nA/T of diatropic current.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ringshift import fields
from ringshift.constants import JB_SEPARATION_A, MODELS
from ringshift.errors import InputError
from ringshift.geometry.circuits import Circuit, CircuitGeometry

MODEL_DESCRIPTIONS = {
    "polygon": "exact polygon Biot-Savart double loop through the ring atoms (±0.64 Å, half current each)",
    "johnson-bovey": "Johnson-Bovey double circular loop of the ring's mean radius (±0.64 Å)",
    "haigh-mallion": "Haigh-Mallion geometric factor in the mean ring plane",
    "dipole": "Pople point magnetic dipole at the ring centre",
    "network": "Biot-Savart over every pi bond carrying its own Hueckel-London bond current (±0.64 Å)",
}


def geometric_factors(coords: np.ndarray, h_idx: Sequence[int], circuits: Sequence[Circuit],
                      geoms: Sequence[CircuitGeometry], model: str, *,
                      separation_A: float = JB_SEPARATION_A) -> np.ndarray:
    """Ring-current shift per unit diatropic current of each circuit at each proton.

    Parameters
    ----------
    coords : ndarray, shape (n_conf, n_atoms, 3)
        Å.
    h_idx : sequence of int, length n_h
        Hydrogen atom indices.
    circuits, geoms : loop-carrying circuits and their geometries.
    model : str
        One of ``polygon``, ``johnson-bovey``, ``haigh-mallion``, ``dipole``.

    Returns
    -------
    ndarray, shape (n_conf, n_circuits, n_h)
        Δδ_rc in ppm per nA/T (positive = downfield), i.e. −σ_iso per unit current.
    """
    n_conf = coords.shape[0]
    h_idx = list(h_idx)
    out = np.zeros((n_conf, len(circuits), len(h_idx)))
    if not h_idx or not circuits:
        return out
    for c, (circ, geo) in enumerate(zip(circuits, geoms)):
        atoms = list(circ.atoms)
        if model == "polygon":  # one frame-batched call over the conformer stack
            out[:, c, :] = -fields.polygon_shielding(coords[:, h_idx, :], coords[:, atoms, :], geo.normal,
                                                     separation_A=separation_A)
            continue
        for k in range(n_conf):
            pts = coords[k, h_idx, :]
            verts = coords[k, atoms, :]
            n = geo.normal[k]
            if model == "johnson-bovey":
                sig = fields.johnson_bovey_shielding(pts, geo.centre[k], n, float(geo.radius_A[k]),
                                                     separation_A=separation_A)
            elif model == "haigh-mallion":
                sig = fields.haigh_mallion_shielding(pts, verts, n)
            elif model == "dipole":
                sig = fields.point_dipole_shielding(pts, geo.centre[k], n, float(geo.area_A2[k]))
            else:
                raise InputError(f"unknown shielding model {model!r}; expected one of {', '.join(MODELS)}",
                                 "model")
            out[k, c, :] = -np.asarray(sig, dtype=float)
    return out
