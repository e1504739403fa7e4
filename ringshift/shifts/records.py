"""The prediction records: one per circuit, per proton and per group of equivalent protons.

Frozen dataclasses produced by :func:`ringshift.shifts.prediction.predict`. Units: Å, ppm, nA/T;
indices are 0-based atom indices of the input structure. Their one JSON form is
:func:`ringshift.reporting.json.prediction_to_dict`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from ringshift._display import PredictionDisplay

if TYPE_CHECKING:
    from ringshift.pi.huckel import HuckelResult
    from ringshift.pi.perception import PiSystem
from ringshift.geometry.circuits import Circuit, CircuitGeometry
from ringshift.io.structures import Structure


@dataclass(frozen=True)
class CircuitResult:
    """One circuit with its geometry (weighted over conformers) and its current."""

    circuit: Circuit
    geometry: CircuitGeometry
    centre: tuple[float, float, float]
    normal: tuple[float, float, float]
    radius_A: float
    planarity_rms_A: float
    max_misalignment_deg: float
    planar: bool
    current_nA_per_T: float | None
    current_rel_benzene: float | None
    current_source: str
    pi_electrons: int | None
    huckel_class: str | None
    note: str = ""


@dataclass(frozen=True)
class ShiftParts:
    """The parts of a predicted shift, shared by one proton and a group of equivalent protons (ppm).

    ``predicted_ppm`` = ``reference_ppm`` + ``ring_current_ppm`` + ``charge_ppm``; ``ring_current_ppm`` is
    the sum of ``per_circuit_ppm`` (one value per loop-carrying circuit, positive = downfield);
    ``spread_ppm`` is its weighted spread over conformers. Reference values are None when the proton
    class has no table entry.
    """

    ring_current_ppm: float
    per_circuit_ppm: tuple[float, ...]
    spread_ppm: float
    charge_ppm: float
    reference_ppm: float | None
    reference_sd_ppm: float | None
    proton_class: str | None
    predicted_ppm: float | None


@dataclass(frozen=True)
class ProtonResult(ShiftParts):
    """Ring-current shift of one hydrogen (weighted over conformers): atom ``index``, its ``parent``
    heavy atom and its ``group`` (0-based)."""

    index: int
    parent: int
    group: int


@dataclass(frozen=True)
class GroupResult(ShiftParts):
    """A group of equivalent hydrogens (shifts are the mean over its members); ``geometric_ppm_per_nA_T``
    is the ring-current shift per nA/T of each circuit (the comparer's design row)."""

    group: int
    label: str
    atoms: tuple[int, ...]
    parents: tuple[int, ...]
    n_h: int
    geometric_ppm_per_nA_T: tuple[float, ...]


@dataclass(frozen=True)
class Prediction(PredictionDisplay):
    structure: Structure
    model: str
    circuits: tuple[CircuitResult, ...]
    perimeters: tuple[CircuitResult, ...]
    protons: tuple[ProtonResult, ...]
    groups: tuple[GroupResult, ...]
    geometric: np.ndarray = field(repr=False)  # (n_conf, n_loops, n_h) ppm per nA/T
    pi: PiSystem | None = None
    warnings: tuple[str, ...] = ()
    provenance: dict = field(default_factory=dict)
    #: Hückel levels of the most populated conformer from the Hückel–London step (None when the
    #: currents did not come from it); saves callers a second solve.
    huckel: HuckelResult | None = field(default=None, repr=False)
