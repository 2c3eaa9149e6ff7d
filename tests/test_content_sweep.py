"""Sweeps of profile data: the soliton content stored end to end, and its automatic sizing.

Normalisation: KdV ``u_t + 6 u u_x + u_xxx = 0`` (preset "kdv"). The reflectionless wells
``lam (lam + 1) sech^2 x`` with integer ``lam`` shed exactly ``lam`` solitons of ``kappa = lam,
lam - 1, ..., 1``, amplitude ``2 kappa^2``, speed ``4 kappa^2``, and no radiation (Pöschl & Teller
1933; Drazin & Johnson 1989, Sec. 3.3 [memory]). Runs go through the runner and the store serially
(no dask), as the farm does.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from conftest import make_store

import kdvsweep as kv
from kdvsweep import columns, initial, spectrum
from kdvsweep.exceptions import ConfigError
from kdvsweep.results import Results, load
from kdvsweep.sweep import sizing
from kdvsweep.sweep.config import load_sweep
from kdvsweep.sweep.runner import execute

WELLS = """
[sweep]
name = "wells"

[model]
equation = "kdv"
points = "auto"
length = "auto"
scheme = "etdrk4"
dt = 5e-4

[initial]
kind = "sech2"
height = "h"
scale = 1.0

[run]
end = "auto"
frame_every = 0.05
keep_frames = true
keep_stride = 2

[sizing]
tail = 1e-4

[[vary]]
h = [6.0, 2.0]
"""


@pytest.fixture(scope="module")
def wells(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return make_store(tmp_path_factory.mktemp("wells"), WELLS, "wells")


def _schema(out: Path, table: str) -> pa.Schema:
    (part,) = sorted((out / table).glob("part-*.parquet"))
    return pq.read_schema(part)


def test_the_tables_hold_the_content_columns_with_their_types(wells: Path) -> None:
    runs, sol = _schema(wells, "runs"), _schema(wells, "solitons")
    for col in columns.CONTENT_COLUMNS:
        assert runs.field(col.name).type == col.type, col.name
    for col in columns.CONTENT_SOLITON_COLUMNS:
        assert sol.field(col.name).type == col.type, col.name
    assert runs.field("ist_kappas").type == pa.list_(pa.float64())
    assert runs.field("all_found").type == pa.bool_()
    assert sol.field("found").type == pa.bool_()
    # profile data: no collision analysis columns in runs
    assert "analysis_status" not in runs.names


def test_counts_and_amplitudes_of_the_wells(wells: Path) -> None:
    res = load(wells)
    runs = res.runs.set_index("h")
    for lam, h in ((2, 6.0), (1, 2.0)):
        row = runs.loc[h]
        assert row["status"] == "ok", row["reason"]
        assert row["ist_status"] == "ok"
        assert row["content_status"] == "ok"
        assert row["ist_count"] == lam == row["measured_count"]
        assert row["measured_breathers"] == 0 == row["left_out"]
        assert bool(row["all_found"])
        # the list column comes back from kv.load as a sequence of floats
        expected = [float(lam - n) for n in range(lam)]  # Pöschl & Teller 1933
        np.testing.assert_allclose(list(row["ist_kappas"]), expected, atol=1e-6)
        # reflectionless: the predicted radiation carries nothing (trace formula, int u^2 =
        # sum 16 kappa^3 / 3; Miura, Gardner & Kruskal 1968 [memory])
        assert abs(row["radiation_momentum_ist"]) < 1e-8
        sol = res.solitons[res.solitons["run_id"] == row["run_id"]].sort_values("soliton")
        assert list(sol["kind"]) == ["soliton"] * lam
        assert sol["found"].astype(bool).all()
        assert (sol["note"] == "").all()
        amplitudes = np.array([2.0 * k**2 for k in expected])
        np.testing.assert_allclose(sol["amplitude_ist"], amplitudes, rtol=1e-6)
        np.testing.assert_allclose(sol["amplitude"], amplitudes, rtol=1e-4)
        np.testing.assert_allclose(sol["speed"], 2.0 * amplitudes, rtol=1e-4)
        assert (sol["amplitude_uncertainty"] > 0).all()
        assert (sol["t_separated"] < row["t_end"]).all()


def test_predicted_amplitudes_are_those_of_bound_states_on_the_run_grid(wells: Path) -> None:
    # The stored prediction is kv.spectrum.bound_states of the run's own initial profile.
    res = load(wells)
    for row in res.runs.to_dict("records"):
        grid = kv.Grid(int(row["n"]), float(row["length"]))
        u0 = initial.Profile("sech2", float(row["h"]), 1.0).build(grid, kv.Equation.kdv())
        content = spectrum.bound_states(u0, grid, "kdv")
        np.testing.assert_allclose(list(row["ist_kappas"]), content.kappas, rtol=0, atol=1e-12)
        sol = res.solitons[res.solitons["run_id"] == row["run_id"]].sort_values("soliton")
        np.testing.assert_allclose(sol["amplitude_ist"], content.amplitudes, rtol=1e-12)


def test_auto_sizing_of_the_wells(wells: Path) -> None:
    res = load(wells)
    for row in res.runs.to_dict("records"):
        # the grid resolves the narrowest predicted soliton (width 1 / kappa_max) with the
        # points per width of the resolution rule, and the box holds the fastest soliton's
        # travel: a soliton of speed 4 kappa^2 (Korteweg & de Vries 1895) needs L > c t_end
        kappa = max(row["ist_kappas"])
        per_width = (1.0 / kappa) / (row["length"] / row["n"])
        assert per_width >= sizing.min_points_per_width(2.0 / 3.0, sizing.WARN_DECADES)
        assert row["length"] > 4.0 * kappa**2 * row["t_end"]
        assert row["t_end"] <= 100.0  # the default sizing.max_end


def test_periodic_data_are_stored_with_their_ist_status(tmp_path: Path) -> None:
    # A cosine fills the periodic box: the spectrum of the line does not describe it, so the
    # run is made and stored with the reason instead of a soliton count.
    grid = kv.Grid(256, 8.0 * math.pi)
    np.save(tmp_path / "cosine.npy", 0.5 * np.cos(grid.x / 2.0) + 0.25)
    text = f"""
[model]
equation = "kdv"
points = 256
length = {grid.length!r}
scheme = "etdrk4"
dt = 1e-3

[initial]
kind = "npy"
file = "cosine.npy"

[run]
end = 0.5
frame_every = 0.1
"""
    res: Results = load(make_store(tmp_path, text, "cosine"))
    (row,) = res.runs.to_dict("records")
    assert row["status"] == "ok", row["reason"]
    assert row["ist_status"].startswith("no IST: bound_states: u0 has not decayed")
    assert "\n" not in row["ist_status"]
    assert row["ist_count"] is None or math.isnan(row["ist_count"])
    assert row["ist_kappas"] is None
    assert isinstance(row["content_status"], str)
    assert row["content_status"]
    if len(res.solitons):  # measured without a prediction: nothing to match
        assert res.solitons["found"].isna().all()


def test_content_switched_off_says_so(tmp_path: Path) -> None:
    text = WELLS.replace("h = [6.0, 2.0]", "h = [2.0]").replace(
        'end = "auto"', "end = 1.0\npredict_content = false"
    )
    text = text.replace('length = "auto"', "length = 40.0").replace('"auto"', "512")
    res = load(make_store(tmp_path, text, "off"))
    (row,) = res.runs.to_dict("records")
    assert row["ist_status"] == "off: run.predict_content = false"
    assert row["content_status"] == "ok"
    assert row["measured_count"] == 1
    assert res.solitons["found"].isna().all()  # nothing predicted: neither found nor not


# --- sizing -------------------------------------------------------------------------------------


def _load(tmp_path: Path, text: str) -> kv.sweep.Sweep:
    path = tmp_path / "sweep.toml"
    path.write_text(text, encoding="utf-8")
    return load_sweep(path)


def test_a_soliton_too_slow_to_separate_is_named_with_the_end_it_needs(tmp_path: Path) -> None:
    text = WELLS.replace("tail = 1e-4", "tail = 1e-4\nmax_end = 4.0").replace(
        "h = [6.0, 2.0]", "h = [6.0]"
    )
    sweep = _load(tmp_path, text)
    (warning,) = [w for w in sweep.warnings if "sizing" in w]
    assert "\n" not in warning
    assert "soliton 0" not in warning  # the fast one (kappa = 2) separates in time
    match = re.search(r"soliton 1 \(kappa = 1,.*needs end = ([0-9.]+) > 4", warning)
    assert match, warning
    assert float(match.group(1)) > 4.0
    (spec,) = sweep.runs
    assert spec.run.t_end <= 4.0
    result = execute(spec)
    assert result.ok, result.run_row["reason"]
    rows = result.soliton_rows
    assert result.run_row["ist_count"] == 2
    # every predicted soliton is measured, or left out with its reason; all_found counts the
    # measured ones against those not left out
    fast = [r for r in rows if r["kappa_ist"] == pytest.approx(2.0, abs=1e-6)]
    assert [r["found"] for r in fast] == [True]
    for r in rows:
        assert r["found"] or r["note"].startswith(("left out: ", "not found")), r
    missing = [r for r in rows if not r["found"] and not r["note"].startswith("left out: ")]
    assert result.run_row["all_found"] is (not missing)
    assert result.run_row["left_out"] == sum(r["note"].startswith("left out: ") for r in rows)


def test_one_eigensolve_per_distinct_profile(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    calls: list[int] = []
    solve = spectrum.bound_states

    def counted(*args: object, **kwargs: object) -> spectrum.SolitonContent:
        calls.append(1)
        return solve(*args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(spectrum, "bound_states", counted)
    text = WELLS.replace("h = [6.0, 2.0]", 'h = [6.0, 6.0, 2.0]\ntag = ["a", "b", "c"]')
    sweep = _load(tmp_path, text)
    assert len(sweep.runs) == 3
    assert len(calls) == 2
    assert sweep.runs[0].model.grid == sweep.runs[1].model.grid


@pytest.mark.parametrize(
    ("edit", "fragments"),
    [
        (
            (
                'kind = "sech2"\nheight = "h"\nscale = 1.0',
                'kind = "box"\nheight = "h"\nhalf_width = 2.0',
            ),
            ["model.points: given 'auto' in run 0", "sharp box (edge = 0)"],
        ),
        (
            ('equation = "kdv"', 'equation = "gardner"'),
            ["model.length: given 'auto' in run 0", "no soliton content for Gardner data"],
        ),
        (
            ("tail = 1e-4", "tail = 1e-4\nmin_amplitude = 2.0"),
            ["sizing.min_amplitude: given 2.0", "between 0 and 1"],
        ),
        (
            ("tail = 1e-4", "tail = 1e-4\nradiation = 0.0"),
            ["sizing.radiation: given 0.0", "positive"],
        ),
    ],
)
def test_content_sizing_errors_are_one_line(
    tmp_path: Path, edit: tuple[str, str], fragments: list[str]
) -> None:
    text = WELLS.replace(*edit)
    assert text != WELLS
    with pytest.raises(ConfigError) as info:
        _load(tmp_path, text)
    message = str(info.value)
    assert "\n" not in message
    for fragment in fragments:
        assert fragment in message, message


def test_a_breather_is_stored_with_its_predicted_values(tmp_path: Path) -> None:
    # Focusing mKdV u_t + 6 u^2 u_x + u_xxx = 0: opposite humps 2 (sech(x - 1) - sech(x + 1))
    # carry one complex Zakharov-Shabat pair (no soliton): a breather of envelope velocity
    # 4 (eta^2 - 3 xi^2) (Wadati 1973 [memory]). Too short a run to separate it: it is stored
    # as predicted, left out, with the reason.
    grid = kv.Grid(2048, 80.0)
    np.save(tmp_path / "dipole.npy", 2.0 * (1 / np.cosh(grid.x - 1) - 1 / np.cosh(grid.x + 1)))
    text = f"""
[model]
equation = "mkdv"
points = 2048
length = {grid.length!r}
scheme = "etdrk4"
dt = 2e-4

[initial]
kind = "npy"
file = "dipole.npy"

[run]
end = 1.0
frame_every = 0.1
"""
    res = load(make_store(tmp_path, text, "dipole"))
    (row,) = res.runs.to_dict("records")
    assert row["status"] == "ok", row["reason"]
    assert (row["ist_count"], row["ist_breathers"], row["left_out"]) == (0, 1, 1)
    assert list(row["ist_kappas"]) == []
    (b,) = res.solitons.to_dict("records")
    assert b["kind"] == "breather"
    assert not b["found"]
    assert b["note"].startswith("left out: ")
    eta, xi = b["kappa_ist"], b["xi_ist"]
    assert 0 < xi < eta
    assert b["speed_ist"] == pytest.approx(4.0 * (eta**2 - 3.0 * xi**2), rel=1e-12)


def test_breathers_and_solitons_carry_all_of_a_reflectionless_record() -> None:
    # Trace formula (Zakharov & Shabat 1972 [memory]): int q^2 dx = 4 sum Im(zeta) over the
    # eigenvalues in the upper half plane, so a soliton carries 4 kappa and a breather (a
    # conjugate pair) 8 eta; an exact soliton plus a breather far apart leave no radiation.
    from kdvsweep.analysis.content import breather_profile

    grid = kv.Grid(4096, 200.0)
    form = kv.Equation.mkdv().soliton_form
    u = form.profile(grid.x, 0.7, 40.0) + breather_profile(grid.x, 0.9, 0.3, centre=-40.0)
    assert float(np.sum(u**2) * grid.dx) == pytest.approx(4 * 0.7 + 8 * 0.9, rel=1e-9)
    share = sizing.radiation_share(u, grid.dx, form, [0.7], [(0.9, 0.3)])
    assert share < 1e-9
    assert sizing.radiation_speed(u, grid.length, 1.0, 1e-4, share) == 0.0
    # without the breather, its int u^2 counts as radiation
    assert sizing.radiation_share(u, grid.dx, form, [0.7]) == pytest.approx(7.2 / 10.0, rel=1e-9)
