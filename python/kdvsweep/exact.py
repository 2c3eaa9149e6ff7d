"""Exact solutions: one-solitons and Hirota N-solitons of KdV and mKdV (computed in the Rust core),
Gardner's solitary waves, the focusing-mKdV breather and the fifth-order ``sech^4`` solitary wave.

Solitons are given by ``kappa`` (KdV: amplitude ``2 kappa^2``; mKdV: amplitude ``2 kappa``; speed
``4 kappa^2`` in both canonical forms) and ``x0``, the phase constant: soliton ``i`` alone would be
centred at ``x0_i + 4 kappa_i^2 t``. In an N-soliton the interactions displace the centres from
``x0`` (Hirota 1971 for KdV, Hirota 1972 for mKdV). A general ``a`` (KdV) or ``b`` (mKdV) and ``d``
are reached by the exact scaling ``u = alpha w(x, d t)``.

The breather (:func:`breather`, :func:`breather_profile`) and the ``sech^4`` wave
(:func:`fifth_order_wave`, :class:`FifthOrderWave`) are closed forms evaluated in NumPy; the
README section "Initial data kinds" says how a sweep starts from them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from . import _core
from .exceptions import ConfigError
from .model import Equation, sech
from .spectrum import breather_speeds


def _coefficients(equation: str | Equation) -> tuple[str, float, float]:
    """``(family, nonlinear coefficient, d)`` of an unperturbed KdV or focusing mKdV equation."""
    eq = Equation.coerce(equation, "exact")
    form = eq.soliton_form_or_none()
    if form is None or eq.perturbed or form.family == "gardner":
        raise ConfigError(
            f"exact: no exact N-soliton for {eq.describe()}; expected an unperturbed KdV or "
            "focusing mKdV equation (Gardner: one solitary wave, exact.soliton)"
        )
    return form.family, (eq.a if form.family == "kdv" else eq.b), eq.d


def multisoliton(
    x: ArrayLike,
    t: float,
    kappas: ArrayLike,
    x0s: ArrayLike,
    equation: str | Equation = "kdv",
    signs: ArrayLike | None = None,
) -> np.ndarray:
    """The Hirota N-soliton at time ``t`` on the points ``x`` (up to 20 solitons).

    ``signs`` (mKdV only) gives each soliton's polarity, +1 or -1 (default all +1). The cost is
    ``len(x) * 2^N`` terms: the evaluation runs with the GIL released (other threads go on) and
    honours Ctrl-C.

    Raises
    ------
    ConfigError
        For an equation without exact solitons, kappas that are not distinct and positive, or
        parameters whose solution would not be finite (an amplitude, travel ``4 kappa^2 t`` or
        phase ``2 kappa (x - 4 kappa^2 t - x0)`` that overflows float64).
    ShapeError
        For ``x0s`` or ``signs`` of another length than ``kappas``.
    """
    kind, nonlin, disp = _coefficients(equation)
    xs = np.ascontiguousarray(np.asarray(x, dtype=np.float64).ravel())
    ks = np.ascontiguousarray(np.atleast_1d(np.asarray(kappas, dtype=np.float64)))
    cs = np.ascontiguousarray(np.atleast_1d(np.asarray(x0s, dtype=np.float64)))
    if kind == "kdv":
        if signs is not None:
            raise ConfigError("exact: signs apply to mKdV solitons only")
        out = _core.kdv_multisoliton(xs, float(t), ks, cs, nonlin, disp)
    else:
        sg = (
            np.ones_like(ks)
            if signs is None
            else np.atleast_1d(np.asarray(signs, dtype=np.float64))
        )
        out = _core.mkdv_multisoliton(xs, float(t), ks, cs, np.ascontiguousarray(sg), nonlin, disp)
    return out.reshape(np.shape(x))


def soliton(
    x: ArrayLike,
    t: float,
    kappa: float,
    x0: float = 0.0,
    equation: str | Equation = "kdv",
    sign: float = 1.0,
) -> np.ndarray:
    """One soliton: ``2 kappa^2 sech^2(kappa (x - 4 kappa^2 t - x0))`` for KdV,
    ``2 kappa sech(2 kappa (x - 4 kappa^2 t - x0))`` for focusing mKdV (canonical forms), and the
    Gardner solitary wave of polarity ``sign`` (:class:`kdvsweep.model.SolitonForm`, moving at
    ``4 d kappa^2``).

    Raises :class:`ConfigError` as :func:`multisoliton` does, e.g. for ``kappa = 1e200`` (the
    amplitude overflows), and for a Gardner ``kappa`` beyond the table-top limit or a polarity the
    equation has no wave of.
    """
    eq = Equation.coerce(equation, "exact")
    form = eq.soliton_form_or_none()
    if form is not None and form.family == "gardner" and not eq.perturbed:
        if not (np.isfinite(kappa) and kappa > 0):
            raise ConfigError(f"exact: kappa must be finite and positive, got {kappa}")
        centre = x0 + float(form.speed(kappa)) * float(t)
        return np.asarray(form.profile(x, float(kappa), centre, int(sign)))
    kind, _, _ = _coefficients(equation)
    return multisoliton(x, t, [kappa], [x0], equation, signs=None if kind == "kdv" else [sign])


# ----------------------------------------------------------------------------- the mKdV breather


def breather_profile(
    x: ArrayLike,
    eta: float,
    xi: float,
    centre: float = 0.0,
    phase: float = 0.0,
    alpha: float = 1.0,
) -> np.ndarray:
    """The mKdV breather at one instant: ``alpha 2 d/dx arctan[(eta/xi) cos(theta) sech(R)]``.

    ``theta = 2 xi (x - centre) + phase``, ``R = 2 eta (x - centre)``: the canonical breather of
    ``u_t + 6 u^2 u_x + u_xxx = 0`` (see :func:`breather`) scaled by ``alpha``
    (:attr:`kdvsweep.model.SolitonForm.alpha`). Written with ``sech`` so it never overflows.
    """
    z = np.asarray(x, dtype=np.float64) - centre
    theta = 2.0 * xi * z + phase
    r = 2.0 * eta * z
    s = sech(r)
    ratio = eta / xi
    f = ratio * np.cos(theta) * s
    fx = ratio * s * (-2.0 * xi * np.sin(theta) - 2.0 * eta * np.cos(theta) * np.tanh(r))
    return alpha * 2.0 * fx / (1.0 + f * f)


def breather_alpha(equation: str | Equation) -> float:
    """``alpha = sqrt(6 d / b)`` of an unperturbed focusing mKdV equation (``a = 0``, ``b d > 0``),
    the only equations with the breather here; :class:`ConfigError` naming why otherwise."""
    eq = Equation.coerce(equation, "exact")
    form = eq.soliton_form_or_none()
    if form is None or form.family != "mkdv" or eq.perturbed:
        raise ConfigError(
            f"breather: none for {eq.describe()}; expected unperturbed focusing mKdV "
            "(a = 0, b d > 0, f = g = v = 0)"
        )
    return form.alpha


def check_breather_parameters(eta: object, xi: object) -> None:
    """:class:`ConfigError` unless ``eta`` and ``xi`` are finite positive numbers."""
    for name, value in (("eta", eta), ("xi", xi)):
        if isinstance(value, bool) or not (
            isinstance(value, int | float | np.integer | np.floating)
            and math.isfinite(value)
            and value > 0
        ):
            raise ConfigError(f"breather: {name} must be a finite positive number, got {value!r}")


def breather(
    x: ArrayLike,
    t: float,
    eta: float,
    xi: float,
    x0: float = 0.0,
    phase: float = 0.0,
    equation: str | Equation = "mkdv",
) -> np.ndarray:
    """The breather of focusing mKdV with eigenvalue pair ``zeta = +-xi + i eta`` at time ``t``.

    Canonical form (``u_t + 6 u^2 u_x + u_xxx = 0``)::

        u = 2 d/dx arctan[(eta / xi) cos(theta) / cosh(R)],
        theta = 2 xi (x - x0 - c t) + phase,   R = 2 eta (x - x0 - v t),
        v = 4 (eta^2 - 3 xi^2) (envelope),     c = 4 (3 eta^2 - xi^2) (carrier),

    and seen from the envelope the carrier phase turns at ``omega = 2 xi (c - v) = 16 xi (eta^2
    + xi^2)`` (:func:`kdvsweep.spectrum.breather_speeds`). It is Hirota's 2-soliton of mKdV,
    ``u = 2 d/dx arctan(g / f)`` (Hirota 1972, J. Phys. Soc. Japan 33, 1456), with the complex-
    conjugate wavenumbers ``2 (eta +- i xi)``: the two exponentials combine to ``(eta / xi)
    cos(theta) / cosh(R)`` (Wadati 1973, J. Phys. Soc. Japan 34, 1289; Lamb 1980, "Elements of
    Soliton Theory", Ch. 5) [memory]. The envelope ``|u|`` peaks near ``4 eta``
    (:meth:`kdvsweep.model.SolitonForm.breather_amplitude`). As ``eta -> 0`` it becomes the
    linear wave packet ``-4 eta sin(theta) sech(R)`` of ``u_t + u_xxx = 0``, ``c`` and ``v``
    turning into the phase and group velocities ``-k^2`` and ``-3 k^2`` at ``k = 2 xi``.

    A general ``b`` and ``d`` (``a = 0``, ``b d > 0``) is the scaling ``u = alpha w(x, d t)``,
    ``alpha = sqrt(6 d / b)``: speeds and frequency are ``d`` times the canonical ones.

    Parameters
    ----------
    x, t
        Points and time.
    eta, xi
        Imaginary and real part of the eigenvalue pair, both > 0 (``xi -> 0`` is a double pole,
        not a breather).
    x0, phase
        Centre of the envelope and carrier phase at ``t = 0``.
    equation
        An unperturbed focusing mKdV equation.

    Raises
    ------
    ConfigError
        For another equation (one line naming it), or ``eta``, ``xi`` not finite and positive.
    """
    alpha = breather_alpha(equation)
    check_breather_parameters(eta, xi)
    d = Equation.coerce(equation, "exact").d
    v, _, omega = breather_speeds(float(eta), float(xi), d)
    return breather_profile(x, eta, xi, x0 + v * float(t), phase - omega * float(t), alpha)


# ----------------------------------------------------------------------------- fifth order


@dataclass(frozen=True)
class FifthOrderWave:
    """The ``sech^4`` solitary wave ``amplitude sech^4(k (x - x0 - speed t))`` of
    ``u_t + a u u_x + d u_xxx + f u_xxxxx = 0`` (:func:`fifth_order_form`)."""

    amplitude: float
    k: float
    speed: float

    def profile(self, x: ArrayLike, t: float = 0.0, x0: float = 0.0) -> np.ndarray:
        """The wave on the points ``x`` at time ``t`` (no periodic images)."""
        z = np.asarray(x, dtype=np.float64) - x0 - self.speed * float(t)
        return np.asarray(self.amplitude * sech(self.k * z) ** 4)

    @property
    def width(self) -> float:
        """``1 / (2 k)``: ``2/pi`` times the distance ``pi / (2 k)`` from the real axis to the
        profile's nearest complex singularity, as :meth:`kdvsweep.model.SolitonForm.width`
        measures a soliton."""
        return 0.5 / self.k

    @property
    def tail_length(self) -> float:
        """e-folding length ``1 / (4 k)`` of the tail."""
        return 0.25 / self.k


def fifth_order_form(equation: str | Equation) -> FifthOrderWave:
    """The ``sech^4`` solitary wave of ``u_t + a u u_x + d u_xxx + f u_xxxxx = 0``.

    Derivation: ``u = A sech^4(k z)``, ``z = x - c t``, integrated once, must satisfy
    ``-c u + a u^2 / 2 + d u_zz + f u_zzzz = 0``. With ``S = sech(k z)``, the second derivative of
    ``S^n`` is ``k^2 (n^2 S^n - n (n+1) S^(n+2))``, so ``u_zz = A k^2 (16 S^4 - 20 S^6)`` and
    ``u_zzzz = A k^4 (256 S^4 - 1040 S^6 + 840 S^8)``; the powers ``S^6``, ``S^8``, ``S^4`` give
    in turn::

        k^2 = -d / (52 f),   A = -105 d^2 / (169 a f),   c = -36 d^2 / (169 f).

    It exists only for ``d f < 0`` (``k`` real) and ``a != 0``; amplitude and speed are fixed by
    the equation (one wave, translated by ``x0``), its sign is that of ``a d``. Only with ``b =
    0`` (a cubic flux adds ``b u^3 / 3``, an ``S^12`` term nothing else cancels) and ``g = v =
    0``. Published for Kawahara's equation (Kawahara 1972, J. Phys. Soc. Japan 33, 260; the exact
    wave: Yamamoto & Takizawa 1981, J. Phys. Soc. Japan 50, 1421) [memory]: for ``u_t + u u_x +
    u_xxx - u_xxxxx = 0`` it is ``(105/169) sech^4((x - 36 t / 169) / (2 sqrt 13))``.

    Raises
    ------
    ConfigError
        One line naming the condition that fails (``b != 0``, ``a = 0``, ``g`` or ``v`` non-zero,
        ``d f >= 0``).
    """
    eq = Equation.coerce(equation, "exact")
    why = fifth_order_obstacle(eq)
    if why:
        raise ConfigError(f"fifth-order wave: none for {eq.describe()}: {why}")
    d, f, a = eq.d, eq.f, eq.a
    return FifthOrderWave(
        amplitude=-105.0 * d * d / (169.0 * a * f),
        k=math.sqrt(-d / (52.0 * f)),
        speed=-36.0 * d * d / (169.0 * f),
    )


def fifth_order_obstacle(equation: Equation) -> str:
    """Why ``equation`` has no ``sech^4`` wave (one clause), or ``""`` when it has one."""
    eq = equation
    if eq.b != 0:
        return f"b = {eq.b:g}; expected b = 0 (a cubic flux has no sech^4 wave)"
    if eq.a == 0:
        return "a = 0; expected a quadratic flux (a != 0)"
    if eq.g != 0 or eq.v != 0:
        return f"g = {eq.g:g}, v = {eq.v:g}; expected no damping and no viscosity"
    if not eq.d * eq.f < 0:
        return f"d f = {eq.d * eq.f:g}; expected d f < 0 (k^2 = -d / (52 f) > 0)"
    return ""


def fifth_order_wave(
    x: ArrayLike, t: float, x0: float = 0.0, equation: str | Equation = "kdv"
) -> np.ndarray:
    """The ``sech^4`` solitary wave of :func:`fifth_order_form` at time ``t``, centred at
    ``x0 + speed t``."""
    return fifth_order_form(equation).profile(x, t, x0)


__all__ = [
    "FifthOrderWave",
    "breather",
    "breather_alpha",
    "breather_profile",
    "check_breather_parameters",
    "fifth_order_form",
    "fifth_order_obstacle",
    "fifth_order_wave",
    "multisoliton",
    "soliton",
]
