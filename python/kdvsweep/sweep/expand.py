"""The runs of a sweep evaluated from its template, a block of runs at a time.

Every value that may differ between runs is a numpy array over the block (:class:`_Block`); a run
alone is a block of one, evaluated by the same code. A block whose check fails is evaluated again
run by run, so the error reported is the first run's first mistake, as if each run were evaluated
alone. :class:`Runs` is the sequence of a sweep's runs, evaluated when asked for, and computes the
digest (the sha256 of the canonical JSON of the format version, the frame settings and every run,
an ``.npy`` file by its content), written from the blocks' columns.
"""

from __future__ import annotations

import functools
import hashlib
import json
import math
import warnings
from collections import OrderedDict
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any, overload

import numpy as np
from numpy.typing import ArrayLike

from .. import exact, reference
from .. import initial as init
from .. import units as physunits
from ..exceptions import ConfigError, ShapeError
from ..model import Equation, Grid, SolitonForm
from ..simulation import ADAPTIVE, SCHEMES, dt_limit, nonlinear_rate, step_options
from . import accuracy as acc
from . import sizing
from .expr import ExpressionError
from .schema import Source, describe
from .space import Space, Value, canonical
from .specs import DEFAULT_TAIL, ModelSpec, RunSettings, RunSpec
from .template import (
    MAX_AUTO_POINTS,
    MAX_FRAMES,
    MAX_RUN_BYTES,
    MAX_STEPS,
    PRESETS,
    PROVISIONAL_POINTS,
    SIZING_TOL,
    NumSlot,
    Template,
    TextSlot,
)

#: Version of the canonical JSON the digest hashes (its ``"format"`` key).
FORMAT = 1


def _systems(tpl: Template, blk: _Block) -> tuple[list[physunits.System | None], np.ndarray]:
    """The physical system of every run (``[units]``; ``[None]`` without it): one object per
    distinct set of its keys' values, and each run's index into them."""
    if tpl.units is None:
        return [None], np.zeros(len(blk), dtype=np.int64)
    values = {key: blk.num(slot) for key, slot in tpl.units[1].items()}
    first, inverse = _unique_rows(*values.values())
    systems: list[physunits.System | None] = [
        _system(tpl, blk, r, {key: float(v[r]) for key, v in values.items()})
        for r in first.tolist()
    ]
    return systems, inverse


def _system(tpl: Template, blk: _Block, i: int, values: dict[str, float]) -> physunits.System:
    """The physical system of run ``i`` of ``blk``, its keys' ``values`` evaluated."""
    assert tpl.units is not None
    name, slots = tpl.units
    try:
        return physunits.make_system(name, values)
    except physunits.ParameterError as err:
        slot = slots.get(err.key)
        shown = describe(err.given if slot is None else slot.given)
        if slot is not None and slot.expr is not None:
            shown += f" (= {err.given!r})"
        raise blk.src.error(
            f"units.{err.key}", f"{shown} in {blk.label_of(i)}", err.expected
        ) from None
    except ConfigError as err:  # a system whose coefficients are not finite numbers
        raise blk.src.error(
            "units", f"{values} in {blk.label_of(i)}", f"a valid system ({err})"
        ) from None


# ----------------------------------------------------------------------------- one run


class _Block:
    """Runs of the sweep evaluated together: a value that may differ between runs is an array
    over the block (a run alone is a block of one, evaluated by the same code), and an error
    names the run it is about.

    A check refuses the first run of the block that fails it; :meth:`Runs.digest` evaluates a
    block whose check failed again run by run, so that the error reported is the one of the
    first run in the sweep's order, and the first mistake of that run, as if each run were
    evaluated alone.
    """

    def __init__(
        self, src: Source, space: Space, ids: np.ndarray, env: dict[str, np.ndarray]
    ) -> None:
        self.src = src
        self.space = space
        self.ids = ids
        #: parameters and derived values by name (float64 arrays; text as object arrays)
        self.env = env
        #: the names in ``env`` whose values are rounded already (:func:`canonical`)
        self.rounded = set(space.rounded)

    @classmethod
    def of(cls, src: Source, space: Space, ids: np.ndarray) -> _Block:
        """The runs ``ids`` of ``space``."""
        return cls(src, space, ids, space.columns(ids))

    def __len__(self) -> int:
        return len(self.ids)

    def take(self, where: np.ndarray | slice) -> _Block:
        """The runs at ``where`` (positions in this block) as a block."""
        out = _Block(
            self.src, self.space, self.ids[where], {k: v[where] for k, v in self.env.items()}
        )
        out.rounded = self.rounded
        return out

    def one(self, i: int) -> _Block:
        """Run ``i`` of the block alone."""
        return self.take(slice(i, i + 1))

    @property
    def run_id(self) -> int:
        """The first run's id (the run of a block of one)."""
        return int(self.ids[0])

    def label_of(self, i: int) -> str:
        """``run 7 (k=0.5, ...)``: how messages name run ``i`` of the block."""
        params = self.space[int(self.ids[i])]
        shown = ", ".join(f"{k}={v!r}" for k, v in params.items())
        if len(shown) > 60:
            shown = shown[:57] + "..."
        return f"run {int(self.ids[i])}" + (f" ({shown})" if shown else "")

    @property
    def label(self) -> str:
        """How messages name the first run (the run of a block of one)."""
        return self.label_of(0)

    def fail(self, key: str, given: object, expected: str, i: int = 0) -> ConfigError:
        """The error of run ``i`` at ``key``: ``given`` where ``expected`` was expected."""
        return self.src.error(key, f"{describe(given)} in {self.label_of(i)}", expected)

    def num(self, slot: NumSlot, check: str = "finite") -> np.ndarray:
        """The values in the runs, checked as ``finite``, ``positive``, ``sign`` or ``integer``."""
        expr = slot.expr
        if slot.literal is not None:
            values = np.full(len(self), slot.literal)
        elif expr is None:
            raise AssertionError("a numeric slot is a literal or an expression")
        elif expr.bare_name in self.rounded:  # a number as it is: rounded already
            values = self.env[expr.bare_name]
        else:
            try:
                raw = expr.evaluate_many(self.env, len(self))
            except ExpressionError as err:
                raise self.fail(
                    slot.key, slot.given, f"an expression that evaluates: {err}"
                ) from None
            values = _canonical(raw)
        if check == "finite":
            return values
        if check == "positive":
            expected, bad = "a positive number", ~(values > 0)
        elif check == "sign":
            expected, bad = "+1 or -1", ~((values == 1.0) | (values == -1.0))
        else:
            assert check == "integer"
            expected, bad = "an integer", ~(np.isfinite(values) & (values == np.floor(values)))
        i = _first(bad)
        if i is not None:
            shown = describe(slot.given)
            if slot.literal is None:
                shown = f"{shown} (= {float(values[i])!r})"
            raise self.src.error(slot.key, f"{shown} in {self.label_of(i)}", expected)
        return values

    def num1(self, slot: NumSlot, check: str = "finite") -> float:
        """:meth:`num` of a block of one."""
        assert len(self) == 1
        return float(self.num(slot, check)[0])

    def text(self, slot: TextSlot, choices: tuple[str, ...]) -> str:
        """A text value, the same in every run of the block (blocks are split by text values)."""
        if slot.literal is not None:
            return slot.literal
        assert slot.param is not None  # a text slot is a literal or a parameter
        values = self.env[slot.param]
        for i, value in enumerate(values.tolist()):
            if value not in choices:
                raise self.fail(
                    slot.key,
                    f"{slot.given} = {value!r}",
                    f"one of {', '.join(map(repr, choices))}",
                    i,
                )
        assert all(v == values[0] for v in values.tolist())
        return str(values[0])


def _first(bad: ArrayLike) -> int | None:
    """The first position where ``bad`` holds, or None."""
    flags = np.asarray(bad)
    if not flags.any():
        return None
    return int(np.argmax(flags))


def _canonical(values: np.ndarray) -> np.ndarray:
    """:func:`canonical` of every value (12 significant digits), rounded once per distinct
    value."""
    if values.size == 1:
        return np.full(values.shape, canonical(float(values.reshape(-1)[0])))
    distinct, inverse = np.unique(values, return_inverse=True)
    rounded = np.array([canonical(v) for v in distinct.tolist()], dtype=np.float64)
    return rounded[inverse.reshape(values.shape)]


def _lmax(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Python's ``max(a, b)`` element by element (``a`` unless ``b > a``, NaN included)."""
    return np.where(b > a, b, a)


def _lmin(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Python's ``min(a, b)`` element by element."""
    return np.where(b < a, b, a)


def _groups(keys: Sequence[np.ndarray], size: int) -> list[np.ndarray]:
    """Positions ``0..size-1`` grouped by equal rows of ``keys`` (each group ascending)."""
    if not keys or size <= 1:
        return [np.arange(size)]
    codes = np.zeros(size, dtype=np.int64)
    for key in keys:
        _, inverse = np.unique(key, return_inverse=True)
        _, codes = np.unique(
            codes * (int(inverse.max()) + 1) + inverse.reshape(-1), return_inverse=True
        )
        codes = codes.reshape(-1)
    order = np.argsort(codes, kind="stable")
    cuts = np.flatnonzero(np.diff(codes[order])) + 1
    return np.split(order, cuts)


def _unique_rows(*columns: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``(first, inverse)``: the position of each distinct row of ``columns`` (float64 arrays of
    one length) and each position's row index among them."""
    if len(columns[0]) == 1:  # a run alone: one row
        return np.zeros(1, dtype=np.int64), np.zeros(1, dtype=np.int64)
    table = np.stack([np.asarray(c, dtype=np.float64) for c in columns], axis=1)
    _, first, inverse = np.unique(table, axis=0, return_index=True, return_inverse=True)
    return first, inverse.reshape(-1)


class LoadWarnings:
    """Per-key warnings gathered over runs, reported once per key with the worst case.

    Runs are evaluated in blocks, not one by one: each key and note remembers the first run
    that raised it, and the messages come in that order, the worst case the first run of the
    largest badness, as if the runs had been evaluated in the sweep's order.
    """

    def __init__(self, label: str, total: int) -> None:
        self.label = label
        self.total = total
        #: key -> [what, runs counted, worst badness, its run, its detail, first run]: a count,
        #: not a list of runs
        self.items: dict[str, list[Any]] = {}
        #: message -> the first run that noted it (-1: the whole file)
        self.once: dict[str, int] = {}

    def add(self, key: str, what: str, run_id: int, badness: float, detail: str) -> None:
        """Count run ``run_id`` under ``key`` (``detail``: what is shown if it is the worst)."""
        self.add_many(key, what, np.array([run_id]), np.array([badness]), lambda _: detail)

    def add_many(
        self,
        key: str,
        what: str,
        run_ids: np.ndarray,
        badness: np.ndarray,
        detail: Callable[[int], str],
    ) -> None:
        """Count the runs ``run_ids`` (ascending) under ``key``; ``detail(i)`` describes the run
        at position ``i`` (asked only of the worst)."""
        if not len(run_ids):
            return
        item = self.items.setdefault(key, [what, 0, -math.inf, -1, "", int(run_ids[0])])
        item[1] += len(run_ids)
        item[5] = min(item[5], int(run_ids[0]))
        finite = ~np.isnan(badness)
        if finite.any():
            top = float(np.max(badness[finite]))
            i = int(np.argmax(finite & (badness == top)))
            run = int(run_ids[i])
            if top > item[2] or (top == item[2] and run < item[3]):
                item[2:5] = [top, run, f"run {run}: {detail(i)}"]

    def note(self, key: str, text: str, run_id: int = -1) -> None:
        """A note said once (``run_id``: the first run it is about; -1 for the whole file)."""
        message = f"{self.label}: {key}: {text}"
        self.once[message] = min(self.once.get(message, run_id), run_id)

    def messages(self) -> tuple[str, ...]:
        """The notes, then one line per key, each in the order of the first run concerned."""
        out = sorted(self.once, key=self.once.__getitem__)
        ranked = sorted(self.items.items(), key=lambda kv: kv[1][5])
        for key, (what, count, _, _, detail, _) in ranked:
            out.append(f"{self.label}: {key}: {count} of {self.total} runs {what} (worst {detail})")
        return tuple(out)


def _equations(
    tpl: Template, blk: _Block, systems: list[physunits.System | None], system_of: np.ndarray
) -> tuple[list[Equation], np.ndarray]:
    """The equation of every run of ``blk`` (which share their text values; run ``i``'s system
    is ``systems[system_of[i]]``): one object per distinct system and set of coefficients, and
    each run's index into them."""
    spec = tpl.equation
    slots = (
        {k: v for k, v in spec.items() if isinstance(v, NumSlot)} if isinstance(spec, dict) else {}
    )
    values = {k: blk.num(v) for k, v in slots.items()}
    first, inverse = _unique_rows(system_of, *values.values())
    equations = []
    for r in first.tolist():
        coefs = {k: float(v[r]) for k, v in values.items()}
        system = systems[int(system_of[r])]
        if system is not None:
            equations.append(_units_equation(tpl, blk, r, coefs, system))
        else:
            equations.append(_equation(tpl, blk, r, coefs))
    return equations, inverse


def _equation(tpl: Template, blk: _Block, i: int, coefs: dict[str, float]) -> Equation:
    """The equation of run ``i`` of ``blk``, its coefficients ``coefs`` evaluated."""
    spec = tpl.equation
    assert spec is not None  # only a sweep with [units] may leave the equation out
    if isinstance(spec, TextSlot):
        preset: str | None = blk.text(spec, PRESETS)
    else:
        slot = spec["preset"]
        preset = blk.text(slot, PRESETS) if isinstance(slot, TextSlot) else None
    try:
        return _make_equation(preset, tuple(coefs.items()))
    except ConfigError as err:
        shown = ", ".join(
            f"{k} = {min(f'{v:g}', repr(v), key=len)}" for k, v in coefs.items()
        ) or repr(preset)
        raise blk.src.error(
            "model.equation", f"{shown} in {blk.label_of(i)}", f"a valid equation ({err})"
        ) from None


def _units_equation(
    tpl: Template, blk: _Block, i: int, coefs: dict[str, float], system: physunits.System
) -> Equation:
    """The canonical equation of run ``i`` with ``[units]`` (its ``model.equation`` coefficients
    ``coefs`` evaluated): the system's ``a, b, d``; a given ``model.equation`` may add ``f, g, v,
    dealias`` (canonical units) and may repeat ``a, b, d`` or name a preset only where they agree
    with the system's."""
    target = system.equation()
    spec = tpl.equation
    extra: dict[str, float] = {}
    given: dict[str, tuple[str, object, float]] = {}  # coefficient -> (key, as written, value)
    if isinstance(spec, TextSlot):
        preset = Equation.preset(blk.text(spec, PRESETS))
        given = {k: (spec.key, spec.given, getattr(preset, k)) for k in ("a", "b", "d")}
    elif spec is not None:
        slot = spec["preset"]
        if isinstance(slot, TextSlot):
            preset = Equation.preset(blk.text(slot, PRESETS))
            given = {k: (slot.key, slot.given, getattr(preset, k)) for k in ("a", "b", "d")}
        for key, value in spec.items():
            if not isinstance(value, NumSlot):
                continue
            if key in ("a", "b", "d"):
                given[key] = (value.key, value.given, coefs[key])
            else:
                extra[key] = coefs[key]
    for coef, (key, shown, number) in given.items():
        want = getattr(target, coef)
        if not math.isclose(number, want, rel_tol=1e-9, abs_tol=1e-300):
            raise blk.fail(
                key,
                shown,
                f"{coef} = {want:.12g}, the value the [units] system {system.NAME!r} gives "
                f"(leave {coef} out: with [units] the equation's a, b, d come from the system)",
                i,
            )
    if not extra:
        return target
    try:
        return system.equation(**extra)
    except ConfigError as err:
        raise blk.src.error(
            "model.equation", f"{extra} in {blk.label_of(i)}", f"a valid equation ({err})"
        ) from None


@functools.lru_cache(maxsize=256, typed=True)
def _make_equation(preset: str | None, coefs: tuple[tuple[str, float], ...]) -> Equation:
    """The equation of a preset and coefficients: one object for all the runs that share them
    (an equation is immutable), so that what it computes once (its dealiasing) is kept."""
    values = dict(coefs)
    return Equation.preset(preset, **values) if preset else Equation(**values)  # type: ignore[arg-type]


# One object for the runs that share a model or settings: the digest encodes each once.
_make_settings = functools.lru_cache(maxsize=256, typed=True)(RunSettings)


@functools.lru_cache(maxsize=256, typed=True)
def _shared_model(
    eq: Equation, name: str, grid: Grid, scheme: str, dt: float, tol: float | None
) -> ModelSpec:
    # ``name`` is in the key: equations compare without it, and a model must keep its own
    return ModelSpec(eq, grid, scheme, dt, tol)


def _make_model(eq: Equation, grid: Grid, scheme: str, dt: float, tol: float | None) -> ModelSpec:
    """The model of a run, one object for the runs that share it (name of the equation included)."""
    return _shared_model(eq, eq.name, grid, scheme, dt, tol)


@functools.lru_cache(maxsize=256, typed=True)
def _make_grid(n: int, length: float) -> Grid:
    """The grid of ``n`` points on ``length``, one object for the runs that share it."""
    return Grid(n, length)


def _count(value: float) -> str:
    """A count for a message: in full up to 10^12, else in three digits (not 300 of them)."""
    return str(math.ceil(value)) if value <= 1e12 else f"{value:.3g}"


def _fixed(value: float) -> str:
    """One decimal for a message, or three digits for a huge value (``1e300``, not 300 digits)."""
    return f"{value:.1f}" if value < 1e6 else f"{value:.3g}"


@functools.lru_cache(maxsize=256, typed=True)
def _top_symbol(eq: Equation, dx: float) -> np.ndarray:
    """The linear symbol up to the largest wavenumbers ``pi / dx`` (on a 16-point grid of the
    same spacing)."""
    with np.errstate(all="ignore"):
        return reference.linear_symbol(Grid(16, 16 * dx), eq)


def _symbol_finite(eq: Equation, dx: np.ndarray, dt: np.ndarray) -> np.ndarray:
    """Whether the linear symbol times ``dt`` is finite at the largest wavenumbers ``pi / dx``,
    run by run (the symbol once per spacing)."""
    out = np.empty(len(dx), dtype=bool)
    distinct, inverse = np.unique(dx, return_inverse=True)
    inverse = inverse.reshape(-1)
    for g, spacing in enumerate(distinct.tolist()):
        sel = inverse == g
        with np.errstate(all="ignore"):
            top = dt[sel, None] * _top_symbol(eq, spacing)[None, :]
        out[sel] = np.all(np.isfinite(top), axis=1)
    return out


def _check_units(
    ctx: _Block,
    warn: LoadWarnings,
    system: physunits.System,
    scales: physunits.Scales,
    max_u: float,
    width: float,
) -> None:
    """Warn when a run leaves the regime its physical model assumes: each ratio of
    :meth:`kdvsweep.units.System.checks` (largest height, narrowest width) above its limit."""
    height = physunits.to_physical(max_u, "height", scales)
    length = physunits.to_physical(width, "length", scales)
    for check in system.checks(height, length):
        if check.exceeded:
            warn.add(
                f"units ({check.ratio})",
                f"leave the range the {system.NAME} model assumes: {check.meaning}, "
                f"{check.ratio} above {check.limit:g}",
                ctx.run_id,
                check.value,
                f"{check.ratio} = {check.value:.3g}",
            )


@functools.lru_cache(maxsize=256, typed=True)
def _record_times(end: float, every: float) -> tuple[float, ...]:
    """``0, every, 2 every, ...`` up to ``end``, ending exactly at ``end`` (one tuple for the
    runs that share it)."""
    count = math.floor(end / every + 1e-9)
    times = [canonical(i * every) for i in range(count + 1)]
    if end - times[-1] > 1e-9 * every:
        times.append(end)
    else:
        times[-1] = end
    return tuple(times)


def _expand_block(tpl: Template, blk: _Block, warn: LoadWarnings) -> list[_Part]:
    """Evaluate the template for the runs of ``blk``: one :class:`_Part` per group of runs that
    share their text values, physical system and equation (most blocks are one group)."""
    for dname, slot in tpl.derived:
        blk.env[dname] = blk.num(slot)
        blk.rounded.add(dname)
    parts = []
    texts = [blk.env[name] for name in tpl.parameters if tpl.kinds[name] == "text"]
    for where in _groups(texts, len(blk)):
        sub = blk.take(where)
        systems, system_of = _systems(tpl, sub)
        equations, eq_of = _equations(tpl, sub, systems, system_of)
        # one group per soliton form and dealiasing: runs whose equations differ only in f, g, v,
        # or whose physical systems differ only in their scales, are evaluated together
        forms: dict[tuple[float, ...], int] = {}
        form_of = np.array(
            [forms.setdefault((e.a, e.b, e.d, e.dealias_fraction), len(forms)) for e in equations]
        )
        for inner in _groups([form_of[eq_of]], len(sub)):
            part = _expand_uniform(
                tpl, sub.take(inner), warn, systems, system_of[inner], equations, eq_of[inner]
            )
            part.where = where[inner]
            parts.append(part)
    return parts


def _step_options(
    blk: _Block,
    tpl: Template,
    scheme: str,
    given_dt: np.ndarray | None,
    given_tol: np.ndarray | None,
) -> tuple[np.ndarray, np.ndarray | None]:
    """``dt`` and ``tol`` of every run (``tol`` None for a fixed-step scheme): the defaults and
    the rule "tol for the adaptive scheme only" live in the simulation
    (:func:`kdvsweep.simulation.step_options`), asked once per distinct pair."""
    m = len(blk)
    dts = np.full(m, -1.0) if given_dt is None else given_dt
    tols = np.full(m, -1.0) if given_tol is None else given_tol
    first, inverse = _unique_rows(dts, tols)
    out_dt, out_tol = [], []
    for i in first.tolist():
        d = None if given_dt is None else float(given_dt[i])
        t = None if given_tol is None else float(given_tol[i])
        try:
            dt, tol = step_options(scheme, d, t)
        except ConfigError as err:
            key, given = ("model.tol", tpl.tol.given) if tpl.tol else ("model.dt", d)
            raise blk.fail(key, given, f"a valid step option ({err})", i) from None
        out_dt.append(dt)
        out_tol.append(tol)
    dt_all = np.array(out_dt, dtype=np.float64)[inverse]
    if all(t is None for t in out_tol):
        return dt_all, None
    return dt_all, np.array(out_tol, dtype=np.float64)[inverse]


@dataclass
class _Sized:
    """The initial data of a group of runs, sized: what the checks common to every kind of data
    need (the box, the end, the narrowest width to resolve, the largest ``|u|``, the spread of the
    solitons' peaks), and the data themselves (profiles one by one, solitons as tables of runs
    by solitons)."""

    length: np.ndarray
    t_end: np.ndarray
    narrowest: np.ndarray
    max_u: np.ndarray
    spread: np.ndarray
    initials: list[init.InitialData] = field(default_factory=list)
    kappas: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    positions: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    signs: np.ndarray = field(default_factory=lambda: np.zeros((0, 0), dtype=np.int64))


def _soliton_runs(
    tpl: Template,
    blk: _Block,
    warn: LoadWarnings,
    eq: Equation,
    perturbed: np.ndarray,
    scheme: str,
    dt: np.ndarray,
    scales: list[physunits.Scales] | None,
) -> _Sized:
    """Solitons of a group of runs: their kappas, polarities and positions, the end and the box
    (given or automatic, :mod:`kdvsweep.sweep.sizing`), checked. ``eq``: an equation of the runs
    (its soliton form is theirs); ``perturbed``: whether each run's equation is."""
    m = len(blk)
    spread = np.full(m, acc.REFERENCE_SPREAD)  # of the solitons' peaks (points = 'auto', target)
    form, kappas, signs = _solitons(tpl, blk, eq, scales)
    # with a target, solitons overlap at most a hundredth of it (accuracy.auto_tail)
    tail = acc.auto_tail(tpl.target, tpl.tail)
    if tpl.target is not None:
        spread = acc.peak_spread(kappas, form, signs)
    with np.errstate(all="ignore"):
        speeds = np.asarray(form.speed(kappas), dtype=np.float64).reshape(kappas.shape)
        widths = form.per_soliton(form.width, kappas, signs)
        amplitudes = form.per_soliton(form.amplitude, kappas, signs)
    narrowest = widths[:, 0]
    highest = amplitudes[:, 0]
    total = 0.0 + amplitudes[:, 0]
    for j in range(1, kappas.shape[1]):
        narrowest = _lmin(narrowest, widths[:, j])
        highest = _lmax(highest, amplitudes[:, j])
        total = total + amplitudes[:, j]
    # mKdV solitons of opposite polarity peak at the sum of their amplitudes when they meet;
    # same-polarity mKdV and KdV pairs never exceed the larger one (checked on the exact
    # Hirota 2-solitons, kv.exact.multisoliton, for kappa = (1, 0.3 / 0.55 / 0.8)); the sum
    # is kept as the bound for Gardner pairs of opposite polarity
    mixed = np.any(signs != signs[:, :1], axis=1)
    max_u = np.where(mixed, total, highest)
    auto = tpl.length is None or tpl.end is None or tpl.initial["position"] == "auto"
    if auto and eq.d <= 0:
        raise blk.src.error(
            "model.equation",
            f"d = {eq.d} in {blk.label}",
            "d > 0 for automatic sizing (solitons moving right)",
        )
    if auto and perturbed.any():
        warn.note(
            "sizing",
            "automatic sizing uses the unperturbed soliton speeds 4 d kappa^2; "
            "the f, g, v terms change them",
            int(blk.ids[np.argmax(perturbed)]),
        )
    if tpl.initial["position"] == "auto":
        positions = _canonical(sizing.auto_positions(kappas, form, tail))
    else:
        cols = []
        for slot in tpl.initial["position"]:
            x = blk.num(slot)
            if scales is not None:  # metres (at t = 0 the run's frame and the lab's agree)
                dim = physunits.INITIAL_DIMENSIONS["position"]
                x = np.array(
                    [
                        canonical(physunits.to_canonical(p, dim, scale))
                        for p, scale in zip(x.tolist(), scales, strict=True)
                    ]
                )
            cols.append(x)
        positions = np.stack(cols, axis=1)
        bad = ~(positions[:, 1:] > positions[:, :-1])
        r = _first(bad.any(axis=1))
        if r is not None:
            i = int(np.argmax(bad[r])) + 1
            slot = tpl.initial["position"][i]
            raise blk.fail(
                slot.key,
                float(positions[r, i]),
                f"a position right of initial.position[{i - 1}]"
                f" = {float(positions[r, i - 1])!r} (solitons are listed left to right)",
                r,
            )
    if tpl.end is None:
        t_end = sizing.end_time(positions, kappas, speeds, form, tail)
        r = _first(t_end <= 0)
        if r is not None:
            raise blk.src.error(
                "run.end",
                f"'auto' in {blk.label_of(r)}",
                "a number: no soliton overtakes another (list the faster "
                "soliton first, on the left)",
            )
        r = _first(~(t_end / tpl.frame_every <= MAX_FRAMES))
        if r is not None:
            raise blk.src.error(
                "run.end",
                f"'auto' in {blk.label_of(r)} (t = {float(t_end[r]):.3g})",
                f"an end time of at most {MAX_FRAMES} frames of run.frame_every = "
                f"{tpl.frame_every:g} (slow solitons take long to overtake)",
            )
        t_end = _canonical(np.ceil(t_end / tpl.frame_every - 1e-9) * tpl.frame_every)
    else:
        t_end = blk.num(tpl.end, "positive")
    if not tpl.dt_auto:
        _check_steps(blk, scheme, dt, t_end)
    need = sizing.min_length(positions, kappas, speeds, form, tail, t_end)
    r = _first(~np.isfinite(need))
    if r is not None:
        raise blk.fail(
            f"initial.{tpl.initial['size']}",
            kappas[r].tolist(),
            f"solitons whose travel by t = {float(t_end[r]):g} is a finite distance",
            r,
        )
    if tpl.length is None:
        length = sizing.nice_ceil(need)
    else:
        length = blk.num(tpl.length, "positive")
        short = length < need
        r = _first(short)
        if r is not None and auto:
            raise blk.fail(
                "model.length",
                tpl.length.given,
                f"at least {float(need[r]):.4g} (or 'auto') so no soliton meets another's "
                f"periodic image by t = {float(t_end[r]):g}",
                r,
            )
        if r is not None:
            at = np.flatnonzero(short)
            warn.add_many(
                "model.length",
                "are too short for a clean collision",
                blk.ids[at],
                need[at] / length[at],
                lambda i: (
                    f"length {float(length[at[i]]):g} < {float(need[at[i]]):.4g} needed so "
                    "no soliton meets another's periodic image by t = "
                    f"{float(t_end[at[i]]):g}"
                ),
            )
    half = 0.5 * length[:, None]
    outside = ~((-half <= positions) & (positions < half))
    r = _first(outside.any(axis=1))
    if r is not None:
        i = int(np.argmax(outside[r]))
        key = "initial.position" if tpl.initial["position"] == "auto" else f"initial.position[{i}]"
        raise blk.fail(
            key,
            float(positions[r, i]),
            f"a position inside the box [{-0.5 * float(length[r]):g}, {0.5 * float(length[r]):g})",
            r,
        )
    return _Sized(length, t_end, narrowest, max_u, spread, [], kappas, positions, signs)


def _profile_runs(
    tpl: Template,
    blk: _Block,
    warn: LoadWarnings,
    equations: list[Equation],
    eq_of: np.ndarray,
    scheme: str,
    scales: list[physunits.Scales] | None,
) -> _Sized:
    """Data other than solitons of a group of runs (profiles, files, exact waves): the data,
    their end and box (given, or sized from their predicted solitons), checked; run ``i``'s
    equation is ``equations[eq_of[i]]``."""
    m = len(blk)
    initials: list[init.InitialData] = []
    narrowest = np.full(m, math.inf)
    max_u = np.zeros(m)
    # 'auto' length or end: sized from the predicted content below (checked when read)
    given_length = None if tpl.length is None else blk.num(tpl.length, "positive")
    given_end = None if tpl.end is None else blk.num(tpl.end, "positive")
    length = np.full(m, math.inf) if given_length is None else given_length.copy()
    t_end = np.full(m, math.nan) if given_end is None else given_end.copy()
    if tpl.kind == "npy":
        n = _given_points(blk, tpl, scheme)  # given: 'auto' is refused for a file
        r = _first(n != tpl.initial["size"])
        if r is not None:  # before sizing, which builds the data on the grid
            raise blk.fail(
                "initial.file",
                tpl.initial["path"],
                f"an array of n = {int(n[r])} values (the file holds {tpl.initial['size']})",
                r,
            )
        initials = [init.FileData(tpl.initial["path"], tpl.initial["sha256"])] * m
        max_u = np.full(m, float(tpl.initial["max_abs"]))
    elif tpl.kind in ("breather", "fifth-order-wave"):
        for i in range(m):
            data, max_u[i], narrowest[i] = _exact_wave(tpl, blk.one(i), equations[eq_of[i]])
            initials.append(data)
    else:
        values = {}
        for key in ("height", "center", "scale", "half_width", "edge"):
            if key in tpl.initial:
                check = "positive" if key in ("scale", "half_width") else "finite"
                values[key] = blk.num(tpl.initial[key], check)
                if scales is not None:  # [units]: a height, or a length in metres
                    dim = physunits.INITIAL_DIMENSIONS[key]
                    values[key] = np.array(
                        [
                            canonical(physunits.to_canonical(v, dim, scale))
                            for v, scale in zip(values[key].tolist(), scales, strict=True)
                        ]
                    )
        if "edge" in values:
            r = _first(values["edge"] < 0)
            if r is not None:
                raise blk.fail(
                    "initial.edge",
                    float(values["edge"][r]),
                    "a number >= 0 (0 is a sharp edge)",
                    r,
                )
        if tpl.kind == "box":
            r = _first(~(values["half_width"] < 0.5 * length))
            if r is not None:
                raise blk.fail(
                    "initial.half_width",
                    float(values["half_width"][r]),
                    f"less than half the length ({0.5 * float(length[r]):g})",
                    r,
                )
        rows = [
            dict(zip(values, row, strict=True))
            for row in zip(*(v.tolist() for v in values.values()), strict=True)
        ]
        form_or_none = equations[int(eq_of[0])].soliton_form_or_none()  # the runs' form
        for i, row in enumerate(rows):
            initials.append(init.Box(**row) if tpl.kind == "box" else init.Profile(tpl.kind, **row))
            if tpl.kind == "sech2" and form_or_none is not None and form_or_none.family == "kdv":
                narrowest[i] = _sech2_narrowest(row["height"], row["scale"], form_or_none)
        max_u = np.abs(values["height"])
    if given_length is None or given_end is None or tpl.points is None:
        for i, initial in enumerate(initials):
            one = blk.one(i)
            length[i], t_end[i], predicted_narrowest = _content_sizing(
                tpl,
                one,
                warn,
                equations[eq_of[i]],
                initial,
                None if given_length is None else float(given_length[i]),
                None if given_end is None else float(given_end[i]),
            )
            narrowest[i] = min(float(narrowest[i]), predicted_narrowest)
            if tpl.points is None:  # the profile itself must be resolved too
                narrowest[i] = min(float(narrowest[i]), _profile_width(initial))
            if isinstance(initial, init.Box) and not initial.half_width < 0.5 * length[i]:
                raise one.fail(
                    "initial.half_width",
                    initial.half_width,
                    f"less than half the automatic length ({0.5 * float(length[i]):g})",
                )
    return _Sized(length, t_end, narrowest, max_u, np.full(m, acc.REFERENCE_SPREAD), initials)


def _each(index: np.ndarray) -> Iterator[tuple[int, np.ndarray]]:
    """``(k, positions)`` for each value ``k`` of ``index`` (the positions where it is, ascending)."""
    if len(index) == 1:
        yield int(index[0]), np.zeros(1, dtype=np.int64)
        return
    order = np.argsort(index, kind="stable")
    for positions in np.split(order, np.flatnonzero(np.diff(index[order])) + 1):
        if len(positions):
            yield int(index[positions[0]]), positions


def _dt_limits(
    scheme: str,
    max_u: np.ndarray,
    equations: list[Equation],
    eq_of: np.ndarray,
    dx: np.ndarray,
) -> np.ndarray:
    """:func:`kdvsweep.simulation.dt_limit` of every run (its own equation: ``f`` changes the
    dispersive rate), asked once per equation."""
    out = np.empty(len(max_u))
    for k, at in _each(eq_of):
        out[at] = dt_limit(scheme, max_u[at], equations[k], dx[at])
    return out


def _expand_uniform(
    tpl: Template,
    blk: _Block,
    warn: LoadWarnings,
    systems: list[physunits.System | None],
    system_of: np.ndarray,
    equations: list[Equation],
    eq_of: np.ndarray,
) -> _Part:
    """The runs of ``blk``, which share their text values and soliton form: run ``i``'s
    equation is ``equations[eq_of[i]]`` (they differ at most in ``f``, ``g``, ``v``), its
    physical system ``systems[system_of[i]]`` (they differ at most in their scales)."""
    m = len(blk)
    eq = equations[int(eq_of[0])]  # its soliton form, dealiasing, a and b are every run's
    scales: list[physunits.Scales] | None = None  # of each run, with [units]
    if tpl.units is not None:
        each: dict[int, physunits.Scales] = {}
        for k in system_of.tolist():
            if k not in each:
                system = systems[k]
                assert system is not None
                each[k] = system.scales()
        scales = [each[k] for k in system_of.tolist()]
    scheme = blk.text(tpl.scheme, SCHEMES)
    if scheme != ADAPTIVE and not tpl.dt_auto:
        if tpl.dt is None:  # a sweep file names the step of a fixed-step scheme
            raise blk.src.error(
                "model.dt",
                f"nothing in {blk.label} (scheme {scheme!r})",
                f"a positive time step (required unless scheme = {ADAPTIVE!r})",
            )
        if tpl.tol is not None:
            raise blk.fail(
                "model.tol", tpl.tol.given, f"no tol with scheme {scheme!r} ({ADAPTIVE} only)"
            )
    given_dt = blk.num(tpl.dt, "positive") if tpl.dt else None
    given_tol = blk.num(tpl.tol, "positive") if tpl.tol else None
    if tpl.dt_auto and scheme != ADAPTIVE and tpl.tol is not None:
        raise blk.fail(
            "model.tol", tpl.tol.given, f"no tol with scheme {scheme!r} ({ADAPTIVE} only)"
        )
    dt, tol = _step_options(blk, tpl, scheme, given_dt, given_tol)

    soliton = tpl.soliton_data
    if soliton:
        perturbed = np.array([equations[k].perturbed for k in eq_of.tolist()])
        sized = _soliton_runs(tpl, blk, warn, eq, perturbed, scheme, dt, scales)
    else:
        sized = _profile_runs(tpl, blk, warn, equations, eq_of, scheme, scales)
    length, t_end, narrowest, max_u = sized.length, sized.t_end, sized.narrowest, sized.max_u
    initials, spread = sized.initials, sized.spread

    dealias = eq.dealias_fraction
    if tpl.points is None:
        decades = np.full(m, sizing.WARN_DECADES)
        if tpl.target is not None:
            decades = np.array(
                [acc.auto_decades(tpl.target, sizing.WARN_DECADES, s) for s in spread.tolist()]
            )
        need = np.asarray(sizing.points_needed(narrowest, length, dealias, decades))
        n = np.zeros(m, dtype=np.int64)
        fits = need <= MAX_AUTO_POINTS
        if fits.any():
            n[fits] = sizing.auto_points(
                narrowest[fits],
                length[fits],
                dealias,
                decades[fits],
            )
        r = _first(~((0 < n) & (n <= MAX_AUTO_POINTS)))
        if r is not None:
            raise blk.src.error(
                "model.points",
                f"'auto' in {blk.label_of(r)}",
                f"a grid the automatic "
                f"choice can make: it needs n = {_count(float(need[r]))} > {MAX_AUTO_POINTS} for "
                f"length {float(length[r]):g} (raise sizing.tail or the smallest kappa)",
            )
    else:
        n = _given_points(blk, tpl, scheme)
    grids, grid_of = _grids(blk, n, length)
    dx = length / n
    # each fixed-step scheme's measured stable step (inf for the adaptive scheme, and for no data)
    limit = _dt_limits(scheme, max_u, equations, eq_of, dx)
    if tpl.dt_auto and scheme != ADAPTIVE and soliton:  # needs the grid: the stable step
        target = acc.DEFAULT_AUTO_TARGET if tpl.target is None else tpl.target
        dt = np.array(
            [
                acc.auto_dt(scheme, target, acc.soliton_rate(eq.a, eq.b, u, w), lim)
                for u, w, lim in zip(
                    max_u.tolist(), narrowest.tolist(), limit.tolist(), strict=True
                )
            ]
        )
        _check_steps(blk, scheme, dt, t_end)
    # limits on what a run would take, checked before anything is built or run
    frames = _frame_count(t_end, tpl.frame_every)
    r = _first(~(frames <= MAX_FRAMES))
    if r is not None:
        raise blk.fail(
            "run.frame_every",
            tpl.frame_every,
            f"at most {MAX_FRAMES} frames up to t = {float(t_end[r]):g}",
            r,
        )
    _check_effort(blk, tpl, n, scheme, dt, t_end, frames)
    resolved = np.isfinite(narrowest)
    if resolved.any():
        _check_resolution(blk, warn, narrowest, n, length, dealias, tpl.points is None, resolved)
    if not soliton:  # any other data: their own spectrum
        auto = tpl.points is None
        for i, initial in enumerate(initials):
            one = blk.one(i)
            _check_spectrum(one, warn, initial, grids[grid_of[i]], equations[eq_of[i]], auto)
    _check_scales(blk, tpl, equations, eq_of, dx, dt, max_u, dealias)
    over = np.flatnonzero(dt > limit)
    warn.add_many(
        "model.dt",
        "exceed the measured stable step of their scheme (kdvsweep.simulation.STEP_RULE)",
        blk.ids[over],
        dt[over] / limit[over],
        lambda i: f"{scheme}: dt = {float(dt[over[i]]):g}; use dt <= {float(limit[over[i]]):.3g}",
    )
    if scales is not None:
        for i in range(m):
            system = systems[int(system_of[i])]
            assert system is not None
            width = narrowest[i] if soliton else min(narrowest[i], _profile_width(initials[i]))
            _check_units(blk.one(i), warn, system, scales[i], float(max_u[i]), float(width))
    return _Part(
        tpl, blk, equations, eq_of, systems, system_of, scheme, dt, tol, grids, grid_of, sized
    )


def _solitons(
    tpl: Template, blk: _Block, eq: Equation, units: list[physunits.Scales] | None = None
) -> tuple[SolitonForm, np.ndarray, np.ndarray]:
    """Soliton form, kappas and signs (runs by solitons) of a soliton initial datum (``units``:
    each run's scales with ``[units]``, whose amplitudes and laboratory speeds are converted
    here)."""
    spec = tpl.initial
    size = spec["size"]
    m = len(blk)
    form = eq.soliton_form_or_none()
    if form is None:
        raise blk.src.error(
            "initial.kind",
            f"{tpl.kind!r} for equation {eq.name!r} (a={eq.a}, b={eq.b}, d={eq.d}) in {blk.label}",
            "an equation with solitons: KdV (a != 0, b = 0), focusing mKdV (a = 0, b d > 0) or "
            "Gardner (a != 0, b != 0), with d != 0",
        )
    own = form.sign
    signs = np.full((m, len(spec["sizes"])), own, dtype=np.int64)
    if "polarity" in spec:
        for j, slot in enumerate(spec["polarity"]):
            signs[:, j] = blk.num(slot, "sign").astype(np.int64)
        for j, slot in enumerate(spec["polarity"]):
            r = _first(~np.isin(signs[:, j], form.polarities))
            if r is not None:
                raise blk.fail(
                    slot.key,
                    slot.given,
                    f"{own:+d}: solitons of this equation have one sign (both polarities need "
                    "focusing mKdV, or Gardner with b d > 0)",
                    r,
                )
    kappas = np.empty(signs.shape)
    for j, slot in enumerate(spec["sizes"]):
        values = blk.num(slot, "positive")
        if units is not None or size != "kappa":
            values = np.array(
                [
                    _soliton_size(
                        tpl,
                        blk,
                        i,
                        slot,
                        form,
                        eq,
                        None if units is None else units[i],
                        v,
                        int(signs[i, j]),
                    )
                    for i, v in enumerate(values.tolist())
                ]
            )
        if units is not None or size != "kappa" or slot.literal is not None:
            values = _canonical(values)  # (an expression's value is rounded already)
        r = _first(~(values < form.max_kappa))
        if r is not None:
            raise blk.fail(
                slot.key,
                slot.given,
                f"kappa below the table-top limit {form.max_kappa:.6g} of this Gardner equation "
                f"(kappa = {float(values[r]):.6g})",
                r,
            )
        with np.errstate(all="ignore"):  # overflow is refused below, not printed
            scales = (
                form.per_soliton(form.amplitude, values[:, None], signs[:, j : j + 1])[:, 0],
                np.asarray(form.speed(values), dtype=np.float64),
                form.per_soliton(form.width, values[:, None], signs[:, j : j + 1])[:, 0],
            )
        bad = ~(values > 0)
        for v in scales:
            bad |= ~np.isfinite(v)
        r = _first(bad)
        if r is not None:
            raise blk.fail(
                slot.key,
                slot.given,
                f"a soliton of finite amplitude, speed and width (kappa = {float(values[r]):.3g} "
                f"gives {float(scales[0][r]):.3g}, {float(scales[1][r]):.3g}, "
                f"{float(scales[2][r]):.3g})",
                r,
            )
        kappas[:, j] = values
    if tpl.kind == "multisoliton":  # the core's own rules (how many, distinct), on no points
        bare = Equation(a=eq.a, b=eq.b, d=eq.d)  # the exact solution is the unperturbed one's
        for i in range(m):
            try:
                exact.multisoliton(
                    np.zeros(0),
                    0.0,
                    kappas[i].tolist(),
                    [0.0] * kappas.shape[1],
                    bare,
                    signs=None if form.family == "kdv" else signs[i].tolist(),
                )
            except ConfigError as err:
                given = [slot.given for slot in spec["sizes"]]
                raise blk.fail(
                    f"initial.{size}", given, f"solitons of an exact N-soliton ({err})", i
                ) from None
    return form, kappas, signs


def _soliton_size(
    tpl: Template,
    blk: _Block,
    i: int,
    slot: NumSlot,
    form: SolitonForm,
    eq: Equation,
    units: physunits.Scales | None,
    value: float,
    sign: int,
) -> float:
    """The kappa of a soliton given by its amplitude or speed, or in physical units (run ``i``)."""
    size = tpl.initial["size"]
    if units is not None:  # amplitude: height; speed: laboratory; kappa: per metre
        value = physunits.to_canonical(value, physunits.INITIAL_DIMENSIONS[size], units)
        if not value > 0:  # a laboratory speed at or below the linear long-wave speed
            raise blk.fail(
                slot.key,
                slot.given,
                f"a laboratory speed above the linear long-wave speed c0 = {units.c0:.6g} "
                "(solitary waves are faster than linear waves)",
                i,
            )
    try:
        if size == "amplitude":
            value = form.kappa_from_amplitude(value, sign)
        elif size == "speed":
            if eq.d < 0:
                raise blk.fail(
                    slot.key, slot.given, "speeds only for d > 0 (solitons move right)", i
                )
            value = form.kappa_from_speed(value)
    except ConfigError as err:
        raise blk.fail(slot.key, slot.given, f"a soliton of this equation ({err})", i) from None
    return value


def _given_points(blk: _Block, tpl: Template, scheme: str = "") -> np.ndarray:
    """``model.points`` as written, refused before anything is built when no run could hold it:
    beyond 2^62, or one frame and the stepper's buffers beyond :data:`MAX_RUN_BYTES`."""
    assert tpl.points is not None
    points = blk.num(tpl.points, "integer")
    r = _first(~(np.abs(points) <= 2**62))  # no grid is this large: refused here in a short line
    if r is not None:
        raise blk.fail("model.points", float(points[r]), "an even integer >= 16 (at most 2^62)", r)
    n = points.astype(np.int64)
    need = sizing.run_memory(n.astype(np.float64), 1, scheme)
    r = _first(need > MAX_RUN_BYTES)
    if r is not None:
        raise blk.fail(
            "model.points",
            int(n[r]),
            f"a run that fits in {MAX_RUN_BYTES / 2**30:g} GiB: n = {int(n[r])} needs about "
            f"{float(need[r]) / 2**30:.3g} GiB for the stepper's buffers and one frame",
            r,
        )
    return n


def _check_steps(blk: _Block, scheme: str, dt: np.ndarray, t_end: np.ndarray) -> None:
    """Refuse a fixed step that would take more than :data:`MAX_STEPS` steps up to ``t_end``."""
    if scheme == ADAPTIVE:
        return
    r = _first(~(t_end / dt <= MAX_STEPS))
    if r is not None:
        d, t = float(dt[r]), float(t_end[r])
        raise blk.fail(
            "model.dt",
            d,
            f"a step giving at most {MAX_STEPS:.0e} steps up to t = {t:g} (t / dt = {t / d:.3g})",
            r,
        )


def _check_effort(
    blk: _Block,
    tpl: Template,
    n: np.ndarray,
    scheme: str,
    dt: np.ndarray,
    t_end: np.ndarray,
    frames: np.ndarray,
) -> None:
    """Refuse a run whose step count or memory is out of reach (:data:`MAX_STEPS`,
    :data:`MAX_RUN_BYTES`), naming what it would take."""
    _check_steps(blk, scheme, dt, t_end)
    need = sizing.run_memory(n.astype(np.float64), np.floor(frames), scheme)
    r = _first(need > MAX_RUN_BYTES)
    if r is not None:
        count, frame_count = int(n[r]), int(frames[r])
        key = "model.points" if count * 64 > frame_count else "run.frame_every"
        given = tpl.frame_every if key == "run.frame_every" else count
        raise blk.fail(
            key,
            given,
            f"a run that fits in {MAX_RUN_BYTES / 2**30:g} GiB: n = {count} with {frame_count} "
            f"frames needs about {float(need[r]) / 2**30:.3g} GiB (frames, their analysis and the "
            f"{scheme} stepper's buffers)",
            r,
        )


def _check_scales(
    blk: _Block,
    tpl: Template,
    equations: list[Equation],
    eq_of: np.ndarray,
    dx: np.ndarray,
    dt: np.ndarray,
    max_u: np.ndarray,
    dealias: float,
) -> None:
    """Refuse a run whose terms overflow float64 from the start: the linear symbol at the largest
    wavenumber times ``dt``, or the nonlinear term at ``max |u|``."""
    finite = np.empty(len(dx), dtype=bool)
    for k, at in _each(eq_of):
        finite[at] = _symbol_finite(equations[k], dx[at], dt[at])
    r = _first(~finite)
    if r is not None:
        eq = equations[int(eq_of[r])]
        raise blk.src.error(
            "model.equation",
            f"d = {eq.d:.3g}, f = {eq.f:.3g}, v = {eq.v:.3g} in {blk.label_of(r)}",
            f"coefficients whose linear term times dt is finite at the largest wavenumber "
            f"pi/dx = {math.pi / float(dx[r]):.4g}",
        )
    eq = equations[int(eq_of[0])]  # a and b are every run's
    with np.errstate(all="ignore"):
        rate = nonlinear_rate(max_u, eq.a, eq.b, dealias, dx) * max_u
    r = _first(~np.isfinite(rate))
    if r is not None:
        key = "initial.file" if tpl.kind == "npy" else "model.equation"
        raise blk.src.error(
            key,
            f"max |u| = {float(max_u[r]):.3g} with a = {eq.a:.3g}, b = {eq.b:.3g} in "
            f"{blk.label_of(r)}",
            "data and coefficients whose nonlinear term (|a| max|u| + |b| max u^2) max|u| "
            "k_cut is a finite number",
        )


def _check_resolution(
    blk: _Block,
    warn: LoadWarnings,
    narrowest: np.ndarray,
    n: np.ndarray,
    length: np.ndarray,
    dealias: float,
    auto: bool,
    where: np.ndarray,
) -> None:
    """Refuse runs (``where`` they have a width to resolve) with fewer than the refusal level of
    points per width of their narrowest soliton; warn below the double-precision level."""
    dx = length / n
    per_width = np.where(where, narrowest / dx, math.inf)
    refuse = sizing.min_points_per_width(dealias, sizing.REFUSE_DECADES)
    good = sizing.min_points_per_width(dealias, sizing.WARN_DECADES)
    r = _first(per_width < refuse)
    if r is not None:
        w, size = float(narrowest[r]), float(length[r])
        need = sizing.points_needed(w, size, dealias)
        shown = str(sizing.auto_points(w, size, dealias)) if need <= 1e12 else None
        raise blk.fail(
            "model.points",
            int(n[r]),
            f"at least {_fixed(refuse)} points per width of the narrowest soliton "
            f"(width {w:.4g}, dx {float(dx[r]):.4g} gives {_fixed(float(per_width[r]))}); "
            + (
                f"n = {shown} or 'auto' gives {_fixed(good)}"
                if shown
                else f"n = {_count(need)} would: no grid can (a wider soliton, or dealias, "
                "is out of range)"
            ),
            r,
        )
    if not auto:
        low = np.flatnonzero(per_width < good)
        warn.add_many(
            "model.points",
            f"resolve the narrowest soliton with fewer than {_fixed(good)} points "
            "per width (double precision)",
            blk.ids[low],
            1 / per_width[low],
            lambda i: f"{float(per_width[low[i]]):.1f} points per width",
        )


def _frame_count(end: float | np.ndarray, every: float) -> np.ndarray:
    """Frames :func:`_record_times` gives, without building them (``end / every`` when that is
    inf or huge)."""
    end = np.asarray(end, dtype=np.float64)
    with np.errstate(all="ignore"):  # inf, as float arithmetic gives
        ratio = end / every
        huge = ~(ratio < 1e15)
        count = np.floor(np.where(huge, 0.0, ratio) + 1e-9)
        last = _canonical(count * every)
        out = count + 1.0 + np.where(end - last > 1e-9 * every, 1.0, 0.0)
    return np.where(huge, ratio, out)


def _grids(blk: _Block, n: np.ndarray, length: np.ndarray) -> tuple[list[Grid], np.ndarray]:
    """The grid of every run: one object per distinct ``(n, length)`` and each run's index."""
    first, inverse = _unique_rows(n, length)
    grids = []
    for r in first.tolist():
        try:
            grids.append(_make_grid(int(n[r]), float(length[r])))
        except ConfigError as err:
            raise blk.fail("model.points", int(n[r]), f"an even integer >= 16 ({err})", r) from None
    return grids, inverse


def _exact_wave(tpl: Template, ctx: _Block, eq: Equation) -> tuple[init.InitialData, float, float]:
    """The exact breather or ``sech^4`` wave of a run, refused (one line, naming why) for an
    equation without it; with its ``max |u0|`` and the width a grid must resolve."""
    spec = tpl.initial
    center = ctx.num1(spec["center"])
    shown = f"{tpl.kind!r} for equation {eq.name!r} ({eq.describe()}) in {ctx.label}"
    if tpl.kind == "breather":
        try:
            exact.breather_alpha(eq)
        except ConfigError:
            raise ctx.src.error(
                "initial.kind",
                shown,
                "an unperturbed focusing mKdV equation (a = 0, b d > 0, f = g = v = 0): the "
                "breather is exact only there",
            ) from None
        eta, xi = ctx.num1(spec["eta"], "positive"), ctx.num1(spec["xi"], "positive")
        data = init.Breather(eta, xi, center, ctx.num1(spec["phase"]))
        return data, eq.soliton_form.breather_amplitude(eta), data.width
    why = exact.fifth_order_obstacle(eq)
    if why:
        raise ctx.src.error("initial.kind", shown, f"an equation with the sech^4 wave: {why}")
    wave = exact.fifth_order_form(eq)
    return init.Sech4Wave(center), abs(wave.amplitude), wave.width


def _provisional_length(initial: init.InitialData) -> float:
    """A length holding the whole profile (``length = 'auto'``): four times its reach from 0."""
    assert isinstance(initial, init.Profile | init.Box | init.Breather)  # npy data: their length
    if isinstance(initial, init.Breather):
        return 4.0 * (abs(initial.center) + initial.reach)
    if isinstance(initial, init.Box):
        reach = initial.half_width + 20.0 * initial.edge
    else:  # sech^2 falls to 1e-18 within 21.4 scales, a Gaussian within 6.5
        reach = (21.4 if initial.shape == "sech2" else 6.5) * initial.scale
    return 4.0 * (abs(initial.center) + reach)


def _profile_width(initial: init.InitialData) -> float:
    """The width a grid must resolve in the profile itself (``points = 'auto'``): the scale of
    ``sech2`` and ``gaussian`` data, the edge of a box (inf: a sharp box or a file has none)."""
    if isinstance(initial, init.Profile):
        return initial.scale
    if isinstance(initial, init.Breather):
        return initial.width
    if isinstance(initial, init.Box) and initial.edge > 0:
        return initial.edge
    return math.inf


def _predicted(
    tpl: Template, ctx: _Block, key: str, eq: Equation, initial: init.InitialData, grid: Grid
) -> tuple[Any, np.ndarray]:
    """The predicted content of the initial data on ``grid`` (cached per distinct profile)."""
    from .. import spectrum  # scipy's dense eigensolvers: loaded only by sweeps that size content

    u0 = init.build_profile(initial, grid, eq)
    cache_key = json.dumps(
        [initial.plain(), grid.n, grid.length, dict(eq.core_fields())], sort_keys=True
    )
    if cache_key not in tpl.content_cache:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # accuracy notes: sizing needs the speeds only
                tpl.content_cache[cache_key] = spectrum.bound_states(u0, grid, eq, tol=SIZING_TOL)
        except (ConfigError, ShapeError) as err:
            raise ctx.fail(
                key, "auto", f"a number: sizing needs the predicted solitons ({err})"
            ) from None
    return tpl.content_cache[cache_key], u0


def _content_sizing(
    tpl: Template,
    ctx: _Block,
    warn: LoadWarnings,
    eq: Equation,
    initial: init.InitialData,
    length: float | None,
    t_end: float | None,
) -> tuple[float, float, float]:
    """``length`` and ``t_end`` of profile data from their predicted solitons
    (:mod:`kdvsweep.sweep.sizing`, content runs); also the narrowest predicted width."""
    key = "model.length" if length is None else "run.end"
    if eq.d <= 0:
        raise ctx.src.error(
            "model.equation", f"d = {eq.d} in {ctx.label}", "d > 0 for automatic sizing"
        )
    sized = eq
    if eq.perturbed:  # sizing uses the unperturbed speeds, and says so
        sized = Equation(a=eq.a, b=eq.b, d=eq.d)
        warn.note(
            "sizing",
            "automatic sizing uses the solitons the unperturbed equation predicts; "
            "the f, g, v terms change them",
            ctx.run_id,
        )
    form = sized.soliton_form_or_none()
    if form is None:
        raise ctx.fail(
            key,
            "auto",
            f"a number: equation {eq.name!r} ({eq.describe()}) has no solitons to size from",
        )
    if form.family == "gardner":
        raise ctx.fail(
            key,
            "auto",
            "a number: kdvsweep predicts no soliton content for Gardner data (its spectral "
            "problem is not implemented), so there is nothing to size from",
        )
    span = length if length is not None else _provisional_length(initial)
    if tpl.points is not None:
        n = int(_given_points(ctx, tpl)[0])
    elif math.isfinite(_profile_width(initial)):
        n = sizing.auto_points(_profile_width(initial), span, eq.dealias_fraction)
    else:
        raise ctx.fail(
            "model.points",
            "auto",
            "an even integer >= 16: a sharp box (edge = 0) has no width to resolve",
        )
    if length is None:
        n = min(n, PROVISIONAL_POINTS)
    try:
        grid = Grid(n, span)
    except ConfigError as err:
        raise ctx.fail("model.points", n, f"an even integer >= 16 ({err})") from None
    content, u0 = _predicted(tpl, ctx, key, sized, initial, grid)
    items, width, share = sizing.content_budget(content, u0, grid.dx, form, tpl.tail)
    fraction = tpl.min_amplitude
    if fraction is None:
        from ..analysis.content import DEFAULT_MIN_AMPLITUDE

        fraction = DEFAULT_MIN_AMPLITUDE
    floor = fraction * float(np.max(np.abs(u0)))
    limit = tpl.max_end if t_end is None else t_end
    sep = sizing.separation(items, width, form, tpl.tail, floor, limit, share)
    if sep.left_out:
        worst = max(sep.times[i] for i, _ in sep.left_out)
        detail = "; ".join(f"{items[i].label}: {why}" for i, why in sep.left_out)
        warn.add(
            "sizing",
            "may end before predicted solitons separate (a cautious estimate); those not "
            "measured are left out of the comparison, with this reason",
            ctx.run_id,
            worst if math.isfinite(worst) else 1e300,
            detail,
        )
    if t_end is None:
        # nothing to follow (every predicted soliton left out, said above): the longest run allowed
        end = sep.end if sep.end > 0 else tpl.max_end
        t_end = canonical(math.ceil(end / tpl.frame_every - 1e-9) * tpl.frame_every)
    v_rad = sizing.radiation_speed(u0, grid.length, form.d, tpl.radiation, share)
    need = sizing.content_length(items, width, form, tpl.tail, v_rad, t_end, share)
    if length is None:
        length = sizing.nice_ceil(need)
    elif length < need:
        assert tpl.length is not None
        raise ctx.fail(
            "model.length",
            tpl.length.given,
            f"at least {need:.4g} (or 'auto') so neither solitons nor radiation wrap around "
            f"into the solitons by t = {t_end:g}",
        )
    widths = [form.width(it.kappa) for it in items if it.kind == "soliton"]
    return length, t_end, min(widths, default=math.inf)


def _sech2_narrowest(height: float, scale: float, form: SolitonForm) -> float:
    """Width ``1/kappa_max`` of the tallest soliton out of ``height sech^2(x/scale)`` (KdV).

    Poschl & Teller 1933 (Z. Phys. 83, 143 [memory]): in canonical units ``A sech^2(x/l)`` gives
    ``lambda (lambda + 1) = A l^2`` and ``kappa_max = lambda / l``.
    """
    canonical_height = height / form.alpha
    if canonical_height <= 0:
        return math.inf
    x = 4.0 * canonical_height * scale * scale  # products, not **: inf rather than OverflowError
    if not math.isfinite(x):
        return 0.0  # a soliton too narrow for any grid: the resolution check refuses it
    lam = 0.5 * x / (math.sqrt(1.0 + x) + 1.0)  # = (sqrt(1 + x) - 1) / 2 without cancellation
    return scale / lam if lam > 0 else math.inf


def _check_spectrum(
    ctx: _Block, warn: LoadWarnings, initial: init.InitialData, grid: Grid, eq: Equation, auto: bool
) -> None:
    """Resolution of data other than solitons, from the spectrum of ``u0`` itself
    (:func:`sizing.spectrum_decades`): warned below ``WARN_DECADES`` at the dealiasing cutoff
    (never refused: the estimate counts the spectrum's own fall, ``k / sinh`` for ``sech^2``, and so
    reads lower than the soliton rule; sweeps that loaded before still load). A sharp box never
    resolves: one note says so."""
    if isinstance(initial, init.Box) and initial.edge == 0:
        warn.note(
            "initial",
            "a sharp box (edge = 0) is discontinuous: its spectrum falls like 1/k, so no grid "
            "resolves it (Gibbs ripples at its edges); give initial.edge > 0 for smooth data",
        )
        return
    decades = sizing.spectrum_decades(init.build_profile(initial, grid, eq), eq.dealias_fraction)
    if decades < sizing.WARN_DECADES and not auto:
        warn.add(
            "initial",
            f"keep fewer than {sizing.WARN_DECADES} decades of the initial data's spectrum at "
            f"the dealiasing cutoff (double precision; below {sizing.REFUSE_DECADES} the "
            "nonlinear term is cut at 1e-6 of the peak or more: refine model.points)",
            ctx.run_id,
            -decades,
            f"{decades:.1f} decades",
        )


# ----------------------------------------------------------------------------- entry point


def _plain_json(data: Any) -> str:
    """The canonical JSON the digest hashes: sorted keys, no spaces, shortest float repr."""
    return json.dumps(data, sort_keys=True, separators=(",", ":"), allow_nan=False)


class _Part:
    """Runs of a block that share their text values, system and equation, evaluated: what the
    :class:`RunSpec` of each is made of, and the canonical JSON of each that the digest hashes."""

    def __init__(
        self,
        tpl: Template,
        blk: _Block,
        equations: list[Equation],
        eq_of: np.ndarray,
        systems: list[physunits.System | None],
        system_of: np.ndarray,
        scheme: str,
        dt: np.ndarray,
        tol: np.ndarray | None,
        grids: list[Grid],
        grid_of: np.ndarray,
        sized: _Sized,
    ) -> None:
        self.ids = blk.ids
        #: positions of these runs in the block (set by :func:`_expand_block`)
        self.where = np.arange(len(blk))
        self.systems, self.system_of = systems, system_of
        #: profile data: one per run; solitons: none (``kappas``, ``positions``, ``signs``)
        self.initials = sized.initials
        self.kappas, self.positions, self.signs = sized.kappas, sized.positions, sized.signs
        t_end = sized.t_end
        self.exact = tpl.kind == "multisoliton"
        tols = np.full(len(blk), -1.0) if tol is None else tol
        first, self.model_of = _unique_rows(eq_of, grid_of, dt, tols)
        #: each distinct model's equation, grid, scheme, step and tolerance (made when asked for)
        self.scheme = scheme
        self.equations = [equations[int(k)] for k in eq_of[first].tolist()]
        self.grids = [grids[int(g)] for g in grid_of[first].tolist()]
        self.dts = dt[first].tolist()
        self.tols = [None] * len(first) if tol is None else tol[first].tolist()
        verify = np.isin(blk.ids, tpl.verified_ids)
        soliton = tpl.soliton_data
        first, self.settings_of = _unique_rows(t_end, verify)
        self.settings = [
            _make_settings(
                t_end=float(t_end[r]),
                record_times=_record_times(float(t_end[r]), tpl.frame_every),
                store_frames=tpl.keep_frames,
                frame_stride=tpl.keep_stride,
                predict_content=tpl.predict_content,
                min_amplitude=tpl.min_amplitude if not soliton else None,
                tail=tpl.tail if not soliton else DEFAULT_TAIL,
                time_limit=tpl.time_limit,
                drift_limit=tpl.drift_limit,
                max_amplitude=tpl.max_amplitude,
                accuracy=tpl.target,
                verify=bool(verify[r]),
            )
            for r in first.tolist()
        ]

    def initial(self, j: int) -> init.InitialData:
        """The initial data of run ``j`` of the part."""
        if self.initials:
            return self.initials[j]
        return init.Solitons(
            tuple(self.kappas[j].tolist()),
            tuple(self.positions[j].tolist()),
            tuple(self.signs[j].tolist()),
            self.exact,
        )

    def model(self, i: int) -> ModelSpec:
        """The ``i``-th distinct model of the part (one object for the runs that share it)."""
        return _make_model(self.equations[i], self.grids[i], self.scheme, self.dts[i], self.tols[i])

    def spec(self, j: int, params: dict[str, Value]) -> RunSpec:
        """The run ``j`` of the part (``params``: its parameters)."""
        return RunSpec(
            int(self.ids[j]),
            params,
            self.model(int(self.model_of[j])),
            self.initial(j),
            self.settings[self.settings_of[j]],
            self.systems[int(self.system_of[j])],
        )

    def jsons(self, params: list[str], cache: dict[int, tuple[object, str]]) -> list[str]:
        """The canonical JSON of each run's :meth:`RunSpec.plain` (an ``.npy`` file by its
        content, not its location), written from parts: ``params`` the runs' parameters as
        JSON, each distinct model once, a settings object encoded once (kept in ``cache`` by
        identity)."""

        def encoded(obj: RunSettings) -> str:
            held = cache.get(id(obj))
            if held is None or held[0] is not obj:
                if len(cache) > 1024:
                    cache.clear()
                held = cache[id(obj)] = (obj, _plain_json(obj.plain()))
            return held[1]

        models = ModelSpec.plain_jsons(self.equations, self.scheme, self.grids, self.dts, self.tols)
        settings = [encoded(run) for run in self.settings]
        if self.initials:
            initials = []
            for data in self.initials:
                plain = data.plain()
                if plain["kind"] == "npy":  # content, not location
                    plain = {k: v for k, v in plain.items() if k != "path"}
                initials.append(_plain_json(plain))
        else:  # the keys of init.Solitons.plain in sorted order, as json.dumps writes them
            kind = '"kind":"multisoliton"' if self.exact else '"kind":"solitons"'
            initials = [
                f'{{"kappa":{k},{kind},"sign":{s},"x0":{x}}}'
                for k, s, x in zip(
                    _json_rows(self.kappas, repr),
                    _json_rows(self.signs, str),
                    _json_rows(self.positions, repr),
                    strict=True,
                )
            ]
        units: dict[int, str] = {}
        for k in self.system_of.tolist():
            if k not in units:
                system = self.systems[k]
                units[k] = "" if system is None else ',"units":' + _plain_json(system.plain())
        # the keys of RunSpec.plain in sorted order, as json.dumps(sort_keys=True) writes them
        return [
            f'{{"initial":{i},"model":{models[mo]},"params":{p},"run":{settings[so]},'
            f'"run_id":{run_id}{units[sy]}}}'
            for i, mo, p, so, run_id, sy in zip(
                initials,
                self.model_of.tolist(),
                params,
                self.settings_of.tolist(),
                self.ids.tolist(),
                self.system_of.tolist(),
                strict=True,
            )
        ]


def _json_rows(table: np.ndarray, write: Callable[[Any], str]) -> list[str]:
    """Each row of ``table`` as a JSON list, each value written by ``write`` once per distinct
    value of its column (told apart by their bits: ``0.0`` and ``-0.0`` are written apart)."""
    cols = []
    for j in range(table.shape[1]):
        col = np.ascontiguousarray(table[:, j])
        if len(col) == 1:
            cols.append([write(col[0].item())])
            continue
        _, first, inverse = np.unique(col.view(np.int64), return_index=True, return_inverse=True)
        written = np.array([write(v) for v in col[first].tolist()], dtype=object)
        cols.append(written[inverse.reshape(-1)].tolist())
    if len(cols) == 1:
        return ["[" + value + "]" for value in cols[0]]
    return ["[" + ",".join(row) + "]" for row in zip(*cols, strict=True)]


class Runs(Sequence[RunSpec]):
    """The runs of a sweep, evaluated from the checked template a block at a time when asked for.

    Runs are evaluated :attr:`BLOCK` at a time, every value an array over the block
    (:class:`_Block`); at most :attr:`KEPT` evaluated blocks are kept, and a :class:`RunSpec` is
    made when asked for. A sweep of 10^6 runs costs the memory of its axes, and the farm draws
    its runs one chunk at a time. Every run was evaluated once by :func:`load_sweep`, so
    evaluating one again cannot fail.
    """

    #: Runs of soliton data evaluated together (a power of two); the first blocks grow to it
    #: from one run (1, 1, 2, 4, ...), so that a mistake in the first runs is found at once.
    BLOCK = 2048
    #: The same for other data, whose sizing and checks are per run (spectra): few at a time,
    #: so that asking for one run evaluates few others.
    PROFILE_BLOCK = 16
    #: Evaluated blocks kept (the most recent).
    KEPT = 4

    def __init__(self, src: Source, tpl: Template, space: Space) -> None:
        self._src = src
        self._tpl = tpl
        self._space = space
        self._block = self.BLOCK if tpl.soliton_data else self.PROFILE_BLOCK
        assert self._block & (self._block - 1) == 0  # a power of two
        self._ramp = self._block.bit_length()  # blocks of the first self._block runs
        #: block -> its parts, and each position's part and index in it
        self._kept: OrderedDict[int, tuple[list[_Part], np.ndarray, np.ndarray]] = OrderedDict()

    def __len__(self) -> int:
        return len(self._space)

    def _block_of(self, run_id: int) -> int:
        """The block of run ``run_id``: ``[0]``, ``[1]``, ``[2, 3]``, ``[4, 7]``, ... up to the
        full size, then full blocks."""
        if run_id < self._block:
            return run_id.bit_length()
        return self._ramp + (run_id - self._block) // self._block

    def _start(self, block: int) -> int:
        """The first run of ``block`` (:meth:`_block_of`)."""
        if block < self._ramp:
            return 0 if block == 0 else 1 << (block - 1)
        return self._block * (block - self._ramp + 1)

    def _ids(self, block: int) -> np.ndarray:
        """The runs of ``block``."""
        return np.arange(self._start(block), min(len(self), self._start(block + 1)))

    def _evaluate(self, ids: np.ndarray, warn: LoadWarnings) -> list[_Part]:
        """The runs ``ids`` evaluated; on a mistake, the error of the first run that has one,
        found by evaluating the runs one by one (the first mistake of that run)."""
        try:
            with np.errstate(all="ignore"):  # overflow gives inf, as in float arithmetic: checked
                return _expand_block(self._tpl, _Block.of(self._src, self._space, ids), warn)
        except ConfigError:
            if len(ids) == 1:
                raise
            scratch = LoadWarnings("", len(self))
            for i in range(len(ids)):
                with np.errstate(all="ignore"):
                    one = _Block.of(self._src, self._space, ids[i : i + 1])
                    _expand_block(self._tpl, one, scratch)
            raise

    def _parts(
        self, block: int, warn: LoadWarnings | None = None
    ) -> tuple[list[_Part], np.ndarray, np.ndarray]:
        """The evaluated block, from those kept unless ``warn`` gathers a first evaluation's
        warnings."""
        kept = self._kept.get(block)
        if kept is None or warn is not None:
            ids = self._ids(block)
            parts = self._evaluate(ids, warn if warn is not None else LoadWarnings("", len(self)))
            part_of = np.empty(len(ids), dtype=np.int64)
            index = np.empty(len(ids), dtype=np.int64)
            for p, part in enumerate(parts):
                part_of[part.where] = p
                index[part.where] = np.arange(len(part.where))
            kept = self._kept[block] = (parts, part_of, index)
            if len(self._kept) > self.KEPT:
                self._kept.popitem(last=False)
        return kept

    def _spec(self, run_id: int, params: dict[str, Value] | None = None) -> RunSpec:
        block = self._block_of(run_id)
        parts, part_of, index = self._parts(block)
        pos = run_id - self._start(block)
        if params is None:
            params = self._space[run_id]
        return parts[part_of[pos]].spec(int(index[pos]), params)

    @overload
    def __getitem__(self, index: int) -> RunSpec: ...

    @overload
    def __getitem__(self, index: slice) -> list[RunSpec]: ...

    def __getitem__(self, index: int | slice) -> RunSpec | list[RunSpec]:
        if isinstance(index, slice):
            return [self[i] for i in range(*index.indices(len(self)))]
        return self._spec(self._space.run_id(index))

    def __iter__(self) -> Iterator[RunSpec]:
        for run_id, params in enumerate(self._space):
            yield self._spec(run_id, params)

    def digest(self, frames: dict[str, Any], warn: LoadWarnings) -> str:
        """Evaluate and check every run once, hashing each as it goes (the sha256 of the
        canonical JSON ``{"format", "frames", "runs": [...]}``, streamed: no list of runs is
        built), and gather the warnings; raise :class:`ConfigError` on the first run with a
        mistake."""
        head = _plain_json({"format": FORMAT, "frames": frames, "runs": []})
        assert head.endswith("[]}")  # "runs" sorts last: each run is hashed in its place
        sha = hashlib.sha256(head[:-2].encode())
        cache: dict[int, tuple[object, str]] = {}
        for block in range(self._block_of(len(self) - 1) + 1):
            parts, _, _ = self._parts(block, warn)
            ids = self._ids(block)
            params = self._space.encoded(ids)
            texts = [""] * len(ids)
            for part in parts:
                where = part.where.tolist()
                for w, text in zip(
                    where, part.jsons([params[w] for w in where], cache), strict=True
                ):
                    texts[w] = text
            if block:
                sha.update(b",")
            sha.update(",".join(texts).encode())
        sha.update(b"]}")
        return sha.hexdigest()
