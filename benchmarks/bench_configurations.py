"""Ring E/Z configurations: seconds on one core for the screen and for the whole ranking against a spectrum.

For each E/Z-open annulene SMILES: the enumeration and MMFF94 screen
(:func:`ringshift.geometry.configurations.screen_configurations`: distinct isomers, kept ones, CPU and wall
seconds), then the whole ``compare`` with ``configurations="open"`` against a peak list (full conformer search,
prediction and comparison of each kept isomer; CPU and wall seconds, the best isomer's inner H). The process is
pinned to one core before anything is imported (as in bench_conformers.py), so CPU seconds are the one-core cost
even when other work shares the machine; wall seconds are not.

Peak lists: [14]annulene at -60 °C, 7.58 ppm (10 H) and 0.00 ppm (4 H) (Jackman, Sondheimer et al., J. Am. Chem.
Soc. 1962, 84, 4307; from memory); cyclo-octatetraene 5.68 ppm (8 H, from memory).

Run:  .venv/bin/python benchmarks/bench_configurations.py [--quick]
"""

from __future__ import annotations

import os

os.environ["OMP_NUM_THREADS"] = "1"
os.environ["OPENBLAS_NUM_THREADS"] = "1"
os.environ["MKL_NUM_THREADS"] = "1"
os.environ["NUMEXPR_NUM_THREADS"] = "1"
if hasattr(os, "sched_setaffinity"):
    os.sched_setaffinity(0, {min(os.sched_getaffinity(0))})

import argparse
import tempfile
import time
import warnings
from pathlib import Path

from ringshift import compare
from ringshift.geometry.configurations import screen_configurations
from ringshift.io.molecule_files import _mol_from_smiles

CASES = [
    ("cyclo-octatetraene", "C1=CC=CC=CC=C1", "shift_ppm,integral\n5.68,8\n"),
    ("[14]annulene", "C1=CC=CC=CC=CC=CC=CC=C1", "shift_ppm,integral\n7.58,10\n0.00,4\n"),
]


def _timed(fn, *args):
    c0, w0 = time.process_time(), time.perf_counter()
    out = fn(*args)
    return out, time.process_time() - c0, time.perf_counter() - w0


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="screen only (no full ranking)")
    args = parser.parse_args()
    print(f"{'molecule':<20} {'step':<8} {'distinct':>8} {'kept':>5} {'CPU s':>7} {'wall s':>7}  best inner H")
    with tempfile.TemporaryDirectory() as tmp:
        for name, smiles, peaks in CASES:
            mol, _ = _mol_from_smiles(smiles)
            screen, cpu, wall = _timed(screen_configurations, mol, "open")
            print(f"{name:<20} {'screen':<8} {len(screen.candidates):>8} {len(screen.kept):>5} {cpu:>7.2f} "
                  f"{wall:>7.2f}  {screen.kept[0].inner_h} (lowest screen energy)")
            if args.quick:
                continue
            path = Path(tmp) / f"{len(smiles)}.csv"
            path.write_text(peaks)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                res, cpu, wall = _timed(compare, smiles, path)
            conf = res.configurations
            best, gap = conf["candidates"][0], "-"
            if conf["ranked"] > 1:
                gap = f"{conf['candidates'][1]['log10_bf_vs_best']:+.2f}"
            print(f"{name:<20} {'compare':<8} {conf['distinct']:>8} {conf['ranked']:>5} {cpu:>7.2f} {wall:>7.2f}  "
                  f"{best['inner_h']} (rank 1; rank 2 at log10 BF {gap})")


if __name__ == "__main__":
    main()
