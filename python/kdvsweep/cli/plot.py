"""``kdvsweep plot OUT``: the figures of a store, and one line for each one that cannot be drawn."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from .common import say

DEFAULT_FORMATS = "png,pdf"


def register(sub: Any) -> None:
    """Add ``plot`` to the ``kdvsweep`` sub-parsers."""
    p = sub.add_parser(
        "plot",
        help="measured vs predicted shifts or soliton content, space-time diagrams",
        description="Figures of a sweep store: measured against predicted phase shifts and their "
        "relative error against a swept parameter (soliton initial data), or measured against "
        "predicted amplitudes and speeds of the emerging solitons (profile data); the end "
        "amplitude of damped or viscous solitons against the adiabatic law; space-time "
        "diagrams of stored runs with every soliton followed. Each run's equation is read from "
        "the store. A figure that cannot be drawn is named with the reason.",
    )
    p.add_argument("out", type=Path, metavar="OUT", help="store folder")
    p.add_argument(
        "--into", type=Path, metavar="DIR", help="folder for the figures (default OUT/figures)"
    )
    p.add_argument(
        "--parameter", metavar="NAME", help="swept parameter for the relative-error figure"
    )
    p.add_argument(
        "--run",
        type=int,
        action="append",
        dest="runs",
        metavar="ID",
        help="run id for a space-time diagram (repeatable; default one run per series)",
    )
    p.add_argument(
        "--formats",
        default=DEFAULT_FORMATS,
        metavar="LIST",
        help=f"comma-separated file formats: png, pdf, svg (default {DEFAULT_FORMATS})",
    )
    p.set_defaults(handler=_plot)


def _plot(args: argparse.Namespace) -> int:
    from ..exceptions import ConfigError
    from ..plots import iter_figures
    from ..sweep.store import read_manifest
    from ..units import store_system
    from .check import say_caution

    try:
        say_caution([store_system(read_manifest(args.out))], "plot")
    except ConfigError:  # not a store: iter_figures says so in its one line
        pass
    formats = [f.strip() for f in args.formats.split(",") if f.strip()]
    written = 0
    for outcome in iter_figures(args.out, args.into, args.parameter, args.runs, formats):
        for path in outcome.paths:
            print(path)
        written += len(outcome.paths)
        stem = outcome.plan.stem
        for note in outcome.notes:
            if outcome.paths:
                say(f"{stem}: {note}", "plot")
            else:
                say(f"{stem} not drawn: {note}", "plot")
    if not written:
        say(f"no figure could be drawn from {args.out}", "plot")
        return 1
    return 0


__all__ = ["register"]
