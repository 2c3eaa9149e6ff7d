"""Reference runs: each soliton of a perturbed collision run, run alone.

A collision under a perturbed equation (``f``, ``g`` or ``v`` non-zero) changes the solitons' speeds
along the run, so its shift is measured against the same soliton without the collision: the same
equation, grid, scheme, step, end time and frame times, the same centre and polarity, no other
soliton (:func:`kdvsweep.analysis.table.analyse_run`). Such a *reference run* is identified by the
digest of exactly what determines it (:attr:`ReferenceSpec.digest`), so it is computed once per
distinct soliton and shared by every run of a sweep that needs it, and kept in the store
(:meth:`kdvsweep.sweep.store.Store.write_references`); it is not a run of the sweep (no row, no
run id, not in the sweep's digest).

Runs that need references (:func:`needs_references`): a perturbed equation, initial data of kind
``"solitons"`` (superposed one-solitons) with two or more solitons.
"""

from __future__ import annotations

import hashlib
import json
import time
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # the store reads references without the analysis (scipy) or the core loaded
    from ..analysis.tracks import ReferenceTrack
    from .specs import ModelSpec, RunSpec

#: Version of what a reference computes (its initial data's construction, its tracking): part of
#: every reference's key, so a change of those rules gives new digests and stored references of
#: the old rules are not used.
REFERENCE_FORMAT = 1


@dataclass(frozen=True)
class ReferenceSpec:
    """One soliton run alone (picklable: a dask worker receives it).

    Attributes
    ----------
    model
        The run's equation, grid, scheme, step and tolerance.
    kappa, x0, sign
        The soliton, as in the run's initial data.
    record_times
        The run's frame times (the last is the run's end time).
    time_limit, max_amplitude
        The run's limits (they decide failure, not the result: not part of the digest).
    """

    model: ModelSpec
    kappa: float
    x0: float
    sign: int
    record_times: tuple[float, ...]
    time_limit: float | None = None
    max_amplitude: float | None = None

    def key(self) -> dict[str, Any]:
        """Everything that determines the reference's result, as plain JSON data."""
        return {
            "format": REFERENCE_FORMAT,
            "data": "solitons",  # one superposed soliton with its periodic images
            "model": self.model.plain(),
            "t_end": self.record_times[-1],
            "record_times": list(self.record_times),
            "kappa": self.kappa,
            "x0": self.x0,
            "sign": self.sign,
        }

    def key_text(self) -> str:
        """:meth:`key` as canonical JSON (sorted keys, no spaces, shortest float repr)."""
        return json.dumps(self.key(), sort_keys=True, separators=(",", ":"), allow_nan=False)

    @property
    def digest(self) -> str:
        """sha256 of :meth:`key_text`: the reference's identity."""
        return key_digest(self.key_text())


def key_digest(text: str) -> str:
    """The digest of a reference's key text."""
    return hashlib.sha256(text.encode()).hexdigest()


@dataclass(frozen=True)
class ReferenceResult:
    """A computed reference: its digest and key, its track, and its wall time (seconds)."""

    digest: str
    key: str
    track: ReferenceTrack
    wall_time: float = 0.0


def needs_references(spec: RunSpec) -> bool:
    """True when the run's collision shifts are measured against reference runs."""
    from .. import initial

    data = spec.initial
    return (
        spec.model.equation.perturbed
        and isinstance(data, initial.Solitons)
        and not data.exact
        and len(data.kappa) >= 2
    )


def references_for(spec: RunSpec) -> list[ReferenceSpec]:
    """The reference runs a run needs, one per soliton left to right (empty when none)."""
    from .. import initial

    if not needs_references(spec):
        return []
    data = spec.initial
    assert isinstance(data, initial.Solitons)
    return [
        ReferenceSpec(
            spec.model,
            float(k),
            float(x0),
            int(s),
            tuple(spec.run.record_times),
            spec.run.time_limit,
            spec.run.max_amplitude,
        )
        for k, x0, s in zip(data.kappa, data.x0, data.sign, strict=True)
    ]


def compute_reference(ref: ReferenceSpec) -> ReferenceResult:
    """Run one soliton alone and follow it; a failure (blow-up, time limit) is a failed track."""
    import numpy as np

    from .. import initial
    from ..analysis.tracks import ReferenceTrack, reference_track
    from ..simulation import Simulation

    start = time.perf_counter()
    model = ref.model
    try:
        sim = Simulation(
            model.grid,
            model.equation,
            scheme=model.scheme,
            dt=model.dt,
            tol=model.tol,
            time_limit=ref.time_limit,
            max_amplitude=ref.max_amplitude,
        )
        data = initial.Solitons((ref.kappa,), (ref.x0,), (ref.sign,))
        sim.set_state(initial.build_profile(data, model.grid, model.equation))
        times = np.asarray(ref.record_times, dtype=np.float64)
        frames = sim.record(times)
        if not np.all(np.isfinite(frames)):
            raise ValueError("state not finite")
        found = reference_track(frames, times, model.grid.length, model.equation, ref.kappa)
    except Exception as exc:  # a reference that fails is data: its runs say why they lack shifts
        found = ReferenceTrack.failed(f"reference run failed: {type(exc).__name__}: {exc}")
    return ReferenceResult(ref.digest, ref.key_text(), found, time.perf_counter() - start)


def compute_references(refs: list[ReferenceSpec]) -> list[ReferenceResult]:
    """Compute several references one after the other (one dask task)."""
    return [compute_reference(ref) for ref in refs]


def tracks_for(spec: RunSpec, known: Mapping[str, ReferenceTrack]) -> list[ReferenceTrack] | None:
    """The reference tracks of a run from ``known`` (by digest), None when it needs none; a missing
    one is a failed track that says so."""
    from ..analysis.tracks import ReferenceTrack

    refs = references_for(spec)
    if not refs:
        return None
    return [
        known.get(r.digest) or ReferenceTrack.failed("reference run missing (not computed)")
        for r in refs
    ]


__all__ = [
    "REFERENCE_FORMAT",
    "ReferenceResult",
    "ReferenceSpec",
    "compute_reference",
    "compute_references",
    "key_digest",
    "needs_references",
    "references_for",
    "tracks_for",
]
