"""The sweep store: manifest, atomic part files, exactly-once resume, refusals, frames.

These tests feed the store hand-made results (no stepping), so each checks one property of the
folder layout; the end-to-end behaviour with real runs is in test_farm.py and test_cli.py.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest

import kdvsweep
from kdvsweep.exceptions import ConfigError
from kdvsweep.results import load
from kdvsweep.sweep.runner import SOLITON_COLUMNS, RunResult, base_row
from kdvsweep.sweep.store import MANIFEST, Store, read_table, write_atomic


@dataclass(frozen=True)
class Spec:
    """The fields of a RunSpec that the store and ``base_row`` read."""

    run_id: int
    params: dict[str, Any]
    model: dict[str, Any] = field(
        default_factory=lambda: {
            "equation": {"name": "kdv", "a": 6.0},
            "n": 64,
            "length": 40.0,
            "scheme": "etdrk4",
            "dt": 1e-2,
            "tol": None,
        }
    )
    initial: dict[str, Any] = field(default_factory=dict)
    run: dict[str, Any] = field(default_factory=lambda: {"t_end": 1.0, "record_times": [0.0, 1.0]})


@dataclass(frozen=True)
class FakeSweep:
    """The fields of a Sweep that the store reads."""

    text: str
    runs: tuple[Spec, ...]
    name: str = "fake"
    path: Path = Path("fake.toml")
    parameters: tuple[str, ...] = ("kappa2",)

    @property
    def digest(self) -> str:
        return hashlib.sha256(self.text.encode()).hexdigest()


def make_sweep(count: int = 6, text: str = "kappa2 = [...]") -> FakeSweep:
    return FakeSweep(text, tuple(Spec(i, {"kappa2": 0.5 + 0.01 * i}) for i in range(count)))


def result(spec: Spec, status: str = "ok", frames: bool = False) -> RunResult:
    """A hand-made result: two soliton rows whose numbers encode the run id."""
    row = base_row(spec)
    row.update(status=status, steps=100 + spec.run_id, wall_time=0.01)
    row["reason"] = "" if status == "ok" else "NumericalError: made up"
    sol = []
    if status == "ok":
        for s in (0, 1):
            r = dict.fromkeys(SOLITON_COLUMNS, math.nan)
            r.update(run_id=spec.run_id, soliton=s, kappa=1.0 if s == 0 else spec.params["kappa2"])
            sol.append(r)
    if frames and status == "ok":
        t = np.array([0.0, 0.5, 1.0])
        u = np.arange(3 * 64, dtype=float).reshape(3, 64) + spec.run_id
        return RunResult(row, sol, u, t)
    return RunResult(row, sol)


def snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    """Every file under ``folder`` with its bytes and modification time."""
    return {
        str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_mtime_ns)
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


def test_new_store_has_manifest_and_tables(tmp_path: Path) -> None:
    sweep = make_sweep()
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        assert store.write([result(s) for s in sweep.runs[:4]]) == 4
    manifest = json.loads((out / MANIFEST).read_text())
    assert manifest["sweep_text"] == sweep.text
    assert manifest["digest"] == sweep.digest
    assert manifest["package_version"] == kdvsweep.__version__
    assert manifest["runs_total"] == 6
    assert manifest["created"]
    res = load(out)
    assert list(res.runs["run_id"]) == [0, 1, 2, 3]
    for col in ("run_id", "status", "reason", "kappa2", "steps", "wall_time", "momentum_drift"):
        assert col in res.runs.columns
    for col in SOLITON_COLUMNS:
        assert col in res.solitons.columns
    assert len(res.solitons) == 8
    assert res.counts() == {"ok": 4, "failed": 0, "pending": 2, "total": 6}


def test_each_run_is_stored_once(tmp_path: Path) -> None:
    sweep = make_sweep()
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(s) for s in sweep.runs[:3]])
        # Runs already stored are dropped, also inside one batch.
        assert (
            store.write([result(sweep.runs[2]), result(sweep.runs[3]), result(sweep.runs[3])]) == 1
        )
    with Store.open(out, sweep) as store:
        assert store.done == {0, 1, 2, 3}
        assert [s.run_id for s in store.pending(sweep.runs)] == [4, 5]
        assert store.write([result(s) for s in sweep.runs]) == 2
    runs = read_table(out, "runs")
    assert list(runs["run_id"]) == list(range(6))
    assert read_table(out, "solitons").groupby("run_id").size().eq(2).all()


def test_duplicate_rows_in_parts_are_read_once(tmp_path: Path) -> None:
    # Should two parts ever hold a run (a second writer that bypassed the lock), the first wins.
    sweep = make_sweep()
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(sweep.runs[0])])
    dup = base_row(sweep.runs[0]) | {"steps": 999}
    pd.DataFrame([dup]).to_parquet(out / "runs" / "part-000005.parquet", index=False)
    other = [r | {"kappa": 7.0} for r in result(sweep.runs[0]).soliton_rows]
    pd.DataFrame(other).to_parquet(out / "solitons" / "part-000005.parquet", index=False)
    runs = read_table(out, "runs")
    assert len(runs) == 1
    assert int(runs["steps"].iloc[0]) == 100
    sol = read_table(out, "solitons")  # from the same batch as the kept runs row
    assert list(sol["kappa"]) == [1.0, 0.5]


def test_interrupted_batch_is_ignored_and_cleaned(tmp_path: Path) -> None:
    sweep = make_sweep()
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(s) for s in sweep.runs[:2]])
    # A crash between the solitons part and its runs part, and during a temporary write.
    orphan = pd.DataFrame([r for s in sweep.runs[2:4] for r in result(s).soliton_rows])
    orphan.to_parquet(out / "solitons" / "part-000001.parquet", index=False)
    (out / "runs" / ".tmp-123-part-000001.parquet").write_bytes(b"half a file")
    assert len(read_table(out, "solitons")) == 4  # the orphan part does not count
    with Store.open(out, sweep) as store:
        assert not (out / "runs" / ".tmp-123-part-000001.parquet").exists()
        assert not (out / "solitons" / "part-000001.parquet").exists()
        store.write([result(s) for s in sweep.runs[2:]])
    sol = read_table(out, "solitons")
    assert len(sol) == 12
    assert not sol.duplicated(["run_id", "soliton"]).any()


def test_other_sweep_is_refused_and_store_untouched(tmp_path: Path) -> None:
    first = make_sweep()
    out = tmp_path / "out"
    with Store.open(out, first) as store:
        store.write([result(s) for s in first.runs[:3]])
    before = snapshot(out)
    other = make_sweep(text="kappa2 = [other]")
    with pytest.raises(ConfigError, match=r"holds the results of sweep 'fake'.*digest"):
        Store.open(out, other)
    assert snapshot(out) == before


def test_folder_that_is_not_a_store_is_refused(tmp_path: Path) -> None:
    (tmp_path / "notes.txt").write_text("mine")
    with pytest.raises(ConfigError, match="not empty and is not a kdvsweep store"):
        Store.open(tmp_path, make_sweep())
    assert sorted(p.name for p in tmp_path.iterdir()) == ["notes.txt"]
    with pytest.raises(ConfigError, match="is not a folder"):
        Store.open(tmp_path / "notes.txt", make_sweep())
    with pytest.raises(ConfigError, match="not a kdvsweep store"):
        load(tmp_path)


def test_empty_folder_becomes_a_store(tmp_path: Path) -> None:
    with Store.open(tmp_path, make_sweep()) as store:
        assert store.done == frozenset()
    assert (tmp_path / MANIFEST).is_file()


def test_second_writer_is_refused(tmp_path: Path) -> None:
    sweep = make_sweep()
    with Store.open(tmp_path / "out", sweep), pytest.raises(ConfigError, match="another kdvsweep"):
        Store.open(tmp_path / "out", sweep)
    Store.open(tmp_path / "out", sweep).close()  # free again once the first writer is closed


def test_failed_runs_are_rows(tmp_path: Path) -> None:
    sweep = make_sweep()
    with Store.open(tmp_path, sweep) as store:
        store.write([result(sweep.runs[0]), result(sweep.runs[1], status="failed")])
    with Store.open(tmp_path, sweep) as store:
        assert store.failed == {1}
    res = load(tmp_path)
    failed = res.runs.set_index("run_id").loc[1]
    assert failed["status"] == "failed"
    assert failed["reason"] == "NumericalError: made up"
    assert set(res.solitons["run_id"]) == {0}


def test_frames_round_trip(tmp_path: Path) -> None:
    sweep = make_sweep()
    with Store.open(tmp_path, sweep) as store:
        store.write([result(s, frames=True) for s in sweep.runs[:2]])
    res = load(tmp_path)
    fr = res.frames(1)
    np.testing.assert_array_equal(fr.times, [0.0, 0.5, 1.0])
    np.testing.assert_array_equal(fr.u, np.arange(3 * 64, dtype=float).reshape(3, 64) + 1)
    # numpy reference for the grid: 64 points on [-20, 20)
    np.testing.assert_allclose(fr.x, np.linspace(-20.0, 20.0, 64, endpoint=False))
    with pytest.raises(ConfigError, match="no stored frames for run_id 4"):
        res.frames(4)


def test_parameter_named_like_a_result_column_is_refused(tmp_path: Path) -> None:
    sweep = FakeSweep("x", (Spec(0, {"status": 1.0}),), parameters=("status",))
    with pytest.raises(ConfigError, match=r"\['status'\].*reserved"):
        Store.open(tmp_path / "out", sweep)
    assert not (tmp_path / "out").exists()


def test_write_atomic_replaces_whole(tmp_path: Path) -> None:
    target = tmp_path / "f.bin"
    write_atomic(target, b"old")
    write_atomic(target, b"new content")
    assert target.read_bytes() == b"new content"
    assert [p.name for p in tmp_path.iterdir()] == ["f.bin"]


def test_tables_do_not_depend_on_batching(tmp_path: Path) -> None:
    # A text column that is None in every row of one batch (a failed run has no analysis
    # regime, say) must read back with the same dtype as when batched with other rows.
    sweep = make_sweep(3)
    results = [result(s) for s in sweep.runs]
    for res, regime in zip(results, [None, "exchange", "mixed"], strict=True):
        res.run_row["regime"] = regime
    with Store.open(tmp_path / "one", sweep) as store:
        store.write(results)
    with Store.open(tmp_path / "three", sweep) as store:
        for res in results:
            store.write([res])
    pd.testing.assert_frame_equal(
        read_table(tmp_path / "one", "runs"), read_table(tmp_path / "three", "runs")
    )
