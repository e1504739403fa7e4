"""Property-based tests (Hypothesis): readers never fail with anything but InputError and never return a
non-finite number; geometry kernels are finite and invariant under rigid motions.

Inputs are random text, random bytes, structured near-valid tables and random mutations of the
valid, invented test files in ``tests/data/peaks``. Runtime is kept modest (≤ 150 examples each).
"""

from __future__ import annotations

import math
import tempfile
import warnings
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.spatial.transform import Rotation

from ringshift.errors import InputError
from ringshift.fields.polygon import polygon_shielding
from ringshift.geometry.circuits import circuit_geometry
from ringshift.io import jcampdx, jcampdx_codec
from ringshift.io.peak_tables import parse_peak_table_csv, read_peaks
from ringshift.io.structures import load_structure
from ringshift.spectra.peaks import SHIFT_RANGE_PPM, PeakList

DATA = Path(__file__).resolve().parents[1] / "data" / "peaks"
SEEDS_CSV = [p.read_text(encoding="utf-8") for p in sorted(DATA.glob("*.csv")) + sorted(DATA.glob("*.tsv"))]
SEEDS_JDX = [p.read_text(encoding="utf-8") for p in sorted(DATA.glob("*.jdx"))]
FAST = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
MEDIUM = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


# ------------------------------------------------------------------------------------ strategies
_CHUNKS = ["\n", "\r\n", ",", ";", "\t", " ", "#", "##", "=", "-", "+", ".", "e", "E", "nan", "inf", "1e400",
           "7.26", "7,26", "-0", "$$", "(", ")", "\ufeff", "\u2212", "–", "?", "@", "A", "J", "S", "%", "j",
           "##TITLE=x", "##END=", "##XYDATA=(X++(Y..Y))", "##PEAK TABLE=(XY..XY)", "##NPOINTS=", "##XUNITS=PPM",
           "##FIRSTX=", "##LASTX=", "##YFACTOR=", "##XFACTOR=", "##.OBSERVE FREQUENCY=", "##YUNITS=INTEGRAL",
           "##.SHIFT REFERENCE=(INTERNAL, TMS, 1, 0.0)", "##NTUPLES=", "shift_ppm", "ppm", "integral", "nH",
           "width_hz", "atoms", "kind", "solvent", "label", "mult", "height", "# observe_mhz = 400", "0", "1",
           "99999999999999999999", "1e-320", "\x00", "\xff", "δ"]


def mutate(text: str, data) -> str:
    """Random edits: delete or duplicate a slice, insert chunks, replace characters, swap lines."""
    for _ in range(data.draw(st.integers(1, 6), label="n_edits")):
        op = data.draw(st.sampled_from(["delete", "insert", "replace", "duplicate", "swap"]), label="op")
        n = len(text)
        i = data.draw(st.integers(0, n), label="at")
        j = data.draw(st.integers(i, min(n, i + 40)), label="to")
        if op == "delete":
            text = text[:i] + text[j:]
        elif op == "insert":
            text = text[:i] + data.draw(st.sampled_from(_CHUNKS) | st.text(max_size=8), label="ins") + text[i:]
        elif op == "replace":
            text = text[:i] + data.draw(st.text(max_size=max(1, j - i)), label="rep") + text[j:]
        elif op == "duplicate":
            text = text[:j] + text[i:j] * data.draw(st.integers(1, 4), label="times") + text[j:]
        else:
            lines = text.split("\n")
            if len(lines) > 1:
                a = data.draw(st.integers(0, len(lines) - 1), label="a")
                b = data.draw(st.integers(0, len(lines) - 1), label="b")
                lines[a], lines[b] = lines[b], lines[a]
                text = "\n".join(lines)
    return text


chunky_text = st.lists(st.sampled_from(_CHUNKS) | st.text(max_size=6), max_size=60).map("".join)

_junk = st.sampled_from(["", " ", "7,26", "7.30–7.25", "abc", "s", "dd", "12 13", "12;13", "solvent", "tms",
                         "impurity", "sample", "-1", "1e999", "nan", '"a,b"', "−7.1"])
_cell = st.one_of(st.floats(-19.9, 39.9).map("{:.3f}".format), st.floats(0.05, 12.0).map("{:.2f}".format),
                  st.integers(0, 40).map(str), _junk, st.floats(allow_nan=True, allow_infinity=True).map(repr))
_shift_head = st.sampled_from(["shift_ppm", "ppm", "δ", "delta", "Shift (ppm)", "chemical shift"])
_head = st.sampled_from(["integral", "nH", "width_hz", "width (ppm)", "mult", "label", "atoms", "kind", "height",
                         "junk", ""])


@st.composite
def near_valid_csv(draw) -> str:
    """Mostly well-formed tables (a shift column, rows of the header's length) with some bad cells."""
    sep = draw(st.sampled_from([",", ";", "\t", " ", "  "]))
    cols = [draw(_shift_head)] + draw(st.lists(_head, max_size=4))
    if " " in sep:
        cols = [c.replace(" ", "_") or "x" for c in cols]
    width = len(cols)
    rows = draw(st.lists(st.lists(_cell, min_size=width, max_size=width) | st.lists(_cell, max_size=width + 1),
                         min_size=1, max_size=8))
    eol = draw(st.sampled_from(["\n", "\r\n"]))
    lines = [sep.join(cols)] + [sep.join(r) for r in rows]
    if draw(st.booleans()):
        lines.insert(draw(st.integers(0, len(lines))), draw(st.sampled_from(["", "# note", "# observe_mhz = 400",
                                                                             "# observe_mhz = -1"])))
    return draw(st.sampled_from(["", "\ufeff"])) + eol.join(lines) + eol


_EXTRA_LABELS = ["##YUNITS=INTEGRAL", "##.OBSERVE FREQUENCY=400", "##.OBSERVE FREQUENCY=0", "##XFACTOR=1",
                 "##XFACTOR=0.001", "##YFACTOR=1e300", "##YFACTOR=0.5", "##FIRSTY=1", "##DATA TYPE=NMR SPECTRUM",
                 "##.SHIFT REFERENCE=(INTERNAL, TMS, 2, 0.0)", "##DELTAX=-1", "##.OBSERVE NUCLEUS=^13C",
                 "##PEAK ASSIGNMENTS=(XYA)"]


@st.composite
def near_valid_jcamp(draw) -> str:
    """Mostly well-formed JCAMP-DX (an AFFN/SQZ/DIF spectrum or a peak table), lightly damaged."""
    labels = ["##JCAMP-DX=5.01"] * draw(st.sampled_from([1, 1, 1, 0]))
    labels += [draw(st.sampled_from(["##XUNITS=PPM", "##XUNITS=PPM", "##XUNITS=HZ", "##XUNITS=NM"]))]
    labels += draw(st.lists(st.sampled_from(_EXTRA_LABELS), max_size=4))
    kind = draw(st.sampled_from(["xydata", "xydata", "peaks", "peaksw"]))
    if kind == "xydata":
        y = draw(st.lists(st.integers(-10**6, 10**6), min_size=2, max_size=40))
        form = draw(st.sampled_from(["AFFN", "PAC", "SQZ", "DIF"]))
        n = len(y) + draw(st.sampled_from([0, 0, 0, 1, -1]))
        firstx, lastx = draw(st.sampled_from([(10, 0), (0, 10), (5, 5), (1e308, -1e308), (4000, 0)]))
        x = np.linspace(firstx, lastx, len(y)) if math.isfinite(firstx - lastx) else np.zeros(len(y))
        body = jcampdx_codec.encode_xydata(x, np.array(y), form, width=draw(st.sampled_from([20, 80])))
        head = f"##FIRSTX={firstx}\n##LASTX={lastx}\n##NPOINTS={n}\n##XYDATA=(X++(Y..Y))\n"
    else:
        rows = draw(st.lists(st.tuples(st.floats(-25, 45), st.floats(-1, 20), st.floats(-0.01, 0.05)),
                             max_size=12))
        body = [f"{a:.4f}, {b:.3f}" + (f", {c:.4f}" if kind == "peaksw" else "") for a, b, c in rows]
        head = f"##NPOINTS={len(rows)}\n" * draw(st.booleans())
        head += "##PEAK TABLE=(XY..XY)\n" if kind == "peaks" else "##PEAK TABLE=(XYW..XYW)\n"
    text = "##TITLE=fuzz\n" + "\n".join(labels) + "\n" + head + "\n".join(body) + "\n"
    text += "##END=\n" * draw(st.sampled_from([1, 1, 1, 0]))
    return mutate(text, draw(st.data())) if draw(st.booleans()) else text


# ------------------------------------------------------------------------------------ checkers
def _finite(v) -> bool:
    return v is None or (isinstance(v, float | int) and math.isfinite(v))


def check_peaklist(pl: PeakList) -> None:
    for p in pl.peaks:
        assert math.isfinite(p.shift_ppm) and SHIFT_RANGE_PPM[0] <= p.shift_ppm <= SHIFT_RANGE_PPM[1]
        assert _finite(p.integral) and (p.integral is None or p.integral >= 0)
        assert _finite(p.width_hz) and (p.width_hz is None or p.width_hz > 0)
        assert _finite(p.height)
    assert _finite(pl.observe_mhz)
    if pl.spectrum is not None:
        assert np.all(np.isfinite(pl.spectrum.ppm)) and np.all(np.isfinite(pl.spectrum.intensity))
        assert math.isfinite(pl.spectrum.noise_sigma)


def check_jcamp(d: jcampdx.JcampData) -> None:
    for arr in (d.ppm, d.intensity):
        assert arr is None or np.all(np.isfinite(arr))
    assert all(math.isfinite(v) for v in d.peak_ppm + d.peak_y)
    assert all(_finite(w) for w in d.peak_width_hz)


def only_input_errors(fn, *args, **kwargs):
    """Call ``fn``; InputError is an accepted answer (returns None), anything else fails the test."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            return fn(*args, **kwargs)
        except InputError as exc:
            assert "\n" not in str(exc) and str(exc).strip()      # one line, not empty
            return None


# ------------------------------------------------------------------------------------ peak tables
@FAST
@given(st.one_of(st.text(max_size=400), chunky_text, near_valid_csv()))
def test_csv_parser_random_text(text):
    out = only_input_errors(parse_peak_table_csv, text, source="fuzz.csv")
    if out is not None:
        check_peaklist(out)


@FAST
@given(st.data())
def test_csv_parser_mutated_valid_files(data):
    text = mutate(data.draw(st.sampled_from(SEEDS_CSV), label="seed"), data)
    out = only_input_errors(parse_peak_table_csv, text, source="fuzz.csv")
    if out is not None:
        check_peaklist(out)


@MEDIUM
@given(st.binary(max_size=600), st.sampled_from(["peaks.csv", "peaks.jdx", "peaks.txt"]),
       st.sampled_from([None, 6]))
def test_read_peaks_random_bytes(raw, name, n_h):
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / name
        path.write_bytes(raw)
        out = only_input_errors(read_peaks, path, n_hydrogens=n_h, solvent="CDCl3")
    if out is not None:
        check_peaklist(out)


# ------------------------------------------------------------------------------------ JCAMP-DX
@FAST
@given(st.one_of(st.text(max_size=400), chunky_text, near_valid_jcamp()))
def test_jcamp_parser_random_text(text):
    out = only_input_errors(jcampdx.parse_jcamp_text, text, source="fuzz.jdx")
    if out is not None:
        check_jcamp(out)


@FAST
@given(st.data())
def test_jcamp_parser_mutated_valid_files(data):
    text = mutate(data.draw(st.sampled_from(SEEDS_JDX), label="seed"), data)
    out = only_input_errors(jcampdx.parse_jcamp_text, text, source="fuzz.jdx")
    if out is not None:
        check_jcamp(out)


@MEDIUM
@given(st.data())
def test_read_peaks_mutated_jcamp_with_picking(data):
    # Through read_peaks: JCAMP decoding, peak picking on the decoded spectrum, flags and scaling.
    text = mutate(data.draw(st.sampled_from(SEEDS_JDX), label="seed"), data)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "fuzz.jdx"
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        out = only_input_errors(read_peaks, path, n_hydrogens=data.draw(st.integers(1, 30), label="nH"))
    if out is not None:
        check_peaklist(out)


# ------------------------------------------------------------------------------------ structures
_BENZENE_XYZ = """12
benzene (MMFF94-like geometry, invented for tests)
C 1.3970 0.0000 0.0000
C 0.6985 1.2099 0.0000
C -0.6985 1.2099 0.0000
C -1.3970 0.0000 0.0000
C -0.6985 -1.2099 0.0000
C 0.6985 -1.2099 0.0000
H 2.4810 0.0000 0.0000
H 1.2405 2.1486 0.0000
H -1.2405 2.1486 0.0000
H -2.4810 0.0000 0.0000
H -1.2405 -2.1486 0.0000
H 1.2405 -2.1486 0.0000
"""


@MEDIUM
@given(st.data())
def test_xyz_reader_mutated_benzene(data):
    text = mutate(_BENZENE_XYZ, data)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "fuzz.xyz"
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        s = only_input_errors(load_structure, str(path))
    if s is not None:
        assert np.all(np.isfinite(s.coords)) and np.all(np.isfinite(s.weights))
        assert_allclose(s.weights.sum(), 1.0, rtol=1e-12)   # populations are normalised (by definition)


# ------------------------------------------------------------------------------------ geometry
def _rigid(seed: int) -> tuple[np.ndarray, np.ndarray]:
    rot = Rotation.random(random_state=seed).as_matrix()
    t = np.random.default_rng(seed).uniform(-20.0, 20.0, 3)
    return rot, t


@st.composite
def polygons(draw):
    """A noisy, roughly planar m-gon of radius 0.8–4 Å (vertices in ring order), a normal, and points."""
    m = draw(st.integers(3, 20))
    radius = draw(st.floats(0.8, 4.0))
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    ang = np.sort(rng.uniform(0, 2 * np.pi, m)) if draw(st.booleans()) else np.linspace(0, 2 * np.pi, m,
                                                                                        endpoint=False)
    v = np.column_stack([radius * np.cos(ang), radius * np.sin(ang), rng.normal(0, draw(st.floats(0, 0.3)), m)])
    v += rng.normal(0, 0.05, v.shape)
    pts = rng.uniform(-8, 8, (draw(st.integers(1, 30)), 3))
    if draw(st.booleans()):                     # protons exactly on the wires (vertices ± 0.64 Å)
        pts = np.vstack([pts, v[:2] + [0, 0, 0.64], v[:1] - [0, 0, 0.64]])
    return v, np.array([0.0, 0.0, 1.0]) + rng.normal(0, 0.1, 3), pts


@FAST
@given(polygons(), st.integers(0, 2**31 - 1))
def test_polygon_shielding_finite_and_rigid_motion_invariant(poly, seed):
    v, n, pts = poly
    sigma = only_input_errors(polygon_shielding, pts, v, n)
    assume(sigma is not None)                  # a degenerate polygon may be refused, as InputError
    assert sigma.shape == (pts.shape[0],) and np.all(np.isfinite(sigma))
    rot, t = _rigid(seed)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        moved = polygon_shielding(pts @ rot.T + t, v @ rot.T + t, n @ rot.T)
        flipped = polygon_shielding(pts, v[::-1], -n)
    # A scalar shielding cannot depend on where the molecule sits or how it is turned (textbook
    # identity); flipping the normal and reversing the vertex order describes the same diatropic
    # current (module notes of ringshift.fields.polygon). Tolerance: float64 rounding amplified by 1/r²
    # near the wires, 1e-8 of the largest |σ|.
    scale = max(1.0, float(np.max(np.abs(sigma))))
    assert_allclose(moved, sigma, rtol=0, atol=1e-8 * scale)
    assert_allclose(flipped, sigma, rtol=0, atol=1e-8 * scale)


@FAST
@given(polygons(), st.integers(0, 2**31 - 1))
def test_circuit_geometry_finite_and_rigid_motion_covariant(poly, seed):
    v, _, _ = poly
    atoms = list(range(v.shape[0]))
    geo = only_input_errors(circuit_geometry, v, atoms)
    assume(geo is not None)
    for arr in (geo.centre, geo.normal, geo.radius_A, geo.area_A2, geo.planarity_rms_A, geo.max_misalignment_deg):
        assert np.all(np.isfinite(arr))
    rot, t = _rigid(seed)
    moved = circuit_geometry(v @ rot.T + t, atoms)
    # Centre and normal rotate with the molecule, lengths and areas do not change (textbook
    # identities of rigid motions). 1e-9 Å / 1e-9 rad: SVD plane fit on 3–20 points in float64.
    assert_allclose(moved.centre, geo.centre @ rot.T + t, rtol=0, atol=1e-9)
    assert_allclose(moved.normal, geo.normal @ rot.T, rtol=0, atol=1e-9)
    for name in ("radius_A", "area_A2", "planarity_rms_A"):
        assert_allclose(getattr(moved, name), getattr(geo, name), rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf], ids=["nan", "inf", "-inf"])
def test_kernels_refuse_non_finite(bad):
    v = np.array([[1.0, 0, 0], [0, 1.0, 0], [-1.0, 0, 0], [0, -1.0, 0]])
    pts = np.array([[0.0, 0.0, 1.0], [bad, 0.0, 0.0]])
    with pytest.raises(InputError, match="NaN or inf"):
        polygon_shielding(pts, v, [0, 0, 1])
    v2 = v.copy()
    v2[0, 0] = bad
    with pytest.raises(InputError, match="non-finite"):
        circuit_geometry(v2, [0, 1, 2, 3])
