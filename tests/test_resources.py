"""Resource limits: bounded peak memory of the blocked kernels on large inputs, refusal before the work
when the estimate is over the limit, and the progress line (terminal only).

Peak memory is measured with tracemalloc (numpy reports its buffers to it). The unblocked sizes quoted
beside each bound are what the former one-shot code allocated for a single temporary."""

from __future__ import annotations

import io
import tracemalloc

import numpy as np
import pytest

from ringshift import api, fields, limits
from ringshift.errors import InputError
from ringshift.pi import huckel as hk
from ringshift.reporting import maps


def _acene(rings: int):
    """Bonds (m, 2) of a linear acene of ``rings`` fused hexagons (4·rings + 2 carbons): two rails joined by
    rungs every other atom. A synthetic (invented) topology; only the graph matters for Hückel."""
    n_rail = 2 * rings + 1
    top = [(k, k + 1) for k in range(n_rail - 1)]
    bottom = [(n_rail + k, n_rail + k + 1) for k in range(n_rail - 1)]
    rungs = [(k, n_rail + k) for k in range(0, n_rail, 2)]
    return 2 * n_rail, np.array(top + bottom + rungs)


def _pol_of(n, bonds, resonance):
    e, c = np.linalg.eigh(hk.huckel_matrix(np.zeros(n), bonds, resonance))
    occ = hk.occupy(e, n)[0]
    return c, e, occ


def _peak_MB(fn) -> tuple[object, float]:
    tracemalloc.start()
    try:
        out = fn()
        return out, tracemalloc.get_traced_memory()[1] / 2**20
    finally:
        tracemalloc.stop()


def _case_polarizability(monkeypatch):
    n, bonds = _acene(60)                    # 242 π atoms, 301 bonds
    c, e, occ = _pol_of(n, bonds, np.ones(len(bonds)))
    monkeypatch.setattr(hk, "_POL_BLOCK_ELEMENTS", 1 << 16)
    # unblocked: one (301, 121·121) temporary = 35 MB, and four of them alive at once
    return lambda: hk.bond_polarizability(c, e, occ, bonds), 8.0


def _case_polygon(monkeypatch):
    rng = np.random.default_rng(7)           # synthetic points around a hexagon
    pts = rng.uniform(-8.0, 8.0, (200_000, 3))
    ang = np.arange(6) * np.pi / 3
    hexagon = 1.39 * np.column_stack([np.cos(ang), np.sin(ang), np.zeros(6)])
    # O(points) part: the points of both lobes (9.6 MB) and the result (1.6 MB); the blocked temporaries add
    # ~0.5 MB each, where the unblocked kernel held (7, 400 000) arrays of 22 MB each
    return lambda: fields.polygon_shielding(pts, hexagon, [0.0, 0.0, 1.0]), 20.0


def _case_map(monkeypatch):
    pred = api.predict("c1ccc2ccccc2c1")     # naphthalene
    # unblocked: the (361 201, 6, 3) wire-distance temporaries were 52 MB each; 601² grid, 8.7 MB of points
    return lambda: maps.shielding_map(pred, plane="perpendicular", grid=601), 48.0


@pytest.mark.filterwarnings("ignore::ringshift.errors.GeometryWarning")  # random points may touch a wire
@pytest.mark.parametrize("case", [_case_polarizability, _case_polygon, _case_map],
                         ids=["bond-polarisability-242-pi-atoms", "polygon-kernel-2e5-points", "map-601x601-grid"])
def test_blocked_kernel_peak_is_bounded(case, monkeypatch):
    fn, bound_MB = case(monkeypatch)
    _, peak = _peak_MB(fn)
    assert peak < bound_MB, f"peak {peak:.1f} MB over the {bound_MB} MB bound"


def test_blocked_polarizability_is_the_derivative_of_bond_orders(monkeypatch):
    # π_bc = ∂p_b/∂(β_c/β0) (Coulson & Longuet-Higgins, Proc. R. Soc. A 1947, 191, 39): check the blocked sum
    # against a central finite difference of the Coulson bond orders on a 10-ring acene (synthetic).
    n, bonds = _acene(10)
    res = 1.0 + 0.05 * np.cos(np.arange(len(bonds)))      # invented, non-uniform β so no symmetry hides errors
    c, e, occ = _pol_of(n, bonds, res)
    monkeypatch.setattr(hk, "_POL_BLOCK_ELEMENTS", 64)    # many blocks
    pol = hk.bond_polarizability(c, e, occ, bonds)
    h = 1e-5
    for col in (0, 7, len(bonds) - 1):
        orders = []
        for s in (+h, -h):
            r = res.copy()
            r[col] += s
            cc, _, oo = _pol_of(n, bonds, r)
            p = hk.density_matrix(cc, oo)
            orders.append(p[bonds[:, 0], bonds[:, 1]])
        fd = (orders[0] - orders[1]) / (2 * h)
        # central difference error O(h²) ≈ 1e-10; rounding of 1e-16/1e-5: tolerance 1e-7 (common practice)
        np.testing.assert_allclose(pol[:, col], fd, atol=1e-7)


def _forbid(monkeypatch):
    def boom(*a, **k):
        raise AssertionError("the heavy step ran although the estimate is over the limit")
    monkeypatch.setattr("ringshift.shifts.prediction.huckel_london_currents", boom)
    monkeypatch.setattr("ringshift.reporting.maps.loop_shift_ppm", boom)


@pytest.mark.parametrize("env, value, call, expect", [
    ("RINGSHIFT_MEMORY_MB", "131", lambda: api.predict("c1ccc2cc3ccccc3cc2c1"), "RINGSHIFT_MEMORY_MB=MB"),
    ("RINGSHIFT_TIME_LIMIT_S", "1", lambda: api.predict("c1ccc2cc3ccccc3cc2c1"), "RINGSHIFT_TIME_LIMIT_S=SECONDS"),
    ("RINGSHIFT_MEMORY_MB", "140", None, "RINGSHIFT_MEMORY_MB=MB"),
    ("RINGSHIFT_MEMORY_MB", "lots", lambda: api.predict("c1ccccc1"), "RINGSHIFT_MEMORY_MB='lots'; expected a number"),
], ids=["predict-over-memory", "predict-over-time", "map-601-grid-over-memory", "limit-not-a-number"])
def test_over_limit_is_refused_before_the_work(env, value, call, expect, monkeypatch):
    if call is None:
        pred = api.predict("c1ccc2ccccc2c1")
        def call():
            return maps.shielding_map(pred, grid=601)
    monkeypatch.setenv(env, value)
    _forbid(monkeypatch)
    with pytest.raises(InputError) as err:
        call()
    msg = str(err.value)
    assert expect in msg and "\n" not in msg


class _Tty(io.StringIO):
    def __init__(self, tty: bool) -> None:
        super().__init__()
        self.tty = tty

    def isatty(self) -> bool:
        return self.tty


@pytest.mark.parametrize("tty, seconds, shown", [(True, 60.0, True), (False, 60.0, False), (True, 0.5, False)],
                         ids=["terminal-long-step", "not-a-terminal", "terminal-short-step"])
def test_progress_line_only_on_a_terminal_for_long_steps(tty, seconds, shown):
    import threading
    stream = _Tty(tty)
    with limits.progress("step", limits.Estimate(100.0, seconds, "x"), stream=stream):
        threading.Event().wait(1.3)       # long enough for one tick of the 1 s progress clock
    assert ("ringshift: step (x)" in stream.getvalue()) is shown
