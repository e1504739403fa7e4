"""The 2D structure drawing of a result: RDKit's depiction with each hydrogen group's ring-current shift.

Heavy atoms only; each atom bearing hydrogens is labelled with its group's ring-current shift
(ASCII text: a Unicode minus vanished in RDKit text); loop-carrying circuits are highlighted in pale
colours with their label near the centre. RDKit draws the molecule; the labels are placed by
:func:`ringshift.reporting.labels.place_labels` against the bond lines and atom symbols read back from
RDKit's own SVG, so they stay clear of bonds and of each other (:func:`structure_layout` returns the
geometry, :func:`structure_figure` the picture).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import rdCoordGen, rdDepictor
from rdkit.Chem.Draw import rdMolDraw2D
from rdkit.Geometry import Point2D

from ringshift import _numbers as numbers
from ringshift.errors import InputError
from ringshift.reporting import labels as L

__all__ = ["structure_figure", "structure_layout", "StructureLayout", "DrawnLabel", "glyph_boxes",
           "CIRCUIT_COLOURS", "NOTE_FONT_PX", "BOND_CLEAR_PX", "LABEL_GAP_PX"]

#: Pale highlight colours (RGB 0–1) of circuits R1, R2, ...; they differ in lightness as well as hue.
CIRCUIT_COLOURS = [(0.96, 0.82, 0.66), (0.74, 0.84, 0.95), (0.82, 0.92, 0.76), (0.91, 0.80, 0.93),
                   (0.98, 0.93, 0.68), (0.80, 0.80, 0.80)]
#: Text sizes of the drawing, pixels (RDKit's font size is in pixels, whatever the molecule's scale).
NOTE_FONT_PX = 13
CIRCUIT_FONT_PX = 15
LEGEND_FONT_PX = 12
#: Drawn bond length, pixels (shrunk when the molecule would not fit ``MAX_WIDTH_PX``).
BOND_PX = 44.0
MAX_WIDTH_PX = 960
#: Room around the molecule for the labels, pixels.
MARGIN_PX = 74.0
#: Clearances kept by the label layout, pixels: box to bond centre line, and box to box (common practice,
#: no source: a 2 px bond stroke leaves 4 px of white between a label and the bond's edge).
BOND_CLEAR_PX = 5.0
LABEL_GAP_PX = 4.0
_CIRCUIT_INK = (0.55, 0.25, 0.05)
_NUM = re.compile(r"-?\d+(?:\.\d+)?")
_GLYPH = re.compile(r"<path d='([^']*)' fill='#[0-9A-Fa-f]{6}'\s*/>")
_CLASSED = re.compile(r"<path class='([^']*)' d='([^']*)' style='([^']*)'")


@dataclass(frozen=True)
class DrawnLabel:
    """A text label of the structure drawing.

    ``kind`` is ``"group"`` (hydrogen group on its parent atom), ``"circuit"`` (at a loop's centre)
    or ``"legend"``; ``anchor`` its atom or centre (pixels); ``box`` ``(x0, y0, x1, y1)`` of the
    glyphs, pixels; ``leader`` a line from the anchor to the box, or None; ``clash`` True when the
    layout found no position meeting every clearance.
    """

    lines: tuple[str, ...]
    kind: str
    anchor: tuple[float, float]
    box: np.ndarray
    line_boxes: tuple[np.ndarray, ...]
    leader: np.ndarray | None = None
    clash: bool = False


@dataclass(frozen=True)
class StructureLayout:
    """Geometry of the structure drawing, pixels (x right, y down), read from RDKit's own SVG.

    ``atom_px`` (n, 2): drawn atoms (``mol`` numbering; ``rs_index`` gives the structure's index);
    ``bond_px``: drawn bond length; ``bond_segments`` (m, 2, 2): every drawn bond line (double-bond
    lines and wedge outlines included); ``symbol_boxes`` (k, 4): atom symbols such as N, NH, O;
    ``labels``: every placed text.
    """

    width: int
    height: int
    panel_height: int
    atom_px: np.ndarray
    bond_px: float
    bond_segments: np.ndarray
    symbol_boxes: np.ndarray
    labels: tuple[DrawnLabel, ...]
    mol: Chem.Mol = field(repr=False)
    atom_highlights: dict = field(repr=False)
    bond_highlights: dict = field(repr=False)


def _heavy_copy(mol: Chem.Mol) -> tuple[Chem.Mol, dict[int, int]]:
    """Hydrogen-free copy and the map original index → drawn index."""
    m = Chem.Mol(mol)
    m.RemoveAllConformers()
    for a in m.GetAtoms():
        a.SetIntProp("rs_index", a.GetIdx())
    try:
        h = Chem.RemoveHs(m)
    except Exception:  # RDKit refuses odd valences: draw with the hydrogens instead
        h = m
    return h, {a.GetIntProp("rs_index"): a.GetIdx() for a in h.GetAtoms()}


def _signed2(value: float) -> str:
    """``+1.23`` / ``-1.23`` (ASCII: a Unicode minus vanished in RDKit text); never ``-0.00``."""
    return numbers.text(value, "+.2f")


def glyph_boxes(svg: str) -> list[np.ndarray]:
    """Bounding boxes ``(x0, y0, x1, y1)`` of the free text glyphs of an RDKit SVG (one per character path)."""
    out = []
    for d in _GLYPH.findall(svg):
        v = np.array([float(x) for x in _NUM.findall(d)])
        if v.size >= 4:
            out.append(np.array([v[0::2].min(), v[1::2].min(), v[0::2].max(), v[1::2].max()]))
    return out


@lru_cache(maxsize=512)
def _text_metrics(text: str, font_px: int) -> tuple[float, float, float, float]:
    """(width, height, dx, dy) of RDKit's glyphs for ``text``: size of their box and its centre's offset
    from the point given to ``DrawString`` (centred alignment)."""
    d = rdMolDraw2D.MolDraw2DSVG(1600, 200)
    d.SetFontSize(font_px)
    d.DrawString(text, Point2D(800.0, 100.0), 0, rawCoords=True)
    d.FinishDrawing()
    boxes = glyph_boxes(d.GetDrawingText())
    if not boxes:
        return 0.0, 0.0, 0.0, 0.0
    b = np.array(boxes)
    x0, y0, x1, y1 = b[:, 0].min(), b[:, 1].min(), b[:, 2].max(), b[:, 3].max()
    return x1 - x0, y1 - y0, (x0 + x1) / 2 - 800.0, (y0 + y1) / 2 - 100.0


def _block(lines, font_px, line_gap=3.0):
    """Width, height and per-line (width, height) of a stack of centred lines."""
    m = [_text_metrics(t, font_px) for t in lines]
    return max(x[0] for x in m), sum(x[1] for x in m) + line_gap * (len(m) - 1), m


def _line_boxes(box, metrics, line_gap=3.0):
    out, y = [], box[1]
    cx = (box[0] + box[2]) / 2
    for w, h, _, _ in metrics:
        out.append(np.array([cx - w / 2, y, cx + w / 2, y + h]))
        y += h + line_gap
    return tuple(out)


def _hex(rgb) -> str:
    return "#" + "".join(f"{round(255 * c):02X}" for c in rgb)


def _clusters(atoms, pix, reach_px):
    """Split atoms into clusters of drawn positions closer than ``reach_px`` (single linkage), in order."""
    out: list[list[int]] = []
    for a in atoms:
        near = [c for c in out if min(np.hypot(*(pix[a] - pix[b])) for b in c) < reach_px]
        for c in near[1:]:
            near[0].extend(c)
            out.remove(c)
        if near:
            near[0].append(a)
        else:
            out.append([a])
    return [tuple(c) for c in out]


def _group_lines(prediction, compare_result, where, pix, bond_px, *, stacked=frozenset(), skip=frozenset()):
    """Lines of text per anchor (a tuple of drawn atoms): each group's value once, its label alone elsewhere.

    Parents of one group drawn within a bond length of each other (the two methyls of a bridged
    annulene) share one label. The value goes to the first anchor not in ``skip``; at anchors in
    ``stacked`` the value is written under the label (a narrower block for crowded places).
    """
    shifts = {g.label: g.ring_current_ppm for g in prediction.groups}
    if compare_result is not None:
        shifts.update({ga.label: ga.ring_current_ppm for ga in compare_result.comparison.assignment})
    lines: dict[tuple[int, ...], list[str]] = {}
    for g in prediction.groups:
        anchors = _clusters([where[p] for p in dict.fromkeys(g.parents) if p in where], pix, 1.05 * bond_px)
        keep = [a for a in anchors if a not in skip] or anchors
        for a in anchors:
            if a == keep[0]:
                value = _signed2(shifts[g.label])
                texts = [g.label, value] if a in stacked else [f"{g.label} {value}"]
            else:
                texts = [g.label]
            for text in texts:
                if text not in lines.setdefault(a, []):
                    lines[a].append(text)
    return lines


def _legend_lines(prediction, compare_result, width_px) -> list[str]:
    fitted = {cf.label: cf.current_nA_per_T for cf in compare_result.comparison.circuits} if compare_result else {}
    head = "fitted" if compare_result is not None else "a priori"
    parts = [f"Ring-current shift per H group, ppm (> 0 downfield), {head} currents:"]
    for cr in prediction.circuits:
        cur = fitted.get(cr.circuit.label, cr.current_nA_per_T)
        parts.append(f"{cr.circuit.label} " + ("no current" if cur is None else f"{_signed2(cur)[:-1]} nA/T"))
    if not prediction.circuits:
        parts = ["Ring-current shift per H group, ppm: no conjugated ring"]
    lines, cur_line = [], ""
    for p in parts:
        trial = f"{cur_line}  {p}".strip() if cur_line else p
        if cur_line and _text_metrics(trial, LEGEND_FONT_PX)[0] > width_px - 24:
            lines.append(cur_line)
            cur_line = p
        else:
            cur_line = trial
    return lines + [cur_line]


def _draw_molecule(d, layout_mol, atom_hl, bond_hl):
    opts = d.drawOptions()
    opts.clearBackground = True
    opts.padding = 0.0
    opts.fixedBondLength = layout_mol.GetDoubleProp("rs_px_per_unit")  # pixels per depiction unit
    opts.addStereoAnnotation = False
    d.DrawMoleculeWithHighlights(layout_mol, "", atom_hl, bond_hl, {}, {})


def _touching(segments: np.ndarray, point) -> np.ndarray:
    """Indices of the bond lines that touch ``point`` (within 4 px): a leader may start across them."""
    p = np.repeat(np.asarray(point, dtype=float)[None], len(segments), axis=0)
    return np.flatnonzero(L.point_segment_distance(p, segments[:, 0], segments[:, 1]) < 4.0)


def _segments_of(path_d: str) -> list[np.ndarray]:
    segs = []
    for piece in re.split(r"(?=M)", path_d):
        v = np.array([float(x) for x in _NUM.findall(piece)]).reshape(-1, 2)
        if "Z" in piece and len(v) > 2:
            v = np.vstack([v, v[:1]])
        segs += [np.array([v[k], v[k + 1]]) for k in range(len(v) - 1)]
    return segs


def _depiction_badness(mol: Chem.Mol) -> float:
    """How poor a 2D depiction is: crossing bonds (10 each) plus the spread of ring sizes and bond lengths.

    Each ring of up to 8 atoms adds the coefficient of variation of its atoms' distances from its
    centre (0 for a regular polygon); all bonds together add the coefficient of variation of their lengths.
    """
    xy = mol.GetConformer().GetPositions()[:, :2]
    bonds = np.array([(b.GetBeginAtomIdx(), b.GetEndAtomIdx()) for b in mol.GetBonds()]).reshape(-1, 2)
    if len(bonds) == 0:
        return 0.0
    seg = xy[bonds]
    lengths = np.linalg.norm(seg[:, 1] - seg[:, 0], axis=1)
    score = float(np.std(lengths) / max(np.mean(lengths), 1e-9))
    for ring in mol.GetRingInfo().AtomRings():
        if len(ring) <= 8:
            r = np.linalg.norm(xy[list(ring)] - xy[list(ring)].mean(axis=0), axis=1)
            score += float(np.std(r) / max(np.mean(r), 1e-9))
    crossings = 0
    for i in range(len(bonds)):
        others = [j for j in range(i + 1, len(bonds)) if not set(bonds[i]) & set(bonds[j])]
        if others:
            a = np.repeat(seg[i:i + 1], len(others), axis=0)
            crossings += int(L._segments_cross(a[:, 0], a[:, 1], seg[others, 0], seg[others, 1]).sum())
    return 10.0 * crossings + score


def _depict(mol: Chem.Mol) -> None:
    """2D coordinates in place: RDKit's depiction, or CoordGen's when it is clearly less poor (porphyrins)."""
    rdDepictor.Compute2DCoords(mol)
    alt = Chem.Mol(mol)
    try:
        with rdBase.BlockLogs():      # CoordGen logs "unrecognized bond type" for a metal's dative bonds
            rdCoordGen.AddCoords(alt)
    except (RuntimeError, ValueError):  # pragma: no cover - CoordGen gives up on a few odd valences
        return
    if _depiction_badness(alt) + 0.1 < _depiction_badness(mol):
        mol.RemoveAllConformers()
        mol.AddConformer(Chem.Conformer(alt.GetConformer()), assignId=True)


def structure_layout(prediction, *, compare_result=None, size: tuple[int, int] | None = None) -> StructureLayout:
    """Lay out the structure drawing: RDKit's depiction, then labels placed clear of bonds and of each other.

    Parameters
    ----------
    prediction : ringshift.shifts.records.Prediction
    compare_result : ringshift.comparison.run.CompareResult, optional
        The group notes then show the fitted ring-current shift, the legend the fitted currents.
    size : (int, int), optional
        Canvas in pixels; by default it follows the molecule (bonds :data:`BOND_PX` long, at most
        :data:`MAX_WIDTH_PX` wide).

    Returns
    -------
    StructureLayout
    """
    mol, where = _heavy_copy(prediction.structure.mol)
    _depict(mol)
    xy = mol.GetConformer().GetPositions()[:, :2] if mol.GetNumAtoms() else np.zeros((1, 2))
    ext = np.ptp(xy, axis=0)
    bond_lengths = [float(np.linalg.norm(xy[b.GetBeginAtomIdx()] - xy[b.GetEndAtomIdx()])) for b in mol.GetBonds()]
    unit = float(np.median(bond_lengths or [1.5]))  # depiction units per bond (RDKit 1.5, CoordGen 1.0)
    if size is None:
        scale = min(BOND_PX / unit, (MAX_WIDTH_PX - 2 * MARGIN_PX) / max(ext[0], 1e-6))
        width = int(max(ext[0] * scale + 2 * MARGIN_PX, 420))
        panel = int(ext[1] * scale + 2 * MARGIN_PX)
    else:
        width, panel = int(size[0]), int(size[1]) - 3 * LEGEND_FONT_PX - 16
        scale = min(BOND_PX / unit, (width - 2 * MARGIN_PX) / max(ext[0], 1e-6),
                    (panel - 2 * MARGIN_PX) / max(ext[1], 1e-6))
    mol.SetDoubleProp("rs_px_per_unit", float(max(scale, 8.0 / unit)))
    bond_px = float(max(scale, 8.0 / unit)) * unit
    atom_hl: dict[int, list] = {}
    bond_hl: dict[int, list] = {}
    for c, cr in enumerate(prediction.circuits):
        col = CIRCUIT_COLOURS[c % len(CIRCUIT_COLOURS)]
        for a in cr.circuit.atoms:
            if a in where:
                atom_hl.setdefault(where[a], []).append(col)
        for a, b in cr.circuit.bonds():
            bd = mol.GetBondBetweenAtoms(where[a], where[b]) if a in where and b in where else None
            if bd is not None:
                bond_hl.setdefault(bd.GetIdx(), []).append(col)
    legend = _legend_lines(prediction, compare_result, width)
    lw, lh, lm = _block(legend, LEGEND_FONT_PX)
    height = panel + int(lh) + 18
    # first pass: RDKit draws the molecule; its SVG tells where every bond line and atom symbol went
    d = rdMolDraw2D.MolDraw2DSVG(width, height, width, panel)
    _draw_molecule(d, mol, atom_hl, bond_hl)
    pix = np.array([[d.GetDrawCoords(i).x, d.GetDrawCoords(i).y] for i in range(mol.GetNumAtoms())]).reshape(-1, 2)
    d.FinishDrawing()
    svg = d.GetDrawingText()
    pale = {_hex(c) for c in CIRCUIT_COLOURS}
    segs: list = []
    sym: dict = {}
    for cls, path_d, style in _CLASSED.findall(svg):
        if cls.startswith("bond-") and not any(f"fill:{p}" in style.upper().replace("FILL:", "fill:") for p in pale):
            segs += _segments_of(path_d)
    for cls, path_d in re.findall(r"<path class='(atom-\d+)' d='([^']*)' fill=", svg):
        v = np.array([float(x) for x in _NUM.findall(path_d)]).reshape(-1, 2)
        if len(v):
            b = np.array([*v.min(axis=0), *v.max(axis=0)])
            old = sym.get(cls)
            sym[cls] = b if old is None else np.array([*np.minimum(old[:2], b[:2]), *np.maximum(old[2:], b[2:])])
    for m in re.finditer(r"<path d='([^']*)' style='fill:none;stroke", svg):  # RDKit's joins at ring corners
        segs += _segments_of(m.group(1))
    S = np.array(segs).reshape(-1, 2, 2)
    symbols = np.array(list(sym.values())).reshape(-1, 4)
    soft = np.array([[pix[b.GetBeginAtomIdx()], pix[b.GetEndAtomIdx()]] for b in mol.GetBonds()
                     if b.GetIdx() in bond_hl]).reshape(-1, 2, 2)
    # labels to place: circuit names at their centres first, then groups, most crowded atoms first
    items, reach = [], []
    for cr in prediction.circuits:
        atoms = [where[a] for a in cr.circuit.atoms if a in where]
        if atoms:
            c = pix[atoms].mean(axis=0)
            items.append(((cr.circuit.label,), "circuit", c, CIRCUIT_FONT_PX, np.zeros(2), True))
            reach.append(min(0.45 * float(np.linalg.norm(pix[atoms] - c, axis=1).mean()), 15.0))
    fixed = (items, reach)
    legend_box = np.array([(width - lw) / 2, panel + 6, (width + lw) / 2, panel + 6 + lh])
    stacked: set[int] = set()
    skip: set[int] = set()
    for _ in range(3):  # crowded atoms: stack the value under the label, then move it to another parent
        items, reach = list(fixed[0]), list(fixed[1])
        lines = _group_lines(prediction, compare_result, where, pix, bond_px, stacked=frozenset(stacked),
                             skip=frozenset(skip))
        order = sorted(lines, key=lambda a: (-max(mol.GetAtomWithIdx(x).GetDegree() for x in a), a))
        for a in order:
            nb = [pix[n.GetIdx()] for x in a for n in mol.GetAtomWithIdx(x).GetNeighbors() if n.GetIdx() not in a]
            at = pix[list(a)].mean(axis=0)
            items.append((tuple(lines[a]), "group", at, NOTE_FONT_PX, L.preferred_direction(at, nb), False))
            reach.append(np.inf)
        blocks = [_block(it[0], it[3]) for it in items]
        placed = L.place_labels([it[2] for it in items], [(b[0], b[1]) for b in blocks], S,
                                obstacles=np.vstack([symbols, legend_box[None]]),
                                canvas=(2.0, 2.0, width - 2.0, panel - 2.0),
                                preferred=[it[4] for it in items], start_at_anchor=[it[5] for it in items],
                                incident=[_touching(S, it[2]) for it in items[:len(fixed[0])]] +
                                [np.concatenate([_touching(S, pix[x]) for x in a]) for a in order],
                                bond_clear_px=BOND_CLEAR_PX,
                                box_gap_px=LABEL_GAP_PX, soft_segments=soft, max_gap_px=reach, leader_after_px=16.0)
        crowded = {a for a, p in zip(order, placed[len(fixed[0]):]) if p.clash}
        if not crowded or crowded <= skip:
            break
        skip |= crowded & stacked
        stacked |= crowded
    labels = [DrawnLabel(it[0], it[1], (float(it[2][0]), float(it[2][1])), p.box, _line_boxes(p.box, b[2]), p.leader,
                         p.clash) for it, b, p in zip(items, blocks, placed)]
    labels.append(DrawnLabel(tuple(legend), "legend", (width / 2, panel + 6.0), legend_box,
                             _line_boxes(legend_box, lm)))
    return StructureLayout(width, height, panel, pix, bond_px, S, symbols, tuple(labels), mol, atom_hl, bond_hl)


def structure_figure(prediction, *, compare_result=None, fmt: str = "svg", size: tuple[int, int] | None = None):
    """2D drawing with each hydrogen group's ring-current shift beside its parent atom.

    Each group's value is written once, beside its first parent atom; other atoms carrying the same
    group show its label only. Loop-carrying circuits are highlighted in pale colours with their
    label near their centre. Labels keep :data:`BOND_CLEAR_PX` from bond lines and
    :data:`LABEL_GAP_PX` from each other and from atom symbols (see :func:`structure_layout`).

    Parameters
    ----------
    prediction : ringshift.shifts.records.Prediction
    compare_result : ringshift.comparison.run.CompareResult, optional
        When given the notes show the fitted ring-current shift (ppm), otherwise the a priori one.
    fmt : {"svg", "png"}
    size : (int, int), optional
        Pixels; by default the canvas follows the molecule.

    Returns
    -------
    str (SVG text) or bytes (PNG)
    """
    if fmt not in ("svg", "png"):
        raise InputError(f"fmt={fmt!r}; expected 'svg' or 'png'", "fmt")
    lay = structure_layout(prediction, compare_result=compare_result, size=size)
    w, h = lay.width, lay.height
    d = rdMolDraw2D.MolDraw2DSVG(w, h, w, lay.panel_height) if fmt == "svg" else \
        rdMolDraw2D.MolDraw2DCairo(w, h, w, lay.panel_height)
    _draw_molecule(d, lay.mol, lay.atom_highlights, lay.bond_highlights)
    for lab in lay.labels:
        font = {"circuit": CIRCUIT_FONT_PX, "legend": LEGEND_FONT_PX}.get(lab.kind, NOTE_FONT_PX)
        d.SetColour(_CIRCUIT_INK if lab.kind == "circuit" else (0.1, 0.1, 0.1))
        if lab.leader is not None:  # thin and grey, so it does not read as a bond
            d.SetColour((0.55, 0.55, 0.55))
            d.SetLineWidth(1)
            d.DrawLine(Point2D(*lab.leader[0]), Point2D(*lab.leader[1]), rawCoords=True)
            d.SetColour((0.1, 0.1, 0.1))
        d.SetFontSize(font)
        for text, box in zip(lab.lines, lab.line_boxes):
            _, _, dx, dy = _text_metrics(text, font)
            d.DrawString(text, Point2D(float((box[0] + box[2]) / 2 - dx), float((box[1] + box[3]) / 2 - dy)), 0,
                         rawCoords=True)
    d.FinishDrawing()
    return d.GetDrawingText()
