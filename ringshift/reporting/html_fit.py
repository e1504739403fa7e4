"""The report's words on a comparison: the verdict box and the "Fitted currents" section.

Kept apart from :mod:`ringshift.reporting.html` (the page) so the page module stays one concept. Every table
cell is rendered by the page's ``_Page`` (``pg``), so it carries ``data-src``/``data-path`` like any other.
Evidence is shown on one scale, log10 Bayes factors, with the Kass & Raftery (JASA 1995, 90, 773) categories
converted from their 2 ln B bounds (:data:`ringshift.comparison.evidence.KASS_RAFTERY_LOG10`).
"""

from __future__ import annotations

import html

from ringshift.reporting.text import evidence_scale

__all__ = ["verdict_box", "fit_section_body"]


def verdict_box(results: dict) -> str:
    """The verdict, what it rests on and the claim check (its reason is one sentence that says it all)."""
    esc = html.escape
    if results.get("verdict_basis") == "combined":
        basis = ("decided by the combined current of the circuits: the data do not identify the split between "
                 "them (see Fitted currents)")
    elif results.get("verdict_circuit") is not None:
        basis = f"decided by circuit {results['verdict_circuit']}"
    else:
        basis = str(results.get("verdict_reason") or "no circuit")
    box = (f'<div class="verdict"><div class="big">The spectrum says: {esc(results["verdict"])}</div>'
           f"<div>{esc(basis)}</div>")
    claim = results.get("claim")
    if claim:
        head, _, rest = claim["reason"].partition(": ")
        box += f"<p><b>{esc(head)}:</b> {esc(rest)}</p>" if rest else f"<p><b>{esc(head)}</b></p>"
    return box + "</div>"


def fit_section_body(pg, results: dict) -> str:
    """Body of the "Fitted currents" section: per-circuit fits, the combined current, evidence, settings."""
    cols = [("circuit", ("label",), None), ("verdict", ("verdict",), None),
            ("separately identified", ("identified",), None), ("posterior sd / prior sd", ("sd_ratio",), ".2f"),
            ("J fitted (nA/T)", ("current_nA_per_T",), "+.2f"), ("± s.e.", ("stderr_nA_per_T",), ".2f"),
            ("95 % low", ("ci95_nA_per_T", 0), "+.2f"), ("95 % high", ("ci95_nA_per_T", 1), "+.2f"),
            ("× benzene", ("current_rel_benzene",), "+.3f"), ("a priori (nA/T)", ("prior_nA_per_T",), "+.2f"),
            ("prior sd (nA/T)", ("prior_sd_nA_per_T",), ".1f")]
    body = pg.table("results", ("circuits",), cols)
    body += ('<p class="def">Separately identified: the posterior sd of the circuit\'s current is at most half its '
             "prior sd. Where it is not, the spectrum does not fix that circuit's share of the current: read its 95 % "
             "interval, not the fitted point.</p>")
    comb = results.get("combined")
    if comb:
        body += "<h3>Combined current (the one the data determine)</h3>" + pg.kv("results", [
            ("basis", ("combined", "basis"), None),
            ("lead circuit (J is its current)", ("combined", "lead_circuit"), None),
            ("verdict", ("combined", "verdict"), None), ("J (nA/T)", ("combined", "current_nA_per_T"), "+.2f"),
            ("± s.e. (nA/T)", ("combined", "stderr_nA_per_T"), ".2f"),
            ("95 % interval (nA/T)", ("combined", "ci95_nA_per_T"), "+.2f"),
            ("× benzene", ("combined", "current_rel_benzene"), "+.3f"),
            ("scale s of the a priori pattern", ("combined", "scale_vs_a_priori"), ".3f"),
            ("95 % interval of s", ("combined", "scale_ci95"), ".3f"),
            ("log₁₀ BF lead over the runner-up", ("combined", "evidence", "log10_bf_margin"), ".2f"),
            ("strength (Kass–Raftery)", ("combined", "evidence", "kass_raftery"), None),
            ("not separately identified", ("combined", "unidentified"), None), ("note", ("combined", "note"), None)])
    body += "<h3>Evidence for the sign of each current</h3>" + pg.table("results", ("circuits",), [
        ("circuit", ("label",), None), ("log₁₀ BF diatropic : none", ("evidence", "log10_bf_dia_vs_none"), "+.2f"),
        ("log₁₀ BF paratropic : none", ("evidence", "log10_bf_para_vs_none"), "+.2f"),
        ("best", ("evidence", "best"), None), ("runner-up", ("evidence", "runner_up"), None),
        ("log₁₀ BF best : runner-up", ("evidence", "log10_bf_margin"), ".2f"),
        ("strength (Kass–Raftery)", ("evidence", "kass_raftery"), None),
        ("P(J > 0)", ("evidence", "p_diatropic"), ".4f")])
    body += f'<p class="def">{html.escape(evidence_scale())}</p>'
    body += "<h3>Fit settings</h3>" + pg.kv("results", [
        ("model error σ (ppm)", ("noise_ppm",), ".3f"),
        ("σ chosen by maximum evidence", ("noise_estimated",), None),
        ("integral scale", ("integral_scale",), ".4f"), ("converged", ("converged",), None),
        ("iterations", ("iterations",), None), ("winning start", ("start",), None),
        ("assignment cost (−2 ln evidence + penalties)", ("cost",), ".3f"),
        ("log₁₀ evidence", ("log10_evidence",), ".3f")])
    body += "<h3>Class offsets</h3>" + pg.table("results", ("class_offsets",), [
        ("proton class", ("proton_class",), None), ("offset (ppm)", ("offset_ppm",), "+.3f"),
        ("sd (ppm)", ("sd_ppm",), ".3f"), ("prior sd (ppm)", ("prior_sd_ppm",), ".3f")])
    return body
