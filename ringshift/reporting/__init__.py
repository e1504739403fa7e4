"""Figures and the HTML report of ringshift results.

Public entry points (import the submodules directly; they load matplotlib and RDKit drawing code):

* :mod:`ringshift.reporting.figures`: ``spectrum_figure``, ``contributions_figure``, ``save_figure``,
  ``figure_bytes`` (and, from :mod:`ringshift.reporting.level_diagram`, ``levels_figure``, ``save_levels_figure``);
* :mod:`ringshift.reporting.maps`: ``shielding_map_figure``, ``normal_scan_figure`` and the arrays behind
  them (``shielding_map``, ``normal_scan``) on a fixed colour scale, with any model of
  ``maps.MAP_MODELS``; the loops and their kernels are in :mod:`ringshift.reporting.map_loops`;
* :mod:`ringshift.reporting.structure_drawing`: ``structure_figure`` (RDKit 2D drawing with labels placed by
  :mod:`ringshift.reporting.labels`), also importable from :mod:`ringshift.reporting.sdf` with ``structure_sdf``,
  ``write_sdf``;
* :mod:`ringshift.reporting.html`: ``write_report`` (typography and print style in
  :mod:`ringshift.reporting.html_text`).
"""

from __future__ import annotations

__all__ = ["write_report"]


def write_report(out_dir, prediction, *, compare_result=None, pi_summary=None, force: bool = False) -> dict:
    """Write a report folder; see :func:`ringshift.reporting.html.write_report`."""
    from ringshift.reporting.html import write_report as _write

    return _write(out_dir, prediction, compare_result=compare_result, pi_summary=pi_summary, force=force)
