"""``kdvsweep bench``: the core against bare FFTs and NumPy; ``--sweep``: the farm's throughput;
``--steps``: each fixed-step scheme's largest stable step (the constants of the step rule);
``--scale``: the machinery (loader, farm, store, readers) on sweeps of 10^3 to 10^6 trivial runs;
``--accuracy``: shifts of pair and triple sweeps at accuracy targets against the formula, with
their error estimates and cost."""

from __future__ import annotations

import argparse
import math
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from .common import say

if TYPE_CHECKING:
    from ..bench import Budget, Row
    from ..steplimits import Limit
    from ..sweep.bench_accuracy import AccuracyBenchmark
    from ..sweep.bench_sweep import ScaleBenchmark, SweepBenchmark

#: Options of the core benchmark and of the farm benchmark (``--sweep``); one may not take the
#: other's.
CORE_ONLY = ("n", "schemes", "strict")
SWEEP_ONLY = ("runs", "numpy_runs", "growth", "keep")
#: Options of the step-limit measurement (``--steps``; it also takes --n and --schemes).
STEPS_ONLY = ("equations", "kappas", "fifth")
#: Options of the machinery benchmark (``--scale``; it also takes --keep).
SCALE_ONLY = ("scale_runs", "scale_loads")
#: Options of the accuracy benchmark (``--accuracy``).
ACCURACY_ONLY = ("targets", "workers")


def _int_list(text: str) -> list[int]:
    try:
        return [int(part) for part in text.split(",") if part.strip()]
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected integers like 256,512, got {text!r}") from None


def _float_list(text: str) -> list[float]:
    try:
        return [float(part) for part in text.split(",") if part.strip()]
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected numbers like 0.5,1, got {text!r}") from None


def _word_list(text: str) -> list[str]:
    return [part.strip() for part in text.split(",") if part.strip()]


def register(sub: Any) -> None:
    """Add ``bench`` to the ``kdvsweep`` sub-parsers."""
    from ..bench import SIZES
    from ..reference import SCHEMES
    from ..sweep.bench_sweep import (
        GROWTH,
        QUICK_GROWTH,
        QUICK_SCALE_LOADS,
        QUICK_SCALE_RUNS,
        REFERENCE_RUNS,
        SCALE_LOADS,
        SCALE_RUNS,
    )

    p = sub.add_parser(
        "bench",
        help="core against bare FFTs and NumPy; --sweep: the farm's runs per hour; "
        "--steps: each scheme's largest stable step; --scale: the machinery at 10^3-10^6 runs; "
        "--accuracy: shifts at accuracy targets against the formula, with their error estimates",
        description="Benchmark of the Rust steppers against their FFT floor and plain NumPy; "
        "with --sweep, the throughput of the sweep farm on a reference sweep of KdV pair "
        "collisions.",
    )
    p.add_argument(
        "--sweep", action="store_true", help="benchmark the farm instead of the steppers"
    )
    p.add_argument(
        "--steps",
        action="store_true",
        help="measure each fixed-step scheme's largest stable step instead (the step rule)",
    )
    p.add_argument(
        "--scale",
        action="store_true",
        help="measure the machinery instead: loading, farm overhead, store files and reading "
        "on sweeps of trivial runs",
    )
    p.add_argument(
        "--accuracy",
        action="store_true",
        help="run KdV/mKdV pair and KdV triple sweeps at accuracy targets: each shift's error "
        "against the formula, its error estimate, and the cost against hand-picked settings",
    )
    p.add_argument(
        "--quick",
        action="store_true",
        help="fewer and shorter timings (rougher figures); --steps: n = 256, 512 and kappa = 1; "
        "--accuracy: fewer runs",
    )
    core = p.add_argument_group("steppers (without --sweep)")
    core.add_argument(
        "--n",
        type=_int_list,
        default=None,
        metavar="LIST",
        help=f"grid sizes, comma separated (default {','.join(map(str, SIZES))})",
    )
    core.add_argument(
        "--schemes",
        type=_word_list,
        default=None,
        metavar="LIST",
        help=f"schemes, comma separated (default {','.join(SCHEMES)})",
    )
    core.add_argument(
        "--strict", action="store_true", help="exit with status 1 when a target is missed"
    )
    farm = p.add_argument_group("farm (with --sweep)")
    farm.add_argument(
        "--runs",
        type=int,
        default=None,
        metavar="N",
        help=f"runs of the reference sweep (default {REFERENCE_RUNS})",
    )
    farm.add_argument(
        "--numpy-runs",
        type=int,
        default=None,
        metavar="N",
        help="runs of the NumPy baseline (evenly spread subset; default all, 10 with --quick)",
    )
    farm.add_argument(
        "--growth",
        type=_int_list,
        default=None,
        metavar="LIST",
        help=f"sweep sizes for overhead and memory (default {','.join(map(str, GROWTH))}; "
        f"{','.join(map(str, QUICK_GROWTH))} with --quick)",
    )
    farm.add_argument(
        "--keep", type=Path, metavar="DIR", help="keep the stores in this folder (also --scale)"
    )
    steps = p.add_argument_group("step limits (with --steps; --n and --schemes apply too)")
    steps.add_argument(
        "--equations",
        type=_word_list,
        default=None,
        metavar="LIST",
        help="equation presets with solitons, comma separated (default kdv,mkdv)",
    )
    steps.add_argument(
        "--kappas",
        type=_float_list,
        default=None,
        metavar="LIST",
        help="soliton kappas, comma separated (default 0.5,1,2)",
    )
    steps.add_argument(
        "--fifth",
        type=_float_list,
        default=None,
        metavar="LIST",
        help="fifth-order dispersion coefficients f, comma separated (default 0)",
    )
    scale = p.add_argument_group("machinery (with --scale; --keep applies too)")
    scale.add_argument(
        "--scale-runs",
        type=_int_list,
        default=None,
        metavar="LIST",
        help=f"sizes to load, run on 2 workers and read (default "
        f"{','.join(map(str, SCALE_RUNS))}; {','.join(map(str, QUICK_SCALE_RUNS))} with "
        "--quick; 100000 takes minutes)",
    )
    scale.add_argument(
        "--scale-loads",
        type=_int_list,
        default=None,
        metavar="LIST",
        help=f"sizes to load only (default {','.join(map(str, SCALE_LOADS))}; "
        f"{','.join(map(str, QUICK_SCALE_LOADS))} with --quick)",
    )
    accuracy = p.add_argument_group("accuracy (with --accuracy)")
    accuracy.add_argument(
        "--targets",
        type=_float_list,
        default=None,
        metavar="LIST",
        help="accuracy targets (relative shift errors), comma separated (default 1e-5,1e-7)",
    )
    accuracy.add_argument(
        "--workers", type=int, default=None, metavar="N", help="farm workers (default 2)"
    )
    p.set_defaults(handler=_bench)


def _bench(args: argparse.Namespace) -> int:
    modes = [name for name in ("sweep", "steps", "scale", "accuracy") if getattr(args, name)]
    if len(modes) > 1:
        say(f"error: --{modes[0]} and --{modes[1]} are different benchmarks; give one", "bench")
        return 2
    # each option's home, and the options each mode refuses (--steps takes --n and --schemes)
    home = dict.fromkeys(CORE_ONLY, "the stepper benchmark")
    home |= dict.fromkeys(SWEEP_ONLY, "the farm benchmark (--sweep)")
    home |= dict.fromkeys(STEPS_ONLY, "the step limits (--steps)")
    home |= dict.fromkeys(SCALE_ONLY, "the machinery benchmark (--scale)")
    home["keep"] = "the farm and machinery benchmarks (--sweep, --scale)"
    home |= dict.fromkeys(ACCURACY_ONLY, "the accuracy benchmark (--accuracy)")
    if args.sweep:
        refused: tuple[str, ...] = (*CORE_ONLY, *STEPS_ONLY, *SCALE_ONLY, *ACCURACY_ONLY)
    elif args.steps:
        refused = (*SWEEP_ONLY, *SCALE_ONLY, *ACCURACY_ONLY, "strict")
    elif args.scale:
        refused = (
            *CORE_ONLY,
            *STEPS_ONLY,
            *ACCURACY_ONLY,
            *(o for o in SWEEP_ONLY if o != "keep"),
        )
    elif args.accuracy:
        refused = (*SWEEP_ONLY, *STEPS_ONLY, *SCALE_ONLY, *(o for o in CORE_ONLY if o != "strict"))
    else:
        refused = (*SWEEP_ONLY, *STEPS_ONLY, *SCALE_ONLY, *ACCURACY_ONLY)
    wrong = [name for name in refused if _given(args, name)]
    if wrong:
        option = "--" + wrong[0].replace("_", "-")
        say(f"error: {option} applies to {home[wrong[0]]} only", "bench")
        return 2
    if args.steps:
        return _steps(args)
    if args.scale:
        return _scale(args)
    if args.accuracy:
        return _accuracy(args)
    return _sweep(args) if args.sweep else _steppers(args)


def _given(args: argparse.Namespace, name: str) -> bool:
    value = getattr(args, name)
    return value not in (None, False)


# --- the steppers --------------------------------------------------------------------------------


def _steppers(args: argparse.Namespace) -> int:
    from ..bench import FULL, QUICK, SIZES, run_benchmark, targets_met
    from ..reference import SCHEMES

    budget = QUICK if args.quick else FULL
    rows = run_benchmark(
        args.n or SIZES,
        args.schemes or SCHEMES,
        budget,
        on_row=lambda row: say(f"measured n = {row.n} {row.scheme}", "bench"),
    )
    print(format_rows(rows, budget))
    return 1 if args.strict and not targets_met(rows) else 0


def _mark(met: bool | None) -> str:
    return "" if met is None else ("ok" if met else "MISS")


def format_rows(rows: Sequence[Row], budget: Budget) -> str:
    """The table of figures and ratios, with the targets flagged where they apply."""
    from ..bench import (
        DT,
        FLOOR_SIZES,
        FLOOR_TARGET,
        KAPPAS,
        LENGTH,
        SPEEDUP_SIZES,
        SPEEDUP_TARGET,
        TOL,
        TRANSFORMS_PER_STEP,
    )

    lines = [
        f"KdV 2-soliton (kappa = {KAPPAS[0]:g}, {KAPPAS[1]:g}) on L = {LENGTH:g}; dt = {DT:g}, "
        f"adaptive tol = {TOL:g}; best of {budget.repeats} timings of >= {budget.min_time:g} s",
        "microseconds per step (adaptive: per accepted step); "
        f"floor = {TRANSFORMS_PER_STEP} r2c + {TRANSFORMS_PER_STEP} c2r transforms in Rust",
        "",
        f"{'n':>5}  {'scheme':<9}{'rust':>9}{'floor':>9}{'numpy':>10}"
        f"{'rust/floor':>12}{'':6}{'numpy/rust':>12}",
    ]
    for r in rows:
        line = (
            f"{r.n:>5}  {r.scheme:<9}{r.rust_us:>9.2f}{r.floor_us:>9.2f}{r.numpy_us:>10.1f}"
            f"{r.rust_over_floor:>12.2f} {_mark(r.floor_met()):<5}{r.numpy_over_rust:>12.1f} "
            f"{_mark(r.speedup_met())}"
        )
        lines.append(line.rstrip())
    lines.append("")
    lines.append(
        f"targets: rust/floor <= {FLOOR_TARGET:g} at n = {', '.join(map(str, FLOOR_SIZES))}; "
        f"numpy/rust >= {SPEEDUP_TARGET:g} at n = {', '.join(map(str, SPEEDUP_SIZES))}"
    )
    if any(math.isnan(r.floor_us) for r in rows):
        lines.append("floor not measured: this build of kdvsweep._core has no fft_floor")
    return "\n".join(lines)


# --- the step limits -----------------------------------------------------------------------------


def _steps(args: argparse.Namespace) -> int:
    from ..exceptions import ConfigError
    from ..steplimits import (
        DEFAULT_EQUATIONS,
        DEFAULT_F,
        DEFAULT_KAPPAS,
        DEFAULT_SCHEMES,
        DEFAULT_SIZES,
        cases,
        measure_all,
    )

    sizes = args.n or ((256, 512) if args.quick else DEFAULT_SIZES)
    kappas = args.kappas or ((1.0,) if args.quick else DEFAULT_KAPPAS)
    try:
        selected = cases(
            args.schemes or DEFAULT_SCHEMES,
            args.equations or DEFAULT_EQUATIONS,
            sizes,
            kappas,
            args.fifth or DEFAULT_F,
        )
        limits = measure_all(
            selected,
            on_limit=lambda lim: say(
                f"measured {lim.case.scheme} {lim.case.equation} n = {lim.case.n} "
                f"kappa = {lim.case.kappa:g}",
                "bench --steps",
            ),
        )
    except ConfigError as err:
        say(f"error: {err}", "bench --steps")
        return 2
    print(format_limits(limits))
    return 0


def format_limits(limits: Sequence[Limit]) -> str:
    """The measured limits, their spread per scheme, and the rule in use, as text."""
    from ..simulation import STEP_RULE, STEP_SAFETY
    from ..steplimits import ERROR_LIMIT, GROWTH, TRANSITS, WIDTHS, spread

    lines = [
        f"one soliton on {WIDTHS:g} widths of the kappa = 1 soliton, {TRANSITS:g} crossings of "
        f"the box; unstable: blow-up, error growing > {GROWTH:g}x from half time, or > "
        f"{ERROR_LIMIT:g}",
        "nl = dt * nonlinear_rate, mixed = dt * sqrt(nonlinear_rate * linear_rate) at the "
        "largest stable step",
        "",
        f"{'scheme':<8}{'equation':<9}{'f':>7}{'n':>6}{'kappa':>7}{'pts/w':>7}"
        f"{'dt':>11}{'nl':>8}{'mixed':>9}{'error':>9}  unstable by",
    ]
    for lim in limits:
        c = lim.case
        lines.append(
            f"{c.scheme:<8}{c.equation:<9}{c.f:>7g}{c.n:>6}{c.kappa:>7g}"
            f"{c.points_per_width:>7.1f}{lim.dt_stable:>11.3g}{lim.nonlinear:>8.3f}"
            f"{lim.mixed:>9.3f}{lim.error:>9.1e}  {lim.verdict}"
        )
    lines += ["", "spread per scheme (smallest .. largest):"]
    for sp in spread(limits):
        rule = STEP_RULE.get(sp.scheme)
        used = (
            f"; rule in use: nl <= {rule.nonlinear:.3g}"
            + (f", mixed <= {rule.mixed:.3g}" if rule.mixed != math.inf else "")
            if rule
            else ""
        )
        lines.append(
            f"  {sp.scheme:<8} {sp.cases} cases: nl {sp.nonlinear[0]:.3g} .. {sp.nonlinear[1]:.3g}"
            f", mixed {sp.mixed[0]:.3g} .. {sp.mixed[1]:.3g}{used}"
        )
        lines.append(
            f"  {'':<8} {sp.resolved} resolved: nl {sp.resolved_nonlinear[0]:.3g} .. "
            f"{sp.resolved_nonlinear[1]:.3g}, mixed {sp.resolved_mixed[0]:.3g} .. "
            f"{sp.resolved_mixed[1]:.3g}"
        )
    lines.append(
        f"resolved: no resolution warning; the rule (kdvsweep.simulation.STEP_RULE) is "
        f"{STEP_SAFETY:g} x the smallest resolved limit (ETDRK4: see its comment)"
    )
    return "\n".join(lines)


# --- the farm --------------------------------------------------------------------------------------


def _sweep(args: argparse.Namespace) -> int:
    from ..sweep.bench_sweep import GROWTH, QUICK_GROWTH, REFERENCE_RUNS, measure

    runs = args.runs if args.runs is not None else REFERENCE_RUNS
    growth = args.growth or (QUICK_GROWTH if args.quick else GROWTH)
    numpy_runs = args.numpy_runs or (10 if args.quick else runs)
    result = measure(
        runs,
        min(numpy_runs, runs),
        growth,
        args.keep,
        on_stage=lambda text: say(f"measuring: {text}", "bench --sweep"),
    )
    print(format_sweep(result))
    return 0


def format_sweep(b: SweepBenchmark) -> str:
    """The farm benchmark's figures as text."""
    from ..sweep.bench_sweep import (
        DT,
        FRAME_EVERY,
        KAPPA1,
        KAPPA2,
        KEEP_STRIDE,
        LENGTH,
        POINTS,
        T_END,
    )

    def load(key: str) -> str:
        one, five = b.loads.get(key, (math.nan, math.nan))
        return f"load average {one:.1f} (1 min), {five:.1f} (5 min)"

    lines = [
        f"reference sweep: {b.runs} KdV pair collisions, kappa1 = {KAPPA1}, kappa2 = {KAPPA2[0]}"
        f"..{KAPPA2[1]}, n = {POINTS}, L = {LENGTH:g}, t = 0..{T_END:g}, ETDRK4 dt = {DT:g}, "
        f"frames every {FRAME_EVERY:g} (every {KEEP_STRIDE}th stored)",
        f"machine: {b.cores} cores, {load('start')} at start",
        "",
        f"{'':46s} {'runs/hour':>9s} {'wall s/run':>10s} {'CPU s/run':>9s}  "
        f"{'vs NumPy pool: rate':>19s} {'CPU':>5s}",
    ]
    numpy_rate, numpy_cpu = b.rates[b.numpy_name]
    for name, (rate, cpu) in b.rates.items():
        lines.append(
            f"{name:46s} {rate:9.0f} {3600 / rate:10.3f} {cpu:9.3f}  "
            f"{rate / numpy_rate:18.1f}x {numpy_cpu / cpu:4.1f}x"
        )
    lines += [
        "",
        f"scaling efficiency at 2 workers: {100 * b.efficiency:.0f}% (wall: farm 2 / (2 x farm 1))",
        f"  CPU per run, all processes, 1 worker / 2 workers: {100 * b.cpu_efficiency:.0f}% "
        "(what the efficiency would be on 2 free cores)",
        f"cluster start-up (not counted above): 1 worker {b.startups[1]:.1f} s, "
        f"2 workers {b.startups[2]:.1f} s",
        f"serial run time: stepping {100 * b.serial_step_share:.0f}%, "
        f"analysis {100 * b.serial_analysis_share:.0f}% "
        f"(analysis/stepping {100 * b.serial_analysis_per_step:.0f}%); NumPy runs: "
        f"stepping {100 * b.numpy_step_share:.0f}%",
    ]
    if b.failed_serial:
        lines.append(f"warning: runs {b.failed_serial} failed in the serial loop")
    lines += [
        f"{load('after comparison')} after the comparison",
        "",
        "sweep growth on 2 workers (one warm cluster):",
        f"{'runs':>6s} {'runs/hour':>9s} {'overhead':>9s} {'CPU ovh':>8s} {'storage':>8s} "
        f"{'client RSS':>11s} {'worker RSS':>11s}",
    ]
    for g in b.growth:
        lines.append(
            f"{g.runs:6d} {g.rate:9.0f} {100 * g.overhead:8.1f}% {100 * g.cpu_overhead:7.1f}% "
            f"{100 * g.storage:7.1f}% {g.client_rss / 2**20:8.0f} MB {g.worker_rss / 2**20:8.0f} MB"
        )
    lines += [
        f"{load('end')} at the end",
        "",
        "overhead = (elapsed x workers - sum of run wall times) / sum of run wall times",
        "CPU ovh  = (CPU of client, scheduler and workers - sum of run CPU) / sum of run CPU",
        "storage  = client wall time writing the store / sum of run wall times (overlaps)",
    ]
    return "\n".join(lines)


# --- the machinery at scale ----------------------------------------------------------------------


def _scale(args: argparse.Namespace) -> int:
    from ..exceptions import ConfigError
    from ..sweep.bench_sweep import (
        QUICK_SCALE_LOADS,
        QUICK_SCALE_RUNS,
        SCALE_LOADS,
        SCALE_RUNS,
        measure_scale,
    )

    runs = args.scale_runs or (QUICK_SCALE_RUNS if args.quick else SCALE_RUNS)
    loads = args.scale_loads or (QUICK_SCALE_LOADS if args.quick else SCALE_LOADS)
    try:
        result = measure_scale(
            runs,
            loads,
            args.keep,
            on_stage=lambda text: say(f"measuring: {text}", "bench --scale"),
        )
    except (ConfigError, RuntimeError) as err:
        say(f"error: {err}", "bench --scale")
        return 2
    print(format_scale(result))
    return 0


def _mb(size: float) -> str:
    return f"{size / 2**20:.1f} MB"


def format_scale(b: ScaleBenchmark) -> str:
    """The machinery benchmark's figures as text, totals and per run."""
    from ..sweep.bench_sweep import (
        SCALE_DT,
        SCALE_END,
        SCALE_KAPPA,
        SCALE_LENGTH,
        SCALE_POINTS,
        SCALE_TABLES,
    )

    lines = [
        f"scale sweeps: one KdV soliton, kappa = {SCALE_KAPPA[0]}..{SCALE_KAPPA[1]} on one axis, "
        f"n = {SCALE_POINTS}, L = {SCALE_LENGTH:g}, ETDRK4 dt = {SCALE_DT:g} to t = "
        f"{SCALE_END:g}, frames at start and end (none kept); {b.cores} cores",
        "",
        "loading (load_sweep, a fresh process per size):",
        f"{'runs':>9} {'load s':>9} {'us/run':>9} {'peak added':>11} {'bytes/run':>10} "
        f"{'process peak':>13}",
    ]
    for ld in b.loads:
        lines.append(
            f"{ld.runs:9d} {ld.seconds:9.3f} {1e6 * ld.seconds_per_run:9.1f} "
            f"{_mb(ld.memory):>11} {ld.bytes_per_run:10.0f} {_mb(ld.peak_rss):>13}"
        )
    if b.runs:
        files = " ".join(f"{t:>9}" for t in SCALE_TABLES)
        lines += [
            "",
            f"running (kdvsweep.sweep.run, {b.workers} workers, a fresh client per size) "
            "and reading:",
            f"{'runs':>9} {'failed':>7} {'wall s':>8} {'run CPU s':>10} {'wall-CPU ms/run':>15} "
            f"{'core ms/run':>12} "
            f"{files} {'load s':>7} {'us/run':>7} {'read s':>7} {'us/run':>7} "
            f"{'sweep peak':>11} {'read peak':>10}",
        ]
        for r in b.runs:
            counts = " ".join(f"{r.files.get(t, 0):>9d}" for t in SCALE_TABLES)
            lines.append(
                f"{r.runs:9d} {r.failed:7d} {r.wall_seconds:8.1f} {r.cpu_seconds:10.2f} "
                f"{1e3 * r.overhead_per_run:15.2f} {1e3 * r.core_overhead_per_run:12.2f} {counts} "
                f"{r.load_seconds:7.3f} "
                f"{1e6 * r.load_per_run:7.1f} {r.read_seconds:7.3f} {1e6 * r.read_per_run:7.1f} "
                f"{_mb(r.client_rss):>11} {_mb(r.read_rss):>10}"
            )
        lines += [
            "",
            "wall-CPU = (wall time of the run call - sum of the runs' cpu_time) / runs; the wall time "
            "includes the cluster's start-up and the final compaction; core = (wall x workers - "
            "sum of cpu_time) / runs, the core-seconds the farm adds to a run (wall-CPU is "
            "negative when the workers overlap)",
            f"files: per table of the finished store; load = kdvsweep.load(out), read = "
            f"pandas.read_parquet(out / 'runs'); rows read {', '.join(str(r.rows_read) for r in b.runs)}",
            "sweep peak = the client's peak resident memory up to the end of the sweep (its "
            "compaction included); read peak = once both reads hold their tables too",
        ]
    lines.append(
        "peak added = the loader's process peak (getrusage maxrss) minus its memory after imports"
    )
    return "\n".join(lines)


__all__ = ["format_limits", "format_rows", "format_scale", "format_sweep", "register"]


# --- accuracy ------------------------------------------------------------------------------------


def _accuracy(args: argparse.Namespace) -> int:
    from ..sweep import bench_accuracy as ba

    targets = tuple(args.targets) if args.targets is not None else ba.TARGETS
    workers = args.workers if args.workers is not None else 2
    if workers < 1:
        say(f"error: --workers {workers}: expected at least 1", "bench")
        return 2
    options: dict[str, Any] = {}
    if args.quick:
        options = {"pair_k2": ba.QUICK_PAIR_K2, "triple_k": ba.QUICK_TRIPLE_K}
    try:
        result = ba.measure(
            targets, workers=workers, on_message=lambda m: say(m, "bench"), **options
        )
    except ValueError as exc:
        say(f"error: {exc}", "bench")
        return 2
    print(format_accuracy(result, targets))
    if args.strict and not all(_accuracy_met(result, t) for t in targets):
        return 1
    return 0


def _accuracy_met(result: AccuracyBenchmark, target: float) -> bool:
    """Every shift reported and within the target, 90 % bracketed, none understated more than 3x,
    and for targets the hand-picked settings reach (``HAND_TARGET``) a cost at most theirs."""
    from ..sweep.bench_accuracy import HAND_TARGET

    s = result.summary(target)
    return (
        not result.failures
        and s["within"] == s["shifts"]
        and s["bracketed"] >= 0.9
        and s["max_understatement"] <= 3.0
        and (target < HAND_TARGET or s["cost_ratio"] <= 1.0)
    )


def format_accuracy(result: AccuracyBenchmark, targets: Sequence[float]) -> str:
    """The accuracy benchmark's table and summary."""
    lines = [
        f"{'sweep':<7} {'target':>6} {'run':>3} {'equation, kappas':<30} {'n':>5} {'dt':>9} "
        f"{'sol':>3} {'error':>9} {'estimate':>9} {'brackets':>8} {'sum rule':>9}"
    ]
    for c in result.checks:
        error = f"{c.error:9.2e}" if c.reported else f"{'unrep.':>9}"
        mark = ("yes" if c.brackets else "NO") if c.reported else "-"
        lines.append(
            f"{c.sweep:<7} {c.target:>6.0e} {c.run_id:>3} {c.label:<30} {c.n:>5} {c.dt:>9.3g} "
            f"{c.soliton:>3} {error} {c.estimate:>9.2e} {mark:>8} {c.balance:>9.1e}"
        )
    lines.append("")
    for target in targets:
        s = result.summary(target)
        parts = [
            f"target {target:g}: {int(s['within'])}/{int(s['shifts'])} shifts within the target "
            f"({int(s['reported'])} reported), largest error {s['max_error']:.2e}",
            f"estimates bracket {100 * s['bracketed']:.0f} %, largest understatement "
            f"{s['max_understatement']:.2f}x",
        ]
        for sweep in sorted({c.sweep for c in result.checks if c.target == target}):
            cost = result.costs.get((sweep, target), math.nan)
            hand = result.hand_costs.get(sweep, math.nan)
            verified = result.verified_costs.get((sweep, target), math.nan)
            parts.append(
                f"{sweep}: cost {cost:.3g} = {cost / hand:.2f} x hand-picked ({hand:.3g}); "
                f"with the verification re-runs {verified / hand:.2f} x"
            )
        parts.append(f"all: cost {s['cost_ratio']:.2f} x hand-picked")
        lines.append("; ".join(parts[:2]))
        lines += ["  " + p for p in parts[2:]]
    for failure in result.failures:
        lines.append(f"failed: {failure}")
    return "\n".join(lines)
