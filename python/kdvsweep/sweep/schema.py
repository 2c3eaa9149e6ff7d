"""Reading TOML tables with one-line errors: ``FILE: key.path: given X, expected Y``.

A :class:`Table` wraps one TOML table and its key path; it rejects unknown keys on creation (with a
close-match suggestion from difflib) and its getters check types, so every message names the key.
Indices in key paths count from 0, like the soliton numbers in the result tables.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable, Mapping
from typing import Any

from ..exceptions import ConfigError
from . import expr

_MISSING: Any = object()


def describe(value: object, _depth: int = 0) -> str:
    """A short one-line rendering of a TOML value for error messages, in TOML spelling.

    Long lists are cut after about 80 characters and nesting after a few levels, so a hostile
    value (a list of a million items, arrays nested thousands deep) renders quickly.
    """
    if value is _MISSING:
        return "nothing"
    if isinstance(value, bool):
        text = "true" if value else "false"
    elif isinstance(value, str):
        text = repr(value[:100])
    elif isinstance(value, int | float):
        text = repr(value)
    elif isinstance(value, dict):
        keys = ", ".join(map(str, value))
        text = f"a table {{{keys}}}" if keys else "an empty table"
    elif isinstance(value, list):
        if _depth >= 4:
            text = "[...]" if value else "[]"
        else:
            parts: list[str] = []
            for v in value:
                parts.append(describe(v, _depth + 1))
                if sum(map(len, parts)) > 80:
                    parts.append("...")
                    break
            text = "[" + ", ".join(parts) + "]"
    else:
        text = f"a {type(value).__name__}"
    text = " ".join(text.split())
    return text if len(text) <= 80 else text[:77] + "..."


def join(path: str, key: str | int) -> str:
    """The key path of ``key`` inside ``path`` (``model.length``, ``initial.kappa[1]``)."""
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path else key


def _printable(text: str) -> str:
    """``text`` with every character that does not print (controls, a right-to-left override,
    odd spaces) written as its Python escape, so a message shows what the file holds."""
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() or ch == " " else repr(ch)[1:-1] for ch in text)


class Source:
    """The sweep file being read: its label for messages and the error factory."""

    def __init__(self, label: str) -> None:
        self.label = label

    def error(self, key: str, given: str, expected: str) -> ConfigError:
        """A one-line ConfigError ``FILE: key: given ..., expected ...`` (a key or a given value
        of hostile length is cut, so the line stays readable)."""
        key, given = _printable(key), _printable(given)
        key = key if len(key) <= 120 else key[:117] + "..."
        given = given if len(given) <= 300 else given[:297] + "..."
        message = f"{self.label}: {key}: given {given}, expected {expected}"
        return ConfigError(" ".join(message.split()))

    def expression(self, key: str, text: str) -> expr.Expression:
        """Parse ``text`` as an expression, reporting the position in the error."""
        try:
            return expr.parse(text)
        except expr.ExpressionError as err:
            raise self.error(key, describe(text), f"an expression: {err}") from None


def suggestion(word: str, choices: Iterable[str]) -> str:
    """`` (did you mean 'x'?)`` for the closest of ``choices``, or an empty string."""
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return f" (did you mean {close[0]!r}?)" if close else ""


def is_number(value: object) -> bool:
    """True for TOML integers and floats (not booleans)."""
    return isinstance(value, int | float) and not isinstance(value, bool)


def is_finite(value: object) -> bool:
    """True for TOML integers and floats that are finite as floats (TOML integers have no size
    limit in Python's reader: ``10**400`` is not a finite float)."""
    if not is_number(value):
        return False
    try:
        return math.isfinite(float(value))  # type: ignore[arg-type]
    except OverflowError:
        return False


class Table:
    """One TOML table at ``path``, with its allowed keys."""

    def __init__(
        self, src: Source, data: object, path: str, allowed: Iterable[str], what: str = "a table"
    ) -> None:
        if not isinstance(data, dict):
            raise src.error(path, describe(data), what)
        self.src = src
        self.data: Mapping[str, Any] = data
        self.path = path
        allowed = tuple(allowed)
        for key in data:
            if key not in allowed:
                raise src.error(
                    join(path, key),
                    "an unknown key",
                    f"one of {', '.join(allowed)}{suggestion(key, allowed)}",
                )

    def key(self, key: str | int) -> str:
        """The full key path of ``key``."""
        return join(self.path, key)

    def has(self, key: str) -> bool:
        """Whether ``key`` is present."""
        return key in self.data

    def raw(self, key: str, default: Any = _MISSING) -> Any:
        """The value as written, or ``default``; missing without default is an error."""
        if key in self.data:
            return self.data[key]
        if default is _MISSING:
            raise self.src.error(self.key(key), "nothing", "a value (this key is required)")
        return default

    def fail(self, key: str | int, value: object, expected: str) -> ConfigError:
        """The error for ``value`` found at ``key``."""
        return self.src.error(self.key(key), describe(value), expected)

    def text(self, key: str, choices: Iterable[str] | None = None, default: Any = _MISSING) -> Any:
        """A string, optionally one of ``choices``."""
        value = self.raw(key, default)
        if value is default and key not in self.data:
            return value
        options = None if choices is None else tuple(choices)
        expected = "text" if options is None else f"one of {', '.join(map(repr, options))}"
        if not isinstance(value, str):
            raise self.fail(key, value, expected)
        if options is not None and value not in options:
            raise self.fail(key, value, expected + suggestion(value, options))
        return value

    def number(self, key: str, default: Any = _MISSING, positive: bool = False) -> Any:
        """A finite number (optionally > 0) written literally."""
        value = self.raw(key, default)
        if value is default and key not in self.data:
            return value
        expected = "a positive number" if positive else "a finite number"
        if not is_finite(value) or (positive and value <= 0):
            raise self.fail(key, value, expected)
        return value

    def integer(self, key: str, default: Any = _MISSING, minimum: int | None = None) -> Any:
        """An integer written literally, optionally at least ``minimum``."""
        value = self.raw(key, default)
        if value is default and key not in self.data:
            return value
        expected = "an integer" if minimum is None else f"an integer >= {minimum}"
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.fail(key, value, expected)
        if minimum is not None and value < minimum:
            raise self.fail(key, value, expected)
        return value

    def flag(self, key: str, default: Any = _MISSING) -> Any:
        """A boolean."""
        value = self.raw(key, default)
        if not isinstance(value, bool):
            raise self.fail(key, value, "true or false")
        return value


__all__ = ["Source", "Table", "describe", "is_finite", "is_number", "join", "suggestion"]
