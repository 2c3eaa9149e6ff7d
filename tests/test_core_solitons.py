"""One-solitons carried by every scheme, against the exact travelling wave."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import periodic_soliton

import kdvsweep as kv

# (scheme, dt, max-norm tolerance over 20 time units). n and dt chosen by a convergence run:
# the error of the 4th-order schemes is time-step limited (n = 512 resolves kappa = 1 to ~1e-12).
KDV_CASES = [("etdrk4", 2.5e-4, 1e-8), ("ifrk4", 2.5e-4, 1e-8)]


@pytest.mark.parametrize(("scheme", "dt", "tol"), KDV_CASES)
def test_kdv_soliton_20_time_units(scheme: str, dt: float, tol: float) -> None:
    # Exact KdV soliton 2 k^2 sech^2(k(x - 4 k^2 t)) with k = 1 (Korteweg & de Vries 1895).
    grid = kv.Grid(512, 40.0)
    sim = kv.Simulation(grid, kv.Equation.kdv(), scheme=scheme, dt=dt)
    sim.set_state(periodic_soliton(grid, 0.0, 1.0, -5.0))
    sim.advance(20.0)
    err = np.max(np.abs(sim.state - periodic_soliton(grid, 20.0, 1.0, -5.0)))
    assert sim.time == pytest.approx(20.0, abs=1e-12)
    assert err < tol


@pytest.mark.parametrize(("scheme", "dt"), [("etdrk4", 5e-4), ("ifrk4", 2.5e-4)])
def test_mkdv_soliton_20_time_units(scheme: str, dt: float) -> None:
    # Exact focusing-mKdV soliton 2k sech(2k(x - 4k^2 t)), k = 0.5 (Wadati 1973, J. Phys. Soc.
    # Japan 34, 1289 [memory]).
    grid = kv.Grid(1024, 40.0)
    sim = kv.Simulation(grid, kv.Equation.mkdv(), scheme=scheme, dt=dt)
    sim.set_state(periodic_soliton(grid, 0.0, 0.5, -5.0, "mkdv"))
    sim.advance(20.0)
    err = np.max(np.abs(sim.state - periodic_soliton(grid, 20.0, 0.5, -5.0, "mkdv")))
    assert err < 1e-8


def test_schrodinger_sign_kdv_trough() -> None:
    # u_t - 6 u u_x + u_xxx = 0 carries -2k^2 sech^2(k(x - 4k^2 t)): u -> -u of the KdV soliton
    # (Korteweg & de Vries 1895).
    grid = kv.Grid(512, 40.0)
    sim = kv.Simulation(grid, kv.Equation.kdv(sign=-1), scheme="etdrk4", dt=5e-4)
    sim.set_state(-periodic_soliton(grid, 0.0, 1.0, 0.0))
    sim.advance(2.0)
    assert np.max(np.abs(sim.state + periodic_soliton(grid, 2.0, 1.0, 0.0))) < 1e-8


def test_exact_module_matches_independent_formula() -> None:
    # The core's Hirota evaluation for N = 1 against the sech^2 / sech closed forms in numpy.
    grid = kv.Grid(256, 40.0)
    x = grid.x
    np.testing.assert_allclose(
        kv.exact.soliton(x, 0.7, 1.1, -3.0),
        2 * 1.1**2 / np.cosh(1.1 * (x - 4 * 1.21 * 0.7 + 3.0)) ** 2,
        rtol=0,
        atol=1e-14,
    )
    np.testing.assert_allclose(
        kv.exact.soliton(x, 0.7, 0.8, 2.0, equation="mkdv", sign=-1),
        -1.6 / np.cosh(1.6 * (x - 4 * 0.64 * 0.7 - 2.0)),
        rtol=0,
        atol=1e-14,
    )
