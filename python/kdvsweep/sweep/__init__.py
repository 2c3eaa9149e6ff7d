"""Sweeps: sweep files (``load_sweep``), their plan before they run (``make_plan``: runs, sizes,
steps, memory, estimated core-seconds; what ``kdvsweep check`` prints) and running them: ``run``
(a file into a store, on this machine, an existing dask cluster or batch jobs; what ``kdvsweep
run`` calls) and ``run_sweep`` (a loaded sweep on a dask client of your own).

Every name is imported on first use: reading a store (``kdvsweep status``) needs neither the
loader nor the farm (dask is slow to load)."""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .config import RunSpec, Sweep, load_sweep
    from .farm import run, run_sweep
    from .plan import Plan, make_plan

__all__ = ["Plan", "RunSpec", "Sweep", "load_sweep", "make_plan", "run", "run_sweep"]

#: The module of each name.
_HOMES = {
    "Plan": ".plan",
    "make_plan": ".plan",
    "RunSpec": ".config",
    "Sweep": ".config",
    "load_sweep": ".config",
    "run": ".farm",
    "run_sweep": ".farm",
}


def __getattr__(name: str) -> Any:
    """Import a name on first access (PEP 562) and keep it."""
    if name not in _HOMES:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(_HOMES[name], __name__), name)
    globals()[name] = value
    return value
