"""The periodic grid and the equation of the KdV family.

The model is ``u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = -g u + v u_xx`` on ``[-L/2, L/2)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .exceptions import ConfigError

MIN_POINTS = 16


@dataclass(frozen=True)
class Grid:
    """A periodic grid of ``n`` points (even, at least 16) on ``[-length/2, length/2)``."""

    n: int
    length: float

    def __post_init__(self) -> None:
        if isinstance(self.n, bool) or not isinstance(self.n, int | np.integer):
            raise ConfigError(f"Grid: n must be an integer, got {self.n!r}")
        if self.n < MIN_POINTS or self.n % 2:
            raise ConfigError(f"Grid: n must be even and at least {MIN_POINTS}, got {self.n}")
        if not (isinstance(self.length, int | float) and math.isfinite(self.length)):
            raise ConfigError(f"Grid: length must be a finite number, got {self.length!r}")
        if self.length <= 0:
            raise ConfigError(f"Grid: length must be positive, got {self.length}")
        object.__setattr__(self, "n", int(self.n))
        object.__setattr__(self, "length", float(self.length))

    @property
    def dx(self) -> float:
        """Grid spacing."""
        return self.length / self.n

    @property
    def x(self) -> np.ndarray:
        """Grid points ``-L/2 + j dx``, ``j = 0..n-1``."""
        return -0.5 * self.length + self.dx * np.arange(self.n)

    @property
    def k(self) -> np.ndarray:
        """Wavenumbers of the real-to-complex spectrum, ``2 pi j / L`` for ``j = 0..n/2``."""
        return 2.0 * np.pi / self.length * np.arange(self.n // 2 + 1)


_PRESETS: dict[str, dict[str, float]] = {
    "kdv": {"a": 6.0},
    "kdv-": {"a": -6.0},
    "mkdv": {"b": 6.0},
    "mkdv-": {"b": -6.0},
}


@dataclass(frozen=True)
class Equation:
    """Coefficients of ``u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = -g u + v u_xx``.

    ``dealias`` is the fraction of the Nyquist band kept in the nonlinear term: ``None`` picks the
    alias-free fraction ``2/(p+1)`` for the highest power ``p`` of the flux (2/3 quadratic, 1/2 cubic,
    1 for a linear equation).
    """

    a: float = 0.0
    b: float = 0.0
    d: float = 1.0
    f: float = 0.0
    g: float = 0.0
    v: float = 0.0
    dealias: float | None = None
    name: str = field(default="custom", compare=False)

    def __post_init__(self) -> None:
        for key in ("a", "b", "d", "f", "g", "v"):
            value = getattr(self, key)
            if isinstance(value, bool) or not isinstance(value, int | float | np.floating):
                raise ConfigError(f"Equation: {key} must be a number, got {value!r}")
            if not math.isfinite(value):
                raise ConfigError(f"Equation: {key} must be finite, got {value}")
            object.__setattr__(self, key, float(value))
        if self.v < 0:
            raise ConfigError(
                f"Equation: v (viscosity) must be >= 0 (ill-posed otherwise), got {self.v}"
            )
        if self.dealias is not None and not (0.0 < float(self.dealias) <= 1.0):
            raise ConfigError(f"Equation: dealias must be in (0, 1], got {self.dealias}")

    @classmethod
    def kdv(cls, sign: int = 1, **perturbation: float) -> Equation:
        """KdV ``u_t + 6 u u_x + u_xxx = 0``; ``sign=-1`` gives the Schrödinger-sign form (a = -6)."""
        return cls.preset("kdv" if sign > 0 else "kdv-", **perturbation)

    @classmethod
    def mkdv(cls, sign: int = 1, **perturbation: float) -> Equation:
        """Focusing mKdV ``u_t + 6 u^2 u_x + u_xxx = 0``; ``sign=-1`` gives the defocusing one."""
        return cls.preset("mkdv" if sign > 0 else "mkdv-", **perturbation)

    @classmethod
    def gardner(cls, a: float = 6.0, b: float = 6.0, **perturbation: float) -> Equation:
        """Gardner ``u_t + (a u + b u^2) u_x + u_xxx = 0``."""
        return cls(a=a, b=b, name="gardner", **perturbation)

    @classmethod
    def preset(cls, name: str, **overrides: float) -> Equation:
        """One of ``kdv``, ``kdv-``, ``mkdv``, ``mkdv-``, ``gardner``, with optional overrides."""
        if name == "gardner":
            return cls.gardner(**overrides)
        if name not in _PRESETS:
            valid = ", ".join([*_PRESETS, "gardner"])
            raise ConfigError(f"Equation: unknown preset {name!r}; expected one of {valid}")
        return cls(**{**_PRESETS[name], **overrides}, name=name)

    @property
    def family(self) -> str:
        """``"kdv"`` (quadratic flux only), ``"mkdv"`` (cubic only), ``"gardner"`` or ``"linear"``."""
        if self.a != 0 and self.b != 0:
            return "gardner"
        if self.a != 0:
            return "kdv"
        if self.b != 0:
            return "mkdv"
        return "linear"

    @property
    def dealias_fraction(self) -> float:
        """The fraction of the Nyquist band kept in the nonlinear term."""
        if self.dealias is not None:
            return float(self.dealias)
        if self.b != 0:
            return 0.5
        if self.a != 0:
            return 2.0 / 3.0
        return 1.0

    @property
    def coefficients(self) -> tuple[float, float, float, float, float, float]:
        """``(a, b, d, f, g, v)``."""
        return (self.a, self.b, self.d, self.f, self.g, self.v)


__all__ = ["Equation", "Grid"]
