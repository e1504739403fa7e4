"""Peak memory (RSS) and wall time of ``predict`` and ``map`` against the size of a graphene-like flake.

Each flake is a hexagonal cut of the honeycomb lattice (C–C 1.42 Å, the graphene bond length; from
memory) of radius R Å with one H (C–H 1.09 Å, common practice, no source) on every 2-coordinated carbon,
written as XYZ. Every size runs in a fresh child process, so ``ru_maxrss`` is the peak of that run
alone. The last columns show ringshift's own estimate (:func:`ringshift.limits.estimate_predict`, as
passed to the limit check) for comparison with the measurement.

Run:  .venv/bin/python benchmarks/bench_resources.py  [--radii 8 12 16 18 20]

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


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--radii", type=float, nargs="+", default=[8.0, 12.0, 16.0, 20.0])
    args = ap.parse_args()
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
