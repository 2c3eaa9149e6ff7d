"""The accuracy benchmark (``kdvsweep bench --accuracy``) on one small sweep: its figures are
consistent.

No timing is asserted (speed is the benchmark's job). The error of each shift is against the pair
formula (Gardner, Greene, Kruskal & Miura 1974, :func:`kdvsweep.theory.phase_shifts`), computed
here again; the hand-picked settings it costs against are the demo's (the same runs of
``data/demo.toml``).
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from kdvsweep import cli, theory
from kdvsweep.cli.bench import format_accuracy
from kdvsweep.sweep import accuracy as acc
from kdvsweep.sweep.bench_accuracy import (
    AccuracyBenchmark,
    ShiftCheck,
    measure,
    sweep_cost,
    sweep_text,
)
from kdvsweep.sweep.config import load_sweep
from kdvsweep.sweep.plan import fixed_steps

DEMO = Path(__file__).resolve().parents[1] / "python" / "kdvsweep" / "data" / "demo.toml"


def test_hand_picked_pairs_are_the_demo_runs(tmp_path: Path) -> None:
    # the reference of the cost: the demo's own settings for the same equations and k2
    path = tmp_path / "hand.toml"
    path.write_text(sweep_text("pairs", None, pair_k2=(0.3, 0.7)))
    hand = load_sweep(path).runs
    demo = [s for s in load_sweep(DEMO).runs if s.params["k2"] in (0.3, 0.7)]
    key = lambda s: (s.model.equation.name, s.params["polarity"], s.params["k2"])  # noqa: E731
    assert sorted(map(key, hand)) == sorted(map(key, demo))
    by_key = {key(s): s for s in demo}
    for spec in hand:
        other = by_key[key(spec)]
        assert spec.model.dt == other.model.dt
        assert spec.model.grid == other.model.grid
        assert spec.run.t_end == other.run.t_end
    total = sum(
        fixed_steps(s.run.record_times, s.model.dt) * s.model.grid.n * math.log2(s.model.grid.n)
        for s in demo
    )
    assert sweep_cost(sweep_text("pairs", None, pair_k2=(0.3, 0.7)), tmp_path) == total


def test_target_sweeps_are_automatic_and_verified(tmp_path: Path) -> None:
    for kind in ("pairs", "triple"):
        path = tmp_path / f"{kind}.toml"
        path.write_text(sweep_text(kind, 1e-7))
        specs = load_sweep(path).runs
        assert specs
        for spec in specs:
            assert spec.run.accuracy == 1e-7
            assert spec.run.verify
            assert "dt" not in spec.params  # the step is the automatic one, not a swept value
    with pytest.raises(ValueError, match="unknown sweep 'quad'"):
        sweep_text("quad", 1e-5)


def test_loader_grids_follow_the_spread(tmp_path: Path) -> None:
    # points = "auto" with a target keeps the spread's decades (accuracy.peak_spread): the KdV
    # triple (1, 0.6, 0.25) at 1e-7 gets the grid auto_decades gives with its spread, more points
    # than a pair's reference spread would give on the same length
    from kdvsweep.sweep.sizing import WARN_DECADES, auto_points

    path = tmp_path / "r.toml"
    path.write_text(sweep_text("triple", 1e-7, triple_k=((0.6, 0.25),)))
    (spec,) = load_sweep(path).runs
    eq = spec.model.equation
    spread = acc.peak_spread([1.0, 0.6, 0.25], eq.soliton_form)
    decades = acc.auto_decades(1e-7, WARN_DECADES, spread)
    want = auto_points(1.0, spec.model.grid.length, eq.dealias_fraction, decades)
    assert spec.model.grid.n == want
    reference = acc.auto_decades(1e-7, WARN_DECADES)
    assert want > auto_points(1.0, spec.model.grid.length, eq.dealias_fraction, reference)


def test_loader_lowers_the_tail_with_a_target(tmp_path: Path) -> None:
    # sizing.tail 1e-8 with a 1e-7 target sizes the run as tail 1e-9 would (accuracy.auto_tail)
    path = tmp_path / "t.toml"
    path.write_text(sweep_text("pairs", 1e-7, pair_k2=(0.5,)))
    auto = load_sweep(path).runs[0]
    path.write_text(
        sweep_text("pairs", 1e-7, pair_k2=(0.5,)).replace("tail = 1e-08", "tail = 1e-09")
    )
    given = load_sweep(path).runs[0]
    assert auto.initial == given.initial
    assert auto.model.grid == given.model.grid
    assert auto.run.t_end == given.run.t_end
    # and tail 1e-9 does size it otherwise than 1e-8 (so the comparison above can fail)
    assert auto.initial != load_sweep(_without_target(path, "tail = 1e-08")).runs[0].initial


def _without_target(path: Path, tail: str) -> Path:
    """The sweep at ``path`` with ``tail`` and no ``[accuracy]`` table (the hand-picked tail)."""
    text = path.read_text().replace("tail = 1e-09", tail)
    out = path.with_name("plain.toml")
    out.write_text(text[: text.index("[accuracy]")].replace('dt = "auto"', "dt = 0.001"))
    return out


def _check(error: float, estimate: float, target: float = 1e-5) -> ShiftCheck:
    return ShiftCheck(
        "pairs", target, 0, "kdv", "", 256, 1e-3, 10.0, 1.0, 0, 1.0, 1.0, error, estimate
    )


def test_summary_counts_brackets_and_understatement() -> None:
    b = AccuracyBenchmark(
        checks=[_check(1e-6, 2e-6), _check(3e-6, 1e-6), _check(math.nan, 1e-6)],
        costs={("pairs", 1e-5): 5.0},
        verified_costs={("pairs", 1e-5): 20.0},
        hand_costs={"pairs": 10.0},
    )
    s = b.summary(1e-5)
    assert s["shifts"] == 3
    assert s["reported"] == 2
    assert s["within"] == 2
    assert s["max_error"] == 3e-6
    assert s["bracketed"] == 0.5
    assert s["max_understatement"] == pytest.approx(3.0)
    assert s["cost_ratio"] == 0.5
    text = format_accuracy(b, [1e-5])
    assert "unrep." in text
    assert "NO" in text
    assert "0.50 x hand-picked" in text


@pytest.fixture(scope="module")
def small() -> AccuracyBenchmark:
    return measure(targets=(1e-4,), sweeps=("pairs",), workers=1, pair_k2=(0.6,))


def test_small_benchmark_checks_each_shift_against_the_formula(small: AccuracyBenchmark) -> None:
    assert not small.failures
    assert len(small.checks) == 6  # three equations, two solitons
    for c in small.checks:
        kappas = [1.0, 0.6]
        predicted = theory.phase_shifts(kappas, "kdv")[c.soliton]  # the same for mKdV (in kappa)
        assert c.predicted == pytest.approx(predicted, rel=1e-12)
        assert c.reported
        assert c.error <= 1e-4
        assert c.error <= 3 * c.estimate
        # the sum rule sum_i kappa_i Delta x_i = 0 (the first moment of the mass moves at a
        # constant rate; Drazin & Johnson 1989 [memory]) holds to the shifts' accuracy
        assert abs(c.balance) <= 3e-4
    s = small.summary(1e-4)
    assert s["within"] == 6
    assert 0 < s["cost_ratio"] < 1
    assert small.verified_costs[("pairs", 1e-4)] > small.costs[("pairs", 1e-4)]
    kdv = [c for c in small.checks if c.label.startswith("kdv")]
    assert {c.regimes for c in kdv} == {theory.interaction_regime(1.0, 0.6)}


def test_options_of_other_benchmarks_are_refused(capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["bench", "--targets", "1e-5"]) == 2
    assert (
        "--targets applies to the accuracy benchmark (--accuracy) only" in capsys.readouterr().err
    )
    assert cli.main(["bench", "--accuracy", "--runs", "4"]) == 2
    assert cli.main(["bench", "--accuracy", "--sweep"]) == 2
    assert cli.main(["bench", "--accuracy", "--workers", "0"]) == 2
