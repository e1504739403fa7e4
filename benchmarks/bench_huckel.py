"""Hückel–London currents for ~100 π atoms: time on one core, and a finite-field cross-check.

Systems (ideal planar geometries from bench_scaling.py): tetracosacene (24 rings, 98 π atoms) and a
regular [102]annulene (102 π atoms). For each β model, the best of 5 runs of
``ringshift.pi.huckel.huckel`` and ``ringshift.pi.london.london_currents`` (analytic first-order response:
one real symmetric diagonalisation, then sums over occupied × virtual pairs, every circuit and all three
field directions at once).

Plain reference: the finite-field route, one complex Hermitian diagonalisation of the London Hamiltonian
H_rs = β exp(iθ_rs), θ_rs ∝ B·(r_r × r_s) (London, J. Phys. Radium 1937, 8, 397; symmetric gauge) per
field direction, bond currents ∝ Im(H_rs P_sr) from the density matrix. Its end-ring current relative to
benzene (same route, regular hexagon of 1.397 Å, uniform β) is compared with the analytic ratio.
Target: well under a second per 100-π-atom structure and conformer.

Run:  .venv/bin/python benchmarks/bench_huckel.py
"""

from __future__ import annotations

import os

# one core: must be set before numpy is imported
os.environ["OMP_NUM_THREADS"] = "1"
os.environ["OPENBLAS_NUM_THREADS"] = "1"
os.environ["MKL_NUM_THREADS"] = "1"
os.environ["NUMEXPR_NUM_THREADS"] = "1"

import pathlib
import sys
import tempfile
import time
import warnings
from functools import partial

import numpy as np

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
from bench_scaling import acene_xyz, annulene_xyz

TARGET_S = 1.0


def _best(fn, repeat=5):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def finite_field_currents(xyz, bonds, n_electrons, field_dir, flux=1e-4):
    """Bond currents (arbitrary units) of a uniform-β Hückel–London Hamiltonian in a small field."""
    n = xyz.shape[0]
    h = np.zeros((n, n), dtype=complex)
    for i, j in bonds:
        theta = flux * float(np.dot(field_dir, np.cross(xyz[i], xyz[j])))
        h[i, j] = -np.exp(1j * theta)       # β = −1: bonding levels lowest
        h[j, i] = np.conj(h[i, j])
    _, c = np.linalg.eigh(h)
    occ = c[:, : n_electrons // 2]
    p = 2.0 * occ @ occ.conj().T
    return np.array([np.imag(h[i, j] * p[j, i]) for i, j in bonds]) / flux


def finite_field_currents_xyz(xyz, bonds, n_electrons, flux=1e-4):
    """:func:`finite_field_currents` for the field along x, y and z: three complex diagonalisations."""
    return [finite_field_currents(xyz, bonds, n_electrons, d, flux) for d in np.eye(3)]


def main() -> int:
    from ringshift.io.structures import load_structure
    from ringshift.pi.huckel import huckel as _pisystem_huckel
    from ringshift.pi.london import london_currents
    from ringshift.shifts.prediction import predict

    warnings.simplefilter("ignore")
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for label, text in (("tetracosacene C98H52", acene_xyz(24)), ("[102]annulene (regular)", annulene_xyz(102))):
            path = pathlib.Path(tmp) / "s.xyz"
            path.write_text(text)
            s = load_structure(str(path))
            pred = predict(s, currents="benzene")
            pi, loops = pred.pi, [c.circuit.atoms for c in pred.circuits]
            x = s.coords[0]
            for bm in ("uniform", "distance", "scf"):
                t_h, _ = _best(partial(_pisystem_huckel, pi, s.mol, x, beta_model=bm))
                t_l, lc = _best(partial(london_currents, pi, s.mol, x, loops, beta_model=bm))
                rows.append((label, len(pi.atoms), len(loops), bm, t_h, t_l, lc))
            # finite-field twin, uniform β: 3 complex diagonalisations
            idx = {a: k for k, a in enumerate(pi.atoms)}
            bonds = [(idx[i], idx[j]) for i, j in pi.bonds]
            xyz = x[list(pi.atoms)] - x[list(pi.atoms)].mean(axis=0)
            t_ff, cur = _best(partial(finite_field_currents_xyz, xyz, bonds, pi.n_electrons))
            rows.append((label, len(pi.atoms), len(loops), "finite-field x3", None, t_ff, cur))
            if label.startswith("tetracosacene"):
                acene_check = (s, pred, pi, bonds, xyz, cur[2])
    print("Hueckel-London currents, one core (best of 5)")
    print(f"{'structure':<26}{'pi':>5}{'loops':>7}  {'method':<18}{'huckel/s':>10}{'currents/s':>12}")
    for label, n, nl, bm, t_h, t_l, _ in rows:
        print(f"{label:<26}{n:>5d}{nl:>7d}  {bm:<18}{'' if t_h is None else f'{t_h:.4f}':>10}{t_l:>12.4f}")
    worst = max(r[5] for r in rows if r[4] is not None)
    print(f"target: well under {TARGET_S:.0f} s per structure and conformer: "
          f"{'met' if worst < 0.5 * TARGET_S else 'NOT met'} (slowest analytic run {worst:.3f} s)")

    # cross-check: end-ring current of the acene relative to benzene, analytic vs finite field (uniform β)
    s, pred, pi, bonds, xyz, jz = acene_check
    hexagon = np.c_[1.397 * np.cos(np.arange(6) * np.pi / 3), 1.397 * np.sin(np.arange(6) * np.pi / 3), np.zeros(6)]
    jb = finite_field_currents(hexagon, [(k, (k + 1) % 6) for k in range(6)], 6, np.array([0.0, 0.0, 1.0]))
    outer = int(np.argmin([xyz[i, 0] + xyz[j, 0] for i, j in bonds]))   # the end ring's outermost bond
    ff_ratio = abs(jz[outer]) / abs(jb[0])
    lc = london_currents(pi, s.mol, s.coords[0], [c.circuit.atoms for c in pred.circuits], beta_model="uniform")
    end = min(range(len(pred.circuits)), key=lambda c: s.coords[0][list(pred.circuits[c].circuit.atoms), 0].mean())
    print(f"\nend-ring current of tetracosacene / benzene, uniform beta: analytic {lc.circuit_currents_rel[end]:.4f}, "
          f"finite field {ff_ratio:.4f} (difference {abs(lc.circuit_currents_rel[end] - ff_ratio):.1e})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
