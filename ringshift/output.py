"""Turning results into JSON, CSV and text tables, and writing files atomically.

There is one function per result type that produces plain Python data (:func:`prediction_to_dict`);
the CLI, the report and the API all format from it, so they cannot disagree.
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import tempfile
from pathlib import Path

from ringshift.errors import OutputError

CAUTION = ("Ring-current models are approximate: they estimate the ring-current part of each shift, not "
           "the whole shift. Confirm assignments with 2D NMR and the current with quantum-chemical calculations.")

FLOAT_DIGITS = 4


def _r(x, nd: int = FLOAT_DIGITS):
    """Round floats for stable, readable JSON; map non-finite to None."""
    if x is None:
        return None
    x = float(x)
    if not math.isfinite(x):
        return None
    v = round(x, nd)
    return 0.0 if v == 0 else v


def circuit_to_dict(cr) -> dict:
    c = cr.circuit
    return {
        "label": c.label, "kind": c.kind, "atoms": list(c.atoms), "size": c.size,
        "centre": [_r(v) for v in cr.centre], "normal": [_r(v) for v in cr.normal],
        "radius_A": _r(cr.radius_A), "planarity_rms_A": _r(cr.planarity_rms_A),
        "max_p_misalignment_deg": _r(cr.max_misalignment_deg, 2), "planar": cr.planar,
        "pi_electrons": cr.pi_electrons, "huckel_class": cr.huckel_class,
        "current_nA_per_T": _r(cr.current_nA_per_T), "current_rel_benzene": _r(cr.current_rel_benzene),
        "current_source": cr.current_source, "note": cr.note,
    }


def prediction_to_dict(pred) -> dict:
    """Plain-data form of a :class:`ringshift.predict.Prediction` (the JSON schema)."""
    s = pred.structure
    loops = [cr.circuit.label for cr in pred.circuits]
    out = {
        "ringshift_result": "prediction",
        "name": s.name,
        "source": s.source,
        "charge": s.charge,
        "n_atoms": s.mol.GetNumAtoms(),
        "n_hydrogens": len(pred.protons),
        "model": pred.model,
        "circuits": [circuit_to_dict(cr) | {"model": pred.model} for cr in pred.circuits],
        "perimeters": [circuit_to_dict(cr) for cr in pred.perimeters],
        "protons": [
            {
                "index": p.index, "parent": p.parent, "group": p.group,
                "ring_current_ppm": _r(p.ring_current_ppm),
                "ring_current_by_circuit_ppm": {lab: _r(v) for lab, v in zip(loops, p.per_circuit_ppm)},
                "conformer_spread_ppm": _r(p.spread_ppm),
                "charge_ppm": _r(p.charge_ppm),
                "proton_class": p.proton_class,
                "reference_ppm": _r(p.reference_ppm),
                "predicted_ppm": _r(p.predicted_ppm),
            }
            for p in pred.protons
        ],
        "groups": [
            {
                "group": g.group, "label": g.label, "atoms": list(g.atoms), "parents": list(g.parents),
                "n_h": g.n_h, "proton_class": g.proton_class,
                "ring_current_ppm": _r(g.ring_current_ppm),
                "ring_current_by_circuit_ppm": {lab: _r(v) for lab, v in zip(loops, g.per_circuit_ppm)},
                "geometric_factor_ppm_per_nA_T": {lab: _r(v, 6) for lab, v in zip(loops, g.geometric_ppm_per_nA_T)},
                "conformer_spread_ppm": _r(g.spread_ppm),
                "charge_ppm": _r(g.charge_ppm),
                "reference_ppm": _r(g.reference_ppm), "reference_sd_ppm": _r(g.reference_sd_ppm),
                "predicted_ppm": _r(g.predicted_ppm),
            }
            for g in pred.groups
        ],
        "conformers": {
            "count": int(s.coords.shape[0]),
            "weights": [_r(x, 6) for x in s.weights],
        },
        "provenance": pred.provenance,
        "warnings": list(pred.warnings),
        "caution": CAUTION,
    }
    return out


def to_json(data: dict) -> str:
    """Deterministic JSON text (sorted keys are not used: the schema order is the reading order)."""
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _fmt(x, spec="+.2f"):
    return "" if x is None else format(x, spec)


def prediction_table(pred) -> str:
    """Readable text table: one row per hydrogen group."""
    labels = [cr.circuit.label for cr in pred.circuits]
    head = ["group", "nH", "atoms (H)", "parents"] + [f"{lab} ppm" for lab in labels] + \
        ["ring current", "charge", "reference", "predicted"]
    rows = []
    for g in pred.groups:
        atoms = " ".join(str(a) for a in g.atoms)
        parents = " ".join(str(a) for a in sorted(set(g.parents)))
        rows.append([g.label, str(g.n_h), atoms, parents] + [_fmt(v) for v in g.per_circuit_ppm] +
                    [_fmt(g.ring_current_ppm), _fmt(g.charge_ppm), _fmt(g.reference_ppm, ".2f"),
                     _fmt(g.predicted_ppm, ".2f")])
    widths = [max(len(h), *(len(r[k]) for r in rows)) if rows else len(h) for k, h in enumerate(head)]
    widths = [min(w, 28) for w in widths]

    def line(cells):
        return "  ".join((c if len(c) <= w else c[: w - 1] + "~").rjust(w) if k >= 4 or k == 1
                         else (c if len(c) <= w else c[: w - 1] + "~").ljust(w)
                         for k, (c, w) in enumerate(zip(cells, widths)))

    out = io.StringIO()
    s = pred.structure
    out.write(f"{s.name}: {len(pred.protons)} H in {len(pred.groups)} groups, "
              f"{s.coords.shape[0]} conformer(s), model {pred.model}\n")
    for cr in pred.circuits:
        cur = "n/a" if cr.current_nA_per_T is None else f"{cr.current_nA_per_T:+.1f} nA/T ({cr.current_rel_benzene:+.2f} x benzene)"
        extra = f", {cr.pi_electrons} pi e ({cr.huckel_class})" if cr.pi_electrons is not None else ""
        out.write(f"  circuit {cr.circuit.label}: {cr.circuit.size}-membered {cr.circuit.kind}{extra}, "
                  f"current {cur} [{cr.current_source}], planarity RMS {cr.planarity_rms_A:.2f} A\n")
    for cr in pred.perimeters:
        extra = f", {cr.pi_electrons} pi e ({cr.huckel_class})" if cr.pi_electrons is not None else ""
        out.write(f"  perimeter {cr.circuit.label}: {cr.circuit.size} atoms{extra} (descriptive, no loop)\n")
    out.write("\nShifts in ppm; ring current > 0 is downfield.\n")
    out.write(line(head) + "\n")
    out.write("  ".join("-" * w for w in widths) + "\n")
    for r in rows:
        out.write(line(r) + "\n")
    for wmsg in pred.warnings:
        out.write(f"note: {wmsg}\n")
    out.write(f"\nCaution: {CAUTION}\n")
    return out.getvalue()


def prediction_csv(pred) -> str:
    """Per-proton CSV table."""
    labels = [cr.circuit.label for cr in pred.circuits]
    buf = io.StringIO()
    wr = csv.writer(buf, lineterminator="\n")
    wr.writerow(["index", "parent", "group", "proton_class"] + [f"ring_current_{lab}_ppm" for lab in labels] +
                ["ring_current_ppm", "charge_ppm", "reference_ppm", "predicted_ppm", "conformer_spread_ppm"])
    for p in pred.protons:
        wr.writerow([p.index, p.parent, p.group + 1, p.proton_class or ""] +
                    [_r(v) for v in p.per_circuit_ppm] +
                    [_r(p.ring_current_ppm), _r(p.charge_ppm),
                     "" if p.reference_ppm is None else _r(p.reference_ppm),
                     "" if p.predicted_ppm is None else _r(p.predicted_ppm), _r(p.spread_ppm)])
    return buf.getvalue()


def atomic_write(path: str | os.PathLike, data: str | bytes, *, force: bool = False) -> Path:
    """Write a file via a temporary file in the same folder and a rename.

    An interrupted or failed write leaves no partial file; an existing file is kept unless ``force``.
    """
    path = Path(path)
    if path.exists() and not force:
        raise OutputError(f"{path}: already exists; use --force to overwrite it")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{path}: folder {folder} does not exist")
    mode = "wb" if isinstance(data, bytes) else "w"
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write in {folder} ({exc.strerror})") from None
    try:
        with os.fdopen(fd, mode, **({} if mode == "wb" else {"encoding": "utf-8", "newline": ""})) as fh:
            fh.write(data)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return path
