"""Conformer generation and weighting: ETKDG v3 + MMFF94, E/Z checks, Boltzmann weights.

Without 3D input, conformers are embedded with ETKDG v3 with macrocycle torsions (Wang, Witek, Landrum &
Riniker, J. Chem. Inf. Model. 2020, 60, 2044), optimised with MMFF94 (Halgren, J. Comput. Chem. 1996, 17,
490), rejected when their embedded E/Z configuration differs from the input's (:func:`ez_stereo_check`),
kept within an energy window, pruned by RMSD over graph automorphisms and weighted by
:func:`boltzmann_weights` (p_k ∝ exp(−E_k / RT), CODATA R via SciPy). The count
(:func:`default_conformer_count`) is larger for rings of 12 or more atoms.
"""

from __future__ import annotations

import warnings

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import rdDistGeom, rdForceFieldHelpers

from ringshift.constants import KB_KCAL_PER_MOL_K
from ringshift.errors import GeometryWarning, InputError
from ringshift.geometry.symmetry import automorphisms, prune_conformers, symmetry_graph

__all__ = ['ez_stereo_check', 'boltzmann_weights', 'default_conformer_count']


_MACROCYCLE_RING = 12            # design notes §7: 30 conformers miss [18]annulene's planar minimum

_CONFORMERS_RIGID, _CONFORMERS_MACROCYCLE = 30, 200

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
    """Conformers to embed: 200 if a ring (SSSR) has >= 12 atoms, else 30 (design notes §7)."""
    big = any(len(r) >= _MACROCYCLE_RING for r in mol.GetRingInfo().AtomRings())
    return _CONFORMERS_MACROCYCLE if big else _CONFORMERS_RIGID


def _etkdg(seed: int, basic_knowledge: bool, max_iterations: int = 0) -> rdDistGeom.EmbedParameters:
    params = rdDistGeom.ETKDGv3()
    # rdkit-stubs type the property setters of EmbedParameters as (*args, **kwargs)
    params.randomSeed, params.numThreads, params.maxIterations = int(seed), 0, max_iterations  # type: ignore[assignment]
    params.useMacrocycleTorsions, params.useBasicKnowledge, params.enforceChirality = True, basic_knowledge, True  # type: ignore[assignment]
    return params


def _embed(mol: Chem.Mol, n: int, seed: int, source: str) -> tuple[Chem.Mol, bool]:
    """ETKDG v3; falls back to useBasicKnowledge=False ([2.2]paracyclophane, design notes §7). A probe
    (2 conformers, 20 attempts each) decides first: a failing basic-knowledge run takes minutes."""
    with rdBase.BlockLogs():
        basic = len(rdDistGeom.EmbedMultipleConfs(Chem.Mol(mol), 2, _etkdg(seed, True, 20))) > 0
        for use_basic in ((True, False) if basic else (False,)):
            work = Chem.Mol(mol)
            if len(rdDistGeom.EmbedMultipleConfs(work, n, _etkdg(seed, use_basic))) > 0:
                return work, use_basic
    raise InputError("RDKit ETKDG could not embed the molecule (also tried useBasicKnowledge=False); supply "
                     "3D coordinates as SDF or XYZ", source=source)


def _optimise(mol: Chem.Mol) -> tuple[np.ndarray, np.ndarray | None, str | None, int]:
    """MMFF94 (UFF if MMFF lacks parameters) minimisation of every conformer, on a copy: MMFF set-up
    perceives its own aromaticity in place. Returns coords, energies, force field, not converged."""
    work, result, ff = Chem.Mol(mol), None, None
    with rdBase.BlockLogs():
        try:
            if rdForceFieldHelpers.MMFFHasAllMoleculeParams(Chem.Mol(mol)):
                result, ff = rdForceFieldHelpers.MMFFOptimizeMoleculeConfs(work, numThreads=0, maxIters=2000), "mmff94"
            elif rdForceFieldHelpers.UFFHasAllMoleculeParams(Chem.Mol(mol)):
                result, ff = rdForceFieldHelpers.UFFOptimizeMoleculeConfs(work, numThreads=0, maxIters=2000), "uff"
        except RuntimeError as exc:       # e.g. a zero-order bond that UFF cannot stretch
            warnings.warn(GeometryWarning(f"force-field minimisation failed ({' '.join(str(exc).split()[:6])}); "
                                          "ETKDG geometries are used unminimised"), stacklevel=4)
            work, result, ff = Chem.Mol(mol), None, None
    coords = np.stack([c.GetPositions() for c in work.GetConformers()])
    if result is None:
        return coords, None, None, 0
    return coords, np.array([e for _, e in result], dtype=np.float64), ff, sum(1 for nc, _ in result if nc)


def _generate(mol: Chem.Mol, n: int, seed: int, window: float, rmsd_A: float, source: str):
    """Embed, minimise, reject E/Z contradictions, apply the window, sort, prune."""
    embedded, basic = _embed(mol, n, seed, source)
    coords, energies, ff, not_converged = _optimise(embedded)
    refs = _cis_references(mol)
    ok = [c for c in range(coords.shape[0]) if not _ez_problems(refs, coords[c])]
    if not ok:
        raise InputError(f"embedded geometry contradicts the E/Z stereo: {_ez_problems(refs, coords[0])[0]} (all "
                         f"{coords.shape[0]} conformers); check the stereo marks or supply 3D coordinates",
                         source=source)
    n_ez = len(ok)
    if energies is not None:
        e_min = energies[ok].min()
        ok = sorted((c for c in ok if energies[c] - e_min <= window), key=lambda c: (energies[c], c))
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    tags = {a.GetIdx(): 1 + a.GetTotalNumHs(includeNeighbors=True) for a in mol.GetAtoms()}
    autos = automorphisms(symmetry_graph(mol, heavy, tags))
    kept = [ok[k] for k in prune_conformers(coords[ok][:, heavy], autos, rmsd_A)]
    info = {"coordinates": "etkdg-v3" + (f"+{ff}" if ff else ""), "embedding_basic_knowledge": basic,
            "conformers_requested": n, "conformers_embedded": int(coords.shape[0]),
            "conformers_rejected_ez": int(coords.shape[0] - n_ez), "conformers_kept": len(kept),
            "not_converged": int(not_converged)}
    return coords[kept], None if energies is None else energies[kept] - energies[kept].min(), info
