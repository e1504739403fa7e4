"""The current loops of a result, in arrays: which loops, where, and their shift at any point.

:func:`loops_of` takes the loops (ring atoms, normal, current, circuit geometry) of the most populated
conformer of a Prediction (a priori currents) or CompareResult (fitted currents); :func:`loop_shift_ppm`
evaluates their summed ring-current shift at arbitrary points through
:func:`ringshift.fields.registry.geometric_factors`, the function that gives the per-proton numbers;
:func:`wire_distance_A` and :func:`map_frame` give the geometry the maps in :mod:`ringshift.reporting.maps`
are drawn in.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field, fields

import numpy as np

from ringshift.constants import JB_SEPARATION_A, MAP_MODELS
from ringshift.errors import GeometryWarning, InputError
from ringshift.fields.registry import geometric_factors
from ringshift.geometry.circuits import Circuit, CircuitGeometry
from ringshift.reporting.figures import split_source

__all__ = ["Loop", "MapFrame", "MAP_MODELS", "check_map_model", "loop_shift_ppm", "wire_distance_A", "loops_of",
           "map_frame"]

#: Models that can be mapped: each gives a shielding at any point from a circuit's loop. The network
#: model sums Hückel–London bond currents that a prediction does not keep, and fitted currents are
#: per circuit, so it has no map of its own.

@dataclass(frozen=True)
class Loop:
    """One current loop: ring atoms in order (Å), its normal, its current (nA/T, > 0 diatropic), and its
    circuit geometry in the mapped conformer (centre, radius and area for the circular and dipole models)."""

    label: str
    vertices: np.ndarray
    normal: np.ndarray
    current_nA_per_T: float
    geometry: CircuitGeometry = field(repr=False)


@dataclass(frozen=True)
class MapFrame:
    """Orthonormal frame of a map: origin ``centre`` (Å); ``u``, ``v`` span the ring plane, ``n`` its normal."""

    centre: np.ndarray
    u: np.ndarray
    v: np.ndarray
    n: np.ndarray
    circuit: str


# -------------------------------------------------------------------------------------------- kernels
def check_map_model(model: str) -> str:
    """``model`` if it can be mapped; otherwise an InputError saying why and what to use instead."""
    if model == "network":
        raise InputError("the network model has no map: a prediction keeps per-circuit currents, not the bond "
                         "currents the network model sums; map the circuit loops with the polygon model", "model")
    if model not in MAP_MODELS:
        raise InputError(f"unknown shielding model {model!r}; expected one of {', '.join(MAP_MODELS)}", "model")
    return model


def loop_shift_ppm(points, loops, *, model: str = "polygon", separation_A: float = JB_SEPARATION_A) -> np.ndarray:
    """Ring-current shift of all loops summed, ppm (positive = downfield).

    Parameters
    ----------
    points : array_like, shape (n, 3)
        Å.
    loops : sequence of Loop
    model : str
        One of :data:`MAP_MODELS`; the kernel is the one :func:`ringshift.fields.registry.geometric_factors`
        uses for protons.
    separation_A : float
        Half-separation of the Johnson–Bovey double loops, Å.

    Returns
    -------
    ndarray, shape (n,)
        Δδ_rc = −Σ J_c σ_c. Near-wire regularisation warnings are silenced (maps mask those points).
    """
    check_map_model(model)
    pts = np.ascontiguousarray(np.asarray(points, dtype=np.float64).reshape(-1, 3))
    active = [lp for lp in loops if lp.current_nA_per_T]
    if not active or not len(pts):
        return np.zeros(pts.shape[0])
    # the loop vertices ride along as extra "atoms" after the points, in one frame
    coords = np.concatenate([pts, *[np.asarray(lp.vertices, dtype=np.float64) for lp in active]])[None]
    circuits, start = [], pts.shape[0]
    for lp in active:
        m = len(lp.vertices)
        circuits.append(Circuit(tuple(range(start, start + m)), "ring" if m <= 8 else "macrocycle", lp.label))
        start += m
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", GeometryWarning)
        g = geometric_factors(coords, range(pts.shape[0]), circuits, [lp.geometry for lp in active], model,
                              separation_A=separation_A)
    return np.einsum("c,cp->p", np.array([lp.current_nA_per_T for lp in active]), g[0])


def wire_distance_A(points, loops, *, separation_A: float = JB_SEPARATION_A) -> np.ndarray:
    """Distance from each point to the nearest wire segment of any loop (both ±separation copies), Å.

    Parameters
    ----------
    points : array_like, shape (n, 3)
    loops : sequence of Loop

    Returns
    -------
    ndarray, shape (n,)
    """
    pts = np.asarray(points, dtype=np.float64).reshape(-1, 3)
    best = np.full(pts.shape[0], np.inf)
    for lp in loops:
        n = lp.normal / np.linalg.norm(lp.normal)
        for s in ({0.0} if separation_A == 0 else {separation_A, -separation_A}):
            a = lp.vertices + s * n
            b = np.roll(a, -1, axis=0)
            d = b - a                                                   # (m, 3)
            t = np.einsum("pmk,mk->pm", pts[:, None, :] - a[None], d) / np.einsum("mk,mk->m", d, d)
            foot = a[None] + np.clip(t, 0.0, 1.0)[..., None] * d[None]  # (n, m, 3)
            best = np.minimum(best, np.linalg.norm(pts[:, None, :] - foot, axis=2).min(axis=1))
    return best


# ------------------------------------------------------------------------------------------ geometry
def loops_of(source) -> tuple[tuple[Loop, ...], str]:
    """The loops of a Prediction (a priori currents) or CompareResult (fitted currents).

    Returns
    -------
    loops : tuple of Loop
        Most populated conformer; a circuit without a current number counts as 0.
    currents_from : str
        ``"a priori"`` or ``"fitted"``.
    """
    pred, res = split_source(source)
    if not pred.circuits:
        raise InputError("no conjugated ring in this molecule: there is no ring current to map",
                         pred.structure.source)
    fitted = {cf.label: cf.current_nA_per_T for cf in res.comparison.circuits} if res is not None else {}
    s = pred.structure
    best = int(np.argmax(s.weights))
    x = np.asarray(s.coords[best], dtype=np.float64)
    loops = tuple(Loop(cr.circuit.label, x[list(cr.circuit.atoms)].copy(), np.asarray(cr.geometry.normal[best], float),
                       float(fitted.get(cr.circuit.label, cr.current_nA_per_T or 0.0)),
                       CircuitGeometry(**{f.name: np.asarray(getattr(cr.geometry, f.name))[best:best + 1]
                                          for f in fields(CircuitGeometry)}))
                  for cr in pred.circuits)
    if not any(lp.current_nA_per_T for lp in loops):
        raise InputError("no circuit carries a current (open shell or zero currents): nothing to map; "
                         "give a current yourself, in nA/T per circuit label", pred.structure.source,
                         parameter="set_current")
    return loops, ("fitted" if fitted else "a priori")


def map_frame(loops, circuit: str | None = None) -> MapFrame:
    """Frame of the maps: a given circuit's plane and centre, or the mean plane of all loop atoms.

    ``u`` is the long in-plane axis of the atoms (or, for a round ring, the direction of its first
    atom); ``n`` is oriented like the (chosen or first) loop's normal; ``v = n × u``.
    """
    if circuit is not None:
        pick = [lp for lp in loops if lp.label == circuit]
        if not pick:
            raise InputError(f"no circuit labelled {circuit!r}; this molecule has "
                             f"{', '.join(lp.label for lp in loops)}", "circuit")
        ref, pts = pick[0], pick[0].vertices
    else:
        ref = loops[0]
        pts = np.unique(np.round(np.concatenate([lp.vertices for lp in loops]), 6), axis=0)
    centre = pts.mean(axis=0)
    _, sv, vt = np.linalg.svd(pts - centre)
    n = vt[2] if np.dot(vt[2], ref.normal) >= 0 else -vt[2]
    u = vt[0]
    if sv[0] - sv[1] < 0.05 * sv[0]:  # round ring: aim u at its first atom
        w = ref.vertices[0] - centre
        w = w - np.dot(w, n) * n
        u = w / np.linalg.norm(w)
    u = u - np.dot(u, n) * n
    u /= np.linalg.norm(u)
    return MapFrame(centre, u, np.cross(n, u), n, circuit or "+".join(lp.label for lp in loops))
