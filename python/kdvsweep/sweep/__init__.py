"""Sweeps: sweep files (``config``), and running them (``run``, added by the farm)."""

from .config import RunSpec, Sweep, load_sweep

# -- run: the farm's entry point goes here (kdvsweep.sweep.run(path, out=...)) --

__all__ = ["RunSpec", "Sweep", "load_sweep"]
