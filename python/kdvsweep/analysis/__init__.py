"""Collision analysis: follow the solitons of a record, fit their asymptotes, compare with theory.

``content`` measures the solitons and breathers that emerge from any initial data and matches
them to the predicted spectrum; ``peaks`` locates extrema to sub-grid accuracy on the trigonometric
interpolant, ``tracks`` links and unwraps them across frames (and follows reference runs),
``fits`` fits the asymptotic lines, ``table`` builds the per-soliton table and the per-run summary.

The submodules and the names below are imported on first use (PEP 562), so importing one of them
(the store imports ``tracks``) does not load scipy through ``content`` and ``fits``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from .. import _lazy

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

#: Each deferred name's home: (submodule, attribute), attribute None for a submodule itself.
_HOMES: dict[str, tuple[str, str | None]] = {
    "content": (".content", None),
    "fits": (".fits", None),
    "peaks": (".peaks", None),
    "table": (".table", None),
    "tracks": (".tracks", None),
    "DEFAULT_MIN_AMPLITUDE": (".content", "DEFAULT_MIN_AMPLITUDE"),
    "ContentMeasurement": (".content", "ContentMeasurement"),
    "EmergingSoliton": (".content", "EmergingSoliton"),
    "breather_profile": (".content", "breather_profile"),
    "measure_content": (".content", "measure_content"),
    "AsymptoticFit": (".fits", "AsymptoticFit"),
    "fit_asymptotes": (".fits", "fit_asymptotes"),
    "Interpolant": (".peaks", "Interpolant"),
    "Peaks": (".peaks", "Peaks"),
    "count_peaks": (".peaks", "count_peaks"),
    "find_peaks": (".peaks", "find_peaks"),
    "find_peaks_many": (".peaks", "find_peaks_many"),
    "ring_distance": (".peaks", "ring_distance"),
    "DEFAULT_SEPARATION": (".table", "DEFAULT_SEPARATION"),
    "RADIATION_WINDOW": (".table", "RADIATION_WINDOW"),
    "SHIFT_METHODS": (".table", "SHIFT_METHODS"),
    "TABLE_COLUMNS": (".table", "TABLE_COLUMNS"),
    "RunAnalysis": (".table", "RunAnalysis"),
    "analyse_run": (".table", "analyse_run"),
    "collision_table": (".table", "collision_table"),
    "ReferenceTrack": (".tracks", "ReferenceTrack"),
    "Tracks": (".tracks", "Tracks"),
    "reference_track": (".tracks", "reference_track"),
    "track": (".tracks", "track"),
}
_load = _lazy.loader(__name__, _HOMES)


def __getattr__(name: str) -> Any:
    """Import a deferred name on first access (PEP 562) and keep it."""
    return _load(name)


def __dir__() -> list[str]:
    return _lazy.names(__name__, _HOMES)


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
