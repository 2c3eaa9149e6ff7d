"""The machinery benchmark (``kdvsweep bench --scale``) at tiny sizes: its figures are consistent.

No timing is asserted (speed is the benchmark's job): counts match the sweep, the finished store
has files in its tables, times and memory are positive, and the per-run figures are the totals
divided by the runs (common practice, no source).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from kdvsweep.cli.bench import format_scale
from kdvsweep.exceptions import ConfigError
from kdvsweep.sweep.bench_sweep import ScaleBenchmark, measure_scale, scale_text


@pytest.fixture(scope="module")
def bench(tmp_path_factory: pytest.TempPathFactory) -> tuple[ScaleBenchmark, Path]:
    keep = tmp_path_factory.mktemp("scale")
    return measure_scale((20, 50), (50, 70), keep=keep), keep


def test_sizes_and_counts(bench: tuple[ScaleBenchmark, Path]) -> None:
    b, keep = bench
    assert [ld.runs for ld in b.loads] == [20, 50, 70]
    assert [r.runs for r in b.runs] == [20, 50]
    for r in b.runs:
        assert r.stored == r.runs
        assert r.failed == 0
        assert r.rows_read == r.runs
        assert r.files["runs"] >= 1
        assert r.files["solitons"] >= 1
        assert r.files["frames"] == 0  # no frames kept
        parts = list((keep / f"store-{r.runs}" / "runs").glob("*.parquet"))
        assert len(parts) == r.files["runs"]


def test_times_memory_and_per_run(bench: tuple[ScaleBenchmark, Path]) -> None:
    b, _ = bench
    for ld in b.loads:
        assert ld.seconds > 0
        assert ld.peak_rss >= ld.baseline_rss > 0
        assert ld.seconds_per_run == pytest.approx(ld.seconds / ld.runs)
        assert ld.bytes_per_run == pytest.approx(ld.memory / ld.runs)
    for r in b.runs:
        assert r.wall_seconds > 0
        assert r.cpu_seconds > 0
        assert r.load_seconds > 0
        assert r.read_seconds > 0
        assert 0 < r.client_rss <= r.read_rss  # the reads come after the sweep
        assert r.overhead_per_run == pytest.approx((r.wall_seconds - r.cpu_seconds) / r.runs)
        assert r.cpu_per_run == pytest.approx(r.cpu_seconds / r.runs)
        assert r.core_overhead_per_run == pytest.approx(
            (r.wall_seconds * r.workers - r.cpu_seconds) / r.runs
        )
        assert r.load_per_run == pytest.approx(r.load_seconds / r.runs)
        assert r.read_per_run == pytest.approx(r.read_seconds / r.runs)
    text = format_scale(b)
    assert all(f"{n:9d}" in text for n in (20, 50, 70))


def test_sweep_file_has_the_count(tmp_path: Path) -> None:
    from kdvsweep.sweep import load_sweep

    path = tmp_path / "scale.toml"
    path.write_text(scale_text(12), encoding="utf-8")
    assert len(load_sweep(path).runs) == 12


def test_refuses_bad_sizes(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match="positive run counts"):
        measure_scale((0,), (), keep=tmp_path)
    with pytest.raises(ConfigError, match="positive run counts"):
        measure_scale((), ())
