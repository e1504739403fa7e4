"""Structure input: SMILES, MOL/SDF or XYZ to an explicit-H molecule with a weighted conformer ensemble.

Numbering. SMILES: heavy atoms 0..n_heavy-1 in SMILES order, then all H (explicit ``[H]`` of the SMILES
first, then added H by parent), so ``[H]/C1=C/...`` and ``C1=C...`` number heavy atoms alike. Files: every
atom keeps its file position; H missing from a MOL/SDF file are appended.
Stereo. A SMILES is sanitised without aromaticity perception (RDKit's aromatic [18]annulene loses its E/Z
marks), embedded as a Kekulé molecule with its stereo, and aromatised afterwards; the returned molecule
keeps the bond stereo labels (design notes §6-7).
Conformers without 3D input: ETKDG v3 with macrocycle torsions (Wang, Witek, Landrum & Riniker, J. Chem.
Inf. Model. 2020, 60, 2044), MMFF94 (Halgren, J. Comput. Chem. 1996, 17, 490), E/Z rejection, energy
window, RMSD pruning over graph automorphisms, Boltzmann weights; sorted by energy.
"""

from __future__ import annotations

import math
import re
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import rdDetermineBonds, rdDistGeom, rdForceFieldHelpers
from scipy import constants as _sc

from ringshift import limits as _limits
from ringshift.constants import KB_KCAL_PER_MOL_K
from ringshift.errors import GeometryWarning, InputError
from ringshift.hgroups import (H_SYMMETRY_TOLERANCE_A, automorphisms, group_equivalent_hydrogens, kabsch_rmsd,
                               prune_conformers, symmetry_graph)

__all__ = ["Structure", "load_structure", "read_mol_records", "group_equivalent_hydrogens", "ez_stereo_check",
           "kabsch_rmsd", "boltzmann_weights", "default_conformer_count", "ENERGY_PROPERTIES",
           "H_SYMMETRY_TOLERANCE_A"]

_KEKULE_OPS = Chem.SanitizeFlags.SANITIZE_ALL ^ Chem.SanitizeFlags.SANITIZE_SETAROMATICITY
_SUFFIXES = {".mol": "mol", ".sdf": "sdf", ".sd": "sdf", ".xyz": "xyz"}
_FORMATS = {"smiles": "smiles", "smi": "smiles", "mol": "mol", "sdf": "sdf", "sd": "sdf", "xyz": "xyz"}
_ELEMENTS = {Chem.GetPeriodicTable().GetElementSymbol(z): z for z in range(1, 119)}
_KCAL_PER_KJ = 1.0 / 4.184                                                    # thermochemical calorie
_KCAL_PER_HARTREE = _sc.physical_constants["Hartree energy"][0] * _sc.N_A / 4184.0    # CODATA via SciPy

#: SD data fields read as conformer energies (case-insensitive, first match wins) and their factor to
#: kcal/mol. Only differences matter: energies are made relative to the lowest record.
ENERGY_PROPERTIES: tuple[tuple[str, float], ...] = (
    ("energy_kcal_mol", 1.0), ("e_kcal_mol", 1.0), ("rel_energy_kcal_mol", 1.0), ("relative_energy_kcal_mol", 1.0),
    ("mmff94_energy", 1.0), ("energy", 1.0), ("relative_energy", 1.0), ("e_rel", 1.0),
    ("energy_kj_mol", _KCAL_PER_KJ), ("e_kj_mol", _KCAL_PER_KJ),
    ("energy_hartree", _KCAL_PER_HARTREE), ("e_hartree", _KCAL_PER_HARTREE), ("energy_eh", _KCAL_PER_HARTREE))


_MACROCYCLE_RING = 12            # design notes §7: 30 conformers miss [18]annulene's planar minimum
_CONFORMERS_RIGID, _CONFORMERS_MACROCYCLE = 30, 200
_MAX_SEED = 2**31 - 1            # ETKDG's randomSeed is a C int; -1 means "random"
_MAX_ABS_CHARGE = 100


@dataclass(frozen=True)
class Structure:
    """A molecule with explicit hydrogens and a weighted conformer ensemble.

    Attributes
    ----------
    name, source : str
        Display name (record name, file stem or the SMILES) and what the user gave (path or SMILES).
    mol : rdkit.Chem.Mol
        Explicit-H molecule, sanitised with RDKit aromaticity, bond stereo kept, carrying the conformers
        (ids 0..n_conf-1 as in ``coords``). Numbering: see the module docstring.
    coords : numpy.ndarray, shape (n_conf, n_atoms, 3)
        Coordinates in Å, float64, C-contiguous, read-only.
    weights : numpy.ndarray, shape (n_conf,)
        Conformer populations summing to 1.
    energies_kcal_mol : numpy.ndarray of shape (n_conf,), or None
        Energies relative to the lowest (MMFF94/UFF or an SD field), kcal/mol; None when unknown.
    charge : int
        Net formal charge.
    h_groups : tuple of tuple of int
        Groups of equivalent 1H indices, each sorted, groups sorted by first index.
    provenance : dict
        Format, coordinate method, counts, seed, temperature and thresholds.
    """

    name: str
    source: str
    mol: Chem.Mol
    coords: np.ndarray
    weights: np.ndarray
    energies_kcal_mol: np.ndarray | None
    charge: int
    h_groups: tuple[tuple[int, ...], ...]
    provenance: dict


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


def _coordinate_kind(mol: Chem.Mol) -> str:
    """'none' (no or all-zero coordinates), '2d' or '3d'. A file flagged 3D with all z = 0 counts as 3D
    (a planar molecule) only if it has X-H bonds, all 0.85-1.25 Å long, which a 2D drawing lacks."""
    if mol.GetNumConformers() == 0 or not np.any(x := mol.GetConformer().GetPositions()):
        return "none"
    if not np.all(np.isfinite(x)):
        raise InputError("non-finite atom coordinates")
    if not mol.GetConformer().Is3D():
        return "2d"
    if np.ptp(x[:, 2]) > 1e-4:
        return "3d"
    xh = [np.linalg.norm(x[b.GetBeginAtomIdx()] - x[b.GetEndAtomIdx()]) for b in mol.GetBonds()
          if 1 in (b.GetBeginAtom().GetAtomicNum(), b.GetEndAtom().GetAtomicNum())]
    return "3d" if xh and all(0.85 <= v <= 1.25 for v in xh) else "2d"


def _sanitize_kekule(mol: Chem.Mol, source: str) -> None:
    """Sanitise in place without aromaticity perception (Kekulé bonds, E/Z kept)."""
    try:
        with rdBase.BlockLogs():
            Chem.SanitizeMol(mol, _KEKULE_OPS)
            Chem.Kekulize(mol, clearAromaticFlags=True)
    except Exception as exc:            # RDKit raises several MolSanitizeException subclasses
        raise InputError(f"RDKit cannot sanitise the molecule ({' '.join(str(exc).split())})",
                         source=source) from None


# --------------------------------------------------------------------------------------- hydrogens


# --------------------------------------------------------------------------------------- readers
def _read_text(path: Path, what: str) -> str:
    """UTF-8 text of a structure file (BOM stripped), within the limits of :mod:`ringshift.limits`."""
    text = _limits.read_text(path, what)
    if not text.strip():
        raise InputError(f"file is empty; expected {what}", source=str(path))
    return text


def read_mol_records(path) -> list[Chem.Mol]:
    """Read every record of a MOL or SD file with its explicit hydrogens.

    Records are sanitised without aromaticity perception (Kekulé bonds) and get stereo from their
    coordinates (3D geometry; or 2D wedges and drawn double bonds). SD data fields are kept as
    properties; no hydrogens are added.

    Parameters
    ----------
    path : str or os.PathLike
        A .mol, .sdf or .sd file.

    Returns
    -------
    list of rdkit.Chem.Mol
        One molecule per record, in file order.
    """
    path = Path(path)
    text = _read_text(path, "a MOL or SD file")
    lines = text.splitlines()
    starts = [1] + [k + 2 for k, line in enumerate(lines) if line.strip() == "$$$$"]
    last = next((line.strip() for line in reversed(lines) if line.strip()), "")
    _limits.check_count(len(starts) - (last == "$$$$"), _limits.MAX_RECORDS, "SD records", str(path))
    supplier = Chem.SDMolSupplier()
    supplier.SetData(text, sanitize=False, removeHs=False, strictParsing=True)
    with rdBase.BlockLogs():
        mols = list(supplier)
    records = []
    for k, mol in enumerate(mols):
        where = f"{path}:{starts[min(k, len(starts) - 1)]}"
        if mol is None and not supplier.GetItemText(k).strip():
            continue
        if mol is None or mol.GetNumAtoms() == 0:
            raise InputError(f"record {k + 1} is not a readable MOL block with atoms", source=where)
        _limits.check_count(mol.GetNumAtoms(), _limits.MAX_ATOMS, f"atoms in record {k + 1}", where)
        _sanitize_kekule(mol, where)
        try:
            kind = _coordinate_kind(mol)
        except InputError as exc:
            raise InputError(exc.bare_message, source=where) from None
        if kind == "3d":
            _limits.check_coordinates(mol.GetConformer().GetPositions()[None],
                                      [a.GetSymbol() for a in mol.GetAtoms()], f"{where} (record {k + 1})")
            Chem.AssignStereochemistryFrom3D(mol)
        elif kind == "2d":
            Chem.AssignChiralTypesFromBondDirs(mol)
            Chem.DetectBondStereochemistry(mol)
            Chem.AssignStereochemistry(mol, cleanIt=True, force=True)
        records.append(mol)
    if not records:
        raise InputError("no molecule record found (expected a MOL block or SD records)", source=str(path))
    return records


def _read_xyz(path: Path) -> tuple[list[str], np.ndarray]:
    """Element symbols and (n_frames, n_atoms, 3) coordinates (Å) of a one- or multi-frame XYZ file."""
    lines = _read_text(path, "an XYZ file").splitlines()
    frames, symbols, k = [], None, 0
    while k < len(lines):
        if not lines[k].strip():
            k += 1
            continue
        head, frame = lines[k].split(), len(frames) + 1
        if len(head) != 1 or not re.fullmatch(r"[0-9]{1,12}", head[0]) or int(head[0]) < 1:
            hint = "; is the previous frame's count right?" if frame > 1 else ""
            raise InputError(f"expected the atom count of frame {frame} (one positive integer), got "
                             f"{lines[k].strip()[:40]!r}{hint}", source=f"{path}:{k + 1}")
        n = int(head[0])
        _limits.check_count(n, _limits.MAX_ATOMS, f"atoms in frame {frame}", f"{path}:{k + 1}")
        _limits.check_count(frame, _limits.MAX_RECORDS, "XYZ frames", f"{path}:{k + 1}")
        if k + 2 + n > len(lines):
            raise InputError(f"frame {frame} announces {n} atoms but the file ends after {len(lines) - k - 2} "
                             f"atom lines", source=f"{path}:{k + 1}")
        syms, xyz = [], np.empty((n, 3))
        for m in range(n):
            parts, where = lines[k + 2 + m].split(), f"{path}:{k + 3 + m}"
            sym = parts[0].capitalize() if parts else ""
            try:
                if len(parts) < 4 or sym not in _ELEMENTS:
                    raise ValueError
                xyz[m] = [float(v) for v in parts[1:4]]
            except ValueError:
                raise InputError(f"expected 'element x y z' (atom {m + 1} of {n}, frame {frame}), got "
                                 f"{lines[k + 2 + m].strip()[:40]!r}", source=where) from None
            if not np.all(np.isfinite(xyz[m])):
                raise InputError("non-finite coordinate", source=where)
            syms.append(sym)
        if symbols is not None and syms != symbols:
            raise InputError(f"frame {frame} does not list the atoms of frame 1 in the same order",
                             source=f"{path}:{k + 1}")
        symbols = syms
        frames.append(xyz)
        k += 2 + n
    stack = np.stack(frames)
    _limits.check_coordinates(stack, symbols, str(path))
    return symbols, stack


def _bonds_from_xyz(symbols: list[str], xyz: np.ndarray, charge: int) -> Chem.Mol:
    """RDKit bond perception (design notes §7); raises RDKit's exception when the charge does not fit."""
    rw = Chem.RWMol()
    for sym in symbols:
        rw.AddAtom(Chem.Atom(sym))
    conf = Chem.Conformer(len(symbols))
    conf.SetPositions(xyz)
    conf.Set3D(True)
    rw.AddConformer(conf, assignId=True)
    mol = rw.GetMol()
    with rdBase.BlockLogs():
        rdDetermineBonds.DetermineBonds(mol, charge=int(charge))
    return mol


def _mol_from_xyz(path: Path, charge: int | None) -> tuple[Chem.Mol, np.ndarray]:
    """Molecule and frames of an XYZ file; ``charge`` None means "not given" (tried as 0)."""
    symbols, frames = _read_xyz(path)
    q = 0 if charge is None else int(charge)
    try:
        mol = _bonds_from_xyz(symbols, frames[0], q)
    except Exception as exc:             # RDKit raises ValueError/RuntimeError on a charge that does not fit
        why = " ".join(str(exc).split())
        fits = []
        if len(symbols) <= 300:          # a few more perceptions (about 1 ms each for 20-50 atoms)
            for trial in (0, 1, -1, 2, -2, 3, -3):
                if trial != q and not fits:
                    try:
                        _bonds_from_xyz(symbols, frames[0], trial)
                        fits.append(trial)
                    except Exception:   # noqa: BLE001 - any failure just means "does not fit"
                        pass
        hint = f"; net charge {fits[0]} fits the geometry" if fits else ""
        no_h = "; the file has no hydrogen atoms (XYZ input needs every atom)" if "H" not in symbols else ""
        if charge is None:
            msg = (f"cannot assign bonds for a neutral molecule ({why}){hint}{no_h}; if this is an ion, give "
                   "its charge with --charge")
        else:
            msg = (f"the given charge {q} does not fit the geometry: RDKit cannot assign bonds with it ({why})"
                   f"{hint}{no_h}; check --charge and that no atom is missing")
        raise InputError(msg, source=str(path)) from None
    if "H" not in symbols and "C" in symbols:
        warnings.warn(GeometryWarning(f"{path}: no hydrogen atoms; an XYZ file must list every atom, so the bonds "
                                      "were perceived for a hydrogen-free molecule (add the hydrogens)"), stacklevel=3)
    _sanitize_kekule(mol, str(path))
    Chem.AssignStereochemistryFrom3D(mol)
    return mol, frames


def _short(text: str, n: int = 60) -> str:
    """``text`` cut to ``n`` characters for messages."""
    return text if len(text) <= n else text[: n - 3] + "..."


def _mol_from_smiles(smiles: str) -> tuple[Chem.Mol, str]:
    if len(smiles) > _limits.MAX_SMILES_CHARS:
        raise InputError(f"SMILES of {len(smiles)} characters exceeds the limit of {_limits.MAX_SMILES_CHARS}; "
                         "give large molecules as a MOL/SDF or XYZ file", source=_short(smiles))
    params = Chem.SmilesParserParams()
    params.sanitize, params.removeHs = False, False
    with rdBase.BlockLogs():
        mol = Chem.MolFromSmiles(smiles, params)
    if mol is None or mol.GetNumAtoms() == 0:
        try:
            what = "folder" if Path(smiles).is_dir() else "file" if Path(smiles).is_file() else None
        except (OSError, ValueError):
            what = None
        if what:
            raise InputError(f"is a {what}, not a readable SMILES; expected a .mol, .sdf, .sd or .xyz file "
                             "(name the file with its extension)", source=smiles)
        raise InputError("not a readable SMILES, nor a path to a .mol, .sdf, .sd or .xyz file",
                         source=_short(smiles))
    name = mol.GetProp("_Name").strip() if mol.HasProp("_Name") and mol.GetProp("_Name").strip() else smiles
    _sanitize_kekule(mol, _short(smiles))
    Chem.AssignStereochemistry(mol, cleanIt=True, force=True)
    mol = Chem.AddHs(mol)
    heavy_first = sorted(range(mol.GetNumAtoms()), key=lambda k: (mol.GetAtomWithIdx(k).GetAtomicNum() == 1, k))
    return Chem.RenumberAtoms(mol, heavy_first), name


def _record_energies(records: list[Chem.Mol], source: str) -> tuple[np.ndarray | None, str | None]:
    names = {p.lower(): p for p in records[0].GetPropNames()}
    for key, factor in ENERGY_PROPERTIES:
        if key in names:
            try:
                e = np.array([float(rec.GetProp(names[key])) * factor for rec in records])
            except (KeyError, ValueError):
                raise InputError(f"every record needs a numeric '{names[key]}' field (record 1 has one)",
                                 source=source) from None
            if not np.all(np.isfinite(e)):
                raise InputError(f"non-finite '{names[key]}' value", source=source)
            return e - e.min(), names[key]
    return None, None


def _mol_from_molfile(path: Path) -> tuple[Chem.Mol, np.ndarray | None, np.ndarray | None, str, dict]:
    records = read_mol_records(path)
    kinds = {_coordinate_kind(rec) == "3d" for rec in records}
    if len(kinds) > 1:
        raise InputError("mixes 2D and 3D records; give one kind", source=str(path))
    first = records[0]

    def signature(m):
        return [a.GetAtomicNum() for a in m.GetAtoms()], {tuple(sorted((b.GetBeginAtomIdx(), b.GetEndAtomIdx())))
                                                           for b in m.GetBonds()}

    for k, rec in enumerate(records[1:], start=2):
        if signature(rec) != signature(first):
            smiles = {Chem.MolToSmiles(Chem.RemoveAllHs(m, sanitize=False), isomericSmiles=False) for m in (rec, first)}
            what = "lists the atoms of record 1 in another order" if len(smiles) == 1 else "is another molecule"
            raise InputError(f"record {k} {what}; an ensemble needs one molecule in one atom order (load "
                             f"different molecules one at a time, e.g. with the batch command)", source=str(path))
    name = first.GetProp("_Name").strip() if first.HasProp("_Name") and first.GetProp("_Name").strip() else path.stem
    if kinds == {False}:                     # 2D or no coordinates: embed the first record
        mol = Chem.AddHs(first)
        mol.RemoveAllConformers()
        return mol, None, None, name, {"records": len(records),
                                       "hydrogens_added": mol.GetNumAtoms() - first.GetNumAtoms()}
    for rec in records:
        _check_chemistry(rec, str(path))
    with_h = [Chem.AddHs(rec, addCoords=True) for rec in records]
    for k, m in enumerate(with_h[1:], start=2):
        if m.GetNumAtoms() != with_h[0].GetNumAtoms():
            raise InputError(f"record {k} has {m.GetNumAtoms()} atoms with hydrogens added, record 1 "
                             f"{with_h[0].GetNumAtoms()}: the records differ in charges, valences or bond orders",
                             source=str(path))
    energies, prop = _record_energies(records, str(path))
    mol = Chem.Mol(with_h[0])
    mol.RemoveAllConformers()
    info = {"records": len(records), "hydrogens_added": mol.GetNumAtoms() - first.GetNumAtoms(),
            "energy_property": prop}
    return mol, np.stack([m.GetConformer().GetPositions() for m in with_h]), energies, name, info


# --------------------------------------------------------------------------------------- conformers
def default_conformer_count(mol: Chem.Mol) -> int:
    """Conformers to embed: 200 if a ring (SSSR) has >= 12 atoms, else 30 (design notes §7)."""
    big = any(len(r) >= _MACROCYCLE_RING for r in mol.GetRingInfo().AtomRings())
    return _CONFORMERS_MACROCYCLE if big else _CONFORMERS_RIGID


def _etkdg(seed: int, basic_knowledge: bool, max_iterations: int = 0) -> rdDistGeom.EmbedParameters:
    params = rdDistGeom.ETKDGv3()
    params.randomSeed, params.numThreads, params.maxIterations = int(seed), 0, max_iterations
    params.useMacrocycleTorsions, params.useBasicKnowledge, params.enforceChirality = True, basic_knowledge, True
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
    kept = [ok[k] for k in prune_conformers(coords[ok][:, heavy], automorphisms(symmetry_graph(mol, heavy, tags)), rmsd_A)]
    info = {"coordinates": "etkdg-v3" + (f"+{ff}" if ff else ""), "embedding_basic_knowledge": basic,
            "conformers_requested": n, "conformers_embedded": int(coords.shape[0]),
            "conformers_rejected_ez": int(coords.shape[0] - n_ez), "conformers_kept": len(kept),
            "not_converged": int(not_converged)}
    return coords[kept], None if energies is None else energies[kept] - energies[kept].min(), info


# --------------------------------------------------------------------------------------- entry point
def _detect_format(spec: str, fmt: str | None) -> str:
    if fmt is not None:
        if str(fmt).lower().lstrip(".") not in _FORMATS:
            raise InputError(f"unknown format {fmt!r}; expected smiles, mol, sdf or xyz", source="fmt")
        return _FORMATS[str(fmt).lower().lstrip(".")]
    suffix = Path(spec).suffix.lower() if len(spec) < 4096 else ""
    if suffix in _SUFFIXES:
        return _SUFFIXES[suffix]
    try:
        is_file = bool(suffix) and Path(spec).is_file()
    except OSError:
        is_file = False
    if is_file:
        raise InputError(f"unknown file format {suffix!r}; expected .mol, .sdf, .sd or .xyz (or pass fmt)",
                         source=spec)
    return "smiles"


def _check_chemistry(mol: Chem.Mol, source: str) -> None:
    """Refuse what is not a complete molecule: dummy or query atoms (``*``, R groups, atom lists) and bonds
    without a chemical order (MOL bond order 0 or 'any'); these would reach the force field or Hückel step."""
    dummy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 0]
    if dummy:
        raise InputError(f"atom {dummy[0]} (0-based) is a dummy or query atom ('*', R group or atom list); "
                         "expected a complete molecule", source=source)
    for b in mol.GetBonds():
        if b.HasQuery() or b.GetBondType() in (Chem.BondType.UNSPECIFIED, Chem.BondType.OTHER):
            raise InputError(f"bond {b.GetBeginAtomIdx()}-{b.GetEndAtomIdx()} (0-based) has no chemical bond order "
                             "(order 0 or a query bond); expected single, double, triple or aromatic bonds",
                             source=source)


def _check_options(charge, conformers, seed, temperature_K, energy_window_kcal_mol, rmsd_prune_A) -> None:
    for label, value, low in (("temperature_K", temperature_K, None), ("rmsd_prune_A", rmsd_prune_A, 0),
                              ("energy_window_kcal_mol", energy_window_kcal_mol, 0)):
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
                or (value <= 0 if low is None else value < low):
            raise InputError(f"expected a finite number {'> 0' if low is None else '>= 0'}, got {value!r}",
                             source=label)
    for label, value, low in (("conformers", conformers, 1), ("charge", charge, None)):
        if value is not None and (isinstance(value, bool) or not isinstance(value, (int, np.integer))
                                  or (low is not None and value < low)):
            raise InputError(f"expected {'a positive integer' if low else 'an integer'}, got {value!r}", source=label)
    if conformers is not None and conformers > _limits.MAX_RECORDS:
        raise InputError(f"expected at most {_limits.MAX_RECORDS} conformers, got {conformers}", source="conformers")
    if charge is not None and abs(charge) > _MAX_ABS_CHARGE:
        raise InputError(f"expected a net charge from -{_MAX_ABS_CHARGE} to {_MAX_ABS_CHARGE}, got {charge}",
                         source="charge")
    # RDKit reads a negative seed as "random": refuse it, so that every run is reproducible
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or not 0 <= seed <= _MAX_SEED:
        raise InputError(f"expected an integer from 0 to {_MAX_SEED} (RDKit's seed range; a negative seed would "
                         f"make the conformers random), got {seed!r}", source="seed")


def load_structure(spec: str, *, charge: int | None = None, conformers: int | None = None, seed: int = 42,
                   temperature_K: float = 298.15, energy_window_kcal_mol: float = 10.0, rmsd_prune_A: float = 0.3,
                   fmt: str | None = None) -> Structure:
    """Read a SMILES or a MOL/SDF/XYZ file into an explicit-H :class:`Structure`.

    Parameters
    ----------
    spec : str
        Path to a .mol/.sdf/.sd/.xyz file (chosen by extension), otherwise a SMILES.
    charge : int, optional
        Net charge; used for XYZ bond perception (default 0); must match the formal charges of a
        SMILES/MOL/SDF input if given.
    conformers : int, optional
        Conformers to embed without 3D input (default :func:`default_conformer_count`).
    seed : int
        ETKDG random seed; the same seed gives identical coordinates.
    temperature_K : float
        Temperature of the Boltzmann weights, K.
    energy_window_kcal_mol : float
        Generated conformers more than this above the lowest are dropped, kcal/mol.
    rmsd_prune_A : float
        Heavy-atom RMSD (Å, over automorphisms) below which a generated conformer duplicates a lower one.
    fmt : {"smiles", "mol", "sdf", "xyz"}, optional
        Force the input format.

    Returns
    -------
    Structure
        Generated conformers sorted by energy. File ensembles (SD records, XYZ frames) keep file order and
        are neither windowed nor pruned; Boltzmann weights when every SD record has an energy field
        (:data:`ENERGY_PROPERTIES`), else uniform. H groups come from the lowest-energy (or first) conformer.
    """
    if not isinstance(spec, (str, Path)) or not str(spec).strip():
        raise InputError("expected a SMILES or a path to a .mol, .sdf, .sd or .xyz file", source="spec")
    spec = str(spec).strip()
    _check_options(charge, conformers, seed, temperature_K, energy_window_kcal_mol, rmsd_prune_A)
    kind = _detect_format(spec, fmt)
    prov: dict = {"format": kind}
    coords = energies = None
    if kind == "smiles":
        base, name = _mol_from_smiles(spec)
    elif kind == "xyz":
        base, coords = _mol_from_xyz(Path(spec), charge)
        name = Path(spec).stem
        prov["frames"] = int(coords.shape[0])
    else:
        base, coords, energies, name, extra = _mol_from_molfile(Path(spec))
        prov.update(extra)
    _limits.check_count(base.GetNumAtoms(), _limits.MAX_ATOMS, "atoms (hydrogens included)", _short(spec))
    _check_chemistry(base, _short(spec))
    net = Chem.GetFormalCharge(base)
    if charge is not None and charge != net:
        raise InputError(f"charge={charge} contradicts the net formal charge {net} of the input", source=spec)
    if coords is None:
        n = conformers if conformers is not None else default_conformer_count(base)
        coords, energies, info = _generate(base, int(n), seed, float(energy_window_kcal_mol),
                                           float(rmsd_prune_A), spec)
        prov.update(info, seed=int(seed), rmsd_prune_A=float(rmsd_prune_A),
                    energy_window_kcal_mol=float(energy_window_kcal_mol))
    else:
        prov.update(coordinates="input", conformers_kept=int(coords.shape[0]))
    prov["temperature_K"] = float(temperature_K)
    coords = np.ascontiguousarray(coords, dtype=np.float64)
    mol = Chem.Mol(base)
    mol.RemoveAllConformers()
    for c in range(coords.shape[0]):
        conf = Chem.Conformer(mol.GetNumAtoms())
        conf.SetPositions(coords[c])
        conf.Set3D(True)
        conf.SetId(c)
        mol.AddConformer(conf)
    try:
        Chem.SanitizeMol(mol)                  # aromaticity now; bond stereo labels are kept
    except Exception as exc:
        raise InputError(f"RDKit cannot aromatise the molecule ({' '.join(str(exc).split())})", source=spec) from None
    if energies is not None:
        weights = boltzmann_weights(energies, temperature_K)
    else:
        weights = np.full(coords.shape[0], 1.0 / coords.shape[0])
    h_groups = group_equivalent_hydrogens(mol, coords[int(np.argmin(energies)) if energies is not None else 0])
    for arr in (coords, weights, energies):
        if arr is not None:
            arr.setflags(write=False)
    return Structure(name=name, source=spec, mol=mol, coords=coords, weights=weights, energies_kcal_mol=energies,
                     charge=int(net), h_groups=h_groups, provenance=prov)
