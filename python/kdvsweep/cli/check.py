"""``kdvsweep check``: the plan of a sweep file before anything runs.

Exit status: 0 when the file loads without warnings, 1 when it loads with warnings (the plan is
printed all the same), 2 for a mistake in the file (one line, as ``kdvsweep run``).
"""

from __future__ import annotations

import argparse
import textwrap
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from .common import say

#: What the hazard caution (:data:`kdvsweep.units.CAUTION`) is printed after.
CAUTION_PREFIX = "physical water-wave units: "


def say_caution(systems: Iterable[str | None], command: str) -> None:
    """The hazard caution, once on stderr, when one of ``systems`` (names of
    :data:`kdvsweep.units.SYSTEMS`, ``None`` for a run without ``[units]``) is in physical
    water-wave units (``WATER``): ``kdvsweep run``, ``check`` and ``plot`` share it."""
    from .. import units

    if any(name in units.SYSTEMS and units.SYSTEMS[name].WATER for name in systems if name):
        say(CAUTION_PREFIX + units.CAUTION, command)


def sweep_systems(sweep: Any) -> set[str | None]:
    """The ``[units]`` systems of a loaded sweep's runs (``None`` for runs without)."""
    return {spec.units.NAME if spec.units is not None else None for spec in sweep.runs}


def register(sub: Any) -> None:
    """Add ``check`` to the ``kdvsweep`` sub-parsers."""
    p = sub.add_parser(
        "check",
        help="the plan of a sweep before it runs: runs, sizes, steps, memory, estimated time",
        description=(
            "Load a sweep file and print its plan: the runs grouped by identical settings (n, L, "
            "end, dt, steps, memory, estimated core-seconds on this machine), the warnings and "
            "the total. Nothing is run or written. Exit status 0: no warnings; 1: warnings; "
            "2: an error in the file."
        ),
    )
    p.add_argument("file", type=Path, metavar="FILE", help="sweep file (TOML)")
    p.set_defaults(handler=_check)


def _bytes(value: float) -> str:
    for unit in ("B", "KiB", "MiB", "GiB"):
        if value < 1024 or unit == "GiB":
            return f"{value:.0f} {unit}" if unit == "B" else f"{value:.3g} {unit}"
        value /= 1024
    return f"{value:.3g} GiB"  # pragma: no cover


def _seconds(value: float) -> str:
    if value < 120:
        return f"{value:.3g} s"
    if value < 7200:
        return f"{value / 60:.3g} min"
    return f"{value / 3600:.3g} h"


def _ids(ids: tuple[int, ...]) -> str:
    """``0-8,12`` for the run ids of a group."""
    parts: list[str] = []
    start = prev = ids[0]
    for i in (*ids[1:], None):
        if i is not None and i == prev + 1:
            prev = i
            continue
        parts.append(str(start) if start == prev else f"{start}-{prev}")
        if i is not None:
            start = prev = i
    text = ",".join(parts)
    return text if len(text) <= 24 else text[:21] + "..."


def _cell(value: object) -> str:
    if isinstance(value, float):
        return f"{value:.4g}"
    return str(value)


def _print_table(rows: list[dict[str, object]], left: tuple[str, ...] = ()) -> None:
    """Rows as aligned columns on stdout, right-aligned but the ``left`` columns (without
    loading pandas: the command stays quick)."""
    if not rows:
        return
    heads = list(rows[0])
    cells = [[_cell(row[h]) for h in heads] for row in rows]
    widths = [max(len(h), *(len(c[i]) for c in cells)) for i, h in enumerate(heads)]
    right = [h not in left for h in heads]

    def line(values: list[str]) -> str:
        return "  ".join(
            v.rjust(w) if r else v.ljust(w) for v, w, r in zip(values, widths, right, strict=True)
        ).rstrip()

    print(line(heads))
    for c in cells:
        print(line(c))


def _check(args: argparse.Namespace) -> int:
    from ..sweep.config import load_sweep
    from ..sweep.plan import make_plan

    sweep = load_sweep(args.file)
    say_caution(sweep_systems(sweep), "check")
    plan = make_plan(sweep)
    rows: list[dict[str, object]] = []
    for g in plan.groups:
        rows.append(
            {
                "runs": g.count,
                "run_ids": _ids(g.run_ids),
                "family": g.family,
                "scheme": g.scheme,
                "n": g.n,
                "L": g.length,
                "end": g.t_end,
                "dt": f"{g.dt:g}" if g.tol is None else f"tol {g.tol:g}",
                "frames": g.frames,
                "steps": f"~{g.steps}" if g.steps_estimated else str(g.steps),
                "memory": _bytes(g.memory),
                "s/run": g.seconds,
                "s total": g.total_seconds,
                "refs": g.references,
            }
        )
    print(f"sweep   {plan.name} ({plan.path})")
    print(f"runs    {plan.runs} in {len(plan.groups)} group(s) of identical settings")
    print()
    _print_table(rows, left=("run_ids", "family", "scheme"))
    print()
    references = f" and {plan.references} reference runs" if plan.references else ""
    print(
        f"total   {_seconds(plan.total_seconds)} of one core (estimated) for {plan.runs} "
        f"runs{references}, "
        f"{plan.total_steps} steps; at most {_bytes(plan.peak_memory)} per run"
    )
    for line in textwrap.wrap(plan.calibration.describe(), 92):
        print(f"        {line}")
    print(f"warnings {len(plan.warnings)}")
    for warning in plan.warnings:
        print(f"  {warning}")
    return 1 if plan.warnings else 0


__all__ = ["register"]
