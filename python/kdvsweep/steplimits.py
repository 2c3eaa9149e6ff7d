"""Measured stability limits of the fixed-step schemes: where the constants of
:data:`kdvsweep.simulation.STEP_RULE` come from (``kdvsweep bench --steps`` runs this).

For each scheme, equation and grid, the largest stable step is found by bisection on runs of one
soliton (the equation's own exact one, ``SolitonForm.profile``, with its periodic images) in a box
of :data:`WIDTHS` widths of the ``kappa = 1`` soliton, for :data:`TRANSITS` crossings of the box.
A trial step is *unstable* when the core stops the run (blow-up), when the relative L2 error
against the exact travelling soliton exceeds :data:`ERROR_LIMIT` at the end, or when the error keeps
growing: the final error is more than :data:`GROWTH` times the largest of the first half, and
above :data:`NOISE` (a stable run's error grows like ``t`` or ``t^2``: phase and speed errors; an
instability grows exponentially). With ``f != 0`` the sech profile is not a solution; the error is
then taken against an ETDRK4 run of the same data at a quarter of the smallest step tried.

Each limit is expressed in the two dimensionless forms :data:`kdvsweep.simulation.STEP_RULE` uses:
``dt * nonlinear_rate`` and ``dt * sqrt(nonlinear_rate * linear_rate)``
(:func:`kdvsweep.simulation.nonlinear_rate`, :func:`kdvsweep.simulation.linear_rate`).
The adaptive scheme has no entry: it chooses its own step by its error estimate, which rejects the
growing steps of an instability.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from .exceptions import ConfigError, NumericalError
from .model import Equation, Grid
from .simulation import (
    ADAPTIVE,
    SCHEMES,
    STEP_RULE,
    WARN_DECADES,
    Simulation,
    linear_rate,
    nonlinear_rate,
)
from .sweep.sizing import min_points_per_width

#: Box length in widths of the kappa = 1 soliton (its tails are below 1e-8 at the box's edge).
WIDTHS = 40.0
#: Runs end when the soliton has crossed the box this many times.
TRANSITS = 2.0
#: Error growth from half time to the end counted as unstable (stable runs: about 2 to 4).
GROWTH = 8.0
#: Errors below this are round-off and phase noise; their growth is not counted (a phase error
#: that passes near zero early in the run grows by more than GROWTH at a few 1e-7 with a step
#: that is stable, as larger steps show).
NOISE = 1e-6
#: A final relative L2 error above this counts as unstable whatever its growth (the soliton is
#: lost: a stable but inaccurate step is the user's convergence study, not this rule's business).
ERROR_LIMIT = 0.3
#: The search doubles a stable step up to this ``dt * nonlinear_rate`` (then reports it as the
#: limit, with ``dt_unstable = inf``).
CEILING = 256.0
#: Frames at which the error is taken (the last two halves are compared).
FRAMES = 10
#: Bisection stops when the stable and unstable ratios are this close (relative).
PRECISION = 1.1

#: The default measurement: schemes, equations, grid sizes, kappas and fifth-order coefficients.
DEFAULT_SCHEMES = tuple(s for s in SCHEMES if s != ADAPTIVE)
DEFAULT_EQUATIONS = ("kdv", "mkdv")
DEFAULT_SIZES = (256, 512, 1024, 2048, 4096)
DEFAULT_KAPPAS = (0.5, 1.0, 2.0)
DEFAULT_F = (0.0,)


@dataclass(frozen=True)
class Case:
    """One measurement: a scheme on one soliton of ``equation`` (a preset name) with ``f``."""

    scheme: str
    equation: str
    n: int
    kappa: float
    f: float = 0.0

    def setup(self) -> tuple[Equation, Grid]:
        """The equation and the grid of this case."""
        eq = Equation.preset(self.equation, f=self.f)
        form = eq.soliton_form
        return eq, Grid(self.n, WIDTHS * float(form.width(1.0)))

    def rates(self) -> tuple[float, float]:
        """``(nonlinear_rate, linear_rate)`` of this case's soliton on its grid."""
        eq, grid = self.setup()
        amplitude = float(eq.soliton_form.amplitude(self.kappa))
        return (
            nonlinear_rate(amplitude, eq.a, eq.b, eq.dealias_fraction, grid.dx),
            linear_rate(eq, grid.dx),
        )

    @property
    def points_per_width(self) -> float:
        """The soliton's width over the grid spacing."""
        eq, grid = self.setup()
        return float(eq.soliton_form.width(self.kappa)) / grid.dx

    @property
    def resolved(self) -> bool:
        """Whether the grid resolves the soliton with no sweep warning (points per width at least
        :func:`kdvsweep.sweep.sizing.min_points_per_width` at ``WARN_DECADES``)."""
        eq, _ = self.setup()
        need = min_points_per_width(eq.dealias_fraction, WARN_DECADES)
        return self.points_per_width >= need


@dataclass(frozen=True)
class Limit:
    """The measured limit of one :class:`Case`: the largest stable and smallest unstable steps
    found, both as ``dt`` and in the two dimensionless forms (at the stable step)."""

    case: Case
    dt_stable: float
    dt_unstable: float
    nonlinear: float  # dt_stable * nonlinear_rate
    mixed: float  # dt_stable * sqrt(nonlinear_rate * linear_rate)
    error: float  # final relative L2 error at dt_stable
    verdict: str  # why dt_unstable is unstable (trial's verdict; "stable" when none was found)
    runs: int


def _soliton(eq: Equation, grid: Grid, kappa: float, t: float) -> np.ndarray:
    """The exact soliton at ``t`` with its two nearest periodic images (centre ``-L/4`` at 0)."""
    form = eq.soliton_form
    centre = -0.25 * grid.length + float(form.speed(kappa)) * t
    centre = (centre + 0.5 * grid.length) % grid.length - 0.5 * grid.length
    return sum(
        (form.profile(grid.x, kappa, centre + shift) for shift in (-grid.length, 0.0, grid.length)),
        np.zeros(grid.n),
    )


def _times(case: Case) -> np.ndarray:
    eq, grid = case.setup()
    end = TRANSITS * grid.length / abs(float(eq.soliton_form.speed(case.kappa)))
    return np.linspace(0.0, end, FRAMES + 1)[1:]


def _frames(case: Case, scheme: str, dt: float) -> np.ndarray | None:
    """The run's frames at :func:`_times`, or ``None`` when the core stops it (blow-up)."""
    eq, grid = case.setup()
    sim = Simulation(grid, eq, scheme, dt=dt)
    sim.set_state(_soliton(eq, grid, case.kappa, 0.0))
    try:
        return sim.record(_times(case))
    except NumericalError:
        return None


#: Why a trial step counts as unstable (:func:`trial`), or ``STABLE``.
STABLE, BLOW_UP, GROWING, LOST = "stable", "blow-up", "growing error", "error above limit"


def trial(case: Case, dt: float, reference: np.ndarray | None = None) -> tuple[bool, float, str]:
    """Whether ``dt`` is stable for ``case`` (module doc), the final relative L2 error, and the
    verdict (:data:`STABLE`, :data:`BLOW_UP`, :data:`GROWING` or :data:`LOST`).

    ``reference`` holds the frames to compare with; ``None`` means the exact soliton.
    """
    frames = _frames(case, case.scheme, dt)
    if frames is None:
        return False, math.inf, BLOW_UP
    eq, grid = case.setup()
    if reference is None:
        reference = np.array([_soliton(eq, grid, case.kappa, t) for t in _times(case)])
    errors = np.linalg.norm(frames - reference, axis=1) / np.linalg.norm(reference, axis=1)
    # the largest error of the first half: a phase error that passes near zero at half time
    # must not count as growth
    half, last = float(errors[: FRAMES // 2].max()), float(errors[-1])
    if not last <= ERROR_LIMIT:
        return False, last, LOST
    if last > NOISE and last > GROWTH * max(half, NOISE):
        return False, last, GROWING
    return True, last, STABLE


def measure(case: Case, low: float = 0.01, start: float | None = None) -> Limit:
    """The largest stable step of ``case``, to :data:`PRECISION`, by geometric bisection of
    ``dt * nonlinear_rate``.

    The search starts at ``start`` (default: the step rule in use, so that the first trials are
    near the answer and cheap), halves it down to ``low`` until a step is stable, doubles it up to
    :data:`CEILING` until one is not, and bisects between the two.

    Raises
    ------
    ConfigError
        For the adaptive scheme (it chooses its own steps), or when ``low`` is unstable too.
    """
    if case.scheme == ADAPTIVE or case.scheme not in SCHEMES:
        raise ConfigError(
            f"steplimits: expected a fixed-step scheme ({', '.join(DEFAULT_SCHEMES)}), "
            f"got {case.scheme!r}"
        )
    rate, lin = case.rates()
    if start is None:
        rule = STEP_RULE.get(case.scheme)
        start = rule.limit(rate, lin) * rate if rule is not None else 1.0
    start = min(max(start, low), CEILING)
    reference = None
    if case.f != 0:
        reference = _frames(case, "etdrk4", 0.25 * min(start, 0.5) / rate)
        if reference is None:
            raise ConfigError(f"steplimits: the reference run of {case} is unstable too")
    runs = 0

    def stable(ratio: float) -> tuple[bool, float, str]:
        nonlocal runs
        runs += 1
        return trial(case, ratio / rate, reference)

    good, bad, error, verdict = 0.0, math.inf, math.nan, STABLE
    ratio = start
    while True:  # down to a stable step
        ok, err, why = stable(ratio)
        if ok:
            good, error = ratio, err
            break
        bad, verdict = ratio, why
        if ratio <= low:
            raise ConfigError(f"steplimits: {case} is unstable at dt * rate = {low:g} already")
        ratio = max(0.5 * ratio, low)
    while bad == math.inf and good < CEILING:  # up to an unstable one
        ok, err, why = stable(min(2.0 * good, CEILING))
        if ok:
            good, error = min(2.0 * good, CEILING), err
        else:
            bad, verdict = min(2.0 * good, CEILING), why
    while bad / good > PRECISION:
        mid = math.sqrt(good * bad)
        ok, err, why = stable(mid)
        if ok:
            good, error = mid, err
        else:
            bad, verdict = mid, why
    return Limit(
        case,
        good / rate,
        bad / rate,
        good,
        good * math.sqrt(lin / rate),
        error,
        verdict,
        runs,
    )


def cases(
    schemes: Sequence[str] = DEFAULT_SCHEMES,
    equations: Sequence[str] = DEFAULT_EQUATIONS,
    sizes: Sequence[int] = DEFAULT_SIZES,
    kappas: Sequence[float] = DEFAULT_KAPPAS,
    fs: Sequence[float] = DEFAULT_F,
    min_points: float = 4.0,
) -> list[Case]:
    """Every combination, leaving out solitons with fewer than ``min_points`` points per width."""
    out = []
    for scheme in schemes:
        for name in equations:
            for n in sizes:
                for kappa in kappas:
                    for f in fs:
                        case = Case(scheme, name, n, kappa, f)
                        if case.points_per_width >= min_points:
                            out.append(case)
    return out


def measure_all(
    selected: Sequence[Case], on_limit: Callable[[Limit], None] | None = None
) -> list[Limit]:
    """:func:`measure` each case; ``on_limit`` sees each limit as soon as it is measured."""
    out = []
    for case in selected:
        limit = measure(case)
        out.append(limit)
        if on_limit is not None:
            on_limit(limit)
    return out


@dataclass(frozen=True)
class Spread:
    """The smallest and largest limit of one scheme in each dimensionless form, over all its
    cases and over those whose grid resolves the soliton (:attr:`Case.resolved`; NaN if none)."""

    scheme: str
    cases: int
    nonlinear: tuple[float, float]
    mixed: tuple[float, float]
    resolved: int
    resolved_nonlinear: tuple[float, float]
    resolved_mixed: tuple[float, float]


def _range(values: Sequence[float]) -> tuple[float, float]:
    return (min(values), max(values)) if values else (math.nan, math.nan)


def spread(limits: Sequence[Limit]) -> list[Spread]:
    """Per scheme: the range of ``dt * nonlinear_rate`` and ``dt * sqrt(nl * linear)``."""
    out = []
    for scheme in dict.fromkeys(lim.case.scheme for lim in limits):
        mine = [lim for lim in limits if lim.case.scheme == scheme]
        good = [lim for lim in mine if lim.case.resolved]
        out.append(
            Spread(
                scheme,
                len(mine),
                _range([lim.nonlinear for lim in mine]),
                _range([lim.mixed for lim in mine]),
                len(good),
                _range([lim.nonlinear for lim in good]),
                _range([lim.mixed for lim in good]),
            )
        )
    return out


__all__ = [
    "BLOW_UP",
    "DEFAULT_EQUATIONS",
    "DEFAULT_F",
    "DEFAULT_KAPPAS",
    "DEFAULT_SCHEMES",
    "DEFAULT_SIZES",
    "GROWING",
    "LOST",
    "STABLE",
    "Case",
    "Limit",
    "Spread",
    "cases",
    "measure",
    "measure_all",
    "spread",
    "trial",
]
