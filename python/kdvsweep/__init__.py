"""kdvsweep: parameter sweeps of soliton interactions in the KdV family.

A Rust pseudo-spectral core stepped from Python; see the README for the job and the quick start.
"""

import importlib.metadata

from . import analysis, exact, initial, spectrum, sweep, theory
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
from .results import Results, load
from .simulation import SCHEMES, Simulation, invariants

__version__ = importlib.metadata.version("kdvsweep")

__all__ = [
    "SCHEMES",
    "ConfigError",
    "Equation",
    "Grid",
    "KdvsweepError",
    "NumericalError",
    "OutOfMemoryError",
    "Results",
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
]
