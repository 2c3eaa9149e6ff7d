"""The NumPy reference schemes against exact solutions, and the Rust core against the references.

Tolerances are the errors measured when the tests were written, with a margin of about 2x; the
measured figure is given beside each bound.
"""

from __future__ import annotations

import numpy as np
import pytest

import kdvsweep as kv
from kdvsweep import bench
from kdvsweep import reference as ref

FIXED = ("etdrk4", "ifrk4", "strang")


def kdv_soliton(x: np.ndarray, t: float, kappa: float, x0: float, length: float) -> np.ndarray:
    """KdV soliton ``2 kappa^2 sech^2(kappa (x - 4 kappa^2 t - x0))``, centred in the period.

    Korteweg & de Vries 1895; normalised form Ablowitz 2011, Nonlinear Dispersive Waves, Sec. 1.1,
    Eq. (1.5). Its tails at half a period (1e-16 here) are below the errors.
    """
    xi = np.mod(x - 4 * kappa**2 * t - x0 + length / 2, length) - length / 2
    return 2 * kappa**2 / np.cosh(kappa * xi) ** 2


def mkdv_soliton(x: np.ndarray, t: float, kappa: float, x0: float, length: float) -> np.ndarray:
    """Focusing mKdV soliton ``2 kappa sech(2 kappa (x - 4 kappa^2 t - x0))`` (Wadati 1973,
    J. Phys. Soc. Jpn 34, 1289, from memory), centred in the period."""
    xi = np.mod(x - 4 * kappa**2 * t - x0 + length / 2, length) - length / 2
    return 2 * kappa / np.cosh(2 * kappa * xi)


def run_reference(
    grid: kv.Grid, eq: kv.Equation, scheme: str, dt: float, u0: np.ndarray, t: float, **kw: float
) -> ref.ReferenceSimulation:
    sim = ref.ReferenceSimulation(grid, eq, scheme, dt=dt, **kw)
    sim.set_state(u0)
    sim.advance(t)
    return sim


# --- building blocks ---------------------------------------------------------------------------


def test_etdrk4_coefficients_match_direct_formulas_away_from_zero() -> None:
    # Cox & Matthews 2002: Q = (e^{z/2} - 1)/L, f1..f3 as written below (times h). Where |z| >= 1
    # the direct formulas lose no digits, so the contour means (Kassam & Trefethen 2005) must
    # reproduce them; the points cover decay and dispersion up to the stiffness of n = 2048.
    z = np.array([-1.5, -40.0, 3j, -2 + 7j, 500j, -30 - 300j])
    h = 0.01
    _, _, q, f1, f2, f3 = ref.etdrk4_coefficients(z / h, h)
    ez = np.exp(z)
    np.testing.assert_allclose(q, h * (np.exp(z / 2) - 1) / z, rtol=1e-12)
    np.testing.assert_allclose(f1, h * (-4 - z + ez * (4 - 3 * z + z**2)) / z**3, rtol=1e-12)
    np.testing.assert_allclose(f2, h * (2 + z + ez * (z - 2)) / z**3, rtol=1e-12)
    np.testing.assert_allclose(f3, h * (-4 - 3 * z - z**2 + ez * (4 - z)) / z**3, rtol=1e-12)


def test_etdrk4_coefficients_have_the_taylor_limits_at_zero() -> None:
    # Limits at z -> 0 (Taylor series of the formulas, Cox & Matthews 2002): Q -> h/2 and
    # f1, f2, f3 -> h/6, the weights of classical RK4. Direct evaluation is 0/0 there.
    h = 0.1
    # z = 1e-13 i: the first Taylor terms (z/8, z/6...) are below the tolerance.
    _, _, q, f1, f2, f3 = ref.etdrk4_coefficients(np.array([0.0, 1e-12j]), h)
    np.testing.assert_allclose(q, h / 2, rtol=1e-13)
    for coef in (f1, f2, f3):
        np.testing.assert_allclose(coef, h / 6, rtol=1e-13)


def test_dealias_mask_keeps_the_orszag_fraction() -> None:
    # Orszag's rule: keep j < (2/3) n/2 for a quadratic term, j < n/4 for a cubic one (common
    # practice); 2/3 of 192 is 128 up to round-off, and mode 128 must go.
    grid = kv.Grid(384, 10.0)
    assert ref.kept_modes(grid, 2 / 3) == 128
    assert ref.kept_modes(grid, 0.5) == 96
    assert ref.kept_modes(grid, 1.0) == 192  # the Nyquist mode never enters the nonlinear term
    assert ref.dealias_mask(kv.Grid(64, 1.0), 2 / 3).sum() == 22


def test_nonlinear_term_is_minus_the_flux_derivative() -> None:
    # N(v) = -(a u^2/2 + b u^3/3)_x; for u = cos x the flux has modes up to 3, all kept on this
    # grid, so the result is exact: differentiate it by hand.
    grid = kv.Grid(64, 2 * np.pi)
    x = grid.x
    u = np.cos(x)
    a, b = 1.5, -0.7
    nl = ref.nonlinear_term(grid, kv.Equation(a=a, b=b))
    expected = -(a * u + b * u**2) * (-np.sin(x))
    np.testing.assert_allclose(np.fft.irfft(nl(np.fft.rfft(u)), grid.n), expected, atol=1e-13)


def test_spectral_norm_is_parseval() -> None:
    rng = np.random.default_rng(7)
    u = rng.standard_normal(50)
    assert ref.spectral_norm(np.fft.rfft(u), 50) == pytest.approx(np.linalg.norm(u), rel=1e-13)


@pytest.mark.parametrize("scheme", ref.SCHEMES)
def test_linear_equation_is_integrated_exactly(scheme: str) -> None:
    # u_t + d u_xxx + f u_xxxxx = -g u + v u_xx takes cos(kx + phi) to
    # exp(-(g + v k^2) t) cos(kx + (d k^3 - f k^5) t + phi) (dispersion relation of a linear PDE,
    # common practice); the Nyquist mode (-1)^j only decays (a real grid carries no odd part there).
    grid = kv.Grid(32, 2 * np.pi)
    eq = kv.Equation(d=1.0, f=0.002, g=0.05, v=0.01)
    x, t = grid.x, 0.7
    modes = [(1, 0.0, 1.0), (3, 0.4, 0.5), (16, 0.0, 0.25)]

    def profile(time: float) -> np.ndarray:
        total = np.zeros_like(x)
        for k, phi, amp in modes:
            decay = np.exp(-(eq.g + eq.v * k**2) * time)
            shift = 0.0 if k == grid.n // 2 else (eq.d * k**3 - eq.f * k**5) * time
            total += amp * decay * np.cos(k * x + shift + phi)
        return total

    tol = {"tol": 1e-10} if scheme == "adaptive" else {}
    sim = run_reference(grid, eq, scheme, 0.1, profile(0.0), t, **tol)
    np.testing.assert_allclose(sim.state, profile(t), atol=1e-13)


# --- the schemes against the exact soliton -----------------------------------------------------

KDV_GRID = kv.Grid(256, 40.0)
# Max-norm error at t = 1 for dt = 0.004 and 0.002 (KdV kappa = 1, n = 256, L = 40), as measured:
# etdrk4 2.9e-6, 1.7e-7; ifrk4 1.3e-5, 6.8e-7; strang 5.7e-4, 1.4e-4. Orders 4.07, 4.24, 2.02.
KDV_BOUND = {"etdrk4": 3.5e-7, "ifrk4": 1.4e-6, "strang": 2.8e-4}
ORDER_WINDOW = {"etdrk4": (3.5, 5.0), "ifrk4": (3.5, 5.0), "strang": (1.8, 2.4)}


@pytest.mark.parametrize("scheme", FIXED)
def test_kdv_soliton_error_and_order(scheme: str) -> None:
    # Exact KdV soliton (Korteweg & de Vries 1895; Ablowitz 2011, Sec. 1.1). Formal orders 4, 4, 2
    # (Cox & Matthews 2002; Trefethen 2000; Strang 1968); the order windows are those issue 2 uses.
    x, t = KDV_GRID.x, 1.0
    u0, exact = kdv_soliton(x, 0, 1.0, -2.0, 40.0), kdv_soliton(x, t, 1.0, -2.0, 40.0)
    errors = []
    for dt in (0.004, 0.002):
        sim = run_reference(KDV_GRID, kv.Equation.kdv(), scheme, dt, u0, t)
        assert sim.steps == round(t / dt)
        errors.append(np.max(np.abs(sim.state - exact)))
    order = np.log2(errors[0] / errors[1])
    low, high = ORDER_WINDOW[scheme]
    assert low <= order <= high, f"{scheme}: observed order {order:.2f}, errors {errors}"
    assert errors[1] < KDV_BOUND[scheme]


# Measured at t = 1, dt = 0.002 (mKdV kappa = 0.5, n = 512, L = 60): 1.6e-9, 8.8e-9, 1.05e-5.
MKDV_BOUND = {"etdrk4": 4e-9, "ifrk4": 2e-8, "strang": 2.1e-5}


@pytest.mark.parametrize("scheme", FIXED)
def test_mkdv_soliton(scheme: str) -> None:
    # Exact focusing mKdV soliton (Wadati 1973); exercises the cubic flux and the 1/2 rule.
    grid = kv.Grid(512, 60.0)
    x, t = grid.x, 1.0
    sim = run_reference(grid, kv.Equation.mkdv(), scheme, 0.002, mkdv_soliton(x, 0, 0.5, -2, 60), t)
    assert np.max(np.abs(sim.state - mkdv_soliton(x, t, 0.5, -2, 60))) < MKDV_BOUND[scheme]


def test_adaptive_meets_tolerance_and_steps_scale_as_tol_to_the_quarter() -> None:
    # With a third-order companion the local error estimate is C h^4, so the controller's step
    # grows as tol^(-1/4): 10x looser tol, 10^(1/4) = 1.78x fewer steps (common practice).
    # Measured: tol 1e-7, error 5.9e-7 in 526 steps; tol 1e-8, error 6.9e-8 in 915 steps (1.74x).
    x, t = KDV_GRID.x, 1.0
    u0, exact = kdv_soliton(x, 0, 1.0, -2.0, 40.0), kdv_soliton(x, t, 1.0, -2.0, 40.0)
    loose = run_reference(KDV_GRID, kv.Equation.kdv(), "adaptive", 1e-3, u0, t, tol=1e-7)
    tight = run_reference(KDV_GRID, kv.Equation.kdv(), "adaptive", 1e-3, u0, t, tol=1e-8)
    assert loose.time == tight.time == t
    err_loose = np.max(np.abs(loose.state - exact))
    err_tight = np.max(np.abs(tight.state - exact))
    assert err_loose < 1.2e-6
    assert err_tight < err_loose / 4
    assert 1.5 < tight.steps / loose.steps < 2.1


@pytest.mark.parametrize("scheme", ref.SCHEMES)
def test_mass_is_conserved_to_round_off(scheme: str) -> None:
    # The k = 0 mode of a flux derivative vanishes and L(0) = -g = 0: mass int u is exactly
    # conserved by every scheme (fact of the trade), so only round-off may change it.
    x = KDV_GRID.x
    u0 = kdv_soliton(x, 0, 1.0, -2.0, 40.0)
    tol = {"tol": 1e-7} if scheme == "adaptive" else {}
    sim = run_reference(KDV_GRID, kv.Equation.kdv(), scheme, 0.004, u0, 0.4, **tol)
    assert abs(sim.state.sum() - u0.sum()) < 1e-13 * u0.sum()


def test_record_gives_states_at_the_requested_times() -> None:
    x = KDV_GRID.x
    sim = ref.ReferenceSimulation(KDV_GRID, kv.Equation.kdv(), "etdrk4", dt=0.004)
    sim.set_state(kdv_soliton(x, 0, 1.0, -2.0, 40.0))
    times = np.array([0.1, 0.25, 0.3])
    frames = sim.record(times)
    assert frames.shape == (3, KDV_GRID.n)
    for frame, t in zip(frames, times, strict=True):
        # Measured 9.2e-7, 1.3e-6, 1.5e-6 (ETDRK4 makes most of its error in the first steps).
        assert np.max(np.abs(frame - kdv_soliton(x, t, 1.0, -2.0, 40.0))) < 3e-6


def test_bad_arguments_raise() -> None:
    eq = kv.Equation.kdv()
    with pytest.raises(kv.ConfigError, match="unknown scheme 'rk45'"):
        ref.ReferenceSimulation(KDV_GRID, eq, "rk45")
    with pytest.raises(kv.ConfigError, match="dt: expected a finite positive number"):
        ref.ReferenceSimulation(KDV_GRID, eq, "ifrk4", dt=0.0)
    with pytest.raises(kv.ConfigError, match="tol: applies to the adaptive scheme only"):
        ref.ReferenceSimulation(KDV_GRID, eq, "ifrk4", tol=1e-6)
    sim = ref.ReferenceSimulation(KDV_GRID, eq, "ifrk4")
    with pytest.raises(kv.ShapeError, match=r"shape \(256,\), got \(10,\)"):
        sim.set_state(np.zeros(10))
    with pytest.raises(kv.ConfigError, match="duration must be"):
        sim.advance(-1.0)


# --- Rust core against the NumPy references ----------------------------------------------------

# (equation, kappas): the KdV and Gardner runs cross a 2-soliton collision; the perturbed Gardner
# run has every linear term (fifth-order dispersion, damping, viscosity) and the mixed flux.
CROSS_CASES = {
    "kdv": (kv.Equation.kdv(), "kdv"),
    "mkdv": (kv.Equation.mkdv(), "mkdv"),
    "perturbed-gardner": (kv.Equation.gardner(6.0, 3.0, f=0.002, g=0.01, v=0.005), "kdv"),
}
# max|u_rust - u_numpy| / max|u| measured at the end of these runs (175 fixed steps, 530-1224
# adaptive ones): 1.6e-15 to 5.9e-15 for KdV and mKdV, 7e-15 to 2.1e-14 for the perturbed Gardner
# run. The bound is 10x the largest; round-off grows about linearly with the steps (10x longer
# runs measured up to 1e-12).
CROSS_RTOL = 2e-13


@pytest.mark.parametrize("case", CROSS_CASES)
@pytest.mark.parametrize("scheme", ref.SCHEMES)
def test_rust_agrees_with_numpy_to_round_off(scheme: str, case: str) -> None:
    # Cross-implementation check: the same formulas on the same steps in Rust (rustfft) and NumPy
    # (pocketfft) may differ only by round-off.
    grid = kv.Grid(256, 80.0)
    eq, family = CROSS_CASES[case]
    u0 = kv.exact.multisoliton(grid.x, 0.0, [1.0, 0.6], [-6.0, 0.0], equation=family)
    if family == "mkdv":
        u0 = kv.exact.multisoliton(grid.x, 0.0, [0.8], [-6.0], equation=family)
    tol = {"tol": 1e-8} if scheme == "adaptive" else {}
    rust = kv.Simulation(grid, eq, scheme, dt=0.005, **tol)
    rust.set_state(u0)
    numpy_sim = ref.ReferenceSimulation(grid, eq, scheme, dt=0.005, **tol)
    numpy_sim.set_state(u0)
    for duration in (0.5, 0.3712):  # a whole number of steps, then one that is not
        rust.advance(duration)
        numpy_sim.advance(duration)
    assert rust.time == pytest.approx(numpy_sim.time, abs=1e-14)
    assert (rust.steps, rust.rejected) == (numpy_sim.steps, numpy_sim.rejected)
    scale = np.max(np.abs(numpy_sim.state))
    diff = np.max(np.abs(rust.state - numpy_sim.state)) / scale
    assert diff < CROSS_RTOL, f"{scheme}/{case}: relative difference {diff:.2e}"


# --- benchmark -----------------------------------------------------------------------------------


def test_bench_measures_a_row_per_size_and_scheme() -> None:
    # Runs the real benchmark at its smallest budget; timings are checked for sanity, never for
    # their values (they depend on the machine).
    seen: list[tuple[int, str]] = []
    rows = bench.run_benchmark(
        [64, 128], ["ifrk4", "adaptive"], bench.QUICK, on_row=lambda r: seen.append((r.n, r.scheme))
    )
    assert (
        [(r.n, r.scheme) for r in rows]
        == seen
        == [
            (64, "ifrk4"),
            (64, "adaptive"),
            (128, "ifrk4"),
            (128, "adaptive"),
        ]
    )
    for r in rows:
        figures = [r.rust_us, r.floor_us, r.numpy_us, r.rust_over_floor, r.numpy_over_rust]
        assert all(np.isfinite(v) and v > 0 for v in figures)
        assert r.floor_met() is None  # the targets apply at n = 512 and 1024 only


def test_bench_command_prints_the_table(capsys: pytest.CaptureFixture[str]) -> None:
    from kdvsweep import cli

    assert cli.main(["bench", "--quick", "--n", "64", "--schemes", "etdrk4"]) == 0
    captured = capsys.readouterr()
    rows = [line.split() for line in captured.out.splitlines() if line.split()[:1] == ["64"]]
    assert [r[:2] for r in rows] == [["64", "etdrk4"]]
    assert len([float(v) for v in rows[0][2:]]) == 5
    assert "kdvsweep bench: measured n = 64 etdrk4" in captured.err


def test_bench_rejects_bad_options(capsys: pytest.CaptureFixture[str]) -> None:
    from kdvsweep import cli

    with pytest.raises(kv.ConfigError, match="even and >= 16"):
        bench.run_benchmark([15])
    with pytest.raises(kv.ConfigError, match=r"unknown scheme\(s\) \['rk45'\]"):
        bench.run_benchmark([64], ["etdrk4", "rk45"])
    with pytest.raises(SystemExit):
        cli.main(["bench", "--n", "100,abc"])
    assert "expected integers like 256,512" in capsys.readouterr().err
    assert cli.main(["bench", "--schemes", "etdrk4,rk45"]) == 2
    assert capsys.readouterr().err.startswith("kdvsweep: error: bench: unknown scheme(s)")
