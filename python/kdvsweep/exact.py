"""Exact solutions: one-solitons and Hirota N-solitons of KdV and mKdV (computed in the Rust core).

Solitons are given by ``kappa`` (KdV: amplitude ``2 kappa^2``; mKdV: amplitude ``2 kappa``; speed
``4 kappa^2`` in both canonical forms) and ``x0``, the phase constant: soliton ``i`` alone would be
centred at ``x0_i + 4 kappa_i^2 t``. In an N-soliton the interactions displace the centres from
``x0`` (Hirota 1971 for KdV, Hirota 1972 for mKdV). A general ``a`` (KdV) or ``b`` (mKdV) and ``d``
are reached by the exact scaling ``u = alpha w(x, d t)``.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from . import _core
from .exceptions import ConfigError
from .model import Equation


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


__all__ = ["multisoliton", "soliton"]
