"""kdvsweep: parameter sweeps of soliton interactions in the KdV family.

A Rust pseudo-spectral core stepped from Python; see the README for the job and the quick start.
"""

from . import analysis, exact, initial, spectrum, sweep, theory
from .exceptions import ConfigError, KdvsweepError, NumericalError, ShapeError
from .model import Equation, Grid
from .results import Results, load
from .simulation import SCHEMES, Simulation, invariants

__version__ = "0.1.0"

__all__ = [
    "SCHEMES",
    "ConfigError",
    "Equation",
    "Grid",
    "KdvsweepError",
    "NumericalError",
    "Results",
    "ShapeError",
    "Simulation",
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
