"""Following solitons through a record: peaks per frame, linking across frames, unwrapping.

The solitons are the extrema of the first frame that stand above the radiation; they are numbered
left to right. Each later frame is *linked* when every soliton can be matched to one of its extrema
(same sign, nearly the same height, near the position its last speed predicts) and all solitons are
at least ``link_separation`` tail lengths apart: closer than that the humps trade mass (Lax's
exchange regime) and a match by position could swap identities, so such frames are skipped and the
identities are recovered by height once the solitons separate. Extrema that match no soliton are
radiation or noise and are ignored; so is a soliton-like bump that does not persist. With three
or more solitons, a soliton far from every other extremum is also located in the frames where two
others collide (``Tracks.alone``), so its fit windows need not stop at collisions it takes no part in.

Positions are unwrapped on the periodic domain: each match moves the soliton by its predicted
displacement plus the shortest arc to the extremum found.

The linking is sequential by definition (each frame is predicted from the last one linked), but it
is computed for all frames at once: the decisions of every frame are taken from the states that a
provisional set of decisions gives, and repeated until they reproduce themselves; each round fixes
at least the first frame that was wrong, so this ends, in one or two rounds in practice (the first
guess matches by height alone).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from itertools import combinations

import numpy as np
from scipy.optimize import linear_sum_assignment

from .. import theory
from ..exceptions import ConfigError, ShapeError
from ..model import Equation, SolitonForm
from .peaks import PeakRecord, Peaks, find_peaks, peak_record

# Frame-0 extrema below this fraction of max|u| are radiation, when no kappas are given.
RADIATION_LEVEL = 0.05
# Later extrema below this fraction of the smallest soliton are ignored.
THRESHOLD_FRACTION = 0.25
# Matching tolerance on |ln(height ratio)| between frames (heights of linked solitons are
# accurate to ~exp(-link_separation)); and the scale of position mismatches, in tail lengths.
HEIGHT_TOLERANCE = 0.05
HEIGHT_GATE = 0.3
POSITION_SCALE = 8.0
_NO_MATCH = 1e12


@dataclass
class Tracks:
    """The tracked solitons of one record.

    Attributes
    ----------
    times
        Frame times, shape ``(m,)``.
    length
        Domain length ``L``.
    x
        Peak positions in ``[-L/2, L/2)``, shape ``(m, N)``; NaN where the soliton was not located
        (frames that are not linked, unless it is ``alone`` there).
    position
        The same positions unwrapped (continuous across the periodic boundary).
    height
        Signed peak heights, NaN where not linked.
    sign
        Polarity of each soliton, shape ``(N,)``.
    linked
        Frames where every soliton was matched.
    separated
        Linked frames where every pair is ``separation`` tail lengths apart, both ways round.
    peak_count
        Extrema above ``threshold`` in each frame (solitons, merged humps and any radiation).
    threshold
        The height below which extrema were ignored.
    separation
        The separation criterion used for ``separated``, in tail lengths ``1/(2 kappa)``.
    reason
        Empty, or why tracking failed.
    extrema
        Every extremum above ``threshold``, per frame (including merged humps mid-collision).
    alone
        Shape ``(m, N)``: frames where soliton ``i`` is ``separation`` tail lengths from every
        other soliton (linked frames), or, in frames where others are too close to each other
        to be linked, from every other extremum by that many of the widest soliton's tail lengths
        plus the largest pair shift (where the colliding solitons' asymptotes may lie). Its
        position and height are then filled in even in frames that are not linked: the fit
        windows of a soliton need only it to be alone (:func:`kdvsweep.analysis.table.analyse_run`).
    """

    times: np.ndarray
    length: float
    x: np.ndarray
    position: np.ndarray
    height: np.ndarray
    sign: np.ndarray
    linked: np.ndarray
    separated: np.ndarray
    peak_count: np.ndarray
    threshold: float
    separation: float
    reason: str = ""
    extrema: Sequence[Peaks] = field(default_factory=list)
    alone: np.ndarray = field(default_factory=lambda: np.zeros((0, 0), dtype=bool))

    @property
    def n_solitons(self) -> int:
        """Number of tracked solitons."""
        return int(self.sign.size)

    def pairs(self) -> list[tuple[int, int]]:
        """Soliton index pairs ``(i, j)``, ``i < j``."""
        return list(combinations(range(self.n_solitons), 2))

    def laps(self) -> np.ndarray:
        """``floor((X_i - X_j) / L)`` per frame and pair, shape ``(m, P)``; NaN where either soliton
        was not located.

        Soliton ``i`` passes soliton ``j`` each time ``X_i - X_j`` crosses a multiple of ``L``, so
        a change of this index between two separated frames counts the collisions in between.
        """
        pairs = self.pairs()
        out = np.full((self.times.size, len(pairs)), np.nan)
        for p, (i, j) in enumerate(pairs):
            out[:, p] = np.floor((self.position[:, i] - self.position[:, j]) / self.length)
        return out


def _min_ring_gap(x: list[float], tails: list[float], length: float) -> float:
    """Smallest pairwise ring distance in units of the longer tail of each pair (inf for N = 1).

    Plain Python: with a handful of solitons per frame this beats NumPy's per-call overhead.
    """
    half = 0.5 * length
    best = math.inf
    for i, j in combinations(range(len(x)), 2):
        gap = abs((x[i] - x[j] + half) % length - half) / max(tails[i], tails[j])
        best = min(best, gap)
    return best


class _Kinematics:
    """Height -> kappa, tail length and speed for one equation (its soliton form)."""

    def __init__(self, equation: Equation | str) -> None:
        self.form = Equation.coerce(equation, "analysis").soliton_form

    def tail(self, height: float) -> float:
        return float(self.form.tail_length(self.form.kappa_of_height(height)))

    def tails(self, heights: np.ndarray) -> np.ndarray:
        return np.asarray(self.form.tail_length(self.form.kappa_of_height(heights)), dtype=float)

    def kappa(self, heights: np.ndarray) -> np.ndarray:
        return np.asarray(self.form.kappa_of_height(heights))

    def speeds(self, heights: np.ndarray) -> np.ndarray:
        return np.asarray(self.form.speed(self.kappa(heights)))


def check_record(frames: object, times: object, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Coerce a record to float64 arrays, or raise ShapeError / ConfigError naming the problem."""
    u = np.asarray(frames, dtype=np.float64)
    t = np.asarray(times, dtype=np.float64)
    if u.ndim != 2 or u.shape[1] != n:
        raise ShapeError(f"analysis: frames must have shape (m, {n}) for this grid, got {u.shape}")
    if t.shape != (u.shape[0],):
        raise ShapeError(f"analysis: times must have shape ({u.shape[0]},), got {t.shape}")
    if not np.all(np.isfinite(t)) or np.any(np.diff(t) <= 0):
        raise ConfigError("analysis: times must be finite and strictly increasing")
    if not np.all(np.isfinite(u)):
        bad = np.argwhere(~np.isfinite(u))[0]
        raise ConfigError(f"analysis: frames must be finite; frame {bad[0]} index {bad[1]} is not")
    return u, t


def _initial_solitons(
    peaks0: Peaks, kappas: np.ndarray | None, form: SolitonForm, min_height: float
) -> tuple[np.ndarray, str]:
    """Indices (sorted by position) of the frame-0 extrema taken as the solitons, and a reason:
    each found height is compared with its kappa's on the found polarity (Gardner's depends on
    it)."""
    if kappas is None:
        return np.flatnonzero(np.abs(peaks0.height) >= min_height), ""
    n = kappas.size
    if len(peaks0) < n:
        return np.arange(len(peaks0)), (
            f"the first frame shows {len(peaks0)} soliton peak(s) above the threshold; "
            f"the {n} kappas given expect {n} (are the solitons overlapping at the start?)"
        )
    chosen = np.sort(np.argsort(-np.abs(peaks0.height))[:n])
    found = np.abs(peaks0.height[chosen])
    expected = np.array(
        [form.amplitude(k, int(s)) for k, s in zip(kappas, peaks0.sign[chosen], strict=True)]
    )
    ratio = found / expected
    if np.any(np.abs(np.log(ratio)) > HEIGHT_GATE):
        i = int(np.argmax(np.abs(np.log(ratio))))
        return chosen, (
            f"soliton {i} (numbered left to right) has height {found[i]:.6g} in the first frame, "
            f"but kappas[{i}] expects {expected[i]:.6g}: kappas must be given left to right"
        )
    return chosen, ""


def track(
    frames: object,
    times: object,
    length: float,
    equation: Equation | str = "kdv",
    kappas: object | None = None,
    threshold: float | None = None,
    separation: float = 16.0,
    link_separation: float = 6.0,
) -> Tracks:
    """Find, link and unwrap the solitons of a record.

    Parameters
    ----------
    frames, times
        The record: shape ``(m, n)`` and ``(m,)``, times increasing.
    length
        Domain length ``L``.
    equation
        Preset name or :class:`~kdvsweep.Equation` (KdV or focusing mKdV family); sets the
        polarities searched and the height-to-speed relation used to predict motion.
    kappas
        Expected solitons, left to right in the first frame; sets the threshold and the count.
    threshold
        Ignore extrema lower than this; default a quarter of the smallest expected soliton height.
    separation, link_separation
        Gaps, in tail lengths ``1/(2 kappa)`` of the wider soliton of each pair, above which frames
        are ``separated`` (fit windows) and ``linked`` (identities trusted).

    Returns
    -------
    Tracks
        With ``reason`` set (and nothing linked after frame 0) if the solitons cannot be followed.
    """
    if separation < link_separation or link_separation <= 0:
        raise ConfigError(
            f"track: need 0 < link_separation <= separation, got {link_separation}, {separation}"
        )
    u = np.asarray(frames, dtype=np.float64)
    t = np.asarray(times, dtype=np.float64)
    signs = theory.polarities(equation)
    kin = _Kinematics(equation)
    expected = None if kappas is None else theory.amplitudes(kappas, equation)
    radiation = RADIATION_LEVEL * float(np.abs(u[0]).max())
    if threshold is None:
        if expected is not None:
            threshold = THRESHOLD_FRACTION * float(expected.min())
        else:
            first = find_peaks(u[0], length, radiation, signs)
            if len(first) == 0:
                threshold = radiation
            else:
                threshold = THRESHOLD_FRACTION * float(np.abs(first.height).min())
    peaks = peak_record(u, length, threshold, signs)
    counts = peaks.counts
    given = None if kappas is None else np.atleast_1d(np.asarray(kappas, dtype=np.float64))
    chosen, reason = _initial_solitons(peaks[0], given, kin.form, max(radiation, threshold))
    n_sol = chosen.size
    m = t.size
    xs = np.full((m, n_sol), np.nan)
    pos = np.full((m, n_sol), np.nan)
    hs = np.full((m, n_sol), np.nan)
    linked = np.zeros(m, dtype=bool)
    separated = np.zeros(m, dtype=bool)
    sign = peaks[0].sign[chosen].copy()
    result = Tracks(
        t,
        float(length),
        xs,
        pos,
        hs,
        sign,
        linked,
        separated,
        counts,
        float(threshold),
        float(separation),
        reason,
        peaks,
    )
    if n_sol == 0:
        result.reason = reason or "no soliton found in the first frame"
        return result
    if reason:
        return result
    x0, h0 = peaks[0].x[chosen], peaks[0].height[chosen]
    xs[0], pos[0], hs[0] = x0, x0, h0
    gap0 = _min_ring_gap(x0.tolist(), [kin.tail(h) for h in h0.tolist()], length)
    linked[0], separated[0] = gap0 >= link_separation, gap0 >= separation
    _link(result, kin, link_separation, separation)
    if not linked[1:].any() and m > 1:
        result.reason = "the solitons of the first frame could not be matched in any later frame"
        return result
    _locate_alone(result, kin, separation)
    return result


def _widest_shift(kappas: list[float]) -> float:
    """The largest ``|pair_shift|`` over the pairs of ``kappas`` (0 for fewer than two)."""
    out = 0.0
    for a, b in combinations(kappas, 2):
        if a != b and a > 0 and b > 0:
            out = max(out, abs(theory.pair_shift(a, b)), abs(theory.pair_shift(b, a)))
    return out


def _locate_alone(tracks: Tracks, kin: _Kinematics, separation: float) -> None:
    """Fill ``tracks.alone``, and the position and height of each soliton that is alone in a frame
    that is not linked (two other solitons colliding far from it), in place.

    Linked frames: soliton ``i`` is alone when every pair ``(i, j)`` is ``separation`` tail lengths
    (the longer of the two) apart both ways round. Other frames: the extremum of the soliton's sign
    and height (within ``HEIGHT_TOLERANCE`` in log) nearest to where its last position and speed put
    it, if it is the only one within ``POSITION_SCALE`` tail lengths, and every other extremum is
    ``separation`` tail lengths of the widest soliton plus the largest pair shift away.
    """
    t, length, half = tracks.times, tracks.length, 0.5 * tracks.length
    m, n = tracks.x.shape
    alone = np.zeros((m, n), dtype=bool)
    tracks.alone = alone
    h0 = tracks.height[0].tolist()
    tails = [kin.tail(h) for h in h0]
    speeds = kin.speeds(tracks.height[0]).tolist()
    reach = separation * max(tails) + _widest_shift(kin.kappa(np.abs(tracks.height[0])).tolist())
    on = np.flatnonzero(tracks.linked)
    xs = tracks.x[on]
    apart = np.abs((xs[:, :, None] - xs[:, None, :] + half) % length - half)
    need = separation * np.maximum(np.array(tails)[:, None], np.array(tails)[None, :])
    apart[:, np.arange(n), np.arange(n)] = np.inf
    alone[on] = np.all(apart >= need[None, :, :], axis=2)
    if n < 3:  # a pair that is not linked is colliding: neither soliton is alone
        return
    last_f = [0] * n
    for f in range(1, m):
        if tracks.linked[f]:
            last_f = [f] * n
            continue
        pk = tracks.extrema[f]
        cx, ch, cs = pk.x.tolist(), pk.height.tolist(), pk.sign.tolist()
        for i in range(n):
            p = last_f[i]
            pred = float(tracks.position[p, i]) + speeds[i] * (float(t[f]) - float(t[p]))
            ref = math.log(abs(float(tracks.height[p, i])))
            near = [
                j
                for j in range(len(cx))
                if abs((cx[j] - pred + half) % length - half) < POSITION_SCALE * tails[i]
            ]
            if len(near) != 1:
                continue
            c = near[0]
            if cs[c] != tracks.sign[i] or abs(math.log(abs(ch[c])) - ref) > HEIGHT_TOLERANCE:
                continue
            if any(
                abs((cx[j] - cx[c] + half) % length - half) < reach
                for j in range(len(cx))
                if j != c
            ):
                continue
            tracks.x[f, i], tracks.height[f, i] = cx[c], ch[c]
            tracks.position[f, i] = pred + ((cx[c] - pred + half) % length - half)
            alone[f, i] = True
            last_f[i] = f


def _link(tracks: Tracks, kin: _Kinematics, link_separation: float, separation: float) -> None:
    """Match the solitons of frame 0 through the later frames, filling ``tracks`` in place.

    Each frame: predict every soliton's position from the last linked frame and its speed (the
    position difference of the last two consecutive linked frames, or the speed of its first
    height), match by the Hungarian method on height and position mismatch, accept if every
    soliton found a same-sign extremum of nearly its height and all are ``link_separation``
    apart. The decisions of all frames are computed together (see the module's docstring).
    """
    ext = tracks.extrema
    if not isinstance(ext, PeakRecord):
        ext = PeakRecord(
            np.concatenate([p.x for p in ext]),
            np.concatenate([p.height for p in ext]),
            np.concatenate([p.sign for p in ext]),
            np.repeat(np.arange(len(ext)), [len(p) for p in ext]),
            len(ext),
        )
    m, n = tracks.x.shape
    counts = ext.counts
    frames = np.flatnonzero(counts >= n)
    frames = frames[frames > 0]
    if frames.size == 0:
        return
    width = int(counts.max())
    slot = np.arange(ext.x.size) - ext.bounds[ext.frame]
    cx = np.full((m, width), np.nan)
    ch = np.full((m, width), np.nan)
    cs = np.zeros((m, width), dtype=np.int64)
    cx[ext.frame, slot], ch[ext.frame, slot], cs[ext.frame, slot] = ext.x, ext.height, ext.sign
    cand = _Candidates(cx[frames], ch[frames], cs[frames], counts[frames])
    # A first guess matched by height alone (infinite tails: no position cost): on a clean record
    # it is already the answer, and one round confirms it.
    with np.errstate(divide="ignore"):
        first = np.log(np.abs(tracks.height[0]))
    guess = _States(
        np.zeros((frames.size, n)),
        np.broadcast_to(first, (frames.size, n)),
        np.full((frames.size, n), np.inf),
        np.zeros((0, n)),
    )
    linked, cols, _ = _decide(tracks, kin, frames, guess, cand, link_separation)
    for _ in range(frames.size + 1):
        states = _states(tracks, kin, frames, linked, cols, cand)
        new_linked, new_cols, gap = _decide(tracks, kin, frames, states, cand, link_separation)
        same = np.array_equal(new_linked, linked) and np.array_equal(
            new_cols[new_linked], cols[new_linked]
        )
        linked, cols = new_linked, new_cols
        if same:
            break
    done = frames[linked]
    tracks.x[done] = _chosen(cand, linked, cols, "x")
    tracks.height[done] = _chosen(cand, linked, cols, "h")
    tracks.position[done] = states.unwrapped
    tracks.linked[done] = True
    tracks.separated[done] = gap[linked] >= separation


@dataclass(frozen=True)
class _Candidates:
    """The extrema of the frames that may be linked, padded to one width (NaN, sign 0)."""

    x: np.ndarray
    h: np.ndarray
    sign: np.ndarray
    count: np.ndarray


@dataclass(frozen=True)
class _States:
    """What each candidate frame is predicted from (the last linked frame before it), and the
    unwrapped positions of the linked frames."""

    pred: np.ndarray
    log_h: np.ndarray
    tail: np.ndarray
    unwrapped: np.ndarray


def _chosen(cand: _Candidates, linked: np.ndarray, cols: np.ndarray, which: str) -> np.ndarray:
    values = getattr(cand, which)[linked]
    return np.take_along_axis(values, cols[linked], axis=1)


def _states(
    tracks: Tracks,
    kin: _Kinematics,
    frames: np.ndarray,
    linked: np.ndarray,
    cols: np.ndarray,
    cand: _Candidates,
) -> _States:
    """The states the provisional decisions (``linked``, ``cols``) give: positions unwrapped by
    the shortest arc from each prediction, the speed of the last consecutive pair."""
    t, length = tracks.times, tracks.length
    chain = np.concatenate([[0], frames[linked]])
    xg = np.concatenate([tracks.x[:1], _chosen(cand, linked, cols, "x")])
    hg = np.concatenate([tracks.height[:1], _chosen(cand, linked, cols, "h")])
    tg = t[chain]
    dt = np.diff(tg)[:, None]
    start = kin.speeds(tracks.height[0])[None, :]
    # Each linked frame's speed is that of the last consecutive pair at or before it (else the
    # first frame's); the wrap of each step depends on the speed before it.
    pair = np.concatenate([[0], np.where(np.diff(chain) == 1, np.arange(1, chain.size), 0)])
    source = np.maximum.accumulate(pair)
    speed = np.repeat(start, chain.size, axis=0)
    unwrapped = xg.copy()
    for _ in range(chain.size + 1):
        wraps = np.round((xg[:-1] - xg[1:] + speed[:-1] * dt) / length)
        unwrapped = xg + length * np.concatenate([np.zeros((1, xg.shape[1])), np.cumsum(wraps, 0)])
        steps = np.concatenate([start, (unwrapped[1:] - unwrapped[:-1]) / dt])
        new = steps[source]
        if np.array_equal(new, speed, equal_nan=True):
            break
        speed = new
    last = np.searchsorted(chain, frames) - 1
    pred = unwrapped[last] + speed[last] * (t[frames] - tg[last])[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        log_h = np.log(np.abs(hg))[last]
    return _States(pred, log_h, kin.tails(hg)[last], unwrapped[1:])


def _decide(
    tracks: Tracks,
    kin: _Kinematics,
    frames: np.ndarray,
    states: _States,
    cand: _Candidates,
    link_separation: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Each candidate frame's match (``cols``), whether it links, and its smallest gap."""
    length, half = tracks.length, 0.5 * tracks.length
    sign = tracks.sign
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.abs(np.log(np.abs(cand.h))[:, None, :] - states.log_h[:, :, None])
        d = (
            np.abs((cand.x[:, None, :] - states.pred[:, :, None] + half) % length - half)
            / states.tail[:, :, None]
        )
        cost = (r / HEIGHT_TOLERANCE) ** 2 + (d / POSITION_SCALE) ** 2
    bad = (cand.sign[:, None, :] != sign[None, :, None]) | ~(r <= HEIGHT_GATE) | np.isnan(cost)
    cost[bad] = _NO_MATCH
    cols = np.argmin(cost, axis=2)
    n = sign.size
    if n > 1:
        ordered = np.sort(cols, axis=1)
        for row in np.flatnonzero(np.any(ordered[:, 1:] == ordered[:, :-1], axis=1)):
            # Two solitons prefer the same extremum: solve the assignment properly.
            cols[row] = linear_sum_assignment(cost[row, :, : cand.count[row]])[1]
    rows = np.arange(frames.size)[:, None]
    ok = np.all(cost[rows, np.arange(n)[None, :], cols] < _NO_MATCH, axis=1)
    xf = np.take_along_axis(cand.x, cols, axis=1)
    hf = np.take_along_axis(cand.h, cols, axis=1)
    gap = np.full(frames.size, np.inf)
    if n > 1:
        tails = kin.tails(hf)
        for i, j in combinations(range(n), 2):
            with np.errstate(invalid="ignore"):
                apart = np.abs((xf[:, i] - xf[:, j] + half) % length - half) / np.maximum(
                    tails[:, i], tails[:, j]
                )
            gap = np.fmin(gap, apart)
    return ok & (gap >= link_separation), cols, gap


@dataclass(frozen=True)
class ReferenceTrack:
    """One soliton of a run followed alone: the same equation, grid, stepping, frame times, centre
    and polarity, no other soliton (a *reference run*; see :func:`reference_track`).

    Attributes
    ----------
    times
        Frame times, shape ``(m,)`` (those of the runs that use it).
    x
        Peak position in ``[-L/2, L/2)`` per frame; NaN where the soliton was not found.
    height
        Signed peak height per frame; NaN where not found.
    last
        The last frame, shape ``(n,)`` (for the radiation of a collision).
    status
        ``"ok"``, or one line on why the reference could not be followed (then the arrays may be
        empty and the runs that need it measure no shift).
    """

    times: np.ndarray
    x: np.ndarray
    height: np.ndarray
    last: np.ndarray
    status: str = "ok"

    @property
    def ok(self) -> bool:
        """True when the soliton was followed."""
        return self.status == "ok"

    @classmethod
    def failed(cls, why: str) -> ReferenceTrack:
        """A reference that could not be computed or followed, with the reason."""
        empty = np.zeros(0)
        return cls(empty, empty, empty, empty, why)


def reference_track(
    frames: object, times: object, length: float, equation: Equation | str, kappa: float
) -> ReferenceTrack:
    """Follow the one soliton of a reference run's record (see :class:`ReferenceTrack`).

    Parameters
    ----------
    frames, times
        The record of the soliton alone: shape ``(m, n)`` and ``(m,)``.
    length
        Domain length ``L``.
    equation
        The run's equation.
    kappa
        The soliton's kappa (sets the threshold below which extrema are ignored).
    """
    u = np.asarray(frames, dtype=np.float64)
    t = np.asarray(times, dtype=np.float64)
    found = track(u, t, length, equation, [kappa], link_separation=1e-9, separation=1e-9)
    if found.reason or found.n_solitons != 1:
        return ReferenceTrack.failed(f"reference run: {found.reason or 'soliton not found'}")
    return ReferenceTrack(
        t.copy(), found.x[:, 0].copy(), found.height[:, 0].copy(), u[-1].copy(), "ok"
    )


def ring_difference(a: np.ndarray, b: np.ndarray | float, length: float) -> np.ndarray:
    """``a - b`` on the circle of circumference ``length``, in ``[-L/2, L/2)``: the displacement of
    ``a`` from ``b`` when it is smaller than half the period (positions unwrapped on the ring)."""
    d = np.asarray(a, dtype=np.float64) - np.asarray(b, dtype=np.float64)
    return np.asarray((d + 0.5 * length) % length - 0.5 * length)


__all__ = [
    "RADIATION_LEVEL",
    "THRESHOLD_FRACTION",
    "ReferenceTrack",
    "Tracks",
    "check_record",
    "reference_track",
    "ring_difference",
    "track",
]
