"""Whole-process timings as a user runs the command, side by side with references (issue 16).

What is timed
-------------
Every figure is a fresh process started from the shell's point of view (cold start, default settings,
the installed ``ringshift`` console script), repeated in alternation so that a slow moment of a shared
machine hits all commands alike; the median wall time and the median CPU time of the child (user + sys,
from ``resource.getrusage(RUSAGE_CHILDREN)``) are printed. CPU time is the steadier figure on a loaded
machine; wall time is what the user waits.

1. ``python -c "import numpy, scipy, rdkit.Chem"``: the bare imports any RDKit/SciPy tool pays.
2. ``ringshift predict benzene.xyz``: target within 1.3× of (1).
3. ``ringshift predict <porphine SMILES>`` against a bare RDKit ETKDGv3 + MMFF94 run of 30 conformers of
   the same molecule in one process (imports included): target within 1.5×.
4. With PySCF installed (``pip install pyscf``): an RHF/6-31G* SCF of the same benzene, and the same SCF
   followed by GIAO shieldings (``pip install pyscf-properties``), each as its own process, so the ratio
   is what a user sees, not a warm in-process call.

Then a stage profile (start-up, structure = conformers + symmetry, π step, shielding kernel, output) in
one process per input (small, macrocyclic, large), the warm in-process load of [302]annulene
(target under 1 s), labelled as warm, and the throughput of ``ringshift batch`` on 20 small molecules with
``--jobs 1`` and ``--jobs 2`` (molecules per second; the usable core count is printed beside it).

``PYTHONDONTWRITEBYTECODE`` is removed from the children's environment: an installed package has its
bytecode compiled (pip does it), and without it every ringshift module is compiled again at each start
(about +0.2 s CPU here), which the bare-import reference, whose packages are compiled, does not pay.

Run: ``python benchmarks/bench_process.py [--repeat N] [--quick]``. Figures depend on the machine; the
script prints the core count it saw.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_scaling import annulene_xyz  # noqa: E402  (benchmarks are scripts, not a package)

PORPHINE = "C1=CC2=NC1=CC3=CC=C(N3)C=C4C=CC(=N4)C=C5C=CC(=C2)N5"
BENZENE_XYZ = """12
benzene, D6h, C-C 1.397 A, C-H 1.084 A (idealised)
C 0.000000 1.397000 0.0
C 1.209837 0.698500 0.0
C 1.209837 -0.698500 0.0
C 0.000000 -1.397000 0.0
C -1.209837 -0.698500 0.0
C -1.209837 0.698500 0.0
H 0.000000 2.481000 0.0
H 2.148609 1.240500 0.0
H 2.148609 -1.240500 0.0
H 0.000000 -2.481000 0.0
H -2.148609 -1.240500 0.0
H -2.148609 1.240500 0.0
"""

BARE_RDKIT = textwrap.dedent("""
    from rdkit import Chem
    from rdkit.Chem import AllChem
    m = Chem.AddHs(Chem.MolFromSmiles({smiles!r}))
    p = AllChem.ETKDGv3(); p.randomSeed = 42
    AllChem.EmbedMultipleConfs(m, 30, p)
    AllChem.MMFFOptimizeMoleculeConfs(m)
""")

PYSCF_RHF = textwrap.dedent("""
    from pyscf import gto, scf
    mol = gto.M(atom={xyz!r}, basis="6-31g*", verbose=0)
    mf = scf.RHF(mol).run()
    {giao}
""")
#: 20 small molecules for the batch throughput (common drug-like and aromatic building blocks).
BATCH_SMILES = ("c1ccccc1 benzene", "Cc1ccccc1 toluene", "c1ccncc1 pyridine", "c1ccc2ccccc2c1 naphthalene",
                "c1ccoc1 furan", "c1ccsc1 thiophene", "c1cc[nH]c1 pyrrole", "Oc1ccccc1 phenol",
                "Nc1ccccc1 aniline", "COc1ccccc1 anisole", "Clc1ccccc1 chlorobenzene", "c1ccc(cc1)C=O benzaldehyde",
                "CC(=O)c1ccccc1 acetophenone", "c1ccc2[nH]ccc2c1 indole", "c1ccc2ncccc2c1 quinoline",
                "Cc1ccc(C)cc1 p-xylene", "c1cnc[nH]1 imidazole", "c1ccc(cc1)-c1ccccc1 biphenyl",
                "C=Cc1ccccc1 styrene", "c1ccc2c(c1)ccc1ccccc12 phenanthrene")
STAGE_KEYS = ("start-up", "structure", "pi", "kernel", "output")
GIAO = "from pyscf.prop import nmr; nmr.RHF(mf).kernel()"

STAGES = textwrap.dedent("""
    import json, sys, time
    t0 = time.perf_counter()
    import ringshift.cli, ringshift.api as api
    from ringshift.reporting.text import prediction_table
    import ringshift.shifts.prediction as sp
    t1 = time.perf_counter()
    s = api.load_structure(sys.argv[1])
    t2 = time.perf_counter()
    spent = {"pi": 0.0}
    for name in ("huckel_london_currents", "charge_term_ppm"):
        f = getattr(sp, name)
        def timed(*a, _f=f, **k):
            t = time.perf_counter(); r = _f(*a, **k); spent["pi"] += time.perf_counter() - t; return r
        setattr(sp, name, timed)
    pred = api.predict(s)
    t3 = time.perf_counter()
    prediction_table(pred)
    t4 = time.perf_counter()
    print(json.dumps({"start-up": t1 - t0, "structure": t2 - t1, "pi": spent["pi"],
                      "kernel": t3 - t2 - spent["pi"], "output": t4 - t3}))
""")


def run(cmd: list[str], env: dict) -> tuple[float, float]:
    """(wall s, child CPU s) of one process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    proc = subprocess.run(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode != 0:
        raise SystemExit(f"bench_process: {' '.join(cmd[:3])} ... failed: {proc.stderr.strip()[-300:]}")
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def alternate(cases: dict[str, list[str]], repeat: int, env: dict) -> dict[str, tuple[float, float]]:
    """Median (wall, CPU) per case over ``repeat`` rounds, cases run in turn within each round."""
    rows: dict[str, list[tuple[float, float]]] = {k: [] for k in cases}
    for _ in range(repeat):
        for name, cmd in cases.items():
            rows[name].append(run(cmd, env))
    return {k: (statistics.median(w for w, _ in v), statistics.median(c for _, c in v)) for k, v in rows.items()}


def show(title: str, res: dict[str, tuple[float, float]], base: str) -> None:
    print(f"\n{title}")
    print(f"  {'process':<46} {'wall s':>8} {'CPU s':>8} {'wall ×':>7} {'CPU ×':>7}")
    bw, bc = res[base]
    for name, (w, c) in res.items():
        print(f"  {name:<46} {w:8.2f} {c:8.2f} {w / bw:7.2f} {c / bc:7.2f}")


def have(module: str, py: str, env: dict) -> bool:
    return subprocess.run([py, "-c", f"import {module}"], env=env, capture_output=True).returncode == 0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5, help="rounds per comparison (median)")
    ap.add_argument("--quick", action="store_true", help="3 rounds, no GIAO, no large stage profile")
    ap.add_argument("--command", default=None, metavar="PATH",
                    help="the ringshift command to time (default: the installed console script)")
    args = ap.parse_args(argv)
    repeat = 3 if args.quick else args.repeat
    py = sys.executable
    exe = args.command or shutil.which("ringshift", path=str(Path(py).parent)) or shutil.which("ringshift")
    if exe is None:
        raise SystemExit("bench_process: the ringshift command is not installed (pip install -e .)")
    env = {k: v for k, v in os.environ.items()
           if not k.endswith("_NUM_THREADS") and k not in ("RINGSHIFT_THREADS", "PYTHONDONTWRITEBYTECODE")}
    cores = len(os.sched_getaffinity(0))
    print(f"cores usable: {cores}; python {sys.version.split()[0]}; {exe}")
    with tempfile.TemporaryDirectory() as tmp:
        work = Path(tmp)
        benz = work / "benzene.xyz"
        benz.write_text(BENZENE_XYZ)
        bare = [py, "-c", "import numpy, scipy, rdkit.Chem"]
        res = alternate({"bare imports (numpy, scipy, rdkit.Chem)": bare,
                         "ringshift predict benzene.xyz": [exe, "predict", str(benz)]}, repeat, env)
        show("1. Start-up: benzene from XYZ (target ≤ 1.3× bare imports)", res,
             "bare imports (numpy, scipy, rdkit.Chem)")

        res = alternate({"bare RDKit ETKDGv3 + MMFF94, 30 conformers": [py, "-c", BARE_RDKIT.format(smiles=PORPHINE)],
                         "ringshift predict porphine SMILES": [exe, "predict", PORPHINE]}, repeat, env)
        show("2. Porphine from SMILES (target ≤ 1.5× bare RDKit)", res, "bare RDKit ETKDGv3 + MMFF94, 30 conformers")

        if have("pyscf", py, env):
            atoms = "; ".join(" ".join(line.split()) for line in BENZENE_XYZ.splitlines()[2:])
            cases = {"ringshift predict benzene.xyz": [exe, "predict", str(benz)],
                     "PySCF RHF/6-31G* SCF": [py, "-c", PYSCF_RHF.format(xyz=atoms, giao="")]}
            if not args.quick and have("pyscf.prop.nmr", py, env):
                cases["PySCF RHF/6-31G* + GIAO shieldings"] = [py, "-c", PYSCF_RHF.format(xyz=atoms, giao=GIAO)]
            res = alternate(cases, max(1, repeat // 2), env)
            show("3. Against quantum chemistry, whole processes (benzene)", res, "ringshift predict benzene.xyz")
        else:
            print("\n3. PySCF is not installed: no quantum-chemical comparison (pip install pyscf pyscf-properties)")

        print("\n4. Stage profile, one process each (s; start-up = importing ringshift's CLI and its modules)")
        inputs = {"small: benzene.xyz": str(benz), "macrocycle: porphine SMILES": PORPHINE}
        big = work / "annulene102.xyz"
        big.write_text(annulene_xyz(102))
        if not args.quick:
            inputs["large: [102]annulene XYZ (ideal)"] = str(big)
        print(f"  {'input':<36}" + "".join(f"{s:>11}" for s in STAGE_KEYS))
        import json
        for name, spec in inputs.items():
            out = subprocess.run([py, "-c", STAGES, spec], env=env, capture_output=True, text=True, check=True)
            st = json.loads(out.stdout.strip().splitlines()[-1])
            print(f"  {name:<36}" + "".join(f"{st[k]:11.2f}" for k in STAGE_KEYS))

        big3 = work / "annulene302.xyz"
        big3.write_text(annulene_xyz(302))
        code = ("import sys, time, ringshift; from rdkit import RDLogger; RDLogger.DisableLog('rdApp.*');"
                "ringshift.load_structure(sys.argv[2]); t = time.process_time(); "
                "ringshift.load_structure(sys.argv[1]); print(time.process_time() - t)")
        out = subprocess.run([py, "-c", code, str(big3), str(big)], env=env, capture_output=True, text=True, check=True)
        print(f"\n5. Warm in-process load of an ideal [302]annulene XYZ (target < 1 s): {float(out.stdout):.2f} s CPU")

        library = work / "small20.smi"
        library.write_text("\n".join(BATCH_SMILES) + "\n")
        cases = {f"batch --jobs {j}": [exe, "batch", str(library), "-o", str(work / f"jobs{j}.jsonl"), "--restart",
                                       "--quiet", "--jobs", str(j)] for j in (1, 2)}
        res = alternate(cases, max(1, repeat // 2), env)
        print(f"\n6. Batch throughput, {len(BATCH_SMILES)} small molecules from SMILES, default settings, "
              f"{cores} usable core(s); whole processes")
        print(f"  {'process':<20} {'wall s':>8} {'mol/s':>7} {'speed-up':>9}")
        w1 = res["batch --jobs 1"][0]
        for name, (w, _) in res.items():
            print(f"  {name:<20} {w:8.2f} {len(BATCH_SMILES) / w:7.2f} {w1 / w:9.2f}")
        if cores < 2:
            print("  (one usable core: --jobs 2 is lowered to 1, no scaling to measure)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
