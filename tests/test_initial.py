"""Initial data builders against closed-form formulas and the exact solitons."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

import kdvsweep as kv
from kdvsweep import initial as init
from kdvsweep.exceptions import ConfigError, ShapeError

KDV = kv.Equation.kdv()
MKDV = kv.Equation.mkdv()
S, P, B, F = init.Solitons, init.Profile, init.Box, init.FileData


def sech(z: np.ndarray) -> np.ndarray:
    return 1.0 / np.cosh(z)


# ---------------------------------------------------------------- profiles against their formulas


def test_sech2_gaussian_on_a_wide_box_match_the_formulas() -> None:
    grid = kv.Grid(1024, 200.0)
    x = grid.x
    u = init.build_profile(P("sech2", height=3.0, scale=1.5, center=4.0), grid, KDV)
    np.testing.assert_allclose(u, 3.0 * sech((x - 4.0) / 1.5) ** 2, rtol=0, atol=1e-15)
    g = init.build_profile(P("gaussian", height=-2.0, scale=2.5, center=-7.0), grid, KDV)
    np.testing.assert_allclose(g, -2.0 * np.exp(-(((x + 7.0) / 2.5) ** 2)), rtol=0, atol=1e-15)


def test_profiles_on_a_small_box_are_sums_of_periodic_images() -> None:
    grid = kv.Grid(256, 12.0)
    x, L = grid.x, grid.length
    u = init.build_profile(P("sech2", height=1.0, scale=2.0, center=5.0), grid, KDV)
    ref = sum(sech((x - 5.0 - m * L) / 2.0) ** 2 for m in range(-8, 9))
    np.testing.assert_allclose(u, ref, rtol=1e-14, atol=1e-16)
    g = init.build_profile(P("gaussian", height=1.0, scale=4.0), grid, KDV)
    ref = sum(np.exp(-(((x - m * L) / 4.0) ** 2)) for m in range(-8, 9))
    np.testing.assert_allclose(g, ref, rtol=1e-14, atol=1e-16)


def test_sharp_box() -> None:
    grid = kv.Grid(64, 16.0)  # dx = 0.25: the edges x = 3 +- 2 fall on grid points
    u = init.build_profile(B(height=2.0, half_width=2.0, center=3.0), grid, KDV)
    r = np.abs(grid.x - 3.0)
    np.testing.assert_array_equal(u[r < 2.0], 2.0)
    np.testing.assert_array_equal(u[r > 2.0], 0.0)
    np.testing.assert_array_equal(u[np.isclose(r, 2.0)], 1.0)
    assert np.count_nonzero(np.isclose(r, 2.0)) == 2


def test_box_wraps_and_smooth_edges_follow_tanh() -> None:
    grid = kv.Grid(512, 40.0)
    x = grid.x
    u = init.build_profile(B(height=1.5, half_width=3.0, center=19.0, edge=0.5), grid, KDV)
    r = (x - 19.0 + 20.0) % 40.0 - 20.0  # distance to the centre on the circle
    ref = 0.75 * (np.tanh((r + 3.0) / 0.5) - np.tanh((r - 3.0) / 0.5))
    np.testing.assert_allclose(u, ref, rtol=0, atol=1e-15)
    assert u[np.argmin(np.abs(x + 19.5))] > 1.4  # the box straddles x = +-L/2


# ---------------------------------------------------------- solitons of scaled equations


def test_scaled_kdv_solitons_match_the_zabusky_kruskal_form() -> None:
    # u_t + u u_x + u_xxx = 0 has the soliton 3c sech^2((sqrt c / 2)(x - c t)), i.e.
    # kappa = sqrt(c)/2, amplitude 3c, speed c (Zabusky & Kruskal 1965 normalisation; substitution)
    eq = kv.Equation(a=1.0)
    c = 2.3
    grid = kv.Grid(1024, 120.0)
    u = init.build_profile(S(kappa=(math.sqrt(c) / 2,), x0=(1.0,)), grid, eq)
    np.testing.assert_allclose(
        u, 3 * c * sech(math.sqrt(c) / 2 * (grid.x - 1.0)) ** 2, rtol=0, atol=1e-13
    )


def test_schrodinger_sign_kdv_solitons_are_troughs() -> None:
    # KdV(-) u_t - 6 u u_x + u_xxx = 0 has the trough -2 kappa^2 sech^2(kappa (x - 4 kappa^2 t))
    # (u -> -u maps it onto KdV(+); Korteweg & de Vries 1895 for the soliton)
    eq = kv.Equation.kdv(sign=-1)
    grid = kv.Grid(512, 60.0)
    u = init.build_profile(S(kappa=(0.8,), x0=(0.0,), sign=(-1,)), grid, eq)
    np.testing.assert_allclose(u, -2 * 0.64 * sech(0.8 * grid.x) ** 2, rtol=0, atol=1e-14)
    with pytest.raises(ConfigError, match="sign"):
        init.build_profile(S(kappa=(0.8,), x0=(0.0,)), grid, eq)


def test_bad_inputs() -> None:
    grid = kv.Grid(64, 20.0)
    one = S(kappa=(1.0,), x0=(0.0,))
    with pytest.raises(ConfigError, match="no soliton formula"):
        init.build_profile(one, grid, kv.Equation.gardner(d=0.0))
    with pytest.raises(ConfigError, match="no soliton formula"):
        init.build_profile(one, grid, kv.Equation.mkdv(sign=-1))
    with pytest.raises(ConfigError, match="expected Solitons, Profile, Box or FileData"):
        init.build_profile({"kind": "sech2"}, grid, KDV)  # type: ignore[arg-type]
    with pytest.raises(ConfigError, match="shape 'cosine'"):
        P("cosine", height=1.0, scale=1.0)
    with pytest.raises(ConfigError, match="scale must be positive"):
        P("sech2", height=1.0, scale=0.0)
    with pytest.raises(ConfigError, match="positive"):
        S(kappa=(-1.0,), x0=(0.0,))
    with pytest.raises(ConfigError, match="same non-zero length"):
        S(kappa=(1.0, 0.5), x0=(0.0,))
    with pytest.raises(ConfigError, match=r"\+1 or -1"):
        S(kappa=(1.0,), x0=(0.0,), sign=(2,))
    with pytest.raises(ConfigError, match="half_width"):
        init.build_profile(B(height=1.0, half_width=10.0), grid, KDV)
    with pytest.raises(ConfigError, match="edge must be >= 0"):
        B(height=1.0, half_width=1.0, edge=-0.1)


# ---------------------------------------------------------------- solitons against kv.exact


def _images(
    x: np.ndarray, L: float, kappa: float, x0: float, eq: kv.Equation, sign: float = 1
) -> np.ndarray:
    return np.sum(
        [kv.exact.soliton(x, 0.0, kappa, x0 + m * L, eq, sign) for m in range(-3, 4)], axis=0
    )


def test_superposed_kdv_solitons_are_sums_of_exact_solitons() -> None:
    grid = kv.Grid(512, 30.0)  # small box: the kappa = 0.4 tail reaches across
    spec = S(kappa=(1.2, 0.4), x0=(-6.0, 8.0), sign=(1, 1))
    u = init.build_profile(spec, grid, KDV)
    ref = _images(grid.x, 30.0, 1.2, -6.0, KDV) + _images(grid.x, 30.0, 0.4, 8.0, KDV)
    np.testing.assert_allclose(u, ref, rtol=0, atol=1e-14)


@pytest.mark.parametrize("signs", [[1, 1], [1, -1]])
def test_superposed_mkdv_solitons_are_sums_of_exact_solitons(signs: list[int]) -> None:
    grid = kv.Grid(512, 40.0)
    spec = S(kappa=(1.0, 0.35), x0=(-8.0, 9.0), sign=tuple(signs))
    u = init.build_profile(spec, grid, MKDV)
    ref = _images(grid.x, 40.0, 1.0, -8.0, MKDV, signs[0]) + _images(
        grid.x, 40.0, 0.35, 9.0, MKDV, signs[1]
    )
    np.testing.assert_allclose(u, ref, rtol=0, atol=1e-14)


def test_single_mkdv_soliton_closed_form() -> None:
    # eps a sech(a (x - x0)) with a = 2 kappa (Wadati 1973; wide box: images negligible)
    grid = kv.Grid(1024, 200.0)
    spec = S(kappa=(0.6,), x0=(3.0,), sign=(-1,))
    u = init.build_profile(spec, grid, MKDV)
    np.testing.assert_allclose(u, -1.2 * sech(1.2 * (grid.x - 3.0)), rtol=0, atol=1e-15)


def test_scaled_equation_solitons_agree_with_kv_exact() -> None:
    grid = kv.Grid(512, 50.0)
    for eq in (kv.Equation(a=2.0, d=0.5), kv.Equation(b=3.0, d=2.0)):
        spec = S(kappa=(0.7,), x0=(2.0,), sign=(1,))
        u = init.build_profile(spec, grid, eq)
        np.testing.assert_allclose(u, _images(grid.x, 50.0, 0.7, 2.0, eq), rtol=0, atol=1e-13)


def _kdv_two_soliton(x: np.ndarray, k: list[float], x0: list[float]) -> np.ndarray:
    """Hirota 1971 (Phys. Rev. Lett. 27, 1192 [memory]): u = 2 (ln tau)_xx, tau = 1 + e1 + e2 + A12 e1 e2, at t = 0,
    e_i = exp(2 kappa_i (x - x0_i)), A12 = ((k1 - k2)/(k1 + k2))^2; derivatives done by hand."""
    p = [2 * ki for ki in k]
    e = [np.exp(pi * (x - c)) for pi, c in zip(p, x0, strict=True)]
    a12 = ((k[0] - k[1]) / (k[0] + k[1])) ** 2
    tau = 1 + e[0] + e[1] + a12 * e[0] * e[1]
    d1 = p[0] * e[0] + p[1] * e[1] + a12 * (p[0] + p[1]) * e[0] * e[1]
    d2 = p[0] ** 2 * e[0] + p[1] ** 2 * e[1] + a12 * (p[0] + p[1]) ** 2 * e[0] * e[1]
    return 2 * (tau * d2 - d1**2) / tau**2


def _mkdv_two_soliton(x: np.ndarray, k: list[float], x0: list[float], s: list[int]) -> np.ndarray:
    """Hirota 1972 (J. Phys. Soc. Jpn 33, 1456 [memory]) at t = 0: u = 2 d/dx arctan(N/D),
    N = s1 e1 + s2 e2, D = 1 - s1 s2 A12 e1 e2, e_i = exp(2 kappa_i (x - x0_i))."""
    p = [2 * ki for ki in k]
    e = [np.exp(pi * (x - c)) for pi, c in zip(p, x0, strict=True)]
    a12 = ((p[0] - p[1]) / (p[0] + p[1])) ** 2
    n = s[0] * e[0] + s[1] * e[1]
    dn = s[0] * p[0] * e[0] + s[1] * p[1] * e[1]
    d = 1 - s[0] * s[1] * a12 * e[0] * e[1]
    dd = -s[0] * s[1] * a12 * (p[0] + p[1]) * e[0] * e[1]
    return 2 * (dn * d - n * dd) / (n**2 + d**2)


def test_multisoliton_matches_hirota_two_soliton_kdv() -> None:
    grid = kv.Grid(1024, 40.0)
    spec = S(kappa=(1.0, 0.6), x0=(-1.0, 1.5), exact=True)
    u = init.build_profile(spec, grid, KDV)
    ref = _kdv_two_soliton(grid.x, [1.0, 0.6], [-1.0, 1.5])
    np.testing.assert_allclose(u, ref, rtol=0, atol=1e-12)


@pytest.mark.parametrize("signs", [[1, 1], [1, -1]])
def test_multisoliton_matches_hirota_two_soliton_mkdv(signs: list[int]) -> None:
    grid = kv.Grid(1024, 40.0)
    spec = S(kappa=(0.9, 0.5), x0=(-0.5, 1.0), sign=tuple(signs), exact=True)
    u = init.build_profile(spec, grid, MKDV)
    ref = _mkdv_two_soliton(grid.x, [0.9, 0.5], [-0.5, 1.0], signs)
    np.testing.assert_allclose(u, ref, rtol=0, atol=1e-12)


# ---------------------------------------------------------------- files and soliton lists


def test_npy_profile(tmp_path: Path) -> None:
    grid = kv.Grid(64, 10.0)
    arr = np.sin(2 * np.pi * grid.x / grid.length)
    path = tmp_path / "u0.npy"
    np.save(path, arr)
    spec = F(str(path), init.file_digest(path))
    np.testing.assert_array_equal(init.build_profile(spec, grid, KDV), arr)
    with pytest.raises(ShapeError, match="expected n = 128"):
        init.build_profile(spec, kv.Grid(128, 10.0), KDV)
    np.save(path, 2 * arr)
    with pytest.raises(ConfigError, match="changed since"):
        init.build_profile(spec, grid, KDV)
    np.save(path, np.array([{"a": 1}], dtype=object))
    with pytest.raises(ConfigError, match="not a readable"):
        init.load_array(path)
    np.save(path, np.zeros((8, 8)))
    with pytest.raises(ShapeError, match="1-D"):
        init.load_array(path)


def test_input_solitons() -> None:
    spec = S(kappa=(1.0, 0.5), x0=(-5.0, 5.0), sign=(1, -1))
    assert spec.kind == "solitons"
    assert init.input_solitons(spec) == [
        {"soliton": 0, "kappa": 1.0, "x0": -5.0, "sign": 1},
        {"soliton": 1, "kappa": 0.5, "x0": 5.0, "sign": -1},
    ]
    assert init.input_solitons(S(kappa=(2.0,), x0=(0.0,), exact=True)) == [
        {"soliton": 0, "kappa": 2.0, "x0": 0.0, "sign": 1}
    ]
    assert init.input_solitons(P("sech2", height=1.0, scale=1.0)) == []


def test_initial_data_are_picklable_plain_data() -> None:
    # dask ships them to workers; the sweep digest is computed from their plain form
    import pickle

    for data in (
        S(kappa=(1.0, 0.5), x0=(-5.0, 5.0), sign=(1, -1), exact=True),
        P("gaussian", height=1.0, scale=2.0),
        B(height=1.0, half_width=2.0, edge=0.1),
        F("u0.npy", "0" * 64),
    ):
        assert pickle.loads(pickle.dumps(data)) == data
        assert data.plain()["kind"] == data.kind
