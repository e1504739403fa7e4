"""Figures of ringshift results: spectrum, shift contributions, and saving (π levels re-exported).

All figures are :class:`matplotlib.figure.Figure` objects built without pyplot (no global figure
state); :func:`save_figure` renders them to PNG, SVG or PDF by file extension (Agg, SVG and PDF
canvases) and writes atomically. SVG text stays text (``svg.fonttype = 'none'``).

Visual language (chosen to survive greyscale printing): observed data in near-black solid lines and
filled diamonds; fitted predictions as filled circles and solid bars; a priori (Hückel–London)
predictions hollow with hatching; reference shifts as hollow squares; unassigned peaks as crosses;
solvent, TMS and impurity peaks as grey down-triangles. Every ppm axis runs downfield-left (decreasing to
the right), as on a spectrum. Shielding maps and the normal scan are in :mod:`ringshift.reporting.maps`,
the RDKit structure drawing in :mod:`ringshift.reporting.sdf`.
"""

from __future__ import annotations

import numpy as np
from matplotlib import rc_context
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from ringshift import _numbers as numbers
from ringshift.errors import InputError
from ringshift.reporting.figure_style import (
    FITTED,
    INK,
    MUTED,
    OBSERVED,
    PRIOR,
    REFERENCE,
    STYLE,
    UNASSIGNED,
    figure_bytes,
    save_figure,
)
from ringshift.reporting.level_diagram import level_clusters, levels_figure, save_levels_figure

__all__ = ["spectrum_figure", "contributions_figure", "levels_figure", "level_clusters", "save_levels_figure",
           "save_figure", "figure_bytes", "spread_positions", "STYLE", "INK", "OBSERVED", "FITTED", "PRIOR",
           "REFERENCE"]


_PEAK_TAG = {"solvent": "solvent", "reference": "TMS", "tms": "TMS", "impurity": "impurity"}


def _ppm2(value: float) -> str:
    """Shift with two decimals, never "-0.00" (TMS at -0.001 ppm reads 0.00;
    :func:`ringshift._numbers.text`)."""
    return numbers.text(value, ".2f")


# ------------------------------------------------------------------------------------------- inputs
def split_source(source):
    """(prediction, compare_result or None) from a Prediction or a :class:`ringshift.comparison.run.CompareResult`."""
    if hasattr(source, "comparison") and hasattr(source, "prediction"):
        return source.prediction, source
    if all(hasattr(source, a) for a in ("groups", "circuits", "structure")):
        return source, None
    raise InputError(f"expected a ringshift Prediction or CompareResult, got {type(source).__name__}", "source")


def spread_positions(x, min_gap: float) -> np.ndarray:
    """Move label positions apart until neighbours are at least ``min_gap`` apart.

    Parameters
    ----------
    x : array_like, shape (n,)
        Wanted positions (any unit).
    min_gap : float
        Smallest allowed distance between neighbours (same unit).

    Returns
    -------
    ndarray, shape (n,)
        Positions in the input order; clusters are spread symmetrically about their mean, so an
        isolated label stays where it was.
    """
    x = np.asarray(x, dtype=float).reshape(-1)
    if x.size < 2 or min_gap <= 0:
        return x.copy()
    order = np.argsort(x, kind="stable")
    xs = x[order]
    # merge overlapping clusters; each cluster is centred on the mean of its wanted positions
    clusters = [[k] for k in range(xs.size)]
    while True:
        pos = [np.mean(xs[c]) + (np.arange(len(c)) - (len(c) - 1) / 2) * min_gap for c in clusters]
        merged = False
        for k in range(len(clusters) - 1):
            if pos[k + 1][0] - pos[k][-1] < min_gap - 1e-12:
                clusters[k] = clusters[k] + clusters.pop(k + 1)
                merged = True
                break
        if not merged:
            break
    out = np.empty_like(xs)
    for c, p in zip(clusters, pos):
        out[c] = p
    res = np.empty_like(x)
    res[order] = out
    return res


# ---------------------------------------------------------------------------------------- spectrum
def _trace(peaklist, lo: float, hi: float):
    """(ppm, y normalised to 1, kind) of the observed or simulated trace inside [lo, hi]."""
    from ringshift.spectra.picking import simulate_spectrum

    spec = getattr(peaklist, "spectrum", None)
    if spec is not None:
        ppm = np.asarray(spec.ppm, dtype=float)
        y = np.asarray(spec.intensity, dtype=float)
        keep = (ppm >= lo) & (ppm <= hi)
        ppm, y = ppm[keep], y[keep]
        kind = "observed spectrum"
    else:
        mhz = peaklist.observe_mhz or 400.0
        sim = simulate_spectrum(peaklist.peaks, observe_mhz=mhz, linewidth_hz=2.5, points=12000, sw_ppm=(lo, hi))
        ppm, y = np.asarray(sim.ppm), np.asarray(sim.intensity)
        kind = "simulated from the peak list (2.5 Hz lines)"
    if ppm.size < 2:
        return ppm, y, kind
    top = float(np.max(y))
    y = y / top if top > 0 else y
    return _envelope(ppm, y, 2400) + (kind,)


def _envelope(ppm: np.ndarray, y: np.ndarray, nbins: int):
    """Min/max envelope per bin: keeps every peak apex while bounding the SVG path length."""
    if ppm.size <= 2 * nbins:
        return ppm, y
    edges = np.linspace(0, ppm.size, nbins + 1).astype(int)
    xs, ys = [], []
    for a, b in zip(edges[:-1], edges[1:]):
        seg = y[a:b]
        i, j = int(np.argmin(seg)), int(np.argmax(seg))
        for k in sorted({i, j}):
            xs.append(ppm[a + k])
            ys.append(seg[k])
    return np.array(xs), np.array(ys)


def _height_at(ppm, y, x):
    if ppm.size < 2:
        return 0.0
    order = np.argsort(ppm)
    near = np.abs(ppm - x) < 0.02
    return float(y[near].max()) if near.any() else float(np.interp(x, ppm[order], y[order]))


def spectrum_figure(source, peaklist=None, *, width_in: float = 8.0) -> Figure:
    """Observed (or simulated) ¹H spectrum with the predicted shifts drawn beneath it.

    Parameters
    ----------
    source : Prediction or CompareResult
        With a comparison, fitted and a priori predictions are drawn in two rows and each fitted
        position is joined to its assigned peak; unassigned, solvent and TMS peaks are marked.
    peaklist : ringshift.spectra.peaks.PeakList, optional
        Observed peaks (the comparison's own list by default). Its spectrum trace is drawn when it
        has one, otherwise a Lorentzian line spectrum simulated from the peaks. Without any peaks the
        predicted shifts are drawn as a stick spectrum (heights ∝ number of protons).
    width_in : float
        Figure width, inches.

    Returns
    -------
    matplotlib.figure.Figure
        One axes; x is δ in ppm, decreasing to the right.
    """
    pred, res = split_source(source)
    comp = res.comparison if res is not None else None
    if peaklist is None and res is not None:
        peaklist = res.peaks
    rows = []  # (label, fitted_ppm or None, prior_ppm, observed_ppm or None)
    if comp is not None:
        for ga in comp.assignment:
            rows.append((ga.label, ga.predicted_ppm, ga.prior_predicted_ppm, ga.observed_ppm, ga.n_h))
    else:
        rows = [(g.label, None, g.predicted_ppm, None, g.n_h) for g in pred.groups if g.predicted_ppm is not None]
    peaks = []  # (shift, kind, tag) kind in sample/unassigned/other
    if comp is not None:
        unassigned = set(comp.unassigned_peaks)
        for pk in comp.peaks:
            kind = "unassigned" if pk.index in unassigned else ("sample" if pk.kind == "sample" else "other")
            peaks.append((pk.shift_ppm, kind, _PEAK_TAG.get(pk.kind, pk.kind)))
    elif peaklist is not None:
        for pk in peaklist.peaks:
            peaks.append((pk.shift_ppm, "sample" if pk.kind == "sample" else "other", _PEAK_TAG.get(pk.kind, pk.kind)))
    xs = [v for r in rows for v in r[1:4] if v is not None] + [p[0] for p in peaks]
    if not xs:
        raise InputError("nothing to draw: the molecule has no hydrogens and no peaks were given", "source")
    lo, hi = min(xs) - 0.7, max(xs) + 0.7
    span = hi - lo
    gap = span * 0.17 / (0.86 * width_in)  # one rotated label (≈0.17 in) per gap
    with rc_context(STYLE):
        fig = Figure(figsize=(width_in, 4.6), layout="constrained")
        ax = fig.add_subplot()
        handles = []
        y_fit, y_prior, y_lab = -0.16, -0.34, -0.42
        if peaklist is not None:
            ppm, y, kind = _trace(peaklist, lo, hi)
            ax.plot(ppm, y, color=OBSERVED, lw=0.8, solid_joinstyle="round")
            handles.append(Line2D([], [], color=OBSERVED, lw=0.8, label=kind))
        else:
            ppm, y = np.zeros(0), np.zeros(0)
            nmax = max(r[4] for r in rows)
            for _lab, _, prior, _, nh in rows:
                ax.vlines(prior, 0, nh / nmax, color=PRIOR, lw=1.6)
            handles.append(Line2D([], [], color=PRIOR, lw=1.6, label="predicted stick spectrum (height = nH)"))
        ax.axhline(0, color=MUTED, lw=0.5, zorder=0)
        # observed peak labels above the apex
        if peaks:
            shifts = np.array([p[0] for p in peaks])
            top = np.array([_height_at(ppm, y, s) if peaklist is not None else 0.0 for s in shifts])
            lab_x = spread_positions(-shifts, gap) * -1
            for (s, kind, tag), h, lx in zip(peaks, top, lab_x):
                if kind == "sample":
                    text, col = _ppm2(s), INK
                elif kind == "unassigned":
                    text, col = f"{_ppm2(s)} unassigned", UNASSIGNED
                    ax.plot(s, h + 0.05, "x", color=UNASSIGNED, ms=6, mew=1.4)
                else:
                    text, col = f"{tag} {_ppm2(s)}", PRIOR
                    ax.plot(s, h + 0.05, "v", color=MUTED, mec=PRIOR, ms=5)
                ax.plot([s, s, lx], [h + 0.02, h + 0.09, h + 0.13], color=MUTED, lw=0.5)
                ax.text(lx, h + 0.14, text, rotation=90, ha="center", va="bottom", fontsize=7.5, color=col)
        # predicted rows beneath the baseline
        if comp is not None:
            for _lab, fit, prior, obs, _ in rows:
                ax.plot([prior, fit], [y_prior, y_fit], color=PRIOR, lw=0.6, ls=":")
                if obs is not None:
                    ax.plot([fit, obs], [y_fit, 0.0], color=FITTED, lw=0.8)
            ax.plot([r[1] for r in rows], [y_fit] * len(rows), "o", color=FITTED, ms=5.5, zorder=3)
            handles += [Line2D([], [], color=FITTED, marker="o", ls="-", lw=0.8, ms=5.5,
                               label="fitted, joined to its peak")]
        ax.plot([r[2] for r in rows], [y_prior] * len(rows), "D", mfc="white", mec=INK, ms=5, mew=0.9, zorder=3)
        handles.append(Line2D([], [], marker="D", mfc="white", mec=INK, ls="none", ms=5,
                              label="a priori" if comp is not None else "predicted"))
        if any(p[1] == "unassigned" for p in peaks):
            handles.append(Line2D([], [], marker="x", color=UNASSIGNED, ls="none", mew=1.4, label="unassigned peak"))
        if any(p[1] == "other" for p in peaks):
            handles.append(Line2D([], [], marker="v", color=MUTED, mec=PRIOR, ls="none",
                                  label="solvent / TMS / impurity"))
        prior_x = np.array([r[2] for r in rows])
        lab_x = -spread_positions(-prior_x, gap)
        for (lab, *_), px, lx in zip(rows, prior_x, lab_x):
            ax.plot([px, px, lx], [y_prior - 0.02, y_lab + 0.03, y_lab + 0.005], color=MUTED, lw=0.5)
            ax.text(lx, y_lab, lab, rotation=90, ha="center", va="top", fontsize=7.5, color=INK)
        ax.set_xlim(hi, lo)
        ax.set_ylim(y_lab - 0.2, 1.55)
        ax.set_yticks([y_fit, y_prior] if comp is not None else [y_prior],
                      ["fitted", "a priori"] if comp is not None else ["predicted"])
        ax.spines["left"].set_visible(False)
        ax.tick_params(axis="y", length=0)
        ax.set_xlabel("δ(¹H) (ppm)")
        name = pred.structure.name
        ax.set_title(f"¹H spectrum and predicted shifts: {name if len(name) <= 60 else name[:57] + '...'}")
        fig.legend(handles=handles, loc="outside lower center", ncol=min(5, len(handles)))
    return fig


# ----------------------------------------------------------------------------------- contributions
def contribution_rows(source) -> list[dict]:
    """Per-group parts of the predicted shift, ppm (the numbers behind :func:`contributions_figure`).

    Returns
    -------
    list of dict
        Keys: ``label``, ``n_h``, ``reference_ppm``, ``base_ppm`` (reference + class offset + charge
        term), ``ring_current_ppm`` (fitted when a comparison exists, else a priori),
        ``ring_current_prior_ppm``, ``interval_ppm`` (half-width: 1.96 × ring_current_sd_ppm of the fit,
        or the conformer spread without a fit), ``predicted_ppm``, ``observed_ppm`` (or None).
    """
    pred, res = split_source(source)
    prior = {g.label: g for g in pred.groups}
    out = []
    if res is not None:
        for ga in res.comparison.assignment:
            g = prior[ga.label]
            out.append(dict(label=ga.label, n_h=ga.n_h, reference_ppm=ga.reference_ppm,
                            base_ppm=ga.reference_ppm + ga.class_offset_ppm + ga.charge_ppm,
                            ring_current_ppm=ga.ring_current_ppm, ring_current_prior_ppm=g.ring_current_ppm,
                            interval_ppm=1.96 * ga.ring_current_sd_ppm, predicted_ppm=ga.predicted_ppm,
                            prior_predicted_ppm=ga.prior_predicted_ppm, observed_ppm=ga.observed_ppm))
    else:
        for g in pred.groups:
            out.append(dict(label=g.label, n_h=g.n_h, reference_ppm=g.reference_ppm,
                            base_ppm=g.reference_ppm + g.charge_ppm, ring_current_ppm=g.ring_current_ppm,
                            ring_current_prior_ppm=g.ring_current_ppm, interval_ppm=g.spread_ppm,
                            predicted_ppm=g.predicted_ppm, prior_predicted_ppm=g.predicted_ppm, observed_ppm=None))
    return out


def contributions_figure(source, *, width_in: float = 8.0) -> Figure:
    """Reference shift and ring-current part of every hydrogen group, side by side.

    Left axes: the build-up of each predicted shift (reference shift → + class offset and π-charge
    term → + ring-current part = predicted), with the observed shift when a comparison exists. Right
    axes: the ring-current part Δδ_rc alone, a priori (hollow, hatched) and fitted (filled, with the
    95 % interval ±1.96 × ``ring_current_sd_ppm``); without a fit the interval is the conformer spread.
    Both ppm axes run downfield-left; Δδ_rc > 0 is downfield.

    Parameters
    ----------
    source : Prediction or CompareResult
    width_in : float
        Figure width, inches.

    Returns
    -------
    matplotlib.figure.Figure
        Two axes sharing the group rows (first row = first group).
    """
    pred, res = split_source(source)
    rows = contribution_rows(source)
    if not rows:
        raise InputError("the molecule has no hydrogens: there are no shift contributions to draw",
                         pred.structure.source)
    fitted = res is not None
    n = len(rows)
    yy = np.arange(n, dtype=float)
    with rc_context(STYLE):
        fig = Figure(figsize=(width_in, 1.5 + 0.42 * n), layout="constrained")
        ax1, ax2 = fig.subplots(1, 2, sharey=True, gridspec_kw={"width_ratios": [1.35, 1.0]})
        for y, r in zip(yy, rows):
            ax1.plot([r["reference_ppm"], r["base_ppm"]], [y, y], color=MUTED, lw=1.0)
            ax1.barh(y, r["ring_current_ppm"], left=r["base_ppm"], height=0.34, color=FITTED if fitted else PRIOR,
                     edgecolor=INK, lw=0.5, hatch=None if fitted else "////", fill=True)
            ax1.plot(r["reference_ppm"], y, "s", mfc="white", mec=REFERENCE, mew=1.1, ms=6)
            ax1.plot(r["predicted_ppm"], y, "o", color=INK, ms=3.5)
            if fitted:
                ax1.plot(r["prior_predicted_ppm"], y - 0.3, "o", mfc="white", mec=INK, ms=4.5, mew=0.8)
            if r["observed_ppm"] is not None:
                ax1.plot(r["observed_ppm"], y + 0.3, "D", color=OBSERVED, ms=4.5)
        # right: ring-current part
        h = 0.34 if fitted else 0.5
        off = 0.19 if fitted else 0.0
        pri = np.array([r["ring_current_prior_ppm"] for r in rows])
        ax2.barh(yy - off if fitted else yy, pri, height=h, facecolor="white" if fitted else PRIOR,
                 edgecolor=INK, lw=0.5, hatch="////")
        if fitted:
            fit = np.array([r["ring_current_ppm"] for r in rows])
            err = np.array([r["interval_ppm"] for r in rows])
            ax2.barh(yy + off, fit, height=h, color=FITTED, edgecolor=INK, lw=0.5)
            ax2.errorbar(fit, yy + off, xerr=err, fmt="none", ecolor=INK, elinewidth=0.9, capsize=2.5)
        else:
            err = np.array([r["interval_ppm"] for r in rows])
            if np.any(err > 0):
                ax2.errorbar(pri, yy, xerr=err, fmt="none", ecolor=INK, elinewidth=0.9, capsize=2.5)
        ax2.axvline(0, color=INK, lw=0.7)
        for ax in (ax1, ax2):
            lo, hi = ax.get_xlim()
            pad = 0.08 * (hi - lo)
            ax.set_xlim(max(lo, hi) + pad, min(lo, hi) - pad)
            ax.grid(axis="x", color="#e4e4e4", lw=0.5)
            ax.set_axisbelow(True)
        ax1.set_yticks(yy, [f"{r['label']} ({r['n_h']} H)" for r in rows])
        ax1.set_ylim(n - 0.45, -0.55)
        ax1.set_xlabel("δ (ppm)")
        ax2.set_xlabel("ring-current part Δδ_rc (ppm; > 0 downfield)")
        ax1.set_title("Shift build-up per hydrogen group")
        ax2.set_title("Ring-current part" + (" with 95 % intervals" if fitted else ""))
        handles = [Line2D([], [], marker="s", mfc="white", mec=REFERENCE, ls="none", ms=6,
                          label="reference shift (no ring current)"),
                   Line2D([], [], color=MUTED, lw=1.0, label="class offset + π-charge term"),
                   Patch(facecolor="white", edgecolor=INK, hatch="////", lw=0.5, label="a priori ring-current part")]
        if fitted:
            handles += [Patch(facecolor=FITTED, edgecolor=INK, lw=0.5, label="fitted ring-current part (± 95 %)"),
                        Line2D([], [], marker="o", mfc="white", mec=INK, ls="none", label="a priori prediction"),
                        Line2D([], [], marker="D", color=OBSERVED, ls="none", label="observed shift")]
        elif any(r["interval_ppm"] > 0 for r in rows):
            handles.append(Line2D([], [], color=INK, lw=0.9, marker="|", label="conformer spread"))
        fig.legend(handles=handles, loc="outside lower center", ncol=3)
    return fig

