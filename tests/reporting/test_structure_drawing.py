"""Geometry of the structure drawing: labels clear of bonds, of atom symbols and of each other.

The checks read the SVG that RDKit wrote (glyph outlines, bond lines, atom symbols) and measure
distances with their own point-to-segment sampling, independent of ringshift.reporting.labels.
"""

from __future__ import annotations

import re
from importlib import resources

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from ringshift.io.structures import load_structure
from ringshift.reporting import labels as L
from ringshift.reporting import structure_drawing as S
from ringshift.shifts.prediction import predict

DEMO = resources.files("ringshift") / "data" / "demo"

MOLECULES = {
    # trans-15,16-dimethyldihydropyrene, a bridged [14]annulene (demo structure)
    "dimethyldihydropyrene": str(DEMO / "fj14c.sdf"),
    # 1,6-methano[10]annulene, bridged [10]annulene
    "methano10annulene": "C1=CC=C2C=CC=CC(=C1)C2",
    # porphine: four pyrroles and the inner macrocycle
    "porphine": "c1cc2cc3ccc(cc4ccc(cc5ccc(cc1n2)[nH]5)n4)[nH]3",
    # [18]annulene with six inner H (design notes §6 SMILES)
    "annulene18": "[H]/C1=C/C=C/C=C/C=C\\C=C\\C=C\\C=C/C=C/C=C1\\[H]",
    "naphthalene": "c1ccc2ccccc2c1",
}

#: Rendered clearances asserted below, pixels (common practice, no source): the layout keeps 5 px from
#: bond centre lines and 4 px between boxes; glyph outlines may differ from the measured boxes by < 1 px.
MIN_BOND_PX = 4.0
MIN_GAP_PX = 3.0


@pytest.fixture(scope="module", params=list(MOLECULES), ids=list(MOLECULES))
def drawn(request):
    src = MOLECULES[request.param]
    pred = predict(load_structure(src, conformers=2, seed=1))
    return request.param, pred, S.structure_layout(pred), S.structure_figure(pred)


def _numbers(d):
    return np.array([float(x) for x in re.findall(r"-?\d+(?:\.\d+)?", d)]).reshape(-1, 2)


def svg_parts(svg: str):
    """(glyph boxes, bond segments, atom-symbol boxes) read from RDKit's SVG text."""
    glyphs = [np.array([*v.min(axis=0), *v.max(axis=0)])
              for v in (_numbers(d) for d in re.findall(r"<path d='([^']*)' fill='#[0-9A-F]{6}'\s*/>", svg)) if len(v)]
    segs = []
    for cls, d, style in re.findall(r"<path class='([^']*)' d='([^']*)' style='([^']*)'", svg):
        if not cls.startswith("bond-"):
            continue
        fill = re.search(r"fill:(#[0-9A-F]{6}|none)", style).group(1)
        if fill not in ("none", "#000000"):  # pale highlight bands are not bonds
            continue
        for piece in re.split(r"(?=M)", d):
            v = _numbers(piece)
            segs += [(v[k], v[k + 1]) for k in range(len(v) - 1)]
    symbols = {}
    for cls, d in re.findall(r"<path class='(atom-\d+)' d='([^']*)' fill=", svg):
        v = _numbers(d)
        if len(v):
            symbols.setdefault(cls, []).append(v)
    sym = [np.array([*np.vstack(v).min(axis=0), *np.vstack(v).max(axis=0)]) for v in symbols.values()]
    return np.array(glyphs), np.array(segs).reshape(-1, 2, 2), np.array(sym).reshape(-1, 4)


def sampled_distance(box, a, b, n=400):
    """Distance from a box to segment a→b by sampling the segment (elementary geometry)."""
    t = np.linspace(0.0, 1.0, n)[:, None]
    p = a + t * (b - a)
    dx = np.maximum(np.maximum(box[0] - p[:, 0], p[:, 0] - box[2]), 0)
    dy = np.maximum(np.maximum(box[1] - p[:, 1], p[:, 1] - box[3]), 0)
    return float(np.hypot(dx, dy).min())


def gap(a, b):
    dx = max(a[0] - b[2], b[0] - a[2])
    dy = max(a[1] - b[3], b[1] - a[3])
    return float(np.hypot(max(dx, 0), max(dy, 0))) if (dx >= 0 or dy >= 0) else -1.0


def test_layout_boxes_are_the_rendered_glyphs(drawn):
    name, pred, lay, svg = drawn
    glyphs, _, _ = svg_parts(svg)
    lines = [(k, box) for k, lab in enumerate(lay.labels) for box in lab.line_boxes]
    owner = []
    for g in glyphs:
        inside = [k for k, box in lines if g[0] >= box[0] - 0.6 and g[2] <= box[2] + 0.6 and g[1] >= box[1] - 0.6
                  and g[3] <= box[3] + 0.6]
        assert inside, (name, g)  # every glyph belongs to a laid-out label
        owner.append(inside[0])
    owner = np.array(owner)
    for k, lab in enumerate(lay.labels):
        mine = glyphs[owner == k]
        assert len(mine), (name, lab.lines)
        hull = [mine[:, 0].min(), mine[:, 1].min(), mine[:, 2].max(), mine[:, 3].max()]
        # the glyphs fill the laid-out box (RDKit's text outlines are measured, not guessed)
        assert_allclose(hull, lab.box, atol=0.6)


def test_labels_clear_of_bonds_symbols_and_each_other(drawn):
    name, pred, lay, svg = drawn
    glyphs, segs, symbols = svg_parts(svg)
    assert len(segs) >= len(list(lay.mol.GetBonds())) and not any(lab.clash for lab in lay.labels), name
    labels = [lab for lab in lay.labels if lab.kind != "legend"]
    for lab in labels:
        mine = [g for g in glyphs if all(g[:2] >= lab.box[:2] - 0.6) and all(g[2:] <= lab.box[2:] + 0.6)]
        for g in mine:
            d = min(sampled_distance(g, a, b) for a, b in segs)
            assert d >= MIN_BOND_PX, (name, lab.lines, d)
            for s in symbols:
                assert gap(g, s) >= MIN_GAP_PX, (name, lab.lines)
        assert 0 <= lab.box[0] and lab.box[2] <= lay.width and 0 <= lab.box[1] and lab.box[3] <= lay.panel_height
    boxes = [lab.box for lab in lay.labels]
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            assert gap(boxes[i], boxes[j]) >= MIN_GAP_PX, (name, lay.labels[i].lines, lay.labels[j].lines)


def test_each_group_value_once_and_label_near_every_parent(drawn):
    name, pred, lay, svg = drawn
    groups = [lab for lab in lay.labels if lab.kind == "group"]
    drawn_at = {a.GetIntProp("rs_index"): a.GetIdx() for a in lay.mol.GetAtoms()}
    for g in pred.groups:
        mine = [lab for lab in groups if g.label in [t.split()[0] for t in lab.lines]]
        # the value: "H4 -3.48" on one line, or "H4" with "-3.48" under it, in exactly one label
        values = [float(t.split()[1]) for lab in mine for t in lab.lines if t.split()[0] == g.label and " " in t]
        values += [float(lab.lines[k + 1]) for lab in mine for k, t in enumerate(lab.lines[:-1])
                   if t == g.label and not lab.lines[k + 1].startswith("H")]
        assert len(values) == 1, (name, g.label, [lab.lines for lab in mine])
        assert abs(values[0] - g.ring_current_ppm) <= 0.005 + 1e-12
        # every parent atom has a label of its group anchored within a bond length
        for parent in dict.fromkeys(g.parents):
            p = lay.atom_px[drawn_at[parent]]
            assert min(np.hypot(*(np.array(lab.anchor) - p)) for lab in mine) <= 1.05 * lay.bond_px, (name, g.label)
    assert sorted(lab.lines[0] for lab in lay.labels if lab.kind == "circuit") == \
        sorted(c.circuit.label for c in pred.circuits)
    assert svg.isascii()


def test_png_has_the_layout_size(drawn):
    name, pred, lay, _ = drawn
    png = S.structure_figure(pred, fmt="png")
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    w, h = int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")  # IHDR (PNG specification)
    assert (w, h) == (lay.width, lay.height)


def test_no_negative_zero_in_notes():
    assert S._signed2(-0.001) == "+0.00" and S._signed2(0.004) == "+0.00"
    assert S._signed2(-0.006) == "-0.01" and S._signed2(1.234) == "+1.23"


# ---------------------------------------------------------------------------------- label geometry
boxes_st = st.tuples(st.floats(-50, 50), st.floats(-50, 50), st.floats(0.5, 30), st.floats(0.5, 30)).map(
    lambda t: np.array([t[0], t[1], t[0] + t[2], t[1] + t[3]]))
points_st = st.tuples(st.floats(-80, 80), st.floats(-80, 80)).map(np.array)


@settings(max_examples=150, deadline=None)
@given(boxes_st, points_st, points_st)
def test_box_segment_distance_matches_sampling(box, a, b):
    got = L.box_segment_distance(box, np.array([[a, b]]))[0, 0]
    ref = sampled_distance(box, a, b, n=4000)
    # sampling over-estimates by at most half a sampling step (segment ≤ 230 px / 4000)
    assert ref - 0.03 <= got <= ref + 1e-9


def test_place_labels_avoids_a_crossing_bond():
    # one anchor where two bonds meet at a right angle: the label goes into the free quadrant
    seg = np.array([[[100, 100], [160, 100]], [[100, 100], [100, 160]]], float)
    pref = L.preferred_direction([100, 100], [[160, 100], [100, 160]])
    assert_allclose(pref, -np.array([1, 1]) / np.sqrt(2))
    p = L.place_labels([[100, 100]], [[40, 10]], seg, preferred=[pref], canvas=(0, 0, 300, 300))[0]
    assert not p.clash
    assert (p.box[0] + p.box[2]) / 2 < 100 and (p.box[1] + p.box[3]) / 2 < 100  # centred in the free quadrant
    assert L.box_segment_distance(p.box, seg).min() >= 5.0 - 1e-9
    # a second label on the same anchor keeps its distance from the first
    q = L.place_labels([[100, 100], [100, 100]], [[40, 10], [40, 10]], seg, preferred=[pref, pref],
                       canvas=(0, 0, 300, 300))
    assert L.box_box_gap(q[0].box, q[1].box)[0, 0] >= 4.0 - 1e-9


def test_place_labels_reports_a_clash_when_boxed_in():
    # the canvas is smaller than the label: the least bad place is kept and flagged
    p = L.place_labels([[10, 10]], [[40, 10]], np.zeros((0, 2, 2)), canvas=(0, 0, 20, 20))[0]
    assert p.clash
