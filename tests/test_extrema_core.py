"""The compiled extremum search (``kdvsweep._core.locate_extrema``) and the interpolant's spectra
(``kdvsweep._core.interpolant_spectra``).

References, outside the code under test:

* extrema of a trigonometric polynomial: its derivative summed term by term with NumPy and its
  roots bracketed between grid samples and found by ``scipy.optimize.brentq`` (common practice,
  no source);
* spectra: ``numpy.fft.rfft``; the noise band: the rule as stated in the docstring of
  ``interpolant_spectra`` (medians of the top two quarters of the band, 0.3 and 10), applied here
  with NumPy.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from kdvsweep import _core
from kdvsweep.exceptions import ConfigError, ShapeError

LENGTH = 30.0


def _series(seed: int, modes: int, decay: float) -> tuple[np.ndarray, np.ndarray]:
    """Random real Fourier coefficients a_m, b_m (m = 1..modes) of a smooth periodic profile."""
    rng = np.random.default_rng(seed)
    scale = np.exp(-decay * np.arange(1, modes + 1))
    return rng.normal(size=modes) * scale, rng.normal(size=modes) * scale


def _value(a: np.ndarray, b: np.ndarray, x: np.ndarray | float, order: int = 0) -> np.ndarray:
    """d^order/dx^order of sum_m a_m cos(k_m x) + b_m sin(k_m x), term by term."""
    k = 2.0 * np.pi / LENGTH * np.arange(1, a.size + 1)
    phase = np.outer(np.atleast_1d(x), k) + order * np.pi / 2.0
    return (k**order * (a * np.cos(phase) + b * np.sin(phase))).sum(axis=1)


def _grid(n: int) -> np.ndarray:
    return -LENGTH / 2 + LENGTH / n * np.arange(n)


def _discrete_extrema(u: np.ndarray, sign: int) -> np.ndarray:
    v = sign * u
    return np.flatnonzero((v >= np.roll(v, 1)) & (v > np.roll(v, -1)))


@pytest.mark.parametrize(("n", "modes", "decay"), [(128, 30, 0.3), (256, 60, 0.1), (64, 28, 0.02)])
def test_extrema_match_brentq_on_the_derivative(n: int, modes: int, decay: float) -> None:
    """Maxima and minima of several frames at once; the last case fills the band nearly up to
    Nyquist with coefficients that hardly decay, where extrema are a grid step or two apart."""
    x = _grid(n)
    dx = LENGTH / n
    series = [_series(seed, modes, decay) for seed in range(5)]
    frames = np.array([_value(a, b, x) for a, b in series])
    frame, index, sign = [], [], []
    for f, u in enumerate(frames):
        for s in (1, -1):
            js = _discrete_extrema(u, s)
            frame += [f] * js.size
            index += js.tolist()
            sign += [s] * js.size
    frame_a, index_a, sign_a = (np.array(v, dtype=np.int64) for v in (frame, index, sign))
    found_x, found_h, converged = _core.locate_extrema(
        frames, LENGTH, frame_a, index_a, sign_a, denoise=False
    )
    assert converged.all()
    assert found_x.size == frame_a.size > 20
    for c in range(frame_a.size):
        a, b = series[frame_a[c]]
        j = index_a[c]

        def slope(s: float, a: np.ndarray = a, b: np.ndarray = b) -> float:
            return float(_value(a, b, s, 1)[0])

        # the cell beside the sample towards which sign * u rises holds the extremum (where the
        # band is nearly full, another may sit a cell away); the root of p' is bracketed within a
        # hundredth of a step around the one found
        if decay >= 0.1:
            rising = x[j] if sign_a[c] * slope(x[j]) > 0 else x[j] - dx
            assert rising <= found_x[c] <= rising + dx
        assert abs(found_x[c] - x[j]) <= dx
        lo, hi = found_x[c] - 0.01 * dx, found_x[c] + 0.01 * dx
        expected = brentq(slope, lo, hi, xtol=1e-15, rtol=1e-15)
        assert abs(found_x[c] - expected) < 1e-12 * LENGTH, (c, found_x[c] - expected)
        height = float(_value(a, b, found_x[c])[0])
        assert abs(found_h[c] - height) < 1e-12 * max(1.0, abs(height))
        # an extremum of the right kind: the curvature has the opposite sign of `sign`
        assert sign_a[c] * float(_value(a, b, found_x[c], 2)[0]) < 0


def test_candidate_order_and_repeated_frames_do_not_matter() -> None:
    n = 128
    x = _grid(n)
    frames = np.array([_value(*_series(seed, 20, 0.3), x) for seed in range(4)])
    frame, index = [], []
    for f, u in enumerate(frames):
        js = _discrete_extrema(u, 1)
        frame += [f] * js.size
        index += js.tolist()
    frame_a, index_a = np.array(frame, dtype=np.int64), np.array(index, dtype=np.int64)
    sign = np.ones(frame_a.size, dtype=np.int64)
    together = _core.locate_extrema(frames, LENGTH, frame_a, index_a, sign)
    perm = np.random.default_rng(1).permutation(frame_a.size)
    shuffled = _core.locate_extrema(frames, LENGTH, frame_a[perm], index_a[perm], sign)
    np.testing.assert_array_equal(shuffled[0], together[0][perm])
    for f in range(frames.shape[0]):
        mine = frame_a == f
        alone = _core.locate_extrema(
            frames[f : f + 1], LENGTH, np.zeros(mine.sum(), np.int64), index_a[mine], sign[mine]
        )
        np.testing.assert_array_equal(alone[0], together[0][mine])
        np.testing.assert_array_equal(alone[1], together[1][mine])


def test_spectra_match_numpy_rfft() -> None:
    rng = np.random.default_rng(5)
    frames = rng.normal(size=(6, 96))
    spec = _core.interpolant_spectra(frames, denoise=False)
    expected = np.fft.rfft(frames, axis=1)
    assert spec.shape == expected.shape
    assert spec.dtype == np.complex128
    np.testing.assert_allclose(spec, expected, rtol=0, atol=1e-12 * np.abs(expected).max())


def _noise_rule(spec: np.ndarray) -> np.ndarray:
    """The noise band of ``interpolant_spectra``'s docstring, with NumPy."""
    out = spec.copy()
    m = spec.shape[1]
    half, quarter = m // 2, 3 * m // 4
    for row in out:
        mag = np.abs(row)
        floor, below = np.median(mag[quarter:]), np.median(mag[half:quarter])
        if floor > 0 and floor >= 0.3 * below:
            above = np.flatnonzero(mag > 10.0 * floor)
            if above.size:
                row[above[-1] + 1 :] = 0.0
    return out


def test_noise_band_follows_the_stated_rule() -> None:
    n = 256
    x = _grid(n)
    rng = np.random.default_rng(9)
    clean = np.array([2.0 / np.cosh(x - c) ** 2 for c in (-3.0, 0.5, 7.0)])
    noisy = clean + 1e-6 * rng.normal(size=clean.shape)
    for frames in (clean, noisy):
        spec = _core.interpolant_spectra(frames, denoise=True)
        expected = _noise_rule(np.fft.rfft(frames, axis=1))
        np.testing.assert_array_equal(spec == 0, expected == 0)
        np.testing.assert_allclose(spec, expected, rtol=0, atol=1e-12 * np.abs(expected).max())
    # the noise of the noisy frames is cut where their spectra meet it, far below the round-off
    # plateau of the clean ones

    def kept(frames: np.ndarray) -> np.ndarray:
        spec = _core.interpolant_spectra(frames)
        return np.array([np.flatnonzero(row)[-1] + 1 for row in spec])

    assert (kept(noisy) < kept(clean)).all()
    assert (kept(noisy) < n // 4).all()


def _one_line(err: pytest.ExceptionInfo[BaseException]) -> str:
    msg = str(err.value)
    assert "\n" not in msg
    return msg


def test_bad_input_raises_one_line_errors() -> None:
    frames = np.zeros((2, 16))
    one = np.array([0], dtype=np.int64)
    plus = np.array([1], dtype=np.int64)
    with pytest.raises(ConfigError) as err:
        _core.locate_extrema(frames, LENGTH, np.array([2], np.int64), one, plus)
    assert "frame" in _one_line(err)
    with pytest.raises(ConfigError) as err:
        _core.locate_extrema(frames, LENGTH, one, np.array([16], np.int64), plus)
    assert "index" in _one_line(err)
    with pytest.raises(ConfigError) as err:
        _core.locate_extrema(frames, LENGTH, one, np.array([-1], np.int64), plus)
    assert "index" in _one_line(err)
    with pytest.raises(ConfigError) as err:
        _core.locate_extrema(frames, LENGTH, one, one, np.array([0], np.int64))
    assert "sign" in _one_line(err)
    with pytest.raises(ShapeError) as err:
        _core.locate_extrema(frames, LENGTH, one, np.array([0, 1], np.int64), plus)
    _one_line(err)
    with pytest.raises(ConfigError) as err:
        _core.locate_extrema(frames, -1.0, one, one, plus)
    assert "length" in _one_line(err)
    with pytest.raises(ConfigError) as err:
        _core.locate_extrema(np.zeros((2, 15)), LENGTH, one, one, plus)
    _one_line(err)
    bad = frames.copy()
    bad[0, 3] = np.nan
    with pytest.raises(ConfigError) as err:
        _core.locate_extrema(bad, LENGTH, one, one, plus)
    assert "finite" in _one_line(err)
    with pytest.raises(ConfigError) as err:
        _core.interpolant_spectra(bad)
    _one_line(err)
    empty = np.empty(0, dtype=np.int64)
    x, h, c = _core.locate_extrema(frames, LENGTH, empty, empty, empty)
    assert x.size == h.size == c.size == 0
