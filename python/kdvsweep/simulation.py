"""The user-facing simulation: a thin layer over the Rust stepper that checks and coerces inputs.

This module is the one home of the step options: the scheme names (:data:`SCHEMES`, read from the
compiled core), the defaults :data:`DEFAULT_DT` and :data:`DEFAULT_TOL`, and the rule that a
tolerance belongs to the adaptive scheme only (:func:`step_options`).
"""

from __future__ import annotations

import math

import numpy as np

from . import _core
from .exceptions import ConfigError, ShapeError
from .model import Equation, Grid

#: The time-stepping schemes, in documented order (the core's own list).
SCHEMES: tuple[str, ...] = tuple(_core.SCHEMES)

#: The scheme used when none is named.
DEFAULT_SCHEME = "etdrk4"

#: The one scheme that takes a tolerance (and treats ``dt`` as its first trial step).
ADAPTIVE = "adaptive"

#: Default step (fixed schemes) or first trial step (adaptive).
DEFAULT_DT = 1e-3

#: Default relative L2 error per step of the adaptive scheme.
DEFAULT_TOL = 1e-9


def _positive(name: str, value: object) -> float:
    """``value`` as a finite positive float, or a one-line :class:`ConfigError` naming ``name``."""
    if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
        raise ConfigError(f"{name}: expected a finite positive number, got {value!r}")
    number = float(value)
    if not (math.isfinite(number) and number > 0):
        raise ConfigError(f"{name}: expected a finite positive number, got {number}")
    return number


def step_options(
    scheme: str, dt: float | None = None, tol: float | None = None
) -> tuple[float, float | None]:
    """Check the step options of ``scheme`` and fill in their defaults.

    Parameters
    ----------
    scheme
        One of :data:`SCHEMES`.
    dt
        The step (fixed schemes) or the first trial step (adaptive); ``None`` means
        :data:`DEFAULT_DT`.
    tol
        Relative L2 error allowed per step, in (0, 1): the adaptive scheme only; ``None`` means
        :data:`DEFAULT_TOL` for it.

    Returns
    -------
    tuple
        ``(dt, tol)`` as floats, with ``tol = None`` for a fixed-step scheme.

    Raises
    ------
    ConfigError
        For an unknown scheme, a ``dt`` or ``tol`` that is not a finite positive number, a ``tol``
        of 1 or more, or a ``tol`` given to a fixed-step scheme (one line naming the option).
    """
    if not isinstance(scheme, str) or scheme not in SCHEMES:
        raise ConfigError(
            f"scheme: unknown scheme {scheme!r}; expected one of {', '.join(SCHEMES)}"
        )
    step = DEFAULT_DT if dt is None else _positive("dt", dt)
    if scheme != ADAPTIVE:
        if tol is not None:
            raise ConfigError(
                f"tol: applies to the {ADAPTIVE} scheme only, not {scheme!r}; leave it out"
            )
        return step, None
    tolerance = DEFAULT_TOL if tol is None else _positive("tol", tol)
    if tolerance >= 1:
        raise ConfigError(f"tol: expected a relative tolerance below 1, got {tolerance}")
    return step, tolerance


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
        One of :data:`SCHEMES`: ``"etdrk4"`` (default), ``"ifrk4"``, ``"strang"`` or
        ``"adaptive"``.
    dt
        The step (fixed schemes) or the first trial step (adaptive); a record interval that is not a
        whole number of steps is crossed with the largest equal steps of at most ``dt``.
    tol
        Adaptive scheme only: relative L2 error allowed per step (default :data:`DEFAULT_TOL`).
    max_amplitude
        Blow-up bound on ``max|u|``; default ``1e3 * max(1, max|u0|)`` set with the state.
    time_limit
        Wall-clock seconds that stepping (:meth:`advance` and :meth:`record` together) may take
        since the state was set; checked every 256 steps. When it runs out the call raises
        :class:`~kdvsweep.exceptions.TimeLimitError` naming the limit and the time reached (the
        state stays valid there). ``None`` (default): no limit.

    Raises
    ------
    ConfigError
        For bad options (see :func:`step_options`), a ``time_limit`` that is not a finite positive
        number, or an equation the core rejects.
    OutOfMemoryError
        If the simulation's buffers cannot be allocated (checked before anything is built; the
        message names the memory needed).
    """

    def __init__(
        self,
        grid: Grid,
        equation: Equation,
        scheme: str = DEFAULT_SCHEME,
        dt: float = DEFAULT_DT,
        tol: float | None = None,
        max_amplitude: float | None = None,
        time_limit: float | None = None,
    ) -> None:
        if not isinstance(grid, Grid):
            raise ConfigError(
                f"Simulation: grid must be a kdvsweep.Grid, got {type(grid).__name__}"
            )
        if not isinstance(equation, Equation):
            raise ConfigError(
                f"Simulation: equation must be a kdvsweep.Equation, got {type(equation).__name__}"
            )
        dt, tol = step_options(scheme, dt, tol)
        limit = None if time_limit is None else _positive("time_limit", time_limit)
        self.grid = grid
        self.equation = equation
        self.scheme = scheme
        self._core = _core.Simulation(
            grid.n,
            grid.length,
            **equation.core_fields(),
            scheme=scheme,
            dt=dt,
            # A fixed-step scheme ignores the tolerance; the core takes one for every scheme.
            tol=DEFAULT_TOL if tol is None else tol,
            max_amplitude=None if max_amplitude is None else float(max_amplitude),
            time_limit=limit,
        )

    def set_state(self, u0: object, time: float = 0.0) -> None:
        """Set the state to the profile ``u0`` (length ``grid.n``) at ``time``."""
        if not math.isfinite(time):
            raise ConfigError(f"set_state: time must be finite, got {time}")
        self._core.set_state(as_profile(u0, self.grid.n, "u0"), float(time))

    def advance(self, duration: float) -> None:
        """Step forward by ``duration`` (not to it); releases the GIL while stepping.

        Raises :class:`~kdvsweep.exceptions.NumericalError` when the run goes unstable or when
        float64 times near the current time are too coarse for the step (a step must be at least
        1000 times the spacing of float64 numbers there), and
        :class:`~kdvsweep.exceptions.TimeLimitError` when the time limit runs out.
        """
        self._core.advance(float(duration))

    def record(self, times: object) -> np.ndarray:
        """Advance through the increasing ``times`` (all >= ``time``) and return the states there.

        Returns an array of shape ``(len(times), n)``; each row is the state exactly at that time.
        Raises :class:`~kdvsweep.exceptions.OutOfMemoryError` before any step if the frames cannot
        be allocated, and the errors of :meth:`advance`.
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
    def time_limit(self) -> float | None:
        """The wall-clock limit on stepping since the state was set, seconds (``None``: none)."""
        return self._core.time_limit

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


def memory_needed(n: int, frames: int = 0) -> int:
    """An upper bound of the bytes a run of ``n`` points that records ``frames`` frames allocates.

    The core's bound for a :class:`Simulation` (stage buffers, cached step coefficients and FFT
    plans; any scheme) plus the recorded frames (``frames * n`` float64 values). The core refuses
    a grid or a record whose memory cannot be reserved with
    :class:`~kdvsweep.exceptions.OutOfMemoryError`.
    """
    return _core.simulation_memory(int(n)) + 8 * int(frames) * int(n)


#: The names of :func:`invariants`, in order.
INVARIANTS = ("mass", "momentum", "energy")


def invariants(u: object, grid: Grid, equation: Equation) -> dict[str, float]:
    """The first three conserved quantities of a profile, computed spectrally.

    ``mass = int u``, ``momentum = int u^2``, ``energy = int (a u^3/6 + b u^4/12 - d u_x^2/2
    + f u_xx^2/2)`` (the Hamiltonian of the conservative part).
    """
    mass, momentum, energy = _core.invariants(
        as_profile(u, grid.n), grid.length, **equation.core_fields()
    )
    return dict(zip(INVARIANTS, (mass, momentum, energy), strict=True))


__all__ = [
    "ADAPTIVE",
    "DEFAULT_DT",
    "DEFAULT_SCHEME",
    "DEFAULT_TOL",
    "INVARIANTS",
    "SCHEMES",
    "Simulation",
    "invariants",
    "memory_needed",
    "step_options",
]
