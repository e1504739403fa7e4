"""Weights and averages over frames: Boltzmann or given weights, weighted moments, fast exchange.

:func:`read_weights_file` reads one weight per frame; the log-weights are re-referenced to the largest
so that Boltzmann factors never overflow. Moments are merged block by block with the pairwise update of
Chan, Golub & LeVeque (Am. Stat. 1983, 37, 242). :func:`exchange_groups` gives the groups of protons
averaged in the fast-exchange limit (Gutowsky & Holm, J. Chem. Phys. 1956, 25, 1228): topologically
equivalent protons (``"auto"``) or groups the user names.
"""

from __future__ import annotations

import math

import numpy as np
from rdkit import Chem

from ringshift import limits
from ringshift.constants import KB_KCAL_PER_MOL_K
from ringshift.errors import InputError
from ringshift.io.frames import Frame

__all__ = ['exchange_groups', 'read_weights_file']


# ----------------------------------------------------------------------------------------------------
# Exchange groups and weighted statistics
# ----------------------------------------------------------------------------------------------------
def exchange_groups(mol: Chem.Mol, exchange) -> tuple[tuple[int, ...], ...]:
    """Groups of protons in fast exchange.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Explicit-H molecule.
    exchange : None, "auto" or sequence of sequences of int
        None: slow exchange (no groups). "auto": the rule of ``--exchange fast`` of the structure commands,
        :func:`ringshift.geometry.symmetry.fast_exchange_classes` on the molecule's first conformer (every
        conformational and bond-shift motion is fast, e.g. [18]annulene's inner/outer interconversion at room
        temperature; diastereotopic protons stay apart); without a conformer, H atoms of equal topological rank
        (``Chem.CanonicalRankAtoms(mol, breakTies=False)``). A list: the given groups of H atom indices
        (disjoint).

    Returns
    -------
    tuple of tuple of int
        Sorted groups of two or more H atoms, ordered by first index.
    """
    hs = {a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1}
    if exchange is None:
        return ()
    if isinstance(exchange, str):
        if exchange != "auto":
            raise InputError(f"expected None, 'auto' or a list of H index groups, got {exchange!r}", source="exchange")
        if mol.GetNumConformers():      # the structure commands' fast-exchange rule (diastereotopic H kept apart)
            from ringshift.geometry.symmetry import fast_exchange_classes

            groups = [tuple(g) for g in fast_exchange_classes(mol, mol.GetConformer().GetPositions())]
        else:                           # no geometry to read the configuration from: topological ranks
            rank = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
            by: dict[int, list[int]] = {}
            for h in sorted(hs):
                by.setdefault(rank[h], []).append(h)
            groups = [tuple(g) for g in by.values()]
    else:
        try:
            groups = [tuple(sorted(int(a) for a in g)) for g in exchange]
        except (TypeError, ValueError):
            raise InputError("expected groups of integer H atom indices, e.g. [[18, 19], [20, 21]]",
                             source="exchange") from None
        flat = [a for g in groups for a in g]
        bad = sorted(set(flat) - hs)
        if bad:
            raise InputError(f"atom(s) {bad} are not hydrogens of the molecule", source="exchange")
        if len(flat) != len(set(flat)):
            raise InputError("an H atom appears in two exchange groups; expected disjoint groups", source="exchange")
    return tuple(sorted(g for g in groups if len(g) > 1))


class _WeightedMoments:
    """Weighted mean and sum of squared deviations of (F, K) blocks, merged block by block (Chan, Golub &
    LeVeque, Am. Stat. 1983, 37, 242); weights come as logs and are re-referenced to the largest seen."""

    def __init__(self, k: int):
        self.W, self.ref = 0.0, -np.inf
        self.mean, self.m2 = np.zeros(k), np.zeros(k)

    def add(self, x: np.ndarray, logw: np.ndarray) -> None:
        top = float(np.max(logw)) if logw.size else -np.inf
        if not math.isfinite(top):
            return
        if top > self.ref:
            scale = math.exp(self.ref - top) if math.isfinite(self.ref) else 0.0
            self.W, self.m2, self.ref = self.W * scale, self.m2 * scale, top
        w = np.exp(logw - self.ref)
        wc = float(w.sum())
        if wc == 0.0:
            return
        mc = (w @ x) / wc
        m2c = w @ (x - mc) ** 2
        total = self.W + wc
        delta = mc - self.mean
        self.mean = self.mean + delta * (wc / total)
        self.m2 = self.m2 + m2c + delta * delta * (self.W * wc / total)
        self.W = total

    def sd(self) -> np.ndarray:
        return np.sqrt(np.maximum(self.m2 / self.W, 0.0)) if self.W > 0 else np.zeros_like(self.m2)


def _log_weights(block: list[Frame], weights, temperature_K: float) -> np.ndarray:
    if isinstance(weights, str):
        if weights == "uniform":
            return np.zeros(len(block))
        missing = next((f.number for f in block if f.energy_kcal_mol is None), None)
        if missing is not None:
            raise InputError(f"frame {missing} has no energy; Boltzmann weights need an energy on every frame "
                             f"(comment line 'energy=...' or an SD energy field)", source="weights")
        return -np.array([f.energy_kcal_mol for f in block]) / (KB_KCAL_PER_MOL_K * temperature_K)
    idx = np.array([f.number - 1 for f in block])
    if idx.max() >= weights.shape[0]:
        raise InputError(f"got {weights.shape[0]} weights, fewer than the frames (frame {idx.max() + 1} needs one)",
                         source="weights")
    with np.errstate(divide="ignore"):
        return np.log(weights[idx])


def read_weights_file(path) -> np.ndarray:
    """Frame weights from a text file: one non-negative number per frame, in file order.

    Blank lines and lines starting with ``#`` are skipped. Returns (n_frames,) float64 (not normalised);
    a bad line raises :class:`InputError` naming the file and line.
    """
    what = "a text file of frame weights (one non-negative number per line)"
    out = []
    for lineno, line in enumerate(limits.read_text(path, what).splitlines(), 1):
        item = line.strip()
        if not item or item.startswith("#"):
            continue
        try:
            value = float(item) if item.isascii() else math.nan
        except ValueError:
            value = math.nan
        if not math.isfinite(value) or value < 0:
            raise InputError(f"expected one non-negative number (a frame weight), got {item[:40]!r}",
                             f"{path}:{lineno}")
        out.append(value)
    if not out or sum(out) <= 0:
        raise InputError(f"no positive weight; expected {what}", str(path))
    return np.asarray(out)
