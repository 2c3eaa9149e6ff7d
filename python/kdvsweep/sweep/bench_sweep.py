"""``kdvsweep bench --sweep``: throughput of the farm on a reference sweep of KdV pair collisions.

The reference sweep: kappa1 = 1 overtakes kappa2 = 0.5 ... 0.7 (evenly spaced), n = 512,
L = 80, t from 0 to 38, ETDRK4 with dt = 2.5e-3, frames every 0.1 for the collision analysis
(every 10th frame stored). The pair starts half its relative travel apart, so the collision happens
mid-run. Each run is stepped, analysed (peak tracking, asymptotic fits, phase shifts) and stored
exactly as in ``kdvsweep run``.

Measured, in runs per hour:

* a serial loop over the runs in this process (no dask, no store);
* the same runs with the NumPy reference schemes (:mod:`kdvsweep.reference`) on a 2-process pool
  (``concurrent.futures``; a baseline, not our farm), analysis included;
* the farm (:func:`kdvsweep.sweep.farm.run_sweep`) on an embedded cluster of 1 and 2 workers,
  into a store, cluster start-up excluded (it is reported apart).

Then, on 2 workers, sweeps of growing size: farm overhead ``(elapsed * workers - compute) /
compute`` (scheduling, transfers, storage, idle tail), the client's storage time over compute, and
the peak resident memory of the client and of the workers, sampled every 0.2 s.
"""

from __future__ import annotations

import argparse
import concurrent.futures as cf
import math
import multiprocessing
import os
import shutil
import sys
import tempfile
import threading
import time
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..model import Equation, Grid
from ..reference import ReferenceSimulation
from ..results import load
from .config import Sweep, load_sweep
from .farm import SweepReport, local_client, run_sweep
from .runner import execute

KAPPA1 = 1.0
KAPPA2 = (0.5, 0.7)
POINTS = 512
LENGTH = 80.0
T_END = 38.0
DT = 2.5e-3
FRAME_EVERY = 0.1
KEEP_STRIDE = 10
REFERENCE_RUNS = 40
GROWTH = (40, 200, 1000)
QUICK_GROWTH = (40, 200)


def reference_text(count: int) -> str:
    """The sweep file of the reference sweep with ``count`` runs."""
    return f"""# kdvsweep bench --sweep: the reference sweep of KdV pair collisions.
[sweep]
name = "bench-sweep-{count}"

[[vary]]
k2 = {{ from = {KAPPA2[0]}, to = {KAPPA2[1]}, count = {count} }}

[derive]
# relative travel of the pair by t_end is 4 (k1^2 - k2^2) t_end: start half of it apart
gap = "2 * ({KAPPA1}^2 - k2^2) * {T_END}"

[model]
equation = "kdv"
points = {POINTS}
length = {LENGTH}
scheme = "etdrk4"
dt = {DT}

[initial]
kind = "solitons"
kappa = [{KAPPA1}, "k2"]
position = ["-gap/2", "gap/2"]

[run]
end = {T_END}
frame_every = {FRAME_EVERY}
keep_frames = true
keep_stride = {KEEP_STRIDE}
"""


def reference_sweep(count: int, folder: Path) -> Sweep:
    """Write and load the reference sweep of ``count`` runs."""
    path = folder / f"bench-{count}.toml"
    path.write_text(reference_text(count), encoding="utf-8")
    return load_sweep(path)


def numpy_simulation(
    grid: Grid, equation: Equation, scheme: str, dt: float, tol: float | None
) -> ReferenceSimulation:
    """The NumPy stepper, in the runner's factory signature (module level: picklable)."""
    return ReferenceSimulation(grid, equation, scheme=scheme, dt=dt, tol=tol)


def numpy_run(spec: Any) -> dict[str, Any]:
    """One run of the baseline: NumPy stepping, the same analysis; the run's row."""
    return execute(spec, simulation=numpy_simulation).run_row


def per_hour(runs: int, seconds: float) -> float:
    return 3600.0 * runs / seconds if seconds > 0 else math.nan


class ProcessSampler:
    """Peak RSS (sampled every ``every`` s in a thread) and CPU time used by some processes."""

    def __init__(self, pids: Sequence[int], every: float = 0.2) -> None:
        import psutil

        self._procs = {pid: psutil.Process(pid) for pid in pids}
        self.peak = dict.fromkeys(pids, 0)
        self.cpu = dict.fromkeys(pids, 0.0)
        self._every = every
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._loop, daemon=True)

    def _cpu(self) -> dict[int, float]:
        out = {}
        for pid, proc in self._procs.items():
            try:
                t = proc.cpu_times()
                out[pid] = t.user + t.system
            except Exception:  # a worker restarting: count nothing for it
                out[pid] = math.nan
        return out

    def _loop(self) -> None:
        while not self._stop.is_set():
            self.sample()
            self._stop.wait(self._every)

    def sample(self) -> None:
        for pid, proc in self._procs.items():
            try:
                self.peak[pid] = max(self.peak[pid], proc.memory_info().rss)
            except Exception:  # a worker restarting: skip this sample
                pass

    def __enter__(self) -> ProcessSampler:
        self._start = self._cpu()
        self._thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        self._thread.join()
        self.sample()
        end = self._cpu()
        self.cpu = {pid: end[pid] - self._start[pid] for pid in self._procs}


@contextmanager
def _timed_cluster(workers: int, warm: Any) -> Iterator[tuple[Any, float]]:
    """An embedded cluster, its start-up time, and every worker warmed up with one run.

    The warm-up (imports, first-call costs) matches the one of the serial loop, so that the
    rates compare steady states; start-up is reported apart.
    """
    start = time.perf_counter()
    with local_client(workers) as client:
        startup = time.perf_counter() - start
        client.run(execute, warm)
        yield client, startup


@dataclass
class FarmRun:
    """One measured farm sweep."""

    report: SweepReport
    sampler: ProcessSampler
    run_cpu: float  # sum over runs of their own CPU time (cpu_time column)

    @property
    def rate(self) -> float:
        return per_hour(self.report.stored, self.report.elapsed)

    @property
    def total_cpu(self) -> float:
        """CPU time of the client (with the scheduler) and the workers during the sweep."""
        return sum(self.sampler.cpu.values())

    @property
    def cpu_overhead(self) -> float:
        """CPU spent on anything but the runs (scheduling, transfers, storage), over run CPU."""
        return (self.total_cpu - self.run_cpu) / self.run_cpu


def _farm(client: Any, sweep: Sweep, out: Path) -> FarmRun:
    pids = [os.getpid(), *client.run(os.getpid).values()]
    with ProcessSampler(pids) as sampler:
        report = run_sweep(sweep, out, client, progress=False)
    runs = load(out).runs
    return FarmRun(report, sampler, float(runs["cpu_time"].sum()))


def _say(text: str = "") -> None:
    print(text, flush=True)


def _load() -> str:
    one, five, _ = os.getloadavg()
    return f"load average {one:.1f} (1 min), {five:.1f} (5 min)"


def main(argv: Sequence[str] | None = None) -> int:
    """Run the sweep benchmark and print its figures; returns 0."""
    parser = argparse.ArgumentParser(
        prog="kdvsweep bench --sweep",
        description="Throughput of the sweep farm on the reference sweep of KdV pair collisions.",
    )
    parser.add_argument(
        "--runs", type=int, default=REFERENCE_RUNS, help="runs of the reference sweep"
    )
    parser.add_argument(
        "--numpy-runs",
        type=int,
        default=None,
        help="runs of the NumPy baseline (evenly spread subset; default all, 10 with --quick)",
    )
    parser.add_argument(
        "--growth",
        default=None,
        help=f"comma-separated sweep sizes for overhead and memory (default {GROWTH})",
    )
    parser.add_argument(
        "--quick", action="store_true", help=f"smaller: NumPy on 10 runs, growth {QUICK_GROWTH}"
    )
    parser.add_argument("--keep", type=Path, help="keep the stores in this folder")
    args = parser.parse_args(list(argv) if argv is not None else None)
    growth = (
        tuple(int(v) for v in args.growth.split(","))
        if args.growth
        else (QUICK_GROWTH if args.quick else GROWTH)
    )
    numpy_runs = args.numpy_runs or (10 if args.quick else args.runs)

    folder = Path(tempfile.mkdtemp(prefix="kdvsweep-bench-")) if args.keep is None else args.keep
    folder.mkdir(parents=True, exist_ok=True)
    try:
        _bench(args.runs, numpy_runs, growth, folder)
    finally:
        if args.keep is None:
            shutil.rmtree(folder, ignore_errors=True)
    return 0


def _bench(runs: int, numpy_runs: int, growth: Sequence[int], folder: Path) -> None:
    sweep = reference_sweep(runs, folder)
    _say(
        f"reference sweep: {runs} KdV pair collisions, kappa1 = {KAPPA1}, kappa2 = {KAPPA2[0]}"
        f"..{KAPPA2[1]}, n = {POINTS}, L = {LENGTH:g}, t = 0..{T_END:g}, ETDRK4 dt = {DT:g}, "
        f"frames every {FRAME_EVERY:g} (every {KEEP_STRIDE}th stored)"
    )
    _say(f"machine: {os.cpu_count()} cores, {_load()} at start")
    # name -> (runs per hour, CPU seconds per run of the processes doing the work)
    table: dict[str, tuple[float, float]] = {}

    # 1. serial loop, this process, the Rust core
    execute(sweep.runs[0])  # warm-up: imports, first-call costs
    cpu0, start = time.process_time(), time.perf_counter()
    serial = [execute(spec).run_row for spec in sweep.runs]
    serial_s, serial_cpu = time.perf_counter() - start, time.process_time() - cpu0
    bad = [r["run_id"] for r in serial if r["status"] != "ok"]
    table["serial loop, 1 process (Rust core)"] = (per_hour(runs, serial_s), serial_cpu / runs)
    share = {k: sum(r[k] for r in serial) for k in ("step_time", "analysis_time", "wall_time")}

    # 2. NumPy reference on a 2-process pool
    pick = sorted({round(i * (runs - 1) / max(numpy_runs - 1, 1)) for i in range(numpy_runs)})
    subset = [sweep.runs[i] for i in pick]
    ctx = multiprocessing.get_context("spawn")
    with cf.ProcessPoolExecutor(2, mp_context=ctx) as pool:
        list(pool.map(numpy_run, subset[:2]))  # warm-up both processes
        start = time.perf_counter()
        np_rows = list(pool.map(numpy_run, subset))
        numpy_s = time.perf_counter() - start
    numpy_name = f"NumPy schemes, 2-process pool ({len(subset)} runs)"
    np_cpu = sum(r["cpu_time"] for r in np_rows) / len(np_rows)
    table[numpy_name] = (per_hour(len(subset), numpy_s), np_cpu)
    np_share = sum(r["step_time"] for r in np_rows) / sum(r["wall_time"] for r in np_rows)

    # 3. the farm, 1 and 2 workers
    farms: dict[int, FarmRun] = {}
    startups: dict[int, float] = {}
    for workers in (1, 2):
        with _timed_cluster(workers, sweep.runs[0]) as (client, startup):
            startups[workers] = startup
            farms[workers] = _farm(client, sweep, folder / f"farm-{workers}")
        label = f"farm, {workers} worker{'s' if workers > 1 else ''} (store included)"
        farm = farms[workers]
        table[label] = (farm.rate, farm.total_cpu / farm.report.stored)

    numpy_rate, numpy_cpu = table[numpy_name]
    _say()
    _say(
        f"{'':46s} {'runs/hour':>9s} {'wall s/run':>10s} {'CPU s/run':>9s}  "
        f"{'vs NumPy pool: rate':>19s} {'CPU':>5s}"
    )
    for name, (rate, cpu) in table.items():
        _say(
            f"{name:46s} {rate:9.0f} {3600 / rate:10.3f} {cpu:9.3f}  "
            f"{rate / numpy_rate:18.1f}x {numpy_cpu / cpu:4.1f}x"
        )
    efficiency = farms[2].rate / (2 * farms[1].rate)
    cpu_eff = (farms[1].total_cpu / farms[1].report.stored) / (
        farms[2].total_cpu / farms[2].report.stored
    )
    _say()
    _say(f"scaling efficiency at 2 workers: {100 * efficiency:.0f}% (wall: farm 2 / (2 x farm 1))")
    _say(
        f"  CPU per run, all processes, 1 worker / 2 workers: {100 * cpu_eff:.0f}% "
        "(what the efficiency would be on 2 free cores)"
    )
    _say(
        f"cluster start-up (not counted above): 1 worker {startups[1]:.1f} s, "
        f"2 workers {startups[2]:.1f} s"
    )
    _say(
        f"serial run time: stepping {100 * share['step_time'] / share['wall_time']:.0f}%, "
        f"analysis {100 * share['analysis_time'] / share['wall_time']:.0f}%; NumPy runs: "
        f"stepping {100 * np_share:.0f}%"
    )
    if bad:
        _say(f"warning: runs {bad} failed in the serial loop")
    _say(f"{_load()} after the comparison")

    # 4. growth: overhead and memory on 2 workers
    _say()
    _say("sweep growth on 2 workers (one warm cluster):")
    _say(
        f"{'runs':>6s} {'runs/hour':>9s} {'overhead':>9s} {'CPU ovh':>8s} {'storage':>8s} "
        f"{'client RSS':>11s} {'worker RSS':>11s}"
    )
    with _timed_cluster(2, sweep.runs[0]) as (client, _):
        for count in growth:
            grown = _farm(client, reference_sweep(count, folder), folder / f"grow-{count}")
            report, mem = grown.report, grown.sampler
            client_rss = mem.peak[os.getpid()] / 2**20
            worker_rss = max(v for k, v in mem.peak.items() if k != os.getpid()) / 2**20
            _say(
                f"{count:6d} {grown.rate:9.0f} {100 * report.overhead():8.1f}% "
                f"{100 * grown.cpu_overhead:7.1f}% {100 * report.store_time / report.compute:7.1f}% "
                f"{client_rss:8.0f} MB {worker_rss:8.0f} MB"
            )
    _say(f"{_load()} at the end")
    _say()
    _say("overhead = (elapsed x workers - sum of run wall times) / sum of run wall times")
    _say("CPU ovh  = (CPU of client, scheduler and workers - sum of run CPU) / sum of run CPU")
    _say("storage  = client wall time writing the store / sum of run wall times (overlaps)")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
