"""The bundled demo: an invented photoswitch pair, compared with its invented spectra and reported.

The scenario and its data are invented (see ``demo_spectra/README.md`` and
``demo_spectra/make_demo.py``, which simulated the spectra from the model with a stated hidden
current). :func:`run_demo` runs ``compare`` and ``report`` on both compounds, ranks both structures
against the closed form's spectrum, and returns the text to print.
"""

from __future__ import annotations

from pathlib import Path

from ringshift.errors import InputError

DEMO_CASES = (
    # name, structure file, spectrum file, claim the fictional group wants to make
    ("fj14c", "fj14c.sdf", "fj14c_1H.jdx", "aromatic"),
    ("fj14o", "fj14o.sdf", "fj14o_1H.jdx", "nonaromatic"),
)


def demo_data_dir() -> Path:
    """The demo inputs shipped inside the package (``ringshift/data/demo``; ``demo_spectra/`` links to them)."""
    here = Path(__file__).resolve().parent.parent / "data" / "demo"
    if not (here / "fj14c.sdf").is_file():
        raise InputError("the demo files are missing from this installation; reinstall ringshift "
                         "(or regenerate them with 'python demo_spectra/make_demo.py' in a source tree)", str(here))
    return here


def _is_demo_folder(path: Path) -> bool:
    """A folder :func:`run_demo` wrote: it holds ringshift's marker of a demo folder (:mod:`ringshift.io.folders`)."""
    from ringshift.io.folders import is_marked_folder

    return is_marked_folder(path, "demo")


def run_demo(out_dir: str | Path, *, force: bool = False, progress=None) -> str:
    """Run the demo and write one report folder per compound into ``out_dir``.

    Returns the summary text. Refuses an existing ``out_dir`` unless ``force``, and even then a folder that
    is not a demo folder ringshift wrote or that holds files added since; the folder is built beside it and
    renamed at the end, so a failure leaves nothing half-written (:func:`ringshift.io.folders.output_folder`).
    """
    from ringshift.comparison.candidates import rank
    from ringshift.comparison.run import run_compare
    from ringshift.io.folders import output_folder
    from ringshift.io.peak_tables import read_peaks
    from ringshift.io.structures import load_structure
    from ringshift.reporting import write_report
    from ringshift.reporting.pi_summary import pi_summary
    from ringshift.shifts.prediction import predict

    data = demo_data_dir()
    out = Path(out_dir)
    lines = ["ringshift demo - INVENTED scenario: the fictional Lindqvist-Okafor group (Fjordvik Institute of",
             "Molecular Materials) asks whether their closed photoswitch FJ-14c carries a diatropic 14-pi",
             "macrocyclic current and whether the open isomer FJ-14o does not. Spectra were simulated from the",
             "model with hidden currents (FJ-14c: +14.0 nA/T; FJ-14o: none in the macrocycle).", ""]
    with output_folder(out, force=force, kind="demo") as tmp:
        preds, peaklists = {}, {}
        for name, sfile, jfile, claim in DEMO_CASES:
            if progress:
                progress(f"{name}: structure, pi system and ring currents")
            s = load_structure(str(data / sfile))
            pred = predict(s)
            preds[name] = pred
            pl = peaklists[name] = read_peaks(str(data / jfile), n_hydrogens=len(pred.protons), solvent="CDCl3")
            res = run_compare(pred, pl, claim=claim)
            if progress:
                progress(f"{name}: report")
            write_report(tmp / name, pred, compare_result=res, pi_summary=pi_summary(s, prediction=pred))
            c = res.comparison
            fit = next(cf for cf in c.circuits if cf.label == c.verdict_circuit)
            lines.append(f"{name.upper()}: verdict {c.verdict} (circuit {fit.label}, "
                         f"J = {fit.current_nA_per_T:+.1f} ± {fit.stderr_nA_per_T:.1f} nA/T, "
                         f"{fit.current_rel_benzene:+.2f} × benzene; a priori {fit.prior_nA_per_T:+.1f})")
            if c.claim is not None:
                lines.append(f"  claim '{claim}': {c.claim.outcome}")
            lines.append(f"  report: {out / name / 'report.html'}")
        # which structure explains the closed form's spectrum?
        ranked = rank([preds["fj14c"], preds["fj14o"]], peaklists["fj14c"])
        lines.append("")
        lines.append("Both structures against the FJ-14c spectrum:")
        for cs in ranked:
            lines.append(f"  {cs.rank}. {cs.name}: probability {cs.probability:.3f}, "
                         f"log10 BF vs best {cs.log10_bf_vs_best + 0.0:+.1f}")
    lines.append("")
    lines.append(f"Open {out / 'fj14c' / 'report.html'} in a browser to see the annotated spectrum, maps and tables.")
    return "\n".join(lines) + "\n"
