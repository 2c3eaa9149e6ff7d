"""The user-facing simulation: a thin layer over the Rust stepper that checks and coerces inputs.

This module is the one home of the step options: the scheme names (:data:`SCHEMES`, read from the
compiled core), the defaults :data:`DEFAULT_DT` and :data:`DEFAULT_TOL`, the rule that a
tolerance belongs to the adaptive scheme only (:func:`step_options`), each fixed-step scheme's
measured stable step (:data:`STEP_RULE`, :func:`dt_limit`) and the resolution of a profile's
spectrum (:func:`spectrum_decades`, :data:`WARN_DECADES`); sweeps and :meth:`Simulation.check`
use them.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

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


class SetupWarning(UserWarning):
    """A simulation's step or grid is outside the measured safe rules (:meth:`Simulation.check`)."""


@dataclass(frozen=True)
class StepRule:
    """A fixed-step scheme's largest safe step: ``dt * rate_nl <= nonlinear`` and
    ``dt * sqrt(rate_nl * rate_lin) <= mixed`` (:func:`nonlinear_rate`, :func:`linear_rate`)."""

    nonlinear: float
    mixed: float = math.inf

    def limit(self, rate_nl: ArrayLike, rate_lin: ArrayLike) -> Any:
        """The largest safe step for these rates (inf when the nonlinear rate is 0); a float, or
        an array for arrays of rates."""
        nl = np.asarray(rate_nl, dtype=np.float64)
        with np.errstate(all="ignore"):
            product = np.sqrt(nl * np.asarray(rate_lin, dtype=np.float64))
            mixed = np.where(product > 0, self.mixed / product, math.inf)
            own = self.nonlinear / nl
            out = np.where(nl > 0, np.where(mixed < own, mixed, own), math.inf)
        return float(out) if out.ndim == 0 else out


#: Safety factor: the Strang and IFRK4 constants of :data:`STEP_RULE` are this times the smallest
#: limit measured on resolved grids.
STEP_SAFETY = 0.8

#: The smallest limits measured on grids that resolve the soliton (no resolution warning):
#: Strang's ``dt * rate_nl`` and IFRK4's ``dt * sqrt(rate_nl * rate_lin)`` (see :data:`STEP_RULE`).
MEASURED_STRANG = 2.86
MEASURED_IFRK4 = 5.17

#: The fixed-step schemes' step rules (the adaptive scheme chooses its own step and has none).
#:
#: Our measurement (2026-12-02, ``kdvsweep bench --steps`` with its defaults and with
#: ``--fifth=-0.001,0.001,0.01``; :mod:`kdvsweep.steplimits`): the largest step, by bisection to
#: 10 %, with which one soliton of KdV and of focusing mKdV (kappa = 0.5, 1, 2; n = 256 to 4096 on
#: a box of 40 widths of the kappa = 1 soliton: 6 to 100 points per width) crosses its box twice
#: with neither a blow-up, nor an error against the exact soliton that keeps growing (above 1e-6
#: and 8 times the largest of the first half), nor one above 30 %. "Resolved": grids with no
#: resolution warning (11.2 points per width for KdV, 14.9 for mKdV).
#:
#: - ETDRK4 never became unstable: every limit found is where the soliton is lost (error above
#:   30 %), at a fixed dt for each soliton (0.0184 for the KdV kappa = 1 one, whatever n): an
#:   accuracy limit, dt * rate_nl = 4.6 to 47 on resolved grids (2.1 to 3 on the coarsest). Its
#:   rule keeps the former rule of thumb ``2 sqrt 2``, below all of those but the unresolved ones.
#: - Strang (an RK4 substep of the nonlinear flow) blows up at dt * rate_nl = 2.86 to 3.4 on
#:   resolved grids, tending to the RK4 bound ``2 sqrt 2`` on the imaginary axis as n grows;
#:   fifth-order dispersion does not change it. On unresolved grids the soliton is lost first
#:   (1.3 to 2.4).
#: - IFRK4 blows up, or its error grows exponentially, at a step that falls like 1/n: dt * rate_nl
#:   ranged over 0.086 to 1.6, while the product form dt * sqrt(rate_nl * rate_lin) stayed within
#:   5.2 to 9.5 on resolved grids (4.0 to 6.2 on unresolved ones), KdV and mKdV alike. The
#:   integrating factor turns the coupling of a mode k to the data's modes q at the frequency
#:   ``omega'(k) q``, which the RK4 stages sample. Fifth-order dispersion enters through
#:   :func:`linear_rate`: f = +-0.001 kept the product form within the spread (8.0, 8.7 at n = 512),
#:   f = 0.01 raised it (12): the rule is cautious there. Its bound on rate_nl alone is the RK4
#:   substep's, as for Strang (it never bound on the solitons measured).
STEP_RULE: dict[str, StepRule] = {
    "etdrk4": StepRule(nonlinear=2.0 * math.sqrt(2.0)),
    "ifrk4": StepRule(nonlinear=STEP_SAFETY * MEASURED_STRANG, mixed=STEP_SAFETY * MEASURED_IFRK4),
    "strang": StepRule(nonlinear=STEP_SAFETY * MEASURED_STRANG),
}


def dt_limit(
    scheme: str, max_u: float | np.ndarray, equation: Equation, dx: float | np.ndarray
) -> Any:
    """The largest safe step of ``scheme`` (:data:`STEP_RULE`) for data of peak ``max_u`` on a
    grid of spacing ``dx``; inf for the adaptive scheme (its error control picks the step) and
    for a linear equation. A float, or an array for arrays of peaks and spacings (runs of a
    sweep)."""
    rule = STEP_RULE.get(scheme)
    if rule is None:
        shape = np.broadcast(np.asarray(max_u), np.asarray(dx)).shape
        return math.inf if not shape else np.full(shape, math.inf)
    rate = nonlinear_rate(max_u, equation.a, equation.b, equation.dealias_fraction, dx)
    return rule.limit(rate, linear_rate(equation, dx))


def step_warning(scheme: str, dt: float, max_u: float, equation: Equation, dx: float) -> str | None:
    """A one-line warning when ``dt`` exceeds :func:`dt_limit`, naming the safe step; else None."""
    limit = dt_limit(scheme, max_u, equation, dx)
    if not dt > limit:
        return None
    return (
        f"dt = {dt:g} exceeds the measured stable step of {scheme} for max|u| = {max_u:.3g} on "
        f"dx = {dx:.3g}: use dt <= {limit:.3g} (kdvsweep.simulation.STEP_RULE)"
    )


#: Decades of spectrum that a resolved profile keeps at the dealiasing cutoff (the double precision
#: level; below it a sweep warns) and below which a sweep refuses the grid (common practice, no
#: source: the profile's spectrum would still be at 1e-6 where the nonlinear term is cut).
WARN_DECADES = 16
REFUSE_DECADES = 6
#: The round-off floor of a spectrum: this many ``eps log2(n)`` times the profile's L2 norm (the
#: error of the transform; measured: resolved solitons stop 10 to 200 times above
#: ``eps sqrt(n) rms``, below this floor).
ROUNDOFF_FACTOR = 16.0


def spectrum_decades(u: object, dealias: float) -> float:
    """Decades between the peak of the profile's spectrum (mode 0 left out: a constant needs no
    resolution) and its largest mode at or beyond the dealiasing cutoff ``dealias n / 2``.

    inf when the spectrum there is at the round-off floor of the transform (:data:`ROUNDOFF_FACTOR`):
    the profile is resolved to double precision; also inf for a zero profile and for one whose
    transform overflows (other checks refuse such data). The spectrum is ``numpy.fft.rfft`` of
    ``u``.
    """
    arr = np.asarray(u, dtype=np.float64)
    n = arr.size
    with np.errstate(all="ignore"):  # data near the float64 limit: judged by other checks
        mag = np.abs(np.fft.rfft(arr))
        norm = float(np.sqrt(np.sum(arr * arr)))
    peak = float(mag[1:].max()) if mag.size > 1 else 0.0
    tail = float(mag[math.ceil(dealias * n / 2) :].max()) if mag.size > 1 else 0.0
    if not (peak > 0 and math.isfinite(peak) and math.isfinite(tail)):
        return math.inf
    eps = float(np.finfo(np.float64).eps)
    if tail <= ROUNDOFF_FACTOR * eps * math.log2(max(n, 2)) * norm:
        return math.inf
    return math.log10(peak / tail)


def resolution_warning(u: object, equation: Equation, grid: Grid) -> str | None:
    """A one-line warning when the profile ``u`` keeps fewer than :data:`WARN_DECADES` decades of
    its spectrum at the dealiasing cutoff (:func:`spectrum_decades`); else None.

    With a soliton form, the message also gives the points per width of the soliton as tall as
    ``max|u|`` (``SolitonForm.kappa_of_height``).
    """
    decades = spectrum_decades(u, equation.dealias_fraction)
    if not decades < WARN_DECADES:
        return None
    text = (
        f"the data keeps {decades:.1f} decades of its spectrum at the dealiasing cutoff, fewer "
        f"than {WARN_DECADES} (resolved data are at round-off there); refine the grid"
    )
    form = equation.soliton_form_or_none()
    top = float(np.max(np.abs(np.asarray(u, dtype=np.float64))))
    if form is not None and top > 0:
        try:
            width = float(form.width(form.kappa_of_height(top)))
        except (ConfigError, ValueError, ArithmeticError):  # no soliton of that height
            return text
        text += f" (a soliton of height {top:.3g} has {width / grid.dx:.1f} points per width)"
    return text


def nonlinear_rate(
    max_u: float | np.ndarray, a: float, b: float, dealias: float, dx: float | np.ndarray
) -> Any:
    """The nonlinear term's largest rate ``(|a| max|u| + |b| max u^2) k_cut``, with
    ``k_cut = dealias pi / dx`` the largest wavenumber the nonlinear term keeps (the largest
    frequency of the flux linearised about ``max|u|``), in float arithmetic that gives inf rather
    than raising when it overflows."""
    return (abs(a) * max_u + abs(b) * max_u * max_u) * dealias * math.pi / dx


def linear_rate(equation: Equation, dx: ArrayLike) -> Any:
    """The dispersive rate of the kept band: the largest ``k |omega'(k)| / 3`` for
    ``0 < k <= k_cut``, with ``omega(k) = d k^3 - f k^5`` the dispersion relation, that is the
    largest ``|d k^3 - (5/3) f k^5|`` (``|d| k_cut^3`` without ``f``; ``k_cut`` as in
    :func:`nonlinear_rate`).

    ``omega'(k) q`` is the frequency at which the integrating factor turns the coupling of a mode
    ``k`` to the data's modes ``q``; its product with :func:`nonlinear_rate` bounds IFRK4's step
    (:data:`STEP_RULE`). Fifth-order dispersion of the same sign as ``d`` slows the group velocity
    near the cutoff (``omega' = 3 d k^2 - 5 f k^4``) and so allows a longer step.
    """
    d, f = equation.d, equation.f
    k_cut = equation.dealias_fraction * math.pi / np.asarray(dx, dtype=np.float64)
    with np.errstate(all="ignore"):
        out = np.abs(
            d * k_cut * k_cut * k_cut - (5.0 / 3.0) * f * k_cut * k_cut * k_cut * k_cut * k_cut
        )
        if f != 0 and d / f > 0:  # interior extremum of d k^3 - 5/3 f k^5, where in the band
            k = math.sqrt(9.0 * d / (25.0 * f))
            top = abs(d * k * k * k - (5.0 / 3.0) * f * k * k * k * k * k)
            out = np.where((k < k_cut) & (top > out), top, out)
    return float(out) if out.ndim == 0 else out


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
    check
        When True, :meth:`set_state` issues each of :meth:`check`'s warnings as a
        :class:`SetupWarning` (``warnings.warn``). Default False: no check.

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
        check: bool = False,
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
        self.dt = dt
        self._check = bool(check)
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
        u = as_profile(u0, self.grid.n, "u0")
        self._core.set_state(u, float(time))
        if self._check:
            for message in self.check(u):
                warnings.warn(message, SetupWarning, stacklevel=2)

    def check(self, u: object = None) -> list[str]:
        """Warnings about this setup for the profile ``u`` (default: the current state), one line
        each: a step above the scheme's measured stable step (:func:`step_warning`,
        :data:`STEP_RULE`, taken at ``max|u|``; the adaptive scheme picks its own step), and a
        profile whose spectrum is not resolved at the dealiasing cutoff
        (:func:`resolution_warning`). An empty list when neither applies.

        ``max|u|`` of the profile is what the step rule sees: data whose peak grows later (mKdV
        solitons of opposite polarity meet at the sum of their amplitudes) need a smaller step.
        """
        arr = self.state if u is None else as_profile(u, self.grid.n)
        top = float(np.max(np.abs(arr))) if arr.size else 0.0
        found = [
            step_warning(self.scheme, self.dt, top, self.equation, self.grid.dx),
            resolution_warning(arr, self.equation, self.grid),
        ]
        return [f"Simulation: {text}" for text in found if text is not None]

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
    "MEASURED_IFRK4",
    "MEASURED_STRANG",
    "REFUSE_DECADES",
    "SCHEMES",
    "STEP_RULE",
    "STEP_SAFETY",
    "WARN_DECADES",
    "SetupWarning",
    "Simulation",
    "StepRule",
    "dt_limit",
    "invariants",
    "linear_rate",
    "memory_needed",
    "nonlinear_rate",
    "resolution_warning",
    "spectrum_decades",
    "step_options",
    "step_warning",
]
