"""Names of a package imported on first use (PEP 562).

The packages whose submodules load heavy libraries (pandas, scipy, dask) give each deferred name
its home here, so that ``import kdvsweep`` and the command line stay fast; the name is imported on
first access and then kept in the package like an ordinary attribute.
"""

from __future__ import annotations

import importlib
import sys
from collections.abc import Callable, Mapping
from typing import Any


def loader(package: str, homes: Mapping[str, tuple[str, str | None]]) -> Callable[[str], Any]:
    """The body of ``package``'s module ``__getattr__``: ``homes`` maps each deferred name to
    ``(module, attribute)``, ``module`` relative to the package and ``attribute`` ``None`` for the
    module itself."""

    def load(name: str) -> Any:
        if name not in homes:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        module, attribute = homes[name]
        value: Any = importlib.import_module(module, package)
        if attribute is not None:
            value = getattr(value, attribute)
        setattr(sys.modules[package], name, value)
        return value

    return load


def names(package: str, homes: Mapping[str, tuple[str, str | None]]) -> list[str]:
    """The package's ``__dir__``: what it holds now and every deferred name."""
    return sorted({*vars(sys.modules[package]), *homes})
