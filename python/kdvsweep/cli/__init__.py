"""The ``kdvsweep`` command: every argument parser, printed line and progress bar of the package.

Commands (one module each): ``run``, ``demo``, ``table``, ``status``, ``compact``
(:mod:`.sweeps`), ``check``
(:mod:`.check`), ``plot`` (:mod:`.plot`), ``spectrum`` (:mod:`.spectrum`) and ``bench``
(:mod:`.bench`). They call the library, which returns data; tables go to stdout, the progress bar
and messages to stderr. An error of the user's input is one line, ``kdvsweep: error: ...``, and
exit status 2.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from ..exceptions import KdvsweepError
from . import bench, check, plot, spectrum, sweeps
from .common import PROG, say
from .sweeps import demo_file

#: The command modules, in the order of ``kdvsweep --help``.
COMMANDS = (sweeps, check, plot, spectrum, bench)


def build_parser() -> argparse.ArgumentParser:
    """The parser of the ``kdvsweep`` command and all its sub-commands."""
    parser = argparse.ArgumentParser(
        prog=PROG,
        description="Parameter sweeps of soliton interactions in the KdV family.",
    )
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for module in COMMANDS:
        module.register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``kdvsweep`` command; returns the exit status."""
    args = build_parser().parse_args(list(sys.argv[1:] if argv is None else argv))
    try:
        return int(args.handler(args))
    except KdvsweepError as exc:
        say(f"error: {exc}")
        return 2
    except OSError as exc:  # a file the library did not expect to fail: one line, no traceback
        where = f"{exc.filename}: " if exc.filename else ""
        say(f"error: {where}{exc.strerror or exc}; expected a file or folder that can be used")
        return 2


__all__ = ["COMMANDS", "build_parser", "demo_file", "main"]
