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
Geometry route ``"gfn2-xtb"``: the force-field (or input) conformers are re-optimised with GFN2-xTB
(:mod:`ringshift.geometry.xtb`, the optional ``tblite`` extra) and weighted by GFN2 energies.
Equivalent protons: :func:`ringshift.geometry.symmetry.group_equivalent_hydrogens` with the chosen exchange rule.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from rdkit import Chem

from ringshift import limits as _limits
from ringshift.errors import GeometryWarning, InputError
from ringshift.geometry.metal_ligand import coordinate_metals, metal_proxy, normalise_dative
from ringshift.geometry.symmetry import EXCHANGE_RULES, group_equivalent_hydrogens
from ringshift.io.molecule_files import (
    _check_chemistry,
    _detect_format,
    _mol_from_molfile,
    _mol_from_smiles,
    _mol_from_xyz,
    _short,
)

__all__ = ['Structure', 'load_structure', 'structure_from_molecule', 'GEOMETRY_ROUTES', 'EXCHANGE_RULES',
           'proton_indices', 'isotope_note', 'require_protons']


def proton_indices(mol: Chem.Mol) -> list[int]:
    """Indices of the ¹H atoms: hydrogens without an isotope label or labelled 1. ²H (D) and ³H (T) are not
    protons of a ¹H spectrum and are left out of predictions, tables and assignments alike (the rule
    :func:`ringshift.geometry.symmetry.group_equivalent_hydrogens` applies to the H groups)."""
    return [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1 and a.GetIsotope() in (0, 1)]


def isotope_note(mol: Chem.Mol) -> str:
    """A one-line note on hydrogen isotopes that are not ¹H (empty string when there are none)."""
    heavy_h = [a for a in mol.GetAtoms() if a.GetAtomicNum() == 1 and a.GetIsotope() not in (0, 1)]
    if not heavy_h:
        return ""
    labels = ", ".join(f"{n} {'²H' if iso == 2 else '³H' if iso == 3 else f'{iso}H'}"
                       for iso, n in sorted(_count(a.GetIsotope() for a in heavy_h).items()))
    if not proton_indices(mol):
        return (f"the molecule has no ¹H: all its hydrogens are isotopes ({labels}), which have no ¹H signal; "
                "nothing to predict")
    return f"{labels} atom(s) are not ¹H: left out of the predicted shifts, the H groups and the assignment"


def require_protons(mol: Chem.Mol, source: str = "structure") -> None:
    """Refuse a comparison with a ¹H spectrum for a molecule without ¹H (no H at all, or only ²H/³H)."""
    if not proton_indices(mol):
        why = isotope_note(mol) or "the molecule has no hydrogens"
        raise InputError(f"{why.split(';')[0]}; a ¹H spectrum has nothing to be compared with", source)


def _count(values) -> dict[int, int]:
    out: dict[int, int] = {}
    for v in values:
        out[int(v)] = out.get(int(v), 0) + 1
    return out

#: Geometry routes of :func:`load_structure`: MMFF94 conformers (or the input coordinates) as they are, or
#: re-optimised with GFN2-xTB (Bannwarth, Ehlert & Grimme, J. Chem. Theory Comput. 2019, 15, 1652).
GEOMETRY_ROUTES: tuple[str, ...] = ("force-field", "gfn2-xtb")


_MAX_SEED = 2**31 - 1            # ETKDG's randomSeed is a C int; -1 means "random"

_MAX_ABS_CHARGE = 100

_PT = Chem.GetPeriodicTable()


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
        Format, coordinate method, counts, seed, temperature and thresholds, the geometry route
        (``geometry``, with ``geometry_refinement`` for GFN2-xTB) and the exchange rule (``exchange``).
    label : str or None
        The compound's name given by the user (``name=`` of the API, ``--name`` of the CLI); it is then also
        ``name``, so every title shows it. None when not given.
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
    label: str | None = None

    def __repr__(self) -> str:
        """One line: name, formula, atoms, conformers and charge (the arrays stay out of the text)."""
        from rdkit.Chem.rdMolDescriptors import CalcMolFormula

        n_conf = int(self.coords.shape[0])
        return (f"<Structure {self.name}: {CalcMolFormula(self.mol)}, {self.mol.GetNumAtoms()} atoms, "
                f"{n_conf} conformer{'s' if n_conf != 1 else ''}, {len(self.h_groups)} H groups, "
                f"charge {self.charge:+d}>")


def _check_options(charge, conformers, seed, temperature_K, energy_window_kcal_mol, rmsd_prune_A, exchange,
                   geometry) -> None:
    from ringshift._validation import choice

    for label, value, choices, what in (("exchange", exchange, EXCHANGE_RULES, "exchange rule"),
                                        ("geometry", geometry, GEOMETRY_ROUTES, "geometry route")):
        choice(value, choices, label, what)
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
                   fmt: str | None = None, exchange: str = "slow", geometry: str = "force-field") -> Structure:
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
    exchange : {"slow", "fast"}
        Which protons form one group (:func:`~ringshift.geometry.symmetry.group_equivalent_hydrogens`):
        "slow", the symmetry of the lowest-energy conformer (the low-temperature spectrum; methyl and
        tert-butyl rotation and phenyl flips still averaged); "fast", protons that conformational and
        bond-shift processes interchange are averaged as well (the high-temperature limit, e.g. the inner and
        outer H of [18]annulene), diastereotopic protons kept apart where RDKit perceives the stereo element.
        A group's shift is the mean of its members' conformer-averaged shifts.
    geometry : {"force-field", "gfn2-xtb"}
        "force-field": MMFF94 conformers (input coordinates as given); "gfn2-xtb": those conformers
        re-optimised with GFN2-xTB (needs the ``xtb`` extra, ``pip install 'ringshift[xtb]'``), their GFN2
        energies giving the Boltzmann weights; the conformers (file ensembles too) are sorted by GFN2 energy.

    Returns
    -------
    Structure
        Generated conformers sorted by energy. File ensembles (SD records, XYZ frames) keep file order and
        are neither windowed nor pruned; Boltzmann weights when every SD record has an energy field
        (:data:`ENERGY_PROPERTIES`) or GFN2 energies exist, else uniform. H groups come from the
        lowest-energy (or first) conformer.
    """
    if not isinstance(spec, (str, Path)) or not str(spec).strip():
        raise InputError("expected a SMILES or a path to a .mol, .sdf, .sd or .xyz file", source="spec")
    spec = str(spec).strip()
    _check_options(charge, conformers, seed, temperature_K, energy_window_kcal_mol, rmsd_prune_A, exchange, geometry)
    kind = _detect_format(spec, fmt)
    prov: dict = {"format": kind}
    coords = energies = None
    if kind == "smiles":
        base, name = _mol_from_smiles(spec)
    elif kind == "xyz":
        try:
            base, coords = _mol_from_xyz(Path(spec), charge)
        except InputError as exc:   # bonds do not fit a neutral molecule: say so when the electron count is odd
            if charge is None and exc.parameter == "charge":
                _odd_electron_check(Path(spec))
            raise
        if charge is None:                      # a neutral radical whose bonds RDKit could assign, an ion shape
            _odd_electron_check(Path(spec), sum(a.GetAtomicNum() for a in base.GetAtoms()))
            _ion_shape_check(base, coords[0], spec)
        name = Path(spec).stem
        prov["frames"] = int(coords.shape[0])
    else:
        base, coords, energies, name, extra = _mol_from_molfile(Path(spec))
        prov.update(extra)
    return _complete(base, coords, energies, name, spec, prov, charge=charge, conformers=conformers, seed=seed,
                     temperature_K=temperature_K, energy_window_kcal_mol=energy_window_kcal_mol,
                     rmsd_prune_A=rmsd_prune_A, exchange=exchange, geometry=geometry)


def structure_from_molecule(mol: Chem.Mol, name: str, source: str, *, conformers: int | None = None,
                            seed: int = 42, temperature_K: float = 298.15, energy_window_kcal_mol: float = 10.0,
                            rmsd_prune_A: float = 0.3, exchange: str = "slow",
                            geometry: str = "force-field", provenance: dict | None = None,
                            extra_starts: list[np.ndarray] | None = None) -> Structure:
    """A :class:`Structure` from an explicit-H Kekulé molecule without coordinates (a configurational isomer of
    :mod:`ringshift.geometry.configurations`), through the same conformer search, checks and grouping as
    :func:`load_structure` of a SMILES. ``provenance`` entries are added to the record's provenance;
    ``extra_starts`` (each (n_atoms, 3) Å) join the search's starting geometries."""
    _check_options(None, conformers, seed, temperature_K, energy_window_kcal_mol, rmsd_prune_A, exchange, geometry)
    prov = {"format": "smiles", **(provenance or {})}
    return _complete(Chem.Mol(mol), None, None, name, source, prov, charge=None, conformers=conformers, seed=seed,
                     temperature_K=temperature_K, energy_window_kcal_mol=energy_window_kcal_mol,
                     rmsd_prune_A=rmsd_prune_A, exchange=exchange, geometry=geometry, extra_starts=extra_starts)


def _complete(base: Chem.Mol, coords, energies, name: str, spec: str, prov: dict, *, charge, conformers, seed,
              temperature_K, energy_window_kcal_mol, rmsd_prune_A, exchange, geometry,
              extra_starts=None) -> Structure:
    """Checks, conformers (when ``coords`` is None), the optional GFN2-xTB step, aromaticity and H groups."""
    generated = coords is None
    base = normalise_dative(base)                 # M(−)–N(+) written bonds become N→M (geometry.metal_ligand)
    _limits.check_count(base.GetNumAtoms(), _limits.MAX_ATOMS, "atoms (hydrogens included)", _short(spec))
    _check_chemistry(base, _short(spec))
    net = Chem.GetFormalCharge(base)
    if charge is not None and charge != net:
        raise InputError(f"charge={charge} contradicts the net formal charge {net} of the input", source=spec)
    if coords is None:
        # conformer generation (RDKit's distance geometry and force fields) loads only when it is used: a file
        # with coordinates does not pay for it (start-up, issue 16)
        from ringshift.geometry.conformers import _generate, candidate_count, default_conformer_count

        proxy = metal_proxy(base)               # a metal chelate: embed its free-base ligand (geometry.metal_ligand)
        target = base if proxy is None else proxy.mol
        n = conformers if conformers is not None else default_conformer_count(target)
        est = _limits.estimate_conformers(target.GetNumAtoms(),
                                          candidate_count(target, int(n)) + len(extra_starts or ()))
        _limits.check_estimate(est, "conformer generation", _short(spec),
                               hint="or give 3D coordinates (SDF or XYZ) or fewer conformers")
        with _limits.progress("conformer generation", est):
            coords, energies, info = _generate(target, int(n), seed, float(energy_window_kcal_mol),
                                               float(rmsd_prune_A), spec,
                                               extra_starts=extra_starts if proxy is None else None)
        if proxy is not None:
            coords = proxy.lift(coords)
            bonded = coordinate_metals(base, coords[0]) if proxy.ionic else None
            if bonded is not None:
                base = bonded
            info["metal_geometry"] = ("free-base ligand embedded, metal at its donors' centroid"
                                      + ("; ion pair bonded back to the donors" if bonded is not None else ""))
        prov.update(info, seed=int(seed), rmsd_prune_A=float(rmsd_prune_A),
                    energy_window_kcal_mol=float(energy_window_kcal_mol))
    else:
        prov.update(coordinates="input", conformers_kept=int(coords.shape[0]))
    prov["geometry"] = geometry
    if geometry == "gfn2-xtb":
        coords, energies = _refine_gfn2(base, coords, energies, int(net), spec, prov)
    prov["temperature_K"] = float(temperature_K)
    prov["exchange"] = exchange
    coords = np.ascontiguousarray(coords, dtype=np.float64)
    _check_ez(base, coords, spec, generated=generated)
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
        from ringshift.geometry.conformers import boltzmann_weights

        weights = boltzmann_weights(energies, temperature_K)
    else:
        weights = np.full(coords.shape[0], 1.0 / coords.shape[0])
    h_groups = group_equivalent_hydrogens(mol, coords[int(np.argmin(energies)) if energies is not None else 0],
                                          exchange=exchange)
    for arr in (coords, weights, energies):
        if arr is not None:
            arr.setflags(write=False)
    return Structure(name=name, source=spec, mol=mol, coords=coords, weights=weights, energies_kcal_mol=energies,
                     charge=int(net), h_groups=h_groups, provenance=prov)


def _check_ez(mol: Chem.Mol, coords: np.ndarray, spec: str, *, generated: bool) -> None:
    """The last E/Z check of every route, on the conformers (n_conf, n_atoms, 3) Å.

    Generated (and GFN2-xTB re-optimised) conformers were checked against the input's stereo on the way; a
    contradiction left here is an error. File coordinates define the stereo themselves (RDKit reads it from the
    first record), so each later record of an ensemble is compared with the first, bond by bond, and another
    configuration is a warning that names the bond and the record."""
    if generated:
        from ringshift.geometry.conformers import ez_stereo_check

        for c in range(coords.shape[0]):
            problems = ez_stereo_check(mol, coords[c])
            if problems:
                raise InputError(f"conformer {c}: {problems[0]}; check the stereo marks or supply 3D coordinates",
                                 source=spec)
        return
    for c in range(1, coords.shape[0]):
        changed = _configuration_changes(mol, coords[0], coords[c])
        if changed:
            warnings.warn(GeometryWarning(f"{_short(spec)}: record {c + 1} (conformer {c}, 0-based) has another E/Z "
                                          f"configuration than the first: {changed[0]}"), stacklevel=4)


def _configuration_changes(mol: Chem.Mol, first: np.ndarray, other: np.ndarray) -> list[str]:
    """Double bonds (with a neighbour besides the partner at both ends) whose reference dihedral is cis in one
    geometry (n_atoms, 3) Å and trans in the other (|dihedral| < 90 deg is cis; common practice, no source)."""
    from ringshift.geometry.conformers import _dihedral_deg

    out = []
    for b in mol.GetBonds():
        if b.GetBondType() != Chem.BondType.DOUBLE:
            continue
        i, j = b.GetBeginAtomIdx(), b.GetEndAtomIdx()
        ni = sorted(n.GetIdx() for n in mol.GetAtomWithIdx(i).GetNeighbors() if n.GetIdx() != j)
        nj = sorted(n.GetIdx() for n in mol.GetAtomWithIdx(j).GetNeighbors() if n.GetIdx() != i)
        if not ni or not nj:
            continue
        d0 = _dihedral_deg(first[ni[0]], first[i], first[j], first[nj[0]])
        d1 = _dihedral_deg(other[ni[0]], other[i], other[j], other[nj[0]])
        if (abs(d0) < 90.0) != (abs(d1) < 90.0):
            out.append(f"bond {i}-{j}: dihedral {ni[0]}-{i}-{j}-{nj[0]} is {d0:.0f} deg in the first record but "
                       f"{d1:.0f} deg here")
    return out
#: Largest spread (max − min, Å) of the C–C bonds of a ring called "equal": benzene 1.39–1.40, the COT
#: dianion 1.40–1.41 Å, against 1.33/1.47 Å in neutral cyclooctatetraene (Traetteberg, Acta Chem. Scand.
#: 1966, 20, 1724; from memory) and 1.36/1.44 Å in alternating 4n annulenes.
_EQUAL_BONDS_A = 0.04

#: Largest RMS deviation (Å) of a ring's atoms and their substituents from their common plane for the ring to
#: be judged by its bond lengths.
_FLAT_RING_A = 0.1


def _odd_electron_check(path: Path, n_el: int | None = None) -> None:
    """Refuse an XYZ file given without a charge whose neutral electron count ``n_el`` (read from the file's
    first frame when None) is odd: a radical or an ion."""
    if n_el is None:
        from ringshift.io.xyz import parse_xyz_frames

        lines = _limits.read_text(path, "an XYZ file").splitlines()
        first = next(iter(parse_xyz_frames(lines, str(path), on_truncated=lambda *a: None)), None)
        if first is None:
            return
        n_el = sum(_PT.GetAtomicNumber(sym) for sym in first.symbols)
    if n_el % 2:
        raise InputError(f"{n_el} electrons as a neutral molecule, an odd number: an ion (e.g. +1 or -1) or a "
                         "radical (which gets no ring current; give a radical as SMILES or MOL/SDF, XYZ bond "
                         "perception cannot place its unpaired electron); if this is an ion, give its net charge",
                         source=str(path), parameter="charge")


def _ion_shape_check(mol: Chem.Mol, xyz: np.ndarray, source: str) -> None:
    """Refuse an XYZ geometry read as neutral whose planar all-carbon 4n ring has equal C–C bonds.

    As a neutral molecule such a ring holds 4n π electrons, and planar 4n rings alternate (cyclooctatetraene
    1.33/1.47 Å); equal bonds are the shape of its 4n ± 2 ion (the planar C8H8²⁻ dianion, 1.40–1.41 Å; from
    memory). The user decides with the charge (0 keeps the neutral reading).
    """
    x = np.asarray(xyz, dtype=np.float64)
    for ring in mol.GetRingInfo().AtomRings():
        n = len(ring)
        atoms = [mol.GetAtomWithIdx(a) for a in ring]
        if n % 4 or any(a.GetAtomicNum() != 6 or a.GetTotalDegree() != 3 or a.GetFormalCharge() for a in atoms):
            continue
        bonds = [mol.GetBondBetweenAtoms(ring[k], ring[(k + 1) % n]) for k in range(n)]
        if sum(b.GetBondType() == Chem.BondType.DOUBLE for b in bonds) * 2 != n:
            continue                                   # not n/2 ring double bonds: not an isolated [n]annulene unit
        d = np.linalg.norm(x[list(ring)] - x[list(ring[1:]) + [ring[0]]], axis=1)
        # planar π ring: the ring atoms and their substituents in one plane (a twisted ring is not judged)
        near = sorted(set(ring) | {nb.GetIdx() for a in atoms for nb in a.GetNeighbors()})
        p = x[near] - x[near].mean(axis=0)
        rms = float(np.linalg.svd(p, compute_uv=False)[-1] / np.sqrt(len(near)))
        if float(np.ptp(d)) < _EQUAL_BONDS_A and rms < _FLAT_RING_A:
            raise InputError(
                f"the planar {n}-membered carbon ring (atoms {sorted(ring)}, 0-based) has equal C–C bonds "
                f"({d.min():.3f}–{d.max():.3f} Å), the shape of a {n + 2}π or {n - 2}π ion (as the planar C₈H₈²⁻ "
                f"dianion), but as a neutral molecule it holds {n} π electrons (4n), and planar 4n rings alternate "
                "(cyclooctatetraene 1.33/1.47 Å); give the net charge (e.g. -2 for the dianion), or 0 to read it "
                "as neutral",
                source=source, parameter="charge")


def _refine_gfn2(mol: Chem.Mol, coords: np.ndarray, energies_ff: np.ndarray | None, charge: int, spec: str,
                 prov: dict) -> tuple[np.ndarray, np.ndarray]:
    """Re-optimise the conformers (n_conf, n_atoms, 3), Å, with GFN2-xTB; record the route in ``prov``.

    ``energies_ff`` (n_conf,) kcal/mol, or None, are the force-field (or SD) energies that choose which
    conformers are re-optimised. Returns the GFN2 coordinates (k, n_atoms, 3) in Å and energies (k,) in
    kcal/mol relative to the lowest, sorted by GFN2 energy. The net charge and the number of unpaired
    electrons (RDKit radical electrons) are passed on: without them tblite computes the neutral closed shell.
    """
    from ringshift.geometry.xtb import gfn2_optimise  # tblite itself is imported (or missed) inside it

    unpaired = int(sum(at.GetNumRadicalElectrons() for at in mol.GetAtoms()))
    out, energies, info = gfn2_optimise(mol, np.ascontiguousarray(coords, dtype=np.float64), charge=charge,
                                        unpaired=unpaired, source=spec, energies_kcal_mol=energies_ff)
    out = np.ascontiguousarray(out, dtype=np.float64)
    energies = np.asarray(energies, dtype=np.float64)
    n = mol.GetNumAtoms()
    if out.ndim != 3 or out.shape[1:] != (n, 3) or out.shape[0] < 1 or energies.shape != (out.shape[0],) \
            or not (np.all(np.isfinite(out)) and np.all(np.isfinite(energies))):
        raise RuntimeError(f"gfn2_optimise returned coordinates of shape {out.shape} and energies of shape "
                           f"{energies.shape}; expected (k, {n}, 3) and (k,), finite")
    order = np.argsort(energies, kind="stable")           # gfn2_optimise sorts already; keep that promise here
    out, energies = out[order], energies[order]
    energies = energies - energies.min()
    prov["coordinates"] = f"{prov['coordinates']}+gfn2-xtb"
    prov["conformers_kept"] = int(out.shape[0])
    prov["geometry_refinement"] = dict(info)
    return out, energies
