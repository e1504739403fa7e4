"""The report's table of peak-list lines at solvent or reference positions, and the NMReDATA file of a report.

The solvent residual position of CDCl3 (7.26 ppm) is from Fulmer et al., Organometallics 2010, 29, 2176
(from memory, as in ringshift.spectra.solvents); which reading wins is ringshift's own integral rule
(common practice, no source), so the tests check that the table shows the decision and its reason exactly
as the comparison made them. Peak lists are invented.
"""

from __future__ import annotations

import html
import json
import re
import warnings

import pytest

from ringshift.io.nmredata import read_nmredata
from ringshift.io.peak_tables import read_peaks
from ringshift.reporting import write_report
from ringshift.reporting.html_peaks import NMREDATA_FILE
from ringshift.spectra.peaks import Peak
from ringshift.spectra.solvents import flag_reference_peaks, reference_line_reasons, resolve_reference_lines


def _cells(page: str, path: str) -> str:
    m = re.search(rf'data-path="{re.escape(path)}">(.*?)</td>', page)
    assert m, path
    return html.unescape(m.group(1).replace("<wbr>", ""))


def test_table_shows_the_cdcl3_line(report):
    out, paths = report
    page = paths["html"].read_text(encoding="utf-8")
    results = json.loads(paths["results"].read_text(encoding="utf-8"))
    lines = results["reference_lines"]
    cdcl3 = [k for k, line in enumerate(lines) if line["at_line"] == "CDCl3 residual (7.26 ppm)"]
    assert len(cdcl3) == 1 and lines[cdcl3[0]]["shift_ppm"] == pytest.approx(7.26)
    k = cdcl3[0]
    assert "Lines at solvent or reference positions" in page
    assert _cells(page, f"/reference_lines/{k}/shift_ppm") == "7.260"
    assert _cells(page, f"/reference_lines/{k}/at_line") == "CDCl3 residual (7.26 ppm)"
    assert _cells(page, f"/reference_lines/{k}/taken_as") == lines[k]["taken_as"] == "solvent"
    assert "whole protons" in _cells(page, f"/reference_lines/{k}/reason")
    # the row and the note of the peak list say the same thing
    assert any(lines[k]["reason"] in note for note in results["peak_warnings"])
    # the peak it points at is the 7.26 ppm peak of the comparison, not assigned
    peak = results["peaks"][lines[k]["index"]]
    assert peak["shift_ppm"] == pytest.approx(7.26) and peak["groups"] == [] and peak["kind"] == "solvent"
    # without a spectrometer frequency the export is not written, and the page says why
    assert not (out / NMREDATA_FILE).exists() and "nmredata" not in paths
    assert "was not written" in page and "observe_mhz" in page


def test_reasons_for_kept_and_given_lines():
    # invented: benzene's 6 H under the CDCl3 position (kept as sample) and an impurity marked in the list
    peaks = flag_reference_peaks([Peak(7.26, integral=6.0), Peak(1.25, integral=0.7, kind="impurity")],
                                 solvent="CDCl3")
    resolved, notes = resolve_reference_lines(peaks, 6)
    reasons = reference_line_reasons(resolved, 6)
    assert reasons[0][0] == "sample" and "whole protons" in reasons[0][1]
    assert reasons[1] == ("impurity", "kind 'impurity' given in the peak list")
    assert any(reasons[0][1] in n for n in notes)
    assert reference_line_reasons(resolved, 6) == reference_line_reasons(peaks, 6)   # idempotent decision


def test_report_folder_contains_and_links_the_nmredata_file(tmp_path):
    from ringshift.api import predict
    from ringshift.comparison.run import run_compare

    csv = tmp_path / "benzene.csv"
    csv.write_text("# observe_mhz = 400.13\nshift_ppm,integral\n7.36,6\n7.26,0.2\n")  # invented
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        pred = predict("c1ccccc1")
        res = run_compare(pred, read_peaks(str(csv), n_hydrogens=6, solvent="CDCl3"))
    paths = write_report(tmp_path / "rep", pred, compare_result=res)
    assert paths["nmredata"] == tmp_path / "rep" / NMREDATA_FILE and paths["nmredata"].is_file()
    page = paths["html"].read_text(encoding="utf-8")
    assert f'<a href="{NMREDATA_FILE}">' in page and "was not written" not in page
    record = read_nmredata(paths["nmredata"])
    assert record.solvent == "CDCl3" and record.larmor_mhz == pytest.approx(400.13)
    assert [a.atoms for a in record.assignments] == [tuple(pred.groups[0].atoms)]
