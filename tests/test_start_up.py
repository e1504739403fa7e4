"""Constants written as literals for start-up speed are recomputed here from their sources (issue 16)."""

from __future__ import annotations

import math
import subprocess
import sys

import pytest
from scipy import constants as sc

import ringshift.constants as c
from ringshift.pi import bond_lengths
from ringshift.pi.parameters import POLYACETYLENE_BLA_A


@pytest.mark.parametrize(("ours", "ref"), [
    (c.ELEMENTARY_CHARGE_C, sc.e), (c.HBAR_J_S, sc.hbar), (c.AVOGADRO_PER_MOL, sc.N_A),
    (c.GAS_CONSTANT_J_PER_MOL_K, sc.R), (c.MU0_T_M_PER_A, sc.mu_0),
    (c.HARTREE_J, sc.physical_constants["Hartree energy"][0]),
], ids=["e", "hbar", "N_A", "R", "mu_0", "E_h"])
def test_codata_literals_equal_scipy_constants(ours, ref):
    # outside reference: scipy.constants (CODATA). 1e-8 relative admits the next CODATA revision of the two
    # measured values (mu_0 moved by 7e-10 relative from 2018 to 2022); the others are exact in the SI
    assert ours == pytest.approx(ref, rel=1e-8)


def test_calibrated_bond_length_line_recomputes():
    # the literal S and R0 are what calibrate_chain_slope gives for benzene 1.397 A and BLA 0.08 A
    s, r0 = bond_lengths.calibrate_chain_slope(POLYACETYLENE_BLA_A)
    assert (bond_lengths.SCF_SLOPE_A, bond_lengths.SCF_R0_A) == pytest.approx((s, r0), abs=1e-10)


def test_the_prediction_path_imports_no_optimizer_sparse_graph_kd_tree_or_special():
    # start-up: predict of a small molecule must not pay for scipy.optimize, scipy.sparse or scipy.spatial
    code = ("import sys, ringshift.cli, ringshift.io.structures, ringshift.shifts.prediction, ringshift.fields, "
            "ringshift.reporting.text; print(sorted(m for m in ('scipy.optimize', 'scipy.sparse', 'scipy.spatial') "
            "if m in sys.modules), 'scipy.special' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.stdout.strip() == "[] False", out.stdout + out.stderr


def test_elliptic_integrals_match_scipy():
    # outside reference: scipy.special.ellipk / ellipe (Cephes); the AGM of Abramowitz & Stegun 17.6
    import numpy as np
    from scipy.special import ellipe, ellipk

    from ringshift.fields.elliptic import ellipk_ellipe

    m = np.concatenate([np.linspace(0.0, 0.99, 199), 1.0 - np.logspace(-2, -16, 57)])
    k, e = ellipk_ellipe(m)
    assert np.allclose(k, ellipk(m), rtol=1e-13, atol=0.0)
    assert np.allclose(e, ellipe(m), rtol=1e-13, atol=0.0)
    assert ellipk_ellipe(np.zeros((2, 3)))[0].shape == (2, 3)


def test_multipole_coefficients_match_scipy_binomial():
    # outside reference: scipy.special.binom for the generalised binomial C(-3/2, k)
    from scipy.special import binom

    from ringshift.fields.circular import _binom_minus_three_halves

    assert [_binom_minus_three_halves(k) for k in range(8)] == pytest.approx([binom(-1.5, k) for k in range(8)],
                                                                             rel=1e-14)


def test_benzene_reference_response_literals_recompute():
    # the literal per beta model equals the benzene Hückel-London response computed from the model itself;
    # 1e-12 relative admits a different BLAS/LAPACK rounding of the same computation (common practice, no source)
    from ringshift.constants import BETA_MODELS
    from ringshift.pi.london import BENZENE_RESPONSE_A2, benzene_reference_response, benzene_reference_response_computed

    assert set(BENZENE_RESPONSE_A2) == set(BETA_MODELS)
    for model in BETA_MODELS:
        assert benzene_reference_response(model) == BENZENE_RESPONSE_A2[model]
        assert BENZENE_RESPONSE_A2[model] == pytest.approx(benzene_reference_response_computed(model), rel=1e-12)


#: Modules the predict-from-a-file path must not load (each cost 3-40 ms at start-up, measured for issue 16).
NOT_ON_PREDICT_PATH = ("matplotlib", "scipy", "pandas", "numpy.ma", "numpy.polynomial", "ringshift.comparison",
                       "ringshift.comparison.records", "ringshift.comparison.evidence", "ringshift.reporting.html",
                       "ringshift.reporting.correlations", "ringshift.reporting.pi_summary",
                       "ringshift.geometry.conformers", "rdkit.Chem.rdDistGeom", "rdkit.Chem.rdForceFieldHelpers",
                       "ringshift.runners", "json", "html", "secrets", "shutil", "importlib.resources")


def test_predict_from_xyz_loads_no_module_it_does_not_use(tmp_path):
    # the whole command in a fresh process (text output of a benzene XYZ), then a look at sys.modules
    xyz = tmp_path / "benzene.xyz"
    xyz.write_text("12\nbenzene (idealised D6h, C-C 1.397 A, C-H 1.084 A)\n" + "".join(
        f"{e} {x:.6f} {y:.6f} 0.0\n" for e, r in (("C", 1.397), ("H", 2.481))
        for x, y in ((r * math.sin(k * math.pi / 3), r * math.cos(k * math.pi / 3)) for k in range(6))))
    code = ("import sys, io, contextlib\n"
            "from ringshift._entry import main\n"
            "out = io.StringIO()\n"
            "with contextlib.redirect_stdout(out):\n"
            "    try:\n"
            "        main(['predict', sys.argv[1]])\n"
            "    except SystemExit as e:\n"
            "        assert e.code == 0, e.code\n"
            "assert 'H1' in out.getvalue(), out.getvalue()\n"
            f"print(sorted(m for m in {NOT_ON_PREDICT_PATH!r} if m in sys.modules))\n")
    out = subprocess.run([sys.executable, "-c", code, str(xyz)], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip().splitlines()[-1] == "[]", out.stdout + out.stderr


def test_import_ringshift_stays_light_and_the_api_still_works():
    # a notebook user: import ringshift loads no NumPy, RDKit or CLI; ringshift.predict then works
    code = ("import sys, ringshift\n"
            "print(sorted(m for m in ('numpy', 'rdkit', 'click', 'scipy', 'ringshift.cli') if m in sys.modules))\n"
            "p = ringshift.predict('c1ccccc1', conformers=1)\n"
            "print(len(p.groups))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stderr
    assert out.stdout.split() == ["[]", "1"], out.stdout + out.stderr
