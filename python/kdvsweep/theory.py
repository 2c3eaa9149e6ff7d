"""Analytic results for KdV, mKdV and Gardner soliton collisions: speeds, amplitudes, shifts.

Solitons are labelled by ``kappa``, the inverse-scattering parameter: the bound state
``lambda = -kappa^2`` of the Schrödinger problem for KdV, the Zakharov-Shabat eigenvalue
``zeta = i kappa`` for mKdV. In the canonical forms

* KdV ``u_t + 6 u u_x + u_xxx = 0``: ``u = 2 k^2 sech^2(k (x - 4 k^2 t - x0))``,
* focusing mKdV ``u_t + 6 u^2 u_x + u_xxx = 0``: ``u = ±2 k sech(2 k (x - 4 k^2 t - x0))``,

so both move at ``4 kappa^2`` and both tails decay as ``exp(-2 kappa |x|)``. A general
``u_t + a u u_x + d u_xxx = 0`` (or ``b u^2 u_x``) is the canonical one under
``u = alpha w(x, d t)`` with ``alpha = 6 d / a`` (or ``sqrt(6 d / b)``): positions are untouched,
so the phase shifts below hold for every such equation; speeds scale by ``d``, heights by
``|alpha|``.

Phase shift of soliton ``i`` in an N-soliton collision (every pair meets once), with the shift
``x_i^+ - x_i^-`` of the asymptotic centre line ``x_i ~ c_i t + x_i^±`` as ``t -> ±inf``:

    Delta x_i = (1/k_i) sum_{j != i} sign(k_i - k_j) ln((k_i + k_j) / |k_i - k_j|)

Derivation (KdV, two solitons): in Hirota's form ``u = 2 (ln tau)_xx`` with
``tau = 1 + e^{eta_1} + e^{eta_2} + A e^{eta_1 + eta_2}``,
``eta_i = 2 k_i (x - 4 k_i^2 t - x0_i)``, ``A = ((k_1 - k_2)/(k_1 + k_2))^2``. Following soliton 1
(``k_1 > k_2``), ``e^{eta_2} -> 0`` as ``t -> -inf`` so ``tau ~ 1 + e^{eta_1}``, while
``e^{eta_2} -> inf`` as ``t -> +inf`` so ``tau ~ e^{eta_2} (1 + A e^{eta_1})``; the factor
``e^{eta_2}`` is killed by two x-derivatives of the logarithm, and
``A e^{eta_1} = e^{eta_1 + ln A}`` moves the centre by ``-ln A / (2 k_1)``: the formula.
The N-soliton tau function has only pairwise factors ``A_ij``, so the shifts add pair by pair.
For mKdV the Hirota function ``f`` carries the same ``A_ij`` (the polarity enters only as a
constant phase ``i eps_i``), so same- and opposite-polarity pairs shift identically and, in
kappa, as KdV.

Gardner ``u_t + (a u + b u^2) u_x + d u_xxx = 0`` has the same shifts in kappa (its solitons
move at ``4 d kappa^2``, :class:`kdvsweep.model.SolitonForm`). Derivation, in the canonical form
``v_t + 6 (v + e^2 v^2) v_x + v_xxx = 0`` (``mu = e^2 > 0``): the Gardner transformation
``w = v + e v_x + e^2 v^2`` maps every solution ``v`` to a solution ``w`` of KdV ``w_t + 6 w w_x +
w_xxx = 0`` (Miura, Gardner & Kruskal 1968, J. Math. Phys. 9, 1204; from memory). It is local and
commutes with translations, so it maps a solitary wave of speed ``c`` to the KdV soliton of the
same speed (the only decaying travelling waves of KdV), centred at a fixed offset ``delta(kappa)``
from it; a Gardner 2-soliton, exactly two solitary waves as ``t -> +-inf``, maps to the KdV
2-soliton of the same kappas. The offsets cancel in ``x^+ - x^-``, so each Gardner soliton shifts as
the KdV soliton of its kappa, whatever the polarities. For ``mu < 0`` the map has imaginary ``e``;
the shifts, analytic in ``mu``, continue unchanged: the exact N-soliton
(:func:`kdvsweep.exact.gardner_multisoliton`), whose pair factors are KdV's, solves the equation for
either sign of ``mu`` (its residual is checked in the tests), and simulated pairs (``mu > 0``, both
polarities) match the formula to 1e-6. A
Gardner equation has no simple sum rule: ``d/dt int x u dx = int (a u^2 / 2 + b u^3 / 3)`` is not
conserved when ``a b != 0``.

Sources: Gardner, Greene, Kruskal & Miura 1974 (Comm. Pure Appl. Math. 27, 97); Ablowitz &
Segur 1981, *Solitons and the Inverse Scattering Transform*, SIAM, Ch. 1; Drazin & Johnson 1989,
*Solitons: an introduction*, CUP, Ch. 4 and Problem 4.6 (equation numbers from memory, not
checked); Hirota 1971 (Phys. Rev. Lett. 27, 1192) and 1972 (J. Phys. Soc. Jpn 33, 1456) for the
tau functions; Zakharov & Shabat 1972 (Sov. Phys. JETP 34, 62) for the mKdV/ZS shift. Pairwise
additivity: Zakharov 1971. Interaction regimes: Lax 1968 (Comm. Pure Appl. Math. 21, 467).
Bibliographic details (volumes, pages) are from memory.

Adiabatic (slowly varying) solitons under damping ``-g u`` and viscosity ``v u_xx`` on the right of
the equation: see :func:`adiabatic_kappa`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from .exceptions import ConfigError, ShapeError
from .model import Equation, SolitonForm

# Lax 1968: amplitude ratios of a KdV pair at which the interaction changes character.
LAX_EXCHANGE_LIMIT = (3.0 + math.sqrt(5.0)) / 2.0
LAX_SINGLE_PEAK_LIMIT = 3.0

REGIMES = ("exchange", "mixed", "absorb-emit")


def _form(equation: str | Equation) -> SolitonForm:
    """The soliton family of ``equation`` (ConfigError for an equation without one)."""
    eq = Equation.coerce(equation, "theory")
    form = eq.soliton_form_or_none()
    if form is None:
        raise ConfigError(
            "theory: soliton formulas cover KdV (a != 0, b = 0), focusing mKdV (b d > 0) and "
            "Gardner (a != 0, b != 0), with d != 0; "
            f"got {eq.describe()}"
        )
    return form


def _as_kappas(kappas: object, name: str = "kappas") -> np.ndarray:
    arr = np.atleast_1d(np.asarray(kappas, dtype=np.float64))
    if arr.ndim != 1:
        raise ShapeError(f"theory: {name} must be a 1-D sequence, got shape {arr.shape}")
    if not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise ConfigError(f"theory: {name} must be finite and positive, got {arr.tolist()}")
    return arr


def family(equation: str | Equation) -> str:
    """``"kdv"``, ``"mkdv"`` or ``"gardner"``: which soliton formulas apply to ``equation`` (else
    ConfigError)."""
    return _form(equation).family


def polarities(equation: str | Equation) -> tuple[int, ...]:
    """Soliton polarities of ``equation``: ``(1,)`` or ``(-1,)`` for KdV, ``(1, -1)`` for mKdV."""
    return _form(equation).polarities


def speeds(kappas: object, equation: str | Equation = "kdv") -> np.ndarray:
    """Soliton speeds ``4 d kappa^2`` (``4 kappa^2`` in the canonical forms)."""
    return np.asarray(_form(equation).speed(_as_kappas(kappas)))


def amplitudes(kappas: object, equation: str | Equation = "kdv") -> np.ndarray:
    """Peak heights ``|u|``: ``2 kappa^2`` (KdV) or ``2 kappa`` (mKdV), times ``|alpha|``."""
    return np.asarray(_form(equation).amplitude(_as_kappas(kappas)))


def tail_lengths(kappas: object) -> np.ndarray:
    """The e-folding length ``1 / (2 kappa)`` of a soliton's tail, the same for KdV and mKdV."""
    return np.asarray(0.5 / _as_kappas(kappas))


def kappa_from_speed(speed: ArrayLike, equation: str | Equation = "kdv") -> np.ndarray:
    """Invert :func:`speeds`: ``kappa = sqrt(c / (4 d))`` (NaN where ``c / d <= 0``)."""
    c = np.asarray(speed, dtype=np.float64) / (4.0 * _form(equation).d)
    return np.sqrt(np.where(c > 0, c, np.nan))


def kappa_from_amplitude(amplitude: ArrayLike, equation: str | Equation = "kdv") -> np.ndarray:
    """Invert :func:`amplitudes` from a peak height ``|u|`` (its sign is ignored)."""
    return np.asarray(_form(equation).kappa_of_height(amplitude))


def pair_shift(kappa_i: float, kappa_j: float) -> float:
    """Shift of soliton ``i`` from one collision with soliton ``j`` (KdV, mKdV and Gardner alike,
    in kappa).

    ``(1/kappa_i) sign(kappa_i - kappa_j) ln((kappa_i + kappa_j)/|kappa_i - kappa_j|)``: forward for
    the faster soliton, backward for the slower. Gardner et al. 1974; Ablowitz & Segur 1981, Ch. 1.
    """
    ki, kj = (float(v) for v in _as_kappas([kappa_i, kappa_j], "kappa_i, kappa_j"))
    if ki == kj:
        raise ConfigError(
            f"theory: equal kappas ({ki}) never collide; the shift is undefined for equal speeds"
        )
    return math.copysign(math.log((ki + kj) / abs(ki - kj)), ki - kj) / ki


def phase_shifts(
    kappas: Sequence[float] | np.ndarray,
    equation: str | Equation = "kdv",
    collisions: object | None = None,
) -> np.ndarray:
    """The asymptotic position shift of each soliton (input order) after all its collisions.

    Parameters
    ----------
    kappas
        Soliton parameters, all distinct and positive.
    equation
        ``"kdv"``, ``"mkdv"`` (either polarity) or an :class:`~kdvsweep.Equation` of either family;
        it only validates the family, since the shifts in kappa are the same for both.
    collisions
        Optional ``(N, N)`` symmetric array: how many times each pair meets (on a periodic domain a
        fast soliton can lap a slow one). Default: every pair once, the infinite-line result.

    Returns
    -------
    numpy.ndarray
        ``Delta x_i = sum_j n_ij * pair_shift(kappa_i, kappa_j)`` (pairwise additivity:
        Zakharov 1971; GGKM 1974; Drazin & Johnson 1989 Problem 4.6).
    """
    _form(equation)
    ks = _as_kappas(kappas)
    n = ks.size
    if collisions is None:
        counts = np.ones((n, n)) - np.eye(n)
    else:
        counts = np.asarray(collisions, dtype=np.float64)
        if counts.shape != (n, n):
            raise ShapeError(
                f"theory: collisions must have shape ({n}, {n}) for {n} kappas, got {counts.shape}"
            )
        if not np.array_equal(counts, counts.T) or np.any(counts < 0):
            raise ConfigError("theory: collisions must be a symmetric array of counts >= 0")
    out = np.zeros(n)
    for i in range(n):
        for j in range(n):
            if i != j and counts[i, j] != 0:
                out[i] += counts[i, j] * pair_shift(ks[i], ks[j])
    return out


def shift_balance(kappas: object, shifts: object) -> float:
    """``sum_i kappa_i Delta x_i``, zero for any collision (the sum rule).

    The first moment of the mass (KdV ``int u``, mKdV ``int u^2``) moves at a constant rate
    (``d/dt int x u dx = 3 int u^2 dx`` for KdV), and soliton ``i`` carries a mass proportional to
    ``kappa_i``, so mass-weighted shifts cancel. Useful to check measured shifts without a formula.
    """
    ks = _as_kappas(kappas)
    dx = np.asarray(shifts, dtype=np.float64)
    if dx.shape != ks.shape:
        raise ShapeError(f"theory: shifts must match kappas' shape {ks.shape}, got {dx.shape}")
    return float(np.sum(ks * dx))


def amplitude_ratio(kappa1: float, kappa2: float) -> float:
    """Ratio ``>= 1`` of the larger to the smaller KdV amplitude, ``(kappa_max / kappa_min)^2``."""
    k = _as_kappas([kappa1, kappa2], "kappa1, kappa2")
    return float((k.max() / k.min()) ** 2)


def interaction_regime(kappa1: float, kappa2: float) -> str:
    """Lax's (1968) class of a KdV two-soliton interaction, from the amplitude ratio ``r >= 1``.

    * ``"exchange"`` for ``r < (3 + sqrt 5)/2``: two maxima at all times; the humps trade mass.
    * ``"mixed"`` for ``(3 + sqrt 5)/2 <= r < 3``: two maxima at the symmetric instant, one at times
      shortly before and after.
    * ``"absorb-emit"`` for ``r >= 3``: one maximum at the symmetric instant; the large soliton
      swallows the small one and re-emits it.

    Sources: Lax 1968 (Comm. Pure Appl. Math. 21, 467); Drazin & Johnson 1989, Problem 4.5.
    """
    r = amplitude_ratio(kappa1, kappa2)
    if r == 1.0:
        raise ConfigError(f"theory: equal kappas ({kappa1}) do not interact")
    if r < LAX_EXCHANGE_LIMIT:
        return "exchange"
    if r < LAX_SINGLE_PEAK_LIMIT:
        return "mixed"
    return "absorb-emit"


def peaks_at_closest_approach(kappa1: float, kappa2: float) -> int:
    """Maxima of a KdV pair at the symmetric instant: 2 below amplitude ratio 3, else 1 (Lax)."""
    return 2 if amplitude_ratio(kappa1, kappa2) < LAX_SINGLE_PEAK_LIMIT else 1


def symmetric_phases(kappa1: float, kappa2: float) -> np.ndarray:
    """Phase constants ``x0`` making the Hirota 2-soliton symmetric about ``x = 0`` at ``t = 0``.

    ``x0_i = ln(A) / (4 kappa_i)`` with ``A = ((kappa1 - kappa2)/(kappa1 + kappa2))^2`` makes
    ``tau(x) e^{-(kappa1 + kappa2) x}`` even in ``x`` (derivation: match the four exponentials of
    tau in pairs under ``x -> -x``). This is the closest approach of the pair.
    """
    k = _as_kappas([kappa1, kappa2], "kappa1, kappa2")
    if k[0] == k[1]:
        raise ConfigError(f"theory: equal kappas ({k[0]}) have no symmetric collision")
    log_a = 2.0 * math.log(abs(k[0] - k[1]) / (k[0] + k[1]))
    return log_a / (4.0 * k)


__all__ = [
    "ADIABATIC_SOURCE",
    "LAX_EXCHANGE_LIMIT",
    "LAX_SINGLE_PEAK_LIMIT",
    "REGIMES",
    "adiabatic_amplitude",
    "adiabatic_kappa",
    "adiabatic_rate",
    "adiabatic_reason",
    "adiabatic_speed",
    "amplitude_ratio",
    "amplitudes",
    "family",
    "interaction_regime",
    "kappa_from_amplitude",
    "kappa_from_speed",
    "pair_shift",
    "peaks_at_closest_approach",
    "phase_shifts",
    "polarities",
    "predicted_soliton",
    "shift_balance",
    "speeds",
    "symmetric_phases",
    "tail_lengths",
]


# --- Adiabatic solitons under damping and viscosity -------------------------------------------

#: Published sources of the adiabatic laws, for notes and figure captions.
ADIABATIC_SOURCE = "Ott & Sudan 1970; Karpman & Maslov 1977"


def adiabatic_reason(equation: str | Equation) -> str:
    """Why :func:`adiabatic_kappa` has no prediction for ``equation`` (empty when it has one).

    The prediction needs the soliton's shape: an equation with a :class:`~kdvsweep.model.
    SolitonForm` (KdV, focusing mKdV, Gardner) and no fifth-order term (``f = 0``). With ``f != 0``
    the shape is not the family's and its slowly varying state is not one kappa: no prediction here.
    """
    eq = Equation.coerce(equation, "theory")
    if eq.soliton_form_or_none() is None:
        return f"no adiabatic prediction: {eq.describe()} has no soliton form here"
    if eq.f != 0:
        return (
            "no adiabatic prediction: fifth-order dispersion (f != 0) changes the soliton's shape"
        )
    return ""


def _power_law(form: SolitonForm) -> tuple[float, float]:
    """``(p, beta)`` with ``P(kappa) = P(1) kappa^p`` and ``S(kappa) = beta kappa^2 P(kappa)``
    (KdV ``3, 4/5``; mKdV ``1, 4/3``), read off the form's own ``momentum`` and ``slope_norm``."""
    p = math.log2(form.momentum(2.0) / form.momentum(1.0))
    return p, form.slope_norm(1.0) / form.momentum(1.0)


def _momentum_slope(form: SolitonForm, kappa: float, sign: int | None) -> float:
    """``dP/dkappa`` of the form's momentum, by a central difference of its quadrature."""
    h = 1e-4 * kappa
    return (form.momentum(kappa + h, sign) - form.momentum(kappa - h, sign)) / (2.0 * h)


def adiabatic_rate(kappa: float, equation: str | Equation, sign: int | None = None) -> float:
    """``d kappa / dt`` of a soliton that keeps its shape while it loses momentum:
    ``-(2 g P(kappa) + 2 v S(kappa)) / P'(kappa)`` (see :func:`adiabatic_kappa`)."""
    eq = Equation.coerce(equation, "theory")
    reason = adiabatic_reason(eq)
    if reason:
        raise ConfigError(f"theory: {reason}")
    form = eq.soliton_form
    pk = form.momentum(kappa, sign)
    loss = 2.0 * eq.g * pk + 2.0 * eq.v * form.slope_norm(kappa, sign)
    if form.family == "gardner":
        return -loss / _momentum_slope(form, kappa, sign)
    p, _ = _power_law(form)
    return -loss * kappa / (p * pk)


def _times(t: ArrayLike) -> np.ndarray:
    arr = np.asarray(t, dtype=np.float64)
    if not np.all(np.isfinite(arr)) or np.any(arr < 0):
        raise ConfigError(f"theory: times must be finite and >= 0, got {arr.tolist()}")
    return arr


def adiabatic_kappa(
    kappa0: float, t: ArrayLike, equation: str | Equation, sign: int | None = None
) -> Any:
    """The kappa at times ``t`` of a soliton (kappa ``kappa0`` at ``t = 0``) under weak damping
    and viscosity, ``u_t + (a u + b u^2) u_x + d u_xxx = -g u + v u_xx``.

    Principle (adiabatic, or slowly varying, approximation): for ``g, v`` small the soliton keeps
    its family's shape with a slowly varying ``kappa(t)``, fixed by the balance of the momentum
    ``P = int u^2 dx``, which the flux and the dispersion conserve. Multiplying the equation by
    ``u`` and integrating, ``dP/dt = -2 g int u^2 - 2 v int u_x^2``, so

        P'(kappa) dkappa/dt = -2 g P(kappa) - 2 v S(kappa),   S = int u_x^2 dx,

    with ``P`` and ``S`` from :meth:`kdvsweep.model.SolitonForm.momentum` and
    :meth:`~kdvsweep.model.SolitonForm.slope_norm`. The mass ``int u`` is not used: the soliton
    sheds a shelf behind it that carries mass at first order but momentum only at second order
    (Karpman & Maslov 1977, from memory).

    Closed forms. KdV, ``u = alpha 2 kappa^2 sech^2(kappa (x - 4 d kappa^2 t))`` with ``alpha =
    6 d / a``: ``P = alpha^2 16 kappa^3 / 3``, ``S = alpha^2 64 kappa^5 / 15``. Focusing mKdV,
    ``u = alpha 2 kappa sech(2 kappa x)`` with ``alpha^2 = 6 d / b``: ``P = alpha^2 4 kappa``,
    ``S = alpha^2 16 kappa^3 / 3``. Both are ``P ~ kappa^p``, ``S = beta kappa^2 P`` (KdV ``p = 3,
    beta = 4/5``; mKdV ``p = 1, beta = 4/3``), so ``kappa'/kappa = -(2 g + 2 v beta kappa^2) / p``
    and ``y = 1 / kappa^2`` obeys the linear ``y' = (4 g / p) y + 4 v beta / p``:

        1/kappa^2 = e^{lambda t} / kappa0^2 + c (e^{lambda t} - 1) / lambda,
        lambda = 4 g / p,  c = 4 v beta / p  (c t when g = 0).

    ``alpha`` and ``d`` drop out: kappa(t) is the same for every ``a, b, d`` of the family. Cases:

    * damped KdV: ``kappa = kappa0 e^{-2 g t / 3}``, amplitude ``A0 e^{-4 g t / 3}`` (Ott & Sudan
      1970, Phys. Fluids 13, 1432; Karpman & Maslov 1977, Sov. Phys. JETP 46, 281; from memory);
    * viscous KdV: ``1/kappa^2 = 1/kappa0^2 + 16 v t / 15``, derived the same way;
    * damped mKdV: ``kappa = kappa0 e^{-2 g t}`` (amplitude too);
    * viscous mKdV: ``1/kappa^2 = 1/kappa0^2 + 16 v t / 3``.

    Gardner has no closed form here: the ODE is integrated with ``scipy.integrate.solve_ivp``
    (``P'`` by a central difference of the quadrature). Its opposite-polarity branch (``mu > 0``)
    keeps a momentum ``2 pi alpha^2 / mu^{3/2}`` as kappa -> 0 (the algebraic soliton): losing
    more, the wave cannot keep its shape, and kappa falls to 0 in a finite time, ever faster: the
    prediction is NaN once kappa is below a quarter of ``kappa0`` on that branch (a thousandth on
    the KdV-like one), and once a growing (``g < 0``) wave reaches the table-top limit.

    Fifth-order dispersion (``f != 0``) has no prediction here (:func:`adiabatic_reason`).

    Parameters
    ----------
    kappa0
        The soliton's kappa at ``t = 0`` (speed ``4 d kappa0^2``).
    t
        Times ``>= 0`` (scalar or array).
    equation
        A preset name or an :class:`~kdvsweep.Equation`; ``g = v = 0`` gives ``kappa0``.
    sign
        Polarity (Gardner only: selects the branch; None is the KdV-like one).

    Returns
    -------
    float or numpy.ndarray
        kappa at each time (the shape of ``t``).
    """
    eq = Equation.coerce(equation, "theory")
    reason = adiabatic_reason(eq)
    if reason:
        raise ConfigError(f"theory: {reason}")
    k0 = float(_as_kappas([kappa0], "kappa0")[0])
    times = _times(t)
    form = eq.soliton_form
    form.amplitude(k0, sign)  # checks the branch exists
    if not k0 < form.max_kappa:
        raise ConfigError(f"theory: kappa0 {k0:g} is beyond the table-top limit {form.max_kappa:g}")
    if eq.g == 0 and eq.v == 0:
        out = np.full(times.shape, k0)
    elif form.family == "gardner":
        out = _gardner_kappa(form, k0, times, eq, sign)
    else:
        p, beta = _power_law(form)
        lam, c = 4.0 * eq.g / p, 4.0 * eq.v * beta / p
        grow = np.exp(lam * times)
        spread = c * times if lam == 0 else c * np.expm1(lam * times) / lam
        out = 1.0 / np.sqrt(grow / k0**2 + spread)
    return float(out) if out.ndim == 0 else out


def _gardner_kappa(
    form: SolitonForm, k0: float, times: np.ndarray, eq: Equation, sign: int | None
) -> np.ndarray:
    """kappa(t) of a Gardner wave: the momentum balance integrated (NaN once it has no shape)."""
    from scipy.integrate import solve_ivp  # loaded only for Gardner predictions

    flat = times.ravel()
    t_max = float(flat.max()) if flat.size else 0.0
    # The opposite branch reaches kappa = 0 in a finite time, ever faster as P' -> 0: the
    # prediction stops at a quarter of kappa0 there (at a thousandth on the KdV-like branch).
    opposite = sign is not None and sign != form.sign
    low, high = (0.25 if opposite else 1e-3) * k0, (1.0 - 1e-3) * form.max_kappa

    def rate(_t: float, y: np.ndarray) -> list[float]:
        # Trial points past an event are clamped: a tiny kappa would need a huge quadrature line.
        kappa = min(max(float(y[0]), 0.5 * low), high)
        slope = _momentum_slope(form, kappa, sign)
        if not slope > 0:
            return [0.0]
        loss = 2.0 * eq.g * form.momentum(kappa, sign) + 2.0 * eq.v * form.slope_norm(kappa, sign)
        return [-loss / slope]

    def too_small(_t: float, y: np.ndarray) -> float:
        return float(y[0]) - low

    def too_large(_t: float, y: np.ndarray) -> float:
        return high - float(y[0])

    too_small.terminal = True  # type: ignore[attr-defined]
    too_large.terminal = True  # type: ignore[attr-defined]
    out = np.full(flat.shape, math.nan)
    if t_max == 0:
        out[:] = k0
        return out.reshape(times.shape)
    sol = solve_ivp(
        rate,
        (0.0, t_max),
        [k0],
        method="LSODA",
        dense_output=True,
        rtol=1e-9,
        atol=1e-12 * k0,
        events=(too_small, too_large),
    )
    if sol.sol is None:
        raise ConfigError(f"theory: the Gardner momentum balance did not integrate: {sol.message}")
    reached = float(sol.t[-1])
    inside = flat <= reached
    if inside.any():
        out[inside] = np.asarray(sol.sol(flat[inside]))[0]
    return out.reshape(times.shape)


def adiabatic_amplitude(
    kappa0: float, t: ArrayLike, equation: str | Equation, sign: int | None = None
) -> Any:
    """Peak ``|u|`` of the adiabatic soliton at times ``t``: the form's amplitude of
    :func:`adiabatic_kappa` (damped KdV: ``A0 e^{-4 g t / 3}``, Ott & Sudan 1970)."""
    eq = Equation.coerce(equation, "theory")
    kappa = adiabatic_kappa(kappa0, t, eq, sign)
    return eq.soliton_form.amplitude(kappa, sign)


def adiabatic_speed(
    kappa0: float, t: ArrayLike, equation: str | Equation, sign: int | None = None
) -> Any:
    """Speed ``4 d kappa(t)^2`` of the adiabatic soliton at times ``t`` (:func:`adiabatic_kappa`)."""
    eq = Equation.coerce(equation, "theory")
    return eq.soliton_form.speed(adiabatic_kappa(kappa0, t, eq, sign))


def predicted_soliton(
    kappa0: float, t: float, equation: str | Equation, sign: int | None = None
) -> tuple[float, float, str]:
    """``(amplitude, speed, reason)`` of a soliton (kappa ``kappa0`` at ``t = 0``) at time ``t``:
    the unperturbed values for an integrable equation, the adiabatic ones under damping or
    viscosity (:func:`adiabatic_kappa`); NaN with the one-line reason where there is no prediction
    (``f != 0``, no soliton form, a Gardner wave past the end of its adiabatic branch)."""
    eq = Equation.coerce(equation, "theory")
    reason = adiabatic_reason(eq)
    if reason:
        return math.nan, math.nan, reason
    try:
        kappa = float(adiabatic_kappa(kappa0, t, eq, sign))
    except ConfigError as exc:
        return math.nan, math.nan, str(exc)
    if not math.isfinite(kappa):
        return (
            math.nan,
            math.nan,
            "no adiabatic prediction: the Gardner wave's kappa falls below kappa0 / 4 by then "
            "(its branch keeps a finite momentum as kappa -> 0)",
        )
    form = eq.soliton_form
    return float(form.amplitude(kappa, sign)), float(form.speed(kappa)), ""
