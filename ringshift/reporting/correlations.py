"""Text lines and the HTML section that show what 2D correlations and ³J couplings did to the assignment.

Both read ``Comparison.correlations`` (:class:`ringshift.comparison.constraints.CorrelationCheck`): the text form
from the record, the HTML form from the ``correlations`` object of ``results.json`` through the report page's cell
renderer, so every shown value carries its JSON pointer like the rest of the page.
"""

from __future__ import annotations

import html
import os

__all__ = ["correlation_lines", "correlation_section"]


def _names(items) -> str:
    return ", ".join(items) or "-"


def correlation_lines(check) -> list[str]:
    """Lines for ``ringshift compare``'s text output (empty without correlations or couplings).

    Parameters
    ----------
    check : CorrelationCheck or None
    """
    if check is None:
        return []
    lines = [""]
    if check.source is not None:
        lines.append(f"2D correlations: {check.n_confirmed} confirmed, {check.n_violated} violated ({check.source}, "
                     f"tolerance {check.tolerance_ppm:g} ppm)")
        lines.append("cross peak              peaks            groups             H-H bonds  final      1D alone")
    for r in check.pairs:
        bonds = "-" if r.bonds is None else str(r.bonds)
        lines.append(f"{os.path.basename(r.where):<22}  {r.peak_a_label + ' / ' + r.peak_b_label:<15}  "
                     f"{_names(r.groups_a) + ' / ' + _names(r.groups_b):<17}  {bonds:>9}  {r.status:<9}  {r.status_1d}")
    for r in check.couplings:
        ruled = f"; rules out {_names(r.ruled_out_groups)}" if r.ruled_out_groups else ""
        why = f" ({r.reason})" if r.reason else ""
        js = "/".join(f"{j:g}" for j in r.j_hz)
        lines.append(f"couplings at {r.peak_label}: J = {js} Hz, {_names(r.groups)} {r.status}{why}{ruled}")
    if check.changes:
        for c in check.changes:
            lines.append(f"ruled out by {c.by}: {c.group} at {c.peak_1d or 'no peak'} (1D alone); now at "
                         f"{c.peak or 'no peak'}")
    else:
        lines.append("the correlations and couplings changed no assignment of the 1D evidence alone")
    return lines


def correlation_section(pg, results: dict) -> str:
    """The report section "2D correlations and couplings" ("" when ``results`` has none).

    Parameters
    ----------
    pg : the report page's cell renderer (``ringshift.reporting.html._Page``): ``table(src, base, columns)``
    results : dict
        ``comparison_to_dict(...)``.
    """
    check = results.get("correlations")
    if not check:
        return ""
    body = ('<p class="sub">“1D alone” is the assignment found from the shifts and integrals without correlations '
            "and couplings.</p>")
    if check["source"] is not None:
        body += ('<p class="sub">A cross peak is confirmed when its two peaks hold groups whose protons are 3 or 4 '
                 "bonds apart (H–C–C–H, H–C–C–C–H; any member of a group of equivalent protons counts).</p>")
        body += pg.table("results", ("correlations", "pairs"), [
            ("row", ("where",), None), ("kind", ("kind",), None), ("strength", ("strength",), None),
            ("peak a", ("peak_a_label",), None), ("peak b", ("peak_b_label",), None),
            ("groups at a", ("groups_a",), None), ("groups at b", ("groups_b",), None),
            ("H–H bonds", ("bonds",), None), ("final", ("status",), None), ("1D alone", ("status_1d",), None)])
    if check["couplings"]:
        body += "<h3>Couplings (³J, Hz)</h3>" + pg.table("results", ("correlations", "couplings"), [
            ("peak", ("peak_label",), None), ("J (Hz)", ("j_hz",), ".1f"), ("groups", ("groups",), None),
            ("vicinal partners and expected ³J", ("partners",), None), ("status", ("status",), None),
            ("reason", ("reason",), None), ("groups ruled out here", ("ruled_out_groups",), None)])
    body += "<h3>Assignments changed from the 1D evidence alone</h3>" + pg.table(
        "results", ("correlations", "changes"), [
            ("group", ("group",), None), ("1D alone", ("peak_1d",), None), ("final", ("peak",), None),
            ("ruled out by", ("by",), None)])
    return (f'<section id="correlations"><h2>{html.escape("2D correlations and couplings")}</h2>{body}</section>')
