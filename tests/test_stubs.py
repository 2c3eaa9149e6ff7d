"""The stub python/kdvsweep/_core.pyi matches the compiled module (mypy's stubtest)."""

from __future__ import annotations

import subprocess
import sys

import pytest

pytest.importorskip("mypy.stubtest", reason="mypy is in the test extra: pip install '.[test]'")


def test_stub_matches_the_compiled_module() -> None:
    # stubtest imports kdvsweep._core and compares every name, signature, default and @final.
    result = subprocess.run(
        [sys.executable, "-m", "mypy.stubtest", "kdvsweep._core"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert result.returncode == 0, result.stdout + result.stderr
