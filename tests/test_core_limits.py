"""Limits of the core: float64 time resolution, the wall-clock time limit, impossible memory,
exact solutions that would not be finite, and long exact evaluations that let Python run."""

from __future__ import annotations

import _thread
import threading
import time
from pathlib import Path

import numpy as np
import pytest
from conftest import pair_sweep, ticks_during

import kdvsweep as kv
from kdvsweep import _core
from kdvsweep.exceptions import KdvsweepError, OutOfMemoryError, TimeLimitError
from kdvsweep.simulation import memory_needed
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
    # 2**40 points need hundreds of TiB: refused by the reservation before anything is built
    # (before this check the process aborted with SIGABRT).
    needed = memory_needed(2**40)
    assert needed == _core.simulation_memory(2**40) > 2**47  # beyond a 47-bit address space
    expected = rf"^out of memory: cannot allocate [\d.]+ TiB \({needed} bytes\) for a simulation "
    with pytest.raises(OutOfMemoryError, match=expected) as info:
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
    assert result.run_row["reason"].startswith("out of memory: cannot allocate ")
    result = execute(spec, simulation=plain)
    assert result.run_row["reason"] == "out of memory: Unable to allocate 7.45 GiB for an array"


@pytest.mark.parametrize(
    ("equation", "args", "match"),
    [
        # 2 kappa^2 = 2e400 overflows float64 (it used to return NaN at every point).
        (
            "kdv",
            (0.0, 1e200, 0.0),
            r"^kappas: expected values whose soliton amplitude is a finite ",
        ),
        ("kdv", (0.0, 1e308, 0.0), r"^kappas: .* number, got 1e308$"),
        ("mkdv", (0.0, 1e308, 0.0), r"^kappas: .* number, got 1e308$"),  # 2 kappa overflows
        ("kdv", (0.0, 1.0, 1e308), r"^phase: expected a finite 2 kappa \(x - 4 kappa\^2 t - x0\) "),
        ("mkdv", (0.0, 1.0, -1e308), r"^phase: .* got t = 0, kappa = 1, x0 = -1e308, x from -10 "),
        (
            "kdv",
            (1e308, 10.0, 0.0),
            r"^phase: .* got t = 1e308, kappa = 10, x0 = 0, x from -10 to 10$",
        ),
    ],
)
def test_exact_solutions_that_would_not_be_finite_are_errors(
    equation: str, args: tuple[float, float, float], match: str
) -> None:
    t, kappa, x0 = args
    with pytest.raises(kv.ConfigError, match=match) as info:
        kv.exact.soliton(np.linspace(-10, 10, 21), t, kappa, x0, equation=equation)
    assert "\n" not in str(info.value)


def test_a_far_travelled_soliton_is_zero_not_an_error() -> None:
    # 2 kappa^2 sech^2(kappa (x - 4e300)) underflows to 0 on [-10, 10]: a finite, exact answer.
    assert np.all(kv.exact.soliton(np.linspace(-10, 10, 21), 1e300, 1.0) == 0.0)


def _many_solitons(count: int) -> tuple[np.ndarray, np.ndarray]:
    return np.linspace(0.5, 1.5, count), np.zeros(count)


def test_a_long_multisoliton_lets_other_threads_run() -> None:
    # 15 solitons on 64 points: 2 million subset terms, a large fraction of a second.
    kappas, x0s = _many_solitons(15)
    u, ticks, elapsed = ticks_during(
        lambda: kv.exact.multisoliton(np.linspace(-5, 5, 64), 0.0, kappas, x0s)
    )
    assert np.all(np.isfinite(u))
    # With the GIL held the counter could not advance at all during the call.
    assert ticks >= min(5, int(elapsed / 0.01))
    assert ticks > 0


def test_ctrl_c_stops_a_long_multisoliton() -> None:
    # 18 solitons on 2000 points: minutes of work; Ctrl-C (simulated by interrupt_main, as a
    # SIGINT) after 0.2 s must stop it within a few seconds.
    kappas, x0s = _many_solitons(18)
    timer = threading.Timer(0.2, _thread.interrupt_main)
    start = time.perf_counter()
    timer.start()
    try:
        with pytest.raises(KeyboardInterrupt):
            kv.exact.multisoliton(np.linspace(-5, 5, 2000), 0.0, kappas, x0s, equation="mkdv")
    finally:
        timer.cancel()
    # Far less than the full evaluation (which would also end in KeyboardInterrupt, just late).
    assert time.perf_counter() - start < 20


def test_the_memory_bound_covers_a_measured_run() -> None:
    # Peak resident memory measured for n = 2**22 (ETDRK4, two step sizes): 213 bytes a point; for
    # n = 2 * 2097169 (n/2 prime, padded FFTs): 408 (measured with getrusage on the development
    # machine; common practice, no source). The bound covers both; the frames come on top.
    assert memory_needed(2**22) >= 213 * 2**22
    assert memory_needed(2 * 2097169) >= 408 * 2 * 2097169
    assert memory_needed(256, frames=10) == memory_needed(256) + 8 * 10 * 256


def test_fft_plans_that_cannot_be_allocated_are_a_memory_error() -> None:
    # The benchmark's FFT floor plans its transforms too: refused, not an abort.
    with pytest.raises(
        OutOfMemoryError, match=r"^out of memory: cannot allocate .* for the FFT plans;"
    ):
        _core.fft_floor(2**40, 1, 1, 1)
