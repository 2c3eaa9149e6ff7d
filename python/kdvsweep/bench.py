"""Benchmark of the Rust steppers against their FFT floor and against plain NumPy.

For each grid size and scheme, in one run: microseconds per step of the Rust stepper, the FFT floor
(the same number of bare real transforms of that size, timed in Rust: 4 forward and 4 inverse per
step, per accepted step for the adaptive scheme) and microseconds per step of the NumPy
implementation in :mod:`kdvsweep.reference`. Every figure is the best of several timings (7, or
3 with ``--quick``), each over enough steps to last 0.1 s (0.02 s), timed with
``time.perf_counter``; the timings of the three are interleaved so that they share the machine's
load.

The state is a realistic one: a KdV 2-soliton (kappa = 1 and 0.6) on a domain of length 80.
:func:`run_benchmark` returns the figures as :class:`Row` s; ``kdvsweep bench`` prints them.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from . import _core
from .exact import multisoliton
from .exceptions import ConfigError
from .model import Equation, Grid
from .reference import SCHEMES, ReferenceSimulation
from .simulation import Simulation

LENGTH = 80.0
KAPPAS = (1.0, 0.6)
CENTRES = (-20.0, 0.0)
DT = 2e-3  # stable for this state up to n = 2048 (nonlinear CFL of the dealiased band)
TOL = 1e-8
SIZES = (256, 512, 1024, 2048)
TRANSFORMS_PER_STEP = 4  # forward and inverse each, for every scheme

# Targets of the benchmark (issue 2): Rust within 1.5x of the FFT floor at these n,
# and at least 10x faster than NumPy at these n.
FLOOR_TARGET, FLOOR_SIZES = 1.5, (512, 1024)
SPEEDUP_TARGET, SPEEDUP_SIZES = 10.0, (512,)


@dataclass(frozen=True)
class Row:
    """The figures of one (n, scheme) pair, in microseconds per (accepted) step."""

    n: int
    scheme: str
    rust_us: float
    floor_us: float
    numpy_us: float

    @property
    def rust_over_floor(self) -> float:
        """Rust step time over the FFT floor (1 would be all transforms, no other work)."""
        return self.rust_us / self.floor_us

    @property
    def numpy_over_rust(self) -> float:
        """How many times faster the Rust step is than the NumPy one."""
        return self.numpy_us / self.rust_us

    def floor_met(self) -> bool | None:
        """Whether the floor target is met, or ``None`` where it does not apply or is unmeasured."""
        if self.n not in FLOOR_SIZES or math.isnan(self.floor_us):
            return None
        return self.rust_over_floor <= FLOOR_TARGET

    def speedup_met(self) -> bool | None:
        """Whether the NumPy speed-up target is met, or ``None`` where it does not apply."""
        if self.n not in SPEEDUP_SIZES:
            return None
        return self.numpy_over_rust >= SPEEDUP_TARGET


@dataclass(frozen=True)
class Budget:
    """How long to time: ``repeats`` timings (best kept), each lasting at least ``min_time`` s."""

    repeats: int
    min_time: float


def initial_state(grid: Grid) -> np.ndarray:
    """The benchmark's state: a KdV 2-soliton (Hirota 1971) before its collision."""
    return multisoliton(grid.x, 0.0, KAPPAS, CENTRES, equation="kdv")


# A timed run: ``run(count)`` does about ``count`` units of work (steps, or sets of transforms)
# and returns the seconds per unit it measured.
Run = Callable[[int], float]


def _calibrate(run: Run, budget: Budget) -> tuple[int, float]:
    """A count for which one run lasts at least ``budget.min_time``, and that run's figure."""
    count = 8
    while True:
        start = time.perf_counter()
        per_unit = run(count)
        elapsed = time.perf_counter() - start
        if elapsed >= budget.min_time or count >= 1 << 24:
            return count, per_unit
        count = int(count * min(10.0, max(2.0, 1.2 * budget.min_time / max(elapsed, 1e-9))))


def best_of(runs: Sequence[Run], budget: Budget) -> list[float]:
    """Best seconds per unit of each run, the repeats interleaved.

    Interleaving (Rust, floor, NumPy, Rust, ...) keeps the ratios fair on a machine whose load
    changes during the benchmark: each figure gets its best moment from the same stretch of time.
    """
    calibrated = [_calibrate(run, budget) for run in runs]
    best = [per_unit for _, per_unit in calibrated]
    for _ in range(budget.repeats - 1):
        for i, (run, (count, _)) in enumerate(zip(runs, calibrated, strict=True)):
            best[i] = min(best[i], run(count))
    return best


def stepping_run(sim: Simulation | ReferenceSimulation, u0: np.ndarray, dt: float) -> Run:
    """Runs of about ``count`` steps of ``sim`` from ``u0`` (adaptive: accepted steps, ``dt``
    their mean).

    Each run starts again from ``u0`` (untimed), so every timing steps the same realistic state
    and no run drifts into the slow growth of round-off that IFRK4 shows in the empty top modes
    of very fine grids (n = 2048 here, after about 15 time units).
    """

    def run(count: int) -> float:
        sim.set_state(u0)
        start = time.perf_counter()
        sim.advance(count * dt)
        elapsed = time.perf_counter() - start
        return elapsed / max(sim.steps, 1)

    return run


def floor_run(n: int) -> Run:
    """Runs of ``count`` sets of one step's transforms (4 r2c + 4 c2r of size ``n``) in Rust.

    ``kdvsweep._core.fft_floor`` times the sets itself and returns seconds per set.
    """

    def run(count: int) -> float:
        return float(_core.fft_floor(n, TRANSFORMS_PER_STEP, TRANSFORMS_PER_STEP, count))

    return run


def time_scheme(n: int, scheme: str, budget: Budget) -> Row:
    """Time the Rust stepper, its FFT floor and the NumPy stepper for one grid size and scheme."""
    grid = Grid(n, LENGTH)
    equation = Equation.kdv()
    tol = TOL if scheme == "adaptive" else None
    u0 = initial_state(grid)
    rust = Simulation(grid, equation, scheme, dt=DT, tol=tol)
    reference = ReferenceSimulation(grid, equation, scheme, dt=DT, tol=tol)
    dt = DT
    if scheme == "adaptive":  # advance by multiples of the mean accepted step, so counts are steps
        rust.set_state(u0)
        rust.advance(0.1)
        dt = 0.1 / max(rust.steps, 1)
    runs = [stepping_run(rust, u0, dt), stepping_run(reference, u0, dt)]
    has_floor = hasattr(_core, "fft_floor")
    if has_floor:
        runs.append(floor_run(n))
    figures = best_of(runs, budget)
    floor = figures[2] if has_floor else math.nan
    return Row(n, scheme, 1e6 * figures[0], 1e6 * floor, 1e6 * figures[1])


def targets_met(rows: Sequence[Row]) -> bool:
    """True when no applicable target is missed."""
    return all(r.floor_met() is not False and r.speedup_met() is not False for r in rows)


QUICK = Budget(repeats=3, min_time=0.02)
FULL = Budget(repeats=7, min_time=0.1)


def run_benchmark(
    sizes: Sequence[int] = SIZES,
    schemes: Sequence[str] = SCHEMES,
    budget: Budget = FULL,
    on_row: Callable[[Row], None] | None = None,
) -> list[Row]:
    """Time every scheme at every grid size; ``on_row`` sees each row as soon as it is measured.

    Raises
    ------
    ConfigError
        A size is odd or below 16, or a scheme is unknown.
    """
    bad = [n for n in sizes if n < 16 or n % 2]
    if bad or not sizes:
        raise ConfigError(f"bench: grid sizes must be even and >= 16, got {list(sizes)}")
    unknown = [s for s in schemes if s not in SCHEMES]
    if unknown or not schemes:
        raise ConfigError(
            f"bench: unknown scheme(s) {unknown or '(none given)'}; expected some of "
            f"{', '.join(SCHEMES)}"
        )
    rows = []
    for n in sizes:
        for scheme in schemes:
            row = time_scheme(n, scheme, budget)
            rows.append(row)
            if on_row is not None:
                on_row(row)
    return rows


__all__ = [
    "FLOOR_SIZES",
    "FLOOR_TARGET",
    "FULL",
    "QUICK",
    "SIZES",
    "SPEEDUP_SIZES",
    "SPEEDUP_TARGET",
    "Budget",
    "Row",
    "run_benchmark",
    "targets_met",
    "time_scheme",
]
