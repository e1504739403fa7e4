"""Optional semi-empirical geometry: re-optimise the lowest force-field conformers with GFN2-xTB.

GFN2-xTB (Bannwarth, Ehlert & Grimme, J. Chem. Theory Comput. 2019, 15, 1652) is evaluated by the
``tblite`` package (LGPL-3.0, wheels for Linux x86_64 only), an optional extra: ``pip install
'ringshift[xtb]'``. Without it, :func:`gfn2_optimise` raises a one-line :class:`~ringshift.errors.InputError`
that names the install command (:data:`INSTALL_HINT`).

The optimiser is SciPy's L-BFGS-B (Byrd, Lu, Nocedal & Zhu, SIAM J. Sci. Comput. 1995, 16, 1190) on
tblite's energies and Cartesian gradients, in bohr and hartree. Design notes §7 hold the measured facts
behind the choices here: tblite computes the neutral (radical) molecule unless told the net charge and
spin, so both are always passed and an odd electron count without unpaired electrons is refused; a loose
convergence changed [12]annulene's answer, so a conformer counts as converged only when its largest
Cartesian gradient component is at most :data:`GRADIENT_TOL_EH_PER_BOHR`; an exactly planar start feels no
out-of-plane force, so every start is displaced by a small, seeded random amount. After optimisation the
conformers are re-ranked by GFN2 energy, those that collapsed onto a lower one (RMSD over graph
automorphisms, :func:`ringshift.geometry.symmetry.prune_conformers`) are dropped, and so are those whose
E/Z configuration changed (:func:`ringshift.geometry.conformers.ez_stereo_check`), with a note.
"""

from __future__ import annotations

import contextlib
import ctypes
import importlib
import os
import time
from importlib import metadata

import numpy as np
from rdkit import Chem
from scipy.constants import physical_constants
from scipy.optimize import minimize

from ringshift.constants import KCAL_PER_HARTREE
from ringshift.errors import InputError
from ringshift.geometry.conformers import ez_stereo_check
from ringshift.geometry.symmetry import automorphisms, prune_conformers, symmetry_graph

__all__ = ['gfn2_optimise', 'electron_count', 'INSTALL_HINT', 'GRADIENT_TOL_EH_PER_BOHR', 'REFERENCE']


#: One line: how to get the optional GFN2-xTB geometry.
INSTALL_HINT: str = "pip install 'ringshift[xtb]' (tblite, LGPL-3.0; wheels for Linux x86_64 only)"

#: The method's paper, recorded in the provenance.
REFERENCE: str = "C. Bannwarth, S. Ehlert, S. Grimme, J. Chem. Theory Comput. 2019, 15, 1652 (GFN2-xTB)"

#: A conformer is converged when its largest Cartesian gradient component is at most this (Eh/bohr);
#: design notes §7 (a looser convergence changed [12]annulene's answer).
GRADIENT_TOL_EH_PER_BOHR: float = 5e-4

#: What L-BFGS-B aims at (Eh/bohr), below the acceptance threshold: stopping at 5e-4 left [18]annulene's
#: C-C bonds at 1.378/1.403 Å, aiming at 1e-4 gave 1.383/1.397 Å for about 20 % more gradients
#: (measured 2026-12 on this machine, tblite 0.8.0).
GRADIENT_TARGET_EH_PER_BOHR: float = 1e-4

#: Conformers re-optimised by default: the lowest force-field ones, at most this many ...
DEFAULT_MAX_CONFORMERS: int = 5
#: ... and, when force-field energies are given, only those within this window (kcal/mol).
#: Cost (design notes §7, one thread): 0.01-6 s per conformer up to 36 atoms, 10-34 s at 78 atoms, so five
#: conformers stay within about half a minute for an annulene and about three minutes at 78 atoms.
ENERGY_WINDOW_KCAL_MOL: float = 3.0

#: Largest random displacement (Å, uniform per coordinate) added to every start, and its seed: enough
#: out-of-plane force to leave an exactly planar saddle, far below any bond-length effect of interest.
START_NOISE_A: float = 0.01
NOISE_SEED: int = 0

#: Two optimised conformers closer than this (heavy atoms, Å, over automorphisms) are one; the same value
#: as the force-field pruning default of load_structure.
DUPLICATE_RMSD_A: float = 0.3

#: L-BFGS-B iteration limit per conformer (gradient calls are limited to twice this).
MAX_ITERATIONS: int = 1000

#: OpenMP threads of tblite unless ``threads`` or OMP_NUM_THREADS says otherwise. Measured 2026-12 on a
#: 2-core machine under load: [12]annulene took 7.3 s with libgomp's default two threads, 0.7 s with one.
DEFAULT_THREADS: int = 1

_BOHR_A: float = physical_constants["Bohr radius"][0] * 1e10
_LBFGS_MEMORY = 30                 # 10, 30 and 60 correction pairs cost about the same ([18]annulene, porphine)
_MAX_Z = 86                        # GFN2-xTB is parametrised for H-Rn


def _tblite_calculator(source: str):
    """tblite's Calculator class, or the one-line InputError that says how to install it."""
    try:
        module = importlib.import_module("tblite.interface")
    except ImportError:
        raise InputError(f"the GFN2-xTB geometry needs the optional package tblite: {INSTALL_HINT}",
                         source=source) from None
    return module.Calculator


def _tblite_version() -> str:
    try:
        return metadata.version("tblite")
    except metadata.PackageNotFoundError:     # imported from a source tree without metadata
        return "unknown version"


@contextlib.contextmanager
def _openmp_threads(threads: int | None):
    """Set the OpenMP thread count of the libgomp that tblite loaded, and restore it afterwards.

    ``None`` keeps OMP_NUM_THREADS when it is set, else uses :data:`DEFAULT_THREADS`. Without a loaded
    libgomp (another build of tblite) nothing is changed.
    """
    if threads is None and os.environ.get("OMP_NUM_THREADS"):
        yield os.environ["OMP_NUM_THREADS"]
        return
    try:
        gomp = ctypes.CDLL("libgomp.so.1", mode=getattr(os, "RTLD_NOLOAD", 0) | ctypes.RTLD_GLOBAL)
        previous = int(gomp.omp_get_max_threads())
    except (OSError, AttributeError):
        yield None
        return
    wanted = DEFAULT_THREADS if threads is None else int(threads)
    gomp.omp_set_num_threads(wanted)
    try:
        yield wanted
    finally:
        gomp.omp_set_num_threads(previous)


def _quiet(_message: str) -> None:
    """tblite's logger callback: drop every line (verbosity is 0 as well)."""


def electron_count(atomic_numbers: np.ndarray, charge: int) -> int:
    """Number of electrons, sum(Z) - charge, of a molecule (all electrons; the parity is what matters)."""
    return int(np.sum(np.asarray(atomic_numbers, dtype=np.int64))) - int(charge)

# --------------------------------------------------------------------------------------- checks
def _check_inputs(mol: Chem.Mol, coords, charge, unpaired, max_conformers, energies, max_iterations, threads,
                  source: str) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Atomic numbers (n_atoms,), coordinates (n_conf, n_atoms, 3) Å, energies (n_conf,) or None."""
    for name, value, low in (("charge", charge, None), ("unpaired", unpaired, 0),
                             ("max_conformers", max_conformers, 1), ("max_iterations", max_iterations, 1),
                             ("threads", threads, 1)):
        if value is None and name in ("max_conformers", "threads"):
            continue
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
            raise InputError(f"expected an integer, got {value!r}", source=name)
        if low is not None and value < low:
            raise InputError(f"expected an integer >= {low}, got {value}", source=name)
    n_atoms = mol.GetNumAtoms()
    x = np.asarray(coords, dtype=np.float64)
    if x.ndim == 2:
        x = x[None]
    if x.ndim != 3 or x.shape[0] == 0 or x.shape[1:] != (n_atoms, 3):
        raise InputError(f"expected coordinates of shape (n_conf, {n_atoms}, 3), got {np.shape(coords)}",
                         source="coords")
    if not np.all(np.isfinite(x)):
        raise InputError("non-finite coordinates", source="coords")
    z = np.array([a.GetAtomicNum() for a in mol.GetAtoms()], dtype=np.int32)
    if z.size == 0 or z.min() < 1 or z.max() > _MAX_Z:
        raise InputError(f"GFN2-xTB covers the elements H-Rn (Z 1-{_MAX_Z}); the molecule has Z "
                         f"{sorted(set(z.tolist()))}", source=source)
    if any(a.GetTotalNumHs() for a in mol.GetAtoms()):
        raise InputError("GFN2-xTB needs every hydrogen as an atom with coordinates; the molecule has implicit "
                         "hydrogens", source=source)
    if Chem.GetFormalCharge(mol) != int(charge):
        raise InputError(f"charge {int(charge)} disagrees with the molecule's formal charges "
                         f"(sum {Chem.GetFormalCharge(mol)})", source="charge")
    n_el = electron_count(z, int(charge))
    if n_el < int(unpaired) or (n_el - int(unpaired)) % 2:
        raise InputError(f"{n_el} electrons (charge {int(charge)}) cannot have {int(unpaired)} unpaired; "
                         "give the net charge and the number of unpaired electrons (an odd count needs an odd "
                         "number)", source="unpaired")
    e = None
    if energies is not None:
        e = np.asarray(energies, dtype=np.float64).reshape(-1)
        if e.shape != (x.shape[0],) or not np.all(np.isfinite(e)):
            raise InputError(f"expected {x.shape[0]} finite energies (kcal/mol), got shape {e.shape}",
                             source="energies_kcal_mol")
    return z, x, e


def _selection(n_conf: int, max_conformers: int | None, energies: np.ndarray | None) -> list[int]:
    """Indices of the conformers to re-optimise: the first ``max_conformers`` (default
    :data:`DEFAULT_MAX_CONFORMERS`, then also within :data:`ENERGY_WINDOW_KCAL_MOL` of the lowest when
    energies are given). The input order is taken as energy order (best first)."""
    if max_conformers is not None:
        return list(range(min(n_conf, int(max_conformers))))
    chosen = list(range(min(n_conf, DEFAULT_MAX_CONFORMERS)))
    if energies is not None:
        chosen = [c for c in chosen if energies[c] - energies.min() <= ENERGY_WINDOW_KCAL_MOL] or [0]
    return chosen


def _new_problems(mol: Chem.Mol, before: np.ndarray, after: np.ndarray) -> list[str]:
    """E/Z contradictions of ``after`` (n_atoms, 3) Å that ``before`` did not have."""
    old = {p.split(" but ")[0] for p in ez_stereo_check(mol, before)}
    return [p for p in ez_stereo_check(mol, after) if p.split(" but ")[0] not in old]

# --------------------------------------------------------------------------------------- optimisation
def _relax(calculator_cls, z: np.ndarray, start_A: np.ndarray, charge: int, unpaired: int,
           max_iterations: int) -> tuple[np.ndarray, float, float, int]:
    """L-BFGS-B minimisation of the GFN2-xTB energy from ``start_A`` (n_atoms, 3) Å.

    Returns the optimised coordinates (n_atoms, 3) Å, the energy (Eh), the largest Cartesian gradient
    component (Eh/bohr) and the number of energy/gradient calls. tblite errors (an SCC that does not
    converge) propagate as ``RuntimeError``; KeyboardInterrupt is never caught.
    """
    x0 = start_A / _BOHR_A
    calc = calculator_cls("GFN2-xTB", z, x0, charge=float(charge), uhf=int(unpaired), color=False, logger=_quiet)
    calc.set("verbosity", 0)
    state: dict = {"result": None, "calls": 0}

    def energy_and_gradient(v: np.ndarray) -> tuple[float, np.ndarray]:
        calc.update(v.reshape(-1, 3))
        state["result"] = calc.singlepoint(state["result"])     # the previous wavefunction is the guess
        state["calls"] += 1
        return float(state["result"].get("energy")), np.asarray(state["result"].get("gradient")).reshape(-1)

    opt = minimize(energy_and_gradient, x0.reshape(-1), jac=True, method="L-BFGS-B",
                   options={"gtol": GRADIENT_TARGET_EH_PER_BOHR, "ftol": 1e-15, "maxiter": int(max_iterations),
                            "maxfun": 2 * int(max_iterations), "maxcor": _LBFGS_MEMORY})
    return (opt.x.reshape(-1, 3) * _BOHR_A, float(opt.fun), float(np.abs(opt.jac).max()), int(state["calls"]))


def _optimise_all(calculator_cls, mol: Chem.Mol, z: np.ndarray, x: np.ndarray, chosen: list[int], charge: int,
                  unpaired: int, max_iterations: int, notes: list[str]) -> tuple[list, int]:
    """Optimise the chosen conformers of ``x`` (n_conf, n_atoms, 3) Å; drop SCC failures and E/Z changes
    (appending a note). Returns [(E Eh, input index, coords Å, max gradient Eh/bohr, calls)] and the E/Z count."""
    done: list[tuple[float, int, np.ndarray, float, int]] = []
    dropped_ez = 0
    for c in chosen:
        rng = np.random.default_rng(NOISE_SEED)                  # the same displacement for every conformer
        start = x[c] + rng.uniform(-START_NOISE_A, START_NOISE_A, size=x[c].shape)
        try:
            xo, e, gmax, calls = _relax(calculator_cls, z, start, charge, unpaired, max_iterations)
        except RuntimeError as exc:                               # tblite: the SCC did not converge
            notes.append(f"conformer {c}: GFN2-xTB failed ({' '.join(str(exc).split())[:120]}); dropped")
            continue
        changed = _new_problems(mol, x[c], xo)
        if changed:
            dropped_ez += 1
            notes.append(f"conformer {c}: GFN2-xTB changed the E/Z configuration ({changed[0]}); dropped")
            continue
        done.append((e, c, xo, gmax, calls))
    return done, dropped_ez


def gfn2_optimise(mol: Chem.Mol, coords, *, charge: int, unpaired: int = 0, max_conformers: int | None = None,
                  source: str = "structure", energies_kcal_mol=None, max_iterations: int = MAX_ITERATIONS,
                  threads: int | None = None) -> tuple[np.ndarray, np.ndarray, dict]:
    """Re-optimise the lowest conformers with GFN2-xTB and re-rank them by GFN2 energy.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Molecule with every hydrogen explicit; its bond stereo marks are what the E/Z check compares with.
    coords : array_like, shape (n_conf, n_atoms, 3) or (n_atoms, 3)
        Conformers in Å, energy-sorted (best first), e.g. MMFF94 minima.
    charge : int
        Net charge; must equal the sum of the molecule's formal charges.
    unpaired : int
        Number of unpaired electrons (0 for a closed shell; tblite's ``uhf``).
    max_conformers : int, optional
        Re-optimise the first this many. Default: the first :data:`DEFAULT_MAX_CONFORMERS`, and of those
        only the ones within :data:`ENERGY_WINDOW_KCAL_MOL` of the lowest when ``energies_kcal_mol`` is given.
    source : str
        Name of the input, used in error messages.
    energies_kcal_mol : array_like, shape (n_conf,), optional
        Force-field energies of ``coords`` in kcal/mol (any zero), for the default energy window.
    max_iterations : int
        L-BFGS-B iteration limit per conformer; a conformer that reaches it is kept and counted in
        ``info["not_converged"]``.
    threads : int, optional
        OpenMP threads of tblite during the call; default OMP_NUM_THREADS when set, else
        :data:`DEFAULT_THREADS`.

    Returns
    -------
    coords : numpy.ndarray, shape (k, n_atoms, 3)
        Optimised conformers in Å, sorted by GFN2 energy.
    energies : numpy.ndarray, shape (k,)
        GFN2-xTB energies in kcal/mol relative to the lowest.
    info : dict
        Provenance: ``method``, ``program``, ``reference``, ``charge``, ``unpaired``,
        ``gradient_tol_Eh_per_bohr``, ``gradient_target_Eh_per_bohr``, ``conformers_optimised``,
        ``conformers_kept`` (k), ``conformers_dropped_duplicate``, ``conformers_dropped_ez``,
        ``not_converged``, ``max_gradient_Eh_per_bohr`` and ``gradient_calls`` (per kept conformer),
        ``energy_lowest_Eh``, ``seconds`` and ``notes`` (list of str).

    Raises
    ------
    InputError
        tblite missing (the message names :data:`INSTALL_HINT`), an electron count that does not fit
        ``unpaired``, a charge that disagrees with the molecule, implicit hydrogens, or no conformer left
        (every SCC failed or every conformer changed its E/Z configuration).
    """
    z, x, energies_ff = _check_inputs(mol, coords, charge, unpaired, max_conformers, energies_kcal_mol,
                                      max_iterations, threads, source)
    calculator_cls = _tblite_calculator(source)
    t0 = time.perf_counter()
    chosen = _selection(x.shape[0], max_conformers, energies_ff)
    notes: list[str] = []
    with _openmp_threads(threads) as used_threads:
        done, dropped_ez = _optimise_all(calculator_cls, mol, z, x, chosen, int(charge), int(unpaired),
                                         int(max_iterations), notes)
    if not done:
        reason = "every conformer changed its E/Z configuration" if dropped_ez else "every SCC calculation failed"
        raise InputError(f"GFN2-xTB optimisation left no conformer: {reason} ({'; '.join(notes)[:300]})",
                         source=source)
    done.sort(key=lambda d: (d[0], d[1]))
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1] or list(range(mol.GetNumAtoms()))
    tags = {a.GetIdx(): 1 + a.GetTotalNumHs(includeNeighbors=True) for a in mol.GetAtoms()}
    stack = np.stack([d[2] for d in done])
    keep = prune_conformers(stack[:, heavy], automorphisms(symmetry_graph(mol, heavy, tags)), DUPLICATE_RMSD_A)
    for k in sorted(set(range(len(done))) - set(keep)):
        notes.append(f"conformer {done[k][1]} collapsed onto another under GFN2-xTB; dropped as a duplicate")
    kept = [done[k] for k in keep]
    e_eh = np.array([d[0] for d in kept])
    not_converged = [d for d in kept if d[3] > GRADIENT_TOL_EH_PER_BOHR]
    if not_converged:
        notes.append(f"{len(not_converged)} conformer(s) did not reach a largest gradient of "
                     f"{GRADIENT_TOL_EH_PER_BOHR:g} Eh/bohr within {int(max_iterations)} iterations; kept as they are")
    info = {"method": "GFN2-xTB", "program": f"tblite {_tblite_version()}", "reference": REFERENCE,
            "optimiser": "scipy L-BFGS-B", "threads": used_threads, "charge": int(charge), "unpaired": int(unpaired),
            "gradient_tol_Eh_per_bohr": GRADIENT_TOL_EH_PER_BOHR,
            "gradient_target_Eh_per_bohr": GRADIENT_TARGET_EH_PER_BOHR,
            "conformers_optimised": len(chosen), "conformers_kept": len(kept),
            "conformers_dropped_duplicate": len(done) - len(kept), "conformers_dropped_ez": dropped_ez,
            "not_converged": len(not_converged),
            "max_gradient_Eh_per_bohr": [d[3] for d in kept], "gradient_calls": [d[4] for d in kept],
            "input_conformers": [d[1] for d in kept], "energy_lowest_Eh": float(e_eh[0]),
            "seconds": round(time.perf_counter() - t0, 3), "notes": notes}
    return np.stack([d[2] for d in kept]), (e_eh - e_eh[0]) * KCAL_PER_HARTREE, info
