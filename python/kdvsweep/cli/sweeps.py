"""``kdvsweep run``, ``demo``, ``table`` and ``status``: run sweeps and look at their stores."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ..exceptions import ConfigError
from .common import print_frame, say

DEMO_OUT = Path("results") / "demo"


def demo_file() -> Path:
    """The embedded demo sweep: inside the installed package, else in the source checkout."""
    from importlib import resources

    packaged = resources.files("kdvsweep") / "data" / "demo.toml"
    if packaged.is_file():
        return Path(str(packaged))
    checkout = Path(__file__).resolve().parents[3] / "sweeps" / "demo.toml"
    if checkout.is_file():
        return checkout
    raise ConfigError(
        f"demo: sweep file not found; expected kdvsweep/data/demo.toml in the package or {checkout}"
    )


def _farm_options(p: argparse.ArgumentParser) -> None:
    where = p.add_mutually_exclusive_group()
    where.add_argument(
        "--workers", type=int, metavar="N", help="worker processes (default: one per core)"
    )
    where.add_argument(
        "--scheduler", metavar="ADDR", help="use the dask cluster at ADDR (tcp://host:port)"
    )
    where.add_argument(
        "--cluster",
        type=Path,
        metavar="PROFILE",
        help="start workers as batch jobs described by a cluster profile (TOML)",
    )
    p.add_argument(
        "--chunk-seconds",
        type=float,
        default=None,
        metavar="S",
        help="target wall time of one task (default 3)",
    )
    bar = p.add_mutually_exclusive_group()
    bar.add_argument(
        "--progress",
        dest="progress",
        action="store_true",
        default=None,
        help="always show the progress bar",
    )
    bar.add_argument(
        "--no-progress",
        dest="progress",
        action="store_false",
        help="never show the progress bar (default: on a terminal only)",
    )


def register(sub: Any) -> None:
    """Add the commands of this module to the ``kdvsweep`` sub-parsers."""
    p = sub.add_parser(
        "run",
        help="run a sweep; re-running into the same folder resumes it",
        description="Run a sweep file into a store folder; re-running resumes an interrupted run.",
    )
    p.add_argument("file", type=Path, metavar="FILE", help="sweep file (TOML)")
    p.add_argument("--out", type=Path, metavar="DIR", help="store folder (default results/NAME)")
    p.add_argument(
        "--retry-failed",
        action="store_true",
        help="run the runs stored as failed again (their old rows are replaced)",
    )
    _farm_options(p)
    p.set_defaults(handler=lambda args: _run(args, args.file))

    p = sub.add_parser(
        "demo",
        help="the embedded demo sweep (27 pair collisions), then its summary",
        description="Run the embedded demo sweep and print its summary table.",
    )
    p.add_argument(
        "--out",
        type=Path,
        default=DEMO_OUT,
        metavar="DIR",
        help=f"store folder (default {DEMO_OUT})",
    )
    _farm_options(p)
    p.set_defaults(handler=_demo)

    p = sub.add_parser(
        "table",
        help="the summary table of a store (--runs: the runs table)",
        description="Print the summary table of a store, then its failed runs.",
    )
    p.add_argument("out", type=Path, metavar="OUT", help="store folder")
    p.add_argument("--runs", action="store_true", help="print the runs table instead")
    p.set_defaults(handler=lambda args: _table(args.out, runs=args.runs))

    p = sub.add_parser(
        "status",
        help="runs done / failed / pending in a store",
        description="Count the runs done, failed and pending in a store (also while it runs).",
    )
    p.add_argument("out", type=Path, metavar="OUT", help="store folder")
    p.set_defaults(handler=lambda args: _status(args.out))

    p = sub.add_parser(
        "compact",
        help="merge a store's small parts into large ones (atomic, resumable)",
        description=(
            "Merge the small Parquet parts and frames packs of a store into large ones; "
            "an interrupted compaction is finished by the next one (or by a run)."
        ),
    )
    p.add_argument("out", type=Path, metavar="OUT", help="store folder")
    p.add_argument(
        "--rows",
        type=int,
        default=None,
        metavar="N",
        help="at most N runs rows per merged part (default 100000)",
    )
    p.add_argument(
        "--megabytes",
        type=int,
        default=None,
        metavar="MB",
        help="at most MB megabytes of Parquet per merged part (default 64)",
    )
    p.set_defaults(handler=_compact)


def _run(args: argparse.Namespace, file: Path) -> int:
    from ..sweep.config import load_sweep
    from ..sweep.farm import CHUNK_SECONDS, run
    from .check import say_caution, sweep_systems
    from .progress import Progress

    sweep = load_sweep(file)
    say_caution(sweep_systems(sweep), "run")  # physical water-wave units: the hazard caution
    for warning in sweep.warnings:
        say(f"warning: {warning}")
    out = args.out if args.out is not None else Path("results") / sweep.name
    chunk = args.chunk_seconds if args.chunk_seconds is not None else CHUNK_SECONDS
    try:
        with Progress(enabled=args.progress) as bar:
            report = run(
                sweep,
                out,
                workers=args.workers,
                scheduler=args.scheduler,
                cluster=args.cluster,
                on_progress=bar,
                on_message=lambda message: bar.write(f"kdvsweep: {message}"),
                chunk_seconds=chunk,
                retry_failed=bool(getattr(args, "retry_failed", False)),
            )
    except KeyboardInterrupt:
        say(f"interrupted; what finished is stored in {out}; run the same command again to resume")
        return 130
    say(
        f"{report.stored} runs stored now ({report.failed} failed), "
        f"{report.skipped} were already stored, {report.total} in the sweep; "
        f"{report.elapsed:.1f} s"
    )
    if report.compaction is not None:
        _say_compaction(report.compaction)
    return 0


def _files(counts: dict[str, int]) -> str:
    return ", ".join(f"{name} {count}" for name, count in counts.items())


def _say_compaction(done: Any) -> None:
    say(
        f"compacted {done.replaced} parts into {done.merged}; files before: "
        f"{_files(done.before)}; after: {_files(done.after)} ({done.elapsed:.1f} s)"
    )


def _compact(args: argparse.Namespace) -> int:
    from ..sweep.store import COMPACT_BYTES, COMPACT_ROWS, compact

    rows = args.rows if args.rows is not None else COMPACT_ROWS
    size = args.megabytes * 2**20 if args.megabytes is not None else COMPACT_BYTES
    _say_compaction(compact(args.out, rows=rows, size=size))
    return 0


def _demo(args: argparse.Namespace) -> int:
    code = _run(args, demo_file())
    if code:
        return code
    return _table(args.out)


def _damage_lines(res: Any) -> int:
    """Say what a store's check found (one line each); 1 when a batch is damaged, else 0."""
    for line in res.check.ignored:
        say(f"warning: {res.path}/{line}")
    if res.check.damaged:
        say(f"warning: {res.path}: {res.check.summary()}")
        return 1
    return 0


def _table(out: Path, runs: bool = False) -> int:
    from ..results import load

    res = load(out, skip_damaged=True)
    counts = res.counts()
    if runs:
        print_frame(res.runs)
    else:
        summary = res.summary()
        if summary.empty:
            print("(no soliton rows stored)")
        else:
            print_frame(summary)
        failed = res.runs.loc[res.runs["status"] != "ok", ["run_id", "reason"]]
        if len(failed):
            print(f"\nfailed runs ({len(failed)}):")
            print_frame(failed)
    print(
        f"\n{counts['ok']} ok, {counts['failed']} failed, {counts['pending']} pending "
        f"of {counts['total']} runs; results in {out.resolve()}"
    )
    return _damage_lines(res)


def _first_line(text: str, limit: int = 100) -> str:
    line = (text.splitlines() or [""])[0]
    return line if len(line) <= limit else line[: limit - 3] + "..."


def _status(out: Path) -> int:
    # The manifest and the runs parts' checks only (pyarrow): no pandas, no analysis.
    from collections import Counter

    from ..sweep.store import check_store, read_manifest

    manifest = read_manifest(out)
    check = check_store(out)
    failed = len(check.failed)
    ok = len(check.kept) - failed
    print(f"sweep   {manifest.get('sweep_name')} ({manifest.get('sweep_file')})")
    print(f"store   {out.resolve()}")
    print(f"done    {ok}")
    print(f"failed  {failed}")
    print(f"pending {check.total - ok - failed}")
    print(f"total   {check.total}")
    if failed:
        kinds = Counter((check.failures[rid][0] or "other") for rid in sorted(check.failed))
        example: dict[str, str] = {}
        for rid in sorted(check.failed):
            example.setdefault(check.failures[rid][0] or "other", check.failures[rid][1])
        print("failures by kind:")
        for name, count in kinds.most_common():
            print(f"  {count:6d}  {name:<13}  e.g. {_first_line(example[name])}")
    if check.damaged:
        print(f"damage  {check.summary()}")
    for line in check.ignored:
        print(f"ignored {line}")
    return 1 if check.damaged else 0


__all__ = ["DEMO_OUT", "demo_file", "register"]
