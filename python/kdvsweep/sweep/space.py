"""The parameter space of a sweep: ``[[vary]]`` tables expanded into one value set per run.

Each ``[[vary]]`` table is one axis. The keys of one table are zipped (equal lengths, varied
together); the tables are combined as a cartesian product in file order, the first table varying
slowest (as nested loops written in file order). A key's values are a list, a linear or log range
``{from, to, count, spacing}``, or, in a table holding ``draw = {method, count, seed}``, a range
``{from, to, spacing}`` sampled at random: ``method = "latin"`` (Latin hypercube, one point per
stratum in every dimension, scipy.stats.qmc) or ``"uniform"`` (independent uniform draws).
"""

from __future__ import annotations

import itertools
import json
import math
import operator
import re
import unicodedata
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import Any, overload

import numpy as np

from ..columns import MODEL_COLUMNS, reserved_names
from .expr import RESERVED
from .schema import Source, Table, describe, is_finite

MAX_RUNS = 1_000_000
#: Axes of at most this many values have their JSON fields written once (:meth:`Space.encoded`).
ENCODED_AXIS = 65_536
SIGNIFICANT_DIGITS = 12

_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")
_RANGE_KEYS = ("from", "to", "count", "spacing")
_SPACINGS = ("linear", "log")
_DRAW_KEYS = ("method", "count", "seed")
_METHODS = ("latin", "uniform")
#: Unicode categories refused in text: control, format (bidirectional overrides, zero-width),
#: surrogates, private use, unassigned, and line and paragraph separators.
_HIDDEN = frozenset({"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"})

Value = float | int | str


def canonical(value: float) -> float:
    """``value`` rounded to 12 significant digits.

    Generated values (ranges, samples, expressions) are rounded so that tables show 0.35, not
    0.35000000000000003, and so that a last-bit difference between platforms' libm cannot change
    the sweep digest.
    """
    return float(f"{value:.{SIGNIFICANT_DIGITS}g}")


@dataclass(frozen=True)
class Axis:
    """One ``[[vary]]`` table: parameter names and one value tuple per position."""

    names: tuple[str, ...]
    columns: tuple[tuple[Value, ...], ...]
    #: the names whose values are numbers rounded by :func:`canonical` (ranges and draws)
    rounded: frozenset[str] = frozenset()

    def __len__(self) -> int:
        return len(self.columns[0])


def check_name(src: Source, key: str, name: str) -> None:
    """Reject names that are not identifiers or that shadow a function or constant."""
    if not _NAME.match(name):
        raise src.error(
            key,
            repr(name),
            "a parameter name made of ASCII letters, digits and _ (not a digit first)",
        )
    if name in RESERVED or name == "draw":
        raise src.error(
            key,
            repr(name),
            "a parameter name other than draw and the expression words "
            + ", ".join(sorted(RESERVED)),
        )


def _bounds(tab: Table, spacing: str) -> tuple[float, float]:
    lo, hi = tab.number("from"), tab.number("to")
    if spacing == "log" and (lo <= 0 or hi <= 0):
        bad = "from" if lo <= 0 else "to"
        raise tab.fail(bad, tab.raw(bad), "a positive number (log spacing)")
    if not math.isfinite(float(hi) - float(lo)):  # Python floats: inf, no NumPy warning
        raise tab.fail(
            "to", tab.raw("to"), f"a range whose width to - from is a finite number (from = {lo!r})"
        )
    return float(lo), float(hi)


def _count(tab: Table) -> int:
    """The ``count`` of a range or a draw, at most :data:`MAX_RUNS` (checked before building)."""
    count: int = tab.integer("count", minimum=1)
    if count > MAX_RUNS:
        raise tab.fail("count", count, f"an integer from 1 to {MAX_RUNS} (runs in one sweep)")
    return count


def check_text(src: Source, key: str, value: str, allow: str = "") -> None:
    """Reject text holding control or invisible formatting characters (a right-to-left override
    U+202E, zero-width spaces...), which could make a value display as something it is not;
    ``allow`` lists characters accepted anyway (a note may hold line breaks)."""
    for i, ch in enumerate(value):
        if ch not in allow and unicodedata.category(ch) in _HIDDEN:
            raise src.error(
                key,
                describe(value),
                f"text without control or formatting characters ({ch!r} at position {i + 1})",
            )


def _range(src: Source, key: str, data: dict[str, Any]) -> tuple[float, ...]:
    tab = Table(src, data, key, _RANGE_KEYS)
    spacing = tab.text("spacing", _SPACINGS, default="linear")
    lo, hi = _bounds(tab, spacing)
    count = _count(tab)
    if count > 1 and lo == hi:
        raise tab.fail(
            "to",
            tab.raw("to"),
            f"a value different from from = {tab.raw('from')!r} "
            f"(a range of {count} equal values is empty)",
        )
    if count == 1 and lo != hi:
        raise tab.fail("count", count, "an integer >= 2 (from and to differ)")
    if spacing == "log":
        values = np.exp(np.linspace(math.log(lo), math.log(hi), count))
    else:
        values = np.linspace(lo, hi, count)
    values[0], values[-1] = lo, hi  # the end points exactly as written
    return tuple(canonical(float(v)) for v in values)


def _list(src: Source, key: str, values: list[Any]) -> tuple[Value, ...]:
    if not values:
        raise src.error(key, "an empty list", "a non-empty list of numbers or of text values")
    if all(isinstance(v, str) for v in values):
        for i, v in enumerate(values):
            check_text(src, f"{key}[{i}]", v)
        return tuple(values)
    for i, v in enumerate(values):
        if not is_finite(v):
            raise src.error(
                f"{key}[{i}]",
                describe(v),
                "a finite number like the other values (a list is all numbers or all text)",
            )
    return tuple(values)


def _draw(src: Source, tab: Table, names: list[str]) -> tuple[tuple[float, ...], ...]:
    spec = Table(src, tab.raw("draw"), tab.key("draw"), _DRAW_KEYS)
    method = spec.text("method", _METHODS)
    count = _count(spec)
    seed = spec.integer("seed", minimum=0)
    if not names:
        raise src.error(tab.path, "only draw", "at least one range {from, to} to sample")
    bounds = []
    for name in names:
        value = tab.raw(name)
        if not isinstance(value, dict):
            raise tab.fail(name, value, "a range {from, to} (a table with draw samples ranges)")
        rng_tab = Table(src, value, tab.key(name), ("from", "to", "spacing"))
        spacing = rng_tab.text("spacing", _SPACINGS, default="linear")
        lo, hi = _bounds(rng_tab, spacing)
        if lo == hi:
            raise rng_tab.fail("to", rng_tab.raw("to"), "a value different from from")
        bounds.append((lo, hi, spacing))
    if method == "latin":
        from scipy.stats import qmc  # loaded when a sweep samples, not on import

        unit = qmc.LatinHypercube(d=len(names), rng=seed).random(count)
    else:
        unit = np.random.default_rng(seed).random((count, len(names)))
    columns = []
    for j, (lo, hi, spacing) in enumerate(bounds):
        u = unit[:, j]
        if spacing == "log":
            col = np.exp(math.log(lo) + u * (math.log(hi) - math.log(lo)))
        else:
            col = lo + u * (hi - lo)
        columns.append(tuple(canonical(float(v)) for v in col))
    return tuple(columns)


def read_space(src: Source, data: object) -> list[Axis]:
    """Parse the ``vary`` array of tables into axes (no ``vary``: a single run)."""
    if data is None:
        return []
    if isinstance(data, dict):
        raise src.error("vary", "a single table [vary]", "an array of tables written [[vary]]")
    if not isinstance(data, list) or not data:
        raise src.error("vary", describe(data), "one or more [[vary]] tables")
    axes: list[Axis] = []
    seen: dict[str, str] = {}
    for index, block in enumerate(data):
        path = f"vary[{index}]"
        if not isinstance(block, dict):
            raise src.error(path, describe(block), "a table of parameters")
        if not block:
            raise src.error(path, "an empty table", "at least one parameter")
        tab = Table(src, block, path, list(block))
        names = [k for k in block if k != "draw"]
        for name in names:
            check_name(src, tab.key(name), name)
            if name in reserved_names():
                raise src.error(
                    tab.key(name),
                    repr(name),
                    "a parameter name that is not a column of the result tables (a parameter may "
                    f"take the name of a model column: {', '.join(MODEL_COLUMNS)})",
                )
            if name in seen:
                raise src.error(
                    tab.key(name),
                    "a second definition",
                    f"each parameter once (already set in {seen[name]})",
                )
            seen[name] = tab.key(name)
        rounded = set()
        if "draw" in block:
            columns: tuple[tuple[Value, ...], ...] = _draw(src, tab, names)
            rounded.update(names)
        else:
            cols = []
            for name in names:
                value = block[name]
                if isinstance(value, list):
                    cols.append(_list(src, tab.key(name), value))
                elif isinstance(value, dict):
                    cols.append(_range(src, tab.key(name), value))
                    rounded.add(name)
                else:
                    raise tab.fail(name, value, "a list of values or a range {from, to, count}")
            first = names[0]
            for name, col in zip(names, cols, strict=True):
                if len(col) != len(cols[0]):
                    raise src.error(
                        tab.key(name),
                        f"{len(col)} values",
                        f"{len(cols[0])} like {tab.key(first)} (keys of one [[vary]] table are "
                        "zipped)",
                    )
            columns = tuple(cols)
        axes.append(Axis(tuple(names), columns, frozenset(rounded)))
    total = math.prod(len(a) for a in axes)
    if total > MAX_RUNS:
        raise src.error("vary", f"{total} runs", f"at most {MAX_RUNS} runs in one sweep")
    return axes


class Space(Sequence[dict[str, Value]]):
    """The parameter set of every run, computed on demand: the cartesian product of the axes,
    first axis slowest, is never stored (a sweep of 10^6 runs holds only its axes)."""

    def __init__(self, axes: Sequence[Axis]) -> None:
        self.axes = tuple(axes)
        self._sizes = tuple(len(a) for a in self.axes)
        self._count = math.prod(self._sizes)
        #: the names whose values :func:`canonical` leaves as they are
        self.rounded = frozenset(n for a in self.axes for n in a.rounded)
        #: each name's values as an array (float64 for numbers, object for text), built when
        #: first asked for by :meth:`columns`
        self._arrays: dict[str, np.ndarray] = {}
        #: each short axis's fields ``"name":value`` as JSON (:meth:`encoded`)
        self._fields: dict[str, np.ndarray] = {}

    def __len__(self) -> int:
        return self._count

    def _at(self, positions: Sequence[int]) -> dict[str, Value]:
        params: dict[str, Value] = {}
        for axis, i in zip(self.axes, positions, strict=True):
            for name, col in zip(axis.names, axis.columns, strict=True):
                params[name] = col[i]
        return params

    def run_id(self, index: int) -> int:
        """The run of ``index`` (negative from the end); IndexError outside the sweep."""
        i = operator.index(index)
        if i < 0:
            i += self._count
        if not 0 <= i < self._count:
            raise IndexError(f"run {index} of a sweep of {self._count} runs")
        return i

    @overload
    def __getitem__(self, index: int) -> dict[str, Value]: ...

    @overload
    def __getitem__(self, index: slice) -> list[dict[str, Value]]: ...

    def __getitem__(self, index: int | slice) -> dict[str, Value] | list[dict[str, Value]]:
        if isinstance(index, slice):
            return [self[i] for i in range(*index.indices(self._count))]
        i = self.run_id(index)
        positions = []
        for size in reversed(self._sizes):  # mixed radix, the last axis fastest
            i, digit = divmod(i, size)
            positions.append(digit)
        return self._at(positions[::-1])

    def __iter__(self) -> Iterator[dict[str, Value]]:
        for positions in itertools.product(*(range(n) for n in self._sizes)):
            yield self._at(positions)

    def _positions(self, ids: np.ndarray) -> list[np.ndarray]:
        """Each axis's position in the runs ``ids`` (mixed radix, the last axis fastest)."""
        out = []
        stride = self._count
        for size in self._sizes:
            stride //= size
            out.append(ids // stride % size)
        return out

    def columns(self, ids: np.ndarray) -> dict[str, np.ndarray]:
        """The parameters of the runs ``ids``, one array per name: float64 for numbers (an
        integer as ``float(value)``, as expressions see it), object arrays of ``str`` for text."""
        out = {}
        for axis, pos in zip(self.axes, self._positions(ids), strict=True):
            for name, col in zip(axis.names, axis.columns, strict=True):
                values = self._arrays.get(name)
                if values is None:
                    text = isinstance(col[0], str)
                    values = np.array(col, dtype=object if text else np.float64)
                    self._arrays[name] = values
                out[name] = values[pos]
        return out

    def _field(self, name: str, values: Sequence[Value]) -> list[str]:
        """``"name":value`` of each value, as ``json.dumps`` writes it in a sorted dict."""
        head = json.dumps(name) + ":"
        return [head + (json.dumps(v) if isinstance(v, str) else repr(v)) for v in values]

    def encoded(self, ids: np.ndarray) -> list[str]:
        """The parameters of each run of ``ids`` as canonical JSON (``json.dumps`` with sorted
        keys and no spaces: a number as its ``repr``, text as a JSON string). The fields of an
        axis of at most :data:`ENCODED_AXIS` values are written once and kept."""
        fields: list[tuple[str, tuple[Value, ...], np.ndarray]] = []
        for axis, pos in zip(self.axes, self._positions(ids), strict=True):
            for name, col in zip(axis.names, axis.columns, strict=True):
                fields.append((name, col, pos))
        cols = []
        for name, col, pos in sorted(fields, key=lambda f: f[0]):
            if len(col) <= ENCODED_AXIS:
                kept = self._fields.get(name)
                if kept is None:
                    kept = self._fields[name] = np.array(self._field(name, col), dtype=object)
                cols.append(kept[pos].tolist())
            else:
                cols.append(self._field(name, list(map(col.__getitem__, pos.tolist()))))
        if not cols:
            return ["{}"] * len(ids)
        if len(cols) == 1:
            return ["{" + field + "}" for field in cols[0]]
        return ["{" + ",".join(row) + "}" for row in zip(*cols, strict=True)]


__all__ = [
    "MAX_RUNS",
    "Axis",
    "Space",
    "canonical",
    "check_name",
    "check_text",
    "read_space",
]
