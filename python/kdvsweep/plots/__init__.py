"""Figures of collisions and sweeps (:mod:`.figures`), and of a whole store (:mod:`.store`)."""

from .figures import (
    ASYMPTOTE_GID,
    FORMATS,
    PEAK_GID,
    STYLE,
    TRAJECTORY_GID,
    adiabatic_decay,
    content_comparison,
    relative_error,
    save,
    shift_comparison,
    spacetime,
)
from .store import FigureOutcome, FigurePlan, draw, iter_figures, plan_figures, plot_store

__all__ = [
    "ASYMPTOTE_GID",
    "FORMATS",
    "PEAK_GID",
    "STYLE",
    "TRAJECTORY_GID",
    "FigureOutcome",
    "FigurePlan",
    "adiabatic_decay",
    "content_comparison",
    "draw",
    "iter_figures",
    "plan_figures",
    "plot_store",
    "relative_error",
    "save",
    "shift_comparison",
    "spacetime",
]
