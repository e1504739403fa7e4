"""NMReDATA export and import (ringshift.io.nmredata): round trip, the format's rules, bad files.

The format rules checked here are those of the NMReDATA Initiative's definition of format 1.1 (Pupier et al.,
Magn. Reson. Chem. 2018, 56, 703–715; pages "NMReDATA tag format" and "1D attributes" of nmredata.org):
tag names of letters, digits and underscores; item lines of multi-line tags ending in a backslash; atoms
numbered from 1 in the order of the molecule block; four decimals for 1D shifts; signal attributes in the
order S=, J=, N=, L=, E=; Larmor= mandatory in a 1D tag. The structure is checked against RDKit (the
reference library): the same canonical SMILES, and the assigned atom numbers are hydrogens bonded to the
group's heavy atoms in RDKit's reading of the file. All peak lists are invented for these tests.
"""

from __future__ import annotations

import math
import re
import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from rdkit import Chem

from ringshift.api import compare, write_nmredata
from ringshift.errors import InputError, OutputError
from ringshift.io.nmredata import ESTIMATE_COMMENT, nmredata_text, parse_nmredata, read_nmredata

#: Shifts and integrals are written with four decimals (1D-attributes page), so they come back within
#: half a unit of the fourth decimal.
ROUNDING = 5e-5


def _compare(smiles, body, tmp_path, name="peaks.csv", **kw):
    path = tmp_path / name
    path.write_text(body)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return compare(smiles, str(path), **kw), path


@pytest.fixture(scope="module")
def toluene(tmp_path_factory):
    # invented: the aromatic multiplet only (the methyl peak is missing), the CDCl3 residual line and one
    # unexplained line; frequency given as a comment line of the CSV table
    tmp = tmp_path_factory.mktemp("nmredata")
    res, peaks = _compare("Cc1ccccc1", "# observe_mhz = 400.13\nshift_ppm,integral,multiplicity\n"
                          "7.20,5.0,m\n7.26,0.3,s\n5.30,1.0,s\n", tmp, solvent="CDCl3")
    path = write_nmredata(res, tmp / "toluene.nmredata.sdf")
    return res, peaks, path


def test_round_trip_structure_is_the_same_molecule(toluene):
    res, _, path = toluene
    record = read_nmredata(path)
    mol = res.prediction.structure.mol
    # RDKit canonical SMILES of the molecule read back equal that of the structure compared
    assert Chem.MolToSmiles(Chem.RemoveHs(record.mol)) == Chem.MolToSmiles(Chem.RemoveHs(mol))
    assert record.mol.GetNumAtoms() == mol.GetNumAtoms()          # every hydrogen is explicit
    assert [a.GetSymbol() for a in record.mol.GetAtoms()] == [a.GetSymbol() for a in mol.GetAtoms()]


def test_round_trip_assignment_points_at_the_hydrogens(toluene):
    res, _, path = toluene
    record = read_nmredata(path)
    comp = res.comparison
    assigned = [g for g in comp.assignment if g.peak_index is not None]
    missing = [g for g in comp.assignment if g.peak_index is None]
    assert missing and assigned, "the invented list leaves the methyl group without a peak"
    assert [a.label for a in record.assignments] == [g.label for g in assigned]
    for a, g in zip(record.assignments, assigned):
        assert a.atoms == tuple(g.atoms)                            # 0-based in the record = file number − 1
        assert abs(a.shift_ppm - g.observed_ppm) <= ROUNDING
        for h in a.atoms:                                           # RDKit's reading of the file
            atom = record.mol.GetAtomWithIdx(h)
            assert atom.GetAtomicNum() == 1
            assert atom.GetNeighbors()[0].GetIdx() in g.parents
    # a group whose peak is missing is not written as assigned, and the file says so
    written = {h for a in record.assignments for h in a.atoms}
    assert not written & {h for g in missing for h in g.atoms}
    assert any(g.label in v and "not assigned" in v for v in record.comments.values() for g in missing)


def test_round_trip_signals(toluene):
    res, _, path = toluene
    record = read_nmredata(path)
    comp, pl = res.comparison, res.peaks
    sample = [(k, p) for k, p in enumerate(pl.peaks) if p.kind == "sample"]
    assert len(record.signals) == len(sample)
    for s, (k, p) in zip(record.signals, sample):
        assert abs(s.shift_ppm - p.shift_ppm) <= ROUNDING and s.range_ppm is None
        assert abs(s.integral - p.integral * comp.integral_scale) <= ROUNDING
        assert s.multiplicity == p.multiplicity
        groups = comp.peaks[k].groups
        assert s.labels == tuple(comp.assignment[g].label for g in groups)
        assert s.n_nuclei == (sum(comp.assignment[g].n_h for g in groups) if groups else None)
    assert any(not s.labels for s in record.signals), "the 5.30 ppm line is written as an unassigned signal"
    # the CDCl3 residual line is not a signal of the compound: left out of the 1D tag and named in a comment
    assert all(abs(s.shift_ppm - 7.26) > 0.01 for s in record.signals)
    assert any("7.2600" in v and "CDCl3" in v for v in record.comments.values())
    assert record.larmor_mhz == pytest.approx(400.13, abs=1e-9)
    assert (record.version, record.level, record.solvent) == ("1.1", 0, "CDCl3")
    assert record.temperature_K == pytest.approx(298.15, abs=0.005)
    assert record.comments["Comment"] == ESTIMATE_COMMENT


def test_tags_follow_the_format(toluene):
    _, _, path = toluene
    text = path.read_text()
    tags = re.findall(r"^>\s+<([^>]*)>", text, flags=re.M)
    assert max(len(line) for line in text.splitlines()) <= 200         # SD data-line limit (from memory)
    for name in ("NMREDATA_VERSION", "NMREDATA_LEVEL", "NMREDATA_ID", "NMREDATA_SOLVENT", "NMREDATA_TEMPERATURE",
                 "NMREDATA_ASSIGNMENT", "NMREDATA_1D_1H", "NMREDATA_SMILES", "NMREDATA_FORMULA"):
        assert name in tags
    assert all(re.fullmatch(r"[A-Za-z][A-Za-z0-9_]*", t) for t in tags)      # SD tag-name rule of the format
    # an independent reader of the SD part (RDKit) sees every tag as a data item of the one record
    supplier = Chem.SDMolSupplier(str(path), removeHs=False)
    mols = [m for m in supplier]
    assert len(mols) == 1 and set(tags) <= set(mols[0].GetPropNames())
    block = mols[0].GetProp("NMREDATA_1D_1H").split("\n")
    assert block[0].startswith("Larmor=") and block[1].startswith("Spectrum_Location=file:")
    for line in block:
        assert line.endswith("\\")                                  # item separator of version ≥ 1.1
    order = "SJNLE"
    for line in block[2:]:
        body = line.split(";")[0].rstrip(" \\")
        shift, *attrs = body.split(", ")
        assert re.fullmatch(r"-?\d+\.\d{4}", shift)                 # four decimals
        keys = [a.split("=")[0] for a in attrs if "=" in a]
        assert keys == sorted(keys, key=order.index)                # S=, J=, N=, L=, E= order
    for line in mols[0].GetProp("NMREDATA_ASSIGNMENT").split("\n"):
        label, shift, *atoms = line.rstrip("\\").split(", ")
        assert re.fullmatch(r"-?\d+\.\d{4}", shift)
        for n in atoms:                                             # 1-based numbers of H atoms of the block
            assert mols[0].GetAtomWithIdx(int(n) - 1).GetSymbol() == "H"


def test_several_groups_on_one_peak(tmp_path):
    # invented: naphthalene's two groups under one 8 H multiplet → one signal with two labels
    res, _ = _compare("c1ccc2ccccc2c1", "# observe_mhz = 500\nppm,integral,multiplicity\n7.62,8,m\n", tmp_path)
    record = parse_nmredata(nmredata_text(res), "naphthalene")
    assert [s.labels for s in record.signals] == [("H1", "H2")] and record.signals[0].n_nuclei == 8
    assert sorted(h for a in record.assignments for h in a.atoms) == sorted(
        h for g in res.comparison.assignment for h in g.atoms)


def test_solvent_from_flagged_line_and_override(tmp_path):
    res, _ = _compare("c1ccccc1", "# observe_mhz = 400\nppm,integral\n7.36,6\n", tmp_path)
    assert parse_nmredata(nmredata_text(res)).solvent == "unknown"
    record = parse_nmredata(nmredata_text(res, solvent="dmso", larmor_mhz=600.0))
    assert (record.solvent, record.larmor_mhz) == ("DMSO-d6", 600.0)


def test_unknown_frequency_is_refused(tmp_path):
    res, peaks = _compare("c1ccccc1", "ppm,integral\n7.36,6\n", tmp_path)
    with pytest.raises(InputError) as exc:
        nmredata_text(res)
    assert str(peaks) in str(exc.value) and "observe_mhz" in str(exc.value) and "\n" not in str(exc.value)


def test_writer_refuses_inputs_and_existing_files(toluene, tmp_path):
    res, peaks, path = toluene
    with pytest.raises(OutputError, match="input of this run"):
        write_nmredata(res, peaks, force=True)
    with pytest.raises(OutputError, match="force=True"):
        write_nmredata(res, path)
    with pytest.raises(InputError, match="CompareResult"):
        write_nmredata(res.prediction, tmp_path / "x.nmredata.sdf")


# ------------------------------------------------------------------------------------------ bad files
_MOLBLOCK = Chem.MolToMolBlock(Chem.AddHs(Chem.MolFromSmiles("C")))   # methane: atoms 1 (C), 2–5 (H)


def _sd(**tags) -> str:
    return _MOLBLOCK + "".join(f">  <{k}>\n{v}\n\n" for k, v in tags.items()) + "$$$$\n"


GOOD = {"NMREDATA_VERSION": "1.1\\", "NMREDATA_LEVEL": "0", "NMREDATA_ASSIGNMENT": "a, 0.2300, 2, 3, 4, 5\\",
        "NMREDATA_1D_1H": "Larmor=400\\\n0.2300, S=s, N=4, L=a, E=4.0000\\"}


def test_good_minimal_file(tmp_path):
    path = tmp_path / "methane.nmredata.sdf"
    path.write_text(_sd(**GOOD))
    record = read_nmredata(path)
    assert record.assignments[0].atoms == (1, 2, 3, 4) and record.signals[0].labels == ("a",)


@pytest.mark.parametrize("text,tag", [
    ("", "file"),
    ("not an SD file\n", "file"),
    (_sd(**{k: v for k, v in GOOD.items() if k != "NMREDATA_VERSION"}), "<NMREDATA_VERSION>"),
    (_sd(**{**GOOD, "NMREDATA_VERSION": "one"}), "<NMREDATA_VERSION>"),
    (_sd(**{**GOOD, "NMREDATA_LEVEL": "7"}), "<NMREDATA_LEVEL>"),
    (_sd(**{**GOOD, "NMREDATA_TEMPERATURE": "25 C"}), "<NMREDATA_TEMPERATURE>"),
    (_sd(**{**GOOD, "NMREDATA_ASSIGNMENT": "a, high, 2\\"}), "<NMREDATA_ASSIGNMENT>"),
    (_sd(**{**GOOD, "NMREDATA_ASSIGNMENT": "a, 0.23, 9\\"}), "<NMREDATA_ASSIGNMENT>"),
    (_sd(**{**GOOD, "NMREDATA_ASSIGNMENT": "a, 0.23\\"}), "<NMREDATA_ASSIGNMENT>"),
    (_sd(**{**GOOD, "NMREDATA_ASSIGNMENT": '<"a, 0.23, 2\\'}), "<NMREDATA_ASSIGNMENT>"),
    (_sd(**{**GOOD, "NMREDATA_ASSIGNMENT": "a, 0.23, H2\\"}), "<NMREDATA_ASSIGNMENT>"),
    (_sd(**{**GOOD, "NMREDATA_1D_1H": "0.2300, L=a\\"}), "<NMREDATA_1D_1H>"),
    (_sd(**{**GOOD, "NMREDATA_1D_1H": "Larmor=-400\\\n0.2300, L=a\\"}), "<NMREDATA_1D_1H>"),
    (_sd(**{**GOOD, "NMREDATA_1D_1H": "Larmor=400\\\nabout 0.2, L=a\\"}), "<NMREDATA_1D_1H>"),
    (_sd(**{**GOOD, "NMREDATA_1D_1H": "Larmor=400\\\n1e400, L=a\\"}), "<NMREDATA_1D_1H>"),
    (_sd(**{**GOOD, "NMREDATA_1D_1H": "Larmor=400\\\n0.2300, L=b\\"}), "<NMREDATA_1D_1H>"),
    (_sd(**{**GOOD, "NMREDATA_1D_1H": "Larmor=400\\\n0.2300, N=four, L=a\\"}), "<NMREDATA_1D_1H>"),
    (_sd(**{**GOOD, "NMREDATA_1D_1H": "Larmor=400\\\n0.2300, E=lots\\"}), "<NMREDATA_1D_1H>"),
], ids=["empty", "not-sd", "no-version", "bad-version", "bad-level", "temperature-not-kelvin",
        "shift-not-number", "atom-out-of-range", "no-atoms", "unclosed-quoted-label", "implicit-h-on-hydrogen",
        "no-larmor", "negative-larmor", "signal-shift-not-number", "signal-shift-infinite", "undefined-label",
        "n-not-integer",
        "integral-not-number"])
def test_bad_files_one_line_errors(tmp_path, text, tag):
    path = tmp_path / "bad.nmredata.sdf"
    path.write_text(text)
    with pytest.raises(InputError) as exc:
        read_nmredata(path)
    message = str(exc.value)
    assert "\n" not in message and str(path) in message
    if tag != "file":
        assert tag in message


# ------------------------------------------------------------------------------- property-based reading
_NMR_CHUNKS = ["\\", "\n", ", ", ",", ";", "=", "<\"", "\">", "L=", "S=", "N=", "E=", "Larmor=", "H", "-", "7.2600",
               "0", "99", "nan", "inf", "1e400", "$$$$", ">  <NMREDATA_1D_1H>", ">  <NMREDATA_ASSIGNMENT>",
               "Interchangeable=", "\x00", "δ"]


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_reader_fails_only_with_input_error(data):
    # random edits of a valid invented file: the reader returns a record or raises InputError, nothing else
    text = _sd(**GOOD)
    start = text.index(">  <")
    for _ in range(data.draw(st.integers(1, 5), label="n_edits")):
        i = data.draw(st.integers(start, len(text)), label="at")
        j = data.draw(st.integers(i, min(len(text), i + 12)), label="to")
        ins = data.draw(st.sampled_from(_NMR_CHUNKS) | st.text(max_size=4), label="ins")
        text = text[:i] + ins + text[j:]
    try:
        record = parse_nmredata(text, "fuzz.nmredata.sdf")
    except InputError as exc:
        assert "\n" not in str(exc)
        return
    for a in record.assignments:
        assert all(0 <= h < record.mol.GetNumAtoms() for h in a.atoms)
    for s in record.signals:
        assert math.isfinite(s.shift_ppm) and (s.integral is None or math.isfinite(s.integral))
    assert record.temperature_K is None or math.isfinite(record.temperature_K)
    assert record.larmor_mhz is None or math.isfinite(record.larmor_mhz)


def test_round_trip_18_annulene_inner_protons(tmp_path):
    # [18]annulene at slow exchange: 12 outer H at 9.28 ppm, 6 inner H at −2.99 ppm (Sondheimer's low-temperature
    # spectrum, from memory); the E/Z-anchored SMILES of DESIGN §6. The six H assigned to the upfield line must be
    # the ones inside the ring in the coordinates written to the file (geometry read back by RDKit).
    smiles = "[H]/C1=C/C=C/C=C/C=C\\C=C\\C=C\\C=C/C=C/C=C1\\[H]"
    res, _ = _compare(smiles, "# observe_mhz = 400\nppm,integral\n9.28,12\n-2.99,6\n", tmp_path, conformers=20)
    record = parse_nmredata(nmredata_text(res), "annulene")
    assert Chem.MolToSmiles(Chem.RemoveHs(record.mol)) == Chem.MolToSmiles(Chem.RemoveHs(res.prediction.structure.mol))
    pos = record.mol.GetConformer().GetPositions()
    carbons = [a.GetIdx() for a in record.mol.GetAtoms() if a.GetAtomicNum() == 6]
    centre = pos[carbons].mean(axis=0)
    ring_radius = float(np.mean(np.linalg.norm(pos[carbons] - centre, axis=1)))
    by_shift = sorted(record.assignments, key=lambda a: a.shift_ppm)
    assert [len(a.atoms) for a in by_shift] == [6, 12]
    inner = np.linalg.norm(pos[list(by_shift[0].atoms)] - centre, axis=1)
    outer = np.linalg.norm(pos[list(by_shift[1].atoms)] - centre, axis=1)
    assert inner.max() < ring_radius < outer.min()


def test_long_items_are_wrapped_and_rejoined():
    # a version-1.1 reader drops bare line ends inside a tag (NMReDATA "End-of-line" page), so a long item
    # broken into physical lines of at most 200 characters reads back whole
    from ringshift.io.nmredata import _tag

    comment = "Comment=" + " ".join(f"word{i}" for i in range(120))
    text = _sd(**GOOD).replace("$$$$\n", _tag("NMREDATA_ID", [comment, "Title=x"]) + "$$$$\n")
    assert max(len(line) for line in text.splitlines()) <= 200
    record = parse_nmredata(text, "long")
    assert "Comment=" + record.comments["Comment"] == comment and record.comments["Title"] == "x"
