"""The embedded cluster's door and its shutdown: TLS between the sweep's own processes only, and a
Ctrl-C that ends a sweep with one line.

A dask scheduler runs whatever code its clients send; its loopback port is open to every user of
the machine. The embedded cluster therefore speaks TLS with a certificate made for it alone, and
requires one from every peer: these tests connect as an outsider would (plain TCP, TLS without a
certificate, TLS with a certificate of one's own) to the scheduler, a worker and a nanny, and
expect each attempt to be refused within seconds, while the sweep's own client works.
"""

from __future__ import annotations

import asyncio
import os
import signal
import ssl
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from conftest import pair_sweep_text

from kdvsweep.results import load
from kdvsweep.sweep.farm import local_client, run

#: Seconds an outsider's connection attempt may take before the test calls it a hang.
REFUSED_WITHIN = 5.0


@pytest.fixture(scope="module")
def client() -> Iterator[Any]:
    with local_client(1) as c:
        yield c


def addresses(client: Any) -> dict[str, str]:
    """The listening addresses of the scheduler, its worker and the worker's nanny."""
    (worker, info), *_ = client.scheduler_info()["workers"].items()
    return {"scheduler": client.scheduler.address, "worker": worker, "nanny": info["nanny"]}


def test_every_listener_is_tls_on_loopback(client: Any) -> None:
    for role, address in addresses(client).items():
        assert address.startswith("tls://127.0.0.1:"), (role, address)


def test_own_client_connects_and_runs_code(client: Any) -> None:
    # The contrast to the refusals below: the cluster's own credentials open the door, so the
    # refusals are about credentials, not about a dead address.
    from distributed import Client

    with Client(client.scheduler.address, timeout="10s", security=client.security) as own:
        assert list(own.run(os.getpid).values()) == list(client.run(os.getpid).values())


#: An outsider: another process on the machine that tries to connect a dask client. It prints
#: "connected" or the error it met; it runs in its own process (as a real outsider would) so that
#: no dask state of this test process is shared with it.
OUTSIDER = """
import sys
from distributed import Client
from distributed.security import Security
address, how, timeout = sys.argv[1], sys.argv[2], sys.argv[3]
security = Security.temporary() if how == "own-certificate" else None
try:
    Client(address, timeout=timeout + "s", security=security).close()
except BaseException as exc:
    print(type(exc).__name__, str(exc).replace("\\n", " ")[:300])
else:
    print("connected")
"""


def outsider(address: str, how: str) -> str:
    """What an outsider's connection attempt met (``"connected"`` or the error), within a bound."""
    start = time.monotonic()
    done = subprocess.run(
        [sys.executable, "-c", OUTSIDER, address, how, str(REFUSED_WITHIN)],
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert time.monotonic() - start < 60
    return done.stdout.strip().splitlines()[-1] if done.stdout.strip() else done.stderr[-300:]


def test_plain_client_is_refused(client: Any) -> None:
    address = client.scheduler.address
    for attempt in (address, address.replace("tls://", "tcp://", 1)):
        met = outsider(attempt, "plain")
        assert met != "connected", attempt
        assert met.split()[0] in {"OSError", "TimeoutError", "TypeError"} or "Comm" in met, met


def test_client_with_its_own_certificate_is_refused(client: Any) -> None:
    # An outsider who makes a certificate of their own (the same recipe, another key) is not
    # signed by this cluster's authority: the handshake fails.
    met = outsider(client.scheduler.address, "own-certificate")
    assert "TLS certificate does not match" in met, met


async def _identity(address: str, **connection_args: Any) -> Any:
    """Open a dask comm to ``address`` and ask for the server's identity (any peer may ask)."""
    from distributed.comm import connect

    comm = await connect(address, timeout=REFUSED_WITHIN, **connection_args)
    try:
        await comm.write({"op": "identity", "reply": True})
        return await comm.read()
    finally:
        await comm.close()


@pytest.mark.parametrize("role", ["scheduler", "worker", "nanny"])
def test_raw_connections_to_every_listener_are_refused(client: Any, role: str) -> None:
    # A worker and a nanny take commands too (a worker runs functions sent to it): each listener
    # refuses plain TCP, and TLS from a peer that shows no certificate.
    from distributed.comm.core import CommClosedError

    address = addresses(client)[role]
    start = time.monotonic()
    with pytest.raises(CommClosedError, match="Connection reset"):
        asyncio.run(_identity(address.replace("tls://", "tcp://", 1)))
    no_certificate = ssl.create_default_context()
    no_certificate.check_hostname = False
    no_certificate.verify_mode = ssl.CERT_NONE  # the outsider does not even check the server
    # TLS 1.3 checks the client's certificate after the client's side of the handshake: the
    # server then closes the connection, and the request is never answered.
    with pytest.raises(CommClosedError, match=r"SSL|Connection reset"):
        asyncio.run(_identity(address, ssl_context=no_certificate))
    assert time.monotonic() - start < 4 * REFUSED_WITHIN


def test_sweep_runs_end_to_end_on_the_tls_cluster(tmp_path: Path) -> None:
    # The public launch path with its own embedded cluster (TLS, preloaded workers).
    path = tmp_path / "sweep.toml"
    path.write_text(pair_sweep_text("tls-sweep", [0.45, 0.5, 0.55], bad=1), encoding="utf-8")
    report = run(path, tmp_path / "out", workers=2)
    assert (report.stored, report.failed) == (3, 1)
    counts = load(tmp_path / "out").counts()
    assert counts == {"ok": 2, "failed": 1, "pending": 0, "total": 3}


# --- Ctrl-C ------------------------------------------------------------------------------------

#: Runs `kdvsweep run` as the console script does, with Ctrl-C delivered as KeyboardInterrupt even
#: when this test itself was started with SIGINT ignored (a background shell does that).
CLI = (
    "import signal, sys\n"
    "signal.signal(signal.SIGINT, signal.default_int_handler)\n"
    "from kdvsweep.cli import main\n"
    "sys.exit(main(sys.argv[1:]))\n"
)


def test_ctrl_c_prints_one_clean_line(tmp_path: Path) -> None:
    # A terminal's Ctrl-C goes to the whole foreground process group: the client and its worker
    # processes. Before, each worker died with a KeyboardInterrupt traceback and the shutdown
    # logged lost connections (66 lines); now the workers leave the interrupt to the client.
    path = tmp_path / "sweep.toml"
    k2 = [round(0.3 + 0.005 * i, 3) for i in range(80)]  # far more than can finish in the test
    path.write_text(pair_sweep_text("ctrl-c", k2), encoding="utf-8")
    out = tmp_path / "out"
    args = ["run", str(path), "--out", str(out), "--workers", "2", "--no-progress"]
    proc = subprocess.Popen(
        [sys.executable, "-c", CLI, *args],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,  # its own process group, as a terminal's job
    )
    try:
        deadline = time.monotonic() + 120
        while not list(out.glob("runs/part-*.parquet")):  # the cluster is up and runs are stored
            assert proc.poll() is None, proc.communicate()
            assert time.monotonic() < deadline, "no run was stored within 120 s"
            time.sleep(0.05)
        os.killpg(proc.pid, signal.SIGINT)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait()
    lines = err.splitlines()
    assert proc.returncode == 130, err
    assert "Traceback" not in err
    assert len(lines) <= 3, err
    assert lines[-1].startswith(f"kdvsweep: interrupted; what finished is stored in {out}")
    # The workers, which ignored the SIGINT, were stopped by the client: none is left behind.
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        try:
            os.killpg(proc.pid, 0)
        except ProcessLookupError:
            break
        time.sleep(0.2)
    else:
        pytest.fail("worker processes outlived the interrupted sweep")
    assert load(out).counts()["pending"] > 0  # it really was interrupted mid-way
