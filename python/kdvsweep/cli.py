"""The ``kdvsweep`` command: run sweeps, the demo, look at stores; delegates plots and benchmarks.

Commands: ``run FILE``, ``demo``, ``table OUT``, ``status OUT``, and ``bench`` (``--sweep`` for the
farm benchmark), ``plot OUT``, ``spectrum ...``, which hand their arguments to the ``main(argv)``
of :mod:`kdvsweep.bench`, :mod:`kdvsweep.sweep.bench_sweep`, :mod:`kdvsweep.plots` and
:mod:`kdvsweep.spectrum`. Tables go to stdout, the progress bar and messages to stderr.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

from .exceptions import KdvsweepError

#: Commands handed over whole to another module's ``main(argv)``.
DELEGATES = {
    "bench": ("kdvsweep.bench", "timing of the core against NumPy (--sweep: of the farm)"),
    "plot": ("kdvsweep.plots", "figures of a store: kdvsweep plot OUT ..."),
    "spectrum": ("kdvsweep.spectrum", "IST discrete spectrum of initial data"),
}

DEMO_OUT = Path("results") / "demo"


def demo_file() -> Path:
    """The embedded demo sweep: inside the installed package, else in the source checkout."""
    from importlib import resources

    from .exceptions import ConfigError

    packaged = resources.files("kdvsweep") / "data" / "demo.toml"
    if packaged.is_file():
        return Path(str(packaged))
    checkout = Path(__file__).resolve().parents[2] / "sweeps" / "demo.toml"
    if checkout.is_file():
        return checkout
    raise ConfigError(
        f"demo: sweep file not found; expected kdvsweep/data/demo.toml in the package or {checkout}"
    )


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="kdvsweep",
        description="Parameter sweeps of soliton interactions in the KdV family.",
    )
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def farm_options(p: argparse.ArgumentParser) -> None:
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

    p = sub.add_parser("run", help="run a sweep file (resumes an interrupted run)")
    p.add_argument("file", type=Path, metavar="FILE", help="sweep file (TOML)")
    p.add_argument("--out", type=Path, metavar="DIR", help="store folder (default results/NAME)")
    farm_options(p)

    p = sub.add_parser("demo", help="run the embedded demo sweep and print its summary")
    p.add_argument(
        "--out",
        type=Path,
        default=DEMO_OUT,
        metavar="DIR",
        help=f"store folder (default {DEMO_OUT})",
    )
    farm_options(p)

    p = sub.add_parser("table", help="print the summary table of a store")
    p.add_argument("out", type=Path, metavar="OUT", help="store folder")
    p.add_argument("--runs", action="store_true", help="print the runs table instead")

    p = sub.add_parser("status", help="runs done / failed / pending in a store")
    p.add_argument("out", type=Path, metavar="OUT", help="store folder")

    for name, (_, text) in DELEGATES.items():
        sub.add_parser(name, help=text, add_help=False)
    return parser


def _print_frame(frame: object, stream: object = None) -> None:
    import pandas as pd

    with pd.option_context(
        "display.width",
        200,
        "display.max_columns",
        50,
        "display.max_rows",
        500,
        "display.float_format",
        "{:.6g}".format,
    ):
        print(frame.to_string(index=False), file=stream or sys.stdout)  # type: ignore[attr-defined]


def _run(args: argparse.Namespace, file: Path) -> int:
    from .sweep.config import load_sweep
    from .sweep.farm import CHUNK_SECONDS, connect, run_sweep

    sweep = load_sweep(file)
    for warning in sweep.warnings:
        print(f"kdvsweep: warning: {warning}", file=sys.stderr)
    out = args.out if args.out is not None else Path("results") / sweep.name
    chunk = args.chunk_seconds if args.chunk_seconds is not None else CHUNK_SECONDS
    try:
        if args.scheduler is None and getattr(args, "cluster", None) is None:
            report = run_sweep(
                sweep, out, workers=args.workers, progress=args.progress, chunk_seconds=chunk
            )
        elif args.scheduler is not None:
            from .sweep.store import Store

            Store.open(out, sweep).close()  # refuse a wrong folder before connecting
            with connect(None, args.scheduler) as client:
                report = run_sweep(sweep, out, client, progress=args.progress, chunk_seconds=chunk)
        else:
            from .sweep.cluster import cluster_client, load_profile
            from .sweep.store import Store

            profile = load_profile(args.cluster)  # a bad profile fails before anything starts
            Store.open(out, sweep).close()  # refuse a wrong folder before submitting jobs

            def echo(message: str) -> None:
                print(f"kdvsweep: {message}", file=sys.stderr)

            with cluster_client(profile, logs=out / "batch-logs", echo=echo) as client:
                report = run_sweep(sweep, out, client, progress=args.progress, chunk_seconds=chunk)
    except KeyboardInterrupt:
        print(
            f"kdvsweep: interrupted; what finished is stored in {out}; "
            "run the same command again to resume",
            file=sys.stderr,
        )
        return 130
    print(
        f"kdvsweep: {report.stored} runs stored now ({report.failed} failed), "
        f"{report.skipped} were already stored, {report.total} in the sweep; "
        f"{report.elapsed:.1f} s",
        file=sys.stderr,
    )
    return 0


def _table(out: Path, runs: bool = False) -> int:
    from .results import load

    res = load(out)
    counts = res.counts()
    if runs:
        _print_frame(res.runs)
    else:
        summary = res.summary()
        if summary.empty:
            print("(no soliton rows stored)")
        else:
            _print_frame(summary)
        failed = res.runs.loc[res.runs["status"] != "ok", ["run_id", "reason"]]
        if len(failed):
            print(f"\nfailed runs ({len(failed)}):")
            _print_frame(failed)
    print(
        f"\n{counts['ok']} ok, {counts['failed']} failed, {counts['pending']} pending "
        f"of {counts['total']} runs; results in {out.resolve()}"
    )
    return 0


def _status(out: Path) -> int:
    from .results import load

    res = load(out)
    counts = res.counts()
    print(f"sweep   {res.manifest.get('sweep_name')} ({res.manifest.get('sweep_file')})")
    print(f"store   {out.resolve()}")
    print(f"done    {counts['ok']}")
    print(f"failed  {counts['failed']}")
    print(f"pending {counts['pending']}")
    print(f"total   {counts['total']}")
    if counts["failed"]:
        reasons = res.runs.loc[res.runs["status"] != "ok", "reason"].value_counts().head(5)
        print("most common reasons of failure:")
        for reason, count in reasons.items():
            print(f"  {count:6d}  {reason}")
    return 0


def _delegate(command: str, argv: list[str]) -> int:
    module = DELEGATES[command][0]
    if command == "bench" and "--sweep" in argv:
        module = "kdvsweep.sweep.bench_sweep"
        argv = [a for a in argv if a != "--sweep"]
    try:
        mod = importlib.import_module(module)
    except ModuleNotFoundError as exc:
        if exc.name != module:
            raise
        print(
            f"kdvsweep {command}: not available in this installation ({module} is missing)",
            file=sys.stderr,
        )
        return 2
    entry: Callable[[list[str]], int | None] = mod.main
    code = entry(argv)
    return int(code or 0)


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``kdvsweep`` command; returns the exit status."""
    args_list = list(sys.argv[1:] if argv is None else argv)
    try:
        if args_list and args_list[0] in DELEGATES:
            return _delegate(args_list[0], args_list[1:])
        args = _parser().parse_args(args_list)
        if args.command == "run":
            return _run(args, args.file)
        if args.command == "demo":
            return _demo(args)
        if args.command == "table":
            return _table(args.out, runs=args.runs)
        return _status(args.out)
    except KdvsweepError as exc:
        print(f"kdvsweep: error: {exc}", file=sys.stderr)
        return 2


def _demo(args: argparse.Namespace) -> int:
    code = _run(args, demo_file())
    if code:
        return code
    return _table(args.out)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
