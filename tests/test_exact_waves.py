"""Exact waves of kv.exact against their PDE, published forms and limits, and carried by the core.

The PDE residual is computed independently of each formula's claimed speed or frequency: x
derivatives by NumPy FFTs on a fine periodic grid (the waves have decayed to round-off at the box
edges), the t derivative by a sixth-order central difference of the solution evaluated at
``t + j h`` (common practice, no source). Normalisation: ``u_t + (a u + b u^2) u_x + d u_xxx + f
u_xxxxx = 0`` with the coefficients of each case.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import pytest

import kdvsweep as kv
from kdvsweep import exact
from kdvsweep.exceptions import ConfigError

Wave = Callable[[np.ndarray, float], np.ndarray]

MKDV = kv.Equation.mkdv()
#: Gardner with b < 0: one polarity, up to the table-top limit (max_kappa = 1/2, height |a/b| = 1).
GARDNER_TOP = kv.Equation(a=6.0, b=-6.0)
#: Gardner with b > 0: both polarities.
GARDNER_BOTH = kv.Equation(a=6.0, b=6.0)
#: A fifth-order equation with the sech^4 wave: k = 1/2, speed 36/13, amplitude 105/78.
FIFTH = kv.Equation(a=6.0, d=1.0, f=-1.0 / 13.0)


def _dx(u: np.ndarray, length: float, order: int) -> np.ndarray:
    k = 2.0 * np.pi * np.fft.rfftfreq(u.size, length / u.size)
    return np.fft.irfft((1j * k) ** order * np.fft.rfft(u), u.size)


def residual(wave: Wave, eq: kv.Equation, length: float, n: int, t: float, h: float) -> float:
    """max |PDE residual| over max |u_t| at time ``t``."""
    x = -0.5 * length + length / n * np.arange(n)
    u = wave(x, t)
    weights = ((1, 3.0 / 4.0), (2, -3.0 / 20.0), (3, 1.0 / 60.0))
    ut = sum(w * (wave(x, t + j * h) - wave(x, t - j * h)) for j, w in weights) / h
    flux = (eq.a * u + eq.b * u * u) * _dx(u, length, 1)
    r = ut + flux + eq.d * _dx(u, length, 3) + eq.f * _dx(u, length, 5)
    return float(np.max(np.abs(r)) / np.max(np.abs(ut)))


# ----------------------------------------------------------------------------- residuals


@pytest.mark.parametrize(
    ("eq", "eta", "xi", "x0", "phase"),
    [(MKDV, 1.0, 0.3, 0.0, 0.4), (kv.Equation(b=2.0, d=0.5), 0.8, 0.5, 1.0, 2.0)],
)
def test_breather_solves_mkdv(
    eq: kv.Equation, eta: float, xi: float, x0: float, phase: float
) -> None:
    # measured: 7e-11 and 4e-12 of max |u_t| (h = 2.5e-4, n = 2048 on L = 80)
    def wave(x: np.ndarray, t: float) -> np.ndarray:
        return exact.breather(x, t, eta, xi, x0, phase, eq)

    assert residual(wave, eq, 80.0, 2048, 0.3, 2.5e-4) < 1e-9

    # the check can fail: the same breather with its envelope speed 1 % off is no solution
    v, _, omega = kv.spectrum.breather_speeds(eta, xi, eq.d)
    alpha = exact.breather_alpha(eq)

    def wrong(x: np.ndarray, t: float) -> np.ndarray:
        return exact.breather_profile(x, eta, xi, x0 + 1.01 * v * t, phase - omega * t, alpha)

    assert residual(wrong, eq, 80.0, 2048, 0.3, 2.5e-4) > 1e-4


@pytest.mark.parametrize(
    ("eq", "fraction", "sign"),
    [
        (GARDNER_TOP, 0.5, 1),
        (GARDNER_TOP, 1.0 - 1e-4, 1),  # near the table-top limit: a flat top of half-length 4.9
        (GARDNER_TOP, 1.0 - 1e-8, 1),
        (GARDNER_BOTH, 0.7, 1),
        (GARDNER_BOTH, 0.7, -1),
        (kv.Equation(a=6.0, b=3.0, d=1.0), 0.6, -1),
        (kv.Equation(a=-2.0, b=1.5, d=0.5), 0.6, 1),
    ],
)
def test_gardner_solitary_wave_solves_gardner(eq: kv.Equation, fraction: float, sign: int) -> None:
    # measured: 8e-12 .. 5e-10 of max |u_t| (h = 1e-3, n = 4096 on L = 200; the largest for the
    # slowest wave, kappa = 0.25, where FFT round-off of u_xxx weighs most). kappa is a fraction
    # of max_kappa for b < 0 (the table-top limit), else kappa itself
    form = eq.soliton_form
    kappa = fraction * form.max_kappa if math.isfinite(form.max_kappa) else fraction
    s = sign * form.sign

    def wave(x: np.ndarray, t: float) -> np.ndarray:
        return exact.soliton(x, t, kappa, 0.5, eq, s)

    assert residual(wave, eq, 200.0, 4096, 0.3, 1e-3) < 2e-9
    peak = float(np.max(np.abs(wave(np.linspace(-1.0, 2.0, 30001), 0.0))))
    assert math.isclose(peak, form.amplitude(kappa, s), rel_tol=1e-6)


def test_table_top_height_is_a_over_b() -> None:
    # Gardner table-top limit (Grimshaw, Pelinovsky & Talipova 1997 [memory]): as kappa ->
    # max_kappa the height tends to |a / b| and the flat top widens without bound
    form = GARDNER_TOP.soliton_form
    assert form.max_kappa == pytest.approx(0.5)
    heights = [form.amplitude(form.max_kappa * (1 - e)) for e in (1e-2, 1e-4, 1e-8)]
    assert heights[0] < heights[1] < heights[2] < 1.0
    assert 1.0 - heights[2] < 1e-3
    with pytest.raises(ConfigError, match="table-top"):
        exact.soliton(np.zeros(3), 0.0, 0.5 * 1.0001, 0.0, GARDNER_TOP)


def test_sech4_wave_solves_the_fifth_order_equation() -> None:
    # measured: 5e-11 of max |u_t| (h = 1e-3, n = 1024 on L = 120)
    def wave(x: np.ndarray, t: float) -> np.ndarray:
        return exact.fifth_order_wave(x, t, 1.0, FIFTH)

    assert residual(wave, FIFTH, 120.0, 1024, 0.3, 1e-3) < 1e-8
    w = exact.fifth_order_form(FIFTH)

    def taller(x: np.ndarray, t: float) -> np.ndarray:  # the check can fail
        return 1.01 * wave(x, t)

    assert residual(taller, FIFTH, 120.0, 1024, 0.3, 1e-3) > 1e-4
    assert w.k == pytest.approx(0.5)
    assert w.speed == pytest.approx(36.0 / 13.0)


@pytest.mark.parametrize(("a", "d", "f"), [(1.0, 1.0, -1.0), (-3.0, 2.0, -0.5), (2.0, -1.0, 0.2)])
def test_sech4_wave_against_kawahara_form(a: float, d: float, f: float) -> None:
    # Kawahara 1972; Yamamoto & Takizawa 1981 [memory]: u_t + u u_x + u_xxx - u_xxxxx = 0 has
    # (105/169) sech^4((x - 36 t / 169) / (2 sqrt 13)); u_t + a u u_x + d u_xxx + f u_xxxxx = 0
    # maps onto it by u = (d^2 / (-f a)) U, x = sqrt(-f / d) X, t = (-f)^(3/2) / d^(5/2) T when
    # d > 0 > f (for d < 0 < f, x -> -x maps (a, d, f) to (-a, -d, -f)): the values below
    w = exact.fifth_order_form(kv.Equation(a=a, d=d, f=f))
    assert w.amplitude == pytest.approx(105.0 / 169.0 * d * d / (-f * a), rel=1e-14)
    assert w.k == pytest.approx(1.0 / (2.0 * math.sqrt(13.0)) * math.sqrt(-d / f), rel=1e-14)
    assert w.speed == pytest.approx(36.0 / 169.0 * d * d / (-f), rel=1e-14)
    assert np.sign(w.amplitude) == np.sign(a * d)


@pytest.mark.parametrize(
    ("eq", "why"),
    [
        (kv.Equation(a=6.0, d=1.0, f=0.1), "d f = 0.1; expected d f < 0"),
        (kv.Equation(a=6.0, d=1.0), "d f = 0; expected d f < 0"),
        (kv.Equation(a=6.0, b=1.0, d=1.0, f=-0.1), "b = 1; expected b = 0"),
        (kv.Equation(d=1.0, f=-0.1), "a = 0"),
        (kv.Equation(a=6.0, d=1.0, f=-0.1, g=0.01), "expected no damping"),
    ],
)
def test_sech4_wave_refused_where_it_does_not_exist(eq: kv.Equation, why: str) -> None:
    with pytest.raises(ConfigError, match="fifth-order wave: none for") as err:
        exact.fifth_order_form(eq)
    assert why in str(err.value)
    assert "\n" not in str(err.value)


@pytest.mark.parametrize("eq", ["kdv", "mkdv-", kv.Equation.mkdv(f=0.01), GARDNER_BOTH])
def test_breather_refused_for_other_equations(eq: str | kv.Equation) -> None:
    with pytest.raises(ConfigError, match=r"breather: none for .*expected unperturbed focusing"):
        exact.breather(np.zeros(4), 0.0, 1.0, 0.3, equation=eq)


@pytest.mark.parametrize(("eta", "xi"), [(0.0, 0.3), (1.0, -0.3), (math.inf, 0.3), (True, 0.3)])
def test_breather_parameters_checked(eta: float, xi: float) -> None:
    with pytest.raises(ConfigError, match="must be a finite positive number"):
        exact.breather(np.zeros(4), 0.0, eta, xi)


# ----------------------------------------------------------------------------- limits


def test_small_breather_is_the_linear_wave_packet() -> None:
    # eta -> 0: u = -4 eta sin(theta) sech(R) + O(eta^2), the envelope at the group velocity
    # -3 k^2 and the carrier at the phase velocity -k^2 (k = 2 xi) of u_t + u_xxx = 0 (linear
    # dispersion relation omega = -k^3: common practice, no source)
    xi, t = 0.5, 0.7
    x = np.linspace(-200.0, 200.0, 40001)
    k = 2.0 * xi
    errors = []
    for eta in (1e-2, 1e-3):
        u = exact.breather(x, t, eta, xi)
        packet = (
            -4.0 * eta * np.sin(k * (x + k * k * t)) * kv.model.sech(2 * eta * (x + 3 * k * k * t))
        )
        errors.append(float(np.max(np.abs(u - packet))) / (4.0 * eta))
    assert errors[1] < 0.2 * errors[0]  # relative error O(eta): 10x smaller for eta / 10
    assert errors[1] < 1e-2


def test_breather_eigenvalues_are_its_zakharov_shabat_pair() -> None:
    # The Zakharov-Shabat problem of the breather's profile has exactly the pair +-xi + i eta
    # (Wadati 1973 [memory]); solved by spectrum.bound_states, an eigenvalue solver independent
    # of the formula
    eta, xi = 0.8, 0.35
    grid = kv.Grid(1024, 60.0)
    u0 = exact.breather(grid.x, 0.0, eta, xi, 2.0, 1.1)
    content = kv.spectrum.bound_states(u0, grid, MKDV)
    assert len(content) == 0
    assert len(content.breathers) == 1
    pair = content.breathers[0]
    assert pair.kappa == pytest.approx(eta, abs=1e-8)
    assert abs(pair.xi) == pytest.approx(xi, abs=1e-8)


def test_breather_scaling_to_general_coefficients() -> None:
    # u = alpha w(x, d t), alpha = sqrt(6 d / b): the exact scaling of mKdV (common practice)
    eq = kv.Equation(b=1.5, d=0.25)
    x = np.linspace(-20.0, 20.0, 801)
    alpha = math.sqrt(6.0 * 0.25 / 1.5)
    np.testing.assert_allclose(
        exact.breather(x, 2.0, 0.9, 0.4, -1.0, 0.2, eq),
        alpha * exact.breather(x, 0.25 * 2.0, 0.9, 0.4, -1.0, 0.2, MKDV),
        rtol=0,
        atol=1e-13,
    )


# ----------------------------------------------------------------------------- carried by the core


def carried(wave: Wave, eq: kv.Equation, length: float, n: int, dt: float) -> float:
    """max |u - exact| after stepping the exact data with ETDRK4 for 10 time units."""
    grid = kv.Grid(n, length)
    sim = kv.Simulation(grid, eq, scheme="etdrk4", dt=dt)
    sim.set_state(wave(grid.x, 0.0))
    sim.advance(10.0)
    assert sim.time == pytest.approx(10.0)
    return float(np.max(np.abs(sim.state - wave(grid.x, 10.0))))


@pytest.mark.parametrize(
    ("eq", "kappa", "sign", "x0", "length", "n", "dt"),
    [
        # measured 2.2e-13: kappa 0.99990 of the table-top limit, height 0.986 of |a/b|
        (GARDNER_TOP, 0.5 * (1.0 - 1e-4), 1, -20.0, 120.0, 1024, 1e-3),
        (GARDNER_BOTH, 0.7, 1, -10.0, 60.0, 1024, 5e-4),  # measured 5.2e-11
        (GARDNER_BOTH, 0.5, -1, -10.0, 80.0, 2048, 1.5e-4),  # measured 4.0e-9
    ],
)
def test_gardner_wave_carried_ten_time_units(
    eq: kv.Equation, kappa: float, sign: int, x0: float, length: float, n: int, dt: float
) -> None:
    # issue's must-show: Gardner solitary waves (both polarities, one near the table-top limit)
    # carried over 10 time units to 1e-8 against the exact wave (SolitonForm.profile; its PDE
    # residual is checked above)
    s = sign * eq.soliton_form.sign

    def wave(x: np.ndarray, t: float) -> np.ndarray:
        return exact.soliton(x, t, kappa, x0, eq, s)

    assert carried(wave, eq, length, n, dt) < 1e-8


def test_breather_carried_ten_time_units() -> None:
    # measured 1.8e-9 (n = 1024 on L = 60, dt = 1.5e-4)
    def wave(x: np.ndarray, t: float) -> np.ndarray:
        return exact.breather(x, t, 0.5, 0.25, -1.0, 0.3, MKDV)

    assert carried(wave, MKDV, 60.0, 1024, 1.5e-4) < 1e-8


def test_sech4_wave_carried_ten_time_units() -> None:
    # measured 1.2e-10 (n = 512 on L = 80, dt = 5e-4); travels 27.7
    def wave(x: np.ndarray, t: float) -> np.ndarray:
        return exact.fifth_order_wave(x, t, -14.0, FIFTH)

    assert carried(wave, FIFTH, 80.0, 512, 5e-4) < 1e-8
