"""The shielding models by name: descriptions and per-proton geometric factors.

:data:`MODEL_DESCRIPTIONS` maps each model name of :data:`ringshift.constants.MODELS` to one line of text;
:func:`geometric_factors` evaluates the named model's kernel for every conformer, circuit and proton and
returns ppm of ring-current shift per nA/T of diatropic current.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ringshift import _validation as _v
from ringshift import fields
from ringshift.constants import BAND_NODES, JB_SEPARATION_A, MODELS
from ringshift.errors import InputError
from ringshift.fields.band import band_quadrature
from ringshift.geometry.circuits import Circuit, CircuitGeometry

#: The models whose current can have a finite width (geometric_factors' width_A, height_width_A).
BAND_MODELS = ("polygon", "johnson-bovey")

MODEL_DESCRIPTIONS = {
    "polygon": "exact polygon Biot-Savart double loop through the ring atoms (±0.64 Å, half current each)",
    "johnson-bovey": "Johnson-Bovey double circular loop of the ring's mean radius (±0.64 Å)",
    "haigh-mallion": "Haigh-Mallion geometric factor in the mean ring plane",
    "dipole": "Pople point magnetic dipole at the ring centre",
    "network": "Biot-Savart over every pi bond carrying its own Hueckel-London bond current (±0.64 Å)",
}


def geometric_factors(coords: np.ndarray, h_idx: Sequence[int], circuits: Sequence[Circuit],
                      geoms: Sequence[CircuitGeometry], model: str, *,
                      separation_A: float = JB_SEPARATION_A, width_A: float = 0.0,
                      height_width_A: float = 0.0) -> np.ndarray:
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
    separation_A : float, keyword-only, Å
        Loops (or lobes of the band) at ±separation_A along the normal, half the current each.
    width_A, height_width_A : float, keyword-only, Å
        Finite width of the current (:mod:`ringshift.fields.band`): standard deviations of
        the in-plane offset and of the height about each lobe. Default 0: thin wires. Only the loop
        models (``polygon``, ``johnson-bovey``) have a width; a non-zero width with another model is an
        InputError. Calibrated values: :data:`ringshift.constants.BAND_WIDTH_A`,
        :data:`~ringshift.constants.BAND_HEIGHT_WIDTH_A` with :data:`~ringshift.constants.BAND_SEPARATION_A`.

    Returns
    -------
    ndarray, shape (n_conf, n_circuits, n_h)
        Δδ_rc in ppm per nA/T (positive = downfield), i.e. −σ_iso per unit current.
    """
    width_A = _v.real(width_A, "width_A", nonneg=True)
    height_width_A = _v.real(height_width_A, "height_width_A", nonneg=True)
    if (width_A or height_width_A) and model not in BAND_MODELS:
        raise InputError(f"model {model!r} has no current width; width_A and height_width_A apply to the loop "
                         f"models {', '.join(BAND_MODELS)} (pass 0 for {model!r})", "width_A")
    n_conf = coords.shape[0]
    h_idx = list(h_idx)
    out = np.zeros((n_conf, len(circuits), len(h_idx)))
    if not h_idx or not circuits:
        return out
    for c, (circ, geo) in enumerate(zip(circuits, geoms)):
        atoms = list(circ.atoms)
        if model == "polygon":  # one frame-batched call over the conformer stack
            out[:, c, :] = -fields.polygon_shielding(coords[:, h_idx, :], coords[:, atoms, :], geo.normal,
                                                     separation_A=separation_A, width_A=width_A,
                                                     height_width_A=height_width_A)
            continue
        for k in range(n_conf):
            pts = coords[k, h_idx, :]
            verts = coords[k, atoms, :]
            n = geo.normal[k]
            if model == "johnson-bovey":
                sig = _johnson_bovey_band(pts, geo.centre[k], n, float(geo.radius_A[k]), separation_A, width_A,
                                          height_width_A)
            elif model == "haigh-mallion":
                sig = fields.haigh_mallion_shielding(pts, verts, n)
            elif model == "dipole":
                sig = fields.point_dipole_shielding(pts, geo.centre[k], n, float(geo.area_A2[k]))
            else:
                raise InputError(f"unknown shielding model {model!r}; expected one of {', '.join(MODELS)}",
                                 "model")
            out[k, c, :] = -np.asarray(sig, dtype=float)
    return out


def _johnson_bovey_band(points, centre, normal, radius_A: float, separation_A: float, width_A: float,
                        height_width_A: float) -> np.ndarray:
    """Johnson–Bovey circular loops spread into a band (:mod:`ringshift.fields.band`): σ_iso (n,), ppm per nA/T.

    The band's in-plane offset t becomes the loop radius radius_A + t; each height z is a single loop of
    the points moved by −z. With both widths 0 this is the double loop of johnson_bovey_shielding itself.
    """
    if not width_A and not height_width_A:
        return fields.johnson_bovey_shielding(points, centre, normal, radius_A, separation_A=separation_A)
    n = np.asarray(normal, dtype=float) / np.linalg.norm(normal)
    offsets, w_off, heights, w_h = band_quadrature(separation_A, width_A, height_width_A, BAND_NODES)
    if radius_A + offsets.min() <= 0.0:
        raise InputError(f"width_A {width_A:g} Å is too wide for a loop of radius {radius_A:.3g} Å: the innermost "
                         f"quadrature loop would have radius {radius_A + offsets.min():.3g} Å; expected width_A "
                         f"below {radius_A / abs(offsets.min()) * width_A:.3g} Å", "width_A")
    out = np.zeros(len(points))
    for t, wt in zip(offsets, w_off):
        for z, wz in zip(heights, w_h):
            out += wt * wz * fields.johnson_bovey_shielding(points - z * n, centre, n, radius_A + t,
                                                            separation_A=0.0)
    return out
