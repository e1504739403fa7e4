"""GFN2-xTB geometry (ringshift.geometry.xtb): time per molecule on one thread, and the bond-length alternation
of the conjugated perimeter before (MMFF94) and after (GFN2-xTB) re-optimisation.

Molecules: [14]annulene (the configuration of pyrene's perimeter, four inner H; see annulene_14),
[18]annulene (the [H]-anchored SMILES of design notes §6), 1,6-methano[10]annulene and porphine. The
MMFF94 conformers come from ringshift's own conformer search (load_structure, default seed); the lowest
ones (at most 5, within 3 kcal/mol) are re-optimised with GFN2-xTB (Bannwarth, Ehlert & Grimme,
J. Chem. Theory Comput. 2019, 15, 1652) through tblite, until the largest gradient component is
<= 5e-4 Eh/bohr.

Bond-length alternation (BLA) of a closed circuit of bonds r_1..r_n (Å): max(r) - min(r), the figure the
issue quotes (1,6-methano[10]annulene: MMFF94 0.123 Å, GFN2 0.034 Å); the mean |r_k - r_(k+1)| of
neighbouring bonds (cyclic; r_long - r_short for a strictly alternating ring) is printed too (common
practice, no source). The circuit is the largest macrocyclic face of the π graph
(ringshift.geometry.circuits.find_circuits): the annulene ring, the 10-atom perimeter of the bridged
annulene, porphine's inner 16-ring; for porphine the Cmeso–Cα bonds are listed as well (the issue found
1.359 and 1.586 Å side by side with MMFF94).

Run:  .venv/bin/python benchmarks/bench_xtb.py      (needs the xtb extra: pip install 'ringshift[xtb]')
"""

from __future__ import annotations

import os

# one thread: must be set before numpy (and tblite's OpenMP runtime) are loaded
os.environ["OMP_NUM_THREADS"] = "1"
os.environ["OPENBLAS_NUM_THREADS"] = "1"
os.environ["MKL_NUM_THREADS"] = "1"

import time
import warnings

import numpy as np
from rdkit import Chem
from rdkit.Chem import rdDistGeom

from ringshift.geometry.circuits import find_circuits
from ringshift.geometry.conformers import _dihedral_deg, _generate
from ringshift.geometry.xtb import INSTALL_HINT, gfn2_optimise
from ringshift.io.structures import load_structure

ANNULENE_18 = r"[H]/C1=C/C=C/C=C/C=C\C=C\C=C\C=C/C=C/C=C1\[H]"
METHANO_10 = "C1C2=CC=CC=C1C=CC=C2"
PORPHINE = "C1=CC2=NC1=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=C2)N5"


def annulene_14() -> Chem.Mol:
    """[14]annulene with the configuration of pyrene's perimeter (the parent of trans-15,16-dihydropyrene,
    four inner H; common practice, no source): pyrene is embedded, its two inner carbons are replaced by four
    inward-pointing H, one Kekulé structure of the 14-ring is fixed and each ring double bond gets the
    cis/trans configuration of that flat geometry (marks on the Kekulé bonds, design notes §7)."""
    pyrene = Chem.AddHs(Chem.MolFromSmiles("c1cc2ccc3cccc4ccc(c1)c2c34"))
    rdDistGeom.EmbedMolecule(pyrene, randomSeed=1)
    x = pyrene.GetConformer().GetPositions()
    inner = [a.GetIdx() for a in pyrene.GetAtoms() if a.GetAtomicNum() == 6 and all(
        n.GetAtomicNum() == 6 and n.GetTotalNumHs(includeNeighbors=True) == 0 for n in a.GetNeighbors())]
    rw, pos = Chem.RWMol(pyrene), {i: x[i] for i in range(pyrene.GetNumAtoms())}
    for c in inner:
        for n in (n.GetIdx() for n in pyrene.GetAtomWithIdx(c).GetNeighbors() if n.GetIdx() not in inner):
            h = rw.AddAtom(Chem.Atom(1))
            rw.AddBond(n, h, Chem.BondType.SINGLE)
            pos[h] = x[n] + 1.08 * (x[c] - x[n]) / np.linalg.norm(x[c] - x[n])
    for c in sorted(inner, reverse=True):
        rw.RemoveAtom(c)
    order = [i for i in sorted(pos) if i not in inner]          # old index of each new atom
    mol = rw.GetMol()
    for atom in mol.GetAtoms():
        atom.SetIsAromatic(False)
        atom.SetNoImplicit(True)
    for bond in mol.GetBonds():
        bond.SetIsAromatic(False)
        bond.SetBondType(Chem.BondType.SINGLE)
    ring = next(list(r) for r in Chem.GetSymmSSSR(mol) if len(r) == 14)
    for k in range(0, 14, 2):
        mol.GetBondBetweenAtoms(ring[k], ring[k + 1]).SetBondType(Chem.BondType.DOUBLE)
    Chem.SanitizeMol(mol, Chem.SanitizeFlags.SANITIZE_ALL ^ Chem.SanitizeFlags.SANITIZE_SETAROMATICITY)
    flat = np.array([pos[i] for i in order])
    for k in range(0, 14, 2):
        a, i, j, d = ring[k - 1], ring[k], ring[k + 1], ring[(k + 2) % 14]
        bond = mol.GetBondBetweenAtoms(i, j)
        bond.SetStereoAtoms(a, d)
        cis = abs(_dihedral_deg(flat[a], flat[i], flat[j], flat[d])) < 90.0
        bond.SetStereo(Chem.BondStereo.STEREOCIS if cis else Chem.BondStereo.STEREOTRANS)
    return mol


def force_field(name: str, spec: str | None) -> tuple[Chem.Mol, np.ndarray, np.ndarray | None, int]:
    """MMFF94 conformers (n_conf, n_atoms, 3) Å, energies kcal/mol and the net charge."""
    if spec is None:
        mol = annulene_14()
        coords, energies, _ = _generate(mol, 200, 42, 10.0, 0.3, name)
        return mol, coords, energies, 0
    st = load_structure(spec)
    return st.mol, st.coords, st.energies_kcal_mol, st.charge


def perimeter(mol: Chem.Mol) -> tuple[int, ...]:
    """Atoms of the largest loop-carrying face of the π graph, in cyclic order."""
    return max((c for c in find_circuits(mol) if c.carries_loop), key=lambda c: c.size).atoms


def bonds_along(x: np.ndarray, ring: tuple[int, ...]) -> np.ndarray:
    """Bond lengths (n,) Å around a closed circuit of one conformer (n_atoms, 3)."""
    return np.linalg.norm(x[list(ring)] - x[list(ring[1:] + ring[:1])], axis=1)


def alternation(r: np.ndarray) -> float:
    """Mean |r_k - r_(k+1)| over neighbouring bonds of a closed circuit, Å."""
    return float(np.mean(np.abs(r - np.roll(r, -1))))


def meso_alpha(mol: Chem.Mol, x: np.ndarray) -> np.ndarray:
    """Porphine's Cmeso–Cα bond lengths (Å): Cα is a carbon bonded to N, Cmeso a CH bonded to two Cα."""
    alpha = {a.GetIdx() for a in mol.GetAtoms()
             if a.GetAtomicNum() == 6 and any(n.GetAtomicNum() == 7 for n in a.GetNeighbors())}
    out = []
    for a in mol.GetAtoms():
        nbrs = [n.GetIdx() for n in a.GetNeighbors() if n.GetAtomicNum() == 6]
        if a.GetAtomicNum() == 6 and a.GetIdx() not in alpha and len(nbrs) == 2 and set(nbrs) <= alpha:
            out += [np.linalg.norm(x[a.GetIdx()] - x[j]) for j in nbrs]
    return np.sort(np.array(out))


def main() -> None:
    try:
        import tblite  # noqa: F401
    except ImportError:
        print(f"tblite is not installed: {INSTALL_HINT}")
        return
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores (timings grow with load); "
          "cpu s = CPU time of this process; "
          "BLA = max - min of the circuit's bonds, |dr| = mean difference of neighbouring bonds, Å")
    cases = [("[14]annulene", None), ("[18]annulene", ANNULENE_18),
             ("1,6-methano[10]annulene", METHANO_10), ("porphine", PORPHINE)]
    print(f"{'molecule':26s} {'atoms':>5s} {'conf':>4s} {'kept':>4s} {'s total':>8s} {'cpu s':>6s} {'s/conf':>7s} "
          f"{'grads':>14s}  {'BLA MMFF':>8s} {'BLA GFN2':>8s}  {'|dr| MMFF':>9s} {'|dr| GFN2':>9s}")
    for name, spec in cases:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            mol, coords, energies, charge = force_field(name, spec)
        t, cpu = time.perf_counter(), time.process_time()
        xo, e, info = gfn2_optimise(mol, coords, charge=charge, energies_kcal_mol=energies, source=name, threads=1)
        seconds, cpu = time.perf_counter() - t, time.process_time() - cpu
        ring = perimeter(mol)
        before, after = bonds_along(coords[0], ring), bonds_along(xo[0], ring)
        grads = "/".join(str(g) for g in info["gradient_calls"])
        print(f"{name:26s} {mol.GetNumAtoms():5d} {info['conformers_optimised']:4d} {info['conformers_kept']:4d} "
              f"{seconds:8.2f} {cpu:6.2f} {seconds / info['conformers_optimised']:7.2f} {grads:>14s}  "
              f"{np.ptp(before):8.3f} {np.ptp(after):8.3f}  {alternation(before):9.3f} {alternation(after):9.3f}")
        print(f"{'':26s} circuit of {len(ring)} atoms; C–C along it MMFF94 {before.min():.3f}–{before.max():.3f} Å, "
              f"GFN2 {after.min():.3f}–{after.max():.3f} Å; GFN2 energies (kcal/mol) {np.round(e, 2).tolist()}; "
              f"not converged {info['not_converged']}; max gradient "
              f"{max(info['max_gradient_Eh_per_bohr']):.1e} Eh/bohr")
        if name == "porphine":
            print(f"{'':26s} Cmeso–Cα MMFF94 {np.round(meso_alpha(mol, coords[0]), 3).tolist()}")
            print(f"{'':26s} Cmeso–Cα GFN2   {np.round(meso_alpha(mol, xo[0]), 3).tolist()}")
        for note in info["notes"]:
            print(f"{'':26s} note: {note}")


if __name__ == "__main__":
    main()
