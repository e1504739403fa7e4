"""The spectrum commands of the command line: ``compare`` (assignment, fitted currents, verdict) and
``report`` (the folder for a paper). They register on :data:`ringshift.cli.cli`, which imports this module;
options, output contract and error handling are shared with the other commands there."""

from __future__ import annotations

import click

from ringshift.cli import (
    _apply,
    _claim,
    _emit,
    _Format,
    _index_lists,
    _run_predict,
    cli,
    model_options,
    name_option,
    parse_assignments,
    structure_options,
)
from ringshift.errors import InputError

#: Choices of --configurations: ringshift.geometry.configurations.CONFIGURATION_MODES (a test checks them).
CONFIGURATION_CHOICES = ("given", "open", "all")


#: Options compare and report share word for word.
solvent_option = click.option(
    "--solvent", default=None,
    help="Deuterated solvent (e.g. CDCl3); a line at its residual position (or at 0 ppm, TMS) is kept in the "
         "sample or set aside as solvent/tms by the integrals.")
correlations_option = click.option(
    "--correlations", type=click.Path(dir_okay=False), default=None, metavar="FILE",
    help="H-H correlation list (COSY cross peaks, CSV: shift_a_ppm,shift_b_ppm[,kind,strength]) used as "
         "evidence in the assignment.")


@cli.command("compare")
@click.argument("structure")
@click.argument("peaks", type=click.Path(dir_okay=False))
@_apply(structure_options)
@_apply(model_options)
@solvent_option
@name_option
@click.option("--claim", type=click.Choice(["aromatic", "antiaromatic", "nonaromatic"]), default=None,
              help="Check an aromaticity claim against the spectrum.")
@click.option("--noise", default=None, metavar="PPM|auto",
              help="Model error of a predicted shift in ppm [default: 0.3], or 'auto' (maximum evidence).")
@correlations_option
@click.option("--configurations", "configurations", type=click.Choice(CONFIGURATION_CHOICES), default=None,
              help="Ring E/Z: given (as the input says), open (rank every configuration of the ring double bonds the "
                   "SMILES leaves open), all (every ring double bond) [default: open when the SMILES leaves ring "
                   "E/Z open, else given].")
@click.option("--format", "fmt", type=_Format("text", "json"), default="text", show_default=True,
              help="Readable text or JSON.")
@click.option("-o", "--output", type=click.Path(dir_okay=False), default=None, help="Write to FILE (atomically).")
@click.option("--nmredata", type=click.Path(dir_okay=False), default=None, metavar="FILE",
              help="Also write the assignment as NMReDATA (SD file, e.g. name.nmredata.sdf; needs the spectrometer "
                   "frequency: '# observe_mhz = 400' in a CSV peak table, or a JCAMP-DX file).")
@click.option("--force", is_flag=True, help="Overwrite an existing output file.")
def compare_cmd(structure, peaks, charge, conformers, seed, temperature, exchange, geometry, model, currents,
                beta_model, scale, set_current, circuit, solvent, name, claim, noise, correlations, configurations,
                fmt, output, nmredata, force):
    """Assign the observed PEAKS (CSV/TSV or JCAMP-DX) to STRUCTURE, fit its ring currents, give a verdict."""
    from ringshift.comparison.run import run_compare
    from ringshift.io.peak_tables import read_peaks
    from ringshift.reporting.json import comparison_to_dict, to_json
    from ringshift.reporting.text import comparison_text
    from ringshift.runners.configurations import compare_configurations, configurations_text, resolve_mode

    _claim(output, force, (structure, peaks) + ((correlations,) if correlations else ()))
    cross = _correlations(correlations)  # read first: a bad file fails before the prediction is computed
    if nmredata:
        _nmredata_precheck(nmredata, output, force, (structure, peaks))
    mode, reason, base = resolve_mode(structure, configurations)
    if mode == "given":
        pred = _run_predict(structure, charge, conformers, seed, temperature, exchange, geometry, model, currents,
                            beta_model, scale, set_current, circuit, name)
        _require_protons(pred, structure)
        pl = read_peaks(peaks, n_hydrogens=len(pred.protons), solvent=solvent)
        if nmredata:
            from ringshift.io.nmredata import larmor_mhz_of

            larmor_mhz_of(pl)  # no spectrometer frequency: refuse before the fit
        res = run_compare(pred, pl, claim=claim, noise_ppm=_noise(noise), seed=seed, correlations=cross)
    else:
        from ringshift._validation import compound_name
        from ringshift.api import _named

        if charge is not None and base is not None and charge != _formal_charge(base):
            raise InputError(f"contradicts the net formal charge {_formal_charge(base)} of the SMILES", "--charge")
        res = _named(compare_configurations(
            structure, base, mode, reason, peaks, seed=seed, solvent=solvent, claim=claim, noise_ppm=_noise(noise),
            load={"conformers": conformers, "temperature_K": temperature, "exchange": exchange, "geometry": geometry},
            model={"model": model, "currents": currents, "beta_model": beta_model,
                   "scale": parse_assignments(scale, "--scale"),
                   "set_current": parse_assignments(set_current, "--set-current"),
                   "user_circuits": _index_lists(circuit)}, correlations=cross), compound_name(name))
    if fmt == "json":
        text = to_json(comparison_to_dict(res))
    else:
        text = comparison_text(res)
        if res.configurations is not None:
            text = configurations_text(res.configurations) + text
    _emit(text, output, force, (structure, peaks) + ((correlations,) if correlations else ()))
    if nmredata:
        from ringshift.io.nmredata import write_nmredata

        write_nmredata(nmredata, res, force=force, inputs=(structure, peaks))
        click.echo(f"wrote {nmredata}", err=True)


def _require_protons(pred, structure):
    """A molecule without ¹H (none, or only ²H/³H) has nothing a ¹H spectrum could be compared with."""
    from ringshift.io.structures import require_protons

    require_protons(pred.structure.mol, structure)


def _nmredata_precheck(nmredata, output, force, inputs):
    """Refuse --nmredata before the fit: the same file as -o, or what the output contract refuses (an input of
    the run, a file in the way without --force, a link, a device; ringshift.io.writing.check_output_file)."""
    from os.path import abspath

    from ringshift.io.writing import check_output_file

    if output and abspath(output) == abspath(nmredata):
        raise InputError("names the same file as -o; give the NMReDATA file a name of its own", "--nmredata")
    check_output_file(nmredata, force=force, inputs=inputs)


def _correlations(path):
    if path is None:
        return None
    from ringshift.io.correlations import read_correlations

    return read_correlations(path)


def _formal_charge(mol) -> int:
    from rdkit import Chem

    return int(Chem.GetFormalCharge(mol))


def _noise(value):
    if value is None or value == "auto":
        return value
    try:
        v = float(value)
    except ValueError:
        raise InputError(f"expected a positive number of ppm or 'auto', got {value!r}", "--noise") from None
    if not v > 0 or v != v or v == float("inf"):
        raise InputError(f"expected a positive number of ppm, got {value!r}", "--noise")
    return v


@cli.command("report")
@click.argument("structure")
@click.argument("peaks", required=False, type=click.Path(dir_okay=False))
@_apply(structure_options)
@_apply(model_options)
@solvent_option
@name_option
@click.option("--claim", type=click.Choice(["aromatic", "antiaromatic", "nonaromatic"]), default=None,
              help="The aromaticity claim to check against the fitted currents (needs PEAKS).")
@click.option("--noise", default=None, metavar="PPM|auto", help="Model error of a predicted shift (ppm) or 'auto'.")
@correlations_option
@click.option("-o", "--output", "out_dir", type=click.Path(file_okay=False), required=True,
              help="New folder for the report (HTML, figures, JSON, SDF).")
@click.option("--force", is_flag=True, help="Replace an existing report folder.")
@click.option("--quiet", is_flag=True, help="No progress messages.")
def report_cmd(structure, peaks, charge, conformers, seed, temperature, exchange, geometry, model, currents,
               beta_model, scale, set_current, circuit, solvent, name, claim, noise, correlations, out_dir, force,
               quiet):
    """Write a self-contained HTML report (with figures, JSON and SDF) for STRUCTURE [and PEAKS]."""

    from ringshift.comparison.run import run_compare
    from ringshift.io.peak_tables import read_peaks
    from ringshift.reporting import write_report
    from ringshift.reporting.pi_summary import pi_summary

    _claim(out_dir, force, kind="folder")  # refuse before any work is done; the lock is held to the end
    say = (lambda m: None) if quiet else (lambda m: click.echo(f"... {m}", err=True))
    say("structure, pi system and ring currents")
    if not peaks and (claim or noise is not None or solvent or correlations):
        given = [o for o, v in (("--claim", claim), ("--noise", noise), ("--solvent", solvent),
                                ("--correlations", correlations)) if v]
        raise InputError(f"{' and '.join(given)} {'needs' if len(given) == 1 else 'need'} observed peaks: give "
                         "PEAKS after STRUCTURE, or leave the option out")
    cross = _correlations(correlations)
    pred = _run_predict(structure, charge, conformers, seed, temperature, exchange, geometry, model, currents,
                        beta_model, scale, set_current, circuit, name)
    res = None
    if peaks:
        say("assignment and fit")
        _require_protons(pred, structure)
        pl = read_peaks(peaks, n_hydrogens=len(pred.protons), solvent=solvent)
        res = run_compare(pred, pl, claim=claim, noise_ppm=_noise(noise), seed=seed, correlations=cross)
    say("figures and report")
    paths = write_report(out_dir, pred, compare_result=res,
                         pi_summary=pi_summary(pred.structure, beta_model=beta_model, prediction=pred), force=force)
    click.echo(f"report: {paths['html']}")
