"""kdvsweep.spectrum: IST discrete spectra against published eigenvalues and independent solvers.

Normalisation in every test: KdV ``u_t + 6 u u_x + u_xxx = 0`` with spectral problem
``-psi'' - u0 psi = -kappa^2 psi`` (solitons ``2 kappa^2 sech^2``), focusing mKdV
``u_t + 6 u^2 u_x + u_xxx = 0`` with Zakharov-Shabat ``v1' = -i zeta v1 + q v2``,
``v2' = i zeta v2 - q v1``, ``q = u0``, ``zeta = i kappa`` (solitons ``2 kappa sech``; Korteweg &
de Vries 1895, Ablowitz 2011 Sec. 1.1, Wadati 1973). Tabulated values are those of Pöschl & Teller
1933 and Satsuma & Yajima 1974, evaluated from their published formulas; each test recomputes what
it compares against.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
import scipy.optimize as so

from kdvsweep import spectrum
from kdvsweep.exceptions import ConfigError, ShapeError
from kdvsweep.model import Equation, Grid
from kdvsweep.spectrum import DomainWarning, ResolutionWarning, bound_states


def poschl_teller(grid: Grid, lam: float) -> np.ndarray:
    """``lam (lam + 1) sech^2 x`` on the grid."""
    return lam * (lam + 1.0) / np.cosh(grid.x) ** 2


# ----------------------------------------------------------------------------- KdV


@pytest.mark.parametrize("lam", [1.0, 2.0, 3.0, 0.5, 1.5, (math.sqrt(13.0) - 1.0) / 2.0, 2.7])
def test_poschl_teller_kappas(lam: float) -> None:
    # Pöschl & Teller 1933 (levels also in Landau & Lifshitz, QM, Sec. 23 Problem 4 [memory]):
    # -psi'' - lam(lam+1) sech^2(x) psi = E psi has E_n = -(lam - n)^2 for n < lam, so KdV(+)
    # data lam(lam+1) sech^2 x carry ceil(lam) solitons kappa_n = lam - n (Pöschl & Teller 1933; Landau & Lifshitz Sec. 23;
    # lam = (sqrt 13 - 1)/2 is A = 3). L = 80 keeps exp(-kappa L) < 1e-10 for kappa >= 0.3.
    grid = Grid(640, 80.0)
    content = bound_states(poschl_teller(grid, lam), grid)
    expected = lam - np.arange(math.ceil(lam))
    assert len(content) == math.ceil(lam)
    np.testing.assert_allclose(content.kappas, expected, rtol=0, atol=1e-8)
    np.testing.assert_allclose(content.amplitudes, 2 * expected**2, rtol=0, atol=1e-7)
    np.testing.assert_allclose(content.speeds, 4 * expected**2, rtol=0, atol=1e-7)
    assert np.all(content.resolution_error < 1e-10)
    assert np.all(np.abs(content.box_error) < 1e-9)


def test_sign_and_scaling_of_general_kdv() -> None:
    # Exact scaling u = (6 d / a) w(x, d t) of u_t + a u u_x + d u_xxx = 0 onto KdV(+)
    # (the exact scaling u = alpha w(x, d t)): KdV(-) (a = -6) data -6 sech^2 x are the same well (potential +u0),
    # troughs of depth 2 kappa^2; a = 1 (Zabusky-Kruskal form) takes u = 6 w; d = 2 doubles speeds.
    grid = Grid(512, 60.0)
    w = poschl_teller(grid, 2.0)
    minus = bound_states(-w, grid, "kdv-")
    np.testing.assert_allclose(minus.kappas, [2.0, 1.0], atol=1e-8)
    np.testing.assert_allclose(minus.amplitudes, [-8.0, -2.0], atol=1e-7)
    np.testing.assert_array_equal(minus.polarity, [-1, -1])
    zk = bound_states(6.0 * w, grid, Equation(a=1.0, d=1.0))
    np.testing.assert_allclose(zk.kappas, [2.0, 1.0], atol=1e-8)
    np.testing.assert_allclose(zk.amplitudes, [48.0, 12.0], atol=1e-6)
    slow = bound_states(2.0 * w, grid, Equation(a=6.0, d=2.0))
    np.testing.assert_allclose(slow.kappas, [2.0, 1.0], atol=1e-8)
    np.testing.assert_allclose(slow.speeds, [32.0, 8.0], atol=1e-6)


def test_repulsive_data_have_no_solitons() -> None:
    # -psi'' + |u0| psi has no negative eigenvalue: u0 <= 0 carries no KdV(+) soliton
    # (a fact of the trade: common practice, no source).
    grid = Grid(256, 40.0)
    content = bound_states(-poschl_teller(grid, 1.5), grid)
    assert len(content) == 0
    assert content.table().empty


def square_well_kappas(height: float, half_width: float) -> np.ndarray:
    """Bound states of -psi'' - U psi on |x| < a, solved independently with scipy brentq.

    Finite square well (textbook, e.g. Landau & Lifshitz, Quantum Mechanics, Sec. 22 [memory];
    the finite square well, Landau & Lifshitz Sec. 22): with z = q a, z0 = a sqrt(U), even states z tan z = sqrt(z0^2 - z^2) on
    (m pi, m pi + pi/2), odd states -z cot z = sqrt(z0^2 - z^2) on (m pi + pi/2, (m+1) pi);
    kappa = sqrt(z0^2 - z^2) / a.
    """
    z0 = half_width * math.sqrt(height)
    found = []
    for j in range(int(2 * z0 / math.pi) + 1):
        lo, hi = j * math.pi / 2, min((j + 1) * math.pi / 2, z0)
        if j % 2 == 0:

            def f(z: float) -> float:
                return z * math.tan(z) - math.sqrt(z0**2 - z**2)
        else:

            def f(z: float) -> float:
                return -z / math.tan(z) - math.sqrt(z0**2 - z**2)

        eps = 1e-13
        if f(lo + eps) * f(hi - eps) < 0:
            z = so.brentq(f, lo + eps, hi - eps, xtol=1e-15)
            found.append(math.sqrt(z0**2 - z**2) / half_width)
    return np.array(sorted(found, reverse=True))


def box(grid: Grid, height: float, half_width: float) -> np.ndarray:
    """``height`` on ``|x| < a``, ``height / 2`` exactly on the edges (grid points by choice)."""
    u = np.where(np.abs(grid.x) < half_width, height, 0.0)
    u[np.isclose(np.abs(grid.x), half_width, rtol=0, atol=1e-12)] = height / 2
    return u


@pytest.mark.parametrize(
    ("height", "half_width", "length", "n"),
    [(4.0, 1.0, 40.0, 320), (1.0, 5.0, 100.0, 400)],
)
def test_box_matches_square_well_equations(
    height: float, half_width: float, length: float, n: int
) -> None:
    # A box is discontinuous: Fourier interpolation of its samples rings (Gibbs), and no grid
    # resolves the jump. The samples with height/2 on the edge points are the trapezoid rule of
    # the jump, so the eigenvalues converge at second order in dx (common practice, no source):
    # expect ~4x smaller errors when dx halves, and Richardson extrapolation (4 k(dx/2) - k(dx))/3
    # removing the dx^2 term. bound_states warns that the profile is not resolved.
    expected = square_well_kappas(height, half_width)
    # Number of bound states ceil(2 z0 / pi) (the finite square well, Landau & Lifshitz Sec. 22).
    assert expected.size == math.ceil(2 * half_width * math.sqrt(height) / math.pi)
    results = []
    for points in (n, 2 * n):
        grid = Grid(points, length)
        assert np.isclose(half_width / grid.dx, round(half_width / grid.dx))  # edges on points
        with pytest.warns(ResolutionWarning, match="not resolved"):
            content = bound_states(box(grid, height, half_width), grid, tol=1e-6)
        assert len(content) == expected.size
        results.append(content.kappas)
    coarse, fine = (np.abs(r - expected) for r in results)
    assert np.all(fine < 1.5e-3)  # measured at most 9e-4 (dx = 1/16), 2.3e-4 (dx = 1/8)
    np.testing.assert_allclose(coarse / fine, 4.0, rtol=0.1)
    richardson = (4 * results[1] - results[0]) / 3  # measured within 5.1e-5 (next term ~dx^3)
    np.testing.assert_allclose(richardson, expected, rtol=0, atol=1e-4)


def test_box_error_estimate_matches_the_actual_periodic_shift() -> None:
    # On a short box the periodic eigenvalue differs from the line's exact Pöschl-Teller value
    # kappa = 0.5 (lam = 1.5; Pöschl & Teller 1933) by ~exp(-kappa L): the Wronskian estimate
    # must predict that difference, sign included.
    grid = Grid(256, 24.0)
    with pytest.warns(DomainWarning, match="periodic-box error"):
        content = bound_states(poschl_teller(grid, 1.5), grid)
    actual = content.kappas[1] - 0.5
    assert abs(actual) > 1e-6  # the box does matter here
    np.testing.assert_allclose(content.box_error[1], actual, rtol=0.02)


# ----------------------------------------------------------------------------- Zakharov-Shabat


@pytest.mark.parametrize("amplitude", [1.3, 2.0, 3.2, -2.0, 0.4])
def test_zakharov_shabat_sech(amplitude: float) -> None:
    # Satsuma & Yajima 1974: q = A sech x has eigenvalues zeta_n = i (|A| - n - 1/2) for
    # n < |A| - 1/2, all of the sign of A; mKdV solitons of amplitude 2 eta_n, speed 4 eta_n^2
    # (Satsuma & Yajima 1974); A = 0.4 has none. L = 50: exp(-eta L) < 1e-10 for eta >= 0.5.
    grid = Grid(512, 50.0)
    content = bound_states(amplitude / np.cosh(grid.x), grid, "mkdv")
    a = abs(amplitude)
    expected = a - np.arange(max(0, math.ceil(a - 0.5))) - 0.5
    assert len(content) == expected.size
    np.testing.assert_allclose(content.kappas, expected, rtol=0, atol=1e-8)
    np.testing.assert_array_equal(content.polarity, np.sign(amplitude))
    np.testing.assert_allclose(content.amplitudes, np.sign(amplitude) * 2 * expected, atol=1e-7)
    np.testing.assert_allclose(content.speeds, 4 * expected**2, atol=1e-7)
    assert content.breathers == ()


def test_breather_eigenvalue_pair() -> None:
    # Breather u = 2 d/dx arctan[(a/b) cos(b x) / cosh(a x)] at t = 0 (Wadati 1973; Lamb 1980
    # [memory]; normalisation of Wadati 1973 and Lamb 1980, agreeing with the Hirota form):
    # ZS pair zeta = +-xi + i eta with a = 2 eta, b = 2 xi; envelope speed 4 (eta^2 - 3 xi^2).
    eta, xi = 0.5, 0.35
    a, b = 2 * eta, 2 * xi
    grid = Grid(512, 50.0)
    x = grid.x
    f = (a / b) * np.cos(b * x) / np.cosh(a * x)
    fx = (a / b) * (-b * np.sin(b * x) * np.cosh(a * x) - a * np.cos(b * x) * np.sinh(a * x))
    fx /= np.cosh(a * x) ** 2
    content = bound_states(2 * fx / (1 + f**2), grid, "mkdv")
    assert len(content) == 0
    (breather,) = content.breathers
    assert breather.kappa == pytest.approx(eta, abs=1e-8)
    assert breather.xi == pytest.approx(xi, abs=1e-8)
    assert breather.envelope_speed == pytest.approx(4 * (eta**2 - 3 * xi**2), abs=1e-7)
    row = content.table().iloc[0]
    assert row["kind"] == "breather"
    assert row["xi"] == pytest.approx(xi, abs=1e-8)


def hirota_mkdv_2soliton(
    x: np.ndarray, a: tuple[float, float], s: tuple[int, int], x0: tuple[float, float]
) -> np.ndarray:
    """Hirota's mKdV 2-soliton at t = 0 (Hirota 1972).

    ``u = 2 d/dx arctan(N/D)``, ``N = s1 E1 + s2 E2``, ``D = 1 - s1 s2 A12 E1 E2``,
    ``Ei = exp(ai (x - x0i))``, ``A12 = ((a1 - a2)/(a1 + a2))^2``; soliton i has amplitude ``ai``
    (``eta_i = ai / 2``) and polarity ``si``. The derivative is taken analytically.
    """
    a12 = ((a[0] - a[1]) / (a[0] + a[1])) ** 2
    e1, e2 = np.exp(a[0] * (x - x0[0])), np.exp(a[1] * (x - x0[1]))
    num, den = s[0] * e1 + s[1] * e2, 1 - s[0] * s[1] * a12 * e1 * e2
    dnum = s[0] * a[0] * e1 + s[1] * a[1] * e2
    dden = -s[0] * s[1] * a12 * (a[0] + a[1]) * e1 * e2
    return 2 * (dnum * den - num * dden) / (num**2 + den**2)


@pytest.mark.parametrize("signs", [(1, -1), (1, 1)])
def test_polarity_of_overlapping_two_soliton(signs: tuple[int, int]) -> None:
    # Amplitudes 2 and 1 with phase constants -1 and +1: the solitons overlap (the profile is not
    # a sum of two solitons), yet the IST gives eta = (1, 0.5) with the polarities of the pieces
    # (Hirota 1972), which the polarity rule must recover. (Exactly on top of
    # each other, opposite polarities make a profile too sharp for a small test grid.)
    grid = Grid(448, 44.0)
    u0 = hirota_mkdv_2soliton(grid.x, (2.0, 1.0), signs, (-1.0, 1.0))
    content = bound_states(u0, grid, "mkdv")
    np.testing.assert_allclose(content.kappas, [1.0, 0.5], atol=1e-8)
    np.testing.assert_array_equal(content.polarity, signs)
    np.testing.assert_allclose(content.amplitudes, [2.0 * signs[0], 1.0 * signs[1]], atol=1e-7)


def test_defocusing_mkdv_has_no_solitons() -> None:
    # The defocusing ZS operator is self-adjoint: no eigenvalues off the real axis (fact of the
    # trade), hence no solitons on a zero background whatever the data.
    grid = Grid(128, 40.0)
    content = bound_states(3.0 / np.cosh(grid.x), grid, "mkdv-")
    assert len(content) == 0
    assert "self-adjoint" in content.method


# ----------------------------------------------------------------------------- numerics


@pytest.mark.parametrize("order", [1, 2])
def test_collocation_matrices_match_numpy_fft(order: int) -> None:
    # Reference: numpy.fft spectral differentiation of a random real vector (Nyquist mode dropped
    # for the first derivative, whose derivative is not real-representable).
    rng = np.random.default_rng(5)
    m, length = 64, 7.0
    f = rng.standard_normal(m)
    k = 2 * np.pi / length * np.arange(m // 2 + 1)
    symbol = (1j * k) ** order
    if order == 1:
        symbol[-1] = 0
    reference = np.fft.irfft(symbol * np.fft.rfft(f), m)
    np.testing.assert_allclose(spectrum._derivative_matrix(m, length, order) @ f, reference,
                               atol=1e-10 * np.abs(reference).max())  # fmt: skip


def test_resample_is_exact_for_band_limited_data() -> None:
    # A trigonometric polynomial below the Nyquist wavenumber is its own interpolant (fact).
    grid = Grid(64, 2 * np.pi)
    f = lambda x: np.cos(3 * x) - 0.5 * np.sin(11 * x) + 0.25  # noqa: E731
    fine = Grid(256, 2 * np.pi)
    np.testing.assert_allclose(spectrum._resample(f(grid.x), 256), f(fine.x), atol=1e-13)
    np.testing.assert_allclose(spectrum._resample(f(fine.x), 64), f(grid.x), atol=1e-13)


def test_under_resolved_smooth_data_are_flagged_and_bounded() -> None:
    # 12 sech^2 x (lam = 3: kappa = 3, 2, 1, Pöschl & Teller 1933) on dx = 0.31: the grid does not
    # resolve the profile. The user is told, and for smooth data the two-resolution estimate
    # bounds the actual error of each kappa.
    grid = Grid(128, 40.0)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        content = bound_states(poschl_teller(grid, 3.0), grid)
    messages = [str(w.message) for w in caught if w.category is ResolutionWarning]
    assert any("not resolved" in m for m in messages)
    assert any("changed by" in m for m in messages)
    actual = np.abs(content.kappas - [3.0, 2.0, 1.0])
    assert np.all(actual > 1e-9)  # really under-resolved
    assert np.all(actual <= content.resolution_error)


def test_coarse_problem_is_smaller_than_an_oversized_grid() -> None:
    # The profile's spectrum decides the coarse size, not the grid: 4096 points on L = 40 carry
    # sech^2 to round-off with a few hundred. Results do not depend on the oversizing.
    big, small = Grid(4096, 40.0), Grid(512, 40.0)
    a = bound_states(poschl_teller(big, 2.0), big)
    b = bound_states(poschl_teller(small, 2.0), small)
    assert a.points[0] < 512
    np.testing.assert_allclose(a.kappas, b.kappas, atol=1e-12)


def test_table_columns_and_order() -> None:
    grid = Grid(256, 40.0)
    table = bound_states(poschl_teller(grid, 3.0), grid).table()
    assert list(table.columns) == [
        "kind",
        "soliton",
        "kappa",
        "xi",
        "amplitude",
        "speed",
        "polarity",
        "resolution_error",
        "box_error",
    ]
    assert list(table["soliton"]) == [0, 1, 2]
    assert table["kappa"].is_monotonic_decreasing


# ----------------------------------------------------------------------------- bad input


@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
def test_non_finite_values_are_config_errors(bad: float) -> None:
    grid = Grid(64, 20.0)
    u = poschl_teller(grid, 1.0)
    u[10] = bad
    with pytest.raises(ConfigError, match="finite; index 10"):
        bound_states(u, grid)


@pytest.mark.parametrize(
    "u0",
    [np.zeros(63), np.zeros((2, 64)), np.zeros(64, dtype=complex), np.array(["a"] * 64)],
)
def test_wrong_shapes_and_dtypes_are_shape_errors(u0: np.ndarray) -> None:
    with pytest.raises(ShapeError, match="u0"):
        bound_states(u0, Grid(64, 20.0))


def test_profile_not_decayed_on_the_domain_is_refused() -> None:
    # 6 sech^2 x on L = 12: |u0| at the edges is 6 sech^2(6) ~ 3.7e-5 of the peak, above the
    # 1e-6 edge level: the line's spectrum does not describe it (common practice, no source).
    grid = Grid(128, 12.0)
    with pytest.raises(ConfigError, match=r"not decayed at the domain edges.*longer domain"):
        bound_states(poschl_teller(grid, 2.0), grid)


@pytest.mark.parametrize("shift", [0.0, 1.3, 2.9, 4.4])
@pytest.mark.parametrize("equation", ["kdv", "mkdv"])
def test_periodic_data_are_refused_whatever_the_shift(shift: float, equation: str) -> None:
    # A cosine filling the box is periodic data: the line's discrete spectrum (Gardner, Greene,
    # Kruskal & Miura 1967) does not apply, and the collocated count would depend on the shift.
    # The error says why and what to do, on one line.
    grid = Grid(256, 40.0)
    u0 = 1.5 * np.cos(2.0 * np.pi * 3.0 * (grid.x - shift) / grid.length)
    with pytest.raises(ConfigError) as err:
        bound_states(u0, grid, equation)
    message = str(err.value)
    assert "\n" not in message
    for phrase in ("periodic data", "shifted", "longer domain", "decay to zero"):
        assert phrase in message


@pytest.mark.parametrize(
    ("equation", "match"),
    [
        ("gardner", "no spectral problem"),
        (Equation(a=6.0, g=0.01), "perturbation"),
        (Equation(a=0.0, b=0.0), "no spectral problem"),
        ("nls", "unknown preset"),
    ],
)
def test_equations_without_a_spectral_problem(equation: object, match: str) -> None:
    grid = Grid(64, 20.0)
    with pytest.raises(ConfigError, match=match):
        bound_states(poschl_teller(grid, 1.0), grid, equation)  # type: ignore[arg-type]


@pytest.mark.parametrize("tol", [0.0, -1e-8, float("nan"), "small"])
def test_bad_tolerance(tol: object) -> None:
    grid = Grid(64, 20.0)
    with pytest.raises(ConfigError, match="tol"):
        bound_states(poschl_teller(grid, 1.0), grid, tol=tol)  # type: ignore[arg-type]


def test_grid_must_be_a_grid() -> None:
    with pytest.raises(ConfigError, match="Grid"):
        bound_states(np.zeros(64), (64, 20.0))  # type: ignore[arg-type]


def test_zero_profile_has_no_solitons() -> None:
    grid = Grid(64, 20.0)
    assert len(bound_states(np.zeros(64), grid)) == 0
