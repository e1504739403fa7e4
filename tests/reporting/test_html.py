"""Tests of the HTML report: its tables equal the JSON, typography, self-containment, writing, and how it
renders in headless Chromium (on screen at 1400 px and narrow, and in print).
"""

from __future__ import annotations

import html as html_lib
import json
import re
import subprocess
import tempfile
from html.parser import HTMLParser
from pathlib import Path

import pytest

from ringshift.errors import InputError, OutputError
from ringshift.io.structures import load_structure
from ringshift.reporting import html as H
from ringshift.reporting import sdf as S
from ringshift.reporting import write_report
from ringshift.reporting.html_text import ascii_form
from ringshift.reporting.json import CAUTION, comparison_to_dict, prediction_to_dict
from ringshift.shifts.prediction import predict


class Cells(HTMLParser):
    """Collects table cells (with their data-src/data-path) and a few tag facts."""

    def __init__(self):
        super().__init__()
        self.cells, self.tags, self.attrs_seen = [], [], []
        self._cur = None
        self.tables = 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        self.attrs_seen.extend(attrs)
        if tag == "table":
            self.tables += 1
        if tag in ("td", "th"):
            self._cur = [tag, a, ""]

    def handle_data(self, data):
        if self._cur is not None:
            self._cur[2] += data

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cur is not None:
            self.cells.append(tuple(self._cur))
            self._cur = None


_NUM = re.compile(r"^[+-]?\d+(\.\d+)?$")


def flat(v):
    if isinstance(v, list):
        return [x for y in v for x in flat(y)]
    return [v]


def check_cell(text: str, value, shown: str | None = None):
    """Displayed text against the JSON value: numbers within half a unit of the last shown digit and never a
    signed zero; text equal up to the report's symbols (±, ×, Å, °, α, β, Hückel); paths by their file name."""
    if value is None:
        assert text == "–"
        return
    if isinstance(value, bool):
        assert text == ("yes" if value else "no")
        return
    if isinstance(value, list):
        vals = flat(value)
        toks = text.split() if vals else ["–"]
        assert len(toks) == max(len(vals), 1), (text, value)
        for t, v in zip(toks, vals):
            check_cell(t, v)
        return
    if isinstance(value, (int, float)):
        assert _NUM.match(text), text
        assert not re.match(r"^-0(\.0+)?$", text), text  # no "-0.00"
        dec = len(text.split(".")[1]) if "." in text else 0
        assert abs(float(text) - value) <= 0.5 * 10.0**-dec + 1e-12, (text, value)
        return
    if shown == "file name":
        assert text == re.split(r"[\\/]", value)[-1] and "/" not in text, (text, value)
        return
    assert ascii_form(text).lower() == ascii_form(str(value)).lower(), (text, value)


def test_report_tables_equal_json(report):
    out, paths = report
    page = paths["html"].read_text(encoding="utf-8")
    roots = {"results": json.loads(paths["results"].read_text()), "pi": json.loads(paths["pi"].read_text())}
    parser = Cells()
    parser.feed(page)
    checked = 0
    for tag, attrs, text in parser.cells:
        text = text.strip()
        if "data-path" in attrs:
            check_cell(text, H.resolve_pointer(roots[attrs["data-src"]], attrs["data-path"]), attrs.get("data-shown"))
            checked += 1
        elif tag == "td":
            # a number in a data cell must name its JSON source
            assert not _NUM.match(text) and not all(_NUM.match(t) for t in text.split() or ["x"]), text
    assert checked > 150
    assert parser.tables >= 8
    # the fitted current, verdict and caution are visible
    fit = roots["results"]["circuits"][0]["current_nA_per_T"]
    assert f"{fit:+.2f}" in page
    assert "The spectrum says: " + roots["results"]["verdict"] in page
    assert CAUTION in page


def test_results_json_is_comparison_dict(report, comparison):
    out, paths = report
    expect = json.loads(json.dumps(comparison_to_dict(comparison)))
    assert json.loads(paths["results"].read_text()) == expect


class Visible(HTMLParser):
    """Text a reader sees: everything outside <style> (inline SVG text included), plus the <th> texts."""

    def __init__(self):
        super().__init__()
        self.parts, self.th, self._skip, self._th = [], [], 0, None

    def handle_starttag(self, tag, attrs):
        self._skip += tag == "style"
        if tag == "th":
            self._th = ""

    def handle_endtag(self, tag):
        self._skip -= tag == "style"
        if tag == "th" and self._th is not None:
            self.th.append(self._th.strip())
            self._th = None

    def handle_data(self, data):
        if not self._skip:
            self.parts.append(data)
            if self._th is not None:
                self._th += data


def visible(page: str) -> Visible:
    v = Visible()
    v.feed(page)
    return v


@pytest.fixture(scope="module")
def hexagon_report(hexagon, tmp_module):
    paths = write_report(tmp_module / "report_hexagon", hexagon)
    return paths


@pytest.mark.parametrize("which", ["comparison", "file-input"], ids=["comparison", "file-input"])
def test_report_typography(report, hexagon_report, tmp_module, which):
    paths = report[1] if which == "comparison" else hexagon_report
    page = paths["html"].read_text(encoding="utf-8")
    v = visible(page)
    text = " ".join(v.parts)
    # no negative zero anywhere, tables and figure text alike
    assert not re.search(r"(?<![\w.])[-−]0\.0+(?![\d])", text), re.search(r".{30}[-−]0\.0+.{10}", text)
    # one set of symbols: ±, ×, Å, °, β; no ASCII spellings of them
    for bad in (r"\+/-", r"\d A\b", r"\d deg\b", r"\bHueckel\b", r"\d x \d", r"\) x \d", r"\bbeta\b"):
        assert not re.search(bad, text), (bad, re.search(".{30}" + bad + ".{10}", text))
    # no absolute path of this machine: file names only
    assert str(tmp_module) not in page and not re.search(r"(?<![\w.])/(?:tmp|home|root|work|Users)/", page)
    if which == "file-input":
        assert "structure from hexagon.xyz" in text
    # the numbering is stated once, and the level table counts from 0 like the JSON
    assert text.count("counts from 0") == 1
    assert "level (index)" in v.th and "0" in v.th
    # provenance keys are names, not snake_case identifiers
    prov = page[page.index('id="provenance"'):page.index('id="notes"')]
    assert not [t for t in visible(prov).th if "_" in t]
    assert "loop separation from the ring plane, ± (Å)" in visible(prov).th
    # the circuits' "planar" column says what it judges, and how it differs from the π-fragment note
    assert "circuit planar enough" in v.th and "non-planar π fragment" in text


def test_display_helpers():
    from ringshift.reporting import html_text as T

    assert T.number(-0.001, ".2f") == "0.00" and T.number(-0.001, "+.2f") == "+0.00"
    assert T.number(-0.006, "+.2f") == "-0.01"
    assert T.readable("loops at +/-0.64 A, up to 50 deg, huckel-london (scf beta) x 0.8") == \
        "loops at ±0.64 Å, up to 50°, Hückel–London (scf β) × 0.8"
    assert T.scrub_paths("cannot read /home/someone/data/x.sdf: bad") == "cannot read x.sdf: bad"
    assert T.scrub_paths("SMILES [H]/C1=C/C=C/C=C1\\[H] kept") == "SMILES [H]/C1=C/C=C/C=C1\\[H] kept"
    assert T.looks_like_path("/a/b/c.sdf") and T.looks_like_path("data/c.xyz")
    assert not T.looks_like_path("[H]/C1=C/C=C/C=C1\\[H]") and not T.looks_like_path("C/C=C/C")
    assert T.provenance_label(("structure", "temperature_K")) == "structure: temperature (K)"
    assert T.provenance_label(("new_thing_ppm",)) == "new thing (ppm)"


def test_report_is_self_contained(report):
    out, paths = report
    page = paths["html"].read_text(encoding="utf-8")
    parser = Cells()
    parser.feed(page)
    assert "script" not in parser.tags and "link" not in parser.tags and "img" not in parser.tags
    for name, value in parser.attrs_seen:
        if name in ("href", "xlink:href"):
            # only internal anchors, or images embedded as data URIs (the rasterised map bands)
            assert value.startswith("#") or value.startswith("data:image/png;base64,"), value[:60]
        assert name != "src"
    assert "@import" not in page and not re.search(r"url\((?!#)", page)
    # figures inline: structure + spectrum, contributions, two maps, scan, levels
    assert parser.tags.count("svg") == 7
    ids = re.findall(r'\bid=["\']([^"\']+)["\']', page)
    assert len(ids) == len(set(ids))  # ids stay unique across inlined SVGs
    for key in ("spectrum", "contributions", "map", "map_1A", "normal_scan", "levels"):
        for ext in ("svg", "png"):
            p = paths[f"{key}_{ext}"]
            assert p.is_file() and p.stat().st_size > 1000
    assert paths["structure_png"].read_bytes()[:4] == b"\x89PNG"


def test_report_refuses_existing_folder(report, comparison, tmp_path):
    out, _ = report
    with pytest.raises(OutputError, match="already exists; use force"):
        write_report(out, comparison.prediction, compare_result=comparison)
    target = tmp_path / "rep"
    write_report(target, comparison.prediction)
    (target / "notes.txt").write_text("mine")
    # a file the user added to a report folder is never deleted by --force: refused, naming the file
    with pytest.raises(OutputError, match="holds notes.txt, not written by ringshift"):
        write_report(target, comparison.prediction, force=True)
    assert (target / "notes.txt").read_text() == "mine"
    (target / "notes.txt").unlink()
    paths = write_report(target, comparison.prediction, force=True)
    assert paths["html"].is_file()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rep"]  # no temporary or old folders left


@pytest.mark.parametrize("where", ["file-parent", "missing-parent", "proc"], ids=["file-parent", "missing", "proc"])
def test_report_unwritable_path(naphthalene, tmp_path, where):
    if where == "file-parent":
        (tmp_path / "plain").write_text("x")
        target = tmp_path / "plain" / "rep"
    elif where == "missing-parent":
        target = tmp_path / "no" / "such" / "rep"
    else:
        target = Path("/proc/ringshift-report-test")
    with pytest.raises(OutputError) as err:
        write_report(target, naphthalene)
    msg = str(err.value)
    assert "\n" not in msg and str(target) in msg


def test_report_failure_leaves_nothing(naphthalene, tmp_path, monkeypatch):
    def boom(*a, **k):
        raise RuntimeError("simulated failure")

    monkeypatch.setattr(S, "structure_sdf", boom)
    with pytest.raises(RuntimeError, match="simulated"):
        write_report(tmp_path / "rep", naphthalene)
    assert list(tmp_path.iterdir()) == []


def test_report_without_rings(hexane, tmp_path):
    paths = write_report(tmp_path / "rep", hexane)
    results = json.loads(paths["results"].read_text())
    assert results == json.loads(json.dumps(prediction_to_dict(hexane)))
    assert results["circuits"] == []
    page = paths["html"].read_text(encoding="utf-8")
    assert "not drawn (no conjugated ring" in page
    assert "map_svg" not in paths and "spectrum_svg" in paths
    mol = S.read_sdf(paths["sdf"])
    assert mol.GetNumAtoms() == 20


def test_report_rejects_foreign_comparison(comparison):
    other = predict(load_structure("c1ccc2ccccc2c1"))
    with pytest.raises(InputError, match="different prediction"):
        write_report(Path(tempfile.gettempdir()) / "never-written", other, compare_result=comparison)


CHROMIUM = Path("/usr/bin/chromium")
#: Injected into a copy of the page (the report itself has no scripts): for every table and figure, is it wider
#: than its own box, does its box scroll, or does it stick out of the page's content column? The result is written
#: into the DOM, which --dump-dom prints.
OVERFLOW_PROBE = """<script>(function(){var out=[];var main=document.querySelector('main');
var ms=getComputedStyle(main);var mr=main.getBoundingClientRect();var right=mr.right-parseFloat(ms.paddingRight)+0.5;
document.querySelectorAll('table, figure svg').forEach(function(t){
var box=t.parentElement;var r=t.getBoundingClientRect();
out.push({what:t.tagName+' in #'+((t.closest('section')||{}).id||''),width:r.width,box:box.clientWidth,
over:r.width>box.clientWidth+0.5||r.right>right||box.scrollWidth>box.clientWidth+0.5});});
var pre=document.createElement('pre');pre.id='rs-probe';pre.textContent=JSON.stringify(out);
document.body.appendChild(pre);})();</script>"""


def chromium(args, tmp_path):
    cmd = [str(CHROMIUM), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           f"--user-data-dir={tmp_path / 'profile'}", *args]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)


def overflowing(page: Path, width_px: int, tmp_path, *, print_rules=False, extra_css=""):
    """Tables and figures that do not fit their box when the page is laid out ``width_px`` wide.

    ``print_rules`` applies the page's @media print rules on screen (Chromium cannot measure in print
    preview), so a width of the printable A4 column checks the print layout.
    """
    text = page.read_text(encoding="utf-8")
    if print_rules:
        text = text.replace("@media print{", "@media all{")
    text = text.replace("</style>", extra_css + "</style>").replace("</body>", OVERFLOW_PROBE + "</body>")
    probe = page.with_name(f"probe-{width_px}-{int(print_rules)}-{len(extra_css)}.html")
    probe.write_text(text, encoding="utf-8")
    try:
        r = chromium([f"--window-size={width_px},1200", "--virtual-time-budget=5000", "--dump-dom", probe.as_uri()],
                     tmp_path)
    finally:
        probe.unlink()
    m = re.search(r'<pre id="rs-probe">(.*?)</pre>', r.stdout, re.S)
    assert m, f"Chromium returned no probe result: {r.stderr[-300:]}"
    found = json.loads(html_lib.unescape(m.group(1)))
    assert len(found) >= 10  # every table and figure was measured
    return [x for x in found if x["over"]]


#: A4 (210 mm) less the 12 mm side margins of the report's @page rule, in CSS pixels (96 per inch).
A4_COLUMN_PX = round((210 - 2 * 12) / 25.4 * 96)


@pytest.mark.skipif(not CHROMIUM.exists(), reason="headless Chromium not installed at /usr/bin/chromium (make browser)")
def test_report_renders_in_headless_chromium(report, tmp_path):
    import matplotlib.image as mpimg

    out, paths = report
    page = paths["html"]
    shot = tmp_path / "shot-1400.png"
    chromium([f"--screenshot={shot}", "--window-size=1400,2400", page.resolve().as_uri()], tmp_path)
    assert shot.is_file(), "Chromium wrote no screenshot"
    img = mpimg.imread(str(shot))
    assert img.shape[1] == 1400
    # a blank page has std 0; text, tables and figures give a clearly non-zero spread (common practice, no source)
    assert img[..., :3].std() > 0.05
    # at 1400 px and at a narrow 800 px window no table or figure is wider than its box (nothing clipped, no
    # scroll bar); printed on A4 the same holds for the printable column
    assert overflowing(page, 1400, tmp_path) == []
    assert overflowing(page, 800, tmp_path) == []
    assert overflowing(page, A4_COLUMN_PX, tmp_path, print_rules=True) == []
    # the probe is not blind: a table forced wider than the column is reported
    forced = overflowing(page, 1400, tmp_path, extra_css="table{min-width:1600px}")
    assert forced and all(x["what"].startswith("TABLE") for x in forced)
    # print preview: Chromium's PDF of the page, A4
    pdf = tmp_path / "report.pdf"
    chromium(["--no-pdf-header-footer", f"--print-to-pdf={pdf}", page.resolve().as_uri()], tmp_path)
    data = pdf.read_bytes()
    assert data.startswith(b"%PDF")  # PDF file signature (PDF specification)
    boxes = re.findall(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)
    # A4 is 595.3 × 841.9 pt (ISO 216); several pages, all A4 portrait
    assert len(boxes) >= 3 and all(abs(float(w) - 595.3) < 1.5 and abs(float(h) - 841.9) < 1.5 for w, h in boxes)
