"""Maps of the ring-current shift around a molecule's loops, and its scan along the ring normal.

The shift is Δδ_rc(r) = −Σ_c J_c σ_c(r), summed over every loop-carrying circuit c with its current
J_c (nA/T; a priori, or fitted when a comparison is given), σ_c the isotropic shielding per nA/T of
the polygon double loop through the ring atoms at ±0.64 Å (Biot–Savart; Johnson & Bovey, J. Chem.
Phys. 1958, 29, 1012), computed by :func:`ringshift.fields.polygon.polygon_shielding`. Positive = downfield
(deshielded), negative = upfield. Geometry is the most populated conformer.

The shift along the normal through the ring centre is the loop-model counterpart of a NICS scan
(NICS = −σ, so NICS_iso of the loops equals Δδ_rc, and for a planar loop NICS_zz = 3 Δδ_rc).

Layers: :func:`loop_shift_ppm` and :func:`wire_distance_A` are array kernels; :func:`shielding_map`
and :func:`normal_scan` return frozen results; the ``*_figure`` functions draw them.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np
from matplotlib import rc_context
from matplotlib.colors import BoundaryNorm, LinearSegmentedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ringshift import fields
from ringshift.constants import JB_SEPARATION_A
from ringshift.errors import GeometryWarning, InputError
from ringshift.report.figures import FITTED, INK, MUTED, PRIOR, STYLE, split_source

__all__ = ["Loop", "MapFrame", "ShieldingMap", "NormalScan", "loops_of", "map_frame", "loop_shift_ppm",
           "wire_distance_A", "shielding_map", "normal_scan", "contour_levels", "shielding_map_figure",
           "normal_scan_figure", "LEVEL_LADDER_PPM", "WIRE_MASK_A"]

#: Contour magnitudes (ppm): a 1-2-5 ladder, readable labels at every scale (common practice, no source).
LEVEL_LADDER_PPM = (0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0)
#: Grid points closer than this to a loop wire are left blank (thin-wire field diverges there), Å.
WIRE_MASK_A = 0.3
#: Atoms within this distance of a drawn plane are marked on it, Å.
MARK_WITHIN_A = 1.2

#: Lightness rises monotonically from upfield (dark) to downfield (light): greyscale keeps the sign.
SHIFT_CMAP = LinearSegmentedColormap.from_list("ringshift_shift", ["#16233f", "#4b5d7a", "#9aa0a6", "#d9c9a3",
                                                                  "#fbf3df"])


@dataclass(frozen=True)
class Loop:
    """One current loop: ring atoms in order (Å), its normal, its current (nA/T, > 0 diatropic)."""

    label: str
    vertices: np.ndarray
    normal: np.ndarray
    current_nA_per_T: float


@dataclass(frozen=True)
class MapFrame:
    """Orthonormal frame of a map: origin ``centre`` (Å); ``u``, ``v`` span the ring plane, ``n`` its normal."""

    centre: np.ndarray
    u: np.ndarray
    v: np.ndarray
    n: np.ndarray
    circuit: str


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


@dataclass(frozen=True)
class NormalScan:
    """Δδ_rc (ppm) at heights ``z_A`` (Å) along the frame normal through the frame centre."""

    z_A: np.ndarray
    shift_ppm: np.ndarray
    frame: MapFrame
    currents_from: str


# -------------------------------------------------------------------------------------------- kernels
def loop_shift_ppm(points, loops, *, separation_A: float = JB_SEPARATION_A) -> np.ndarray:
    """Ring-current shift of all loops summed, ppm (positive = downfield).

    Parameters
    ----------
    points : array_like, shape (n, 3)
        Å.
    loops : sequence of Loop
    separation_A : float
        Half-separation of the Johnson–Bovey double loops, Å.

    Returns
    -------
    ndarray, shape (n,)
        Δδ_rc = −Σ J_c σ_c. Near-wire regularisation warnings are silenced (maps mask those points).
    """
    pts = np.ascontiguousarray(np.asarray(points, dtype=np.float64).reshape(-1, 3))
    out = np.zeros(pts.shape[0])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", GeometryWarning)
        for lp in loops:
            if lp.current_nA_per_T:
                out -= lp.current_nA_per_T * fields.polygon_shielding(pts, lp.vertices, lp.normal,
                                                                      separation_A=separation_A)
    return out


def wire_distance_A(points, loops, *, separation_A: float = JB_SEPARATION_A) -> np.ndarray:
    """Distance from each point to the nearest wire segment of any loop (both ±separation copies), Å.

    Parameters
    ----------
    points : array_like, shape (n, 3)
    loops : sequence of Loop

    Returns
    -------
    ndarray, shape (n,)
    """
    pts = np.asarray(points, dtype=np.float64).reshape(-1, 3)
    best = np.full(pts.shape[0], np.inf)
    for lp in loops:
        n = lp.normal / np.linalg.norm(lp.normal)
        for s in ({0.0} if separation_A == 0 else {separation_A, -separation_A}):
            a = lp.vertices + s * n
            b = np.roll(a, -1, axis=0)
            d = b - a                                                   # (m, 3)
            t = np.einsum("pmk,mk->pm", pts[:, None, :] - a[None], d) / np.einsum("mk,mk->m", d, d)
            foot = a[None] + np.clip(t, 0.0, 1.0)[..., None] * d[None]  # (n, m, 3)
            best = np.minimum(best, np.linalg.norm(pts[:, None, :] - foot, axis=2).min(axis=1))
    return best


# ------------------------------------------------------------------------------------------ geometry
def loops_of(source) -> tuple[tuple[Loop, ...], str]:
    """The loops of a Prediction (a priori currents) or CompareResult (fitted currents).

    Returns
    -------
    loops : tuple of Loop
        Most populated conformer; a circuit without a current number counts as 0.
    currents_from : str
        ``"a priori"`` or ``"fitted"``.
    """
    pred, res = split_source(source)
    if not pred.circuits:
        raise InputError("no conjugated ring in this molecule: there is no ring current to map",
                         pred.structure.source)
    fitted = {cf.label: cf.current_nA_per_T for cf in res.comparison.circuits} if res is not None else {}
    s = pred.structure
    best = int(np.argmax(s.weights))
    x = np.asarray(s.coords[best], dtype=np.float64)
    loops = tuple(Loop(cr.circuit.label, x[list(cr.circuit.atoms)].copy(), np.asarray(cr.geometry.normal[best], float),
                       float(fitted.get(cr.circuit.label, cr.current_nA_per_T or 0.0)))
                  for cr in pred.circuits)
    if not any(lp.current_nA_per_T for lp in loops):
        raise InputError("no circuit carries a current (open shell or zero currents): nothing to map; "
                         "give one with --set-current LABEL=NA_PER_T", pred.structure.source)
    return loops, ("fitted" if fitted else "a priori")


def map_frame(loops, circuit: str | None = None) -> MapFrame:
    """Frame of the maps: a given circuit's plane and centre, or the mean plane of all loop atoms.

    ``u`` is the long in-plane axis of the atoms (or, for a round ring, the direction of its first
    atom); ``n`` is oriented like the (chosen or first) loop's normal; ``v = n × u``.
    """
    if circuit is not None:
        pick = [lp for lp in loops if lp.label == circuit]
        if not pick:
            raise InputError(f"no circuit labelled {circuit!r}; this molecule has "
                             f"{', '.join(lp.label for lp in loops)}", "circuit")
        ref, pts = pick[0], pick[0].vertices
    else:
        ref = loops[0]
        pts = np.unique(np.round(np.concatenate([lp.vertices for lp in loops]), 6), axis=0)
    centre = pts.mean(axis=0)
    _, sv, vt = np.linalg.svd(pts - centre)
    n = vt[2] if np.dot(vt[2], ref.normal) >= 0 else -vt[2]
    u = vt[0]
    if sv[0] - sv[1] < 0.05 * sv[0]:  # round ring: aim u at its first atom
        w = ref.vertices[0] - centre
        w = w - np.dot(w, n) * n
        u = w / np.linalg.norm(w)
    u = u - np.dot(u, n) * n
    u /= np.linalg.norm(u)
    return MapFrame(centre, u, np.cross(n, u), n, circuit or "+".join(lp.label for lp in loops))


def _checked(extent_A, grid, height_A):
    if not (np.isfinite(extent_A) and extent_A > 0):
        raise InputError(f"extent_A={extent_A!r}; expected a positive number of Å", "extent_A")
    if not (isinstance(grid, (int, np.integer)) and 11 <= grid <= 801):
        raise InputError(f"grid={grid!r}; expected an integer from 11 to 801", "grid")
    if not np.isfinite(height_A):
        raise InputError(f"height_A={height_A!r}; expected a finite number of Å", "height_A")


def shielding_map(source, *, circuit: str | None = None, plane: str = "ring", height_A: float = 0.0,
                  extent_A: float = 6.0, grid: int = 121, mask_A: float = WIRE_MASK_A) -> ShieldingMap:
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
        Points within this distance of a wire are NaN.

    Returns
    -------
    ShieldingMap
    """
    if plane not in ("ring", "perpendicular"):
        raise InputError(f"plane={plane!r}; expected 'ring' or 'perpendicular'", "plane")
    _checked(extent_A, grid, height_A)
    pred, _ = split_source(source)
    loops, origin = loops_of(source)
    fr = map_frame(loops, circuit)
    ax = np.linspace(-extent_A, extent_A, int(grid))
    a, b = np.meshgrid(ax, ax)                      # a: first axis (columns), b: second (rows)
    second = fr.v if plane == "ring" else fr.n
    offset = height_A * fr.n if plane == "ring" else 0.0
    pts = fr.centre + offset + a.reshape(-1, 1) * fr.u + b.reshape(-1, 1) * second
    sep = float(pred.provenance.get("separation_A", JB_SEPARATION_A))
    val = loop_shift_ppm(pts, loops, separation_A=sep)
    val[wire_distance_A(pts, loops, separation_A=sep) < mask_A] = np.nan
    return ShieldingMap(plane, float(height_A if plane == "ring" else 0.0), ax, val.reshape(a.shape), fr, origin,
                        loops)


def normal_scan(source, *, circuit: str | None = None, z_max_A: float = 4.0, n_points: int = 81) -> NormalScan:
    """Δδ_rc along the ring normal through the frame centre, from 0 to ``z_max_A`` Å (see module notes)."""
    if not (np.isfinite(z_max_A) and z_max_A > 0):
        raise InputError(f"z_max_A={z_max_A!r}; expected a positive number of Å", "z_max_A")
    if not (isinstance(n_points, (int, np.integer)) and n_points >= 2):
        raise InputError(f"n_points={n_points!r}; expected an integer >= 2", "n_points")
    pred, _ = split_source(source)
    loops, origin = loops_of(source)
    fr = map_frame(loops, circuit)
    z = np.linspace(0.0, z_max_A, int(n_points))
    sep = float(pred.provenance.get("separation_A", JB_SEPARATION_A))
    return NormalScan(z, loop_shift_ppm(fr.centre + z[:, None] * fr.n, loops, separation_A=sep), fr, origin)


def contour_levels(values, *, max_per_sign: int = 6) -> np.ndarray:
    """Symmetric contour levels from :data:`LEVEL_LADDER_PPM`, with 0.

    The largest magnitude is the biggest ladder value not above the 99th percentile of |values|
    (so a few huge near-wire values do not set the scale); at most ``max_per_sign`` magnitudes are
    kept (the largest ones). Returns an increasing array.
    """
    a = np.abs(np.asarray(values, dtype=float))
    a = a[np.isfinite(a)]
    top = float(np.percentile(a, 99)) if a.size else 0.0
    mags = [m for m in LEVEL_LADDER_PPM if m <= top] or [LEVEL_LADDER_PPM[0]]
    mags = mags[-max_per_sign:]
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
        ax.set_title(f"ring plane, {m.height_A:+.1f} Å along the normal")
    else:
        ax.set_ylabel("along the ring normal n (Å)")
        ax.set_title("perpendicular plane through the centre")
    return cf


def shielding_map_figure(source, *, circuit: str | None = None, plane: str = "both", height_A: float = 0.0,
                         extent_A: float = 6.0, grid: int = 121) -> Figure:
    """Contour map(s) of Δδ_rc (ppm) of all loops with their currents.

    Parameters
    ----------
    source : Prediction or CompareResult
        A comparison gives the fitted currents, a prediction the a priori ones.
    circuit : str, optional
        Circuit whose plane and centre define the frame (all loop atoms by default).
    plane : {"ring", "perpendicular", "both"}
        Which maps to draw (``"both"``: two panels, ring plane first).
    height_A, extent_A, grid
        As for :func:`shielding_map`.

    Returns
    -------
    matplotlib.figure.Figure
        One axes per plane plus a colour bar; filled bands and labelled contour lines at
        :func:`contour_levels` of all panels together (negative = upfield contours dashed); ring
        atoms filled, hydrogens hollow; blank within :data:`WIRE_MASK_A` of a wire.
    """
    if plane not in ("ring", "perpendicular", "both"):
        raise InputError(f"plane={plane!r}; expected 'ring', 'perpendicular' or 'both'", "plane")
    pred, _ = split_source(source)
    planes = ("ring", "perpendicular") if plane == "both" else (plane,)
    maps = [shielding_map(source, circuit=circuit, plane=p, height_A=height_A, extent_A=extent_A, grid=grid)
            for p in planes]
    levels = contour_levels(np.concatenate([m.shift_ppm.ravel() for m in maps]))
    norm = BoundaryNorm(levels, SHIFT_CMAP.N, extend="both")
    with rc_context(STYLE):
        fig = Figure(figsize=(4.4 * len(maps) + 1.0, 4.6), layout="constrained")
        axes = fig.subplots(1, len(maps), squeeze=False)[0]
        cf = None
        for ax, m in zip(axes, maps):
            cf = _panel(ax, m, pred, levels, norm)
        cb = fig.colorbar(cf, ax=list(axes), shrink=0.85, ticks=levels)
        cb.set_label("Δδ_rc (ppm): > 0 downfield, < 0 upfield")
        cb.ax.set_yticklabels([_signed(v) for v in levels])
        cur = ", ".join(f"{lp.label} {lp.current_nA_per_T:+.1f} nA/T" for lp in maps[0].loops)
        fig.suptitle(f"Ring-current shift of the loops ({maps[0].currents_from} currents: {cur})", fontsize=9.5,
                     x=0.01, ha="left")
        fig.legend(handles=[Line2D([], [], marker="o", color=FITTED, mec=INK, ls="none", label="ring atom"),
                            Line2D([], [], marker="o", mfc="white", mec=INK, ls="none",
                                   label=f"hydrogen (within {MARK_WITHIN_A:g} Å of the plane)"),
                            Line2D([], [], color=INK, lw=0.55, ls="--", label="upfield contour"),
                            Line2D([], [], color=INK, lw=0.55, label="downfield contour")],
                   loc="outside lower center", ncol=4 if len(maps) > 1 else 2, fontsize=7.5)
    return fig


def normal_scan_figure(source, *, circuit: str | None = None, z_max_A: float = 4.0, n_points: int = 81) -> Figure:
    """Δδ_rc along the ring normal (0 to ``z_max_A`` Å): isotropic value and its zz part (3 × iso).

    Returns
    -------
    matplotlib.figure.Figure
        One axes; x height in Å, y shift in ppm; the value at 1 Å is marked.
    """
    sc = normal_scan(source, circuit=circuit, z_max_A=z_max_A, n_points=n_points)
    with rc_context(STYLE):
        fig = Figure(figsize=(5.6, 3.6), layout="constrained")
        ax = fig.add_subplot()
        ax.axhline(0, color=MUTED, lw=0.6)
        ax.plot(sc.z_A, sc.shift_ppm, color=INK, lw=1.4, label="isotropic Δδ_rc (= loop NICS_iso)")
        ax.plot(sc.z_A, 3 * sc.shift_ppm, color=FITTED, lw=1.1, ls="--", label="zz part, 3 × iso (= loop NICS_zz)")
        if sc.z_A[-1] >= 1.0:
            v1 = float(np.interp(1.0, sc.z_A, sc.shift_ppm))
            ax.axvline(1.0, color=PRIOR, lw=0.6, ls=":")
            ax.plot([1.0, 1.0], [v1, 3 * v1], "o", color=INK, ms=3.5)
            ax.annotate(f"{v1:+.2f} ppm at 1 Å", (1.0, v1), xytext=(8, 6), textcoords="offset points", fontsize=7.5)
        ax.set_xlim(0, sc.z_A[-1])
        ax.set_xlabel(f"height above the centre of {sc.frame.circuit} along its normal (Å)")
        ax.set_ylabel("Δδ_rc (ppm; < 0 upfield)")
        ax.set_title(f"Shift along the ring normal ({sc.currents_from} currents)")
        ax.legend(loc="lower right")
    return fig
