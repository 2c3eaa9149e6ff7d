"""The ``kdvsweep`` command: resume after SIGKILL, refusals, status and table, help and README.

Sweeps run in a subprocess (``python -m kdvsweep.cli``), as a user would start them, in a new
process group so that a SIGKILL reaches the client and its worker processes together.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from conftest import pair_sweep_text

from kdvsweep import cli
from kdvsweep.cli.readme import command_table, options, subcommand_parsers
from kdvsweep.results import Results, load
from kdvsweep.sweep.config import load_sweep
from kdvsweep.sweep.runner import TIMING_COLUMNS

K2 = [round(0.40 + 0.02 * i, 2) for i in range(8)]
BAD = 3  # dt = 2 on this run: stored as failed


def sweep_text(k2: list[float] = K2, name: str = "cli-test") -> str:
    return pair_sweep_text(name, k2, bad=BAD, keep_stride=10)


def kdvsweep(*args: str, **kw: object) -> subprocess.Popen[str]:
    """Start the command in its own process group."""
    return subprocess.Popen(
        [sys.executable, "-m", "kdvsweep.cli", *args],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,
        **kw,  # type: ignore[arg-type]
    )


def finish(proc: subprocess.Popen[str], timeout: float = 240) -> tuple[int, str, str]:
    out, err = proc.communicate(timeout=timeout)
    return proc.returncode, out, err


def snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    return {
        str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_mtime_ns)
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


def assert_same_tables(a: Results, b: Results) -> None:
    pd.testing.assert_frame_equal(
        a.runs.drop(columns=list(TIMING_COLUMNS)),
        b.runs.drop(columns=list(TIMING_COLUMNS)),
        check_exact=True,
    )
    pd.testing.assert_frame_equal(a.solitons, b.solitons, check_exact=True)
    for rid in a.runs.loc[a.runs["status"] == "ok", "run_id"]:
        np.testing.assert_array_equal(a.frames(rid).u, b.frames(rid).u)


@pytest.fixture(scope="module")
def sweep_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("sweep") / "cli.toml"
    path.write_text(sweep_text())
    return path


@pytest.fixture(scope="module")
def reference(sweep_file: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """An uninterrupted run, through the command."""
    out = tmp_path_factory.mktemp("ref") / "store"
    code, _, err = finish(kdvsweep("run", str(sweep_file), "--out", str(out), "--workers", "2"))
    assert code == 0, err
    assert f"{len(K2)} runs stored now (1 failed)" in err
    return out


def test_resume_after_sigkill(sweep_file: Path, reference: Path, tmp_path: Path) -> None:
    out = tmp_path / "store"
    args = ("run", str(sweep_file), "--out", str(out), "--workers", "1", "--chunk-seconds", "0.05")
    proc = kdvsweep(*args)
    deadline = time.monotonic() + 180
    while time.monotonic() < deadline and proc.poll() is None:
        if len(list((out / "runs").glob("part-*.parquet")) if (out / "runs").is_dir() else []) >= 2:
            break
        time.sleep(0.01)
    assert proc.poll() is None, "the sweep ended before it could be killed"
    os.killpg(proc.pid, signal.SIGKILL)  # the client and its workers, like a crash
    proc.communicate()
    for _ in range(500):  # wait until no process of the group is left
        try:
            os.killpg(proc.pid, 0)
        except ProcessLookupError:
            break
        time.sleep(0.02)

    partial = load(out)
    assert 2 <= len(partial.runs) < len(K2)
    assert partial.counts()["pending"] == len(K2) - len(partial.runs)
    stored_before = set(partial.runs["run_id"])

    code, _, err = finish(kdvsweep(*args))
    assert code == 0, err
    assert f"{len(stored_before)} were already stored" in err
    resumed = load(out)
    assert list(resumed.runs["run_id"]) == list(range(len(K2)))  # each run exactly once
    assert not resumed.solitons.duplicated(["run_id", "soliton"]).any()
    assert_same_tables(load(reference), resumed)


def test_other_sweep_is_refused_and_store_untouched(reference: Path, tmp_path: Path) -> None:
    other = tmp_path / "other.toml"
    other.write_text(sweep_text([*K2[:-1], 0.55]))
    before = snapshot(reference)
    code, _, err = finish(kdvsweep("run", str(other), "--out", str(reference)))
    assert code == 2
    last = err.strip().splitlines()[-1]  # lines before it are the sweep file's warnings
    assert last.startswith("kdvsweep: error: ")
    assert "holds the results of sweep 'cli-test'" in last
    assert snapshot(reference) == before


def test_folder_that_is_not_a_store_is_refused(
    sweep_file: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    (tmp_path / "thesis.tex").write_text("precious")
    assert cli.main(["run", str(sweep_file), "--out", str(tmp_path)]) == 2
    assert "is not a kdvsweep store" in capsys.readouterr().err
    assert [p.name for p in tmp_path.iterdir()] == ["thesis.tex"]


def test_bad_sweep_file_writes_nothing(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    bad = tmp_path / "bad.toml"
    bad.write_text(sweep_text().replace('scheme = "etdrk4"', 'scheme = "euler"'))
    assert cli.main(["run", str(bad), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("kdvsweep: error: ")
    assert "model.scheme" in err
    assert len(err.strip().splitlines()) == 1
    assert not (tmp_path / "out").exists()


def test_status_and_table(reference: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["status", str(reference)]) == 0
    text = capsys.readouterr().out
    assert f"done    {len(K2) - 1}\n" in text
    assert "failed  1\n" in text
    assert "pending 0\n" in text
    assert "failures by kind:" in text
    assert "     1  drift" in text  # dt = 2 loses the solution; the drift limit catches it
    assert "DriftError" in text
    assert cli.main(["table", str(reference)]) == 0
    text = capsys.readouterr().out
    assert "shift_measured" in text
    assert "shift_predicted" in text
    assert f"{len(K2) - 1} ok, 1 failed, 0 pending of {len(K2)} runs" in text
    assert cli.main(["table", str(reference), "--runs"]) == 0
    assert "momentum_drift" in capsys.readouterr().out


def test_status_of_a_folder_that_is_not_a_store(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    assert cli.main(["status", str(tmp_path)]) == 2
    assert "not a kdvsweep store" in capsys.readouterr().err


def readme_command_table() -> str:
    """The table under the README's "Command line" heading, as written."""
    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    section = text.split("\n## Command line\n", 1)[1].splitlines()
    first = next(i for i, line in enumerate(section) if line.startswith("|"))
    block = []
    for line in section[first:]:
        if not line.startswith("|"):
            break
        block.append(line)
    return "\n".join(block)


def test_readme_command_table_is_the_parsers_table() -> None:
    # Regenerate with `python -m kdvsweep.cli.readme` when a command or option changes.
    assert readme_command_table() == command_table()


def test_readme_table_names_every_option_of_every_command() -> None:
    # The check above compares text; this one says which option is missing, should they differ.
    table = readme_command_table()
    rows = {line.split("`")[1].split()[1]: line for line in table.splitlines()[2:]}
    parsers = subcommand_parsers()
    assert set(rows) == set(parsers)
    for name, parser in parsers.items():
        missing = [opt for opt in sorted(options(parser)) if f"{opt} " not in rows[name]]
        missing = [opt for opt in missing if f"{opt}]" not in rows[name]]
        assert not missing, f"README row of {name} lacks {missing}"
    # The options the issue found missing are there.
    for command, option in (
        ("plot", "--into"),
        ("plot", "--formats"),
        ("run", "--chunk-seconds"),
        ("spectrum", "--tol"),
        ("spectrum", "--length"),
    ):
        assert option in options(parsers[command])
        assert option in rows[command]


@pytest.mark.parametrize("command", ["run", "demo", "table", "status", "plot", "spectrum", "bench"])
def test_help_of_each_command_calls_it_by_its_name(
    command: str, capsys: pytest.CaptureFixture[str]
) -> None:
    with pytest.raises(SystemExit) as stop:
        cli.main([command, "--help"])
    assert stop.value.code == 0
    assert capsys.readouterr().out.startswith(f"usage: kdvsweep {command} ")


def test_bench_refuses_the_other_modes_options(capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["bench", "--runs", "4"]) == 2
    assert capsys.readouterr().err.strip() == (
        "kdvsweep bench: error: --runs applies to the farm benchmark (--sweep) only"
    )
    assert cli.main(["bench", "--sweep", "--schemes", "etdrk4"]) == 2
    assert "--schemes applies to the stepper benchmark only" in capsys.readouterr().err


def test_python_m_kdvsweep_cli_is_the_command() -> None:
    code, out, _ = finish(kdvsweep("--help"), timeout=60)
    assert code == 0
    assert out.startswith("usage: kdvsweep ")
    for command in ("run", "demo", "table", "status", "plot", "spectrum", "bench"):
        assert command in out


def test_demo_file_is_found_and_valid() -> None:
    sweep = load_sweep(cli.demo_file())
    assert sweep.name == "demo"
    assert len(sweep.runs) >= 24  # "a few dozen" pair collisions
