"""Stubs of the compiled module kdvsweep._core (rust/python), checked by ``mypy.stubtest``."""

from typing import final

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "SCHEMES",
    "Simulation",
    "dealias_fraction",
    "fft_floor",
    "fixed_step_count",
    "interpolant_spectra",
    "invariants",
    "kdv_multisoliton",
    "locate_extrema",
    "mkdv_multisoliton",
    "simulation_memory",
]

SCHEMES: list[str]

@final
class Simulation:
    def __new__(
        cls,
        n: int,
        length: float,
        *,
        a: float,
        b: float,
        d: float,
        f: float,
        g: float,
        v: float,
        scheme: str,
        dt: float,
        tol: float,
        dealias: float | None = None,
        max_amplitude: float | None = None,
        time_limit: float | None = None,
    ) -> Simulation: ...
    def set_state(self, u: NDArray[np.float64], time: float) -> None: ...
    def advance(self, duration: float) -> None: ...
    def record(self, times: NDArray[np.float64]) -> NDArray[np.float64]: ...
    @property
    def time(self) -> float: ...
    @property
    def steps(self) -> int: ...
    @property
    def rejected(self) -> int: ...
    @property
    def time_limit(self) -> float | None: ...
    @property
    def bound(self) -> float: ...
    @property
    def state(self) -> NDArray[np.float64]: ...

def invariants(
    u: NDArray[np.float64],
    length: float,
    *,
    a: float,
    b: float,
    d: float,
    f: float,
    g: float,
    v: float,
    dealias: float | None = None,
) -> tuple[float, float, float]: ...
def dealias_fraction(
    *,
    a: float,
    b: float,
    d: float,
    f: float,
    g: float,
    v: float,
    dealias: float | None = None,
) -> float: ...
def kdv_multisoliton(
    x: NDArray[np.float64],
    t: float,
    kappas: NDArray[np.float64],
    x0s: NDArray[np.float64],
    a: float,
    d: float,
) -> NDArray[np.float64]: ...
def mkdv_multisoliton(
    x: NDArray[np.float64],
    t: float,
    kappas: NDArray[np.float64],
    x0s: NDArray[np.float64],
    signs: NDArray[np.float64],
    b: float,
    d: float,
) -> NDArray[np.float64]: ...
def fft_floor(n: int, forward: int, inverse: int, repeats: int) -> float: ...
def simulation_memory(n: int) -> int: ...
def fixed_step_count(start: float, times: NDArray[np.float64], dt: float) -> int: ...
def locate_extrema(
    frames: NDArray[np.float64],
    length: float,
    frame: NDArray[np.int64],
    index: NDArray[np.int64],
    sign: NDArray[np.int64],
    *,
    denoise: bool = True,
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.bool_]]: ...
def interpolant_spectra(
    frames: NDArray[np.float64], *, denoise: bool = True
) -> NDArray[np.complex128]: ...
