"""The periodic grid and the equation of the KdV family.

The model is ``u_t + (a u + b u^2) u_x + d u_xxx + f u_xxxxx = -g u + v u_xx`` on ``[-L/2, L/2)``.
"""

from __future__ import annotations

import functools
import math
import sys
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, TypedDict

import numpy as np
from numpy.typing import ArrayLike

from .exceptions import ConfigError

MIN_POINTS = 16

#: The coefficients of the model, in the order of its terms, with what each multiplies.
COEFFICIENT_MEANINGS: dict[str, str] = {
    "a": "quadratic flux, a u u_x",
    "b": "cubic flux, b u^2 u_x",
    "d": "third-order dispersion, d u_xxx",
    "f": "fifth-order dispersion, f u_xxxxx",
    "g": "linear damping, -g u on the right",
    "v": "viscosity, v u_xx on the right",
}
COEFFICIENTS = tuple(COEFFICIENT_MEANINGS)


class CoreFields(TypedDict):
    """The equation as the Rust core takes it: named coefficients and the dealiasing override."""

    a: float
    b: float
    d: float
    f: float
    g: float
    v: float
    dealias: float | None


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
        if isinstance(self.length, bool) or not (
            isinstance(self.length, int | float | np.integer | np.floating)
            and math.isfinite(self.length)
        ):
            raise ConfigError(f"Grid: length must be a finite number, got {self.length!r}")
        if self.length <= 0:
            raise ConfigError(f"Grid: length must be positive, got {self.length}")
        if not (self.length / self.n > 0 and math.isfinite(math.pi * self.n / self.length)):
            raise ConfigError(
                f"Grid: length {float(self.length):.3g} over n = {self.n} points is too small for "
                "float64 (the largest wavenumber pi n / length must be finite)"
            )
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
        for key in COEFFICIENTS:
            value = getattr(self, key)
            if isinstance(value, bool) or not isinstance(value, int | float | np.floating):
                raise ConfigError(f"Equation: {key} must be a number, got {value!r}")
            if not math.isfinite(value):
                raise ConfigError(f"Equation: {key} must be finite, got {value}")
            if 0 < abs(float(value)) < sys.float_info.min:
                raise ConfigError(
                    f"Equation: {key} must be 0 or at least {sys.float_info.min:.3g} in magnitude "
                    f"(a subnormal number has lost its precision), got {value:.3g}"
                )
            object.__setattr__(self, key, float(value))
        if self.v < 0:
            raise ConfigError(
                f"Equation: v (viscosity) must be >= 0 (ill-posed otherwise), got {self.v}"
            )
        if self.dealias is not None and (
            isinstance(self.dealias, bool)
            or not isinstance(self.dealias, int | float | np.integer | np.floating)
            or not (0.0 < float(self.dealias) <= 1.0)
        ):
            raise ConfigError(f"Equation: dealias must be in (0, 1], got {self.dealias!r}")

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

    @classmethod
    def coerce(cls, equation: str | Equation, who: str = "equation") -> Equation:
        """``equation`` itself, or the preset it names; ConfigError (prefixed ``who``) otherwise."""
        if isinstance(equation, Equation):
            return equation
        if isinstance(equation, str):
            try:
                return cls.preset(equation)
            except ConfigError as err:
                raise ConfigError(f"{who}: {err}") from None
        raise ConfigError(
            f"{who}: equation must be a preset name or a kdvsweep.Equation, got {equation!r}"
        )

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
    def perturbed(self) -> bool:
        """True when a term beyond the integrable flux and ``u_xxx`` is on (``f``, ``g`` or ``v``)."""
        return self.f != 0.0 or self.g != 0.0 or self.v != 0.0

    @property
    def conservative(self) -> bool:
        """True without damping or viscosity (``g = v = 0``): mass, momentum and energy are kept."""
        return self.g == 0.0 and self.v == 0.0

    @property
    def integrable(self) -> bool:
        """True for unperturbed KdV, focusing mKdV or Gardner with ``d != 0``: the equations whose
        solitons and pairwise phase shifts kdvsweep computes."""
        return not self.perturbed and self.soliton_form_or_none() is not None

    def soliton_form_or_none(self) -> SolitonForm | None:
        """:attr:`soliton_form`, or ``None`` when this equation has no soliton formula here."""
        if self.d == 0:
            return None
        if self.b == 0 and self.a != 0:
            return SolitonForm("kdv", 6.0 * self.d / self.a, self.d)
        if self.a == 0 and self.b * self.d > 0:
            return SolitonForm("mkdv", math.sqrt(6.0 * self.d / self.b), self.d)
        if self.a != 0 and self.b != 0:
            return SolitonForm(
                "gardner", 6.0 * self.d / self.a, self.d, 6.0 * self.b * self.d / self.a**2
            )
        return None

    @property
    def soliton_form(self) -> SolitonForm:
        """The one-soliton family of this equation, for its amplitude/speed/width conversions.

        Raises :class:`ConfigError` unless the flux is KdV (``a != 0, b = 0``), focusing mKdV
        (``a = 0, b d > 0``) or Gardner (``a != 0, b != 0``) with ``d != 0``. Perturbations
        ``f, g, v`` are allowed: the solitons of the unperturbed equation are then initial data and
        first estimates.
        """
        form = self.soliton_form_or_none()
        if form is None:
            raise ConfigError(
                f"equation {self.name!r} ({self.describe()}) has no soliton formula here; "
                "expected KdV (a != 0, b = 0), focusing mKdV (a = 0, b d > 0) or Gardner "
                "(a != 0, b != 0), with d != 0"
            )
        return form

    @functools.cached_property
    def dealias_fraction(self) -> float:
        """The fraction of the Nyquist band kept in the nonlinear term (the core's own rule)."""
        from . import _core

        return float(_core.dealias_fraction(**self.core_fields()))

    @property
    def coefficients(self) -> tuple[float, float, float, float, float, float]:
        """``(a, b, d, f, g, v)``."""
        return (self.a, self.b, self.d, self.f, self.g, self.v)

    def core_fields(self) -> CoreFields:
        """The named fields the Rust core takes: ``a, b, d, f, g, v`` and ``dealias`` (or None)."""
        dealias = None if self.dealias is None else float(self.dealias)
        return {
            "a": self.a,
            "b": self.b,
            "d": self.d,
            "f": self.f,
            "g": self.g,
            "v": self.v,
            "dealias": dealias,
        }

    def columns(self) -> dict[str, float | str]:
        """The equation as columns of the runs table: ``equation`` (the preset name, or ``"custom"``),
        ``eq_a .. eq_v`` and ``dealias`` (the fraction actually used)."""
        out: dict[str, float | str] = {"equation": self.name}
        out.update({f"eq_{key}": getattr(self, key) for key in COEFFICIENTS})
        out["dealias"] = self.dealias_fraction
        return out

    @classmethod
    def from_columns(cls, row: Mapping[str, Any]) -> Equation:
        """The equation stored in a row of the runs table (the inverse of :meth:`columns`).

        Raises :class:`ConfigError` naming the missing column for stores written without them.
        """
        missing = [f"eq_{key}" for key in COEFFICIENTS if f"eq_{key}" not in row]
        if missing:
            raise ConfigError(
                f"the runs table has no column {missing[0]}: the equation of this run is not stored "
                "(a store written by kdvsweep before 0.2; run the sweep again into a new folder)"
            )
        coefs = {key: float(row[f"eq_{key}"]) for key in COEFFICIENTS}
        dealias = row.get("dealias")
        name = row.get("equation")
        return cls(
            **coefs,
            dealias=None
            if dealias is None or not math.isfinite(float(dealias))
            else float(dealias),
            name=str(name) if isinstance(name, str) and name else "custom",
        )

    def describe(self) -> str:
        """A short formula of the non-zero terms, e.g. ``u_t + 6 u u_x + u_xxx = -0.001 u``."""

        def term(coef: float, body: str, first: bool) -> str:
            mag = abs(coef)
            num = "" if mag == 1.0 and body else f"{mag:.4g} "
            if first:
                return ("-" if coef < 0 else "") + num + body
            return (" - " if coef < 0 else " + ") + num + body

        left = "u_t"
        for coef, body in (
            (self.a, "u u_x"),
            (self.b, "u^2 u_x"),
            (self.d, "u_xxx"),
            (self.f, "u_xxxxx"),
        ):
            if coef != 0:
                left += term(coef, body, False)
        right = ""
        for coef, body in ((-self.g, "u"), (self.v, "u_xx")):
            if coef != 0:
                right += term(coef, body, not right)
        return f"{left} = {right or '0'}"


@dataclass(frozen=True)
class SolitonForm:
    """The one-soliton family of an equation, by its exact scaling onto a canonical form.

    Canonical forms: KdV ``u_t + 6 u u_x + u_xxx = 0`` has ``2 kappa^2 sech^2(kappa (x - 4 kappa^2 t
    - x0))`` (Korteweg & de Vries 1895; normalised as in Ablowitz 2011, Sec. 1.1); focusing mKdV
    ``u_t + 6 u^2 u_x + u_xxx = 0`` has ``2 kappa sech(2 kappa (x - 4 kappa^2 t - x0))`` (Wadati
    1973), with ``kappa`` the eigenvalue parameter of the inverse scattering transform. A general
    ``a`` (or ``b``) and ``d`` is reached by ``u = alpha w(x, d t)`` with ``alpha = 6 d / a`` (KdV) or
    ``sqrt(6 d / b)`` (mKdV), so the speed is ``4 d kappa^2`` and the height ``|alpha|`` times the
    canonical one.

    Gardner ``u_t + (a u + b u^2) u_x + d u_xxx = 0`` is, with the same ``alpha = 6 d / a``, the
    canonical ``w_t + 6 (w + mu w^2) w_x + w_xxx = 0`` with ``mu = 6 b d / a^2``. Its solitary
    waves, derived in :meth:`profile`, are ``w = 4 kappa^2 / (1 + s r cosh(2 kappa (x - 4 kappa^2 t
    - x0)))`` with ``r = sqrt(1 + 4 mu kappa^2)``: ``s = +1`` is the KdV-like branch (the sign of
    ``alpha``), which for ``mu < 0`` exists up to the table-top limit ``kappa < 1/(2 sqrt(-mu))``
    (height ``|alpha| / |mu| = |a / b|``), and ``s = -1`` is the opposite polarity, which exists
    for ``mu > 0`` only, with height above ``2 |alpha| / mu = |2 a / b|``. This form is published
    e.g. in Grimshaw, Pelinovsky & Talipova 1997 (Nonlinear Processes Geophys. 4, 237) and
    Slyunyaev & Pelinovsky 1999 (JETP 89, 173) (both from memory, in other normalisations).
    ``kappa`` keeps its meaning: the speed is ``4 d kappa^2`` and the tail decays like
    ``e^{-2 kappa |x|}`` in every family.
    """

    family: str  # "kdv", "mkdv" or "gardner"
    alpha: float  # u = alpha w, w canonical
    d: float  # t' = d t
    mu: float = 0.0  # Gardner: the canonical cubic coefficient over 6, 6 b d / a^2

    @property
    def sign(self) -> int:
        """Sign of a KdV soliton (+1 elevation, -1 depression), of Gardner's KdV-like branch; +1
        for mKdV (polarity is free)."""
        return 1 if self.alpha > 0 else -1

    @property
    def polarities(self) -> tuple[int, ...]:
        """``(sign,)`` for KdV and a Gardner equation with ``mu < 0``; both for mKdV and for a
        Gardner equation with ``mu > 0``."""
        if self.family == "mkdv":
            return (1, -1)
        if self.family == "gardner" and self.mu > 0:
            return (self.sign, -self.sign)
        return (self.sign,)

    @property
    def max_kappa(self) -> float:
        """The largest kappa of a solitary wave: the table-top limit ``1/(2 sqrt(-mu))`` of a
        Gardner equation with ``mu < 0``, else infinite."""
        if self.family == "gardner" and self.mu < 0:
            return 0.5 / math.sqrt(-self.mu)
        return math.inf

    def _branch(self, sign: int | None) -> int:
        """``s``: +1 for the KdV-like polarity ``self.sign``, -1 for the other one."""
        if sign is None or self.family != "gardner":
            return 1
        if sign not in (1, -1):
            raise ConfigError(f"solitons: sign must be +1 or -1, got {sign!r}")
        s = 1 if sign == self.sign else -1
        if s < 0 and self.mu <= 0:
            raise ConfigError(
                f"solitons: this Gardner equation has no solitary wave of sign {sign:+d}; only "
                f"{self.sign:+d} (both polarities need b d > 0)"
            )
        return s

    def _gardner_r(self, k: np.ndarray) -> np.ndarray:
        """``r = sqrt(1 + 4 mu kappa^2)`` (NaN beyond the table-top limit)."""
        arg = 1.0 + 4.0 * self.mu * k**2
        return np.sqrt(np.where(arg > 0, arg, np.nan))

    def amplitude(self, kappa: ArrayLike, sign: int | None = None) -> Any:
        """Peak ``|u|``: ``|alpha| 2 kappa^2`` (KdV), ``|alpha| 2 kappa`` (mKdV), ``|alpha| 4
        kappa^2 / |1 + s r|`` (Gardner, polarity ``sign``; NaN beyond the table-top limit)."""
        k = np.asarray(kappa, dtype=np.float64)
        if self.family == "gardner":
            s = self._branch(sign)
            out = abs(self.alpha) * 4.0 * k**2 / np.abs(1.0 + s * self._gardner_r(k))
        else:
            out = abs(self.alpha) * (2.0 * k**2 if self.family == "kdv" else 2.0 * k)
        return float(out) if out.ndim == 0 else out

    def per_soliton(
        self, value: Callable[[np.ndarray, int], Any], kappas: np.ndarray, signs: np.ndarray
    ) -> np.ndarray:
        """``value(kappa, sign)`` (a method of this form that takes a polarity: amplitude, width)
        of every soliton of every run: ``kappas`` and ``signs`` are tables of runs by solitons;
        asked once per soliton and polarity."""
        out = np.empty(kappas.shape, dtype=np.float64)
        for j in range(kappas.shape[1]):
            column = signs[:, j]
            if len(column) and bool(np.all(column == column[0])):  # one polarity: one call
                out[:, j] = value(kappas[:, j], int(column[0]))
                continue
            for s in np.unique(column).tolist():
                sel = column == s
                out[sel, j] = value(kappas[sel, j], int(s))
        return out

    def speed(self, kappa: ArrayLike) -> Any:
        """``4 d kappa^2`` in every family."""
        k = np.asarray(kappa, dtype=np.float64)
        out = 4.0 * self.d * k**2
        return float(out) if out.ndim == 0 else out

    def width(self, kappa: ArrayLike, sign: int | None = None) -> Any:
        """The length scale that sets the resolution: ``1/kappa`` (KdV), ``1/(2 kappa)`` (mKdV).

        It is ``2/pi`` times the distance from the real axis to the profile's nearest complex
        singularity, which sets the decay ``e^{-pi k w / 2}`` of its spectrum (see the resolution
        rule in the README). For Gardner (``1/(p + q cosh(2 kappa x))``) the singularity is where
        ``cosh = -1/(s r)``: ``w = arccos(clip(-s/r, -1, 1)) / (pi kappa)``, which joins the KdV
        value at ``mu = 0`` and the mKdV one as ``mu -> inf``.
        """
        k = np.asarray(kappa, dtype=np.float64)
        if self.family == "kdv":
            out = 1.0 / k
        elif self.family == "mkdv":
            out = 0.5 / k
        else:
            s = self._branch(sign)
            out = np.arccos(np.clip(-s / self._gardner_r(k), -1.0, 1.0)) / (math.pi * k)
        return float(out) if out.ndim == 0 else out

    def kappa_from_amplitude(self, amplitude: float, sign: int | None = None) -> float:
        """Invert :meth:`amplitude` (``amplitude`` is the peak ``|u|``, > 0).

        Gardner: a peak ``W`` of the canonical wave (signed, ``W = sign amplitude / alpha``) moves
        at ``4 kappa^2 = 2 W + mu W^2`` (the travelling-wave ODE at the crest); the amplitude must
        be below the table-top height (``mu < 0``) or above ``2 |alpha| / mu`` (opposite polarity).
        """
        if not amplitude > 0:
            raise ConfigError(f"solitons: amplitude must be positive, got {amplitude}")
        if self.family != "gardner":
            return float(self.kappa_of_height(amplitude))
        s = self._branch(sign)
        w = s * amplitude / abs(self.alpha)
        if s > 0 and self.mu < 0 and not w < 1.0 / -self.mu:
            raise ConfigError(
                f"solitons: amplitude {amplitude:g} is at or above the table-top height "
                f"{abs(self.alpha) / -self.mu:g} of this Gardner equation (|a / b|)"
            )
        if s < 0 and not -w > 2.0 / self.mu:
            raise ConfigError(
                f"solitons: a Gardner solitary wave of sign {sign:+d} is higher than "
                f"{2.0 * abs(self.alpha) / self.mu:g} (|2 a / b|), got amplitude {amplitude:g}"
            )
        return 0.5 * math.sqrt(2.0 * w + self.mu * w * w)

    def kappa_of_height(self, height: ArrayLike) -> Any:
        """:meth:`amplitude` inverted elementwise for measured heights: their sign is ignored for
        KdV and mKdV and gives the branch for Gardner (``4 kappa^2 = 2 W + mu W^2`` with
        ``W = height / alpha``; NaN where no solitary wave has that height)."""
        h = np.asarray(height, dtype=np.float64)
        if self.family == "gardner":
            w = h / self.alpha
            c = 2.0 * w + self.mu * w * w
            out = 0.5 * np.sqrt(np.where(c > 0, c, np.nan))
        else:
            scaled = np.abs(h) / (2.0 * abs(self.alpha))
            out = np.sqrt(scaled) if self.family == "kdv" else scaled
        return float(out) if out.ndim == 0 else out

    def tail_length(self, kappa: ArrayLike) -> Any:
        """e-folding length ``1 / (2 kappa)`` of the soliton's tail (every family)."""
        out = 0.5 / np.asarray(kappa, dtype=np.float64)
        return float(out) if out.ndim == 0 else out

    def tail_constant(self, kappa: ArrayLike, sign: int | None = None) -> Any:
        """``C`` of the tail ``C e^{-2 kappa |x|}`` relative to the peak: 4 (KdV ``sech^2``), 2
        (mKdV ``sech``), ``2 (1 + s r) / (s r)`` (Gardner; large near the table-top limit)."""
        if self.family == "kdv":
            return 4.0
        if self.family == "mkdv":
            return 2.0
        s = self._branch(sign)
        r = self._gardner_r(np.asarray(kappa, dtype=np.float64))
        with np.errstate(all="ignore"):
            out = 2.0 * (1.0 + s * r) / (s * r)
        return float(out) if out.ndim == 0 else out

    def breather_amplitude(self, eta: ArrayLike) -> Any:
        """Peak ``|u|`` of a focusing-mKdV breather's envelope of eigenvalue pair ``+-xi + i eta``:
        ``|alpha| 4 eta``, the sum of the two complex-conjugate solitons' ``2 eta`` (Wadati 1973,
        from memory)."""
        out = abs(self.alpha) * 4.0 * np.asarray(eta, dtype=np.float64)
        return float(out) if out.ndim == 0 else out

    def kappa_from_speed(self, speed: float) -> float:
        """Invert :meth:`speed` (``speed`` must have the sign of ``d``; Gardner: below the
        table-top speed ``4 d max_kappa^2`` when there is one)."""
        if not speed / self.d > 0:
            raise ConfigError(f"solitons: speed must have the sign of d = {self.d}, got {speed}")
        kappa = 0.5 * math.sqrt(speed / self.d)
        if not kappa < self.max_kappa:
            raise ConfigError(
                f"solitons: speed {speed:g} is at or beyond the table-top speed "
                f"{self.speed(self.max_kappa):g} of this Gardner equation (4 d / (4 (-mu)))"
            )
        return kappa

    def profile(self, x: ArrayLike, kappa: float, x0: float = 0.0, sign: int = 1) -> np.ndarray:
        """One soliton centred at ``x0`` on the points ``x`` (no periodic images): ``alpha 2 kappa^2
        sech^2(kappa (x - x0))`` (KdV), ``sign alpha 2 kappa sech(2 kappa (x - x0))`` (mKdV), or
        the Gardner wave of polarity ``sign``.

        Gardner derivation: a wave ``w(x - c t)`` vanishing at infinity satisfies, integrated
        twice, ``w'^2 = w^2 (c - 2 w - mu w^2)``; with ``w = 1 / W`` this is ``W'^2 = c W^2 - 2 W -
        mu``, solved by ``W = p + q cosh(sqrt(c) x)`` with ``p = 1/c`` and ``q^2 = p^2 + mu / c``.
        With ``c = 4 kappa^2``: ``w = 4 kappa^2 / (1 + s r cosh(2 kappa x))``; it is regular when
        ``1 + s r cosh`` keeps one sign, which gives the existence conditions of the class doc.
        """
        z = np.asarray(x, dtype=np.float64) - x0
        if self.family == "kdv":
            return self.alpha * 2.0 * kappa**2 * sech(kappa * z) ** 2
        if self.family == "mkdv":
            return sign * self.alpha * 2.0 * kappa * sech(2.0 * kappa * z)
        s = self._branch(sign)
        r = float(self._gardner_r(np.asarray(kappa, dtype=np.float64)))
        if not math.isfinite(r):
            raise ConfigError(
                f"solitons: kappa {kappa:g} is beyond the table-top limit {self.max_kappa:g}"
            )
        e = np.exp(-2.0 * kappa * np.abs(z))  # cosh(2 kappa z) = (1 + e^2) / (2 e), no overflow
        return self.alpha * 4.0 * kappa**2 * 2.0 * e / (2.0 * e + s * r * (1.0 + e * e))

    def momentum(self, kappa: float, sign: int | None = None) -> float:
        """``int u^2 dx`` of one soliton: ``alpha^2 16 kappa^3 / 3`` (KdV), ``alpha^2 4 kappa``
        (mKdV), by quadrature of :meth:`profile` for Gardner (smooth and exponentially decaying,
        so the trapezoid rule converges geometrically)."""
        if self.family == "kdv":
            return self.alpha**2 * 16.0 * kappa**3 / 3.0
        if self.family == "mkdv":
            return self.alpha**2 * 4.0 * kappa
        x, h = self._quadrature_line(kappa, sign)
        u = self.profile(x, kappa, 0.0, self.sign if sign is None else sign)
        return float(np.sum(u * u) * h)

    def slope_norm(self, kappa: float, sign: int | None = None) -> float:
        """``int u_x^2 dx`` of one soliton: ``alpha^2 64 kappa^5 / 15`` (KdV), ``alpha^2 16
        kappa^3 / 3`` (mKdV), by quadrature for Gardner, with ``w_x^2 = w^2 (4 kappa^2 - 2 w - mu w^2)`` in
        the canonical variable (the first integral of :meth:`profile`)."""
        if self.family == "kdv":
            return self.alpha**2 * 64.0 * kappa**5 / 15.0
        if self.family == "mkdv":
            return self.alpha**2 * 16.0 * kappa**3 / 3.0
        x, h = self._quadrature_line(kappa, sign)
        w = self.profile(x, kappa, 0.0, self.sign if sign is None else sign) / self.alpha
        wx2 = w * w * np.maximum(4.0 * kappa**2 - 2.0 * w - self.mu * w * w, 0.0)
        return float(self.alpha**2 * np.sum(wx2) * h)

    def _quadrature_line(self, kappa: float, sign: int | None) -> tuple[np.ndarray, float]:
        """Points spanning 40 tail lengths plus the flat top, 40 per width: trapezoid nodes."""
        self._branch(sign)
        half = 20.0 / kappa + self.plateau(kappa)
        step = min(float(self.width(kappa, sign)), 1.0 / kappa) / 40.0
        m = math.ceil(half / step)
        return step * np.arange(-m, m + 1), step

    def plateau(self, kappa: float) -> float:
        """Half-length of a Gardner wave's flat top near the table-top limit, ``acosh(1/r) / (2
        kappa)`` (where ``r cosh(2 kappa x) = 1``), 0 away from it and for KdV and mKdV."""
        if self.family != "gardner" or self.mu >= 0:
            return 0.0
        r = float(self._gardner_r(np.asarray(kappa, dtype=np.float64)))
        return math.acosh(1.0 / r) / (2.0 * kappa) if 0 < r < 1 else 0.0


def sech(z: np.ndarray) -> np.ndarray:
    """``sech z`` as ``2 e^{-|z|} / (1 + e^{-2|z|})``: no overflow for large ``|z|``."""
    e = np.exp(-np.abs(z))
    return 2.0 * e / (1.0 + e * e)


__all__ = [
    "COEFFICIENTS",
    "COEFFICIENT_MEANINGS",
    "CoreFields",
    "Equation",
    "Grid",
    "SolitonForm",
    "sech",
]
