"""Initial data builders: the ``u0`` of a run from the plain-data ``initial`` of a RunSpec.

Kinds (the ``"kind"`` entry of the dict) and their other entries:

- ``"solitons"``: superposed one-solitons, ``kappa``, ``x0`` (centres, left to right), ``sign``;
  summed over periodic images so the profile is smooth across ``x = +-L/2``;
- ``"multisoliton"``: the exact Hirota N-soliton at ``t = 0``, ``kappa``, ``x0`` (phase constants),
  ``sign``;
- ``"sech2"``: ``height sech^2((x - center)/scale)``; ``"gaussian"``: ``height exp(-((x - center)/
  scale)^2)`` (both summed over periodic images);
- ``"box"``: ``height`` on ``|x - center| < half_width`` (periodically wrapped), edges smoothed by
  ``tanh`` over ``edge`` when ``edge > 0``, ``height/2`` exactly on a sharp edge;
- ``"npy"``: a 1-D array of length ``n`` from the ``.npy`` file ``path`` (checked against ``sha256``
  when given).

Solitons are given by ``kappa`` in the canonical forms (REFERENCES.md 1.1, 2.1): KdV
``u_t + 6 u u_x + u_xxx = 0`` has ``2 kappa^2 sech^2(kappa (x - 4 kappa^2 t - x0))``, focusing mKdV
``u_t + 6 u^2 u_x + u_xxx = 0`` has ``2 kappa sech(2 kappa (x - 4 kappa^2 t - x0))``. A general
``a`` (or ``b``) and ``d`` is reached by the exact scaling ``u = alpha w(x, d t)`` with
``alpha = 6 d / a`` (KdV) or ``sqrt(6 d / b)`` (mKdV), so the speed is ``4 d kappa^2`` and the
height ``|alpha|`` times the canonical one. Perturbation terms (``f, g, v``) do not change the
initial profile.
"""

from __future__ import annotations

import hashlib
import math
from collections.abc import Callable, Mapping
from pathlib import Path

import numpy as np

from .exceptions import ConfigError, ShapeError
from .model import Equation, Grid

KINDS = ("solitons", "multisoliton", "sech2", "gaussian", "box", "npy")

# Images are summed until the neglected tail is below 1e-18 of the peak: e^{-2 kappa X} < 1e-18/4.
_TAIL_DECAYS = 0.5 * math.log(4e18)


def soliton_family(equation: Equation) -> str:
    """``"kdv"`` or ``"mkdv"``: the family whose solitons this equation carries; else ConfigError.

    KdV needs ``a != 0, b = 0``; mKdV needs ``a = 0`` and ``b d > 0`` (focusing). ``d`` must be
    non-zero in both. Perturbations ``f, g, v`` are allowed: the solitons are then initial data.
    """
    if equation.d != 0 and equation.b == 0 and equation.a != 0:
        return "kdv"
    if equation.d != 0 and equation.a == 0 and equation.b * equation.d > 0:
        return "mkdv"
    raise ConfigError(
        f"solitons: equation {equation.name!r} (a={equation.a}, b={equation.b}, d={equation.d}) "
        "has no soliton formula here; expected a KdV (a != 0, b = 0) or focusing mKdV "
        "(a = 0, b d > 0) equation"
    )


def soliton_scale(equation: Equation) -> float:
    """``alpha`` of ``u = alpha w(x, d t)`` mapping the canonical equation onto ``equation``."""
    if soliton_family(equation) == "kdv":
        return 6.0 * equation.d / equation.a
    return math.sqrt(6.0 * equation.d / equation.b)


def soliton_sign(equation: Equation) -> int:
    """The sign of a KdV soliton (+1 elevation, -1 depression); +1 for mKdV (polarity is free)."""
    return 1 if soliton_scale(equation) > 0 else -1


def soliton_amplitude(kappa: float, equation: Equation) -> float:
    """Peak ``|u|``: ``|alpha| 2 kappa^2`` (KdV), ``alpha 2 kappa`` (mKdV)."""
    alpha = abs(soliton_scale(equation))
    if soliton_family(equation) == "kdv":
        return alpha * 2.0 * kappa**2
    return alpha * 2.0 * kappa


def soliton_speed(kappa: float, equation: Equation) -> float:
    """``4 d kappa^2`` in both families."""
    soliton_family(equation)
    return 4.0 * equation.d * kappa**2


def soliton_width(kappa: float, family: str) -> float:
    """Width (inverse of the sech argument scale): ``1/kappa`` (KdV), ``1/(2 kappa)`` (mKdV)."""
    return 1.0 / kappa if family == "kdv" else 0.5 / kappa


def kappa_from_amplitude(amplitude: float, equation: Equation) -> float:
    """Invert :func:`soliton_amplitude` (``amplitude`` is the peak ``|u|``, > 0)."""
    if not amplitude > 0:
        raise ConfigError(f"solitons: amplitude must be positive, got {amplitude}")
    alpha = abs(soliton_scale(equation))
    if soliton_family(equation) == "kdv":
        return math.sqrt(amplitude / (2.0 * alpha))
    return amplitude / (2.0 * alpha)


def kappa_from_speed(speed: float, equation: Equation) -> float:
    """Invert :func:`soliton_speed` (``speed`` must have the sign of ``d``)."""
    soliton_family(equation)
    if not speed / equation.d > 0:
        raise ConfigError(f"solitons: speed must have the sign of d = {equation.d}, got {speed}")
    return 0.5 * math.sqrt(speed / equation.d)


def _sech(z: np.ndarray) -> np.ndarray:
    # 2 e^{-|z|} / (1 + e^{-2|z|}): no overflow for large |z|, unlike 1/cosh
    e = np.exp(-np.abs(z))
    return 2.0 * e / (1.0 + e * e)


def _periodic(
    shape: Callable[[np.ndarray], np.ndarray], x: np.ndarray, length: float, reach: float
) -> np.ndarray:
    """Sum of ``shape(x - m L)`` over the images ``m`` whose tails reach the box."""
    images = math.ceil(reach / length) + 1
    out = np.zeros_like(x)
    for m in range(-images, images + 1):
        out += shape(x - m * length)
    return out


def _wrap(x: np.ndarray, length: float) -> np.ndarray:
    """``x`` mapped into ``[-L/2, L/2)``."""
    return (x + 0.5 * length) % length - 0.5 * length


def _need(initial: Mapping[str, object], key: str) -> object:
    if key not in initial:
        raise ConfigError(f"initial: kind {initial.get('kind')!r} needs the entry {key!r}")
    return initial[key]


def _soliton_lists(initial: Mapping[str, object]) -> tuple[list[float], list[float], list[int]]:
    kappas = [float(k) for k in _need(initial, "kappa")]  # type: ignore[attr-defined]
    x0s = [float(p) for p in _need(initial, "x0")]  # type: ignore[attr-defined]
    signs = [int(s) for s in initial.get("sign", [1] * len(kappas))]  # type: ignore[attr-defined]
    if not (len(kappas) == len(x0s) == len(signs)) or not kappas:
        raise ConfigError(
            f"initial: kappa, x0 and sign need the same non-zero length, got {len(kappas)}, "
            f"{len(x0s)}, {len(signs)}"
        )
    for k in kappas:
        if not (math.isfinite(k) and k > 0):
            raise ConfigError(f"initial: every kappa must be positive and finite, got {k}")
    for s in signs:
        if s not in (1, -1):
            raise ConfigError(f"initial: every sign must be +1 or -1, got {s}")
    return kappas, x0s, signs


def _superposed(initial: Mapping[str, object], grid: Grid, equation: Equation) -> np.ndarray:
    kappas, x0s, signs = _soliton_lists(initial)
    family = soliton_family(equation)
    alpha = soliton_scale(equation)
    if family == "kdv":
        own = soliton_sign(equation)
        if any(s != own for s in signs):
            raise ConfigError(
                f"initial: a KdV soliton of this equation has sign {own:+d}; got signs {signs}"
            )
    x = grid.x
    u = np.zeros_like(x)
    for kappa, x0, sign in zip(kappas, x0s, signs, strict=True):
        if family == "kdv":

            def shape(y: np.ndarray, k: float = kappa, c: float = x0) -> np.ndarray:
                return alpha * 2.0 * k**2 * _sech(k * (y - c)) ** 2
        else:

            def shape(y: np.ndarray, k: float = kappa, c: float = x0, s: int = sign) -> np.ndarray:
                return s * alpha * 2.0 * k * _sech(2.0 * k * (y - c))

        u += _periodic(shape, x, grid.length, _TAIL_DECAYS / kappa)
    return u


def _multisoliton(initial: Mapping[str, object], grid: Grid, equation: Equation) -> np.ndarray:
    from .exact import multisoliton  # needs the compiled core; imported only when used

    kappas, x0s, signs = _soliton_lists(initial)
    family = soliton_family(equation)
    bare = Equation(a=equation.a, b=equation.b, d=equation.d)  # the exact solution ignores f, g, v
    if family == "kdv":
        if any(s != soliton_sign(equation) for s in signs):
            raise ConfigError(
                f"initial: KdV solitons of this equation have sign "
                f"{soliton_sign(equation):+d}; got signs {signs}"
            )
        return multisoliton(grid.x, 0.0, kappas, x0s, bare)
    return multisoliton(grid.x, 0.0, kappas, x0s, bare, signs=signs)


def _profile(initial: Mapping[str, object], grid: Grid, kind: str) -> np.ndarray:
    height = float(_need(initial, "height"))  # type: ignore[arg-type]
    center = float(initial.get("center", 0.0))  # type: ignore[arg-type]
    x = grid.x
    if kind == "box":
        half = float(_need(initial, "half_width"))  # type: ignore[arg-type]
        edge = float(initial.get("edge", 0.0))  # type: ignore[arg-type]
        if not 0 < half < 0.5 * grid.length:
            raise ConfigError(f"initial: box half_width must be in (0, L/2), got {half}")
        r = _wrap(x - center, grid.length)
        if edge > 0:
            return 0.5 * height * (np.tanh((r + half) / edge) - np.tanh((r - half) / edge))
        return np.where(np.abs(r) < half, height, np.where(np.abs(r) == half, 0.5 * height, 0.0))
    scale = float(_need(initial, "scale"))  # type: ignore[arg-type]
    if not scale > 0:
        raise ConfigError(f"initial: {kind} scale must be positive, got {scale}")
    if kind == "sech2":

        def shape(y: np.ndarray) -> np.ndarray:
            return height * _sech((y - center) / scale) ** 2

        return _periodic(shape, x, grid.length, _TAIL_DECAYS * scale)

    def bump(y: np.ndarray) -> np.ndarray:
        return height * np.exp(-(((y - center) / scale) ** 2))

    return _periodic(bump, x, grid.length, 6.5 * scale)  # e^{-6.5^2} < 1e-18


def file_digest(path: str | Path) -> str:
    """sha256 hex digest of a file's bytes."""
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def load_array(path: str | Path, n: int | None = None) -> np.ndarray:
    """A finite 1-D float64 array from a ``.npy`` file (no pickles), of length ``n`` if given."""
    try:
        arr = np.load(Path(path), allow_pickle=False)
    except FileNotFoundError:
        raise ConfigError(f"initial: no such file {str(path)!r}") from None
    except (OSError, ValueError) as err:
        raise ConfigError(f"initial: {str(path)!r} is not a readable .npy array ({err})") from None
    if arr.dtype.kind not in "fiu":
        raise ShapeError(f"initial: {str(path)!r} holds dtype {arr.dtype}; expected real numbers")
    if arr.ndim != 1:
        raise ShapeError(f"initial: {str(path)!r} has shape {arr.shape}; expected a 1-D array")
    if n is not None and arr.shape[0] != n:
        raise ShapeError(
            f"initial: {str(path)!r} has {arr.shape[0]} values; expected n = {n} (the grid's n)"
        )
    arr = np.ascontiguousarray(arr, dtype=np.float64)
    if not np.all(np.isfinite(arr)):
        raise ConfigError(f"initial: {str(path)!r} holds non-finite values")
    return arr


def _from_file(initial: Mapping[str, object], grid: Grid) -> np.ndarray:
    path = Path(str(_need(initial, "path")))
    arr = load_array(path, grid.n)
    expected = initial.get("sha256")
    if expected is not None and file_digest(path) != expected:
        raise ConfigError(
            f"initial: {str(path)!r} changed since the sweep was read (sha256 differs); "
            "expected the file the sweep was defined with"
        )
    return arr


def build_profile(initial: Mapping[str, object], grid: Grid, equation: Equation) -> np.ndarray:
    """The initial profile ``u0`` on ``grid.x`` described by ``initial`` (see the module doc)."""
    kind = initial.get("kind")
    if kind == "solitons":
        return _superposed(initial, grid, equation)
    if kind == "multisoliton":
        return _multisoliton(initial, grid, equation)
    if kind in ("sech2", "gaussian", "box"):
        return _profile(initial, grid, str(kind))
    if kind == "npy":
        return _from_file(initial, grid)
    raise ConfigError(f"initial: unknown kind {kind!r}; expected one of {', '.join(KINDS)}")


def input_solitons(initial: Mapping[str, object]) -> list[dict]:
    """One dict per input soliton, left to right: ``soliton`` (index), ``kappa``, ``x0``, ``sign``.

    Empty for data that are not given as solitons (profiles and files).
    """
    if initial.get("kind") not in ("solitons", "multisoliton"):
        return []
    kappas, x0s, signs = _soliton_lists(initial)
    return [
        {"soliton": i, "kappa": k, "x0": x0, "sign": s}
        for i, (k, x0, s) in enumerate(zip(kappas, x0s, signs, strict=True))
    ]


__all__ = [
    "KINDS",
    "build_profile",
    "file_digest",
    "input_solitons",
    "kappa_from_amplitude",
    "kappa_from_speed",
    "load_array",
    "soliton_amplitude",
    "soliton_family",
    "soliton_scale",
    "soliton_sign",
    "soliton_speed",
    "soliton_width",
]
