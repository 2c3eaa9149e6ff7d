"""The farm benchmark (``kdvsweep bench --sweep``): throughput of the farm on a reference sweep of KdV pair collisions.

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

:func:`measure` returns every figure in a :class:`SweepBenchmark`; the command prints it.
"""

from __future__ import annotations

import concurrent.futures as cf
import math
import multiprocessing
import os
import shutil
import tempfile
import threading
import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..exceptions import ConfigError
from ..model import Equation, Grid
from ..reference import ReferenceSimulation

if TYPE_CHECKING:
    from .config import Sweep
    from .farm import SweepReport

# The loader, the farm (dask), the runner (the analysis, scipy) and the results (pandas) are
# imported where they are used: the command line builds its parser from this module's constants.

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
    from .config import load_sweep

    return load_sweep(path)


def numpy_simulation(
    grid: Grid, equation: Equation, scheme: str, dt: float, tol: float | None
) -> ReferenceSimulation:
    """The NumPy stepper, in the runner's factory signature (module level: picklable)."""
    return ReferenceSimulation(grid, equation, scheme=scheme, dt=dt, tol=tol)


def numpy_run(spec: Any) -> dict[str, Any]:
    """One run of the baseline: NumPy stepping, the same analysis; the run's row."""
    from .runner import execute

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
    from .farm import local_client
    from .runner import execute

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
    from ..results import load
    from .farm import run_sweep

    pids = [os.getpid(), *client.run(os.getpid).values()]
    with ProcessSampler(pids) as sampler:
        report = run_sweep(sweep, out, client)
    runs = load(out).runs
    return FarmRun(report, sampler, float(runs["cpu_time"].sum()))


def load_average() -> tuple[float, float]:
    """The 1 and 5 minute load averages of the machine."""
    one, five, _ = os.getloadavg()
    return one, five


@dataclass(frozen=True)
class GrowthRow:
    """The farm on a sweep of ``runs`` runs, 2 workers (see the module notes for the terms)."""

    runs: int
    rate: float  # runs per hour
    overhead: float  # (elapsed x workers - run wall time) / run wall time
    cpu_overhead: float  # (CPU of all processes - run CPU) / run CPU
    storage: float  # client wall time writing the store / run wall time
    client_rss: float  # peak resident memory of the client, bytes
    worker_rss: float  # peak resident memory of the largest worker, bytes


@dataclass
class SweepBenchmark:
    """Every figure of one farm benchmark.

    ``rates`` maps a way of running the reference sweep to ``(runs per hour, CPU seconds per run
    of the processes doing the work)``; ``numpy_name`` is the key of the NumPy baseline in it.
    """

    runs: int
    cores: int
    loads: dict[str, tuple[float, float]] = field(default_factory=dict)
    rates: dict[str, tuple[float, float]] = field(default_factory=dict)
    numpy_name: str = ""
    efficiency: float = math.nan  # farm 2 / (2 x farm 1), wall
    cpu_efficiency: float = math.nan  # CPU per run, 1 worker / 2 workers
    startups: dict[int, float] = field(default_factory=dict)  # workers -> cluster start-up, s
    serial_step_share: float = math.nan  # of serial run wall time: stepping
    serial_analysis_share: float = math.nan  # of serial run wall time: analysis
    serial_analysis_per_step: float = math.nan  # serial runs: analysis time / stepping time
    numpy_step_share: float = math.nan
    failed_serial: list[int] = field(default_factory=list)
    growth: list[GrowthRow] = field(default_factory=list)


def measure(
    runs: int = REFERENCE_RUNS,
    numpy_runs: int | None = None,
    growth: Sequence[int] = GROWTH,
    keep: Path | None = None,
    on_stage: Callable[[str], None] | None = None,
) -> SweepBenchmark:
    """Run the farm benchmark; ``on_stage`` hears what is being measured as it starts.

    Parameters
    ----------
    runs
        Runs of the reference sweep.
    numpy_runs
        Runs of the NumPy baseline (an evenly spread subset; default all).
    growth
        Sweep sizes for the overhead and memory figures.
    keep
        Keep the stores in this folder (default: a temporary folder, removed at the end).
    on_stage
        Called with a short description of each stage.
    """
    if runs < 2 or (numpy_runs is not None and numpy_runs < 2) or any(g < 2 for g in growth):
        raise ConfigError(
            f"bench --sweep: sweep sizes must be at least 2, got runs = {runs}, "
            f"numpy runs = {numpy_runs}, growth = {list(growth)}"
        )
    folder = Path(tempfile.mkdtemp(prefix="kdvsweep-bench-")) if keep is None else keep
    folder.mkdir(parents=True, exist_ok=True)
    try:
        return _bench(runs, numpy_runs or runs, growth, folder, on_stage or (lambda _: None))
    finally:
        if keep is None:
            shutil.rmtree(folder, ignore_errors=True)


def _bench(
    runs: int, numpy_runs: int, growth: Sequence[int], folder: Path, stage: Callable[[str], None]
) -> SweepBenchmark:
    from .runner import execute

    sweep = reference_sweep(runs, folder)
    out = SweepBenchmark(runs=runs, cores=os.cpu_count() or 1)
    out.loads["start"] = load_average()
    table = out.rates

    # 1. serial loop, this process, the Rust core
    stage("serial loop")
    execute(sweep.runs[0])  # warm-up: imports, first-call costs
    cpu0, start = time.process_time(), time.perf_counter()
    serial = [execute(spec).run_row for spec in sweep.runs]
    serial_s, serial_cpu = time.perf_counter() - start, time.process_time() - cpu0
    out.failed_serial = [int(r["run_id"]) for r in serial if r["status"] != "ok"]
    table["serial loop, 1 process (Rust core)"] = (per_hour(runs, serial_s), serial_cpu / runs)
    share = {k: sum(r[k] for r in serial) for k in ("step_time", "analysis_time", "wall_time")}
    out.serial_step_share = share["step_time"] / share["wall_time"]
    out.serial_analysis_share = share["analysis_time"] / share["wall_time"]
    out.serial_analysis_per_step = share["analysis_time"] / share["step_time"]

    # 2. NumPy reference on a 2-process pool
    stage("NumPy baseline")
    pick = sorted({round(i * (runs - 1) / max(numpy_runs - 1, 1)) for i in range(numpy_runs)})
    subset = [sweep.runs[i] for i in pick]
    ctx = multiprocessing.get_context("spawn")
    with cf.ProcessPoolExecutor(2, mp_context=ctx) as pool:
        list(pool.map(numpy_run, subset[:2]))  # warm-up both processes
        start = time.perf_counter()
        np_rows = list(pool.map(numpy_run, subset))
        numpy_s = time.perf_counter() - start
    out.numpy_name = f"NumPy schemes, 2-process pool ({len(subset)} runs)"
    np_cpu = sum(r["cpu_time"] for r in np_rows) / len(np_rows)
    table[out.numpy_name] = (per_hour(len(subset), numpy_s), np_cpu)
    out.numpy_step_share = sum(r["step_time"] for r in np_rows) / sum(
        r["wall_time"] for r in np_rows
    )

    # 3. the farm, 1 and 2 workers
    farms: dict[int, FarmRun] = {}
    for workers in (1, 2):
        stage(f"farm, {workers} worker(s)")
        with _timed_cluster(workers, sweep.runs[0]) as (client, startup):
            out.startups[workers] = startup
            farms[workers] = _farm(client, sweep, folder / f"farm-{workers}")
        label = f"farm, {workers} worker{'s' if workers > 1 else ''} (store included)"
        farm = farms[workers]
        table[label] = (farm.rate, farm.total_cpu / farm.report.stored)
    out.efficiency = farms[2].rate / (2 * farms[1].rate)
    out.cpu_efficiency = (farms[1].total_cpu / farms[1].report.stored) / (
        farms[2].total_cpu / farms[2].report.stored
    )
    out.loads["after comparison"] = load_average()

    # 4. growth: overhead and memory on 2 workers
    with _timed_cluster(2, sweep.runs[0]) as (client, _):
        for count in growth:
            stage(f"growth: {count} runs on 2 workers")
            grown = _farm(client, reference_sweep(count, folder), folder / f"grow-{count}")
            report, mem = grown.report, grown.sampler
            out.growth.append(
                GrowthRow(
                    runs=count,
                    rate=grown.rate,
                    overhead=report.overhead(),
                    cpu_overhead=grown.cpu_overhead,
                    storage=report.store_time / report.compute,
                    client_rss=float(mem.peak[os.getpid()]),
                    worker_rss=float(max(v for k, v in mem.peak.items() if k != os.getpid())),
                )
            )
    out.loads["end"] = load_average()
    return out


# --- the machinery at scale (kdvsweep bench --scale) ---------------------------------------------

#: The scale sweep: one KdV soliton (kappa on one axis from SCALE_KAPPA[0] to [1]) on n = 64
#: points, stepped to t = 0.01 with frames at the start and the end only, none kept; the physics
#: costs milliseconds, so what is measured is the machinery (loader, farm, store, readers).
SCALE_POINTS = 64
SCALE_LENGTH = 30.0
SCALE_KAPPA = (0.25, 0.3)
SCALE_DT = 1e-3
SCALE_END = 0.01
#: Sizes loaded and run by default, and sizes only loaded (the loader alone is cheaper).
SCALE_RUNS = (1_000, 10_000)
SCALE_LOADS = (100_000, 1_000_000)
QUICK_SCALE_RUNS = (1_000,)
QUICK_SCALE_LOADS = (10_000,)
#: Workers of the embedded cluster of the scale runs.
SCALE_WORKERS = 2
#: The tables of a store whose files are counted.
SCALE_TABLES = ("runs", "solitons", "frames")


def scale_text(count: int) -> str:
    """The sweep file of the scale benchmark with ``count`` runs (one [[vary]] axis)."""
    return f"""# kdvsweep bench --scale: runs of negligible physics, to measure the machinery.
[sweep]
name = "bench-scale-{count}"

[[vary]]
k = {{ from = {SCALE_KAPPA[0]}, to = {SCALE_KAPPA[1]}, count = {count} }}

[model]
equation = "kdv"
points = {SCALE_POINTS}
length = {SCALE_LENGTH}
scheme = "etdrk4"
dt = {SCALE_DT}

[initial]
kind = "solitons"
kappa = ["k"]
position = [0.0]

[run]
end = {SCALE_END}
frame_every = {SCALE_END}
keep_frames = false
"""


@dataclass(frozen=True)
class ScaleLoad:
    """Loading (``load_sweep``) one scale sweep in a fresh process.

    ``baseline_rss`` is the process's resident memory after its imports, before loading;
    ``peak_rss`` its largest resident memory (``getrusage`` maxrss) once the sweep is loaded.
    """

    runs: int
    seconds: float
    baseline_rss: int
    peak_rss: int

    @property
    def memory(self) -> int:
        """Bytes the loading added to the process's peak (peak minus baseline)."""
        return max(self.peak_rss - self.baseline_rss, 0)

    @property
    def seconds_per_run(self) -> float:
        """Load seconds per run."""
        return self.seconds / self.runs

    @property
    def bytes_per_run(self) -> float:
        """Bytes of peak memory per run."""
        return self.memory / self.runs


@dataclass(frozen=True)
class ScaleRun:
    """One scale sweep run into a new store on an embedded cluster, in a fresh client process.

    ``wall_seconds`` is the time of ``kdvsweep.sweep.run`` (cluster start-up and the final
    compaction included), ``cpu_seconds`` the sum of the runs' own ``cpu_time``; ``files`` the
    files of each table of the finished store; ``load_seconds`` the time of ``kdvsweep.load`` and
    ``read_seconds`` that of ``pandas.read_parquet(out / "runs")`` (``rows_read`` rows);
    ``client_rss`` the client process's peak resident memory during the sweep (start, runs,
    compaction), ``read_rss`` its peak once the tables are read too (both held at once).
    """

    runs: int
    stored: int
    failed: int
    wall_seconds: float
    cpu_seconds: float
    files: dict[str, int]
    load_seconds: float
    read_seconds: float
    rows_read: int
    client_rss: int
    read_rss: int = 0
    workers: int = SCALE_WORKERS

    @property
    def overhead_per_run(self) -> float:
        """Seconds per run of the farm beyond the runs' own CPU: (wall - CPU sum) / runs."""
        return (self.wall_seconds - self.cpu_seconds) / self.runs

    @property
    def core_overhead_per_run(self) -> float:
        """Core-seconds per run beyond the runs' own CPU: (wall x workers - CPU sum) / runs."""
        return (self.wall_seconds * self.workers - self.cpu_seconds) / self.runs

    @property
    def cpu_per_run(self) -> float:
        """The runs' own CPU seconds per run."""
        return self.cpu_seconds / self.runs

    @property
    def load_per_run(self) -> float:
        """Seconds of ``kdvsweep.load`` per run."""
        return self.load_seconds / self.runs

    @property
    def read_per_run(self) -> float:
        """Seconds of ``pandas.read_parquet`` per run."""
        return self.read_seconds / self.runs

    @property
    def rss_per_run(self) -> float:
        """Bytes of the client's peak resident memory per run."""
        return self.client_rss / self.runs


@dataclass
class ScaleBenchmark:
    """The figures of ``kdvsweep bench --scale``: loads (every size), runs (the run sizes)."""

    loads: list[ScaleLoad] = field(default_factory=list)
    runs: list[ScaleRun] = field(default_factory=list)
    workers: int = SCALE_WORKERS
    cores: int = field(default_factory=lambda: os.cpu_count() or 1)


def _rss() -> int:
    """This process's resident memory now, in bytes (Linux /proc; 0 where unknown)."""
    try:
        pages = int(Path("/proc/self/statm").read_text().split()[1])
    except (OSError, ValueError, IndexError):
        return 0
    return pages * os.sysconf("SC_PAGE_SIZE")


def _max_rss() -> int:
    """This process's peak resident memory, in bytes (``getrusage``: kilobytes on Linux)."""
    import resource
    import sys

    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return int(peak) if sys.platform == "darwin" else int(peak) * 1024


def _count_files(out: Path) -> dict[str, int]:
    """Files of each table of the store ``out`` (hidden and temporary files left out)."""
    counts = {}
    for table in SCALE_TABLES:
        folder = out / table
        files = folder.iterdir() if folder.is_dir() else iter(())
        counts[table] = sum(1 for f in files if f.is_file() and not f.name.startswith("."))
    return counts


def scale_child(task: str, sweep_file: str, out: str, result: str) -> None:
    """The measurement in a fresh process (``task`` "load" or "run"); figures as JSON to ``result``.

    Called by :func:`measure_scale` through ``python -c``, so that each size has its own peak.
    """
    import json

    from .config import load_sweep

    if task == "load":
        baseline = _rss()
        start = time.perf_counter()
        sweep = load_sweep(sweep_file)
        seconds = time.perf_counter() - start
        figures: dict[str, Any] = {
            "runs": len(sweep.runs),
            "seconds": seconds,
            "baseline_rss": baseline,
            "peak_rss": _max_rss(),
        }
    elif task == "run":
        import pandas as pd

        from ..results import load
        from .farm import run

        start = time.perf_counter()
        report = run(sweep_file, out, workers=SCALE_WORKERS)
        wall = time.perf_counter() - start
        sweep_rss = _max_rss()
        start = time.perf_counter()
        tables = load(out)
        load_seconds = time.perf_counter() - start
        start = time.perf_counter()
        frame = pd.read_parquet(Path(out) / "runs")
        read_seconds = time.perf_counter() - start
        figures = {
            "runs": report.total,
            "stored": report.stored,
            "failed": report.failed,
            "wall_seconds": wall,
            "cpu_seconds": float(tables.runs["cpu_time"].sum()),
            "files": _count_files(Path(out)),
            "load_seconds": load_seconds,
            "read_seconds": read_seconds,
            "rows_read": len(frame),
            "client_rss": sweep_rss,
            "read_rss": _max_rss(),
        }
    else:
        raise ValueError(f"scale task {task!r} unknown, expected 'load' or 'run'")
    Path(result).write_text(json.dumps(figures), encoding="utf-8")


def _in_child(task: str, sweep_file: Path, out: Path, result: Path) -> dict[str, Any]:
    """Run :func:`scale_child` in a fresh Python process; its figures."""
    import json
    import subprocess
    import sys

    code = (
        "from kdvsweep.sweep.bench_sweep import scale_child; "
        f"scale_child({task!r}, {str(sweep_file)!r}, {str(out)!r}, {str(result)!r})"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    if done.returncode != 0 or not result.exists():
        last = (done.stderr.strip().splitlines() or ["no message"])[-1]
        raise RuntimeError(f"the {task} of {sweep_file.name} failed: {last}")
    figures: dict[str, Any] = json.loads(result.read_text(encoding="utf-8"))
    return figures


def measure_scale(
    run_sizes: Sequence[int] = SCALE_RUNS,
    load_sizes: Sequence[int] = SCALE_LOADS,
    keep: Path | None = None,
    on_stage: Callable[[str], None] | None = None,
) -> ScaleBenchmark:
    """Measure the machinery on sweeps of negligible physics (:func:`scale_text`).

    Every size of ``run_sizes`` and ``load_sizes`` is loaded in a fresh process (load time, peak
    memory); every size of ``run_sizes`` is also run into a new store on an embedded cluster of
    :data:`SCALE_WORKERS` workers, from a fresh client process (farm overhead, files per table,
    read times). Sizes are measured smallest first.

    Parameters
    ----------
    run_sizes
        Numbers of runs to load, run and read.
    load_sizes
        Numbers of runs to load only.
    keep
        Keep the sweep files and stores in this folder (default: a temporary folder, removed).
    on_stage
        Called with a short text before each measurement.
    """
    sizes = sorted({*run_sizes, *load_sizes})
    if not sizes or min(sizes) < 1:
        raise ConfigError(f"sizes must be positive run counts, got {sizes}")
    stage = on_stage or (lambda text: None)
    result = ScaleBenchmark()
    with tempfile.TemporaryDirectory(prefix="kdvsweep-scale-") as tmp:
        folder = Path(tmp) if keep is None else Path(keep)
        folder.mkdir(parents=True, exist_ok=True)
        for count in sizes:
            path = folder / f"scale-{count}.toml"
            path.write_text(scale_text(count), encoding="utf-8")
            stage(f"loading {count} runs")
            got = _in_child("load", path, folder, folder / f"load-{count}.json")
            result.loads.append(ScaleLoad(**got))
            if count in run_sizes:
                out = folder / f"store-{count}"
                if out.exists():
                    shutil.rmtree(out)
                stage(f"running {count} runs on {SCALE_WORKERS} workers")
                got = _in_child("run", path, out, folder / f"run-{count}.json")
                result.runs.append(ScaleRun(**got))
    return result


__all__ = [
    "GROWTH",
    "QUICK_GROWTH",
    "QUICK_SCALE_LOADS",
    "QUICK_SCALE_RUNS",
    "REFERENCE_RUNS",
    "SCALE_LOADS",
    "SCALE_RUNS",
    "GrowthRow",
    "ScaleBenchmark",
    "ScaleLoad",
    "ScaleRun",
    "SweepBenchmark",
    "measure",
    "measure_scale",
    "reference_sweep",
    "reference_text",
    "scale_child",
    "scale_text",
]
