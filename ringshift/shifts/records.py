"""TODO: docstring (predict)."""

from __future__ import annotations
from dataclasses import dataclass, field
import numpy as np
from ringshift.geometry.circuits import Circuit, CircuitGeometry
from ringshift.io.structures import Structure
from ringshift._display import PredictionDisplay



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
class ProtonResult:
    """Ring-current shift of one hydrogen (weighted over conformers)."""

    index: int
    parent: int
    group: int
    ring_current_ppm: float
    per_circuit_ppm: tuple[float, ...]
    spread_ppm: float
    charge_ppm: float
    reference_ppm: float | None
    reference_sd_ppm: float | None
    proton_class: str | None
    predicted_ppm: float | None


@dataclass(frozen=True)
class GroupResult:
    """A group of equivalent hydrogens (shifts are the mean over its members)."""

    group: int
    label: str
    atoms: tuple[int, ...]
    parents: tuple[int, ...]
    n_h: int
    ring_current_ppm: float
    per_circuit_ppm: tuple[float, ...]
    geometric_ppm_per_nA_T: tuple[float, ...]
    spread_ppm: float
    charge_ppm: float
    reference_ppm: float | None
    reference_sd_ppm: float | None
    proton_class: str | None
    predicted_ppm: float | None


@dataclass(frozen=True)
class Prediction(PredictionDisplay):
    structure: Structure
    model: str
    circuits: tuple[CircuitResult, ...]
    perimeters: tuple[CircuitResult, ...]
    protons: tuple[ProtonResult, ...]
    groups: tuple[GroupResult, ...]
    geometric: np.ndarray = field(repr=False)  # (n_conf, n_loops, n_h) ppm per nA/T
    pi: object | None = None
    warnings: tuple[str, ...] = ()
    provenance: dict = field(default_factory=dict)
    #: Hückel levels of the most populated conformer from the Hückel–London step (None when the
    #: currents did not come from it); saves callers a second solve.
    huckel: object | None = field(default=None, repr=False)
