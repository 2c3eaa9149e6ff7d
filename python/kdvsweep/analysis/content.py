"""Soliton content of a record: the solitons (and mKdV breathers) that emerge from any initial data.

API
---
``measure_content(frames, times, grid, equation, predicted=None, *, min_amplitude=None,
left_out=None)`` returns a :class:`ContentMeasurement`. ``predicted`` is
:func:`kdvsweep.spectrum.bound_states` of the first frame (or None); ``min_amplitude`` is a
*fraction* of ``max |u|`` of the first frame (default :data:`DEFAULT_MIN_AMPLITUDE`);
``left_out`` maps ``(kind, index)`` of predicted items to the caller's reason for leaving them out
(e.g. the run's sizing says they separate only after the end).

* ``emerging``: one :class:`EmergingSoliton` per soliton or breather found in the late frames,
  solitons largest first, then breathers largest first (also ``.solitons``, ``.breathers``).
  Fields: ``kind`` (``"soliton"`` or ``"breather"``), ``sign`` (polarity, +1 elevation, -1
  depression; 0 for a breather), ``kappa_measured`` (from the fitted shape; a breather's
  ``eta``), ``amplitude`` (peak ``|u|`` of the fitted shape; a breather's ``|alpha| 4 eta``),
  ``speed`` (asymptotic speed of the fitted centre; a breather's envelope speed), each with
  ``*_uncertainty``; ``xi_measured``, ``frequency`` and their uncertainties (breathers: the
  internal frequency in the envelope frame; NaN for solitons), ``t_separated`` (the time from
  which it stands clear of the others and of the radiation), ``track_times`` and
  ``track_centres`` (its fitted centre per frame from ``t_separated`` on, unwrapped: for
  figures), ``frames_late``, and the prediction it was matched to (``predicted_index``,
  ``kappa_predicted``, ``amplitude_predicted``, ``speed_predicted``, ``frequency_predicted``;
  -1 and NaN when unmatched).
* ``n_measured``, ``n_predicted`` (solitons plus breathers), ``found`` (``(kind, index)`` of the
  predicted items found), ``all_found`` (every predicted
  item not left out was matched within :data:`MATCH_TOLERANCE`), ``left_out`` (``(kind, index,
  reason)``: below ``min_amplitude``, moving into the radiation, too slow to leave the data within
  the record, or the caller's reason; a slow one that is found anyway is matched, not left out).
* ``data`` (mass, momentum ``int u^2``, energy of the first frame), ``radiation`` (the same of the
  last frame minus those of the fitted shapes) with ``radiation_uncertainty``,
  ``radiation_predicted`` (the data's minus the predicted shapes': the trace-formula check),
  ``radiation_l2`` (``int r^2 dx`` of the last frame minus the fitted shapes), ``min_amplitude``
  (absolute), ``status`` (``"ok"`` or ``"failed"``) and ``reason``.
* :meth:`ContentMeasurement.table`: one row per emerging item, columns
  :data:`CONTENT_TABLE_COLUMNS`.

Method
------
Late frames first: every extremum of the last frame above the threshold is a candidate; the
equation's own soliton shape (:attr:`kdvsweep.Equation.soliton_form`, with its periodic images) is
fitted to it by least squares with free ``kappa`` and centre over a window of a few widths, and a
candidate whose shape does not match (relative residual above ``SHAPE_TOLERANCE``) is radiation or
a breather. Each soliton is then followed back frame by frame from its fitted speed; it is
*separated* from the first frame after which every fit stays clean and its ``kappa`` stays within
``SEPARATION_TOLERANCE`` (or ``SEPARATION_SIGMAS`` fit errors) of the last. A bump that does not
move at the speed its fitted ``kappa`` implies (``SPEED_TOLERANCE``) is radiation. The *late*
frames are the second half of the separated ones: the amplitude is the mean of their fits, its
uncertainty the spread over them plus the fit's standard error; the speed is the slope of their
centres, its uncertainty the slope's standard error plus the change between the two halves.

Breathers (focusing mKdV, a complex pair ``zeta = +-xi + i eta``): in the canonical
``u_t + 6 u^2 u_x + u_xxx = 0``, ``u = 2 d/dx arctan[(a/b) cos(theta) / cosh(R)]``, ``a = 2 eta``,
``b = 2 xi``, ``theta = b (x - (3 a^2 - b^2) t)``, ``R = a (x - (a^2 - 3 b^2) t)`` (Wadati 1973;
Lamb 1980, from memory); in the envelope frame the phase turns at
``omega = b (v_carrier - v_envelope) = 2 b (a^2 + b^2) = 16 xi (eta^2 + xi^2)``, times ``d`` for a
general equation (``t' = d t``): :func:`kdvsweep.spectrum.breather_speeds`. Breathers are searched
in what the solitons leave of the last frame, started from the residual's energy (``int u^2 = 8 eta
alpha^2``), centroid and dominant wavenumber (``2 xi``); the exact breather is fitted (``eta``,
``xi``, centre, phase) to every separated frame, its envelope speed is the slope of the centre
and its frequency minus the slope of the phase (unwrapped against its prediction).

Radiation invariants use :func:`kdvsweep.simulation.invariants` of the fitted shapes, placed on the
grid; for canonical KdV they are the exact soliton values mass ``4 kappa`` and ``int u^2 =
16 kappa^3 / 3`` (Miura, Gardner & Kruskal 1968).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd
from scipy.optimize import least_squares, linear_sum_assignment

from ..exact import breather_profile as breather_profile  # the one formula
from ..exceptions import ConfigError
from ..model import Equation, Grid, SolitonForm
from ..simulation import INVARIANTS, invariants
from ..spectrum import SolitonContent, breather_speeds
from .peaks import find_peaks
from .tracks import check_record

#: Default ``min_amplitude``: predicted solitons (and breathers) lower than this fraction of
#: ``max |u|`` of the first frame are left out of the comparison, and extrema of the last frame
#: below half of it are not searched.
DEFAULT_MIN_AMPLITUDE = 0.02
#: A fit window reaches this many tail lengths ``1/(2 kappa)`` either side of the centre.
WINDOW_TAILS = 16.0
#: A shape matches when the rms residual of its fit in the window is below this fraction of the
#: rms of the fitted shape there.
SHAPE_TOLERANCE = 0.05
#: A soliton is separated in a frame when its fit matches and its ``kappa`` is within this
#: relative tolerance of its value in the last frame (and its centre where its speed puts it).
SEPARATION_TOLERANCE = 1e-3
#: ... or within this many standard errors of the two fits (radiation passing makes the fitted
#: ``kappa`` fluctuate by about its standard error).
SEPARATION_SIGMAS = 4.0
#: The late frames are the last ``LATE_FRACTION`` of the separated span.
LATE_FRACTION = 0.5
#: Fewest frames a soliton must be followed through to count.
MIN_FRAMES = 3
#: Measured speed within this relative tolerance of the speed its fitted kappa implies (a hump of
#: radiation does not move like a soliton).
SPEED_TOLERANCE = 0.1
#: A measured soliton is the predicted one it is matched to when their kappas differ by less
#: than this relative amount.
MATCH_TOLERANCE = 0.1
#: Most breathers searched for in one record.
MAX_BREATHERS = 8
#: Model evaluations per parameter allowed to one fit (a good start converges in a few).
MAX_EVALUATIONS = 60
#: Lumps of the residual tried as breathers and rejected before the search stops.
MAX_REJECTED = 2


@dataclass(frozen=True)
class EmergingSoliton:
    """One soliton (or mKdV breather) measured in the late frames of a record.

    Attributes
    ----------
    kind
        ``"soliton"`` or ``"breather"``.
    sign
        Polarity: +1 elevation, -1 depression; 0 for a breather.
    kappa_measured, kappa_uncertainty
        ``kappa`` of the fitted shape (a breather's ``eta``, the imaginary part of its ZS
        eigenvalue), mean over the late frames; uncertainty: their spread plus the fit error.
    amplitude, amplitude_uncertainty
        Peak ``|u|`` of the fitted shape (a breather: ``|alpha| 4 eta``, the largest ``|u|`` its
        envelope reaches).
    speed, speed_uncertainty
        Slope of the fitted centre over the late frames (a breather: its envelope); uncertainty:
        the slope's standard error plus the change between the two halves of the late frames.
    t_separated
        The first frame time from which on the soliton stands clear of the others and the
        radiation (fits match, ``kappa`` within :data:`SEPARATION_TOLERANCE` of its last value).
    track_times, track_centres
        Every separated frame's time and fitted centre, unwrapped (continuous across the
        periodic boundary), for figures.
    frames_late
        Number of late frames averaged.
    xi_measured, xi_uncertainty
        Breathers: ``xi``, the real part of the ZS eigenvalue (NaN for solitons).
    frequency, frequency_uncertainty
        Breathers: the internal frequency in the envelope frame (module notes; NaN for solitons).
    predicted_index
        Index of the matched predicted soliton (into ``predicted.kappas``) or breather (into
        ``predicted.breathers``); -1 when unmatched or nothing was predicted.
    kappa_predicted, amplitude_predicted, speed_predicted, frequency_predicted
        The matched prediction (peak ``|u|`` for the amplitude); NaN when unmatched.
    """

    kind: str
    sign: int
    kappa_measured: float
    kappa_uncertainty: float
    amplitude: float
    amplitude_uncertainty: float
    speed: float
    speed_uncertainty: float
    t_separated: float
    track_times: np.ndarray
    track_centres: np.ndarray
    frames_late: int
    xi_measured: float = math.nan
    xi_uncertainty: float = math.nan
    frequency: float = math.nan
    frequency_uncertainty: float = math.nan
    predicted_index: int = -1
    kappa_predicted: float = math.nan
    amplitude_predicted: float = math.nan
    speed_predicted: float = math.nan
    frequency_predicted: float = math.nan


#: Columns of :meth:`ContentMeasurement.table`, in order.
CONTENT_TABLE_COLUMNS = (
    "kind",
    "soliton",
    "sign",
    "kappa_measured",
    "kappa_uncertainty",
    "amplitude",
    "amplitude_uncertainty",
    "speed",
    "speed_uncertainty",
    "xi_measured",
    "xi_uncertainty",
    "frequency",
    "frequency_uncertainty",
    "t_separated",
    "frames_late",
    "predicted_index",
    "kappa_predicted",
    "amplitude_predicted",
    "speed_predicted",
    "frequency_predicted",
)


@dataclass(frozen=True)
class ContentMeasurement:
    """What :func:`measure_content` found in a record.

    Attributes
    ----------
    emerging
        Solitons largest first, then breathers largest first.
    n_predicted
        Predicted solitons plus breathers (0 without a prediction).
    all_found
        Every predicted soliton and breather not left out was matched (False without a
        prediction).
    left_out
        ``(kind, index, reason)`` of each predicted soliton or breather not expected in the record.
    data, radiation, radiation_predicted
        ``mass``, ``momentum`` (``int u^2``) and ``energy`` (:func:`kdvsweep.simulation.invariants`)
        of the first frame; of the last frame minus the fitted solitons' and breathers'; of the
        first frame minus the predicted ones' (empty without a prediction).
    radiation_uncertainty
        Of ``radiation``: each shape's invariants moved by its ``kappa`` (and ``xi``) uncertainty,
        added in quadrature.
    radiation_l2
        ``int r^2 dx`` of the last frame minus the fitted shapes.
    min_amplitude
        The absolute ``|u|`` below which predicted solitons were left out.
    status, reason
        ``"ok"``, or ``"failed"`` with a one-line reason (nothing found).
    predicted
        The prediction given.
    """

    emerging: tuple[EmergingSoliton, ...]
    n_predicted: int
    all_found: bool
    left_out: tuple[tuple[str, int, str], ...]
    data: dict[str, float]
    radiation: dict[str, float]
    radiation_uncertainty: dict[str, float]
    radiation_predicted: dict[str, float]
    radiation_l2: float
    min_amplitude: float
    status: str = "ok"
    reason: str = ""
    predicted: SolitonContent | None = field(default=None, compare=False)

    @property
    def n_measured(self) -> int:
        """Number of solitons and breathers found."""
        return len(self.emerging)

    @property
    def solitons(self) -> tuple[EmergingSoliton, ...]:
        """The emerging solitons (no breathers), largest first."""
        return tuple(e for e in self.emerging if e.kind == "soliton")

    @property
    def breathers(self) -> tuple[EmergingSoliton, ...]:
        """The emerging breathers, largest first."""
        return tuple(e for e in self.emerging if e.kind == "breather")

    @property
    def found(self) -> frozenset[tuple[str, int]]:
        """``(kind, index)`` of the predicted solitons and breathers that were found: matched
        with ``kappa`` within :data:`MATCH_TOLERANCE`."""
        return _found(self.emerging)

    def table(self) -> pd.DataFrame:
        """One row per emerging soliton or breather (columns :data:`CONTENT_TABLE_COLUMNS`;
        ``soliton`` numbers them in the order of :attr:`emerging`)."""
        rows = []
        for i, e in enumerate(self.emerging):
            row = {c: getattr(e, c) for c in CONTENT_TABLE_COLUMNS if c != "soliton"}
            row["soliton"] = i
            rows.append(row)
        return pd.DataFrame(rows, columns=list(CONTENT_TABLE_COLUMNS))


# ----------------------------------------------------------------------------- shapes


def _wrap(z: np.ndarray | float, length: float) -> Any:
    return (np.asarray(z) + 0.5 * length) % length - 0.5 * length


@dataclass
class _Shape:
    """A soliton (params ``kappa, centre``) or breather (``eta, xi, centre, phase``) in a frame."""

    kind: str
    sign: int
    p: np.ndarray

    @property
    def centre(self) -> float:
        return float(self.p[1] if self.kind == "soliton" else self.p[2])

    @property
    def tail(self) -> float:
        """e-folding length of the tail (soliton) or envelope (breather): ``1/(2 kappa)``."""
        return 0.5 / abs(float(self.p[0]))


class _Shapes:
    """Values, fits and rates of the equation's shapes on one grid (periodic images included)."""

    def __init__(self, grid: Grid, form: SolitonForm) -> None:
        self.grid, self.form, self.length = grid, form, grid.length
        self.x = grid.x

    def local(self, kind: str, sign: int, p: np.ndarray, z: np.ndarray) -> np.ndarray:
        """The shape at offsets ``z`` from its centre, with the two nearest periodic images."""
        out = np.zeros_like(z)
        for image in (-self.length, 0.0, self.length):
            if kind == "soliton":
                out += self.form.profile(z + image, float(p[0]), 0.0, sign)
            else:
                out += breather_profile(
                    z + image, float(p[0]), float(p[1]), 0.0, float(p[3]), self.form.alpha
                )
        return out

    def values(self, s: _Shape) -> np.ndarray:
        """The shape on the whole grid."""
        return self.local(s.kind, s.sign, s.p, _wrap(self.x - s.centre, self.length))

    def rates(self, s: _Shape) -> tuple[float, float]:
        """``(d centre / dt, d phase / dt)`` the shape's parameters predict."""
        if s.kind == "soliton":
            return float(self.form.speed(float(s.p[0]))), 0.0
        envelope, _, frequency = breather_speeds(float(s.p[0]), float(s.p[1]), self.form.d)
        return envelope, -frequency

    def fit(
        self, s: _Shape, u: np.ndarray, others: np.ndarray | None
    ) -> tuple[_Shape, np.ndarray, float] | None:
        """Least-squares fit of ``s`` (its params the start) to ``u - others`` in its window.

        Returns the fitted shape, the standard errors of its params and the relative rms residual
        (None when the fit fails).
        """
        half = min(WINDOW_TAILS * s.tail, 0.49 * self.length)
        z = _wrap(self.x - s.centre, self.length)
        sel = np.abs(z) <= half
        target = u[sel] - (others[sel] if others is not None else 0.0)
        zs = z[sel]
        ci = 1 if s.kind == "soliton" else 2
        p0 = s.p.copy()
        p0[ci] = 0.0
        if zs.size <= p0.size + 1:
            return None

        def resid(q: np.ndarray) -> np.ndarray:
            shifted = q.copy()
            shifted[ci] = 0.0
            return self.local(s.kind, s.sign, shifted, zs - q[ci]) - target

        try:
            with np.errstate(all="ignore"):
                res = least_squares(
                    resid,
                    p0,
                    method="lm",
                    xtol=1e-14,
                    ftol=1e-14,
                    gtol=1e-14,
                    max_nfev=MAX_EVALUATIONS * p0.size,
                )
        except (ValueError, np.linalg.LinAlgError):
            return None
        q = res.x
        if not np.all(np.isfinite(q)) or q[0] <= 0:
            return None
        model = res.fun + target
        norm = float(np.sqrt(np.sum(model**2)))
        rel = float(np.sqrt(np.sum(res.fun**2)) / norm) if norm > 0 else math.inf
        dof = max(1, zs.size - q.size)
        try:
            cov = np.linalg.inv(res.jac.T @ res.jac) * float(res.fun @ res.fun) / dof
            se = np.sqrt(np.abs(np.diag(cov)))
        except np.linalg.LinAlgError:
            se = np.full(q.size, np.nan)
        p = q.copy()
        p[ci] = s.centre + q[ci]
        if s.kind == "breather" and p[1] < 0:  # (xi, phase) and (-xi, pi - phase): one breather
            p[1], p[3] = -p[1], np.pi - p[3]
        return _Shape(s.kind, s.sign, p), se, rel


# ----------------------------------------------------------------------------- the last frame


def _find_solitons(u: np.ndarray, shapes: _Shapes, threshold: float) -> list[_Shape]:
    """Solitons of the last frame: extrema above ``threshold`` whose soliton fit matches."""
    form = shapes.form
    peaks = find_peaks(u, shapes.length, threshold, form.polarities)
    found: list[_Shape] = []
    total = np.zeros_like(u)
    for j in np.argsort(-np.abs(peaks.height)):
        x0, h = float(peaks.x[j]), float(peaks.height[j])
        if any(abs(_wrap(x0 - s.centre, shapes.length)) < 4.0 * s.tail for s in found):
            continue
        sign = int(peaks.sign[j]) if len(form.polarities) > 1 else form.sign
        start = _Shape("soliton", sign, np.array([form.kappa_of_height(h), x0]))
        fitted = shapes.fit(start, u, total)
        if fitted is None or fitted[2] > SHAPE_TOLERANCE:
            continue
        found.append(fitted[0])
        total = total + shapes.values(fitted[0])
    return _refit(found, u, shapes)


def _refit(found: list[_Shape], u: np.ndarray, shapes: _Shapes) -> list[_Shape]:
    """One more pass: each shape fitted with all the others subtracted."""
    vals = [shapes.values(s) for s in found]
    out = list(found)
    for i, s in enumerate(found):
        others = sum((v for j, v in enumerate(vals) if j != i), np.zeros_like(u))
        fitted = shapes.fit(s, u, others)
        if fitted is not None and fitted[2] <= SHAPE_TOLERANCE:
            out[i] = fitted[0]
            vals[i] = shapes.values(fitted[0])
    return out


def _find_breathers(
    u: np.ndarray, shapes: _Shapes, threshold: float, solitons: list[_Shape]
) -> list[_Shape]:
    """Breathers of the last frame (focusing mKdV): lumps of the residual fitted by the exact
    breather, started from the residual's energy (``int u^2 = 8 eta alpha^2``), its centroid and its
    dominant wavenumber (``2 xi``)."""
    alpha, length, x, dx = abs(shapes.form.alpha), shapes.length, shapes.x, shapes.grid.dx
    r = u - sum((shapes.values(s) for s in solitons), np.zeros_like(u))
    blocked = np.zeros(u.size, dtype=bool)
    found: list[_Shape] = []
    for _ in range(MAX_BREATHERS + MAX_REJECTED):
        if len(found) >= MAX_BREATHERS:
            break
        mag = np.where(blocked, 0.0, np.abs(r))
        j = int(np.argmax(mag))
        if mag[j] < threshold:
            break
        eta0 = float(mag[j]) / (4.0 * alpha)
        z = _wrap(x - x[j], length)
        sel = np.abs(z) <= min(WINDOW_TAILS * 0.5 / eta0, 0.25 * length)
        w2 = r[sel] ** 2
        eta0 = float(w2.sum() * dx) / (8.0 * alpha**2)
        centre = x[j] + float((z[sel] * w2).sum() / w2.sum())
        spec = np.abs(np.fft.rfft(r[sel]))
        k = 2.0 * np.pi / (sel.sum() * dx) * np.arange(spec.size)
        xi0 = 0.5 * float(k[1 + int(np.argmax(spec[1:]))]) if spec.size > 2 else 0.0
        best = None
        if 4.0 * alpha * eta0 >= threshold and xi0 > 0:
            for phase in np.linspace(0.0, 2.0 * np.pi, 4, endpoint=False):
                start = _Shape("breather", 0, np.array([eta0, xi0, centre, phase]))
                fitted = shapes.fit(start, r, None)
                if fitted is not None and (best is None or fitted[2] < best[2]):
                    best = fitted
        if best is None or best[2] > SHAPE_TOLERANCE:
            blocked |= np.abs(_wrap(x - x[j], length)) <= 2.0 * dx + 0.25 / eta0
            continue
        found.append(best[0])
        values = shapes.values(best[0])
        r = r - values
        blocked |= np.abs(_wrap(x - best[0].centre, length)) <= WINDOW_TAILS * best[0].tail
    return found


# ----------------------------------------------------------------------------- following back


@dataclass
class _Followed:
    """A shape's fits in the frames where it is separated, oldest first."""

    shape: _Shape
    frames: list[int]
    params: list[np.ndarray]
    errors: list[np.ndarray]


def _follow(
    shapes_found: list[_Shape], u: np.ndarray, t: np.ndarray, shapes: _Shapes
) -> list[_Followed]:
    """Follow every shape of the last frame back until it no longer stands clear."""
    m = t.size
    cur = list(shapes_found)
    vals0 = [shapes.values(s) for s in cur]
    out: list[_Followed] = []
    for i, s in enumerate(cur):
        others = sum((v for j, v in enumerate(vals0) if j != i), np.zeros(u.shape[1]))
        fitted = shapes.fit(s, u[-1], others)
        se = fitted[1] if fitted is not None else np.zeros_like(s.p)
        out.append(_Followed(s, [m - 1], [s.p.copy()], [se]))
    last = [s.p.copy() for s in shapes_found]
    last_se = [f.errors[0] for f in out]
    active = list(range(len(cur)))
    for f in range(m - 2, -1, -1):
        if not active:
            break
        dt = float(t[f + 1] - t[f])
        for i in active:
            speed, spin = shapes.rates(cur[i])
            p = cur[i].p.copy()
            ci = 1 if cur[i].kind == "soliton" else 2
            p[ci] -= speed * dt
            if cur[i].kind == "breather":
                p[3] -= spin * dt
            cur[i] = _Shape(cur[i].kind, cur[i].sign, p)
        vals = {i: shapes.values(cur[i]) for i in active}
        still = []
        for i in active:
            others = sum((v for j, v in vals.items() if j != i), np.zeros(u.shape[1]))
            fitted = shapes.fit(cur[i], u[f], others)
            if fitted is None or not _clean(cur[i], fitted, last[i], last_se[i]):
                continue
            s, se, _ = fitted
            if s.kind == "breather":  # keep the phase continuous with its prediction
                s.p[3] = cur[i].p[3] + float(_wrap(s.p[3] - cur[i].p[3], 2.0 * np.pi))
            cur[i] = s
            vals[i] = shapes.values(s)
            out[i].frames.insert(0, f)
            out[i].params.insert(0, s.p.copy())
            out[i].errors.insert(0, se)
            still.append(i)
        active = still
    return out


def _clean(
    pred: _Shape, fitted: tuple[_Shape, np.ndarray, float], last: np.ndarray, last_se: np.ndarray
) -> bool:
    """A frame where the shape stands clear: its fit matches, sits where its speed puts it, and
    its ``kappa`` (and a breather's ``xi``) agrees with the last frame's to within
    :data:`SEPARATION_TOLERANCE` or ``SEPARATION_SIGMAS`` standard errors of the two fits."""
    s, se, rel = fitted
    if rel > SHAPE_TOLERANCE:
        return False
    if abs(s.centre - pred.centre) > 2.0 * pred.tail:
        return False
    amps = [0] if s.kind == "soliton" else [0, 1]
    return all(
        abs(s.p[k] - last[k])
        <= max(
            SEPARATION_TOLERANCE * abs(last[k]), SEPARATION_SIGMAS * math.hypot(se[k], last_se[k])
        )
        for k in amps
    )


def _slope(t: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    """Least-squares slope of ``y(t)`` and its uncertainty: standard error plus the change between
    the two halves of the points."""
    if t.size < 2:
        return math.nan, math.nan
    tc = t - t.mean()
    slope = float(tc @ (y - y.mean()) / (tc @ tc))
    resid = y - y.mean() - slope * tc
    se = float(np.sqrt((resid @ resid) / max(1, t.size - 2) / (tc @ tc))) if t.size > 2 else 0.0
    drift = 0.0
    h = t.size // 2
    if h >= 2:
        a = np.polyfit(t[:h] - t[:h].mean(), y[:h], 1)[0]
        b = np.polyfit(t[-h:] - t[-h:].mean(), y[-h:], 1)[0]
        drift = 0.5 * abs(float(a - b))
    return slope, math.hypot(se, drift)


def _mean(values: np.ndarray, errors: np.ndarray) -> tuple[float, float]:
    """Mean and uncertainty: the spread over the frames plus the rms fit error."""
    spread = float(np.std(values, ddof=1)) if values.size > 1 else 0.0
    fit = float(np.sqrt(np.mean(errors**2))) if errors.size else 0.0
    return float(np.mean(values)), math.hypot(spread, fit)


def _measure(fol: _Followed, t: np.ndarray, form: SolitonForm) -> EmergingSoliton | None:
    """Late-frame averages of one followed shape (None when followed through too few frames)."""
    frames = np.array(fol.frames)
    if frames.size < MIN_FRAMES:
        return None
    params, errors = np.array(fol.params), np.array(fol.errors)
    tt = t[frames]
    t_sep = float(tt[0])
    late = tt >= t_sep + LATE_FRACTION * (float(tt[-1]) - t_sep)
    if late.sum() < MIN_FRAMES:
        late = np.zeros(frames.size, dtype=bool)
        late[-MIN_FRAMES:] = True
    kind = fol.shape.kind
    ci = 1 if kind == "soliton" else 2
    kappa, kappa_u = _mean(params[late, 0], errors[late, 0])
    speed, speed_u = _slope(tt[late], params[late, ci])
    if kind == "soliton":
        sign = fol.shape.sign
        ks = params[late, 0]
        amps = np.asarray(form.amplitude(ks, sign))
        step = 1e-6 * ks  # d amplitude / d kappa by central differences (every family)
        slope = (form.amplitude(ks + step, sign) - form.amplitude(ks - step, sign)) / (2.0 * step)
        damp = np.abs(slope) * errors[late, 0]
        amplitude, amplitude_u = _mean(amps, damp)
        expected = float(form.speed(kappa))
        if not abs(speed / expected - 1.0) <= SPEED_TOLERANCE:
            return None  # a hump of radiation: it does not move like a soliton of its height
        xi = xi_u = spin = spin_u = math.nan
    else:
        amplitude = form.breather_amplitude(kappa)
        amplitude_u = form.breather_amplitude(kappa_u)
        xi, xi_u = _mean(params[late, 1], errors[late, 1])
        spin, spin_u = _slope(tt[late], params[late, 3])
    return EmergingSoliton(
        kind=kind,
        sign=fol.shape.sign if kind == "soliton" else 0,
        kappa_measured=kappa,
        kappa_uncertainty=kappa_u,
        amplitude=float(amplitude),
        amplitude_uncertainty=float(amplitude_u),
        speed=speed,
        speed_uncertainty=speed_u,
        t_separated=t_sep,
        track_times=tt,
        track_centres=params[:, ci].copy(),
        frames_late=int(late.sum()),
        xi_measured=xi,
        xi_uncertainty=xi_u,
        frequency=-spin,
        frequency_uncertainty=spin_u,
    )


# ----------------------------------------------------------------------------- invariants, matching


def _invariants_of(shapes: _Shapes, shape: _Shape, equation: Equation) -> dict[str, float]:
    """Invariants of one shape alone, centred on the grid (they do not depend on its phase)."""
    centred = _Shape(shape.kind, shape.sign, shape.p.copy())
    centred.p[1 if shape.kind == "soliton" else 2] = 0.0
    return invariants(shapes.values(centred), shapes.grid, equation)


def _radiation_uncertainty(
    shapes: _Shapes, kept: list[_Shape], emerging: list[EmergingSoliton], equation: Equation
) -> dict[str, float]:
    """Quadrature sum over the shapes of their invariants' change under their uncertainty."""
    total = dict.fromkeys(INVARIANTS, 0.0)
    for s, e in zip(kept, emerging, strict=True):
        moves = [(0, e.kappa_uncertainty)]
        if s.kind == "breather":
            moves.append((1, e.xi_uncertainty))
        base = _invariants_of(shapes, s, equation)
        for k, du in moves:
            if not (math.isfinite(du) and du > 0):
                continue
            moved = _Shape(s.kind, s.sign, s.p.copy())
            moved.p[k] += du
            shifted = _invariants_of(shapes, moved, equation)
            for name in INVARIANTS:
                total[name] += (shifted[name] - base[name]) ** 2
    return {name: math.sqrt(v) for name, v in total.items()}


def _minus(total: Mapping[str, float], parts: list[dict[str, float]]) -> dict[str, float]:
    return {k: float(total[k] - sum(p[k] for p in parts)) for k in INVARIANTS}


def _predicted_shapes(
    predicted: SolitonContent, form: SolitonForm
) -> list[tuple[str, int, _Shape]]:
    """The predicted solitons and breathers as shapes (kind, index into the prediction, shape)."""
    out = [
        ("soliton", i, _Shape("soliton", int(predicted.polarity[i]), np.array([k, 0.0])))
        for i, k in enumerate(predicted.kappas)
    ]
    out += [
        ("breather", j, _Shape("breather", 0, np.array([b.kappa, b.xi, 0.0, 0.0])))
        for j, b in enumerate(predicted.breathers)
    ]
    return out


def _left_out(
    predicted: SolitonContent,
    form: SolitonForm,
    u0: np.ndarray,
    grid: Grid,
    duration: float,
    min_amplitude: float,
    given: Mapping[tuple[str, int], str],
) -> dict[tuple[str, int], str]:
    """Predicted solitons/breathers not expected in the record, with the reason: the caller's,
    below ``min_amplitude``, or too slow to leave the data (``WINDOW_TAILS`` tail lengths beyond
    the data's half extent at ``DEFAULT_MIN_AMPLITUDE`` of its peak) within the record."""
    out = dict(given)
    mag = np.abs(u0)
    inside = grid.x[mag > DEFAULT_MIN_AMPLITUDE * float(mag.max())] if mag.max() > 0 else grid.x[:0]
    half = 0.5 * float(np.ptp(inside)) if inside.size else 0.0
    items: list[tuple[str, int, float, float, float]] = [
        ("soliton", i, float(k), abs(float(a)), float(c))
        for i, (k, a, c) in enumerate(
            zip(predicted.kappas, predicted.amplitudes, predicted.speeds, strict=True)
        )
    ]
    items += [
        ("breather", j, b.kappa, form.breather_amplitude(b.kappa), b.envelope_speed)
        for j, b in enumerate(predicted.breathers)
    ]
    for kind, i, kappa, amp, speed in items:
        if (kind, i) in out:
            continue
        if amp < min_amplitude:  # the same test as _is_small
            out[kind, i] = f"amplitude {amp:.3g} below min_amplitude ({min_amplitude:.3g})"
            continue
        forward = speed * math.copysign(1.0, form.d)
        reach = half + WINDOW_TAILS * 0.5 / kappa
        if not forward > 0:
            out[kind, i] = f"speed {speed:.3g}: it stays in the radiation"
        elif forward * duration < reach:
            out[kind, i] = (
                f"moves {forward * duration:.3g} in the record, needs {reach:.3g} to leave the "
                f"data (an end of at least t = {reach / forward:.4g} after the first frame)"
            )
    return out


def _found(emerging: Sequence[EmergingSoliton]) -> frozenset[tuple[str, int]]:
    return frozenset(
        (e.kind, e.predicted_index)
        for e in emerging
        if e.predicted_index >= 0
        and abs(e.kappa_measured / e.kappa_predicted - 1.0) < MATCH_TOLERANCE
    )


def _amplitude_of(predicted: SolitonContent, form: SolitonForm, key: tuple[str, int]) -> float:
    kind, i = key
    if kind == "soliton":
        return abs(float(predicted.amplitudes[i]))
    return form.breather_amplitude(predicted.breathers[i].kappa)


def _is_small(
    predicted: SolitonContent, form: SolitonForm, key: tuple[str, int], floor: float
) -> bool:
    return _amplitude_of(predicted, form, key) < floor


def _match(
    found: list[EmergingSoliton],
    predicted: SolitonContent,
    form: SolitonForm,
    exclude: set[tuple[str, int]],
) -> list[EmergingSoliton]:
    """Pair measured and predicted solitons of each kind and polarity, largest to largest
    (an assignment on ``|ln(kappa_measured / kappa_predicted)|``, which keeps the rank order)."""
    out = list(found)
    groups: dict[tuple[str, int], list[int]] = {}
    for i, e in enumerate(found):
        groups.setdefault((e.kind, e.sign), []).append(i)
    for (kind, sign), members in groups.items():
        if kind == "soliton":
            cand = [
                i
                for i in range(len(predicted))
                if int(predicted.polarity[i]) == sign and (kind, i) not in exclude
            ]
            kappas = [float(predicted.kappas[i]) for i in cand]
        else:
            cand = [i for i in range(len(predicted.breathers)) if (kind, i) not in exclude]
            kappas = [predicted.breathers[i].kappa for i in cand]
        if not cand:
            continue
        cost = np.array(
            [[abs(math.log(found[i].kappa_measured / k)) for k in kappas] for i in members]
        )
        rows, cols = linear_sum_assignment(cost)
        for r, c in zip(rows, cols, strict=True):
            i, j = members[r], cand[c]
            if kind == "soliton":
                pred = {
                    "kappa_predicted": float(predicted.kappas[j]),
                    "amplitude_predicted": abs(float(predicted.amplitudes[j])),
                    "speed_predicted": float(predicted.speeds[j]),
                }
            else:
                b = predicted.breathers[j]
                pred = {
                    "kappa_predicted": b.kappa,
                    "amplitude_predicted": form.breather_amplitude(b.kappa),
                    "speed_predicted": b.envelope_speed,
                    "frequency_predicted": b.frequency,
                }
            out[i] = replace(found[i], predicted_index=j, **pred)
    return out


# ----------------------------------------------------------------------------- the measurement


def measure_content(
    frames: object,
    times: object,
    grid: Grid,
    equation: str | Equation,
    predicted: SolitonContent | None = None,
    *,
    min_amplitude: float | None = None,
    left_out: Mapping[tuple[str, int], str] | None = None,
) -> ContentMeasurement:
    """The solitons and breathers that emerge in a record, fitted and matched to ``predicted``.

    Parameters
    ----------
    frames, times
        The record: shape ``(m, grid.n)`` and ``(m,)``, times increasing; frame 0 is the data.
    grid
        The grid of the frames.
    equation
        Preset name or :class:`~kdvsweep.Equation` with a soliton form (KdV, focusing mKdV).
    predicted
        :func:`kdvsweep.spectrum.bound_states` of the first frame, or None (no matching, no
        predicted radiation).
    min_amplitude
        Fraction of ``max |u|`` of the first frame (default :data:`DEFAULT_MIN_AMPLITUDE`):
        predicted solitons lower than that are left out, and extrema of the last frame lower than
        half of it are not searched.
    left_out
        Reasons, by ``(kind, index)`` into the prediction, for predicted solitons or breathers the
        caller knows will not separate within the record (e.g. from the run's sizing).

    Returns
    -------
    ContentMeasurement
        ``status`` ``"failed"`` with the reason when nothing could be followed (no exception).

    Raises
    ------
    ConfigError
        Bad ``min_amplitude``, an equation without a soliton form, a non-Grid ``grid``.
    ShapeError
        Frames and times of mismatched shapes.
    """
    if not isinstance(grid, Grid):
        raise ConfigError(
            f"measure_content: grid must be a kdvsweep.Grid, got {type(grid).__name__}"
        )
    eq = Equation.coerce(equation, "measure_content")
    form = eq.soliton_form
    u, t = check_record(frames, times, grid.n)
    fraction = DEFAULT_MIN_AMPLITUDE if min_amplitude is None else min_amplitude
    if isinstance(fraction, bool) or not (
        isinstance(fraction, int | float) and math.isfinite(fraction) and 0 < fraction < 1
    ):
        raise ConfigError(
            f"measure_content: min_amplitude must be a fraction of max |u0| in (0, 1), got "
            f"{min_amplitude!r}"
        )
    if predicted is not None and not isinstance(predicted, SolitonContent):
        raise ConfigError(
            "measure_content: predicted must be the SolitonContent of "
            f"kdvsweep.spectrum.bound_states, got {type(predicted).__name__}"
        )
    shapes = _Shapes(grid, form)
    peak = float(np.abs(u[0]).max())
    floor = fraction * peak
    last = u[-1]
    sol = _find_solitons(last, shapes, 0.5 * floor)
    bre = _find_breathers(last, shapes, floor, sol) if form.family == "mkdv" else []
    followed = _follow(sol + bre, u, t, shapes)
    measured = [_measure(f, t, form) for f in followed]
    keep = [i for i, e in enumerate(measured) if e is not None]
    emerging = [e for e in measured if e is not None]
    kept_shapes = [followed[i].shape for i in keep]
    order = sorted(
        range(len(emerging)),
        key=lambda i: (emerging[i].kind != "soliton", -emerging[i].kappa_measured),
    )
    emerging = [emerging[i] for i in order]
    kept_shapes = [kept_shapes[i] for i in order]
    data = invariants(u[0], grid, eq)
    final = invariants(last, grid, eq)
    radiation = _minus(final, [_invariants_of(shapes, s, eq) for s in kept_shapes])
    radiation_u = _radiation_uncertainty(shapes, kept_shapes, emerging, eq)
    residual = last - sum((shapes.values(s) for s in kept_shapes), np.zeros(grid.n))
    radiation_l2 = float(np.sum(residual**2) * grid.dx)
    reasons: dict[tuple[str, int], str] = {}
    radiation_predicted: dict[str, float] = {}
    n_predicted = 0
    all_found = False
    if predicted is not None:
        n_predicted = len(predicted) + len(predicted.breathers)
        reasons = _left_out(predicted, form, u[0], grid, float(t[-1] - t[0]), floor, left_out or {})
        # Below min_amplitude: never matched. Too slow by the estimate but found anyway: matched.
        small = {key for key in reasons if _is_small(predicted, form, key, floor)}
        emerging = _match(emerging, predicted, form, small)
        found = _found(emerging)
        reasons = {k: r for k, r in reasons.items() if k not in found}
        expected = [
            (kind, i)
            for kind, i, _ in _predicted_shapes(predicted, form)
            if (kind, i) not in reasons
        ]
        all_found = all(key in found for key in expected)
        radiation_predicted = _minus(
            data, [_invariants_of(shapes, s, eq) for _, _, s in _predicted_shapes(predicted, form)]
        )
    status, reason = "ok", ""
    if not emerging:
        status = "failed"
        reason = (
            f"no soliton found in the last frame (extrema above {0.5 * floor:.3g} whose shape "
            "matches and which stay clear for at least "
            f"{MIN_FRAMES} frames)"
        )
    return ContentMeasurement(
        emerging=tuple(emerging),
        n_predicted=n_predicted,
        all_found=all_found,
        left_out=tuple((kind, i, r) for (kind, i), r in sorted(reasons.items())),
        data=data,
        radiation=radiation,
        radiation_uncertainty=radiation_u,
        radiation_predicted=radiation_predicted,
        radiation_l2=radiation_l2,
        min_amplitude=floor,
        status=status,
        reason=reason,
        predicted=predicted,
    )
