"""Adaptive conformer search (issue 16): CPU time, lowest MMFF94 conformer and H groups of the code on PYTHONPATH.

Run once on the code before a change and once after, saving and comparing::

    PYTHONPATH=/path/to/old/tree python benchmarks/bench_adaptive.py --json before.json
    python benchmarks/bench_adaptive.py --before before.json

Part 1, in one process pinned to one core (RDKit on one thread, BLAS pinned): for each molecule and seed,
``load_structure`` of the SMILES + ``predict``; CPU s = process CPU time of both (median over seeds); best E =
absolute MMFF94 energy of the best conformer (kcal/mol, RDKit's MMFF94; Halgren, J. Comput. Chem. 1996, 17,
490); groups = sizes of the H groups; rounds/stop = the search's provenance (absent before issue 16). With
``--before``: CPU of the saved run, seeds whose best energy (within 0.05 kcal/mol) and H groups (members) are
the same as in the saved run, and the largest change of a group's predicted shift, ppm.

Part 2, whole processes as a user runs them (cold start, alternating, medians): ``python -m ringshift predict
<porphine SMILES>`` against a bare RDKit ETKDGv3 + MMFF94 run of 30 conformers of the same molecule (imports
included); issue 16's target is a ratio within 1.5.
"""

from __future__ import annotations

import os

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("MKL_NUM_THREADS", "1")

import argparse  # noqa: E402
import json  # noqa: E402
import resource  # noqa: E402
import statistics  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import textwrap  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402

PORPHINE = "C1=CC2=NC1=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=C2)N5"
MOLECULES = [
    ("porphine", PORPHINE),
    ("[18]annulene", "[H]/C1=C/C=C/C=C/C=C\\C=C\\C=C\\C=C/C=C/C=C1\\[H]"),
    ("[14]annulene", "[H]/C1=C/C=C\\C=C/C=C\\C=C/C=C\\C=C1\\[H]"),
    ("octaethylporphyrin", "CCc1c(CC)c2cc3nc(cc4[nH]c(cc5nc(cc1[nH]2)c(CC)c5CC)c(CC)c4CC)c(CC)c3CC"),
]
BARE_RDKIT = textwrap.dedent("""
    from rdkit import Chem
    from rdkit.Chem import AllChem
    m = Chem.AddHs(Chem.MolFromSmiles({smiles!r}))
    p = AllChem.ETKDGv3(); p.randomSeed = 42
    AllChem.EmbedMultipleConfs(m, 30, p)
    AllChem.MMFFOptimizeMoleculeConfs(m)
""")


def one(smiles: str, seed: int) -> dict:
    from rdkit import Chem
    from rdkit.Chem import rdForceFieldHelpers

    from ringshift import load_structure, predict
    c0 = time.process_time()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s = load_structure(smiles, seed=seed)
        pred = predict(s)
    cpu = time.process_time() - c0
    mol = Chem.Mol(s.mol, confId=0)
    e = rdForceFieldHelpers.MMFFGetMoleculeForceField(mol, rdForceFieldHelpers.MMFFGetMoleculeProperties(mol))
    p = s.provenance
    return {"cpu": cpu, "E": float(e.CalcEnergy()), "groups": sorted(len(g) for g in s.h_groups),
            "members": [list(g) for g in s.h_groups], "ppm": [float(g.predicted_ppm) for g in pred.groups],
            "kept": int(s.coords.shape[0]), "embedded": p.get("conformers_embedded"),
            "rounds": p.get("search_rounds", "-"), "stop": p.get("search_stop", "-")}


def compare(rows: dict, old: dict) -> str:
    """Seeds with the same best MMFF94 energy (0.05 kcal/mol: minimiser convergence), seeds with the same H groups
    (members), and the largest group-shift change over seeds, ppm."""
    common = [k for k in rows if k in old]
    e = sum(abs(rows[k]["E"] - old[k]["E"]) < 0.05 for k in common)
    g = sum(rows[k]["members"] == old[k]["members"] for k in common)
    d = max((abs(x - y) for k in common if rows[k]["members"] == old[k]["members"]
             for x, y in zip(rows[k]["ppm"], old[k]["ppm"])), default=0.0)
    return f"{e}/{len(common)} | {g}/{len(common)} | {d:.2f} |"


def part1(seeds: list[int], before: dict | None) -> dict:
    if hasattr(os, "sched_setaffinity"):
        os.sched_setaffinity(0, {min(os.sched_getaffinity(0))})
    one("c1ccccc1", 0)            # warm-up: lazy imports and caches are not charged to the first molecule
    out: dict = {}
    print("| molecule | CPU s (median, max) | embedded | kept | best E / kcal/mol | groups | rounds | stop | "
          + ("CPU before | same best E | same groups | max Δδ / ppm |" if before else ""))
    print("| --- | --- | --- | --- | --- | --- | --- | --- |" + (" --- | --- | --- | --- |" if before else ""))
    for name, smi in MOLECULES:
        rows = {str(s): one(smi, s) for s in seeds}
        out[name] = rows
        cpu = [r["cpu"] for r in rows.values()]
        r0 = rows[str(seeds[0])]
        line = (f"| {name} | {statistics.median(cpu):.2f}, {max(cpu):.2f} | "
                f"{'/'.join(str(r['embedded']) for r in rows.values())} | "
                f"{'/'.join(str(r['kept']) for r in rows.values())} | {min(r['E'] for r in rows.values()):.2f} | "
                f"{r0['groups']} | {'/'.join(str(r['rounds']) for r in rows.values())} | "
                f"{','.join(sorted({str(r['stop']) for r in rows.values()}))} |")
        if before and name in before:
            old = before[name]
            line += f" {statistics.median(r['cpu'] for r in old.values()):.2f} | {compare(rows, old)}"
        print(line, flush=True)
    return out


def child(cmd: list[str]) -> float:
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def part2(repeat: int) -> None:
    py = sys.executable
    cases = {"bare RDKit ETKDGv3 + MMFF94, 30 conformers": [py, "-c", BARE_RDKIT.format(smiles=PORPHINE)],
             "python -m ringshift predict <porphine>": [py, "-m", "ringshift", "predict", PORPHINE]}
    cpu: dict[str, list[float]] = {k: [] for k in cases}
    for _ in range(repeat):
        for k, cmd in cases.items():
            cpu[k].append(child(cmd))
    base = statistics.median(cpu[next(iter(cases))])
    print(f"\nwhole processes, median child CPU s over {repeat} alternating rounds:")
    for k, v in cpu.items():
        print(f"  {k:<46} {statistics.median(v):6.2f} s  {statistics.median(v) / base:5.2f}×")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", type=int, nargs="+", default=[0, 42])
    ap.add_argument("--json", help="save part 1 here")
    ap.add_argument("--before", help="compare part 1 with this saved run")
    ap.add_argument("--repeat", type=int, default=3, help="rounds of part 2 (0: skip)")
    args = ap.parse_args()
    before = json.load(open(args.before)) if args.before else None
    if args.repeat:
        part2(args.repeat)        # first: part 1 pins this process to one core, the children would inherit it
    out = part1(args.seeds, before)
    if args.json:
        with open(args.json, "w") as fh:
            json.dump(out, fh)


if __name__ == "__main__":
    main()
