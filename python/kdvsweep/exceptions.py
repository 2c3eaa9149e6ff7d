"""Exception classes of kdvsweep.

Pure Python so they import without the compiled module; the Rust shell raises these same classes.
Each also derives from the built-in that a caller would naturally catch (ValueError, ArithmeticError).
"""


class KdvsweepError(Exception):
    """Base class of every error kdvsweep raises on purpose."""


class ConfigError(KdvsweepError, ValueError):
    """A parameter, option or configuration value is invalid."""


class ShapeError(KdvsweepError, ValueError):
    """An array has the wrong shape, length or dtype."""


class NumericalError(KdvsweepError, ArithmeticError):
    """A run went unstable: non-finite values or growth past the blow-up bound."""


class StoreBusyError(KdvsweepError, RuntimeError):
    """Another process is writing to the store (it holds the store's lock)."""


__all__ = ["ConfigError", "KdvsweepError", "NumericalError", "ShapeError", "StoreBusyError"]
