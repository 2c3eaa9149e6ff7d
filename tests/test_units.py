"""Physical units: the three systems' coefficients, the round trip, sweeps stated in physical units.

Sources are named beside each check; [memory] marks formulas written from memory of the papers.
"""

from __future__ import annotations

import math

import pytest

from kdvsweep import units
from kdvsweep.exceptions import ConfigError

SYSTEMS = [
    units.ShallowWater(depth=0.4, gravity=9.81),
    units.ShallowWater(depth=3000.0),
    units.TwoLayerInterface(
        upper_depth=20.0, upper_density=1020.0, lower_depth=80.0, lower_density=1026.0
    ),
    units.TwoLayerInterface(
        upper_depth=0.3, upper_density=998.0, lower_depth=0.1, lower_density=1100.0
    ),
    units.IonAcousticPlasma(electron_temperature=2.0, density=1e15),
    units.IonAcousticPlasma(electron_temperature=10.0, density=3e17, ion_mass=39.96),
]


def _close(x: float, y: float, rel: float = 1e-13) -> bool:
    return math.isclose(x, y, rel_tol=rel, abs_tol=1e-300)


@pytest.mark.parametrize("system", SYSTEMS, ids=lambda s: s.NAME)
def test_round_trip_canonical_physical_canonical(system: units.System) -> None:
    # common practice, no source: the maps are inverse to each other to round-off
    scales = system.scales()
    eq = system.equation()
    assert eq.d == 1.0
    phys = units.physical_equation(eq, scales)
    formula = system.physical()
    for key in ("c0", "q", "r", "beta"):
        assert _close(getattr(phys, key), getattr(formula, key), 1e-14), key
    # the canonical coefficients back from the laboratory ones
    u, x, t = scales.height, scales.length, scales.time
    assert _close(phys.q * u * t / x, eq.a)
    assert _close(phys.beta * t / x**3, eq.d)
    assert _close(phys.r * u * u * t / x, eq.b) or eq.b == phys.r == 0.0
    for dim in units.DIMENSIONS:
        for value in (0.0, 0.37, -2.5, 1e3):
            back = units.to_canonical(units.to_physical(value, dim, scales), dim, scales)
            assert math.isclose(back, value, rel_tol=1e-12, abs_tol=1e-12), (dim, value)
    # the system's parameters through the plain form
    assert units.from_plain(system.plain()) == system


def test_shallow_water_is_textbook_kdv() -> None:
    # Korteweg & de Vries 1895; Whitham 1974, Sec. 13.11 [memory]:
    # eta_t + c0 eta_x + (3 c0 / 2h) eta eta_x + (c0 h^2 / 6) eta_xxx = 0, c0 = sqrt(g h)
    h, g = 0.4, 9.81
    s = units.ShallowWater(depth=h, gravity=g)
    c0 = math.sqrt(g * h)
    phys = s.physical()
    assert _close(phys.c0, c0)
    assert _close(phys.q, 1.5 * c0 / h)
    assert _close(phys.beta, c0 * h * h / 6)
    assert phys.r == 0.0
    eq = s.equation()
    assert (eq.a, eq.b, eq.d, eq.name) == (6.0, 0.0, 1.0, "kdv")
    # the canonical soliton 2 kappa^2 sech^2 maps to A = 4 h kappa^2 / 3 and
    # c = c0 (1 + A / (2 h)) exactly at first order (the same first-order theory)
    kappa = 0.3
    scales = s.scales()
    form = eq.soliton_form
    amp = units.to_physical(form.amplitude(kappa), "height", scales)
    speed = units.to_physical(form.speed(kappa), "speed", scales)
    assert _close(amp, 4 * h * kappa**2 / 3)
    assert _close(speed, c0 * (1 + amp / (2 * h)))
    assert _close(
        units.to_physical(form.width(kappa), "length", scales), math.sqrt(4 * h**3 / (3 * amp))
    )


def test_two_layer_boussinesq_limit() -> None:
    # Djordjevic & Redekopp 1978; Kakutani & Yamasaki 1978 [memory], Boussinesq limit:
    # q = (3 c0 / 2)(h1 - h2)/(h1 h2), r = -(3 c0 / (8 h1^2 h2^2))(h1^2 + 6 h1 h2 + h2^2),
    # beta = c0 h1 h2 / 6, c0^2 = g' h1 h2 / (h1 + h2) with g' = g (rho2 - rho1) / rho
    h1, h2, g, rho, dr = 15.0, 60.0, 9.81, 1.0, 2.0**-30  # dr exact in binary
    s = units.TwoLayerInterface(
        upper_depth=h1, upper_density=rho, lower_depth=h2, lower_density=rho + dr, gravity=g
    )
    phys = s.physical()
    c0 = math.sqrt(g * dr / rho * h1 * h2 / (h1 + h2))
    assert math.isclose(phys.c0, c0, rel_tol=1e-8)
    assert math.isclose(phys.q, 1.5 * c0 * (h1 - h2) / (h1 * h2), rel_tol=1e-8)
    r = -3 * c0 / (8 * h1**2 * h2**2) * (h1**2 + 6 * h1 * h2 + h2**2)
    assert math.isclose(phys.r, r, rel_tol=1e-8)
    assert math.isclose(phys.beta, c0 * h1 * h2 / 6, rel_tol=1e-8)


def test_two_layer_quadratic_coefficient_changes_sign_at_the_critical_ratio() -> None:
    # Djordjevic & Redekopp 1978 [memory]: q = 0 where rho2 h1^2 = rho1 h2^2, i.e.
    # h1 / h2 = sqrt(rho1 / rho2) (h1 = h2 in the Boussinesq limit); a thinner upper layer
    # (h1 / h2 below it) carries depressions
    rho1, rho2, h2 = 1000.0, 1200.0, 10.0
    critical = math.sqrt(rho1 / rho2)

    def system(ratio: float) -> units.TwoLayerInterface:
        return units.TwoLayerInterface(
            upper_depth=ratio * h2, upper_density=rho1, lower_depth=h2, lower_density=rho2
        )

    assert _close(system(1.0).critical_ratio(), critical)
    assert (
        system(critical * (1 - 1e-6)).physical().q < 0 < system(critical * (1 + 1e-6)).physical().q
    )
    assert abs(system(critical).physical().q) < 1e-12 * abs(system(0.5).physical().q)
    below, above = system(0.5).equation(), system(2.0).equation()
    assert below.soliton_form.sign == -1
    assert above.soliton_form.sign == 1
    # r < 0 on both sides: b d < 0, one polarity each, table-top height |q / r| in physical units
    for ratio in (0.5, 2.0):
        s = system(ratio)
        form = s.equation().soliton_form
        assert form.polarities == (form.sign,)
        top = units.to_physical(abs(form.alpha) / -form.mu, "height", s.scales())
        assert math.isclose(top, abs(s.physical().q / s.physical().r), rel_tol=1e-12)
    # the canonical coefficients stay finite through the critical ratio: |a| + sqrt(6|b|) = 6
    eq = system(critical).equation()
    assert math.isclose(abs(eq.a) + math.sqrt(6 * abs(eq.b)), 6.0, rel_tol=1e-12)


def test_ion_acoustic_normalisation() -> None:
    # Washimi & Taniuti 1966 [memory]: phi_t + phi_x + phi phi_x + phi_xxx / 2 = 0 in units of
    # T_e (potential), lambda_D (length), 1 / omega_pi = lambda_D / c_s (time)
    te, n0, mass = 3.0, 2e16, 4.0026
    s = units.IonAcousticPlasma(electron_temperature=te, density=n0, ion_mass=mass)
    # SI constants (CODATA 2018 [memory])
    cs = math.sqrt(1.602176634e-19 * te / (mass * 1.66053906660e-27))
    ld = math.sqrt(8.8541878128e-12 * te / (1.602176634e-19 * n0))
    phys = s.physical()
    assert _close(phys.c0, cs)
    assert _close(s.debye_length(), ld)
    # in normalised units: coefficients 1 (quadratic) and 1/2 (dispersion)
    assert _close(phys.q * te * (ld / cs) / ld, 1.0)
    assert _close(phys.beta * (ld / cs) / ld**3, 0.5)
    eq = s.equation()
    assert (eq.a, eq.d, eq.name) == (6.0, 1.0, "kdv")


def test_parameters_out_of_range_name_the_key() -> None:
    with pytest.raises(ConfigError, match=r"units\.depth: given -1\.0, expected a positive"):
        units.ShallowWater(depth=-1.0)
    with pytest.raises(ConfigError, match=r"units\.lower_density: .*stable stratification"):
        units.TwoLayerInterface(
            upper_depth=1.0, upper_density=1000.0, lower_depth=1.0, lower_density=1000.0
        )
    with pytest.raises(ConfigError, match=r"expected one of shallow-water"):
        units.system_class("deep-water")


def test_run_axes_from_a_runs_row() -> None:
    s = units.ShallowWater(depth=2.0)
    row = units.run_columns(s)
    axes = units.run_axes("shallow-water", row)
    assert axes is not None
    assert axes["x"].scale == 2.0
    assert axes["x"].label == "x - c0 t (m)"
    assert axes["u"].label.endswith("(m)")
    assert axes["t"].label == "t (s)"
    assert units.run_axes(None, row) is None
    plasma = units.run_axes("ion-acoustic-plasma", units.run_columns(SYSTEMS[4]))
    assert plasma is not None
    assert plasma["u"].label.endswith("(V)")
