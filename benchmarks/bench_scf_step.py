"""The self-consistent π step (ringshift.pi.scf_lengths): annulene alternation, currents and cost on one core.

Prints, for regular planar annulenes (C–C 1.397 Å polygons; the β model replaces the lengths), the bond-length
alternation (BLA, mean |Δr| of adjacent bonds, Å) and the Hückel–London current (× benzene) of the chosen
self-consistent solution, with the time of ``huckel(beta_model="scf")``; then ``predict`` on [18]annulene and
porphine (structure loaded once, best of 3). Published onset of (4n+2) alternation for comparison: near [30]
(Choi & Kertesz, J. Chem. Phys. 1998, 108, 6681, from memory); 4n annulenes alternate and are paratropic
(Pople & Untch, JACS 1966, 88, 4811).

Run:  .venv/bin/python benchmarks/bench_scf_step.py
"""

from __future__ import annotations

import os

os.environ["OMP_NUM_THREADS"] = "1"
os.environ["OPENBLAS_NUM_THREADS"] = "1"
os.environ["MKL_NUM_THREADS"] = "1"

import time
from functools import partial

import numpy as np
from rdkit import Chem

from ringshift.io.structures import load_structure
from ringshift.pi.huckel import huckel
from ringshift.pi.london import london_currents, regular_polygon
from ringshift.pi.perception import perceive_pi
from ringshift.shifts.prediction import predict


def ring(n: int):
    m = Chem.AddHs(Chem.MolFromSmiles("C1=C" + "C=C" * (n // 2 - 1) + "1"))
    p = regular_polygon(n)
    xyz = np.zeros((m.GetNumAtoms(), 3))
    xyz[:n] = p
    for k in range(n):
        for h in (x.GetIdx() for x in m.GetAtomWithIdx(k).GetNeighbors() if x.GetAtomicNum() == 1):
            xyz[h] = p[k] * (1.0 + 1.09 / np.linalg.norm(p[k]))
    return m, xyz


def best(f, n=3):
    t = []
    for _ in range(n):
        t0 = time.perf_counter()
        out = f()
        t.append(time.perf_counter() - t0)
    return min(t), out


print(f"{'ring':>6} {'BLA/A':>7} {'J/J_bz':>7} {'solutions':>9} {'huckel/ms':>9}")
for n in (12, 14, 16, 18, 20, 22, 24, 26, 30, 34):
    m, xyz = ring(n)
    pi = perceive_pi(m, xyz)
    t, h = best(partial(huckel, pi, m, xyz, beta_model="scf"))
    lc = london_currents(pi, m, xyz, [list(range(n))], beta_model="scf")
    n_sol = 1 + len(h.scf_alternatives)
    print(f"[{n:>2}]   {lc.bla_A:7.4f} {lc.circuit_currents_rel[0]:7.3f} {n_sol:>9} {t * 1e3:9.1f}")

CASES = {"[18]annulene": "[H]/C1=C/C=C/C=C/C=C\\C=C\\C=C\\C=C/C=C/C=C1\\[H]",
         "porphine": "C1=CC2=NC1=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=C2)N5"}
for name, smi in CASES.items():
    s = load_structure(smi)
    t, p = best(partial(predict, s, beta_model="scf"))
    print(f"predict {name}: {s.coords.shape[0]} conformers, best of 3 {t:.3f} s")
