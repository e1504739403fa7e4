"""Scaling of ringshift: π-system size, trajectory length, and kernel throughput on one core.

1. Size: time and peak memory of ``predict`` (circuits, Hückel–London currents, polygon kernels,
   reference shifts) against the number of π atoms, for ideal planar geometries built here (no conformer
   search): polyacenes (regular hexagons, C–C 1.40 Å, C–H 1.08 Å) and [N]annulenes (regular N-gons, all
   CH pointing out). Peak memory from tracemalloc (numpy allocations inside the call).
2. Frames: a SYNTHETIC trajectory of a 94-atom macrocycle, meso-tetrakis(4-methoxyphenyl)porphyrin
   (RDKit ETKDG + MMFF94 geometry, every frame jittered by 0.03 Å Gaussian noise, random energies), written
   as multi-frame XYZ and predicted streamed with Boltzmann weights. Each length runs in a fresh process
   so the maximum RSS (resource.getrusage) is that run's own. Target: 10^4 frames in ≤ 10 s, ≤ 500 MB.
3. Kernels: evaluations per second (1 evaluation = 1 proton × 1 wire segment, or × 1 loop for the
   circular/dipole models) for every shielding kernel and the bond-current network, against the plain
   Python twins of tests/fields/test_fields.py, and against the limit set by each kernel's flop count and this
   core's peak rate (estimated from a float64 numpy matmul).

Prints tables and saves benchmarks/scaling.png.
Run:  .venv/bin/python benchmarks/bench_scaling.py  [--quick] [--skip-frames] [--skip-kernels]
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
import json
import pathlib
import resource
import subprocess
import sys
import tempfile
import time
import tracemalloc
import warnings

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
ROOT = HERE.parent
MACROCYCLE = ("COc1ccc(cc1)-c1c2ccc(n2)c(-c2ccc(OC)cc2)c2ccc([nH]2)c(-c2ccc(OC)cc2)c2ccc(n2)"
              "c(-c2ccc(OC)cc2)c2ccc1[nH]2")
TARGET_FRAMES, TARGET_S, TARGET_MB = 10_000, 10.0, 500.0


# ------------------------------------------------------------------------------------ geometries
def acene_xyz(n_rings: int, cc: float = 1.40, ch: float = 1.08) -> str:
    """XYZ text of a linear acene with n_rings regular hexagons in the xy plane."""
    th = np.radians([90, 30, -30, -90, -150, 150])
    pts = np.concatenate([np.c_[k * np.sqrt(3) * cc + cc * np.cos(th), cc * np.sin(th)] for k in range(n_rings)])
    carbons = np.unique(np.round(pts, 6), axis=0)
    d = np.linalg.norm(carbons[:, None] - carbons[None], axis=2)
    hs = []
    for i in range(len(carbons)):
        nb = np.flatnonzero((d[i] > 0) & (d[i] < 1.1 * cc))
        if len(nb) == 2:
            v = 2 * carbons[i] - carbons[nb].sum(axis=0)
            hs.append(carbons[i] + ch * v / np.linalg.norm(v))
    return _xyz([("C", p) for p in carbons] + [("H", p) for p in hs], f"acene n={n_rings}")


def annulene_xyz(n: int, cc: float = 1.40, ch: float = 1.08) -> str:
    """XYZ text of a regular planar [n]annulene (all H outside; an idealised, strain-free model)."""
    r = cc / (2 * np.sin(np.pi / n))
    th = 2 * np.pi * np.arange(n) / n
    u = np.c_[np.cos(th), np.sin(th)]
    return _xyz([("C", r * p) for p in u] + [("H", (r + ch) * p) for p in u], f"[{n}]annulene")


def _xyz(atoms, comment: str) -> str:
    return f"{len(atoms)}\n{comment}\n" + "".join(f"{s} {p[0]:.6f} {p[1]:.6f} 0.000000\n" for s, p in atoms)


def size_scaling(quick: bool):
    from ringshift.io.structures import load_structure
    from ringshift.shifts.prediction import predict

    cases = [("acene", n, acene_xyz(n)) for n in ((2, 6, 12) if quick else (2, 6, 12, 24, 48, 74))]
    cases += [("annulene", n, annulene_xyz(n)) for n in ((18, 50) if quick else (18, 50, 102, 202, 302))]
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for kind, n, text in cases:
            path = pathlib.Path(tmp) / f"{kind}{n}.xyz"
            path.write_text(text)
            t0 = time.perf_counter()
            s = load_structure(str(path))
            t_load = time.perf_counter() - t0
            predict(s)                                    # warm caches (benzene reference, imports)
            tracemalloc.start()
            t0 = time.perf_counter()
            p = predict(s)
            t_pred = time.perf_counter() - t0
            peak = tracemalloc.get_traced_memory()[1] / 1e6
            tracemalloc.stop()
            rows.append((f"{kind} {n}", len(p.pi.atoms), len(p.protons), len(p.circuits), t_load, t_pred, peak))
    print("1. predict() against the number of pi atoms (ideal planar geometries, one core)")
    print(f"{'structure':<16}{'pi atoms':>9}{'H':>6}{'loops':>7}{'load/s':>9}{'predict/s':>11}{'peak MB':>9}")
    for r in rows:
        print(f"{r[0]:<16}{r[1]:>9d}{r[2]:>6d}{r[3]:>7d}{r[4]:>9.3f}{r[5]:>11.3f}{r[6]:>9.1f}")
    return rows


# ------------------------------------------------------------------------------------ frames
def write_trajectory(path: pathlib.Path, n_frames: int, seed: int = 0) -> int:
    from ringshift.io.structures import load_structure

    s = load_structure(MACROCYCLE, conformers=1, seed=7)
    syms = [a.GetSymbol() for a in s.mol.GetAtoms()]
    rng = np.random.default_rng(seed)
    with path.open("w") as fh:
        for _ in range(n_frames):
            x = s.coords[0] + rng.normal(0.0, 0.03, s.coords[0].shape)
            fh.write(f"{len(syms)}\nenergy={rng.normal(0.0, 1.0):.5f} kcal/mol (synthetic)\n")
            fh.write("".join(f"{a} {p[0]:.5f} {p[1]:.5f} {p[2]:.5f}\n" for a, p in zip(syms, x)))
    return len(syms)


def one_trajectory(path: str, trace: bool) -> None:
    """Child process: predict one trajectory file and print a JSON line of figures. With ``trace``,
    tracemalloc follows the streamed part (it slows Python allocations, so that run is not timed)."""
    from ringshift.io.frames import iter_xyz_frames
    from ringshift.runners.trajectory import predict_trajectory

    t0 = time.perf_counter()
    stream = iter_xyz_frames(path)
    template = stream.template()
    t_template = time.perf_counter() - t0
    if trace:
        tracemalloc.start()
    t1 = time.perf_counter()
    tp = predict_trajectory(template, stream, weights="boltzmann")
    t_stream = time.perf_counter() - t1
    peak = tracemalloc.get_traced_memory()[1] / 1e6 if trace else None
    print(json.dumps({"frames": tp.n_frames, "seconds": t_template + t_stream, "template_s": t_template,
                      "stream_s": t_stream, "traced_peak_MB": peak,
                      "max_rss_MB": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
                      "chunk": tp.provenance["chunk_frames"], "loops": len(tp.circuits), "h": len(tp.h_indices)}))


def _child(path, trace: bool) -> dict:
    cmd = [sys.executable, __file__, "--one-trajectory", str(path)] + (["--trace"] if trace else [])
    out = subprocess.run(cmd, capture_output=True, text=True, check=True, env=dict(os.environ, PYTHONWARNINGS="ignore"))
    return json.loads(out.stdout.strip().splitlines()[-1])


def frame_scaling(quick: bool):
    lengths = (10, 100, 1000) if quick else (10, 100, 1000, 10_000)
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in lengths:
            path = pathlib.Path(tmp) / f"traj{n}.xyz"
            n_atoms = write_trajectory(path, n)
            row = _child(path, trace=False)
            row["traced_peak_MB"] = _child(path, trace=True)["traced_peak_MB"]
            rows.append(row | {"atoms": n_atoms})
    print("\n2. streamed trajectory of a 94-atom macrocycle (SYNTHETIC jittered frames, Boltzmann weights, one core)")
    print("   time/s = template (frame 1 read, bonds perceived) + streamed part (template prediction, parsing,")
    print("   kernels, averaging); frames/s of the streamed part; traced peak: numpy/Python")
    print("   allocations of the streamed part (tracemalloc, separate untimed run); max RSS: whole process")
    print(f"{'frames':>8}{'chunk':>7}{'time/s':>9}{'template/s':>11}{'frames/s':>10}{'traced peak MB':>16}"
          f"{'max RSS MB':>12}")
    for r in rows:
        print(f"{r['frames']:>8d}{r['chunk']:>7d}{r['seconds']:>9.2f}{r['template_s']:>11.2f}"
              f"{r['frames'] / r['stream_s']:>10.0f}{r['traced_peak_MB']:>16.1f}{r['max_rss_MB']:>12.1f}")
    big = [r for r in rows if r["frames"] == TARGET_FRAMES]
    if big:
        r = big[0]
        ok = r["seconds"] <= TARGET_S and r["max_rss_MB"] <= TARGET_MB
        print(f"target 1e4 frames <= {TARGET_S:.0f} s and <= {TARGET_MB:.0f} MB: {'met' if ok else 'NOT met'} "
              f"({r['loops']} loops, {r['h']} H; time includes parsing the XYZ and the template prediction)")
    return rows


# ------------------------------------------------------------------------------------ kernels
def peak_gflops() -> float:
    """Best float64 matmul rate on one core (GFLOP/s): an estimate of the machine's peak."""
    a = np.random.default_rng(0).random((1024, 1024))
    best = np.inf
    for _ in range(5):
        t0 = time.perf_counter()
        a @ a
        best = min(best, time.perf_counter() - t0)
    return 2 * 1024 ** 3 / best / 1e9


def _best(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def kernel_throughput(quick: bool):
    from ringshift import fields

    spec = importlib.util.spec_from_file_location("_tf", ROOT / "tests" / "fields" / "test_fields.py")
    slow = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(slow)
    rng = np.random.default_rng(1)
    n = 20_000 if quick else 100_000
    m = 18
    th = 2 * np.pi * np.arange(m) / m
    V = np.c_[3.7 * np.cos(th), 3.7 * np.sin(th), np.zeros(m)]
    z = np.array([0.0, 0.0, 1.0])
    P = rng.uniform(-12, 12, (n, 3))
    P[:, 2] = np.where(np.abs(P[:, 2]) < 1.5, 1.5, P[:, 2])   # keep points off the wires
    Ps = P[:200]
    starts, ends = V, np.roll(V, -1, axis=0)
    cur = np.full(m, 12.0)
    F = max(1, n // 40)
    Pf = np.broadcast_to(P[:40], (F, 40, 3)).copy()
    Vf = np.broadcast_to(V, (F, m, 3)).copy()
    Nf = np.tile(z, (F, 1))
    # (name, fast call, evaluations, plain call, plain evaluations, flops per evaluation)
    # flops: polygon/network segment pair ~25 (distance by matmul 10, factor 6, projection matmul 8,
    # screen 1) + sqrt + divide; HM ~20 per vertex; JB ~60 per point-loop (two elliptic integrals);
    # dipole ~20 per point. Counted by hand from the code (common practice, no source).
    cases = [
        ("polygon double loop", lambda: fields.polygon_shielding(P, V, z), n * 2 * m,
         lambda: slow.slow_polygon_shielding(Ps, V, z), 200 * 2 * m, 27),
        ("polygon, frame-batched", lambda: fields.polygon_shielding(Pf, Vf, Nf), F * 40 * 2 * m,
         None, 0, 27),
        ("network (bond currents)", lambda: fields.network_shielding(P, starts, ends, cur, z, field_dir=z), n * 2 * m,
         lambda: slow.slow_network(Ps, starts, ends, cur, [z] * m, z, 0.64), 200 * 2 * m, 27),
        ("haigh-mallion", lambda: fields.haigh_mallion_shielding(P, V, z), n * m,
         lambda: slow.slow_haigh_mallion(Ps, V, z), 200 * m, 20),
        ("johnson-bovey (per loop)", lambda: fields.johnson_bovey_shielding(P, [0, 0, 0], z, 3.7), n * 2,
         None, 0, 60),
        ("point dipole (per loop)", lambda: fields.point_dipole_shielding(P, [0, 0, 0], z, 43.0), n,
         lambda: slow.slow_point_dipole(Ps, np.zeros(3), z, 43.0), 200, 20),
    ]
    peak = peak_gflops()
    rows = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for name, fast, ev, plain, pev, flops in cases:
            t = _best(fast)
            tp = _best(plain, 1) if plain is not None else None
            rows.append((name, ev / t, None if tp is None else pev / tp, peak * 1e9 / flops, flops))
    print(f"\n3. kernel throughput, one core (peak estimate from a 1024^2 float64 matmul: {peak:.1f} GFLOP/s)")
    print(f"{'kernel':<26}{'evals/s':>11}{'plain/s':>11}{'speed-up':>10}{'flop limit/s':>14}{'of limit':>10}")
    for name, r, rp, lim, _ in rows:
        sp = "" if rp is None else f"{r / rp:>9.0f}x"
        print(f"{name:<26}{r:>11.3g}{'' if rp is None else f'{rp:.3g}':>11}{sp:>10}{lim:>14.3g}{r / lim:>9.1%}")
    print("target >= 1e8 evaluations/s for the polygon kernel: "
          f"{'met' if rows[0][1] >= 1e8 else 'NOT met'} ({rows[0][1]:.3g})")
    return rows, peak


# ------------------------------------------------------------------------------------ plot
def plot(size_rows, frame_rows, path: pathlib.Path) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(1, 2, figsize=(10, 4))
    for kind, mk in (("acene", "o"), ("annulene", "s")):
        rs = [r for r in size_rows if r[0].startswith(kind)]
        ax[0].loglog([r[1] for r in rs], [r[5] for r in rs], mk + "-", label=f"{kind}s: predict()")
    ax[0].set_xlabel("pi atoms")
    ax[0].set_ylabel("time per structure / s")
    ax[0].set_title("Size scaling (ideal planar geometries)")
    ax[0].legend()
    if frame_rows:
        f = [r["frames"] for r in frame_rows]
        ax[1].loglog(f, [r["seconds"] for r in frame_rows], "o-", label="time / s")
        ax2 = ax[1].twinx()
        ax2.semilogx(f, [r["max_rss_MB"] for r in frame_rows], "s--", color="C1", label="max RSS / MB")
        ax2.set_ylabel("max RSS / MB")
        ax2.set_ylim(0, max(TARGET_MB, max(r["max_rss_MB"] for r in frame_rows)) * 1.1)
        ax[1].axhline(TARGET_S, color="grey", lw=0.8, ls=":")
        ax[1].set_xlabel("frames (synthetic trajectory, 94 atoms)")
        ax[1].set_ylabel("time / s")
        ax[1].set_title("Trajectory length (streamed, synthetic frames)")
        ax[1].legend(loc="upper left")
        ax2.legend(loc="lower right")
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    print(f"\nplot saved: {path}")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller sizes (smoke test)")
    ap.add_argument("--skip-frames", action="store_true")
    ap.add_argument("--skip-kernels", action="store_true")
    ap.add_argument("--one-trajectory", help=argparse.SUPPRESS)
    ap.add_argument("--trace", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.one_trajectory:
        one_trajectory(args.one_trajectory, args.trace)
        return 0
    warnings.simplefilter("ignore")
    from rdkit import RDLogger

    RDLogger.DisableLog("rdApp.*")   # stereo notes from bond perception of the ideal annulenes
    size_rows = size_scaling(args.quick)
    frame_rows = [] if args.skip_frames else frame_scaling(args.quick)
    if not args.skip_kernels:
        kernel_throughput(args.quick)
    plot(size_rows, frame_rows, HERE / "scaling.png")
    return 0


if __name__ == "__main__":
    sys.exit(main())
