"""Reading a sweep's store: ``kv.load(out)`` gives its tables as pandas DataFrames."""

from __future__ import annotations

import os
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from .exceptions import ConfigError
from .model import Grid
from .sweep.store import (
    StoreCheck,
    check_store,
    frame_members,
    frames_pack,
    frames_path,
    read_store,
)


def _first_line(exc: BaseException) -> str:
    return (str(exc).strip().splitlines() or [""])[0]


def _read_frames(out: Path, rid: int, check: StoreCheck) -> tuple[np.ndarray, np.ndarray] | None:
    """A run's frame times and frames: from the frames pack of the batch its row is read from
    (only the pack's index and the run's two members are read), else from its file of the older
    layout (one file per run); None when neither holds them. ConfigError for damaged frames."""
    batch = check.kept.get(rid)
    t_name, u_name = frame_members(rid)
    path = frames_pack(out, batch) if batch is not None else frames_path(out, rid)
    try:
        if batch is not None and path.is_file():
            with open(path, "rb") as fh, np.load(fh) as data:  # the file closes on any error
                if u_name in data.files:
                    return data[t_name], data[u_name]
        path = frames_path(out, rid)
        if not path.is_file():
            return None
        with open(path, "rb") as fh, np.load(fh) as data:
            return data["t"], data["u"]
    except (OSError, ValueError, KeyError, zipfile.BadZipFile) as exc:
        raise ConfigError(
            f"{path}: damaged frames file, run_id {rid} ({type(exc).__name__}: "
            f"{_first_line(exc)}); run the sweep into a new folder to redo the run, or use the "
            "tables without its frames"
        ) from None


class Frames(NamedTuple):
    """Stored frames of one run: ``u[i]`` is the profile at ``times[i]`` on the points ``x``."""

    times: np.ndarray
    x: np.ndarray
    u: np.ndarray


@dataclass
class Results:
    """The tables of one store.

    Attributes
    ----------
    path
        The store folder.
    manifest
        The manifest: ``sweep_name``, ``sweep_text``, ``digest``, ``package_version``, ``created``,
        ``parameters``, ``runs_total``, ``format_version``, ``layout`` (what decides the columns).
    runs
        One row per stored run, sorted by ``run_id`` (columns: :mod:`kdvsweep.columns`, README
        "The tables"); ``Equation.from_columns(row)`` gives the equation of a row.
    solitons
        One row per soliton per stored run, sorted by ``run_id`` then ``soliton``.
    check
        What was found on disk: damaged batches left out (``load(..., skip_damaged=True)``) and
        rows not counted (run ids outside the sweep, rows of runs stored before).
    """

    path: Path
    manifest: dict[str, Any]
    runs: pd.DataFrame
    solitons: pd.DataFrame
    check: StoreCheck | None = None

    @property
    def parameters(self) -> list[str]:
        """The swept parameter names, in file order."""
        return list(self.manifest.get("parameters", []))

    @property
    def total(self) -> int:
        """Runs in the sweep definition."""
        return int(self.manifest.get("runs_total", len(self.runs)))

    def counts(self) -> dict[str, int]:
        """``{"ok", "failed", "pending", "total"}`` run counts."""
        status = self.runs["status"]
        ok = int((status == "ok").sum())
        failed = int(len(status) - ok)
        return {
            "ok": ok,
            "failed": failed,
            "pending": self.total - ok - failed,
            "total": self.total,
        }

    def frames(self, run_id: int) -> Frames:
        """The stored frames of run ``run_id``.

        Raises
        ------
        ConfigError
            The run is not stored or kept no frames (frame storage was off, or the run failed).
        """
        rid = int(run_id)
        stored = self.runs["run_id"].isin([rid]).any() if len(self.runs) else False
        found = None
        if stored:
            check = self.check if self.check is not None else check_store(self.path)
            found = _read_frames(self.path, rid, check)
            if found is None and self.check is not None:  # compacted since it was loaded?
                found = _read_frames(self.path, rid, check_store(self.path))
        if found is None:
            raise ConfigError(
                f"{self.path}: no stored frames for run_id {run_id}; expected a stored ok run "
                "of a sweep with frame storage on"
            )
        row = self.runs.loc[self.runs["run_id"] == rid].iloc[0]
        return Frames(found[0], Grid(int(row["n"]), float(row["length"])).x, found[1])

    def summary(self) -> pd.DataFrame:
        """One row per soliton of each ok run: parameters, kappa, measured and predicted shifts."""
        return summary_table(self)


def load(out: str | os.PathLike[str], skip_damaged: bool = False) -> Results:
    """Load the store ``out`` (a folder made by ``kdvsweep run`` / ``kv.sweep.run``).

    Parameters
    ----------
    out
        The store folder.
    skip_damaged
        Leave out the batches whose files are damaged (``.check.damaged`` lists them; their runs
        count as pending) instead of raising.

    Returns
    -------
    Results
        ``.runs``, ``.solitons`` (DataFrames), ``.manifest`` (dict), ``.frames(run_id)``,
        ``.check`` (what was found on disk).

    Raises
    ------
    ConfigError
        ``out`` is not a store; or a batch is damaged (unless ``skip_damaged``): the message names
        the file and what to do (README, "What the store guarantees").
    """
    path = Path(out)
    contents = read_store(path, skip_damaged=skip_damaged)
    return Results(path, contents.manifest, contents.runs, contents.solitons, contents.check)


#: What the summary shows of a collision (prepared solitons) and of soliton content (any data).
SHIFT_SUMMARY = ("kappa", "kappa_measured", "shift_predicted", "shift_measured", "shift_error")
CONTENT_SUMMARY = (
    "kind",
    "found",
    "amplitude",
    "amplitude_ist",
    "amplitude_uncertainty",
    "speed",
    "speed_ist",
    "note",
)


def summary_table(results: Results) -> pd.DataFrame:
    """The summary the CLI prints: per soliton, the swept parameters and what was measured beside
    what theory predicts (phase shifts of collisions; amplitudes and speeds of soliton content).

    Columns that are empty for every row of the store are left out.
    """
    params = [p for p in results.parameters if p in results.runs.columns]
    runs = results.runs
    if runs.empty or results.solitons.empty:
        return pd.DataFrame(columns=["run_id", *params, "soliton", "kappa"])
    keep = ["run_id", *params, *(c for c in ("equation",) if c not in params and c in runs)]
    merged = results.solitons.merge(runs.loc[runs["status"] == "ok", keep], on="run_id")
    measured = [
        c
        for c in dict.fromkeys((*SHIFT_SUMMARY, *CONTENT_SUMMARY))
        if c in merged.columns and merged[c].notna().any() and (merged[c] != "").any()
    ]
    cols = [*keep, "soliton", *measured]
    return merged[[c for c in cols if c in merged.columns]].reset_index(drop=True)


__all__ = ["CONTENT_SUMMARY", "SHIFT_SUMMARY", "Frames", "Results", "load", "summary_table"]
