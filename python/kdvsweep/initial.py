"""Initial data: typed descriptions of a run's ``u0`` and the builder of the profile on a grid.

Kinds (the :attr:`kind` of each description):

- :class:`Solitons` ``"solitons"``: superposed one-solitons, ``kappa``, ``x0`` (centres, left to
  right), ``sign``; summed over periodic images so the profile is smooth across ``x = +-L/2``;
  ``"multisoliton"`` (``exact=True``): the exact Hirota N-soliton at ``t = 0``, with ``x0`` its
  phase constants;
- :class:`Profile` ``"sech2"``: ``height sech^2((x - center)/scale)``; ``"gaussian"``:
  ``height exp(-((x - center)/scale)^2)`` (both summed over periodic images);
- :class:`Box` ``"box"``: ``height`` on ``|x - center| < half_width`` (periodically wrapped), edges
  smoothed by ``tanh`` over ``edge`` when ``edge > 0``, ``height/2`` exactly on a sharp edge;
- :class:`Breather` ``"breather"``: the exact mKdV breather, ``eta``, ``xi``, ``center``,
  ``phase`` (:func:`kdvsweep.exact.breather`); :class:`Sech4Wave` ``"fifth-order-wave"``: the
  exact ``sech^4`` wave of a fifth-order equation, ``center`` (:func:`kdvsweep.exact.fifth_order_form`);
  both summed over periodic images;
- :class:`FileData` ``"npy"``: a 1-D array of length ``n`` from the ``.npy`` file ``path``
  (checked against ``sha256`` when given).

Solitons are given by ``kappa``; their shape, height and sign come from the equation's
:attr:`kdvsweep.Equation.soliton_form` (KdV ``2 kappa^2 sech^2(kappa x)``, Korteweg & de Vries
1895; focusing mKdV ``2 kappa sech(2 kappa x)``, Wadati 1973; scaled to the equation's
coefficients). Perturbation terms (``f, g, v``) do not change the initial profile.
"""

from __future__ import annotations

import hashlib
import math
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from .exceptions import ConfigError, ShapeError
from .model import Equation, Grid, sech

KINDS = (
    "solitons",
    "multisoliton",
    "sech2",
    "gaussian",
    "box",
    "breather",
    "fifth-order-wave",
    "npy",
)

# Images are summed until the neglected tail is below 1e-18 of the peak: e^{-2 kappa X} < 1e-18/4.
_TAIL_DECAYS = 0.5 * math.log(4e18)


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


def _floats(values: Any, name: str) -> tuple[float, ...]:
    try:
        return tuple(float(v) for v in values)
    except (TypeError, ValueError):
        raise ConfigError(f"initial: {name} must be a list of numbers, got {values!r}") from None


@dataclass(frozen=True)
class Solitons:
    """Solitons of the run's equation: ``kappa``, centres ``x0`` (left to right) and ``sign``.

    ``exact=True`` gives the exact N-soliton (kind ``"multisoliton"``), with ``x0`` the phase
    constants; otherwise the superposed one-solitons (kind ``"solitons"``). ``sign`` defaults to
    +1 for every soliton (mKdV polarity; a KdV soliton has its equation's one sign).
    """

    kappa: tuple[float, ...]
    x0: tuple[float, ...]
    sign: tuple[int, ...] = ()
    exact: bool = False

    def __post_init__(self) -> None:
        kappas, x0s = _floats(self.kappa, "kappa"), _floats(self.x0, "x0")
        signs = tuple(int(s) for s in self.sign) if self.sign else (1,) * len(kappas)
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
        object.__setattr__(self, "kappa", kappas)
        object.__setattr__(self, "x0", x0s)
        object.__setattr__(self, "sign", signs)

    @property
    def kind(self) -> str:
        """``"multisoliton"`` (exact) or ``"solitons"`` (superposed)."""
        return "multisoliton" if self.exact else "solitons"

    def plain(self) -> dict[str, Any]:
        """As plain JSON data: ``kind``, ``kappa``, ``x0``, ``sign``."""
        return {
            "kind": self.kind,
            "kappa": list(self.kappa),
            "x0": list(self.x0),
            "sign": list(self.sign),
        }

    def rows(self) -> list[dict[str, Any]]:
        """One dict per soliton, left to right: ``soliton`` (index), ``kappa``, ``x0``, ``sign``."""
        return [
            {"soliton": i, "kappa": k, "x0": x0, "sign": s}
            for i, (k, x0, s) in enumerate(zip(self.kappa, self.x0, self.sign, strict=True))
        ]

    def build(self, grid: Grid, equation: Equation) -> np.ndarray:
        """The profile on ``grid.x``."""
        form = equation.soliton_form
        if any(s not in form.polarities for s in self.sign):
            raise ConfigError(
                f"initial: a {form.family} soliton of this equation has sign {form.sign:+d}; "
                f"got signs {list(self.sign)}"
            )
        if self.exact:
            from .exact import multisoliton  # needs the compiled core; imported only when used

            # the exact solution is that of the unperturbed equation: f, g, v left out
            bare = Equation(a=equation.a, b=equation.b, d=equation.d)
            signs = None if form.family == "kdv" else list(self.sign)
            return multisoliton(grid.x, 0.0, list(self.kappa), list(self.x0), bare, signs=signs)
        x = grid.x
        u = np.zeros_like(x)
        for kappa, x0, sign in zip(self.kappa, self.x0, self.sign, strict=True):

            def shape(y: np.ndarray, k: float = kappa, c: float = x0, s: int = sign) -> np.ndarray:
                return form.profile(y, k, c, s)

            u += _periodic(shape, x, grid.length, _TAIL_DECAYS / kappa + form.plateau(kappa))
        return u


def _finite_fields(data: object, names: tuple[str, ...]) -> None:
    """Check that the fields ``names`` of a frozen dataclass are finite numbers; store them as floats."""
    for name in names:
        value = getattr(data, name)
        if (
            isinstance(value, bool)
            or not isinstance(value, int | float)
            or not math.isfinite(value)
        ):
            raise ConfigError(f"initial: {name} must be a finite number, got {value!r}")
        object.__setattr__(data, name, float(value))


@dataclass(frozen=True)
class Profile:
    """``height sech^2((x - center)/scale)`` (``shape="sech2"``) or ``height exp(-((x -
    center)/scale)^2)`` (``shape="gaussian"``), summed over periodic images."""

    shape: str
    height: float
    scale: float
    center: float = 0.0

    def __post_init__(self) -> None:
        if self.shape not in ("sech2", "gaussian"):
            raise ConfigError(f"initial: profile shape {self.shape!r}; expected sech2 or gaussian")
        _finite_fields(self, ("height", "scale", "center"))
        if not self.scale > 0:
            raise ConfigError(f"initial: {self.shape} scale must be positive, got {self.scale}")

    @property
    def kind(self) -> str:
        """``"sech2"`` or ``"gaussian"``."""
        return self.shape

    def plain(self) -> dict[str, Any]:
        """As plain JSON data: ``kind``, ``height``, ``center``, ``scale``."""
        return {
            "kind": self.kind,
            "height": self.height,
            "center": self.center,
            "scale": self.scale,
        }

    def build(self, grid: Grid, equation: Equation) -> np.ndarray:
        """The profile on ``grid.x`` (the equation plays no part)."""
        height, center, scale = self.height, self.center, self.scale
        if self.shape == "sech2":

            def bump(y: np.ndarray) -> np.ndarray:
                return height * sech((y - center) / scale) ** 2

            return _periodic(bump, grid.x, grid.length, _TAIL_DECAYS * scale)

        def gauss(y: np.ndarray) -> np.ndarray:
            return height * np.exp(-(((y - center) / scale) ** 2))

        return _periodic(gauss, grid.x, grid.length, 6.5 * scale)  # e^{-6.5^2} < 1e-18


@dataclass(frozen=True)
class Box:
    """``height`` on ``|x - center| < half_width``, edges smoothed over ``edge`` (0: sharp)."""

    height: float
    half_width: float
    center: float = 0.0
    edge: float = 0.0

    def __post_init__(self) -> None:
        _finite_fields(self, ("height", "half_width", "center", "edge"))
        if self.edge < 0:
            raise ConfigError(
                f"initial: box edge must be >= 0 (0 is a sharp edge), got {self.edge}"
            )

    @property
    def kind(self) -> str:
        """``"box"``."""
        return "box"

    def plain(self) -> dict[str, Any]:
        """As plain JSON data: ``kind``, ``height``, ``center``, ``half_width``, ``edge``."""
        return {
            "kind": "box",
            "height": self.height,
            "center": self.center,
            "half_width": self.half_width,
            "edge": self.edge,
        }

    def build(self, grid: Grid, equation: Equation) -> np.ndarray:
        """The profile on ``grid.x`` (the equation plays no part)."""
        half, height, edge = self.half_width, self.height, self.edge
        if not 0 < half < 0.5 * grid.length:
            raise ConfigError(f"initial: box half_width must be in (0, L/2), got {half}")
        r = _wrap(grid.x - self.center, grid.length)
        if edge > 0:
            return 0.5 * height * (np.tanh((r + half) / edge) - np.tanh((r - half) / edge))
        return np.where(np.abs(r) < half, height, np.where(np.abs(r) == half, 0.5 * height, 0.0))


@dataclass(frozen=True)
class Breather:
    """The exact breather of focusing mKdV (kind ``"breather"``): eigenvalue pair ``+-xi + i eta``,
    envelope centred at ``center``, carrier phase ``phase`` (:func:`kdvsweep.exact.breather` at
    ``t = 0``), summed over periodic images. Only for an unperturbed focusing mKdV equation."""

    eta: float
    xi: float
    center: float = 0.0
    phase: float = 0.0

    def __post_init__(self) -> None:
        from .exact import check_breather_parameters

        check_breather_parameters(self.eta, self.xi)
        _finite_fields(self, ("eta", "xi", "center", "phase"))

    @property
    def kind(self) -> str:
        """``"breather"``."""
        return "breather"

    @property
    def width(self) -> float:
        """The width a grid must resolve: the envelope's ``1/(2 eta)`` narrowed by the carrier of
        wavenumber ``2 xi`` to ``1/(2 (eta + xi))`` (a cautious estimate, no source)."""
        return 0.5 / (self.eta + self.xi)

    @property
    def reach(self) -> float:
        """Distance from the centre beyond which the envelope ``~ 8 eta e^{-2 eta |x|}`` is below
        1e-18 of its peak."""
        return _TAIL_DECAYS / self.eta

    def plain(self) -> dict[str, Any]:
        """As plain JSON data: ``kind``, ``eta``, ``xi``, ``center``, ``phase``."""
        return {
            "kind": "breather",
            "eta": self.eta,
            "xi": self.xi,
            "center": self.center,
            "phase": self.phase,
        }

    def build(self, grid: Grid, equation: Equation) -> np.ndarray:
        """The profile on ``grid.x`` (:class:`ConfigError` for an equation without breathers)."""
        from .exact import breather_alpha, breather_profile

        alpha = breather_alpha(equation)
        eta, xi, center, phase = self.eta, self.xi, self.center, self.phase

        def shape(y: np.ndarray) -> np.ndarray:
            return breather_profile(y, eta, xi, center, phase, alpha)

        return _periodic(shape, grid.x, grid.length, self.reach + abs(center))


@dataclass(frozen=True)
class Sech4Wave:
    """The exact ``sech^4`` solitary wave of ``u_t + a u u_x + d u_xxx + f u_xxxxx = 0`` (kind
    ``"fifth-order-wave"``) centred at ``center`` (:func:`kdvsweep.exact.fifth_order_form`: its
    height, width and speed are fixed by the equation), summed over periodic images. Only with
    ``d f < 0``, ``a != 0`` and ``b = g = v = 0``."""

    center: float = 0.0

    def __post_init__(self) -> None:
        _finite_fields(self, ("center",))

    @property
    def kind(self) -> str:
        """``"fifth-order-wave"``."""
        return "fifth-order-wave"

    def plain(self) -> dict[str, Any]:
        """As plain JSON data: ``kind``, ``center``."""
        return {"kind": self.kind, "center": self.center}

    def build(self, grid: Grid, equation: Equation) -> np.ndarray:
        """The profile on ``grid.x`` (:class:`ConfigError` for an equation without the wave)."""
        from .exact import fifth_order_form

        wave = fifth_order_form(equation)
        center = self.center

        def shape(y: np.ndarray) -> np.ndarray:
            return wave.profile(y, 0.0, center)

        # the tail 16 A e^{-4 k |x|} is below 1e-18 A beyond (ln 16 + 18 ln 10) / (4 k)
        return _periodic(shape, grid.x, grid.length, 11.1 / wave.k + abs(center))


@dataclass(frozen=True)
class FileData:
    """A profile read from the ``.npy`` file ``path``, checked against ``sha256`` when given."""

    path: str
    sha256: str | None = None

    @property
    def kind(self) -> str:
        """``"npy"``."""
        return "npy"

    def plain(self) -> dict[str, Any]:
        """As plain JSON data: ``kind``, ``path``, ``sha256``."""
        return {"kind": "npy", "path": self.path, "sha256": self.sha256}

    def build(self, grid: Grid, equation: Equation) -> np.ndarray:
        """The array of the file (its length must be ``grid.n``)."""
        arr = load_array(self.path, grid.n)
        if self.sha256 is not None and file_digest(self.path) != self.sha256:
            raise ConfigError(
                f"initial: {self.path!r} changed since the sweep was read (sha256 differs); "
                "expected the file the sweep was defined with"
            )
        return arr


#: The initial data of a run: one of the six descriptions.
InitialData = Solitons | Profile | Box | Breather | Sech4Wave | FileData


def file_digest(path: str | Path) -> str:
    """sha256 hex digest of a file's bytes (read in blocks)."""
    digest = hashlib.sha256()
    with Path(path).open("rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


#: Most values the ``.npy`` file of an initial profile may hold (1 GiB of float64), checked in the
#: file's header before its data are read.
MAX_FILE_VALUES = 2**27


def _npy_header(path: Path) -> tuple[tuple[int, ...], np.dtype[Any]]:
    """Shape and dtype declared in the header of a ``.npy`` file, checked against the file's size
    (nothing of the data is read, so a header declaring 10**12 values costs nothing)."""
    fmt = np.lib.format
    with path.open("rb") as fh:
        version = fmt.read_magic(fh)
        if version == (1, 0):
            shape, _, dtype = fmt.read_array_header_1_0(fh)
        elif version == (2, 0):
            shape, _, dtype = fmt.read_array_header_2_0(fh)
        else:
            raise ValueError(f"format version {version[0]}.{version[1]}; expected 1.0 or 2.0")
        offset = fh.tell()
    if dtype.hasobject:
        raise ValueError("it holds Python objects, which are never loaded")
    size = math.prod(shape)
    if offset + size * dtype.itemsize != path.stat().st_size:
        raise ValueError(f"the file's length is not that of the {size} values its header declares")
    return tuple(shape), dtype


def load_array(path: str | Path, n: int | None = None) -> np.ndarray:
    """A finite 1-D float64 array from a ``.npy`` file (no pickles), of length ``n`` if given.

    The header is read and checked first (dtype, shape, at most :data:`MAX_FILE_VALUES` values,
    a file as long as its header says), then the data.
    """
    file = Path(path)
    try:
        shape, dtype = _npy_header(file)
    except FileNotFoundError:
        raise ConfigError(f"initial: no such file {str(path)!r}") from None
    except (OSError, ValueError) as err:
        raise ConfigError(f"initial: {str(path)!r} is not a readable .npy array ({err})") from None
    if dtype.kind not in "fiu":
        raise ShapeError(f"initial: {str(path)!r} holds dtype {dtype}; expected real numbers")
    if len(shape) != 1:
        raise ShapeError(f"initial: {str(path)!r} has shape {shape}; expected a 1-D array")
    if n is not None and shape[0] != n:
        raise ShapeError(
            f"initial: {str(path)!r} has {shape[0]} values; expected n = {n} (the grid's n)"
        )
    if shape[0] > MAX_FILE_VALUES:
        raise ShapeError(
            f"initial: {str(path)!r} has {shape[0]} values; expected at most {MAX_FILE_VALUES}"
        )
    try:
        arr = np.load(file, allow_pickle=False)
    except (OSError, ValueError, MemoryError) as err:
        raise ConfigError(f"initial: {str(path)!r} is not a readable .npy array ({err})") from None
    arr = np.ascontiguousarray(arr, dtype=np.float64)
    if not np.all(np.isfinite(arr)):
        raise ConfigError(f"initial: {str(path)!r} holds non-finite values")
    return arr


def build_profile(initial: InitialData, grid: Grid, equation: Equation) -> np.ndarray:
    """The initial profile ``u0`` on ``grid.x`` described by ``initial`` (see the module doc)."""
    if not isinstance(initial, Solitons | Profile | Box | Breather | Sech4Wave | FileData):
        raise ConfigError(
            "initial: expected Solitons, Profile, Box or FileData, or an exact wave (Breather, "
            f"Sech4Wave), got {type(initial).__name__}"
        )
    return initial.build(grid, equation)


def input_solitons(initial: InitialData) -> list[dict[str, Any]]:
    """One dict per input soliton, left to right: ``soliton`` (index), ``kappa``, ``x0``, ``sign``.

    Empty for data that are not given as solitons (profiles and files).
    """
    return initial.rows() if isinstance(initial, Solitons) else []


__all__ = [
    "KINDS",
    "MAX_FILE_VALUES",
    "Box",
    "Breather",
    "FileData",
    "InitialData",
    "Profile",
    "Sech4Wave",
    "Solitons",
    "build_profile",
    "file_digest",
    "input_solitons",
    "load_array",
]
