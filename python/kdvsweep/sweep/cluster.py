"""Run a sweep's dask workers as batch jobs: cluster profiles and a managed dask-jobqueue cluster.

A *cluster profile* is a small TOML file (our own format, documented in the README section "Running
a sweep on a batch cluster") saying which batch system to use and what each job asks for::

    [batch]
    system = "slurm"          # slurm, pbs, moab, sge, lsf
    queue = "short"           # partition on SLURM, queue elsewhere
    jobs = 4                  # batch jobs kept running
    cores = 8                 # cores per job
    memory = "16GiB"          # memory per job
    walltime = "04:00:00"

    [worker]
    setup = "source ~/envs/kdv/bin/activate"

:func:`load_profile` reads and validates one; :func:`cluster_client` starts the dask-jobqueue
cluster it describes, submits the jobs, yields a connected :class:`distributed.Client` and cancels
every job on the way out, whether the body returned, raised or was interrupted with Ctrl-C. While it
runs, a batch job whose workers all vanished (killed, pre-empted, out of walltime) is replaced, so
a long sweep keeps its strength. Dask reschedules the runs the lost workers held; the client, the
only writer of the store, receives each result once.

The scheduler, the workers and the client speak TLS and accept only peers holding the session's
certificate (:func:`cluster_security`): a dask scheduler runs whatever code its clients send, and
its port is open to every user of the login node and the compute nodes. The dashboard listens on
the login node's loopback interface unless the profile says otherwise (it has no password).
"""

from __future__ import annotations

import contextlib
import logging
import os
import re
import signal
import subprocess
import sys
import tempfile
import threading
import time
import tomllib
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from types import ModuleType
from typing import Any

from ..exceptions import ConfigError, KdvsweepError
from .schema import Source, Table

#: dask settings of the process that runs the scheduler (ours when the cluster is embedded or a
#: batch cluster started from here). dask keeps the last ``low-level-log-length`` messages of
#: each connection for debugging (1000 by default): a message to a worker holds a chunk of run
#: specs, so the default kept every run of a 10^5-run sweep in the client (about 1 kB a run).
SCHEDULER_CONFIG = {"distributed.admin.low-level-log-length": 16}


def _dask_config(config: Mapping[str, Any]) -> contextlib.AbstractContextManager[Any]:
    import dask

    return dask.config.set(dict(config))


log = logging.getLogger(__name__)


class ClusterStartError(KdvsweepError, TimeoutError):
    """No batch job brought a dask worker up within the profile's ``start_timeout``."""


@dataclass(frozen=True)
class BatchSystem:
    """How one batch system's dask-jobqueue class takes our profile keys.

    Attributes
    ----------
    cluster_class
        Name of the class in :mod:`dask_jobqueue`.
    account_kwarg
        Keyword that carries ``account`` (SLURM and PBS say account, others say project).
    queue_word
        What the system calls a queue, for messages.
    """

    cluster_class: str
    account_kwarg: str = "account"
    queue_word: str = "queue"


#: Batch systems a profile may name. SLURM is tested against a live cluster; the others map the
#: same keys onto their dask-jobqueue class and are checked through the job scripts they write.
SYSTEMS: dict[str, BatchSystem] = {
    "slurm": BatchSystem("SLURMCluster", queue_word="partition"),
    "pbs": BatchSystem("PBSCluster"),
    "moab": BatchSystem("MoabCluster"),
    "sge": BatchSystem("SGECluster", account_kwarg="project"),
    "lsf": BatchSystem("LSFCluster", account_kwarg="project"),
}

#: Where the dashboard of a batch cluster listens unless the profile says: the loopback interface
#: of the machine running the client (reach it through an ssh tunnel), not every interface.
DEFAULT_DASHBOARD = "127.0.0.1:8787"

_WALLTIME = re.compile(r"^(\d+):([0-5]\d):([0-5]\d)$")
_JOB_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_.-]{0,63}$")


@dataclass(frozen=True)
class ClusterProfile:
    """A validated cluster profile; build it with :func:`load_profile` or :func:`parse_profile`.

    Attributes
    ----------
    source
        Where the profile came from (file path or a caller's label), for messages.
    system
        Key of :data:`SYSTEMS`.
    jobs
        Number of batch jobs to keep running.
    cores
        Cores requested per job.
    memory
        Memory requested per job, as dask spells sizes (``"4GiB"``, ``"500MB"``).
    walltime
        ``"H:MM:SS"`` per job.
    queue, account
        Partition/queue and accounting string, ``None`` for the system's default.
    job_name
        Name the jobs carry in the batch queue.
    directives
        Extra header lines for the job script, without the system's prefix (``"--gres=..."``).
    logs
        Folder of the jobs' stdout/stderr; ``None`` lets the caller choose.
    workers_per_job
        Dask worker processes per job; each gets ``cores // workers_per_job`` threads.
    python
        Interpreter the workers run; ``None`` means the one running the client.
    setup
        Shell lines run in the job before the worker starts (module loads, venv activation).
    scratch
        Worker-local folder for dask's spill files; ``None`` for dask's default.
    interface
        Network interface of the scheduler and the workers (``"ib0"``, ``"lo"``).
    scheduler_host
        Address the scheduler binds to; overrides ``interface`` for the scheduler only.
    dashboard
        Where the dask dashboard listens (default :data:`DEFAULT_DASHBOARD`, the loopback
        interface; ``":8787"`` for every interface, ``":0"`` for any free port).
    start_timeout
        Seconds to wait for the first worker; 0 waits for nothing.
    resubmit_limit
        How many lost jobs may be replaced over one session; 0 never replaces.
    tls
        Whether the scheduler, workers and client speak TLS with certificates (default true).
    ca_file, cert_file, key_file
        The site's own certificates (paths the compute nodes see); ``None``: a certificate made
        for this session (:func:`cluster_security`).
    certificates
        Folder where a session's certificate is written for the jobs to read; ``None``: the
        batch log folder.
    """

    source: str
    system: str
    jobs: int
    cores: int
    memory: str
    walltime: str
    queue: str | None = None
    account: str | None = None
    job_name: str = "kdvsweep"
    directives: tuple[str, ...] = ()
    logs: Path | None = None
    workers_per_job: int = 1
    python: str | None = None
    setup: tuple[str, ...] = ()
    scratch: str | None = None
    interface: str | None = None
    scheduler_host: str | None = None
    dashboard: str = DEFAULT_DASHBOARD
    start_timeout: float = 600.0
    resubmit_limit: int = 10
    tls: bool = True
    ca_file: Path | None = None
    cert_file: Path | None = None
    key_file: Path | None = None
    certificates: Path | None = None

    @property
    def threads_per_worker(self) -> int:
        """Threads of each dask worker process."""
        return self.cores // self.workers_per_job

    def describe(self) -> str:
        """One line for a banner: ``slurm: 4 jobs x 8 cores, 16GiB, 04:00:00, partition short``."""
        where = f", {SYSTEMS[self.system].queue_word} {self.queue}" if self.queue else ""
        return (
            f"{self.system}: {self.jobs} jobs x {self.cores} cores, {self.memory}, "
            f"{self.walltime}{where}"
        )


# --- reading and validating ------------------------------------------------------------------

_KEYS: dict[str, tuple[str, ...]] = {
    "batch": (
        "system", "queue", "account", "jobs", "cores", "memory", "walltime", "job_name",
        "directives", "logs", "start_timeout", "resubmit_limit",
    ),
    "worker": ("processes", "python", "setup", "scratch"),
    "network": ("interface", "scheduler_host", "dashboard"),
    "security": ("tls", "ca_file", "cert_file", "key_file", "certificates"),
}  # fmt: skip


def load_profile(path: str | os.PathLike[str]) -> ClusterProfile:
    """Read and validate a cluster profile file.

    Parameters
    ----------
    path
        TOML file with a ``[batch]`` table and optional ``[worker]`` and ``[network]`` tables.
        A relative ``batch.logs`` is taken relative to the file's folder.

    Returns
    -------
    ClusterProfile

    Raises
    ------
    ConfigError
        If the file is missing or not TOML, or a key is unknown, missing or of the wrong kind; the
        message reads ``FILE: key.path: given X, expected Y``.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise ConfigError(f"{path}: cannot read the cluster profile: {exc.strerror}") from exc
    try:
        table = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML: {exc}") from exc
    return parse_profile(table, source=str(path), base=path.resolve().parent)


def parse_profile(
    table: Mapping[str, Any], source: str = "<profile>", base: Path | None = None
) -> ClusterProfile:
    """Validate a profile given as a parsed TOML table (for example a sweep file's ``[cluster]``).

    Parameters
    ----------
    table
        Mapping with a ``batch`` table and optional ``worker`` and ``network`` tables.
    source
        Label at the head of error messages (the file name).
    base
        Folder a relative ``batch.logs`` is resolved against; ``None`` leaves it relative to the
        working directory.

    Returns
    -------
    ClusterProfile

    Raises
    ------
    ConfigError
        On any unknown, missing or ill-typed key.
    """
    src = Source(source)
    top = Table(src, dict(table), "", _KEYS)
    if not top.has("batch"):
        raise src.error("batch", "nothing", "a [batch] table with system, jobs, cores and memory")
    batch, worker, network, security = (
        Table(src, top.raw(n, {}), n, keys) for n, keys in _KEYS.items()
    )

    system = batch.text("system", choices=tuple(SYSTEMS))
    cores = batch.integer("cores", minimum=1)
    processes = worker.integer("processes", default=1, minimum=1)
    if cores % processes:
        raise worker.fail(
            "processes", processes, f"a divisor of batch.cores = {cores}, so that every worker "
            "process of a job gets the same number of threads",
        )  # fmt: skip
    logs = _path(batch, "logs", base)
    return ClusterProfile(
        source=source,
        system=system,
        jobs=batch.integer("jobs", minimum=1),
        cores=cores,
        memory=_memory(batch, "memory"),
        walltime=_walltime(batch, "walltime", default="01:00:00"),
        queue=_word(batch, "queue"),
        account=_word(batch, "account"),
        job_name=_job_name(batch, "job_name", default="kdvsweep"),
        directives=_lines(batch, "directives"),
        logs=logs,
        start_timeout=_seconds(batch, "start_timeout", default=600.0),
        resubmit_limit=batch.integer("resubmit_limit", default=10, minimum=0),
        workers_per_job=processes,
        python=_word(worker, "python"),
        setup=_lines(worker, "setup"),
        scratch=_word(worker, "scratch"),
        interface=_word(network, "interface"),
        scheduler_host=_word(network, "scheduler_host"),
        dashboard=_word(network, "dashboard") or DEFAULT_DASHBOARD,
        **_security(security, base),
    )


def _security(table: Table, base: Path | None) -> dict[str, Any]:
    """The ``[security]`` table: TLS on or off, the site's certificates or a session's."""
    tls = table.flag("tls", default=True)
    files = {key: _path(table, key, base) for key in ("ca_file", "cert_file", "key_file")}
    given = [key for key, path in files.items() if path is not None]
    if given and not tls:
        raise table.fail(given[0], str(files[given[0]]), "no certificate with tls = false")
    if given and (files["ca_file"] is None or files["cert_file"] is None):
        missing = "ca_file" if files["ca_file"] is None else "cert_file"
        raise table.fail(
            missing, "nothing", f"a file path: with {given[0]} given, ca_file and cert_file are "
            "both needed (key_file too, unless the key is inside cert_file)",
        )  # fmt: skip
    return {"tls": tls, **files, "certificates": _path(table, "certificates", base)}


def _word(table: Table, key: str) -> str | None:
    """An optional non-empty one-line string."""
    value = table.raw(key, None)
    if value is not None and (not isinstance(value, str) or not value.strip() or "\n" in value):
        raise table.fail(key, value, "a non-empty one-line string")
    return value


def _path(table: Table, key: str, base: Path | None) -> Path | None:
    """An optional folder; relative ones are taken inside ``base`` when given."""
    value = _word(table, key)
    if value is None:
        return None
    path = Path(value).expanduser()
    return base / path if base is not None and not path.is_absolute() else path


def _seconds(table: Table, key: str, default: float) -> float:
    """A duration in seconds, 0 or more."""
    value = table.number(key, default=default)
    if value < 0:
        raise table.fail(key, value, "a number of seconds >= 0")
    return float(value)


def _memory(table: Table, key: str) -> str:
    """A size with a unit, as dask and dask-jobqueue read it."""
    from dask.utils import parse_bytes

    value = table.raw(key)
    try:
        ok = isinstance(value, str) and parse_bytes(value) > 0
    except ValueError:
        ok = False
    if not ok:
        raise table.fail(key, value, 'a size with a unit, like "4GiB" or "500MB"')
    return value.replace(" ", "")


def _walltime(table: Table, key: str, default: str) -> str:
    """A positive ``H:MM:SS`` (hours may exceed 24: every system here reads that form)."""
    value = table.raw(key, default)
    if not (isinstance(value, str) and _WALLTIME.match(value)) or set(value) <= {"0", ":"}:
        raise table.fail(key, value, 'a positive duration "H:MM:SS", like "02:30:00"')
    return value


def _job_name(table: Table, key: str, default: str) -> str:
    """A name every batch system accepts (PBS is the strictest: 15 characters on old versions)."""
    value = table.raw(key, default)
    if not (isinstance(value, str) and _JOB_NAME.match(value)):
        raise table.fail(key, value, "a letter then up to 63 letters, digits, '_', '.' or '-'")
    return value


def _lines(table: Table, key: str) -> tuple[str, ...]:
    """A string or an array of one-line strings."""
    value = table.raw(key, [])
    lines = [value] if isinstance(value, str) else value
    if not isinstance(lines, list) or not all(
        isinstance(line, str) and line.strip() and "\n" not in line for line in lines
    ):
        raise table.fail(key, value, "a string or an array of one-line strings")
    return tuple(lines)


# --- from a profile to dask-jobqueue ---------------------------------------------------------


def jobqueue_kwargs(profile: ClusterProfile, logs: Path | None = None) -> dict[str, Any]:
    """Keyword arguments of the profile's dask-jobqueue cluster class.

    Parameters
    ----------
    profile
        A validated profile.
    logs
        Folder of the batch jobs' output, used when the profile sets none.

    Returns
    -------
    dict
        Ready for ``dask_jobqueue.<SYSTEMS[system].cluster_class>(**kwargs)``.
    """
    system = SYSTEMS[profile.system]
    scheduler: dict[str, Any] = {"dashboard_address": profile.dashboard}
    if profile.scheduler_host is not None:
        scheduler["host"] = profile.scheduler_host
    log_dir = profile.logs or logs
    kwargs: dict[str, Any] = {
        "cores": profile.cores,
        "processes": profile.workers_per_job,
        "memory": profile.memory,
        "walltime": _walltime_for(profile.system, profile.walltime),
        "job_name": profile.job_name,
        "python": profile.python or sys.executable,
        "job_script_prologue": list(profile.setup),
        "job_extra_directives": list(profile.directives),
        "log_directory": None if log_dir is None else str(log_dir),
        "local_directory": profile.scratch,
        "interface": profile.interface,
        "scheduler_options": scheduler,
        "queue": profile.queue,
    }
    if profile.account is not None:
        kwargs[system.account_kwarg] = profile.account
    if profile.tls:
        # A session's certificate is in memory here: cluster_client writes it for the jobs.
        kwargs["security"] = cluster_security(profile)
        kwargs["protocol"] = "tls://"  # the workers' listeners too, not only their connections
    return kwargs


def certificate_folder(profile: ClusterProfile, logs: Path | None = None) -> Path:
    """Where a session's certificate is written for the jobs: ``security.certificates``, else
    the batch log folder (the jobs write there, so they see it), else the current folder."""
    folder = profile.certificates or profile.logs or logs or Path.cwd()
    return Path(folder).expanduser().resolve()


#: Prefix of the files of a session's certificate (authority, certificate, key).
CERTIFICATE_PREFIX = ".kdvsweep-tls-"


@contextlib.contextmanager
def _session_certificate(security: Any, folder: Path) -> Iterator[Any]:
    """Write a session's in-memory certificate to files for the jobs; remove them at the end.

    The files are created readable by the user alone (``tempfile.mkstemp``). Yields the same
    credentials read from those files, which every role of the cluster then uses; credentials
    that are files already (the site's own) are yielded as they are.
    """
    from distributed import security as dsec

    Security: Any = dsec.Security
    pem = {
        "ca": security.tls_ca_file,
        "cert": security.tls_worker_cert,
        "key": security.tls_worker_key,
    }
    if not any(isinstance(text, str) and "\n" in text for text in pem.values()):
        yield security
        return
    folder.mkdir(parents=True, exist_ok=True)
    paths: dict[str, str] = {}
    try:
        for part, text in pem.items():
            fd, name = tempfile.mkstemp(prefix=f"{CERTIFICATE_PREFIX}{part}-", dir=folder)
            paths[part] = name
            with os.fdopen(fd, "w", encoding="ascii") as file:
                file.write(text)
        roles = {f"tls_{role}_{part}": paths[part] for role in ("scheduler", "worker", "client")
                 for part in ("cert", "key")}  # fmt: skip
        yield Security(tls_ca_file=paths["ca"], require_encryption=True, **roles)
    finally:
        for name in paths.values():
            with contextlib.suppress(OSError):
                os.unlink(name)


def cluster_security(profile: ClusterProfile) -> Any:
    """The TLS credentials of a batch cluster: the profile's certificate files, or a new
    certificate for this session (``Security.temporary``: a fresh key and a self-signed
    certificate that the scheduler, the workers and the client present and require).

    One certificate serves every role; ``ca_file`` is the authority that signed it (the
    certificate itself when it is self-signed). Peers without it are refused at the handshake.

    Raises
    ------
    KdvsweepError
        If a session's certificate is wanted and the ``cryptography`` package is missing.
    """
    from distributed import security

    Security: Any = security.Security

    if profile.ca_file is None or profile.cert_file is None:
        try:
            return Security.temporary()
        except ImportError as exc:
            raise KdvsweepError(
                f"{profile.source}: a TLS certificate for the session needs the cryptography "
                "package (a dependency of kdvsweep): pip install cryptography, or name your "
                "own certificates in [security]"
            ) from exc
    cert = str(profile.cert_file)
    key = str(profile.key_file) if profile.key_file is not None else None
    roles = {f"tls_{role}_{part}": value for role in ("scheduler", "worker", "client")
             for part, value in (("cert", cert), ("key", key)) if value is not None}  # fmt: skip
    return Security(tls_ca_file=str(profile.ca_file), require_encryption=True, **roles)


def _walltime_for(system: str, walltime: str) -> str:
    """LSF's ``-W`` takes ``H:MM``: round the seconds up there; the others take ``H:MM:SS``."""
    if system != "lsf":
        return walltime
    hours, minutes, seconds = (int(part) for part in walltime.split(":"))
    minutes += hours * 60 + (seconds > 0)
    return f"{minutes // 60}:{minutes % 60:02d}"


def cluster_class(profile: ClusterProfile) -> Any:
    """The dask-jobqueue cluster class of the profile's batch system."""
    return getattr(_jobqueue(), SYSTEMS[profile.system].cluster_class)


def _jobqueue() -> ModuleType:
    """Import dask_jobqueue and take back Ctrl-C from it.

    Importing it installs a SIGINT handler that calls ``sys.exit()`` (dask_jobqueue/runner.py,
    meant for its MPI-style runners): Ctrl-C would then end a sweep with exit status 0 and skip
    the interrupted-sweep message. We restore the handler found before the import, or Python's
    default if the import happened elsewhere.
    """
    first = "dask_jobqueue" not in sys.modules
    before = signal.getsignal(signal.SIGINT)
    import dask_jobqueue

    if threading.current_thread() is threading.main_thread():
        now = signal.getsignal(signal.SIGINT)
        if first and before is not None:
            signal.signal(signal.SIGINT, before)
        elif getattr(now, "__module__", None) == "dask_jobqueue.runner":
            signal.signal(signal.SIGINT, signal.default_int_handler)
    return dask_jobqueue


def job_script(profile: ClusterProfile, logs: Path | None = None) -> str:
    """The batch script one job would run, without starting a scheduler.

    For showing a user what a profile submits: the scheduler address in it is a placeholder,
    everything else is what would go to the batch system.
    """
    job_cls = cluster_class(profile).job_cls
    kwargs = jobqueue_kwargs(profile, logs)
    del kwargs["scheduler_options"]  # a job takes everything else the cluster does
    folder = certificate_folder(profile, logs) / CERTIFICATE_PREFIX
    if profile.tls and profile.ca_file is None:
        # A session's certificate is written when the cluster starts; show where it will be.
        from distributed import security

        Security: Any = security.Security

        kwargs["security"] = Security(
            tls_ca_file=f"{folder}ca-XXXXXXXX",
            tls_worker_cert=f"{folder}cert-XXXXXXXX",
            tls_worker_key=f"{folder}key-XXXXXXXX",
            require_encryption=True,
        )
    protocol = "tls" if profile.tls else "tcp"
    return job_cls(
        scheduler=f"{protocol}://scheduler-address:8786", name="worker", **kwargs
    ).job_script()


# --- the managed cluster ---------------------------------------------------------------------


@contextlib.contextmanager
def cluster_client(
    profile: ClusterProfile,
    *,
    logs: Path | None = None,
    echo: Callable[[str], None] | None = None,
) -> Iterator[Any]:
    """Start the profile's batch cluster and yield a dask Client connected to it.

    Submits ``profile.jobs`` jobs, waits up to ``profile.start_timeout`` s for the first worker,
    keeps the number of jobs up while the body runs (a job whose workers have all been gone for
    ``distributed.deploy.lost-worker-timeout`` is replaced, at most ``profile.resubmit_limit``
    times), and on leaving - normally, by an exception or by KeyboardInterrupt - closes the client
    and cancels every job it submitted. A second Ctrl-C during that shutdown is ignored.

    Parameters
    ----------
    profile
        A validated profile.
    logs
        Folder for the batch jobs' output when the profile names none (the CLI passes one inside the
        sweep's output folder). Created if missing.
    echo
        Called with one-line progress messages (submission, dashboard address, replacements,
        shutdown); they also go to this module's logger.

    Yields
    ------
    distributed.Client

    Raises
    ------
    ClusterStartError
        If no worker joined within ``profile.start_timeout`` seconds (all jobs are cancelled first).
    """

    def say(message: str) -> None:
        log.info(message)
        if echo is not None:
            echo(message)

    log_dir = profile.logs or logs
    if log_dir is not None:
        Path(log_dir).mkdir(parents=True, exist_ok=True)
    kwargs = jobqueue_kwargs(profile, logs)
    with contextlib.ExitStack() as files:
        if "security" in kwargs:  # the files outlive the cluster: they are removed after it
            kwargs["security"] = files.enter_context(
                _session_certificate(kwargs["security"], certificate_folder(profile, logs))
            )
        with (
            _dask_config(SCHEDULER_CONFIG),
            _managed(cluster_class(profile)(**kwargs), profile, log_dir, say) as client,
        ):
            yield client


@contextlib.contextmanager
def _managed(
    cluster: Any, profile: ClusterProfile, log_dir: Path | None, say: Callable[[str], None]
) -> Iterator[Any]:
    """Submit the jobs of ``cluster``, yield its client, cancel every job on the way out."""
    import distributed

    Client: Any = distributed.Client
    keeper = _JobKeeper(cluster, profile, say)
    client = None
    try:
        keeper.start()
        cluster.scale(jobs=profile.jobs)
        client = Client(cluster)
        say(f"submitted {profile.describe()}")
        say(f"dask dashboard: {client.dashboard_link}")
        if log_dir is not None:
            say(f"batch job logs: {log_dir}")
        if profile.start_timeout > 0:
            _wait_first_worker(client, cluster, profile, log_dir)
        yield client
    finally:
        with _sigint_deferred(say):
            keeper.stop()
            say("shutting down: cancelling batch jobs")
            if client is not None:
                with _logged("closing the dask client"):
                    client.close()
            with _logged("closing the dask-jobqueue cluster"):
                keeper.note_job_ids()
                cluster.close()
            keeper.cancel_leftovers()


def _wait_first_worker(
    client: Any, cluster: Any, profile: ClusterProfile, log_dir: Path | None
) -> None:
    """Block until one worker joined, else raise ClusterStartError naming where to look."""
    try:
        client.wait_for_workers(1, timeout=profile.start_timeout)
    except TimeoutError as exc:
        ids = [job.job_id for job in list(cluster.workers.values()) if job.job_id]
        where = f"; job output in {log_dir}" if log_dir else ""
        raise ClusterStartError(
            f"{profile.source}: no dask worker joined within batch.start_timeout = "
            f"{profile.start_timeout:g} s (jobs {', '.join(ids) or 'none'} submitted to "
            f"{profile.system}){where}; check the queue, the worker.setup line and worker.python"
        ) from exc


@contextlib.contextmanager
def _logged(what: str) -> Iterator[None]:
    """Log and swallow an error of one shutdown step, so that the next steps still run."""
    try:
        yield
    except Exception as exc:
        log.warning("%s failed: %s: %s", what, type(exc).__name__, exc)


@contextlib.contextmanager
def _sigint_deferred(say: Callable[[str], None]) -> Iterator[None]:
    """Keep a second Ctrl-C from abandoning jobs half-way through the shutdown."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def refuse(signum: int, frame: object) -> None:
        say("still cancelling batch jobs; please wait")

    previous = signal.signal(signal.SIGINT, refuse)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)


class _JobKeeper:
    """Replaces batch jobs whose workers all left, and remembers every job id it saw.

    Runs on the cluster's own event loop (the scheduler of a dask-jobqueue cluster lives in this
    process), so it reads the scheduler's workers and edits the cluster's ``worker_spec`` without
    racing dask. A scheduler plugin notes every worker that ever joined, so even a job that dies
    within a second of starting counts: a job is lost once it had a worker and then none for
    ``distributed.deploy.lost-worker-timeout`` (a nanny restart reconnects sooner).
    """

    def __init__(self, cluster: Any, profile: ClusterProfile, say: Callable[[str], None]):
        import dask
        from dask.utils import parse_timedelta

        self.cluster = cluster
        self.profile = profile
        self.say = say
        self.grace = parse_timedelta(dask.config.get("distributed.deploy.lost-worker-timeout"))
        self.joined: set[str] = set()  # names of every worker that ever joined
        self.seen: dict[str, float] = {}  # job name -> last time one of its workers was there
        self.job_ids: set[str] = set()
        self.replaced = 0
        self._callback: Any = None

    def start(self) -> None:
        """Begin watching; call before the jobs are submitted."""
        from distributed.diagnostics.plugin import SchedulerPlugin
        from tornado.ioloop import PeriodicCallback

        joined = self.joined

        class Arrivals(SchedulerPlugin):
            def add_worker(self, scheduler: Any, worker: str) -> None:
                joined.add(str(scheduler.workers[worker].name))

        def install() -> None:
            scheduler = self.cluster.scheduler
            joined.update(str(ws.name) for ws in scheduler.workers.values())
            scheduler.add_plugin(Arrivals(), name="kdvsweep-arrivals")
            self._callback.start()

        self._callback = PeriodicCallback(self._tick, 1000)
        self._on_loop(install)

    def stop(self) -> None:
        """Stop replacing jobs (before the cluster is closed)."""
        if self._callback is not None:
            self._on_loop(self._callback.stop)

    def _on_loop(self, func: Callable[[], None]) -> None:
        """Run ``func`` on the cluster's event loop and wait for it (5 s at most)."""
        done = threading.Event()

        def call() -> None:
            try:
                func()
            finally:
                done.set()

        self.cluster.loop.add_callback(call)
        done.wait(5)

    def note_job_ids(self) -> None:
        self.job_ids.update(j.job_id for j in list(self.cluster.workers.values()) if j.job_id)

    def _tick(self) -> None:
        self.note_job_ids()
        now = time.monotonic()
        present = [str(ws.name) for ws in self.cluster.scheduler.workers.values()]
        lost = []
        for job in list(self.cluster.worker_spec):
            mine = f"{job}-"  # workers of a job are named JOB, or JOB-0, JOB-1... in a group
            if any(name == job or name.startswith(mine) for name in present):
                self.seen[job] = now
            elif job not in self.seen:
                if any(name == job or name.startswith(mine) for name in self.joined):
                    self.seen[job] = now  # joined and left between two ticks
            elif now - self.seen[job] > self.grace:
                lost.append(job)
        if not lost:
            return
        spec = self.cluster.worker_spec
        for job in lost:
            del self.seen[job]
            del spec[job]  # the next scale() cancels it (harmless if it is gone already)
            if self.replaced >= self.profile.resubmit_limit:
                self.say(f"batch job {job} lost; resubmit_limit reached, not replacing it")
                continue
            self.replaced += 1
            spec[self._fresh_name()] = self.cluster.new_spec
            self.say(f"batch job {job} lost; submitting a replacement ({self.replaced} so far)")
        self.cluster.scale(jobs=len(spec))

    def _fresh_name(self) -> str:
        """A job name never used in this session: dask-jobqueue would reuse the lost job's name,
        which it still holds for a while, and then submit nothing."""
        number = self.profile.jobs + self.replaced
        while (name := self.cluster._new_worker_name(number)) in self.cluster.workers:
            number += 1
        return name

    def cancel_leftovers(self) -> None:
        """Cancel, once more, every job id seen: a job submitted while dask was being torn down
        would otherwise outlive us until its walltime. Cancelling an ended job is harmless."""
        if not self.job_ids:
            return
        command = [*self.cluster.job_cls.cancel_command.split(), *sorted(self.job_ids)]
        with _logged(f"running {command[0]}"):
            subprocess.run(command, capture_output=True, timeout=60, check=False)


__all__ = [
    "DEFAULT_DASHBOARD",
    "SYSTEMS",
    "BatchSystem",
    "ClusterProfile",
    "ClusterStartError",
    "certificate_folder",
    "cluster_class",
    "cluster_client",
    "cluster_security",
    "job_script",
    "jobqueue_kwargs",
    "load_profile",
    "parse_profile",
]
