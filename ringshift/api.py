"""The Python API: five functions for scripts and notebooks.

:func:`load_structure` → :func:`predict` → (:func:`read_peaks`) → :func:`compare` → :func:`report`, the
same pipeline as the ``predict``, ``compare`` and ``report`` commands, with the library's option names
(``model``, ``currents``, ``beta_model``, ``charge``, ``conformers``, ``seed``, ``exchange``, ``geometry``,
``claim``, ``solvent``, ``noise_ppm``, ...). Every function takes what the previous one returns, or the raw
input: a SMILES, a path to a .mol/.sdf/.xyz file, or a loaded :class:`~ringshift.io.structures.Structure`.

Errors. Bad input raises :class:`ringshift.errors.InputError` naming the argument (``model``,
``peaks``, ...); an option that cannot apply (``conformers`` with a Structure already loaded, ``model``
with a finished Prediction) is an error rather than silently ignored. Existing report folders raise
:class:`ringshift.errors.OutputError` unless ``force=True``.

Results. :class:`~ringshift.shifts.records.Prediction` and :class:`~ringshift.comparison.run.CompareResult`
print as one line, show as HTML tables in Jupyter and give pandas DataFrames with ``to_frame()``
(see :mod:`ringshift._display`).

This module imports nothing heavy at import time, so ``import ringshift`` stays fast; RDKit, SciPy
and the pipeline load on the first call.
"""

from __future__ import annotations

import os
from contextlib import contextmanager

from ringshift.errors import InputError, OutputError

TYPE_CHECKING = False  # typing itself costs a few ms at import; type checkers read the block below
if TYPE_CHECKING:
    from collections.abc import Iterator, Mapping, Sequence
    from typing import TypeAlias

    from ringshift.comparison.run import CompareResult
    from ringshift.io.correlations import CorrelationList
    from ringshift.io.structures import Structure
    from ringshift.shifts.records import Prediction
    from ringshift.spectra.peaks import PeakList

    #: What the structure argument of :func:`predict` and :func:`compare` accepts.
    StructureLike: TypeAlias = "str | os.PathLike[str] | Structure"

__all__ = ["load_structure", "predict", "read_peaks", "compare", "report", "write_nmredata"]

#: Seed used for conformers and for the comparer's random starts when none is given (as the CLI).
DEFAULT_SEED = 42


# ------------------------------------------------------------------------------ error vocabulary
# The library names its arguments in errors (ringshift._validation); only "use force" of an output that
# exists is worded here as the argument this module takes.
@contextmanager
def _api_names() -> Iterator[None]:
    """Re-raise an OutputError that asks for ``force`` with the argument as it is passed here."""
    try:
        yield
    except OutputError as exc:
        message = str(exc).replace("use force", "pass force=True")
        if message == str(exc):
            raise
        raise OutputError(message).with_traceback(exc.__traceback__) from None


# ----------------------------------------------------------------------------------- validation
# Checks use the library's one gate (ringshift._validation, imported on call: it loads NumPy).
def _choice(value, choices: Sequence[str], name: str) -> None:
    from ringshift._validation import choice

    choice(value, choices, name, name.replace("_", " "))


def _not_given(options: Mapping[str, object], why: str) -> None:
    """Refuse options that cannot apply (rather than ignoring them); the error names the first."""
    given = [k for k, v in options.items() if v is not None]
    if given:
        also = f" (nor can {', '.join(given[1:])})" if len(given) > 1 else ""
        raise InputError(f"cannot be used here{also}: {why}", given[0])


def _model_options(model, currents, beta_model, scale, set_current, user_circuits, separation_A) -> dict:
    """Checked keyword arguments of :func:`ringshift.shifts.prediction.predict` (None = its default)."""
    from ringshift.constants import BETA_MODELS, CURRENT_SOURCES, MODELS

    out: dict = {}
    for name, value, choices in (("model", model, MODELS), ("currents", currents, CURRENT_SOURCES),
                                 ("beta_model", beta_model, BETA_MODELS)):
        if value is not None:
            _choice(value, choices, name)
            out[name] = value
    from ringshift import _validation as v

    if separation_A is not None:
        out["separation_A"] = v.real(separation_A, "separation_A", positive=True)
    for name, checked in (("scale", v.label_numbers(scale, "scale")),
                          ("set_current", v.label_numbers(set_current, "set_current")),
                          ("user_circuits", v.index_lists(user_circuits, "user_circuits"))):
        if checked is not None:
            out[name] = checked
    return out


def _compare_options(claim, noise_ppm, solvent) -> None:
    from ringshift.comparison.evidence import CLAIM_VERDICT
    from ringshift.spectra.solvents import _solvent_name

    if claim is not None:
        _choice(claim, tuple(CLAIM_VERDICT), "claim")
    if noise_ppm is not None and noise_ppm != "auto":
        if isinstance(noise_ppm, str):
            raise InputError(f"expected a number of ppm > 0, 'auto' or None, got {noise_ppm!r}", "noise_ppm")
        from ringshift._validation import real

        real(noise_ppm, "noise_ppm", positive=True)
    if solvent is not None:
        _solvent_name(solvent)   # raises InputError("solvent ... unknown; expected one of ...", "solvent")


def _path(value) -> str | None:
    """``value`` as a str path if it is a str or an os.PathLike of str, else None."""
    if isinstance(value, (str, os.PathLike)):
        text = os.fspath(value)
        if isinstance(text, str):
            return text
    return None


def _structure(structure, load: Mapping[str, object]) -> Structure:
    from ringshift.io.structures import Structure

    if isinstance(structure, Structure):
        _not_given(load, "the Structure is already loaded; loading options apply to a SMILES or a file path")
        return structure
    spec = _path(structure)
    if spec is None:
        raise InputError(f"expected a SMILES, a path to a .mol/.sdf/.xyz file or a Structure, got "
                         f"{type(structure).__name__}", "structure")
    return load_structure(spec, **{k: v for k, v in load.items() if v is not None})  # type: ignore[arg-type]


def _named(result, name: str | None):
    """``result`` (a Structure, Prediction or CompareResult) with the compound's name ``name`` in its structure:
    ``Structure.name`` (what every title shows) and ``Structure.label`` (the given name, for the JSON)."""
    import sys
    from dataclasses import replace

    from ringshift.shifts.records import Prediction

    if name is None or result is None:
        return result
    run = sys.modules.get("ringshift.comparison.run")  # not loaded: result cannot be a CompareResult (start-up)
    if run is not None and isinstance(result, run.CompareResult):
        return replace(result, prediction=_named(result.prediction, name))
    if isinstance(result, Prediction):
        return replace(result, structure=_named(result.structure, name))
    return replace(result, name=name, label=name)


# ------------------------------------------------------------------------------------ functions
def load_structure(spec: str | os.PathLike[str], *, charge: int | None = None, conformers: int | None = None,
                   seed: int = DEFAULT_SEED, temperature_K: float = 298.15, energy_window_kcal_mol: float = 10.0,
                   rmsd_prune_A: float = 0.3, fmt: str | None = None, exchange: str = "slow",
                   geometry: str = "force-field") -> Structure:
    """Read a SMILES or a .mol/.sdf/.xyz file into a :class:`~ringshift.io.structures.Structure`.

    Parameters
    ----------
    spec : str or path
        A path to a .mol, .sdf/.sd or .xyz file (chosen by extension), otherwise a SMILES.
    charge : int, optional
        Net charge; needed for XYZ files of ions; must match the formal charges of other inputs.
    conformers : int, optional
        Conformers to generate without 3D input (default: 30, or 200 with a ring of 12 or more atoms).
    seed : int
        Seed of the conformer generator (0 to 2**31 - 1); the same seed gives the same coordinates.
    temperature_K : float
        Temperature of the Boltzmann weights, K.
    energy_window_kcal_mol, rmsd_prune_A : float
        Generated conformers above this energy window (kcal/mol) or within this heavy-atom RMSD (Å)
        of a lower one are dropped.
    fmt : {"smiles", "mol", "sdf", "xyz"}, optional
        Force the input format.
    exchange : {"slow", "fast"}
        Groups of equivalent protons for slow exchange (the symmetry of the lowest-energy conformer: the
        low-temperature spectrum) or fast exchange (protons that conformational and bond-shift processes
        interchange are averaged too: the high-temperature limit, e.g. [18]annulene's inner and outer H).
    geometry : {"force-field", "gfn2-xtb"}
        Conformers from MMFF94 (or the input), or re-optimised with GFN2-xTB (``pip install 'ringshift[xtb]'``).

    Returns
    -------
    Structure
        Explicit-H molecule with conformer coordinates ``coords`` (n_conf, n_atoms, 3) in Å,
        ``weights`` (n_conf,) and groups of equivalent hydrogens ``h_groups``.

    Examples
    --------
    >>> s = load_structure("c1ccccc1", conformers=1)
    >>> s.mol.GetNumAtoms(), s.coords.shape, s.h_groups
    (12, (1, 12, 3), ((6, 7, 8, 9, 10, 11),))
    """
    from ringshift.io.structures import load_structure as _load

    text = _path(spec)
    if text is None:
        raise InputError(f"expected a SMILES or a path to a .mol/.sdf/.xyz file, got {type(spec).__name__}",
                         "spec")
    with _api_names():
        return _load(text, charge=charge, conformers=conformers, seed=seed, temperature_K=temperature_K,
                     energy_window_kcal_mol=energy_window_kcal_mol, rmsd_prune_A=rmsd_prune_A, fmt=fmt,
                     exchange=exchange, geometry=geometry)


def predict(structure: StructureLike, *, model: str = "johnson-bovey", currents: str = "huckel",
            beta_model: str = "scf",
            scale: Mapping[str, float] | None = None, set_current: Mapping[str, float] | None = None,
            user_circuits: Sequence[Sequence[int]] | None = None, separation_A: float | None = None,
            charge: int | None = None, conformers: int | None = None, seed: int | None = None,
            temperature_K: float | None = None, fmt: str | None = None, exchange: str | None = None,
            geometry: str | None = None, name: str | None = None) -> Prediction:
    """Ring-current ¹H shift of every hydrogen of a structure.

    Parameters
    ----------
    structure : str, path or Structure
        A SMILES, a .mol/.sdf/.xyz path (loaded with :func:`load_structure`) or a loaded Structure.
    model : {"polygon", "johnson-bovey", "haigh-mallion", "dipole", "network"}
        Shielding model; default ``"johnson-bovey"`` (:data:`ringshift.constants.DEFAULT_MODEL`, chosen on the
        published development set of benchmarks/accuracy).
    currents : {"huckel", "benzene"}
        A priori current of each circuit: Hückel–London (relative to benzene × 12 nA/T), or
        12 nA/T on every ring RDKit calls aromatic.
    beta_model : {"scf", "scf-coulson", "distance", "uniform"}
        Resonance integrals of the Hückel step.
    scale : mapping of circuit label to factor, optional
        Multiplies a circuit's current, e.g. ``{"M1": 0.8}``.
    set_current : mapping of circuit label to nA/T, optional
        Sets a circuit's current (J > 0 diatropic), e.g. ``{"R1": -6.0}``.
    user_circuits : list of lists of int, optional
        Circuits given as ring-ordered 0-based atom indices instead of the perceived ones.
    separation_A : float, optional
        Half-separation of the double loops, Å (default 0.64, Johnson–Bovey).
    charge, conformers, seed, temperature_K, fmt, exchange, geometry : optional
        Passed to :func:`load_structure` when ``structure`` is a SMILES or a path (defaults as there);
        an error with a loaded Structure.
    name : str, optional
        The compound's name for titles (text header, figures, HTML) instead of the SMILES or file name; it is
        also the JSON's ``name`` and ``compound_name``. One line, at most 200 characters.

    Returns
    -------
    Prediction
        ``circuits``, ``protons``, ``groups``; ``to_frame()`` gives one row per hydrogen.

    Examples
    --------
    >>> pred = predict("c1ccccc1", conformers=1)
    >>> pred
    <Prediction c1ccccc1 C6H6: 1 circuit (R1 6π +12.0 nA/T), 6 H in 1 group, model johnson-bovey, 1 conformer>
    >>> [round(p.ring_current_ppm, 2) for p in pred.protons] == [round(pred.protons[0].ring_current_ppm, 2)] * 6
    True
    """
    from ringshift._validation import compound_name
    from ringshift.shifts.prediction import predict as _predict

    opts = _model_options(model, currents, beta_model, scale, set_current, user_circuits, separation_A)
    label = compound_name(name)
    s = _structure(structure, {"charge": charge, "conformers": conformers, "seed": seed,
                               "temperature_K": temperature_K, "fmt": fmt, "exchange": exchange,
                               "geometry": geometry})
    with _api_names():
        return _predict(_named(s, label), **opts)


def read_peaks(path: str | os.PathLike[str], *, n_hydrogens: int | None = None, solvent: str | None = None,
               flag_tms: bool = True, prominence_sigma: float = 8.0) -> PeakList:
    """Read observed ¹H peaks from a CSV/TSV peak table or a JCAMP-DX file (spectrum or peak table).

    Parameters
    ----------
    path : str or path
        ``*.jdx``/``*.dx``/``*.jcamp`` (or a file starting with ``##LABEL=``) is JCAMP-DX, anything else a
        table with a shift column (``shift_ppm``, ``ppm``, ``delta``, ...) and optional ``integral``,
        ``label``, ``atoms``, ``kind`` columns.
    n_hydrogens : int, optional
        The molecule's hydrogen count: integrals are scaled to it and the peak count is checked.
        :func:`compare` passes it for you.
    solvent : str, optional
        Deuterated solvent (e.g. ``"CDCl3"``) whose residual peak is marked ``kind="solvent"``.
    flag_tms : bool
        Mark a peak at 0.00 ppm as TMS.
    prominence_sigma : float
        Peak-picking threshold of a spectrum, in noise σ.

    Returns
    -------
    PeakList
        ``peaks`` (each with ``shift_ppm``, ``integral``, ``kind``, ...), ``source`` and ``warnings``.

    Examples
    --------
    >>> from importlib.resources import files
    >>> demo = files("ringshift") / "data" / "demo"
    >>> peaks = read_peaks(demo / "fj14c_peaks.csv")
    >>> [p.shift_ppm for p in peaks.peaks]
    [8.26, 7.99, 2.56, -3.48]
    """
    from ringshift.io.peak_tables import read_peaks as _read

    text = _path(path)
    if text is None:
        raise InputError(f"expected a path to a peak table or JCAMP-DX file, got {type(path).__name__}", "path")
    with _api_names():
        return _read(text, n_hydrogens=n_hydrogens, solvent=solvent, flag_tms=flag_tms,
                     prominence_sigma=prominence_sigma)


def compare(structure: StructureLike | Prediction, peaks: str | os.PathLike[str] | PeakList, *,
            claim: str | None = None, solvent: str | None = None, noise_ppm: float | str | None = None,
            seed: int | None = None, model: str | None = None, currents: str | None = None,
            beta_model: str | None = None, scale: Mapping[str, float] | None = None,
            set_current: Mapping[str, float] | None = None, user_circuits: Sequence[Sequence[int]] | None = None,
            separation_A: float | None = None, charge: int | None = None, conformers: int | None = None,
            temperature_K: float | None = None, fmt: str | None = None, exchange: str | None = None,
            geometry: str | None = None, name: str | None = None,
            correlations: str | os.PathLike[str] | CorrelationList | None = None,
            configurations: str | None = None) -> CompareResult:
    """Assign observed peaks to a structure's protons, fit its ring currents and give a verdict.

    Parameters
    ----------
    structure : str, path, Structure or Prediction
        What to compare: a SMILES or file path (loaded and predicted here), a Structure (predicted
        here) or a finished :class:`~ringshift.shifts.records.Prediction`.
    peaks : str, path or PeakList
        A peak table or JCAMP-DX file (read with :func:`read_peaks`, integrals scaled to the molecule's
        hydrogens) or a PeakList already read.
    claim : {"aromatic", "antiaromatic", "nonaromatic"}, optional
        An aromaticity claim to check against the spectrum.
    solvent : str, optional
        Deuterated solvent (with a peak file): a line at its residual position or at 0 ppm (TMS) is a
        candidate, kept in the sample or set aside by the integrals (a PeakList was decided when it was read).
    noise_ppm : float or "auto", optional
        Model error of a predicted shift, ppm (default 0.3), or "auto" (maximum evidence).
    seed : int, optional
        Seed of the conformer generator and of the fit's random starts (default 42).
    model, currents, beta_model, scale, set_current, user_circuits, separation_A : optional
        As in :func:`predict` (its defaults); an error with a Prediction.
    charge, conformers, temperature_K, fmt, exchange, geometry : optional
        As in :func:`load_structure`; only with a SMILES or a path.
    name : str, optional
        The compound's name for titles, as in :func:`predict` (also for a Prediction given here).
    correlations : str, path or CorrelationList, optional
        H–H correlations (COSY cross peaks): a correlation CSV (``shift_a_ppm``, ``shift_b_ppm``, optional
        ``kind`` and ``strength``; :mod:`ringshift.io.correlations`) or a list already read. Correlated peaks must
        hold groups whose protons are 3 or 4 bonds apart; couplings in the peak list's ``j_hz`` column are used
        with or without it. ``comparison.correlations`` reports what they confirmed and ruled out.
    configurations : {"given", "open", "all"}, optional
        Ring E/Z of a SMILES: "given" uses it as written; "open" ranks every configuration of the ring double
        bonds it leaves open against the peaks, "all" of every ring double bond
        (:mod:`ringshift.runners.configurations`); the result is the best configuration's comparison with a
        ``configurations`` summary. Default: "open" when a SMILES leaves ring E/Z open, else "given".

    Returns
    -------
    CompareResult
        ``comparison`` (verdict, fitted ``circuits``, ``assignment``, ``peaks``, ``claim``), ``prediction``,
        ``peaks`` and ``configurations`` (None unless configurations were ranked); ``to_frame()`` gives one row
        per peak.

    Examples
    --------
    >>> from importlib.resources import files
    >>> demo = files("ringshift") / "data" / "demo"
    >>> res = compare(demo / "fj14c.sdf", demo / "fj14c_peaks.csv", claim="aromatic")
    >>> res.comparison.verdict, res.comparison.claim.outcome
    ('diatropic', 'supported')
    >>> sorted(a.peak_label for a in res.comparison.assignment)
    ['p1', 'p2', 'p3', 'p4']
    """
    from ringshift._validation import compound_name
    from ringshift.comparison.run import run_compare
    from ringshift.io.correlations import CorrelationList, read_correlations
    from ringshift.io.structures import require_protons
    from ringshift.spectra.peaks import PeakList

    _compare_options(claim, noise_ppm, solvent)
    label = compound_name(name)
    cross: CorrelationList | None = correlations if isinstance(correlations, CorrelationList) else None
    if correlations is not None and not isinstance(correlations, CorrelationList):
        corr_path = _path(correlations)
        if corr_path is None:
            raise InputError(f"expected a path to a correlation CSV or a CorrelationList, got "
                             f"{type(correlations).__name__}", "correlations")
        cross = read_correlations(corr_path)
    peak_path = _path(peaks)
    if peak_path is None and not isinstance(peaks, PeakList):
        raise InputError(f"expected a path to a peak table or JCAMP-DX file, or a PeakList, got "
                         f"{type(peaks).__name__}", "peaks")
    if isinstance(peaks, PeakList) and solvent is not None:
        raise InputError("solvent goes with a peak file; a PeakList's solvent lines were decided when it was read "
                         "(read_peaks(path, solvent=...))", "solvent")
    loads_here = _path(structure) is not None  # the seed also seeds the conformers
    if not loads_here or configurations == "given":
        _not_given({"configurations": None if configurations == "given" else configurations},
                   "configurations are enumerated from a SMILES; a loaded structure has its configuration")
    else:
        from ringshift.runners.configurations import compare_configurations, resolve_mode

        mode, reason, base = resolve_mode(_path(structure) or "", configurations, fmt=fmt)
        if mode != "given":
            from rdkit import Chem

            if charge is not None and charge != Chem.GetFormalCharge(base):
                raise InputError(f"contradicts the net formal charge {Chem.GetFormalCharge(base)} of the SMILES",
                                 "charge")
            model_opts = _model_options(model, currents, beta_model, scale, set_current, user_circuits, separation_A)
            with _api_names():
                return _named(compare_configurations(
                    _path(structure) or "", base, mode, reason, peak_path if peak_path is not None else peaks,
                    load={"conformers": conformers, "temperature_K": temperature_K, "exchange": exchange,
                          "geometry": geometry}, model=model_opts, claim=claim, noise_ppm=noise_ppm,
                    seed=DEFAULT_SEED if seed is None else seed, solvent=solvent, correlations=cross), label)
    pred = _prediction(structure, seed=seed if loads_here else None, model=model, currents=currents,
                       beta_model=beta_model, scale=scale, set_current=set_current, user_circuits=user_circuits,
                       separation_A=separation_A, charge=charge, conformers=conformers,
                       temperature_K=temperature_K, fmt=fmt, exchange=exchange, geometry=geometry)
    pred = _named(pred, label)
    require_protons(pred.structure.mol)  # nothing a ¹H spectrum could be compared with (no H, or only ²H/³H)
    if peak_path is not None:
        peak_list = read_peaks(peak_path, n_hydrogens=len(pred.protons), solvent=solvent)
    else:
        peak_list = peaks  # type: ignore[assignment]
    with _api_names():
        return run_compare(pred, peak_list, claim=claim, noise_ppm=noise_ppm,
                           seed=DEFAULT_SEED if seed is None else seed, correlations=cross)


def _prediction(structure, *, seed, model, currents, beta_model, scale, set_current, user_circuits, separation_A,
                charge, conformers, temperature_K, fmt, exchange=None, geometry=None) -> Prediction:
    from ringshift.shifts.records import Prediction

    model_opts = {"model": model, "currents": currents, "beta_model": beta_model, "scale": scale,
                  "set_current": set_current, "user_circuits": user_circuits, "separation_A": separation_A}
    load = {"charge": charge, "conformers": conformers, "temperature_K": temperature_K, "fmt": fmt,
            "exchange": exchange, "geometry": geometry}
    if isinstance(structure, Prediction):
        _not_given({**model_opts, **load, "seed": seed},
                   "the Prediction is already computed; prediction options apply to a SMILES, a file path "
                   "or a Structure")
        return structure
    return predict(structure, **{k: v for k, v in {**model_opts, **load, "seed": seed}.items() if v is not None})


# report and write_nmredata (the writers of the API) live in ringshift._api_outputs
from ringshift._api_outputs import report, write_nmredata  # noqa: E402
