"""Simulation against IST prediction: initial data break up into the solitons the spectrum predicts.

Each test predicts the solitons of ``u0`` with :func:`kdvsweep.spectrum.bound_states`, runs the
compiled core (:class:`kdvsweep.Simulation`) long enough for them to separate, and measures the
late-time peak heights with sub-grid (spectral) interpolation. Normalisation: KdV
``u_t + 6 u u_x + u_xxx = 0`` (soliton ``2 kappa^2 sech^2``, speed ``4 kappa^2``), focusing mKdV
``u_t + 6 u^2 u_x + u_xxx = 0`` (soliton ``2 kappa sech``, speed ``4 kappa^2``). Radiation moves
left (KdV group velocity ``-3 k^2`` of the linearised equation); the solitons move right, so the boxes
are sized so that the tallest soliton is measured before the radiation wrapping around the
periodic box comes near it.

The prediction is computed on a small grid of its own: the discrete spectrum is a property of the
profile on the line, and the simulation's long box would only make the dense eigenproblem larger.
"""

from __future__ import annotations

import numpy as np
import pytest

from kdvsweep.model import Equation, Grid
from kdvsweep.spectrum import bound_states

pytest.importorskip("kdvsweep._core")
from kdvsweep.simulation import Simulation


def measure_peaks(u: np.ndarray, length: float, threshold: float) -> np.ndarray:
    """Heights of the local maxima of ``u`` above ``threshold``, tallest first.

    Each sampled maximum is refined by Newton's method on the derivative of the trigonometric
    interpolant of ``u`` (evaluated as a Fourier sum at arbitrary ``x``), so the height is
    spectrally accurate rather than limited by the grid spacing.
    """
    n = u.size
    coef = np.fft.rfft(u) / n
    coef[1 : (n + 1) // 2] *= 2.0  # positive and negative wavenumbers together (real data)
    k = 2 * np.pi / length * np.arange(coef.size)
    x_grid = -length / 2 + length / n * np.arange(n)

    def value(x: float, order: int) -> float:
        return float(np.real(np.sum(coef * (1j * k) ** order * np.exp(1j * k * (x + length / 2)))))

    is_peak = (u > np.roll(u, 1)) & (u >= np.roll(u, -1)) & (u > threshold)
    heights = []
    for x in x_grid[is_peak]:
        for _ in range(30):
            step = value(x, 1) / value(x, 2)
            x -= step
            if abs(step) < 1e-12:
                break
        heights.append(value(x, 0))
    return np.sort(heights)[::-1]


def test_measure_peaks_is_subgrid_accurate() -> None:
    # The helper itself, against the exact one-soliton 2 k^2 sech^2(k (x - x0)) with its crest
    # between grid points (Korteweg & de Vries 1895). The grid resolves the
    # sech^2 spectrum (decaying like exp(-pi k / (2 kappa))) to ~1e-10 at its top wavenumber.
    grid = Grid(256, 40.0)
    u = 2 * 1.3**2 / np.cosh(1.3 * (grid.x - 0.37 * grid.dx - 1.0)) ** 2
    assert np.max(u) < 2 * 1.3**2 * (1 - 1e-3)  # the grid misses the crest
    np.testing.assert_allclose(measure_peaks(u, grid.length, 0.1), [2 * 1.3**2], rtol=1e-8)


def test_6sech2_separates_into_amplitudes_8_and_2() -> None:
    # u0 = 6 sech^2 x is the reflectionless lam = 2 Pöschl-Teller well: exactly two solitons,
    # kappa = 2, 1, amplitudes 8 and 2 (Drazin & Johnson 1989 Ch. 4 [memory]; Pöschl & Teller
    # 1933), no radiation. At t = 1.5 the crests are near x = 24 and x = 5.5, tails overlapping
    # by ~1e-15. dt = 5e-4 keeps the ETDRK4 error of the heights at ~2e-6 (1e-3 gives 7e-5).
    predicted = bound_states(6.0 / np.cosh(Grid(512, 40.0).x) ** 2, Grid(512, 40.0))
    np.testing.assert_allclose(predicted.amplitudes, [8.0, 2.0], atol=1e-7)
    grid = Grid(1024, 60.0)
    sim = Simulation(grid, Equation.kdv(), scheme="etdrk4", dt=5e-4)
    sim.set_state(6.0 / np.cosh(grid.x) ** 2)
    sim.advance(1.5)
    heights = measure_peaks(sim.state, grid.length, 0.1 * predicted.amplitudes.min())
    assert heights.size == len(predicted)
    np.testing.assert_allclose(heights, predicted.amplitudes, rtol=1e-3)


def test_non_integer_well_gives_predicted_solitons_plus_radiation() -> None:
    # lam = 1.5: u0 = 3.75 sech^2 x is not reflectionless (Pöschl & Teller 1933): solitons kappa = 1.5, 0.5 (amplitudes 4.5, 0.5, speeds 9, 1) plus radiation of
    # negative mass 2 lam(lam + 1) - 4 sum kappa = -0.5. At t = 10 the small soliton (x ~ 9) has
    # left the slow radiation near x = 0 and the fastest wrapped radiation is still far behind the
    # tall one (x ~ 90) in a box of 600; radiation crests stay below 0.05 < threshold. Measured
    # relative errors: 1.7e-4 (tall), 4.8e-4 (small).
    small = Grid(512, 40.0)
    predicted = bound_states(3.75 / np.cosh(small.x) ** 2, small)
    np.testing.assert_allclose(predicted.kappas, [1.5, 0.5], atol=1e-8)
    grid = Grid(3072, 600.0)
    u0 = 3.75 / np.cosh(grid.x) ** 2
    sim = Simulation(grid, Equation.kdv(), scheme="etdrk4", dt=2e-3)
    sim.set_state(u0)
    sim.advance(10.0)
    u = sim.state
    assert u.min() < -1e-2  # the radiation is there (a trough train: negative mass)
    heights = measure_peaks(u, grid.length, 0.4 * predicted.amplitudes.min())
    assert heights.size == len(predicted)
    np.testing.assert_allclose(heights, predicted.amplitudes, rtol=1e-2)


def test_mkdv_sech_separates_into_zakharov_shabat_solitons() -> None:
    # q0 = 2.3 sech x under focusing mKdV: eta = 1.8, 0.8 (Satsuma & Yajima 1974),
    # positive solitons of amplitudes 3.6 and 1.6, speeds 12.96 and 2.56, plus radiation
    # (2.3 is not an integer). At t = 8 the crests are near x = 104 and x = 20. Measured relative
    # errors 1.3e-3 (tall; ETDRK4 time error, 7e-4 at dt = 2.5e-4) and 8e-5 (small).
    small = Grid(512, 50.0)
    predicted = bound_states(2.3 / np.cosh(small.x), small, "mkdv")
    np.testing.assert_allclose(predicted.amplitudes, [3.6, 1.6], atol=1e-7)
    grid = Grid(4096, 240.0)
    sim = Simulation(grid, Equation.mkdv(), scheme="etdrk4", dt=5e-4)
    sim.set_state(2.3 / np.cosh(grid.x))
    sim.advance(8.0)
    heights = measure_peaks(sim.state, grid.length, 0.4 * predicted.amplitudes.min())
    assert heights.size == len(predicted)
    np.testing.assert_allclose(heights, predicted.amplitudes, rtol=1e-2)
