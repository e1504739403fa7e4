"""Text and CSV forms of the results, made from the same dictionaries as the JSON.

:func:`prediction_table` and :func:`prediction_csv` (``ringshift predict``), :func:`comparison_text`
(``ringshift compare``) and :func:`pi_text` (``ringshift pi``). Every number printed here is read from
:mod:`ringshift.reporting.json`'s dictionaries or the result records behind them.
"""

from __future__ import annotations

import csv
import io
from typing import TYPE_CHECKING

from ringshift._numbers import rounded as _r
from ringshift._numbers import text
from ringshift.reporting.json import CAUTION

# The comparison's modules (evidence, correlations) and the π summary load where their text is written, so
# that the predict command does not import the comparer (start-up, issue 16).

if TYPE_CHECKING:
    from ringshift.comparison.run import CompareResult

__all__ = ['comparison_text']



def comparison_text(res: CompareResult) -> str:
    """Readable summary: verdict, currents with intervals, assignment with residuals, warnings."""
    from ringshift.reporting.correlations import correlation_lines

    c = res.comparison
    lines = [f"{res.prediction.structure.name} against {res.peaks.source}", "verdict: " + verdict_phrase(c)]
    if c.claim is not None:
        lines.append(c.claim.reason)        # one sentence that names the claim, the outcome and the numbers
    lines.append("")
    if c.circuits:
        lines.append("circuit  verdict       J fitted (nA/T)    95% interval     × benzene  a priori  "
                     "log10 BF dia:none  para:none  lead")
    for cf in c.circuits:
        ev = cf.evidence
        ci = cf.ci95_nA_per_T
        point = (f"{cf.current_nA_per_T:+8.2f}  ±  {cf.stderr_nA_per_T:<5.2f}" if cf.identified
                 else f"{'not identified':<19}")
        rel = f"{cf.current_rel_benzene:+7.2f}" if cf.identified else " " * 7
        lines.append(f"{cf.label:<8} {cf.verdict:<13} {point} "
                     f"[{ci[0]:+6.1f}, {ci[1]:+6.1f}]   {rel}   {cf.prior_nA_per_T:+7.1f}  "
                     f"{ev.log10_bf_dia_vs_none:+17.1f}  {ev.log10_bf_para_vs_none:+9.1f}  {lead_phrase(ev)}")
    if c.combined is not None:
        lines.extend(combined_lines(c.combined))
    if c.circuits:
        lines.append(evidence_scale())
    lines.append("")
    lines.append("group  nH  class                     peak     observed  predicted  residual  ring current  "
                 "ref. needed without current")
    for ga in c.assignment:
        need = ("" if ga.needed_reference_ppm is None
                else f"{ga.needed_reference_ppm:7.2f} (table {ga.reference_ppm:.2f}, z {ga.needed_reference_z:+.1f})")
        lines.append(f"{ga.label:<6} {ga.n_h:>2}  {ga.proton_class[:24]:<24} {str(ga.peak_label or '-'):<8} "
                     f"{_fmt_cell(ga.observed_ppm)}  {_fmt_cell(ga.predicted_ppm)}  "
                     f"{_fmt_cell(ga.residual_ppm, '+8.2f')}  {_fmt_cell(ga.ring_current_ppm, '+10.2f')}    {need}")
    if c.unassigned_peaks:
        lines.append("unassigned peaks: " + ", ".join(text(c.peaks[i].shift_ppm, ".2f") for i in c.unassigned_peaks))
    if c.unassigned_groups:
        lines.append("unassigned groups: " + ", ".join(c.assignment[i].label for i in c.unassigned_groups))
    if c.ignored_peaks:
        lines.append("not assigned (solvent, tms or impurity lines): " +
                     ", ".join(f"{text(c.peaks[i].shift_ppm, '.2f')} ({c.peaks[i].kind})" for i in c.ignored_peaks))
    for a in c.alternatives:
        lines.append(alternative_line(a))
    lines += correlation_lines(c.correlations)
    for wmsg in list(res.peaks.warnings) + list(res.prediction.warnings):
        lines.append(f"note: {wmsg}")
    lines.append("")
    lines.append(f"Caution: {CAUTION}")
    return "\n".join(lines) + "\n"


def evidence_scale() -> str:
    """How the reports read Bayes factors (one scale everywhere: log10 B); also ``EVIDENCE_SCALE``."""
    from ringshift.comparison.evidence import DECISIVE_LOG10, KASS_RAFTERY_LOG10

    return (f"Evidence as log10 Bayes factors (B > 1 favours the first hypothesis). Categories of Kass & Raftery "
            f"(JASA 1995, 90, 773), their 2 ln B bounds 2, 6, 10 converted to log10 B: below "
            f"{KASS_RAFTERY_LOG10[1][0]:.2f} {KASS_RAFTERY_LOG10[0][1]}, from {KASS_RAFTERY_LOG10[1][0]:.2f} "
            f"{KASS_RAFTERY_LOG10[1][1]}, from {KASS_RAFTERY_LOG10[2][0]:.2f} {KASS_RAFTERY_LOG10[2][1]}, from "
            f"{KASS_RAFTERY_LOG10[3][0]:.2f} {KASS_RAFTERY_LOG10[3][1]}; a verdict needs a lead of "
            f"{DECISIVE_LOG10:.2f}.")


def __getattr__(name: str) -> str:
    # EVIDENCE_SCALE stays a module attribute (``from ringshift.reporting.text import EVIDENCE_SCALE``) without
    # importing the comparer when only the prediction's text is needed
    if name == "EVIDENCE_SCALE":
        return evidence_scale()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def verdict_phrase(c) -> str:
    """"diatropic (decided by circuit M1)": the overall verdict and what it rests on."""
    if c.verdict_basis == "combined":
        return f"{c.verdict} (decided by the combined current of the circuits, whose split the data do not identify)"
    if c.verdict_circuit is not None:
        return f"{c.verdict} (decided by circuit {c.verdict_circuit})"
    return f"{c.verdict} ({c.verdict_reason})"


def lead_phrase(ev) -> str:
    """"diatropic over atropic: log10 B 3.21, very strong": the favoured hypothesis and its lead."""
    return f"{ev.best} over {ev.runner_up}: log10 B {ev.log10_bf_margin:.2f}, {ev.kass_raftery}"


def combined_lines(cb) -> list[str]:
    """The combined current in two lines: its value with interval and evidence, and what is not identified."""
    how = ("all circuits scaled together with the a priori pattern" if cb.basis == "a priori pattern"
           else "one common current in every circuit")
    ci = cb.ci95_nA_per_T
    scale = ("" if cb.scale_vs_a_priori is None else
             f", {cb.scale_vs_a_priori:.2f} × the a priori pattern [{cb.scale_ci95[0]:.2f}, {cb.scale_ci95[1]:.2f}]")
    return [f"combined current ({how}; J of lead circuit {cb.lead_circuit}): {cb.verdict}, "
            f"J = {cb.current_nA_per_T:+.2f} ± {cb.stderr_nA_per_T:.2f} nA/T [{ci[0]:+.1f}, {ci[1]:+.1f}], "
            f"{cb.current_rel_benzene:+.2f} × benzene{scale}; {lead_phrase(cb.evidence)}",
            f"split between circuits not identified by the data: {', '.join(cb.unidentified)} (posterior sd above "
            "half the prior sd); their rows give the 95 % interval only"]


def alternative_line(a) -> str:
    """One alternative assignment: how much worse (log10 B), what moved and, with circuits, their verdicts."""
    moves = "; ".join(f"{g} {src or '-'} -> {dst or '-'}" for g, src, dst in a.changes)
    tail = f"; verdicts {', '.join(a.verdicts)}" if a.verdicts else ""
    return f"alternative assignment (log10 B {a.delta_cost_log10:.2f} below the best): {moves}{tail}"


def _fmt_cell(x, spec="8.2f"):
    return text(x, spec, missing=" " * 8)


def _fmt(x, spec="+.2f"):
    return text(x, spec)


def prediction_table(pred) -> str:
    """Readable text table: one row per hydrogen group."""
    labels = [cr.circuit.label for cr in pred.circuits]
    head = ["group", "nH", "atoms (H)", "parents"] + [f"{lab} ppm" for lab in labels] + \
        ["ring current", "charge", "reference", "predicted"]
    rows = []
    for g in pred.groups:
        atoms = " ".join(str(a) for a in g.atoms)
        parents = " ".join(str(a) for a in sorted(set(g.parents)))
        rows.append([g.label, str(g.n_h), atoms, parents] + [_fmt(v) for v in g.per_circuit_ppm] +
                    [_fmt(g.ring_current_ppm), _fmt(g.charge_ppm), _fmt(g.reference_ppm, ".2f"),
                     _fmt(g.predicted_ppm, ".2f")])
    widths = [max(len(h), *(len(r[k]) for r in rows)) if rows else len(h) for k, h in enumerate(head)]
    widths = [min(w, 28) for w in widths]

    def line(cells):
        return "  ".join((c if len(c) <= w else c[: w - 1] + "~").rjust(w) if k >= 4 or k == 1
                         else (c if len(c) <= w else c[: w - 1] + "~").ljust(w)
                         for k, (c, w) in enumerate(zip(cells, widths)))

    out = io.StringIO()
    s = pred.structure
    out.write(f"{s.name}: {len(pred.protons)} H in {len(pred.groups)} group{'' if len(pred.groups) == 1 else 's'}, "
              f"{s.coords.shape[0]} conformer{'' if s.coords.shape[0] == 1 else 's'}, model {pred.model}\n")
    for cr in pred.circuits:
        cur = ("n/a" if cr.current_nA_per_T is None
               else f"{text(cr.current_nA_per_T, '+.1f')} nA/T ({text(cr.current_rel_benzene, '+.2f')} × benzene)")
        extra = f", {cr.pi_electrons} π e ({cr.huckel_class})" if cr.pi_electrons is not None else ""
        out.write(f"  circuit {cr.circuit.label}: {cr.circuit.size}-membered {cr.circuit.kind}{extra}, "
                  f"current {cur} [{cr.current_source}], planarity RMS {cr.planarity_rms_A:.2f} Å\n")
    for cr in pred.perimeters:
        extra = f", {cr.pi_electrons} π e ({cr.huckel_class})" if cr.pi_electrons is not None else ""
        out.write(f"  perimeter {cr.circuit.label}: {cr.circuit.size} atoms{extra} (descriptive, no loop)\n")
    out.write("\nShifts in ppm; ring current > 0 is downfield.\n")
    out.write(line(head) + "\n")
    out.write("  ".join("-" * w for w in widths) + "\n")
    for r in rows:
        out.write(line(r) + "\n")
    for wmsg in pred.warnings:
        out.write(f"note: {wmsg}\n")
    out.write(f"\nCaution: {CAUTION}\n")
    return out.getvalue()


def prediction_csv(pred) -> str:
    """Per-proton CSV table (indices 0-based, as in the JSON; numbers from
    :func:`ringshift._numbers.rounded`)."""
    labels = [cr.circuit.label for cr in pred.circuits]
    buf = io.StringIO()
    wr = csv.writer(buf, lineterminator="\n")
    wr.writerow(["index", "parent", "group", "proton_class"] + [f"ring_current_{lab}_ppm" for lab in labels] +
                ["ring_current_ppm", "charge_ppm", "reference_ppm", "predicted_ppm", "conformer_spread_ppm"])
    for p in pred.protons:
        wr.writerow([p.index, p.parent, p.group, p.proton_class or ""] +
                    [_r(v) for v in p.per_circuit_ppm] +
                    [_r(p.ring_current_ppm), _r(p.charge_ppm),
                     "" if p.reference_ppm is None else _r(p.reference_ppm),
                     "" if p.predicted_ppm is None else _r(p.predicted_ppm), _r(p.spread_ppm)])
    return buf.getvalue()


def pi_text(summary: dict) -> str:
    """Readable text of :func:`pi_summary`."""
    from ringshift.reporting.pi_summary import circuit_verdict

    lines = [f"{summary['name']}: {summary['pi_electrons']} pi electrons on {len(summary['pi_atoms'])} atoms "
             f"({summary['huckel_class'] or 'no pi system'}), charge {summary['charge']:+d}, "
             f"{len(summary['fragments'])} fragment(s)"]
    if summary["radical"]:
        lines.append("  radical: odd pi-electron count (open shell at the Hueckel level)")
    lines.append("")
    lines.append("circuits (current: Hückel–London, relative to benzene with the same parameters)")
    for c in summary["circuits"] + summary["perimeters"]:
        cur = c.get("current_rel_benzene")
        cur_txt = ("no loop (descriptive)" if c["kind"] == "perimeter" else
                   "no number: " + c["current_source"] if cur is None else
                   f"{text(cur, '+.2f')} × benzene = {text(c['current_nA_per_T'], '+.1f')} nA/T "
                   f"({'diatropic' if cur > 0 else 'paratropic' if cur < 0 else 'none'})")
        lines.append(f"  {c['label']:<4} {c['size']:>3}-atom {c['kind']:<10} {circuit_verdict(c)}; "
                     f"RMS {c['planarity_rms_A']:.2f} Å, p-misalignment {c['max_p_misalignment_deg']:.0f}°; "
                     f"{cur_txt}")
    lv = summary.get("levels")
    if lv:
        lines.append("")
        gap = lv["homo_lumo_gap_beta"]
        lines.append(f"Hückel levels ({lv['convention']}); HOMO–LUMO gap "
                     f"{'n/a' if gap is None else f'{gap:.3f} |β|'}; "
                     f"{'OPEN SHELL' if lv['open_shell'] else 'closed shell'}")
        e = lv["energies_beta"]
        occ = lv["occupations"]
        for k in range(len(e) - 1, -1, -1):
            lines.append(f"  {e[k]:+8.4f}  {'*' * int(round(occ[k])) or '.'}")
    for w in summary["warnings"]:
        lines.append(f"note: {w}")
    lines.append("")
    lines.append(f"Caution: {CAUTION}")
    return "\n".join(lines) + "\n"
