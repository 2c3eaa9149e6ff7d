"""Exact solutions: one-solitons and Hirota N-solitons of KdV and mKdV (computed in the Rust core),
Gardner's solitary waves, the focusing-mKdV breather and the fifth-order ``sech^4`` solitary wave.

Solitons are given by ``kappa`` (KdV: amplitude ``2 kappa^2``; mKdV: amplitude ``2 kappa``; speed
``4 kappa^2`` in both canonical forms) and ``x0``, the phase constant: soliton ``i`` alone would be
centred at ``x0_i + 4 kappa_i^2 t``. In an N-soliton the interactions displace the centres from
``x0`` (Hirota 1971 for KdV, Hirota 1972 for mKdV). A general ``a`` (KdV) or ``b`` (mKdV) and ``d``
are reached by the exact scaling ``u = alpha w(x, d t)``.

The breather (:func:`breather`, :func:`breather_profile`) and the ``sech^4`` wave
(:func:`fifth_order_wave`, :class:`FifthOrderWave`) are closed forms evaluated in NumPy; the
README section "Exact waves" says how a sweep starts from them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from . import _core
from .exceptions import ConfigError, ShapeError
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

    ``signs`` (mKdV and Gardner) gives each soliton's polarity, +1 or -1 (default all +1; Gardner:
    the equation's own sign). The cost is ``len(x) * 2^N`` terms: for KdV and mKdV the evaluation
    runs in the core with the GIL released (other threads go on) and honours Ctrl-C; the Gardner
    one (:func:`gardner_multisoliton`) is evaluated in NumPy.

    Raises
    ------
    ConfigError
        For an equation without exact solitons, kappas that are not distinct and positive, or
        parameters whose solution would not be finite (an amplitude, travel ``4 kappa^2 t`` or
        phase ``2 kappa (x - 4 kappa^2 t - x0)`` that overflows float64).
    ShapeError
        For ``x0s`` or ``signs`` of another length than ``kappas``.
    """
    eq = Equation.coerce(equation, "exact")
    form = eq.soliton_form_or_none()
    if form is not None and form.family == "gardner" and not eq.perturbed:
        return gardner_multisoliton(x, t, kappas, x0s, eq, signs)
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


#: Most solitons :func:`gardner_multisoliton` sums (``2^N`` terms per point, in NumPy).
GARDNER_MAX_SOLITONS = 12


def gardner_multisoliton(
    x: ArrayLike,
    t: float,
    kappas: ArrayLike,
    x0s: ArrayLike,
    equation: str | Equation,
    signs: ArrayLike | None = None,
) -> np.ndarray:
    """The N-soliton of the Gardner equation ``u_t + (a u + b u^2) u_x + d u_xxx = 0``.

    In the canonical form ``w_t + 6 (w + mu w^2) w_x + w_xxx = 0`` (``u = alpha w(x, d t)``,
    :class:`kdvsweep.model.SolitonForm`):

        w = (i / sqrt(mu)) d/dx ln(f_- / f_+),
        f_+- = sum over subsets S of the solitons of
               exp(sum_{j in S} (eta_j + ln p_j^+-) + sum_{j < k in S} A_jk),

    with ``eta_j = 2 kappa_j (x - 4 kappa_j^2 t - x0_j)``, ``p_j^+- = s_j (1 +- 2 i sqrt(mu)
    kappa_j) / r_j``, ``r_j = sqrt(1 + 4 mu kappa_j^2)``, ``s_j`` the branch of soliton ``j`` (+1 on
    the equation's own polarity) and ``e^{A_jk} = ((kappa_j - kappa_k) / (kappa_j + kappa_k))^2``,
    KdV's interaction coefficient. For ``mu > 0`` the ``p_j^+-`` are complex conjugates of modulus
    1 and ``f_-`` is the conjugate of ``f_+``; for ``mu < 0`` they are real and positive and the
    formula holds as written (``sqrt(mu)`` imaginary). One soliton gives
    :meth:`SolitonForm.profile`; the pairwise ``A_jk`` give KdV's phase shifts
    (:func:`kdvsweep.theory.pair_shift`).

    This is the mKdV Hirota form (Hirota 1972, J. Phys. Soc. Jpn 33, 1456) with the phases the
    Gardner one-soliton needs; we did not find it printed in this form and checked it instead: the
    tests evaluate the PDE residual with numpy FFT derivatives and a fourth-order time difference
    (it falls like ``h^4`` to round-off, for both polarities, ``mu < 0`` and three solitons).
    Similar forms are published, e.g. for the two-layer fluid problem by Slyunyaev 2001 (JETP 92,
    529; from memory, not checked).

    Raises
    ------
    ConfigError
        For kappas that are not distinct and positive or beyond the table-top limit, polarities the
        equation has no wave of, more than :data:`GARDNER_MAX_SOLITONS` solitons, or an equation
        that is not an unperturbed Gardner one.
    ShapeError
        For ``x0s`` or ``signs`` of another length than ``kappas``.
    """
    eq = Equation.coerce(equation, "exact")
    form = eq.soliton_form_or_none()
    if form is None or form.family != "gardner" or eq.perturbed:
        raise ConfigError(
            f"exact: gardner_multisoliton needs an unperturbed Gardner equation, got {eq.describe()}"
        )
    ks = np.atleast_1d(np.asarray(kappas, dtype=np.float64))
    cs = np.atleast_1d(np.asarray(x0s, dtype=np.float64))
    count = ks.size
    own = np.full(count, form.sign) if signs is None else np.atleast_1d(np.asarray(signs))
    if cs.shape != ks.shape or own.shape != ks.shape:
        raise ShapeError(
            f"exact: x0s and signs need the shape of kappas {ks.shape}, got {cs.shape}, {own.shape}"
        )
    if not 0 < count <= GARDNER_MAX_SOLITONS:
        raise ConfigError(
            f"exact: 1 to {GARDNER_MAX_SOLITONS} Gardner solitons, got {count} (2^N terms)"
        )
    if not (np.all(np.isfinite(ks)) and np.all(ks > 0) and np.all(ks < form.max_kappa)):
        raise ConfigError(
            f"exact: kappas must be positive and below the table-top limit {form.max_kappa:.6g}, "
            f"got {ks.tolist()}"
        )
    if np.unique(ks).size != count:
        raise ConfigError(f"exact: kappas must be distinct, got {ks.tolist()}")
    if not np.all(np.isfinite(cs)) or not math.isfinite(float(t)):
        raise ConfigError("exact: x0s and t must be finite")
    branch = np.array([form._branch(int(s)) for s in own], dtype=np.float64)
    canonical_t = form.d * float(t)
    xs = np.asarray(x, dtype=np.float64)
    flat = xs.ravel()
    root = np.sqrt(complex(form.mu))
    r = np.sqrt(1.0 + 4.0 * form.mu * ks**2)
    log_plus = np.log(branch * (1.0 + 2j * root * ks) / r + 0j)
    log_minus = np.log(branch * (1.0 - 2j * root * ks) / r + 0j)
    eta = 2.0 * ks[:, None] * (flat[None, :] - 4.0 * ks[:, None] ** 2 * canonical_t - cs[:, None])
    pair = np.zeros((count, count))
    for j in range(count):
        for k in range(j + 1, count):
            pair[j, k] = 2.0 * math.log(abs(ks[j] - ks[k]) / (ks[j] + ks[k]))
    subsets = [np.array([(m >> j) & 1 for j in range(count)], dtype=bool) for m in range(2**count)]

    def exponent(m: np.ndarray) -> np.ndarray:
        return eta[m].sum(axis=0) + pair[np.ix_(m, m)].sum()

    top = np.max([exponent(m) for m in subsets], axis=0)  # scale out the largest term
    ratios = []
    for logs in (log_minus, log_plus):
        f = np.zeros(flat.shape, dtype=np.complex128)
        fx = np.zeros(flat.shape, dtype=np.complex128)
        for m in subsets:
            term = np.exp(exponent(m) - top + logs[m].sum())
            f += term
            fx += 2.0 * ks[m].sum() * term
        ratios.append(fx / f)
    w = (1j / root) * (ratios[0] - ratios[1])
    return (form.alpha * w.real).reshape(xs.shape)


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
    "GARDNER_MAX_SOLITONS",
    "FifthOrderWave",
    "breather",
    "breather_alpha",
    "breather_profile",
    "check_breather_parameters",
    "fifth_order_form",
    "fifth_order_obstacle",
    "fifth_order_wave",
    "gardner_multisoliton",
    "multisoliton",
    "soliton",
]
