"""Physical units: sweeps stated in the quantities of a wave tank, a two-layer fluid or a plasma.

kdvsweep runs the canonical model ``u_t + (a u + b u^2) u_x + d u_xxx + ... = ...``
(:class:`kdvsweep.model.Equation`). Each *system* here is a physical setting whose weakly nonlinear,
weakly dispersive long waves obey, in the laboratory frame,

    ``eta_t + c0 eta_x + (q eta + r eta^2) eta_x + beta eta_xxx = 0``

for a wave variable ``eta`` (a surface elevation or interface displacement in metres, an
electrostatic potential in volts), with the linear long-wave speed ``c0``, the quadratic and cubic
nonlinear coefficients ``q`` and ``r`` and the dispersion ``beta`` given by the published
derivations cited in each class. The canonical model has no ``c0 u_x`` term, so **runs are in the
frame moving at ``c0``**: a canonical position ``x`` at canonical time ``t`` is the laboratory
position ``X x + c0 T t``, a canonical speed ``V`` the laboratory speed ``c0 + V X / T``; lengths
that are differences at one time (box length, widths, phase shifts) scale by ``X`` alone. With
``eta = U u``, ``x_lab - c0 t_lab = X x`` and ``t_lab = T t`` the canonical coefficients are

    ``a = q U T / X``, ``b = r U^2 T / X``, ``d = beta T / X^3``,

and every system picks ``T = X^3 / beta`` (so ``d = 1``) and ``U`` with ``|a| + sqrt(6 |b|) = 6``
(:meth:`System.height_scale`: ``a = +-6`` for a KdV system). :class:`Scales` holds ``U, X, T, c0``
of one run; :meth:`System.equation` gives the canonical equation, :meth:`System.physical` the
laboratory one, and :func:`to_physical` / :func:`to_canonical` convert quantities both ways.

Systems (``[units] system = ...`` in a sweep file; README, "Physical units"):

- ``"shallow-water"`` (:class:`ShallowWater`): surface waves on water of depth ``depth`` under
  ``gravity`` (Korteweg & de Vries 1895; Whitham 1974).
- ``"two-layer-interface"`` (:class:`TwoLayerInterface`): waves on the interface of two layers of
  depths and densities ``upper_depth``, ``upper_density``, ``lower_depth``, ``lower_density``
  under a rigid lid: a Gardner equation (Djordjevic & Redekopp 1978; Kakutani & Yamasaki 1978).
- ``"ion-acoustic-plasma"`` (:class:`IonAcousticPlasma`): ion-acoustic waves in a plasma of cold
  ions and Boltzmann electrons (Washimi & Taniuti 1966).

Every formula, constant and citation in this module was written from memory of the published
papers and textbooks [memory], not copied from them; the tests check the consequences (speed,
width, polarity) by simulation.

**Caution.** These are idealised model runs, not forecasts: results in physical water-wave units
must not be used for coastal, tsunami or any other hazard assessment, engineering design or safety
decisions; defer to qualified practitioners and validated operational models (:data:`CAUTION`).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import astuple, dataclass, fields
from typing import Any, ClassVar

from .exceptions import ConfigError
from .model import Equation

#: The hazard caution repeated wherever physical water-wave units appear (README, the example
#: sweeps, and the Parquet field metadata ``caution`` of a water-wave store's ``phys_*`` columns).
CAUTION = (
    "idealised model runs, not forecasts: do not use them for coastal, tsunami or any other hazard "
    "assessment, engineering design or safety decisions; defer to qualified practitioners and "
    "validated operational models"
)

#: Physical constants (CODATA 2018 exact or recommended values [memory]).
ELEMENTARY_CHARGE = 1.602176634e-19  # C (exact since 2019)
VACUUM_PERMITTIVITY = 8.8541878128e-12  # F/m
ATOMIC_MASS_UNIT = 1.66053906660e-27  # kg
PROTON_MASS_U = 1.007276466621  # proton mass in atomic mass units
STANDARD_GRAVITY = 9.80665  # m/s^2 (standard gravity, a defined value)

#: The dimensions of physical columns and quantities: how each converts (see :func:`to_physical`).
DIMENSIONS = ("height", "length", "time", "speed", "speed_difference", "wavenumber", "frequency")


#: The dimension of each ``[initial]`` key that has one, in a sweep with ``[units]``: the soliton
#: sizes and positions and the profiles' heights and lengths (in the system's units there).
INITIAL_DIMENSIONS: Mapping[str, str] = {
    "amplitude": "height",
    "speed": "speed",
    "kappa": "wavenumber",
    "position": "length",
    "height": "height",
    "scale": "length",
    "center": "length",
    "half_width": "length",
    "edge": "length",
}

#: SI units of every dimension but the wave's own (its ``height``), shared by the systems.
SI_UNITS: Mapping[str, str] = {
    "length": "m",
    "time": "s",
    "speed": "m/s",
    "wavenumber": "1/m",
    "speed_difference": "m/s",
    "frequency": "1/s",
}


class ParameterError(ConfigError):
    """A system parameter out of range: ``key`` (of ``[units]``), the value given, what was
    expected (the sweep loader turns it into its one-line message)."""

    def __init__(self, key: str, given: float, expected: str) -> None:
        super().__init__(f"units.{key}: given {given!r}, expected {expected}")
        self.key = key
        self.given = given
        self.expected = expected


@dataclass(frozen=True)
class Parameter:
    """One key of a ``[units]`` table: its unit, meaning and default (``None``: required)."""

    key: str
    unit: str
    meaning: str
    default: float | None = None


@dataclass(frozen=True)
class Scales:
    """The scales of one run: ``eta = height u``, ``x_lab - c0 t_lab = length x``,
    ``t_lab = time t``; ``c0`` is the laboratory speed of the frame the run moves with."""

    height: float
    length: float
    time: float
    c0: float


@dataclass(frozen=True)
class PhysicalEquation:
    """``eta_t + c0 eta_x + (q eta + r eta^2) eta_x + beta eta_xxx = 0`` in laboratory units."""

    c0: float
    q: float
    r: float
    beta: float


@dataclass(frozen=True)
class Check:
    """A validity ratio of a run: its name (e.g. ``A/h``), value, the limit and what it means."""

    ratio: str
    value: float
    limit: float
    meaning: str

    @property
    def exceeded(self) -> bool:
        """True when the run leaves the regime the model assumes."""
        return self.value > self.limit


@dataclass(frozen=True)
class System:
    """A physical system: its parameters, published coefficients, scales and validity checks.

    Subclasses are frozen dataclasses whose fields are the ``[units]`` keys (SI or the unit of
    :attr:`PARAMETERS`), with ``NAME`` (the ``system`` value), ``UNITS`` (the unit of each
    dimension) and ``WATER`` (the hazard caution applies).
    """

    NAME: ClassVar[str] = ""
    PARAMETERS: ClassVar[tuple[Parameter, ...]] = ()
    UNITS: ClassVar[Mapping[str, str]] = {}
    WATER: ClassVar[bool] = False
    #: The wave variable's name and what it is (axis labels).
    VARIABLE: ClassVar[tuple[str, str]] = ("eta", "")

    def __post_init__(self) -> None:
        for p in self.PARAMETERS:
            value = getattr(self, p.key)
            if isinstance(value, bool) or not isinstance(value, int | float):
                raise ParameterError(p.key, value, f"a number ({p.unit})")
            if not (math.isfinite(value) and value > 0):
                raise ParameterError(p.key, value, f"a positive number ({p.unit})")
            object.__setattr__(self, p.key, float(value))

    # -- what each system defines
    def physical(self) -> PhysicalEquation:
        """The laboratory-frame coefficients from the published formulas."""
        raise NotImplementedError

    def length_scale(self) -> float:
        """``X``: the system's natural length (metres)."""
        raise NotImplementedError

    def height_scale(self, eq: PhysicalEquation, length: float, time: float) -> float:
        """``U``: the height that makes ``|a| + sqrt(6 |b|) = 6``, i.e. ``U = 6 / (p + sqrt(6 m))``
        with ``p = |q| T / X`` and ``m = |r| T / X``: the textbook KdV ``u_t + 6 u u_x + u_xxx =
        0`` (``|a| = 6``) without a cubic term, ``|b| = 6`` where the quadratic one vanishes, and
        canonical heights of order one in between."""
        p = abs(eq.q) * time / length
        m = abs(eq.r) * time / length
        return 6.0 / (p + math.sqrt(6.0 * m))

    def checks(self, height: float, width: float) -> list[Check]:
        """The validity ratios of a run whose largest wave is ``height`` and narrowest feature
        ``width`` (physical units)."""
        raise NotImplementedError

    # -- derived, the same for every system
    def scales(self) -> Scales:
        """``U, X, T, c0`` of this system, ``T = X^3 / beta`` so that ``d = 1``."""
        eq = self.physical()
        length = self.length_scale()
        time = length**3 / eq.beta
        return Scales(self.height_scale(eq, length, time), length, time, eq.c0)

    def equation(self, **perturbation: float) -> Equation:
        """The canonical equation of a run (``d = 1`` exactly; ``a = +-6`` exactly when the
        height scale makes it so); ``perturbation`` (``f``, ``g``, ``v``, ``dealias``) is passed
        on in canonical units."""
        eq, s = self.physical(), self.scales()
        a = eq.q * s.height * s.time / s.length
        if abs(abs(a) - 6.0) <= 1e-12 * 6.0:  # the default height scale: exactly the preset
            a = math.copysign(6.0, a)
        b = eq.r * s.height**2 * s.time / s.length
        name = "kdv" if (a == 6.0 and b == 0.0) else "kdv-" if (a == -6.0 and b == 0.0) else ""
        name = name or ("gardner" if a != 0.0 and b != 0.0 else "custom")
        return Equation(a=a, b=b, d=1.0, name=name, **perturbation)

    def plain(self) -> dict[str, Any]:
        """As plain JSON data (the sweep digest, the runs table)."""
        return {"system": self.NAME, **{p.key: getattr(self, p.key) for p in self.PARAMETERS}}

    def unit(self, dimension: str) -> str:
        """The unit of a dimension (:data:`DIMENSIONS`) in this system."""
        return self.UNITS[dimension]


def physical_equation(equation: Equation, scales: Scales) -> PhysicalEquation:
    """The laboratory equation of a canonical one under ``scales`` (the inverse of
    :meth:`System.equation`): ``q = a X / (U T)``, ``r = b X / (U^2 T)``, ``beta = d X^3 / T``."""
    u, x, t = scales.height, scales.length, scales.time
    return PhysicalEquation(
        c0=scales.c0,
        q=equation.a * x / (u * t),
        r=equation.b * x / (u * u * t),
        beta=equation.d * x**3 / t,
    )


def to_physical(value: float, dimension: str, scales: Scales) -> float:
    """A canonical quantity in laboratory units: ``height`` times U, ``length`` (a length at one
    time: box, width, shift, position at t = 0) times X, ``time`` times T, ``speed`` as
    ``c0 + V X / T`` (the laboratory speed), ``speed_difference`` (an uncertainty, a change) times
    ``X / T``, ``wavenumber`` over X, ``frequency`` over T."""
    if dimension == "height":
        return value * scales.height
    if dimension == "length":
        return value * scales.length
    if dimension == "time":
        return value * scales.time
    if dimension == "speed":
        return scales.c0 + value * scales.length / scales.time
    if dimension == "speed_difference":
        return value * scales.length / scales.time
    if dimension == "wavenumber":
        return value / scales.length
    if dimension == "frequency":
        return value / scales.time
    raise ConfigError(f"units: dimension {dimension!r}; expected one of {', '.join(DIMENSIONS)}")


def to_canonical(value: float, dimension: str, scales: Scales) -> float:
    """The inverse of :func:`to_physical`."""
    if dimension == "height":
        return value / scales.height
    if dimension == "length":
        return value / scales.length
    if dimension == "time":
        return value / scales.time
    if dimension == "speed":
        return (value - scales.c0) * scales.time / scales.length
    if dimension == "speed_difference":
        return value * scales.time / scales.length
    if dimension == "wavenumber":
        return value * scales.length
    if dimension == "frequency":
        return value * scales.time
    raise ConfigError(f"units: dimension {dimension!r}; expected one of {', '.join(DIMENSIONS)}")


#: Our thresholds of the validity checks (common practice, no source: the expansions assume these
#: ratios small; the values mark where their first neglected terms reach roughly a tenth).
WEAK_NONLINEARITY = 0.3
LONG_WAVE = 0.5


@dataclass(frozen=True)
class ShallowWater(System):
    """Surface waves on water of depth ``h`` under gravity ``g`` (SI units).

    Derivation (Korteweg & de Vries 1895, Phil. Mag. 39, 422; Whitham 1974, "Linear and Nonlinear
    Waves", Sec. 13.11 [memory]): for an irrotational inviscid layer with surface elevation
    ``eta``, expanding in ``A/h`` and ``(h/l)^2`` (height over depth, depth over length, both small
    and of one order) and keeping waves moving one way gives

        ``eta_t + c0 eta_x + (3 c0 / (2 h)) eta eta_x + (c0 h^2 / 6) eta_xxx = 0``,
        ``c0 = sqrt(g h)``.

    So ``q = 3 c0 / (2 h)``, ``r = 0``, ``beta = c0 h^2 / 6``. Scales: ``X = h``,
    ``T = X^3 / beta = 6 h / c0``, ``U = 2 h / 3`` (canonical KdV ``u_t + 6 u u_x + u_xxx = 0``).
    Its soliton ``2 kappa^2 sech^2(kappa (x - 4 kappa^2 t))`` is the solitary wave
    ``eta = A sech^2((x - c t) / l)`` with ``A = 4 h kappa^2 / 3``,
    ``c = sqrt(g h) (1 + A / (2 h))`` and ``l = h / kappa = sqrt(4 h^3 / (3 A))`` [memory: the
    classical first-order results].

    Validity: the expansion assumes ``A/h`` (height over depth) and ``h/l`` (depth over the wave's
    length) small; a run is warned about when its largest wave has ``A/h > 0.3`` or its narrowest
    feature ``h/l > 0.5`` (our thresholds; the exact solitary wave stops existing near
    ``A/h = 0.83`` and breaks earlier, Longuet-Higgins & Fenton 1974 [memory]).
    """

    depth: float
    gravity: float = STANDARD_GRAVITY

    NAME: ClassVar[str] = "shallow-water"
    PARAMETERS: ClassVar[tuple[Parameter, ...]] = (
        Parameter("depth", "m", "still-water depth h"),
        Parameter("gravity", "m/s^2", "gravitational acceleration g", STANDARD_GRAVITY),
    )
    UNITS: ClassVar[Mapping[str, str]] = {"height": "m", **SI_UNITS}
    WATER: ClassVar[bool] = True
    VARIABLE: ClassVar[tuple[str, str]] = ("eta", "surface elevation")

    def physical(self) -> PhysicalEquation:
        """``c0 = sqrt(g h)``, ``q = 3 c0 / (2 h)``, ``r = 0``, ``beta = c0 h^2 / 6``."""
        h = self.depth
        c0 = math.sqrt(self.gravity * h)
        return PhysicalEquation(c0=c0, q=1.5 * c0 / h, r=0.0, beta=c0 * h * h / 6.0)

    def length_scale(self) -> float:
        """``X = h``."""
        return self.depth

    def checks(self, height: float, width: float) -> list[Check]:
        """``A/h`` and ``h/l`` (see the class doc)."""
        h = self.depth
        return [
            Check(
                "A/h", height / h, WEAK_NONLINEARITY, "wave height over depth (weakly nonlinear)"
            ),
            Check("h/l", h / width, LONG_WAVE, "depth over the wave's length scale (long wave)"),
        ]


@dataclass(frozen=True)
class TwoLayerInterface(System):
    """Waves on the interface of two immiscible layers under a rigid lid (SI units).

    Layers: upper depth ``h1`` and density ``rho1``, lower ``h2`` and ``rho2 > rho1``; ``eta`` is
    the interface's upward displacement. The weakly nonlinear expansion to second order in
    amplitude (Djordjevic & Redekopp 1978, J. Phys. Oceanogr. 8, 1016; Kakutani & Yamasaki 1978,
    J. Phys. Soc. Japan 45, 674 [memory]) gives the Gardner equation with

        ``c0^2 = g (rho2 - rho1) h1 h2 / (rho1 h2 + rho2 h1)``,
        ``q = (3 c0 / (2 h1 h2)) (rho2 h1^2 - rho1 h2^2) / (rho1 h2 + rho2 h1)``,
        ``r = (3 c0 / (h1 h2)^2) [(7/8) ((rho2 h1^2 - rho1 h2^2) / (rho1 h2 + rho2 h1))^2
        - (rho2 h1^3 + rho1 h2^3) / (rho1 h2 + rho2 h1)]``,
        ``beta = (c0 h1 h2 / 6) (rho1 h1 + rho2 h2) / (rho1 h2 + rho2 h1)`` [memory].

    In the Boussinesq limit (``rho1 -> rho2``) these become ``q = (3 c0 / 2) (h1 - h2) / (h1
    h2)``, ``r = -(3 c0 / (8 h1^2 h2^2)) (h1^2 + 6 h1 h2 + h2^2)``, ``beta = c0 h1 h2 / 6``
    (checked in the tests). The quadratic coefficient changes sign at the critical depth ratio
    ``h1 / h2 = sqrt(rho1 / rho2)`` (``h1 = h2`` in the Boussinesq limit): a thinner upper layer
    carries waves of depression, a thicker one waves of elevation. ``r < 0`` there, so with
    ``d > 0`` the canonical Gardner equation has ``b d < 0``: one polarity, the sign of ``q``, up
    to the table-top height ``|q / r|`` (:class:`kdvsweep.model.SolitonForm`).

    Scales: ``X = h1 + h2``, ``T = X^3 / beta`` and the default height scale (``|a| + sqrt(6
    |b|) = 6``, finite through the critical ratio, where ``a = 0`` and ``|b| = 6``).

    Validity: ``A/h_thin`` (height over the thinner layer) above 0.3 is past weak nonlinearity
    (the Gardner form extends the range of KdV, but a displacement cannot approach the layer it
    squeezes), and ``H/l`` (total depth over the wave's length scale) above 0.5 is no longer a
    long wave (our thresholds).
    """

    upper_depth: float
    upper_density: float
    lower_depth: float
    lower_density: float
    gravity: float = STANDARD_GRAVITY

    NAME: ClassVar[str] = "two-layer-interface"
    PARAMETERS: ClassVar[tuple[Parameter, ...]] = (
        Parameter("upper_depth", "m", "depth h1 of the upper layer"),
        Parameter("upper_density", "kg/m^3", "density rho1 of the upper layer"),
        Parameter("lower_depth", "m", "depth h2 of the lower layer"),
        Parameter("lower_density", "kg/m^3", "density rho2 of the lower layer (> rho1)"),
        Parameter("gravity", "m/s^2", "gravitational acceleration g", STANDARD_GRAVITY),
    )
    UNITS: ClassVar[Mapping[str, str]] = ShallowWater.UNITS
    WATER: ClassVar[bool] = True
    VARIABLE: ClassVar[tuple[str, str]] = ("eta", "interface displacement")

    def __post_init__(self) -> None:
        super().__post_init__()
        if not self.lower_density > self.upper_density:
            raise ParameterError(
                "lower_density",
                self.lower_density,
                f"a density above upper_density = {self.upper_density:g} kg/m^3 (a stable "
                "stratification: the lighter layer on top)",
            )

    def physical(self) -> PhysicalEquation:
        """The Gardner coefficients of the class doc."""
        h1, h2, r1, r2 = self.upper_depth, self.lower_depth, self.upper_density, self.lower_density
        den = r1 * h2 + r2 * h1
        c0 = math.sqrt(self.gravity * (r2 - r1) * h1 * h2 / den)
        m = (r2 * h1 * h1 - r1 * h2 * h2) / den
        q = 1.5 * c0 * m / (h1 * h2)
        r = 3.0 * c0 / (h1 * h2) ** 2 * (0.875 * m * m - (r2 * h1**3 + r1 * h2**3) / den)
        beta = c0 * h1 * h2 / 6.0 * (r1 * h1 + r2 * h2) / den
        return PhysicalEquation(c0=c0, q=q, r=r, beta=beta)

    def critical_ratio(self) -> float:
        """``h1 / h2`` at which ``q = 0``: ``sqrt(rho1 / rho2)``."""
        return math.sqrt(self.upper_density / self.lower_density)

    def length_scale(self) -> float:
        """``X = h1 + h2``."""
        return self.upper_depth + self.lower_depth

    def checks(self, height: float, width: float) -> list[Check]:
        """``A/h_thin`` and ``H/l`` (see the class doc)."""
        thin = min(self.upper_depth, self.lower_depth)
        total = self.upper_depth + self.lower_depth
        return [
            Check(
                "A/h_thin",
                height / thin,
                WEAK_NONLINEARITY,
                "interface displacement over the thinner layer's depth (weakly nonlinear)",
            ),
            Check("H/l", total / width, LONG_WAVE, "total depth over the wave's length scale"),
        ]


@dataclass(frozen=True)
class IonAcousticPlasma(System):
    """Ion-acoustic waves in a plasma of cold ions and isothermal (Boltzmann) electrons.

    Parameters: ``electron_temperature`` ``T_e`` in electronvolts, ``density`` ``n0`` in m^-3,
    ``ion_mass`` in atomic mass units (default: the proton). With the ion sound speed
    ``c_s = sqrt(e T_e / m_i)``, the Debye length ``lambda_D = sqrt(eps0 T_e / (e n0))`` (``T_e``
    in volts) and the potential unit ``T_e`` (volts), the reductive perturbation expansion
    (Washimi & Taniuti 1966, Phys. Rev. Lett. 17, 996 [memory]) gives for the electrostatic
    potential, in these units,

        ``phi_t + phi_x + phi phi_x + (1/2) phi_xxx = 0``,

    i.e. ``c0 = c_s``, ``q = c_s / T_e``, ``r = 0``, ``beta = c_s lambda_D^2 / 2``. Its solitary
    wave of excess Mach number ``delta = c / c_s - 1`` has the peak potential ``3 delta T_e`` and
    the width ``lambda_D sqrt(2 / delta)`` [memory]. Scales: ``X = lambda_D``, ``T = X^3 / beta =
    2 lambda_D / c_s`` (twice the inverse ion plasma frequency), ``U = 3 T_e`` volts (canonical
    KdV ``u_t + 6 u u_x + u_xxx = 0``).

    Validity: ``e phi / T_e`` (peak potential over the electron temperature) above 0.3 is past
    weak nonlinearity (fully nonlinear ion-acoustic solitary waves exist only up to a Mach number
    near 1.6, Sagdeev 1966 [memory]), and ``lambda_D / l`` (Debye length over the wave's length
    scale) above 0.5 is no longer a long wave (our thresholds).
    """

    electron_temperature: float
    density: float
    ion_mass: float = PROTON_MASS_U

    NAME: ClassVar[str] = "ion-acoustic-plasma"
    PARAMETERS: ClassVar[tuple[Parameter, ...]] = (
        Parameter("electron_temperature", "eV", "electron temperature T_e"),
        Parameter("density", "1/m^3", "unperturbed plasma density n0"),
        Parameter("ion_mass", "u", "ion mass in atomic mass units", PROTON_MASS_U),
    )
    UNITS: ClassVar[Mapping[str, str]] = {"height": "V", **SI_UNITS}
    VARIABLE: ClassVar[tuple[str, str]] = ("phi", "electrostatic potential")

    def sound_speed(self) -> float:
        """``c_s = sqrt(e T_e / m_i)`` (m/s)."""
        return math.sqrt(
            ELEMENTARY_CHARGE * self.electron_temperature / (self.ion_mass * ATOMIC_MASS_UNIT)
        )

    def debye_length(self) -> float:
        """``lambda_D = sqrt(eps0 T_e / (e n0))`` with ``T_e`` in volts (m)."""
        return math.sqrt(
            VACUUM_PERMITTIVITY * self.electron_temperature / (ELEMENTARY_CHARGE * self.density)
        )

    def physical(self) -> PhysicalEquation:
        """``c0 = c_s``, ``q = c_s / T_e``, ``r = 0``, ``beta = c_s lambda_D^2 / 2``."""
        cs, ld = self.sound_speed(), self.debye_length()
        return PhysicalEquation(
            c0=cs, q=cs / self.electron_temperature, r=0.0, beta=0.5 * cs * ld**2
        )

    def length_scale(self) -> float:
        """``X = lambda_D``."""
        return self.debye_length()

    def checks(self, height: float, width: float) -> list[Check]:
        """``e phi / T_e`` and ``lambda_D / l`` (see the class doc)."""
        return [
            Check(
                "e phi/T_e",
                height / self.electron_temperature,
                WEAK_NONLINEARITY,
                "peak potential over the electron temperature (weakly nonlinear)",
            ),
            Check(
                "lambda_D/l",
                self.debye_length() / width,
                LONG_WAVE,
                "Debye length over the wave's length scale (long wave)",
            ),
        ]


#: The systems by their ``[units] system`` name.
SYSTEMS: dict[str, type[System]] = {
    cls.NAME: cls for cls in (ShallowWater, TwoLayerInterface, IonAcousticPlasma)
}


def system_class(name: str) -> type[System]:
    """The system named ``name``; ConfigError naming the choices otherwise."""
    if name not in SYSTEMS:
        raise ConfigError(f"units: system {name!r}; expected one of {', '.join(SYSTEMS)}")
    return SYSTEMS[name]


def make_system(name: str, values: Mapping[str, float]) -> System:
    """A system from its name and parameter values (defaults filled in); ParameterError naming
    the key for a value out of range."""
    cls = system_class(name)
    keys = {f.name for f in fields(cls)}
    unknown = sorted(set(values) - keys)
    if unknown:
        raise ConfigError(
            f"units: unknown key {unknown[0]!r} for system {name!r}; expected one of "
            f"{', '.join(p.key for p in cls.PARAMETERS)}"
        )
    system = cls(**values)
    try:  # parameters so extreme that a scale under- or overflows float64
        scales = system.scales()
        system.equation()
        ok = all(math.isfinite(v) and v > 0 for v in (*astuple(scales),))
    except (ArithmeticError, ValueError, ConfigError):
        ok = False
    if not ok:
        shown = ", ".join(f"{k} = {v:.3g}" for k, v in system.plain().items() if k != "system")
        raise ConfigError(
            f"units: {shown} give scales or coefficients that are not finite positive numbers "
            "in float64; expected parameters of a physical size"
        )
    return system


def from_plain(data: Mapping[str, Any]) -> System:
    """The inverse of :meth:`System.plain`."""
    values = {k: float(v) for k, v in data.items() if k != "system"}
    return make_system(str(data["system"]), values)


# ----------------------------------------------------------------------------- columns


#: The physical columns of the runs table and what each converts: ``(name, source, dimension,
#: meaning)``; ``source`` is the canonical column, or ``""`` for a value of the system itself.
RUN_QUANTITIES: tuple[tuple[str, str, str, str], ...] = (
    ("phys_length", "length", "length", "period of the box, X length"),
    ("phys_dt", "dt", "time", "time step, T dt"),
    ("phys_t_end", "t_end", "time", "end time of the run, T t_end"),
    ("phys_max_abs_u", "max_abs_u", "height", "largest height of the final state, U max_abs_u"),
    ("phys_t_closest", "t_closest", "time", "time of a pair's closest approach, T t_closest"),
    ("phys_c0", "", "speed", "linear long-wave speed c0: the run's frame moves at it"),
    ("phys_height_scale", "", "height", "U: a canonical height u is U u"),
    ("phys_length_scale", "", "length", "X: a canonical length x is X x (x - c0 t in the lab)"),
    ("phys_time_scale", "", "time", "T: a canonical time t is T t"),
)

#: The physical columns of the solitons table (collision analysis and content alike).
SOLITON_QUANTITIES: tuple[tuple[str, str, str, str], ...] = (
    ("phys_amplitude", "amplitude", "height", "peak height, U amplitude"),
    ("phys_speed", "speed", "speed", "laboratory speed, c0 + speed X / T"),
    ("phys_kappa", "kappa", "wavenumber", "kappa per unit length, kappa / X"),
    ("phys_kappa_measured", "kappa_measured", "wavenumber", "measured kappa, kappa_measured / X"),
    ("phys_speed_before", "speed_before", "speed", "laboratory speed before the collisions"),
    ("phys_speed_after", "speed_after", "speed", "laboratory speed after the collisions"),
    ("phys_amplitude_end", "amplitude_end", "height", "peak height at the end, U amplitude_end"),
    ("phys_speed_end", "speed_end", "speed", "laboratory speed at the end (speed_end)"),
    (
        "phys_amplitude_predicted",
        "amplitude_predicted",
        "height",
        "predicted peak height at the end, U amplitude_predicted",
    ),
    (
        "phys_speed_predicted",
        "speed_predicted",
        "speed",
        "predicted laboratory speed at the end (speed_predicted)",
    ),
    ("phys_offset_before", "offset_before", "length", "x^- in the run's frame, X offset_before"),
    ("phys_offset_after", "offset_after", "length", "x^+ in the run's frame, X offset_after"),
    ("phys_x0", "x0", "length", "centre at t = 0, X x0"),
    (
        "phys_shift_predicted",
        "shift_predicted",
        "length",
        "predicted phase shift, X shift_predicted",
    ),
    ("phys_shift_measured", "shift_measured", "length", "measured phase shift, X shift_measured"),
    (
        "phys_shift_uncertainty",
        "shift_uncertainty",
        "length",
        "error estimate of the shift, X shift_uncertainty",
    ),
)

#: Physical columns of the content's solitons (with the content columns only).
CONTENT_SOLITON_QUANTITIES: tuple[tuple[str, str, str, str], ...] = (
    ("phys_amplitude_ist", "amplitude_ist", "height", "predicted peak height, U amplitude_ist"),
    ("phys_speed_ist", "speed_ist", "speed", "predicted laboratory speed, c0 + speed_ist X / T"),
    (
        "phys_amplitude_uncertainty",
        "amplitude_uncertainty",
        "height",
        "error estimate of the amplitude, U amplitude_uncertainty",
    ),
    (
        "phys_speed_uncertainty",
        "speed_uncertainty",
        "speed_difference",
        "error estimate of the speed, X / T speed_uncertainty",
    ),
    ("phys_t_separated", "t_separated", "time", "time it stands clear, T t_separated"),
    ("phys_frequency", "frequency", "frequency", "breather: frequency / T"),
)


def parameter_columns() -> tuple[tuple[str, str, str], ...]:
    """``(column, system name, meaning)`` of every system's parameters, each column once
    (``phys_gravity`` is shared)."""
    out: dict[str, tuple[str, str, str]] = {}
    for cls in SYSTEMS.values():
        for p in cls.PARAMETERS:
            name = f"phys_{p.key}"
            if name in out:
                prev = out[name]
                out[name] = (name, f"{prev[1]}, {cls.NAME}", prev[2])
            else:
                out[name] = (name, cls.NAME, f"{p.meaning} ({p.unit})")
    return tuple(out.values())


def column_unit(system: str, column: str) -> str:
    """The unit of a physical column in a system (its Parquet field metadata)."""
    cls = system_class(system)
    for p in cls.PARAMETERS:
        if column == f"phys_{p.key}":
            return p.unit
    for name, _, dimension, _ in (
        *RUN_QUANTITIES,
        *SOLITON_QUANTITIES,
        *CONTENT_SOLITON_QUANTITIES,
    ):
        if name == column:
            return cls.UNITS[dimension]
    raise ConfigError(f"units: {column!r} is not a physical column")


def run_columns(system: System) -> dict[str, float]:
    """The physical values of one run's row that depend on the system alone: its parameters,
    ``phys_c0`` and the scales."""
    s = system.scales()
    out = {f"phys_{p.key}": float(getattr(system, p.key)) for p in system.PARAMETERS}
    out.update(
        phys_c0=s.c0,
        phys_height_scale=s.height,
        phys_length_scale=s.length,
        phys_time_scale=s.time,
    )
    return out


def convert_row(
    row: Mapping[str, Any], quantities: tuple[tuple[str, str, str, str], ...], scales: Scales
) -> dict[str, float]:
    """The physical columns of ``row`` for ``quantities`` whose canonical source it holds (a
    null or non-finite source gives NaN)."""
    out: dict[str, float] = {}
    for name, source, dimension, _ in quantities:
        if not source or source not in row:
            continue
        value = row[source]
        if value is None or isinstance(value, bool) or not isinstance(value, int | float):
            out[name] = math.nan
            continue
        out[name] = (
            to_physical(float(value), dimension, scales) if math.isfinite(value) else math.nan
        )
    return out


# ----------------------------------------------------------------------------- figures


@dataclass(frozen=True)
class AxisScale:
    """How a figure shows one canonical variable of a run: ``physical = scale * canonical``
    (the run's frame: positions are ``x - c0 t``), and the axis label with its unit."""

    label: str
    scale: float


def run_axes(system_name: str | None, row: Mapping[str, Any]) -> dict[str, AxisScale] | None:
    """Axis labels and scales for the figures of one run of a store, or ``None`` without units.

    ``system_name`` is the store's ``manifest["layout"]["units"]`` (``Results.manifest``);
    ``row`` the run's row of the runs table (its ``phys_*_scale`` columns). Returns
    ``{"x": ..., "t": ..., "u": ...}``: plot ``scale * x`` against the label ``x - c0 t (m)``, and
    so on (the run moves with the linear long-wave speed ``c0``).
    """
    if not system_name:
        return None
    cls = system_class(system_name)
    try:
        x = float(row["phys_length_scale"])
        t = float(row["phys_time_scale"])
        u = float(row["phys_height_scale"])
    except (KeyError, TypeError, ValueError):
        return None
    name, what = cls.VARIABLE
    return {
        "x": AxisScale(f"x - c0 t ({cls.UNITS['length']})", x),
        "t": AxisScale(f"t ({cls.UNITS['time']})", t),
        "u": AxisScale(f"{name}: {what} ({cls.UNITS['height']})", u),
    }


def store_system(manifest: Mapping[str, Any]) -> str | None:
    """The ``[units]`` system of a store (``Results.manifest``), or ``None`` without units."""
    layout = manifest.get("layout")
    name = layout.get("units") if isinstance(layout, Mapping) else None
    return name if isinstance(name, str) and name in SYSTEMS else None


def axes_for_run(
    manifest: Mapping[str, Any], runs: Any, run_id: int
) -> dict[str, AxisScale] | None:
    """:func:`run_axes` of run ``run_id`` of a store: ``manifest`` and ``runs`` are
    ``Results.manifest`` and ``Results.runs`` (a DataFrame); ``None`` without units or without
    that run."""
    name = store_system(manifest)
    if name is None:
        return None
    rows = runs[runs["run_id"] == run_id]
    return run_axes(name, rows.iloc[0]) if len(rows) == 1 else None


def column_label(manifest: Mapping[str, Any], column: str) -> str:
    """An axis label for a column of a store's tables: ``phys_speed (m/s)`` for a physical
    column of a store with units, the column's name otherwise."""
    name = store_system(manifest)
    if name is None or not column.startswith("phys_"):
        return column
    return f"{column} ({column_unit(name, column)})"


__all__ = [
    "CAUTION",
    "DIMENSIONS",
    "INITIAL_DIMENSIONS",
    "SYSTEMS",
    "AxisScale",
    "Check",
    "IonAcousticPlasma",
    "Parameter",
    "ParameterError",
    "PhysicalEquation",
    "Scales",
    "ShallowWater",
    "System",
    "TwoLayerInterface",
    "axes_for_run",
    "column_label",
    "column_unit",
    "convert_row",
    "from_plain",
    "make_system",
    "parameter_columns",
    "physical_equation",
    "run_axes",
    "run_columns",
    "store_system",
    "system_class",
    "to_canonical",
    "to_physical",
]
