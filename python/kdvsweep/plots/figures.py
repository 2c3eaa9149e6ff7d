"""Figures of collisions and sweeps, drawn from tables and frames.

* :func:`spacetime`: the space-time diagram of one run, with the tracked trajectories and the
  fitted asymptotes drawn over it (the phase shift is the offset between the two dashed lines),
  or, for profile data, every emerging soliton and breather followed from the time it separated,
  with its fitted asymptote;
* :func:`shift_comparison`: measured against predicted shift over a sweep, with the identity line;
* :func:`relative_error`: relative shift error against a swept parameter;
* :func:`content_comparison`: measured against predicted amplitude and speed of the solitons and
  breathers that emerge from profile data, with the identity line and a residual panel;
* :func:`adiabatic_decay`: measured against adiabatic end-of-run amplitude of solitons under
  damping or viscosity, and the deviation against the perturbation.

Figures are built on :class:`matplotlib.figure.Figure` directly (no pyplot state), so plotting is
safe from worker threads and never opens a window. :func:`save` writes PNG and PDF.
"""

from __future__ import annotations

import contextlib
import math
import os
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, cast

import numpy as np
import pandas as pd
from matplotlib import colors as mcolors
from matplotlib import patheffects
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator

from ..analysis import RunAnalysis
from ..analysis.content import ContentMeasurement
from ..exceptions import ConfigError
from ..model import Grid
from ..units import AxisScale

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


#: The footer of figures in physical water-wave units: the short form of
#: :data:`kdvsweep.units.CAUTION` (README, "Physical units").
FIGURE_CAUTION = (
    "Idealised model run, not a forecast: not for hazard assessment, engineering design or "
    "safety decisions."
)
#: The gid of the caution's text.
CAUTION_GID = "caution"
#: The height of the footer band that holds the caution (points).
CAUTION_POINTS = 18.0


def add_caution(fig: Figure, text: str = FIGURE_CAUTION) -> None:
    """Write ``text`` small in the figure's footer, in a band kept free of the axes and legends
    (constrained layout), so that it stays legible and covers nothing."""
    band = CAUTION_POINTS / (72.0 * fig.get_figheight())
    engine = fig.get_layout_engine()
    if engine is not None:
        engine.set(rect=(0.0, band, 1.0, 1.0 - band))  # type: ignore[call-arg]
    for legend in fig.legends:  # a legend below the axes moves up over the band
        legend.borderaxespad += CAUTION_POINTS / legend.prop.get_size_in_points()
    fig.text(
        0.5,
        0.3 * band,
        text,
        ha="center",
        va="bottom",
        fontsize=8.5,
        color="0.25",
        style="italic",
        gid=CAUTION_GID,
    )


def _unit(label: str, unit: str | None) -> str:
    """``label (unit)``, or the label alone without a unit."""
    return f"{label} ({unit})" if unit else label


#: The dash pattern of a fitted asymptote (its lines and its legend entry).
_ASYMPTOTE_DASH = (0, (4, 3))


def _plot_asymptote(
    ax: Axes,
    t: np.ndarray,
    x: np.ndarray,
    length: float,
    view: _View,
    color: Any,
    lw: float,
    signed: bool,
) -> None:
    """A fitted asymptote ``x(t)`` (canonical units), wrapped into the box and drawn dashed at the
    figure's scales ``view``."""
    at, lx = _wrapped_line(t, x, length)
    ax.plot(
        lx * view.x,
        at * view.t,
        color=color,
        lw=lw,
        ls=_ASYMPTOTE_DASH,
        gid=ASYMPTOTE_GID,
        path_effects=_EDGE[signed],
    )


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
    content: ContentMeasurement | None = None,
    axes: Mapping[str, AxisScale] | None = None,
    units: Mapping[str, str] | None = None,
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
    content
        The result of :func:`kdvsweep.analysis.content.measure_content` on the same record: each
        emerging soliton and breather is drawn from the time it separated, with its asymptote.
    axes
        Physical axes of the run (:func:`kdvsweep.units.axes_for_run`: ``"x"``, ``"t"``, ``"u"``
        with ``scale`` and ``label``): the field, the tracks and the asymptotes are drawn at
        ``scale`` times their canonical values, with those labels; ``None`` keeps the canonical
        ``x``, ``t``, ``u``.
    units
        With ``axes``: the unit of each dimension (``kdvsweep.units.System.UNITS``: ``"height"``,
        ``"length"``, ``"time"``, ``"speed"``) for the legend's amplitudes and speeds.

    Returns
    -------
    matplotlib.figure.Figure
        Trajectory lines carry the gid ``"trajectory"``, asymptotes ``"asymptote"``.
    """
    u = np.asarray(frames, dtype=np.float64)
    t = np.asarray(times, dtype=np.float64)
    view = _View.of(axes, units, (grid.length, float(np.max(np.abs(t))) if t.size else 1.0))
    centre = _collision_point(analysis, grid) if zoom and analysis is not None else None
    fig = _figure(13.0 if centre else 7.5, 5.8)
    panels = fig.subplots(1, 2 if centre else 1, squeeze=False)[0]
    image, scale = _field(panels[0], u, t, grid, 0, view)
    if analysis is not None:
        _draw_tracks(panels[0], analysis, t, grid.length, 0.0, True, _is_signed(u), view)
    if content is not None:
        _draw_emerging(panels[0], content, t, grid.length, _is_signed(u), view)
    panels[0].set_xlabel(view.x_label)
    if centre is not None and analysis is not None:
        x_c, t_c, half_x, half_t = centre
        shift = round(x_c / grid.dx)
        _field(panels[1], u, t, grid, shift, view)
        _draw_tracks(
            panels[1], analysis, t, grid.length, shift * grid.dx, False, _is_signed(u), view
        )
        panels[1].set_xlim(-half_x * view.x, half_x * view.x)
        panels[1].set_ylim(max(t[0], t_c - half_t) * view.t, min(t[-1], t_c + half_t) * view.t)
        panels[1].set_xlabel(view.zoom_label(shift * grid.dx))
        panels[1].set_title("collision")
        for image_x in (x_c - grid.length, x_c, x_c + grid.length):  # the box wraps like the field
            panels[0].add_patch(
                _box(image_x * view.x, t_c * view.t, half_x * view.x, half_t * view.t)
            )
    panels[0].set_ylabel(view.t_label)
    bar = fig.colorbar(image, ax=list(panels), pad=0.01)
    _scale_bar(bar, scale)
    if title:
        fig.suptitle(title)
    return fig


#: Units an axis in metres or seconds switches to when its values would be long numbers: the
#: unit, its size in metres or seconds, and the span from which on it is used.
_READABLE = {
    "m": (("km", 1e3, 2e4), ("m", 1.0, 0.1), ("mm", 1e-3, 1e-4), ("µm", 1e-6, 0.0)),
    "s": (
        ("d", 86400.0, 2 * 86400.0),
        ("h", 3600.0, 2e4),
        ("s", 1.0, 1.0),
        ("ms", 1e-3, 1e-3),
        ("µs", 1e-6, 1e-6),
        ("ns", 1e-9, 0.0),
    ),
}


def readable_unit(unit: str, size: float) -> tuple[str, float]:
    """A readable unit for values up to ``size`` in ``unit`` (metres or seconds), and its size in
    ``unit``: ``("mm", 1e-3)`` for 0.006 m, ``("d", 86400.0)`` for 8e5 s; other units and sizes
    that are not finite and positive stay as they are (``(unit, 1.0)``)."""
    choices = _READABLE.get(unit, ())
    if not (math.isfinite(size) and size > 0):
        return unit, 1.0
    for word, factor, start in choices:
        if size >= start:
            return word, factor
    return unit, 1.0


def _readable(label: str, scale: float, span: float) -> tuple[str, float]:
    """``label`` and ``scale`` of an axis whose unit (``name (m)``, ``name (s)``) becomes a
    readable one for values up to ``span * scale`` (``t (h)`` for a run of a day)."""
    name, _, unit = label.rpartition(" (")
    if not name:
        return label, scale
    word, factor = readable_unit(unit.rstrip(")"), abs(span * scale))
    return f"{name} ({word})", scale / factor


@dataclass(frozen=True)
class _View:
    """How :func:`spacetime` shows a run: the scale of ``x``, ``t``, ``u`` and their labels (the
    canonical ones by default), and the units of the legend's amplitudes and speeds."""

    x: float = 1.0
    t: float = 1.0
    u: float = 1.0
    x_label: str = "x"
    t_label: str = "t"
    u_label: str = "u"
    units: Mapping[str, str] | None = None

    @classmethod
    def of(
        cls,
        axes: Mapping[str, AxisScale] | None,
        units: Mapping[str, str] | None,
        spans: tuple[float, float] = (1.0, 1.0),
    ) -> _View:
        """The view of :func:`spacetime`'s ``axes``; ``spans`` (the canonical box length and end
        time) choose readable units for lengths and times (hours or days for a run of days,
        millimetres or microseconds for a plasma's)."""
        if axes is None:
            return cls()
        x_label, x = _readable(axes["x"].label, axes["x"].scale, spans[0])
        t_label, t = _readable(axes["t"].label, axes["t"].scale, spans[1])
        return cls(x, t, axes["u"].scale, x_label, t_label, axes["u"].label, units)

    def unit(self, dimension: str) -> str:
        """`` unit`` of a dimension (empty in canonical units)."""
        unit = (self.units or {}).get(dimension)
        return f" {unit}" if unit else ""

    def zoom_label(self, x_c: float) -> str:
        """The zoom panel's axis: ``x − x_c`` and the value of ``x_c``."""
        if self.units is None:
            return f"x − x_c   (x_c = {x_c:.4g})"
        name, _, unit = self.x_label.rpartition(" (")
        unit = unit.rstrip(")")
        return f"{name} − x_c ({unit})   (x_c = {x_c * self.x:.4g} {unit})"

    def amplitude(self, value: float) -> str:
        """A soliton's amplitude for the legend (scaled, with its unit)."""
        return f"{value * self.u:.3g}{self.unit('height')}"

    def speed(self, value: float) -> str:
        """A speed in the run's frame for the legend (scaled, with its unit)."""
        return f"{value * self.x / self.t:.3g}{self.unit('speed')}"


@dataclass(frozen=True)
class _Scale:
    """The colour scale of a field: its norm, colour map and the words for its colour bar."""

    cmap: str
    norm: mcolors.Normalize
    label: str
    ticks: tuple[float, ...]


def _scale(u: np.ndarray, name: str = "u") -> _Scale:
    """Signed fields on a symmetric-log scale, one-signed ones on a square-root (power) scale: the
    solitons and the small radiation behind them are both visible. The colour bar says which
    (``name``: the field's label)."""
    vmax = float(np.abs(u).max()) or 1.0
    if _is_signed(u):
        linthresh = 0.02 * vmax
        inner = [float(f"{v:.1g}") for v in (linthresh, 0.2 * vmax)]
        ticks = tuple(sorted({0.0, vmax, -vmax, *inner, *(-v for v in inner)}))
        label = f"{name}{_gap(name)}(symlog scale, linear within ±{linthresh:.2g})"
        norm: mcolors.Normalize = mcolors.SymLogNorm(linthresh, vmin=-vmax, vmax=vmax)
        return _Scale("RdBu_r", norm, label, ticks)
    norm = mcolors.PowerNorm(0.5, vmin=0.0, vmax=vmax)
    # Round ticks (one significant digit) spread evenly in colour: 1%, 10%, 25%, 50% of the top.
    ticks = tuple(sorted({0.0, vmax, *(float(f"{vmax * f:.1g}") for f in (0.01, 0.1, 0.25, 0.5))}))
    return _Scale("Greys", norm, f"{name}{_gap(name)}(power scale, γ = 0.5)", ticks)


def _gap(name: str) -> str:
    """Between a field's name and its colour scale's words: a line break after a long name."""
    return "   " if len(name) <= 3 else "\n"


def _scale_bar(bar: Any, scale: _Scale) -> None:
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullLocator

    bar.set_label(scale.label, labelpad=8)
    bar.ax.yaxis.set_major_locator(FixedLocator(list(scale.ticks)))
    bar.ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:.2g}"))
    bar.ax.yaxis.set_minor_locator(NullLocator())


def _box(x_c: float, t_c: float, half_x: float, half_t: float) -> Any:
    from matplotlib.patches import Rectangle

    return Rectangle(
        (x_c - half_x, t_c - half_t), 2 * half_x, 2 * half_t, fill=False, ec="0.35", lw=1.0, ls=":"
    )


def _field(
    ax: Axes, u: np.ndarray, t: np.ndarray, grid: Grid, shift: int, view: _View
) -> tuple[Any, _Scale]:
    """Draw the field; ``shift`` grid steps re-centre it (periodic roll); ``view`` scales it."""
    u = u * view.u
    scale = _scale(u, view.u_label)
    x0, x1 = -0.5 * grid.length * view.x, 0.5 * grid.length * view.x
    half = 0.5 * grid.dx * view.x
    t0, t1 = t[0] * view.t, t[-1] * view.t
    image = ax.imshow(
        np.roll(u, -shift, axis=1),
        origin="lower",
        aspect="auto",
        cmap=scale.cmap,
        norm=scale.norm,
        interpolation="nearest",
        extent=(x0 - half, x1 - half, t0, t1),
    )
    ax.set_xlim(x0, x1)
    ax.set_ylim(t0, t1)
    return image, scale


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
    view: _View,
) -> None:
    """Tracked peaks (solid) and, outside their fit windows, the fitted asymptotes (dashed): the
    offset between a dashed line and the track on the other side of the collision is the shift.
    Positions are drawn relative to ``x_ref`` (canonical), scaled by ``view``."""
    tracks = analysis.tracks
    handles = []
    frames = np.flatnonzero(tracks.linked)
    for i in range(tracks.n_solitons):
        palette = SIGNED_COLORS if signed else SOLITON_COLORS
        color = palette[i % len(palette)]
        tt, xx = _wrapped_line(t[frames], tracks.position[frames, i] - x_ref, length, frames)
        label = f"soliton {i}" + _soliton_words(analysis.table, i, view)
        handles += ax.plot(
            xx * view.x,
            tt * view.t,
            color=color,
            lw=1.5,
            gid=TRAJECTORY_GID,
            label=label,
            path_effects=_EDGE[signed],
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
                x_line = fit.speed * line_t + offset - x_ref
                _plot_asymptote(ax, line_t, x_line, length, view, color, 1.3, signed)
    # Mid-collision the solitons are not identified; show every extremum found there instead.
    gap = _collision_frames(tracks)
    if gap:
        px = np.concatenate([tracks.extrema[f].x for f in gap])
        pt = np.concatenate([np.full(len(tracks.extrema[f]), t[f]) for f in gap])
        px = (px - x_ref + 0.5 * length) % length - 0.5 * length
        dots = ax.plot(
            px * view.x,
            pt * view.t,
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
    if analysis.fits and legend:
        handles += ax.plot(
            [], [], color="0.2", lw=1.3, ls=_ASYMPTOTE_DASH, label="fitted asymptote, extrapolated"
        )
    if handles and legend:
        ax.figure.legend(
            handles=handles, loc="outside lower center", ncols=min(len(handles), 2), frameon=False
        )


def _soliton_words(table: pd.DataFrame, i: int, view: _View) -> str:
    """`` (κ = ...)`` of soliton ``i`` in canonical units, `` (A = ... m)`` in physical ones."""
    column = "kappa" if view.units is None else "amplitude"
    value = float(table[column].iloc[i]) if i < len(table) and column in table else math.nan
    if view.units is not None and "sign" in table and math.isfinite(table["sign"].iloc[i]):
        value *= float(table["sign"].iloc[i])  # the displacement, signed as drawn
    if not math.isfinite(value):
        return ""
    return f" (κ = {value:.3g})" if view.units is None else f" (A = {view.amplitude(value)})"


def _draw_emerging(
    ax: Axes,
    content: ContentMeasurement,
    t: np.ndarray,
    length: float,
    signed: bool,
    view: _View,
) -> None:
    """Each emerging soliton's fitted centres from the time it separated (solid) and its
    asymptote ``x = speed t + offset`` over the whole record (dashed; the offset is the mean of
    ``centre - speed t`` over the second half of the track, the late frames)."""
    palette = SIGNED_COLORS if signed else SOLITON_COLORS
    handles = []
    for i, e in enumerate(content.emerging):
        color = palette[i % len(palette)]
        tt = np.asarray(e.track_times, dtype=float)
        xx = np.asarray(e.track_centres, dtype=float)
        name = "breather" if e.kind == "breather" else "soliton"
        peak = e.amplitude * (e.sign or 1)  # the soliton's own sign (a breather: +)
        speed = "c" if view.units is None else "c − c0"
        label = f"{name} {i}: A = {view.amplitude(peak)}, {speed} = {view.speed(e.speed)}"
        if tt.size:
            lt, lx = _wrapped_line(tt, xx, length)
            handles += ax.plot(
                lx * view.x,
                lt * view.t,
                color=color,
                lw=1.3,
                alpha=0.85,
                gid=TRAJECTORY_GID,
                label=label,
                path_effects=_EDGE[signed],
            )
            late = slice(tt.size // 2, None)
            offset = float(np.mean(xx[late] - e.speed * tt[late]))
            line_t = np.linspace(t[0], t[-1], 600)
            x_line = e.speed * line_t + offset
            _plot_asymptote(ax, line_t, x_line, length, view, color, 1.1, signed)
    if handles:
        handles += ax.plot(
            [], [], color="0.2", lw=1.2, ls=_ASYMPTOTE_DASH, label="fitted asymptote, extrapolated"
        )
        ax.figure.legend(
            handles=handles,
            loc="outside lower center",
            ncols=min(len(handles), 3 if len(handles) > 4 else 2),
            frameon=False,
            fontsize=10,
        )


def _collision_frames(tracks: Any) -> list[int]:
    """Frames of the unlinked stretches during which two solitons passed each other.

    A stretch counts when the lap index ``floor((X_i - X_j) / L)`` of some pair differs between
    the linked frames on either side of it; a stretch where a peak was merely missed (a soliton
    crossing the box edge, say) leaves every lap index as it was and is not marked.
    """
    linked = np.asarray(tracks.linked, dtype=bool)[: len(tracks.extrema)]
    if tracks.n_solitons < 2 or linked.all():
        return []
    laps = tracks.laps()
    frames: list[int] = []
    f = 0
    while f < linked.size:
        if linked[f]:
            f += 1
            continue
        end = f
        while end < linked.size and not linked[end]:
            end += 1
        if f > 0 and end < linked.size and np.any(laps[f - 1] != laps[end]):
            frames.extend(range(f, end))
        f = end
    return frames


# --- sweeps ------------------------------------------------------------------------------------

_MARKERS = ("o", "s", "^", "D", "v", "P")
_LINES = ("-", "--", ":", "-.")
#: Axis labels with their symbols (mathtext).
PREDICTED_LABEL = r"predicted phase shift $\Delta x_{\mathrm{theory}}$"
MEASURED_LABEL = r"measured phase shift $\Delta x_{\mathrm{meas}}$"
#: The horizontal axis when perturbed runs are drawn: the pair formula of the integrable equation.
INTEGRABLE_LABEL = r"integrable phase shift $\Delta x_{\mathrm{theory}}$ (pair formula)"
RELATIVE_LABEL = (
    r"relative error $|\Delta x_{\mathrm{meas}} - \Delta x_{\mathrm{theory}}|"
    r"\,/\,|\Delta x_{\mathrm{theory}}|$"
)
#: Most groups drawn as panels side by side in :func:`shift_comparison`.
MAX_PANELS = 4


def _with_errors(solitons: pd.DataFrame) -> pd.DataFrame:
    df = solitons.copy()
    if "shift_rel_error" not in df:
        pred = df["shift_predicted"].abs()
        df["shift_rel_error"] = (df["shift_measured"] - df["shift_predicted"]).abs() / pred
    return df


def format_value(v: Any) -> str:
    """A parameter value for a label: numbers to 4 significant digits."""
    if isinstance(v, float | np.floating):
        return f"{float(v):.4g}"
    return str(v)


def _groups(
    df: pd.DataFrame, by: Sequence[str], labels: Mapping[str, str] | None = None
) -> list[tuple[str, pd.DataFrame]]:
    """The groups of ``df`` by the columns ``by``, each with its label (``depth 0.3 m`` when
    ``labels`` give the column as ``depth (m)``)."""
    by = [c for c in by if c in df.columns]
    if not by:
        return [("", df)]
    out = []
    for key, part in df.groupby(by, sort=True, dropna=False):
        values = key if isinstance(key, tuple) else (key,)
        label = ", ".join(
            format_value(v) if c == "equation" else _value_words(c, v, labels)
            for c, v in zip(by, values, strict=True)
        )
        out.append((label, part))
    return out


def _value_words(column: str, value: Any, labels: Mapping[str, str] | None) -> str:
    """``column value``, or ``column value unit`` when ``labels`` give it as ``column (unit)``."""
    label = (labels or {}).get(column, "")
    unit = label[len(column) + 2 : -1] if label.startswith(f"{column} (") else ""
    return f"{column} {format_value(value)}" + (f" {unit}" if unit else "")


def shift_comparison(
    solitons: pd.DataFrame,
    group_by: Sequence[str] = (),
    residuals: bool = True,
    color_by: str | None = None,
    unit: str | None = None,
    column_labels: Mapping[str, str] | None = None,
) -> Figure:
    """Measured against predicted phase shift, one marker per soliton of each run.

    Groups that would lie on top of each other (KdV and mKdV pairs of the same kappas have the
    same shifts) get a panel each, side by side with shared axes, up to :data:`MAX_PANELS`;
    beyond that they share one panel.

    Parameters
    ----------
    solitons
        Columns ``shift_predicted``, ``shift_measured`` (optionally ``soliton`` for the marker,
        ``shift_uncertainty`` for the measurement's resolution and the columns of ``group_by``).
    group_by
        Columns that split the points into groups (e.g. ``["equation", "polarity"]``).
    residuals
        Add a row below with the relative error on a log scale (on the identity line alone,
        errors of 1e-6 are invisible), and there the relative uncertainty of each measurement as a
        grey bar: an error below its bar is within the resolution of the measurement.
    color_by
        A numeric column (a perturbation sweep's ``g``, say) to colour the points by, in both rows,
        with a colour bar; groups then differ by panel only. ``shift_predicted`` is then read as
        the integrable pair formula's value, which the perturbed shifts tend to.
    unit
        The unit of the shifts (the columns hold physical shifts, e.g. ``phys_shift_*`` of a
        sweep with ``[units]``), added to the axis labels; ``None``: canonical.
    column_labels
        Labels of columns (``color_by``) other than their names, e.g. with their units.

    Returns
    -------
    matplotlib.figure.Figure
        The first axes hold the first group's comparison (one errorbar container per soliton; one
        scattered collection per soliton with ``color_by``).
    """
    if color_by is not None and color_by not in solitons.columns:
        raise ConfigError(
            f"shift_comparison: no column {color_by!r}; expected one of {list(solitons.columns)}"
        )
    df = _with_errors(solitons.dropna(subset=["shift_predicted", "shift_measured"]))
    norm = color_norm(df[color_by]) if color_by is not None and len(df) else None
    groups = _groups(df, group_by, column_labels)
    panels = len(groups) if len(groups) <= MAX_PANELS else 1
    fig = _figure(max(6.5, 4.2 * panels + 1.0), 7.5 if residuals else 6.0)
    grid = fig.subplots(
        2 if residuals else 1,
        panels,
        sharex=True,
        sharey="row",
        squeeze=False,
        height_ratios=(3, 1.3) if residuals else None,
    )
    tops: list[Axes] = list(grid[0])
    lows: list[Axes] = list(grid[1]) if residuals else []
    both = df[["shift_predicted", "shift_measured"]].to_numpy()
    lo, hi = (float(np.nanmin(both)), float(np.nanmax(both))) if len(df) else (-1.0, 1.0)
    pad = 0.06 * (hi - lo or 1.0)
    ends = [lo - pad, hi + pad]
    solitons_seen = sorted(df["soliton"].unique()) if "soliton" in df else [0]
    for ax in tops:
        ax.plot(ends, ends, color="0.5", lw=1.2, zorder=1, label="measured = predicted")
    for g, (label, part) in enumerate(groups):
        p = g if panels > 1 else 0
        ax, low = tops[p], (lows[p] if residuals else None)
        color = SOLITON_COLORS[g % len(SOLITON_COLORS)]
        if panels > 1 and label:
            ax.set_title(label)
        for s in solitons_seen:
            sub = part[part["soliton"] == s] if "soliton" in part else part
            if sub.empty:
                continue
            marker = _MARKERS[int(s) % len(_MARKERS)]
            if norm is not None:
                assert color_by is not None
                ax.scatter(
                    sub["shift_predicted"],
                    sub["shift_measured"],
                    c=sub[color_by],
                    cmap=COLOR_MAP,
                    norm=norm,
                    marker=marker,
                    s=60,
                    edgecolors="0.15",
                    linewidths=0.7,
                    zorder=2 + g,
                )
                if low is not None:
                    _residuals(low, sub, marker, color, (color_by, norm))
                continue
            ax.errorbar(
                sub["shift_predicted"],
                sub["shift_measured"],
                ls="none",
                marker=marker,
                ms=7 + (2 * (len(groups) - 1 - g) if panels == 1 else 0),
                mfc="none",
                mew=1.6,
                color=color,
                label=label if label and s == solitons_seen[0] and panels == 1 else None,
                zorder=2 + g,
            )
            if low is not None:
                _residuals(low, sub, marker, color)
    for ax in tops:
        ax.set_xlim(*ends)
        ax.set_ylim(*ends)
        ax.grid(alpha=0.3)
        if unit:  # physical shifts are long numbers (-1250 m): fewer ticks keep them apart
            ax.xaxis.set_major_locator(MaxNLocator(nbins=5 if panels == 1 else 3))
    tops[0].set_ylabel(_unit(MEASURED_LABEL, unit))
    handles, labels = tops[0].get_legend_handles_labels()
    if len(solitons_seen) > 1:
        # Marker shapes tell the solitons apart (0 = leftmost at the start).
        for s in solitons_seen:
            handles.append(
                tops[0].plot(
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
    tops[0].legend(handles, labels, loc="upper left", fontsize=10)
    bottom = lows if residuals else tops
    predicted = _unit(PREDICTED_LABEL if norm is None else INTEGRABLE_LABEL, unit)
    for ax in bottom:
        ax.set_xlabel(predicted if panels == 1 else _unit(r"$\Delta x_{\mathrm{theory}}$", unit))
    if residuals:
        lows[0].set_ylabel("relative error")
        for low in lows:
            low.set_yscale("log")
            low.grid(alpha=0.3, which="major")
        if "shift_uncertainty" in df and df["shift_uncertainty"].notna().any():
            lows[0].plot(
                [], [], ls="none", marker="_", ms=10, mew=2, color="0.6", label="resolution"
            )
            lows[0].legend(loc="best", fontsize=9)
    if panels > 1:
        fig.supxlabel(predicted, fontsize=14)
    if norm is not None:
        fig.colorbar(
            _mappable(norm),
            ax=list(grid.ravel()),
            label=(column_labels or {}).get(color_by or "", color_by),
            pad=0.015,
            fraction=0.05,
        )
    return fig


def _residuals(
    low: Axes,
    sub: pd.DataFrame,
    marker: str,
    color: str,
    colored: tuple[str, mcolors.Normalize] | None = None,
) -> None:
    """Relative errors, and beside them the relative uncertainty of the measurement (grey);
    ``colored`` = (column, norm) colours the errors by that column."""
    keep = sub["shift_rel_error"] > 0
    if colored is not None:
        low.scatter(
            sub["shift_predicted"][keep],
            sub["shift_rel_error"][keep],
            c=sub[colored[0]][keep],
            cmap=COLOR_MAP,
            norm=colored[1],
            marker=marker,
            s=40,
            edgecolors="0.15",
            linewidths=0.6,
            zorder=3,
        )
    else:
        low.plot(
            sub["shift_predicted"][keep],
            sub["shift_rel_error"][keep],
            ls="none",
            marker=marker,
            ms=6,
            mfc="none",
            mew=1.4,
            color=color,
            zorder=3,
        )
    if "shift_uncertainty" in sub:
        rel = sub["shift_uncertainty"].abs() / sub["shift_predicted"].abs()
        ok = np.isfinite(rel) & (rel > 0)
        low.plot(
            sub["shift_predicted"][ok],
            rel[ok],
            ls="none",
            marker="_",
            ms=10,
            mew=2,
            color="0.6",
            zorder=2,
        )


def _is_slice(df: pd.DataFrame, parameter: str, others: Sequence[str]) -> bool:
    """True when, within each series, ``parameter`` takes each value once and ``others`` are fixed:
    the points of a series then form a curve worth joining by a line."""
    if df.empty or df[parameter].nunique() < 2:
        return False
    varying = [c for c in others if c in df.columns and df[c].nunique(dropna=False) > 1]
    return not varying and not df[parameter].duplicated().any()


def relative_error(
    solitons: pd.DataFrame,
    parameter: str,
    group_by: Sequence[str] = (),
    ax: Axes | None = None,
    color_by: str | None = None,
    column_labels: Mapping[str, str] | None = None,
) -> Figure:
    """Relative shift error ``|measured - predicted| / |predicted|`` against a swept parameter.

    A series (one group, one soliton) whose other parameters are fixed is a curve: its points are
    joined. Otherwise (a random or Latin-hypercube draw, or a single point per series) the points
    stand alone; with ``color_by`` they are coloured by that column, with a colour bar.

    Parameters
    ----------
    solitons
        Solitons rows joined with their run's parameters: columns ``parameter``, ``soliton``,
        ``shift_predicted``, ``shift_measured`` and those of ``group_by`` and ``color_by``.
    parameter
        The column for the horizontal axis.
    group_by
        Columns splitting the series further (colour); solitons are told apart by marker.
    ax
        Axes to draw into.
    color_by
        A numeric column to colour scattered points by (instead of by group).
    column_labels
        Labels of columns (``parameter``, ``color_by``) other than their names, e.g. with their
        units.
    """
    for name in (parameter, color_by):
        if name is not None and name not in solitons.columns:
            raise ConfigError(
                f"relative_error: no column {name!r}; expected one of {list(solitons.columns)}"
            )
    df = _with_errors(solitons).dropna(subset=["shift_rel_error", parameter])
    df = df[df["shift_rel_error"] > 0]
    if ax is None:
        fig = _figure(7.5, 6.0)
        ax = fig.add_subplot()
    else:
        fig = ax.get_figure()  # type: ignore[assignment]
    norm = None
    if color_by is not None and len(df):
        norm = color_norm(df[color_by])
    groups = _groups(df, group_by, column_labels)
    joined: set[int] = set()  # solitons drawn as curves somewhere
    for g, (_, part) in enumerate(groups):
        color = SOLITON_COLORS[g % len(SOLITON_COLORS)] if norm is None else "0.3"
        for s, sol in part.groupby("soliton"):
            sol = sol.sort_values(parameter)
            marker = _MARKERS[int(s) % len(_MARKERS)]
            if norm is None and _is_slice(sol, parameter, [color_by or ""]):
                joined.add(int(s))
                ax.plot(
                    sol[parameter],
                    sol["shift_rel_error"],
                    color=color,
                    marker=marker,
                    ms=6,
                    mfc="none",
                    mew=1.4,
                    lw=1.2,
                    ls=_LINES[int(s) % len(_LINES)],
                )
            elif norm is not None:
                ax.scatter(
                    sol[parameter],
                    sol["shift_rel_error"],
                    c=sol[color_by],
                    cmap=COLOR_MAP,
                    norm=norm,
                    marker=marker,
                    s=42,
                    edgecolors="0.2",
                    linewidths=0.5,
                )
            else:
                ax.plot(
                    sol[parameter],
                    sol["shift_rel_error"],
                    ls="none",
                    color=color,
                    marker=marker,
                    ms=7,
                    mfc="none",
                    mew=1.4,
                )
    # One legend entry per group (colour) and per soliton (marker, and line style on curves).
    handles = []
    if norm is None:
        for g, (label, _) in enumerate(groups):
            if label:
                color = SOLITON_COLORS[g % len(SOLITON_COLORS)]
                handles += ax.plot([], [], color=color, lw=6, alpha=0.8, label=label)
    for s in sorted(int(v) for v in df["soliton"].unique()):
        handles += ax.plot(
            [],
            [],
            color="0.3",
            marker=_MARKERS[s % len(_MARKERS)],
            mfc="none" if norm is None else "0.7",
            mew=1.4,
            ms=7,
            lw=1.2,
            ls=_LINES[s % len(_LINES)] if s in joined else "none",
            label=f"soliton {s}",
        )
    ax.set_yscale("log")
    names = column_labels or {}
    ax.set_xlabel(names.get(parameter, parameter))
    ax.set_ylabel(RELATIVE_LABEL, fontsize=12)
    ax.grid(alpha=0.3, which="both")
    if norm is not None:
        mappable = _mappable(norm)
        fig.colorbar(mappable, ax=ax, label=names.get(color_by or "", color_by), pad=0.01)
    if handles:
        # Outside the axes: with several groups a legend inside would cover the points.
        fig.legend(
            handles=handles,
            loc="outside lower center",
            ncols=min(len(handles), 3 if len(handles) != 4 else 2),
            frameon=False,
            fontsize=10,
        )
    return fig


#: Marker of each kind of emerging wave in :func:`content_comparison`, by kind and sign, with the
#: legend's words.
KIND_MARKERS = {
    ("soliton", 1): ("o", "soliton, elevation"),
    ("soliton", -1): ("v", "soliton, depression"),
    ("breather", 0): ("D", "breather"),
}
#: The quantities of :func:`content_comparison`: measured column, predicted column, uncertainty
#: column, axis word.
CONTENT_QUANTITIES = (
    ("amplitude", "amplitude_ist", "amplitude_uncertainty", "amplitude |u|"),
    ("speed", "speed_ist", "speed_uncertainty", "speed"),
)
#: The axis words of :data:`CONTENT_QUANTITIES` in physical units (``{height}``, ``{speed}``: the
#: units); speeds are then in the run's frame, which moves at ``c0``.
PHYSICAL_CONTENT_WORDS = ("amplitude ({height})", "speed in the run's frame c − c0 ({speed})")


def content_comparison(
    solitons: pd.DataFrame,
    color_by: str | None = None,
    title: str | None = None,
    units: Mapping[str, str] | None = None,
    column_labels: Mapping[str, str] | None = None,
) -> Figure:
    """Measured against predicted amplitude and speed of every emerging soliton and breather.

    Top row: measured against predicted, with the identity line; predicted ones that were not
    measured (left out, or not found) are crosses on the lower edge. Bottom row: the relative
    residual ``(measured - predicted) / |predicted|`` with the measurement's uncertainty as an
    error bar (a residual within its bar agrees to the resolution of the measurement).

    Parameters
    ----------
    solitons
        Solitons rows of content runs (columns ``kind``, ``found``, ``amplitude``,
        ``amplitude_ist``, ``speed``, ``speed_ist`` and their uncertainties), joined with their
        runs' parameters when ``color_by`` names one.
    color_by
        A column colouring the points: numeric (a colour bar) or text (a legend entry each).
    title
        Figure title.
    units
        The units of the columns when they hold physical values (``"height"`` for the amplitudes,
        ``"speed"`` for the speeds, which are then speeds in the run's frame, ``c - c0``), added to
        the axis labels; ``None``: canonical.
    column_labels
        Labels of columns (``color_by``) other than their names, e.g. with their units.

    Returns
    -------
    matplotlib.figure.Figure
        The first axes hold the amplitude comparison.
    """
    if color_by is not None and color_by not in solitons.columns:
        raise ConfigError(
            f"content_comparison: no column {color_by!r}; expected one of {list(solitons.columns)}"
        )
    df = solitons[solitons["kind"].notna()] if "kind" in solitons else solitons.iloc[0:0]
    found = df["found"].astype("boolean").fillna(False).astype(bool) if len(df) else df["kind"]
    matched = df[found.astype(bool)] if len(df) else df
    missing = df[~found.astype(bool)] if len(df) else df
    fig = _figure(12.5, 8.0)
    grid = fig.subplots(2, 2, height_ratios=(3, 1.4), squeeze=False)
    norm: mcolors.Normalize | None = None
    colours: dict[Any, str] = {}
    numeric = color_by is not None and pd.api.types.is_numeric_dtype(df[color_by])
    if color_by is not None and numeric and len(matched):
        values = matched[color_by].astype(float)
        low, high = float(values.min()), float(values.max())
        if low == high:
            low, high = low - 0.5, high + 0.5
        norm = mcolors.Normalize(low, high)
    elif color_by is not None:
        for j, v in enumerate(sorted(df[color_by].dropna().unique(), key=str)):
            colours[v] = SOLITON_COLORS[j % len(SOLITON_COLORS)]
    for col, (meas, pred, unc, word) in enumerate(CONTENT_QUANTITIES):
        if units is not None:
            word = PHYSICAL_CONTENT_WORDS[col].format(**units)
        top, low = grid[0][col], grid[1][col]
        known = np.concatenate(
            [matched[[meas, pred]].to_numpy(float).ravel(), missing[pred].to_numpy(float)]
        )
        known = known[np.isfinite(known)]
        lo, hi = (float(known.min()), float(known.max())) if known.size else (0.0, 1.0)
        pad = 0.06 * (hi - lo or 1.0)
        ends = (min(0.0, lo) - pad, hi + pad)
        top.plot(ends, ends, color="0.5", lw=1.2, zorder=1, label="measured = predicted")
        for (kind, sign), (marker, _) in KIND_MARKERS.items():
            part = matched[(matched["kind"] == kind) & (matched["sign"].fillna(0) == sign)]
            if part.empty:
                continue
            x = part[pred].to_numpy(float)
            y = part[meas].to_numpy(float)
            rel = (y - x) / np.abs(x)
            err = part[unc].to_numpy(float) / np.abs(x)
            if norm is not None and color_by is not None:
                c: Any = part[color_by].astype(float).to_numpy()
                kw: dict[str, Any] = {"c": c, "cmap": "viridis", "norm": norm}
            elif color_by is not None:
                kw = {"c": [colours[v] for v in part[color_by]]}
            else:
                kw = {"c": SOLITON_COLORS[0 if kind == "soliton" else 1]}
            size = 30 if sign < 0 else 50  # a depression drawn inside its mirrored elevation
            top.scatter(
                x, y, marker=marker, s=size, edgecolors="0.15", linewidths=0.6, zorder=3, **kw
            )
            low.errorbar(
                x,
                rel,
                yerr=np.where(np.isfinite(err), err, 0.0),
                ls="none",
                color="0.55",
                lw=1.0,
                capsize=2,
                zorder=2,
            )
            low.scatter(
                x,
                rel,
                marker=marker,
                s=0.7 * size,
                edgecolors="0.15",
                linewidths=0.6,
                zorder=3,
                **kw,
            )
        if len(missing):
            xs = missing[pred].to_numpy(float)
            top.plot(
                xs,
                np.full(xs.shape, ends[0] + 0.5 * pad),
                ls="none",
                marker="x",
                ms=8,
                mew=1.8,
                color="0.35",
                zorder=3,
                label="predicted, not measured",
            )
        top.set_xlim(*ends)
        top.set_ylim(*ends)
        top.set_title(word)
        top.set_ylabel(f"measured {word}")
        top.grid(alpha=0.3)
        low.axhline(0.0, color="0.5", lw=1.0)
        low.set_xlim(*ends)
        low.set_xlabel(f"predicted {word} (IST of the initial data)")
        low.set_ylabel("relative residual")
        low.grid(alpha=0.3)
        low.ticklabel_format(axis="y", style="sci", scilimits=(-2, 2))
    handles, labels = grid[0][0].get_legend_handles_labels()
    for (kind, sign), (marker, words) in KIND_MARKERS.items():
        if ((matched["kind"] == kind) & (matched["sign"].fillna(0) == sign)).any():
            handles += grid[0][0].plot(
                [], [], ls="none", marker=marker, ms=7, mfc="0.75", mec="0.15", label=words
            )
            labels.append(words)
    for v, colour in colours.items():
        handles += grid[0][0].plot([], [], ls="none", marker="s", ms=9, color=colour)
        labels.append(f"{color_by} = {format_value(v)}")
    grid[0][0].legend(handles, labels, loc="upper left", fontsize=10)
    if norm is not None:
        label = (column_labels or {}).get(color_by or "", color_by)
        fig.colorbar(_mappable(norm), ax=list(grid[:, 1]), label=label, pad=0.01)
    if title:
        fig.suptitle(title)
    return fig


DECAY_MEASURED_LABEL = r"measured amplitude at the end $|u|_{\mathrm{end}}$"
DECAY_PREDICTED_LABEL = r"adiabatic amplitude at the end $|u|_{\mathrm{theory}}$"


def adiabatic_decay(
    solitons: pd.DataFrame,
    parameter: str | None = None,
    color_by: str | None = None,
    title: str = "",
    unit: str | None = None,
    column_labels: Mapping[str, str] | None = None,
) -> Figure:
    """Measured against predicted end-of-run amplitude of decaying solitons, and the deviation.

    Left: ``amplitude_end`` against ``amplitude_predicted`` (the adiabatic law at the last frame,
    :func:`kdvsweep.theory.adiabatic_kappa`) with the identity line, and the starting amplitude of
    each soliton as a faint cross, so the decay and its agreement with the law show together.
    Right: the relative deviation ``|end / predicted - 1|`` against ``parameter`` (the perturbation
    strength, log-log, with a dotted slope-1 guide: the adiabatic law is exact to first order, so
    its error should fall like the perturbation), or against the predicted amplitude when no
    parameter is given. Filled markers: measured above the law; open: below.

    Parameters
    ----------
    solitons
        Columns ``amplitude_end``, ``amplitude_predicted`` (optionally ``soliton`` for the marker,
        ``amplitude_start`` for the crosses, and the columns ``parameter`` and ``color_by``).
    parameter
        The horizontal axis of the deviation panel (values <= 0 are not drawn on its log axis).
    color_by
        A numeric column to colour the points by, with a colour bar.
    title
        The figure's title.
    unit
        The unit of the amplitudes when the columns hold physical heights (``phys_*`` of a sweep
        with ``[units]``), added to the axis labels; ``None``: canonical.
    column_labels
        Labels of columns (``parameter``, ``color_by``) other than their names.
    """
    names = column_labels or {}
    for name in (parameter, color_by):
        if name is not None and name not in solitons.columns:
            raise ConfigError(
                f"adiabatic_decay: no column {name!r}; expected one of {list(solitons.columns)}"
            )
    df = solitons.dropna(subset=["amplitude_end", "amplitude_predicted"])
    df = df[df["amplitude_predicted"] > 0].copy()
    df["deviation"] = df["amplitude_end"] / df["amplitude_predicted"] - 1.0
    norm = color_norm(df[color_by]) if color_by is not None and len(df) else None
    fig = _figure(12.5, 5.6)
    left, right = fig.subplots(1, 2, gridspec_kw={"width_ratios": (1.0, 1.1)})
    values = [df["amplitude_end"], df["amplitude_predicted"]]
    if "amplitude_start" in df:
        values.append(df["amplitude_start"])
    both = np.concatenate([np.asarray(v, dtype=float) for v in values]) if len(df) else np.ones(1)
    lo, hi = float(np.nanmin(both)), float(np.nanmax(both))
    pad = 0.06 * (hi - lo or hi or 1.0)
    ends = [max(0.0, lo - pad), hi + pad]
    left.plot(ends, ends, color="0.5", lw=1.2, zorder=1, label="measured = predicted")
    seen = sorted(int(v) for v in df["soliton"].unique()) if "soliton" in df else [0]
    x_right = parameter or "amplitude_predicted"
    for s in seen:
        sub = df[df["soliton"] == s] if "soliton" in df else df
        marker = _MARKERS[s % len(_MARKERS)]
        color = SOLITON_COLORS[s % len(SOLITON_COLORS)]
        kw: dict[str, Any] = (
            {"c": sub[color_by], "cmap": COLOR_MAP, "norm": norm}
            if norm is not None and color_by is not None
            else {"color": color}
        )
        left.scatter(
            sub["amplitude_predicted"],
            sub["amplitude_end"],
            marker=marker,
            s=60,
            edgecolors="0.15",
            linewidths=0.7,
            zorder=3,
            **kw,
        )
        if "amplitude_start" in sub:
            left.plot(
                sub["amplitude_start"],
                sub["amplitude_start"],
                ls="none",
                marker="x",
                ms=7,
                color="0.55",
                zorder=2,
            )
        pts = sub[(sub[x_right] > 0) & (sub["deviation"] != 0)]
        above = pts["deviation"] > 0
        for part, filled in ((pts[above], True), (pts[~above], False)):
            if part.empty:
                continue
            pkw: dict[str, Any] = (
                {"c": part[color_by], "cmap": COLOR_MAP, "norm": norm}
                if norm is not None and color_by is not None
                else {"color": color}
            )
            if not filled:  # open marker: edge in the point's colour
                pkw = {"facecolors": "none"}
                pkw["edgecolors"] = (
                    _mappable(norm).to_rgba(part[color_by])
                    if norm is not None and color_by is not None
                    else color
                )
            right.scatter(
                part[x_right],
                part["deviation"].abs(),
                marker=marker,
                s=60,
                linewidths=1.4 if not filled else 0.7,
                zorder=3,
                **({"edgecolors": "0.15"} | pkw),
            )
    left.set_xlim(*ends)
    left.set_ylim(*ends)
    left.set_xlabel(_unit(DECAY_PREDICTED_LABEL, unit))
    left.set_ylabel(_unit(DECAY_MEASURED_LABEL, unit))
    left.grid(alpha=0.3)
    handles, labels = left.get_legend_handles_labels()
    if "amplitude_start" in df:
        handles += left.plot([], [], ls="none", marker="x", ms=7, color="0.55")
        labels.append("at the start")
    for s in seen if len(seen) > 1 else []:
        handles += left.plot(
            [], [], ls="none", marker=_MARKERS[s % len(_MARKERS)], mfc="none", color="0.3"
        )
        labels.append(f"soliton {s}")
    left.legend(handles, labels, loc="upper left", fontsize=10)
    right.set_ylabel(r"relative deviation $|\,|u|_{\mathrm{end}} / |u|_{\mathrm{theory}} - 1|$")
    right.set_yscale("log")
    right.grid(alpha=0.3, which="both")
    if parameter is not None:
        right.set_xscale("log")
        right.set_xlabel(names.get(parameter, parameter))
        pts = df[(df[parameter] > 0) & (df["deviation"] != 0)]
        if len(pts) >= 2 and pts[parameter].nunique() >= 2:
            xs = np.geomspace(float(pts[parameter].min()), float(pts[parameter].max()), 2)
            ref = float(np.exp(np.mean(np.log(pts["deviation"].abs() / pts[parameter]))))
            right.plot(xs, ref * xs, ls=":", color="0.4", lw=1.5, label="slope 1 (first order)")
            right.legend(loc="upper left", fontsize=10)
    else:
        right.set_xlabel(_unit(DECAY_PREDICTED_LABEL, unit))
    right.plot([], [], ls="none", marker="o", color="0.3", label="above the law")
    right.plot([], [], ls="none", marker="o", mfc="none", color="0.3", label="below the law")
    right.legend(loc="best", fontsize=10)
    if norm is not None:
        fig.colorbar(
            _mappable(norm),
            ax=[left, right],
            label=names.get(color_by or "", color_by),
            pad=0.015,
            fraction=0.04,
        )
    if title:
        fig.suptitle(title)
    return fig


def _mappable(norm: mcolors.Normalize) -> Any:
    """A colour-bar source for points coloured with :data:`COLOR_MAP` under ``norm``."""
    from matplotlib.cm import ScalarMappable

    return ScalarMappable(norm=norm, cmap=COLOR_MAP)


#: The colour map of points coloured by a parameter.
COLOR_MAP = "viridis"


def color_norm(values: Any) -> mcolors.Normalize:
    """The colour scale of a parameter's values: logarithmic when they are positive and span a
    decade or more (a perturbation swept as 1e-3, 3e-3, 1e-2), symmetric-logarithmic when such
    values come with zero (an unperturbed run beside them), else linear."""
    v = np.asarray(values, dtype=np.float64)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return mcolors.Normalize(0.0, 1.0)
    lo, hi = float(v.min()), float(v.max())
    positive = v[v > 0]
    if lo > 0 and hi >= 10 * lo:
        return mcolors.LogNorm(lo, hi)
    if lo == 0 and positive.size >= 2 and hi >= 10 * float(positive.min()):
        return mcolors.SymLogNorm(float(positive.min()), linscale=0.5, vmin=0.0, vmax=hi)
    if lo == hi:
        return mcolors.Normalize(lo - 0.5 * (abs(lo) or 1.0), hi + 0.5 * (abs(hi) or 1.0))
    return mcolors.Normalize(lo, hi)


def check_formats(formats: Sequence[str]) -> None:
    """Raise ConfigError unless every format is one :func:`save` writes (png, pdf, svg)."""
    bad = [f for f in formats if f not in ("png", "pdf", "svg")]
    if bad or not formats:
        raise ConfigError(
            f"plot: unknown format(s) {', '.join(bad) or '(none given)'}; expected png, pdf or svg"
        )


def save(fig: Figure, stem: str | os.PathLike[str], formats: Sequence[str] = FORMATS) -> list[Path]:
    """Write ``fig`` as ``stem.png``, ``stem.pdf`` (or the ``formats`` given); returns the paths."""
    check_formats(formats)
    stem = Path(stem)
    stem.parent.mkdir(parents=True, exist_ok=True)
    paths = []
    for fmt in formats:
        path = stem.with_name(f"{stem.name}.{fmt}")
        fig.savefig(path, format=fmt)
        paths.append(path)
    return paths


@contextlib.contextmanager
def figure_style() -> Iterator[None]:
    """Apply :data:`STYLE` to the figures made inside the block."""
    import matplotlib as mpl

    with mpl.rc_context(cast(Any, STYLE)):
        yield
