"""Semantics of the Python API that the rest of the package relies on."""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import ticks_during

import kdvsweep as kv
from kdvsweep import _core
from kdvsweep.simulation import DEFAULT_DT, DEFAULT_TOL, step_options

GRID = kv.Grid(256, 40.0)


def _sim(scheme: str = "etdrk4", dt: float = 1e-3) -> kv.Simulation:
    sim = kv.Simulation(GRID, kv.Equation.kdv(), scheme=scheme, dt=dt)
    sim.set_state(kv.exact.soliton(GRID.x, 0.0, 1.0, -5.0))
    return sim


def test_record_hits_each_time_exactly() -> None:
    # Intervals that are not whole numbers of steps are crossed with equal shorter steps; the
    # result equals advancing interval by interval (common practice, no source).
    times = np.array([0.0, 0.1234, 0.5, 0.5, 1.0])
    frames = _sim().record(times)
    assert frames.shape == (5, GRID.n)
    ref = _sim()
    for t, frame in zip(times, frames, strict=True):
        ref.advance(t - ref.time)
        assert ref.time == pytest.approx(t, abs=1e-14)
        np.testing.assert_allclose(frame, ref.state, rtol=0, atol=1e-13)


def test_steps_are_counted() -> None:
    sim = _sim(dt=1e-3)
    sim.record(np.linspace(0.1, 1.0, 10))
    assert sim.steps == 1000
    sim.set_state(np.zeros(GRID.n))
    assert (sim.steps, sim.time) == (0, 0.0)


@pytest.mark.parametrize("scheme", kv.SCHEMES)
def test_every_scheme_lands_on_the_requested_times(scheme: str) -> None:
    sim = _sim(scheme)
    sim.record([0.05, 0.3337])
    assert sim.time == pytest.approx(0.3337, abs=1e-14)


def test_advance_releases_the_gil() -> None:
    # A Python thread keeps running while a long advance is in Rust (advance releases the GIL).
    sim = kv.Simulation(kv.Grid(1024, 80.0), kv.Equation.kdv(), dt=1e-4)
    sim.set_state(kv.exact.soliton(np.linspace(-40, 40, 1024, endpoint=False), 0.0, 1.0))
    _, ticks, elapsed = ticks_during(lambda: sim.advance(1.0))
    # With the GIL held the counter could not advance at all during the call.
    assert ticks >= min(5, int(elapsed / 0.01))
    assert ticks > 0


def test_state_is_a_copy() -> None:
    sim = _sim()
    u = sim.state
    u[:] = 0
    assert sim.state.max() > 1.9


def test_schemes_are_the_cores_list() -> None:
    # One list: the Python names are the compiled module's, in its order.
    assert kv.SCHEMES == tuple(_core.SCHEMES) == ("etdrk4", "ifrk4", "strang", "adaptive")


def test_step_options_fill_defaults_and_keep_tol_for_adaptive() -> None:
    assert step_options("etdrk4") == (DEFAULT_DT, None)
    assert step_options("adaptive") == (DEFAULT_DT, DEFAULT_TOL)
    assert step_options("strang", 2e-4) == (2e-4, None)
    assert step_options("adaptive", 1, 1e-6) == (1.0, 1e-6)
    assert (DEFAULT_DT, DEFAULT_TOL) == (1e-3, 1e-9)


@pytest.mark.parametrize(
    ("scheme", "dt", "tol", "match"),
    [
        ("rk45", None, None, r"^scheme: unknown scheme 'rk45'; expected one of etdrk4, ifrk4, "),
        ("etdrk4", 0.0, None, r"^dt: expected a finite positive number, got 0.0$"),
        ("etdrk4", True, None, r"^dt: expected a finite positive number, got True$"),
        ("etdrk4", "1e-3", None, r"^dt: expected a finite positive number, got '1e-3'$"),
        ("ifrk4", None, 1e-6, r"^tol: applies to the adaptive scheme only, not 'ifrk4'"),
        ("adaptive", None, math.inf, r"^tol: expected a finite positive number, got inf$"),
        ("adaptive", None, 1.0, r"^tol: expected a relative tolerance below 1, got 1.0$"),
    ],
)
def test_step_options_errors_are_one_line(
    scheme: str, dt: float | None, tol: float | None, match: str
) -> None:
    with pytest.raises(kv.ConfigError, match=match) as info:
        step_options(scheme, dt, tol)
    assert "\n" not in str(info.value)


@pytest.mark.parametrize(
    ("equation", "fraction"),
    [
        # Orszag (1971): a product of p factors is alias-free when modes j < n/(p+1) are kept.
        (kv.Equation.kdv(), 2 / 3),
        (kv.Equation.mkdv(), 1 / 2),
        (kv.Equation.gardner(), 1 / 2),
        (kv.Equation(), 1.0),
        (kv.Equation(a=6.0, dealias=0.8), 0.8),
    ],
)
def test_dealias_fraction_is_the_cores_rule(equation: kv.Equation, fraction: float) -> None:
    assert equation.dealias_fraction == fraction
    assert _core.dealias_fraction(**equation.core_fields()) == fraction
