"""Which configuration is my ring? Rank the configurational isomers of a SMILES against one peak list.

:func:`compare_configurations` enumerates and screens the ring E/Z isomers
(:func:`ringshift.geometry.configurations.screen_configurations`), runs the full conformer search and the
prediction for the kept ones, ranks them with :func:`ringshift.comparison.candidates.rank_candidates` (evidence on
the log10 Bayes factor scale of the comparison tables) and returns the full comparison of the best one with a
``configurations`` summary attached. :func:`resolve_mode` decides the mode (``given`` when the input fixes every
ring double bond), :func:`configurations_text` prints the summary.
"""

from __future__ import annotations

from dataclasses import replace

from ringshift._numbers import rounded
from ringshift._numbers import text as num
from ringshift.errors import InputError

__all__ = ['resolve_mode', 'compare_configurations', 'configurations_text']


def resolve_mode(spec: str, mode: str | None, *, fmt: str | None = None):
    """(mode, reason, base molecule or None): the configuration mode for ``spec``.

    ``mode`` None means automatic: ``open`` when a SMILES leaves the E/Z of a ring double bond open, else
    ``given``. Files fix the configuration by their coordinates (or drawing): ``open``/``all`` with a file is an
    error. The base molecule is returned for SMILES input.
    """
    from ringshift._validation import choice
    from ringshift.geometry.configurations import CONFIGURATION_MODES, open_ring_bonds, ring_stereo_bonds
    from ringshift.io.molecule_files import _detect_format, _mol_from_smiles

    if mode is not None:
        choice(mode, CONFIGURATION_MODES, "configurations", "configuration mode")
    if mode == "given":
        return "given", "asked", None
    if _detect_format(spec, fmt) != "smiles":
        if mode is not None:
            raise InputError(f"mode {mode!r} enumerates the ring E/Z of a SMILES; a structure file fixes the "
                             "configuration by its coordinates (use 'given', or give a SMILES)", "configurations")
        return "given", "structure file", None
    base, _ = _mol_from_smiles(spec)
    if mode == "all":
        n = len(ring_stereo_bonds(base))
        return ("all", "asked", base) if n else ("given", "no ring double bond can carry E/Z", None)
    n_open = len(open_ring_bonds(base))
    if n_open == 0:
        if mode == "open":
            return "given", "the input fixes the E/Z of every ring double bond", None
        return "given", "fixed by the input", None
    reason = "asked" if mode == "open" else (f"default: the input leaves the E/Z of {n_open} ring double "
                                            f"bond{'s' if n_open != 1 else ''} open")
    return "open", reason, base


def compare_configurations(spec: str, base, mode: str, reason: str, peaks, *, load: dict, model: dict,
                           claim=None, noise_ppm=None, seed: int = 42, solvent=None, correlations=None):
    """Enumerate, screen, predict, rank and compare; the best isomer's CompareResult with ``configurations``.

    Parameters
    ----------
    spec : str
        The SMILES as given (names the input).
    base : rdkit.Chem.Mol
        Its explicit-H Kekulé molecule (:func:`resolve_mode`).
    mode, reason : str
        "open" or "all", and why (shown in the output).
    peaks : str or PeakList
        Peak file (read with the molecule's H count) or a PeakList.
    load : dict
        conformers, temperature_K, exchange, geometry (None = default) for the full search of each kept isomer.
    model : dict
        Keyword arguments of :func:`ringshift.shifts.prediction.predict`.
    claim, noise_ppm, seed, solvent, correlations
        As in :func:`ringshift.comparison.run.run_compare` and :func:`ringshift.io.peak_tables.read_peaks`; the
        correlations and couplings enter the best configuration's comparison (not the ranking).
    """
    from ringshift.comparison.candidates import rank_candidates
    from ringshift.comparison.run import _resolved, circuit_priors, group_models, observed_peaks, run_compare
    from ringshift.geometry.configurations import (
        ENERGY_WINDOW_KCAL_MOL,
        MAX_KEPT,
        inner_hydrogens,
        mmff_energy,
        screen_configurations,
    )
    from ringshift.geometry.macrocycle import planarity_rms_A
    from ringshift.io.peak_tables import read_peaks
    from ringshift.io.structures import structure_from_molecule
    from ringshift.shifts.prediction import predict

    screen = screen_configurations(base, mode, seed=seed, source=spec)
    kept = screen.kept
    if not kept:
        raise InputError(f"none of the {len(screen.candidates)} configurations of the ring double bonds could be "
                         "embedded with its E/Z; give the configuration in the SMILES or 3D coordinates", spec)
    opts = {k: v for k, v in load.items() if v is not None}
    preds = []
    for k, cand in enumerate(kept):
        name = cand.smiles or f"{spec} (configuration {k + 1})"
        s = structure_from_molecule(cand.mol, name, spec, seed=seed, provenance={"configuration_smiles": cand.smiles},
                                    extra_starts=None if cand.coords is None else [cand.coords], **opts)
        preds.append(predict(s, **model))
    n_h = len(preds[0].protons)
    peak_list = read_peaks(peaks, n_hydrogens=n_h, solvent=solvent) if isinstance(peaks, str) else peaks
    peak_list = _resolved(peak_list, n_h)
    obs = observed_peaks(peak_list, preds[0])
    scores = rank_candidates([(f"c{k + 1}", group_models(p), circuit_priors(p)) for k, p in enumerate(preds)], obs,
                             noise_ppm=noise_ppm, seed=seed)
    by_name = {sc.name: sc for sc in scores}
    best = int(scores[0].name[1:]) - 1
    res = run_compare(preds[best], peak_list, claim=claim, noise_ppm=noise_ppm, seed=seed, correlations=correlations)
    ranked: list[tuple[int, dict]] = []
    # on the Kekulé molecule of the screen, so that MMFF94 types the atoms as it did there
    energies = [mmff_energy(c.mol, p.structure.coords[0]) if _force_field(p.structure) else None
                for c, p in zip(kept, preds)]
    known = [e for e in energies if e is not None]
    for k, (cand, pred) in enumerate(zip(kept, preds)):
        s = pred.structure
        sc = by_name[f"c{k + 1}"]
        rms = planarity_rms_A(s.coords[0], list(screen.ring))
        energy = energies[k]
        ranked.append((sc.rank, {
            "rank": sc.rank, "smiles": cand.smiles, "status": "ranked",
            "log10_bf_vs_best": rounded(sc.log10_bf_vs_best, 2), "probability": rounded(sc.probability, 4),
            "energy_kcal_mol": None if energy is None else rounded(energy - min(known), 2),
            "screen_energy_kcal_mol": rounded(cand.energy_kcal_mol, 2),
            "inner_h": len(inner_hydrogens(s.mol, s.coords[0], screen.ring)),
            "planarity_rms_A": rounded(rms, 3), "planar": bool(rms <= _planar_limit()),
            "cis_trans": _states_text(cand.states)}))
    rows = [row for _, row in sorted(ranked, key=lambda t: t[0])]
    for cand in screen.candidates:
        if cand.status != "kept":
            rows.append({"rank": None, "smiles": cand.smiles, "status": cand.status, "log10_bf_vs_best": None,
                         "probability": None, "energy_kcal_mol": None,
                         "screen_energy_kcal_mol": rounded(cand.energy_kcal_mol, 2),
                         "inner_h": cand.inner_h if cand.energy_kcal_mol is not None else None,
                         "planarity_rms_A": rounded(cand.planarity_rms_A, 3) if cand.energy_kcal_mol is not None
                         else None, "planar": cand.planar if cand.energy_kcal_mol is not None else None,
                         "cis_trans": _states_text(cand.states)})
    summary = {"mode": mode, "reason": reason, "ring_atoms": list(screen.ring),
               "bonds": [list(b) for b in screen.bonds], "assignments": screen.assignments,
               "distinct": len(screen.candidates), "not_embedded": screen.count("not-embedded"),
               "outside_window": screen.count("outside-window"), "beyond_cap": screen.count("beyond-cap"),
               "ranked": len(kept), "energy_window_kcal_mol": ENERGY_WINDOW_KCAL_MOL, "max_ranked": MAX_KEPT,
               "best_smiles": kept[best].smiles, "candidates": rows}
    return replace(res, configurations=summary)


def _force_field(structure) -> bool:
    """True when the conformers are MMFF94 minima of the search (not GFN2-xTB or UFF geometries)."""
    return structure.provenance.get("coordinates") == "etkdg-v3+mmff94"


def _planar_limit() -> float:
    from ringshift.geometry.circuits import PLANARITY_LIMIT_A

    return PLANARITY_LIMIT_A


def _states_text(states) -> str:
    """'c' (cis) / 't' (trans) per enumerated bond, in the order of ``bonds``."""
    return "".join("c" if s == 1 else "t" for s in states)


def configurations_text(summary: dict) -> str:
    """The table of configurations considered, best first, then the counts and the window."""
    lines = [f"configurations: {summary['mode']} ({summary['reason']}): {len(summary['bonds'])} ring double bonds "
             f"enumerated, {summary['assignments']} cis/trans assignments, {summary['distinct']} distinct up to "
             "symmetry",
             f"  screen: {summary['not_embedded']} not embeddable with their E/Z, {summary['outside_window']} more "
             f"than {num(summary['energy_window_kcal_mol'], '.0f')} kcal/mol above the lowest, "
             f"{summary['beyond_cap']} beyond the cap of {summary['max_ranked']}; {summary['ranked']} ranked "
             "against the peaks",
             "  E: MMFF94 energy of the ranked isomers after the full conformer search, relative to the lowest; "
             "screen E: after the screen; inner H: H inside the ring polygon",
             "",
             "rank            log10 BF vs best  inner H  planar  E (kcal/mol)  screen E  cis/trans  SMILES"]
    for r in summary["candidates"]:
        rank = str(r["rank"]) if r["rank"] is not None else r["status"]
        bf = num(r["log10_bf_vs_best"], "+.2f") if r["log10_bf_vs_best"] is not None else "-"
        inner = str(r["inner_h"]) if r["inner_h"] is not None else "-"
        planar = "-" if r["planar"] is None else ("yes" if r["planar"] else "no")
        screen = num(r["screen_energy_kcal_mol"], ".1f", "-")
        energy = num(r["energy_kcal_mol"], ".1f", "-")
        lines.append(f"{rank:<14}  {bf:>18}  {inner:>7}  {planar:>6}  {energy:>12}  {screen:>8}  "
                     f"{r['cis_trans']:<9}  {r['smiles'] or '(no SMILES)'}")
    lines += ["", f"best configuration: {summary['best_smiles']}; its full comparison follows.", "", ""]
    return "\n".join(lines)
