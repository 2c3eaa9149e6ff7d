"""Soliton content of a record: the solitons (and mKdV breathers) that emerge from any initial data.

API
---
``measure_content(frames, times, grid, equation, predicted=None, *, min_amplitude=None)``
returns a :class:`ContentMeasurement`:

* ``emerging``: one :class:`EmergingSoliton` per soliton or breather found in the late frames,
  solitons largest first, then breathers largest first. Fields: ``kind`` (``"soliton"`` or
  ``"breather"``), ``sign`` (polarity, +1 elevation, -1 depression; 0 for a breather),
  ``kappa_measured`` (from the fitted shape), ``amplitude`` (peak ``|u|`` of the fitted shape;
  a breather's envelope peak ``|alpha| 4 eta``), ``speed`` (asymptotic speed of the fitted
  centre; a breather's envelope speed), each with ``*_uncertainty``; ``frequency`` and
  ``frequency_uncertainty`` (breathers: the internal frequency in the envelope frame; NaN for
  solitons), ``xi_measured`` (breathers), ``t_separated`` (the time from which the soliton stands
  clear of the others and of the radiation), ``track_times`` and ``track_centres`` (its fitted
  centre per frame from ``t_separated`` on, unwrapped: for figures), and the predicted values it
  was matched to (``predicted_index``, ``kappa_predicted``, ``amplitude_predicted``,
  ``speed_predicted``, ``frequency_predicted``; -1 and NaN when unmatched).
* ``n_measured``, ``n_predicted``, ``all_found`` (every predicted soliton or breather that was not
  left out was found), ``left_out`` (``(kind, index, reason)`` for each predicted one not expected
  in the record: below ``min_amplitude``, or too slow to separate before the record ends).
* ``data`` (mass, momentum ``int u^2``, energy of the first frame), ``radiation`` (the same of the
  last frame minus those of the fitted solitons and breathers), ``radiation_predicted`` (the data's
  minus the predicted solitons' and breathers': the trace-formula check), ``radiation_l2``
  (``int r^2 dx`` of the last frame minus the fitted shapes), ``status`` and ``reason``.
* :meth:`ContentMeasurement.table` gives one row per emerging soliton or breather.

Method
------
Late frames first: every extremum of the last frame above the threshold is a candidate; the
equation's own soliton shape (:attr:`kdvsweep.Equation.soliton_form`, with its periodic images) is
fitted to it by least squares with free ``kappa`` and centre over a window of a few widths, and a
candidate whose shape does not match (relative residual above ``SHAPE_TOLERANCE``) is radiation or
a breather. Each soliton is then followed back frame by frame from its fitted speed; it is
*separated* from the first frame after which every fit stays clean and its ``kappa`` stays within
``SEPARATION_TOLERANCE`` of the last. The *late* frames are the second half of the separated ones:
the amplitude is the mean of their fits, its uncertainty the spread over them plus the fit's
standard error; the speed is the slope of their centres, its uncertainty the slope's standard
error plus the change between the two halves.

Breathers (focusing mKdV, a complex pair ``zeta = +-xi + i eta``): in the canonical
``u_t + 6 u^2 u_x + u_xxx = 0``, ``u = 2 d/dx arctan[(a/b) cos(theta) / cosh(R)]``, ``a = 2 eta``,
``b = 2 xi``, ``theta = b (x - (3 a^2 - b^2) t)``, ``R = a (x - (a^2 - 3 b^2) t)`` (Wadati 1973;
Lamb 1980, from memory); in the envelope frame the phase turns at
``omega = b (v_carrier - v_envelope) = 2 b (a^2 + b^2) = 16 xi (eta^2 + xi^2)``, times ``d`` for a
general equation (``t' = d t``). The exact breather is fitted (``eta``, ``xi``, centre, phase) to
the late frames.

Radiation invariants use :func:`kdvsweep.simulation.invariants` of the fitted shapes, placed on the
grid; for canonical KdV they are the exact soliton values mass ``4 kappa`` and ``int u^2 =
16 kappa^3 / 3`` (Miura, Gardner & Kruskal 1968).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ..spectrum import SolitonContent

#: Default ``min_amplitude``: this fraction of ``max |u|`` of the first frame.
DEFAULT_MIN_AMPLITUDE = 0.02


@dataclass(frozen=True)
class EmergingSoliton:
    """One soliton (or mKdV breather) measured in the late frames of a record (module notes)."""

    kind: str
    sign: int
    kappa_measured: float
    kappa_uncertainty: float
    amplitude: float
    amplitude_uncertainty: float
    speed: float
    speed_uncertainty: float
    t_separated: float
    track_times: np.ndarray
    track_centres: np.ndarray
    frames_late: int
    xi_measured: float = math.nan
    xi_uncertainty: float = math.nan
    frequency: float = math.nan
    frequency_uncertainty: float = math.nan
    predicted_index: int = -1
    kappa_predicted: float = math.nan
    amplitude_predicted: float = math.nan
    speed_predicted: float = math.nan
    frequency_predicted: float = math.nan


@dataclass(frozen=True)
class ContentMeasurement:
    """What :func:`measure_content` found in a record (module notes)."""

    emerging: tuple[EmergingSoliton, ...]
    n_predicted: int
    all_found: bool
    left_out: tuple[tuple[str, int, str], ...]
    data: dict[str, float]
    radiation: dict[str, float]
    radiation_predicted: dict[str, float]
    radiation_l2: float
    min_amplitude: float
    status: str = "ok"
    reason: str = ""
    predicted: SolitonContent | None = field(default=None, compare=False)

    @property
    def n_measured(self) -> int:
        """Number of solitons and breathers found."""
        return len(self.emerging)

    def table(self) -> pd.DataFrame:
        """One row per emerging soliton or breather (the scalar fields of EmergingSoliton)."""
        raise NotImplementedError


def measure_content(
    frames: object,
    times: object,
    grid: Any,
    equation: Any,
    predicted: SolitonContent | None = None,
    *,
    min_amplitude: float | None = None,
) -> ContentMeasurement:
    """The solitons and breathers that emerge in a record, fitted, matched to ``predicted``."""
    raise NotImplementedError
