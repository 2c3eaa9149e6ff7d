"""Sweeps: sweep files (``load_sweep``) and running them (``run``, ``run_sweep``)."""

from typing import Any

from .config import RunSpec, Sweep, load_sweep

__all__ = ["RunSpec", "Sweep", "load_sweep", "run", "run_sweep"]


def __getattr__(name: str) -> Any:
    # The farm imports dask.distributed, which is slow to load: only when a sweep is run.
    if name in ("run", "run_sweep"):
        from . import farm

        return getattr(farm, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
