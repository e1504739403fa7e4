"""Published ¹H development set and the scores of the accuracy benchmark.

The data file ``published_shifts.csv`` (next to this module) holds one row per observed signal: molecule id,
name, SMILES (E/Z of annulenes written with ``[H]`` anchors, see the design notes §6), net charge, shift (ppm),
number of H, label, solvent, temperature (K), source, ``recall`` (``from memory`` where the number was recalled
rather than read from the paper), ``category`` (``ring-current-dominated`` or ``ordinary``), the expected
verdict of the molecule (``diatropic``, ``paratropic``, ``atropic``), ``split`` (``dev`` may be used for
tuning, ``test`` never) and a free ``note``.

Scores
------
* :func:`sorted_match_mae` — mean absolute error (ppm) after matching predicted and observed protons in
  sorted order. For equal counts, sorted (monotone) matching minimises the sum of absolute errors over all
  one-to-one assignments on a line (common practice, no source; the unit test checks it against
  ``scipy.optimize.linear_sum_assignment``). When the counts differ, the ``min(n_pred, n_obs)`` protons of the
  longer list that give the smallest sorted-order error are matched (a small dynamic programme; again checked
  against SciPy's rectangular assignment) and the result says so in ``note``.
* :func:`verdict_from_currents` — the verdict of a prediction: the sign of the current (nA/T, J > 0
  diatropic) of the circuit with the largest |J|; ``atropic`` when no circuit carries at least
  ``ATROPIC_BELOW_NA_PER_T``.

This module is a benchmark helper: it is never imported by the package.
"""

from __future__ import annotations

import csv
import pathlib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

#: The development set shipped next to this module.
DEFAULT_CSV = pathlib.Path(__file__).resolve().parent / "published_shifts.csv"

#: Below this |J| (nA/T, one sixth of benzene's 12 nA/T) a prediction is called atropic. A convention of this
#: benchmark (common practice, no source): small enough that every aromatic ring of the set is above it.
ATROPIC_BELOW_NA_PER_T = 2.0

VERDICTS = ("diatropic", "paratropic", "atropic")
CATEGORIES = ("ring-current-dominated", "ordinary")
SPLITS = ("dev", "test")


@dataclass(frozen=True)
class Signal:
    """One observed signal: shift (ppm), number of H, label."""

    shift_ppm: float
    n_h: int
    label: str


@dataclass(frozen=True)
class PublishedMolecule:
    """One molecule of the development set with its observed signals."""

    molecule_id: str
    name: str
    smiles: str
    charge: int
    category: str
    expected_verdict: str
    split: str
    solvent: str
    temperature_K: float
    source: str
    recall: str
    note: str
    signals: tuple[Signal, ...]

    @property
    def n_h(self) -> int:
        """Total number of H in the observed signals."""
        return sum(s.n_h for s in self.signals)


class MatchResult(NamedTuple):
    """Result of :func:`sorted_match_mae`.

    ``mae_ppm`` is NaN when nothing could be matched; ``pairs`` is (n_matched, 2) of (predicted, observed)
    shifts in ppm in matched order.
    """

    mae_ppm: float
    n_matched: int
    n_predicted: int
    n_observed: int
    pairs: np.ndarray
    note: str


_MOLECULE_FIELDS = ("name", "smiles", "charge", "category", "expected_verdict", "split", "solvent",
                    "temperature_K", "source", "recall", "note")


def load_published(path: str | pathlib.Path = DEFAULT_CSV) -> list[PublishedMolecule]:
    """Read the development set; molecules in the order of first appearance.

    Raises ValueError on a malformed row or when the per-molecule columns disagree between the rows of
    one molecule.
    """
    rows: dict[str, list[dict[str, str]]] = {}
    with open(path, newline="", encoding="utf-8") as fh:
        for lineno, row in enumerate(csv.DictReader(fh), start=2):
            mid = (row.get("molecule_id") or "").strip()
            if not mid:
                raise ValueError(f"{path}:{lineno}: empty molecule_id")
            row["_line"] = str(lineno)
            rows.setdefault(mid, []).append(row)
    out = []
    for mid, group in rows.items():
        first = group[0]
        for row in group[1:]:
            for key in _MOLECULE_FIELDS:
                if row[key] != first[key]:
                    raise ValueError(f"{path}:{row['_line']}: {key} of {mid} differs from line {first['_line']}")
        if first["category"] not in CATEGORIES or first["expected_verdict"] not in VERDICTS \
                or first["split"] not in SPLITS:
            raise ValueError(f"{path}:{first['_line']}: category/verdict/split of {mid} not one of "
                             f"{CATEGORIES}/{VERDICTS}/{SPLITS}")
        signals = tuple(Signal(float(r["shift_ppm"]), int(r["n_h"]), r["label"]) for r in group)
        if any(s.n_h <= 0 for s in signals):
            raise ValueError(f"{path}:{first['_line']}: {mid} has a signal with n_h <= 0")
        out.append(PublishedMolecule(
            molecule_id=mid, name=first["name"], smiles=first["smiles"], charge=int(first["charge"]),
            category=first["category"], expected_verdict=first["expected_verdict"], split=first["split"],
            solvent=first["solvent"], temperature_K=float(first["temperature_K"]), source=first["source"],
            recall=first["recall"], note=first["note"], signals=signals))
    return out


def split_by_rule(molecules: Iterable[PublishedMolecule]) -> dict[str, str]:
    """The split rule fixed before any model was run: within each category, molecules sorted by id (ASCII);
    the 3rd, 6th, 9th, ... go to ``test``, the others to ``dev``. Returns {molecule_id: split}."""
    mols = list(molecules)
    out = {}
    for cat in CATEGORIES:
        ids = sorted(m.molecule_id for m in mols if m.category == cat)
        for k, mid in enumerate(ids):
            out[mid] = "test" if (k + 1) % 3 == 0 else "dev"
    return out


def expand_protons(groups: Iterable[tuple[float, int]]) -> np.ndarray:
    """Per-proton shifts, sorted ascending: each (shift_ppm, n_h) repeated n_h times. Shape (sum n_h,)."""
    shifts: list[float] = []
    for shift, n_h in groups:
        n = int(n_h)
        if n != n_h or n < 0:
            raise ValueError(f"number of H must be a non-negative integer, got {n_h!r}")
        shifts.extend([float(shift)] * n)
    arr = np.asarray(shifts, dtype=float)
    if not np.all(np.isfinite(arr)):
        raise ValueError("shifts must be finite")
    return np.sort(arr)


def _best_monotone_subset(short: np.ndarray, long: np.ndarray) -> np.ndarray:
    """Indices into sorted ``long`` (length m ≥ n) matched in order to sorted ``short`` (length n) with the
    least sum of absolute differences. Dynamic programme, O(n·m). Returns (n,) int."""
    n, m = short.size, long.size
    cost = np.full((n + 1, m + 1), np.inf)
    cost[0, :] = 0.0
    take = np.zeros((n + 1, m + 1), dtype=bool)
    for i in range(1, n + 1):
        for j in range(i, m + 1):
            skip = cost[i, j - 1]
            use = cost[i - 1, j - 1] + abs(short[i - 1] - long[j - 1])
            if use <= skip:
                cost[i, j], take[i, j] = use, True
            else:
                cost[i, j] = skip
    idx = np.empty(n, dtype=int)
    i, j = n, m
    while i > 0:
        if take[i, j]:
            idx[i - 1] = j - 1
            i -= 1
        j -= 1
    return idx


def sorted_match_mae(predicted_groups: Sequence[tuple[float, int]],
                     observed_signals: Sequence[tuple[float, int]]) -> MatchResult:
    """Mean absolute error (ppm) between predicted and observed protons matched in sorted order.

    Parameters
    ----------
    predicted_groups : sequence of (shift_ppm, n_h)
        Predicted groups of equivalent protons.
    observed_signals : sequence of (shift_ppm, n_h)
        Observed signals with their integrals in H.

    Returns
    -------
    MatchResult
        Both lists are expanded to one entry per proton and sorted. Equal counts: matched in order (the
        assignment with the least total absolute error on a line). Different counts: the common count
        ``min(n_pred, n_obs)`` is matched, choosing the subset of the longer list that minimises the total
        error in sorted order, and ``note`` says how many protons were left out on which side.
    """
    pred = expand_protons(predicted_groups)
    obs = expand_protons(observed_signals)
    n_p, n_o = pred.size, obs.size
    note = ""
    if n_p == n_o:
        p_m, o_m = pred, obs
    elif n_p < n_o:
        o_m, p_m = obs[_best_monotone_subset(pred, obs)], pred
        note = f"H counts differ: {n_p} predicted, {n_o} observed; {n_o - n_p} observed H left unmatched"
    else:
        p_m, o_m = pred[_best_monotone_subset(obs, pred)], obs
        note = f"H counts differ: {n_p} predicted, {n_o} observed; {n_p - n_o} predicted H left unmatched"
    n = p_m.size
    mae = float(np.mean(np.abs(p_m - o_m))) if n else float("nan")
    return MatchResult(mae, n, n_p, n_o, np.column_stack([p_m, o_m]) if n else np.zeros((0, 2)), note)


def verdict_from_currents(currents_nA_per_T: Iterable[float | None], *,
                          atropic_below_nA_per_T: float = ATROPIC_BELOW_NA_PER_T) -> str:
    """Verdict of a prediction from its circuit currents (nA/T, J > 0 diatropic; None = no current).

    The circuit with the largest |J| decides: ``diatropic`` if J > 0, ``paratropic`` if J < 0; ``atropic``
    when there is no current or every |J| is below ``atropic_below_nA_per_T``.
    """
    vals = [float(c) for c in currents_nA_per_T if c is not None and np.isfinite(c)]
    if not vals:
        return "atropic"
    big = max(vals, key=abs)
    if abs(big) < atropic_below_nA_per_T:
        return "atropic"
    return "diatropic" if big > 0 else "paratropic"
