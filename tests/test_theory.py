"""kdvsweep.theory against published soliton formulas and tabulated values.

Tabulated values were evaluated from the published formulas named beside each check and
confirmed by peak tracking on exact Hirota solutions; the closed forms (ln 3, ln 5, ...) are recomputed here from the formula itself.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from kdvsweep import theory
from kdvsweep.exceptions import ConfigError, ShapeError
from kdvsweep.model import Equation

LN3, LN5 = math.log(3.0), math.log(5.0)


@pytest.mark.parametrize(
    ("kappas", "expected"),
    [
        # Two-soliton shifts +(1/k1) ln((k1+k2)/(k1-k2)), -(1/k2) ln(...): Gardner, Greene,
        # Kruskal & Miura 1974; Ablowitz & Segur 1981 Ch. 1; Drazin & Johnson 1989 Ch. 4
        # (equation numbers not checked). Closed forms and decimals as in worked values of the Gardner et al. 1974 formula.
        ([1.0, 0.5], [LN3, -2.0 * LN3]),
        ([1.5, 1.0], [LN5 / 1.5, -LN5]),
        ([1.0, 0.9], [math.log(19.0), -math.log(19.0) / 0.9]),
        # Three solitons, pairwise additivity (Zakharov 1971; D&J Problem 4.6): the middle
        # soliton of (2, 1, 0.5) is pushed forward by ln 3 and back by ln 3 (Zakharov 1971; Drazin & Johnson 1989 Problem 4.6,
        # 1.5).
        ([2.0, 1.0, 0.5], [LN5 / 2.0, 0.0, -2.0 * LN5]),
        ([1.2, 0.6, 0.3], [1.341198, 0.0, -5.364793]),
    ],
)
def test_kdv_shifts_match_published_table(kappas: list[float], expected: list[float]) -> None:
    got = theory.phase_shifts(kappas, "kdv")
    np.testing.assert_allclose(got, expected, rtol=1e-6, atol=1e-9)


def test_shifts_follow_input_order() -> None:
    # The formula is per soliton: permuting the input permutes the output (Gardner, Greene, Kruskal & Miura 1974; Ablowitz & Segur 1981 Ch. 1).
    got = theory.phase_shifts([0.5, 2.0, 1.0])
    np.testing.assert_allclose(got, [-2.0 * LN5, LN5 / 2.0, 0.0], atol=1e-12)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_mass_weighted_shifts_cancel(seed: int) -> None:
    # Sum rule: d/dt int x u dx = 3 int u^2 dx is constant for KdV, so sum_i kappa_i Delta x_i = 0
    # (soliton mass 4 kappa_i); Miura, Gardner & Kruskal 1968. This is
    # independent of the shift formula's derivation, so it checks signs and the 1/kappa_i factor.
    rng = np.random.default_rng(seed)
    kappas = rng.uniform(0.2, 2.0, size=5)
    shifts = theory.phase_shifts(kappas)
    assert abs(theory.shift_balance(kappas, shifts)) < 1e-12 * np.abs(kappas * shifts).sum()
    assert abs(theory.shift_balance(kappas, shifts * [1, 1, 1, 1, 1.01])) > 1e-6


def test_fastest_forward_slowest_backward() -> None:
    # Faster soliton shifted forward, slower backward (Gardner, Greene, Kruskal & Miura 1974; Ablowitz & Segur 1981 Ch. 1).
    shifts = theory.phase_shifts([0.4, 1.3, 0.9, 0.7])
    assert shifts[1] > 0 > shifts[0]


def test_mkdv_shifts_same_for_both_polarities_and_equal_kdv_in_kappa() -> None:
    # Zakharov & Shabat 1972, Wadati 1973 (from memory): in the spectral
    # parameter eta (= our kappa) mKdV shifts equal KdV's; amplitudes (2,1) -> +1.098612, -2.197225
    # and (4,2,1) -> +0.804719, 0, -3.218876 for either polarity pattern.
    for amps, expected in [
        ([2.0, 1.0], [1.098612, -2.197225]),
        ([3.0, 2.0], [1.072959, -1.609438]),
        ([4.0, 2.0, 1.0], [0.804719, 0.0, -3.218876]),
    ]:
        kappas = theory.kappa_from_amplitude(amps, "mkdv")
        np.testing.assert_allclose(theory.phase_shifts(kappas, "mkdv"), expected, atol=2e-6)


def test_canonical_speeds_and_amplitudes() -> None:
    # KdV soliton 2k^2 sech^2(k(x - 4k^2 t)); mKdV 2k sech(2k(x - 4k^2 t)) (Korteweg & de Vries 1895; Ablowitz 2011 Sec. 1.1; Wadati 1973).
    k = np.array([0.3, 1.0, 2.5])
    np.testing.assert_allclose(theory.speeds(k, "kdv"), 4 * k**2)
    np.testing.assert_allclose(theory.speeds(k, "mkdv"), 4 * k**2)
    np.testing.assert_allclose(theory.amplitudes(k, "kdv"), 2 * k**2)
    np.testing.assert_allclose(theory.amplitudes(k, "mkdv"), 2 * k)
    np.testing.assert_allclose(theory.tail_lengths(k), 1 / (2 * k))


def test_other_normalisations_by_scaling() -> None:
    # u_t + u u_x + u_xxx = 0 (Zabusky-Kruskal form): soliton 3c sech^2((sqrt c / 2)(x - c t)),
    # i.e. kappa = sqrt(c)/2, amplitude 3c (the exact scaling u = alpha w(x, d t)).
    zk = Equation(a=1.0)
    c = np.array([0.5, 2.0, 9.0])
    kappa = np.sqrt(c) / 2
    np.testing.assert_allclose(theory.speeds(kappa, zk), c)
    np.testing.assert_allclose(theory.amplitudes(kappa, zk), 3 * c)
    np.testing.assert_allclose(theory.kappa_from_amplitude(3 * c, zk), kappa)
    np.testing.assert_allclose(theory.kappa_from_speed(c, zk), kappa)
    # u_t + u u_x + delta^2 u_xxx = 0: x = delta X, t = delta T, u = 6w gives canonical KdV in
    # (X, T) (the exact scaling u = alpha w(x, d t)). Its soliton w = 2K^2 sech^2(K(X - 4K^2 T)) has, in x, the width
    # parameter kappa = K/delta, speed 4K^2 = 4 delta^2 kappa^2 and height 12 K^2.
    delta = 0.1
    eq = Equation(a=1.0, d=delta**2)
    np.testing.assert_allclose(theory.speeds([2.0], eq), [4 * delta**2 * 4.0])
    np.testing.assert_allclose(theory.amplitudes([2.0], eq), [12 * (2.0 * delta) ** 2])
    # KdV(-) u_t - 6 u u_x + u_xxx = 0 has troughs of depth 2 kappa^2 (Korteweg & de Vries 1895; Ablowitz 2011 Sec. 1.1).
    assert theory.polarities("kdv-") == (-1,)
    np.testing.assert_allclose(theory.amplitudes([1.5], "kdv-"), [4.5])
    assert theory.polarities("mkdv") == (1, -1)


def test_collision_counts_scale_pairwise_terms() -> None:
    # On a periodic domain a pair that meets twice is shifted twice (additivity, Zakharov 1971).
    k = [1.0, 0.5]
    twice = theory.phase_shifts(k, collisions=[[0, 2], [2, 0]])
    np.testing.assert_allclose(twice, 2 * theory.phase_shifts(k))
    never = theory.phase_shifts(k, collisions=np.zeros((2, 2)))
    np.testing.assert_array_equal(never, [0.0, 0.0])


@pytest.mark.parametrize(
    ("ratio", "regime", "peaks"),
    [
        # Lax 1968 thresholds (3 + sqrt 5)/2 = 2.618034 and 3 (Drazin & Johnson 1989 Problem 4.5).
        (1.5, "exchange", 2),
        (2.60, "exchange", 2),
        (2.64, "mixed", 2),
        (2.98, "mixed", 2),
        (3.02, "absorb-emit", 1),
        (10.0, "absorb-emit", 1),
    ],
)
def test_lax_regimes(ratio: float, regime: str, peaks: int) -> None:
    k1 = 0.8
    k2 = k1 / math.sqrt(ratio)  # amplitude ratio (k1/k2)^2
    assert theory.interaction_regime(k1, k2) == regime
    assert theory.interaction_regime(k2, k1) == regime  # order does not matter
    assert theory.peaks_at_closest_approach(k1, k2) == peaks
    assert theory.amplitude_ratio(k1, k2) == pytest.approx(ratio)


def test_lax_threshold_values() -> None:
    # Lax 1968: (3 + sqrt 5)/2 = 2.618034.
    assert theory.LAX_EXCHANGE_LIMIT == pytest.approx(2.618034, abs=1e-6)
    assert theory.LAX_SINGLE_PEAK_LIMIT == 3.0


def test_bad_inputs_raise_named_errors() -> None:
    with pytest.raises(ConfigError, match="equal kappas"):
        theory.phase_shifts([1.0, 1.0])
    with pytest.raises(ConfigError, match="positive"):
        theory.phase_shifts([1.0, -0.5])
    with pytest.raises(ShapeError, match=r"shape \(2, 2\)"):
        theory.phase_shifts([1.0, 0.5], collisions=np.ones((3, 3)))
    with pytest.raises(ConfigError, match="focusing mKdV"):
        theory.speeds([1.0], "mkdv-")
    with pytest.raises(ConfigError, match="focusing mKdV"):
        theory.phase_shifts([1.0, 0.5], Equation(a=0.0, b=6.0, d=0.0))
    with pytest.raises(ConfigError, match="unknown preset"):
        theory.speeds([1.0], "burgers")
    with pytest.raises(ConfigError, match="do not interact"):
        theory.interaction_regime(0.7, 0.7)
