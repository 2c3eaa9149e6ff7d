"""Limits of the core: float64 time resolution, the wall-clock time limit, impossible memory,
exact solutions that would not be finite, and long exact evaluations that let Python run."""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np
import pytest
from conftest import pair_sweep

import kdvsweep as kv
from kdvsweep.exceptions import KdvsweepError, OutOfMemoryError, TimeLimitError
from kdvsweep.sweep.runner import execute

GRID = kv.Grid(256, 40.0)
KDV = kv.Equation.kdv()


def _soliton_sim(**kw: object) -> kv.Simulation:
    sim = kv.Simulation(GRID, KDV, **kw)  # type: ignore[arg-type]
    sim.set_state(kv.exact.soliton(GRID.x, 0.0, 1.0))
    return sim


@pytest.mark.parametrize("scheme", kv.SCHEMES)
def test_a_step_too_small_for_the_time_is_an_error_not_a_silent_jump(scheme: str) -> None:
    # Near t = 1e12 float64 numbers are 2**-13 = 1.22e-4 apart (IEEE 754 binary64; common
    # practice, no source), so steps of 1e-3 cannot be told apart: refused, time unchanged.
    sim = _soliton_sim(scheme=scheme)
    u0 = sim.state
    sim.set_state(u0, time=1e12)
    with pytest.raises(kv.NumericalError, match=r"^time resolution: at t = 1000000000000 ") as info:
        sim.advance(1.0)
    assert "1.221e-4 apart" in str(info.value)
    assert "\n" not in str(info.value)
    assert (sim.time, sim.steps) == (1e12, 0)
    # At 1e9 (spacing 2**-23 = 1.2e-7) the same advance steps and lands on the time.
    sim.set_state(u0, time=1e9)
    sim.advance(1.0)
    assert sim.time == 1e9 + 1.0
    assert sim.steps > 0


def test_the_time_limit_stops_a_long_run() -> None:
    sim = _soliton_sim(dt=1e-6, time_limit=0.1)
    assert sim.time_limit == 0.1
    start = time.perf_counter()
    with pytest.raises(
        TimeLimitError, match=r"^time limit: 0\.1 s of wall-clock time used up at t = "
    ) as info:
        sim.advance(1e5)  # days of stepping without the limit
    assert time.perf_counter() - start < 60  # bounded; the limit itself is 0.1 s
    message = str(info.value)
    assert "\n" not in message
    assert f"t = {sim.time}" in message  # names the simulated time reached
    assert 0 < sim.time < 1e5
    assert np.all(np.isfinite(sim.state))
    assert isinstance(info.value, TimeoutError)
    assert isinstance(info.value, KdvsweepError)
    # record honours it too (the budget counts all stepping since the state was set).
    with pytest.raises(TimeLimitError):
        sim.record([sim.time + 1.0])


@pytest.mark.parametrize("bad", [0, -1.0, float("nan"), float("inf"), "1", True])
def test_a_bad_time_limit_is_a_config_error(bad: object) -> None:
    with pytest.raises(kv.ConfigError, match=r"^time_limit: expected a finite positive number"):
        kv.Simulation(GRID, KDV, time_limit=bad)  # type: ignore[arg-type]


def test_a_grid_that_cannot_be_allocated_is_a_memory_error() -> None:
    # 2**40 points need about 400 TiB: refused by the reservation before anything is built
    # (before this check the process aborted with SIGABRT).
    with pytest.raises(
        OutOfMemoryError, match=r"^out of memory: cannot allocate 400\.00 TiB"
    ) as info:
        kv.Simulation(kv.Grid(2**40, 10.0), KDV)
    assert isinstance(info.value, MemoryError)
    assert "\n" not in str(info.value)


def test_frames_that_cannot_be_allocated_are_a_memory_error() -> None:
    # 10**9 frames of 256 points are 2.048e12 bytes (1.86 TiB). np.zeros maps its 8 GB lazily,
    # and the core refuses the frames before it copies the times or takes a step.
    sim = _soliton_sim()
    with pytest.raises(
        MemoryError,
        match=r"^out of memory: cannot allocate 1\.86 TiB \(2048000000000 bytes\) for the recorded frames",
    ):
        sim.record(np.zeros(10**9))
    assert (sim.time, sim.steps) == (0.0, 0)


def test_a_run_out_of_memory_is_stored_as_failed_with_that_reason(tmp_path: Path) -> None:
    # The runner stores failures as data; a memory failure's reason starts "out of memory: ".
    (spec,) = pair_sweep(tmp_path, "memory", [0.5], frame_every=0.5).runs

    def huge(*_: object) -> kv.Simulation:  # the core refuses a grid it cannot allocate
        return kv.Simulation(kv.Grid(2**40, 10.0), KDV)

    def plain(*_: object) -> kv.Simulation:  # any other MemoryError (NumPy's, say)
        raise MemoryError("Unable to allocate 7.45 GiB for an array")

    result = execute(spec, simulation=huge)
    assert result.run_row["status"] == "failed"
    assert result.run_row["reason"].startswith("out of memory: cannot allocate 400.00 TiB")
    result = execute(spec, simulation=plain)
    assert result.run_row["reason"] == "out of memory: Unable to allocate 7.45 GiB for an array"
