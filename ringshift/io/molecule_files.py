"""Reading molecules: SMILES strings, MOL/SDF files and XYZ files to RDKit molecules with coordinates.

SMILES are sanitised without aromaticity perception (RDKit's aromatic [18]annulene loses its E/Z marks)
and kept as Kekulé molecules with their stereo. MOL/SDF are read with ``removeHs=False``; SD energies from
:data:`ENERGY_PROPERTIES`. XYZ bonds come from :func:`rdkit.Chem.rdDetermineBonds.DetermineBonds` with
the net charge. Every reader applies the limits of :mod:`ringshift.limits`.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import rdDetermineBonds

from ringshift import limits as _limits
from ringshift.constants import KCAL_PER_HARTREE, KCAL_PER_KJ
from ringshift.errors import GeometryWarning, InputError
from ringshift.geometry.metal_ligand import DONOR_ELEMENTS, DONOR_RANGE_A, NON_METALS, coordinate_metals
from ringshift.io.xyz import parse_xyz_frames

__all__ = ['read_mol_records', 'ENERGY_PROPERTIES']


_KEKULE_OPS = Chem.SanitizeFlags.SANITIZE_ALL ^ Chem.SanitizeFlags.SANITIZE_SETAROMATICITY

_SUFFIXES = {".mol": "mol", ".sdf": "sdf", ".sd": "sdf", ".xyz": "xyz"}

_FORMATS = {"smiles": "smiles", "smi": "smiles", "mol": "mol", "sdf": "sdf", "sd": "sdf", "xyz": "xyz"}


#: SD data fields read as conformer energies (case-insensitive, first match wins) and their factor to
#: kcal/mol. Only differences matter: energies are made relative to the lowest record.
ENERGY_PROPERTIES: tuple[tuple[str, float], ...] = (
    ("energy_kcal_mol", 1.0), ("e_kcal_mol", 1.0), ("rel_energy_kcal_mol", 1.0), ("relative_energy_kcal_mol", 1.0),
    ("mmff94_energy", 1.0), ("energy", 1.0), ("relative_energy", 1.0), ("e_rel", 1.0),
    ("energy_kj_mol", KCAL_PER_KJ), ("e_kj_mol", KCAL_PER_KJ),
    ("energy_hartree", KCAL_PER_HARTREE), ("e_hartree", KCAL_PER_HARTREE), ("energy_eh", KCAL_PER_HARTREE))


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
    """Element symbols and (n_frames, n_atoms, 3) coordinates (Å) of a one- or multi-frame XYZ file
    (:func:`ringshift.io.xyz.parse_xyz_frames`; every frame must be whole)."""
    frames = list(parse_xyz_frames(_read_text(path, "an XYZ file").splitlines(), str(path)))
    if not frames:
        raise InputError("expected the atom count of frame 1 (one positive integer), got an empty file",
                         source=str(path))
    return list(frames[0].symbols), np.stack([f.coords for f in frames])


#: Oxidation states tried for metal ions, most common first (common practice, no source).
_METAL_CHARGES = (2, 3, 1, 4)


def _ligand_bonds(symbols: list[str], xyz: np.ndarray, charge: int, metal_xyz: np.ndarray) -> Chem.Mol:
    """Bonds of the non-metal atoms (n, 3) with net ``charge``; n atoms in the given order.

    RDKit's bond perception fails on some anions that it reads as the conjugate acid (measured: the porphine
    dianion of a zinc porphyrin, "Final molecular charge (-2) does not match input (-4)", while free-base porphine
    works). So a negative ligand is also tried with temporary protons on the |charge| donor atoms nearest a metal
    (``DONOR_ELEMENTS`` within ``DONOR_RANGE_A`` of :mod:`ringshift.geometry.metal_ligand`; H 1.01 Å from the
    donor towards the metal; at most 30 choices of donors), perceived
    neutral; the protons are then removed and their donors carry −1 (a pyrrolide N keeps the bonds of its NH).
    """
    try:
        return _bonds_from_xyz(symbols, xyz, charge)
    except Exception:                    # noqa: BLE001 - fall through to the protonated try; re-raised below
        if charge >= 0 or not len(metal_xyz):
            raise
    from itertools import combinations, islice

    dist = np.linalg.norm(xyz[:, None, :] - metal_xyz[None, :, :], axis=2).min(axis=1)
    donors = [i for i in np.argsort(dist, kind="stable") if symbols[i] in DONOR_ELEMENTS and dist[i] <= DONOR_RANGE_A]
    for chosen in islice(combinations(donors, -charge), 30):
        extra = []
        for i in chosen:
            near = metal_xyz[int(np.argmin(np.linalg.norm(metal_xyz - xyz[i], axis=1)))]
            extra.append(xyz[i] + 1.01 * (near - xyz[i]) / np.linalg.norm(near - xyz[i]))
        try:
            mol = _bonds_from_xyz(symbols + ["H"] * len(chosen), np.vstack([xyz, np.array(extra)]), 0)
        except Exception:                # noqa: BLE001 - this choice of donors does not give a valid structure
            continue
        n = len(symbols)
        added = range(n, n + len(chosen))
        if any([nb.GetIdx() for nb in mol.GetAtomWithIdx(h).GetNeighbors()] != [d] for h, d in zip(added, chosen)):
            continue
        rw = Chem.RWMol(mol)
        for h, d in zip(added, chosen):
            rw.RemoveBond(h, int(d))
            rw.GetAtomWithIdx(int(d)).SetFormalCharge(rw.GetAtomWithIdx(int(d)).GetFormalCharge() - 1)
        for h in sorted(added, reverse=True):
            rw.RemoveAtom(h)
        return rw.GetMol()
    return _bonds_from_xyz(symbols, xyz, charge)     # re-raise RDKit's own message


def _bonds_with_metal_ions(symbols: list[str], xyz: np.ndarray, charge: int) -> Chem.Mol:
    """Bonds of an XYZ geometry that holds metal atoms, in the file's atom order.

    RDKit's bond perception has no valences for metals (measured: zinc porphine raises "Atom … with atomic
    number 30 has no valences defined"), so each metal is read as an unbonded ion of the first charge in
    :data:`_METAL_CHARGES` (the same for every metal) that lets the rest, with the remaining net charge, take a
    valid bond assignment; a metal–ligand bond is kept outside the π system anyway (ringshift.pi.perception).
    Raises the last RDKit exception when no charge fits.
    """
    organic = [i for i, s in enumerate(symbols) if s in NON_METALS]
    metals = [i for i, s in enumerate(symbols) if s not in NON_METALS]
    last: Exception | None = None
    for m in _METAL_CHARGES:
        try:
            part = _ligand_bonds([symbols[i] for i in organic], xyz[organic], charge - m * len(metals), xyz[metals])
        except Exception as exc:     # noqa: BLE001 - RDKit raises ValueError/RuntimeError: try the next charge
            last = exc
            continue
        rw = Chem.RWMol()
        for i, sym in enumerate(symbols):
            atom = Chem.Atom(sym)
            if i in metals:
                atom.SetFormalCharge(m)
                atom.SetNoImplicit(True)
            rw.AddAtom(atom)
        for k, i in enumerate(organic):
            src = part.GetAtomWithIdx(k)
            dst = rw.GetAtomWithIdx(i)
            dst.SetFormalCharge(src.GetFormalCharge())
            dst.SetNumExplicitHs(src.GetNumExplicitHs())
            dst.SetNoImplicit(True)
            dst.SetNumRadicalElectrons(src.GetNumRadicalElectrons())
        for b in part.GetBonds():
            rw.AddBond(organic[b.GetBeginAtomIdx()], organic[b.GetEndAtomIdx()], b.GetBondType())
        conf = Chem.Conformer(len(symbols))
        conf.SetPositions(xyz)
        conf.Set3D(True)
        rw.AddConformer(conf, assignId=True)
        ionic = rw.GetMol()
        bonded = coordinate_metals(ionic, xyz)
        names = ", ".join(sorted({symbols[i] for i in metals}))
        how = (f"bonded to the donor atoms within {DONOR_RANGE_A:g} Å (a single bond from each anionic donor, a "
               "dative bond from each neutral one)" if bonded is not None else "left unbonded")
        warnings.warn(GeometryWarning(
            f"metal {names}: an XYZ file carries no bonds to it, so it is read as {names}{m:+d} beside ligands of "
            f"net charge {charge - m * len(metals):+d} (the first of the charges "
            f"{', '.join(f'{c:+d}' for c in _METAL_CHARGES)} that gives them a valid bond assignment) and "
            f"{how}; give an SDF with its bonds to fix them"), stacklevel=4)
        return bonded if bonded is not None else ionic
    assert last is not None
    raise last


def _bonds_from_xyz(symbols: list[str], xyz: np.ndarray, charge: int) -> Chem.Mol:
    """RDKit bond perception (design notes §7); raises RDKit's exception when the charge does not fit."""
    if any(s not in NON_METALS for s in symbols) and any(s in NON_METALS for s in symbols):
        return _bonds_with_metal_ions(symbols, xyz, charge)
    rw = Chem.RWMol()
    for sym in symbols:
        rw.AddAtom(Chem.Atom(sym))
    conf = Chem.Conformer(len(symbols))
    conf.SetPositions(xyz)
    conf.Set3D(True)
    rw.AddConformer(conf, assignId=True)
    mol = rw.GetMol()
    with rdBase.BlockLogs():            # embedChiral=False: no full sanitisation with aromaticity perception,
        # whose fused-ring search took 37 s on an invented 136-carbon graphene flake and over 10 min on a
        # 268-carbon one, holding the GIL (no Ctrl-C); _mol_from_xyz sanitises Kekulé-only and sets 3D stereo
        rdDetermineBonds.DetermineBonds(mol, charge=int(charge), embedChiral=False)
    return mol


def _mol_from_xyz(path: Path, charge: int | None) -> tuple[Chem.Mol, np.ndarray]:
    """Molecule and frames of an XYZ file; ``charge`` None means "not given" (tried as 0)."""
    symbols, frames = _read_xyz(path)
    q = 0 if charge is None else int(charge)
    try:
        mol = _bonds_from_xyz(symbols, frames[0], q)
    except Exception as exc:             # RDKit raises ValueError/RuntimeError on a charge that does not fit
        why = " ".join(str(exc).split())
        fits: list[int] = []
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
                   "its net charge")
        else:
            msg = (f"the given charge {q} does not fit the geometry: RDKit cannot assign bonds with it ({why})"
                   f"{hint}{no_h}; check the net charge and that no atom is missing")
        raise InputError(msg, source=str(path), parameter="charge") from None
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
    params.sanitize, params.removeHs = False, False  # type: ignore[assignment]  # rdkit-stubs type property setters as (*args, **kwargs)
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
