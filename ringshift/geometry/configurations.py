"""Configurational isomers of ring double bonds: enumeration, a cheap force-field screen, inner protons.

Which isomer is a new annulene? Its SMILES often leaves the E/Z of the ring double bonds open, and the
configuration is what the spectrum should decide. :func:`enumerate_configurations` sets every open ring double
bond (mode ``"open"``) or every ring double bond (mode ``"all"``) cis or trans about its ring neighbours
(design notes §7: cis/trans set on the bonds directly survive embedding), and keeps one molecule per
configuration up to the ring's symmetry (:class:`~ringshift.geometry.stereo_smiles.ConfigurationSpace`; RDKit's
own canonical SMILES merges distinct ring configurations, see :mod:`ringshift.geometry.stereo_smiles`).
:func:`screen_configurations` embeds each with a short version of the conformer search (ETKDG v3, Wang, Witek,
Landrum & Riniker, J. Chem. Inf. Model. 2020, 60, 2044; MMFF94, Halgren, J. Comput. Chem. 1996, 17, 490) and
keeps those within :data:`ENERGY_WINDOW_KCAL_MOL` of the lowest, at most :data:`MAX_KEPT`, for the full search
and the comparison with a spectrum. :func:`inner_hydrogens` counts the protons that point into the ring.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np
from rdkit import Chem
from rdkit.Chem import rdForceFieldHelpers

from ringshift.errors import InputError
from ringshift.geometry.circuits import PLANARITY_LIMIT_A
from ringshift.geometry.conformers import _generate
from ringshift.geometry.macrocycle import planarity_rms_A
from ringshift.geometry.planes import plane_fit
from ringshift.geometry.stereo_smiles import ConfigurationSpace, isomeric_smiles, stereo_double_bonds

__all__ = ['CONFIGURATION_MODES', 'MAX_OPEN_BONDS', 'MAX_KEPT', 'ENERGY_WINDOW_KCAL_MOL', 'SCREEN_EMBEDDINGS',
           'ConfigurationCandidate', 'ConfigurationScreen', 'ring_stereo_bonds', 'open_ring_bonds',
           'enumerate_configurations', 'inner_hydrogens', 'screen_configurations', 'mmff_energy']

#: ``given``: the input's configuration as it is (open bonds are left to the embedding); ``open``: every ring
#: double bond whose E/Z the input leaves open is enumerated; ``all``: every ring double bond is enumerated.
CONFIGURATION_MODES: tuple[str, ...] = ("given", "open", "all")

#: At most this many ring double bonds are enumerated (2**10 = 1024 cis/trans assignments). [20]annulene has 10;
#: the distinct isomers of 10 bonds on a ring (78 up to rotation and reflection, OEIS A000029) already take
#: about a minute to screen on one core, and each further bond doubles it.
MAX_OPEN_BONDS = 10

#: Isomers kept after the screen for the full conformer search and the comparison (each costs seconds, as one
#: ``compare``; six keep a [14]annulene run near a minute on one core).
MAX_KEPT = 6

#: Screen energies above the lowest isomer's by more than this (kcal/mol) are dropped. The screen's MMFF94
#: minima come from a few starts only and can sit several kcal/mol above the isomer's true minimum (a twisted
#: [18]annulene conformer 12.6 kcal/mol above the planar one, design notes §7), so the window is wider than that.
ENERGY_WINDOW_KCAL_MOL = 15.0

#: ETKDG embeddings per isomer in the screen (the flat honeycomb starts of the search come on top).
SCREEN_EMBEDDINGS = 4


@dataclass(frozen=True)
class ConfigurationCandidate:
    """One configurational isomer after the screen.

    Attributes
    ----------
    smiles : str or None
        Isomeric SMILES that keeps the configuration (None when none could be written and checked).
    states : tuple of int
        Per ring double bond of :attr:`ConfigurationScreen.bonds`: 1 cis, 0 trans (about ring neighbours).
    mol : rdkit.Chem.Mol
        Explicit-H Kekulé molecule with the configuration set, in the input's atom numbering.
    energy_kcal_mol : float or None
        Screen MMFF94 energy relative to the lowest screened isomer, kcal/mol (None: not embedded).
    inner_h : int
        Hydrogens inside the ring in the screen geometry (:func:`inner_hydrogens`).
    planarity_rms_A : float
        RMS distance of the ring atoms from their plane in the screen geometry, Å.
    status : str
        "kept", "outside-window", "beyond-cap" or "not-embedded".
    note : str
        Why an isomer was not embedded ("" otherwise).
    coords : numpy.ndarray, shape (n_atoms, 3), or None
        The screen's lowest geometry, Å (a start for the full search); None when not embedded.
    """

    smiles: str | None
    states: tuple[int, ...]
    mol: Chem.Mol = field(repr=False)
    energy_kcal_mol: float | None
    inner_h: int
    planarity_rms_A: float
    status: str
    note: str = ""
    coords: np.ndarray | None = field(default=None, repr=False)

    @property
    def planar(self) -> bool:
        """Ring atoms within :data:`~ringshift.geometry.circuits.PLANARITY_LIMIT_A` of a plane (RMS)."""
        return self.planarity_rms_A <= PLANARITY_LIMIT_A


@dataclass(frozen=True)
class ConfigurationScreen:
    """The enumeration and screen of one input: counts, the ring and every distinct isomer, lowest first."""

    mode: str
    bonds: tuple[tuple[int, int], ...]
    ring: tuple[int, ...]
    assignments: int
    candidates: tuple[ConfigurationCandidate, ...]

    @property
    def kept(self) -> list[ConfigurationCandidate]:
        return [c for c in self.candidates if c.status == "kept"]

    def count(self, status: str) -> int:
        return sum(c.status == status for c in self.candidates)


def _ring_degree(mol: Chem.Mol, atom: int) -> int:
    return sum(1 for b in mol.GetAtomWithIdx(atom).GetBonds() if b.IsInRing())


def ring_stereo_bonds(mol: Chem.Mol) -> list[int]:
    """Indices of the ring double bonds whose E/Z is a configuration of the ring: RDKit lets them carry E/Z (rings
    of 8 or more atoms) and both atoms have exactly two ring bonds (annulene and bridged-annulene perimeters).
    A double bond at a fusion atom (porphyrin α-carbon–meso bonds) is left out: its E/Z turns a fused ring
    over, not the perimeter."""
    out = []
    for b in stereo_double_bonds(mol):
        bond = mol.GetBondWithIdx(b)
        if bond.IsInRing() and _ring_degree(mol, bond.GetBeginAtomIdx()) == 2 \
                and _ring_degree(mol, bond.GetEndAtomIdx()) == 2:
            out.append(b)
    return out


def open_ring_bonds(mol: Chem.Mol) -> list[int]:
    """The ring double bonds of :func:`ring_stereo_bonds` whose E/Z the molecule leaves open."""
    fixed = (Chem.BondStereo.STEREOE, Chem.BondStereo.STEREOZ, Chem.BondStereo.STEREOCIS,
             Chem.BondStereo.STEREOTRANS)
    return [b for b in ring_stereo_bonds(mol) if mol.GetBondWithIdx(b).GetStereo() not in fixed]


def _ring_neighbour(mol: Chem.Mol, atom: int, partner: int) -> int:
    """The ring neighbour of ``atom`` other than ``partner`` (lowest index), else its lowest other neighbour."""
    nbs = [n for n in mol.GetAtomWithIdx(atom).GetNeighbors() if n.GetIdx() != partner]
    ring = [n.GetIdx() for n in nbs if mol.GetBondBetweenAtoms(atom, n.GetIdx()).IsInRing()]
    return min(ring) if ring else min(n.GetIdx() for n in nbs)


def enumerate_configurations(mol: Chem.Mol, mode: str = "open", *, source: str = "structure"):
    """Distinct configurations of the ring double bonds of ``mol``.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Explicit-H Kekulé molecule (as read from a SMILES), stereo marks as given.
    mode : {"open", "all"}
        Enumerate the ring double bonds left open, or every ring double bond.
    source : str
        Names the input in errors.

    Returns
    -------
    bonds : list of (int, int)
        The enumerated bonds (atom pairs).
    assignments : int
        2**len(bonds), the cis/trans assignments tried.
    isomers : list of (tuple of int, rdkit.Chem.Mol)
        One per configuration up to symmetry (first assignment found, cis before trans): the states (1 cis,
        0 trans per bond) and a copy of ``mol`` with those bonds set cis/trans about their ring neighbours.
    """
    if mode not in ("open", "all"):
        raise InputError(f"expected 'open' or 'all', got {mode!r}", "configurations")
    chosen = open_ring_bonds(mol) if mode == "open" else ring_stereo_bonds(mol)
    if len(chosen) > MAX_OPEN_BONDS:
        raise InputError(f"{len(chosen)} ring double bonds to enumerate; at most {MAX_OPEN_BONDS} are enumerated "
                         f"(2**{MAX_OPEN_BONDS} assignments): fix the E/Z of some in the SMILES", source)
    base = Chem.RWMol(mol)
    for b in chosen:
        base.GetBondWithIdx(b).SetStereo(Chem.BondStereo.STEREONONE)
    space = ConfigurationSpace(base.GetMol())
    refs = []
    for b in chosen:
        bond = base.GetBondWithIdx(b)
        i, j = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
        refs.append((b, _ring_neighbour(mol, i, j), _ring_neighbour(mol, j, i)))
    seen: set[tuple[int, ...]] = set()
    isomers = []
    for states in itertools.product((1, 0), repeat=len(chosen)):
        work = Chem.RWMol(base)
        for (b, a, d), cis in zip(refs, states):
            bond = work.GetBondWithIdx(b)
            bond.SetStereoAtoms(a, d)
            bond.SetStereo(Chem.BondStereo.STEREOCIS if cis else Chem.BondStereo.STEREOTRANS)
        m = work.GetMol()
        key = space.key(space.states_of(m))
        if key in seen:
            continue
        seen.add(key)
        isomers.append((tuple(states), m))
    pairs = [(base.GetBondWithIdx(b).GetBeginAtomIdx(), base.GetBondWithIdx(b).GetEndAtomIdx()) for b in chosen]
    return pairs, 2 ** len(chosen), isomers


def inner_hydrogens(mol: Chem.Mol, coords: np.ndarray, ring: list[int] | tuple[int, ...]) -> list[int]:
    """Hydrogens bonded to ``ring`` atoms that point into the ring.

    A hydrogen counts as inner when its projection onto the least-squares plane of the ring atoms falls inside
    the ring polygon projected onto that plane (even-odd rule; common practice, no source).

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        The molecule (for the bonds).
    coords : numpy.ndarray, shape (n_atoms, 3)
        One conformer, Å.
    ring : sequence of int
        Ring atoms in cyclic order (at least 3).

    Returns
    -------
    list of int
        The inner hydrogens' atom indices, sorted.
    """
    x = np.asarray(coords, dtype=np.float64)
    ring = list(ring)
    if len(ring) < 3:
        return []
    centre, normal, _ = plane_fit(x[ring])
    u = np.cross(normal, [1.0, 0.0, 0.0] if abs(normal[0]) < 0.9 else [0.0, 1.0, 0.0])
    u /= np.linalg.norm(u)
    v = np.cross(normal, u)
    poly = np.column_stack([(x[ring] - centre) @ u, (x[ring] - centre) @ v])     # (m, 2)
    members = set(ring)
    out = []
    for atom in ring:
        for nb in mol.GetAtomWithIdx(atom).GetNeighbors():
            if nb.GetAtomicNum() != 1 or nb.GetIdx() in members:
                continue
            p = x[nb.GetIdx()] - centre
            px, py = p @ u, p @ v
            xa, ya = poly[:, 0], poly[:, 1]
            xb, yb = np.roll(xa, -1), np.roll(ya, -1)
            crosses = (ya > py) != (yb > py)
            with np.errstate(divide="ignore", invalid="ignore"):
                xi = xa + (py - ya) * (xb - xa) / (yb - ya)
            if int(np.count_nonzero(crosses & (px < xi))) % 2 == 1:
                out.append(nb.GetIdx())
    return sorted(out)


def _ring_of(mol: Chem.Mol, bonds: list[tuple[int, int]]) -> list[int]:
    """The largest SSSR ring holding an enumerated bond, in ring order (empty without one)."""
    best: list[int] = []
    for ring in mol.GetRingInfo().AtomRings():
        atoms = set(ring)
        if any(i in atoms and j in atoms for i, j in bonds) and len(ring) > len(best):
            best = list(ring)
    return best


def screen_configurations(mol: Chem.Mol, mode: str = "open", *, seed: int = 42, source: str = "structure",
                          window_kcal_mol: float = ENERGY_WINDOW_KCAL_MOL, max_kept: int = MAX_KEPT,
                          embeddings: int = SCREEN_EMBEDDINGS) -> ConfigurationScreen:
    """Enumerate the ring configurations of ``mol`` and screen them by MMFF94 energy.

    Each distinct isomer (:func:`enumerate_configurations`) is embedded with ``embeddings`` ETKDG v3 starts
    plus the flat starts of the macrocycle search (:func:`ringshift.geometry.conformers._generate`; the E/Z of
    every start is checked against the isomer), minimised with MMFF94, and its lowest energy taken. Isomers that
    cannot be embedded with their configuration are kept in the list as "not-embedded". Those within
    ``window_kcal_mol`` of the lowest are "kept", at most ``max_kept`` of them (lowest first; the rest
    "beyond-cap"). KeyboardInterrupt propagates.

    Returns
    -------
    ConfigurationScreen
        Candidates sorted: kept ones by energy, then the others by energy, the not-embedded last.
    """
    bonds, assignments, isomers = enumerate_configurations(mol, mode, source=source)
    ring = _ring_of(mol, bonds)
    rows: list[tuple[tuple[int, ...], Chem.Mol, float | None, int, float, str, np.ndarray | None]] = []
    for states, m in isomers:
        try:
            coords, energies, _ = _generate(m, int(embeddings), int(seed), math.inf, 0.3, source, threads=1)
        except InputError as exc:
            rows.append((states, m, None, 0, 0.0, " ".join(exc.bare_message.split()[:12]), None))
            continue
        energy = None
        if energies is not None:
            energy = float(mmff_energy(m, coords[0]))
        inner = len(inner_hydrogens(m, coords[0], ring))
        rows.append((states, m, energy, inner, planarity_rms_A(coords[0], ring), "", coords[0]))
    found = [float(r[2]) for r in rows if r[2] is not None]
    lowest = min(found) if found else 0.0
    order = sorted(range(len(rows)), key=lambda k: (rows[k][2] is None, rows[k][2] or 0.0, k))
    out, kept = [], 0
    for k in order:
        states, m, energy, inner, rms, note, best = rows[k]
        rel = None if energy is None else energy - lowest
        if rel is None:
            status = "not-embedded"
        elif rel > window_kcal_mol:
            status = "outside-window"
        elif kept >= max_kept:
            status = "beyond-cap"
        else:
            status, kept = "kept", kept + 1
        out.append(ConfigurationCandidate(smiles=isomeric_smiles(m), states=states, mol=m, energy_kcal_mol=rel,
                                          inner_h=inner, planarity_rms_A=float(rms), status=status, note=note,
                                          coords=best))
    order2 = sorted(range(len(out)), key=lambda k: ({"kept": 0, "beyond-cap": 1, "outside-window": 1}.get(
        out[k].status, 2), k))
    return ConfigurationScreen(mode=mode, bonds=tuple(bonds), ring=tuple(ring), assignments=assignments,
                               candidates=tuple(out[k] for k in order2))


def mmff_energy(mol: Chem.Mol, coords: np.ndarray) -> float:
    """MMFF94 energy (kcal/mol) of one geometry (n_atoms, 3) Å, on a copy (MMFF set-up perceives aromaticity in
    place); UFF when MMFF94 lacks parameters, as in the conformer search."""
    work = Chem.Mol(mol)
    work.RemoveAllConformers()
    conf = Chem.Conformer(work.GetNumAtoms())
    conf.SetPositions(np.asarray(coords, dtype=np.float64))
    work.AddConformer(conf, assignId=True)
    if rdForceFieldHelpers.MMFFHasAllMoleculeParams(Chem.Mol(work)):
        props = rdForceFieldHelpers.MMFFGetMoleculeProperties(work)
        ff = rdForceFieldHelpers.MMFFGetMoleculeForceField(work, props)
    else:
        ff = rdForceFieldHelpers.UFFGetMoleculeForceField(work)
    return float(ff.CalcEnergy())
