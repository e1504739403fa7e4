"""Maps of the ring-current shift around a molecule's loops, and its scan along the ring normal.

The shift is Δδ_rc(r) = −Σ_c J_c σ_c(r), summed over every loop-carrying circuit c with its current
J_c (nA/T; a priori, or fitted when a comparison is given), σ_c the isotropic shielding per nA/T of
the chosen shielding model (the prediction's own model unless another is asked for), evaluated by
:func:`ringshift.fields.registry.geometric_factors` — the same function that gives the per-proton
numbers, so a map read at a proton equals that proton's ring-current shift. Positive = downfield
(deshielded), negative = upfield. Geometry is the most populated conformer. The bond-current network
model has no per-circuit loops to map (see :data:`MAP_MODELS`).

Colour scale: one fixed, stated scale for every map (:data:`DEFAULT_CONTOUR_MAX_PPM` unless
``contour_max_ppm`` is given), so maps of different compounds can be compared; values beyond it take
the end colours.

The shift along the normal through the ring centre is the loop-model counterpart of a NICS scan
(NICS = −σ, so NICS_iso of the loops equals Δδ_rc, and for a planar loop NICS_zz = 3 Δδ_rc).

Layers: the loops and their array kernels (:func:`loop_shift_ppm`, :func:`wire_distance_A`) are in
:mod:`ringshift.reporting.map_loops` (re-exported here); :func:`shielding_map` and :func:`normal_scan`
return frozen results; the ``*_figure`` functions draw them.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass, field

import numpy as np
from matplotlib import rc_context
from matplotlib.colors import BoundaryNorm, LinearSegmentedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ringshift import _numbers as numbers
from ringshift import limits
from ringshift.constants import JB_SEPARATION_A
from ringshift.errors import InputError
from ringshift.reporting.figure_style import FITTED, INK, MUTED, PRIOR, STYLE
from ringshift.reporting.figures import split_source
from ringshift.reporting.map_loops import (
    MAP_MODELS,
    Loop,
    MapFrame,
    check_map_model,
    loop_shift_ppm,
    loops_of,
    map_frame,
    wire_distance_A,
)

__all__ = ["Loop", "MapFrame", "ShieldingMap", "NormalScan", "loops_of", "map_frame", "loop_shift_ppm",
           "wire_distance_A", "shielding_map", "normal_scan", "contour_levels", "shielding_map_figure",
           "normal_scan_figure", "LEVEL_LADDER_PPM", "WIRE_MASK_A", "DEFAULT_CONTOUR_MAX_PPM", "MAP_MODELS",
           "check_map_model"]

#: Contour magnitudes (ppm): a 1-2-5 ladder, readable labels at every scale (common practice, no source).
LEVEL_LADDER_PPM = (0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0)
#: Largest |Δδ_rc| of the default colour scale, ppm: the 1 Å-above-centre value of benzene's loops is
#: ≈ −10 ppm (design notes §5), so ±10 ppm spans outside and inside protons of ordinary aromatics
#: (common practice, no source).
DEFAULT_CONTOUR_MAX_PPM = 10.0
#: Contour magnitudes span two decades below the top of the scale.
LEVEL_DECADES = 2
#: Grid points closer than this to a loop wire are left blank (thin-wire field diverges there), Å.
WIRE_MASK_A = 0.3
#: Atoms within this distance of a drawn plane are marked on it, Å.
MARK_WITHIN_A = 1.2

#: Lightness rises monotonically from upfield (dark) to downfield (light): greyscale keeps the sign.
SHIFT_CMAP = LinearSegmentedColormap.from_list("ringshift_shift", ["#16233f", "#4b5d7a", "#9aa0a6", "#d9c9a3",
                                                                  "#fbf3df"])


@dataclass(frozen=True)
class ShieldingMap:
    """Δδ_rc (ppm) on a square grid in one plane.

    ``shift_ppm[j, i]`` is the value at ``axis_A[i]`` along the first in-plane axis and ``axis_A[j]``
    along the second (``v`` for the ring plane, ``n`` for the perpendicular plane); NaN within
    :data:`WIRE_MASK_A` of a wire.
    """

    plane: str
    height_A: float
    axis_A: np.ndarray
    shift_ppm: np.ndarray
    frame: MapFrame
    currents_from: str
    loops: tuple[Loop, ...] = field(repr=False)
    model: str = "polygon"


@dataclass(frozen=True)
class NormalScan:
    """Δδ_rc (ppm) at heights ``z_A`` (Å) along the frame normal through the frame centre."""

    z_A: np.ndarray
    shift_ppm: np.ndarray
    frame: MapFrame
    currents_from: str
    model: str = "polygon"


#: Grid points evaluated per block by :func:`shielding_map` (the per-loop factors of one block take
#: 8 bytes × block × loops: 13 MB for 100 loops), so a 601² grid no longer holds loops × 361 201 floats.
MAP_POINTS_PER_BLOCK = 16384


def _checked(extent_A, grid, height_A):
    if not (np.isfinite(extent_A) and extent_A > 0):
        raise InputError(f"extent_A={extent_A!r}; expected a positive number of Å", "extent_A")
    if not (isinstance(grid, (int, np.integer)) and 11 <= grid <= 801):
        raise InputError(f"grid={grid!r}; expected an integer from 11 to 801", "grid")
    if not np.isfinite(height_A):
        raise InputError(f"height_A={height_A!r}; expected a finite number of Å", "height_A")


def _model_of(pred, model: str | None) -> str:
    return check_map_model(pred.model if model is None else model)


def shielding_map(source, *, circuit: str | None = None, plane: str = "ring", height_A: float = 0.0,
                  extent_A: float = 6.0, grid: int = 121, mask_A: float = WIRE_MASK_A,
                  model: str | None = None) -> ShieldingMap:
    """Δδ_rc of all loops on a square grid, in the ring plane (at ``height_A``) or the perpendicular plane.

    Parameters
    ----------
    source : Prediction or CompareResult
    circuit : str, optional
        Label of the circuit whose plane and centre define the frame; all loops' atoms by default.
    plane : {"ring", "perpendicular"}
        ``"ring"``: centre + x u + y v + height_A n. ``"perpendicular"``: centre + x u + z n (through
        the centre, containing the normal).
    height_A : float
        Offset of the ring plane along n, Å (0 = the mean plane; 1 Å is the usual plane above).
    extent_A : float
        The grid spans −extent_A … +extent_A, Å, on both axes.
    grid : int
        Points per axis (odd keeps the centre on the grid).
    mask_A : float
        Points within this distance of a polygon wire are NaN.
    model : str, optional
        Shielding model, one of :data:`MAP_MODELS`; by default the prediction's own. The network
        model raises :class:`~ringshift.errors.InputError` (nothing is substituted).

    Returns
    -------
    ShieldingMap
    """
    if plane not in ("ring", "perpendicular"):
        raise InputError(f"plane={plane!r}; expected 'ring' or 'perpendicular'", "plane")
    _checked(extent_A, grid, height_A)
    pred, _ = split_source(source)
    model = _model_of(pred, model)
    loops, origin = loops_of(source)
    fr = map_frame(loops, circuit)
    ax = np.linspace(-extent_A, extent_A, int(grid))
    a, b = np.meshgrid(ax, ax)                      # a: first axis (columns), b: second (rows)
    second = fr.v if plane == "ring" else fr.n
    offset = height_A * fr.n if plane == "ring" else 0.0
    pts = fr.centre + offset + a.reshape(-1, 1) * fr.u + b.reshape(-1, 1) * second
    sep = float(pred.provenance.get("separation_A", JB_SEPARATION_A))
    est = limits.estimate_map(pts.shape[0], len(loops), 2 * sum(len(lp.vertices) for lp in loops),
                              MAP_POINTS_PER_BLOCK, max((len(lp.vertices) for lp in loops), default=0))
    limits.check_estimate(est, f"the {plane}-plane map", "grid")
    val = np.empty(pts.shape[0])
    with limits.progress(f"{plane}-plane map", est):
        for lo in range(0, pts.shape[0], MAP_POINTS_PER_BLOCK):  # memory O(block × loops), not O(grid² × loops)
            blk = slice(lo, lo + MAP_POINTS_PER_BLOCK)
            val[blk] = loop_shift_ppm(pts[blk], loops, model=model, separation_A=sep)
            val[blk][wire_distance_A(pts[blk], loops, separation_A=sep) < mask_A] = np.nan
    return ShieldingMap(plane, float(height_A if plane == "ring" else 0.0), ax, val.reshape(a.shape), fr, origin,
                        loops, model)


def normal_scan(source, *, circuit: str | None = None, z_max_A: float = 4.0, n_points: int = 81,
                model: str | None = None) -> NormalScan:
    """Δδ_rc along the ring normal through the frame centre, from 0 to ``z_max_A`` Å (see module notes).

    ``model`` as for :func:`shielding_map` (the prediction's own by default).
    """
    if not (np.isfinite(z_max_A) and z_max_A > 0):
        raise InputError(f"z_max_A={z_max_A!r}; expected a positive number of Å", "z_max_A")
    if not (isinstance(n_points, (int, np.integer)) and n_points >= 2):
        raise InputError(f"n_points={n_points!r}; expected an integer >= 2", "n_points")
    pred, _ = split_source(source)
    model = _model_of(pred, model)
    loops, origin = loops_of(source)
    fr = map_frame(loops, circuit)
    z = np.linspace(0.0, z_max_A, int(n_points))
    sep = float(pred.provenance.get("separation_A", JB_SEPARATION_A))
    return NormalScan(z, loop_shift_ppm(fr.centre + z[:, None] * fr.n, loops, model=model, separation_A=sep), fr,
                      origin, model)


def contour_levels(contour_max_ppm: float = DEFAULT_CONTOUR_MAX_PPM) -> np.ndarray:
    """Symmetric contour levels with 0, the same for every map drawn with the same limit.

    The magnitudes are the :data:`LEVEL_LADDER_PPM` values from ``contour_max_ppm`` down to
    :data:`LEVEL_DECADES` decades below it; a limit that is not on the ladder is itself the top level.
    Returns an increasing array.
    """
    top = float(contour_max_ppm)
    if not (np.isfinite(top) and 0.05 <= top <= 1000.0):
        raise InputError(f"got {contour_max_ppm!r}; expected a number of ppm from 0.05 to 1000",
                         "contour_max_ppm")
    mags = [m for m in LEVEL_LADDER_PPM if top / 10.0**LEVEL_DECADES * (1 - 1e-9) <= m < top * (1 - 1e-9)] + [top]
    return np.array([-m for m in reversed(mags)] + [0.0] + mags)


# ------------------------------------------------------------------------------------------- figures
def _signed(v: float) -> str:
    """Contour label with an explicit sign (typographic minus: a hyphen is hard to see at 6.5 pt)."""
    return "0" if v == 0 else f"{v:+g}".replace("-", "\u2212")


def _marks(pred, fr: MapFrame, plane: str, height_A: float):
    """In-plane coordinates of ring atoms and hydrogens within MARK_WITHIN_A of the drawn plane."""
    s = pred.structure
    x = np.asarray(s.coords[int(np.argmax(s.weights))], dtype=float) - fr.centre
    ring = sorted({a for cr in pred.circuits for a in cr.circuit.atoms})
    hyd = [a.GetIdx() for a in s.mol.GetAtoms() if a.GetAtomicNum() == 1]
    second, off_axis = (fr.v, fr.n) if plane == "ring" else (fr.n, fr.v)
    shift = height_A if plane == "ring" else 0.0

    def pick(idx, always=False):
        if not idx:
            return np.zeros((0, 2))
        p = x[idx]
        keep = always | (np.abs(p @ off_axis - shift) < MARK_WITHIN_A)
        return np.column_stack([p @ fr.u, p @ second])[keep]

    return pick(ring, always=plane == "ring"), pick(hyd)


def _panel(ax, m: ShieldingMap, pred, levels, norm):
    ext = m.axis_A
    cf = ax.contourf(ext, ext, m.shift_ppm, levels=levels, cmap=SHIFT_CMAP, norm=norm, extend="both")
    cf.set_rasterized(True)  # filled bands as an image in SVG/PDF (small files); lines and labels stay vector
    cs = ax.contour(ext, ext, m.shift_ppm, levels=levels, colors=INK, linewidths=0.55)
    ax.clabel(cs, fmt=_signed, fontsize=6.5, inline=True)
    ring, hyd = _marks(pred, m.frame, m.plane, m.height_A)
    if m.plane == "ring":
        for lp in m.loops:
            p = lp.vertices - m.frame.centre
            q = np.column_stack([p @ m.frame.u, p @ m.frame.v])
            q = np.vstack([q, q[:1]])
            ax.plot(q[:, 0], q[:, 1], color=FITTED, lw=1.0)
    ax.plot(ring[:, 0], ring[:, 1], "o", color=FITTED, mec=INK, mew=0.5, ms=4.5, ls="none")
    ax.plot(hyd[:, 0], hyd[:, 1], "o", mfc="white", mec=INK, mew=0.8, ms=4, ls="none")
    ax.set_aspect("equal")
    ax.set_xlim(ext[0], ext[-1])
    ax.set_ylim(ext[0], ext[-1])
    ax.set_xlabel("in-plane axis u (Å)")
    if m.plane == "ring":
        ax.set_ylabel("in-plane axis v (Å)")
        ax.set_title("mean ring plane" if m.height_A == 0 else
                     f"plane {_plain(m.height_A, '+.1f').replace('-', chr(0x2212))} Å along the normal")
    else:
        ax.set_ylabel("along the ring normal n (Å)")
        ax.set_title("perpendicular plane through the centre")
    return cf


def _title(maps_or_scan, loops, width_in: float, what: str) -> str:
    """Figure title: what, model and current origin, then the currents, wrapped to the figure width."""
    cur = ", ".join(f"{lp.label} {_plain(lp.current_nA_per_T, '+.1f')} nA/T" for lp in loops)
    head = f"{what} ({maps_or_scan.model} model, {maps_or_scan.currents_from} currents)"
    width = max(int(width_in * 12.5), 30)  # characters per line at 9.5 pt (DejaVu Sans ≈ 0.55 em a character)
    return "\n".join(textwrap.wrap(head, width) + textwrap.wrap("currents: " + cur, width))


def _plain(value: float, spec: str) -> str:
    """Formatted number, never a negative zero (:func:`ringshift._numbers.text`)."""
    return numbers.text(value, spec)


def shielding_map_figure(source, *, circuit: str | None = None, plane: str = "both", height_A: float = 0.0,
                         extent_A: float = 6.0, grid: int = 121, model: str | None = None,
                         contour_max_ppm: float = DEFAULT_CONTOUR_MAX_PPM) -> Figure:
    """Contour map(s) of Δδ_rc (ppm) of all loops with their currents, on a fixed, stated colour scale.

    Parameters
    ----------
    source : Prediction or CompareResult
        A comparison gives the fitted currents, a prediction the a priori ones.
    circuit : str, optional
        Circuit whose plane and centre define the frame (all loop atoms by default).
    plane : {"ring", "perpendicular", "both"}
        Which maps to draw (``"both"``: two panels, ring plane first).
    height_A, extent_A, grid, model
        As for :func:`shielding_map`.
    contour_max_ppm : float
        Top of the colour scale, ppm (±); the same value gives the same colours for any compound.

    Returns
    -------
    matplotlib.figure.Figure
        One axes per plane plus a colour bar stating the scale; filled bands and labelled contour
        lines at :func:`contour_levels` (negative = upfield contours dashed); ring atoms filled,
        hydrogens hollow; blank within :data:`WIRE_MASK_A` of a wire.
    """
    if plane not in ("ring", "perpendicular", "both"):
        raise InputError(f"plane={plane!r}; expected 'ring', 'perpendicular' or 'both'", "plane")
    levels = contour_levels(contour_max_ppm)
    pred, _ = split_source(source)
    planes = ("ring", "perpendicular") if plane == "both" else (plane,)
    maps = [shielding_map(source, circuit=circuit, plane=p, height_A=height_A, extent_A=extent_A, grid=grid,
                          model=model) for p in planes]
    norm = BoundaryNorm(levels, SHIFT_CMAP.N, extend="both")
    width_in = 4.4 * len(maps) + 1.4
    with rc_context(STYLE):
        fig = Figure(figsize=(width_in, 4.9), layout="constrained")
        axes = fig.subplots(1, len(maps), squeeze=False)[0]
        cf = None
        for ax, m in zip(axes, maps):
            cf = _panel(ax, m, pred, levels, norm)
        assert cf is not None, "a map figure has at least one panel"
        cb = fig.colorbar(cf, ax=list(axes), shrink=0.85, ticks=levels)
        cb.set_label(f"Δδ_rc (ppm), fixed scale ±{_plain(levels[-1], 'g')} ppm: > 0 downfield, < 0 upfield")
        cb.ax.set_yticklabels([_signed(v) for v in levels])
        fig.suptitle(_title(maps[0], maps[0].loops, width_in, "Ring-current shift of the loops"), fontsize=9.5,
                     x=0.01, ha="left")
        fig.legend(handles=[Line2D([], [], marker="o", color=FITTED, mec=INK, ls="none", label="ring atom"),
                            Line2D([], [], marker="o", mfc="white", mec=INK, ls="none",
                                   label=f"hydrogen (within {MARK_WITHIN_A:g} Å of the plane)"),
                            Line2D([], [], color=INK, lw=0.55, ls="--", label="upfield contour"),
                            Line2D([], [], color=INK, lw=0.55, label="downfield contour")],
                   loc="outside lower center", ncol=4 if len(maps) > 1 else 2, fontsize=7.5)
        _declutter(fig)
    return fig


def _declutter(fig: Figure) -> None:
    """Remove contour labels that would overlap an earlier one (dense contours near the wires)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(fig).get_renderer()
    fig.draw_without_rendering()  # settle the layout first: overlaps are judged where the labels end up
    for ax in fig.axes:
        kept: list = []
        for t in list(ax.texts):
            box = t.get_window_extent(renderer).expanded(1.15, 1.3)
            if any(box.overlaps(k) for k in kept):
                t.remove()
            else:
                kept.append(box)


def normal_scan_figure(source, *, circuit: str | None = None, z_max_A: float = 4.0, n_points: int = 81,
                       model: str | None = None) -> Figure:
    """Δδ_rc along the ring normal (0 to ``z_max_A`` Å): isotropic value and its zz part (3 × iso).

    Returns
    -------
    matplotlib.figure.Figure
        One axes; x height in Å, y shift in ppm; the value at 1 Å is marked.
    """
    sc = normal_scan(source, circuit=circuit, z_max_A=z_max_A, n_points=n_points, model=model)
    loops, _ = loops_of(source)
    with rc_context(STYLE):
        fig = Figure(figsize=(5.8, 3.9), layout="constrained")
        ax = fig.add_subplot()
        ax.axhline(0, color=MUTED, lw=0.6)
        ax.plot(sc.z_A, sc.shift_ppm, color=INK, lw=1.4, label="isotropic Δδ_rc (= loop NICS_iso)")
        ax.plot(sc.z_A, 3 * sc.shift_ppm, color=FITTED, lw=1.1, ls="--", label="zz part, 3 × iso (= loop NICS_zz)")
        if sc.z_A[-1] >= 1.0:
            v1 = float(np.interp(1.0, sc.z_A, sc.shift_ppm))
            ax.axvline(1.0, color=PRIOR, lw=0.6, ls=":")
            ax.plot([1.0, 1.0], [v1, 3 * v1], "o", color=INK, ms=3.5)
            ax.annotate(f"{_plain(v1, '+.2f')} ppm at 1 Å".replace("-", "\u2212"), (1.0, v1), xytext=(8, 6),
                        textcoords="offset points", fontsize=7.5)
        ax.set_xlim(0, sc.z_A[-1])
        # a model that diverges at the centre (point dipole) would flatten the rest: scale to z ≥ 0.5 Å
        far = np.concatenate([sc.shift_ppm, 3 * sc.shift_ppm])[np.tile(sc.z_A >= 0.5, 2)]
        if far.size and np.ptp(np.concatenate([sc.shift_ppm, 3 * sc.shift_ppm])) > 3 * max(np.ptp(far), 1.0):
            lo, hi = min(far.min(), 0.0), max(far.max(), 0.0)
            ax.set_ylim(lo - 0.1 * (hi - lo), hi + 0.1 * (hi - lo))
            ax.set_title("values below 0.5 Å off the scale (the model diverges at the centre)", fontsize=7.5,
                         color=PRIOR)
        ax.set_xlabel(f"height above the centre of {sc.frame.circuit} along its normal (Å)")
        ax.set_ylabel("Δδ_rc (ppm; < 0 upfield)")
        fig.suptitle(_title(sc, loops, 5.8, "Shift along the ring normal"), fontsize=9.5, x=0.01, ha="left")
        ax.legend(loc="lower right")
    return fig
