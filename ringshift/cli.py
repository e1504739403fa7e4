"""Command-line interface (click). Thin: parse options, call the pipeline, format the output.

Error contract: bad input and any OS error print one line ``ringshift: error: ...`` (naming the input or
the path) on stderr and exit 2; Ctrl-C and SIGTERM print one line and exit 130 and 143 (ringshift._signals);
an internal error prints one line with a hint to rerun with ``--debug`` and exits 1; ``--debug`` shows the
traceback. Warnings are one line each on stderr. Outputs follow one contract (ringshift.io.writing).
"""

from __future__ import annotations

import contextlib
import math
import os
import re
import sys
import warnings
from collections.abc import Sequence

import click

from ringshift import _signals
from ringshift.cli_limits import limit_options
from ringshift.constants import BETA_MODELS, CURRENT_SOURCES, DEFAULT_MODEL, MAP_MODELS, MODELS
from ringshift.errors import InputError, OutputError, RingshiftWarning

EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 1

#: Library errors name the API parameter (:mod:`ringshift._validation`); the command line shows its option.
OPTION_OF_PARAMETER = {
    "model": "--model", "currents": "--currents", "beta_model": "--beta", "user_circuits": "--circuit",
    "scale": "--scale", "set_current": "--set-current", "charge": "--charge", "conformers": "--conformers",
    "seed": "--seed", "temperature_K": "--temperature", "noise_ppm": "--noise", "claim": "--claim",
    "solvent": "--solvent", "weights": "--weights", "energy_unit": "--energy-unit", "memory_MB": "--memory",
    "jobs": "--jobs", "scheduler": "--scheduler", "contour_max_ppm": "--contour-max", "circuit": "--for-circuit",
    "exchange": "--exchange", "geometry": "--geometry", "name": "--name", "correlations": "--correlations",
    "configurations": "--configurations"}

#: Choices of --exchange and --geometry: ringshift.geometry.symmetry.EXCHANGE_RULES and
#: ringshift.io.structures.GEOMETRY_ROUTES (spelt out here so that importing the CLI stays light; a test checks them).
EXCHANGE_CHOICES = ("slow", "fast")
GEOMETRY_CHOICES = ("force-field", "gfn2-xtb")


class _Format(click.Choice):
    """The one ``--format`` vocabulary: ``text`` (readable tables), ``json``, and ``csv`` where a command has a
    per-proton table. The earlier name ``table`` is still accepted for ``text``."""

    def __init__(self, *choices: str):
        super().__init__(list(choices))

    def convert(self, value, param, ctx):
        return super().convert("text" if value == "table" else value, param, ctx)


#: Library argument paths (``peaks[1].fixed_groups``) as a command-line user knows them.
_PEAK_FIELD = re.compile(r"peaks\[(\d+)\](?:\.(\w+))?")
_FIELD_WORDS = {"fixed_groups": "fixed atoms", "shift_ppm": "shift", "integral": "integral", "kind": "kind",
                "label": "label"}


def _peak_words(m: re.Match) -> str:
    field = f" ({_FIELD_WORDS.get(m.group(2), m.group(2).replace('_', ' '))})" if m.group(2) else ""
    return f"peak {int(m.group(1)) + 1} of the peak list{field}"


def _error_text(exc: InputError) -> str:
    """One line for an InputError, with an API parameter name shown as the matching command-line option and
    no internal names (``n_hydrogens=0``, ``peaks[1].fixed_groups``) left in it."""
    if exc.source == "n_hydrogens":
        return ("the structure has no hydrogen atom, so there is no 1H spectrum to compare; expected a molecule "
                "with hydrogens")
    if exc.source and _PEAK_FIELD.fullmatch(exc.source):
        return " ".join(f"{_PEAK_FIELD.sub(_peak_words, exc.source)}: "
                        f"{_PEAK_FIELD.sub(_peak_words, exc.bare_message)}".split())
    if exc.source in OPTION_OF_PARAMETER:
        return " ".join(f"{OPTION_OF_PARAMETER[exc.source]}: {exc.bare_message}".split())
    if exc.parameter in OPTION_OF_PARAMETER:
        return f"{exc} (option {OPTION_OF_PARAMETER[exc.parameter]})"
    return str(exc)


def _show_warning(message, category, filename, lineno, file=None, line=None):  # noqa: ARG001
    text = " ".join(str(message).split())
    tag = "warning" if issubclass(category, RingshiftWarning) else category.__name__
    print(f"ringshift: {tag}: {text}", file=sys.stderr)


def _index_lists(values, option: str = "--circuit", example: str = "0,1,2,3,4,5"):
    """Atom-index lists from repeated options like ``0,1,2``: a list of lists of int, or None if none given."""
    out = []
    for v in values:
        items = v.replace(",", " ").split()
        if not items or not all(x.isascii() and x.isdigit() for x in items):
            raise InputError(f"expected atom indices separated by commas (e.g. {example}), got {v!r}", option)
        out.append([int(x) for x in items])
    return out or None


def parse_assignments(items: Sequence[str], option: str) -> dict[str, float]:
    """Parse ``LABEL=VALUE`` strings (e.g. ``R1=0.8``) into a mapping; errors name the option."""
    out: dict[str, float] = {}
    for item in items:
        if "=" not in item:
            raise InputError(f"expected LABEL=NUMBER (e.g. R1=0.8), got {item!r}", option)
        key, _, val = item.partition("=")
        try:
            num = float(val)
        except ValueError:
            raise InputError(f"{val!r} is not a number in {item!r}", option) from None
        if not math.isfinite(num):
            raise InputError(f"{val!r} is not a finite number", option)
        out[key.strip()] = num
    return out


structure_options = [
    click.option("--charge", type=int, default=None, help="Net charge (needed for XYZ input of ions)."),
    click.option("--conformers", type=click.IntRange(1, 5000), default=None, help="Conformers to generate when no "
                 "3D coordinates are given [default: 30, or 12-40 with a ring of 12 or more atoms]."),
    click.option("--seed", type=int, default=42, show_default=True, help="Random seed for conformer generation."),
    click.option("--temperature", type=click.FloatRange(1.0, 2000.0), default=298.15, show_default=True,
                 help="Temperature (K) for Boltzmann weights."),
    click.option("--exchange", type=click.Choice(EXCHANGE_CHOICES), default="slow", show_default=True,
                 help="Equivalent H. slow: symmetry of the best conformer (low-temperature spectrum); fast: also H "
                      "that conformational and bond-shift processes interchange (e.g. annulene inner/outer)."),
    click.option("--geometry", type=click.Choice(GEOMETRY_CHOICES), default="force-field", show_default=True,
                 help="MMFF94 (or input) conformers, or re-optimised by GFN2-xTB (pip install 'ringshift[xtb]')."),
] + limit_options  # --memory-limit, --time-limit

model_options = [
    click.option("--model", type=click.Choice(MODELS),
                 default=DEFAULT_MODEL, show_default=True, help="Shielding model."),
    click.option("--currents", type=click.Choice(CURRENT_SOURCES), default="huckel", show_default=True,
                 help="A priori current of each circuit: Hückel–London, or 12 nA/T on RDKit-aromatic rings."),
    click.option("--beta", "beta_model", type=click.Choice(BETA_MODELS), default="scf",
                 show_default=True,
                 help="Resonance integrals of the Hückel step: self-consistent bond lengths, geometry, or uniform."),
    click.option("--scale", multiple=True, metavar="LABEL=FACTOR",
                 help="Multiply a circuit's current, e.g. --scale M1=0.8 (repeatable)."),
    click.option("--set-current", "set_current", multiple=True, metavar="LABEL=NA_PER_T",
                 help="Set a circuit's current in nA/T (J > 0 diatropic), e.g. --set-current R1=-6."),
    click.option("--circuit", multiple=True, metavar="I,J,K,...",
                 help="Give a circuit explicitly as ring-ordered atom indices (0-based; repeatable)."),
]

#: The map draws loops only: its --model offers the models a map can draw (constants.MAP_MODELS).
map_model_options = [click.option("--model", type=click.Choice(MAP_MODELS), default="polygon", show_default=True,
                                  help="Shielding model of the map's loops.")] + model_options[1:]


def _apply(options):
    def deco(f):
        for opt in reversed(options):
            f = opt(f)
        return f
    return deco


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--debug", is_flag=True, help="Show tracebacks of errors.")
@click.version_option(package_name="ringshift")
@click.pass_context
def cli(ctx, debug):
    """ringshift: ring-current 1H NMR shifts of pi-conjugated rings.

    STRUCTURE arguments are a SMILES string or a MOL/SDF/XYZ file.
    """
    ctx.ensure_object(dict)
    ctx.obj["debug"] = debug


def _load(structure, charge, conformers, seed, temperature, exchange="slow", geometry="force-field"):
    from ringshift.io.structures import load_structure

    return load_structure(structure, charge=charge, conformers=conformers, seed=seed, temperature_K=temperature,
                          exchange=exchange, geometry=geometry)


#: --name of predict, compare and report: the compound's name in every title.
name_option = click.option("--name", "name", default=None, metavar="TEXT",
                           help="Compound name for titles (text header, HTML, figures) instead of the SMILES or "
                                "file name; also 'compound_name' in the JSON.")


def _run_predict(structure, charge, conformers, seed, temperature, exchange, geometry, model, currents, beta_model,
                 scale, set_current, circuit, name=None):
    from ringshift._validation import compound_name
    from ringshift.api import _named
    from ringshift.shifts.prediction import predict

    label = compound_name(name)
    s = _named(_load(structure, charge, conformers, seed, temperature, exchange, geometry), label)
    return predict(s, model=model, currents=currents, beta_model=beta_model, scale=parse_assignments(scale, "--scale"),
                   set_current=parse_assignments(set_current, "--set-current"),
                   user_circuits=_index_lists(circuit))


def _claim(output, force: bool, inputs=(), kind: str = "file") -> None:
    """Before any work: refuse an output the contract forbids (ringshift.io.writing, .folders) and hold its lock
    until the command ends, so a second run on the same output refuses at once. ``kind``: file, figure, folder."""
    from ringshift.io.locks import output_lock
    from ringshift.io.writing import STDOUT, check_not_empty, check_output_file

    if output is None:
        return
    check_not_empty(output, "-o/--output")
    if output == STDOUT and kind == "file":
        return
    if output == STDOUT and kind == "figure":
        raise OutputError("-: a figure needs a file name ending in .png, .svg or .pdf (standard output takes text)")
    if kind == "folder":
        from ringshift.io.folders import check_output_folder

        check_output_folder(output, force=force, kind="report")
    else:
        check_output_file(output, force=force, inputs=inputs)
    click.get_current_context().with_resource(output_lock(output))


def _emit(text: str, output, force: bool, inputs=()):
    """Write a command's text to ``output`` by the output contract, or to standard output (None or ``-``)."""
    from ringshift.io.writing import STDOUT, atomic_write, check_not_empty

    check_not_empty(output, "-o/--output")
    if output is not None and output != STDOUT:
        atomic_write(output, text, force=force, inputs=inputs)
        click.echo(f"wrote {output}", err=True)
    else:
        click.echo(text, nl=False)


@cli.command("predict")
@click.argument("structure")
@_apply(structure_options)
@_apply(model_options)
@name_option
@click.option("--format", "fmt", type=_Format("text", "json", "csv"), default="text", show_default=True,
              help="Readable table, JSON, or one CSV row per hydrogen.")
@click.option("-o", "--output", type=click.Path(dir_okay=False), default=None,
              help="Write to FILE (atomically; - for standard output).")
@click.option("--force", is_flag=True, help="Overwrite an existing output file.")
def predict_cmd(structure, charge, conformers, seed, temperature, exchange, geometry, model, currents, beta_model,
                scale, set_current, circuit, name, fmt, output, force):
    """Ring-current shift of every hydrogen of STRUCTURE."""
    from ringshift.reporting.json import prediction_to_dict, to_json
    from ringshift.reporting.text import prediction_csv, prediction_table

    _claim(output, force, (structure,))
    pred = _run_predict(structure, charge, conformers, seed, temperature, exchange, geometry, model, currents,
                        beta_model, scale, set_current, circuit, name)
    if fmt == "json":
        text = to_json(prediction_to_dict(pred))
    elif fmt == "csv":
        text = prediction_csv(pred)
    else:
        text = prediction_table(pred)
    _emit(text, output, force, (structure,))


@cli.command("pi")
@click.argument("structure")
@_apply(structure_options)
@click.option("--beta", "beta_model", type=click.Choice(BETA_MODELS), default="scf",
              show_default=True, help="Resonance integrals of the Hueckel step.")
@click.option("--plot", type=click.Path(dir_okay=False), default=None,
              help="Write a diagram of the pi levels (PNG or SVG by extension).")
@click.option("--format", "fmt", type=_Format("text", "json"), default="text", show_default=True,
              help="Readable text or JSON.")
@click.option("--force", is_flag=True, help="Overwrite an existing plot file.")
def pi_cmd(structure, charge, conformers, seed, temperature, exchange, geometry, beta_model, plot, fmt, force):
    """Pi-electron counts, 4n+2/4n class, planarity, Hueckel levels and circuit currents of STRUCTURE."""
    from ringshift.reporting.json import to_json
    from ringshift.reporting.pi_summary import pi_summary
    from ringshift.reporting.text import pi_text

    _claim(plot, force, (structure,), "figure")
    s = _load(structure, charge, conformers, seed, temperature, exchange, geometry)
    summary = pi_summary(s, beta_model=beta_model)
    if plot:
        from ringshift.reporting.level_diagram import save_levels_figure

        save_levels_figure(summary, plot, force=force)
        click.echo(f"wrote {plot}", err=True)
    click.echo(to_json(summary) if fmt == "json" else pi_text(summary), nl=False)


@cli.command("map")
@click.argument("structure")
@_apply(structure_options)
@_apply(map_model_options)
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False),
              help="Figure file (.png, .svg or .pdf).")
@click.option("--plane", type=click.Choice(["ring", "perpendicular", "both", "scan"]), default="both",
              show_default=True, help="Mean ring plane, the perpendicular plane, both, or a scan along the normal.")
@click.option("--height", type=click.FloatRange(-50.0, 50.0), default=0.0, show_default=True,
              help="Offset of the ring plane (A).")
@click.option("--extent", type=click.FloatRange(1.0, 50.0), default=6.0, show_default=True,
              help="Half-width of the map (A).")
@click.option("--grid", type=click.IntRange(11, 601), default=121, show_default=True, help="Points per side.")
@click.option("--for-circuit", "for_circuit", default=None, metavar="LABEL",
              help="Centre and orient the map on this circuit [default: the mean plane of all loop atoms].")
@click.option("--contour-max", "contour_max", type=click.FloatRange(0.05, 1000.0), default=10.0, show_default=True,
              metavar="PPM", help="Top of the colour scale, ± PPM (the same value gives the same colours for "
                                  "every compound; levels run on a 1-2-5 ladder two decades below it).")
@click.option("--force", is_flag=True, help="Overwrite an existing file.")
def map_cmd(structure, charge, conformers, seed, temperature, exchange, geometry, model, currents, beta_model, scale,
            set_current, circuit, output, plane, height, extent, grid, for_circuit, contour_max, force):
    """Shielding map (isotropic ring-current shift, ppm) of STRUCTURE's loops, with the chosen --model."""
    from ringshift.reporting.figure_style import save_figure
    from ringshift.reporting.map_loops import check_map_model
    from ringshift.reporting.maps import normal_scan_figure, shielding_map_figure

    check_map_model(model)  # refuse a model without a map before any work is done
    _claim(output, force, (structure,), "figure")
    pred = _run_predict(structure, charge, conformers, seed, temperature, exchange, geometry, model, currents,
                        beta_model, scale, set_current, circuit)
    if plane == "scan":
        fig = normal_scan_figure(pred, circuit=for_circuit, model=model)
    else:
        fig = shielding_map_figure(pred, circuit=for_circuit, plane=plane, height_A=height, extent_A=extent,
                                   grid=grid, model=model, contour_max_ppm=contour_max)
    save_figure(fig, output, force=force)
    click.echo(f"wrote {output}", err=True)


@cli.command("trajectory")
@click.argument("frames", type=click.Path(dir_okay=False))
@click.option("--charge", type=int, default=None, help="Net charge (XYZ frames of ions).")
@click.option("--model", type=click.Choice([m for m in MODELS if m != "network"]),
              default=DEFAULT_MODEL, show_default=True, help="Shielding model of the loops (polygon is the fastest).")
@click.option("--currents", type=click.Choice(CURRENT_SOURCES + ("huckel-per-frame",)), default="huckel",
              show_default=True, help="Currents of the first frame held fixed, 12 nA/T, or Hückel–London per frame.")
@click.option("--beta", "beta_model", type=click.Choice(BETA_MODELS), default="scf",
              show_default=True, help="Resonance integrals of the Hückel step (see `predict -h`).")
@click.option("--weights", type=click.Choice(["uniform", "boltzmann"]), default="uniform", show_default=True,
              help="Frame weights (Boltzmann from energies in the XYZ comment lines or SD fields).")
@click.option("--temperature", type=click.FloatRange(1.0, 2000.0), default=298.15, show_default=True,
              help="Temperature of the Boltzmann weights (K).")
@click.option("--energy-unit", type=click.Choice(["kcal/mol", "kJ/mol", "hartree", "eV"]), default="kcal/mol",
              show_default=True, help="Unit of bare energies in XYZ comment lines.")
@click.option("--frame-weights", type=click.Path(dir_okay=False), default=None, metavar="FILE",
              help="Given frame weights: a text file with one non-negative number per frame, in file order.")
@click.option("--exchange", type=click.Choice(["none", "auto"]), default="none", show_default=True,
              help="Fast exchange: average topologically equivalent protons (e.g. annulene inner/outer).")
@click.option("--exchange-group", "exchange_group", multiple=True, metavar="H,H,...",
              help="Protons (H atom indices) in fast exchange with each other; repeat for more groups.")
@click.option("--memory", type=click.FloatRange(10.0, 1e5), default=500.0, show_default=True,
              help="Memory budget for the frame blocks (MB).")
@click.option("--format", "fmt", type=_Format("text", "json"), default="text", show_default=True,
              help="Readable text or JSON.")
@click.option("-o", "--output", type=click.Path(dir_okay=False), default=None,
              help="Write to this file instead of standard output.")
@click.option("--force", is_flag=True, help="Replace an existing output file of ringshift.")
def trajectory_cmd(frames, charge, model, currents, beta_model, weights, temperature, energy_unit, frame_weights,
                   exchange, exchange_group, memory, fmt, output, force):
    """Frame-averaged ring-current shifts of a multi-frame XYZ or multi-record SDF (streamed)."""
    from ringshift._numbers import text as num
    from ringshift.reporting.json import CAUTION, to_json, trajectory_to_dict
    from ringshift.runners.averaging import read_weights_file
    from ringshift.runners.trajectory import predict_trajectory_file

    _claim(output, force, tuple(x for x in (frames, frame_weights) if x))
    if frame_weights is not None and weights != "uniform":
        raise InputError("give either --weights boltzmann or --frame-weights FILE, not both", "--frame-weights")
    if exchange_group and exchange != "none":
        raise InputError("give either --exchange auto or --exchange-group, not both", "--exchange-group")
    groups = _index_lists(exchange_group, "--exchange-group", "12,13,14") or []
    w = read_weights_file(frame_weights) if frame_weights is not None else weights
    ex = groups or (None if exchange == "none" else exchange)
    try:
        tp = predict_trajectory_file(frames, charge=charge, energy_unit=energy_unit, model=model, currents=currents,
                                     beta_model=beta_model, weights=w, temperature_K=temperature,
                                     exchange=ex, memory_MB=memory)
    except InputError as exc:   # name the user's file or option, not the API argument
        renamed = {"weights": frame_weights, "exchange": "--exchange-group" if groups else "--exchange"}
        if exc.source in renamed and renamed[exc.source]:
            raise InputError(exc.bare_message, renamed[exc.source]) from None
        raise
    if frame_weights is not None:
        weights = f"given ({frame_weights})"
    if groups:
        exchange = "given groups " + " | ".join(",".join(map(str, g)) for g in groups)
    if fmt == "json":
        text = to_json(trajectory_to_dict(tp))
    else:
        rows = [f"{tp.template.structure.name}: {tp.n_frames} frames, weights {weights}, model {model}, "
                f"exchange {exchange}", "", "group  nH  atoms (H)                 ring current  spread  predicted"]
        for g in tp.groups:
            atoms = " ".join(map(str, g.atoms))
            pred = num(g.predicted_ppm, "9.2f")
            rows.append(f"{g.label:<6} {len(g.atoms):>2}  {atoms[:24]:<24}  {num(g.ring_current_ppm, '+12.2f')}  "
                        f"{num(g.spread_ppm, '6.2f')}  {pred}")
        rows += [f"note: {w}" for w in tp.warnings] + ["", f"Caution: {CAUTION}"]
        text = "\n".join(rows) + "\n"
    _emit(text, output, force, tuple(x for x in (frames, frame_weights) if x))


@cli.command("batch")
@click.argument("library", type=click.Path(dir_okay=False))
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False, allow_dash=True),
              help="JSON-lines output, resumed if it exists (a ringshift batch output only); - for stdout.")
@click.option("--jobs", type=click.IntRange(1, 64), default=1, show_default=True,
              help="Worker processes (at most 64; lowered to the usable cores, with a note).")
@click.option("--scheduler", default=None, metavar="ADDRESS", help="Dask scheduler address (needs ringshift[dask]).")
@click.option("--restart", is_flag=True, help="Start the output (a ringshift batch output) afresh instead of resuming.")
@click.option("--quiet", is_flag=True, help="No progress bar.")
@_apply(structure_options)
@click.option("--model", type=click.Choice(MODELS),
              default=DEFAULT_MODEL, show_default=True, help="Shielding model (see `predict -h`).")
@click.option("--currents", type=click.Choice(CURRENT_SOURCES), default="huckel", show_default=True,
              help="A priori currents: Hückel–London, or 12 nA/T per aromatic ring.")
@click.option("--beta", "beta_model", type=click.Choice(BETA_MODELS), default="scf",
              show_default=True, help="Resonance integrals of the Hückel step (see `predict -h`).")
def batch_cmd(library, output, jobs, scheduler, restart, quiet, charge, conformers, seed, temperature, exchange,
              geometry, model, currents, beta_model):
    """Predict every molecule of LIBRARY (SDF, or SMILES file: SMILES [name] per line) into JSON lines."""
    from ringshift.runners.batch import run_batch

    load = {"charge": charge, "conformers": conformers, "seed": seed, "temperature_K": temperature,
            "exchange": exchange, "geometry": geometry}
    summ = run_batch(library, output, jobs=jobs, scheduler=scheduler, resume=not restart, overwrite=restart,
                     progress=not quiet, load_kwargs=load, model=model, currents=currents, beta_model=beta_model)
    click.echo(f"{summ.n_total} molecules: {summ.n_computed} computed ({summ.n_failed} failed), "
               f"{summ.n_skipped} already done; {summ.output} ({summ.elapsed_s:.1f} s)")


@cli.command("demo")
@click.option("-o", "--output", "out_dir", type=click.Path(file_okay=False), default="ringshift_demo_output",
              show_default=True, help="Folder for the demo reports.")
@click.option("--force", is_flag=True, help="Replace an existing output folder.")
@click.option("--quiet", is_flag=True, help="No progress messages.")
def demo_cmd(out_dir, force, quiet):
    """Run compare and report on the bundled, invented demo scenario."""
    from ringshift.runners.demo import run_demo

    def progress(msg):
        if not quiet:
            click.echo(f"... {msg}", err=True)

    click.echo(run_demo(out_dir, force=force, progress=progress), nl=False)


from ringshift import cli_spectra as _cli_spectra  # noqa: E402,F401  (registers compare and report on cli)


def main(argv=None):
    """Console entry point with the project's error contract: 0 done; 2 bad input or any OS error (one line
    naming the path); 130 Ctrl-C, 143 SIGTERM (ringshift._signals); 1 internal error."""
    argv = sys.argv[1:] if argv is None else list(argv)
    warnings.showwarning = _show_warning
    code = None     # a signal as the watchdog starts or stops, outside _run's own handling: still one line
    try:
        with _signals.stop_on_signals():
            code = _run(argv)
    except KeyboardInterrupt as exc:
        if code is None:                          # after a finished command the output is complete: keep it
            print(_signals.stop_message(exc), file=sys.stderr)
            code = _signals.exit_code(exc)
    sys.exit(code)


def _run(argv) -> int:
    debug = "--debug" in argv
    try:
        with cli.make_context("ringshift", list(argv)) as ctx:
            cli.invoke(ctx)
    except click.exceptions.Exit as exc:          # --help, --version
        return exc.exit_code
    except (KeyboardInterrupt, click.exceptions.Abort) as exc:
        print(_signals.stop_message(exc), file=sys.stderr)
        return _signals.exit_code(exc)
    except click.exceptions.ClickException as exc:   # usage errors: one line, exit 2
        msg = " ".join(exc.format_message().split())
        print(f"ringshift: error: {msg}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except (InputError, OutputError) as exc:
        if debug:
            raise
        text = _error_text(exc) if isinstance(exc, InputError) else str(exc).replace("use force", "use --force")
        print(f"ringshift: error: {text}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except BrokenPipeError:                         # the reader of standard output went away (e.g. | head)
        with contextlib.suppress(OSError):
            sys.stdout = open(os.devnull, "w")      # noqa: SIM115 - nothing more may reach the closed pipe
        return 128 + 13
    except OSError as exc:                          # disk full, name too long, permission, read-only, ...
        if debug:
            raise
        from ringshift.io.writing import public_path
        where = public_path(os.fsdecode(exc.filename)) if exc.filename else "output"
        print(f"ringshift: error: {where}: {exc.strerror or ' '.join(str(exc).split())}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except Exception as exc:  # internal error
        if debug:
            raise
        print(f"ringshift: internal error: {type(exc).__name__}: {' '.join(str(exc).split())} "
              f"(rerun with --debug for the traceback)", file=sys.stderr)
        return EXIT_INTERNAL
    return 0
