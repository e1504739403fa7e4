"""The API's writers: :func:`report` (a report folder) and :func:`write_nmredata` (the NMReDATA file of a
comparison). Both are re-exported by :mod:`ringshift.api` and :mod:`ringshift`; the argument checks, names and
defaults are those of the rest of the API."""

from __future__ import annotations

import os
from pathlib import Path

from ringshift.api import _api_names, _named, _not_given, _path, _prediction, compare
from ringshift.errors import InputError, OutputError

TYPE_CHECKING = False  # typing itself costs a few ms at import; type checkers read the block below
if TYPE_CHECKING:
    from collections.abc import Mapping, Sequence

    from ringshift.api import StructureLike
    from ringshift.comparison.run import CompareResult
    from ringshift.io.correlations import CorrelationList
    from ringshift.shifts.records import Prediction
    from ringshift.spectra.peaks import PeakList

__all__ = ["report", "write_nmredata"]


def report(structure: StructureLike | Prediction | CompareResult,
           peaks: str | os.PathLike[str] | PeakList | None = None, *, out_dir: str | os.PathLike[str],
           force: bool = False, claim: str | None = None,
           solvent: str | None = None, noise_ppm: float | str | None = None, seed: int | None = None,
           model: str | None = None, currents: str | None = None, beta_model: str | None = None,
           scale: Mapping[str, float] | None = None, set_current: Mapping[str, float] | None = None,
           user_circuits: Sequence[Sequence[int]] | None = None, separation_A: float | None = None,
           charge: int | None = None, conformers: int | None = None, temperature_K: float | None = None,
           fmt: str | None = None, exchange: str | None = None, geometry: str | None = None,
           name: str | None = None,
           correlations: str | os.PathLike[str] | CorrelationList | None = None) -> dict[str, Path]:
    """Write a self-contained report folder (HTML page, figures, JSON, SDF) and return its files.

    Parameters
    ----------
    structure : str, path, Structure, Prediction or CompareResult
        What to report. A CompareResult reports its prediction and comparison (give no ``peaks``
        then); anything else is predicted (and compared with ``peaks``) as in :func:`compare`.
    peaks : str, path or PeakList, optional
        Observed peaks: adds the assignment, fitted currents and verdict.
    out_dir : str or path
        The folder to create; it must not exist unless ``force=True`` (then it is replaced).
    force : bool
        Replace an existing folder.
    claim, solvent, noise_ppm, correlations : optional
        As in :func:`compare`; they need ``peaks``.
    seed, model, currents, beta_model, scale, set_current, user_circuits, separation_A : optional
        As in :func:`compare`.
    charge, conformers, temperature_K, fmt, exchange, geometry : optional
        As in :func:`compare`.
    name : str, optional
        The compound's name for the page title, headings and figure titles, as in :func:`predict` (also for
        a Prediction or CompareResult given here).

    Returns
    -------
    dict of str to pathlib.Path
        ``html`` (report.html), ``results`` (JSON), ``pi`` (JSON), ``sdf`` and one entry per figure file.

    Examples
    --------
    >>> import tempfile
    >>> from importlib.resources import files
    >>> demo = files("ringshift") / "data" / "demo"
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     paths = report(demo / "fj14c.sdf", demo / "fj14c_peaks.csv", out_dir=f"{tmp}/fj14c")
    ...     print(paths["html"].name, paths["html"].is_file(), paths["results"].name)
    report.html True results.json
    """

    from ringshift._validation import compound_name
    from ringshift.comparison.run import CompareResult
    from ringshift.reporting import write_report
    from ringshift.reporting.pi_summary import pi_summary

    label = compound_name(name)

    out = _path(out_dir)
    if out is None:
        raise InputError(f"expected a folder path, got {type(out_dir).__name__}", "out_dir")
    if not isinstance(force, bool):
        raise InputError(f"expected True or False, got {force!r}", "force")
    if Path(out).exists() and not force:  # refuse before any work is done
        raise OutputError(f"{out}: already exists; pass force=True to replace it")
    compare_opts = {"claim": claim, "solvent": solvent, "noise_ppm": noise_ppm, "correlations": correlations}
    model_opts = {"seed": seed, "model": model, "currents": currents, "beta_model": beta_model, "scale": scale,
                  "set_current": set_current, "user_circuits": user_circuits, "separation_A": separation_A,
                  "charge": charge, "conformers": conformers, "temperature_K": temperature_K, "fmt": fmt,
                  "exchange": exchange, "geometry": geometry}
    result: CompareResult | None
    if isinstance(structure, CompareResult):
        _not_given({"peaks": peaks, **compare_opts, **model_opts}, "the CompareResult is already computed")
        result = structure
    elif peaks is not None:
        result = compare(structure, peaks, claim=claim, solvent=solvent, noise_ppm=noise_ppm, seed=seed, model=model,
                         currents=currents, beta_model=beta_model, scale=scale, set_current=set_current,
                         user_circuits=user_circuits, separation_A=separation_A, charge=charge,
                         conformers=conformers, temperature_K=temperature_K, fmt=fmt, exchange=exchange,
                         geometry=geometry, correlations=correlations)
    else:
        _not_given(compare_opts, "comparison options need observed peaks (give peaks)")
        result = None
    result = _named(result, label)
    if result is not None:
        pred = result.prediction
    else:
        pred = _prediction(structure, seed=seed, model=model, currents=currents, beta_model=beta_model, scale=scale,
                           set_current=set_current, user_circuits=user_circuits, separation_A=separation_A,
                           charge=charge, conformers=conformers, temperature_K=temperature_K, fmt=fmt,
                           exchange=exchange, geometry=geometry)
        pred = _named(pred, label)
    beta = pred.provenance.get("beta_model", "scf")
    with _api_names():
        paths = write_report(out, pred, compare_result=result,
                             pi_summary=pi_summary(pred.structure, beta_model=beta, prediction=pred), force=force)
    return {k: Path(v) for k, v in paths.items()}


def write_nmredata(result: CompareResult, path: str | os.PathLike[str], *, force: bool = False,
                   larmor_mhz: float | None = None) -> Path:
    """Write a comparison's assignment as an NMReDATA file (SD file; name it ``*.nmredata.sdf``).

    The structure with explicit hydrogens, the assigned ¹H shifts, integrals and multiplicities in the open
    NMReDATA format 1.1 (Pupier et al., Magn. Reson. Chem. 2018, 56, 703–715); what is written is listed in
    :mod:`ringshift.io.nmredata`, whose :func:`~ringshift.io.nmredata.read_nmredata` reads it back.

    Parameters
    ----------
    result : CompareResult
        What :func:`compare` returned.
    path : str or path
        The file to write (atomically); an existing file only with ``force=True``, never an input of the
        comparison (its structure or peak file).
    force : bool
        Overwrite an existing file.
    larmor_mhz : float, optional
        ¹H frequency of the spectrometer, MHz, which the format requires; default: the peak list's
        (``# observe_mhz = ...`` in a CSV table, ``##.OBSERVE FREQUENCY`` in JCAMP-DX).

    Returns
    -------
    pathlib.Path

    Examples
    --------
    >>> import tempfile
    >>> from importlib.resources import files
    >>> from ringshift.io.nmredata import read_nmredata
    >>> demo = files("ringshift") / "data" / "demo"
    >>> res = compare(demo / "fj14c.sdf", demo / "fj14c_1H.jdx")
    >>> with tempfile.TemporaryDirectory() as tmp:
    ...     path = write_nmredata(res, f"{tmp}/fj14c.nmredata.sdf")
    ...     record = read_nmredata(path)
    >>> record.version, record.larmor_mhz, len(record.assignments)
    ('1.1', 500.0, 4)
    """
    from ringshift.comparison.run import CompareResult
    from ringshift.io.nmredata import write_nmredata as _write

    if not isinstance(result, CompareResult):
        raise InputError(f"expected the CompareResult of compare(), got {type(result).__name__}", "result")
    out = _path(path)
    if out is None:
        raise InputError(f"expected a file path, got {type(path).__name__}", "path")
    if not isinstance(force, bool):
        raise InputError(f"expected True or False, got {force!r}", "force")
    inputs = [p for p in (result.prediction.structure.source, result.peaks.source) if isinstance(p, str)]
    with _api_names():
        return _write(out, result, force=force, inputs=inputs, larmor_mhz=larmor_mhz)
