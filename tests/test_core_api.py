"""Semantics of the Python API that the rest of the package relies on (DESIGN.md)."""

from __future__ import annotations

import threading
import time

import numpy as np
import pytest

import kdvsweep as kv

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
    # A Python thread keeps running while a long advance is in Rust (DESIGN.md: advance is detached).
    sim = kv.Simulation(kv.Grid(1024, 80.0), kv.Equation.kdv(), dt=1e-4)
    sim.set_state(kv.exact.soliton(np.linspace(-40, 40, 1024, endpoint=False), 0.0, 1.0))
    ticks = 0
    stop = threading.Event()

    def count() -> None:
        nonlocal ticks
        while not stop.is_set():
            ticks += 1
            time.sleep(0.001)

    thread = threading.Thread(target=count)
    thread.start()
    start = time.perf_counter()
    sim.advance(1.0)
    elapsed = time.perf_counter() - start
    stop.set()
    thread.join()
    # With the GIL held the counter could not advance at all during the call.
    assert ticks >= min(5, int(elapsed / 0.01))
    assert ticks > 0


def test_state_is_a_copy() -> None:
    sim = _sim()
    u = sim.state
    u[:] = 0
    assert sim.state.max() > 1.9
