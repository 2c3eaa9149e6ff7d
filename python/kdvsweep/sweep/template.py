"""The template of a sweep file: every key read and checked once, numbers and expressions as
slots (:class:`NumSlot`, :class:`TextSlot`) that :mod:`kdvsweep.sweep.expand` evaluates for each
run, and the limits a sweep file may ask for (README, "Sweep files")."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .. import initial as init
from .. import units as physunits
from ..exceptions import ConfigError, ShapeError
from ..model import COEFFICIENTS
from ..simulation import ADAPTIVE, DEFAULT_SCHEME, SCHEMES
from . import accuracy as acc
from .expr import Expression
from .schema import Source, Table, describe, is_finite, is_number, join, suggestion
from .space import Axis, Value, check_name, check_text, read_space
from .specs import DEFAULT_DRIFT_LIMIT, DEFAULT_TAIL, DEFAULT_TIME_LIMIT

MAX_FRAMES = 100_000
MAX_AUTO_POINTS = 2**18
#: Most points of the provisional grid on which ``length = 'auto'`` finds the predicted solitons.
PROVISIONAL_POINTS = 2048
#: Accuracy asked of each predicted ``kappa`` when it only sizes a run (``length``, ``end``
#: 'auto'): the sizes are rounded up with margins, so 1e-5 changes none of them, and the spectral
#: problem is several times smaller than at the measurement's 1e-8.
SIZING_TOL = 1e-5
PRESETS = ("kdv", "kdv-", "mkdv", "mkdv-", "gardner")
#: Initial data made of solitons (the collision analysis runs on them; other data are profiles).
SOLITON_KINDS = ("solitons", "multisoliton")

_TOP = ("sweep", "model", "initial", "run", "vary", "derive", "sizing", "units", "accuracy")
_SWEEP = ("name", "note")
_MODEL = ("equation", "points", "length", "scheme", "dt", "tol")
_EQUATION = ("preset", *COEFFICIENTS, "dealias")
_RUN = (
    "end",
    "frame_every",
    "keep_frames",
    "keep_stride",
    "predict_content",
    "time_limit",
    "drift_limit",
    "max_amplitude",
)
_SIZING = ("tail", "min_amplitude", "max_end", "radiation")
_ACCURACY = ("shift", "verify", "seed")
#: Default ``sizing.max_end``: the latest automatic end of a content run (time units of the run).
DEFAULT_MAX_END = 100.0
#: Default ``sizing.radiation``: the Fourier level of the data (relative to its peak) whose
#: radiation is budgeted in an automatic length (:mod:`kdvsweep.sweep.sizing`, content runs).
DEFAULT_RADIATION = 1e-4
_SOLITON_SIZES = ("kappa", "amplitude", "speed")
_INITIAL = {
    "solitons": ("kind", *_SOLITON_SIZES, "position", "polarity"),
    "multisoliton": ("kind", *_SOLITON_SIZES, "position", "polarity"),
    "sech2": ("kind", "height", "scale", "center"),
    "gaussian": ("kind", "height", "scale", "center"),
    "box": ("kind", "height", "half_width", "center", "edge"),
    "breather": ("kind", "eta", "xi", "center", "phase"),
    "fifth-order-wave": ("kind", "center"),
    "npy": ("kind", "file"),
}
_REF = re.compile(r"\{([A-Za-z_][A-Za-z0-9_]*)\}\Z")
#: A sweep name is a folder name under results/: ASCII letters, digits, ``-``, ``_`` and ``.``,
#: not starting with a dot, at most 100 characters (no path separators, no ``..``).
_SAFE_NAME = re.compile(r"[A-Za-z0-9_-][A-Za-z0-9_.-]{0,99}\Z", re.ASCII)
_SAFE_NAME_RULE = (
    "a name of at most 100 ASCII letters, digits, '-', '_' and '.', not starting with '.' "
    "(it names the folder results/NAME)"
)


def safe_name(stem: str) -> str:
    """The default sweep name from a file's stem: each run of characters outside the safe form
    becomes ``_``, leading dots are dropped (``my sweep.v2`` -> ``my_sweep.v2``)."""
    name = re.sub(r"[^A-Za-z0-9_.-]+", "_", stem, flags=re.ASCII).lstrip(".")[:100]
    return name or "sweep"


#: Most time steps one run may take (``t_end / dt`` of a fixed-step scheme): beyond it a run would
#: not end in days, and a step this small is a mistake (``dt = 5e-324``).
MAX_STEPS = 10**9
#: Most memory one run may need (frames, the analysis of the frames, the stepper's buffers;
#: :func:`kdvsweep.sweep.sizing.run_memory`), bytes. A fixed cap, not a share of this machine's
#: memory, so that a sweep file is accepted or refused alike where it is loaded and where it runs.
MAX_RUN_BYTES = 8 * 2**30


# ----------------------------------------------------------------------------- slots


@dataclass(frozen=True)
class NumSlot:
    """A numeric value as written: a literal or an expression (checked names)."""

    key: str
    given: object
    literal: float | None
    expr: Expression | None


@dataclass(frozen=True)
class TextSlot:
    """A text value as written: a literal or ``{param}`` naming a text parameter."""

    key: str
    given: str
    literal: str | None
    param: str | None


class _Names:
    """Names an expression may use at a point of the file, and which are text."""

    def __init__(self, numbers: set[str], texts: set[str]) -> None:
        self.numbers = numbers
        self.texts = texts

    def check(self, src: Source, key: str, expression: Expression) -> None:
        for name, pos in expression.names.items():
            if name in self.texts:
                raise src.error(
                    key,
                    describe(expression.source),
                    f"an expression of numbers: {name!r} at position {pos} is a text parameter",
                )
            if name not in self.numbers:
                known = ", ".join(sorted(self.numbers)) or "none defined"
                close = suggestion(name, sorted(self.numbers))
                raise src.error(
                    key,
                    describe(expression.source),
                    f"an expression of known names: unknown name {name!r} at position {pos}"
                    f"{close}; known: {known}",
                )


def _num(src: Source, key: str, value: object, names: _Names) -> NumSlot:
    if is_number(value):
        if not is_finite(value):
            raise src.error(key, describe(value), "a finite number")
        return NumSlot(key, value, float(value), None)  # type: ignore[arg-type]
    if isinstance(value, str):
        expression = src.expression(key, value)
        names.check(src, key, expression)
        return NumSlot(key, value, None, expression)
    raise src.error(key, describe(value), "a number or an expression in quotes")


def _num_or_auto(src: Source, key: str, value: object, names: _Names) -> NumSlot | None:
    """``None`` for ``"auto"``."""
    if value == "auto":
        return None
    return _num(src, key, value, names)


def _num_list(src: Source, key: str, value: object, names: _Names) -> list[NumSlot]:
    if not isinstance(value, list) or not value:
        raise src.error(key, describe(value), "a non-empty list of numbers or expressions")
    return [_num(src, join(key, i), v, names) for i, v in enumerate(value)]


def _text(
    src: Source, key: str, value: object, choices: tuple[str, ...], names: _Names
) -> TextSlot:
    expected = f"one of {', '.join(map(repr, choices))} or '{{name}}' of a text parameter"
    if not isinstance(value, str):
        raise src.error(key, describe(value), expected)
    ref = _REF.match(value)
    if ref:
        name = ref.group(1)
        if name not in names.texts:
            raise src.error(
                key, describe(value), f"a text parameter in braces{suggestion(name, names.texts)}"
            )
        return TextSlot(key, value, None, name)
    if value not in choices:
        raise src.error(key, describe(value), expected + suggestion(value, choices))
    return TextSlot(key, value, value, None)


# ----------------------------------------------------------------------------- the template


@dataclass
class Template:
    """A sweep file read and checked: its axes, derived values and the slots of every key, which
    :mod:`kdvsweep.sweep.expand` evaluates for each run."""

    name: str
    parameters: tuple[str, ...]
    kinds: dict[str, str]
    axes: list[Axis]
    derived: list[tuple[str, NumSlot]]
    equation: TextSlot | dict[str, NumSlot | TextSlot | None] | None
    points: NumSlot | None
    length: NumSlot | None
    scheme: TextSlot
    dt: NumSlot | None
    tol: NumSlot | None
    kind: str
    initial: dict[str, Any]
    end: NumSlot | None
    frame_every: float
    keep_frames: bool
    keep_stride: int
    predict_content: bool
    tail: float
    time_limit: float
    drift_limit: float | None
    max_amplitude: float | None
    sizing_given: bool
    base: Path
    min_amplitude: float | None = None
    max_end: float = DEFAULT_MAX_END
    radiation: float = DEFAULT_RADIATION
    #: ``[units]``: the system's name and its keys (see :func:`_read_units`), or ``None``.
    units: tuple[str, dict[str, NumSlot]] | None = None
    #: ``[accuracy]``: the shift target (``None``: none), the share of runs verified, its seed.
    target: float | None = None
    verify: float = acc.DEFAULT_VERIFY
    seed: int = acc.DEFAULT_SEED
    #: ``model.dt = "auto"`` (:func:`kdvsweep.sweep.accuracy.auto_dt`).
    dt_auto: bool = False
    #: The run ids chosen for verification, ascending (set once the runs are counted).
    verified_ids: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    #: Predicted content of each distinct profile (sizing), by the profile's plain form.
    content_cache: dict[str, Any] = field(default_factory=dict)

    @property
    def soliton_data(self) -> bool:
        """Whether the initial data are solitons (:data:`SOLITON_KINDS`)."""
        return self.kind in SOLITON_KINDS


def read_template(src: Source, doc: dict[str, Any], base: Path, stem: str) -> Template:
    """The template of the TOML document ``doc`` (``base``: the sweep file's folder, ``stem``:
    its name without suffix); raises :class:`ConfigError` on the first mistake."""
    top = Table(src, doc, "", _TOP, "a TOML document")
    head = Table(src, top.raw("sweep", {}), "sweep", _SWEEP)
    name = head.text("name", default=None)
    if name is None:
        name = safe_name(stem)
    elif not _SAFE_NAME.match(name):
        raise head.fail("name", name, _SAFE_NAME_RULE)
    check_text(src, head.key("note"), head.text("note", default=""), allow="\n\t")

    axes = read_space(src, top.raw("vary", None))
    numbers = {
        n
        for a in axes
        for n, col in zip(a.names, a.columns, strict=True)
        if not isinstance(col[0], str)
    }
    texts = {
        n
        for a in axes
        for n, col in zip(a.names, a.columns, strict=True)
        if isinstance(col[0], str)
    }
    parameters = tuple(n for a in axes for n in a.names)
    kinds = {n: _kind(col) for a in axes for n, col in zip(a.names, a.columns, strict=True)}

    derived: list[tuple[str, NumSlot]] = []
    derive = top.raw("derive", {})
    dtab = Table(src, derive, "derive", list(derive) if isinstance(derive, dict) else ())
    for dname, value in dtab.data.items():
        check_name(src, dtab.key(dname), dname)
        if dname in numbers or dname in texts:
            raise dtab.fail(dname, value, "a name that is not also a swept parameter")
        derived.append((dname, _num(src, dtab.key(dname), value, _Names(numbers, texts))))
        numbers = numbers | {dname}
    names = _Names(numbers, texts)

    units = _read_units(src, top, names)
    model = Table(src, top.raw("model"), "model", _MODEL)
    equation = None if units and not model.has("equation") else _read_equation(src, model, names)
    points = _num_or_auto(src, model.key("points"), model.raw("points"), names)
    length = _num_or_auto(src, model.key("length"), model.raw("length"), names)
    scheme = _text(src, model.key("scheme"), model.raw("scheme", DEFAULT_SCHEME), SCHEMES, names)
    dt_auto = model.raw("dt", None) == "auto"
    dt = None
    if model.has("dt") and not dt_auto:
        dt = _num(src, model.key("dt"), model.raw("dt"), names)
    tol = _num(src, model.key("tol"), model.raw("tol"), names) if model.has("tol") else None
    if scheme.literal is not None:
        if scheme.literal != ADAPTIVE and dt is None and not dt_auto:
            model.raw("dt")  # raises: required
        if scheme.literal != ADAPTIVE and tol is not None:
            raise model.fail(
                "tol", model.raw("tol"), f"no tol: it applies to scheme = {ADAPTIVE!r}"
            )

    every_key = dict.fromkeys(k for keys in _INITIAL.values() for k in keys)  # ordered, unique
    itab = Table(src, top.raw("initial"), "initial", every_key)
    kind = itab.text("kind", tuple(_INITIAL))
    itab = Table(src, itab.data, "initial", _INITIAL[kind])
    if units and kind not in _UNITS_KINDS:
        raise itab.fail(
            "kind",
            kind,
            f"one of {', '.join(_UNITS_KINDS)} with [units] (initial data in physical units)",
        )
    initial = _read_initial(src, itab, kind, names, base)

    run = Table(src, top.raw("run"), "run", _RUN)
    end = _num_or_auto(src, run.key("end"), run.raw("end"), names)
    frame_every = run.number("frame_every", positive=True)
    keep_frames = run.flag("keep_frames", default=False)
    keep_stride = run.integer("keep_stride", default=1, minimum=1)
    if keep_stride > MAX_FRAMES:
        raise run.fail("keep_stride", keep_stride, f"an integer from 1 to {MAX_FRAMES}")
    time_limit = run.number("time_limit", default=DEFAULT_TIME_LIMIT, positive=True)
    drift_limit = run.raw("drift_limit", DEFAULT_DRIFT_LIMIT)
    if drift_limit is False:  # no check
        drift_limit = None
    elif not is_finite(drift_limit) or drift_limit <= 0:
        raise run.fail("drift_limit", drift_limit, "a positive number, or false for no check")
    max_amplitude = run.number("max_amplitude", default=None, positive=True)
    soliton_data = kind in SOLITON_KINDS
    predict_content = run.flag("predict_content", default=not soliton_data)

    stab = Table(src, top.raw("sizing", {}), "sizing", _SIZING)
    tail = stab.number("tail", default=DEFAULT_TAIL, positive=True)
    if not tail < 1:
        raise stab.fail("tail", tail, "a number between 0 and 1 (a relative tail height)")
    min_amplitude = stab.number("min_amplitude", default=None, positive=True)
    if min_amplitude is not None and not min_amplitude < 1:
        raise stab.fail("min_amplitude", min_amplitude, "a number between 0 and 1 (of max |u0|)")
    max_end = stab.number("max_end", default=DEFAULT_MAX_END, positive=True)
    radiation = stab.number("radiation", default=DEFAULT_RADIATION, positive=True)
    if not radiation < 1:
        raise stab.fail("radiation", radiation, "a number between 0 and 1 (a relative level)")

    atab = Table(src, top.raw("accuracy", {}), "accuracy", _ACCURACY)
    target = atab.number("shift", default=None, positive=True)
    if target is not None and not target < 0.1:
        raise atab.fail("shift", target, "a relative error between 0 and 0.1 (e.g. 1e-5)")
    verify = atab.number("verify", default=acc.DEFAULT_VERIFY)
    if not 0 <= verify <= 1:
        raise atab.fail("verify", verify, "a fraction of the runs from 0 to 1")
    seed = atab.integer("seed", default=acc.DEFAULT_SEED, minimum=0)
    if dt_auto and not soliton_data:
        raise src.error(
            "model.dt",
            "'auto'",
            "a number: an automatic step needs initial.kind = 'solitons' or 'multisoliton'",
        )

    autos = {
        "model.length": length is None,
        "run.end": end is None,
        "initial.position": initial.get("position") == "auto",
    }
    if kind == "fifth-order-wave" and (points is None or length is None or end is None):
        raise src.error(
            "model.points" if points is None else "model.length" if length is None else "run.end",
            "'auto'",
            "a number: a fifth-order wave is sized by hand (automatic sizing follows the "
            "solitons of the unperturbed equation, which this steady wave is not)",
        )
    if autos["initial.position"] and not soliton_data:
        raise src.error(
            "initial.position",
            "'auto'",
            "a number: automatic positions need initial.kind = 'solitons' or 'multisoliton'",
        )
    if autos["model.length"] and kind == "npy":
        raise src.error(
            "model.length",
            "'auto'",
            "a number: the samples of an npy file are the data on the length given",
        )
    if (autos["model.length"] or autos["run.end"]) and not soliton_data and not predict_content:
        key = "model.length" if autos["model.length"] else "run.end"
        raise src.error(
            key,
            "'auto' with run.predict_content = false",
            "a number: automatic sizing of profile data needs the predicted solitons",
        )
    if points is None and not soliton_data and (kind == "npy" or not predict_content):
        raise src.error(
            "model.points",
            "'auto'",
            "an even integer >= 16: automatic points need initial.kind = 'solitons' or "
            "'multisoliton', or a profile with run.predict_content (not an npy file)",
        )
    return Template(
        name=name,
        parameters=parameters,
        kinds=kinds,
        axes=axes,
        derived=derived,
        equation=equation,
        points=points,
        length=length,
        scheme=scheme,
        dt=dt,
        tol=tol,
        kind=kind,
        initial=initial,
        end=end,
        frame_every=float(frame_every),
        keep_frames=keep_frames,
        keep_stride=keep_stride,
        predict_content=predict_content,
        tail=float(tail),
        time_limit=float(time_limit),
        drift_limit=None if drift_limit is None else float(drift_limit),
        max_amplitude=None if max_amplitude is None else float(max_amplitude),
        sizing_given=top.has("sizing"),
        base=base,
        min_amplitude=None if min_amplitude is None else float(min_amplitude),
        max_end=float(max_end),
        radiation=float(radiation),
        units=units,
        target=None if target is None else float(target),
        verify=float(verify),
        seed=int(seed),
        dt_auto=dt_auto,
    )


def _kind(values: tuple[Value, ...]) -> str:
    """The column kind of a parameter: ``text``, ``int`` (every value a TOML integer), ``float``."""
    if isinstance(values[0], str):
        return "text"
    return "int" if all(isinstance(v, int) for v in values) else "float"


#: Initial data whose sizes convert under ``[units]`` (heights, lengths in physical units).
_UNITS_KINDS = ("solitons", "multisoliton", "sech2", "gaussian", "box")


def _read_units(src: Source, top: Table, names: _Names) -> tuple[str, dict[str, NumSlot]] | None:
    """``[units]``: ``system`` (a name of :data:`kdvsweep.units.SYSTEMS`) and that system's keys,
    numbers or expressions of the parameters (a swept depth, a depth ratio); ``None`` without it."""
    if not top.has("units"):
        return None
    raw = top.raw("units")
    head = Table(src, raw, "units", [*raw] if isinstance(raw, dict) else ())
    name = head.text("system", tuple(physunits.SYSTEMS))
    cls = physunits.SYSTEMS[name]
    tab = Table(src, raw, "units", ("system", *(p.key for p in cls.PARAMETERS)))
    values = {}
    for p in cls.PARAMETERS:
        if tab.has(p.key) or p.default is None:
            values[p.key] = _num(src, tab.key(p.key), tab.raw(p.key), names)
    return name, values


def _read_equation(
    src: Source, model: Table, names: _Names
) -> TextSlot | dict[str, NumSlot | TextSlot | None]:
    value = model.raw("equation")
    if not isinstance(value, dict):
        return _text(src, model.key("equation"), value, PRESETS, names)
    tab = Table(src, value, model.key("equation"), _EQUATION)
    out: dict[str, NumSlot | TextSlot | None] = {
        "preset": _text(src, tab.key("preset"), tab.raw("preset"), PRESETS, names)
        if tab.has("preset")
        else None
    }
    for coef in (*COEFFICIENTS, "dealias"):
        out[coef] = _num(src, tab.key(coef), tab.raw(coef), names) if tab.has(coef) else None
    return out


def _read_initial(src: Source, tab: Table, kind: str, names: _Names, base: Path) -> dict[str, Any]:
    out: dict[str, Any] = {}
    if kind in SOLITON_KINDS:
        given = [k for k in _SOLITON_SIZES if tab.has(k)]
        if len(given) != 1:
            shown = ", ".join(given) if given else "none of them"
            raise src.error(tab.key("kappa"), shown, "exactly one of kappa, amplitude, speed")
        size = given[0]
        out["size"] = size
        out["sizes"] = _num_list(src, tab.key(size), tab.raw(size), names)
        count = len(out["sizes"])
        position = tab.raw("position", "auto")
        if position == "auto":
            out["position"] = "auto"
        else:
            out["position"] = _num_list(src, tab.key("position"), position, names)
            if len(out["position"]) != count:
                raise tab.fail(
                    "position",
                    position,
                    f"{count} positions, one per soliton in {tab.key(size)}, or 'auto'",
                )
        if tab.has("polarity"):
            out["polarity"] = _num_list(src, tab.key("polarity"), tab.raw("polarity"), names)
            if len(out["polarity"]) != count:
                raise tab.fail("polarity", tab.raw("polarity"), f"{count} values of +1 or -1")
        return out
    if kind == "npy":
        file = tab.text("file")
        check_text(src, tab.key("file"), file)  # also a NUL byte, which no path may hold
        path = _npy_path(tab, file, base)
        try:
            arr = init.load_array(path)
        except (ConfigError, ShapeError) as err:
            raise tab.fail("file", file, f"a 1-D array of finite real numbers ({err})") from None
        if arr.size == 0:
            raise tab.fail("file", file, "a non-empty 1-D array")
        out.update(
            path=str(path),
            size=int(arr.shape[0]),
            sha256=init.file_digest(path),
            max_abs=float(np.max(np.abs(arr))),
        )
        return out
    if kind in ("breather", "fifth-order-wave"):  # exact waves: checked against the equation later
        for key in _INITIAL[kind][1:]:
            default = 0.0 if key in ("center", "phase") else None
            value = tab.raw(key) if default is None else tab.raw(key, default)
            out[key] = _num(src, tab.key(key), value, names)
        return out
    out["height"] = _num(src, tab.key("height"), tab.raw("height"), names)
    out["center"] = _num(src, tab.key("center"), tab.raw("center", 0.0), names)
    if kind == "box":
        out["half_width"] = _num(src, tab.key("half_width"), tab.raw("half_width"), names)
        out["edge"] = _num(src, tab.key("edge"), tab.raw("edge", 0.0), names)
    else:
        out["scale"] = _num(src, tab.key("scale"), tab.raw("scale"), names)
    return out


def _npy_path(tab: Table, file: str, base: Path) -> Path:
    """The ``.npy`` file named relative to the sweep file's folder ``base``, which must lie in that
    folder or below it once links are followed: a sweep file received from someone else cannot
    make a sweep copy other files of its user into the results."""
    try:
        path = (base / file).resolve()
        found = path.is_file()
    except RuntimeError:  # Python < 3.13 reports a loop of symbolic links so
        raise tab.fail("file", file, "a path without a loop of symbolic links") from None
    except (OSError, ValueError) as err:
        reason = err.strerror if isinstance(err, OSError) and err.strerror else str(err)
        raise tab.fail("file", file, f"a path that can be followed to a file ({reason})") from None
    if not found:
        raise tab.fail(
            "file",
            file,
            f"an existing .npy file (relative to the sweep file: {path} does not exist)",
        )
    if not path.is_relative_to(base):
        raise tab.fail(
            "file",
            file,
            f"a .npy file in the sweep file's folder {base} or below it ({path} is outside; "
            "copy the file there)",
        )
    return path
