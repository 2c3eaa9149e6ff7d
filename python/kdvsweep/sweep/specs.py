"""The typed run specs a sweep file is expanded into: the model, the settings and the initial data
of one run, as a dask worker receives them, and their plain form (what the digest hashes)."""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from .. import initial as init
from .. import units as physunits
from ..model import Equation, Grid
from .space import Value

#: Default ``sizing.tail``: the relative tail height at which solitons count as apart
#: (:mod:`kdvsweep.sweep.sizing`).
DEFAULT_TAIL = 1e-8

#: Default ``run.drift_limit``: the residual of the momentum balance (``momentum_residual``, the
#: relative drift of ``int u^2`` for conservative equations) beyond which a run is declared failed
#: (a resolved pseudo-spectral run keeps it near 1e-8; 1e-3 means far too coarse steps - common
#: practice, no source). ``RunSettings.drift_limit = None`` switches the check off.
DEFAULT_DRIFT_LIMIT = 1e-3

#: Default ``run.time_limit``: wall-clock seconds one run may step before it is stored as failed
#: (six hours: far above any run of the example sweeps, short of a run that never ends).
DEFAULT_TIME_LIMIT = 6 * 3600.0


@dataclass(frozen=True)
class ModelSpec:
    """The model of one run: the equation, the grid and the time stepping."""

    equation: Equation
    grid: Grid
    scheme: str
    dt: float
    tol: float | None = None

    def plain(self) -> dict[str, Any]:
        """As plain JSON data (the form the sweep digest is computed from)."""
        return {
            "equation": {"name": self.equation.name, **self.equation.core_fields()},
            "n": self.grid.n,
            "length": self.grid.length,
            "scheme": self.scheme,
            "dt": self.dt,
            "tol": self.tol,
        }

    @staticmethod
    def plain_jsons(
        equations: Sequence[Equation],
        scheme: str,
        grids: Sequence[Grid],
        dts: Sequence[float],
        tols: Sequence[float | None],
    ) -> list[str]:
        """:meth:`plain` of the models of ``scheme`` with each equation, grid, step and
        tolerance, as canonical JSON (sorted keys, no spaces), written without making the models
        (a sweep with an automatic step has a model per run); each equation written once."""
        written: dict[int, tuple[Equation, str]] = {}
        out = []
        tail = f',"scheme":{json.dumps(scheme)},"tol":'
        for equation, grid, dt, tol in zip(equations, grids, dts, tols, strict=True):
            held = written.get(id(equation))
            if held is None:
                plain = {"name": equation.name, **equation.core_fields()}
                text = json.dumps(plain, sort_keys=True, separators=(",", ":"), allow_nan=False)
                held = written[id(equation)] = (equation, text)
            out.append(
                f'{{"dt":{dt!r},"equation":{held[1]},"length":{grid.length!r},"n":{grid.n}'
                f"{tail}{'null' if tol is None else repr(tol)}}}"
            )
        return out


@dataclass(frozen=True)
class RunSettings:
    """What a run records and keeps.

    Attributes
    ----------
    t_end
        End time.
    record_times
        Frames recorded for the analysis: ``0, every, 2 every, ...`` and exactly ``t_end``.
    store_frames, frame_stride
        Keep every ``frame_stride``-th recorded frame in the store.
    predict_content
        Also store the soliton content the inverse scattering transform predicts from ``u0``
        (default on for data that are not solitons).
    drift_limit
        Momentum balance residual (``momentum_residual``) above which a run fails (``None``: no
        check; ``run.drift_limit``).
    max_amplitude
        Blow-up bound on ``max |u|`` (``run.max_amplitude``); ``None``: the core's default,
        ``1e3 max(1, max |u0|)``.
    min_amplitude
        Content runs: predicted solitons below this fraction of ``max |u0|`` are left out of the
        comparison (``None``: the measurement's default,
        :data:`kdvsweep.analysis.content.DEFAULT_MIN_AMPLITUDE`).
    tail
        Content runs: the relative level at which solitons count as apart (``sizing.tail``).
    time_limit
        Wall-clock seconds the run may step (``run.time_limit``); a run over it is stored as
        failed with that reason.
    accuracy
        The relative accuracy wanted in the shifts (``accuracy.shift``): shifts whose uncertainty
        is above it are not reported (:func:`kdvsweep.analysis.analyse_run`); ``None``: no target.
    verify
        Re-run at half the step to estimate the errors (``accuracy.verify``, the run is one of
        the seeded choice :func:`kdvsweep.sweep.accuracy.verified_runs`).
    """

    t_end: float
    record_times: tuple[float, ...]
    store_frames: bool = False
    frame_stride: int = 1
    predict_content: bool = False
    drift_limit: float | None = DEFAULT_DRIFT_LIMIT
    min_amplitude: float | None = None
    tail: float = DEFAULT_TAIL
    time_limit: float = DEFAULT_TIME_LIMIT
    max_amplitude: float | None = None
    accuracy: float | None = None
    verify: bool = False

    def plain(self) -> dict[str, Any]:
        """As plain JSON data; options at their defaults are left out, so adding an option
        leaves the digests of the sweeps that do not use it as they were. ``accuracy`` and
        ``verify`` are in when set: they change the stored results (shifts above the target
        are not reported; a verified run has error estimates). ``time_limit``,
        ``drift_limit`` and ``max_amplitude`` are left out always: they decide when a run is
        declared failed, not what it computes (so a sweep whose limits changed can retry its
        failed runs in the same store: ``kdvsweep run --retry-failed``)."""
        out: dict[str, Any] = {
            "t_end": self.t_end,
            "record_times": list(self.record_times),
            "store_frames": self.store_frames,
            "frame_stride": self.frame_stride,
        }
        if self.predict_content:
            out["predict_content"] = True
        if self.min_amplitude is not None:
            out["min_amplitude"] = self.min_amplitude
        if self.tail != DEFAULT_TAIL:
            out["tail"] = self.tail
        if self.accuracy is not None:
            out["accuracy"] = self.accuracy
        if self.verify:
            out["verify"] = True
        return out


@dataclass(frozen=True)
class RunSpec:
    """One run of a sweep (picklable: a dask worker receives it)."""

    run_id: int
    params: dict[str, Value]
    model: ModelSpec
    initial: init.InitialData
    run: RunSettings
    #: The physical system of a sweep with ``[units]`` (:mod:`kdvsweep.units`), else ``None``.
    units: physunits.System | None = None

    def plain(self) -> dict[str, Any]:
        """As plain JSON data (the form the sweep digest is computed from; ``units`` only when
        set, so sweeps without it keep their digests)."""
        out = {
            "run_id": self.run_id,
            "params": dict(self.params),
            "model": self.model.plain(),
            "initial": self.initial.plain(),
            "run": self.run.plain(),
        }
        if self.units is not None:
            out["units"] = self.units.plain()
        return out
