"""Asymptotic straight-line fits of a soliton's position before and after its collisions.

Model: ``X(t) = c t + x^-`` in the window before, ``X(t) = c t + x^+`` after, one speed ``c`` for
both (an integrable collision leaves speeds unchanged, so a shared slope makes the shift
``x^+ - x^-`` independent of the time at which it is read). Separate slopes are fitted too, as a
consistency check that a perturbed run can fail.

Tail interaction. A soliton is never quite alone: the N-soliton's tau function (Hirota 1971)
``f = 1 + sum_j e^{eta_j} + ...`` with ``eta_j = 2 kappa_j (x - x_j(t))`` puts the peak of soliton
``i`` off its asymptote by a series in ``e^{-2 kappa_j D_ij}`` (``D_ij`` its distance to soliton
``j``; near soliton ``i`` the other terms of ``f`` are ``e^{eta_j}`` times a function of
``eta_i``, so the leading term of ``ln f`` beyond soliton ``i``'s own is proportional to
``e^{-2 kappa_j D_ij}``, and the next ones to its square or to ``e^{-2 kappa_i D_ij}``). The
deviation is largest at a window's inner edge, and a straight line fitted through it tilts: the
shared speed is biased, and the lever arm (the time between the windows) turns that into a shift
error many times the deviation itself (measured on the exact KdV and mKdV 2-solitons: 1e-6 of the
shift for 16 tail lengths of separation, with deviations of 1e-7 at the edge). Given these
``tails`` (one column ``e^{-2 kappa_j D_ij(t)}`` per other soliton and window), the fit adds each
with a free coefficient, which removes the leading term; the first neglected term is smaller by
``e^{-2 min(kappa_i, kappa_j) D}`` at the window's edge, so its effect on the shift is bounded by
the correction's own times that factor (``shift_tail_residual``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..exceptions import ShapeError

MIN_FRAMES = 3
#: Tail columns whose largest value in a window is below this are left out: their effect on a
#: position is below ``1e-13`` of a width.
TAIL_FLOOR = 1e-13
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
    shift_tail
        The tail-interaction correction: the shift with the ``tails`` columns less the shift of
        the plain lines (0 without tails).
    shift_tail_residual
        Bound on the tail-interaction terms the correction leaves out: ``|shift_tail|`` times
        ``e^{-2 kappa_min D}`` at the windows' inner edges (the largest tail column's value there,
        to the power ``min(kappa) / kappa_j``; 0 without tails).
    uncertainty
        ``sqrt(shift_se^2 + shift_bias^2 + shift_drift^2 + shift_tail_residual^2)``.
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
    shift_tail: float
    shift_tail_residual: float
    uncertainty: float
    residual_rms: float
    n_before: int
    n_after: int
    rejected: int


def _shared_fit(
    t: np.ndarray, x: np.ndarray, after: np.ndarray, extra: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Least squares for ``x = c (t - t_ref) + b_before/after (+ extra @ beta)``: params (the
    intercepts converted to t = 0), residuals, covariance. ``extra``: more columns (each scaled to
    a largest value of 1 inside, so the covariance is well conditioned)."""
    t_ref = float(np.mean(t))
    columns = [t - t_ref, ~after, after]
    scales = np.ones(0)
    if extra is not None and extra.shape[1]:
        scales = np.max(np.abs(extra), axis=0)
        columns += list((extra / scales).T)
    design = np.column_stack(columns).astype(np.float64)
    params, *_ = np.linalg.lstsq(design, x, rcond=None)
    resid = x - design @ params
    dof = x.size - design.shape[1]
    sigma2 = float(resid @ resid) / dof if dof > 0 else np.nan
    cov = sigma2 * np.linalg.pinv(design.T @ design)
    # Convert the window intercepts to positions at t = 0.
    params = params.copy()
    params[1:3] -= params[0] * t_ref
    if scales.size:
        params[3:] /= scales
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


def _kept(tails: np.ndarray | None, m: int) -> np.ndarray:
    """A window's tail columns above :data:`TAIL_FLOOR`, shape ``(m, k)``."""
    if tails is None:
        return np.zeros((m, 0))
    cols = np.asarray(tails, dtype=np.float64).reshape(m, -1)
    cols = np.where(np.isfinite(cols), cols, 0.0)
    return cols[:, np.max(np.abs(cols), axis=0, initial=0.0) >= TAIL_FLOOR]


def _extra(
    tails_b: np.ndarray | None, tails_a: np.ndarray | None, m_b: int, m_a: int
) -> np.ndarray | None:
    """Both windows' tail columns in one design block (each window's zero in the other)."""
    cb, ca = _kept(tails_b, m_b), _kept(tails_a, m_a)
    if not (cb.shape[1] or ca.shape[1]):
        return None
    out = np.zeros((m_b + m_a, cb.shape[1] + ca.shape[1]))
    out[:m_b, : cb.shape[1]] = cb
    out[m_b:, cb.shape[1] :] = ca
    return out


def fit_asymptotes(
    t_before: object,
    x_before: object,
    t_after: object,
    x_after: object,
    tails_before: object | None = None,
    tails_after: object | None = None,
    tail_ratio: float = 1.0,
) -> AsymptoticFit:
    """Fit one speed and two offsets to unwrapped positions before and after the collisions.

    Parameters
    ----------
    t_before, x_before
        Times and positions in the window before (at least ``MIN_FRAMES`` points).
    t_after, x_after
        The same after.
    tails_before, tails_after
        Optional tail-interaction columns of each window, shape ``(frames, k)``: ``e^{-2 kappa_j
        D_ij(t)}`` for each other soliton ``j`` (see the module's docstring); each is fitted with
        a free coefficient. Columns below :data:`TAIL_FLOOR` are left out.
    tail_ratio
        ``min(kappa_i, kappa_j) / kappa_j`` over the other solitons (at most 1): the power of the
        largest tail column that bounds the first neglected term (``shift_tail_residual``).

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
    cb, ca = _tails(tails_before, tb.size, "before"), _tails(tails_after, ta.size, "after")
    t = np.concatenate([tb, ta])
    x = np.concatenate([xb, xa])
    after = np.concatenate([np.zeros(tb.size, bool), np.ones(ta.size, bool)])
    extra_all = _extra(cb, ca, tb.size, ta.size)
    keep = _reject_outliers(t, x, after, extra_all)
    t, x, after = t[keep], x[keep], after[keep]
    cb, ca = cb[keep[: tb.size]], ca[keep[tb.size :]]
    extra = _extra(cb, ca, int((~after).sum()), int(after.sum()))
    params, resid, cov = _shared_fit(t, x, after, extra)
    # The positions less the fitted tail interaction: the checks below fit plain lines to them
    # (their windows, or halves of them, are too short to fit the tail terms again).
    raw = x
    x = x - (extra @ params[3:] if extra is not None else 0.0)
    tb, xb, ta, xa = t[~after], x[~after], t[after], x[after]
    shift = float(params[2] - params[1])
    se = float(np.sqrt(max(cov[1, 1] + cov[2, 2] - 2.0 * cov[1, 2], 0.0)))
    # Far halves: the earlier half of the window before, the later half of the window after.
    hb, ha = tb.size // 2, ta.size // 2
    bias = np.nan
    if tb.size >= MIN_BIAS_FRAMES and ta.size >= MIN_BIAS_FRAMES:
        bias = abs(_shift_of(tb[:hb], xb[:hb], ta[-ha:], xa[-ha:]) - shift)
    c_before, c_after = _line_speed(tb, xb), _line_speed(ta, xa)
    drift = abs(c_after - c_before) * 0.5 * (float(ta.mean()) - float(tb.mean()))
    tail, residual = 0.0, 0.0
    if extra is not None:
        plain, _, _ = _shared_fit(t, raw, after)
        tail = shift - float(plain[2] - plain[1])
        edge = float(np.max(extra))
        residual = abs(tail) * edge ** min(1.0, max(tail_ratio, 0.0))
    terms = [v for v in (se, bias, drift, residual) if np.isfinite(v)]
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
        shift_tail=float(tail),
        shift_tail_residual=float(residual),
        uncertainty=float(np.sqrt(np.sum(np.square(terms)))) if terms else np.nan,
        residual_rms=float(np.sqrt(np.mean(resid**2))),
        n_before=int(tb.size),
        n_after=int(ta.size),
        rejected=int((~keep).sum()),
    )


def tail_columns(
    position: np.ndarray, kappas: np.ndarray, i: int, length: float
) -> tuple[np.ndarray, float]:
    """Tail-interaction columns of soliton ``i`` for :func:`fit_asymptotes` and its
    ``tail_ratio``.

    Parameters
    ----------
    position
        Unwrapped positions, shape ``(m, N)`` (NaN where a soliton was not located: filled by
        linear interpolation in time from the frames where it was).
    kappas
        The solitons' kappas, shape ``(N,)``.
    i
        The soliton fitted.
    length
        The period: distances are taken on the ring (the nearer way round).

    Returns
    -------
    columns, tail_ratio
        ``e^{-2 kappa_j D_ij(t)}`` for each other soliton ``j`` (shape ``(m, N - 1)``; NaN rows
        where soliton ``i`` itself is not located), and ``min_j min(kappa_i, kappa_j) / kappa_j``.
    """
    pos = np.asarray(position, dtype=np.float64)
    k = np.asarray(kappas, dtype=np.float64)
    m, n = pos.shape
    rows = np.arange(m)
    cols, ratios = [], []
    for j in range(n):
        if j == i:
            continue
        xj = pos[:, j]
        seen = np.isfinite(xj)
        if seen.sum() >= 2:
            xj = np.interp(rows, rows[seen], xj[seen])
        d = np.abs((pos[:, i] - xj + 0.5 * length) % length - 0.5 * length)
        cols.append(np.exp(-2.0 * k[j] * d))
        ratios.append(min(k[i], k[j]) / k[j])
    if not cols:
        return np.zeros((m, 0)), 1.0
    return np.column_stack(cols), float(min(ratios))


def fit_windows(
    times: np.ndarray,
    position: np.ndarray,
    windows: list[tuple[np.ndarray, np.ndarray]],
    kappas: np.ndarray,
    length: float,
) -> list[AsymptoticFit]:
    """:func:`fit_asymptotes` of each soliton in its own windows (``windows[i]``: boolean masks
    before and after), with its tail-interaction columns (:func:`tail_columns`) when every kappa
    is known (finite and positive); plain lines otherwise."""
    k = np.asarray(kappas, dtype=np.float64)
    known = k.size == position.shape[1] and bool(np.all(np.isfinite(k) & (k > 0)))
    out = []
    for i, (b, a) in enumerate(windows):
        tb, xb, ta, xa = times[b], position[b, i], times[a], position[a, i]
        if not known:
            out.append(fit_asymptotes(tb, xb, ta, xa))
            continue
        cols, ratio = tail_columns(position, k, i, length)
        out.append(fit_asymptotes(tb, xb, ta, xa, cols[b], cols[a], ratio))
    return out


def _tails(tails: object | None, m: int, where: str) -> np.ndarray:
    """A window's tail columns as ``(m, k)`` (``k = 0`` without)."""
    if tails is None:
        return np.zeros((m, 0))
    cols = np.asarray(tails, dtype=np.float64)
    if cols.ndim == 1:
        cols = cols[:, None]
    if cols.ndim != 2 or cols.shape[0] != m:
        raise ShapeError(
            f"fit_asymptotes: tails_{where} must have one row per frame of the window ({m}), "
            f"got shape {cols.shape}"
        )
    return cols


def _reject_outliers(
    t: np.ndarray, x: np.ndarray, after: np.ndarray, extra: np.ndarray | None
) -> np.ndarray:
    """Mask of points to keep: drop gross outliers (a corrupted frame), at most 20% of them."""
    keep = np.ones(t.size, dtype=bool)
    if t.size < 2 * MIN_FRAMES + 2:
        return keep
    _, resid, _ = _shared_fit(t, x, after, extra)
    mad = 1.4826 * float(np.median(np.abs(resid - np.median(resid))))
    # Below this floor the residuals are round-off and tail bias, not outliers.
    floor = 1e-9 * max(1.0, float(np.ptp(x)))
    bad = np.abs(resid) > max(_OUTLIER_SIGMAS * mad, floor)
    if 0 < bad.sum() <= _MAX_REJECTED_FRACTION * t.size:
        trial = ~bad
        if (trial & ~after).sum() >= MIN_FRAMES and (trial & after).sum() >= MIN_FRAMES:
            keep = trial
    return keep


__all__ = [
    "MIN_BIAS_FRAMES",
    "MIN_FRAMES",
    "TAIL_FLOOR",
    "AsymptoticFit",
    "fit_asymptotes",
    "fit_windows",
    "tail_columns",
]
