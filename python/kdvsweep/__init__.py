"""kdvsweep: parameter sweeps of soliton interactions in the KdV family.

A Rust pseudo-spectral core stepped from Python; see the README for the job and the quick start.
The submodules (``analysis``, ``exact``, ``initial``, ``spectrum``, ``sweep``, ``theory``,
``units``) and
``load``/``Results`` are imported on first use, so ``import kdvsweep`` (and the command line) does
not pay for pandas, scipy or dask until they are needed.
"""

from __future__ import annotations

import importlib.metadata
from typing import TYPE_CHECKING, Any

from . import _lazy
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

#: Each deferred name's home: (module, attribute), attribute None for a submodule itself.
_HOMES: dict[str, tuple[str, str | None]] = {
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
_load = _lazy.loader(__name__, _HOMES)


def __getattr__(name: str) -> Any:
    """Import a deferred name on first access (PEP 562) and keep it."""
    if name == "__version__":  # reading the installed metadata costs tens of milliseconds
        version = importlib.metadata.version("kdvsweep")
        globals()[name] = version
        return version
    return _load(name)


def __dir__() -> list[str]:
    return _lazy.names(__name__, _HOMES)


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
