"""Figures of stores with ``[units]``: axes in physical units, data scaled, the hazard caution.

The stores are small shallow-water sweeps run serially through the runner (no dask): two depths
whose heights are in proportion to the depth, so both depths give the same canonical run and only
the physical scales differ (the similarity of the shallow-water KdV, Korteweg & de Vries 1895;
scales ``X = h``, ``T = 6 h / c0``, ``U = 2 h / 3``, README "Physical units"). The checks compare
the drawn axes with the store's own canonical columns times the scales the store records
(``phys_*_scale``): a figure drawn in canonical units, or with the scale of the other depth, fails.
"""

from __future__ import annotations

import math
import types
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from conftest import make_store

from kdvsweep import cli, plots, units
from kdvsweep.plots import figures
from kdvsweep.plots.store import draw, plan_figures
from kdvsweep.results import Results, load

SWEEPS = Path(__file__).resolve().parents[1] / "sweeps"

TANK = """\
[sweep]
name = "tank"

[[vary]]
depth = [0.5, 1.0]
{units}
[model]
points = 384
length = 96
dt = 0.02
{equation}
[initial]
kind = "solitons"
amplitude = [{amplitudes}]

[run]
end = {end}
frame_every = 1.0
keep_frames = true
keep_stride = 2
"""

WATER = '\n[units]\nsystem = "shallow-water"\ndepth = "depth"\n'


def tank(units_table: str, amplitudes: str, equation: str = "", end: str = '"auto"') -> str:
    return TANK.format(units=units_table, amplitudes=amplitudes, equation=equation, end=end)


@pytest.fixture(scope="module")
def water(tmp_path_factory: pytest.TempPathFactory) -> Results:
    """Heights 0.3 h and 0.1 h in metres (kappa^2 = 3 A / (4 h): 0.225 and 0.075)."""
    folder = tmp_path_factory.mktemp("water")
    return load(make_store(folder, tank(WATER, '"0.3 * depth", "0.1 * depth"'), "tank"))


@pytest.fixture(scope="module")
def canonical(tmp_path_factory: pytest.TempPathFactory) -> Results:
    """The same canonical runs without ``[units]`` (kappa given directly)."""
    folder = tmp_path_factory.mktemp("canonical")
    kappas = f"kappa = [{math.sqrt(0.225)}, {math.sqrt(0.075)}]"
    text = tank("", "", equation='equation = "kdv"\n').replace("amplitude = []", kappas)
    return load(make_store(folder, text, "tank"))


def drawn(results: Results, stem: str, runs: list[int] | None = None) -> Any:
    plan = next(p for p in plan_figures(results, runs=runs) if p.stem == stem)
    assert plan.drawable, plan.reason
    with figures.figure_style():
        fig, _ = draw(results, plan)
    return fig


def run_row(results: Results, run_id: int) -> Any:
    return results.runs[results.runs["run_id"] == run_id].iloc[0]


def caution_texts(fig: Any) -> list[str]:
    return [t.get_text() for t in fig.texts if t.get_gid() == figures.CAUTION_GID]


@pytest.mark.parametrize("run_id", [0, 1])
def test_spacetime_axes_are_physical_and_scaled(water: Results, run_id: int) -> None:
    row = run_row(water, run_id)
    depth = float(row["depth"])
    # the store's scales are the published ones (X = h, U = 2 h / 3; Korteweg & de Vries 1895)
    assert row["phys_length_scale"] == pytest.approx(depth, rel=1e-12)
    assert row["phys_height_scale"] == pytest.approx(2 * depth / 3, rel=1e-12)
    fig = drawn(water, f"spacetime_run{run_id}", [run_id])
    main = fig.axes[0]
    assert main.get_xlabel() == "x - c0 t (m)"
    assert main.get_ylabel() == "t (s)"
    half = 0.5 * float(row["length"]) * float(row["phys_length_scale"])
    assert main.get_xlim() == pytest.approx((-half, half), rel=1e-12)
    times = water.frames(run_id).times
    t_end = float(times[-1]) * float(row["phys_time_scale"])
    assert main.get_ylim()[1] == pytest.approx(t_end, rel=1e-12)
    assert 0.9 * float(row["t_end"]) < float(times[-1]) <= float(row["t_end"])  # kept frames
    bar = fig.axes[-1]
    assert bar.get_ylabel().startswith("eta: surface elevation (m)")
    # the colour scale tops at the largest |eta| = U max|u| of the record (0.3 h at the start)
    assert bar.get_ylim()[1] == pytest.approx(
        float(np.abs(water.frames(run_id).u).max()) * float(row["phys_height_scale"]), rel=1e-12
    )
    assert bar.get_ylim()[1] == pytest.approx(0.3 * depth, rel=1e-3)
    # the trajectories are drawn in the same coordinates as the field
    track = next(line for line in main.get_lines() if line.get_gid() == plots.TRAJECTORY_GID)
    xs = np.asarray(track.get_xdata(), dtype=float)
    assert np.nanmax(np.abs(xs)) <= half * (1 + 1e-9)
    assert np.nanmax(np.abs(xs)) > 0.25 * half
    assert track.get_label().startswith("soliton 0 (A = ")
    assert track.get_label().endswith(" m)")
    assert caution_texts(fig) == []  # the footer is added where figures are saved (iter_figures)


def test_shift_comparison_uses_the_physical_shifts(water: Results) -> None:
    fig = drawn(water, "shift_comparison")
    top = fig.axes[0]
    assert top.get_ylabel().endswith("(m)")
    assert fig.axes[len(fig.axes) // 2].get_xlabel().endswith("(m)") or any(
        ax.get_xlabel().endswith("(m)") for ax in fig.axes
    )
    # limits: the physical shifts of every soliton, padded by 6 % (as the canonical figure)
    sol = water.solitons
    both = sol[["phys_shift_predicted", "phys_shift_measured"]].to_numpy(float)
    lo, hi = float(both.min()), float(both.max())
    pad = 0.06 * (hi - lo)
    assert top.get_xlim() == pytest.approx((lo - pad, hi + pad), rel=1e-9)
    # ... which are the canonical shifts times each run's X (depth 1 m: twice those at 0.5 m)
    scale = sol["run_id"].map(water.runs.set_index("run_id")["phys_length_scale"])
    assert sol["phys_shift_measured"].to_numpy() == pytest.approx(
        (sol["shift_measured"] * scale).to_numpy(), rel=1e-12
    )
    # the series are labelled with the unit of the swept depth (its [units] key)
    titles = [ax.get_title() for ax in fig.axes if ax.get_title()]
    assert titles == ["depth 0.5 m", "depth 1 m"]


def test_canonical_store_keeps_its_labels(canonical: Results, water: Results) -> None:
    assert units.store_system(canonical.manifest) is None
    fig = drawn(canonical, "spacetime_run0", [0])
    assert (fig.axes[0].get_xlabel(), fig.axes[0].get_ylabel()) == ("x", "t")
    assert fig.axes[-1].get_ylabel() == "u   (power scale, γ = 0.5)"
    half = 0.5 * float(run_row(canonical, 0)["length"])
    assert fig.axes[0].get_xlim() == pytest.approx((-half, half))
    shifts = drawn(canonical, "shift_comparison")
    assert shifts.axes[0].get_ylabel() == figures.MEASURED_LABEL
    assert [ax.get_title() for ax in shifts.axes if ax.get_title()] == ["depth 0.5", "depth 1"]
    # the same canonical runs: the physical store's run 0 (h = 0.5) has shifts X = 0.5 times these
    ours = canonical.solitons.sort_values(["run_id", "soliton"])["shift_measured"].to_numpy()
    theirs = water.solitons.sort_values(["run_id", "soliton"])["shift_measured"].to_numpy()
    assert ours == pytest.approx(theirs, rel=1e-6)


def test_adiabatic_decay_in_metres(tmp_path: Path) -> None:
    one = tank(WATER, '"0.3 * depth"', equation="equation = { g = 0.01 }\n", end="40")
    res = load(make_store(tmp_path, one, "damped"))
    fig = drawn(res, "adiabatic_decay")
    left = fig.axes[0]
    assert left.get_xlabel() == figures.DECAY_PREDICTED_LABEL + " (m)"
    assert left.get_ylabel() == figures.DECAY_MEASURED_LABEL + " (m)"
    # the axis reaches the starting height, 0.3 h of the deeper run (1 m), in metres
    assert left.get_xlim()[1] > 0.3
    assert left.get_xlim()[1] < 0.3 * 1.2


def test_readable_units() -> None:
    assert figures.readable_unit("m", 0.006) == ("mm", 1e-3)
    assert figures.readable_unit("m", 57.0) == ("m", 1.0)
    assert figures.readable_unit("s", 8e5) == ("d", 86400.0)
    assert figures.readable_unit("s", 3e-5) == ("µs", 1e-6)
    assert figures.readable_unit("V", 1e-3) == ("V", 1.0)


def test_plot_writes_the_caution_for_water_units(
    water: Results, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    into = tmp_path / "f"
    args = ["plot", str(water.path), "--into", str(into), "--formats", "svg", "--run", "1"]
    assert cli.main(args) == 0
    err = capsys.readouterr().err
    assert err.count("physical water-wave units: " + units.CAUTION) == 1
    svg = (into / "spacetime_run1.svg").read_text(encoding="utf-8")
    assert 'id="caution' in svg  # the footer, by its gid


def test_plot_of_a_canonical_store_has_no_caution(
    canonical: Results, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    args = ["plot", str(canonical.path), "--into", str(tmp_path), "--formats", "svg", "--run", "0"]
    assert cli.main(args) == 0
    assert "water-wave" not in capsys.readouterr().err
    assert 'id="caution' not in (tmp_path / "spacetime_run0.svg").read_text(encoding="utf-8")


def test_check_and_run_print_the_caution_for_water_units_only(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    assert cli.main(["check", str(SWEEPS / "wave-tank.toml")]) in (0, 1)
    assert capsys.readouterr().err.count("physical water-wave units: " + units.CAUTION) == 1
    assert cli.main(["check", str(SWEEPS / "ion-acoustic.toml")]) in (0, 1)
    assert "water-wave" not in capsys.readouterr().err

    from kdvsweep.sweep import farm

    report = types.SimpleNamespace(
        stored=0, failed=0, skipped=0, total=0, elapsed=0.0, compaction=None
    )
    monkeypatch.setattr(farm, "run", lambda *args, **kwargs: report)  # no dask: the message only
    for name, expected in (("interface-polarity", 1), ("ion-acoustic", 0)):
        file = str(SWEEPS / f"{name}.toml")
        assert cli.main(["run", file, "--out", "unused", "--no-progress"]) == 0
        err = capsys.readouterr().err
        assert err.count("physical water-wave units: " + units.CAUTION) == expected


def test_content_figure_in_metres_and_frame_speeds(tmp_path: Path) -> None:
    """A sech^2 hump of 0.2 h and length scale 3 h: the emerging solitons' heights in metres and
    their speeds in the run's frame (``phys_speed - phys_c0``, m/s)."""
    text = (
        '[sweep]\nname = "hump"\n\n[units]\nsystem = "shallow-water"\ndepth = 1.0\n\n'
        '[model]\npoints = "auto"\nlength = "auto"\ndt = 0.02\n\n'
        '[initial]\nkind = "sech2"\nheight = 0.2\nscale = 3.0\ncenter = 0\n\n'
        "[run]\nend = 60\nframe_every = 1.0\n"
    )
    res = load(make_store(tmp_path, text, "hump"))
    sol = res.solitons[res.solitons["found"].astype("boolean").fillna(False).astype(bool)]
    assert len(sol) >= 1
    assert "phys_speed_uncertainty" in sol  # a "speed_difference" column has a unit (m/s)
    fig = drawn(res, "content_comparison")
    amplitude, speed = fig.axes[0], fig.axes[1]
    assert amplitude.get_ylabel() == "measured amplitude (m)"
    assert speed.get_ylabel() == "measured speed in the run's frame c − c0 (m/s)"
    # the points are the physical values: heights U amplitude, speeds (c - c0) = V X / T
    row = run_row(res, 0)
    heights = sol["amplitude"].to_numpy(float) * float(row["phys_height_scale"])
    frame = sol["speed"].to_numpy(float) * row["phys_length_scale"] / row["phys_time_scale"]
    assert sol["phys_amplitude"].to_numpy(float) == pytest.approx(heights, rel=1e-12)
    drawn_points = np.concatenate([c.get_offsets() for c in amplitude.collections])
    assert sorted(drawn_points[:, 1]) == pytest.approx(sorted(heights), rel=1e-12)
    drawn_speeds = np.concatenate([c.get_offsets() for c in speed.collections])
    assert sorted(drawn_speeds[:, 1]) == pytest.approx(sorted(frame), rel=1e-9)
