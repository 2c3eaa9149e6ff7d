"""kdvsweep.Equation: its soliton form, its columns in the runs table, its formula.

The soliton forms are checked against the travelling-wave equation itself, not against the code's
own formulas: a solitary wave ``u(x - c t)`` of ``u_t + (a u + b u^2) u_x + d u_xxx = 0`` satisfies
``-c u' + (a u + b u^2) u' + d u''' = 0``, evaluated here with NumPy FFT derivatives on a fine
periodic grid (the profile is at round-off at the box edges). Canonical forms: KdV
``2 kappa^2 sech^2(kappa x)`` at speed ``4 kappa^2`` (Korteweg & de Vries 1895; Ablowitz 2011,
Sec. 1.1), focusing mKdV ``2 kappa sech(2 kappa x)`` at ``4 kappa^2`` (Wadati 1973).
"""

from __future__ import annotations

import numpy as np
import pytest

import kdvsweep as kv
from kdvsweep.model import COEFFICIENTS


def _travelling_wave_residual(eq: kv.Equation, kappa: float, sign: int = 1) -> float:
    """Max |-c u' + (a u + b u^2) u' + d u'''| / max|u'| of the equation's soliton."""
    n, length = 1024, 60.0 / kappa
    x = -0.5 * length + length / n * np.arange(n)
    form = eq.soliton_form
    u = form.profile(x, kappa, 0.0, sign)
    ik = 1j * 2.0 * np.pi * np.fft.fftfreq(n, d=length / n)
    spec = np.fft.fft(u)
    ux = np.fft.ifft(ik * spec).real
    uxxx = np.fft.ifft(ik**3 * spec).real
    c = form.speed(kappa)
    residual = -c * ux + (eq.a * u + eq.b * u**2) * ux + eq.d * uxxx
    return float(np.max(np.abs(residual)) / np.max(np.abs(ux)))


@pytest.mark.parametrize(
    ("eq", "kappa", "sign"),
    [
        (kv.Equation.kdv(), 1.0, 1),
        (kv.Equation.kdv(-1), 0.7, 1),
        (kv.Equation(a=3.0, d=2.0), 0.8, 1),
        (kv.Equation(a=1.0, d=-0.5), 0.6, 1),  # d < 0: depression waves moving left
        (kv.Equation.mkdv(), 0.5, 1),
        (kv.Equation.mkdv(), 0.5, -1),
        (kv.Equation(b=2.0, d=0.5), 0.9, -1),
    ],
)
def test_soliton_form_solves_the_travelling_wave_equation(
    eq: kv.Equation, kappa: float, sign: int
) -> None:
    assert _travelling_wave_residual(eq, kappa, sign) < 1e-9


def test_canonical_soliton_numbers() -> None:
    # KdV: amplitude 2 kappa^2, speed 4 kappa^2, width 1/kappa (Korteweg & de Vries 1895);
    # mKdV: amplitude 2 kappa, width 1/(2 kappa) (Wadati 1973).
    kdv, mkdv = kv.Equation.kdv().soliton_form, kv.Equation.mkdv().soliton_form
    assert (kdv.amplitude(0.5), kdv.speed(0.5), kdv.width(0.5)) == (0.5, 1.0, 2.0)
    assert (mkdv.amplitude(0.5), mkdv.speed(0.5), mkdv.width(0.5)) == (1.0, 1.0, 1.0)
    assert kv.Equation.kdv(-1).soliton_form.sign == -1
    assert mkdv.polarities == (1, -1)
    for form in (kdv, mkdv):
        assert form.kappa_from_amplitude(form.amplitude(0.37)) == pytest.approx(0.37, rel=1e-15)
        assert form.kappa_from_speed(form.speed(0.37)) == pytest.approx(0.37, rel=1e-15)


def test_no_soliton_form_says_why() -> None:
    for eq in (kv.Equation.gardner(d=0.0), kv.Equation.mkdv(-1), kv.Equation(a=0.0)):
        assert eq.soliton_form_or_none() is None
        with pytest.raises(kv.ConfigError, match="no soliton formula"):
            _ = eq.soliton_form


def test_perturbation_flags() -> None:
    assert kv.Equation.kdv().integrable
    assert kv.Equation.gardner().integrable  # Miura, Gardner & Kruskal 1968 (from memory)
    assert not kv.Equation.gardner(d=0.0).integrable  # no dispersion, no solitons
    damped = kv.Equation.kdv(g=1e-3)
    assert damped.perturbed
    assert not damped.conservative
    assert not damped.integrable
    fifth = kv.Equation.kdv(f=0.01)
    assert fifth.perturbed
    assert fifth.conservative


@pytest.mark.parametrize(
    "eq",
    [kv.Equation.kdv(g=1e-3), kv.Equation.gardner(), kv.Equation(a=2.0, d=0.5, v=0.1, dealias=0.6)],
)
def test_columns_round_trip(eq: kv.Equation) -> None:
    columns = eq.columns()
    assert set(columns) == {"equation", "dealias", *(f"eq_{k}" for k in COEFFICIENTS)}
    back = kv.Equation.from_columns(columns)
    assert back.coefficients == eq.coefficients
    assert back.dealias_fraction == eq.dealias_fraction
    assert back.name == eq.name


def test_from_columns_names_what_is_missing() -> None:
    with pytest.raises(kv.ConfigError, match="eq_a"):
        kv.Equation.from_columns({"equation": "kdv"})


def test_dealiasing_follows_the_highest_power() -> None:
    # Orszag 1971: a flux of highest power p keeps 2/(p+1) of the band (2/3 quadratic, 1/2 cubic).
    assert kv.Equation.kdv().dealias_fraction == pytest.approx(2.0 / 3.0)
    assert kv.Equation.gardner().dealias_fraction == pytest.approx(0.5)
    assert kv.Equation(a=0.0, b=0.0).dealias_fraction == 1.0


def test_describe_shows_the_terms() -> None:
    assert kv.Equation.kdv(g=0.001).describe() == "u_t + 6 u u_x + u_xxx = -0.001 u"
    assert kv.Equation.mkdv(-1).describe() == "u_t - 6 u^2 u_x + u_xxx = 0"
    text = kv.Equation(a=1.5, f=0.01, v=0.2).describe()
    assert text == "u_t + 1.5 u u_x + u_xxx + 0.01 u_xxxxx = 0.2 u_xx"
