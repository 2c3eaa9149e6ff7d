"""Sweeps on a batch cluster: cluster profiles, and dask-jobqueue workers as live SLURM jobs.

The first part reads profiles and writes job scripts; it needs no batch system. The second part
runs against the single-node SLURM that ``.ci/slurm-up.sh`` starts on this machine: workers are real
batch jobs (sbatch), jobs are really cancelled (scancel), and the dask scheduler listens on the
loopback interface only. Without SLURM those tests skip, saying why; with
``KDVSWEEP_REQUIRE_SLURM=1`` (set by CI) a missing SLURM is a failure instead.
"""

from __future__ import annotations

import os
import re
import shutil
import signal
import subprocess
import sys
import textwrap
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any, NoReturn

import pytest
from conftest import pair_sweep_text

from kdvsweep.exceptions import ConfigError
from kdvsweep.sweep.cluster import (
    _KEYS,
    CERTIFICATE_PREFIX,
    DEFAULT_DASHBOARD,
    SYSTEMS,
    ClusterProfile,
    ClusterStartError,
    certificate_folder,
    cluster_class,
    cluster_client,
    job_script,
    jobqueue_kwargs,
    load_profile,
    parse_profile,
)

ROOT = Path(__file__).resolve().parents[1]
DOCS = ROOT / "README.md"
REQUIRE_SLURM = os.environ.get("KDVSWEEP_REQUIRE_SLURM") == "1"
#: Written by .ci/slurm-up.sh when it fails: its reason.
SLURM_UP_ERROR = Path("/run/kdvsweep-slurm-up.error")
#: Generous bound on the start of two 1-core jobs (they take ~5 s on the development machine).
START_TIMEOUT = 120.0


def minimal(**batch: Any) -> dict[str, Any]:
    """A profile table with the required keys, overridden by ``batch``."""
    return {"batch": {"system": "slurm", "jobs": 2, "cores": 1, "memory": "1GiB", **batch}}


# --- profiles, without a batch system ----------------------------------------------------------


def test_documented_example_profile_is_valid(tmp_path: Path) -> None:
    # The README's cluster profile example is what users copy: it must load as written.
    section = DOCS.read_text(encoding="utf-8").split("## Running a sweep on a batch cluster")[1]
    blocks = re.findall(r"```toml\n(.*?)```", section, flags=re.S)
    assert blocks, f"{DOCS} has no ```toml block"
    path = tmp_path / "mycluster.toml"
    path.write_text(blocks[0], encoding="utf-8")
    profile = load_profile(path)
    assert profile.system in SYSTEMS
    assert profile.threads_per_worker * profile.workers_per_job == profile.cores


def test_defaults_and_relative_logs(tmp_path: Path) -> None:
    path = tmp_path / "p.toml"
    path.write_text(
        '[batch]\nsystem = "slurm"\njobs = 3\ncores = 4\nmemory = "2GiB"\nlogs = "joblogs"\n'
        "[worker]\nprocesses = 4\n",
        encoding="utf-8",
    )
    profile = load_profile(path)
    assert profile.logs == tmp_path / "joblogs"  # relative to the profile's folder, not the cwd
    assert (profile.jobs, profile.threads_per_worker, profile.walltime) == (3, 1, "01:00:00")
    assert profile.python is None  # the workers then run the client's interpreter
    assert jobqueue_kwargs(profile)["python"] == sys.executable


@pytest.mark.parametrize(
    ("table", "key", "expected"),
    [
        ({}, "batch", "a [batch] table"),
        (minimal(system="slurn"), "batch.system", "did you mean 'slurm'"),
        (minimal(jobs=0), "batch.jobs", "an integer >= 1"),
        (minimal(cores=2.5), "batch.cores", "an integer >= 1"),
        (minimal(memory="lots"), "batch.memory", "a size with a unit"),
        (minimal(memory=4), "batch.memory", "a size with a unit"),
        (minimal(walltime="90"), "batch.walltime", '"H:MM:SS"'),
        (minimal(walltime="0:00:00"), "batch.walltime", "a positive duration"),
        (minimal(walltme="1:00:00"), "batch.walltme", "did you mean 'walltime'"),
        (minimal(job_name="1st job"), "batch.job_name", "a letter then"),
        (minimal(directives=["ok", "two\nlines"]), "batch.directives", "one-line strings"),
        (minimal(start_timeout=-5), "batch.start_timeout", ">= 0"),
        ({**minimal(cores=4), "worker": {"processes": 3}}, "worker.processes", "a divisor"),
        ({**minimal(), "worker": {"setup": 7}}, "worker.setup", "a string or an array"),
        ({**minimal(), "netwrk": {}}, "netwrk", "did you mean 'network'"),
    ],
)
def test_profile_errors_name_file_key_and_expectation(
    table: dict[str, Any], key: str, expected: str
) -> None:
    with pytest.raises(ConfigError) as caught:
        parse_profile(table, source="site.toml")
    message = str(caught.value)
    assert message.startswith(f"site.toml: {key}: given ")
    assert expected in message


def test_unreadable_profile_file_is_a_config_error(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match=r"missing\.toml: cannot read"):
        load_profile(tmp_path / "missing.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("[batch\n", encoding="utf-8")
    with pytest.raises(ConfigError, match=r"bad\.toml: not valid TOML"):
        load_profile(bad)


def test_tls_and_a_loopback_dashboard_by_default() -> None:
    profile = parse_profile(minimal())
    assert profile.tls
    assert (profile.ca_file, profile.cert_file, profile.certificates) == (None, None, None)
    assert DEFAULT_DASHBOARD.startswith("127.0.0.1:")
    kwargs = jobqueue_kwargs(profile, logs=Path("/shared/logs"))
    assert kwargs["scheduler_options"]["dashboard_address"] == DEFAULT_DASHBOARD
    assert kwargs["security"].require_encryption
    assert kwargs["protocol"] == "tls://"
    # A session's certificate goes to the log folder, which the jobs write to: they see it.
    assert certificate_folder(profile, logs=Path("/shared/logs")) == Path("/shared/logs")
    script = job_script(profile, logs=Path("/shared/logs"))
    worker = next(line for line in script.splitlines() if "dask_worker" in line)
    assert "tls://scheduler-address:8786" in worker
    assert f"--tls-ca-file /shared/logs/{CERTIFICATE_PREFIX}ca-" in worker
    assert "--protocol tls://" in worker


def test_own_certificates_and_plain_tcp(tmp_path: Path) -> None:
    path = tmp_path / "p.toml"
    path.write_text(
        '[batch]\nsystem = "slurm"\njobs = 1\ncores = 1\nmemory = "1GiB"\n'
        '[security]\nca_file = "tls/ca.pem"\ncert_file = "tls/node.pem"\n'
        'key_file = "/site/node.key"\ncertificates = "certs"\n',
        encoding="utf-8",
    )
    profile = load_profile(path)
    assert profile.ca_file == tmp_path / "tls" / "ca.pem"  # relative to the profile's folder
    security = jobqueue_kwargs(profile)["security"]
    assert security.get_tls_config_for_role("worker") == {
        "ca_file": str(tmp_path / "tls" / "ca.pem"),
        "ciphers": None,
        "cert": str(tmp_path / "tls" / "node.pem"),
        "key": "/site/node.key",
    }
    assert security.get_tls_config_for_role("client")["cert"] == str(tmp_path / "tls/node.pem")
    worker = job_script(profile).splitlines()[-1]
    assert f"--tls-ca-file {tmp_path / 'tls' / 'ca.pem'}" in worker
    assert "--tls-key /site/node.key" in worker
    plain = parse_profile({**minimal(), "security": {"tls": False}})
    kwargs = jobqueue_kwargs(plain)
    assert "security" not in kwargs
    assert "protocol" not in kwargs
    assert "--tls" not in job_script(plain)
    assert "tcp://scheduler-address:8786" in job_script(plain)


@pytest.mark.parametrize(
    ("security", "key", "expected"),
    [
        ({"tls": "yes"}, "security.tls", "true or false"),
        ({"ca_file": "ca.pem"}, "security.cert_file", "ca_file and cert_file are both needed"),
        ({"cert_file": "c.pem", "key_file": "k"}, "security.ca_file", "both needed"),
        ({"tls": False, "ca_file": "ca.pem"}, "security.ca_file", "no certificate with tls"),
        ({"certificate": "c.pem"}, "security.certificate", "did you mean 'certificates'"),
    ],
)
def test_security_errors_name_key_and_expectation(
    security: dict[str, Any], key: str, expected: str
) -> None:
    with pytest.raises(ConfigError) as caught:
        parse_profile({**minimal(), "security": security}, source="site.toml")
    message = str(caught.value)
    assert message.startswith(f"site.toml: {key}: given ")
    assert expected in message


def test_every_profile_key_is_documented() -> None:
    # The README's cluster section names each key, in its example profile or its table.
    section = DOCS.read_text(encoding="utf-8").split("## Running a sweep on a batch cluster")[1]
    section = section.split("\n## ")[0]
    missing = [
        f"{table}.{key}"
        for table, keys in _KEYS.items()
        for key in keys
        if f"`{table}.{key}`" not in section and not re.search(rf"^#? ?{key} = ", section, re.M)
    ]
    assert missing == []


# Header lines each batch system documents for the partition/queue, the accounting string and
# the walltime (sbatch -p/-A/-t; qsub -q/-A/-l walltime; SGE -q/-P/-l h_rt; bsub -q/-P/-W, whose
# -W takes [H:]MM, so 2:00:30 rounds up to 2:01). Common practice, no source.
HEADERS = {
    "slurm": ["#SBATCH -p short", "#SBATCH -A proj7", "#SBATCH -t 02:00:30", "--cpus-per-task=4"],
    "pbs": ["#PBS -q short", "#PBS -A proj7", "#PBS -l walltime=02:00:30", "ncpus=4"],
    "moab": ["#PBS -q short", "#PBS -A proj7", "#PBS -l walltime=02:00:30", "ncpus=4"],
    "sge": ["#$ -q short", "#$ -P proj7", "#$ -l h_rt=02:00:30"],
    "lsf": ["#BSUB -q short", '#BSUB -P "proj7"', "#BSUB -W 2:01", "#BSUB -n 4"],
}


@pytest.mark.parametrize("system", sorted(SYSTEMS))
def test_job_script_of_each_batch_system(system: str) -> None:
    profile = parse_profile(
        {
            "batch": {
                "system": system,
                "queue": "short",
                "account": "proj7",
                "jobs": 2,
                "cores": 4,
                "memory": "8GiB",
                "walltime": "02:00:30",
                "directives": ["--exclusive"],
            },
            "worker": {"processes": 2, "setup": "source /opt/kdv/bin/activate"},
        }
    )
    script = job_script(profile)
    for line in HEADERS[system]:
        assert line in script
    lines = script.splitlines()
    prefix = lines[2].split()[0]  # the system's directive marker: #SBATCH, #PBS, #$, #BSUB
    assert f"{prefix} --exclusive" in lines
    # The set-up line runs before the worker, in the same shell.
    setup = lines.index("source /opt/kdv/bin/activate")
    worker = next(i for i, line in enumerate(lines) if "distributed.cli.dask_worker" in line)
    assert setup < worker
    assert "--nworkers 2" in lines[worker]
    assert "--nthreads 2" in lines[worker]


def test_systems_name_real_dask_jobqueue_classes() -> None:
    for name in SYSTEMS:
        cls = cluster_class(parse_profile(minimal(system=name)))
        assert "JobQueueCluster" in [base.__name__ for base in cls.__mro__], name
    # Importing dask_jobqueue replaces Ctrl-C by sys.exit() (exit status 0); we take it back.
    assert getattr(signal.getsignal(signal.SIGINT), "__module__", None) != "dask_jobqueue.runner"


# --- the live single-node SLURM ----------------------------------------------------------------


def _unavailable(reason: str) -> NoReturn:
    message = f"live SLURM unavailable: {reason}; start it with `bash .ci/slurm-up.sh` as root"
    if SLURM_UP_ERROR.is_file():
        message += f" (its last failure: {SLURM_UP_ERROR.read_text(encoding='utf-8').strip()})"
    if REQUIRE_SLURM:
        pytest.fail(f"{message}; KDVSWEEP_REQUIRE_SLURM=1 makes this a failure", pytrace=False)
    pytest.skip(message)


@pytest.fixture(scope="session")
def partition() -> str:
    """The default partition of the running SLURM, checked to have an idle node."""
    for tool in ("sbatch", "squeue", "scancel", "sinfo"):
        if shutil.which(tool) is None:
            _unavailable(f"{tool} is not on PATH (the SLURM client tools are not installed)")
    try:
        probe = subprocess.run(
            ["sinfo", "-h", "-o", "%P %t"], capture_output=True, text=True, timeout=30
        )
    except subprocess.TimeoutExpired:
        _unavailable("sinfo did not answer within 30 s")
    if probe.returncode != 0:
        _unavailable(f"slurmctld does not answer (sinfo: {probe.stderr.strip() or probe.stdout})")
    rows = [line.split() for line in probe.stdout.splitlines() if line.strip()]
    idle = [(name, state) for name, state in rows if state in ("idle", "mix")]
    if not idle:
        _unavailable(f"no partition has an idle node (sinfo: {probe.stdout.strip()!r})")
    default = [name for name, _ in idle if name.endswith("*")]
    return (default or [idle[0][0]])[0].rstrip("*")


def live_profile(partition: str, tmp_path: Path, name: str) -> ClusterProfile:
    """Two 1-core jobs of one single-threaded worker each, scheduler and workers on loopback."""
    table = {
        "batch": {
            "system": "slurm",
            "queue": partition,
            "jobs": 2,
            "cores": 1,
            "memory": "1GiB",
            "walltime": "00:15:00",
            "job_name": name,
            "logs": str(tmp_path / "logs"),
            "start_timeout": START_TIMEOUT,
        },
        "network": {"interface": "lo", "dashboard": "127.0.0.1:0"},
    }
    return parse_profile(table, source=f"<{name}>")


def queued(name: str) -> dict[str, str]:
    """Job id -> state of the jobs named ``name`` that squeue still lists."""
    out = subprocess.run(
        ["squeue", "-h", "-n", name, "-o", "%i %T"],
        capture_output=True,
        text=True,
        check=True,
        timeout=30,
    ).stdout
    return dict(line.split() for line in out.splitlines() if line.strip())


def running(name: str) -> list[str]:
    """Ids of the running jobs named ``name``, sorted."""
    return sorted(job for job, state in queued(name).items() if state == "RUNNING")


def wait_until_gone(name: str, timeout: float = 60.0) -> dict[str, str]:
    """Wait for every job named ``name`` to leave the queue; returns those still listed."""
    deadline = time.monotonic() + timeout
    while (left := queued(name)) and time.monotonic() < deadline:
        time.sleep(0.5)
    return left


@pytest.fixture
def job_name(partition: str, request: pytest.FixtureRequest) -> Iterator[str]:
    """A job name of this test alone; its jobs are cancelled afterwards even if the test broke."""
    name = "kvt-" + re.sub(r"[^A-Za-z0-9]+", "-", request.node.name)[:40].strip("-")
    yield name
    left = queued(name)
    if left:
        subprocess.run(["scancel", *left], check=False, timeout=30)


def test_workers_are_batch_jobs_and_leave_with_the_block(
    partition: str, tmp_path: Path, job_name: str
) -> None:
    import distributed

    profile = live_profile(partition, tmp_path, job_name)
    messages: list[str] = []
    with cluster_client(profile, echo=messages.append) as client:
        client.wait_for_workers(2, timeout=START_TIMEOUT)
        jobs = running(job_name)
        assert len(jobs) == 2
        workers = client.scheduler_info()["workers"]
        assert sorted(w["nthreads"] for w in workers.values()) == [1, 1]
        assert all(address.startswith("tls://127.0.0.1:") for address in workers)
        # The session's certificate reached the jobs as files of the user alone, in the logs
        # folder; a client without it is refused by the scheduler.
        certificates = list((tmp_path / "logs").glob(f"{CERTIFICATE_PREFIX}*"))
        assert len(certificates) == 3  # authority, certificate, key
        assert {c.stat().st_mode & 0o777 for c in certificates} == {0o600}
        with pytest.raises(OSError, match=r"Connection reset|Timed out"):
            distributed.Client(client.scheduler.address.replace("tls://", "tcp://"), timeout="5s")
        # Each worker process lives inside its own batch job.
        inside = client.run(lambda: os.environ.get("SLURM_JOB_ID"))
        assert sorted(inside.values()) == jobs
        squares = client.gather(client.map(lambda i: i * i, range(50)))
        assert squares == [i * i for i in range(50)]
        assert client.dashboard_link.startswith("http://127.0.0.1:")
    assert wait_until_gone(job_name) == {}
    assert not list((tmp_path / "logs").glob(f"{CERTIFICATE_PREFIX}*"))  # removed at the end
    for job in jobs:  # the jobs' output went where the profile said
        assert (tmp_path / "logs" / f"{job_name}-{job}.err").is_file()
    assert any(m.startswith("dask dashboard: http://127.0.0.1:") for m in messages)


def test_jobs_are_cancelled_when_the_body_raises(
    partition: str, tmp_path: Path, job_name: str
) -> None:
    profile = live_profile(partition, tmp_path, job_name)

    def sweep_that_breaks() -> None:
        with cluster_client(profile) as client:
            client.wait_for_workers(2, timeout=START_TIMEOUT)
            assert len(running(job_name)) == 2
            raise RuntimeError("sweep broke")

    with pytest.raises(RuntimeError, match="sweep broke"):
        sweep_that_breaks()
    assert wait_until_gone(job_name) == {}


CTRL_C_SCRIPT = """
import signal, sys, time
from kdvsweep.sweep.cluster import cluster_client, load_profile

# A child of a background shell starts with SIGINT ignored; a terminal's Ctrl-C is not.
signal.signal(signal.SIGINT, signal.default_int_handler)

with cluster_client(load_profile(sys.argv[1])) as client:
    client.wait_for_workers(2, timeout=120)
    print("READY", flush=True)
    client.gather(client.map(lambda i: time.sleep(30), range(4)))
print("NOT INTERRUPTED", flush=True)
"""


def test_ctrl_c_cancels_the_jobs(partition: str, tmp_path: Path, job_name: str) -> None:
    # A real process and a real SIGINT, as a user pressing Ctrl-C in a terminal.
    profile = tmp_path / "site.toml"
    profile.write_text(
        textwrap.dedent(f"""\
            [batch]
            system = "slurm"
            queue = "{partition}"
            jobs = 2
            cores = 1
            memory = "1GiB"
            walltime = "00:15:00"
            job_name = "{job_name}"
            logs = "logs"
            [network]
            interface = "lo"
            dashboard = "127.0.0.1:0"
        """),
        encoding="utf-8",
    )
    script = tmp_path / "interrupted.py"
    script.write_text(CTRL_C_SCRIPT, encoding="utf-8")
    proc = subprocess.Popen(
        [sys.executable, str(script), str(profile)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    try:
        assert proc.stdout is not None
        ready = proc.stdout.readline()
        assert ready.strip() == "READY", proc.communicate(timeout=30)
        assert len(running(job_name)) == 2
        time.sleep(1.0)  # let the tasks start on the workers
        proc.send_signal(signal.SIGINT)
        out, err = proc.communicate(timeout=90)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert proc.returncode != 0
    assert "KeyboardInterrupt" in err
    assert "NOT INTERRUPTED" not in out
    assert wait_until_gone(job_name) == {}
    assert (tmp_path / "logs").is_dir()  # relative to the profile file


def test_workers_that_never_start_raise_and_cancel(
    partition: str, tmp_path: Path, job_name: str
) -> None:
    table = {
        "batch": {
            "system": "slurm",
            "queue": partition,
            "jobs": 2,
            "cores": 1,
            "memory": "1GiB",
            "job_name": job_name,
            "start_timeout": 8,
        },
        "worker": {"python": str(tmp_path / "no-such-python")},
        "network": {"interface": "lo", "dashboard": "127.0.0.1:0"},
    }
    profile = parse_profile(table, source="broken.toml")

    def start() -> None:
        with cluster_client(profile, logs=tmp_path / "l"):
            pytest.fail("the block must not run without workers")

    with pytest.raises(ClusterStartError) as caught:
        start()
    message = str(caught.value)
    assert message.startswith("broken.toml: no dask worker joined within batch.start_timeout = 8 s")
    assert str(tmp_path / "l") in message
    assert wait_until_gone(job_name) == {}
    # The job's own error output says what went wrong.
    errors = "".join(p.read_text() for p in (tmp_path / "l").glob("*.err"))
    assert "no-such-python" in errors


# --- sweeps through the cluster path -----------------------------------------------------------

#: Eight KdV pair collisions (kappa1 = 0.8 overtakes kappa2), a fraction of a second each; run 3
#: gets dt = 2, with which ETDRK4 loses the solution, so a failed row travels the same way.
K2 = [0.42, 0.46, 0.50, 0.54, 0.58, 0.62, 0.45, 0.55]
BAD = 3
SWEEP_TEXT = pair_sweep_text("cluster-test", K2, bad=BAD, frame_every=0.1)


@pytest.fixture(scope="module")
def sweep(tmp_path_factory: pytest.TempPathFactory) -> Any:
    from kdvsweep.sweep.config import load_sweep

    path = tmp_path_factory.mktemp("cluster-sweep") / "sweep.toml"
    path.write_text(SWEEP_TEXT, encoding="utf-8")
    return load_sweep(path)


@pytest.fixture(scope="module")
def local_tables(sweep: Any, tmp_path_factory: pytest.TempPathFactory) -> Any:
    """The same sweep run on this machine's embedded cluster: what the batch jobs must give."""
    from kdvsweep.results import load
    from kdvsweep.sweep.farm import local_client, run_sweep

    out = tmp_path_factory.mktemp("local") / "store"
    with local_client(2) as client:
        report = run_sweep(sweep, out, client, chunk_seconds=0.5)
    assert (report.stored, report.failed) == (len(K2), 1)
    return load(out)


def assert_same_tables(local: Any, remote: Any) -> None:
    """Bit for bit, but for the columns that time the machine."""
    import pandas as pd

    from kdvsweep.sweep.runner import TIMING_COLUMNS

    timing = list(TIMING_COLUMNS)
    pd.testing.assert_frame_equal(
        local.runs.drop(columns=timing), remote.runs.drop(columns=timing), check_exact=True
    )
    pd.testing.assert_frame_equal(local.solitons, remote.solitons, check_exact=True)


def stored_run_ids(out: Path) -> list[int]:
    """Every run id in every committed runs part, duplicates included (readers drop those)."""
    import pyarrow.parquet as pq

    return sorted(
        int(i)
        for part in (out / "runs").glob("part-*.parquet")
        for i in pq.read_table(part)["run_id"].to_pylist()
    )


def test_sweep_on_the_cluster_equals_the_local_sweep(
    partition: str,
    tmp_path: Path,
    job_name: str,
    sweep: Any,
    local_tables: Any,
    capsys: pytest.CaptureFixture[str],
) -> None:
    from kdvsweep.cli.progress import Progress
    from kdvsweep.results import load
    from kdvsweep.sweep.farm import run_sweep

    out = tmp_path / "store"
    with cluster_client(live_profile(partition, tmp_path, job_name)) as client:
        client.wait_for_workers(2, timeout=START_TIMEOUT)
        with Progress(enabled=True) as bar:
            report = run_sweep(sweep, out, client, on_progress=bar, chunk_seconds=0.5)
        assert len(running(job_name)) == 2
    assert (report.stored, report.failed, report.workers) == (len(K2), 1, 2)
    assert_same_tables(local_tables, load(out))
    assert stored_run_ids(out) == list(range(len(K2)))
    # The progress bar reached the end and counted the failed run, as on a workstation.
    bar = capsys.readouterr().err
    assert f"{len(K2)}/{len(K2)}" in bar
    assert "failed=1" in bar
    assert wait_until_gone(job_name) == {}


def test_scancel_mid_sweep_loses_and_duplicates_nothing(
    partition: str, tmp_path: Path, job_name: str, sweep: Any, local_tables: Any
) -> None:
    import dask

    from kdvsweep.results import load
    from kdvsweep.sweep.farm import run_sweep

    out = tmp_path / "store"
    cancelled: dict[str, Any] = {}

    def cancel_a_busy_job(client: Any) -> None:
        jobs = client.run(lambda: os.environ["SLURM_JOB_ID"])
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline:
            parts = list((out / "runs").glob("part-*.parquet")) if (out / "runs").is_dir() else []
            busy = [w for w, keys in client.processing().items() if keys and w in jobs]
            if parts and busy:
                cancelled["stored"] = len(stored_run_ids(out))
                cancelled["job"] = jobs[busy[0]]
                subprocess.run(["scancel", jobs[busy[0]]], check=True, timeout=30)
                return
            time.sleep(0.02)

    messages: list[str] = []
    # Declare a job lost 2 s after its worker vanished (default 15 s) to keep the test short.
    with (
        dask.config.set({"distributed.deploy.lost-worker-timeout": "2s"}),
        cluster_client(live_profile(partition, tmp_path, job_name), echo=messages.append) as client,
    ):
        client.wait_for_workers(2, timeout=START_TIMEOUT)
        canceller = threading.Thread(target=cancel_a_busy_job, args=(client,))
        canceller.start()
        # One run per task, so that the cancelled job surely holds work that must be redone.
        report = run_sweep(sweep, out, client, chunk_seconds=0.01)
        canceller.join()
        assert cancelled, "no job was cancelled: the sweep ended before a worker was busy"
        # The cancelled job is replaced by a new one, which brings a worker up again.
        deadline = time.monotonic() + START_TIMEOUT
        while len(client.scheduler_info()["workers"]) < 2 and time.monotonic() < deadline:
            time.sleep(0.2)
        now = running(job_name)
        assert cancelled["job"] not in now
        assert len(now) == 2
    assert any("lost; submitting a replacement" in m for m in messages)
    assert cancelled["stored"] < len(K2)  # it really was mid-sweep
    assert report.stored == len(K2)
    assert stored_run_ids(out) == list(range(len(K2)))  # each run stored exactly once
    assert_same_tables(local_tables, load(out))
    assert wait_until_gone(job_name) == {}


def test_cli_run_with_a_cluster_profile(
    partition: str, tmp_path: Path, job_name: str, sweep: Any, local_tables: Any
) -> None:
    # `kdvsweep run FILE --cluster PROFILE`: the same tables as locally, job logs beside the
    # results, no job left behind.
    from kdvsweep.cli import main
    from kdvsweep.results import load

    profile_file = tmp_path / "profile.toml"
    profile_file.write_text(
        f"""
[batch]
system = "slurm"
queue = "{partition}"
jobs = 2
cores = 1
memory = "1GiB"
walltime = "00:15:00"
job_name = "{job_name}"
start_timeout = {START_TIMEOUT}

[network]
interface = "lo"
dashboard = "127.0.0.1:0"
""",
        encoding="utf-8",
    )
    out = tmp_path / "store"
    args = ["run", str(sweep.path), "--out", str(out), "--cluster", str(profile_file)]
    assert main([*args, "--no-progress"]) == 0
    assert_same_tables(local_tables, load(out))
    assert list((out / "batch-logs").glob("*.err"))
    assert wait_until_gone(job_name) == {}
