"""The ringshift report: one self-contained HTML page, plus the figures, JSON and SDF behind it.

:func:`write_report` builds everything in a temporary sibling folder and renames it into place at the
end, so a failure leaves no partial report. The page has no external resources and no scripts:
figures are inline SVG, the style sheet is inline. Every value in its tables is read from the same
dictionaries that are written as ``results.json`` (:func:`ringshift.reporting.json.comparison_to_dict` or
:func:`ringshift.reporting.json.prediction_to_dict`) and ``pi.json``
(:func:`ringshift.reporting.pi_summary.pi_summary`): each table cell carries ``data-src`` (``results``
or ``pi``) and ``data-path`` (a JSON pointer, RFC 6901) naming the value it shows.
"""

from __future__ import annotations

import html
import re
from collections.abc import Sequence
from importlib import metadata
from pathlib import Path

from ringshift.errors import InputError
from ringshift.geometry.circuits import MISALIGNMENT_LIMIT_DEG, PLANARITY_LIMIT_A
from ringshift.reporting.correlations import correlation_section
from ringshift.reporting.html_fit import fit_section_body, verdict_box
from ringshift.reporting.html_peaks import nmredata_html, reference_lines_html, write_nmredata_file
from ringshift.reporting.html_text import (
    CSS,
    file_name,
    looks_like_path,
    number,
    provenance_label,
    readable,
    scrub_paths,
)
from ringshift.reporting.json import prediction_to_dict, to_json

__all__ = ["write_report", "render_html", "json_pointer", "resolve_pointer", "inline_svg", "REPORT_FILES"]

#: Fixed files of a report folder (figures come in addition, as figures/<name>.svg and .png).
REPORT_FILES = {"html": "report.html", "results": "results.json", "pi": "pi.json", "sdf": "structure.sdf"}



# ------------------------------------------------------------------------------------------ pointers
def json_pointer(parts) -> str:
    """RFC 6901 pointer of a key/index path, e.g. ``("groups", 0, "label")`` → ``/groups/0/label``."""
    return "".join("/" + str(p).replace("~", "~0").replace("/", "~1") for p in parts)


def resolve_pointer(doc, pointer: str):
    """Value at an RFC 6901 pointer (list indices as decimal numbers)."""
    cur = doc
    if pointer == "":
        return cur
    for raw in pointer.split("/")[1:]:
        key = raw.replace("~1", "/").replace("~0", "~")
        cur = cur[int(key)] if isinstance(cur, list) else cur[key]
    return cur


def _fmt(value, spec: str | None) -> str:
    """Cell text: "–" for none, yes/no, numbers without a negative zero, text with the report's symbols."""
    if value is None:
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, list):
        return " ".join(_fmt(v, spec) for v in value) or "–"
    if isinstance(value, float) and spec:
        return number(value, spec)
    if isinstance(value, str):
        return file_name(value) if looks_like_path(value) else readable(scrub_paths(value))
    return str(value)


class _Page:
    """Renders cells from the named JSON roots; nothing shown in a table bypasses :meth:`td`."""

    def __init__(self, roots: dict):
        self.roots = roots

    def get(self, src, parts):
        return resolve_pointer(self.roots[src], json_pointer(parts))

    def td(self, src, parts, spec: str | None = ".2f") -> str:
        value = self.get(src, parts)
        numeric = isinstance(value, (int, float)) and not isinstance(value, bool) or (
            isinstance(value, list) and value and all(isinstance(v, (int, float)) for v in value))
        cls = (' class="num list"' if isinstance(value, list) else ' class="num"') if numeric else ""
        shown = ' data-shown="file name"' if isinstance(value, str) and looks_like_path(value) else ""
        text = html.escape(_fmt(value, spec))
        if isinstance(value, str):  # long names (sp2_CH_ring_conjugated) may wrap after an underscore
            text = text.replace("_", "_<wbr>")
        return f'<td{cls}{shown} data-src="{src}" data-path="{html.escape(json_pointer(parts))}">{text}</td>'

    def table(self, src, base, columns) -> str:
        """A table of the list at ``base``; columns are (header, key path tuple, format spec)."""
        rows = self.get(src, base)
        if not rows:
            return '<p class="sub">none</p>'
        head = "".join(f"<th>{html.escape(h)}</th>" for h, _, _ in columns)
        body = []
        for i in range(len(rows)):
            body.append("<tr>" + "".join(self.td(src, (*base, i, *key), spec) for _, key, spec in columns) + "</tr>")
        return f'<div class="wide"><table><thead><tr>{head}</tr></thead><tbody>{"".join(body)}</tbody></table></div>'

    def kv(self, src, items) -> str:
        """Two-column table of (label, key path, spec) items."""
        rows = [f"<tr><th>{html.escape(lab)}</th>{self.td(src, parts, spec)}</tr>" for lab, parts, spec in items]
        return f'<div class="wide"><table><tbody>{"".join(rows)}</tbody></table></div>'


def _flat(d: dict, prefix=()):
    for k, v in d.items():
        if isinstance(v, dict):
            yield from _flat(v, (*prefix, k))
        else:
            yield (*prefix, k), v


# --------------------------------------------------------------------------------------------- SVG
_ID = re.compile(r"""\bid=(["'])([^"']+)\1""")
_REF = re.compile(r"""(url\(#|href=(["'])#)([^)"']+)""")


def inline_svg(svg: str, prefix: str) -> str:
    """SVG text ready to sit inside HTML: no XML prolog, DOCTYPE or metadata; ids prefixed (unique)."""
    s = svg if isinstance(svg, str) else svg.decode("utf-8")
    s = s[s.find("<svg"):]
    s = re.sub(r"<metadata>.*?</metadata>", "", s, flags=re.S)
    s = _ID.sub(lambda m: f"id={m.group(1)}{prefix}-{m.group(2)}{m.group(1)}", s)
    s = _REF.sub(lambda m: f"{m.group(1)}{prefix}-{m.group(3)}", s)
    return s.strip()


# ------------------------------------------------------------------------------------------ render
def _section(anchor, title, body) -> str:
    return f'<section id="{anchor}"><h2>{html.escape(title)}</h2>{body}</section>'


def _circuit_columns(with_model=True):
    cols = [("circuit", ("label",), None), ("kind", ("kind",), None), ("atoms", ("size",), None),
            ("π e", ("pi_electrons",), None), ("class", ("huckel_class",), None),
            ("circuit planar enough", ("planar",), None), ("RMS from its plane (Å)", ("planarity_rms_A",), ".3f"),
            ("p misalign. (°)", ("max_p_misalignment_deg",), ".1f"),
            ("radius (Å)", ("radius_A",), ".3f"), ("J a priori (nA/T)", ("current_nA_per_T",), "+.2f"),
            ("× benzene", ("current_rel_benzene",), "+.3f"), ("current source", ("current_source",), None)]
    return cols


def render_html(results: dict, pi: dict | None, figures: list[tuple[str, str, str, str]], *,
                structure_svg: str | None = None, skipped: Sequence[tuple[str, str]] = (),
                files: Sequence[str] = (), nmredata_note: str | None = None) -> str:
    """The report page.

    Parameters
    ----------
    results : dict
        ``comparison_to_dict(...)`` or ``prediction_to_dict(...)`` (what ``results.json`` holds).
    pi : dict or None
        ``pi_summary(...)`` (what ``pi.json`` holds).
    figures : list of (anchor, title, caption, svg text)
    structure_svg : str, optional
        RDKit drawing.
    skipped : list of (title, reason)
        Figures that could not be drawn.
    files : list of str
        Other files of the report folder, listed at the end.
    nmredata_note : str, optional
        Why the NMReDATA export was not written (shown in place of its link).

    Returns
    -------
    str
        HTML5 text.
    """
    comp = results.get("ringshift_result") == "comparison"
    roots = {"results": results}
    if pi is not None:
        roots["pi"] = pi
    pg = _Page(roots)
    P = ("prediction",) if comp else ()
    pred = pg.get("results", P)
    labels = [c["label"] for c in pred["circuits"]]
    try:
        version = metadata.version("ringshift")
    except metadata.PackageNotFoundError:  # pragma: no cover - running from a source tree
        version = "unknown"
    esc = html.escape
    out = [f'<!DOCTYPE html><html lang="en"><head><meta charset="utf-8">'
           f'<meta name="viewport" content="width=device-width, initial-scale=1">'
           f"<title>ringshift report: {esc(str(results['name']))}</title><style>{CSS}</style></head><body><main>"]
    source = str(pred["source"])
    shown = file_name(source) if looks_like_path(source) else source
    where = "" if source == str(results["name"]) else f" · structure from {esc(shown)}"
    peaks = f" · peaks from {esc(file_name(results['peaks_source']))}" if comp else ""
    out.append(f"<header><h1>Ring-current report</h1><p class=\"sub\">{esc(str(results['name']))}{where} · "
               f"shielding model {esc(str(pred['model']))}{peaks}</p></header>")
    # verdict and caution first: they are what a reader must not miss
    if comp:
        out.append(verdict_box(results))
    else:
        out.append('<div class="verdict"><div class="big">A priori prediction</div>'
                   "<div>No spectrum was compared: the shifts below rest on the model currents alone.</div></div>")
    out.append(f'<div class="caution">Caution: {esc(results["caution"])}</div>')
    nav = [("figures", "Figures"), ("pi", "π system"), ("circuits", "Circuits"), ("groups", "Predicted shifts")]
    if comp:
        nav[3:3] = [("fit", "Fitted currents"), ("assignment", "Assignment")]
    nav += [("provenance", "Model and provenance"), ("notes", "Notes")]
    out.append("<nav>" + "".join(f'<a href="#{a}">{esc(t)}</a>' for a, t in nav) + "</nav>")
    out.append('<p class="numbering"><b>Numbering.</b> Every index in this report (atoms, hydrogen groups, '
               "circuits, peaks and Hückel levels) counts from 0, as in results.json. Labels such as H1, M1 or p1 "
               "are names, not indices: group H1 has index 0.</p>")

    # figures
    figs = []
    if structure_svg:
        figs.append('<figure id="fig-structure">' + inline_svg(structure_svg, "structure") +
                    "<figcaption>Structure with the ring-current shift Δδ_rc (ppm, > 0 downfield) of each hydrogen "
                    "group beside the atom carrying it, written once per group (other atoms carrying the same group "
                    "show its label); highlighted: the current loops, named at their centres.</figcaption></figure>")
    for anchor, title, caption, svg in figures:
        figs.append(f'<figure id="fig-{anchor}"><h3>{esc(title)}</h3>{inline_svg(svg, anchor)}'
                    f"<figcaption>{esc(caption)}</figcaption></figure>")
    for title, reason in skipped:
        figs.append(f'<p class="sub">{esc(title)}: not drawn ({esc(reason)})</p>')
    out.append(_section("figures", "Figures", "".join(figs)))

    # π system
    if pi is not None:
        body = pg.kv("pi", [("π electrons", ("pi_electrons",), None), ("Hückel class", ("huckel_class",), None),
                            ("net charge", ("charge",), None), ("radical", ("radical",), None),
                            ("β model", ("beta_model",), None)])
        if pi.get("levels"):
            body += pg.kv("pi", [("HOMO–LUMO gap (|β|)", ("levels", "homo_lumo_gap_beta"), ".4f"),
                                 ("open shell", ("levels", "open_shell"), None),
                                 ("degenerate HOMO", ("levels", "degenerate_homo"), None),
                                 ("convention", ("levels", "convention"), None)])
            n = len(pi["levels"]["energies_beta"])
            rows = "".join(f"<tr><th>{k}</th>{pg.td('pi', ('levels', 'energies_beta', k), '+.4f')}"
                           f"{pg.td('pi', ('levels', 'occupations', k), '.3f')}</tr>" for k in range(n - 1, -1, -1))
            body += ('<h3>Hückel levels</h3><div class="wide"><table><thead><tr><th>level (index)</th>'
                     f"<th>(E − α)/|β|</th><th>occupation</th></tr></thead><tbody>{rows}</tbody></table></div>")
        out.append(_section("pi", "π system", body))

    # circuits
    body = pg.table("results", (*P, "circuits"), _circuit_columns() + [("note", ("note",), None)])
    body += (f'<p class="def">“Circuit planar enough” is judged on each circuit alone: yes when its atoms lie within '
             f"{PLANARITY_LIMIT_A:g} Å RMS of their own mean plane and the p orbitals of bonded circuit atoms are "
             f"within {MISALIGNMENT_LIMIT_DEG:g}° of each other, so overlap around the circuit is continuous. A note "
             "“non-planar π fragment” (below) is a different test: it measures all π atoms of a fragment against "
             "one plane and reports the largest deviation of any of them.</p>")
    if pred["perimeters"]:
        body += "<h3>Perimeters (descriptive, no loop of their own)</h3>" + pg.table(
            "results", (*P, "perimeters"), _circuit_columns()[:7])
    out.append(_section("circuits", "Circuits and a priori currents", body))

    if comp:
        body = fit_section_body(pg, results)
        out.append(_section("fit", "Fitted currents with 95 % intervals", body))
        cols: list[tuple[str, tuple, str | None]] = [
            ("group", ("label",), None), ("index", ("index",), None), ("nH", ("n_h",), None),
                ("class", ("proton_class",), None), ("peak", ("peak_label",), None),
                ("observed", ("observed_ppm",), ".2f"), ("predicted", ("predicted_ppm",), ".2f"),
                ("± sd", ("predicted_sd_ppm",), ".2f"), ("residual", ("residual_ppm",), "+.2f"),
                ("Δδ_rc fitted", ("ring_current_ppm",), "+.2f"), ("± sd", ("ring_current_sd_ppm",), ".2f")]
        body = "<p class=\"sub\">Shifts in ppm; residual = observed − predicted.</p>" + \
            pg.table("results", ("assignment",), cols)
        body += "<h3>Parts of each fitted prediction</h3>" + pg.table("results", ("assignment",), [
            ("group", ("label",), None), ("reference", ("reference_ppm",), ".2f"),
            ("class offset", ("class_offset_ppm",), "+.2f"), ("charge", ("charge_ppm",), "+.2f"),
            ("Δδ_rc fitted", ("ring_current_ppm",), "+.2f"), ("a priori prediction", ("prior_predicted_ppm",), ".2f"),
            ("fixed", ("fixed",), None), ("reference needed without a current", ("needed_reference_ppm",), ".2f"),
            ("its z", ("needed_reference_z",), "+.1f")])
        body += "<h3>Observed peaks</h3>" + pg.table("results", ("peaks",), [
            ("peak", ("label",), None), ("δ (ppm)", ("shift_ppm",), ".3f"), ("integral", ("integral",), ".3f"),
            ("kind", ("kind",), None), ("slots (H)", ("slots",), None), ("assigned H", ("assigned_h",), None),
            ("groups (index)", ("groups",), None)]) + reference_lines_html(pg, results)
        if results["unassigned_peaks"]:
            body += "<h3>Unassigned peaks</h3>" + pg.table("results", ("unassigned_peaks",), [
                ("peak", ("label",), None), ("δ (ppm)", ("shift_ppm",), ".3f"), ("index", ("index",), None)])
        if results["unassigned_groups"]:
            body += "<h3>Unassigned groups</h3>" + pg.table("results", ("unassigned_groups",), [
                ("group", ("label",), None), ("index", ("index",), None)])
        if results["alternatives"]:
            body += "<h3>Alternative assignments</h3>" + pg.table("results", ("alternatives",), [
                ("log₁₀ BF best : this", ("delta_cost_log10",), ".2f"), ("moves (group, from, to)", ("changes",), None),
                ("currents (nA/T)", ("currents_nA_per_T",), "+.2f"),
                ("verdicts", ("verdicts",), None)])
        out.append(_section("assignment", "Assignment and residuals", body + nmredata_html(files, nmredata_note)))
        out.append(correlation_section(pg, results))

    cols = [("group", ("label",), None), ("index", ("group",), None), ("nH", ("n_h",), None),
            ("H atoms (index)", ("atoms",), None),
            ("class", ("proton_class",), None), ("reference", ("reference_ppm",), ".2f"),
            ("ref. sd", ("reference_sd_ppm",), ".2f")]
    cols += [(f"Δδ_rc {lab}", ("ring_current_by_circuit_ppm", lab), "+.2f") for lab in labels]
    cols += [("Δδ_rc total", ("ring_current_ppm",), "+.2f"), ("charge", ("charge_ppm",), "+.2f"),
             ("conformer spread", ("conformer_spread_ppm",), ".2f"), ("predicted", ("predicted_ppm",), ".2f")]
    out.append(_section("groups", "A priori predicted shifts per hydrogen group",
                        "<p class=\"sub\">Shifts in ppm; Δδ_rc > 0 is downfield. Predicted = reference + Δδ_rc + "
                        "charge term.</p>" + pg.table("results", (*P, "groups"), cols)))

    items: list[tuple[str, tuple, str | None]] = [
        (provenance_label(parts), (*P, "provenance", *parts), None) for parts, _ in _flat(pred["provenance"])]
    items += [("conformers", (*P, "conformers", "count"), None),
              ("conformer weights", (*P, "conformers", "weights"), ".4f"),
              ("atoms", (*P, "n_atoms"), None), ("hydrogens", (*P, "n_hydrogens"), None),
              ("net charge", (*P, "charge"), None)]
    out.append(_section("provenance", "Model and provenance", pg.kv("results", items)))

    notes = list(pred["warnings"]) + (list(results.get("peak_warnings", [])) if comp else [])
    if pi is not None:
        notes += [w for w in pi.get("warnings", []) if w not in notes]
    body = ("<ul class=\"notes\">" + "".join(f"<li>{esc(readable(scrub_paths(str(n))))}</li>" for n in notes)
            + "</ul>") if notes else '<p class="sub">none</p>'
    out.append(_section("notes", "Notes", body))
    listing = ", ".join(esc(f) for f in files)
    out.append(f"<footer>Written by ringshift {esc(version)}. Files in this folder: {listing}. "
               f"The numbers in the tables are those of results.json{' and pi.json' if pi is not None else ''}."
               f"</footer></main></body></html>")
    return "\n".join(out) + "\n"


# ------------------------------------------------------------------------------------------- write
def _figure_jobs(pred, res, pi):
    from ringshift.reporting import figures as F
    from ringshift.reporting import maps as M

    src = res if res is not None else pred
    cur = "fitted" if res is not None else "a priori"
    yield ("spectrum", "Spectrum and predicted shifts",
           "Observed peaks (trace or a line spectrum simulated from the peak list) above; predicted shifts below."
           if res is not None else "Predicted shifts as a stick spectrum (height = number of protons).",
           lambda: F.spectrum_figure(src))
    yield ("contributions", "Shift contributions per hydrogen group",
           "Reference shift, class offset and charge term, and the ring-current part of each predicted shift"
           + (" (fitted, with 95 % intervals)." if res is not None else "."), lambda: F.contributions_figure(src))
    scale = (f"colour scale fixed at ±{M.DEFAULT_CONTOUR_MAX_PPM:g} ppm for every report, so maps of different "
             "compounds compare directly")
    yield ("map", "Ring-current shift map",
           f"Δδ_rc of all loops ({pred.model} model, {cur} currents) in the mean ring plane and in the perpendicular "
           f"plane through the centre; blank within {M.WIRE_MASK_A:g} Å of a loop wire; {scale}.",
           lambda: M.shielding_map_figure(src))
    yield ("map_1A", "Ring-current shift 1 Å above the ring plane",
           f"Δδ_rc of all loops ({pred.model} model, {cur} currents) in the plane 1 Å above the mean ring plane; "
           f"{scale}.", lambda: M.shielding_map_figure(src, plane="ring", height_A=1.0))
    yield ("normal_scan", "Shift along the ring normal",
           f"Loop-model counterpart of a NICS scan ({pred.model} model): Δδ_rc from 0 to 4 Å above the centre.",
           lambda: M.normal_scan_figure(src))
    yield ("levels", "Hückel π levels", "Orbital levels with their occupations; near-degenerate levels side by side.",
           lambda: F.levels_figure(pi))


def is_report_folder(path) -> bool:
    """Whether ``path`` is a folder that :func:`write_report` wrote: a real folder (not a link) holding
    ringshift's marker file of a report (:mod:`ringshift.io.folders`)."""
    from ringshift.io.folders import is_marked_folder

    return is_marked_folder(path, "report")


def write_report(out_dir, prediction, *, compare_result=None, pi_summary=None, force: bool = False) -> dict:
    """Write a report folder: report.html, results.json, pi.json, structure.sdf, figures/ and, with a comparison,
    assignment.nmredata.sdf (:mod:`ringshift.io.nmredata`; not written, and the page says why, when the
    spectrometer frequency is unknown).

    Parameters
    ----------
    out_dir : str or os.PathLike
        The folder to create. It must not exist unless ``force``: then it is replaced as a whole if it is a
        report folder ringshift wrote, holding nothing added or changed since (:mod:`ringshift.io.folders`).
    prediction : ringshift.shifts.records.Prediction
    compare_result : ringshift.comparison.run.CompareResult, optional
        Adds the assignment, fitted currents, verdict and claim; must come from ``prediction``.
    pi_summary : dict, optional
        :func:`ringshift.reporting.pi_summary.pi_summary` output; computed from ``prediction`` when omitted.
    force : bool
        Replace an existing folder.

    Returns
    -------
    dict
        Name → written path: ``html``, ``results``, ``pi``, ``sdf``, ``nmredata`` (when written), ``structure_svg``,
        ``structure_png`` and ``<figure>_svg`` / ``<figure>_png`` for every figure drawn.

    Raises
    ------
    OutputError
        The folder exists (without ``force``), is not a ringshift report folder or holds files ringshift did
        not write, is being written by another run, or its parent is missing or not writable.
    """
    from ringshift.io.folders import output_folder
    from ringshift.reporting import figures as F
    from ringshift.reporting import sdf as S
    from ringshift.reporting.json import comparison_to_dict
    from ringshift.reporting.pi_summary import pi_summary as make_pi

    out = Path(out_dir)
    if compare_result is not None and compare_result.prediction is not prediction:
        raise InputError("the comparison was computed from a different prediction than the one given",
                         "compare_result")
    with output_folder(out, force=force, kind="report") as tmp:
        results = comparison_to_dict(compare_result) if compare_result is not None else prediction_to_dict(prediction)
        pi = pi_summary if pi_summary is not None else make_pi(
            prediction.structure, beta_model=prediction.provenance.get("beta_model", "scf"), prediction=prediction)
        written = {"results": REPORT_FILES["results"], "pi": REPORT_FILES["pi"], "sdf": REPORT_FILES["sdf"]}
        (tmp / REPORT_FILES["results"]).write_text(to_json(results), encoding="utf-8")
        (tmp / REPORT_FILES["pi"]).write_text(to_json(pi), encoding="utf-8")
        (tmp / REPORT_FILES["sdf"]).write_text(S.structure_sdf(prediction, compare_result=compare_result),
                                               encoding="utf-8")
        nmr_file, nmr_note = write_nmredata_file(tmp, compare_result)
        written.update({"nmredata": nmr_file} if nmr_file else {})
        (tmp / "figures").mkdir()
        svg_struct = S.structure_figure(prediction, compare_result=compare_result, fmt="svg")
        (tmp / "figures" / "structure.svg").write_text(svg_struct, encoding="utf-8")
        (tmp / "figures" / "structure.png").write_bytes(
            S.structure_figure(prediction, compare_result=compare_result, fmt="png"))
        written.update(structure_svg="figures/structure.svg", structure_png="figures/structure.png")
        figs, skipped = [], []
        for key, title, caption, build in _figure_jobs(prediction, compare_result, pi):
            try:
                fig = build()
            except InputError as exc:
                skipped.append((title, exc.bare_message))
                continue
            svg = F.figure_bytes(fig, "svg")
            (tmp / "figures" / f"{key}.svg").write_bytes(svg)
            (tmp / "figures" / f"{key}.png").write_bytes(F.figure_bytes(fig, "png"))
            written[f"{key}_svg"] = f"figures/{key}.svg"
            written[f"{key}_png"] = f"figures/{key}.png"
            figs.append((key, title, caption, svg.decode("utf-8")))
        files = [REPORT_FILES["html"], *written.values()]
        page = render_html(results, pi, figs, structure_svg=svg_struct, skipped=skipped, files=files,
                           nmredata_note=nmr_note)
        (tmp / REPORT_FILES["html"]).write_text(page, encoding="utf-8")
        written["html"] = REPORT_FILES["html"]
    return {k: out / v for k, v in written.items()}
