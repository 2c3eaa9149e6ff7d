"""Sizing on blocks of runs: the array forms against the scalar code they replaced, bit for bit.

Equivalence tests: the previous scalar implementations are kept below verbatim (only renamed with
an ``old_`` prefix where they would shadow the module's names) as the reference. The sweep digest
hashes these values' reprs, so every element must be identical (``==``, same sign of zero, NaN where
the reference has NaN), not merely close.
"""

from __future__ import annotations

import itertools
import math
import random
from collections.abc import Sequence

import numpy as np
import pytest

from kdvsweep.exceptions import ConfigError, ShapeError
from kdvsweep.model import Equation, SolitonForm
from kdvsweep.simulation import WARN_DECADES
from kdvsweep.sweep import sizing
from kdvsweep.theory import pair_shift

# ----------------------------------------------------------------------------------------------
# The previous scalar implementations (python/kdvsweep/sweep/sizing.py before the block rewrite),
# verbatim apart from the old_ prefix on their names.


def old_reach(kappa: float, form: SolitonForm, tail: float) -> float:
    """Distance from a soliton's centre to where its relative tail ``C e^{-2 kappa |x|}`` is
    ``tail``, ``ln(C / tail) / (2 kappa)``, with ``C`` of :meth:`SolitonForm.tail_constant` (the
    larger over the equation's polarities; near Gardner's table-top limit it covers the plateau)."""
    constant = max(form.tail_constant(kappa, s) for s in form.polarities)
    return math.log(constant / tail) / (2.0 * kappa)


def old_gap(k_i: float, k_j: float, form: SolitonForm, tail: float) -> float:
    """Centre distance where the wider soliton's relative tail at the other's centre is ``tail``."""
    return old_reach(min(k_i, k_j), form, tail)


def old_shift_bound(k_i: float, k_j: float) -> float:
    """Magnitude of soliton i's position shift from overtaking j (:func:`theory.pair_shift`)."""
    return abs(pair_shift(k_i, k_j))


def old_auto_positions(kappas: Sequence[float], form: SolitonForm, tail: float) -> list[float]:
    """Centres in the listed order, neighbours one gap apart, the group centred on 0."""
    positions = [0.0]
    for left, right in itertools.pairwise(kappas):
        positions.append(positions[-1] + old_gap(left, right, form, tail))
    middle = 0.5 * (positions[0] + positions[-1])
    return [p - middle for p in positions]


def old_overtaking(positions: Sequence[float], speeds: Sequence[float]) -> list[tuple[int, int]]:
    """Pairs (i, j) with soliton i behind (left of) j and faster: they collide."""
    n = len(positions)
    return [
        (i, j)
        for i in range(n)
        for j in range(n)
        if positions[i] < positions[j] and speeds[i] > speeds[j]
    ]


def old_shift_bounds(kappas: Sequence[float], pairs: list[tuple[int, int]]) -> list[list[float]]:
    """``b[i][k]``: bound on soliton i's shift from its collision with k (0 if they never meet)."""
    b = [[0.0] * len(kappas) for _ in kappas]
    for i, j in pairs:
        b[i][j] = old_shift_bound(kappas[i], kappas[j])
        b[j][i] = old_shift_bound(kappas[j], kappas[i])
    return b


def old_end_time(
    positions: Sequence[float],
    kappas: Sequence[float],
    speeds: Sequence[float],
    form: SolitonForm,
    tail: float,
) -> float:
    """Time by which every overtaking pair is one gap apart again (0 when none overtakes)."""
    pairs = old_overtaking(positions, speeds)
    b = old_shift_bounds(kappas, pairs)
    t_end = 0.0
    for i, j in pairs:
        third = sum(b[i][k] + b[j][k] for k in range(len(kappas)) if k not in (i, j))
        distance = positions[j] - positions[i] + old_gap(kappas[i], kappas[j], form, tail) + third
        t_end = max(t_end, distance / (speeds[i] - speeds[j]))
    return t_end


def old_min_length(
    positions: Sequence[float],
    kappas: Sequence[float],
    speeds: Sequence[float],
    form: SolitonForm,
    tail: float,
    t_end: float,
) -> float:
    """Shortest period keeping every soliton a gap from the others' images on ``[0, t_end]``."""
    pairs = old_overtaking(positions, speeds)
    b = old_shift_bounds(kappas, pairs)
    total = [sum(row) for row in b]
    need = 0.0
    n = len(kappas)
    for i in range(n):
        for j in range(i, n):
            start = abs(positions[i] - positions[j])
            end = abs(positions[i] - positions[j] + (speeds[i] - speeds[j]) * t_end)
            if i != j:
                end += total[i] + total[j]
            need = max(need, max(start, end) + old_gap(kappas[i], kappas[j], form, tail))
    return need


def old_nice_ceil(value: float) -> float:
    """``value`` rounded up to two significant digits (68.7 -> 69, 6.87 -> 6.9)."""
    step = 10.0 ** (math.floor(math.log10(value)) - 1)
    return float(f"{math.ceil(value / step - 1e-9) * step:.12g}")


def old_min_points_per_width(dealias: float, decades: float) -> float:
    """Points per soliton width keeping ``decades`` of spectrum at the dealiasing cutoff."""
    return 2.0 * decades * math.log(10.0) / (dealias * math.pi**2)


def old_points_needed(
    narrowest: float, length: float, dealias: float, decades: float = WARN_DECADES
) -> float:
    """Points that resolve the narrowest width with no warning (a float: may be huge or inf);
    ``decades`` of spectrum kept at the cutoff (fewer with an accuracy target:
    :func:`kdvsweep.sweep.accuracy.auto_decades`)."""
    if not narrowest > 0:
        return math.inf
    return length / narrowest * old_min_points_per_width(dealias, decades)


def old_auto_points(
    narrowest: float, length: float, dealias: float, decades: float = WARN_DECADES
) -> int:
    """Smallest FFT-friendly even ``n`` (``2^p`` or ``3 2^p``, at least 16) with no warning
    (``decades`` as :func:`points_needed`).

    Raises ValueError when :func:`points_needed` is not finite (callers compare it with their
    limit first).
    """
    need = old_points_needed(narrowest, length, dealias, decades)
    if not math.isfinite(need):
        raise ValueError(f"automatic points: no grid resolves width {narrowest} on length {length}")
    n = 16
    while n < need:
        n = n // 2 * 3 if n & (n - 1) == 0 else n // 3 * 4  # 16, 24, 32, 48, 64, ...
    return n


# ----------------------------------------------------------------------------------------------

FORMS = {
    "kdv": Equation.preset("kdv").soliton_form,
    "kdv-": Equation.preset("kdv-").soliton_form,
    "mkdv": Equation.preset("mkdv").soliton_form,  # both polarities: the larger tail constant
    "mkdv, d < 0": Equation(b=-6.0, d=-1.0).soliton_form,  # solitons moving left
    "gardner, mu > 0": Equation.gardner(a=-3.0, b=2.0, d=0.5).soliton_form,  # both polarities
    "gardner, mu < 0": Equation.gardner(a=6.0, b=-6.0).soliton_form,  # table-top limit 0.5
}
TAILS = (1e-8, 1e-3, 0.37)


def same(a: float, b: float) -> bool:
    """Bit-identical as the digest sees it: equal with the same sign of zero, or both NaN."""
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    return a == b and math.copysign(1.0, a) == math.copysign(1.0, b)


def assert_rows_equal(got: np.ndarray, expected: list[float], what: str) -> None:
    assert got.dtype == np.float64
    assert len(got) == len(expected)
    for g, e in zip(got.tolist(), expected, strict=True):
        assert same(g, e), f"{what}: {g!r} != {e!r}"


def random_kappas(rng: random.Random, n: int, form: SolitonForm) -> list[float]:
    """A row of kappas of one of several kinds (uniform, near-equal, spread over decades, sorted
    so that nothing overtakes, with ties)."""
    top = form.max_kappa if math.isfinite(form.max_kappa) else 2.0
    kind = rng.choice(["uniform", "near", "spread", "ascending", "ties", "beyond"])
    if kind == "uniform":
        row = [rng.uniform(0.05, top) for _ in range(n)]
    elif kind == "near":
        base = rng.uniform(0.05, 0.9 * top)
        row = [
            base * (1.0 + rng.choice([1e-15, 1e-12, 1e-9, 1e-6]) * rng.randint(-3, 3))
            for _ in range(n)
        ]
    elif kind == "spread":
        row = [min(10.0 ** rng.uniform(-3.0, 2.0), 0.999 * top) for _ in range(n)]
    elif kind == "ascending":  # slower on the left: nothing overtakes with ascending positions
        row = sorted(rng.uniform(0.05, top) for _ in range(n))
    elif kind == "ties":
        row = [rng.choice([0.3 * top, 0.6 * top]) for _ in range(n)]
    else:  # beyond a Gardner table-top limit the tail constant is NaN
        row = [rng.uniform(0.05, 2.0 * top) for _ in range(n)]
    return row


def random_positions(
    rng: random.Random, kappas: list[float], form: SolitonForm, tail: float
) -> list[float]:
    kind = rng.choice(["auto", "sorted", "shuffled", "ascending"])
    if kind == "auto":
        return old_auto_positions(kappas, form, tail)
    xs = [rng.uniform(-50.0, 50.0) for _ in kappas]
    if kind == "sorted":
        return sorted(xs)
    if kind == "ascending":
        return [float(i) * rng.uniform(0.5, 5.0) for i in range(len(kappas))]
    return xs


CASES_PER_FORM_AND_N = 300


@pytest.mark.parametrize("name", list(FORMS))
@pytest.mark.parametrize("n", [1, 2, 3, 4])
def test_block_sizing_is_bit_identical_to_the_scalar_code(name: str, n: int) -> None:
    form = FORMS[name]
    rng = random.Random(f"{name}/{n}")  # fixed seed: deterministic test
    for tail in TAILS:
        m = CASES_PER_FORM_AND_N // len(TAILS)
        kappas = [random_kappas(rng, n, form) for _ in range(m)]
        positions = [random_positions(rng, row, form, tail) for row in kappas]
        speeds = [[form.speed(k) for k in row] for row in kappas]
        k_arr, p_arr, c_arr = (
            np.array(rows, dtype=np.float64) for rows in (kappas, positions, speeds)
        )

        got = sizing.auto_positions(k_arr, form, tail)
        assert got.shape == (m, n)
        for r in range(m):
            assert_rows_equal(got[r], old_auto_positions(kappas[r], form, tail), "auto_positions")

        t_end = sizing.end_time(p_arr, k_arr, c_arr, form, tail)
        expected_t = [
            old_end_time(positions[r], kappas[r], speeds[r], form, tail) for r in range(m)
        ]
        assert_rows_equal(t_end, expected_t, "end_time")

        # the end times above, and others (0, random, inf: the box then never suffices)
        ends = np.array(
            [rng.choice([expected_t[r], 0.0, rng.uniform(0.0, 500.0), math.inf]) for r in range(m)]
        )
        got_l = sizing.min_length(p_arr, k_arr, c_arr, form, tail, ends)
        expected_l = [
            old_min_length(positions[r], kappas[r], speeds[r], form, tail, float(ends[r]))
            for r in range(m)
        ]
        assert_rows_equal(got_l, expected_l, "min_length")

        # one run as sequences: what the scalar callers pass
        r = rng.randrange(m)
        one = sizing.auto_positions(kappas[r], form, tail)
        assert isinstance(one, list)
        assert all(
            same(a, b) for a, b in zip(one, old_auto_positions(kappas[r], form, tail), strict=True)
        )
        t_one = sizing.end_time(positions[r], kappas[r], speeds[r], form, tail)
        assert isinstance(t_one, float)
        assert same(t_one, expected_t[r])
        l_one = sizing.min_length(positions[r], kappas[r], speeds[r], form, tail, float(ends[r]))
        assert isinstance(l_one, float)
        assert same(l_one, expected_l[r])


def test_the_cases_cover_overtaking_and_quiet_rows() -> None:
    # the random rows above include both kinds, or the comparison would miss a branch
    form = FORMS["kdv"]
    rng = random.Random("kdv/3")
    kappas = np.array([random_kappas(rng, 3, form) for _ in range(300)])
    positions = np.array([random_positions(rng, list(row), form, 1e-8) for row in kappas])
    t = sizing.end_time(positions, kappas, form.speed(kappas), form, 1e-8)
    assert (t == 0).sum() > 10
    assert (t > 0).sum() > 10


@pytest.mark.parametrize("name", list(FORMS))
def test_reach_gap_and_shift_bound_arrays(name: str) -> None:
    form = FORMS[name]
    rng = random.Random(name)
    k_i = np.array([random_kappas(rng, 1, form)[0] for _ in range(500)])
    k_j = np.array([rng.choice([rng.uniform(0.01, 3.0), float(k)]) for k in k_i])
    for tail in TAILS:
        assert_rows_equal(
            sizing.reach(k_i, form, tail), [old_reach(k, form, tail) for k in k_i.tolist()], "reach"
        )
        assert_rows_equal(
            sizing.gap(k_i, k_j, form, tail),
            [old_gap(a, b, form, tail) for a, b in zip(k_i.tolist(), k_j.tolist(), strict=True)],
            "gap",
        )
        assert same(sizing.reach(float(k_i[0]), form, tail), old_reach(float(k_i[0]), form, tail))
    differ = k_i != k_j
    assert_rows_equal(
        sizing.shift_bound(k_i[differ], k_j[differ]),
        [
            old_shift_bound(a, b)
            for a, b in zip(k_i[differ].tolist(), k_j[differ].tolist(), strict=True)
        ],
        "shift_bound",
    )


def test_shift_bound_refuses_equal_kappas_as_pair_shift_does() -> None:
    with pytest.raises(ConfigError) as expected:
        pair_shift(0.4, 0.4)
    with pytest.raises(ConfigError) as got:
        sizing.shift_bound(np.array([0.3, 0.4]), np.array([0.5, 0.4]))
    assert str(got.value) == str(expected.value)
    with pytest.raises(ConfigError, match="equal kappas"):
        sizing.shift_bound(0.4, 0.4)
    with pytest.raises(ConfigError, match="finite and positive"):
        sizing.shift_bound(np.array([0.3, -1.0]), np.array([0.5, 0.4]))


def test_a_block_must_be_two_dimensional() -> None:
    form = FORMS["kdv"]
    with pytest.raises(ShapeError, match=r"\(m, N\)"):
        sizing.auto_positions(np.array([0.5, 0.3]), form, 1e-8)
    empty = np.zeros((0, 2))
    assert sizing.end_time(empty, empty, empty, form, 1e-8).shape == (0,)


def test_points_and_nice_ceil_are_bit_identical() -> None:
    rng = random.Random(7)
    widths = [10.0 ** rng.uniform(-4, 2) for _ in range(2000)]
    widths += [0.0, -1.0, math.nan, math.inf, 1e-300, 5e-324, 1e-200]
    lengths = [10.0 ** rng.uniform(-1, 5) for _ in widths]
    decades = [rng.choice([WARN_DECADES, rng.uniform(1.0, 20.0)]) for _ in widths]
    for dealias in (2.0 / 3.0, 0.5, 1.0):
        w, ln, de = (np.array(v) for v in (widths, lengths, decades))
        need = sizing.points_needed(w, ln, dealias, de)
        expected = [
            old_points_needed(a, b, dealias, c)
            for a, b, c in zip(widths, lengths, decades, strict=True)
        ]
        assert_rows_equal(need, expected, "points_needed")
        assert_rows_equal(
            sizing.points_needed(w, 100.0, dealias),
            [old_points_needed(a, 100.0, dealias) for a in widths],
            "points_needed",
        )
        for a, b, c in zip(
            widths[:50] + widths[-7:],
            lengths[:50] + lengths[-7:],
            decades[:50] + decades[-7:],
            strict=True,
        ):
            value = sizing.points_needed(a, b, dealias, c)
            assert isinstance(value, float)
            assert same(value, old_points_needed(a, b, dealias, c))
        fits = np.isfinite(need) & (need < 4e18)
        got = sizing.auto_points(w[fits], ln[fits], dealias, de[fits])
        assert got.dtype == np.int64
        assert got.tolist() == [
            old_auto_points(a, b, dealias, c)
            for a, b, c in zip(w[fits].tolist(), ln[fits].tolist(), de[fits].tolist(), strict=True)
        ]
        for a, b in [(0.01, 100.0), (1e-200, 1e3), (1.0, 16.0), (0.5, 1.0), (1e-290, 1.0)]:
            n = sizing.auto_points(a, b, dealias)
            assert type(n) is int
            assert n == old_auto_points(a, b, dealias)  # Python ints, beyond int64 too
    with pytest.raises(ValueError, match=r"no grid resolves width 0\.0 on length 3\.0$"):
        sizing.auto_points(np.array([0.1, 0.0]), np.array([2.0, 3.0]), 0.5)
    with pytest.raises(ValueError, match="no grid resolves width 0 on length 3"):
        sizing.auto_points(0, 3, 0.5)
    with pytest.raises(ValueError, match="exceed int64"):
        sizing.auto_points(np.array([1e-30]), np.array([1.0]), 0.5)

    values = [10.0 ** rng.uniform(-6, 12) for _ in range(3000)] + [
        69.0,
        6.9,
        100.0,
        1.0,
        0.99,
        1e-9,
    ]
    got_n = sizing.nice_ceil(np.array(values))
    assert_rows_equal(got_n, [old_nice_ceil(v) for v in values], "nice_ceil")
    assert all(same(sizing.nice_ceil(v), old_nice_ceil(v)) for v in values[:100])
    assert isinstance(sizing.nice_ceil(68.7), float)


def test_the_ladder_matches_the_loop() -> None:
    # every size of the old loop (16, 24, 32, 48, ...) is a size the search can return
    assert sizing.auto_points(1.0, 1.0, 1.0, 0.0) == 16
    for p in range(4, 70):
        for n in (2**p, 3 * 2 ** (p - 1)):
            need = float(n)
            width = 1.0
            per_width = old_min_points_per_width(1.0, WARN_DECADES)
            length = need / per_width
            assert sizing.auto_points(width, length, 1.0) == old_auto_points(width, length, 1.0)
            length_up = math.nextafter(length, math.inf)
            assert sizing.auto_points(width, length_up, 1.0) == old_auto_points(
                width, length_up, 1.0
            )
