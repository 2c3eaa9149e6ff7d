"""The expression language of sweep files: values, precedence, and rejection with positions."""

from __future__ import annotations

import math
import random
from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
import pytest

from kdvsweep.exceptions import ConfigError, ShapeError
from kdvsweep.sweep.expr import (
    CONSTANTS,
    FUNCTIONS,
    MAX_DEPTH,
    MAX_LENGTH,
    ExpressionError,
    _Call,
    _Name,
    _Neg,
    _Node,
    _Num,
    parse,
)


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


# ----------------------------------------------------------------------------------------------
# Blocks of runs (Expression.evaluate_many) against the previous scalar evaluator, kept here
# verbatim as the reference (python/kdvsweep/sweep/expr.py before the block rewrite; only renamed
# old_evaluate and old_finite). Values must be bit-identical (they feed the sweep digest) and the
# errors of a run alone word for word the same.


def old_finite(value: float, pos: int) -> float:
    if not math.isfinite(value):
        raise ExpressionError(f"result is not finite at position {pos}", pos)
    return value


def old_evaluate(node: _Node, env: Mapping[str, object]) -> float:
    if isinstance(node, _Num):
        return node.value
    if isinstance(node, _Name):
        if node.name in CONSTANTS:
            return CONSTANTS[node.name]
        if node.name not in env:
            raise ExpressionError(f"unknown name {node.name!r} at position {node.pos}", node.pos)
        value = env[node.name]
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ExpressionError(
                f"name {node.name!r} at position {node.pos} is text ({value!r}), not a number",
                node.pos,
            )
        return float(value)
    if isinstance(node, _Neg):
        return -old_evaluate(node.operand, env)
    if isinstance(node, _Call):
        args = [old_evaluate(arg, env) for arg in node.args]
        _, func = FUNCTIONS[node.func]
        try:
            return old_finite(float(func(*args)), node.pos)
        except (ValueError, OverflowError, TypeError):
            shown = ", ".join(f"{a:.6g}" for a in args)
            raise ExpressionError(
                f"{node.func}({shown}) at position {node.pos} is undefined or too large", node.pos
            ) from None
    left = old_evaluate(node.left, env)
    right = old_evaluate(node.right, env)
    if node.op == "+":
        return old_finite(left + right, node.pos)
    if node.op == "-":
        return old_finite(left - right, node.pos)
    if node.op == "*":
        return old_finite(left * right, node.pos)
    if node.op == "/":
        if right == 0.0:
            raise ExpressionError(f"division by zero at position {node.pos}", node.pos)
        return old_finite(left / right, node.pos)
    # power: float ** float never builds a huge integer; overflow raises and is reported
    if left < 0 and not right.is_integer():
        raise ExpressionError(
            f"negative number {left:.6g} to the fractional power {right:.6g} at position "
            f"{node.pos}",
            node.pos,
        )
    if left == 0 and right < 0:
        raise ExpressionError(f"zero to a negative power at position {node.pos}", node.pos)
    try:
        return old_finite(left**right, node.pos)
    except OverflowError:
        raise ExpressionError(
            f"{left:.6g}^{right:.6g} at position {node.pos} is too large", node.pos
        ) from None


NAMES = ("a", "b", "c", "t")
ERROR_KINDS = (
    "division by zero",
    "not finite",
    "fractional power",
    "zero to a negative power",
    "is too large",
    "is undefined or too large",
    "is text",
    "unknown name",
)


def _random_expression(rng: random.Random, depth: int) -> str:
    """Random text of the language: numbers, names, pi, every operator and function."""
    if depth == 0 or rng.random() < 0.25:
        return rng.choice(
            [
                str(rng.randint(0, 9)),
                repr(round(rng.uniform(0.0, 10.0), rng.randint(0, 4))),
                rng.choice(["0", "0.5", "2", "1e300", "1e-300", "3.0e2", ".25"]),
                rng.choice(NAMES[:3]),
                rng.choice(NAMES[:3]),
                "pi",
                "t" if rng.random() < 0.05 else "a",
                "zz" if rng.random() < 0.02 else "b",  # an unknown name, now and then
            ]
        )
    kind = rng.random()

    def sub() -> str:
        return _random_expression(rng, depth - 1)

    if kind < 0.45:
        op = rng.choice(["+", "-", "*", "/", "^", "**"])
        return f"({sub()} {op} {sub()})"
    if kind < 0.55:
        return f"-{sub()}"
    if kind < 0.6:
        return f"{sub()} ^ -{sub()}"
    func = rng.choice(sorted(FUNCTIONS))
    arity = FUNCTIONS[func][0]
    count = arity if arity is not None else rng.randint(1, 3)
    return f"{func}({', '.join(sub() for _ in range(count))})"


def _random_value(rng: random.Random) -> float:
    value: float = rng.choice(
        [
            rng.uniform(-10.0, 10.0),
            float(rng.randint(-4, 4)),
            0.0,
            -0.0,
            0.5,
            10.0 ** rng.uniform(-300, 300),
            -(10.0 ** rng.uniform(-20, 20)),
            rng.uniform(0.0, 3.0),
        ]
    )
    return value


def _reference(tree: object, env: Mapping[str, object]) -> tuple[str, Any, int]:
    """``("ok", value, 0)`` or ``("error", message, position)`` of the scalar evaluator."""
    try:
        return "ok", old_evaluate(tree, env), 0  # type: ignore[arg-type]
    except ExpressionError as err:
        return "error", str(err), err.position


def _outcome(call: Callable[..., Any], *args: object) -> tuple[str, Any, int]:
    try:
        return "ok", call(*args), 0
    except ExpressionError as err:
        return "error", str(err), err.position


def _same(a: float, b: float) -> bool:
    return a == b and math.copysign(1.0, a) == math.copysign(1.0, b)


def test_blocks_of_one_match_the_scalar_evaluator() -> None:
    rng = random.Random(20261202)  # fixed seed: deterministic test
    counts = {"ok": 0, "error": 0}
    kinds: set[str] = set()
    for _ in range(6000):
        expression = parse(_random_expression(rng, rng.randint(1, 4)))
        env: dict[str, object] = {name: _random_value(rng) for name in NAMES[:3]}
        env["t"] = rng.choice(["kdv", True, 3, 2.5])  # text, a bool (refused as text), numbers
        if rng.random() < 0.2:
            env["a"] = rng.randint(-3, 3)  # Python ints are numbers
        expected = _reference(expression._tree, env)
        counts[expected[0]] += 1
        if expected[0] == "error":
            kinds.update(k for k in ERROR_KINDS if k in str(expected[1]))
        got = _outcome(expression.evaluate, env)
        block = {
            name: np.array([value], dtype=object if isinstance(value, str | bool) else np.float64)
            for name, value in env.items()
        }
        many = _outcome(expression.evaluate_many, block, 1)
        if many[0] == "ok":
            many = ("ok", float(many[1][0]), 0)
        for outcome in (got, many):
            assert outcome[0] == expected[0], (expression.source, env, outcome, expected)
            if expected[0] == "ok":
                assert _same(outcome[1], expected[1]), (expression.source, env)
            else:
                assert outcome[1:] == expected[1:], expression.source
    assert counts["ok"] > 1000
    assert counts["error"] > 500
    assert kinds == set(ERROR_KINDS)  # every kind of failure was compared


def test_blocks_match_run_by_run_and_name_a_failing_run() -> None:
    rng = random.Random(1202)  # fixed seed: deterministic test
    failures = 0
    for _ in range(1500):
        expression = parse(_random_expression(rng, rng.randint(1, 4)))
        size = rng.choice([2, 7, 64])
        columns = {name: [_random_value(rng) for _ in range(size)] for name in NAMES[:3]}
        columns["t"] = [2.5] * size
        runs = [{name: column[i] for name, column in columns.items()} for i in range(size)]
        expected = [_reference(expression._tree, run) for run in runs]
        block = {name: np.array(column, dtype=np.float64) for name, column in columns.items()}
        got = _outcome(expression.evaluate_many, block, size)
        if all(e[0] == "ok" for e in expected):
            assert got[0] == "ok", (expression.source, got)
            values = got[1]
            assert isinstance(values, np.ndarray)
            assert values.dtype == np.float64
            assert values.shape == (size,)
            assert all(_same(v, e[1]) for v, e in zip(values.tolist(), expected, strict=True))
        else:
            failures += 1
            # the error of one of the failing runs, word for word (its values in the message)
            assert got[0] == "error", expression.source
            assert got[1:] in [e[1:] for e in expected if e[0] == "error"], (expression.source, got)
    assert failures > 100


def test_a_block_reports_its_first_failing_run() -> None:
    e = parse("log(a) + 1 / b")
    block = {"a": np.array([1.0, 2.0, -3.0, -4.0]), "b": np.array([0.0, 1.0, 1.0, 1.0])}
    # log fails before the division in a run alone, and so in the block: at run 2 (a = -3)
    with pytest.raises(ExpressionError, match=r"^log\(-3\) at position 1 is undefined"):
        e.evaluate_many(block, 4)
    block["a"] = np.array([1.0, 2.0, 3.0, 4.0])
    with pytest.raises(ExpressionError, match="division by zero at position 12"):
        e.evaluate_many(block, 4)
    p = parse("a ^ b")
    with pytest.raises(ExpressionError, match=r"negative number -2 to the fractional power 0\.5"):
        p.evaluate_many({"a": np.array([4.0, -2.0, -8.0]), "b": np.array([0.5, 0.5, 0.5])}, 3)
    text = np.array(["x", "kdv", "y"], dtype=object)
    with pytest.raises(ExpressionError, match=r"name 'a' at position 1 is text \('x'\)"):
        p.evaluate_many({"a": text, "b": np.ones(3)}, 3)


def test_evaluate_many_needs_one_value_per_run() -> None:
    with pytest.raises(ShapeError, match="3 values expected"):
        parse("2 * a").evaluate_many({"a": np.ones(2)}, 3)
    assert parse("2 * pi").evaluate_many({}, 3).tolist() == [2 * math.pi] * 3
