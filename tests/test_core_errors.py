"""Bad input raises a Python exception of ours with a clear message, never a panic."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest

import kdvsweep as kv
from kdvsweep import _core

GRID = kv.Grid(64, 20.0)
KDV = kv.Equation.kdv()


def _sim(**kw: object) -> kv.Simulation:
    return kv.Simulation(GRID, KDV, **kw)  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("state", "error", "match"),
    [
        (np.zeros(63), kv.ShapeError, "length 64"),
        (np.zeros((2, 32)), kv.ShapeError, "1-D"),
        (np.array(["a"] * 64), kv.ShapeError, "dtype"),
        (np.full(64, np.nan), kv.ConfigError, "finite"),
        (np.r_[np.zeros(63), np.inf], kv.ConfigError, "index 63"),
    ],
)
def test_bad_state(state: np.ndarray, error: type[Exception], match: str) -> None:
    with pytest.raises(error, match=match):
        _sim().set_state(state)


def test_integer_and_float32_states_are_coerced() -> None:
    sim = _sim()
    sim.set_state(np.zeros(64, dtype=np.int32))
    sim.set_state(np.zeros(64, dtype=np.float32))
    assert sim.state.dtype == np.float64


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"dt": 0.0}, "dt"),
        ({"dt": -1e-3}, "dt"),
        ({"dt": float("nan")}, "dt"),
        ({"scheme": "rk45"}, "unknown scheme 'rk45'"),
        ({"scheme": "adaptive", "tol": 0.0}, "tol"),
        ({"scheme": "adaptive", "tol": 2.0}, "tol"),
        ({"scheme": "etdrk4", "tol": 1e-6}, "adaptive scheme only"),
        ({"max_amplitude": -1.0}, "max_amplitude"),
    ],
)
def test_bad_simulation_options(kwargs: dict[str, object], match: str) -> None:
    with pytest.raises(kv.ConfigError, match=match):
        _sim(**kwargs)


@pytest.mark.parametrize(
    ("n", "length", "match"),
    [
        (8, 10.0, "at least 16"),
        (65, 10.0, "even"),
        (64, 0.0, "positive"),
        (64, float("inf"), "finite"),
        (64.0, 10.0, "integer"),
    ],
)
def test_bad_grid(n: object, length: float, match: str) -> None:
    with pytest.raises(kv.ConfigError, match=match):
        kv.Grid(n, length)  # type: ignore[arg-type]


def _core_sim(
    n: int = 64, scheme: str = "etdrk4", v: float = 0.0, dealias: float | None = None
) -> _core.Simulation:
    return _core.Simulation(
        n,
        10.0,
        a=6.0,
        b=0.0,
        d=1.0,
        f=0.0,
        g=0.0,
        v=v,
        scheme=scheme,
        dt=1e-3,
        tol=1e-9,
        dealias=dealias,
    )


def test_core_checks_its_own_arguments() -> None:
    # The compiled layer validates independently of the Python wrapper.
    with pytest.raises(kv.ConfigError, match="n: expected an even number >= 16, got 15"):
        _core_sim(n=15)
    with pytest.raises(kv.ConfigError, match="scheme: expected one of etdrk4, ifrk4"):
        _core_sim(scheme="euler")
    with pytest.raises(kv.ConfigError, match="v: expected v >= 0"):
        _core_sim(v=-1.0)
    with pytest.raises(kv.ConfigError, match=r"dealias: expected a fraction in \(0, 1\], got 0"):
        _core_sim(dealias=0.0)
    with pytest.raises(kv.ConfigError, match="b: expected a finite number, got NaN"):
        _core.dealias_fraction(a=6.0, b=math.nan, d=1.0, f=0.0, g=0.0, v=0.0)
    sim = _core_sim()
    with pytest.raises(kv.ShapeError, match="expected length 64, got 3"):
        sim.set_state(np.zeros(3), 0.0)
    with pytest.raises(TypeError):
        sim.set_state(np.zeros(64, dtype=np.complex128), 0.0)


def test_core_takes_the_equation_by_name_only() -> None:
    core: Any = _core  # calls the stub forbids, made on purpose
    with pytest.raises(TypeError):
        core.Simulation(64, 10.0, (6, 0, 1, 0, 0, 0), 2 / 3, "etdrk4", 1e-3, 1e-9)
    with pytest.raises(TypeError, match="'g'"):
        core.invariants(np.zeros(64), 10.0, a=6.0, b=0.0, d=1.0, f=0.0, v=0.0)
    with pytest.raises(TypeError):
        core.dealias_fraction(6.0, 0.0, 1.0, 0.0, 0.0, 0.0)


def test_bad_equation() -> None:
    with pytest.raises(kv.ConfigError, match="viscosity"):
        kv.Equation(a=6, v=-0.1)
    with pytest.raises(kv.ConfigError, match="dealias"):
        kv.Equation(a=6, dealias=1.5)
    with pytest.raises(kv.ConfigError, match="unknown preset 'kdw'"):
        kv.Equation.preset("kdw")


def test_bad_times() -> None:
    sim = _sim(dt=1e-3)
    sim.set_state(np.zeros(64))
    with pytest.raises(kv.ConfigError, match="non-decreasing"):
        sim.record([0.2, 0.1])
    with pytest.raises(kv.ConfigError, match="current time"):
        sim.record([-1.0])
    with pytest.raises(kv.ConfigError, match="duration"):
        sim.advance(-1.0)
    with pytest.raises(kv.ShapeError, match="non-empty"):
        sim.record([])


def test_blow_up_is_reported_with_its_time() -> None:
    # A step about 10x past the stability limit of the explicit RK4 stages: the nonlinear term's
    # rate dt * a * max|u| * k_kept = 0.05 * 6 * 8 * 13.4 ~ 32 is far beyond 2.8, the RK4 bound
    # on the imaginary axis (common practice; e.g. Trefethen 2000, Ch. 10 [memory]).
    grid = kv.Grid(256, 40.0)
    sim = kv.Simulation(grid, KDV, scheme="ifrk4", dt=0.05)
    sim.set_state(kv.exact.soliton(grid.x, 0.0, 2.0))
    with pytest.raises(kv.NumericalError, match=r"(blew up|non-finite) .*at t = "):
        sim.advance(50.0)


def test_exact_bad_input() -> None:
    with pytest.raises(kv.ConfigError, match="distinct"):
        kv.exact.multisoliton(GRID.x, 0.0, [1.0, 1.0], [0.0, 1.0])
    with pytest.raises(kv.ConfigError, match="positive"):
        kv.exact.multisoliton(GRID.x, 0.0, [-1.0], [0.0])
    with pytest.raises(kv.ShapeError, match="x0s"):
        kv.exact.multisoliton(GRID.x, 0.0, [1.0, 0.5], [0.0])
    with pytest.raises(kv.ConfigError, match="no exact N-soliton"):
        kv.exact.soliton(GRID.x, 0.0, 1.0, equation=kv.Equation.gardner(d=0.0))
    with pytest.raises(kv.ConfigError, match="table-top limit"):  # Gardner, b d < 0: kappa < 0.5
        kv.exact.soliton(GRID.x, 0.0, 0.6, equation=kv.Equation.gardner(6.0, -6.0))
    with pytest.raises(kv.ConfigError, match="no solitary wave of sign -1"):
        kv.exact.soliton(GRID.x, 0.0, 0.3, equation=kv.Equation.gardner(6.0, -6.0), sign=-1)
