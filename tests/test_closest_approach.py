"""The closest approach of a pair (``peaks_at_closest``, ``min_peaks``) whatever the frame interval,
and each soliton's own fit windows for three solitons.

Normalisation: KdV ``u_t + 6 u u_x + u_xxx = 0``; a soliton ``2 kappa^2 sech^2(kappa (x - 4 kappa^2 t
- x0))``, amplitude ratio of a pair ``r = (kappa_1/kappa_2)^2``.

Sources of the expected values:

* Lax 1968 (Comm. Pure Appl. Math. 21, 467; also Drazin & Johnson 1989, Problem 4.5): a KdV pair
  has two maxima at the symmetric instant for ``r < 3`` and one for ``r > 3``; for
  ``r < (3 + sqrt 5)/2`` two maxima at all times (so the fewest is 2), above it one maximum at
  some time (the fewest is 1). The two thresholds are written out here, not taken from
  ``kdvsweep.theory``.
* The exact Hirota 2-soliton (``kv.exact.multisoliton``, Hirota 1971), symmetric about ``x = 0`` at
  ``t = 0`` with the phases of ``theory.symmetric_phases``: its maxima counted by
  ``count_peaks`` at that instant, and the fewest over a fine scan of times, are an independent
  check of the counts the analysis reports from the simulation.
* The shifts of three solitons: the pair formula ``Delta x_i = sum_j sign(kappa_i - kappa_j)
  (1/kappa_i) ln((kappa_i + kappa_j)/|kappa_i - kappa_j|)`` (Gardner, Greene, Kruskal & Miura 1974;
  pairwise additive, Zakharov 1971), computed here.

The simulated pair starts as the exact 2-soliton at ``t = -T_SYM`` (moved to the middle of the
box, its tails below 1e-12 at the edges), so its symmetric instant is ``t = T_SYM``, chosen off every
frame time of the three frame intervals (0.02, 0.1, 0.5): only a look between the frames finds
the two-peak instant of ``r = 2.95``, whose two-peak window is about 0.006 wide.
"""

from __future__ import annotations

import functools
import math
from pathlib import Path

import numpy as np
import pytest
from conftest import pair_sweep

import kdvsweep as kv
from kdvsweep import theory
from kdvsweep.analysis.peaks import count_peaks, find_peaks_many
from kdvsweep.analysis.table import analyse_run
from kdvsweep.sweep.runner import execute

LENGTH, POINTS, DT = 80.0, 512, 2e-3
T_SYM = 8.0113  # 0.0113 after a frame at every interval below, 0.0087 before the next at 0.02
FINEST = 0.02
CENTRE = 20.0
INTERVALS = (0.02, 0.1, 0.5)
# Lax 1968: (3 + sqrt 5)/2 between "exchange" and "mixed", 3 between two and one peaks.
EXCHANGE_LIMIT = (3.0 + math.sqrt(5.0)) / 2.0
SINGLE_PEAK_LIMIT = 3.0
# Both sides of each threshold.
RATIOS = (2.58, 2.66, 2.95, 3.05)

GRID = kv.Grid(POINTS, LENGTH)
KDV = kv.Equation.coerce("kdv", "test")


def _kappas(ratio: float) -> list[float]:
    return [1.0, 1.0 / math.sqrt(ratio)]


def _restart(state: np.ndarray, t0: float, times: np.ndarray) -> np.ndarray:
    sim = kv.Simulation(GRID, KDV, dt=DT)
    sim.set_state(state, t0)
    return np.asarray(sim.record(times))


@functools.cache
def _pair_record(ratio: float) -> tuple[np.ndarray, np.ndarray]:
    """Frames every FINEST of the pair, the exact 2-soliton at t = -T_SYM to start."""
    k = _kappas(ratio)
    # Moved right by CENTRE so that the pair sits mid-box at the start.
    u0 = kv.exact.multisoliton(GRID.x - CENTRE, -T_SYM, k, theory.symmetric_phases(*k))
    assert max(abs(u0[0]), abs(u0[-1])) < 1e-12  # the box holds the pair's tails
    sim = kv.Simulation(GRID, KDV, dt=DT)
    sim.set_state(u0, 0.0)
    times = np.round(np.arange(0.0, 2.0 * T_SYM + 1.0, FINEST), 12)
    return np.asarray(sim.record(times)), times


@functools.cache
def _exact_counts(ratio: float) -> tuple[int, int]:
    """Maxima of the exact 2-soliton at its symmetric instant, and the fewest over |t| <= 1
    (every 0.001, the symmetric instant included)."""
    k = _kappas(ratio)
    phases = theory.symmetric_phases(*k)
    threshold = 0.25 * 2.0 * k[1] ** 2
    at = count_peaks(kv.exact.multisoliton(GRID.x, 0.0, k, phases), LENGTH, threshold)
    scan = np.array(
        [kv.exact.multisoliton(GRID.x, float(t), k, phases) for t in np.linspace(-1, 1, 2001)]
    )
    fewest = min(len(p) for p in find_peaks_many(scan, LENGTH, threshold))
    return at, fewest


@pytest.mark.parametrize("ratio", RATIOS)
def test_exact_pair_counts_follow_lax(ratio: float) -> None:
    at, fewest = _exact_counts(ratio)
    assert at == (2 if ratio < SINGLE_PEAK_LIMIT else 1)
    assert fewest == (2 if ratio < EXCHANGE_LIMIT else 1)


@pytest.mark.parametrize("interval", INTERVALS)
@pytest.mark.parametrize("ratio", RATIOS)
def test_peaks_at_closest_whatever_the_frame_interval(ratio: float, interval: float) -> None:
    frames, times = _pair_record(ratio)
    stride = round(interval / FINEST)
    k = _kappas(ratio)
    found = analyse_run(frames[::stride], times[::stride], GRID, KDV, k, restart=_restart)
    s = found.summary
    assert s["analysis_status"] == "ok", s["analysis_reason"]
    assert s["t_closest"] == pytest.approx(T_SYM, abs=1e-4)
    at, fewest = _exact_counts(ratio)
    assert s["peaks_at_closest"] == at == theory.peaks_at_closest_approach(*k)
    assert s["min_peaks"] == fewest
    assert s["regime"] == theory.interaction_regime(*k)


def test_failed_restart_falls_back_to_the_frames_with_a_note() -> None:
    frames, times = _pair_record(3.05)

    def broken(state: np.ndarray, t0: float, when: np.ndarray) -> np.ndarray:
        return np.zeros((1, 3))

    found = analyse_run(frames[::5], times[::5], GRID, KDV, _kappas(3.05), restart=broken)
    assert found.ok
    assert "restart failed" in found.summary["analysis_reason"]
    assert found.summary["peaks_at_closest"] == 1  # from the stored frames: one-peak regime


# --- three solitons: each soliton's own fit windows --------------------------------------------

TRIPLE = (1.0, 0.65, 0.25)


def _formula_shifts(kappas: tuple[float, ...]) -> np.ndarray:
    """GGKM 1974 pair shift summed over the other solitons (Zakharov 1971)."""
    out = np.zeros(len(kappas))
    for i, ki in enumerate(kappas):
        for j, kj in enumerate(kappas):
            if i != j:
                out[i] += math.copysign(math.log((ki + kj) / abs(ki - kj)), ki - kj) / ki
    return out


@functools.cache
def _triple_record(end: float) -> tuple[kv.Grid, np.ndarray, np.ndarray]:
    """The exact 3-soliton, fastest on the left: the fast pair meets near t = 4, the slowest
    soliton is met near t = 17 and t = 35; a line-like box (tails < 1e-12 at the edges)."""
    grid = kv.Grid(2048, 400.0)
    times = np.round(np.arange(0.0, end + 1e-9, 0.25), 12)
    frames = np.array(
        [kv.exact.multisoliton(grid.x, float(t), TRIPLE, [-175.0, -160.0, -110.0]) for t in times]
    )
    assert np.abs(frames[:, [0, -1]]).max() < 1e-12
    return grid, frames, times


def test_triple_windows_are_each_solitons_own() -> None:
    grid, frames, times = _triple_record(75.0)
    found = analyse_run(frames, times, grid, KDV, list(TRIPLE))
    assert found.ok, found.summary["analysis_reason"]
    # The run's own window (every pair apart before any collision) ends at the first collision;
    # the slowest soliton's ends at its own first one, much later.
    assert found.before is not None
    run_before = int(found.before.sum())
    assert found.table["frames_before"].iloc[2] > 2 * run_before
    assert found.summary["frames_before"] == int(found.table["frames_before"].min())
    expected = _formula_shifts(TRIPLE)
    measured = found.table["shift_measured"].to_numpy()
    np.testing.assert_allclose(measured, expected, rtol=1e-6)
    assert np.all(found.table["collisions"] == 2)


def test_triple_too_few_frames_names_the_soliton() -> None:
    grid, frames, times = _triple_record(75.0)
    # Every 4 time units: the fast pair has too few frames apart before its collision.
    found = analyse_run(frames[::16], times[::16], grid, KDV, list(TRIPLE))
    assert found.summary["analysis_status"] == "too_short"
    reason = found.summary["analysis_reason"]
    assert "soliton 0" in reason
    assert "before its first collision" in reason
    assert np.all(np.isnan(found.table["shift_measured"]))


def test_accuracy_blanks_shifts_whose_windows_cannot_show_it() -> None:
    grid, frames, times = _triple_record(75.0)
    expected = _formula_shifts(TRIPLE)
    fine = analyse_run(frames, times, grid, KDV, list(TRIPLE), accuracy=1e-5)
    assert fine.summary["analysis_reason"] == ""
    np.testing.assert_allclose(fine.table["shift_measured"], expected, rtol=1e-6)
    # Frames every time unit: the fast pair has 3 frames apart before its collision, too few for
    # the fit's bias check; the slowest soliton has its own longer windows and is kept.
    coarse = analyse_run(frames[::4], times[::4], grid, KDV, list(TRIPLE), accuracy=1e-5)
    shifts = coarse.table["shift_measured"].to_numpy()
    assert np.isnan(shifts[:2]).all()
    assert shifts[2] == pytest.approx(expected[2], rel=1e-6)
    reason = coarse.summary["analysis_reason"]
    assert "soliton 0: shift not reported" in reason
    assert "soliton 2" not in reason
    with pytest.raises(kv.ConfigError, match="accuracy must be a positive number"):
        analyse_run(frames, times, grid, KDV, list(TRIPLE), accuracy=-1.0)


def test_runner_restarts_the_collision(tmp_path: Path) -> None:
    """A sweep run (frames every 0.5) reports Lax's two peaks just below ratio 3."""
    k2 = 0.8 / math.sqrt(2.95)
    spec = pair_sweep(tmp_path, "close", [k2], frame_every=0.5).runs[0]
    row = execute(spec).run_row
    assert row["status"] == "ok", row["reason"]
    assert row["analysis_status"] == "ok", row["analysis_reason"]
    assert row["regime"] == "mixed"
    assert row["peaks_at_closest"] == 2 == theory.peaks_at_closest_approach(0.8, k2)
    assert row["min_peaks"] == 1
