"""Order of accuracy and conservation through a 2-soliton collision.

Reference: the exact Hirota (1971) 2-soliton of u_t + 6 u u_x + u_xxx = 0, tau = 1 + e^eta1 + e^eta2
+ A12 e^(eta1 + eta2), A12 = ((k1 - k2)/(k1 + k2))^2 (Hirota 1971, Phys. Rev. Lett. 27, 1192
[memory]). On L = 80 the solitons' tails at the boundary are below 1e-16, so the periodic run and
the solution on the line agree to round-off.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

import kdvsweep as kv

KAPPAS = (1.0, 0.6)
X0S = (0.0, 0.0)
T0, T1 = -2.0, 2.0  # the collision happens at t = 0, in the middle of the run
GRID = kv.Grid(1024, 80.0)
DTS = np.array([2e-3, 1e-3, 5e-4, 2.5e-4])


def _run(scheme: str, dt: float, **kw: float) -> tuple[float, dict[str, float], int]:
    sim = kv.Simulation(GRID, kv.Equation.kdv(), scheme=scheme, dt=dt, **kw)
    u0 = kv.exact.multisoliton(GRID.x, T0, KAPPAS, X0S)
    sim.set_state(u0, time=T0)
    start = sim.invariants()
    sim.advance(T1 - T0)
    err = float(np.max(np.abs(sim.state - kv.exact.multisoliton(GRID.x, T1, KAPPAS, X0S))))
    end = sim.invariants()
    drift = {key: abs(end[key] - start[key]) / abs(start[key]) for key in start}
    return err, drift, sim.steps


def _order(dts: np.ndarray, errors: np.ndarray) -> np.ndarray:
    """Observed orders between successive step sizes."""
    return np.log(errors[:-1] / errors[1:]) / np.log(dts[:-1] / dts[1:])


Runs = dict[str, list[tuple[float, dict[str, float], int]]]


@pytest.fixture(scope="module")
def runs() -> Runs:
    return {scheme: [_run(scheme, dt) for dt in DTS] for scheme in ("etdrk4", "ifrk4", "strang")}


@pytest.mark.parametrize(
    ("scheme", "low", "high"), [("etdrk4", 3.5, 5.0), ("ifrk4", 3.5, 5.0), ("strang", 1.8, 2.4)]
)
def test_error_falls_at_scheme_order(runs: Runs, scheme: str, low: float, high: float) -> None:
    # Formal orders: ETDRK4 4 (Cox & Matthews 2002), IFRK4 4 (classical RK4), Strang 2 (Strang 1968).
    errors = np.array([r[0] for r in runs[scheme]])
    orders = _order(DTS, errors)
    assert np.all((orders > low) & (orders < high)), f"{scheme}: errors {errors}, orders {orders}"


@pytest.mark.parametrize(("scheme", "order"), [("etdrk4", 4), ("ifrk4", 4), ("strang", 2)])
def test_invariants_conserved(runs: Runs, scheme: str, order: int) -> None:
    # Mass int u, momentum int u^2 and energy int (u^3 - u_x^2/2) are conserved by KdV
    # (Miura, Gardner & Kruskal 1968). Mass is conserved exactly by every scheme (the k = 0 mode
    # never changes), so its drift is round-off; the others fall at the scheme's order.
    drifts = {
        key: np.array([r[1][key] for r in runs[scheme]]) for key in ("mass", "momentum", "energy")
    }
    assert np.all(drifts["mass"] < 1e-13)
    for key in ("momentum", "energy"):
        fitted = np.polyfit(np.log(DTS), np.log(drifts[key]), 1)[0]
        assert fitted > order - 0.5, f"{scheme} {key}: drifts {drifts[key]}, fitted order {fitted}"
    if order == 4:
        assert drifts["momentum"][-1] < 1e-10
        assert drifts["energy"][-1] < 1e-10


def test_adaptive_meets_tolerance_with_fewer_steps(runs: Runs) -> None:
    # The adaptive IF-RK4(3) against its own fixed-step member: for the error the adaptive run
    # reaches, the fixed step needs more steps (common practice, no source: the controller takes
    # long steps where the solution is slow, e.g. while the solitons overlap).
    err_a, _, steps_a = _run("adaptive", 1e-3, tol=1e-9)
    assert err_a < 1e-6
    fixed = sorted((steps, err) for err, _, steps in runs["ifrk4"])
    steps_f = _steps_for_error(fixed, err_a)
    assert steps_a < steps_f, f"adaptive {steps_a} steps (error {err_a:.2e}); fixed {fixed}"


def _steps_for_error(fixed: list[tuple[int, float]], target: float) -> float:
    """Steps a fixed-step run needs for `target`, interpolated log-log between measured runs."""
    for (n1, e1), (n2, e2) in itertools.pairwise(fixed):
        if e2 <= target <= e1:
            slope = np.log(e2 / e1) / np.log(n2 / n1)
            return float(n1 * (target / e1) ** (1 / slope))
    raise AssertionError(f"target error {target:.2e} outside the fixed-step runs {fixed}")
