"""Collision analysis: follow the solitons of a record, fit their asymptotes, compare with theory.

``content`` measures the solitons and breathers that emerge from any initial data and matches
them to the predicted spectrum; ``peaks`` locates extrema to sub-grid accuracy on the trigonometric
interpolant, ``tracks`` links and unwraps them across frames (and follows reference runs),
``fits`` fits the asymptotic lines, ``table`` builds the per-soliton table and the per-run summary.

The submodules and the names below are imported on first use (PEP 562), so importing one of them
(the store imports ``tracks``) does not load scipy through ``content`` and ``fits``.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # the names the lazy loader below gives, for type checkers
    from . import content, fits, peaks, table, tracks  # noqa: F401
    from .content import (
        DEFAULT_MIN_AMPLITUDE,
        ContentMeasurement,
        EmergingSoliton,
        breather_profile,
        measure_content,
    )
    from .fits import AsymptoticFit, fit_asymptotes
    from .peaks import Interpolant, Peaks, count_peaks, find_peaks, find_peaks_many, ring_distance
    from .table import (
        DEFAULT_SEPARATION,
        RADIATION_WINDOW,
        SHIFT_METHODS,
        TABLE_COLUMNS,
        RunAnalysis,
        analyse_run,
        collision_table,
    )
    from .tracks import ReferenceTrack, Tracks, reference_track, track

#: Name -> the submodule that defines it (submodules themselves map to None).
_LAZY: dict[str, str | None] = {
    "content": None,
    "fits": None,
    "peaks": None,
    "table": None,
    "tracks": None,
    "DEFAULT_MIN_AMPLITUDE": "content",
    "ContentMeasurement": "content",
    "EmergingSoliton": "content",
    "breather_profile": "content",
    "measure_content": "content",
    "AsymptoticFit": "fits",
    "fit_asymptotes": "fits",
    "Interpolant": "peaks",
    "Peaks": "peaks",
    "count_peaks": "peaks",
    "find_peaks": "peaks",
    "find_peaks_many": "peaks",
    "ring_distance": "peaks",
    "DEFAULT_SEPARATION": "table",
    "RADIATION_WINDOW": "table",
    "SHIFT_METHODS": "table",
    "TABLE_COLUMNS": "table",
    "RunAnalysis": "table",
    "analyse_run": "table",
    "collision_table": "table",
    "ReferenceTrack": "tracks",
    "Tracks": "tracks",
    "reference_track": "tracks",
    "track": "tracks",
}


def __getattr__(name: str) -> Any:
    """Import a lazily loaded name on first access (PEP 562) and keep it."""
    if name not in _LAZY:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    where = _LAZY[name]
    module = importlib.import_module(f".{where or name}", __name__)
    value = module if where is None else getattr(module, name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *_LAZY})


__all__ = [
    "DEFAULT_MIN_AMPLITUDE",
    "DEFAULT_SEPARATION",
    "RADIATION_WINDOW",
    "SHIFT_METHODS",
    "TABLE_COLUMNS",
    "AsymptoticFit",
    "ContentMeasurement",
    "EmergingSoliton",
    "Interpolant",
    "Peaks",
    "ReferenceTrack",
    "RunAnalysis",
    "Tracks",
    "analyse_run",
    "breather_profile",
    "collision_table",
    "count_peaks",
    "find_peaks",
    "find_peaks_many",
    "fit_asymptotes",
    "measure_content",
    "reference_track",
    "ring_distance",
    "track",
]
