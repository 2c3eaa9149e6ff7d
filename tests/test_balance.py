"""Balance laws of mass, momentum and energy under damping and viscosity (runner.balance).

KdV ``u_t + 6 u u_x + u_xxx = -g u + v u_xx`` on a periodic box, a soliton
``2 kappa^2 sech^2(kappa (x - x0))`` (Korteweg & de Vries 1895) as initial data. The balance laws
follow from the equation by integration over the period (common practice, no source; derivation
in the docstring of ``kdvsweep.sweep.runner.balance``): ``M(T) = M(0) exp(-g T)``, the
momentum and energy laws integrated over the frames. The conserved densities for g = v = 0 are
those of Miura, Gardner & Kruskal 1968.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from kdvsweep.model import Equation, Grid
from kdvsweep.simulation import Simulation
from kdvsweep.sweep.config import DEFAULT_DRIFT_LIMIT, load_sweep
from kdvsweep.sweep.runner import Balance, balance, execute

GRID = Grid(n=512, length=60.0)
T_END = 10.0


def soliton(kappa: float = 0.8, x0: float = -10.0) -> np.ndarray:
    """The KdV soliton at t = 0 (Korteweg & de Vries 1895)."""
    return 2 * kappa**2 / np.cosh(kappa * (GRID.x - x0)) ** 2


def run(eq: Equation, u0: np.ndarray, frames: int = 41, dt: float = 1e-3) -> Balance:
    sim = Simulation(GRID, eq, dt=dt)
    sim.set_state(u0)
    times = np.linspace(0.0, T_END, frames)
    return balance(sim.record(times), times, GRID, eq)


@pytest.mark.parametrize("g", [1e-3, 3e-3, 1e-2])
def test_damped_soliton_residuals_small_while_drift_is_the_decay(g: float) -> None:
    b = run(Equation(a=6.0, d=1.0, g=g), soliton())
    # Raw mass drift is the physical decay 1 - exp(-g T) (dM/dt = -g M, exact).
    assert b.drift["mass"] == pytest.approx(-math.expm1(-g * T_END), rel=1e-9)
    # d/dt int u^2 = -2 g int u^2 (v = 0): the raw momentum drift is 1 - exp(-2 g T).
    assert b.drift["momentum"] == pytest.approx(-math.expm1(-2 * g * T_END), rel=1e-7)
    assert b.drift["energy"] > 1e-3  # the Hamiltonian decays too
    for key in ("mass", "momentum", "energy"):
        assert b.residual[key] < 1e-7, (key, b.residual[key])
    assert 0.0 < b.quadrature < 1e-6
    assert not b.absolute


def test_viscous_soliton_residuals_small_while_drift_is_the_decay() -> None:
    b = run(Equation(a=6.0, d=1.0, v=1e-3), soliton())
    assert b.drift["mass"] < 1e-13  # viscosity leaves int u unchanged
    assert b.drift["momentum"] > 1e-3
    assert b.drift["energy"] > 1e-3
    assert b.residual["momentum"] < 1e-7
    assert b.residual["energy"] < 1e-7


@pytest.mark.parametrize("frames", [6, 9, 17])
def test_quadrature_estimate_covers_coarse_frames(frames: int) -> None:
    """With fewer frames the residual grows by the quadrature error, and the stated estimate
    (Simpson against Simpson on every 2nd frame) covers it; with 41 frames both are small."""
    eq = Equation(a=6.0, d=1.0, g=1e-2, v=1e-3)
    fine, coarse = run(eq, soliton()), run(eq, soliton(), frames=frames)
    assert fine.quadrature < 1e-6
    assert max(fine.residual.values()) < 1e-7
    assert coarse.quadrature > 10 * fine.quadrature
    for key in ("momentum", "energy"):
        assert abs(coarse.residual[key] - fine.residual[key]) < coarse.quadrature


def test_two_frames_give_no_quadrature_estimate() -> None:
    b = run(Equation(a=6.0, d=1.0, g=1e-3), soliton(), frames=2)
    assert math.isnan(b.quadrature)
    assert b.residual["mass"] < 1e-11  # the mass law is exact, no quadrature


def test_conservative_residual_is_the_drift() -> None:
    b = run(Equation(a=6.0, d=1.0), soliton())
    assert b.residual == b.drift
    assert b.quadrature == 0.0
    assert b.drift["momentum"] < 1e-8


def test_zero_mean_data_mass_drift_is_absolute_round_off() -> None:
    """u0 = sech^2(x - 5) - sech^2(x + 5): int u = 0 up to round-off, so the mass drift is the
    absolute change (round-off), not a change divided by a round-off mass."""
    u0 = 1 / np.cosh(GRID.x - 5) ** 2 - 1 / np.cosh(GRID.x + 5) ** 2
    for eq in (Equation(a=6.0, d=1.0), Equation(a=6.0, d=1.0, g=1e-2)):
        b = run(eq, u0, frames=21)
        assert b.absolute == {"mass"}
        assert b.drift["mass"] < 1e-13
        assert b.residual["mass"] < 1e-13
        assert b.residual["momentum"] < 1e-7


DAMPED_SWEEP = """
[sweep]
name = "damped"

[[vary]]
g = [0.001, 0.01, 0.01]
dt = [0.005, 0.005, 0.1]

[model]
equation = { a = 6, d = 1, g = "g" }
points = 1024
length = 60
scheme = "etdrk4"
dt = "dt"

[initial]
kind = "solitons"
kappa = [0.8]
position = [-10.0]

[run]
end = 20
frame_every = 0.25
"""


def test_damped_sweep_runs_are_checked_by_their_residual(tmp_path: Path) -> None:
    """In a sweep, a damped run's raw drifts are the decay (mass: 1 - exp(-g T), far above the
    drift limit for int u^2) yet it is "ok", because the drift check reads the balance
    residual; the same run with a step 20 times larger fails as "drift" (not checked at all
    before: the check was for conservative runs only)."""
    path = tmp_path / "damped.toml"
    path.write_text(DAMPED_SWEEP)
    sweep = load_sweep(path)
    assert all("worst run 2" in w for w in sweep.warnings)  # only the coarse step is warned
    rows = [execute(spec).run_row for spec in sweep.runs]
    for row, g in zip(rows[:2], (1e-3, 1e-2), strict=True):
        assert row["status"] == "ok"
        assert row["mass_drift"] == pytest.approx(-math.expm1(-g * 20.0), rel=1e-9)
        assert row["momentum_drift"] > 30 * g
        assert row["mass_residual"] < 1e-11
        assert row["momentum_residual"] < 1e-5
        assert row["energy_residual"] < 1e-5
        assert row["balance_quadrature"] < 1e-6
    assert rows[2]["status"] == "failed"
    assert rows[2]["failure"] == "drift"
    assert rows[2]["momentum_residual"] > DEFAULT_DRIFT_LIMIT
