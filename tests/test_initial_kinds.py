"""The exact-wave initial kinds: ``breather`` (focusing mKdV) and ``fifth-order-wave`` (sech^4).

Profiles against kv.exact summed over periodic images; sweep files refusing what does not exist
with one-line errors naming the key; one run of each through the runner, checked against the
exact solution (the formulas' own PDE residual tests are in test_exact_waves.py).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

import kdvsweep as kv
from kdvsweep import exact
from kdvsweep import initial as init
from kdvsweep.exceptions import ConfigError
from kdvsweep.sweep.config import load_sweep
from kdvsweep.sweep.runner import execute

MKDV = kv.Equation.mkdv()
FIFTH = kv.Equation(a=6.0, d=1.0, f=-1.0 / 13.0)

BREATHER = """\
[model]
equation = "mkdv"
points = 1024
length = 40
scheme = "etdrk4"
dt = 2.5e-4

[initial]
kind = "breather"
eta = 0.6
xi = 0.15
center = -1.0
phase = 0.5

[run]
end = 2
frame_every = 0.1
keep_frames = true
"""

FIFTH_TEXT = """\
[model]
equation = { a = 6, d = 1, f = -0.07692307692307693 }
points = 1024
length = 80
scheme = "etdrk4"
dt = 5e-4

[initial]
kind = "fifth-order-wave"
center = -14

[run]
end = 10
frame_every = 0.5
keep_frames = true
"""


def write(tmp_path: Path, text: str, name: str = "s") -> Path:
    path = tmp_path / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return path


def edit(text: str, old: str, new: str) -> str:
    assert text.count(old) == 1, old
    return text.replace(old, new)


# ----------------------------------------------------------------------------- profiles


def test_breather_profile_is_the_exact_breather_with_its_images() -> None:
    grid = kv.Grid(1024, 40.0)  # the envelope (e-folding 1/(2 eta) = 0.83) reaches the edges
    eq = kv.Equation(b=2.0, d=0.5)
    u = init.build_profile(init.Breather(0.6, 0.3, 17.0, 0.4), grid, eq)
    ref = sum(exact.breather(grid.x - m * 40.0, 0.0, 0.6, 0.3, 17.0, 0.4, eq) for m in range(-4, 5))
    np.testing.assert_allclose(u, ref, rtol=0, atol=1e-15)
    assert np.max(np.abs(u - exact.breather(grid.x, 0.0, 0.6, 0.3, 17.0, 0.4, eq))) > 1e-6


def test_sech4_profile_is_the_exact_wave_with_its_images() -> None:
    grid = kv.Grid(512, 30.0)
    u = init.build_profile(init.Sech4Wave(-13.0), grid, FIFTH)
    ref = sum(exact.fifth_order_wave(grid.x - m * 30.0, 0.0, -13.0, FIFTH) for m in range(-4, 5))
    np.testing.assert_allclose(u, ref, rtol=0, atol=1e-15)
    assert float(np.max(u)) == pytest.approx(105.0 / 78.0, rel=1e-3)  # -105 d^2 / (169 a f)


def test_plain_forms() -> None:
    assert init.Breather(1, 0.5, 2, 3).plain() == {
        "kind": "breather",
        "eta": 1.0,
        "xi": 0.5,
        "center": 2.0,
        "phase": 3.0,
    }
    assert init.Sech4Wave(-1).plain() == {"kind": "fifth-order-wave", "center": -1.0}
    assert {"breather", "fifth-order-wave"} <= set(init.KINDS)
    assert init.input_solitons(init.Breather(1.0, 0.5)) == []


@pytest.mark.parametrize(
    ("args", "match"),
    [
        ((0.0, 0.5), "eta must be a finite positive number"),
        ((1.0, -0.5), "xi must be a finite positive number"),
        ((1.0, math.nan), "xi must be a finite positive number"),
        ((1.0, 0.5, math.inf), "center must be a finite number"),
        ((1.0, 0.5, 0.0, "x"), "phase must be a finite number"),
    ],
)
def test_breather_fields_checked(args: tuple[object, ...], match: str) -> None:
    with pytest.raises(ConfigError, match=match):
        init.Breather(*args)  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("data", "eq", "match"),
    [
        (init.Breather(1.0, 0.5), kv.Equation.kdv(), "breather: none for"),
        (init.Breather(1.0, 0.5), kv.Equation.mkdv(g=0.01), "breather: none for"),
        (init.Sech4Wave(), kv.Equation.kdv(), "d f = 0; expected d f < 0"),
        (init.Sech4Wave(), kv.Equation(a=6.0, b=1.0, f=-0.1), "b = 1; expected b = 0"),
    ],
)
def test_profile_refused_for_an_equation_without_it(
    data: init.InitialData, eq: kv.Equation, match: str
) -> None:
    with pytest.raises(ConfigError, match=match):
        init.build_profile(data, kv.Grid(64, 40.0), eq)


# ----------------------------------------------------------------------------- sweep files


def test_breather_sweep_loads(tmp_path: Path) -> None:
    sweep = load_sweep(write(tmp_path, BREATHER))
    spec = sweep.runs[0]
    assert spec.initial == init.Breather(0.6, 0.15, -1.0, 0.5)
    assert sweep.layout.content
    assert not sweep.layout.analysis
    assert sweep.warnings == ()


@pytest.mark.slow  # the sizing's eigenvalue solves: 20-40 s
def test_breather_sweep_sized_automatically(tmp_path: Path) -> None:
    text = edit(edit(BREATHER, "length = 40", 'length = "auto"'), "end = 2", 'end = "auto"')
    text = edit(text, "points = 1024", 'points = "auto"')
    sweep = load_sweep(write(tmp_path, text))
    spec = sweep.runs[0]
    # the predicted breather (eta 0.6) is followed: a box holding its envelope, a resolved grid
    assert spec.model.grid.length > 40.0
    assert spec.model.grid.dx < init.Breather(0.6, 0.15).width / 10.0
    assert sweep.warnings == ()
    assert spec.run.t_end > 0


@pytest.mark.parametrize(
    ("old", "new", "match"),
    [
        ('equation = "mkdv"', 'equation = "kdv"', r"initial\.kind: given 'breather' for equation"),
        ('equation = "mkdv"', 'equation = "gardner"', "unperturbed focusing mKdV"),
        ('equation = "mkdv"', "equation = { b = 6, g = 0.01 }", "unperturbed focusing mKdV"),
        ("eta = 0.6", "eta = -0.6", r"initial\.eta: given -0\.6 in run 0, expected a positive"),
        ("xi = 0.15", "xi = 0", r"initial\.xi: given 0 in run 0, expected a positive"),
        ("eta = 0.6\n", "", r"initial\.eta"),
        ("phase = 0.5", "height = 1.0", r"initial\.height"),
    ],
)
def test_breather_sweep_errors_name_the_key(tmp_path: Path, old: str, new: str, match: str) -> None:
    with pytest.raises(ConfigError, match=match) as err:
        load_sweep(write(tmp_path, edit(BREATHER, old, new)))
    assert "\n" not in str(err.value)


@pytest.mark.parametrize(
    ("old", "new", "match"),
    [
        ("f = -0.07692307692307693", "f = 0.1", r"initial\.kind: .*expected d f < 0"),
        ("a = 6, d = 1", "a = 6, b = 1, d = 1", r"b = 1; expected b = 0"),
        ("d = 1, f", "d = 1, g = 0.01, f", r"expected no damping and no viscosity"),
        ("a = 6, d = 1", "d = 1", r"a = 0; expected a quadratic flux"),
        ("points = 1024", 'points = "auto"', r"model\.points: given 'auto'.*sized by hand"),
        ("length = 80", 'length = "auto"', r"model\.length: given 'auto'.*sized by hand"),
        ("end = 10", 'end = "auto"', r"run\.end: given 'auto'.*sized by hand"),
        ("center = -14", "center = 'x'", r"initial\.center"),
        ("center = -14", "eta = 1", r"initial\.eta"),
    ],
)
def test_fifth_order_sweep_errors_name_the_key(
    tmp_path: Path, old: str, new: str, match: str
) -> None:
    with pytest.raises(ConfigError, match=match) as err:
        load_sweep(write(tmp_path, edit(FIFTH_TEXT, old, new)))
    assert "\n" not in str(err.value)


def test_breather_parameters_can_be_swept(tmp_path: Path) -> None:
    text = "[[vary]]\nxi = [0.1, 0.2]\n\n" + edit(BREATHER, "xi = 0.15", 'xi = "xi"')
    sweep = load_sweep(write(tmp_path, text))
    assert [s.initial.xi for s in sweep.runs] == [0.1, 0.2]  # type: ignore[union-attr]
    assert sweep.parameters == ("xi",)


# ----------------------------------------------------------------------------- through the runner


def test_breather_run_measures_its_own_breather(tmp_path: Path) -> None:
    # the content analysis finds one breather and the inverse scattering transform predicts it:
    # the exact breather's eigenvalue pair 0.15 + 0.6 i (Wadati 1973 [memory]); the last frame is
    # the exact breather at t = 2
    spec = load_sweep(write(tmp_path, BREATHER)).runs[0]
    result = execute(spec)
    row = result.run_row
    assert row["status"] == "ok", row["reason"]
    assert row["ist_status"] == "ok"
    assert (row["ist_count"], row["ist_breathers"]) == (0, 1)
    assert result.frames is not None
    assert result.frame_times is not None
    grid = spec.model.grid
    u = exact.breather(grid.x, float(result.frame_times[-1]), 0.6, 0.15, -1.0, 0.5, MKDV)
    assert float(np.max(np.abs(result.frames[-1] - u))) < 1e-8
    assert row["momentum_residual"] < 1e-8
    rows = [r for r in result.soliton_rows if r["kind"] == "breather"]
    assert len(rows) == 1
    assert rows[0]["kappa_ist"] == pytest.approx(0.6, abs=1e-8)


def test_fifth_order_run_carries_the_wave(tmp_path: Path) -> None:
    # the stored last frame is the exact sech^4 wave at t = 10 (it moved 36/13 * 10 = 27.7); the
    # IST is refused (a perturbed equation) and says so in one line
    spec = load_sweep(write(tmp_path, FIFTH_TEXT)).runs[0]
    result = execute(spec)
    row = result.run_row
    assert row["status"] == "ok", row["reason"]
    assert row["ist_status"].startswith("no IST: ")
    assert result.frames is not None
    u = exact.fifth_order_wave(spec.model.grid.x, 10.0, -14.0, FIFTH)
    assert float(np.max(np.abs(result.frames[-1] - u))) < 1e-8
    assert row["momentum_residual"] < 1e-10
    assert row["content_status"].startswith("not measured: one steady sech^4 wave")
    assert not result.soliton_rows


@pytest.mark.parametrize("name", ["breather", "fifth-order-wave"])
def test_example_sweeps_load_without_warnings(name: str) -> None:
    sweep = load_sweep(Path(__file__).parent.parent / "sweeps" / f"{name}.toml")
    assert sweep.warnings == ()
    assert {s.initial.kind for s in sweep.runs} == {name}
