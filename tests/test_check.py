"""``kdvsweep check`` and :func:`kdvsweep.sweep.plan.make_plan`: the plan of a sweep before it runs.

What is checked against something outside the plan: the step count against the steps a run of the
core actually takes, the memory against :func:`kdvsweep.sweep.sizing.run_memory` of the run spec,
the sizes and warnings against :func:`kdvsweep.sweep.load_sweep`, and that nothing is written.
Costs are timings: they are checked only for their structure (scaling, totals), never against a
clock (the estimate against measured runs is reported by hand, see the README's "Command line").
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest

from kdvsweep.cli import main
from kdvsweep.sweep import load_sweep, sizing
from kdvsweep.sweep import plan as planning
from kdvsweep.sweep.runner import execute

ROOT = Path(__file__).resolve().parents[1]

# Three KdV pairs of one size: identical settings, one group. frame_every = 0.1 is not a whole
# number of steps of 0.003 (each interval is crossed with 34 equal shorter steps) and the end is
# not a whole number of frames (the last interval is shorter): the core's step rule is exercised.
PAIRS = """
[[vary]]
k2 = [0.5, 0.55, 0.6]

[model]
equation = "kdv"
points = 1024
length = 60.0
scheme = "etdrk4"
dt = {dt}

[initial]
kind = "solitons"
kappa = [1.0, "k2"]
position = [-15.0, 0.0]

[run]
end = 3.05
frame_every = 0.1
"""


def _write(folder: Path, text: str, name: str = "pairs.toml") -> Path:
    path = folder / name
    path.write_text(text)
    return path


def _listing(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


def test_plan_of_a_small_sweep_matches_its_runs(tmp_path: Path) -> None:
    file = _write(tmp_path, PAIRS.format(dt=0.003))
    sweep = load_sweep(file)
    plan = planning.make_plan(file)
    assert plan.runs == len(sweep.runs) == 3
    assert len(plan.groups) == 1
    group = plan.groups[0]
    assert group.run_ids == (0, 1, 2)
    spec = sweep.runs[0]
    assert (group.n, group.length, group.t_end, group.dt) == (1024, 60.0, 3.05, 0.003)
    assert group.frames == len(spec.run.record_times)
    assert (group.family, group.scheme, group.analysis) == ("kdv", "etdrk4", "collision")
    assert group.memory == sizing.run_memory(1024, len(spec.run.record_times), "etdrk4")
    assert plan.peak_memory == group.memory
    assert plan.warnings == sweep.warnings == ()
    # the step count is the one the core takes (run the sweep's first run and count)
    row = execute(spec).run_row
    assert row["status"] == "ok", row["reason"]
    assert group.steps == row["steps"]
    assert not group.steps_estimated
    assert plan.total_steps == 3 * row["steps"]
    assert plan.total_seconds == pytest.approx(3 * group.seconds)
    assert group.seconds > 0


def test_fixed_steps_follow_the_core() -> None:
    """Whole intervals take exactly ``span/dt`` steps despite round-off; others are crossed with
    the fewest equal steps of at most dt; a repeated time takes none (the core's rule, compared
    here with runs of ``kv.Simulation``)."""
    import kdvsweep as kv

    grid = kv.Grid(64, 40.0)
    cases = [
        (np.arange(0, 31) * 0.1, 0.01),  # 0.1 / 0.01 is 10 up to round-off
        (np.array([0.0, 0.1, 0.25, 0.25, 0.3]), 0.03),
        (np.array([0.0, 1e-9, 1.0]), 0.1),
    ]
    for times, dt in cases:
        sim = kv.Simulation(grid, kv.Equation.kdv(), dt=dt)
        sim.set_state(kv.exact.soliton(grid.x, 0.0, 0.5, 0.0))
        sim.record(times)
        assert planning.fixed_steps(times, dt) == sim.steps, (times, dt)


def test_the_plan_carries_the_loaders_warnings(tmp_path: Path) -> None:
    # dt = 0.05 is above ETDRK4's measured stable step for these pairs: the loader warns
    file = _write(tmp_path, PAIRS.format(dt=0.05))
    sweep = load_sweep(file)
    assert sweep.warnings
    assert planning.make_plan(file).warnings == sweep.warnings


def test_groups_split_where_settings_differ(tmp_path: Path) -> None:
    text = PAIRS.replace("k2 = [0.5, 0.55, 0.6]", "k2 = [0.5, 0.55, 0.6]\nn = [256, 256, 512]")
    text = text.replace("points = 1024", 'points = "n"')
    plan = planning.make_plan(_write(tmp_path, text.format(dt=0.003)))
    assert [(g.run_ids, g.n) for g in plan.groups] == [((0, 1), 256), ((2,), 512)]
    assert set(plan.calibration.timings) == {(256, "etdrk4"), (512, "etdrk4")}


def test_unmeasured_sizes_are_scaled_by_n_log_n(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(planning, "MAX_CALIBRATIONS", 1)
    text = PAIRS.replace("k2 = [0.5, 0.55, 0.6]", "k2 = [0.5, 0.55]\nn = [256, 1024]")
    file = _write(tmp_path, text.replace("points = 1024", 'points = "n"').format(dt=0.003))
    cache: dict[tuple[int, str], planning.StepTiming] = {}
    calibration = planning.calibrate(load_sweep(file).runs, cache)
    assert len(cache) == 1
    measured = [t for t in calibration.timings.values() if t.measured]
    scaled = [t for t in calibration.timings.values() if not t.measured]
    assert (len(measured), len(scaled)) == (1, 1)
    m, s = measured[0], scaled[0]
    assert s.from_n == m.n
    ratio = (s.n * np.log2(s.n)) / (m.n * np.log2(m.n))
    assert s.step == pytest.approx(m.step * ratio)


def test_adaptive_steps_are_estimated(tmp_path: Path) -> None:
    text = PAIRS.format(dt=0.003).replace('scheme = "etdrk4"\ndt = 0.003', 'scheme = "adaptive"')
    plan = planning.make_plan(_write(tmp_path, text))
    group = plan.groups[0]
    assert group.scheme == "adaptive"
    assert group.steps_estimated
    # at least one step per frame interval, and not absurdly many for a 3-unit KdV run
    assert group.frames - 1 <= group.steps < 10**6


def test_check_writes_nothing(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    file = _write(tmp_path, PAIRS.format(dt=0.003))
    before = _listing(tmp_path)
    cwd = os.getcwd()
    os.chdir(tmp_path)
    try:
        assert main(["check", str(file)]) == 0
    finally:
        os.chdir(cwd)
    assert _listing(tmp_path) == before  # no results/ folder, no store, no cache
    out = capsys.readouterr().out
    assert "runs    3 in 1 group" in out
    assert "estimate:" in out
    for word in ("n", "L", "end", "dt", "steps", "memory", "s/run"):
        assert word in out.split()


def test_check_exit_status(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    warned = _write(tmp_path, PAIRS.format(dt=0.05), "warned.toml")
    assert main(["check", str(warned)]) == 1
    out = capsys.readouterr().out
    assert "warnings 1" in out
    assert "exceed the measured stable step" in out
    assert "total" in out
    broken = _write(tmp_path, PAIRS.format(dt=0.003).replace("points", "pionts"), "broken.toml")
    assert main(["check", str(broken)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1
    assert "model.pionts" in err[0]


@pytest.mark.parametrize("file", sorted((ROOT / "sweeps").glob("*.toml")), ids=lambda p: p.name)
def test_every_example_sweep_plans(file: Path) -> None:
    sweep = load_sweep(file)
    plan = planning.make_plan(sweep)
    assert plan.runs == len(sweep.runs)
    assert sorted(i for g in plan.groups for i in g.run_ids) == list(range(plan.runs))
    for group in plan.groups:
        spec = sweep.runs[group.run_ids[0]]
        assert group.memory == sizing.run_memory(
            spec.model.grid.n, len(spec.run.record_times), spec.model.scheme
        )
        assert group.steps > 0
        assert group.seconds > 0
    assert plan.warnings == sweep.warnings


def test_a_step_that_blows_up_still_plans(tmp_path: Path) -> None:
    # Strang splitting far above its stable step: the run would fail, the plan is still made
    text = PAIRS.format(dt=0.2).replace('scheme = "etdrk4"', 'scheme = "strang"')
    plan = planning.make_plan(_write(tmp_path, text))
    assert plan.warnings
    group = plan.groups[0]
    assert group.steps == planning.fixed_steps(
        load_sweep(tmp_path / "pairs.toml").runs[0].run.record_times, 0.2
    )
    assert group.seconds > 0


def test_verified_runs_count_their_re_runs(tmp_path: Path) -> None:
    """A run verified by [accuracy] costs VERIFY_COST runs' worth (its re-runs at dt/2 and 2n)."""
    from kdvsweep.sweep.accuracy import VERIFY_COST

    plain = planning.make_plan(_write(tmp_path, PAIRS.format(dt=0.003)))
    text = PAIRS.format(dt=0.003) + "\n[accuracy]\nshift = 1e-5\nverify = 1.0\n"
    checked = planning.make_plan(_write(tmp_path, text, "verified.toml"))
    assert not any(g.verified for g in plain.groups)
    assert all(g.verified for g in checked.groups)
    for a, b in zip(plain.groups, checked.groups, strict=True):
        assert b.seconds == pytest.approx(VERIFY_COST * a.seconds, rel=1e-12)
