"""Stubs of the compiled module kdvsweep._core (rust/python)."""

import numpy as np
from numpy.typing import NDArray

SCHEMES: list[str]

class Simulation:
    def __init__(
        self,
        n: int,
        length: float,
        coefficients: tuple[float, float, float, float, float, float],
        dealias: float,
        scheme: str,
        dt: float,
        tol: float,
        max_amplitude: float | None = None,
    ) -> None: ...
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
    def bound(self) -> float: ...
    @property
    def state(self) -> NDArray[np.float64]: ...

def invariants(
    u: NDArray[np.float64],
    length: float,
    coefficients: tuple[float, float, float, float, float, float],
) -> tuple[float, float, float]: ...
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
