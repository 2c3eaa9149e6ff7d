"""Figures of collisions and sweeps, and the ``kdvsweep plot OUT`` command.

* :func:`spacetime`: the space-time diagram of one run, with the tracked trajectories and the
  fitted asymptotes drawn over it (the phase shift is the offset between the two dashed lines);
* :func:`shift_comparison`: measured against predicted shift over a sweep, with the identity line;
* :func:`relative_error`: relative shift error against a swept parameter.

Figures are built on :class:`matplotlib.figure.Figure` directly (no pyplot state), so plotting is
safe from worker threads and never opens a window. :func:`save` writes PNG and PDF.
"""

from __future__ import annotations

import argparse
import math
import os
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from matplotlib import colors as mcolors
from matplotlib import patheffects
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from .analysis import RunAnalysis, analyse_run
from .exceptions import ConfigError, KdvsweepError
from .model import Equation, Grid

FORMATS = ("png", "pdf")
# Large type and thick lines: these figures are meant for slides.
STYLE: dict[str, Any] = {
    "font.size": 13,
    "axes.titlesize": 14,
    "axes.labelsize": 14,
    "legend.fontsize": 11,
    "lines.linewidth": 2.0,
}
SOLITON_COLORS = ("#d62728", "#1f77b4", "#2ca02c", "#ff7f0e", "#9467bd", "#8c564b")
# Over a signed (red-blue) field, bright lines with a dark edge; over the grey KdV field, the
# usual colours with a light edge. Either stays readable on the ridges they follow.
SIGNED_COLORS = ("#ffd21f", "#3df58f", "#ff6ad5", "#5ee7ff")
_EDGE = {
    False: [patheffects.Stroke(linewidth=3.4, foreground="white", alpha=0.8), patheffects.Normal()],
    True: [patheffects.Stroke(linewidth=3.2, foreground="black", alpha=0.9), patheffects.Normal()],
}
TRAJECTORY_GID = "trajectory"
ASYMPTOTE_GID = "asymptote"
PEAK_GID = "peak"


def _figure(width: float = 7.5, height: float = 5.5) -> Figure:
    return Figure(figsize=(width, height), layout="constrained", dpi=150)


def _wrapped_line(
    t: np.ndarray, x: np.ndarray, length: float, index: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Wrap positions into ``[-L/2, L/2)`` and break the line (NaN) where it jumps across the
    boundary or, given frame ``index``, where frames are missing."""
    xw = (x + 0.5 * length) % length - 0.5 * length
    brk = np.abs(np.diff(xw)) > 0.5 * length
    if index is not None:
        brk |= np.diff(index) > 1
    cut = np.flatnonzero(brk) + 1
    return np.insert(t, cut, np.nan), np.insert(xw, cut, np.nan)


def spacetime(
    frames: np.ndarray,
    times: np.ndarray,
    grid: Grid,
    analysis: RunAnalysis | None = None,
    title: str | None = None,
    zoom: bool = True,
) -> Figure:
    """Space-time diagram ``u(x, t)`` with tracked trajectories and fitted asymptotes.

    Parameters
    ----------
    frames, times
        The record, shape ``(m, n)`` and ``(m,)``.
    grid
        Its grid.
    analysis
        The result of :func:`kdvsweep.analysis.analyse_run` on the same record; without it only the
        field is drawn.
    title
        Figure title.
    zoom
        Add a second panel centred on the collision (when the analysis located one), in the
        coordinate ``x - x_c`` so that a collision near the periodic boundary is not cut.

    Returns
    -------
    matplotlib.figure.Figure
        Trajectory lines carry the gid ``"trajectory"``, asymptotes ``"asymptote"``.
    """
    u = np.asarray(frames, dtype=np.float64)
    t = np.asarray(times, dtype=np.float64)
    centre = _collision_point(analysis, grid) if zoom and analysis is not None else None
    fig = _figure(13.0 if centre else 7.5, 5.8)
    axes = fig.subplots(1, 2 if centre else 1, squeeze=False)[0]
    image = _field(axes[0], u, t, grid, 0)
    if analysis is not None:
        _draw_tracks(axes[0], analysis, t, grid.length, 0.0, True, _is_signed(u))
    axes[0].set_xlabel("x")
    if centre is not None:
        x_c, t_c, half_x, half_t = centre
        shift = round(x_c / grid.dx)
        _field(axes[1], u, t, grid, shift)
        _draw_tracks(axes[1], analysis, t, grid.length, shift * grid.dx, False, _is_signed(u))
        axes[1].set_xlim(-half_x, half_x)
        axes[1].set_ylim(max(t[0], t_c - half_t), min(t[-1], t_c + half_t))
        axes[1].set_xlabel(f"x − x_c   (x_c = {shift * grid.dx:.4g})")
        axes[1].set_title("collision")
        axes[0].add_patch(_box(x_c, t_c, half_x, half_t))
    axes[0].set_ylabel("t")
    fig.colorbar(image, ax=list(axes), label="u", pad=0.01)
    if title:
        fig.suptitle(title)
    return fig


def _box(x_c: float, t_c: float, half_x: float, half_t: float) -> Any:
    from matplotlib.patches import Rectangle

    return Rectangle(
        (x_c - half_x, t_c - half_t), 2 * half_x, 2 * half_t, fill=False, ec="0.35", lw=1.0, ls=":"
    )


def _field(ax: Axes, u: np.ndarray, t: np.ndarray, grid: Grid, shift: int) -> Any:
    """Draw the field; ``shift`` grid steps re-centre it (periodic roll)."""
    signed = _is_signed(u)
    vmax = float(np.abs(u).max()) or 1.0
    if signed:
        cmap, norm = "RdBu_r", mcolors.SymLogNorm(0.02 * vmax, vmin=-vmax, vmax=vmax)
    else:
        cmap, norm = "Greys", mcolors.PowerNorm(0.5, vmin=0.0, vmax=vmax)
    x0, x1 = -0.5 * grid.length, 0.5 * grid.length
    image = ax.imshow(
        np.roll(u, -shift, axis=1),
        origin="lower",
        aspect="auto",
        cmap=cmap,
        norm=norm,
        interpolation="nearest",
        extent=(x0 - 0.5 * grid.dx, x1 - 0.5 * grid.dx, t[0], t[-1]),
    )
    ax.set_xlim(x0, x1)
    ax.set_ylim(t[0], t[-1])
    return image


def _is_signed(u: np.ndarray) -> bool:
    return bool(u.min() < -0.05 * np.abs(u).max())


def _collision_point(analysis: RunAnalysis, grid: Grid) -> tuple[float, float, float, float] | None:
    """``(x_c, t_c, half-width, half-duration)`` of a zoom box on a two-soliton collision."""
    t_c = analysis.summary.get("t_closest", math.nan)
    if len(analysis.fits) != 2 or not math.isfinite(t_c):
        return None
    f0, f1 = analysis.fits
    x_mid = 0.5 * (f0.offset_before + f0.offset_after) + f0.speed * t_c
    x_c = float((x_mid + 0.5 * grid.length) % grid.length - 0.5 * grid.length)
    kappas = analysis.table["kappa_measured"].to_numpy(float)
    shifts = np.abs(analysis.table["shift_measured"].to_numpy(float))
    half_x = min(0.5 * grid.length, max(3.0 * shifts.max(), 3.0 / kappas.min()))
    half_t = 1.2 * half_x / abs(f0.speed - f1.speed)
    return x_c, float(t_c), float(half_x), float(half_t)


def _draw_tracks(
    ax: Axes,
    analysis: RunAnalysis,
    t: np.ndarray,
    length: float,
    x_ref: float,
    legend: bool,
    signed: bool,
) -> None:
    """Tracked peaks (solid) and, outside their fit windows, the fitted asymptotes (dashed): the
    offset between a dashed line and the track on the other side of the collision is the shift.
    Positions are drawn relative to ``x_ref``."""
    tracks = analysis.tracks
    handles = []
    frames = np.flatnonzero(tracks.linked)
    for i in range(tracks.n_solitons):
        palette = SIGNED_COLORS if signed else SOLITON_COLORS
        color = palette[i % len(palette)]
        tt, xx = _wrapped_line(t[frames], tracks.position[frames, i] - x_ref, length, frames)
        kappa = analysis.table["kappa"].iloc[i] if i < len(analysis.table) else math.nan
        label = f"soliton {i}" + (f" (κ = {kappa:.3g})" if math.isfinite(kappa) else "")
        handles += ax.plot(
            xx, tt, color=color, lw=1.5, gid=TRAJECTORY_GID, label=label, path_effects=_EDGE[signed]
        )
        if i < len(analysis.fits) and analysis.before is not None and analysis.after is not None:
            fit = analysis.fits[i]
            t_b = t[np.flatnonzero(analysis.before)[-1]]
            t_a = t[np.flatnonzero(analysis.after)[0]]
            for offset, t_from, t_to in (
                (fit.offset_before, t_b, t[-1]),
                (fit.offset_after, t[0], t_a),
            ):
                line_t = np.linspace(t_from, t_to, 400)
                at, lx = _wrapped_line(line_t, fit.speed * line_t + offset - x_ref, length)
                ax.plot(
                    lx,
                    at,
                    color=color,
                    lw=1.3,
                    ls=(0, (4, 3)),
                    gid=ASYMPTOTE_GID,
                    path_effects=_EDGE[signed],
                )
    # Mid-collision the solitons are not identified; show every extremum found there instead.
    gap = [f for f in range(t.size) if not tracks.linked[f] and f < len(tracks.extrema)]
    if gap:
        px = np.concatenate([tracks.extrema[f].x for f in gap])
        pt = np.concatenate([np.full(len(tracks.extrema[f]), t[f]) for f in gap])
        px = (px - x_ref + 0.5 * length) % length - 0.5 * length
        dots = ax.plot(
            px,
            pt,
            ls="none",
            marker="o",
            ms=2.6,
            mew=0.5,
            gid=PEAK_GID,
            color="white" if signed else "#ff7f0e",
            mec="black" if signed else "#ff7f0e",
            label="peaks mid-collision",
        )
        if legend:
            handles += dots
    if tracks.n_solitons and legend:
        handles += ax.plot(
            [], [], color="0.2", lw=1.3, ls=(0, (4, 3)), label="fitted asymptote, extrapolated"
        )
        ax.get_figure().legend(
            handles=handles, loc="outside lower center", ncols=min(len(handles), 2), frameon=False
        )


def _with_errors(solitons: pd.DataFrame) -> pd.DataFrame:
    df = solitons.copy()
    if "shift_rel_error" not in df:
        pred = df["shift_predicted"].abs()
        df["shift_rel_error"] = (df["shift_measured"] - df["shift_predicted"]).abs() / pred
    return df


def _groups(df: pd.DataFrame, by: Sequence[str]) -> list[tuple[str, pd.DataFrame]]:
    by = [c for c in by if c in df.columns]
    if not by:
        return [("", df)]
    out = []
    for key, part in df.groupby(by, sort=True, dropna=False):
        values = key if isinstance(key, tuple) else (key,)
        label = ", ".join(
            f"{c} {v:g}" if isinstance(v, float) else f"{v}" if c == "equation" else f"{c} {v}"
            for c, v in zip(by, values, strict=True)
        )
        out.append((label, part))
    return out


_MARKERS = ("o", "s", "^", "D", "v", "P")


def shift_comparison(
    solitons: pd.DataFrame, group_by: Sequence[str] = (), residuals: bool = True
) -> Figure:
    """Measured against predicted phase shift, one marker per soliton of each run.

    Parameters
    ----------
    solitons
        Columns ``shift_predicted``, ``shift_measured`` (optionally ``soliton`` for the marker,
        ``shift_uncertainty`` for error bars and the columns named in ``group_by``).
    group_by
        Columns that split the points into coloured series (e.g. ``["equation", "polarity"]``).
    residuals
        Add a panel below with the relative error on a log scale: on the identity line alone,
        errors of 1e-6 are invisible.

    Returns
    -------
    matplotlib.figure.Figure
        The first axes hold the comparison (one errorbar container per group and soliton).
    """
    df = _with_errors(solitons.dropna(subset=["shift_predicted", "shift_measured"]))
    fig = _figure(6.5, 7.5 if residuals else 6.0)
    if residuals:
        ax, low = fig.subplots(2, 1, sharex=True, height_ratios=(3, 1.2))
    else:
        ax, low = fig.add_subplot(), None
    both = df[["shift_predicted", "shift_measured"]].to_numpy()
    lo, hi = (float(np.nanmin(both)), float(np.nanmax(both))) if len(df) else (-1.0, 1.0)
    pad = 0.06 * (hi - lo or 1.0)
    ends = [lo - pad, hi + pad]
    ax.plot(ends, ends, color="0.5", lw=1.2, zorder=1, label="measured = predicted")
    solitons_seen = sorted(df["soliton"].unique()) if "soliton" in df else [0]
    for g, (label, part) in enumerate(_groups(df, group_by)):
        color = SOLITON_COLORS[g % len(SOLITON_COLORS)]
        for s in solitons_seen:
            sub = part[part["soliton"] == s] if "soliton" in part else part
            if sub.empty:
                continue
            yerr = sub["shift_uncertainty"] if "shift_uncertainty" in sub else None
            name = label or "runs"
            ax.errorbar(
                sub["shift_predicted"],
                sub["shift_measured"],
                yerr=yerr,
                ls="none",
                marker=_MARKERS[int(s) % len(_MARKERS)],
                ms=7,
                mfc="none",
                mew=1.6,
                color=color,
                label=name if s == solitons_seen[0] else None,
                zorder=2 + g,
            )
            if low is not None:
                keep = sub["shift_rel_error"] > 0
                low.plot(
                    sub["shift_predicted"][keep],
                    sub["shift_rel_error"][keep],
                    ls="none",
                    marker=_MARKERS[int(s) % len(_MARKERS)],
                    ms=6,
                    mfc="none",
                    mew=1.4,
                    color=color,
                )
    ax.set_xlim(*ends)
    ax.set_ylim(*ends)
    ax.set_ylabel("measured shift")
    ax.grid(alpha=0.3)
    handles, labels = ax.get_legend_handles_labels()
    if len(solitons_seen) > 1:
        # Marker shapes tell the solitons apart (0 = leftmost at the start).
        for s in solitons_seen:
            handles.append(
                ax.plot(
                    [],
                    [],
                    ls="none",
                    marker=_MARKERS[int(s) % len(_MARKERS)],
                    mfc="none",
                    mew=1.4,
                    color="0.3",
                )[0]
            )
            labels.append(f"soliton {s}")
    ax.legend(handles, labels, loc="upper left")
    if low is not None:
        low.set_yscale("log")
        low.set_ylabel("relative error")
        low.set_xlabel("predicted shift (theory)")
        low.grid(alpha=0.3, which="major")
    else:
        ax.set_xlabel("predicted shift (theory)")
    return fig


def relative_error(
    solitons: pd.DataFrame,
    parameter: str,
    group_by: Sequence[str] = (),
    ax: Axes | None = None,
) -> Figure:
    """Relative shift error ``|measured - predicted| / |predicted|`` against a swept parameter.

    Parameters
    ----------
    solitons
        Solitons rows joined with their run's parameters: columns ``parameter``, ``soliton``,
        ``shift_predicted``, ``shift_measured`` and those of ``group_by``.
    parameter
        The column for the horizontal axis.
    group_by
        Columns splitting the series further (colour); solitons are told apart by marker.
    ax
        Axes to draw into.
    """
    if parameter not in solitons.columns:
        raise ConfigError(
            f"relative_error: no column {parameter!r}; expected one of {list(solitons.columns)}"
        )
    df = _with_errors(solitons).dropna(subset=["shift_rel_error", parameter])
    df = df[df["shift_rel_error"] > 0]
    if ax is None:
        fig = _figure(7.5, 6.0)
        ax = fig.add_subplot()
    else:
        fig = ax.get_figure()
    for g, (label, part) in enumerate(_groups(df, group_by)):
        color = SOLITON_COLORS[g % len(SOLITON_COLORS)]
        for s, sol in part.groupby("soliton"):
            sol = sol.sort_values(parameter)
            name = f"{label}, soliton {s}" if label else f"soliton {s}"
            ax.plot(
                sol[parameter],
                sol["shift_rel_error"],
                color=color,
                marker=_MARKERS[int(s) % len(_MARKERS)],
                ms=6,
                mfc="none",
                mew=1.4,
                lw=1.2,
                ls="-" if int(s) == 0 else "--",
                label=name,
            )
    ax.set_yscale("log")
    ax.set_xlabel(parameter)
    ax.set_ylabel("relative shift error")
    ax.grid(alpha=0.3, which="both")
    if len(df):
        # Outside the axes: with several groups a legend inside would cover the points.
        fig.legend(loc="outside lower center", ncols=2, frameon=False, fontsize=9)
    return fig


def save(fig: Figure, stem: str | os.PathLike[str], formats: Sequence[str] = FORMATS) -> list[Path]:
    """Write ``fig`` as ``stem.png``, ``stem.pdf`` (or the ``formats`` given); returns the paths."""
    bad = [f for f in formats if f not in ("png", "pdf", "svg")]
    if bad:
        raise ConfigError(f"save: unknown format(s) {bad}; expected png, pdf or svg")
    stem = Path(stem)
    stem.parent.mkdir(parents=True, exist_ok=True)
    paths = []
    for fmt in formats:
        path = stem.with_name(f"{stem.name}.{fmt}")
        fig.savefig(path, format=fmt)
        paths.append(path)
    return paths


# --- the store ---------------------------------------------------------------------------------


def _series_columns(runs: pd.DataFrame, parameters: Sequence[str], x: str | None) -> list[str]:
    """Swept parameters with few values, used to split series (not the horizontal one)."""
    out = []
    for p in parameters:
        if p != x and p in runs.columns and runs[p].nunique(dropna=False) <= 6:
            # A parameter zipped with one already chosen adds no information: skip it.
            if not any(
                runs.groupby(c)[p].nunique().max() == 1 and runs[c].nunique() == runs[p].nunique()
                for c in out
            ):
                out.append(p)
    return out


def _axis_parameters(runs: pd.DataFrame, parameters: Sequence[str]) -> list[str]:
    """Numeric swept parameters with enough values for a curve."""
    return [
        p
        for p in parameters
        if p in runs.columns and pd.api.types.is_numeric_dtype(runs[p]) and runs[p].nunique() > 3
    ]


def _run_analysis(results: Any, run: pd.Series) -> tuple[Any, Grid, RunAnalysis] | None:
    frames = results.frames(int(run["run_id"]))
    name = str(run.get("equation", "kdv"))
    try:
        eq = Equation.preset(name)
    except ConfigError:
        return None
    sol = results.solitons[results.solitons["run_id"] == run["run_id"]].sort_values("soliton")
    kappas = sol["kappa"].to_numpy(float) if len(sol) else None
    grid = Grid(int(run["n"]), float(run["length"]))
    analysis = analyse_run(frames.u, frames.times, grid, eq, kappas)
    return frames, grid, analysis


def plot_store(
    out: str | os.PathLike[str],
    into: str | os.PathLike[str] | None = None,
    parameter: str | None = None,
    runs: Sequence[int] | None = None,
    formats: Sequence[str] = FORMATS,
) -> list[Path]:
    """Make the standard figures of a sweep store.

    Parameters
    ----------
    out
        The store folder (read with :func:`kdvsweep.load`).
    into
        Where to write the figures; default ``OUT/figures``.
    parameter
        Swept parameter for the relative-error plot; default every numeric swept parameter with
        more than three values.
    runs
        Run ids for space-time diagrams; default the first stored run of each series.
    formats
        File formats.

    Returns
    -------
    list of pathlib.Path
        The files written.
    """
    from .results import load

    res = load(out)
    dest = Path(into) if into is not None else Path(out) / "figures"
    params = res.parameters
    ok = res.runs[res.runs["status"] == "ok"] if "status" in res.runs else res.runs
    keep = ["run_id", *(c for c in ok.columns if c in params or c == "equation")]
    merged = res.solitons.merge(ok[list(dict.fromkeys(keep))], on="run_id", how="inner")
    written: list[Path] = []
    axes = [parameter] if parameter else _axis_parameters(ok, params)
    series = _series_columns(ok, params, axes[0] if axes else None)
    if len(merged):
        with _style():
            written += save(shift_comparison(merged, series), dest / "shift_comparison", formats)
            for p in axes:
                written += save(
                    relative_error(merged, p, series), dest / f"relative_error_{p}", formats
                )
    for run_id in runs if runs is not None else _default_runs(ok, series):
        row = ok[ok["run_id"] == run_id]
        if row.empty or int(row.iloc[0].get("frames_stored", 0)) == 0:
            continue
        made = _run_analysis(res, row.iloc[0])
        if made is None:
            continue
        frames, grid, analysis = made
        label = ", ".join(f"{p} = {row.iloc[0][p]}" for p in params if p in row.columns)
        with _style():
            fig = spacetime(frames.u, frames.times, grid, analysis, title=label or None)
            written += save(fig, dest / f"spacetime_run{run_id}", formats)
    return written


def _default_runs(runs: pd.DataFrame, series: Sequence[str]) -> list[int]:
    if "frames_stored" in runs:
        runs = runs[runs["frames_stored"] > 0]
    if runs.empty:
        return []
    if not series:
        return [int(runs["run_id"].iloc[0])]
    return [int(part["run_id"].iloc[0]) for _, part in runs.groupby(list(series), sort=True)][:4]


class _style:
    """Context manager applying :data:`STYLE` to the figures made inside it."""

    def __enter__(self) -> None:
        import matplotlib as mpl

        self._ctx = mpl.rc_context(STYLE)
        self._ctx.__enter__()

    def __exit__(self, *exc: object) -> None:
        self._ctx.__exit__(*exc)


def main(argv: Sequence[str] | None = None) -> int:
    """``kdvsweep plot OUT``: write the figures of a store; returns the exit status."""
    parser = argparse.ArgumentParser(
        prog="kdvsweep plot",
        description="Figures of a sweep store: measured vs predicted shifts, relative error "
        "against a swept parameter, space-time diagrams of stored runs.",
    )
    parser.add_argument("out", help="the store folder")
    parser.add_argument("--into", help="folder for the figures (default OUT/figures)")
    parser.add_argument("--parameter", help="swept parameter for the relative-error plot")
    parser.add_argument(
        "--run",
        type=int,
        action="append",
        dest="runs",
        help="run id for a space-time diagram (repeatable)",
    )
    parser.add_argument(
        "--formats",
        default=",".join(FORMATS),
        help="comma-separated file formats (default png,pdf)",
    )
    args = parser.parse_args(argv)
    try:
        paths = plot_store(
            args.out,
            args.into,
            args.parameter,
            args.runs,
            [f.strip() for f in args.formats.split(",") if f.strip()],
        )
    except KdvsweepError as err:
        print(f"kdvsweep plot: {err}", file=sys.stderr)
        return 2
    for path in paths:
        print(path)
    if not paths:
        print(f"kdvsweep plot: nothing to plot in {args.out}", file=sys.stderr)
        return 1
    return 0


__all__ = [
    "FORMATS",
    "main",
    "plot_store",
    "relative_error",
    "save",
    "shift_comparison",
    "spacetime",
]
