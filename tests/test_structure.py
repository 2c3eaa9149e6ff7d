"""The package's shape: no import cycles; argument parsing, printing and progress bars only in cli/.

The import graph is read from the source with ``ast`` (every ``import`` and ``from ... import``,
relative ones resolved, those inside functions included), so an import made lazily to dodge a
cycle still counts as the dependency it is.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "python" / "kdvsweep"
CLI = PACKAGE / "cli"


def module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def sources() -> dict[str, Path]:
    return {module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def imports_of(name: str, path: Path, modules: set[str]) -> set[str]:
    """The package's modules that ``name`` imports, anywhere in its source."""
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found: set[str] = set()

    def add(target: str) -> None:
        # The longest module of the package that the dotted name designates.
        while target and target not in modules:
            target = target.rpartition(".")[0]
        if target:
            found.add(target)

    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            for alias in node.names:
                add(alias.name)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - (node.level - 1)]
                source = ".".join(base + ([node.module] if node.module else []))
            else:
                source = node.module or ""
            for alias in node.names:
                # `from . import sweep` imports the module kdvsweep.sweep; `from .model import
                # Grid` imports kdvsweep.model.
                full = f"{source}.{alias.name}"
                add(full if full in modules else source)
    found.discard(name)
    return found


def compiled_modules() -> set[str]:
    """Extension modules (``kdvsweep._core``), known by their stubs: they import nothing of ours."""
    return {module_name(p.with_suffix(".py")) for p in PACKAGE.rglob("*.pyi")}


def import_graph() -> dict[str, set[str]]:
    files = sources()
    modules = set(files) | compiled_modules()
    return {name: imports_of(name, path, modules) for name, path in files.items()}


def find_cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """One cycle of the graph as a list of modules (first = last), or None."""
    state: dict[str, int] = {}  # 1 on the current path, 2 done
    path: list[str] = []

    def visit(node: str) -> list[str] | None:
        state[node] = 1
        path.append(node)
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                return [*path[path.index(nxt) :], nxt]
            if nxt not in state and (found := visit(nxt)):
                return found
        path.pop()
        state[node] = 2
        return None

    for node in sorted(graph):
        if node not in state and (found := visit(node)):
            return found
    return None


def test_graph_reader_sees_relative_lazy_and_package_imports() -> None:
    # The reader itself, on modules whose imports are known: a relative import of a sibling, a
    # lazy import inside a function, and `from .. import module`.
    graph = import_graph()
    assert "kdvsweep.model" in graph["kdvsweep.simulation"]
    assert "kdvsweep.sweep.config" in graph["kdvsweep.cli.sweeps"]  # inside a function
    assert "kdvsweep.sweep.farm" in graph["kdvsweep.sweep"]  # `from . import farm`, lazily
    assert {"kdvsweep.cli.bench", "kdvsweep.cli.plot"} <= graph["kdvsweep.cli"]


def test_find_cycle_finds_a_planted_cycle() -> None:
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}
    assert find_cycle(graph) == ["a", "b", "c", "a"]
    assert find_cycle({"a": {"b"}, "b": set()}) is None


def test_import_graph_has_no_cycle() -> None:
    cycle = find_cycle(import_graph())
    assert cycle is None, "import cycle: " + " -> ".join(cycle or [])


def library_files() -> list[Path]:
    return [p for p in sorted(PACKAGE.rglob("*.py")) if CLI not in p.parents]


def offences(path: Path) -> list[str]:
    """``print(`` calls and imports of argparse or tqdm in one file."""
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
            if node.func.id == "print":
                found.append(f"{path.name}:{node.lineno}: print(")
        names: list[str] = []
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and not node.level:
            names = [node.module or ""]
        for name in names:
            if name.split(".")[0] in ("argparse", "tqdm"):
                found.append(f"{path.name}:{node.lineno}: import {name}")
    return found


def test_the_checker_sees_print_and_argparse(tmp_path: Path) -> None:
    sample = tmp_path / "sample.py"
    sample.write_text("import argparse\n\ndef f():\n    from tqdm import tqdm\n    print('x')\n")
    assert offences(sample) == [
        "sample.py:1: import argparse",
        "sample.py:4: import tqdm",
        "sample.py:5: print(",
    ]


@pytest.mark.parametrize("path", library_files(), ids=lambda p: str(p.relative_to(PACKAGE)))
def test_no_print_argparse_or_progress_bar_outside_cli(path: Path) -> None:
    assert offences(path) == []


def test_text_print_appears_only_under_cli() -> None:
    # The plain-text form of the rule: the characters `print(` outside cli/ only in docstrings'
    # examples would still be flagged here, so library docs use `>>>`-free prose.
    hits = [str(p.relative_to(PACKAGE)) for p in library_files() if "print(" in p.read_text()]
    assert hits == []
