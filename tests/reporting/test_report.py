"""Tests of ringshift.reporting: figures, shielding maps and the SDF (the HTML page is in test_html.py).

Peak lists and spectra here are invented (naphthalene-like shifts, a synthetic Lorentzian trace).
Figure checks inspect the matplotlib objects (axes, limits, texts, contour sets); numerical checks
of the maps compare with the Biot–Savart law evaluated independently in this file.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from matplotlib.contour import ContourSet
from matplotlib.figure import Figure
from numpy.testing import assert_allclose
from rdkit import Chem
from scipy import stats

from ringshift.constants import JB_SEPARATION_A, MU0_PPM_A_PER_NA_T
from ringshift.errors import InputError, OutputError
from ringshift.io.structures import load_structure
from ringshift.reporting import figures as F
from ringshift.reporting import maps as M
from ringshift.reporting import sdf as S
from ringshift.reporting.pi_summary import pi_summary
from ringshift.shifts.prediction import predict
from ringshift.spectra.peaks import Peak, PeakList
from ringshift.spectra.picking import simulate_spectrum

from .conftest import R_CC


# ------------------------------------------------------------------------------------------ helpers
def texts(fig: Figure) -> list[str]:
    return [t.get_text() for ax in fig.axes for t in ax.texts]


def ccw_field_n(points, verts, normal, n_sub=400):
    """Independent midpoint-rule Biot–Savart: (1/I)(4π/μ0) B·n of a counter-clockwise (about n) loop, Å⁻¹.

    B = (μ0 I / 4π) ∮ dl × (r − r') / |r − r'|³ (Biot–Savart law, any electromagnetism textbook).
    """
    n = normal / np.linalg.norm(normal)
    v = np.asarray(verts, float)
    # orient counter-clockwise about n
    area = 0.5 * sum(np.cross(v[k], v[(k + 1) % len(v)]) for k in range(len(v)))
    if np.dot(area, n) < 0:
        v = v[::-1]
    t = (np.arange(n_sub) + 0.5) / n_sub
    a, b = v, np.roll(v, -1, axis=0)
    mid = (a[:, None, :] + t[None, :, None] * (b - a)[:, None, :]).reshape(-1, 3)
    dl = np.repeat((b - a) / n_sub, n_sub, axis=0)
    d = points[:, None, :] - mid[None]
    cr = np.cross(dl[None], d)
    return np.einsum("pqk,k->p", cr / np.linalg.norm(d, axis=2)[..., None] ** 3, n)


def double_loop_shift(points, verts, normal, J, h=JB_SEPARATION_A):
    """Δδ_rc (ppm) of a diatropic J split over loops at ±h (Johnson & Bovey, J. Chem. Phys. 1958, 29, 1012).

    Diatropic = clockwise about n, so b·n = −ccw; σ_iso = −(1/3) J (b·n) (μ0/4π); Δδ = −σ.
    """
    n = normal / np.linalg.norm(normal)
    g = 0.5 * (ccw_field_n(points, verts + h * n, n) + ccw_field_n(points, verts - h * n, n))
    sigma = (1 / 3) * J * g * MU0_PPM_A_PER_NA_T / (4 * np.pi)
    return -sigma


def polygon_axis_field(z, R, nsides):
    """(4π/μ0 I) B_z on the axis of a regular n-gon of circumradius R (Biot–Savart, textbook result):
    n R² sin(2π/n) / ((z² + R² cos²(π/n)) √(z² + R²)); reduces to 2π/R at z = 0 for n → ∞."""
    return nsides * R**2 * np.sin(2 * np.pi / nsides) / ((z**2 + (R * np.cos(np.pi / nsides)) ** 2) *
                                                          np.sqrt(z**2 + R**2))


# -------------------------------------------------------------------------------------- spectrum
def test_spectrum_figure_with_comparison(comparison):
    fig = F.spectrum_figure(comparison)
    assert len(fig.axes) == 1
    ax = fig.axes[0]
    lo, hi = ax.get_xlim()
    assert lo > hi  # ppm decreases to the right (NMR convention; common practice, no source)
    t = texts(fig)
    comp = comparison.comparison
    for ga in comp.assignment:
        assert ga.label in t
        # each fitted position is joined to its assigned peak by a segment (fitted → observed)
        joins = [ln for ln in ax.lines if len(ln.get_xdata()) == 2 and
                 np.allclose(ln.get_xdata(), [ga.predicted_ppm, ga.observed_ppm])]
        assert joins, ga.label
    assert any(s.endswith("unassigned") and s.startswith("5.30") for s in t)
    assert "solvent 7.26" in t and "TMS 0.00" in t
    legend = [x.get_text() for x in fig.legends[0].get_texts()]
    assert any("unassigned" in x for x in legend)


def test_spectrum_figure_draws_observed_trace(naphthalene):
    # invented trace: two Lorentzians, the taller (4 H, 1 Hz) at 7.84 ppm
    peaks = [Peak(7.84, 4.0), Peak(7.47, 2.0)]
    spec = simulate_spectrum(peaks, observe_mhz=400.0, linewidth_hz=1.0, points=16384, sw_ppm=(-1, 11),
                             noise=1e-3, seed=3)
    pl = PeakList(tuple(peaks), "invented.jdx", spectrum=spec, observe_mhz=400.0)
    fig = F.spectrum_figure(naphthalene, pl)
    trace = fig.axes[0].lines[0]
    x, y = np.asarray(trace.get_xdata()), np.asarray(trace.get_ydata())
    assert_allclose(y.max(), 1.0)  # normalised to the tallest point in view
    # the apex sits at the tallest line's shift within one sampling step (12 ppm / 16383 points)
    assert abs(x[np.argmax(y)] - 7.84) <= 12 / 16383 + 1e-9
    assert fig.axes[0].get_xlim()[0] > fig.axes[0].get_xlim()[1]


def test_spectrum_figure_prediction_only_sticks(naphthalene):
    fig = F.spectrum_figure(naphthalene)
    ax = fig.axes[0]
    assert ax.get_xlim()[0] > ax.get_xlim()[1]
    assert [g.label for g in naphthalene.groups] == [s for s in texts(fig) if s.startswith("H")]
    assert [t.get_text() for t in ax.get_yticklabels()] == ["predicted"]


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-20, 20), min_size=1, max_size=15), st.floats(0.05, 2.0))
def test_spread_positions_keeps_gap_and_order(xs, gap):
    out = F.spread_positions(xs, gap)
    order = np.argsort(xs, kind="stable")
    s = out[order]
    assert np.all(np.diff(s) >= gap - 1e-9)  # common practice, no source: labels at least one gap apart
    # clusters are spread about their mean: the mean position is unchanged
    assert_allclose(out.mean(), np.mean(xs), atol=1e-9)


# --------------------------------------------------------------------------------- contributions
def test_contributions_figure_with_fit(comparison):
    fig = F.contributions_figure(comparison)
    assert len(fig.axes) == 2
    for ax in fig.axes:
        lo, hi = ax.get_xlim()
        assert lo > hi
    comp = comparison.comparison
    labels = [t.get_text() for t in fig.axes[0].get_yticklabels()]
    assert labels == [f"{ga.label} ({ga.n_h} H)" for ga in comp.assignment]
    # right axes: fitted bars carry the fitted Δδ_rc; error bars are ±1.96 sd, the 95 % two-sided
    # normal quantile (checked against SciPy)
    fitted = [p for p in fig.axes[1].patches if p.get_facecolor()[:3] != (1.0, 1.0, 1.0)]
    assert_allclose(sorted(p.get_width() for p in fitted), sorted(ga.ring_current_ppm for ga in comp.assignment),
                    rtol=1e-12)
    rows = F.contribution_rows(comparison)
    z = stats.norm.ppf(0.975)
    assert_allclose([r["interval_ppm"] for r in rows], [z * ga.ring_current_sd_ppm for ga in comp.assignment],
                    rtol=2e-3)  # 1.96 vs 1.95996: rounding of the quantile
    # the build-up adds up: base + ring current = the comparer's predicted shift
    assert_allclose([r["base_ppm"] + r["ring_current_ppm"] for r in rows], [ga.predicted_ppm for ga in comp.assignment],
                    atol=1e-9)


def test_contributions_figure_prediction_only(naphthalene):
    fig = F.contributions_figure(naphthalene)
    assert len(fig.axes) == 2
    bars = fig.axes[1].patches
    assert_allclose(sorted(p.get_width() for p in bars), sorted(g.ring_current_ppm for g in naphthalene.groups))
    assert fig.axes[1].get_title(loc="left") == "Ring-current part"


def test_contributions_figure_no_hydrogens():
    pred = predict(load_structure("ClC1=C(Cl)C(Cl)=C(Cl)C(Cl)=C1Cl"))
    with pytest.raises(InputError, match="no hydrogens"):
        F.contributions_figure(pred)


# ---------------------------------------------------------------------------------------- levels
def test_levels_figure_benzene_textbook():
    summary = pi_summary(load_structure("c1ccccc1"), beta_model="uniform")
    # Hückel benzene: x = −2, −1, −1, +1, +1, +2 (α ± 2β, α ± β; any Hückel textbook, from memory)
    assert_allclose(summary["levels"]["energies_beta"], [-2, -1, -1, 1, 1, 2], atol=1e-4)
    fig = F.levels_figure(summary)
    ax = fig.axes[0]
    levels = [ln for ln in ax.lines if len(ln.get_ydata()) == 2 and ln.get_ydata()[0] == ln.get_ydata()[1]
              and ln.get_linewidth() == 1.6]
    assert len(levels) == 6
    at_minus1 = sorted(np.mean(ln.get_xdata()) for ln in levels if abs(ln.get_ydata()[0] + 1) < 1e-3)
    assert len(at_minus1) == 2 and at_minus1[1] - at_minus1[0] > 0.5  # degenerate pair side by side
    t = [x for x in ax.texts]
    arrows = [x for x in t if x.get_text() in ("\u2191", "\u2193")]
    assert len(arrows) == 6  # six π electrons
    homo = [x for x in t if x.get_text() == "HOMO"]
    lumo = [x for x in t if x.get_text() == "LUMO"]
    assert len(homo) == 1 and abs(homo[0].get_position()[1] + 1) < 1e-3
    assert len(lumo) == 1 and abs(lumo[0].get_position()[1] - 1) < 1e-3


def test_save_levels_figure_atomic(tmp_path):
    summary = pi_summary(load_structure("c1ccccc1"), beta_model="uniform")
    p = F.save_levels_figure(summary, tmp_path / "levels.png")
    assert p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification)
    with pytest.raises(OutputError, match="already exists"):
        F.save_levels_figure(summary, tmp_path / "levels.png")
    F.save_levels_figure(summary, tmp_path / "levels.png", force=True)
    assert [x.name for x in tmp_path.iterdir()] == ["levels.png"]  # no temporary left behind
    with pytest.raises(InputError, match="no pi levels"):
        F.levels_figure({"levels": None})


@pytest.mark.parametrize("ext, head", [(".png", b"\x89PNG"), (".svg", b"<?xml"), (".pdf", b"%PDF")],
                         ids=["png", "svg", "pdf"])
def test_save_figure_formats(tmp_path, naphthalene, ext, head):
    fig = F.contributions_figure(naphthalene)
    p = F.save_figure(fig, tmp_path / f"c{ext}")
    data = p.read_bytes()
    assert data.startswith(head)  # file signatures (PNG, SVG/XML, PDF specifications)
    if ext == ".svg":
        assert b"<text" in data  # svg.fonttype 'none' keeps text as text


def test_save_figure_bad_extension(tmp_path, naphthalene):
    with pytest.raises(InputError, match=r"\.png, \.svg or \.pdf"):
        F.save_figure(F.contributions_figure(naphthalene), tmp_path / "c.jpg")


# ------------------------------------------------------------------------------------------- maps
def test_normal_scan_matches_polygon_axis_formula(hexagon):
    sc = M.normal_scan(hexagon, z_max_A=4.0, n_points=41)
    h = JB_SEPARATION_A
    g = 0.5 * (polygon_axis_field(sc.z_A - h, R_CC, 6) + polygon_axis_field(sc.z_A + h, R_CC, 6))
    expect = -(1 / 3) * 12.0 * g * MU0_PPM_A_PER_NA_T / (4 * np.pi)
    # exact geometry, exact formula: agreement to rounding of the XYZ coordinates (1e-10 Å)
    assert_allclose(sc.shift_ppm, expect, rtol=1e-7)
    # upfield everywhere above a diatropic ring, weakening with height (textbook ring-current picture)
    assert np.all(sc.shift_ppm < 0) and np.all(np.diff(sc.shift_ppm[5:]) > 0)


def test_normal_scan_figure(hexagon):
    fig = M.normal_scan_figure(hexagon)
    ax = fig.axes[0]
    assert len(fig.axes) == 1
    assert ax.get_xlim() == (0.0, 4.0)
    iso = ax.lines[1]
    assert_allclose(ax.lines[2].get_ydata(), 3 * np.asarray(iso.get_ydata()))  # zz = 3 × iso for a planar loop
    assert any("at 1 Å" in t for t in texts(fig))


@pytest.mark.parametrize("plane, height", [("ring", 0.0), ("ring", 1.0), ("perpendicular", 0.0)],
                         ids=["ring-plane", "ring+1A", "perpendicular"])
def test_shielding_map_matches_biot_savart(hexagon, plane, height):
    m = M.shielding_map(hexagon, plane=plane, height_A=height, extent_A=4.0, grid=41)
    fr = m.frame
    rng = np.random.default_rng(7)
    ii = rng.integers(0, 41, size=(40, 2))
    second = fr.v if plane == "ring" else fr.n
    pts = np.array([fr.centre + m.axis_A[i] * fr.u + m.axis_A[j] * second + (height * fr.n if plane == "ring" else 0)
                    for j, i in ii])
    got = m.shift_ppm[ii[:, 0], ii[:, 1]]
    verts = np.array([[R_CC * math.cos(a), R_CC * math.sin(a), 0.0] for a in np.arange(6) * np.pi / 3])
    ok = np.isfinite(got)
    expect = double_loop_shift(pts[ok], verts, np.array([0, 0, 1.0]), 12.0)
    # midpoint rule with 400 steps per edge, points ≥ 0.3 Å from wires: relative error < 1e-4
    assert_allclose(got[ok], expect, rtol=1e-4, atol=1e-6)
    if plane == "ring":
        assert_allclose(abs(fr.n[2]), 1.0)


def test_shielding_map_masks_near_wires(hexagon):
    # the plane through the upper loop (z = +0.64 Å) contains a wire: points within 0.3 Å are blank
    m = M.shielding_map(hexagon, plane="ring", height_A=JB_SEPARATION_A, extent_A=3.0, grid=61)
    fr = m.frame
    a, b = np.meshgrid(m.axis_A, m.axis_A)
    p2 = np.stack([a.ravel(), b.ravel()], axis=1)
    verts3 = np.array([[R_CC * math.cos(t), R_CC * math.sin(t), 0.0] for t in np.arange(6) * np.pi / 3])
    v2 = np.column_stack([(verts3 - fr.centre) @ fr.u, (verts3 - fr.centre) @ fr.v])
    d = np.full(len(p2), np.inf)
    for k in range(6):  # plane point-to-segment distance (elementary geometry)
        s, e = v2[k], v2[(k + 1) % 6]
        t = np.clip(((p2 - s) @ (e - s)) / ((e - s) @ (e - s)), 0, 1)
        d = np.minimum(d, np.linalg.norm(p2 - (s + t[:, None] * (e - s)), axis=1))
    nan = ~np.isfinite(m.shift_ppm.ravel())
    clear = np.abs(d - M.WIRE_MASK_A) > 1e-6
    assert np.array_equal(nan[clear], (d < M.WIRE_MASK_A)[clear])
    assert nan.sum() > 0


def test_shielding_map_figure_structure(hexagon):
    fig = M.shielding_map_figure(hexagon, plane="both", extent_A=5.0, grid=61)
    assert len(fig.axes) == 3  # ring plane, perpendicular plane, colour bar
    for ax in fig.axes[:2]:
        sets = [c for c in ax.collections if isinstance(c, ContourSet)]
        assert len(sets) == 2  # filled bands + labelled lines
        lv = np.asarray(sets[1].levels)
        # the fixed default scale: a symmetric 1-2-5 ladder with a zero contour, topped at ±10 ppm
        # (common practice, no source)
        assert_allclose(lv, -lv[::-1])
        assert 0.0 in lv and lv.max() == M.DEFAULT_CONTOUR_MAX_PPM
        mags = lv[lv > 0]
        assert all(any(math.isclose(x, d * 10.0**k) for d in (1, 2, 5) for k in range(-1, 3)) for x in mags)
        labels = [t.get_text().replace("\u2212", "-") for t in ax.texts]
        assert labels and all(float(s) in set(lv) for s in labels)
        assert ax.get_aspect() == 1.0
    assert fig.axes[0].get_xlabel() == "in-plane axis u (Å)"
    assert fig.axes[1].get_ylabel() == "along the ring normal n (Å)"
    assert "fixed scale ±10 ppm" in fig.axes[2].get_ylabel()  # the scale is stated on the colour bar


def test_map_colour_scale_is_shared_between_compounds(hexagon, naphthalene):
    def bands(fig):
        return np.asarray([c for c in fig.axes[0].collections if isinstance(c, ContourSet)][0].levels)

    a = M.shielding_map_figure(hexagon, plane="ring", grid=41)
    b = M.shielding_map_figure(naphthalene, plane="ring", grid=41)
    assert_allclose(bands(a), bands(b))  # same colours mean the same ppm, whatever the compound
    c = M.shielding_map_figure(naphthalene, plane="ring", grid=41, contour_max_ppm=3.0)
    lv = bands(c)
    assert lv.max() == 3.0 and lv.min() == -3.0 and "±3 ppm" in c.axes[-1].get_ylabel()
    with pytest.raises(InputError, match="contour_max_ppm"):
        M.contour_levels(-1.0)


def test_map_texts_inside_the_figure(comparison):
    # titles and labels must not be cut off at the figure edge, even with several circuits
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    for fig in (M.shielding_map_figure(comparison, grid=41), M.shielding_map_figure(comparison, plane="ring", grid=41),
                M.normal_scan_figure(comparison)):
        renderer = FigureCanvasAgg(fig).get_renderer()
        fig.draw_without_rendering()
        # everything drawn (titles, tick labels, legends, colour bar label) lies on the canvas: 0.01 in slack
        bb = fig.get_tightbbox(renderer)
        w, h = fig.get_size_inches()
        assert bb.x0 >= -0.01 and bb.y0 >= -0.01 and bb.x1 <= w + 0.01 and bb.y1 <= h + 0.01, (bb, w, h)


def test_map_of_molecule_without_rings(hexane):
    with pytest.raises(InputError, match="no conjugated ring"):
        M.shielding_map_figure(hexane)
    with pytest.raises(InputError, match="no conjugated ring"):
        M.normal_scan_figure(hexane)


def test_map_bad_arguments(hexagon):
    with pytest.raises(InputError, match="no circuit labelled 'X9'"):
        M.shielding_map(hexagon, circuit="X9")
    with pytest.raises(InputError, match="plane="):
        M.shielding_map_figure(hexagon, plane="sideways")
    with pytest.raises(InputError, match="grid="):
        M.shielding_map(hexagon, grid=5)


def test_map_uses_fitted_currents(comparison):
    loops, origin = M.loops_of(comparison)
    assert origin == "fitted"
    assert_allclose([lp.current_nA_per_T for lp in loops],
                    [cf.current_nA_per_T for cf in comparison.comparison.circuits])


# ------------------------------------------------------------------------------------ structure/SDF
def test_structure_figure_notes_are_ascii(naphthalene):
    svg = S.structure_figure(naphthalene)
    assert svg.lstrip().startswith("<?xml") and "<svg" in svg
    assert svg.isascii()
    png = S.structure_figure(naphthalene, fmt="png")
    assert png[:4] == b"\x89PNG"
    with pytest.raises(InputError, match="fmt="):
        S.structure_figure(naphthalene, fmt="gif")


def test_sdf_round_trips_through_rdkit(report, comparison):
    out, paths = report
    mol = S.read_sdf(paths["sdf"])  # RDKit SD reader parses atom.dprop lists back into atom properties
    results = json.loads(paths["results"].read_text())
    pred = results["prediction"]
    assert mol.GetNumAtoms() == pred["n_atoms"]
    assert sum(a.GetAtomicNum() == 1 for a in mol.GetAtoms()) == pred["n_hydrogens"]
    s = comparison.prediction.structure
    assert_allclose(mol.GetConformer().GetPositions(), s.coords[S.best_conformer(s)], atol=1e-4)  # 4 decimals
    for p in pred["protons"]:
        atom = mol.GetAtomWithIdx(p["index"])
        assert atom.GetDoubleProp("ring_current_ppm") == p["ring_current_ppm"]
        assert atom.GetDoubleProp("predicted_ppm") == p["predicted_ppm"]
    for ga in results["assignment"]:
        for h in ga["atoms"]:
            atom = mol.GetAtomWithIdx(h)
            assert atom.GetProp("group") == ga["label"]
            assert atom.GetDoubleProp("fitted_ring_current_ppm") == ga["ring_current_ppm"]
            if ga["observed_ppm"] is not None:
                assert atom.GetDoubleProp("observed_ppm") == ga["observed_ppm"]
    assert not mol.GetAtomWithIdx(0).HasProp("ring_current_ppm")  # a carbon has none
    for c in results["circuits"]:
        assert mol.GetDoubleProp(f"ringshift_fitted_current_{c['label']}_nA_per_T") == c["current_nA_per_T"]
    assert Chem.MolToSmiles(Chem.RemoveHs(mol)) == Chem.MolToSmiles(Chem.MolFromSmiles("c1ccc2ccccc2c1"))
