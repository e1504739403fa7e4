"""Hardening: every malformed input gets one clear line and exit code 2, nothing is left behind, the
numbers stay finite, and the same input and seed give byte-identical output.

The table ``CASES`` drives the command line in-process (``ringshift.cli.main``) with broken
structures, peak lists, JCAMP-DX files and option values. All files are invented here; molecules are
benzene and naphthalene embedded with RDKit (ETKDG, fixed seed) so that only the damage is tested.
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose
from rdkit import Chem
from rdkit.Chem import AllChem

from ringshift import limits
from ringshift.cli import main
from ringshift.errors import GeometryWarning, InputError
from ringshift.io.structures import load_structure

ROOT = Path(__file__).resolve().parents[2]


# ------------------------------------------------------------------------------------------ inputs
def _embedded(smiles: str) -> Chem.Mol:
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    AllChem.EmbedMolecule(mol, randomSeed=7)
    AllChem.MMFFOptimizeMolecule(mol)
    return mol


def _xyz(symbols, xyz, comment="") -> str:
    return f"{len(symbols)}\n{comment}\n" + "".join(f"{s} {x:.6f} {y:.6f} {z:.6f}\n" for s, (x, y, z) in
                                                   zip(symbols, xyz))


def _jdx(*, xunits="##XUNITS=PPM\n", npoints=4, data="10 1 2 3 4\n", end="##END=\n", extra="") -> str:
    return (f"##TITLE=invented test spectrum\n##JCAMP-DX=5.01\n##DATA TYPE=NMR SPECTRUM\n{xunits}{extra}"
            f"##FIRSTX=10\n##LASTX=0\n##NPOINTS={npoints}\n##XYDATA=(X++(Y..Y))\n{data}{end}")


def _build_inputs(d: Path) -> None:
    benz, naph = _embedded("c1ccccc1"), _embedded("c1ccc2ccccc2c1")
    bs = [a.GetSymbol() for a in benz.GetAtoms()]
    bx = benz.GetConformer().GetPositions()
    ns = [a.GetSymbol() for a in naph.GetAtoms()]
    nx = naph.GetConformer().GetPositions()
    files: dict[str, str | bytes] = {
        "benzene.xyz": _xyz(bs, bx), "naphthalene.xyz": _xyz(ns, nx),
        "benzene.mol": Chem.MolToMolBlock(benz),
        "empty.xyz": "", "empty.mol": "", "empty.sdf": "\n\n",
        "binary.xyz": b"\x7fELF\x02\x01\x01\x00\x00\x00" * 20, "binary.sdf": bytes(range(256)) * 4,
        "latin1.xyz": _xyz(bs, bx, comment="benz\xe8ne").encode("latin-1"),
        "truncated.mol": "\n".join(Chem.MolToMolBlock(benz).splitlines()[:9]) + "\n",
        "truncated.sdf": "\n".join(Chem.MolToMolBlock(benz).splitlines()[:6]) + "\n$$$$\n",
        "count_short.xyz": _xyz(bs, bx).replace("12\n", "14\n", 1),
        "count_long.xyz": _xyz(bs, bx).replace("12\n", "10\n", 1),
        "count_zero.xyz": "0\n\n",
        "count_huge.xyz": f"{limits.MAX_ATOMS + 1}\n\nC 0 0 0\n",
        "nonnumeric.xyz": _xyz(bs, bx).replace(f"{bx[0, 0]:.6f}", "1.2.3", 1),
        "nan.xyz": _xyz(bs, bx).replace(f"{bx[0, 0]:.6f}", "nan", 1),
        "inf.xyz": _xyz(bs, bx).replace(f"{bx[0, 0]:.6f}", "-inf", 1),
        "huge.xyz": _xyz(bs, bx + [2.0e4, 0.0, 0.0]),
        "astronomic.xyz": _xyz(bs, bx * 1e300),
        "tiny.xyz": _xyz(bs, bx * 1e-5),
        "overlap.xyz": _xyz(bs + ["C"], np.vstack([bx, bx[3] + [0.05, 0.0, 0.0]])),
        "unknown_element.xyz": _xyz(["Qq"] + bs[1:], bx),
        "radical.xyz": _xyz(ns[:-1], nx[:-1]),                     # naphthalene minus one H: C10H7
        "no_hydrogen.xyz": _xyz(ns[:10], nx[:10]),
        "frames_reordered.xyz": _xyz(bs, bx) + _xyz(bs[::-1], bx[::-1]),
        "too_many_frames.xyz": "1\n\nHe 0 0 0\n" * (limits.MAX_RECORDS + 1),
        "long_line.xyz": _xyz(bs, bx, comment="x" * (limits.MAX_LINE_CHARS + 1)),
        "two_molecules.sdf": Chem.MolToMolBlock(benz) + "$$$$\n" + Chem.MolToMolBlock(naph) + "$$$$\n",
        "too_many_records.sdf": "x\n$$$$\n" * (limits.MAX_RECORDS + 1),
        "structure.pdb": "ATOM      1  C   BNZ A   1       0.000   0.000   0.000\n",
        # peak lists (all invented): benzene's 6 H at 7.36 ppm
        "bom.csv": "\ufeffppm,nH\n7.36,6\n", "crlf.csv": "ppm,nH\r\n7.36,6\r\n",
        "semicolon_comma.csv": "ppm;nH\n7,36;6\n",
        "blank_comment.csv": "# invented peaks\n\nppm,nH\n\n# the only signal\n7.36,6\n\n",
        "ambiguous.csv": "ppm;nH,width\n7.36;6,1.5\n", "empty.csv": "", "comments_only.csv": "# nothing\n\n",
        "headerless.csv": "7.36,6\n", "nonnumeric.csv": "ppm,nH\nseven,6\n", "nan_cell.csv": "ppm,nH\n7.36,nan\n",
        "out_of_range.csv": "ppm,nH\n45.0,6\n", "negative.csv": "ppm,nH\n7.36,-6\n",
        "too_many_rows.csv": "ppm,nH\n" + "7.36,1\n" * (limits.MAX_PEAKS + 1),
        "too_many_per_h.csv": "ppm,nH\n" + "".join(f"{5 + 0.01 * k:.2f},1\n" for k in range(100)),
        "extra_cells.csv": "ppm,nH\n7.36,6,2\n", "binary.csv": b"PK\x03\x04\x00\x00" * 50,
        "long_line.csv": "ppm,nH\n7.36," + "6" * (limits.MAX_LINE_CHARS + 1) + "\n",
        "no_shift_column.csv": "integral,width\n6,1.0\n",
        "unicode_digit_atoms.csv": "ppm,nH,atoms\n7.36,6,2\u00b2\n",
        "no_xunits.jdx": _jdx(xunits=""), "hz_no_observe.jdx": _jdx(xunits="##XUNITS=HZ\n"),
        "npoints.jdx": _jdx(npoints=7), "garbage.jdx": _jdx(data="10 1 2 ?! 4\n"),
        "no_end.jdx": _jdx(end=""), "ok_ramp.jdx": _jdx(),
        "ntuples.jdx": "##TITLE=t\n##JCAMP-DX=5.01\n##NTUPLES=NMR SPECTRUM\n##PAGE=1\n##DATA TABLE=(X++(R..R))\n"
                       "1 2 3\n##END NTUPLES=\n##END=\n",
        "negative_peak.jdx": "##TITLE=t\n##JCAMP-DX=5.01\n##XUNITS=PPM\n##YUNITS=INTEGRAL\n"
                             "##PEAK TABLE=(XY..XY)\n7.36, -6\n##END=\n",
        "too_many_peaks.jdx": "##TITLE=t\n##JCAMP-DX=5.01\n##XUNITS=PPM\n##YUNITS=INTEGRAL\n"
                              "##PEAK TABLE=(XY..XY)\n" + "7.36, 1\n" * (limits.MAX_PEAKS + 1) + "##END=\n",
        "npoints_npeaks.jdx": "##TITLE=t\n##JCAMP-DX=5.01\n##XUNITS=PPM\n##NPOINTS=3\n"
                              "##PEAK TABLE=(XY..XY)\n7.36, 6\n##END=\n",
    }
    for name, content in files.items():
        if isinstance(content, bytes):
            (d / name).write_bytes(content)
        else:
            (d / name).write_text(content, encoding="utf-8", newline="")
    # the overlapping-atom SD file: benzene with its first H moved onto C0
    mol = Chem.Mol(benz)
    mol.GetConformer().SetAtomPosition(6, (bx[0] + [0.1, 0.0, 0.0]).tolist())
    (d / "overlap.sdf").write_text(Chem.MolToMolBlock(mol) + "$$$$\n", encoding="utf-8")
    # benzene with its six carbons on a line (bonds kept): a degenerate ring
    mol = Chem.Mol(benz)
    for k in range(12):
        parent = k if k < 6 else benz.GetAtomWithIdx(k).GetNeighbors()[0].GetIdx()
        mol.GetConformer().SetAtomPosition(k, [1.4 * parent, 1.08 if k >= 6 else 0.0, 0.3 if k >= 6 else 0.0])
    (d / "collinear.mol").write_text(Chem.MolToMolBlock(mol), encoding="utf-8")
    # a 3D MOL block with one C-H bond of order 0 and one of order 8 ("any", a query bond)
    lines = Chem.MolToMolBlock(benz).splitlines()
    k = next(i for i, line in enumerate(lines) if line.split()[:3] == ["1", "7", "1"])
    for name, order in (("order0.mol", "0"), ("anybond.mol", "8")):
        edited = lines[:k] + [lines[k][:6] + order.rjust(3) + lines[k][9:]] + lines[k + 1:]
        (d / name).write_text("\n".join(edited) + "\n", encoding="utf-8")
    # two heavy-atom-only 3D records of ethane, the second a cation: AddHs gives them different H counts
    eth = Chem.RemoveHs(_embedded("CC"))
    cat = Chem.RWMol(eth)
    cat.GetAtomWithIdx(0).SetFormalCharge(1)
    (d / "charge_differs.sdf").write_text(Chem.MolToMolBlock(eth) + "$$$$\n" + Chem.MolToMolBlock(cat) + "$$$$\n",
                                          encoding="utf-8")
    for name in ("big.xyz", "big.csv"):                # sparse files just over the size limit
        with open(d / name, "wb") as handle:
            handle.truncate(limits.MAX_FILE_BYTES + 1)
    (d / "a_folder.xyz").mkdir()


@pytest.fixture(scope="module")
def data_dir(tmp_path_factory) -> Path:
    d = tmp_path_factory.mktemp("hardening_inputs")
    _build_inputs(d)
    return d


# ------------------------------------------------------------------------------------------ runner
def run(argv, capsys):
    with pytest.raises(SystemExit) as exc:
        main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return exc.value.code, out, err


@dataclass(frozen=True)
class Case:
    id: str
    argv: tuple               # "{d}" = input folder, "{o}" = empty output folder
    code: int
    fragment: str             # expected in the one stderr line (error) or "" (accepted)
    existing: tuple = field(default=())   # files present in the output folder beforehand (must survive)


def C(id, argv, code, fragment, existing=()):  # noqa: E743 - short table constructor
    return Case(id, tuple(argv), code, fragment, tuple(existing))


B = "{d}/benzene.xyz"
CASES = [
    # --- SMILES
    C("smiles-unbalanced", ["predict", "C1CC(("], 2, "not a readable SMILES"),
    C("smiles-unclosed-ring", ["predict", "C1CCCC"], 2, "not a readable SMILES"),
    C("smiles-kekulize", ["predict", "c1cccc1"], 2, "kekulize"),
    C("smiles-valence", ["predict", "C(C)(C)(C)(C)C"], 2, "valence"),
    C("smiles-unknown-element", ["predict", "[Xx]"], 2, "not a readable SMILES"),
    C("smiles-empty", ["predict", ""], 2, "expected a SMILES"),
    C("smiles-blank", ["predict", "   "], 2, "expected a SMILES"),
    C("smiles-too-long", ["predict", "C" * (limits.MAX_SMILES_CHARS + 1)], 2, "exceeds the limit"),
    C("structure-folder", ["predict", "{d}"], 2, "is a folder"),
    C("smiles-dummy-atom", ["predict", "[*]c1ccccc1"], 2, "dummy or query atom"),
    C("smiles-dummy-thiol", ["predict", "[*]/C1=C/C#S[*]/C1=C/C"], 2, "dummy or query atom"),  # fuzz finding
    # --- structure files
    C("missing-file", ["predict", "{d}/nothing_here.sdf"], 2, "file not found"),
    C("xyz-folder", ["predict", "{d}/a_folder.xyz"], 2, "is a folder"),
    C("xyz-empty", ["predict", "{d}/empty.xyz"], 2, "file is empty"),
    C("mol-empty", ["predict", "{d}/empty.mol"], 2, "file is empty"),
    C("sdf-blank", ["predict", "{d}/empty.sdf"], 2, "file is empty"),
    C("xyz-binary", ["predict", "{d}/binary.xyz"], 2, "binary file"),
    C("sdf-binary", ["predict", "{d}/binary.sdf"], 2, "binary file"),
    C("xyz-latin1", ["predict", "{d}/latin1.xyz"], 2, "not UTF-8"),
    C("mol-truncated", ["predict", "{d}/truncated.mol"], 2, "not a readable MOL block"),
    C("sdf-truncated", ["predict", "{d}/truncated.sdf"], 2, "not a readable MOL block"),
    C("xyz-count-too-big", ["predict", "{d}/count_short.xyz"], 2, "announces 14 atoms"),
    C("xyz-count-too-small", ["predict", "{d}/count_long.xyz"], 2, "atom count of frame 2"),
    C("xyz-count-zero", ["predict", "{d}/count_zero.xyz"], 2, "one positive integer"),
    C("xyz-atom-limit", ["predict", "{d}/count_huge.xyz"], 2, f"limit of {limits.MAX_ATOMS}"),
    C("xyz-non-numeric", ["predict", "{d}/nonnumeric.xyz"], 2, "expected 'element x y z'"),
    C("xyz-nan", ["predict", "{d}/nan.xyz"], 2, "non-finite coordinate"),
    C("xyz-inf", ["predict", "{d}/inf.xyz"], 2, "non-finite coordinate"),
    C("xyz-huge", ["predict", "{d}/huge.xyz"], 2, "beyond ±10000 Å"),
    C("xyz-astronomic", ["predict", "{d}/astronomic.xyz"], 2, "beyond ±10000 Å"),
    C("xyz-tiny", ["predict", "{d}/tiny.xyz"], 2, "within 0.001 Å"),
    C("xyz-overlap", ["predict", "{d}/overlap.xyz"], 2, "atoms 3 (C) and 12 (C) (0-based) are 0.050 Å apart"),
    C("sdf-overlap", ["predict", "{d}/overlap.sdf"], 2, "atoms 0 (C) and 6 (H) (0-based) are 0.100 Å apart"),
    C("xyz-unknown-element", ["predict", "{d}/unknown_element.xyz"], 2, "expected 'element x y z'"),
    C("xyz-no-bonds-neutral", ["predict", "{d}/radical.xyz"], 2, "give its net charge (option --charge)"),
    C("xyz-charge-does-not-fit", ["predict", "{d}/naphthalene.xyz", "--charge", "2"], 2,
      "the given charge 2 does not fit the geometry"),
    C("xyz-frames-reordered", ["predict", "{d}/frames_reordered.xyz"], 2, "same order"),
    C("xyz-frame-limit", ["predict", "{d}/too_many_frames.xyz"], 2, f"limit of {limits.MAX_RECORDS}"),
    C("xyz-long-line", ["predict", "{d}/long_line.xyz"], 2, "character limit"),
    C("xyz-too-big", ["predict", "{d}/big.xyz"], 2, "exceeds the limit of 209715200 bytes (200 MiB)"),
    C("sdf-two-molecules", ["predict", "{d}/two_molecules.sdf"], 2, "is another molecule"),
    C("sdf-records-differ-in-h", ["predict", "{d}/charge_differs.sdf"], 2, "differ in charges"),  # fuzz finding
    C("sdf-record-limit", ["predict", "{d}/too_many_records.sdf"], 2, f"limit of {limits.MAX_RECORDS}"),
    C("unknown-extension", ["predict", "{d}/structure.pdb"], 2, "unknown file format '.pdb'"),
    C("degenerate-ring", ["predict", "{d}/collinear.mol"], 2, "collinear"),
    C("mol-bond-order-0", ["predict", "{d}/order0.mol"], 2, "no chemical bond order"),   # fuzz finding
    C("mol-query-bond", ["predict", "{d}/anybond.mol"], 2, "no chemical bond order"),
    # --- peak lists: accepted variants
    C("peaks-bom", ["compare", B, "{d}/bom.csv", "--format", "json"], 0, ""),
    C("peaks-crlf", ["compare", B, "{d}/crlf.csv", "--format", "json"], 0, ""),
    C("peaks-semicolon-decimal-comma", ["compare", B, "{d}/semicolon_comma.csv", "--format", "json"], 0, ""),
    C("peaks-blank-and-comment-lines", ["compare", B, "{d}/blank_comment.csv", "--format", "json"], 0, ""),
    # --- peak lists: refused
    C("peaks-ambiguous-separators", ["compare", B, "{d}/ambiguous.csv"], 2, "ambiguous"),
    C("peaks-empty", ["compare", B, "{d}/empty.csv"], 2, "empty peak table"),
    C("peaks-comments-only", ["compare", B, "{d}/comments_only.csv"], 2, "empty peak table"),
    C("peaks-headerless", ["compare", B, "{d}/headerless.csv"], 2, "add a header row"),
    C("peaks-no-shift-column", ["compare", B, "{d}/no_shift_column.csv"], 2, "no shift column"),
    C("peaks-unicode-digit-atoms", ["compare", B, "{d}/unicode_digit_atoms.csv"], 2, "atoms cell"),  # fuzz finding
    C("peaks-non-numeric", ["compare", B, "{d}/nonnumeric.csv"], 2, "is not a number"),
    C("peaks-nan-cell", ["compare", B, "{d}/nan_cell.csv"], 2, "is not a number"),
    C("peaks-out-of-range", ["compare", B, "{d}/out_of_range.csv"], 2, "outside -20…40 ppm"),
    C("peaks-negative-integral", ["compare", B, "{d}/negative.csv"], 2, "negative integral"),
    C("peaks-row-limit", ["compare", B, "{d}/too_many_rows.csv"], 2, f"limit of {limits.MAX_PEAKS}"),
    C("peaks-too-many-per-H", ["compare", B, "{d}/too_many_per_h.csv"], 2, "more than 16 per H"),
    C("peaks-extra-cells", ["compare", B, "{d}/extra_cells.csv"], 2, "row has 3 cells"),
    C("peaks-binary", ["compare", B, "{d}/binary.csv"], 2, "binary file"),
    C("peaks-long-line", ["compare", B, "{d}/long_line.csv"], 2, "character limit"),
    C("peaks-too-big", ["compare", B, "{d}/big.csv"], 2, "exceeds the limit of 209715200 bytes (200 MiB)"),
    C("peaks-missing", ["compare", B, "{d}/nothing.csv"], 2, "file not found"),
    C("peaks-folder", ["compare", B, "{d}"], 2, "is a directory"),
    # --- JCAMP-DX
    C("jcamp-missing-xunits", ["compare", B, "{d}/no_xunits.jdx"], 2, "missing required label ##XUNITS="),
    C("jcamp-hz-no-observe", ["compare", B, "{d}/hz_no_observe.jdx"], 2, "no ##.OBSERVE FREQUENCY"),
    C("jcamp-npoints-mismatch", ["compare", B, "{d}/npoints.jdx"], 2, "##NPOINTS=7 but ##XYDATA holds 4"),
    C("jcamp-garbage-xydata", ["compare", B, "{d}/garbage.jdx"], 2, "unexpected character '?'"),
    C("jcamp-truncated", ["compare", B, "{d}/no_end.jdx"], 2, "no ##END="),
    C("jcamp-ntuples", ["compare", B, "{d}/ntuples.jdx"], 2, "NTUPLES"),
    C("jcamp-negative-integral", ["compare", B, "{d}/negative_peak.jdx"], 2, "negative integral"),
    C("jcamp-peak-limit", ["compare", B, "{d}/too_many_peaks.jdx"], 2, f"limit of {limits.MAX_PEAKS}"),
    C("jcamp-npoints-vs-peaks", ["compare", B, "{d}/npoints_npeaks.jdx"], 2, "##NPOINTS=3 but ##PEAK TABLE holds 1"),
    C("jcamp-no-peak-above-noise", ["compare", B, "{d}/ok_ramp.jdx"], 2, "no peak rises 8 σ above the noise"),
    # --- option values
    C("scale-not-a-number", ["predict", B, "--scale", "R1=abc"], 2, "not a number"),
    C("scale-nan", ["predict", B, "--scale", "R1=nan"], 2, "not a finite number"),
    C("scale-unknown-label", ["predict", B, "--scale", "R9=2"], 2, "R9"),
    C("scale-no-equals", ["predict", B, "--scale", "R1"], 2, "LABEL=NUMBER"),
    C("set-current-inf", ["predict", B, "--set-current", "R1=1e400"], 2, "not a finite number"),
    C("circuit-out-of-range", ["predict", B, "--circuit", "0,1,99"], 2, "out of range"),
    C("circuit-too-short", ["predict", B, "--circuit", "0,1"], 2, "at least 3 atoms"),
    C("circuit-not-numbers", ["predict", B, "--circuit", "a,b,c"], 2, "atom indices"),
    C("circuit-not-bonded", ["predict", B, "--circuit", "0,2,1,3,4,5"], 2, "not bonded"),
    C("noise-negative", ["compare", B, "{d}/bom.csv", "--noise", "-1"], 2, "--noise"),
    C("noise-word", ["compare", B, "{d}/bom.csv", "--noise", "loud"], 2, "--noise"),
    C("noise-nan", ["compare", B, "{d}/bom.csv", "--noise", "nan"], 2, "--noise"),
    C("solvent-unknown", ["compare", B, "{d}/bom.csv", "--solvent", "CDX3"], 2, "unknown"),
    C("conformers-zero", ["predict", "c1ccccc1", "--conformers", "0"], 2, "--conformers"),
    C("conformers-too-many", ["predict", "c1ccccc1", "--conformers", "6000"], 2, "--conformers"),
    C("temperature-zero", ["predict", "c1ccccc1", "--temperature", "0"], 2, "--temperature"),
    C("seed-negative", ["predict", "c1ccccc1", "--seed", "-1"], 2, "seed"),
    C("seed-overflow", ["predict", "c1ccccc1", "--seed", str(2**31)], 2, "seed"),
    C("charge-absurd", ["predict", "c1ccccc1", "--charge", "1000"], 2, "charge"),
    C("charge-contradicts-smiles", ["predict", "c1ccccc1", "--charge", "1"], 2, "contradicts"),
    C("model-unknown", ["predict", B, "--model", "magic"], 2, "--model"),
    C("format-unknown", ["predict", B, "--format", "xml"], 2, "--format"),
    C("unknown-option", ["predict", B, "--colour", "red"], 2, "--colour"),
    C("unknown-command", ["predikt", B], 2, "predikt"),
    C("trajectory-missing", ["trajectory", "{d}/nothing.xyz"], 2, "file not found"),
    C("trajectory-extension", ["trajectory", "{d}/structure.pdb"], 2, "expected a .xyz, .sdf or .sd"),
    C("batch-missing-library", ["batch", "{d}/nothing.smi", "-o", "{o}/lib.jsonl", "--quiet"], 2, "not found"),
    # --- outputs
    C("output-missing-folder", ["predict", B, "-o", "{o}/no/such/folder/out.json"], 2, "does not exist"),
    C("output-exists-no-force", ["predict", B, "-o", "{o}/taken.json"], 2, "--force", existing=("taken.json",)),
    C("output-is-folder", ["predict", B, "-o", "{o}"], 2, "is a directory"),
    C("plot-missing-folder", ["pi", B, "--plot", "{o}/no/such/levels.png"], 2, "does not exist"),
    C("plot-bad-extension", ["pi", B, "--plot", "{o}/levels.bmpx"], 2, ".png, .svg or .pdf"),
    C("map-bad-extension", ["map", B, "-o", "{o}/map.txt"], 2, ".png, .svg or .pdf"),
    C("map-no-ring", ["map", "C1CCCCC1", "--conformers", "1", "-o", "{o}/map.png"], 2, "no conjugated ring"),
    C("report-folder-exists", ["report", B, "-o", "{o}/taken", "--quiet"], 2, "--force", existing=("taken",)),
]


def _fill(argv, d: Path, o: Path) -> list[str]:
    return [a.replace("{d}", str(d)).replace("{o}", str(o)) for a in argv]


def test_table_is_large_and_ids_unique():
    # The brief asks for at least 40 malformed inputs; ids must be unique for parametrize.
    assert sum(c.code == 2 for c in CASES) >= 40
    assert len({c.id for c in CASES}) == len(CASES)


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_malformed_input(case: Case, data_dir: Path, tmp_path: Path, capsys):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    for name in case.existing:
        if name.endswith(".json"):
            (out_dir / name).write_text("keep me\n", encoding="utf-8")
        else:
            (out_dir / name).mkdir()
    argv = _fill(case.argv, data_dir, out_dir)
    writes_file = argv[0] in ("predict", "compare") and "-o" not in argv
    if writes_file:                       # every predict/compare case also asks for an output file
        argv += ["-o", str(out_dir / "result.out")]
    before_inputs = sorted(p.name for p in data_dir.iterdir())
    code, out, err = run(argv, capsys)
    assert "Traceback" not in err and "internal error" not in err, err
    assert code == case.code, err
    assert sorted(p.name for p in data_dir.iterdir()) == before_inputs      # inputs untouched
    if case.code == 2:
        lines = err.strip().splitlines()
        assert len(lines) == 1, err
        assert lines[0].startswith("ringshift: error: "), err
        assert case.fragment in lines[0], lines[0]
        assert out == ""
        # nothing left behind: only what was there before, unchanged
        assert sorted(p.name for p in out_dir.iterdir()) == sorted(case.existing)
        for name in case.existing:
            if name.endswith(".json"):
                assert (out_dir / name).read_text(encoding="utf-8") == "keep me\n"
    else:
        # Accepted peak-file variants: the one peak must be read as 7.36 ppm, 6 H (the invented
        # input itself; common practice, no source). Exact decimal parse, so atol 1e-12 ppm.
        data = json.loads((out_dir / "result.out").read_text(encoding="utf-8"))
        assert [p.name for p in out_dir.iterdir()] == ["result.out"]
        observed = [a["observed_ppm"] for a in data["assignment"]]
        assert_allclose(observed, [7.36], rtol=0, atol=1e-12)


def test_charge_messages_differ_with_and_without_charge(data_dir, capsys):
    # Without --charge the user is told how to give one; with a wrong --charge, that it does not fit
    # and which small charge does (naphthalene is neutral; common practice, no source).
    _, _, err = run(["predict", data_dir / "radical.xyz"], capsys)
    assert "if this is an ion, give its net charge (option --charge)" in err and "does not fit" not in err
    _, _, err = run(["predict", data_dir / "naphthalene.xyz", "--charge", "2"], capsys)
    assert "if this is an ion" not in err
    assert "net charge 0 fits the geometry" in err


def test_xyz_without_hydrogens_warns(data_dir):
    with pytest.warns(GeometryWarning, match="no hydrogen atoms"):
        s = load_structure(str(data_dir / "no_hydrogen.xyz"))
    assert s.mol.GetNumAtoms() == 10


def test_force_field_failure_falls_back_to_etkdg(monkeypatch):
    # Fuzz finding: UFF raised RuntimeError ("bad bond order") from inside load_structure. A force
    # field that cannot be set up now gives a GeometryWarning and the unminimised ETKDG geometry.
    from rdkit.Chem import rdForceFieldHelpers

    def boom(*args, **kwargs):
        raise RuntimeError("Pre-condition Violation bad bond order")

    monkeypatch.setattr(rdForceFieldHelpers, "MMFFOptimizeMoleculeConfs", boom)
    with pytest.warns(GeometryWarning, match="minimisation failed"):
        s = load_structure("c1ccccc1", conformers=2, seed=1)
    assert np.all(np.isfinite(s.coords)) and s.energies_kcal_mol is None
    assert s.provenance["coordinates"] == "etkdg-v3"


def test_hydrogen_groups_tolerate_dummy_neighbours():
    # Fuzz finding: an O/S bonded to a dummy atom and nothing else made group_equivalent_hydrogens
    # raise StopIteration. The public function must cope with any sanitised molecule.
    from ringshift.geometry.symmetry import group_equivalent_hydrogens

    mol = Chem.AddHs(Chem.MolFromSmiles("[*]OC(O[*])(C)C"))
    AllChem.Compute2DCoords(mol)                     # RDKit cannot embed dummy atoms in 3D
    groups = group_equivalent_hydrogens(mol, mol.GetConformer().GetPositions())
    hs = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1]
    assert sorted(h for g in groups for h in g) == hs                 # a partition of the protons
    for a in mol.GetAtoms():                                          # each CH3 is one rotor site
        own = {n.GetIdx() for n in a.GetNeighbors() if n.GetAtomicNum() == 1}
        if len(own) == 3:
            assert any(own <= set(g) for g in groups)


# ------------------------------------------------------------------------------ numerical guards
#: Keys of the predict JSON that must always hold finite numbers (never null, NaN or inf).
_REQUIRED_PROTON = ("ring_current_ppm", "conformer_spread_ppm", "charge_ppm")
_REQUIRED_CIRCUIT = ("radius_A", "planarity_rms_A")


def _assert_finite_json(text: str) -> dict:
    def no_constants(name):
        raise AssertionError(f"non-finite JSON constant {name}")

    data = json.loads(text, parse_constant=no_constants)
    for p in data["protons"] + data["groups"]:
        for key in _REQUIRED_PROTON:
            assert isinstance(p[key], float | int) and math.isfinite(p[key]), (key, p)
        for v in p["ring_current_by_circuit_ppm"].values():
            assert isinstance(v, float | int) and math.isfinite(v)
    for g in data["groups"]:
        for v in g["geometric_factor_ppm_per_nA_T"].values():
            assert isinstance(v, float | int) and math.isfinite(v)
    for c in data["circuits"] + data["perimeters"]:
        for key in _REQUIRED_CIRCUIT:
            assert isinstance(c[key], float | int) and math.isfinite(c[key]), (key, c)
        assert all(isinstance(v, float | int) and math.isfinite(v) for v in c["centre"] + c["normal"])
        if c["current_nA_per_T"] is not None:
            assert math.isfinite(c["current_nA_per_T"])
    assert all(isinstance(w, float | int) and math.isfinite(w) for w in data["conformers"]["weights"])
    return data


def _wire_mol(tmp_path: Path) -> Path:
    """Benzene plus a water whose H sits 0.64 Å above C0, i.e. on a Johnson–Bovey loop wire."""
    benz = _embedded("c1ccccc1")
    x = benz.GetConformer().GetPositions()
    c = x[:6]
    n = np.cross(c[1] - c[0], c[2] - c[0])
    n /= np.linalg.norm(n)
    rw = Chem.RWMol(benz)
    o, h1, h2 = rw.AddAtom(Chem.Atom(8)), rw.AddAtom(Chem.Atom(1)), rw.AddAtom(Chem.Atom(1))
    rw.AddBond(o, h1, Chem.BondType.SINGLE)
    rw.AddBond(o, h2, Chem.BondType.SINGLE)
    for k, p in {h1: c[0] + 0.64 * n, o: c[0] + 1.60 * n, h2: c[0] + 1.60 * n + [0.93, 0.0, 0.25]}.items():
        rw.GetConformer().SetAtomPosition(k, p.tolist())
    mol = rw.GetMol()
    Chem.SanitizeMol(mol)
    path = tmp_path / "wire.mol"
    Chem.MolToMolFile(mol, str(path))
    return path


@pytest.mark.parametrize("model", ["polygon", "johnson-bovey", "network"], ids=["polygon", "jb", "network"])
def test_proton_on_loop_wire_warns_and_stays_finite(model, tmp_path, capsys):
    # Design notes §6: a proton within 0.2 Å of a loop wire is regularised and reported.
    path = _wire_mol(tmp_path)
    code, out, err = run(["predict", path, "--format", "json", "--model", model], capsys)
    assert code == 0, err
    data = _assert_finite_json(out)
    assert any("current wire" in w for w in data["warnings"]) or "current wire" in err


@pytest.mark.parametrize("smiles", ["c1ccccc1", "c1ccc2ccccc2c1", "C1=CC=CC=CC=C1", "[cH-]1cccc1", "C1CCCCC1",
                                    "[H][H]", "[H+].c1ccccc1"],
                         ids=["benzene", "naphthalene", "COT", "Cp-anion", "no-ring", "H2", "bare-proton"])
def test_predict_json_has_no_missing_numbers(smiles, capsys):
    code, out, err = run(["predict", smiles, "--format", "json", "--conformers", "2"], capsys)
    assert code == 0, err
    _assert_finite_json(out)


def test_load_structure_geometry_guards_api(data_dir):
    # The same guards from the API: InputError, never a crash or NaN.
    for name, fragment in (("huge.xyz", "beyond"), ("tiny.xyz", "within 0.001"), ("overlap.xyz", "apart")):
        with pytest.raises(InputError, match=fragment):
            load_structure(str(data_dir / name))


def test_check_coordinates_names_the_closest_pair():
    # Three atoms, two 0.3 Å apart and one far: the message names atoms 1 and 2 (0-based).
    x = np.array([[[0.0, 0.0, 0.0], [3.0, 0.0, 0.0], [3.3, 0.0, 0.0]]])
    with pytest.raises(InputError, match=r"atoms 1 \(C\) and 2 \(O\) \(0-based\) are 0.300 Å apart"):
        limits.check_coordinates(x, ["N", "C", "O"], "test")
    # H2 at its bond length, 0.741 Å (CRC Handbook, from memory), passes the 0.5 Å guard.
    limits.check_coordinates(np.array([[[0.0, 0.0, 0.0], [0.741, 0.0, 0.0]]]), ["H", "H"], "H2")


def test_collinear_ring_is_an_input_error_not_nan():
    from ringshift.geometry.circuits import circuit_geometry

    x = np.zeros((6, 3))
    x[:, 0] = 1.4 * np.arange(6)
    with pytest.raises(InputError, match="collinear"):
        circuit_geometry(x, list(range(6)))


def test_no_python_warnings_leak_as_errors_on_valid_input(capsys):
    # A valid structure gives exit 0 and nothing but (possible) one-line warnings on stderr.
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)   # a numpy overflow/invalid would surface here
        code, out, err = run(["predict", "c1ccc2ccccc2c1", "--conformers", "2", "--format", "json"], capsys)
    assert code == 0 and all(line.startswith("ringshift: ") for line in err.splitlines())


# ---------------------------------------------------------------------------------- determinism
def test_json_byte_identical_across_processes(tmp_path):
    # Same input and seed → byte-identical JSON, whatever the hash seed of the interpreter
    # (conformer generation, set/dict ordering). Two fresh processes with different PYTHONHASHSEED.
    outs = []
    for hash_seed in ("0", "12345"):
        env = dict(os.environ, PYTHONHASHSEED=hash_seed)
        proc = subprocess.run([sys.executable, "-m", "ringshift", "predict", "C1=CC=C2CC(=C1)C=CC=C2", "--seed", "3",
                               "--conformers", "10", "--format", "json"], capture_output=True, env=env, cwd=ROOT,
                              timeout=120, check=False)
        assert proc.returncode == 0, proc.stderr.decode()
        outs.append(proc.stdout)
    assert outs[0] == outs[1]
    _assert_finite_json(outs[0].decode("utf-8"))


# -------------------------------------------------------------------------------- known gaps
def test_map_height_beyond_any_molecule_is_refused(capsys, tmp_path, data_dir):
    target = tmp_path / "m.png"
    code, _, err = run(["map", data_dir / "benzene.xyz", "-o", target, "--height", "1e300"], capsys)
    assert code == 2 and "height" in err and not target.exists()


# Found while hardening the runners (runners/batch.py, runners/trajectory.py, io/frames.py); each test states the fix.
def _write(tmp_path: Path, name: str, data: bytes) -> Path:
    path = tmp_path / name
    path.write_bytes(data)
    return path


_ONE_ATOM = b"1\n\nHe 0 0 0\n"


def test_trajectory_empty_file_is_input_error(tmp_path, capsys):
    code, _, err = run(["trajectory", _write(tmp_path, "empty.xyz", b"")], capsys)
    assert code == 2 and "empty" in err


def test_trajectory_unicode_digit_count_is_input_error(tmp_path, capsys):
    code, _, err = run(["trajectory", _write(tmp_path, "sup.xyz", "\u00b2\n\nHe 0 0 0\n".encode())], capsys)
    assert code == 2 and "atom count" in err


@pytest.mark.parametrize("command,name,data", [
    ("trajectory", "latin1.xyz", _ONE_ATOM.replace(b"\n\n", b"\n\xe8\n")),
    ("trajectory", "nul.xyz", b"\x00\x01\x02abc\n"),
    ("batch", "latin1.smi", b"c1ccccc1 benz\xe8ne\n"),
    ("batch", "binary.sdf", bytes(range(256)) * 4),
], ids=["trajectory-latin1", "trajectory-nul", "batch-latin1-smiles", "batch-binary-sdf"])
def test_streaming_readers_bad_bytes_are_input_errors(command, name, data, tmp_path, capsys):
    argv = [command, _write(tmp_path, name, data)] + (["-o", tmp_path / "o.jsonl", "--quiet"]
                                                      if command == "batch" else [])
    code, _, err = run(argv, capsys)
    assert code == 2 and "internal error" not in err


def test_trajectory_frames_get_the_coordinate_guards(data_dir, tmp_path, capsys):
    text = (data_dir / "benzene.xyz").read_bytes() + (data_dir / "tiny.xyz").read_bytes()
    code, _, err = run(["trajectory", _write(tmp_path, "traj.xyz", text)], capsys)
    assert code == 2 and "within 0.001 Å" in err


def test_trajectory_template_errors_name_the_users_file(data_dir, capsys):
    code, _, err = run(["trajectory", data_dir / "nan.xyz"], capsys)
    assert code == 2 and f"{data_dir / 'nan.xyz'}:3" in err
