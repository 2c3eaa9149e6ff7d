"""``kdvsweep spectrum``: the command around ``kv.spectrum.bound_states`` (its physics is tested in
test_spectrum.py).

Profiles ``lam (lam + 1) sech^2 x`` carry the KdV solitons ``kappa = lam, lam - 1, ...`` with
amplitudes ``2 kappa^2`` (Pöschl & Teller 1933; Drazin & Johnson 1989, Ch. 4).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from kdvsweep import cli
from kdvsweep.model import Grid


def poschl_teller(grid: Grid, lam: float) -> np.ndarray:
    """``lam (lam + 1) sech^2 x`` on the grid."""
    return lam * (lam + 1.0) / np.cosh(grid.x) ** 2


def test_spectrum_of_a_npy_profile(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 6 sech^2 x: kappa = 2, 1, amplitudes 8, 2.
    grid = Grid(512, 40.0)
    path = tmp_path / "u0.npy"
    np.save(path, poschl_teller(grid, 2.0))
    assert cli.main(["spectrum", str(path), "--length", "40"]) == 0
    captured = capsys.readouterr()
    out = captured.out.splitlines()
    assert out[0].split()[:3] == ["kind", "soliton", "kappa"]
    rows = [line.split() for line in out[1:]]
    assert [float(r[2]) for r in rows] == pytest.approx([2.0, 1.0], abs=1e-8)
    assert [float(r[4]) for r in rows] == pytest.approx([8.0, 2.0], abs=1e-7)
    assert captured.err.startswith("kdvsweep spectrum: ")  # the method used, on stderr


def test_spectrum_errors_are_one_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "u0.npy"
    np.save(path, np.zeros(64))
    cases = [
        ([str(path)], "needs --length"),
        ([str(tmp_path / "missing.npy"), "--length", "10"], "no such file"),
        ([str(path), "--run", "1", "--length", "10"], "--run applies to sweep files"),
    ]
    for args, message in cases:
        assert cli.main(["spectrum", *args]) == 2
        err = capsys.readouterr().err
        assert len(err.strip().splitlines()) == 1
        assert err.startswith("kdvsweep: error: ")
        assert message in err
    np.save(path, np.zeros(63))
    assert cli.main(["spectrum", str(path), "--length", "10"]) == 2
    assert "even" in capsys.readouterr().err


SWEEP = """
[[vary]]
height = [2.0, 6.0]

[model]
equation = {equation}
points = 512
length = 40.0
dt = 1e-3

[initial]
kind = "sech2"
height = "height"
scale = 1.0

[run]
end = 1.0
frame_every = 0.5
"""


def test_spectrum_of_a_sweep_file(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # Heights 2 and 6 of sech^2 x are lam = 1 and 2: kappa = 1; and 2, 1.
    path = tmp_path / "wells.toml"
    path.write_text(SWEEP.format(equation='"kdv"'))
    assert cli.main(["spectrum", str(path)]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0].split()[:4] == ["run_id", "kind", "soliton", "kappa"]
    rows = [(int(r.split()[0]), float(r.split()[3])) for r in lines[1:]]
    assert rows == [(0, pytest.approx(1.0)), (1, pytest.approx(2.0)), (1, pytest.approx(1.0))]
    assert cli.main(["spectrum", str(path), "--run", "1"]) == 0
    assert len(capsys.readouterr().out.splitlines()) == 3
    assert cli.main(["spectrum", str(path), "--run", "7"]) == 2
    assert "no run 7" in capsys.readouterr().err
    assert cli.main(["spectrum", str(path), "--length", "40"]) == 2
    assert "a sweep sets them" in capsys.readouterr().err


def test_spectrum_of_a_damped_sweep_is_that_of_the_unperturbed_equation(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # Damping (g) acts on the solitons later; the content of the initial data is the same.
    path = tmp_path / "damped.toml"
    path.write_text(SWEEP.format(equation='{ preset = "kdv", g = 0.01 }'))
    assert cli.main(["spectrum", str(path), "--run", "1"]) == 0
    captured = capsys.readouterr()
    kappas = [float(r.split()[3]) for r in captured.out.splitlines()[1:]]
    assert kappas == pytest.approx([2.0, 1.0], abs=1e-6)
    assert "run 1: the perturbation terms (f, g, v) are left out" in captured.err
