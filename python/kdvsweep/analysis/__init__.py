"""Collision analysis: follow the solitons of a record, fit their asymptotes, compare with theory.

``content`` measures the solitons and breathers that emerge from any initial data and matches
them to the predicted spectrum; ``peaks`` locates extrema to sub-grid accuracy on the trigonometric interpolant, ``tracks`` links
and unwraps them across frames, ``fits`` fits the asymptotic lines, ``table`` builds the
per-soliton table and the per-run summary.
"""

from .content import (
    DEFAULT_MIN_AMPLITUDE,
    ContentMeasurement,
    EmergingSoliton,
    breather_profile,
    measure_content,
)
from .fits import AsymptoticFit, fit_asymptotes
from .peaks import Interpolant, Peaks, count_peaks, find_peaks, find_peaks_many, ring_distance
from .table import DEFAULT_SEPARATION, TABLE_COLUMNS, RunAnalysis, analyse_run, collision_table
from .tracks import Tracks, track

__all__ = [
    "DEFAULT_MIN_AMPLITUDE",
    "DEFAULT_SEPARATION",
    "TABLE_COLUMNS",
    "AsymptoticFit",
    "ContentMeasurement",
    "EmergingSoliton",
    "Interpolant",
    "Peaks",
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
    "ring_distance",
    "track",
]
