"""The vectorised analysis gives what a plain computation gives (no timings here: the cost is
measured by ``kdvsweep bench --sweep``, "analysis/stepping").

References, outside the code under test:

* extrema of a trigonometric polynomial: its derivative summed term by term with NumPy and its
  roots bracketed between grid samples and found by ``scipy.optimize.brentq`` (common practice,
  no source);
* ``exp(i m theta)`` from ``numpy.exp`` directly;
* the linking of solitons across frames: a frame-by-frame loop written here from the rule in
  ``kdvsweep.analysis.tracks`` (predict from the last linked frame, match by height and position,
  accept when all are apart), on simulated KdV collisions of 2 and 3 solitons round a periodic
  box (the exact Hirota N-soliton, Hirota 1971, as initial data).
"""

from __future__ import annotations

import math
from itertools import combinations

import numpy as np
import pytest
from scipy.optimize import brentq, linear_sum_assignment

import kdvsweep as kv
from kdvsweep.analysis import tracks as tr
from kdvsweep.analysis.peaks import (
    _phasors,
    count_many,
    find_peaks,
    find_peaks_many,
    peak_record,
)

LENGTH = 20.0


def _series(rng: np.random.Generator, modes: int, decay: float) -> tuple[np.ndarray, np.ndarray]:
    """Random real Fourier coefficients a_m, b_m (m >= 1) of a smooth periodic profile."""
    scale = np.exp(-decay * np.arange(1, modes + 1))
    return rng.normal(size=modes) * scale, rng.normal(size=modes) * scale


def _value(a: np.ndarray, b: np.ndarray, x: np.ndarray | float, order: int = 0) -> np.ndarray:
    """d^order/dx^order of sum_m a_m cos(k_m x) + b_m sin(k_m x), term by term."""
    k = 2.0 * np.pi / LENGTH * np.arange(1, a.size + 1)
    phase = np.outer(np.atleast_1d(x), k)
    shift = order * np.pi / 2.0  # d/dx cos(kx) = k cos(kx + pi/2)
    return (k**order * (a * np.cos(phase + shift) + b * np.sin(phase + shift))).sum(axis=1)


def _exact_maxima(a: np.ndarray, b: np.ndarray, n: int, threshold: float) -> np.ndarray:
    """Maxima above ``threshold`` (at the nearest sample) of the series, by brentq on p'."""
    x = -LENGTH / 2 + LENGTH / n * np.arange(n)
    u = _value(a, b, x)
    out = []
    for j in range(n):
        if not (u[j] >= u[j - 1] and u[j] > u[(j + 1) % n] and u[j] > threshold):
            continue
        lo, hi = x[j] - LENGTH / n, x[j] + LENGTH / n

        def slope(s: float) -> float:
            return float(_value(a, b, s, 1)[0])

        out.append(brentq(slope, lo, hi, xtol=1e-15, rtol=1e-15))
    return (np.array(out) + LENGTH / 2) % LENGTH - LENGTH / 2


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize(
    ("modes", "decay"),
    [
        (40, 0.25),  # smooth
        (60, 0.1),  # rough: sharper extrema, more Newton steps in the core's search
    ],
)
def test_extrema_of_random_smooth_profiles_match_brentq(
    seed: int, modes: int, decay: float
) -> None:
    rng = np.random.default_rng(seed)
    n = 256
    a, b = _series(rng, modes, decay)
    x = -LENGTH / 2 + LENGTH / n * np.arange(n)
    u = _value(a, b, x)
    threshold = float(np.quantile(u, 0.3))
    expected = np.sort(_exact_maxima(a, b, n, threshold))
    found = find_peaks(u, LENGTH, threshold, denoise=False)
    assert len(found) == expected.size
    np.testing.assert_allclose(np.sort(found.x), expected, rtol=0, atol=1e-11)
    np.testing.assert_allclose(found.height, _value(a, b, found.x), rtol=0, atol=1e-12)


def test_record_of_many_frames_matches_frame_by_frame() -> None:
    rng = np.random.default_rng(7)
    n = 128
    x = -LENGTH / 2 + LENGTH / n * np.arange(n)
    frames = np.array([_value(*_series(rng, 20, 0.3), x) for _ in range(30)])
    signs = (1, -1)
    record = peak_record(frames, LENGTH, 0.1, signs)
    assert len(record) == 30
    for f in (0, 7, 29, -1):
        alone = find_peaks(frames[f], LENGTH, 0.1, signs)
        np.testing.assert_allclose(record[f].x, alone.x, rtol=0, atol=1e-12)
        np.testing.assert_array_equal(record[f].sign, alone.sign)
    assert [len(p) for p in record[3:6]] == list(record.counts[3:6])
    with pytest.raises(IndexError):
        record[30]


@pytest.mark.parametrize("seed", range(4))
def test_counts_without_locating_equal_the_located_counts(seed: int) -> None:
    """Includes bumps one or two grid steps apart (merged when their located maxima are within
    the merge distance) and both polarities."""
    rng = np.random.default_rng(100 + seed)
    n = 128
    x = -LENGTH / 2 + LENGTH / n * np.arange(n)
    dx = LENGTH / n
    frames = []
    for _ in range(40):
        centre = rng.uniform(-LENGTH / 2, LENGTH / 2)
        gap = rng.uniform(1.0, 3.0) * dx
        bumps = sum(
            h * np.exp(-(((x - c + LENGTH / 2) % LENGTH - LENGTH / 2) ** 2) / (2 * w**2))
            for h, c, w in ((1.0, centre, 1.2 * dx), (0.9, centre + gap, 1.1 * dx))
        )
        frames.append(bumps - 0.7 * np.roll(bumps, n // 3) + 1e-3 * rng.normal(size=n))
    frames = np.array(frames)
    for merge in (None, 2.0 * dx):
        counts = count_many(frames, LENGTH, 0.2, (1, -1), merge)
        located = find_peaks_many(frames, LENGTH, 0.2, (1, -1), merge_distance=merge)
        np.testing.assert_array_equal(counts, [len(p) for p in located])


@pytest.mark.parametrize("modes", [1, 5, 32, 33, 257, 288])
def test_phasor_tables_match_numpy_exp(modes: int) -> None:
    theta = np.random.default_rng(3).uniform(0, 80, 50)
    k0 = 2 * np.pi / 80
    direct = np.exp(1j * np.outer(k0 * theta, np.arange(modes)))
    np.testing.assert_allclose(_phasors(theta, k0, modes), direct, rtol=0, atol=1e-12)


# --- linking --------------------------------------------------------------------------------


def _plain_link(t: tr.Tracks, kin: tr._Kinematics, link_separation: float) -> None:
    """The linking rule, one frame after another (the reference for the vectorised one)."""
    length, half = t.length, 0.5 * t.length
    n = t.n_solitons
    last_x, last_h = t.position[0].copy(), t.height[0].copy()
    velocity = kin.speeds(t.height[0])
    last_t, last_f = float(t.times[0]), 0
    for f in range(1, t.times.size):
        pk = t.extrema[f]
        if len(pk) < n:
            continue
        dt = float(t.times[f]) - last_t
        pred = last_x + velocity * dt
        cost = np.full((n, len(pk)), tr._NO_MATCH)
        for i in range(n):
            tail = kin.tail(last_h[i])
            for j in range(len(pk)):
                r = abs(math.log(abs(pk.height[j])) - math.log(abs(last_h[i])))
                if pk.sign[j] != t.sign[i] or r > tr.HEIGHT_GATE:
                    continue
                d = abs((pk.x[j] - pred[i] + half) % length - half) / tail
                cost[i, j] = (r / tr.HEIGHT_TOLERANCE) ** 2 + (d / tr.POSITION_SCALE) ** 2
        cols = linear_sum_assignment(cost)[1]
        if np.any(cost[np.arange(n), cols] >= tr._NO_MATCH):
            continue
        xf, hf = pk.x[cols], pk.height[cols]
        gap = min(
            (
                abs((xf[i] - xf[j] + half) % length - half) / max(kin.tail(hf[i]), kin.tail(hf[j]))
                for i, j in combinations(range(n), 2)
            ),
            default=math.inf,
        )
        if gap < link_separation:
            continue
        new_x = pred + ((xf - pred + half) % length - half)
        if last_f == f - 1:
            velocity = (new_x - last_x) / dt
        t.x[f], t.position[f], t.height[f], t.linked[f] = xf, new_x, hf, True
        last_x, last_h, last_t, last_f = new_x, hf, float(t.times[f]), f


@pytest.mark.parametrize(
    ("kappas", "x0", "end"),
    [
        ([1.0, 0.6], [-20.0, -5.0], 30.0),
        ([1.0, 0.7, 0.45], [-22.0, -12.0, 0.0], 25.0),
    ],
)
def test_linking_all_frames_at_once_equals_frame_by_frame(
    kappas: list[float], x0: list[float], end: float
) -> None:
    grid = kv.Grid(512, 60.0)
    times = np.round(np.arange(0.0, end, 0.1), 10)
    sim = kv.Simulation(grid, kv.Equation.coerce("kdv", "test"), dt=2.5e-3)
    sim.set_state(kv.exact.multisoliton(grid.x, 0.0, kappas, x0), 0.0)
    frames = np.asarray(sim.record(times))
    found = tr.track(frames, times, grid.length, "kdv", kappas, link_separation=6.0)
    assert not found.reason
    assert 0.3 < found.linked[1:].mean() < 1.0  # collisions leave frames unlinked
    unwrapped = np.ptp(found.position[found.linked], axis=0)
    assert unwrapped.max() > grid.length  # the fast soliton went round the box
    plain = tr.track(frames[:1], times[:1], grid.length, "kdv", kappas, link_separation=6.0)
    m = times.size
    plain = tr.Tracks(
        times,
        grid.length,
        np.full((m, len(kappas)), np.nan),
        np.full((m, len(kappas)), np.nan),
        np.full((m, len(kappas)), np.nan),
        found.sign,
        np.zeros(m, dtype=bool),
        np.zeros(m, dtype=bool),
        found.peak_count,
        found.threshold,
        found.separation,
        extrema=found.extrema,
    )
    plain.x[0], plain.position[0], plain.height[0] = found.x[0], found.position[0], found.height[0]
    _plain_link(plain, tr._Kinematics("kdv"), 6.0)
    np.testing.assert_array_equal(plain.linked[1:], found.linked[1:])
    on = found.linked
    np.testing.assert_allclose(found.position[on], plain.position[on], rtol=0, atol=1e-10)
    np.testing.assert_array_equal(found.height[on], plain.height[on])
