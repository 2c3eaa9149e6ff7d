"""The lazy loader: runs expanded on demand, the digest streamed, every error found at load.

``load_sweep`` used to build every run spec and hash one JSON document of them all; it now checks
and hashes each run as it goes and keeps none (``Sweep.runs`` expands a run again when asked).
These tests hold it to the eager loader's results: the same runs in the same order, the same
digest (the documented definition, recomputed here in full, and the digests the eager loader gave
for the example sweeps), the same errors, found before anything runs, and memory that does not
grow with the number of runs.
"""

from __future__ import annotations

import hashlib
import itertools
import json
import tracemalloc
from pathlib import Path

import pytest

from kdvsweep.exceptions import ConfigError
from kdvsweep.sweep import load_sweep
from kdvsweep.sweep.config import FORMAT
from kdvsweep.sweep.space import Space

SWEEPS = Path(__file__).resolve().parent.parent / "sweeps"

#: The digests of the example sweeps as the eager loader computed them (commit 32b534c, before
#: the loader became lazy). A change here means every store of that example made before it is
#: refused as belonging to another sweep: change an example's physics, then update its digest.
EAGER_DIGESTS = {
    "breather.toml": "34942017427d891458f0ffbf0502d7c8d312a52d6b58485ada64491e65d4db8e",
    "content.toml": "15efe6af85e5b4d541bd1a275f095ebd0005e105b51067f8367ef65c145a7953",
    "damped-pair.toml": "943ecc3a217049ed698f9a74708580ada2be05d119466ced114d1786f377f290",
    "demo.toml": "73f728a970ea7ccb92e4d38ed733b43c2e79197684d421c83235963f7e640a13",
    "fifth-order-wave.toml": "5883c6ec21072fb5afa84ae5b194c086cc574afbe354a1f6acfb01b694e6fbc1",
    "gardner-pairs.toml": "157a6e49a79fe31ab9871937286f19031a30690e82e9882f07d550cd4e86e0a9",
    "interface-polarity.toml": "1c300341a567adbb0dbf1500b8140575f728ee19223a2a44adc76bbe124539e7",
    "ion-acoustic.toml": "4d3f563be436c1637f4cc13adf2cfc46ab0c4fc0eb1aa1c4a48c1d15272b5947",
    "pairs-lhs.toml": "91f473316b52e8cee2deea629d886ba98d7d13fc844267e0a672dd776693ce21",
    "sech2-damped.toml": "a1488e33088d0e46964bbdcdb422bcfe7a45ba17314b82d3cad8d9e4095b609e",
    "three-solitons.toml": "db521ed5695e740a5264e0ced57c7b6feec0089e5363fa535ca5780281400efb",
    "wave-tank.toml": "e8365a1ac52145f2ab3c2974350f0ee2ca0545a1ec7eb63e7cd48113a9b63c4d",
}

PAIRS = """
[[vary]]
k2 = {{ from = 0.3, to = 0.6, count = {count} }}

[derive]
gap = "30 * (1 - k2)"

[model]
equation = "kdv"
points = 1024
length = 120.0
scheme = "etdrk4"
dt = 0.005

[initial]
kind = "solitons"
kappa = [1.0, "k2"]
position = ["-gap", "gap"]

[run]
end = 1.0
frame_every = 0.5
"""


def eager_digest(sweep: object) -> str:
    """The digest as documented (``kdvsweep.sweep.config``): the sha256 of one canonical JSON of
    the format, the frame settings and every run, an ``.npy`` file by its content."""
    runs = []
    for spec in sweep.runs:  # type: ignore[attr-defined]
        data = spec.plain()
        if data["initial"]["kind"] == "npy":
            data["initial"] = {k: v for k, v in data["initial"].items() if k != "path"}
        runs.append(data)
    doc = {"format": FORMAT, "frames": sweep.frames, "runs": runs}  # type: ignore[attr-defined]
    text = json.dumps(doc, sort_keys=True, separators=(",", ":"), allow_nan=False)
    return hashlib.sha256(text.encode()).hexdigest()


@pytest.mark.parametrize("name", sorted(EAGER_DIGESTS))
def test_examples_keep_their_digests(name: str) -> None:
    sweep = load_sweep(SWEEPS / name)
    assert sweep.digest == EAGER_DIGESTS[name]
    assert sweep.digest == eager_digest(sweep)


def test_every_example_is_pinned() -> None:
    assert sorted(p.name for p in SWEEPS.glob("*.toml")) == sorted(EAGER_DIGESTS)


def test_runs_by_index_and_by_iteration_agree(tmp_path: Path) -> None:
    text = PAIRS.format(count=4).replace(
        "[derive]", '[[vary]]\nscheme = ["etdrk4", "ifrk4"]\n\n[derive]'
    )
    text = text.replace('scheme = "etdrk4"', 'scheme = "{scheme}"')
    path = tmp_path / "two-axes.toml"
    path.write_text(text)
    sweep = load_sweep(path)
    listed = list(sweep.runs)
    assert len(sweep.runs) == len(listed) == 8
    assert [r.run_id for r in listed] == list(range(8))
    # the cartesian product, first axis slowest (as nested loops in file order)
    k2 = sorted({r.params["k2"] for r in listed})
    expected = [{"k2": k, "scheme": s} for k, s in itertools.product(k2, ["etdrk4", "ifrk4"])]
    assert [r.params for r in listed] == expected
    for i, spec in enumerate(listed):
        assert sweep.runs[i] == spec
        assert sweep.runs[i - 8] == spec
    assert sweep.runs[2:5] == listed[2:5]
    assert [r.model.scheme for r in listed] == ["etdrk4", "ifrk4"] * 4
    with pytest.raises(IndexError):
        sweep.runs[8]


def test_space_index_matches_product() -> None:
    from kdvsweep.sweep.space import Axis

    axes = [
        Axis(("a", "b"), ((1, 2, 3), ("x", "y", "z"))),
        Axis(("c",), ((0.5, 0.25),)),
        Axis(("d",), ((7, 8, 9, 10),)),
    ]
    space = Space(axes)
    listed = list(space)
    assert len(space) == len(listed) == 24
    assert [space[i] for i in range(24)] == listed
    assert listed[0] == {"a": 1, "b": "x", "c": 0.5, "d": 7}
    assert listed[5] == {"a": 1, "b": "x", "c": 0.25, "d": 8}
    assert listed[23] == {"a": 3, "b": "z", "c": 0.25, "d": 10}
    assert Space([])[0] == {}
    assert len(Space([])) == 1


def test_an_error_in_the_last_run_is_found_at_load(tmp_path: Path) -> None:
    # the second position divides by zero at k2 = 0.6, the last of 3000 runs only: refused at
    # load, naming that run, before any run could start
    path = tmp_path / "late.toml"
    path.write_text(PAIRS.format(count=3000).replace('"gap"]', '"gap * (0.6 - k2) / (0.6 - k2)"]'))
    with pytest.raises(ConfigError) as info:
        load_sweep(path)
    message = str(info.value)
    assert "run 2999" in message
    assert "initial.position[1]" in message
    assert "\n" not in message


def test_warnings_count_runs_without_listing_them(tmp_path: Path) -> None:
    path = tmp_path / "short.toml"
    path.write_text(PAIRS.format(count=50).replace("length = 120.0", "length = 50.0"))
    sweep = load_sweep(path)
    (message,) = [w for w in sweep.warnings if "model.length" in w]
    # as the eager loader wrote it (commit 32b534c, same file)
    assert message.endswith(
        "model.length: 33 of 50 runs are too short for a clean collision (worst run 0: length "
        "50 < 75.01 needed so no soliton meets another's periodic image by t = 1)"
    )


def _peak(path: Path) -> int:
    tracemalloc.start()
    try:
        load_sweep(path)
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


def test_memory_does_not_grow_with_the_runs(tmp_path: Path) -> None:
    # the eager loader held about 4 kB per run of this kind (measured: 37.7 MB peak for 10^4);
    # the lazy one holds the axes (a float per run) and a bounded cache
    small, large = tmp_path / "small.toml", tmp_path / "large.toml"
    # both above the runs kept evaluated (Runs.KEPT blocks of Runs.BLOCK runs)
    small.write_text(PAIRS.format(count=10_000))
    large.write_text(PAIRS.format(count=20_000))
    load_sweep(small)  # imports and first-use caches out of the measurement
    growth = (_peak(large) - _peak(small)) / 10_000
    assert growth < 400, f"{growth:.0f} bytes per run"


def test_shared_models_keep_their_equation_names() -> None:
    # equations compare without their names; a model shared between runs must not hand one run's
    # name to another (the name is in the digest and in the runs table)
    from kdvsweep.model import Equation, Grid
    from kdvsweep.sweep.expand import _make_model

    grid = Grid(64, 30.0)
    named = Equation.preset("kdv")
    custom = Equation(a=named.a, b=named.b, d=named.d)
    assert named == custom
    assert named.name != custom.name
    first = _make_model(named, grid, "etdrk4", 0.01, None)
    second = _make_model(custom, grid, "etdrk4", 0.01, None)
    assert first.equation.name == named.name
    assert second.equation.name == custom.name
    assert _make_model(named, grid, "etdrk4", 0.01, None) is first
