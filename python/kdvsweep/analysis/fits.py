"""Asymptotic straight-line fits of a soliton's position before and after its collisions.

Model: ``X(t) = c t + x^-`` in the window before, ``X(t) = c t + x^+`` after, one speed ``c`` for
both (an integrable collision leaves speeds unchanged, so a shared slope makes the shift
``x^+ - x^-`` independent of the time at which it is read). Separate slopes are fitted too, as a
consistency check that a perturbed run can fail.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..exceptions import ShapeError

MIN_FRAMES = 3
#: Frames each window needs for the far-half check of the bias (``shift_bias``: two per half).
MIN_BIAS_FRAMES = 4
# One pass of outlier rejection: residuals beyond this many robust standard deviations.
_OUTLIER_SIGMAS = 8.0
_MAX_REJECTED_FRACTION = 0.2


@dataclass(frozen=True)
class AsymptoticFit:
    """Result of :func:`fit_asymptotes` for one soliton.

    Attributes
    ----------
    speed
        The shared speed ``c``.
    speed_before, speed_after
        Speeds of separate straight-line fits of each window.
    offset_before, offset_after
        ``x^-`` and ``x^+``: the asymptotes' positions at ``t = 0``.
    shift
        ``x^+ - x^-``.
    shift_se
        Standard error of the shift from the fit residuals.
    shift_bias
        Change of the shift when only the far half of each window is used: an estimate of the
        bias left by tail overlap or by a slow drift of the speed (NaN for windows of fewer than
        ``MIN_BIAS_FRAMES`` frames).
    shift_drift
        ``|speed_after - speed_before|`` times half the time between the windows' centres: how much
        the shift depends on when it is read if the collision changed the speed (a perturbed
        equation, or time-stepping error in the collision).
    uncertainty
        ``sqrt(shift_se^2 + shift_bias^2 + shift_drift^2)``.
    residual_rms
        RMS residual of the shared-speed fit.
    n_before, n_after
        Frames used in each window (after outlier rejection).
    rejected
        Frames rejected as outliers.
    """

    speed: float
    speed_before: float
    speed_after: float
    offset_before: float
    offset_after: float
    shift: float
    shift_se: float
    shift_bias: float
    shift_drift: float
    uncertainty: float
    residual_rms: float
    n_before: int
    n_after: int
    rejected: int


def _shared_fit(
    t: np.ndarray, x: np.ndarray, after: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Least squares for ``x = c (t - t_ref) + b_before/after``: params, residuals, covariance."""
    t_ref = float(np.mean(t))
    design = np.column_stack([t - t_ref, ~after, after]).astype(np.float64)
    params, *_ = np.linalg.lstsq(design, x, rcond=None)
    resid = x - design @ params
    dof = x.size - 3
    sigma2 = float(resid @ resid) / dof if dof > 0 else np.nan
    cov = sigma2 * np.linalg.inv(design.T @ design)
    # Convert the window intercepts to positions at t = 0.
    params = params.copy()
    params[1:] -= params[0] * t_ref
    return params, resid, cov


def _line_speed(t: np.ndarray, x: np.ndarray) -> float:
    if t.size < 2:
        return np.nan
    return float(np.polyfit(t - t.mean(), x, 1)[0])


def _shift_of(t_b: np.ndarray, x_b: np.ndarray, t_a: np.ndarray, x_a: np.ndarray) -> float:
    t = np.concatenate([t_b, t_a])
    after = np.concatenate([np.zeros(t_b.size, bool), np.ones(t_a.size, bool)])
    params, _, _ = _shared_fit(t, np.concatenate([x_b, x_a]), after)
    return float(params[2] - params[1])


def fit_asymptotes(
    t_before: object, x_before: object, t_after: object, x_after: object
) -> AsymptoticFit:
    """Fit one speed and two offsets to unwrapped positions before and after the collisions.

    Parameters
    ----------
    t_before, x_before
        Times and positions in the window before (at least ``MIN_FRAMES`` points).
    t_after, x_after
        The same after.

    Returns
    -------
    AsymptoticFit
    """
    tb, xb = np.asarray(t_before, float), np.asarray(x_before, float)
    ta, xa = np.asarray(t_after, float), np.asarray(x_after, float)
    if tb.shape != xb.shape or ta.shape != xa.shape or tb.ndim != 1 or ta.ndim != 1:
        raise ShapeError(
            f"fit_asymptotes: times and positions must be matching 1-D arrays, got "
            f"{tb.shape}/{xb.shape} before and {ta.shape}/{xa.shape} after"
        )
    if tb.size < MIN_FRAMES or ta.size < MIN_FRAMES:
        raise ShapeError(
            f"fit_asymptotes: need at least {MIN_FRAMES} frames in each window, got "
            f"{tb.size} before and {ta.size} after"
        )
    t = np.concatenate([tb, ta])
    x = np.concatenate([xb, xa])
    after = np.concatenate([np.zeros(tb.size, bool), np.ones(ta.size, bool)])
    keep = _reject_outliers(t, x, after)
    t, x, after = t[keep], x[keep], after[keep]
    params, resid, cov = _shared_fit(t, x, after)
    tb, xb, ta, xa = t[~after], x[~after], t[after], x[after]
    shift = float(params[2] - params[1])
    se = float(np.sqrt(cov[1, 1] + cov[2, 2] - 2.0 * cov[1, 2]))
    # Far halves: the earlier half of the window before, the later half of the window after.
    hb, ha = tb.size // 2, ta.size // 2
    bias = np.nan
    if tb.size >= MIN_BIAS_FRAMES and ta.size >= MIN_BIAS_FRAMES:
        bias = abs(_shift_of(tb[:hb], xb[:hb], ta[-ha:], xa[-ha:]) - shift)
    c_before, c_after = _line_speed(tb, xb), _line_speed(ta, xa)
    drift = abs(c_after - c_before) * 0.5 * (float(ta.mean()) - float(tb.mean()))
    terms = [v for v in (se, bias, drift) if np.isfinite(v)]
    return AsymptoticFit(
        speed=float(params[0]),
        speed_before=c_before,
        speed_after=c_after,
        offset_before=float(params[1]),
        offset_after=float(params[2]),
        shift=shift,
        shift_se=se,
        shift_bias=float(bias),
        shift_drift=float(drift),
        uncertainty=float(np.sqrt(np.sum(np.square(terms)))) if terms else np.nan,
        residual_rms=float(np.sqrt(np.mean(resid**2))),
        n_before=int(tb.size),
        n_after=int(ta.size),
        rejected=int((~keep).sum()),
    )


def _reject_outliers(t: np.ndarray, x: np.ndarray, after: np.ndarray) -> np.ndarray:
    """Mask of points to keep: drop gross outliers (a corrupted frame), at most 20% of them."""
    keep = np.ones(t.size, dtype=bool)
    if t.size < 2 * MIN_FRAMES + 2:
        return keep
    _, resid, _ = _shared_fit(t, x, after)
    mad = 1.4826 * float(np.median(np.abs(resid - np.median(resid))))
    # Below this floor the residuals are round-off and tail bias, not outliers.
    floor = 1e-9 * max(1.0, float(np.ptp(x)))
    bad = np.abs(resid) > max(_OUTLIER_SIGMAS * mad, floor)
    if 0 < bad.sum() <= _MAX_REJECTED_FRACTION * t.size:
        trial = ~bad
        if (trial & ~after).sum() >= MIN_FRAMES and (trial & after).sum() >= MIN_FRAMES:
            keep = trial
    return keep


__all__ = ["MIN_BIAS_FRAMES", "MIN_FRAMES", "AsymptoticFit", "fit_asymptotes"]
