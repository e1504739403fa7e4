"""H–H neighbours through bonds and ³J coupling patterns of hydrogen groups, from the molecular graph and 3D structure.

Two kinds of 2D/multiplet evidence enter the assignment (:mod:`ringshift.comparison.constraints`):

* **Correlations** (COSY cross peaks): two peaks correlate when they hold protons 3 bonds (H–C–C–H) or 4 bonds
  (H–C–C–C–H) apart through bonds. :func:`bond_distances` counts bonds on the molecular graph (breadth-first
  search; RDKit's ``Chem.GetDistanceMatrix`` is the outside reference of its test) and :func:`group_bond_masks`
  records, for every pair of hydrogen groups, which bond counts occur between any of their members.
* **Couplings** (³J read from a multiplet, Hz): each vicinal partner of a group gets a range from the bond
  between the two carbons and the H–C–C–H dihedral angle φ of the 3D structure (:func:`vicinal_partners`):

  ============== =============================================== =========== ===============================
  category       bond and geometry                               ³J (Hz)     source
  ============== =============================================== =========== ===============================
  ``trans``      C=C or aromatic ring bond, |φ| ≥ 90°            12–18       Pretsch et al. 2009 (from memory)
  ``cis``        C=C or aromatic ring bond, |φ| < 90°            6–12        Pretsch et al. 2009 (from memory)
  ``single``     single bond between two sp²/sp carbons          6–9         Pretsch et al. 2009 (from memory)
  ``karplus``    any other H–C–C–H (an sp³ carbon)               J(φ) ± 2    Karplus 1963 (from memory)
  ============== =============================================== =========== ===============================

  Pretsch, Bühlmann & Badertscher, *Structure Determination of Organic Compounds*, Springer 2009, ¹H section;
  annulene couplings fall in the same ranges. J(φ) = 7 − cos φ + 5 cos 2φ Hz (Karplus, J. Am. Chem. Soc. 1963,
  85, 2870; constants from memory), averaged over the members of the two groups (a rotating methyl) and over the
  conformers with their weights.

:func:`couplings_consistent` decides whether a peak's couplings fit a group: every listed J ≥
:data:`J_CHECKED_MIN_HZ` must fall in the range (± :data:`J_TOLERANCE_HZ`) of one of the group's partners, and a
group with a ``trans`` partner must show a J of at least 12 − tolerance Hz (the largest splitting of such a
multiplet is always resolved). Smaller couplings (⁴J, gauche ³J) are not checked.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass

import numpy as np

__all__ = ["CORRELATION_KINDS", "J_RANGES_HZ", "Partner", "bond_distances", "mol_bond_distances", "group_bond_masks",
           "karplus_hz", "dihedral_deg", "vicinal_partners", "couplings_consistent", "categories_of_coupling",
           "MAX_BONDS_TRACKED", "partner_text", "bonds_mask"]

#: Kinds of cross peak (the ``kind`` column of a correlation list) and the H–H bond counts through bonds that may
#: give each: COSY shows ²J, ³J and ⁴J couplings (common practice, no source).
CORRELATION_KINDS: dict[str, tuple[int, ...]] = {
    "cosy": (3, 4), "vicinal": (3,), "long-range": (4,), "geminal": (2,),
}

#: Published ³J ranges, Hz (table in the module notes; Pretsch, Bühlmann & Badertscher 2009, ¹H section, from memory).
J_RANGES_HZ: dict[str, tuple[float, float]] = {"trans": (12.0, 18.0), "cis": (6.0, 12.0), "single": (6.0, 9.0)}

#: Band around the Karplus value, Hz: the constants vary with substituents by about this much (Haasnoot, de Leeuw
#: & Altona, Tetrahedron 1980, 36, 2783 add electronegativity terms of this size; from memory).
KARPLUS_BAND_HZ: float = 2.0

#: Slack on each side of a range, Hz: first-order J read from a multiplet is uncertain by a few tenths of a Hz and
#: the published ranges are typical values, not bounds (common practice, no source). It makes the cis/trans
#: boundary an 11–13 Hz zone in which nothing is ruled out.
J_TOLERANCE_HZ: float = 1.0

#: Couplings below this (Hz) are not checked: ⁴J (allylic, meta, W) and gauche ³J fall there (common practice, no
#: source).
J_CHECKED_MIN_HZ: float = 6.0

#: Bond counts recorded in the group masks (bit k set: some member pair is k bonds apart), k = 1…MAX_BONDS_TRACKED.
MAX_BONDS_TRACKED: int = 6


# ------------------------------------------------------------------------------------ graph kernels
def bond_distances(n_atoms: int, bonds: np.ndarray) -> np.ndarray:
    """Bonds on the shortest path between every pair of atoms (breadth-first search).

    Parameters
    ----------
    n_atoms : int
    bonds : ndarray of int, shape (m, 2)
        Atom index pairs of the bonds.

    Returns
    -------
    ndarray of int, shape (n_atoms, n_atoms)
        Topological distance in bonds; 0 on the diagonal, −1 between atoms in different fragments.
    """
    neighbours: list[list[int]] = [[] for _ in range(n_atoms)]
    for a, b in np.asarray(bonds, dtype=np.int64).reshape(-1, 2):
        neighbours[int(a)].append(int(b))
        neighbours[int(b)].append(int(a))
    out = np.full((n_atoms, n_atoms), -1, dtype=np.int64)
    for start in range(n_atoms):
        out[start, start] = 0
        queue = deque([start])
        while queue:
            i = queue.popleft()
            for j in neighbours[i]:
                if out[start, j] < 0:
                    out[start, j] = out[start, i] + 1
                    queue.append(j)
    return out


def mol_bond_distances(mol) -> np.ndarray:
    """:func:`bond_distances` of an RDKit molecule (explicit hydrogens included), shape (n_atoms, n_atoms)."""
    bonds = np.array([(b.GetBeginAtomIdx(), b.GetEndAtomIdx()) for b in mol.GetBonds()], dtype=np.int64)
    return bond_distances(mol.GetNumAtoms(), bonds.reshape(-1, 2))


def group_bond_masks(distances: np.ndarray, groups) -> np.ndarray:
    """Which bond counts separate the members of two hydrogen groups.

    Parameters
    ----------
    distances : ndarray of int, shape (n_atoms, n_atoms)
        From :func:`bond_distances`.
    groups : sequence of sequences of int, length n
        Hydrogen atom indices of each group.

    Returns
    -------
    ndarray of int, shape (n, n)
        Bit k (value ``1 << k``) set when some proton of group i and some proton of group j are k bonds apart,
        1 ≤ k ≤ :data:`MAX_BONDS_TRACKED`; symmetric, 0 on the diagonal. With equivalent protons any member
        pair counts.
    """
    n = len(groups)
    out = np.zeros((n, n), dtype=np.int64)
    for i in range(n):
        for j in range(i + 1, n):
            d = distances[np.ix_(list(groups[i]), list(groups[j]))].ravel()
            mask = 0
            for k in np.unique(d[(d >= 1) & (d <= MAX_BONDS_TRACKED)]):
                mask |= 1 << int(k)
            out[i, j] = out[j, i] = mask
    return out


def bonds_mask(bond_counts) -> int:
    """Bit mask of a set of bond counts (as in :func:`group_bond_masks`)."""
    mask = 0
    for k in bond_counts:
        mask |= 1 << int(k)
    return mask


# --------------------------------------------------------------------------------- geometry kernels
def dihedral_deg(p0: np.ndarray, p1: np.ndarray, p2: np.ndarray, p3: np.ndarray) -> np.ndarray:
    """Dihedral angle p0–p1–p2–p3 in degrees, (−180, 180].

    Parameters
    ----------
    p0, p1, p2, p3 : ndarray, shape (..., 3)
        Points, Å.

    Returns
    -------
    ndarray, shape (...)
    """
    b0, b1, b2 = p0 - p1, p2 - p1, p3 - p2
    b1n = b1 / np.linalg.norm(b1, axis=-1, keepdims=True)
    v = b0 - np.sum(b0 * b1n, axis=-1, keepdims=True) * b1n
    w = b2 - np.sum(b2 * b1n, axis=-1, keepdims=True) * b1n
    x = np.sum(v * w, axis=-1)
    y = np.sum(np.cross(b1n, v) * w, axis=-1)
    return np.degrees(np.arctan2(y, x))


def karplus_hz(phi_deg: np.ndarray) -> np.ndarray:
    """Vicinal ³J(H,H) of an H–C–C–H dihedral φ: J = A + B cos φ + C cos 2φ with A = 7, B = −1, C = 5 Hz
    (Karplus, J. Am. Chem. Soc. 1963, 85, 2870; constants from memory). 11 Hz at 0°, 2 Hz at 90°, 13 Hz at
    180°; its average over a free rotation is A = 7 Hz (an ethyl group's ³J). ``phi_deg`` any shape, degrees;
    returns Hz, same shape."""
    phi = np.radians(np.asarray(phi_deg, dtype=np.float64))
    return 7.0 - np.cos(phi) + 5.0 * np.cos(2.0 * phi)


# ------------------------------------------------------------------------------------------ partners
@dataclass(frozen=True)
class Partner:
    """A vicinal (3-bond) partner group of a hydrogen group: its index, the category of the coupling (``trans``,
    ``cis``, ``single`` or ``karplus``), the expected ³J range (Hz) and the mean H–C–C–H dihedral |φ| (degrees)."""

    group: int
    category: str
    low_hz: float
    high_hz: float
    dihedral_deg: float


def _pi_bond(bond) -> bool:
    return bond.GetBondTypeAsDouble() >= 1.5


def _sp2(atom) -> bool:
    return str(atom.GetHybridization()) in ("SP2", "SP") or atom.GetIsAromatic()


def vicinal_partners(mol, coords: np.ndarray, weights: np.ndarray, groups) -> tuple[tuple[Partner, ...], ...]:
    """The vicinal partners of every hydrogen group, with the ³J range each coupling should have.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        With explicit hydrogens.
    coords : ndarray, shape (n_conf, n_atoms, 3)
        Conformer coordinates, Å.
    weights : ndarray, shape (n_conf,)
        Conformer weights (sum 1).
    groups : sequence of sequences of int, length n
        Hydrogen atom indices of each group.

    Returns
    -------
    tuple (length n) of tuples of Partner
        Partners outside the group itself (couplings between equivalent protons do not split the peak); one
        entry per (partner group, category), the range widened over its member pairs.
    """
    coords = np.asarray(coords, dtype=np.float64).reshape(-1, mol.GetNumAtoms(), 3)
    w = np.asarray(weights, dtype=np.float64).reshape(-1)
    w = w / w.sum() if w.size == coords.shape[0] and w.sum() > 0 else np.full(coords.shape[0], 1.0 / coords.shape[0])
    group_of = {int(h): gi for gi, members in enumerate(groups) for h in members}
    out = []
    for gi, members in enumerate(groups):
        found: dict[tuple[int, str], list[tuple[float, float]]] = {}     # (partner, category) -> [(J or nan, φ)]
        for h in members:
            atom_h = mol.GetAtomWithIdx(int(h))
            for c1 in atom_h.GetNeighbors():
                for bond in c1.GetBonds():
                    c2 = bond.GetOtherAtom(c1)
                    if c2.GetIdx() == atom_h.GetIdx():
                        continue
                    for h2 in c2.GetNeighbors():
                        gj = group_of.get(h2.GetIdx())
                        if gj is None or gj == gi or h2.GetIdx() == c1.GetIdx():
                            continue
                        idx = [int(h), c1.GetIdx(), c2.GetIdx(), h2.GetIdx()]
                        phi = dihedral_deg(*(coords[:, k] for k in idx))
                        mean_cos = float(np.sum(w * np.cos(np.radians(phi))))
                        if _pi_bond(bond):
                            cat, j = ("cis" if mean_cos > 0 else "trans"), float("nan")
                        elif _sp2(c1) and _sp2(c2):
                            cat, j = "single", float("nan")
                        else:
                            cat, j = "karplus", float(np.sum(w * karplus_hz(phi)))
                        phi_eff = float(np.degrees(np.arccos(np.clip(mean_cos, -1.0, 1.0))))
                        found.setdefault((gj, cat), []).append((j, phi_eff))
        partners = []
        for (gj, cat), items in sorted(found.items()):
            phis = [p for _, p in items]
            if cat == "karplus":
                j = float(np.mean([v for v, _ in items]))      # members average (e.g. a rotating methyl)
                lo, hi = max(0.0, j - KARPLUS_BAND_HZ), j + KARPLUS_BAND_HZ
            else:
                lo, hi = J_RANGES_HZ[cat]
            partners.append(Partner(gj, cat, lo, hi, float(np.mean(phis))))
        out.append(tuple(partners))
    return tuple(out)


# -------------------------------------------------------------------------------------- consistency
def categories_of_coupling(j_hz: float, tolerance_hz: float = J_TOLERANCE_HZ) -> tuple[str, ...]:
    """The fixed-range categories (``trans``, ``cis``, ``single``) whose ³J range, widened by ``tolerance_hz``,
    holds ``j_hz`` (Hz); empty when none does."""
    return tuple(cat for cat, (lo, hi) in J_RANGES_HZ.items() if lo - tolerance_hz <= j_hz <= hi + tolerance_hz)


def couplings_consistent(j_hz, partners, tolerance_hz: float = J_TOLERANCE_HZ) -> tuple[bool, str]:
    """Whether a peak's couplings fit a group's vicinal partners (rules in the module notes).

    Parameters
    ----------
    j_hz : sequence of float
        The peak's couplings, Hz.
    partners : sequence of Partner
        The group's vicinal partners (:func:`vicinal_partners`).
    tolerance_hz : float
        Slack on each side of every range, Hz.

    Returns
    -------
    (bool, str)
        The answer and a short reason ("" when consistent).
    """
    for j in j_hz:
        if j < J_CHECKED_MIN_HZ:
            continue
        if not any(p.low_hz - tolerance_hz <= j <= p.high_hz + tolerance_hz for p in partners):
            return False, f"no vicinal partner explains J = {j:g} Hz"
    if any(p.category == "trans" for p in partners) and j_hz:
        lowest_trans = J_RANGES_HZ["trans"][0] - tolerance_hz
        if max(j_hz) < lowest_trans:
            return False, f"a trans partner across a C=C needs a J ≥ {lowest_trans:g} Hz"
    return True, ""


def partner_text(partners, labels) -> str:
    """Short description of a group's vicinal partners, e.g. "H3 trans 12–18 Hz; H5 single 6–9 Hz"."""
    return "; ".join(f"{labels[p.group]} {p.category} {p.low_hz:.0f}–{p.high_hz:.0f} Hz" for p in partners) or "none"
