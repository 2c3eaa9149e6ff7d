"""Sweeps: sweep files (``load_sweep``), their plan before they run (``make_plan``: runs, sizes,
steps, memory, estimated core-seconds; what ``kdvsweep check`` prints) and running them: ``run``
(a file into a store, on this machine, an existing dask cluster or batch jobs; what ``kdvsweep
run`` calls) and ``run_sweep`` (a loaded sweep on a dask client of your own).

Every name is imported on first use: reading a store (``kdvsweep status``) needs neither the
loader nor the farm (dask is slow to load)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from .. import _lazy

if TYPE_CHECKING:
    from .config import RunSpec, Sweep, load_sweep
    from .farm import run, run_sweep
    from .plan import Plan, make_plan

__all__ = ["Plan", "RunSpec", "Sweep", "load_sweep", "make_plan", "run", "run_sweep"]

#: Each name's home: (module, attribute).
_HOMES: dict[str, tuple[str, str | None]] = {
    "Plan": (".plan", "Plan"),
    "make_plan": (".plan", "make_plan"),
    "RunSpec": (".config", "RunSpec"),
    "Sweep": (".config", "Sweep"),
    "load_sweep": (".config", "load_sweep"),
    "run": (".farm", "run"),
    "run_sweep": (".farm", "run_sweep"),
}
_load = _lazy.loader(__name__, _HOMES)


def __getattr__(name: str) -> Any:
    """Import a name on first access (PEP 562) and keep it."""
    return _load(name)


def __dir__() -> list[str]:
    return _lazy.names(__name__, _HOMES)
