"""Measured step rules per scheme (``simulation.STEP_RULE``) and the resolution check of any data.

Normalisation: KdV ``u_t + 6 u u_x + u_xxx = 0`` unless stated. The exact soliton is
``2 kappa^2 sech^2(kappa (x - 4 kappa^2 t - x0))`` (Korteweg & de Vries 1895; kv.exact.soliton and,
independently, conftest.periodic_soliton with its periodic images).
"""

from __future__ import annotations

import math
import warnings
from pathlib import Path

import numpy as np
import pytest
from conftest import edit, periodic_soliton

import kdvsweep as kv
from kdvsweep import simulation, steplimits
from kdvsweep.exceptions import NumericalError
from kdvsweep.simulation import SetupWarning, dt_limit, nonlinear_rate, spectrum_decades
from kdvsweep.sweep.config import load_sweep

#: The rule every RK4-type scheme was checked against before the measurement (common practice,
#: no source): dt (|a| max|u| + |b| max u^2) k_cut <= 2 sqrt 2.
OLD_RULE = 2.0 * math.sqrt(2.0)

# One KdV soliton, kappa = 1 (amplitude 2), on 40 widths with n = 1024 (25.6 points per width).
GRID = kv.Grid(1024, 40.0)
KDV = kv.Equation.kdv()
RATE = nonlinear_rate(2.0, 6.0, 0.0, 2.0 / 3.0, GRID.dx)
#: IFRK4 at 0.4 of the old rule's step: the old rule allowed it, and it is unstable.
DT_BAD = 0.4 * OLD_RULE / RATE


def exact(grid: kv.Grid, t: float) -> np.ndarray:
    """The kappa = 1 soliton started at -L/4, with its periodic images (Korteweg & de Vries 1895)."""
    return sum(
        (
            kv.exact.soliton(grid.x, t, 1.0, -0.25 * grid.length + m * grid.length)
            for m in range(-3, 4)
        ),
        np.zeros(grid.n),
    )


def relative_error(u: np.ndarray, ref: np.ndarray) -> float:
    return float(np.linalg.norm(u - ref) / np.linalg.norm(ref))


def test_exact_reference_agrees_with_an_independent_evaluation() -> None:
    # kv.exact (the core's Hirota code) against the sech^2 formula evaluated with numpy
    u = exact(GRID, 3.7)
    np.testing.assert_allclose(u, periodic_soliton(GRID, 3.7, 1.0, -10.0), atol=1e-13)


def test_ifrk4_step_the_old_rule_allowed_blows_up() -> None:
    assert DT_BAD * RATE <= OLD_RULE  # allowed before
    sim = kv.Simulation(GRID, KDV, "ifrk4", dt=DT_BAD)
    sim.set_state(exact(GRID, 0.0))
    try:
        sim.advance(20.0)
    except NumericalError:
        return  # the core stopped it: blow-up
    # not stopped: its error must be far above a stable run's and growing
    error = relative_error(sim.state, exact(GRID, sim.time))
    assert error > 1e-2


def test_ifrk4_unsafe_step_is_warned_by_the_api() -> None:
    sim = kv.Simulation(GRID, KDV, "ifrk4", dt=DT_BAD, check=True)
    with pytest.warns(SetupWarning, match=r"ifrk4.*use dt <= ") as record:
        sim.set_state(exact(GRID, 0.0))
    limit = dt_limit("ifrk4", 2.0, KDV, GRID.dx)
    assert f"dt <= {limit:.3g}" in str(record[0].message)
    assert limit < DT_BAD
    # the same step is below the ETDRK4 rule: no warning there
    assert kv.Simulation(GRID, KDV, "etdrk4", dt=DT_BAD).check(exact(GRID, 0.0)) == []


def test_check_is_opt_in() -> None:
    sim = kv.Simulation(GRID, KDV, "ifrk4", dt=DT_BAD)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        sim.set_state(exact(GRID, 0.0))  # no check asked: no warning
    assert len(sim.check()) == 1  # but the check sees the current state


def test_ifrk4_unsafe_step_is_warned_by_a_sweep(tmp_path: Path) -> None:
    text = edit('scheme = "etdrk4"\ndt = 2.5e-3', f'scheme = "ifrk4"\ndt = {DT_BAD:.6g}')
    text = text.replace("points = 512", "points = 1536")
    (tmp_path / "s.toml").write_text(text, encoding="utf-8")
    found = [w for w in load_sweep(tmp_path / "s.toml").warnings if "model.dt" in w]
    assert len(found) == 1
    assert "ifrk4" in found[0]
    assert "use dt <=" in found[0]
    safe = text.replace(f"dt = {DT_BAD:.6g}", "dt = 1e-4")
    (tmp_path / "s.toml").write_text(safe, encoding="utf-8")
    assert not [w for w in load_sweep(tmp_path / "s.toml").warnings if "model.dt" in w]


@pytest.mark.parametrize("scheme", ["ifrk4", "strang", "etdrk4"])
def test_step_at_the_rule_is_stable_to_t20(scheme: str) -> None:
    grid = kv.Grid(512, 40.0)  # 12.8 points per width: resolved (the 11.2 double-precision level)
    dt = 0.95 * dt_limit(scheme, 2.0, KDV, grid.dx)
    sim = kv.Simulation(grid, KDV, scheme, dt=dt)
    sim.set_state(exact(grid, 0.0))
    frames = sim.record([10.0, 20.0])
    errors = [relative_error(f, exact(grid, t)) for f, t in zip(frames, (10.0, 20.0), strict=True)]
    # a stable step: small, and growing no faster than t^2 (phase and speed errors)
    assert errors[1] < 2e-2
    assert errors[1] < 4.5 * errors[0] + 1e-9


def test_rule_constants_come_from_the_measurement() -> None:
    # each constant is the safety factor times a measured limit, and re-measuring one case finds
    # a limit at or above the rule (n = 256: cheap)
    case = steplimits.Case("ifrk4", "kdv", 256, 1.0)
    limit = steplimits.measure(case)
    rate, lin = case.rates()
    rule = simulation.STEP_RULE["ifrk4"].limit(rate, lin)
    assert rule <= limit.dt_stable
    assert limit.verdict != steplimits.STABLE
    with pytest.raises(kv.ConfigError, match="fixed-step"):
        steplimits.measure(steplimits.Case("adaptive", "kdv", 256, 1.0))


# ------------------------------------------------------------------------------- resolution


def test_spectrum_decades_against_the_sech2_transform() -> None:
    # FT of sech^2(x/w) is pi k w^2 / sinh(pi k w / 2) (standard transform, [memory]); numpy's
    # rfft of the sampled profile follows it down to the cutoff (3.3 points per width here)
    w = 1.0
    grid = kv.Grid(256, 256 * w / 3.3)
    u = 1.0 / np.cosh(grid.x / w) ** 2
    k_cut = 2.0 / 3.0 * math.pi / grid.dx
    k_peak = 2.0 * math.pi / grid.length  # mode 1

    def transform(k: float) -> float:
        return math.pi * k * w * w / math.sinh(math.pi * k * w / 2.0)

    predicted = math.log10(transform(k_peak) / transform(k_cut))
    assert spectrum_decades(u, 2.0 / 3.0) == pytest.approx(predicted, abs=0.3)
    assert spectrum_decades(u, 2.0 / 3.0) < simulation.REFUSE_DECADES
    # a resolved soliton reaches round-off before the cutoff
    fine = kv.Grid(1024, 40.0)
    assert spectrum_decades(1.0 / np.cosh(fine.x) ** 2, 2.0 / 3.0) == math.inf


def test_api_warns_a_soliton_at_3_3_points_per_width() -> None:
    grid = kv.Grid(256, 256 / 3.3)  # kappa = 1: width 1
    sim = kv.Simulation(grid, KDV, "etdrk4", dt=1e-4)
    (message,) = sim.check(periodic_soliton(grid, 0.0, 1.0, 0.0))
    assert "3.3 points per width" in message
    assert "decades" in message


PROFILE = 'kind = "sech2"\nheight = 1.0\nscale = 0.5'
KINDS = 'kind = "solitons"\nkappa = [1.0, "k2"]\nposition = [-10.0, 10.0]'


def sweep_warnings(tmp_path: Path, initial: str, points: int) -> tuple[str, ...]:
    text = edit(KINDS, initial).replace("points = 512", f"points = {points}")
    text = edit('scheme = "etdrk4"\ndt = 2.5e-3', 'scheme = "etdrk4"\ndt = 1e-4', text)
    (tmp_path / "s.toml").write_text(text, encoding="utf-8")
    return load_sweep(tmp_path / "s.toml").warnings


def test_sweep_warns_an_under_resolved_profile(tmp_path: Path) -> None:
    # sech2 of scale 0.5: 8.5 points per scale at n = 1024 (about 12 decades at the cutoff),
    # 2.1 at n = 256 (1.9 decades: warned, not refused), 17 at n = 2048 (round-off reached)
    coarse = [w for w in sweep_warnings(tmp_path, PROFILE, 1024) if "initial:" in w]
    assert len(coarse) == 1
    assert "decades" in coarse[0]
    worse = [w for w in sweep_warnings(tmp_path, PROFILE, 256) if "initial:" in w]
    assert len(worse) == 1
    assert "(worst run 0: 1.9 decades)" in worse[0]
    fine = [w for w in sweep_warnings(tmp_path, PROFILE, 2048) if "initial" in w]
    assert fine == []


def test_sweep_notes_a_sharp_box_once_and_checks_a_smooth_one(tmp_path: Path) -> None:
    box = 'kind = "box"\nheight = 1.0\nhalf_width = 3.0'
    sharp = [w for w in sweep_warnings(tmp_path, box, 512) if "initial" in w]
    assert len(sharp) == 1
    assert "discontinuous" in sharp[0]
    smooth = box + "\nedge = 0.5"
    assert [w for w in sweep_warnings(tmp_path, smooth, 2048) if "initial" in w] == []
    rough = [w for w in sweep_warnings(tmp_path, box + "\nedge = 0.1", 256) if "initial" in w]
    assert rough
    assert "decades" in rough[0]


def test_bench_steps_command(capsys: pytest.CaptureFixture[str]) -> None:
    from kdvsweep import cli

    args = ["bench", "--steps", "--n", "256", "--kappas", "1", "--schemes", "strang"]
    assert cli.main([*args, "--equations", "kdv"]) == 0
    out = capsys.readouterr().out
    assert "strang  kdv" in out
    assert "strang   1 cases: nl" in out
    assert cli.main([*args, "--runs", "4"]) == 2
    assert "--runs applies to the farm benchmark (--sweep) only" in capsys.readouterr().err
    assert cli.main([*args, "--equations", "kdv-x"]) == 2
    assert "unknown preset 'kdv-x'" in capsys.readouterr().err


def test_rule_edge_cases() -> None:
    # adaptive: its own error control; linear equation: no nonlinear rate; no dispersion: the
    # product bound drops out and the RK4 bound on rate_nl alone remains (common practice)
    assert dt_limit("adaptive", 2.0, KDV, GRID.dx) == math.inf
    assert dt_limit("ifrk4", 2.0, kv.Equation(d=1.0), GRID.dx) == math.inf
    burgers = kv.Equation(a=6.0, d=0.0)
    rate = nonlinear_rate(2.0, 6.0, 0.0, burgers.dealias_fraction, GRID.dx)
    rule = simulation.STEP_RULE["ifrk4"]
    assert dt_limit("ifrk4", 2.0, burgers, GRID.dx) == pytest.approx(rule.nonlinear / rate)
