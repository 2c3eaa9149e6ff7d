"""What every command shares: messages on stderr, tables on stdout."""

from __future__ import annotations

import sys
from typing import Any

PROG = "kdvsweep"


def say(message: str, command: str | None = None) -> None:
    """One line on stderr, prefixed with the command's name (``kdvsweep plot: ...``)."""
    prefix = f"{PROG} {command}" if command else PROG
    print(f"{prefix}: {message}", file=sys.stderr, flush=True)


def print_frame(frame: Any, float_format: str = "{:.6g}") -> None:
    """A DataFrame as a plain-text table on stdout, every column shown."""
    import pandas as pd

    with pd.option_context(
        "display.width",
        200,
        "display.max_columns",
        50,
        "display.max_rows",
        500,
        "display.float_format",
        float_format.format,
    ):
        print(frame.to_string(index=False))


__all__ = ["PROG", "print_frame", "say"]
