"""The user-facing simulation: a thin layer over the Rust stepper that checks and coerces inputs."""

from __future__ import annotations

import math

import numpy as np

from . import _core
from .exceptions import ConfigError, ShapeError
from .model import Equation, Grid

SCHEMES = ("etdrk4", "ifrk4", "strang", "adaptive")


def as_profile(u: object, n: int, name: str = "u") -> np.ndarray:
    """Return ``u`` as a contiguous float64 array of length ``n`` with finite values, or raise."""
    arr = np.asarray(u)
    if arr.dtype.kind not in "fiu":
        raise ShapeError(f"{name}: expected a real numeric array, got dtype {arr.dtype}")
    if arr.ndim != 1:
        raise ShapeError(f"{name}: expected a 1-D array, got shape {arr.shape}")
    if arr.shape[0] != n:
        raise ShapeError(f"{name}: expected length {n} (the grid's n), got {arr.shape[0]}")
    arr = np.ascontiguousarray(arr, dtype=np.float64)
    if not np.all(np.isfinite(arr)):
        bad = int(np.flatnonzero(~np.isfinite(arr))[0])
        raise ConfigError(f"{name}: values must be finite; index {bad} is {arr[bad]}")
    return arr


class Simulation:
    """Time stepping of one equation on one grid.

    Parameters
    ----------
    grid, equation
        The periodic grid and the equation.
    scheme
        ``"etdrk4"`` (default), ``"ifrk4"``, ``"strang"`` or ``"adaptive"``.
    dt
        The step (fixed schemes) or the first trial step (adaptive); a record interval that is not a
        whole number of steps is crossed with the largest equal steps of at most ``dt``.
    tol
        Adaptive scheme only: relative L2 error allowed per step (default 1e-9).
    max_amplitude
        Blow-up bound on ``max|u|``; default ``1e3 * max(1, max|u0|)`` set with the state.
    """

    def __init__(
        self,
        grid: Grid,
        equation: Equation,
        scheme: str = "etdrk4",
        dt: float = 1e-3,
        tol: float | None = None,
        max_amplitude: float | None = None,
    ) -> None:
        if not isinstance(grid, Grid):
            raise ConfigError(
                f"Simulation: grid must be a kdvsweep.Grid, got {type(grid).__name__}"
            )
        if not isinstance(equation, Equation):
            raise ConfigError(
                f"Simulation: equation must be a kdvsweep.Equation, got {type(equation).__name__}"
            )
        if scheme not in SCHEMES:
            raise ConfigError(f"Simulation: unknown scheme {scheme!r}; expected one of {SCHEMES}")
        if tol is not None and scheme != "adaptive":
            raise ConfigError(
                f"Simulation: tol applies to the adaptive scheme only, not {scheme!r}"
            )
        self.grid = grid
        self.equation = equation
        self.scheme = scheme
        self._core = _core.Simulation(
            grid.n,
            grid.length,
            equation.coefficients,
            equation.dealias_fraction,
            scheme,
            float(dt),
            float(tol if tol is not None else 1e-9),
            None if max_amplitude is None else float(max_amplitude),
        )

    def set_state(self, u0: object, time: float = 0.0) -> None:
        """Set the state to the profile ``u0`` (length ``grid.n``) at ``time``."""
        if not math.isfinite(time):
            raise ConfigError(f"set_state: time must be finite, got {time}")
        self._core.set_state(as_profile(u0, self.grid.n, "u0"), float(time))

    def advance(self, duration: float) -> None:
        """Step forward by ``duration`` (not to it); releases the GIL while stepping."""
        self._core.advance(float(duration))

    def record(self, times: object) -> np.ndarray:
        """Advance through the increasing ``times`` (all >= ``time``) and return the states there.

        Returns an array of shape ``(len(times), n)``; each row is the state exactly at that time.
        """
        arr = np.ascontiguousarray(np.asarray(times, dtype=np.float64))
        if arr.ndim != 1 or arr.size == 0:
            raise ShapeError(f"record: times must be a non-empty 1-D array, got shape {arr.shape}")
        return self._core.record(arr)

    @property
    def time(self) -> float:
        """The current time."""
        return self._core.time

    @property
    def state(self) -> np.ndarray:
        """A copy of the current profile."""
        return self._core.state

    @property
    def steps(self) -> int:
        """Accepted steps taken since the state was set."""
        return self._core.steps

    @property
    def rejected(self) -> int:
        """Rejected trial steps (adaptive scheme; 0 otherwise)."""
        return self._core.rejected

    def invariants(self) -> dict[str, float]:
        """Mass ``int u``, momentum ``int u^2`` and energy (the Hamiltonian) of the current state."""
        return invariants(self.state, self.grid, self.equation)

    def __repr__(self) -> str:
        return (
            f"Simulation(n={self.grid.n}, length={self.grid.length}, equation={self.equation.name!r}, "
            f"scheme={self.scheme!r}, time={self.time:.6g}, steps={self.steps})"
        )


def invariants(u: object, grid: Grid, equation: Equation) -> dict[str, float]:
    """The first three conserved quantities of a profile, computed spectrally.

    ``mass = int u``, ``momentum = int u^2``, ``energy = int (a u^3/6 + b u^4/12 - d u_x^2/2
    + f u_xx^2/2)`` (the Hamiltonian of the conservative part).
    """
    mass, momentum, energy = _core.invariants(
        as_profile(u, grid.n), grid.length, equation.coefficients
    )
    return {"mass": mass, "momentum": momentum, "energy": energy}


__all__ = ["SCHEMES", "Simulation", "invariants"]
