"""The output folder of a sweep: a manifest, Parquet part files, optional frames; resume-safe.

Layout of a store ``OUT``::

    OUT/manifest.json              the sweep file text, its digest, package version, creation time,
                                   format version and the layout of the tables' columns
    OUT/runs/part-000000.parquet   rows of the runs table, one part per batch of completed runs
    OUT/solitons/part-000000.parquet   rows of the solitons table for the same batch
    OUT/frames/run_000017.npz      sub-sampled frames of one run (arrays ``t`` and ``u``)
    OUT/.lock                      held (flock) by the one process writing

Exactly once, simply: the client process is the only writer (dask workers return rows, never write
files). Every file is written to a temporary name in its own folder, fsync'ed, then renamed with
``os.replace``, so a file is either whole or absent even after SIGKILL or a power cut. A batch is
committed by its runs part, which is written last: solitons parts and frames whose runs part is
missing are leftovers of an interrupted batch and are ignored (and overwritten when the runs are
redone). Readers keep the first stored row of each ``run_id``. The manifest ties the folder to one
sweep definition by its digest, so another sweep cannot be mixed in.

Every part of a table is written with the one Arrow schema of :mod:`kdvsweep.columns` for the
sweep's :class:`~kdvsweep.columns.Layout` (kept in the manifest), whatever the values of the batch.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import importlib.metadata
import io
import json
import os
import re
from collections.abc import Iterable, Iterator, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from ..columns import Layout, reserved_names
from ..exceptions import ConfigError, StoreBusyError
from .config import RunSpec, Sweep
from .runner import RunResult

try:  # advisory lock; absent on Windows, where a second writer is simply not detected
    import fcntl
except ImportError:  # pragma: no cover
    fcntl = None  # type: ignore[assignment]

MANIFEST = "manifest.json"
STORE_FORMAT = "kdvsweep-store"
#: Version 2: typed Parquet schema in every part, the model's coefficients in the runs table.
STORE_VERSION = 2
TABLES = ("runs", "solitons")
_PART = re.compile(r"^part-(\d+)\.parquet$")
_TMP_PREFIX = ".tmp-"


#: Transitional name for :class:`~kdvsweep.sweep.config.Sweep` (until the farm imports Sweep).
SweepLike = Sweep


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


def write_atomic(path: Path, data: bytes, sync_dir: bool = True) -> None:
    """Write ``data`` to ``path`` so that ``path`` is either the old file, absent, or whole.

    Temporary file in the same folder (a rename across file systems is not atomic), fsync, rename.
    ``sync_dir=False`` leaves the fsync of the folder (which makes the rename durable) to the
    caller, who can then do it once for many files.
    """
    tmp = path.with_name(f"{_TMP_PREFIX}{os.getpid()}-{path.name}")
    with open(tmp, "wb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)
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
    for field in schema:
        values = [row.get(field.name) for row in rows]
        try:
            arrays.append(pa.array(values, type=field.type, from_pandas=True))
        except (pa.ArrowInvalid, pa.ArrowTypeError) as exc:
            raise ConfigError(
                f"store: column {field.name!r} holds {values[:3]!r}...; expected {field.type} ({exc})"
            ) from None
    return pa.Table.from_arrays(arrays, schema=schema)


def _parquet_bytes(table: pa.Table) -> bytes:
    buf = io.BytesIO()
    pq.write_table(table, buf)
    return buf.getvalue()


def part_files(folder: Path) -> dict[int, Path]:
    """The whole part files of one table folder, by sequence number."""
    if not folder.is_dir():
        return {}
    found = {}
    for entry in folder.iterdir():
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
        raise ConfigError(f"{path}: unreadable manifest ({exc}); expected JSON") from exc
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
    return manifest


def layout(manifest: Mapping[str, Any]) -> Layout:
    """The column layout recorded in a store's manifest."""
    return Layout.from_json(manifest.get("layout", {}))


def _committed_parts(out: Path) -> dict[int, Path]:
    return part_files(out / "runs")


def read_table(out: str | os.PathLike[str], table: str) -> pd.DataFrame:
    """One table of a store, deduplicated by run (first stored row wins) and sorted.

    Parts of the solitons table count only when the runs part of the same batch exists.
    """
    if table not in TABLES:
        raise ConfigError(f"read_table: table {table!r}; expected one of {TABLES}")
    out = Path(out)
    schema = layout(read_manifest(out)).schema(table)
    committed = _committed_parts(out)
    if table == "runs":
        files = list(committed.items())
    else:
        parts = part_files(out / "solitons")
        files = [(seq, p) for seq, p in parts.items() if seq in committed]
    if not files:
        return schema.empty_table().to_pandas()
    tables = [pq.read_table(path, schema=schema) for _, path in files]
    # The batch of each row, beside the data (never a column: any name could be a parameter's).
    part = np.concatenate(
        [
            np.full(t.num_rows, seq, dtype=np.int64)
            for (seq, _), t in zip(files, tables, strict=True)
        ]
    )
    data = pa.concat_tables(tables).to_pandas()
    run_id = data["run_id"].to_numpy()
    if table == "runs":
        order = np.argsort(part, kind="stable")  # by batch, then as stored
        first = pd.Series(run_id[order]).duplicated(keep="first").to_numpy()
        keep = np.sort(order[~first])
        data = data.iloc[keep].sort_values("run_id", kind="stable")
    else:
        # The solitons of a run come from the batch of its kept runs row (the first).
        kept: dict[int, int] = {}
        for seq, path in committed.items():
            for rid in pq.read_table(path, columns=["run_id"]).column("run_id").to_pylist():
                kept.setdefault(int(rid), seq)
        mask = part == np.array([kept.get(int(r), -1) for r in run_id], dtype=np.int64)
        data = data.iloc[np.flatnonzero(mask)].sort_values(["run_id", "soliton"], kind="stable")
    return data.reset_index(drop=True)


def frames_path(out: str | os.PathLike[str], run_id: int) -> Path:
    """Where the frames of one run are stored."""
    return Path(out) / "frames" / f"run_{int(run_id):06d}.npz"


class Store:
    """The writer of one sweep's output folder. Open with :meth:`open`; one writer at a time.

    Parameters are set by :meth:`open`; use it as a context manager to release the lock.
    """

    def __init__(self, out: Path, manifest: dict[str, Any], lock: Any) -> None:
        self.out = out
        self.manifest = manifest
        self.layout = layout(manifest)
        self._lock = lock
        committed = _committed_parts(out)
        every = set(committed) | set(part_files(out / "solitons"))
        self._next = (max(every) + 1) if every else 0
        self._done, self._failed = self._scan_done(committed.values())

    # -- opening -------------------------------------------------------------------------------
    @classmethod
    def open(cls, out: str | os.PathLike[str], sweep: Sweep) -> Store:
        """Open ``out`` for ``sweep``: create it, or resume it if it holds the same sweep.

        Raises
        ------
        ConfigError
            ``out`` is a file; or a non-empty folder that is not a store; or a store of another
            sweep (digest differs) or of another format version. Nothing is written then.
        StoreBusyError
            Another process is writing to it.
        """
        out = Path(out)
        check_parameter_names(sweep)
        if out.exists() and not out.is_dir():
            raise ConfigError(
                f"{out}: exists and is not a folder; expected a folder for the results"
            )
        if out.is_dir() and (out / MANIFEST).exists():
            manifest = read_manifest(out)
            if manifest.get("digest") != sweep.digest:
                raise ConfigError(
                    f"{out}: holds the results of sweep {manifest.get('sweep_name')!r} "
                    f"(digest {str(manifest.get('digest'))[:12]}), not of {sweep.path} "
                    f"(digest {sweep.digest[:12]}); choose another output folder or remove this one"
                )
        elif out.is_dir() and any(out.iterdir()):
            raise ConfigError(
                f"{out}: folder is not empty and is not a kdvsweep store (no {MANIFEST}); "
                "expected a new or empty folder"
            )
        else:
            out.mkdir(parents=True, exist_ok=True)
            manifest = new_manifest(sweep)
            write_atomic(out / MANIFEST, (json.dumps(manifest, indent=2) + "\n").encode())
        lock = _take_lock(out)
        for table in (*TABLES, "frames"):
            (out / table).mkdir(exist_ok=True)
        store = cls(out, manifest, lock)
        store._clean_leftovers()
        return store

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

    # -- writing -------------------------------------------------------------------------------
    def write(self, results: Sequence[RunResult]) -> int:
        """Store a batch of results atomically; runs already stored are dropped. Returns the count.

        Order matters for crash safety: frames, then the solitons part, then the runs part, which
        commits the batch.
        """
        fresh: dict[int, RunResult] = {}
        for res in results:
            if res.run_id not in self._done and res.run_id not in fresh:
                fresh[res.run_id] = res
        if not fresh:
            return 0
        seq = self._next
        for res in fresh.values():
            if res.frames is not None and res.frame_times is not None:
                buf = io.BytesIO()
                np.savez(buf, t=res.frame_times, u=res.frames)
                write_atomic(frames_path(self.out, res.run_id), buf.getvalue(), sync_dir=False)
        soliton_rows = [row for res in fresh.values() for row in res.soliton_rows]
        name = f"part-{seq:06d}.parquet"
        runs = _arrow_table([res.run_row for res in fresh.values()], self.layout.schema("runs"))
        if soliton_rows:
            data = _parquet_bytes(_arrow_table(soliton_rows, self.layout.schema("solitons")))
            write_atomic(self.out / "solitons" / name, data, sync_dir=False)
        # Everything of the batch is durable before the runs part that commits it.
        _fsync_dir(self.out / "frames")
        _fsync_dir(self.out / "solitons")
        write_atomic(self.out / "runs" / name, _parquet_bytes(runs))
        self._next = seq + 1
        self._done.update(fresh)
        self._failed.update(rid for rid, res in fresh.items() if not res.ok)
        return len(fresh)

    # -- helpers -------------------------------------------------------------------------------
    @staticmethod
    def _scan_done(paths: Iterable[Path]) -> tuple[set[int], set[int]]:
        done: set[int] = set()
        failed: set[int] = set()
        for path in paths:
            part = pq.read_table(path, columns=["run_id", "status"])
            for rid, status in zip(
                part.column("run_id").to_pylist(), part.column("status").to_pylist(), strict=True
            ):
                if rid not in done and status != "ok":
                    failed.add(int(rid))
                done.add(int(rid))
        return done, failed

    def _clean_leftovers(self) -> None:
        """Remove temporary files and the solitons parts of batches that never committed."""
        committed = _committed_parts(self.out)
        for folder in (self.out, *(self.out / t for t in (*TABLES, "frames"))):
            for entry in folder.iterdir():
                if entry.name.startswith(_TMP_PREFIX):
                    entry.unlink(missing_ok=True)
        for seq, path in part_files(self.out / "solitons").items():
            if seq not in committed:
                path.unlink(missing_ok=True)


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
    """An exclusive advisory lock on ``OUT/.lock``; the kernel drops it if the process dies."""

    def __init__(self, path: Path) -> None:
        self._fh = open(path, "a+b")  # held open for the lifetime of the store
        if fcntl is not None:
            try:
                fcntl.flock(self._fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError as exc:
                self._fh.close()
                raise StoreBusyError(
                    f"{path.parent}: another kdvsweep process is writing to this store; "
                    "expected it to be idle (wait for it or stop it)"
                ) from exc

    def close(self) -> None:
        with contextlib.suppress(OSError):
            self._fh.close()


def _take_lock(out: Path) -> _Lock:
    return _Lock(out / ".lock")


def iter_parts(out: str | os.PathLike[str], table: str) -> Iterator[Path]:
    """The committed part files of one table, in batch order (for tools that stream)."""
    committed = _committed_parts(Path(out))
    folder = Path(out) / table
    for seq, path in part_files(folder).items():
        if seq in committed:
            yield path


__all__ = [
    "MANIFEST",
    "STORE_FORMAT",
    "STORE_VERSION",
    "Store",
    "StoreBusyError",
    "check_parameter_names",
    "frames_path",
    "iter_parts",
    "layout",
    "new_manifest",
    "read_manifest",
    "read_table",
]
