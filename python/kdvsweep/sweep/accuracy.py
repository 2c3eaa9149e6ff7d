"""The accuracy a sweep asks for (``[accuracy]`` in a sweep file; README "Asking for an accuracy").

One home for: the runs chosen for verification (a seeded, reproducible choice), the temporal order
of each fixed-step scheme and the Richardson factor of its error estimate, the error model behind
``dt = "auto"`` and the spectrum decades behind ``points = "auto"`` with a target.
"""

from __future__ import annotations

import hashlib
import math
from collections.abc import Iterable, Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from ..model import Equation, SolitonForm

#: Default ``accuracy.verify``: no run is re-run.
DEFAULT_VERIFY = 0.0
#: Default ``accuracy.seed`` of the choice of verified runs.
DEFAULT_SEED = 0

#: Temporal order of each fixed-step scheme (ETDRK4: Cox & Matthews 2002; IFRK4: classical RK4 in
#: the integrating factor; Strang splitting: second order, Strang 1968 [memory]).
SCHEME_ORDER: dict[str, int] = {"etdrk4": 4, "ifrk4": 4, "strang": 2}

#: Cost of a verified run in runs of its own: itself, at half the step (twice the steps), on
#: twice the points (a little over twice the work per step).
VERIFY_COST = 5.0

#: The measured numbers of a soliton whose difference between a run at ``dt`` and the same run at
#: ``dt / 2`` is stored as ``<name>_error_estimate`` (solitons table).
ESTIMATED = ("shift", "amplitude", "speed")

#: Error model of ``dt = "auto"``: the relative error of a collision's shifts is about
#: ``C (dt rate)^p`` with ``p`` the scheme's order and ``rate`` the nonlinear term's rate on the
#: solitons' own scale (:func:`soliton_rate`: 12 for the KdV pair below, 48 kappa^3 for an mKdV
#: soliton). ``C`` per scheme, measured 2026-12-02 (again after the fits gained their
#: tail-interaction terms, :mod:`kdvsweep.analysis.fits`, which removed an analysis bias of about
#: 1e-6 that had partly cancelled the temporal error) on the KdV pair kappa = (1, 0.5)
#: (``points = "auto"`` at 16 decades: n = 512, positions, length and end auto: t = 13.3,
#: frame_every = 0.1) against the pair formula (Gardner et al. 1974,
#: :func:`kdvsweep.theory.phase_shifts`), the larger relative shift error of the pair:
#: ETDRK4 dt = 0.005, 0.0035, 0.0025, 0.00125: 1.2e-4, 1.9e-5, 3.9e-6, 9.2e-8 (C = 9.4, 6.1,
#: 4.8, 1.8); IFRK4 dt = 0.0025, 0.00125: 3.5e-5, 1.1e-6 (C = 43, 22); Strang dt = 0.005,
#: 0.0025: 3.8e-4, 1.1e-4 (C = 0.11, 0.12). Larger steps were at the edge of stability (errors
#: of 1e-3 to 1e-2). The mKdV pair kappa = (1, 0.5) (rate 48, n = 1536) with ETDRK4 at dt = 0.001
#: and 0.0005 gave 7.6e-5 and 2.6e-6 (C = 14 and 7.8). ``C`` is the largest value of each scheme,
#: rounded up (ETDRK4: the mKdV one; Strang: 0.25, as with 0.15 the slow soliton's fit
#: uncertainty of the KdV pair at a 1e-5 target was 1.04e-5, its shift unreported): the error falls
#: faster than ``dt^4`` for the fourth-order schemes here, so the model errs on the safe side at
#: small targets (tests/test_accuracy.py re-measures the KdV points and checks the result on KdV
#: and mKdV pairs).
ERROR_CONSTANT: dict[str, float] = {"etdrk4": 15.0, "ifrk4": 45.0, "strang": 0.25}
#: Share of the target the temporal error may take (the rest is left to the analysis's fits).
TIME_SHARE = 0.25
#: ``dt = "auto"`` without a target aims at this relative shift error.
DEFAULT_AUTO_TARGET = 1e-6
#: Decades of spectrum ``points = "auto"`` keeps beyond the target
#: (``-log10(target) + EXTRA_DECADES + log10(spread / REFERENCE_SPREAD)``, :func:`auto_decades`): the truncation
#: error of a resolved profile is about the spectrum's level at the cutoff, and a field error
#: ``e`` (relative to the largest amplitude) moves a peak by about ``e`` widths of the fastest
#: soliton. The margin is measured, not derived: with two decades the KdV pair kappa = (1, 0.6)
#: at target 1e-5 (n = 192) had its shifts right to 1.3e-6 but the analysis's fit uncertainty of
#: the slow soliton at 1.3e-5, above the target (so the shift was not reported); with three
#: (n = 256) the uncertainty is 2.6e-7 (2026-12-02). That pair's spread (:func:`peak_spread`)
#: is :data:`REFERENCE_SPREAD`; runs of other spreads keep more or fewer decades.
EXTRA_DECADES = 3.0
#: :func:`peak_spread` of the KdV pair kappa = (1, 0.6) at which :data:`EXTRA_DECADES` was measured:
#: ``(1 / 0.6)^3``.
REFERENCE_SPREAD = (1.0 / 0.6) ** 3


#: ``sizing.tail`` with a target: at most this fraction of the target. Solitons given one by one
#: (``kind = "solitons"``) start as a sum of single solitons, which differs from the N-soliton
#: of the same kappas by the tails' overlap: relative ``tail`` near each soliton (the leading
#: term of the tau function's expansion, as in :mod:`kdvsweep.analysis.fits`). That changes the
#: kappas by about ``tail`` (the fast soliton of the mKdV pair kappa = (1, 0.7): 4.6e-8 at
#: tail 1e-8, 3.7e-10 at 1e-10) and sends radiation of that relative height through which the
#: peaks move (position scatter 9e-9 at 1e-8, 4e-10 at 1e-10). Neither is seen by the re-runs
#: at ``dt / 2`` or ``2 n`` (same initial data). The shift error follows through the formula's
#: sensitivity to the kappas (:func:`kappa_errors`): the slow soliton of that pair was 7.8e-8 off
#: at tail 1e-8 and 6.6e-10 at 1e-10 (2026-12-02), so a hundredth of the target keeps it to a
#: few per cent of the target.
TAIL_FRACTION = 0.01


def auto_tail(target: float | None, tail: float) -> float:
    """The ``sizing.tail`` of a run with an accuracy ``target``: ``min(tail, TAIL_FRACTION *
    target)`` (:data:`TAIL_FRACTION`); ``tail`` as given without a target. For the loader's
    automatic positions, end and length of soliton runs."""
    if target is None:
        return tail
    return min(tail, TAIL_FRACTION * target)


def richardson_factor(order: int) -> float:
    """``2^p / (2^p - 1)``: the error of a value computed at ``dt`` is about this times its
    difference from the same value at ``dt / 2`` (Richardson extrapolation, common practice, no
    source): 16/15 for a fourth-order scheme, 4/3 for Strang's second order."""
    return 2.0**order / (2.0**order - 1.0)


def verified_runs(run_ids: Iterable[int], fraction: float, seed: int) -> frozenset[int]:
    """The runs re-run to estimate their errors: ``ceil(fraction * len(run_ids))`` of them (none
    for 0, all for 1), those whose sha256 of ``"seed:run_id"`` comes first. The same file (same
    runs, fraction and seed) always gives the same runs, on any machine and library version."""
    if not 0.0 <= fraction <= 1.0:
        raise ValueError(f"verify fraction {fraction!r}: expected a number from 0 to 1")
    ids = list(run_ids)
    count = min(len(ids), math.ceil(fraction * len(ids) - 1e-12))
    if count <= 0:  # no hashing: a sweep of 10^6 runs verifying none is loaded without it
        return frozenset()
    ids = sorted(int(i) for i in ids)
    ranked = sorted(ids, key=lambda i: hashlib.sha256(f"{seed}:{i}".encode()).hexdigest())
    return frozenset(ranked[: max(count, 0)])


def soliton_rate(a: float, b: float, max_u: float, narrowest: float) -> float:
    """The rate of the nonlinear term ``(a u + b u^2) u_x`` on the solitons' own scale:
    ``(|a| max|u| + |b| max|u|^2) / w`` with ``w`` the narrowest soliton's width (``12 kappa^3``
    for a KdV soliton, ``48 kappa^3`` for mKdV): the rate that sets the temporal error of a
    collision (the linear term is integrated exactly by ETDRK4 and IFRK4, and by Strang's linear
    half-steps)."""
    return (abs(a) * max_u + abs(b) * max_u**2) / narrowest


def auto_dt(scheme: str, target: float, rate: float, limit: float) -> float:
    """The largest step whose estimated shift error ``C (dt rate)^p`` (:data:`ERROR_CONSTANT`)
    is ``TIME_SHARE`` of ``target``, capped by the scheme's stable step ``limit``; a step with
    three significant digits (rounded down)."""
    order = SCHEME_ORDER[scheme]
    dt = (TIME_SHARE * target / ERROR_CONSTANT[scheme]) ** (1.0 / order) / rate
    dt = min(dt, limit)
    scale = 10.0 ** math.floor(math.log10(dt) - 2)
    return float(f"{math.floor(dt / scale) * scale:.3g}")


def peak_spread(
    kappas: Sequence[float] | np.ndarray,
    form: SolitonForm,
    signs: Sequence[int] | np.ndarray | None = None,
) -> Any:
    """``(A_max / A_min) (kappa_max / kappa_min)``: how much more a field error moves the peak of
    the widest, lowest soliton, relative to its shift, than that of the fastest. A field error
    ``e A_max`` at the cutoff wavenumber ``k_c`` has a slope ``e A_max k_c`` and moves the peak
    of soliton ``j`` (curvature ``~ A_j kappa_j^2``) by ``~ e A_max k_c / (A_j kappa_j^2)``; its
    shift is ``~ 1/kappa_j`` (the pair formula, Gardner et al. 1974), so the relative error
    grows as ``(A_max / A_j) (kappa_max / kappa_j)``: ``(kappa_max / kappa_min)^3`` for KdV,
    ``^2`` for mKdV. Measured on the KdV triple kappa = (1, 0.6, 0.25) at a 1e-7 target: at
    n = 2048 (10 decades) the slowest soliton's positions scattered by 2.7e-7 and its shift was
    not reported (uncertainty 2.7e-7 of it); at n = 3072 (the spread's 1.8 decades more) the
    scatter is 4.5e-9 and the error 1.3e-9 (2026-12-02). ``signs``: each soliton's polarity
    (Gardner amplitudes depend on it). ``kappas`` (and ``signs``) of one run give a float; tables
    of runs by solitons give an array, a run per row."""
    ks = np.asarray(kappas, dtype=np.float64)
    table = np.atleast_2d(ks)  # runs by solitons
    if table.shape[1] == 0:
        return 1.0
    if signs is None:
        amps = np.asarray(form.amplitude(table), dtype=np.float64)
    else:
        pol = np.broadcast_to(np.asarray(signs, dtype=np.int64).reshape(table.shape), table.shape)
        amps = form.per_soliton(form.amplitude, table, pol)
    with np.errstate(all="ignore"):
        out = (amps.max(axis=1) / amps.min(axis=1)) * (table.max(axis=1) / table.min(axis=1))
    out = np.where(np.all(np.isfinite(amps) & (amps > 0), axis=1), out, 1.0)
    return float(out[0]) if ks.ndim == 1 else out


def auto_decades(target: float | None, ceiling: float, spread: float = REFERENCE_SPREAD) -> float:
    """Spectrum decades ``points = "auto"`` keeps at the cutoff: ``-log10(target) +
    EXTRA_DECADES + log10(spread / REFERENCE_SPREAD)`` (:data:`EXTRA_DECADES`; ``spread`` of the
    run's solitons, :func:`peak_spread`; without it, that of the pair the margin was measured
    on), at most ``ceiling`` (the double precision level); ``ceiling`` without a target."""
    if target is None:
        return ceiling
    extra = EXTRA_DECADES + math.log10(max(spread, 1.0) / REFERENCE_SPREAD)
    return min(ceiling, -math.log10(target) + extra)


def error_estimates(
    rows: Sequence[Mapping[str, Any]], other: Sequence[Mapping[str, Any]], order: int | None
) -> list[dict[str, float]]:
    """``<name>_error_estimate`` of each soliton row for each of :data:`ESTIMATED`: the
    Richardson factor times ``|value(dt) - value(dt / 2)|`` (``other`` the run at half the step,
    ``order`` the scheme's), or ``|value(n) - value(2 n)|`` (``order = None``: ``other`` on a
    finer grid, whose spectral error is far smaller). NaN when either value is missing, or when
    the two runs do not have the same solitons."""
    factor = 1.0 if order is None else richardson_factor(order)
    rows_other = other
    out = []
    same = len(rows) == len(rows_other)
    for i, row in enumerate(rows):
        est: dict[str, float] = {}
        for name in ESTIMATED:
            key = "shift_measured" if name == "shift" else name
            a = _number(row.get(key))
            b = _number(rows_other[i].get(key)) if same else math.nan
            est[f"{name}_error_estimate"] = factor * abs(a - b)
        out.append(est)
    return out


#: The analysis's own error of each :data:`ESTIMATED` number: the row's column that bounds it
#: (``shift``: ``shift_uncertainty``, the asymptotic fit's standard error, far-half bias, speed
#: drift and tail-interaction residual, :class:`kdvsweep.analysis.AsymptoticFit`). Re-running at
#: ``dt / 2`` or on ``2 n`` points changes only the discretisation: an error of the fit itself
#: (finite separation, frames in the windows) is the same in both runs and cancels in their
#: difference, so it is added here.
ANALYSIS_ERROR = {"shift": "shift_uncertainty"}


def _collision_counts(
    rows: Sequence[Mapping[str, Any]], kappas: Sequence[float], equation: Equation
) -> Any:
    """The ``(N, N)`` collision counts behind the rows' ``shift_predicted``: every pair once,
    or what the rows' ``collisions`` give for two or three solitons (``n_i = sum_j C_ij``
    solves for ``C`` then); ``None`` when none of these reproduces the predictions."""
    import numpy as np

    from .. import theory

    n = len(rows)
    predicted = np.array([_number(r.get("shift_predicted")) for r in rows])
    candidates = [np.ones((n, n)) - np.eye(n)]
    counts = [_number(r.get("collisions")) for r in rows]
    if n == 2:
        candidates.append(np.array([[0.0, counts[0]], [counts[0], 0.0]]))
    elif n == 3:
        c01 = 0.5 * (counts[0] + counts[1] - counts[2])
        c02 = 0.5 * (counts[0] + counts[2] - counts[1])
        c12 = 0.5 * (counts[1] + counts[2] - counts[0])
        candidates.append(np.array([[0, c01, c02], [c01, 0, c12], [c02, c12, 0]], dtype=float))
    for cand in candidates:
        if not (np.all(np.isfinite(cand)) and np.all(cand >= 0)):
            continue
        shifts = theory.phase_shifts(kappas, equation, cand)
        if np.allclose(shifts, predicted, rtol=1e-9, atol=1e-12):
            return cand
    return None


def kappa_errors(rows: Sequence[Mapping[str, Any]], equation: Equation) -> list[float]:
    """How far each ``shift_predicted`` is from the formula at the kappas the solitons have: the
    sum over ``j`` of ``|Delta_i(kappa with kappa_j measured) - Delta_i(kappa as given)|`` (the
    pair formula, Gardner et al. 1974, :func:`kdvsweep.theory.phase_shifts`; ``kappa_measured``
    from the asymptotic speed). A sum of single solitons starts with kappas slightly off the
    given ones (:data:`TAIL_FRACTION`); the re-runs share the initial data, so only this sees
    it. Zero for a perturbed equation (its shift is not the formula's) and where a kappa or the
    collision counts are not known."""
    import numpy as np

    from .. import theory

    zero = [0.0] * len(rows)
    if equation.perturbed or not rows:
        return zero
    given = np.array([_number(r.get("kappa")) for r in rows])
    measured = np.array([_number(r.get("kappa_measured")) for r in rows])
    if not (np.all(np.isfinite(given)) and np.all(np.isfinite(measured))):
        return zero
    if np.unique(measured).size != measured.size or np.any(measured <= 0):
        return zero
    counts = _collision_counts(rows, list(given), equation)
    if counts is None:
        return zero
    base = theory.phase_shifts(given, equation, counts)
    total = np.zeros(len(rows))
    for j in range(len(rows)):
        moved = given.copy()
        moved[j] = measured[j]
        if np.unique(moved).size != moved.size:
            continue
        total += np.abs(theory.phase_shifts(moved, equation, counts) - base)
    return [float(v) for v in total]


def total_estimates(
    rows: Sequence[Mapping[str, Any]],
    parts: Sequence[Sequence[Mapping[str, float]]],
    equation: Equation | None = None,
) -> list[dict[str, float]]:
    """Each soliton's ``<name>_error_estimate``: the sum of the discretisation ``parts``
    (:func:`error_estimates` against the run at ``dt / 2`` and against the run on ``2 n`` points),
    of the analysis's own error (:data:`ANALYSIS_ERROR`, where the row has it) and, for shifts
    with an ``equation``, of the initial kappas' error (:func:`kappa_errors`). Errors from the
    step, the grid, the fit and the initial data are independent and may have either sign; their
    magnitudes add (a bound, not a standard deviation)."""
    initial = kappa_errors(rows, equation) if equation is not None else [0.0] * len(rows)
    out = []
    for i, row in enumerate(rows):
        est: dict[str, float] = {}
        for name in ESTIMATED:
            key = f"{name}_error_estimate"
            total = sum(part[i].get(key, math.nan) for part in parts)
            column = ANALYSIS_ERROR.get(name)
            if column is not None:
                analysis = _number(row.get(column))
                total += analysis if math.isfinite(analysis) else 0.0
            if name == "shift":
                total += initial[i]
            est[key] = float(total)
        out.append(est)
    return out


def accuracy_met(
    rows: Sequence[Mapping[str, Any]], estimates: Sequence[Mapping[str, float]], target: float
) -> bool | None:
    """Whether every shift's error estimate, relative to the predicted shift (the measured one
    without a prediction), is within ``target``: ``False`` as soon as one is above it or a shift
    was not reported (``shift_measured`` NaN: its uncertainty was above the target, see
    :func:`kdvsweep.analysis.analyse_run`); ``None`` when no estimate is finite."""
    if any(not math.isfinite(_number(row.get("shift_measured"))) for row in rows):
        return False
    rel = []
    for row, est in zip(rows, estimates, strict=True):
        ref = _number(row.get("shift_predicted"))
        if not math.isfinite(ref) or ref == 0:
            ref = _number(row.get("shift_measured"))
        value = est.get("shift_error_estimate", math.nan)
        if math.isfinite(value) and math.isfinite(ref) and ref != 0:
            rel.append(value / abs(ref))
    if not rel:
        return None
    return bool(max(rel) <= target)


def _number(value: object) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float):
        return math.nan
    return float(value)


__all__ = [
    "ANALYSIS_ERROR",
    "DEFAULT_AUTO_TARGET",
    "DEFAULT_SEED",
    "DEFAULT_VERIFY",
    "ERROR_CONSTANT",
    "ESTIMATED",
    "EXTRA_DECADES",
    "REFERENCE_SPREAD",
    "SCHEME_ORDER",
    "TAIL_FRACTION",
    "TIME_SHARE",
    "VERIFY_COST",
    "accuracy_met",
    "auto_decades",
    "auto_dt",
    "auto_tail",
    "error_estimates",
    "kappa_errors",
    "peak_spread",
    "richardson_factor",
    "soliton_rate",
    "total_estimates",
    "verified_runs",
]
