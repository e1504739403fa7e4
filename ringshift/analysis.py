"""Glue between a prediction, an observed peak list and the comparer.

:func:`run_compare` turns a :class:`ringshift.predict.Prediction` into the comparer's group models
and circuit priors, the :class:`ringshift.peaks.PeakList` into observed peaks, and calls
:func:`ringshift.compare.compare`. :func:`comparison_to_dict` is the one JSON form of the result.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ringshift.compare import CircuitPrior, Comparison, GroupModel, ObservedPeak, compare as _cmp_compare, rank_candidates
from ringshift.constants import BENZENE_CURRENT_NA_PER_T
from ringshift.errors import InputError
from ringshift.output import CAUTION, prediction_to_dict

#: Width of the a priori current prior, nA/T: "weakly around the Hückel–London value". One benzene
#: current either way lets the data move the current freely while keeping an ill-determined circuit
#: near theory (common practice, no source).
PRIOR_SD_NA_PER_T = BENZENE_CURRENT_NA_PER_T

_KIND = {"sample": "signal", "tms": "reference", "solvent": "solvent", "impurity": "impurity"}


@dataclass(frozen=True)
class CompareResult:
    prediction: object
    peaks: object
    comparison: Comparison
    observed: tuple[ObservedPeak, ...]


def group_models(pred) -> list[GroupModel]:
    """Comparer inputs, one per hydrogen group of the prediction."""
    out = []
    for g in pred.groups:
        out.append(GroupModel(
            label=g.label, atoms=tuple(g.atoms), parents=tuple(g.parents), n_h=g.n_h,
            proton_class=g.proton_class, ref_ppm=float(g.reference_ppm), ref_sd_ppm=float(g.reference_sd_ppm),
            g_ppm_per_nA_T=np.asarray(g.geometric_ppm_per_nA_T, dtype=float), charge_ppm=float(g.charge_ppm)))
    return out


def circuit_priors(pred, *, prior_sd_nA_per_T: float = PRIOR_SD_NA_PER_T) -> list[CircuitPrior]:
    """Weak Gaussian priors around each circuit's a priori current (0 where there is none)."""
    return [CircuitPrior(cr.circuit.label, float(cr.current_nA_per_T or 0.0), prior_sd_nA_per_T)
            for cr in pred.circuits]


def observed_peaks(peaklist, pred) -> list[ObservedPeak]:
    """Observed peaks for the comparer; a fixed assignment names H or heavy-atom indices (0-based)."""
    out = []
    for k, p in enumerate(peaklist.peaks):
        fixed = None
        if p.fixed_atoms:
            want = set(p.fixed_atoms)
            fixed = tuple(gi for gi, g in enumerate(pred.groups) if want & (set(g.atoms) | set(g.parents)))
            if not fixed:
                where = f"{peaklist.source}:{p.line}" if p.line else peaklist.source
                raise InputError(f"peak at {p.shift_ppm:.2f} ppm is fixed to atoms {sorted(want)}, which are "
                                 "neither hydrogens nor heavy atoms carrying hydrogens (0-based indices as in "
                                 "'ringshift predict --format json')", where)
        out.append(ObservedPeak(shift_ppm=float(p.shift_ppm), integral=p.integral, fixed_groups=fixed,
                                    label=p.label or f"{p.shift_ppm:.2f}", kind=_KIND.get(p.kind, p.kind)))
    return out


def run_compare(pred, peaklist, *, claim: str | None = None, noise_ppm=None, seed: int = 0) -> CompareResult:
    """Assign, fit and weigh the evidence for one structure against one peak list."""
    if not pred.groups:
        raise InputError("the molecule has no hydrogens: there is nothing to compare with a 1H spectrum",
                         pred.structure.source)
    obs = observed_peaks(peaklist, pred)
    if not obs:
        raise InputError("no peaks found; expected at least one sample peak", peaklist.source)
    if not any(o.kind == "signal" for o in obs):
        raise InputError("no sample peaks (only solvent/TMS/impurity peaks)", peaklist.source)
    if not pred.circuits:
        raise InputError("the molecule has no conjugated circuit: there is no ring current to fit",
                         pred.structure.source)
    comp = _cmp_compare(group_models(pred), obs, circuit_priors(pred), noise_ppm=noise_ppm, claim=claim, seed=seed)
    return CompareResult(pred, peaklist, comp, tuple(obs))


def comparison_to_dict(res: CompareResult) -> dict:
    """Plain-data form of a comparison, with the prediction it rests on."""
    comp = res.comparison.to_dict()
    out = {
        "ringshift_result": "comparison",
        "name": res.prediction.structure.name,
        "peaks_source": res.peaks.source,
        "verdict": comp.pop("verdict"),
        "verdict_circuit": comp.pop("verdict_circuit"),
    }
    out.update(comp)
    out["peak_warnings"] = list(res.peaks.warnings)
    out["prediction"] = prediction_to_dict(res.prediction)
    out["caution"] = CAUTION
    return out


def comparison_text(res: CompareResult) -> str:
    """Readable summary: verdict, currents with intervals, assignment with residuals, warnings."""
    c = res.comparison
    lines = [f"{res.prediction.structure.name} against {res.peaks.source}",
             f"verdict: {c.verdict} (decided by circuit {c.verdict_circuit})"]
    if c.claim is not None:
        d = c.claim.to_dict()
        lines.append(f"claim '{d['claim']}': {d['outcome']}. {d['reason']}")
    lines.append("")
    lines.append("circuit  verdict       J fitted (nA/T)    95% interval     x benzene  a priori  "
                 "log10 BF dia:none  para:none  evidence")
    for cf in c.circuits:
        ev = cf.evidence
        ci = cf.ci95_nA_per_T
        lines.append(f"{cf.label:<8} {cf.verdict:<13} {cf.current_nA_per_T:+8.2f} +/- {cf.stderr_nA_per_T:<5.2f} "
                     f"[{ci[0]:+6.1f}, {ci[1]:+6.1f}]   {cf.current_rel_benzene:+7.2f}   {cf.prior_nA_per_T:+7.1f}  "
                     f"{ev.log10_bf_dia_vs_none:+17.1f}  {ev.log10_bf_para_vs_none:+9.1f}  "
                     f"{ev.best} over {ev.runner_up}: {ev.kass_raftery}")
    lines.append("")
    lines.append("group  nH  class                     peak     observed  predicted  residual  ring current  "
                 "ref. needed without current")
    for ga in c.assignment:
        need = "" if ga.needed_ref_ppm is None else f"{ga.needed_ref_ppm:7.2f} (table {ga.ref_ppm:.2f}, z {ga.needed_ref_z:+.1f})"
        lines.append(f"{ga.label:<6} {ga.n_h:>2}  {ga.proton_class[:24]:<24} {str(ga.peak_label or '-'):<8} "
                     f"{_fmt_cell(ga.observed_ppm)}  {_fmt_cell(ga.predicted_ppm)}  {_fmt_cell(ga.residual_ppm, '+8.2f')}  "
                     f"{_fmt_cell(ga.ring_current_ppm, '+10.2f')}    {need}")
    if c.unassigned_peaks:
        lines.append("unassigned peaks: " + ", ".join(f"{c.peaks[i].shift_ppm:.2f}" for i in c.unassigned_peaks))
    if c.unassigned_groups:
        lines.append("unassigned groups: " + ", ".join(c.assignment[i].label for i in c.unassigned_groups))
    if c.ignored_peaks:
        lines.append("not assigned (solvent/reference): " +
                     ", ".join(f"{c.peaks[i].shift_ppm:.2f}" for i in c.ignored_peaks))
    for a in c.alternatives:
        moves = "; ".join(f"{g} {src or '-'} -> {dst or '-'}" for g, src, dst in a.changes)
        lines.append(f"alternative assignment (+{a.delta_cost:.2f} in 2 ln B): {moves}; "
                     f"verdicts {', '.join(a.verdicts)}")
    for wmsg in list(res.peaks.warnings) + list(res.prediction.warnings):
        lines.append(f"note: {wmsg}")
    lines.append("")
    lines.append(f"Caution: {CAUTION}")
    return "\n".join(lines) + "\n"


def _fmt_cell(x, spec="8.2f"):
    return " " * 8 if x is None else format(x, spec)


def rank(preds: Sequence, peaklist, *, noise_ppm=None, seed: int = 0):
    """Rank several candidate structures against one peak list (isomers, tautomers, charge states)."""
    cands = []
    for p in preds:
        cands.append((p.structure.name, group_models(p), circuit_priors(p)))
    obs = observed_peaks(peaklist, preds[0])
    return rank_candidates(cands, obs, noise_ppm=noise_ppm, seed=seed)


__all__ = ["run_compare", "comparison_to_dict", "comparison_text", "group_models", "circuit_priors",
           "observed_peaks", "rank", "CompareResult"]
