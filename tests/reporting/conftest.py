"""Shared fixtures of the report tests: an exact benzene hexagon, naphthalene with an invented peak list, hexane.

Package-scoped, so the report modules share one prediction, comparison and report folder each.
"""

from __future__ import annotations

import math
import shutil
import tempfile
from pathlib import Path

import numpy as np
import pytest

from ringshift.comparison.run import run_compare
from ringshift.io.peak_tables import read_peaks
from ringshift.io.structures import load_structure
from ringshift.reporting import write_report
from ringshift.shifts.prediction import predict

R_CC = 1.39   # regular-hexagon circumradius used for the exact benzene geometry, Å
R_CH = 2.47   # C–H 1.08 Å outward


@pytest.fixture(scope="package")
def tmp_module():
    d = Path(tempfile.mkdtemp(prefix="ringshift_report_test_"))
    yield d
    shutil.rmtree(d, ignore_errors=True)


@pytest.fixture(scope="package")
def hexagon_file(tmp_module):
    """Benzene as an exact regular hexagon in the xy plane, as an XYZ file (constructed geometry)."""
    ang = np.arange(6) * np.pi / 3
    lines = ["12", "regular hexagon benzene (constructed)"]
    lines += [f"C {R_CC * math.cos(a):.10f} {R_CC * math.sin(a):.10f} 0.0" for a in ang]
    lines += [f"H {R_CH * math.cos(a):.10f} {R_CH * math.sin(a):.10f} 0.0" for a in ang]
    path = tmp_module / "hexagon.xyz"
    path.write_text("\n".join(lines) + "\n")
    return str(path)


@pytest.fixture(scope="package")
def hexagon(hexagon_file):
    """The regular-hexagon benzene with J = 12 nA/T set outright, polygon loops (the maps draw polygons)."""
    return predict(load_structure(hexagon_file, charge=0), model="polygon", set_current={"R1": 12.0})


@pytest.fixture(scope="package")
def naphthalene():
    return predict(load_structure("c1ccc2ccccc2c1"))


@pytest.fixture(scope="package")
def comparison(naphthalene, tmp_module):
    # invented peak list: two aromatic multiplets, CDCl3, TMS and one unexplained peak
    path = tmp_module / "invented_naphthalene.csv"
    path.write_text("shift_ppm,integral\n7.84,4\n7.47,4\n7.26,0.4\n5.30,1\n0.00,0.5\n")
    pl = read_peaks(str(path), n_hydrogens=len(naphthalene.protons), solvent="CDCl3")
    return run_compare(naphthalene, pl, claim="aromatic")


@pytest.fixture(scope="package")
def hexane():
    return predict(load_structure("CCCCCC", conformers=3))


@pytest.fixture(scope="package")
def report(comparison, tmp_module):
    out = tmp_module / "report_naphthalene"
    paths = write_report(out, comparison.prediction, compare_result=comparison)
    return out, paths
