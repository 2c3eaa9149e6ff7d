"""``kdvsweep spectrum FILE``: solitons the inverse scattering transform predicts for initial data."""

from __future__ import annotations

import argparse
import dataclasses
import warnings
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..exceptions import ConfigError, KdvsweepError
from .common import print_frame, say

if TYPE_CHECKING:
    import numpy as np
    import pandas as pd

    from ..model import Equation, Grid

COMMAND = "spectrum"


def register(sub: Any) -> None:
    """Add ``spectrum`` to the ``kdvsweep`` sub-parsers."""
    from ..spectrum import DEFAULT_TOL

    p = sub.add_parser(
        COMMAND,
        help="solitons predicted by the inverse scattering transform for initial data",
        description="Solitons predicted for initial data by the inverse scattering transform: "
        "the discrete spectrum of a profile in a .npy file, or of each run's initial data in a "
        "sweep file (.toml).",
    )
    p.add_argument("file", type=Path, metavar="FILE", help="a 1-D .npy profile or a sweep file")
    p.add_argument("--length", type=float, metavar="L", help="domain length L of the .npy profile")
    p.add_argument(
        "--equation",
        metavar="NAME",
        help="preset of the .npy profile: kdv (default), kdv-, mkdv, mkdv-",
    )
    p.add_argument(
        "--run",
        type=int,
        action="append",
        dest="runs",
        metavar="ID",
        help="sweep run id (repeatable; default every run)",
    )
    p.add_argument(
        "--tol",
        type=float,
        default=DEFAULT_TOL,
        metavar="TOL",
        help=f"accuracy of kappa (default {DEFAULT_TOL})",
    )
    p.set_defaults(handler=_spectrum)


def _spectrum(args: argparse.Namespace) -> int:
    if args.file.suffix == ".toml":
        if args.length is not None or args.equation is not None:
            raise ConfigError("--length and --equation apply to .npy profiles; a sweep sets them")
        table, failed = _sweep_tables(args.file, args.runs, args.tol)
    else:
        if args.length is None:
            raise ConfigError(f"{args.file}: a .npy profile needs --length L")
        if args.runs:
            raise ConfigError("--run applies to sweep files (.toml)")
        from ..initial import load_array
        from ..model import Grid

        u0 = load_array(args.file)
        table = _predict(u0, Grid(u0.size, args.length), args.equation or "kdv", args.tol)
        failed = 0
    print_frame(table, "{:.10g}")
    return 1 if failed else 0


def _predict(u0: np.ndarray, grid: Grid, equation: str | Equation, tol: float) -> pd.DataFrame:
    """``bound_states`` with its warnings on stderr, one line each."""
    from ..spectrum import bound_states

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        content = bound_states(u0, grid, equation, tol=tol)
    for w in caught:
        say(f"warning: {w.message}", COMMAND)
    say(content.method, COMMAND)
    return content.table()


def _sweep_tables(path: Path, run_ids: list[int] | None, tol: float) -> tuple[pd.DataFrame, int]:
    """One table over the runs of a sweep file (each run's initial data); and the failure count."""
    import pandas as pd

    from ..initial import build_profile
    from ..sweep.config import load_sweep

    sweep = load_sweep(path)
    by_id = {spec.run_id: spec for spec in sweep.runs}
    wanted = sorted(by_id) if not run_ids else run_ids
    missing = [i for i in wanted if i not in by_id]
    if missing:
        raise ConfigError(f"{path}: no run {missing[0]}; expected run ids 0..{len(sweep.runs) - 1}")
    frames, failed = [], 0
    for run_id in wanted:
        spec = by_id[run_id]
        grid, eq = spec.model.grid, spec.model.equation
        # The spectral problem belongs to the unperturbed equation; perturbations act later.
        unperturbed = dataclasses.replace(eq, f=0.0, g=0.0, v=0.0)
        if eq.perturbed:
            say(
                f"run {run_id}: the perturbation terms (f, g, v) are left out: this is the "
                "content under the unperturbed equation",
                COMMAND,
            )
        try:
            table = _predict(build_profile(spec.initial, grid, eq), grid, unperturbed, tol)
        except KdvsweepError as err:
            say(f"run {run_id}: {err}", COMMAND)
            failed += 1
            continue
        table.insert(0, "run_id", run_id)
        frames.append(table)
    return (pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()), failed


__all__ = ["register"]
