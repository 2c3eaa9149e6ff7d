"""Compaction of a store and frames packs: merged parts replace small ones atomically; a
compaction interrupted after any step leaves a store that reads the same, and the next compaction
(or the next writer) finishes it; damaged batches lose no good rows; frames round trip.

The stores are written through :class:`Store` with hand-made results (no stepping). Run as a
script (``PYTHONPATH=tests python tests/test_compaction.py 100000``) it measures a synthetic store of many tiny
runs instead: files per table and read times before and after compaction.
"""

from __future__ import annotations

import shutil
import sys
import time
from pathlib import Path
from types import SimpleNamespace
from typing import Any

import numpy as np
import pandas as pd
import pytest
from test_store import make_sweep, result

from kdvsweep import cli
from kdvsweep.columns import Layout
from kdvsweep.exceptions import ConfigError
from kdvsweep.results import load
from kdvsweep.sweep import store as store_module
from kdvsweep.sweep.runner import RunResult
from kdvsweep.sweep.store import (
    Store,
    check_store,
    compact,
    frames_pack,
    frames_path,
    store_files,
)


class Interrupted(Exception):
    """Stands for a crash at one step of a compaction."""


def stored(tmp_path: Path, batches: int = 6, size: int = 2) -> tuple[Any, Path]:
    """A sweep of ``batches * size`` runs stored in ``batches`` batches, each run with frames."""
    sweep = make_sweep(tmp_path, batches * size)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        for first in range(0, batches * size, size):
            store.write([result(s, frames=True) for s in sweep.runs[first : first + size]])
    return sweep, out


def contents(out: Path) -> tuple[pd.DataFrame, pd.DataFrame, dict[int, tuple[Any, Any]]]:
    """The tables and every run's frames, as read by a reader (no lock)."""
    res = load(out)
    frames = {}
    for rid in res.runs["run_id"]:
        f = res.frames(int(rid))
        frames[int(rid)] = (f.times, f.u)
    return res.runs, res.solitons, frames


def assert_same(out: Path, reference: tuple[Any, Any, Any]) -> None:
    runs, solitons, frames = contents(out)
    pd.testing.assert_frame_equal(runs, reference[0])
    pd.testing.assert_frame_equal(solitons, reference[1])
    assert runs["run_id"].is_unique  # each run once
    assert frames.keys() == reference[2].keys()
    for rid, (t, u) in frames.items():
        np.testing.assert_array_equal(t, reference[2][rid][0])
        np.testing.assert_array_equal(u, reference[2][rid][1])
    check = check_store(out)
    assert check.ok, check.damaged
    assert not check.ignored, check.ignored


def steps_of_a_compaction(tmp_path: Path, rows: int) -> list[str]:
    _, out = stored(tmp_path / "probe")
    seen: list[str] = []
    store_module._COMPACTION_HOOK = seen.append
    try:
        compact(out, rows=rows)
    finally:
        store_module._COMPACTION_HOOK = None
    return seen


def test_compaction_interrupted_at_every_step(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # rows=5 merges the six batches of two runs in three groups (2 + 2 runs; 6 > 5), so the
    # crash points cover a store holding merged and unmerged batches at once.
    steps = steps_of_a_compaction(tmp_path, rows=5)
    assert sum(s == "committed the merged part" for s in steps) == 3
    assert any(s.startswith("removed runs/") for s in steps)
    sweep, pristine = stored(tmp_path / "pristine")
    reference = contents(pristine)
    for k, step in enumerate(steps):
        out = tmp_path / f"case-{k}"
        shutil.copytree(pristine, out)
        # Resumed by the next compaction, or by the next writer (a run into the store).
        resume = ("compact", "writer")[k % 2]

        def crash(what: str, k: int = k, out: Path = out) -> None:
            if crash.count == k:  # type: ignore[attr-defined]
                assert_same(out, reference)  # a reader meanwhile (the writer holds the lock)
                raise Interrupted(what)
            crash.count += 1  # type: ignore[attr-defined]

        crash.count = 0  # type: ignore[attr-defined]
        monkeypatch.setattr(store_module, "_COMPACTION_HOOK", crash)
        with pytest.raises(Interrupted):
            compact(out, rows=5)
        monkeypatch.setattr(store_module, "_COMPACTION_HOOK", None)
        assert_same(out, reference)  # the crashed state reads the same
        if resume == "compact":
            compact(out, rows=5)
        else:  # the next run into the store finishes or undoes it, then stores new runs
            with Store.open(out, sweep) as store:
                assert store.done == set(range(12)), step
                assert store.write([result(s) for s in sweep.runs]) == 0
            compact(out, rows=5)
        assert_same(out, reference)
        files = store_files(out)
        assert files == {"runs": 3, "solitons": 3, "frames": 3}, (step, files)
        assert len(pd.read_parquet(out / "runs")) == 12, step


def test_merged_parts_keep_the_batch_checks(tmp_path: Path) -> None:
    _, out = stored(tmp_path)
    reference = contents(out)
    done = compact(out)
    assert (done.merged, done.replaced) == (1, 6)
    assert done.before == {"runs": 6, "solitons": 6, "frames": 6}
    assert done.after == {"runs": 1, "solitons": 1, "frames": 1}
    assert_same(out, reference)
    # The merged solitons part is recorded (rows, size, SHA-256) like any batch's: a flipped
    # byte is found and the merged batch counts as damaged.
    part = next((out / "solitons").glob("part-*.parquet"))
    data = bytearray(part.read_bytes())
    data[len(data) // 2] ^= 0xFF
    part.write_bytes(bytes(data))
    check = check_store(out)
    assert [d.path.name for d in check.damaged] == [part.name]
    assert "checksum differs" in check.damaged[0].problem
    assert check.kept == {}


def test_compaction_of_a_damaged_store_keeps_the_good_rows(tmp_path: Path) -> None:
    sweep, out = stored(tmp_path)
    whole = contents(out)
    part = out / "solitons" / "part-000001.parquet"  # batch 1: runs 2 and 3
    part.write_bytes(part.read_bytes()[:100])
    done = compact(out)
    assert done.after["runs"] == 1
    res = load(out)
    good = [r for r in range(12) if r not in (2, 3)]
    assert list(res.runs["run_id"]) == good
    assert res.check is not None
    assert res.check.ok
    assert (out / "runs" / "part-000001.parquet.damaged").exists()  # set aside, as a run does
    for rid in good:
        np.testing.assert_array_equal(res.frames(rid).u, whole[2][rid][1])
    keep = whole[0]["run_id"].isin(good)
    pd.testing.assert_frame_equal(res.runs, whole[0].loc[keep].reset_index(drop=True))
    with Store.open(out, sweep) as store:
        assert [s.run_id for s in store.pending(sweep.runs)] == [2, 3]


def test_frames_packs_round_trip_and_the_older_layout_is_read_and_migrated(
    tmp_path: Path,
) -> None:
    sweep, out = stored(tmp_path, batches=3)
    assert sorted(p.name for p in (out / "frames").iterdir()) == [
        f"part-00000{i}.npz" for i in range(3)
    ]
    res = load(out)
    for spec in sweep.runs:
        expected = result(spec, frames=True)
        f = res.frames(spec.run_id)
        np.testing.assert_array_equal(f.times, expected.frame_times)
        np.testing.assert_array_equal(f.u, expected.frames)
    with pytest.raises(ConfigError, match="no stored frames for run_id 99"):
        res.frames(99)
    # A store written before frames packs: one file per run (arrays t and u).
    with np.load(frames_pack(out, 1)) as pack:
        older = {rid: (pack[f"t_{rid}"], pack[f"u_{rid}"]) for rid in (2, 3)}
    frames_pack(out, 1).unlink()
    for rid, (t, u) in older.items():
        np.savez(frames_path(out, rid), t=t, u=u)
    np.testing.assert_array_equal(load(out).frames(3).u, older[3][1])
    reference = contents(out)
    compact(out)
    assert not frames_path(out, 2).exists()
    assert not frames_path(out, 3).exists()
    assert store_files(out) == {"runs": 1, "solitons": 1, "frames": 1}
    assert_same(out, reference)
    # A result loaded before the compaction still finds the frames in the merged pack.
    np.testing.assert_array_equal(res.frames(5).u, reference[2][5][1])


def test_compact_command_and_the_farms_rule(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    sweep, out = stored(tmp_path, batches=9, size=1)
    with Store.open(out, sweep) as store:
        assert store.needs_compaction()  # 9 parts > 8
    assert cli.main(["compact", str(out)]) == 0
    err = capsys.readouterr().err
    assert "compacted 9 parts into 1" in err
    assert "runs 9, solitons 9, frames 9" in err
    with Store.open(out, sweep) as store:
        assert not store.needs_compaction()
    assert cli.main(["compact", str(out), "--rows", "0"]) == 2
    assert "rows is 0; expected a positive whole number" in capsys.readouterr().err
    assert cli.main(["compact", str(tmp_path)]) == 2
    assert "not a kdvsweep store" in capsys.readouterr().err


# -- many tiny runs -----------------------------------------------------------------------------
def synthetic_sweep(tmp_path: Path, runs: int) -> Any:
    """Just what a store needs of a sweep of ``runs`` runs (loading a real one costs ~1 ms per
    run): the layout of a real pair sweep, a name, a digest."""
    real = make_sweep(tmp_path / "layout", 1)
    layout: Layout = real.layout
    return SimpleNamespace(
        name="tiny",
        path=tmp_path / "tiny.toml",
        digest=f"synthetic-{runs}",
        parameters=real.parameters,
        runs=range(runs),
        layout=layout,
        text="# synthetic\n",
    )


def tiny_results(first: int, count: int, frames: bool) -> list[RunResult]:
    out = []
    for rid in range(first, first + count):
        row = {"run_id": rid, "status": "ok", "reason": "", "k2": 0.5, "steps": rid, "n": 16}
        row["length"] = 1.0
        sol = [{"run_id": rid, "soliton": s, "kappa": 1.0 + s} for s in (0, 1)]
        if frames:
            t = np.array([0.0, 1.0])
            out.append(RunResult(row, sol, np.full((2, 16), float(rid)), t))
        else:
            out.append(RunResult(row, sol))
    return out


def write_synthetic(out: Path, sweep: Any, runs: int, batch: int, frames: bool) -> None:
    with Store.open(out, sweep) as store:
        for first in range(0, runs, batch):
            store.write(tiny_results(first, min(batch, runs - first), frames))


def test_ten_thousand_tiny_runs_compact_to_a_few_files(tmp_path: Path) -> None:
    runs, batch = 10_000, 25
    sweep = synthetic_sweep(tmp_path, runs)
    out = tmp_path / "tiny"
    write_synthetic(out, sweep, runs, batch, frames=True)
    assert store_files(out) == {"runs": 400, "solitons": 400, "frames": 400}
    before = load(out)
    done = compact(out, rows=2_000)
    assert done.after == {"runs": 5, "solitons": 5, "frames": 5}
    after = load(out)
    pd.testing.assert_frame_equal(after.runs, before.runs)
    pd.testing.assert_frame_equal(after.solitons, before.solitons)
    assert after.counts() == {"ok": runs, "failed": 0, "pending": 0, "total": runs}
    for rid in (0, 4_321, runs - 1):
        np.testing.assert_array_equal(after.frames(rid).u, np.full((2, 16), float(rid)))
    assert len(pd.read_parquet(out / "runs")) == runs
    assert len(pd.read_parquet(out / "solitons")) == 2 * runs
    # Compacting again merges the five parts (default targets) and changes nothing else.
    assert compact(out).after == {"runs": 1, "solitons": 1, "frames": 1}
    pd.testing.assert_frame_equal(load(out).runs, before.runs)


def bench(runs: int, batch: int = 25, folder: str | None = None) -> None:
    """Files and read times of a synthetic store of ``runs`` tiny runs, before and after."""
    base = Path(folder or f"/tmp/kdvsweep-bench-{runs}")
    shutil.rmtree(base, ignore_errors=True)
    base.mkdir(parents=True)
    sweep = synthetic_sweep(base, runs)
    out = base / "store"
    t0 = time.perf_counter()
    write_synthetic(out, sweep, runs, batch, frames=False)
    rows = [("write", time.perf_counter() - t0, store_files(out))]
    for label in ("before", "after"):
        if label == "after":
            t0 = time.perf_counter()
            compact(out)
            rows.append(("compact", time.perf_counter() - t0, store_files(out)))
        t0 = time.perf_counter()
        res = load(out)
        rows.append((f"kv.load {label}", time.perf_counter() - t0, {"runs": len(res.runs)}))
        t0 = time.perf_counter()
        n = len(pd.read_parquet(out / "runs"))
        rows.append((f"pd.read_parquet {label}", time.perf_counter() - t0, {"runs": n}))
    for name, seconds, what in rows:
        print(f"{runs:>8} runs  {name:<24} {seconds:8.2f} s  {what}")


if __name__ == "__main__":
    bench(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
