"""Measured soliton content of a record (kdvsweep.analysis.content) against published results.

Normalisations: KdV ``u_t + 6 u u_x + u_xxx = 0`` (``Equation.kdv()``), focusing mKdV
``u_t + 6 u^2 u_x + u_xxx = 0`` (``Equation.mkdv()``). Every record is simulated with ETDRK4; the
grid, step, domain and end time are stated beside each case. Sizing (common practice, no source):
a soliton moves at ``4 kappa^2`` (bound_states' predicted speeds), so the end time lets the
slowest predicted soliton get a few tail lengths ``1/(2 kappa)`` beyond the data's extent, and the
domain is long enough (the data start at ``x0 < 0``) that the fastest soliton does not lap the
slowest and the left-moving radiation does not reach the solitons across the periodic boundary
in that time. The predictions are computed on a short grid around the data (the discrete spectrum
of decaying data does not depend on the box once the data have decayed), which keeps the dense
eigenproblem small.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache

import numpy as np
import pytest

import kdvsweep as kv
from kdvsweep.analysis.content import ContentMeasurement, breather_profile, measure_content
from kdvsweep.exceptions import ConfigError
from kdvsweep.spectrum import SolitonContent, bound_states

KDV = kv.Equation.kdv()
MKDV = kv.Equation.mkdv()
PREDICTION_GRID = kv.Grid(512, 40.0)


@dataclass(frozen=True)
class Case:
    """One simulated record: the profile, its grid and step, and the frames."""

    grid: kv.Grid
    times: np.ndarray
    frames: np.ndarray
    predicted: SolitonContent


def simulate(
    profile: Callable[[np.ndarray], np.ndarray],
    equation: kv.Equation,
    n: int,
    length: float,
    end: float,
    frames: int,
    dt: float,
    x0: float,
    prediction_grid: kv.Grid = PREDICTION_GRID,
) -> Case:
    """``profile(x - x0)`` stepped by ETDRK4 to ``end``, ``frames + 1`` equally spaced frames, and
    bound_states of ``profile`` on ``prediction_grid``."""
    grid = kv.Grid(n, length)
    u0 = profile(grid.x - x0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # resolution notes of the small prediction grid
        predicted = bound_states(profile(prediction_grid.x), prediction_grid, equation)
    sim = kv.Simulation(grid, equation, scheme="etdrk4", dt=dt)
    sim.set_state(u0)
    times = np.linspace(0.0, end, frames + 1)
    record = np.vstack([u0[None, :], sim.record(times[1:])])
    return Case(grid, times, record, predicted)


def measure(case: Case, equation: kv.Equation, stride: int = 1) -> ContentMeasurement:
    """The content of every ``stride``-th frame of a case."""
    return measure_content(
        case.frames[::stride], case.times[::stride], case.grid, equation, case.predicted
    )


def well(lam: float) -> Callable[[np.ndarray], np.ndarray]:
    """``lam (lam + 1) sech^2 x`` (Pöschl & Teller 1933)."""
    return lambda x: lam * (lam + 1.0) / np.cosh(x) ** 2


# ----------------------------------------------------------------------------- KdV wells


@cache
def integer_well(lam: int) -> tuple[Case, ContentMeasurement]:
    # n = 4096 on L = 102.4 (dx = 0.025: 10 points per width 1/kappa of the kappa = 4 soliton),
    # dt = 5e-5, end 1: the kappa = 4 soliton moves 64, the kappa = 1 one 4, from x0 = -40.
    case = simulate(well(lam), KDV, 4096, 102.4, 1.0, 40, 5e-5, -40.0)
    return case, measure(case, KDV)


@pytest.mark.parametrize("lam", [1, 2, 3, 4])
def test_reflectionless_wells_shed_exactly_lam_solitons(lam: int) -> None:
    # Pöschl & Teller 1933; Drazin & Johnson 1989, Ch. 4: u0 = lam (lam + 1) sech^2 x (potential
    # -u0) has bound states kappa_n = lam - n, n = 0..lam-1, and no reflection: exactly lam solitons
    # of amplitude 2 (lam - n)^2 and no radiation.
    case, content = integer_well(lam)
    assert content.status == "ok", content.reason
    assert len(content.solitons) == lam
    assert content.breathers == ()
    expected = 2.0 * (lam - np.arange(lam)) ** 2.0
    measured = np.array([e.amplitude for e in content.solitons])
    np.testing.assert_allclose(measured, expected, rtol=1e-4)
    assert content.all_found
    assert content.left_out == ()
    total = float(np.sum(case.frames[-1] ** 2) * case.grid.dx)
    assert content.radiation_l2 < 1e-6 * total
    for e in content.solitons:
        assert e.sign == 1
        assert e.amplitude_uncertainty > 0
        assert abs(e.speed / (4.0 * e.kappa_measured**2) - 1.0) < 1e-4  # 4 kappa^2
        assert e.track_times.size == e.track_centres.size >= 3
        assert e.t_separated == e.track_times[0]


@pytest.mark.parametrize("lam", [2, 3])
def test_trace_formulas_of_reflectionless_data(lam: int) -> None:
    # Zakharov & Faddeev 1971 [memory] (trace formulas); soliton values Miura, Gardner & Kruskal
    # 1968: mass 4 kappa, int u^2 = 16 kappa^3 / 3, Hamiltonian int (u^3 - u_x^2 / 2) = 32 kappa^5
    # / 5 for 2 kappa^2 sech^2(kappa x). Reflectionless data carry no radiation: the data's
    # invariants are the sums over the bound states, exactly.
    _, content = integer_well(lam)
    kappas = lam - np.arange(lam, dtype=float)
    assert content.data["mass"] == pytest.approx(np.sum(4.0 * kappas), rel=1e-9)
    assert content.data["momentum"] == pytest.approx(np.sum(16.0 * kappas**3 / 3.0), rel=1e-9)
    assert content.data["energy"] == pytest.approx(np.sum(32.0 * kappas**5 / 5.0), rel=1e-9)
    for name in ("mass", "momentum", "energy"):
        assert abs(content.radiation_predicted[name]) < 1e-8 * abs(content.data[name])
        # the measured radiation is zero within its uncertainty
        assert abs(content.radiation[name]) <= 3.0 * content.radiation_uncertainty[name] + 1e-9


@cache
def fractional_well() -> tuple[Case, ContentMeasurement]:
    # lam = 1.8: kappa = 1.8, 0.8 (speeds 12.96, 2.56). n = 4096 on L = 160, dt = 5e-4, end 6,
    # x0 = -50: the slow soliton is ~15 from the data at the end.
    case = simulate(well(1.8), KDV, 4096, 160.0, 6.0, 60, 5e-4, -50.0)
    return case, measure(case, KDV)


def test_non_integer_well_sheds_the_predicted_solitons_and_radiation() -> None:
    # Pöschl & Teller 1933 (kappa_n = lam - n while positive); Drazin & Johnson 1989, Ch. 4: for
    # non-integer lam the well reflects, so radiation is shed besides the solitons.
    _, content = fractional_well()
    assert content.all_found
    assert len(content.solitons) == 2
    np.testing.assert_allclose(content.predicted.kappas, [1.8, 0.8], rtol=1e-6)  # type: ignore[union-attr]
    for e in content.solitons:
        assert abs(e.amplitude / e.amplitude_predicted - 1.0) < 1e-3
    assert content.radiation_l2 > 0
    assert content.radiation_predicted["momentum"] > 0  # int r^2 of real radiation
    # the trace formula: predicted radiation from the data equals the measured one
    for name in ("mass", "momentum", "energy"):
        gap = abs(content.radiation[name] - content.radiation_predicted[name])
        assert gap <= 3.0 * content.radiation_uncertainty[name] + 1e-3 * abs(content.data[name])


# ----------------------------------------------------------------------------- other data


@cache
def gaussian(frames: int = 80) -> Case:
    # 8 exp(-(x/1.5)^2): kappa ~ 2.51, 1.80, 1.01 (bound_states). n = 4096 on L = 160 (dx = 0.039,
    # 10 points per width of the kappa = 2.5 soliton), dt = 2.5e-4, end 4, x0 = -40.
    return simulate(
        lambda x: 8.0 * np.exp(-((x / 1.5) ** 2)), KDV, 4096, 160.0, 4.0, frames, 2.5e-4, -40.0
    )


def test_gaussian_content_matches_the_spectrum() -> None:
    # Gardner, Greene, Kruskal & Miura 1967: the solitons are the bound states of -psi'' - u0 psi.
    case = gaussian()
    content = measure(case, KDV, stride=2)
    assert len(content.predicted) == 3  # type: ignore[arg-type]
    assert len(content.solitons) == 3
    assert content.all_found
    for e in content.solitons:
        assert abs(e.amplitude / e.amplitude_predicted - 1.0) < 1e-3
        assert abs(e.speed / e.speed_predicted - 1.0) < 1e-3


def test_box_content_matches_the_spectrum() -> None:
    # Gardner, Greene, Kruskal & Miura 1967, as for the Gaussian. A box of height 4 and half-width
    # 1.5 with tanh edges of width 0.3: kappa ~ 1.82, 1.25. Grid needed: n = 4096 on L = 160
    # (dx = 0.039); the prediction is on the same spacing (the samples define the potential).
    # dt = 2.5e-4, end 3, x0 = -40.
    def box(x: np.ndarray) -> np.ndarray:
        return 2.0 * (np.tanh((x + 1.5) / 0.3) - np.tanh((x - 1.5) / 0.3))

    case = simulate(box, KDV, 4096, 160.0, 3.0, 60, 2.5e-4, -40.0, kv.Grid(1024, 40.0))
    content = measure(case, KDV)
    assert len(content.predicted) == 2  # type: ignore[arg-type]
    assert len(content.solitons) == 2
    assert content.all_found
    for e in content.solitons:
        assert abs(e.amplitude / e.amplitude_predicted - 1.0) < 1e-3
    assert content.radiation_predicted["momentum"] > 0


def test_content_does_not_depend_on_the_frame_interval() -> None:
    # Common practice, no source: halving the frame interval must move each amplitude by less than
    # its stated uncertainty.
    case = gaussian()
    coarse, fine = measure(case, KDV, stride=2), measure(case, KDV, stride=1)
    assert len(coarse.solitons) == len(fine.solitons) == 3
    for a, b in zip(coarse.solitons, fine.solitons, strict=True):
        assert abs(a.amplitude - b.amplitude) < max(
            a.amplitude_uncertainty, b.amplitude_uncertainty
        )


@pytest.mark.parametrize("polarity", [1, -1])
def test_mkdv_sech_sheds_satsuma_yajima_solitons(polarity: int) -> None:
    # Satsuma & Yajima 1974: focusing mKdV (ZS) data A sech x shed solitons zeta = i (A - n - 1/2),
    # amplitudes 2 (A - n - 1/2), of the data's polarity. A = 2.2: 3.4 and 1.4 (speeds 11.56,
    # 1.96). n = 2048 on L = 160, dt = 5e-4, end 8, x0 = -40.
    amp = 2.2
    case = simulate(lambda x: polarity * amp / np.cosh(x), MKDV, 2048, 160.0, 8.0, 80, 5e-4, -40.0)
    content = measure(case, MKDV)
    assert content.all_found
    assert [e.sign for e in content.solitons] == [polarity, polarity]
    expected = [2.0 * (amp - 0.5), 2.0 * (amp - 1.5)]
    measured = [e.amplitude for e in content.solitons]
    np.testing.assert_allclose(measured, expected, rtol=1e-3)
    assert content.breathers == ()


def test_periodic_data_are_refused() -> None:
    # The line's spectrum does not describe a cosine filling the box (its count would change with
    # a shift): bound_states refuses it, saying why and what to do (common practice, no source).
    grid = kv.Grid(256, 40.0)
    with pytest.raises(ConfigError, match="periodic data"):
        bound_states(np.cos(2.0 * np.pi * 4.0 * grid.x / grid.length), grid, KDV)


def test_bad_min_amplitude_is_refused() -> None:
    case, _ = integer_well(1)
    with pytest.raises(ConfigError, match="min_amplitude"):
        measure_content(case.frames, case.times, case.grid, KDV, min_amplitude=2.0)


def test_breather_profile_solves_mkdv() -> None:
    # Wadati 1973; Lamb 1980 [memory]: the breather moves at 4 (eta^2 - 3 xi^2) with the phase
    # turning at 16 xi (eta^2 + xi^2) in its frame. Stepped from the exact profile (n = 2048 on
    # L = 80, dt = 5e-5, to t = 0.5), the state matches the exact breather at t = 0.5.
    eta, xi, t = 1.0, 0.3, 0.5
    grid = kv.Grid(2048, 80.0)
    envelope, _, omega = kv.spectrum.breather_speeds(eta, xi)
    sim = kv.Simulation(grid, MKDV, dt=5e-5)
    sim.set_state(breather_profile(grid.x, eta, xi))
    state = sim.record(np.array([t]))[0]
    exact = breather_profile(grid.x, eta, xi, envelope * t, -omega * t)
    assert float(np.max(np.abs(state - exact))) < 1e-5
    assert math.isclose(omega, 16.0 * xi * (eta**2 + xi**2))


def test_perturbed_breather_matches_its_eigenvalue_pair() -> None:
    # Wadati 1973; Lamb 1980 [memory]: a complex ZS pair zeta = +-xi + i eta is a breather whose
    # envelope moves at 4 (eta^2 - 3 xi^2) and whose phase turns at 16 xi (eta^2 + xi^2) in the
    # envelope's frame (kdvsweep.spectrum.breather_speeds). Data: 1.05 times the exact breather
    # (eta, xi) = (1, 0.3), which bound_states says carries one pair (1.102, 0.266) and no
    # soliton. n = 4096 on L = 320, dt = 1e-4, end 4, 81 frames, x0 = -80 (the radiation moves
    # left at up to ~3 (2 eta)^2 and must not reach the breather across the boundary).
    case = simulate(
        lambda x: 1.05 * breather_profile(x, 1.0, 0.3), MKDV, 4096, 320.0, 4.0, 80, 1e-4, -80.0
    )
    predicted = case.predicted
    assert len(predicted) == 0
    assert len(predicted.breathers) == 1
    pair = predicted.breathers[0]
    assert abs(pair.kappa - 1.0) > 0.05  # not the exact breather: radiation is shed
    content = measure(case, MKDV)
    assert content.all_found
    assert content.solitons == ()
    (found,) = content.breathers
    assert found.kind == "breather"
    assert abs(found.speed / pair.envelope_speed - 1.0) < 1e-3
    assert abs(found.frequency / pair.frequency - 1.0) < 1e-3
    assert abs(found.kappa_measured / pair.kappa - 1.0) < 1e-3
    assert abs(found.xi_measured / pair.xi - 1.0) < 1e-2
    assert found.frequency_uncertainty > 0
    assert content.radiation["momentum"] > 0


def test_small_and_slow_predicted_solitons_are_left_out_with_a_reason() -> None:
    # The lam = 1.8 well (kappa 1.8, 0.8; max u0 = 5.04) cut at t = 1: the kappa = 0.8 soliton
    # (speed 2.56) has not left the data, so it is left out, saying what end it needs; with
    # min_amplitude 0.3 (1.51 > its amplitude 1.28) it is left out for its amplitude instead.
    case, _ = fractional_well()
    early = measure_content(case.frames[:11], case.times[:11], case.grid, KDV, case.predicted)
    assert [(kind, i) for kind, i, _ in early.left_out] == [("soliton", 1)]
    assert "needs" in early.left_out[0][2]
    assert early.all_found  # the kappa = 1.8 soliton, the only one expected
    assert early.solitons[0].predicted_index == 0
    assert early.found == {("soliton", 0)}
    small = measure_content(
        case.frames, case.times, case.grid, KDV, case.predicted, min_amplitude=0.3
    )
    assert [(kind, i) for kind, i, _ in small.left_out] == [("soliton", 1)]
    assert "below min_amplitude" in small.left_out[0][2]
    assert small.all_found


def test_table_has_one_row_per_emerging_soliton() -> None:
    _, content = fractional_well()
    table = content.table()
    assert list(table["kind"]) == ["soliton", "soliton"]
    assert list(table["soliton"]) == [0, 1]
    assert list(table["predicted_index"]) == [0, 1]
    np.testing.assert_allclose(table["kappa_predicted"], [1.8, 0.8], rtol=1e-6)
