"""The expression language of sweep files: values, precedence, and rejection with positions."""

from __future__ import annotations

import math
import random

import pytest

from kdvsweep.exceptions import ConfigError
from kdvsweep.sweep.expr import MAX_DEPTH, MAX_LENGTH, ExpressionError, parse


def value(text: str, **env: object) -> float:
    return parse(text).evaluate(env)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # precedence and associativity as in ordinary arithmetic (common practice, no source);
        # the expected values are Python's own arithmetic on the same numbers
        ("1 + 2 * 3", 1 + 2 * 3),
        ("(1 + 2) * 3", (1 + 2) * 3),
        ("7 - 4 - 2", 7 - 4 - 2),
        ("8 / 4 / 2", 8 / 4 / 2),
        ("2 ^ 3 ^ 2", 2**9),
        ("2 ** 3 ** 2", 2**9),
        ("-2 ^ 2", -4.0),
        ("(-2) ^ 2", 4.0),
        ("2 ^ -1", 0.5),
        ("--3", 3.0),
        ("+3 - -3", 6.0),
        ("1.5e3 + .5 + 2.", 1502.5),
        ("1E-2", 0.01),
        ("pi", math.pi),
        ("sqrt(2)", math.sqrt(2)),
        ("log(10)", math.log(10)),
        ("exp(1.5)", math.exp(1.5)),
        ("sin(0.3) + cos(0.3)", math.sin(0.3) + math.cos(0.3)),
        ("abs(-4.5)", 4.5),
        ("min(3, 1, 2)", 1.0),
        ("max(3, 1 + 4, 2)", 5.0),
        ("(-8) ^ 3", -512.0),
    ],
)
def test_values(text: str, expected: float) -> None:
    assert value(text) == pytest.approx(expected, rel=1e-15, abs=0)


def test_names_are_bound_and_reported() -> None:
    e = parse("0.5 * k2 + max(gap, 2 * k2) - pi")
    assert set(e.names) == {"k2", "gap"}  # pi is a constant, not a free name
    assert e.names["k2"] == 7
    assert e.evaluate({"k2": 0.4, "gap": 3}) == pytest.approx(0.2 + 3 - math.pi)


def _random_tree(rng: random.Random, depth: int) -> tuple[str, float]:
    """A random expression and its value computed directly (no parser involved)."""
    if depth == 0 or rng.random() < 0.3:
        x = rng.choice([rng.randint(1, 9), round(rng.uniform(0.1, 9.9), 3)])
        return repr(x), float(x)
    op = rng.choice("+-*/")
    (a, va), (b, vb) = _random_tree(rng, depth - 1), _random_tree(rng, depth - 1)
    if op == "/" and vb == 0:
        op = "+"
    v = {"+": va + vb, "-": va - vb, "*": va * vb, "/": va / vb if vb else 0.0}[op]
    return f"({a} {op} {b})", v


def test_random_arithmetic_matches_direct_computation() -> None:
    rng = random.Random(20240601)  # fixed seed: deterministic test
    for _ in range(300):
        text, expected = _random_tree(rng, 4)
        assert value(text) == pytest.approx(expected, rel=1e-12, abs=1e-12), text


@pytest.mark.parametrize(
    ("text", "fragment", "position"),
    [
        ("1 +* 2", "unexpected '*' at position 4", 4),
        ("(1 + 2", "ends early at position 7", 7),
        ("1 2", "unexpected '2' at position 3", 3),
        ("k2.real", "attribute access", 3),
        ("(1).imag", "attribute access", 4),
        ("__import__('os')", 'unexpected character "\'" at position 12', 12),
        ("open(1)", "unknown function 'open' at position 1", 1),
        ("eval(1)", "unknown function 'eval'", 1),
        ("k2(1)", "unknown function 'k2'", 1),
        ("sqrt", "needs arguments", 1),
        ("sqrt(1, 2)", "takes 1 argument", 1),
        ("min()", "unexpected ')' at position 5", 5),
        ("1 ; 2", "unexpected character ';' at position 3", 3),
        ("a[0]", "unexpected character '['", 2),
        ("lambda: 1", "unexpected character ':'", 7),
        ("1e999", "too large", 1),
        ("", "empty", 1),
        ("   ", "empty", 1),
    ],
)
def test_parse_errors_name_the_position(text: str, fragment: str, position: int) -> None:
    with pytest.raises(ExpressionError) as info:
        parse(text)
    assert fragment in str(info.value)
    assert info.value.position == position
    assert isinstance(info.value, ConfigError)


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("1 / (2 - 2)", "division by zero at position 3"),
        ("log(-1)", "log(-1) at position 1 is undefined"),
        ("sqrt(0 - 4)", "sqrt(-4)"),
        ("exp(1000)", "exp(1000) at position 1"),
        ("10 ^ 1000", "too large"),
        ("2 ^ 2 ^ 2 ^ 2 ^ 2", "too large"),  # 2^65536
        ("9 ^ 9 ^ 9", "too large"),  # computed in floats: fails at once, never a huge integer
        ("(-8) ^ (1/3)", "fractional power"),
        ("0 ^ -1", "zero to a negative power"),
        ("1e300 * 1e300", "not finite"),
    ],
)
def test_evaluation_errors(text: str, fragment: str) -> None:
    with pytest.raises(ExpressionError, match=None) as info:
        value(text)
    assert fragment in str(info.value)


def test_names_at_evaluation() -> None:
    e = parse("2 * eq")
    with pytest.raises(ExpressionError, match="text"):
        e.evaluate({"eq": "kdv"})
    with pytest.raises(ExpressionError, match="unknown name 'eq' at position 5"):
        e.evaluate({})


def test_size_limits() -> None:
    with pytest.raises(ExpressionError, match="characters long"):
        parse("1+" * (MAX_LENGTH // 2) + "1")
    with pytest.raises(ExpressionError, match="nested deeper"):
        parse("(" * (MAX_DEPTH + 1) + "1" + ")" * (MAX_DEPTH + 1))
    with pytest.raises(ExpressionError, match="nested deeper"):
        parse("-" * (MAX_DEPTH + 1) + "1")
    assert value("(" * 10 + "1" + ")" * 10) == 1.0


def test_one_argument_min_and_max_are_the_argument() -> None:
    assert value("max(k2)", k2=0.4) == 0.4
    assert value("min(-1)") == -1.0
    assert value("max(1, 3, 2) + min(4, 5)") == 7.0
    with pytest.raises(ExpressionError, match=r"unexpected '\)' at position 5"):
        parse("max()")


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("2 * \u0663", "unexpected character '\u0663' at position 5"),  # ARABIC-INDIC DIGIT THREE
        ("\uff11 + 1", "unexpected character '\uff11' at position 1"),  # FULLWIDTH DIGIT ONE
        ("1\u00a0+ 1", "unexpected character '\\xa0' at position 2"),  # NO-BREAK SPACE
        ("k2\u202e", "unexpected character '\\u202e' at position 3"),  # RIGHT-TO-LEFT OVERRIDE
    ],
)
def test_only_ascii_digits_and_spaces(text: str, fragment: str) -> None:
    # float() reads digits of other scripts ("\u0663" is 3): the tokenizer must not pass them on
    with pytest.raises(ExpressionError) as info:
        parse(text).evaluate({"k2": 1.0})
    assert fragment in str(info.value)
