"""Constants written as literals for start-up speed are recomputed here from their sources (issue 16)."""

from __future__ import annotations

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
