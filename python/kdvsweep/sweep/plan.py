"""The plan of a sweep before it runs: how many runs, their sizes, steps, memory and cost.

:func:`make_plan` loads a sweep file (:func:`kdvsweep.sweep.load_sweep`: every check, the
automatic sizes and the warnings) and groups its runs by what decides their cost: grid points and
length, end time, step (or tolerance), scheme, equation family, frames and the analysis they get.
Nothing is written and no store is opened. ``kdvsweep check FILE`` prints it.

The cost is an estimate of the core-seconds (CPU seconds of one core) each run takes on *this*
machine:

``steps x t_step(n, scheme) + setup(n, scheme) + (frames x n x c_frame + OVERHEAD [+ n x c_ist])
x speed``

- ``t_step`` and ``setup`` are measured here, once per process and per distinct ``(n, scheme)``: a
  :class:`kdvsweep.Simulation` of a run of the sweep is built and stepped for about
  :data:`CALIBRATION_SECONDS` of CPU time (thread CPU time, as the runs table's ``cpu_time``).
  Beyond :data:`MAX_CALIBRATIONS` sizes of one scheme, the others are scaled by ``n log2 n`` from
  the nearest size measured.
- ``c_frame`` (:data:`FRAME_SECONDS`) is the cost of recording a frame and of the analysis of it
  (tracking, fits or the content measurement, the balance laws) per grid point, and
  :data:`OVERHEAD` the rest of a run (its rows, the initial data); ``c_ist``
  (:data:`PREDICTION_SECONDS`) is the inverse scattering transform of a run that predicts its
  content. They were measured once on the development machine and are scaled by ``speed``, this
  machine's step time over that machine's (:data:`REFERENCE_STEP`, per ``n log2 n``).
- ``steps`` is exact for the fixed-step schemes (:func:`fixed_steps`); the adaptive scheme chooses
  its own steps, so they are estimated from a short probe of the run's own initial data (its mean
  step so far; a collision later may need smaller ones).
- Reference runs (each soliton of a perturbed collision alone, shared by digest) cost their steps
  and frames like a run.

The estimate is for one core; ``kdvsweep run`` spreads the runs over the workers.
"""

from __future__ import annotations

import math
import time
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from .. import initial
from ..simulation import ADAPTIVE, Simulation
from . import sizing
from .accuracy import VERIFY_COST
from .config import RunSpec, Sweep, load_sweep

#: CPU seconds each step calibration runs for (at least 8 steps): short enough that a sweep of a
#: few distinct sizes plans in well under a second.
CALIBRATION_SECONDS = 0.02
#: Most sizes ``n`` measured per scheme; the others are scaled by ``n log2 n`` from the nearest.
MAX_CALIBRATIONS = 8
#: Core-seconds per recorded frame and grid point of the analysis (the frame's copy, tracking or
#: content measurement, balance laws), on the development machine. Measured 2026-12-02 with runs
#: executed serially in one process: each run's thread CPU time minus its steps times the step
#: time measured as here (and the setup), over frames x n. Medians: 2.3e-7 on the demo sweep (27
#: pairs, n = 384..2048; a least-squares fit gives 1.3e-7 plus 0.013 s a run), 2.2e-7 on
#: ``three-solitons.toml`` (3 of its runs, 510..582 frames), 2.2e-7 on ``sech2-damped.toml``
#: (profile data, n = 8192). The collision analysis has since become about 5 times cheaper (its
#: peaks located in one pass), which this constant does not follow; the step time dominates, and
#: the plan's total was still 0.97 of the measured CPU time on the demo and 1.17 on
#: ``three-solitons.toml`` afterwards (runs executed serially, same day).
FRAME_SECONDS = 2.0e-7
#: Core-seconds of a run besides its steps and frames (initial data, rows), same measurement.
OVERHEAD = 0.005
#: Core-seconds per grid point of the soliton content the inverse scattering transform predicts
#: (``run.predict_content``; a dense eigensolve whose size follows the profile's resolution, so
#: roughly n): 1.8e-4..4.0e-4 on ``content.toml`` (6 runs, n = 3072..8192, KdV and mKdV) after
#: the steps and :data:`FRAME_SECONDS`, same measurement; counted for runs of an integrable
#: equation that ask for it (Gardner has no transform here: an overestimate there).
PREDICTION_SECONDS = 2.5e-4
#: Core-seconds of one ETDRK4 step per ``n log2 n`` on the development machine when
#: :data:`FRAME_SECONDS` and :data:`OVERHEAD` were measured (1.42..1.69 ns for n = 384..2048).
REFERENCE_STEP = 1.5e-9
#: The scheme whose step time sets this machine's speed against :data:`REFERENCE_STEP`.
SPEED_SCHEME = "etdrk4"


def fixed_steps(times: Sequence[float] | np.ndarray, dt: float, start: float = 0.0) -> int:
    """Steps a fixed-step :class:`kdvsweep.Simulation` takes to record ``times`` from ``start``:
    the core's own rule (``_core.fixed_step_count``; each interval crossed with the fewest equal
    steps of at most ``dt``), so the plan counts exactly what the run will take."""
    from .. import _core

    return int(_core.fixed_step_count(float(start), np.asarray(times, dtype=np.float64), dt))


@dataclass(frozen=True)
class StepTiming:
    """The measured cost of stepping one ``(n, scheme)`` here: CPU seconds per step and of setting
    a run up (building the stepper and its coefficients, the first step's extra); ``measured``
    is False when scaled from another size (``from_n``)."""

    n: int
    scheme: str
    step: float
    setup: float
    measured: bool = True
    from_n: int | None = None


@dataclass(frozen=True)
class Calibration:
    """How the costs were estimated: the step timings, this machine's speed and the constants."""

    timings: dict[tuple[int, str], StepTiming]
    speed: float
    frame_seconds: float = FRAME_SECONDS
    overhead: float = OVERHEAD
    prediction_seconds: float = PREDICTION_SECONDS
    seconds: float = 0.0

    def describe(self) -> str:
        """One paragraph saying how the estimate was made."""
        measured = sum(1 for t in self.timings.values() if t.measured)
        scaled = len(self.timings) - measured
        text = (
            f"estimate: steps x CPU time per step measured here ({measured} size(s) of "
            f"{CALIBRATION_SECONDS:g} s each"
        )
        if scaled:
            text += f", {scaled} scaled by n log2 n"
        return text + (
            f"), plus frames x n x {self.frame_seconds:.2g} s for the analysis, "
            f"{self.overhead:g} s per run and n x {self.prediction_seconds:.2g} s for a predicted "
            f"content (measured once on the example sweeps, times this machine's speed factor "
            f"{self.speed:.2g}); one core; calibration took {self.seconds:.2f} s"
        )


@dataclass(frozen=True)
class PlanGroup:
    """Runs of identical settings and the estimated cost of each.

    Attributes
    ----------
    run_ids
        The runs in the group.
    family
        The equation's family (``kdv``, ``mkdv``, ``gardner``, ``linear``).
    n, length, t_end, dt, tol, scheme
        The grid and the time stepping.
    frames
        Frames recorded for the analysis.
    analysis
        ``"collision"`` (prepared solitons) or ``"content"`` (any other data).
    steps
        Steps of one run: exact for a fixed-step scheme, estimated for the adaptive one
        (``steps_estimated``).
    memory
        Estimated peak memory of one run, bytes (:func:`kdvsweep.sweep.sizing.run_memory`).
    seconds
        Estimated core-seconds of one run.
    references
        Distinct reference runs the group's runs need (not already counted by an earlier group).
    reference_seconds
        Their estimated core-seconds, together.
    verified
        The runs are re-run to estimate their errors (``[accuracy] verify``): ``seconds`` counts
        the re-runs too (:data:`kdvsweep.sweep.accuracy.VERIFY_COST` runs' worth).
    """

    run_ids: tuple[int, ...]
    family: str
    n: int
    length: float
    t_end: float
    dt: float
    tol: float | None
    scheme: str
    frames: int
    analysis: str
    steps: int
    steps_estimated: bool
    memory: int
    seconds: float
    references: int = 0
    reference_seconds: float = 0.0
    verified: bool = False

    @property
    def count(self) -> int:
        """Runs in the group."""
        return len(self.run_ids)

    @property
    def total_seconds(self) -> float:
        """Estimated core-seconds of the group's runs and references."""
        return self.count * self.seconds + self.reference_seconds


@dataclass(frozen=True)
class Plan:
    """What a sweep file would run, before it runs.

    Attributes
    ----------
    path, name, digest
        The sweep file, its store name and digest.
    runs
        Number of runs.
    groups
        Runs grouped by identical settings, in order of their first run.
    warnings
        The sweep's warnings (:attr:`kdvsweep.sweep.Sweep.warnings`).
    calibration
        How the costs were estimated.
    seconds
        Wall-clock seconds making the plan took (loading the file included).
    """

    path: Path
    name: str
    digest: str
    runs: int
    groups: tuple[PlanGroup, ...]
    warnings: tuple[str, ...]
    calibration: Calibration
    seconds: float = 0.0

    @property
    def total_seconds(self) -> float:
        """Estimated core-seconds of the whole sweep (runs and reference runs)."""
        return sum(g.total_seconds for g in self.groups)

    @property
    def total_steps(self) -> int:
        """Steps of all runs (reference runs not counted)."""
        return sum(g.count * g.steps for g in self.groups)

    @property
    def peak_memory(self) -> int:
        """The largest memory estimate of one run, bytes."""
        return max((g.memory for g in self.groups), default=0)

    @property
    def references(self) -> int:
        """Distinct reference runs."""
        return sum(g.references for g in self.groups)


def _group_key(spec: RunSpec) -> tuple[Any, ...]:
    model, run = spec.model, spec.run
    return (
        model.grid.n,
        model.grid.length,
        run.t_end,
        model.dt,
        model.tol,
        model.scheme,
        model.equation.family,
        len(run.record_times),
        _analysis(spec),
        _predicts(spec),
        run.verify,
    )


def _analysis(spec: RunSpec) -> str:
    return "collision" if isinstance(spec.initial, initial.Solitons) else "content"


def _profile(spec: RunSpec) -> np.ndarray:
    """The run's initial data, or a zero profile when they cannot be built here (a fixed-step
    scheme costs the same whatever the data)."""
    try:
        return initial.build_profile(spec.initial, spec.model.grid, spec.model.equation)
    except Exception:  # the run itself will report it; the plan only needs a state to step
        return np.zeros(spec.model.grid.n)


def _simulation(spec: RunSpec) -> Simulation:
    model = spec.model
    return Simulation(model.grid, model.equation, scheme=model.scheme, dt=model.dt, tol=model.tol)


def _time_steps(spec: RunSpec, budget: float) -> StepTiming:
    """Step a copy of ``spec``'s model for about ``budget`` CPU seconds; the time per step and
    the setup (construction, state, coefficients of the first step)."""
    model = spec.model
    clock = time.thread_time
    start = clock()
    sim = _simulation(spec)
    zero = np.zeros(model.grid.n)
    try:
        sim.set_state(_profile(spec))
        sim.advance(model.dt)
    except Exception:  # data unstable at this step: a zero state steps at the same cost
        sim.set_state(zero)
        sim.advance(model.dt)
    setup = clock() - start
    steps, spent, chunk, failures = 0, 0.0, 8, 0
    while spent < budget and steps < 4096 and failures < 3:
        before, t0 = sim.steps, clock()
        try:
            sim.advance(chunk * model.dt)
        except Exception:  # unstable data: go on from a zero state (same cost per step)
            failures += 1
            sim.set_state(zero)
            continue
        spent += clock() - t0
        steps += sim.steps - before
        # the next chunk fills the rest of the budget at the rate seen so far (at least 8 steps)
        rate = steps / spent if spent > 0 else 2.0 * chunk / budget
        chunk = max(8, min(4096 - steps, math.ceil((budget - spent) * rate)))
    step = spent / max(steps, 1)
    return StepTiming(model.grid.n, model.scheme, step, max(0.0, setup - step))


def _nlogn(n: int) -> float:
    return n * math.log2(max(n, 2))


def _pick(sizes: Sequence[int], count: int) -> list[int]:
    """At most ``count`` of the sorted ``sizes``, spread evenly (the smallest and largest kept
    when ``count >= 2``, the middle one when it is 1)."""
    if len(sizes) <= count:
        return list(sizes)
    if count <= 1:
        return [sizes[len(sizes) // 2]]
    picks = {sizes[round(i * (len(sizes) - 1) / (count - 1))] for i in range(count)}
    return sorted(picks)


def calibrate(specs: Iterable[RunSpec], cache: dict[tuple[int, str], StepTiming]) -> Calibration:
    """Step timings for every ``(n, scheme)`` of ``specs``: measured (into ``cache``, reused on
    later calls) for at most :data:`MAX_CALIBRATIONS` sizes per scheme, scaled for the others."""
    start = time.perf_counter()
    example: dict[tuple[int, str], RunSpec] = {}
    for spec in specs:
        example.setdefault((spec.model.grid.n, spec.model.scheme), spec)
    timings: dict[tuple[int, str], StepTiming] = {}
    for scheme in sorted({s for _, s in example}):
        sizes = sorted(n for n, s in example if s == scheme)
        known = [n for n in sizes if (n, scheme) in cache]
        wanted = _pick(sizes, MAX_CALIBRATIONS)
        for n in wanted:
            if (n, scheme) not in cache and len(known) < MAX_CALIBRATIONS:
                cache[(n, scheme)] = _time_steps(example[(n, scheme)], CALIBRATION_SECONDS)
                known.append(n)
        for n in sizes:
            if (n, scheme) in cache:
                timings[(n, scheme)] = cache[(n, scheme)]
                continue
            near = min(known, key=lambda m: abs(math.log(m / n)))
            base = cache[(near, scheme)]
            factor = _nlogn(n) / _nlogn(near)
            timings[(n, scheme)] = StepTiming(
                n, scheme, base.step * factor, base.setup * factor, False, near
            )
    speed = _speed(timings)
    return Calibration(timings, speed, seconds=time.perf_counter() - start)


def _speed(timings: dict[tuple[int, str], StepTiming]) -> float:
    """This machine's step time per ``n log2 n`` over :data:`REFERENCE_STEP` (1 without a
    measurement of :data:`SPEED_SCHEME`; the median over sizes otherwise)."""
    ratios = [
        t.step / _nlogn(t.n) / REFERENCE_STEP
        for t in timings.values()
        if t.measured and t.scheme == SPEED_SCHEME
    ]
    if not ratios:
        ratios = [t.step / _nlogn(t.n) / REFERENCE_STEP for t in timings.values() if t.measured]
    return float(np.median(ratios)) if ratios else 1.0


def _adaptive_steps(spec: RunSpec, budget: float, probes: dict[tuple[Any, ...], float]) -> int:
    """Steps the adaptive scheme would take over the run, from its mean step in a short probe of
    the run's own initial data (at least one step per frame interval). After
    :data:`MAX_CALIBRATIONS` probes (``probes``: mean step by family and tolerance, updated) a run
    takes the mean step of the probes of its family and tolerance."""
    key = (spec.model.equation.family, spec.model.tol)
    end = spec.run.t_end
    floor = len(spec.run.record_times) - 1
    if len(probes) >= MAX_CALIBRATIONS:
        same = [h for k, h in probes.items() if k[:2] == key] or list(probes.values())
        return max(math.ceil(end / float(np.mean(same))), floor)
    sim = _simulation(spec)
    sim.set_state(_profile(spec))
    clock = time.thread_time
    t0 = clock()
    span = min(end, 64 * spec.model.dt)
    try:
        while clock() - t0 < budget and sim.time < end:
            sim.advance(min(span, end - sim.time))
            span *= 2
    except Exception:  # unstable: the steps so far are what is known
        pass
    per_step = sim.time / sim.steps if sim.steps else spec.model.dt
    probes[(*key, spec.run_id)] = per_step
    return max(math.ceil(end / per_step), floor)


def _predicts(spec: RunSpec) -> bool:
    """Whether the run pays for the inverse scattering transform (see :data:`PREDICTION_SECONDS`)."""
    return spec.run.predict_content and spec.model.equation.integrable


def _run_seconds(spec: RunSpec, steps: int, calibration: Calibration) -> float:
    """Estimated core-seconds of one run of ``steps`` steps (see the module's docstring)."""
    n, frames = spec.model.grid.n, len(spec.run.record_times)
    timing = calibration.timings[(n, spec.model.scheme)]
    rest = frames * n * calibration.frame_seconds + calibration.overhead
    if _predicts(spec):
        rest += n * calibration.prediction_seconds
    return steps * timing.step + timing.setup + rest * calibration.speed


_CACHE: dict[tuple[int, str], StepTiming] = {}


def make_plan(source: str | Path | Sweep) -> Plan:
    """The plan of a sweep file (or a loaded :class:`Sweep`): its runs grouped by identical
    settings, with steps, memory and estimated core-seconds on this machine.

    Loading the file raises :class:`kdvsweep.ConfigError` on its first mistake, as
    :func:`load_sweep` does. Nothing is written; the step calibration (a few short simulations in
    memory) is kept for the rest of the process.
    """
    started = time.perf_counter()
    sweep = source if isinstance(source, Sweep) else load_sweep(source)
    groups: dict[tuple[Any, ...], list[RunSpec]] = {}
    for spec in sweep.runs:
        groups.setdefault(_group_key(spec), []).append(spec)
    calibration = calibrate(sweep.runs, _CACHE)
    seen: set[str] = set()
    probes: dict[tuple[Any, ...], float] = {}
    out = []
    for specs in groups.values():
        first = specs[0]
        model, run = first.model, first.run
        frames = len(run.record_times)
        adaptive = model.scheme == ADAPTIVE
        if adaptive:
            steps = _adaptive_steps(first, CALIBRATION_SECONDS, probes)
        else:
            steps = fixed_steps(run.record_times, model.dt)
        seconds = _run_seconds(first, steps, calibration)
        if run.verify:
            seconds *= VERIFY_COST
        refs = _new_references(specs, seen)
        out.append(
            PlanGroup(
                run_ids=tuple(s.run_id for s in specs),
                family=model.equation.family,
                n=model.grid.n,
                length=model.grid.length,
                t_end=run.t_end,
                dt=model.dt,
                tol=model.tol,
                scheme=model.scheme,
                frames=frames,
                analysis=_analysis(first),
                steps=steps,
                steps_estimated=adaptive,
                memory=sizing.run_memory(model.grid.n, frames, model.scheme),
                seconds=seconds,
                references=refs,
                reference_seconds=refs * seconds / (VERIFY_COST if run.verify else 1.0),
                verified=bool(run.verify),
            )
        )
    return Plan(
        path=sweep.path,
        name=sweep.name,
        digest=sweep.digest,
        runs=len(sweep.runs),
        groups=tuple(out),
        warnings=sweep.warnings,
        calibration=calibration,
        seconds=time.perf_counter() - started,
    )


def _new_references(specs: Sequence[RunSpec], seen: set[str]) -> int:
    """Reference runs of ``specs`` not in ``seen`` (digests; updated). Only perturbed soliton
    runs have them, so the reference module (and the analysis it imports) loads only then."""
    # a necessary condition only (the rule is references.needs_references): perturbed solitons
    if not any(
        s.model.equation.perturbed and isinstance(s.initial, initial.Solitons) for s in specs
    ):
        return 0
    from .references import references_for

    before = len(seen)
    for spec in specs:
        seen.update(ref.digest for ref in references_for(spec))
    return len(seen) - before


__all__ = [
    "CALIBRATION_SECONDS",
    "FRAME_SECONDS",
    "MAX_CALIBRATIONS",
    "OVERHEAD",
    "PREDICTION_SECONDS",
    "REFERENCE_STEP",
    "Calibration",
    "Plan",
    "PlanGroup",
    "StepTiming",
    "calibrate",
    "fixed_steps",
    "make_plan",
]
