"""Exception classes of kdvsweep.

Pure Python so they import without the compiled module; the Rust shell raises these same classes.
Each also derives from the built-in that a caller would naturally catch (ValueError, ArithmeticError,
TimeoutError, MemoryError).
"""


class KdvsweepError(Exception):
    """Base class of every error kdvsweep raises on purpose."""


class ConfigError(KdvsweepError, ValueError):
    """A parameter, option or configuration value is invalid."""


class ShapeError(KdvsweepError, ValueError):
    """An array has the wrong shape, length or dtype."""


class NumericalError(KdvsweepError, ArithmeticError):
    """A run went unstable: non-finite values or growth past the blow-up bound."""


class TimeLimitError(KdvsweepError, TimeoutError):
    """A run used up its wall-clock time limit (the message names the limit and the time reached)."""


class OutOfMemoryError(KdvsweepError, MemoryError):
    """A buffer could not be allocated; the message starts with "out of memory" and names the
    memory needed."""


class StoreError(KdvsweepError, OSError):
    """The store's folder cannot be read or written (full disk, no permission...); the message
    names the path and what to do."""


class StoreBusyError(KdvsweepError, RuntimeError):
    """Another process is writing to the store (it holds the store's lock)."""


__all__ = [
    "ConfigError",
    "KdvsweepError",
    "NumericalError",
    "OutOfMemoryError",
    "ShapeError",
    "StoreBusyError",
    "StoreError",
    "TimeLimitError",
]
