"""Figures: files are written, and what is drawn matches what was analysed.

Records are exact Hirota 2-solitons (kv.exact.multisoliton; Hirota 1971) on a domain wide enough
that the solitons stay clear of the boundary, so no stepping is needed.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest

import kdvsweep as kv
from kdvsweep import plots
from kdvsweep.analysis import analyse_run
from kdvsweep.exceptions import ConfigError
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
                        "shift_uncertainty": 1e-7,
                    }
                )
    return pd.DataFrame(rows)


def test_shift_comparison_one_series_per_group() -> None:
    fig = plots.shift_comparison(_sweep_table(), ["equation"])
    ax, low = fig.axes[:2]
    assert len(ax.containers) == 4  # 2 equations (colour) x 2 solitons (marker)
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert labels == ["measured = predicted", "kdv", "mkdv", "soliton 0", "soliton 1"]
    # The identity line spans the data.
    x, y = ax.get_lines()[0].get_data()
    np.testing.assert_array_equal(x, y)
    # The lower panel shows the relative errors put in: 1e-7 (soliton 0) and 2e-7 (soliton 1).
    y = np.concatenate([line.get_ydata() for line in low.get_lines()])
    assert y.size == 12
    np.testing.assert_allclose(np.sort(y)[[0, -1]], [1e-7, 2e-7], rtol=1e-6)


def test_relative_error_series_and_values() -> None:
    table = _sweep_table()
    fig = plots.relative_error(table, "k2", ["equation"])
    ax = fig.axes[0]
    assert len(ax.get_lines()) == 4  # 2 equations x 2 solitons
    y = np.concatenate([line.get_ydata() for line in ax.get_lines()])
    np.testing.assert_allclose(np.sort(np.unique(np.round(y, 12))), [1e-7, 2e-7], rtol=1e-6)
    with pytest.raises(ConfigError, match="no column 'kappa2'"):
        plots.relative_error(table, "kappa2")


# --- the command, on a store written through the store's own writer ------------------------------


@dataclass(frozen=True)
class _Spec:
    run_id: int
    params: dict[str, Any]
    model: dict[str, Any] = field(
        default_factory=lambda: {
            "equation": {"name": "kdv", "a": 6.0},
            "n": 512,
            "length": 80.0,
            "scheme": "etdrk4",
            "dt": 2.5e-3,
            "tol": None,
        }
    )
    initial: dict[str, Any] = field(default_factory=dict)
    run: dict[str, Any] = field(default_factory=lambda: {"t_end": 16.0})


@dataclass(frozen=True)
class _Sweep:
    text: str
    runs: tuple[_Spec, ...]
    name: str = "plots-test"
    path: Path = Path("plots-test.toml")
    parameters: tuple[str, ...] = ("k2",)

    @property
    def digest(self) -> str:
        return hashlib.sha256(self.text.encode()).hexdigest()


def test_plot_command_on_a_store(tmp_path: Path) -> None:
    from kdvsweep.sweep.runner import RunResult, base_row
    from kdvsweep.sweep.store import Store

    specs = tuple(_Spec(i, {"k2": k2}) for i, k2 in enumerate((0.4, 0.5, 0.6, 0.7)))
    sweep = _Sweep("k2 = [0.4, 0.5, 0.6, 0.7]", specs)
    results = []
    for spec in specs:
        frames, times, grid, kappas = exact_record(spec.params["k2"])
        table = analyse_run(frames, times, grid, "kdv", kappas=kappas).table
        rows = [{"run_id": spec.run_id, **r} for r in table.to_dict("records")]
        row = base_row(spec)
        row["frames_stored"] = len(times)
        results.append(RunResult(row, rows, frames, times))
    out = tmp_path / "store"
    with Store.open(out, sweep) as store:
        store.write(results)
    figures = tmp_path / "figures"
    assert plots.main([str(out), "--into", str(figures), "--run", "2"]) == 0
    names = sorted(p.name for p in figures.iterdir())
    assert names == [
        "relative_error_k2.pdf",
        "relative_error_k2.png",
        "shift_comparison.pdf",
        "shift_comparison.png",
        "spacetime_run2.pdf",
        "spacetime_run2.png",
    ]
    assert all((figures / name).stat().st_size > 1000 for name in names)
    # A store that does not exist is an error message and exit status 2, not a traceback.
    assert plots.main([str(tmp_path / "nothing")]) == 2
