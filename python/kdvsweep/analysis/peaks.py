"""Sub-grid location of the extrema of a periodic profile from its trigonometric interpolant.

A resolved spectral solution *is* its trigonometric interpolant, so the extremum of that interpolant
is the extremum of the solution to round-off. It is found by a safeguarded Newton iteration on the
derivative of the Fourier series, started from the vertex of the parabola through the three samples
around the discrete extremum and kept inside the two grid cells around it (bisection on the sign of
the derivative when a step leaves them). A 3-point parabola alone is exact only for quadratics and
leaves an error of order ``dx^2`` times the profile's relative third derivative (about 1e-4 of a
width for a soliton at ten points per width; common practice, no source).

The candidates (the discrete extrema above the threshold) are chosen here; the transforms of their
frames, the noise band and the iteration run in the compiled core (``kdvsweep._core.locate_extrema``:
one transform per frame, phases by recurrence), as does the noise band of :class:`Interpolant`
(``kdvsweep._core.interpolant_spectra``).
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import overload

import numpy as np

from .. import _core
from ..exceptions import ConfigError, ShapeError

# Modes per block of the phasor tables (_phasors).
_PHASOR_BLOCK = 32
# Points evaluated together by Interpolant.taylor (work arrays of ~0.6 MB at n = 512).
_CACHE_BLOCK = 128


@dataclass(frozen=True)
class Peaks:
    """Extrema of one frame, sorted by position.

    Attributes
    ----------
    x
        Positions in ``[-L/2, L/2)``.
    height
        Interpolant values there (signed: a trough has a negative height).
    sign
        +1 for a maximum of ``u``, -1 for a minimum (a maximum of ``-u``).
    """

    x: np.ndarray
    height: np.ndarray
    sign: np.ndarray

    def __len__(self) -> int:
        return int(self.x.size)


class Interpolant:
    """Trigonometric interpolants of frames sampled at ``x_j = -L/2 + j L/n`` and their derivatives.

    Parameters
    ----------
    frames
        Shape ``(m, n)`` (or ``(n,)`` for one frame), ``n`` even.
    length
        The period ``L``.
    denoise
        Drop the high modes that sit at a noise floor (estimated per frame from the top quarter of
        the band; the core's rule, see ``kdvsweep._core.interpolant_spectra``); a spectrum still
        decaying there is kept whole.
    """

    def __init__(self, frames: np.ndarray, length: float, denoise: bool = True) -> None:
        u = np.ascontiguousarray(np.atleast_2d(np.asarray(frames, dtype=np.float64)))
        n = u.shape[1]
        self.n = n
        self.length = float(length)
        modes = n // 2 + 1
        # The transform, padded with zero modes to whole blocks of the phasor tables (_phasors).
        padded = -(-modes // _PHASOR_BLOCK) * _PHASOR_BLOCK
        self._spec = np.empty((u.shape[0], padded), complex)
        self._spec[:, modes:] = 0.0
        self._spec[:, :modes] = _core.interpolant_spectra(u, denoise=denoise)
        # p(x) = Re sum_m w_m U_m exp(i k_m (x + L/2)); the Nyquist mode enters as a cosine. The
        # weights w_m are applied in the sums (Interpolant.taylor), not to the spectrum.
        self._weights = np.zeros(padded)
        self._weights[:modes] = 2.0 / n
        self._weights[0] = 1.0 / n
        self._weights[modes - 1] = 1.0 / n
        self.k = 2.0 * np.pi / self.length * np.arange(modes)
        self._k_padded = 2.0 * np.pi / self.length * np.arange(padded)
        self._coef: np.ndarray | None = None
        self._abs: np.ndarray | None = None
        self._sizes: dict[int, np.ndarray] = {}

    @property
    def coef(self) -> np.ndarray:
        """``w_m U_m``: the coefficients of the series, shape ``(m, n/2 + 1)``."""
        if self._coef is None:
            modes = self.k.size
            self._coef = self._spec[:, :modes] * self._weights[:modes]
        return self._coef

    def size(self, power: int) -> np.ndarray:
        """``sum_m |coef_m| k_m^power`` of each frame: a bound on ``|p^(power)|``, shape ``(m,)``."""
        if power not in self._sizes:
            if self._abs is None:
                self._abs = np.abs(self._spec)
            scale = self._weights * self._k_padded**power
            self._sizes[power] = np.einsum("fm,m->f", self._abs, scale)
        return self._sizes[power]

    def taylor(self, frame: np.ndarray, x: np.ndarray, order: int) -> np.ndarray:
        """Derivatives of orders ``0 .. order`` of frame ``frame[p]``'s interpolant at ``x[p]``,
        shape ``(order + 1, len(x))``, from one pass over the modes."""
        frame = np.asarray(frame, dtype=np.int64)
        theta = np.asarray(x, dtype=np.float64) + 0.5 * self.length
        # p^(r) = Re sum w (i k)^r z = s_r sum w k^r Re z (r even) or s_r sum w k^r Im z (r odd), with
        # s_r the sign of i^r: two real products, of the real and of the imaginary parts.
        signs = np.array([(1.0, -1.0, -1.0, 1.0)[r % 4] for r in range(order + 1)])
        weights = (
            self._k_padded[:, None] ** np.arange(order + 1)[None, :] * signs
        ) * self._weights[:, None]
        out = np.empty((order + 1, theta.size))
        # In blocks of points whose work arrays stay in a core's cache, and whose products are
        # small enough for a single-threaded BLAS call (a threaded one was erratic on a loaded
        # machine).
        for b in range(0, theta.size, _CACHE_BLOCK):
            sl = slice(b, b + _CACHE_BLOCK)
            z = _phasors(theta[sl], self.k[1], self._spec.shape[1])
            z *= self._spec[frame[sl]]
            out[0::2, sl] = (np.ascontiguousarray(z.real) @ weights[:, 0::2]).T
            out[1::2, sl] = (np.ascontiguousarray(z.imag) @ weights[:, 1::2]).T
        return out

    def derivatives(
        self, frame: np.ndarray, x: np.ndarray, orders: tuple[int, ...] = (0, 1, 2)
    ) -> list[np.ndarray]:
        """Derivatives of the requested orders of frame ``frame[p]``'s interpolant at ``x[p]``."""
        d = self.taylor(frame, x, max(orders))
        return [d[m] for m in orders]

    def __call__(self, frame: np.ndarray, x: np.ndarray) -> np.ndarray:
        """Values of frame ``frame[p]``'s interpolant at ``x[p]``."""
        return self.derivatives(frame, x, (0,))[0]


def _phasors(theta: np.ndarray, k0: float, modes: int) -> np.ndarray:
    """``exp(i m k0 theta)`` for ``m < modes``, as an outer product of two short tables of powers of
    ``w = exp(i k0 theta)`` (``w^0 .. w^31`` and the powers of ``w^32``), each built by doubling
    (one complex exponential per point; a few ulp from the products, less than the rounding of
    ``m k0 theta`` in the direct exponential). Contiguous when ``modes`` is a multiple of the
    block."""
    rows = -(-modes // _PHASOR_BLOCK)
    w = np.exp(1j * k0 * theta)
    fine = _powers(w, _PHASOR_BLOCK)
    coarse = _powers(fine[:, -1] * w, rows)
    out = np.empty((theta.size, rows, _PHASOR_BLOCK), dtype=np.complex128)
    np.multiply(coarse[:, :, None], fine[:, None, :], out=out)
    whole = out.reshape(theta.size, -1)
    return whole if whole.shape[1] == modes else whole[:, :modes]


def _powers(w: np.ndarray, count: int) -> np.ndarray:
    """``w^0 .. w^(count - 1)`` of each ``w``, shape ``(len(w), count)``: each block of powers is
    the block before it times the next power (``log2(count)`` products deep)."""
    out = np.empty((w.size, count), dtype=np.complex128)
    out[:, 0] = 1.0
    if count > 1:
        out[:, 1] = w
    k = 2
    while k < count:
        step = min(k, count - k)
        np.multiply(out[:, :step], (out[:, k - 1] * w)[:, None], out=out[:, k : k + step])
        k *= 2
    return out


def _wrap(x: np.ndarray, length: float) -> np.ndarray:
    return (x + 0.5 * length) % length - 0.5 * length


def ring_distance(a: np.ndarray, b: np.ndarray, length: float) -> np.ndarray:
    """Shortest distance between points on the circle of circumference ``length``."""
    return np.abs(_wrap(np.asarray(a) - np.asarray(b), length))


def _candidates(u: np.ndarray, threshold: float, sign: int) -> tuple[np.ndarray, np.ndarray]:
    """(frame, index) of the discrete maxima of ``sign * u`` above ``threshold`` (periodic), in
    row-major order; only the samples above the threshold are compared with their neighbours."""
    n = u.shape[1]
    flat = u.ravel()
    at = np.flatnonzero(flat > threshold if sign == 1 else flat < -threshold)
    cols = at % n
    left, right = at - 1, at + 1
    left[cols == 0] += n
    right[cols == n - 1] -= n
    value = sign * flat[at]
    at = at[(value >= sign * flat[left]) & (value > sign * flat[right])]
    return at // n, at % n


class PeakRecord(Sequence[Peaks]):
    """The extrema of every frame of a record, stored flat (by frame, then position); indexing
    gives one frame's :class:`Peaks`.

    Attributes
    ----------
    x, height, sign
        All extrema (see :class:`Peaks`).
    frame
        The frame of each extremum, non-decreasing.
    bounds
        Shape ``(m + 1,)``: frame ``f``'s extrema are ``bounds[f]:bounds[f + 1]``.
    """

    def __init__(
        self, x: np.ndarray, height: np.ndarray, sign: np.ndarray, frame: np.ndarray, frames: int
    ) -> None:
        self.x, self.height, self.sign, self.frame = x, height, sign, frame
        self.bounds = np.searchsorted(frame, np.arange(frames + 1))

    @property
    def counts(self) -> np.ndarray:
        """Extrema per frame, shape ``(m,)``."""
        return np.diff(self.bounds)

    def __len__(self) -> int:
        return int(self.bounds.size - 1)

    @overload
    def __getitem__(self, index: int) -> Peaks: ...

    @overload
    def __getitem__(self, index: slice) -> list[Peaks]: ...

    def __getitem__(self, index: int | slice) -> Peaks | list[Peaks]:
        if isinstance(index, slice):
            return [self[f] for f in range(*index.indices(len(self)))]
        f = range(len(self))[index]  # IndexError, negative indices
        sel = slice(int(self.bounds[f]), int(self.bounds[f + 1]))
        return Peaks(self.x[sel], self.height[sel], self.sign[sel])

    def __iter__(self) -> Iterator[Peaks]:
        return (self[f] for f in range(len(self)))


def _check_frames(frames: np.ndarray, length: float) -> np.ndarray:
    u = np.asarray(frames, dtype=np.float64)
    if u.ndim != 2 or u.shape[1] < 4 or u.shape[1] % 2:
        raise ShapeError(f"find_peaks: frames must be (m, n) with n even >= 4, got {u.shape}")
    if not (np.isfinite(length) and length > 0):
        raise ConfigError(f"find_peaks: length must be positive and finite, got {length}")
    return u


def peak_record(
    frames: np.ndarray,
    length: float,
    threshold: float,
    signs: tuple[int, ...] = (1,),
    denoise: bool = True,
    merge_distance: float | None = None,
) -> PeakRecord:
    """:func:`find_peaks_many` as one flat :class:`PeakRecord` (no per-frame object is built until
    a frame is indexed)."""
    u = _check_frames(frames, length)
    m, n = u.shape
    dx = length / n
    found = [_candidates(u, threshold, s) for s in signs]
    frame = np.concatenate([f for f, _ in found])
    if frame.size == 0:
        empty = np.empty(0)
        return PeakRecord(empty, empty, np.empty(0, dtype=np.int64), frame.astype(np.int64), m)
    j = np.concatenate([j for _, j in found])
    sign = np.concatenate(
        [np.full(f.size, s, dtype=np.int64) for (f, _), s in zip(found, signs, strict=True)]
    )
    x, height, _ = _core.locate_extrema(
        np.ascontiguousarray(u),
        float(length),
        frame.astype(np.int64, copy=False),
        j.astype(np.int64, copy=False),
        sign,
        denoise=denoise,
    )
    x = _wrap(x, length)
    merge = dx if merge_distance is None else merge_distance
    order = np.lexsort((x, frame))
    frame, x, height, sign = frame[order], x[order], height[order], sign[order]
    bounds = np.searchsorted(frame, np.arange(m + 1))
    # Frames with two same-sign extrema closer than ``merge`` (neighbours in x, or the last and
    # first across x = L/2) need merging; the rest are kept as they are.
    same = (frame[1:] == frame[:-1]) & (sign[1:] == sign[:-1]) & (np.diff(x) < merge)
    crowded = set(frame[1:][same].tolist())
    lo, hi = bounds[:-1], bounds[1:] - 1
    wraps = (hi > lo) & (x[np.maximum(hi, 0)] - x[lo.clip(max=x.size - 1)] > length - merge)
    crowded.update(np.flatnonzero(wraps).tolist())
    if crowded:
        keep = np.ones(frame.size, dtype=bool)
        for f in sorted(crowded):
            a, b = int(bounds[f]), int(bounds[f + 1])
            mine = np.zeros(b - a, dtype=bool)
            mine[_merge(x[a:b], sign[a:b] * height[a:b], sign[a:b], length, merge)] = True
            keep[a:b] = mine
        frame, x, height, sign = frame[keep], x[keep], height[keep], sign[keep]
    return PeakRecord(x, height, sign, frame, m)


def count_many(
    frames: np.ndarray,
    length: float,
    threshold: float,
    signs: tuple[int, ...] = (1,),
    merge_distance: float | None = None,
) -> np.ndarray:
    """The number of extrema in each frame, equal to ``len`` of each of :func:`find_peaks_many`'s
    (``denoise`` on), without locating them: the discrete extrema are counted, and only frames
    where two of one sign are close enough to be merged (within ``merge_distance`` plus two grid
    steps, the most their sub-grid positions can move) are searched in full."""
    u = _check_frames(frames, length)
    m, n = u.shape
    dx = length / n
    merge = dx if merge_distance is None else merge_distance
    counts = np.zeros(m, dtype=np.int64)
    crowded = []
    for s in signs:
        f, j = _candidates(u, threshold, s)
        counts += np.bincount(f, minlength=m)
        close = (f[1:] == f[:-1]) & ((j[1:] - j[:-1]) * dx < merge + 2.0 * dx)
        crowded.append(f[1:][close])
        bounds = np.searchsorted(f, np.arange(m + 1))
        lo, hi = bounds[:-1], bounds[1:] - 1
        two = np.flatnonzero(hi > lo)
        around = (n - (j[hi[two]] - j[lo[two]])) * dx < merge + 2.0 * dx
        crowded.append(two[around])
    redo = np.unique(np.concatenate(crowded))
    if redo.size:
        counts[redo] = peak_record(u[redo], length, threshold, signs, True, merge).counts
    return counts


def find_peaks_many(
    frames: np.ndarray,
    length: float,
    threshold: float,
    signs: tuple[int, ...] = (1,),
    denoise: bool = True,
    merge_distance: float | None = None,
) -> list[Peaks]:
    """The extrema above ``threshold`` of every frame of a record, to sub-grid accuracy.

    Parameters
    ----------
    frames
        Shape ``(m, n)``, each row one period sampled on ``[-L/2, L/2)``, ``n`` even.
    length
        The period ``L``.
    threshold
        Minimum ``sign * u`` at the discrete extremum; lower bumps (radiation, noise) are ignored.
    signs
        ``(1,)`` for maxima, ``(-1,)`` for minima, ``(1, -1)`` for both (mKdV).
    denoise
        Search the interpolant with the noise-floor modes removed (see :class:`Interpolant`).
    merge_distance
        Extrema of one sign closer than this are one (the higher kept); default one grid step.

    Returns
    -------
    list of Peaks
        One per frame, sorted by position.
    """
    return list(peak_record(frames, length, threshold, signs, denoise, merge_distance))


def find_peaks(
    u: np.ndarray,
    length: float,
    threshold: float,
    signs: tuple[int, ...] = (1,),
    denoise: bool = True,
    merge_distance: float | None = None,
) -> Peaks:
    """Extrema above ``threshold`` of one periodic frame ``u`` (see :func:`find_peaks_many`)."""
    arr = np.asarray(u, dtype=np.float64)
    if arr.ndim != 1:
        raise ShapeError(f"find_peaks: u must be a 1-D array, got shape {arr.shape}")
    return find_peaks_many(arr[None, :], length, threshold, signs, denoise, merge_distance)[0]


def _merge(
    x: np.ndarray, v: np.ndarray, sign: np.ndarray, length: float, distance: float
) -> np.ndarray:
    """Indices to keep: of same-sign extrema closer than ``distance``, the one with larger ``v``."""
    if x.size < 2:
        return np.arange(x.size)
    keep: list[int] = []
    for i in np.argsort(-v):
        if all(sign[i] != sign[j] or ring_distance(x[i], x[j], length) >= distance for j in keep):
            keep.append(int(i))
    return np.array(keep, dtype=np.int64)


def count_peaks(
    u: np.ndarray, length: float, threshold: float, signs: tuple[int, ...] = (1,)
) -> int:
    """Number of extrema above ``threshold`` (of each sign in ``signs``) in one frame."""
    return len(find_peaks(u, length, threshold, signs))


__all__ = [
    "Interpolant",
    "PeakRecord",
    "Peaks",
    "count_many",
    "count_peaks",
    "find_peaks",
    "find_peaks_many",
    "peak_record",
    "ring_distance",
]
