"""Trajectories and conformer ensembles: streamed frames, weighted shifts, fast exchange.

Reading: :func:`ringshift.io.frames.iter_xyz_frames` and :func:`ringshift.io.frames.iter_sdf_records` (re-exported
here) stream a trajectory frame by frame; :func:`predict_trajectory` packs the frames into numpy blocks
of ``chunk`` frames sized to a memory budget and evaluates the shielding kernels over each block.

Averaging. Per proton, the frame-weighted mean of Δδ_rc and its weighted standard deviation
sqrt(Σ w (x − x̄)² / Σ w), merged block by block with the pairwise update of Chan, Golub & LeVeque
(Am. Stat. 1983, 37, 242), with the log-weights re-referenced to the largest so far so that Boltzmann
factors never overflow. Fast exchange (Gutowsky & Holm, J. Chem. Phys. 1956, 25, 1228: in the fast
limit the observed shift is the population-weighted mean of the sites) replaces each proton's shift by
the mean over its exchange group in every frame.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import time
import warnings
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ringshift import fields
from ringshift._display import TrajectoryDisplay
from ringshift.constants import DEFAULT_MODEL, JB_SEPARATION_A, MODELS, TRAJECTORY_CURRENTS
from ringshift.errors import GeometryWarning, InputError
from ringshift.fields.registry import geometric_factors
from ringshift.geometry.circuits import (
    MISALIGNMENT_LIMIT_DEG,
    PLANARITY_LIMIT_A,
    circuit_geometry,
)
from ringshift.io.frames import (
    Frame,
    FrameStream,
    TrajectoryWarning,
    bond_length_limits,
    broken_bond,
    iter_sdf_records,
    iter_xyz_frames,
)
from ringshift.io.structures import Structure
from ringshift.pi.london import london_currents
from ringshift.runners.averaging import _log_weights, _WeightedMoments, exchange_groups
from ringshift.shifts.prediction import network_totals, predict
from ringshift.shifts.records import Prediction
from ringshift.shifts.reference import assemble_prediction

__all__ = ['polygon_shielding_frames', 'CircuitStats', 'TrajectoryPrediction', 'predict_trajectory',
           'predict_trajectory_file']


#: Sources of the currents of a trajectory (see :func:`predict_trajectory`).

_MAX_CHUNK_FRAMES = 4096


def polygon_shielding_frames(points, vertices, normals, *, separation_A: float = JB_SEPARATION_A):
    """Alias of :func:`ringshift.fields.polygon.polygon_shielding` for a conformer stack (kept for existing callers).

    points (n_frames, n, 3) Å, vertices (n_frames, m, 3) Å, normals (n_frames, 3); returns sigma
    (n_frames, n) in ppm per nA/T, computed frame-batched by the one polygon kernel of :mod:`ringshift.fields.polygon`.
    """
    if np.ndim(points) != 3:
        raise InputError(f"expected points of shape (n_frames, n, 3), got {np.shape(points)}", source="points")
    return fields.polygon_shielding(points, vertices, normals, separation_A=separation_A)

# ----------------------------------------------------------------------------------------------------
# Results
# ----------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class CircuitStats:
    """Frame-weighted statistics of one circuit (means and weighted standard deviations).

    current in nA/T; radius, planarity RMS in Å; misalignment in degrees; area in Å²;
    planar_fraction: weighted share of frames within the planarity limits of :mod:`ringshift.geometry.circuits`.
    """

    label: str
    atoms: tuple[int, ...]
    current_nA_per_T: float
    current_sd_nA_per_T: float
    radius_A: float
    radius_sd_A: float
    planarity_rms_A: float
    planarity_rms_sd_A: float
    max_misalignment_deg: float
    max_misalignment_sd_deg: float
    area_A2: float
    area_sd_A2: float
    planar_fraction: float


@dataclass(frozen=True)
class TrajectoryGroup:
    """A final proton group (equivalent by symmetry or exchange); values are means over its members, ppm."""

    label: str
    atoms: tuple[int, ...]
    ring_current_ppm: float
    spread_ppm: float
    predicted_ppm: float | None


@dataclass(frozen=True)
class TrajectoryPrediction(TrajectoryDisplay):
    """Frame-averaged ring-current shifts of a trajectory or ensemble.

    Arrays: ``h_indices`` (n_h,); ``ring_current_ppm``, ``spread_ppm`` (n_h,) Δδ_rc weighted mean and
    weighted sd over frames after fast-exchange averaging (equal to the ``*_slow_*`` arrays when there is
    no exchange); ``per_circuit_ppm`` (n_loops, n_h); ``reference_ppm``, ``charge_ppm``,
    ``predicted_ppm`` (n_h,) (exchange-averaged like the shifts); ``frame_numbers`` (n_frames,) 1-based
    file positions of the frames used; ``weights`` (n_frames,) normalised; ``energies_kcal_mol``
    (n_frames,) relative to the lowest, or None. ``template`` is the single-structure prediction that
    supplied circuits, reference shifts, the π-charge term and (unless per frame) the currents.
    """

    template: Prediction
    model: str
    currents: str
    h_indices: tuple[int, ...]
    ring_current_ppm: np.ndarray
    spread_ppm: np.ndarray
    ring_current_slow_ppm: np.ndarray
    spread_slow_ppm: np.ndarray
    per_circuit_ppm: np.ndarray
    reference_ppm: np.ndarray
    charge_ppm: np.ndarray
    predicted_ppm: np.ndarray
    exchange_groups: tuple[tuple[int, ...], ...]
    groups: tuple[TrajectoryGroup, ...]
    circuits: tuple[CircuitStats, ...]
    frame_numbers: np.ndarray = field(repr=False)
    weights: np.ndarray = field(repr=False)
    energies_kcal_mol: np.ndarray | None = field(repr=False)
    temperature_K: float = 298.15
    warnings: tuple[str, ...] = ()
    provenance: dict = field(default_factory=dict)

    @property
    def n_frames(self) -> int:
        return int(self.frame_numbers.shape[0])

# ----------------------------------------------------------------------------------------------------
# Pipeline
# ----------------------------------------------------------------------------------------------------
def _frames(frames, energies_kcal_mol) -> Iterator[Frame]:
    if isinstance(frames, np.ndarray):
        e = None if energies_kcal_mol is None else np.asarray(energies_kcal_mol, dtype=np.float64).reshape(-1)
        if e is not None and e.shape[0] != frames.shape[0]:
            raise InputError(f"expected {frames.shape[0]} energies (one per frame), got {e.shape[0]}",
                             source="energies_kcal_mol")
        for k in range(frames.shape[0]):
            yield Frame(k + 1, frames[k], None if e is None else float(e[k]))
        return
    if energies_kcal_mol is not None:
        raise InputError("energies_kcal_mol goes with an in-memory (n_frames, n_atoms, 3) array; streamed frames "
                         "carry their own energies", source="energies_kcal_mol")
    for k, fr in enumerate(frames):
        yield fr if isinstance(fr, Frame) else Frame(k + 1, np.asarray(fr, dtype=np.float64))


def _intact(frames: Iterator[Frame], mol, source) -> Iterator[Frame]:
    """The frames whose bonds are all intact (:func:`ringshift.io.frames.broken_bond`); a frame with a broken
    bond is skipped with a TrajectoryWarning naming it (an error for a strict stream), never averaged in."""
    bonds, limits = bond_length_limits(mol)
    n = mol.GetNumAtoms()
    for fr in frames:
        why = broken_bond(mol, bonds, limits, fr.coords) if np.shape(fr.coords) == (n, 3) else None
        if why is None:
            yield fr
        elif isinstance(source, FrameStream):
            source._skip(fr.number, f"frame {fr.number}: {why}", str(source.path))
        else:
            warnings.warn(TrajectoryWarning(f"frame {fr.number}: {why}; skipped, the other frames are used"),
                          stacklevel=3)


def _check_options(template, model, currents, memory_MB, weights, temperature_K):
    if not isinstance(template, Structure):
        raise InputError(f"expected a Structure (or frames from iter_xyz_frames/iter_sdf_records), got "
                         f"{type(template).__name__}", source="template")
    if model not in MODELS:
        raise InputError(f"unknown model {model!r}; expected one of {', '.join(MODELS)}", source="model")
    if currents not in TRAJECTORY_CURRENTS:
        raise InputError(f"unknown currents {currents!r}; expected one of {', '.join(TRAJECTORY_CURRENTS)}",
                         source="currents")
    for name, v in (("memory_MB", memory_MB), ("temperature_K", temperature_K)):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
            raise InputError(f"expected a finite number > 0, got {v!r}", source=name)
    if isinstance(weights, str):
        if weights not in ("uniform", "boltzmann"):
            raise InputError(f"expected 'uniform', 'boltzmann' or an array of weights, got {weights!r}",
                             source="weights")
        return weights
    w = np.asarray(weights, dtype=np.float64).reshape(-1)
    if w.size == 0 or not np.all(np.isfinite(w)) or np.any(w < 0) or w.sum() <= 0:
        raise InputError("expected finite non-negative weights, one per frame, not all zero", source="weights")
    return w


def predict_trajectory(template: Structure | None, frames, *, model: str = DEFAULT_MODEL, currents: str = "huckel",
                       memory_MB: float = 500.0, weights="uniform", temperature_K: float = 298.15, exchange=None,
                       energies_kcal_mol=None, beta_model: str = "scf", scale: Mapping[str, float] | None = None,
                       set_current: Mapping[str, float] | None = None,
                       user_circuits: Sequence[Sequence[int]] | None = None, separation_A: float = JB_SEPARATION_A,
                       reference_table=None) -> TrajectoryPrediction:
    """Frame-weighted ring-current shifts over a trajectory or ensemble, streamed in memory-sized chunks.

    Parameters
    ----------
    template : Structure or None
        Topology (atom order, bonds, H groups) and the geometry for the template prediction. None: the
        first frame of a :class:`FrameStream` (:meth:`FrameStream.template`).
    frames : FrameStream, iterable of Frame or of (n_atoms, 3) arrays, or ndarray (n_frames, n_atoms, 3)
        Coordinates in Å, atoms in the template's order.
    model : str
        Shielding model (:data:`ringshift.constants.MODELS`; default as for predict). "polygon" runs frame-batched over
        each block (:func:`ringshift.fields.polygon.polygon_shielding` on the stack); the others call per-frame kernels.
    currents : {"huckel", "benzene", "huckel-per-frame"}
        "huckel" (default): the Hückel–London currents of the template prediction (the first frame when
        the template comes from the file), held fixed; "benzene": 12 nA/T on RDKit-aromatic circuits;
        "huckel-per-frame": a Hückel–London calculation on every frame (slower: one diagonalisation per
        frame).
    memory_MB : float
        Budget for the frame blocks and per-frame arrays; sets the chunk size (at most 4096 frames).
    weights : "uniform", "boltzmann" or array_like (n_frames,)
        Frame weights; Boltzmann from frame energies at ``temperature_K``. An array is indexed by the
        1-based frame number (so skipped frames drop their weight) and must cover every frame.
    exchange : None, "auto" or list of H index groups
        Fast-exchange averaging (:func:`exchange_groups`); None keeps every proton apart (slow exchange).
    energies_kcal_mol : array_like (n_frames,), optional
        Energies for an in-memory frame array.
    beta_model, scale, set_current, user_circuits, separation_A, reference_table
        As for :func:`ringshift.shifts.prediction.predict` (scale and set_current also apply per frame).

    Returns
    -------
    TrajectoryPrediction
    """
    t0 = time.perf_counter()
    if template is None:
        if not isinstance(frames, FrameStream):
            raise InputError("without a template, frames must come from iter_xyz_frames or iter_sdf_records",
                             source="template")
        template = frames.template()
    w_given = _check_options(template, model, currents, memory_MB, weights, temperature_K)
    mol, n_atoms = template.mol, template.mol.GetNumAtoms()
    base_model = "polygon" if model == "network" else model
    tpred = predict(template, model=base_model, currents="benzene" if currents == "benzene" else "huckel",
                    beta_model=beta_model, scale=scale, set_current=set_current, user_circuits=user_circuits,
                    separation_A=separation_A, reference_table=reference_table)
    loops = [cr.circuit for cr in tpred.circuits]
    h_idx = [p.index for p in tpred.protons]
    n_h, n_l = len(h_idx), len(loops)
    fixed = np.array([cr.current_nA_per_T or 0.0 for cr in tpred.circuits])
    notes = list(tpred.warnings)
    pi = tpred.pi
    if pi is None:
        raise InputError("the template prediction has no pi system", source="template")
    lc_template = None
    if model == "network":
        best = int(np.argmax(template.weights))
        lc_template = london_currents(pi, mol, template.coords[best], [c.atoms for c in loops],
                                               beta_model=beta_model) if loops else None
        if lc_template is not None and lc_template.status != "ok":
            raise InputError("the bond-current network model needs Hueckel-London bond currents: "
                             + lc_template.status, source="model")
    ex = exchange_groups(mol, exchange)
    A = np.eye(n_h)
    pos = {h: k for k, h in enumerate(h_idx)}
    for g in ex:
        ks = [pos[h] for h in g]
        A[np.ix_(ks, ks)] = 1.0 / len(ks)
    K = 2 * n_h + n_l * n_h + 6 * n_l
    per_frame_bytes = 8 * (6 * n_atoms + 3 * K + 3 * n_l * n_h)
    chunk = int(min(_MAX_CHUNK_FRAMES, max(1, 0.5 * memory_MB * 1e6 // per_frame_bytes)))
    acc = _WeightedMoments(K)
    numbers, logws, energies = [], [], []
    block = np.empty((chunk, n_atoms, 3))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", GeometryWarning)
        warnings.simplefilter("always", TrajectoryWarning)
        it = _intact(_frames(frames, energies_kcal_mol), mol, frames)
        while True:
            items = list(itertools.islice(it, chunk))
            if not items:
                break
            for k, fr in enumerate(items):
                if fr.coords.shape != (n_atoms, 3):
                    raise InputError(f"frame {fr.number} has coordinates of shape {fr.coords.shape}; the template "
                                     f"has {n_atoms} atoms", source="frames")
                block[k] = fr.coords
            xyz = block[:len(items)]
            if not np.all(np.isfinite(xyz)):
                raise InputError("non-finite coordinates in the frames", source="frames")
            lw = _log_weights(items, w_given if not isinstance(w_given, str) else weights, float(temperature_K))
            x = _block_features(xyz, template, tpred, loops, h_idx, fixed, model, currents, A, pi, lc_template,
                                beta_model, scale, set_current, separation_A, notes)
            acc.add(x, lw)
            numbers.append([f.number for f in items])
            logws.append(lw)
            energies.append([np.nan if f.energy_kcal_mol is None else f.energy_kcal_mol for f in items])
    for wr in caught:
        notes.append(str(wr.message))
    for wr in caught:
        if issubclass(wr.category, TrajectoryWarning):
            warnings.warn(wr.message, stacklevel=2)
    if not numbers:
        raise InputError("no frame to average (empty trajectory, or every frame was skipped)", source="frames")
    numbers_a = np.concatenate([np.asarray(n, dtype=np.int64) for n in numbers])
    lw_all = np.concatenate(logws)
    if not isinstance(w_given, str):
        total = getattr(frames, "n_seen", None) or (
            frames.shape[0] if isinstance(frames, np.ndarray) else int(numbers_a.max()))
        if w_given.shape[0] != total:
            raise InputError(f"got {w_given.shape[0]} weights for {total} frames", source="weights")
    if not np.any(np.isfinite(lw_all)):
        raise InputError("every frame used has weight zero", source="weights")
    w_all = np.exp(lw_all - lw_all.max())
    w_all /= w_all.sum()
    e_cat = np.concatenate([np.asarray(e, dtype=np.float64) for e in energies])
    e_all = None if np.all(np.isnan(e_cat)) else e_cat - np.nanmin(e_cat)
    return _assemble(template, tpred, model, currents, loops, h_idx, ex, A, acc, numbers_a, w_all, e_all,
                     float(temperature_K), notes, chunk, float(memory_MB), frames, time.perf_counter() - t0,
                     weights if isinstance(weights, str) else "given")


def _block_features(xyz, template, tpred, loops, h_idx, fixed, model, currents, A, pi, lc_template, beta_model,
                    scale, set_current, separation_A, notes) -> np.ndarray:
    """Per-frame features (F, K): slow Δδ_rc (n_h), fast Δδ_rc (n_h), per-circuit Δδ_rc (n_l·n_h) and
    circuit current, radius, planarity, misalignment, area, planar flag (6·n_l)."""
    F, n_h, n_l, mol = xyz.shape[0], len(h_idx), len(loops), template.mol
    geoms = [circuit_geometry(xyz, c, mol) for c in loops]
    cur = np.tile(fixed, (F, 1))
    london = None
    if currents == "huckel-per-frame" and n_l:
        london = [london_currents(pi, mol, xyz[k], [c.atoms for c in loops],
                                           np.array([g.normal[k] for g in geoms]), beta_model=beta_model)
                  for k in range(F)]
        for k, lc in enumerate(london):
            if lc.status == "ok":
                cur[k] = lc.circuit_currents_nA_per_T
            else:
                cur[k] = 0.0
                notes.append(lc.status)
        for c, circ in enumerate(loops):
            if set_current and circ.label in set_current:
                cur[:, c] = set_current[circ.label]
            if scale and circ.label in scale:
                cur[:, c] *= scale[circ.label]
    # polygon (and the network model's per-circuit breakdown): frame-batched over the block
    g = geometric_factors(xyz, h_idx, loops, geoms, "polygon" if model == "network" else model,
                          separation_A=separation_A)
    per = g * cur[:, :, None]
    total = per.sum(axis=1)
    if model == "network" and n_h and n_l:
        if london is not None and any(lc.status != "ok" for lc in london):
            raise InputError("the bond-current network model needs Hueckel-London bond currents on every frame",
                             source="model")
        total = network_totals(dataclasses.replace(template, coords=xyz), pi, london or [lc_template] * F, h_idx,
                               separation_A)
    geo = [np.stack([cur[:, c], gm.radius_A, gm.planarity_rms_A, gm.max_misalignment_deg, gm.area_A2,
                     (gm.planarity_rms_A <= PLANARITY_LIMIT_A) & (gm.max_misalignment_deg <= MISALIGNMENT_LIMIT_DEG)],
                    axis=1) for c, gm in enumerate(geoms)]
    return np.concatenate([total, total @ A.T, (per @ A.T).reshape(F, -1)] + geo, axis=1)


def _assemble(template, tpred, model, currents, loops, h_idx, ex, A, acc, numbers, w, e, temperature_K, notes, chunk,
              memory_MB, frames, elapsed, weight_kind) -> TrajectoryPrediction:
    n_h, n_l = len(h_idx), len(loops)
    mean, sd = acc.mean, acc.sd()
    slow, fast = mean[:n_h], mean[n_h:2 * n_h]
    per = mean[2 * n_h:2 * n_h + n_l * n_h].reshape(n_l, n_h)
    geo = mean[2 * n_h + n_l * n_h:].reshape(n_l, 6)
    geo_sd = sd[2 * n_h + n_l * n_h:].reshape(n_l, 6)
    ref = np.array([p.reference_ppm for p in tpred.protons], dtype=np.float64)
    chg = np.array([p.charge_ppm for p in tpred.protons], dtype=np.float64)
    pos = {h: k for k, h in enumerate(h_idx)}
    ref, chg = A @ ref, A @ chg
    pred = assemble_prediction(ref, fast, chg) if n_h else np.zeros(0)
    parent = {h: h for h in h_idx}

    def root(a):
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    for grp in tuple(template.h_groups) + ex:
        for h in grp[1:]:
            parent[root(h)] = root(grp[0])
    members: dict[int, list[int]] = {}
    for h in h_idx:
        members.setdefault(root(h), []).append(h)
    fast_sd = sd[n_h:2 * n_h]
    groups = tuple(TrajectoryGroup(f"H{k + 1}", tuple(m), float(np.mean(fast[[pos[h] for h in m]])),
                                   float(np.mean(fast_sd[[pos[h] for h in m]])),
                                   float(np.mean(pred[[pos[h] for h in m]])))
                   for k, m in enumerate(sorted(members.values())))
    circuits = tuple(CircuitStats(
        c.label, tuple(c.atoms), current_nA_per_T=float(geo[i, 0]), current_sd_nA_per_T=float(geo_sd[i, 0]),
        radius_A=float(geo[i, 1]), radius_sd_A=float(geo_sd[i, 1]), planarity_rms_A=float(geo[i, 2]),
        planarity_rms_sd_A=float(geo_sd[i, 2]), max_misalignment_deg=float(geo[i, 3]),
        max_misalignment_sd_deg=float(geo_sd[i, 3]), area_A2=float(geo[i, 4]), area_sd_A2=float(geo_sd[i, 4]),
        planar_fraction=float(geo[i, 5])) for i, c in enumerate(loops))
    src = {"huckel": f"Hueckel-London currents of the template ({tpred.provenance['beta_model']} beta), fixed",
           "benzene": "12 nA/T on RDKit-aromatic circuits, fixed",
           "huckel-per-frame": f"Hueckel-London currents of every frame "
                               f"({tpred.provenance['beta_model']} beta)"}[currents]
    prov = {"model": model, "currents": currents, "currents_description": src, "weights": weight_kind,
            "temperature_K": temperature_K, "chunk_frames": chunk, "memory_MB": memory_MB,
            "frames_used": int(numbers.shape[0]), "elapsed_s": round(elapsed, 4),
            "exchange": "none (slow exchange)" if not ex else f"{len(ex)} fast-exchange group(s)",
            "frames_skipped": [list(s) for s in getattr(frames, "skipped", [])],
            "source": str(getattr(frames, "path", template.source)), "template": tpred.provenance}
    def frozen(a: np.ndarray) -> np.ndarray:
        out = np.ascontiguousarray(a)
        out.setflags(write=False)
        return out

    if e is not None:
        e.setflags(write=False)
    return TrajectoryPrediction(
        tpred, model, currents, tuple(h_idx), ring_current_ppm=frozen(fast), spread_ppm=frozen(sd[n_h:2 * n_h]),
        ring_current_slow_ppm=frozen(slow), spread_slow_ppm=frozen(sd[:n_h]), per_circuit_ppm=frozen(per),
        reference_ppm=frozen(ref), charge_ppm=frozen(chg), predicted_ppm=frozen(pred), exchange_groups=ex,
        groups=groups, circuits=circuits, frame_numbers=frozen(numbers), weights=frozen(w), energies_kcal_mol=e,
        temperature_K=temperature_K, warnings=tuple(dict.fromkeys(notes)), provenance=prov)


def predict_trajectory_file(path, *, charge: int | None = None, energy_unit: str = "kcal/mol", strict: bool = False,
                            **kwargs) -> TrajectoryPrediction:
    """Read a multi-frame .xyz or multi-record .sdf/.sd file (streamed) and run :func:`predict_trajectory`
    with the first frame as template; ``kwargs`` go to :func:`predict_trajectory`."""
    suffix = Path(str(path)).suffix.lower()
    if suffix == ".xyz":
        stream = iter_xyz_frames(path, energy_unit=energy_unit, strict=strict)
    elif suffix in (".sdf", ".sd"):
        stream = iter_sdf_records(path, strict=strict)
    else:
        raise InputError(f"expected a .xyz, .sdf or .sd trajectory, got {suffix or 'no extension'!r}", source=str(path))
    return predict_trajectory(stream.template(charge=charge), stream, **kwargs)
