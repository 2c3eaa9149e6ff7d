"""Sweep files: read, validate and expand a TOML sweep definition into typed run specs.

The format is described in the README ("Sweep files"). :func:`load_sweep` checks the whole file
(:mod:`kdvsweep.sweep.template`), then evaluates every run (expressions, automatic sizing,
resolution, ``.npy`` files; :mod:`kdvsweep.sweep.expand`, a block of runs at a time) before it
returns, so nothing can start on a file with a mistake anywhere in it. It reads but never writes.
The runs are :class:`kdvsweep.sweep.specs.RunSpec` (the specs are re-exported here).

The digest is the sha256 of a canonical JSON (sorted keys, no spaces, shortest float repr) of the
format version, the frame settings and every expanded run (parameters, model, initial data, times),
with a ``.npy`` file represented by the sha256 of its bytes rather than its location. Comments,
whitespace, key order, ``sweep.name`` and ``sweep.note`` do not change it; any change of what would
be computed does.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..columns import Layout, has_content
from . import accuracy as acc
from .expand import FORMAT, LoadWarnings, Runs
from .schema import Source
from .space import Space, canonical
from .specs import DEFAULT_DRIFT_LIMIT, DEFAULT_TIME_LIMIT, ModelSpec, RunSettings, RunSpec
from .template import MAX_RUN_BYTES, MAX_STEPS, read_template, safe_name


@dataclass(frozen=True)
class Sweep:
    """A validated, fully expanded sweep file.

    Attributes
    ----------
    layout
        What decides the columns of the sweep's tables (:class:`kdvsweep.columns.Layout`).
    frames
        Frame settings: ``store``, ``stride``, ``analysis_every``, ``every``.
    """

    path: Path
    text: str
    digest: str
    name: str
    parameters: tuple[str, ...]
    runs: Runs
    frames: dict[str, Any]
    warnings: tuple[str, ...]
    layout: Layout


def load_sweep(path: str | Path) -> Sweep:
    """Read, validate and expand a sweep file; raise ConfigError on the first problem.

    Every run is evaluated (expressions, automatic sizing, resolution and file checks) before
    returning. Nothing is written anywhere.
    """
    label = str(path)
    src = Source(label)
    file = Path(path)
    try:
        data = file.read_bytes()
    except FileNotFoundError:
        raise src.error("(file)", "a path that does not exist", "a sweep file") from None
    except OSError as err:
        raise src.error(
            "(file)", f"an unreadable path ({err.strerror})", "a readable sweep file"
        ) from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as err:
        raise src.error(
            "(file)", f"bytes that are not UTF-8 (offset {err.start})", "a UTF-8 TOML file"
        ) from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise src.error(
            "(syntax)", f"invalid TOML ({' '.join(str(err).split())})", "a TOML document"
        ) from None
    except RecursionError:  # the reader recurses once per level of nested arrays or tables
        raise src.error(
            "(syntax)", "arrays or tables nested too deeply to read", "a TOML document"
        ) from None
    tpl = read_template(src, doc, file.resolve().parent, file.stem)
    space = Space(tpl.axes)
    tpl.verified_ids = np.array(
        sorted(acc.verified_runs(range(len(space)), tpl.verify, tpl.seed)), dtype=np.int64
    )
    warn = LoadWarnings(label, len(space))
    if (
        tpl.sizing_given
        and tpl.length is not None
        and tpl.end is not None
        and tpl.soliton_data
        and tpl.initial.get("position") != "auto"
    ):
        warn.note("sizing", "unused: no 'auto' length, end or position")
    frames = {
        "store": tpl.keep_frames,
        "stride": tpl.keep_stride,
        "analysis_every": tpl.frame_every,
        "every": canonical(tpl.frame_every * tpl.keep_stride),
    }
    runs = Runs(src, tpl, space)
    digest = runs.digest(frames, warn)  # every run checked here, before anything can start
    return Sweep(
        path=file.resolve(),
        text=text,
        digest=digest,
        name=tpl.name,
        parameters=tpl.parameters,
        runs=runs,
        frames=frames,
        warnings=warn.messages(),
        layout=Layout(
            parameters=tpl.kinds,
            analysis=tpl.soliton_data,
            content=has_content(tpl.predict_content, tpl.soliton_data),
            units=None if tpl.units is None else tpl.units[0],
        ),
    )


__all__ = [
    "DEFAULT_DRIFT_LIMIT",
    "DEFAULT_TIME_LIMIT",
    "FORMAT",
    "MAX_RUN_BYTES",
    "MAX_STEPS",
    "ModelSpec",
    "RunSettings",
    "RunSpec",
    "Runs",
    "Sweep",
    "load_sweep",
    "safe_name",
]
