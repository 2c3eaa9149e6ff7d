"""``[accuracy]`` in sweep files: the target, automatic step and grid, error estimates of verified
runs (README "Asking for an accuracy").

Normalisation: KdV ``u_t + 6 u u_x + u_xxx = 0``. The reference for every shift is the pair
formula of Gardner, Greene, Kruskal & Miura (1974) as :func:`kdvsweep.theory.phase_shifts` gives
it (fast soliton ``ln((k1 + k2) / (k1 - k2)) / k1``, slow ``-ln(...) / k2``).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import pandas as pd
import pytest

from kdvsweep import theory
from kdvsweep.exceptions import ConfigError
from kdvsweep.sweep import accuracy as acc
from kdvsweep.sweep import runner, sizing
from kdvsweep.sweep.config import load_sweep

PAIR = """
[model]
equation = "kdv"
scheme = "SCHEME"
dt = "auto"
points = "auto"
length = "auto"

[initial]
kind = "solitons"
kappa = [1.0, K2]
position = "auto"

[run]
end = "auto"
frame_every = 0.1

[accuracy]
shift = TARGET
verify = 1
"""


def pair(tmp_path: Path, k2: float = 0.5, target: str = "1e-5", scheme: str = "etdrk4") -> Path:
    text = PAIR.replace("K2", repr(k2)).replace("TARGET", target).replace("SCHEME", scheme)
    path = tmp_path / "pair.toml"
    path.write_text(text)
    return path


@pytest.mark.parametrize(
    ("k2", "scheme", "equation"),
    [
        (0.4, "etdrk4", "kdv"),
        (0.6, "etdrk4", "kdv"),
        (0.5, "ifrk4", "kdv"),
        (0.5, "strang", "kdv"),
        (0.5, "etdrk4", "mkdv"),
    ],
)
def test_auto_step_reaches_the_target_and_estimates_bracket_the_error(
    tmp_path: Path, k2: float, scheme: str, equation: str
) -> None:
    # KdV: both sides of Lax's exchange/absorb-emit threshold (k2 = 0.4: ratio 6.25, 0.6: 2.8).
    # mKdV u_t + 6 u^2 u_x + u_xxx = 0: the same pair formula in its kappas (Wadati 1973 [memory]).
    target = 1e-5
    path = pair(tmp_path, k2, scheme=scheme)
    path.write_text(path.read_text().replace('equation = "kdv"', f'equation = "{equation}"'))
    spec = load_sweep(path).runs[0]
    assert spec.run.accuracy == target
    assert spec.run.verify
    result = runner.execute(spec)
    assert result.ok, result.run_row.get("reason")
    predicted = theory.phase_shifts([1.0, k2], equation=spec.model.equation)  # Gardner 1974
    assert len(result.soliton_rows) == 2
    for row, shift in zip(result.soliton_rows, predicted, strict=True):
        true = abs(row["shift_measured"] - shift) / abs(shift)
        est = row["shift_error_estimate"] / abs(shift)
        assert true <= target, (k2, row["soliton"], true)
        # the estimate brackets the true error, or is within a factor 3 of it
        assert est >= true or true <= 3 * est, (k2, row["soliton"], true, est)
        assert math.isfinite(row["amplitude_error_estimate"])
        assert math.isfinite(row["speed_error_estimate"])
    assert result.run_row["accuracy_met"] is True
    assert result.run_row["accuracy_target"] == target


def test_a_tighter_target_takes_a_smaller_step_and_more_points(tmp_path: Path) -> None:
    loose = load_sweep(pair(tmp_path, target="1e-4")).runs[0].model
    tight = load_sweep(pair(tmp_path, target="1e-8")).runs[0].model
    assert tight.dt < loose.dt
    assert tight.grid.n > loose.grid.n
    # the error model: C (dt rate)^p is TIME_SHARE of the target (rate 6 a1 k1 = 12 here)
    model = acc.ERROR_CONSTANT["etdrk4"] * (loose.dt * 12.0) ** 4
    assert model <= acc.TIME_SHARE * 1e-4


def test_strang_error_estimate_uses_second_order() -> None:
    # Richardson extrapolation (common practice, no source): 2^p / (2^p - 1).
    assert acc.richardson_factor(4) == pytest.approx(16 / 15)
    assert acc.richardson_factor(2) == pytest.approx(4 / 3)
    rows = [{"shift_measured": 1.0, "amplitude": 2.0, "speed": 4.0, "shift_predicted": 1.0}]
    other = [{"shift_measured": 1.0 + 3e-6, "amplitude": 2.0, "speed": 4.0}]
    est = acc.error_estimates(rows, other, 2)
    assert est[0]["shift_error_estimate"] == pytest.approx(4e-6)
    assert acc.accuracy_met(rows, est, 1e-5) is True
    assert acc.accuracy_met(rows, est, 1e-6) is False
    # a shift the analysis did not report (uncertainty above the target) is a target not met
    unreported = [{**rows[0], "shift_measured": math.nan}]
    assert acc.accuracy_met(unreported, est, 1e-5) is False


def test_verified_runs_are_reproducible(tmp_path: Path) -> None:
    text = PAIR.replace("K2", '"k2"').replace("TARGET", "1e-4").replace("SCHEME", "etdrk4")
    text = text.replace("verify = 1", "verify = 0.3\nseed = SEED")
    text += "\n[[vary]]\nk2 = { from = 0.3, to = 0.7, count = 10 }\n"

    def chosen(seed: int) -> list[int]:
        path = tmp_path / f"s{seed}.toml"
        path.write_text(text.replace("SEED", str(seed)))
        return [r.run_id for r in load_sweep(path).runs if r.run.verify]

    first = chosen(1)
    assert len(first) == 3
    assert chosen(1) == first
    assert any(chosen(s) != first for s in (2, 3, 4))
    assert acc.verified_runs(range(10), 0.0, 1) == frozenset()
    assert acc.verified_runs(range(10), 1.0, 1) == frozenset(range(10))


@pytest.mark.parametrize(
    ("line", "message"),
    [
        ("shfit = 1e-5", r"accuracy\.shfit"),
        ("verify = 2", r"accuracy\.verify: given 2, expected a fraction of the runs from 0 to 1"),
        ("seed = -1", r"accuracy\.seed: given -1, expected an integer >= 0"),
        ('shift = "fine"', r"accuracy\.shift: given 'fine', expected a positive number"),
    ],
)
def test_bad_accuracy_key_is_one_line(tmp_path: Path, line: str, message: str) -> None:
    path = tmp_path / "bad.toml"
    path.write_text(
        PAIR.replace("K2", "0.5")
        .replace("SCHEME", "etdrk4")
        .replace("shift = TARGET\nverify = 1", line)
    )
    with pytest.raises(ConfigError, match=message) as info:
        load_sweep(path)
    assert "\n" not in str(info.value)


def test_target_is_in_the_digest(tmp_path: Path) -> None:
    a = load_sweep(pair(tmp_path, target="1e-5")).digest
    b = load_sweep(pair(tmp_path, target="1e-6")).digest
    assert a != b


@pytest.mark.parametrize(
    ("scheme", "dt"), [("etdrk4", 0.0025), ("ifrk4", 0.0025), ("strang", 0.0025)]
)
def test_error_model_bounds_the_measured_error(tmp_path: Path, scheme: str, dt: float) -> None:
    # The calibration of ERROR_CONSTANT, measured again at one of its steps: on the KdV pair
    # kappa = (1, 0.5) (rate (6 max u) / width = 12) at double-precision resolution (no target: 16
    # decades), the relative shift error against the pair formula (Gardner et al. 1974) is within
    # C (dt rate)^p.
    text = PAIR.replace("K2", "0.5").replace("SCHEME", scheme).replace('dt = "auto"', f"dt = {dt}")
    path = tmp_path / "calibration.toml"
    path.write_text(text.replace("shift = TARGET\nverify = 1", ""))
    spec = load_sweep(path).runs[0]
    result = runner.execute(spec)
    assert result.ok, result.run_row.get("reason")
    errors = [
        abs(row["shift_measured"] - shift) / abs(shift)
        for row, shift in zip(result.soliton_rows, theory.phase_shifts([1.0, 0.5]), strict=True)
    ]
    model = acc.ERROR_CONSTANT[scheme] * (dt * 12.0) ** acc.SCHEME_ORDER[scheme]
    assert max(errors) <= model, (scheme, errors, model)
    # and the model is not loose by orders of magnitude at the steps it was measured at
    assert max(errors) >= model / 10, (scheme, errors, model)


def test_auto_step_without_target_uses_the_default_target(tmp_path: Path) -> None:
    path = tmp_path / "default.toml"
    text = PAIR.replace("K2", "0.5").replace("SCHEME", "etdrk4")
    path.write_text(text.replace("shift = TARGET\nverify = 1", ""))
    spec = load_sweep(path).runs[0]
    assert spec.run.accuracy is None
    assert not spec.run.verify
    limit = sizing.dt_limit("etdrk4", 2.0, spec.model.equation, spec.model.grid.dx)
    assert spec.model.dt == acc.auto_dt("etdrk4", acc.DEFAULT_AUTO_TARGET, 12.0, limit)


def test_estimates_reach_the_store(tmp_path: Path) -> None:
    # Through the farm and the Parquet store: verified runs have estimates and accuracy_met,
    # the others null (common practice, no source: a column filled only where measured).
    from kdvsweep.results import load
    from kdvsweep.sweep.farm import local_client, run_sweep

    text = PAIR.replace("K2", '"k2"').replace("TARGET", "1e-4").replace("SCHEME", "etdrk4")
    text = text.replace("verify = 1", "verify = 0.5\nseed = 7")
    text += "\n[[vary]]\nk2 = [0.5, 0.6]\n"
    path = tmp_path / "store.toml"
    path.write_text(text)
    sweep = load_sweep(path)
    verified = {r.run_id for r in sweep.runs if r.run.verify}
    assert len(verified) == 1
    with local_client(1) as client:
        run_sweep(sweep, tmp_path / "out", client)
    res = load(tmp_path / "out")
    runs = res.runs.set_index("run_id")
    assert (runs["accuracy_target"] == 1e-4).all()
    for rid in runs.index:
        met = runs.loc[rid, "accuracy_met"]
        rows = res.solitons[res.solitons["run_id"] == rid]
        if rid in verified:
            assert bool(met) is True
            assert rows["shift_error_estimate"].notna().all()
        else:
            assert met is None or met is pd.NA or (isinstance(met, float) and math.isnan(met))
            assert rows["shift_error_estimate"].isna().all()


def test_auto_step_needs_solitons(tmp_path: Path) -> None:
    path = tmp_path / "profile.toml"
    path.write_text(
        '[model]\nequation = "kdv"\ndt = "auto"\npoints = 256\nlength = 40\n'
        '[initial]\nkind = "sech2"\nheight = 2\nscale = 1\ncenter = 0\n'
        "[run]\nend = 1\nframe_every = 0.1\n"
    )
    with pytest.raises(ConfigError, match=r"model\.dt: given 'auto', expected a number") as info:
        load_sweep(path)
    assert "\n" not in str(info.value)


def test_adaptive_scheme_is_not_verified(tmp_path: Path) -> None:
    # no fixed step to halve: the run says so, and accuracy_met stays null
    spec = load_sweep(pair(tmp_path, target="1e-4", scheme="adaptive")).runs[0]
    result = runner.execute(spec)
    assert result.ok
    assert "not verified: adaptive scheme" in result.run_row["reason"]
    assert result.run_row.get("accuracy_met") is None


# --- the analysis's own error: tail interaction, initial kappas ---------------------------------


def _exact_pair_record(equation: str, k2: float) -> tuple[Any, Any, Any, list[float]]:
    """Frames of the exact Hirota 2-soliton (Hirota 1971) on a periodic grid (the nearest periodic
    images summed: their overlap is below 1e-12 here), the fast soliton kappa = 1 starting
    ``10 / k2`` behind the slow one (20 of the slow soliton's tail lengths), recorded until they
    are as far apart again."""
    import numpy as np

    from kdvsweep import Grid, exact

    kappas = [1.0, k2]
    start = 10.0 / k2
    length = 2.0 * start + 12.0 / k2 + 4.0
    n = 1 << math.ceil(math.log2(length / 0.08))
    grid = Grid(n, length)
    x0 = [-start, 0.0]
    end = math.ceil((2.0 * start + 4.0) / (4.0 * (1.0 - k2 * k2)) * 10.0) / 10.0
    times = np.round(np.arange(0.0, end + 1e-9, 0.1), 12)
    frames = []
    for t in times:
        centre = 0.5 * sum(p + 4.0 * k * k * t for p, k in zip(x0, kappas, strict=True))
        x = (grid.x - centre + 0.5 * length) % length - 0.5 * length + centre
        images = (exact.multisoliton(x + m * length, t, kappas, x0, equation) for m in (-1, 0, 1))
        frames.append(sum(images))
    return np.array(frames), times, grid, kappas


@pytest.mark.parametrize(("equation", "k2"), [("kdv", 0.7), ("kdv", 0.4), ("mkdv", 0.6)])
def test_tail_terms_remove_the_fit_bias_on_the_exact_two_soliton(equation: str, k2: float) -> None:
    # The exact 2-soliton's shifts are the pair formula's (Gardner, Greene, Kruskal & Miura 1974;
    # mKdV: Wadati 1973 [memory]); on its frames the only error left is the analysis's. Straight
    # lines through the windows are biased by the tails' overlap (about 1e-6 of the shift, through
    # the shared speed); the fit with one e^{-2 kappa_j D} term per other soliton and window (the
    # leading term of the tau function's expansion) is within 1e-8, and its uncertainty is
    # within a factor 3 of the error it leaves.
    from kdvsweep import analysis
    from kdvsweep.analysis import fits

    frames, times, grid, kappas = _exact_pair_record(equation, k2)
    predicted = theory.phase_shifts(kappas, equation)
    result = analysis.analyse_run(frames, times, grid, equation, kappas)
    assert result.ok, result.summary["analysis_reason"]
    tracks = result.tracks
    for i, fit in enumerate(result.fits):
        rel = abs(fit.shift - predicted[i]) / abs(predicted[i])
        assert rel < 1e-8, (i, rel)
        assert rel <= 3.0 * fit.uncertainty / abs(predicted[i]) + 1e-12
        assert fit.shift_tail_residual < 1e-10
    # the same windows with plain lines: the fast soliton (which sees the slow one's wider tail)
    # is off by more than 1e-7 of its shift
    fast = result.fits[0]
    alone = tracks.alone[:, 0]
    before = alone & (times <= times[fast.n_before - 1])
    after = alone & (times > times[fast.n_before - 1]) & ~before
    assert before.sum() == fast.n_before
    assert after.sum() == fast.n_after
    plain = fits.fit_asymptotes(
        times[before], tracks.position[before, 0], times[after], tracks.position[after, 0]
    )
    assert abs(plain.shift - predicted[0]) / abs(predicted[0]) > 1e-7


def test_tail_columns_follow_the_distance_on_the_ring() -> None:
    import numpy as np

    from kdvsweep.analysis.fits import tail_columns

    position = np.array([[0.0, 3.0, np.nan], [1.0, 3.5, 9.0], [2.0, 4.0, 9.5]])
    kappas = np.array([1.0, 0.5, 0.25])
    cols, ratio = tail_columns(position, kappas, 0, 10.0)
    # soliton 1 at distance 3, 2.5, 2; soliton 2 the nearer way round (10 - 9 + 1 = 2 at row 1),
    # its missing first position taken from the nearest frame where it was located (9: distance 1)
    np.testing.assert_allclose(cols[:, 0], np.exp(-2 * 0.5 * np.array([3.0, 2.5, 2.0])))
    np.testing.assert_allclose(cols[:, 1], np.exp(-2 * 0.25 * np.array([1.0, 2.0, 2.5])))
    assert ratio == 1.0


def test_kappa_errors_follow_the_pair_formula() -> None:
    # The pair formula (Gardner et al. 1974): Delta_1 = ln((k1 + k2)/(k1 - k2))/k1, Delta_2 =
    # -ln(...)/k2; the estimate is the change of each shift when each kappa alone is moved to the
    # measured one, summed in magnitude.
    from kdvsweep import Equation

    def d1(k1: float, k2: float) -> float:
        return math.log((k1 + k2) / (k1 - k2)) / k1

    def d2(k1: float, k2: float) -> float:
        return -math.log((k1 + k2) / (k1 - k2)) / k2

    eq = Equation.kdv()
    rows = [
        {
            "kappa": 1.0,
            "kappa_measured": 1.0 + 1e-6,
            "collisions": 1,
            "shift_predicted": d1(1, 0.5),
        },
        {
            "kappa": 0.5,
            "kappa_measured": 0.5 - 2e-6,
            "collisions": 1,
            "shift_predicted": d2(1, 0.5),
        },
    ]
    got = acc.kappa_errors(rows, eq)
    want0 = abs(d1(1 + 1e-6, 0.5) - d1(1, 0.5)) + abs(d1(1, 0.5 - 2e-6) - d1(1, 0.5))
    want1 = abs(d2(1 + 1e-6, 0.5) - d2(1, 0.5)) + abs(d2(1, 0.5 - 2e-6) - d2(1, 0.5))
    assert got == pytest.approx([want0, want1], rel=1e-6)
    # a perturbed equation's shift is not the formula's: no term
    assert acc.kappa_errors(rows, Equation.kdv(g=0.01)) == [0.0, 0.0]
    # the total adds the re-runs' differences, the fit's uncertainty and this term
    parts = [[{"shift_error_estimate": 1e-7}] * 2, [{"shift_error_estimate": 2e-7}] * 2]
    with_unc = [{**r, "shift_uncertainty": 3e-7} for r in rows]
    total = acc.total_estimates(with_unc, parts, eq)
    assert total[0]["shift_error_estimate"] == pytest.approx(6e-7 + want0)


def test_auto_tail_is_a_hundredth_of_the_target() -> None:
    assert acc.auto_tail(None, 1e-8) == 1e-8
    assert acc.auto_tail(1e-5, 1e-8) == 1e-8
    assert acc.auto_tail(1e-7, 1e-8) == pytest.approx(1e-9)


def test_a_1e7_target_is_reached_and_bracketed(tmp_path: Path) -> None:
    # The KdV pair (1, 0.6) (Lax's mixed regime) at a 1e-7 target, sizing.tail from the target
    # (auto_tail): both shifts within 1e-7 of the pair formula (Gardner et al. 1974), each estimate
    # at least a third of the true error.
    target = 1e-7
    path = pair(tmp_path, 0.6, target=repr(target))
    tail = acc.auto_tail(target, 1e-8)
    path.write_text(path.read_text() + f"\n[sizing]\ntail = {tail!r}\n")
    spec = load_sweep(path).runs[0]
    result = runner.execute(spec)
    assert result.ok, result.run_row.get("reason")
    for row, shift in zip(result.soliton_rows, theory.phase_shifts([1.0, 0.6]), strict=True):
        true = abs(row["shift_measured"] - shift) / abs(shift)
        est = row["shift_error_estimate"] / abs(shift)
        assert true <= target, (row["soliton"], true)
        assert true <= 3 * est, (row["soliton"], true, est)
    assert result.run_row["accuracy_met"] is True


def test_peak_spread_and_the_decades_it_adds() -> None:
    # KdV amplitude 2 kappa^2 (Korteweg & de Vries 1895), mKdV 2 kappa (Wadati 1973 [memory]):
    # the spread (A_max/A_min)(kappa_max/kappa_min) is (k_max/k_min)^3 and ^2.
    from kdvsweep import Equation

    kdv = Equation.kdv().soliton_form
    mkdv = Equation.mkdv().soliton_form
    assert acc.peak_spread([1.0, 0.6, 0.25], kdv) == pytest.approx(64.0)
    assert acc.peak_spread([1.0, 0.5], mkdv, [1, -1]) == pytest.approx(4.0)
    assert acc.REFERENCE_SPREAD == pytest.approx(acc.peak_spread([1.0, 0.6], kdv))
    # without a spread: the margin measured on the reference pair; with one, log10 of the ratio
    assert acc.auto_decades(1e-5, 16.0) == pytest.approx(5.0 + acc.EXTRA_DECADES)
    more = acc.auto_decades(1e-7, 16.0, 64.0) - acc.auto_decades(1e-7, 16.0)
    assert more == pytest.approx(math.log10(64.0 / acc.REFERENCE_SPREAD))
    assert acc.auto_decades(1e-12, 16.0, 64.0) == 16.0
    assert acc.auto_decades(None, 16.0, 64.0) == 16.0
