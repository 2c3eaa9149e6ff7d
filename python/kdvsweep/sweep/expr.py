"""A small arithmetic language for derived values in sweep files.

Hand-written tokenizer and recursive-descent parser; nothing is ever passed to ``eval``. The
language has numbers, names, ``+ - * /``, powers (``^`` or ``**``, right-associative and binding
tighter than a leading minus, so ``-2^2 = -4``), parentheses, the constant ``pi`` and the functions
``sqrt log exp sin cos abs min max``. All arithmetic is in floating point, so no integer power can
grow without bound; overflow, division by zero and domain errors are reported, never returned.

Grammar::

    expr  := term (("+" | "-") term)*
    term  := unary (("*" | "/") unary)*
    unary := ("+" | "-") unary | power
    power := atom (("^" | "**") unary)?
    atom  := NUMBER | NAME | NAME "(" expr ("," expr)* ")" | "(" expr ")"
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from ..exceptions import ConfigError, ShapeError

MAX_LENGTH = 400
MAX_DEPTH = 40

CONSTANTS: dict[str, float] = {"pi": math.pi}

# name -> (number of arguments, None meaning "one or more"; implementation)
FUNCTIONS: dict[str, tuple[int | None, Callable[..., float]]] = {
    "sqrt": (1, math.sqrt),
    "log": (1, math.log),
    "exp": (1, math.exp),
    "sin": (1, math.sin),
    "cos": (1, math.cos),
    "abs": (1, abs),
    "min": (None, lambda *args: min(args)),  # min(x) = x: one argument is a plain value
    "max": (None, lambda *args: max(args)),
}

RESERVED = frozenset(CONSTANTS) | frozenset(FUNCTIONS)

_TOKEN = re.compile(
    r"\s*(?:"
    r"(?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)"
    r"|(?P<name>[A-Za-z_][A-Za-z0-9_]*)"
    r"|(?P<op>\*\*|[-+*/^(),])"
    r")",
    re.ASCII,  # ASCII digits only: float() would read other scripts' digits ("\u0663" is 3)
)


_SPACE = " \t\r\n\f\v"  # ASCII white space; other spaces are unexpected characters


class ExpressionError(ConfigError):
    """An expression that does not parse or cannot be evaluated; ``position`` is 1-based."""

    def __init__(self, message: str, position: int) -> None:
        super().__init__(message)
        self.position = position


@dataclass(frozen=True, slots=True)
class _Token:
    kind: str  # "num", "name", "op", "end"
    text: str
    pos: int  # 1-based column


@dataclass(frozen=True, slots=True)
class _Num:
    value: float
    pos: int


@dataclass(frozen=True, slots=True)
class _Name:
    name: str
    pos: int


@dataclass(frozen=True, slots=True)
class _Neg:
    operand: _Node
    pos: int


@dataclass(frozen=True, slots=True)
class _Bin:
    op: str
    left: _Node
    right: _Node
    pos: int


@dataclass(frozen=True, slots=True)
class _Call:
    func: str
    args: tuple[_Node, ...]
    pos: int


_Node = _Num | _Name | _Neg | _Bin | _Call


def _tokenize(text: str) -> list[_Token]:
    tokens: list[_Token] = []
    i = 0
    while i < len(text):
        if text[i] in _SPACE:
            i += 1
            continue
        m = _TOKEN.match(text, i)
        if m is None or m.lastgroup is None:
            ch = text[i]
            if (
                ch == "."
                and tokens
                and tokens[-1].kind in ("name", "op")
                and tokens[-1].text != "("
            ):
                raise ExpressionError(
                    f"unexpected '.' at position {i + 1} (attribute access is not part of the "
                    "language)",
                    i + 1,
                )
            raise ExpressionError(f"unexpected character {ch!r} at position {i + 1}", i + 1)
        kind = m.lastgroup
        start = m.start(kind)
        tokens.append(_Token(kind, m.group(kind), start + 1))
        i = m.end()
    tokens.append(_Token("end", "", len(text) + 1))
    return tokens


class _Parser:
    def __init__(self, text: str) -> None:
        self.tokens = _tokenize(text)
        self.i = 0
        self.depth = 0

    @property
    def tok(self) -> _Token:
        return self.tokens[self.i]

    def _take(self) -> _Token:
        tok = self.tokens[self.i]
        self.i += 1
        return tok

    def _unexpected(self, wanted: str) -> ExpressionError:
        tok = self.tok
        if tok.kind == "end":
            return ExpressionError(
                f"expression ends early at position {tok.pos}; expected {wanted}", tok.pos
            )
        return ExpressionError(
            f"unexpected {tok.text!r} at position {tok.pos}; expected {wanted}", tok.pos
        )

    def _enter(self) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise ExpressionError(
                f"expression nested deeper than {MAX_DEPTH} levels at position {self.tok.pos}",
                self.tok.pos,
            )

    def parse(self) -> _Node:
        node = self.expr()
        if self.tok.kind != "end":
            raise self._unexpected("an operator or the end of the expression")
        return node

    def expr(self) -> _Node:
        node = self.term()
        while self.tok.kind == "op" and self.tok.text in "+-":
            op = self._take()
            node = _Bin(op.text, node, self.term(), op.pos)
        return node

    def term(self) -> _Node:
        node = self.unary()
        while self.tok.kind == "op" and self.tok.text in ("*", "/"):
            op = self._take()
            node = _Bin(op.text, node, self.unary(), op.pos)
        return node

    def unary(self) -> _Node:
        if self.tok.kind == "op" and self.tok.text in "+-":
            op = self._take()
            self._enter()
            operand = self.unary()
            self.depth -= 1
            return operand if op.text == "+" else _Neg(operand, op.pos)
        return self.power()

    def power(self) -> _Node:
        base = self.atom()
        if self.tok.kind == "op" and self.tok.text in ("^", "**"):
            op = self._take()
            self._enter()
            exponent = self.unary()
            self.depth -= 1
            return _Bin("^", base, exponent, op.pos)
        return base

    def atom(self) -> _Node:
        tok = self.tok
        if tok.kind == "num":
            self._take()
            value = float(tok.text)
            if not math.isfinite(value):
                raise ExpressionError(
                    f"number {tok.text} at position {tok.pos} is too large", tok.pos
                )
            return _Num(value, tok.pos)
        if tok.kind == "name":
            self._take()
            if self.tok.kind == "op" and self.tok.text == "(":
                return self._call(tok)
            if tok.text in FUNCTIONS:
                raise ExpressionError(
                    f"function {tok.text!r} at position {tok.pos} needs arguments in parentheses",
                    tok.pos,
                )
            return _Name(tok.text, tok.pos)
        if tok.kind == "op" and tok.text == "(":
            self._take()
            self._enter()
            node = self.expr()
            self.depth -= 1
            if not (self.tok.kind == "op" and self.tok.text == ")"):
                raise self._unexpected("')'")
            self._take()
            return node
        raise self._unexpected("a number, a name or '('")

    def _call(self, name: _Token) -> _Node:
        if name.text not in FUNCTIONS:
            known = ", ".join(sorted(FUNCTIONS))
            raise ExpressionError(
                f"unknown function {name.text!r} at position {name.pos}; expected one of {known}",
                name.pos,
            )
        self._take()  # "("
        self._enter()
        args = [self.expr()]
        while self.tok.kind == "op" and self.tok.text == ",":
            self._take()
            args.append(self.expr())
        self.depth -= 1
        if not (self.tok.kind == "op" and self.tok.text == ")"):
            raise self._unexpected("',' or ')'")
        self._take()
        arity, _ = FUNCTIONS[name.text]
        if arity is not None and len(args) != arity:
            raise ExpressionError(
                f"function {name.text!r} at position {name.pos} takes {arity} argument(s), "
                f"got {len(args)}",
                name.pos,
            )
        return _Call(name.text, tuple(args), name.pos)


def _names(node: _Node, out: dict[str, int]) -> None:
    if isinstance(node, _Name):
        out.setdefault(node.name, node.pos)
    elif isinstance(node, _Neg):
        _names(node.operand, out)
    elif isinstance(node, _Bin):
        _names(node.left, out)
        _names(node.right, out)
    elif isinstance(node, _Call):
        for arg in node.args:
            _names(arg, out)


def _numbers(node: _Name, values: object, size: int) -> np.ndarray:
    """The float64 values of a name bound to ``values`` (``size`` of them); a text value (or a
    bool) is refused, the first one named."""
    arr = np.asarray(values)
    if arr.shape != (size,):
        raise ShapeError(f"name {node.name!r}: {size} values expected, got shape {arr.shape}")
    if arr.dtype.kind in "fiu":
        return arr.astype(np.float64, copy=False)
    items = arr.tolist()
    out = np.empty(size, dtype=np.float64)
    for i, value in enumerate(items):
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ExpressionError(
                f"name {node.name!r} at position {node.pos} is text ({value!r}), not a number",
                node.pos,
            )
        out[i] = float(value)
    return out


def _call(node: _Call, args: list[np.ndarray], size: int) -> np.ndarray:
    """A function element by element through :data:`FUNCTIONS` (numpy's transcendental functions
    may differ from ``math``'s by an ulp)."""
    _, func = FUNCTIONS[node.func]
    out = np.empty(size, dtype=np.float64)
    for i, row in enumerate(zip(*(a.tolist() for a in args), strict=True)):
        try:
            value = float(func(*row))
        except (ValueError, OverflowError, TypeError):
            value = math.nan
        if not math.isfinite(value):
            shown = ", ".join(f"{a:.6g}" for a in row)
            raise ExpressionError(
                f"{node.func}({shown}) at position {node.pos} is undefined or too large", node.pos
            )
        out[i] = value
    return out


def _power(left: np.ndarray, right: np.ndarray, pos: int) -> np.ndarray:
    """``left ** right`` element by element with Python floats (``float ** float`` never builds a
    huge integer; overflow raises and is reported)."""
    out = np.empty(left.shape, dtype=np.float64)
    for i, (base, exponent) in enumerate(zip(left.tolist(), right.tolist(), strict=True)):
        if base < 0 and not exponent.is_integer():
            raise ExpressionError(
                f"negative number {base:.6g} to the fractional power {exponent:.6g} at position "
                f"{pos}",
                pos,
            )
        if base == 0 and exponent < 0:
            raise ExpressionError(f"zero to a negative power at position {pos}", pos)
        try:
            value = base**exponent
        except OverflowError:
            raise ExpressionError(
                f"{base:.6g}^{exponent:.6g} at position {pos} is too large", pos
            ) from None
        if not math.isfinite(value):
            raise ExpressionError(f"result is not finite at position {pos}", pos)
        out[i] = value
    return out


def _evaluate(node: _Node, env: Mapping[str, object], size: int) -> np.ndarray:
    """The values of ``node`` in a block of ``size`` runs; the first failing operation (in the
    order a single run evaluates them) reports its first failing run."""
    if isinstance(node, _Num):
        return np.full(size, node.value)
    if isinstance(node, _Name):
        if node.name in CONSTANTS:
            return np.full(size, CONSTANTS[node.name])
        if node.name not in env:
            raise ExpressionError(f"unknown name {node.name!r} at position {node.pos}", node.pos)
        return _numbers(node, env[node.name], size)
    if isinstance(node, _Neg):
        return -_evaluate(node.operand, env, size)
    if isinstance(node, _Call):
        return _call(node, [_evaluate(arg, env, size) for arg in node.args], size)
    left = _evaluate(node.left, env, size)
    right = _evaluate(node.right, env, size)
    if node.op == "^":
        return _power(left, right, node.pos)
    if node.op == "+":
        result = left + right
    elif node.op == "-":
        result = left - right
    elif node.op == "*":
        result = left * right
    else:
        result = left / right
        bad = (right == 0.0) | ~np.isfinite(result)
        if bad.any() and right[int(bad.argmax())] == 0.0:  # the first failing run's reason
            raise ExpressionError(f"division by zero at position {node.pos}", node.pos)
    if not np.isfinite(result).all():
        raise ExpressionError(f"result is not finite at position {node.pos}", node.pos)
    return result


@dataclass(frozen=True)
class Expression:
    """A parsed expression: ``source`` text, the free ``names`` it uses (name -> first position)."""

    source: str
    names: Mapping[str, int]
    _tree: _Node

    @property
    def bare_name(self) -> str | None:
        """The name, when the expression is one name alone (``"k2"``), else None."""
        return self._tree.name if isinstance(self._tree, _Name) else None

    def evaluate(self, env: Mapping[str, object]) -> float:
        """The value with the names bound by ``env`` (numbers or text); raises ExpressionError on
        any failure. A block of one run of :meth:`evaluate_many`."""
        block: dict[str, np.ndarray] = {}
        for name in self.names:
            if name in env:
                one = np.empty(1, dtype=object)  # a number, a text or anything else, as given
                one[0] = env[name]
                block[name] = one
        return float(self.evaluate_many(block, 1)[0])

    def evaluate_many(self, env: Mapping[str, np.ndarray], size: int) -> np.ndarray:
        """The values in a block of ``size`` runs, float64 of shape ``(size,)``: each name bound to
        ``size`` values (float64, or an object array holding text).

        Bit-identical to evaluating each run alone: ``+ - * /`` and negation are correctly rounded
        in numpy, powers and functions are taken element by element in Python floats. Raises the
        ExpressionError a run alone would raise, for the first failing run of the first operation
        that fails.
        """
        with np.errstate(all="ignore"):  # non-finite results are found and reported instead
            out = _evaluate(self._tree, env, size)
        return out.copy() if isinstance(self._tree, _Name) else out  # never the caller's array


def parse(text: str) -> Expression:
    """Parse ``text``; raises ExpressionError naming the 1-based position of the problem."""
    if len(text) > MAX_LENGTH:
        raise ExpressionError(
            f"expression is {len(text)} characters long; at most {MAX_LENGTH} allowed",
            MAX_LENGTH + 1,
        )
    if not text.strip():
        raise ExpressionError("expression is empty", 1)
    tree = _Parser(text).parse()
    names: dict[str, int] = {}
    _names(tree, names)
    for name in CONSTANTS:
        names.pop(name, None)
    return Expression(text, names, tree)


__all__ = ["CONSTANTS", "FUNCTIONS", "RESERVED", "Expression", "ExpressionError", "parse"]
