"""A priori accuracy against published ¹H spectra: per molecule, geometry route and shielding model.

Data: ``benchmarks/accuracy/published_shifts.csv`` (36 molecules; sources per row; most values recalled from
memory and marked so). Split ``dev`` may be used for tuning; ``test`` is held aside and must never be.

For each molecule: ``ringshift.load_structure(smiles, charge=..., temperature_K=<the spectrum's temperature>,
geometry=<route>)`` and ``ringshift.predict(structure, model=...)`` with every other option at its default.
Score: mean absolute error (ppm) after sorted matching of per-proton predicted and observed shifts
(``accuracy.scoring.sorted_match_mae``); verdict from the circuit with the largest |current|
(``accuracy.scoring.verdict_from_currents``). Summaries per route, model, split and category: the mean over
molecules of the per-molecule MAE (each molecule weighs the same), verdicts right n/N, and failures (an
exception, or a group without a predicted shift).

Geometry routes: ``force-field`` (default) and ``gfn2-xtb`` (needs ``load_structure(..., geometry=...)`` and
the optional ``tblite`` package; skipped with a note otherwise).

Run:  .venv/bin/python benchmarks/bench_accuracy.py [--split dev|test|all] [--geometry force-field gfn2-xtb]
      [--models polygon ... | --models all] [--quick] [--ids ID ...] [--json out.json] [--kekule-average]
"""

from __future__ import annotations

import os

# one core, deterministic: must be set before numpy is imported
os.environ["OMP_NUM_THREADS"] = "1"
os.environ["OPENBLAS_NUM_THREADS"] = "1"
os.environ["MKL_NUM_THREADS"] = "1"
os.environ["NUMEXPR_NUM_THREADS"] = "1"

import argparse
import importlib.util
import inspect
import json
import math
import pathlib
import sys
import time
import traceback
import warnings

import numpy as np

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
# measure the checkout this script belongs to, not whatever ringshift the interpreter has installed
sys.path.insert(1, str(pathlib.Path(__file__).resolve().parent.parent))
from accuracy.scoring import CATEGORIES, SPLITS, load_published, sorted_match_mae, verdict_from_currents

import ringshift
from ringshift.constants import MODELS

ROUTES = ("force-field", "gfn2-xtb")
SEED = 42
#: A small, fixed subset for iteration: one of each kind (annulene, bridged, porphyrin, cyclophane, ion, PAH,
#: heteroaromatic, control).
QUICK_IDS = ("annulene18", "methano10annulene", "dmdhp", "porphyrin_tpp", "paracyclophane22", "tropylium",
             "naphthalene", "pyridine", "cyclooctatetraene", "toluene")


def route_support(route: str) -> str | None:
    """None when the geometry route can run here, else the reason it cannot."""
    if route == "force-field":
        return None
    if "geometry" not in inspect.signature(ringshift.load_structure).parameters:
        return "load_structure has no 'geometry' parameter in this version"
    if importlib.util.find_spec("tblite") is None:
        return "the optional 'tblite' package is not installed (pip install ringshift[xtb])"
    return None


def short_source(source: str) -> str:
    first = source.split(";")[0]
    return first if len(first) <= 70 else first[:67] + "..."


def run_one(mol, route: str, models: list[str], predict_options: dict | None = None) -> list[dict]:
    """Load once per route, predict per model; one record per model."""
    kwargs = {"charge": mol.charge, "seed": SEED, "temperature_K": mol.temperature_K}
    if route != "force-field":
        kwargs["geometry"] = route
    base = {"molecule_id": mol.molecule_id, "name": mol.name, "split": mol.split, "category": mol.category,
            "expected_verdict": mol.expected_verdict, "route": route, "source": mol.source, "recall": mol.recall,
            "observed": [[s.shift_ppm, s.n_h, s.label] for s in mol.signals]}
    t0 = time.perf_counter()
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            structure = ringshift.load_structure(mol.smiles, **kwargs)
        load_s = time.perf_counter() - t0
        load_warnings = [str(w.message) for w in caught]
    except Exception as exc:  # a failure is a result of the benchmark, not a crash of it
        err = f"load_structure: {type(exc).__name__}: {exc}"
        return [dict(base, model=m, failure=err, seconds=time.perf_counter() - t0,
                     traceback=traceback.format_exc(limit=3)) for m in models]
    out = []
    for model in models:
        rec = dict(base, model=model, load_seconds=load_s, load_warnings=load_warnings,
                   n_conformers=int(structure.coords.shape[0]))
        t1 = time.perf_counter()
        try:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                if predict_options:  # options the public API does not expose: the pipeline's own predict
                    from ringshift.shifts.prediction import predict as pipeline_predict
                    pred = pipeline_predict(structure, model=model, **predict_options)
                else:
                    pred = ringshift.predict(structure, model=model)
        except Exception as exc:
            rec.update(failure=f"predict: {type(exc).__name__}: {exc}", seconds=load_s + time.perf_counter() - t1,
                       traceback=traceback.format_exc(limit=3))
            out.append(rec)
            continue
        rec["seconds"] = load_s + time.perf_counter() - t1
        groups = [{"label": g.label, "n_h": g.n_h, "predicted_ppm": g.predicted_ppm,
                   "ring_current_ppm": g.ring_current_ppm, "charge_ppm": g.charge_ppm,
                   "reference_ppm": g.reference_ppm, "proton_class": g.proton_class} for g in pred.groups]
        circuits = [{"label": c.circuit.label, "kind": c.circuit.kind, "n_atoms": len(c.circuit.atoms),
                     "current_nA_per_T": c.current_nA_per_T, "current_rel_benzene": c.current_rel_benzene,
                     "pi_electrons": c.pi_electrons, "huckel_class": c.huckel_class, "planar": c.planar,
                     "planarity_rms_A": c.planarity_rms_A} for c in (*pred.circuits, *pred.perimeters)]
        rec.update(groups=groups, circuits=circuits,
                   warnings=list(pred.warnings) + [str(w.message) for w in caught])
        missing = [g["label"] for g in groups if g["predicted_ppm"] is None]
        if missing:
            rec["failure"] = f"no predicted shift for group(s) {', '.join(missing)} (no reference class)"
        else:
            match = sorted_match_mae([(g["predicted_ppm"], g["n_h"]) for g in groups],
                                     [(s.shift_ppm, s.n_h) for s in mol.signals])
            rec.update(mae_ppm=match.mae_ppm, n_matched=match.n_matched, match_note=match.note,
                       pairs=match.pairs.tolist())
        verdict = verdict_from_currents(c["current_nA_per_T"] for c in circuits)
        rec.update(verdict=verdict, verdict_right=verdict == mol.expected_verdict)
        out.append(rec)
    return out


def fmt(x: float | None, spec: str = "6.2f") -> str:
    return "   n/a" if x is None or (isinstance(x, float) and math.isnan(x)) else format(x, spec)


def print_record(rec: dict, show_model: bool = False) -> None:
    cat = "RC" if rec["category"] == "ring-current-dominated" else "ord"
    if "mae_ppm" in rec:
        mae = fmt(rec["mae_ppm"])
    else:
        mae = "  fail"
    verdict = rec.get("verdict")
    vtxt = "       -" if verdict is None else f"{verdict[:4]}/{rec['expected_verdict'][:4]} " + (
        "ok" if rec["verdict_right"] else "WRONG")
    model = f"{rec['model']:<13} " if show_model else ""
    print(f"  {rec['molecule_id']:<20} {model}{rec['split']:<4} {cat:<3} {mae}  {vtxt:<16} "
          f"{rec.get('seconds', 0):6.1f} s  {short_source(rec['source'])}")
    if "failure" in rec:
        print(f"      failure: {rec['failure']}")
    if rec.get("match_note"):
        print(f"      note: {rec['match_note']}")


def summarise(records: list[dict]) -> dict:
    """Mean per-molecule MAE per category and overall, verdicts right, failures."""
    def mean_mae(rs):
        vals = [r["mae_ppm"] for r in rs if "mae_ppm" in r]
        return (float(np.mean(vals)) if vals else None), len(vals)
    out = {}
    for cat in CATEGORIES:
        out[cat] = mean_mae([r for r in records if r["category"] == cat])
    out["overall"] = mean_mae(records)
    with_verdict = [r for r in records if "verdict" in r]
    out["verdicts_right"] = (sum(r["verdict_right"] for r in with_verdict), len(records))
    out["failures"] = sum("failure" in r for r in records)
    return out


def print_summary(records: list[dict], routes: list[str], models: list[str], splits: list[str]) -> dict:
    print("\nSummary: mean over molecules of the per-molecule MAE (ppm) after sorted matching")
    print(f"  {'route':<12} {'model':<14} {'split':<5} {'MAE ring-current-dom.':>22} {'MAE ordinary':>13} "
          f"{'MAE overall':>12} {'verdicts':>9} {'failures':>9}")
    table = {}
    for route in routes:
        for model in models:
            for split in splits:
                rs = [r for r in records if r["route"] == route and r["model"] == model and r["split"] == split]
                if not rs:
                    continue
                s = summarise(rs)
                table[f"{route}|{model}|{split}"] = s
                rc, od, ov = s["ring-current-dominated"], s["ordinary"], s["overall"]
                print(f"  {route:<12} {model:<14} {split:<5} {fmt(rc[0]):>16} (n={rc[1]:>2}) {fmt(od[0]):>7} "
                      f"(n={od[1]:>2}) {fmt(ov[0]):>12} {s['verdicts_right'][0]:>4}/{s['verdicts_right'][1]:<4} "
                      f"{s['failures']:>9}")
    return table


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--split", choices=("dev", "test", "all"), default="all")
    ap.add_argument("--geometry", nargs="+", choices=(*ROUTES, "all"), default=["force-field"])
    ap.add_argument("--models", nargs="+", default=["polygon"], help=f"'all' or some of {', '.join(MODELS)}")
    ap.add_argument("--quick", action="store_true", help=f"only {len(QUICK_IDS)} molecules: {', '.join(QUICK_IDS)}")
    ap.add_argument("--ids", nargs="+", help="only these molecule ids")
    ap.add_argument("--json", type=pathlib.Path, help="write every record and the summary here")
    ap.add_argument("--kekule-average", action="store_true",
                    help="predict with kekule_average=True (currents averaged over the Kekule mode)")
    args = ap.parse_args(argv)

    models = list(MODELS) if args.models == ["all"] else args.models
    bad = [m for m in models if m not in MODELS]
    if bad:
        ap.error(f"unknown model(s) {bad}; choose from {MODELS} or 'all'")
    routes = list(ROUTES) if "all" in args.geometry else list(dict.fromkeys(args.geometry))
    mols = load_published()
    if args.split != "all":
        mols = [m for m in mols if m.split == args.split]
    if args.quick:
        mols = [m for m in mols if m.molecule_id in QUICK_IDS]
    if args.ids:
        unknown = set(args.ids) - {m.molecule_id for m in load_published()}
        if unknown:
            ap.error(f"unknown molecule id(s): {sorted(unknown)}")
        mols = [m for m in mols if m.molecule_id in args.ids]
    splits = [s for s in SPLITS if any(m.split == s for m in mols)]

    print(f"ringshift {getattr(ringshift, '__version__', '?')}; {len(mols)} molecules; routes {routes}; "
          f"models {models}; seed {SEED}; one thread")
    print("columns: id, split, category (RC = ring-current-dominated), MAE ppm, verdict predicted/expected, "
          "seconds (load + predict), source")
    records: list[dict] = []
    skipped = {}
    for route in routes:
        why = route_support(route)
        if why:
            print(f"\n[{route}] skipped: {why}")
            skipped[route] = why
            continue
        for split in splits:
            print(f"\n[{route}] split {split}")
            for mol in (m for m in mols if m.split == split):
                recs = run_one(mol, route, models, {"kekule_average": True} if args.kekule_average else None)
                for rec in recs:
                    print_record(rec, show_model=len(models) > 1)
                records.extend(recs)
    ran_routes = [r for r in routes if r not in skipped]
    table = print_summary(records, ran_routes, models, splits)
    if args.json:
        args.json.write_text(json.dumps({"seed": SEED, "routes": routes, "skipped_routes": skipped, "models": models,
                                         "records": records, "summary": table}, indent=1, default=str))
        print(f"\nwrote {args.json}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
