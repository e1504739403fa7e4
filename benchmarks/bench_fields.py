"""Speed and memory of the polygon Biot–Savart kernel (ringshift.fields.polygon.polygon_shielding).

Prints point×segment evaluations per second on one core for the vectorised kernel and for the
plain-Python reference (the slow twin of tests/fields/test_fields.py), and the peak memory for 1e5 points ×
1e3 segments. One evaluation = one field point × one straight wire segment (a double loop over an
m-gon has 2m wire segments).

Run:  .venv/bin/python benchmarks/bench_fields.py  [--quick]
"""

from __future__ import annotations

import os

# one core: must be set before numpy is imported
os.environ["OMP_NUM_THREADS"] = "1"
os.environ["OPENBLAS_NUM_THREADS"] = "1"
os.environ["MKL_NUM_THREADS"] = "1"
os.environ["NUMEXPR_NUM_THREADS"] = "1"

import argparse
import importlib.util
import pathlib
import resource
import sys
import time
import tracemalloc
import warnings

import numpy as np

from ringshift import fields
from ringshift.errors import GeometryWarning

TARGET_EVALS_PER_S = 5e7
TARGET_PEAK_MB = 200.0
ROOT = pathlib.Path(__file__).resolve().parents[1]


def _slow_twin():
    spec = importlib.util.spec_from_file_location("_test_fields", ROOT / "tests" / "fields" / "test_fields.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.slow_polygon_shielding


def _ring(m, radius):
    th = 2 * np.pi * np.arange(m) / m
    return np.c_[radius * np.cos(th), radius * np.sin(th), np.zeros(m)]


def _points(n, scale, seed=0):
    return np.random.default_rng(seed).uniform(-scale, scale, (n, 3))


def _time(fn, repeat):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller sizes (smoke test)")
    args = ap.parse_args(argv)
    n_big = 20_000 if args.quick else 100_000
    warnings.simplefilter("ignore", GeometryWarning)
    z = np.array([0.0, 0.0, 1.0])
    rows = []

    def bench(label, n_pts, m, sep, repeat=3, chunk=None):
        P = _points(n_pts, 30.0)
        V = _ring(m, 20.0)
        n_seg = m * (2 if sep > 0 else 1)
        t = _time(lambda: fields.polygon_shielding(P, V, z, separation_A=sep, chunk_size=chunk), repeat)
        rows.append((label, n_pts, n_seg, t, n_pts * n_seg / t))

    bench("vectorised, 1000-gon single loop", n_big, 1000, 0.0)
    bench("vectorised, 500-gon double loop", n_big, 500, 0.64)
    bench("vectorised, benzene double loop", n_big, 6, 0.64)
    bench("vectorised, 18-gon double loop", n_big, 18, 0.64)
    slow = _slow_twin()
    P, V = _points(200, 5.0), _ring(12, 1.4)
    t = _time(lambda: slow(P, V, z, 0.64), 1)
    rows.append(("plain Python reference, 12-gon double", 200, 24, t, 200 * 24 / t))

    print("polygon_shielding throughput (one core; 1 evaluation = 1 point x 1 wire segment)")
    print(f"{'case':<40} {'points':>8} {'segments':>9} {'time/s':>9} {'evals/s':>10}")
    for label, n, s, t, r in rows:
        print(f"{label:<40} {n:>8d} {s:>9d} {t:>9.4f} {r:>10.3g}")
    speedup = rows[0][4] / rows[-1][4]
    print(f"vectorised / plain Python: {speedup:.0f}x")

    # Peak memory: 1e5 points x 1e3 segments (1000-gon, single loop)
    P = _points(n_big, 30.0)
    V = _ring(1000, 20.0)
    tracemalloc.start()
    fields.polygon_shielding(P, V, z, separation_A=0.0)
    cur, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # Linux: KiB
    full_mb = P.shape[0] * 1000 * 8 / 1e6
    print()
    print(f"memory for {n_big} points x 1000 segments:")
    print(f"  peak traced by tracemalloc (numpy arrays inside the call): {peak / 1e6:8.2f} MB")
    print(f"  one unchunked (n, m) float64 matrix would take:            {full_mb:8.2f} MB")
    print(f"  process max RSS (interpreter, numpy, scipy, everything):   {rss_mb:8.2f} MB")
    ok_speed = rows[0][4] >= TARGET_EVALS_PER_S and rows[1][4] >= TARGET_EVALS_PER_S
    ok_mem = peak / 1e6 < TARGET_PEAK_MB
    print()
    print(f"target >= {TARGET_EVALS_PER_S:.0e} evals/s (1000 segments): {'met' if ok_speed else 'NOT met'}; "
          f"target < {TARGET_PEAK_MB:.0f} MB: {'met' if ok_mem else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
