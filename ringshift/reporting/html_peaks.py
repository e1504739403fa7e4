"""Report-page parts about the peak list: the lines at solvent or reference positions, and the assignment
exported as NMReDATA.

Kept apart from :mod:`ringshift.reporting.html` (the page itself) so that each stays small. The table reads
``results.json``'s ``reference_lines`` through the page's cell renderer, so every cell names the JSON value
it shows, as in the rest of the report.
"""

from __future__ import annotations

import html

__all__ = ["NMREDATA_FILE", "reference_lines_html", "nmredata_html"]

#: File name of the NMReDATA export in a report folder (the format's usual ``.nmredata.sdf`` ending).
NMREDATA_FILE = "assignment.nmredata.sdf"

#: Columns of the table: (header, key in a ``reference_lines`` entry, number format).
REFERENCE_LINE_COLUMNS = [("δ (ppm)", ("shift_ppm",), ".3f"), ("integral (H)", ("integral",), ".2f"),
                          ("peak", ("label",), None), ("index", ("index",), None),
                          ("lies at the line of", ("at_line",), None), ("taken as", ("taken_as",), None),
                          ("why", ("reason",), None)]


def reference_lines_html(page, results: dict) -> str:
    """The "Lines at solvent or reference positions" part of the assignment section (empty without such
    lines). ``page`` is the report's cell renderer (``table(src, base, columns)``)."""
    if not results.get("reference_lines"):
        return ""
    return ("<h3 id=\"reference-lines\">Lines at solvent or reference positions</h3>"
            "<p class=\"sub\">Peak-list lines that lie at the residual line of the solvent or at TMS (0.00 ppm), or "
            "that the peak list marks as solvent, reference or impurity. A line at such a position may also be a "
            "line of the sample, so each was decided by the integrals against the molecule's hydrogen count: "
            "“sample” lines were assigned like any other; solvent, tms and impurity lines were not assigned. "
            "Integrals are in protons, scaled so that the sample lines add up to the molecule's hydrogens; "
            "“why” gives the share a line would hold if it were counted with them. "
            "A kind column in the peak list (sample, solvent, tms, impurity) forces the reading.</p>"
            + page.table("results", ("reference_lines",), REFERENCE_LINE_COLUMNS))


def nmredata_html(files, not_written: str | None = None) -> str:
    """A paragraph linking the NMReDATA file of the report folder, or saying why it was not written."""
    if NMREDATA_FILE in files:
        return ('<p class="sub" id="nmredata">The assignment in the open NMReDATA format (an SD file: the structure '
                "with explicit hydrogens, the assigned shifts, integrals and multiplicities): "
                f'<a href="{NMREDATA_FILE}">{NMREDATA_FILE}</a>. It is a ring-current-model estimate, to be '
                "confirmed by 2D NMR or quantum-chemical shift calculation before it is deposited.</p>")
    if not_written:
        return (f'<p class="sub" id="nmredata">{NMREDATA_FILE} (NMReDATA export) was not written: '
                f"{html.escape(not_written)}</p>")
    return ""


def write_nmredata_file(folder, compare_result) -> tuple[str | None, str | None]:
    """Write the NMReDATA export of ``compare_result`` into ``folder`` (a path; the report's temporary folder).

    Returns (file name, None) when written, (None, why not) when the format's mandatory spectrometer
    frequency is unknown, (None, None) without a comparison.
    """
    from pathlib import Path

    from ringshift.errors import InputError
    from ringshift.io.nmredata import nmredata_text

    if compare_result is None:
        return None, None
    try:
        text = nmredata_text(compare_result)
    except InputError as exc:
        return None, exc.bare_message
    (Path(folder) / NMREDATA_FILE).write_text(text, encoding="utf-8")
    return NMREDATA_FILE, None
