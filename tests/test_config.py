"""Sweep files: validation messages, expansion, digests and automatic sizing."""

from __future__ import annotations

import itertools
import json
import math
import pickle
from pathlib import Path

import numpy as np
import pytest
from conftest import SWEEP_TEXT as BASE
from conftest import edit
from scipy.stats import qmc

import kdvsweep as kv
from kdvsweep.exceptions import ConfigError
from kdvsweep.sweep import RunSpec, Sweep, load_sweep, sizing

SWEEPS = Path(__file__).resolve().parent.parent / "sweeps"


NPY = BASE.replace(
    'kind = "solitons"\nkappa = [1.0, "k2"]\nposition = [-10.0, 10.0]',
    'kind = "npy"\nfile = "u0.npy"',
)
SECH2 = BASE.replace(
    'kind = "solitons"\nkappa = [1.0, "k2"]\nposition = [-10.0, 10.0]',
    'kind = "sech2"\nheight = 2.0\nscale = 1.0',
)


def solitons(spec: RunSpec) -> kv.initial.Solitons:
    """The soliton initial data of a run (narrowed for the type checker)."""
    assert isinstance(spec.initial, kv.initial.Solitons)
    return spec.initial


def _tree(folder: Path) -> dict[str, tuple[int, int]]:
    return {
        str(p.relative_to(folder)): (p.stat().st_size, p.stat().st_mtime_ns)
        for p in folder.rglob("*")
    }


def write(tmp_path: Path, text: str, name: str = "sweep.toml") -> Path:
    path = tmp_path / name
    path.write_text(text)
    return path


# (id, file text, fragments the one-line message must contain; the first names the key)
MALFORMED = [
    (
        "unknown-key",
        edit("points = 512", "pionts = 512"),
        ["model.pionts: given an unknown key", "did you mean 'points'"],
    ),
    ("unknown-table", edit("[run]", "[runn]"), ["runn: given an unknown key", "'run'"]),
    (
        "key-of-other-kind",
        edit('kind = "solitons"', 'kind = "solitons"\nheight = 1.0'),
        ["initial.height: given an unknown key"],
    ),
    (
        "points-bool",
        edit("points = 512", "points = true"),
        ["model.points: given true", "a number or an expression"],
    ),
    ("points-odd", edit("points = 512", "points = 513"), ["model.points: given 513", "even"]),
    (
        "points-fraction",
        edit("points = 512", 'points = "512.5"'),
        ["model.points: given '512.5' (= 512.5) in run 0", "an integer"],
    ),
    ("dt-negative", edit("dt = 2.5e-3", "dt = -1"), ["model.dt: given -1", "positive"]),
    ("dt-missing", edit("dt = 2.5e-3\n", ""), ["model.dt: given nothing", "required"]),
    (
        "tol-fixed-scheme",
        edit("dt = 2.5e-3", "dt = 2.5e-3\ntol = 1e-9"),
        ["model.tol: given 1e-09", "adaptive"],
    ),
    (
        "scheme",
        edit('scheme = "etdrk4"', 'scheme = "rk45"'),
        ["model.scheme: given 'rk45'", "'etdrk4'"],
    ),
    (
        "preset",
        edit('equation = "kdv"', 'equation = "kdvv"'),
        ["model.equation: given 'kdvv'", "did you mean 'kdv'"],
    ),
    (
        "text-ref-unknown",
        edit('equation = "kdv"', 'equation = "{eqn}"'),
        ["model.equation: given '{eqn}'", "text parameter"],
    ),
    (
        "coefficients",
        edit('equation = "kdv"', 'equation = { preset = "kdv", v = -1 }'),
        ["model.equation: given v = -1 in run 0", "viscosity"],
    ),
    (
        "coefficient-key",
        edit('equation = "kdv"', "equation = { a = 6, c = 1 }"),
        ["model.equation.c: given an unknown key"],
    ),
    (
        "end-unknown-name",
        edit("end = 10.0", 'end = "soon"'),
        ["run.end: given 'soon'", "unknown name 'soon' at position 1"],
    ),
    (
        "frame-every-zero",
        edit("frame_every = 0.5", "frame_every = 0"),
        ["run.frame_every: given 0", "positive"],
    ),
    (
        "keep-frames-text",
        edit("frame_every = 0.5", 'frame_every = 0.5\nkeep_frames = "yes"'),
        ["run.keep_frames: given 'yes'", "true or false"],
    ),
    (
        "stride-zero",
        edit("frame_every = 0.5", "frame_every = 0.5\nkeep_stride = 0"),
        ["run.keep_stride: given 0", ">= 1"],
    ),
    ("run-missing", BASE[: BASE.index("[run]")], ["run: given nothing", "required"]),
    ("syntax", edit("points = 512", "points = "), ["(syntax): given invalid TOML", "line 9"]),
    ("vary-single-table", edit("[[vary]]", "[vary]"), ["vary: given a single table", "[[vary]]"]),
    ("empty-list", edit("k2 = [0.4, 0.5]", "k2 = []"), ["vary[0].k2: given an empty list"]),
    (
        "empty-range",
        edit("k2 = [0.4, 0.5]", "k2 = { from = 0.5, to = 0.5, count = 3 }"),
        ["vary[0].k2.to: given 0.5", "empty"],
    ),
    (
        "range-count-zero",
        edit("k2 = [0.4, 0.5]", "k2 = { from = 0.4, to = 0.5, count = 0 }"),
        ["vary[0].k2.count: given 0", ">= 1"],
    ),
    (
        "range-unknown-key",
        edit("k2 = [0.4, 0.5]", "k2 = { from = 0.4, to = 0.5, num = 3 }"),
        ["vary[0].k2.num: given an unknown key"],
    ),
    (
        "log-range-negative",
        edit("k2 = [0.4, 0.5]", 'k2 = { from = -0.4, to = 0.5, count = 3, spacing = "log" }'),
        ["vary[0].k2.from: given -0.4", "log spacing"],
    ),
    ("mixed-list", edit("k2 = [0.4, 0.5]", 'k2 = [0.4, "a"]'), ["vary[0].k2[1]: given 'a'"]),
    ("bool-list", edit("k2 = [0.4, 0.5]", "k2 = [true, false]"), ["vary[0].k2[0]: given true"]),
    (
        "zip-lengths",
        edit("k2 = [0.4, 0.5]", "k2 = [0.4, 0.5]\nk3 = [1, 2, 3]"),
        ["vary[0].k3: given 3 values", "expected 2 like vary[0].k2", "zipped"],
    ),
    (
        "duplicate-parameter",
        edit("[model]", "[[vary]]\nk2 = [0.6]\n\n[model]"),
        ["vary[1].k2: given a second definition", "already set in vary[0].k2"],
    ),
    (
        "reserved-name",
        edit("k2 = [0.4, 0.5]", "k2 = [0.4, 0.5]\npi = [3.0, 3.1]"),
        ["vary[0].pi: given 'pi'", "expression words"],
    ),
    ("bad-name", edit("k2 = [0.4, 0.5]", '"k-2" = [0.4, 0.5]'), ["vary[0].k-2: given 'k-2'"]),
    (
        "draw-no-seed",
        edit(
            "k2 = [0.4, 0.5]",
            'draw = { method = "latin", count = 4 }\nk2 = { from = 0.4, to = 0.5 }',
        ),
        ["vary[0].draw.seed: given nothing"],
    ),
    (
        "draw-method",
        edit(
            "k2 = [0.4, 0.5]",
            'draw = { method = "sobol", count = 4, seed = 1 }\nk2 = { from = 0.4, to = 0.5 }',
        ),
        ["vary[0].draw.method: given 'sobol'", "'latin'"],
    ),
    (
        "draw-list",
        edit(
            "k2 = [0.4, 0.5]", 'draw = { method = "latin", count = 4, seed = 1 }\nk2 = [0.4, 0.5]'
        ),
        ["vary[0].k2: given [0.4, 0.5]", "a range"],
    ),
    (
        "expression-syntax",
        edit('"k2"]', '"0.5 +* k2"]'),
        ["initial.kappa[1]: given '0.5 +* k2'", "unexpected '*' at position 6"],
    ),
    (
        "attribute-access",
        edit('"k2"]', '"k2.real"]'),
        ["initial.kappa[1]: given 'k2.real'", "attribute access", "position 3"],
    ),
    (
        "forbidden-call",
        edit('"k2"]', '"exec(k2)"]'),
        ["initial.kappa[1]: given 'exec(k2)'", "unknown function 'exec' at position 1"],
    ),
    (
        "huge-exponent",
        edit('"k2"]', '"(1 + k2) ^ 100000"]'),
        ["initial.kappa[1]: given '(1 + k2) ^ 100000' in run 0 (k2=0.4)", "too large"],
    ),
    (
        "unknown-name",
        edit('"k2"]', '"k3"]'),
        ["initial.kappa[1]: given 'k3'", "unknown name 'k3' at position 1", "did you mean 'k2'"],
    ),
    (
        "negative-kappa",
        edit('"k2"]', '"-k2"]'),
        ["initial.kappa[1]: given '-k2' (= -0.4) in run 0 (k2=0.4)", "positive"],
    ),
    (
        "derive-division",
        edit("[model]", '[derive]\nx = "1 / (k2 - 0.5)"\n\n[model]'),
        ["derive.x: given '1 / (k2 - 0.5)' in run 1 (k2=0.5)", "division by zero at position 3"],
    ),
    (
        "text-in-arithmetic",
        edit("k2 = [0.4, 0.5]", 'k2 = [0.4, 0.5]\neq = ["a", "b"]').replace('"k2"]', '"2 * eq"]'),
        ["initial.kappa[1]: given '2 * eq'", "'eq' at position 5 is a text parameter"],
    ),
    (
        "two-sizes",
        edit('kappa = [1.0, "k2"]', 'kappa = [1.0, "k2"]\namplitude = [2.0, 1.0]'),
        ["initial.kappa: given kappa, amplitude", "exactly one of kappa, amplitude, speed"],
    ),
    (
        "position-count",
        edit("position = [-10.0, 10.0]", "position = [-10.0]"),
        ["initial.position: given [-10.0]", "2 positions"],
    ),
    (
        "position-order",
        edit("position = [-10.0, 10.0]", "position = [10.0, -10.0]"),
        ["initial.position[1]: given -10.0 in run 0", "left to right"],
    ),
    (
        "position-outside",
        edit("position = [-10.0, 10.0]", "position = [-10.0, 40.0]"),
        ["initial.position[1]: given 40.0 in run 0", "inside the box [-30, 30)"],
    ),
    (
        "kdv-polarity",
        edit("position = [-10.0, 10.0]", "position = [-10.0, 10.0]\npolarity = [1, -1]"),
        ["initial.polarity[1]: given -1 in run 0", "+1"],
    ),
    (
        "gardner-table-top",
        edit('equation = "kdv"', "equation = { a = 6, b = -6, d = 1 }"),
        ["initial.kappa[0]: given 1.0 in run 0", "table-top limit 0.5"],
    ),
    (
        "gardner-polarity",
        edit('equation = "kdv"', "equation = { a = 6, b = -6, d = 1 }").replace(
            "position = [-10.0, 10.0]", "position = [-10.0, 10.0]\npolarity = [1, -1]"
        ),
        ["initial.polarity[1]: given -1 in run 0", "both polarities need"],
    ),
    (
        "too-coarse",
        edit("points = 512", "points = 64"),
        ["model.points: given 64 in run 0", "4.2 points per width", "n = 768 or 'auto'"],
    ),
    (
        "too-short-auto",
        edit("end = 10.0", 'end = "auto"').replace("length = 60.0", "length = 20.0"),
        ["model.length: given 20.0 in run 0", "periodic image"],
    ),
    (
        "auto-not-predicted",
        edit("end = 10.0", 'end = "auto"\npredict_content = false', SECH2),
        ["run.end: given 'auto' with run.predict_content = false", "needs the predicted"],
    ),
    (
        "nothing-overtakes",
        edit('kappa = [1.0, "k2"]', 'kappa = ["k2", 1.0]').replace("end = 10.0", 'end = "auto"'),
        ["run.end: given 'auto' in run 0", "overtakes"],
    ),
    (
        "sizing-tail",
        BASE + "\n[sizing]\ntail = 2.0\n",
        ["sizing.tail: given 2.0", "between 0 and 1"],
    ),
    (
        "sizing-key",
        BASE + "\n[sizing]\ntails = 1e-8\n",
        ["sizing.tails: given an unknown key", "did you mean 'tail'"],
    ),
    ("npy-missing", NPY, ["initial.file: given 'u0.npy'", "does not exist"]),
]


@pytest.mark.parametrize(("case", "text", "fragments"), MALFORMED, ids=[c[0] for c in MALFORMED])
def test_malformed_files_fail_with_one_line_naming_the_key(
    tmp_path: Path, case: str, text: str, fragments: list[str]
) -> None:
    path = write(tmp_path, text)
    out = tmp_path / "out"
    out.mkdir()
    before = _tree(tmp_path)
    with pytest.raises(ConfigError) as info:
        load_sweep(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"{path}: ")
    assert "given" in message
    assert "expected" in message
    for fragment in fragments:
        assert fragment in message, (case, message)
    assert _tree(tmp_path) == before  # nothing written, nothing touched
    assert list(out.iterdir()) == []


def test_npy_problems(tmp_path: Path) -> None:
    path = write(tmp_path, NPY)
    np.save(tmp_path / "u0.npy", np.zeros(256))
    with pytest.raises(
        ConfigError, match=r"initial\.file: given .* in run 0 .*expected an array of n = 512"
    ):
        load_sweep(path)
    np.save(tmp_path / "u0.npy", np.array([{"x": 1}], dtype=object))
    with pytest.raises(ConfigError, match=r"initial\.file: given 'u0.npy', expected a 1-D array"):
        load_sweep(path)
    np.save(tmp_path / "u0.npy", np.zeros((16, 32)))
    with pytest.raises(ConfigError, match=r"initial\.file: given 'u0.npy', expected a 1-D array"):
        load_sweep(path)
    np.save(tmp_path / "u0.npy", np.zeros(0))
    with pytest.raises(ConfigError, match=r"initial\.file: given 'u0.npy', expected a non-empty"):
        load_sweep(path)
    np.save(tmp_path / "u0.npy", np.full(512, np.nan))
    with pytest.raises(ConfigError, match="non-finite"):
        load_sweep(path)


def test_missing_file_and_bad_encoding(tmp_path: Path) -> None:
    with pytest.raises(
        ConfigError, match=r"nope\.toml: \(file\): given a path that does not exist"
    ):
        load_sweep(tmp_path / "nope.toml")
    bad = tmp_path / "bad.toml"
    bad.write_bytes(b'name = "\xff"\n')
    with pytest.raises(ConfigError, match="not UTF-8"):
        load_sweep(bad)


# ---------------------------------------------------------------- expansion


def _sweep(tmp_path: Path, vary: str, extra: str = "") -> Sweep:
    text = BASE.replace("[[vary]]\nk2 = [0.4, 0.5]\n", vary) + extra
    if "k2" not in vary:
        text = text.replace('"k2"]', "0.5]")
    return load_sweep(write(tmp_path, text))


def test_no_vary_gives_one_run(tmp_path: Path) -> None:
    s = _sweep(tmp_path, "")
    assert s.parameters == ()
    assert len(s.runs) == 1
    assert s.runs[0].params == {}
    assert solitons(s.runs[0]).kappa == (1.0, 0.5)


def test_cartesian_product_first_table_slowest(tmp_path: Path) -> None:
    s = _sweep(
        tmp_path,
        "[[vary]]\nk2 = [0.4, 0.5, 0.6]\n\n[[vary]]\nn = [256, 512]\n",
    ).runs
    assert [r.run_id for r in s] == list(range(6))
    assert [(r.params["k2"], r.params["n"]) for r in s] == [
        (0.4, 256),
        (0.4, 512),
        (0.5, 256),
        (0.5, 512),
        (0.6, 256),
        (0.6, 512),
    ]
    assert [solitons(r).kappa[1] for r in s] == [0.4, 0.4, 0.5, 0.5, 0.6, 0.6]
    assert isinstance(s[0].params["n"], int)


def test_points_from_a_parameter(tmp_path: Path) -> None:
    text = edit("k2 = [0.4, 0.5]", "k2 = [0.4, 0.5]\nn = [512, 768]").replace(
        "points = 512", 'points = "n"'
    )
    runs = load_sweep(write(tmp_path, text)).runs
    assert [r.model.grid.n for r in runs] == [512, 768]


def test_zipped_axis_with_text_values(tmp_path: Path) -> None:
    text = edit(
        "k2 = [0.4, 0.5]", 'k2 = [0.4, 0.5, 0.6]\neq = ["kdv", "mkdv", "mkdv"]\npol = [1, 1, -1]'
    )
    text = edit('equation = "kdv"', 'equation = "{eq}"', text)
    text = edit("position = [-10.0, 10.0]", 'position = [-10.0, 10.0]\npolarity = [1, "pol"]', text)
    text = edit("points = 512", "points = 2048", text)
    s = load_sweep(write(tmp_path, text))
    assert s.parameters == ("k2", "eq", "pol")
    assert [r.params for r in s.runs] == [
        {"k2": 0.4, "eq": "kdv", "pol": 1},
        {"k2": 0.5, "eq": "mkdv", "pol": 1},
        {"k2": 0.6, "eq": "mkdv", "pol": -1},
    ]
    # the kdv and mkdv presets of kv.Equation
    assert [r.model.equation.a for r in s.runs] == [6.0, 0.0, 0.0]
    assert [r.model.equation.b for r in s.runs] == [0.0, 6.0, 6.0]
    assert [solitons(r).sign for r in s.runs] == [(1, 1), (1, 1), (1, -1)]


def test_linear_and_log_ranges_against_numpy(tmp_path: Path) -> None:
    s = _sweep(
        tmp_path,
        "[[vary]]\nk2 = { from = 0.3, to = 0.8, count = 11 }\n\n"
        '[[vary]]\ng = { from = 1e-4, to = 1e-1, count = 4, spacing = "log" }\n',
    )
    assert len(s.runs) == 44
    k2 = sorted({float(r.params["k2"]) for r in s.runs})
    g = [float(r.params["g"]) for r in s.runs[:4]]
    np.testing.assert_allclose(k2, np.linspace(0.3, 0.8, 11), rtol=1e-12)
    np.testing.assert_allclose(g, np.geomspace(1e-4, 1e-1, 4), rtol=1e-12)
    assert k2[1] == 0.35  # rounded to 12 significant digits: no 0.35000000000000003
    assert g[0] == 1e-4
    assert g[-1] == 0.1


def test_latin_hypercube_reproducible_and_stratified(tmp_path: Path) -> None:
    vary = (
        '[[vary]]\ndraw = { method = "latin", count = 16, seed = 5 }\n'
        "k2 = { from = 0.3, to = 0.8 }\n"
        'g = { from = 1e-3, to = 1e-1, spacing = "log" }\n'
    )
    runs = _sweep(tmp_path, vary).runs
    k2 = np.array([r.params["k2"] for r in runs])
    g = np.array([r.params["g"] for r in runs])
    assert len(runs) == 16
    # reproducible: the same file read again, and scipy's own generator with the same seed
    again = _sweep(tmp_path, vary).runs
    assert [r.params for r in again] == [r.params for r in runs]
    unit = qmc.LatinHypercube(d=2, rng=5).random(16)
    np.testing.assert_allclose(k2, 0.3 + 0.5 * unit[:, 0], rtol=1e-11)
    np.testing.assert_allclose(np.log(g), np.log(1e-3) + unit[:, 1] * np.log(100.0), rtol=1e-10)
    # Latin hypercube property: each of the 16 strata of every range holds exactly one sample
    # (McKay, Beckman & Conover 1979, Technometrics 21, 239 [memory])
    strata_k = np.floor((k2 - 0.3) / 0.5 * 16).astype(int)
    strata_g = np.floor((np.log(g) - np.log(1e-3)) / np.log(100.0) * 16).astype(int)
    assert sorted(strata_k) == list(range(16))
    assert sorted(strata_g) == list(range(16))
    other = _sweep(tmp_path, vary.replace("seed = 5", "seed = 6")).runs
    assert [r.params for r in other] != [r.params for r in runs]


def test_uniform_draw(tmp_path: Path) -> None:
    vary = (
        '[[vary]]\ndraw = { method = "uniform", count = 50, seed = 11 }\n'
        "k2 = { from = 0.3, to = 0.8 }\n"
    )
    runs = _sweep(tmp_path, vary).runs
    k2 = np.array([r.params["k2"] for r in runs])
    ref = 0.3 + 0.5 * np.random.default_rng(11).random((50, 1))[:, 0]
    np.testing.assert_allclose(k2, ref, rtol=1e-11)
    assert np.all((k2 >= 0.3) & (k2 <= 0.8))


def test_derived_values_and_conversions(tmp_path: Path) -> None:
    text = edit("[model]", '[derive]\nhalf = "6 / k2"\nk1 = 1.0\n\n[model]')
    text = edit("position = [-10.0, 10.0]", 'position = ["-half", "half"]', text)
    runs = load_sweep(write(tmp_path, text)).runs
    assert [solitons(r).x0 for r in runs] == [(-15.0, 15.0), (-12.0, 12.0)]
    # amplitudes and speeds become kappas (KdV: amplitude 2 k^2, speed 4 k^2; Korteweg & de Vries
    # 1895, normalised as in Ablowitz 2011, Eq. 1.5)
    amp = edit('kappa = [1.0, "k2"]', 'amplitude = [2.0, "2 * k2^2"]')
    runs = load_sweep(write(tmp_path, amp)).runs
    assert [solitons(r).kappa for r in runs] == [(1.0, 0.4), (1.0, 0.5)]
    spd = edit('kappa = [1.0, "k2"]', 'speed = [4.0, "4 * k2^2"]')
    runs = load_sweep(write(tmp_path, spd)).runs
    assert [solitons(r).kappa for r in runs] == [(1.0, 0.4), (1.0, 0.5)]


def test_record_times(tmp_path: Path) -> None:
    run = load_sweep(write(tmp_path, edit("end = 10.0", "end = 10.2"))).runs[0].run
    times = run.record_times
    assert times[0] == 0.0
    assert times[-1] == 10.2 == run.t_end
    assert list(times[:-1]) == [0.5 * i for i in range(21)]
    assert all(b > a for a, b in itertools.pairwise(times))
    assert run.store_frames is False
    assert run.frame_stride == 1


def test_profiles_and_adaptive_scheme(tmp_path: Path) -> None:
    text = edit(
        'kind = "solitons"\nkappa = [1.0, "k2"]\nposition = [-10.0, 10.0]',
        'kind = "box"\nheight = "k2"\nhalf_width = 3.0\nedge = 0.2',
    )
    text = edit('scheme = "etdrk4"\ndt = 2.5e-3', 'scheme = "adaptive"\ntol = 1e-8', text)
    runs = load_sweep(write(tmp_path, text)).runs
    assert runs[1].initial == kv.initial.Box(height=0.5, half_width=3.0, center=0.0, edge=0.2)
    assert runs[1].initial.plain() == {
        "kind": "box",
        "height": 0.5,
        "center": 0.0,
        "half_width": 3.0,
        "edge": 0.2,
    }
    assert runs[0].model.scheme == "adaptive"
    assert runs[0].model.tol == 1e-8
    assert runs[0].model.dt > 0


def test_npy_initial_data(tmp_path: Path) -> None:
    data = tmp_path / "data"
    data.mkdir()
    np.save(data / "u0.npy", np.linspace(0, 1, 512))
    path = write(data, NPY)
    spec = load_sweep(path).runs[0]
    assert spec.initial == kv.initial.FileData(
        str((data / "u0.npy").resolve()), kv.initial.file_digest(data / "u0.npy")
    )
    u = kv.initial.build_profile(spec.initial, kv.Grid(512, 60.0), kv.Equation.kdv())
    np.testing.assert_array_equal(u, np.linspace(0, 1, 512))


# ---------------------------------------------------------------- plain data, ids, digest


def test_runspecs_are_plain_data(tmp_path: Path) -> None:
    s = load_sweep(write(tmp_path, BASE))
    for spec in s.runs:
        assert isinstance(spec, RunSpec)
        text = json.dumps(spec.plain())
        assert json.loads(text) == spec.plain()
        assert pickle.loads(pickle.dumps(spec)) == spec  # dask ships specs to workers
    spec = s.runs[0]
    assert isinstance(spec.model.equation, kv.Equation)  # the equation itself, not a dict of it
    assert spec.model.equation == kv.Equation.kdv()
    assert spec.model.grid == kv.Grid(512, 60.0)
    assert set(spec.plain()["model"]) == {"equation", "n", "length", "scheme", "dt", "tol"}
    assert set(spec.plain()["model"]["equation"]) == {
        "name",
        "a",
        "b",
        "d",
        "f",
        "g",
        "v",
        "dealias",
    }
    assert set(spec.plain()["run"]) == {"t_end", "record_times", "store_frames", "frame_stride"}
    assert s.name == "t"
    assert s.text == BASE
    assert s.path == (tmp_path / "sweep.toml").resolve()


def test_digest_ignores_layout_but_not_content(tmp_path: Path) -> None:
    d0 = load_sweep(write(tmp_path, BASE, "a.toml")).digest
    assert len(d0) == 64
    assert int(d0, 16) >= 0
    cosmetic = "# a comment\n" + BASE.replace("points = 512", "points   =   512   # n").replace(
        'name = "t"', 'name = "renamed"\nnote = "x"'
    )
    assert load_sweep(write(tmp_path, cosmetic, "b.toml")).digest == d0
    reordered = edit("points = 512\nlength = 60.0", "length = 60.0\npoints = 512")
    assert load_sweep(write(tmp_path, reordered, "c.toml")).digest == d0
    changed = edit("dt = 2.5e-3", "dt = 2e-3")
    assert load_sweep(write(tmp_path, changed, "d.toml")).digest != d0
    same_value = edit("dt = 2.5e-3", 'dt = "2.5e-3"')  # an expression with the same value
    assert load_sweep(write(tmp_path, same_value, "e.toml")).digest == d0


def test_example_sweeps_load_cleanly() -> None:
    files = sorted(SWEEPS.glob("*.toml"))
    assert len(files) >= 4
    for path in files:
        s = load_sweep(path)
        # the content demo names the slow solitons it leaves out of the comparison, on purpose
        expected = (
            ("sizing: 6 of 6 runs may end before predicted solitons separate",)
            if path.stem == "content"
            else ()
        )
        assert len(s.warnings) == len(expected), (path, s.warnings)
        assert all(e in w for e, w in zip(expected, s.warnings, strict=True)), s.warnings
        assert [r.run_id for r in s.runs] == list(range(len(s.runs)))
        assert load_sweep(path).digest == s.digest


def test_demo_is_a_few_dozen_kdv_and_mkdv_pairs() -> None:
    s = load_sweep(SWEEPS / "demo.toml")
    assert 24 <= len(s.runs) <= 40
    names = {r.model.equation.name for r in s.runs}
    assert names == {"kdv", "mkdv"}
    assert {tuple(solitons(r).sign) for r in s.runs if r.params["equation"] == "mkdv"} == {
        (1, 1),
        (1, -1),
    }
    assert all(len(solitons(r).kappa) == 2 for r in s.runs)


# ---------------------------------------------------------------- sizing and resolution


def _tail_gap(k1: float, k2: float, family: str, tail: float) -> float:
    # sech^2(z) ~ 4 e^{-2|z|} (KdV soliton, Korteweg & de Vries 1895), sech(2 k x) ~ 2 e^{-2 k |x|}
    # (mKdV soliton, Wadati 1973)
    c = 4.0 if family == "kdv" else 2.0
    return math.log(c / tail) / (2 * min(k1, k2))


def _pair_shifts(k1: float, k2: float, family: str) -> tuple[float, float]:
    """Two-soliton position shifts, k1 > k2 (Gardner, Greene, Kruskal & Miura 1974 for KdV;
    Zakharov & Shabat 1972 for mKdV, the same in kappa [memory])."""
    log = math.log((k1 + k2) / (k1 - k2))
    return log / k1, -log / k2


def _check_no_image_meeting(spec: RunSpec, tail: float) -> None:
    """Centres x0 + c t on the periodic box: no soliton within a gap of another's image, every
    overtaking pair a gap apart at the end (checked on a fine time grid, not at end points)."""
    eq = spec.model.equation
    family = "kdv" if eq.a else "mkdv"
    kappas, x0 = solitons(spec).kappa, solitons(spec).x0
    speeds = [4 * eq.d * k * k for k in kappas]  # both canonical solitons move at 4 kappa^2
    L, T = spec.model.grid.length, spec.run.t_end
    t = np.linspace(0.0, T, 4001)
    for i in range(len(kappas)):
        assert -L / 2 <= x0[i] < L / 2
        for j in range(len(kappas)):
            if i == j:
                continue
            s = _tail_gap(kappas[i], kappas[j], family, tail)
            d = (x0[i] - x0[j]) + (speeds[i] - speeds[j]) * t
            for m in (-2, -1, 1, 2):
                assert np.min(np.abs(d - m * L)) >= s * (1 - 1e-9), (spec.run_id, i, j, m)
            if i < j and speeds[i] > speeds[j]:
                assert d[-1] >= s * (1 - 1e-9)  # overtaken and one gap clear
                if len(kappas) == 2:  # with the exact shifts the pair still misses the image
                    di, dj = _pair_shifts(kappas[i], kappas[j], family)
                    assert d[-1] + di - dj <= L - s


def test_auto_sized_demo_runs_never_meet_a_periodic_image() -> None:
    s = load_sweep(SWEEPS / "demo.toml")
    for spec in s.runs:
        _check_no_image_meeting(spec, 1e-8)
        if spec.initial.kind == "solitons" and spec.params.get("k2") is not None:
            # auto positions: the listed order, exactly one gap apart
            fam = "kdv" if spec.params["equation"] == "kdv" else "mkdv"
            gap = solitons(spec).x0[1] - solitons(spec).x0[0]
            assert gap == pytest.approx(
                _tail_gap(1.0, float(spec.params["k2"]), fam, 1e-8), rel=1e-9
            )


def test_auto_sized_three_solitons(tmp_path: Path) -> None:
    s = load_sweep(SWEEPS / "three-solitons.toml")
    for spec in s.runs:
        _check_no_image_meeting(spec, 1e-8)


@pytest.mark.parametrize("k2", [0.3, 0.55, 0.8])
def test_sized_pair_exact_solution_separated_at_the_end(tmp_path: Path, k2: float) -> None:
    """The exact Hirota 2-soliton (kv.exact) at t_end: two peaks a gap apart, short of an image."""
    text = edit("k2 = [0.4, 0.5]", f"k2 = [{k2}]")
    for key, value in (
        ("points = 512", 'points = "auto"'),
        ("length = 60.0", 'length = "auto"'),
        ("position = [-10.0, 10.0]", 'position = "auto"'),
        ("end = 10.0", 'end = "auto"'),
    ):
        text = edit(key, value, text)
    spec = load_sweep(write(tmp_path, text)).runs[0]
    T, L = spec.run.t_end, spec.model.grid.length
    kappas, x0 = solitons(spec).kappa, solitons(spec).x0
    x = np.linspace(x0[0] - 50, x0[1] + 4 * kappas[0] ** 2 * T + 50, 200001)  # the open line
    u = kv.exact.multisoliton(x, T, kappas, x0, "kdv")
    peaks = np.flatnonzero((u[1:-1] > u[:-2]) & (u[1:-1] > u[2:]) & (u[1:-1] > 1e-3)) + 1
    assert len(peaks) == 2
    fast, slow = x[peaks[np.argmax(u[peaks])]], x[peaks[np.argmin(u[peaks])]]
    s = _tail_gap(1.0, k2, "kdv", 1e-8)
    assert fast - slow >= s  # collision complete, one gap clear
    assert fast - slow <= L - s  # the fast one has not reached the slow one's periodic image


@pytest.mark.parametrize("shape", ["sech2", "sech"])
def test_soliton_spectra_decay_as_the_resolution_rule_assumes(shape: str) -> None:
    # The continuous transforms int sech^2(x) e^{-ikx} dx = pi k / sinh(pi k / 2) and
    # int sech(x) e^{-ikx} dx = pi / cosh(pi k / 2) (standard tables, e.g. Gradshteyn & Ryzhik
    # [memory]), against numpy's FFT of the sampled profile: both decay like e^{-pi k w / 2}.
    n, length = 4096, 400.0
    x = -length / 2 + length / n * np.arange(n)
    u = 1 / np.cosh(x) ** 2 if shape == "sech2" else 1 / np.cosh(x)
    k = 2 * np.pi / length * np.arange(1, n // 2 + 1)  # k = 0 left out (0/0 in the formula)
    numeric = np.abs(np.fft.rfft(u))[1:] * (length / n)
    exact = (
        np.pi * k / np.sinh(np.pi * k / 2) if shape == "sech2" else np.pi / np.cosh(np.pi * k / 2)
    )
    band = k < 18.0  # above it the transform is below 1e-11 of its peak: round-off
    np.testing.assert_allclose(numeric[band], exact[band], rtol=1e-6, atol=1e-14)
    # decay rate of the measured spectrum between k = 12 and 16: pi / 2 (up to the algebraic k)
    i, j = np.searchsorted(k, 12.0), np.searchsorted(k, 16.0)
    rate = (np.log(numeric[j]) - np.log(numeric[i])) / (k[j] - k[i])
    assert rate == pytest.approx(-np.pi / 2, rel=0.06)


def test_resolution_thresholds() -> None:
    # The Fourier transform of sech^2(kappa x) decays like e^{-pi k / (2 kappa)} (previous test):
    # 16 decades need k_max >~ 2 * 16 ln(10) / pi kappa = 23.5 kappa, i.e.
    # dx <~ 0.13/kappa undealiased and ~0.09/kappa with 2/3 dealiasing (KdV width 1/kappa)
    per_width = sizing.min_points_per_width(1.0, sizing.WARN_DECADES)
    assert math.pi * per_width == pytest.approx(23.5, rel=0.01)
    assert 1 / per_width == pytest.approx(0.13, abs=0.005)
    assert 1 / sizing.min_points_per_width(2 / 3, sizing.WARN_DECADES) == pytest.approx(
        0.09, abs=0.002
    )
    assert sizing.min_points_per_width(2 / 3, sizing.REFUSE_DECADES) == pytest.approx(4.2, abs=0.05)
    assert sizing.min_points_per_width(1 / 2, sizing.WARN_DECADES) == pytest.approx(14.9, abs=0.05)


def test_resolution_warns_then_refuses(tmp_path: Path) -> None:
    # kappa = 1 KdV on L = 60: 11.2 points per width need n >= 673; 4.2 need n >= 252
    warned = load_sweep(write(tmp_path, edit("points = 512", "points = 384")))
    assert len(warned.warnings) == 1
    assert (
        "model.points: 2 of 2 runs resolve the narrowest soliton with fewer than 11.2"
        in (warned.warnings[0])
    )
    assert load_sweep(write(tmp_path, edit("points = 512", "points = 768"))).warnings == ()
    with pytest.raises(ConfigError, match=r"model\.points: given 240 in run 0"):
        load_sweep(write(tmp_path, edit("points = 512", "points = 240")))


def test_auto_points_pass_the_check_and_are_fft_friendly(tmp_path: Path) -> None:
    text = edit("points = 512", 'points = "auto"')
    spec = load_sweep(write(tmp_path, text)).runs[0]
    n = spec.model.grid.n
    assert n == 768  # smallest of 2^p, 3 2^p above 60 * 11.2
    assert 60.0 / n <= 1 / sizing.min_points_per_width(2 / 3, sizing.WARN_DECADES)


@pytest.mark.parametrize("name", ["status", "eq_a", "dealias", "regime", "kappa", "ist_count"])
def test_parameter_named_like_a_result_column_is_refused(tmp_path: Path, name: str) -> None:
    text = edit("k2 = [0.4, 0.5]", f"k2 = [0.4, 0.5]\n{name} = [1.0, 2.0]")
    with pytest.raises(ConfigError, match=rf"vary\[0\]\.{name}: given '{name}', expected a "):
        load_sweep(write(tmp_path, text))
    # the model's columns may be swept by name: the parameter's values fill them
    ok = edit("k2 = [0.4, 0.5]", "k2 = [0.4, 0.5]\nn = [512, 768]").replace(
        "points = 512", 'points = "n"'
    )
    assert load_sweep(write(tmp_path, ok)).layout.parameters == {"k2": "float", "n": "int"}


def test_step_options_follow_the_simulation(tmp_path: Path) -> None:
    # The adaptive scheme's defaults are the simulation's; a tolerance of 1 or more is refused.
    adaptive = edit('scheme = "etdrk4"\ndt = 2.5e-3', 'scheme = "adaptive"')
    spec = load_sweep(write(tmp_path, adaptive)).runs[0]
    assert (spec.model.dt, spec.model.tol) == kv.simulation.step_options("adaptive")
    loose = edit('scheme = "etdrk4"\ndt = 2.5e-3', 'scheme = "adaptive"\ntol = 1.5')
    with pytest.raises(ConfigError, match=r"model\.tol: given 1\.5 in run 0 .*below 1"):
        load_sweep(write(tmp_path, loose))


def test_large_step_is_warned(tmp_path: Path) -> None:
    s = load_sweep(write(tmp_path, edit("dt = 2.5e-3", "dt = 0.05")))
    assert any("model.dt" in w and "measured stable step" in w for w in s.warnings)


def test_short_explicit_length_is_only_a_warning(tmp_path: Path) -> None:
    s = load_sweep(
        write(
            tmp_path,
            edit("length = 60.0", "length = 30.0")
            .replace("position = [-10.0, 10.0]", "position = [-5.0, 5.0]")
            .replace("points = 512", "points = 384"),
        )
    )
    assert any("model.length" in w and "too short" in w for w in s.warnings)


def test_opposite_polarity_peak_enters_the_step_check(tmp_path: Path) -> None:
    # The exact mKdV 2-soliton (Hirota 1972, via kv.exact) of opposite
    # polarities peaks at a1 + a2 = 2 + 1.2 where the solitons meet (t = 8 / 2.56 here)
    x = np.linspace(-20.0, 20.0, 20001)
    peak = max(
        np.abs(kv.exact.multisoliton(x, t, [1.0, 0.6], [-4.0, 4.0], "mkdv", signs=[1, -1])).max()
        for t in np.linspace(3.0, 3.3, 151)
    )
    assert peak == pytest.approx(3.2, rel=1e-3)
    text = edit('equation = "kdv"', 'equation = "mkdv"').replace("points = 512", "points = 2048")
    text = text.replace("dt = 2.5e-3", "dt = 1.5e-3").replace('"k2"]', "0.6]")
    same = load_sweep(write(tmp_path, text)).warnings
    assert same == ()  # limit with max|u| = 2: 2.2e-3
    opposite = text.replace(
        "position = [-10.0, 10.0]", "position = [-10.0, 10.0]\npolarity = [1, -1]"
    )
    warnings = load_sweep(write(tmp_path, opposite)).warnings
    assert len(warnings) == 1
    assert "model.dt: 2 of 2 runs exceed" in warnings[0]  # limit with max|u| = 3.2: 8.6e-4


# ---------------------------------------------------------------- limits and the time limit


def test_frame_count_matches_the_record_times() -> None:
    from kdvsweep.sweep.expand import _frame_count, _record_times

    # the frame limit is checked on this count before any list of times is built
    for end, every in [(10.0, 0.5), (10.2, 0.5), (1.0, 0.3), (7.0, 0.1), (0.05, 0.1)]:
        assert _frame_count(end, every) == len(_record_times(end, every))
    assert _frame_count(1e308, 1e-300) == math.inf


def test_time_limit_is_a_run_setting_outside_the_digest(tmp_path: Path) -> None:
    from kdvsweep.sweep.config import DEFAULT_TIME_LIMIT

    plain = load_sweep(write(tmp_path, BASE))
    assert {r.run.time_limit for r in plain.runs} == {DEFAULT_TIME_LIMIT}
    limited = load_sweep(
        write(tmp_path, edit("frame_every = 0.5", "frame_every = 0.5\ntime_limit = 2.5"))
    )
    assert {r.run.time_limit for r in limited.runs} == {2.5}
    # how long a run may take does not change what it computes
    assert limited.digest == plain.digest
    assert "time_limit" not in json.dumps(limited.runs[0].plain())


def test_run_over_its_time_limit_is_stored_as_failed(tmp_path: Path) -> None:
    from kdvsweep.sweep.runner import execute

    # 4e6 steps of n = 512 take far longer than the 0.2 s allowed
    text = edit("frame_every = 0.5", "frame_every = 0.5\ntime_limit = 0.2")
    spec = load_sweep(write(tmp_path, text.replace("dt = 2.5e-3", "dt = 2.5e-6"))).runs[0]
    result = execute(spec)
    assert result.run_row["status"] == "failed"
    assert result.run_row["reason"].startswith("TimeLimitError: ")
    assert "0.2 s" in result.run_row["reason"]
    assert result.run_row["wall_time"] < 10.0  # stopped near the limit, not after the run


def test_default_sweep_name_is_the_safe_form_of_the_file_stem(tmp_path: Path) -> None:
    text = BASE.replace('name = "t"\n', "")
    assert load_sweep(write(tmp_path, text, "my sweep (v2).toml")).name == "my_sweep_v2_"
    assert load_sweep(write(tmp_path, text, ".hidden.toml")).name == "hidden"
    with pytest.raises(ConfigError, match=r"sweep\.name: given 'a/b', expected a name of at most"):
        load_sweep(write(tmp_path, BASE.replace('name = "t"', 'name = "a/b"')))


@pytest.mark.parametrize(
    ("old", "new", "fragments"),
    [
        (
            "length = 60.0",
            'length = "auto"',
            ["model.length: given 'auto'", "the samples of an npy file"],
        ),
        (
            "points = 512",
            'points = "auto"',
            ["model.points: given 'auto'", "not an npy file"],
        ),
    ],
)
def test_npy_data_give_their_length_and_points(
    tmp_path: Path, old: str, new: str, fragments: list[str]
) -> None:
    # Content sizing (profile data): a file's samples are the data on the length given.
    np.save(tmp_path / "hump.npy", 2.0 / np.cosh(np.linspace(-30.0, 30.0, 512, endpoint=False)))
    text = SECH2.replace(
        'kind = "sech2"\nheight = 2.0\nscale = 1.0', 'kind = "npy"\nfile = "hump.npy"'
    )
    assert old in text
    with pytest.raises(ConfigError) as info:
        load_sweep(write(tmp_path, text.replace(old, new)))
    message = str(info.value)
    assert "\n" not in message
    for fragment in fragments:
        assert fragment in message, message


def test_profile_data_predict_content_by_default(tmp_path: Path) -> None:
    sweep = load_sweep(write(tmp_path, SECH2))
    assert sweep.layout.content
    assert not sweep.layout.analysis
    assert all(r.run.predict_content for r in sweep.runs)
    off = load_sweep(
        write(tmp_path, edit("end = 10.0", "end = 10.0\npredict_content = false", SECH2))
    )
    assert off.layout.content  # the measured content still has its columns
    assert not any(r.run.predict_content for r in off.runs)
