"""Automatic sizing of soliton runs and the resolution check.

Kinematics (unperturbed speeds ``c_i = 4 d kappa_i^2``, centres ``p_i + c_i t`` between collisions):

- *Gap.* Every family has tails ``C e^{-2 kappa |x - x0|}`` relative to the peak, ``C = 4`` for
  KdV (``sech^2``, Korteweg & de Vries 1895), ``C = 2`` for mKdV (``sech``, Wadati 1973) and
  ``C = 2 (1 + s r) / (s r)`` for Gardner (:class:`kdvsweep.model.SolitonForm`). Two
  solitons count as apart when the wider one's tail at the other's centre is below ``tail``:
  ``s_ij = ln(C / tail) / (2 min(kappa_i, kappa_j))``. Auto positions put neighbours ``s_ij``
  apart, in the listed order, the group centred on ``x = 0``.
- *End time.* Every pair with the faster soliton behind must overtake and end ``s_ij`` apart, plus
  the shifts that collisions with third solitons may add (bounded by the magnitudes of the
  pairwise shifts :func:`kdvsweep.theory.pair_shift`; Gardner, Greene, Kruskal & Miura 1974,
  additive pair by pair, Zakharov 1971): ``T = max t_ij``.
- *Length.* The box must be long enough that no soliton meets another's periodic image before
  ``T``. In relative coordinates ``d_ij(t) = x_i - x_j`` moves linearly, so it is enough that
  ``|d_ij| + s_ij <= L`` at ``t = 0`` and at ``t = T`` (there enlarged by both solitons' shift
  bounds); ``i = j`` gives ``L >= s_ii``. Single solitons do cross ``x = +-L/2`` (the lab frame
  moves), so tracking must unwrap positions. Radiation (group velocity ``-3 d k^2``, to the left)
  wraps around too; for separated solitons of an integrable equation it is at the ``tail`` level and
  is not budgeted.

Resolution: the Fourier transform of ``sech^2(x/w)`` and of ``sech(x/w)`` decays like
``e^{-pi k w / 2}`` (the transforms are ``pi k w^2 / sinh(pi k w / 2)`` and
``pi w / cosh(pi k w / 2)``; checked with numpy in the tests), so keeping ``D`` decades at the dealiasing cutoff ``phi pi / dx`` needs ``w / dx >= 2 D ln(10) / (phi pi^2)``
points per width. ``D = 16`` is the double-precision level (``k_max >~ 23.5 kappa``,
``dx <~ 0.13/kappa`` undealiased, ``0.09/kappa`` with 2/3 dealiasing, for KdV of width
``1/kappa``); it gives 11.2 points per width for KdV (``phi = 2/3``) and 14.9 for mKdV
(``phi = 1/2``): below it a sweep warns. ``D = 6`` (4.2 and 5.6 points per width) is our refusal
level: the profile's spectrum would still be at 1e-6 where the nonlinear term is cut.

Time step (warning only): each fixed-step scheme's measured stable step,
:func:`kdvsweep.simulation.dt_limit` (the constants :data:`kdvsweep.simulation.STEP_RULE`, measured
by ``kdvsweep bench --steps``), taken at ``max|u|``: the largest amplitude, or for mKdV solitons of
both polarities the sum of the amplitudes (their peak when they meet, seen on the exact 2-soliton).
The resolution levels :data:`WARN_DECADES` and :data:`REFUSE_DECADES` live there too, with the
spectral estimate used for data other than solitons (:func:`kdvsweep.simulation.spectrum_decades`).

Blocks of runs: :func:`auto_positions`, :func:`end_time`, :func:`min_length`, :func:`points_needed`,
:func:`auto_points` and :func:`nice_ceil` take arrays with one run per row (a run alone is a block of
one) and give, row by row, the very bits a run alone gave: numpy only adds, multiplies, divides and
compares (correctly rounded), logarithms are taken element by element with ``math`` (numpy's
vectorised ones may differ by an ulp), maxima follow Python's ``max`` (a NaN candidate is skipped)
and sums run left to right. The values feed the sweep digest.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, overload

import numpy as np

from ..exceptions import ShapeError
from ..model import SolitonForm
from ..simulation import (
    REFUSE_DECADES,
    WARN_DECADES,
    dt_limit,
    nonlinear_rate,
    spectrum_decades,
    step_warning,
)
from ..theory import pair_shift

if TYPE_CHECKING:
    from ..spectrum import SolitonContent


def _tail_constant(kappa: np.ndarray, form: SolitonForm) -> np.ndarray:
    """The larger :meth:`SolitonForm.tail_constant` over the equation's polarities (as Python's
    ``max`` of them, element by element)."""
    out = np.asarray(form.tail_constant(kappa, form.polarities[0]), dtype=np.float64)
    for s in form.polarities[1:]:
        other = np.asarray(form.tail_constant(kappa, s), dtype=np.float64)
        out = np.where(other > out, other, out)
    return out


def _logs(values: np.ndarray) -> np.ndarray:
    """``math.log`` element by element (numpy's SIMD log may differ from libm by an ulp)."""
    return np.array([math.log(v) for v in values.ravel().tolist()], dtype=np.float64).reshape(
        values.shape
    )


@overload
def reach(kappa: float, form: SolitonForm, tail: float) -> float: ...
@overload
def reach(kappa: np.ndarray, form: SolitonForm, tail: float) -> np.ndarray: ...
def reach(kappa: float | np.ndarray, form: SolitonForm, tail: float) -> float | np.ndarray:
    """Distance from a soliton's centre to where its relative tail ``C e^{-2 kappa |x|}`` is
    ``tail``, ``ln(C / tail) / (2 kappa)``, with ``C`` of :meth:`SolitonForm.tail_constant` (the
    larger over the equation's polarities; near Gardner's table-top limit it covers the plateau).

    ``kappa`` a float (a float back) or an array of any shape (an array of that shape).
    """
    k = np.asarray(kappa, dtype=np.float64)
    if form.family == "gardner":  # C depends on kappa
        with np.errstate(all="ignore"):
            logs = _logs(_tail_constant(k, form) / tail)
    else:  # KdV, mKdV: C is a constant of the family (any kappa gives it)
        logs = np.full(k.shape, math.log(float(_tail_constant(np.ones(()), form)) / tail))
    with np.errstate(all="ignore"):
        out = logs / (2.0 * k)
    return float(out) if out.ndim == 0 else out


def _wider(k_i: np.ndarray, k_j: np.ndarray, r_i: np.ndarray, r_j: np.ndarray) -> np.ndarray:
    """The reach of the wider soliton (``min(k_i, k_j)`` as Python's ``min``: ``k_i`` on ties)."""
    return np.where(k_j < k_i, r_j, r_i)


@overload
def gap(k_i: float, k_j: float, form: SolitonForm, tail: float) -> float: ...
@overload
def gap(k_i: np.ndarray, k_j: np.ndarray, form: SolitonForm, tail: float) -> np.ndarray: ...
def gap(
    k_i: float | np.ndarray, k_j: float | np.ndarray, form: SolitonForm, tail: float
) -> float | np.ndarray:
    """Centre distance where the wider soliton's relative tail at the other's centre is ``tail``
    (floats, or arrays element by element)."""
    ki = np.asarray(k_i, dtype=np.float64)
    kj = np.asarray(k_j, dtype=np.float64)
    out = _wider(ki, kj, reach(ki, form, tail), reach(kj, form, tail))
    return float(out) if out.ndim == 0 else out


@overload
def shift_bound(k_i: float, k_j: float) -> float: ...
@overload
def shift_bound(k_i: np.ndarray, k_j: np.ndarray) -> np.ndarray: ...
def shift_bound(k_i: float | np.ndarray, k_j: float | np.ndarray) -> float | np.ndarray:
    """Magnitude of soliton i's position shift from overtaking j, ``|`` :func:`theory.pair_shift`
    ``|`` = ``ln((k_i + k_j) / |k_i - k_j|) / k_i`` (floats, or arrays element by element).

    Kappas that are equal, not positive or not finite raise pair_shift's ConfigError (the first
    such element's).
    """
    ki = np.asarray(k_i, dtype=np.float64)
    kj = np.asarray(k_j, dtype=np.float64)
    good = np.isfinite(ki) & np.isfinite(kj) & (ki > 0) & (kj > 0) & (ki != kj)
    if not good.all():
        first = np.flatnonzero(~np.broadcast_to(good, np.broadcast(ki, kj).shape).ravel())[0]
        pi_, pj_ = np.broadcast_arrays(ki, kj)
        pair_shift(float(pi_.ravel()[first]), float(pj_.ravel()[first]))  # raises its message
    out = _logs((ki + kj) / np.abs(ki - kj)) / ki
    return float(out) if out.ndim == 0 else out


def _block(values: Sequence[float] | np.ndarray) -> np.ndarray:
    """A block of runs ``(m, N)`` float64: an array as given (2-D), a sequence as one run."""
    if isinstance(values, np.ndarray):
        if values.ndim != 2:
            raise ShapeError(f"sizing: a block of runs has shape (m, N), got {values.shape}")
        return values.astype(np.float64, copy=False)
    return np.array([values], dtype=np.float64)


@overload
def auto_positions(kappas: Sequence[float], form: SolitonForm, tail: float) -> list[float]: ...
@overload
def auto_positions(kappas: np.ndarray, form: SolitonForm, tail: float) -> np.ndarray: ...
def auto_positions(
    kappas: Sequence[float] | np.ndarray, form: SolitonForm, tail: float
) -> list[float] | np.ndarray:
    """Centres in the listed order, neighbours one gap apart, the group centred on 0.

    ``kappas`` of shape ``(m, N)`` (``m`` runs of ``N >= 1`` solitons) gives the ``(m, N)``
    centres; a sequence of floats is one run (a list back).
    """
    k = _block(kappas)
    r = reach(k, form, tail)
    positions = np.zeros_like(k)
    for col in range(1, k.shape[1]):  # left to right, as the neighbours are placed
        left, right = col - 1, col
        step = _wider(k[:, left], k[:, right], r[:, left], r[:, right])
        positions[:, col] = positions[:, left] + step
    middle = 0.5 * (positions[:, 0] + positions[:, -1])
    out = positions - middle[:, None]
    return out if isinstance(kappas, np.ndarray) else [float(p) for p in out[0]]


def _overtaking(positions: np.ndarray, speeds: np.ndarray) -> dict[tuple[int, int], np.ndarray]:
    """Pairs (i, j) with soliton i behind (left of) j and faster, with the rows (indices) where
    they collide; pairs colliding in no row are left out. In the order ``i``, then ``j``."""
    n = positions.shape[1]
    pairs = {}
    for i in range(n):
        for j in range(n):
            rows = np.flatnonzero(
                (positions[:, i] < positions[:, j]) & (speeds[:, i] > speeds[:, j])
            )
            if rows.size:
                pairs[i, j] = rows
    return pairs


def _shift_bounds(kappas: np.ndarray, pairs: dict[tuple[int, int], np.ndarray]) -> np.ndarray:
    """``b[:, i, k]``: bound on soliton i's shift from its collision with k (0 if they never
    meet), for every run of the block."""
    m, n = kappas.shape
    b = np.zeros((m, n, n))
    for (i, j), rows in pairs.items():
        b[rows, i, j] = shift_bound(kappas[rows, i], kappas[rows, j])
        b[rows, j, i] = shift_bound(kappas[rows, j], kappas[rows, i])
    return b


@overload
def end_time(
    positions: Sequence[float],
    kappas: Sequence[float],
    speeds: Sequence[float],
    form: SolitonForm,
    tail: float,
) -> float: ...
@overload
def end_time(
    positions: np.ndarray,
    kappas: np.ndarray,
    speeds: np.ndarray,
    form: SolitonForm,
    tail: float,
) -> np.ndarray: ...
def end_time(
    positions: Sequence[float] | np.ndarray,
    kappas: Sequence[float] | np.ndarray,
    speeds: Sequence[float] | np.ndarray,
    form: SolitonForm,
    tail: float,
) -> float | np.ndarray:
    """Time by which every overtaking pair is one gap apart again (0 when none overtakes).

    Rows of shape ``(m, N)`` give the ``(m,)`` times; sequences of floats are one run (a float).
    """
    p, k, c = _block(positions), _block(kappas), _block(speeds)
    pairs = _overtaking(p, c)
    b = _shift_bounds(k, pairs)
    r = reach(k, form, tail)
    t_end = np.zeros(p.shape[0])
    with np.errstate(all="ignore"):
        for (i, j), rows in pairs.items():
            third = np.zeros(rows.size)  # summed in the order of k, as sum() does
            for other in range(k.shape[1]):
                if other not in (i, j):
                    third = third + (b[rows, i, other] + b[rows, j, other])
            g = _wider(k[rows, i], k[rows, j], r[rows, i], r[rows, j])
            distance = p[rows, j] - p[rows, i] + g + third
            t = distance / (c[rows, i] - c[rows, j])
            t_end[rows] = np.where(t > t_end[rows], t, t_end[rows])  # max(t_end, t)
    return t_end if isinstance(positions, np.ndarray) else float(t_end[0])


@overload
def min_length(
    positions: Sequence[float],
    kappas: Sequence[float],
    speeds: Sequence[float],
    form: SolitonForm,
    tail: float,
    t_end: float,
) -> float: ...
@overload
def min_length(
    positions: np.ndarray,
    kappas: np.ndarray,
    speeds: np.ndarray,
    form: SolitonForm,
    tail: float,
    t_end: np.ndarray,
) -> np.ndarray: ...
def min_length(
    positions: Sequence[float] | np.ndarray,
    kappas: Sequence[float] | np.ndarray,
    speeds: Sequence[float] | np.ndarray,
    form: SolitonForm,
    tail: float,
    t_end: float | np.ndarray,
) -> float | np.ndarray:
    """Shortest period keeping every soliton a gap from the others' images on ``[0, t_end]``.

    Rows of shape ``(m, N)`` and ``t_end`` of shape ``(m,)`` give the ``(m,)`` lengths; sequences
    of floats and a float ``t_end`` are one run (a float).
    """
    p, k, c = _block(positions), _block(kappas), _block(speeds)
    t = np.asarray(t_end, dtype=np.float64).reshape(-1)
    b = _shift_bounds(k, _overtaking(p, c))
    r = reach(k, form, tail)
    m, n = k.shape
    total = np.zeros((m, n))  # sum(row), left to right
    for other in range(n):
        total = total + b[:, :, other]
    need = np.zeros(m)
    with np.errstate(all="ignore"):
        for i in range(n):
            for j in range(i, n):
                start = np.abs(p[:, i] - p[:, j])
                end = np.abs(p[:, i] - p[:, j] + (c[:, i] - c[:, j]) * t)
                if i != j:
                    end = end + (total[:, i] + total[:, j])
                g = _wider(k[:, i], k[:, j], r[:, i], r[:, j])
                v = np.where(end > start, end, start) + g  # max(start, end) + gap
                need = np.where(v > need, v, need)  # max(need, v)
    return need if isinstance(positions, np.ndarray) else float(need[0])


def _nice_ceil(value: float) -> float:
    step = 10.0 ** (math.floor(math.log10(value)) - 1)
    return float(f"{math.ceil(value / step - 1e-9) * step:.12g}")


@overload
def nice_ceil(value: float) -> float: ...
@overload
def nice_ceil(value: np.ndarray) -> np.ndarray: ...
def nice_ceil(value: float | np.ndarray) -> float | np.ndarray:
    """``value`` rounded up to two significant digits (68.7 -> 69, 6.87 -> 6.9); a float, or an
    array element by element."""
    if isinstance(value, np.ndarray):
        flat = [_nice_ceil(v) for v in value.astype(np.float64).ravel().tolist()]
        return np.array(flat, dtype=np.float64).reshape(value.shape)
    return _nice_ceil(value)


@overload
def min_points_per_width(dealias: float, decades: float) -> float: ...
@overload
def min_points_per_width(dealias: float, decades: np.ndarray) -> np.ndarray: ...
def min_points_per_width(dealias: float, decades: float | np.ndarray) -> float | np.ndarray:
    """Points per soliton width keeping ``decades`` of spectrum at the dealiasing cutoff (a float,
    or an array for an array of ``decades``)."""
    return 2.0 * decades * math.log(10.0) / (dealias * math.pi**2)


def points_needed(
    narrowest: float | np.ndarray,
    length: float | np.ndarray,
    dealias: float,
    decades: float | np.ndarray = WARN_DECADES,
) -> Any:
    """Points that resolve the narrowest width with no warning (may be huge or inf);
    ``decades`` of spectrum kept at the cutoff (fewer with an accuracy target:
    :func:`kdvsweep.sweep.accuracy.auto_decades`).

    ``narrowest``, ``length`` and ``decades`` are floats (a float back) or arrays broadcast
    together (a float64 array back).
    """
    w = np.asarray(narrowest, dtype=np.float64)
    per_width = min_points_per_width(dealias, np.asarray(decades, dtype=np.float64))
    with np.errstate(all="ignore"):
        out = np.where(w > 0, np.asarray(length, dtype=np.float64) / w * per_width, math.inf)
    return float(out) if out.ndim == 0 else out


def _ladder() -> list[int]:
    """The FFT-friendly sizes 16, 24, 32, 48, 64, ... (``2^p`` and ``3 2^p``) up to the first
    beyond every finite float."""
    sizes = [16]
    while sizes[-1] <= sys.float_info.max:
        n = sizes[-1]
        sizes.append(n // 2 * 3 if n & (n - 1) == 0 else n // 3 * 4)
    return sizes


_SIZES = _ladder()
# exact as floats (2^p and 3 2^p); the last, 2^1024, is above every finite need
_SIZES_FLOAT = np.array([float(n) if n <= sys.float_info.max else math.inf for n in _SIZES])
_INT64_SIZES = sum(1 for n in _SIZES if n <= np.iinfo(np.int64).max)


def auto_points(
    narrowest: float | np.ndarray,
    length: float | np.ndarray,
    dealias: float,
    decades: float | np.ndarray = WARN_DECADES,
) -> Any:
    """Smallest FFT-friendly even ``n`` (``2^p`` or ``3 2^p``, at least 16) with no warning
    (``decades`` as :func:`points_needed`; floats give an int, arrays an int64 array).

    Raises ValueError when :func:`points_needed` is not finite (callers compare it with their
    limit first; the first such element is named), or, for arrays, when ``n`` exceeds int64.
    """
    need = np.asarray(points_needed(narrowest, length, dealias, decades))
    bad = np.flatnonzero(~np.isfinite(need).ravel())
    if bad.size:
        shown = [
            np.broadcast_to(np.asarray(v), need.shape).ravel()[bad[0]].item()
            if isinstance(v, np.ndarray)
            else v
            for v in (narrowest, length)
        ]
        raise ValueError(
            f"automatic points: no grid resolves width {shown[0]} on length {shown[1]}"
        )
    at = np.searchsorted(_SIZES_FLOAT, need, side="left")  # the first size >= need
    if need.ndim == 0:
        return _SIZES[int(at)]
    if at.size and int(at.max()) >= _INT64_SIZES:
        raise ValueError(f"automatic points: {float(need.max()):.3g} points exceed int64")
    return np.array(_SIZES[:_INT64_SIZES], dtype=np.int64)[at]


#: Arrays of ``n`` float64 (a spectrum of ``n/2 + 1`` complex modes counts as one) that the core's
#: stepper of each scheme holds: its stage vectors, the step-size coefficients it caches for two
#: step sizes, the nonlinear term's and the simulation's buffers and the FFT plans (counted from
#: the structs of rust/core/src/schemes and simulation.rs, rounded up). A scheme missing here
#: counts as the largest.
STEPPER_BUFFERS = {"etdrk4": 26, "ifrk4": 18, "strang": 18, "adaptive": 20}
#: Frames' worth of memory a recorded frame costs in a run: the record itself, the analysis's
#: spectra of all frames and their filtered copy, and the frames kept for the store.
FRAME_COPIES = 4


@overload
def run_memory(n: int, frames: int, scheme: str) -> int: ...
@overload
def run_memory(n: np.ndarray, frames: int, scheme: str) -> np.ndarray: ...
def run_memory(n: int | np.ndarray, frames: int, scheme: str) -> int | np.ndarray:
    """Estimated peak memory of one run, bytes: ``8 n (FRAME_COPIES frames + buffers)`` (an int,
    or an array for an array of ``n``)."""
    buffers = STEPPER_BUFFERS.get(scheme, max(STEPPER_BUFFERS.values()))
    return 8 * n * (FRAME_COPIES * frames + buffers)


# ----------------------------------------------------------------------------- content runs
#
# Profile data (sech2, gaussian, box, npy) shed solitons whose speeds the inverse scattering
# transform predicts (kdvsweep.spectrum.bound_states). All of them start inside the data's extent
# W (where |u0| exceeds ``tail`` of its maximum) with unknown phases, so soliton i's centre is at
# ``x_c + c_i t + delta_i`` with ``|delta_i| <= W/2 + B_i``, ``B_i`` the sum of its pairwise shift
# bounds (as for collisions above). It has *separated* when it is one gap from every other soliton
# and from the radiation. KdV and mKdV radiation is linear waves of group velocity ``-3 d k^2``
# (to the left for d > 0), which stay behind ``x_c + W/2`` up to the Airy front of the slowest
# waves, whose tail ``Ai(z) ~ exp(-2/3 z^{3/2})`` (Abramowitz & Stegun 1964, 10.4.59) falls to
# ``tail`` at ``z_tail = (1.5 ln(1/tail))^{2/3}`` of the length ``(3 |d| t)^{1/3}``. The record
# must run ``FOLLOW`` times the last separation time (the late frames are fitted), and the box must
# hold the solitons and the radiation budget without either wrapping into the solitons:
# ``L >= W + 2 B + s + (c_max + v_rad) T``, with ``v_rad = 3 |d| k_rad^2`` the group speed of the
# fastest radiation budgeted: the radiation's waves of wavenumber ``k`` have the amplitude of the
# data's Fourier transform at ``k`` (exactly so in the linear limit; the reflection coefficient
# ``b(k/2)`` follows ``u0_hat(k)`` in the first Born approximation), scaled by the square root of
# the radiation's share of ``int u0^2`` (the trace formula: what the solitons do not carry), so
# ``k_rad`` is the largest wavenumber at which that exceeds ``radiation`` of the data's peak.

#: The record runs this many times the last separation time, so the fit has late frames (our
#: choice: a third of the record is separated).
FOLLOW = 1.5


@dataclass(frozen=True)
class Emerging:
    """A predicted soliton (or breather) as the sizing sees it.

    ``kind`` is ``"soliton"`` or ``"breather"``, ``index`` its place in the prediction,
    ``kappa`` (a breather's ``eta``), ``speed`` (a breather's envelope speed), ``amplitude``
    (peak ``|u|``).
    """

    kind: str
    index: int
    kappa: float
    speed: float
    amplitude: float

    @property
    def label(self) -> str:
        """``soliton 2 (kappa = 0.31, amplitude 0.19, speed 0.38)``."""
        return (
            f"{self.kind} {self.index} (kappa = {self.kappa:.4g}, amplitude {self.amplitude:.4g}, "
            f"speed {self.speed:.4g})"
        )


@dataclass(frozen=True)
class Separation:
    """When each predicted soliton separates, and which are left out of the comparison (why)."""

    times: tuple[float, ...]  # per item: separation time (inf when never)
    left_out: tuple[tuple[int, str], ...]  # (item position, one-line reason)
    end: float  # FOLLOW times the latest separation of the items followed (0 when none)


def extent(u: np.ndarray, dx: float, tail: float) -> float:
    """Length of the shortest periodic arc holding every point where ``|u| > tail max|u|``."""
    mag = np.abs(np.asarray(u, dtype=np.float64))
    top = float(mag.max()) if mag.size else 0.0
    inside = np.flatnonzero(mag > tail * top) if top > 0 else np.zeros(0, dtype=int)
    if inside.size == 0:
        return 0.0
    gaps = np.diff(np.concatenate([inside, [inside[0] + mag.size]]))
    return float((mag.size - (gaps.max() - 1)) * dx)


def radiation_speed(
    u: np.ndarray, length: float, d: float, level: float, fraction: float = 1.0
) -> float:
    """``3 |d| k_rad^2``: ``k_rad`` the largest wavenumber where the radiation's spectrum
    exceeds ``level`` of the data's peak (module notes).

    The radiation carries ``fraction`` of ``int u0^2`` (the data's minus the predicted solitons',
    the trace formula); its spectrum is taken as the data's scaled by ``sqrt(fraction)``, so
    reflectionless data (``fraction`` ~ 0) budget no radiation at all.
    """
    mag = np.abs(np.fft.rfft(np.asarray(u, dtype=np.float64)))
    top = float(mag.max()) if mag.size else 0.0
    if top == 0 or not fraction > 0:
        return 0.0
    live = np.flatnonzero(mag * math.sqrt(fraction) > level * top)
    if live.size == 0:
        return 0.0
    k_rad = (2.0 * math.pi / length) * float(live[-1])
    return 3.0 * abs(d) * k_rad**2


def content_budget(
    content: SolitonContent, u0: np.ndarray, dx: float, form: SolitonForm, tail: float
) -> tuple[list[Emerging], float, float]:
    """What the sizing rules need of a profile's predicted content: its solitons and breathers as
    :class:`Emerging` items, the data's :func:`extent`, and the radiation's :func:`radiation_share`.
    """
    items = [
        Emerging("soliton", i, float(k), float(c), abs(float(a)))
        for i, (k, c, a) in enumerate(
            zip(content.kappas, content.speeds, content.amplitudes, strict=True)
        )
    ]
    items += [
        Emerging("breather", j, b.kappa, b.envelope_speed, form.breather_amplitude(b.kappa))
        for j, b in enumerate(content.breathers)
    ]
    share = radiation_share(
        u0,
        dx,
        form,
        [float(k) for k in content.kappas],
        [(b.kappa, b.xi) for b in content.breathers],
    )
    return items, extent(u0, dx, tail), share


def radiation_share(
    u: np.ndarray,
    dx: float,
    form: SolitonForm,
    kappas: Sequence[float],
    breathers: Sequence[tuple[float, float]] = (),
) -> float:
    """The radiation's part of ``int u0^2``: the data's minus the predicted solitons' and
    breathers' (``(eta, xi)`` each; the trace formula: Zakharov & Faddeev 1971, from memory),
    each one's ``int u^2`` integrated from its profile (a breather's is the same at every phase).
    """
    from ..analysis.content import breather_profile

    line = np.linspace(-40.0, 40.0, 8001)  # in widths: the sech tails are far below 1e-16 there
    carried = sum(
        float(np.trapezoid(form.profile(line * form.width(k), k) ** 2, line)) * form.width(k)
        for k in kappas
    )
    carried += sum(
        float(np.trapezoid(breather_profile(line * w, eta, xi, alpha=form.alpha) ** 2, line)) * w
        for eta, xi in breathers
        for w in (form.width(eta),)
    )
    total = float(np.sum(np.asarray(u, dtype=np.float64) ** 2) * dx)
    return max(0.0, 1.0 - carried / total) if total > 0 else 0.0


def _airy_reach(d: float, t: float, tail: float, share: float) -> float:
    """How far right of the data the radiation's Airy front reaches ``tail`` (of a radiation
    whose level is ``sqrt(share)`` of the data's: nothing when it is below ``tail``)."""
    level = math.sqrt(max(share, 0.0))
    if not level > tail:
        return 0.0
    return (1.5 * math.log(level / tail)) ** (2.0 / 3.0) * (3.0 * abs(d) * t) ** (1.0 / 3.0)


def _bounds(items: Sequence[Emerging]) -> list[float]:
    """``B_i``: the sum of item i's pairwise shift bounds (equal kappas never meet)."""
    return [
        sum(shift_bound(a.kappa, b.kappa) for b in items if b is not a and b.kappa != a.kappa)
        for a in items
    ]


def separation(
    items: Sequence[Emerging],
    width: float,
    form: SolitonForm,
    tail: float,
    min_amplitude: float,
    max_end: float,
    share: float = 1.0,
) -> Separation:
    """Separation time of each item (module notes), and those left out with the reason.

    ``width`` is the data's :func:`extent`; ``min_amplitude`` an absolute ``|u|``; items whose
    separation time times :data:`FOLLOW` exceeds ``max_end`` are left out; ``share`` is the
    radiation's part of ``int u0^2``.
    """
    bounds = _bounds(items)
    times: list[float] = []
    for i, it in enumerate(items):
        if not it.speed > 0:
            times.append(math.inf)
            continue
        own = width + bounds[i] + reach(it.kappa, form, tail)
        t = own / it.speed
        for _ in range(60):  # t = (own + airy(t)) / c: a contraction (airy grows like t^(1/3))
            t = (own + _airy_reach(form.d, t, tail, share)) / it.speed
        for j, other in enumerate(items):
            if j == i or other.speed == it.speed:
                if j != i and other.kappa == it.kappa:
                    t = math.inf  # equal speeds: they never part
                continue
            dist = width + bounds[i] + bounds[j] + gap(it.kappa, other.kappa, form, tail)
            t = max(t, dist / abs(it.speed - other.speed))
        times.append(t)
    left: list[tuple[int, str]] = []
    for i, it in enumerate(items):
        if it.amplitude < min_amplitude:
            left.append((i, f"amplitude {it.amplitude:.3g} below sizing.min_amplitude"))
        elif not it.speed > 0:
            left.append((i, f"speed {it.speed:.3g}: it stays in the radiation"))
        elif not FOLLOW * times[i] <= max_end:
            left.append(
                (
                    i,
                    f"separates at t = {times[i]:.4g}; following it needs end = "
                    f"{FOLLOW * times[i]:.4g} > {max_end:g}",
                )
            )
    gone = {i for i, _ in left}
    followed = [times[i] for i in range(len(items)) if i not in gone]
    end = FOLLOW * max(followed) if followed else 0.0
    return Separation(tuple(float(t) for t in times), tuple(left), float(end))


def content_length(
    items: Sequence[Emerging],
    width: float,
    form: SolitonForm,
    tail: float,
    v_rad: float,
    t_end: float,
    share: float = 1.0,
) -> float:
    """Shortest period holding the solitons and the radiation budget until ``t_end`` unwrapped."""
    moving = [it for it in items if it.speed > 0]
    bounds = _bounds(items)
    b = 2.0 * max(bounds, default=0.0)
    c_max = max((it.speed for it in moving), default=0.0)
    v_left = max([v_rad, *(-it.speed for it in items if it.speed < 0)])
    front = max((reach(it.kappa, form, tail) for it in moving), default=0.0)
    return width + b + front + (c_max + v_left) * t_end + _airy_reach(form.d, t_end, tail, share)


__all__ = [
    "FOLLOW",
    "REFUSE_DECADES",
    "WARN_DECADES",
    "Emerging",
    "Separation",
    "auto_points",
    "auto_positions",
    "content_budget",
    "content_length",
    "dt_limit",
    "end_time",
    "extent",
    "gap",
    "min_length",
    "min_points_per_width",
    "nice_ceil",
    "nonlinear_rate",
    "points_needed",
    "radiation_share",
    "radiation_speed",
    "run_memory",
    "separation",
    "shift_bound",
    "spectrum_decades",
    "step_warning",
]
