"""Physical units: the three systems' coefficients, the round trip, sweeps stated in physical units.

Sources are named beside each check; [memory] marks formulas written from memory of the papers.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow.parquet as pq
import pytest
from conftest import make_store
from test_columns import _table

from kdvsweep import columns, units
from kdvsweep.columns import Layout
from kdvsweep.exceptions import ConfigError
from kdvsweep.results import load
from kdvsweep.sweep import load_sweep
from kdvsweep.sweep.runner import execute

ROOT = Path(__file__).resolve().parent.parent
SWEEPS = ROOT / "sweeps"
README = ROOT / "README.md"

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
    with pytest.raises(ConfigError, match=r"depth = 1e-200, .* not finite positive numbers"):
        units.make_system("shallow-water", {"depth": 1e-200})  # beta underflows to 0


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


# ----------------------------------------------------------------------------- sweeps


def _sweep(
    tmp_path: Path,
    units_table: str,
    initial: str,
    extra: str = "",
    name: str = "u",
    length: float = 160,
) -> Any:
    """A sweep file with ``[units]`` (one soliton by default, sized by hand: ``length`` with
    ``6.4 length`` points), loaded."""
    text = f"""\
[sweep]
name = "{name}"
{extra}
[units]
{units_table}

[model]
points = {round(6.4 * length)}
length = {length}
dt = 0.01

[initial]
kind = "solitons"
{initial}

[run]
end = 40
frame_every = 1.0
keep_frames = true
"""
    path = tmp_path / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return load_sweep(path)


def _lab_track(spec: Any, result: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    """The wave's laboratory centre (first moment of |u| in a window around its peak) and width
    scale ``l`` of ``A sech^2(x / l)`` (second moment: ``<x^2> = pi^2 l^2 / 12``, since
    ``int x^2 sech^2 x dx = pi^2 / 6`` and ``int sech^2 x dx = 2``), at each kept frame, with the
    laboratory times and the peak height (physical units)."""
    s = spec.units.scales()
    grid = spec.model.grid
    x = grid.x
    centres, widths, peaks = [], [], []
    for u in result.frames:
        w = np.abs(u)
        j = int(np.argmax(w))
        z = (x - x[j] + 0.5 * grid.length) % grid.length - 0.5 * grid.length
        win = np.abs(z) < 0.4 * grid.length
        mass = np.sum(w[win])
        zc = np.sum(z[win] * w[win]) / mass
        centres.append(x[j] + zc)
        widths.append(math.sqrt(12 * np.sum((z[win] - zc) ** 2 * w[win]) / mass) / math.pi)
        peaks.append(float(u[j]))
    t_lab = result.frame_times * s.time
    x_lab = np.unwrap(np.asarray(centres), period=grid.length) * s.length + s.c0 * t_lab
    return t_lab, x_lab, np.asarray(widths) * s.length, float(np.median(peaks)) * s.height


def test_shallow_water_solitary_wave_speed_and_width(tmp_path: Path) -> None:
    # Korteweg & de Vries 1895; Whitham 1974, Sec. 13.11 [memory]: a solitary wave of height A on
    # depth h moves at c = sqrt(g h) (1 + A / (2 h)) and has the width scale
    # l = sqrt(4 h^3 / (3 A)) of eta = A sech^2((x - c t) / l), to first order in A / h. The
    # simulation (KdV, to which the run reduces) must agree to well within the next order,
    # (A / h)^2; it agrees to its own accuracy (measured here: speed 1.4e-13 relative, the excess
    # speed c - sqrt(g h) 3e-12, the width 1.1e-10).
    h, g, A = 0.5, 9.81, 0.05
    sweep = _sweep(
        tmp_path, f"system = 'shallow-water'\ndepth = {h}\ngravity = {g}", f"amplitude = [{A}]"
    )
    assert sweep.warnings == ()
    (spec,) = sweep.runs
    result = execute(spec)
    assert result.ok, result.run_row["reason"]
    t, x, width, peak = _lab_track(spec, result)
    speed = np.polyfit(t, x, 1)[0]
    c = math.sqrt(g * h) * (1 + A / (2 * h))
    l_theory = math.sqrt(4 * h**3 / (3 * A))
    speed_err = abs(speed / c - 1)
    width_err = float(np.max(np.abs(width / l_theory - 1)))
    assert speed_err < 1e-9 < (A / h) ** 2
    assert abs(speed - c) / (c - math.sqrt(g * h)) < 1e-9
    assert width_err < 1e-8
    assert abs(peak / A - 1) < 1e-3  # the grid's highest point (dx = 0.16 h, l = 3.7 h)
    # the runs table in physical units
    row = result.run_row
    assert row["phys_depth"] == h
    assert math.isclose(row["phys_c0"], math.sqrt(g * h), rel_tol=1e-15)
    assert math.isclose(row["phys_length"], 160 * h, rel_tol=1e-15)
    assert math.isclose(row["phys_t_end"], 40 * 6 * h / math.sqrt(g * h), rel_tol=1e-14)


def test_two_layer_polarity_follows_the_critical_ratio(tmp_path: Path) -> None:
    # Djordjevic & Redekopp 1978 [memory]: q changes sign at h1 / h2 = sqrt(rho1 / rho2); below it
    # (thin upper layer) interfacial solitary waves are depressions, above it elevations. Run one
    # wave of 1 m on each side and look at the sign of the simulated displacement.
    rho1, rho2, total, A = 1000.0, 1030.0, 50.0, 1.0
    critical = math.sqrt(rho1 / rho2)
    text = (
        f"system = 'two-layer-interface'\nupper_depth = 'h1'\nlower_depth = '{total} - h1'\n"
        f"upper_density = {rho1}\nlower_density = {rho2}"
    )
    ratios = [0.6, 0.9, 1.1, 1.6]
    h1 = [total * r / (1 + r) for r in ratios]
    sweep = _sweep(tmp_path, text, f"amplitude = [{A}]", f"[[vary]]\nh1 = {h1}\n", "layers")
    for spec, ratio in zip(sweep.runs, ratios, strict=True):
        result = execute(spec)
        assert result.ok, result.run_row["reason"]
        expected = 1 if ratio > critical else -1
        final = result.frames[-1] * spec.units.scales().height
        extreme = final[np.argmax(np.abs(final))]
        assert np.sign(extreme) == expected, ratio
        assert math.isclose(abs(extreme), A, rel_tol=2e-3), (ratio, extreme)
        assert result.soliton_rows[0]["sign"] == expected


def test_ion_acoustic_soliton_speed(tmp_path: Path) -> None:
    # Washimi & Taniuti 1966 [memory]: the KdV ion-acoustic soliton of peak potential phi_m moves
    # at the Mach number M = 1 + phi_m / (3 T_e) (potential in volts, T_e in eV) and has the width
    # lambda_D sqrt(2 / (M - 1)). Measured here: M to 2e-13, M - 1 to 5e-12, the width to 4e-11.
    te, n0, mass, phi = 2.0, 1e16, 1.007276466621, 0.24
    table = f"system = 'ion-acoustic-plasma'\nelectron_temperature = {te}\ndensity = {n0}"
    sweep = _sweep(tmp_path, table, f"amplitude = [{phi}]", name="plasma", length=320)
    (spec,) = sweep.runs
    result = execute(spec)
    assert result.ok, result.run_row["reason"]
    t, x, width, _ = _lab_track(spec, result)
    cs = math.sqrt(1.602176634e-19 * te / (mass * 1.66053906660e-27))  # CODATA 2018 [memory]
    ld = math.sqrt(8.8541878128e-12 * te / (1.602176634e-19 * n0))
    mach = np.polyfit(t, x, 1)[0] / cs
    delta = phi / (3 * te)
    assert abs(mach / (1 + delta) - 1) < 1e-9
    assert abs((mach - 1) / delta - 1) < 1e-8  # the excess Mach number itself
    assert float(np.max(np.abs(width / (ld * math.sqrt(2 / delta)) - 1))) < 1e-8


def test_units_errors_name_the_key(tmp_path: Path) -> None:
    table = "system = 'shallow-water'\ndepth = 1.0"
    with pytest.raises(ConfigError, match=r"units\.system: given 'deep'"):
        _sweep(tmp_path, "system = 'deep'\ndepth = 1.0", "amplitude = [0.1]")
    with pytest.raises(ConfigError, match=r"units\.density: given an unknown key"):
        _sweep(tmp_path, table + "\ndensity = 3", "amplitude = [0.1]")
    with pytest.raises(ConfigError, match=r"units\.depth: given '-h' \(= -0.5\) in run 0"):
        _sweep(
            tmp_path,
            "system = 'shallow-water'\ndepth = '-h'",
            "amplitude = [0.1]",
            "[[vary]]\nh = [0.5]\n",
        )
    with pytest.raises(ConfigError, match=r"units\.lower_density: .*stable stratification"):
        _sweep(
            tmp_path,
            "system = 'two-layer-interface'\nupper_depth = 1\nlower_depth = 2\n"
            "upper_density = 1000\nlower_density = 999",
            "amplitude = [0.1]",
        )
    with pytest.raises(ConfigError, match=r"initial\.speed\[0\]: .*above the linear long-wave"):
        _sweep(tmp_path, table, "speed = [3.0]")  # c0 = 3.13 m/s
    path = tmp_path / "kind.toml"
    path.write_text(
        f"[units]\n{table}\n\n[model]\npoints = 256\nlength = 40\ndt = 0.01\n\n[initial]\n"
        "kind = 'breather'\neta = 0.5\nxi = 0.2\n\n[run]\nend = 1\nframe_every = 1\n",
        encoding="utf-8",
    )
    with pytest.raises(ConfigError, match=r"initial\.kind: given 'breather', expected one of"):
        load_sweep(path)
    # the equation comes from the system: a contradicting coefficient names its key
    contradicting = edit_model(tmp_path, "equation = { a = 6, d = 2 }")
    with pytest.raises(ConfigError, match=r"model\.equation\.d: given 2 in run 0, expected d = 1"):
        load_sweep(contradicting)
    with pytest.raises(
        ConfigError, match=r"model\.equation: given 'mkdv' in run 0, expected a = 6"
    ):
        load_sweep(edit_model(tmp_path, "equation = 'mkdv'"))
    # agreeing ones and canonical perturbations are accepted
    s = load_sweep(edit_model(tmp_path, "equation = { preset = 'kdv', g = 1e-3 }"))
    assert s.runs[0].model.equation.g == 1e-3
    assert s.runs[0].model.equation.a == 6.0


def test_initial_sizes_in_physical_units(tmp_path: Path) -> None:
    # amplitude (metres), kappa (per metre), laboratory speed (m/s) and position (metres) of the
    # same solitary wave give the same canonical soliton (the maps of kdvsweep.units)
    h = 2.0
    s = units.ShallowWater(depth=h)
    sc = s.scales()
    kappa = 0.3  # canonical
    form = s.equation().soliton_form
    amp = units.to_physical(form.amplitude(kappa), "height", sc)
    speed = units.to_physical(form.speed(kappa), "speed", sc)
    table = f"system = 'shallow-water'\ndepth = {h}"
    for i, initial in enumerate(
        (f"amplitude = [{amp!r}]", f"kappa = [{kappa / h!r}]", f"speed = [{speed!r}]")
    ):
        spec = _sweep(tmp_path, table, initial + "\nposition = [-20.0]", name=f"s{i}").runs[0]
        assert math.isclose(spec.initial.kappa[0], kappa, rel_tol=1e-11), initial
        assert spec.initial.x0 == (-10.0,)  # metres over X = h


def edit_model(tmp_path: Path, line: str) -> Path:
    """A shallow-water sweep file with ``line`` added to its [model] table."""
    path = tmp_path / "model.toml"
    path.write_text(
        "[units]\nsystem = 'shallow-water'\ndepth = 1.0\n\n"
        f"[model]\n{line}\npoints = 512\nlength = 80\ndt = 0.01\n\n"
        "[initial]\nkind = 'solitons'\namplitude = [0.1]\n\n[run]\nend = 1\nframe_every = 1\n",
        encoding="utf-8",
    )
    return path


def test_validity_warnings_name_the_ratio(tmp_path: Path) -> None:
    # A/h = 0.4: past our weakly nonlinear limit (0.3, common practice, no source); the solitary
    # wave's h/l = sqrt(3 A / (4 h)) = 0.55 is past the long-wave limit 0.5 too
    sweep = _sweep(tmp_path, "system = 'shallow-water'\ndepth = 1.0", "amplitude = [0.4]")
    text = " | ".join(sweep.warnings)
    assert "units (A/h): 1 of 1 runs leave the range the shallow-water model assumes" in text
    assert "(worst run 0: A/h = 0.4)" in text
    assert "units (h/l)" in text
    assert "h/l = 0.548" in text
    # a profile narrower than half the depth in the plasma: lambda_D / l
    plasma = "system = 'ion-acoustic-plasma'\nelectron_temperature = 1.0\ndensity = 1e16"
    path = tmp_path / "narrow.toml"
    ld = units.IonAcousticPlasma(electron_temperature=1.0, density=1e16).debye_length()
    path.write_text(
        f"[units]\n{plasma}\n\n[model]\npoints = 1024\nlength = 200\ndt = 0.01\n\n"
        f"[initial]\nkind = 'gaussian'\nheight = 0.05\nscale = {1.5 * ld}\n\n"
        "[run]\nend = 1\nframe_every = 1\npredict_content = false\n",
        encoding="utf-8",
    )
    warned = " | ".join(load_sweep(path).warnings)
    assert "units (lambda_D/l)" in warned
    assert "lambda_D/l = 0.667" in warned
    assert "e phi/T_e" not in warned


def test_store_keeps_units_in_the_field_metadata(tmp_path: Path) -> None:
    text = (SWEEPS / "ion-acoustic.toml").read_text(encoding="utf-8")
    text = text.replace("phi = [0.15, 0.25, 0.4]", "phi = [0.4]")
    out = make_store(tmp_path, text, "plasma")
    manifest = json.loads((out / "manifest.json").read_text(encoding="utf-8"))
    assert manifest["layout"]["units"] == "ion-acoustic-plasma"
    runs = pq.read_schema(next((out / "runs").glob("*.parquet")))
    assert runs.field("phys_electron_temperature").metadata == {b"unit": b"eV"}
    assert runs.field("phys_t_end").metadata == {b"unit": b"s"}
    assert runs.field("t_end").metadata is None
    sol = pq.read_schema(next((out / "solitons").glob("*.parquet")))
    assert sol.field("phys_amplitude").metadata == {b"unit": b"V"}
    res = load(out)
    assert res.solitons["phys_amplitude"].tolist() == pytest.approx([0.4, 0.08], rel=1e-6)
    axes = units.axes_for_run(res.manifest, res.runs, 0)
    assert axes is not None
    assert axes["u"].label == "phi: electrostatic potential (V)"
    assert axes["x"].scale == res.runs["phys_length_scale"].iloc[0]
    assert units.axes_for_run(res.manifest, res.runs, 7) is None
    assert units.column_label(res.manifest, "phys_shift_measured") == "phys_shift_measured (m)"
    assert units.column_label(res.manifest, "shift_measured") == "shift_measured"
    assert units.store_system({"layout": {"parameters": {}}}) is None
    # the water-wave systems carry the hazard caution with their columns
    layout = Layout({}, analysis=True, content=False, units="shallow-water")
    assert layout.schema("solitons").field("phys_speed").metadata[b"caution"] == (
        units.CAUTION.encode()
    )


def test_example_sweeps_in_physical_units_state_the_caution() -> None:
    for name in ("wave-tank", "interface-polarity"):
        text = (SWEEPS / f"{name}.toml").read_text(encoding="utf-8")
        assert "idealised model runs, not forecasts" in text
        assert "tsunami" in text
    readme = README.read_text(encoding="utf-8")
    section = readme[readme.index("## Physical units") :]
    assert "idealised model runs, not forecasts" in section[:600]
    assert "not forecasts" in (units.__doc__ or "")


def test_readme_lists_the_physical_columns() -> None:
    readme = README.read_text(encoding="utf-8")
    runs = (*columns.PHYS_RUN_COLUMNS, *columns.PHYS_PARAMETER_COLUMNS)
    solitons = (*columns.PHYS_SOLITON_COLUMNS, *columns.PHYS_CONTENT_SOLITON_COLUMNS)
    assert _table(runs) in readme
    assert _table(solitons) in readme
