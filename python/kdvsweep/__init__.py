"""kdvsweep: parameter sweeps of soliton interactions in the KdV family.

A Rust pseudo-spectral core stepped from Python; see the README for the job and the quick start.
The submodules (``analysis``, ``exact``, ``initial``, ``spectrum``, ``sweep``, ``theory``,
``units``) and
``load``/``Results`` are imported on first use, so ``import kdvsweep`` (and the command line) does
not pay for pandas, scipy or dask until they are needed.
"""

from __future__ import annotations

import importlib
import importlib.metadata
from typing import TYPE_CHECKING, Any

from .exceptions import (
    ConfigError,
    KdvsweepError,
    NumericalError,
    OutOfMemoryError,
    ShapeError,
    StoreBusyError,
    StoreError,
    TimeLimitError,
)
from .model import Equation, Grid
from .simulation import SCHEMES, SetupWarning, Simulation, invariants

if TYPE_CHECKING:  # the names the lazy loader below gives, for type checkers
    from . import analysis, exact, initial, spectrum, sweep, theory, units
    from .results import Results, load

    __version__: str

#: Names imported on first access: a submodule, or (module, attribute).
_LAZY: dict[str, tuple[str, str | None]] = {
    "analysis": (".analysis", None),
    "exact": (".exact", None),
    "initial": (".initial", None),
    "spectrum": (".spectrum", None),
    "sweep": (".sweep", None),
    "theory": (".theory", None),
    "units": (".units", None),
    "Results": (".results", "Results"),
    "load": (".results", "load"),
}


def __getattr__(name: str) -> Any:
    """Import a lazily loaded name on first access (PEP 562) and keep it."""
    if name == "__version__":  # reading the installed metadata costs tens of milliseconds
        version = importlib.metadata.version("kdvsweep")
        globals()[name] = version
        return version
    if name not in _LAZY:
        raise AttributeError(f"module 'kdvsweep' has no attribute {name!r}")
    module, attribute = _LAZY[name]
    value: Any = importlib.import_module(module, __name__)
    if attribute is not None:
        value = getattr(value, attribute)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))


__all__ = [
    "SCHEMES",
    "ConfigError",
    "Equation",
    "Grid",
    "KdvsweepError",
    "NumericalError",
    "OutOfMemoryError",
    "Results",
    "SetupWarning",
    "ShapeError",
    "Simulation",
    "StoreBusyError",
    "StoreError",
    "TimeLimitError",
    "__version__",
    "analysis",
    "exact",
    "initial",
    "invariants",
    "load",
    "spectrum",
    "sweep",
    "theory",
    "units",
]
