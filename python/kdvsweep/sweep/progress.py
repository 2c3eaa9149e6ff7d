"""A progress bar for sweeps on stderr: runs done (of the total), failed, rate and time left."""

from __future__ import annotations

import sys
from typing import TextIO

from tqdm import tqdm


class Progress:
    """Counts stored runs; a tqdm bar when enabled, silent otherwise.

    Parameters
    ----------
    total
        Runs in the sweep.
    initial
        Runs already stored before this session (resume); they do not count in the rate.
    failed
        Failed runs among ``initial``.
    enabled
        Draw the bar; ``None`` draws it only when ``stream`` is a terminal.
    stream
        Where to draw (default stderr, so stdout stays clean for tables).
    """

    def __init__(
        self,
        total: int,
        initial: int = 0,
        failed: int = 0,
        enabled: bool | None = None,
        stream: TextIO | None = None,
    ) -> None:
        stream = stream or sys.stderr
        if enabled is None:
            enabled = bool(getattr(stream, "isatty", lambda: False)())
        self.failed = failed
        self._bar = tqdm(
            total=total,
            initial=initial,
            unit="run",
            desc="sweep",
            file=stream,
            disable=not enabled,
            dynamic_ncols=True,
            mininterval=0.5,
            smoothing=0.1,
        )
        self._bar.set_postfix(failed=self.failed, refresh=False)

    def update(self, done: int, failed: int = 0) -> None:
        """Count ``done`` more stored runs, ``failed`` of which failed."""
        self.failed += failed
        if failed:
            self._bar.set_postfix(failed=self.failed, refresh=False)
        self._bar.update(done)

    def write(self, message: str) -> None:
        """Print a line without breaking the bar."""
        self._bar.write(message, file=sys.stderr)

    def close(self) -> None:
        """Finish the bar."""
        self._bar.close()

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


__all__ = ["Progress"]
