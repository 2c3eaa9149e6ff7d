"""Figures: files are written, what is drawn matches what was analysed, and a store's figures use
the equation each run was run with.

Records are exact Hirota 2-solitons (kv.exact.multisoliton; Hirota 1971) on a domain wide enough
that the solitons stay clear of the boundary, so no stepping is needed. The store-level tests run
small sweeps through the runner and the store, serially (no dask).
"""

from __future__ import annotations

import types
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from conftest import make_store

import kdvsweep as kv
from kdvsweep import cli, plots
from kdvsweep.analysis import analyse_run
from kdvsweep.exceptions import ConfigError
from kdvsweep.results import load
from kdvsweep.theory import phase_shifts

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def exact_record(
    k2: float, k1: float = 1.0, n: int = 512, length: float = 80.0
) -> tuple[np.ndarray, np.ndarray, kv.Grid, list[float]]:
    """The fast soliton overtakes the slow one at t = 0 near x = 0; kappas left to right."""
    grid = kv.Grid(n, length)
    times = np.linspace(-8.0, 8.0, 161)
    frames = np.array([kv.exact.multisoliton(grid.x, t, [k1, k2], [0.0, 0.0]) for t in times])
    return frames, times, grid, [k1, k2]


def lines_with(ax: Any, gid: str) -> list[Any]:
    return [line for line in ax.get_lines() if line.get_gid() == gid]


def test_spacetime_draws_one_trajectory_per_soliton(tmp_path: Path) -> None:
    frames, times, grid, kappas = exact_record(0.5)
    result = analyse_run(frames, times, grid, "kdv", kappas=kappas)
    assert result.ok
    fig = plots.spacetime(frames, times, grid, result, title="KdV pair")
    main_ax, zoom_ax = fig.axes[:2]
    assert len(lines_with(main_ax, plots.TRAJECTORY_GID)) == 2
    assert len(lines_with(main_ax, plots.ASYMPTOTE_GID)) == 4  # before and after, per soliton
    assert len(lines_with(zoom_ax, plots.TRAJECTORY_GID)) == 2
    # The zoom is centred on the collision: the tracks pass through it.
    assert zoom_ax.get_xlim()[0] < 0 < zoom_ax.get_xlim()[1]
    written = plots.save(fig, tmp_path / "st")
    assert [p.suffix for p in written] == [".png", ".pdf"]
    assert all(p.stat().st_size > 1000 for p in written)
    assert written[0].read_bytes()[:8] == PNG_MAGIC
    assert written[1].read_bytes()[:5] == b"%PDF-"


def test_spacetime_without_analysis_has_no_tracks() -> None:
    frames, times, grid, _ = exact_record(0.5)
    fig = plots.spacetime(frames, times, grid)
    assert len(fig.axes) == 2  # the field and its colour bar, no zoom
    assert not lines_with(fig.axes[0], plots.TRAJECTORY_GID)


def colour_bar_label(fig: Any) -> str:
    return str(fig.axes[-1].get_ylabel())


def test_spacetime_labels_its_colour_scale() -> None:
    frames, times, grid, _ = exact_record(0.5)
    # One-signed (KdV) field: square-root power scale, named on the colour bar with its exponent.
    assert colour_bar_label(plots.spacetime(frames, times, grid)) == "u   (power scale, γ = 0.5)"
    # Signed field: symmetric log, with the half-width of its linear part (2% of max |u| = 2).
    signed = frames.copy()
    signed[:, : grid.n // 2] *= -1.0
    fig = plots.spacetime(signed, times, grid)
    assert colour_bar_label(fig) == "u   (symlog scale, linear within ±0.04)"
    ticks = [t.get_text() for t in fig.axes[-1].get_yticklabels()]
    assert ticks == [
        "-2",
        "-0.4",
        "-0.04",
        "0",
        "0.04",
        "0.4",
        "2",
    ]  # plain, short, no minor labels


def _fake_tracks(linked: list[bool], laps: list[float]) -> Any:
    """Just what the mid-collision marker rule reads of a Tracks."""
    m = len(linked)
    return types.SimpleNamespace(
        n_solitons=2,
        linked=np.array(linked),
        extrema=[None] * m,
        laps=lambda: np.array(laps, dtype=float).reshape(m, 1),
    )


def test_mid_collision_markers_only_where_solitons_passed() -> None:
    # Frames 2-3 unlinked while the pair passes (lap index -1 -> 0): marked. Frames 6-7 unlinked
    # with no change of the lap index (a peak missed as a soliton crossed the box edge): not marked.
    linked = [True, True, False, False, True, True, False, False, True]
    laps = [-1, -1, np.nan, np.nan, 0, 0, np.nan, np.nan, 0]
    assert plots.figures._collision_frames(_fake_tracks(linked, laps)) == [2, 3]


def _sweep_table() -> pd.DataFrame:
    rows = []
    for equation in ("kdv", "mkdv"):
        for k2 in (0.3, 0.5, 0.7):
            pred = phase_shifts([1.0, k2])
            for s in (0, 1):
                rows.append(
                    {
                        "run_id": len(rows) // 2,
                        "equation": equation,
                        "k2": k2,
                        "soliton": s,
                        "shift_predicted": pred[s],
                        "shift_measured": pred[s] * (1 + 1e-7 * (s + 1)),
                        "shift_uncertainty": 1e-7 * abs(pred[s]),
                    }
                )
    return pd.DataFrame(rows)


def test_shift_comparison_gives_each_group_its_panel() -> None:
    # KdV and mKdV pairs of the same kappas have the same shifts (Zakharov & Shabat 1972, Wadati
    # 1973): on one panel one series would hide the other.
    fig = plots.shift_comparison(_sweep_table(), ["equation"])
    top_kdv, top_mkdv, low_kdv, _low_mkdv = fig.axes[:4]
    assert [top_kdv.get_title(), top_mkdv.get_title()] == ["kdv", "mkdv"]
    assert len(top_kdv.containers) == 2
    assert len(top_mkdv.containers) == 2
    # No error bars on the comparison (they would span the axis for a poor measurement); the
    # measurement's relative uncertainty is drawn in the error panel instead.
    assert all(not c.has_yerr for c in top_kdv.containers)
    assert "Delta x" in top_kdv.get_ylabel()
    assert "Delta x" in fig.get_supxlabel()
    labels = [t.get_text() for t in top_kdv.get_legend().get_texts()]
    assert labels == ["measured = predicted", "soliton 0", "soliton 1"]
    # The identity line spans the data.
    x, y = top_kdv.get_lines()[0].get_data()
    np.testing.assert_array_equal(x, y)
    # The lower panel: relative errors put in, 1e-7 (soliton 0) and 2e-7 (soliton 1), and the
    # relative uncertainty 1e-7 beside each point.
    y = np.concatenate([line.get_ydata() for line in low_kdv.get_lines() if len(line.get_ydata())])
    assert y.size == 12  # 3 runs x 2 solitons, errors and uncertainties
    np.testing.assert_allclose(np.sort(y)[[0, -1]], [1e-7, 2e-7], rtol=1e-6)


def test_shift_comparison_many_groups_share_one_panel() -> None:
    table = _sweep_table()
    table["equation"] = [f"eq{i % 5}" for i in range(len(table))]
    fig = plots.shift_comparison(table, ["equation"], residuals=False)
    assert len(fig.axes) == 1
    sizes = {c.lines[0].get_markersize() for c in fig.axes[0].containers}
    assert len(sizes) == 5  # one marker size per group: coinciding points stay visible


def test_relative_error_joins_points_of_a_one_dimensional_sweep() -> None:
    table = _sweep_table()
    fig = plots.relative_error(table, "k2", ["equation"])
    ax = fig.axes[0]
    curves = [line for line in ax.get_lines() if len(line.get_xdata()) > 0]
    assert len(curves) == 4  # 2 equations x 2 solitons, each a joined curve of 3 points
    assert all(line.get_linestyle() != "None" and len(line.get_xdata()) == 3 for line in curves)
    y = np.concatenate([line.get_ydata() for line in curves])
    np.testing.assert_allclose(np.sort(np.unique(np.round(y, 12))), [1e-7, 2e-7], rtol=1e-6)
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert legend == ["kdv", "mkdv", "soliton 0", "soliton 1"]  # groups, then solitons
    with pytest.raises(ConfigError, match="no column 'kappa2'"):
        plots.relative_error(table, "kappa2")


def test_relative_error_of_a_random_draw_has_points_and_one_colour_bar() -> None:
    # A Latin-hypercube-like draw: every run has its own (ratio, gap); lines between runs would
    # mean nothing, nor would a legend entry per run.
    rng = np.random.default_rng(7)
    rows = []
    for run in range(12):
        ratio, gap = rng.uniform(0.1, 0.6), rng.uniform(12, 20)
        for s in (0, 1):
            rows.append(
                {
                    "run_id": run,
                    "ratio": ratio,
                    "gap": gap,
                    "soliton": s,
                    "shift_predicted": 1.0 + s,
                    "shift_measured": (1.0 + s) * (1 + 1e-6 * (run + 1)),
                }
            )
    fig = plots.relative_error(pd.DataFrame(rows), "ratio", color_by="gap")
    ax = fig.axes[0]
    assert all(len(line.get_xdata()) == 0 for line in ax.get_lines())  # no joined lines
    assert sum(len(c.get_offsets()) for c in ax.collections) == 24  # every point, scattered
    assert [t.get_text() for t in fig.legends[0].get_texts()] == ["soliton 0", "soliton 1"]
    assert fig.axes[-1].get_ylabel() == "gap"  # the colour bar
    # Without colour_by, a series of single points is drawn as points, not a one-point line.
    fig = plots.relative_error(pd.DataFrame(rows), "ratio", ["run_id"])
    drawn = [line for line in fig.axes[0].get_lines() if len(line.get_xdata())]
    assert len(drawn) == 24
    assert all(line.get_linestyle() == "None" for line in drawn)


# --- stores: the equation comes from the runs table ----------------------------------------------

SECH2 = """
[sweep]
name = "{name}"

[[vary]]
gamma = [0.0, 0.02]

[model]
equation = {equation}
points = 256
length = 40.0
scheme = "etdrk4"
dt = 1e-3

[initial]
kind = "sech2"
height = 2.0
scale = 1.0
center = -10.0

[run]
end = 2.0
frame_every = 0.1
keep_frames = true
"""

PAIRS = """
[sweep]
name = "pairs"

[[vary]]
k2 = [0.45, 0.5, 0.55, 0.6]
gamma = [0.0, 0.0, 0.0, 0.001]

[model]
equation = { preset = "kdv", g = "gamma" }
points = "auto"
length = "auto"
scheme = "etdrk4"
dt = 0.01

[initial]
kind = "solitons"
kappa = [0.8, "k2"]
position = "auto"

[run]
end = "auto"
frame_every = 0.2
keep_frames = true
keep_stride = 2
"""


@pytest.fixture(scope="module")
def damped(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("damped")
    return make_store(
        folder, SECH2.format(name="damped", equation='{ preset = "kdv", g = "gamma" }'), "damped"
    )


@pytest.fixture(scope="module")
def pairs(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return make_store(tmp_path_factory.mktemp("pairs"), PAIRS, "pairs")


def test_space_time_of_a_damped_run_shows_its_damping(damped: Path) -> None:
    res = load(damped)
    plans = {p.stem: p for p in plots.plan_figures(res, runs=[1])}
    # profile data: no collisions to measure, the soliton content instead
    assert "shift_comparison" not in plans
    assert plans["content_comparison"].drawable
    fig, _ = plots.draw(res, plans["spacetime_run1"])
    title = fig.get_suptitle()
    # The run's own equation, u_t + 6 u u_x + u_xxx = -0.02 u, not the preset's undamped one.
    assert title.splitlines()[0] == kv.Equation.kdv(g=0.02).describe()
    assert "-0.02 u" in title
    assert "gamma = 0.02" in title


def test_store_without_solitons_plots_the_field_and_says_why_no_tracks(tmp_path: Path) -> None:
    text = SECH2.format(name="defocusing", equation='{ preset = "mkdv-" }')
    out = make_store(tmp_path, text, "g")
    res = load(out)
    plans = {p.stem: p for p in plots.plan_figures(res, runs=[0])}
    plan = plans["spacetime_run0"]
    assert plan.drawable
    assert len(plan.notes) == 1
    assert plan.notes[0].startswith("field only: the content measurement")
    assert kv.Equation.mkdv(-1).describe() in plan.notes[0]
    fig, _ = plots.draw(res, plan)
    assert not lines_with(fig.axes[0], plots.TRAJECTORY_GID)


def test_perturbed_runs_without_reference_shifts_are_left_out(pairs: Path) -> None:
    # make_store runs no reference runs: the damped run's shift is the asymptote difference,
    # which has no meaning there (speeds differ before and after), so it is left out.
    res = load(pairs)
    plans = {p.stem: p for p in plots.plan_figures(res)}
    comparison = plans["shift_comparison"]
    assert comparison.drawable
    assert comparison.notes == (
        "left out: 1 perturbed run(s) have no shift measured against reference runs "
        "(u_t + 6 u u_x + u_xxx = -0.001 u)",
    )
    assert comparison.color_by is None  # the runs drawn all have g = 0
    fig, _ = plots.draw(res, comparison)
    points = sum(len(c.lines[0].get_xdata()) for c in fig.axes[0].containers)
    assert points == 6  # 3 unperturbed runs x 2 solitons


def test_perturbation_sweep_colours_the_shift_figures_by_its_parameter(pairs: Path) -> None:
    # As if the damped run's shifts had been measured against reference runs (as the farm does).
    res = load(pairs)
    res.solitons.loc[res.solitons["run_id"] == 3, "shift_method"] = "reference"
    plans = {p.stem: p for p in plots.plan_figures(res)}
    comparison, error = plans["shift_comparison"], plans["relative_error_k2"]
    assert comparison.notes == ()
    assert comparison.color_by == "gamma"
    assert error.color_by == "gamma"
    fig, _ = plots.draw(res, comparison)
    top, low = fig.axes[0], fig.axes[1]
    assert sum(len(c.get_offsets()) for c in top.collections) == 8  # 4 runs x 2 solitons
    colours = np.concatenate([c.get_array() for c in top.collections])
    assert sorted(set(colours.tolist())) == [0.0, 0.001]
    assert sum(len(c.get_offsets()) for c in low.collections) == 8  # the error panel too
    assert fig.axes[-1].get_ylabel() == "gamma"  # the colour bar
    assert "integrable" in low.get_xlabel()
    fig, _ = plots.draw(res, error)
    assert fig.axes[-1].get_ylabel() == "gamma"
    assert sum(len(c.get_offsets()) for c in fig.axes[0].collections) == 8


def test_perturbation_column_prefers_the_swept_parameter() -> None:
    runs = pd.DataFrame({"run_id": [0, 1, 2], "eps": [0.0, 0.01, 0.02], "k": [1.0, 2.0, 3.0]})
    eqs = {i: kv.Equation.kdv(v=e) for i, e in enumerate([0.0, 0.01, 0.02])}
    assert plots.store.perturbation_column(runs, ["k", "eps"], eqs) == "eps"
    # No swept parameter equals the coefficient: its own column.
    assert plots.store.perturbation_column(runs, ["k"], eqs) == "eq_v"
    same = {i: kv.Equation.kdv(g=0.01) for i in range(3)}
    assert plots.store.perturbation_column(runs, ["k", "eps"], same) is None


def test_adiabatic_decay_of_a_store(pairs: Path, damped: Path) -> None:
    res = load(pairs)
    plan = {p.stem: p for p in plots.plan_figures(res)}["adiabatic_decay"]
    assert plan.drawable  # one damped run (gamma = 0.001), two solitons
    assert plan.parameter is None  # one value of the perturbation: no deviation axis
    fig, notes = plots.draw(res, plan)
    left, right = fig.axes[:2]
    assert sum(len(c.get_offsets()) for c in left.collections) == 2
    assert sum(len(c.get_offsets()) for c in right.collections) == 2
    assert notes == []
    # The damped pair: each measured end amplitude within 1e-2 of the law (README, "Perturbed
    # equations: adiabatic predictions"; Ott & Sudan 1970).
    offsets = np.concatenate([c.get_offsets() for c in left.collections])
    np.testing.assert_allclose(offsets[:, 1], offsets[:, 0], rtol=1e-2)
    # Stores where it cannot be drawn say why in one line.
    undamped = load(pairs)
    undamped.runs = undamped.runs[undamped.runs["gamma"] == 0]
    plan = {p.stem: p for p in plots.plan_figures(undamped)}["adiabatic_decay"]
    assert plan.reason == "no run has damping or viscosity (g = v = 0 in every run): nothing decays"
    plan = {p.stem: p for p in plots.plan_figures(load(damped))}["adiabatic_decay"]
    assert plan.reason.startswith("end-of-run amplitudes are measured for soliton initial data")
    old = load(pairs)
    old.solitons = old.solitons.drop(columns=["amplitude_end"])
    plan = {p.stem: p for p in plots.plan_figures(old)}["adiabatic_decay"]
    assert "no amplitude_end column" in plan.reason


def test_adiabatic_decay_figure_against_the_perturbation() -> None:
    # Deviations proportional to g (the first-order error of the adiabatic law): on log-log
    # axes the slope-1 guide goes through them.
    rows = []
    for run, g in enumerate([0.001, 0.003, 0.01]):
        pred = 2.0 * np.exp(-4 * g * 30 / 3)  # Ott & Sudan 1970
        rows.append(
            {
                "run_id": run,
                "g": g,
                "soliton": 0,
                "amplitude_predicted": pred,
                "amplitude_end": pred * (1 + 0.26 * g),
                "amplitude_start": 2.0,
            }
        )
    fig = plots.adiabatic_decay(pd.DataFrame(rows), "g", "g", title="t")
    right = fig.axes[1]
    assert right.get_xscale() == "log"
    assert right.get_yscale() == "log"
    guide = next(line for line in right.get_lines() if len(line.get_xdata()) == 2)
    np.testing.assert_allclose(guide.get_ydata() / guide.get_xdata(), 0.26, rtol=1e-6)
    assert fig.axes[-1].get_ylabel() == "g"
    with pytest.raises(ConfigError, match="no column 'gamma'"):
        plots.adiabatic_decay(pd.DataFrame(rows), "gamma")


def test_store_without_equation_columns_names_the_missing_column(pairs: Path) -> None:
    res = load(pairs)
    res.runs = res.runs.drop(columns=[c for c in res.runs.columns if c.startswith("eq_")])
    plans = {p.stem: p for p in plots.plan_figures(res, runs=[0])}
    assert "eq_a" in plans["spacetime_run0"].reason
    assert "eq_a" in plans["shift_comparison"].reason


def test_plot_command_on_a_store(
    pairs: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    figures = tmp_path / "figures"
    assert cli.main(["plot", str(pairs), "--into", str(figures), "--run", "2"]) == 0
    captured = capsys.readouterr()
    names = sorted(p.name for p in figures.iterdir())
    assert names == [
        "adiabatic_decay.pdf",
        "adiabatic_decay.png",
        "relative_error_k2.pdf",
        "relative_error_k2.png",
        "shift_comparison.pdf",
        "shift_comparison.png",
        "spacetime_run2.pdf",
        "spacetime_run2.png",
    ]
    assert captured.out.split() == [
        str(figures / n)
        for n in (
            "shift_comparison.png",
            "shift_comparison.pdf",
            "relative_error_k2.png",
            "relative_error_k2.pdf",
            "adiabatic_decay.png",
            "adiabatic_decay.pdf",
            "spacetime_run2.png",
            "spacetime_run2.pdf",
        )
    ]
    assert all((figures / name).stat().st_size > 1000 for name in names)
    assert (figures / "spacetime_run2.png").read_bytes()[:8] == PNG_MAGIC
    # The note about the perturbed run is one line per figure on stderr.
    assert "kdvsweep plot: shift_comparison: left out: 1 perturbed run(s)" in captured.err


def test_plot_of_a_run_not_in_the_store_fails_in_one_line(
    pairs: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    assert cli.main(["plot", str(pairs), "--into", str(tmp_path / "f"), "--run", "99"]) == 2
    err = capsys.readouterr().err
    assert err.splitlines() == [
        f"kdvsweep: error: plot: run 99 is not in the store {pairs} (stored run ids 0..3)"
    ]
    assert not (tmp_path / "f").exists()  # nothing drawn before the refusal
    # A store that does not exist is an error message and exit status 2, not a traceback.
    assert cli.main(["plot", str(tmp_path / "nothing")]) == 2
    assert len(capsys.readouterr().err.strip().splitlines()) == 1


def test_unknown_format_is_refused_before_drawing(pairs: Path, tmp_path: Path) -> None:
    assert cli.main(["plot", str(pairs), "--into", str(tmp_path / "f"), "--formats", "gif"]) == 2
    assert not (tmp_path / "f").exists()


# --- soliton content ------------------------------------------------------------------------------


def content_rows() -> pd.DataFrame:
    """Six runs' content rows: two measured solitons each (one of them a depression in the
    last run), and one predicted soliton that was not measured."""
    rows = []
    for run in range(6):
        for s, (amp, speed) in enumerate(((2.0 + run, 4.0 + 2 * run), (0.5 + 0.1 * run, 1.0))):
            rows.append(
                {
                    "run_id": run,
                    "h": 1.0 + run,
                    "soliton": s,
                    "kind": "soliton",
                    "sign": -1 if (run == 5 and s == 1) else 1,
                    "found": True,
                    "amplitude": amp * (1 + 1e-5 * (s + 1)),
                    "amplitude_ist": amp,
                    "amplitude_uncertainty": 2e-5 * amp,
                    "speed": speed * (1 - 1e-5),
                    "speed_ist": speed,
                    "speed_uncertainty": 1e-5 * speed,
                }
            )
    rows.append(
        {
            "run_id": 0,
            "h": 1.0,
            "soliton": 2,
            "kind": "soliton",
            "sign": 1,
            "found": False,
            "amplitude_ist": 0.1,
            "speed_ist": 0.2,
            "note": "left out: amplitude 0.1 below min_amplitude",
        }
    )
    return pd.DataFrame(rows)


def test_content_comparison_draws_every_soliton_and_the_missing_one() -> None:
    fig = plots.content_comparison(content_rows(), color_by="h", title="content")
    amp, speed, amp_res = fig.axes[:3]
    for ax in (amp, speed):
        drawn = sum(len(c.get_offsets()) for c in ax.collections)
        assert drawn == 12  # every measured soliton, coloured by h
        identity = [line for line in ax.get_lines() if line.get_label() == "measured = predicted"]
        assert len(identity) == 1
        missing = [line for line in ax.get_lines() if line.get_marker() == "x"]
        assert len(missing) == 1
        assert len(missing[0].get_xdata()) == 1  # the predicted soliton not measured
    # residual panels: (measured - predicted) / predicted, e.g. 1e-5 for the first solitons
    offsets = np.concatenate([c.get_offsets() for c in amp_res.collections if c.get_offsets().size])
    assert np.nanmax(np.abs(offsets[:, 1])) == pytest.approx(2e-5, rel=1e-6)
    assert fig.axes[-1].get_ylabel() == "h"  # the colour bar
    labels = [t.get_text() for t in amp.get_legend().get_texts()]
    assert "soliton, depression" in labels
    assert "predicted, not measured" in labels


def test_spacetime_follows_every_emerging_soliton() -> None:
    # Two exact one-solitons leaving x = 0 (Korteweg & de Vries 1895) and a measured content
    # record of them: each is drawn from its separation time with its asymptote.
    grid = kv.Grid(512, 120.0)
    times = np.linspace(0.0, 6.0, 61)
    eq = kv.Equation.kdv()
    form = eq.soliton_form
    frames = np.array([form.profile(grid.x, 1.2, form.speed(1.2) * t + 5.0) for t in times])
    frames += np.array([form.profile(grid.x, 0.7, form.speed(0.7) * t - 20.0) for t in times])
    content = kv.analysis.content.measure_content(frames, times, grid, eq)
    assert content.n_measured == 2
    fig = plots.spacetime(frames, times, grid, content=content, title="two solitons")
    ax = fig.axes[0]
    assert len(lines_with(ax, plots.TRAJECTORY_GID)) == 2
    assert len(lines_with(ax, plots.ASYMPTOTE_GID)) == 2
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert legend[0].startswith("soliton 0: A = 2.88")  # 2 kappa^2 of kappa = 1.2


@pytest.fixture(scope="module")
def wells(tmp_path_factory: pytest.TempPathFactory) -> Path:
    text = SECH2.format(name="wells", equation='"kdv"').replace(
        "gamma = [0.0, 0.02]", "height = [2.0, 6.0]"
    )
    text = text.replace("height = 2.0", 'height = "height"').replace("points = 256", "points = 512")
    return make_store(tmp_path_factory.mktemp("wells"), text, "wells")


def test_content_store_gives_the_content_figure_and_tracks(wells: Path) -> None:
    res = load(wells)
    plans = {p.stem: p for p in plots.plan_figures(res)}
    assert "shift_comparison" not in plans
    plan = plans["content_comparison"]
    assert plan.drawable
    assert plan.color_by == "height"
    fig, _ = plots.draw(res, plan)
    measured = int(res.solitons["found"].astype(bool).sum())
    assert sum(len(c.get_offsets()) for c in fig.axes[0].collections) == measured
    fig, _ = plots.draw(res, plans["spacetime_run0"])
    assert len(lines_with(fig.axes[0], plots.TRAJECTORY_GID)) >= 1
