"""XYZ input that the model would misread gets no confident number: wrong units, a charge that was not given
(odd electron counts, the shape of an ion), and trajectory frames with a broken bond.

Outside references: the bohr radius 0.529177210903 Å (CODATA 2018 via scipy.constants); benzene C–C 1.39–1.40 Å
and C–H 1.09 Å (CRC Handbook of Chemistry and Physics, bond lengths; from memory); neutral cyclooctatetraene
alternates 1.33/1.47 Å (Traetteberg, Acta Chem. Scand. 1966, 20, 1724; from memory) while the planar
C8H8²⁻ dianion has equal bonds near 1.40–1.41 Å (from memory); covalent radii from RDKit's periodic table
(Cordero et al., Dalton Trans. 2008, 2832). All geometries are synthetic (invented) rings.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import constants

import ringshift as rs
from ringshift.errors import InputError
from ringshift.io.frames import TrajectoryWarning
from ringshift.io.structures import load_structure
from ringshift.runners.trajectory import predict_trajectory, predict_trajectory_file
from tests.pi.chem_builders import annulene_ring, xyz_text

BOHR_A = constants.physical_constants["Bohr radius"][0] * 1e10


def _write(tmp_path, name, sym, xyz):
    path = tmp_path / name
    path.write_text(xyz_text(sym, xyz, "synthetic (invented geometry)"))
    return str(path)


BENZENE = annulene_ring(6, lengths_A=[1.397] * 6)

UNITS = [
    # (id, factor from Å to the file's unit, the unit the message must name)
    ("bohr", 1.0 / BOHR_A, "bohr"),      # C–C 2.64 bohr
    ("pm", 100.0, "pm"),                 # C–C 139.7 pm
    ("nm", 0.1, "nm"),                   # C–C 0.1397 nm
]


@pytest.mark.parametrize("factor,unit", [c[1:] for c in UNITS], ids=[c[0] for c in UNITS])
def test_wrong_units_are_named_not_the_charge(tmp_path, factor, unit):
    sym, xyz = BENZENE
    path = _write(tmp_path, f"benzene_{unit}.xyz", sym, xyz * factor)
    with pytest.raises(InputError, match=f"coordinates look like {unit}, expected Å") as info:
        load_structure(path)
    assert "charge" not in str(info.value)
    with pytest.raises(InputError, match=f"look like {unit}"):   # the trajectory reader says the same
        predict_trajectory_file(path)


def test_angstrom_benzene_is_accepted(tmp_path):
    sym, xyz = BENZENE
    s = load_structure(_write(tmp_path, "benzene.xyz", sym, xyz))
    assert s.charge == 0 and s.coords.shape == (1, 12, 3)


CHARGE = [
    # (id, ring size, C–C lengths, charge given, expected: "refuse" with a regex, or the accepted net charge)
    ("cot-dianion-shape-no-charge", 8, [1.405] * 8, None, "equal C–C bonds.*give the net charge"),
    ("cot-dianion-shape-charge-2", 8, [1.405] * 8, -2, -2),
    ("cot-dianion-shape-charge-0", 8, [1.405] * 8, 0, 0),
    ("cot-alternating-neutral", 8, [1.34, 1.47] * 4, None, 0),
    ("cyclobutadiene-square-no-charge", 4, [1.45] * 4, None, "equal C–C bonds"),
    ("cyclopentadienyl-no-charge", 5, [1.40] * 5, None, "odd number.*give its net charge"),
    ("cyclopentadienide-charge-1", 5, [1.40] * 5, -1, -1),
    ("tropylium-no-charge", 7, [1.40] * 7, None, "odd number"),
    ("benzene-no-charge", 6, [1.397] * 6, None, 0),
]


@pytest.mark.parametrize("n,lengths,charge,want", [c[1:] for c in CHARGE], ids=[c[0] for c in CHARGE])
def test_charge_sanity(tmp_path, n, lengths, charge, want):
    sym, xyz = annulene_ring(n, lengths_A=lengths)
    path = _write(tmp_path, f"ring{n}.xyz", sym, xyz)
    if isinstance(want, str):
        with pytest.raises(InputError, match=want) as info:
            load_structure(path, charge=charge)
        assert info.value.parameter == "charge"     # the CLI names --charge from this
    else:
        assert load_structure(path, charge=charge).charge == want


def test_cot_dianion_shape_gets_no_silent_paratropic_number(tmp_path):
    # the measured complaint: read as neutral COT the equal-bond ring got -14 nA/T with no warning
    sym, xyz = annulene_ring(8, lengths_A=[1.405] * 8)
    path = _write(tmp_path, "cot2m.xyz", sym, xyz)
    with pytest.raises(InputError, match="C₈H₈²⁻"):
        rs.predict(path)
    pred = rs.predict(path, charge=-2)
    (c,) = pred.circuits
    assert c.pi_electrons == 10 and c.current_nA_per_T > 0   # 10π (4n+2): diatropic (Hückel rule)


# ------------------------------------------------------------------------------------ trajectory frames
def _trajectory(tmp_path, broken_frame: int | None, n_frames: int = 4):
    sym, xyz = BENZENE
    rng = np.random.default_rng(0)
    text = ""
    frames = []
    for k in range(1, n_frames + 1):
        x = xyz + rng.normal(0, 0.01, xyz.shape)      # invented thermal noise, 0.01 Å
        if k == broken_frame:
            c, h = 0, 6                                 # atom 6 is the H on carbon 0
            u = (x[h] - x[c]) / np.linalg.norm(x[h] - x[c])
            x[h] = x[c] + 2.6 * u                       # C–H 2.6 Å: broken
        frames.append(x)
        text += xyz_text(sym, x, f"frame {k}")
    path = tmp_path / "traj.xyz"
    path.write_text(text)
    return str(path), np.stack(frames)


@pytest.mark.parametrize("broken", [2, 4], ids=["broken-frame-2", "broken-last-frame"])
def test_frame_with_broken_bond_is_skipped_and_named(tmp_path, broken):
    path, frames = _trajectory(tmp_path, broken)
    with pytest.warns(TrajectoryWarning, match=f"frame {broken}: bond C0–H6 .* 2.60 Å long"):
        res = predict_trajectory_file(path, currents="benzene")
    kept = [k for k in range(1, 5) if k != broken]
    assert list(res.frame_numbers) == kept
    assert any("broken bond" in w for w in res.warnings)
    # the average is that of the intact frames alone (the broken one is not averaged in)
    sym = BENZENE[0]
    intact = tmp_path / "intact.xyz"
    intact.write_text("".join(xyz_text(sym, frames[k - 1], f"frame {k}") for k in kept))
    with warnings.catch_warnings():
        warnings.simplefilter("error", TrajectoryWarning)      # the intact file has nothing to skip
        alone = predict_trajectory_file(str(intact), currents="benzene")
    # the same text of the same frames: identical to round-off (1e-12 ppm)
    np.testing.assert_allclose(res.ring_current_ppm, alone.ring_current_ppm, rtol=0, atol=1e-12)


def test_frame_with_broken_bond_strict_is_an_error(tmp_path):
    path, _ = _trajectory(tmp_path, 3)
    with pytest.raises(InputError, match="frame 3: bond C0–H6"):
        predict_trajectory_file(path, currents="benzene", strict=True)


def test_in_memory_frames_with_broken_bond_are_skipped(tmp_path):
    path, frames = _trajectory(tmp_path, 3)
    with pytest.warns(TrajectoryWarning, match="frame 2: bond"):
        res = predict_trajectory(load_structure(path), frames[1:], currents="benzene")   # frames 2..4 of a 3-stack
    assert list(res.frame_numbers) == [1, 3]


# ------------------------------------------------------------------------------ stereo and bond perception
STEREO_XYZ = [
    # (id, SMILES of the invented reference geometry): a stereocentre and a ring stereocentre, both enantiomers
    ("chfclbr-r", "F[C@H](Cl)Br"),
    ("chfclbr-s", "F[C@@H](Cl)Br"),
    ("methylcyclohexene-r", "C[C@@H]1CCCC=C1"),
]


@pytest.mark.parametrize("smiles", [c[1] for c in STEREO_XYZ], ids=[c[0] for c in STEREO_XYZ])
def test_xyz_stereocentres_come_from_the_coordinates(tmp_path, smiles):
    # XYZ bonds are perceived without RDKit's full sanitisation (no aromaticity search, which ran for minutes on
    # large graphene flakes holding the GIL); the stereocentres must still come from the 3D coordinates.
    # Reference: RDKit's CIP labels of the embedded input molecule (Chem.FindMolChiralCenters).
    from rdkit import Chem
    from rdkit.Chem import AllChem

    ref = Chem.AddHs(Chem.MolFromSmiles(smiles))
    AllChem.EmbedMolecule(ref, randomSeed=7)
    sym = [a.GetSymbol() for a in ref.GetAtoms()]
    path = _write(tmp_path, "stereo.xyz", sym, ref.GetConformer().GetPositions())
    got = load_structure(path).mol
    Chem.AssignStereochemistryFrom3D(ref)
    assert Chem.FindMolChiralCenters(got, useLegacyImplementation=False) == \
        Chem.FindMolChiralCenters(ref, useLegacyImplementation=False)
