"""The dask farm end to end: every run stored once, failures as rows, determinism, lost workers.

One small sweep (8 KdV pair collisions, n <= 512, a fraction of a second each, one of them with
an absurd step) runs on a shared 2-worker LocalCluster; its store is the reference the other runs
are compared with. Timing columns (``wall_time``...) differ between runs and are left out.
"""

from __future__ import annotations

import math
import os
import signal
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from conftest import pair_sweep_text

from kdvsweep.exceptions import ConfigError, KdvsweepError
from kdvsweep.results import Results, load
from kdvsweep.sweep.config import Sweep, load_sweep
from kdvsweep.sweep.farm import _Chunker, local_client, run_sweep
from kdvsweep.sweep.runner import TIMING_COLUMNS, cost

# When a test kills a worker process, dask's TLS comm to it can be garbage-collected unclosed; the
# ResourceWarning then fires in a finalizer (as an "unraisable" exception) at a moment that depends
# on timing. It is the library's teardown, not kdvsweep's: these tests ignore that one warning.
pytestmark = [
    pytest.mark.filterwarnings("ignore:unclosed <ssl.SSLSocket:ResourceWarning"),
    pytest.mark.filterwarnings(
        "ignore:Exception ignored in. <ssl.SSLSocket:pytest.PytestUnraisableExceptionWarning"
    ),
]

K2 = [0.41, 0.43, 0.45, 0.47, 0.49, 0.51, 0.53, 0.55]
BAD = 3  # this run gets dt = 2: ETDRK4 then loses the solution (common practice, no source)
TIMING = list(TIMING_COLUMNS)


def sweep_text(k2: list[float] = K2, bad: int | None = BAD) -> str:
    """A sweep file: kappa1 = 0.8 overtakes kappa2, sizes chosen automatically per run."""
    return pair_sweep_text("farm-test", k2, bad=bad, keep_stride=5)


def write_sweep(folder: Path, text: str, name: str = "sweep.toml") -> Sweep:
    path = folder / name
    path.write_text(text)
    return load_sweep(path)


def numeric(res: Results) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The tables without timing columns."""
    return res.runs.drop(columns=TIMING), res.solitons


def assert_same_tables(a: Results, b: Results) -> None:
    ra, sa = numeric(a)
    rb, sb = numeric(b)
    pd.testing.assert_frame_equal(ra, rb, check_exact=True)
    pd.testing.assert_frame_equal(sa, sb, check_exact=True)
    for rid in a.runs.loc[a.runs["status"] == "ok", "run_id"]:
        np.testing.assert_array_equal(a.frames(rid).u, b.frames(rid).u)


@pytest.fixture(scope="module")
def client() -> Iterator[Any]:
    with local_client(2) as c:
        yield c


@pytest.fixture(scope="module")
def sweep(tmp_path_factory: pytest.TempPathFactory) -> Sweep:
    return write_sweep(tmp_path_factory.mktemp("sweep"), sweep_text())


@pytest.fixture(scope="module")
def reference(client: Any, sweep: Sweep, tmp_path_factory: pytest.TempPathFactory) -> Results:
    out = tmp_path_factory.mktemp("ref") / "store"
    report = run_sweep(sweep, out, client, chunk_seconds=0.5)
    assert (report.stored, report.skipped, report.failed) == (len(K2), 0, 1)
    return load(out)


def test_every_run_stored_once(reference: Results) -> None:
    runs = reference.runs
    assert list(runs["run_id"]) == list(range(len(K2)))
    np.testing.assert_array_equal(runs["k2"], K2)
    assert reference.counts() == {"ok": len(K2) - 1, "failed": 1, "pending": 0, "total": len(K2)}
    assert reference.solitons.groupby("run_id").size().eq(2).all()
    assert not reference.solitons.duplicated(["run_id", "soliton"]).any()


def test_blown_up_run_is_a_failed_row(reference: Results) -> None:
    runs = reference.runs.set_index("run_id")
    assert runs.loc[BAD, "status"] == "failed"
    # dt = 2 loses the solution: the momentum balance check catches it (run.drift_limit)
    assert runs.loc[BAD, "reason"].startswith("DriftError: momentum balance residual")
    assert runs.loc[BAD, "failure"] == "drift"
    assert BAD not in set(reference.solitons["run_id"])
    with pytest.raises(ValueError, match="no stored frames"):
        reference.frames(BAD)
    ok = runs.drop(index=BAD)
    assert (ok["status"] == "ok").all()
    assert (ok["momentum_drift"] < 1e-4).all()


def test_rows_belong_to_their_runs(reference: Results) -> None:
    # Each run's measured shifts match the two-soliton formula for ITS kappa2, so rows were not
    # mixed up between runs: Delta x_1 = ln((k1+k2)/(k1-k2))/k1, Delta x_2 = -ln(...)/k2
    # (Gardner, Greene, Kruskal & Miura 1974).
    sol = reference.solitons.merge(reference.runs[["run_id", "k2"]], on="run_id")
    k1 = 0.8
    for _, row in sol.iterrows():
        k2 = row["k2"]
        log_ratio = math.log((k1 + k2) / (k1 - k2))
        expected = log_ratio / k1 if row["soliton"] == 0 else -log_ratio / k2
        assert row["shift_measured"] == pytest.approx(expected, abs=2e-3)


def test_same_sweep_twice_is_identical(
    client: Any, sweep: Sweep, reference: Results, tmp_path: Path
) -> None:
    run_sweep(sweep, tmp_path / "again", client, chunk_seconds=0.1)
    assert_same_tables(reference, load(tmp_path / "again"))


def test_one_worker_gives_the_same_tables(sweep: Sweep, reference: Results, tmp_path: Path) -> None:
    with local_client(1) as one:
        assert len(one.nthreads()) == 1
        run_sweep(sweep, tmp_path / "one", one)
    assert_same_tables(reference, load(tmp_path / "one"))


def test_complete_store_runs_nothing(sweep: Sweep, reference: Results) -> None:
    # No client at all: nothing is pending, so no cluster is needed or started.
    report = run_sweep(sweep, reference.path)
    assert (report.stored, report.skipped, report.chunks) == (0, len(K2), 0)


def test_worker_killed_mid_sweep(
    client: Any, sweep: Sweep, reference: Results, tmp_path: Path
) -> None:
    out = tmp_path / "killed"
    killed: dict[str, Any] = {}

    def kill_a_busy_worker() -> None:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            parts = list((out / "runs").glob("part-*.parquet")) if (out / "runs").is_dir() else []
            busy = [w for w, keys in client.processing().items() if keys]
            if parts and busy:
                pid = client.run(os.getpid, workers=[busy[0]])[busy[0]]
                killed["stored"] = len(parts)
                killed["pid"] = pid
                os.kill(pid, signal.SIGKILL)  # a worker process of this test's own cluster
                return
            time.sleep(0.02)

    before = set(client.run(os.getpid).values())
    killer = threading.Thread(target=kill_a_busy_worker)
    killer.start()
    report = run_sweep(sweep, out, client, chunk_seconds=0.05)
    killer.join()
    assert killed, "no worker was killed: the sweep ended before the killer found a busy worker"
    assert killed["pid"] in before
    assert killed["stored"] < len(K2)  # it really was mid-way
    assert report.stored == len(K2)
    assert_same_tables(reference, load(out))
    client.wait_for_workers(2, timeout=60)  # the nanny replaced the killed worker
    assert killed["pid"] not in set(client.run(os.getpid).values())


def test_scheduler_keeps_few_messages(client: Any, reference: Results) -> None:
    # Each message to a worker holds a chunk of run specs; dask keeps the last 1000 of each
    # connection for debugging by default, which held every run of a long sweep in this process
    # (measured: ~1 kB a run, all RunSpecs of a 3e4-run sweep alive at its end). The embedded
    # cluster keeps SCHEDULER_CONFIG's few.
    from kdvsweep.sweep.cluster import SCHEDULER_CONFIG

    keep = SCHEDULER_CONFIG["distributed.admin.low-level-log-length"]
    comms = client.cluster.scheduler.stream_comms
    assert comms
    for comm in comms.values():
        assert comm.recent_message_log.maxlen == keep


def test_chunks_follow_cost(sweep: Sweep) -> None:
    runs = list(sweep.runs)
    chunker = _Chunker(sweep.runs, iter(range(len(runs))), len(runs), seconds=1.0)
    unit = cost(runs[0])
    chunker._units, chunker._wall = unit, 0.25  # measured: a run of run 0's cost takes 0.25 s
    first = chunker.next(threads=1)
    # 1 s of work at ~0.25 s a run (costs differ a little between runs): 3 to 5 runs.
    assert 3 <= len(first) <= 5
    sizes = [len(first)]
    while chunker:
        sizes.append(len(chunker.next(threads=2)))
    assert sum(sizes) == len(runs)
    assert sizes[-1] <= sizes[0]  # the tail is cut finer so workers finish together


def sabotage(k2: float, how: str) -> Any:
    """A plugin making the run with ``k2`` kill its worker (``"exit"``) or raise (``"raise"``)."""
    from distributed.diagnostics.plugin import WorkerPlugin

    class Plugin(WorkerPlugin):  # defined in a function so that it is pickled by value
        def setup(self, worker: Any) -> None:
            from kdvsweep.sweep import runner

            self.real = real = runner.execute

            def execute(spec: Any, simulation: Any = None) -> Any:
                if spec.params.get("k2") == k2:
                    if how == "exit":
                        os._exit(17)
                    raise RuntimeError("sabotaged")
                return real(spec, simulation)

            runner.execute = execute

        def teardown(self, worker: Any) -> None:
            from kdvsweep.sweep import runner

            runner.execute = self.real

    return Plugin()


@pytest.fixture(scope="module")
def fragile() -> Iterator[Any]:
    """A cluster on which a task is given up at the first worker death (allowed-failures = 0)."""
    import dask

    with dask.config.set({"distributed.scheduler.allowed-failures": 0}), local_client(2) as c:
        yield c


def test_run_that_kills_its_worker_is_isolated(fragile: Any, tmp_path: Path) -> None:
    # A run that takes its worker down every time (a crash in native code, say): its chunk ends
    # in KilledWorker at the first death, is split into single runs, and only the guilty run is
    # stored as failed (bystanders queued on the dying worker get a second chance).
    small = write_sweep(tmp_path, sweep_text(K2[:3], bad=None))
    fragile.register_plugin(sabotage(K2[1], "exit"), name="sabotage")
    try:
        report = run_sweep(small, tmp_path / "out", fragile, chunk_seconds=10.0)
    finally:
        fragile.unregister_worker_plugin("sabotage")
    res = load(tmp_path / "out")
    assert report.stored == 3
    runs = res.runs.set_index("run_id")
    assert runs.loc[1, "status"] == "failed"
    reason = runs.loc[1, "reason"]
    assert reason.startswith("worker died running this run, each time it was tried (KilledWorker)")
    # The estimate names the memory of its frames: 8 bytes a point, at least.
    spec = small.runs[1]
    frames = len(spec.run.record_times)
    assert f"({frames} frames of {spec.model.grid.n} points)" in reason
    assert "likely out of memory" in reason
    assert (runs.drop(index=1)["status"] == "ok").all()


def test_error_outside_the_runs_stops_the_sweep(fragile: Any, tmp_path: Path) -> None:
    # An exception escaping the runner is not the run's fault (the runner makes every error of a
    # run a row): the sweep stops with a clear error, the stored runs stay, a re-run resumes.
    small = write_sweep(tmp_path, sweep_text(K2[:3], bad=None))
    fragile.register_plugin(sabotage(K2[2], "raise"), name="sabotage")
    try:
        with pytest.raises(KdvsweepError, match=r"outside the runs \(RuntimeError: sabotaged\)"):
            run_sweep(small, tmp_path / "out", fragile, chunk_seconds=0.01)
    finally:
        fragile.unregister_worker_plugin("sabotage")
    assert K2[2] not in set(load(tmp_path / "out").runs["k2"])
    report = run_sweep(small, tmp_path / "out", fragile)
    assert report.stored + report.skipped == 3
    assert (load(tmp_path / "out").runs["status"] == "ok").all()


def test_progress_bar_shows_done_failed_rate_and_time_left() -> None:
    import io

    from kdvsweep.cli.progress import Progress

    stream = io.StringIO()
    with Progress(enabled=True, stream=stream) as bar:
        bar(2, 1, 10)  # resumed: 2 stored before, 1 of them failed
        bar(5, 2, 10)
    text = stream.getvalue()
    assert "5/10" in text  # 2 stored before + 3 now
    assert "failed=2" in text
    assert "run/s" in text or "s/run" in text  # the rate
    assert "<" in text  # elapsed<remaining


def test_on_progress_counts_every_stored_run(client: Any, sweep: Sweep, tmp_path: Path) -> None:
    calls: list[tuple[int, int, int]] = []
    run_sweep(sweep, tmp_path / "p", client, on_progress=lambda *a: calls.append(a))
    assert calls[0] == (0, 0, len(K2))  # before the first task
    assert calls[-1] == (len(K2), 1, len(K2))  # every run stored, the bad one failed
    done = [c[0] for c in calls]
    assert done == sorted(done)


def test_run_resumes_a_complete_store_without_a_cluster(sweep: Sweep, reference: Results) -> None:
    from kdvsweep.sweep import run

    calls: list[tuple[int, int, int]] = []
    report = run(sweep.path, reference.path, on_progress=lambda *a: calls.append(a))
    assert (report.out, report.skipped, report.stored, report.chunks) == (
        reference.path,
        len(K2),
        0,
        0,
    )
    assert calls == [(len(K2), 1, len(K2))]


def test_run_refuses_a_wrong_store_before_connecting(reference: Results, tmp_path: Path) -> None:
    from kdvsweep.sweep import run

    other = tmp_path / "other.toml"
    other.write_text(sweep_text([*K2[:-1], 0.56]))
    # Nothing listens on this address: reaching it would fail otherwise, and slowly.
    with pytest.raises(KdvsweepError, match="holds the results of sweep 'farm-test'"):
        run(other, reference.path, scheduler="tcp://127.0.0.1:9")
    with pytest.raises(ConfigError, match="cluster profile"):
        run(other, reference.path, cluster=tmp_path / "missing-profile.toml")


def test_run_takes_one_place_to_run(sweep: Sweep, tmp_path: Path) -> None:
    from kdvsweep.sweep import run

    with pytest.raises(ConfigError, match="workers and scheduler were both given"):
        run(sweep.path, tmp_path / "x", workers=2, scheduler="tcp://127.0.0.1:9")
    with pytest.raises(ConfigError, match="scheduler and cluster were both given"):
        run(sweep.path, tmp_path / "x", scheduler="tcp://127.0.0.1:9", cluster="p.toml")
    assert not (tmp_path / "x").exists()
