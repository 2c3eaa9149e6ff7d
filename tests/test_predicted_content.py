"""Sweeps with `run.predict_content`: IST-predicted soliton content stored beside the measurements."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from kdvsweep.sweep import load_sweep
from kdvsweep.sweep.runner import RunResult, execute

PAIR = """
[model]
equation = "kdv"
points = 512
length = 80
scheme = "etdrk4"
dt = 2.5e-3

[initial]
kind = "solitons"
kappa = [1.0, 0.6]
position = [-25.0, -5.0]

[run]
end = 14.0
frame_every = 0.1
predict_content = true
"""

WELL = """
[model]
equation = "kdv"
points = 1024
length = 60
scheme = "etdrk4"
dt = 5e-4

[initial]
kind = "sech2"
height = 6.0
scale = 1.0

[run]
end = 0.5
frame_every = 0.1
predict_content = true
"""


def _run(tmp_path: Path, text: str) -> RunResult:
    path = tmp_path / "sweep.toml"
    path.write_text(text, encoding="utf-8")
    (spec,) = load_sweep(path).runs
    return execute(spec)


def test_separated_solitons_predict_their_own_kappas(tmp_path: Path) -> None:
    # The IST discrete spectrum of well separated one-solitons is their kappas (Gardner, Greene,
    # Kruskal & Miura 1967; the tails overlap at ~1e-9 here), matched to the measured solitons.
    result = _run(tmp_path, PAIR)
    assert result.run_row["status"] == "ok", result.run_row.get("reason")
    assert result.run_row["ist_count"] == 2
    by_kappa = sorted(result.soliton_rows, key=lambda r: -r["kappa"])
    np.testing.assert_allclose([r["kappa_ist"] for r in by_kappa], [1.0, 0.6], atol=1e-6)
    np.testing.assert_allclose([r["kappa_measured"] for r in by_kappa], [1.0, 0.6], atol=1e-6)


def test_poschl_teller_well_predicts_two_solitons(tmp_path: Path) -> None:
    # u0 = 6 sech^2 x = lam(lam + 1) sech^2 x with lam = 2: kappa = 2, 1 (Pöschl & Teller 1933).
    result = _run(tmp_path, WELL)
    assert result.run_row["status"] == "ok", result.run_row.get("reason")
    assert result.run_row["ist_count"] == 2
    assert result.run_row["ist_status"] == "ok"
    assert result.run_row["ist_kappas"] == pytest.approx([2.0, 1.0], abs=1e-8)


def test_content_is_off_unless_asked(tmp_path: Path) -> None:
    result = _run(tmp_path, PAIR.replace("predict_content = true", ""))
    assert "ist_count" not in result.run_row
    assert all("kappa_ist" not in r for r in result.soliton_rows)
