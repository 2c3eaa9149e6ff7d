"""The sweep store: manifest, atomic part files, exactly-once resume, refusals, frames.

These tests feed the store hand-made results (no stepping), so each checks one property of the
folder layout; the end-to-end behaviour with real runs is in test_farm.py and test_cli.py.
"""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from conftest import pair_sweep, pair_sweep_text

import kdvsweep
from kdvsweep import columns
from kdvsweep.exceptions import ConfigError
from kdvsweep.results import load
from kdvsweep.sweep.config import RunSpec, Sweep, load_sweep
from kdvsweep.sweep.runner import RunResult, base_row
from kdvsweep.sweep.store import (
    MANIFEST,
    STORE_VERSION,
    Store,
    StoreBusyError,
    read_table,
    write_atomic,
)


def sweep_file(tmp_path: Path, text: str, name: str = "fake") -> Sweep:
    """A real sweep read from ``text`` (specs are typed: no stand-ins)."""
    path = tmp_path / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return load_sweep(path)


def make_sweep(tmp_path: Path, count: int = 6, first: float = 0.5) -> Sweep:
    """KdV pairs kappa = (0.8, k2) with ``count`` values of k2 from ``first`` (no run is run)."""
    k2 = [round(first + 0.01 * i, 2) for i in range(count)]
    return pair_sweep(tmp_path / f"sweeps-{first}", "fake", k2)


def result(spec: RunSpec, status: str = "ok", frames: bool = False) -> RunResult:
    """A hand-made result: two soliton rows whose numbers encode the run id."""
    row = base_row(spec)
    row.update(status=status, steps=100 + spec.run_id, wall_time=0.01)
    row["reason"] = "" if status == "ok" else "NumericalError: made up"
    sol = []
    if status == "ok":
        for s in (0, 1):
            kappa = 1.0 if s == 0 else spec.params["k2"]
            sol.append({"run_id": spec.run_id, "soliton": s, "kappa": kappa})
    if frames and status == "ok":
        t = np.array([0.0, 0.5, 1.0])
        u = np.arange(3 * spec.model.grid.n, dtype=float).reshape(3, -1) + spec.run_id
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
    sweep = make_sweep(tmp_path)
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
    assert list(res.runs.columns) == [c.name for c in sweep.layout.runs()]
    assert list(res.solitons.columns) == [c.name for c in sweep.layout.solitons()]
    for col in ("run_id", "status", "reason", "k2", "steps", "wall_time", "momentum_drift"):
        assert col in res.runs.columns
    assert len(res.solitons) == 8
    assert res.counts() == {"ok": 4, "failed": 0, "pending": 2, "total": 6}


def test_each_run_is_stored_once(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
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
    # Should two parts ever hold a run (here a part made by hand, without a batch record, which
    # is not counted at all), the first stored row wins.
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(sweep.runs[0])])
    dup = base_row(sweep.runs[0]) | {"steps": 999}
    schema = sweep.layout.schema("runs")
    pq.write_table(pa.Table.from_pylist([dup], schema=schema), out / "runs" / "part-000005.parquet")
    other = [r | {"kappa": 7.0} for r in result(sweep.runs[0]).soliton_rows]
    schema = sweep.layout.schema("solitons")
    pq.write_table(
        pa.Table.from_pylist(other, schema=schema), out / "solitons" / "part-000005.parquet"
    )
    runs = read_table(out, "runs")
    assert len(runs) == 1
    assert int(runs["steps"].iloc[0]) == 100
    sol = read_table(out, "solitons")  # from the same batch as the kept runs row
    assert list(sol["kappa"]) == [1.0, 0.5]


def test_interrupted_batch_is_ignored_and_cleaned(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(s) for s in sweep.runs[:2]])
    # A crash between the solitons part and its runs part, and during a temporary write.
    orphan = [r for s in sweep.runs[2:4] for r in result(s).soliton_rows]
    schema = sweep.layout.schema("solitons")
    pq.write_table(
        pa.Table.from_pylist(orphan, schema=schema), out / "solitons" / "part-000001.parquet"
    )
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
    first = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, first) as store:
        store.write([result(s) for s in first.runs[:3]])
    before = snapshot(out)
    other = make_sweep(tmp_path, first=0.4)
    with pytest.raises(ConfigError, match=r"holds the results of sweep 'fake'.*digest"):
        Store.open(out, other)
    assert snapshot(out) == before


def test_folder_that_is_not_a_store_is_refused(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    folder = tmp_path / "data"
    folder.mkdir()
    (folder / "notes.txt").write_text("mine")
    with pytest.raises(ConfigError, match="not empty and is not a kdvsweep store"):
        Store.open(folder, sweep)
    assert sorted(p.name for p in folder.iterdir()) == ["notes.txt"]
    with pytest.raises(ConfigError, match="is not a folder"):
        Store.open(folder / "notes.txt", sweep)
    with pytest.raises(ConfigError, match="not a kdvsweep store"):
        load(folder)


def test_empty_folder_becomes_a_store(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    (tmp_path / "out").mkdir()
    with Store.open(tmp_path / "out", sweep) as store:
        assert store.done == frozenset()
    assert (tmp_path / "out" / MANIFEST).is_file()
    res = load(tmp_path / "out")  # no run yet: the declared columns, no rows
    assert list(res.runs.columns) == [c.name for c in sweep.layout.runs()]
    assert len(res.runs) == 0


def test_second_writer_is_refused(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    with (
        Store.open(tmp_path / "out", sweep),
        pytest.raises(StoreBusyError, match="another kdvsweep process is writing"),
    ):
        Store.open(tmp_path / "out", sweep)
    Store.open(tmp_path / "out", sweep).close()  # free again once the first writer is closed


def test_failed_runs_are_rows(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(sweep.runs[0]), result(sweep.runs[1], status="failed")])
    with Store.open(out, sweep) as store:
        assert store.failed == {1}
    res = load(out)
    failed = res.runs.set_index("run_id").loc[1]
    assert failed["status"] == "failed"
    assert failed["reason"] == "NumericalError: made up"
    assert set(res.solitons["run_id"]) == {0}
    # the whole model is stored for failed runs too: the equation comes back from the row
    row = res.runs.set_index("run_id").loc[1]
    stored, given = kdvsweep.Equation.from_columns(row), sweep.runs[1].model.equation
    assert stored.coefficients == given.coefficients
    assert stored.dealias_fraction == given.dealias_fraction
    assert stored.name == given.name == "kdv"


def test_frames_round_trip(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(s, frames=True) for s in sweep.runs[:2]])
    res = load(out)
    fr = res.frames(1)
    grid = sweep.runs[1].model.grid
    np.testing.assert_array_equal(fr.times, [0.0, 0.5, 1.0])
    np.testing.assert_array_equal(fr.u, np.arange(3 * grid.n, dtype=float).reshape(3, -1) + 1)
    # numpy reference for the grid: n points on [-L/2, L/2)
    expected = np.linspace(-grid.length / 2, grid.length / 2, grid.n, endpoint=False)
    np.testing.assert_allclose(fr.x, expected, rtol=0, atol=1e-12 * grid.length)
    with pytest.raises(ConfigError, match="no stored frames for run_id 4"):
        res.frames(4)


def _with_parameter(name: str, values: str) -> str:
    """The pair sweep of two runs with one more swept parameter ``name`` (zipped with k2)."""
    text = pair_sweep_text("fake", [0.5, 0.6])
    return text.replace("k2 = [0.5, 0.6]\n", f"k2 = [0.5, 0.6]\n{name} = {values}\n", 1)


@pytest.mark.parametrize("name", ["status", "eq_a", "regime", "kappa"])
def test_parameter_named_like_a_column_is_refused(tmp_path: Path, name: str) -> None:
    # load_sweep refuses such a file (test_config); the store checks any Sweep it is given too
    sweep = dataclasses.replace(make_sweep(tmp_path), parameters=("k2", name))
    with pytest.raises(ConfigError, match=rf"\['{name}'\] are names of result columns.*reserved"):
        Store.open(tmp_path / "out", sweep)
    assert not (tmp_path / "out").exists()


def test_parameter_named_part_survives_load(tmp_path: Path) -> None:
    # The reader once kept each row's batch in a column named _part, which swallowed a swept
    # parameter of that name.
    sweep = sweep_file(tmp_path, _with_parameter("_part", '["a", "b"]'))
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(sweep.runs[1])])
        store.write([result(sweep.runs[0])])
    runs = load(out).runs
    assert list(runs["_part"]) == ["a", "b"]
    assert list(runs["run_id"]) == [0, 1]


def test_write_atomic_replaces_whole(tmp_path: Path) -> None:
    target = tmp_path / "f.bin"
    write_atomic(target, b"old")
    write_atomic(target, b"new content")
    assert target.read_bytes() == b"new content"
    assert [p.name for p in tmp_path.iterdir()] == ["f.bin"]


def test_tables_do_not_depend_on_batching(tmp_path: Path) -> None:
    # A text column that is None in every row of one batch (a failed run has no analysis
    # regime, say) must read back with the same dtype as when batched with other rows.
    sweep = make_sweep(tmp_path, 3)
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


def test_every_part_has_the_declared_schema(tmp_path: Path) -> None:
    # Batches whose values differ in kind: a failed run alone (no analysis columns, a reason),
    # an ok run whose analysis columns are all empty, one with NaN-only measurements.
    sweep = make_sweep(tmp_path, 3)
    out = tmp_path / "out"
    ok = result(sweep.runs[0])
    ok.run_row.update(regime=None, analysis_status="ok", n_solitons=2, frames_before=40)
    with Store.open(out, sweep) as store:
        store.write([result(sweep.runs[1], status="failed")])
        store.write([ok])
        store.write([result(sweep.runs[2])])
    for table in ("runs", "solitons"):
        expected = sweep.layout.schema(table)
        parts = sorted((out / table).glob("part-*.parquet"))
        assert parts
        for part in parts:
            assert pq.read_schema(part).remove_metadata().equals(expected), (table, part.name)
    # parameters take their kind from the sweep file, not from the values of a batch
    runs = load(out).runs
    assert runs["k2"].dtype == np.float64
    assert runs["status"].tolist() == ["ok", "failed", "ok"]


def test_undeclared_column_is_refused_before_anything_is_written(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    bad = result(sweep.runs[0])
    bad.run_row["bogus"] = 1.0
    with Store.open(out, sweep) as store:
        before = sorted(p.name for p in out.rglob("*"))
        with pytest.raises(ConfigError, match=r"undeclared column\(s\) \['bogus'\]"):
            store.write([bad])
    assert sorted(p.name for p in out.rglob("*")) == before


def test_store_of_an_older_format_says_how_to_proceed(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(sweep.runs[0])])
    manifest = json.loads((out / MANIFEST).read_text())
    manifest["format_version"] = STORE_VERSION - 1
    (out / MANIFEST).write_text(json.dumps(manifest))
    message = rf"format version {STORE_VERSION - 1} .*run the sweep again into a new folder"
    with pytest.raises(ConfigError, match=message) as err:
        load(out)
    assert "\n" not in str(err.value)
    with pytest.raises(ConfigError, match=message):
        Store.open(out, sweep)


def test_layout_is_recorded_and_columns_follow_the_sweep(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    with Store.open(tmp_path / "out", sweep):
        pass
    manifest = json.loads((tmp_path / "out" / MANIFEST).read_text())
    assert manifest["format_version"] == STORE_VERSION
    assert columns.Layout.from_json(manifest["layout"]) == sweep.layout
    assert sweep.layout.parameters == {"k2": "float", "dt": "float"}
    assert sweep.layout.analysis
    assert not sweep.layout.content
    names = [c.name for c in sweep.layout.runs()]
    # a swept dt takes the model's dt column: one column of each name
    assert len(names) == len(set(names))
    assert names[:3] == ["run_id", "k2", "dt"]
