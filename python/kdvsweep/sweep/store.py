"""The output folder of a sweep: a manifest, Parquet part files, optional frames; resume-safe.

Layout of a store ``OUT``::

    OUT/manifest.json              the sweep file text, its digest, package version, creation time,
                                   format version and the layout of the tables' columns
    OUT/runs/part-000000.parquet   rows of the runs table, one part per batch of completed runs
    OUT/solitons/part-000000.parquet   rows of the solitons table for the same batch
    OUT/frames/part-000000.npz     sub-sampled frames of the batch's runs (``t_<run_id>`` and
                                   ``u_<run_id>``; stores written before packs have one
                                   ``run_NNNNNN.npz`` per run, still read)
    OUT/references/part-000000.parquet   reference runs (a perturbed collision's solitons run
                                   alone), by the digest of what determines them
    OUT/.lock                      held (flock) by the one process writing

Exactly once, simply: the client process is the only writer (dask workers return rows, never write
files). Every file is written to a temporary name in its own folder, fsync'ed, then renamed with
``os.replace``, so a file is either whole or absent even after SIGKILL or a power cut. A batch is
committed by its runs part, which is written last: solitons parts and frames whose runs part is
missing are leftovers of an interrupted batch and are ignored (and overwritten when the runs are
redone). Retrying failed runs (:meth:`Store.forget_failed`) rewrites each runs part that holds
their rows without them, part by part with the same rename. Readers keep the first stored row of
each ``run_id`` of the sweep; rows of a ``run_id`` outside the sweep are ignored (and reported). The manifest ties the folder to one sweep definition
by its digest, so another sweep cannot be mixed in: the lock is taken before the manifest is
written or checked, and the manifest is written last when a store is made, so a folder holding
only the lock, empty table folders or temporary files is a store that was never finished.

Each runs part carries in its Parquet metadata the record of its batch: the row count, size and
SHA-256 of the batch's solitons part; a runs part without one was not written by kdvsweep and
is ignored (and reported). Opening a store for writing checks every committed batch
(readable Parquet with the store's columns, page checksums, the solitons part as recorded); a
batch that is not whole is set aside (its files renamed ``part-NNNNNN.parquet.damaged``, the runs
part first, which uncommits it) and its runs are pending again. Readers report such batches
(:class:`StoreCheck`) instead of failing deep inside pyarrow.

Compaction (:func:`compact`; the farm's end of a sweep) merges consecutive batches into one
batch written the same way (frames pack, solitons part, runs part last); the merged runs part's
record names the batches it ``replaces`` and its ``order`` (its place among the batches, so the
first stored row of a run still counts). Once it is renamed into place readers skip the replaced
batches, whose files are then removed; a writer or compaction opening the store removes any left.

Every part of a table is written with the one Arrow schema of :mod:`kdvsweep.columns` for the
sweep's :class:`~kdvsweep.columns.Layout` (kept in the manifest), whatever the values of the batch.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import errno
import hashlib
import importlib.metadata
import io
import json
import os
import re
import time
import zipfile
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, BinaryIO

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from ..columns import PARAMETER_TYPES, Layout, reserved_names
from ..exceptions import ConfigError, StoreBusyError, StoreError
from .references import key_digest

if TYPE_CHECKING:  # readers (kdvsweep status) load neither pandas, the analysis nor the loader
    import pandas as pd

    from ..analysis.tracks import ReferenceTrack
    from .config import RunSpec, Sweep
    from .references import ReferenceResult
    from .runner import RunResult

try:  # advisory lock; absent on Windows, where a second writer is simply not detected
    import fcntl
except ImportError:  # pragma: no cover
    fcntl = None  # type: ignore[assignment]

MANIFEST = "manifest.json"
LOCK = ".lock"
STORE_FORMAT = "kdvsweep-store"
#: Version 2: typed Parquet schema in every part, the model's coefficients in the runs table.
#: Version 3: the soliton content (profile data): ist_kappas a list column, content columns.
#: Version 4: balance residuals, failure kinds.
#: Version 5: reference runs (references/), shift_method, amplitude and speed changes, radiated
#: mass and energy.
STORE_VERSION = 5
TABLES = ("runs", "solitons")
#: Folder of the reference runs (:mod:`kdvsweep.sweep.references`), one part per batch.
REFERENCES = "references"
#: The folders every store has (``references/`` is made when the first reference is stored).
FOLDERS = (*TABLES, "frames")
#: Arrow schema of a references part: one row per reference run, by the digest of its key.
REFERENCE_SCHEMA = pa.schema(
    [
        pa.field("digest", pa.string()),
        pa.field("key", pa.string()),
        pa.field("times", pa.list_(pa.float64())),
        pa.field("x", pa.list_(pa.float64())),
        pa.field("height", pa.list_(pa.float64())),
        pa.field("last", pa.list_(pa.float64())),
        pa.field("wall_time", pa.float64()),
    ]
)
_PART = re.compile(r"^part-(\d+)\.parquet$")
#: Suffix of a batch's frames pack (``frames/part-NNNNNN.npz``).
FRAMES_SUFFIX = ".npz"
_PACK = re.compile(r"^part-(\d+)\.npz$")
_OLD_FRAMES = re.compile(r"^run_(\d+)\.npz$")
#: Compaction: a merged part holds at most this many runs rows, this many bytes of Parquet
#: (runs and solitons parts together) and this many bytes of frames. A merge holds its rows in
#: memory (about 2 kB a run), so the rows bound the client's memory at the end of a sweep
#: (20 MB), whatever its size; 10^5 runs make 10 parts, 10^6 runs 100.
COMPACT_ROWS = 10_000
COMPACT_BYTES = 64 * 2**20
COMPACT_FRAMES_BYTES = 2**30
#: The farm compacts a store at the end of a sweep when its runs table has more parts than this.
COMPACT_AT_END = 8
_TMP_PREFIX = ".tmp-"
#: Suffix of the files of a batch set aside as damaged (no longer matched as parts).
DAMAGED_SUFFIX = ".damaged"
#: Key of the batch record in the Parquet metadata of a runs part.
_RECORD_KEY = b"kdvsweep.batch"
#: Seconds a writer waits for the lock: a process that only checks the folder holds it briefly.
LOCK_WAIT = 2.0

#: What to do after a store was found damaged (one home for the advice).
REPAIR_ADVICE = (
    "run the same sweep again into this folder (`kdvsweep run FILE --out OUT`): the damaged "
    "batches are set aside as *.damaged files and their runs are run again"
)


def _fsync_dir(folder: Path) -> None:
    """Make a rename in ``folder`` durable (no-op where directories cannot be opened)."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:  # pragma: no cover
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover
        pass
    finally:
        os.close(fd)


def io_error(path: Path, exc: OSError, doing: str = "write") -> StoreError:
    """A one-line error for an operating-system failure on ``path``, with what to do about it."""
    reason = exc.strerror or str(exc) or type(exc).__name__
    if exc.errno in (errno.ENOSPC, errno.EDQUOT):
        advice = (
            "free some space (or choose another output folder), then run the same command "
            "again: what is stored is whole and the sweep resumes"
        )
    elif exc.errno in (errno.EACCES, errno.EPERM, errno.EROFS):
        advice = "expected a folder you may write to; choose another output folder with --out"
    else:
        advice = "fix the cause, then run the same command again: what is stored is whole"
    return StoreError(f"{path}: cannot {doing} ({reason}); {advice}")


@contextlib.contextmanager
def _atomic_file(path: Path) -> Iterator[BinaryIO]:
    """A file opened for writing under a temporary name in ``path``'s folder (a rename across file
    systems is not atomic); when the block ends it is flushed, fsynced and renamed over ``path``.

    Raises :class:`StoreError` if it cannot be written; the temporary file is then removed and
    ``path`` is left as it was.
    """
    tmp = path.with_name(f"{_TMP_PREFIX}{os.getpid()}-{path.name}")
    try:
        with open(tmp, "wb") as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except OSError as exc:
        with contextlib.suppress(OSError):
            tmp.unlink(missing_ok=True)
        raise io_error(path, exc) from None


def write_atomic(path: Path, data: bytes, sync_dir: bool = True) -> None:
    """Write ``data`` to ``path`` so that ``path`` is either the old file, absent, or whole.

    Temporary file in the same folder (a rename across file systems is not atomic), fsync, rename.
    ``sync_dir=False`` leaves the fsync of the folder (which makes the rename durable) to the
    caller, who can then do it once for many files.

    Raises
    ------
    StoreError
        The file could not be written (full disk, no permission...); the temporary file is
        removed and ``path`` is left as it was.
    """
    with _atomic_file(path) as fh:
        fh.write(data)
    if sync_dir:
        _fsync_dir(path.parent)


def _arrow_table(rows: Sequence[Mapping[str, Any]], schema: pa.Schema) -> pa.Table:
    """The rows as a table of exactly ``schema`` (absent values are nulls, NaN is null)."""
    known = set(schema.names)
    for row in rows:
        extra = sorted(set(row) - known)
        if extra:
            raise ConfigError(
                f"store: row of run {row.get('run_id')} has undeclared column(s) {extra}; "
                "expected the columns of kdvsweep.columns"
            )
    arrays = []
    for fld in schema:
        values = [row.get(fld.name) for row in rows]
        try:
            arrays.append(pa.array(values, type=fld.type, from_pandas=True))
        except (pa.ArrowInvalid, pa.ArrowTypeError) as exc:
            raise ConfigError(
                f"store: column {fld.name!r} holds {values[:3]!r}...; expected {fld.type} ({exc})"
            ) from None
    return pa.Table.from_arrays(arrays, schema=schema)


def _parquet_bytes(table: pa.Table) -> bytes:
    buf = io.BytesIO()
    pq.write_table(table, buf, write_page_checksum=True)
    return buf.getvalue()


def part_files(folder: Path) -> dict[int, Path]:
    """The whole part files of one table folder, by sequence number."""
    if not folder.is_dir():
        return {}
    found = {}
    try:
        entries = list(folder.iterdir())
    except OSError:
        return {}
    for entry in entries:
        m = _PART.match(entry.name)
        if m:
            found[int(m.group(1))] = entry
    return dict(sorted(found.items()))


def read_manifest(out: str | os.PathLike[str]) -> dict[str, Any]:
    """The manifest of a store, or ConfigError if ``out`` is not a sweep store."""
    out = Path(out)
    path = out / MANIFEST
    if not path.is_file():
        raise ConfigError(
            f"{out}: not a kdvsweep store (no {MANIFEST}); expected a folder made by `kdvsweep run`"
        )
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise ConfigError(
            f"{path}: unreadable manifest ({_short(exc)}); expected the JSON written by "
            "`kdvsweep run` (if it was damaged, run the sweep into a new folder)"
        ) from None
    found = manifest.get("format") if isinstance(manifest, dict) else type(manifest).__name__
    if found != STORE_FORMAT:
        raise ConfigError(f"{path}: format is {found!r}; expected {STORE_FORMAT!r}")
    version = manifest.get("format_version")
    if version != STORE_VERSION:
        raise ConfigError(
            f"{out}: a store of format version {version} (kdvsweep "
            f"{manifest.get('package_version', '?')}); this kdvsweep reads version {STORE_VERSION}: "
            "run the sweep again into a new folder, or read this one with the kdvsweep that wrote it"
        )
    problem = _manifest_problem(manifest)
    if problem:
        raise ConfigError(
            f"{path}: damaged manifest ({problem}); expected the manifest written by "
            "`kdvsweep run` (run the sweep into a new folder)"
        )
    return manifest


def _manifest_problem(manifest: Mapping[str, Any]) -> str | None:
    """What is wrong with the fields of a manifest the store relies on, or None."""
    if not isinstance(manifest.get("digest"), str):
        return "digest is not text"
    total = manifest.get("runs_total")
    if not isinstance(total, int) or isinstance(total, bool) or total < 0:
        return f"runs_total is {total!r}, not a count"
    params = manifest.get("parameters", [])
    if not isinstance(params, list) or not all(isinstance(p, str) for p in params):
        return "parameters is not a list of names"
    lay = manifest.get("layout")
    if not isinstance(lay, dict):
        return "layout is not an object"
    kinds = lay.get("parameters", {})
    if not isinstance(kinds, dict) or not all(
        isinstance(k, str) and v in PARAMETER_TYPES for k, v in kinds.items()
    ):
        return f"layout parameters are not names of kinds {sorted(PARAMETER_TYPES)}"
    return None


def layout(manifest: Mapping[str, Any]) -> Layout:
    """The column layout recorded in a store's manifest."""
    return Layout.from_json(manifest.get("layout", {}))


def _committed_parts(out: Path) -> dict[int, Path]:
    return part_files(out / "runs")


def _short(exc: BaseException, limit: int = 160) -> str:
    """The first line of an exception's message, shortened."""
    text = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
    return text if len(text) <= limit else text[: limit - 3] + "..."


# -- checking what is stored ---------------------------------------------------------------------
class _Broken(Exception):
    """A part that is not whole (internal: becomes a :class:`Damage`)."""


class _Foreign(Exception):
    """A whole runs part without a batch record: not written by kdvsweep (internal)."""


@dataclass(frozen=True)
class Damage:
    """A committed batch whose files are not whole: its runs count as pending.

    Attributes
    ----------
    batch
        The batch's sequence number (``part-NNNNNN``).
    path
        The file found wrong (the runs or the solitons part of the batch).
    problem
        What is wrong, one line.
    """

    batch: int
    path: Path
    problem: str

    def __str__(self) -> str:
        return f"{self.path.parent.name}/{self.path.name}: {self.problem}"


@dataclass
class StoreCheck:
    """What a store holds, as found on disk.

    Attributes
    ----------
    out
        The store folder.
    total
        Runs in the sweep.
    kept
        Stored run id -> the batch its row is read from (the first stored row of the run).
    failed
        Stored runs whose status is not "ok".
    failures
        Of each failed run: its kind of failure (``failure`` column, "" when unset) and reason.
    damaged
        Batches that are not whole (their runs are not in ``kept``).
    ignored
        One line per part holding rows that are not counted: run ids outside the sweep, rows of
        runs already stored.
    live
        The batches whose rows count, in the order they count.
    superseded
        Batches still on disk whose rows a merged part holds (left by a compaction that was
        interrupted after it committed; a writer removes them).
    replaced
        Every batch a merged part names (never used again for a new batch).
    """

    out: Path
    total: int
    kept: dict[int, int] = field(default_factory=dict)
    failed: set[int] = field(default_factory=set)
    failures: dict[int, tuple[str, str]] = field(default_factory=dict)
    damaged: list[Damage] = field(default_factory=list)
    ignored: list[str] = field(default_factory=list)
    live: list[int] = field(default_factory=list)
    superseded: list[int] = field(default_factory=list)
    replaced: set[int] = field(default_factory=set)

    @property
    def ok(self) -> bool:
        """No damaged batch."""
        return not self.damaged

    def summary(self) -> str:
        """One line on the damaged batches and what to do, or "" when there is none."""
        if not self.damaged:
            return ""
        more = f" (and {len(self.damaged) - 1} more)" if len(self.damaged) > 1 else ""
        return (
            f"{len(self.damaged)} damaged batch(es), their runs count as pending: "
            f"{self.damaged[0]}{more}; {REPAIR_ADVICE}"
        )


def _schema_difference(found: pa.Schema, expected: pa.Schema) -> str:
    names = set(found.names)
    missing = [n for n in expected.names if n not in names]
    extra = [n for n in found.names if n not in set(expected.names)]
    typed = [
        f"{f.name} is {f.type}, not {expected.field(f.name).type}"
        for f in found
        if f.name in set(expected.names) and f.type != expected.field(f.name).type
    ]
    parts = []
    if missing:
        parts.append(f"missing {missing[:4]}{'...' if len(missing) > 4 else ''}")
    if extra:
        parts.append(f"unknown {extra[:4]}{'...' if len(extra) > 4 else ''}")
    parts += typed[:2]
    return "; ".join(parts) or "columns in another order"


def _parse(data: bytes, schema: pa.Schema) -> pa.Table:
    """The table in ``data`` if it is whole Parquet of exactly ``schema``; else :class:`_Broken`."""
    if not data:
        raise _Broken("empty file (0 bytes)")
    try:
        pf = pq.ParquetFile(pa.BufferReader(data), page_checksum_verification=True)
        found = pf.schema_arrow
    except (pa.ArrowException, OSError, ValueError) as exc:
        raise _Broken(f"not a readable Parquet file ({_short(exc)})") from None
    if not found.remove_metadata().equals(schema):
        raise _Broken(f"columns differ from the store's ({_schema_difference(found, schema)})")
    try:
        return pf.read()
    except (pa.ArrowException, OSError, ValueError) as exc:
        raise _Broken(f"unreadable data ({_short(exc)})") from None


def _read_bytes(path: Path) -> bytes:
    try:
        return path.read_bytes()
    except FileNotFoundError:
        raise
    except OSError as exc:
        raise _Broken(f"unreadable ({exc.strerror or _short(exc)})") from None


def _is_count(value: object) -> bool:
    return isinstance(value, int) and not isinstance(value, bool) and value >= 0


def _record(table: pa.Table | pa.Schema) -> dict[str, Any] | None:
    """The batch record of a runs part, None for a part written without one (older kdvsweep).

    Besides the solitons part's ``rows``, ``bytes`` and ``sha256``: ``frames`` (runs whose frames
    are in the batch's frames pack), and for a part made by compaction ``replaces`` (the batches
    it holds the rows of) and ``order`` (its place among the batches: the first it replaces).
    """
    schema = table if isinstance(table, pa.Schema) else table.schema
    raw = (schema.metadata or {}).get(_RECORD_KEY)
    if raw is None:
        return None
    try:
        record = json.loads(raw)
        rows, size, digest = record["rows"], record["bytes"], record["sha256"]
        frames = record.get("frames", 0)
        replaces = record.get("replaces", [])
        order = record.get("order")
    except (ValueError, KeyError, TypeError, AttributeError):
        raise _Broken("its batch record is unreadable") from None
    if not (
        _is_count(rows)
        and _is_count(size)
        and isinstance(digest, str)
        and _is_count(frames)
        and isinstance(replaces, list)
        and all(_is_count(r) for r in replaces)
        and (order is None or _is_count(order))
    ):
        raise _Broken("its batch record is unreadable")
    found = {"rows": rows, "bytes": size, "sha256": digest, "frames": frames}
    if replaces:
        found["replaces"] = sorted(replaces)
        found["order"] = min(replaces) if order is None else order
    return found


def _batch(
    out: Path, seq: int, runs_path: Path, lay: Layout
) -> tuple[pa.Table, pa.Table | None, dict[str, Any]]:
    """The runs and solitons tables of one committed batch, checked, and its record;
    :class:`_Broken` names the file found wrong (as its first argument) and the problem."""
    try:
        runs = _parse(_read_bytes(runs_path), lay.schema("runs"))
        record = _record(runs)
    except _Broken as exc:
        raise _Broken(runs_path, str(exc)) from None
    if record is None:  # every part this store format writes has one
        raise _Foreign(runs.num_rows)
    sol_path = out / "solitons" / runs_path.name
    solitons: pa.Table | None = None
    try:
        if record["rows"]:
            try:
                data = _read_bytes(sol_path)
            except FileNotFoundError:
                raise _Broken(
                    f"missing; the batch's runs part records {record['rows']} rows"
                ) from None
            if len(data) != record["bytes"] or hashlib.sha256(data).hexdigest() != record["sha256"]:
                raise _Broken(
                    f"changed since it was written ({len(data)} bytes, "
                    f"{record['bytes']} recorded, checksum differs)"
                )
            solitons = _parse(data, lay.schema("solitons"))
            if solitons.num_rows != record["rows"]:
                raise _Broken(f"{solitons.num_rows} rows, {record['rows']} recorded")
        if solitons is not None:
            own = set(runs.column("run_id").to_pylist())
            strays = set(solitons.column("run_id").to_pylist()) - own
            if strays:
                raise _Broken(f"rows of run(s) {sorted(strays, key=str)[:4]} not in its batch")
    except FileNotFoundError:
        raise _Broken(sol_path, "vanished while it was read") from None
    except _Broken as exc:
        raise _Broken(sol_path, str(exc)) from None
    return runs, solitons, record


class _Vanished(Exception):
    """A part disappeared while a store was read (a writer compacted or set it aside)."""


#: Times a reader scans a store again when a part vanished under it (a compaction finishing).
_SCAN_ATTEMPTS = 4

Tables = dict[int, tuple[pa.Table, "pa.Table | None"]]


def _scan(out: Path, manifest: Mapping[str, Any], keep: bool) -> tuple[StoreCheck, Tables]:
    """Check every committed batch; with ``keep``, also return the tables of the live ones, in
    the order their rows count (the first stored row of a run is kept).

    A part that vanishes while it is read (a writer finishing a compaction removes the parts a
    merged part replaces; a writer sets a damaged batch aside) makes the scan start again, so a
    reader never misses the rows of a merged part it did not list.
    """
    lay = layout(manifest)
    for _ in range(_SCAN_ATTEMPTS - 1):
        try:
            return _scan_once(out, manifest, lay, keep, tolerate=False)
        except _Vanished:
            continue
    return _scan_once(out, manifest, lay, keep, tolerate=True)


#: The columns of a runs part the check reads (:func:`_scan_once` without ``keep``).
_CHECK_COLUMNS = ("run_id", "status", "failure", "reason")


def _scan_once(
    out: Path, manifest: Mapping[str, Any], lay: Layout, keep: bool, tolerate: bool
) -> tuple[StoreCheck, Tables]:
    check = StoreCheck(out, int(manifest["runs_total"]))
    whole: dict[int, tuple[Path, pa.Table, pa.Table | None, dict[str, Any]]] = {}
    broken: list[Damage] = []
    foreign: dict[int, str] = {}
    for seq, path in _committed_parts(out).items():
        try:
            runs, solitons, record = _batch(out, seq, path, lay)
        except FileNotFoundError:  # set aside or replaced meanwhile by a writer
            if tolerate:
                continue
            raise _Vanished(path) from None
        except _Foreign as exc:
            foreign[seq] = (
                f"runs/{path.name}: no batch record, so not written by kdvsweep; its "
                f"{exc.args[0]} row(s) ignored"
            )
            continue
        except _Broken as exc:
            where, problem = exc.args if len(exc.args) == 2 else (path, str(exc))
            broken.append(Damage(seq, Path(where), str(problem)))
            continue
        if not keep:  # only what the check reads: one batch's tables in memory at a time
            runs, solitons = runs.select(_CHECK_COLUMNS), None
        whole[seq] = (path, runs, solitons, record)
    # A whole merged part replaces its batches: they are left-overs of a compaction that
    # committed (readers skip them; a writer removes them), damaged or not.
    for _, _, _, record in whole.values():
        check.replaced.update(record.get("replaces", ()))
    check.superseded = sorted(
        seq for seq in (*whole, *foreign, *(d.batch for d in broken)) if seq in check.replaced
    )
    check.damaged = [d for d in broken if d.batch not in check.replaced]
    ignored = [(seq, line) for seq, line in foreign.items() if seq not in check.replaced]
    live = sorted(
        (record.get("order", seq), seq)
        for seq, (_, _, _, record) in whole.items()
        if seq not in check.replaced
    )
    tables: Tables = {}
    for _, seq in live:
        path, runs, solitons, _ = whole[seq]
        check.live.append(seq)
        outside = duplicate = 0
        statuses = runs.column("status").to_pylist()
        for i, rid in enumerate(runs.column("run_id").to_pylist()):
            if rid is None or not 0 <= rid < check.total:
                outside += 1
            elif rid in check.kept:
                duplicate += 1
            else:
                check.kept[rid] = seq
                if statuses[i] != "ok":
                    check.failed.add(rid)
                    check.failures[rid] = (
                        str(runs.column("failure")[i].as_py() or ""),
                        str(runs.column("reason")[i].as_py() or ""),
                    )
        name = f"runs/{path.name}"
        if outside:
            ignored.append(
                (
                    seq,
                    f"{name}: {outside} row(s) of a run_id outside the sweep "
                    f"(0..{check.total - 1}) ignored",
                )
            )
        if duplicate:
            ignored.append(
                (
                    seq,
                    f"{name}: {duplicate} row(s) of runs stored before ignored "
                    "(the first row counts)",
                )
            )
        if keep:
            tables[seq] = (runs, solitons)
    check.ignored = [line for _, line in sorted(ignored, key=lambda item: item[0])]
    return check, tables


def check_store(out: str | os.PathLike[str]) -> StoreCheck:
    """Check a store without changing it: damaged batches, ignored rows, what is stored.

    Raises
    ------
    ConfigError
        ``out`` is not a store this kdvsweep reads.
    """
    out = Path(out)
    return _scan(out, read_manifest(out), keep=False)[0]


@dataclass
class StoreContents:
    """The tables of a store as read (see :func:`read_store`)."""

    manifest: dict[str, Any]
    runs: pd.DataFrame
    solitons: pd.DataFrame
    check: StoreCheck


def read_store(out: str | os.PathLike[str], skip_damaged: bool = False) -> StoreContents:
    """Both tables of a store, deduplicated by run (first stored row wins) and sorted.

    Rows of a ``run_id`` outside the sweep are left out (``check.ignored`` says so). Parts of the
    solitons table count only when the runs part of the same batch exists; a run's solitons come
    from the batch of its kept runs row.

    Parameters
    ----------
    out
        The store folder.
    skip_damaged
        Leave damaged batches out (``check.damaged`` lists them) instead of raising.

    Raises
    ------
    ConfigError
        ``out`` is not a store, or (unless ``skip_damaged``) a batch of it is damaged: the message
        names the file and what to do.
    """
    out = Path(out)
    manifest = read_manifest(out)
    lay = layout(manifest)
    check, tables = _scan(out, manifest, keep=True)
    if check.damaged and not skip_damaged:
        raise ConfigError(f"{out}: {check.summary()}")
    run_parts, sol_parts = [], []
    for seq, (runs, solitons) in tables.items():
        ids = runs.column("run_id").to_pylist()
        taken: set[int] = set()
        mask = []
        for rid in ids:
            mine = rid is not None and check.kept.get(rid) == seq and rid not in taken
            if mine:
                taken.add(rid)
            mask.append(mine)
        run_parts.append(runs.filter(pa.array(mask, type=pa.bool_())))
        if solitons is not None:
            sol_mask = [
                r is not None and check.kept.get(r) == seq
                for r in solitons.column("run_id").to_pylist()
            ]
            sol_parts.append(solitons.filter(pa.array(sol_mask, type=pa.bool_())))
    frames = {}
    for name, parts, keys in (
        ("runs", run_parts, ["run_id"]),
        ("solitons", sol_parts, ["run_id", "soliton"]),
    ):
        schema = lay.schema(name)
        table = (
            pa.concat_tables([p.replace_schema_metadata(None) for p in parts])
            if parts
            else (schema.empty_table())
        )
        data = table.to_pandas()
        if len(data):
            data = data.sort_values(keys, kind="stable")
        frames[name] = data.reset_index(drop=True)
    return StoreContents(manifest, frames["runs"], frames["solitons"], check)


def read_table(out: str | os.PathLike[str], table: str) -> pd.DataFrame:
    """One table of a store (see :func:`read_store`); ConfigError if a batch is damaged."""
    if table not in TABLES:
        raise ConfigError(f"read_table: table {table!r}; expected one of {TABLES}")
    contents = read_store(out)
    return contents.runs if table == "runs" else contents.solitons


def frames_path(out: str | os.PathLike[str], run_id: int) -> Path:
    """Where the frames of one run were stored by kdvsweep before frames packs (still read)."""
    return Path(out) / "frames" / f"run_{int(run_id):06d}.npz"


def frames_pack(out: str | os.PathLike[str], batch: int) -> Path:
    """The frames pack of one batch: an uncompressed ``.npz`` (zip) holding ``t_<run_id>`` and
    ``u_<run_id>`` of each of its runs with frames; its central directory is the index, so one
    run's frames are read without the others'."""
    return Path(out) / "frames" / f"part-{int(batch):06d}{FRAMES_SUFFIX}"


def frame_members(run_id: int) -> tuple[str, str]:
    """The names of a run's frame times and frames in a pack (as ``np.load`` gives them)."""
    return f"t_{int(run_id)}", f"u_{int(run_id)}"


def _pack_files(folder: Path) -> dict[int, Path]:
    """The frames packs of a store, by batch."""
    found = {}
    with contextlib.suppress(OSError):
        for entry in folder.iterdir():
            m = _PACK.match(entry.name)
            if m:
                found[int(m.group(1))] = entry
    return dict(sorted(found.items()))


def _write_pack(path: Path, members: Iterable[tuple[str, bytes]]) -> int:
    """Write a frames pack (``name.npy`` members, stored) atomically; returns the members."""
    count = 0
    with (
        _atomic_file(path) as fh,
        zipfile.ZipFile(fh, "w", zipfile.ZIP_STORED, allowZip64=True) as zf,
    ):
        for name, data in members:
            zf.writestr(name, data)
            count += 1
    return count


def _npy(array: np.ndarray) -> bytes:
    buf = io.BytesIO()
    np.lib.format.write_array(buf, np.asanyarray(array), allow_pickle=False)
    return buf.getvalue()


class Store:
    """The writer of one sweep's output folder. Open with :meth:`open`; one writer at a time.

    Parameters are set by :meth:`open`; use it as a context manager to release the lock.

    Attributes
    ----------
    repaired
        The damaged batches found and set aside when the store was opened (their runs are pending).
    ignored
        Parts holding rows that are not counted (see :class:`StoreCheck`).
    """

    def __init__(self, out: Path, manifest: dict[str, Any], lock: Any) -> None:
        self.out = out
        self.manifest = manifest
        self.layout = layout(manifest)
        self._lock = lock
        check, _ = _scan(out, manifest, keep=False)
        self.repaired: list[Damage] = list(check.damaged)
        self.ignored: list[str] = list(check.ignored)
        for damage in check.damaged:
            self._set_aside(damage.batch)
        self._drop(check.superseded)  # finish a compaction that committed
        self._clean_leftovers()
        self._check: StoreCheck | None = check  # what is live, until the next write
        every = (
            set(_committed_parts(out))
            | set(part_files(out / "solitons"))
            | set(_pack_files(out / "frames"))
            | check.replaced
        )
        self._next = (max(every) + 1) if every else 0
        self._done: set[int] = set(check.kept)
        self._failed: set[int] = set(check.failed)
        self._references, notes = _reference_index(out / REFERENCES, set_aside=True)
        self._reference_part: tuple[Path, dict[str, ReferenceTrack]] | None = None
        self.ignored += notes
        parts = part_files(out / REFERENCES)
        self._next_reference = (max(parts) + 1) if parts else 0

    # -- opening -------------------------------------------------------------------------------
    @classmethod
    def open(cls, out: str | os.PathLike[str], sweep: Sweep) -> Store:
        """Open ``out`` for ``sweep``: create it, or resume it if it holds the same sweep.

        The lock is taken first, then the manifest is checked or written (last, when the store
        is new), so two processes starting at once cannot mix two sweeps. Damaged batches are
        set aside (:attr:`repaired`) and their runs are pending again.

        Raises
        ------
        ConfigError
            ``out`` is a file; or a non-empty folder that is not a store; or a store of another
            sweep (digest differs) or of another format version. Nothing is written then.
        StoreBusyError
            Another process is writing to it.
        KdvsweepError
            The folder cannot be created or written (no permission, full disk).
        """
        out = Path(out)
        check_parameter_names(sweep)
        if out.exists() and not out.is_dir():
            raise ConfigError(
                f"{out}: exists and is not a folder; expected a folder for the results"
            )
        created = not out.exists()
        try:
            out.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise io_error(out, exc, "create the folder") from None
        had_lock = (out / LOCK).exists()
        lock = _take_lock(out)
        try:
            manifest = cls._claim(out, sweep)
            for table in FOLDERS:
                (out / table).mkdir(exist_ok=True)
            return cls(out, manifest, lock)
        except BaseException as exc:
            if not (out / MANIFEST).exists():  # never became a store: leave what was there
                _undo_new(out, created, had_lock)
            lock.close()
            if isinstance(exc, OSError):
                raise io_error(out, exc) from None
            raise

    @classmethod
    def existing(cls, out: str | os.PathLike[str]) -> Store:
        """Open the store ``out`` for writing without its sweep file (to compact it).

        Raises
        ------
        ConfigError
            ``out`` is not a store this kdvsweep reads.
        StoreBusyError
            Another process is writing to it.
        """
        out = Path(out)
        read_manifest(out)  # refuse a folder that is not a store before taking any lock
        lock = _take_lock(out)
        try:
            return cls(out, read_manifest(out), lock)
        except BaseException:
            lock.close()
            raise

    @staticmethod
    def _claim(out: Path, sweep: Sweep) -> dict[str, Any]:
        """Under the lock: the manifest of the store for ``sweep``, written if the store is new."""
        if (out / MANIFEST).exists():
            manifest = read_manifest(out)
            if manifest.get("digest") != sweep.digest:
                raise ConfigError(
                    f"{out}: holds the results of sweep {manifest.get('sweep_name')!r} "
                    f"(digest {str(manifest.get('digest'))[:12]}), not of {sweep.path} "
                    f"(digest {sweep.digest[:12]}); choose another output folder or remove this one"
                )
            return manifest
        foreign = sorted(e.name for e in out.iterdir() if not _is_leftover(e))
        if foreign:
            raise ConfigError(
                f"{out}: folder is not empty and is not a kdvsweep store (no {MANIFEST}; holds "
                f"{', '.join(foreign[:3])}{'...' if len(foreign) > 3 else ''}); expected a new or "
                "empty folder"
            )
        # Leftovers of an attempt that failed before its manifest: temporary files go.
        for entry in out.iterdir():
            if entry.name.startswith(_TMP_PREFIX):
                entry.unlink(missing_ok=True)
        for table in FOLDERS:
            (out / table).mkdir(exist_ok=True)
        manifest = new_manifest(sweep)
        write_atomic(out / MANIFEST, (json.dumps(manifest, indent=2) + "\n").encode())
        return manifest

    def close(self) -> None:
        """Release the writer's lock."""
        if self._lock is not None:
            self._lock.close()
            self._lock = None

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- state ---------------------------------------------------------------------------------
    @property
    def done(self) -> frozenset[int]:
        """The ids of the runs already stored (ok or failed)."""
        return frozenset(self._done)

    @property
    def failed(self) -> frozenset[int]:
        """The ids of the stored runs that failed."""
        return frozenset(self._failed)

    def pending(self, runs: Iterable[RunSpec]) -> list[RunSpec]:
        """The runs (specs with ``run_id``) not stored yet, in the given order."""
        return [r for r in runs if int(r.run_id) not in self._done]

    def pending_ids(self) -> Iterator[int]:
        """The ids of the sweep's runs not stored yet, in order, drawn one at a time (no list of
        a sweep's runs is built); the runs stored when it is called count as done."""
        done = frozenset(self._done)
        return (i for i in range(int(self.manifest["runs_total"])) if i not in done)

    def forget_failed(self) -> frozenset[int]:
        """Drop the stored rows of the failed runs, so that they are pending again (retry).

        Each committed runs part holding a row of a failed run is rewritten without those rows
        (to a temporary name, then renamed over the part: whole or unchanged), keeping its batch
        record; a part left with no rows is removed. The batch's solitons part is untouched: a
        failed run has no solitons rows (a run with solitons rows in its batch is kept as it is).
        Every row of such a run goes, duplicates included, so no older row takes its place. After
        a crash midway each failed run is either still stored as failed or pending: both states
        are whole, and the next retry drops what is left.

        Returns
        -------
        frozenset of int
            The runs now pending.
        """
        targets = set(self._failed)
        if not targets:
            return frozenset()
        self._check = None
        check, tables = _scan(self.out, self.manifest, keep=True)
        for solitons in (sol for _, sol in tables.values() if sol is not None):
            targets -= set(solitons.column("run_id").to_pylist())
        for seq, (runs, _) in sorted(tables.items()):
            ids = runs.column("run_id").to_pylist()
            drop = [rid in targets for rid in ids]
            if not any(drop):
                continue
            path = self.out / "runs" / f"part-{seq:06d}.parquet"
            if all(drop):
                try:
                    path.unlink()
                except OSError as exc:
                    raise io_error(path, exc, "remove the part of failed runs") from None
                _fsync_dir(path.parent)
            else:
                kept = runs.filter(pa.array([not d for d in drop]))
                write_atomic(path, _parquet_bytes(kept))
        self._done -= targets
        self._failed -= targets
        return frozenset(targets & set(check.kept))

    # -- writing -------------------------------------------------------------------------------
    def write(self, results: Sequence[RunResult]) -> int:
        """Store a batch of results atomically; runs already stored are dropped. Returns the count.

        Order matters for crash safety: the frames pack, then the solitons part, then the runs
        part, which commits the batch and records the solitons part's row count, size and
        checksum.

        Raises
        ------
        KdvsweepError
            A file could not be written (full disk...): nothing of the batch is committed.
        """
        fresh: dict[int, RunResult] = {}
        total = int(self.manifest["runs_total"])
        for res in results:
            if not 0 <= res.run_id < total:
                raise ConfigError(
                    f"{self.out}: result of run_id {res.run_id}; expected a run of this sweep "
                    f"(0..{total - 1})"
                )
            if res.run_id not in self._done and res.run_id not in fresh:
                fresh[res.run_id] = res
        if not fresh:
            return 0
        self._check = None
        seq = self._next
        self._next = seq + 1  # never reused in this session, even if this batch fails
        name = f"part-{seq:06d}.parquet"
        members = []
        for rid, res in fresh.items():
            if res.frames is not None and res.frame_times is not None:
                t_name, u_name = frame_members(rid)
                members += [
                    (f"{t_name}.npy", _npy(res.frame_times)),
                    (f"{u_name}.npy", _npy(res.frames)),
                ]
        framed = _write_pack(frames_pack(self.out, seq), members) // 2 if members else 0
        soliton_rows = [row for res in fresh.values() for row in res.soliton_rows]
        runs = _arrow_table([res.run_row for res in fresh.values()], self.layout.schema("runs"))
        data = b""
        if soliton_rows:
            data = _parquet_bytes(_arrow_table(soliton_rows, self.layout.schema("solitons")))
            write_atomic(self.out / "solitons" / name, data, sync_dir=False)
        record = {
            "rows": len(soliton_rows),
            "bytes": len(data),
            "sha256": hashlib.sha256(data).hexdigest(),
            "frames": framed,
        }
        runs = runs.replace_schema_metadata({_RECORD_KEY: json.dumps(record).encode()})
        # Everything of the batch is durable before the runs part that commits it.
        _fsync_dir(self.out / "frames")
        _fsync_dir(self.out / "solitons")
        write_atomic(self.out / "runs" / name, _parquet_bytes(runs))
        self._done.update(fresh)
        self._failed.update(rid for rid, res in fresh.items() if not res.ok)
        return len(fresh)

    # -- compaction ----------------------------------------------------------------------------
    def compact(
        self,
        rows: int = COMPACT_ROWS,
        size: int = COMPACT_BYTES,
        frames_size: int = COMPACT_FRAMES_BYTES,
    ) -> Compaction:
        """Merge runs of small consecutive batches into large ones (see :func:`compact`).

        Each group of consecutive batches (at most ``rows`` runs rows, ``size`` bytes of Parquet,
        ``frames_size`` bytes of frames) becomes one batch, written like any other: its frames
        pack, then its solitons part, then its runs part, which commits it and records in its
        batch record the batches it replaces. From that rename on, readers read the merged part
        instead of those batches, whose files are then removed. A crash at any point leaves
        either the old batches (the merged files are left-overs of an uncommitted batch, removed
        when the store is next opened for writing) or the merged part (the replaced files are
        removed when the store is next opened for writing, or by the next compaction); readers
        count every run once in both states.
        """
        start = time.perf_counter()
        before = store_files(self.out)
        check = self._check
        if check is None:  # written since it was opened
            check, _ = _scan(self.out, self.manifest, keep=False)
            self._drop(check.superseded)
            self._clean_leftovers()
        self._check = None
        old_frames = _old_frames(self.out)
        per_batch: dict[int, int] = {}
        for seq in check.kept.values():
            per_batch[seq] = per_batch.get(seq, 0) + 1
        framed_old: dict[int, int] = {}
        for rid, path in old_frames.items():
            batch = check.kept.get(rid)
            if batch is not None:
                framed_old[batch] = framed_old.get(batch, 0) + _size(path)
        sizes = []
        for seq in check.live:
            name = f"part-{seq:06d}.parquet"
            parquet = _size(self.out / "runs" / name) + _size(self.out / "solitons" / name)
            frames = _size(frames_pack(self.out, seq)) + framed_old.get(seq, 0)
            sizes.append((seq, per_batch.get(seq, 0), parquet, frames))
        groups = _groups(sizes, rows, size, frames_size)
        replaced = 0
        merged = 0
        for group in groups:
            try:
                self._merge(group, check, old_frames)
            except _Broken:  # changed on disk since the scan: left as it is (checked next time)
                continue
            merged += 1
            replaced += len(group)
        self._drop_migrated_frames(check, old_frames)
        return Compaction(
            self.out,
            before,
            store_files(self.out),
            merged,
            replaced,
            time.perf_counter() - start,
        )

    def needs_compaction(self, parts: int = COMPACT_AT_END) -> bool:
        """True when the runs table has more than ``parts`` parts (the farm's rule)."""
        return len(_committed_parts(self.out)) > parts

    def _merge(self, group: Sequence[int], check: StoreCheck, old_frames: dict[int, Path]) -> int:
        """Write the batches ``group`` (consecutive live batches) as one merged batch; returns
        its sequence number. Only the rows that count (the kept row of each run) are copied."""
        lay = self.layout
        seq = self._next
        self._next = seq + 1
        name = f"part-{seq:06d}.parquet"
        run_tables, sol_tables, sources = [], [], []
        replaces: set[int] = set()
        order = None
        for old in group:
            runs, solitons, record = _batch(
                self.out, old, self.out / "runs" / f"part-{old:06d}.parquet", lay
            )
            replaces.add(old)
            replaces.update(record.get("replaces", ()))
            own = record.get("order", old)
            order = own if order is None else min(order, own)
            taken: set[int] = set()
            mask = []
            for rid in runs.column("run_id").to_pylist():
                mine = rid is not None and check.kept.get(rid) == old and rid not in taken
                if mine:
                    taken.add(rid)
                mask.append(mine)
            run_tables.append(
                runs.filter(pa.array(mask, type=pa.bool_())).replace_schema_metadata(None)
            )
            if solitons is not None:
                keep = pa.array(
                    [r in taken for r in solitons.column("run_id").to_pylist()], type=pa.bool_()
                )
                sol_tables.append(solitons.filter(keep).replace_schema_metadata(None))
            sources.append((old, sorted(taken)))
        framed: list[int] = []
        pack = frames_pack(self.out, seq)
        if any(_size(frames_pack(self.out, old)) for old in group) or any(
            rid in old_frames for _, ids in sources for rid in ids
        ):
            _write_pack(pack, _copy_frames(self.out, sources, old_frames, framed))
            if not framed:
                pack.unlink(missing_ok=True)
        _compaction_step("wrote the frames pack")
        data = b""
        solitons_table = pa.concat_tables(sol_tables) if sol_tables else None
        if solitons_table is not None and solitons_table.num_rows:
            data = _parquet_bytes(solitons_table)
            write_atomic(self.out / "solitons" / name, data, sync_dir=False)
        _compaction_step("wrote the solitons part")
        record = {
            "rows": 0 if not data else solitons_table.num_rows,  # type: ignore[union-attr]
            "bytes": len(data),
            "sha256": hashlib.sha256(data).hexdigest(),
            "frames": len(framed),
            "replaces": sorted(replaces),
            "order": order,
        }
        merged = pa.concat_tables(run_tables)
        merged = merged.replace_schema_metadata({_RECORD_KEY: json.dumps(record).encode()})
        _fsync_dir(self.out / "frames")
        _fsync_dir(self.out / "solitons")
        write_atomic(self.out / "runs" / name, _parquet_bytes(merged))  # the commit
        _compaction_step("committed the merged part")
        self._drop(group)
        for rid in framed:
            if rid in old_frames:
                old_frames.pop(rid).unlink(missing_ok=True)
                _compaction_step(f"removed frames/run_{rid:06d}.npz")
        return seq

    def _drop_migrated_frames(self, check: StoreCheck, old_frames: dict[int, Path]) -> None:
        """Remove frames files of the older layout whose run's frames are in its batch's pack
        (left by a compaction interrupted after it committed)."""
        names: dict[int, set[str]] = {}
        for rid, path in list(old_frames.items()):
            seq = check.kept.get(rid)
            if seq is None:
                continue
            if seq not in names:
                names[seq] = _pack_names(frames_pack(self.out, seq))
            if f"{frame_members(rid)[1]}.npy" in names[seq]:
                path.unlink(missing_ok=True)

    # -- reference runs ------------------------------------------------------------------------
    def has_reference(self, digest: str) -> bool:
        """True when the reference run of this digest is stored."""
        return digest in self._references

    def reference(self, digest: str) -> ReferenceTrack | None:
        """The stored reference run of this digest, or None when it is not stored (or no longer
        whole: it is then computed again)."""
        path = self._references.get(digest)
        if path is None:
            return None
        if self._reference_part is None or self._reference_part[0] != path:
            try:  # one part at a time in memory: a sweep asks for its references in order
                self._reference_part = (path, _read_references(path))
            except (_Broken, FileNotFoundError):
                self._reference_part = (path, {})
        found = self._reference_part[1].get(digest)
        if found is None:
            del self._references[digest]
        return found

    def write_references(self, results: Sequence[ReferenceResult]) -> int:
        """Store the computed reference runs not stored yet (failed ones are not stored: they are
        computed again when a run needs them); one part, written atomically. Returns the count.
        """
        fresh: dict[str, ReferenceResult] = {}
        for res in results:
            if res.track.ok and res.digest not in self._references and res.digest not in fresh:
                fresh[res.digest] = res
        if not fresh:
            return 0
        seq = self._next_reference
        self._next_reference = seq + 1
        columns: dict[str, list[Any]] = {name: [] for name in REFERENCE_SCHEMA.names}
        for res in fresh.values():
            tr = res.track
            columns["digest"].append(res.digest)
            columns["key"].append(res.key)
            for name, values in (("times", tr.times), ("x", tr.x), ("height", tr.height)):
                columns[name].append(np.asarray(values, dtype=np.float64))
            columns["last"].append(np.asarray(tr.last, dtype=np.float64))
            columns["wall_time"].append(float(res.wall_time))
        table = pa.Table.from_pydict(columns, schema=REFERENCE_SCHEMA)
        path = self.out / REFERENCES / f"part-{seq:06d}.parquet"
        try:
            path.parent.mkdir(exist_ok=True)
        except OSError as exc:
            raise io_error(path.parent, exc, "create the folder") from None
        write_atomic(path, _parquet_bytes(table))
        for digest in fresh:
            self._references[digest] = path
        return len(fresh)

    # -- helpers -------------------------------------------------------------------------------
    def _set_aside(self, seq: int) -> None:
        """Uncommit a damaged batch: rename its runs part, then its solitons part."""
        name = f"part-{seq:06d}.parquet"
        for table in TABLES:  # runs first: once it is gone the batch is not committed
            path = self.out / table / name
            if path.exists():
                try:
                    os.replace(path, path.with_name(name + DAMAGED_SUFFIX))
                except OSError as exc:
                    raise io_error(path, exc, "set aside the damaged part") from None
                _fsync_dir(path.parent)

    def _drop(self, batches: Iterable[int]) -> None:
        """Remove the files of batches a merged part replaces: the runs part first (the others
        are then left-overs of an uncommitted batch), then the solitons part and frames pack."""
        for seq in batches:
            name = f"part-{seq:06d}.parquet"
            for path in (
                self.out / "runs" / name,
                self.out / "runs" / (name + DAMAGED_SUFFIX),
                self.out / "solitons" / name,
                self.out / "solitons" / (name + DAMAGED_SUFFIX),
                frames_pack(self.out, seq),
            ):
                try:
                    path.unlink(missing_ok=True)
                except OSError as exc:
                    raise io_error(path, exc, "remove a part replaced by compaction") from None
                _compaction_step(f"removed {path.parent.name}/{path.name}")
        for folder in FOLDERS:
            _fsync_dir(self.out / folder)

    def _clean_leftovers(self) -> None:
        """Remove temporary files, and the solitons parts and frames packs of batches that never
        committed."""
        committed = _committed_parts(self.out)
        for folder in (self.out, *(self.out / t for t in (*FOLDERS, REFERENCES))):
            if not folder.is_dir():
                continue
            for entry in folder.iterdir():
                if entry.name.startswith(_TMP_PREFIX):
                    entry.unlink(missing_ok=True)
        for seq, path in part_files(self.out / "solitons").items():
            if seq not in committed:
                path.unlink(missing_ok=True)
        for seq, path in _pack_files(self.out / "frames").items():
            if seq not in committed:
                path.unlink(missing_ok=True)


#: Called after each step of a compaction with what was done (tests interrupt it there).
_COMPACTION_HOOK: Callable[[str], None] | None = None


def _compaction_step(what: str) -> None:
    if _COMPACTION_HOOK is not None:
        _COMPACTION_HOOK(what)


@dataclass(frozen=True)
class Compaction:
    """What :func:`compact` did.

    Attributes
    ----------
    out
        The store folder.
    before, after
        Files per folder (``runs``, ``solitons``, ``frames``) before and after.
    merged
        Merged parts written.
    replaced
        Batches they replace (removed).
    elapsed
        Seconds.
    """

    out: Path
    before: dict[str, int]
    after: dict[str, int]
    merged: int
    replaced: int
    elapsed: float


def store_files(out: str | os.PathLike[str]) -> dict[str, int]:
    """Files per folder of a store: parts of ``runs`` and ``solitons``, files of ``frames``."""
    out = Path(out)
    frames = 0
    with contextlib.suppress(OSError):
        frames = sum(
            1
            for e in (out / "frames").iterdir()
            if _PACK.match(e.name) or _OLD_FRAMES.match(e.name)
        )
    return {
        "runs": len(part_files(out / "runs")),
        "solitons": len(part_files(out / "solitons")),
        "frames": frames,
    }


def compact(
    out: str | os.PathLike[str],
    rows: int = COMPACT_ROWS,
    size: int = COMPACT_BYTES,
    frames_size: int = COMPACT_FRAMES_BYTES,
) -> Compaction:
    """Merge the small parts of a store into large ones, atomically and resumably.

    Consecutive batches are merged into parts of at most ``rows`` runs rows, ``size`` bytes of
    Parquet (runs and solitons parts) and ``frames_size`` bytes of frames (one frames pack per
    merged part). Only the rows that count are copied (the first stored row of each run), with
    their solitons rows and frames; each merged part carries a batch record like any batch (the
    solitons part's rows, size and SHA-256), so the store's checks hold for it. Damaged batches
    are set aside first (their runs count as pending, as when a sweep resumes). The writer's lock
    is held throughout. Interrupted at any point, the store reads the same, and the next
    compaction or run into it finishes or undoes what was left.

    Raises
    ------
    ConfigError
        ``out`` is not a store this kdvsweep reads.
    StoreBusyError
        Another process is writing to it.
    """
    for name, value in (("rows", rows), ("size", size), ("frames_size", frames_size)):
        if not (isinstance(value, int) and value > 0):
            raise ConfigError(f"compact: {name} is {value!r}; expected a positive whole number")
    with Store.existing(out) as store:
        return store.compact(rows, size, frames_size)


def _size(path: Path) -> int:
    try:
        return path.stat().st_size
    except OSError:
        return 0


def _old_frames(out: Path) -> dict[int, Path]:
    """Frames files of the older layout (one per run), by run id."""
    found = {}
    with contextlib.suppress(OSError):
        for entry in (out / "frames").iterdir():
            m = _OLD_FRAMES.match(entry.name)
            if m:
                found[int(m.group(1))] = entry
    return found


def _pack_names(path: Path) -> set[str]:
    """The members of a frames pack (empty when it is absent or unreadable)."""
    try:
        with zipfile.ZipFile(path) as zf:
            return set(zf.namelist())
    except (OSError, zipfile.BadZipFile, ValueError):
        return set()


def _groups(
    sizes: Sequence[tuple[int, int, int, int]], rows: int, size: int, frames_size: int
) -> list[list[int]]:
    """Consecutive batches ``(seq, rows, parquet bytes, frames bytes)`` grouped up to the
    targets; only groups of two batches or more are worth merging."""
    groups: list[list[int]] = []
    current: list[int] = []
    total = [0, 0, 0]
    for seq, n, parquet, frames in sizes:
        grown = (total[0] + n, total[1] + parquet, total[2] + frames)
        if current and (grown[0] > rows or grown[1] > size or grown[2] > frames_size):
            groups.append(current)
            current, grown = [], (n, parquet, frames)
        current.append(seq)
        total = list(grown)
    groups.append(current)
    return [g for g in groups if len(g) > 1]


def _copy_frames(
    out: Path,
    sources: Sequence[tuple[int, Sequence[int]]],
    old_frames: Mapping[int, Path],
    framed: list[int],
) -> Iterator[tuple[str, bytes]]:
    """The members of a merged frames pack, one run at a time: each run's frames from its
    batch's pack, or from its file of the older layout; a run whose frames are not readable
    (damaged) is left out. ``framed`` receives the runs copied."""
    for old, ids in sources:
        try:
            zin: zipfile.ZipFile | None = zipfile.ZipFile(frames_pack(out, old))
        except (OSError, zipfile.BadZipFile, ValueError):
            zin = None
        try:
            names = set(zin.namelist()) if zin is not None else set()
            for rid in ids:
                t_name, u_name = (f"{m}.npy" for m in frame_members(rid))
                found = None
                try:
                    if zin is not None and t_name in names and u_name in names:
                        found = (zin.read(t_name), zin.read(u_name))
                    elif rid in old_frames:
                        with zipfile.ZipFile(old_frames[rid]) as zold:
                            found = (zold.read("t.npy"), zold.read("u.npy"))
                except (OSError, zipfile.BadZipFile, KeyError, ValueError):
                    found = None
                if found is not None:
                    yield t_name, found[0]
                    yield u_name, found[1]
                    framed.append(rid)
        finally:
            if zin is not None:
                zin.close()


def _read_references(path: Path, wanted: set[str] | None = None) -> dict[str, ReferenceTrack]:
    """The whole reference runs of one part (those of ``wanted`` digests, or all), each checked:
    its key hashes to its digest and its arrays agree in length. Raises :class:`_Broken` for a
    part that is not readable Parquet of :data:`REFERENCE_SCHEMA`."""
    from ..analysis.tracks import ReferenceTrack

    table = _parse(_read_bytes(path), REFERENCE_SCHEMA)
    out: dict[str, ReferenceTrack] = {}
    for row in table.to_pylist():
        digest = row["digest"]
        if wanted is not None and digest not in wanted:
            continue
        times, x, height = (
            np.asarray(row[k] or [], dtype=np.float64) for k in ("times", "x", "height")
        )
        if (
            not isinstance(digest, str)
            or not isinstance(row["key"], str)
            or key_digest(row["key"]) != digest
            or not times.size
            or not (times.shape == x.shape == height.shape)
        ):
            continue  # not what its digest names: computed again when needed
        last = np.asarray(row["last"] or [], dtype=np.float64)
        out[digest] = ReferenceTrack(times, x, height, last)
    return out


def _reference_index(folder: Path, set_aside: bool) -> tuple[dict[str, Path], list[str]]:
    """Digest -> part file of the stored reference runs, and one line per part not whole (set
    aside as ``*.damaged`` when ``set_aside``: its references are computed again)."""
    index: dict[str, Path] = {}
    notes: list[str] = []
    for path in part_files(folder).values():
        try:
            table = _parse(_read_bytes(path), REFERENCE_SCHEMA)
        except (_Broken, FileNotFoundError) as exc:
            notes.append(f"{REFERENCES}/{path.name}: {exc}; its reference runs are computed again")
            if set_aside:
                with contextlib.suppress(OSError):
                    os.replace(path, path.with_name(path.name + DAMAGED_SUFFIX))
            continue
        for digest in table.column("digest").to_pylist():
            if isinstance(digest, str):
                index.setdefault(digest, path)
    return index, notes


def read_references(out: str | os.PathLike[str]) -> dict[str, ReferenceTrack]:
    """The whole reference runs stored in ``out``, by digest (parts not whole are left out)."""
    found: dict[str, ReferenceTrack] = {}
    for path in part_files(Path(out) / REFERENCES).values():
        try:
            for digest, track in _read_references(path).items():
                found.setdefault(digest, track)
        except (_Broken, FileNotFoundError):
            continue
    return found


def _is_leftover(entry: Path) -> bool:
    """A file a store attempt leaves before its manifest: the lock, temporary files, empty
    table folders."""
    if entry.name == LOCK or entry.name.startswith(_TMP_PREFIX):
        return True
    if entry.name in FOLDERS and entry.is_dir():
        return not any(entry.iterdir())
    return False


def _undo_new(out: Path, created: bool, had_lock: bool) -> None:
    """Remove what a failed first open left in ``out``: temporary files, empty table folders, the
    lock file if this open made it, the folder if this open made it (best effort)."""
    with contextlib.suppress(OSError):
        for entry in out.iterdir():
            if entry.name.startswith(_TMP_PREFIX):
                entry.unlink(missing_ok=True)
            elif entry.name in FOLDERS and entry.is_dir() and not any(entry.iterdir()):
                entry.rmdir()
        if not had_lock:
            (out / LOCK).unlink(missing_ok=True)
        if created:
            out.rmdir()


def check_parameter_names(sweep: Sweep) -> None:
    """Refuse swept parameters named like a column of the tables (the column would be ambiguous);
    the model's descriptive columns (``equation``, ``n``, ``dt``...) may be swept by name."""
    reserved = reserved_names()
    clash = sorted(set(sweep.parameters) & reserved)
    if clash:
        raise ConfigError(
            f"{sweep.path}: swept parameter name(s) {clash} are names of result columns; "
            f"expected other names (reserved: {', '.join(sorted(reserved))})"
        )


def new_manifest(sweep: Sweep) -> dict[str, Any]:
    """The manifest of a new store for ``sweep``."""
    return {
        "format": STORE_FORMAT,
        "format_version": STORE_VERSION,
        "sweep_name": sweep.name,
        "sweep_file": str(sweep.path),
        "digest": sweep.digest,
        "package_version": importlib.metadata.version("kdvsweep"),
        "created": dt.datetime.now(dt.UTC).isoformat(timespec="seconds"),
        "parameters": list(sweep.parameters),
        "runs_total": len(sweep.runs),
        "layout": sweep.layout.to_json(),
        "sweep_text": sweep.text,
    }


class _Lock:
    """An exclusive advisory lock on ``OUT/.lock``; the kernel drops it if the process dies.

    A busy lock is retried for :data:`LOCK_WAIT` seconds (a process that only checks the folder
    holds it for a moment). A lock file removed by a failed first open while this process waited
    is not the store's lock any more: the lock is taken again on the file now at the path.
    """

    def __init__(self, path: Path) -> None:
        deadline = time.monotonic() + LOCK_WAIT
        while True:
            try:
                self._fh = open(path, "a+b")  # held open for the lifetime of the store
            except OSError as exc:
                raise io_error(path.parent, exc, "take the store's lock") from None
            if fcntl is not None:
                try:
                    fcntl.flock(self._fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
                except OSError as exc:
                    self._fh.close()
                    if time.monotonic() < deadline:
                        time.sleep(0.05)
                        continue
                    raise StoreBusyError(
                        f"{path.parent}: another kdvsweep process is writing to this store; "
                        "expected it to be idle (wait for it or stop it)"
                    ) from exc
            try:
                same = os.stat(path).st_ino == os.fstat(self._fh.fileno()).st_ino
            except OSError:
                same = False
            if same:
                return
            self._fh.close()
            if time.monotonic() >= deadline:
                raise StoreBusyError(
                    f"{path.parent}: another kdvsweep process is creating this store; "
                    "expected it to be idle (try again)"
                )

    def close(self) -> None:
        with contextlib.suppress(OSError):
            self._fh.close()


def _take_lock(out: Path) -> _Lock:
    return _Lock(out / LOCK)


def iter_parts(out: str | os.PathLike[str], table: str) -> Iterator[Path]:
    """The committed part files of one table, in batch order (for tools that stream); parts a
    merged part replaces are left out (their batch records are read, not their rows)."""
    committed = _committed_parts(Path(out))
    replaced: set[int] = set()
    for path in committed.values():
        try:
            record = _record(pq.read_schema(path))
        except (_Broken, OSError, pa.ArrowException):
            continue
        if record is not None:
            replaced.update(record.get("replaces", ()))
    folder = Path(out) / table
    for seq, path in part_files(folder).items():
        if seq in committed and seq not in replaced:
            yield path


__all__ = [
    "COMPACT_AT_END",
    "COMPACT_BYTES",
    "COMPACT_FRAMES_BYTES",
    "COMPACT_ROWS",
    "DAMAGED_SUFFIX",
    "FRAMES_SUFFIX",
    "MANIFEST",
    "REFERENCES",
    "REPAIR_ADVICE",
    "STORE_FORMAT",
    "STORE_VERSION",
    "Compaction",
    "Damage",
    "Store",
    "StoreBusyError",
    "StoreCheck",
    "StoreContents",
    "check_parameter_names",
    "check_store",
    "compact",
    "frame_members",
    "frames_pack",
    "frames_path",
    "io_error",
    "iter_parts",
    "layout",
    "new_manifest",
    "read_manifest",
    "read_references",
    "read_store",
    "read_table",
    "store_files",
]
