"""Ring-current-free reference shifts by proton class, and assembly of a predicted ¹H shift.

δ_pred = δ_ref(proton class) + Δδ_rc (ring current, = −σ_rc) + Δδ_q (π-charge term). This module gives
the first part (:func:`classify_hydrogens`, :func:`reference_shifts`) and the explicit sum
(:func:`assemble_prediction`). The references must contain no ring current, or it is counted twice:
the packaged table (``ringshift/data/reference_shifts.csv``, basis in its header and in
:attr:`ReferenceTable.basis`) takes them from non-aromatic model compounds: atropic conjugated
polyenes for CH on π rings, olefins carrying the heteroatom for CH next to N/O/S, allylic and alkyl
compounds for sp3 CH. A CH on a ring RDKit flags aromatic gets the same reference as an olefinic CH of
a conjugated ring: its aromatic character is what the ring-current term supplies. A user CSV with the
same columns overrides or extends the table (:func:`load_reference_table`).
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections import deque
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path
from types import MappingProxyType
from typing import Iterable, Mapping

import numpy as np
from rdkit import Chem

from . import limits as _limits
from .errors import InputError

__all__ = ["ReferenceShift", "ReferenceTable", "ReferenceArrays", "CSV_COLUMNS", "FALLBACK_CLASS",
           "load_reference_table", "classify_hydrogens", "reference_shifts", "reference_arrays",
           "assemble_prediction"]

#: Columns of a reference-shift CSV, in this order.
CSV_COLUMNS: tuple[str, ...] = ("proton_class", "ref_ppm", "sd_ppm", "source", "description")

#: Class given to any hydrogen that fits no other rule (large spread in the packaged table).
FALLBACK_CLASS = "other_H"

#: Accepted range of a reference shift, ppm. Wider than any ring-current-free ¹H shift; a value
#: outside it is a typo (common practice, no source).
_REF_RANGE_PPM = (-20.0, 30.0)

_CLASS_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")

_PACKAGE_CSV = "reference_shifts.csv"


# --- Data classes ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class ReferenceShift:
    """Ring-current-free reference shift of one proton class.

    Attributes: ``proton_class`` (stable identifier, e.g. ``"sp3_CH3_on_pi"``); ``ref_ppm`` (reference
    δ, ppm vs TMS, no ring current in it); ``sd_ppm`` (typical 1-sd spread of the class, ppm, > 0);
    ``source`` (citation, or "from memory" / "common practice, no source"); ``description``.
    """

    proton_class: str
    ref_ppm: float
    sd_ppm: float
    source: str
    description: str


@dataclass(frozen=True)
class ReferenceTable:
    """Reference shifts keyed by proton class.

    Attributes: ``entries`` (read-only mapping proton class -> :class:`ReferenceShift`, file order);
    ``name`` (where the table came from); ``basis`` (how the values were made ring-current free: the
    ``#`` notes of the CSV files). ``table[cls]`` raises :class:`InputError` for an unknown class.
    """

    entries: Mapping[str, ReferenceShift]
    name: str
    basis: str

    def __post_init__(self) -> None:
        for key, entry in self.entries.items():
            if key != entry.proton_class:
                raise InputError(f"entry under key {key!r} has proton_class "
                                 f"{entry.proton_class!r}; expected the key to equal the class",
                                 source=f"ReferenceTable {self.name!r}")
        object.__setattr__(self, "entries", MappingProxyType(dict(self.entries)))

    def __getitem__(self, proton_class: str) -> ReferenceShift:
        try:
            return self.entries[proton_class]
        except KeyError:
            raise InputError(f"no entry for proton class {proton_class!r}; expected one of its "
                             f"{len(self.entries)} classes, or add a row for it to a user CSV",
                             source=f"reference table {self.name!r}") from None

    def __contains__(self, proton_class: object) -> bool:
        return proton_class in self.entries

    def __len__(self) -> int:
        return len(self.entries)

    @property
    def classes(self) -> tuple[str, ...]:
        """Proton classes of the table, in file order."""
        return tuple(self.entries)


@dataclass(frozen=True, eq=False)
class ReferenceArrays:
    """Reference shifts of hydrogens as aligned read-only arrays (input to fits and predictions).

    Attributes: ``h_indices`` (n,) int64 atom indices; ``proton_classes`` (n strings);
    ``ref_ppm`` (n,) float64 reference δ, ppm; ``sd_ppm`` (n,) float64 class spread, ppm.
    """

    h_indices: np.ndarray
    proton_classes: tuple[str, ...]
    ref_ppm: np.ndarray
    sd_ppm: np.ndarray


# --- Reading tables -------------------------------------------------------------------------------


def _number(text: str, column: str, where: str, ok, expected: str) -> float:
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not (math.isfinite(value) and ok(value)):
        raise InputError(f"{column} {text!r} is not usable; expected {expected}", source=where)
    return value


def _parse_table_text(text: str, label: str) -> tuple[dict[str, ReferenceShift], str]:
    """Entries (file order) and joined ``#`` notes of CSV text; bad rows name ``label:line``."""
    notes: list[str] = []
    header: list[str] | None = None
    entries: dict[str, ReferenceShift] = {}
    for lineno, raw in enumerate(text.splitlines(), start=1):
        stripped = raw.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            notes.append(stripped[1:].strip())
            continue
        where = f"{label}:{lineno}"
        try:
            fields = next(csv.reader(io.StringIO(raw), skipinitialspace=True))
        except csv.Error as exc:
            raise InputError(f"unreadable CSV row ({exc}); expected {','.join(CSV_COLUMNS)}",
                             source=where) from None
        fields = [f.strip() for f in fields]
        if header is None:
            if tuple(fields) != CSV_COLUMNS:
                raise InputError(f"header is {','.join(fields)!r}; expected the first non-comment "
                                 f"line to be {','.join(CSV_COLUMNS)!r}", source=where)
            header = fields
            continue
        if len(fields) != len(CSV_COLUMNS):
            raise InputError(f"row has {len(fields)} fields; expected {len(CSV_COLUMNS)} "
                             f"({','.join(CSV_COLUMNS)}); quote fields that contain commas",
                             source=where)
        name, ref_s, sd_s, source, description = fields
        if not _CLASS_NAME.match(name):
            raise InputError(f"proton_class {name!r} is not an identifier; expected letters, digits, "
                             "underscores, starting with a letter", source=where)
        if name in entries:
            raise InputError(f"proton_class {name!r} appears twice; expected one row per class",
                             source=where)
        ref = _number(ref_s, "ref_ppm", where, lambda x: _REF_RANGE_PPM[0] <= x <= _REF_RANGE_PPM[1],
                      f"a 1H shift within {_REF_RANGE_PPM[0]:g}..{_REF_RANGE_PPM[1]:g} ppm")
        sd = _number(sd_s, "sd_ppm", where, lambda x: x > 0.0, "a spread > 0 ppm")
        if not source:
            raise InputError("source is empty; expected a citation, 'from memory' or "
                             "'common practice, no source'", source=where)
        entries[name] = ReferenceShift(name, ref, sd, source, description)
    if header is None:
        raise InputError(f"no header line; expected {','.join(CSV_COLUMNS)!r}", source=label)
    return entries, "\n".join(notes).strip()


@lru_cache(maxsize=1)
def _packaged_table() -> ReferenceTable:
    """The packaged table, parsed once per process (it is immutable: entries is a read-only mapping)."""
    resource = resources.files("ringshift").joinpath("data", _PACKAGE_CSV)
    text = resource.read_text(encoding="utf-8")
    entries, notes = _parse_table_text(text, f"ringshift/data/{_PACKAGE_CSV}")
    return ReferenceTable(entries=entries, name=f"ringshift default ({_PACKAGE_CSV})", basis=notes)


def load_reference_table(path: str | Path | None = None, *, extend_default: bool = True
                         ) -> ReferenceTable:
    """Load the packaged reference table, or a user CSV merged over it.

    Parameters
    ----------
    path : str or Path, optional
        UTF-8 CSV, one row per line, columns ``proton_class,ref_ppm,sd_ppm,source,description``
        (first non-comment line is this header; ``#`` lines are notes, appended to ``basis``; quote
        fields containing commas). ``None`` gives the packaged table.
    extend_default : bool, keyword-only
        With a path: ``True`` lets user rows override packaged rows of the same class and add new
        classes; ``False`` uses the user rows alone (a class they lack raises when it is needed).

    Returns
    -------
    ReferenceTable

    Raises
    ------
    InputError
        File missing or unreadable, wrong header, bad row (the message names ``file:line``).
    """
    default = _packaged_table()
    if path is None:
        return default
    path = Path(path)
    entries, notes = _parse_table_text(_limits.read_text(path, "a reference-shift CSV file"), str(path))
    user_notes = notes if notes else "(no notes in the file)"
    if not extend_default:
        return ReferenceTable(entries=entries, name=str(path), basis=user_notes)
    merged = dict(default.entries)
    merged.update(entries)
    basis = f"{default.basis}\n\nUser rows from {path} (override or extend the default):\n{user_notes}"
    return ReferenceTable(entries=merged, name=f"{default.name} + {path}", basis=basis)


# --- Classification -------------------------------------------------------------------------------

_MULTIPLE = (Chem.BondType.DOUBLE, Chem.BondType.TRIPLE, Chem.BondType.AROMATIC)
_LONE_PAIR_DONORS = (7, 8, 16)


def _prepared_copy(mol) -> Chem.Mol:
    """Copy of ``mol`` with valences, rings, conjugation and hybridisation set; aromatic flags kept."""
    if not isinstance(mol, Chem.Mol):
        raise InputError(f"got {type(mol).__name__}; expected an RDKit Chem.Mol", source="mol")
    copy = Chem.Mol(mol)
    ops = (Chem.SanitizeFlags.SANITIZE_PROPERTIES | Chem.SanitizeFlags.SANITIZE_SYMMRINGS
           | Chem.SanitizeFlags.SANITIZE_SETCONJUGATION
           | Chem.SanitizeFlags.SANITIZE_SETHYBRIDIZATION)
    failed = Chem.SanitizeMol(copy, ops, catchErrors=True)
    if failed != Chem.SanitizeFlags.SANITIZE_NONE:
        raise InputError(f"RDKit could not prepare the molecule ({failed}); expected a valid "
                         "structure", source="mol")
    for atom in copy.GetAtoms():
        if atom.GetAtomicNum() != 1 and atom.GetTotalNumHs(includeNeighbors=False) > 0:
            raise InputError(f"atom {atom.GetIdx()} ({atom.GetSymbol()}) carries hydrogens that "
                             "are not atoms; expected explicit H atoms, add them with "
                             "Chem.AddHs(mol)", source="mol")
    return copy


def _has_multiple_bond(atom) -> bool:
    return atom.GetIsAromatic() or any(b.GetBondType() in _MULTIPLE for b in atom.GetBonds())


def _pi_atoms(mol) -> frozenset[int]:
    """π atoms: aromatic or multiply bonded; charged/radical C next to one (Kekulé ions); neutral
    N/O/S with single bonds joining two of them (pyrrole-type N, furan-type O)."""
    core = {a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1 and _has_multiple_bond(a)}
    pi = set(core)
    for atom in mol.GetAtoms():
        idx = atom.GetIdx()
        if idx in core or atom.GetAtomicNum() <= 1:
            continue
        n_pi = sum(1 for nb in atom.GetNeighbors() if nb.GetIdx() in core)
        charged = atom.GetFormalCharge() != 0 or atom.GetNumRadicalElectrons() > 0
        if atom.GetAtomicNum() == 6 and charged and n_pi >= 1:
            pi.add(idx)
        elif (atom.GetAtomicNum() in _LONE_PAIR_DONORS and atom.GetFormalCharge() == 0
              and n_pi >= 2):
            pi.add(idx)
    return frozenset(pi)


def _share_pi_circuit(mol, pi: frozenset[int], u: int, v: int) -> bool:
    """True if non-adjacent π atoms ``u`` and ``v`` lie on one cycle of the π subgraph.

    By Menger's theorem two non-adjacent vertices lie on a common cycle exactly when no single other
    vertex separates them; this checks that directly (breadth-first search with each other vertex
    removed in turn), which is cheap for molecular graphs.
    """
    adj: dict[int, list[int]] = {i: [] for i in pi}
    for bond in mol.GetBonds():
        a, b = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
        if a in pi and b in pi:
            adj[a].append(b)
            adj[b].append(a)
    if v in adj[u]:
        return False

    def connected(removed: int | None) -> tuple[bool, set[int]]:
        seen = {u}
        queue = deque([u])
        while queue:
            x = queue.popleft()
            for y in adj[x]:
                if y != removed and y not in seen:
                    seen.add(y)
                    queue.append(y)
        return v in seen, seen

    ok, component = connected(None)
    return ok and all(connected(w)[0] for w in component if w not in (u, v))


def _is_carbonyl_carbon(atom) -> bool:
    return atom.GetAtomicNum() == 6 and any(
        b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(atom).GetAtomicNum() == 8
        for b in atom.GetBonds()
    )


def _is_pyridine_type_n(atom) -> bool:
    """Imine-like N: a double bond, or aromatic and two-coordinate or cationic (pyridine, C=N, N+)."""
    if any(b.GetBondType() == Chem.BondType.DOUBLE for b in atom.GetBonds()):
        return True
    if atom.GetIsAromatic():
        return atom.GetTotalDegree() == 2 or atom.GetFormalCharge() > 0
    return False


def _heavy_neighbours(atom) -> list:
    return [nb for nb in atom.GetNeighbors() if nb.GetAtomicNum() > 1]


def _classify_pi_ch(carbon, n_h: int, pi: frozenset[int]) -> str:
    """Class of an H on a π carbon (sp2, sp or a conjugated charged carbon)."""
    heavy = _heavy_neighbours(carbon)
    for bond in carbon.GetBonds():
        other = bond.GetOtherAtom(carbon)
        if bond.GetBondType() == Chem.BondType.TRIPLE:
            if other.GetAtomicNum() != 6:
                return FALLBACK_CLASS  # HC#N and the like
            far = [nb for nb in other.GetNeighbors() if nb.GetIdx() != carbon.GetIdx()]
            return "sp_CH_alkyne_conjugated" if any(nb.GetIdx() in pi for nb in far) \
                else "sp_CH_alkyne"
    if _is_carbonyl_carbon(carbon):
        others = [b.GetOtherAtom(carbon) for b in carbon.GetBonds()
                  if b.GetOtherAtom(carbon).GetAtomicNum() > 1
                  and not (b.GetBondType() == Chem.BondType.DOUBLE
                           and b.GetOtherAtom(carbon).GetAtomicNum() == 8)]
        if any(nb.GetAtomicNum() in (7, 8) for nb in others):
            return "CHO_formyl_heteroatom"
        if all(nb.GetAtomicNum() == 6 for nb in others):
            return "CHO_aldehyde"
        return FALLBACK_CLASS
    elements = {nb.GetAtomicNum() for nb in heavy}
    if elements - {6, 7, 8, 16}:
        return FALLBACK_CLASS  # halogen, Si, P, B, Se ... on the π carbon
    if any(b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(carbon).GetAtomicNum() == 16
           for b in carbon.GetBonds()):
        return FALLBACK_CLASS  # thioaldehyde
    nitrogens = [nb for nb in heavy if nb.GetAtomicNum() == 7]
    if any(_is_pyridine_type_n(n) for n in nitrogens):
        return "sp2_CH_alpha_N_pyridine_type"
    if 8 in elements:
        return "sp2_CH_alpha_O_furan_type"
    if 16 in elements:
        return "sp2_CH_alpha_S_thiophene_type"
    if nitrogens:
        return "sp2_CH_alpha_N_pyrrole_type"
    if n_h == 2:
        return "sp2_CH2_terminal"
    if n_h > 2:
        return FALLBACK_CLASS
    if carbon.GetIsAromatic():
        return "sp2_CH_aromatic_type"
    conjugated = any(b.GetIsConjugated() for b in carbon.GetBonds()) or (
        sum(1 for nb in heavy if nb.GetIdx() in pi) >= 2)
    if carbon.IsInRing() and conjugated:
        return "sp2_CH_ring_conjugated"
    if conjugated:
        return "sp2_CH_polyene"
    return "sp2_CH_alkene"


def _classify_sp3_ch(carbon, n_h: int, pi: frozenset[int]) -> str:
    """Class of an H on a carbon with only single bonds (not in the π system)."""
    mol = carbon.GetOwningMol()
    heavy = _heavy_neighbours(carbon)
    if not heavy or n_h > 3 or carbon.GetFormalCharge() != 0 or carbon.GetNumRadicalElectrons():
        return FALLBACK_CLASS
    elements = {nb.GetAtomicNum() for nb in heavy}
    if elements - {6, 7, 8}:
        return FALLBACK_CLASS  # S, halogen, Si, P, B ... neighbours
    size = {1: "CH", 2: "CH2", 3: "CH3"}[n_h]

    def bears_pi(hetero) -> bool:
        return hetero.GetIdx() in pi or any(
            nb.GetIdx() != carbon.GetIdx() and (nb.GetIdx() in pi or _is_carbonyl_carbon(nb))
            for nb in hetero.GetNeighbors())

    oxygens = [nb for nb in heavy if nb.GetAtomicNum() == 8]
    if oxygens:
        if n_h == 3 and any(bears_pi(o) for o in oxygens):
            return "sp3_CH3_on_O_pi"
        return f"sp3_{size}_on_O"
    nitrogens = [nb for nb in heavy if nb.GetAtomicNum() == 7]
    if nitrogens:
        if n_h == 3 and any(bears_pi(n) for n in nitrogens):
            return "sp3_CH3_on_N_pi"
        return f"sp3_{size}_on_N"
    if any(_is_carbonyl_carbon(nb) for nb in heavy):
        return f"sp3_{size}_on_CO"
    pi_nbrs = [nb.GetIdx() for nb in heavy if nb.GetIdx() in pi]
    if not pi_nbrs:
        return f"sp3_{size}_alkyl"
    if n_h == 2 and len(pi_nbrs) == 2:
        if _share_pi_circuit(mol, pi, pi_nbrs[0], pi_nbrs[1]):
            return "bridge_CH2_over_pi"
        return "sp3_CH2_between_pi"
    return f"sp3_{size}_on_pi"


def _classify_nh(nitrogen, pi: frozenset[int]) -> str:
    heavy = _heavy_neighbours(nitrogen)
    if not heavy or any(nb.GetAtomicNum() != 6 for nb in heavy):
        return FALLBACK_CLASS  # NH3, hydrazines, N-oxides, ...
    if any(_is_carbonyl_carbon(nb) for nb in heavy):
        return "NH_amide"
    ring_pi = [nb for nb in heavy if nb.GetIdx() in pi
               and nitrogen.GetOwningMol().GetBondBetweenAtoms(
                   nitrogen.GetIdx(), nb.GetIdx()).IsInRing()]
    if nitrogen.IsInRing() and (nitrogen.GetIsAromatic() or len(ring_pi) >= 2):
        return "NH_pyrrole_type"
    if nitrogen.GetFormalCharge() != 0 or _has_multiple_bond(nitrogen):
        return FALLBACK_CLASS  # ammonium, imine NH
    if any(nb.GetIdx() in pi for nb in heavy):
        return "NH_amine_on_pi"
    return "NH_amine"


def _classify_oh(oxygen, pi: frozenset[int]) -> str:
    heavy = _heavy_neighbours(oxygen)
    if len(heavy) != 1 or heavy[0].GetAtomicNum() != 6 or oxygen.GetFormalCharge() != 0:
        return FALLBACK_CLASS  # water, hydroperoxides, oxonium, ...
    carbon = heavy[0]
    if _is_carbonyl_carbon(carbon):
        return "OH_carboxylic_acid"
    if carbon.GetIdx() in pi:
        return "OH_phenol"
    return "OH_alcohol"


def _classify_one(h_atom, pi: frozenset[int]) -> str:
    neighbours = list(h_atom.GetNeighbors())
    if len(neighbours) != 1:
        return FALLBACK_CLASS
    host = neighbours[0]
    z = host.GetAtomicNum()
    if z == 6:
        n_h = sum(1 for nb in host.GetNeighbors() if nb.GetAtomicNum() == 1)
        if host.GetIdx() in pi:
            return _classify_pi_ch(host, n_h, pi)
        return _classify_sp3_ch(host, n_h, pi)
    if z == 7:
        return _classify_nh(host, pi)
    if z == 8:
        return _classify_oh(host, pi)
    return FALLBACK_CLASS


def _checked_h_indices(mol, h_indices) -> list[int]:
    all_h = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1]
    if h_indices is None:
        return all_h
    try:
        wanted = [int(i) for i in np.asarray(h_indices, dtype=np.int64).ravel()]
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"got {h_indices!r}; expected a sequence of atom indices",
                         source="h_indices") from None
    n = mol.GetNumAtoms()
    for i in wanted:
        if not 0 <= i < n:
            raise InputError(f"index {i} is out of range; expected 0..{n - 1}", source="h_indices")
        atom = mol.GetAtomWithIdx(i)
        if atom.GetAtomicNum() != 1:
            raise InputError(f"atom {i} is {atom.GetSymbol()}; expected a hydrogen atom index",
                             source="h_indices")
    return wanted


def classify_hydrogens(mol, h_indices: Iterable[int] | None = None) -> dict[int, str]:
    """Give each hydrogen a proton class.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        Explicit H atoms (``Chem.AddHs``); not modified. Aromatic flags are used as given: Kekulé
        input gives ``sp2_CH_ring_conjugated`` where aromatised input gives ``sp2_CH_aromatic_type``,
        two classes with one reference in the packaged table.
    h_indices : iterable of int, optional
        Atom indices of the hydrogens to classify; default all hydrogens.

    Returns
    -------
    dict[int, str]
        H atom index -> proton class, in the order of ``h_indices`` (default atom order).

    Notes
    -----
    π atoms are aromatic atoms, atoms with a double or triple bond, charged/radical carbons next to
    them and neutral N/O/S joining two of them. Rules, by the atom that carries the H:

    * π carbon: C#C-H -> ``sp_CH_alkyne`` (``_conjugated`` if the far alkyne carbon has a π
      neighbour); H-C=O -> ``CHO_aldehyde`` or ``CHO_formyl_heteroatom`` (C bonded to O/N); bonded
      to an imine-like N (double bond, or aromatic two-coordinate/cationic N) ->
      ``sp2_CH_alpha_N_pyridine_type``; to O -> ``..._alpha_O_furan_type``; to S ->
      ``..._alpha_S_thiophene_type``; to another N -> ``..._alpha_N_pyrrole_type``; =CH2 ->
      ``sp2_CH2_terminal``; aromatic flag -> ``sp2_CH_aromatic_type``; in a ring and conjugated ->
      ``sp2_CH_ring_conjugated``; conjugated chain -> ``sp2_CH_polyene``; else ``sp2_CH_alkene``.
      Other heteroatoms on the carbon give the fallback.
    * sp3 carbon (CH3/CH2/CH), first match: bonded to O -> ``sp3_<n>_on_O`` (CH3 on an O bearing a
      π atom or C=O -> ``sp3_CH3_on_O_pi``); to N -> ``sp3_<n>_on_N`` (``sp3_CH3_on_N_pi``
      likewise); to a C=O carbon -> ``sp3_<n>_on_CO``; CH2 with two π neighbours that are
      non-adjacent atoms of one cycle of the π subgraph -> ``bridge_CH2_over_pi`` (the methano
      bridge of 1,6-methano[10]annulene), other CH2 with two π neighbours ->
      ``sp3_CH2_between_pi``; any π neighbour -> ``sp3_<n>_on_pi`` (this includes the CH2 of
      [2.2]paracyclophane, each bonded to one ring atom: they do not span a circuit); else
      ``sp3_<n>_alkyl``. Other heteroatoms, charged carbon or CH4 give the fallback.
    * N: bonded to C=O -> ``NH_amide``; ring N that is aromatic or joins two π ring atoms ->
      ``NH_pyrrole_type`` (also cationic NH of protonated porphyrins); bonded to a π atom ->
      ``NH_amine_on_pi``; sp3 amine -> ``NH_amine``.
    * O: on a C=O carbon -> ``OH_carboxylic_acid``; on a π carbon -> ``OH_phenol``; on sp3 C ->
      ``OH_alcohol``.
    * Anything else -> ``other_H``.

    Raises
    ------
    InputError
        ``mol`` is not an RDKit molecule, has implicit hydrogens, or ``h_indices`` names a non-H atom.
    """
    prepared = _prepared_copy(mol)
    wanted = _checked_h_indices(prepared, h_indices)
    pi = _pi_atoms(prepared)
    return {i: _classify_one(prepared.GetAtomWithIdx(i), pi) for i in wanted}


def reference_shifts(mol, table: ReferenceTable | None = None,
                     h_indices: Iterable[int] | None = None) -> dict[int, ReferenceShift]:
    """Reference shift of each hydrogen: H atom index -> the table entry of its class.

    ``mol`` and ``h_indices`` as in :func:`classify_hydrogens`; ``table`` defaults to the packaged
    table. Raises :class:`InputError` as there, or when the table lacks a class that is needed.
    """
    if table is None:
        table = load_reference_table()
    elif not isinstance(table, ReferenceTable):
        raise InputError(f"got {type(table).__name__}; expected a ReferenceTable "
                         "(see load_reference_table)", source="table")
    classes = classify_hydrogens(mol, h_indices)
    return {i: table[c] for i, c in classes.items()}


def reference_arrays(mol, *, table: ReferenceTable | None = None,
                     h_indices: Iterable[int] | None = None) -> ReferenceArrays:
    """:func:`reference_shifts` as a :class:`ReferenceArrays` (order of ``h_indices``, default atoms)."""
    refs = reference_shifts(mol, table, h_indices)
    idx = np.fromiter(refs.keys(), dtype=np.int64, count=len(refs))
    ref = np.array([r.ref_ppm for r in refs.values()], dtype=np.float64)
    sd = np.array([r.sd_ppm for r in refs.values()], dtype=np.float64)
    for arr in (idx, ref, sd):
        arr.setflags(write=False)
    return ReferenceArrays(h_indices=idx, proton_classes=tuple(r.proton_class for r in refs.values()),
                           ref_ppm=ref, sd_ppm=sd)


# --- Assembly -------------------------------------------------------------------------------------


def _as_vector(values, name: str) -> np.ndarray:
    try:
        arr = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"got {type(values).__name__}; expected a 1-D array of ppm values",
                         source=name) from None
    if arr.ndim != 1:
        raise InputError(f"has shape {arr.shape}; expected a 1-D array (n,) of ppm values",
                         source=name)
    if not np.all(np.isfinite(arr)):
        raise InputError("contains NaN or infinity; expected finite ppm values", source=name)
    return arr


def assemble_prediction(ref_ppm, ring_current_ppm, charge_ppm) -> np.ndarray:
    """Predicted shift: reference + ring-current shift + π-charge term.

    Kept as an explicit function so that every caller adds the same three parts with the same signs.

    Parameters
    ----------
    ref_ppm : array_like, shape (n,)
        Ring-current-free reference δ, ppm vs TMS.
    ring_current_ppm : array_like, shape (n,)
        Ring-current shift Δδ_rc = −σ_rc, ppm (positive = downfield).
    charge_ppm : array_like, shape (n,)
        π-charge shift, ppm (positive = downfield), computed separately from the ring current.

    Returns
    -------
    numpy.ndarray, shape (n,), float64
        δ_pred in ppm vs TMS.

    Raises
    ------
    InputError
        An input is not 1-D, not finite, or the lengths differ.
    """
    ref, rc, q = (_as_vector(ref_ppm, "ref_ppm"), _as_vector(ring_current_ppm, "ring_current_ppm"),
                  _as_vector(charge_ppm, "charge_ppm"))
    if not ref.shape == rc.shape == q.shape:
        raise InputError(f"lengths are {ref.shape[0]}, {rc.shape[0]}, {q.shape[0]}; expected ref_ppm, "
                         "ring_current_ppm and charge_ppm of equal length (one value per proton)",
                         source="assemble_prediction")
    return ref + rc + q
