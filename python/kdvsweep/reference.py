"""Plain NumPy implementations of the four time-stepping schemes of the Rust core.

Same model, grid, dealiasing rule and step formulas as the core, written the way a careful NumPy
user would: ``numpy.fft`` real transforms, vectorised stages, exponentials and scheme coefficients
computed once per step size. They serve as an independent check of the core (the two agree to
round-off on the same steps) and as the baseline of ``kdvsweep.bench``.

The model is ``u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = -g u + v u_xx`` on ``[-L/2, L/2)``;
the state is held as its real-to-complex spectrum ``rfft(u)`` (``n/2 + 1`` modes,
``k_j = 2 pi j / L``). Nothing here needs the compiled module.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from .exceptions import ConfigError, NumericalError, ShapeError
from .model import Equation, Grid
from .simulation import DEFAULT_DT, DEFAULT_SCHEME, DEFAULT_TOL, SCHEMES, step_options

#: Points on the contour around each ``z = h L`` (Kassam & Trefethen 2005 use 64).
CONTOUR_POINTS = 64

# Adaptive step control: safety factor and the bounds on the step change per trial.
_SAFETY = 0.9
_SHRINK_LIMIT = 0.2
_GROWTH_LIMIT = 5.0
# Accepted growth below this keeps the step (hysteresis, as the core: it reuses its exponentials).
_HOLD_LIMIT = 1.25

Spectrum = np.ndarray
Nonlinear = Callable[[Spectrum], Spectrum]


def linear_symbol(grid: Grid, equation: Equation) -> np.ndarray:
    """The Fourier symbol ``L(k) = i d k^3 - i f k^5 - g - v k^2`` on the ``n/2 + 1`` modes.

    The odd (imaginary, dispersive) part is set to zero at the Nyquist mode ``j = n/2``: a real
    signal cannot carry an odd derivative there.
    """
    k = grid.k
    odd = equation.d * k**3 - equation.f * k**5
    odd[-1] = 0.0
    return 1j * odd - equation.g - equation.v * k**2


def kept_modes(grid: Grid, fraction: float) -> int:
    """Number of modes ``j < fraction * n/2`` kept by the dealiasing rule (modes ``0..kept``).

    The small slack makes a cut that lands on an integer up to round-off (``2/3 * 192``) exclude
    that mode, as the core does.
    """
    return min(max(math.ceil(fraction * (grid.n // 2) - 1e-9), 1), grid.n // 2 + 1)


def dealias_mask(grid: Grid, fraction: float) -> np.ndarray:
    """1.0 on the modes ``j < fraction * n/2`` kept in the nonlinear term, 0.0 elsewhere."""
    mask = np.zeros(grid.n // 2 + 1)
    mask[: kept_modes(grid, fraction)] = 1.0
    return mask


def nonlinear_term(grid: Grid, equation: Equation) -> Nonlinear:
    """``N(v) = -i k P rfft(a u^2/2 + b u^3/3)`` with ``u = irfft(P v)``, as a function of ``v``.

    ``P`` keeps the modes of :func:`dealias_mask` (Orszag's rule, applied to the argument and to
    the result, as in the core). One inverse and one forward transform per call; the constants are
    folded into the multiplier so that pure KdV and mKdV cost a single product in physical space.
    """
    n = grid.n
    a, b = equation.a, equation.b
    kept = kept_modes(grid, equation.dealias_fraction)
    deriv = -1j * grid.k * dealias_mask(grid, equation.dealias_fraction)

    # irfft pads the truncated spectrum with zeros: the projection costs nothing.
    if b == 0.0:
        mult = deriv * (0.5 * a)

        def quadratic(v: Spectrum) -> Spectrum:
            u = np.fft.irfft(v[:kept], n)
            return mult * np.fft.rfft(u * u)

        return quadratic
    if a == 0.0:
        mult = deriv * (b / 3.0)

        def cubic(v: Spectrum) -> Spectrum:
            u = np.fft.irfft(v[:kept], n)
            return mult * np.fft.rfft(u * u * u)

        return cubic
    half_a, third_b = 0.5 * a, b / 3.0

    def mixed(v: Spectrum) -> Spectrum:
        u = np.fft.irfft(v[:kept], n)
        return deriv * np.fft.rfft(u * u * (half_a + third_b * u))

    return mixed


def contour_mean(z: np.ndarray, phi: Callable[[np.ndarray], np.ndarray], points: int) -> np.ndarray:
    """Mean of ``phi`` over ``points`` points on the unit circle around each ``z``.

    Kassam & Trefethen (2005), SIAM J. Sci. Comput. 26, 1214 (journal details from memory): the
    mean equals ``phi(z)`` for the entire functions of ETDRK4 and avoids the cancellation of the
    direct formulas near ``z = 0``.
    """
    r = np.exp(2j * np.pi * (np.arange(1, points + 1) - 0.5) / points)
    return phi(z[:, None] + r[None, :]).mean(axis=1)


def etdrk4_coefficients(
    symbol: np.ndarray, h: float, points: int = CONTOUR_POINTS
) -> tuple[np.ndarray, ...]:
    """``(E, E2, Q, f1, f2, f3)`` of ETDRK4 for the step ``h``.

    Cox & Matthews (2002), J. Comput. Phys. 176, 430 (journal details from memory).
    ``E = exp(h L)``, ``E2 = exp(h L/2)``; ``Q, f1, f2, f3`` by contour means around ``z = h L``
    (Kassam & Trefethen 2005).
    """
    z = h * symbol

    def q(w: np.ndarray) -> np.ndarray:
        return (np.exp(w / 2) - 1) / w

    def phi1(w: np.ndarray) -> np.ndarray:
        return (-4 - w + np.exp(w) * (4 - 3 * w + w * w)) / w**3

    def phi2(w: np.ndarray) -> np.ndarray:
        return (2 + w + np.exp(w) * (w - 2)) / w**3

    def phi3(w: np.ndarray) -> np.ndarray:
        return (-4 - 3 * w - w * w + np.exp(w) * (4 - w)) / w**3

    coefs = [h * contour_mean(z, phi, points) for phi in (q, phi1, phi2, phi3)]
    e2 = np.exp(z / 2)
    return (e2 * e2, e2, *coefs)


def spectral_norm(v: Spectrum, n: int) -> float:
    """The discrete L2 norm ``sqrt(sum u_j^2)`` of ``u = irfft(v, n)``, from the half spectrum.

    Parseval for the real-to-complex transform: modes ``0 < j < n/2`` stand for two.
    """
    power = 2.0 * np.vdot(v, v).real - abs(v[0]) ** 2 - abs(v[-1]) ** 2
    return math.sqrt(max(power, 0.0) / n)


class _Scheme:
    """Common part of the steppers: the symbol, the nonlinear term and a per-step-size cache."""

    stages = 4

    def __init__(self, grid: Grid, equation: Equation) -> None:
        self.n = grid.n
        self.symbol = linear_symbol(grid, equation)
        self.nonlinear = nonlinear_term(grid, equation)
        self._cache: list[tuple[float, tuple[np.ndarray, ...]]] = []

    def coefficients(self, h: float) -> tuple[np.ndarray, ...]:
        """The arrays the step needs for step size ``h``, kept for the two latest sizes.

        Sizes equal to 1e-12 relative share a set: equal intervals computed by different
        subtractions differ in the last bits (the core's rule too).
        """
        for i, (hc, coefs) in enumerate(self._cache):
            if abs(hc - h) <= 1e-12 * abs(h):
                self._cache.insert(0, self._cache.pop(i))
                return coefs
        coefs = self._build(h)
        self._cache = [(h, coefs), *self._cache[:1]]
        return coefs

    def _build(self, h: float) -> tuple[np.ndarray, ...]:
        raise NotImplementedError

    def step(self, v: Spectrum, h: float) -> Spectrum:
        """Return the spectrum one step ``h`` after ``v``."""
        raise NotImplementedError


class IFRK4(_Scheme):
    """Integrating-factor RK4 as in Trefethen (2000), *Spectral Methods in MATLAB*, Program 27."""

    def _build(self, h: float) -> tuple[np.ndarray, ...]:
        e = np.exp(0.5 * h * self.symbol)
        return e, e * e

    def step(self, v: Spectrum, h: float) -> Spectrum:
        """One step of size ``h`` from the spectrum ``v``."""
        e, e2 = self.coefficients(h)
        nl = self.nonlinear
        a = h * nl(v)
        b = h * nl(e * (v + 0.5 * a))
        c = h * nl(e * v + 0.5 * b)
        d = h * nl(e2 * v + e * c)
        return e2 * v + (e2 * a + 2.0 * e * (b + c) + d) / 6.0


class ETDRK4(_Scheme):
    """ETDRK4 (Cox & Matthews 2002), coefficients by contour means (Kassam & Trefethen 2005)."""

    def _build(self, h: float) -> tuple[np.ndarray, ...]:
        return etdrk4_coefficients(self.symbol, h)

    def step(self, v: Spectrum, h: float) -> Spectrum:
        """One step of size ``h`` from the spectrum ``v``."""
        e, e2, q, f1, f2, f3 = self.coefficients(h)
        nl = self.nonlinear
        nv = nl(v)
        a = e2 * v + q * nv
        na = nl(a)
        b = e2 * v + q * na
        nb = nl(b)
        c = e2 * a + q * (2.0 * nb - nv)
        nc = nl(c)
        return e * v + f1 * nv + 2.0 * f2 * (na + nb) + f3 * nc


class Strang(_Scheme):
    """Strang splitting: exact half linear step, RK4 on ``v_t = N(v)``, exact half linear step."""

    def _build(self, h: float) -> tuple[np.ndarray, ...]:
        return (np.exp(0.5 * h * self.symbol),)

    def step(self, v: Spectrum, h: float) -> Spectrum:
        """One step of size ``h`` from the spectrum ``v``."""
        (e,) = self.coefficients(h)
        nl = self.nonlinear
        w = e * v
        k1 = nl(w)
        k2 = nl(w + 0.5 * h * k1)
        k3 = nl(w + 0.5 * h * k2)
        k4 = nl(w + h * k3)
        w = w + (h / 6.0) * (k1 + 2.0 * (k2 + k3) + k4)
        return e * w


class AdaptiveIFRK4(IFRK4):
    """IFRK4 with the FSAL embedded third-order companion (weights 1/6, 1/3, 1/3, 0, 1/6).

    The companion reuses the four RK4 stages and ``N(v_new)``, which is also the first stage of the
    next step, so an accepted step costs four nonlinear evaluations like the fixed-step scheme.
    The error estimate is ``(h/6)(N4 - N5)`` at ``t + h``, measured relative to ``|v_new|``.
    """

    def trial(self, v: Spectrum, nv: Spectrum, h: float) -> tuple[Spectrum, Spectrum, float]:
        """One trial step from ``v`` (with ``nv = N(v)``): ``(v_new, N(v_new), relative error)``."""
        e, e2 = self.coefficients(h)
        nl = self.nonlinear
        a = h * nv
        b = h * nl(e * (v + 0.5 * a))
        c = h * nl(e * v + 0.5 * b)
        n4 = nl(e2 * v + e * c)
        v_new = e2 * v + (e2 * a + 2.0 * e * (b + c) + h * n4) / 6.0
        n5 = nl(v_new)
        scale = spectral_norm(v_new, self.n)
        error = spectral_norm((h / 6.0) * (n4 - n5), self.n)
        return v_new, n5, (error / scale if scale > 0 else error)


_FIXED: dict[str, type[_Scheme]] = {"ifrk4": IFRK4, "etdrk4": ETDRK4, "strang": Strang}


class ReferenceSimulation:
    """NumPy counterpart of :class:`kdvsweep.Simulation` (same parameters and stepping rules).

    Parameters
    ----------
    grid, equation
        The periodic grid and the equation.
    scheme
        ``"etdrk4"`` (default), ``"ifrk4"``, ``"strang"`` or ``"adaptive"``.
    dt
        The step (fixed schemes) or the first trial step (adaptive). An interval that is not a whole
        number of steps is crossed with the largest equal steps of at most ``dt``.
    tol
        Adaptive scheme only: relative L2 error allowed per step (default 1e-9).
    """

    def __init__(
        self,
        grid: Grid,
        equation: Equation,
        scheme: str = DEFAULT_SCHEME,
        dt: float = DEFAULT_DT,
        tol: float | None = None,
    ) -> None:
        try:
            step, tolerance = step_options(scheme, dt, tol)
        except ConfigError as err:
            raise ConfigError(f"ReferenceSimulation: {err}") from None
        self.grid = grid
        self.equation = equation
        self.scheme = scheme
        self.dt = step
        self.tol = DEFAULT_TOL if tolerance is None else tolerance
        self._stepper = (
            AdaptiveIFRK4(grid, equation)
            if scheme == "adaptive"
            else _FIXED[scheme](grid, equation)
        )
        self._v = np.zeros(grid.n // 2 + 1, dtype=np.complex128)
        self._nv: Spectrum | None = None
        self._h = self.dt
        self.time = 0.0
        self.steps = 0
        self.rejected = 0

    def set_state(self, u0: object, time: float = 0.0) -> None:
        """Set the state to the profile ``u0`` (length ``grid.n``) at ``time``."""
        u = np.asarray(u0, dtype=np.float64)
        if u.shape != (self.grid.n,):
            raise ShapeError(f"set_state: u0 must have shape ({self.grid.n},), got {u.shape}")
        if not np.all(np.isfinite(u)):
            raise ConfigError("set_state: u0 must be finite")
        self._v = np.fft.rfft(u)
        self._nv = None
        self._h = self.dt
        self.time = float(time)
        self.steps = 0
        self.rejected = 0

    @property
    def state(self) -> np.ndarray:
        """The current profile (a new array)."""
        return np.fft.irfft(self._v, self.grid.n)

    @property
    def spectrum(self) -> np.ndarray:
        """A copy of the current real-to-complex spectrum ``rfft(u)``."""
        return self._v.copy()

    def advance(self, duration: float) -> None:
        """Step forward by ``duration`` (not to it)."""
        if not (math.isfinite(duration) and duration >= 0):
            raise ConfigError(f"advance: duration must be a finite number >= 0, got {duration}")
        self._advance_to(self.time + duration)

    def record(self, times: object) -> np.ndarray:
        """Advance through the increasing ``times``; return the states there, shape ``(m, n)``."""
        arr = np.asarray(times, dtype=np.float64)
        if arr.ndim != 1 or arr.size == 0:
            raise ShapeError(f"record: times must be a non-empty 1-D array, got shape {arr.shape}")
        if not np.all(np.isfinite(arr)) or np.any(np.diff(arr) < 0):
            raise ConfigError(f"record: times must be finite and non-decreasing, got {arr}")
        frames = np.empty((arr.size, self.grid.n))
        for i, t in enumerate(arr):
            self._advance_to(float(t))
            frames[i] = self.state
        return frames

    def _advance_to(self, target: float) -> None:
        span = target - self.time
        # Spans within round-off of zero take no step (the core's rule).
        slack = 1e-12 * max(abs(self.time), abs(target), 1.0)
        if span < -slack:
            raise ConfigError(f"advance: time {target} is before the current time {self.time}")
        if span > slack:
            if self.scheme == "adaptive":
                self._advance_adaptive(target, slack)
            else:
                self._advance_fixed(target, span)
            if not np.all(np.isfinite(self._v)):
                raise NumericalError(f"advance: the state became non-finite before t = {target}")
        self.time = max(self.time, target)

    def _advance_fixed(self, target: float, span: float) -> None:
        # Largest equal steps of at most dt; a span that is a whole number of steps up to
        # round-off (1.0 / 0.1) takes exactly that many.
        ratio = span / self.dt
        whole = abs(ratio - round(ratio)) <= 1e-9 * max(ratio, 1.0)
        count = max(1, round(ratio) if whole else math.ceil(ratio))
        h = span / count
        v, step = self._v, self._stepper.step
        for _ in range(count):
            v = step(v, h)
        self._v = v
        self.time = target
        self.steps += count

    def _advance_adaptive(self, target: float, slack: float) -> None:
        stepper = self._stepper
        assert isinstance(stepper, AdaptiveIFRK4)
        v = self._v
        nv = stepper.nonlinear(v) if self._nv is None else self._nv
        while target - self.time > slack:
            remaining = target - self.time
            landing = self._h >= remaining
            h = remaining if landing else self._h
            v_new, n_new, err = stepper.trial(v, nv, h)
            if not math.isfinite(err):
                raise NumericalError(f"advance: non-finite error estimate at t = {self.time:.6g}")
            factor = _GROWTH_LIMIT if err == 0 else _SAFETY * (self.tol / err) ** 0.25
            factor = min(max(factor, _SHRINK_LIMIT), _GROWTH_LIMIT)
            if err <= self.tol:
                if 1.0 <= factor < _HOLD_LIMIT:
                    factor = 1.0
                v, nv = v_new, n_new
                self.time = target if landing else self.time + h
                self.steps += 1
                # A step shortened to land on the target says nothing about the next one,
                # unless it asks for a smaller step still.
                self._h = min(self._h, h * factor) if landing else h * factor
            else:
                self.rejected += 1
                self._h = h * min(factor, 1.0)
                if self._h < 1e-14 * max(abs(self.time), 1.0):
                    raise NumericalError(
                        f"advance: step size {self._h:.3g} underflows at t = {self.time:.6g}; "
                        f"tolerance {self.tol:g} cannot be met"
                    )
        self._v, self._nv = v, nv
        self.time = target


__all__ = [
    "CONTOUR_POINTS",
    "ETDRK4",
    "IFRK4",
    "SCHEMES",
    "AdaptiveIFRK4",
    "ReferenceSimulation",
    "Strang",
    "contour_mean",
    "dealias_mask",
    "etdrk4_coefficients",
    "kept_modes",
    "linear_symbol",
    "nonlinear_term",
    "spectral_norm",
]
