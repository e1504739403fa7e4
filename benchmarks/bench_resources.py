"""Peak memory (RSS) and wall time of ``predict`` and ``map`` against the size of a graphene-like flake.

Each flake is a hexagonal cut of the honeycomb lattice (C–C 1.42 Å, the graphene bond length; from
memory) of radius R Å with one H (C–H 1.09 Å, common practice, no source) on every 2-coordinated carbon,
written as XYZ. Every size runs in a fresh child process, so ``ru_maxrss`` is the peak of that run
alone. The last columns show ringshift's own estimate (:func:`ringshift.limits.estimate_predict`, as
passed to the limit check) for comparison with the measurement.

Run:  .venv/bin/python benchmarks/bench_resources.py  [--radii 8 12 16 18 20] [--parts flakes chains tetramer]

Part ``chains``: all-trans polyenes H2C=CH–(CH=CH)–…, ``'C=C'*k`` (2k carbons, 4k+2 atoms), as SMILES (the
conformer generation runs) and as an ideal planar zigzag XYZ (C=C 1.34 Å, C–C 1.46 Å, C–H 1.09 Å, 120°; common
practice, no source), each a whole ``python -m ringshift predict`` process (wall time and peak RSS of that
child from wait4), with the conformer estimate the limit check uses. Part ``tetramer``: the meso–meso linked
porphine tetramer (C80H50N16, 146 atoms) as SMILES.

Radii 8–20 Å give
84–474 carbons; larger round cuts of this lattice have no Kekulé structure and are refused by RDKit.
"""

from __future__ import annotations

import argparse
import json
import pathlib
import subprocess
import sys
import tempfile

import numpy as np

ROOT = pathlib.Path(__file__).resolve().parents[1]
CC_A, CH_A = 1.42, 1.09

_CHILD = r"""
import json, resource, sys, time
from ringshift import api, limits
seen = []
_check = limits.check_estimate
def record(est, step, source):
    seen.append(est)
    _check(est, step, source)
limits.check_estimate = record
import ringshift.shifts.prediction
t = time.perf_counter()
api.predict(sys.argv[1])
est = seen[0] if seen else None
print(json.dumps({"s": time.perf_counter() - t,
                  "rss_MB": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
                  "est_MB": est.memory_MB if est else None, "est_s": est.seconds if est else None}))
"""


def flake_xyz(radius_A: float) -> tuple[str, int, int]:
    """XYZ text of a hexagonal-lattice flake of radius ``radius_A`` Å (carbons with fewer than two
    neighbours pruned), and its numbers of C and H."""
    a1 = np.array([1.5 * CC_A, np.sqrt(3) / 2 * CC_A])
    a2 = np.array([1.5 * CC_A, -np.sqrt(3) / 2 * CC_A])
    n = int(radius_A / CC_A) + 2
    i, j = np.meshgrid(np.arange(-n, n + 1), np.arange(-n, n + 1), indexing="ij")
    cells = i.reshape(-1, 1) * a1 + j.reshape(-1, 1) * a2
    pts = np.concatenate([cells, cells + [CC_A, 0.0]])
    pts = pts[np.linalg.norm(pts - [CC_A / 2, CC_A * np.sqrt(3) / 2], axis=1) < radius_A]  # about a hexagon centre
    while True:
        d = np.linalg.norm(pts[:, None] - pts[None], axis=2)
        nb = (d < 1.1 * CC_A) & (d > 0.1)
        keep = nb.sum(1) >= 2
        if keep.all():
            break
        pts = pts[keep]
    hs = []
    for k in np.flatnonzero(nb.sum(1) == 2):
        v = 2 * pts[k] - pts[nb[k]].sum(0)
        hs.append(pts[k] + CH_A * v / np.linalg.norm(v))
    lines = [str(len(pts) + len(hs)), f"flake C{len(pts)}H{len(hs)}"]
    lines += [f"C {x:.5f} {y:.5f} 0.0" for x, y in pts] + [f"H {x:.5f} {y:.5f} 0.0" for x, y in hs]
    return "\n".join(lines) + "\n", len(pts), len(hs)


TETRAMER = ("C1=Cc2cc3ccc([nH]3)c(-c3c4nc(cc5ccc([nH]5)c(-c5c6nc(cc7ccc([nH]7)c(-c7c8nc(cc9ccc(cc%10nc(cc%11ccc7"
            "[nH]%11)C=C%10)[nH]9)C=C8)c7nc(cc8ccc5[nH]8)C=C7)C=C6)c5nc(cc6ccc3[nH]6)C=C5)C=C4)c3nc(cc4ccc(cc1n2)"
            "[nH]4)C=C3")


def polyene_xyz(units: int) -> str:
    """XYZ text of the planar all-trans zigzag polyene of ``units`` C=C units (geometry: module notes)."""
    nc = 2 * units
    c = [np.zeros(2)]
    for k in range(nc - 1):
        th = np.radians(30.0 if k % 2 == 0 else -30.0)
        c.append(c[-1] + (1.34 if k % 2 == 0 else 1.46) * np.array([np.cos(th), np.sin(th)]))
    hs = []
    for k in range(nc):
        u = [(c[j] - c[k]) / np.linalg.norm(c[j] - c[k]) for j in (k - 1, k + 1) if 0 <= j < nc]
        if len(u) == 2:
            d = -(u[0] + u[1])
            hs.append(c[k] + CH_A * d / np.linalg.norm(d))
            continue
        for a in np.radians([120.0, -120.0]):
            hs.append(c[k] + CH_A * np.array([[np.cos(a), -np.sin(a)], [np.sin(a), np.cos(a)]]) @ u[0])
    lines = [str(nc + len(hs)), f"polyene C{nc}H{len(hs)}"]
    lines += [f"C {x:.5f} {y:.5f} 0.0" for x, y in c] + [f"H {x:.5f} {y:.5f} 0.0" for x, y in hs]
    return "\n".join(lines) + "\n"


def run_cli(args: list[str], timeout_s: float) -> tuple[float, float, str]:
    """Wall time (s), peak RSS (MB) and the last stderr line of ``python -m ringshift *args`` (killed after
    ``timeout_s``)."""
    import os
    import signal
    import time

    t = time.perf_counter()
    with tempfile.TemporaryFile("w+") as err:
        proc = subprocess.Popen([sys.executable, "-m", "ringshift", *args], cwd=ROOT, stdout=subprocess.DEVNULL,
                                stderr=err, text=True)
        timer = __import__("threading").Timer(timeout_s, lambda: os.kill(proc.pid, signal.SIGKILL))
        timer.start()
        _, status, usage = os.wait4(proc.pid, 0)
        timer.cancel()
        proc.returncode = status
        err.seek(0)
        lines = err.read().strip().splitlines()
    last = "killed at the time-out" if os.WIFSIGNALED(status) else (
        "ok" if os.waitstatus_to_exitcode(status) == 0 else (lines[-1] if lines else "failed"))
    return time.perf_counter() - t, usage.ru_maxrss / 1024.0, last


def conformer_estimate(smiles: str):
    if str(ROOT) not in sys.path:
        sys.path.insert(0, str(ROOT))          # this checkout's ringshift, as the child processes use
    from rdkit import Chem

    from ringshift import limits
    from ringshift.geometry.conformers import candidate_count, default_conformer_count

    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    return limits.estimate_conformers(mol.GetNumAtoms(), candidate_count(mol, default_conformer_count(mol)))


def chains(units: list[int], timeout_s: float) -> None:
    print(f"\n{'C=C units':>9} {'atoms':>6} {'input':>6} {'time/s':>8} {'peak RSS/MB':>12} {'est. MB':>8} "
          f"{'est. s':>9}  outcome")
    with tempfile.TemporaryDirectory() as tmp:
        for k in units:
            smi = "C=C" * k
            est = conformer_estimate(smi)
            path = pathlib.Path(tmp) / f"polyene{k}.xyz"
            path.write_text(polyene_xyz(k))
            for label, spec in (("smiles", smi), ("xyz", str(path))):
                secs, rss, last = run_cli(["predict", spec], timeout_s)
                e = (f"{est.memory_MB:8.0f}", f"{est.seconds:9.0f}") if label == "smiles" else ("", "")
                print(f"{k:9d} {4 * k + 2:6d} {label:>6} {secs:8.1f} {rss:12.0f} {e[0]:>8} {e[1]:>9}  "
                      f"{last.replace(smi, f'C=C*{k}')[:150]}", flush=True)


def tetramer(timeout_s: float) -> None:
    est = conformer_estimate(TETRAMER)
    secs, rss, last = run_cli(["predict", TETRAMER], timeout_s)
    print(f"\nporphine tetramer (146 atoms, SMILES): {secs:.1f} s, peak RSS {rss:.0f} MB, {last[:120]}; "
          f"conformer estimate {est.seconds:.0f} s, {est.memory_MB:.0f} MB")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--radii", type=float, nargs="+", default=[8.0, 12.0, 16.0, 20.0])
    ap.add_argument("--parts", nargs="+", choices=["flakes", "chains", "tetramer"],
                    default=["flakes", "chains", "tetramer"])
    ap.add_argument("--units", type=int, nargs="+", default=[10, 25, 50, 100, 200, 400, 800],
                    help="C=C units of the polyene chains")
    ap.add_argument("--timeout", type=float, default=300.0, help="seconds before a run is killed")
    args = ap.parse_args()
    if "chains" in args.parts:
        chains(args.units, args.timeout)
    if "tetramer" in args.parts:
        tetramer(args.timeout)
    if "flakes" not in args.parts:
        return
    print(f"{'R/Å':>5} {'C':>5} {'H':>4} {'time/s':>8} {'peak RSS/MB':>12} {'est. MB':>8} {'est. s':>7}")
    with tempfile.TemporaryDirectory() as tmp:
        for r in args.radii:
            text, nc, nh = flake_xyz(r)
            path = pathlib.Path(tmp) / f"flake{r:g}.xyz"
            path.write_text(text)
            res = subprocess.run([sys.executable, "-c", _CHILD, str(path)], cwd=ROOT, capture_output=True,
                                 text=True, check=False)
            if res.returncode:
                print(f"{r:5g} {nc:5d} {nh:4d}  failed: {res.stderr.strip().splitlines()[-1][:200]}")
                continue
            out = json.loads(res.stdout.strip().splitlines()[-1])
            est = (f"{out['est_MB']:.0f}", f"{out['est_s']:.0f}") if out.get("est_MB") is not None else ("", "")
            print(f"{r:5g} {nc:5d} {nh:4d} {out['s']:8.1f} {out['rss_MB']:12.0f} {est[0]:>8} {est[1]:>7}")


if __name__ == "__main__":
    main()
