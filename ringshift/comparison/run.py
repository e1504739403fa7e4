"""Glue between a prediction, an observed peak list and the comparer.

:func:`run_compare` turns a :class:`ringshift.shifts.records.Prediction` into the comparer's group models
and circuit priors, the :class:`ringshift.spectra.peaks.PeakList` into observed peaks, and calls
:func:`ringshift.comparison.comparer.compare`. :func:`ringshift.reporting.json.comparison_to_dict` is the one JSON form
of the result.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np

from ringshift._display import ComparisonDisplay
from ringshift._numbers import text
from ringshift.comparison.comparer import IGNORED_KINDS, peak_kind
from ringshift.comparison.comparer import compare as _cmp_compare
from ringshift.comparison.records import CircuitPrior, Comparison, GroupModel, ObservedPeak
from ringshift.constants import BENZENE_CURRENT_NA_PER_T
from ringshift.errors import InputError
from ringshift.spectra.solvents import resolve_reference_lines

if TYPE_CHECKING:
    from ringshift.io.correlations import CorrelationList
    from ringshift.shifts.records import Prediction
    from ringshift.spectra.peaks import PeakList

__all__ = ['run_compare', 'group_models', 'circuit_priors', 'observed_peaks', 'CompareResult', 'coupling_evidence']


#: Width of the a priori current prior, nA/T: "weakly around the Hückel–London value". One benzene
#: current either way lets the data move the current freely while keeping an ill-determined circuit
#: near theory (common practice, no source).
PRIOR_SD_NA_PER_T = BENZENE_CURRENT_NA_PER_T


@dataclass(frozen=True)
class CompareResult(ComparisonDisplay):
    """A comparison with what it rests on: the prediction, the peak list and the comparer's inputs."""

    prediction: Prediction
    peaks: PeakList
    comparison: Comparison
    observed: tuple[ObservedPeak, ...]
    #: When the ring E/Z configurations were ranked: the summary of
    #: :func:`ringshift.runners.configurations.compare_configurations` (JSON-ready); None otherwise.
    configurations: dict | None = None


def group_models(pred) -> list[GroupModel]:
    """Comparer inputs, one per hydrogen group of the prediction."""
    out = []
    for g in pred.groups:
        out.append(GroupModel(
            label=g.label, atoms=tuple(g.atoms), parents=tuple(g.parents), n_h=g.n_h,
            proton_class=g.proton_class, reference_ppm=float(g.reference_ppm),
            reference_sd_ppm=float(g.reference_sd_ppm),
            geometric_ppm_per_nA_T=np.asarray(g.geometric_ppm_per_nA_T, dtype=float), charge_ppm=float(g.charge_ppm)))
    return out


def circuit_priors(pred, *, prior_sd_nA_per_T: float = PRIOR_SD_NA_PER_T) -> list[CircuitPrior]:
    """Weak Gaussian priors around each circuit's a priori current (0 where there is none)."""
    return [CircuitPrior(cr.circuit.label, float(cr.current_nA_per_T or 0.0), prior_sd_nA_per_T)
            for cr in pred.circuits]


def observed_peaks(peaklist, pred) -> list[ObservedPeak]:
    """Observed peaks for the comparer; a fixed assignment names H or heavy-atom indices (0-based)."""
    out = []
    owner: dict[int, tuple[int, str]] = {}          # group -> (peak index, its shift as text)
    for k, p in enumerate(peaklist.peaks):
        fixed = None
        if p.fixed_atoms:
            where = f"{peaklist.source}:{p.line}" if p.line else peaklist.source
            shift = text(p.shift_ppm, ".2f")
            want = set(p.fixed_atoms)
            fixed = tuple(gi for gi, g in enumerate(pred.groups) if want & (set(g.atoms) | set(g.parents)))
            if not fixed:
                raise InputError(f"peak at {shift} ppm is fixed to atoms {sorted(want)}, which are "
                                 "neither hydrogens nor heavy atoms carrying hydrogens (0-based indices, as in the "
                                 "prediction's JSON)", where)
            if peak_kind(p.kind) in IGNORED_KINDS:
                raise InputError(f"peak at {shift} ppm is marked {p.kind!r} and also fixed to atoms "
                                 f"{sorted(want)}; a solvent, tms or impurity line holds no protons of the "
                                 "molecule (drop its atoms, or its kind)", where)
            for gi in fixed:
                if gi in owner and owner[gi][0] != k:
                    g = pred.groups[gi]
                    raise InputError(f"peak at {shift} ppm is fixed to atoms {sorted(want)}, but the equivalent "
                                     f"protons of group {g.label} (atoms {list(g.atoms)}) are already fixed to the "
                                     f"peak at {owner[gi][1]} ppm; equivalent protons share one peak", where)
                owner[gi] = (k, shift)
        out.append(ObservedPeak(shift_ppm=float(p.shift_ppm), integral=p.integral, fixed_groups=fixed,
                                    label=p.label or text(p.shift_ppm, ".2f"), kind=peak_kind(p.kind)))
    return out


def _resolved(peaklist, n_hydrogens: int):
    """The peak list with its solvent/TMS candidates decided against the molecule's H count (a list read
    with ``n_hydrogens`` is already decided; the decision is idempotent, so notes are added only on change)."""
    peaks, notes = resolve_reference_lines(peaklist.peaks, n_hydrogens)
    if [p.kind for p in peaks] == [p.kind for p in peaklist.peaks]:
        return peaklist
    return replace(peaklist, peaks=peaks, warnings=tuple(peaklist.warnings) + tuple(notes))


def coupling_evidence(pred, peaklist, correlations: CorrelationList | None):
    """The 2D/multiplet evidence of a comparison (:class:`ringshift.comparison.constraints.CouplingEvidence`): the
    cross peaks of ``correlations`` matched to the peaks of ``peaklist``, the bond-count masks and vicinal partners of
    the prediction's groups (from its molecule and conformers) and each peak's ``j_hz``; None when there is neither a
    correlation list nor any coupling."""
    from ringshift.comparison.constraints import CouplingEvidence
    from ringshift.comparison.couplings import group_bond_masks, mol_bond_distances, vicinal_partners
    from ringshift.io.correlations import CorrelationList, match_correlations

    peak_j = tuple(p.j_hz for p in peaklist.peaks)
    if correlations is None and not any(peak_j):
        return None
    if correlations is not None and not isinstance(correlations, CorrelationList):
        raise InputError(f"expected a CorrelationList (read_correlations) or None, got {type(correlations).__name__}",
                         "correlations")
    s = pred.structure
    atoms = [tuple(g.atoms) for g in pred.groups]
    pairs = () if correlations is None else match_correlations(correlations, peaklist.peaks)
    return CouplingEvidence(
        pairs=pairs, group_masks=group_bond_masks(mol_bond_distances(s.mol), atoms),
        partners=vicinal_partners(s.mol, s.coords, s.weights, atoms), peak_j=peak_j,
        source=None if correlations is None else correlations.source,
        tolerance_ppm=None if correlations is None else correlations.tolerance_ppm)


def run_compare(pred, peaklist, *, claim: str | None = None, noise_ppm=None, seed: int = 0,
                correlations: CorrelationList | None = None) -> CompareResult:
    """Assign, fit and weigh the evidence for one structure against one peak list (and, optionally, a list of 2D
    H–H correlations; couplings listed in the peak list are used too)."""
    if not pred.groups:
        raise InputError("the molecule has no hydrogens: there is nothing to compare with a 1H spectrum",
                         pred.structure.source)
    peaklist = _resolved(peaklist, len(pred.protons))
    obs = observed_peaks(peaklist, pred)
    if not obs:
        raise InputError("no peaks found; expected at least one sample peak", peaklist.source)
    if not any(o.kind == "sample" for o in obs):
        raise InputError("no sample peaks (only solvent/TMS/impurity peaks)", peaklist.source)
    why = None if pred.circuits else no_circuit_reason(pred.structure.mol)
    evidence = coupling_evidence(pred, peaklist, correlations)
    comp = _cmp_compare(group_models(pred), obs, circuit_priors(pred), noise_ppm=noise_ppm, claim=claim, seed=seed,
                        no_circuit_reason=why, correlations=evidence)
    return CompareResult(pred, peaklist, comp, tuple(obs))


def no_circuit_reason(mol) -> str:
    """One sentence on why an RDKit molecule has no closed conjugated circuit: the sp³ (or otherwise
    unconjugated) ring atoms that interrupt each ring, or that it has no ring."""
    rings = [r for r in mol.GetRingInfo().AtomRings() if len(r) >= 3]
    if not rings:
        return "no closed conjugated circuit: the molecule has no ring"
    parts = []
    for ring in rings:
        breaks = [i for i in ring if not _conjugated(mol.GetAtomWithIdx(i))]
        if breaks:
            names = ", ".join(f"{_hybrid(mol.GetAtomWithIdx(i))} {mol.GetAtomWithIdx(i).GetSymbol()}{i}"
                              for i in breaks)
            parts.append(f"{names} interrupt{'s' if len(breaks) == 1 else ''} the {len(ring)}-membered ring")
    if not parts:
        return "no closed conjugated circuit was found in the rings"
    return "no closed conjugated circuit: " + "; ".join(parts)


def _conjugated(atom) -> bool:
    """An atom can carry a π circuit: aromatic, in a double/triple bond, or a charged/lone-pair ring atom."""
    if atom.GetIsAromatic() or atom.GetFormalCharge() != 0:
        return True
    return any(b.GetBondTypeAsDouble() >= 2.0 for b in atom.GetBonds())


def _hybrid(atom) -> str:
    h = str(atom.GetHybridization())
    return {"SP3": "sp³", "SP2": "sp²", "SP": "sp"}.get(h, h.lower())
