"""Run a sweep on dask.distributed: chunks of runs on workers, rows back to the one writer.

How it runs
-----------
The client process opens the store (which refuses a folder of another sweep before any cluster
starts), skips the runs already stored, and submits the rest as tasks of a few seconds each: runs
are grouped in chunks by their estimated cost (``n log2 n`` times the number of steps, calibrated
on the wall time of the chunks already done). Only a few chunks per worker are in flight, so a
sweep of a million runs holds a few dozen specs in memory, not a million futures. Results come
back to the client, which is the only process that writes files (see :mod:`.store`): exactly once
needs no coordination between workers.

Failures: a run that goes unstable comes back as a "failed" row (the runner catches it). A worker
that dies (killed, out of memory) loses its tasks; the scheduler gives them to another worker, and
tasks that raised are retried (``retries``). A chunk whose workers die every time (dask's
``KilledWorker``) is split into single runs, each given a second chance alone, so only the run
that kills workers is stored as failed, with the reason. Any other task error comes from the infrastructure (the runner turns a
run's own errors into rows), so the sweep stops with a KdvsweepError and the store is resumable.

Where it runs
-------------
* default: an embedded ``LocalCluster`` on this machine, one single-threaded worker process per
  core (a run is single-threaded Rust; processes avoid any contention on the interpreter), bound
  to the loopback interface, no dashboard. Every connection is TLS with certificates made for
  this one cluster and never written to disk (:func:`local_security`): loopback ports are open
  to every user of the machine, and a dask scheduler runs whatever code its clients send, so
  without them any local process could run code in the workers;
* ``scheduler="tcp://host:8786"`` (CLI ``--scheduler``): an existing dask cluster;
* ``cluster="mycluster.toml"`` (CLI ``--cluster``): a cluster profile; :func:`run` starts the batch
  jobs it describes (:mod:`.cluster`) and cancels them at the end;
* any other dask cluster: build it yourself and pass its client to :func:`run_sweep`::

      from dask_jobqueue import SLURMCluster
      from distributed import Client
      from kdvsweep.sweep.config import load_sweep
      from kdvsweep.sweep.farm import run_sweep

      # one job = one node of 32 cores, 32 single-threaded worker processes
      cluster = SLURMCluster(cores=32, processes=32, memory="64GB", walltime="04:00:00")
      cluster.adapt(minimum_jobs=1, maximum_jobs=10)
      with Client(cluster) as client:
          run_sweep(load_sweep("sweeps/big.toml"), "results/big", client)

  (``processes == cores`` gives one thread per worker.) Or by hand: ``dask scheduler`` on the
  login node, jobs that start ``dask worker tcp://LOGIN:8786 --nworkers 32 --nthreads 1``, and
  ``kdvsweep run FILE --scheduler tcp://LOGIN:8786``. A job killed by its wall time is a lost
  worker like any other; a sweep interrupted as a whole is resumed by running it again.
"""

from __future__ import annotations

import contextlib
import ctypes
import ctypes.util
import logging
import os
import time
from collections import OrderedDict
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..analysis.tracks import ReferenceTrack
from ..exceptions import ConfigError, KdvsweepError
from .references import ReferenceSpec, compute_reference, references_for
from .runner import RunResult, base_row, cost, execute_chunk
from .sizing import run_memory
from .store import Compaction, Store

if TYPE_CHECKING:
    from .cluster import ClusterProfile
    from .config import Sweep

#: ``on_progress(done, failed, total)``: runs stored so far (those stored before this call
#: included), failed among them, runs in the sweep. Called once before the first task and after
#: every batch of results is stored.
ProgressCallback = Callable[[int, int, int], None]

#: Target wall time of one task, seconds: long enough that scheduling (~1 ms a task) is noise,
#: short enough that a lost worker costs little and the progress bar moves.
CHUNK_SECONDS = 3.0

#: First guess of seconds per cost unit (``n log2 n`` per step), refined from measured runs;
#: measured on the Rust ETDRK4 at n = 512 on one core of the development machine.
PRIOR_SECONDS_PER_UNIT = 3e-9

#: Chunks in flight per worker thread: one running, one queued on the worker, one on the way.
IN_FLIGHT_PER_THREAD = 2

#: Most runs in one chunk, whatever the estimate (bounds the size of one result message).
MAX_CHUNK_RUNS = 500

#: Reference tracks the client keeps at hand (a few kB each); an older one is read back from the
#: store when a later run needs it.
KEPT_REFERENCES = 256

#: Task retries after an exception (a lost worker is rescheduled by the scheduler itself).
RETRIES = 2

#: dask settings for the embedded cluster (read when the scheduler and each nanny start, so they
#: hold for restarted workers too). Measured here: with the defaults, a run in a worker was
#: markedly slower than in a plain process (about 1.7x from the malloc setting alone: glibc then
#: returns memory on nearly every free of a NumPy array; the statistical profiler samples the
#: running task every 10 ms), and an idle 2-worker cluster used 15% of a core (event-loop health
#: ticks every 20 ms, system and memory monitors every 0.5 s and 0.1 s); 3% with the longer
#: intervals below. Worker memory stays flat without the malloc setting (see bench_sweep).
WORKER_CONFIG = {
    "distributed.worker.profile.enabled": False,
    "distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None,
    "distributed.admin.tick.interval": "1s",
    "distributed.admin.system-monitor.interval": "2s",
    "distributed.worker.memory.monitor-interval": "1s",
}


@dataclass
class SweepReport:
    """What one call of :func:`run_sweep` did.

    Attributes
    ----------
    out
        The store folder.
    total, skipped, stored, failed
        Runs in the sweep; stored before this call; stored by this call; failed among those.
    elapsed
        Seconds from the start of the call to the last write.
    compute
        Sum of the runs' own wall times (stepping, analysis) in the workers, seconds.
    store_time
        Seconds the client spent writing the store.
    workers
        Worker threads seen (at most) during the call.
    chunks
        Tasks submitted.
    references
        Reference runs computed and stored by this call (:mod:`.references`).
    references_reused
        Reference runs read back from the store (computed by an earlier call).
    compaction
        What the compaction at the end of the call did (:meth:`Store.compact`: when the runs
        table has more than :data:`~kdvsweep.sweep.store.COMPACT_AT_END` parts), or None.
    """

    out: Path
    total: int
    skipped: int = 0
    stored: int = 0
    failed: int = 0
    elapsed: float = 0.0
    compute: float = 0.0
    store_time: float = 0.0
    workers: int = 0
    chunks: int = 0
    references: int = 0
    references_reused: int = 0
    compaction: Compaction | None = None

    @property
    def pending(self) -> int:
        """Runs of the sweep not stored yet."""
        return self.total - self.skipped - self.stored

    def overhead(self) -> float:
        """Worker time not spent computing runs, as a fraction of compute.

        ``(elapsed * workers - compute) / compute``: scheduling, transfers, storage, idle tails.
        """
        if self.compute <= 0:
            return float("nan")
        return (self.elapsed * max(self.workers, 1) - self.compute) / self.compute


class _Chunker:
    """Cuts the pending runs into chunks of about ``seconds`` of work each, drawing the runs from
    the sweep one at a time (a run is expanded when its chunk is cut, and forgotten once its
    results are stored: the client holds only the runs in flight, whatever the sweep's size).

    ``pending`` are the ids to run, in order, and ``runs`` the sweep's runs by id. The work left is
    the number of runs not drawn times the mean cost of those drawn so far (no pass over the runs
    ahead of time)."""

    def __init__(self, runs: Sequence[Any], pending: Iterator[int], count: int, seconds: float):
        self._runs = runs
        self._ids = pending
        self._left = count  # runs not drawn yet
        self._next: Any = None
        self._drawn_units = 0.0
        self._drawn = 0
        self.seconds = seconds
        self._units = 0.0
        self._wall = 0.0
        self._peek()

    def _peek(self) -> None:
        run_id = next(self._ids, None)
        self._next = None if run_id is None else self._runs[run_id]

    def __bool__(self) -> bool:
        return self._next is not None

    @property
    def rate(self) -> float:
        """Seconds per cost unit, measured once a run has completed."""
        return self._wall / self._units if self._units > 0 else PRIOR_SECONDS_PER_UNIT

    @property
    def remaining(self) -> float:
        """Cost units of the runs not drawn yet (estimated from those drawn)."""
        mean = self._drawn_units / self._drawn if self._drawn else cost(self._next)
        return self._left * mean

    def observe(self, specs: Sequence[Any], results: Sequence[RunResult]) -> None:
        by_id = {int(s.run_id): s for s in specs}
        for res in results:
            spec = by_id.get(res.run_id)
            if spec is not None and res.ok:
                self._units += cost(spec)
                self._wall += float(res.run_row["wall_time"])

    def next(self, threads: int) -> list[Any]:
        # Smaller chunks near the end keep every worker busy until the last run.
        target = min(self.seconds, self.remaining * self.rate / (2 * max(threads, 1)))
        if self._units == 0:
            target /= 3  # before any measurement, keep the first tasks short
        chunk: list[Any] = []
        spent = 0.0
        while self._next is not None and len(chunk) < MAX_CHUNK_RUNS:
            c = cost(self._next)
            if chunk and spent + c * self.rate > target:
                break
            chunk.append(self._next)
            spent += c * self.rate
            self._drawn_units += c
            self._drawn += 1
            self._left -= 1
            self._peek()
        return chunk


def _malloc_trim() -> Callable[[int], Any] | None:
    """glibc's ``malloc_trim(0)``, or None on other C libraries."""
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        trim: Callable[[int], Any] = libc.malloc_trim
        return trim
    except (OSError, AttributeError):
        return None


def _size(count: int) -> str:
    """``1.5 GiB``-style size for messages."""
    size = float(count)
    for unit in ("B", "KiB", "MiB", "GiB"):
        if size < 1024:
            return f"{size:.3g} {unit}"
        size /= 1024
    return f"{size:.3g} TiB"


def _killed(spec: Any, exc: BaseException) -> RunResult:
    """The failed row of a run whose worker died every time it ran (dask's ``KilledWorker``).

    Dask does not say why a worker died; a run that takes its worker down each time, alone, is
    most often one that needs more memory than the worker has, so the reason says so, with the
    run's estimated need and what to change.
    """
    row = base_row(spec)
    row["status"] = "failed"
    row["failure"] = "out of memory"  # the likely cause, as the reason says
    n = int(spec.model.grid.n)
    frames = len(spec.run.record_times)
    need = run_memory(n, frames, spec.model.scheme)
    row["reason"] = (
        f"worker died running this run, each time it was tried ({type(exc).__name__}); likely "
        f"out of memory: the run needs about {_size(need)} ({frames} frames "
        f"of {n} points); lower points or record fewer frames (a larger frame_every), or give "
        "each worker more memory (fewer workers per machine, or more memory per batch job)"
    )
    return RunResult(row, [], None, None)


def _distributed() -> Any:
    """The ``distributed`` module (imported when a sweep runs: it is slow to load)."""
    import distributed

    return distributed


def _threads(client: Any) -> int:
    return int(sum(client.nthreads().values()))


#: Loggers silenced from a Ctrl-C until the sweep's cluster is shut down: the shutdown of a
#: cluster in the middle of its tasks makes them report lost connections and forgotten keys,
#: which say nothing to a user who asked it to stop.
QUIET_LOGGERS = ("distributed", "tornado", "asyncio")

_guards = 0  # depth of nested _interrupt_guard blocks
_saved_levels: dict[str, int] | None = None  # logger levels to restore, while silenced


def _silence(level: int) -> dict[str, int]:
    """Set :data:`QUIET_LOGGERS` and their existing children to ``level``; the old levels."""
    names = [
        name
        for name in list(logging.root.manager.loggerDict)
        if any(name == root or name.startswith(root + ".") for root in QUIET_LOGGERS)
    ]
    loggers = {name: logging.getLogger(name) for name in {*QUIET_LOGGERS, *names}}
    saved = {name: logger.level for name, logger in loggers.items()}
    for logger in loggers.values():
        logger.setLevel(level)
    return saved


def _hush() -> None:
    """Silence :data:`QUIET_LOGGERS` (and their children) until the outer guard is left."""
    global _saved_levels
    if _saved_levels is None:
        _saved_levels = _silence(logging.CRITICAL + 1)


@contextlib.contextmanager
def _interrupt_guard() -> Iterator[None]:
    """On KeyboardInterrupt inside the block, :func:`_hush`; the outermost guard restores."""
    global _guards, _saved_levels
    _guards += 1
    try:
        yield
    except KeyboardInterrupt:
        _hush()
        raise
    finally:
        _guards -= 1
        if _guards == 0 and _saved_levels is not None:
            for name, level in _saved_levels.items():
                logging.getLogger(name).setLevel(level)
            _saved_levels = None


def run_sweep(
    sweep: Sweep,
    out: str | os.PathLike[str],
    client: Any = None,
    *,
    workers: int | None = None,
    on_progress: ProgressCallback | None = None,
    chunk_seconds: float = CHUNK_SECONDS,
    retries: int = RETRIES,
    retry_failed: bool = False,
) -> SweepReport:
    """Run the pending runs of ``sweep`` into the store ``out``; resume what is already there.

    Parameters
    ----------
    sweep
        A loaded sweep (:func:`kdvsweep.sweep.config.load_sweep`).
    out
        The store folder: new, empty, or holding this same sweep (then only missing runs run).
    client
        A ``distributed.Client`` to use; default an embedded ``LocalCluster`` started here.
    workers
        Worker processes of the embedded cluster (default one per core); ignored with ``client``.
    on_progress
        Called as ``on_progress(done, failed, total)`` (see :data:`ProgressCallback`).
    chunk_seconds
        Target wall time of one task.
    retries
        Retries of a task that raised.
    retry_failed
        First drop the runs stored as failed (:meth:`Store.forget_failed`), so they run again
        and the tables then hold each run once.

    Returns
    -------
    SweepReport
        Counts and timings of this call.
    """
    if not chunk_seconds > 0:
        raise ConfigError(f"run_sweep: chunk_seconds must be > 0, got {chunk_seconds}")
    start = time.perf_counter()
    with _interrupt_guard(), Store.open(out, sweep) as store:
        if retry_failed:
            store.forget_failed()
        total = len(sweep.runs)
        report = SweepReport(Path(out), total, skipped=len(store.done))
        if on_progress is not None:
            on_progress(report.skipped, len(store.failed), report.total)
        if report.pending:
            chunker = _Chunker(sweep.runs, store.pending_ids(), report.pending, chunk_seconds)
            with contextlib.ExitStack() as stack:
                if client is None:
                    client = stack.enter_context(local_client(workers))
                _drive(client, store, chunker, report, on_progress, retries)
            report.elapsed = time.perf_counter() - start
        # The end of a sweep (not of an interrupted one): many small parts become a few.
        if store.needs_compaction():
            report.compaction = store.compact()
    return report


def _drive(
    client: Any,
    store: Store,
    chunker: _Chunker,
    report: SweepReport,
    on_progress: ProgressCallback | None,
    retries: int,
) -> None:
    """Keep a few chunks per worker in flight, store each batch of results as it arrives.

    Reference runs (:mod:`.references`): when a chunk is submitted, each reference its runs need
    is taken from this call's results, or read from the store, or else submitted as a task of its
    own (once per digest); the chunk's task then depends on that task's future, so dask runs the
    reference first and hands its result to every chunk that needs it. Each reference computed is
    stored as it arrives, before the runs that need it are; the client keeps the most recent
    :data:`KEPT_REFERENCES` tracks and reads an older one back from the store when a later run
    needs it.
    """
    distributed = _distributed()
    KilledWorker = distributed.KilledWorker
    as_completed = distributed.as_completed

    ongoing = as_completed()
    inflight: dict[str, tuple[Any, list[Any]]] = {}  # task key -> (future, its runs)
    threads = max(_threads(client), 1)
    report.workers = threads
    checked = time.monotonic()
    failed_before = len(store.failed)  # reported to on_progress, not counted in the report
    kills: dict[int, int] = {}  # run id -> tasks holding that run that ended in KilledWorker
    known: dict[str, Any] = {}  # reference digest -> the future computing it
    tracks: OrderedDict[str, Any] = OrderedDict()  # digest -> its track, most recent last
    computing: dict[str, tuple[Any, str]] = {}  # task key -> (future, reference digest)

    def reference(ref: ReferenceSpec) -> Any:
        """The reference's track, or the future of the task computing it (submitted once)."""
        digest = ref.digest
        if digest in known:
            return known[digest]
        if digest in tracks:
            tracks.move_to_end(digest)
            return tracks[digest]
        stored = store.reference(digest)
        if stored is not None:
            report.references_reused += 1
            keep(digest, stored)
            return stored
        fut = client.submit(compute_reference, ref, pure=False, retries=retries)
        computing[fut.key] = (fut, digest)
        ongoing.add(fut)
        known[digest] = fut
        return fut

    def submit(chunk: list[Any]) -> None:
        refs = {ref.digest: reference(ref) for spec in chunk for ref in references_for(spec)}
        fut = client.submit(execute_chunk, chunk, refs or None, pure=False, retries=retries)
        inflight[fut.key] = (fut, chunk)
        ongoing.add(fut)
        report.chunks += 1

    def computed(fut: Any, digest: str) -> list[Any]:
        """The result of a finished reference task (a failed track if its workers died)."""
        try:
            res = fut.result()
        except KilledWorker:
            known.pop(digest, None)
            keep(
                digest,
                ReferenceTrack.failed(
                    "reference run: its worker died each time it was tried (out of memory?)"
                ),
            )
            return []
        finally:
            fut.release()
        known.pop(digest, None)
        keep(digest, res.track)
        return [res]

    def keep(digest: str, track: Any) -> None:
        tracks[digest] = track
        tracks.move_to_end(digest)
        while len(tracks) > KEPT_REFERENCES:
            tracks.popitem(last=False)

    def fill() -> None:
        while chunker and len(inflight) < IN_FLIGHT_PER_THREAD * threads + 1:
            submit(chunker.next(threads))

    # The frames of every run pass through this process; glibc keeps the freed blocks of those
    # arrays in its heaps and the resident size creeps up with the sweep. Returning them now
    # and then keeps it flat (the embedded workers get the same by their malloc settings).
    trim, trimmed = _malloc_trim(), time.monotonic()

    def collect(fut: Any, chunk: list[Any]) -> list[RunResult]:
        """The results of a finished task; resubmits and returns nothing if it was lost."""
        try:
            return list(fut.result())
        except KilledWorker as exc:  # its workers died (crash, out of memory) each time
            # Isolate the run that causes it: the runs of the chunk go again one by one, and a
            # run is failed when its task dies with it alone for the second time it is caught
            # in such a task (a bystander queued on the same worker gets a second chance).
            for spec in chunk:
                kills[int(spec.run_id)] = kills.get(int(spec.run_id), 0) + 1
            if len(chunk) == 1 and kills[int(chunk[0].run_id)] >= 2:
                return [_killed(chunk[0], exc)]
            for spec in chunk:
                submit([spec])
            return []
        finally:
            fut.release()

    try:
        fill()
        for batch in ongoing.batches():
            results: list[RunResult] = []
            references: list[Any] = []
            broken: BaseException | None = None
            for fut in batch:
                if fut.key in computing:
                    _, digest = computing.pop(fut.key)
                    try:
                        references.extend(computed(fut, digest))
                    except Exception as exc:  # infrastructure, as for a chunk below
                        broken = exc
                    continue
                _, chunk = inflight.pop(fut.key)
                try:
                    got = collect(fut, chunk)
                except Exception as exc:
                    # The runner turns every error of a run into a row, so this is the
                    # infrastructure (kdvsweep missing on a worker, a version mismatch):
                    # stop rather than store good runs as failed.
                    broken = exc
                    continue
                chunker.observe(chunk, got)
                results.extend(got)
            tick = time.perf_counter()
            report.references += store.write_references(references)
            report.compute += sum(res.wall_time for res in references)
            stored = store.write(results)
            report.store_time += time.perf_counter() - tick
            failed = sum(not r.ok for r in results)
            report.stored += stored
            report.failed += failed
            report.compute += sum(float(r.run_row["wall_time"]) for r in results)
            if on_progress is not None:
                on_progress(
                    report.skipped + report.stored, failed_before + report.failed, report.total
                )
            if broken is not None:
                raise KdvsweepError(
                    f"a task failed outside the runs ({type(broken).__name__}: {broken}); "
                    f"{report.skipped + report.stored} runs are stored in {store.out}; fix "
                    "the cause and run the same sweep again to resume"
                ) from broken
            if trim is not None and time.monotonic() - trimmed > 1.0:
                trim(0)
                trimmed = time.monotonic()
            if time.monotonic() - checked > 2.0:  # workers come and go (adaptive clusters)
                threads = max(_threads(client), 1)
                report.workers = max(report.workers, threads)
                checked = time.monotonic()
            fill()
    except KeyboardInterrupt:
        _hush()  # before the cancellation below, whose echoes would follow the interrupt
        raise
    finally:
        # Interrupted or broken: tasks of this sweep must not go on running on a shared
        # cluster after we stop listening.
        if inflight:
            with contextlib.suppress(Exception):  # the client may be closing already
                client.cancel([fut for fut, _ in inflight.values()])


def local_security() -> Any:
    """TLS credentials for one embedded cluster: a fresh key and self-signed certificate.

    The scheduler, the nannies, the workers and the client all present this certificate and
    accept only peers that present it too, so a process of another user (or any process not
    started by this sweep) that connects to the loopback ports is refused during the TLS
    handshake. The key lives in this process's memory and reaches the worker processes through
    the pipe that starts them; it is never written to disk.

    Returns
    -------
    distributed.security.Security

    Raises
    ------
    KdvsweepError
        If the ``cryptography`` package, which makes the certificate, is missing.
    """
    from distributed import security

    Security: Any = security.Security

    try:
        return Security.temporary()
    except ImportError as exc:
        raise KdvsweepError(
            "the embedded cluster needs the cryptography package for its TLS certificates "
            "(a dependency of kdvsweep); install it: pip install cryptography"
        ) from exc


def _ignore_interrupt() -> None:
    """Make this process ignore SIGINT (main thread only)."""
    import signal
    import threading

    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGINT, signal.SIG_IGN)


def dask_setup(worker: Any) -> None:
    """Worker preload of the embedded cluster: leave Ctrl-C and the reporting to the client.

    Ctrl-C at a terminal sends SIGINT to every process of the foreground group, the embedded
    workers included; each would die with a KeyboardInterrupt traceback while the client,
    which owns the shutdown, stops them anyway. And a worker stopped in the middle of sending
    results logs the broken connection with a traceback. So the workers ignore SIGINT and log
    only critical errors: what goes wrong in a worker reaches the client (a run's error is its
    row, a task's error is raised by the sweep, a dead worker is a lost task), which reports it.
    Dask runs this in each worker process (also in one a nanny restarts) on its main thread,
    before the worker takes tasks.
    """
    _ignore_interrupt()
    _silence(logging.CRITICAL)


#: Module the embedded workers preload (its :func:`dask_setup` runs in each of them).
WORKER_PRELOAD = __name__

#: HTTP routes of the embedded scheduler and workers: the health check only. Their HTTP servers
#: listen on loopback ports without TLS; the default routes (task and log pages, metrics) would
#: show any local user what the sweep runs.
HTTP_ROUTES = ["distributed.http.health"]


@contextlib.contextmanager
def local_client(workers: int | None = None) -> Iterator[Any]:
    """A client of an embedded ``LocalCluster``: ``workers`` single-threaded processes.

    The scheduler listens on the loopback interface only, has no dashboard, and takes TLS
    connections from holders of this cluster's own certificate only (:func:`local_security`).
    The workers ignore Ctrl-C (:func:`dask_setup`): the client stops them.
    """
    import dask

    distributed = _distributed()
    Client, LocalCluster = distributed.Client, distributed.LocalCluster

    count = workers if workers is not None else (os.cpu_count() or 1)
    if count < 1:
        raise ConfigError(f"workers must be >= 1, got {count}")
    from .cluster import SCHEDULER_CONFIG

    config = {
        **WORKER_CONFIG,
        **SCHEDULER_CONFIG,
        "distributed.scheduler.http.routes": HTTP_ROUTES,
        "distributed.worker.http.routes": HTTP_ROUTES,
    }
    with (
        _interrupt_guard(),
        dask.config.set(config),
        LocalCluster(
            n_workers=count,
            threads_per_worker=1,
            processes=True,
            host="127.0.0.1",
            security=local_security(),
            dashboard_address=None,
            # The scheduler's HTTP server (health) would try port 8787 on all interfaces and
            # warn when it is taken; a random loopback port keeps it private and quiet.
            scheduler_kwargs={"dashboard": False, "dashboard_address": "127.0.0.1:0"},
            silence_logs=logging.ERROR,
            preload=[WORKER_PRELOAD],
        ) as cluster,
        Client(cluster) as client,
    ):
        try:
            yield client
        except KeyboardInterrupt:
            _hush()  # before the client and the cluster close
            raise


@contextlib.contextmanager
def connect(
    workers: int | None = None,
    scheduler: str | None = None,
    cluster: str | os.PathLike[str] | ClusterProfile | None = None,
    *,
    logs: Path | None = None,
    on_message: Callable[[str], None] | None = None,
) -> Iterator[Any]:
    """A client: of the scheduler at ``scheduler``, of the batch cluster a profile describes, or of
    an embedded cluster of ``workers`` processes (at most one of the three may be given).

    ``logs`` is where batch jobs write their output when the profile names no folder;
    ``on_message`` receives the batch cluster's one-line messages (submission, dashboard address,
    replacements, shutdown).
    """
    _check_where(workers, scheduler, cluster)
    if scheduler is not None:
        with _distributed().Client(scheduler) as client:
            yield client
    elif cluster is not None:
        from .cluster import cluster_client

        with cluster_client(_profile(cluster), logs=logs, echo=on_message) as client:
            yield client
    else:
        with local_client(workers) as client:
            yield client


def _check_where(workers: int | None, scheduler: str | None, cluster: object) -> None:
    """Refuse two places to run at once, before anything starts."""
    given = [
        name
        for name, value in (("workers", workers), ("scheduler", scheduler), ("cluster", cluster))
        if value is not None
    ]
    if len(given) > 1:
        raise ConfigError(
            f"{' and '.join(given)} were both given; expected one of them: workers (an embedded "
            "cluster on this machine), scheduler (an existing dask cluster) or cluster (a cluster "
            "profile)"
        )


def _profile(cluster: str | os.PathLike[str] | ClusterProfile) -> ClusterProfile:
    from .cluster import ClusterProfile, load_profile

    return cluster if isinstance(cluster, ClusterProfile) else load_profile(cluster)


def _store_notes(store: Store) -> list[str]:
    """One line per thing an opened store set aside (damaged batches) or does not count."""
    lines = []
    if store.repaired:
        more = f" (and {len(store.repaired) - 1} more)" if len(store.repaired) > 1 else ""
        lines.append(
            f"warning: {len(store.repaired)} damaged batch(es) in {store.out}: "
            f"{store.repaired[0]}{more}; set aside as *.damaged, their runs are run again"
        )
    lines += [f"warning: {store.out}/{line}" for line in store.ignored]
    return lines


def run(
    sweep: str | os.PathLike[str] | Sweep,
    out: str | os.PathLike[str] | None = None,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    cluster: str | os.PathLike[str] | ClusterProfile | None = None,
    on_progress: ProgressCallback | None = None,
    on_message: Callable[[str], None] | None = None,
    chunk_seconds: float = CHUNK_SECONDS,
    retry_failed: bool = False,
) -> SweepReport:
    """Run a sweep file into ``out`` (default ``results/<sweep name>``); resume what is stored.

    The public ``kdvsweep.sweep.run``, and what ``kdvsweep run`` calls.

    Parameters
    ----------
    sweep
        A sweep file (TOML), or a sweep already loaded with :func:`~kdvsweep.sweep.load_sweep`.
    out
        The store folder: new, empty, or holding this same sweep.
    workers
        Worker processes of an embedded cluster on this machine (default one per core).
    scheduler
        Address of an existing dask scheduler (``tcp://host:8786``) to use instead.
    cluster
        A cluster profile (TOML file, or a loaded :class:`~kdvsweep.sweep.cluster.ClusterProfile`)
        to start batch jobs with instead; their output goes to ``OUT/batch-logs`` unless the profile
        names a folder. The jobs are cancelled when the sweep ends, fails or is interrupted.
    on_progress
        Called as ``on_progress(done, failed, total)`` (see :data:`ProgressCallback`).
    on_message
        Receives one-line messages: of the store (damaged batches set aside, rows not counted)
        and of a batch cluster.
    chunk_seconds
        Target wall time of one task.
    retry_failed
        Run the runs stored as failed again (same sweep digest: the limits ``run.drift_limit``,
        ``run.max_amplitude`` and ``run.time_limit`` may have changed); their old rows are
        dropped, so the tables hold each run once.

    Returns
    -------
    SweepReport
        What this call did; ``report.out`` is the store folder.
    """
    from .config import Sweep, load_sweep

    _check_where(workers, scheduler, cluster)
    loaded = sweep if isinstance(sweep, Sweep) else load_sweep(Path(sweep))
    target = Path(out) if out is not None else Path("results") / loaded.name
    profile = _profile(cluster) if cluster is not None else None  # a bad profile fails first
    # Refuse a folder of another sweep (or not a store at all) before any cluster starts; this
    # open also sets damaged batches aside, which the caller hears of.
    with Store.open(target, loaded) as opened:
        if on_message is not None:
            for line in _store_notes(opened):
                on_message(line)
    with _interrupt_guard(), contextlib.ExitStack() as stack:
        client = None  # the embedded cluster starts in run_sweep, only if runs are pending
        if scheduler is not None or profile is not None:
            client = stack.enter_context(
                connect(None, scheduler, profile, logs=target / "batch-logs", on_message=on_message)
            )
        return run_sweep(
            loaded,
            target,
            client,
            workers=workers,
            on_progress=on_progress,
            chunk_seconds=chunk_seconds,
            retry_failed=retry_failed,
        )


__all__ = [
    "CHUNK_SECONDS",
    "ProgressCallback",
    "SweepReport",
    "connect",
    "local_client",
    "run",
    "run_sweep",
]
