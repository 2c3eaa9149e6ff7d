"""One run's collision analysis: the per-soliton table and the per-run summary.

:func:`analyse_run` never raises for what the physics or the record did (a record too short for an
asymptotic fit, solitons lost): it reports ``analysis_status`` ``"ok"``, ``"too_short"`` or
``"failed"`` with a sentence in ``analysis_reason``, so a sweep can store the run and go on.
:func:`collision_table` is the strict form: it raises :class:`~kdvsweep.ConfigError` (a
``ValueError``) carrying that sentence when the status is not ``"ok"``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .. import theory
from ..columns import SOLITON_COLUMNS
from ..exceptions import ConfigError, ShapeError
from ..model import Equation, Grid
from .fits import MIN_BIAS_FRAMES, MIN_FRAMES, AsymptoticFit, fit_windows
from .peaks import count_many
from .tracks import ReferenceTrack, Tracks, check_record, ring_difference, track

DEFAULT_SEPARATION = 16.0

#: How ``shift_measured`` was measured (column ``shift_method``): ``"asymptotes"``, the difference
#: of the t = 0 intercepts of the lines fitted before and after the collisions (integrable
#: equations: the speeds are the same on both sides); ``"reference"``, the displacement from the
#: same soliton run alone (perturbed equations; see :func:`analyse_run`).
SHIFT_METHODS = ("asymptotes", "reference")

#: Half-width, in tail lengths ``1/(2 kappa)``, of the window around each soliton that
#: ``radiated_mass`` and ``radiated_energy`` leave out: a soliton's density at its edge is
#: ``e^-10`` (5e-5) of its peak (common practice, no source). What lies outside counts as radiation,
#: so the values depend on it: compare runs measured with the same window.
RADIATION_WINDOW = 10.0

#: ``restart(state, t0, times) -> frames``: step a copy of the run from ``state`` (a stored frame)
#: at time ``t0`` and return its states at ``times`` (increasing, after ``t0``), shape
#: ``(len(times), n)``. :func:`analyse_run` uses it to look at a pair's closest approach between
#: the stored frames.
Restart = Callable[[np.ndarray, float, np.ndarray], np.ndarray]

#: Fine frames of a restarted collision: this many per time ``T`` the pair takes to move one tail
#: length ``1/(2 kappa)`` of the wider soliton against each other (Lax's two-peak window at the
#: symmetric instant is only included exactly, as the time ``t_closest`` itself), equally spaced
#: from a stored frame through ``t_closest`` (one step size for the restart), about
#: ``CLOSE_MAX_FRAMES`` at most.
CLOSE_FRAMES_PER_TAIL = 64
CLOSE_MAX_FRAMES = 4096
#: Half-width of the restarted window around ``t_closest``, in units of ``T``. The exact Hirota
#: 2-solitons of KdV and mKdV (same and opposite polarities, kappa2/kappa1 from 0.1 to 0.9) show
#: fewer than two maxima only within 1.75 T of their symmetric instant (our measurement,
#: 2026-12-02, frames every T/200; KdV's widest at amplitude ratios 6 to 10, where the closest
#: approach itself has one); the stored frames still count outside the window.
CLOSE_HALF_WINDOW = 2.0
# Values per restarted chunk (frames x points): ~32 MB of frames at a time.
_CLOSE_VALUES = 1 << 22

#: Columns of a collision table: the solitons table's, less the run's id and the input centre.
TABLE_COLUMNS = tuple(c.name for c in SOLITON_COLUMNS if c.name not in ("run_id", "x0"))


@dataclass
class RunAnalysis:
    """What :func:`analyse_run` found.

    Attributes
    ----------
    rows
        One dict per soliton (keys ``TABLE_COLUMNS``), numbered left to right at the first frame;
        :attr:`table` is their table (built on first use), :meth:`records` their plain values.
    summary
        Per-run values: ``analysis_status``, ``analysis_reason``, ``n_solitons``, ``regime``,
        ``amplitude_ratio``, ``peaks_at_closest``, ``min_peaks``, ``t_closest``,
        ``radiation_energy``, ``radiation_fraction``, ``frames_before``, ``frames_after``,
        ``separation``, and ``drift_<name>`` for each invariant series given.
    tracks
        The tracked positions (for plots).
    fits
        The asymptotic fit of each soliton (empty unless the status is ``"ok"``).
    before, after
        Boolean masks of the run's windows: every pair apart, before the first collision and
        after the last (each soliton's fit uses its own windows, often longer: ``frames_before``
        and ``frames_after`` of ``table``).
    """

    rows: list[dict[str, Any]]
    summary: dict[str, Any]
    tracks: Tracks
    fits: list[AsymptoticFit] = field(default_factory=list)
    before: np.ndarray | None = None
    after: np.ndarray | None = None
    _table: pd.DataFrame | None = field(default=None, init=False, repr=False, compare=False)

    @property
    def table(self) -> pd.DataFrame:
        """One row per soliton (columns ``TABLE_COLUMNS``), numbered left to right at the first
        frame."""
        if self._table is None:
            self._table = _frame(self.rows)
        return self._table

    def records(self) -> list[dict[str, Any]]:
        """The rows of :attr:`table` as dicts of plain Python values (what ``to_dict("records")``
        of the table gives), without building the table (see :func:`_records`)."""
        return _records(self.rows)

    @property
    def ok(self) -> bool:
        """True when the shifts were measured."""
        return self.summary["analysis_status"] == "ok"


def _equation(equation: str | Equation) -> Equation:
    eq = Equation.coerce(equation, "analysis")
    theory.family(eq)  # raises ConfigError for an equation without these solitons
    return eq


def _windows(tracks: Tracks) -> tuple[np.ndarray, np.ndarray, np.ndarray, str, str]:
    """Masks of the fit windows, collision counts per pair, status and reason."""
    m = tracks.times.size
    none = np.zeros(m, dtype=bool)
    npairs = len(tracks.pairs())
    counts = np.zeros(npairs)
    sep = tracks.separated
    s = tracks.separation
    if not sep.any():
        return (
            none,
            none,
            counts,
            "too_short",
            (
                f"no frame has the solitons {s:g} tail lengths 1/(2 kappa) apart both ways round; "
                "use a longer domain, or a smaller separation="
            ),
        )
    laps = tracks.laps()
    first, last = int(np.argmax(sep)), int(m - 1 - np.argmax(sep[::-1]))
    before = sep & np.all(laps == laps[first], axis=1)
    after = sep & np.all(laps == laps[last], axis=1)
    counts = np.abs(laps[last] - laps[first]) if npairs else counts
    if npairs == 0:
        return before, none, counts, "too_short", "one soliton: there is no collision to measure"
    if not counts.any():
        return (
            before,
            none,
            counts,
            "too_short",
            (
                "no collision completes within the record: the solitons are never seen "
                f"{s:g} tail lengths apart after meeting (record ends at t = {tracks.times[-1]:g})"
            ),
        )
    # Too few frames here is judged per soliton (_soliton_windows): with three or more solitons
    # each one's windows end at its own collisions, not at the first and last of the run.
    return before, after, counts, "ok", ""


def _soliton_windows(
    tracks: Tracks, before: np.ndarray, after: np.ndarray
) -> list[tuple[np.ndarray, np.ndarray]]:
    """Each soliton's own fit windows: the frames where it is ``alone`` (``separation`` tail
    lengths from every other soliton) before the first and after the last collision it takes
    part in.

    A pair's collisions are located between the frames where both solitons were located: the lap
    index ``floor((X_i - X_j)/L)`` changes between them. A soliton that meets no other keeps the
    run's windows ``before`` and ``after`` (every pair apart, before and after every collision).
    """
    t = tracks.times
    laps = tracks.laps()
    alone = tracks.alone if tracks.alone.shape == tracks.x.shape else tracks.separated[:, None]
    starts = np.full(tracks.n_solitons, np.inf)
    ends = np.full(tracks.n_solitons, -np.inf)
    for p, (i, j) in enumerate(tracks.pairs()):
        known = np.flatnonzero(np.isfinite(laps[:, p]))
        if known.size < 2:
            continue
        change = np.flatnonzero(np.diff(laps[known, p]) != 0)
        if change.size == 0:
            continue
        first, last = float(t[known[change[0]]]), float(t[known[change[-1] + 1]])
        for k in (i, j):
            starts[k], ends[k] = min(starts[k], first), max(ends[k], last)
    out = []
    for k in range(tracks.n_solitons):
        mine = np.broadcast_to(alone, tracks.x.shape)[:, k] & np.isfinite(tracks.position[:, k])
        if math.isfinite(starts[k]):
            out.append((mine & (t <= starts[k]), mine & (t >= ends[k])))
        else:
            out.append((before.copy(), after.copy()))
    return out


def _short_windows(windows: list[tuple[np.ndarray, np.ndarray]], s: float) -> str:
    """Why a soliton's windows are too short for a fit (empty when none is)."""
    for k, (b, a) in enumerate(windows):
        nb, na = int(b.sum()), int(a.sum())
        if nb < MIN_FRAMES or na < MIN_FRAMES:
            return (
                f"record too short for an asymptotic fit: soliton {k} is {s:g} tail lengths from "
                f"every other in {nb} frame(s) before its first collision and {na} after its last; "
                f"need {MIN_FRAMES} in each (record frames more often or run longer)"
            )
    return ""


def _collision_matrix(n: int, pairs: Sequence[tuple[int, int]], counts: np.ndarray) -> np.ndarray:
    mat = np.zeros((n, n))
    for (i, j), c in zip(pairs, counts, strict=True):
        mat[i, j] = mat[j, i] = c
    return mat


def _soliton_profile(
    x: np.ndarray, kappa: float, centre: float, sign: int, eq: Equation, length: float
) -> np.ndarray:
    """The equation's soliton shape (polarity ``sign`` for mKdV; KdV's is the equation's) with its
    two nearest periodic images."""
    form = eq.soliton_form
    out = np.zeros_like(x)
    for image in (-length, 0.0, length):
        out += form.profile(x - centre, kappa, image, sign)
    return out


def _radiation(
    frame: np.ndarray,
    grid: Grid,
    t: float,
    kappas: np.ndarray,
    fits: list[AsymptoticFit],
    signs: np.ndarray,
    eq: Equation,
) -> tuple[float, float]:
    """L2 energy ``int r^2 dx`` of what is left of the last frame after removing the solitons."""
    x = grid.x
    resid = frame.copy()
    for kappa, fit, sign in zip(kappas, fits, signs, strict=True):
        centre = (fit.speed * t + fit.offset_after + 0.5 * grid.length) % grid.length
        resid -= _soliton_profile(
            x, float(kappa), centre - 0.5 * grid.length, int(sign), eq, grid.length
        )
    energy = float(np.sum(resid**2) * grid.dx)
    total = float(np.sum(frame**2) * grid.dx)
    return energy, energy / total if total > 0 else math.nan


def _drifts(
    invariants: Mapping[str, object] | Sequence[Mapping[str, float]] | None,
) -> dict[str, float]:
    """``drift_<name>`` = max |I(t) - I(t0)| / |I(t0)| for each invariant series given."""
    if invariants is None:
        return {}
    if isinstance(invariants, Mapping):
        series = {k: np.asarray(v, float) for k, v in invariants.items()}
    else:
        rows = list(invariants)
        series = {k: np.array([r[k] for r in rows], float) for k in (rows[0] if rows else {})}
    out = {}
    for name, vals in series.items():
        if vals.size == 0:
            continue
        ref = abs(vals[0]) if vals[0] != 0 else 1.0
        out[f"drift_{name}"] = float(np.max(np.abs(vals - vals[0])) / ref)
    return out


def _closest_approach(
    tracks: Tracks, fits: list[AsymptoticFit], before: np.ndarray, after: np.ndarray
) -> float:
    """Time at which the two mid-lines (halfway between asymptotes) meet: the symmetric instant."""
    f1, f2 = fits
    mid1 = 0.5 * (f1.offset_before + f1.offset_after)
    mid2 = 0.5 * (f2.offset_before + f2.offset_after)
    dc = f1.speed - f2.speed
    if dc == 0:
        return math.nan
    lap_b = tracks.laps()[before][0, 0]
    lap_a = tracks.laps()[after][0, 0]
    # X_1 - X_2 crosses the multiple of L between the two windows' lap indices.
    crossing = max(lap_b, lap_a) * tracks.length
    return float((crossing - (mid1 - mid2)) / dc)


def _peak_census(
    u: np.ndarray,
    tracks: Tracks,
    t_closest: float,
    before: np.ndarray,
    after: np.ndarray,
    signs: tuple[int, ...],
) -> tuple[float, float]:
    """Extrema above threshold at the frame nearest the closest approach, and the fewest between."""
    t = tracks.times
    last_b, first_a = int(np.flatnonzero(before)[-1]), int(np.flatnonzero(after)[0])
    between = np.arange(last_b + 1, first_a)
    min_peaks = float(tracks.peak_count[between].min()) if between.size else math.nan
    if not math.isfinite(t_closest) or between.size == 0:
        return math.nan, min_peaks
    f = int(between[np.argmin(np.abs(t[between] - t_closest))])
    return float(count_many(u[f : f + 1], tracks.length, tracks.threshold, signs)[0]), min_peaks


def _fine_census(
    u: np.ndarray,
    tracks: Tracks,
    t_closest: float,
    before: np.ndarray,
    after: np.ndarray,
    signs: tuple[int, ...],
    restart: Restart,
    tail: float,
    speed_difference: float,
) -> tuple[float, float]:
    """:func:`_peak_census` on a fine grid of times: the run restarted from the last stored frame
    before the window of :data:`CLOSE_HALF_WINDOW` around the closest approach (within the linked
    frames around it), recorded through ``t_closest`` itself to the end of the window; the fewest
    peaks also over the stored frames between the fit windows."""
    t = tracks.times
    last_b, first_a = int(np.flatnonzero(before)[-1]), int(np.flatnonzero(after)[0])
    linked = np.flatnonzero(tracks.linked)
    lo = linked[(linked >= last_b) & (t[linked] <= t_closest)]
    hi = linked[(linked <= first_a) & (t[linked] >= t_closest)]
    f_lo = int(lo[-1]) if lo.size else last_b
    t_lo = float(t[f_lo])
    t_hi = float(t[int(hi[0])]) if hi.size else float(t[first_a])
    if not (t_lo < t_closest < t_hi):
        raise ConfigError(
            f"closest approach at t = {t_closest:.6g} is not between the linked frames around it"
        )
    passing = tail / abs(speed_difference)
    start = max(t_lo, t_closest - CLOSE_HALF_WINDOW * passing)
    end = min(t_hi, t_closest + CLOSE_HALF_WINDOW * passing)
    f0 = int(np.searchsorted(t, start, side="right")) - 1  # a stored frame, f_lo at the earliest
    t0 = float(t[f0])
    spacing = max(passing / CLOSE_FRAMES_PER_TAIL, (end - t0) / CLOSE_MAX_FRAMES)
    upto = max(1, math.ceil((t_closest - t0) / spacing))
    spacing = (t_closest - t0) / upto
    count = upto + max(1, math.ceil((end - t_closest) / spacing))
    times = t0 + spacing * np.arange(1, count + 1)
    times[upto - 1] = t_closest
    state = u[f0]
    counts = np.empty(times.size, dtype=np.int64)
    chunk = max(16, _CLOSE_VALUES // u.shape[1])
    for b in range(0, times.size, chunk):
        part = times[b : b + chunk]
        frames = np.asarray(restart(state, t0, part), dtype=np.float64)
        if frames.shape != (part.size, u.shape[1]) or not np.all(np.isfinite(frames)):
            raise ShapeError(
                f"restart returned frames of shape {frames.shape} (or non-finite values); "
                f"expected finite frames of shape {(part.size, u.shape[1])}"
            )
        counts[b : b + part.size] = count_many(frames, tracks.length, tracks.threshold, signs)
        state, t0 = frames[-1], float(part[-1])
    stored = tracks.peak_count[last_b + 1 : first_a]
    fewest = int(min(counts.min(), stored.min())) if stored.size else int(counts.min())
    return float(counts[upto - 1]), float(fewest)


def analyse_run(
    frames: object,
    times: object,
    grid: Grid,
    equation: str | Equation = "kdv",
    kappas: object | None = None,
    separation: float = DEFAULT_SEPARATION,
    threshold: float | None = None,
    invariants: Mapping[str, object] | Sequence[Mapping[str, float]] | None = None,
    references: Sequence[ReferenceTrack] | None = None,
    restart: Restart | None = None,
    accuracy: float | None = None,
) -> RunAnalysis:
    """Track the solitons of a record, fit their asymptotes and set the shifts against theory.

    The shift of a soliton is where it is after the collisions minus where it would be without
    them. For an integrable equation (``shift_method = "asymptotes"``) that is ``x^+ - x^-``, the
    difference of the t = 0 intercepts of one-speed lines fitted before and after the collisions.
    For a perturbed one (``f``, ``g`` or ``v`` non-zero) the speed changes along the run and those
    lines do not share a slope, so with ``references`` (``shift_method = "reference"``) the shift
    is ``D = X_i - X_ref`` (the ring difference of the soliton's position and that of the same
    soliton run alone, at the same frame times) averaged over the window after the collisions,
    minus the same average over the window before (about 0; it cancels the start-up bias of the
    overlapping tails). Its ``shift_uncertainty`` is ``sqrt(s_b^2 + s_a^2 + r_b^2 + r_a^2)``: the
    standard deviations ``s`` of ``D`` in each window and its drifts ``r`` (the slope of a line
    fitted to ``D`` times the window's duration: how much the value depends on when it is read).

    Parameters
    ----------
    frames, times
        A record, e.g. ``sim.record(times)``: shape ``(m, grid.n)`` and ``(m,)``.
    grid
        The grid of the frames.
    equation
        Preset name or :class:`~kdvsweep.Equation`, KdV or focusing mKdV family (perturbed ones
        too: the prediction is then the integrable one).
    kappas
        The solitons' kappas, left to right at the first frame. They give ``shift_predicted``
        (else the measured kappas do) and the expected number and heights of solitons.
    separation
        A soliton's fit windows are the frames where it is at least this many tail lengths
        ``1/(2 kappa)`` (of the wider soliton of each pair) from every other soliton both ways
        round the domain, before the first and after the last collision it takes part in (with
        three or more solitons, frames where two others collide far from it count): the tail
        overlap then biases positions by about ``exp(-separation)`` of a width.
    threshold
        Ignore extrema lower than this (default: a quarter of the smallest soliton's height).
    invariants
        Optional invariant series over the frames (``{"mass": [...], ...}`` or a list of dicts);
        gives ``drift_<name>`` in the summary.
    references
        For a perturbed equation: each soliton run alone (left to right, as ``kappas``), at the
        same frame times (:func:`kdvsweep.analysis.tracks.reference_track`). They give the
        shifts, ``amplitude_change``, ``speed_change`` and ``radiated_mass`` /
        ``radiated_energy``; without them a perturbed run's shift is by asymptotes and
        ``analysis_reason`` says so. Ignored for integrable equations.
    restart
        Steps a copy of the run from a stored frame (:data:`Restart`). With it, a pair's
        ``peaks_at_closest`` is counted at ``t_closest`` itself and ``min_peaks`` over fine frames
        (:data:`CLOSE_FRAMES_PER_TAIL`) within :data:`CLOSE_HALF_WINDOW` of it (and the linked
        frames around it), so neither depends on the frame interval. Without it both come from the
        stored frames: the frame nearest ``t_closest``, and the fewest over the frames between the
        fit windows (a two-peak instant narrower than the frame interval can be missed).
    accuracy
        The relative accuracy wanted in the shifts. A shift whose ``shift_uncertainty`` is above
        it (relative to the predicted shift, or the measured one without a prediction), or whose
        windows are too short for the bias check (fewer than ``MIN_BIAS_FRAMES`` frames), is not
        reported (``shift_measured`` NaN, its uncertainty kept) and ``analysis_reason`` says why.

    Returns
    -------
    RunAnalysis
        ``summary["analysis_status"]`` is ``"ok"``, ``"too_short"`` (no fit windows: the reason
        says which one is missing and what to change) or ``"failed"`` (solitons not found or lost).
    """
    if not isinstance(grid, Grid):
        raise ConfigError(f"analysis: grid must be a kdvsweep.Grid, got {type(grid).__name__}")
    if not (math.isfinite(separation) and separation > 0):
        raise ConfigError(f"analysis: separation must be a positive number, got {separation}")
    if accuracy is not None and not (math.isfinite(accuracy) and accuracy > 0):
        raise ConfigError(f"analysis: accuracy must be a positive number or None, got {accuracy}")
    eq = _equation(equation)
    u, t = check_record(frames, times, grid.n)
    given = None if kappas is None else np.atleast_1d(np.asarray(kappas, dtype=np.float64))
    if given is not None:
        theory.amplitudes(given, eq)  # validates: finite, positive
    tracks = track(u, t, grid.length, eq, given, threshold, separation, min(6.0, separation))
    n_sol = tracks.n_solitons
    summary: dict[str, Any] = {
        "analysis_status": "ok",
        "analysis_reason": "",
        "n_solitons": n_sol,
        "regime": None,
        "amplitude_ratio": math.nan,
        "peaks_at_closest": math.nan,
        "min_peaks": math.nan,
        "t_closest": math.nan,
        "radiation_energy": math.nan,
        "radiation_fraction": math.nan,
        "radiated_mass": math.nan,
        "radiated_energy": math.nan,
        "frames_before": 0,
        "frames_after": 0,
        "separation": float(separation),
        **_drifts(invariants),
    }
    rows = _empty_rows(tracks, given, eq)
    if tracks.reason:
        summary.update(analysis_status="failed", analysis_reason=tracks.reason)
        return RunAnalysis(rows, summary, tracks)
    before, after, counts, status, reason = _windows(tracks)
    summary.update(
        analysis_status=status,
        analysis_reason=reason,
        frames_before=int(before.sum()),
        frames_after=int(after.sum()),
    )
    _fill_speeds(rows, tracks, before | after, eq)
    if status != "ok":
        return RunAnalysis(rows, summary, tracks, [], before, after)
    windows = _soliton_windows(tracks, before, after)
    short = _short_windows(windows, separation)
    summary.update(
        frames_before=min(int(b.sum()) for b, _ in windows),
        frames_after=min(int(a.sum()) for _, a in windows),
    )
    if short:
        summary.update(analysis_status="too_short", analysis_reason=short)
        return RunAnalysis(rows, summary, tracks, [], before, after)
    heights = np.array([row["kappa_from_height"] for row in rows], dtype=np.float64)
    fits = fit_windows(
        t, tracks.position, windows, heights if given is None else given, grid.length
    )
    measured = theory.kappa_from_speed([f.speed for f in fits], eq)
    use = given if given is not None else measured
    coll = _collision_matrix(n_sol, tracks.pairs(), counts)
    predicted = (
        theory.phase_shifts(use, eq, coll)
        if np.all(np.isfinite(use)) and np.unique(use).size == use.size
        else np.full(n_sol, np.nan)
    )
    for i, (row, fit) in enumerate(zip(rows, fits, strict=True)):
        err = abs(fit.shift - predicted[i])
        row.update(
            kappa_measured=float(measured[i]),
            speed=fit.speed,
            speed_before=fit.speed_before,
            speed_after=fit.speed_after,
            collisions=int(coll[i].sum()),
            offset_before=fit.offset_before,
            offset_after=fit.offset_after,
            shift_predicted=float(predicted[i]),
            shift_measured=fit.shift,
            shift_error=err,
            shift_rel_error=err / abs(predicted[i]) if predicted[i] != 0 else math.nan,
            shift_uncertainty=fit.uncertainty,
            shift_method="asymptotes",
            fit_residual=fit.residual_rms,
            frames_before=fit.n_before,
            frames_after=fit.n_after,
        )
        if given is None:
            row["kappa"] = float(measured[i])
    notes = _changes(rows, tracks, fits, windows, eq, references)
    if accuracy is not None:
        notes += _inaccurate(rows, fits, accuracy)
    pair, note = _pair_summary(u, tracks, fits, before, after, use, eq, restart)
    summary.update(pair)
    notes += [note] if note else []
    energy, fraction = _radiation(u[-1], grid, t[-1], measured, fits, tracks.sign, eq)
    summary.update(radiation_energy=energy, radiation_fraction=fraction)
    tails = np.asarray(eq.soliton_form.tail_length(measured if given is None else given))
    radiated, note = _radiated(u, grid, tracks, tails, eq, references)
    summary.update(radiated)
    notes += [note] if note else []
    if notes:
        summary["analysis_reason"] = "; ".join(dict.fromkeys(notes))
    return RunAnalysis(rows, summary, tracks, fits, before, after)


def _usable(
    references: Sequence[ReferenceTrack] | None, n_sol: int, times: np.ndarray
) -> tuple[list[ReferenceTrack] | None, str]:
    """The references when each soliton has one at the run's frame times; else None and why."""
    if references is None:
        return None, (
            "perturbed equation without reference runs: shift_measured by asymptotes, whose "
            "speeds differ before and after (see shift_uncertainty)"
        )
    refs = list(references)
    if len(refs) != n_sol:
        return None, f"{len(refs)} reference run(s) for {n_sol} solitons: shifts not measured"
    for i, ref in enumerate(refs):
        if not ref.ok:
            return None, f"soliton {i}: {ref.status}"
        if ref.times.shape != times.shape or not np.array_equal(ref.times, times):
            return None, f"soliton {i}: its reference run has other frame times than the run"
    return refs, ""


def _window_line(t: np.ndarray, d: np.ndarray) -> tuple[float, float, float]:
    """Mean, standard deviation and slope of ``d(t)`` in one window."""
    slope = float(np.polyfit(t - t.mean(), d, 1)[0]) if t.size >= 2 else math.nan
    return float(np.mean(d)), float(np.std(d)), slope


def _changes(
    rows: list[dict[str, Any]],
    tracks: Tracks,
    fits: list[AsymptoticFit],
    spans: list[tuple[np.ndarray, np.ndarray]],
    eq: Equation,
    references: Sequence[ReferenceTrack] | None,
) -> list[str]:
    """Fill ``amplitude_change``, ``speed_change`` (and for a perturbed run with references the
    reference shift) of each row; return notes for ``analysis_reason``.

    Each soliton's own windows (``spans``). Integrable (or no references): after-window against
    before-window of the run itself, the
    mean peak height and the fitted speeds. Perturbed with references: the run against its
    reference runs at the same times, after the collisions, less the same before.
    """
    t = tracks.times
    refs, why = (None, "") if not eq.perturbed else _usable(references, len(rows), t)
    notes = [why] if why else []
    for i, (row, fit) in enumerate(zip(rows, fits, strict=True)):
        h = np.abs(tracks.height[:, i])
        before, after = spans[i]
        if refs is None:
            hb, ha = float(np.mean(h[before])), float(np.mean(h[after]))
            row["amplitude_change"] = ha / hb - 1.0
            row["speed_change"] = (
                fit.speed_after / fit.speed_before - 1.0 if fit.speed_before != 0 else math.nan
            )
            if eq.perturbed and references is not None:  # references given but unusable
                row.update(shift_measured=math.nan, shift_method="reference")
                row.update(shift_error=math.nan, shift_rel_error=math.nan)
                row.update(shift_uncertainty=math.nan)
                row.update(amplitude_change=math.nan, speed_change=math.nan)
            continue
        ref = refs[i]
        d = ring_difference(tracks.x[:, i], ref.x, tracks.length)
        ratio = h / np.abs(ref.height) - 1.0
        unwrapped = np.full(ref.x.shape, np.nan)
        seen = np.isfinite(ref.x)
        unwrapped[seen] = np.unwrap(ref.x[seen], period=tracks.length)
        windows = []
        for mask in (before, after):
            use = mask & np.isfinite(d)
            if use.sum() < MIN_FRAMES:
                break
            mean, std, slope = _window_line(t[use], d[use])
            span = float(t[use][-1] - t[use][0])
            c_ref = _window_line(t[use], unwrapped[use])[2]
            windows.append((mean, std, abs(slope) * span, slope, float(np.mean(ratio[use])), c_ref))
        if len(windows) < 2:
            notes.append(f"soliton {i}: its reference run was not followed in a fit window")
            row.update(shift_measured=math.nan, shift_method="reference")
            row.update(shift_error=math.nan, shift_rel_error=math.nan, shift_uncertainty=math.nan)
            continue
        (mb, sb, rb, cb, ab, _), (ma, sa, ra, ca, aa, c_ref) = windows
        shift = ma - mb
        err = abs(shift - row["shift_predicted"])
        pred = row["shift_predicted"]
        row.update(
            shift_measured=shift,
            shift_method="reference",
            shift_uncertainty=math.sqrt(sb**2 + sa**2 + rb**2 + ra**2),
            shift_error=err,
            shift_rel_error=err / abs(pred) if pred != 0 else math.nan,
            amplitude_change=aa - ab,
            speed_change=(ca - cb) / c_ref if c_ref != 0 else math.nan,
        )
    return notes


#: What to change when one term dominates a shift's uncertainty (see AsymptoticFit).
_REMEDIES = {
    "shift_se": (
        "scatter of the positions: more points or a smaller step (a low, wide peak feels field "
        "errors most) or frames more often"
    ),
    "shift_bias": "tail overlap or a drift in the windows: start the solitons farther apart",
    "shift_drift": "the speed changed across the collisions: a smaller time step or finer grid",
    "shift_tail_residual": "tail interaction left by the fit: start the solitons farther apart",
}


def _inaccurate(
    rows: list[dict[str, Any]], fits: list[AsymptoticFit], accuracy: float
) -> list[str]:
    """Blank the shifts that do not reach ``accuracy`` (in place); one note for each."""
    notes = []
    for i, (row, fit) in enumerate(zip(rows, fits, strict=True)):
        shift, pred = row["shift_measured"], row["shift_predicted"]
        if not math.isfinite(shift):
            continue
        scale = abs(pred) if math.isfinite(pred) and pred != 0 else abs(shift)
        rel = row["shift_uncertainty"] / scale if scale > 0 else math.inf
        frames = (
            f"{fit.n_before} frame(s) before its first collision and {fit.n_after} after its last"
        )
        asymptotes = row["shift_method"] == "asymptotes"
        if asymptotes and not math.isfinite(fit.shift_bias):
            why = (
                f"{frames} are too few to check the fit's bias (need {MIN_BIAS_FRAMES} in each): "
                "record frames more often or run longer"
            )
        elif not rel <= accuracy:
            why = f"its uncertainty {rel:.2g} of the shift exceeds the accuracy {accuracy:g}"
            if asymptotes:
                terms = {k: float(getattr(fit, k)) for k in _REMEDIES}
                why += f", mostly {_REMEDIES[max(terms, key=lambda k: terms[k])]} ({frames})"
        else:
            continue
        notes.append(f"soliton {i}: shift not reported: {why}")
        row.update(shift_measured=math.nan, shift_error=math.nan, shift_rel_error=math.nan)
    return notes


def _outside(
    x: np.ndarray, centres: Sequence[float], halves: Sequence[float], length: float
) -> np.ndarray:
    """Mask of the grid points farther than ``halves[k]`` from every ``centres[k]`` on the ring."""
    mask = np.ones(x.size, dtype=bool)
    for c, half in zip(centres, halves, strict=True):
        if math.isfinite(c):
            mask &= np.abs(ring_difference(x, c, length)) > half
    return mask


_COVERED = "radiated_mass/energy not measured: the windows around the solitons cover the whole box"


def _radiated(
    u: np.ndarray,
    grid: Grid,
    tracks: Tracks,
    tails: np.ndarray,
    eq: Equation,
    references: Sequence[ReferenceTrack] | None,
) -> tuple[dict[str, float], str]:
    """``radiated_mass`` and ``radiated_energy``: what the collisions sent away from the solitons
    (and a note when they cannot be measured).

    Windows of :data:`RADIATION_WINDOW` tail lengths either side of each soliton are left out. Perturbed,
    with references: ``r = u(T) - sum_i u_i(T)``, the last frame less the last frames of the
    reference runs (which carry each soliton's own shedding under damping or a term its shape does
    not solve), integrated outside the windows around the solitons of the run and of the
    references: ``int r dx`` and ``int r^2 dx``. Otherwise: ``int u dx`` and ``int u^2 dx``
    outside the windows at the last frame less the same at the first (a soliton alone keeps its
    shape, so what is left is the collisions').
    """
    x, n_sol = grid.x, tracks.n_solitons
    halves = [float(RADIATION_WINDOW * tau) for tau in np.broadcast_to(tails, (n_sol,))]
    last = int(np.flatnonzero(tracks.linked)[-1])
    if last != u.shape[0] - 1:
        return {}, "radiated_mass/energy not measured: the solitons are not apart in the last frame"
    refs = None
    if eq.perturbed:
        refs, _ = _usable(references, n_sol, tracks.times)
        if refs is None:
            return {}, "radiated_mass/energy need the reference runs of a perturbed equation"
    if refs is None:
        outs = []
        for f in (0, last):
            mask = _outside(x, list(tracks.x[f]), halves, grid.length)
            if not mask.any():
                return {}, _COVERED
            outs.append((float(np.sum(u[f][mask])), float(np.sum(u[f][mask] ** 2))))
        (m0, e0), (m1, e1) = outs
        return {"radiated_mass": (m1 - m0) * grid.dx, "radiated_energy": (e1 - e0) * grid.dx}, ""
    resid = u[last] - np.sum([ref.last for ref in refs], axis=0)
    centres = [*tracks.x[last], *(ref.x[-1] for ref in refs)]
    mask = _outside(x, centres, halves + halves, grid.length)
    if not mask.any():
        return {}, _COVERED
    return {
        "radiated_mass": float(np.sum(resid[mask]) * grid.dx),
        "radiated_energy": float(np.sum(resid[mask] ** 2) * grid.dx),
    }, ""


def _empty_rows(tracks: Tracks, given: np.ndarray | None, eq: Equation) -> list[dict[str, Any]]:
    rows = []
    for i in range(tracks.n_solitons):
        row: dict[str, Any] = dict.fromkeys(TABLE_COLUMNS, math.nan)
        row.update(
            soliton=i,
            sign=int(tracks.sign[i]),
            collisions=0,
            frames_before=0,
            frames_after=0,
        )
        if given is not None and i < given.size:
            row["kappa"] = float(given[i])
        rows.append(row)
    return rows


def _fill_speeds(
    rows: list[dict[str, Any]], tracks: Tracks, window: np.ndarray, eq: Equation
) -> None:
    """Heights (and kappa from them) averaged over the separated frames, whatever the status."""
    use = window if window.any() else tracks.linked
    for i, row in enumerate(rows):
        h = np.abs(tracks.height[use, i])
        if h.size:
            amp = float(np.mean(h))
            signed = amp * float(tracks.sign[i])  # the branch of a Gardner wave
            kappa = float(theory.kappa_from_amplitude(signed, eq))
            row.update(amplitude=amp, kappa_from_height=kappa)


def _pair_summary(
    u: np.ndarray,
    tracks: Tracks,
    fits: list[AsymptoticFit],
    before: np.ndarray,
    after: np.ndarray,
    kappas: np.ndarray,
    eq: Equation,
    restart: Restart | None = None,
) -> tuple[dict[str, Any], str]:
    """The pair's closest approach and Lax regime (the fewest peaks for more solitons), and a note
    when a restart of the collision failed (the stored frames are used then)."""
    out: dict[str, Any] = {}
    if len(fits) != 2:
        if not (before.any() and after.any()):
            return out, ""
        between = np.arange(int(np.flatnonzero(before)[-1]) + 1, int(np.flatnonzero(after)[0]))
        if between.size:
            out["min_peaks"] = float(tracks.peak_count[between].min())
        return out, ""
    t_c = _closest_approach(tracks, fits, before, after)
    signs = theory.polarities(eq)
    note = ""
    at_closest, fewest = _peak_census(u, tracks, t_c, before, after, signs)
    if restart is not None and math.isfinite(t_c) and np.all(np.isfinite(kappas)):
        tail = float(np.max(eq.soliton_form.tail_length(kappas)))
        try:
            at_closest, fewest = _fine_census(
                u, tracks, t_c, before, after, signs, restart, tail, fits[0].speed - fits[1].speed
            )
        except Exception as exc:  # the stored frames still give the census
            note = f"closest approach from the stored frames: restart failed: {exc}"
    out.update(t_closest=t_c, peaks_at_closest=at_closest, min_peaks=fewest)
    if theory.family(eq) == "kdv" and np.all(np.isfinite(kappas)) and kappas[0] != kappas[1]:
        out.update(
            regime=theory.interaction_regime(kappas[0], kappas[1]),
            amplitude_ratio=theory.amplitude_ratio(kappas[0], kappas[1]),
        )
    return out, note


_INT_COLUMNS = ("soliton", "sign", "collisions", "frames_before", "frames_after")


def _records(rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """``rows`` with the types of :func:`_frame`'s columns, as plain Python values: the integer
    columns as ``int``; a column of numbers as ``float`` unless all are integers; NumPy scalars
    as Python ones."""
    columns: dict[str, list[Any]] = {}
    for name in TABLE_COLUMNS:
        values = [_plain(row.get(name, math.nan)) for row in rows]
        if name in _INT_COLUMNS:
            values = [int(v) for v in values]
        elif _numbers(values) and not all(isinstance(v, int) for v in values):
            values = [float(v) for v in values]
        columns[name] = values
    return [{name: columns[name][i] for name in TABLE_COLUMNS} for i in range(len(rows))]


def _numbers(values: list[Any]) -> bool:
    return all(isinstance(v, int | float) and not isinstance(v, bool) for v in values)


def _plain(value: Any) -> Any:
    return value.item() if isinstance(value, np.generic) else value


def _frame(rows: list[dict[str, Any]]) -> pd.DataFrame:
    """The table of ``rows``: one typed array per column (pandas infers the columns that are not
    all numbers), without the per-cell work of a frame built from records."""
    if not rows:
        empty = pd.DataFrame(rows, columns=list(TABLE_COLUMNS))
        return empty.astype(dict.fromkeys(_INT_COLUMNS, "int64"))
    data: dict[str, Any] = {}
    for name in TABLE_COLUMNS:
        values = [row.get(name, math.nan) for row in rows]
        if name in _INT_COLUMNS:
            data[name] = np.array(values, dtype=np.int64)
            continue
        arr = np.array(values)
        data[name] = arr if arr.dtype.kind == "f" else values
    return pd.DataFrame(data, columns=list(TABLE_COLUMNS))


def collision_table(
    frames: object,
    times: object,
    grid: Grid,
    equation: str | Equation = "kdv",
    kappas: object | None = None,
    **options: Any,
) -> pd.DataFrame:
    """The per-soliton table of :func:`analyse_run`; raises if the shifts could not be measured.

    Raises
    ------
    ConfigError
        With the reason, when the record is too short for an asymptotic fit or the solitons
        cannot be tracked (``analysis_status`` ``"too_short"`` or ``"failed"``), or for
        ``kappas`` that are not a non-empty list of positive numbers.
    ShapeError
        For a record without frames, or frames of another shape than ``(m, grid.n)``.
    """
    try:
        shape = np.shape(frames)  # type: ignore[call-overload]
    except ValueError:  # ragged nested lists
        shape = ()
    if len(shape) != 2 or shape[0] == 0:
        raise ShapeError(
            f"collision_table: frames must be a record of shape (m, n) with m >= 1 frames, "
            f"got {f'shape {shape}' if shape else 'no array of frames'}"
        )
    if kappas is not None:
        try:
            given = np.asarray(kappas, dtype=np.float64)
        except (TypeError, ValueError):
            given = np.zeros((0, 0))
        if (
            given.ndim != 1
            or given.size == 0
            or not np.all(np.isfinite(given))
            or not np.all(given > 0)
        ):
            shown = " ".join(repr(kappas).split())
            shown = shown if len(shown) <= 60 else shown[:57] + "..."
            raise ConfigError(
                "collision_table: kappas must be a non-empty list of positive finite numbers "
                f"(or None to measure them), got {shown}"
            )
    result = analyse_run(frames, times, grid, equation, kappas, **options)
    if not result.ok:
        raise ConfigError(
            f"collision_table: {result.summary['analysis_status']}: "
            f"{result.summary['analysis_reason']}"
        )
    return result.table


__all__ = [
    "DEFAULT_SEPARATION",
    "RADIATION_WINDOW",
    "SHIFT_METHODS",
    "TABLE_COLUMNS",
    "RunAnalysis",
    "analyse_run",
    "collision_table",
]
