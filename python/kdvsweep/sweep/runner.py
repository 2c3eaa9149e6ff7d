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
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np

from .. import initial, theory
from ..exceptions import ConfigError, NumericalError
from ..model import Equation, Grid
from ..simulation import Simulation, invariants

# Imported here, not inside a run, so that a worker pays for the imports when it first receives a
# task rather than inside the first run's wall time. The analysis may be absent in a slim build.
try:
    from .. import analysis
except ImportError:  # pragma: no cover
    analysis = None  # type: ignore[assignment]

#: Relative drift of ``int u^2`` beyond which a conservative run is declared failed (a resolved
#: pseudo-spectral run keeps it near 1e-8; 1e-3 means far too coarse steps - common practice, no
#: source). A run may override it with ``run["drift_limit"]`` (``None`` switches the check off).
DEFAULT_DRIFT_LIMIT = 1e-3

#: Columns of the runs table filled here; a swept parameter may not take one of these names.
RESULT_COLUMNS = (
    "run_id",
    "status",
    "reason",
    "steps",
    "rejected",
    "wall_time",
    "cpu_time",
    "step_time",
    "analysis_time",
    "mass_drift",
    "momentum_drift",
    "energy_drift",
    "max_abs_u",
    "frames_stored",
    "ist_count",
    "ist_kappas",
)

#: Columns of the runs table that measure the machine, not the physics: they differ between two
#: runs of the same sweep; every other column is reproducible bit for bit.
TIMING_COLUMNS = ("wall_time", "cpu_time", "step_time", "analysis_time")

#: Descriptive columns of the model; a swept parameter of the same name takes the column instead.
MODEL_COLUMNS = ("equation", "n", "length", "scheme", "dt", "tol", "t_end")

#: Stable columns of the solitons table (DESIGN.md); filled with NaN where nothing measured them.
SOLITON_COLUMNS = (
    "run_id",
    "soliton",
    "kappa",
    "kappa_measured",
    "shift_predicted",
    "shift_measured",
    "shift_error",
)


class SpecLike(Protocol):
    """What the runner needs of a run spec (``kdvsweep.sweep.config.RunSpec`` has it)."""

    run_id: int
    params: dict[str, Any]
    model: dict[str, Any]
    initial: dict[str, Any]
    run: dict[str, Any]


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


def build_equation(model: dict[str, Any]) -> Equation:
    """The :class:`~kdvsweep.Equation` of a spec's ``model["equation"]`` dict."""
    eq = dict(model["equation"])
    name = str(eq.pop("name", "custom"))
    keys = ("a", "b", "d", "f", "g", "v")
    coefs = {k: float(eq[k]) for k in keys if eq.get(k) is not None}
    dealias = eq.get("dealias")
    return Equation(**coefs, dealias=None if dealias is None else float(dealias), name=name)


def build_grid(model: dict[str, Any]) -> Grid:
    """The :class:`~kdvsweep.Grid` of a spec's model."""
    return Grid(int(model["n"]), float(model["length"]))


def base_row(spec: SpecLike) -> dict[str, Any]:
    """The parts of a run's row known before it runs: id, parameters, model description."""
    model = spec.model
    descr = {
        "equation": str(model["equation"].get("name", "custom")),
        "n": int(model["n"]),
        "length": float(model["length"]),
        "scheme": str(model.get("scheme", "etdrk4")),
        "dt": float(model["dt"]) if model.get("dt") is not None else math.nan,
        "tol": float(model["tol"]) if model.get("tol") is not None else math.nan,
        "t_end": float(spec.run["t_end"]),
    }
    row: dict[str, Any] = {"run_id": int(spec.run_id)}
    row.update(spec.params)
    row.update({"status": "ok", "reason": ""})
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
            "max_abs_u": math.nan,
            "frames_stored": 0,
        }
    )
    return row


def _drift(before: float, after: float) -> float:
    """Relative change, or the absolute one when the quantity starts at (near) zero."""
    scale = abs(before)
    return abs(after - before) / scale if scale > 1e-300 else abs(after - before)


def _is_conservative(eq: Equation) -> bool:
    return eq.g == 0.0 and eq.v == 0.0


def _input_soliton_rows(spec: SpecLike, equation: Equation) -> list[dict[str, Any]]:
    """Rows of the solitons table from the input solitons alone (no measurement)."""
    solitons = initial.input_solitons(spec.initial)
    predicted = [math.nan] * len(solitons)
    if len(solitons) >= 2:
        try:
            shifts = theory.phase_shifts([s["kappa"] for s in solitons], equation=equation)
            predicted = [float(v) for v in np.asarray(shifts, dtype=float)]
        except Exception:  # theory absent or not defined for this case: leave NaN
            pass
    rows = []
    for s, pred in zip(solitons, predicted, strict=True):
        row = {c: math.nan for c in SOLITON_COLUMNS}
        row.update({k: v for k, v in s.items()})
        row.update({"run_id": int(spec.run_id), "shift_predicted": pred})
        rows.append(row)
    return rows


def _collision_rows(
    spec: SpecLike, frames: np.ndarray, times: np.ndarray, grid: Grid, equation: Equation
) -> tuple[list[dict[str, Any]], dict[str, Any]]:
    """Rows of the solitons table, measured by the collision analysis where it exists.

    Returns the rows and extra columns for the run's row: the analysis summary, and a ``reason``
    note when the analysis could not measure the shifts. The input solitons are stored then and
    the run stays "ok": the simulation itself succeeded.
    """
    solitons = initial.input_solitons(spec.initial)
    if not solitons:
        return [], {}
    if analysis is None:  # pragma: no cover
        return _input_soliton_rows(spec, equation), {}
    kappas = [s["kappa"] for s in solitons]
    extra: dict[str, Any] = {}
    try:
        if hasattr(analysis, "analyse_run"):
            found = analysis.analyse_run(frames, times, grid, equation, kappas)
            extra = {
                str(k): _plain(v)
                for k, v in found.summary.items()
                if k not in spec.params and (v is None or isinstance(v, str | int | float | bool))
            }
            if not found.ok:
                reason = f"analysis {found.summary.get('analysis_status')}: "
                reason += str(found.summary.get("analysis_reason", ""))
                return _input_soliton_rows(spec, equation), {**extra, "reason": reason}
            table = found.table
        else:
            table = analysis.collision_table(frames, times, grid, equation=equation, kappas=kappas)
    except Exception as exc:  # analysis failure is recorded, the run's numbers are still valid
        reason = f"analysis: {type(exc).__name__}: {exc}"
        return _input_soliton_rows(spec, equation), {**extra, "reason": reason}
    rows = []
    for rec in table.to_dict("records"):
        row: dict[str, Any] = {"run_id": int(spec.run_id)}
        row.update({str(k): _plain(v) for k, v in rec.items() if k != "run_id"})
        rows.append(row)
    return rows, extra


def _predicted_content(u0: np.ndarray, grid: Grid, equation: Equation) -> list[float]:
    """Soliton kappas the inverse scattering transform predicts from the initial data."""
    from .. import spectrum  # scipy's dense eigensolvers: loaded only by sweeps that ask

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # resolution notes of the solve are not run failures
        content = spectrum.bound_states(u0, grid, equation=equation)
    return [float(k) for k in content.kappas]


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
    grid: Grid, equation: Equation, scheme: str, dt: float, tol: float | None
) -> Any:
    return Simulation(grid, equation, scheme=scheme, dt=dt, tol=tol)


def execute(spec: SpecLike, simulation: SimulationFactory | None = None) -> RunResult:
    """Run one spec and return its rows; failures come back as data, never as exceptions.

    Parameters
    ----------
    spec
        The run (a ``RunSpec``).
    simulation
        Builds the stepper from ``(grid, equation, scheme, dt, tol)``; default the Rust core's
        :class:`kdvsweep.Simulation`. The benchmark passes the NumPy reference here.

    Returns
    -------
    RunResult
        ``run_row["status"]`` is ``"ok"`` or ``"failed"`` with ``run_row["reason"]``.
    """
    start, cpu = time.perf_counter(), time.thread_time()
    row = base_row(spec)
    make = simulation or _core_simulation
    sim = None
    try:
        grid, equation = build_grid(spec.model), build_equation(spec.model)
        model, run = spec.model, spec.run
        tol = model.get("tol")
        sim = make(
            grid,
            equation,
            str(model.get("scheme", "etdrk4")),
            float(model["dt"]),
            None if tol is None else float(tol),
        )
        u0 = initial.build_profile(spec.initial, grid, equation)
        sim.set_state(u0)
        predicted = None
        if run.get("predict_content"):
            try:
                predicted = _predicted_content(u0, grid, equation)
            except ConfigError as exc:  # e.g. a perturbed equation: no IST; the run goes on
                row["reason"] = f"no predicted content: {exc}"
        if predicted is not None:
            row["ist_count"] = len(predicted)
            row["ist_kappas"] = " ".join(f"{k:.10g}" for k in predicted)
        before = invariants(sim.state, grid, equation)
        times = np.asarray(run["record_times"], dtype=np.float64)
        stepping = time.perf_counter()
        frames = sim.record(times)
        t_end = float(run["t_end"])
        if sim.time < t_end:
            sim.advance(t_end - sim.time)
        row["step_time"] = time.perf_counter() - stepping
        final = sim.state
        if not np.all(np.isfinite(final)):
            raise NumericalError(f"state non-finite at t = {sim.time:.6g}")
        after = invariants(final, grid, equation)
        for key in ("mass", "momentum", "energy"):
            row[f"{key}_drift"] = _drift(before[key], after[key])
        row["max_abs_u"] = float(np.max(np.abs(final)))
        row["steps"], row["rejected"] = int(sim.steps), int(getattr(sim, "rejected", 0))
        limit = run.get("drift_limit", DEFAULT_DRIFT_LIMIT)
        if limit is not None and _is_conservative(equation) and row["momentum_drift"] > limit:
            raise NumericalError(
                f"momentum drift {row['momentum_drift']:.3g} exceeds the limit {limit:g}"
                " (steps too coarse for this run?)"
            )
        analysing = time.perf_counter()
        solitons, extra = _collision_rows(spec, frames, times, grid, equation)
        if predicted is not None:
            _attach_predicted(solitons, predicted)
        row["analysis_time"] = time.perf_counter() - analysing
        row.update({k: v for k, v in extra.items() if k not in RESULT_COLUMNS or k == "reason"})
        kept, kept_times = None, None
        if run.get("store_frames"):
            stride = max(1, int(run.get("frame_stride", 1)))
            kept, kept_times = np.ascontiguousarray(frames[::stride]), times[::stride].copy()
            row["frames_stored"] = int(kept.shape[0])
    except Exception as exc:  # failures are data: the sweep must go on past one bad run
        row["status"] = "failed"
        row["reason"] = f"{type(exc).__name__}: {exc}"
        if sim is not None:
            row["steps"] = int(getattr(sim, "steps", 0))
        row["wall_time"] = time.perf_counter() - start
        row["cpu_time"] = time.thread_time() - cpu
        return RunResult(row, [], None, None)
    # CPU time of this thread (the Rust stepping runs in it too): unlike the wall time it does not
    # grow when other processes compete for the cores.
    row["wall_time"] = time.perf_counter() - start
    row["cpu_time"] = time.thread_time() - cpu
    return RunResult(row, solitons, kept, kept_times)


def execute_chunk(specs: Sequence[SpecLike]) -> list[RunResult]:
    """Run several specs one after the other (one dask task: seconds of work, not milliseconds)."""
    return [execute(spec) for spec in specs]


def cost(spec: SpecLike) -> float:
    """Relative cost of a run, ``n log2 n * steps``, for sizing chunks (one FFT pass per stage)."""
    n = int(spec.model["n"])
    dt = spec.model.get("dt") or 1e-3
    steps = max(1.0, float(spec.run["t_end"]) / float(dt))
    return n * math.log2(max(n, 2)) * steps


__all__ = [
    "DEFAULT_DRIFT_LIMIT",
    "MODEL_COLUMNS",
    "RESULT_COLUMNS",
    "SOLITON_COLUMNS",
    "TIMING_COLUMNS",
    "RunResult",
    "base_row",
    "build_equation",
    "build_grid",
    "cost",
    "execute",
    "execute_chunk",
]
