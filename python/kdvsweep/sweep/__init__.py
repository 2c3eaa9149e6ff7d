"""Sweeps: sweep files (``load_sweep``), their plan before they run (``make_plan``: runs, sizes,
steps, memory, estimated core-seconds; what ``kdvsweep check`` prints) and running them: ``run``
(a file into a store, on this machine, an existing dask cluster or batch jobs; what ``kdvsweep
run`` calls) and ``run_sweep`` (a loaded sweep on a dask client of your own)."""

from typing import Any

from .config import RunSpec, Sweep, load_sweep
from .plan import Plan, make_plan

__all__ = ["Plan", "RunSpec", "Sweep", "load_sweep", "make_plan", "run", "run_sweep"]


def __getattr__(name: str) -> Any:
    # The farm imports dask.distributed, which is slow to load: only when a sweep is run.
    if name in ("run", "run_sweep"):
        from . import farm

        return getattr(farm, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
