"""The progress bar of ``kdvsweep run``: runs stored (of the total), failed, rate and time left."""

from __future__ import annotations

import sys
from typing import Any, TextIO

from tqdm import tqdm


class Progress:
    """A tqdm bar on stderr fed by the farm's ``on_progress(done, failed, total)`` callback.

    Pass the instance itself as ``on_progress``. The first call sets the bar: the runs stored
    before this session (a resume) count as already done and stay out of the rate.

    Parameters
    ----------
    enabled
        Draw the bar; ``None`` draws it only when ``stream`` is a terminal.
    stream
        Where to draw (default stderr, so stdout stays clean for tables).
    """

    def __init__(self, enabled: bool | None = None, stream: TextIO | None = None) -> None:
        self._stream = stream or sys.stderr
        if enabled is None:
            enabled = bool(getattr(self._stream, "isatty", lambda: False)())
        self.enabled = enabled
        self._bar: Any = None
        self.done = 0
        self.failed = 0

    def __call__(self, done: int, failed: int, total: int) -> None:
        """Show ``done`` of ``total`` runs stored, ``failed`` of them failed."""
        first = self._bar is None
        if first:
            self._bar = tqdm(
                total=total,
                initial=done,
                unit="run",
                desc="sweep",
                file=self._stream,
                disable=not self.enabled,
                dynamic_ncols=True,
                mininterval=0.5,
                smoothing=0.1,
            )
        else:
            self._bar.update(done - self.done)
        if first or failed != self.failed:
            self._bar.set_postfix(failed=failed, refresh=False)
        self.done, self.failed = done, failed

    def write(self, message: str) -> None:
        """Print a line without breaking the bar."""
        if self._bar is None:
            print(message, file=self._stream)
        else:
            self._bar.write(message, file=self._stream)

    def close(self) -> None:
        """Finish the bar."""
        if self._bar is not None:
            self._bar.close()

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


__all__ = ["Progress"]
