"""The Hückel π-level diagram: levels with their occupations, degenerate levels side by side.

Split from :mod:`ringshift.reporting.figures` (which re-exports these names) and drawn in its style.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from matplotlib import rc_context
from matplotlib.figure import Figure

from ringshift.errors import InputError
from ringshift.reporting.figure_style import FITTED, INK, MUTED, PRIOR, STYLE, save_figure

__all__ = ["level_clusters", "levels_figure", "save_levels_figure"]


def level_clusters(energies, tol: float = 0.05) -> list[list[int]]:
    """Indices of (near-)degenerate levels, grouped: consecutive sorted levels closer than ``tol``."""
    e = np.asarray(energies, dtype=float)
    order = np.argsort(e, kind="stable")
    out: list[list[int]] = []
    for k in order:
        if out and e[k] - e[out[-1][-1]] < tol:
            out[-1].append(int(k))
        else:
            out.append([int(k)])
    return out


def levels_figure(summary: dict, *, degeneracy_tol: float = 0.05) -> Figure:
    """Hückel π levels with their occupations; degenerate levels side by side, HOMO and LUMO marked.

    Parameters
    ----------
    summary : dict
        :func:`ringshift.reporting.pi_summary.pi_summary` output; its ``levels`` entry gives ``energies_beta``
        (x = (E − α)/|β|, bonding negative) and ``occupations`` (0–2).
    degeneracy_tol : float
        Levels closer than this (units of |β|) are drawn side by side.

    Returns
    -------
    matplotlib.figure.Figure
        One axes; y is x = (E − α)/|β|. Each electron is an arrow glyph (a fractional occupation is a
        grey arrow with its number); the top occupied level is tagged HOMO (SOMO when singly
        occupied), the lowest level above it with room LUMO.
    """
    lv = summary.get("levels") if isinstance(summary, dict) else None
    if not lv or not lv.get("energies_beta"):
        raise InputError("no pi levels in this summary (the molecule has no pi system)", "summary")
    e = np.asarray(lv["energies_beta"], dtype=float)
    occ = np.asarray(lv["occupations"], dtype=float)
    clusters = level_clusters(e, degeneracy_tol)
    filled = np.nonzero(occ > 1e-6)[0]
    homo = int(filled[np.argmax(e[filled])]) if filled.size else None
    empty = np.nonzero(occ < 2 - 1e-6)[0]
    empty = empty[e[empty] > e[homo]] if homo is not None else empty
    lumo = int(empty[np.argmin(e[empty])]) if empty.size else None
    rng = max(float(e.max() - e.min()), 1.0)
    widest = max(len(c) for c in clusters)
    with rc_context(STYLE):
        fig = Figure(figsize=(max(3.6, 1.8 + 0.9 * widest), min(9.0, 3.0 + 0.24 * len(clusters))),
                     layout="constrained")
        ax = fig.add_subplot()
        ax.axhline(0, color=MUTED, lw=0.6, ls="--", zorder=0)
        ax.text(-0.5 * widest - 0.35, 0, "α", va="center", ha="right", color=PRIOR)
        for c in clusters:
            xs = (np.arange(len(c)) - (len(c) - 1) / 2) * 1.0
            for k, x in zip(c, xs):
                ax.plot([x - 0.38, x + 0.38], [e[k], e[k]], color=INK, lw=1.6, solid_capstyle="butt")
                n_full = int(math.floor(occ[k] + 1e-6))
                frac = occ[k] - n_full
                # electrons as arrow glyphs: their size is in points, so they never scale with the axis
                for sx, glyph in [(x - 0.13, "\u2191"), (x + 0.13, "\u2193")][:n_full]:
                    ax.text(sx, e[k], glyph, ha="center", va="center", fontsize=10, color=FITTED,
                            fontweight="bold")
                if frac > 1e-3:
                    sx = x + (0.13 if n_full else -0.13)
                    ax.text(sx, e[k], "\u2191", ha="center", va="center", fontsize=10, color=PRIOR)
                    ax.text(sx + 0.09, e[k], f"{occ[k]:.2f}", fontsize=6.5, color=INK, va="bottom")
            somo = homo is not None and occ[homo] < 2 - 1e-6  # half-filled top level: singly occupied
            tags = [t for k, t in ((homo, "SOMO" if somo else "HOMO"), (lumo, "LUMO")) if k in c]
            if tags:
                ax.text(xs[-1] + 0.48, e[c[0]], "/".join(tags), va="center", ha="left", fontsize=7.5, color=INK)
        ax.set_xlim(-0.5 * widest - 0.6, 0.5 * widest + 1.2)
        ax.set_ylim(e.min() - 0.08 * rng, e.max() + 0.08 * rng)
        ax.set_xticks([])
        ax.spines["bottom"].set_visible(False)
        ax.set_ylabel("(E − α)/|β|   (bonding below α)")
        gap = lv.get("homo_lumo_gap_beta")
        shell = "open shell" if lv.get("open_shell") else "closed shell"
        ax.set_title(f"π levels: {summary.get('pi_electrons', int(round(occ.sum())))} π electrons, {shell}"
                     + ("" if gap is None else f"\nHOMO–LUMO gap {gap:.3f} |β|"))
    return fig


def save_levels_figure(summary: dict, path, *, force: bool = False) -> Path:
    """Draw :func:`levels_figure` and write it (PNG/SVG/PDF by extension) atomically."""
    return save_figure(levels_figure(summary), path, force=force)
