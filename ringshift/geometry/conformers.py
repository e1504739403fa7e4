"""Conformer generation and weighting: ETKDG v3 + MMFF94, E/Z checks, Boltzmann weights.

Without 3D input, conformers are embedded with ETKDG v3 with macrocycle torsions (Wang, Witek, Landrum &
Riniker, J. Chem. Inf. Model. 2020, 60, 2044), optimised with MMFF94 (Halgren, J. Comput. Chem. 1996, 17,
490), rejected when their embedded E/Z configuration differs from the input's (:func:`ez_stereo_check`),
kept within an energy window, pruned by RMSD over graph automorphisms and weighted by
:func:`boltzmann_weights` (p_k ∝ exp(−E_k / RT), CODATA R via SciPy). Small rigid molecules get a fixed
count (:func:`default_conformer_count`); macrocycles and polycycles are searched in rounds that stop once the
search stops finding new low-energy minima, with that count as the cap (:func:`_search_rounds`).
"""

from __future__ import annotations

import os
import sys
import time
import warnings

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import rdDistGeom, rdForceFieldHelpers
from rdkit.Geometry import Point3D

from ringshift._numbers import rounded
from ringshift.constants import KB_KCAL_PER_MOL_K
from ringshift.errors import GeometryWarning, InputError
from ringshift.geometry.macrocycle import (
    FLAT_NOISE_A,
    conjugated_ring_atoms,
    derived_seeds,
    honeycomb_perimeters,
    lattice_coordinates,
    needs_search,
    perimeter_rings,
    planarity_rms_A,
    project_onto_plane,
    ring_cis_pattern,
)
from ringshift.geometry.symmetry import automorphisms, kabsch_rmsd, prune_conformers, symmetry_graph

__all__ = ['ez_stereo_check', 'boltzmann_weights', 'default_conformer_count']


_CONFORMERS_RIGID = 30
_SEARCH_SEEDS = 4                 # ETKDG seeds per search (the user's seed and 3 derived ones)
_SEARCH_MIN, _SEARCH_MAX, _SEARCH_ATOM_BUDGET = 12, 40, 1200   # embeddings: 1200 / n_atoms within 12..40
_MAX_PERIMETERS = 12              # honeycomb perimeters embedded per ring, largest enclosed area first
_PERIMETER_NODES = 200_000        # enumeration budget per ring (partial paths)
_PERIMETER_ATTEMPTS = 50          # ETKDG attempts per perimeter start (impossible ones fail in smoothing)
_PROJECTED = 4                    # lowest distinct bent minima projected onto their plane
_FLAT_RMS_A = 0.1                 # conjugated ring atoms within this RMS of a plane count as flat, Å
# Adaptive rounds of the search (issue 16): a round embeds _ROUND_PER_SEED conformers with each of the
# _SEARCH_SEEDS seeds (8 a round: the smallest round in which every seed still contributes a pair, so one unlucky
# seed cannot end the search). The search stops when the embeddings since the last round that added a new
# low-energy minimum are at least as many as those before it, and at least _PATIENCE rounds (a search that found
# its last minimum late must spend as much again before it may stop: with 1 round of patience alone, [14]annulene
# stopped at 24 of 40 embeddings missing a populated conformer, shifts off by 3.5 ppm, measured), or when the
# embeddings reach the count (:func:`default_conformer_count`, the cap: never more work than the fixed search it
# replaces). Porphine stops after 2 rounds (16 of 31 embeddings); flexible rings run to the cap.
_ROUND_PER_SEED = 2
_PATIENCE = 1
_PROGRESS_AFTER_S = 2.0           # a search running longer shows one progress line on a terminal (stderr)

# --------------------------------------------------------------------------------------- array kernels
def boltzmann_weights(energies_kcal_mol: np.ndarray, temperature_K: float) -> np.ndarray:
    """Boltzmann populations p_i = exp(-E_i / kT) / sum_j exp(-E_j / kT).

    Parameters
    ----------
    energies_kcal_mol : numpy.ndarray, shape (n,)
        Energies in kcal/mol, any zero.
    temperature_K : float
        Temperature in K (> 0).

    Returns
    -------
    numpy.ndarray, shape (n,)
        Weights summing to 1 (empty for empty input).
    """
    e = np.asarray(energies_kcal_mol, dtype=np.float64).reshape(-1)
    if e.size == 0:
        return e.copy()
    w = np.exp(-(e - e.min()) / (KB_KCAL_PER_MOL_K * float(temperature_K)))
    return w / w.sum()


def _dihedral_deg(p0, p1, p2, p3) -> float:
    """Dihedral angle p0-p1-p2-p3 in degrees, (-180, 180]."""
    b1 = (p2 - p1) / np.linalg.norm(p2 - p1)
    v = (p0 - p1) - np.dot(p0 - p1, b1) * b1
    w = (p3 - p2) - np.dot(p3 - p2, b1) * b1
    return float(np.degrees(np.arctan2(np.dot(np.cross(b1, v), w), np.dot(v, w))))

# --------------------------------------------------------------------------------------- stereo
def _cis_references(mol: Chem.Mol) -> list[tuple[int, int, int, int, bool, str]]:
    """(a, i, j, d, want_cis, label) for every double bond i=j with E/Z or cis/trans stereo."""
    out, cip = [], None
    for bond in mol.GetBonds():
        st = bond.GetStereo()
        refs = list(bond.GetStereoAtoms())
        if len(refs) != 2 or st not in (Chem.BondStereo.STEREOE, Chem.BondStereo.STEREOZ,
                                         Chem.BondStereo.STEREOCIS, Chem.BondStereo.STEREOTRANS):
            continue
        (a, d), i, j = refs, bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
        if st in (Chem.BondStereo.STEREOCIS, Chem.BondStereo.STEREOTRANS):
            cis = st == Chem.BondStereo.STEREOCIS
            out.append((a, i, j, d, cis, "cis" if cis else "trans"))
            continue
        if cip is None:                      # the CIP ranks behind RDKit's E/Z labels, on a copy
            cip = list(Chem.ComputeAtomCIPRanks(Chem.Mol(mol)))
        flips = sum(max((n.GetIdx() for n in mol.GetAtomWithIdx(end).GetNeighbors() if n.GetIdx() != other),
                        key=lambda k: cip[k]) != ref for end, ref, other in ((i, a, j), (j, d, i)))
        z = st == Chem.BondStereo.STEREOZ
        out.append((a, i, j, d, z ^ (flips % 2 == 1), "Z" if z else "E"))
    return out


def _ez_problems(refs, x: np.ndarray) -> list[str]:
    out = []
    for a, i, j, d, want_cis, label in refs:
        dih = _dihedral_deg(x[a], x[i], x[j], x[d])
        if (abs(dih) < 90.0) != want_cis:
            out.append(f"bond {i}-{j} should be {label} but dihedral {a}-{i}-{j}-{d} is {dih:.0f} deg")
    return out


def ez_stereo_check(mol_with_stereo: Chem.Mol, coords: np.ndarray) -> list[str]:
    """Compare every specified double-bond stereo with the dihedral angle in a geometry.

    Parameters
    ----------
    mol_with_stereo : rdkit.Chem.Mol
        Molecule whose bonds carry E/Z (CIP) or cis/trans (reference atoms) stereo.
    coords : numpy.ndarray, shape (n_atoms, 3)
        One conformer, Å.

    Returns
    -------
    list of str
        One message per bond whose |dihedral| is > 90 deg for cis or < 90 deg for trans; empty if fine.
    """
    x = np.asarray(coords, dtype=np.float64)
    if x.shape != (mol_with_stereo.GetNumAtoms(), 3):
        raise InputError(f"expected shape ({mol_with_stereo.GetNumAtoms()}, 3), got {x.shape}", source="coords")
    return _ez_problems(_cis_references(mol_with_stereo), x)

# --------------------------------------------------------------------------------------- conformers
def default_conformer_count(mol: Chem.Mol) -> int:
    """Conformers to embed: 30 for small rigid molecules; for the searched ones (:func:`needs_search`: a ring
    of >= 12 atoms, a bridged or >= 3-ring fused system) at most 1200 / n_atoms, clipped to 12..40 (the cap
    of the adaptive rounds, which stop earlier when nothing new turns up), spread over several seeds and
    joined by flat starts (see :func:`_generate`), so that a 40-heavy-atom porphyrin stays
    within seconds on one core (benchmarks/bench_conformers.py)."""
    if not needs_search(mol):
        return _CONFORMERS_RIGID
    return int(min(_SEARCH_MAX, max(_SEARCH_MIN, _SEARCH_ATOM_BUDGET // max(1, mol.GetNumAtoms()))))


def candidate_count(mol: Chem.Mol, n: int) -> int:
    """Most geometries :func:`_generate` minimises for ``n`` embeddings (for the cost estimate): ``n``, and for a
    search the honeycomb perimeters of each isolated conjugated ring and the projected minima."""
    if not needs_search(mol):
        return int(n)
    return int(n) + _MAX_PERIMETERS * len(perimeter_rings(mol)) + _PROJECTED


def _etkdg(seed: int, basic_knowledge: bool, threads: int, max_iterations: int = 0) -> rdDistGeom.EmbedParameters:
    params = rdDistGeom.ETKDGv3()
    # rdkit-stubs type the property setters of EmbedParameters as (*args, **kwargs)
    params.randomSeed, params.numThreads, params.maxIterations = int(seed), int(threads), max_iterations  # type: ignore[assignment]
    params.useMacrocycleTorsions, params.useBasicKnowledge, params.enforceChirality = True, basic_knowledge, True  # type: ignore[assignment]
    params.trackFailures = True  # type: ignore[assignment]
    return params


def _embed_confs(mol: Chem.Mol, n: int, params: rdDistGeom.EmbedParameters) -> list[np.ndarray]:
    """EmbedMultipleConfs on a copy; raises KeyboardInterrupt when RDKit cancelled it on Ctrl-C.

    RDKit 2026.09 catches SIGINT during embedding, logs "Interrupted, cancelling conformer generation" and
    returns no conformer without raising (measured; design notes §6). A genuine failure spends every attempt
    on every missing conformer (maxIterations, or 10 x n_atoms when 0: 1280 failures for 4 conformers of a
    32-atom molecule, measured) or fails before the first attempt (0 failures, impossible bounds); a cancelled
    run stops after some but not all attempts. So fewer conformers than asked with a failure count strictly
    between 0 and the attempts allowed means Ctrl-C: it must not fall through to a fallback or a smaller result.
    """
    work = Chem.Mol(mol)
    with rdBase.BlockLogs():
        ids = list(rdDistGeom.EmbedMultipleConfs(work, n, params))
    failures = sum(params.GetFailureCounts())
    attempts = (params.maxIterations or 10 * mol.GetNumAtoms()) * (n - len(ids))
    if len(ids) < n and 0 < failures < attempts:
        raise KeyboardInterrupt("conformer embedding cancelled")
    return [work.GetConformer(c).GetPositions() for c in ids]


def _embed(mol: Chem.Mol, counts: list[int], seeds: list[int], threads: int, source: str):
    """ETKDG v3 for each seed; falls back to useBasicKnowledge=False ([2.2]paracyclophane, design notes §7). A
    probe (2 conformers, 20 attempts each) decides first: a failing basic-knowledge run takes minutes."""
    try:
        basic = len(_embed_confs(mol, 2, _etkdg(seeds[0], True, threads, 20))) > 0
    except RuntimeError as exc:   # RDKit's bounds-matrix invariant, e.g. a metal bonded to the four N of a porphyrin
        raise InputError("RDKit ETKDG cannot set up distance bounds for this molecule "
                         f"({' '.join(str(exc).split()[:5])}; bonds to a metal atom are a common cause); supply "
                         "3D coordinates (SDF with its bonds, or XYZ), or give the metal as a separate ion",
                         source=source) from None
    for use_basic in ((True, False) if basic else (False,)):
        out = [x for s, k in zip(seeds, counts) if k > 0 for x in _embed_confs(mol, k, _etkdg(s, use_basic, threads))]
        if out:
            return out, use_basic
    raise InputError("RDKit ETKDG could not embed the molecule (also tried useBasicKnowledge=False); supply "
                     "3D coordinates as SDF or XYZ", source=source)


def _perimeter_starts(mol: Chem.Mol, refs, seed: int, basic: bool, threads: int) -> tuple[list[np.ndarray], dict]:
    """One embedding per honeycomb perimeter of each isolated conjugated ring (largest enclosed area first, at
    most _MAX_PERIMETERS), its ring atoms fixed at the lattice sites (ETKDG coordinate map)."""
    out: list[np.ndarray] = []
    found, complete = 0, True
    for ring in perimeter_rings(mol):
        paths, done = honeycomb_perimeters(ring_cis_pattern(refs, ring), _PERIMETER_NODES)
        found, complete = found + len(paths), complete and done
        for sites in paths[:_MAX_PERIMETERS]:
            xyz = lattice_coordinates(sites)
            params = _etkdg(seed, basic, threads, _PERIMETER_ATTEMPTS)
            params.SetCoordMap({a: Point3D(*map(float, xyz[k])) for k, a in enumerate(ring)})  # type: ignore[call-arg,arg-type]
            out.extend(_embed_confs(mol, 1, params))
    return out, {"perimeter_closures_found": found, "perimeter_enumeration_complete": complete}


def _optimise(mol: Chem.Mol, coords: list[np.ndarray], threads: int):
    """MMFF94 (UFF if MMFF lacks parameters) minimisation of each geometry, on a copy: MMFF set-up perceives
    its own aromaticity in place. Returns coords (k, n_atoms, 3), energies or None, force field, not converged."""
    work = Chem.Mol(mol)
    work.RemoveAllConformers()
    for x in coords:
        conf = Chem.Conformer(work.GetNumAtoms())
        conf.SetPositions(np.asarray(x, dtype=np.float64))
        work.AddConformer(conf, assignId=True)
    start, result, ff = Chem.Mol(work), None, None
    helpers = rdForceFieldHelpers
    with rdBase.BlockLogs():
        try:
            if helpers.MMFFHasAllMoleculeParams(Chem.Mol(mol)):
                result, ff = helpers.MMFFOptimizeMoleculeConfs(work, numThreads=threads, maxIters=2000), "mmff94"
            elif helpers.UFFHasAllMoleculeParams(Chem.Mol(mol)):
                result, ff = helpers.UFFOptimizeMoleculeConfs(work, numThreads=threads, maxIters=2000), "uff"
        except RuntimeError as exc:       # e.g. a zero-order bond that UFF cannot stretch
            warnings.warn(GeometryWarning(f"force-field minimisation failed ({' '.join(str(exc).split()[:6])}); "
                                          "ETKDG geometries are used unminimised"), stacklevel=4)
            work, result, ff = start, None, None
    xyz = np.stack([c.GetPositions() for c in work.GetConformers()])
    if result is None:
        return xyz, None, None, 0
    return xyz, np.array([e for _, e in result], dtype=np.float64), ff, sum(1 for nc, _ in result if nc)


def _available_cores() -> int:
    """Cores this process may use (CPU affinity where the OS reports it), at least 1."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:                   # not on every OS
        return max(1, os.cpu_count() or 1)


def _noisy(x: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """A flat start displaced by FLAT_NOISE_A (normal, deterministic) so that MMFF can leave a planar saddle."""
    return x + rng.normal(0.0, FLAT_NOISE_A, size=x.shape)


class _Progress:
    """One self-overwriting line on stderr, only when stderr is a terminal and the search has run longer than
    _PROGRESS_AFTER_S; :meth:`close` erases it (also on Ctrl-C, so the stop message starts a clean line)."""

    def __init__(self) -> None:
        self.t0, self.shown = time.monotonic(), False
        try:
            self.tty = sys.stderr is not None and sys.stderr.isatty()
        except (AttributeError, ValueError):         # replaced or closed stream
            self.tty = False

    def update(self, text: str) -> None:
        from ringshift import limits

        if limits.note(text):                       # a progress line of the whole step is shown: give it the detail
            return
        if self.tty and (self.shown or time.monotonic() - self.t0 > _PROGRESS_AFTER_S):
            sys.stderr.write(f"\r\033[Kconformer search: {text}")
            sys.stderr.flush()
            self.shown = True

    def close(self) -> None:
        if self.shown:
            sys.stderr.write("\r\033[K")
            sys.stderr.flush()


def _new_minima(heavy_xyz: np.ndarray, energies: np.ndarray | None, old: list[int], new: list[int],
                autos: np.ndarray, window: float, rmsd_A: float) -> int:
    """How many of the candidates ``new`` (this round's, E/Z-checked; indices into ``heavy_xyz`` (n, n_heavy, 3) Å)
    are new low-energy minima: within ``window`` kcal/mol of the lowest candidate so far and more than ``rmsd_A``
    Å (over automorphisms and rotations, as :func:`prune_conformers`) from every distinct low-energy minimum of
    the earlier rounds ``old`` and from every new one already counted (lower energy first)."""
    if not new:                                      # e.g. every minimum of the round changed its E/Z
        return 0

    def order(cs: list[int]) -> list[int]:
        if energies is None:
            return sorted(cs)
        best = float(energies[old + new].min())
        return sorted((c for c in cs if energies[c] - best <= window), key=lambda c: (energies[c], c))

    low_old = order(old)
    reps = [low_old[k] for k in prune_conformers(heavy_xyz[low_old], autos, rmsd_A)] if low_old else []
    count = 0
    for c in order(new):
        if not reps or kabsch_rmsd(heavy_xyz[c][autos][:, None], heavy_xyz[reps][None]).min() > rmsd_A:
            reps.append(c)
            count += 1
    return count


def _search_rounds(mol: Chem.Mol, n: int, seeds: list[int], search: bool, refs, rng: np.random.Generator,
                   threads: int, source: str, window: float, rmsd_A: float, heavy: list[int], autos: np.ndarray,
                   extra_starts: list[np.ndarray] | None):
    """Embed and minimise in rounds until a round adds no new low-energy minimum (:func:`_new_minima`) for
    _PATIENCE rounds running, or ``n`` embeddings (the cap) are spent; molecules that need no search get one
    round of ``n`` with the single seed (the fixed count). Round 1 uses ``seeds`` and, for a search, adds the
    perimeter starts and ``extra_starts``; round r > 1 uses the r-th seed :func:`derived_seeds` gives for each of
    ``seeds``. Returns coords (k, n_atoms, 3) Å, energies (k,) kcal/mol or None, force field, not converged,
    origins, embedded, rejected for E/Z, basic knowledge, and the info dict (perimeter counts, search_rounds,
    search_stop)."""
    progress = _Progress()
    xyz: list[np.ndarray] = []
    energy: list[float] | None = []
    origin: list[str] = []
    ff, not_converged, rejected, embedded_n, basic, done, rounds, last_new = None, 0, 0, 0, True, 0, 0, 0
    info: dict = {}
    per_round = _ROUND_PER_SEED * len(seeds) if search else n
    try:
        while True:
            size = min(per_round, n - done)
            counts = [size // len(seeds) + (k < size % len(seeds)) for k in range(len(seeds))]
            if rounds == 0:
                embedded, basic = _embed(mol, counts, seeds, threads, source)
            else:
                round_seeds = [derived_seeds(s, rounds + 1)[rounds] for s in seeds]
                embedded = [x for s, k in zip(round_seeds, counts) if k > 0
                            for x in _embed_confs(mol, k, _etkdg(s, basic, threads))]
            done, rounds, embedded_n = done + size, rounds + 1, embedded_n + len(embedded)
            starts = [x for x in embedded if not _ez_problems(refs, x)]
            rejected += len(embedded) - len(starts)
            org = ["embedded"] * len(starts)
            if rounds == 1:
                if search:
                    perimeter, info = _perimeter_starts(mol, refs, seeds[0], basic, threads)
                    flat = [_noisy(x, rng) for x in perimeter if not _ez_problems(refs, x)]
                    rejected += len(perimeter) - len(flat)
                    starts, org = starts + flat, org + ["perimeter"] * len(flat)
                if extra_starts:
                    given = [np.asarray(x, dtype=np.float64) for x in extra_starts if not _ez_problems(refs, x)]
                    starts, org = starts + given, org + ["given"] * len(given)
                if not starts:
                    why = _ez_problems(refs, embedded[0])[0]
                    raise InputError(f"embedded geometry contradicts the E/Z stereo: {why} (all {len(embedded)} "
                                     "conformers); check the stereo marks or supply 3D coordinates", source=source)
            new = 0
            if starts:
                c, e, f, nc = _optimise(mol, starts, threads)
                if rounds > 1 and (e is None) != (energy is None):     # the force field failed in this round only
                    info.update(search_rounds=rounds - 1, search_stop="force-field")
                    break
                first = len(xyz)
                xyz, origin, not_converged = xyz + list(c), origin + org, not_converged + nc
                if rounds == 1:
                    ff, energy = f, (None if e is None else [])
                if energy is not None and e is not None:
                    energy.extend(float(v) for v in e)
                if search:
                    hx = np.stack(xyz)[:, heavy]
                    ok = [k for k in range(len(xyz)) if not _ez_problems(refs, xyz[k])]
                    new = _new_minima(hx, None if energy is None else np.asarray(energy), [k for k in ok if k < first],
                                      [k for k in ok if k >= first], autos, window, rmsd_A)
            last_new = done if new else last_new
            converged = done - last_new >= max(_PATIENCE * per_round, last_new)
            progress.update(f"round {rounds}, {done}/{n} embeddings, {new} new low-energy conformer(s)")
            if not search or done >= n or converged:
                stop = "fixed-count" if not search else ("converged" if converged else "cap")
                info.update(search_rounds=rounds, search_stop=stop)
                break
    finally:
        progress.close()
    coords = np.stack(xyz)
    energies = None if energy is None else np.asarray(energy, dtype=np.float64)
    return coords, energies, ff, not_converged, origin, embedded_n, rejected, basic, info


def _generate(mol: Chem.Mol, n: int, seed: int, window: float, rmsd_A: float, source: str, *, threads: int = 0,
              extra_starts: list[np.ndarray] | None = None):
    """Embed, add flat starts, minimise, reject E/Z contradictions, apply the window, sort, prune.

    Small rigid molecules: ``n`` ETKDG v3 embeddings with ``seed`` (Wang, Witek, Landrum & Riniker, J. Chem.
    Inf. Model. 2020, 60, 2044), MMFF94 (Halgren, J. Comput. Chem. 1996, 17, 490). Molecules that
    :func:`needs_search` (macrocycles, bridged and fused polycycles): embeddings in rounds of _ROUND_PER_SEED
    per seed over _SEARCH_SEEDS seeds derived from ``seed`` (:func:`derived_seeds`), stopped after _PATIENCE
    rounds without a new low-energy minimum or at ``n`` embeddings (:func:`_search_rounds`), plus the
    honeycomb perimeters of each isolated conjugated ring of >= 12 atoms (:func:`honeycomb_perimeters`), all
    minimised; then the _PROJECTED lowest distinct minima that are not yet flat are projected onto the plane
    of their conjugated ring atoms (:func:`project_onto_plane`) and minimised again. Flat starts get a small
    deterministic out-of-plane displacement. E/Z is checked after embedding, after projection and after minimisation.

    Returns coords (n_conf, n_atoms, 3) Å sorted by energy, energies (n_conf,) kcal/mol relative to the lowest
    (None without a force field) and the provenance dict. ``threads``: RDKit threads (0 = every core this
    process may run on, so a process pinned to one core, as in the benchmarks, embeds on one thread).
    ``extra_starts``: further starting geometries (n_atoms, 3) Å, e.g. the minimum an earlier, shorter search
    found (the configuration screen), E/Z-checked and minimised with the others (origin "given").
    """
    threads = threads or _available_cores()
    search = needs_search(mol)
    seeds = derived_seeds(seed, _SEARCH_SEEDS if search else 1)
    refs = _cis_references(mol)
    rng = np.random.default_rng(int(seed))
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    tags = {a.GetIdx(): 1 + a.GetTotalNumHs(includeNeighbors=True) for a in mol.GetAtoms()}
    autos = automorphisms(symmetry_graph(mol, heavy, tags))
    coords, energies, ff, not_converged, origin, n_embedded, rejected, basic, info = _search_rounds(
        mol, n, seeds, search, refs, rng, threads, source, window, rmsd_A, heavy, autos, extra_starts)
    planar_atoms = conjugated_ring_atoms(mol)
    if search and energies is not None and len(planar_atoms) >= 3:
        ok = sorted((c for c in range(len(coords)) if not _ez_problems(refs, coords[c])),
                    key=lambda c: (energies[c], c))
        distinct = [ok[k] for k in prune_conformers(coords[ok][:, heavy], autos, rmsd_A)] if ok else []
        bent = [c for c in distinct if planarity_rms_A(coords[c], planar_atoms) > _FLAT_RMS_A][:_PROJECTED]
        projected = [project_onto_plane(mol, coords[c], planar_atoms) for c in bent]
        keep = [_noisy(x, rng) for x in projected if not _ez_problems(refs, x)]
        rejected += len(projected) - len(keep)
        if keep:
            c2, e2, _, nc2 = _optimise(mol, keep, threads)
            assert e2 is not None                            # same force field as the first pass
            coords, energies = np.concatenate([coords, c2]), np.concatenate([energies, e2])
            origin, not_converged = origin + ["projected"] * len(keep), not_converged + nc2
        info["candidates_projected"] = len(keep)
    ok = [c for c in range(coords.shape[0]) if not _ez_problems(refs, coords[c])]
    if not ok:
        raise InputError(f"minimised geometry contradicts the E/Z stereo: {_ez_problems(refs, coords[0])[0]} (all "
                         f"{coords.shape[0]} conformers); check the stereo marks or supply 3D coordinates",
                         source=source)
    rejected += coords.shape[0] - len(ok)
    if energies is not None:
        e_min = energies[ok].min()
        ok = sorted((c for c in ok if energies[c] - e_min <= window), key=lambda c: (energies[c], c))
    kept = [ok[k] for k in prune_conformers(coords[ok][:, heavy], autos, rmsd_A)]
    rel = None if energies is None else energies[kept] - energies[kept].min()
    info = {"coordinates": "etkdg-v3" + (f"+{ff}" if ff else ""), "embedding_basic_knowledge": basic,
            "conformers_requested": n, "conformers_embedded": n_embedded,
            "conformers_rejected_ez": int(rejected), "conformers_kept": len(kept),
            "not_converged": int(not_converged),
            "search": "multi-seed+flat-starts" if search else "single-seed", "search_seeds": seeds,
            "candidates_minimised": int(coords.shape[0]),
            "candidates_perimeter": origin.count("perimeter"), **info,
            "kept_from_flat_starts": sum(origin[c] != "embedded" for c in kept),
            "best_conformer_origin": origin[kept[0]],
            "energy_spread_kcal_mol": 0.0 if rel is None else rounded(float(rel.max()), 3),
            "planarity_atoms": len(planar_atoms),
            "planarity_rms_A": rounded(planarity_rms_A(coords[kept[0]], planar_atoms), 4)}
    return coords[kept], rel, info
