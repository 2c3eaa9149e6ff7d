"""Failure limits as sweep keys, failure kinds, and ``--retry-failed`` (each run stored once).

Three KdV pairs (kappa1 = 0.8 overtakes kappa2; conftest.pair_sweep_text); run 1 gets dt = 2, with
which ETDRK4 loses the solution (common practice, no source). A drift limit of 1e-14 is far
below what any run keeps (round-off alone, over thousands of steps, exceeds it; common practice,
no source), so with it every run that steps fails as "drift".
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from conftest import pair_sweep_text

from kdvsweep import cli
from kdvsweep.exceptions import ConfigError, NumericalError, StoreError, TimeLimitError
from kdvsweep.sweep.config import DEFAULT_DRIFT_LIMIT, Sweep, load_sweep
from kdvsweep.sweep.farm import local_client, run_sweep
from kdvsweep.sweep.runner import DriftError, execute, failure_kind
from kdvsweep.sweep.store import Store, read_store

K2 = [0.45, 0.5, 0.55]
BAD = 1


def sweep(folder: Path, extra: str = "", name: str = "sweep.toml") -> Sweep:
    path = folder / name
    path.write_text(pair_sweep_text("retry-test", K2, bad=BAD) + extra)
    return load_sweep(path)


def test_limits_are_sweep_keys_outside_the_digest(tmp_path: Path) -> None:
    strict = sweep(tmp_path, "drift_limit = 1e-14\nmax_amplitude = 50.0\n", "strict.toml")
    plain = sweep(tmp_path)
    off = sweep(tmp_path, "drift_limit = false\n", "off.toml")
    assert strict.runs[0].run.drift_limit == 1e-14
    assert strict.runs[0].run.max_amplitude == 50.0
    assert plain.runs[0].run.drift_limit == DEFAULT_DRIFT_LIMIT
    assert plain.runs[0].run.max_amplitude is None
    assert off.runs[0].run.drift_limit is None
    assert strict.digest == plain.digest == off.digest  # limits decide failure, not results
    for bad, key in (
        ("drift_limit = -1.0", "drift_limit"),
        ("drift_limit = true", "drift_limit"),
        ("max_amplitude = 0", "max_amplitude"),
    ):
        with pytest.raises(ConfigError, match=key):
            sweep(tmp_path, bad + "\n", "bad.toml")


def test_failure_kinds() -> None:
    assert failure_kind(MemoryError("out of memory: 9 GiB"), "setup") == "out of memory"
    assert failure_kind(TimeLimitError("time limit 1 s"), "stepping") == "time limit"
    assert failure_kind(DriftError("residual"), "stepping") == "drift"
    assert failure_kind(NumericalError("max|u| above bound"), "stepping") == "blow-up"
    assert failure_kind(ValueError("no peaks"), "analysis") == "analysis"
    assert failure_kind(ValueError("bad data"), "setup") == "other"


def test_drift_and_blow_up_runs_are_stored_failed_by_kind(tmp_path: Path) -> None:
    """The default drift limit catches run 1's lost solution; a blow-up bound just above the
    initial amplitude 2 kappa^2 = 1.28 (Korteweg & de Vries 1895) catches its overshoot first,
    while the resolved runs (dt = 0.01) stay below it; a drift limit of 1e-14 fails them all."""
    kinds = {
        "": ["", "drift", ""],
        "max_amplitude = 1.2805\n": ["", "blow-up", ""],
        "drift_limit = 1e-14\n": ["drift", "drift", "drift"],
    }
    for extra, expected in kinds.items():
        rows = [execute(spec).run_row for spec in sweep(tmp_path, extra).runs]
        assert [r["failure"] for r in rows] == expected, extra
        assert [r["status"] for r in rows] == ["failed" if k else "ok" for k in expected]
    ok = execute(sweep(tmp_path).runs[0]).run_row
    assert 1e-14 < ok["momentum_residual"] < DEFAULT_DRIFT_LIMIT
    assert ok["momentum_residual"] == ok["momentum_drift"]  # conservative: the same number


def _stored(out: Path) -> tuple[list[int], dict[int, str]]:
    contents = read_store(out)
    assert contents.check.ignored == []
    runs = contents.runs
    return list(runs["run_id"]), dict(zip(runs["run_id"], runs["status"], strict=True))


def test_forget_failed_replaces_failed_rows(tmp_path: Path) -> None:
    strict, plain, out = sweep(tmp_path, "drift_limit = 1e-14\n"), sweep(tmp_path), tmp_path / "s"
    with Store.open(out, strict) as store:
        store.write([execute(spec) for spec in strict.runs])
    assert _stored(out) == ([0, 1, 2], {0: "failed", 1: "failed", 2: "failed"})
    for round_ in range(2):  # the second retry finds only the run that blows up whatever the limit
        with Store.open(out, plain) as store:
            pending = store.forget_failed()
            assert pending == ({0, 1, 2} if round_ == 0 else {BAD})
            todo = store.pending(plain.runs)
            assert {s.run_id for s in todo} == pending
            store.write([execute(spec) for spec in todo])
        assert _stored(out) == ([0, 1, 2], {0: "ok", 1: "failed", 2: "ok"})
    with Store.open(out, plain) as store:  # nothing is left of the dropped rows
        assert store.done == {0, 1, 2}
        assert store.failed == {BAD}


def test_run_sweep_retry_failed_and_status_by_kind(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    strict, plain, out = sweep(tmp_path, "drift_limit = 1e-14\n"), sweep(tmp_path), tmp_path / "s"
    bounded = sweep(tmp_path, "max_amplitude = 1.2805\n", "bounded.toml")
    with local_client(1) as client:
        first = run_sweep(strict, out, client, chunk_seconds=0.5)
        assert (first.stored, first.failed) == (3, 3)
        assert cli.main(["status", str(out)]) == 0
        assert "     3  drift" in capsys.readouterr().out
        again = run_sweep(plain, out, client, chunk_seconds=0.5)  # no retry: nothing runs
        assert (again.stored, again.skipped) == (0, 3)
        retried = run_sweep(bounded, out, client, chunk_seconds=0.5, retry_failed=True)
        assert (retried.stored, retried.failed, retried.skipped) == (3, 1, 0)
    assert _stored(out) == ([0, 1, 2], {0: "ok", 1: "failed", 2: "ok"})
    assert cli.main(["status", str(out)]) == 0
    text = capsys.readouterr().out
    assert "failures by kind:" in text
    assert "     1  blow-up" in text
    assert "drift" not in text


def test_forget_failed_interrupted_leaves_a_whole_store(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Batch 0 holds run 0 (ok) and run 1 (failed), batch 1 holds run 2 (failed). A disk that
    refuses the rewrite of batch 0 changes nothing; one that refuses only the removal of batch 1
    leaves run 1 pending and run 2 failed. Either way each run is stored at most once."""
    plain, strict, out = sweep(tmp_path), sweep(tmp_path, "drift_limit = 1e-14\n"), tmp_path / "s"
    with Store.open(out, plain) as store:
        store.write([execute(plain.runs[0]), execute(plain.runs[1])])
        store.write([execute(strict.runs[2])])
    before = _stored(out)
    assert before == ([0, 1, 2], {0: "ok", 1: "failed", 2: "failed"})

    def refuse(*args: object, **kwargs: object) -> None:
        raise OSError(28, "No space left on device")

    with Store.open(out, plain) as store:
        with monkeypatch.context() as m:
            m.setattr(os, "replace", refuse)
            with pytest.raises(StoreError, match="No space left"):
                store.forget_failed()
    assert _stored(out) == before

    real_unlink = Path.unlink

    def unlink(self: Path, missing_ok: bool = False) -> None:
        if self.parent.name == "runs":
            raise OSError(13, "Permission denied")
        real_unlink(self, missing_ok=missing_ok)

    with Store.open(out, plain) as store:
        with monkeypatch.context() as m:
            m.setattr(Path, "unlink", unlink)
            with pytest.raises(StoreError, match="Permission denied"):
                store.forget_failed()
    assert _stored(out) == ([0, 2], {0: "ok", 2: "failed"})
    with Store.open(out, plain) as store:  # the next retry finishes the job
        assert store.forget_failed() == {2}
        store.write([execute(spec) for spec in store.pending(plain.runs)])
    assert _stored(out) == ([0, 1, 2], {0: "ok", 1: "failed", 2: "ok"})
