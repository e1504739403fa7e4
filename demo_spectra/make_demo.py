"""Generate the bundled demo scenario. ALL DATA WRITTEN HERE ARE INVENTED.

Scenario (fictional): the Lindqvist-Okafor group at the Fjordvik Institute of Molecular Materials
made a photoswitchable pair, FJ-14c (closed, a bridged [14]annulene: 2,7,15,16-tetramethyl-
15,16-dihydropyrene) and FJ-14o (its open valence isomer, a [2.2]metacyclophanediene). They want
to know from the 1H spectrum whether the closed form carries a diatropic 14-pi macrocyclic current.

The "observed" spectra are simulated from ringshift's own model with a stated hidden current, noise
and small reference-shift errors, so the demo shows the whole job on data whose answer is known:

* FJ-14c: hidden macrocycle current +14.0 nA/T (diatropic), 0.06 ppm noise.
* FJ-14o: hidden benzene-ring currents +11.0 nA/T each, no current in the cyclophane macrocycle.

Run from the project root:  python demo_spectra/make_demo.py
It overwrites the files in ringshift/data/demo/ (demo_spectra/ links to them) and is deterministic
(fixed seeds).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from rdkit import Chem

from ringshift.io.jcampdx import write_jcamp_spectrum
from ringshift.io.peak_tables import write_peak_table_csv
from ringshift.io.structures import load_structure
from ringshift.shifts.prediction import predict
from ringshift.spectra.peaks import Peak
from ringshift.spectra.picking import simulate_spectrum

# shipped in the wheel; demo_spectra/ links to it
HERE = Path(__file__).resolve().parent.parent / "ringshift" / "data" / "demo"
OBSERVE_MHZ = 500.0
SEED = 20261201

COMPOUNDS = {
    "fj14c": {
        "title": "FJ-14c (closed form), invented demo data",
        "smiles": "CC1=CC2=CC=C3C=C(C)C=C4C=CC(=C1)[C@]2(C)[C@]34C",
        "hidden": {"M1": 14.0},
    },
    "fj14o": {
        "title": "FJ-14o (open form), invented demo data",
        "smiles": "Cc1cc2/C=C\\c3cc(C)cc(c3C)/C=C\\c(c1)c2C",
        "hidden": {"R1": 11.0, "R2": 11.0, "M1": 0.0},
    },
}

NOISE_PPM = 0.06          # scatter of the invented "observed" shifts about the model
REF_ERROR_SD_PPM = 0.10   # invented per-class error of the reference table


def _write_sdf(path: Path, structure) -> None:
    mol = Chem.Mol(structure.mol)
    best = int(np.argmax(structure.weights))
    one = Chem.Mol(mol)
    one.RemoveAllConformers()
    c = Chem.Conformer(mol.GetNumAtoms())
    for i, xyz in enumerate(structure.coords[best]):
        c.SetAtomPosition(i, xyz.tolist())
    c.Set3D(True)
    one.AddConformer(c, assignId=True)
    one.SetProp("_Name", path.stem.upper())
    one.SetProp("ringshift_demo", "invented demo structure (geometry from ETKDG v3 + MMFF94)")
    w = Chem.SDWriter(str(path))
    w.write(one)
    w.close()


def make(name: str, spec: dict, rng: np.random.Generator) -> None:
    s = load_structure(spec["smiles"], seed=7)
    sdf = HERE / f"{name}.sdf"
    _write_sdf(sdf, s)
    s = load_structure(str(sdf))  # the demo reads the file back, so simulate from exactly that
    pred = predict(s, set_current=spec["hidden"])
    class_error = {}
    rows = []
    for g in pred.groups:
        err = class_error.setdefault(g.proton_class, rng.normal(0.0, REF_ERROR_SD_PPM))
        shift = g.predicted_ppm + err + rng.normal(0.0, NOISE_PPM)
        rows.append((round(float(shift), 2), g.n_h))
    # merge groups that would overlap at 500 MHz (closer than 0.015 ppm)
    rows.sort(reverse=True)
    merged: list[list[float]] = []
    for shift, n in rows:
        if merged and abs(merged[-1][0] - shift) < 0.015:
            tot = merged[-1][1] + n
            merged[-1][0] = round((merged[-1][0] * merged[-1][1] + shift * n) / tot, 2)
            merged[-1][1] = tot
        else:
            merged.append([shift, n])
    peaks = [Peak(shift_ppm=sh, integral=float(n), width_hz=1.6, label=f"p{k + 1}")
             for k, (sh, n) in enumerate(merged)]
    write_peak_table_csv(HERE / f"{name}_peaks.csv", peaks)
    # spectrum: sample lines plus CDCl3 residual and TMS (invented intensities)
    extra = [Peak(shift_ppm=7.26, integral=0.15, width_hz=1.2, kind="solvent"),
             Peak(shift_ppm=0.0, integral=0.3, width_hz=1.0, kind="tms")]
    spec_obj = simulate_spectrum(peaks + extra, observe_mhz=OBSERVE_MHZ, linewidth_hz=1.6, points=32768,
                                 sw_ppm=(-6.0, 12.0), noise=0.004, seed=int(rng.integers(1 << 30)))
    write_jcamp_spectrum(HERE / f"{name}_1H.jdx", spec_obj.ppm, spec_obj.intensity, observe_mhz=OBSERVE_MHZ,
                         title=spec["title"], compress="DIF")
    print(f"{name}: {len(peaks)} peaks, hidden currents {spec['hidden']} nA/T")


def main() -> None:
    rng = np.random.default_rng(SEED)
    for name, spec in COMPOUNDS.items():
        make(name, spec, rng)


if __name__ == "__main__":
    main()
