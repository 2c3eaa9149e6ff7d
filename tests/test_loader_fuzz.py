"""Hostile sweep files and expressions: one-line ConfigErrors, never a crash, hang or huge allocation.

Each case of issue 12 (items 5 to 7, 12, 13, 15, 16) is a regression test below; then two fuzzers
run for a bounded time on seeded random mutations of valid sweep files and of expressions, and
assert that nothing but ConfigError comes out (every load and every evaluation also under a timer).
"""

from __future__ import annotations

import copy
import io
import json
import math
import os
import random
import signal
import time
import tomllib
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from conftest import SWEEP_TEXT as BASE
from conftest import edit

import kdvsweep as kv
from kdvsweep.analysis import collision_table
from kdvsweep.exceptions import ConfigError, ShapeError
from kdvsweep.sweep import load_sweep, sizing
from kdvsweep.sweep.config import MAX_RUN_BYTES, MAX_STEPS, safe_name
from kdvsweep.sweep.expr import ExpressionError, parse

SOLITONS = 'kind = "solitons"\nkappa = [1.0, "k2"]\nposition = [-10.0, 10.0]'
NPY = BASE.replace(SOLITONS, 'kind = "npy"\nfile = "u0.npy"')
AUTO = (
    BASE.replace("length = 60.0", 'length = "auto"')
    .replace("points = 512", 'points = "auto"')
    .replace("position = [-10.0, 10.0]", 'position = "auto"')
    .replace("end = 10.0", 'end = "auto"')
)
SECONDS = 20.0  # no single load may take longer (a hang fails the test instead of stalling it)


class Hang(Exception):
    """A load that outran its timer."""


@contextmanager
def deadline(seconds: float) -> Iterator[None]:
    """Raise :class:`Hang` in this thread after ``seconds`` of wall time (Unix timers)."""

    def alarm(signum: int, frame: object) -> None:
        raise Hang(f"still running after {seconds} s")

    previous = signal.signal(signal.SIGALRM, alarm)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def npy_header_only(path: Path, shape: tuple[int, ...]) -> None:
    """A ``.npy`` file whose header declares ``shape`` but which holds only 64 bytes of data."""
    buf = io.BytesIO()
    np.lib.format.write_array_header_1_0(
        buf, {"descr": "<f8", "fortran_order": False, "shape": shape}
    )
    path.write_bytes(buf.getvalue() + bytes(64))


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    """A sweep folder with the data files the hostile cases name."""
    np.save(tmp_path / "u0.npy", np.zeros(512))
    np.save(tmp_path / "huge.npy", np.full(512, 1e307))
    npy_header_only(tmp_path / "header.npy", (10**12,))
    os.symlink("loop-b.npy", tmp_path / "loop-a.npy")
    os.symlink("loop-a.npy", tmp_path / "loop-b.npy")
    outside = tmp_path.parent / f"{tmp_path.name}-outside"
    outside.mkdir()
    np.save(outside / "u0.npy", np.zeros(512))
    os.symlink(outside / "u0.npy", tmp_path / "link.npy")
    return tmp_path


def message_of(folder: Path, text: str) -> str:
    """The one-line ConfigError of loading ``text`` (fails on anything else, or after SECONDS)."""
    path = folder / "sweep.toml"
    path.write_text(text)
    with deadline(SECONDS), pytest.raises(ConfigError) as info:
        load_sweep(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"{path}: ")
    assert len(message) < 400, message
    return message


MULTI21 = edit(
    SOLITONS,
    'kind = "multisoliton"\nkappa = [' + ", ".join(f"{1 + 0.01 * i:.2f}" for i in range(21)) + "]",
).replace("length = 60.0", 'length = "auto"')

# (id, file text, fragments of the message: the first names the key)
HOSTILE = [
    # item 6: crashes and hangs before the limits were checked
    (
        "length-1e308-auto-points",
        edit("length = 60.0", "length = 1e308").replace("points = 512", 'points = "auto"'),
        ["model.points: given 'auto'", "n = inf > 262144"],
    ),
    ("end-1e9", edit("end = 10.0", "end = 1e9"), ["model.dt: given 0.0025", "1e+09 steps"]),
    ("end-1e5", edit("end = 10.0", "end = 1e5"), ["run.frame_every: given 0.5", "100000 frames"]),
    (
        "frame-every-1e-300",
        edit("frame_every = 0.5", "frame_every = 1e-300"),
        ["run.frame_every: given 1e-300", "100000 frames"],
    ),
    ("end-1e308", edit("end = 10.0", "end = 1e308"), ["model.dt: given 0.0025", "1e+09 steps"]),
    (
        "range-count-1e9",
        edit("k2 = [0.4, 0.5]", "k2 = { from = 0.4, to = 0.5, count = 1000000000 }"),
        ["vary[0].k2.count: given 1000000000", "from 1 to 1000000"],
    ),
    (
        "draw-count-1e9",
        edit(
            "k2 = [0.4, 0.5]",
            'draw = { method = "uniform", count = 1000000000, seed = 1 }\n'
            "k2 = { from = 0.4, to = 0.5 }",
        ),
        ["vary[0].draw.count: given 1000000000", "from 1 to 1000000"],
    ),
    (
        "range-count-int64-max",
        edit("k2 = [0.4, 0.5]", "k2 = { from = 0.4, to = 0.5, count = 9223372036854775807 }"),
        ["vary[0].k2.count: given 9223372036854775807"],
    ),
    (
        "kappa-1e300",
        edit('kappa = [1.0, "k2"]', 'kappa = [1e300, "k2"]'),
        ["initial.kappa[0]: given 1e+300", "finite amplitude, speed and width"],
    ),
    (
        "kappa-1e300-auto",
        edit('kappa = [1.0, "k2"]', 'kappa = [1e300, "k2"]', AUTO),
        ["initial.kappa[0]: given 1e+300", "finite amplitude"],
    ),
    (
        "log-range-to-1e308",
        edit("k2 = [0.4, 0.5]", 'k2 = { from = 0.4, to = 1e308, count = 3, spacing = "log" }'),
        ["initial.kappa", "in run 1"],
    ),
    (
        "d-1e300",
        edit('equation = "kdv"', 'equation = { preset = "kdv", d = 1e300 }'),
        ["model.equation: given max |u| = 2e+300", "finite number"],
    ),
    ("npy-values-1e307", NPY.replace("u0.npy", "huge.npy"), ["initial.file: given max |u|"]),
    (
        "f-1e305",  # f k^5 at k = pi n / L = 26.8 overflows
        edit('equation = "kdv"', 'equation = { preset = "kdv", f = 1e305 }'),
        ["model.equation: given d = 1, f = 1e+305", "linear term times dt is finite"],
    ),
    (
        "nested-arrays-5000",
        edit("k2 = [0.4, 0.5]", "k2 = " + "[" * 5000 + "]" * 5000),
        ["(syntax): given arrays or tables nested too deeply"],
    ),
    ("npy-symlink-loop", NPY.replace("u0.npy", "loop-a.npy"), ["initial.file", "loop"]),
    (
        "npy-nul-byte",
        NPY.replace("u0.npy", "u0\\u0000.npy"),
        ["initial.file: given 'u0\\x00.npy'", "control or formatting"],
    ),
    (
        "npy-header-10-to-12",
        NPY.replace("u0.npy", "header.npy"),
        ["initial.file: given 'header.npy'", "1000000000000 values"],
    ),
    (
        "integer-beyond-float",
        edit("end = 10.0", "end = 1" + "0" * 400),
        ["run.end: given 1000", "a finite number"],
    ),
    # item 5: memory named before anything is built
    (
        "points-2-to-26",
        edit("points = 512", "points = 67108864"),
        ["model.points: given 67108864", "fits in 8 GiB", "about 15 GiB for the stepper"],
    ),
    (
        "points-2-to-20-with-501-frames",
        edit("points = 512", "points = 1048576").replace("frame_every = 0.5", "frame_every = 0.02"),
        ["model.points: given 1048576", "with 501 frames needs about 15.9 GiB"],
    ),
    # item 7: a step count no run finishes
    (
        "dt-5e-324",
        edit("dt = 2.5e-3", "dt = 5e-324"),
        ["model.dt: given 5e-324", "at most 1e+09 steps", "t / dt = inf"],
    ),
    (
        "time-limit-zero",
        edit("frame_every = 0.5", "frame_every = 0.5\ntime_limit = 0"),
        ["run.time_limit: given 0", "positive"],
    ),
    # item 12: accepted at load but every run failed
    (
        "tol-1.5",
        edit('scheme = "etdrk4"\ndt = 2.5e-3', 'scheme = "adaptive"\ndt = 2.5e-3\ntol = 1.5'),
        ["model.tol: given 1.5", "below 1"],
    ),
    (
        "multisoliton-21",
        MULTI21,
        ["initial.kappa: given [1.0, 1.01", "exact N-soliton", "1 to 20 solitons, got 21"],
    ),
    (
        "multisoliton-equal-kappas",
        edit(SOLITONS, 'kind = "multisoliton"\nkappa = [0.5, "k2"]\nposition = [-10.0, 10.0]'),
        ["initial.kappa: given [0.5, 'k2'] in run 1", "distinct"],
    ),
    (
        "a-subnormal",
        edit('equation = "kdv"', "equation = { a = 1e-320 }"),
        ["model.equation: given a = 1e-320", "subnormal"],
    ),
    # item 13: short messages, no NumPy warnings
    (
        "dealias-1e-300",
        edit('equation = "kdv"', 'equation = { preset = "kdv", dealias = 1e-300 }'),
        ["model.points: given 512", "2.8e+300 points per width", "no grid can"],
    ),
    (
        "range-width-overflows",
        edit("k2 = [0.4, 0.5]", "k2 = { from = -1e308, to = 1e308, count = 3 }"),
        ["vary[0].k2.to: given 1e+308", "width to - from is a finite number"],
    ),
    # item 15: the name is a folder under results/
    ("name-parent", edit('name = "t"', 'name = "../../x"'), ["sweep.name: given '../../x'"]),
    ("name-absolute", edit('name = "t"', 'name = "/tmp/x"'), ["sweep.name: given '/tmp/x'"]),
    ("name-dot", edit('name = "t"', 'name = ".hidden"'), ["sweep.name: given '.hidden'"]),
    ("name-non-ascii", edit('name = "t"', 'name = "t\\u00e9"'), ["sweep.name: given 't\u00e9'"]),
    # item 16: hidden characters, digits of other scripts, files outside the sweep's folder
    ("name-rtl", edit('name = "t"', 'name = "a\\u202eb"'), ["sweep.name: given 'a\\u202eb'"]),
    (
        "note-rtl",
        edit('name = "t"', 'name = "t"\nnote = "a\\u202eb"'),
        ["sweep.note: given 'a\\u202eb'", "control or formatting"],
    ),
    (
        "text-value-rtl",
        edit("k2 = [0.4, 0.5]", 'k2 = [0.4, 0.5]\nlabel = ["a", "b\\u202ec"]'),
        ["vary[0].label[1]: given 'b\\u202ec'", "control or formatting"],
    ),
    (
        "parameter-name-arabic-digit",
        edit("k2 = [0.4, 0.5]", '"k\\u0663" = [0.4, 0.5]'),
        ["vary[0].k\u0663: given 'k\u0663'", "ASCII letters"],
    ),
    (
        "expression-arabic-digit",
        edit('kappa = [1.0, "k2"]', 'kappa = [1.0, "k2 * \\u0663"]'),
        ["initial.kappa[1]", "unexpected character '\u0663' at position 6"],
    ),
    ("key-rtl", '"a\\u202eb" = 1\n' + BASE, ["a\\u202eb: given an unknown key"]),
    (
        "key-of-100000-characters",
        '"' + "k" * 100000 + '" = 1\n' + BASE,
        ["k" * 117 + "...: given an unknown key"],
    ),
    (
        "npy-outside-by-path",
        NPY.replace('"u0.npy"', '"../{outside}/u0.npy"'),
        ["initial.file", "or below it", "copy the file there"],
    ),
    (
        "npy-outside-by-link",
        NPY.replace("u0.npy", "link.npy"),
        ["initial.file: given 'link.npy'", "or below it"],
    ),
]


@pytest.mark.parametrize(("case", "text", "fragments"), HOSTILE, ids=[c[0] for c in HOSTILE])
def test_hostile_file_gives_one_short_line(
    folder: Path, case: str, text: str, fragments: list[str], recwarn: pytest.WarningsRecorder
) -> None:
    text = text.replace("{outside}", f"{folder.name}-outside")
    message = message_of(folder, text)
    for fragment in fragments:
        assert fragment in message, (case, message)
    # no NumPy RuntimeWarning (overflow, invalid value) printed on the way to the error
    assert [str(w.message) for w in recwarn if issubclass(w.category, RuntimeWarning)] == []


def test_npy_inside_the_folder_tree_is_read(folder: Path) -> None:
    (folder / "data").mkdir()
    np.save(folder / "data" / "u0.npy", np.linspace(0, 1, 512))
    path = folder / "sweep.toml"
    path.write_text(NPY.replace("u0.npy", "data/u0.npy"))
    spec = load_sweep(path).runs[0]
    assert isinstance(spec.initial, kv.initial.FileData)
    assert spec.initial.path == str((folder / "data" / "u0.npy").resolve())


def test_one_argument_min_max_is_the_argument(folder: Path) -> None:
    path = folder / "sweep.toml"
    path.write_text(edit('kappa = [1.0, "k2"]', 'kappa = [1.0, "max(k2)"]'))
    runs = load_sweep(path).runs
    assert [r.initial.kappa[1] for r in runs] == [0.4, 0.5]  # type: ignore[union-attr]


# ---------------------------------------------------------------- the name, memory, steps


@pytest.mark.parametrize(
    ("stem", "name"),
    [("demo", "demo"), ("my sweep.v2", "my_sweep.v2"), (".hidden", "hidden"), ("\u202e", "_")],
)
def test_default_name_is_made_safe(stem: str, name: str) -> None:
    assert safe_name(stem) == name


def test_memory_estimate_counts_frames_and_buffers() -> None:
    # 8 bytes per value: frames (record, analysis spectra, copies) and the stepper's arrays
    assert sizing.run_memory(1024, 10, "etdrk4") == 8 * 1024 * (
        sizing.FRAME_COPIES * 10 + sizing.STEPPER_BUFFERS["etdrk4"]
    )
    assert sizing.run_memory(1024, 10, "new-scheme") == sizing.run_memory(1024, 10, "etdrk4")
    assert set(sizing.STEPPER_BUFFERS) == set(kv.SCHEMES)  # every scheme of the core is counted
    # the largest n that fits with 1,000 frames is refused one step above
    n = MAX_RUN_BYTES // (8 * (sizing.FRAME_COPIES * 1000 + sizing.STEPPER_BUFFERS["etdrk4"]))
    assert sizing.run_memory(n, 1000, "etdrk4") <= MAX_RUN_BYTES
    assert sizing.run_memory(n + 1, 1000, "etdrk4") > MAX_RUN_BYTES


def test_step_count_limit_is_exact(folder: Path) -> None:
    path = folder / "sweep.toml"
    dt = 10.0 / MAX_STEPS  # end = 10: exactly MAX_STEPS steps is allowed
    assert 10.0 / dt <= MAX_STEPS
    path.write_text(edit("dt = 2.5e-3", f"dt = {dt!r}"))
    load_sweep(path)
    path.write_text(edit("dt = 2.5e-3", f"dt = {dt * 0.99!r}"))
    with pytest.raises(ConfigError, match="at most 1e\\+09 steps"):
        load_sweep(path)
    # the adaptive scheme's dt is only its first trial step: not counted
    path.write_text(edit('scheme = "etdrk4"\ndt = 2.5e-3', 'scheme = "adaptive"\ndt = 1e-12'))
    load_sweep(path)


# ---------------------------------------------------------------- API input checks (item 13)


def test_grid_takes_numpy_numbers() -> None:
    grid = kv.Grid(np.int64(256), np.float32(40))
    assert (grid.n, grid.length) == (256, 40.0)
    assert type(grid.length) is float
    assert type(grid.n) is int
    with pytest.raises(ConfigError, match="length must be a finite number"):
        kv.Grid(256, True)  # type: ignore[arg-type]


def test_equation_refuses_subnormal_coefficients_in_one_short_line() -> None:
    with pytest.raises(ConfigError, match=r"a must be 0 or at least 2\.23e-308") as info:
        kv.Equation(a=1e-320)
    assert len(str(info.value)) < 150
    assert kv.Equation(a=2.3e-308).a == 2.3e-308  # the smallest normal numbers stay allowed
    with pytest.raises(ConfigError, match=r"dealias must be in \(0, 1\], got 'x'"):
        kv.Equation(a=6.0, dealias="x")  # type: ignore[arg-type]


def test_collision_table_input_errors_are_one_line() -> None:
    grid = kv.Grid(256, 40.0)
    with pytest.raises(ShapeError, match=r"m >= 1 frames, got shape \(0, 256\)"):
        collision_table(np.zeros((0, 256)), np.zeros(0), grid, "kdv")
    for bad in ([], [[1.0, 0.5]], "x", [1.0, -1.0], [math.nan]):
        with pytest.raises(ConfigError, match="kappas must be a non-empty list") as info:
            collision_table(np.zeros((3, 256)), np.arange(3.0), grid, "kdv", bad)
        assert "\n" not in str(info.value)


# ---------------------------------------------------------------- fuzzing


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else str(value)  # inf, -inf, nan
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)  # a TOML basic string
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        inner = ", ".join(f"{json.dumps(k)} = {_toml_value(v)}" for k, v in value.items())
        return "{ " + inner + " }" if inner else "{}"
    raise TypeError(type(value))


def to_toml(doc: dict[str, Any]) -> str:
    """A TOML text of ``doc`` (tables of values, arrays of tables)."""
    lines = [f"{json.dumps(k)} = {_toml_value(v)}" for k, v in doc.items() if not _table(v)]
    for key, value in doc.items():
        if isinstance(value, dict) and _table(value):
            lines.append(f"[{json.dumps(key)}]")
            lines += [f"{json.dumps(k)} = {_toml_value(v)}" for k, v in value.items()]
        elif isinstance(value, list) and _table(value):
            for block in value:
                lines.append(f"[[{json.dumps(key)}]]")
                lines += [f"{json.dumps(k)} = {_toml_value(v)}" for k, v in block.items()]
    return "\n".join(lines) + "\n"


def _table(value: Any) -> bool:
    if isinstance(value, dict):
        return bool(value)
    return isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)


HOSTILE_VALUES: list[Any] = [
    0,
    -1,
    1,
    3,
    17,
    1000001,
    2**63 - 1,
    -(2**63),
    10**400,
    0.0,
    -0.0,
    0.5,
    1e-320,
    5e-324,
    1e-300,
    1e300,
    1e308,
    -1e308,
    math.inf,
    -math.inf,
    math.nan,
    True,
    "",
    "auto",
    "kdv",
    "mkdv",
    "adaptive",
    "solitons",
    "multisoliton",
    "npy",
    "k2",
    "max(k2)",
    "min()",
    "1/0",
    "k2 ^ 1e308",
    "exp(exp(k2))",
    "(" * 60 + "1" + ")" * 60,
    "1" * 500,
    "\u0663",
    "a\u202eb",
    "u0\x00.npy",
    "../outside.npy",
    "/etc/hostname",
    "header.npy",
    "loop-a.npy",
    "{k2}",
    "{label}",
    [],
    [[]],
    [1.0] * 25,
    {},
    {"from": 0.1, "to": 1e308, "count": 3, "spacing": "log"},
    {"from": -1e308, "to": 1e308, "count": 2},
    {"from": 0.4, "to": 0.5, "count": 2**62},
    {"method": "latin", "count": 3, "seed": 2**62},
]


def _paths(value: Any, prefix: tuple[Any, ...] = ()) -> Iterator[tuple[Any, ...]]:
    """Every path of keys and indices inside ``value``."""
    if isinstance(value, dict):
        for k, v in value.items():
            yield (*prefix, k)
            yield from _paths(v, (*prefix, k))
    elif isinstance(value, list):
        for i, v in enumerate(value):
            yield (*prefix, i)
            yield from _paths(v, (*prefix, i))


def mutate(doc: dict[str, Any], rng: random.Random) -> dict[str, Any]:
    """One to four random changes: a value replaced, a key removed or added, a list grown."""
    doc = json.loads(json.dumps(doc))  # a deep copy
    for _ in range(rng.randint(1, 4)):
        paths = list(_paths(doc))
        path = rng.choice(paths)
        parent: Any = doc
        for key in path[:-1]:
            parent = parent[key]
        last = path[-1]
        action = rng.random()
        if action < 0.6:
            parent[last] = copy.deepcopy(rng.choice(HOSTILE_VALUES))
        elif action < 0.75 and isinstance(parent, dict):
            del parent[last]
        elif action < 0.85 and isinstance(parent, dict):
            parent[rng.choice(["kind", "count", "time_limit", "x", "points", "dealias"])] = (
                copy.deepcopy(rng.choice(HOSTILE_VALUES))
            )
        elif isinstance(parent[last], list) and parent[last]:
            parent[last] = parent[last] + [rng.choice(parent[last])] * rng.randint(1, 3)
        else:
            parent[last] = [parent[last]] * rng.randint(0, 3)
    return doc


def mutate_text(text: str, rng: random.Random) -> str:
    """Byte-level damage: a few characters deleted, repeated or replaced."""
    chars = list(text)
    for _ in range(rng.randint(1, 5)):
        i = rng.randrange(len(chars))
        choice = rng.random()
        if choice < 0.3:
            del chars[i]
        elif choice < 0.6:
            chars.insert(i, rng.choice(['"', "[", "]", "{", "=", "\n", "\u202e", "9", "\x00"]))
        else:
            chars[i] = rng.choice(["0", "e", "9", "-", ".", "'", "#"])
    return "".join(chars)


def _seeds(folder: Path) -> list[dict[str, Any]]:
    texts = [
        BASE,
        AUTO,
        NPY,
        edit(SOLITONS, 'kind = "sech2"\nheight = 2.0\nscale = 1.0'),
        edit(
            "k2 = [0.4, 0.5]",
            'draw = { method = "latin", count = 3, seed = 1 }\nk2 = { from = 0.3, to = 0.6 }',
        ),
        edit("k2 = [0.4, 0.5]", 'k2 = [0.4, 0.5]\nlabel = ["a", "b"]'),
    ]
    return [tomllib.loads(t) for t in texts]


def _fuzz(seconds: float, seed: int, attempt: Callable[[random.Random], None]) -> int:
    rng = random.Random(seed)
    stop = time.monotonic() + seconds
    count = 0
    while time.monotonic() < stop:
        attempt(rng)
        count += 1
    return count


def test_fuzzed_sweep_files_give_only_config_errors(folder: Path) -> None:
    seeds = _seeds(folder)
    path = folder / "sweep.toml"
    outcomes = {"loaded": 0, "refused": 0}
    long_messages: list[str] = []

    def attempt(rng: random.Random) -> None:
        doc = mutate(rng.choice(seeds), rng)
        text = to_toml(doc)
        if rng.random() < 0.25:
            text = mutate_text(text, rng)
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        try:
            with deadline(SECONDS):
                load_sweep(path)
            outcomes["loaded"] += 1
        except ConfigError as err:
            if "\n" in str(err):
                long_messages.append(str(err))
            outcomes["refused"] += 1
        except Exception as err:  # anything else is a defect: show the file that caused it
            raise AssertionError(f"{type(err).__name__}: {err}\n--- file ---\n{text}") from err

    count = _fuzz(4.0, 2026, attempt)
    assert count >= 20  # the time bound is long enough to mean something
    assert outcomes["refused"] > 0, outcomes
    assert outcomes["loaded"] > 0, outcomes
    assert long_messages == []


EXPRESSION_TOKENS = [
    "k2",
    "s",
    "pi",
    "x",
    "1",
    "0",
    ".5",
    "2.",
    "1e308",
    "1e-320",
    "5e-324",
    "1e999",
    "+",
    "-",
    "*",
    "/",
    "^",
    "**",
    "(",
    ")",
    ",",
    "sqrt(",
    "log(",
    "exp(",
    "sin(",
    "abs(",
    "min(",
    "max(",
    "\u0663",
    "\u202e",
    "\u00a0",
    ".",
    "e",
    " ",
]


def test_fuzzed_expressions_give_only_expression_errors() -> None:
    envs: list[dict[str, object]] = [
        {"k2": 0.4, "s": "kdv", "x": -3.0},
        {"k2": 1e308, "s": 0.0, "x": 5e-324},
        {"k2": -1e-320, "s": math.pi, "x": 0},
    ]
    results = {"value": 0, "error": 0}
    long_messages: list[str] = []

    def attempt(rng: random.Random) -> None:
        text = "".join(rng.choice(EXPRESSION_TOKENS) for _ in range(rng.randint(1, 40)))
        try:
            with deadline(SECONDS):
                expression = parse(text)
                for env in envs:
                    got = expression.evaluate(env)
                    assert isinstance(got, float), (text, env, got)
                    assert math.isfinite(got), (text, env, got)
            results["value"] += 1
        except ExpressionError as err:  # a subclass of ConfigError
            if "\n" in str(err):
                long_messages.append(str(err))
            results["error"] += 1
        except Exception as err:
            raise AssertionError(f"{type(err).__name__}: {err} for {text!r}") from err

    count = _fuzz(3.0, 12, attempt)
    assert count >= 1000
    assert results["value"] > 0, results
    assert results["error"] > 0, results
    assert long_messages == []
    assert issubclass(ExpressionError, ConfigError)
