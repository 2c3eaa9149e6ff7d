"""Execute one run of a sweep: build the model, step it, measure it, and return plain rows.

This is the code a dask worker runs. It never writes files: everything comes back to the client
process as a :class:`RunResult` (plain dicts and at most one array), and the client's store is the
only writer. A run that goes unstable is not an exception here but data: ``status = "failed"`` with
the reason, so one bad corner of a parameter space does not stop a sweep.
"""

from __future__ import annotations

import math
import time
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from .. import analysis, initial, theory
from .. import units as physunits
from ..analysis.tracks import ReferenceTrack
from ..columns import FAILURE_KINDS, TIMING_COLUMNS, has_content
from ..exceptions import ConfigError, NumericalError, TimeLimitError
from ..model import Equation, Grid
from ..simulation import ADAPTIVE, INVARIANTS, Simulation, dt_limit, invariants
from ..spectrum import SolitonContent
from . import accuracy as acc
from . import sizing
from .references import ReferenceResult, tracks_for
from .specs import RunSpec


@dataclass
class RunResult:
    """What one run sends back to the client.

    Attributes
    ----------
    run_row
        One row of the runs table.
    soliton_rows
        The rows of the solitons table for this run (may be empty).
    frames
        Sub-sampled frames to store, shape ``(m, n)``, or ``None``.
    frame_times
        The times of ``frames``, or ``None``.
    """

    run_row: dict[str, Any]
    soliton_rows: list[dict[str, Any]]
    frames: np.ndarray | None = None
    frame_times: np.ndarray | None = None

    @property
    def run_id(self) -> int:
        """The run's id."""
        return int(self.run_row["run_id"])

    @property
    def ok(self) -> bool:
        """True when the run completed."""
        return self.run_row["status"] == "ok"


def base_row(spec: RunSpec) -> dict[str, Any]:
    """The parts of a run's row known before it runs: id, parameters, model description.

    A swept parameter named like a model column (``equation``, ``n``, ``dt``...) keeps its value
    in that column.
    """
    model = spec.model
    descr: dict[str, Any] = {
        **model.equation.columns(),
        "n": model.grid.n,
        "length": model.grid.length,
        "scheme": model.scheme,
        "dt": float(model.dt),
        "tol": math.nan if model.tol is None else float(model.tol),
        "t_end": float(spec.run.t_end),
    }
    row: dict[str, Any] = {"run_id": int(spec.run_id)}
    row.update(spec.params)
    row.update({"status": "ok", "reason": "", "failure": ""})
    row.update({k: v for k, v in descr.items() if k not in spec.params})
    row.update(
        {
            "steps": 0,
            "rejected": 0,
            "wall_time": 0.0,
            "cpu_time": 0.0,
            "step_time": 0.0,
            "analysis_time": 0.0,
            "mass_drift": math.nan,
            "momentum_drift": math.nan,
            "energy_drift": math.nan,
            "mass_residual": math.nan,
            "momentum_residual": math.nan,
            "energy_residual": math.nan,
            "balance_quadrature": math.nan,
            "max_abs_u": math.nan,
            "frames_stored": 0,
        }
    )
    return row


#: An invariant whose start value is below this fraction of its natural scale (mass: ``int |u|``;
#: momentum: ``int u^2``; energy: the integral of the absolute values of its terms) is at
#: round-off size (the mass of zero-mean data is ~1e-16 of ``int |u|``): its drift and residual
#: are then reported absolute, not divided by a round-off number (common practice, no source).
ROUND_OFF_FRACTION = 1e-8

#: Frames whose spectral derivatives are evaluated together in :func:`balance` (bounds memory).
_BALANCE_CHUNK = 64


@dataclass(frozen=True)
class Balance:
    """How well a run kept the balance laws of its invariants (see :func:`balance`).

    Attributes
    ----------
    drift
        ``|X(T) - X(0)| / scale`` for X = mass, momentum, energy: the raw change (the physical
        decay too, under damping or viscosity).
    residual
        ``|X(T) - X(0) - int_0^T R_X dt| / scale``: what the balance law does not explain (equal
        to ``drift`` for conservative equations).
    quadrature
        Estimated error of the time quadrature in the momentum and energy residuals (the larger,
        same ``scale``); 0 for conservative equations, NaN with fewer than three frames.
    absolute
        The invariants reported absolute (started at round-off size).
    """

    drift: dict[str, float]
    residual: dict[str, float]
    quadrature: float
    absolute: frozenset[str]


def _trapezoid(times: np.ndarray, values: np.ndarray, stride: int) -> float:
    """Trapezoid rule over every ``stride``-th sample, the last one always included."""
    idx = list(range(0, len(times), stride))
    if idx[-1] != len(times) - 1:
        idx.append(len(times) - 1)
    t, y = times[idx], values[idx]
    return float(np.sum(0.5 * (y[1:] + y[:-1]) * np.diff(t)))


def _time_integral(times: np.ndarray, values: np.ndarray) -> tuple[float, float]:
    """``int values dt`` over the frames and an estimate of its error.

    Trapezoid sums over every frame (``T1``), every 2nd (``T2``) and every 4th (``T4``);
    Richardson's extrapolation ``S = T + (T - T_2h) / 3`` (Simpson's rule on equal steps) gives
    the value, and the whole difference ``|S1 - S2|`` from the same rule at half the resolution
    its error estimate (common practice, no source; not divided by Richardson's 15, which
    assumes the asymptotic order: frames far apart are not in that range, and the estimate stays
    cautious). With 3 or 4 frames: ``|T1 - T2|``; with 2 frames the value is the trapezoid and
    the estimate NaN.
    """
    t1 = _trapezoid(times, values, 1)
    if len(times) < 3:
        return t1, math.nan
    t2 = _trapezoid(times, values, 2)
    s1 = t1 + (t1 - t2) / 3.0
    if len(times) < 5:
        return s1, abs(t1 - t2)
    t4 = _trapezoid(times, values, 4)
    s2 = t2 + (t2 - t4) / 3.0
    return s1, abs(s1 - s2)


def _rates(frames: np.ndarray, grid: Grid, equation: Equation) -> tuple[np.ndarray, np.ndarray]:
    """The forcing terms of the momentum and energy balances at each frame (see :func:`balance`):
    ``-2 g int u^2 - 2 v int u_x^2`` and ``int (dH/du) (-g u + v u_xx)``, spectrally."""
    e, k = equation, grid.k
    ik = 1j * k
    ik[-1] = 0.0  # the Nyquist mode of an odd derivative is zero (real data)
    mom, ene = np.empty(len(frames)), np.empty(len(frames))
    for lo in range(0, len(frames), _BALANCE_CHUNK):
        u = np.asarray(frames[lo : lo + _BALANCE_CHUNK], dtype=np.float64)
        spec = np.fft.rfft(u, axis=-1)
        ux = np.fft.irfft(ik * spec, grid.n, axis=-1)
        uxx = np.fft.irfft(-(k**2) * spec, grid.n, axis=-1)
        uxxxx = np.fft.irfft(k**4 * spec, grid.n, axis=-1)
        dh = e.a * u**2 / 2 + e.b * u**3 / 3 + e.d * uxx + e.f * uxxxx
        forcing = -e.g * u + e.v * uxx
        mom[lo : lo + len(u)] = grid.dx * np.sum(-2 * e.g * u**2 - 2 * e.v * ux**2, axis=-1)
        ene[lo : lo + len(u)] = grid.dx * np.sum(dh * forcing, axis=-1)
    return mom, ene


def _natural_scales(u0: np.ndarray, grid: Grid, equation: Equation) -> dict[str, float]:
    """The size each invariant's integrand has at ``u0``, whatever its cancellations."""
    e, k = equation, grid.k
    ik = 1j * k
    ik[-1] = 0.0
    spec = np.fft.rfft(u0)
    ux = np.fft.irfft(ik * spec, grid.n)
    uxx = np.fft.irfft(-(k**2) * spec, grid.n)
    energy = (
        abs(e.a) * np.abs(u0) ** 3 / 6
        + abs(e.b) * u0**4 / 12
        + abs(e.d) * ux**2 / 2
        + abs(e.f) * uxx**2 / 2
    )
    return {
        "mass": grid.dx * float(np.sum(np.abs(u0))),
        "momentum": grid.dx * float(np.sum(u0**2)),
        "energy": grid.dx * float(np.sum(energy)),
    }


def balance(frames: np.ndarray, times: np.ndarray, grid: Grid, equation: Equation) -> Balance:
    """The residuals of the balance laws of mass, momentum and energy over a run's frames.

    The model ``u_t = -(a u^2/2 + b u^3/3)_x - d u_xxx - f u_xxxxx - g u + v u_xx`` on a periodic
    box. Integrating it over the period (every ``x``-derivative of a periodic function integrates
    to zero; common practice, no source):

    - against 1: ``dM/dt = -g M`` for ``M = int u`` (the flux and dispersive terms are
      derivatives; ``int u_xx = 0``), so ``M(T) = M(0) exp(-g T)`` exactly;
    - against ``2u``: ``d/dt int u^2 = -2 g int u^2 - 2 v int u_x^2``, because
      ``int u F(u)_x = 0`` for any flux ``F`` (``u F'(u) u_x`` is the derivative of a function
      of ``u``), ``int u u_xxx = 0`` and ``int u u_xxxxx = 0`` by parts, and
      ``int u u_xx = -int u_x^2``;
    - against ``dH/du = a u^2/2 + b u^3/3 + d u_xx + f u_xxxx``, the variational derivative of
      ``H = int (a u^3/6 + b u^4/12 - d u_x^2/2 + f u_xx^2/2)`` (the Hamiltonian of the
      conservative part; :func:`kdvsweep.simulation.invariants`): the conservative part is
      ``u_t = -(dH/du)_x``, and ``int (dH/du) (dH/du)_x = 0``, so
      ``dH/dt = int (dH/du) (-g u + v u_xx)``.

    For ``g = v = 0`` these are the first three conserved densities of KdV (Miura, Gardner &
    Kruskal 1968). The right-hand sides are evaluated spectrally on the frames and integrated in
    time (:func:`_time_integral`); the mass uses the exact law.

    Parameters
    ----------
    frames, times
        The recorded states, shape ``(m, n)``, at ``times`` (``times[0]`` the start, the last
        the end of the run).
    grid, equation
        The run's grid and equation.

    Returns
    -------
    Balance
        Drifts, residuals and the quadrature error, each divided by the invariant's start value,
        or absolute for an invariant that starts below :data:`ROUND_OFF_FRACTION` of its natural
        scale.
    """
    times = np.asarray(times, dtype=np.float64)
    first = invariants(frames[0], grid, equation)
    last = invariants(frames[-1], grid, equation)
    natural = _natural_scales(np.asarray(frames[0], dtype=np.float64), grid, equation)
    absolute = {
        key
        for key in INVARIANTS
        if first[key] == 0.0 or abs(first[key]) < ROUND_OFF_FRACTION * natural[key]
    }
    scale = {key: 1.0 if key in absolute else abs(first[key]) for key in INVARIANTS}
    change = {key: last[key] - first[key] for key in INVARIANTS}
    explained = dict.fromkeys(INVARIANTS, 0.0)
    quadrature = 0.0
    span = float(times[-1] - times[0])
    if not equation.conservative:
        explained["mass"] = first["mass"] * math.expm1(-equation.g * span)
        mom, ene = _rates(frames, grid, equation)
        explained["momentum"], err_m = _time_integral(times, mom)
        explained["energy"], err_e = _time_integral(times, ene)
        errors = (err_m / scale["momentum"], err_e / scale["energy"])
        quadrature = math.nan if any(map(math.isnan, errors)) else max(errors)
    return Balance(
        drift={key: abs(change[key]) / scale[key] for key in INVARIANTS},
        residual={key: abs(change[key] - explained[key]) / scale[key] for key in INVARIANTS},
        quadrature=float(quadrature),
        absolute=frozenset(absolute),
    )


class DriftError(NumericalError):
    """The momentum balance residual of a run exceeded ``run.drift_limit``."""


#: content_status of a run of the exact fifth-order wave: it is steady, and the content analysis
#: fits the unperturbed equation's soliton shapes, which are not this wave's.
SECH4_NOT_MEASURED = (
    "not measured: one steady sech^4 wave (no soliton shape of this equation to fit)"
)


def failure_kind(exc: BaseException, stage: str) -> str:
    """The kind of a run's failure (one of :data:`kdvsweep.columns.FAILURE_KINDS`).

    Parameters
    ----------
    exc
        What the run raised.
    stage
        ``"setup"``, ``"stepping"`` or ``"analysis"``: where it was raised.
    """
    if isinstance(exc, MemoryError):
        kind = "out of memory"
    elif isinstance(exc, TimeLimitError):
        kind = "time limit"
    elif isinstance(exc, DriftError):
        kind = "drift"
    elif stage == "analysis":
        kind = "analysis"
    elif stage == "stepping" and isinstance(exc, NumericalError):
        kind = "blow-up"  # the core's blow-up bound, or a state no longer finite
    else:
        kind = "other"
    assert kind in FAILURE_KINDS
    return kind


def _input_soliton_rows(spec: RunSpec, equation: Equation) -> list[dict[str, Any]]:
    """Rows of the solitons table from the input solitons alone (no measurement)."""
    solitons = initial.input_solitons(spec.initial)
    kappas = [s["kappa"] for s in solitons]
    predicted = [math.nan] * len(solitons)
    if len(solitons) >= 2 and len(set(kappas)) == len(kappas):  # equal kappas never collide
        shifts = theory.phase_shifts(kappas, equation=equation)
        predicted = [float(v) for v in np.asarray(shifts, dtype=float)]
    return [
        {**s, "run_id": int(spec.run_id), "shift_predicted": pred}
        for s, pred in zip(solitons, predicted, strict=True)
    ]


def _collision_rows(
    spec: RunSpec,
    frames: np.ndarray,
    times: np.ndarray,
    grid: Grid,
    equation: Equation,
    references: list[ReferenceTrack] | None = None,
    restart: Callable[[np.ndarray, float, np.ndarray], np.ndarray] | None = None,
) -> tuple[list[dict[str, Any]], dict[str, Any]]:
    """Rows of the solitons table, measured by the collision analysis (``restart``: steps a copy
    of the run from a stored frame, for a pair's closest approach; see :class:`_Restarter`).

    Returns the rows and extra columns for the run's row: the analysis summary, and a ``reason``
    note when the analysis could not measure the shifts. The input solitons are stored then and
    the run stays "ok": the simulation itself succeeded.
    """
    solitons = initial.input_solitons(spec.initial)
    if not solitons:
        return [], {}
    kappas = [s["kappa"] for s in solitons]
    try:
        found = analysis.analyse_run(
            frames,
            times,
            grid,
            equation,
            kappas,
            references=references,
            restart=restart,
            accuracy=spec.run.accuracy,
        )
    except Exception as exc:  # an analysis error is recorded; the run's numbers are still valid
        reason = f"analysis: {type(exc).__name__}: {exc}"
        rows = _input_soliton_rows(spec, equation)
        return rows, {"reason": _join(reason, _end_values(rows, None, times, equation))}
    extra = {
        str(k): _plain(v)
        for k, v in found.summary.items()
        if v is None or isinstance(v, str | int | float | bool)
    }
    if not found.ok:
        reason = f"analysis {found.summary.get('analysis_status')}: "
        reason += str(found.summary.get("analysis_reason", ""))
        rows = _input_soliton_rows(spec, equation)
        note = _end_values(rows, found.tracks, times, equation)
        return rows, {**extra, "reason": _join(reason, note)}
    rows = []
    for rec in found.records():  # the table's rows without building the table (pandas)
        row: dict[str, Any] = {"run_id": int(spec.run_id)}
        row.update({str(k): v for k, v in rec.items() if k != "run_id"})
        rows.append(row)
    if len(rows) == len(solitons):  # numbered left to right at the start, as the input
        for row, given in zip(rows, solitons, strict=True):
            row["x0"] = given["x0"]
    note = _end_values(rows, found.tracks, times, equation)
    if note:
        extra["reason"] = _join(str(extra.get("reason") or ""), note)
    return rows, extra


#: Share of the record's frames (at least 3) over which the end-of-run values are fitted.
END_WINDOW = 0.1


def _join(*notes: str) -> str:
    """Non-empty one-line notes joined by ``"; "``."""
    return "; ".join(n for n in notes if n)


def _end_values(
    rows: list[dict[str, Any]], tracks: Any, times: np.ndarray, equation: Equation
) -> str:
    """``amplitude_end`` and ``speed_end`` (measured at the last frame) and ``amplitude_predicted``
    and ``speed_predicted`` (:func:`kdvsweep.theory.predicted_soliton` at the same time) on each
    row, in place; returns why the predictions are NaN (empty when they are not).

    Measured: quadratic fits to the tracked peak heights ``|u|`` and unwrapped positions over the
    last :data:`END_WINDOW` of the frames (at least 3), valued (heights) and differentiated
    (positions) at the last frame; NaN unless every frame of that window has the solitons apart.
    """
    t_end = float(times[-1])
    m = int(times.size)
    k = min(m, max(3, math.ceil(END_WINDOW * m)))
    window = slice(m - k, m)
    usable = (
        tracks is not None
        and not tracks.reason
        and tracks.times.size == m
        and k >= 3
        and bool(np.all(tracks.separated[window]))
    )
    reasons = []
    for row in rows:
        i = int(row.get("soliton", -1))
        amp = speed = math.nan
        if usable and 0 <= i < tracks.n_solitons:
            t = tracks.times[window] - t_end
            h = np.abs(tracks.height[window, i])
            x = tracks.position[window, i]
            if np.all(np.isfinite(h)) and np.all(np.isfinite(x)):
                amp = float(np.polyval(np.polyfit(t, h, 2), 0.0))
                speed = float(np.polyfit(t, x, 2)[1])  # d/dt at t = t_end (t shifted to 0 there)
        row["amplitude_end"], row["speed_end"] = amp, speed
        kappa, sign = row.get("kappa"), row.get("sign")
        if kappa is None or not math.isfinite(float(kappa)):
            pred_a, pred_c, why = math.nan, math.nan, "no kappa given"
        else:
            pred_a, pred_c, why = theory.predicted_soliton(
                float(kappa), t_end, equation, None if sign is None else int(sign)
            )
        row["amplitude_predicted"], row["speed_predicted"] = pred_a, pred_c
        if why and why not in reasons:
            reasons.append(why)
    return _join(*reasons)


def _predicted_content(
    u0: np.ndarray, grid: Grid, equation: Equation, wanted: bool
) -> tuple[SolitonContent | None, str, str]:
    """The content the inverse scattering transform predicts from the initial data.

    Returns the content (``None`` when not predicted), the ``ist_status`` (``"ok"`` or why not)
    and a one-line note of the solve's accuracy warnings (empty when none).
    """
    if not wanted:
        return None, "off: run.predict_content = false", ""
    from .. import spectrum  # scipy's dense eigensolvers: loaded only by sweeps that ask

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            content = spectrum.bound_states(u0, grid, equation=equation)
        except ConfigError as exc:  # perturbed equation, data that do not decay, ...
            return None, f"no IST: {exc}", ""
    notes = [" ".join(str(w.message).split()) for w in caught]
    if not notes:
        return content, "ok", ""
    more = f" (and {len(notes) - 1} more)" if len(notes) > 1 else ""
    return content, "ok", f"IST: {notes[0]}{more}"


def _ist_columns(content: SolitonContent | None, status: str) -> dict[str, Any]:
    """The ``ist_*`` columns of a run's row (nulls when nothing was predicted)."""
    if content is None:
        return {"ist_status": status}
    return {
        "ist_status": status,
        "ist_count": len(content),
        "ist_breathers": len(content.breathers),
        "ist_kappas": [float(k) for k in content.kappas],
    }


def _sizing_reasons(
    spec: RunSpec,
    u0: np.ndarray,
    grid: Grid,
    equation: Equation,
    content: SolitonContent,
    floor: float,
) -> dict[tuple[str, int], str]:
    """Predicted solitons the sizing rules expect not to separate by the run's end, and why."""
    form = equation.soliton_form_or_none()
    if form is None:
        return {}
    items, width, share = sizing.content_budget(content, u0, grid.dx, form, spec.run.tail)
    sep = sizing.separation(items, width, form, spec.run.tail, floor, spec.run.t_end, share)
    return {(items[i].kind, items[i].index): why for i, why in sep.left_out}


def _content_rows(
    spec: RunSpec,
    frames: np.ndarray,
    times: np.ndarray,
    grid: Grid,
    equation: Equation,
    content: SolitonContent | None,
    u0: np.ndarray,
) -> tuple[list[dict[str, Any]], dict[str, Any]]:
    """Rows of the solitons table and the content columns of the run's row, measured by
    :func:`kdvsweep.analysis.content.measure_content` (profile and file data).

    One row per emerging soliton or breather, measured beside predicted; then one row per
    predicted one that was not found, with the reason (left out by the measurement's amplitude
    floor, by the sizing rules, or not found).
    """
    from ..analysis.content import DEFAULT_MIN_AMPLITUDE, measure_content

    fraction = spec.run.min_amplitude
    floor = (DEFAULT_MIN_AMPLITUDE if fraction is None else fraction) * float(np.max(np.abs(u0)))
    try:
        found = measure_content(frames, times, grid, equation, content, min_amplitude=floor)
    except Exception as exc:  # a measurement error is recorded; the run's numbers are still valid
        return [], {"content_status": f"failed: {type(exc).__name__}: {exc}"}
    run_id = int(spec.run_id)
    rows: list[dict[str, Any]] = []
    matched: set[tuple[str, int]] = set()
    for i, e in enumerate(found.emerging):
        row: dict[str, Any] = {
            "run_id": run_id,
            "soliton": i,
            "kind": e.kind,
            "sign": int(e.sign),
            "kappa": e.kappa_measured,
            "kappa_measured": e.kappa_measured,
            "kappa_uncertainty": e.kappa_uncertainty,
            "amplitude": e.amplitude,
            "amplitude_uncertainty": e.amplitude_uncertainty,
            "speed": e.speed,
            "speed_uncertainty": e.speed_uncertainty,
            "t_separated": e.t_separated,
            "xi_measured": e.xi_measured,
            "frequency": e.frequency,
            "frequency_uncertainty": e.frequency_uncertainty,
            "note": "",
        }
        if content is not None:
            row["found"] = e.predicted_index >= 0
            if e.predicted_index >= 0:
                matched.add((e.kind, int(e.predicted_index)))
                row.update(
                    kappa_ist=e.kappa_predicted,
                    amplitude_ist=abs(e.amplitude_predicted),
                    speed_ist=e.speed_predicted,
                    frequency_ist=e.frequency_predicted,
                )
                if e.kind == "breather":
                    row["xi_ist"] = content.breathers[e.predicted_index].xi
            else:
                row["note"] = "not predicted: no unmatched predicted soliton of its kind is near it"
        rows.append({k: _plain(v) for k, v in row.items()})
    extra: dict[str, Any] = {
        "content_status": "ok" if found.status == "ok" else f"{found.status}: {found.reason}",
        "measured_count": sum(e.kind == "soliton" for e in found.emerging),
        "measured_breathers": sum(e.kind == "breather" for e in found.emerging),
        "radiation_mass": found.radiation.get("mass"),
        "radiation_momentum": found.radiation.get("momentum"),
        "radiation_hamiltonian": found.radiation.get("energy"),
        "radiation_l2": found.radiation_l2,
    }
    if content is None:
        return rows, extra
    extra.update(
        radiation_mass_ist=found.radiation_predicted.get("mass"),
        radiation_momentum_ist=found.radiation_predicted.get("momentum"),
        radiation_hamiltonian_ist=found.radiation_predicted.get("energy"),
    )
    left = {(kind, int(index)): why for kind, index, why in found.left_out}
    sized = _sizing_reasons(spec, u0, grid, equation, content, floor)
    form = equation.soliton_form_or_none()
    expected: list[dict[str, Any]] = [
        {
            "kind": "soliton",
            "index": i,
            "sign": int(content.polarity[i]),
            "kappa_ist": float(content.kappas[i]),
            "amplitude_ist": abs(float(content.amplitudes[i])),
            "speed_ist": float(content.speeds[i]),
        }
        for i in range(len(content))
    ]
    expected += [
        {
            "kind": "breather",
            "index": j,
            "sign": 0,
            "kappa_ist": b.kappa,
            "xi_ist": b.xi,
            "amplitude_ist": math.nan if form is None else form.breather_amplitude(b.kappa),
            "speed_ist": b.envelope_speed,
        }
        for j, b in enumerate(content.breathers)
    ]
    left_out = 0
    all_found = True
    for pred in expected:
        kind, index = str(pred.pop("kind")), int(pred.pop("index"))
        if (kind, index) in matched:
            continue
        why = left.get((kind, index)) or sized.get((kind, index))
        if why:
            left_out += 1
        else:
            all_found = False
        note = f"left out: {why}" if why else "not found in the record"
        rows.append(
            {"run_id": run_id, "soliton": len(rows), "kind": kind, "found": False, "note": note}
            | pred
        )
    extra.update(left_out=left_out, all_found=all_found)
    return rows, extra


def _attach_predicted(rows: list[dict[str, Any]], predicted: list[float]) -> None:
    """``kappa_ist`` on each soliton row: the i-th largest measured kappa gets the i-th largest
    predicted one (solitons end ordered by speed); left out when the counts differ."""
    if len(rows) != len(predicted):
        return
    order = sorted(range(len(rows)), key=lambda i: -float(rows[i].get("kappa_measured") or 0.0))
    for i, kappa in zip(order, sorted(predicted, reverse=True), strict=True):
        rows[i]["kappa_ist"] = kappa


def _plain(value: Any) -> Any:
    """NumPy scalars as Python scalars, so rows pickle small and concatenate cleanly."""
    return value.item() if isinstance(value, np.generic) else value


SimulationFactory = Callable[..., Any]


def _core_simulation(
    grid: Grid,
    equation: Equation,
    scheme: str,
    dt: float,
    tol: float | None,
    time_limit: float | None = None,
    max_amplitude: float | None = None,
) -> Any:
    return Simulation(
        grid,
        equation,
        scheme=scheme,
        dt=dt,
        tol=tol,
        time_limit=time_limit,
        max_amplitude=max_amplitude,
    )


#: The restarted collision only counts maxima (:func:`kdvsweep.analysis.table.analyse_run`), which
#: needs far less accuracy than the shifts: its fixed steps may be up to this many times the run's,
#: within the scheme's step rule (:func:`kdvsweep.simulation.dt_limit`, for twice the state's
#: peak: two solitons of opposite polarity add up where they meet). Its fine frames usually set a
#: shorter step anyway (2 to 3 times the run's on the benchmark sweep).
CENSUS_STEP_FACTOR = 4.0


class _Restarter:
    """``restart(state, t0, times)``: a new simulation of the run's model set to a stored frame
    ``state`` at ``t0`` and recorded at ``times`` (the analysis looks at a pair's closest approach
    between the stored frames with it: :func:`kdvsweep.analysis.table.analyse_run`), stepping at
    up to :data:`CENSUS_STEP_FACTOR` times the run's fixed step. ``seconds`` is the wall time
    spent stepping so: the run's ``step_time``, not its ``analysis_time``."""

    def __init__(self, make: SimulationFactory, spec: RunSpec) -> None:
        self.make = make
        self.model = spec.model
        self.seconds = 0.0

    def __call__(self, state: np.ndarray, t0: float, times: np.ndarray) -> np.ndarray:
        start = time.perf_counter()
        model = self.model
        dt = model.dt
        if model.scheme != ADAPTIVE:
            peak = 2.0 * float(np.max(np.abs(state)))
            limit = dt_limit(model.scheme, peak, model.equation, model.grid.dx)
            dt = max(dt, min(CENSUS_STEP_FACTOR * dt, limit))
        sim = self.make(model.grid, model.equation, model.scheme, dt, model.tol)
        sim.set_state(state, t0)
        frames = np.asarray(sim.record(times))
        self.seconds += time.perf_counter() - start
        return frames


def execute(
    spec: RunSpec,
    simulation: SimulationFactory | None = None,
    references: list[ReferenceTrack] | None = None,
) -> RunResult:
    """Run one spec and return its rows; failures come back as data, never as exceptions.

    Parameters
    ----------
    spec
        The run.
    simulation
        Builds the stepper from ``(grid, equation, scheme, dt, tol)``; default the Rust core's
        :class:`kdvsweep.Simulation`, which stops the run at ``spec.run.time_limit`` seconds of
        stepping (stored as failed, reason ``TimeLimitError: ...``). The benchmark passes the
        NumPy reference here (no time limit).
    references
        The run's reference runs, one per soliton (:mod:`kdvsweep.sweep.references`), for the
        shifts of a perturbed collision; without them its shifts are by asymptotes.

    Returns
    -------
    RunResult
        ``run_row["status"]`` is ``"ok"`` or ``"failed"`` with ``run_row["reason"]``.
    """
    start, cpu = time.perf_counter(), time.thread_time()
    row = base_row(spec)
    make = simulation or _core_simulation
    model, run = spec.model, spec.run
    grid, equation = model.grid, model.equation
    sim = None
    stage = "setup"
    try:
        if simulation is None:  # the core stops at the run's wall-time limit (TimeLimitError)
            sim = _core_simulation(
                grid,
                equation,
                model.scheme,
                model.dt,
                model.tol,
                time_limit=run.time_limit,
                max_amplitude=run.max_amplitude,
            )
        else:
            sim = make(grid, equation, model.scheme, model.dt, model.tol)
        u0 = initial.build_profile(spec.initial, grid, equation)
        sim.set_state(u0)
        soliton_data = isinstance(spec.initial, initial.Solitons)
        predicted: SolitonContent | None = None
        if has_content(run.predict_content, soliton_data):
            predicted, ist_status, note = _predicted_content(
                u0, grid, equation, run.predict_content
            )
            row.update(_ist_columns(predicted, ist_status))
            if note:
                row["reason"] = note
        times = np.asarray(run.record_times, dtype=np.float64)
        stepping = time.perf_counter()
        stage = "stepping"
        frames = sim.record(times)
        if sim.time < run.t_end:
            sim.advance(run.t_end - sim.time)
        row["step_time"] = time.perf_counter() - stepping
        final = sim.state
        if not np.all(np.isfinite(final)):
            raise NumericalError(f"state non-finite at t = {sim.time:.6g}")
        if times[-1] < sim.time:  # the balance runs to the final state
            times = np.append(times, sim.time)
            frames = np.concatenate([frames, final[None, :]])
        kept_balance = balance(frames, times, grid, equation)
        for key in INVARIANTS:
            row[f"{key}_drift"] = kept_balance.drift[key]
            row[f"{key}_residual"] = kept_balance.residual[key]
        row["balance_quadrature"] = kept_balance.quadrature
        row["max_abs_u"] = float(np.max(np.abs(final)))
        row["steps"], row["rejected"] = int(sim.steps), int(getattr(sim, "rejected", 0))
        limit = run.drift_limit
        if limit is not None and row["momentum_residual"] > limit:
            raise DriftError(
                f"momentum balance residual {row['momentum_residual']:.3g} exceeds the drift "
                f"limit {limit:g} (steps too coarse for this run?)"
            )
        analysing = time.perf_counter()
        stage = "analysis"
        restart = _Restarter(make, spec)
        if soliton_data:
            solitons, extra = _collision_rows(
                spec, frames, times, grid, equation, references, restart
            )
            if predicted is not None:
                _attach_predicted(solitons, [float(k) for k in predicted.kappas])
            if run.predict_content:
                extra["content_status"] = (
                    "not measured: the data are solitons (the collision analysis follows them)"
                )
        elif isinstance(spec.initial, initial.Sech4Wave):
            solitons, extra = [], {"content_status": SECH4_NOT_MEASURED}
        else:
            solitons, extra = _content_rows(spec, frames, times, grid, equation, predicted, u0)
        # the restart around a closest approach steps the equation: stepping, not analysis
        row["analysis_time"] = time.perf_counter() - analysing - restart.seconds
        row["step_time"] += restart.seconds
        if row.get("reason") and extra.get("reason"):  # keep an earlier note (IST) beside it
            extra["reason"] = _join(str(row["reason"]), str(extra["reason"]))
        row.update(extra)
        kept, kept_times = None, None
        if run.store_frames:
            stride = max(1, run.frame_stride)
            kept, kept_times = np.ascontiguousarray(frames[::stride]), times[::stride].copy()
            row["frames_stored"] = int(kept.shape[0])
    except Exception as exc:  # failures are data: the sweep must go on past one bad run
        row["status"] = "failed"
        row["reason"] = f"{type(exc).__name__}: {exc}"
        row["failure"] = failure_kind(exc, stage)
        if isinstance(exc, MemoryError):  # the core's message already starts "out of memory: "
            text = str(exc) or "no memory left"
            row["reason"] = text if text.startswith("out of memory") else f"out of memory: {text}"
        if sim is not None:
            row["steps"] = int(getattr(sim, "steps", 0))
        row["wall_time"] = time.perf_counter() - start
        row["cpu_time"] = time.thread_time() - cpu
        return _physical(spec, RunResult(row, [], None, None))
    # CPU time of this thread (the Rust stepping runs in it too): unlike the wall time it does not
    # grow when other processes compete for the cores.
    row["wall_time"] = time.perf_counter() - start
    row["cpu_time"] = time.thread_time() - cpu
    if run.accuracy is not None:
        row["accuracy_target"] = run.accuracy
    if run.verify and solitons and isinstance(spec.initial, initial.Solitons):
        _verify(spec, simulation, references, row, solitons)
    return _physical(spec, RunResult(row, solitons, kept, kept_times))


def _verify(
    spec: RunSpec,
    simulation: SimulationFactory | None,
    references: list[ReferenceTrack] | None,
    row: dict[str, Any],
    solitons: list[dict[str, Any]],
) -> None:
    """Error estimates of a verified run (``accuracy.verify``): the run again at half the step
    (same grid, same record times) and, separately, on twice the points (same step); each
    soliton's ``*_error_estimate`` is the Richardson factor of the scheme's order times the
    difference from the half-step run plus the difference from the finer grid (spectral
    convergence: the finer grid's own error is far smaller) plus the analysis's own error (the
    fit's ``shift_uncertainty``) plus the initial kappas' error (the formula at the measured
    kappas: :func:`kdvsweep.sweep.accuracy.total_estimates`), and
    ``accuracy_met`` is checked
    against the target (:mod:`kdvsweep.sweep.accuracy`). The adaptive scheme is not verified (no
    fixed step to halve); a note in ``reason`` says so, or why a re-run gave nothing."""
    model = spec.model
    order = acc.SCHEME_ORDER.get(model.scheme)
    if order is None:
        row["reason"] = _join(str(row.get("reason") or ""), f"not verified: {model.scheme} scheme")
        return
    half = replace(
        spec,
        model=replace(model, dt=model.dt / 2),
        run=replace(spec.run, verify=False, store_frames=False, accuracy=None),
        units=None,
    )
    finer = replace(half, model=replace(model, grid=Grid(2 * model.grid.n, model.grid.length)))
    parts = []
    for label, other, factor_order in (("dt/2", half, order), ("2n points", finer, None)):
        again = execute(other, simulation, references)
        if not again.ok:
            note = f"not verified: the run at {label} failed ({again.run_row.get('reason')})"
            row["reason"] = _join(str(row.get("reason") or ""), note)
            return
        parts.append(acc.error_estimates(solitons, again.soliton_rows, factor_order))
    estimates = acc.total_estimates(solitons, parts, model.equation)
    for soliton, est in zip(solitons, estimates, strict=True):
        soliton.update(est)
    if spec.run.accuracy is not None:
        row["accuracy_met"] = acc.accuracy_met(solitons, estimates, spec.run.accuracy)


def _physical(spec: RunSpec, result: RunResult) -> RunResult:
    """The ``phys_*`` columns of a run with ``[units]`` (:mod:`kdvsweep.units`), beside the
    canonical ones: the system's parameters and scales, and every converted canonical value."""
    if spec.units is None:
        return result
    scales = spec.units.scales()
    result.run_row.update(physunits.run_columns(spec.units))
    result.run_row.update(physunits.convert_row(result.run_row, physunits.RUN_QUANTITIES, scales))
    quantities = (*physunits.SOLITON_QUANTITIES, *physunits.CONTENT_SOLITON_QUANTITIES)
    for row in result.soliton_rows:
        row.update(physunits.convert_row(row, quantities, scales))
    return result


def execute_chunk(
    specs: Sequence[RunSpec],
    references: Mapping[str, ReferenceTrack | ReferenceResult] | None = None,
) -> list[RunResult]:
    """Run several specs one after the other (one dask task: seconds of work, not milliseconds);
    ``references`` holds the reference runs they need, by digest
    (:func:`kdvsweep.sweep.references.tracks_for`)."""
    known = {
        digest: ref.track if isinstance(ref, ReferenceResult) else ref
        for digest, ref in (references or {}).items()
    }
    out = []
    for spec in specs:
        tracks = tracks_for(spec, known)
        out.append(execute(spec) if tracks is None else execute(spec, references=tracks))
    return out


def cost(spec: RunSpec) -> float:
    """Relative cost of a run, ``n log2 n * steps``, for sizing chunks (one FFT pass per stage);
    a verified run counts its re-runs too (:data:`kdvsweep.sweep.accuracy.VERIFY_COST`)."""
    n = spec.model.grid.n
    steps = max(1.0, spec.run.t_end / spec.model.dt)
    return n * math.log2(max(n, 2)) * steps * (acc.VERIFY_COST if spec.run.verify else 1.0)


__all__ = [
    "ROUND_OFF_FRACTION",
    "TIMING_COLUMNS",
    "Balance",
    "DriftError",
    "RunResult",
    "balance",
    "execute",
    "execute_chunk",
    "failure_kind",
]
