"""Store integrity under hostile conditions: racing writers, damaged or foreign parts, a bad
manifest, read-only folders, a full disk, leftovers of a failed creation.

Most tests write hand-made results through :class:`Store` (no dask, no simulation); the two
end-to-end tests start ``kdvsweep run`` in subprocesses, as a user would.
"""

from __future__ import annotations

import errno
import json
import multiprocessing
import os
import struct
import subprocess
import sys
import time
import zipfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from conftest import pair_sweep_text
from test_store import make_sweep, result

from kdvsweep import cli
from kdvsweep.columns import TIMING_COLUMNS
from kdvsweep.exceptions import ConfigError, KdvsweepError, StoreBusyError
from kdvsweep.results import load
from kdvsweep.sweep import store as store_module
from kdvsweep.sweep.config import Sweep, load_sweep
from kdvsweep.sweep.store import MANIFEST, Store, check_store, read_table

PART1 = "part-000001.parquet"


def stored_in_batches(tmp_path: Path, out: Path) -> Sweep:
    """A sweep of 6 runs stored in three batches of two (runs 2 and 3 are batch 1)."""
    sweep = make_sweep(tmp_path)
    with Store.open(out, sweep) as store:
        for first in (0, 2, 4):
            store.write([result(s) for s in sweep.runs[first : first + 2]])
    return sweep


def one_line(text: str) -> str:
    """The single line of ``text`` (fails on more, or on a traceback)."""
    assert "Traceback" not in text
    lines = text.strip().splitlines()
    assert len(lines) == 1, lines
    return lines[0]


# -- 1. two sweeps racing into one new folder --------------------------------------------------
def _open_and_write(out: str, sweep: Sweep, barrier: Any) -> None:
    """A racer (forked): open the store for its sweep and store its runs; the exit code says how
    it went: 0 stored, 3 busy, 4 refused as another sweep's store, 1 anything else."""
    code = 1
    try:
        barrier.wait(timeout=20)
        with Store.open(out, sweep) as store:
            store.write([result(s) for s in sweep.runs])
        code = 0
    except StoreBusyError:
        code = 3
    except ConfigError as exc:
        code = 4 if "holds the results of sweep" in str(exc) else 1
    finally:
        os._exit(code)


def test_two_sweeps_racing_into_one_new_folder_never_mix(tmp_path: Path) -> None:
    # Issue 12, item 1: the manifest was written before the lock was taken, so the winner of the
    # lock could store its runs under the other sweep's manifest (20 of 20 trials).
    sweeps = {0: make_sweep(tmp_path, 3, first=0.5), 1: make_sweep(tmp_path, 3, first=0.4)}
    assert sweeps[0].digest != sweeps[1].digest
    ctx = multiprocessing.get_context("fork")
    start = time.monotonic()
    for round_ in range(20):
        out = tmp_path / f"race{round_}" / "out"  # a new folder whose parent is new too
        barrier = ctx.Barrier(2)
        procs = [
            ctx.Process(target=_open_and_write, args=(str(out), sweeps[i], barrier)) for i in (0, 1)
        ]
        for p in procs:
            p.start()
        for p in procs:
            p.join(timeout=30)
        codes = [p.exitcode for p in procs]
        assert sorted(codes) in ([0, 3], [0, 4]), (round_, codes)
        winner = sweeps[codes.index(0)]
        manifest = json.loads((out / MANIFEST).read_text())
        assert manifest["digest"] == winner.digest, round_
        runs = read_table(out, "runs")
        assert sorted(runs["k2"]) == sorted(s.params["k2"] for s in winner.runs), round_
        assert sorted(read_table(out, "solitons")["kappa"]) == sorted(
            [1.0] * 3 + [s.params["k2"] for s in winner.runs]
        )
        assert not list(out.rglob(".tmp-*"))
    assert time.monotonic() - start < 60


def _command(*args: str) -> list[str]:
    return [sys.executable, "-m", "kdvsweep.cli", *args]


def test_two_run_commands_racing_into_one_folder(tmp_path: Path) -> None:
    files = []
    for name, k2 in (("first", [0.5, 0.6]), ("second", [0.4, 0.45])):
        path = tmp_path / f"{name}.toml"
        path.write_text(pair_sweep_text(name, k2), encoding="utf-8")
        files.append(path)
    out = tmp_path / "shared"
    args = ("--out", str(out), "--workers", "1", "--no-progress")
    procs = [
        subprocess.Popen(
            _command("run", str(f), *args),
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        for f in files
    ]
    outputs = [p.communicate(timeout=120) for p in procs]
    codes = [p.returncode for p in procs]
    assert sorted(codes) == [0, 2], outputs
    loser = one_line(outputs[codes.index(2)][1])
    assert ("another kdvsweep process" in loser) or ("holds the results of sweep" in loser), loser
    winner = load_sweep(files[codes.index(0)])
    res = load(out)
    assert res.manifest["digest"] == winner.digest
    assert sorted(res.runs["k2"]) == sorted(s.params["k2"] for s in winner.runs)
    assert res.counts() == {"ok": 2, "failed": 0, "pending": 0, "total": 2}


# -- 2 and 9. damaged parts ----------------------------------------------------------------------
def _truncate(path: Path) -> None:
    path.write_bytes(path.read_bytes()[: path.stat().st_size // 2])


def _flip(path: Path) -> None:
    data = bytearray(path.read_bytes())
    data[len(data) // 2] ^= 0xFF
    path.write_bytes(bytes(data))


def _other_schema(path: Path) -> None:
    table = pa.table({"run_id": [2, 3], "something": ["x", "y"]})
    pq.write_table(table, path)


DAMAGE: dict[str, Callable[[Path], None]] = {
    "deleted": lambda p: p.unlink(),
    "truncated": _truncate,
    "empty": lambda p: p.write_bytes(b""),
    "garbage": lambda p: p.write_bytes(b"PAR1 this is not parquet at all PAR1"),
    "wrong schema": _other_schema,
    "flipped byte": _flip,
}

CASES = [("solitons", kind) for kind in DAMAGE] + [
    ("runs", kind) for kind in ("truncated", "empty", "garbage", "wrong schema")
]


@pytest.mark.parametrize(("table", "kind"), CASES)
def test_damaged_part_is_reported_and_its_runs_redone(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], table: str, kind: str
) -> None:
    # Issue 12, items 2 and 9: a deleted solitons part left the table silently short while
    # `status` said all was well; a truncated part crashed `status` and `table` with a pyarrow
    # traceback while `run` said everything was stored.
    out = tmp_path / "out"
    sweep = stored_in_batches(tmp_path, out)
    reference = {t: read_table(out, t) for t in ("runs", "solitons")}
    DAMAGE[kind](out / table / PART1)

    check = check_store(out)
    assert [(d.batch, d.path.name, d.path.parent.name) for d in check.damaged] == [
        (1, PART1, table if kind != "deleted" else "solitons")
    ]
    assert sorted(check.kept) == [0, 1, 4, 5]

    with pytest.raises(ConfigError, match=rf"1 damaged batch.*{table}/{PART1}.*run the same sweep"):
        load(out)
    res = load(out, skip_damaged=True)
    assert list(res.runs["run_id"]) == [0, 1, 4, 5]
    assert sorted(set(res.solitons["run_id"])) == [0, 1, 4, 5]
    assert res.counts() == {"ok": 4, "failed": 0, "pending": 2, "total": 6}

    assert cli.main(["status", str(out)]) == 1
    got = capsys.readouterr()
    assert "Traceback" not in got.out + got.err
    damage = [line for line in got.out.splitlines() if line.startswith("damage ")]
    assert len(damage) == 1, got.out
    assert f"{table}/{PART1}" in damage[0]
    assert "pending 2" in got.out
    assert cli.main(["table", str(out)]) == 1
    got = capsys.readouterr()
    assert f"{table}/{PART1}" in one_line(got.err)
    assert "4 ok, 0 failed, 2 pending of 6 runs" in got.out

    with Store.open(out, sweep) as store:
        assert [d.batch for d in store.repaired] == [1]
        assert [s.run_id for s in store.pending(sweep.runs)] == [2, 3]
        assert store.write([result(s) for s in sweep.runs]) == 2  # exactly once
    # set aside, not deleted: the runs part always (it uncommits the batch), the damaged file too
    assert (out / "runs" / (PART1 + ".damaged")).exists()
    assert (out / table / (PART1 + ".damaged")).exists() != (kind == "deleted")
    assert check_store(out).ok
    for t, expected in reference.items():
        pd.testing.assert_frame_equal(read_table(out, t), expected)


def test_damaged_store_is_repaired_by_the_run_command(tmp_path: Path) -> None:
    # End to end: a real sweep, a truncated solitons part, `kdvsweep run` again.
    file = tmp_path / "pairs.toml"
    file.write_text(pair_sweep_text("pairs", [0.5, 0.6]), encoding="utf-8")
    out = tmp_path / "out"
    args = ("run", str(file), "--out", str(out), "--workers", "1", "--no-progress")
    first = subprocess.run(_command(*args), capture_output=True, text=True, timeout=120)
    assert first.returncode == 0, first.stderr
    before = load(out)
    parts = sorted((out / "solitons").glob("part-*.parquet"))
    _truncate(parts[-1])
    status = subprocess.run(
        _command("status", str(out)), capture_output=True, text=True, timeout=60
    )
    assert status.returncode == 1
    assert "Traceback" not in status.stderr
    assert "damage " in status.stdout
    assert "pending 1" in status.stdout
    again = subprocess.run(_command(*args), capture_output=True, text=True, timeout=120)
    assert again.returncode == 0, again.stderr
    assert "damaged batch" in again.stderr
    assert "1 runs stored now" in again.stderr
    after = load(out)
    drop = list(TIMING_COLUMNS)
    pd.testing.assert_frame_equal(after.runs.drop(columns=drop), before.runs.drop(columns=drop))
    pd.testing.assert_frame_equal(after.solitons, before.solitons)


# -- 3. foreign runs parts -------------------------------------------------------------------
def test_foreign_and_duplicate_rows_are_ignored_with_a_message(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # Issue 12, item 3: a runs part with a run_id outside the sweep was counted ("31 ok,
    # -1 pending").
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(s) for s in sweep.runs[:2]])
    # A batch copied from the store of a larger sweep (same columns): runs 0, 6 and 7.
    larger = make_sweep(tmp_path / "larger", 8)
    with Store.open(tmp_path / "larger-out", larger) as store:
        store.write([result(larger.runs[i]) for i in (0, 6, 7)])
    for table in ("runs", "solitons"):
        copied = (tmp_path / "larger-out" / table / "part-000000.parquet").read_bytes()
        (out / table / "part-000007.parquet").write_bytes(copied)
    # A part made by hand (no batch record) with a run not stored yet.
    row = result(sweep.runs[2]).run_row
    hand = pa.Table.from_pylist([row], schema=sweep.layout.schema("runs"))
    pq.write_table(hand, out / "runs" / "part-000008.parquet")

    res = load(out)
    assert list(res.runs["run_id"]) == [0, 1]
    assert list(res.runs["steps"]) == [100, 101]
    assert list(res.solitons["run_id"]) == [0, 0, 1, 1]
    assert res.counts() == {"ok": 2, "failed": 0, "pending": 4, "total": 6}
    ignored = res.check.ignored if res.check is not None else []
    assert len(ignored) == 3
    assert "part-000007.parquet: 2 row(s) of a run_id outside the sweep (0..5)" in ignored[0]
    assert "part-000007.parquet: 1 row(s) of runs stored before ignored" in ignored[1]
    assert "part-000008.parquet: no batch record" in ignored[2]

    assert cli.main(["status", str(out)]) == 0
    got = capsys.readouterr().out
    assert "pending 4" in got
    assert sum(line.startswith("ignored ") for line in got.splitlines()) == 3
    with Store.open(out, sweep) as store:
        assert len(store.ignored) == 3
        assert [s.run_id for s in store.pending(sweep.runs)] == [2, 3, 4, 5]
        with pytest.raises(ConfigError, match=r"run_id 7; expected a run of this sweep \(0..5\)"):
            store.write([result(larger.runs[7])])
        assert store.write([result(s) for s in sweep.runs]) == 4
    assert list(read_table(out, "runs")["run_id"]) == list(range(6))


# -- 9. bad manifests, read-only folders, a full disk -------------------------------------------
BAD_MANIFESTS: dict[str, Callable[[dict[str, Any]], bytes]] = {
    "garbage bytes": lambda m: b"\x00\xff\xfe not json",
    "empty": lambda m: b"",
    "a list": lambda m: b"[1, 2, 3]",
    "no runs_total": lambda m: json.dumps(
        {k: v for k, v in m.items() if k != "runs_total"}
    ).encode(),
    "runs_total text": lambda m: json.dumps(m | {"runs_total": "many"}).encode(),
    "bad layout": lambda m: json.dumps(m | {"layout": {"parameters": {"k2": "complex"}}}).encode(),
    "layout not an object": lambda m: json.dumps(m | {"layout": [1]}).encode(),
}


@pytest.mark.parametrize("kind", list(BAD_MANIFESTS))
def test_bad_manifest_is_one_line_everywhere(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], kind: str
) -> None:
    out = tmp_path / "out"
    sweep = stored_in_batches(tmp_path, out)
    manifest = json.loads((out / MANIFEST).read_text())
    (out / MANIFEST).write_bytes(BAD_MANIFESTS[kind](manifest))
    with pytest.raises(ConfigError, match=r"manifest|not a kdvsweep store") as err:
        load(out)
    assert "\n" not in str(err.value)
    with pytest.raises(ConfigError):
        Store.open(out, sweep)
    run = ["run", str(sweep.path), "--out", str(out), "--workers", "1", "--no-progress"]
    for command in (["status", str(out)], ["table", str(out)], run):
        assert cli.main(command) == 2
        got = capsys.readouterr()
        assert one_line(got.err).startswith("kdvsweep: error: ")
        assert got.out == ""


def _refuse(path_part: str, code: int, real: Callable[..., Any]) -> Callable[..., Any]:
    """``open`` that raises OSError(code) for paths containing ``path_part``."""

    def fake(file: Any, *args: Any, **kwargs: Any) -> Any:
        if path_part in str(file):
            raise OSError(code, os.strerror(code), str(file))
        return real(file, *args, **kwargs)

    return fake


def test_read_only_store_is_one_line_and_still_readable(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    # The tests may run as root, for whom permissions do not apply: the refusal is simulated.
    out = tmp_path / "out"
    sweep = stored_in_batches(tmp_path, out)
    monkeypatch.setattr(store_module, "open", _refuse(".lock", errno.EACCES, open), raising=False)
    with pytest.raises(KdvsweepError, match=r"Permission denied\); expected a folder you may"):
        Store.open(out, sweep)
    assert cli.main(["status", str(out)]) == 0  # reading needs no write access
    capsys.readouterr()
    assert cli.main(["run", str(sweep.path), "--out", str(out), "--workers", "1"]) == 2
    assert "Permission denied" in one_line(capsys.readouterr().err)

    def no_mkdir(self: Path, *args: Any, **kwargs: Any) -> None:
        raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(self))

    monkeypatch.setattr(Path, "mkdir", no_mkdir)
    with pytest.raises(KdvsweepError, match=r"cannot create the folder \(Read-only file system"):
        Store.open(tmp_path / "new", sweep)


def _no_space(real: Callable[[int], None], after: int = 0) -> Callable[[int], None]:
    """``os.fsync`` that fails with ENOSPC after ``after`` calls."""
    calls = {"n": 0}

    def fake(fd: int) -> None:
        calls["n"] += 1
        if calls["n"] > after:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        real(fd)

    return fake


def test_full_disk_while_writing_leaves_the_store_whole(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(s) for s in sweep.runs[:2]])
        before = {t: read_table(out, t) for t in ("runs", "solitons")}
        # The solitons part of the next batch is written, then its runs part fails.
        monkeypatch.setattr(os, "fsync", _no_space(os.fsync, after=1))
        with pytest.raises(KdvsweepError, match=r"No space left on device\); free some space") as e:
            store.write([result(s) for s in sweep.runs[2:4]])
        assert "\n" not in str(e.value)
        monkeypatch.undo()
        assert not list(out.rglob(".tmp-*"))
        for t, expected in before.items():
            pd.testing.assert_frame_equal(read_table(out, t), expected)
        # The session goes on: a batch without soliton rows must not pick up the solitons part
        # the failed batch left behind.
        assert store.write([result(s, status="failed") for s in sweep.runs[2:4]]) == 2
    assert sorted(set(read_table(out, "solitons")["run_id"])) == [0, 1]
    with Store.open(out, sweep) as store:
        assert store.failed == {2, 3}
        assert store.write([result(s) for s in sweep.runs]) == 2
    assert list(read_table(out, "runs")["run_id"]) == list(range(6))
    assert check_store(out).ok


# -- 10. a failure while the store is created --------------------------------------------------
def test_failed_creation_is_cleaned_up_and_retried(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    # Issue 12, item 10: a full disk while the store was created left .tmp-PID-manifest.json, and
    # the retry was refused as "not a kdvsweep store" until the file was removed by hand.
    sweep = make_sweep(tmp_path)
    out = tmp_path / "results" / "out"
    monkeypatch.setattr(os, "fsync", _no_space(os.fsync))
    assert cli.main(["run", str(sweep.path), "--out", str(out), "--workers", "1"]) == 2
    message = one_line(capsys.readouterr().err)
    assert "manifest.json: cannot write (No space left on device)" in message
    assert not out.exists()  # the folder this attempt made is gone
    given = tmp_path / "given"
    given.mkdir()
    with pytest.raises(KdvsweepError, match="No space left"):
        Store.open(given, sweep)
    assert list(given.iterdir()) == []  # a folder the user made stays, empty as it was
    monkeypatch.undo()
    with Store.open(out, sweep) as store:
        assert store.write([result(s) for s in sweep.runs[:1]]) == 1


def test_leftovers_of_a_killed_creation_are_recognised(tmp_path: Path) -> None:
    # A process killed while it created the store (no cleanup possible) leaves the lock, empty
    # table folders and a temporary manifest: the next open takes the folder as new.
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    (out / "runs").mkdir(parents=True)
    (out / ".lock").write_bytes(b"")
    (out / ".tmp-4242-manifest.json").write_text("{half")
    with Store.open(out, sweep) as store:
        assert store.write([result(s) for s in sweep.runs[:1]]) == 1
    assert sorted(p.name for p in out.iterdir()) == [
        ".lock",
        "frames",
        "manifest.json",
        "runs",
        "solitons",
    ]
    # Anything else in the folder still makes it someone else's.
    other = tmp_path / "other"
    (other / "runs").mkdir(parents=True)
    (other / "runs" / "mine.txt").write_text("data")
    with pytest.raises(ConfigError, match=r"not empty and is not a kdvsweep store.*holds runs"):
        Store.open(other, sweep)
    assert sorted(p.name for p in other.rglob("*")) == ["mine.txt", "runs"]


def test_damaged_frames_file_is_one_line(tmp_path: Path) -> None:
    sweep = make_sweep(tmp_path)
    out = tmp_path / "out"
    with Store.open(out, sweep) as store:
        store.write([result(s, frames=True) for s in sweep.runs[:2]])
    # Both runs' frames are in the batch's pack: a byte of run 1's frames flipped (its member's
    # CRC-32 no longer matches) spoils run 1 only.
    pack = out / "frames" / "part-000000.npz"
    with zipfile.ZipFile(pack) as zf:
        info = zf.getinfo("u_1.npy")
    data = bytearray(pack.read_bytes())
    head = info.header_offset
    name_len, extra_len = struct.unpack("<HH", data[head + 26 : head + 30])
    start = head + 30 + name_len + extra_len
    data[start + info.file_size - 1] ^= 0xFF
    pack.write_bytes(bytes(data))
    res = load(out)
    assert res.frames(0).u.shape[0] == 3
    with pytest.raises(ConfigError, match=r"part-000000.npz: damaged frames file, run_id 1") as err:
        res.frames(1)
    assert "\n" not in str(err.value)
