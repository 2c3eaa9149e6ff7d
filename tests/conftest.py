"""Shared helpers for the test suite."""

from __future__ import annotations

import os
import threading
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any, TypeVar

# Dense eigen-solves on a shared 2-core machine run far faster single-threaded; set before numpy loads.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np

import kdvsweep as kv
from kdvsweep.sweep import Sweep, load_sweep
from kdvsweep.sweep.runner import execute
from kdvsweep.sweep.store import Store

T = TypeVar("T")


def periodic_soliton(
    grid: kv.Grid, t: float, kappa: float, x0: float, equation: str = "kdv", images: int = 2
) -> np.ndarray:
    """The exact one-soliton on the periodic grid: the sum of its images ``x0 + m L``.

    KdV ``2 k^2 sech^2(k(x - 4k^2 t - x0))`` (Korteweg & de Vries 1895; normalised form Ablowitz 2011,
    Eq. 1.5) or focusing mKdV ``2k sech(2k(x - 4k^2 t - x0))`` (Wadati 1973), evaluated with numpy
    directly, independently of the core's Hirota code.
    """
    centre = x0 + 4.0 * kappa**2 * t
    centre -= grid.length * np.round(centre / grid.length)
    total = np.zeros(grid.n)
    for m in range(-images, images + 1):
        xi = grid.x - centre - m * grid.length
        if equation == "kdv":
            total += 2 * kappa**2 / np.cosh(kappa * xi) ** 2
        else:
            total += 2 * kappa / np.cosh(2 * kappa * xi)
    return total


def pair_sweep_text(
    name: str,
    k2: list[float],
    bad: int | None = None,
    frame_every: float = 0.2,
    keep_stride: int | None = None,
) -> str:
    """A small sweep file of KdV pairs: kappa1 = 0.8 overtakes kappa2, sizes chosen automatically.

    Run ``bad`` gets dt = 2, with which ETDRK4 loses the solution, so a failed row travels the
    same way as the others (common practice, no source); the rest use dt = 0.01.
    """
    dts = [2.0 if i == bad else 0.01 for i in range(len(k2))]
    frames = "" if keep_stride is None else f"keep_frames = true\nkeep_stride = {keep_stride}\n"
    return f"""
[sweep]
name = "{name}"

[[vary]]
k2 = {k2!r}
dt = {dts!r}

[model]
equation = "kdv"
points = "auto"
length = "auto"
scheme = "etdrk4"
dt = "dt"

[initial]
kind = "solitons"
kappa = [0.8, "k2"]
position = "auto"

[run]
end = "auto"
frame_every = {frame_every}
{frames}"""


def pair_sweep(folder: Path, name: str, k2: list[float], **options: Any) -> Sweep:
    """The sweep of :func:`pair_sweep_text`, written to ``folder/<name>.toml`` and read: typed run
    specs for tests that feed a store hand-made results (``options`` go to pair_sweep_text)."""
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"{name}.toml"
    path.write_text(pair_sweep_text(name, k2, **options), encoding="utf-8")
    return load_sweep(path)


#: A small valid sweep file (a KdV pair over two kappas) that the loader tests edit.
SWEEP_TEXT = """\
[sweep]
name = "t"

[[vary]]
k2 = [0.4, 0.5]

[model]
equation = "kdv"
points = 512
length = 60.0
scheme = "etdrk4"
dt = 2.5e-3

[initial]
kind = "solitons"
kappa = [1.0, "k2"]
position = [-10.0, 10.0]

[run]
end = 10.0
frame_every = 0.5
"""


def edit(old: str, new: str, base: str = SWEEP_TEXT) -> str:
    """``base`` (default :data:`SWEEP_TEXT`) with ``old``, which must be there, replaced once."""
    assert old in base, old
    return base.replace(old, new, 1)


def ticks_during(call: Callable[[], T]) -> tuple[T, int, float]:
    """Run ``call`` while another Python thread counts millisecond ticks.

    Returns the call's result, the ticks counted and the call's wall time: with the GIL held
    through the call the counter could not advance at all.
    """
    ticks = 0
    stop = threading.Event()

    def count() -> None:
        nonlocal ticks
        while not stop.is_set():
            ticks += 1
            time.sleep(0.001)

    thread = threading.Thread(target=count)
    thread.start()
    start = time.perf_counter()
    try:
        result = call()
    finally:
        elapsed = time.perf_counter() - start
        stop.set()
        thread.join()
    return result, ticks, elapsed


def make_store(folder: Path, text: str, name: str = "sweep") -> Path:
    """Run a sweep file serially through the runner into a store (what the farm does)."""
    path = folder / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    sweep = load_sweep(path)
    out = folder / name
    with Store.open(out, sweep) as store:
        store.write([execute(spec) for spec in sweep.runs])
    return out
