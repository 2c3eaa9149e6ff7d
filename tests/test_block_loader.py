"""Runs evaluated in blocks: the same runs, digest, warnings and errors as run by run.

The loader evaluates a sweep :attr:`kdvsweep.sweep.expand.Runs.BLOCK` runs at a time, every value
an array over the block; a run alone is a block of one, evaluated by the same code. These tests
hold the blocks to the runs taken one at a time (``Runs.BLOCK = 1``, which is how the loader
evaluated a sweep before it had blocks): the digest, every run, the warnings word for word and
in the same order, and the first error of the sweep in run order, which a block finds by
evaluating itself again run by run once any of its runs fails a check.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from kdvsweep.exceptions import ConfigError
from kdvsweep.sweep import load_sweep
from kdvsweep.sweep.expand import Runs

SWEEPS = Path(__file__).resolve().parent.parent / "sweeps"

BASE = """
[[vary]]
k2 = {{ from = 0.3, to = 0.6, count = {count} }}
{more}
[derive]
gap = "30 * (1 - k2)"

[model]
{equation}points = {points}
length = {length}
scheme = {scheme}
dt = {dt}

[initial]
kind = "solitons"
{size} = [{k1}]
position = {position}
{polarity}
[run]
end = {end}
frame_every = 0.5
{extra}
"""

DEFAULTS = {
    "count": 40,
    "more": "",
    "equation": 'equation = "kdv"\n',
    "points": 1024,
    "length": 120.0,
    "scheme": '"etdrk4"',
    "dt": 0.005,
    "size": "kappa",
    "k1": '1.0, "k2"',
    "position": '["-gap", "gap"]',
    "polarity": "",
    "end": 1.0,
    "extra": "",
}

#: Sweeps that take the evaluation through its branches: automatic sizing, text and numeric
#: axes, per-run equations, polarities, an automatic step, a target with verified runs,
#: warnings of several kinds in different runs, and physical units.
VARIANTS = {
    "plain": {},
    "auto": {"length": '"auto"', "points": '"auto"', "position": '"auto"', "end": '"auto"'},
    "text-axis": {
        "more": '[[vary]]\nmethod = ["ifrk4", "etdrk4", "strang"]\n',
        "scheme": '"{method}"',
        "length": 60.0,
    },
    "coefficient-axis": {
        "more": "[[vary]]\nstrength = [4.0, 6.0, 9.0]\n",
        "equation": 'equation = { a = "strength", b = 0.0, d = 1.0 }\n',
        "length": '"auto"',
        "end": '"auto"',
    },
    "damping-axis": {
        "equation": 'equation = { preset = "kdv", g = "0.002 * k2", v = "0.001 * gap" }\n',
        "length": '"auto"',
        "end": '"auto"',
    },
    "fifth-order-axis": {
        "more": "[[vary]]\nfifth = [-0.002, 0.0, 0.001]\n",
        "equation": 'equation = { preset = "kdv", f = "fifth" }\n',
        "scheme": '"ifrk4"',
        "dt": 0.01,
    },
    "mkdv-polarity": {
        "more": "[[vary]]\npol = [1, -1]\n",
        "equation": 'equation = "mkdv"\n',
        "polarity": 'polarity = [1, "pol"]',
        "points": 2048,
    },
    "gardner": {
        "equation": "equation = { a = 6.0, b = 3.0, d = 1.0 }\n",
        "k1": '0.8, "k2"',
        "length": '"auto"',
    },
    "auto-step": {"dt": '"auto"', "extra": "\n[accuracy]\nshift = 1e-6\nverify = 0.3\n"},
    "warnings": {
        "more": "[[vary]]\nn = [384, 512, 1024]\n",
        "length": '"50 + 40 * k2"',
        "points": '"n"',
        "dt": 0.05,
    },
    "per-run-step": {"dt": '"0.002 * (1 + k2)"', "points": 512},
    "water": {
        "more": "[[vary]]\ndepth = [0.2, 0.4]\n",
        "extra": '\n[units]\nsystem = "shallow-water"\ndepth = "depth"\n',
        "equation": None,
        "size": "amplitude",
        "k1": '"0.3 * depth", "0.05 * depth + 0.01 * k2"',
        "length": '"auto"',
        "end": '"auto"',
        "position": '"auto"',
        "points": '"auto"',
        "dt": 0.02,
    },
}


def _text(**changes: object) -> str:
    values = {**DEFAULTS, **changes}
    if values["equation"] is None:  # [units]: the system gives it
        values["equation"] = ""
    return BASE.format(**values)


def _outcome(path: Path) -> tuple[object, ...]:
    try:
        sweep = load_sweep(path)
    except ConfigError as err:
        return ("error", str(err))
    runs = [spec.plain() for spec in sweep.runs]
    return ("ok", sweep.digest, sweep.warnings, runs)


def _both(path: Path, monkeypatch: pytest.MonkeyPatch, block: int = 16) -> tuple[object, object]:
    """The outcome in blocks of ``block`` runs, and run by run."""
    monkeypatch.setattr(Runs, "BLOCK", block)
    monkeypatch.setattr(Runs, "PROFILE_BLOCK", block)
    blocks = _outcome(path)
    monkeypatch.setattr(Runs, "BLOCK", 1)
    monkeypatch.setattr(Runs, "PROFILE_BLOCK", 1)
    alone = _outcome(path)
    return blocks, alone


@pytest.mark.parametrize("name", sorted(VARIANTS))
def test_blocks_match_runs_taken_one_by_one(
    name: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    text = _text(**VARIANTS[name])
    path = tmp_path / f"{name}.toml"
    path.write_text(text)
    blocks, alone = _both(path, monkeypatch)
    assert blocks[0] == "ok", blocks
    assert blocks == alone


@pytest.mark.parametrize("name", sorted(p.name for p in SWEEPS.glob("*.toml")))
def test_examples_match_in_blocks_of_two(name: str, monkeypatch: pytest.MonkeyPatch) -> None:
    blocks, alone = _both(SWEEPS / name, monkeypatch, block=2)
    assert blocks == alone


def test_warnings_keep_the_order_of_runs(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # run 0 warns of its resolution and step, only a later run of its length: run by run those
    # lines come first, though a block meets the length's check first in its code
    text = _text(count=12, length='"200 - 1700 * max(0, k2 - 0.5)"', dt='"0.08 - 0.2 * (k2 - 0.3)"')
    path = tmp_path / "order.toml"
    path.write_text(text)
    blocks, alone = _both(path, monkeypatch, block=16)
    assert blocks == alone
    keys = [w.split(": ")[1] for w in blocks[2]]
    assert keys == ["model.points", "model.dt", "model.length"]
    assert "(worst run 11:" in blocks[2][2]


def test_the_first_error_in_run_order_is_reported(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # k2 = 0.3, 0.33, ..., 0.6: run 8 (k2 = 0.54) fails early (its position divides by zero),
    # run 5 (k2 = 0.45) late (its end gives more than 10^5 frames); a block meets run 8's
    # mistake first, the sweep's first mistake is run 5's
    text = _text(
        count=11,
        position='["-gap", "gap * (k2 - 0.54) / (k2 - 0.54)"]',
        end='"1 / abs(k2 - 0.45 + 1e-5)"',
    )
    path = tmp_path / "two-mistakes.toml"
    path.write_text(text)
    blocks, alone = _both(path, monkeypatch, block=64)
    assert blocks == alone
    kind, message = blocks
    assert kind == "error"
    assert "run 5 " in message
    assert "run.frame_every" in message


def test_a_run_is_the_same_from_any_block(tmp_path: Path) -> None:
    path = tmp_path / "plain.toml"
    path.write_text(_text(count=300, **VARIANTS["auto"]))
    sweep = load_sweep(path)
    listed = list(sweep.runs)
    rng = np.random.default_rng(5)
    for i in rng.permutation(len(listed))[:40].tolist():
        assert sweep.runs[i] == listed[i]


def test_model_json_is_the_canonical_json_of_the_model() -> None:
    # the digest writes the models of a block without making them: the same text as the
    # canonical JSON of each model's plain form
    from kdvsweep.model import Equation, Grid
    from kdvsweep.sweep.expand import _plain_json
    from kdvsweep.sweep.specs import ModelSpec

    rng = np.random.default_rng(3)
    equations = [
        Equation.preset("kdv"),
        Equation.preset("mkdv"),
        Equation(a=6.0, b=3.0, d=1.0, v=0.01),
        Equation(a=-1.5, b=0.0, d=2.0, f=1e-3, dealias=0.5),
    ]
    for eq in equations:
        for scheme, adaptive in (("etdrk4", False), ("adaptive", True)):
            grids = [
                Grid(int(n), float(rng.uniform(1, 500))) for n in rng.choice([64, 96, 4096], 8)
            ]
            dts = rng.uniform(1e-5, 0.1, 8).tolist()
            tols = rng.uniform(1e-9, 1e-3, 8).tolist() if adaptive else [None] * 8
            written = ModelSpec.plain_jsons([eq] * 8, scheme, grids, dts, tols)
            made = [
                _plain_json(ModelSpec(eq, g, scheme, d, t).plain())
                for g, d, t in zip(grids, dts, tols, strict=True)
            ]
            assert written == made
